//! From analysed recordings to the plain data the reports print: the track listings of
//! `detect` and `classify` (with the rule that bird and clutter tracks show no rotor
//! figures, [`Prediction::shows_rotor`]), and the batch loop that analyses every input.

use std::path::PathBuf;

use super::classify::{Classifier, Prediction};
use super::RecordingAnalysis;
use super::{analyse, run_batch_parallel, AnalysedTrack, BatchOutcome, PipelineSettings};
use crate::error::{Error, Result};
use crate::recording::{resolve_inputs, RadarParams, RecordingMeta};
use crate::report::tracks::{RecordingOut, TrackOut, TrackReport};

/// How a batch of recordings is run: recordings at once (0 = one per core) and whether a
/// progress bar may be drawn (only on a terminal).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct BatchOptions {
    /// Recordings processed at once; the results are the same for any number.
    pub jobs: usize,
    /// No progress bar.
    pub quiet: bool,
}

/// Analyses every recording `inputs` name (files, base names, directories) with
/// `settings` on `channel`; a bad recording is handed to `on_bad` and skipped. The
/// analyses come in input order.
pub fn analyse_inputs(
    inputs: &[PathBuf],
    channel: usize,
    settings: &PipelineSettings,
    with_features: bool,
    batch: BatchOptions,
    on_bad: &mut dyn FnMut(&Error),
) -> Result<(Vec<RecordingAnalysis>, BatchOutcome)> {
    let paths = resolve_inputs(inputs)?;
    let progress = crate::progress::Progress::start(&paths, crate::progress::wanted(batch.quiet));
    let (out, outcome) = run_batch_parallel(
        &paths,
        batch.jobs,
        |p| {
            let r =
                RecordingMeta::open(p).and_then(|m| analyse(&m, channel, settings, with_features));
            progress.recording_done();
            r
        },
        on_bad,
    );
    drop(progress);
    Ok((out, outcome))
}

/// The printed form of one analysed track (model fields left empty).
pub fn track_out(t: &AnalysedTrack, params: &RadarParams) -> TrackOut {
    TrackOut {
        id: t.track.id,
        start_s: t.start_s,
        end_s: t.end_s,
        range_m: t.track.median_range_m(),
        range_min_m: t.track.range_min_m(),
        range_max_m: t.track.range_max_m(),
        radial_velocity_mps: t.kinematics.body_velocity_mps,
        snr_db: t.track.mean_snr_db(),
        label: None,
        confidence: None,
        probabilities: None,
        off_domain_features: None,
        hovering: t.hovering(),
        blade_flash_hz: t.rotor.blade_flash_hz,
        tip_speed_mps: t.rotor.tip_speed_mps,
        tip_speed_is_bound: t
            .rotor
            .tip_speed_mps
            .is_some_and(|v| super::tip_speed_is_bound(v, params)),
        blade_length_m: t.rotor.blade_length_m,
        notch_share: t.kinematics.notch_share,
        matched_label: None,
        shows_rotor: true,
    }
}

/// Adds a prediction to a printed track; a track not taken to show a rotor
/// ([`Prediction::shows_rotor`]) loses its rotor figures.
pub fn with_prediction(mut out: TrackOut, p: Prediction) -> TrackOut {
    out.shows_rotor = p.shows_rotor();
    if !out.shows_rotor {
        out.blade_flash_hz = None;
        out.tip_speed_mps = None;
        out.tip_speed_is_bound = false;
        out.blade_length_m = None;
    }
    out.label = Some(p.label);
    out.confidence = Some(p.confidence);
    out.probabilities = Some(p.probabilities);
    out.off_domain_features = Some(p.off_domain);
    out
}

fn recording_out(a: &RecordingAnalysis, tracks: Vec<TrackOut>) -> RecordingOut {
    RecordingOut {
        path: a.meta.meta_path.display().to_string(),
        duration_s: a.meta.duration_s(),
        tracks,
    }
}

/// The listing of `detect`: every track, no model.
pub fn detect_report(analyses: &[RecordingAnalysis]) -> TrackReport {
    TrackReport {
        tool_version: crate::VERSION,
        model: None,
        recordings: analyses
            .iter()
            .map(|a| {
                let tracks = a
                    .tracks
                    .iter()
                    .map(|t| track_out(t, &a.meta.params))
                    .collect();
                recording_out(a, tracks)
            })
            .collect(),
    }
}

/// The listing of `classify`: every track with the model's label (`unknown` under
/// `min_confidence`), confidence and probabilities.
pub fn classify_report(
    analyses: &[RecordingAnalysis],
    clf: &Classifier,
    min_confidence: f64,
) -> Result<TrackReport> {
    let mut recordings = Vec::with_capacity(analyses.len());
    for a in analyses {
        let mut tracks = Vec::with_capacity(a.tracks.len());
        for t in &a.tracks {
            let p = clf.predict(&t.features, min_confidence)?;
            tracks.push(with_prediction(track_out(t, &a.meta.params), p));
        }
        recordings.push(recording_out(a, tracks));
    }
    Ok(TrackReport {
        tool_version: crate::VERSION,
        model: Some(clf.name.clone()),
        recordings,
    })
}
