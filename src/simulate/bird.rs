//! Flapping-wing bird: a body point plus, per wing, two scatterers on the inner segment and
//! two on the outer one. Flapping angles (elevation of each segment above the bird's
//! horizontal plane) inner 40° cos(2 pi f t) + 15°, outer 30° cos(2 pi f t) + 40°
//! (Chen 2011, bird model; parameters as used by Yoon et al., JEES 21(4), 2021). Wing
//! amplitudes follow the wing aspect and the body/wing-root return rises and falls with the
//! inner wing, so the cadence shows in the amplitude; the body RCS fluctuates slowly
//! (log-normal); gliding spells hold the wings still.

use std::f64::consts::PI;

use rand::Rng;
use rand_chacha::ChaCha8Rng;
use rustfft::num_complex::{Complex32, Complex64};
use serde_json::{json, Map, Value};

use super::motion::{dot, norm, Trajectory, V3};
use super::noise::cn64;
use super::radar_eq::{db_to_lin, lin_to_db};
use super::scene::BirdSpec;
use super::synth::{traj_kinematics, Ctx, Source};

/// Standard gravity, m/s^2.
const G: f64 = 9.806_65;
/// Sea-level air density, kg/m^3 (ISA).
const RHO: f64 = 1.225;

/// Pennycuick's wingbeat frequency f = m^(3/8) g^(1/2) b^(-23/24) S^(-1/3) rho^(-3/8)
/// (Pennycuick, J. Exp. Biol. 199:1613, 1996), SI units: mass kg, span m, area m^2 -> Hz.
pub fn pennycuick_wingbeat_hz(mass_kg: f64, wingspan_m: f64, wing_area_m2: f64) -> f64 {
    mass_kg.powf(3.0 / 8.0)
        * G.sqrt()
        * wingspan_m.powf(-23.0 / 24.0)
        * wing_area_m2.powf(-1.0 / 3.0)
        * RHO.powf(-3.0 / 8.0)
}

/// Default wing area from the span: S = b^2 / 6.5 (aspect ratio 6.5, a typical value,
/// from memory).
pub fn default_wing_area(wingspan_m: f64) -> f64 {
    wingspan_m * wingspan_m / 6.5
}

/// The wingbeat of a bird spec: `wingbeat_hz`, else Pennycuick's formula.
pub fn wingbeat_of(spec: &BirdSpec) -> f64 {
    spec.wingbeat_hz.unwrap_or_else(|| {
        let m = spec.mass_kg.unwrap_or(0.1);
        let s = spec
            .wing_area_m2
            .unwrap_or_else(|| default_wing_area(spec.wingspan_m));
        pennycuick_wingbeat_hz(m, spec.wingspan_m, s)
    })
}

/// Flapping angles (inner, outer) in rad at flap phase `phase` (rad).
pub fn flap_angles(phase: f64) -> (f64, f64) {
    let c = phase.cos();
    (
        (40.0 * c + 15.0).to_radians(),
        (30.0 * c + 40.0).to_radians(),
    )
}

/// A bird source.
pub struct Bird {
    spec: BirdSpec,
    traj: Trajectory,
    rng: ChaCha8Rng,
    f_wb: f64,
    phase: f64,
    gliding: bool,
    spell_left_s: f64,
    /// State of the log-RCS fluctuation (unit variance) and of the AR(1) stage driving it.
    g: f64,
    g_drive: f64,
    sqrt_wing_pt: f64,
    body_rcs: f64,
}

impl Bird {
    /// Plans the bird.
    pub fn new(spec: &BirdSpec, mut rng: ChaCha8Rng) -> Self {
        let traj = Trajectory::new(&spec.motion, spec.start_s, spec.stop_s, &mut rng);
        let gliding = rng.gen::<f64>() < spec.glide_fraction;
        let phase = rng.gen::<f64>() * 2.0 * PI;
        let g = cn64(&mut rng).re * std::f64::consts::SQRT_2;
        let g_drive = cn64(&mut rng).re * std::f64::consts::SQRT_2;
        let wing = spec.wing_rcs_dbsm.unwrap_or(spec.body_rcs_dbsm - 10.0);
        let mut b = Bird {
            spec: spec.clone(),
            traj,
            rng,
            f_wb: wingbeat_of(spec),
            phase,
            gliding,
            spell_left_s: 0.0,
            g,
            g_drive,
            sqrt_wing_pt: (db_to_lin(wing) / 4.0).sqrt(),
            body_rcs: db_to_lin(spec.body_rcs_dbsm),
        };
        b.spell_left_s = b.draw_spell();
        b
    }

    /// Length of the next spell: exponential, mean glide_length_s when gliding, else
    /// glide_length_s (1 - g) / g (so the long-run glide fraction is g).
    fn draw_spell(&mut self) -> f64 {
        let g = self.spec.glide_fraction;
        if g <= 0.0 {
            return f64::INFINITY;
        }
        let mean = if self.gliding {
            self.spec.glide_length_s
        } else {
            self.spec.glide_length_s * (1.0 - g) / g
        };
        let u: f64 = self.rng.gen::<f64>().max(1e-12);
        -mean * u.ln()
    }

    /// Advances the internal state by dt seconds: flap phase, glide spells, RCS fluctuation.
    /// Body RCS model: sigma(t) = sigma_mean exp(s g(t) - s^2 / 2), s = (fluct dB) ln10 / 10,
    /// g a unit-variance Gaussian from two cascaded AR(1) stages of time constant
    /// rcs_correlation_s (a smooth log-normal fluctuation with the mean RCS preserved).
    fn step(&mut self, dt: f64) {
        if !self.gliding {
            self.phase = (self.phase + 2.0 * PI * self.f_wb * dt) % (2.0 * PI);
        }
        self.spell_left_s -= dt;
        if self.spell_left_s <= 0.0 {
            self.gliding = !self.gliding;
            self.spell_left_s = self.draw_spell();
        }
        // Two AR(1) stages in cascade: a smooth fluctuation whose spectrum falls as f^-4
        // (one stage's f^-2 tail would put a strong bird's white-ish residue across every
        // Doppler bin, which no wing motion makes). The second stage's gain
        // (1 - rho^2) / sqrt(1 + rho^2) keeps the output at unit variance.
        let rho = (-dt / self.spec.rcs_correlation_s).exp();
        let w = cn64(&mut self.rng).re * std::f64::consts::SQRT_2;
        let r2 = rho * rho;
        self.g_drive = rho * self.g_drive + (1.0 - r2).sqrt() * w;
        self.g = rho * self.g + (1.0 - r2) / (1.0 + r2).sqrt() * self.g_drive;
    }
}

impl Source for Bird {
    fn add(&mut self, t: f64, ctx: &Ctx, sig: &mut [Complex32]) {
        let dt = ctx.params.chirp_interval_s;
        let active = self.traj.active(t);
        if active {
            let p0 = self.traj.position(t);
            let r = norm(p0);
            if r > 0.0 && ctx.in_coverage(r) {
                let c = self.coefficient(t, p0, ctx);
                ctx.put(sig, c, r);
            }
        }
        self.step(dt);
    }
    fn kinematics(&self, t: f64) -> Option<(V3, f64)> {
        traj_kinematics(&self.traj, t)
    }
    fn extent_m(&self) -> f64 {
        self.spec.wingspan_m / 2.0
    }
    fn truth(&self, ctx: &Ctx, median_range_m: f64, _pos: V3) -> Map<String, Value> {
        let mut m = Map::new();
        m.insert(
            "wingbeat_hz".into(),
            json!((self.f_wb * 1000.0).round() / 1000.0),
        );
        m.insert("wingspan_m".into(), json!(self.spec.wingspan_m));
        if let Some(mass) = self.spec.mass_kg {
            m.insert("mass_kg".into(), json!(mass));
        }
        m.insert("glide_fraction".into(), json!(self.spec.glide_fraction));
        m.insert("body_rcs_dbsm".into(), json!(self.spec.body_rcs_dbsm));
        let snr = ctx.budget.snr(self.body_rcs, median_range_m) * ctx.coherent_gain();
        m.insert(
            "body_snr_db".into(),
            json!((lin_to_db(snr) * 1000.0).round() / 1000.0),
        );
        m
    }
}

impl Bird {
    /// Sum of body and wing scatterers at time t with body centre `p0`.
    fn coefficient(&self, t: f64, p0: V3, ctx: &Ctx) -> Complex64 {
        let v = self.traj.velocity(t);
        let vh = (v[0] * v[0] + v[1] * v[1]).sqrt();
        let psi = if vh > 0.1 {
            v[1].atan2(v[0])
        } else {
            self.spec.heading_deg.to_radians()
        };
        let fwd = [psi.cos(), psi.sin(), 0.0];
        let left = [-psi.sin(), psi.cos(), 0.0];
        let up = [0.0, 0.0, 1.0];
        let half = self.spec.wingspan_m / 2.0;
        let (w0, l1, l2) = (0.1 * half, 0.4 * half, 0.5 * half);
        // body heaves with the wingbeat by 2% of the half-span
        let body = [p0[0], p0[1], p0[2] + 0.02 * half * self.phase.sin()];
        let rb = norm(body);
        let amp = ctx.budget.amplitude_per_sqrt_m2(rb);
        let s = self.spec.rcs_fluctuation_db * std::f64::consts::LN_10 / 10.0;
        let fluct = (s * self.g - s * s / 2.0).exp();
        let (a_in, a_out) = flap_angles(self.phase);
        // body + wing-root return brightens as the wings rise and darkens as they fall:
        // amplitude (1 + 0.6 sin(inner angle)), 0.75..1.49 (6 dB) over a beat (a modelling
        // choice that puts the cadence's fundamental into the amplitude)
        let body_mod = 1.0 + 0.6 * a_in.sin();
        let mut c =
            Complex64::from_polar(amp * (self.body_rcs * fluct).sqrt() * body_mod, ctx.k4 * rb);
        let los = [p0[0] / rb, p0[1] / rb, p0[2] / rb];
        for side in [1.0, -1.0] {
            let seg = |a: f64| -> V3 {
                let (ca, sa) = (a.cos(), a.sin());
                [
                    side * ca * left[0] + sa * up[0],
                    side * ca * left[1] + sa * up[1],
                    side * ca * left[2] + sa * up[2],
                ]
            };
            let d_in = seg(a_in);
            let d_out = seg(a_out);
            let shoulder = [
                body[0] + side * w0 * left[0],
                body[1] + side * w0 * left[1],
                body[2] + side * w0 * left[2],
            ];
            let elbow = [
                shoulder[0] + l1 * d_in[0],
                shoulder[1] + l1 * d_in[1],
                shoulder[2] + l1 * d_in[2],
            ];
            for (d, base, len) in [(d_in, shoulder, l1), (d_out, elbow, l2)] {
                // the segment's normal: forward x segment direction
                let n = [
                    fwd[1] * d[2] - fwd[2] * d[1],
                    fwd[2] * d[0] - fwd[0] * d[2],
                    fwd[0] * d[1] - fwd[1] * d[0],
                ];
                let aspect = 0.3 + 0.7 * dot(n, los).abs();
                let a = amp * self.sqrt_wing_pt * aspect;
                for frac in [0.5, 1.0] {
                    let q = [
                        base[0] + frac * len * d[0],
                        base[1] + frac * len * d[1],
                        base[2] + frac * len * d[2],
                    ];
                    c += Complex64::from_polar(a, ctx.k4 * norm(q));
                }
            }
        }
        c
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Pennycuick (1996) wingbeat formula against common bird sizes (from
    /// memory): roughly 15 Hz for a 30 g bird, 3.5 Hz for a 1 kg gull.
    #[test]
    fn pennycuick_magnitudes() {
        let small = pennycuick_wingbeat_hz(0.03, 0.25, default_wing_area(0.25));
        assert!((11.0..18.0).contains(&small), "{small}");
        let gull = pennycuick_wingbeat_hz(1.0, 1.3, default_wing_area(1.3));
        assert!((3.0..4.2).contains(&gull), "{gull}");
        // f scales as m^(3/8): doubling the mass multiplies f by 2^0.375 = 1.2968
        let r = pennycuick_wingbeat_hz(2.0, 1.3, 0.26) / pennycuick_wingbeat_hz(1.0, 1.3, 0.26);
        assert!((r - 1.296_84).abs() < 1e-4);
        let (i, o) = flap_angles(0.0);
        assert!((i.to_degrees() - 55.0).abs() < 1e-9 && (o.to_degrees() - 70.0).abs() < 1e-9);
    }
}
