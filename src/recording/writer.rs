//! Streaming SigMF writer: chirps are appended to an atomic data file
//! ([`crate::atomic::AtomicFile`]); `finish` moves the data file into place, then writes the
//! metadata the same way, so a failed or killed run never leaves a half-written recording
//! or a stray temporary, and an earlier recording of the same name stays whole until its
//! replacement is complete.

use std::path::{Path, PathBuf};

use rustfft::num_complex::Complex32;
use serde_json::{Map, Value};

use super::meta::{to_json, Annotation, DataType};
use super::params::RadarParams;
use super::reader::encode;
use crate::atomic::{write_atomic, AtomicFile};
use crate::error::{Error, Result};

/// Writes one recording `BASE.sigmf-data` + `BASE.sigmf-meta`.
pub struct RecordingWriter {
    base: PathBuf,
    out: AtomicFile,
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
        let out = AtomicFile::create(&with_suffix(base, ".sigmf-data"))?;
        Ok(RecordingWriter {
            base: base.to_path_buf(),
            out,
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
        self.out.write_all(&self.buf)?;
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
            out,
            params,
            datatype,
            ..
        } = self;
        let mut anns = annotations.to_vec();
        anns.sort_by_key(|a| (a.chirp_start, a.chirp_count));
        let meta = to_json(&params, datatype, &anns, extra_global);
        let meta_path = with_suffix(&base, ".sigmf-meta");
        let text =
            serde_json::to_string_pretty(&meta).map_err(|e| Error::Invalid(e.to_string()))?;
        out.commit()?;
        write_atomic(&meta_path, text.as_bytes())?;
        Ok(meta_path)
    }
}

/// `base` with `suffix` appended to its file name.
pub fn with_suffix(base: &Path, suffix: &str) -> PathBuf {
    let mut s = base.as_os_str().to_os_string();
    s.push(suffix);
    PathBuf::from(s)
}
