//! Tables of scores: the confusion matrix (rows true, columns predicted), per-class
//! precision/recall/F1, calibration figures and feature importances.

use super::Table;
use crate::model::{FalseAlarms, RadarCrossValidation, Scores};

/// The confusion matrix as a table.
pub fn confusion_table(s: &Scores) -> Table {
    let mut head = vec!["true \\ predicted".to_string()];
    head.extend(s.classes.iter().cloned());
    let mut t = Table::new(head);
    for (c, row) in s.classes.iter().zip(&s.confusion) {
        let mut r = vec![c.clone()];
        r.extend(row.iter().map(|n| n.to_string()));
        t.row(r);
    }
    t
}

/// Per-class precision, recall, F1 and support.
pub fn per_class_table(s: &Scores) -> Table {
    let mut t = Table::new(["class", "precision", "recall", "f1", "support"]);
    for c in &s.classes {
        if let Some(x) = s.per_class.get(c) {
            t.row([
                c.clone(),
                format!("{:.3}", x.precision),
                format!("{:.3}", x.recall),
                format!("{:.3}", x.f1),
                x.support.to_string(),
            ]);
        }
    }
    t
}

/// Accuracy and calibration in one paragraph.
pub fn summary(s: &Scores) -> String {
    let f = |x: Option<f64>| x.map(|v| format!("{v:.4}")).unwrap_or_else(|| "-".into());
    format!(
        "accuracy {:.4}  macro-F1 {:.4}  Brier {}  ECE (expected calibration error, 10 bins) {}\n",
        s.accuracy,
        s.macro_avg.f1,
        f(s.brier),
        f(s.ece)
    )
}

/// The whole score report as text.
pub fn render(s: &Scores) -> String {
    format!(
        "{}\n{}\n{}",
        confusion_table(s).render(),
        per_class_table(s).render(),
        summary(s)
    )
}

/// The false-alarm report in a few lines: false tracks per minute (all, and by the class
/// they were labelled) and false rotorcraft tracks per hour.
pub fn render_false_alarms(f: &FalseAlarms) -> String {
    let by: Vec<String> = f
        .false_tracks_per_minute_by_class
        .iter()
        .map(|(c, r)| format!("{c} {r:.2}"))
        .collect();
    format!(
        "false alarms over {} fully labelled recording{} ({:.1} min): {} false track{} = {:.2} per minute{}\n\
         false rotorcraft: {} = {:.1} per hour (tracks labelled rotorcraft that match no rotorcraft)\n",
        f.recordings,
        if f.recordings == 1 { "" } else { "s" },
        f.duration_s / 60.0,
        f.false_tracks,
        if f.false_tracks == 1 { "" } else { "s" },
        f.false_tracks_per_minute,
        if by.is_empty() {
            String::new()
        } else {
            format!(" (labelled: {})", by.join(", "))
        },
        f.false_rotorcraft,
        f.false_rotorcraft_per_hour,
    )
}

/// Feature importances, largest first (at most `top`).
pub fn importance_table(imp: &[(String, f64)], top: usize) -> Table {
    let mut t = Table::new(["feature", "importance"]);
    for (n, v) in imp.iter().take(top) {
        t.row([n.clone(), format!("{v:.4}")]);
    }
    t
}

/// Leave-one-radar-out scores, one line per held-out radar: tracks, accuracy, rotorcraft
/// recall, ECE (expected calibration error, 10 bins).
pub fn radar_table(cv: &RadarCrossValidation) -> Table {
    scores_by_radar("held-out radar", "tracks", &cv.per_radar)
}

/// One line per radar of `per_radar`: samples (named `count`), accuracy, rotorcraft
/// recall, ECE.
fn scores_by_radar(
    first: &str,
    count: &str,
    per_radar: &std::collections::BTreeMap<String, Scores>,
) -> Table {
    let mut t = Table::new([first, count, "accuracy", "rotorcraft recall", "ECE"]);
    for (radar, s) in per_radar {
        let n: usize = s.confusion.iter().flatten().sum();
        t.row([
            radar.clone(),
            n.to_string(),
            format!("{:.3}", s.accuracy),
            s.per_class
                .get("rotorcraft")
                .filter(|c| c.support > 0)
                .map(|c| format!("{:.3}", c.recall))
                .unwrap_or_else(|| "-".into()),
            s.ece
                .map(|e| format!("{e:.3}"))
                .unwrap_or_else(|| "-".into()),
        ]);
    }
    t
}

/// "s" for a count other than one.
pub(crate) fn plural(n: usize) -> &'static str {
    if n == 1 {
        ""
    } else {
        "s"
    }
}

/// Per-radar target scores of `evaluate`: targets, accuracy, rotorcraft recall, ECE.
pub fn per_radar_table(per_radar: &std::collections::BTreeMap<String, Scores>) -> Table {
    scores_by_radar("radar", "targets", per_radar)
}
