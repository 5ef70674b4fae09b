//! Radar recordings: SigMF with the `rotorsift` extension (docs/recording-format.md).
//! [`RecordingMeta`] parses and validates the metadata, [`ChirpReader`] streams blocks of
//! chirps, [`RecordingWriter`] writes recordings atomically, [`RadarParams`] holds the
//! radar settings and their derived figures; [`adopt`] makes a rotorsift recording out of a
//! plain SigMF recording or a raw IQ file.

pub mod adopt;
mod input;
mod meta;
mod params;
mod reader;
mod writer;

pub use crate::atomic::write_atomic;
pub use input::resolve_inputs;
pub use meta::{data_path_of, to_json, Annotation, DataType, RecordingMeta};
pub use params::{RadarParams, RangeAxis, Waveform};
pub use reader::{
    decode_checked, scan_samples, ChirpBlock, ChirpReader, SampleStats, MAX_SAMPLE_MAGNITUDE,
};
pub use writer::{with_suffix, RecordingWriter};
