//! What a strong stationary return leaks into the Doppler bins of a range-Doppler map,
//! measured on the radar itself: its sub-clutter visibility. Whatever a canceller or a
//! clutter map leaves of a steady return — chirp-to-chirp phase jitter, the window's skirt
//! of scintillation, quantisation — scales with the return's power (Richards,
//! *Fundamentals of Radar Signal Processing*, 2nd ed., §5.3, improvement factor; a phase
//! jitter of rms sigma limits it to the order of 1/sigma², Skolnik, *Introduction to Radar
//! Systems*, MTI limitations, from memory). So the leak is measured as a profile over
//! Doppler, relative to the clutter power: `g(d) = (P[k, d] - noise[k, d]) / ref_k`, with
//! `ref_k = C_k sum w²` the per-bin power of white noise as strong as cell k's stationary
//! return `C_k` (so `g = 1e-4` in every bin is a white leak of -40 dBc).
//!
//! The cells followed are the strongest stationary ones, within `span` of the strongest
//! (the leak matters only where it can stand over the noise, and only there can it be
//! measured). Each cell's ratio is averaged over CPIs and smoothed over neighbouring
//! Doppler bins (the leak's spectrum is smooth: white jitter shaped by the canceller,
//! the skirt of slow scintillation); the profile is their weighted median per Doppler bin
//! (or another weighted quantile, [`LeakParams::quantile`]; weights the cells'
//! clutter-to-noise, capped at four times the median weight, so neither one strong cell
//! nor a target sitting in one steers it), taken signed and then
//! floored at 0, so cells whose leak lies under their noise add no bias, and finally the
//! largest over the window's main lobe around each bin. The expected leak of any cell k
//! is then `g(d) ref_k`.

/// Settings of the leak measurement.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LeakParams {
    /// Most strong cells followed.
    pub max_cells: usize,
    /// Least clutter-to-noise ratio of a followed cell (`ref_k` over the cell's noise per
    /// bin), linear.
    pub min_cnr: f32,
    /// Feedback of the per-cell averages over CPIs, in (0, 1).
    pub gamma: f32,
    /// Cells followed lie within this factor of the strongest one's clutter-to-noise
    /// (linear; 100 = 20 dB).
    pub span: f32,
    /// Half-width of the smoothing over Doppler of each cell's estimate, bins.
    pub smooth_bins: usize,
    /// Half-width of the running maximum over Doppler of the profile, bins (the Doppler
    /// window's main lobe).
    pub max_bins: usize,
    /// The weighted quantile of the cells' estimates taken, in (0, 1): 0.5 (the median)
    /// where the leak is common to every return (phase jitter through the canceller),
    /// higher where each return leaks its own (slow scintillation in the clutter map's
    /// notch), so the profile covers most of them.
    pub quantile: f32,
}

impl Default for LeakParams {
    fn default() -> Self {
        LeakParams {
            max_cells: 32,
            min_cnr: 100.0,
            gamma: 0.875,
            span: 100.0,
            smooth_bins: 4,
            max_bins: 2,
            quantile: 0.5,
        }
    }
}

#[derive(Debug, Clone)]
struct Followed {
    cell: usize,
    /// Averaged P / ref and noise / ref per Doppler bin.
    q: Vec<f32>,
    n: Vec<f32>,
    cnr: f32,
    seen: usize,
    kept: bool,
}

/// The measured leak profile of one processing path.
#[derive(Debug, Clone)]
pub struct LeakProfile {
    params: LeakParams,
    bins: usize,
    followed: Vec<Followed>,
    profile: Vec<f32>,
    // scratch
    order: Vec<(f32, usize)>,
    pairs: Vec<(f32, f32)>,
    smooth: Vec<Vec<f32>>,
    raw: Vec<f32>,
}

impl LeakProfile {
    /// An empty profile over `bins` Doppler bins.
    pub fn new(params: LeakParams, bins: usize) -> Self {
        LeakProfile {
            params,
            bins,
            followed: Vec::new(),
            profile: vec![0.0; bins],
            order: Vec::new(),
            pairs: Vec::new(),
            smooth: Vec::new(),
            raw: vec![0.0; bins],
        }
    }

    /// The leak of Doppler bin `d` relative to `ref_k` (0 where none is measured).
    #[inline]
    pub fn ratio(&self, d: usize) -> f32 {
        self.profile[d]
    }

    /// The whole profile, one value per Doppler bin.
    pub fn profile(&self) -> &[f32] {
        &self.profile
    }

    /// Strong cells followed in the last update.
    pub fn cells(&self) -> usize {
        self.followed.len()
    }

    /// Total leak over all Doppler bins relative to the clutter power, `sum_d g(d) / M`
    /// (the inverse of the measured sub-clutter visibility), linear.
    pub fn total(&self) -> f32 {
        self.profile.iter().sum::<f32>() / self.bins.max(1) as f32
    }

    /// One CPI: `power(k, d)` the map, `noise(k, d)` its mean noise, `reference[k]` each
    /// cell's `ref_k` (0 for none), `usable(k)` false for cells not to follow (near-range
    /// blind cells). Strong cells are those with `ref_k / noise(k, d_ref)` of at least
    /// `min_cnr`, `d_ref` the bin halfway to the band edge.
    pub fn update(
        &mut self,
        cells: usize,
        power: impl Fn(usize, usize) -> f32,
        noise: impl Fn(usize, usize) -> f32,
        reference: &[f32],
        usable: impl Fn(usize) -> bool,
    ) {
        let m = self.bins;
        let d_ref = m / 4;
        self.order.clear();
        for (k, &r) in reference.iter().enumerate().take(cells) {
            if r <= 0.0 || !usable(k) {
                continue;
            }
            let cnr = r / noise(k, d_ref).max(f32::MIN_POSITIVE);
            if cnr >= self.params.min_cnr {
                self.order.push((cnr, k));
            }
        }
        self.order
            .sort_unstable_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
        self.order.truncate(self.params.max_cells);
        if let Some(&(top, _)) = self.order.first() {
            let least = top / self.params.span;
            self.order.retain(|&(c, _)| c >= least);
        }
        for f in &mut self.followed {
            f.kept = false;
        }
        for &(cnr, k) in &self.order {
            match self.followed.iter_mut().find(|f| f.cell == k) {
                Some(f) => {
                    f.kept = true;
                    f.cnr = cnr;
                }
                None => self.followed.push(Followed {
                    cell: k,
                    q: vec![0.0; m],
                    n: vec![0.0; m],
                    cnr,
                    seen: 0,
                    kept: true,
                }),
            }
        }
        self.followed.retain(|f| f.kept);
        let g = self.params.gamma;
        for f in &mut self.followed {
            let inv = 1.0 / reference[f.cell];
            let w = (1.0 / (f.seen as f32 + 1.0)).max(1.0 - g);
            for d in 0..m {
                let q = power(f.cell, d) * inv;
                let n = noise(f.cell, d) * inv;
                f.q[d] += (q - f.q[d]) * w;
                f.n[d] += (n - f.n[d]) * w;
            }
            f.seen += 1;
        }
        // each ready cell's signed estimate, smoothed over Doppler (circular: the spectrum
        // of a pulse train is periodic)
        let ready: Vec<usize> = (0..self.followed.len())
            .filter(|&i| self.followed[i].seen >= 1)
            .collect();
        if ready.is_empty() {
            self.profile.fill(0.0);
            return;
        }
        let h = self.params.smooth_bins.min(m / 2);
        self.smooth.resize_with(ready.len(), Vec::new);
        for (j, &i) in ready.iter().enumerate() {
            let f = &self.followed[i];
            let out = &mut self.smooth[j];
            out.clear();
            out.resize(m, 0.0);
            let width = (2 * h + 1) as f32;
            let val = |d: usize| f.q[d] - f.n[d];
            let mut acc: f32 = (0..=2 * h).map(|o| val((o + m - h) % m)).sum();
            for (d, o) in out.iter_mut().enumerate() {
                *o = acc / width;
                acc += val((d + h + 1) % m) - val((d + m - h) % m);
            }
        }
        let mut weights: Vec<f32> = ready.iter().map(|&i| self.followed[i].cnr).collect();
        let mut sorted = weights.clone();
        sorted.sort_unstable_by(f32::total_cmp);
        let cap = 4.0 * sorted[sorted.len() / 2];
        weights.iter_mut().for_each(|w| *w = w.min(cap));
        let total: f32 = weights.iter().sum();
        for d in 0..m {
            self.pairs.clear();
            for (j, w) in weights.iter().enumerate() {
                self.pairs.push((self.smooth[j][d], *w));
            }
            self.pairs.sort_unstable_by(|a, b| a.0.total_cmp(&b.0));
            let mut acc = 0.0;
            let mut med = self.pairs[self.pairs.len() - 1].0;
            for &(v, w) in &self.pairs {
                acc += w;
                if acc >= self.params.quantile * total {
                    med = v;
                    break;
                }
            }
            self.raw[d] = med.max(0.0);
        }
        let mh = self.params.max_bins.min(m / 2);
        for d in 0..m {
            self.profile[d] = (0..=2 * mh)
                .map(|o| self.raw[(d + m + o - mh) % m])
                .fold(0.0f32, f32::max);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};

    #[test]
    fn measures_a_white_leak_and_ignores_noise() {
        // 40 cells, 64 bins, unit noise. Cells 5..15 hold stationary returns with
        // ref_k = 1e4 .. 1e6 that leak 1e-5 of ref_k into every bin (a white -50 dBc floor):
        // the profile reads 1e-5 within 30 %. Without any leak it reads (nearly) 0: its
        // estimate is a median of signed noise, so no bias of the noise level remains.
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(4);
        for leak in [1e-5f32, 0.0] {
            let reference: Vec<f32> = (0..40)
                .map(|k| {
                    if (5..15).contains(&k) {
                        10f32.powf(4.0 + (k - 5) as f32 / 5.0)
                    } else {
                        0.0
                    }
                })
                .collect();
            let mut p = LeakProfile::new(LeakParams::default(), 64);
            for _ in 0..40 {
                let map: Vec<f32> = (0..40 * 64)
                    .map(|i| {
                        let k = i / 64;
                        let mean = 1.0 + leak * reference[k];
                        -mean * (1.0f32 - rng.gen::<f32>()).ln()
                    })
                    .collect();
                p.update(40, |k, d| map[k * 64 + d], |_, _| 1.0, &reference, |_| true);
            }
            // the followed cells lie within 20 dB of the strongest (1e6): ref 1e4 .. 1e6
            assert_eq!(p.cells(), 10);
            let mean = p.total();
            if leak > 0.0 {
                assert!((mean / leak - 1.0).abs() < 0.3, "{mean}");
            } else {
                // far under what would matter: 1e-6 of ref = 0.01..1 noise
                assert!(mean < 1e-6, "{mean}");
            }
        }
    }
}
