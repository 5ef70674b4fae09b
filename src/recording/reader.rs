//! Streaming reader: yields blocks of whole chirps of one channel without reading the whole
//! data file, so memory stays flat in recording length. One byte buffer is reused.

use std::fs::File;
use std::io::{BufReader, Read, Seek, SeekFrom};

use rustfft::num_complex::Complex32;

use super::meta::{DataType, RecordingMeta};
use crate::error::{Error, Result};

/// A block of consecutive chirps of one channel, chirp-major: sample n of chirp
/// `first_chirp + i` is `data[i * samples_per_chirp + n]`.
#[derive(Debug, Clone, Default)]
pub struct ChirpBlock {
    /// Index of the block's first chirp in the recording.
    pub first_chirp: usize,
    /// Chirps in the block.
    pub chirps: usize,
    /// N, samples per chirp.
    pub samples_per_chirp: usize,
    /// The samples (complex, as stored; integer formats scaled to full scale 1.0).
    pub data: Vec<Complex32>,
}

impl ChirpBlock {
    /// Samples of chirp `i` of the block.
    pub fn chirp(&self, i: usize) -> &[Complex32] {
        let n = self.samples_per_chirp;
        &self.data[i * n..(i + 1) * n]
    }
}

/// Reads chirps of one channel from a recording's data file, block by block.
pub struct ChirpReader {
    file: BufReader<File>,
    meta: RecordingMeta,
    channel: usize,
    next_chirp: usize,
    bytes: Vec<u8>,
}

impl ChirpReader {
    /// Opens the data file of `meta` for channel `channel`.
    pub fn open(meta: &RecordingMeta, channel: usize) -> Result<Self> {
        if channel >= meta.num_channels {
            return Err(Error::format(
                &meta.meta_path,
                format!(
                    "--channel {channel}: the recording has core:num_channels = {} (channels 0..{})",
                    meta.num_channels,
                    meta.num_channels - 1
                ),
            ));
        }
        let f = File::open(&meta.data_path).map_err(|e| Error::io(&meta.data_path, e))?;
        Ok(ChirpReader {
            file: BufReader::with_capacity(1 << 16, f),
            meta: meta.clone(),
            channel,
            next_chirp: 0,
            bytes: Vec::new(),
        })
    }

    /// The recording's metadata.
    pub fn meta(&self) -> &RecordingMeta {
        &self.meta
    }

    /// Positions the reader at chirp `m` (the next block starts there).
    pub fn seek_chirp(&mut self, m: usize) -> Result<()> {
        let m = m.min(self.meta.chirps);
        let frame = self.meta.datatype.bytes_per_sample() * self.meta.num_channels;
        let off = (m * self.meta.params.samples_per_chirp * frame) as u64;
        self.file
            .seek(SeekFrom::Start(off))
            .map_err(|e| Error::io(&self.meta.data_path, e))?;
        self.next_chirp = m;
        Ok(())
    }

    /// Fills `block` with up to `max_chirps` next chirps; returns the number read
    /// (0 at the end). `block.data` is resized, so one block can be reused.
    pub fn read_block(&mut self, block: &mut ChirpBlock, max_chirps: usize) -> Result<usize> {
        let n = self.meta.params.samples_per_chirp;
        let chirps = max_chirps.min(self.meta.chirps - self.next_chirp);
        let dt = self.meta.datatype;
        let nch = self.meta.num_channels;
        let frame = dt.bytes_per_sample() * nch;
        self.bytes.resize(chirps * n * frame, 0);
        self.file
            .read_exact(&mut self.bytes)
            .map_err(|e| Error::io(&self.meta.data_path, e))?;
        block.first_chirp = self.next_chirp;
        block.chirps = chirps;
        block.samples_per_chirp = n;
        block.data.clear();
        block.data.reserve(chirps * n);
        let off = self.channel * dt.bytes_per_sample();
        for s in self.bytes.chunks_exact(frame) {
            block.data.push(decode(dt, &s[off..]));
        }
        self.next_chirp += chirps;
        Ok(chirps)
    }
}

/// Decodes one complex sample at the start of `b`.
fn decode(dt: DataType, b: &[u8]) -> Complex32 {
    match dt {
        DataType::Cf32Le => Complex32::new(
            f32::from_le_bytes([b[0], b[1], b[2], b[3]]),
            f32::from_le_bytes([b[4], b[5], b[6], b[7]]),
        ),
        DataType::Cf64Le => {
            let mut re = [0u8; 8];
            let mut im = [0u8; 8];
            re.copy_from_slice(&b[0..8]);
            im.copy_from_slice(&b[8..16]);
            Complex32::new(f64::from_le_bytes(re) as f32, f64::from_le_bytes(im) as f32)
        }
        DataType::Ci16Le => Complex32::new(
            i16::from_le_bytes([b[0], b[1]]) as f32 / 32767.0,
            i16::from_le_bytes([b[2], b[3]]) as f32 / 32767.0,
        ),
        DataType::Ci8 => Complex32::new(b[0] as i8 as f32 / 127.0, b[1] as i8 as f32 / 127.0),
    }
}

/// Encodes one complex sample (integer formats: full scale 1.0, saturating).
pub(crate) fn encode(dt: DataType, z: Complex32, out: &mut Vec<u8>) {
    match dt {
        DataType::Cf32Le => {
            out.extend_from_slice(&z.re.to_le_bytes());
            out.extend_from_slice(&z.im.to_le_bytes());
        }
        DataType::Cf64Le => {
            out.extend_from_slice(&(z.re as f64).to_le_bytes());
            out.extend_from_slice(&(z.im as f64).to_le_bytes());
        }
        DataType::Ci16Le => {
            let q = |x: f32| ((x * 32767.0).round().clamp(-32768.0, 32767.0)) as i16;
            out.extend_from_slice(&q(z.re).to_le_bytes());
            out.extend_from_slice(&q(z.im).to_le_bytes());
        }
        DataType::Ci8 => {
            let q = |x: f32| ((x * 127.0).round().clamp(-128.0, 127.0)) as i8;
            out.push(q(z.re) as u8);
            out.push(q(z.im) as u8);
        }
    }
}
