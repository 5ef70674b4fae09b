//! The radar range equation: per-sample signal-to-noise ratio of a point scatterer,
//! SNR = Pt Gt Gr lambda^2 sigma / ((4 pi)^3 k T0 F L R^4 B_n)
//! (Mahafza, *Radar Systems Analysis and Design Using MATLAB*, Eq. 1.56; Richards Eq. 2.84).
//! The simulator's noise has unit variance, so a scatterer's complex amplitude is sqrt(SNR).

/// Boltzmann's constant k, J/K (exact, SI 2019).
pub const BOLTZMANN: f64 = 1.380_649e-23;
/// Standard noise temperature T0, K.
pub const T0_K: f64 = 290.0;

/// Decibels to a power ratio: 10^(db/10).
pub fn db_to_lin(db: f64) -> f64 {
    10f64.powf(db / 10.0)
}

/// A power ratio to decibels: 10 log10(x).
pub fn lin_to_db(x: f64) -> f64 {
    10.0 * x.log10()
}

/// The range-independent part of the radar equation, planned once per radar.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LinkBudget {
    /// K = Pt Gt Gr lambda^2 / ((4 pi)^3 k T0 F L B_n), in m^2 (SNR = K sigma / R^4).
    pub k_m2: f64,
}

impl LinkBudget {
    /// Plans the budget. Powers in W, gains/figures/losses in dB, wavelength in m,
    /// noise bandwidth in Hz.
    pub fn new(
        transmit_power_w: f64,
        tx_gain_dbi: f64,
        rx_gain_dbi: f64,
        wavelength_m: f64,
        noise_figure_db: f64,
        losses_db: f64,
        noise_bandwidth_hz: f64,
    ) -> Self {
        let num = transmit_power_w
            * db_to_lin(tx_gain_dbi)
            * db_to_lin(rx_gain_dbi)
            * wavelength_m
            * wavelength_m;
        let den = (4.0 * std::f64::consts::PI).powi(3)
            * BOLTZMANN
            * T0_K
            * db_to_lin(noise_figure_db)
            * db_to_lin(losses_db)
            * noise_bandwidth_hz;
        LinkBudget { k_m2: num / den }
    }

    /// Per-sample SNR (linear power ratio) of RCS `sigma_m2` (m^2) at range `r_m` (m).
    pub fn snr(&self, sigma_m2: f64, r_m: f64) -> f64 {
        self.k_m2 * sigma_m2 / r_m.powi(4)
    }

    /// Per-sample SNR in dB of an RCS given in dBsm at range `r_m`.
    pub fn snr_db(&self, rcs_dbsm: f64, r_m: f64) -> f64 {
        lin_to_db(self.snr(db_to_lin(rcs_dbsm), r_m))
    }

    /// Complex amplitude of unit RCS at range `r_m` relative to unit-variance noise:
    /// sqrt(K) / R^2 (multiply by sqrt(sigma)).
    pub fn amplitude_per_sqrt_m2(&self, r_m: f64) -> f64 {
        self.k_m2.sqrt() / (r_m * r_m)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Mahafza, Radar Systems Analysis and Design Using MATLAB, Eq. 1.56 worked example:
    /// Pt 1.5 MW, 5.6 GHz, G 45 dB, T0 290 K, B 5 MHz, F 3 dB, L 6 dB, sigma 0.1 m^2:
    /// 35.43 dB at 25 km, 16.35 dB at 75 km, 2.65 dB at 165 km (computed from the formula
    /// with T0 in K). Wavelength with c = 299 792 458 m/s differs from c = 3e8 by
    /// 0.006 dB, inside the 0.01 dB tolerance.
    #[test]
    fn mahafza_worked_example() {
        let lambda = crate::C / 5.6e9;
        let b = LinkBudget::new(1.5e6, 45.0, 45.0, lambda, 3.0, 6.0, 5e6);
        for (r, want) in [(25e3, 35.43), (75e3, 16.35), (165e3, 2.65)] {
            let got = b.snr_db(-10.0, r);
            assert!((got - want).abs() < 0.01, "R {r}: {got} dB, want {want}");
        }
    }

    /// R^-4 law: doubling range costs 40 log10(2) = 12.04 dB (Mahafza Eq. 1.56).
    #[test]
    fn fourth_power_law() {
        let b = LinkBudget::new(0.1, 20.0, 20.0, 0.0124, 8.0, 3.0, 2e6);
        let d = b.snr_db(0.0, 50.0) - b.snr_db(0.0, 100.0);
        assert!((d - 12.0412).abs() < 1e-3);
        let a = b.amplitude_per_sqrt_m2(70.0);
        assert!((a * a - b.snr(1.0, 70.0)).abs() < 1e-12 * b.snr(1.0, 70.0).max(1.0));
    }
}
