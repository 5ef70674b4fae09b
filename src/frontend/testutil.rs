//! Test helpers shared by the front-end unit tests: seeded random signals and the naive
//! O(N^2) DFT every fast routine is compared with.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};
use rustfft::num_complex::Complex32;

/// Seeded circular complex Gaussian samples with unit mean power.
pub fn random_complex(n: usize, seed: u64) -> Vec<Complex32> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let s = std::f64::consts::FRAC_1_SQRT_2;
    (0..n)
        .map(|_| {
            let re: f64 = StandardNormal.sample(&mut rng);
            let im: f64 = StandardNormal.sample(&mut rng);
            Complex32::new((re * s) as f32, (im * s) as f32)
        })
        .collect()
}

/// Naive DFT in f64: `X[k] = sum_n x[n] exp(sign * j 2 pi k n / N)` (sign -1 = forward),
/// no scaling. The textbook definition (e.g. Oppenheim & Schafer, Discrete-Time Signal
/// Processing, 3rd ed., Eq. 8.67).
pub fn naive_dft(x: &[Complex32], sign: f64) -> Vec<rustfft::num_complex::Complex64> {
    use rustfft::num_complex::Complex64;
    let n = x.len();
    (0..n)
        .map(|k| {
            let mut acc = Complex64::new(0.0, 0.0);
            for (i, v) in x.iter().enumerate() {
                let ph = sign * 2.0 * std::f64::consts::PI * ((k * i) % n) as f64 / n as f64;
                acc += Complex64::new(v.re as f64, v.im as f64) * Complex64::from_polar(1.0, ph);
            }
            acc
        })
        .collect()
}

/// Largest |a - b| divided by the largest |b|.
pub fn max_rel_err(a: &[Complex32], b: &[rustfft::num_complex::Complex64]) -> f64 {
    let peak = b.iter().map(|v| v.norm()).fold(0.0, f64::max).max(1e-300);
    a.iter()
        .zip(b)
        .map(|(x, y)| {
            let d = rustfft::num_complex::Complex64::new(x.re as f64, x.im as f64) - y;
            d.norm()
        })
        .fold(0.0, f64::max)
        / peak
}
