//! Pass two over a recording: for every track, the slow-time signal at the track's range,
//! chirp by chirp, following the range as it migrates (interpolated between the track's
//! CPIs), plus a noise-reference signal a few cells away. For FMCW the range gate is the
//! windowed DFT of the chirp evaluated at the track's *fractional* beat bin, so a mover
//! crossing cells keeps its amplitude and phase continuous (no straddle loss, no phase jump
//! at a cell change); range profiles take a weighted sum of the cells
//! around the track's fractional cell (see `RANGE_PROFILE_REACH`). Not cancelled: the feature stage
//! removes clutter with a narrow notch. Streams the recording again; memory holds only the
//! tracks' own samples (each capped at `max_chirps`).

use rayon::prelude::*;
use rustfft::num_complex::Complex32;

use super::settings::DetectSettings;
use crate::detect::Track;
use crate::error::Result;
use crate::recording::{ChirpBlock, ChirpReader, RecordingMeta, Waveform};

/// Cells between a track and its two noise-reference candidates (one each side, folded
/// back into the profile at the edges).
const REFERENCE_OFFSET_CELLS: f64 = 8.0;

/// The slow-time signal of one track.
#[derive(Debug, Clone)]
pub struct TrackSignal {
    /// First chirp of the signal.
    pub first_chirp: usize,
    /// One complex sample a chirp: the range-gated value at the track's range.
    pub samples: Vec<Complex32>,
    /// The same gate `REFERENCE_OFFSET_CELLS` away on either side: noise-reference
    /// candidates with the same scaling (the feature stage takes the quieter).
    pub reference: Vec<Complex32>,
    pub reference2: Vec<Complex32>,
}

/// Range profiles: the gate is a weighted sum of cells around the fractional cell kappa,
/// weight `clamp(2 - |k - kappa|, 0, 1)` (flat over kappa +/- 1, tapering to 0 at +/- 2). A
/// scatterer's energy sits in one cell and jumps whole to the next as it crosses a cell edge
/// (or as a swaying mast dithers across one); a one-cell gate would switch on and off with
/// it, and a gate of whole cells that follows the track's range would swap cells in and out
/// of a clutter patch in steps; both spread over every Doppler bin. With these weights the
/// jump between two cells inside the flat top changes nothing, and the weights move
/// continuously with kappa (three cells' noise, shared by the reference gates).
const RANGE_PROFILE_REACH: f64 = 2.0;

/// Noise power of the range gate relative to a point scatterer's power in it: 1 for FMCW
/// (one fractional FFT bin); for range profiles the mean over the fractional position of
/// the sum of the squared weights, 2 + 2/3 (the scatterer sits in one cell of weight 1).
pub fn gate_noise_gain(waveform: Waveform) -> f64 {
    match waveform {
        Waveform::FmcwBeat => 1.0,
        Waveform::RangeProfile => 8.0 / 3.0,
    }
}

/// Samples of one block's windowed copy in pass two (16 bytes each: 16 MiB).
const MAX_WINDOWED_SAMPLES: usize = 1 << 20;

/// Independent phasor chains of the FMCW gate: the recursion `z <- z rot` is a chain of
/// dependent multiplies; `LANES` chains stepping by `rot^LANES` run side by side (and
/// vectorise), each sample's phasor still the exact recursion's to rounding.
const LANES: usize = 8;

/// Evaluates chirps at fractional range bins.
struct RangeGate {
    window: Vec<f32>,
    fmcw: bool,
    cells: usize,
    /// The windowed chirps of a block, f64 (FMCW), chirp after chirp, shared by every
    /// gate of the block.
    windowed: Vec<f64>,
    /// Their imaginary parts (kept apart from the real ones, so the gate's lanes load as
    /// whole vectors).
    windowed_im: Vec<f64>,
    /// Samples a chirp.
    n: usize,
    /// The CPU has AVX: the FMCW gate runs its AVX build.
    #[cfg(target_arch = "x86_64")]
    avx: bool,
}

impl RangeGate {
    fn new(meta: &RecordingMeta, s: &DetectSettings) -> Self {
        let n = meta.params.samples_per_chirp;
        RangeGate {
            window: s.range_window.coefficients(n),
            fmcw: meta.params.waveform() == Waveform::FmcwBeat,
            cells: meta.params.range_bins(),
            windowed: Vec::new(),
            windowed_im: Vec::new(),
            n,
            #[cfg(target_arch = "x86_64")]
            avx: std::arch::is_x86_feature_detected!("avx"),
        }
    }

    /// Loads the chirps of a block (FMCW: windows them); [`RangeGate::at`] then reads them.
    fn load<'a>(&mut self, chirps: impl Iterator<Item = &'a [Complex32]>) {
        if self.fmcw {
            self.windowed.clear();
            self.windowed_im.clear();
            for chirp in chirps {
                for (x, &w) in chirp.iter().zip(&self.window) {
                    self.windowed.push(x.re as f64 * w as f64);
                    self.windowed_im.push(x.im as f64 * w as f64);
                }
            }
        }
    }

    /// FMCW: sum_n w[n] x[n] exp(-j 2 pi kappa n / N) (the range FFT's bin kappa, for
    /// fractional kappa, phase referred to the chirp's centre) of the loaded chirp; range
    /// profile: the weighted sum of the cells around kappa (`RANGE_PROFILE_REACH`).
    /// `chirp` is the block's chirp `i` (range profiles read it; FMCW reads the loaded
    /// windowed copy).
    fn at(&self, chirp: &[Complex32], i: usize, kappa: f64) -> Complex32 {
        if !self.fmcw {
            let top = (self.cells - 1) as f64;
            let lo = (kappa - RANGE_PROFILE_REACH).ceil().clamp(0.0, top) as usize;
            let hi = (kappa + RANGE_PROFILE_REACH).floor().clamp(0.0, top) as usize;
            let mut acc = Complex32::new(0.0, 0.0);
            for (k, &x) in chirp.iter().enumerate().take(hi + 1).skip(lo) {
                let w = (RANGE_PROFILE_REACH - (k as f64 - kappa).abs()).clamp(0.0, 1.0);
                acc += x * w as f32;
            }
            return acc;
        }
        let (xr, xi) = (
            &self.windowed[i * self.n..(i + 1) * self.n],
            &self.windowed_im[i * self.n..(i + 1) * self.n],
        );
        #[cfg(target_arch = "x86_64")]
        if self.avx {
            // SAFETY: `avx` is set only when the CPU reports AVX (`RangeGate::new`).
            return unsafe { fmcw_gate_avx(xr, xi, kappa) };
        }
        fmcw_gate(xr, xi, kappa)
    }
}

/// The phasors of the FMCW gate's `LANES` chains at the first sample and the rotation
/// of each chain per step (cos, sin of `LANES` times the phase step), for `n` samples at
/// fractional bin `kappa`.
#[inline(always)]
fn gate_phasors(n: usize, kappa: f64) -> ([f64; LANES], [f64; LANES], f64, f64) {
    let n = n as f64;
    let step = -2.0 * std::f64::consts::PI * kappa / n;
    // Index counted from the chirp's centre, so the gate's phase does not depend on how
    // far kappa sits from the scatterer's bin (a symmetric window's transform is real):
    // jitter in the track's range then moves only the amplitude, not the phase.
    let start = -step * (n - 1.0) / 2.0;
    let mut zr = [0.0f64; LANES];
    let mut zi = [0.0f64; LANES];
    let (s1, c1) = step.sin_cos();
    (zi[0], zr[0]) = start.sin_cos();
    for l in 1..LANES {
        zr[l] = zr[l - 1] * c1 - zi[l - 1] * s1;
        zi[l] = zr[l - 1] * s1 + zi[l - 1] * c1;
    }
    // rot^LANES by repeated squaring of rot (LANES is a power of two)
    let (mut cl, mut sl) = (c1, s1);
    let mut p = 1;
    while p < LANES {
        (cl, sl) = (cl * cl - sl * sl, 2.0 * sl * cl);
        p *= 2;
    }
    (zr, zi, cl, sl)
}

/// The last partial block of the gate's sum (fewer than `LANES` samples, one a chain)
/// and the chains summed in order.
#[inline(always)]
fn gate_finish(
    mut ar: [f64; LANES],
    mut ai: [f64; LANES],
    zr: &[f64; LANES],
    zi: &[f64; LANES],
    xr: &[f64],
    xi: &[f64],
) -> Complex32 {
    for (l, (&xr, &xi)) in xr.iter().zip(xi).enumerate() {
        ar[l] += xr * zr[l] - xi * zi[l];
        ai[l] += xr * zi[l] + xi * zr[l];
    }
    Complex32::new(ar.iter().sum::<f64>() as f32, ai.iter().sum::<f64>() as f32)
}

/// The FMCW gate of one windowed chirp (real parts `xr`, imaginary `xi`) at fractional bin
/// `kappa` (see [`RangeGate::at`]).
fn fmcw_gate(xr: &[f64], xi: &[f64], kappa: f64) -> Complex32 {
    let xi = &xi[..xr.len()];
    let (mut zr, mut zi, cl, sl) = gate_phasors(xr.len(), kappa);
    let mut ar = [0.0f64; LANES];
    let mut ai = [0.0f64; LANES];
    let mut br = xr.chunks_exact(LANES);
    let mut bi = xi.chunks_exact(LANES);
    for (b_re, b_im) in (&mut br).zip(&mut bi) {
        for l in 0..LANES {
            let (xr, xi) = (b_re[l], b_im[l]);
            ar[l] += xr * zr[l] - xi * zi[l];
            ai[l] += xr * zi[l] + xi * zr[l];
            let t = zr[l] * cl - zi[l] * sl;
            zi[l] = zr[l] * sl + zi[l] * cl;
            zr[l] = t;
        }
    }
    gate_finish(ar, ai, &zr, &zi, br.remainder(), bi.remainder())
}

/// [`fmcw_gate`] with AVX: the same operations on each chain in the same order, four
/// chains to a register (no fused multiply-add), so the same result to the bit.
///
/// # Safety
/// The CPU must have AVX.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx")]
unsafe fn fmcw_gate_avx(xr: &[f64], xi: &[f64], kappa: f64) -> Complex32 {
    use std::arch::x86_64::{
        _mm256_add_pd, _mm256_loadu_pd, _mm256_mul_pd, _mm256_set1_pd, _mm256_setzero_pd,
        _mm256_storeu_pd, _mm256_sub_pd,
    };
    const _: () = assert!(LANES == 8);
    let xi = &xi[..xr.len()];
    let (zr0, zi0, cl, sl) = gate_phasors(xr.len(), kappa);
    let full = xr.len() / LANES * LANES;
    let (cv, sv) = (_mm256_set1_pd(cl), _mm256_set1_pd(sl));
    let mut zr = [
        _mm256_loadu_pd(zr0[..4].as_ptr()),
        _mm256_loadu_pd(zr0[4..].as_ptr()),
    ];
    let mut zi = [
        _mm256_loadu_pd(zi0[..4].as_ptr()),
        _mm256_loadu_pd(zi0[4..].as_ptr()),
    ];
    let mut ar = [_mm256_setzero_pd(); 2];
    let mut ai = [_mm256_setzero_pd(); 2];
    for (b_re, b_im) in xr[..full]
        .chunks_exact(LANES)
        .zip(xi[..full].chunks_exact(LANES))
    {
        for h in 0..2 {
            let x_r = _mm256_loadu_pd(b_re[4 * h..4 * h + 4].as_ptr());
            let x_i = _mm256_loadu_pd(b_im[4 * h..4 * h + 4].as_ptr());
            // ar += xr zr - xi zi;  ai += xr zi + xi zr;  z <- z rot^LANES
            ar[h] = _mm256_add_pd(
                ar[h],
                _mm256_sub_pd(_mm256_mul_pd(x_r, zr[h]), _mm256_mul_pd(x_i, zi[h])),
            );
            ai[h] = _mm256_add_pd(
                ai[h],
                _mm256_add_pd(_mm256_mul_pd(x_r, zi[h]), _mm256_mul_pd(x_i, zr[h])),
            );
            let t = _mm256_sub_pd(_mm256_mul_pd(zr[h], cv), _mm256_mul_pd(zi[h], sv));
            zi[h] = _mm256_add_pd(_mm256_mul_pd(zr[h], sv), _mm256_mul_pd(zi[h], cv));
            zr[h] = t;
        }
    }
    let mut out = [[0.0f64; LANES]; 4];
    for (h, o) in [ar, ai, zr, zi].iter().zip(out.iter_mut()) {
        _mm256_storeu_pd(o[..4].as_mut_ptr(), h[0]);
        _mm256_storeu_pd(o[4..].as_mut_ptr(), h[1]);
    }
    let [ar, ai, zr, zi] = out;
    gate_finish(ar, ai, &zr, &zi, &xr[full..], &xi[full..])
}

/// Chirp span of a track: its CPIs' centres widened by half a CPI on each side, clipped to
/// the recording, and capped at `max_chirps` around the middle.
pub fn track_span(
    track: &Track,
    meta: &RecordingMeta,
    s: &DetectSettings,
    max_chirps: usize,
) -> (usize, usize) {
    let t = meta.params.chirp_interval_s;
    let half = s.cpi_for(meta.params.chirp_interval_s) as f64 / 2.0;
    let a = ((track.start_s / t) - half).max(0.0) as usize;
    let b = (((track.end_s / t) + half).ceil() as usize).min(meta.chirps);
    let (a, b) = (a.min(b), b);
    if b - a > max_chirps {
        let mid = (a + b) / 2;
        (mid - max_chirps / 2, mid - max_chirps / 2 + max_chirps)
    } else {
        (a, b)
    }
}

/// Fractional range bin of a track at time `t_s`: its range interpolated linearly between
/// CPIs.
fn bin_at(track: &Track, meta: &RecordingMeta, t_s: f64) -> f64 {
    let pts = &track.points;
    let r = if t_s <= pts[0].t_s {
        pts[0].detection.range_m
    } else if t_s >= pts[pts.len() - 1].t_s {
        pts[pts.len() - 1].detection.range_m
    } else {
        let i = pts.partition_point(|p| p.t_s <= t_s);
        let (p0, p1) = (&pts[i - 1], &pts[i]);
        let f = (t_s - p0.t_s) / (p1.t_s - p0.t_s).max(1e-12);
        p0.detection.range_m + f * (p1.detection.range_m - p0.detection.range_m)
    };
    let last = (meta.params.range_bins() - 1) as f64;
    meta.params.bin_of_range(r).clamp(0.0, last)
}

/// Collects the slow-time signal of every track in one streaming pass, handing each to
/// `done(track_index, signal)` as soon as the pass moves past the end of its span, so only
/// the tracks open at the same moment are held in memory, not every track of the recording.
/// Every track is handed over exactly once (an empty signal when its span is empty).
pub fn track_signals(
    meta: &RecordingMeta,
    channel: usize,
    s: &DetectSettings,
    tracks: &[Track],
    max_chirps: usize,
    done: &mut dyn FnMut(usize, TrackSignal) -> Result<()>,
) -> Result<()> {
    let spans: Vec<(usize, usize)> = tracks
        .iter()
        .map(|tr| track_span(tr, meta, s, max_chirps))
        .collect();
    let mut open: Vec<Option<TrackSignal>> = spans
        .iter()
        .map(|&(a, _)| {
            Some(TrackSignal {
                first_chirp: a,
                samples: Vec::new(),
                reference: Vec::new(),
                reference2: Vec::new(),
            })
        })
        .collect();
    // Spans that are empty, or lie beyond what is read, are handed over at the end.
    let first = spans.iter().map(|s| s.0).min().unwrap_or(0);
    let last = spans.iter().map(|s| s.1).max().unwrap_or(0);
    let mut gate = RangeGate::new(meta, s);
    let top_bin = (meta.params.range_bins() - 1) as f64;
    // Reference gates stay where their whole gate fits: a range-profile gate cut short
    // by the profile's edge carries less noise and would read as a quieter reference.
    let (ref_lo, ref_hi) = match meta.params.waveform() {
        Waveform::RangeProfile if top_bin >= 2.0 * RANGE_PROFILE_REACH => {
            (RANGE_PROFILE_REACH, top_bin - RANGE_PROFILE_REACH)
        }
        _ => (0.0, top_bin),
    };
    let mut reader = ChirpReader::open(meta, channel)?;
    reader.seek_chirp(first)?;
    let mut block = ChirpBlock::default();
    let t = meta.params.chirp_interval_s;
    let fold = |k: f64| {
        let k = if k < ref_lo {
            k + 2.0 * REFERENCE_OFFSET_CELLS
        } else if k > ref_hi {
            k - 2.0 * REFERENCE_OFFSET_CELLS
        } else {
            k
        };
        k.clamp(ref_lo, ref_hi)
    };
    // Chirps a block: up to 2048, fewer for long chirps so the windowed copy stays small.
    let per_block = (MAX_WINDOWED_SAMPLES / meta.params.samples_per_chirp.max(1)).clamp(16, 2048);
    let mut m = first;
    let mut ending: Vec<(usize, usize)> = Vec::new();
    while m < last {
        let got = reader.read_block(&mut block, per_block.min(last - m))?;
        if got == 0 {
            break;
        }
        let (b0, b1) = (block.first_chirp, block.first_chirp + got);
        gate.load((0..got).map(|i| block.chirp(i)));
        // Every track open in this block gates its chirps of the block: independent of
        // each other, so spread over the pool's threads (each track's samples in chirp
        // order whatever the number of threads).
        let (gate, block) = (&gate, &block);
        open.par_iter_mut()
            .zip(spans.par_iter())
            .zip(tracks.par_iter())
            .for_each(|((sig, sp), track)| {
                let Some(sig) = sig.as_mut() else {
                    return;
                };
                for chirp in sp.0.max(b0)..sp.1.min(b1) {
                    let i = chirp - b0;
                    let x = block.chirp(i);
                    let kappa = bin_at(track, meta, chirp as f64 * t);
                    let (k1, k2) = (
                        fold(kappa + REFERENCE_OFFSET_CELLS),
                        fold(kappa - REFERENCE_OFFSET_CELLS),
                    );
                    sig.samples.push(gate.at(x, i, kappa));
                    sig.reference.push(gate.at(x, i, k1));
                    sig.reference2.push(gate.at(x, i, k2));
                }
            });
        // Handed over in the order of a chirp-by-chirp pass: by last chirp, then index.
        ending.clear();
        ending.extend(
            spans
                .iter()
                .enumerate()
                .filter(|(j, sp)| sp.1 > b0 && sp.1 <= b1 && sp.0 < sp.1 && open[*j].is_some())
                .map(|(j, sp)| (sp.1, j)),
        );
        ending.sort_unstable();
        for &(_, j) in &ending {
            if let Some(sig) = open[j].take() {
                done(j, sig)?;
            }
        }
        m += got;
    }
    for (j, sig) in open.iter_mut().enumerate() {
        if let Some(sig) = sig.take() {
            done(j, sig)?;
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The gate against the DFT's definition, X(kappa) = sum_n w[n] x[n]
    /// exp(-j 2 pi kappa (n - (N-1)/2) / N) (e.g. Oppenheim & Schafer, *Discrete-Time
    /// Signal Processing*, 3rd ed., 2010, Eq. 8.67, evaluated off the bin grid), summed
    /// term by term with a fresh sine and cosine each.
    #[test]
    fn fmcw_gate_matches_direct_dft() {
        for &n in &[13usize, 64, 250, 256] {
            let window: Vec<f32> = (0..n)
                .map(|i| 0.5 - 0.5 * (2.0 * std::f32::consts::PI * i as f32 / n as f32).cos())
                .collect();
            let mut gate = RangeGate {
                window: window.clone(),
                fmcw: true,
                cells: n,
                windowed: Vec::new(),
                windowed_im: Vec::new(),
                n,
                #[cfg(target_arch = "x86_64")]
                avx: std::arch::is_x86_feature_detected!("avx"),
            };
            let chirp: Vec<Complex32> = (0..n)
                .map(|i| {
                    let a = 0.37 * i as f32 + 0.001 * (i * i) as f32;
                    Complex32::new(a.cos() * 100.0, (1.3 * a).sin() * 80.0)
                })
                .collect();
            gate.load(std::iter::once(&chirp[..]));
            for &kappa in &[0.0, 3.25, 17.8, n as f64 - 0.4] {
                let (mut re, mut im) = (0.0f64, 0.0f64);
                for i in 0..n {
                    let ph =
                        -2.0 * std::f64::consts::PI * kappa * (i as f64 - (n as f64 - 1.0) / 2.0)
                            / n as f64;
                    let (xr, xi) = (
                        chirp[i].re as f64 * window[i] as f64,
                        chirp[i].im as f64 * window[i] as f64,
                    );
                    re += xr * ph.cos() - xi * ph.sin();
                    im += xr * ph.sin() + xi * ph.cos();
                }
                let got = gate.at(&chirp, 0, kappa);
                // the AVX build and the plain one agree to the bit
                let plain = fmcw_gate(&gate.windowed[..n], &gate.windowed_im[..n], kappa);
                assert_eq!(
                    (got.re.to_bits(), got.im.to_bits()),
                    (plain.re.to_bits(), plain.im.to_bits())
                );
                let scale = (re * re + im * im).sqrt().max(1.0);
                let err = ((got.re as f64 - re).powi(2) + (got.im as f64 - im).powi(2)).sqrt();
                assert!(
                    err / scale < 1e-6,
                    "n {n} kappa {kappa}: {got} vs {re}+{im}j"
                );
            }
        }
    }
}
