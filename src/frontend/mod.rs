//! Front end: turns chirp blocks into range profiles, clutter-cancelled slow-time series,
//! range-Doppler maps, normalised noise floors and the time-frequency pictures (STFT,
//! cepstrogram, cadence-velocity diagram) the later stages read.
//!
//! Conventions shared by every file here (see `docs/recording-format.md`): the range FFT is the forward
//! DFT (kernel `exp(-j 2 pi k n / N)`), Doppler `f_D = 2 v / lambda` with positive =
//! receding, powers are linear `|X|^2` unless a name says `_db`, and no transform scales its
//! output unless its doc says so.

pub mod cadence;
pub mod canceller;
pub mod cepstrum;
pub mod clutter_map;
pub mod doppler;
pub mod leak;
pub mod normalise;
pub mod range;
pub mod shift;
pub mod stft;
pub mod window;

pub use cadence::{CadenceDiagram, CadencePlan};
pub use canceller::{Canceller, CancellerState};
pub use cepstrum::{CepstrumPlan, FrameKind};
pub use clutter_map::ClutterMap;
pub use doppler::{RangeDopplerMap, RangeDopplerPlan};
pub use leak::{LeakParams, LeakProfile};
pub use normalise::{NoiseFloor, NoiseFloorParams};
pub use range::RangePlan;
pub use stft::{Scaling, StftParams, StftPlan};
pub use window::Window;

#[cfg(test)]
pub(crate) mod testutil;
