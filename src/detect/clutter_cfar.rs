//! Clutter-map CFAR (Nitzberg, "Clutter map CFAR analysis", IEEE Trans. AES-22(4), 1986;
//! Richards, *Fundamentals of Radar Signal Processing*, 2nd ed., §6.5.7): each cell of a
//! power map is compared with its own history, not with its neighbours. The history is a
//! recursive average over CPIs, `mu <- gamma mu + (1 - gamma) x` (Richards Eq. 6.173), and a
//! cell is a hit when `x > alpha mu` with `mu` taken *before* the update, so a steady
//! scintillating building is held to its own residue level however strong it is, while a
//! return that arrives stands out.
//!
//! For exponentially distributed (square-law) cell powers with independent CPIs the false
//! alarm probability is `Pfa = prod_{k>=0} 1 / (1 + alpha (1 - gamma) gamma^k)` (Nitzberg
//! 1986; Richards Eq. 6.177: the moment generating function of the weighted sum of past
//! exponentials), which [`clutter_map_pfa`] evaluates and [`clutter_map_alpha`] inverts.

use ndarray::ArrayView2;

use crate::error::{ensure, Result};

/// Settings of the clutter-map CFAR.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct ClutterMapParams {
    /// Design false-alarm probability per cell and CPI.
    pub pfa: f64,
    /// Feedback coefficient gamma of the recursive average, in (0, 1) (7/8 is common
    /// practice: Nathanson 1991 via Richards §6.5.7, from memory).
    pub gamma: f64,
    /// CPIs averaged before the map tests anything.
    pub warmup_cpis: usize,
}

impl Default for ClutterMapParams {
    fn default() -> Self {
        ClutterMapParams {
            pfa: 1e-6,
            gamma: 0.875,
            warmup_cpis: 4,
        }
    }
}

impl ClutterMapParams {
    /// Validates the settings; the error names the value and the allowed range.
    pub fn check(&self) -> Result<()> {
        ensure(self.pfa > 0.0 && self.pfa < 0.5, || {
            format!(
                "clutter-map pfa {} is out of range; allowed: 0 < pfa < 0.5",
                self.pfa
            )
        })?;
        ensure(self.gamma > 0.0 && self.gamma < 1.0, || {
            format!(
                "clutter-map gamma {} is out of range; allowed: 0 < gamma < 1",
                self.gamma
            )
        })?;
        ensure(self.warmup_cpis <= 1000, || {
            format!(
                "clutter-map warm-up {} CPIs is out of range; allowed: 0 ..= 1000",
                self.warmup_cpis
            )
        })
    }
}

/// Nitzberg's false-alarm probability of the recursive clutter map with threshold
/// multiplier `alpha` and feedback `gamma` (the product truncated where its factors are 1
/// to double precision).
pub fn clutter_map_pfa(alpha: f64, gamma: f64) -> f64 {
    let mut log_p = 0.0f64;
    let mut w = 1.0 - gamma;
    for _ in 0..100_000 {
        let term = alpha * w;
        if term < 1e-17 {
            break;
        }
        log_p -= term.ln_1p();
        w *= gamma;
    }
    log_p.exp()
}

/// The threshold multiplier `alpha` giving `pfa` at feedback `gamma` (bisection on
/// [`clutter_map_pfa`], which falls monotonically in alpha).
pub fn clutter_map_alpha(pfa: f64, gamma: f64) -> f64 {
    let (mut lo, mut hi) = (0.0f64, 1.0f64);
    while clutter_map_pfa(hi, gamma) > pfa && hi < 1e12 {
        hi *= 2.0;
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if clutter_map_pfa(mid, gamma) > pfa {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// One hit of the clutter map.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ClutterMapHit {
    /// Range cell.
    pub range: usize,
    /// Doppler bin.
    pub doppler: usize,
    /// Power over the cell's history (before the update), linear.
    pub ratio: f32,
}

/// A recursive clutter map over the tested cells of a range-Doppler power map.
#[derive(Debug, Clone)]
pub struct ClutterMapCfar {
    params: ClutterMapParams,
    alpha: f32,
    /// Tested Doppler bins (e.g. the canceller's notch).
    bins: Vec<usize>,
    /// History, `cells x bins.len()`, row-major.
    mean: Vec<f32>,
    cells: usize,
    updates: usize,
}

impl ClutterMapCfar {
    /// A map of `cells` range cells over the Doppler `bins` it tests.
    pub fn new(params: ClutterMapParams, cells: usize, bins: Vec<usize>) -> Result<Self> {
        params.check()?;
        let alpha = clutter_map_alpha(params.pfa, params.gamma) as f32;
        Ok(ClutterMapCfar {
            params,
            alpha,
            mean: vec![0.0; cells * bins.len()],
            bins,
            cells,
            updates: 0,
        })
    }

    /// The threshold multiplier alpha.
    pub fn alpha(&self) -> f32 {
        self.alpha
    }

    /// The history of range cell `k`, Doppler bin index `j` of the tested bins.
    pub fn history(&self, k: usize, j: usize) -> f32 {
        self.mean[k * self.bins.len() + j]
    }

    /// Tests the map `power` (rows range, columns Doppler, linear power) against the
    /// history, appends the hits of cells where `allowed(range, doppler)`, then updates the
    /// history with `power`. Nothing is tested during the warm-up.
    pub fn detect_and_update(
        &mut self,
        power: ArrayView2<f32>,
        allowed: impl Fn(usize, usize) -> bool,
        hits: &mut Vec<ClutterMapHit>,
    ) {
        let nb = self.bins.len();
        let cells = self.cells.min(power.nrows());
        let first = self.updates == 0;
        let testing = self.updates >= self.params.warmup_cpis.max(1);
        let g = self.params.gamma as f32;
        // the plain mean until 1 / (1 - gamma) maps are in, then the recursive average
        let w = (1.0 / (self.updates as f32 + 1.0)).max(1.0 - g);
        for k in 0..cells {
            let row = power.row(k);
            for (j, &d) in self.bins.iter().enumerate() {
                let x = row[d];
                let m = &mut self.mean[k * nb + j];
                if testing && x > self.alpha * *m && allowed(k, d) {
                    hits.push(ClutterMapHit {
                        range: k,
                        doppler: d,
                        ratio: x / m.max(f32::MIN_POSITIVE),
                    });
                }
                *m = if first { x } else { *m + (x - *m) * w };
            }
        }
        self.updates += 1;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::Array2;
    use rand::{Rng, SeedableRng};

    #[test]
    fn pfa_limits() {
        // gamma -> 0 keeps only the last CPI: Pfa = 1 / (1 + alpha) (the ratio of two
        // exponentials); gamma -> 1 knows the mean exactly: Pfa = exp(-alpha).
        assert!((clutter_map_pfa(9.0, 1e-9) - 0.1).abs() < 1e-6);
        let p = clutter_map_pfa(13.8155, 0.9999);
        assert!((p / 1e-6 - 1.0).abs() < 0.01, "{p}");
        // the inverse is the inverse
        let a = clutter_map_alpha(1e-4, 0.875);
        assert!((clutter_map_pfa(a, 0.875) / 1e-4 - 1.0).abs() < 1e-6);
    }

    #[test]
    fn false_alarm_rate_matches_nitzberg() {
        // 2000 cells of unit exponential noise over 400 CPIs, gamma 7/8, design Pfa 1e-3:
        // about 2000 x 396 x 1e-3 = 792 hits (after 4 warm-up CPIs; the plain-mean start
        // makes the first CPIs a little quieter). Poisson 99.9 % interval about +-90.
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
        let params = ClutterMapParams {
            pfa: 1e-3,
            gamma: 0.875,
            warmup_cpis: 4,
        };
        let mut map = ClutterMapCfar::new(params, 2000, vec![0]).unwrap();
        let mut hits = Vec::new();
        for _ in 0..400 {
            let p = Array2::from_shape_fn((2000, 1), |_| -(1.0f32 - rng.gen::<f32>()).ln());
            map.detect_and_update(p.view(), |_, _| true, &mut hits);
        }
        let expect = 2000.0 * 396.0 * 1e-3;
        assert!(
            (hits.len() as f64 - expect).abs() < 110.0,
            "hits {} expected {expect}",
            hits.len()
        );
    }

    #[test]
    fn steady_strong_cell_is_quiet_and_an_arrival_is_seen() {
        // A cell of mean power 1e6 (a scintillating building's residue) stays quiet; a
        // return of 100x a quiet cell's level arriving at CPI 50 is a hit at once.
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(12);
        let mut map = ClutterMapCfar::new(ClutterMapParams::default(), 3, vec![0, 1]).unwrap();
        let mut hits = Vec::new();
        for cpi in 0..100 {
            let p = Array2::from_shape_fn((3, 2), |(k, _)| {
                let e = -(1.0f32 - rng.gen::<f32>()).ln();
                match k {
                    0 => 1e6 * (0.9 + 0.2 * rng.gen::<f32>()),
                    2 if cpi >= 50 => 100.0 + e,
                    _ => e,
                }
            });
            map.detect_and_update(p.view(), |_, _| true, &mut hits);
        }
        assert!(hits.iter().all(|h| h.range == 2), "{hits:?}");
        assert!(hits.iter().any(|h| h.range == 2));
    }
}
