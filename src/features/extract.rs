//! Feature extraction for one track: from its slow-time signal (clutter removed with a
//! narrow notch, body Doppler removed) it builds the spectrogram, the max-hold and mean
//! Doppler spectra, the cepstrum, the cadence-velocity diagram, the amplitude envelope and
//! the blade-flash spectrum, and reads physical features off them (names.rs lists them).
//! Plans are made once per radar ([`Extractor::new`]) and reused for every track.

use std::sync::Arc;

use rustfft::num_complex::Complex32;
use rustfft::{Fft, FftPlanner};
use serde::{Deserialize, Serialize};

use super::names::{count, FeatureId};
use crate::error::{ensure, Result};
use crate::frontend::cadence::{CadenceDiagram, CadencePlan};
use crate::frontend::cepstrum::{CepstrumPlan, FrameKind};
use crate::frontend::{Scaling, StftParams, StftPlan, Window};
/// The features' median is the high median (the upper middle value for an even count,
/// [`crate::stats::median_high`]); the trained models were fitted with it.
use crate::stats::median_high as median;

/// Settings of feature extraction (stored in the model file: a model only applies to
/// features made the same way).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FeatureSettings {
    /// Spectrogram window length, s (rounded to a power of two of samples).
    pub stft_window_s: f64,
    /// Long window for the cepstrum (fine Doppler resolution), s.
    pub cepstrum_window_s: f64,
    /// Clutter removal: the slow-time mean over this window is subtracted, s.
    pub clutter_window_s: f64,
    /// At most this much of a track is analysed (around its middle), s.
    pub max_track_s: f64,
    /// Flash-band limits, Hz.
    pub flash_min_hz: f64,
    pub flash_max_hz: f64,
    /// A flash rate / tip speed is reported only above this harmonic-sum strength, dB.
    pub rotor_min_strength_db: f64,
}

impl Default for FeatureSettings {
    fn default() -> Self {
        FeatureSettings {
            stft_window_s: 0.004,
            cepstrum_window_s: 0.032,
            clutter_window_s: 0.25,
            max_track_s: 4.0,
            flash_min_hz: 40.0,
            flash_max_hz: 1500.0,
            rotor_min_strength_db: 8.0,
        }
    }
}

impl FeatureSettings {
    /// Validates the settings.
    pub fn check(&self) -> Result<()> {
        for (name, v) in [
            ("stft_window_s", self.stft_window_s),
            ("cepstrum_window_s", self.cepstrum_window_s),
            ("clutter_window_s", self.clutter_window_s),
            ("max_track_s", self.max_track_s),
        ] {
            ensure(v.is_finite() && v > 0.0, || {
                format!("feature setting {name} = {v}: expected a number > 0")
            })?;
        }
        ensure(
            self.flash_min_hz > 0.0 && self.flash_max_hz > self.flash_min_hz,
            || {
                format!(
                    "flash band {}..{} Hz: expected 0 < min < max",
                    self.flash_min_hz, self.flash_max_hz
                )
            },
        )
    }
}

/// What the pipeline knows of a track besides its signal.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TrackKinematics {
    /// Body radial velocity (median of the detections), m/s, positive = receding.
    pub body_velocity_mps: f64,
    pub body_speed_std_mps: f64,
    pub range_rate_mps: f64,
    pub range_extent_m: f64,
    pub duration_s: f64,
    pub snr_db: f64,
    pub snr_std_db: f64,
    /// Share of the track's CPIs found by the micro-Doppler detector alone.
    pub notch_share: f64,
    /// Rate of change of the body's radial velocity, m/s^2 (0 when it changes by less
    /// than `MIN_VELOCITY_CHANGE_MPS` over the track). A crossing target's radial velocity
    /// runs through zero; the body line is demodulated along it.
    pub body_accel_mps2: f64,
}

/// Physical estimates read off the features (`None` when no rotor is seen).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct RotorEstimates {
    pub blade_flash_hz: Option<f64>,
    pub tip_speed_mps: Option<f64>,
    pub blade_length_m: Option<f64>,
}

/// Feature extraction for one radar: plans made once.
pub struct Extractor {
    settings: FeatureSettings,
    prf: f64,
    lambda: f64,
    stft: StftPlan,
    long: StftPlan,
    cepstrum: CepstrumPlan,
    planner: FftPlanner<f32>,
    flash_fft: Arc<dyn Fft<f32>>,
    flash_len: usize,
    flash_rate: f64,
    decim: usize,
    gate_noise_gain: f64,
}

/// How far below the blade level the spectrum's edge is read, dB (see `extract`).
const REL_DB: f64 = 15.0;

/// Band edges of the band-power features, m/s from the body line: within `BAND_BODY` is
/// the body; from there to `BAND_FAST` wings, limbs and foliage; beyond it blade speeds
/// (tips of small rotors run 40-80 m/s; wing tips of small birds reach about 15 m/s).
const BAND_BODY: f64 = 2.0;
const BAND_FAST: f64 = 20.0;
/// Nearest offset from the body (and clutter) line at which the blade level is sought, m/s.
const PEAK_SKIRT_MPS: f64 = 8.0;
/// Least excess over the reference noise level at which the extent is read, dB (the
/// reference is another range gate; its level is measured over thousands of bins).
const EXTENT_FLOOR_DB: f64 = 0.5;
/// Half-width of the body line in the spectrum-shape features, m/s (and at least two
/// bins): what `outside_share` and `spectral_symmetry` leave out (names.rs states 0.5 m/s).
/// A project choice: a walking or gliding body's own spread stays within it.
const BODY_HALF_WIDTH_MPS: f64 = 0.5;
/// Share of the excess spectral energy `md_extent95_mps` encloses (its definition in
/// names.rs, like a 95% occupied bandwidth: common practice).
const EXTENT_ENERGY_SHARE: f64 = 0.95;
/// The long-window mean spectrum is smoothed over +-nl / EXTENT_SMOOTH_DIVISOR bins (at
/// least one) before its edge is read: 1/128 of the Doppler span either side, a project
/// choice that averages the noise down (5 standard errors over 2w + 1 bins) while keeping
/// the edge of a 40-80 m/s tip sharp to a few m/s.
const EXTENT_SMOOTH_DIVISOR: usize = 128;
/// Least tip speed at which a rotor counts as seen, m/s: a tip within the body band
/// ([`BAND_BODY`], 2 m/s) cannot be told from the body's own spread.
const MIN_ROTOR_TIP_MPS: f64 = BAND_BODY;
/// Chirps of the CPI the band SNRs are referred to (as the "clear" SNRs are).
const BAND_CPI: f64 = 256.0;
/// Variance factor of a sum of long-window periodogram bins over the same sum of
/// independent exponential values: adjacent Hann bins correlate (squared correlation
/// (2/3)^2 and (1/6)^2 for the first two neighbours: 1 + 2 (0.444 + 0.028) = 1.94), and
/// Hann frames at 50 % overlap correlate by 0.167 (squared), which makes a mean of F frames
/// worth F / 1.33 independent ones (Welch, IEEE Trans. Audio Electroacoust. AU-15, 1967,
/// from memory). Used for the band evidence's standard deviation.
const HANN_BIN_VARIANCE: f64 = 1.94;
const HANN_FRAME_VARIANCE: f64 = 1.33;
/// Floor of the evidence features, dB (a deflection of 0.1 standard deviations).
const EVIDENCE_FLOOR_DB: f64 = -10.0;

/// Signed index of bin `i` of an `n`-point spectrum in natural order (bins above n/2 are
/// negative frequencies).
fn signed_bin(i: usize, n: usize) -> f64 {
    if i <= n / 2 {
        i as f64
    } else {
        i as f64 - n as f64
    }
}

/// Power-of-two sample count nearest (in log) to `seconds * rate`, clamped to [lo, hi].
fn pow2_len(seconds: f64, rate: f64, lo: usize, hi: usize) -> usize {
    crate::stats::nearest_power_of_two(seconds * rate, lo, hi)
}

impl Extractor {
    /// Plans for a radar with chirp rate `prf` (Hz) and wavelength `lambda` (m).
    pub fn new(settings: &FeatureSettings, prf: f64, lambda: f64) -> Result<Self> {
        settings.check()?;
        let n = pow2_len(settings.stft_window_s, prf, 16, 4096);
        let stft = StftPlan::new(
            StftParams::new(Window::Hann, n, n - n / 4, n, Scaling::Spectrum).fs(prf),
        )?;
        let nl = pow2_len(settings.cepstrum_window_s, prf, 64, 16384);
        let long = StftPlan::new(
            StftParams::new(Window::Hann, nl, nl / 2, nl, Scaling::Spectrum).fs(prf),
        )?;
        let cepstrum = CepstrumPlan::new(nl, CepstrumPlan::DEFAULT_FLOOR_REL)?;
        // Flash spectrum: micro-Doppler power decimated to >= 2.5 x the flash band's top.
        let decim = ((prf / (2.5 * settings.flash_max_hz)).floor() as usize).max(1);
        let flash_rate = prf / decim as f64;
        let flash_len = ((settings.max_track_s * flash_rate) as usize)
            .next_power_of_two()
            .max(256);
        let mut planner = FftPlanner::new();
        let flash_fft = planner.plan_fft_forward(flash_len);
        Ok(Extractor {
            settings: settings.clone(),
            prf,
            lambda,
            stft,
            long,
            cepstrum,
            planner,
            flash_fft,
            flash_len,
            flash_rate,
            decim,
            gate_noise_gain: 1.0,
        })
    }

    /// Declares that the range gate the signals come from carries `g` times the noise of
    /// one range cell relative to a point scatterer's power (1, the default, for a single
    /// cell or FFT bin). The band SNRs are then referred to one cell, so they read the same
    /// on radars whose gates differ.
    pub fn set_gate_noise_gain(&mut self, g: f64) {
        if g.is_finite() && g > 0.0 {
            self.gate_noise_gain = g;
        }
    }

    /// The STFT plan used for the micro-Doppler spectrogram.
    pub fn stft(&self) -> &StftPlan {
        &self.stft
    }

    /// Clutter-removed, body-demodulated slow-time signal of a track (the input of every
    /// picture and feature): `x - moving mean(x)` over `clutter_window_s`, then multiplied
    /// by `exp(-j 2 pi f_body t)`, f_body = 2 v_body / lambda.
    pub fn prepare(&self, x: &[Complex32], body_velocity_mps: f64) -> Vec<Complex32> {
        self.prepare_along(x, body_velocity_mps, 0.0)
    }

    /// As [`Extractor::prepare`], with the body's radial velocity changing at
    /// `accel_mps2` around `body_velocity_mps` at the signal's middle:
    /// `v(t) = v + a (t - t_mid)`, demodulated by `exp(-j 4 pi / lambda (v t + a (t - t_mid)^2 / 2))`.
    pub fn prepare_along(
        &self,
        x: &[Complex32],
        body_velocity_mps: f64,
        accel_mps2: f64,
    ) -> Vec<Complex32> {
        let w = ((self.settings.clutter_window_s * self.prf) as usize).clamp(3, x.len().max(3));
        let y = subtract_moving_mean(x, w);
        let k = -4.0 * std::f64::consts::PI / self.lambda;
        let t_mid = y.len() as f64 / 2.0 / self.prf;
        y.iter()
            .enumerate()
            .map(|(m, &v)| {
                let t = m as f64 / self.prf;
                let d = t - t_mid;
                let ph = (k * (body_velocity_mps * t + 0.5 * accel_mps2 * d * d))
                    .rem_euclid(std::f64::consts::TAU);
                v * Complex32::new(ph.cos() as f32, ph.sin() as f32)
            })
            .collect()
    }

    /// The feature vector (order of [`super::names::FEATURES`]) and rotor estimates.
    /// `x` is the track's slow-time signal, `references` the same range gate a few cells
    /// away (noise references: the spectrogram's noise level is the smallest of their
    /// spectrograms' median / ln 2).
    pub fn extract(
        &mut self,
        x: &[Complex32],
        references: &[&[Complex32]],
        kin: &TrackKinematics,
    ) -> Result<(Vec<f64>, RotorEstimates)> {
        let mut v = vec![0.0f64; count()];
        set(&mut v, FeatureId::BodySpeed, kin.body_velocity_mps.abs());
        set(&mut v, FeatureId::BodySpeedStd, kin.body_speed_std_mps);
        set(&mut v, FeatureId::RangeRate, kin.range_rate_mps);
        set(&mut v, FeatureId::RangeExtent, kin.range_extent_m);
        set(&mut v, FeatureId::Duration, kin.duration_s);
        set(&mut v, FeatureId::Snr, kin.snr_db);
        set(&mut v, FeatureId::SnrStd, kin.snr_std_db);
        set(&mut v, FeatureId::NotchShare, kin.notch_share);
        set(&mut v, FeatureId::FastBandEvidence, EVIDENCE_FLOOR_DB);
        set(&mut v, FeatureId::SlowBandEvidence, EVIDENCE_FLOOR_DB);
        let none = RotorEstimates {
            blade_flash_hz: None,
            tip_speed_mps: None,
            blade_length_m: None,
        };
        let max_len = (self.settings.max_track_s * self.prf) as usize;
        let a = x.len().saturating_sub(max_len) / 2;
        let x = &x[a..(a + max_len).min(x.len())];
        let cut = |r: &[Complex32]| -> Vec<Complex32> {
            r[a.min(r.len())..(a + max_len).min(r.len())].to_vec()
        };
        let references: Vec<Vec<Complex32>> = references.iter().map(|r| cut(r)).collect();
        if x.len() < self.stft.params().nperseg * 4 {
            return Ok((v, none));
        }
        let z = self.prepare_along(x, kin.body_velocity_mps, kin.body_accel_mps2);

        // Amplitude envelope (5 ms boxcar), its spread and periodicity.
        let env_w = ((0.005 * self.prf) as usize).max(1);
        let env_decim = env_w;
        let env: Vec<f64> = z
            .chunks(env_decim)
            .map(|c| (c.iter().map(|s| s.norm_sqr() as f64).sum::<f64>() / c.len() as f64).sqrt())
            .collect();
        let env_db: Vec<f64> = env.iter().map(|a| 20.0 * a.max(1e-30).log10()).collect();
        set(&mut v, FeatureId::AmpStd, std(&env_db));
        let env_rate = self.prf / env_decim as f64;
        let (hz, strength) = self.peak_in_band(&env, env_rate, 0.5, 30.0);
        set(&mut v, FeatureId::AmpCadenceHz, hz);
        set(&mut v, FeatureId::AmpCadenceStrength, strength);

        // Micro-Doppler spectrogram (shifted: column nfft/2 = body line).
        let spec = self.stft.spectrogram(&z, true)?;
        let (frames, nfft) = spec.dim();
        let dv = self.prf / nfft as f64 * self.lambda / 2.0;
        let mut noise = f64::INFINITY;
        for r in &references {
            let zref = self.prepare(r, 0.0);
            if let Ok(s) = self.stft.spectrogram(&zref, false) {
                if s.nrows() > 0 {
                    noise = noise.min(noise_level(s.as_slice().unwrap_or(&[])));
                }
            }
        }
        if !noise.is_finite() {
            noise = noise_level(spec.as_slice().unwrap_or(&[]));
        }
        let mut mean = vec![0.0f64; nfft];
        for row in spec.rows() {
            for (d, &p) in row.iter().enumerate() {
                mean[d] += p as f64;
            }
        }
        for m in mean.iter_mut() {
            *m /= frames as f64;
        }
        let excess: Vec<f64> = mean.iter().map(|m| (m - noise).max(0.0)).collect();
        // Extent, read off the fine-resolution (long-window) mean spectrum: the outermost
        // Doppler where it stands out of the noise by 5 standard errors of a mean of
        // F (2w+1) exponential values and by at least 0.5 dB (the noise reference is another
        // cell), and lies within REL_DB (15 dB) of the blade level — the strongest level more
        // than 2 m/s from the body line and from the clutter line (stationary returns land at
        // -v_body after the body is demodulated). A short blade flash widens the spectrum
        // beyond the tip's Doppler by about 1/(flash length), so at high SNR an edge read at
        // the noise would overestimate the tip; reading it relative to the blade level
        // does not. A blade tip's Doppler is an edge of
        // the spectrum (sinusoidal FM piles its energy up at the extremes; Chen 2011).
        let long_mean = self.long_mean(&z)?;
        let kin = *kin;
        let band_noise = match &long_mean {
            Some((lm, lframes)) => {
                self.band_powers(lm, *lframes, &references, kin.body_velocity_mps, &mut v)?
            }
            None => None,
        };
        let extent = match &long_mean {
            Some((lm, lframes)) => {
                // The reference's own long-window level where there is one (a mean over
                // its fast band, see `band_powers`); else the short spectrogram's.
                let noise_l = band_noise.unwrap_or(noise * nfft as f64 / lm.len() as f64);
                self.md_extent(lm, *lframes, noise_l, kin.body_velocity_mps)
            }
            None => 0.0,
        };
        set(&mut v, FeatureId::MdExtent, extent);
        let vmax = self.lambda / 4.0 * self.prf;
        set(&mut v, FeatureId::ExtentShare, (extent / vmax).min(1.0));
        spectrum_shape(&excess, dv, &mut v);

        // Cepstrum of the fine-resolution mean log spectrum.
        if let Some((lm, _)) = &long_mean {
            self.cepstral(lm, &mut v)?;
        }

        // Cadence-velocity diagram of the spectrogram magnitude.
        self.cadence(&spec, (extent / dv).ceil() as usize, &mut v)?;

        // Blade flashes: power of the signal away from the body line, its periodicity.
        let (flash_hz, flash_db) = self.flash_rate(&z);
        set(&mut v, FeatureId::FlashHz, flash_hz);
        set(&mut v, FeatureId::FlashStrength, flash_db);
        let tip = extent.min(vmax);
        set(&mut v, FeatureId::TipSpeed, tip);
        let rotor_seen = flash_db >= self.settings.rotor_min_strength_db
            && flash_hz > 0.0
            && tip > MIN_ROTOR_TIP_MPS;
        let blade_len = if rotor_seen {
            tip / (2.0 * std::f64::consts::PI * flash_hz / 2.0)
        } else {
            0.0
        };
        set(&mut v, FeatureId::BladeLength, blade_len);
        let est = if rotor_seen {
            RotorEstimates {
                blade_flash_hz: Some(flash_hz),
                tip_speed_mps: Some(tip),
                blade_length_m: Some(blade_len),
            }
        } else {
            none
        };
        Ok((v, est))
    }

    /// The micro-Doppler extent, m/s (see the comment in [`Extractor::extract`]): the
    /// largest |velocity offset| at which the long-window mean spectrum `lm` (natural
    /// order, a mean of `lframes` frames), smoothed, stands out of the noise level
    /// `noise_l` by 5 standard errors and [`EXTENT_FLOOR_DB`], and lies within [`REL_DB`]
    /// of the blade level.
    fn md_extent(&self, lm: &[f64], lframes: usize, noise_l: f64, body_velocity_mps: f64) -> f64 {
        let nl = lm.len();
        let dvl = self.prf / nl as f64 * self.lambda / 2.0;
        let vl = |i: usize| signed_bin(i, nl) * dvl;
        let w = (nl / EXTENT_SMOOTH_DIVISOR).max(1);
        let smooth: Vec<f64> = (0..nl)
            .map(|d| {
                let sum: f64 = (0..=2 * w).map(|j| lm[(d + nl + j - w) % nl]).sum();
                sum / (2 * w + 1) as f64
            })
            .collect();
        // The blade level: the strongest smoothed value more than PEAK_SKIRT_MPS (and
        // 8 bins) from the body and the clutter line, clear of a strong body line's
        // skirt (which at fine resolution reaches a few m/s: body flutter, range
        // migration).
        let skirt = PEAK_SKIRT_MPS.max(8.0 * dvl);
        let v_clutter = -body_velocity_mps;
        let peak = (0..nl)
            .filter(|&d| vl(d).abs() > skirt && (vl(d) - v_clutter).abs() > skirt)
            .map(|d| smooth[d])
            .fold(0.0, f64::max);
        let thr = (noise_l
            * (1.0 + 5.0 / ((lframes * (2 * w + 1)) as f64).sqrt())
                .max(10f64.powf(EXTENT_FLOOR_DB / 10.0)))
        .max(peak * 10f64.powf(-REL_DB / 10.0));
        (0..nl)
            .filter(|&d| smooth[d] > thr)
            .map(|d| vl(d).abs())
            .fold(0.0, f64::max)
    }

    /// Strongest peak of the power spectrum of a real series (mean removed) between `lo`
    /// and `hi` Hz: (frequency, peak over the band's median in dB).
    fn peak_in_band(&mut self, x: &[f64], rate: f64, lo: f64, hi: f64) -> (f64, f64) {
        let n = x.len();
        if n < 8 {
            return (0.0, 0.0);
        }
        let len = (n * 2).next_power_of_two();
        let fft = self.planner.plan_fft_forward(len);
        let m = x.iter().sum::<f64>() / n as f64;
        let mut buf: Vec<Complex32> = x
            .iter()
            .map(|&a| Complex32::new((a - m) as f32, 0.0))
            .collect();
        buf.resize(len, Complex32::new(0.0, 0.0));
        fft.process(&mut buf);
        let df = rate / len as f64;
        let band: Vec<(f64, f64)> = (1..len / 2)
            .map(|i| (i as f64 * df, buf[i].norm_sqr() as f64))
            .filter(|(f, _)| *f >= lo && *f <= hi)
            .collect();
        peak_over_median(&band)
    }

    /// Band-power features: the long-window mean spectrum `lm` of the prepared signal,
    /// less the noise, summed over velocity bands relative to the body line. The noise per
    /// bin is the mean over the fast band of a reference gate's long-window mean spectrum
    /// (a mean, not a median: the median of a mean of F exponentials sits about 1/(3F)
    /// low, which over thousands of bins would read as a few dB of power). The sums over
    /// the noise summed over every bin are band powers over the noise power per sample
    /// (Parseval; the window's factor cancels), so they need no per-bin SNR: a blade return
    /// spread thin over tens of kHz of Doppler still adds up. Bins within `BAND_BODY` of the
    /// body line or of the clutter line (-v_body after demodulation) are left out. Returns
    /// the noise level per long-window bin it used (`None` without a usable reference).
    fn band_powers(
        &mut self,
        lm: &[f64],
        lframes: usize,
        references: &[Vec<Complex32>],
        body_velocity_mps: f64,
        v: &mut [f64],
    ) -> Result<Option<f64>> {
        let nl = lm.len();
        let dvl = self.prf / nl as f64 * self.lambda / 2.0;
        let vmax = self.lambda / 4.0 * self.prf;
        let fast_edge = BAND_FAST.min(0.6 * vmax);
        let v_clutter = -body_velocity_mps;
        // Band of every bin: 0 body or clutter line, 1 slow, 2 fast.
        let band: Vec<u8> = (0..nl)
            .map(|i| {
                let vel = signed_bin(i, nl) * dvl;
                if vel.abs() <= BAND_BODY || (vel - v_clutter).abs() <= BAND_BODY {
                    0
                } else if vel.abs() < fast_edge {
                    1
                } else {
                    2
                }
            })
            .collect();
        let n_fast = band.iter().filter(|&&b| b == 2).count();
        let n_slow = band.iter().filter(|&&b| b == 1).count();
        if n_fast == 0 {
            return Ok(None);
        }
        let mut levels = Vec::new();
        for r in references {
            let zref = self.prepare(r, 0.0);
            if let Some((rm, _)) = self.long_mean(&zref)? {
                let sum: f64 = rm
                    .iter()
                    .zip(&band)
                    .filter(|(_, &b)| b == 2)
                    .map(|(p, _)| p)
                    .sum();
                levels.push(sum / n_fast as f64);
            }
        }
        // The two references agree when both hold only noise; when one holds something
        // (another target, clutter leaking through), the quieter is taken.
        let noise_bin = match levels.as_slice() {
            [] => return Ok(None),
            [a] => *a,
            [a, b, ..] if a.max(*b) <= 1.05 * a.min(*b) => 0.5 * (a + b),
            [a, b, ..] => a.min(*b),
        };
        if noise_bin.is_nan() || noise_bin <= 0.0 {
            return Ok(None);
        }
        let (mut slow, mut fast) = (0.0f64, 0.0f64);
        for (&p, &b) in lm.iter().zip(&band) {
            match b {
                1 => slow += p,
                2 => fast += p,
                _ => {}
            }
        }
        let total_noise = noise_bin * nl as f64;
        let gain = self.gate_noise_gain;
        let to_db = |excess: f64| {
            (10.0 * (excess / total_noise * BAND_CPI * gain).max(1e-30).log10()).max(-5.0)
        };
        v[FeatureId::FastBandSnr as usize] = to_db(fast - noise_bin * n_fast as f64);
        v[FeatureId::SlowBandSnr as usize] = to_db(slow - noise_bin * n_slow as f64);
        v[FeatureId::FastSlowRatio as usize] =
            v[FeatureId::FastBandSnr as usize] - v[FeatureId::SlowBandSnr as usize];
        // Evidence: the band's excess over the standard deviation of the same sum in noise
        // alone; the signal's mean and the reference level are each a mean of `lframes`
        // frames, so the difference has twice the variance of one of them.
        let frames_eff = (lframes.max(1) as f64 / HANN_FRAME_VARIANCE).max(1.0);
        let evidence = |excess: f64, bins: usize| {
            let sd = noise_bin * (2.0 * bins as f64 * HANN_BIN_VARIANCE / frames_eff).sqrt();
            (10.0 * (excess / sd).max(1e-30).log10()).max(EVIDENCE_FLOOR_DB)
        };
        v[FeatureId::FastBandEvidence as usize] =
            evidence(fast - noise_bin * n_fast as f64, n_fast);
        v[FeatureId::SlowBandEvidence as usize] = if n_slow > 0 {
            evidence(slow - noise_bin * n_slow as f64, n_slow)
        } else {
            EVIDENCE_FLOOR_DB
        };
        // Evenness of the spread over the span: excess per bin beyond vmax / 2 over that
        // within it (body and clutter lines out).
        let (mut inner, mut outer, mut n_in, mut n_out) = (0.0f64, 0.0f64, 0usize, 0usize);
        for (i, (&p, &b)) in lm.iter().zip(&band).enumerate() {
            if b == 0 {
                continue;
            }
            let e = (p - noise_bin).max(0.0);
            if (signed_bin(i, nl) * dvl).abs() > 0.5 * vmax {
                outer += e;
                n_out += 1;
            } else {
                inner += e;
                n_in += 1;
            }
        }
        v[FeatureId::OuterShare as usize] = if n_in > 0 && n_out > 0 && inner > 0.0 {
            ((outer / n_out as f64) / (inner / n_in as f64)).min(10.0)
        } else {
            0.0
        };
        Ok(Some(noise_bin))
    }

    /// Mean over frames of the long-window spectrogram (natural bin order) and the frame
    /// count; `None` when the signal is shorter than one window.
    fn long_mean(&mut self, z: &[Complex32]) -> Result<Option<(Vec<f64>, usize)>> {
        let nl = self.long.params().nperseg;
        if z.len() < nl {
            return Ok(None);
        }
        let spec = self.long.spectrogram(z, false)?;
        let frames = spec.nrows();
        let mut mean = vec![0.0f64; spec.ncols()];
        for row in spec.rows() {
            for (d, &p) in row.iter().enumerate() {
                mean[d] += p as f64;
            }
        }
        for m in mean.iter_mut() {
            *m /= frames.max(1) as f64;
        }
        Ok(Some((mean, frames)))
    }

    /// Cepstral features of a mean power spectrum in natural bin order.
    fn cepstral(&mut self, mean: &[f64], v: &mut [f64]) -> Result<()> {
        let nfft = mean.len();
        let frame: Vec<f32> = mean.iter().map(|&p| p as f32).collect();
        let mut c = vec![0.0f32; nfft];
        let mut buf = vec![Complex32::new(0.0, 0.0); nfft];
        let mut scratch = vec![Complex32::new(0.0, 0.0); self.cepstrum.scratch_len()];
        self.cepstrum.of_frame_with_scratch(
            &frame,
            FrameKind::Power,
            &mut c,
            &mut buf,
            &mut scratch,
        )?;
        let c: Vec<f64> = c.iter().map(|&x| x as f64).collect();
        for (i, f) in [
            FeatureId::Cep1,
            FeatureId::Cep2,
            FeatureId::Cep3,
            FeatureId::Cep4,
        ]
        .iter()
        .enumerate()
        {
            v[*f as usize] = c[i + 1];
        }
        // Quefrency q (in samples of 1/PRF) <-> line spacing PRF/q.
        let qmin = 4usize;
        let qmax = ((self.prf / 20.0) as usize).min(nfft / 2);
        if qmax > qmin + 4 {
            let band: Vec<(f64, f64)> = (qmin..qmax)
                .map(|q| (self.prf / q as f64, c[q].abs()))
                .collect();
            let med = median(&band.iter().map(|b| b.1).collect::<Vec<_>>()).max(1e-30);
            if let Some((hz, val)) = band.iter().cloned().max_by(|a, b| a.1.total_cmp(&b.1)) {
                v[FeatureId::CepPeakHz as usize] = hz;
                v[FeatureId::CepPeakStrength as usize] = val / med;
            }
        }
        Ok(())
    }

    /// Cadence-velocity diagram of a micro-Doppler spectrogram from [`Extractor::stft`]
    /// (frames x Doppler, linear power; at least 4 frames): the FFT along time of each
    /// Doppler row of its magnitude, Hann-windowed, zero-padded to a power of two, rows not
    /// normalised. The features and the pictures both read this one.
    pub fn cadence_diagram(&self, spec: &ndarray::Array2<f32>) -> Result<CadenceDiagram> {
        let frames = spec.nrows();
        let frame_rate = self.prf / self.stft.params().hop() as f64;
        let mut plan = CadencePlan::new(
            frames,
            frames.next_power_of_two(),
            Window::Hann,
            frame_rate,
            false,
        )?;
        plan.process(&spec.mapv(f32::sqrt))
    }

    /// Cadence-velocity diagram of the spectrogram magnitude over the Doppler rows within
    /// the micro-Doppler extent (at least the body line's neighbours), rows not normalised.
    fn cadence(
        &mut self,
        spec: &ndarray::Array2<f32>,
        extent_rows: usize,
        v: &mut [f64],
    ) -> Result<()> {
        let (frames, nfft) = spec.dim();
        if frames < 8 {
            return Ok(());
        }
        let cvd = self.cadence_diagram(spec)?;
        let half = extent_rows.max(2);
        let rows = (nfft / 2).saturating_sub(half)..(nfft / 2 + half + 1);
        let summed = cvd.summed_spectrum_rows(rows);
        let cvd: Vec<(f64, f64)> = cvd
            .cadence_hz
            .iter()
            .zip(&summed)
            .map(|(&f, &p)| (f, p as f64))
            .collect();
        let low: Vec<(f64, f64)> = cvd
            .iter()
            .cloned()
            .filter(|(f, _)| *f >= 0.5 && *f <= 30.0)
            .collect();
        let high: Vec<(f64, f64)> = cvd.iter().cloned().filter(|(f, _)| *f > 30.0).collect();
        let (a, b) = peak_over_median(&low);
        v[FeatureId::CadenceLowHz as usize] = a;
        v[FeatureId::CadenceLowStrength as usize] = b;
        let (a, b) = peak_over_median(&high);
        v[FeatureId::CadenceHighHz as usize] = a;
        v[FeatureId::CadenceHighStrength as usize] = b;
        Ok(())
    }

    /// Flash rate: the signal's body line is removed (subtracting a 2 ms moving mean), the
    /// instantaneous power is decimated to `flash_rate`, and the fundamental of its periodic
    /// part is the argmax of the harmonic sum H(f) = sum_{h=1..4} P(h f) over the flash band
    /// (harmonic sum spectrum; Noll, 1969, from memory).
    fn flash_rate(&mut self, z: &[Complex32]) -> (f64, f64) {
        let w = ((0.002 * self.prf) as usize).max(3);
        let h = subtract_moving_mean(z, w);
        let mut p: Vec<f64> = h
            .chunks(self.decim)
            .map(|c| c.iter().map(|s| s.norm_sqr() as f64).sum::<f64>())
            .collect();
        p.truncate(self.flash_len);
        if p.len() < 64 {
            return (0.0, 0.0);
        }
        let m = p.iter().sum::<f64>() / p.len() as f64;
        let mut buf: Vec<Complex32> = p
            .iter()
            .map(|&a| Complex32::new((a - m) as f32, 0.0))
            .collect();
        buf.resize(self.flash_len, Complex32::new(0.0, 0.0));
        self.flash_fft.process(&mut buf);
        let df = self.flash_rate / self.flash_len as f64;
        let spec: Vec<f64> = buf[..self.flash_len / 2]
            .iter()
            .map(|c| c.norm_sqr() as f64)
            .collect();
        let lo = (self.settings.flash_min_hz / df).ceil() as usize;
        let hi = ((self.settings.flash_max_hz.min(self.flash_rate / 2.0)) / df) as usize;
        if hi <= lo + 4 {
            return (0.0, 0.0);
        }
        let white = whiten(&spec);
        // Line value at bin i: the largest whitened value within +-2% (at least +-1 bin),
        // since a multirotor's rotors turn at rates a few per cent apart and each leaves its
        // own line near N f_rot.
        let at = |i: usize| {
            let d = ((i as f64 * 0.02).round() as usize).max(1);
            let a = i.saturating_sub(d);
            let b = (i + d).min(white.len() - 1);
            white[a..=b].iter().cloned().fold(0.0, f64::max)
        };
        let hs: Vec<(f64, f64)> = (lo..=hi)
            .map(|i| {
                let s: f64 = (1..=4)
                    .filter(|k| i * k < white.len())
                    .map(|k| at(i * k))
                    .sum();
                (i as f64 * df, s)
            })
            .collect();
        let (f_best, _) = peak_over_median(&hs);
        // Strength: the harmonic sum of single lines (+-1 bin) at the chosen rate over its
        // median across the band (the +-2% windows above raise the background).
        let narrow = |i: usize| {
            let a = i.saturating_sub(1);
            let b = (i + 1).min(white.len() - 1);
            white[a..=b].iter().cloned().fold(0.0, f64::max)
        };
        let hs_narrow = |i: usize| -> f64 {
            (1..=4)
                .filter(|k| i * k < white.len())
                .map(|k| narrow(i * k))
                .sum()
        };
        let strength = |f: f64| {
            let band: Vec<f64> = (lo..=hi).map(hs_narrow).collect();
            let med = median(&band).max(1e-30);
            // the best single-line sum within +-2% of f (one rotor's lines)
            let i = (f / df).round() as usize;
            let d = ((i as f64 * 0.02).round() as usize).max(1);
            let best = (i.saturating_sub(d)..=(i + d).min(hi))
                .map(hs_narrow)
                .fold(0.0, f64::max);
            10.0 * (best / med).max(1e-30).log10()
        };
        // A harmonic may win the sum when the flashes are short (many equal harmonics):
        // take the lowest subharmonic f/k (k = 4, 3, 2) whose sum is within 60% of the peak
        // and which is itself a line (a quarter of the winner's line, 6x the background).
        let hs_at = |f: f64| {
            let i = (f / df).round() as usize;
            if i < lo {
                return 0.0;
            }
            (1..=4)
                .filter(|k| i * k < white.len())
                .map(|k| at(i * k))
                .sum::<f64>()
        };
        let peak = hs_at(f_best);
        let line = |f: f64| at((f / df).round() as usize);
        let line_best = line(f_best);
        for k in (2..=4).rev() {
            let f = f_best / k as f64;
            if f >= self.settings.flash_min_hz
                && hs_at(f) >= 0.6 * peak
                && line(f) >= (0.25 * line_best).max(6.0)
            {
                return (f, strength(f));
            }
        }
        (f_best, strength(f_best))
    }
}

/// The spectrum-shape features of the mean excess Doppler spectrum `excess` (shifted:
/// bin nfft/2 is the body line; `dv` m/s per bin): the 95% extent, the share outside the
/// body line, the normalised entropy and the symmetry. Left at 0 without excess energy.
fn spectrum_shape(excess: &[f64], dv: f64, v: &mut [f64]) {
    let nfft = excess.len();
    let total: f64 = excess.iter().sum();
    if total.is_nan() || total <= 0.0 {
        return;
    }
    let vel = |d: usize| (d as f64 - (nfft / 2) as f64) * dv;
    let body_hw = BODY_HALF_WIDTH_MPS.max(2.0 * dv);
    let mut by_offset: Vec<(f64, f64)> = (0..nfft).map(|d| (vel(d).abs(), excess[d])).collect();
    by_offset.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut acc = 0.0;
    let mut e95 = 0.0;
    for (off, e) in &by_offset {
        acc += e;
        if acc >= EXTENT_ENERGY_SHARE * total {
            e95 = *off;
            break;
        }
    }
    set(v, FeatureId::MdExtent95, e95);
    let outside: f64 = (0..nfft)
        .filter(|&d| vel(d).abs() > body_hw)
        .map(|d| excess[d])
        .sum();
    set(v, FeatureId::OutsideShare, outside / total);
    let h: f64 = excess
        .iter()
        .filter(|&&e| e > 0.0)
        .map(|&e| {
            let p = e / total;
            -p * p.ln()
        })
        .sum();
    set(v, FeatureId::Entropy, h / (nfft as f64).ln());
    let pos: f64 = (0..nfft)
        .filter(|&d| vel(d) > body_hw)
        .map(|d| excess[d])
        .sum();
    let neg: f64 = (0..nfft)
        .filter(|&d| vel(d) < -body_hw)
        .map(|d| excess[d])
        .sum();
    if pos + neg > 0.0 {
        set(v, FeatureId::Symmetry, (pos - neg) / (pos + neg));
    }
}

/// The flash spectrum whitened: each bin divided by the local geometric mean over
/// [f/1.4, 1.4 f], so the beats between several rotors' flash trains (a red spectrum at
/// low rates) do not win.
fn whiten(spec: &[f64]) -> Vec<f64> {
    let logp: Vec<f64> = spec.iter().map(|p| (p + 1e-30).ln()).collect();
    let mut pre = vec![0.0f64; logp.len() + 1];
    for (i, l) in logp.iter().enumerate() {
        pre[i + 1] = pre[i] + l;
    }
    (0..spec.len())
        .map(|i| {
            let a = ((i as f64 / 1.4) as usize).max(1);
            let b = (((i as f64) * 1.4) as usize + 1).min(spec.len());
            if b <= a + 2 {
                return 1.0;
            }
            let local = (pre[b] - pre[a]) / (b - a) as f64;
            (logp[i] - local).exp()
        })
        .collect()
}

/// Stores feature `f`; a value that is not finite is stored as 0.
fn set(v: &mut [f64], f: FeatureId, x: f64) {
    v[f as usize] = if x.is_finite() { x } else { 0.0 };
}

/// `x[m]` minus the mean over a centred window of `w` samples (shorter at the ends).
pub fn subtract_moving_mean(x: &[Complex32], w: usize) -> Vec<Complex32> {
    let n = x.len();
    let mut pre = Vec::with_capacity(n + 1);
    let mut acc = (0.0f64, 0.0f64);
    pre.push(acc);
    for s in x {
        acc.0 += s.re as f64;
        acc.1 += s.im as f64;
        pre.push(acc);
    }
    let h = w / 2;
    (0..n)
        .map(|m| {
            let a = m.saturating_sub(h);
            let b = (m + h + 1).min(n);
            let c = (b - a) as f64;
            let mr = (pre[b].0 - pre[a].0) / c;
            let mi = (pre[b].1 - pre[a].1) / c;
            Complex32::new(x[m].re - mr as f32, x[m].im - mi as f32)
        })
        .collect()
}

/// Mean noise level of a (noise-reference) spectrogram: its median / ln 2 — for
/// exponential (square-law) noise the median is ln 2 of the mean; robust to a minority of
/// cells holding a return.
fn noise_level(p: &[f32]) -> f64 {
    if p.is_empty() {
        return 1.0;
    }
    let mut v: Vec<f32> = p.to_vec();
    let k = v.len() / 2;
    let (_, q, _) = v.select_nth_unstable_by(k, |a, b| a.total_cmp(b));
    (*q as f64 / std::f64::consts::LN_2).max(1e-30)
}

/// Sample standard deviation (n - 1), 0 for fewer than two values.
fn std(x: &[f64]) -> f64 {
    crate::stats::mean_std(x).1
}

/// (frequency of the largest value, 10 log10(largest / median)) of a band.
fn peak_over_median(band: &[(f64, f64)]) -> (f64, f64) {
    if band.len() < 3 {
        return (0.0, 0.0);
    }
    let med = median(&band.iter().map(|b| b.1).collect::<Vec<_>>()).max(1e-30);
    let (f, p) = band
        .iter()
        .cloned()
        .max_by(|a, b| a.1.total_cmp(&b.1))
        .unwrap_or((0.0, 0.0));
    (f, 10.0 * (p / med).max(1e-30).log10())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::frontend::testutil::random_complex;

    const PRF: f64 = 4000.0;
    const LAMBDA: f64 = 0.03125;

    fn kin(duration_s: f64) -> TrackKinematics {
        TrackKinematics {
            body_velocity_mps: 0.0,
            body_speed_std_mps: 0.0,
            range_rate_mps: 0.0,
            range_extent_m: 0.0,
            duration_s,
            snr_db: 0.0,
            snr_std_db: 0.0,
            notch_share: 0.0,
            body_accel_mps2: 0.0,
        }
    }

    /// The fast-band evidence of `x` against two noise references of the same length.
    fn evidence(ex: &mut Extractor, x: &[Complex32], seed: u64) -> f64 {
        let r1 = random_complex(x.len(), seed + 1_000_000);
        let r2 = random_complex(x.len(), seed + 2_000_000);
        let (v, _) = ex
            .extract(x, &[&r1, &r2], &kin(x.len() as f64 / PRF))
            .unwrap();
        v[FeatureId::FastBandEvidence as usize]
    }

    /// In noise alone the evidence is a standardised deflection: the share of tracks above
    /// one standard deviation (0 dB) is the standard normal's upper tail P(Z > 1) = 0.159,
    /// and above three (4.8 dB) P(Z > 3) = 0.0013 (Abramowitz & Stegun 1964, Table 26.1,
    /// from memory). With the variance of both means counted (conservative when the two
    /// references are averaged) the share above 1 is somewhat lower: 80 tracks, expected
    /// at most 13, checked within 2..22; none above 3.
    #[test]
    fn band_evidence_is_standardised_in_noise() {
        let mut ex = Extractor::new(&FeatureSettings::default(), PRF, LAMBDA).unwrap();
        let n = (1.0 * PRF) as usize;
        let (mut above1, mut above3) = (0, 0);
        for seed in 0..80u64 {
            let x = random_complex(n, seed);
            let e = evidence(&mut ex, &x, seed);
            above1 += usize::from(e > 0.0);
            above3 += usize::from(e > 10.0 * 3f64.log10());
        }
        eprintln!("noise alone: {above1} of 80 above 1 sd, {above3} above 3 sd");
        assert!((2..=22).contains(&above1), "{above1} of 80 above 1 sd");
        assert!(above3 == 0, "{above3} of 80 above 3 sd");
    }

    /// A weak wideband blade-like return (white noise filling the whole Doppler span, 6 dB
    /// under the receiver noise per sample): for a fixed per-sample SNR the deflection of
    /// an energy detector grows as the square root of the samples integrated (Kay,
    /// Fundamentals of Statistical Signal Processing vol. II, 1998, energy detector, from
    /// memory), so four times the track length adds 10 log10(2) = 3 dB; checked within
    /// 1.5..4.5 dB, the mean of 8 tracks each.
    #[test]
    fn band_evidence_grows_with_track_length() {
        let mut ex = Extractor::new(&FeatureSettings::default(), PRF, LAMBDA).unwrap();
        let mean_evidence = |ex: &mut Extractor, seconds: f64| {
            let n = (seconds * PRF) as usize;
            let g = 10f64.powf(-6.0 / 20.0) as f32;
            (0..8u64)
                .map(|s| {
                    let noise = random_complex(n, 100 + s);
                    let blade = random_complex(n, 200 + s);
                    let x: Vec<Complex32> =
                        noise.iter().zip(&blade).map(|(a, b)| a + b * g).collect();
                    evidence(ex, &x, 300 + s)
                })
                .sum::<f64>()
                / 8.0
        };
        let short = mean_evidence(&mut ex, 1.0);
        let long = mean_evidence(&mut ex, 4.0);
        assert!(
            short > 5.0,
            "a -6 dB wideband return over 1 s: {short:.1} dB"
        );
        let gain = long - short;
        eprintln!("evidence 1 s {short:.2} dB, 4 s {long:.2} dB");
        assert!((1.5..=4.5).contains(&gain), "4x the length: +{gain:.2} dB");
    }
}
