//! Option groups the commands share (flattened into the command line by clap): which
//! channel of a recording, how to detect, which model. Each turns into the library's own
//! settings and checks them in one place.

use std::path::PathBuf;

use super::classify::Classifier;
use super::PipelineSettings;
use crate::cli_values::parse_probability;
use crate::cli_values::{parse_canceller, parse_cfar, parse_cpi, parse_on_off, parse_pfa};
use crate::detect::CfarKind;
use crate::error::Result;
use crate::frontend::Canceller;

/// Which part of each recording is read.
#[derive(clap::Args, Debug, Clone, Default, PartialEq, Eq)]
pub struct RecordingOptions {
    /// Channel to read (core:num_channels interleaves channels).
    #[arg(long, default_value_t = 0)]
    pub channel: usize,
}

/// Options of the detection path (defaults work on both waveforms without tuning).
#[derive(clap::Args, Debug, Clone, PartialEq)]
pub struct DetectOptions {
    /// The channel.
    #[command(flatten)]
    pub recording: RecordingOptions,
    /// Chirps per coherent processing interval (Doppler FFT length); 0 = automatic
    /// (about 25.6 ms, a power of two, at least 256).
    #[arg(long, default_value_t = 0, value_parser = parse_cpi)]
    pub cpi: usize,
    /// Chirps from one CPI to the next (0: half the CPI).
    #[arg(long, default_value_t = 0)]
    pub hop: usize,
    /// Clutter canceller: none, two-pulse, three-pulse.
    #[arg(long, default_value = "three-pulse", value_parser = parse_canceller)]
    pub canceller: Canceller,
    /// Phase-align each chirp to its predecessor before cancelling: on or off.
    #[arg(long, default_value = "on", value_parser = parse_on_off, action = clap::ArgAction::Set)]
    pub phase_align: bool,
    /// CFAR kind: ca (cell averaging) or os (ordered statistic).
    #[arg(long, default_value = "ca", value_parser = parse_cfar)]
    pub cfar: CfarKind,
    /// CFAR false-alarm probability per cell.
    #[arg(long, default_value_t = 1e-6, value_parser = parse_pfa)]
    pub pfa: f64,
}

impl DetectOptions {
    /// The pipeline settings these options make (feature settings at their defaults),
    /// checked.
    pub fn settings(&self) -> Result<PipelineSettings> {
        let mut s = PipelineSettings::default();
        let d = &mut s.detect;
        d.cpi_chirps = self.cpi;
        d.cpi_hop = self.hop;
        d.canceller = self.canceller;
        d.phase_align = self.phase_align;
        d.cfar.kind = self.cfar;
        d.cfar.pfa = self.pfa;
        s.detect.check()?;
        Ok(s)
    }
}

/// Which model, and how to use it.
#[derive(clap::Args, Debug, Clone, PartialEq)]
pub struct ModelOptions {
    /// Model file (JSON) from `rotorsift train`; the built-in model when absent.
    #[arg(long)]
    pub model: Option<PathBuf>,
    /// Tracks whose confidence is below this are labelled `unknown`.
    #[arg(long, default_value_t = 0.0, value_parser = parse_probability)]
    pub min_confidence: f64,
}

impl ModelOptions {
    /// Checks `--min-confidence` (a probability from 0 to 1).
    pub fn check(&self) -> Result<()> {
        if !(0.0..=1.0).contains(&self.min_confidence) {
            return Err(crate::Error::Invalid(format!(
                "--min-confidence {}: expected a probability in 0..1",
                self.min_confidence
            )));
        }
        Ok(())
    }

    /// The checked options' model: the file, or the built-in model.
    pub fn load(&self) -> Result<Classifier> {
        self.check()?;
        Classifier::load(self.model.as_deref())
    }
}

/// The recordings a command reads.
#[derive(clap::Args, Debug, Clone, PartialEq)]
pub struct Inputs {
    /// Recordings: NAME.sigmf-meta, NAME.sigmf-data, NAME, or directories.
    #[arg(required = true)]
    pub inputs: Vec<PathBuf>,
}

/// The labelled inputs `train` and `evaluate` read: recordings or feature tables.
#[derive(clap::Args, Debug, Clone, PartialEq)]
pub struct LabelledInputs {
    /// Labelled recordings: NAME.sigmf-meta, NAME.sigmf-data, NAME, or directories;
    /// or feature tables (FILE.csv written by `rotorsift features`).
    #[arg(required = true)]
    pub inputs: Vec<PathBuf>,
}

/// How results are printed.
#[derive(clap::Args, Debug, Clone, Copy, PartialEq)]
pub struct FormatOption {
    /// Output format.
    #[arg(long, value_enum, default_value_t = crate::report::Format::Table)]
    pub format: crate::report::Format,
}

/// `rotorsift simulate`: the scene, where its recordings go, the seed.
#[derive(clap::Args, Debug, Clone, PartialEq)]
pub struct SimulateOptions {
    /// The scene file (format: labelled-demo/scenes/EXAMPLE.toml).
    #[arg(long)]
    pub scene: PathBuf,
    /// Directory for the recordings (created if missing).
    #[arg(long)]
    pub out: PathBuf,
    /// Random seed (overrides the scene's seeds).
    #[arg(long)]
    pub seed: Option<u64>,
}

/// `rotorsift adopt`: the input, the radar file, where the new recording goes.
#[derive(clap::Args, Debug, Clone, PartialEq)]
pub struct AdoptOptions {
    /// A SigMF recording (NAME.sigmf-meta, NAME.sigmf-data or NAME) or a raw IQ file.
    pub input: PathBuf,
    /// The radar file: the rotorsift keys without their prefix (and, for a raw IQ
    /// file, datatype, sample_rate_hz, carrier_hz, num_channels).
    #[arg(long)]
    pub radar: PathBuf,
    /// Directory for NAME.sigmf-meta and NAME.sigmf-data (created if missing).
    #[arg(long)]
    pub out: PathBuf,
    /// Base name of the new recording (default: the input's).
    #[arg(long)]
    pub name: Option<String>,
}
