//! The pipeline: composes the stages (recording → tracks → features → predictions) so the
//! command line, the benchmarks and the tests all run the same path.

pub mod audit;
pub mod batch;
pub mod classify;
pub mod matching;
pub mod options;
pub mod output;
pub mod pictures;
pub mod settings;
pub mod signals;
pub mod tables;
pub mod tracks;

use serde::{Deserialize, Serialize};

pub use batch::{run_batch, run_batch_parallel, BatchOutcome};
pub use matching::{match_tracks, matches, TrackSpan};
pub use output::{analyse_inputs, BatchOptions};
pub use settings::DetectSettings;
pub use signals::{track_signals, TrackSignal};
pub use tracks::{find_tracks, notch_mask, TrackRun};

use crate::detect::Track;
use crate::error::Result;
use crate::features::{Extractor, FeatureSettings, RotorEstimates, TrackKinematics};
use crate::recording::RecordingMeta;
use crate::stats::median;

/// Everything that turns a recording into feature vectors.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct PipelineSettings {
    /// Front end, detection and tracking.
    pub detect: DetectSettings,
    /// Feature extraction.
    pub features: FeatureSettings,
}

/// One track with its summary, features and rotor estimates.
#[derive(Debug, Clone)]
pub struct AnalysedTrack {
    /// The tracker's output.
    pub track: Track,
    /// Start, s from the first chirp (first CPI's start).
    pub start_s: f64,
    /// End, s (last CPI's end).
    pub end_s: f64,
    /// Kinematic summary.
    pub kinematics: TrackKinematics,
    /// Feature vector (order of `features::FEATURES`); empty when not computed.
    pub features: Vec<f64>,
    /// Blade-flash rate, tip speed and blade length, when a rotor is seen.
    pub rotor: RotorEstimates,
}

impl AnalysedTrack {
    /// True when the body's radial speed is under 0.5 m/s (docs/output-format.md).
    pub fn hovering(&self) -> bool {
        self.kinematics.body_velocity_mps.abs() < HOVER_SPEED_MPS
    }

    /// The span the match rule uses.
    pub fn span(&self) -> TrackSpan {
        TrackSpan {
            start_s: self.start_s,
            end_s: self.end_s,
            median_range_m: self.track.median_range_m(),
        }
    }
}

/// A recording's tracks and how they were found.
#[derive(Debug, Clone)]
pub struct RecordingAnalysis {
    /// The recording.
    pub meta: RecordingMeta,
    /// Tracks in start order.
    pub tracks: Vec<AnalysedTrack>,
    /// Pass-one statistics: CPIs processed,
    pub cpis: usize,
    /// CFAR detections on the cancelled maps,
    pub cfar_detections: usize,
    /// and detections inside the canceller notch (clutter-map CFAR and micro-Doppler).
    pub notch_detections: usize,
}

/// Least-squares slope of `y` over `t`.
fn slope(t: &[f64], y: &[f64]) -> f64 {
    let n = t.len() as f64;
    if t.len() < 2 {
        return 0.0;
    }
    let (mt, my) = (t.iter().sum::<f64>() / n, y.iter().sum::<f64>() / n);
    let sxy: f64 = t.iter().zip(y).map(|(a, b)| (a - mt) * (b - my)).sum();
    let sxx: f64 = t.iter().map(|a| (a - mt) * (a - mt)).sum();
    if sxx > 0.0 {
        sxy / sxx
    } else {
        0.0
    }
}

/// Sample standard deviation (n - 1), 0 for fewer than two values.
fn std(x: &[f64]) -> f64 {
    crate::stats::mean_std(x).1
}

/// Radial speed under which a track counts as hovering, m/s (docs/output-format.md): the
/// magnitude of its body's radial velocity. It is near-zero *radial* speed: a target
/// crossing the beam at right angles shows it too, so `classify` prints it only for tracks
/// it takes to show a rotor (`Prediction::shows_rotor`).
pub const HOVER_SPEED_MPS: f64 = 0.5;

/// Relative margin under the unambiguous speed at which a tip speed counts as clipped.
/// The extractor caps the micro-Doppler extent at λ/(4T) (`features::Extractor`), so a
/// capped value equals the limit up to rounding; 1e-6 is far above rounding and far below
/// a velocity bin.
pub const TIP_BOUND_MARGIN: f64 = 1e-6;

/// Whether a tip speed sits at the radar's unambiguous speed λ/(4T), where the extractor
/// clips it: the true tip speed is then that value or more (a lower bound).
pub fn tip_speed_is_bound(tip_speed_mps: f64, params: &crate::recording::RadarParams) -> bool {
    tip_speed_mps >= params.unambiguous_velocity_mps() * (1.0 - TIP_BOUND_MARGIN)
}

/// The body's radial velocity of a track, m/s. The per-CPI Doppler readings are the body
/// line for most targets, but for a rotor whose body sits in the canceller notch they are
/// blade lines that jump from CPI to CPI. So the readings are checked against the range
/// rate (least-squares slope of range over time): the median of the readings within
/// max(1 m/s, 20%) of the range rate when at least 30% of them are, else the range rate.
pub fn body_velocity(t: &[f64], r: &[f64], v: &[f64]) -> f64 {
    let dur = t.last().unwrap_or(&0.0) - t.first().unwrap_or(&0.0);
    if v.len() < 3 || dur < 0.2 {
        return median(v);
    }
    let rr = slope(t, r);
    let tol = (0.2 * rr.abs()).max(1.0);
    let near: Vec<f64> = v
        .iter()
        .cloned()
        .filter(|x| (x - rr).abs() <= tol)
        .collect();
    if near.len() * 10 >= v.len() * 3 {
        median(&near)
    } else {
        rr
    }
}

/// Kinematic summary of a track.
pub fn kinematics(track: &Track) -> TrackKinematics {
    let t: Vec<f64> = track.points.iter().map(|p| p.t_s).collect();
    let r: Vec<f64> = track.points.iter().map(|p| p.detection.range_m).collect();
    let v: Vec<f64> = track
        .points
        .iter()
        .map(|p| p.detection.velocity_mps)
        .collect();
    let snr: Vec<f64> = track.points.iter().map(|p| p.detection.snr_db).collect();
    let notch = track.points.iter().filter(|p| p.detection.in_notch).count();
    TrackKinematics {
        body_velocity_mps: body_velocity(&t, &r, &v),
        body_speed_std_mps: std(&v),
        range_rate_mps: slope(&t, &r),
        range_extent_m: track.range_max_m() - track.range_min_m(),
        duration_s: track.duration_s(),
        snr_db: track.mean_snr_db(),
        snr_std_db: std(&snr),
        notch_share: notch as f64 / track.points.len().max(1) as f64,
        body_accel_mps2: body_accel(&t, &v),
    }
}

/// Least change of the body's radial velocity over a track that counts as a trend, m/s.
pub const MIN_VELOCITY_CHANGE_MPS: f64 = 1.0;
/// Span of the track, s, around its middle over which the trend is fitted (the default
/// `FeatureSettings::max_track_s`: the signal the features read).
const TREND_WINDOW_S: f64 = 4.0;
/// Most detections the trend is fitted to.
const TREND_POINTS: usize = 64;
/// Largest trend believed, m/s^2 (a small airframe or bird crossing at 20 m/s passes
/// 10 m from the radar with a few m/s^2 of radial change).
const MAX_ACCEL_MPS2: f64 = 10.0;

/// Trend of the detections' radial velocity: the Theil-Sen slope (median of the pairwise
/// slopes; robust to the odd detection on a blade line), 0 when the change it implies over
/// the track is under `MIN_VELOCITY_CHANGE_MPS` or under 3 median absolute residuals, or
/// the track has fewer than 5 points; clamped to +/- `MAX_ACCEL_MPS2`.
pub fn body_accel(t: &[f64], v: &[f64]) -> f64 {
    // The middle TREND_WINDOW_S of the track (what the features see, by default), at most
    // TREND_POINTS points of it evenly spaced: the pairwise slopes then stay a few
    // thousand however long the track.
    let n_all = t.len().min(v.len());
    if n_all < 5 {
        return 0.0;
    }
    let mid = 0.5 * (t[0] + t[n_all - 1]);
    let idx: Vec<usize> = (0..n_all)
        .filter(|&i| (t[i] - mid).abs() <= TREND_WINDOW_S / 2.0)
        .collect();
    let step = idx.len().div_ceil(TREND_POINTS).max(1);
    let (t, v): (Vec<f64>, Vec<f64>) = idx.iter().step_by(step).map(|&i| (t[i], v[i])).unzip();
    let n = t.len();
    if n < 5 {
        return 0.0;
    }
    let mut slopes = Vec::with_capacity(n * (n - 1) / 2);
    for i in 0..n {
        for j in i + 1..n {
            let dt = t[j] - t[i];
            if dt > 1e-9 {
                slopes.push((v[j] - v[i]) / dt);
            }
        }
    }
    if slopes.is_empty() {
        return 0.0;
    }
    let a = median(&slopes).clamp(-MAX_ACCEL_MPS2, MAX_ACCEL_MPS2);
    let dur = t[n - 1] - t[0];
    // The trend must stand out of the detections' own scatter about it (a vegetation
    // patch's or a bird's velocities wander; a line through them means nothing): the
    // change over the track at least 3 median absolute residuals.
    let tm = t[..n].iter().sum::<f64>() / n as f64;
    let resid: Vec<f64> = (0..n).map(|i| v[i] - a * (t[i] - tm)).collect();
    let c = median(&resid);
    let mad = median(&resid.iter().map(|r| (r - c).abs()).collect::<Vec<_>>());
    if (a * dur).abs() < MIN_VELOCITY_CHANGE_MPS.max(3.0 * mad) {
        0.0
    } else {
        a
    }
}

/// Runs detection and tracking, and (when `with_features`) feature extraction, on one
/// recording's channel.
pub fn analyse(
    meta: &RecordingMeta,
    channel: usize,
    settings: &PipelineSettings,
    with_features: bool,
) -> Result<RecordingAnalysis> {
    let run = find_tracks(meta, channel, &settings.detect)?;
    let p = &meta.params;
    let half_cpi = run.cpi_s / 2.0;
    let duration = meta.duration_s();
    let none = RotorEstimates {
        blade_flash_hz: None,
        tip_speed_mps: None,
        blade_length_m: None,
    };
    let kins: Vec<TrackKinematics> = run.tracks.iter().map(kinematics).collect();
    let mut results: Vec<(Vec<f64>, RotorEstimates)> = vec![(Vec::new(), none); run.tracks.len()];
    if with_features && !run.tracks.is_empty() {
        let mut ex = Extractor::new(&settings.features, p.prf_hz(), p.wavelength_m())?;
        ex.set_gate_noise_gain(signals::gate_noise_gain(p.waveform()));
        let max_chirps = (settings.features.max_track_s / p.chirp_interval_s) as usize;
        track_signals(
            meta,
            channel,
            &settings.detect,
            &run.tracks,
            max_chirps,
            &mut |j, sig| {
                results[j] =
                    ex.extract(&sig.samples, &[&sig.reference, &sig.reference2], &kins[j])?;
                Ok(())
            },
        )?;
    }
    let tracks = run
        .tracks
        .into_iter()
        .zip(kins)
        .zip(results)
        .map(|((track, kin), (features, rotor))| AnalysedTrack {
            start_s: (track.start_s - half_cpi).max(0.0),
            end_s: (track.end_s + half_cpi).min(duration),
            track,
            kinematics: kin,
            features,
            rotor,
        })
        .collect();
    Ok(RecordingAnalysis {
        meta: meta.clone(),
        tracks,
        cpis: run.cpis,
        cfar_detections: run.cfar_detections,
        notch_detections: run.notch_detections,
    })
}
