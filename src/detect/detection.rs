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
    /// The rotor signature of the detection's cells: their energy beyond the spread band
    /// (micro-Doppler detector), averaged over the recent CPIs, over the integrated
    /// threshold; 1 or more passes. 0 when not measured.
    #[serde(default)]
    pub rotor_evidence: f64,
    /// What of the stationary return of the detection's cell does not stay put: the power
    /// the clutter map leaves in the notch over the cell's stationary power (linear). A
    /// building's slow scintillation or the leakage leave well under 1 %; an airframe that
    /// sways by a fraction of a wavelength leaves most of its power. 0 when not measured.
    #[serde(default)]
    pub residue_share: f64,
    /// This CPI's micro-Doppler energy ratio of the detection's cells (energy beyond the
    /// spread band over the noise and the expected leak; 1 = noise): a whole track's
    /// average of it is the integrated rotor evidence. 0 when not measured.
    #[serde(default)]
    pub md_ratio: f64,
}
