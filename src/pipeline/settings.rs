//! The settings of the detection path (front end, CFAR, micro-Doppler detector, tracker),
//! with defaults that work on both waveforms without tuning, validated in one place.

use serde::{Deserialize, Serialize};

use crate::detect::{CfarParams, ClutterMapParams, MicroDopplerParams, TrackerParams};
use crate::error::{ensure, Result};
use crate::frontend::{Canceller, Window};

/// Longest CPI, chirps (a Doppler FFT of 65536 bins: far beyond any useful dwell, and a
/// cap on the memory of one map).
pub const MAX_CPI_CHIRPS: usize = 1 << 16;

/// Shortest automatic CPI, chirps: the 256-chirp CPI the project's SNRs are referred to
/// (the "clear" SNR of the issues, `fast_band_snr_db`), so a slow radar still integrates
/// that many chirps. A project choice.
pub const AUTO_CPI_MIN_CHIRPS: usize = 256;

/// Longest automatic CPI, chirps. A project choice, not an outside figure: at the default
/// 25.6 ms it binds only above about 116 kHz chirp rate (beyond every demo radar, 2-30
/// kHz), and keeps one automatic map to 4096 x range cells (16 MiB of complex `f32` at
/// 512 cells) per path. `--cpi` may ask for more, up to [`MAX_CPI_CHIRPS`].
pub const AUTO_CPI_MAX_CHIRPS: usize = 4096;

/// Everything that shapes how a recording becomes tracks. Keys missing from a stored copy
/// (a model file of an earlier version) take their defaults.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct DetectSettings {
    /// Chirps per coherent processing interval (Doppler FFT length); 0 = automatic: the
    /// power of two nearest (in log) to `cpi_target_s / T`, at least 256.
    pub cpi_chirps: usize,
    /// Chirps from one CPI to the next; 0 = half the CPI.
    pub cpi_hop: usize,
    /// The CPI duration aimed at when `cpi_chirps` is automatic, s.
    pub cpi_target_s: f64,
    /// Time constant of the clutter map (stationary-return estimate), s.
    pub clutter_map_s: f64,
    /// Clutter-map CFAR on the notch bins of the clutter-map path: each cell against its
    /// own history (Nitzberg 1986).
    pub clutter_cfar: ClutterMapParams,
    /// Margin on the measured leak of strong stationary returns (their sub-clutter
    /// visibility): a cell's expected leak, `g(d) ref_k`, is counted this many times over
    /// (linear).
    pub leak_margin: f32,
    /// The micro-Doppler energy detector counts Doppler bins this far from 0 Hz and
    /// beyond, m/s (energy beyond a few m/s: blades, not a scintillating building's or a
    /// hedge's spread).
    pub md_min_speed_mps: f64,
    /// A track found mostly (at least half its CPIs) in the notch is kept only when at
    /// least this share of its detections, and at least `notch_confirm_points`, show the
    /// rotor signature (`Detection::rotor_evidence` >= 1).
    pub notch_confirm_fraction: f64,
    /// See `notch_confirm_fraction`.
    pub notch_confirm_points: usize,
    /// Clutter canceller before the Doppler FFT.
    pub canceller: Canceller,
    /// Rotate each chirp's history to its predecessor's common phase before cancelling.
    pub phase_align: bool,
    /// Window of the range FFT (FMCW).
    pub range_window: Window,
    /// Window of the Doppler FFT.
    pub doppler_window: Window,
    /// Half-width of the canceller notch, m/s: Doppler bins slower than this (and the
    /// window's main lobe around 0 Hz) are not tested by the CFAR; returns there are found
    /// by their micro-Doppler spread instead.
    pub notch_mps: f64,
    /// 2-D CFAR on the cancelled, range-normalised map.
    pub cfar: CfarParams,
    /// Micro-Doppler energy detector for returns with the body in the notch.
    pub microdoppler: MicroDopplerParams,
    /// Noise floor: median smoother half-width across range, cells.
    pub noise_half_window: usize,
    /// Noise floor: exponential averaging factor across CPIs, (0, 1].
    pub noise_smoothing: f64,
    /// Tracker.
    pub tracker: TrackerParams,
    /// Confirmed tracks shorter than this, s, ...
    pub weak_track_max_s: f64,
    /// ... whose mean SNR is less than this many dB above the CFAR threshold are dropped
    /// (what M-of-N confirmation lets through from noise).
    pub weak_track_margin_db: f64,
}

impl Default for DetectSettings {
    fn default() -> Self {
        DetectSettings {
            cpi_chirps: 0,
            cpi_hop: 0,
            cpi_target_s: 0.0256,
            clutter_map_s: 0.2,
            clutter_cfar: ClutterMapParams::default(),
            leak_margin: 3.0,
            md_min_speed_mps: 2.0,
            notch_confirm_fraction: 0.3,
            notch_confirm_points: 3,
            canceller: Canceller::ThreePulse,
            phase_align: true,
            range_window: Window::Hann,
            doppler_window: Window::Hann,
            notch_mps: 0.6,
            cfar: CfarParams::default(),
            microdoppler: MicroDopplerParams::default(),
            noise_half_window: 8,
            noise_smoothing: 0.25,
            // Association on range alone: a rotor's strongest Doppler line may be a blade
            // line that jumps from CPI to CPI, so Doppler neither gates nor steers the rate.
            tracker: TrackerParams {
                velocity_gate_mps: 1.0e3,
                velocity_gain: 0.0,
                ..TrackerParams::default()
            },
            weak_track_max_s: 0.6,
            weak_track_margin_db: 1.0,
        }
    }
}

impl DetectSettings {
    /// Chirps per CPI for chirp interval `t_s`.
    pub fn cpi_for(&self, t_s: f64) -> usize {
        if self.cpi_chirps > 0 {
            return self.cpi_chirps;
        }
        crate::stats::nearest_power_of_two(
            self.cpi_target_s / t_s,
            AUTO_CPI_MIN_CHIRPS,
            AUTO_CPI_MAX_CHIRPS,
        )
    }
    /// Chirps from one CPI to the next for a CPI of `m` chirps.
    pub fn hop_for(&self, m: usize) -> usize {
        if self.cpi_hop > 0 {
            self.cpi_hop.min(m)
        } else {
            (m / 2).max(1)
        }
    }

    /// The shortest CPI the CFAR window fits in: `2 (guard_doppler + train_doppler) + 1`
    /// Doppler bins (the window of [`crate::detect::CfarParams`]), and at least 16.
    pub fn min_cpi_chirps(&self) -> usize {
        (2 * (self.cfar.guard_doppler + self.cfar.train_doppler) + 1).max(16)
    }

    /// Checks every value; errors name the value and the allowed range.
    pub fn check(&self) -> Result<()> {
        let min = self.min_cpi_chirps();
        ensure(
            self.cpi_chirps == 0 || (self.cpi_chirps >= min && self.cpi_chirps <= MAX_CPI_CHIRPS),
            || {
                format!(
                    "--cpi {}: expected 0 (automatic) or {min} to {MAX_CPI_CHIRPS} chirps (the CFAR window spans {min} Doppler bins)",
                    self.cpi_chirps
                )
            },
        )?;
        ensure(
            self.cpi_hop == 0 || self.cpi_chirps == 0 || self.cpi_hop <= self.cpi_chirps,
            || {
                format!(
                    "--hop {}: expected 1 to the CPI length ({} chirps), or 0 for half the CPI",
                    self.cpi_hop, self.cpi_chirps
                )
            },
        )?;
        ensure(self.cpi_target_s > 0.0 && self.cpi_target_s <= 1.0, || {
            format!("CPI target {} s: expected 0 < t <= 1", self.cpi_target_s)
        })?;
        ensure(
            self.clutter_map_s > 0.0 && self.clutter_map_s.is_finite(),
            || {
                format!(
                    "clutter map time constant {} s: expected > 0",
                    self.clutter_map_s
                )
            },
        )?;
        ensure(self.notch_mps.is_finite() && self.notch_mps >= 0.0, || {
            format!(
                "notch {} m/s: expected a finite number >= 0",
                self.notch_mps
            )
        })?;
        ensure(
            self.noise_smoothing > 0.0 && self.noise_smoothing <= 1.0,
            || {
                format!(
                    "noise smoothing {}: expected 0 < x <= 1",
                    self.noise_smoothing
                )
            },
        )?;
        ensure(
            self.weak_track_max_s >= 0.0 && self.weak_track_margin_db.is_finite(),
            || {
                format!(
                    "weak-track rule {} s / {} dB: expected a duration >= 0 and a finite margin",
                    self.weak_track_max_s, self.weak_track_margin_db
                )
            },
        )?;
        ensure(
            self.leak_margin.is_finite() && self.leak_margin >= 0.0 && self.leak_margin <= 1e3,
            || format!("leak margin {}: expected 0 to 1000", self.leak_margin),
        )?;
        ensure(
            self.md_min_speed_mps.is_finite() && self.md_min_speed_mps >= 0.0,
            || {
                format!(
                    "micro-Doppler least speed {} m/s: expected a finite number >= 0",
                    self.md_min_speed_mps
                )
            },
        )?;
        ensure(
            (0.0..=1.0).contains(&self.notch_confirm_fraction) && self.notch_confirm_points <= 1000,
            || {
                format!(
                    "notch confirmation {} / {} points: expected a share from 0 to 1 and at most 1000 points",
                    self.notch_confirm_fraction, self.notch_confirm_points
                )
            },
        )?;
        self.cfar.check()?;
        self.clutter_cfar.check()?;
        self.microdoppler.check()?;
        self.tracker.check()
    }
}
