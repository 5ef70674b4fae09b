//! Tracker on synthetic detection streams: crossing targets with noise and missed
//! detections, a uniform false-detection field against the binomial M-of-N false-track
//! expectation, hovering versus moving targets, and parameter errors.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};
use rotorsift::detect::{Detection, Track, Tracker, TrackerParams};

const CPI_S: f64 = 0.02;
const CELL_M: f64 = 0.75;

fn det(range_m: f64, velocity_mps: f64) -> Detection {
    Detection {
        range_m,
        velocity_mps,
        snr_db: 15.0,
        range_min_m: range_m - CELL_M,
        range_max_m: range_m + CELL_M,
        spread_mps: 1.0,
        in_notch: velocity_mps.abs() < 0.3,
        rotor_evidence: 0.0,
        residue_share: 0.0,
        md_ratio: 0.0,
    }
}

/// A target: (start time, end time, range at t = 0, constant radial velocity).
struct Truth {
    t0: f64,
    t1: f64,
    r0: f64,
    v: f64,
}

/// Runs the default tracker over `n_cpi` CPIs with noisy detections of `truths`
/// (range sd 0.3 m, velocity sd 0.2 m/s, each missed with probability `p_miss`).
fn run(truths: &[Truth], n_cpi: usize, p_miss: f64, seed: u64) -> Vec<Track> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let nr = Normal::new(0.0, 0.3).unwrap();
    let nv = Normal::new(0.0, 0.2).unwrap();
    let mut tr = Tracker::new(TrackerParams::default(), CELL_M).unwrap();
    for i in 0..n_cpi {
        let t = (i as f64 + 0.5) * CPI_S;
        let mut dets = Vec::new();
        for g in truths {
            if t < g.t0 || t > g.t1 || rng.gen_bool(p_miss) {
                continue;
            }
            dets.push(det(
                g.r0 + g.v * t + nr.sample(&mut rng),
                g.v + nv.sample(&mut rng),
            ));
        }
        tr.update(i, t, &dets).unwrap();
    }
    tr.finish()
}

// Two targets approach each other and cross in range at t = 10 s (80 m): A recedes from
// 40 m at +4 m/s over 0-20 s, B approaches from 120 m at -4 m/s from 0.5 s to 20 s.
// With 10% missed detections the tracker must give exactly two tracks, numbered in start
// order, each spanning its target's interval (to within the 3-of-5 confirmation delay and
// a few missed CPIs), with no swap at the crossing (every point's velocity has its
// target's sign).
#[test]
fn crossing_targets_give_two_tracks() {
    let truths = [
        Truth {
            t0: 0.0,
            t1: 20.0,
            r0: 40.0,
            v: 4.0,
        },
        Truth {
            t0: 0.5,
            t1: 20.0,
            r0: 120.0,
            v: -4.0,
        },
    ];
    for seed in 0..3u64 {
        let tracks = run(&truths, 1000, 0.1, 0x7AC0 + seed);
        assert_eq!(tracks.len(), 2, "seed {seed}: {:?}", summary(&tracks));
        let (a, b) = (&tracks[0], &tracks[1]);
        assert_eq!((a.id, b.id), (0, 1));
        assert!(a.start_s < 0.2 && a.end_s > 19.8, "{:?}", summary(&tracks));
        assert!(
            (b.start_s - 0.5).abs() < 0.2 && b.end_s > 19.8,
            "{:?}",
            summary(&tracks)
        );
        assert!(a.points.iter().all(|p| p.detection.velocity_mps > 0.0));
        assert!(b.points.iter().all(|p| p.detection.velocity_mps < 0.0));
        // 10% missed: about 900 of 1000 CPIs hold a point of A.
        assert!(
            a.points.len() > 850 && a.points.len() < 950,
            "{}",
            a.points.len()
        );
        assert!((a.median_velocity_mps() - 4.0).abs() < 0.1);
        assert!((b.median_velocity_mps() + 4.0).abs() < 0.1);
        assert!(a.range_min_m() < 41.0 && a.range_max_m() > 119.0);
        assert!((a.median_range_m() - 80.0).abs() < 2.0);
        assert!(!a.hovering() && !b.hovering());
    }
}

fn summary(t: &[Track]) -> Vec<(usize, f64, f64, usize)> {
    t.iter()
        .map(|t| (t.id, t.start_s, t.end_s, t.points.len()))
        .collect()
}

/// C(n, k).
fn choose(n: usize, k: usize) -> f64 {
    (0..k).fold(1.0, |acc, i| acc * (n - i) as f64 / (i + 1) as f64)
}

// False detections only: Poisson, 0.05 per CPI, uniform over 0-200 m and ±40 m/s, for 10
// minutes of 20 ms CPIs. Expectation (M-of-N confirmation logic, binomial; common practice,
// e.g. Blackman & Popoli, *Design and Analysis of Modern Tracking Systems*, 1999, ch. 3,
// from memory): every false detection starts a tentative track, which confirms when at
// least M−1 more false detections fall in its gate in the next N−1 CPIs. With p the
// probability of a false detection in the gate in one CPI (bounded by the widest gate,
// that of the last CPI of the window), P_confirm <= sum_{j=M-1}^{N-1} C(N-1, j) p^j
// (1-p)^(N-1-j). Default gate: 1.5 m + 30 m/s · 4 · 20 ms = 3.9 m half-width ->
// p <= 0.05 · 7.8/200 = 0.00195; P_confirm <= 2.3e-5; 150 starts per minute -> at most
// 3.4e-3 false tracks per minute, far below 3 per minute; so none in 10 minutes.
#[test]
fn false_detections_give_no_confirmed_tracks() {
    let p = TrackerParams::default();
    let rate = 0.05;
    let span_m = 200.0;
    let gate = p.range_gate(CELL_M, (p.confirm_window - 1) as f64 * CPI_S);
    let pg = rate * (2.0 * gate).min(span_m) / span_m;
    let (m, n) = (p.confirm_hits, p.confirm_window);
    let p_confirm: f64 = (m - 1..n)
        .map(|j| choose(n - 1, j) * pg.powi(j as i32) * (1.0 - pg).powi((n - 1 - j) as i32))
        .sum();
    let cpi_per_min = 60.0 / CPI_S;
    let per_min = rate * cpi_per_min * p_confirm;
    eprintln!("false-track bound: gate {gate} m, p {pg:.3e}, P_confirm {p_confirm:.3e}, {per_min:.3e} per minute");
    // under 0.1 false tracks in ten minutes (the tighter of the two bounds once checked)
    let minutes = 10.0;
    assert!(per_min * minutes < 0.1, "{per_min}");

    let mut rng = ChaCha8Rng::seed_from_u64(0xFA15E);
    let mut tr = Tracker::new(p, CELL_M).unwrap();
    let n_cpi = (minutes * cpi_per_min) as usize;
    let mut n_false = 0;
    for i in 0..n_cpi {
        let t = i as f64 * CPI_S;
        // Poisson(0.05) by inversion (at most a few per CPI).
        let u: f64 = rng.gen();
        let (mut k, mut cdf, mut pk) = (0, (-rate).exp(), (-rate).exp());
        while u > cdf {
            k += 1;
            pk *= rate / k as f64;
            cdf += pk;
        }
        let dets: Vec<Detection> = (0..k)
            .map(|_| det(rng.gen_range(0.0..span_m), rng.gen_range(-40.0..40.0)))
            .collect();
        n_false += dets.len();
        tr.update(i, t, &dets).unwrap();
    }
    // The field really held false detections at the stated rate.
    assert!(
        (n_false as f64 / n_cpi as f64 - rate).abs() < 0.01,
        "{n_false}"
    );
    let tracks = tr.finish();
    assert!(tracks.is_empty(), "{:?}", summary(&tracks));
}

// Hovering: radial speed under 0.5 m/s (docs/output-format.md). A hovering target at 60 m with
// velocity noise and 10% of its points taken from a blade line at +15 m/s is hovering; a
// 5 m/s mover is not.
#[test]
fn hovering_and_moving() {
    let mut rng = ChaCha8Rng::seed_from_u64(0x40E2);
    let nv = Normal::new(0.0, 0.15).unwrap();
    let mut tr = Tracker::new(TrackerParams::default(), CELL_M).unwrap();
    for i in 0..250 {
        let t = i as f64 * CPI_S;
        let v = if rng.gen_bool(0.1) {
            15.0
        } else {
            nv.sample(&mut rng)
        };
        let dets = [
            det(60.0 + 0.1 * nv.sample(&mut rng), v),
            det(30.0 + 5.0 * t, 5.0),
        ];
        tr.update(i, t, &dets).unwrap();
    }
    let tracks = tr.finish();
    assert_eq!(tracks.len(), 2, "{:?}", summary(&tracks));
    let hover = tracks.iter().find(|t| t.median_range_m() > 50.0).unwrap();
    let mover = tracks.iter().find(|t| t.median_range_m() < 50.0).unwrap();
    assert!(
        hover.points.len() > 240,
        "blade-line points stay on the track"
    );
    assert!(hover.hovering());
    assert!(hover.max_abs_velocity_mps() >= 15.0);
    assert!(!mover.hovering());
    assert!((mover.median_velocity_mps() - 5.0).abs() < 1e-9);
    assert!((mover.duration_s() - 249.0 * CPI_S).abs() < 1e-9);
    assert!((mover.mean_snr_db() - 15.0).abs() < 1e-9);
}

// A tentative track that misses too many CPIs of its window is dropped; a confirmed one
// coasts max_coast CPIs and then ends, so a target that returns after a longer gap gives
// a second track.
#[test]
fn confirmation_and_coasting() {
    let p = TrackerParams {
        min_track_duration_s: 0.0,
        ..TrackerParams::default()
    };
    // 2 hits in 5 CPIs: never confirmed (needs 3 of 5).
    let mut tr = Tracker::new(p, CELL_M).unwrap();
    for i in 0..20 {
        let d = if i % 3 == 0 {
            vec![det(50.0, 0.0)]
        } else {
            vec![]
        };
        tr.update(i, i as f64 * CPI_S, &d).unwrap();
    }
    assert!(tr.finish().is_empty());
    // Hits at CPIs 0..10, a gap of 12 CPIs (> max_coast 10), hits at 22..32.
    let mut tr = Tracker::new(p, CELL_M).unwrap();
    for i in 0..32 {
        let d = if !(10..22).contains(&i) {
            vec![det(50.0, 0.0)]
        } else {
            vec![]
        };
        tr.update(i, i as f64 * CPI_S, &d).unwrap();
    }
    let t = tr.finish();
    assert_eq!(t.len(), 2, "{:?}", summary(&t));
    assert_eq!(t[0].points.len(), 10);
    assert_eq!(t[1].points.first().unwrap().cpi, 22);
    // A gap of 10 CPIs (= max_coast) is bridged.
    let mut tr = Tracker::new(p, CELL_M).unwrap();
    for i in 0..32 {
        let d = if !(10..20).contains(&i) {
            vec![det(50.0, 0.0)]
        } else {
            vec![]
        };
        tr.update(i, i as f64 * CPI_S, &d).unwrap();
    }
    assert_eq!(tr.finish().len(), 1);
}

#[test]
fn bad_params_and_inputs() {
    let d = TrackerParams::default();
    assert!(d.check().is_ok());
    let cases: Vec<(TrackerParams, &str)> = vec![
        (
            TrackerParams {
                confirm_hits: 6,
                ..d
            },
            "confirm_hits 6 is out of range; allowed: 1..=5",
        ),
        (
            TrackerParams {
                confirm_window: 0,
                ..d
            },
            "confirm_window 0 is out of range; allowed: 1..=32",
        ),
        (
            TrackerParams {
                range_gate_m: -1.0,
                ..d
            },
            "range_gate_m -1 is out of range",
        ),
        (
            TrackerParams {
                velocity_gate_mps: f64::NAN,
                ..d
            },
            "velocity_gate_mps NaN",
        ),
        (TrackerParams { alpha: 0.0, ..d }, "alpha 0 is out of range"),
        (TrackerParams { beta: 2.0, ..d }, "beta 2 is out of range"),
        (
            TrackerParams {
                max_speed_mps: 0.0,
                ..d
            },
            "max_speed_mps 0",
        ),
    ];
    for (p, want) in cases {
        let e = Tracker::new(p, CELL_M).unwrap_err().to_string();
        assert!(e.contains(want), "{e} / {want}");
    }
    assert!(Tracker::new(d, 0.0)
        .unwrap_err()
        .to_string()
        .contains("range_cell_m 0"));
    let mut tr = Tracker::new(d, CELL_M).unwrap();
    tr.update(3, 1.0, &[]).unwrap();
    assert!(tr.update(3, 1.1, &[]).is_err());
    assert!(tr.update(4, 1.0, &[]).is_err());
    assert!(tr.update(5, f64::NAN, &[]).is_err());
    assert!(tr.update(5, 1.2, &[det(f64::NAN, 0.0)]).is_ok());
}
