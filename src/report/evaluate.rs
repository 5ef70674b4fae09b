//! The report of `rotorsift evaluate`: target- and track-level scores, per radar, false
//! alarms and the model's own promise (its JSON is the documented
//! `evaluate --format json`), and its text form.

use std::collections::BTreeMap;

use serde::Serialize;

use super::scores::{per_radar_table, render, render_false_alarms};
use super::Format;
use crate::model::{FalseAlarms, Scores};

/// `evaluate`'s result (the documented `evaluate --format json`), plus track-level scores
/// and the false-alarm report.
#[derive(Debug, Clone, Serialize)]
pub struct Evaluation {
    /// Target-level scores (each annotation one sample).
    #[serde(flatten)]
    pub scores: Scores,
    /// Annotations scored,
    pub targets: usize,
    /// of which matched by at least one track.
    pub targets_detected: usize,
    /// Tracks matching no annotation.
    pub tracks_unmatched: usize,
    /// Scores over tracks (each track one sample): the matched ones, and the false tracks
    /// with their background class.
    pub track_level: Option<Scores>,
    /// False tracks, over the recordings where a track matching no annotation is known to
    /// be background; `None` when there is none.
    pub false_alarms: Option<FalseAlarms>,
    /// Target-level scores per radar (`radar_key`), with their calibration (ECE).
    pub per_radar: BTreeMap<String, Scores>,
    /// The model file's own cross-validated figures (what it promises), when stored.
    pub model_expectation: Option<ModelExpectation>,
}

/// The model's own cross-validated figures, printed by `evaluate` beside its result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ModelExpectation {
    /// Track accuracy of the leave-one-radar-out cross-validation (an unseen radar).
    pub leave_one_radar_out_accuracy: f64,
    /// Its expected calibration error.
    pub leave_one_radar_out_ece: Option<f64>,
    /// Radars the model was trained on.
    pub radars: usize,
    /// Track accuracy of the grouped k-fold by recording (a training radar).
    pub grouped_kfold_accuracy: Option<f64>,
    /// Its expected calibration error.
    pub grouped_kfold_ece: Option<f64>,
}

/// The table report of `evaluate` (ECE: expected calibration error, 10 bins).
pub fn render_evaluation(ev: &Evaluation, model_name: &str) -> String {
    let mut s = format!(
        "model {}: {} target{}, {} detected, {} unmatched track{}\n\ntargets (rows true, columns predicted):\n{}",
        model_name,
        ev.targets,
        if ev.targets == 1 { "" } else { "s" },
        ev.targets_detected,
        ev.tracks_unmatched,
        if ev.tracks_unmatched == 1 { "" } else { "s" },
        if ev.targets == 0 {
            "(no labelled targets)\n".to_string()
        } else {
            render(&ev.scores)
        }
    );
    if ev.per_radar.len() > 1 || (ev.targets > 0 && !ev.per_radar.is_empty()) {
        s += &format!(
            "\nper radar (ECE: expected calibration error):\n{}",
            per_radar_table(&ev.per_radar).render()
        );
    }
    if let Some(f) = &ev.false_alarms {
        s += &format!("\n{}", render_false_alarms(f));
    }
    if let Some(x) = &ev.model_expectation {
        let opt = |v: Option<f64>| v.map(|v| format!("{v:.3}")).unwrap_or_else(|| "-".into());
        s += &format!(
            "\nwhat the model promises (its own cross-validation, tracks): on an unseen radar accuracy {:.3}, ECE {} (leave-one-radar-out over {} radars); on a training radar accuracy {}, ECE {} (grouped k-fold by recording)\n",
            x.leave_one_radar_out_accuracy,
            opt(x.leave_one_radar_out_ece),
            x.radars,
            opt(x.grouped_kfold_accuracy),
            opt(x.grouped_kfold_ece)
        );
    }
    s
}

/// The report as `--format` asks: the text tables, or JSON (pretty, one trailing newline).
pub fn to_text(ev: &Evaluation, format: Format, model_name: &str) -> crate::Result<String> {
    Ok(match format {
        Format::Json => {
            serde_json::to_string_pretty(ev).map_err(|e| crate::Error::Invalid(e.to_string()))?
                + "\n"
        }
        Format::Table => render_evaluation(ev, model_name),
    })
}
