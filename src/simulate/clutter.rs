//! Windblown vegetation (Billingsley, *Low-Angle Radar Land Clutter*, 2002, ch. 3, from
//! memory): per range cell P(v) = r/(r+1) delta(v) + 1/(r+1) (beta/2) exp(-beta |v|), with
//! r = 489.8 w^-1.55 f^-1.21 (w mph, f GHz) and beta per m/s from the wind class. The AC
//! part is complex white Gaussian noise shaped in the frequency domain (one inverse FFT
//! plan per patch) in overlapping segments joined by a power-complementary sine
//! crossfade, so memory stays flat in duration. Cells are independent.

use std::f64::consts::PI;
use std::sync::Arc;

use rand::Rng;
use rand_chacha::ChaCha8Rng;
use rustfft::num_complex::{Complex32, Complex64};
use rustfft::{Fft, FftPlanner};
use serde_json::{json, Map, Value};

use super::motion::V3;
use super::noise::{cn64, stream_rng};
use super::radar_eq::{db_to_lin, lin_to_db};
use super::scene::VegetationSpec;
use super::synth::{Ctx, Source};
use super::wind::{beta_of_class, class_of_wind};

/// Segment length of the AC generator, chirps (frequency grid PRF / 8192).
pub const SEGMENT: usize = 8192;

/// Billingsley's DC/AC ratio r = 489.8 w^-1.55 f^-1.21 (w wind speed in mph, f carrier in
/// GHz), linear.
pub fn billingsley_dc_ac_ratio(wind_mph: f64, carrier_ghz: f64) -> f64 {
    489.8 * wind_mph.powf(-1.55) * carrier_ghz.powf(-1.21)
}

/// Shaping filter |H_k| on the unshifted FFT grid of `len` slow-time bins (bin k at
/// k / (len T), negative above len/2): sqrt(exp(-beta |v_k|)), v_k = f_k lambda / 2,
/// normalised so that sum |H_k|^2 = len (the shaped process then has unit variance).
pub fn shaping_filter(len: usize, chirp_interval_s: f64, wavelength_m: f64, beta: f64) -> Vec<f64> {
    let mut h: Vec<f64> = (0..len)
        .map(|k| {
            let kk = if k < len / 2 {
                k as f64
            } else {
                k as f64 - len as f64
            };
            let f = kk / (len as f64 * chirp_interval_s);
            let v = f * wavelength_m / 2.0;
            (-beta * v.abs()).exp().sqrt()
        })
        .collect();
    let s: f64 = h.iter().map(|x| x * x).sum();
    let g = (len as f64 / s).sqrt();
    h.iter_mut().for_each(|x| *x *= g);
    h
}

/// Unit-variance AC process with the exponential spectrum, generated segment by segment.
pub struct AcProcess {
    filter: Arc<Vec<f64>>,
    ifft: Arc<dyn Fft<f64>>,
    window: Arc<Vec<f64>>,
    scratch: Vec<Complex64>,
    a: Vec<Complex64>,
    b: Vec<Complex64>,
    pos: usize,
    rng: ChaCha8Rng,
}

impl AcProcess {
    /// A process drawing from `rng`; `filter`, `ifft` and `window` are shared by a patch.
    pub fn new(
        filter: Arc<Vec<f64>>,
        ifft: Arc<dyn Fft<f64>>,
        window: Arc<Vec<f64>>,
        rng: ChaCha8Rng,
    ) -> Self {
        let len = filter.len();
        let mut p = AcProcess {
            scratch: vec![Complex64::new(0.0, 0.0); ifft.get_inplace_scratch_len()],
            filter,
            ifft,
            window,
            a: vec![Complex64::new(0.0, 0.0); len],
            b: vec![Complex64::new(0.0, 0.0); len],
            pos: 0,
            rng,
        };
        let mut a = std::mem::take(&mut p.a);
        p.segment(&mut a);
        p.a = a;
        let mut b = std::mem::take(&mut p.b);
        p.segment(&mut b);
        p.b = b;
        p
    }

    /// One segment: complex white Gaussian spectrum (the DFT of white noise is white)
    /// times H, inverse FFT, scaled by 1/sqrt(len): unit variance per sample.
    fn segment(&mut self, out: &mut [Complex64]) {
        let len = out.len();
        for (z, h) in out.iter_mut().zip(self.filter.iter()) {
            *z = cn64(&mut self.rng) * *h;
        }
        self.ifft.process_with_scratch(out, &mut self.scratch);
        let s = 1.0 / (len as f64).sqrt();
        out.iter_mut().for_each(|z| *z *= s);
    }

    /// The next sample: w(p + H) a\[p + H\] + w(p) b\[p\], w(i) = sin(pi (i + 1/2) / len),
    /// H = len / 2 (w(i)^2 + w(i + H)^2 = 1, so the variance stays 1).
    pub fn next_sample(&mut self) -> Complex64 {
        let h = self.a.len() / 2;
        let p = self.pos;
        let y = self.a[p + h] * self.window[p + h] + self.b[p] * self.window[p];
        self.pos += 1;
        if self.pos == h {
            std::mem::swap(&mut self.a, &mut self.b);
            let mut b = std::mem::take(&mut self.b);
            self.segment(&mut b);
            self.b = b;
            self.pos = 0;
        }
        y
    }
}

struct Cell {
    range_m: f64,
    dc: Complex64,
    ac_amp: f64,
    ac: AcProcess,
}

/// A vegetation patch: independent cells over its range interval.
pub struct Vegetation {
    spec: VegetationSpec,
    cells: Vec<Cell>,
    r: f64,
    beta: f64,
    span: Option<(f64, f64)>,
}

impl Vegetation {
    /// Plans the patch: the radar cells whose centres lie in [range_min_m, range_max_m]
    /// (within coverage); each cell's power is the radar equation for rcs_dbsm_per_cell;
    /// DC part with a random phase, AC part from its own random stream.
    pub fn new(spec: &VegetationSpec, ctx: &Ctx, seed: u64, stream: u64) -> Self {
        let carrier_ghz = ctx.params.carrier_hz / 1e9;
        let r = spec
            .dc_ac_ratio
            .unwrap_or_else(|| billingsley_dc_ac_ratio(spec.wind_mph, carrier_ghz));
        let class = spec
            .wind_class
            .clone()
            .unwrap_or_else(|| class_of_wind(spec.wind_mph).to_string());
        let beta = spec
            .beta_per_mps
            .unwrap_or_else(|| beta_of_class(&class).unwrap_or(8.0));
        let len = SEGMENT;
        let filter = Arc::new(shaping_filter(
            len,
            ctx.params.chirp_interval_s,
            ctx.lambda,
            beta,
        ));
        let ifft = FftPlanner::<f64>::new().plan_fft_inverse(len);
        let window = Arc::new(
            (0..len)
                .map(|i| (PI * (i as f64 + 0.5) / len as f64).sin())
                .collect::<Vec<f64>>(),
        );
        let sigma = db_to_lin(spec.rcs_dbsm_per_cell);
        let mut cells = Vec::new();
        let mut rng = stream_rng(seed, stream);
        for k in 0..ctx.n {
            let rc = ctx.range_of_cell(k);
            if rc < spec.range_min_m - 1e-9 || rc > spec.range_max_m + 1e-9 || rc <= 0.0 {
                continue;
            }
            let p = ctx.budget.snr(sigma, rc);
            let ph: f64 = rng.gen::<f64>() * 2.0 * PI;
            cells.push(Cell {
                range_m: rc,
                dc: Complex64::from_polar((p * r / (r + 1.0)).sqrt(), ph),
                ac_amp: (p / (r + 1.0)).sqrt(),
                ac: AcProcess::new(
                    filter.clone(),
                    ifft.clone(),
                    window.clone(),
                    stream_rng(seed, stream.wrapping_mul(1000).wrapping_add(k as u64 + 1)),
                ),
            });
        }
        let span = match (cells.first(), cells.last()) {
            (Some(a), Some(b)) => Some((a.range_m, b.range_m)),
            _ => None,
        };
        Vegetation {
            spec: spec.clone(),
            cells,
            r,
            beta,
            span,
        }
    }
}

impl Source for Vegetation {
    fn add(&mut self, _t: f64, ctx: &Ctx, sig: &mut [Complex32]) {
        for c in &mut self.cells {
            let z = c.dc + c.ac.next_sample() * c.ac_amp;
            ctx.put(sig, z, c.range_m);
        }
    }
    fn kinematics(&self, _t: f64) -> Option<(V3, f64)> {
        self.span.map(|(a, b)| ([(a + b) / 2.0, 0.0, 0.0], 0.0))
    }
    fn extent_m(&self) -> f64 {
        0.0
    }
    fn fixed_span(&self) -> Option<(f64, f64)> {
        self.span
    }
    fn truth(&self, ctx: &Ctx, median_range_m: f64, _pos: V3) -> Map<String, Value> {
        let mut m = Map::new();
        m.insert("clutter_kind".into(), json!("vegetation"));
        m.insert("cells".into(), json!(self.cells.len()));
        m.insert("wind_mph".into(), json!(self.spec.wind_mph));
        m.insert("dc_ac_ratio".into(), json!((self.r * 1e4).round() / 1e4));
        m.insert("beta_per_mps".into(), json!(self.beta));
        m.insert(
            "rcs_dbsm_per_cell".into(),
            json!(self.spec.rcs_dbsm_per_cell),
        );
        let snr = ctx
            .budget
            .snr(db_to_lin(self.spec.rcs_dbsm_per_cell), median_range_m);
        m.insert(
            "cell_snr_per_sample_db".into(),
            json!((lin_to_db(snr) * 1000.0).round() / 1000.0),
        );
        m
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Billingsley (2002) r = 489.8 w^-1.55 f^-1.21 (from memory), evaluated by hand:
    /// w 15 mph, f 10 GHz: 489.8 * 0.015042 * 0.061660 = 0.4543.
    #[test]
    fn dc_ac_ratio_by_hand() {
        let r = billingsley_dc_ac_ratio(15.0, 10.0);
        assert!((r - 0.4543).abs() < 2e-3, "{r}");
        assert_eq!(class_of_wind(20.0), "windy");
        assert_eq!(beta_of_class("gale"), Some(4.3));
    }

    /// The segment-joined AC process has unit variance and the crossfade keeps it flat
    /// (power-complementary windows: sin^2 + cos^2 = 1).
    #[test]
    fn ac_unit_variance() {
        let len = 1024;
        let filter = Arc::new(shaping_filter(len, 1e-3, 0.03, 8.0));
        let s: f64 = filter.iter().map(|x| x * x).sum();
        assert!((s - len as f64).abs() < 1e-6);
        let ifft = FftPlanner::<f64>::new().plan_fft_inverse(len);
        let window = Arc::new(
            (0..len)
                .map(|i| (PI * (i as f64 + 0.5) / len as f64).sin())
                .collect::<Vec<f64>>(),
        );
        let mut p = AcProcess::new(filter, ifft, window, stream_rng(3, 3));
        let n = 200_000;
        let mut acc = [0.0f64; 2];
        for i in 0..n {
            acc[(i / 256) % 2] += p.next_sample().norm_sqr();
        }
        let v = (acc[0] + acc[1]) / n as f64;
        assert!((v - 1.0).abs() < 0.05, "{v}");
    }
}
