//! Trajectories: where an object is at time t (radar at the origin, z up, metres) and its
//! velocity. Built once from a [`MotionSpec`] and the object's random sway phases.

use std::f64::consts::PI;

use rand::Rng;

use super::scene::MotionSpec;

/// A 3-vector, m or m/s.
pub type V3 = [f64; 3];

/// |v|.
pub fn norm(v: V3) -> f64 {
    (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt()
}

/// a + s b.
pub fn add_scaled(a: V3, s: f64, b: V3) -> V3 {
    [a[0] + s * b[0], a[1] + s * b[1], a[2] + s * b[2]]
}

/// a . b.
pub fn dot(a: V3, b: V3) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

/// An object's path in time.
#[derive(Debug, Clone)]
pub struct Trajectory {
    origin: V3,
    velocity: V3,
    sway_m: f64,
    sway_w: [f64; 3],
    sway_phase: [f64; 3],
    /// Time the object appears, s.
    pub start_s: f64,
    /// Time it leaves, s (infinite when it stays).
    pub stop_s: f64,
}

impl Trajectory {
    /// Plans the path; hover sway phases are drawn from `rng`. Hover sway is a Lissajous
    /// wander: x amplitude a with period P, y amplitude a with period 1.3 P, z amplitude
    /// a/2 with period 0.7 P.
    pub fn new(m: &MotionSpec, start_s: f64, stop_s: Option<f64>, rng: &mut impl Rng) -> Self {
        let stop_s = stop_s.unwrap_or(f64::INFINITY);
        match m {
            MotionSpec::Hover {
                position,
                sway_m,
                sway_period_s,
                drift_mps,
            } => {
                let w = 2.0 * PI / sway_period_s;
                Trajectory {
                    origin: *position,
                    velocity: *drift_mps,
                    sway_m: *sway_m,
                    sway_w: [w, w / 1.3, w / 0.7],
                    sway_phase: [
                        rng.gen::<f64>() * 2.0 * PI,
                        rng.gen::<f64>() * 2.0 * PI,
                        rng.gen::<f64>() * 2.0 * PI,
                    ],
                    start_s,
                    stop_s,
                }
            }
            MotionSpec::Linear { start, velocity } => Trajectory {
                origin: *start,
                velocity: *velocity,
                sway_m: 0.0,
                sway_w: [0.0; 3],
                sway_phase: [0.0; 3],
                start_s,
                stop_s,
            },
        }
    }

    /// A fixed point.
    pub fn fixed(p: V3) -> Self {
        Trajectory {
            origin: p,
            velocity: [0.0; 3],
            sway_m: 0.0,
            sway_w: [0.0; 3],
            sway_phase: [0.0; 3],
            start_s: 0.0,
            stop_s: f64::INFINITY,
        }
    }

    /// Whether the object exists at time t.
    pub fn active(&self, t: f64) -> bool {
        t >= self.start_s && t < self.stop_s
    }

    /// Position at time t, m.
    pub fn position(&self, t: f64) -> V3 {
        let tau = t - self.start_s;
        let mut p = add_scaled(self.origin, tau, self.velocity);
        if self.sway_m > 0.0 {
            let amp = [self.sway_m, self.sway_m, 0.5 * self.sway_m];
            for i in 0..3 {
                p[i] += amp[i] * (self.sway_w[i] * tau + self.sway_phase[i]).sin();
            }
        }
        p
    }

    /// Velocity at time t, m/s.
    pub fn velocity(&self, t: f64) -> V3 {
        let tau = t - self.start_s;
        let mut v = self.velocity;
        if self.sway_m > 0.0 {
            let amp = [self.sway_m, self.sway_m, 0.5 * self.sway_m];
            for i in 0..3 {
                v[i] += amp[i] * self.sway_w[i] * (self.sway_w[i] * tau + self.sway_phase[i]).cos();
            }
        }
        v
    }

    /// Radial velocity dR/dt at time t, m/s (positive = receding).
    pub fn radial_velocity(&self, t: f64) -> f64 {
        let p = self.position(t);
        let r = norm(p);
        if r == 0.0 {
            0.0
        } else {
            dot(p, self.velocity(t)) / r
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;

    /// Radial velocity is the time derivative of |p| (checked by a central difference).
    #[test]
    fn radial_velocity_is_derivative_of_range() {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(1);
        let m = MotionSpec::Hover {
            position: [30.0, 10.0, 5.0],
            sway_m: 0.3,
            sway_period_s: 2.0,
            drift_mps: [0.2, -0.1, 0.0],
        };
        let tr = Trajectory::new(&m, 0.5, None, &mut rng);
        for t in [0.6, 1.0, 1.7] {
            let h = 1e-5;
            let d = (norm(tr.position(t + h)) - norm(tr.position(t - h))) / (2.0 * h);
            assert!((d - tr.radial_velocity(t)).abs() < 1e-6);
        }
        let l = Trajectory::new(
            &MotionSpec::Linear {
                start: [100.0, 0.0, 0.0],
                velocity: [-5.0, 0.0, 0.0],
            },
            1.0,
            Some(3.0),
            &mut rng,
        );
        assert_eq!(l.position(2.0), [95.0, 0.0, 0.0]);
        assert!((l.radial_velocity(2.0) + 5.0).abs() < 1e-12);
        assert!(!l.active(0.5) && l.active(1.0) && !l.active(3.0));
    }
}
