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
    /// True when `tip_speed_mps` sits at the unambiguous speed limit: the tip is at least
    /// that fast (a lower bound). False when it is a measurement or absent.
    pub tip_speed_is_bound: bool,
    // Extra fields (allowed by the contract).
    pub blade_length_m: Option<f64>,
    pub notch_share: f64,
    /// The label of the annotation this track matches, when the recording has labels.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub matched_label: Option<String>,
    /// Whether the track is taken to show a rotor (the pipeline decides it from the label;
    /// true when unlabelled). The table prints no hovering verdict when not; the rotor
    /// figures are already blanked.
    #[serde(skip)]
    pub shows_rotor: bool,
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

/// The lines printed under the table of `detect`/`classify`: what the columns mean
/// (docs/output-format.md, `detect` and `classify`).
pub fn table_notes(classify: bool) -> String {
    let mut s = String::new();
    s.push_str("vel_mps: radial velocity of the body; positive = receding (moving away), negative = approaching\n");
    s.push_str("snr_dB: mean detection SNR over the track's CPIs (strongest range-Doppler cell over its CFAR noise estimate)\n");
    if classify {
        s.push_str("hover: yes when |vel_mps| < 0.5 (near-zero radial speed), shown for tracks labelled as showing a rotor; '-' for bird and clutter, whose near-zero radial speed (a bird crossing the beam) is no hover
");
        s.push_str(
            "conf: probability of the label; unknown: under --min-confidence
",
        );
    } else {
        s.push_str("hover: yes when |vel_mps| < 0.5 (near-zero radial speed; a target crossing the beam at right angles shows it too)
");
    }
    s.push_str("flash_Hz, tip_mps: blade-flash rate and blade-tip speed; '≥' marks a tip speed at the radar's unambiguous speed (a lower bound)
");
    s
}

/// The table and its notes, or nothing at all when no recording could be read (no empty
/// header).
pub fn render_table(report: &TrackReport) -> String {
    if report.recordings.is_empty() {
        return String::new();
    }
    let mut s = to_table(report).render();
    s.push('\n');
    s.push_str(&table_notes(report.model.is_some()));
    s
}

/// The printed tip speed: `>=` before a value at the unambiguous speed limit.
fn tip_cell(tr: &TrackOut) -> String {
    match tr.tip_speed_mps {
        Some(v) if tr.tip_speed_is_bound => format!("≥{v:.1}"),
        other => opt(other, 1),
    }
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
                match (tr.shows_rotor, tr.hovering) {
                    (false, _) => "-",
                    (true, true) => "yes",
                    (true, false) => "no",
                }
                .to_string(),
                opt(tr.blade_flash_hz, 0),
                tip_cell(tr),
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

/// The listing as `--format` asks: the table, or JSON (pretty, one trailing newline).
pub fn render(report: &TrackReport, format: super::Format) -> crate::Result<String> {
    Ok(match format {
        super::Format::Json => {
            serde_json::to_string_pretty(report)
                .map_err(|e| crate::Error::Invalid(format!("encoding JSON: {e}")))?
                + "\n"
        }
        super::Format::Table => render_table(report),
    })
}
