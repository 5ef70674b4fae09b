//! rotorsift: tells small rotorcraft from birds and clutter by their micro-Doppler in raw
//! radar IQ recordings. The modules follow the data's path:
//! `recording` → `frontend` → `detect` → `features` → `model` → `report`, with `simulate`
//! beside them and `pipeline` composing the stages.
//!
//! The main entry points are re-exported here: open a recording ([`RecordingMeta`]),
//! analyse it ([`analyse`] with [`PipelineSettings`], whose detection part is
//! [`DetectSettings`]) and label its tracks with a [`Classifier`] (the built-in model,
//! [`BUILTIN_MODEL`], or a model file from `rotorsift train`).
//!
//! ```
//! use rotorsift::{analyse, Classifier, RecordingMeta};
//!
//! # fn main() -> rotorsift::Result<()> {
//! let path = std::path::Path::new("labelled-demo/recordings/holdout-h13-05-uav.sigmf-meta");
//! let meta = RecordingMeta::open(path)?;
//! let clf = Classifier::load(None)?; // the built-in model
//! // the model's own settings, so the features are made as it expects; channel 0
//! let analysis = analyse(&meta, 0, &clf.settings, true)?;
//! assert!(!analysis.tracks.is_empty());
//! for t in &analysis.tracks {
//!     let p = clf.predict(&t.features, 0.0)?;
//!     println!(
//!         "track {} at {:.1} m: {} ({:.2})",
//!         t.track.id,
//!         t.track.median_range_m(),
//!         p.label,
//!         p.confidence
//!     );
//!     assert!(clf.model.class_names.contains(&p.label));
//! }
//! # Ok(())
//! # }
//! ```

pub mod atomic;
pub mod cli_values;
pub mod detect;
pub mod error;
pub mod features;
pub mod frontend;
pub mod limits;
pub mod model;
pub mod pipeline;
pub mod progress;
pub mod recording;
pub mod report;
pub mod simulate;
pub mod stats;
pub mod wide;

pub use atomic::{write_atomic, AtomicFile};
pub use error::{Error, Result};
pub use model::ModelFile;
pub use pipeline::classify::{Classifier, Prediction, BUILTIN_MODEL};
pub use pipeline::{analyse, AnalysedTrack, DetectSettings, PipelineSettings, RecordingAnalysis};
pub use recording::RecordingMeta;

/// Speed of light in vacuum, m/s (exact, SI).
pub const C: f64 = 299_792_458.0;

/// The tool's version, written into models and JSON output.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");
