//! Feature tables as inputs: `train` and `evaluate` take recordings and the CSV files
//! `rotorsift features` writes (by extension: `.csv`) alike, so an archive's features can
//! be computed one recording per job on many machines and the model trained on one. A
//! recording is turned into the same [`RecordingTable`] a CSV holds, so both paths train
//! and score the very same numbers.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use super::classify::radar_key;
use super::output::BatchOptions;
use super::RecordingAnalysis;
use super::{analyse, match_tracks, run_batch_parallel, BatchOutcome, PipelineSettings};
use crate::error::{Error, Result};
use crate::recording::{resolve_inputs, RecordingMeta};
pub use crate::report::features_csv::{RecordingTable, TableTrack};

/// Whether an input names a feature table (its extension is `csv`, any case).
pub fn is_table(p: &Path) -> bool {
    p.extension().is_some_and(|e| e.eq_ignore_ascii_case("csv"))
}

/// FNV-1a 64-bit offset basis and prime (Fowler, Noll and Vo; the published constants).
const FNV_OFFSET: u64 = 0xcbf2_9ce4_8422_2325;
const FNV_PRIME: u64 = 0x0000_0100_0000_01b3;

/// The fingerprint of the settings (and channel) features are made with: FNV-1a 64 of
/// their JSON and the channel, 16 hex digits. Two tables with one fingerprint were made
/// the same way.
pub fn fingerprint(settings: &PipelineSettings, channel: usize) -> String {
    let json = serde_json::to_string(settings).unwrap_or_default();
    let mut h = FNV_OFFSET;
    for b in json.bytes().chain(format!(" channel {channel}").bytes()) {
        h ^= u64::from(b);
        h = h.wrapping_mul(FNV_PRIME);
    }
    format!("{h:016x}")
}

/// One analysed recording as a table: each track with its matched annotation (the match
/// rule of docs/recording-format.md).
pub fn of_analysis(a: &RecordingAnalysis, fingerprint: &str) -> RecordingTable {
    let spans: Vec<_> = a.tracks.iter().map(|t| t.span()).collect();
    let m = match_tracks(&spans, &a.meta.annotations, &a.meta.params);
    RecordingTable {
        recording: a.meta.meta_path.display().to_string(),
        radar: radar_key(&a.meta.params),
        duration_s: a.meta.duration_s(),
        labels_complete: a.meta.labels_complete,
        targets: a.meta.annotations.iter().map(|x| x.label.clone()).collect(),
        settings: fingerprint.to_string(),
        tracks: a
            .tracks
            .iter()
            .zip(m)
            .map(|(t, mi)| TableTrack {
                id: t.track.id,
                start_s: t.start_s,
                end_s: t.end_s,
                range_m: t.track.median_range_m(),
                annotation: mi,
                target_id: mi.and_then(|i| a.meta.annotations[i].target_id.clone()),
                features: t.features.clone(),
            })
            .collect(),
    }
}

/// Every input as tables, in the order given (a directory's recordings in its order):
/// recordings are analysed with `settings` on `channel`, tables read and checked to be
/// made the same way. A bad recording or unreadable table is handed to `on_bad` and
/// skipped; a table made with other settings is refused (an error, nothing done).
pub fn gather(
    inputs: &[PathBuf],
    channel: usize,
    settings: &PipelineSettings,
    batch: BatchOptions,
    on_bad: &mut dyn FnMut(&Error),
) -> Result<(Vec<RecordingTable>, BatchOutcome)> {
    enum Item {
        Table(PathBuf),
        Recording(PathBuf),
    }
    let mut items = Vec::new();
    for p in inputs {
        if is_table(p) {
            items.push(Item::Table(p.clone()));
        } else {
            items.extend(
                resolve_inputs(std::slice::from_ref(p))?
                    .into_iter()
                    .map(Item::Recording),
            );
        }
    }
    let fp = fingerprint(settings, channel);
    let paths: Vec<PathBuf> = items
        .iter()
        .filter_map(|i| match i {
            Item::Recording(p) => Some(p.clone()),
            Item::Table(_) => None,
        })
        .collect();
    let progress = crate::progress::Progress::start(&paths, crate::progress::wanted(batch.quiet));
    let (done, mut outcome) = run_batch_parallel(
        &paths,
        batch.jobs,
        |p| {
            let r = RecordingMeta::open(p).and_then(|m| analyse(&m, channel, settings, true));
            progress.recording_done();
            r.map(|a| (p.to_path_buf(), of_analysis(&a, &fp)))
        },
        on_bad,
    );
    drop(progress);
    let analysed: BTreeMap<PathBuf, RecordingTable> = done.into_iter().collect();
    let mut out = Vec::new();
    for item in items {
        match item {
            Item::Recording(p) => out.extend(analysed.get(&p).cloned()),
            Item::Table(p) => {
                outcome.total += 1;
                match crate::report::features_csv::read(&p) {
                    Ok(tables) => {
                        if let Some(t) = tables.iter().find(|t| t.settings != fp) {
                            return Err(Error::format(&p, format!(
                                "{}: made with other detection/feature settings or channel (fingerprint {}) than these ({fp}); remake it with `rotorsift features` and the same options",
                                t.recording, t.settings
                            )));
                        }
                        out.extend(tables);
                    }
                    Err(e) => {
                        on_bad(&e);
                        outcome.failed += 1;
                    }
                }
            }
        }
    }
    Ok((out, outcome))
}

/// `rotorsift features`: writes the tables of `analyses` (made with `settings` on
/// `channel`) to `out` atomically, and returns the summary line for stderr.
pub fn write_features(
    analyses: &[RecordingAnalysis],
    settings: &PipelineSettings,
    channel: usize,
    out: &Path,
) -> Result<String> {
    if analyses.is_empty() {
        return Err(Error::Invalid(format!(
            "no input recording could be read; {} left as it was",
            out.display()
        )));
    }
    let fp = fingerprint(settings, channel);
    let tables: Vec<_> = analyses.iter().map(|a| of_analysis(a, &fp)).collect();
    let text = crate::report::features_csv::to_csv(&tables);
    crate::atomic::write_atomic(out, text.as_bytes())?;
    let tracks = tables.iter().map(|t| t.tracks.len()).sum();
    Ok(crate::report::features_csv::summary(
        tracks,
        tables.len(),
        out,
    ))
}
