//! `rotorsift features` CSV: one row per track — identifiers (prefixed `id_` so peers
//! can drop them), the matched label (empty if none), then every feature in order.

use crate::features::FEATURES;

/// One row of the CSV.
#[derive(Debug, Clone)]
pub struct FeatureRow {
    pub recording: String,
    pub track: usize,
    pub start_s: f64,
    pub end_s: f64,
    pub range_m: f64,
    pub target_id: Option<String>,
    pub label: Option<String>,
    pub features: Vec<f64>,
}

/// Quotes a CSV field when it holds a comma, quote or newline (RFC 4180).
fn field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// The CSV text: header and rows.
pub fn to_csv(rows: &[FeatureRow]) -> String {
    let mut out = String::from("recording,label,id_track,id_start_s,id_end_s,id_range_m,id_target");
    for f in FEATURES {
        out.push(',');
        out.push_str(f.name);
    }
    out.push('\n');
    for r in rows {
        out.push_str(&format!(
            "{},{},{},{:.4},{:.4},{:.2},{}",
            field(&r.recording),
            field(r.label.as_deref().unwrap_or("")),
            r.track,
            r.start_s,
            r.end_s,
            r.range_m,
            field(r.target_id.as_deref().unwrap_or(""))
        ));
        for v in &r.features {
            out.push_str(&format!(",{v:.6}"));
        }
        out.push('\n');
    }
    out
}

/// The summary line `features` prints on stderr.
pub fn summary(tracks: usize, recordings: usize, out: &std::path::Path) -> String {
    format!(
        "rotorsift: {} track{} from {} recording{} written to {}",
        tracks,
        if tracks == 1 { "" } else { "s" },
        recordings,
        if recordings == 1 { "" } else { "s" },
        out.display()
    )
}
