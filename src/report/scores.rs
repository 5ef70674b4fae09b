//! Tables of scores: the confusion matrix (rows true, columns predicted), per-class
//! precision/recall/F1, calibration figures and feature importances.

use super::Table;
use crate::model::Scores;

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
        "accuracy {:.4}  macro-F1 {:.4}  Brier {}  ECE {}\n",
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

/// Feature importances, largest first (at most `top`).
pub fn importance_table(imp: &[(String, f64)], top: usize) -> Table {
    let mut t = Table::new(["feature", "importance"]);
    for (n, v) in imp.iter().take(top) {
        t.row([n.clone(), format!("{v:.4}")]);
    }
    t
}
