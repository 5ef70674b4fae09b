//! Scores of predictions against true classes: the confusion matrix, accuracy,
//! per-class precision / recall / F1 / support with scikit-learn's definitions
//! (`precision_recall_fscore_support`, `zero_division=0`: a ratio with a zero
//! denominator is 0), macro and support-weighted averages, the multiclass Brier score
//! and the expected calibration error. [`Scores`] is shaped for the `evaluate --format
//! json` contract.

use crate::error::{ensure, Error, Result};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// Counts of (true, predicted) pairs: `counts[t][p]`, rows true, columns predicted, both
/// in the order of `classes`.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct ConfusionMatrix {
    /// Class names, the order of rows and columns.
    pub classes: Vec<String>,
    /// `counts[t][p]`: samples of true class t predicted as p.
    pub counts: Vec<Vec<usize>>,
}

/// Precision, recall, F1 and support of one class.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ClassScores {
    /// TP / (TP + FP), 0 when nothing was predicted as the class.
    pub precision: f64,
    /// TP / (TP + FN), 0 when the class has no samples.
    pub recall: f64,
    /// 2 P R / (P + R), 0 when P + R = 0.
    pub f1: f64,
    /// Number of true samples of the class.
    pub support: usize,
}

fn ratio(a: f64, b: f64) -> f64 {
    if b == 0.0 {
        0.0
    } else {
        a / b
    }
}

impl ConfusionMatrix {
    /// Counts `y_true` against `y_pred` (class indices into `classes`).
    pub fn new(classes: Vec<String>, y_true: &[usize], y_pred: &[usize]) -> Result<Self> {
        let k = classes.len();
        ensure(k >= 1, || "confusion matrix: no classes".to_string())?;
        ensure(y_true.len() == y_pred.len(), || {
            format!(
                "confusion matrix: {} true labels but {} predictions",
                y_true.len(),
                y_pred.len()
            )
        })?;
        let mut counts = vec![vec![0usize; k]; k];
        for (i, (&t, &p)) in y_true.iter().zip(y_pred).enumerate() {
            ensure(t < k && p < k, || {
                format!("confusion matrix: sample {i} has classes ({t}, {p}); allowed 0..{k}")
            })?;
            counts[t][p] += 1;
        }
        Ok(ConfusionMatrix { classes, counts })
    }

    /// Total number of samples.
    pub fn total(&self) -> usize {
        self.counts.iter().flatten().sum()
    }

    /// Fraction on the diagonal (0 for no samples).
    pub fn accuracy(&self) -> f64 {
        let d: usize = (0..self.classes.len()).map(|i| self.counts[i][i]).sum();
        ratio(d as f64, self.total() as f64)
    }

    /// Precision, recall, F1 and support per class, in class order.
    pub fn per_class(&self) -> Vec<ClassScores> {
        let k = self.classes.len();
        (0..k)
            .map(|c| {
                let tp = self.counts[c][c] as f64;
                let predicted: usize = (0..k).map(|t| self.counts[t][c]).sum();
                let support: usize = self.counts[c].iter().sum();
                let precision = ratio(tp, predicted as f64);
                let recall = ratio(tp, support as f64);
                let f1 = ratio(2.0 * precision * recall, precision + recall);
                ClassScores {
                    precision,
                    recall,
                    f1,
                    support,
                }
            })
            .collect()
    }

    /// Unweighted mean over classes of precision, recall and F1 (scikit-learn
    /// `average='macro'`), support = total.
    pub fn macro_avg(&self) -> ClassScores {
        self.average(|_| 1.0)
    }

    /// Support-weighted mean (scikit-learn `average='weighted'`), support = total.
    pub fn weighted_avg(&self) -> ClassScores {
        self.average(|s| s.support as f64)
    }

    fn average(&self, w: impl Fn(&ClassScores) -> f64) -> ClassScores {
        let pc = self.per_class();
        let tw: f64 = pc.iter().map(&w).sum();
        let m = |f: fn(&ClassScores) -> f64| ratio(pc.iter().map(|s| w(s) * f(s)).sum(), tw);
        ClassScores {
            precision: m(|s| s.precision),
            recall: m(|s| s.recall),
            f1: m(|s| s.f1),
            support: self.total(),
        }
    }
}

fn check_probs(probs: &[Vec<f64>], y_true: &[usize]) -> Result<()> {
    ensure(probs.len() == y_true.len() && !probs.is_empty(), || {
        format!(
            "scores: {} probability rows for {} labels (need equal, >= 1)",
            probs.len(),
            y_true.len()
        )
    })?;
    let k = probs[0].len();
    for (i, (p, &t)) in probs.iter().zip(y_true).enumerate() {
        ensure(p.len() == k && t < k, || {
            format!(
                "scores: sample {i} has {} probabilities and class {t}; expected {k} and 0..{k}",
                p.len()
            )
        })?;
        ensure(p.iter().all(|v| v.is_finite()), || {
            format!("scores: sample {i} has a non-finite probability")
        })?;
    }
    Ok(())
}

/// Multiclass Brier score (Brier, "Verification of forecasts expressed in terms of
/// probability", Monthly Weather Review 78(1), 1950): mean over samples of
/// `sum_k (p_k - y_k)^2`, y one-hot. Range [0, 2]; for two classes it is twice the
/// binary Brier score of the positive class.
pub fn multiclass_brier(probs: &[Vec<f64>], y_true: &[usize]) -> Result<f64> {
    check_probs(probs, y_true)?;
    let s: f64 = probs
        .iter()
        .zip(y_true)
        .map(|(p, &t)| {
            p.iter()
                .enumerate()
                .map(|(k, &v)| {
                    let d = v - if k == t { 1.0 } else { 0.0 };
                    d * d
                })
                .sum::<f64>()
        })
        .sum();
    Ok(s / probs.len() as f64)
}

/// Expected calibration error of the top label (Guo et al., "On Calibration of Modern
/// Neural Networks", ICML 2017, Eq. 3): `sum_m |B_m|/n * |acc(B_m) - conf(B_m)|` over
/// `bins` equal-width bins `((m-1)/M, m/M]` of the top-label confidence (bin edges
/// computed as `m / M`; a confidence of exactly 0 joins the first bin). The top label is
/// the first class of largest probability. `bins` >= 1.
pub fn expected_calibration_error(
    probs: &[Vec<f64>],
    y_true: &[usize],
    bins: usize,
) -> Result<f64> {
    check_probs(probs, y_true)?;
    ensure(bins >= 1, || format!("ece: bins = {bins}; allowed >= 1"))?;
    let mut n = vec![0usize; bins];
    let mut conf = vec![0.0; bins];
    let mut hit = vec![0.0; bins];
    for (p, &t) in probs.iter().zip(y_true) {
        let top = super::forest::argmax(p);
        let c = p[top];
        // bin m (1-based) holds (m-1)/M < c <= m/M
        let mut b = 0;
        while b + 1 < bins && c > (b + 1) as f64 / bins as f64 {
            b += 1;
        }
        n[b] += 1;
        conf[b] += c;
        hit[b] += if top == t { 1.0 } else { 0.0 };
    }
    let total = probs.len() as f64;
    Ok((0..bins)
        .filter(|&b| n[b] > 0)
        .map(|b| (n[b] as f64 / total) * (hit[b] / n[b] as f64 - conf[b] / n[b] as f64).abs())
        .sum())
}

/// The scores of `evaluate --format json` (docs/output-format.md): `classes`, `confusion`,
/// `accuracy`, `per_class`, plus averages, `brier` and `ece` (null without
/// probabilities).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Scores {
    /// Class names, the order of `confusion`.
    pub classes: Vec<String>,
    /// Rows true class, columns predicted class.
    pub confusion: Vec<Vec<usize>>,
    /// Fraction correct.
    pub accuracy: f64,
    /// Scores per class name.
    pub per_class: BTreeMap<String, ClassScores>,
    /// Macro average.
    pub macro_avg: ClassScores,
    /// Support-weighted average.
    pub weighted_avg: ClassScores,
    /// Multiclass Brier score, see [`multiclass_brier`].
    pub brier: Option<f64>,
    /// Expected calibration error, 10 bins, see [`expected_calibration_error`].
    pub ece: Option<f64>,
}

impl Scores {
    /// Scores predictions `y_pred` against `y_true`; with `probs` (one row of class
    /// probabilities per sample, class order of `classes`) also Brier and ECE.
    pub fn compute(
        classes: Vec<String>,
        y_true: &[usize],
        y_pred: &[usize],
        probs: Option<&[Vec<f64>]>,
    ) -> Result<Scores> {
        let cm = ConfusionMatrix::new(classes, y_true, y_pred)?;
        let (brier, ece) = match probs {
            Some(p) => {
                if p.first().is_some_and(|r| r.len() != cm.classes.len()) {
                    return Err(Error::Invalid(format!(
                        "scores: {} probabilities per sample for {} classes",
                        p[0].len(),
                        cm.classes.len()
                    )));
                }
                (
                    Some(multiclass_brier(p, y_true)?),
                    Some(expected_calibration_error(p, y_true, 10)?),
                )
            }
            None => (None, None),
        };
        Ok(Scores {
            per_class: cm.classes.iter().cloned().zip(cm.per_class()).collect(),
            accuracy: cm.accuracy(),
            macro_avg: cm.macro_avg(),
            weighted_avg: cm.weighted_avg(),
            brier,
            ece,
            classes: cm.classes,
            confusion: cm.counts,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Hand arithmetic: true (0,0,1,1,2), pred (0,1,1,1,0): class 0 P=1/2 R=1/2,
    /// class 1 P=2/3 R=1, class 2 never predicted P=0 R=0 F1=0 (zero_division=0).
    #[test]
    fn known_answer() {
        let cm = ConfusionMatrix::new(
            vec!["a".into(), "b".into(), "c".into()],
            &[0, 0, 1, 1, 2],
            &[0, 1, 1, 1, 0],
        )
        .unwrap();
        assert_eq!(cm.counts, vec![vec![1, 1, 0], vec![0, 2, 0], vec![1, 0, 0]]);
        assert!((cm.accuracy() - 0.6).abs() < 1e-15);
        let pc = cm.per_class();
        assert!((pc[1].precision - 2.0 / 3.0).abs() < 1e-15);
        assert!((pc[1].f1 - 0.8).abs() < 1e-15);
        assert_eq!(pc[2].f1, 0.0);
        // one sample, p = (0.5, 0.3, 0.2), true 0: (0.5)^2 + 0.09 + 0.04 = 0.38
        assert!((multiclass_brier(&[vec![0.5, 0.3, 0.2]], &[0]).unwrap() - 0.38).abs() < 1e-15);
        // confidence 0.5 correct: |1 - 0.5| = 0.5
        let e = expected_calibration_error(&[vec![0.5, 0.3, 0.2]], &[0], 10).unwrap();
        assert!((e - 0.5).abs() < 1e-15);
        assert!(ConfusionMatrix::new(vec!["a".into()], &[0], &[1]).is_err());
    }
}

/// The false-alarm report of `evaluate`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FalseAlarms {
    /// Recordings counted: those whose labels are complete (every recording with
    /// `--unlabelled-as`).
    pub recordings: usize,
    /// Their total duration, s.
    pub duration_s: f64,
    /// Tracks in them that match no annotation.
    pub false_tracks: usize,
    /// False tracks per minute.
    pub false_tracks_per_minute: f64,
    /// False tracks per minute, by the class they were labelled.
    pub false_tracks_per_minute_by_class: BTreeMap<String, f64>,
    /// Tracks in them labelled rotorcraft that match no rotorcraft annotation.
    pub false_rotorcraft: usize,
    /// False rotorcraft tracks per hour of recording.
    pub false_rotorcraft_per_hour: f64,
}

/// Scores of a leave-one-radar-out cross-validation: every radar's tracks predicted by a
/// model fitted on the other radars' (domain included), pooled, and per radar.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RadarCrossValidation {
    /// Pooled track-level scores.
    pub pooled: Scores,
    /// Per radar (`pipeline::classify::radar_key`): its tracks' scores when it was held out.
    pub per_radar: BTreeMap<String, Scores>,
}
