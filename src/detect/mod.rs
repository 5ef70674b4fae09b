//! Detection stage: CFAR on the range-Doppler power map, the micro-Doppler energy detector
//! for bodies inside the canceller notch, clustering of one CPI's hits into
//! [`Detection`]s, and a range-velocity tracker that links detections over CPIs into
//! [`Track`]s.

pub mod cfar;
pub mod cluster;
pub mod clutter_cfar;
pub mod detection;
pub mod microdoppler;
pub mod tracker;

pub use cfar::{
    ca_alpha, ca_pfa, os_alpha, os_pfa, os_rank, CfarHit, CfarKind, CfarParams, CfarPlan,
};
pub use cluster::{ClusterParams, Clusterer};
pub use clutter_cfar::{
    clutter_map_alpha, clutter_map_pfa, ClutterMapCfar, ClutterMapHit, ClutterMapParams,
};
pub use detection::Detection;
pub use microdoppler::{MicroDopplerDetector, MicroDopplerHit, MicroDopplerParams};
pub use tracker::{Track, TrackPoint, Tracker, TrackerParams};
