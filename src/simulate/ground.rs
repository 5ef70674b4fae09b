//! Distributed ground clutter: every radar range cell whose centre lies in the patch holds
//! the sum of many unresolved scatterers, a complex Gaussian amplitude (Rayleigh in
//! magnitude, exponential in power from cell to cell; common practice for homogeneous land
//! clutter, e.g. Richards, *Fundamentals of Radar Signal Processing*, 2nd ed., §2.7, from
//! memory) of mean power sigma0 x A, with the low-grazing cell area
//! A = R x theta_az x dR (Richards §2.7, sec psi ~ 1, from memory). Each cell then
//! scintillates slowly on its own ([`super::scintillation`]).
//!
//! The cells lie on the range grid, so an FMCW chirp takes them all with one inverse FFT
//! (cell k's beat tone is exp(+j 2 pi k n / N), the signal convention of docs/recording-format.md) instead of one tone each.

use std::sync::Arc;

use rustfft::num_complex::{Complex32, Complex64};
use rustfft::{Fft, FftPlanner};
use serde_json::{json, Map, Value};

use super::motion::V3;
use super::noise::{cn64, stream_rng};
use super::radar_eq::{db_to_lin, lin_to_db};
use super::scene::GroundSpec;
use super::scintillation::Scintillation;
use super::synth::{Ctx, Source};
use crate::recording::Waveform;

struct Cell {
    index: usize,
    amp: Complex64,
    scint: Scintillation,
}

/// A ground patch.
pub struct Ground {
    spec: GroundSpec,
    cells: Vec<Cell>,
    span: Option<(f64, f64)>,
    /// FMCW: the inverse FFT over the chirp's samples and its buffers.
    ifft: Option<Arc<dyn Fft<f32>>>,
    grid: Vec<Complex32>,
    scratch: Vec<Complex32>,
}

/// Mean RCS of one ground cell at range `r_m`: sigma0 R theta_az dR, m^2.
pub fn cell_rcs_m2(sigma0_db: f64, r_m: f64, beamwidth_deg: f64, cell_m: f64) -> f64 {
    db_to_lin(sigma0_db) * r_m * beamwidth_deg.to_radians() * cell_m
}

impl Ground {
    /// Plans the patch: cells, their random amplitudes and scintillation streams.
    pub fn new(spec: &GroundSpec, ctx: &Ctx, seed: u64, stream: u64) -> Self {
        let mut rng = stream_rng(seed, stream);
        let cell = ctx.params.range_cell_m();
        let mut cells = Vec::new();
        for k in 0..ctx.n {
            let rc = ctx.range_of_cell(k);
            if rc < spec.range_min_m - 1e-9 || rc > spec.range_max_m + 1e-9 || rc <= 0.0 {
                continue;
            }
            let sigma = cell_rcs_m2(spec.sigma0_db, rc, spec.azimuth_beamwidth_deg, cell);
            let p = ctx.budget.snr(sigma, rc);
            let base = stream.wrapping_mul(100_000).wrapping_add(2 * k as u64);
            cells.push(Cell {
                index: k,
                amp: cn64(&mut rng) * p.sqrt(),
                scint: Scintillation::new(
                    spec.amplitude_scintillation,
                    spec.phase_scintillation_rad,
                    (spec.scintillation_hz, spec.scintillation_order),
                    ctx.params.chirp_interval_s,
                    stream_rng(seed, base + 1),
                    stream_rng(seed, base + 2),
                ),
            });
        }
        let span = match (cells.first(), cells.last()) {
            (Some(a), Some(b)) => Some((ctx.range_of_cell(a.index), ctx.range_of_cell(b.index))),
            _ => None,
        };
        let ifft = (ctx.params.waveform() == Waveform::FmcwBeat && !cells.is_empty())
            .then(|| FftPlanner::<f32>::new().plan_fft_inverse(ctx.n));
        let scratch_len = ifft.as_ref().map_or(0, |f| f.get_inplace_scratch_len());
        Ground {
            spec: spec.clone(),
            cells,
            span,
            ifft,
            grid: vec![Complex32::new(0.0, 0.0); ctx.n],
            scratch: vec![Complex32::new(0.0, 0.0); scratch_len],
        }
    }
}

impl Source for Ground {
    fn add(&mut self, _t: f64, _ctx: &Ctx, sig: &mut [Complex32]) {
        if self.cells.is_empty() {
            return;
        }
        match &self.ifft {
            None => {
                for c in &mut self.cells {
                    let z = c.amp * c.scint.next_gain();
                    sig[c.index] += Complex32::new(z.re as f32, z.im as f32);
                }
            }
            Some(ifft) => {
                self.grid.fill(Complex32::new(0.0, 0.0));
                for c in &mut self.cells {
                    let z = c.amp * c.scint.next_gain();
                    self.grid[c.index] = Complex32::new(z.re as f32, z.im as f32);
                }
                ifft.process_with_scratch(&mut self.grid, &mut self.scratch);
                for (s, g) in sig.iter_mut().zip(&self.grid) {
                    *s += *g;
                }
            }
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
        m.insert("clutter_kind".into(), json!("ground"));
        m.insert("cells".into(), json!(self.cells.len()));
        m.insert("sigma0_db".into(), json!(self.spec.sigma0_db));
        let sigma = cell_rcs_m2(
            self.spec.sigma0_db,
            median_range_m,
            self.spec.azimuth_beamwidth_deg,
            ctx.params.range_cell_m(),
        );
        m.insert(
            "cell_snr_per_sample_db".into(),
            json!((lin_to_db(ctx.budget.snr(sigma, median_range_m)) * 1000.0).round() / 1000.0),
        );
        m
    }
}
