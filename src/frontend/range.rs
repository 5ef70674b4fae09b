//! Range compression: the windowed forward FFT over fast time of each FMCW beat chirp, so
//! bin k holds range `k * c * fs / (2 S N)`. A pass-through plan serves `range-profile`
//! recordings, whose samples are already range cells, so callers need not branch.

use std::sync::Arc;

use rustfft::num_complex::Complex32;
use rustfft::{Fft, FftPlanner};

use super::window::Window;
use crate::error::{ensure, Result};

/// A planned range transform for chirps of `n` samples.
///
/// Output of [`RangePlan::process_with_scratch`]: `X[k] = sum_{n=0}^{N-1} w[n] x[n]
/// exp(-j 2 pi k n / N)`, **no scaling** (neither 1/N nor window-gain correction: a tone of
/// amplitude A on bin k gives `|X[k]| = A * sum(w)`), bins in natural order 0..N-1 with bin
/// k = range k × range cell (the beat signal of a target at positive range has a positive
/// frequency, see docs/recording-format.md). Bins above N/2 hold negative beat frequencies (not a
/// physical range for a real dechirp; kept so the buffer stays in place).
#[derive(Clone)]
pub struct RangePlan {
    n: usize,
    window_kind: Option<Window>,
    /// `None` for the rectangular window and for pass-through (no multiply).
    window: Option<Vec<f32>>,
    /// `None` for pass-through.
    fft: Option<Arc<dyn Fft<f32>>>,
    scratch_len: usize,
}

impl std::fmt::Debug for RangePlan {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("RangePlan")
            .field("n", &self.n)
            .field("window", &self.window_kind)
            .field("pass_through", &self.fft.is_none())
            .finish()
    }
}

impl RangePlan {
    /// Plans a forward FFT of length `n` (>= 1) with the periodic `window`.
    pub fn new(n: usize, window: Window) -> Result<Self> {
        ensure(n >= 1, || {
            format!("range FFT length n = {n} is out of range; allowed: n >= 1")
        })?;
        let fft = FftPlanner::<f32>::new().plan_fft_forward(n);
        let scratch_len = fft.get_inplace_scratch_len();
        let window_vec = match window {
            Window::Rectangular => None,
            w => Some(w.coefficients(n)),
        };
        Ok(RangePlan {
            n,
            window_kind: Some(window),
            window: window_vec,
            fft: Some(fft),
            scratch_len,
        })
    }

    /// A plan that leaves each chirp unchanged (for `range-profile` recordings whose `n`
    /// samples are already range cells). Same API, no scaling, no window.
    pub fn pass_through(n: usize) -> Result<Self> {
        ensure(n >= 1, || {
            format!("range cells n = {n} is out of range; allowed: n >= 1")
        })?;
        Ok(RangePlan {
            n,
            window_kind: None,
            window: None,
            fft: None,
            scratch_len: 0,
        })
    }

    /// Samples per chirp (= range bins out).
    pub fn len(&self) -> usize {
        self.n
    }

    /// Always false (a plan has at least one sample); here for clippy's `len` convention.
    pub fn is_empty(&self) -> bool {
        self.n == 0
    }

    /// True for a [`RangePlan::pass_through`] plan.
    pub fn is_pass_through(&self) -> bool {
        self.fft.is_none()
    }

    /// The window, `None` for pass-through.
    pub fn window(&self) -> Option<Window> {
        self.window_kind
    }

    /// Scratch length [`RangePlan::process_with_scratch`] needs (0 for pass-through).
    pub fn scratch_len(&self) -> usize {
        self.scratch_len
    }

    /// Range-compresses one chirp of `n` samples in place (see the type doc for the exact
    /// sum and normalisation). `scratch` must hold at least [`RangePlan::scratch_len`]
    /// values. Errors on wrong lengths; does not allocate.
    pub fn process_with_scratch(
        &self,
        chirp: &mut [Complex32],
        scratch: &mut [Complex32],
    ) -> Result<()> {
        ensure(chirp.len() == self.n, || {
            format!(
                "chirp length {} does not match the range plan; allowed: exactly {}",
                chirp.len(),
                self.n
            )
        })?;
        self.process_block_with_scratch(chirp, scratch)
    }

    /// Range-compresses a chirp-major block (chirp m, sample n at `m * N + n`; length a
    /// whole number of chirps) in place, each chirp as [`RangePlan::process_with_scratch`].
    pub fn process_block_with_scratch(
        &self,
        block: &mut [Complex32],
        scratch: &mut [Complex32],
    ) -> Result<()> {
        ensure(block.len() % self.n == 0, || {
            format!(
                "block length {} is not a whole number of chirps; allowed: a multiple of {}",
                block.len(),
                self.n
            )
        })?;
        let Some(fft) = &self.fft else {
            return Ok(());
        };
        ensure(scratch.len() >= self.scratch_len, || {
            format!(
                "scratch length {} is too short; allowed: >= {}",
                scratch.len(),
                self.scratch_len
            )
        })?;
        if block.is_empty() {
            return Ok(());
        }
        if let Some(w) = &self.window {
            for chirp in block.chunks_exact_mut(self.n) {
                for (x, &wv) in chirp.iter_mut().zip(w) {
                    *x *= wv;
                }
            }
        }
        fft.process_with_scratch(block, &mut scratch[..self.scratch_len]);
        Ok(())
    }

    /// Allocating convenience for [`RangePlan::process_block_with_scratch`].
    pub fn process_block(&self, block: &mut [Complex32]) -> Result<()> {
        let mut scratch = vec![Complex32::new(0.0, 0.0); self.scratch_len];
        self.process_block_with_scratch(block, &mut scratch)
    }

    /// Allocating convenience for one chirp.
    pub fn process(&self, chirp: &mut [Complex32]) -> Result<()> {
        let mut scratch = vec![Complex32::new(0.0, 0.0); self.scratch_len];
        self.process_with_scratch(chirp, &mut scratch)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::frontend::testutil::{max_rel_err, naive_dft, random_complex};

    // Source: DFT definition (Oppenheim & Schafer, Discrete-Time Signal Processing, 3rd ed.,
    // Eq. 8.67) evaluated naively in f64 on seeded random input.
    #[test]
    fn matches_naive_dft_with_window() {
        for (n, w) in [
            (64usize, Window::Hann),
            (100, Window::Blackman),
            (37, Window::Rectangular),
        ] {
            let x = random_complex(n * 3, 7 + n as u64);
            let mut y = x.clone();
            let plan = RangePlan::new(n, w).unwrap();
            plan.process_block(&mut y).unwrap();
            let wc = w.coefficients(n);
            for m in 0..3 {
                let xw: Vec<Complex32> = (0..n).map(|i| x[m * n + i] * wc[i]).collect();
                let want = naive_dft(&xw, -1.0);
                let err = max_rel_err(&y[m * n..(m + 1) * n], &want);
                assert!(err < 1e-5, "n {n} {w} chirp {m} err {err}");
            }
        }
    }

    // Known answer from the convention of docs/recording-format.md: beat exp(+j 2 pi k0 n / N) of a target
    // at range bin k0 -> all energy in bin k0, |X| = N (rectangular) = sum(w).
    #[test]
    fn point_target_lands_in_its_range_bin() {
        let n = 128;
        for k0 in [0usize, 5, 40, 63] {
            let mut x: Vec<Complex32> = (0..n)
                .map(|i| {
                    Complex32::from_polar(
                        1.0,
                        2.0 * std::f32::consts::PI * (k0 * i) as f32 / n as f32,
                    )
                })
                .collect();
            RangePlan::new(n, Window::Hann)
                .unwrap()
                .process(&mut x)
                .unwrap();
            let (kmax, vmax) = x
                .iter()
                .enumerate()
                .map(|(k, v)| (k, v.norm()))
                .fold((0, 0.0f32), |a, b| if b.1 > a.1 { b } else { a });
            assert_eq!(kmax, k0);
            // Hann coherent sum = n/2
            assert!((vmax - n as f32 / 2.0).abs() < 1e-3 * n as f32);
        }
    }

    #[test]
    fn pass_through_and_errors() {
        let plan = RangePlan::pass_through(16).unwrap();
        let x = random_complex(32, 1);
        let mut y = x.clone();
        plan.process_block(&mut y).unwrap();
        assert_eq!(x, y);
        assert!(RangePlan::new(0, Window::Hann).is_err());
        let p = RangePlan::new(16, Window::Hann).unwrap();
        let mut bad = vec![Complex32::new(0.0, 0.0); 17];
        let e = p.process_block(&mut bad).unwrap_err().to_string();
        assert!(e.contains("17") && e.contains("16"), "{e}");
        let e = p.process(&mut bad).unwrap_err().to_string();
        assert!(e.contains("exactly 16"), "{e}");
    }
}
