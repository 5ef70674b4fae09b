//! The audit: picks the tracks a person should look at — misclassified (against the
//! annotation they match, docs/recording-format.md), low-confidence, or doubtful between
//! bird and rotorcraft; or every track predicted one class ("every drone alarm"); or one
//! named track — and draws each one's pictures. Every track labelled rotorcraft whose
//! body hovers is listed too (the tracks a site most needs to see). `report::audit` writes
//! the HTML page.

use std::collections::BTreeMap;
use std::path::Path;

use super::classify::Classifier;
use super::pictures::{
    extractor_for, name_of, range_doppler, signals_of, track_picture, Caption, Focus, PictureKind,
    Zoom,
};
use super::{match_tracks, RecordingAnalysis};
use crate::cli_values::parse_probability;
use crate::error::Result;
pub use crate::report::audit::{Audit, AuditEntry, AuditRules, HOVERING_ROTORCRAFT};
use crate::report::plot::write_png;

/// The audit's options on the command line (`--low-confidence`, `--doubt`,
/// `--max-pictures`, `--predicted`, `--track`).
#[derive(clap::Args, Debug, Clone, PartialEq)]
pub struct AuditOptions {
    /// Tracks under this confidence are listed.
    #[arg(long, default_value_t = 0.6, value_parser = parse_probability)]
    pub low_confidence: f64,
    /// Tracks whose bird and rotorcraft probabilities both reach this are listed.
    #[arg(long, default_value_t = 0.2, value_parser = parse_probability)]
    pub doubt: f64,
    /// At most this many tracks get pictures (most doubtful first).
    #[arg(long, default_value_t = 150)]
    pub max_pictures: usize,
    /// List every track predicted this class (e.g. rotorcraft: every drone alarm)
    /// instead of the doubtful ones.
    #[arg(long)]
    pub predicted: Option<String>,
    /// List this one track only: RECORDING:ID (the recording's name without
    /// extension, the track id as `detect` prints it).
    #[arg(long)]
    pub track: Option<String>,
}

impl AuditOptions {
    /// The checked selection rules, with the model's `--min-confidence`.
    pub fn params(&self, min_confidence: f64) -> Result<AuditParams> {
        let params = AuditParams {
            low_confidence: self.low_confidence,
            bird_rotor_doubt: self.doubt,
            max_pictures: self.max_pictures,
            min_confidence,
            predicted: self.predicted.clone(),
            track: self
                .track
                .as_deref()
                .map(AuditParams::parse_track)
                .transpose()?,
        };
        params.check()?;
        Ok(params)
    }
}

/// What makes a track doubtful.
#[derive(Debug, Clone, PartialEq)]
pub struct AuditParams {
    /// Tracks whose confidence is below this are listed.
    pub low_confidence: f64,
    /// Tracks whose bird and rotorcraft probabilities are both at least this are listed.
    pub bird_rotor_doubt: f64,
    /// At most this many tracks get pictures (the most doubtful first); the rest are
    /// listed without.
    pub max_pictures: usize,
    /// Tracks whose confidence is below this are labelled `unknown` (as in `classify`).
    pub min_confidence: f64,
    /// List every track predicted this class instead of the doubtful ones.
    pub predicted: Option<String>,
    /// List this one track only: (recording name, track id).
    pub track: Option<(String, usize)>,
}

impl Default for AuditParams {
    fn default() -> Self {
        AuditParams {
            low_confidence: 0.6,
            bird_rotor_doubt: 0.2,
            max_pictures: 150,
            min_confidence: 0.0,
            predicted: None,
            track: None,
        }
    }
}

impl AuditParams {
    /// Reads `--track RECORDING:ID` (the recording's name without extension, the track id
    /// as `detect` prints it).
    pub fn parse_track(s: &str) -> Result<(String, usize)> {
        let (rec, id) = s.rsplit_once(':').unwrap_or((s, ""));
        let id: usize = id.parse().map_err(|_| {
            crate::Error::Invalid(format!(
                "--track {s}: expected RECORDING:ID, e.g. run-k24-00-uav:0"
            ))
        })?;
        Ok((rec.to_string(), id))
    }

    /// Checks every value; the error names the option and the allowed range.
    pub fn check(&self) -> Result<()> {
        for (name, v) in [
            ("--low-confidence", self.low_confidence),
            ("--doubt", self.bird_rotor_doubt),
            ("--min-confidence", self.min_confidence),
        ] {
            if !(0.0..=1.0).contains(&v) {
                return Err(crate::Error::Invalid(format!(
                    "{name} {v}: expected a probability from 0 to 1"
                )));
            }
        }
        Ok(())
    }
}

/// Features shown on every card besides the physical estimates: the model's most
/// important ones (mean decrease in impurity), this many.
pub const TOP_FEATURES: usize = 6;

/// The rotorcraft class: its hovering tracks are always listed.
pub const ROTORCRAFT: &str = "rotorcraft";

/// File-name-safe stem of a recording.
fn stem(meta: &crate::recording::RecordingMeta) -> String {
    name_of(meta)
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect()
}

/// Runs the audit over analysed recordings (with features), writing pictures into
/// `dir/img/`. `channel` is the channel the analyses read.
pub fn audit(
    analyses: &[RecordingAnalysis],
    clf: &Classifier,
    params: &AuditParams,
    channel: usize,
    dir: &Path,
) -> Result<Audit> {
    params.check()?;
    let mut out = Audit {
        model: clf.name.clone(),
        recordings: analyses.len(),
        rules: AuditRules {
            low_confidence: params.low_confidence,
            bird_rotor_doubt: params.bird_rotor_doubt,
            predicted: params.predicted.clone(),
            track: params.track.clone(),
        },
        ..Default::default()
    };
    // the model's most important features, by index into the feature vector
    let mut ranked: Vec<(usize, f64)> = clf
        .model
        .forest
        .feature_importances()
        .into_iter()
        .enumerate()
        .collect();
    ranked.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0)));
    ranked.truncate(TOP_FEATURES);
    let img = dir.join("img");
    std::fs::create_dir_all(&img).map_err(|e| crate::Error::io(&img, e))?;
    let mut picked: Vec<(usize, usize, AuditEntry)> = Vec::new();
    for (ai, a) in analyses.iter().enumerate() {
        let spans: Vec<_> = a.tracks.iter().map(|t| t.span()).collect();
        let matched = match_tracks(&spans, &a.meta.annotations, &a.meta.params);
        for (ti, (t, m)) in a.tracks.iter().zip(&matched).enumerate() {
            out.tracks += 1;
            let p = clf.predict(&t.features, params.min_confidence)?;
            let ann = m.map(|i| &a.meta.annotations[i]);
            let mut reasons = Vec::new();
            let named = params
                .track
                .as_ref()
                .map(|(rec, id)| *rec == name_of(&a.meta) && *id == t.track.id);
            let mut score = 1.0 - p.confidence;
            if let Some(ann) = ann {
                out.matched += 1;
                *out.confusion
                    .entry((ann.label.clone(), p.label.clone()))
                    .or_insert(0) += 1;
                if ann.label != p.label {
                    reasons.push(format!("misclassified: labelled {}", ann.label));
                    score += 2.0;
                }
            }
            if p.confidence < params.low_confidence {
                reasons.push(format!("low confidence ({:.2})", p.confidence));
            }
            let pb = p.probabilities.get("bird").copied().unwrap_or(0.0);
            let pr = p.probabilities.get("rotorcraft").copied().unwrap_or(0.0);
            if pb >= params.bird_rotor_doubt && pr >= params.bird_rotor_doubt {
                reasons.push(format!("bird or rotorcraft? ({pb:.2} / {pr:.2})"));
                score += 1.0;
            }
            if p.label == ROTORCRAFT && t.hovering() {
                reasons.push(HOVERING_ROTORCRAFT.into());
            }
            let wanted = match (&named, &params.predicted) {
                (Some(hit), _) => {
                    if *hit {
                        reasons.insert(0, "asked for".into());
                    }
                    *hit
                }
                (None, Some(class)) => {
                    if p.label == *class {
                        reasons.insert(0, format!("predicted {class}"));
                    }
                    p.label == *class
                }
                (None, None) => !reasons.is_empty(),
            };
            if !wanted {
                continue;
            }
            // what classify shows: no rotor figures for a track not taken to show a rotor
            let rotor = p.shows_rotor();
            let feature =
                |f: crate::features::names::FeatureId| t.features.get(f as usize).copied();
            use crate::features::names::{FeatureId, FEATURES};
            let top_features = ranked
                .iter()
                .filter_map(|&(i, _)| {
                    let info = FEATURES.get(i)?;
                    Some((info.name, info.unit, *t.features.get(i)?))
                })
                .collect();
            picked.push((
                ai,
                ti,
                AuditEntry {
                    recording: a.meta.meta_path.display().to_string(),
                    name: name_of(&a.meta),
                    datetime: a.meta.datetime.clone(),
                    channel,
                    track_id: t.track.id,
                    start_s: t.start_s,
                    end_s: t.end_s,
                    range_m: t.track.median_range_m(),
                    radial_velocity_mps: t.kinematics.body_velocity_mps,
                    snr_db: t.track.mean_snr_db(),
                    hovering: t.hovering(),
                    blade_flash_hz: t.rotor.blade_flash_hz.filter(|_| rotor),
                    tip_speed_mps: t.rotor.tip_speed_mps.filter(|_| rotor),
                    tip_speed_is_bound: rotor
                        && t.rotor
                            .tip_speed_mps
                            .is_some_and(|v| super::tip_speed_is_bound(v, &a.meta.params)),
                    blade_flash_strength_db: feature(FeatureId::FlashStrength)
                        .filter(|_| rotor && t.rotor.blade_flash_hz.is_some()),
                    wingbeat_hz: feature(FeatureId::CadenceLowHz).filter(|v| *v > 0.0),
                    wingbeat_strength_db: feature(FeatureId::CadenceLowStrength)
                        .filter(|_| feature(FeatureId::CadenceLowHz).is_some_and(|v| v > 0.0)),
                    notch_share: t.kinematics.notch_share,
                    top_features,
                    truth: ann.map(|x| x.label.clone()),
                    target_id: ann.and_then(|x| x.target_id.clone()),
                    label: p.label.clone(),
                    confidence: p.confidence,
                    probabilities: p.probabilities.clone(),
                    shows_rotor: rotor,
                    reasons,
                    pictures: Vec::new(),
                    score,
                },
            ));
        }
    }
    picked.sort_by(|x, y| y.2.score.total_cmp(&x.2.score));
    // Pictures for the most doubtful, one signal pass per recording.
    let with_pictures = picked.len().min(params.max_pictures);
    let mut by_recording: BTreeMap<usize, Vec<usize>> = BTreeMap::new();
    for (k, (ai, _, _)) in picked.iter().take(with_pictures).enumerate() {
        by_recording.entry(*ai).or_default().push(k);
    }
    for (ai, ks) in by_recording {
        let a = &analyses[ai];
        let tracks: Vec<_> = ks
            .iter()
            .map(|&k| a.tracks[picked[k].1].track.clone())
            .collect();
        let sigs = signals_of(&a.meta, channel, &clf.settings, &tracks)?;
        let name = stem(&a.meta);
        let ex = extractor_for(&a.meta, &clf.settings)?;
        let all: Vec<_> = a.tracks.iter().map(|t| t.track.clone()).collect();
        for ((&k, sig), track) in ks.iter().zip(&sigs).zip(&tracks) {
            let at = &a.tracks[picked[k].1];
            let entry = &mut picked[k].2;
            let caption = Caption::of_track(at, Some((&entry.label, entry.confidence)));
            for kind in [PictureKind::Spectrogram, PictureKind::Cadence] {
                if let Ok(h) = track_picture(&a.meta, &ex, sig, kind, &caption, Zoom::default()) {
                    let file = format!("img/{name}-t{}-{}.png", entry.track_id, kind.name());
                    write_png(&h, &dir.join(&file))?;
                    entry.pictures.push((kind, file));
                }
            }
            let mid = 0.5 * (entry.start_s + entry.end_s);
            let focus = Some(Focus {
                track,
                caption: &caption,
            });
            if let Ok(h) = range_doppler(&a.meta, channel, &clf.settings, mid, &all, focus) {
                let file = format!("img/{name}-t{}-range-doppler.png", entry.track_id);
                write_png(&h, &dir.join(&file))?;
                entry.pictures.push((PictureKind::RangeDoppler, file));
            }
        }
    }
    out.entries = picked.into_iter().map(|(_, _, e)| e).collect();
    Ok(out)
}

/// `rotorsift audit`: runs the audit into `dir` (created if missing), writes
/// `dir/index.html` atomically and returns the summary line for stderr.
pub fn write_page(
    analyses: &[RecordingAnalysis],
    clf: &Classifier,
    params: &AuditParams,
    channel: usize,
    dir: &Path,
) -> Result<String> {
    std::fs::create_dir_all(dir)
        .map_err(|e| crate::Error::Invalid(format!("creating {}: {e}", dir.display())))?;
    let a = audit(analyses, clf, params, channel, dir)?;
    let index = dir.join("index.html");
    let page = crate::report::audit::to_html(&a, crate::VERSION);
    crate::atomic::write_atomic(&index, page.as_bytes())?;
    Ok(format!(
        "rotorsift: {} of {} tracks listed in {}",
        a.entries.len(),
        a.tracks,
        index.display()
    ))
}
