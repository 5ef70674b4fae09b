//! Turns the CFAR hits of one CPI into [`Detection`]s: hits whose range cells lie close
//! together form one detection whatever their Doppler bins (a rotorcraft's body line and
//! its blade lines share a range), measured in physical units by caller-given axis maps.

use serde::{Deserialize, Serialize};

use super::cfar::CfarHit;
use super::detection::Detection;
use crate::error::ensure;
use crate::Result;

/// How hits are grouped.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ClusterParams {
    /// Largest step between consecutive occupied range-cell indices inside one group:
    /// 1 = only adjacent cells join (cells 4 and 5 do, 4 and 6 do not); 2 also bridges one
    /// empty cell. Allowed 1..=64.
    pub max_cell_step: usize,
}

impl Default for ClusterParams {
    /// Adjacent range cells only (`max_cell_step` 1).
    fn default() -> Self {
        ClusterParams { max_cell_step: 1 }
    }
}

impl ClusterParams {
    /// Builds and checks parameters.
    pub fn new(max_cell_step: usize) -> Result<Self> {
        let p = ClusterParams { max_cell_step };
        p.check()?;
        Ok(p)
    }

    /// Checks every field; the error names the value and the allowed range.
    pub fn check(&self) -> Result<()> {
        ensure((1..=64).contains(&self.max_cell_step), || {
            format!(
                "cluster max_cell_step {} is out of range; allowed: 1..=64",
                self.max_cell_step
            )
        })
    }
}

/// Groups hits into detections; keeps its sort buffer between CPIs.
#[derive(Debug, Clone, Default)]
pub struct Clusterer {
    params: ClusterParams,
    order: Vec<usize>,
}

impl Clusterer {
    /// Checks `params` and makes an empty clusterer.
    pub fn new(params: ClusterParams) -> Result<Self> {
        params.check()?;
        Ok(Clusterer {
            params,
            order: Vec::new(),
        })
    }

    /// Groups `hits` (any order) and appends one [`Detection`] per group to `out`
    /// (cleared first), in increasing range.
    ///
    /// - `range_of_cell(x)`: range in m of the (fractional) range-cell index `x`.
    /// - `velocity_of_bin(d)`: radial velocity in m/s of Doppler bin `d` (positive =
    ///   receding); the caller accounts for its bin order (fft-shifted or not).
    /// - `in_notch(d)`: whether Doppler bin `d` lies in the clutter canceller's notch.
    ///
    /// Per group: `range_m` = range of the power-weighted centroid of the hits' cell
    /// indices (linear power weights); `range_min_m`/`range_max_m` = ranges of the
    /// extreme cells; `velocity_mps` from the strongest hit when it holds at least
    /// [`BODY_DOMINANCE`] of the group's power, else the power-weighted mean velocity;
    /// `snr_db` and `in_notch` from the strongest hit;
    /// `spread_mps` = power-weighted standard deviation of the hits' velocities (0 for a
    /// single hit). Hits with non-finite or negative power are ignored.
    pub fn cluster(
        &mut self,
        hits: &[CfarHit],
        range_of_cell: &dyn Fn(f64) -> f64,
        velocity_of_bin: &dyn Fn(usize) -> f64,
        in_notch: &dyn Fn(usize) -> bool,
        out: &mut Vec<Detection>,
    ) {
        out.clear();
        self.order.clear();
        self.order
            .extend((0..hits.len()).filter(|&i| hits[i].power.is_finite() && hits[i].power >= 0.0));
        self.order
            .sort_unstable_by_key(|&i| (hits[i].range, hits[i].doppler));
        let step = self.params.max_cell_step;
        let mut start = 0;
        while start < self.order.len() {
            let mut end = start + 1;
            while end < self.order.len()
                && hits[self.order[end]].range - hits[self.order[end - 1]].range <= step
            {
                end += 1;
            }
            let group = &self.order[start..end];
            out.push(measure(
                hits,
                group,
                range_of_cell,
                velocity_of_bin,
                in_notch,
            ));
            start = end;
        }
    }
}

/// Share of a group's power its strongest hit must hold to be taken as the body line.
pub const BODY_DOMINANCE: f64 = 0.25;

fn measure(
    hits: &[CfarHit],
    group: &[usize],
    range_of_cell: &dyn Fn(f64) -> f64,
    velocity_of_bin: &dyn Fn(usize) -> f64,
    in_notch: &dyn Fn(usize) -> bool,
) -> Detection {
    let mut wsum = 0.0f64;
    let mut rsum = 0.0f64;
    let mut vsum = 0.0f64;
    let mut best = group[0];
    for &i in group {
        let h = &hits[i];
        let w = h.power as f64;
        wsum += w;
        rsum += w * h.range as f64;
        vsum += w * velocity_of_bin(h.doppler);
        if h.power > hits[best].power {
            best = i;
        }
    }
    let first = hits[group[0]].range;
    let last = hits[group[group.len() - 1]].range;
    let (centroid, vmean) = if wsum > 0.0 {
        (rsum / wsum, vsum / wsum)
    } else {
        // All-zero powers: unweighted.
        let n = group.len() as f64;
        (
            group.iter().map(|&i| hits[i].range as f64).sum::<f64>() / n,
            group
                .iter()
                .map(|&i| velocity_of_bin(hits[i].doppler))
                .sum::<f64>()
                / n,
        )
    };
    let var = if wsum > 0.0 {
        group
            .iter()
            .map(|&i| {
                let d = velocity_of_bin(hits[i].doppler) - vmean;
                hits[i].power as f64 * d * d
            })
            .sum::<f64>()
            / wsum
    } else {
        0.0
    };
    let b = &hits[best];
    // A body line dominates a mover's hits; when no hit holds a quarter of the group's
    // power (blade lines of a rotor whose body is in the canceller notch), the spread is
    // about symmetric around the body and its power-weighted centroid is the better guess.
    let dominant = wsum <= 0.0 || b.power as f64 >= BODY_DOMINANCE * wsum;
    Detection {
        range_m: range_of_cell(centroid),
        velocity_mps: if dominant {
            velocity_of_bin(b.doppler)
        } else {
            vmean
        },
        snr_db: b.snr_db as f64,
        range_min_m: range_of_cell(first as f64),
        range_max_m: range_of_cell(last as f64),
        spread_mps: var.max(0.0).sqrt(),
        in_notch: in_notch(b.doppler),
        rotor_evidence: 0.0,
        residue_share: 0.0,
        md_ratio: 0.0,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn hit(range: usize, doppler: usize, power: f32) -> CfarHit {
        CfarHit {
            range,
            doppler,
            power,
            noise: 1.0,
            snr_db: 10.0 * power.log10(),
        }
    }

    // Axes of a made-up radar: cell 0 at 2.0 m, 0.5 m cells; 64 Doppler bins,
    // fft-shifted (bin 32 = 0 m/s), 0.25 m/s per bin; notch = bins 31..=33.
    fn range_of(x: f64) -> f64 {
        2.0 + 0.5 * x
    }
    fn vel_of(d: usize) -> f64 {
        (d as f64 - 32.0) * 0.25
    }
    fn notch(d: usize) -> bool {
        (31..=33).contains(&d)
    }

    #[test]
    fn hand_made_hits() {
        // Group A: cells 10, 11 (body at bin 32, blade lines at bins 40 and 20).
        // Group B: cell 20 alone, one hit. Group C: cell 13 is 2 cells from 11 -> separate.
        let hits = vec![
            hit(20, 36, 5.0),
            hit(10, 32, 8.0),
            hit(11, 32, 4.0),
            hit(10, 40, 2.0),
            hit(11, 20, 2.0),
            hit(13, 33, 1.0),
        ];
        let mut c = Clusterer::new(ClusterParams::default()).unwrap();
        let mut out = Vec::new();
        c.cluster(&hits, &range_of, &vel_of, &notch, &mut out);
        assert_eq!(out.len(), 3);
        let a = &out[0];
        // Hand arithmetic: weights 8 (cell 10), 4 (11), 2 (10), 2 (11); W = 16;
        // centroid = (8*10 + 4*11 + 2*10 + 2*11)/16 = 166/16 = 10.375 cells -> 2 + 5.1875 m.
        assert!((a.range_m - 7.1875).abs() < 1e-12, "{a:?}");
        assert_eq!(a.range_min_m, 7.0);
        assert_eq!(a.range_max_m, 7.5);
        // Strongest hit: cell 10 bin 32 -> 0 m/s, 10 log10 8 dB, in the notch.
        assert_eq!(a.velocity_mps, 0.0);
        assert!((a.snr_db - 10.0 * 8f64.log10()).abs() < 1e-5);
        assert!(a.in_notch);
        // Velocities: 0 (w 8), 0 (w 4), +2 (w 2), -3 (w 2); mean = (4 - 6)/16 = -0.125;
        // var = (12*0.015625 + 2*2.125^2 + 2*2.875^2)/16 = (0.1875 + 9.03125 + 16.53125)/16
        //     = 25.75/16 = 1.609375; spread = 1.26861...
        assert!((a.spread_mps - 1.609375f64.sqrt()).abs() < 1e-12, "{a:?}");
        let cgrp = &out[1];
        assert_eq!(cgrp.range_m, 2.0 + 0.5 * 13.0);
        assert!(cgrp.in_notch);
        assert_eq!(cgrp.spread_mps, 0.0);
        let b = &out[2];
        assert_eq!(b.range_m, 12.0);
        assert_eq!(b.velocity_mps, 1.0);
        assert!(!b.in_notch);

        // With max_cell_step 2, cell 13 joins group A (11 -> 13 is a step of 2).
        let mut c2 = Clusterer::new(ClusterParams::new(2).unwrap()).unwrap();
        c2.cluster(&hits, &range_of, &vel_of, &notch, &mut out);
        assert_eq!(out.len(), 2);
        assert_eq!(out[0].range_max_m, 8.5);
    }

    #[test]
    fn spread_without_a_dominant_line_reports_its_centroid() {
        // Blade lines of a hovering rotor: eight equal hits at +-1, +-2, +-3, +-4 m/s
        // (bins 28..36 without 32); none holds a quarter of the power, so the velocity is
        // the centroid, 0 m/s, not the first strongest line.
        let hits: Vec<CfarHit> = [28, 29, 30, 31, 33, 34, 35, 36]
            .iter()
            .map(|&d| hit(5, d * 4 - 96, 3.0))
            .collect();
        let mut c = Clusterer::default();
        let mut out = Vec::new();
        c.cluster(&hits, &range_of, &vel_of, &notch, &mut out);
        assert_eq!(out.len(), 1);
        assert!(out[0].velocity_mps.abs() < 1e-12, "{:?}", out[0]);
        assert!(out[0].spread_mps > 1.0);
    }

    #[test]
    fn empty_and_bad_params() {
        let mut c = Clusterer::default();
        let mut out = vec![];
        c.cluster(&[], &range_of, &vel_of, &notch, &mut out);
        assert!(out.is_empty());
        let e = ClusterParams::new(0).unwrap_err().to_string();
        assert!(e.contains("max_cell_step 0") && e.contains("1..=64"), "{e}");
    }
}
