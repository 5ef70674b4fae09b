//! Range-velocity tracker over CPIs: alpha-beta prediction of range and range-rate,
//! gating mostly on range (Doppler velocity may be ambiguous or come from a blade line),
//! greedy global-nearest-neighbour association, M-of-N confirmation and coasting.
//!
//! Units: s, m, m/s; velocity positive = receding.

use serde::{Deserialize, Serialize};

use super::detection::Detection;
use crate::error::ensure;
use crate::Result;

/// Tracker settings.
///
/// Range gate half-width for a track last updated `dt` seconds ago:
/// `max(range_gate_m, 2 · range_cell_m) + max_speed_mps · dt` around the predicted range
/// (the prediction may be off by the speed error times `dt`, bounded by `max_speed_mps`).
/// The velocity gate `velocity_gate_mps` is deliberately loose.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct TrackerParams {
    /// Floor of the range-gate half-width, m (> 0). The tracker also never uses less than
    /// two range cells.
    pub range_gate_m: f64,
    /// Velocity-gate half-width, m/s (> 0; may be infinite to switch velocity gating off).
    pub velocity_gate_mps: f64,
    /// M of M-of-N confirmation: hits needed (1..=confirm_window).
    pub confirm_hits: usize,
    /// N of M-of-N: CPIs from the track's first hit within which the M hits must fall
    /// (1..=32).
    pub confirm_window: usize,
    /// Missed CPIs a confirmed track may coast before it ends (0..=1000).
    pub max_coast: usize,
    /// Confirmed tracks shorter than this (first to last hit), s, are dropped (>= 0).
    pub min_track_duration_s: f64,
    /// Largest radial speed considered, m/s (> 0): widens the range gate with time since
    /// the last update and bounds the range-rate estimate.
    pub max_speed_mps: f64,
    /// Alpha-beta filter position gain, in (0, 1].
    pub alpha: f64,
    /// Alpha-beta filter rate gain, in [0, 2) (applied as beta · residual / dt).
    pub beta: f64,
    /// Weight with which a measured Doppler velocity inside the velocity gate pulls the
    /// range-rate estimate, in [0, 1].
    pub velocity_gain: f64,
}

impl Default for TrackerParams {
    /// For small targets at 1-300 m with CPIs of about 10-50 ms: gate floor 1.5 m,
    /// velocity gate 20 m/s, confirm 3 of 5, coast 10 CPIs, min duration 0.1 s,
    /// max speed 30 m/s, alpha 0.5, beta 0.1, velocity gain 0.5.
    fn default() -> Self {
        TrackerParams {
            range_gate_m: 1.5,
            velocity_gate_mps: 20.0,
            confirm_hits: 3,
            confirm_window: 5,
            max_coast: 10,
            min_track_duration_s: 0.1,
            max_speed_mps: 30.0,
            alpha: 0.5,
            beta: 0.1,
            velocity_gain: 0.5,
        }
    }
}

impl TrackerParams {
    /// Checks every field; the error names the value and the allowed range.
    pub fn check(&self) -> Result<()> {
        ensure(
            self.range_gate_m.is_finite() && self.range_gate_m > 0.0,
            || {
                format!(
                    "tracker range_gate_m {} is out of range; allowed: finite, > 0",
                    self.range_gate_m
                )
            },
        )?;
        ensure(self.velocity_gate_mps > 0.0, || {
            format!(
                "tracker velocity_gate_mps {} is out of range; allowed: > 0 (may be infinite)",
                self.velocity_gate_mps
            )
        })?;
        ensure((1..=32).contains(&self.confirm_window), || {
            format!(
                "tracker confirm_window {} is out of range; allowed: 1..=32",
                self.confirm_window
            )
        })?;
        ensure(
            self.confirm_hits >= 1 && self.confirm_hits <= self.confirm_window,
            || {
                format!(
                    "tracker confirm_hits {} is out of range; allowed: 1..={} (confirm_window)",
                    self.confirm_hits, self.confirm_window
                )
            },
        )?;
        ensure(self.max_coast <= 1000, || {
            format!(
                "tracker max_coast {} is out of range; allowed: 0..=1000",
                self.max_coast
            )
        })?;
        ensure(
            self.min_track_duration_s.is_finite() && self.min_track_duration_s >= 0.0,
            || {
                format!(
                    "tracker min_track_duration_s {} is out of range; allowed: finite, >= 0",
                    self.min_track_duration_s
                )
            },
        )?;
        ensure(
            self.max_speed_mps.is_finite() && self.max_speed_mps > 0.0,
            || {
                format!(
                    "tracker max_speed_mps {} is out of range; allowed: finite, > 0",
                    self.max_speed_mps
                )
            },
        )?;
        ensure(self.alpha > 0.0 && self.alpha <= 1.0, || {
            format!(
                "tracker alpha {} is out of range; allowed: 0 < alpha <= 1",
                self.alpha
            )
        })?;
        ensure(self.beta >= 0.0 && self.beta < 2.0, || {
            format!(
                "tracker beta {} is out of range; allowed: 0 <= beta < 2",
                self.beta
            )
        })?;
        ensure(
            self.velocity_gain >= 0.0 && self.velocity_gain <= 1.0,
            || {
                format!(
                    "tracker velocity_gain {} is out of range; allowed: 0 <= velocity_gain <= 1",
                    self.velocity_gain
                )
            },
        )
    }

    /// Range-gate half-width, m, for a track last updated `dt_s` ago.
    pub fn range_gate(&self, range_cell_m: f64, dt_s: f64) -> f64 {
        self.range_gate_m.max(2.0 * range_cell_m) + self.max_speed_mps * dt_s.max(0.0)
    }
}

/// One associated detection of a track.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TrackPoint {
    /// CPI index given to [`Tracker::update`].
    pub cpi: usize,
    /// CPI centre time, s.
    pub t_s: f64,
    pub detection: Detection,
}

/// A confirmed track.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Track {
    /// Number in order of start time, from 0.
    pub id: usize,
    /// Time of the first associated detection, s.
    pub start_s: f64,
    /// Time of the last associated detection, s (coasting after it is not counted).
    pub end_s: f64,
    /// Associated detections in time order (including those before confirmation).
    pub points: Vec<TrackPoint>,
}

/// numpy's median ([`crate::stats::median_in_place`]), NaN for a track without points.
fn median(v: &mut [f64]) -> f64 {
    if v.is_empty() {
        return f64::NAN;
    }
    crate::stats::median_in_place(v)
}

impl Track {
    /// `end_s − start_s`, s.
    pub fn duration_s(&self) -> f64 {
        self.end_s - self.start_s
    }
    /// Median of the points' ranges, m (NaN without points).
    pub fn median_range_m(&self) -> f64 {
        median(
            &mut self
                .points
                .iter()
                .map(|p| p.detection.range_m)
                .collect::<Vec<_>>(),
        )
    }
    /// Smallest `range_min_m` over the points, m.
    pub fn range_min_m(&self) -> f64 {
        self.points
            .iter()
            .map(|p| p.detection.range_min_m)
            .fold(f64::INFINITY, f64::min)
    }
    /// Largest `range_max_m` over the points, m.
    pub fn range_max_m(&self) -> f64 {
        self.points
            .iter()
            .map(|p| p.detection.range_max_m)
            .fold(f64::NEG_INFINITY, f64::max)
    }
    /// Median of the points' radial velocities, m/s, positive = receding.
    pub fn median_velocity_mps(&self) -> f64 {
        median(
            &mut self
                .points
                .iter()
                .map(|p| p.detection.velocity_mps)
                .collect::<Vec<_>>(),
        )
    }
    /// Largest |radial velocity| over the points, m/s.
    pub fn max_abs_velocity_mps(&self) -> f64 {
        self.points
            .iter()
            .map(|p| p.detection.velocity_mps.abs())
            .fold(0.0, f64::max)
    }
    /// Mean of the points' SNRs, dB (mean of the dB values).
    pub fn mean_snr_db(&self) -> f64 {
        let n = self.points.len() as f64;
        self.points.iter().map(|p| p.detection.snr_db).sum::<f64>() / n
    }
    /// Median |radial velocity| of the points, m/s.
    pub fn median_abs_velocity_mps(&self) -> f64 {
        median(
            &mut self
                .points
                .iter()
                .map(|p| p.detection.velocity_mps.abs())
                .collect::<Vec<_>>(),
        )
    }
    /// True when the body's radial speed stays under [`HOVER_SPEED_MPS`] (0.5 m/s), judged
    /// by the median |velocity| of the points: robust to a minority (< half) of points
    /// whose strongest hit was a blade line or a false detection.
    pub fn hovering(&self) -> bool {
        self.median_abs_velocity_mps() < HOVER_SPEED_MPS
    }
}

/// Radial speed under which a track counts as hovering, m/s (docs/output-format.md).
pub const HOVER_SPEED_MPS: f64 = 0.5;

#[derive(Debug, Clone, Copy, PartialEq)]
enum State {
    Tentative,
    Confirmed,
}

#[derive(Debug, Clone)]
struct Live {
    state: State,
    /// Filtered range, m, at `t_last`.
    range: f64,
    /// Filtered range-rate, m/s.
    rate: f64,
    t_last: f64,
    cpi_first: usize,
    cpi_last: usize,
    hits: usize,
    points: Vec<TrackPoint>,
    /// Order of creation (tie-break of start order).
    serial: usize,
}

/// Links detections over CPIs into tracks.
#[derive(Debug, Clone)]
pub struct Tracker {
    params: TrackerParams,
    range_cell_m: f64,
    live: Vec<Live>,
    done: Vec<Live>,
    last: Option<(usize, f64)>,
    serial: usize,
    /// Scratch: (cost, live index, detection index).
    pairs: Vec<(f64, usize, usize)>,
    used_track: Vec<bool>,
    used_det: Vec<bool>,
}

impl Tracker {
    /// Checks `params`; `range_cell_m` (> 0, finite) is the caller's range-cell spacing,
    /// which floors the range gate at two cells.
    pub fn new(params: TrackerParams, range_cell_m: f64) -> Result<Self> {
        params.check()?;
        ensure(range_cell_m.is_finite() && range_cell_m > 0.0, || {
            format!("tracker range_cell_m {range_cell_m} is out of range; allowed: finite, > 0")
        })?;
        Ok(Tracker {
            params,
            range_cell_m,
            live: Vec::new(),
            done: Vec::new(),
            last: None,
            serial: 0,
            pairs: Vec::new(),
            used_track: Vec::new(),
            used_det: Vec::new(),
        })
    }

    /// The parameters in use.
    pub fn params(&self) -> &TrackerParams {
        &self.params
    }

    /// Feeds one CPI: its index (strictly increasing between calls; a skipped index counts
    /// as a CPI with no detections), its centre time `t_s` (finite, strictly increasing),
    /// and its detections. Detections with a non-finite range or velocity are ignored.
    pub fn update(&mut self, cpi_index: usize, t_s: f64, detections: &[Detection]) -> Result<()> {
        ensure(t_s.is_finite(), || {
            format!("tracker CPI time {t_s} is out of range; allowed: finite")
        })?;
        if let Some((ci, tl)) = self.last {
            ensure(cpi_index > ci, || {
                format!("tracker CPI index {cpi_index} is out of range; allowed: > {ci} (the previous one)")
            })?;
            ensure(t_s > tl, || {
                format!("tracker CPI time {t_s} s is out of range; allowed: > {tl} s (the previous one)")
            })?;
        }
        self.last = Some((cpi_index, t_s));
        let p = self.params;

        // Candidate pairs inside both gates, cost = normalised squared distance.
        self.pairs.clear();
        for (ti, tr) in self.live.iter().enumerate() {
            let dt = t_s - tr.t_last;
            let pred = tr.range + tr.rate * dt;
            let gate_r = p.range_gate(self.range_cell_m, dt);
            for (di, d) in detections.iter().enumerate() {
                if !(d.range_m.is_finite() && d.velocity_mps.is_finite()) {
                    continue;
                }
                let er = (d.range_m - pred) / gate_r;
                let ev = (d.velocity_mps - tr.rate) / p.velocity_gate_mps;
                if er.abs() <= 1.0 && ev.abs() <= 1.0 {
                    self.pairs.push((er * er + ev * ev, ti, di));
                }
            }
        }
        self.pairs
            .sort_unstable_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)).then(a.2.cmp(&b.2)));
        self.used_track.clear();
        self.used_track.resize(self.live.len(), false);
        self.used_det.clear();
        self.used_det.resize(detections.len(), false);
        for k in 0..self.pairs.len() {
            let (_, ti, di) = self.pairs[k];
            if self.used_track[ti] || self.used_det[di] {
                continue;
            }
            self.used_track[ti] = true;
            self.used_det[di] = true;
            let d = &detections[di];
            let tr = &mut self.live[ti];
            let dt = t_s - tr.t_last;
            let pred = tr.range + tr.rate * dt;
            let resid = d.range_m - pred;
            tr.range = pred + p.alpha * resid;
            tr.rate += p.beta * resid / dt;
            tr.rate += p.velocity_gain * (d.velocity_mps - tr.rate);
            tr.rate = tr.rate.clamp(-p.max_speed_mps, p.max_speed_mps);
            tr.t_last = t_s;
            tr.cpi_last = cpi_index;
            tr.hits += 1;
            tr.points.push(TrackPoint {
                cpi: cpi_index,
                t_s,
                detection: d.clone(),
            });
            if tr.state == State::Tentative && tr.hits >= p.confirm_hits {
                tr.state = State::Confirmed;
            }
        }

        // Retire: tentative tracks whose confirmation window has passed; confirmed tracks
        // that coasted longer than max_coast.
        let mut i = 0;
        while i < self.live.len() {
            let tr = &self.live[i];
            let retire = match tr.state {
                State::Tentative => cpi_index + 1 >= tr.cpi_first + p.confirm_window,
                State::Confirmed => cpi_index - tr.cpi_last > p.max_coast,
            };
            if retire {
                let tr = self.live.swap_remove(i);
                if tr.state == State::Confirmed {
                    self.done.push(tr);
                }
            } else {
                i += 1;
            }
        }

        // New tentative tracks from the unused detections.
        for (di, d) in detections.iter().enumerate() {
            if self.used_det[di] || !(d.range_m.is_finite() && d.velocity_mps.is_finite()) {
                continue;
            }
            let live = Live {
                state: if p.confirm_hits <= 1 {
                    State::Confirmed
                } else {
                    State::Tentative
                },
                range: d.range_m,
                rate: d.velocity_mps.clamp(-p.max_speed_mps, p.max_speed_mps),
                t_last: t_s,
                cpi_first: cpi_index,
                cpi_last: cpi_index,
                hits: 1,
                points: vec![TrackPoint {
                    cpi: cpi_index,
                    t_s,
                    detection: d.clone(),
                }],
                serial: self.serial,
            };
            self.serial += 1;
            self.live.push(live);
        }
        Ok(())
    }

    /// Ends every track and returns the confirmed ones lasting at least
    /// `min_track_duration_s`, numbered 0.. in order of start time.
    pub fn finish(self) -> Vec<Track> {
        let min_d = self.params.min_track_duration_s;
        let mut all: Vec<Live> = self
            .done
            .into_iter()
            .chain(self.live)
            .filter(|t| t.state == State::Confirmed)
            .collect();
        all.sort_by(|a, b| {
            a.points[0]
                .t_s
                .total_cmp(&b.points[0].t_s)
                .then(a.serial.cmp(&b.serial))
        });
        all.into_iter()
            .map(|t| Track {
                id: 0,
                start_s: t.points[0].t_s,
                end_s: t.points[t.points.len() - 1].t_s,
                points: t.points,
            })
            .filter(|t| t.duration_s() >= min_d)
            .enumerate()
            .map(|(id, mut t)| {
                t.id = id;
                t
            })
            .collect()
    }
}
