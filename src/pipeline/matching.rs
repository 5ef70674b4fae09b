//! The one track/label match rule of docs/recording-format.md, used by training, evaluation
//! and the audit: a track matches an annotation when at least half of the track's duration
//! lies inside the annotation's interval and the track's median range lies inside
//! `[range_min_m - one range cell, range_max_m + one range cell]`.

use crate::recording::{Annotation, RadarParams};

/// A track as the match rule sees it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TrackSpan {
    /// Start, s from the first chirp.
    pub start_s: f64,
    /// End, s.
    pub end_s: f64,
    /// Median range, m.
    pub median_range_m: f64,
}

/// True when `track` matches `ann` under the rule above.
pub fn matches(track: &TrackSpan, ann: &Annotation, p: &RadarParams) -> bool {
    let dur = (track.end_s - track.start_s).max(0.0);
    let (a0, a1) = (ann.start_s(p), ann.end_s(p));
    let overlap = (track.end_s.min(a1) - track.start_s.max(a0)).max(0.0);
    let time_ok = if dur > 0.0 {
        overlap >= 0.5 * dur - 1e-12
    } else {
        track.start_s >= a0 && track.start_s <= a1
    };
    let cell = p.range_cell_m();
    let r = track.median_range_m;
    time_ok && r >= ann.range_min_m - cell && r <= ann.range_max_m + cell
}

/// For each track, the annotation it matches, or `None`. When several match, the one with
/// the largest time overlap wins; overlaps within one chirp of each other count as equal,
/// and then the most specific range window wins: the smallest distance from the track's
/// median range to the window's farther edge (a rotorcraft crossing a vegetation patch
/// matches both; its own, narrower window sits closer around it). Remaining ties go to
/// the first annotation.
pub fn match_tracks(
    tracks: &[TrackSpan],
    anns: &[Annotation],
    p: &RadarParams,
) -> Vec<Option<usize>> {
    let t_chirp = p.chirp_interval_s;
    tracks
        .iter()
        .map(|t| {
            let ov = |x: &Annotation| t.end_s.min(x.end_s(p)) - t.start_s.max(x.start_s(p));
            let reach = |x: &Annotation| {
                (t.median_range_m - x.range_min_m)
                    .abs()
                    .max((x.range_max_m - t.median_range_m).abs())
            };
            let mut best: Option<usize> = None;
            for (i, a) in anns.iter().enumerate() {
                if !matches(t, a, p) {
                    continue;
                }
                best = match best {
                    None => Some(i),
                    Some(b) => {
                        let (oa, ob) = (ov(a), ov(&anns[b]));
                        let better = if (oa - ob).abs() > t_chirp {
                            oa > ob
                        } else {
                            reach(a) < reach(&anns[b])
                        };
                        Some(if better { i } else { b })
                    }
                };
            }
            best
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::recording::RangeAxis;

    fn params() -> RadarParams {
        RadarParams {
            carrier_hz: 9.4e9,
            sample_rate_hz: 0.0,
            samples_per_chirp: 64,
            chirp_interval_s: 1e-3,
            range_axis: RangeAxis::RangeProfile {
                range_cell_m: 2.0,
                range_start_m: 0.0,
            },
        }
    }

    fn ann(c0: usize, cn: usize, rmin: f64, rmax: f64) -> Annotation {
        Annotation {
            chirp_start: c0,
            chirp_count: cn,
            label: "bird".into(),
            range_min_m: rmin,
            range_max_m: rmax,
            target_id: None,
            truth: None,
        }
    }

    #[test]
    fn half_the_duration_and_one_cell_of_range() {
        // docs/recording-format.md worked by hand: annotation 1.0-2.0 s, 50-60 m, cell 2 m.
        let p = params();
        let a = ann(1000, 1000, 50.0, 60.0);
        let t = |s, e, r| TrackSpan {
            start_s: s,
            end_s: e,
            median_range_m: r,
        };
        assert!(matches(&t(1.5, 2.5, 55.0), &a, &p)); // exactly half inside
        assert!(!matches(&t(1.6, 2.6, 55.0), &a, &p)); // 40% inside
        assert!(matches(&t(1.2, 1.8, 48.0), &a, &p)); // one cell below the window
        assert!(!matches(&t(1.2, 1.8, 47.9), &a, &p));
        assert!(matches(&t(1.2, 1.8, 62.0), &a, &p));
        assert!(!matches(&t(1.2, 1.8, 62.1), &a, &p));
        let both = [ann(0, 1600, 50.0, 60.0), a.clone()];
        // Overlaps 0.6 s with the first and 0.9 s with the second: the second wins.
        assert_eq!(match_tracks(&[t(0.9, 1.9, 55.0)], &both, &p), vec![Some(1)]);
        assert_eq!(match_tracks(&[t(5.0, 6.0, 55.0)], &both, &p), vec![None]);
        // Equal overlap: a narrow window around the track beats a wide patch holding it,
        // whichever comes first.
        let patch = ann(0, 3000, 40.0, 70.0);
        let own = ann(0, 3000, 52.0, 58.0);
        let tr = [t(0.5, 2.5, 55.0)];
        assert_eq!(
            match_tracks(&tr, &[patch.clone(), own.clone()], &p),
            vec![Some(1)]
        );
        assert_eq!(match_tracks(&tr, &[own, patch], &p), vec![Some(0)]);
    }
}
