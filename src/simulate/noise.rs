//! Receiver noise and random streams: complex white Gaussian noise of unit variance per
//! complex sample (E|n|^2 = 1, real and imaginary parts each N(0, 1/2)), and independent
//! seeded ChaCha streams per purpose so that adding an object never changes the noise.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};
use rustfft::num_complex::{Complex32, Complex64};

/// SplitMix64 finaliser: mixes a seed and a stream number into a well spread 64-bit seed.
pub fn mix(seed: u64, stream: u64) -> u64 {
    let mut z = seed ^ stream.wrapping_mul(0x9E37_79B9_7F4A_7C15);
    z = z.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// An independent random stream `stream` of run seed `seed`.
pub fn stream_rng(seed: u64, stream: u64) -> ChaCha8Rng {
    ChaCha8Rng::seed_from_u64(mix(seed, stream))
}

/// One complex Gaussian sample of unit variance (f64).
pub fn cn64(rng: &mut ChaCha8Rng) -> Complex64 {
    let s = std::f64::consts::FRAC_1_SQRT_2;
    let re: f64 = StandardNormal.sample(rng);
    let im: f64 = StandardNormal.sample(rng);
    Complex64::new(re * s, im * s)
}

/// Overwrites `out` with complex white Gaussian noise of unit variance per sample.
pub fn fill_noise(rng: &mut ChaCha8Rng, out: &mut [Complex32]) {
    let s = std::f32::consts::FRAC_1_SQRT_2;
    for z in out.iter_mut() {
        let re: f32 = StandardNormal.sample(rng);
        let im: f32 = StandardNormal.sample(rng);
        *z = Complex32::new(re * s, im * s);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Unit variance per complex sample, independent parts of equal power, zero mean
    /// (definition of circular complex white Gaussian noise; common practice).
    #[test]
    fn unit_variance() {
        let mut rng = stream_rng(42, 0);
        let mut v = vec![Complex32::new(0.0, 0.0); 200_000];
        fill_noise(&mut rng, &mut v);
        let n = v.len() as f64;
        let p: f64 = v.iter().map(|z| z.norm_sqr() as f64).sum::<f64>() / n;
        let pr: f64 = v.iter().map(|z| (z.re * z.re) as f64).sum::<f64>() / n;
        let mean: Complex64 = v
            .iter()
            .map(|z| Complex64::new(z.re as f64, z.im as f64))
            .sum::<Complex64>()
            / n;
        assert!((p - 1.0).abs() < 0.01, "{p}");
        assert!((pr - 0.5).abs() < 0.01, "{pr}");
        assert!(mean.norm() < 0.01);
        assert_ne!(mix(1, 0), mix(1, 1));
        assert_ne!(mix(1, 0), mix(2, 0));
    }
}
