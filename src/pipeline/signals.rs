//! Pass two over a recording: for every track, the slow-time signal of the range cell it
//! occupies, chirp by chirp, following the track's range as it migrates (the cell of the
//! track's range interpolated between its CPIs). Range-compressed, not cancelled: the
//! feature stage removes clutter itself with a narrow notch. Streams the recording again;
//! memory holds only the tracks' own samples (each capped at `max_chirps`).

use rustfft::num_complex::Complex32;

use super::settings::DetectSettings;
use super::tracks::FrontEnd;
use crate::detect::Track;
use crate::error::Result;
use crate::recording::{ChirpBlock, ChirpReader, RecordingMeta};

/// The slow-time signal of one track.
#[derive(Debug, Clone)]
pub struct TrackSignal {
    /// First chirp of the signal.
    pub first_chirp: usize,
    /// One complex sample a chirp: the range-compressed value of the track's cell.
    pub samples: Vec<Complex32>,
    /// The range cell used at each chirp.
    pub cells: Vec<u32>,
}

/// Chirp span of a track: its CPIs' centres widened by half a CPI on each side, clipped to
/// the recording, and capped at `max_chirps` around the middle.
pub fn track_span(track: &Track, meta: &RecordingMeta, s: &DetectSettings, max_chirps: usize) -> (usize, usize) {
    let t = meta.params.chirp_interval_s;
    let half = s.cpi_chirps as f64 / 2.0;
    let a = ((track.start_s / t) - half).max(0.0) as usize;
    let b = (((track.end_s / t) + half).ceil() as usize).min(meta.chirps);
    let (a, b) = (a.min(b), b);
    if b - a > max_chirps {
        let mid = (a + b) / 2;
        (mid - max_chirps / 2, mid - max_chirps / 2 + max_chirps)
    } else {
        (a, b)
    }
}

/// Range cell of a track at time `t_s`: its range interpolated linearly between CPIs.
fn cell_at(track: &Track, meta: &RecordingMeta, t_s: f64) -> usize {
    let pts = &track.points;
    let r = if t_s <= pts[0].t_s {
        pts[0].detection.range_m
    } else if t_s >= pts[pts.len() - 1].t_s {
        pts[pts.len() - 1].detection.range_m
    } else {
        let i = pts.partition_point(|p| p.t_s <= t_s);
        let (p0, p1) = (&pts[i - 1], &pts[i]);
        let f = (t_s - p0.t_s) / (p1.t_s - p0.t_s).max(1e-12);
        p0.detection.range_m + f * (p1.detection.range_m - p0.detection.range_m)
    };
    let k = meta.params.bin_of_range(r).round().max(0.0) as usize;
    k.min(meta.params.range_bins() - 1)
}

/// Collects the slow-time signal of every track in one streaming pass.
pub fn track_signals(
    meta: &RecordingMeta,
    channel: usize,
    s: &DetectSettings,
    tracks: &[Track],
    max_chirps: usize,
) -> Result<Vec<TrackSignal>> {
    let spans: Vec<(usize, usize)> = tracks
        .iter()
        .map(|tr| track_span(tr, meta, s, max_chirps))
        .collect();
    let mut out: Vec<TrackSignal> = spans
        .iter()
        .map(|&(a, b)| TrackSignal {
            first_chirp: a,
            samples: Vec::with_capacity(b - a),
            cells: Vec::with_capacity(b - a),
        })
        .collect();
    if tracks.is_empty() {
        return Ok(out);
    }
    let first = spans.iter().map(|s| s.0).min().unwrap_or(0);
    let last = spans.iter().map(|s| s.1).max().unwrap_or(0);
    let mut fe = FrontEnd::new(meta, s)?;
    let mut reader = ChirpReader::open(meta, channel)?;
    reader.seek_chirp(first)?;
    let mut block = ChirpBlock::default();
    let t = meta.params.chirp_interval_s;
    let mut m = first;
    while m < last {
        let got = reader.read_block(&mut block, 2048.min(last - m))?;
        if got == 0 {
            break;
        }
        for i in 0..got {
            let chirp = block.first_chirp + i;
            let inside = |sp: &(usize, usize)| chirp >= sp.0 && chirp < sp.1;
            if !spans.iter().any(inside) {
                continue;
            }
            let prof = fe.range_profile(&block, i)?;
            for (j, sp) in spans.iter().enumerate() {
                if !inside(sp) {
                    continue;
                }
                let k = cell_at(&tracks[j], meta, chirp as f64 * t);
                out[j].samples.push(prof[k]);
                out[j].cells.push(k as u32);
            }
        }
        m += got;
    }
    Ok(out)
}
