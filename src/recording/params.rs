//! `RadarParams`: the radar settings a recording carries and the quantities derived from
//! them (wavelength, range of a bin, range cell, Doppler to velocity, unambiguous velocity,
//! blind speeds). Relations: standard FMCW and pulse-Doppler relations (Richards,
//! *Fundamentals of Radar Signal Processing*, 2nd ed., ch. 4 and 5; docs/recording-format.md).

use serde::{Deserialize, Serialize};

use crate::error::{ensure, Result};
use crate::C;

/// What the N samples of each chirp/pulse are.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Waveform {
    /// The dechirped beat signal of an FMCW ramp: a range FFT is needed.
    FmcwBeat,
    /// Already range cells (pulse compression done by the radar).
    RangeProfile,
}

impl Waveform {
    /// The name used in recordings (`rotorsift:waveform`).
    pub fn as_str(self) -> &'static str {
        match self {
            Waveform::FmcwBeat => "fmcw-beat",
            Waveform::RangeProfile => "range-profile",
        }
    }
    /// Parses the recording name; `None` for anything else.
    pub fn parse(s: &str) -> Option<Self> {
        match s {
            "fmcw-beat" => Some(Waveform::FmcwBeat),
            "range-profile" => Some(Waveform::RangeProfile),
            _ => None,
        }
    }
}

/// How fast time maps to range.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case", tag = "waveform")]
pub enum RangeAxis {
    /// FMCW: bandwidth `B` swept in `Tc`, fast time sampled at `fs`.
    FmcwBeat {
        sweep_bandwidth_hz: f64,
        sweep_duration_s: f64,
    },
    /// Range profile: cell spacing and the range of cell 0.
    RangeProfile {
        range_cell_m: f64,
        range_start_m: f64,
    },
}

/// The radar settings of one recording (SI units).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RadarParams {
    /// Carrier (centre) frequency fc, Hz.
    pub carrier_hz: f64,
    /// Fast-time ADC rate fs, Hz (informational for range profiles).
    pub sample_rate_hz: f64,
    /// N: samples (or range cells) per chirp/pulse.
    pub samples_per_chirp: usize,
    /// T: chirp-to-chirp interval, s (slow-time sampling interval).
    pub chirp_interval_s: f64,
    /// Fast time to range.
    pub range_axis: RangeAxis,
}

impl RadarParams {
    /// Checks every value; the error names the key, the bad value and what is expected.
    pub fn check(&self) -> Result<()> {
        let pos = |name: &str, v: f64| {
            ensure(v.is_finite() && v > 0.0, || {
                format!("{name} = {v}: expected a finite number > 0")
            })
        };
        pos("core:frequency", self.carrier_hz)?;
        pos("rotorsift:chirp_interval_s", self.chirp_interval_s)?;
        ensure(
            (8..=crate::limits::MAX_SAMPLES_PER_CHIRP).contains(&self.samples_per_chirp),
            || {
                format!(
                    "rotorsift:samples_per_chirp = {}: expected an integer from 8 to {}",
                    self.samples_per_chirp,
                    crate::limits::MAX_SAMPLES_PER_CHIRP
                )
            },
        )?;
        match self.range_axis {
            RangeAxis::FmcwBeat {
                sweep_bandwidth_hz,
                sweep_duration_s,
            } => {
                pos("core:sample_rate", self.sample_rate_hz)?;
                pos("rotorsift:sweep_bandwidth_hz", sweep_bandwidth_hz)?;
                pos("rotorsift:sweep_duration_s", sweep_duration_s)?;
                let ramp_samples = sweep_duration_s * self.sample_rate_hz;
                ensure(ramp_samples + 1e-6 >= self.samples_per_chirp as f64, || {
                    format!(
                        "rotorsift:sweep_duration_s = {sweep_duration_s}: the ramp must last at least \
                         samples_per_chirp / sample_rate = {} s",
                        self.samples_per_chirp as f64 / self.sample_rate_hz
                    )
                })?;
                ensure(
                    sweep_duration_s <= self.chirp_interval_s * (1.0 + 1e-9),
                    || {
                        format!(
                        "rotorsift:sweep_duration_s = {sweep_duration_s}: expected <= rotorsift:chirp_interval_s = {}",
                        self.chirp_interval_s
                    )
                    },
                )?;
            }
            RangeAxis::RangeProfile {
                range_cell_m,
                range_start_m,
            } => {
                pos("rotorsift:range_cell_m", range_cell_m)?;
                ensure(range_start_m.is_finite() && range_start_m >= 0.0, || {
                    format!(
                        "rotorsift:range_start_m = {range_start_m}: expected a finite number >= 0"
                    )
                })?;
                ensure(
                    self.sample_rate_hz.is_finite() && self.sample_rate_hz >= 0.0,
                    || {
                        format!(
                            "core:sample_rate = {}: expected a finite number >= 0",
                            self.sample_rate_hz
                        )
                    },
                )?;
            }
        }
        Ok(())
    }

    /// The waveform kind.
    pub fn waveform(&self) -> Waveform {
        match self.range_axis {
            RangeAxis::FmcwBeat { .. } => Waveform::FmcwBeat,
            RangeAxis::RangeProfile { .. } => Waveform::RangeProfile,
        }
    }

    /// Wavelength lambda = c / fc, m.
    pub fn wavelength_m(&self) -> f64 {
        C / self.carrier_hz
    }

    /// FMCW chirp slope S = B / Tc, Hz/s (`None` for range profiles).
    pub fn slope_hz_per_s(&self) -> Option<f64> {
        match self.range_axis {
            RangeAxis::FmcwBeat {
                sweep_bandwidth_hz,
                sweep_duration_s,
            } => Some(sweep_bandwidth_hz / sweep_duration_s),
            RangeAxis::RangeProfile { .. } => None,
        }
    }

    /// Range cell spacing, m: `c fs / (2 S N)` for FMCW (the range of FFT bin 1),
    /// `rotorsift:range_cell_m` for range profiles.
    pub fn range_cell_m(&self) -> f64 {
        match self.range_axis {
            RangeAxis::FmcwBeat { .. } => {
                let s = self.slope_hz_per_s().unwrap_or(1.0);
                C * self.sample_rate_hz / (2.0 * s * self.samples_per_chirp as f64)
            }
            RangeAxis::RangeProfile { range_cell_m, .. } => range_cell_m,
        }
    }

    /// Range of cell 0, m (0 for FMCW).
    pub fn range_start_m(&self) -> f64 {
        match self.range_axis {
            RangeAxis::FmcwBeat { .. } => 0.0,
            RangeAxis::RangeProfile { range_start_m, .. } => range_start_m,
        }
    }

    /// Range of (possibly fractional) range bin `k`, m: `range_start + k * cell`.
    pub fn range_of_bin(&self, k: f64) -> f64 {
        self.range_start_m() + k * self.range_cell_m()
    }

    /// Fractional range bin of range `r`, m (inverse of [`Self::range_of_bin`]).
    pub fn bin_of_range(&self, r: f64) -> f64 {
        (r - self.range_start_m()) / self.range_cell_m()
    }

    /// Number of range cells after range processing (N for both waveforms).
    pub fn range_bins(&self) -> usize {
        self.samples_per_chirp
    }

    /// Largest range covered, m: `range_start + N * cell`.
    pub fn max_range_m(&self) -> f64 {
        self.range_of_bin(self.samples_per_chirp as f64)
    }

    /// Beat frequency of a target at range `r` (FMCW): f_b = 2 S R / c, Hz.
    pub fn beat_hz(&self, r: f64) -> Option<f64> {
        self.slope_hz_per_s().map(|s| 2.0 * s * r / C)
    }

    /// Range resolution of the sweep, c / (2B), m (FMCW); the cell for range profiles.
    pub fn range_resolution_m(&self) -> f64 {
        match self.range_axis {
            RangeAxis::FmcwBeat {
                sweep_bandwidth_hz, ..
            } => C / (2.0 * sweep_bandwidth_hz),
            RangeAxis::RangeProfile { range_cell_m, .. } => range_cell_m,
        }
    }

    /// Pulse repetition frequency 1 / T, Hz.
    pub fn prf_hz(&self) -> f64 {
        1.0 / self.chirp_interval_s
    }

    /// Radial velocity of Doppler frequency `f_d`: v = f_d lambda / 2, m/s (positive = receding).
    pub fn velocity_of_doppler(&self, f_d: f64) -> f64 {
        f_d * self.wavelength_m() / 2.0
    }

    /// Doppler frequency of radial velocity `v`: f_d = 2 v / lambda, Hz.
    pub fn doppler_of_velocity(&self, v: f64) -> f64 {
        2.0 * v / self.wavelength_m()
    }

    /// Unambiguous radial speed lambda / (4 T), m/s: velocities span +/- this.
    pub fn unambiguous_velocity_mps(&self) -> f64 {
        self.wavelength_m() / (4.0 * self.chirp_interval_s)
    }

    /// The n-th blind speed of a canceller, n lambda / (2 T), m/s.
    pub fn blind_speed_mps(&self, n: u32) -> f64 {
        n as f64 * self.wavelength_m() / (2.0 * self.chirp_interval_s)
    }

    /// Velocity resolution of an M-chirp CPI, lambda / (2 M T), m/s.
    pub fn velocity_resolution_mps(&self, chirps: usize) -> f64 {
        self.wavelength_m() / (2.0 * chirps as f64 * self.chirp_interval_s)
    }

    /// Time of chirp m from the first chirp, s.
    pub fn chirp_time_s(&self, m: usize) -> f64 {
        m as f64 * self.chirp_interval_s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A 24 GHz FMCW example: B 150 MHz in 50 us, fs 2 MHz, N 100.
    fn fmcw() -> RadarParams {
        RadarParams {
            carrier_hz: 24.125e9,
            sample_rate_hz: 2.0e6,
            samples_per_chirp: 100,
            chirp_interval_s: 62.5e-6,
            range_axis: RangeAxis::FmcwBeat {
                sweep_bandwidth_hz: 150e6,
                sweep_duration_s: 50e-6,
            },
        }
    }

    #[test]
    fn fmcw_relations() {
        // Standard FMCW relations (Richards, Fundamentals of Radar Signal Processing, 2nd ed.):
        // S = B/Tc = 3e12 Hz/s; cell = c fs / (2 S N) = 299792458*2e6/(2*3e12*100) = 0.99931 m;
        // resolution c/(2B) = 0.99931 m (equal, since N/fs = Tc here).
        let p = fmcw();
        assert!((p.range_cell_m() - 0.999_308_193).abs() < 1e-6);
        assert!((p.range_resolution_m() - C / 3.0e8).abs() < 1e-9);
        // f_b = 2 S R / c at R = 50 m: 2*3e12*50/c = 1.000692 MHz.
        assert!((p.beat_hz(50.0).unwrap() - 1.000_692e6).abs() < 1.0);
        // lambda = c / fc = 0.0124266 m; v_max = lambda/(4T) = 49.706 m/s
        assert!((p.wavelength_m() - 0.012_426_63).abs() < 1e-7);
        assert!((p.unambiguous_velocity_mps() - 49.706_5).abs() < 1e-3);
        assert!((p.blind_speed_mps(1) - 99.413).abs() < 1e-2);
        assert!((p.velocity_of_doppler(p.doppler_of_velocity(3.3)) - 3.3).abs() < 1e-12);
        p.check().unwrap();
    }

    #[test]
    fn check_names_the_key() {
        let mut p = fmcw();
        p.samples_per_chirp = 4;
        let e = p.check().unwrap_err().to_string();
        assert!(e.contains("rotorsift:samples_per_chirp = 4"), "{e}");
        let mut p = fmcw();
        p.carrier_hz = -1.0;
        assert!(p
            .check()
            .unwrap_err()
            .to_string()
            .contains("core:frequency"));
    }
}
