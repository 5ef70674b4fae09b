//! Tapering windows for the range, Doppler and STFT transforms: coefficients identical to
//! `scipy.signal.get_window` (periodic, the default `fftbins=True`) or the symmetric form,
//! and the window's coherent gain and equivalent noise bandwidth.

use std::f64::consts::PI;
use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use crate::error::{Error, Result};

/// A tapering window. Names (serde, [`FromStr`], [`fmt::Display`]): `rectangular`, `hann`,
/// `hamming`, `blackman`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize, Default)]
#[serde(rename_all = "lowercase")]
pub enum Window {
    /// All ones (scipy `boxcar`).
    Rectangular,
    /// `0.5 - 0.5 cos(2 pi n / D)`.
    #[default]
    Hann,
    /// `0.54 - 0.46 cos(2 pi n / D)`.
    Hamming,
    /// `0.42 - 0.5 cos(2 pi n / D) + 0.08 cos(4 pi n / D)` (the classic coefficients, as
    /// `scipy.signal.windows.blackman`).
    Blackman,
}

impl Window {
    /// Every window, in a fixed order.
    pub const ALL: [Window; 4] = [
        Window::Rectangular,
        Window::Hann,
        Window::Hamming,
        Window::Blackman,
    ];

    /// The window's name as used by serde and [`FromStr`].
    pub fn name(self) -> &'static str {
        match self {
            Window::Rectangular => "rectangular",
            Window::Hann => "hann",
            Window::Hamming => "hamming",
            Window::Blackman => "blackman",
        }
    }

    /// Half-width of the main lobe, in DFT bins: the number of cosine terms (1 rectangular,
    /// 2 Hann and Hamming, 3 Blackman; Harris, Proc. IEEE 66(1), 1978).
    pub fn main_lobe_half_width_bins(self) -> usize {
        self.cosine_terms().len()
    }

    /// Generalised-cosine coefficients `a_i` of `w[n] = sum_i (-1)^i a_i cos(2 pi i n / D)`.
    fn cosine_terms(self) -> &'static [f64] {
        match self {
            Window::Rectangular => &[1.0],
            Window::Hann => &[0.5, 0.5],
            Window::Hamming => &[0.54, 0.46],
            Window::Blackman => &[0.42, 0.5, 0.08],
        }
    }

    fn values(self, len: usize, denom: f64) -> Vec<f64> {
        let a = self.cosine_terms();
        (0..len)
            .map(|n| {
                let x = 2.0 * PI * n as f64 / denom;
                a.iter()
                    .enumerate()
                    .map(|(i, &ai)| {
                        let s = if i % 2 == 0 { 1.0 } else { -1.0 };
                        s * ai * (i as f64 * x).cos()
                    })
                    .sum()
            })
            .collect()
    }

    /// Periodic ("DFT-even") coefficients, the default of `scipy.signal.get_window(name,
    /// len)` (`fftbins=True`): the symmetric window of length `len + 1` without its last
    /// sample, i.e. denominator `D = len`. Computed in f64, returned as f32. Length 0 gives
    /// an empty vector, length 1 gives `[1.0]`.
    pub fn coefficients(self, len: usize) -> Vec<f32> {
        self.coefficients_f64(len)
            .into_iter()
            .map(|v| v as f32)
            .collect()
    }

    /// [`Window::coefficients`] in f64.
    pub fn coefficients_f64(self, len: usize) -> Vec<f64> {
        match len {
            0 => Vec::new(),
            1 => vec![1.0],
            _ => self.values(len, len as f64),
        }
    }

    /// Symmetric coefficients (`scipy.signal.get_window(name, len, fftbins=False)`,
    /// denominator `D = len - 1`), as used for filter design. Length 1 gives `[1.0]`.
    pub fn symmetric_coefficients(self, len: usize) -> Vec<f32> {
        match len {
            0 => Vec::new(),
            1 => vec![1.0],
            _ => self
                .values(len, (len - 1) as f64)
                .into_iter()
                .map(|v| v as f32)
                .collect(),
        }
    }
}

impl fmt::Display for Window {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Window {
    type Err = Error;
    fn from_str(s: &str) -> Result<Self> {
        Window::ALL
            .into_iter()
            .find(|w| w.name() == s)
            .ok_or_else(|| {
                Error::Invalid(format!(
                    "window {s:?} is unknown; allowed: rectangular, hann, hamming, blackman"
                ))
            })
    }
}

/// Coherent gain `sum(w) / N` (linear amplitude gain of a bin-centred tone relative to the
/// rectangular window; 1 for rectangular, 0.5 for periodic Hann). Zero for an empty window.
pub fn coherent_gain(w: &[f32]) -> f64 {
    if w.is_empty() {
        return 0.0;
    }
    w.iter().map(|&v| v as f64).sum::<f64>() / w.len() as f64
}

/// Equivalent noise bandwidth in bins, `N sum(w^2) / (sum w)^2` (Harris, "On the use of
/// windows for harmonic analysis with the DFT", Proc. IEEE 66(1), 1978, Eq. 11): 1 for
/// rectangular, 1.5 for Hann. Multiply by `fs / N` for hertz. `NaN` if `sum(w)` is zero.
pub fn enbw_bins(w: &[f32]) -> f64 {
    let s: f64 = w.iter().map(|&v| v as f64).sum();
    let s2: f64 = w.iter().map(|&v| (v as f64) * (v as f64)).sum();
    w.len() as f64 * s2 / (s * s)
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: Harris (1978), Proc. IEEE 66(1), Table 1: coherent gain 1.00 / 0.50 / 0.54 /
    // 0.42 and ENBW 1.00 / 1.50 / 1.36 / 1.73 bins (rectangular / Hann / Hamming /
    // Blackman); for the periodic window the table values are exact in the limit of large N.
    #[test]
    fn gains_match_harris_table() {
        let table = [
            (Window::Rectangular, 1.00, 1.00),
            (Window::Hann, 0.50, 1.50),
            (Window::Hamming, 0.54, 1.36),
            (Window::Blackman, 0.42, 1.73),
        ];
        for (w, cg, enbw) in table {
            let c = w.coefficients(1024);
            assert!((coherent_gain(&c) - cg).abs() < 1e-3, "{w} cg");
            assert!(
                (enbw_bins(&c) - enbw).abs() < 6e-3,
                "{w} enbw {}",
                enbw_bins(&c)
            );
        }
    }

    // Source: definition of the periodic Hann window, scipy.signal.windows.hann docs
    // (scipy 1.17): hann(4, sym=False) = [0, 0.5, 1, 0.5]; hann(5, sym=True) = [0, .5, 1, .5, 0].
    #[test]
    fn hann_known_values() {
        assert_eq!(Window::Hann.coefficients(4), vec![0.0, 0.5, 1.0, 0.5]);
        let s = Window::Hann.symmetric_coefficients(5);
        let want = [0.0, 0.5, 1.0, 0.5, 0.0];
        for (a, b) in s.iter().zip(want) {
            assert!((a - b).abs() < 1e-7);
        }
    }

    #[test]
    fn names_round_trip_and_bad_name_errors() {
        for w in Window::ALL {
            assert_eq!(w.name().parse::<Window>().unwrap(), w);
            let j = serde_json::to_string(&w).unwrap();
            assert_eq!(j, format!("\"{}\"", w.name()));
            assert_eq!(serde_json::from_str::<Window>(&j).unwrap(), w);
        }
        let e = "kaiser".parse::<Window>().unwrap_err().to_string();
        assert!(e.contains("kaiser") && e.contains("hann"), "{e}");
    }
}
