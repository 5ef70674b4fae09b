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
    CfarHit, CfarPlan, ClusterParams, Clusterer, ClutterMapCfar, ClutterMapHit, Detection,
    MicroDopplerDetector, MicroDopplerHit, Track, Tracker,
};
use crate::error::{Error, Result};
use crate::frontend::{
    CancellerState, ClutterMap, LeakParams, LeakProfile, NoiseFloor, NoiseFloorParams,
    RangeDopplerMap, RangeDopplerPlan, RangePlan,
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
    // what common phase noise leaks through is measured (`LeakProfile`) and held instead.
    let mut cmap = ClutterMap::new(k, tau, false)?;
    let window_energy: f32 = s.doppler_window.coefficients(m).iter().map(|w| w * w).sum();
    let mut cfar = CfarPlan::new(s.cfar)?;
    // The notch path's CFAR ranks its training cells (OS-CFAR): beside a mast or a
    // building whose residue fills a few of them, cell averaging would be blind.
    let mut cfar_slow = CfarPlan::new(crate::detect::CfarParams {
        kind: crate::detect::CfarKind::OrderedStatistic {
            rank_fraction: crate::detect::cfar::DEFAULT_OS_RANK,
        },
        ..s.cfar
    })?;
    let mut md = MicroDopplerDetector::new(s.microdoppler)?;
    md.set_independence(hop as f64 / m as f64);
    let mut clusterer = Clusterer::new(ClusterParams::new(1)?)?;
    let mut clusterer_slow = Clusterer::new(ClusterParams::new(1)?)?;
    let mut tracker = Tracker::new(s.tracker, p.range_cell_m())?;

    let notch = notch_mask(m, prf, lambda, s.notch_mps);
    let outside: Vec<bool> = notch.iter().map(|n| !n).collect();
    let speed_of_bin =
        |d: usize| ((d as f64 - (m / 2) as f64) * prf / m as f64 * lambda / 2.0).abs();
    let md_region: Vec<bool> = (0..m)
        .map(|d| outside[d] && speed_of_bin(d) >= s.md_min_speed_mps)
        .collect();
    let notch_bins: Vec<usize> = (0..m).filter(|&d| notch[d]).collect();
    let notch_bins_list = notch_bins.clone();
    let mut cm_cfar = ClutterMapCfar::new(s.clutter_cfar, k, notch_bins)?;
    // The skirt band, outside the notch but slower than the micro-Doppler band: where the
    // slow fluctuation of a strong stationary return leaks past the canceller. A CFAR hit
    // there in a cell holding a strong stationary return must also stand out of that
    // cell's own history (clutter-map CFAR on the cancelled map).
    let skirt_bins: Vec<usize> = (0..m).filter(|&d| outside[d] && !md_region[d]).collect();
    let mut skirt_index = vec![usize::MAX; m];
    for (j, &d) in skirt_bins.iter().enumerate() {
        skirt_index[d] = j;
    }
    let mut skirt_cfar = ClutterMapCfar::new(s.clutter_cfar, k, skirt_bins.clone())?;
    let mut skirt_pass = vec![false; k * skirt_bins.len().max(1)];
    let mut skirt_hits: Vec<ClutterMapHit> = Vec::new();
    // With the noise known, a single exponential cell exceeds -ln(pfa) times its mean with
    // probability pfa: the notch path's floor over the noise.
    let notch_noise_alpha = (-(s.clutter_cfar.pfa.ln())) as f32;
    let mut leak_c = LeakProfile::new(LeakParams::default(), m);
    // Each return scintillates its own way in the clutter map's notch: the profile of
    // the notch path covers nine in ten of them.
    let mut leak_s = LeakProfile::new(
        LeakParams {
            quantile: NOTCH_LEAK_QUANTILE,
            ..LeakParams::default()
        },
        m,
    );
    let mut reference = vec![0.0f32; k];
    let mut residue = vec![0.0f64; k];
    let mut blind: Option<Blind> = None;
    let mut allowed = Array2::from_elem((k, m), false);
    let mut allowed_notch = Array2::from_elem((k, m), false);
    let mut leak_scale = Array2::from_elem((k, m), 1.0f32);
    let mut cell_scale = vec![1.0f32; k];
    let cfar_alpha = cfar_threshold(s)? as f32;

    let zero = Complex32::new(0.0, 0.0);
    let mut out = vec![zero; k];
    let mut out_s = vec![zero; k];
    let mut hits: Vec<CfarHit> = Vec::new();
    let mut hits_slow: Vec<CfarHit> = Vec::new();
    let mut cm_hits: Vec<ClutterMapHit> = Vec::new();
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
            for (r, c) in reference.iter_mut().enumerate() {
                *c = cmap.clutter_power(r) * window_energy;
            }
            // The two paths' maps are independent: made side by side when the pool has
            // threads to spare (one after the other on one thread; the same either way).
            let (rc, rs) = rayon::join(
                || cancelled.map_and_noise(pos),
                || clutter_path.map_and_noise(pos),
            );
            rc?;
            rs?;
            let bl = *blind.get_or_insert_with(|| {
                blind_cells(p.waveform(), &reference, &clutter_path, s.range_window, k)
            });
            let usable = |r: usize| bl.usable(r);
            if cpis == 0 {
                allowed = Array2::from_shape_fn((k, m), |(r, d)| usable(r) && outside[d]);
                allowed_notch = Array2::from_shape_fn((k, m), |(r, d)| usable(r) && notch[d]);
            }
            // The measured leak of strong stationary returns on both paths; a return that
            // does not stay put (foliage, a mast, a hovering airframe) is no reference.
            for (r, share) in residue.iter_mut().enumerate() {
                *share = clutter_path.residue_share(r, &notch_bins_list, reference[r], m);
            }
            let steady = |r: usize| usable(r) && residue[r] < LEAK_REFERENCE_RESIDUE;
            leak_c.update(
                k,
                |r, d| cancelled.map.power[[r, d]],
                |r, d| cancelled.noise_at(r, d),
                &reference,
                steady,
            );
            leak_s.update(
                k,
                |r, d| clutter_path.map.power[[r, d]],
                |r, d| clutter_path.noise_at(r, d),
                &reference,
                steady,
            );
            // The cancelled path (CFAR outside the notch) and the clutter-map path (the
            // notch) touch disjoint state: run side by side, like the maps.
            let (ra, rb) = rayon::join(
                || -> Result<()> {
                    // Cancelled map, normalised by noise plus what each cell's own stationary
                    // return can leak there.
                    cancelled.normalise_with_leak(
                        bl,
                        &reference,
                        &leak_c,
                        s.leak_margin,
                        &md_region,
                        &mut leak_scale,
                        &mut cell_scale,
                    )?;
                    cfar.detect(cancelled.norm.view(), Some(allowed.view()), &mut hits)?;
                    // the margin over the expected leak: a hit must stand that much higher
                    hits.retain(|h| {
                        h.power > h.noise * cfar_alpha * leak_scale[[h.range, h.doppler]]
                    });
                    if !skirt_bins.is_empty() {
                        skirt_hits.clear();
                        skirt_cfar.detect_and_update(
                            cancelled.map.power.view(),
                            |_, _| true,
                            &mut skirt_hits,
                        );
                        skirt_pass.fill(false);
                        for h in &skirt_hits {
                            skirt_pass[h.range * skirt_bins.len() + skirt_index[h.doppler]] = true;
                        }
                        let nb = skirt_bins.len();
                        let d_ref = m / 4;
                        hits.retain(|h| {
                            let j = skirt_index[h.doppler];
                            j == usize::MAX
                                || reference[h.range]
                                    < STRONG_CNR * cancelled.noise_at(h.range, d_ref)
                                || skirt_pass[h.range * nb + j]
                        });
                    }
                    clusterer.cluster(&hits, &range_of_cell, &vel_of_bin, &in_notch, &mut dets);
                    Ok(())
                },
                || -> Result<()> {
                    // Clutter-map path, notch bins: a cell against its own history (clutter-map
                    // CFAR: what arrives) or against its neighbours (CFAR: what was there from the
                    // start), and always above its noise and above the leak floor of its
                    // stationary return. What stays of a scintillating building is then left to
                    // the track's confirmation (`confirm_notch_tracks`).
                    cm_hits.clear();
                    clutter_path.normalise_into_norm()?;
                    cfar_slow.detect(
                        clutter_path.norm.view(),
                        Some(allowed_notch.view()),
                        &mut hits_slow,
                    )?;
                    {
                        let cp = &clutter_path;
                        let floor = |r: usize, d: usize| {
                            notch_noise_alpha * cp.noise_at(r, d)
                                + s.leak_margin * leak_s.ratio(d) * reference[r]
                        };
                        let above =
                            |r: usize, d: usize| usable(r) && cp.map.power[[r, d]] > floor(r, d);
                        cm_cfar.detect_and_update(cp.map.power.view(), above, &mut cm_hits);
                        for h in &hits_slow {
                            if above(h.range, h.doppler)
                                && !cm_hits
                                    .iter()
                                    .any(|c| c.range == h.range && c.doppler == h.doppler)
                            {
                                cm_hits.push(ClutterMapHit {
                                    range: h.range,
                                    doppler: h.doppler,
                                    ratio: 0.0,
                                });
                            }
                        }
                    }
                    hits_slow.clear();
                    hits_slow.extend(cm_hits.iter().map(|h| {
                        let power = clutter_path.map.power[[h.range, h.doppler]];
                        let noise = clutter_path.noise_at(h.range, h.doppler);
                        CfarHit {
                            range: h.range,
                            doppler: h.doppler,
                            power,
                            noise,
                            snr_db: 10.0 * (power / noise.max(f32::MIN_POSITIVE)).log10(),
                        }
                    }));
                    clusterer_slow.cluster(
                        &hits_slow,
                        &range_of_cell,
                        &vel_of_bin,
                        &in_notch,
                        &mut slow_dets,
                    );
                    Ok(())
                },
            );
            ra?;
            rb?;
            n_cfar += dets.len();
            let before = dets.len();
            let norm = &cancelled.norm;
            for d in slow_dets.drain(..) {
                if !covered(&d, &dets, p.range_cell_m()) {
                    dets.push(Detection {
                        in_notch: true,
                        ..d
                    });
                }
            }
            // Micro-Doppler energy beyond the spread band: blades with the body in the notch.
            md_hits.clear();
            md.detect_scaled(norm.view(), &md_region, &cell_scale, &mut md_hits);
            md_hits.retain(|h| usable(h.range));
            if !md_hits.is_empty() {
                add_notch_detections(&md_hits, &mut dets, p, &axis, &clutter_path.norm);
            }
            // Every detection carries the rotor signature of its cells and what of their
            // stationary return wanders.
            let thr = md.integrated_threshold().max(1.0 + f32::EPSILON);
            for d in dets.iter_mut() {
                let lo = p.bin_of_range(d.range_min_m).max(0.0).round() as usize;
                let hi = (p.bin_of_range(d.range_max_m).max(0.0).round() as usize).min(k - 1);
                let cells = lo.min(k - 1)..=hi.max(lo).min(k - 1);
                let ev = cells.clone().map(|r| md.evidence(r)).fold(0.0f32, f32::max);
                d.rotor_evidence = ((ev - 1.0) / (thr - 1.0)).max(0.0) as f64;
                d.md_ratio = cells
                    .clone()
                    .map(|r| md.last_ratio(r))
                    .fold(0.0f32, f32::max) as f64;
                d.residue_share = cells.map(|r| residue[r]).fold(0.0f64, f64::max);
            }
            n_notch += dets.len() - before;
            tracker.update(cpis, t_s, &dets)?;
            cpis += 1;
        }
    }
    let md_bins = md_region.iter().filter(|&&b| b).count();
    let tracks = confirm_notch_tracks(tracker.finish(), s, |n| {
        md.threshold_over(md_bins, n, NOTCH_TRACK_PFA) as f64
    });
    Ok(TrackRun {
        tracks: drop_weak_short(tracks, s)?,
        cpis,
        cpi_s: m as f64 * p.chirp_interval_s,
        cfar_detections: n_cfar,
        notch_detections: n_notch,
        cpi_chirps: m,
    })
}

/// The weighted quantile of the strong returns' notch residue that the notch path's leak
/// floor follows.
const NOTCH_LEAK_QUANTILE: f32 = 0.9;

/// Largest notch residue share (`Detection::residue_share`) of a cell whose stationary
/// return may serve as a reference of the radar's leak (-13 dB: a scintillating building
/// leaves about -29 dB; foliage and swaying masts most of their power).
const LEAK_REFERENCE_RESIDUE: f64 = 0.05;

/// False-alarm probability of the whole-track rotor test of a notch track.
const NOTCH_TRACK_PFA: f64 = 1e-5;

/// Least clutter-to-noise (`ref_k` over the cancelled map's noise per bin, linear) of a
/// cell whose skirt-band hits must also beat the cell's own history.
const STRONG_CNR: f32 = 100.0;

/// Least clutter-to-noise (per Doppler bin of a white-equivalent leak, linear) at which a
/// near-range FMCW return is taken as the transmitter-to-receiver leakage.
const LEAKAGE_CNR: f32 = 100.0;
/// Cells searched for the leakage at the start of an FMCW profile.
const LEAKAGE_SEARCH_CELLS: usize = 4;

/// The range cells nothing is detected in, at either end of the profile.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct Blind {
    /// Cells 0..low.
    low: usize,
    /// The last `high` cells.
    high: usize,
    cells: usize,
}

impl Blind {
    fn usable(&self, r: usize) -> bool {
        r >= self.low && r + self.high < self.cells
    }
}

/// The blind cells. FMCW: bin 0 (zero range: the DC offset) always, and when the strongest
/// stationary return among the first cells stands `LEAKAGE_CNR` over the noise (the
/// transmitter-to-receiver leakage, measured on the recording itself), every cell within
/// its range window's main lobe of it — on both sides, so also the last cells of the
/// profile, where the complex range FFT puts negative beat frequencies and the leakage's
/// skirt wraps. Range profiles: none.
fn blind_cells(
    waveform: Waveform,
    reference: &[f32],
    clutter_path: &MapPath,
    range_window: crate::frontend::Window,
    cells: usize,
) -> Blind {
    if waveform == Waveform::RangeProfile {
        return Blind {
            low: 0,
            high: 0,
            cells,
        };
    }
    let d_ref = clutter_path.map.power.ncols() / 4;
    let search = LEAKAGE_SEARCH_CELLS.min(cells);
    let strongest = (0..search)
        .filter(|&r| reference[r] >= LEAKAGE_CNR * clutter_path.noise_at(r, d_ref))
        .max_by(|&a, &b| reference[a].total_cmp(&reference[b]));
    let lobe = range_window.main_lobe_half_width_bins();
    let (low, high) = match strongest {
        Some(r) => (r + lobe + 1, (lobe + 1).saturating_sub(r)),
        None => (1, 0),
    };
    let keep = 3.min(cells);
    let low = low.min(cells - keep);
    Blind {
        low,
        high: high.min(cells - keep - low),
        cells,
    }
}

/// Keeps a track found mostly in the notch (at least half its points `in_notch`) only
/// when it shows the rotor signature, energy beyond the spread band: either enough of its
/// detections — at least `notch_confirm_points` and `notch_confirm_fraction` of them —
/// pass on the recent CPIs (`rotor_evidence >= 1`), or the whole track does, its points'
/// `md_ratio` averaged and held to `threshold(points)` (the micro-Doppler detector's
/// threshold for that many CPIs at `NOTCH_TRACK_PFA`): weak blades add up over a long
/// hover. A scintillating building or the leakage, held to its own level, shows neither.
fn confirm_notch_tracks(
    tracks: Vec<Track>,
    s: &DetectSettings,
    threshold: impl Fn(usize) -> f64,
) -> Vec<Track> {
    tracks
        .into_iter()
        .filter(|t| {
            let n = t.points.len();
            let notch = t.points.iter().filter(|p| p.detection.in_notch).count();
            if 2 * notch < n {
                return true;
            }
            let rotor = t
                .points
                .iter()
                .filter(|p| p.detection.rotor_evidence >= 1.0)
                .count();
            let mean = t.points.iter().map(|p| p.detection.md_ratio).sum::<f64>() / n as f64;
            (rotor >= s.notch_confirm_points && rotor as f64 >= s.notch_confirm_fraction * n as f64)
                || mean > threshold(n)
        })
        .collect()
}

/// The CFAR's threshold multiplier over a full training window (linear).
fn cfar_threshold(s: &DetectSettings) -> Result<f64> {
    let n = s.cfar.full_count();
    match s.cfar.kind {
        crate::detect::CfarKind::CellAveraging => crate::detect::ca_alpha(n, s.cfar.pfa),
        crate::detect::CfarKind::OrderedStatistic { rank_fraction } => {
            crate::detect::os_alpha(n, crate::detect::os_rank(n, rank_fraction), s.cfar.pfa)
        }
    }
}

/// Drops the confirmed tracks that M-of-N lets through from noise: shorter than
/// `weak_track_max_s` and with a mean SNR less than `weak_track_margin_db` above the CFAR
/// threshold multiplier of a full training window (10 log10 alpha). Ids are renumbered in
/// start order.
fn drop_weak_short(tracks: Vec<Track>, s: &DetectSettings) -> Result<Vec<Track>> {
    let alpha = cfar_threshold(s)?;
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
    plan: RangeDopplerPlan,
    noise: NoiseFloor,
    map: RangeDopplerMap,
    norm: Array2<f32>,
    /// Scratch: each cell's leak over the noise in the region of one row.
    leak_row: Vec<f32>,
    prf: f64,
}

impl MapPath {
    fn new(k: usize, m: usize, prf: f64, s: &DetectSettings, np: NoiseFloorParams) -> Result<Self> {
        let zero = Complex32::new(0.0, 0.0);
        Ok(MapPath {
            ring: vec![zero; m * k],
            plan: RangeDopplerPlan::new(m, s.doppler_window)?,
            noise: NoiseFloor::new(np)?,
            map: RangeDopplerMap::zeros(k, m, prf),
            norm: Array2::zeros((k, m)),
            leak_row: Vec::with_capacity(m),
            prf,
        })
    }
    /// Range-Doppler map of the ring (next write position `pos`) and its noise floor
    /// updated.
    fn map_and_noise(&mut self, pos: usize) -> Result<()> {
        self.plan
            .process_ring_into(&self.ring, pos, self.prf, &mut self.map)?;
        self.noise.update(&self.map)
    }

    /// The power over the noise in the Doppler `bins` of range cell `r`, over the power
    /// a stationary return of white-equivalent per-bin power `reference` spreads over a
    /// CPI of `m` chirps (Parseval: `m reference`). 0 without a stationary return.
    fn residue_share(&self, r: usize, bins: &[usize], reference: f32, m: usize) -> f64 {
        if reference <= 0.0 {
            return 0.0;
        }
        let row = self.map.power.row(r);
        let excess: f64 = bins
            .iter()
            .map(|&d| (row[d] - self.noise_at(r, d)).max(0.0) as f64)
            .sum();
        excess / (m as f64 * reference as f64)
    }

    /// Mean noise power of cell (`r`, `d`) (linear, map units).
    #[inline]
    fn noise_at(&self, r: usize, d: usize) -> f32 {
        self.noise.noise(r, d).unwrap_or(1.0).max(f32::MIN_POSITIVE)
    }

    /// The map over its noise floor, into `norm`.
    fn normalise_into_norm(&mut self) -> Result<()> {
        self.noise.normalise_into(&self.map, &mut self.norm)
    }

    /// The map over its noise floor plus the expected leak of each cell's stationary
    /// return (`leak.ratio(d) reference[r]`), into `norm` (so noise and leak together have
    /// mean 1); the blind range cells are set to the noise level. Fills `scale` with the
    /// factor `(1 + margin L) / (1 + L)` of every cell (`L` its leak over the noise), by
    /// which a hit there must stand higher, and `cell_scale[r]` with the same factor for
    /// the mean leak of each cell over the Doppler bins of `region`.
    #[allow(clippy::too_many_arguments)]
    fn normalise_with_leak(
        &mut self,
        blind: Blind,
        reference: &[f32],
        leak: &LeakProfile,
        margin: f32,
        region: &[bool],
        scale: &mut Array2<f32>,
        cell_scale: &mut [f32],
    ) -> Result<()> {
        self.noise.normalise_into(&self.map, &mut self.norm)?;
        scale.fill(1.0);
        cell_scale.fill(1.0);
        let g = leak.profile();
        let region_bins = region.iter().filter(|&&b| b).count().max(1) as f32;
        let (n_range, n_doppler) = self.noise.factors();
        if g.iter().any(|&x| x > 0.0) {
            for (r, mut row) in self.norm.rows_mut().into_iter().enumerate() {
                let c = reference[r];
                if c <= 0.0 {
                    continue;
                }
                // Branch-free over the row (so it vectorises): cells without a leak keep
                // their value and a scale of 1 and add nothing to the region's sum.
                let nr = n_range[r];
                let row = row.as_slice_mut().expect("standard layout");
                let mut srow = scale.row_mut(r);
                let srow = srow.as_slice_mut().expect("standard layout");
                let m = row.len();
                self.leak_row.resize(m, 0.0);
                // every slice cut to the row's length: the loop indexes without checks
                let (g, nd, region, srow, lrow) = (
                    &g[..m],
                    &n_doppler[..m],
                    &region[..m],
                    &mut srow[..m],
                    &mut self.leak_row[..m],
                );
                crate::wide::with_avx(|| {
                    // zipped, not indexed: the loop vectorises
                    let cells = row
                        .iter_mut()
                        .zip(srow.iter_mut())
                        .zip(lrow.iter_mut())
                        .zip(g.iter().zip(nd).zip(region));
                    for (((v, sc), lr), ((&gd, &ndd), &inside)) in cells {
                        let lk = gd * c;
                        // `NoiseFloor::noise`, floored as `noise_at`
                        let n = (nr * ndd / std::f32::consts::LN_2).max(f32::MIN_POSITIVE);
                        let l = lk / n;
                        let leaks = lk > 0.0;
                        *v = if leaks { *v / (1.0 + l) } else { *v };
                        *sc = if leaks {
                            (1.0 + margin * l) / (1.0 + l)
                        } else {
                            1.0
                        };
                        *lr = if leaks && inside { l } else { 0.0 };
                    }
                });
                let mut sum_leak = 0.0f32;
                for &l in &self.leak_row {
                    sum_leak += l;
                }
                let l = sum_leak / region_bins;
                cell_scale[r] = (1.0 + margin * l) / (1.0 + l);
            }
        }
        for r in 0..self.norm.nrows() {
            if !blind.usable(r) {
                self.norm.row_mut(r).fill(1.0);
            }
        }
        Ok(())
    }
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
            rotor_evidence: 0.0,
            residue_share: 0.0,
            md_ratio: 0.0,
        });
    }
}
