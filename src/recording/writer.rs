//! Streaming SigMF writer: chirps are appended to a temporary data file; `finish` writes
//! the metadata and renames both into place, so a failed run never leaves a half-written
//! recording or destroys an earlier one.

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

use rustfft::num_complex::Complex32;
use serde_json::{Map, Value};

use super::meta::{to_json, Annotation, DataType};
use super::params::RadarParams;
use super::reader::encode;
use crate::error::{Error, Result};

/// Writes one recording `BASE.sigmf-data` + `BASE.sigmf-meta`.
pub struct RecordingWriter {
    base: PathBuf,
    tmp_data: PathBuf,
    out: BufWriter<File>,
    params: RadarParams,
    datatype: DataType,
    scale: f32,
    chirps: usize,
    buf: Vec<u8>,
}

impl RecordingWriter {
    /// Starts a recording at `base` (no extension). Samples are multiplied by `scale`
    /// before encoding (integer formats saturate at full scale 1.0).
    pub fn create(
        base: &Path,
        params: &RadarParams,
        datatype: DataType,
        scale: f32,
    ) -> Result<Self> {
        params.check()?;
        let tmp_data = with_suffix(base, ".sigmf-data.tmp");
        let f = File::create(&tmp_data).map_err(|e| Error::io(&tmp_data, e))?;
        Ok(RecordingWriter {
            base: base.to_path_buf(),
            tmp_data,
            out: BufWriter::with_capacity(1 << 16, f),
            params: params.clone(),
            datatype,
            scale,
            chirps: 0,
            buf: Vec::new(),
        })
    }

    /// Appends whole chirps (length a multiple of N).
    pub fn write_chirps(&mut self, samples: &[Complex32]) -> Result<()> {
        let n = self.params.samples_per_chirp;
        if samples.len() % n != 0 {
            return Err(Error::Invalid(format!(
                "write_chirps: {} samples is not a whole number of {n}-sample chirps",
                samples.len()
            )));
        }
        self.buf.clear();
        for &z in samples {
            encode(self.datatype, z * self.scale, &mut self.buf);
        }
        self.out
            .write_all(&self.buf)
            .map_err(|e| Error::io(&self.tmp_data, e))?;
        self.chirps += samples.len() / n;
        Ok(())
    }

    /// Chirps written so far.
    pub fn chirps(&self) -> usize {
        self.chirps
    }

    /// Writes the metadata and moves both files into place; returns the meta path.
    pub fn finish(
        self,
        annotations: &[Annotation],
        extra_global: &Map<String, Value>,
    ) -> Result<PathBuf> {
        let RecordingWriter {
            base,
            tmp_data,
            out,
            params,
            datatype,
            ..
        } = self;
        let f = out
            .into_inner()
            .map_err(|e| Error::io(&tmp_data, e.into_error()))?;
        f.sync_all().map_err(|e| Error::io(&tmp_data, e))?;
        drop(f);
        let mut anns = annotations.to_vec();
        anns.sort_by_key(|a| (a.chirp_start, a.chirp_count));
        let meta = to_json(&params, datatype, &anns, extra_global);
        let meta_path = with_suffix(&base, ".sigmf-meta");
        let data_path = with_suffix(&base, ".sigmf-data");
        let text =
            serde_json::to_string_pretty(&meta).map_err(|e| Error::Invalid(e.to_string()))?;
        write_atomic(&meta_path, text.as_bytes())?;
        std::fs::rename(&tmp_data, &data_path).map_err(|e| Error::io(&data_path, e))?;
        Ok(meta_path)
    }
}

/// `base` with `suffix` appended to its file name.
pub fn with_suffix(base: &Path, suffix: &str) -> PathBuf {
    let mut s = base.as_os_str().to_os_string();
    s.push(suffix);
    PathBuf::from(s)
}

/// Writes `bytes` to `path` through a temporary file in the same directory and a rename.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    let tmp = with_suffix(path, ".tmp");
    let mut f = File::create(&tmp).map_err(|e| Error::io(&tmp, e))?;
    f.write_all(bytes).map_err(|e| Error::io(&tmp, e))?;
    f.sync_all().map_err(|e| Error::io(&tmp, e))?;
    drop(f);
    std::fs::rename(&tmp, path).map_err(|e| Error::io(path, e))
}
