//! Training, classification and evaluation on analysed recordings: builds the labelled
//! dataset with the one match rule, holds out whole recordings, fits the forest, labels
//! tracks with calibrated probabilities, and scores targets as docs/output-format.md says.

use std::collections::BTreeMap;

use serde::Serialize;

use super::tables::RecordingTable;
use super::PipelineSettings;
use crate::cli_values::{parse_fraction, parse_probability};
use crate::error::{Error, Result};
use crate::features::names;
use crate::model::{
    Dataset, FalseAlarms, Forest, ForestParams, ModelFile, RadarCrossValidation, Scores,
};
pub use crate::report::evaluate::{Evaluation, ModelExpectation};
pub use crate::report::train::TrainReport;

/// The label of tracks whose confidence is under `--min-confidence`.
pub const UNKNOWN: &str = "unknown";

/// The class of a track that matches no annotation in a recording whose labels are complete
/// (`rotorsift:labels_complete`): background.
pub const BACKGROUND_CLASS: &str = "clutter";

/// The class whose false tracks the false-alarm report counts per hour.
pub const ALARM_CLASS: &str = "rotorcraft";

/// The label an unmatched track of a recording gets: `unlabelled_as` when given, else
/// [`BACKGROUND_CLASS`] when the recording's labels are complete, else none (the track is
/// left out and counted).
pub fn unmatched_label(labels_complete: bool, unlabelled_as: Option<&str>) -> Option<&str> {
    unlabelled_as.or(labels_complete.then_some(BACKGROUND_CLASS))
}

/// Labelled feature rows of a set of analyses.
#[derive(Debug, Clone, Default)]
pub struct LabelledRows {
    /// Feature vectors, one per labelled track.
    pub rows: Vec<Vec<f64>>,
    /// The label of each row.
    pub labels: Vec<String>,
    /// The recording of each row (the grouped splits hold whole recordings out).
    pub groups: Vec<String>,
    /// The radar of each row ([`radar_key`]).
    pub radars: Vec<String>,
    /// Tracks that matched no annotation (left out unless `unlabelled_as`).
    pub unmatched: usize,
}

/// Rows of every track that matches an annotation, and of the unmatched ones that
/// [`unmatched_label`] names (`unlabelled_as`, or background in recordings whose labels
/// are complete).
pub fn labelled_rows(tables: &[RecordingTable], unlabelled_as: Option<&str>) -> LabelledRows {
    let mut out = LabelledRows::default();
    for a in tables {
        let background = unmatched_label(a.labels_complete, unlabelled_as);
        for t in &a.tracks {
            let label = match (a.label_of(t), background) {
                (Some(l), _) | (None, Some(l)) => l.to_string(),
                (None, None) => {
                    out.unmatched += 1;
                    continue;
                }
            };
            out.rows.push(t.features.clone());
            out.labels.push(label);
            out.groups.push(a.recording.clone());
            out.radars.push(a.radar.clone());
        }
    }
    out
}

/// The radar a recording came from, as the settings that make one radar differ from
/// another: waveform, carrier, samples a chirp, chirp interval and range cell (two
/// recordings with the same key are taken to be the same radar).
pub fn radar_key(p: &crate::recording::RadarParams) -> String {
    format!(
        "{} {:.3} GHz N{} T{:.1}us cell{:.3}m",
        p.waveform().as_str(),
        p.carrier_hz / 1e9,
        p.samples_per_chirp,
        p.chirp_interval_s * 1e6,
        p.range_cell_m()
    )
}

/// Fits a forest and its domain on `train` rows and predicts `test` rows into `t`
/// (true), `p` (predicted) and `pr` (probabilities).
#[allow(clippy::too_many_arguments)]
fn fit_and_predict(
    data: &Dataset,
    train: &[usize],
    test: &[usize],
    params: &ForestParams,
    step: f64,
    t: &mut Vec<usize>,
    p: &mut Vec<usize>,
    pr: &mut Vec<Vec<f64>>,
) -> Result<()> {
    let f = Forest::fit(data, train, params)?;
    let dom = crate::model::Domain::fit(data, train, step)?;
    for &i in test {
        let row = data.features.row(i);
        let row = row.as_slice().unwrap_or(&[]);
        let mut q = f.predict_proba(row)?;
        dom.shrink(row, &mut q);
        t.push(data.labels[i]);
        p.push(crate::model::forest::argmax(&q));
        pr.push(q);
    }
    Ok(())
}

/// Leave-one-radar-out over `radars` (one per row of `data`); `None` with fewer than two
/// radars.
fn leave_one_radar_out(
    data: &Dataset,
    radars: &[String],
    params: &ForestParams,
    step: f64,
) -> Result<Option<RadarCrossValidation>> {
    let names: std::collections::BTreeSet<&String> = radars.iter().collect();
    if names.len() < 2 {
        return Ok(None);
    }
    let (mut t, mut p, mut pr) = (Vec::new(), Vec::new(), Vec::new());
    let mut per_radar = BTreeMap::new();
    for r in names {
        let (train, test): (Vec<usize>, Vec<usize>) =
            (0..data.len()).partition(|&i| &radars[i] != r);
        let (mut rt, mut rp, mut rpr) = (Vec::new(), Vec::new(), Vec::new());
        fit_and_predict(
            data, &train, &test, params, step, &mut rt, &mut rp, &mut rpr,
        )?;
        per_radar.insert(
            r.clone(),
            Scores::compute(data.class_names.clone(), &rt, &rp, Some(&rpr))?,
        );
        t.extend(rt);
        p.extend(rp);
        pr.extend(rpr);
    }
    Ok(Some(RadarCrossValidation {
        pooled: Scores::compute(data.class_names.clone(), &t, &p, Some(&pr))?,
        per_radar,
    }))
}

/// Options of `train`.
#[derive(clap::Args, Debug, Clone)]
pub struct TrainOptions {
    /// Share of the tracks (by whole recordings) held out for scoring.
    #[arg(long, default_value_t = 0.3, value_parser = parse_fraction)]
    pub holdout_fraction: f64,
    /// Seed of the split and of the ensemble.
    #[arg(long, default_value_t = 7)]
    pub seed: u64,
    /// Trees in the ensemble.
    #[arg(long, default_value_t = 200)]
    pub trees: usize,
    /// Train on unmatched tracks too, with this label.
    #[arg(long)]
    pub unlabelled_as: Option<String>,
    /// Also score a grouped k-fold cross-validation by recording (0 = off).
    #[arg(long, default_value_t = 5)]
    pub folds: usize,
    /// Step towards uniform probabilities per feature outside the training domain
    /// (0 = no domain check)
    #[arg(long, default_value_t = crate::model::domain::DEFAULT_STEP, value_parser = parse_probability)]
    pub domain_step: f64,
}

impl Default for TrainOptions {
    fn default() -> Self {
        TrainOptions {
            holdout_fraction: 0.3,
            seed: 7,
            trees: 200,
            unlabelled_as: None,
            folds: 5,
            domain_step: crate::model::domain::DEFAULT_STEP,
        }
    }
}

/// Trains on labelled analyses: scores a forest fitted on the training recordings on the
/// held-out recordings, then fits the shipped model on all recordings (more data; the
/// held-out figures are stored in the model's training summary).
pub fn train(
    tables: &[RecordingTable],
    settings: &PipelineSettings,
    opts: &TrainOptions,
) -> Result<(ModelFile, TrainReport)> {
    let lr = labelled_rows(tables, opts.unlabelled_as.as_deref());
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
    let (mut y_true, mut y_pred, mut probs) = (Vec::new(), Vec::new(), Vec::new());
    let step = opts.domain_step;
    fit_and_predict(
        &data,
        &train_idx,
        &test_idx,
        &params,
        step,
        &mut y_true,
        &mut y_pred,
        &mut probs,
    )?;
    let heldout = Scores::compute(data.class_names.clone(), &y_true, &y_pred, Some(&probs))?;
    let recordings = data.group_names().len();
    let mut notes = Vec::new();
    let folds = if opts.folds > recordings {
        notes.push(format!(
            "--folds {}: only {recordings} labelled recording{}, so {} fold{} (one recording each)",
            opts.folds,
            if recordings == 1 { "" } else { "s" },
            recordings,
            if recordings == 1 { "" } else { "s" },
        ));
        recordings
    } else {
        opts.folds
    };
    let cross_validated = if folds >= 2 {
        let (mut t, mut p, mut pr) = (Vec::new(), Vec::new(), Vec::new());
        for (train_k, test_k) in data.grouped_kfold(folds, opts.seed)? {
            fit_and_predict(
                &data, &train_k, &test_k, &params, step, &mut t, &mut p, &mut pr,
            )?;
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
    let radar_cross_validated = leave_one_radar_out(&data, &lr.radars, &params, step)?;
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
        folds,
        radar_cross_validated,
        notes,
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
        "folds": report.folds,
        "radar_cross_validated": &report.radar_cross_validated,
        "radars": lr.radars.iter().collect::<std::collections::BTreeSet<_>>(),
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
    )?
    .with_domain(crate::model::Domain::fit(&data, &all, opts.domain_step)?)?;
    Ok((model, report))
}

/// A loaded model with the pipeline settings its features need.
#[derive(Debug, Clone)]
pub struct Classifier {
    /// The model file (forest, classes, features, domain, training summary).
    pub model: ModelFile,
    /// The settings the model's features were made with (`analyse` must use them).
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
    /// Class probabilities of one feature vector (class order of the model), moved
    /// towards uniform for every feature outside the model's training domain.
    pub fn probabilities(&self, features: &[f64]) -> Result<Vec<f64>> {
        Ok(self.probabilities_and_domain(features)?.0)
    }
    /// The probabilities and how many features lie outside the training domain.
    pub fn probabilities_and_domain(&self, features: &[f64]) -> Result<(Vec<f64>, usize)> {
        let mut p = self.model.forest.predict_proba(features)?;
        let n = match &self.model.domain {
            Some(d) => d.shrink(features, &mut p),
            None => 0,
        };
        Ok((p, n))
    }
    /// Label, confidence and probabilities; under `min_confidence` the label is `unknown`.
    pub fn predict(&self, features: &[f64], min_confidence: f64) -> Result<Prediction> {
        let (p, off_domain) = self.probabilities_and_domain(features)?;
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
            off_domain,
            probabilities: self.model.class_names.iter().cloned().zip(p).collect(),
        })
    }
}

impl Prediction {
    /// Whether the track's rotor figures are shown (see [`NO_ROTOR_CLASSES`]).
    pub fn shows_rotor(&self) -> bool {
        !NO_ROTOR_CLASSES.contains(&self.label.as_str())
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

/// Classes whose tracks are not taken to show a rotor: `classify` and the audit print no
/// rotor figures (flash rate, tip speed, blade length) for them, whatever flash-like
/// periodicity the track carries (docs/output-format.md).
pub const NO_ROTOR_CLASSES: [&str; 2] = ["bird", BACKGROUND_CLASS];

/// One track's classification.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Prediction {
    /// The most probable class, or `unknown` under the minimum confidence.
    pub label: String,
    /// The largest class probability.
    pub confidence: f64,
    /// Features outside the model's training domain (each lowers the confidence).
    pub off_domain: usize,
    /// Every class's probability (calibrated, after the domain check).
    pub probabilities: BTreeMap<String, f64>,
}

/// Scores labelled recordings: each annotation is a target, detected when a track matches
/// it, predicted as the duration-weighted mean of its tracks' probabilities. A track that
/// matches no annotation, in a recording whose labels are complete (or in any with
/// `unlabelled_as`), is a false track: it enters the track-level scores with its
/// [`unmatched_label`] and the false-alarm report.
pub fn evaluate(
    tables: &[RecordingTable],
    clf: &Classifier,
    min_confidence: f64,
    unlabelled_as: Option<&str>,
) -> Result<Evaluation> {
    if unlabelled_as.is_none()
        && !tables
            .iter()
            .any(|a| !a.targets.is_empty() || a.labels_complete)
    {
        return Err(Error::Invalid("no labelled targets to score: the recordings carry no annotations (and none says rotorsift:labels_complete)".into()));
    }
    let model_classes = &clf.model.class_names;
    let mut classes: Vec<String> = model_classes.clone();
    for a in tables {
        let names = a
            .targets
            .iter()
            .map(String::as_str)
            .chain(unmatched_label(a.labels_complete, unlabelled_as));
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
    type Rows = (Vec<usize>, Vec<usize>, Vec<Vec<f64>>);
    let mut by_radar: BTreeMap<String, Rows> = BTreeMap::new();
    for a in tables {
        let radar = by_radar.entry(a.radar.clone()).or_default();
        let mut per_ann: Vec<(f64, Vec<f64>)> =
            vec![(0.0, vec![0.0; model_classes.len()]); a.targets.len()];
        let background = unmatched_label(a.labels_complete, unlabelled_as);
        if background.is_some() {
            alarms.recordings += 1;
            alarms.duration_s += a.duration_s;
        }
        for t in &a.tracks {
            let label_of = |p: &[f64]| {
                let best = crate::model::forest::argmax(p);
                if p[best] < min_confidence {
                    UNKNOWN.to_string()
                } else {
                    model_classes[best].clone()
                }
            };
            let Some(i) = t.annotation else {
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
            if background.is_some() && label_of(&p) == ALARM_CLASS && a.targets[i] != ALARM_CLASS {
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
            k_true.push(idx(&a.targets[i]));
            k_pred.push(idx(label));
            k_prob.push(pe);
        }
        for (ann, (w, acc)) in a.targets.iter().zip(per_ann) {
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
            t_true.push(idx(ann));
            t_pred.push(idx(label));
            t_prob.push(expand(&p));
            radar.0.push(idx(ann));
            radar.1.push(idx(label));
            radar.2.push(expand(&p));
        }
    }
    let mut per_radar = BTreeMap::new();
    for (r, (t, p, pr)) in by_radar {
        if !t.is_empty() {
            per_radar.insert(r, Scores::compute(classes.clone(), &t, &p, Some(&pr))?);
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
        per_radar,
        model_expectation: expectation(&clf.model.training),
    })
}

/// What the model file promises on new recordings: its grouped k-fold and
/// leave-one-radar-out cross-validation figures (absent ones omitted).
fn expectation(training: &serde_json::Value) -> Option<ModelExpectation> {
    let fig = |key: &str, what: &str| training.get(key)?.get(what)?.as_f64();
    let loro = training.get("radar_cross_validated")?.get("pooled")?;
    Some(ModelExpectation {
        leave_one_radar_out_accuracy: loro.get("accuracy")?.as_f64()?,
        leave_one_radar_out_ece: loro.get("ece").and_then(|v| v.as_f64()),
        radars: training
            .get("radars")
            .and_then(|v| v.as_array())
            .map(|a| a.len())
            .unwrap_or(0),
        grouped_kfold_accuracy: fig("cross_validated", "accuracy"),
        grouped_kfold_ece: fig("cross_validated", "ece"),
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

#[cfg(test)]
mod tests {
    use super::*;

    /// Leave-one-group-out as scikit-learn's `LeaveOneGroupOut` defines it: every group
    /// (here a radar) is the test set once, so every row is predicted exactly once. Two
    /// radars whose classes separate on feature 0 the same way: pooled accuracy 1.
    #[test]
    fn leave_one_radar_out_predicts_every_row_once() {
        let rows: Vec<Vec<f64>> = (0..40)
            .map(|i| vec![(i % 2) as f64 * 10.0 + (i / 2) as f64 * 0.01])
            .collect();
        let labels: Vec<String> = (0..40).map(|i| format!("c{}", i % 2)).collect();
        let groups: Vec<String> = (0..40).map(|i| format!("rec{}", i / 4)).collect();
        let radars: Vec<String> = (0..40).map(|i| format!("radar{}", i / 20)).collect();
        let data = Dataset::from_rows(&rows, &labels, &groups, vec!["x".into()]).unwrap();
        let params = ForestParams {
            trees: 10,
            ..ForestParams::default()
        };
        let cv = leave_one_radar_out(&data, &radars, &params, 0.05)
            .unwrap()
            .unwrap();
        let n: usize = cv.pooled.confusion.iter().flatten().sum();
        assert_eq!(n, 40);
        assert_eq!(cv.per_radar.len(), 2);
        assert!(
            (cv.pooled.accuracy - 1.0).abs() < 1e-12,
            "{}",
            cv.pooled.accuracy
        );
        let one: Vec<String> = vec!["r".into(); 40];
        assert!(leave_one_radar_out(&data, &one, &params, 0.05)
            .unwrap()
            .is_none());
    }
}
