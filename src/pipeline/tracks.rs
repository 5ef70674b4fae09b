//! Pass one over a recording: range processing, clutter cancelling, range-Doppler maps over
//! CPIs, range normalisation, CFAR on the cancelled map, and for returns whose body lies in
//! the canceller's notch two more detectors: CFAR over the notch bins of the clutter-map
//! path (stationary returns subtracted, a notch ~1 Hz wide), and the micro-Doppler energy
//! detector (blade spread outside the notch). Then clustering and tracking. Streams the
//! recording block by block; memory holds one CPI of chirps per path, not the recording.

use ndarray::Array2;
use rustfft::num_complex::Complex32;

use super::settings::DetectSettings;
use crate::detect::{
    CfarHit, CfarPlan, ClusterParams, Clusterer, Detection, MicroDopplerDetector, MicroDopplerHit,
    Track, Tracker,
};
use crate::error::{Error, Result};
use crate::frontend::{
    CancellerState, ClutterMap, NoiseFloor, NoiseFloorParams, RangeDopplerMap, RangeDopplerPlan,
    RangePlan,
};
use crate::recording::{ChirpBlock, ChirpReader, RecordingMeta, Waveform};

/// Chirps read from the file at a time.
const READ_CHIRPS: usize = 2048;

/// What pass one found in one recording.
#[derive(Debug, Clone)]
pub struct TrackRun {
    /// Confirmed tracks, numbered in start order.
    pub tracks: Vec<Track>,
    /// CPIs processed.
    pub cpis: usize,
    /// Duration of one CPI, s.
    pub cpi_s: f64,
    /// Detections from the CFAR path, summed over CPIs.
    pub cfar_detections: usize,
    /// Detections from the notch paths alone (clutter map or micro-Doppler energy).
    pub notch_detections: usize,
    /// Chirps per CPI used.
    pub cpi_chirps: usize,
}

/// The front end for one radar: plans and buffers made once, reused for every chirp/CPI.
pub(crate) struct FrontEnd {
    range: RangePlan,
    scratch: Vec<Complex32>,
    chirp: Vec<Complex32>,
    cells: usize,
}

impl FrontEnd {
    pub(crate) fn new(meta: &RecordingMeta, s: &DetectSettings) -> Result<Self> {
        let n = meta.params.samples_per_chirp;
        let range = match meta.params.waveform() {
            Waveform::FmcwBeat => RangePlan::new(n, s.range_window)?,
            Waveform::RangeProfile => RangePlan::pass_through(n)?,
        };
        let scratch = vec![Complex32::new(0.0, 0.0); range.scratch_len()];
        Ok(FrontEnd {
            range,
            scratch,
            chirp: vec![Complex32::new(0.0, 0.0); n],
            cells: meta.params.range_bins(),
        })
    }
    /// Range-compresses chirp `i` of `block`; the result is borrowed until the next call.
    pub(crate) fn range_profile(&mut self, block: &ChirpBlock, i: usize) -> Result<&[Complex32]> {
        self.chirp.copy_from_slice(block.chirp(i));
        self.range
            .process_with_scratch(&mut self.chirp, &mut self.scratch)?;
        Ok(&self.chirp[..self.cells])
    }
}

/// The CPI length and the canceller's order for `meta` under `s`, or the one-line error
/// when the recording is shorter than one CPI plus the canceller's history.
pub(crate) fn cpi_fits(meta: &RecordingMeta, s: &DetectSettings) -> Result<(usize, usize)> {
    let m = s.cpi_for(meta.params.chirp_interval_s);
    let order = s.canceller.order();
    if meta.chirps < m + order {
        return Err(Error::format(
            &meta.meta_path,
            format!(
                "the recording holds {} chirps, fewer than one CPI of {m} (+{order} for the canceller); use a shorter --cpi",
                meta.chirps
            ),
        ));
    }
    Ok((m, order))
}

/// Runs pass one on a recording's channel.
pub fn find_tracks(meta: &RecordingMeta, channel: usize, s: &DetectSettings) -> Result<TrackRun> {
    s.check()?;
    let p = &meta.params;
    let k = p.range_bins();
    let (m, _) = cpi_fits(meta, s)?;
    let hop = s.hop_for(m);
    let prf = p.prf_hz();
    let lambda = p.wavelength_m();
    let mut fe = FrontEnd::new(meta, s)?;
    let mut canc = CancellerState::new(s.canceller, k, s.phase_align)?;
    let noise_params = NoiseFloorParams::new(s.noise_half_window, s.noise_smoothing);
    let mut cancelled = MapPath::new(k, m, prf, s, noise_params)?;
    let mut clutter_path = MapPath::new(k, m, prf, s, noise_params)?;
    let tau = ((s.clutter_map_s / p.chirp_interval_s).round() as usize).max(m);
    // Not phase-aligned: the alignment estimate's own noise would modulate strong returns;
    // what common phase noise leaks through is rejected by the leak rule below instead.
    let mut cmap = ClutterMap::new(k, tau, false)?;
    let window_energy: f32 = s.doppler_window.coefficients(m).iter().map(|w| w * w).sum();
    let mut cfar_slow = CfarPlan::new(s.cfar)?;
    let mut cfar = CfarPlan::new(s.cfar)?;
    let mut md = MicroDopplerDetector::new(s.microdoppler)?;
    let mut clusterer = Clusterer::new(ClusterParams::new(1)?)?;
    let mut tracker = Tracker::new(s.tracker, p.range_cell_m())?;

    let notch = notch_mask(m, prf, lambda, s.notch_mps);
    let outside: Vec<bool> = notch.iter().map(|n| !n).collect();
    let skip = match p.waveform() {
        Waveform::FmcwBeat => s.skip_near_cells.min(k.saturating_sub(3)),
        Waveform::RangeProfile => 0,
    };
    let allowed = Array2::from_shape_fn((k, m), |(r, d)| r >= skip && outside[d]);
    let allowed_notch = Array2::from_shape_fn((k, m), |(r, d)| r >= skip && notch[d]);

    let zero = Complex32::new(0.0, 0.0);
    let mut out = vec![zero; k];
    let mut out_s = vec![zero; k];
    let mut hits: Vec<CfarHit> = Vec::new();
    let mut md_hits: Vec<MicroDopplerHit> = Vec::new();
    let mut dets: Vec<Detection> = Vec::new();
    let mut slow_dets: Vec<Detection> = Vec::new();

    let mut reader = ChirpReader::open(meta, channel)?;
    let mut block = ChirpBlock::default();
    let (mut pos, mut valid, mut since, mut cpis) = (0usize, 0usize, 0usize, 0usize);
    let (mut n_cfar, mut n_notch) = (0usize, 0usize);
    let range_of_cell = |c: f64| p.range_of_bin(c);
    let vel_of_bin = |d: usize| p.velocity_of_doppler((d as f64 - (m / 2) as f64) * prf / m as f64);
    let in_notch = |d: usize| notch[d];
    let axis = notch_axis(&notch, m, prf, lambda);
    loop {
        let got = reader.read_block(&mut block, READ_CHIRPS)?;
        if got == 0 {
            break;
        }
        for i in 0..got {
            let prof = fe.range_profile(&block, i)?;
            let ready = canc.push(prof, &mut out)?;
            cmap.push(prof, &mut out_s);
            clutter_path.ring[pos * k..(pos + 1) * k].copy_from_slice(&out_s);
            if ready {
                cancelled.ring[pos * k..(pos + 1) * k].copy_from_slice(&out);
                valid += 1;
            } else {
                cancelled.ring[pos * k..(pos + 1) * k].fill(zero);
            }
            pos = (pos + 1) % m;
            since += 1;
            if valid < m || since < hop {
                continue;
            }
            since = 0;
            let last_chirp = block.first_chirp + i;
            let first_chirp = last_chirp + 1 - m;
            let t_s = (first_chirp as f64 + m as f64 / 2.0) * p.chirp_interval_s;
            cancelled.normalised_map(pos, skip)?;
            let norm = &cancelled.norm;
            cfar.detect(norm.view(), Some(allowed.view()), &mut hits)?;
            clusterer.cluster(&hits, &range_of_cell, &vel_of_bin, &in_notch, &mut dets);
            n_cfar += dets.len();
            let before = dets.len();
            // Clutter-map path: bodies inside the notch.
            clutter_path.normalised_map(pos, skip)?;
            let (slow, norm_s) = (&clutter_path.map, &clutter_path.norm);
            cfar_slow.detect(norm_s.view(), Some(allowed_notch.view()), &mut hits)?;
            // Leak rule (a clutter-map threshold): a strong stationary return leaks part of
            // its power through any phase noise, spread white over the Doppler bins
            // (|c|^2 sum w^2 per bin for a leak of 100%); a hit must exceed
            // `clutter_leak` of that.
            hits.retain(|h| {
                slow.power[[h.range, h.doppler]]
                    > s.clutter_leak * cmap.clutter_power(h.range) * window_energy
            });
            clusterer.cluster(
                &hits,
                &range_of_cell,
                &vel_of_bin,
                &in_notch,
                &mut slow_dets,
            );
            for d in slow_dets.drain(..) {
                if !covered(&d, &dets, p.range_cell_m()) {
                    dets.push(Detection {
                        in_notch: true,
                        ..d
                    });
                }
            }
            // Micro-Doppler energy: blade spread with the body in the notch.
            md_hits.clear();
            md.detect(norm.view(), &outside, &mut md_hits);
            md_hits.retain(|h| h.range >= skip);
            if !md_hits.is_empty() {
                add_notch_detections(&md_hits, &mut dets, p, &axis, norm_s);
            }
            n_notch += dets.len() - before;
            tracker.update(cpis, t_s, &dets)?;
            cpis += 1;
        }
    }
    Ok(TrackRun {
        tracks: drop_weak_short(tracker.finish(), s)?,
        cpis,
        cpi_s: m as f64 * p.chirp_interval_s,
        cfar_detections: n_cfar,
        notch_detections: n_notch,
        cpi_chirps: m,
    })
}

/// Drops the confirmed tracks that M-of-N lets through from noise: shorter than
/// `weak_track_max_s` and with a mean SNR less than `weak_track_margin_db` above the CFAR
/// threshold multiplier of a full training window (10 log10 alpha). Ids are renumbered in
/// start order.
fn drop_weak_short(tracks: Vec<Track>, s: &DetectSettings) -> Result<Vec<Track>> {
    let n = s.cfar.full_count();
    let alpha = match s.cfar.kind {
        crate::detect::CfarKind::CellAveraging => crate::detect::ca_alpha(n, s.cfar.pfa)?,
        crate::detect::CfarKind::OrderedStatistic { rank_fraction } => {
            crate::detect::os_alpha(n, crate::detect::os_rank(n, rank_fraction), s.cfar.pfa)?
        }
    };
    let floor_db = 10.0 * alpha.log10() + s.weak_track_margin_db;
    let mut kept: Vec<Track> = tracks
        .into_iter()
        .filter(|t| t.duration_s() >= s.weak_track_max_s || t.mean_snr_db() >= floor_db)
        .collect();
    for (i, t) in kept.iter_mut().enumerate() {
        t.id = i;
    }
    Ok(kept)
}

/// True when detection `d` lies within 1.5 cells of a detection of `dets`.
fn covered(d: &Detection, dets: &[Detection], cell: f64) -> bool {
    dets.iter().any(|e| {
        d.range_max_m >= e.range_min_m - 1.5 * cell && d.range_min_m <= e.range_max_m + 1.5 * cell
    })
}

/// One processing path of pass one: a ring of the last CPI's chirps, its range-Doppler
/// map and that map normalised by its noise floor (plans and buffers made once).
struct MapPath {
    ring: Vec<Complex32>,
    cpi: Vec<Complex32>,
    plan: RangeDopplerPlan,
    noise: NoiseFloor,
    map: RangeDopplerMap,
    norm: Array2<f32>,
    cells: usize,
    prf: f64,
}

impl MapPath {
    fn new(k: usize, m: usize, prf: f64, s: &DetectSettings, np: NoiseFloorParams) -> Result<Self> {
        let zero = Complex32::new(0.0, 0.0);
        Ok(MapPath {
            ring: vec![zero; m * k],
            cpi: vec![zero; m * k],
            plan: RangeDopplerPlan::new(m, s.doppler_window)?,
            noise: NoiseFloor::new(np)?,
            map: RangeDopplerMap::zeros(k, m, prf),
            norm: Array2::zeros((k, m)),
            cells: k,
            prf,
        })
    }
    /// Range-Doppler map of the ring (next write position `pos`), noise floor updated,
    /// normalised into `norm`; the first `skip` range cells are set to the noise level.
    fn normalised_map(&mut self, pos: usize, skip: usize) -> Result<()> {
        unroll(&self.ring, pos, self.cells, &mut self.cpi);
        self.plan.process_into(&self.cpi, self.prf, &mut self.map)?;
        self.noise.update(&self.map)?;
        self.noise.normalise_into(&self.map, &mut self.norm)?;
        for r in 0..skip {
            self.norm.row_mut(r).fill(1.0);
        }
        Ok(())
    }
}

/// Copies a ring of `m` chirps (next write position `pos`) into time order.
fn unroll(ring: &[Complex32], pos: usize, k: usize, out: &mut [Complex32]) {
    let split = pos * k;
    let tail = ring.len() - split;
    out[..tail].copy_from_slice(&ring[split..]);
    out[tail..].copy_from_slice(&ring[..split]);
}

/// Doppler bins (FFT-shifted, bin m/2 = 0 Hz) inside the canceller notch: slower than
/// `notch_mps`, and always the window's main lobe (±2 bins) around 0 Hz.
pub fn notch_mask(m: usize, prf: f64, lambda: f64, notch_mps: f64) -> Vec<bool> {
    (0..m)
        .map(|d| {
            let off = d as f64 - (m / 2) as f64;
            let v = off * prf / m as f64 * lambda / 2.0;
            off.abs() <= 2.0 || v.abs() < notch_mps
        })
        .collect()
}

/// The velocity axis restricted to the notch, for reading a body line in the raw map.
struct NotchAxis {
    bins: Vec<(usize, f64)>,
}

fn notch_axis(notch: &[bool], m: usize, prf: f64, lambda: f64) -> NotchAxis {
    NotchAxis {
        bins: (0..m)
            .filter(|&d| notch[d])
            .map(|d| {
                (
                    d,
                    (d as f64 - (m / 2) as f64) * prf / m as f64 * lambda / 2.0,
                )
            })
            .collect(),
    }
}

/// Turns micro-Doppler hits away from every CFAR detection into detections with the body
/// in the notch. Their velocity is read from the clutter-map path (the strongest notch bin
/// of the cell, stationary returns removed).
fn add_notch_detections(
    md_hits: &[MicroDopplerHit],
    dets: &mut Vec<Detection>,
    p: &crate::recording::RadarParams,
    axis: &NotchAxis,
    slow: &Array2<f32>,
) {
    let cell = p.range_cell_m();
    let covered = |r: f64, dets: &[Detection]| {
        dets.iter()
            .any(|d| r >= d.range_min_m - 1.5 * cell && r <= d.range_max_m + 1.5 * cell)
    };
    let mut i = 0;
    while i < md_hits.len() {
        let mut j = i + 1;
        while j < md_hits.len() && md_hits[j].range <= md_hits[j - 1].range + 1 {
            j += 1;
        }
        let group = &md_hits[i..j];
        i = j;
        let best = group
            .iter()
            .max_by(|a, b| a.ratio.total_cmp(&b.ratio))
            .copied()
            .unwrap_or(group[0]);
        let r_best = p.range_of_bin(best.range as f64);
        if covered(r_best, dets) {
            continue;
        }
        let wsum: f64 = group.iter().map(|h| (h.ratio - 1.0).max(0.0) as f64).sum();
        let centroid = if wsum > 0.0 {
            group
                .iter()
                .map(|h| h.range as f64 * (h.ratio - 1.0).max(0.0) as f64)
                .sum::<f64>()
                / wsum
        } else {
            best.range as f64
        };
        let row = slow.row(best.range);
        let velocity = axis
            .bins
            .iter()
            .max_by(|a, b| row[a.0].total_cmp(&row[b.0]))
            .map(|b| b.1)
            .unwrap_or(0.0);
        dets.push(Detection {
            range_m: p.range_of_bin(centroid),
            velocity_mps: velocity,
            snr_db: best.snr_db as f64,
            range_min_m: p.range_of_bin(group[0].range as f64),
            range_max_m: p.range_of_bin(group[group.len() - 1].range as f64),
            spread_mps: 0.0,
            in_notch: true,
        });
    }
}
