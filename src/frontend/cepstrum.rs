//! Real cepstrum `c = IFFT(ln |FFT x|)` (Bogert, Healy & Tukey, 1963) and the cepstrogram
//! (the real cepstrum of each spectrogram frame), whose quefrency peak at `1 / line spacing`
//! reveals periodic spectra such as rotor blade lines.

use std::sync::Arc;

use ndarray::Array2;
use rustfft::num_complex::Complex32;
use rustfft::{Fft, FftPlanner};

use crate::error::{ensure, Result};

/// What a spectrogram frame holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FrameKind {
    /// Linear power `|X|^2` (as [`super::StftPlan::spectrogram`] returns); `ln|X| = ln(P)/2`.
    Power,
    /// Linear magnitude `|X|`.
    Magnitude,
}

/// A planned real cepstrum of length `n`.
///
/// `c[q] = Re{ (1/n) sum_k ln(max(|X[k]|, floor)) exp(+j 2 pi k q / n) }` with `X` the
/// forward DFT (natural order) and `floor = max(floor_rel * max_k |X[k]|, f32::MIN_POSITIVE)`
/// (default `floor_rel` 1e-5, i.e. -100 dB re the peak), so spectral nulls do not give
/// `ln 0`. The inverse FFT **is** scaled by 1/n (as `numpy.fft.ifft`). Quefrency index q is
/// `q / fs` seconds, q in natural order 0..n-1 (q and n - q mirror each other). For complex
/// input `|X|` need not be even in k; the real part is the cepstrum of the even part of
/// `ln|X|`.
pub struct CepstrumPlan {
    n: usize,
    floor_rel: f32,
    fwd: Arc<dyn Fft<f32>>,
    inv: Arc<dyn Fft<f32>>,
    scratch_len: usize,
}

impl std::fmt::Debug for CepstrumPlan {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("CepstrumPlan")
            .field("n", &self.n)
            .field("floor_rel", &self.floor_rel)
            .finish()
    }
}

impl CepstrumPlan {
    /// Default relative floor inside the log (-100 dB re the spectral peak magnitude).
    pub const DEFAULT_FLOOR_REL: f32 = 1e-5;

    /// Plans a cepstrum of length `n` (>= 2) with relative floor `floor_rel` in (0, 1).
    pub fn new(n: usize, floor_rel: f32) -> Result<Self> {
        ensure(n >= 2, || {
            format!("cepstrum length n = {n} is out of range; allowed: >= 2")
        })?;
        ensure(
            floor_rel.is_finite() && floor_rel > 0.0 && floor_rel < 1.0,
            || {
                format!(
                    "cepstrum floor_rel = {floor_rel} is out of range; allowed: 0 < floor_rel < 1"
                )
            },
        )?;
        let mut planner = FftPlanner::<f32>::new();
        let fwd = planner.plan_fft_forward(n);
        let inv = planner.plan_fft_inverse(n);
        let scratch_len = fwd
            .get_inplace_scratch_len()
            .max(inv.get_inplace_scratch_len());
        Ok(CepstrumPlan {
            n,
            floor_rel,
            fwd,
            inv,
            scratch_len,
        })
    }

    /// Length n.
    pub fn len(&self) -> usize {
        self.n
    }

    /// Always false (n >= 2).
    pub fn is_empty(&self) -> bool {
        self.n == 0
    }

    /// Scratch length for the `_with_scratch` calls (`buf` must hold n values besides).
    pub fn scratch_len(&self) -> usize {
        self.scratch_len
    }

    fn check(&self, inp: usize, out: usize, buf: usize, scratch: usize) -> Result<()> {
        ensure(
            inp == self.n && out >= self.n && buf >= self.n && scratch >= self.scratch_len,
            || {
                format!(
                "cepstrum input/output/buffer/scratch lengths {inp}/{out}/{buf}/{scratch}; allowed: input exactly {n}, output and buffer >= {n}, scratch >= {s}",
                n = self.n,
                s = self.scratch_len
            )
            },
        )
    }

    /// `buf` holds ln-magnitudes in its real parts: inverse FFT, scale, write out.
    fn finish(&self, out: &mut [f32], buf: &mut [Complex32], scratch: &mut [Complex32]) {
        self.inv
            .process_with_scratch(&mut buf[..self.n], &mut scratch[..self.scratch_len]);
        let s = 1.0 / self.n as f32;
        for (o, v) in out[..self.n].iter_mut().zip(&buf[..self.n]) {
            *o = v.re * s;
        }
    }

    /// Real cepstrum of a time signal `x` (n samples) into `out[..n]`. No allocation.
    pub fn real_cepstrum_with_scratch(
        &self,
        x: &[Complex32],
        out: &mut [f32],
        buf: &mut [Complex32],
        scratch: &mut [Complex32],
    ) -> Result<()> {
        self.check(x.len(), out.len(), buf.len(), scratch.len())?;
        let b = &mut buf[..self.n];
        b.copy_from_slice(x);
        self.fwd
            .process_with_scratch(b, &mut scratch[..self.scratch_len]);
        let peak = b.iter().map(|v| v.norm()).fold(0.0f32, f32::max);
        let floor = (self.floor_rel * peak).max(f32::MIN_POSITIVE);
        for v in b.iter_mut() {
            *v = Complex32::new(v.norm().max(floor).ln(), 0.0);
        }
        self.finish(out, buf, scratch);
        Ok(())
    }

    /// Allocating convenience for [`CepstrumPlan::real_cepstrum_with_scratch`].
    pub fn real_cepstrum(&self, x: &[Complex32]) -> Result<Vec<f32>> {
        let mut out = vec![0.0; self.n];
        let mut buf = vec![Complex32::new(0.0, 0.0); self.n];
        let mut scratch = vec![Complex32::new(0.0, 0.0); self.scratch_len];
        self.real_cepstrum_with_scratch(x, &mut out, &mut buf, &mut scratch)?;
        Ok(out)
    }

    /// Real cepstrum of one spectrum frame given directly (n values in **natural** FFT
    /// order, not shifted; `kind` says power or magnitude), with the same floor rule.
    pub fn of_frame_with_scratch(
        &self,
        frame: &[f32],
        kind: FrameKind,
        out: &mut [f32],
        buf: &mut [Complex32],
        scratch: &mut [Complex32],
    ) -> Result<()> {
        self.check(frame.len(), out.len(), buf.len(), scratch.len())?;
        let peak = frame.iter().copied().fold(0.0f32, f32::max);
        for (b, &v) in buf[..self.n].iter_mut().zip(frame) {
            let l = match kind {
                FrameKind::Magnitude => v.max((self.floor_rel * peak).max(f32::MIN_POSITIVE)).ln(),
                FrameKind::Power => {
                    let fl = (self.floor_rel * self.floor_rel * peak).max(f32::MIN_POSITIVE);
                    0.5 * v.max(fl).ln()
                }
            };
            *b = Complex32::new(l, 0.0);
        }
        self.finish(out, buf, scratch);
        Ok(())
    }

    /// Cepstrogram: the real cepstrum of each row of a frames × n spectrogram (natural
    /// column order, e.g. `StftPlan::spectrogram(x, false)`, `kind` = [`FrameKind::Power`]).
    /// Returns frames × n, column q = quefrency `q / fs` s.
    pub fn cepstrogram(&self, spectrogram: &Array2<f32>, kind: FrameKind) -> Result<Array2<f32>> {
        let (frames, n) = spectrogram.dim();
        ensure(n == self.n, || {
            format!(
                "spectrogram of {n} bins per frame; allowed: exactly {} (the cepstrum length)",
                self.n
            )
        })?;
        let mut out = Array2::zeros((frames, n));
        let mut frame = vec![0.0f32; n];
        let mut buf = vec![Complex32::new(0.0, 0.0); n];
        let mut scratch = vec![Complex32::new(0.0, 0.0); self.scratch_len];
        let mut row_out = vec![0.0f32; n];
        for (src, mut dst) in spectrogram.rows().into_iter().zip(out.rows_mut()) {
            frame.iter_mut().zip(src.iter()).for_each(|(a, &b)| *a = b);
            self.of_frame_with_scratch(&frame, kind, &mut row_out, &mut buf, &mut scratch)?;
            dst.iter_mut().zip(&row_out).for_each(|(a, &b)| *a = b);
        }
        Ok(out)
    }
}

/// Largest cepstral value with quefrency in `[min_s, max_s]` (seconds, sample rate `fs_hz`),
/// searching indices `ceil(min_s fs) ..= floor(max_s fs)` limited to `1 ..= n/2` (the
/// upper half mirrors the lower). Returns `(index, quefrency_s, value)`, `None` if the range
/// holds no index.
pub fn quefrency_peak(
    ceps: &[f32],
    fs_hz: f64,
    min_s: f64,
    max_s: f64,
) -> Option<(usize, f64, f32)> {
    if !(fs_hz > 0.0 && min_s.is_finite() && max_s.is_finite()) || ceps.len() < 2 {
        return None;
    }
    let lo = ((min_s * fs_hz).ceil().max(1.0)) as usize;
    let hi = ((max_s * fs_hz).floor().min((ceps.len() / 2) as f64)) as usize;
    if lo > hi {
        return None;
    }
    let (i, v) = (lo..=hi)
        .map(|i| (i, ceps[i]))
        .fold(
            (lo, f32::NEG_INFINITY),
            |a, b| if b.1 > a.1 { b } else { a },
        );
    Some((i, i as f64 / fs_hz, v))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::frontend::stft::{Scaling, StftParams, StftPlan};
    use crate::frontend::testutil::{naive_dft, random_complex};
    use crate::frontend::window::Window;
    use std::f64::consts::PI;

    // Source: Oppenheim & Schafer, Discrete-Time Signal Processing, 3rd ed., §13.9 (cepstrum
    // of an echo): x = d[n] + a d[n - P] has ln|X| = sum_k (-1)^(k+1) a^k cos(w k P) / k, so
    // the real cepstrum is (-1)^(k+1) a^k / (2k) at q = kP (and n - kP). Bogert, Healy &
    // Tukey (1963) introduced the cepstrum to find such echoes. a = 0.5, P = 20, n = 256:
    // c[20] = 0.25, c[40] = -0.0625, c[60] = 0.041667.
    #[test]
    fn echo_peaks_at_its_delay() {
        let n = 256;
        let mut x = vec![Complex32::new(0.0, 0.0); n];
        x[0] = Complex32::new(1.0, 0.0);
        x[20] = Complex32::new(0.5, 0.0);
        let plan = CepstrumPlan::new(n, CepstrumPlan::DEFAULT_FLOOR_REL).unwrap();
        let c = plan.real_cepstrum(&x).unwrap();
        for (q, want) in [
            (20usize, 0.25f32),
            (40, -0.0625),
            (60, 0.5f32.powi(3) / 6.0),
            (236, 0.25),
        ] {
            assert!((c[q] - want).abs() < 1e-4, "c[{q}] = {} want {want}", c[q]);
        }
        assert!(c[10].abs() < 1e-4);
        assert_eq!(quefrency_peak(&c, 1.0, 5.0, 100.0).unwrap().0, 20);
    }

    // Source: the definition c = IFFT(ln|FFT x|) evaluated with a naive f64 DFT on seeded
    // random input (no spectral nulls, so the floor is inactive).
    #[test]
    fn matches_naive_definition() {
        let n = 60;
        let x = random_complex(n, 33);
        let plan = CepstrumPlan::new(n, 1e-5).unwrap();
        let c = plan.real_cepstrum(&x).unwrap();
        let xf = naive_dft(&x, -1.0);
        let l: Vec<Complex32> = xf
            .iter()
            .map(|v| Complex32::new(v.norm().ln() as f32, 0.0))
            .collect();
        let want = naive_dft(&l, 1.0);
        for (a, b) in c.iter().zip(&want) {
            assert!((*a as f64 - b.re / n as f64).abs() < 1e-5);
        }
        // power-frame entry gives the same cepstrum
        let p: Vec<f32> = xf.iter().map(|v| v.norm_sqr() as f32).collect();
        let mut out = vec![0.0; n];
        let mut buf = vec![Complex32::new(0.0, 0.0); n];
        let mut scratch = vec![Complex32::new(0.0, 0.0); plan.scratch_len()];
        plan.of_frame_with_scratch(&p, FrameKind::Power, &mut out, &mut buf, &mut scratch)
            .unwrap();
        for (a, b) in out.iter().zip(&c) {
            assert!((a - b).abs() < 1e-5);
        }
    }

    // Periodic spectrum: equal lines every 250 Hz (as rotor lines spaced N f_rot, Chen 2011
    // ch. 4) sampled at 8 kHz; the cepstrogram of a 256-point spectrogram peaks at quefrency
    // 1 / 250 Hz = 4 ms = 32 samples in every frame.
    #[test]
    fn cepstrogram_finds_line_spacing() {
        let fs = 8000.0;
        let noise = random_complex(4096, 2);
        let x: Vec<Complex32> = (0..4096)
            .map(|n| {
                let mut s = noise[n] * 0.03;
                for l in -6i32..=6 {
                    let ph = 2.0 * PI * 250.0 * l as f64 * n as f64 / fs + 0.7 * (l * l) as f64;
                    s += Complex32::new(ph.cos() as f32, ph.sin() as f32);
                }
                s
            })
            .collect();
        let st = StftPlan::new(StftParams::new(Window::Hann, 256, 192, 256, Scaling::Psd).fs(fs))
            .unwrap();
        let spec = st.spectrogram(&x, false).unwrap();
        let plan = CepstrumPlan::new(256, CepstrumPlan::DEFAULT_FLOOR_REL).unwrap();
        let cg = plan.cepstrogram(&spec, FrameKind::Power).unwrap();
        assert_eq!(cg.dim(), spec.dim());
        for row in cg.rows() {
            let r = row.to_vec();
            let (q, qs, _) = quefrency_peak(&r, fs, 1e-3, 10e-3).unwrap();
            assert_eq!(q, 32, "{qs}");
        }
    }

    #[test]
    fn errors() {
        assert!(CepstrumPlan::new(1, 1e-5).is_err());
        let e = CepstrumPlan::new(8, 0.0).unwrap_err().to_string();
        assert!(e.contains("floor_rel = 0"), "{e}");
        let p = CepstrumPlan::new(8, 1e-5).unwrap();
        assert!(p.real_cepstrum(&[Complex32::new(1.0, 0.0); 7]).is_err());
        assert!(p
            .cepstrogram(&Array2::zeros((2, 9)), FrameKind::Power)
            .is_err());
        // all-zero input stays finite thanks to the floor
        assert!(p
            .real_cepstrum(&[Complex32::new(0.0, 0.0); 8])
            .unwrap()
            .iter()
            .all(|v| v.is_finite()));
        assert!(quefrency_peak(&[0.0; 8], 1.0, 5.0, 2.0).is_none());
    }
}
