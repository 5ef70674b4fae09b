//! The detection record passed from CFAR clustering to the tracker: one target candidate
//! in one CPI, in physical units (m, m/s, dB). Velocity sign: positive = receding.

use serde::{Deserialize, Serialize};

/// One target candidate in one CPI.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Detection {
    /// Range, m (power-weighted centroid of the cluster's range cells).
    pub range_m: f64,
    /// Radial velocity, m/s, positive = receding (of the strongest hit).
    pub velocity_mps: f64,
    /// SNR of the strongest hit, dB, against its CFAR noise estimate.
    pub snr_db: f64,
    /// Range of the nearest cell of the cluster, m.
    pub range_min_m: f64,
    /// Range of the farthest cell of the cluster, m.
    pub range_max_m: f64,
    /// Power-weighted standard deviation of the hits' velocities, m/s.
    pub spread_mps: f64,
    /// True when the strongest hit lies in the clutter canceller's notch.
    pub in_notch: bool,
}
