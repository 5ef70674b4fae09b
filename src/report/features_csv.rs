//! The feature table, `rotorsift features` CSV, both ways: one row per track —
//! identifiers (prefixed `id_` so peers can drop them), the matched label (empty if
//! none), then every feature in order — written by `features` and read back by `train`
//! and `evaluate`, so features can be computed on many machines and the model trained on
//! one. Each row also carries what training and scoring need of its recording (radar,
//! duration, labels, annotations) and the fingerprint of the settings that made it; a
//! recording with no track has one row with an empty `id_track`. Numbers are written in
//! the shortest form that reads back to the same value (docs/output-format.md).

use std::path::Path;

use crate::error::{Error, Result};
use crate::features::FEATURES;

/// Identifier columns, in order, before the feature columns.
pub const ID_COLUMNS: [&str; 13] = [
    "recording",
    "label",
    "id_track",
    "id_start_s",
    "id_end_s",
    "id_range_m",
    "id_target",
    "id_annotation",
    "id_radar",
    "id_duration_s",
    "id_labels_complete",
    "id_targets",
    "id_settings",
];

/// Separator of the labels in `id_targets` (labels hold letters, digits, `-` and `_`).
pub const TARGET_SEPARATOR: char = ';';

/// One track of a feature table.
#[derive(Debug, Clone, PartialEq)]
pub struct TableTrack {
    /// The track's id (as `detect` prints it).
    pub id: usize,
    /// Start and end, s from the recording's first chirp.
    pub start_s: f64,
    /// See `start_s`.
    pub end_s: f64,
    /// Median range, m.
    pub range_m: f64,
    /// Index of the matched annotation in the recording's annotations, if any.
    pub annotation: Option<usize>,
    /// `rotorsift:target_id` of the matched annotation, if any.
    pub target_id: Option<String>,
    /// Feature vector (order of `features::FEATURES`).
    pub features: Vec<f64>,
}

/// One recording's rows of a feature table.
#[derive(Debug, Clone, PartialEq)]
pub struct RecordingTable {
    /// The `.sigmf-meta` path as the command was given it.
    pub recording: String,
    /// The radar, as leave-one-radar-out groups recordings (`pipeline::classify::radar_key`).
    pub radar: String,
    /// The recording's duration, s.
    pub duration_s: f64,
    /// `rotorsift:labels_complete`.
    pub labels_complete: bool,
    /// Labels of the recording's annotations, in order (`id_annotation` indexes them).
    pub targets: Vec<String>,
    /// Fingerprint of the settings (and channel) the features were made with.
    pub settings: String,
    /// Its tracks, in start order.
    pub tracks: Vec<TableTrack>,
}

impl RecordingTable {
    /// The label of the annotation a track matches.
    pub fn label_of(&self, t: &TableTrack) -> Option<&str> {
        t.annotation
            .and_then(|i| self.targets.get(i))
            .map(String::as_str)
    }
}

/// Quotes a CSV field when it holds a comma, quote or newline (RFC 4180).
fn field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// The header line (no newline).
pub fn header() -> String {
    let mut cols: Vec<&str> = ID_COLUMNS.to_vec();
    cols.extend(FEATURES.iter().map(|f| f.name));
    cols.join(",")
}

/// The CSV text: header and rows.
pub fn to_csv(tables: &[RecordingTable]) -> String {
    let mut out = header();
    out.push('\n');
    for r in tables {
        let rec = format!(
            "{},{},{},{},{}",
            field(&r.radar),
            r.duration_s,
            r.labels_complete,
            field(&r.targets.join(&TARGET_SEPARATOR.to_string())),
            field(&r.settings)
        );
        if r.tracks.is_empty() {
            out.push_str(&format!("{},,,,,,,,{rec}", field(&r.recording)));
            out.push_str(&",".repeat(FEATURES.len()));
            out.push('\n');
        }
        for t in &r.tracks {
            out.push_str(&format!(
                "{},{},{},{},{},{:.2},{},{},{rec}",
                field(&r.recording),
                field(r.label_of(t).unwrap_or("")),
                t.id,
                t.start_s,
                t.end_s,
                t.range_m,
                field(t.target_id.as_deref().unwrap_or("")),
                t.annotation.map(|i| i.to_string()).unwrap_or_default(),
            ));
            for v in &t.features {
                out.push_str(&format!(",{v}"));
            }
            out.push('\n');
        }
    }
    out
}

/// The summary line `features` prints on stderr.
pub fn summary(tracks: usize, recordings: usize, out: &Path) -> String {
    format!(
        "rotorsift: {} track{} from {} recording{} written to {}",
        tracks,
        if tracks == 1 { "" } else { "s" },
        recordings,
        if recordings == 1 { "" } else { "s" },
        out.display()
    )
}

/// Splits CSV text into records of fields (RFC 4180: quoted fields may hold commas,
/// doubled quotes and newlines).
fn records(text: &str) -> std::result::Result<Vec<Vec<String>>, String> {
    let mut out = Vec::new();
    let mut rec = Vec::new();
    let mut cur = String::new();
    let mut chars = text.chars().peekable();
    let mut quoted = false;
    let mut line = 1usize;
    while let Some(c) = chars.next() {
        if quoted {
            match c {
                '"' if chars.peek() == Some(&'"') => {
                    chars.next();
                    cur.push('"');
                }
                '"' => quoted = false,
                _ => {
                    if c == '\n' {
                        line += 1;
                    }
                    cur.push(c)
                }
            }
            continue;
        }
        match c {
            '"' if cur.is_empty() => quoted = true,
            ',' => rec.push(std::mem::take(&mut cur)),
            '\r' if chars.peek() == Some(&'\n') => {}
            '\n' => {
                rec.push(std::mem::take(&mut cur));
                out.push(std::mem::take(&mut rec));
                line += 1;
            }
            _ => cur.push(c),
        }
    }
    if quoted {
        return Err(format!("line {line}: a quoted field is not closed"));
    }
    if !cur.is_empty() || !rec.is_empty() {
        rec.push(cur);
        out.push(rec);
    }
    Ok(out)
}

/// Reads a feature table written by [`to_csv`]; recordings in the order of their first
/// row. The header must be this build's (same identifier and feature columns).
pub fn from_csv(text: &str, path: &Path) -> Result<Vec<RecordingTable>> {
    let bad = |msg: String| Error::format(path, msg);
    let recs = records(text).map_err(bad)?;
    let Some((head, rows)) = recs.split_first() else {
        return Err(bad("empty file: not a feature table".into()));
    };
    let want: Vec<String> = header().split(',').map(String::from).collect();
    if head != &want {
        let i = (0..want.len().max(head.len()))
            .find(|&i| head.get(i) != want.get(i))
            .unwrap_or(0);
        return Err(bad(format!(
            "not a feature table of this build: column {} is `{}`, expected `{}` (remake it with `rotorsift features`)",
            i + 1,
            head.get(i).map(String::as_str).unwrap_or("(none)"),
            want.get(i).map(String::as_str).unwrap_or("(none)")
        )));
    }
    let n_id = ID_COLUMNS.len();
    let mut out: Vec<RecordingTable> = Vec::new();
    for (k, r) in rows.iter().enumerate() {
        let line = k + 2;
        if r.len() == 1 && r[0].is_empty() {
            continue;
        }
        if r.len() != want.len() {
            return Err(bad(format!(
                "row {line}: {} fields, expected {}",
                r.len(),
                want.len()
            )));
        }
        let num = |i: usize| -> Result<f64> {
            r[i].parse::<f64>().map_err(|_| {
                bad(format!(
                    "row {line}: column `{}`: `{}` is not a number",
                    want[i], r[i]
                ))
            })
        };
        let int = |i: usize| -> Result<usize> {
            r[i].parse::<usize>().map_err(|_| {
                bad(format!(
                    "row {line}: column `{}`: `{}` is not a whole number",
                    want[i], r[i]
                ))
            })
        };
        let labels_complete = match r[10].as_str() {
            "true" => true,
            "false" => false,
            v => {
                return Err(bad(format!(
                    "row {line}: column `id_labels_complete`: `{v}`, expected true or false"
                )))
            }
        };
        let targets: Vec<String> = if r[11].is_empty() {
            Vec::new()
        } else {
            r[11].split(TARGET_SEPARATOR).map(String::from).collect()
        };
        let rec = RecordingTable {
            recording: r[0].clone(),
            radar: r[8].clone(),
            duration_s: num(9)?,
            labels_complete,
            targets,
            settings: r[12].clone(),
            tracks: Vec::new(),
        };
        let idx = match out.iter().position(|t| t.recording == rec.recording) {
            Some(i) => {
                let t = &out[i];
                if (
                    &t.radar,
                    t.duration_s,
                    t.labels_complete,
                    &t.targets,
                    &t.settings,
                ) != (
                    &rec.radar,
                    rec.duration_s,
                    rec.labels_complete,
                    &rec.targets,
                    &rec.settings,
                ) {
                    return Err(bad(format!(
                        "row {line}: recording {} differs from its earlier rows (radar, duration, labels or settings)",
                        rec.recording
                    )));
                }
                i
            }
            None => {
                out.push(rec);
                out.len() - 1
            }
        };
        if r[2].is_empty() {
            continue; // a recording with no track
        }
        let annotation = if r[7].is_empty() {
            None
        } else {
            let i = int(7)?;
            if i >= out[idx].targets.len() {
                return Err(bad(format!(
                    "row {line}: id_annotation {i}: the recording has {} annotations",
                    out[idx].targets.len()
                )));
            }
            Some(i)
        };
        let features = (n_id..want.len()).map(num).collect::<Result<Vec<f64>>>()?;
        let track = TableTrack {
            id: int(2)?,
            start_s: num(3)?,
            end_s: num(4)?,
            range_m: num(5)?,
            annotation,
            target_id: (!r[6].is_empty()).then(|| r[6].clone()),
            features,
        };
        out[idx].tracks.push(track);
    }
    Ok(out)
}

/// Reads a feature table file (at most `limits::MAX_TABLE_BYTES`).
pub fn read(path: &Path) -> Result<Vec<RecordingTable>> {
    let len = std::fs::metadata(path)
        .map_err(|e| Error::io(path, e))?
        .len();
    if len > crate::limits::MAX_TABLE_BYTES {
        return Err(Error::format(
            path,
            format!(
                "{len} bytes: a feature table is at most {} bytes",
                crate::limits::MAX_TABLE_BYTES
            ),
        ));
    }
    let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
    from_csv(&text, path)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn table() -> Vec<RecordingTable> {
        let n = FEATURES.len();
        vec![
            RecordingTable {
                recording: "a,b \"c\".sigmf-meta".into(),
                radar: "fmcw-beat 24.000 GHz N256 T100.0us cell0.500m".into(),
                duration_s: 2.5,
                labels_complete: true,
                targets: vec!["bird".into(), "rotorcraft".into()],
                settings: "0123456789abcdef".into(),
                tracks: vec![TableTrack {
                    id: 3,
                    start_s: 0.1 + 0.2,
                    end_s: 1.0 / 3.0,
                    range_m: 12.0,
                    annotation: Some(1),
                    target_id: Some("q1".into()),
                    features: (0..n).map(|i| (i as f64).sqrt() * 1e-7 - 3.0).collect(),
                }],
            },
            RecordingTable {
                recording: "empty.sigmf-meta".into(),
                radar: "r".into(),
                duration_s: 1.0,
                labels_complete: false,
                targets: vec![],
                settings: "0123456789abcdef".into(),
                tracks: vec![],
            },
        ]
    }

    /// Every value reads back bit for bit (Rust's shortest round-trip float formatting,
    /// common practice), RFC 4180 quoting included, and a trackless recording survives.
    #[test]
    fn table_reads_back_exactly() {
        let t = table();
        let text = to_csv(&t);
        let back = from_csv(&text, Path::new("t.csv")).unwrap();
        assert_eq!(back, t);
    }

    #[test]
    fn other_header_is_refused() {
        let text = to_csv(&table()).replacen("id_radar", "id_radio", 1);
        let e = from_csv(&text, Path::new("t.csv")).unwrap_err().to_string();
        assert!(
            e.contains("column 9 is `id_radio`, expected `id_radar`"),
            "{e}"
        );
    }
}
