//! The pictures `plot` and `audit` draw, computed from a recording: the cancelled
//! range-Doppler map of one CPI, and a track's spectrogram, cepstrogram and
//! cadence-velocity diagram (the same front end and plans the features use). Drawing is
//! `report::plot`'s job.

use ndarray::Array2;
use rustfft::num_complex::Complex32;

use super::signals::{track_signals, TrackSignal};
use super::tracks::{cpi_fits, notch_mask, FrontEnd};
use super::{AnalysedTrack, PipelineSettings};
use crate::cli_values::{parse_cadence_max, parse_png_path, parse_velocity_span};
use crate::detect::{Track, TrackPoint};
use crate::error::{Error, Result};
use crate::features::Extractor;
use crate::frontend::{CancellerState, CepstrumPlan, FrameKind, RangeDopplerPlan};
use crate::recording::{ChirpBlock, ChirpReader, RecordingMeta};
use crate::report::plot::{Band, HeatMap, Marker, MarkerKind};

pub use crate::report::plot::PictureKind;

fn db(x: f32) -> f32 {
    10.0 * x.max(1e-30).log10()
}

/// The high median (the upper middle value for an even count; 0 for none): the picture
/// floors have always used it ([`crate::stats::median_high_f32_in_place`]).
fn median(mut v: Vec<f32>) -> f32 {
    crate::stats::median_high_f32_in_place(&mut v)
}

/// A recording's base name (no directory, no `.sigmf-meta`).
pub fn name_of(meta: &RecordingMeta) -> String {
    meta.meta_path
        .file_name()
        .map(|s| {
            s.to_string_lossy()
                .trim_end_matches(".sigmf-meta")
                .to_string()
        })
        .unwrap_or_default()
}

/// The feature extractor (plans) of a recording's radar, for [`track_picture`]: make it
/// once per recording and draw every picture of its tracks with it.
pub fn extractor_for(meta: &RecordingMeta, settings: &PipelineSettings) -> Result<Extractor> {
    let p = &meta.params;
    Extractor::new(&settings.features, p.prf_hz(), p.wavelength_m())
}

/// What a picture's title says about its track. `None` fields are left out; a track
/// without a label (no model run, or one whose settings differ) is called "unlabelled".
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Caption {
    pub track_id: Option<usize>,
    /// The model's label of the track.
    pub label: Option<String>,
    /// The label's confidence, 0..1.
    pub confidence: Option<f64>,
    /// Median range, m.
    pub range_m: Option<f64>,
    /// Body radial velocity, m/s, positive receding.
    pub velocity_mps: Option<f64>,
}

impl Caption {
    /// The caption of an analysed track, with the model's label when there is one.
    pub fn of_track(t: &AnalysedTrack, label: Option<(&str, f64)>) -> Self {
        Caption {
            track_id: Some(t.track.id),
            label: label.map(|l| l.0.to_string()),
            confidence: label.map(|l| l.1),
            range_m: Some(t.track.median_range_m()),
            velocity_mps: Some(t.kinematics.body_velocity_mps),
        }
    }

    /// "track 3" (empty without an id).
    pub fn track_name(&self) -> String {
        self.track_id
            .map(|id| format!("track {id}"))
            .unwrap_or_default()
    }

    /// The second title line: "rotorcraft (confidence 0.87), range 152.3 m, radial
    /// velocity +4.2 m/s".
    pub fn line(&self) -> String {
        let mut parts = Vec::new();
        if self.track_id.is_some() {
            parts.push(match (&self.label, self.confidence) {
                (Some(l), Some(c)) => format!("{l} (confidence {c:.2})"),
                (Some(l), None) => l.clone(),
                (None, _) => "unlabelled".to_string(),
            });
        }
        if let Some(r) = self.range_m.filter(|r| r.is_finite()) {
            parts.push(format!("range {r:.1} m"));
        }
        if let Some(v) = self.velocity_mps.filter(|v| v.is_finite()) {
            // Under 0.05 m/s either way prints as 0.0 (never "-0.0").
            let v = if v.abs() < 0.05 { 0.0 } else { v };
            parts.push(format!("radial velocity {v:+.1} m/s"));
        }
        parts.join(", ")
    }
}

/// How far a track picture's axes reach; `None`: fitted to the track
/// ([`velocity_view`], [`cadence_view`]).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Zoom {
    /// Half-width of the velocity axis around the body's velocity, m/s.
    pub velocity_span_mps: Option<f64>,
    /// Top of the cadence axis, Hz.
    pub cadence_max_hz: Option<f64>,
}

/// The velocity axis is fitted to the bins whose time-averaged power stands this many
/// standard errors over the noise (the rule `md_extent_mps` uses, common practice for a
/// detection on an averaged periodogram)...
pub const SPREAD_SIGMAS: f32 = 5.0;
/// ... and within this many dB of the strongest bin (the Hann window's far sidelobes
/// of a strong body line lie below it: -31 dB first sidelobe, 18 dB/octave, Harris 1978).
pub const SPREAD_BELOW_PEAK_DB: f32 = 40.0;
/// The fitted half-width is the spread times this, plus [`SPREAD_MARGIN_BINS`] ...
pub const SPREAD_MARGIN: f64 = 1.25;
pub const SPREAD_MARGIN_BINS: f64 = 1.0;
/// ... and at least this, m/s (a bird's wing motion, a few m/s, still fills the axis).
pub const MIN_VELOCITY_HALF_SPAN_MPS: f64 = 2.0;
/// The cadence axis reaches past the highest cadence line: a cadence whose summed power
/// stands this many dB over the summed spectrum's median ...
pub const CADENCE_LINE_DB: f32 = 10.0;
/// ... and within this many dB of the strongest cadence (the spectrum of a spectrogram's
/// magnitude slopes down from its wingbeat or flash lines to a speckle floor, which then
/// sets the median: on our demo bird many 50-190 Hz bins stand 10-12 dB over it, 17 dB
/// under its 3.7 Hz wingbeat) ...
pub const CADENCE_LINE_BELOW_PEAK_DB: f32 = 15.0;
/// ... not counting the first bins, the main lobe of the zero-cadence term (the mean
/// level; a Hann window's main lobe is 2 bins either side, Harris 1978) ...
pub const CADENCE_DC_BINS: usize = 2;
/// ... by this factor (room for its next harmonic's neighbourhood) ...
pub const CADENCE_MARGIN: f64 = 1.5;
/// ... and at least to this, Hz: past the wingbeat band's top of 30 Hz (the
/// `cadence_low_hz` band) with its second harmonic's neighbourhood.
pub const MIN_CADENCE_MAX_HZ: f64 = 40.0;

/// The velocity window of a track picture: (low, high), m/s. `mean` is the spectrogram's
/// time-averaged power over the noise in each velocity bin (`v_first` the first bin's
/// velocity, `bin_mps` the bin width), averaged over `frames` frames; `vmax` the
/// unambiguous speed. With `span` the window is the body's velocity (the strongest bin)
/// ± `span`; without, ± the spread of the bins standing out of the noise
/// ([`SPREAD_SIGMAS`], within [`SPREAD_BELOW_PEAK_DB`] of the peak) times
/// [`SPREAD_MARGIN`] plus [`SPREAD_MARGIN_BINS`], at least
/// [`MIN_VELOCITY_HALF_SPAN_MPS`]. The window is moved inside ±`vmax`, and is the whole
/// axis when it is wider.
pub fn velocity_view(
    mean: &[f32],
    frames: usize,
    v_first: f64,
    bin_mps: f64,
    vmax: f64,
    span: Option<f64>,
) -> (f64, f64) {
    let full = (-vmax, vmax);
    if mean.is_empty() || bin_mps.is_nan() || bin_mps <= 0.0 {
        return full;
    }
    let peak = (0..mean.len())
        .max_by(|&a, &b| mean[a].total_cmp(&mean[b]))
        .unwrap_or(0);
    let body = v_first + peak as f64 * bin_mps;
    let half = span.unwrap_or_else(|| {
        let floor = 1.0 + SPREAD_SIGMAS / (frames.max(1) as f32).sqrt();
        let level = mean[peak] * 10f32.powf(-SPREAD_BELOW_PEAK_DB / 10.0);
        let stands = |i: usize| mean[i] > floor && mean[i] >= level;
        let extent = (0..mean.len())
            .filter(|&i| stands(i))
            .map(|i| (i as f64 - peak as f64).abs())
            .fold(0.0f64, f64::max);
        (extent * SPREAD_MARGIN + SPREAD_MARGIN_BINS) * bin_mps
    });
    let half = half.max(MIN_VELOCITY_HALF_SPAN_MPS.min(vmax));
    if half >= vmax {
        return full;
    }
    let lo = (body - half).max(-vmax);
    let hi = (lo + 2.0 * half).min(vmax);
    (hi - 2.0 * half, hi)
}

/// The top of a cadence axis, Hz: `summed` is the cadence spectrum summed over the
/// velocity rows shown, at `cadence_hz`. The highest cadence line (beyond the first
/// [`CADENCE_DC_BINS`] bins, [`CADENCE_LINE_DB`] over the median and within
/// [`CADENCE_LINE_BELOW_PEAK_DB`] of the strongest), times [`CADENCE_MARGIN`], at least
/// [`MIN_CADENCE_MAX_HZ`], at most the axis' end; `max` (given) wins, within the axis.
pub fn cadence_view(summed: &[f32], cadence_hz: &[f64], max: Option<f64>) -> f64 {
    let end = cadence_hz.last().copied().unwrap_or(0.0);
    if let Some(m) = max {
        return m.min(end);
    }
    let n = summed.len().min(cadence_hz.len());
    let skip = (CADENCE_DC_BINS + 1).min(n);
    let med = median(summed[..n].to_vec()).max(1e-30);
    let peak = summed[skip..n].iter().copied().fold(0.0f32, f32::max);
    let line = (med * 10f32.powf(CADENCE_LINE_DB / 10.0))
        .max(peak * 10f32.powf(-CADENCE_LINE_BELOW_PEAK_DB / 10.0));
    let top = (skip..n)
        .filter(|&i| summed[i] > line)
        .map(|i| cadence_hz[i])
        .fold(0.0f64, f64::max);
    (top * CADENCE_MARGIN).max(MIN_CADENCE_MAX_HZ).min(end)
}

/// Rows `lo..=hi` (axis values between `a` and `b`) of a picture whose rows run from
/// `y.0` to `y.1` evenly: the rows kept and their axis values.
fn crop_rows(values: &Array2<f32>, y: (f64, f64), a: f64, b: f64) -> (Array2<f32>, (f64, f64)) {
    let n = values.nrows();
    if n < 2 {
        return (values.clone(), y);
    }
    let step = (y.1 - y.0) / (n - 1) as f64;
    let idx = |v: f64| ((v - y.0) / step).round().clamp(0.0, (n - 1) as f64) as usize;
    let (r0, r1) = (
        idx(a.min(b)),
        idx(a.max(b)).max(idx(a.min(b)) + 1).min(n - 1),
    );
    let out = values.slice(ndarray::s![r0..=r1, ..]).to_owned();
    (out, (y.0 + r0 as f64 * step, y.0 + r1 as f64 * step))
}

fn crop_cols(values: &Array2<f32>, x: &[f64], top: f64) -> (Array2<f32>, (f64, f64)) {
    let last = x
        .iter()
        .rposition(|&f| f <= top + 1e-9)
        .unwrap_or(0)
        .max(1)
        .min(values.ncols().saturating_sub(1));
    let out = values.slice(ndarray::s![.., ..=last]).to_owned();
    (
        out,
        (
            x.first().copied().unwrap_or(0.0),
            x.get(last).copied().unwrap_or(0.0),
        ),
    )
}

/// The track a range-Doppler map is drawn for: its detections give the ring's cell.
#[derive(Debug, Clone, Copy)]
pub struct Focus<'a> {
    pub track: &'a Track,
    pub caption: &'a Caption,
}

/// The detection of `t` nearest in time to `centre_s`, when it lies within `half_s`.
fn point_near(t: &Track, centre_s: f64, half_s: f64) -> Option<&TrackPoint> {
    t.points
        .iter()
        .min_by(|a, b| {
            (a.t_s - centre_s)
                .abs()
                .total_cmp(&(b.t_s - centre_s).abs())
        })
        .filter(|p| (p.t_s - centre_s).abs() <= half_s)
}

/// The cancelled range-Doppler map of the CPI centred on `centre_s` (clamped into the
/// recording), each Doppler column in dB over its median cell. The canceller's notch
/// (`notch_mps`, and the window's main lobe) is a translucent band; the detections of
/// `tracks` at this CPI are crosses; `focus`'s detection nearest the CPI is ringed (with
/// no detection within half a CPI, its ring is left out) and the title names it.
pub fn range_doppler(
    meta: &RecordingMeta,
    channel: usize,
    settings: &PipelineSettings,
    centre_s: f64,
    tracks: &[Track],
    focus: Option<Focus>,
) -> Result<HeatMap> {
    let s = &settings.detect;
    let p = &meta.params;
    let k = p.range_bins();
    let (m, order) = cpi_fits(meta, s)?;
    let centre = (centre_s / p.chirp_interval_s).round() as usize;
    let first = centre
        .saturating_sub(m / 2 + order)
        .min(meta.chirps - m - order);
    let mut fe = FrontEnd::new(meta, s)?;
    let mut canc = CancellerState::new(s.canceller, k, s.phase_align)?;
    let mut reader = ChirpReader::open(meta, channel)?;
    reader.seek_chirp(first)?;
    let mut block = ChirpBlock::default();
    let zero = Complex32::new(0.0, 0.0);
    let mut out = vec![zero; k];
    let mut cpi: Vec<Complex32> = Vec::with_capacity(k * m);
    let mut rows = 0usize;
    while rows < m {
        let got = reader.read_block(&mut block, 1024)?;
        if got == 0 {
            break;
        }
        for i in 0..got {
            let x = fe.range_profile(&block, i)?;
            if canc.push(x, &mut out)? && rows < m {
                cpi.extend_from_slice(&out);
                rows += 1;
            }
        }
    }
    if rows < m {
        return Err(Error::format(
            &meta.meta_path,
            "the recording ends inside the CPI",
        ));
    }
    let mut plan = RangeDopplerPlan::new(m, s.doppler_window)?;
    let map = plan.process(&cpi, p.prf_hz())?;
    // Each Doppler column over its own median across range: the canceller shapes the
    // noise (deep near zero Doppler), so one level for the whole map would hide that.
    let mut values = map.power.mapv(|_| 0.0f32);
    for d in 0..m {
        let col = map.power.column(d);
        let floor = median(col.iter().copied().collect()).max(1e-30);
        for (r, &v) in col.iter().enumerate() {
            values[[r, d]] = db(v / floor);
        }
    }
    let lambda = p.wavelength_m();
    let t0 = (first + order) as f64 * p.chirp_interval_s;
    let cpi_s = m as f64 * p.chirp_interval_s;
    let name = name_of(meta);
    let what = focus
        .map(|f| format!(", {}", f.caption.track_name()))
        .unwrap_or_default();
    let mut h = HeatMap::new(
        format!("Range-Doppler map: {name}{what}"),
        "radial velocity (m/s)",
        "range (m)",
        (map.velocity_mps(0, lambda), map.velocity_mps(m - 1, lambda)),
        (p.range_of_bin(0.0), p.range_of_bin((k - 1) as f64)),
        values,
        "dB re column median",
    );
    let cpi_line = format!(
        "CPI {:.3}-{:.3} s, {} canceller",
        t0,
        t0 + cpi_s,
        s.canceller.name()
    );
    h.subtitle = match focus {
        Some(f) => format!("{}; {cpi_line}", f.caption.line()),
        None => cpi_line,
    };
    // The notch: the contiguous notch bins around 0 Hz, half a bin beyond each end.
    let notch = notch_mask(m, p.prf_hz(), lambda, s.notch_mps);
    let vel: Vec<f64> = (0..m).map(|d| map.velocity_mps(d, lambda)).collect();
    let half_bin = if m > 1 {
        0.5 * (vel[1] - vel[0]).abs()
    } else {
        0.0
    };
    let (mut a, mut b) = (m / 2, m / 2);
    if notch.get(m / 2).copied().unwrap_or(false) {
        while a > 0 && notch[a - 1] {
            a -= 1;
        }
        while b + 1 < m && notch[b + 1] {
            b += 1;
        }
        h.bands.push(Band {
            x: (vel[a] - half_bin, vel[b] + half_bin),
            label: format!("canceller notch (|v| < {:.1} m/s)", vel[b] + half_bin),
        });
    }
    let tc = t0 + 0.5 * cpi_s;
    for t in tracks {
        if let Some(pt) = point_near(t, tc, 0.5 * cpi_s) {
            h.markers.push(Marker {
                x: pt.detection.velocity_mps,
                y: pt.detection.range_m,
                kind: MarkerKind::Hit,
            });
        }
    }
    h.marker_labels
        .push((MarkerKind::Hit, "tracked detections of this CPI".into()));
    if let Some(f) = focus {
        if let Some(pt) = point_near(f.track, tc, 0.5 * cpi_s) {
            h.markers.push(Marker {
                x: pt.detection.velocity_mps,
                y: pt.detection.range_m,
                kind: MarkerKind::Track,
            });
            h.marker_labels
                .push((MarkerKind::Track, f.caption.track_name()));
        }
    }
    Ok(h)
}

/// The slow-time signals of `tracks` (pass two), in track order.
pub fn signals_of(
    meta: &RecordingMeta,
    channel: usize,
    settings: &PipelineSettings,
    tracks: &[Track],
) -> Result<Vec<TrackSignal>> {
    let max_chirps = (settings.features.max_track_s / meta.params.chirp_interval_s) as usize;
    let mut out: Vec<Option<TrackSignal>> = vec![None; tracks.len()];
    track_signals(
        meta,
        channel,
        &settings.detect,
        tracks,
        max_chirps,
        &mut |j, sig| {
            out[j] = Some(sig);
            Ok(())
        },
    )?;
    Ok(out
        .into_iter()
        .map(|s| s.unwrap_or_else(empty_signal))
        .collect())
}

fn empty_signal() -> TrackSignal {
    TrackSignal {
        first_chirp: 0,
        samples: Vec::new(),
        reference: Vec::new(),
        reference2: Vec::new(),
    }
}

/// A track picture of `kind` (not `RangeDoppler`) from its signal, with the recording's
/// extractor ([`extractor_for`]). `caption` names the track in the title; `zoom` sets
/// the axes (default: fitted to the track, [`velocity_view`] and [`cadence_view`]).
pub fn track_picture(
    meta: &RecordingMeta,
    ex: &Extractor,
    sig: &TrackSignal,
    kind: PictureKind,
    caption: &Caption,
    zoom: Zoom,
) -> Result<HeatMap> {
    let p = &meta.params;
    let (prf, lambda) = (p.prf_hz(), p.wavelength_m());
    let plan = ex.stft();
    let nfft = plan.params().nfft;
    if sig.samples.len() < plan.params().nperseg * 4 {
        return Err(Error::format(
            &meta.meta_path,
            format!(
                "{} is too short for a picture ({} chirps)",
                caption.track_name(),
                sig.samples.len()
            ),
        ));
    }
    // Clutter removed, not demodulated: velocities are the radial velocities.
    let z = ex.prepare(&sig.samples, 0.0);
    let spec = plan.spectrogram(&z, true)?;
    let zr = ex.prepare(&sig.reference, 0.0);
    let noise = match plan.spectrogram(&zr, true) {
        Ok(r) if r.nrows() > 0 => median(r.iter().copied().collect()) / std::f32::consts::LN_2,
        _ => median(spec.iter().copied().collect()),
    }
    .max(1e-30);
    let (frames, _) = spec.dim();
    let hop = plan.params().hop() as f64;
    let t0 = sig.first_chirp as f64 / prf + plan.params().nperseg as f64 / 2.0 / prf;
    let t1 = t0 + (frames.max(2) - 1) as f64 * hop / prf;
    let vmax = lambda / 4.0 * prf;
    let v_first = -vmax;
    let bin_mps = 2.0 * vmax / nfft as f64;
    let v_last = v_first + (nfft - 1) as f64 * bin_mps;
    // The velocity window, from the time-averaged spectrum over the noise.
    let mean: Vec<f32> = (0..nfft)
        .map(|b| spec.column(b).sum() / frames.max(1) as f32 / noise)
        .collect();
    let (va, vb) = velocity_view(
        &mean,
        frames,
        v_first,
        bin_mps,
        vmax,
        zoom.velocity_span_mps,
    );
    let name = name_of(meta);
    let who = caption.track_name();
    let line = caption.line();
    let finish = |mut h: HeatMap| {
        h.subtitle = line.clone();
        h
    };
    match kind {
        PictureKind::Spectrogram => {
            let values = spec.mapv(|v| db(v / noise)).t().to_owned();
            let (values, y) = crop_rows(&values, (v_first, v_last), va, vb);
            Ok(finish(HeatMap::new(
                format!("Spectrogram: {name}, {who}"),
                "time (s)",
                "radial velocity (m/s)",
                (t0, t1),
                y,
                values,
                "dB re noise floor",
            )))
        }
        PictureKind::Cepstrogram => {
            let cp = CepstrumPlan::new(nfft, CepstrumPlan::DEFAULT_FLOOR_REL)?;
            let c = cp.cepstrogram(&spec, FrameKind::Power)?;
            let half = nfft / 2;
            // Quefrencies 1 .. nfft/2 - 1 (0 is the mean log level).
            let mut values = Array2::<f32>::zeros((half - 1, frames));
            for f in 0..frames {
                for q in 1..half {
                    values[[q - 1, f]] = 20.0 * c[[f, q]].abs().max(1e-12).log10();
                }
            }
            let top = values.iter().copied().fold(f32::NEG_INFINITY, f32::max);
            let values = values.mapv(|v| v - top);
            Ok(finish(HeatMap::new(
                format!("Cepstrogram: {name}, {who}"),
                "time (s)",
                "quefrency (ms)",
                (t0, t1),
                (1000.0 / prf, 1000.0 * (half - 1) as f64 / prf),
                values,
                "dB re peak",
            )))
        }
        PictureKind::Cadence => {
            let frame_rate = prf / hop;
            let cvd = ex.cadence_diagram(&spec)?;
            let top = cvd.power.iter().copied().fold(0.0f32, f32::max).max(1e-30);
            let values = cvd.power.mapv(|v| db(v / top));
            let (values, y) = crop_rows(&values, (v_first, v_last), va, vb);
            // The cadence spectrum of the rows shown, for the cadence axis.
            let summed: Vec<f32> = (0..values.ncols())
                .map(|c| values.column(c).iter().map(|&d| 10f32.powf(d / 10.0)).sum())
                .collect();
            let cmax = cadence_view(&summed, &cvd.cadence_hz, zoom.cadence_max_hz);
            let (values, x) = if cvd.cadence_hz.is_empty() {
                (values, (0.0, frame_rate / 2.0))
            } else {
                crop_cols(&values, &cvd.cadence_hz, cmax)
            };
            Ok(finish(HeatMap::new(
                format!("Cadence-velocity diagram: {name}, {who}"),
                "cadence (Hz)",
                "radial velocity (m/s)",
                x,
                y,
                values,
                "dB re peak",
            )))
        }
        PictureKind::RangeDoppler => Err(Error::Invalid(
            "a range-Doppler picture is made from the recording, not a track".into(),
        )),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_velocity_axis_fits_a_known_spread() {
        // 256 bins of 0.5 m/s from -64 m/s (vmax 64); noise 1.0; a body at bin 150
        // (v = 11 m/s) with wing motion 6 bins (3 m/s) either side at 4x the noise,
        // averaged over 100 frames (floor 1 + 5/10 = 1.5).
        let mut mean = vec![1.0f32; 256];
        mean[150] = 1000.0;
        for d in 1..=6 {
            mean[150 - d] = 4.0;
            mean[150 + d] = 4.0;
        }
        let (lo, hi) = velocity_view(&mean, 100, -64.0, 0.5, 64.0, None);
        // half-width (6 x 1.25 + 1) bins x 0.5 m/s = 4.25 m/s around 11 m/s.
        assert!(
            (lo - 6.75).abs() < 1e-9 && (hi - 15.25).abs() < 1e-9,
            "{lo}..{hi}"
        );
        // A bin just under the floor does not widen it.
        mean[170] = 1.4;
        assert_eq!(velocity_view(&mean, 100, -64.0, 0.5, 64.0, None), (lo, hi));
        // Bins more than 40 dB under the peak (a strong body's window sidelobes) do not
        // count: with the body at 1e6 the wings (4.0 < 1e6 x 1e-4) drop out and the
        // axis falls to the minimum half-width, 2 m/s.
        let mut strong = mean.clone();
        strong[150] = 1e6;
        assert_eq!(
            velocity_view(&strong, 100, -64.0, 0.5, 64.0, None),
            (9.0, 13.0)
        );
        // Given span: body ± span; near the axis' end the window moves inside.
        assert_eq!(
            velocity_view(&mean, 100, -64.0, 0.5, 64.0, Some(10.0)),
            (1.0, 21.0)
        );
        assert_eq!(
            velocity_view(&mean, 100, -64.0, 0.5, 64.0, Some(60.0)),
            (-56.0, 64.0)
        );
        assert_eq!(
            velocity_view(&mean, 100, -64.0, 0.5, 64.0, Some(80.0)),
            (-64.0, 64.0)
        );
        // A bare body line gets the minimum half-width (2 m/s; 1 bin = 0.5 m/s).
        let mut bare = vec![1.0f32; 256];
        bare[128] = 50.0;
        assert_eq!(
            velocity_view(&bare, 100, -64.0, 0.5, 64.0, None),
            (-2.0, 2.0)
        );
    }

    #[test]
    fn the_cadence_axis_reaches_past_the_highest_line() {
        // 0..625 Hz in 1 Hz steps; lines at 14, 28 and 42 Hz (a wingbeat and harmonics).
        let f: Vec<f64> = (0..=625).map(|i| i as f64).collect();
        let mut s = vec![1.0f32; f.len()];
        for l in [14, 28, 42] {
            s[l] = 30.0;
        }
        assert_eq!(cadence_view(&s, &f, None), 63.0);
        // A 9 dB bump is not a line; a lone 200 Hz flash line is.
        s[300] = 7.9;
        assert_eq!(cadence_view(&s, &f, None), 63.0);
        s[200] = 100.0;
        assert_eq!(cadence_view(&s, &f, None), 300.0);
        // No line: the minimum; beyond the axis: its end; given: as given.
        assert_eq!(cadence_view(&vec![1.0; f.len()], &f, None), 40.0);
        s[500] = 100.0;
        assert_eq!(cadence_view(&s, &f, None), 625.0);
        assert_eq!(cadence_view(&s, &f, Some(80.0)), 80.0);
        // The zero-cadence lobe does not count; a line 13 dB over the median but 17 dB
        // under the strongest (a sloping floor's bump) does not widen the axis.
        let mut t = vec![1.0f32; f.len()];
        t[..=2].fill(1e4);
        t[4] = 1000.0;
        t[150] = 20.0;
        assert_eq!(cadence_view(&t, &f, None), 40.0);
        t[150] = 40.0;
        assert_eq!(cadence_view(&t, &f, None), 225.0);
    }

    #[test]
    fn crops_keep_the_axis_values() {
        let v = Array2::from_shape_fn((11, 3), |(r, _)| r as f32);
        let (c, y) = crop_rows(&v, (-5.0, 5.0), -2.0, 3.0);
        assert_eq!(y, (-2.0, 3.0));
        assert_eq!(c.column(0).to_vec(), vec![3.0, 4.0, 5.0, 6.0, 7.0, 8.0]);
        let w = Array2::from_shape_fn((2, 10), |(_, c)| c as f32);
        let x: Vec<f64> = (0..10).map(|i| i as f64 * 2.0).collect();
        let (c, xr) = crop_cols(&w, &x, 7.0);
        assert_eq!(xr, (0.0, 6.0));
        assert_eq!(c.row(0).to_vec(), vec![0.0, 1.0, 2.0, 3.0]);
    }

    #[test]
    fn captions_say_label_or_unlabelled() {
        let mut c = Caption {
            track_id: Some(3),
            label: Some("bird".into()),
            confidence: Some(0.874),
            range_m: Some(152.26),
            velocity_mps: Some(-4.21),
        };
        assert_eq!(
            c.line(),
            "bird (confidence 0.87), range 152.3 m, radial velocity -4.2 m/s"
        );
        c.label = None;
        assert!(c.line().starts_with("unlabelled, range"));
        assert_eq!(c.track_name(), "track 3");
        c.velocity_mps = Some(-0.01);
        assert!(
            c.line().ends_with("radial velocity +0.0 m/s"),
            "{}",
            c.line()
        );
    }
}

/// What `rotorsift plot` draws, and where.
#[derive(clap::Args, Debug, Clone, PartialEq)]
pub struct PlotOptions {
    /// What to draw.
    #[arg(long, value_enum)]
    pub kind: PictureKind,
    /// Track id (as `detect` prints); default: the strongest track. For range-doppler,
    /// the CPI at the track's middle (default: the recording's middle).
    #[arg(long)]
    pub track: Option<usize>,
    /// PNG file to write (must end in .png).
    #[arg(long, value_parser = parse_png_path)]
    pub out: std::path::PathBuf,
    /// Velocity axis of the spectrogram and cadence diagram: the track's body velocity
    /// plus and minus this, m/s (default: fitted to the track's micro-Doppler spread).
    #[arg(long, value_name = "M/S", value_parser = parse_velocity_span)]
    pub velocity_span: Option<f64>,
    /// Top of the cadence diagram's cadence axis, Hz (default: fitted to the
    /// track's strongest cadence lines).
    #[arg(long, value_name = "HZ", value_parser = parse_cadence_max)]
    pub cadence_max: Option<f64>,
}

impl PlotOptions {
    /// The axes' reach the options ask for.
    pub fn zoom(&self) -> Zoom {
        Zoom {
            velocity_span_mps: self.velocity_span,
            cadence_max_hz: self.cadence_max,
        }
    }
}

/// One picture `rotorsift plot` draws, and what its caption could say.
#[derive(Debug, Clone)]
pub struct Plotted {
    /// The picture.
    pub heat: crate::report::plot::HeatMap,
    /// A track was drawn (or focused) but left unlabelled: `settings` are not the
    /// built-in model's, so its label would not mean anything.
    pub unlabelled: bool,
}

/// Draws one picture of a recording: the range-Doppler map of the CPI at the middle of
/// track `track` (default: the strongest; with no track, the recording's middle), or that
/// track's spectrogram, cepstrogram or cadence diagram. The track is labelled by the
/// built-in model when `settings` are its settings.
pub fn plot(
    meta: &RecordingMeta,
    channel: usize,
    settings: &PipelineSettings,
    kind: PictureKind,
    track: Option<usize>,
    zoom: Zoom,
) -> Result<Plotted> {
    settings.detect.check()?;
    let clf = super::classify::Classifier::load(None)?;
    let labelled = clf.settings == *settings;
    let a = super::analyse(meta, channel, settings, labelled)?;
    let chosen = match track {
        Some(id) => Some(a.tracks.iter().find(|t| t.track.id == id).ok_or_else(|| {
            crate::Error::Invalid(format!(
                "{}: no track {id} (the recording has {} tracks; `rotorsift detect` lists them)",
                meta.meta_path.display(),
                a.tracks.len()
            ))
        })?),
        None => a
            .tracks
            .iter()
            .max_by(|x, y| x.track.mean_snr_db().total_cmp(&y.track.mean_snr_db())),
    };
    let caption = chosen.map(|t| {
        let p = labelled
            .then(|| clf.predict(&t.features, 0.0).ok())
            .flatten();
        Caption::of_track(t, p.as_ref().map(|p| (p.label.as_str(), p.confidence)))
    });
    let heat = if kind == PictureKind::RangeDoppler {
        let centre = chosen
            .map(|t| 0.5 * (t.start_s + t.end_s))
            .unwrap_or(0.5 * meta.duration_s());
        let tracks: Vec<_> = a.tracks.iter().map(|t| t.track.clone()).collect();
        let focus = chosen.zip(caption.as_ref()).map(|(t, c)| Focus {
            track: &t.track,
            caption: c,
        });
        range_doppler(meta, channel, settings, centre, &tracks, focus)?
    } else {
        let t = chosen.ok_or_else(|| {
            crate::Error::Invalid(format!(
                "{}: no tracks to draw a {} of",
                meta.meta_path.display(),
                kind.name()
            ))
        })?;
        let sigs = signals_of(meta, channel, settings, std::slice::from_ref(&t.track))?;
        track_picture(
            meta,
            &extractor_for(meta, settings)?,
            &sigs[0],
            kind,
            caption.as_ref().unwrap_or(&Caption::default()),
            zoom,
        )?
    };
    Ok(Plotted {
        heat,
        unlabelled: chosen.is_some() && !labelled,
    })
}

/// `rotorsift plot`: resolves `input` to one recording, draws the picture `opts` asks
/// for ([`plot`]) and writes it to `opts.out` as PNG.
pub fn plot_file(
    input: &std::path::Path,
    channel: usize,
    settings: &PipelineSettings,
    opts: &PlotOptions,
) -> Result<Plotted> {
    let paths = crate::recording::resolve_inputs(&[input.to_path_buf()])?;
    if paths.len() != 1 {
        return Err(Error::Invalid(format!(
            "{}: plot takes one recording, found {}",
            input.display(),
            paths.len()
        )));
    }
    let meta = RecordingMeta::open(&paths[0])?;
    let p = plot(&meta, channel, settings, opts.kind, opts.track, opts.zoom())?;
    crate::report::plot::write_png(&p.heat, &opts.out)?;
    Ok(p)
}
