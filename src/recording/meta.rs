//! The metadata of one recording: the SigMF `.sigmf-meta` JSON with the `rotorsift`
//! extension (docs/recording-format.md), parsed and validated key by key. Every refusal names
//! the file, the key, the bad value and what was expected.

use std::path::{Path, PathBuf};

use serde_json::{json, Map, Value};

use super::params::{RadarParams, RangeAxis, Waveform};
use crate::error::{Error, Result};

/// Sample formats of `core:datatype` that rotorsift reads and writes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DataType {
    /// Complex float32, little endian (8 bytes a sample).
    Cf32Le,
    /// Complex float64, little endian (16 bytes).
    Cf64Le,
    /// Complex int16, little endian (4 bytes), full scale 32767.
    Ci16Le,
    /// Complex int8 (2 bytes), full scale 127.
    Ci8,
}

impl DataType {
    /// Parses a SigMF datatype string; `None` for anything rotorsift does not read.
    pub fn parse(s: &str) -> Option<Self> {
        match s {
            "cf32_le" => Some(DataType::Cf32Le),
            "cf64_le" => Some(DataType::Cf64Le),
            "ci16_le" => Some(DataType::Ci16Le),
            "ci8" | "ci8_le" => Some(DataType::Ci8),
            _ => None,
        }
    }
    /// The SigMF name.
    pub fn as_str(self) -> &'static str {
        match self {
            DataType::Cf32Le => "cf32_le",
            DataType::Cf64Le => "cf64_le",
            DataType::Ci16Le => "ci16_le",
            DataType::Ci8 => "ci8",
        }
    }
    /// Bytes of one complex sample of one channel.
    pub fn bytes_per_sample(self) -> usize {
        match self {
            DataType::Cf32Le => 8,
            DataType::Cf64Le => 16,
            DataType::Ci16Le => 4,
            DataType::Ci8 => 2,
        }
    }
}

/// One label: a SigMF annotation (docs/recording-format.md, "Labels").
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Annotation {
    /// First chirp of the interval.
    pub chirp_start: usize,
    /// Number of chirps in the interval.
    pub chirp_count: usize,
    /// `core:label`: the class name.
    pub label: String,
    /// `rotorsift:range_min_m`.
    pub range_min_m: f64,
    /// `rotorsift:range_max_m`.
    pub range_max_m: f64,
    /// `rotorsift:target_id`, if given.
    pub target_id: Option<String>,
    /// `rotorsift:truth`, if given (informational).
    pub truth: Option<Value>,
}

impl Annotation {
    /// Start time of the interval, s from the first chirp.
    pub fn start_s(&self, p: &RadarParams) -> f64 {
        p.chirp_time_s(self.chirp_start)
    }
    /// End time of the interval (exclusive), s.
    pub fn end_s(&self, p: &RadarParams) -> f64 {
        p.chirp_time_s(self.chirp_start + self.chirp_count)
    }
    /// A numeric field of `rotorsift:truth`, if present.
    pub fn truth_f64(&self, key: &str) -> Option<f64> {
        self.truth.as_ref()?.get(key)?.as_f64()
    }
    /// A boolean field of `rotorsift:truth`, if present.
    pub fn truth_bool(&self, key: &str) -> Option<bool> {
        self.truth.as_ref()?.get(key)?.as_bool()
    }
}

/// Everything a recording's metadata says, validated.
#[derive(Debug, Clone)]
pub struct RecordingMeta {
    /// The `.sigmf-meta` path.
    pub meta_path: PathBuf,
    /// The `.sigmf-data` path beside it.
    pub data_path: PathBuf,
    /// Sample format.
    pub datatype: DataType,
    /// `core:num_channels` (1 when absent); channels are interleaved per sample.
    pub num_channels: usize,
    /// Radar settings.
    pub params: RadarParams,
    /// M: chirps in the recording (per channel: samples / N).
    pub chirps: usize,
    /// Labels, in file order.
    pub annotations: Vec<Annotation>,
    /// `rotorsift:site`, if given.
    pub site: Option<String>,
    /// `rotorsift:labels_complete` (default false): every target that moved or hovered is
    /// annotated, so a track matching no annotation is background.
    pub labels_complete: bool,
    /// `core:datetime`, if given (ISO 8601, as SigMF writes it).
    pub datetime: Option<String>,
    /// `core:version`.
    pub sigmf_version: String,
}

impl RecordingMeta {
    /// Duration M T, s.
    pub fn duration_s(&self) -> f64 {
        self.chirps as f64 * self.params.chirp_interval_s
    }
    /// Labels per class, sorted by class name.
    pub fn label_counts(&self) -> std::collections::BTreeMap<String, usize> {
        let mut m = std::collections::BTreeMap::new();
        for a in &self.annotations {
            *m.entry(a.label.clone()).or_insert(0) += 1;
        }
        m
    }

    /// Reads and validates `NAME.sigmf-meta` and checks the data file's length.
    pub fn open(meta_path: &Path) -> Result<Self> {
        let text = crate::limits::read_text_capped(
            meta_path,
            crate::limits::MAX_META_BYTES,
            "metadata file",
        )?;
        let data_path = data_path_of(meta_path);
        let data_len = std::fs::metadata(&data_path)
            .map_err(|e| Error::io(&data_path, e))?
            .len();
        Self::from_json(&text, meta_path, data_len)
    }

    /// Parses metadata text; `data_len` is the data file's length in bytes.
    pub fn from_json(text: &str, meta_path: &Path, data_len: u64) -> Result<Self> {
        let bad = |msg: String| Error::format(meta_path, msg);
        let root: Value =
            serde_json::from_str(text).map_err(|e| bad(format!("not valid JSON: {e}")))?;
        crate::limits::check_json_depth(&root, meta_path)?;
        let global = root
            .get("global")
            .and_then(Value::as_object)
            .ok_or_else(|| bad("missing object \"global\"".into()))?;
        let g = Keys {
            obj: global,
            at: "global",
            path: meta_path,
        };

        let dt_name = g.str_req("core:datatype")?;
        let datatype = DataType::parse(dt_name).ok_or_else(|| {
            bad(format!(
                "global core:datatype = \"{dt_name}\": expected one of cf32_le, ci16_le, ci8, cf64_le"
            ))
        })?;
        let sigmf_version = g.str_req("core:version")?.to_string();
        if !sigmf_version.starts_with("1.") {
            return Err(bad(format!(
                "global core:version = \"{sigmf_version}\": expected a SigMF 1.x version"
            )));
        }
        check_extension(global, meta_path)?;

        let num_channels = match global.get("core:num_channels") {
            None => 1,
            Some(_) => g.uint_req("core:num_channels", 1)?,
        };
        if num_channels > crate::limits::MAX_CHANNELS {
            return Err(bad(format!(
                "global core:num_channels = {num_channels}: at most {} allowed",
                crate::limits::MAX_CHANNELS
            )));
        }
        let num_channels = num_channels as usize;
        let wf_name = g.str_req("rotorsift:waveform")?;
        let waveform = Waveform::parse(wf_name).ok_or_else(|| {
            bad(format!(
                "global rotorsift:waveform = \"{wf_name}\": expected \"fmcw-beat\" or \"range-profile\""
            ))
        })?;
        let n = g.uint_req("rotorsift:samples_per_chirp", 8)?;
        if n > crate::limits::MAX_SAMPLES_PER_CHIRP as u64 {
            return Err(bad(format!(
                "global rotorsift:samples_per_chirp = {n}: at most {} allowed",
                crate::limits::MAX_SAMPLES_PER_CHIRP
            )));
        }
        let n = n as usize;
        let t = g.pos_req("rotorsift:chirp_interval_s")?;
        let (sample_rate_hz, range_axis) = match waveform {
            Waveform::FmcwBeat => (
                g.pos_req("core:sample_rate")?,
                RangeAxis::FmcwBeat {
                    sweep_bandwidth_hz: g.pos_req("rotorsift:sweep_bandwidth_hz")?,
                    sweep_duration_s: g.pos_req("rotorsift:sweep_duration_s")?,
                },
            ),
            Waveform::RangeProfile => (
                g.num_opt("core:sample_rate")?.unwrap_or(0.0),
                RangeAxis::RangeProfile {
                    range_cell_m: g.pos_req("rotorsift:range_cell_m")?,
                    range_start_m: g.num_opt("rotorsift:range_start_m")?.unwrap_or(0.0),
                },
            ),
        };

        let captures = root
            .get("captures")
            .and_then(Value::as_array)
            .ok_or_else(|| bad("missing array \"captures\"".into()))?;
        let cap0 = captures.first().and_then(Value::as_object).ok_or_else(|| {
            bad("captures is empty: expected captures[0] with core:frequency".into())
        })?;
        let carrier_hz = Keys {
            obj: cap0,
            at: "captures[0]",
            path: meta_path,
        }
        .pos_req("core:frequency")?;

        let params = RadarParams {
            carrier_hz,
            sample_rate_hz,
            samples_per_chirp: n,
            chirp_interval_s: t,
            range_axis,
        };
        params.check().map_err(|e| bad(format!("global {e}")))?;

        let frame = (datatype.bytes_per_sample() * num_channels) as u64;
        if data_len % frame != 0 {
            return Err(bad(format!(
                "data file length {data_len} bytes is not a whole number of {} samples × {num_channels} channel(s) of core:num_channels ({frame} bytes each)",
                datatype.as_str()
            )));
        }
        let samples = data_len / frame;
        if samples % n as u64 != 0 {
            return Err(bad(format!(
                "data file holds {samples} samples per channel, not a whole number of chirps of rotorsift:samples_per_chirp = {n}"
            )));
        }
        let chirps = (samples / n as u64) as usize;
        if chirps == 0 {
            return Err(bad("data file holds no chirps".into()));
        }

        let mut annotations = Vec::new();
        if let Some(list) = root.get("annotations") {
            let list = list
                .as_array()
                .ok_or_else(|| bad("\"annotations\" is not an array".into()))?;
            if list.len() > crate::limits::MAX_ANNOTATIONS {
                return Err(bad(format!(
                    "annotations has {} entries: at most {} allowed",
                    list.len(),
                    crate::limits::MAX_ANNOTATIONS
                )));
            }
            for (i, a) in list.iter().enumerate() {
                let at = format!("annotations[{i}]");
                let obj = a
                    .as_object()
                    .ok_or_else(|| bad(format!("{at} is not an object")))?;
                annotations.push(parse_annotation(
                    Keys {
                        obj,
                        at: &at,
                        path: meta_path,
                    },
                    n,
                    chirps,
                )?);
            }
        }
        let site = global
            .get("rotorsift:site")
            .and_then(Value::as_str)
            .map(str::to_string);
        let labels_complete = match global.get("rotorsift:labels_complete") {
            None | Some(Value::Null) => false,
            Some(Value::Bool(b)) => *b,
            Some(other) => {
                return Err(bad(format!(
                    "\"rotorsift:labels_complete\" is {other}: expected true or false"
                )))
            }
        };
        let datetime = root
            .get("captures")
            .and_then(Value::as_array)
            .and_then(|c| c.first())
            .and_then(|c| c.get("core:datetime"))
            .or_else(|| global.get("core:datetime"))
            .and_then(Value::as_str)
            .map(str::to_string);
        Ok(RecordingMeta {
            meta_path: meta_path.to_path_buf(),
            data_path: data_path_of(meta_path),
            datatype,
            num_channels,
            params,
            chirps,
            annotations,
            site,
            labels_complete,
            datetime,
            sigmf_version,
        })
    }
}

/// The `.sigmf-data` path beside a `.sigmf-meta` path.
pub fn data_path_of(meta_path: &Path) -> PathBuf {
    meta_path.with_extension("sigmf-data")
}

fn check_extension(global: &Map<String, Value>, path: &Path) -> Result<()> {
    let exts = global.get("core:extensions").and_then(Value::as_array);
    let found = exts.into_iter().flatten().any(|e| {
        e.get("name").and_then(Value::as_str) == Some("rotorsift")
            && e.get("version")
                .and_then(Value::as_str)
                .is_some_and(|v| v.starts_with("1."))
    });
    if found {
        Ok(())
    } else {
        Err(Error::format(
            path,
            "global core:extensions lacks {\"name\": \"rotorsift\", \"version\": \"1.x\"}: not a rotorsift recording",
        ))
    }
}

fn parse_annotation(k: Keys<'_>, n: usize, chirps: usize) -> Result<Annotation> {
    let start = k.uint_req("core:sample_start", 0)?;
    let count = match k.obj.get("core:sample_count") {
        None => (chirps * n) as u64 - start.min((chirps * n) as u64),
        Some(_) => k.uint_req("core:sample_count", 1)?,
    };
    for (key, v) in [("core:sample_start", start), ("core:sample_count", count)] {
        if v % n as u64 != 0 {
            return Err(k.bad(format!(
                "{key} = {v}: expected a whole number of chirps (a multiple of samples_per_chirp = {n})"
            )));
        }
    }
    let (c0, cn) = ((start / n as u64) as usize, (count / n as u64) as usize);
    if c0 + cn > chirps {
        return Err(k.bad(format!(
            "core:sample_start + core:sample_count = {}: beyond the recording's {} samples",
            start + count,
            chirps * n
        )));
    }
    let label = k.str_req("core:label")?;
    if label.is_empty()
        || !label
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_')
    {
        return Err(k.bad(format!(
            "core:label = \"{label}\": expected letters, digits, '-' and '_' only"
        )));
    }
    let range_min_m = k.num_req("rotorsift:range_min_m")?;
    let range_max_m = k.num_req("rotorsift:range_max_m")?;
    if range_max_m < range_min_m || range_min_m < 0.0 {
        return Err(k.bad(format!(
            "rotorsift:range_min_m = {range_min_m}, rotorsift:range_max_m = {range_max_m}: expected 0 <= min <= max"
        )));
    }
    let target_id = match k.obj.get("rotorsift:target_id") {
        None | Some(Value::Null) => None,
        Some(Value::String(s)) => Some(s.clone()),
        Some(Value::Number(x)) => Some(x.to_string()),
        Some(v) => return Err(k.bad(format!("rotorsift:target_id = {v}: expected a string"))),
    };
    let truth = match k.obj.get("rotorsift:truth") {
        None | Some(Value::Null) => None,
        Some(v @ Value::Object(_)) => Some(v.clone()),
        Some(v) => return Err(k.bad(format!("rotorsift:truth = {v}: expected an object"))),
    };
    Ok(Annotation {
        chirp_start: c0,
        chirp_count: cn,
        label: label.to_string(),
        range_min_m,
        range_max_m,
        target_id,
        truth,
    })
}

/// Typed access to one JSON object's keys, with errors naming file, place and key.
struct Keys<'a> {
    obj: &'a Map<String, Value>,
    at: &'a str,
    path: &'a Path,
}

impl Keys<'_> {
    fn bad(&self, msg: String) -> Error {
        Error::format(self.path, format!("{} {msg}", self.at))
    }
    fn get(&self, key: &str) -> Result<&Value> {
        self.obj
            .get(key)
            .ok_or_else(|| self.bad(format!("lacks required key {key}")))
    }
    fn str_req(&self, key: &str) -> Result<&str> {
        let v = self.get(key)?;
        v.as_str()
            .ok_or_else(|| self.bad(format!("{key} = {v}: expected a string")))
    }
    fn num_req(&self, key: &str) -> Result<f64> {
        let v = self.get(key)?;
        match v.as_f64() {
            Some(x) if x.is_finite() => Ok(x),
            _ => Err(self.bad(format!("{key} = {v}: expected a number"))),
        }
    }
    fn num_opt(&self, key: &str) -> Result<Option<f64>> {
        match self.obj.get(key) {
            None | Some(Value::Null) => Ok(None),
            Some(_) => self.num_req(key).map(Some),
        }
    }
    fn pos_req(&self, key: &str) -> Result<f64> {
        let x = self.num_req(key)?;
        if x > 0.0 {
            Ok(x)
        } else {
            Err(self.bad(format!("{key} = {x}: expected a number > 0")))
        }
    }
    fn uint_req(&self, key: &str, min: u64) -> Result<u64> {
        let v = self.get(key)?;
        let x = v.as_u64().or_else(|| {
            v.as_f64()
                .filter(|f| *f >= 0.0 && f.fract() == 0.0 && *f < 9.0e15)
                .map(|f| f as u64)
        });
        match x {
            Some(x) if x >= min => Ok(x),
            _ => Err(self.bad(format!("{key} = {v}: expected an integer >= {min}"))),
        }
    }
}

/// Builds the metadata JSON of a recording (the inverse of [`RecordingMeta::from_json`]).
/// `extra_global` keys are merged into `global` (e.g. `rotorsift:site`, descriptions).
pub fn to_json(
    params: &RadarParams,
    datatype: DataType,
    annotations: &[Annotation],
    extra_global: &Map<String, Value>,
) -> Value {
    let n = params.samples_per_chirp as u64;
    let mut g = Map::new();
    g.insert("core:datatype".into(), json!(datatype.as_str()));
    g.insert("core:version".into(), json!("1.2.0"));
    g.insert("core:sample_rate".into(), json!(params.sample_rate_hz));
    g.insert("core:num_channels".into(), json!(1));
    g.insert(
        "core:extensions".into(),
        json!([{"name": "rotorsift", "version": "1.0.0", "optional": false}]),
    );
    g.insert(
        "rotorsift:waveform".into(),
        json!(params.waveform().as_str()),
    );
    g.insert("rotorsift:samples_per_chirp".into(), json!(n));
    g.insert(
        "rotorsift:chirp_interval_s".into(),
        json!(params.chirp_interval_s),
    );
    match params.range_axis {
        RangeAxis::FmcwBeat {
            sweep_bandwidth_hz,
            sweep_duration_s,
        } => {
            g.insert(
                "rotorsift:sweep_bandwidth_hz".into(),
                json!(sweep_bandwidth_hz),
            );
            g.insert("rotorsift:sweep_duration_s".into(), json!(sweep_duration_s));
        }
        RangeAxis::RangeProfile {
            range_cell_m,
            range_start_m,
        } => {
            g.insert("rotorsift:range_cell_m".into(), json!(range_cell_m));
            g.insert("rotorsift:range_start_m".into(), json!(range_start_m));
        }
    }
    for (k, v) in extra_global {
        g.insert(k.clone(), v.clone());
    }
    let anns: Vec<Value> = annotations
        .iter()
        .map(|a| {
            let mut o = Map::new();
            o.insert("core:sample_start".into(), json!(a.chirp_start as u64 * n));
            o.insert("core:sample_count".into(), json!(a.chirp_count as u64 * n));
            o.insert("core:label".into(), json!(a.label));
            o.insert("rotorsift:range_min_m".into(), json!(a.range_min_m));
            o.insert("rotorsift:range_max_m".into(), json!(a.range_max_m));
            if let Some(id) = &a.target_id {
                o.insert("rotorsift:target_id".into(), json!(id));
            }
            if let Some(t) = &a.truth {
                o.insert("rotorsift:truth".into(), t.clone());
            }
            Value::Object(o)
        })
        .collect();
    json!({
        "global": Value::Object(g),
        "captures": [{"core:sample_start": 0, "core:frequency": params.carrier_hz}],
        "annotations": anns,
    })
}
