//! The report of `rotorsift train`: what training measured and made (its JSON is the
//! documented `train --format json`), and its text form.

use serde::Serialize;

use super::scores::{importance_table, plural, radar_table, render};
use super::Format;
use crate::model::{RadarCrossValidation, Scores};

/// What `train` measured and made.
#[derive(Debug, Clone, Serialize)]
pub struct TrainReport {
    /// The classes learnt, sorted by name.
    pub classes: Vec<String>,
    /// Tracks the held-out score's forest was fitted on,
    pub train_tracks: usize,
    /// and tracks it was scored on.
    pub test_tracks: usize,
    /// Recordings fitted on,
    pub train_recordings: usize,
    /// and the recordings held out.
    pub test_recordings: Vec<String>,
    /// Tracks left out for matching no annotation.
    pub tracks_unmatched: usize,
    /// Track-level scores on the held-out recordings.
    pub heldout: Scores,
    /// Feature importances (mean decrease in impurity), largest first.
    pub importances: Vec<(String, f64)>,
    /// Out-of-bag accuracy of the forest fitted on everything.
    pub oob_accuracy: f64,
    /// Track-level scores of a grouped k-fold cross-validation (every recording held out
    /// once), when asked for.
    pub cross_validated: Option<Scores>,
    /// Folds of that cross-validation: `--folds`, capped to the labelled recordings.
    pub folds: usize,
    /// Leave-one-radar-out cross-validation (with two radars or more).
    pub radar_cross_validated: Option<RadarCrossValidation>,
    /// Notes for stderr (e.g. folds capped to the recordings).
    #[serde(skip)]
    pub notes: Vec<String>,
}

/// The table report of `train`.
pub fn render_train(rep: &TrainReport, folds: usize, model: &std::path::Path) -> String {
    let mut s = format!(
        "trained on {} track{} ({} recording{}); held out {} track{} of {} recording{}; {} unmatched track{} left out\n\nheld-out confusion matrix (rows true, columns predicted):\n{}\n",
        rep.train_tracks,
        plural(rep.train_tracks),
        rep.train_recordings,
        plural(rep.train_recordings),
        rep.test_tracks,
        plural(rep.test_tracks),
        rep.test_recordings.len(),
        plural(rep.test_recordings.len()),
        rep.tracks_unmatched,
        plural(rep.tracks_unmatched),
        render(&rep.heldout)
    );
    if let Some(cv) = &rep.cross_validated {
        s += &format!(
            "grouped {folds}-fold cross-validation by recording (every recording held out once):\n{}\n",
            render(cv)
        );
    }
    if let Some(cv) = &rep.radar_cross_validated {
        s += &format!(
            "leave-one-radar-out cross-validation (each radar predicted by a model of the others: what to expect on an unseen radar):\n{}\n{}\n",
            render(&cv.pooled),
            radar_table(cv).render()
        );
    }
    s += &format!(
        "feature importances (top 12):\n{}\nmodel written to {}\n",
        importance_table(&rep.importances, 12).render(),
        model.display()
    );
    s
}

/// The report as `--format` asks: the text tables, or JSON (pretty, one trailing newline).
pub fn to_text(
    rep: &TrainReport,
    format: Format,
    model: &std::path::Path,
) -> crate::Result<String> {
    Ok(match format {
        Format::Json => {
            serde_json::to_string_pretty(rep).map_err(|e| crate::Error::Invalid(e.to_string()))?
                + "\n"
        }
        Format::Table => render_train(rep, rep.folds, model),
    })
}
