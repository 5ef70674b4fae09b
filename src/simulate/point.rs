//! Point scatterers of constant RCS: `stationary` returns (buildings, poles; fixed phase,
//! optionally with slow amplitude and phase scintillation, see [`super::scintillation`]),
//! `swaying` slow movers (masts, signs: R(t) = R0 + a sin(2 pi t / period) along the line
//! of sight) and `point` test targets on any motion.

use std::f64::consts::PI;

use rand::Rng;
use rand_chacha::ChaCha8Rng;
use rustfft::num_complex::{Complex32, Complex64};
use serde_json::{json, Map, Value};

use super::motion::{norm, Trajectory, V3};
use super::noise::stream_rng;
use super::radar_eq::{db_to_lin, lin_to_db};
use super::scene::{PointSpec, StationarySpec, SwayingSpec};
use super::scintillation::Scintillation;
use super::synth::{traj_kinematics, Ctx, Source};

/// A point scatterer on a trajectory, or swaying radially about a fixed point.
pub struct PointSource {
    kind: &'static str,
    traj: Trajectory,
    sqrt_rcs: f64,
    rcs_dbsm: f64,
    /// Radial sway amplitude, m, and angular rate, rad/s (swaying only).
    sway: Option<(f64, f64, f64)>,
    /// Slow amplitude/phase fluctuation (stationary only).
    scint: Scintillation,
    scint_spec: (f64, f64, f64),
}

impl PointSource {
    /// A fixed return of a radar with chirp interval `chirp_interval_s`; its
    /// scintillation draws from streams derived from (`seed`, `stream`).
    pub fn stationary(s: &StationarySpec, chirp_interval_s: f64, seed: u64, stream: u64) -> Self {
        let base = stream.wrapping_mul(1000);
        PointSource {
            kind: "stationary",
            traj: Trajectory::fixed(s.position),
            sqrt_rcs: db_to_lin(s.rcs_dbsm).sqrt(),
            rcs_dbsm: s.rcs_dbsm,
            sway: None,
            scint: Scintillation::new(
                s.amplitude_scintillation,
                s.phase_scintillation_rad,
                (s.scintillation_hz, s.scintillation_order),
                chirp_interval_s,
                stream_rng(seed, base.wrapping_add(1)),
                stream_rng(seed, base.wrapping_add(2)),
            ),
            scint_spec: (
                s.amplitude_scintillation,
                s.phase_scintillation_rad,
                s.scintillation_hz,
            ),
        }
    }
    /// A swaying return; its sway phase is drawn from `rng`.
    pub fn swaying(s: &SwayingSpec, rng: &mut ChaCha8Rng) -> Self {
        PointSource {
            kind: "swaying",
            traj: Trajectory::fixed(s.position),
            sqrt_rcs: db_to_lin(s.rcs_dbsm).sqrt(),
            rcs_dbsm: s.rcs_dbsm,
            sway: Some((s.sway_m, 2.0 * PI / s.period_s, rng.gen::<f64>() * 2.0 * PI)),
            scint: Scintillation::none(),
            scint_spec: (0.0, 0.0, 0.0),
        }
    }
    /// A moving point.
    pub fn point(s: &PointSpec, rng: &mut ChaCha8Rng) -> Self {
        PointSource {
            kind: "point",
            traj: Trajectory::new(&s.motion, s.start_s, s.stop_s, rng),
            sqrt_rcs: db_to_lin(s.rcs_dbsm).sqrt(),
            rcs_dbsm: s.rcs_dbsm,
            sway: None,
            scint: Scintillation::none(),
            scint_spec: (0.0, 0.0, 0.0),
        }
    }

    fn range_vel(&self, t: f64) -> Option<(f64, V3, f64)> {
        let (p, v) = traj_kinematics(&self.traj, t)?;
        let r0 = norm(p);
        match self.sway {
            None => Some((r0, p, v)),
            Some((a, w, ph)) => {
                let r = r0 + a * (w * t + ph).sin();
                let s = r / r0.max(1e-9);
                Some((
                    r,
                    [p[0] * s, p[1] * s, p[2] * s],
                    a * w * (w * t + ph).cos(),
                ))
            }
        }
    }
}

impl Source for PointSource {
    fn add(&mut self, t: f64, ctx: &Ctx, sig: &mut [Complex32]) {
        let Some((r, _, _)) = self.range_vel(t) else {
            return;
        };
        if r <= 0.0 || !ctx.in_coverage(r) {
            return;
        }
        let a = ctx.budget.amplitude_per_sqrt_m2(r) * self.sqrt_rcs;
        let g = self.scint.next_gain();
        ctx.put(sig, Complex64::from_polar(a, ctx.k4 * r) * g, r);
    }
    fn kinematics(&self, t: f64) -> Option<(V3, f64)> {
        self.range_vel(t).map(|(_, p, v)| (p, v))
    }
    fn extent_m(&self) -> f64 {
        self.sway.map_or(0.0, |s| s.0)
    }
    fn truth(&self, ctx: &Ctx, median_range_m: f64, _pos: V3) -> Map<String, Value> {
        let mut m = Map::new();
        if self.kind != "point" {
            m.insert("clutter_kind".into(), json!(self.kind));
        }
        if let Some((a, w, _)) = self.sway {
            m.insert("sway_m".into(), json!(a));
            m.insert("sway_period_s".into(), json!(2.0 * PI / w));
        }
        m.insert("rcs_dbsm".into(), json!(self.rcs_dbsm));
        if self.scint_spec.0 > 0.0 || self.scint_spec.1 > 0.0 {
            m.insert("amplitude_scintillation".into(), json!(self.scint_spec.0));
            m.insert("phase_scintillation_rad".into(), json!(self.scint_spec.1));
            m.insert("scintillation_hz".into(), json!(self.scint_spec.2));
        }
        let snr = ctx.budget.snr(db_to_lin(self.rcs_dbsm), median_range_m) * ctx.coherent_gain();
        m.insert(
            "snr_db".into(),
            json!((lin_to_db(snr) * 1000.0).round() / 1000.0),
        );
        m
    }
}
