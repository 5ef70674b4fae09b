//! The settings of the detection path (front end, CFAR, micro-Doppler detector, tracker),
//! with defaults that work on both waveforms without tuning, validated in one place.

use serde::{Deserialize, Serialize};

use crate::detect::{CfarKind, CfarParams, MicroDopplerParams, TrackerParams};
use crate::error::{ensure, Result};
use crate::frontend::{Canceller, Window};

/// Everything that shapes how a recording becomes tracks.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DetectSettings {
    /// Chirps per coherent processing interval (Doppler FFT length).
    pub cpi_chirps: usize,
    /// Chirps from one CPI to the next (CPI length minus overlap).
    pub cpi_hop: usize,
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
    /// Range cells skipped at the start of an FMCW profile (DC and leakage).
    pub skip_near_cells: usize,
    /// Noise floor: median smoother half-width across range, cells.
    pub noise_half_window: usize,
    /// Noise floor: exponential averaging factor across CPIs, (0, 1].
    pub noise_smoothing: f64,
    /// Tracker.
    pub tracker: TrackerParams,
}

impl Default for DetectSettings {
    fn default() -> Self {
        DetectSettings {
            cpi_chirps: 256,
            cpi_hop: 128,
            canceller: Canceller::ThreePulse,
            phase_align: false,
            range_window: Window::Hann,
            doppler_window: Window::Hann,
            notch_mps: 0.6,
            cfar: CfarParams {
                kind: CfarKind::CellAveraging,
                guard_range: 1,
                guard_doppler: 2,
                train_range: 4,
                train_doppler: 8,
                pfa: 1e-6,
            },
            microdoppler: MicroDopplerParams::default(),
            skip_near_cells: 1,
            noise_half_window: 8,
            noise_smoothing: 0.25,
            // Association on range alone: a rotor's strongest Doppler line may be a blade
            // line that jumps from CPI to CPI, so Doppler neither gates nor steers the rate.
            tracker: TrackerParams {
                velocity_gate_mps: 1.0e3,
                velocity_gain: 0.0,
                ..TrackerParams::default()
            },
        }
    }
}

impl DetectSettings {
    /// Checks every value; errors name the value and the allowed range.
    pub fn check(&self) -> Result<()> {
        ensure(
            self.cpi_chirps >= 16 && self.cpi_chirps <= 1 << 16,
            || {
                format!(
                    "CPI length {} chirps: expected 16..=65536",
                    self.cpi_chirps
                )
            },
        )?;
        ensure(self.cpi_hop >= 1 && self.cpi_hop <= self.cpi_chirps, || {
            format!(
                "CPI hop {} chirps: expected 1..=CPI length ({})",
                self.cpi_hop, self.cpi_chirps
            )
        })?;
        ensure(self.notch_mps.is_finite() && self.notch_mps >= 0.0, || {
            format!("notch {} m/s: expected a finite number >= 0", self.notch_mps)
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
        self.cfar.check()?;
        self.microdoppler.check()?;
        self.tracker.check()
    }
}
