//! Features: one vector per track, in physical units (m/s, Hz, dB, m, s) so a model
//! carries across radars of other carriers and chirp rates. `names` lists them;
//! `extract` computes them from a track's slow-time signal and kinematics.

pub mod extract;
pub mod names;

pub use extract::{Extractor, FeatureSettings, RotorEstimates, TrackKinematics};
pub use names::{FeatureId, FeatureInfo, FEATURES};
