//! Track listings of `detect` and `classify` (docs/output-format.md: `classify --format json`;
//! `detect --format json` is the same layout without the model's fields), and their tables.

use std::collections::BTreeMap;

use serde::Serialize;

use super::Table;

/// One track as printed.
#[derive(Debug, Clone, Serialize)]
pub struct TrackOut {
    pub id: usize,
    pub start_s: f64,
    pub end_s: f64,
    pub range_m: f64,
    pub range_min_m: f64,
    pub range_max_m: f64,
    pub radial_velocity_mps: f64,
    pub snr_db: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub label: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub confidence: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub probabilities: Option<BTreeMap<String, f64>>,
    /// Features outside the model's training domain (each one lowers the confidence).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub off_domain_features: Option<usize>,
    pub hovering: bool,
    pub blade_flash_hz: Option<f64>,
    pub tip_speed_mps: Option<f64>,
    // Extra fields (allowed by the contract).
    pub blade_length_m: Option<f64>,
    pub notch_share: f64,
    /// The label of the annotation this track matches, when the recording has labels.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub matched_label: Option<String>,
}

/// One recording's tracks as printed.
#[derive(Debug, Clone, Serialize)]
pub struct RecordingOut {
    pub path: String,
    pub duration_s: f64,
    pub tracks: Vec<TrackOut>,
}

/// The JSON document of `detect`/`classify --format json`.
#[derive(Debug, Clone, Serialize)]
pub struct TrackReport {
    pub tool_version: &'static str,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub model: Option<String>,
    pub recordings: Vec<RecordingOut>,
}

fn opt(x: Option<f64>, prec: usize) -> String {
    x.map(|v| format!("{v:.prec$}"))
        .unwrap_or_else(|| "-".into())
}

/// The table of `detect`/`classify`: one row per track.
pub fn to_table(report: &TrackReport) -> Table {
    let classify = report.model.is_some();
    let mut head = vec![
        "recording",
        "track",
        "start_s",
        "end_s",
        "range_m",
        "vel_mps",
        "snr_dB",
        "hover",
        "flash_Hz",
        "tip_mps",
    ];
    if classify {
        head.extend(["label", "conf"]);
    }
    let mut t = Table::new(head);
    for r in &report.recordings {
        let name = std::path::Path::new(&r.path)
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_else(|| r.path.clone());
        for tr in &r.tracks {
            let mut row = vec![
                name.clone(),
                tr.id.to_string(),
                format!("{:.2}", tr.start_s),
                format!("{:.2}", tr.end_s),
                format!("{:.1}", tr.range_m),
                format!("{:+.2}", tr.radial_velocity_mps),
                format!("{:.1}", tr.snr_db),
                if tr.hovering { "yes" } else { "no" }.to_string(),
                opt(tr.blade_flash_hz, 0),
                opt(tr.tip_speed_mps, 1),
            ];
            if classify {
                row.push(tr.label.clone().unwrap_or_default());
                row.push(opt(tr.confidence, 2));
            }
            t.row(row);
        }
    }
    t
}
