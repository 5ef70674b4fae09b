//! Cadence-velocity diagram (CVD): the FFT along time of each Doppler row of a spectrogram
//! magnitude, showing how often each Doppler component repeats (wingbeats at a few hertz,
//! rotor flashes at tens to hundreds of hertz).

use std::sync::Arc;

use ndarray::Array2;
use rustfft::num_complex::Complex32;
use rustfft::{Fft, FftPlanner};

use super::window::Window;
use crate::error::{ensure, Result};

/// A cadence-velocity diagram.
///
/// `power[[d, c]] = |sum_i w[i] (s[i, d] - mean_i s[i, d]) exp(-j 2 pi c i / nfft)|^2`
/// (linear, no scaling) for Doppler row d of the input spectrogram (same order as its
/// columns: shifted if the spectrogram was shifted) and one-sided cadence bin
/// c = 0..=nfft/2 at `cadence_hz[c] = c * frame_rate / nfft` (0 .. frame_rate/2). With row
/// normalisation each row is divided by its maximum (rows of zeros stay zero); note that
/// the summed spectrum of normalised rows then weighs noise-only rows as much as target
/// rows, so restrict the rows (e.g. to the target's Doppler extent) before summing.
#[derive(Debug, Clone, PartialEq)]
pub struct CadenceDiagram {
    /// Cadence axis, Hz, length `nfft / 2 + 1`.
    pub cadence_hz: Vec<f64>,
    /// Doppler rows.
    pub doppler_bins: usize,
    /// Linear power, shape `(doppler_bins, cadence_hz.len())`.
    pub power: Array2<f32>,
}

impl CadenceDiagram {
    /// Summed cadence spectrum over all Doppler rows (linear).
    pub fn summed_spectrum(&self) -> Vec<f32> {
        self.power.sum_axis(ndarray::Axis(0)).to_vec()
    }

    /// Summed cadence spectrum over Doppler rows `rows` only (clamped to the diagram).
    pub fn summed_spectrum_rows(&self, rows: std::ops::Range<usize>) -> Vec<f32> {
        let end = rows.end.min(self.doppler_bins);
        let start = rows.start.min(end);
        self.power
            .slice(ndarray::s![start..end, ..])
            .sum_axis(ndarray::Axis(0))
            .to_vec()
    }

    /// Up to `count` local maxima of the summed spectrum with cadence in
    /// `[min_hz, max_hz]`, strongest first, as `(cadence_hz, value)`. A local maximum is
    /// strictly above its left neighbour and not below its right one (ends count against
    /// the missing side as -inf).
    pub fn peaks(&self, min_hz: f64, max_hz: f64, count: usize) -> Vec<(f64, f32)> {
        let s = self.summed_spectrum();
        let mut p: Vec<(f64, f32)> = (0..s.len())
            .filter(|&i| self.cadence_hz[i] >= min_hz && self.cadence_hz[i] <= max_hz)
            .filter(|&i| {
                let left = if i > 0 { s[i - 1] } else { f32::NEG_INFINITY };
                let right = s.get(i + 1).copied().unwrap_or(f32::NEG_INFINITY);
                s[i] > left && s[i] >= right
            })
            .map(|i| (self.cadence_hz[i], s[i]))
            .collect();
        p.sort_by(|a, b| b.1.total_cmp(&a.1));
        p.truncate(count);
        p
    }
}

/// A planned CVD for spectrograms of `frames` frames at `frame_rate_hz` (= fs / hop).
pub struct CadencePlan {
    frames: usize,
    nfft: usize,
    frame_rate_hz: f64,
    normalise_rows: bool,
    window: Vec<f32>,
    fft: Arc<dyn Fft<f32>>,
    buf: Vec<Complex32>,
    scratch: Vec<Complex32>,
}

impl std::fmt::Debug for CadencePlan {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("CadencePlan")
            .field("frames", &self.frames)
            .field("nfft", &self.nfft)
            .field("frame_rate_hz", &self.frame_rate_hz)
            .finish()
    }
}

impl CadencePlan {
    /// Plans a CVD: `frames` >= 4 spectrogram frames, FFT length `nfft` >= frames (zero
    /// padded), periodic `window` along time, `frame_rate_hz` > 0, optional per-row
    /// normalisation (to unit maximum).
    pub fn new(
        frames: usize,
        nfft: usize,
        window: Window,
        frame_rate_hz: f64,
        normalise_rows: bool,
    ) -> Result<Self> {
        ensure(frames >= 4, || {
            format!("CVD frames = {frames} is out of range; allowed: >= 4")
        })?;
        ensure(nfft >= frames && nfft <= 1 << 22, || {
            format!("CVD nfft = {nfft} is out of range; allowed: frames = {frames} ..= 4194304")
        })?;
        ensure(frame_rate_hz.is_finite() && frame_rate_hz > 0.0, || {
            format!("CVD frame rate {frame_rate_hz} Hz is out of range; allowed: > 0")
        })?;
        let fft = FftPlanner::<f32>::new().plan_fft_forward(nfft);
        let scratch = vec![Complex32::new(0.0, 0.0); fft.get_inplace_scratch_len()];
        Ok(CadencePlan {
            frames,
            nfft,
            frame_rate_hz,
            normalise_rows,
            window: window.coefficients(frames),
            fft,
            buf: vec![Complex32::new(0.0, 0.0); nfft],
            scratch,
        })
    }

    /// Cadence axis, Hz (`c * frame_rate / nfft`, c = 0..=nfft/2).
    pub fn cadence_hz(&self) -> Vec<f64> {
        (0..=self.nfft / 2)
            .map(|c| c as f64 * self.frame_rate_hz / self.nfft as f64)
            .collect()
    }

    /// CVD of a frames × Doppler spectrogram **magnitude** (`|S|`, e.g. the square root of
    /// the spectrogram power) into `out` (reshaped if needed). No allocation once `out` has
    /// the right shape.
    pub fn process_into(
        &mut self,
        magnitude: &Array2<f32>,
        out: &mut CadenceDiagram,
    ) -> Result<()> {
        let (frames, bins) = magnitude.dim();
        ensure(frames == self.frames && bins >= 1, || {
            format!(
                "CVD input of {frames} frames x {bins} bins; allowed: exactly {} frames, >= 1 bin",
                self.frames
            )
        })?;
        let nc = self.nfft / 2 + 1;
        if out.power.dim() != (bins, nc) || out.cadence_hz.len() != nc {
            *out = CadenceDiagram {
                cadence_hz: self.cadence_hz(),
                doppler_bins: bins,
                power: Array2::zeros((bins, nc)),
            };
        }
        out.doppler_bins = bins;
        for (d, mut row) in out.power.rows_mut().into_iter().enumerate() {
            let col = magnitude.column(d);
            let mean = col.iter().map(|&v| v as f64).sum::<f64>() / frames as f64;
            for (i, b) in self.buf.iter_mut().enumerate() {
                *b = if i < frames {
                    Complex32::new(((col[i] as f64 - mean) as f32) * self.window[i], 0.0)
                } else {
                    Complex32::new(0.0, 0.0)
                };
            }
            self.fft
                .process_with_scratch(&mut self.buf, &mut self.scratch);
            for (o, v) in row.iter_mut().zip(&self.buf) {
                *o = v.norm_sqr();
            }
            if self.normalise_rows {
                let m = row.iter().copied().fold(0.0f32, f32::max);
                if m > 0.0 {
                    row.iter_mut().for_each(|v| *v /= m);
                }
            }
        }
        Ok(())
    }

    /// Allocating convenience for [`CadencePlan::process_into`].
    pub fn process(&mut self, magnitude: &Array2<f32>) -> Result<CadenceDiagram> {
        let mut out = CadenceDiagram {
            cadence_hz: Vec::new(),
            doppler_bins: 0,
            power: Array2::zeros((0, 0)),
        };
        self.process_into(magnitude, &mut out)?;
        Ok(out)
    }
}

#[cfg(test)]
#[allow(clippy::needless_range_loop)] // index loops mirror the written sums
mod tests {
    use super::*;
    use crate::frontend::testutil::{naive_dft, random_complex};
    use std::f64::consts::PI;

    // Source: CVD definition (Björklund et al., 2012, from memory: FFT along time of each
    // Doppler row of the spectrogram magnitude). A Doppler row modulated at 6 Hz (a wingbeat
    // rate, common practice) sampled at 100 frames/s for 200 frames: the peak is at bin
    // 6 / (100 / 200) = 12, i.e. 6 Hz.
    #[test]
    fn six_hz_modulation_peaks_at_six_hz() {
        let (frames, bins, rate) = (200usize, 32usize, 100.0);
        let noise = random_complex(frames * bins, 8);
        let mut mag = Array2::zeros((frames, bins));
        for ((i, d), v) in mag.indexed_iter_mut() {
            let t = i as f64 / rate;
            let base = 0.1 * noise[i * bins + d].norm() as f64;
            *v = if (10..14).contains(&d) {
                (base + 1.0 + 0.5 * (2.0 * PI * 6.0 * t + d as f64).cos()) as f32
            } else {
                base as f32
            };
        }
        for norm in [false, true] {
            let mut plan = CadencePlan::new(frames, frames, Window::Hann, rate, norm).unwrap();
            let cvd = plan.process(&mag).unwrap();
            assert_eq!(cvd.power.dim(), (bins, 101));
            assert_eq!(*cvd.cadence_hz.last().unwrap(), 50.0);
            let row = cvd.power.row(11);
            let (c, v) = row
                .iter()
                .enumerate()
                .fold((0, 0.0f32), |a, (i, &v)| if v > a.1 { (i, v) } else { a });
            assert_eq!(c, 12, "norm {norm}");
            if norm {
                // each row scaled to unit maximum
                assert!((v - 1.0).abs() < 1e-6);
                let s = cvd.summed_spectrum_rows(10..14);
                let best = s
                    .iter()
                    .enumerate()
                    .fold((0, 0.0f32), |a, (i, &v)| if v > a.1 { (i, v) } else { a });
                assert_eq!(cvd.cadence_hz[best.0], 6.0);
            } else {
                // unnormalised, the modulated rows dominate the summed spectrum
                let p = cvd.peaks(1.0, 50.0, 1);
                assert_eq!(p[0].0, 6.0, "{p:?}");
            }
        }
    }

    // Source: DFT definition (Oppenheim & Schafer, 3rd ed., Eq. 8.67) naive in f64 on the
    // mean-removed, windowed rows of seeded random magnitudes, zero padded to nfft.
    #[test]
    fn matches_naive_dft() {
        let (frames, bins, nfft) = (24usize, 5usize, 40usize);
        let r = random_complex(frames * bins, 4);
        let mag = Array2::from_shape_fn((frames, bins), |(i, d)| r[i * bins + d].norm());
        let mut plan = CadencePlan::new(frames, nfft, Window::Hamming, 10.0, false).unwrap();
        let cvd = plan.process(&mag).unwrap();
        let w = Window::Hamming.coefficients(frames);
        for d in 0..bins {
            let mean: f32 = mag.column(d).sum() / frames as f32;
            let mut x = vec![Complex32::new(0.0, 0.0); nfft];
            for i in 0..frames {
                x[i] = Complex32::new((mag[[i, d]] - mean) * w[i], 0.0);
            }
            let want = naive_dft(&x, -1.0);
            let peak = want.iter().map(|v| v.norm_sqr()).fold(0.0, f64::max);
            for c in 0..=nfft / 2 {
                assert!((cvd.power[[d, c]] as f64 - want[c].norm_sqr()).abs() < 1e-5 * peak);
            }
        }
    }

    #[test]
    fn errors() {
        assert!(CadencePlan::new(3, 8, Window::Hann, 1.0, false).is_err());
        let e = CadencePlan::new(10, 8, Window::Hann, 1.0, false)
            .err()
            .unwrap()
            .to_string();
        assert!(e.contains("nfft = 8") && e.contains("10"), "{e}");
        assert!(CadencePlan::new(10, 10, Window::Hann, 0.0, false).is_err());
        let mut p = CadencePlan::new(10, 10, Window::Hann, 1.0, false).unwrap();
        assert!(p.process(&Array2::zeros((9, 3))).is_err());
    }
}
