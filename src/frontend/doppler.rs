//! Range-Doppler map: the windowed FFT over slow time of each range cell of one coherent
//! processing interval (CPI), as linear power with the Doppler axis FFT-shifted so the
//! middle column is 0 Hz and positive Doppler (receding) lies to the right.

use std::sync::Arc;

use ndarray::Array2;
use rustfft::num_complex::Complex32;
use rustfft::{Fft, FftPlanner};

use super::window::Window;
use crate::error::{ensure, Result};

/// One CPI's range-Doppler power map.
///
/// `power[[k, d]] = |sum_m w[m] x[m, k] exp(-j 2 pi m d' / M)|^2` (linear, **no scaling**:
/// a slow-time tone of amplitude A on a bin centre gives `(A sum w)^2`), with range cell k
/// in rows and Doppler in columns, **FFT-shifted**: column d holds natural bin
/// `d' = (d + M - M/2) mod M`, i.e. Doppler `(d - M/2) * prf / M` Hz, so column 0 is
/// -PRF/2 and column M/2 is 0 Hz (integer division for odd M, as `numpy.fft.fftshift`).
#[derive(Debug, Clone, PartialEq)]
pub struct RangeDopplerMap {
    /// Range cells (rows).
    pub cells: usize,
    /// Doppler bins (columns) = chirps per CPI.
    pub doppler_bins: usize,
    /// Linear power, shape `(cells, doppler_bins)`.
    pub power: Array2<f32>,
    /// Chirp repetition frequency 1/T, Hz.
    pub prf_hz: f64,
}

impl RangeDopplerMap {
    /// An all-zero map.
    pub fn zeros(cells: usize, doppler_bins: usize, prf_hz: f64) -> Self {
        RangeDopplerMap {
            cells,
            doppler_bins,
            power: Array2::zeros((cells, doppler_bins)),
            prf_hz,
        }
    }

    /// Doppler frequency (Hz) of shifted column `bin`: `(bin - M/2) * prf / M`.
    pub fn doppler_hz(&self, bin: usize) -> f64 {
        let m = self.doppler_bins as f64;
        (bin as f64 - (self.doppler_bins / 2) as f64) * self.prf_hz / m
    }

    /// Shifted column nearest to Doppler `f_hz`; frequencies outside ±PRF/2 alias
    /// (wrap modulo PRF), as a sampled slow-time signal does. `None` for a non-finite `f_hz`
    /// or an empty map.
    pub fn bin_of_doppler(&self, f_hz: f64) -> Option<usize> {
        if !f_hz.is_finite() || self.doppler_bins == 0 {
            return None;
        }
        let m = self.doppler_bins as i64;
        let k = (f_hz * self.doppler_bins as f64 / self.prf_hz).round() as i64;
        Some(((k + m / 2).rem_euclid(m)) as usize)
    }

    /// Radial velocity (m/s, positive = receding) of shifted column `bin` for wavelength
    /// `lambda_m`: `v = f_D lambda / 2`.
    pub fn velocity_mps(&self, bin: usize, lambda_m: f64) -> f64 {
        self.doppler_hz(bin) * lambda_m / 2.0
    }
}

/// A planned slow-time transform for CPIs of `chirps_per_cpi` chirps. Holds the FFT, the
/// periodic window and reusable buffers (sized on first use for a given cell count; no
/// allocation per CPI after that).
pub struct RangeDopplerPlan {
    chirps: usize,
    window: Vec<f32>,
    fft: Arc<dyn Fft<f32>>,
    buf: Vec<Complex32>,
    scratch: Vec<Complex32>,
}

impl std::fmt::Debug for RangeDopplerPlan {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("RangeDopplerPlan")
            .field("chirps", &self.chirps)
            .finish()
    }
}

impl RangeDopplerPlan {
    /// Plans a Doppler FFT over `chirps_per_cpi` (>= 2) chirps with the periodic `window`.
    pub fn new(chirps_per_cpi: usize, window: Window) -> Result<Self> {
        ensure(chirps_per_cpi >= 2, || {
            format!("chirps per CPI = {chirps_per_cpi} is out of range; allowed: >= 2")
        })?;
        let fft = FftPlanner::<f32>::new().plan_fft_forward(chirps_per_cpi);
        let scratch = vec![Complex32::new(0.0, 0.0); fft.get_inplace_scratch_len()];
        Ok(RangeDopplerPlan {
            chirps: chirps_per_cpi,
            window: window.coefficients(chirps_per_cpi),
            fft,
            buf: Vec::new(),
            scratch,
        })
    }

    /// Chirps per CPI (= Doppler bins).
    pub fn chirps_per_cpi(&self) -> usize {
        self.chirps
    }

    /// Transforms a chirp-major CPI block (`M * K` values, chirp m, cell k at `m * K + k`;
    /// range-compressed and optionally cancelled) into `map` (see [`RangeDopplerMap`] for
    /// the layout). `map` is reshaped if its size differs (that allocates; reuse the map).
    pub fn process_into(
        &mut self,
        block: &[Complex32],
        prf_hz: f64,
        map: &mut RangeDopplerMap,
    ) -> Result<()> {
        let m = self.chirps;
        ensure(!block.is_empty() && block.len() % m == 0, || {
            format!(
                "CPI block length {} is not a whole number of {m} chirps; allowed: a positive multiple of {m}",
                block.len()
            )
        })?;
        ensure(prf_hz.is_finite() && prf_hz > 0.0, || {
            format!("PRF {prf_hz} Hz is out of range; allowed: > 0")
        })?;
        let k = block.len() / m;
        self.transform(k, |t| &block[t * k..(t + 1) * k], prf_hz, map)
    }

    /// [`RangeDopplerPlan::process_into`] of a ring of `M` chirps (`M * K` values, slot s
    /// holding `ring[s * K..(s + 1) * K]`) whose oldest chirp sits in slot `oldest`: the
    /// same map as of the chirps copied out in time order, without the copy.
    pub fn process_ring_into(
        &mut self,
        ring: &[Complex32],
        oldest: usize,
        prf_hz: f64,
        map: &mut RangeDopplerMap,
    ) -> Result<()> {
        let m = self.chirps;
        ensure(
            !ring.is_empty() && ring.len() % m == 0 && oldest < m,
            || {
                format!(
                "CPI ring of {} values (oldest slot {oldest}) is not a whole number of {m} chirps; allowed: a positive multiple of {m}, oldest < {m}",
                ring.len()
            )
            },
        )?;
        ensure(prf_hz.is_finite() && prf_hz > 0.0, || {
            format!("PRF {prf_hz} Hz is out of range; allowed: > 0")
        })?;
        let k = ring.len() / m;
        self.transform(
            k,
            |t| {
                let s = (oldest + t) % m;
                &ring[s * k..(s + 1) * k]
            },
            prf_hz,
            map,
        )
    }

    /// The map of the `M` chirps `chirp(t)` (t in time order, `k` cells each).
    fn transform<'a>(
        &mut self,
        k: usize,
        chirp: impl Fn(usize) -> &'a [Complex32],
        prf_hz: f64,
        map: &mut RangeDopplerMap,
    ) -> Result<()> {
        let m = self.chirps;
        if self.buf.len() != k * m {
            self.buf.resize(k * m, Complex32::new(0.0, 0.0));
        }
        // Transpose to cell-major with the window applied, in tiles of `TILE` chirps so
        // each cell's run of the tile is written as one contiguous piece.
        const TILE: usize = 8;
        let mut rows: [&[Complex32]; TILE] = [&[]; TILE];
        for m0 in (0..m).step_by(TILE) {
            let n = TILE.min(m - m0);
            for (j, row) in rows.iter_mut().enumerate().take(n) {
                *row = chirp(m0 + j);
            }
            let w = &self.window[m0..m0 + n];
            if n == TILE {
                // Eight cells at a time: each chirp's run of them is read once, each cell's
                // run of the tile written as one piece.
                let mut ki = 0;
                while ki + TILE <= k {
                    let mut block = [[Complex32::new(0.0, 0.0); TILE]; TILE];
                    for (j, (row, &wj)) in rows.iter().zip(w).enumerate() {
                        for (t, &x) in row[ki..ki + TILE].iter().enumerate() {
                            block[t][j] = x * wj;
                        }
                    }
                    for (t, b) in block.iter().enumerate() {
                        let at = (ki + t) * m + m0;
                        self.buf[at..at + TILE].copy_from_slice(b);
                    }
                    ki += TILE;
                }
                for ki in ki..k {
                    let dst = &mut self.buf[ki * m + m0..ki * m + m0 + n];
                    for ((d, row), &wj) in dst.iter_mut().zip(&rows[..n]).zip(w) {
                        *d = row[ki] * wj;
                    }
                }
            } else {
                for ki in 0..k {
                    let dst = &mut self.buf[ki * m + m0..ki * m + m0 + n];
                    for ((d, row), &wj) in dst.iter_mut().zip(&rows[..n]).zip(w) {
                        *d = row[ki] * wj;
                    }
                }
            }
        }
        self.fft
            .process_with_scratch(&mut self.buf, &mut self.scratch);
        if map.cells != k || map.doppler_bins != m || map.power.dim() != (k, m) {
            *map = RangeDopplerMap::zeros(k, m, prf_hz);
        }
        map.prf_hz = prf_hz;
        // fftshift: shifted bin d holds natural bin (d + m - m/2) mod m, i.e. the upper
        // half of the spectrum first, then the lower.
        let lower = m - m / 2;
        for (ki, mut row) in map.power.rows_mut().into_iter().enumerate() {
            let src = &self.buf[ki * m..(ki + 1) * m];
            let (neg, pos) = (&src[lower..], &src[..lower]);
            match row.as_slice_mut() {
                Some(out) => {
                    // two plain loops (they vectorise; a chained iterator does not)
                    let (a, b) = out.split_at_mut(neg.len());
                    for (p, v) in a.iter_mut().zip(neg) {
                        *p = v.re * v.re + v.im * v.im;
                    }
                    for (p, v) in b.iter_mut().zip(pos) {
                        *p = v.re * v.re + v.im * v.im;
                    }
                }
                None => {
                    for (p, v) in row.iter_mut().zip(neg.iter().chain(pos)) {
                        *p = v.norm_sqr();
                    }
                }
            }
        }
        Ok(())
    }

    /// Allocating convenience for [`RangeDopplerPlan::process_into`].
    pub fn process(&mut self, block: &[Complex32], prf_hz: f64) -> Result<RangeDopplerMap> {
        let mut map = RangeDopplerMap::zeros(0, 0, prf_hz);
        self.process_into(block, prf_hz, &mut map)?;
        Ok(map)
    }
}

#[cfg(test)]
mod tests {
    use super::super::shift::natural_of_shifted;
    use super::*;
    use crate::frontend::range::RangePlan;
    use crate::frontend::testutil::{naive_dft, random_complex};
    use std::f64::consts::PI;

    // Source: DFT definition (Oppenheim & Schafer, 3rd ed., Eq. 8.67), naive in f64, then
    // numpy.fft.fftshift's ordering (roll by M//2), on seeded random input.
    #[test]
    fn matches_naive_dft_per_cell() {
        for (m, w) in [(32usize, Window::Hann), (15, Window::Hamming)] {
            let k = 7;
            let x = random_complex(m * k, 11);
            let mut plan = RangeDopplerPlan::new(m, w).unwrap();
            let map = plan.process(&x, 1000.0).unwrap();
            assert_eq!(map.power.dim(), (k, m));
            let wc = w.coefficients(m);
            for ki in 0..k {
                let col: Vec<Complex32> = (0..m).map(|mi| x[mi * k + ki] * wc[mi]).collect();
                let want = naive_dft(&col, -1.0);
                let peak = want.iter().map(|v| v.norm_sqr()).fold(0.0, f64::max);
                for d in 0..m {
                    let nat = natural_of_shifted(d, m);
                    let e = (map.power[[ki, d]] as f64 - want[nat].norm_sqr()).abs() / peak;
                    assert!(e < 1e-5, "m {m} cell {ki} bin {d}: {e}");
                }
            }
        }
    }

    // Known answer (signal convention of docs/recording-format.md): a target at beat bin k0 receding with
    // Doppler f0 -> s[m, n] = exp(+j 2 pi k0 n / N) exp(+j 2 pi f0 m T); after the range
    // FFT and the Doppler FFT the peak sits at range bin k0 and shifted column
    // M/2 + f0 M / PRF. f0 = +1875 Hz at PRF 8 kHz, M 64 -> column 32 + 15 = 47; negative
    // (approaching) f0 = -2500 Hz -> column 12.
    #[test]
    fn point_target_lands_in_range_and_doppler_bin() {
        let (n, m, prf) = (64usize, 64usize, 8000.0);
        for (k0, f0, want_col) in [(10usize, 1875.0, 47usize), (33, -2500.0, 12), (5, 0.0, 32)] {
            let mut x = Vec::with_capacity(n * m);
            for mi in 0..m {
                for ni in 0..n {
                    let ph =
                        2.0 * PI * (k0 * ni) as f64 / n as f64 + 2.0 * PI * f0 * mi as f64 / prf;
                    x.push(Complex32::new(ph.cos() as f32, ph.sin() as f32));
                }
            }
            RangePlan::new(n, Window::Hann)
                .unwrap()
                .process_block(&mut x)
                .unwrap();
            let mut plan = RangeDopplerPlan::new(m, Window::Hann).unwrap();
            let map = plan.process(&x, prf).unwrap();
            let mut best = (0, 0, 0.0f32);
            for ((r, d), &p) in map.power.indexed_iter() {
                if p > best.2 {
                    best = (r, d, p);
                }
            }
            assert_eq!((best.0, best.1), (k0, want_col), "f0 {f0}");
            assert_eq!(map.bin_of_doppler(f0), Some(want_col));
            assert!((map.doppler_hz(want_col) - f0).abs() < 1e-9);
        }
    }

    #[test]
    fn axis_helpers_and_errors() {
        let map = RangeDopplerMap::zeros(4, 8, 800.0);
        assert_eq!(map.doppler_hz(0), -400.0);
        assert_eq!(map.doppler_hz(4), 0.0);
        assert_eq!(map.bin_of_doppler(500.0), Some(1)); // aliases to -300 Hz
        assert!((map.velocity_mps(5, 0.02) - 1.0).abs() < 1e-12); // 100 Hz * 0.02 / 2
        assert!(RangeDopplerPlan::new(1, Window::Hann).is_err());
        let mut p = RangeDopplerPlan::new(8, Window::Hann).unwrap();
        let mut mp = RangeDopplerMap::zeros(0, 0, 1.0);
        let e = p.process_into(&[Complex32::new(0.0, 0.0); 12], 1.0, &mut mp);
        assert!(e.unwrap_err().to_string().contains("12"));
        assert!(p
            .process_into(&[Complex32::new(0.0, 0.0); 16], 0.0, &mut mp)
            .is_err());
    }
}
