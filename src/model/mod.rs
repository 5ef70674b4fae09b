//! The classifier: a dataset type with recording-grouped splits, a seeded random-forest
//! ensemble with temperature calibration, scoring metrics, and the versioned model file.

pub mod calibration;
pub mod dataset;
pub mod domain;
mod exact;
pub mod file;
pub mod forest;
pub mod metrics;
mod tree;

pub use calibration::Calibration;
pub use dataset::Dataset;
pub use domain::Domain;
pub use file::{ModelFile, MODEL_FORMAT, MODEL_FORMAT_VERSION};
pub use forest::{Bootstrap, ClassWeight, FeatureSampling, Forest, ForestParams};
pub use metrics::{
    expected_calibration_error, multiclass_brier, ClassScores, ConfusionMatrix, FalseAlarms,
    RadarCrossValidation, Scores,
};
