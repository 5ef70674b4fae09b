//! The physics simulator: turns a scene (TOML, see [`scene`]) into labelled SigMF
//! recordings. Radar equation amplitudes over unit-variance complex white noise, Chen's
//! rotating-blade returns, a flapping-wing bird, Billingsley vegetation clutter, point
//! clutter; chirps are generated block by block so memory is flat in duration.

pub mod bird;
pub mod clutter;
pub mod ground;
pub mod impairments;
pub mod motion;
pub mod noise;
pub mod point;
pub mod radar_eq;
pub mod rotor;
pub mod scene;
pub mod scintillation;
pub mod synth;
pub mod wind;

use std::path::{Path, PathBuf};

use rand_distr::{Distribution, StandardNormal};
use rustfft::num_complex::Complex32;
use serde_json::{json, Map, Value};

pub use scene::{ObjectSpec, RadarSpec, Scene, CI16_SCALE};

use crate::error::{Error, Result};
use crate::recording::{Annotation, RecordingWriter};
use motion::norm;
use synth::{Ctx, Source};

/// Chirps generated and handed to the sink at a time.
pub const BLOCK_CHIRPS: usize = 1024;

/// Random stream numbers of a run (objects use `OBJECT_STREAM + index`).
const NOISE_STREAM: u64 = 1;
const JITTER_STREAM: u64 = 2;
/// The radar's own impairments (drift, leakage, DC offset) draw from streams 3.. .
const IMPAIRMENT_STREAM: u64 = 3;
const OBJECT_STREAM: u64 = 100;

/// Builds the sources of a run's objects.
fn build_sources(scene: &Scene, ctx: &Ctx, seed: u64) -> Vec<Box<dyn Source>> {
    scene
        .objects
        .iter()
        .enumerate()
        .map(|(i, o)| {
            let stream = OBJECT_STREAM + i as u64;
            let mut rng = noise::stream_rng(seed, stream);
            let s: Box<dyn Source> = match o {
                ObjectSpec::Rotorcraft(r) => Box::new(rotor::Rotorcraft::new(r, &mut rng)),
                ObjectSpec::Bird(b) => Box::new(bird::Bird::new(b, rng)),
                ObjectSpec::Stationary(s) => Box::new(point::PointSource::stationary(
                    s,
                    ctx.params.chirp_interval_s,
                    seed,
                    stream,
                )),
                ObjectSpec::Ground(g) => Box::new(ground::Ground::new(g, ctx, seed, stream)),
                ObjectSpec::Swaying(s) => Box::new(point::PointSource::swaying(s, &mut rng)),
                ObjectSpec::Point(p) => Box::new(point::PointSource::point(p, &mut rng)),
                ObjectSpec::Vegetation(v) => {
                    Box::new(clutter::Vegetation::new(v, ctx, seed, stream))
                }
            };
            s
        })
        .collect()
}

/// Simulates one run with `seed`, handing whole chirps to `sink` in blocks of up to
/// [`BLOCK_CHIRPS`] chirps (chirp-major, sample n of chirp m at `m*N + n`, noise units:
/// unit-variance complex white noise, returns of amplitude sqrt(per-sample SNR)).
/// Returns one annotation per annotated object (docs/recording-format.md, "Labels").
/// The same scene and seed give the same samples, bit for bit.
pub fn simulate(
    scene: &Scene,
    seed: u64,
    sink: &mut dyn FnMut(&[Complex32]) -> Result<()>,
) -> Result<Vec<Annotation>> {
    scene.check()?;
    let params = scene.radar.params()?;
    let ctx = Ctx::new(&params, scene.radar.budget(&params));
    let mut sources = build_sources(scene, &ctx, seed);
    let total = scene.chirps()?;
    let annotations = annotate(scene, &ctx, &sources, total);

    let n = params.samples_per_chirp;
    let t_chirp = params.chirp_interval_s;
    let jitter = scene.radar.phase_jitter_rad;
    let mut noise_rng = noise::stream_rng(seed, NOISE_STREAM);
    let mut jitter_rng = noise::stream_rng(seed, JITTER_STREAM);
    let mut radar_self = impairments::Impairments::new(&scene.radar, &ctx, seed, IMPAIRMENT_STREAM);
    let mut buf = vec![Complex32::new(0.0, 0.0); BLOCK_CHIRPS.min(total) * n];
    let mut sig = vec![Complex32::new(0.0, 0.0); n];
    let mut m = 0;
    while m < total {
        let chirps = BLOCK_CHIRPS.min(total - m);
        let block = &mut buf[..chirps * n];
        noise::fill_noise(&mut noise_rng, block);
        for (i, out) in block.chunks_exact_mut(n).enumerate() {
            let t = (m + i) as f64 * t_chirp;
            sig.iter_mut().for_each(|z| *z = Complex32::new(0.0, 0.0));
            for s in sources.iter_mut() {
                s.add(t, &ctx, &mut sig);
            }
            let rot = if jitter > 0.0 {
                let e: f64 = StandardNormal.sample(&mut jitter_rng);
                let (sn, cs) = (e * jitter).sin_cos();
                Complex32::new(cs as f32, sn as f32)
            } else {
                Complex32::new(1.0, 0.0)
            };
            let drift = radar_self.next_drift();
            let rot = rot * Complex32::new(drift.re as f32, drift.im as f32);
            for (o, s) in out.iter_mut().zip(sig.iter()) {
                *o += *s * rot;
            }
            radar_self.add_receiver(drift, out);
        }
        sink(block)?;
        m += chirps;
    }
    Ok(annotations)
}

/// The annotation of each annotated object: the longest stretch of whole chirps while it
/// is present and inside the range coverage; range window over it plus the object's
/// extent; truth with the median radial velocity and hovering (median |v_r| < 0.5 m/s).
fn annotate(
    scene: &Scene,
    ctx: &Ctx,
    sources: &[Box<dyn Source>],
    total: usize,
) -> Vec<Annotation> {
    let t_chirp = ctx.params.chirp_interval_s;
    let mut out = Vec::new();
    for (obj, src) in scene.objects.iter().zip(sources) {
        let Some(label) = obj.annotation_label() else {
            continue;
        };
        let inside = |m: usize| {
            src.kinematics(m as f64 * t_chirp)
                .is_some_and(|(p, _)| ctx.in_coverage(norm(p)))
        };
        let (mut best, mut cur) = ((0usize, 0usize), None::<usize>);
        for m in 0..=total {
            let ins = m < total && inside(m);
            match (ins, cur) {
                (true, None) => cur = Some(m),
                (false, Some(s)) => {
                    if m - s > best.1 - best.0 {
                        best = (s, m);
                    }
                    cur = None;
                }
                _ => {}
            }
        }
        let (m0, m1) = best;
        if m1 <= m0 {
            continue;
        }
        let stride = ((m1 - m0) / 20_000).max(1);
        let (mut rmin, mut rmax) = (f64::INFINITY, f64::NEG_INFINITY);
        let (mut rs, mut vs, mut speeds) = (Vec::new(), Vec::new(), Vec::new());
        for m in m0..m1 {
            if let Some((p, v)) = src.kinematics(m as f64 * t_chirp) {
                let r = norm(p);
                rmin = rmin.min(r);
                rmax = rmax.max(r);
                if (m - m0) % stride == 0 {
                    rs.push(r);
                    vs.push(v);
                    speeds.push(v.abs());
                }
            }
        }
        let ext = src.extent_m();
        let (lo, hi) = match src.fixed_span() {
            Some((a, b)) => (
                a - ctx.params.range_cell_m() / 2.0,
                b + ctx.params.range_cell_m() / 2.0,
            ),
            None => (rmin - ext, rmax + ext),
        };
        let r_med = crate::stats::median_in_place(&mut rs);
        let v_med = crate::stats::median_in_place(&mut vs);
        let s_med = crate::stats::median_in_place(&mut speeds);
        let mid_pos = src
            .kinematics(((m0 + m1) / 2) as f64 * t_chirp)
            .map_or([r_med, 0.0, 0.0], |k| k.0);
        let mut truth = Map::new();
        truth.insert("kind".into(), json!(obj.kind()));
        truth.insert(
            "radial_velocity_mps".into(),
            json!((v_med * 1000.0).round() / 1000.0),
        );
        truth.insert("hovering".into(), json!(s_med < 0.5));
        truth.insert("range_m".into(), json!((r_med * 1000.0).round() / 1000.0));
        for (k, v) in src.truth(ctx, r_med.max(1e-3), mid_pos) {
            truth.insert(k, v);
        }
        out.push(Annotation {
            chirp_start: m0,
            chirp_count: m1 - m0,
            label,
            range_min_m: (lo.max(0.0) * 1000.0).floor() / 1000.0,
            range_max_m: (hi.max(0.0) * 1000.0).ceil() / 1000.0,
            target_id: Some(obj.id().to_string()),
            truth: Some(Value::Object(truth)),
        });
    }
    out
}

/// Simulates every run of the scene file `scene` into `out_dir` (created if needed), one
/// recording `out_dir/NAME.sigmf-{meta,data}` per run; returns the meta paths in run order.
/// Run i uses `seed + i` when `seed` is given, else the run's own seed (see
/// [`Scene::parse_all`]). Integer recordings use the fixed scale [`CI16_SCALE`].
pub fn simulate_scene_file(
    scene: &Path,
    out_dir: &Path,
    seed: Option<u64>,
) -> Result<Vec<PathBuf>> {
    let runs = Scene::load(scene)?;
    std::fs::create_dir_all(out_dir).map_err(|e| Error::io(out_dir, e))?;
    let scene_name = scene
        .file_name()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default();
    let mut metas = Vec::new();
    for (i, run) in runs.iter().enumerate() {
        let run_seed = seed.map_or(run.seed, |s| s.wrapping_add(i as u64));
        let params = run.radar.params()?;
        let (dt, scale) = run.radar.datatype()?;
        let base = out_dir.join(&run.name);
        let mut w = RecordingWriter::create(&base, &params, dt, scale)?;
        let mut clipped = 0u64;
        let lim = if dt == crate::recording::DataType::Ci16Le {
            1.0 / scale
        } else {
            f32::INFINITY
        };
        let anns = simulate(run, run_seed, &mut |b| {
            clipped += b
                .iter()
                .filter(|z| z.re.abs() >= lim || z.im.abs() >= lim)
                .count() as u64;
            w.write_chirps(b)
        })?;
        let mut g = Map::new();
        let desc = run.description.clone().unwrap_or_default();
        g.insert(
            "core:description".into(),
            json!(format!(
                "rotorsift simulation of scene {scene_name}, run {}{}{}",
                run.name,
                if desc.is_empty() { "" } else { ": " },
                desc
            )),
        );
        if let Some(site) = &run.site {
            g.insert("rotorsift:site".into(), json!(site));
        }
        if run.labels_complete {
            g.insert("rotorsift:labels_complete".into(), json!(true));
        }
        g.insert(
            "core:recorder".into(),
            json!(format!("rotorsift {} simulate", crate::VERSION)),
        );
        g.insert("rotorsift:sim_seed".into(), json!(run_seed));
        g.insert("rotorsift:sim_sample_scale".into(), json!(scale));
        g.insert("rotorsift:sim_clipped_samples".into(), json!(clipped));
        metas.push(w.finish(&anns, &g)?);
    }
    Ok(metas)
}
