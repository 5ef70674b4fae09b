//! The model's domain: per feature, the range of values it was trained on, and the
//! shrinking of a prediction's confidence for a track whose features lie outside it.
//!
//! A forest extrapolates flat: a track whose features lie beyond everything it saw (a radar
//! unlike the training radars, a target unlike the training targets) still lands in some
//! leaf and gets that leaf's confident vote. A bounding-box applicability domain (the
//! simplest of the domain checks of Jaworska, Nikolova-Jeliazkova & Aldenberg, ATLA 33,
//! 2005, from memory) marks such tracks: each feature's domain is the central 99 % of its
//! training values (the 0.5 % and 99.5 % quantiles) widened on both sides by `WIDEN` of
//! that width, and every feature outside its domain moves the probabilities a step towards
//! uniform: `p' = (1 - s) p + s / K`, `s = 1 - (1 - step)^n` for `n` features outside. The
//! label (the arg max) does not change; the confidence falls, and under `--min-confidence`
//! the track is `unknown`.

use super::dataset::Dataset;
use crate::error::{Error, Result};
use crate::stats::quantile_sorted;
use serde::{Deserialize, Serialize};

/// Lower and upper training quantiles of each feature's domain.
pub const DOMAIN_QUANTILES: (f64, f64) = (0.005, 0.995);

/// Share of the quantile range added on each side.
pub const WIDEN: f64 = 0.1;

/// Default step towards uniform per feature outside its domain.
pub const DEFAULT_STEP: f64 = 0.05;

/// Per-feature domain bounds and the shrink step.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Domain {
    /// `[low, high]` of each feature, the model's feature order.
    pub bounds: Vec<[f64; 2]>,
    /// Step towards uniform per feature outside its bounds, 0..1 (0 = no check).
    pub step: f64,
}

impl Domain {
    /// The domain of `rows` of `data` (at least one row), with shrink `step`.
    pub fn fit(data: &Dataset, rows: &[usize], step: f64) -> Result<Domain> {
        if rows.is_empty() {
            return Err(Error::Invalid("feature domain of no rows".into()));
        }
        if !(0.0..=1.0).contains(&step) {
            return Err(Error::Invalid(format!(
                "domain step {step}: expected 0 to 1"
            )));
        }
        let mut col = Vec::with_capacity(rows.len());
        let bounds = (0..data.features.ncols())
            .map(|j| {
                col.clear();
                col.extend(rows.iter().map(|&i| data.features[[i, j]]));
                col.sort_unstable_by(f64::total_cmp);
                let lo = quantile_sorted(&col, DOMAIN_QUANTILES.0);
                let hi = quantile_sorted(&col, DOMAIN_QUANTILES.1);
                let w = WIDEN * (hi - lo);
                [lo - w, hi + w]
            })
            .collect();
        Ok(Domain { bounds, step })
    }

    /// Checks the bounds against `n_features` (finite, ordered) and the step.
    pub fn check(&self, n_features: usize) -> std::result::Result<(), String> {
        if self.bounds.len() != n_features {
            return Err(format!(
                "model's domain has {} features, its forest {n_features}",
                self.bounds.len()
            ));
        }
        if !(0.0..=1.0).contains(&self.step) {
            return Err(format!(
                "model's domain step {}: expected 0 to 1",
                self.step
            ));
        }
        for (j, b) in self.bounds.iter().enumerate() {
            if !(b[0].is_finite() && b[1].is_finite() && b[0] <= b[1]) {
                return Err(format!(
                    "model's domain of feature {j} is [{}, {}]: expected finite, low <= high",
                    b[0], b[1]
                ));
            }
        }
        Ok(())
    }

    /// How many features of `x` lie outside their domain (a non-finite value counts).
    pub fn outside(&self, x: &[f64]) -> usize {
        x.iter()
            .zip(&self.bounds)
            .filter(|(v, b)| !(**v >= b[0] && **v <= b[1]))
            .count()
    }

    /// Moves `p` towards uniform for the features of `x` outside their domain; returns
    /// how many there were.
    pub fn shrink(&self, x: &[f64], p: &mut [f64]) -> usize {
        let n = self.outside(x);
        if n > 0 && self.step > 0.0 && !p.is_empty() {
            let s = 1.0 - (1.0 - self.step).powi(n as i32);
            let u = 1.0 / p.len() as f64;
            for v in p.iter_mut() {
                *v = (1.0 - s) * *v + s * u;
            }
        }
        n
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// numpy.quantile([1, 2, 3, 4], 0.25) = 1.75 and (..., 0.995) = 3.985 (linear method,
    /// hand arithmetic: pos = q (n - 1)).
    #[test]
    fn quantiles_match_numpy_linear() {
        let v = [1.0, 2.0, 3.0, 4.0];
        assert!((quantile_sorted(&v, 0.25) - 1.75).abs() < 1e-12);
        assert!((quantile_sorted(&v, 0.995) - 3.985).abs() < 1e-12);
        assert_eq!(quantile_sorted(&[5.0], 0.5), 5.0);
    }

    /// Rows 0..=100 of one feature: domain [0.5 - 9.9, 99.5 + 9.9]; a value of 150 is one
    /// feature outside: with step 0.2, p = (0.9, 0.1) moves to 0.8 p + 0.2 / 2 = (0.82,
    /// 0.18); two outside, s = 1 - 0.8^2 = 0.36: (0.756, 0.244).
    #[test]
    fn fits_bounds_and_shrinks_towards_uniform() {
        let rows: Vec<Vec<f64>> = (0..=100).map(|i| vec![i as f64, -(i as f64)]).collect();
        let labels: Vec<String> = (0..=100).map(|i| format!("c{}", i % 2)).collect();
        let groups: Vec<String> = (0..=100).map(|i| format!("g{i}")).collect();
        let data =
            Dataset::from_rows(&rows, &labels, &groups, vec!["a".into(), "b".into()]).unwrap();
        let all: Vec<usize> = (0..=100).collect();
        let d = Domain::fit(&data, &all, 0.2).unwrap();
        assert!((d.bounds[0][0] - (0.5 - 9.9)).abs() < 1e-9);
        assert!((d.bounds[0][1] - (99.5 + 9.9)).abs() < 1e-9);
        d.check(2).unwrap();
        let mut p = [0.9, 0.1];
        assert_eq!(d.shrink(&[50.0, -50.0], &mut p), 0);
        assert_eq!(p, [0.9, 0.1]);
        assert_eq!(d.shrink(&[150.0, -50.0], &mut p), 1);
        assert!((p[0] - 0.82).abs() < 1e-12 && (p[1] - 0.18).abs() < 1e-12);
        let mut q = [0.9, 0.1];
        assert_eq!(d.shrink(&[150.0, f64::NAN], &mut q), 2);
        assert!((q[0] - 0.756).abs() < 1e-12);
        assert!(d.check(3).is_err());
        assert!(Domain::fit(&data, &all, 1.5).is_err());
    }
}
