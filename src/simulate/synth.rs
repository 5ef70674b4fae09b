//! Placing returns into chirps. Each object sums its scatterers' slow-time complex
//! amplitudes (each with its own exact range phase exp(+j 4 pi R_i / lambda)) into one
//! coefficient per chirp and [`Ctx::put`] puts it at the object's centre range:
//! FMCW: on one beat tone exp(+j 2 pi (2 S R / c) n / fs), n = 0..N (approximation: the
//! object's scatterers spread over less than a range cell; the range change within one
//! chirp is ignored); range profile: into cell round((R - range_start) / cell).

use rustfft::num_complex::{Complex32, Complex64};
use serde_json::{Map, Value};

use super::motion::{Trajectory, V3};

/// Kinematics of a trajectory: position and radial velocity while active.
pub fn traj_kinematics(tr: &Trajectory, t: f64) -> Option<(V3, f64)> {
    tr.active(t)
        .then(|| (tr.position(t), tr.radial_velocity(t)))
}
use super::radar_eq::LinkBudget;
use crate::recording::{RadarParams, Waveform};
use crate::C;

/// Chirps of a coherent processing interval used for the SNR figures in the truth.
pub const TRUTH_CPI_CHIRPS: usize = 256;

/// What every source needs about the radar, planned once per run.
pub struct Ctx {
    /// Radar parameters.
    pub params: RadarParams,
    /// Wavelength, m.
    pub lambda: f64,
    /// 4 pi / lambda, rad/m.
    pub k4: f64,
    /// The radar equation.
    pub budget: LinkBudget,
    /// N.
    pub n: usize,
    waveform: Waveform,
    /// FMCW: beat phase step per sample per metre, 2 pi 2 S / (c fs), rad/m.
    beat_rad_per_m: f64,
    range_start: f64,
    cell: f64,
}

impl Ctx {
    /// Plans the context.
    pub fn new(params: &RadarParams, budget: LinkBudget) -> Self {
        let lambda = params.wavelength_m();
        let beat_rad_per_m = match params.slope_hz_per_s() {
            Some(s) => 2.0 * std::f64::consts::PI * 2.0 * s / (C * params.sample_rate_hz),
            None => 0.0,
        };
        Ctx {
            params: params.clone(),
            lambda,
            k4: 4.0 * std::f64::consts::PI / lambda,
            budget,
            n: params.samples_per_chirp,
            waveform: params.waveform(),
            beat_rad_per_m,
            range_start: params.range_start_m(),
            cell: params.range_cell_m(),
        }
    }

    /// Range cell of range `r` (rounded), if inside the radar's coverage 0..N.
    pub fn cell_of(&self, r: f64) -> Option<usize> {
        let k = ((r - self.range_start) / self.cell).round();
        if k >= 0.0 && k < self.n as f64 {
            Some(k as usize)
        } else {
            None
        }
    }

    /// Whether range `r` lies in the coverage (its rounded cell is one of the N).
    pub fn in_coverage(&self, r: f64) -> bool {
        self.cell_of(r).is_some()
    }

    /// Range of cell k's centre, m.
    pub fn range_of_cell(&self, k: usize) -> f64 {
        self.range_start + k as f64 * self.cell
    }

    /// Coherent gain of the truth SNRs (linear): N * 256 for FMCW (the range FFT and a
    /// 256-chirp Doppler FFT); 256 for range profiles, whose cells are already range-compressed
    /// (a scatterer's energy sits in one cell, no range FFT adds to it).
    pub fn coherent_gain(&self) -> f64 {
        match self.waveform {
            Waveform::FmcwBeat => (self.n * TRUTH_CPI_CHIRPS) as f64,
            Waveform::RangeProfile => TRUTH_CPI_CHIRPS as f64,
        }
    }

    /// Adds coefficient `c` (noise units) at centre range `r` to one chirp `sig` (N samples).
    /// Nothing is added outside the coverage.
    pub fn put(&self, sig: &mut [Complex32], c: Complex64, r: f64) {
        let Some(k) = self.cell_of(r) else { return };
        match self.waveform {
            Waveform::RangeProfile => {
                sig[k] += Complex32::new(c.re as f32, c.im as f32);
            }
            Waveform::FmcwBeat => {
                let step = Complex64::from_polar(1.0, self.beat_rad_per_m * r);
                let mut z = c;
                for s in sig.iter_mut() {
                    *s += Complex32::new(z.re as f32, z.im as f32);
                    z *= step;
                }
            }
        }
    }
}

/// One object's return generator. `add` is called for consecutive chirps in time order.
pub trait Source {
    /// Adds this object's return for the chirp at time `t` to `sig` (N samples).
    fn add(&mut self, t: f64, ctx: &Ctx, sig: &mut [Complex32]);
    /// Position (m) and radial velocity (m/s, positive receding) at time `t`, `None` while
    /// the object is absent. Patches give their centre.
    fn kinematics(&self, t: f64) -> Option<(V3, f64)>;
    /// Half-size of the object along range, m (added to the annotation's range window).
    fn extent_m(&self) -> f64;
    /// Kind-specific truth at the median range/position of the annotated interval.
    fn truth(&self, ctx: &Ctx, median_range_m: f64, median_pos: V3) -> Map<String, Value>;
    /// Range window (min, max) of a fixed patch, m (instead of centre +/- extent).
    fn fixed_span(&self) -> Option<(f64, f64)> {
        None
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::recording::RangeAxis;

    /// The FMCW tone equals exp(+j 2 pi (2 S R / c) n / fs) sample by sample
    /// (the signal convention of docs/recording-format.md; Richards, FMCW beat relation).
    #[test]
    fn fmcw_tone_matches_direct_formula() {
        let p = RadarParams {
            carrier_hz: 24e9,
            sample_rate_hz: 2e6,
            samples_per_chirp: 64,
            chirp_interval_s: 50e-6,
            range_axis: RangeAxis::FmcwBeat {
                sweep_bandwidth_hz: 100e6,
                sweep_duration_s: 32e-6,
            },
        };
        let ctx = Ctx::new(&p, LinkBudget { k_m2: 1.0 });
        let mut sig = vec![Complex32::new(0.0, 0.0); 64];
        let c = Complex64::from_polar(2.0, 0.7);
        ctx.put(&mut sig, c, 37.3);
        let s = 100e6 / 32e-6;
        for (n, z) in sig.iter().enumerate() {
            let want = c * Complex64::from_polar(
                1.0,
                2.0 * std::f64::consts::PI * (2.0 * s * 37.3 / C) * n as f64 / 2e6,
            );
            assert!((z.re as f64 - want.re).abs() < 1e-5 && (z.im as f64 - want.im).abs() < 1e-5);
        }
        // coverage: N cells of c fs / (2 S N) = 1.499 m
        assert!(ctx.in_coverage(0.0) && ctx.in_coverage(94.0) && !ctx.in_coverage(96.0));
    }
}
