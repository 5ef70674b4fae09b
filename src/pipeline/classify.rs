//! Training, classification and evaluation on analysed recordings: builds the labelled
//! dataset with the one match rule, holds out whole recordings, fits the forest, labels
//! tracks with calibrated probabilities, and scores targets as docs/output-format.md says.

use std::collections::BTreeMap;

use serde::Serialize;

use super::{match_tracks, PipelineSettings, RecordingAnalysis};
use crate::error::{Error, Result};
use crate::features::names;
use crate::model::{Dataset, FalseAlarms, Forest, ForestParams, ModelFile, Scores};

/// The label of tracks whose confidence is under `--min-confidence`.
pub const UNKNOWN: &str = "unknown";

/// The class of a track that matches no annotation in a recording whose labels are complete
/// (`rotorsift:labels_complete`): background.
pub const BACKGROUND_CLASS: &str = "clutter";

/// The class whose false tracks the false-alarm report counts per hour.
pub const ALARM_CLASS: &str = "rotorcraft";

/// The label an unmatched track of `meta` gets: `unlabelled_as` when given, else
/// [`BACKGROUND_CLASS`] when the recording's labels are complete, else none (the track is
/// left out and counted).
pub fn unmatched_label<'a>(
    meta: &crate::recording::RecordingMeta,
    unlabelled_as: Option<&'a str>,
) -> Option<&'a str> {
    unlabelled_as.or(meta.labels_complete.then_some(BACKGROUND_CLASS))
}

/// Labelled feature rows of a set of analyses.
#[derive(Debug, Clone, Default)]
pub struct LabelledRows {
    pub rows: Vec<Vec<f64>>,
    pub labels: Vec<String>,
    pub groups: Vec<String>,
    /// Tracks that matched no annotation (left out unless `unlabelled_as`).
    pub unmatched: usize,
}

/// Rows of every track that matches an annotation, and of the unmatched ones that
/// [`unmatched_label`] names (`unlabelled_as`, or background in recordings whose labels
/// are complete).
pub fn labelled_rows(analyses: &[RecordingAnalysis], unlabelled_as: Option<&str>) -> LabelledRows {
    let mut out = LabelledRows::default();
    for a in analyses {
        let spans: Vec<_> = a.tracks.iter().map(|t| t.span()).collect();
        let m = match_tracks(&spans, &a.meta.annotations, &a.meta.params);
        let background = unmatched_label(&a.meta, unlabelled_as);
        for (t, mi) in a.tracks.iter().zip(m) {
            let label = match (mi, background) {
                (Some(i), _) => a.meta.annotations[i].label.clone(),
                (None, Some(l)) => l.to_string(),
                (None, None) => {
                    out.unmatched += 1;
                    continue;
                }
            };
            out.rows.push(t.features.clone());
            out.labels.push(label);
            out.groups.push(a.meta.meta_path.display().to_string());
        }
    }
    out
}

/// Options of `train`.
#[derive(Debug, Clone)]
pub struct TrainOptions {
    pub holdout_fraction: f64,
    pub seed: u64,
    pub trees: usize,
    pub unlabelled_as: Option<String>,
    /// Also score a grouped k-fold cross-validation by recording (0 = off).
    pub folds: usize,
}

/// What `train` measured and made.
#[derive(Debug, Clone, Serialize)]
pub struct TrainReport {
    pub classes: Vec<String>,
    pub train_tracks: usize,
    pub test_tracks: usize,
    pub train_recordings: usize,
    pub test_recordings: Vec<String>,
    pub tracks_unmatched: usize,
    /// Track-level scores on the held-out recordings.
    pub heldout: Scores,
    /// Feature importances (mean decrease in impurity), largest first.
    pub importances: Vec<(String, f64)>,
    pub oob_accuracy: f64,
    /// Track-level scores of a grouped k-fold cross-validation (every recording held out
    /// once), when asked for.
    pub cross_validated: Option<Scores>,
}

/// Trains on labelled analyses: scores a forest fitted on the training recordings on the
/// held-out recordings, then fits the shipped model on all recordings (more data; the
/// held-out figures are stored in the model's training summary).
pub fn train(
    analyses: &[RecordingAnalysis],
    settings: &PipelineSettings,
    opts: &TrainOptions,
) -> Result<(ModelFile, TrainReport)> {
    let lr = labelled_rows(analyses, opts.unlabelled_as.as_deref());
    if lr.rows.is_empty() {
        return Err(Error::Invalid(
            "no track matches an annotation: nothing to train on (label the recordings, or use --unlabelled-as CLASS)".into(),
        ));
    }
    let data = Dataset::from_rows(&lr.rows, &lr.labels, &lr.groups, names::names())?;
    if data.n_classes() < 2 {
        return Err(Error::Invalid(format!(
            "the labelled tracks hold one class only ({}): a classifier needs at least two",
            data.class_names[0]
        )));
    }
    let params = ForestParams {
        trees: opts.trees,
        seed: opts.seed,
        ..ForestParams::default()
    };
    let (train_idx, test_idx) = data.grouped_holdout(opts.holdout_fraction, opts.seed)?;
    let held = Forest::fit(&data, &train_idx, &params)?;
    let mut y_true = Vec::new();
    let mut y_pred = Vec::new();
    let mut probs = Vec::new();
    for &i in &test_idx {
        let p = held.predict_proba(data.features.row(i).as_slice().unwrap_or(&[]))?;
        y_true.push(data.labels[i]);
        y_pred.push(crate::model::forest::argmax(&p));
        probs.push(p);
    }
    let heldout = Scores::compute(data.class_names.clone(), &y_true, &y_pred, Some(&probs))?;
    let cross_validated = if opts.folds >= 2 {
        let (mut t, mut p, mut pr) = (Vec::new(), Vec::new(), Vec::new());
        for (train_k, test_k) in data.grouped_kfold(opts.folds, opts.seed)? {
            let f = Forest::fit(&data, &train_k, &params)?;
            for &i in &test_k {
                let q = f.predict_proba(data.features.row(i).as_slice().unwrap_or(&[]))?;
                t.push(data.labels[i]);
                p.push(crate::model::forest::argmax(&q));
                pr.push(q);
            }
        }
        Some(Scores::compute(
            data.class_names.clone(),
            &t,
            &p,
            Some(&pr),
        )?)
    } else {
        None
    };
    let mut test_groups: Vec<String> = test_idx.iter().map(|&i| data.groups[i].clone()).collect();
    test_groups.dedup();
    let all: Vec<usize> = (0..data.len()).collect();
    let forest = Forest::fit(&data, &all, &params)?;
    let mut importances: Vec<(String, f64)> = data
        .feature_names
        .iter()
        .cloned()
        .zip(forest.feature_importances())
        .collect();
    importances.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0)));
    let n_groups = data.group_names().len();
    let report = TrainReport {
        classes: data.class_names.clone(),
        train_tracks: train_idx.len(),
        test_tracks: test_idx.len(),
        train_recordings: n_groups - test_groups.len(),
        test_recordings: test_groups,
        tracks_unmatched: lr.unmatched,
        heldout,
        importances: importances.clone(),
        oob_accuracy: forest.oob_accuracy(),
        cross_validated,
    };
    let training = serde_json::json!({
        "recordings": n_groups,
        "tracks": data.len(),
        "class_counts": data.class_names.iter().cloned().zip(data.class_counts(&all)).collect::<BTreeMap<_, _>>(),
        "holdout_fraction": opts.holdout_fraction,
        "seed": opts.seed,
        "heldout": &report.heldout,
        "heldout_recordings": &report.test_recordings,
        "cross_validated": &report.cross_validated,
        "folds": opts.folds,
        "forest": &params,
        "fitted_on": "all labelled recordings (held-out scores from a forest fitted without the held-out recordings)",
    });
    let settings_json =
        serde_json::to_value(settings).map_err(|e| Error::Invalid(e.to_string()))?;
    let model = ModelFile::new(
        forest,
        data.class_names.clone(),
        data.feature_names.clone(),
        settings_json,
        training,
    )?;
    Ok((model, report))
}

/// A loaded model with the pipeline settings its features need.
#[derive(Debug, Clone)]
pub struct Classifier {
    pub model: ModelFile,
    pub settings: PipelineSettings,
    /// "built-in" or the model's path.
    pub name: String,
}

/// The built-in model, trained on the labelled demo (`scripts/train-builtin.sh`).
pub const BUILTIN_MODEL: &str = include_str!("../../models/default.json");

impl Classifier {
    /// Wraps a model file, refusing one whose features do not match this build's.
    pub fn new(model: ModelFile, name: String) -> Result<Self> {
        let origin = std::path::PathBuf::from(&name);
        let settings: PipelineSettings = serde_json::from_value(model.feature_settings.clone())
            .map_err(|e| {
                Error::format(
                    &origin,
                    format!("model's feature settings do not fit this build: {e}"),
                )
            })?;
        // A model carrying a setting this build does not know (serde would silently drop
        // it, and the features would not be made as the model expects) is refused.
        let understood =
            serde_json::to_value(&settings).map_err(|e| Error::Invalid(e.to_string()))?;
        if let Some(key) = unknown_key(&model.feature_settings, &understood, "") {
            return Err(Error::format(
                &origin,
                format!("model's feature setting '{key}' is unknown to this build"),
            ));
        }
        model
            .check_compatible(&names::names(), &understood)
            .map_err(|e| Error::format(&origin, e.to_string()))?;
        Ok(Classifier {
            model,
            settings,
            name,
        })
    }
    /// Loads a model file, or the built-in model when `path` is `None`.
    pub fn load(path: Option<&std::path::Path>) -> Result<Self> {
        match path {
            Some(p) => Self::new(ModelFile::load(p)?, p.display().to_string()),
            None => Self::new(
                ModelFile::from_json_str(BUILTIN_MODEL, std::path::Path::new("built-in model"))?,
                "built-in".into(),
            ),
        }
    }
    /// Class probabilities of one feature vector (class order of the model).
    pub fn probabilities(&self, features: &[f64]) -> Result<Vec<f64>> {
        self.model.forest.predict_proba(features)
    }
    /// Label, confidence and probabilities; under `min_confidence` the label is `unknown`.
    pub fn predict(&self, features: &[f64], min_confidence: f64) -> Result<Prediction> {
        let p = self.probabilities(features)?;
        let best = crate::model::forest::argmax(&p);
        let confidence = p[best];
        let label = if confidence < min_confidence {
            UNKNOWN.to_string()
        } else {
            self.model.class_names[best].clone()
        };
        Ok(Prediction {
            label,
            confidence,
            probabilities: self.model.class_names.iter().cloned().zip(p).collect(),
        })
    }
}

/// The first key (dotted path) of `have` that `known` lacks; values are not compared.
fn unknown_key(have: &serde_json::Value, known: &serde_json::Value, path: &str) -> Option<String> {
    let (serde_json::Value::Object(h), serde_json::Value::Object(k)) = (have, known) else {
        return None;
    };
    h.iter().find_map(|(key, v)| {
        let p = if path.is_empty() {
            key.clone()
        } else {
            format!("{path}.{key}")
        };
        match k.get(key) {
            None => Some(p),
            Some(kv) => unknown_key(v, kv, &p),
        }
    })
}

/// One track's classification.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Prediction {
    pub label: String,
    pub confidence: f64,
    pub probabilities: BTreeMap<String, f64>,
}

/// `evaluate`'s result (the documented `evaluate --format json`), plus track-level scores
/// and the false-alarm report.
#[derive(Debug, Clone, Serialize)]
pub struct Evaluation {
    #[serde(flatten)]
    pub scores: Scores,
    pub targets: usize,
    pub targets_detected: usize,
    pub tracks_unmatched: usize,
    /// Scores over tracks (each track one sample): the matched ones, and the false tracks
    /// with their background class.
    pub track_level: Option<Scores>,
    /// False tracks, over the recordings where a track matching no annotation is known to
    /// be background; `None` when there is none.
    pub false_alarms: Option<FalseAlarms>,
}

/// Scores labelled recordings: each annotation is a target, detected when a track matches
/// it, predicted as the duration-weighted mean of its tracks' probabilities. A track that
/// matches no annotation, in a recording whose labels are complete (or in any with
/// `unlabelled_as`), is a false track: it enters the track-level scores with its
/// [`unmatched_label`] and the false-alarm report.
pub fn evaluate(
    analyses: &[RecordingAnalysis],
    clf: &Classifier,
    min_confidence: f64,
    unlabelled_as: Option<&str>,
) -> Result<Evaluation> {
    let model_classes = &clf.model.class_names;
    let mut classes: Vec<String> = model_classes.clone();
    for a in analyses {
        let names = a
            .meta
            .annotations
            .iter()
            .map(|ann| ann.label.as_str())
            .chain(unmatched_label(&a.meta, unlabelled_as));
        for name in names {
            if !classes.iter().any(|c| c == name) {
                classes.push(name.to_string());
            }
        }
    }
    if min_confidence > 0.0 && !classes.iter().any(|c| c == UNKNOWN) {
        classes.push(UNKNOWN.into());
    }
    classes.sort();
    let idx = |name: &str| classes.iter().position(|c| c == name).unwrap_or(0);
    let expand = |p: &[f64]| {
        let mut v = vec![0.0; classes.len()];
        for (c, x) in model_classes.iter().zip(p) {
            v[idx(c)] = *x;
        }
        v
    };
    let (mut targets, mut detected, mut unmatched) = (0usize, 0usize, 0usize);
    let (mut t_true, mut t_pred, mut t_prob) = (Vec::new(), Vec::new(), Vec::new());
    let (mut k_true, mut k_pred, mut k_prob) = (Vec::new(), Vec::new(), Vec::new());
    let mut alarms = FalseAlarmCount::default();
    for a in analyses {
        let spans: Vec<_> = a.tracks.iter().map(|t| t.span()).collect();
        let m = match_tracks(&spans, &a.meta.annotations, &a.meta.params);
        let mut per_ann: Vec<(f64, Vec<f64>)> =
            vec![(0.0, vec![0.0; model_classes.len()]); a.meta.annotations.len()];
        let background = unmatched_label(&a.meta, unlabelled_as);
        if background.is_some() {
            alarms.recordings += 1;
            alarms.duration_s += a.meta.duration_s();
        }
        for (t, mi) in a.tracks.iter().zip(&m) {
            let label_of = |p: &[f64]| {
                let best = crate::model::forest::argmax(p);
                if p[best] < min_confidence {
                    UNKNOWN.to_string()
                } else {
                    model_classes[best].clone()
                }
            };
            let Some(i) = *mi else {
                unmatched += 1;
                if let Some(bg) = background {
                    let p = clf.probabilities(&t.features)?;
                    let label = label_of(&p);
                    alarms.false_tracks += 1;
                    *alarms.by_class.entry(label.clone()).or_insert(0) += 1;
                    if label == ALARM_CLASS {
                        alarms.false_rotorcraft += 1;
                    }
                    k_true.push(idx(bg));
                    k_pred.push(idx(&label));
                    k_prob.push(expand(&p));
                }
                continue;
            };
            let p = clf.probabilities(&t.features)?;
            if background.is_some()
                && label_of(&p) == ALARM_CLASS
                && a.meta.annotations[i].label != ALARM_CLASS
            {
                alarms.false_rotorcraft += 1;
            }
            let w = (t.end_s - t.start_s).max(1e-6);
            per_ann[i].0 += w;
            for (acc, x) in per_ann[i].1.iter_mut().zip(&p) {
                *acc += w * x;
            }
            let pe = expand(&p);
            let best = crate::model::forest::argmax(&p);
            let label = if p[best] < min_confidence {
                UNKNOWN
            } else {
                model_classes[best].as_str()
            };
            k_true.push(idx(&a.meta.annotations[i].label));
            k_pred.push(idx(label));
            k_prob.push(pe);
        }
        for (ann, (w, acc)) in a.meta.annotations.iter().zip(per_ann) {
            targets += 1;
            if w <= 0.0 {
                continue;
            }
            detected += 1;
            let p: Vec<f64> = acc.iter().map(|x| x / w).collect();
            let best = crate::model::forest::argmax(&p);
            let label = if p[best] < min_confidence {
                UNKNOWN
            } else {
                model_classes[best].as_str()
            };
            t_true.push(idx(&ann.label));
            t_pred.push(idx(label));
            t_prob.push(expand(&p));
        }
    }
    // No target (background-only recordings): a zero matrix, no calibration figures.
    let probs = (!t_prob.is_empty()).then_some(&t_prob[..]);
    let scores = Scores::compute(classes.clone(), &t_true, &t_pred, probs)?;
    let track_level = if k_true.is_empty() {
        None
    } else {
        Some(Scores::compute(classes, &k_true, &k_pred, Some(&k_prob))?)
    };
    Ok(Evaluation {
        scores,
        targets,
        targets_detected: detected,
        tracks_unmatched: unmatched,
        track_level,
        false_alarms: alarms.report(),
    })
}

#[derive(Debug, Default)]
struct FalseAlarmCount {
    recordings: usize,
    duration_s: f64,
    false_tracks: usize,
    by_class: BTreeMap<String, usize>,
    false_rotorcraft: usize,
}

impl FalseAlarmCount {
    fn report(self) -> Option<FalseAlarms> {
        if self.recordings == 0 {
            return None;
        }
        let minutes = (self.duration_s / 60.0).max(f64::MIN_POSITIVE);
        Some(FalseAlarms {
            recordings: self.recordings,
            duration_s: self.duration_s,
            false_tracks: self.false_tracks,
            false_tracks_per_minute: self.false_tracks as f64 / minutes,
            false_tracks_per_minute_by_class: self
                .by_class
                .into_iter()
                .map(|(c, n)| (c, n as f64 / minutes))
                .collect(),
            false_rotorcraft: self.false_rotorcraft,
            false_rotorcraft_per_hour: self.false_rotorcraft as f64 / (minutes / 60.0),
        })
    }
}
