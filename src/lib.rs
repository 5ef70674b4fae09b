//! rotorsift: tells small rotorcraft from birds and clutter by their micro-Doppler in raw
//! radar IQ recordings. The modules follow the data's path:
//! `recording` → `frontend` → `detect` → `features` → `model` → `report`, with `simulate`
//! beside them and `pipeline` composing the stages.

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

pub use atomic::{write_atomic, AtomicFile};
pub use error::{Error, Result};

/// Speed of light in vacuum, m/s (exact, SI).
pub const C: f64 = 299_792_458.0;

/// The tool's version, written into models and JSON output.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");
