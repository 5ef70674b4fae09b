//! Check values of the simulator's site background — scintillating stationary scatterers,
//! distributed ground clutter, the radar's drift, FMCW leakage and DC offset — measured from
//! the samples it writes, each against the relation or figure named beside it.

use std::f64::consts::PI;

use rotorsift::simulate::{simulate, Scene};
use rustfft::num_complex::{Complex32, Complex64};
use rustfft::FftPlanner;

const C: f64 = 299_792_458.0;

fn run(toml: &str, seed: u64) -> Vec<Complex32> {
    let scene = Scene::parse_all(toml).expect("scene parses").remove(0);
    let mut all = Vec::new();
    simulate(&scene, seed, &mut |b| {
        all.extend_from_slice(b);
        Ok(())
    })
    .expect("simulates");
    all
}

fn series(x: &[Complex32], n: usize, k: usize) -> Vec<Complex64> {
    x.chunks_exact(n)
        .map(|c| Complex64::new(c[k].re as f64, c[k].im as f64))
        .collect()
}

/// Welch power spectral estimate (Hann segments of `len`, hop len/2) of `x`, one-sided in
/// |f| (bins k and len - k added), bin k at k / (len T) Hz.
fn welch_abs(x: &[f64], len: usize) -> Vec<f64> {
    let fft = FftPlanner::<f64>::new().plan_fft_forward(len);
    let w: Vec<f64> = (0..len)
        .map(|i| 0.5 - 0.5 * (2.0 * PI * i as f64 / len as f64).cos())
        .collect();
    let mut acc = vec![0.0; len / 2];
    let mut buf = vec![Complex64::new(0.0, 0.0); len];
    let mut start = 0;
    while start + len <= x.len() {
        for i in 0..len {
            buf[i] = Complex64::new(x[start + i] * w[i], 0.0);
        }
        fft.process(&mut buf);
        for (k, a) in acc.iter_mut().enumerate().skip(1) {
            *a += buf[k].norm_sqr() + buf[len - k].norm_sqr();
        }
        start += len / 2;
    }
    acc
}

fn mean_std(v: &[f64]) -> (f64, f64) {
    let n = v.len() as f64;
    let m = v.iter().sum::<f64>() / n;
    let s = (v.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (n - 1.0)).sqrt();
    (m, s)
}

const RP: &str = r#"
[radar]
waveform = "range-profile"
carrier_hz = 10.0e9
samples_per_chirp = 8
chirp_interval_s = 1e-3
range_cell_m = 2.0
range_start_m = 40.0
transmit_power_w = 1000.0
tx_gain_dbi = 30.0
rx_gain_dbi = 30.0
noise_figure_db = 3.0
datatype = "cf32_le"
"#;

/// A building scintillating by 2 % rms in amplitude and 10 mrad rms in phase, band-limited
/// to 2 Hz by three sections (the site ranges of common practice, from memory: 0.5-3 %,
/// 2-20 mrad, 0.5-5 Hz), 60 dB over the noise per sample so the noise does not count:
/// - the amplitude's rms fraction and the phase's rms read back within 10 %, and the
///   Rice K-factor of the return, A0^2 / diffuse power = 1 / (a^2 + phi^2) = 2000
///   (33 dB; Rice statistics of a dominant scatterer, common practice), within 1.5 dB;
/// - the amplitude's spectrum follows (1 + (f/fc)^2)^-3 at 1, 2 and 3 Hz (half its
///   low-frequency level at 2 Hz) within 15 %, and falls 20 n dB a decade beyond (n = 3 cascaded first-order sections, standard filter
///   theory, from memory): between 10 and 40 Hz, 60 log10(4) = 36 dB, within 5 dB.
#[test]
fn scintillating_building_statistics_and_spectrum() {
    let scene = format!(
        r#"name = "scint"
duration_s = 2000.0
{}
[[object]]
kind = "stationary"
id = "building"
position = [50.0, 0.0, 0.0]
rcs_dbsm = 29.0
amplitude_scintillation = 0.02
phase_scintillation_rad = 0.01
scintillation_hz = 2.0
scintillation_order = 3
"#,
        RP.replace("1e-3", "5e-3")
    );
    let x = run(&scene, 5);
    let z = series(&x, 8, 5); // (50 - 40) / 2 = cell 5
    let amp: Vec<f64> = z.iter().map(|c| c.norm()).collect();
    let (m, s) = mean_std(&amp);
    let snr_db = 20.0 * m.log10();
    assert!(snr_db > 55.0, "per-sample SNR {snr_db} dB");
    assert!((s / m / 0.02 - 1.0).abs() < 0.1, "amplitude rms {}", s / m);
    let mean_phase = z.iter().sum::<Complex64>().arg();
    let ph: Vec<f64> = z
        .iter()
        .map(|c| (c * Complex64::from_polar(1.0, -mean_phase)).arg())
        .collect();
    let (_, sp) = mean_std(&ph);
    assert!((sp / 0.01 - 1.0).abs() < 0.1, "phase rms {sp}");
    let mean_z = z.iter().sum::<Complex64>() / z.len() as f64;
    let diffuse = z.iter().map(|c| (c - mean_z).norm_sqr()).sum::<f64>() / z.len() as f64;
    let k_db = 10.0 * (mean_z.norm_sqr() / diffuse).log10();
    assert!((k_db - 33.01).abs() < 1.5, "K-factor {k_db} dB");
    // spectrum of the fractional amplitude, 1024-chirp segments (0.195 Hz bins at 5 ms,
    // 780 segments), against |H(f)|^2 = (1 + (f/fc)^2)^-3, fc = 2 Hz / sqrt(2^(1/3) - 1)
    let frac: Vec<f64> = amp.iter().map(|a| a / m - 1.0).collect();
    let len = 1024;
    let p = welch_abs(&frac, len);
    let df = 1.0 / (len as f64 * 5e-3);
    let at = |f: f64| {
        let k = (f / df).round() as usize;
        (k - 1..=k + 1).map(|i| p[i]).sum::<f64>() / 3.0
    };
    let low = (p[1] + p[2]) / 2.0; // 0.2-0.4 Hz: |H|^2 > 0.98
    let fc = 2.0 / (2f64.powf(1.0 / 3.0) - 1.0).sqrt();
    for f in [1.0, 2.0, 3.0] {
        let want = (1.0 + (f / fc).powi(2)).powi(-3);
        let got = at(f) / low;
        assert!(
            (got / want - 1.0).abs() < 0.15,
            "|H|^2 at {f} Hz: {got} vs {want}"
        );
    }
    let fall = 10.0 * (at(10.0) / at(40.0)).log10();
    assert!((fall - 36.1).abs() < 5.0, "10 -> 40 Hz fall {fall} dB");
}

/// Distributed ground clutter of sigma0 = -20 dB under a 10 degree beam: each cell's RCS
/// is sigma0 R theta_az dR (low grazing area clutter, Richards, Fundamentals of Radar
/// Signal Processing, 2nd ed., §2.7, from memory), so its mean power follows the radar
/// equation (Mahafza Eq. 1.56) with that RCS; over many cells the power, exponential from
/// cell to cell (Rayleigh clutter, common practice), has std / mean = 1.
#[test]
fn ground_clutter_power_follows_sigma0_area() {
    let scene = r#"name = "ground"
duration_s = 0.01
[radar]
waveform = "range-profile"
carrier_hz = 10.0e9
samples_per_chirp = 1024
chirp_interval_s = 1e-3
range_cell_m = 1.0
range_start_m = 100.0
transmit_power_w = 1000.0
tx_gain_dbi = 30.0
rx_gain_dbi = 30.0
noise_figure_db = 3.0
datatype = "cf32_le"

[[object]]
kind = "ground"
id = "field"
range_min_m = 100.0
range_max_m = 1123.0
sigma0_db = -20.0
azimuth_beamwidth_deg = 10.0
amplitude_scintillation = 0.0
phase_scintillation_rad = 0.0
"#;
    let x = run(scene, 9);
    // radar equation per sample: K sigma / R^4 with K from the table (Mahafza Eq. 1.56)
    let lambda = C / 10e9;
    let k_b = 1.380_649e-23;
    let bn = C / 2.0; // c / (2 cell), cell 1 m
    let kk = 1000.0 * 1e3 * 1e3 * lambda * lambda
        / ((4.0 * PI).powi(3) * k_b * 290.0 * 10f64.powf(0.3) * bn);
    let mut ratios = Vec::new();
    for k in 0..1024 {
        let r = 100.0 + k as f64;
        let sigma = 0.01 * r * 10f64.to_radians() * 1.0;
        let want = kk * sigma / r.powi(4);
        // ten chirps of the same (constant) cell: average out the noise
        let z: Complex64 = series(&x, 1024, k).iter().sum::<Complex64>() / 10.0;
        ratios.push(z.norm_sqr() / want);
    }
    let (m, s) = mean_std(&ratios);
    // 1024 exponential cells: mean within 3 standard errors (3/32 ~ 10 %); the noise
    // averaged over 10 chirps adds 0.1 / want, below 1 % here
    assert!((m - 1.0).abs() < 0.1, "mean power over the prediction {m}");
    assert!((s / m - 1.0).abs() < 0.15, "std / mean {}", s / m);
}

const FMCW: &str = r#"
[radar]
waveform = "fmcw-beat"
carrier_hz = 24.0e9
samples_per_chirp = 64
chirp_interval_s = 50e-6
sample_rate_hz = 2.0e6
sweep_bandwidth_hz = 100e6
sweep_duration_s = 32e-6
transmit_power_w = 0.1
tx_gain_dbi = 20.0
rx_gain_dbi = 20.0
noise_figure_db = 8.0
datatype = "cf32_le"
"#;

/// The FMCW transmitter-to-receiver leakage is a beat tone of the leakage range,
/// exp(+j 2 pi (2 S R / c) n / fs) (the signal convention of docs/recording-format.md; standard FMCW beat
/// relation, Richards), at its stated per-sample level (20 dB: power 100 over unit
/// noise); the DC offset a constant of its stated level (10 dB: 10). Averaging 2000 chirps
/// leaves both and 1/2000 of the noise.
#[test]
fn fmcw_leakage_tone_and_dc_offset_levels() {
    let base = FMCW.replace(
        "datatype",
        "leakage_snr_db = 20.0\nleakage_range_m = 0.3\ndatatype",
    );
    let scene = format!("name = \"leak\"\nduration_s = 0.1\n{base}");
    let x = run(&scene, 2);
    let chirps = x.len() / 64;
    let mut mean = vec![Complex64::new(0.0, 0.0); 64];
    for c in x.chunks_exact(64) {
        for (m, s) in mean.iter_mut().zip(c) {
            *m += Complex64::new(s.re as f64, s.im as f64) / chirps as f64;
        }
    }
    let power = mean.iter().map(|z| z.norm_sqr()).sum::<f64>() / 64.0;
    assert!((power / 100.0 - 1.0).abs() < 0.02, "leakage power {power}");
    let slope = 100e6 / 32e-6;
    let step = 2.0 * PI * 2.0 * slope * 0.3 / (C * 2.0e6);
    for n in 1..64 {
        let d = (mean[n] * mean[n - 1].conj()).arg();
        assert!((d - step).abs() < 0.02, "phase step {d} vs {step} at {n}");
    }
    let base = FMCW.replace("datatype", "dc_offset_snr_db = 10.0\ndatatype");
    let scene = format!("name = \"dc\"\nduration_s = 0.1\n{base}");
    let x = run(&scene, 3);
    let all: Complex64 = x
        .iter()
        .map(|s| Complex64::new(s.re as f64, s.im as f64))
        .sum::<Complex64>()
        / x.len() as f64;
    assert!(
        (all.norm_sqr() / 10.0 - 1.0).abs() < 0.02,
        "DC power {}",
        all.norm_sqr()
    );
}

/// A common gain drift of 1 % rms modulates a steady return by 1 % rms (it multiplies
/// every return), and a range-profile radar refuses an FMCW-only key.
#[test]
fn gain_drift_modulates_every_return() {
    let base = RP.replace("datatype", "gain_drift = 0.01\ndrift_hz = 1.0\ndatatype");
    let scene = format!(
        r#"name = "drift"
duration_s = 300.0
{base}
[[object]]
kind = "stationary"
id = "pole"
position = [50.0, 0.0, 0.0]
rcs_dbsm = 29.0
"#
    );
    let x = run(&scene, 4);
    let amp: Vec<f64> = series(&x, 8, 5).iter().map(|c| c.norm()).collect();
    let (m, s) = mean_std(&amp);
    assert!((s / m / 0.01 - 1.0).abs() < 0.12, "drift rms {}", s / m);
    let bad = RP.replace("datatype", "leakage_snr_db = 20.0\ndatatype");
    let err = Scene::parse_all(&format!("name = \"x\"\nduration_s = 1.0\n{bad}"))
        .unwrap_err()
        .to_string();
    assert!(err.contains("leakage_snr_db"), "{err}");
}
