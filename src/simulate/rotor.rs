//! Multirotor returns: a point body plus, per rotor, N blades each given by Chen's closed
//! form for a rigid rotating line (Chen, *The Micro-Doppler Effect in Radar*, 2011, ch. 4;
//! Chen & Ling 2002 Eq. 8.19), with the sign of docs/recording-format.md (exp(+j 4 pi R/lambda)).

use std::f64::consts::PI;

use rand::Rng;
use rand_chacha::ChaCha8Rng;
use rustfft::num_complex::Complex64;
use serde_json::{json, Map, Value};

use super::motion::{norm, Trajectory, V3};
use super::radar_eq::{db_to_lin, lin_to_db};
use super::scene::RotorcraftSpec;
use super::synth::{traj_kinematics, Ctx, Source};

/// sinc x = sin x / x (not normalised), 1 at 0.
pub fn sinc(x: f64) -> f64 {
    if x.abs() < 1e-8 {
        1.0
    } else {
        x.sin() / x
    }
}

/// One blade's return relative to its hub, per unit blade amplitude:
/// sinc(Phi) exp(+j Phi) with Phi = 2 pi L cos(beta) cos(theta - az) / lambda
/// (Chen 2011 ch. 4: the integral of exp(+j 4 pi l cos(beta) cos(theta - az) / lambda)
/// over l in [0, L], divided by L). `theta_minus_az` in rad, lengths in m.
pub fn blade_factor(
    blade_length_m: f64,
    wavelength_m: f64,
    cos_beta: f64,
    theta_minus_az: f64,
) -> Complex64 {
    let phi = 2.0 * PI * blade_length_m * cos_beta * theta_minus_az.cos() / wavelength_m;
    Complex64::from_polar(sinc(phi), phi)
}

/// Blade flash rate: N f_rot for even N, 2 N f_rot for odd N (Chen 2011; Martin & Mulgrew
/// 1990; the odd-N rule from memory), Hz.
pub fn blade_flash_hz(blades: usize, rotor_rate_hz: f64) -> f64 {
    if blades % 2 == 0 {
        blades as f64 * rotor_rate_hz
    } else {
        2.0 * blades as f64 * rotor_rate_hz
    }
}

/// Time average of sum_k sinc^2(Phi_k) over one revolution for one rotor (numerically),
/// the mean power of its blades relative to one blade at flash.
pub fn mean_blade_power(
    blades: usize,
    blade_length_m: f64,
    wavelength_m: f64,
    cos_beta: f64,
) -> f64 {
    let steps = 7200;
    let mut acc = 0.0;
    for i in 0..steps {
        let th = 2.0 * PI * i as f64 / steps as f64;
        for k in 0..blades {
            let f = blade_factor(
                blade_length_m,
                wavelength_m,
                cos_beta,
                th + 2.0 * PI * k as f64 / blades as f64,
            );
            acc += f.norm_sqr();
        }
    }
    acc / steps as f64
}

struct Rotor {
    /// Hub offset from the body centre, m (world frame; rotor planes horizontal).
    offset: V3,
    /// Angular rate W, rad/s, signed by the spin direction.
    w: f64,
    phase0: f64,
    rate_hz: f64,
}

/// A multirotor source.
pub struct Rotorcraft {
    spec: RotorcraftSpec,
    traj: Trajectory,
    rotors: Vec<Rotor>,
    sqrt_body: f64,
    sqrt_blade: f64,
}

impl Rotorcraft {
    /// Plans the airframe: hubs at equal angles (yaw + 2 pi i / rotors) on arms; rotor i
    /// turns at rate (1 + u spread) f_rot, u uniform in [-1, 1], with a random start phase,
    /// adjacent rotors counter-rotating.
    pub fn new(spec: &RotorcraftSpec, rng: &mut ChaCha8Rng) -> Self {
        let traj = Trajectory::new(&spec.motion, spec.start_s, spec.stop_s, rng);
        let arm = spec
            .arm_length_m
            .unwrap_or(if spec.rotors == 1 { 0.0 } else { 0.2 });
        let yaw = spec.yaw_deg.to_radians();
        let rotors = (0..spec.rotors)
            .map(|i| {
                let a = yaw + 2.0 * PI * i as f64 / spec.rotors as f64;
                let u: f64 = rng.gen_range(-1.0..=1.0);
                let rate_hz = spec.rotor_rate_hz * (1.0 + u * spec.rotor_rate_spread);
                let dir = if i % 2 == 0 { 1.0 } else { -1.0 };
                Rotor {
                    offset: [arm * a.cos(), arm * a.sin(), 0.0],
                    w: dir * 2.0 * PI * rate_hz,
                    phase0: rng.gen::<f64>() * 2.0 * PI,
                    rate_hz,
                }
            })
            .collect();
        Rotorcraft {
            spec: spec.clone(),
            traj,
            rotors,
            sqrt_body: db_to_lin(spec.body_rcs_dbsm).sqrt(),
            sqrt_blade: db_to_lin(spec.blade_rcs_dbsm).sqrt(),
        }
    }

    /// Mean of the actual per-rotor rates, rev/s.
    pub fn mean_rate_hz(&self) -> f64 {
        self.rotors.iter().map(|r| r.rate_hz).sum::<f64>() / self.rotors.len() as f64
    }
}

impl Source for Rotorcraft {
    fn kinematics(&self, t: f64) -> Option<(V3, f64)> {
        traj_kinematics(&self.traj, t)
    }

    fn extent_m(&self) -> f64 {
        self.spec
            .arm_length_m
            .unwrap_or(if self.spec.rotors == 1 { 0.0 } else { 0.2 })
            + self.spec.blade_length_m
    }

    fn add(&mut self, t: f64, ctx: &Ctx, sig: &mut [rustfft::num_complex::Complex32]) {
        if !self.traj.active(t) {
            return;
        }
        let p = self.traj.position(t);
        let r = norm(p);
        if !ctx.in_coverage(r) || r <= 0.0 {
            return;
        }
        let amp = ctx.budget.amplitude_per_sqrt_m2(r);
        let mut c = Complex64::from_polar(amp * self.sqrt_body, ctx.k4 * r);
        let n_bl = self.spec.blades;
        let l = self.spec.blade_length_m;
        let a_bl = amp * self.sqrt_blade;
        for rot in &self.rotors {
            let hub = [
                p[0] + rot.offset[0],
                p[1] + rot.offset[1],
                p[2] + rot.offset[2],
            ];
            let rh = norm(hub);
            let cos_beta = (hub[0] * hub[0] + hub[1] * hub[1]).sqrt() / rh;
            let az = hub[1].atan2(hub[0]);
            let mut sum = Complex64::new(0.0, 0.0);
            for k in 0..n_bl {
                let theta = rot.w * t + rot.phase0 + 2.0 * PI * k as f64 / n_bl as f64;
                sum += blade_factor(l, ctx.lambda, cos_beta, theta - az);
            }
            c += sum * Complex64::from_polar(a_bl, ctx.k4 * rh);
        }
        ctx.put(sig, c, r);
    }

    fn truth(&self, ctx: &Ctx, median_range_m: f64, median_pos: V3) -> Map<String, Value> {
        let f = self.mean_rate_hz();
        let l = self.spec.blade_length_m;
        let rh = norm(median_pos).max(1e-9);
        let cos_beta = (median_pos[0].powi(2) + median_pos[1].powi(2)).sqrt() / rh;
        let snr_body = ctx
            .budget
            .snr(db_to_lin(self.spec.body_rcs_dbsm), median_range_m);
        let snr_blade1 = ctx
            .budget
            .snr(db_to_lin(self.spec.blade_rcs_dbsm), median_range_m);
        let blades_power = self.spec.rotors as f64
            * mean_blade_power(self.spec.blades, l, ctx.lambda, cos_beta)
            * snr_blade1;
        let gain = ctx.coherent_gain();
        let mut m = Map::new();
        m.insert("rotors".into(), json!(self.spec.rotors));
        m.insert("blades".into(), json!(self.spec.blades));
        m.insert("rotor_rate_hz".into(), json!(round3(f)));
        m.insert("blade_length_m".into(), json!(l));
        m.insert(
            "blade_flash_hz".into(),
            json!(round3(blade_flash_hz(self.spec.blades, f))),
        );
        m.insert("tip_speed_mps".into(), json!(round3(2.0 * PI * f * l)));
        m.insert(
            "tip_doppler_hz".into(),
            json!(round3(2.0 * 2.0 * PI * f * l * cos_beta / ctx.lambda)),
        );
        m.insert("body_rcs_dbsm".into(), json!(self.spec.body_rcs_dbsm));
        m.insert("blade_rcs_dbsm".into(), json!(self.spec.blade_rcs_dbsm));
        m.insert(
            "body_snr_db".into(),
            json!(round3(lin_to_db(snr_body * gain))),
        );
        m.insert(
            "blade_snr_db".into(),
            json!(round3(lin_to_db(blades_power * gain))),
        );
        m
    }
}

fn round3(x: f64) -> f64 {
    (x * 1000.0).round() / 1000.0
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Chen's closed form equals the naive sum of many point scatterers along the blade,
    /// (1/K) sum_i exp(+j 4 pi l_i cos(beta) cos(theta - az) / lambda), l_i = (i + 1/2) L / K
    /// (Chen 2011 ch. 4: the blade as a continuum of points).
    #[test]
    fn closed_form_matches_point_sum() {
        let (l, lambda, cb) = (0.12, 0.0124, 0.9);
        for th in [0.0, 0.3, 1.2, 1.5, 1.57, 2.9, 4.0] {
            let k = 20_000;
            let mut s = Complex64::new(0.0, 0.0);
            for i in 0..k {
                let li = (i as f64 + 0.5) * l / k as f64;
                s += Complex64::from_polar(1.0, 4.0 * PI * li * cb * f64::cos(th) / lambda);
            }
            s /= k as f64;
            let f = blade_factor(l, lambda, cb, th);
            assert!((s - f).norm() < 1e-4, "theta {th}: {s} vs {f}");
        }
    }

    /// Flash rates: N f for even N, 2 N f for odd N (Chen 2011; odd rule from memory);
    /// a common drone example: 2 blades at 90 rev/s flash at 180 Hz.
    #[test]
    fn flash_rates() {
        assert_eq!(blade_flash_hz(2, 90.0), 180.0);
        assert_eq!(blade_flash_hz(3, 90.0), 540.0);
        assert_eq!(blade_flash_hz(4, 50.0), 200.0);
        // at flash (theta - az = 90 deg) a blade returns its full amplitude
        assert!((blade_factor(0.12, 0.0124, 1.0, PI / 2.0).norm() - 1.0).abs() < 1e-12);
        assert!(mean_blade_power(2, 0.12, 0.0124, 1.0) < 0.1);
    }
}
