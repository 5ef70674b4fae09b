//! End-to-end benchmark (a plain bench binary, `harness = false`): simulates recordings of
//! the three demo radars at several durations into a temporary directory, then times
//! detection alone and the full path (features + built-in model) on each, and prints wall
//! time, samples per second, real-time factor and each run's own peak resident memory.
//!
//! Every measurement runs in a child process (this binary re-executed with `--child`), which
//! reads its peak resident set (`VmHWM` in /proc/self/status) at the end, so the peak of one
//! run is not hidden by a bigger earlier one. Streaming should show as flat memory while
//! time grows linearly with duration.
//!
//! `cargo bench --bench end_to_end` runs every case; `-- --quick` (or
//! `ROTORSIFT_BENCH_QUICK=1`) runs one short case for CI smoke use.

use std::path::{Path, PathBuf};
use std::process::{Command, ExitCode};
use std::time::Instant;

use rotorsift::pipeline::classify::Classifier;
use rotorsift::pipeline::{analyse, find_tracks, PipelineSettings};
use rotorsift::recording::RecordingMeta;

/// One demo scene per radar (hovering rotorcraft, a bird, clutter) and the durations, s,
/// it is rewritten to.
const CASES: &[(&str, &str, &[f64])] = &[
    ("k24", "run-k24-28-mixed.toml", &[2.0, 8.0, 32.0]),
    ("k77", "run-k77-16-mixed.toml", &[2.0, 8.0]),
    ("x94", "run-x94-28-mixed.toml", &[2.0, 8.0, 32.0]),
];

/// The measured paths.
const MODES: &[&str] = &["detect", "full"];

/// Prefix of the one result line a child prints on stdout.
const RESULT_TAG: &str = "ROTORSIFT_BENCH_RESULT";

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let result = if let Some(i) = args.iter().position(|a| a == "--child") {
        child(&args[i + 1..])
    } else {
        let quick = args.iter().any(|a| a == "--quick")
            || std::env::var("ROTORSIFT_BENCH_QUICK").is_ok_and(|v| !v.is_empty() && v != "0");
        parent(quick)
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("end_to_end: error: {e}");
            ExitCode::FAILURE
        }
    }
}

type BenchResult<T> = Result<T, Box<dyn std::error::Error>>;

/// Peak resident set of this process so far, KiB (`VmHWM`); `None` where /proc is missing.
fn peak_rss_kib() -> Option<u64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    status
        .lines()
        .find_map(|l| l.strip_prefix("VmHWM:"))
        .and_then(|v| v.trim().trim_end_matches("kB").trim().parse().ok())
}

/// Child: `--child MODE META REPS`. Runs MODE on the recording REPS times and prints one
/// line: `RESULT_TAG tracks=T best_s=B mean_s=M hwm_kib=H`.
fn child(args: &[String]) -> BenchResult<()> {
    let [mode, meta_path, reps] = args else {
        return Err(format!("child expects MODE META REPS, got {args:?}").into());
    };
    let reps: usize = reps.parse()?;
    let meta = RecordingMeta::open(Path::new(meta_path))?;
    let mut times = Vec::with_capacity(reps);
    let mut tracks = 0usize;
    match mode.as_str() {
        // Baseline: the process with the recording's metadata open and nothing run.
        "idle" => {}
        "detect" => {
            let settings = PipelineSettings::default();
            for _ in 0..reps {
                let t0 = Instant::now();
                let run = find_tracks(&meta, 0, &settings.detect)?;
                times.push(t0.elapsed().as_secs_f64());
                tracks = run.tracks.len();
            }
        }
        "full" => {
            let clf = Classifier::load(None)?;
            for _ in 0..reps {
                let t0 = Instant::now();
                let a = analyse(&meta, 0, &clf.settings, true)?;
                let mut labelled = 0usize;
                for t in &a.tracks {
                    let p = clf.predict(&t.features, 0.0)?;
                    labelled += usize::from(!p.label.is_empty());
                }
                times.push(t0.elapsed().as_secs_f64());
                tracks = labelled;
            }
        }
        other => return Err(format!("unknown child mode {other:?}").into()),
    }
    let best = times.iter().cloned().fold(f64::INFINITY, f64::min);
    let mean = times.iter().sum::<f64>() / times.len().max(1) as f64;
    let hwm = peak_rss_kib().map_or(-1, |v| v as i64);
    println!("{RESULT_TAG} tracks={tracks} best_s={best} mean_s={mean} hwm_kib={hwm}");
    Ok(())
}

/// What a child reported.
struct Measured {
    tracks: usize,
    best_s: f64,
    mean_s: f64,
    hwm_kib: Option<u64>,
}

/// Runs one measurement in a child process of this binary.
fn run_child(mode: &str, meta: &Path, reps: usize) -> BenchResult<Measured> {
    let exe = std::env::current_exe()?;
    let out = Command::new(exe)
        .arg("--child")
        .arg(mode)
        .arg(meta)
        .arg(reps.to_string())
        .output()?;
    if !out.status.success() {
        return Err(format!(
            "child {mode} on {} failed: {}",
            meta.display(),
            String::from_utf8_lossy(&out.stderr)
        )
        .into());
    }
    let stdout = String::from_utf8_lossy(&out.stdout);
    let line = stdout
        .lines()
        .find_map(|l| l.strip_prefix(RESULT_TAG))
        .ok_or_else(|| format!("child {mode} printed no result line: {stdout}"))?;
    let field = |key: &str| -> BenchResult<&str> {
        line.split_whitespace()
            .find_map(|kv| kv.strip_prefix(key).and_then(|v| v.strip_prefix('=')))
            .ok_or_else(|| format!("child result lacks {key}: {line}").into())
    };
    let hwm: i64 = field("hwm_kib")?.parse()?;
    Ok(Measured {
        tracks: field("tracks")?.parse()?,
        best_s: field("best_s")?.parse()?,
        mean_s: field("mean_s")?.parse()?,
        hwm_kib: u64::try_from(hwm).ok(),
    })
}

/// Writes the scene `scene` with its duration set to `duration_s` and its name suffixed,
/// simulates it into `dir` and returns the meta path.
fn make_recording(scene: &Path, duration_s: f64, dir: &Path) -> BenchResult<PathBuf> {
    let text = std::fs::read_to_string(scene)?;
    let mut table: toml::Table = text.parse()?;
    let name = table
        .get("name")
        .and_then(|v| v.as_str())
        .ok_or("scene lacks a top-level name")?
        .to_string();
    let name = format!("{name}-{duration_s}s");
    table.insert("name".into(), toml::Value::String(name.clone()));
    table.insert("duration_s".into(), toml::Value::Float(duration_s));
    let scene_path = dir.join(format!("{name}.toml"));
    std::fs::write(&scene_path, toml::to_string(&table)?)?;
    let metas = rotorsift::simulate::simulate_scene_file(&scene_path, dir, None)?;
    metas
        .into_iter()
        .next()
        .ok_or_else(|| "the scene gave no recording".into())
}

/// Repetitions for a recording of `duration_s`: more for short ones, so each case costs
/// about the same.
fn reps_for(duration_s: f64, quick: bool) -> usize {
    if quick {
        1
    } else if duration_s <= 2.0 {
        5
    } else if duration_s <= 8.0 {
        3
    } else {
        2
    }
}

fn mib(kib: Option<u64>) -> String {
    kib.map_or_else(|| "n/a".into(), |k| format!("{:.1}", k as f64 / 1024.0))
}

fn parent(quick: bool) -> BenchResult<()> {
    let scenes = Path::new(env!("CARGO_MANIFEST_DIR")).join("labelled-demo/scenes");
    let tmp = tempfile::tempdir()?;
    let cases: Vec<(&str, &str, Vec<f64>)> = if quick {
        vec![("k24", CASES[0].1, vec![2.0])]
    } else {
        CASES.iter().map(|(r, s, d)| (*r, *s, d.to_vec())).collect()
    };

    eprintln!(
        "end_to_end: simulating recordings into {}",
        tmp.path().display()
    );
    let mut recordings = Vec::new();
    for (radar, scene, durations) in &cases {
        for &d in durations {
            let t0 = Instant::now();
            let meta_path = make_recording(&scenes.join(scene), d, tmp.path())?;
            let meta = RecordingMeta::open(&meta_path)?;
            let bytes = std::fs::metadata(&meta.data_path)?.len();
            eprintln!(
                "end_to_end: {radar} {d} s simulated in {:.1} s",
                t0.elapsed().as_secs_f64()
            );
            recordings.push((*radar, *scene, d, meta_path, meta, bytes));
        }
    }

    println!();
    println!("Recordings (one channel, ci16_le):");
    println!(
        "{:<6} {:<22} {:>8} {:>12} {:>10} {:>12}",
        "radar", "scene", "dur s", "chirps", "N", "file MiB"
    );
    for (radar, scene, d, _, meta, bytes) in &recordings {
        println!(
            "{:<6} {:<22} {:>8.1} {:>12} {:>10} {:>12.1}",
            radar,
            scene.trim_end_matches(".toml"),
            d,
            meta.chirps,
            meta.params.samples_per_chirp,
            *bytes as f64 / (1024.0 * 1024.0)
        );
    }

    let idle = run_child("idle", &recordings[0].3, 0)?;
    println!();
    println!(
        "Baseline peak RSS of a child that only opens a recording: {} MiB",
        mib(idle.hwm_kib)
    );
    println!();
    println!(
        "{:<6} {:<7} {:>6} {:>11} {:>7} {:>5} {:>9} {:>9} {:>10} {:>8} {:>9}",
        "radar",
        "path",
        "dur s",
        "samples",
        "tracks",
        "reps",
        "best s",
        "mean s",
        "Msamp/s",
        "RTF",
        "peak MiB"
    );
    for (radar, _, d, meta_path, meta, _) in &recordings {
        let samples = (meta.chirps * meta.params.samples_per_chirp * meta.num_channels) as f64;
        let reps = reps_for(*d, quick);
        for mode in MODES {
            let m = run_child(mode, meta_path, reps)?;
            println!(
                "{:<6} {:<7} {:>6.1} {:>11} {:>7} {:>5} {:>9.3} {:>9.3} {:>10.2} {:>8.1} {:>9}",
                radar,
                mode,
                meta.duration_s(),
                samples as u64,
                m.tracks,
                reps,
                m.best_s,
                m.mean_s,
                samples / m.best_s / 1e6,
                meta.duration_s() / m.best_s,
                mib(m.hwm_kib)
            );
        }
    }
    println!();
    println!(
        "samples: complex samples in the recording; Msamp/s and RTF (recording duration / \
         processing time) from the best repetition; peak MiB: VmHWM of the child process \
         that ran the repetitions; detect = find_tracks; full = analyse with features + \
         built-in model on every track."
    );
    Ok(())
}
