//! Range normalisation: a separable noise-floor estimate `noise(k, d) = n_range(k) *
//! n_doppler(d)` of a (cancelled) range-Doppler power map from medians, averaged across
//! CPIs, so that dividing by it leaves noise of mean 1 in every cell.

use ndarray::Array2;

use super::doppler::RangeDopplerMap;
use crate::error::{ensure, Result};
use crate::stats::{from_total_key, median_of_keys, median_of_keys_guessed, total_key};

/// Parameters of a [`NoiseFloor`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NoiseFloorParams {
    /// Half-width W of the median smoother across range, cells (window ±W). Default 8.
    pub half_window: usize,
    /// Exponential-average factor alpha in (0, 1]: `floor <- (1 - alpha) floor + alpha new`.
    /// 1 keeps only the latest CPI. Default 0.25.
    pub smoothing: f64,
}

impl Default for NoiseFloorParams {
    fn default() -> Self {
        NoiseFloorParams {
            half_window: 8,
            smoothing: 0.25,
        }
    }
}

impl NoiseFloorParams {
    /// Parameters with the given half-window and averaging factor (unchecked; see
    /// [`NoiseFloorParams::check`]).
    pub fn new(half_window: usize, smoothing: f64) -> Self {
        NoiseFloorParams {
            half_window,
            smoothing,
        }
    }

    /// Validates: `smoothing` in (0, 1], `half_window <= 4096`.
    pub fn check(&self) -> Result<()> {
        ensure(
            self.smoothing.is_finite() && self.smoothing > 0.0 && self.smoothing <= 1.0,
            || {
                format!(
                    "noise-floor smoothing {} is out of range; allowed: 0 < smoothing <= 1",
                    self.smoothing
                )
            },
        )?;
        ensure(self.half_window <= 4096, || {
            format!(
                "noise-floor half window {} is out of range; allowed: 0 ..= 4096 cells",
                self.half_window
            )
        })
    }
}

/// The band of keys a median is first looked for in, around the last map's value `v`: a
/// median of 256 exponential powers has a relative spread of about 1/(ln 2 sqrt(256)) ≈
/// 9 % (the sample median's variance 1/(4 n f(m)^2), e.g. David & Nagaraja, *Order
/// Statistics*, 2003, §10.2; from memory), so -30 % / +40 % holds it nearly always; a miss
/// only costs a full selection.
fn guess_band(v: f32) -> (i32, i32) {
    (total_key(v * 0.7), total_key(v * 1.4))
}

/// The median of `keys` with the last estimate `v` as a guess: the narrowest of three
/// bands about it that holds the median (±5 %, -12 %/+14 %, then the wide one of
/// [`guess_band`]; a narrow band selects among a few keys, but misses about half the
/// time), else all keys. Exact whichever answers.
fn median_near(keys: &mut [i32], v: f32, band: &mut Vec<i32>) -> f32 {
    let bands = [
        (total_key(v * 0.95), total_key(v * 1.05)),
        (total_key(v * 0.88), total_key(v * 1.14)),
        guess_band(v),
    ];
    median_of_keys_guessed(keys, &bands, band)
}

/// Inserts `key` into the ascending `sorted`.
fn sorted_insert(sorted: &mut Vec<i32>, key: i32) {
    let at = sorted.partition_point(|&x| x < key);
    sorted.insert(at, key);
}

/// Removes one `key` from the ascending `sorted` (it must be there).
fn sorted_remove(sorted: &mut Vec<i32>, key: i32) {
    let at = sorted.partition_point(|&x| x < key);
    if sorted.get(at) == Some(&key) {
        sorted.remove(at);
    }
}

/// [`median_of_keys`] of ascending keys: the middle value, or the mean of the two middle
/// values for an even count; 0 for none.
fn sorted_median(sorted: &[i32]) -> f32 {
    let n = sorted.len();
    if n == 0 {
        return 0.0;
    }
    let hi = from_total_key(sorted[n / 2]);
    if n % 2 == 1 {
        hi
    } else {
        0.5 * (from_total_key(sorted[n / 2 - 1]) + hi)
    }
}

/// Smallest factor value kept, so a null Doppler bin (e.g. the canceller's notch at 0 Hz
/// on pure noise) never divides by zero.
const TINY: f32 = 1e-30;

/// A running separable noise-floor estimate.
///
/// Model: `noise(k, d) = n_range(k) * n_doppler(d)` with
/// `n_doppler(d) = median_k power[k, d]` (the canceller colours the noise along Doppler)
/// and `n_range(k) = median over |j - k| <= W of (median_d power[j, d] / n_doppler(d))`
/// (the outer median over ±W cells keeps a target's spread across Doppler from raising
/// its own floor). Each factor is exponentially averaged over CPIs. For exponentially
/// distributed (square-law) noise these medians estimate `ln 2` times the mean, so
/// [`NoiseFloor::noise`] divides the product by `ln 2` and returns the **mean** noise
/// power: `power / noise` has mean 1 (median ln 2 ≈ 0.693) on noise alone. Linear units.
#[derive(Debug, Clone)]
pub struct NoiseFloor {
    params: NoiseFloorParams,
    n_range: Vec<f32>,
    n_doppler: Vec<f32>,
    updates: usize,
    // scratch: order keys (`stats::total_key`) of the values a median is taken of
    column: Vec<i32>,
    ratios: Vec<i32>,
    raw_range: Vec<f32>,
    new_range: Vec<f32>,
    band: Vec<i32>,
    window: Vec<i32>,
    new_doppler: Vec<f32>,
}

impl NoiseFloor {
    /// An empty estimate; sizes are taken from the first map.
    pub fn new(params: NoiseFloorParams) -> Result<Self> {
        params.check()?;
        Ok(NoiseFloor {
            params,
            n_range: Vec::new(),
            n_doppler: Vec::new(),
            updates: 0,
            column: Vec::new(),
            ratios: Vec::new(),
            raw_range: Vec::new(),
            new_range: Vec::new(),
            band: Vec::new(),
            window: Vec::new(),
            new_doppler: Vec::new(),
        })
    }

    /// Number of maps averaged in so far.
    pub fn updates(&self) -> usize {
        self.updates
    }

    /// Forgets the estimate.
    pub fn reset(&mut self) {
        self.updates = 0;
    }

    /// Folds one map into the estimate (the first map, or a map of a new shape, restarts
    /// it). No allocation once the shape is fixed.
    pub fn update(&mut self, map: &RangeDopplerMap) -> Result<()> {
        let (k, d) = map.power.dim();
        ensure(k >= 1 && d >= 1, || {
            format!("range-Doppler map of {k} x {d} cells; allowed: at least 1 x 1")
        })?;
        if self.n_range.len() != k || self.n_doppler.len() != d {
            self.updates = 0;
            self.n_range.resize(k, 1.0);
            self.n_doppler.resize(d, 1.0);
            self.new_range.resize(k, 1.0);
            self.new_doppler.resize(d, 1.0);
            self.raw_range.resize(k, 1.0);
        }
        // n_doppler(d) = median over range
        self.column.resize(k * d, 0);
        // the map transposed into keys, Doppler column by column, in tiles (each tile's
        // rows and columns stay in cache)
        const TILE: usize = 16;
        match map.power.as_slice() {
            Some(p) => {
                for k0 in (0..k).step_by(TILE) {
                    let k1 = (k0 + TILE).min(k);
                    for d0 in (0..d).step_by(TILE) {
                        let d1 = (d0 + TILE).min(d);
                        for ki in k0..k1 {
                            let row = &p[ki * d + d0..ki * d + d1];
                            for (j, &v) in row.iter().enumerate() {
                                self.column[(d0 + j) * k + ki] = total_key(v);
                            }
                        }
                    }
                }
            }
            None => {
                for ((ki, di), &v) in map.power.indexed_iter() {
                    self.column[di * k + ki] = total_key(v);
                }
            }
        }
        // The last map's medians are the guesses (`median_of_keys_in_band`: exact).
        let hinted = self.updates > 0;
        for (di, col) in self.column.chunks_exact_mut(k).enumerate() {
            let m = if hinted {
                median_near(col, self.new_doppler[di], &mut self.band)
            } else {
                median_of_keys(col)
            };
            self.new_doppler[di] = m.max(TINY);
        }
        // raw n_range(k) = median over Doppler of power / n_doppler
        self.ratios.resize(d, 0);
        for (ki, row) in map.power.rows().into_iter().enumerate() {
            match row.as_slice() {
                // a plain slice loop: it vectorises (the division is most of its cost)
                Some(row) => {
                    let (ratios, nds) = (&mut self.ratios, &self.new_doppler);
                    crate::wide::with_avx(|| {
                        for ((r, &p), &nd) in ratios.iter_mut().zip(row).zip(nds) {
                            *r = total_key(p / nd);
                        }
                    });
                }
                None => {
                    for ((r, &p), &nd) in self
                        .ratios
                        .iter_mut()
                        .zip(row.iter())
                        .zip(&self.new_doppler)
                    {
                        *r = total_key(p / nd);
                    }
                }
            }
            let m = if hinted {
                median_near(&mut self.ratios, self.raw_range[ki], &mut self.band)
            } else {
                median_of_keys(&mut self.ratios)
            };
            self.raw_range[ki] = m.max(TINY);
        }
        // median smoothing across range, window ±W truncated at the edges
        // (a sorted window slid along the cells: one key in, one out, per cell)
        let w = self.params.half_window;
        self.window.clear();
        for &v in &self.raw_range[..(w + 1).min(k)] {
            sorted_insert(&mut self.window, total_key(v));
        }
        for ki in 0..k {
            self.new_range[ki] = sorted_median(&self.window).max(TINY);
            if ki + 1 + w < k {
                sorted_insert(&mut self.window, total_key(self.raw_range[ki + 1 + w]));
            }
            if ki >= w {
                sorted_remove(&mut self.window, total_key(self.raw_range[ki - w]));
            }
        }
        if self.updates == 0 {
            self.n_range.copy_from_slice(&self.new_range);
            self.n_doppler.copy_from_slice(&self.new_doppler);
        } else {
            let a = self.params.smoothing as f32;
            for (o, &n) in self.n_range.iter_mut().zip(&self.new_range) {
                *o += a * (n - *o);
            }
            for (o, &n) in self.n_doppler.iter_mut().zip(&self.new_doppler) {
                *o += a * (n - *o);
            }
        }
        self.updates += 1;
        Ok(())
    }

    /// Estimated mean noise power (linear) of range cell `k`, shifted Doppler column `d`;
    /// `None` before the first update or out of bounds.
    pub fn noise(&self, k: usize, d: usize) -> Option<f32> {
        if self.updates == 0 {
            return None;
        }
        let r = self.n_range.get(k)?;
        let dd = self.n_doppler.get(d)?;
        Some(r * dd / std::f32::consts::LN_2)
    }

    /// The two factors (range, Doppler) of the median estimate: [`NoiseFloor::noise`]
    /// of cell (k, d) is `range[k] * doppler[d] / ln 2`. Empty before the first update.
    pub fn factors(&self) -> (&[f32], &[f32]) {
        if self.updates == 0 {
            return (&[], &[]);
        }
        (&self.n_range, &self.n_doppler)
    }

    /// Writes `power / noise` (linear, mean 1 on noise) into `out`, resized to the map's
    /// shape if needed. Errors before the first update or when the map's shape differs
    /// from the estimate's.
    pub fn normalise_into(&self, map: &RangeDopplerMap, out: &mut Array2<f32>) -> Result<()> {
        let (k, d) = map.power.dim();
        ensure(self.updates > 0, || {
            "noise floor has no estimate yet; allowed: call update() first".to_string()
        })?;
        ensure(k == self.n_range.len() && d == self.n_doppler.len(), || {
            format!(
                "map of {k} x {d} does not match the noise floor's {} x {}; allowed: the same shape",
                self.n_range.len(),
                self.n_doppler.len()
            )
        })?;
        if out.dim() != (k, d) {
            *out = Array2::zeros((k, d));
        }
        if let (Some(o), Some(p)) = (out.as_slice_mut(), map.power.as_slice()) {
            // plain slice loops vectorise (two divisions a cell are most of the cost)
            crate::wide::with_avx(|| {
                for ((orow, prow), &nr) in o
                    .chunks_exact_mut(d)
                    .zip(p.chunks_exact(d))
                    .zip(&self.n_range)
                {
                    for ((o, &p), &nd) in orow.iter_mut().zip(prow).zip(&self.n_doppler) {
                        let n = nr * nd / std::f32::consts::LN_2;
                        *o = p / n;
                    }
                }
            });
            return Ok(());
        }
        for ((orow, prow), &nr) in out
            .rows_mut()
            .into_iter()
            .zip(map.power.rows())
            .zip(&self.n_range)
        {
            for ((o, &p), &nd) in orow.into_iter().zip(prow).zip(&self.n_doppler) {
                let n = nr * nd / std::f32::consts::LN_2;
                *o = p / n;
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::frontend::canceller::{Canceller, CancellerState};
    use crate::frontend::doppler::RangeDopplerPlan;
    use crate::frontend::testutil::random_complex;
    use crate::frontend::window::Window;
    use rustfft::num_complex::Complex32;

    // Source: median of an exponential distribution = mean x ln 2 (e.g. Papoulis &
    // Pillai, Probability, Random Variables and Stochastic Processes, 4th ed., exponential
    // law; |X|^2 of circular complex Gaussian noise is exponential, Richards §6.2).
    // Noise level rising 20 dB across range, coloured by a three-pulse canceller
    // (|H|^2 = 16 sin^4(pi f T)), Hann Doppler window; after normalisation the mean must be
    // 1 within 5% in every range decile.
    #[test]
    fn normalised_noise_has_unit_mean_at_every_range_decile() {
        let (cells, chirps, cpis) = (200usize, 128usize, 6usize);
        let order = Canceller::ThreePulse.order();
        let mut floor = NoiseFloor::new(NoiseFloorParams::default()).unwrap();
        let mut plan = RangeDopplerPlan::new(chirps, Window::Hann).unwrap();
        let mut map = crate::frontend::doppler::RangeDopplerMap::zeros(0, 0, 1.0);
        let mut maps = Vec::new();
        let gain: Vec<f32> = (0..cells)
            .map(|k| 10f32.powf(2.0 * k as f32 / (cells - 1) as f32 / 2.0)) // amplitude, 20 dB power
            .collect();
        for cpi in 0..cpis {
            let mut x = random_complex(cells * (chirps + order), 1000 + cpi as u64);
            for (i, v) in x.iter_mut().enumerate() {
                *v *= gain[i % cells];
            }
            let mut st = CancellerState::new(Canceller::ThreePulse, cells, false).unwrap();
            let mut y = vec![Complex32::new(0.0, 0.0); x.len()];
            let n = st.push_block(&x, &mut y).unwrap();
            assert_eq!(n, chirps);
            plan.process_into(&y[..cells * chirps], 1000.0, &mut map)
                .unwrap();
            floor.update(&map).unwrap();
            maps.push(map.clone());
        }
        let mut out = Array2::zeros((0, 0));
        let mut sums = [0.0f64; 10];
        let mut counts = [0usize; 10];
        let mut med = Vec::new();
        for m in &maps {
            floor.normalise_into(m, &mut out).unwrap();
            for ((k, _), &v) in out.indexed_iter() {
                let dec = k * 10 / cells;
                sums[dec] += v as f64;
                counts[dec] += 1;
                med.push(v);
            }
        }
        for dec in 0..10 {
            let mean = sums[dec] / counts[dec] as f64;
            println!("range decile {dec}: normalised mean {mean:.4}");
            assert!((mean - 1.0).abs() < 0.05, "decile {dec}: {mean}");
        }
        // and the median sits at ln 2 (mean 1 for an exponential law)
        let m = crate::stats::median_f32_in_place(&mut med);
        assert!((m - std::f32::consts::LN_2).abs() < 0.03, "median {m}");
        // the floor follows the 20 dB slope
        let ratio = floor.noise(cells - 20, 10).unwrap() / floor.noise(20, 10).unwrap();
        assert!((10.0 * ratio.log10() - 16.0).abs() < 1.0, "{ratio}");
    }

    // A strong target spread over a few Doppler bins of one cell does not raise that cell's
    // floor: the median over Doppler ignores it. Common practice (order-statistic floors).
    #[test]
    fn target_does_not_raise_own_floor() {
        let (k, d) = (64usize, 64usize);
        let x = random_complex(k * d, 3);
        let mut map = crate::frontend::doppler::RangeDopplerMap::zeros(k, d, 1.0);
        for ((i, j), p) in map.power.indexed_iter_mut() {
            *p = x[i * d + j].norm_sqr();
            if i == 30 && (20..26).contains(&j) {
                *p = 1e6;
            }
        }
        let mut f = NoiseFloor::new(NoiseFloorParams::new(8, 1.0)).unwrap();
        f.update(&map).unwrap();
        let n = f.noise(30, 22).unwrap();
        assert!(n < 2.0 && n > 0.5, "{n}");
    }

    /// The sorted window slid along the cells gives numpy's median of every window
    /// (`numpy.median` of `x[max(0, i - w) : i + w + 1]`: the middle value, or the mean of
    /// the two middle values), edges and repeated values included.
    #[test]
    fn sliding_median_matches_median_of_each_window() {
        let mut x = 99u32;
        let raw: Vec<f32> = (0..40)
            .map(|_| {
                x = x.wrapping_mul(1664525).wrapping_add(1013904223);
                ((x >> 26) as f32) * 0.25 // few distinct values: ties
            })
            .collect();
        for (k, w) in [(40usize, 8usize), (40, 0), (40, 3), (5, 8), (1, 2)] {
            let mut window = Vec::new();
            for &v in &raw[..(w + 1).min(k)] {
                sorted_insert(&mut window, total_key(v));
            }
            for i in 0..k {
                let mut keys: Vec<i32> = raw[i.saturating_sub(w)..(i + w + 1).min(k)]
                    .iter()
                    .map(|&v| total_key(v))
                    .collect();
                assert_eq!(
                    sorted_median(&window),
                    median_of_keys(&mut keys),
                    "k {k} w {w} i {i}"
                );
                if i + 1 + w < k {
                    sorted_insert(&mut window, total_key(raw[i + 1 + w]));
                }
                if i >= w {
                    sorted_remove(&mut window, total_key(raw[i - w]));
                }
            }
        }
    }

    #[test]
    fn params_and_errors() {
        let e = NoiseFloorParams::new(8, 0.0)
            .check()
            .unwrap_err()
            .to_string();
        assert!(e.contains("0 < smoothing <= 1"), "{e}");
        assert!(NoiseFloorParams::new(5000, 0.5).check().is_err());
        let f = NoiseFloor::new(NoiseFloorParams::default()).unwrap();
        assert!(f.noise(0, 0).is_none());
        let map = crate::frontend::doppler::RangeDopplerMap::zeros(2, 2, 1.0);
        assert!(f.normalise_into(&map, &mut Array2::zeros((0, 0))).is_err());
        let mut v = vec![3.0, 1.0, 2.0, 4.0];
        assert_eq!(crate::stats::median_f32_in_place(&mut v), 2.5);
    }
}
