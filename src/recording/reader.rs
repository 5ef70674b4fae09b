//! Streaming reader: yields blocks of whole chirps of one channel without reading the whole
//! data file, so memory stays flat in recording length. One byte buffer is reused.
//! Bad samples are counted ([`SampleStats`]): a non-finite one (NaN, infinite, or so large
//! that its power overflows single precision) is replaced by 0 before anything else sees
//! it; a clipped one (an integer part at the format's full-scale extreme) is kept as is.

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

/// Magnitude of a float sample part beyond which it counts as non-finite: its power
/// (about 1e30 at most) and sums of many such powers stay inside single precision.
pub const MAX_SAMPLE_MAGNITUDE: f32 = 1.0e15;

/// Counts of bad samples (complex samples; one bad part makes the sample bad).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, serde::Serialize)]
pub struct SampleStats {
    /// Complex samples looked at.
    pub samples: u64,
    /// Samples with a NaN, infinite or out-of-range (beyond ±[`MAX_SAMPLE_MAGNITUDE`])
    /// part; each was replaced by 0.
    pub nonfinite: u64,
    /// Samples of an integer format with a part at full scale (ci16: -32768 or 32767;
    /// ci8: -128 or 127): the receiver was saturated. Float formats have none.
    pub clipped: u64,
}

impl SampleStats {
    /// Adds `other`'s counts.
    pub fn add(&mut self, other: &SampleStats) {
        self.samples += other.samples;
        self.nonfinite += other.nonfinite;
        self.clipped += other.clipped;
    }
}

/// Reads chirps of one channel from a recording's data file, block by block.
pub struct ChirpReader {
    file: BufReader<File>,
    meta: RecordingMeta,
    channel: usize,
    next_chirp: usize,
    bytes: Vec<u8>,
    stats: SampleStats,
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
            stats: SampleStats::default(),
        })
    }

    /// The recording's metadata.
    pub fn meta(&self) -> &RecordingMeta {
        &self.meta
    }

    /// Bad-sample counts of the chirps read so far (this channel).
    pub fn stats(&self) -> SampleStats {
        self.stats
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
        let chirps = max_chirps.min(self.meta.chirps.saturating_sub(self.next_chirp));
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
        decode_frames(
            dt,
            &self.bytes,
            frame,
            off,
            &mut block.data,
            &mut self.stats,
        );
        self.next_chirp += chirps;
        crate::progress::count_chirps(chirps);
        Ok(chirps)
    }
}

/// Decodes one complex sample at the start of `b`, counting it into `stats`: a
/// non-finite sample comes back as 0, a clipped one as stored.
pub fn decode_checked(dt: DataType, b: &[u8], stats: &mut SampleStats) -> Complex32 {
    stats.samples += 1;
    match dt {
        DataType::Ci16Le => {
            let full = |x: i16| x == i16::MIN || x == i16::MAX;
            if full(i16::from_le_bytes([b[0], b[1]])) || full(i16::from_le_bytes([b[2], b[3]])) {
                stats.clipped += 1;
            }
            decode(dt, b)
        }
        DataType::Ci8 => {
            let full = |x: u8| x as i8 == i8::MIN || x as i8 == i8::MAX;
            if full(b[0]) || full(b[1]) {
                stats.clipped += 1;
            }
            decode(dt, b)
        }
        DataType::Cf32Le | DataType::Cf64Le => {
            let z = decode(dt, b);
            let ok = |x: f32| x.is_finite() && x.abs() <= MAX_SAMPLE_MAGNITUDE;
            if ok(z.re) && ok(z.im) {
                z
            } else {
                stats.nonfinite += 1;
                Complex32::new(0.0, 0.0)
            }
        }
    }
}

/// Decodes the sample at byte `off` of every `frame` bytes of `bytes` onto `out`, counting
/// into `stats`: [`decode_checked`] on each, with one loop per data type (the common
/// integer types without a match or a counter update per sample).
fn decode_frames(
    dt: DataType,
    bytes: &[u8],
    frame: usize,
    off: usize,
    out: &mut Vec<Complex32>,
    stats: &mut SampleStats,
) {
    let frames = bytes.chunks_exact(frame);
    let count = frames.len();
    match dt {
        // one channel: frames of a fixed 4 bytes at offset 0, a loop that vectorises
        DataType::Ci16Le if frame == 4 && off == 0 => {
            decode_ci16::<true>(bytes.chunks_exact(4), 0, out, stats)
        }
        DataType::Ci16Le => decode_ci16::<false>(frames, off, out, stats),
        DataType::Ci8 => {
            let full = |x: i8| usize::from(x == i8::MIN || x == i8::MAX);
            let mut clipped = 0usize;
            out.extend(frames.map(|f| {
                let (re, im) = (f[off] as i8, f[off + 1] as i8);
                clipped += full(re) | full(im);
                Complex32::new(re as f32 / 127.0, im as f32 / 127.0)
            }));
            stats.samples += count as u64;
            stats.clipped += clipped as u64;
        }
        DataType::Cf32Le | DataType::Cf64Le => {
            out.extend(frames.map(|f| decode_checked(dt, &f[off..], stats)));
        }
    }
}

/// The ci16 samples at byte `off` of each frame onto `out`, counted into `stats`.
/// `ONE_CHANNEL`: frames of 4 bytes, `off` 0 — a build of its own with the offset a
/// constant, a loop that vectorises.
fn decode_ci16<'a, const ONE_CHANNEL: bool>(
    frames: impl ExactSizeIterator<Item = &'a [u8]>,
    off: usize,
    out: &mut Vec<Complex32>,
    stats: &mut SampleStats,
) {
    let off = if ONE_CHANNEL { 0 } else { off };
    let count = frames.len();
    let full = |x: i16| usize::from(x == i16::MIN || x == i16::MAX);
    let mut clipped = 0usize;
    out.extend(frames.map(|f| {
        let re = i16::from_le_bytes([f[off], f[off + 1]]);
        let im = i16::from_le_bytes([f[off + 2], f[off + 3]]);
        clipped += full(re) | full(im);
        Complex32::new(re as f32 / 32767.0, im as f32 / 32767.0)
    }));
    stats.samples += count as u64;
    stats.clipped += clipped as u64;
}

/// Counts the bad samples of every channel of a recording, reading its data file once
/// in blocks (memory flat in length).
pub fn scan_samples(meta: &RecordingMeta) -> Result<SampleStats> {
    let mut f = File::open(&meta.data_path).map_err(|e| Error::io(&meta.data_path, e))?;
    let bps = meta.datatype.bytes_per_sample();
    let mut buf = vec![0u8; bps * (1 << 16)];
    let mut stats = SampleStats::default();
    let mut left =
        meta.chirps as u64 * meta.params.samples_per_chirp as u64 * meta.num_channels as u64;
    while left > 0 {
        let k = left.min((buf.len() / bps) as u64) as usize;
        let b = &mut buf[..k * bps];
        f.read_exact(b).map_err(|e| Error::io(&meta.data_path, e))?;
        for s in b.chunks_exact(bps) {
            decode_checked(meta.datatype, s, &mut stats);
        }
        left -= k as u64;
    }
    Ok(stats)
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
