//! The radar's own imperfections, common to every chirp: a slow common gain and phase drift
//! of every return (transmitter power and oscillator wander; band-limited, see
//! [`super::scintillation`]), and on FMCW the transmitter-to-receiver leakage (a beat tone
//! at a short equivalent range, riding on the gain drift; its phase drift cancels on so
//! short a path: range correlation of the oscillator's phase noise, common practice) and the
//! receiver's DC offset (a constant on every sample, range bin 0). Both are common practice
//! in short-range FMCW front ends.

use rustfft::num_complex::{Complex32, Complex64};

use super::noise::stream_rng;
use super::radar_eq::db_to_lin;
use super::scene::RadarSpec;
use super::scintillation::Scintillation;
use super::synth::Ctx;

/// The impairments of one run.
pub struct Impairments {
    drift: Scintillation,
    /// Leakage plus DC offset, one chirp's samples (empty when neither is given).
    receiver: Vec<Complex32>,
    dc: Complex32,
}

impl Impairments {
    /// Plans them from the radar table, drawing from streams `stream`, `stream + 1`, ...
    pub fn new(radar: &RadarSpec, ctx: &Ctx, seed: u64, stream: u64) -> Self {
        let drift = if radar.gain_drift > 0.0 || radar.phase_drift_rad > 0.0 {
            Scintillation::new(
                radar.gain_drift,
                radar.phase_drift_rad,
                (radar.drift_hz, radar.drift_order),
                ctx.params.chirp_interval_s,
                stream_rng(seed, stream),
                stream_rng(seed, stream + 1),
            )
        } else {
            Scintillation::none()
        };
        let mut receiver = Vec::new();
        if let Some(db) = radar.leakage_snr_db {
            receiver = vec![Complex32::new(0.0, 0.0); ctx.n];
            let a = db_to_lin(db).sqrt();
            let r = radar.leakage_range_m;
            // a fixed phase from the path length, then the beat tone of range r
            ctx.put(
                &mut receiver,
                Complex64::from_polar(a, ctx.k4 * r),
                r.max(0.0),
            );
        }
        let dc = radar
            .dc_offset_snr_db
            .map_or(Complex32::new(0.0, 0.0), |db| {
                let a = db_to_lin(db).sqrt() as f32;
                // a fixed arbitrary phase (the same for every run: it is the receiver's)
                Complex32::from_polar(a, 0.7)
            });
        Impairments {
            drift,
            receiver,
            dc,
        }
    }

    /// The common complex gain of every return at the next chirp.
    pub fn next_drift(&mut self) -> Complex64 {
        self.drift.next_gain()
    }

    /// Adds the leakage (scaled by the gain part of `drift`) and the DC offset to one chirp.
    pub fn add_receiver(&self, drift: Complex64, chirp: &mut [Complex32]) {
        if !self.receiver.is_empty() {
            let g = drift.norm() as f32;
            for (o, l) in chirp.iter_mut().zip(&self.receiver) {
                *o += *l * g;
            }
        }
        if self.dc != Complex32::new(0.0, 0.0) {
            for o in chirp.iter_mut() {
                *o += self.dc;
            }
        }
    }
}
