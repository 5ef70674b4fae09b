//! Slow-time clutter cancellers (MTI): binomial FIR differences across successive chirps
//! of each range cell, optionally phase-aligned to remove chirp-to-chirp oscillator phase
//! jitter; plus their analytic response, blind speeds and clutter improvement factor.

use std::f64::consts::PI;
use std::fmt;
use std::str::FromStr;

use rustfft::num_complex::Complex32;
use serde::{Deserialize, Serialize};

use crate::error::{ensure, Error, Result};

/// A slow-time clutter canceller. Names (serde, [`FromStr`], [`fmt::Display`]): `none`,
/// `two-pulse`, `three-pulse`.
///
/// Output for chirp m: `y[m] = sum_i c_i x[m - i]` with the binomial coefficients
/// `c = [1]`, `[1, -1]`, `[1, -2, 1]` (no scaling; the white-noise power gain is
/// [`Canceller::noise_power_gain`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize, Default)]
#[serde(rename_all = "kebab-case")]
pub enum Canceller {
    /// Pass-through.
    None,
    /// Two-pulse canceller `x[m] - x[m-1]`.
    TwoPulse,
    /// Three-pulse canceller `x[m] - 2 x[m-1] + x[m-2]`.
    #[default]
    ThreePulse,
}

/// Binomial canceller coefficients of an order-`order` difference:
/// `c_i = (-1)^i C(order, i)`, i = 0..=order (order 1: `[1, -1]`, 2: `[1, -2, 1]`).
pub fn binomial_coefficients(order: usize) -> Vec<f64> {
    let mut c = vec![1.0f64];
    for _ in 0..order {
        let mut next = vec![0.0; c.len() + 1];
        for (i, &v) in c.iter().enumerate() {
            next[i] += v;
            next[i + 1] -= v;
        }
        c = next;
    }
    c
}

/// Correlation coefficient at lag `k` chirps of clutter with a Gaussian Doppler spectrum
/// `S(f) ∝ exp(-f^2 / (2 sigma_f^2))`: `rho(k) = exp(-2 pi^2 (sigma_f k T)^2)`, with
/// `sigma_f_times_t = sigma_f / PRF` (Fourier pair of the Gaussian; Richards, Fundamentals
/// of Radar Signal Processing, 2nd ed., §5.4).
pub fn gaussian_clutter_rho(sigma_f_times_t: f64, k: usize) -> f64 {
    let x = sigma_f_times_t * k as f64;
    (-2.0 * PI * PI * x * x).exp()
}

/// Blind speeds `v_n = n lambda / (2 T)`, n = 1..=count, in m/s (speeds whose Doppler is a
/// multiple of the PRF, where every canceller has a null). Errors unless `lambda_m` and
/// `chirp_interval_s` are positive and finite.
pub fn blind_speeds_mps(lambda_m: f64, chirp_interval_s: f64, count: usize) -> Result<Vec<f64>> {
    ensure(lambda_m.is_finite() && lambda_m > 0.0, || {
        format!("wavelength {lambda_m} m is out of range; allowed: > 0")
    })?;
    ensure(
        chirp_interval_s.is_finite() && chirp_interval_s > 0.0,
        || format!("chirp interval {chirp_interval_s} s is out of range; allowed: > 0"),
    )?;
    Ok((1..=count)
        .map(|n| n as f64 * lambda_m / (2.0 * chirp_interval_s))
        .collect())
}

impl Canceller {
    /// Every canceller, in a fixed order.
    pub const ALL: [Canceller; 3] = [Canceller::None, Canceller::TwoPulse, Canceller::ThreePulse];

    /// Name as used by serde and [`FromStr`].
    pub fn name(self) -> &'static str {
        match self {
            Canceller::None => "none",
            Canceller::TwoPulse => "two-pulse",
            Canceller::ThreePulse => "three-pulse",
        }
    }

    /// Difference order (0, 1, 2).
    pub fn order(self) -> usize {
        match self {
            Canceller::None => 0,
            Canceller::TwoPulse => 1,
            Canceller::ThreePulse => 2,
        }
    }

    /// Number of chirps in one output (order + 1).
    pub fn taps(self) -> usize {
        self.order() + 1
    }

    /// The coefficients `c_i`, applied to `x[m - i]` ([`binomial_coefficients`]).
    pub fn coefficients(self) -> Vec<f64> {
        binomial_coefficients(self.order())
    }

    /// White-noise power gain `sum c_i^2`: 1, 2, 6 (linear).
    pub fn noise_power_gain(self) -> f64 {
        self.coefficients().iter().map(|c| c * c).sum()
    }

    /// Analytic amplitude response `|H(f)|` at Doppler `f_hz` for chirp rate `prf_hz`
    /// (linear, not dB): 1, `2 |sin(pi f T)|`, `4 sin^2(pi f T)` with T = 1/PRF
    /// (Richards, 2nd ed., §5.4; Skolnik, Introduction to Radar Systems, 3rd ed., §3.2).
    pub fn magnitude_response(self, f_hz: f64, prf_hz: f64) -> f64 {
        let s = (PI * f_hz / prf_hz).sin();
        match self {
            Canceller::None => 1.0,
            Canceller::TwoPulse => 2.0 * s.abs(),
            Canceller::ThreePulse => 4.0 * s * s,
        }
    }

    /// Clutter improvement factor in dB for clutter with lag correlations `rho1 = rho(1)`
    /// and `rho2 = rho(2)` (Richards, 2nd ed., Eqs. 5.57-5.58, normalised by the average
    /// noise/signal gain): `I2 = 1 / (1 - rho1)`, `I3 = 3 / (3 - 4 rho1 + rho2)`; 0 dB for
    /// `None`. Errors unless both rho are in [-1, 1] and the clutter output power is > 0.
    pub fn improvement_factor_db(self, rho1: f64, rho2: f64) -> Result<f64> {
        for (name, r) in [("rho1", rho1), ("rho2", rho2)] {
            ensure(r.is_finite() && (-1.0..=1.0).contains(&r), || {
                format!("{name} = {r} is out of range; allowed: -1 ..= 1")
            })?;
        }
        let i = match self {
            Canceller::None => 1.0,
            Canceller::TwoPulse => {
                let d = 1.0 - rho1;
                ensure(d > 0.0, || {
                    format!("rho1 = {rho1} gives no clutter residue; allowed: rho1 < 1")
                })?;
                1.0 / d
            }
            Canceller::ThreePulse => {
                let d = 3.0 - 4.0 * rho1 + rho2;
                ensure(d > 0.0, || {
                    format!("rho1 = {rho1}, rho2 = {rho2} give no clutter residue; allowed: 3 - 4 rho1 + rho2 > 0")
                })?;
                3.0 / d
            }
        };
        Ok(10.0 * i.log10())
    }
}

impl fmt::Display for Canceller {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Canceller {
    type Err = Error;
    fn from_str(s: &str) -> Result<Self> {
        Canceller::ALL
            .into_iter()
            .find(|c| c.name() == s)
            .ok_or_else(|| {
                Error::Invalid(format!(
                    "canceller {s:?} is unknown; allowed: none, two-pulse, three-pulse"
                ))
            })
    }
}

/// Streaming canceller over chirps of `cells` range cells.
///
/// Keeps the last `order` input chirps. With `phase_align`, before each difference the
/// common phase step between the current chirp and its predecessor is estimated and the
/// history is rotated by it (older chirps by the sum of the steps since them), which
/// removes chirp-to-chirp oscillator phase jitter common to all cells. The estimate uses
/// the stationary cells only: `phi` = the argument of the weighted mean over cells of the
/// unit phasors of `cur[k] conj(prev[k])`, over cells whose slow-time mean power `|mean_k|^2` holds at
/// least 99% of their mean power (exponential averages over about 256 chirps), weighted by
/// `|mean_k|^2` capped at 4x the median weight — so a mover or blade return, or a target
/// passing through the strongest clutter cell, does not steer it.
///
/// The estimate carries the noise of the cells it is made from, and rotating a strong
/// return by that noise leaks it through. So the step applied is shrunk towards zero by
/// the Wiener gain `g = s_j / s_t` (clamped to 0..1): `s_t` is the running mean square of the
/// step estimate and `s_j` the running mean of `phi_A * phi_B`, the product of estimates
/// from two disjoint halves of the stationary cells, whose noises are independent — so
/// `s_j` measures the common jitter alone. Without jitter `g` tends to 0 and the
/// canceller is the plain one; with jitter well above the estimation noise, `g` tends to 1.
#[derive(Debug, Clone)]
pub struct CancellerState {
    kind: Canceller,
    cells: usize,
    phase_align: bool,
    coeffs: Vec<f32>,
    /// history[0] = x[m-1], history[1] = x[m-2] (raw, unrotated)
    history: Vec<Vec<Complex32>>,
    /// steps[i] = phase of history[i] relative to history[i+1] ... stored per entry:
    /// steps[i] = arg(sum history[i] conj(history[i+1])), valid when both exist.
    steps: Vec<f64>,
    filled: usize,
    last_phase: f64,
    /// Exponential slow-time mean and mean power of each cell (stationarity weights).
    mean: Vec<Complex32>,
    power: Vec<f32>,
    seen: usize,
    /// Running mean square of the step estimate, and of the half-estimates' product.
    step_power: f64,
    step_cross: f64,
    /// Work buffers of the step estimate (reused; no allocation once grown).
    cell_steps: Vec<(f64, f64)>,
    weights: Vec<f64>,
}

/// Share of a cell's mean power its slow-time mean must hold for the cell to count as
/// stationary in the phase-step estimate (a rotor's blade flashes, a mover or vegetation
/// take more than 1% and are left out).
const STATIONARY_SHARE: f32 = 0.99;

/// Averaging factor of the stationarity statistics (about 256 chirps).
const STATIONARY_ALPHA: f32 = 1.0 / 256.0;

impl CancellerState {
    /// A canceller of `kind` for chirps of `cells` (>= 1) range cells.
    pub fn new(kind: Canceller, cells: usize, phase_align: bool) -> Result<Self> {
        ensure(cells >= 1, || {
            format!("canceller cells = {cells} is out of range; allowed: >= 1")
        })?;
        let order = kind.order();
        Ok(CancellerState {
            kind,
            cells,
            phase_align,
            coeffs: kind.coefficients().into_iter().map(|c| c as f32).collect(),
            history: vec![vec![Complex32::new(0.0, 0.0); cells]; order],
            steps: vec![0.0; order],
            filled: 0,
            last_phase: 0.0,
            mean: vec![Complex32::new(0.0, 0.0); cells],
            power: vec![0.0; cells],
            seen: 0,
            step_power: 0.0,
            step_cross: 0.0,
            cell_steps: Vec::with_capacity(cells),
            weights: Vec::with_capacity(cells),
        })
    }

    /// Per-cell phase steps `(arg(cur conj(prev)), weight)` of the stationary cells into
    /// `cell_steps`, in cell order; weights are the cells' stationary powers, capped at 4x
    /// their median so one very strong cell (through which a target may pass) cannot decide
    /// alone.
    fn steps_of_stationary(&mut self, chirp: &[Complex32]) {
        self.cell_steps.clear();
        for (k, (c, p)) in chirp.iter().zip(&self.history[0]).enumerate() {
            let dc = self.mean[k].norm_sqr();
            if dc <= 0.0 || dc < STATIONARY_SHARE * self.power[k] {
                continue;
            }
            let v = c * p.conj();
            if v.norm() > 0.0 {
                self.cell_steps.push((v.arg() as f64, dc as f64));
            }
        }
        if self.cell_steps.is_empty() {
            return;
        }
        self.weights.clear();
        self.weights.extend(self.cell_steps.iter().map(|s| s.1));
        let mid = self.weights.len() / 2;
        let (_, med, _) = self
            .weights
            .select_nth_unstable_by(mid, |a, b| a.total_cmp(b));
        let cap = 4.0 * *med;
        for s in self.cell_steps.iter_mut() {
            s.1 = s.1.min(cap);
        }
    }

    /// Updates the stationarity statistics with chirp `x`.
    fn update_stationarity(&mut self, x: &[Complex32]) {
        let a = if self.seen == 0 {
            1.0
        } else {
            STATIONARY_ALPHA
        };
        for ((m, p), v) in self.mean.iter_mut().zip(self.power.iter_mut()).zip(x) {
            *m += (v - *m) * a;
            *p += (v.norm_sqr() - *p) * a;
        }
        self.seen += 1;
    }

    /// The canceller kind.
    pub fn kind(&self) -> Canceller {
        self.kind
    }

    /// Range cells per chirp.
    pub fn cells(&self) -> usize {
        self.cells
    }

    /// The phase step (radians) estimated at the last [`CancellerState::push`] between the
    /// current chirp and its predecessor (0 without alignment or before two chirps).
    pub fn last_phase_step(&self) -> f64 {
        self.last_phase
    }

    /// Forgets the history (e.g. at a gap in the recording).
    pub fn reset(&mut self) {
        self.filled = 0;
        self.last_phase = 0.0;
        self.seen = 0;
    }

    /// Feeds one chirp (`cells` values). Returns `Ok(true)` and writes the cancelled chirp to
    /// `out` (`cells` values) once `order` earlier chirps are held, `Ok(false)` (out
    /// untouched) before. No allocation. Errors on wrong lengths.
    pub fn push(&mut self, chirp: &[Complex32], out: &mut [Complex32]) -> Result<bool> {
        ensure(chirp.len() == self.cells && out.len() == self.cells, || {
            format!(
                "canceller chirp/output lengths {}/{} are wrong; allowed: exactly {}",
                chirp.len(),
                out.len(),
                self.cells
            )
        })?;
        let order = self.kind.order();
        if order == 0 {
            out.copy_from_slice(chirp);
            return Ok(true);
        }
        // Phase step between the current chirp and x[m-1].
        let step = if self.phase_align && self.filled >= 1 {
            self.steps_of_stationary(chirp);
            if self.cell_steps.len() >= 2 {
                // Weighted means of unit phasors: all cells, and the two halves.
                let mut sum = [(0.0f64, 0.0f64); 3];
                for (i, &(a, w)) in self.cell_steps.iter().enumerate() {
                    let (sn, cs) = a.sin_cos();
                    for j in [2, i % 2] {
                        sum[j].0 += w * cs;
                        sum[j].1 += w * sn;
                    }
                }
                let arg = |z: (f64, f64)| z.1.atan2(z.0);
                let (phi, pa, pb) = (arg(sum[2]), arg(sum[0]), arg(sum[1]));
                let al = STATIONARY_ALPHA as f64;
                self.step_power += (phi * phi - self.step_power) * al;
                self.step_cross += (pa * pb - self.step_cross) * al;
                let g = if self.step_power > 0.0 {
                    (self.step_cross / self.step_power).clamp(0.0, 1.0)
                } else {
                    0.0
                };
                g * phi
            } else {
                0.0
            }
        } else {
            0.0
        };
        if self.phase_align {
            self.update_stationarity(chirp);
        }
        self.last_phase = step;
        let ready = self.filled >= order;
        if ready {
            // rotations: history[i] (x[m-1-i]) rotated by sum of steps from it up to now.
            let c0 = self.coeffs[0];
            let mut rot = [Complex32::new(1.0, 0.0); 2];
            let mut cum = step;
            for (i, r) in rot.iter_mut().enumerate().take(order) {
                if i > 0 {
                    cum += self.steps[i - 1];
                }
                *r = Complex32::from_polar(self.coeffs[i + 1], cum as f32);
            }
            match order {
                1 => {
                    for ((o, &x), &h0) in out.iter_mut().zip(chirp).zip(&self.history[0]) {
                        *o = x * c0 + h0 * rot[0];
                    }
                }
                _ => {
                    let (h0, h1) = (&self.history[0], &self.history[1]);
                    for (k, (o, &x)) in out.iter_mut().zip(chirp).enumerate() {
                        *o = x * c0 + h0[k] * rot[0] + h1[k] * rot[1];
                    }
                }
            }
        }
        // Shift history: x[m] becomes x[m-1].
        self.history.rotate_right(1);
        self.history[0].copy_from_slice(chirp);
        self.steps.rotate_right(1);
        self.steps[0] = step;
        self.filled = (self.filled + 1).min(order);
        Ok(ready)
    }

    /// Feeds a chirp-major block (whole chirps of `cells`) and writes the cancelled chirps
    /// contiguously to the start of `out` (at least as long as `block`). Returns how many
    /// output chirps were written (`chirps - order` for a fresh state, `chirps` once the
    /// history is full). No allocation.
    pub fn push_block(&mut self, block: &[Complex32], out: &mut [Complex32]) -> Result<usize> {
        ensure(
            block.len() % self.cells == 0 && out.len() >= block.len(),
            || {
                format!(
                "canceller block length {} / output length {}; allowed: a multiple of {} and output >= block",
                block.len(),
                out.len(),
                self.cells
            )
            },
        )?;
        let mut written = 0;
        for chirp in block.chunks_exact(self.cells) {
            let dst = &mut out[written * self.cells..(written + 1) * self.cells];
            if self.push(chirp, dst)? {
                written += 1;
            }
        }
        Ok(written)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::frontend::testutil::random_complex;
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;
    use rustfft::num_complex::Complex64;
    use rustfft::FftPlanner;

    // Source: Pascal's triangle with alternating signs (binomial theorem, (1 - z^-1)^n).
    #[test]
    fn binomial_and_noise_gain() {
        assert_eq!(binomial_coefficients(1), vec![1.0, -1.0]);
        assert_eq!(binomial_coefficients(2), vec![1.0, -2.0, 1.0]);
        assert_eq!(binomial_coefficients(3), vec![1.0, -3.0, 3.0, -1.0]);
        assert_eq!(Canceller::TwoPulse.noise_power_gain(), 2.0);
        assert_eq!(Canceller::ThreePulse.noise_power_gain(), 6.0);
        assert_eq!(Canceller::None.noise_power_gain(), 1.0);
    }

    #[test]
    fn names() {
        for c in Canceller::ALL {
            assert_eq!(c.name().parse::<Canceller>().unwrap(), c);
            assert_eq!(
                serde_json::to_string(&c).unwrap(),
                format!("\"{}\"", c.name())
            );
        }
        let e = "four-pulse".parse::<Canceller>().unwrap_err().to_string();
        assert!(e.contains("four-pulse") && e.contains("three-pulse"));
    }

    fn run(kind: Canceller, cells: usize, align: bool, x: &[Complex32]) -> Vec<Complex32> {
        let mut st = CancellerState::new(kind, cells, align).unwrap();
        let mut out = vec![Complex32::new(0.0, 0.0); x.len()];
        let n = st.push_block(x, &mut out).unwrap();
        out.truncate(n * cells);
        out
    }

    // Source: Richards, Fundamentals of Radar Signal Processing, 2nd ed., §5.4 (two-pulse
    // |H| = 2|sin(pi f T)|, three-pulse 4 sin^2(pi f T)); measured with complex tones.
    #[test]
    fn measured_response_matches_analytic() {
        let prf = 1000.0;
        let m = 64;
        for kind in [Canceller::TwoPulse, Canceller::ThreePulse] {
            for i in 0..=40 {
                let f = -prf + i as f64 * 2.0 * prf / 40.0 + 3.7; // sweep over two PRFs
                let x: Vec<Complex32> = (0..m)
                    .map(|t| {
                        let ph = 2.0 * PI * f * t as f64 / prf;
                        Complex32::new(ph.cos() as f32, ph.sin() as f32)
                    })
                    .collect();
                let y = run(kind, 1, false, &x);
                assert_eq!(y.len(), m - kind.order());
                for v in &y {
                    let want = kind.magnitude_response(f, prf);
                    assert!((v.norm() as f64 - want).abs() < 1e-3, "{kind} f {f}");
                }
            }
        }
    }

    // Source: blind speeds v_n = n lambda / (2T) (Skolnik, Introduction to Radar Systems,
    // 3rd ed., Eq. 3.6); a scatterer at a blind speed is cancelled completely.
    #[test]
    fn nulls_at_blind_speeds() {
        let lambda = 0.0125;
        let t = 1e-4;
        let v = blind_speeds_mps(lambda, t, 3).unwrap();
        assert!((v[0] - 62.5).abs() < 1e-9 && (v[2] - 187.5).abs() < 1e-9);
        for kind in [Canceller::TwoPulse, Canceller::ThreePulse] {
            for &vn in &v {
                // slow-time phase exp(+j 4 pi R(t_m) / lambda), R = vn * m * T
                let x: Vec<Complex32> = (0..16)
                    .map(|m| {
                        let ph = 4.0 * PI * vn * m as f64 * t / lambda;
                        Complex32::new(ph.cos() as f32, ph.sin() as f32)
                    })
                    .collect();
                let y = run(kind, 1, false, &x);
                assert!(y.iter().all(|v| v.norm() < 1e-3), "{kind} {vn}");
                assert!(kind.magnitude_response(2.0 * vn / lambda, 1.0 / t) < 1e-9);
            }
        }
        assert!(blind_speeds_mps(0.0, t, 1).is_err());
        assert!(blind_speeds_mps(lambda, -1.0, 1).is_err());
    }

    // Source: Richards, 2nd ed., Eqs. 5.57-5.58 with the Gaussian rho(k); the dB values are
    // computed from the formula.
    #[test]
    fn analytic_improvement_factor_reproduces_design_values() {
        for (s, i2, i3) in [(0.05, 13.17, 23.48), (0.01, 27.05, 51.10)] {
            let r1 = gaussian_clutter_rho(s, 1);
            let r2 = gaussian_clutter_rho(s, 2);
            let a = Canceller::TwoPulse.improvement_factor_db(r1, r2).unwrap();
            let b = Canceller::ThreePulse.improvement_factor_db(r1, r2).unwrap();
            assert!((a - i2).abs() < 0.01, "I2 {a}");
            assert!((b - i3).abs() < 0.01, "I3 {b}");
        }
        assert!(Canceller::TwoPulse.improvement_factor_db(1.5, 0.0).is_err());
        assert!(Canceller::TwoPulse.improvement_factor_db(1.0, 1.0).is_err());
    }

    /// Seeded complex Gaussian clutter with spectrum exp(-f^2/(2 sigma^2)) (f in units of
    /// PRF, over [-1/2, 1/2)), unit power, by filtering white noise in the frequency domain.
    fn gaussian_clutter(n: usize, sigma: f64, seed: u64) -> Vec<Complex32> {
        let mut x = random_complex(n, seed);
        let fft = FftPlanner::<f32>::new().plan_fft_forward(n);
        let ifft = FftPlanner::<f32>::new().plan_fft_inverse(n);
        fft.process(&mut x);
        for (k, v) in x.iter_mut().enumerate() {
            let f = crate::frontend::shift::signed_bin(k, n) as f64 / n as f64;
            *v *= (-f * f / (4.0 * sigma * sigma)).exp() as f32; // amplitude = sqrt(S)
        }
        ifft.process(&mut x);
        let p: f64 = x.iter().map(|v| v.norm_sqr() as f64).sum::<f64>() / n as f64;
        let g = (1.0 / p.sqrt()) as f32;
        x.iter_mut().for_each(|v| *v *= g);
        x
    }

    // Source: improvement factor = (S_out/C_out)/(S_in/C_in) averaged over target Doppler,
    // = noise power gain x C_in / C_out (Richards, 2nd ed., §5.4.3). Measured on simulated
    // Gaussian clutter and compared with the values of the formula. Tolerance 0.5 dB: the
    // residue of 4 x 65536 chirps with sigma_f/PRF = 0.05 has roughly 4 x 65536 x 0.1
    // ~ 2.6e4 independent samples, so its power is known to ~1% (0.04 dB); 0.5 dB leaves
    // room for f32 rounding of the tiny three-pulse residue and the sampled spectrum.
    #[test]
    fn measured_improvement_factor_on_gaussian_clutter() {
        let s = 0.05;
        for (kind, want) in [(Canceller::TwoPulse, 13.17), (Canceller::ThreePulse, 23.48)] {
            let (mut pin, mut pout, mut nout) = (0.0f64, 0.0f64, 0usize);
            for seed in 0..4 {
                let x = gaussian_clutter(65536, s, 100 + seed);
                pin += x.iter().map(|v| v.norm_sqr() as f64).sum::<f64>() / x.len() as f64;
                let y = run(kind, 1, false, &x);
                pout += y.iter().map(|v| v.norm_sqr() as f64).sum::<f64>();
                nout += y.len();
            }
            let pin = pin / 4.0;
            let pout = pout / nout as f64;
            let i_db = 10.0 * (kind.noise_power_gain() * pin / pout).log10();
            println!("{kind}: measured improvement factor {i_db:.2} dB (analytic {want})");
            assert!((i_db - want).abs() < 0.5, "{kind} {i_db}");
        }
    }

    // Phase-aligned cancelling: strong stationary clutter in every cell, each chirp rotated
    // by a random oscillator phase (uniform +-0.05 rad: the stationarity test keeps cells
    // whose slow-time mean holds 99% of their power, which a common jitter above ~0.1 rad
    // rms would defeat; oscillator phase noise is usually mrad). Common practice (phase-noise
    // compensation on a dominant stationary return); the aligned residue must be far smaller.
    #[test]
    fn phase_alignment_removes_common_jitter() {
        let cells = 64;
        let chirps = 1000;
        let clutter = random_complex(cells, 5);
        let noise = random_complex(cells * chirps, 6);
        let mut rng = ChaCha8Rng::seed_from_u64(9);
        let mut x = Vec::with_capacity(cells * chirps);
        for m in 0..chirps {
            let j = Complex32::from_polar(1.0, rng.gen_range(-0.05f32..0.05));
            for k in 0..cells {
                x.push((clutter[k] * 1000.0 + noise[m * cells + k]) * j);
            }
        }
        for kind in [Canceller::TwoPulse, Canceller::ThreePulse] {
            let p = |y: &[Complex32]| {
                y.iter().map(|v| v.norm_sqr() as f64).sum::<f64>() / y.len() as f64
            };
            let plain = p(&run(kind, cells, false, &x));
            let aligned = p(&run(kind, cells, true, &x));
            let white = kind.noise_power_gain(); // residue floor: noise only
            println!(
                "{kind}: residue unaligned {:.1} dB, aligned {:.1} dB, noise floor {:.1} dB",
                10.0 * plain.log10(),
                10.0 * aligned.log10(),
                10.0 * white.log10()
            );
            assert!(aligned < plain / 100.0, "{kind}: {aligned} vs {plain}");
            assert!(aligned < 1.5 * white, "{kind}: aligned {aligned}");
        }
    }

    #[test]
    fn state_errors_and_warmup() {
        assert!(CancellerState::new(Canceller::TwoPulse, 0, false).is_err());
        let mut st = CancellerState::new(Canceller::ThreePulse, 2, false).unwrap();
        let mut out = [Complex32::new(0.0, 0.0); 2];
        let a = [Complex32::new(1.0, 0.0); 2];
        assert!(!st.push(&a, &mut out).unwrap());
        assert!(!st.push(&a, &mut out).unwrap());
        assert!(st.push(&a, &mut out).unwrap());
        assert!(out.iter().all(|v| v.norm() == 0.0));
        let e = st.push(&a[..1], &mut out).unwrap_err().to_string();
        assert!(e.contains("exactly 2"), "{e}");
        let _ = Complex64::new(0.0, 0.0);
    }
}
