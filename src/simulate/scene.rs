//! The scene format (TOML, our own; documented in `labelled-demo/scenes/EXAMPLE.toml`):
//! a `[radar]` table and either one run (top-level `name`, `duration_s`, `[[object]]`) or a
//! list of runs `[[run]]` sharing the radar. Parsed with serde (unknown keys refused) and
//! validated in one place, [`Scene::check`]; every error names the run, object, key and value.

use std::path::Path;

use serde::Deserialize;

use super::radar_eq::LinkBudget;
use crate::error::{Error, Result};
use crate::recording::{DataType, RadarParams, RangeAxis, Waveform};
use crate::C;

/// Fixed ci16 scale: a sample of value 1.0 (in noise units, unit-variance noise) is stored
/// as 1/300 of full scale, so noise is ~77 LSB rms per component and a return clips only
/// above 300 noise units per sample (per-sample SNR ~49.5 dB).
pub const CI16_SCALE: f32 = 1.0 / 300.0;

/// The `[radar]` table.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct RadarSpec {
    /// "fmcw-beat" or "range-profile".
    pub waveform: Waveform,
    /// Carrier fc, Hz.
    pub carrier_hz: f64,
    /// N, samples (or range cells) per chirp.
    pub samples_per_chirp: usize,
    /// T, chirp interval, s.
    pub chirp_interval_s: f64,
    /// fs, ADC rate, Hz (required for FMCW; informational for range profiles, default
    /// there the range-gate rate c / (2 range_cell_m)).
    #[serde(default)]
    pub sample_rate_hz: Option<f64>,
    /// B, swept bandwidth, Hz (FMCW).
    #[serde(default)]
    pub sweep_bandwidth_hz: Option<f64>,
    /// Tc, ramp duration, s (FMCW).
    #[serde(default)]
    pub sweep_duration_s: Option<f64>,
    /// Range cell, m (range profile).
    #[serde(default)]
    pub range_cell_m: Option<f64>,
    /// Range of cell 0, m (range profile; default 0).
    #[serde(default)]
    pub range_start_m: Option<f64>,
    /// Pt, W.
    pub transmit_power_w: f64,
    /// Gt, dBi.
    pub tx_gain_dbi: f64,
    /// Gr, dBi.
    pub rx_gain_dbi: f64,
    /// F, dB.
    pub noise_figure_db: f64,
    /// L, dB (default 0).
    #[serde(default)]
    pub losses_db: f64,
    /// B_n, Hz (default fs for FMCW, c / (2 range_cell) for range profiles).
    #[serde(default)]
    pub noise_bandwidth_hz: Option<f64>,
    /// "cf32_le" or "ci16_le" (default "ci16_le", scale [`CI16_SCALE`]).
    #[serde(default = "default_datatype")]
    pub datatype: String,
    /// Per-chirp common phase noise on every return (not the noise), rad rms (default 0).
    #[serde(default)]
    pub phase_jitter_rad: f64,
    /// Slow common gain drift of every return, rms fraction (default 0).
    #[serde(default)]
    pub gain_drift: f64,
    /// Slow common phase drift of every return, rad rms (default 0).
    #[serde(default)]
    pub phase_drift_rad: f64,
    /// -3 dB bandwidth of the gain and phase drift, Hz (default 1).
    #[serde(default = "default_drift_hz")]
    pub drift_hz: f64,
    /// Order of the drift's low-pass, 1..=6 (default 3).
    #[serde(default = "default_scint_order")]
    pub drift_order: usize,
    /// FMCW: transmitter-to-receiver leakage, per-sample SNR of its beat tone, dB (default:
    /// none).
    #[serde(default)]
    pub leakage_snr_db: Option<f64>,
    /// FMCW: the leakage path's equivalent range, m (default 0.3).
    #[serde(default = "default_leakage_range")]
    pub leakage_range_m: f64,
    /// FMCW: receiver DC offset, per-sample SNR of the constant, dB (default: none).
    #[serde(default)]
    pub dc_offset_snr_db: Option<f64>,
    /// ci16_le only: rms of one part (I or Q) of the unit-variance noise, LSB (default
    /// 32767 / (300 sqrt 2) = 77.2, so full scale sits 49.5 dB over the noise per sample).
    #[serde(default)]
    pub noise_rms_lsb: Option<f64>,
}

fn default_drift_hz() -> f64 {
    1.0
}
fn default_leakage_range() -> f64 {
    0.3
}

fn default_datatype() -> String {
    "ci16_le".into()
}

impl RadarSpec {
    /// The recording's radar parameters (validated).
    pub fn params(&self) -> Result<RadarParams> {
        let need = |v: Option<f64>, key: &str| {
            v.ok_or_else(|| {
                Error::Invalid(format!(
                    "radar.{key} is missing: required for waveform = \"{}\"",
                    self.waveform.as_str()
                ))
            })
        };
        let (fs, axis) = match self.waveform {
            Waveform::FmcwBeat => (
                need(self.sample_rate_hz, "sample_rate_hz")?,
                RangeAxis::FmcwBeat {
                    sweep_bandwidth_hz: need(self.sweep_bandwidth_hz, "sweep_bandwidth_hz")?,
                    sweep_duration_s: need(self.sweep_duration_s, "sweep_duration_s")?,
                },
            ),
            Waveform::RangeProfile => (
                // range-gate rate c / (2 cell) unless given (SigMF needs a rate > 0)
                match (self.sample_rate_hz, self.range_cell_m) {
                    (Some(f), _) => f,
                    (None, Some(cell)) if cell > 0.0 => C / (2.0 * cell),
                    _ => 1.0 / self.chirp_interval_s,
                },
                RangeAxis::RangeProfile {
                    range_cell_m: need(self.range_cell_m, "range_cell_m")?,
                    range_start_m: self.range_start_m.unwrap_or(0.0),
                },
            ),
        };
        let p = RadarParams {
            carrier_hz: self.carrier_hz,
            sample_rate_hz: fs,
            samples_per_chirp: self.samples_per_chirp,
            chirp_interval_s: self.chirp_interval_s,
            range_axis: axis,
        };
        p.check()
            .map_err(|e| Error::Invalid(format!("radar: {e}")))?;
        Ok(p)
    }

    /// The noise bandwidth B_n, Hz.
    pub fn noise_bandwidth(&self, p: &RadarParams) -> f64 {
        self.noise_bandwidth_hz.unwrap_or(match p.range_axis {
            RangeAxis::FmcwBeat { .. } => p.sample_rate_hz,
            RangeAxis::RangeProfile { range_cell_m, .. } => C / (2.0 * range_cell_m),
        })
    }

    /// The link budget of this radar.
    pub fn budget(&self, p: &RadarParams) -> LinkBudget {
        LinkBudget::new(
            self.transmit_power_w,
            self.tx_gain_dbi,
            self.rx_gain_dbi,
            p.wavelength_m(),
            self.noise_figure_db,
            self.losses_db,
            self.noise_bandwidth(p),
        )
    }

    /// The sample format and the scale applied before encoding.
    pub fn datatype(&self) -> Result<(DataType, f32)> {
        match self.datatype.as_str() {
            "cf32_le" => Ok((DataType::Cf32Le, 1.0)),
            "ci16_le" => Ok((
                DataType::Ci16Le,
                match self.noise_rms_lsb {
                    Some(lsb) => (lsb * std::f64::consts::SQRT_2 / 32767.0) as f32,
                    None => CI16_SCALE,
                },
            )),
            s => Err(Error::Invalid(format!(
                "radar.datatype = \"{s}\": expected \"cf32_le\" or \"ci16_le\""
            ))),
        }
    }

    fn check(&self) -> Result<()> {
        self.params()?;
        self.datatype()?;
        finite_pos("radar.transmit_power_w", self.transmit_power_w)?;
        for (k, v) in [
            ("radar.tx_gain_dbi", self.tx_gain_dbi),
            ("radar.rx_gain_dbi", self.rx_gain_dbi),
            ("radar.noise_figure_db", self.noise_figure_db),
            ("radar.losses_db", self.losses_db),
        ] {
            range(k, v, -50.0, 100.0)?;
        }
        if let Some(b) = self.noise_bandwidth_hz {
            finite_pos("radar.noise_bandwidth_hz", b)?;
        }
        range("radar.phase_jitter_rad", self.phase_jitter_rad, 0.0, 3.2)?;
        range("radar.gain_drift", self.gain_drift, 0.0, 0.5)?;
        range("radar.phase_drift_rad", self.phase_drift_rad, 0.0, 3.2)?;
        range("radar.drift_hz", self.drift_hz, 1e-3, 1e3)?;
        range("radar.drift_order", self.drift_order as f64, 1.0, 6.0)?;
        let fmcw = self.waveform == Waveform::FmcwBeat;
        for (k, v) in [
            ("radar.leakage_snr_db", self.leakage_snr_db),
            ("radar.dc_offset_snr_db", self.dc_offset_snr_db),
        ] {
            if let Some(v) = v {
                if !fmcw {
                    return Err(Error::Invalid(format!(
                        "{k} is given: expected it only with waveform = \"fmcw-beat\""
                    )));
                }
                range(k, v, -50.0, 90.0)?;
            }
        }
        range("radar.leakage_range_m", self.leakage_range_m, 0.0, 1e4)?;
        if let Some(l) = self.noise_rms_lsb {
            range("radar.noise_rms_lsb", l, 0.5, 10_000.0)?;
        }
        Ok(())
    }
}

/// How an object moves. Positions in m (radar at the origin, z up), velocities in m/s.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(tag = "type", rename_all = "lowercase", deny_unknown_fields)]
pub enum MotionSpec {
    /// Holds `position`, plus a slow drift and a small random sway.
    Hover {
        /// Position at the object's start time, m.
        position: [f64; 3],
        /// Sway amplitude, m (default 0).
        #[serde(default)]
        sway_m: f64,
        /// Sway period, s (default 3).
        #[serde(default = "default_sway_period")]
        sway_period_s: f64,
        /// Slow drift velocity, m/s (default 0).
        #[serde(default)]
        drift_mps: [f64; 3],
    },
    /// Straight line at constant velocity.
    Linear {
        /// Position at the object's start time, m.
        start: [f64; 3],
        /// Velocity, m/s.
        velocity: [f64; 3],
    },
}

fn default_sway_period() -> f64 {
    3.0
}

/// A multirotor.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct RotorcraftSpec {
    pub id: String,
    pub motion: MotionSpec,
    #[serde(default)]
    pub start_s: f64,
    #[serde(default)]
    pub stop_s: Option<f64>,
    #[serde(default)]
    pub annotate: Option<bool>,
    #[serde(default)]
    pub label: Option<String>,
    /// Rotors, 1-8, at equal angles on arms.
    pub rotors: usize,
    /// Hub distance from the body centre, m (default 0 for one rotor, else 0.2).
    #[serde(default)]
    pub arm_length_m: Option<f64>,
    /// Blades per rotor, 2-6.
    pub blades: usize,
    /// Blade length L (hub to tip), m.
    pub blade_length_m: f64,
    /// Nominal rotor rate, rev/s.
    pub rotor_rate_hz: f64,
    /// Relative spread of per-rotor rates: uniform in rate (1 +/- spread) (default 0.03).
    #[serde(default = "default_spread")]
    pub rotor_rate_spread: f64,
    /// Body RCS, dBsm (default -15).
    #[serde(default = "default_body_rcs")]
    pub body_rcs_dbsm: f64,
    /// Peak RCS of one blade at its flash, dBsm (default -20).
    #[serde(default = "default_blade_rcs")]
    pub blade_rcs_dbsm: f64,
    /// Yaw of the airframe, degrees from +x (default 0).
    #[serde(default)]
    pub yaw_deg: f64,
}

fn default_spread() -> f64 {
    0.03
}
fn default_body_rcs() -> f64 {
    -15.0
}
fn default_blade_rcs() -> f64 {
    -20.0
}

/// A flapping bird.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct BirdSpec {
    pub id: String,
    pub motion: MotionSpec,
    #[serde(default)]
    pub start_s: f64,
    #[serde(default)]
    pub stop_s: Option<f64>,
    #[serde(default)]
    pub annotate: Option<bool>,
    #[serde(default)]
    pub label: Option<String>,
    /// Wingspan b, m.
    pub wingspan_m: f64,
    /// Wingbeat, Hz (default: Pennycuick's formula from mass, span, area).
    #[serde(default)]
    pub wingbeat_hz: Option<f64>,
    /// Mass, kg (needed when wingbeat_hz is absent).
    #[serde(default)]
    pub mass_kg: Option<f64>,
    /// Wing area S, m^2 (default b^2 / 6.5).
    #[serde(default)]
    pub wing_area_m2: Option<f64>,
    /// Mean body RCS, dBsm (default -25).
    #[serde(default = "default_bird_rcs")]
    pub body_rcs_dbsm: f64,
    /// RCS of one whole wing seen broadside, dBsm (default body - 10).
    #[serde(default)]
    pub wing_rcs_dbsm: Option<f64>,
    /// Log-normal body RCS fluctuation, dB rms (default 3).
    #[serde(default = "default_fluct")]
    pub rcs_fluctuation_db: f64,
    /// Correlation time of that fluctuation, s (default 0.5).
    #[serde(default = "default_fluct_time")]
    pub rcs_correlation_s: f64,
    /// Fraction of time spent gliding, 0-0.9 (default 0).
    #[serde(default)]
    pub glide_fraction: f64,
    /// Mean length of a glide, s (default 0.6).
    #[serde(default = "default_glide_len")]
    pub glide_length_s: f64,
    /// Heading when the bird does not move, degrees from +x (default 90).
    #[serde(default = "default_heading")]
    pub heading_deg: f64,
}

fn default_bird_rcs() -> f64 {
    -25.0
}
fn default_fluct() -> f64 {
    3.0
}
fn default_fluct_time() -> f64 {
    0.5
}
fn default_glide_len() -> f64 {
    0.6
}
fn default_heading() -> f64 {
    90.0
}

/// A fixed point return (building, pole), optionally scintillating.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct StationarySpec {
    pub id: String,
    pub position: [f64; 3],
    pub rcs_dbsm: f64,
    /// Amplitude scintillation, rms fraction (default 0).
    #[serde(default)]
    pub amplitude_scintillation: f64,
    /// Phase scintillation, rad rms (default 0).
    #[serde(default)]
    pub phase_scintillation_rad: f64,
    /// -3 dB bandwidth of the scintillation, Hz (default 1).
    #[serde(default = "default_scint_hz")]
    pub scintillation_hz: f64,
    /// Order of the scintillation's low-pass (sections; its skirt falls 20 dB a decade per
    /// section), 1..=6 (default 3).
    #[serde(default = "default_scint_order")]
    pub scintillation_order: usize,
    /// Default false.
    #[serde(default)]
    pub annotate: Option<bool>,
    #[serde(default)]
    pub label: Option<String>,
}

fn default_scint_hz() -> f64 {
    1.0
}
fn default_scint_order() -> usize {
    super::scintillation::DEFAULT_ORDER
}

/// Distributed ground clutter over a range interval: one Rayleigh cell (complex Gaussian
/// amplitude) per radar range cell, RCS sigma0 x R x azimuth beamwidth x range cell (low
/// grazing), each scintillating slowly on its own.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct GroundSpec {
    pub id: String,
    /// The patch covers the range cells whose centres lie in [range_min_m, range_max_m].
    pub range_min_m: f64,
    pub range_max_m: f64,
    /// Backscatter coefficient sigma0, dB (m^2 per m^2).
    pub sigma0_db: f64,
    /// Azimuth (-3 dB) beamwidth, degrees (default 10).
    #[serde(default = "default_beamwidth")]
    pub azimuth_beamwidth_deg: f64,
    /// Amplitude scintillation of each cell, rms fraction (default 0.01).
    #[serde(default = "default_ground_amp")]
    pub amplitude_scintillation: f64,
    /// Phase scintillation of each cell, rad rms (default 0.005).
    #[serde(default = "default_ground_phase")]
    pub phase_scintillation_rad: f64,
    /// -3 dB bandwidth of the scintillation, Hz (default 1).
    #[serde(default = "default_scint_hz")]
    pub scintillation_hz: f64,
    /// Order of the scintillation's low-pass (sections; its skirt falls 20 dB a decade per
    /// section), 1..=6 (default 3).
    #[serde(default = "default_scint_order")]
    pub scintillation_order: usize,
    /// Default false.
    #[serde(default)]
    pub annotate: Option<bool>,
    #[serde(default)]
    pub label: Option<String>,
}

fn default_beamwidth() -> f64 {
    10.0
}
fn default_ground_amp() -> f64 {
    0.01
}
fn default_ground_phase() -> f64 {
    0.005
}

/// A point scatterer of constant RCS on any motion (test target).
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct PointSpec {
    pub id: String,
    pub motion: MotionSpec,
    #[serde(default)]
    pub start_s: f64,
    #[serde(default)]
    pub stop_s: Option<f64>,
    pub rcs_dbsm: f64,
    /// Default false.
    #[serde(default)]
    pub annotate: Option<bool>,
    /// Default "point".
    #[serde(default)]
    pub label: Option<String>,
}

/// A slowly swaying point (mast, sign): R(t) = R0 + a sin(2 pi t / period).
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct SwayingSpec {
    pub id: String,
    pub position: [f64; 3],
    pub rcs_dbsm: f64,
    /// Radial sway amplitude a, m.
    pub sway_m: f64,
    /// Sway period, s.
    pub period_s: f64,
    /// Default true (label "clutter").
    #[serde(default)]
    pub annotate: Option<bool>,
    #[serde(default)]
    pub label: Option<String>,
}

/// Windblown vegetation over a range interval (Billingsley 2002, ch. 3).
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct VegetationSpec {
    pub id: String,
    /// The patch covers the range cells whose centres lie in [range_min_m, range_max_m].
    pub range_min_m: f64,
    pub range_max_m: f64,
    /// Total clutter RCS of one range cell, dBsm.
    pub rcs_dbsm_per_cell: f64,
    /// Wind speed, mph (Billingsley's unit), sets the DC/AC ratio r.
    pub wind_mph: f64,
    /// "light-air", "breezy", "windy", "gale" (default from wind_mph: <7.5, <15, <30, else).
    #[serde(default)]
    pub wind_class: Option<String>,
    /// Exponential shape beta, per m/s (default from the wind class: 12, 8, 5.7, 4.3).
    #[serde(default)]
    pub beta_per_mps: Option<f64>,
    /// Overrides r = 489.8 w^-1.55 f^-1.21.
    #[serde(default)]
    pub dc_ac_ratio: Option<f64>,
    /// Default true (label "clutter").
    #[serde(default)]
    pub annotate: Option<bool>,
    #[serde(default)]
    pub label: Option<String>,
}

/// One object of a run.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(tag = "kind", rename_all = "lowercase")]
pub enum ObjectSpec {
    Rotorcraft(RotorcraftSpec),
    Bird(BirdSpec),
    Stationary(StationarySpec),
    Vegetation(VegetationSpec),
    Swaying(SwayingSpec),
    Point(PointSpec),
    Ground(GroundSpec),
}

impl ObjectSpec {
    /// The object's id.
    pub fn id(&self) -> &str {
        match self {
            ObjectSpec::Rotorcraft(o) => &o.id,
            ObjectSpec::Bird(o) => &o.id,
            ObjectSpec::Stationary(o) => &o.id,
            ObjectSpec::Vegetation(o) => &o.id,
            ObjectSpec::Swaying(o) => &o.id,
            ObjectSpec::Point(o) => &o.id,
            ObjectSpec::Ground(o) => &o.id,
        }
    }
    /// The kind's name.
    pub fn kind(&self) -> &'static str {
        match self {
            ObjectSpec::Rotorcraft(_) => "rotorcraft",
            ObjectSpec::Bird(_) => "bird",
            ObjectSpec::Stationary(_) => "stationary",
            ObjectSpec::Vegetation(_) => "vegetation",
            ObjectSpec::Swaying(_) => "swaying",
            ObjectSpec::Point(_) => "point",
            ObjectSpec::Ground(_) => "ground",
        }
    }
    /// Whether the object gets an annotation, and its label.
    pub fn annotation_label(&self) -> Option<String> {
        let (ann, label, default_ann, default_label) = match self {
            ObjectSpec::Rotorcraft(o) => (o.annotate, &o.label, true, "rotorcraft"),
            ObjectSpec::Bird(o) => (o.annotate, &o.label, true, "bird"),
            ObjectSpec::Stationary(o) => (o.annotate, &o.label, false, "clutter"),
            ObjectSpec::Vegetation(o) => (o.annotate, &o.label, true, "clutter"),
            ObjectSpec::Swaying(o) => (o.annotate, &o.label, true, "clutter"),
            ObjectSpec::Point(o) => (o.annotate, &o.label, false, "point"),
            ObjectSpec::Ground(o) => (o.annotate, &o.label, false, "clutter"),
        };
        if ann.unwrap_or(default_ann) {
            Some(label.clone().unwrap_or_else(|| default_label.to_string()))
        } else {
            None
        }
    }
}

/// A TOML error in one line: `line L, column C: message` (the parser's own text spans
/// several lines with a source excerpt).
fn toml_error_line(text: &str, e: &toml::de::Error) -> String {
    let msg = e.message().split_whitespace().collect::<Vec<_>>().join(" ");
    match e.span() {
        Some(span) => {
            let before = &text[..span.start.min(text.len())];
            let line = before.matches('\n').count() + 1;
            let col = before.len() - before.rfind('\n').map(|i| i + 1).unwrap_or(0) + 1;
            format!("line {line}, column {col}: {msg}")
        }
        None => msg,
    }
}

/// One run: what one recording holds.
#[derive(Debug, Clone, PartialEq)]
pub struct Scene {
    /// The recording's base name (letters, digits, '-', '_', '.').
    pub name: String,
    /// Duration, s.
    pub duration_s: f64,
    /// The run's seed (used when no seed is given to the simulator).
    pub seed: u64,
    /// Free-text site (fictional).
    pub site: Option<String>,
    /// Every target that moves or hovers is annotated (`rotorsift:labels_complete`).
    pub labels_complete: bool,
    /// Free-text description (defaults to the name).
    pub description: Option<String>,
    /// The radar.
    pub radar: RadarSpec,
    /// The objects.
    pub objects: Vec<ObjectSpec>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RunFile {
    name: String,
    duration_s: f64,
    #[serde(default)]
    seed: Option<u64>,
    #[serde(default)]
    site: Option<String>,
    #[serde(default)]
    labels_complete: Option<bool>,
    #[serde(default)]
    description: Option<String>,
    #[serde(default)]
    object: Vec<ObjectSpec>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct SceneFile {
    radar: RadarSpec,
    #[serde(default)]
    seed: Option<u64>,
    #[serde(default)]
    site: Option<String>,
    #[serde(default)]
    labels_complete: Option<bool>,
    #[serde(default)]
    description: Option<String>,
    #[serde(default)]
    name: Option<String>,
    #[serde(default)]
    duration_s: Option<f64>,
    #[serde(default)]
    object: Vec<ObjectSpec>,
    #[serde(default)]
    run: Vec<RunFile>,
}

impl Scene {
    /// Parses scene text (one run or `[[run]]` list) and validates every run. A run's seed
    /// is its own `seed`, else the file's `seed` plus the run's index, else the index.
    pub fn parse_all(text: &str) -> Result<Vec<Scene>> {
        let f: SceneFile =
            toml::from_str(text).map_err(|e| Error::Invalid(toml_error_line(text, &e)))?;
        let base_seed = f.seed.unwrap_or(0);
        use crate::limits::{MAX_SCENE_OBJECTS, MAX_SCENE_RUNS};
        if f.run.len() > MAX_SCENE_RUNS {
            return Err(Error::Invalid(format!(
                "[[run]] has {} entries: at most {MAX_SCENE_RUNS} allowed",
                f.run.len()
            )));
        }
        for (key, n) in std::iter::once(("[[object]]", f.object.len()))
            .chain(f.run.iter().map(|r| ("[[run.object]]", r.object.len())))
        {
            if n > MAX_SCENE_OBJECTS {
                return Err(Error::Invalid(format!(
                    "{key} has {n} entries: at most {MAX_SCENE_OBJECTS} allowed"
                )));
            }
        }
        let mut runs = Vec::new();
        if f.run.is_empty() {
            let name = f.name.ok_or_else(|| {
                Error::Invalid("lacks key name (or a [[run]] list): expected the run's name".into())
            })?;
            let duration_s = f.duration_s.ok_or_else(|| {
                Error::Invalid("lacks key duration_s (or a [[run]] list): expected seconds".into())
            })?;
            runs.push(Scene {
                name,
                duration_s,
                seed: base_seed,
                site: f.site.clone(),
                labels_complete: f.labels_complete.unwrap_or(false),
                description: f.description.clone(),
                radar: f.radar.clone(),
                objects: f.object,
            });
        } else {
            if f.name.is_some() || f.duration_s.is_some() || !f.object.is_empty() {
                return Err(Error::Invalid(
                    "top-level name/duration_s/[[object]] and [[run]] are both given: use one form"
                        .into(),
                ));
            }
            for (i, r) in f.run.into_iter().enumerate() {
                runs.push(Scene {
                    name: r.name,
                    duration_s: r.duration_s,
                    seed: r.seed.unwrap_or(base_seed.wrapping_add(i as u64)),
                    site: r.site.or_else(|| f.site.clone()),
                    labels_complete: r.labels_complete.or(f.labels_complete).unwrap_or(false),
                    description: r.description.or_else(|| f.description.clone()),
                    radar: f.radar.clone(),
                    objects: r.object,
                });
            }
        }
        let mut names = std::collections::HashSet::new();
        for s in &runs {
            s.check()?;
            if !names.insert(s.name.clone()) {
                return Err(Error::Invalid(format!(
                    "run name = \"{}\" is used twice: expected unique names",
                    s.name
                )));
            }
        }
        Ok(runs)
    }

    /// Reads and validates a scene file; errors name the file.
    pub fn load(path: &Path) -> Result<Vec<Scene>> {
        let text =
            crate::limits::read_text_capped(path, crate::limits::MAX_SCENE_BYTES, "scene file")?;
        Scene::parse_all(&text).map_err(|e| match e {
            Error::Invalid(msg) => Error::format(path, msg),
            other => other,
        })
    }

    /// Validates the run: every value in its allowed range.
    pub fn check(&self) -> Result<()> {
        let at = format!("run \"{}\"", self.name);
        let ctx = |e: Error| match e {
            Error::Invalid(m) => Error::Invalid(format!("{at}: {m}")),
            o => o,
        };
        if self.name.is_empty()
            || !self
                .name
                .chars()
                .all(|c| c.is_ascii_alphanumeric() || "-_.".contains(c))
        {
            return Err(Error::Invalid(format!(
                "name = \"{}\": expected letters, digits, '-', '_' and '.' only",
                self.name
            )));
        }
        self.radar.check().map_err(ctx)?;
        let p = self.radar.params().map_err(ctx)?;
        range("duration_s", self.duration_s, 1e-6, 36_000.0).map_err(ctx)?;
        let chirps = (self.duration_s / p.chirp_interval_s).round();
        if chirps < 1.0 {
            return Err(ctx(Error::Invalid(format!(
                "duration_s = {}: shorter than one chirp interval",
                self.duration_s
            ))));
        }
        let mut ids = std::collections::HashSet::new();
        for o in &self.objects {
            let oat = format!("{at} object \"{}\" ({})", o.id(), o.kind());
            let octx = |e: Error| match e {
                Error::Invalid(m) => Error::Invalid(format!("{oat}: {m}")),
                o => o,
            };
            if o.id().is_empty() || !ids.insert(o.id().to_string()) {
                return Err(Error::Invalid(format!(
                    "{at}: object id = \"{}\": expected a unique, non-empty id",
                    o.id()
                )));
            }
            check_object(o, &p).map_err(octx)?;
            if let Some(l) = o.annotation_label() {
                if l.is_empty()
                    || !l
                        .chars()
                        .all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_')
                {
                    return Err(octx(Error::Invalid(format!(
                        "label = \"{l}\": expected letters, digits, '-' and '_' only"
                    ))));
                }
            }
        }
        Ok(())
    }

    /// Number of chirps M = round(duration / T).
    pub fn chirps(&self) -> Result<usize> {
        let p = self.radar.params()?;
        Ok((self.duration_s / p.chirp_interval_s).round() as usize)
    }
}

fn finite_pos(key: &str, v: f64) -> Result<()> {
    if v.is_finite() && v > 0.0 {
        Ok(())
    } else {
        Err(Error::Invalid(format!(
            "{key} = {v}: expected a finite number > 0"
        )))
    }
}

fn range(key: &str, v: f64, lo: f64, hi: f64) -> Result<()> {
    if v.is_finite() && v >= lo && v <= hi {
        Ok(())
    } else {
        Err(Error::Invalid(format!(
            "{key} = {v}: expected a number in [{lo}, {hi}]"
        )))
    }
}

fn pos3(key: &str, p: [f64; 3]) -> Result<()> {
    if p.iter().all(|x| x.is_finite() && x.abs() < 1e7) {
        Ok(())
    } else {
        Err(Error::Invalid(format!(
            "{key} = {p:?}: expected three finite numbers (m or m/s)"
        )))
    }
}

fn check_motion(m: &MotionSpec, start_s: f64, stop_s: Option<f64>) -> Result<()> {
    match m {
        MotionSpec::Hover {
            position,
            sway_m,
            sway_period_s,
            drift_mps,
        } => {
            pos3("motion.position", *position)?;
            range("motion.sway_m", *sway_m, 0.0, 10.0)?;
            range("motion.sway_period_s", *sway_period_s, 0.05, 1e4)?;
            pos3("motion.drift_mps", *drift_mps)?;
        }
        MotionSpec::Linear { start, velocity } => {
            pos3("motion.start", *start)?;
            pos3("motion.velocity", *velocity)?;
        }
    }
    range("start_s", start_s, 0.0, 1e6)?;
    if let Some(s) = stop_s {
        if !(s.is_finite() && s > start_s) {
            return Err(Error::Invalid(format!(
                "stop_s = {s}: expected a number > start_s = {start_s}"
            )));
        }
    }
    Ok(())
}

fn check_scintillation(amplitude: f64, phase_rad: f64, hz: f64, order: usize) -> Result<()> {
    range("amplitude_scintillation", amplitude, 0.0, 0.5)?;
    range("phase_scintillation_rad", phase_rad, 0.0, 3.2)?;
    range("scintillation_hz", hz, 1e-3, 1e3)?;
    range("scintillation_order", order as f64, 1.0, 6.0)
}

fn rcs(key: &str, v: f64) -> Result<()> {
    range(key, v, -200.0, 80.0)
}

fn check_object(o: &ObjectSpec, p: &RadarParams) -> Result<()> {
    let lambda = p.wavelength_m();
    match o {
        ObjectSpec::Rotorcraft(r) => {
            check_motion(&r.motion, r.start_s, r.stop_s)?;
            if !(1..=8).contains(&r.rotors) {
                return Err(Error::Invalid(format!(
                    "rotors = {}: expected an integer in [1, 8]",
                    r.rotors
                )));
            }
            if !(2..=6).contains(&r.blades) {
                return Err(Error::Invalid(format!(
                    "blades = {}: expected an integer in [2, 6]",
                    r.blades
                )));
            }
            if let Some(a) = r.arm_length_m {
                range("arm_length_m", a, 0.0, 5.0)?;
            }
            range("blade_length_m", r.blade_length_m, 0.005, 5.0)?;
            range("rotor_rate_hz", r.rotor_rate_hz, 0.1, 1000.0)?;
            range("rotor_rate_spread", r.rotor_rate_spread, 0.0, 0.5)?;
            rcs("body_rcs_dbsm", r.body_rcs_dbsm)?;
            rcs("blade_rcs_dbsm", r.blade_rcs_dbsm)?;
            range("yaw_deg", r.yaw_deg, -360.0, 360.0)?;
        }
        ObjectSpec::Bird(b) => {
            check_motion(&b.motion, b.start_s, b.stop_s)?;
            range("wingspan_m", b.wingspan_m, 0.02, 4.0)?;
            match b.wingbeat_hz {
                Some(f) => range("wingbeat_hz", f, 0.2, 100.0)?,
                None => {
                    let m = b.mass_kg.ok_or_else(|| {
                        Error::Invalid(
                            "wingbeat_hz is missing and so is mass_kg: give one of them".into(),
                        )
                    })?;
                    range("mass_kg", m, 0.001, 20.0)?;
                }
            }
            if let Some(m) = b.mass_kg {
                range("mass_kg", m, 0.001, 20.0)?;
            }
            if let Some(s) = b.wing_area_m2 {
                range("wing_area_m2", s, 1e-4, 5.0)?;
            }
            rcs("body_rcs_dbsm", b.body_rcs_dbsm)?;
            if let Some(w) = b.wing_rcs_dbsm {
                rcs("wing_rcs_dbsm", w)?;
            }
            range("rcs_fluctuation_db", b.rcs_fluctuation_db, 0.0, 15.0)?;
            range("rcs_correlation_s", b.rcs_correlation_s, 1e-3, 1e4)?;
            range("glide_fraction", b.glide_fraction, 0.0, 0.9)?;
            range("glide_length_s", b.glide_length_s, 0.01, 1e3)?;
            range("heading_deg", b.heading_deg, -360.0, 360.0)?;
        }
        ObjectSpec::Stationary(s) => {
            pos3("position", s.position)?;
            rcs("rcs_dbsm", s.rcs_dbsm)?;
            check_scintillation(
                s.amplitude_scintillation,
                s.phase_scintillation_rad,
                s.scintillation_hz,
                s.scintillation_order,
            )?;
        }
        ObjectSpec::Ground(g) => {
            range("range_min_m", g.range_min_m, 0.0, 1e6)?;
            if !(g.range_max_m.is_finite() && g.range_max_m >= g.range_min_m) {
                return Err(Error::Invalid(format!(
                    "range_max_m = {}: expected a number >= range_min_m = {}",
                    g.range_max_m, g.range_min_m
                )));
            }
            range("sigma0_db", g.sigma0_db, -90.0, 10.0)?;
            range("azimuth_beamwidth_deg", g.azimuth_beamwidth_deg, 0.1, 180.0)?;
            check_scintillation(
                g.amplitude_scintillation,
                g.phase_scintillation_rad,
                g.scintillation_hz,
                g.scintillation_order,
            )?;
        }
        ObjectSpec::Point(s) => {
            check_motion(&s.motion, s.start_s, s.stop_s)?;
            rcs("rcs_dbsm", s.rcs_dbsm)?;
        }
        ObjectSpec::Swaying(s) => {
            pos3("position", s.position)?;
            rcs("rcs_dbsm", s.rcs_dbsm)?;
            range("sway_m", s.sway_m, 0.0, 10.0)?;
            range("period_s", s.period_s, 0.05, 1e4)?;
        }
        ObjectSpec::Vegetation(v) => {
            range("range_min_m", v.range_min_m, 0.0, 1e6)?;
            if !(v.range_max_m.is_finite() && v.range_max_m >= v.range_min_m) {
                return Err(Error::Invalid(format!(
                    "range_max_m = {}: expected a number >= range_min_m = {}",
                    v.range_max_m, v.range_min_m
                )));
            }
            rcs("rcs_dbsm_per_cell", v.rcs_dbsm_per_cell)?;
            range("wind_mph", v.wind_mph, 0.1, 100.0)?;
            if let Some(c) = &v.wind_class {
                super::wind::beta_of_class(c).ok_or_else(|| {
                    Error::Invalid(format!(
                        "wind_class = \"{c}\": expected \"light-air\", \"breezy\", \"windy\" or \"gale\""
                    ))
                })?;
            }
            if let Some(b) = v.beta_per_mps {
                range("beta_per_mps", b, 0.1, 1000.0)?;
                // the AC spectrum must fit inside the unambiguous velocity
                let vmax = lambda / (4.0 * p.chirp_interval_s);
                if 3.0 / b > vmax {
                    return Err(Error::Invalid(format!(
                        "beta_per_mps = {b}: the spectrum (3/beta = {:.3} m/s) exceeds the unambiguous velocity {vmax:.3} m/s",
                        3.0 / b
                    )));
                }
            }
            if let Some(r) = v.dc_ac_ratio {
                range("dc_ac_ratio", r, 0.0, 1e6)?;
            }
        }
    }
    Ok(())
}
