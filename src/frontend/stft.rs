//! Short-time Fourier transform of a complex slow-time signal, two-sided, identical in
//! framing, windowing and scaling to `scipy.signal.stft` (with `boundary=None,
//! padded=False, detrend=False, return_onesided=False`) and `scipy.signal.spectrogram`
//! (`mode='psd', detrend=False, return_onesided=False`).

use std::sync::Arc;

use ndarray::Array2;
use rustfft::num_complex::Complex32;
use rustfft::{Fft, FftPlanner};

use super::shift::{fftshift_rows, signed_bin};
use super::window::Window;
use crate::error::{ensure, Result};

/// Scaling of the STFT / spectrogram, as scipy's `scaling` argument.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Scaling {
    /// scipy `'spectrum'`: STFT scaled by `1 / sum(w)` (so a bin-centred tone of amplitude
    /// A reads |A|), spectrogram by `1 / sum(w)^2` (units V^2).
    Spectrum,
    /// scipy `'psd'` (`'density'` for `spectrogram`): STFT scaled by
    /// `1 / sqrt(fs sum(w^2))`, spectrogram by `1 / (fs sum(w^2))` (units V^2/Hz).
    Psd,
}

/// STFT parameters (unchecked until [`StftParams::check`]; [`StftPlan::new`] checks).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StftParams {
    /// Periodic window (scipy `get_window(name, nperseg)`).
    pub window: Window,
    /// Samples per segment, >= 1.
    pub nperseg: usize,
    /// Overlap in samples, 0 <= noverlap < nperseg; hop = nperseg - noverlap.
    pub noverlap: usize,
    /// FFT length, >= nperseg (segments are zero-padded at the end).
    pub nfft: usize,
    /// Output scaling.
    pub scaling: Scaling,
    /// Sample rate in Hz (scipy `fs`, default 1.0), > 0.
    pub fs_hz: f64,
}

impl StftParams {
    /// Parameters with `fs_hz = 1.0` (scipy's default); set it with [`StftParams::fs`].
    pub fn new(
        window: Window,
        nperseg: usize,
        noverlap: usize,
        nfft: usize,
        scaling: Scaling,
    ) -> Self {
        StftParams {
            window,
            nperseg,
            noverlap,
            nfft,
            scaling,
            fs_hz: 1.0,
        }
    }

    /// Sets the sample rate (Hz).
    pub fn fs(mut self, fs_hz: f64) -> Self {
        self.fs_hz = fs_hz;
        self
    }

    /// Hop between segment starts, samples.
    pub fn hop(&self) -> usize {
        self.nperseg.saturating_sub(self.noverlap)
    }

    /// Validates every parameter; the error names the value and the allowed range.
    pub fn check(&self) -> Result<()> {
        ensure(self.nperseg >= 1 && self.nperseg <= 1 << 24, || {
            format!(
                "STFT nperseg = {} is out of range; allowed: 1 ..= 16777216",
                self.nperseg
            )
        })?;
        ensure(self.noverlap < self.nperseg, || {
            format!(
                "STFT noverlap = {} is out of range; allowed: 0 ..= nperseg - 1 = {}",
                self.noverlap,
                self.nperseg - 1
            )
        })?;
        ensure(self.nfft >= self.nperseg && self.nfft <= 1 << 24, || {
            format!(
                "STFT nfft = {} is out of range; allowed: nperseg = {} ..= 16777216",
                self.nfft, self.nperseg
            )
        })?;
        ensure(self.fs_hz.is_finite() && self.fs_hz > 0.0, || {
            format!("STFT fs = {} Hz is out of range; allowed: > 0", self.fs_hz)
        })
    }

    /// Number of frames for an input of `len` samples: `(len - noverlap) / hop` (scipy with
    /// `boundary=None, padded=False`), 0 if `len < nperseg`.
    pub fn frames(&self, len: usize) -> usize {
        if len < self.nperseg || self.hop() == 0 {
            0
        } else {
            (len - self.noverlap) / self.hop()
        }
    }
}

/// A planned STFT: window, FFT of length nfft, scale factors.
///
/// Output layout: **frames × nfft**, row-major, frame i starting at sample `i * hop`
/// (centre time `(i * hop + nperseg / 2) / fs`), columns in **natural FFT order** (column
/// c is frequency `fftfreq(nfft, 1/fs)[c]`: 0, positive, then negative frequencies);
/// [`StftPlan::shift_rows`] reorders to -fs/2..fs/2 (`numpy.fft.fftshift`).
/// `X[i, c] = scale * sum_n w[n] x[i hop + n] exp(-j 2 pi c n / nfft)` with the scale of
/// [`Scaling`]; the spectrogram is `|X_unscaled|^2 * scale^2` (linear power, not dB).
pub struct StftPlan {
    params: StftParams,
    window: Vec<f32>,
    fft: Arc<dyn Fft<f32>>,
    scratch_len: usize,
    /// amplitude scale of the STFT; its square scales the spectrogram.
    scale: f32,
}

impl std::fmt::Debug for StftPlan {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("StftPlan")
            .field("params", &self.params)
            .finish()
    }
}

impl StftPlan {
    /// Checks `params` and plans the transform.
    pub fn new(params: StftParams) -> Result<Self> {
        params.check()?;
        let window = params.window.coefficients(params.nperseg);
        let wsum: f64 = window.iter().map(|&v| v as f64).sum();
        let w2sum: f64 = window.iter().map(|&v| (v as f64) * (v as f64)).sum();
        let scale2 = match params.scaling {
            Scaling::Spectrum => 1.0 / (wsum * wsum),
            Scaling::Psd => 1.0 / (params.fs_hz * w2sum),
        };
        let fft = FftPlanner::<f32>::new().plan_fft_forward(params.nfft);
        let scratch_len = fft.get_inplace_scratch_len();
        Ok(StftPlan {
            params,
            window,
            fft,
            scratch_len,
            scale: scale2.sqrt() as f32,
        })
    }

    /// The parameters.
    pub fn params(&self) -> &StftParams {
        &self.params
    }

    /// Scratch length for the `_with_scratch` calls.
    pub fn scratch_len(&self) -> usize {
        self.scratch_len
    }

    /// Frames for an input of `len` samples ([`StftParams::frames`]).
    pub fn frames(&self, len: usize) -> usize {
        self.params.frames(len)
    }

    /// Frequencies (Hz) of the columns, natural order (`numpy.fft.fftfreq(nfft, 1/fs)`),
    /// or shifted order (-fs/2 first) when `shifted`.
    pub fn frequencies_hz(&self, shifted: bool) -> Vec<f64> {
        let n = self.params.nfft;
        let df = self.params.fs_hz / n as f64;
        let mut f: Vec<f64> = (0..n).map(|k| signed_bin(k, n) as f64 * df).collect();
        if shifted {
            fftshift_rows(&mut f, n);
        }
        f
    }

    /// Centre times (s) of the frames for an input of `len` samples (scipy's `t` with
    /// `boundary=None`): `(i * hop + nperseg / 2) / fs`.
    pub fn frame_times_s(&self, len: usize) -> Vec<f64> {
        let p = &self.params;
        (0..self.frames(len))
            .map(|i| (i * p.hop()) as f64 / p.fs_hz + p.nperseg as f64 / 2.0 / p.fs_hz)
            .collect()
    }

    /// FFT-shifts the rows of a frames × nfft buffer in place (to -fs/2..fs/2).
    pub fn shift_rows<T>(&self, data: &mut [T]) {
        fftshift_rows(data, self.params.nfft);
    }

    fn check_io(&self, x: &[Complex32], out_len: usize, scratch: &[Complex32]) -> Result<usize> {
        let frames = self.frames(x.len());
        ensure(frames >= 1, || {
            format!(
                "STFT input of {} samples is too short; allowed: >= nperseg = {}",
                x.len(),
                self.params.nperseg
            )
        })?;
        let need = frames * self.params.nfft;
        ensure(out_len >= need, || {
            format!("STFT output length {out_len} is too short; allowed: >= frames x nfft = {need}")
        })?;
        ensure(scratch.len() >= self.scratch_len, || {
            format!(
                "STFT scratch length {} is too short; allowed: >= {}",
                scratch.len(),
                self.scratch_len
            )
        })?;
        Ok(frames)
    }

    fn frames_unscaled(
        &self,
        x: &[Complex32],
        out: &mut [Complex32],
        scratch: &mut [Complex32],
        frames: usize,
    ) {
        let p = &self.params;
        let hop = p.hop();
        let out = &mut out[..frames * p.nfft];
        for (i, row) in out.chunks_exact_mut(p.nfft).enumerate() {
            let seg = &x[i * hop..i * hop + p.nperseg];
            for ((o, &v), &w) in row.iter_mut().zip(seg).zip(&self.window) {
                *o = v * w;
            }
            row[p.nperseg..].fill(Complex32::new(0.0, 0.0));
        }
        self.fft
            .process_with_scratch(out, &mut scratch[..self.scratch_len]);
    }

    /// Scaled STFT of `x` into the first `frames × nfft` values of `out` (layout in the
    /// type doc, natural order). Returns the frame count. No allocation.
    pub fn process_with_scratch(
        &self,
        x: &[Complex32],
        out: &mut [Complex32],
        scratch: &mut [Complex32],
    ) -> Result<usize> {
        let frames = self.check_io(x, out.len(), scratch)?;
        self.frames_unscaled(x, out, scratch, frames);
        let s = self.scale;
        out[..frames * self.params.nfft]
            .iter_mut()
            .for_each(|v| *v *= s);
        Ok(frames)
    }

    /// Spectrogram (`scipy.signal.spectrogram`, mode `'psd'`, two-sided) of `x` into the
    /// first `frames × nfft` values of `out`, using `buf` (>= frames × nfft) for the complex
    /// frames. Linear power, natural column order. Returns the frame count. No allocation.
    pub fn spectrogram_with_scratch(
        &self,
        x: &[Complex32],
        out: &mut [f32],
        buf: &mut [Complex32],
        scratch: &mut [Complex32],
    ) -> Result<usize> {
        let frames = self.check_io(x, buf.len(), scratch)?;
        let need = frames * self.params.nfft;
        ensure(out.len() >= need, || {
            format!(
                "spectrogram output length {} is too short; allowed: >= {need}",
                out.len()
            )
        })?;
        self.frames_unscaled(x, buf, scratch, frames);
        let s2 = self.scale * self.scale;
        for (o, v) in out[..need].iter_mut().zip(&buf[..need]) {
            *o = v.norm_sqr() * s2;
        }
        Ok(frames)
    }

    /// Allocating STFT: frames × nfft, natural order (or shifted when `shifted`).
    pub fn stft(&self, x: &[Complex32], shifted: bool) -> Result<Array2<Complex32>> {
        let frames = self.frames(x.len());
        let mut out = vec![Complex32::new(0.0, 0.0); frames * self.params.nfft];
        let mut scratch = vec![Complex32::new(0.0, 0.0); self.scratch_len];
        self.process_with_scratch(x, &mut out, &mut scratch)?;
        if shifted {
            self.shift_rows(&mut out);
        }
        Array2::from_shape_vec((frames, self.params.nfft), out)
            .map_err(|e| crate::Error::Invalid(format!("STFT shape: {e}")))
    }

    /// Allocating spectrogram: frames × nfft linear power, natural order (or shifted).
    pub fn spectrogram(&self, x: &[Complex32], shifted: bool) -> Result<Array2<f32>> {
        let frames = self.frames(x.len());
        let n = frames * self.params.nfft;
        let mut out = vec![0.0f32; n];
        let mut buf = vec![Complex32::new(0.0, 0.0); n];
        let mut scratch = vec![Complex32::new(0.0, 0.0); self.scratch_len];
        self.spectrogram_with_scratch(x, &mut out, &mut buf, &mut scratch)?;
        if shifted {
            self.shift_rows(&mut out);
        }
        Array2::from_shape_vec((frames, self.params.nfft), out)
            .map_err(|e| crate::Error::Invalid(format!("spectrogram shape: {e}")))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::frontend::testutil::{max_rel_err, naive_dft, random_complex};

    fn params_ok() -> StftParams {
        StftParams::new(Window::Hann, 64, 48, 128, Scaling::Psd).fs(500.0)
    }

    // Each error names the value and the allowed range (parameters validated
    // in one place); the bounds are scipy's (`noverlap must be less than nperseg`, `nfft
    // must be greater than or equal to nperseg`, scipy.signal._spectral_helper).
    #[test]
    fn check_errors_name_value_and_range() {
        assert!(params_ok().check().is_ok());
        let cases = [
            (
                StftParams {
                    nperseg: 0,
                    ..params_ok()
                },
                "nperseg = 0",
            ),
            (
                StftParams {
                    noverlap: 64,
                    ..params_ok()
                },
                "noverlap = 64",
            ),
            (
                StftParams {
                    nfft: 32,
                    ..params_ok()
                },
                "nfft = 32",
            ),
            (params_ok().fs(-1.0), "fs = -1"),
        ];
        for (p, want) in cases {
            let e = p.check().unwrap_err().to_string();
            assert!(e.contains(want) && e.contains("allowed"), "{e}");
            assert!(StftPlan::new(p).is_err());
        }
        let plan = StftPlan::new(params_ok()).unwrap();
        let e = plan
            .stft(&random_complex(10, 1), false)
            .unwrap_err()
            .to_string();
        assert!(e.contains("10") && e.contains("64"), "{e}");
    }

    // Source: DFT definition (Oppenheim & Schafer, 3rd ed., Eq. 8.67) naive in f64 on each
    // windowed, zero-padded segment of seeded random input; scipy's framing rule
    // (len - noverlap) // hop.
    #[test]
    fn matches_naive_framed_dft() {
        let p = StftParams::new(Window::Hamming, 40, 25, 64, Scaling::Spectrum);
        let plan = StftPlan::new(p).unwrap();
        let x = random_complex(300, 21);
        let s = plan.stft(&x, false).unwrap();
        assert_eq!(s.dim(), ((300 - 25) / 15, 64));
        let w = Window::Hamming.coefficients(40);
        let wsum: f32 = w.iter().sum();
        for i in 0..s.dim().0 {
            let mut seg = vec![Complex32::new(0.0, 0.0); 64];
            for n in 0..40 {
                seg[n] = x[i * 15 + n] * w[n] / wsum;
            }
            let want = naive_dft(&seg, -1.0);
            let got: Vec<Complex32> = s.row(i).to_vec();
            assert!(max_rel_err(&got, &want) < 1e-5);
        }
        // spectrogram = |stft|^2 with the same scaling
        let g = plan.spectrogram(&x, false).unwrap();
        for (a, b) in g.iter().zip(s.iter()) {
            assert!((a - b.norm_sqr()).abs() <= 1e-5 * (1.0 + b.norm_sqr()));
        }
        // shifting puts -fs/2 first
        let f = plan.frequencies_hz(true);
        assert_eq!(f[0], -0.5);
        assert_eq!(f[32], 0.0);
    }

    // Known answer (scaling='spectrum' definition): a bin-centred tone of amplitude 2 reads
    // |X| = 2 in its bin.
    #[test]
    fn spectrum_scaling_reads_tone_amplitude() {
        let plan =
            StftPlan::new(StftParams::new(Window::Hann, 64, 32, 64, Scaling::Spectrum).fs(64.0))
                .unwrap();
        let x: Vec<Complex32> = (0..256)
            .map(|n| Complex32::from_polar(2.0, 2.0 * std::f32::consts::PI * 5.0 * n as f32 / 64.0))
            .collect();
        let s = plan.stft(&x, false).unwrap();
        for row in s.rows() {
            assert!((row[5].norm() - 2.0).abs() < 1e-4);
        }
    }
}
