//! Front end against reference libraries: golden vectors written by
//! `tests/reference/make_frontend_golden.py` from numpy.fft.fft, scipy.signal.get_window,
//! scipy.signal.stft and scipy.signal.spectrogram (versions stored in the JSON).

use rotorsift::frontend::{RangePlan, Scaling, StftParams, StftPlan, Window};
use rustfft::num_complex::Complex32;
use serde_json::Value;

fn golden() -> Value {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/frontend_golden.json"
    );
    serde_json::from_str(&std::fs::read_to_string(path).expect("read golden")).expect("parse")
}

fn reals(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn complexes(v: &Value) -> Vec<(f64, f64)> {
    reals(&v["re"]).into_iter().zip(reals(&v["im"])).collect()
}

fn to_c32(v: &[(f64, f64)]) -> Vec<Complex32> {
    v.iter()
        .map(|&(r, i)| Complex32::new(r as f32, i as f32))
        .collect()
}

/// Largest |got - want| over the largest |want|.
fn rel_err_c(got: &[Complex32], want: &[(f64, f64)]) -> f64 {
    assert_eq!(got.len(), want.len());
    let peak = want.iter().map(|&(r, i)| r.hypot(i)).fold(0.0, f64::max);
    got.iter()
        .zip(want)
        .map(|(g, &(r, i))| (g.re as f64 - r).hypot(g.im as f64 - i))
        .fold(0.0, f64::max)
        / peak
}

fn rel_err_r(got: &[f32], want: &[f64]) -> f64 {
    assert_eq!(got.len(), want.len());
    let peak = want.iter().map(|v| v.abs()).fold(0.0, f64::max);
    got.iter()
        .zip(want)
        .map(|(&g, &w)| (g as f64 - w).abs())
        .fold(0.0, f64::max)
        / peak
}

// Source: numpy.fft.fft (numpy version in the JSON), with and without scipy's periodic
// Hann window; tolerance 1e-5 of the peak magnitude (f32 FFT rounding).
#[test]
fn range_fft_matches_numpy() {
    let g = golden();
    println!("golden versions: {}", g["versions"]);
    let r = &g["range_fft"];
    let n = r["n"].as_u64().unwrap() as usize;
    let x = to_c32(&complexes(&r["input"]));
    for (w, key) in [
        (Window::Rectangular, "fft_rect"),
        (Window::Hann, "fft_hann"),
    ] {
        let mut y = x.clone();
        RangePlan::new(n, w).unwrap().process(&mut y).unwrap();
        let e = rel_err_c(&y, &complexes(&r[key]));
        println!("range fft {w}: rel err {e:.2e}");
        assert!(e < 1e-5, "{w}: {e}");
    }
}

// Source: scipy.signal.get_window(name, len, fftbins=True/False) (scipy version in JSON).
#[test]
fn windows_match_scipy_get_window() {
    let g = golden();
    for case in g["windows"].as_array().unwrap() {
        let w: Window = case["window"].as_str().unwrap().parse().unwrap();
        let len = case["len"].as_u64().unwrap() as usize;
        let want = reals(&case["values"]);
        let got = if case["periodic"].as_bool().unwrap() {
            w.coefficients(len)
        } else {
            w.symmetric_coefficients(len)
        };
        for (a, b) in got.iter().zip(&want) {
            assert!((*a as f64 - b).abs() < 1e-6, "{w} {len} {case}");
        }
        assert_eq!(got.len(), want.len());
    }
}

// Source: scipy.signal.stft(..., return_onesided=False, boundary=None, padded=False,
// detrend=False, scaling=...) and scipy.signal.spectrogram(..., detrend=False,
// return_onesided=False, mode='psd'), three window/nperseg/noverlap/nfft/scaling combos
// including nfft > nperseg; tolerance 1e-5 of the peak magnitude.
#[test]
fn stft_and_spectrogram_match_scipy() {
    let g = golden();
    let x = to_c32(&complexes(&g["stft_input"]));
    for c in g["stft"].as_array().unwrap() {
        let window: Window = c["window"].as_str().unwrap().parse().unwrap();
        let scaling = match c["scaling"].as_str().unwrap() {
            "psd" => Scaling::Psd,
            _ => Scaling::Spectrum,
        };
        let u = |k: &str| c[k].as_u64().unwrap() as usize;
        let p = StftParams::new(window, u("nperseg"), u("noverlap"), u("nfft"), scaling)
            .fs(c["fs"].as_f64().unwrap());
        let plan = StftPlan::new(p).unwrap();
        let z = plan.stft(&x, false).unwrap();
        assert_eq!(z.dim(), (u("frames"), u("nfft")), "{c:?}");
        let ez = rel_err_c(z.as_slice().unwrap(), &complexes(&c["stft"]));
        let s = plan.spectrogram(&x, false).unwrap();
        let es = rel_err_r(s.as_slice().unwrap(), &reals(&c["spectrogram"]));
        let times = plan.frame_times_s(x.len());
        for (a, b) in times.iter().zip(reals(&c["times"])) {
            assert!((a - b).abs() < 1e-9 * b.abs().max(1.0));
        }
        for (a, b) in plan.frequencies_hz(false).iter().zip(reals(&c["freqs"])) {
            assert!((a - b).abs() < 1e-9 * b.abs().max(1.0));
        }
        println!(
            "stft {window} {}: stft rel err {ez:.2e}, spectrogram rel err {es:.2e}",
            u("nperseg")
        );
        assert!(ez < 1e-5 && es < 1e-5, "{ez} {es}");
    }
}
