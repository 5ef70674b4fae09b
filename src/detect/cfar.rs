//! Two-dimensional constant-false-alarm-rate (CFAR) detection on a range-Doppler power map:
//! cell averaging (CA) and ordered statistic (OS) on square-law (power) data, with the
//! threshold multiplier recomputed for the actual number of training cells at the range
//! edges so the false-alarm probability holds in every cell.
//!
//! Conventions: the map is *linear power* (|x|², not dB), rows = range cells (no wrap),
//! columns = Doppler bins in any order the caller chooses, treated as circular (the
//! Doppler spectrum of a pulse train is periodic, so the window wraps from the last column
//! to the first). Hits are reported in row-major order (range, then Doppler).

use std::str::FromStr;

use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

use crate::error::ensure;
use crate::stats::{select_key, total_key};
use crate::{Error, Result};

/// Which noise estimator the CFAR uses.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CfarKind {
    /// Mean of the training cells (Richards, *Fundamentals of Radar Signal Processing*,
    /// 2nd ed., §6.5.3). The default.
    #[default]
    CellAveraging,
    /// The k-th smallest training cell, k = round(rank_fraction · N) clamped to 1..=N
    /// (Rohling, IEEE Trans. AES-19(4), 1983; Richards §6.5.6).
    OrderedStatistic {
        /// Rank as a fraction of the training-cell count, in (0, 1]; 0.75 is common practice.
        rank_fraction: f64,
    },
}

impl FromStr for CfarKind {
    type Err = Error;
    /// `"ca"` → cell averaging; `"os"` → ordered statistic with rank fraction 0.75.
    fn from_str(s: &str) -> Result<Self> {
        match s.trim().to_ascii_lowercase().as_str() {
            "ca" => Ok(CfarKind::CellAveraging),
            "os" => Ok(CfarKind::OrderedStatistic {
                rank_fraction: DEFAULT_OS_RANK,
            }),
            other => Err(Error::Invalid(format!(
                "CFAR kind {other:?} is not known; allowed: \"ca\", \"os\""
            ))),
        }
    }
}

/// Default OS-CFAR rank fraction (common practice: k ≈ 3N/4, Rohling 1983).
pub const DEFAULT_OS_RANK: f64 = 0.75;

/// CFAR window and false-alarm probability.
///
/// The window around the cell under test (CUT) spans `guard_range + train_range` cells on
/// each side in range and `guard_doppler + train_doppler` bins on each side in Doppler; the
/// inner `(2·guard_range+1) × (2·guard_doppler+1)` block (guard cells and the CUT) is left
/// out, the rest are the training cells. Full count
/// N = (2(g_r+t_r)+1)(2(g_d+t_d)+1) − (2g_r+1)(2g_d+1).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct CfarParams {
    pub kind: CfarKind,
    /// Guard cells on each side of the CUT in range.
    pub guard_range: usize,
    /// Guard bins on each side of the CUT in Doppler.
    pub guard_doppler: usize,
    /// Training cells on each side beyond the guard cells, in range.
    pub train_range: usize,
    /// Training bins on each side beyond the guard bins, in Doppler.
    pub train_doppler: usize,
    /// Design false-alarm probability per cell, in (0, 0.5].
    pub pfa: f64,
}

impl Default for CfarParams {
    /// CA-CFAR, guard 1 × 2, training 4 × 8 (N = 216 in the interior), Pfa 1e-6.
    fn default() -> Self {
        CfarParams {
            kind: CfarKind::CellAveraging,
            guard_range: 1,
            guard_doppler: 2,
            train_range: 4,
            train_doppler: 8,
            pfa: 1e-6,
        }
    }
}

/// Largest window half-extent accepted on either axis (keeps the window a local one).
const MAX_HALF_EXTENT: usize = 256;

impl CfarParams {
    /// Builds and checks parameters.
    pub fn new(
        kind: CfarKind,
        guard_range: usize,
        guard_doppler: usize,
        train_range: usize,
        train_doppler: usize,
        pfa: f64,
    ) -> Result<Self> {
        let p = CfarParams {
            kind,
            guard_range,
            guard_doppler,
            train_range,
            train_doppler,
            pfa,
        };
        p.check()?;
        Ok(p)
    }

    /// Checks every field; the error names the value and the allowed range.
    pub fn check(&self) -> Result<()> {
        ensure(
            self.pfa.is_finite() && self.pfa > 0.0 && self.pfa <= 0.5,
            || {
                format!(
                    "CFAR pfa {} is out of range; allowed: 0 < pfa <= 0.5",
                    self.pfa
                )
            },
        )?;
        if let CfarKind::OrderedStatistic { rank_fraction } = self.kind {
            ensure(
                rank_fraction.is_finite() && rank_fraction > 0.0 && rank_fraction <= 1.0,
                || {
                    format!(
                        "OS-CFAR rank_fraction {rank_fraction} is out of range; allowed: 0 < rank_fraction <= 1"
                    )
                },
            )?;
        }
        ensure(self.train_doppler >= 1, || {
            format!(
                "CFAR train_doppler {} is out of range; allowed: 1..={MAX_HALF_EXTENT} \
                 (the CUT's own range row must hold training cells)",
                self.train_doppler
            )
        })?;
        ensure(
            self.guard_range + self.train_range <= MAX_HALF_EXTENT,
            || {
                format!(
                    "CFAR guard_range + train_range = {} is out of range; allowed: 0..={MAX_HALF_EXTENT}",
                    self.guard_range + self.train_range
                )
            },
        )?;
        ensure(
            self.guard_doppler + self.train_doppler <= MAX_HALF_EXTENT,
            || {
                format!(
                    "CFAR guard_doppler + train_doppler = {} is out of range; allowed: 1..={MAX_HALF_EXTENT}",
                    self.guard_doppler + self.train_doppler
                )
            },
        )?;
        Ok(())
    }

    /// Training-cell count of an interior cell (no range edge).
    pub fn full_count(&self) -> usize {
        let (ro, ri) = (self.outer_rows(), self.inner_rows());
        ro * self.outer_cols() - ri * self.inner_cols()
    }

    /// Smallest Doppler-bin count the window fits in without overlapping itself.
    pub fn min_doppler_bins(&self) -> usize {
        self.outer_cols()
    }

    fn outer_rows(&self) -> usize {
        2 * (self.guard_range + self.train_range) + 1
    }
    fn inner_rows(&self) -> usize {
        2 * self.guard_range + 1
    }
    fn outer_cols(&self) -> usize {
        2 * (self.guard_doppler + self.train_doppler) + 1
    }
    fn inner_cols(&self) -> usize {
        2 * self.guard_doppler + 1
    }
}

fn check_n_pfa(n: usize, pfa: f64) -> Result<()> {
    ensure(n >= 1, || {
        format!("CFAR training count {n} is out of range; allowed: >= 1")
    })?;
    ensure(pfa.is_finite() && pfa > 0.0 && pfa < 1.0, || {
        format!("CFAR pfa {pfa} is out of range; allowed: 0 < pfa < 1")
    })
}

fn check_n_alpha(n: usize, alpha: f64) -> Result<()> {
    ensure(n >= 1, || {
        format!("CFAR training count {n} is out of range; allowed: >= 1")
    })?;
    ensure(alpha.is_finite() && alpha >= 0.0, || {
        format!("CFAR threshold multiplier {alpha} is out of range; allowed: finite, >= 0")
    })
}

fn check_k(n: usize, k: usize) -> Result<()> {
    ensure(k >= 1 && k <= n, || {
        format!("OS-CFAR rank k {k} is out of range; allowed: 1..={n}")
    })
}

/// CA-CFAR threshold multiplier for square-law detection of exponential noise:
/// alpha = N (Pfa^(−1/N) − 1) (Richards 2nd ed. §6.5.3), applied to the *mean* of the
/// N training cells. Errors unless n ≥ 1 and 0 < pfa < 1.
pub fn ca_alpha(n: usize, pfa: f64) -> Result<f64> {
    check_n_pfa(n, pfa)?;
    let nf = n as f64;
    Ok(nf * (-pfa.ln() / nf).exp_m1())
}

/// CA-CFAR false-alarm probability for a multiplier on the mean: Pfa = (1 + alpha/N)^(−N).
pub fn ca_pfa(n: usize, alpha: f64) -> Result<f64> {
    check_n_alpha(n, alpha)?;
    let nf = n as f64;
    Ok((-nf * (alpha / nf).ln_1p()).exp())
}

/// OS-CFAR false-alarm probability when the threshold is alpha times the k-th smallest of
/// N exponential training cells (Rohling 1983; Richards §6.5.6):
/// Pfa = ∏_{i=0}^{k−1} (N−i)/(N−i+alpha).
pub fn os_pfa(n: usize, k: usize, alpha: f64) -> Result<f64> {
    check_n_alpha(n, alpha)?;
    check_k(n, k)?;
    Ok(os_log_pfa(n, k, alpha).exp())
}

fn os_log_pfa(n: usize, k: usize, alpha: f64) -> f64 {
    (0..k)
        .map(|i| {
            let m = (n - i) as f64;
            -(alpha / m).ln_1p()
        })
        .sum()
}

/// OS-CFAR multiplier for a design Pfa: solves `os_pfa(n, k, alpha) = pfa` by Newton's
/// method on log Pfa (a convex, decreasing function of alpha, so Newton from alpha = 0
/// climbs monotonically to the root). Multiplier applies to the k-th smallest cell.
pub fn os_alpha(n: usize, k: usize, pfa: f64) -> Result<f64> {
    check_n_pfa(n, pfa)?;
    check_k(n, k)?;
    let target = pfa.ln();
    let mut alpha = 0.0f64;
    for _ in 0..200 {
        let g = os_log_pfa(n, k, alpha) - target;
        let dg: f64 = -(0..k).map(|i| 1.0 / ((n - i) as f64 + alpha)).sum::<f64>();
        let step = g / dg;
        alpha -= step;
        if step.abs() <= 1e-13 * alpha.abs().max(1.0) {
            break;
        }
    }
    Ok(alpha)
}

/// OS rank k for `n` training cells: round(rank_fraction · n) clamped to 1..=n.
pub fn os_rank(n: usize, rank_fraction: f64) -> usize {
    ((rank_fraction * n as f64).round() as usize).clamp(1, n.max(1))
}

/// One CFAR detection.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct CfarHit {
    /// Range cell (row of the map).
    pub range: usize,
    /// Doppler bin (column of the map, in the map's own order).
    pub doppler: usize,
    /// Power of the cell under test (linear, map units).
    pub power: f32,
    /// CFAR estimate of the mean noise power (linear, map units). CA: mean of the
    /// training cells. OS: the k-th smallest training cell divided by its expectation
    /// factor Σ_{j=0}^{k−1} 1/(N−j), so it also estimates the mean for exponential noise.
    pub noise: f32,
    /// 10·log10(power / noise), dB.
    pub snr_db: f32,
}

/// Multipliers for one training-cell count.
#[derive(Debug, Clone, Copy)]
struct CountEntry {
    /// Training-cell count.
    n: usize,
    /// OS rank (1-based); unused for CA.
    k: usize,
    /// Factor turning the raw statistic (CA: mean, OS: k-th smallest) into the mean-noise
    /// estimate reported in [`CfarHit::noise`].
    to_noise: f64,
    /// Threshold = `mult` × noise estimate.
    mult: f64,
}

/// A CFAR planned once for its parameters and run on many maps.
///
/// Buffers (summed-area table, OS scratch, per-row tables) are kept between calls; after
/// the first call on a map shape, [`CfarPlan::detect`] allocates only when `hits` grows.
#[derive(Debug, Clone)]
pub struct CfarPlan {
    params: CfarParams,
    /// Entry per training count, index = count; `None` until first needed.
    by_count: Vec<Option<CountEntry>>,
    /// Shape the per-row tables were built for.
    shape: (usize, usize),
    /// Count entry per range row for that shape.
    row_entry: Vec<CountEntry>,
    /// Summed-area table (f64) of the Doppler-wrapped map, (rows+1) × (ext cols+1).
    sat: Vec<f64>,
    /// OS: the map with its Doppler axis wrapped onto both sides, rows × (cols + 2 hd).
    wrapped: Vec<f32>,
    /// Row prefix sums of the wrapped rows (CA).
    prefix: Vec<f64>,
    /// CA: per cell of a row, 1 when it passes the quick test.
    near: Vec<u8>,
    /// OS selection scratch: order keys of the training cells (`stats::total_key`).
    scratch: Vec<i32>,
}

impl CfarPlan {
    /// Checks `params` and computes the multipliers for the
    /// interior count and every range-edge count a map of ≥ 2(g_r+t_r)+1 rows can have.
    pub fn new(params: CfarParams) -> Result<Self> {
        params.check()?;
        let hr = (params.guard_range + params.train_range) as isize;
        let full = params.full_count();
        let mut plan = CfarPlan {
            params,
            by_count: vec![None; full + 1],
            shape: (0, 0),
            row_entry: Vec::new(),
            sat: Vec::new(),
            wrapped: Vec::new(),
            prefix: Vec::new(),
            near: Vec::new(),
            scratch: Vec::with_capacity(full),
        };
        // Edge counts of a tall map: rows r = 0..=hr at the top (the bottom is symmetric).
        for r in 0..=(hr as usize) {
            let c = plan.count_for_row(r, 2 * hr as usize + 1);
            plan.entry(c)?;
        }
        Ok(plan)
    }

    /// The parameters this plan was made for.
    pub fn params(&self) -> &CfarParams {
        &self.params
    }

    /// Threshold multiplier on the *raw statistic* for `count` training cells
    /// (CA: on the mean; OS: on the k-th smallest), as in [`ca_alpha`] / [`os_alpha`].
    pub fn alpha_for_count(&mut self, count: usize) -> Result<f64> {
        let e = self.entry(count)?;
        Ok(e.mult * e.to_noise)
    }

    fn entry(&mut self, count: usize) -> Result<CountEntry> {
        ensure(count >= 1 && count < self.by_count.len(), || {
            format!(
                "CFAR training count {count} is out of range; allowed: 1..={}",
                self.by_count.len() - 1
            )
        })?;
        if let Some(e) = self.by_count[count] {
            return Ok(e);
        }
        let e = match self.params.kind {
            CfarKind::CellAveraging => CountEntry {
                n: count,
                k: 0,
                to_noise: 1.0,
                mult: ca_alpha(count, self.params.pfa)?,
            },
            CfarKind::OrderedStatistic { rank_fraction } => {
                let k = os_rank(count, rank_fraction);
                let alpha = os_alpha(count, k, self.params.pfa)?;
                // E[X_(k)] = mu Σ_{j=0}^{k−1} 1/(N−j) for N exponentials of mean mu
                // (order statistics of the exponential, e.g. David & Nagaraja,
                // *Order Statistics*, 3rd ed., 2003, §3.1; from memory).
                let h: f64 = (0..k).map(|j| 1.0 / (count - j) as f64).sum();
                CountEntry {
                    n: count,
                    k,
                    to_noise: 1.0 / h,
                    mult: alpha * h,
                }
            }
        };
        self.by_count[count] = Some(e);
        Ok(e)
    }

    /// Training count of row `r` in a map with `rows` rows (Doppler wraps, so only the
    /// range edges reduce it).
    fn count_for_row(&self, r: usize, rows: usize) -> usize {
        let p = &self.params;
        let span = |h: usize| {
            let lo = r.saturating_sub(h);
            let hi = (r + h).min(rows - 1);
            hi - lo + 1
        };
        span(p.guard_range + p.train_range) * p.outer_cols() - span(p.guard_range) * p.inner_cols()
    }

    fn prepare_shape(&mut self, rows: usize, cols: usize) -> Result<()> {
        if self.shape == (rows, cols) {
            return Ok(());
        }
        self.row_entry.clear();
        for r in 0..rows {
            let c = self.count_for_row(r, rows);
            let e = self.entry(c)?;
            self.row_entry.push(e);
        }
        self.shape = (rows, cols);
        Ok(())
    }

    /// Runs the CFAR on `power` (linear power, rows = range cells, columns = Doppler bins,
    /// Doppler circular) and appends the detections to `hits` (cleared first), in row-major
    /// order. A cell is a hit when `power > mult · noise` with `noise > 0`; cells whose
    /// noise estimate is zero (e.g. an all-zero region) are never reported, nor are
    /// non-finite cells.
    ///
    /// `allowed`, when given, must have the map's shape: only cells marked `true` are
    /// tested (all cells still serve as training cells for their neighbours).
    ///
    /// Errors when the map has fewer Doppler bins than the window width
    /// ([`CfarParams::min_doppler_bins`]), has no rows, or the mask's shape differs.
    pub fn detect(
        &mut self,
        power: ArrayView2<f32>,
        allowed: Option<ArrayView2<bool>>,
        hits: &mut Vec<CfarHit>,
    ) -> Result<()> {
        hits.clear();
        let (rows, cols) = power.dim();
        ensure(rows >= 1, || {
            "CFAR map has 0 range rows; allowed: >= 1".to_string()
        })?;
        let need = self.params.min_doppler_bins();
        ensure(cols >= need, || {
            format!(
                "CFAR map has {cols} Doppler bins; allowed: >= {need} (window width 2(guard_doppler+train_doppler)+1)"
            )
        })?;
        if let Some(m) = &allowed {
            ensure(m.dim() == (rows, cols), || {
                format!(
                    "CFAR mask shape {:?} differs from the map's {:?}; allowed: equal shapes",
                    m.dim(),
                    (rows, cols)
                )
            })?;
        }
        self.prepare_shape(rows, cols)?;
        match self.params.kind {
            CfarKind::CellAveraging => self.detect_ca(power, allowed, hits),
            CfarKind::OrderedStatistic { .. } => self.detect_os(power, allowed, hits),
        }
        Ok(())
    }

    fn detect_ca(
        &mut self,
        power: ArrayView2<f32>,
        allowed: Option<ArrayView2<bool>>,
        hits: &mut Vec<CfarHit>,
    ) {
        let (rows, cols) = power.dim();
        let p = self.params;
        let hr = p.guard_range + p.train_range;
        let hd = p.guard_doppler + p.train_doppler;
        let gr = p.guard_range;
        let gd = p.guard_doppler;
        // Extended column j <-> Doppler bin (j - hd) mod cols (cols >= 2 hd + 1, checked).
        let ext = cols + 2 * hd;
        let w = ext + 1;
        // Every entry is written below but the first row and the first column (zeros).
        self.sat.resize((rows + 1) * w, 0.0);
        self.sat[..w].fill(0.0);
        // Row prefix sums first, four rows side by side (each sum is a chain of dependent
        // additions; independent rows overlap), then each table row is the one above plus
        // its prefix: the same additions, in the same order, as one running pass.
        // The wrapped rows with non-finite cells read as 0 (they add nothing to a sum).
        wrap_rows(power, hd, &mut self.wrapped);
        for v in self.wrapped.iter_mut() {
            *v = if v.is_finite() { *v } else { 0.0 };
        }
        self.prefix.resize(rows * ext, 0.0);
        for (src, dst) in self
            .wrapped
            .chunks(4 * ext)
            .zip(self.prefix.chunks_mut(4 * ext))
        {
            if src.len() == 4 * ext {
                let mut runs = [0.0f64; 4];
                for j in 0..ext {
                    for (g, run) in runs.iter_mut().enumerate() {
                        *run += src[g * ext + j] as f64;
                        dst[g * ext + j] = *run;
                    }
                }
            } else {
                for (s_row, d_row) in src.chunks(ext).zip(dst.chunks_mut(ext)) {
                    let mut run = 0.0f64;
                    for (d, &v) in d_row.iter_mut().zip(s_row) {
                        run += v as f64;
                        *d = run;
                    }
                }
            }
        }
        for r in 0..rows {
            let (above, here) = self.sat.split_at_mut((r + 1) * w);
            let above = &above[r * w + 1..(r + 1) * w];
            here[0] = 0.0;
            let here = &mut here[1..w];
            let pre = &self.prefix[r * ext..(r + 1) * ext];
            for ((h, &a), &p) in here.iter_mut().zip(above).zip(pre) {
                *h = a + p;
            }
        }
        let sat = &self.sat;
        for (r, row) in power.rows().into_iter().enumerate() {
            let e = self.row_entry[r];
            let (oa, ob) = (r.saturating_sub(hr), (r + hr).min(rows - 1));
            let (ia, ib) = (r.saturating_sub(gr), (r + gr).min(rows - 1));
            let mask = allowed.as_ref().map(|m| m.row(r));
            let n = e.n as f64;
            // Sum over rows a..=b, extended columns c0..=c1, is
            // bot[c1 + 1] - top[c1 + 1] - bot[c0] + top[c0] (top = table row a, bot = b + 1).
            let (to, bo) = (&sat[oa * w..(oa + 1) * w], &sat[(ob + 1) * w..(ob + 2) * w]);
            let (ti, bi) = (&sat[ia * w..(ia + 1) * w], &sat[(ib + 1) * w..(ib + 2) * w]);
            // Each term as a slice of `cols` entries, so the loop indexes without checks.
            let (oc, ic) = (2 * hd + 1, hd + gd + 1);
            let (bo1, to1, bo0, to0) = (
                &bo[oc..oc + cols],
                &to[oc..oc + cols],
                &bo[..cols],
                &to[..cols],
            );
            let ii = hd - gd;
            let (bi1, ti1, bi0, ti0) = (
                &bi[ic..ic + cols],
                &ti[ic..ic + cols],
                &bi[ii..ii + cols],
                &ti[ii..ii + cols],
            );
            let cuts = &self.wrapped[r * ext + hd..r * ext + hd + cols];
            // Most cells are far below their threshold: tested first without the division,
            // with a margin (1e-9) far above the rounding of either side (a few 1e-16), in
            // one pass over the row that vectorises; only cells near or above it take the
            // exact test. (Non-finite cells read 0 here, and are never hits.)
            let sum_at = |c: usize| {
                let outer = bo1[c] - to1[c] - bo0[c] + to0[c];
                let inner = bi1[c] - ti1[c] - bi0[c] + ti0[c];
                outer - inner
            };
            self.near.resize(cols, 0);
            let near = &mut self.near;
            crate::wide::with_avx(|| {
                // every term zipped in (indexing would keep the loop from vectorising)
                let terms = near
                    .iter_mut()
                    .zip(cuts)
                    .zip(bo1.iter().zip(to1).zip(bo0.iter().zip(to0)))
                    .zip(bi1.iter().zip(ti1).zip(bi0.iter().zip(ti0)));
                for (((f, &cut), ((&b1, &t1), (&b0, &t0))), ((&c1, &u1), (&c0, &u0))) in terms {
                    let outer = b1 - t1 - b0 + t0;
                    let inner = c1 - u1 - c0 + u0;
                    // (a NaN sum, from an overflow, takes the exact test like the original)
                    let far_below = (cut as f64) * n < e.mult * (outer - inner) * (1.0 - 1e-9);
                    *f = u8::from(!far_below);
                }
            });
            for (c, &f) in self.near.iter().enumerate() {
                if f == 0 {
                    continue;
                }
                if let Some(m) = &mask {
                    if !m[c] {
                        continue;
                    }
                }
                let cut = row[c];
                if !cut.is_finite() {
                    continue;
                }
                push_if_hit(hits, r, c, cut, sum_at(c) / n, e.mult);
            }
        }
    }

    fn detect_os(
        &mut self,
        power: ArrayView2<f32>,
        allowed: Option<ArrayView2<bool>>,
        hits: &mut Vec<CfarHit>,
    ) {
        let (rows, cols) = power.dim();
        let p = self.params;
        let (hr, hd) = (
            p.guard_range + p.train_range,
            p.guard_doppler + p.train_doppler,
        );
        let (gr, gd) = (p.guard_range, p.guard_doppler);
        // The map with its Doppler axis wrapped hd bins onto each side: extended column
        // j <-> bin (j - hd) mod cols, so every window is a contiguous run of a row.
        let ext = cols + 2 * hd;
        wrap_rows(power, hd, &mut self.wrapped);
        let wrapped = &self.wrapped;
        // The training cells of CUT (r, c) on row rr, as up to two runs (their order does
        // not matter to a rank): the whole window beyond the guard rows, the two flanks on
        // them.
        let runs = |r: usize, c: usize, rr: usize| -> [&[f32]; 2] {
            let row = &wrapped[rr * ext..(rr + 1) * ext];
            if rr.abs_diff(r) <= gr {
                [&row[c..c + hd - gd], &row[c + hd + gd + 1..c + 2 * hd + 1]]
            } else {
                [&row[c..c + 2 * hd + 1], &[]]
            }
        };
        let keys = &mut self.scratch;
        for r in 0..rows {
            let e = self.row_entry[r];
            let (oa, ob) = (r.saturating_sub(hr), (r + hr).min(rows - 1));
            let mask = allowed.as_ref().map(|m| m.row(r));
            let mask_row = mask.as_ref().and_then(|m| m.to_slice());
            let prow = &wrapped[r * ext + hd..r * ext + hd + cols];
            for c in 0..cols {
                match (mask_row, &mask) {
                    (Some(m), _) if !m[c] => continue,
                    (None, Some(m)) if !m[c] => continue,
                    _ => {}
                }
                let cut = prow[c];
                if !cut.is_finite() {
                    continue;
                }
                // First only counted: the cell is a hit only if the k-th smallest x has
                // (x to_noise) mult < cut, and then at least k cells are not above that
                // (the product is monotone in x); most cells fail here, unsorted.
                // Counted in f32 against a threshold a little above the exact one
                // (x to_noise mult < cut in f64 implies x < t): this count is never below
                // the exact count, so a cell it rejects the exact count rejects too.
                let t = (cut as f64 / (e.to_noise * e.mult) * (1.0 + 1e-5)) as f32;
                // Stopped as soon as more than N - k cells are not below: then fewer than
                // k can be, whatever the rest hold.
                let (mut below, mut seen) = (0usize, 0usize);
                let most_above = e.n - e.k;
                for rr in oa..=ob {
                    for run in runs(r, c, rr) {
                        below += run.iter().fold(0u32, |a, &x| {
                            // NaN counts as below, as in the exact count
                            let not_below = x >= t;
                            a + u32::from(!not_below)
                        }) as usize;
                        seen += run.len();
                    }
                    if seen - below > most_above {
                        break;
                    }
                }
                if below < e.k {
                    continue;
                }
                keys.clear();
                for rr in oa..=ob {
                    for run in runs(r, c, rr) {
                        keys.extend(run.iter().map(|&x| total_key(x)));
                    }
                }
                let kth = select_key(keys, e.k - 1);
                let noise = kth as f64 * e.to_noise;
                push_if_hit(hits, r, c, cut, noise, e.mult);
            }
        }
    }
}

/// The map's rows with the Doppler axis wrapped `hd` bins onto each side, into `out`:
/// extended column j of a row is bin (j - hd) mod cols.
fn wrap_rows(power: ArrayView2<f32>, hd: usize, out: &mut Vec<f32>) {
    let cols = power.ncols();
    out.clear();
    for row in power.rows() {
        match row.as_slice() {
            Some(r) => {
                out.extend_from_slice(&r[cols - hd..]);
                out.extend_from_slice(r);
                out.extend_from_slice(&r[..hd]);
            }
            None => {
                let wrapped = (cols - hd..cols).chain(0..cols).chain(0..hd);
                out.extend(wrapped.map(|c| row[c]));
            }
        }
    }
}

#[inline]
fn push_if_hit(hits: &mut Vec<CfarHit>, r: usize, c: usize, cut: f32, noise: f64, mult: f64) {
    if noise > 0.0 && noise.is_finite() && cut as f64 > mult * noise {
        hits.push(CfarHit {
            range: r,
            doppler: c,
            power: cut,
            noise: noise as f32,
            snr_db: (10.0 * (cut as f64 / noise).log10()) as f32,
        });
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::Array2;

    // Check values computed from Richards, *Fundamentals of Radar
    // Signal Processing*, 2nd ed. (2014), §6.5.3: alpha = N (Pfa^(-1/N) - 1).
    // Hand arithmetic for the first: 1e-3^(-1/20) = exp(6.907755/20) = exp(0.345388)
    // = 1.412538; alpha = 20 * 0.412538 = 8.2508.
    #[test]
    fn ca_alpha_check_values() {
        for &(n, pfa, want) in &[
            (20usize, 1e-3, 8.2508),
            (20, 1e-4, 11.698),
            (16, 1e-6, 21.942),
            (32, 1e-6, 17.278),
        ] {
            let a = ca_alpha(n, pfa).unwrap();
            assert!((a - want).abs() < 5e-4, "N {n} Pfa {pfa}: {a} vs {want}");
            // Round trip through Pfa = (1 + alpha/N)^-N.
            let back = ca_pfa(n, a).unwrap();
            assert!((back / pfa - 1.0).abs() < 1e-9, "{back} vs {pfa}");
        }
    }

    // Rohling (1983) / Richards 2nd ed. §6.5.6 worked example: N 20, k 15,
    // alpha 6.857 gives Pfa ≈ 1e-3.
    #[test]
    fn os_worked_example() {
        let pfa = os_pfa(20, 15, 6.857).unwrap();
        assert!((pfa / 1e-3 - 1.0).abs() < 0.01, "{pfa}");
        let a = os_alpha(20, 15, 1e-3).unwrap();
        assert!((a - 6.857).abs() < 0.01, "{a}");
        assert!((os_pfa(20, 15, a).unwrap() / 1e-3 - 1.0).abs() < 1e-9);
        // k = N = 1: Pfa = 1/(1+alpha), the same as CA with one cell.
        let a1 = os_alpha(1, 1, 0.01).unwrap();
        assert!((a1 - 99.0).abs() < 1e-9, "{a1}");
        assert!((a1 - ca_alpha(1, 0.01).unwrap()).abs() < 1e-9);
    }

    #[test]
    fn kind_from_str() {
        assert_eq!("ca".parse::<CfarKind>().unwrap(), CfarKind::CellAveraging);
        assert_eq!(
            "OS".parse::<CfarKind>().unwrap(),
            CfarKind::OrderedStatistic {
                rank_fraction: 0.75
            }
        );
        let e = "goca".parse::<CfarKind>().unwrap_err().to_string();
        assert!(
            e.contains("\"goca\"") && e.contains("\"ca\", \"os\""),
            "{e}"
        );
    }

    #[test]
    fn params_check_names_value_and_range() {
        let d = CfarParams::default();
        assert!(d.check().is_ok());
        assert_eq!(d.full_count(), 11 * 21 - 3 * 5);
        let cases: Vec<(CfarParams, &str)> = vec![
            (
                CfarParams { pfa: 0.0, ..d },
                "pfa 0 is out of range; allowed: 0 < pfa <= 0.5",
            ),
            (CfarParams { pfa: 0.7, ..d }, "pfa 0.7"),
            (CfarParams { pfa: f64::NAN, ..d }, "pfa NaN"),
            (
                CfarParams {
                    train_doppler: 0,
                    ..d
                },
                "train_doppler 0 is out of range; allowed: 1..=256",
            ),
            (
                CfarParams {
                    train_range: 300,
                    ..d
                },
                "guard_range + train_range = 301",
            ),
            (
                CfarParams {
                    kind: CfarKind::OrderedStatistic { rank_fraction: 1.5 },
                    ..d
                },
                "rank_fraction 1.5 is out of range; allowed: 0 < rank_fraction <= 1",
            ),
        ];
        for (p, want) in cases {
            let e = p.check().unwrap_err().to_string();
            assert!(e.contains(want), "{e} / {want}");
            assert!(CfarPlan::new(p).is_err());
        }
        assert!(CfarParams::new(CfarKind::CellAveraging, 0, 1, 2, 3, 1e-3).is_ok());
        assert!(ca_alpha(0, 1e-3)
            .unwrap_err()
            .to_string()
            .contains("count 0"));
        assert!(ca_alpha(5, 1.0).is_err());
        assert!(os_alpha(5, 6, 1e-3)
            .unwrap_err()
            .to_string()
            .contains("1..=5"));
        assert!(ca_pfa(5, -1.0).is_err());
    }

    #[test]
    fn detect_rejects_bad_shapes() {
        let mut plan = CfarPlan::new(CfarParams::default()).unwrap();
        let mut hits = Vec::new();
        let narrow = Array2::<f32>::ones((10, 20)); // needs >= 21 Doppler bins
        let e = plan
            .detect(narrow.view(), None, &mut hits)
            .unwrap_err()
            .to_string();
        assert!(e.contains("20 Doppler bins") && e.contains(">= 21"), "{e}");
        let map = Array2::<f32>::ones((10, 32));
        let mask = Array2::<bool>::from_elem((10, 31), true);
        assert!(plan
            .detect(map.view(), Some(mask.view()), &mut hits)
            .is_err());
        let empty = Array2::<f32>::ones((0, 32));
        assert!(plan.detect(empty.view(), None, &mut hits).is_err());
    }

    // A single strong cell in a flat floor: only it is detected, with the right noise and
    // SNR; a 1-row map works (count = 2 * train_doppler * ... on the CUT row only); the mask
    // hides the cell.
    #[test]
    fn single_target_known_answer() {
        for kind in [
            CfarKind::CellAveraging,
            CfarKind::OrderedStatistic {
                rank_fraction: 0.75,
            },
        ] {
            let params = CfarParams {
                kind,
                ..CfarParams::default()
            };
            let mut plan = CfarPlan::new(params).unwrap();
            let mut map = Array2::<f32>::from_elem((20, 64), 1.0);
            map[[0, 5]] = 1000.0; // at the range edge
            map[[10, 63]] = 1000.0; // at the Doppler wrap
            let mut hits = Vec::new();
            plan.detect(map.view(), None, &mut hits).unwrap();
            assert_eq!(hits.len(), 2, "{kind:?} {hits:?}");
            assert_eq!((hits[0].range, hits[0].doppler), (0, 5));
            assert_eq!((hits[1].range, hits[1].doppler), (10, 63));
            // CA: noise = mean of ones (the other target is outside both windows) = 1.
            // OS: k-th smallest = 1, divided by H_k/... gives 1 / sum 1/(N-j) scaled back:
            // noise = X_(k) / H with H = sum_{j<k} 1/(N-j); for CA it is exactly 1.
            if kind == CfarKind::CellAveraging {
                assert!((hits[1].noise - 1.0).abs() < 1e-6);
                assert!((hits[1].snr_db - 30.0).abs() < 1e-4);
            } else {
                let n = params.full_count();
                let k = os_rank(n, 0.75);
                let h: f64 = (0..k).map(|j| 1.0 / (n - j) as f64).sum();
                assert!(
                    (hits[1].noise as f64 - 1.0 / h).abs() < 1e-5,
                    "{:?}",
                    hits[1]
                );
            }
            let mut mask = Array2::<bool>::from_elem((20, 64), true);
            mask[[10, 63]] = false;
            plan.detect(map.view(), Some(mask.view()), &mut hits)
                .unwrap();
            assert_eq!(hits.len(), 1);
            // One range row: training cells are only the CUT row's 2 * train_doppler.
            let row = Array2::from_shape_fn((1, 64), |(_, c)| if c == 30 { 1e4f32 } else { 1.0 });
            plan.detect(row.view(), None, &mut hits).unwrap();
            assert_eq!(hits.len(), 1);
            assert_eq!(hits[0].doppler, 30);
        }
    }

    // The edge multiplier: at row 0 of a tall map the CA window holds
    // (1 + 5) * 21 - (1 + 1) * 5 = 116 cells, so alpha must be ca_alpha(116, pfa).
    #[test]
    fn edge_alpha_uses_actual_count() {
        let mut plan = CfarPlan::new(CfarParams::default()).unwrap();
        assert_eq!(plan.count_for_row(0, 100), 116);
        assert_eq!(plan.count_for_row(50, 100), 216);
        assert_eq!(plan.count_for_row(99, 100), 116);
        let a = plan.alpha_for_count(116).unwrap();
        assert!((a - ca_alpha(116, 1e-6).unwrap()).abs() < 1e-12);
        assert!(plan.alpha_for_count(217).is_err());
    }
}
