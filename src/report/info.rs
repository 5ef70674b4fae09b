//! `rotorsift info`: what each recording holds — radar settings, derived figures,
//! duration, labels per class, and the bad samples of the data file (docs/output-format.md,
//! "info").

use std::collections::BTreeMap;

use serde::Serialize;

use super::Table;
use crate::error::Result;
use crate::recording::{scan_samples, RecordingMeta, SampleStats};

/// One recording as `info --format json` prints it.
#[derive(Debug, Clone, Serialize)]
pub struct InfoRecord {
    pub path: String,
    pub waveform: &'static str,
    pub carrier_hz: f64,
    pub wavelength_m: f64,
    pub samples_per_chirp: usize,
    pub chirps: usize,
    pub chirp_interval_s: f64,
    pub duration_s: f64,
    pub range_cell_m: f64,
    pub max_range_m: f64,
    pub unambiguous_velocity_mps: f64,
    pub labels: BTreeMap<String, usize>,
    // Extra fields (the contract allows more).
    pub datatype: &'static str,
    pub num_channels: usize,
    pub range_start_m: f64,
    pub prf_hz: f64,
    pub range_resolution_m: f64,
    pub first_blind_speed_mps: f64,
    pub velocity_resolution_256_mps: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub site: Option<String>,
    /// Samples (all channels) with a NaN, infinite or out-of-range part, read as 0.
    pub nonfinite_samples: u64,
    /// Samples (all channels) with a part at the integer format's full scale.
    pub clipped_samples: u64,
}

impl InfoRecord {
    /// Opens the recording at `meta_path`, counts its bad samples and collects its figures.
    pub fn read(meta_path: &std::path::Path) -> Result<Self> {
        let meta = RecordingMeta::open(meta_path)?;
        let stats = scan_samples(&meta)?;
        Ok(Self::of(&meta, &stats))
    }

    /// Collects the figures of one recording with its bad-sample counts.
    pub fn of(meta: &RecordingMeta, stats: &SampleStats) -> Self {
        let p = &meta.params;
        InfoRecord {
            path: meta.meta_path.display().to_string(),
            waveform: p.waveform().as_str(),
            carrier_hz: p.carrier_hz,
            wavelength_m: p.wavelength_m(),
            samples_per_chirp: p.samples_per_chirp,
            chirps: meta.chirps,
            chirp_interval_s: p.chirp_interval_s,
            duration_s: meta.duration_s(),
            range_cell_m: p.range_cell_m(),
            max_range_m: p.max_range_m(),
            unambiguous_velocity_mps: p.unambiguous_velocity_mps(),
            labels: meta.label_counts(),
            datatype: meta.datatype.as_str(),
            num_channels: meta.num_channels,
            range_start_m: p.range_start_m(),
            prf_hz: p.prf_hz(),
            range_resolution_m: p.range_resolution_m(),
            first_blind_speed_mps: p.blind_speed_mps(1),
            velocity_resolution_256_mps: p.velocity_resolution_mps(256),
            site: meta.site.clone(),
            nonfinite_samples: stats.nonfinite,
            clipped_samples: stats.clipped,
        }
    }
}

/// The JSON document of `info --format json`.
pub fn to_json(records: &[InfoRecord]) -> serde_json::Value {
    serde_json::json!({ "recordings": records })
}

/// The table of `info`.
pub fn to_table(records: &[InfoRecord]) -> Table {
    let mut t = Table::new([
        "recording",
        "waveform",
        "carrier_GHz",
        "N",
        "chirps",
        "PRF_Hz",
        "duration_s",
        "cell_m",
        "max_range_m",
        "v_unamb_mps",
        "nonfinite",
        "clipped",
        "labels",
    ]);
    for r in records {
        let labels: Vec<String> = r.labels.iter().map(|(k, v)| format!("{k}:{v}")).collect();
        t.row([
            r.path.clone(),
            r.waveform.to_string(),
            format!("{:.3}", r.carrier_hz / 1e9),
            r.samples_per_chirp.to_string(),
            r.chirps.to_string(),
            format!("{:.0}", r.prf_hz),
            format!("{:.3}", r.duration_s),
            format!("{:.3}", r.range_cell_m),
            format!("{:.1}", r.max_range_m),
            format!("{:.2}", r.unambiguous_velocity_mps),
            r.nonfinite_samples.to_string(),
            r.clipped_samples.to_string(),
            if labels.is_empty() {
                "-".into()
            } else {
                labels.join(" ")
            },
        ]);
    }
    t
}

/// The text `info` prints: JSON (pretty, one trailing newline) or the table (nothing at
/// all when no recording could be read: no empty header).
pub fn render(records: &[InfoRecord], format: super::Format) -> crate::Result<String> {
    Ok(match format {
        super::Format::Json => {
            serde_json::to_string_pretty(&to_json(records))
                .map_err(|e| crate::Error::Invalid(format!("encoding JSON: {e}")))?
                + "\n"
        }
        super::Format::Table if records.is_empty() => String::new(),
        super::Format::Table => to_table(records).render(),
    })
}
