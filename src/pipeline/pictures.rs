//! The pictures `plot` and `audit` draw, computed from a recording: the cancelled
//! range-Doppler map of one CPI, and a track's spectrogram, cepstrogram and
//! cadence-velocity diagram (the same front end and plans the features use). Drawing is
//! `report::plot`'s job.

use ndarray::Array2;
use rustfft::num_complex::Complex32;

use super::signals::{track_signals, TrackSignal};
use super::tracks::{cpi_fits, FrontEnd};
use super::PipelineSettings;
use crate::detect::Track;
use crate::error::{Error, Result};
use crate::features::Extractor;
use crate::frontend::{CancellerState, CepstrumPlan, FrameKind, RangeDopplerPlan};
use crate::recording::{ChirpBlock, ChirpReader, RecordingMeta};
use crate::report::plot::HeatMap;

/// The kinds of picture.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum PictureKind {
    /// One CPI's clutter-cancelled range-Doppler map (the map CFAR reads).
    RangeDoppler,
    /// A track's micro-Doppler spectrogram (clutter removed).
    Spectrogram,
    /// A track's cepstrogram (real cepstrum of each spectrogram frame).
    Cepstrogram,
    /// A track's cadence-velocity diagram.
    Cadence,
}

impl PictureKind {
    /// The name used on the command line and in file names.
    pub fn name(self) -> &'static str {
        match self {
            PictureKind::RangeDoppler => "range-doppler",
            PictureKind::Spectrogram => "spectrogram",
            PictureKind::Cepstrogram => "cepstrogram",
            PictureKind::Cadence => "cadence",
        }
    }
}

fn db(x: f32) -> f32 {
    10.0 * x.max(1e-30).log10()
}

fn median(mut v: Vec<f32>) -> f32 {
    if v.is_empty() {
        return 0.0;
    }
    let k = v.len() / 2;
    let (_, m, _) = v.select_nth_unstable_by(k, |a, b| a.total_cmp(b));
    *m
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

/// The cancelled range-Doppler map of the CPI centred on `centre_s` (clamped into the
/// recording), each Doppler column in dB over its median cell.
pub fn range_doppler(
    meta: &RecordingMeta,
    channel: usize,
    settings: &PipelineSettings,
    centre_s: f64,
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
    Ok(HeatMap {
        title: format!(
            "{}  RANGE-DOPPLER  {:.2}-{:.2} S  {} CANCELLER",
            name_of(meta),
            t0,
            t0 + m as f64 * p.chirp_interval_s,
            s.canceller.name()
        ),
        x_label: "RADIAL VELOCITY (M/S)".into(),
        y_label: "RANGE (M)".into(),
        x: (map.velocity_mps(0, lambda), map.velocity_mps(m - 1, lambda)),
        y: (p.range_of_bin(0.0), p.range_of_bin((k - 1) as f64)),
        values,
        span_db: (0.0, 40.0),
        scale_label: "DB/COL".into(),
    })
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
/// extractor ([`extractor_for`]). `label` names the track in the title.
pub fn track_picture(
    meta: &RecordingMeta,
    ex: &Extractor,
    sig: &TrackSignal,
    kind: PictureKind,
    label: &str,
) -> Result<HeatMap> {
    let p = &meta.params;
    let (prf, lambda) = (p.prf_hz(), p.wavelength_m());
    let plan = ex.stft();
    let nfft = plan.params().nfft;
    if sig.samples.len() < plan.params().nperseg * 4 {
        return Err(Error::format(
            &meta.meta_path,
            format!(
                "{label} is too short for a picture ({} chirps)",
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
    let v_last = (nfft as f64 / 2.0 - 1.0) / nfft as f64 * 2.0 * vmax;
    let name = name_of(meta);
    match kind {
        PictureKind::Spectrogram => Ok(HeatMap {
            title: format!("{name}  {label}  SPECTROGRAM"),
            x_label: "TIME (S)".into(),
            y_label: "VELOCITY (M/S)".into(),
            x: (t0, t1),
            y: (v_first, v_last),
            values: spec.mapv(|v| db(v / noise)).t().to_owned(),
            span_db: (0.0, 40.0),
            scale_label: "DB/NOISE".into(),
        }),
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
            Ok(HeatMap {
                title: format!("{name}  {label}  CEPSTROGRAM"),
                x_label: "TIME (S)".into(),
                y_label: "QUEFRENCY (MS)".into(),
                x: (t0, t1),
                y: (1000.0 / prf, 1000.0 * (half - 1) as f64 / prf),
                values,
                span_db: (top - 40.0, top),
                scale_label: "DB".into(),
            })
        }
        PictureKind::Cadence => {
            let frame_rate = prf / hop;
            let cvd = ex.cadence_diagram(&spec)?;
            let top = cvd.power.iter().copied().fold(0.0f32, f32::max).max(1e-30);
            let values = cvd.power.mapv(|v| db(v / top));
            Ok(HeatMap {
                title: format!("{name}  {label}  CADENCE-VELOCITY"),
                x_label: "CADENCE (HZ)".into(),
                y_label: "VELOCITY (M/S)".into(),
                x: (0.0, *cvd.cadence_hz.last().unwrap_or(&frame_rate)),
                y: (v_first, v_last),
                values,
                span_db: (-40.0, 0.0),
                scale_label: "DB/MAX".into(),
            })
        }
        PictureKind::RangeDoppler => Err(Error::Invalid(
            "a range-Doppler picture is made from the recording, not a track".into(),
        )),
    }
}
