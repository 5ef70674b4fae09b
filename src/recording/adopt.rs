//! `adopt`: makes a rotorsift recording out of a plain SigMF recording (a `.sigmf-meta` and
//! `.sigmf-data` without the `rotorsift:` keys) or a raw IQ file, with the radar's settings
//! from a small TOML file (docs/recording-format.md, "Bring your own recordings").
//!
//! The radar file holds the `rotorsift:` global keys without their prefix (`waveform`,
//! `samples_per_chirp`, `chirp_interval_s`, `sweep_bandwidth_hz`, `sweep_duration_s`,
//! `range_cell_m`, `range_start_m`, `site`, `labels_complete`) and, for a raw IQ file that
//! has no metadata, the SigMF ones (`datatype`, `sample_rate_hz`, `carrier_hz`,
//! `num_channels`, optionally `datetime`). Keys the input's metadata already has are kept;
//! where both give a value and they differ, adopt refuses, naming the key. The merged
//! metadata is checked by the reader's own validation ([`RecordingMeta::from_json`]) before
//! anything is written; then the samples are put beside it (hard-linked where the file
//! system allows, else copied) and the metadata is written, both through the atomic writer.

use std::path::{Path, PathBuf};

use serde_json::{json, Map, Value};

use super::meta::{data_path_of, DataType, RecordingMeta};
use super::writer::with_suffix;
use crate::atomic::{link_atomic, write_atomic, AtomicFile};
use crate::error::{Error, Result};

/// Largest radar file read, bytes: a radar file is a dozen lines (the same cap as a scene
/// file, [`crate::limits::MAX_SCENE_BYTES`]).
pub const MAX_RADAR_FILE_BYTES: u64 = crate::limits::MAX_SCENE_BYTES;

/// SigMF version written into the metadata of a raw IQ file (the version `simulate`
/// writes, docs/recording-format.md).
const RAW_SIGMF_VERSION: &str = "1.2.0";

/// Where a radar-file key goes in the SigMF metadata.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Place {
    Global,
    Capture,
}

/// The keys a radar file may hold: its name, the SigMF key it sets, and where.
const RADAR_KEYS: [(&str, &str, Place); 14] = [
    ("waveform", "rotorsift:waveform", Place::Global),
    (
        "samples_per_chirp",
        "rotorsift:samples_per_chirp",
        Place::Global,
    ),
    (
        "chirp_interval_s",
        "rotorsift:chirp_interval_s",
        Place::Global,
    ),
    (
        "sweep_bandwidth_hz",
        "rotorsift:sweep_bandwidth_hz",
        Place::Global,
    ),
    (
        "sweep_duration_s",
        "rotorsift:sweep_duration_s",
        Place::Global,
    ),
    ("range_cell_m", "rotorsift:range_cell_m", Place::Global),
    ("range_start_m", "rotorsift:range_start_m", Place::Global),
    ("site", "rotorsift:site", Place::Global),
    (
        "labels_complete",
        "rotorsift:labels_complete",
        Place::Global,
    ),
    ("datatype", "core:datatype", Place::Global),
    ("sample_rate_hz", "core:sample_rate", Place::Global),
    ("num_channels", "core:num_channels", Place::Global),
    ("carrier_hz", "core:frequency", Place::Capture),
    ("datetime", "core:datetime", Place::Capture),
];

/// What `adopt` wrote.
#[derive(Debug, Clone)]
pub struct Adopted {
    /// The new `.sigmf-meta`.
    pub meta_path: PathBuf,
    /// The samples beside it.
    pub data_path: PathBuf,
    /// True when the samples were hard-linked (or already in place), false when copied.
    pub linked: bool,
    /// The recording as the reader sees it.
    pub meta: RecordingMeta,
}

/// The input: its metadata file (none for a raw IQ file) and its samples.
struct Input {
    meta: Option<PathBuf>,
    data: PathBuf,
    name: String,
}

fn strip_suffix<'a>(s: &'a str, suffix: &str) -> Option<&'a str> {
    s.strip_suffix(suffix)
}

/// Decides what `input` is: a SigMF recording (by either file or its base name) or a raw
/// IQ file.
fn classify_input(input: &Path) -> Result<Input> {
    let text = input.to_string_lossy().into_owned();
    let file_name = input
        .file_name()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default();
    let base_name = |suffix: &str| {
        strip_suffix(&file_name, suffix)
            .unwrap_or(&file_name)
            .to_string()
    };
    if text.ends_with(".sigmf-meta") {
        if !input.is_file() {
            return Err(Error::format(input, "no such metadata file"));
        }
        return Ok(Input {
            meta: Some(input.to_path_buf()),
            data: data_path_of(input),
            name: base_name(".sigmf-meta"),
        });
    }
    if text.ends_with(".sigmf-data") {
        let meta = input.with_extension("sigmf-meta");
        if !input.is_file() {
            return Err(Error::format(input, "no such sample file"));
        }
        return Ok(Input {
            meta: meta.is_file().then_some(meta),
            data: input.to_path_buf(),
            name: base_name(".sigmf-data"),
        });
    }
    let meta = with_suffix(input, ".sigmf-meta");
    if meta.is_file() {
        return Ok(Input {
            data: data_path_of(&meta),
            meta: Some(meta),
            name: file_name,
        });
    }
    if input.is_file() {
        let name = input
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or(file_name);
        return Ok(Input {
            meta: None,
            data: input.to_path_buf(),
            name,
        });
    }
    Err(Error::format(
        input,
        "no such file (expected NAME.sigmf-meta, NAME.sigmf-data, NAME, or a raw IQ file)",
    ))
}

/// The radar file's keys as SigMF keys with JSON values, in the file's key order.
fn read_radar(radar: &Path) -> Result<Vec<(&'static str, &'static str, Place, Value)>> {
    let text = crate::limits::read_text_capped(radar, MAX_RADAR_FILE_BYTES, "radar file")?;
    let table: toml::Table = text.parse().map_err(|e: toml::de::Error| {
        Error::format(
            radar,
            format!("not valid TOML: {}", e.message().replace('\n', " ")),
        )
    })?;
    let mut out = Vec::new();
    for (key, v) in &table {
        let &(name, sigmf, place) =
            RADAR_KEYS
                .iter()
                .find(|(k, _, _)| k == key)
                .ok_or_else(|| {
                    Error::format(
                        radar,
                        format!(
                            "unknown key `{key}`; expected one of {}",
                            RADAR_KEYS.map(|k| k.0).join(", ")
                        ),
                    )
                })?;
        let value = match v {
            toml::Value::String(s) => json!(s),
            toml::Value::Integer(i) => json!(i),
            toml::Value::Float(f) => json!(f),
            toml::Value::Boolean(b) => json!(b),
            other => {
                return Err(Error::format(
                    radar,
                    format!(
                        "`{key}` is a {}: expected a number, a string or true/false",
                        other.type_str()
                    ),
                ))
            }
        };
        out.push((name, sigmf, place, value));
    }
    Ok(out)
}

/// Whether two metadata values say the same: numbers equal to 1e-12 of their size (a
/// value written with fewer digits is the same setting), anything else exactly equal.
fn same_value(a: &Value, b: &Value) -> bool {
    match (a.as_f64(), b.as_f64()) {
        (Some(x), Some(y)) => x == y || (x - y).abs() <= 1e-12 * x.abs().max(y.abs()),
        _ => a == b,
    }
}

/// Bytes of one chirp of all channels, from the merged global keys (`None` while a key is
/// missing or malformed: the reader's validation then names it).
fn chirp_bytes(global: &Map<String, Value>) -> Option<(u64, u64, u64, &str)> {
    let dt_name = global.get("core:datatype")?.as_str()?;
    let dt = DataType::parse(dt_name)?;
    let n = global.get("rotorsift:samples_per_chirp")?.as_u64()?;
    let k = match global.get("core:num_channels") {
        None => 1,
        Some(v) => v.as_u64()?,
    };
    Some((n, k, dt.bytes_per_sample() as u64, dt.as_str()))
}

/// Makes `out_dir/NAME.sigmf-meta` + `.sigmf-data` from `input` (a SigMF recording or a raw
/// IQ file) with the radar settings of `radar`. NAME is `name` or the input's base name.
/// Nothing is written when a key conflicts, the merged metadata fails validation, or the
/// sample file is not a whole number of chirps.
pub fn adopt(input: &Path, radar: &Path, out_dir: &Path, name: Option<&str>) -> Result<Adopted> {
    let inp = classify_input(input)?;
    let keys = read_radar(radar)?;
    let mut root = match &inp.meta {
        Some(m) => {
            let text =
                crate::limits::read_text_capped(m, crate::limits::MAX_META_BYTES, "metadata file")?;
            let v: Value = serde_json::from_str(&text)
                .map_err(|e| Error::format(m, format!("not valid JSON: {e}")))?;
            crate::limits::check_json_depth(&v, m)?;
            if !v.get("global").is_some_and(Value::is_object) {
                return Err(Error::format(m, "missing object \"global\""));
            }
            v
        }
        None => {
            for need in ["datatype", "carrier_hz"] {
                if !keys.iter().any(|k| k.0 == need) {
                    return Err(Error::format(
                        radar,
                        format!(
                            "lacks `{need}`, which a raw IQ file ({}) needs: it has no SigMF metadata",
                            inp.data.display()
                        ),
                    ));
                }
            }
            json!({
                "global": {"core:version": RAW_SIGMF_VERSION},
                "captures": [{"core:sample_start": 0}],
                "annotations": [],
            })
        }
    };
    let source = inp
        .meta
        .clone()
        .unwrap_or_else(|| inp.data.clone())
        .display()
        .to_string();
    let obj = root
        .as_object_mut()
        .ok_or_else(|| Error::format(&source, "metadata is not a JSON object"))?;
    // captures[0] (made when absent: SigMF allows an empty list, rotorsift needs one)
    let captures = obj.entry("captures").or_insert_with(|| json!([]));
    let Some(list) = captures.as_array_mut() else {
        return Err(Error::format(&source, "\"captures\" is not an array"));
    };
    if list.is_empty() {
        list.push(json!({"core:sample_start": 0}));
    }
    if !list[0].is_object() {
        return Err(Error::format(&source, "captures[0] is not an object"));
    }
    for (name_in_file, sigmf, place, value) in &keys {
        let target = match place {
            Place::Global => obj.get_mut("global"),
            Place::Capture => obj.get_mut("captures").and_then(|c| c.get_mut(0)),
        }
        .and_then(Value::as_object_mut)
        .expect("global and captures[0] are objects (checked above)");
        match target.get(*sigmf) {
            Some(old) if !old.is_null() => {
                if !same_value(old, value) {
                    let at = if *place == Place::Global {
                        "global"
                    } else {
                        "captures[0]"
                    };
                    return Err(Error::Invalid(format!(
                        "{}: `{name_in_file}` = {value} differs from {at} {sigmf} = {old} in {source}; make them agree or drop the key from the radar file",
                        radar.display()
                    )));
                }
            }
            _ => {
                target.insert((*sigmf).to_string(), value.clone());
            }
        }
    }
    // the extension declaration
    let global = obj
        .get_mut("global")
        .and_then(Value::as_object_mut)
        .expect("global is an object (checked above)");
    let exts = global.entry("core:extensions").or_insert_with(|| json!([]));
    let Some(exts) = exts.as_array_mut() else {
        return Err(Error::format(
            &source,
            "global core:extensions is not an array",
        ));
    };
    if !exts
        .iter()
        .any(|e| e.get("name").and_then(Value::as_str) == Some("rotorsift"))
    {
        exts.push(json!({"name": "rotorsift", "version": "1.0.0", "optional": false}));
    }

    // the sample file: whole chirps of all channels
    let data_len = std::fs::metadata(&inp.data)
        .map_err(|e| Error::io(&inp.data, e))?
        .len();
    if let Some((n, k, b, dt)) = chirp_bytes(global) {
        let per_chirp = n * k * b;
        if per_chirp > 0 && (data_len == 0 || data_len % per_chirp != 0) {
            return Err(Error::format(
                &inp.data,
                format!(
                    "{data_len} bytes is not a whole number of chirps ({n} samples × {k} channel(s) × {b} bytes of {dt} = {per_chirp} bytes a chirp)"
                ),
            ));
        }
    }

    let name = name.map(str::to_string).unwrap_or(inp.name);
    if name.is_empty() || name.contains(['/', '\\']) {
        return Err(Error::Invalid(format!(
            "--name {name:?}: expected a file name without folders"
        )));
    }
    let base = out_dir.join(&name);
    let meta_path = with_suffix(&base, ".sigmf-meta");
    let data_path = with_suffix(&base, ".sigmf-data");
    let text = serde_json::to_string_pretty(&root).map_err(|e| Error::Invalid(e.to_string()))?;
    // the reader's validation, before anything is written
    RecordingMeta::from_json(&text, Path::new(&source), data_len).map_err(|e| match e {
        Error::Format { path, msg } => Error::Invalid(format!(
            "{} with {}: {msg}",
            path.display(),
            radar.display()
        )),
        other => other,
    })?;

    std::fs::create_dir_all(out_dir).map_err(|e| Error::io(out_dir, e))?;
    let same_file = match (inp.data.canonicalize(), data_path.canonicalize()) {
        (Ok(a), Ok(b)) => a == b,
        _ => false,
    };
    let linked = same_file || link_atomic(&inp.data, &data_path)?;
    if !linked {
        let mut src = std::fs::File::open(&inp.data).map_err(|e| Error::io(&inp.data, e))?;
        let mut out = AtomicFile::create(&data_path)?;
        std::io::copy(&mut src, &mut out).map_err(|e| Error::io(&data_path, e))?;
        out.commit()?;
    }
    write_atomic(&meta_path, format!("{text}\n").as_bytes())?;
    let meta = RecordingMeta::open(&meta_path)?;
    Ok(Adopted {
        meta_path,
        data_path,
        linked,
        meta,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_written_with_other_digits_are_the_same_setting() {
        assert!(same_value(&json!(24.0e9), &json!(24000000000u64)));
        assert!(same_value(&json!(0.1), &json!(0.1000000000000001)));
        assert!(!same_value(&json!(0.1), &json!(0.1001)));
        assert!(!same_value(&json!("ci16_le"), &json!("cf32_le")));
        assert!(!same_value(&json!(true), &json!(1)));
    }

    #[test]
    fn every_radar_key_is_documented_once() {
        let mut names: Vec<&str> = RADAR_KEYS.iter().map(|k| k.0).collect();
        names.sort_unstable();
        names.dedup();
        assert_eq!(names.len(), RADAR_KEYS.len());
    }
}
