//! Physical estimates against the simulated truth: blade-flash rate and blade-tip speed of
//! the demo's rotorcraft at blade SNR >= 10 dB (coherent over a 256-chirp CPI and the range
//! FFT). Truth from the closed-form relations the simulator states in each annotation:
//! flash rate N f_rot (even N) or 2 N f_rot (odd N), tip speed 2 pi f_rot L (Chen, The
//! Micro-Doppler Effect in Radar, 2011, ch. 4; Martin & Mulgrew 1990; the odd-N rule from
//! memory). The scenes are the committed demo scenes of four radars (`RADARS`); the
//! recordings are simulated here.
//!
//! Measured here (longest matching track per target): flash within 5% for 16 of 19 clear
//! rotorcraft (the misses are a half or a quarter of the truth: a subharmonic); tip within
//! 5% for 3 of the 4 whose tips stay under 0.95 of the unambiguous speed lambda / (4T)
//! (median error 3.4%); where the tips exceed it (most of the demo's 40-110 m/s tips on
//! radars of 10-25 kHz) the tip speed cannot be measured from one Doppler spectrum and the
//! estimate is that speed, a lower bound: 13 of 14. The thresholds hold that level.
//!
//! The fast-band power (`fast_band_snr_db`: power more than 20 m/s from the body over the
//! reference noise, referred to 256 chirps) is checked against the truth's blade SNR (the
//! radar equation, Mahafza Eq. 1.56, with the time-averaged power of the blades): by
//! Parseval's theorem a band's share of the spectrum is its share of the power whatever
//! the Doppler spread, so the feature equals the blade SNR less the blades' power within
//! 20 m/s of the hub (2-5 dB for tips of 40-80 m/s), never more. Checked:
//! truth minus feature within -1..6 dB for at least 90% of the rotorcraft with blade SNR
//! >= 15 dB (measured: 17 of 17; the bound allows one miss).
//!
//! Bounds against the measured figures: flash 80% (16 of 19 needed, as measured: no
//! margin), tip 70% of 4 (3, as measured), wrapped tips 85% (12 of 14; measured 13).

use std::path::Path;

use rotorsift::pipeline::{self, match_tracks, PipelineSettings};
use rotorsift::recording::RecordingMeta;

/// The demo radars whose rotorcraft runs are simulated here: 24 GHz FMCW (20 kHz), X-band
/// range profiles (10 kHz), Ka-band FMCW (25 kHz), Ku-band FMCW (10 kHz, tips alias).
const RADARS: [&str; 4] = ["k24", "x94", "a35f", "u16"];

#[test]
fn blade_flash_rate_and_tip_speed_match_the_truth() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("labelled-demo/scenes");
    let tmp = tempfile::tempdir().unwrap();
    let settings = PipelineSettings::default();
    let (mut flash_ok, mut flash_n, mut tip_ok, mut tip_n) = (0, 0, 0, 0);
    let mut tip_errors = Vec::new();
    let fast_col = rotorsift::features::names::names()
        .iter()
        .position(|n| n == "fast_band_snr_db")
        .unwrap();
    let (mut band_ok, mut band_n) = (0, 0);
    let (mut wrap_ok, mut wrap_n) = (0, 0);
    for radar in RADARS {
        for i in 0..6 {
            let scene = root.join(format!("run-{radar}-{i:02}-uav.toml"));
            let metas = rotorsift::simulate::simulate_scene_file(&scene, tmp.path(), None).unwrap();
            let meta = RecordingMeta::open(&metas[0]).unwrap();
            let a = pipeline::analyse(&meta, 0, &settings, true).unwrap();
            let spans: Vec<_> = a.tracks.iter().map(|t| t.span()).collect();
            let matched = match_tracks(&spans, &meta.annotations, &meta.params);
            let vmax = meta.params.unambiguous_velocity_mps();
            for (k, ann) in meta.annotations.iter().enumerate() {
                if ann.label != "rotorcraft" || ann.truth_f64("blade_snr_db").unwrap_or(0.0) < 10.0
                {
                    continue;
                }
                let best = a
                    .tracks
                    .iter()
                    .zip(&matched)
                    .filter(|(_, m)| **m == Some(k))
                    .max_by(|x, y| (x.0.end_s - x.0.start_s).total_cmp(&(y.0.end_s - y.0.start_s)));
                let Some((t, _)) = best else { continue };
                let blade_snr = ann.truth_f64("blade_snr_db").unwrap();
                if blade_snr >= 15.0 {
                    band_n += 1;
                    let d = blade_snr - t.features[fast_col];
                    if (-1.0..=6.0).contains(&d) {
                        band_ok += 1;
                    }
                    eprintln!(
                        "{radar}-{i:02}: blade SNR {blade_snr:.1} dB, fast band {:.1} dB",
                        t.features[fast_col]
                    );
                }
                let flash = ann.truth_f64("blade_flash_hz").unwrap();
                let tip = ann.truth_f64("tip_speed_mps").unwrap();
                flash_n += 1;
                let fe = t.rotor.blade_flash_hz.map(|f| f / flash - 1.0);
                if fe.is_some_and(|e| e.abs() <= 0.05) {
                    flash_ok += 1;
                }
                let mut te = None;
                if tip >= vmax {
                    // the tips wrap: the estimate is the lower bound, the unambiguous speed
                    wrap_n += 1;
                    if t.rotor
                        .tip_speed_mps
                        .is_some_and(|v| (v / vmax - 1.0).abs() <= 0.01)
                    {
                        wrap_ok += 1;
                    }
                }
                if tip < 0.95 * vmax {
                    tip_n += 1;
                    te = t.rotor.tip_speed_mps.map(|v| v / tip - 1.0);
                    if let Some(e) = te {
                        tip_errors.push(e.abs());
                        if e.abs() <= 0.05 {
                            tip_ok += 1;
                        }
                    }
                }
                eprintln!(
                    "{radar}-{i:02}: flash {flash:.1} Hz est {:?} err {:?}; tip {tip:.1} m/s est {:?} err {:?}",
                    t.rotor.blade_flash_hz, fe, t.rotor.tip_speed_mps, te
                );
            }
        }
    }
    tip_errors.sort_by(|a, b| a.total_cmp(b));
    let median_tip = tip_errors[tip_errors.len() / 2];
    eprintln!("flash within 5%: {flash_ok}/{flash_n}; tip within 5%: {tip_ok}/{tip_n}; median |tip error| {median_tip:.3}");
    eprintln!("tips beyond the unambiguous speed reported as it: {wrap_ok}/{wrap_n}");
    assert!(flash_n >= 15, "enough clear rotorcraft: {flash_n}");
    assert!(
        flash_ok as f64 >= 0.8 * flash_n as f64,
        "flash within 5%: {flash_ok}/{flash_n}"
    );
    assert!(
        tip_n >= 4 && tip_ok as f64 >= 0.7 * tip_n as f64,
        "tip within 5%: {tip_ok}/{tip_n}"
    );
    assert!(median_tip <= 0.05, "median tip error {median_tip:.3}");
    assert!(
        wrap_n >= 8 && wrap_ok as f64 >= 0.85 * wrap_n as f64,
        "tips beyond the unambiguous speed reported as it: {wrap_ok}/{wrap_n}"
    );
    eprintln!("fast band within -1..6 dB of the blade SNR: {band_ok}/{band_n}");
    assert!(
        band_n >= 10 && band_ok as f64 >= 0.9 * band_n as f64,
        "fast band within -1..6 dB of the blade SNR: {band_ok}/{band_n}"
    );
}
