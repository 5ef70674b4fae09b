//! Slow, band-limited fluctuation of "stationary" returns and of the radar itself: the few
//! per cent of amplitude and few mrad of phase by which a building, pole or patch of ground
//! wanders under wind load and multipath (common practice, from memory: 0.5-3 % and 2-20
//! mrad, band-limited to 0.5-5 Hz), and the common gain and phase drift of a radar.
//!
//! [`BandLimited`] is unit-variance Gaussian noise through `n` identical first-order
//! low-pass sections (an n-th order Gauss-Markov process). With the stage corner `f_c`
//! its power spectrum is `S(f) ∝ 1 / (1 + (f/f_c)²)ⁿ`, which falls to half at
//! `f_3 = f_c sqrt(2^(1/n) - 1)` (n cascaded identical RC sections, standard filter theory,
//! from memory): the process is specified by `f_3`, its -3 dB bandwidth, and its order
//! (the skirt falls 20 n dB a decade). The process runs at a decimated rate (at least 64
//! samples per `1/f_c`, and at most the chirp rate) and is linearly interpolated between
//! its samples, so a few Hz of bandwidth costs next to nothing at a 30 kHz chirp rate.

use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};
use rustfft::num_complex::Complex64;

/// Default order (sections) of the scintillation processes.
pub const DEFAULT_ORDER: usize = 3;

/// Ratio of the -3 dB bandwidth of `order` cascaded identical first-order low-pass
/// sections to the corner of one section: `sqrt(2^(1/order) - 1)`.
pub fn cascade_half_power_ratio(order: usize) -> f64 {
    (2f64.powf(1.0 / order.max(1) as f64) - 1.0).sqrt()
}

/// Variance of the output of two cascaded one-pole sections `y[n] = a y[n-1] + b x[n]`
/// driven by unit-variance white noise: `b⁴ (1 + a²) / (1 - a²)³` (the impulse response
/// is `b² (k + 1) aᵏ`, and `Σ (k + 1)² r^k = (1 + r)/(1 - r)³`).
pub fn cascade_variance(a: f64, b: f64) -> f64 {
    b.powi(4) * (1.0 + a * a) / (1.0 - a * a).powi(3)
}

/// Variance of `order` cascaded one-pole sections driven by unit-variance white noise:
/// the sum of the squared impulse response `bⁿ C(k + n - 1, n - 1) aᵏ`, summed until
/// its terms no longer count.
pub fn cascade_variance_n(a: f64, b: f64, order: usize) -> f64 {
    let n = order.max(1);
    let mut total = 0.0f64;
    let mut c = 1.0f64; // C(k + n - 1, n - 1) at k = 0
    let mut ak = 1.0f64;
    for k in 0..10_000_000usize {
        let h = c * ak;
        total += h * h;
        if k > 10 && h * h < 1e-16 * total {
            break;
        }
        // C(k + n, n - 1) = C(k + n - 1, n - 1) (k + n) / (k + 1)
        c *= (k + n) as f64 / (k + 1) as f64;
        ak *= a;
    }
    total * b.powi(2 * n as i32)
}

/// A unit-variance Gaussian process with a -3 dB bandwidth `bandwidth_hz`, sampled once
/// per chirp.
#[derive(Debug, Clone)]
pub struct BandLimited {
    a: f64,
    b: f64,
    gain: f64,
    stages: Vec<f64>,
    /// Chirps per internal sample.
    step: usize,
    /// Chirps since the last internal sample.
    phase: usize,
    prev: f64,
    next: f64,
    rng: ChaCha8Rng,
}

impl BandLimited {
    /// A process of -3 dB bandwidth `bandwidth_hz` and `order` sections (1..=6) sampled
    /// every `chirp_interval_s`, drawing from `rng`. Starts in its stationary state (the
    /// filter is first run for ten corner time constants per section).
    pub fn new(bandwidth_hz: f64, order: usize, chirp_interval_s: f64, rng: ChaCha8Rng) -> Self {
        let order = order.clamp(1, 6);
        let fc = bandwidth_hz.max(1e-6) / cascade_half_power_ratio(order);
        // internal rate: 64 samples per corner period 1/fc, no faster than the chirps
        let step = ((1.0 / (64.0 * fc)) / chirp_interval_s).floor().max(1.0) as usize;
        let dt = step as f64 * chirp_interval_s;
        let a = (-2.0 * std::f64::consts::PI * fc * dt).exp();
        let b = 1.0 - a;
        let gain = 1.0 / cascade_variance_n(a, b, order).sqrt();
        let mut p = BandLimited {
            a,
            b,
            gain,
            stages: vec![0.0; order],
            step,
            phase: 0,
            prev: 0.0,
            next: 0.0,
            rng,
        };
        // burn-in: ten time constants per section (at least 64 samples)
        let burn = ((10.0 * order as f64 / (1.0 - a)).ceil() as usize).clamp(64, 1 << 22);
        for _ in 0..burn {
            p.advance();
        }
        p.prev = p.advance();
        p.next = p.advance();
        p
    }

    fn advance(&mut self) -> f64 {
        let mut x: f64 = StandardNormal.sample(&mut self.rng);
        for s in self.stages.iter_mut() {
            *s = self.a * *s + self.b * x;
            x = *s;
        }
        x * self.gain
    }

    /// The value at the next chirp (unit variance, zero mean).
    pub fn next_sample(&mut self) -> f64 {
        let f = self.phase as f64 / self.step as f64;
        let y = self.prev + (self.next - self.prev) * f;
        self.phase += 1;
        if self.phase == self.step {
            self.phase = 0;
            self.prev = self.next;
            self.next = self.advance();
        }
        y
    }
}

/// Amplitude and phase scintillation of one return: the complex gain
/// `(1 + a x₁(t)) exp(j φ x₂(t))` with independent unit-variance band-limited processes
/// `x₁`, `x₂`; `a` the rms fractional amplitude, `φ` the rms phase in rad.
#[derive(Debug, Clone)]
pub struct Scintillation {
    amplitude_rms: f64,
    phase_rms_rad: f64,
    amp: Option<BandLimited>,
    phase: Option<BandLimited>,
}

impl Scintillation {
    /// No fluctuation (gain 1).
    pub fn none() -> Self {
        Scintillation {
            amplitude_rms: 0.0,
            phase_rms_rad: 0.0,
            amp: None,
            phase: None,
        }
    }

    /// Fluctuation of rms fractional amplitude `amplitude_rms` and rms phase
    /// `phase_rms_rad`, both of -3 dB bandwidth `bandwidth_hz` and `order` sections, from
    /// two streams.
    pub fn new(
        amplitude_rms: f64,
        phase_rms_rad: f64,
        (bandwidth_hz, order): (f64, usize),
        chirp_interval_s: f64,
        amp_rng: ChaCha8Rng,
        phase_rng: ChaCha8Rng,
    ) -> Self {
        Scintillation {
            amplitude_rms,
            phase_rms_rad,
            amp: (amplitude_rms > 0.0)
                .then(|| BandLimited::new(bandwidth_hz, order, chirp_interval_s, amp_rng)),
            phase: (phase_rms_rad > 0.0)
                .then(|| BandLimited::new(bandwidth_hz, order, chirp_interval_s, phase_rng)),
        }
    }

    /// The complex gain at the next chirp.
    pub fn next_gain(&mut self) -> Complex64 {
        let a = match &mut self.amp {
            Some(p) => (1.0 + self.amplitude_rms * p.next_sample()).max(0.0),
            None => 1.0,
        };
        let ph = match &mut self.phase {
            Some(p) => self.phase_rms_rad * p.next_sample(),
            None => 0.0,
        };
        Complex64::from_polar(a, ph)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::simulate::noise::stream_rng;

    #[test]
    fn cascade_variance_by_summation() {
        // b^4 (1 + a^2) / (1 - a^2)^3 against the direct sum of the squared impulse response
        let (a, b) = (0.9f64, 0.1f64);
        let direct: f64 = (0..5000)
            .map(|k| (b * b * (k as f64 + 1.0) * a.powi(k)).powi(2))
            .sum();
        assert!((cascade_variance(a, b) - direct).abs() < 1e-9 * direct);
        assert!((cascade_variance_n(a, b, 2) - direct).abs() < 1e-9 * direct);
        // one section: b^2 / (1 - a^2)
        assert!((cascade_variance_n(a, b, 1) - b * b / (1.0 - a * a)).abs() < 1e-12);
        // sqrt(sqrt 2 - 1) = 0.643594, sqrt(2^(1/3) - 1) = 0.509825 (by hand)
        assert!((cascade_half_power_ratio(2) - 0.643_594).abs() < 1e-6);
        assert!((cascade_half_power_ratio(3) - 0.509_825).abs() < 1e-6);
    }

    #[test]
    fn unit_variance_zero_mean() {
        let mut p = BandLimited::new(2.0, 3, 1e-3, stream_rng(1, 1));
        let n = 400_000;
        let (mut s, mut s2) = (0.0, 0.0);
        for _ in 0..n {
            let x = p.next_sample();
            s += x;
            s2 += x * x;
        }
        let m = s / n as f64;
        let v = s2 / n as f64 - m * m;
        // 400 s at 2 Hz: about 1600 correlation times, so the variance is good to ~10 %
        assert!(m.abs() < 0.1, "{m}");
        assert!((v - 1.0).abs() < 0.15, "{v}");
    }
}
