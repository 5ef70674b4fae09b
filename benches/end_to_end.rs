//! End-to-end benchmark (a plain bench binary, `harness = false`): simulates recordings
//! into a temporary directory — the bench scene `benches/scenes/xband-fmcw-4k.toml` (X-band
//! FMCW, 256 samples a chirp at 4 kHz) at 60 s and 10 min, and one scene of every demo
//! radar at 60 s (`--long`: at 10 min too) — then, each in a child process, times reading
//! alone, detection (pass one), the full path (pass two, features, built-in model), and the
//! bare rustfft cost of the same samples (every chirp's range FFT and both Doppler maps of
//! every CPI, nothing else), and prints the real-time factor, peak resident memory and the
//! share of each stage. Then the cores: the `rotorsift` binary on a folder of recordings
//! with `--jobs 1` and `--jobs 0`. Then the numpy/scipy peer of the front end
//! (`scripts/frontend_peer.py`) on the same 60 s file in the same run, with the ratio, when
//! a Python with numpy and scipy is found (`ROTORSIFT_PEER_PYTHON`, else `python3`).
//!
//! Every measurement runs in a child process (this binary re-executed with `--child`), which
//! reads its peak resident set (`VmHWM` in /proc/self/status) at the end, so the peak of one
//! run is not hidden by a bigger earlier one. Streaming should show as flat memory while
//! time grows linearly with duration.
//!
//! `cargo bench --bench end_to_end` runs every case; `-- --quick` (or
//! `ROTORSIFT_BENCH_QUICK=1`) runs one short case for a smoke test; `-- --long` adds the
//! 10 min recordings of every demo radar.

use std::path::{Path, PathBuf};
use std::process::{Command, ExitCode};
use std::time::Instant;

use rotorsift::pipeline::classify::Classifier;
use rotorsift::pipeline::{analyse, find_tracks, PipelineSettings};
use rotorsift::recording::{ChirpBlock, ChirpReader, RecordingMeta};
use rustfft::num_complex::Complex32;
use rustfft::FftPlanner;

/// The bench scene (relative to the crate root) and its durations, s.
const BENCH_SCENE: &str = "benches/scenes/xband-fmcw-4k.toml";
const BENCH_DURATIONS: &[f64] = &[60.0, 600.0];

/// The demo radars: the first `run-RADAR-NN-*` scene of each is stretched to 60 s.
const DEMO_RADARS: &[&str] = &[
    "k24", "k77", "x94", "x10", "u16", "a35", "w79", "x90", "k24b", "a35f",
];

/// The measured paths: `read` decodes every chirp, `fft` is the bare FFT floor.
const MODES: &[&str] = &["read", "fft", "detect", "full"];

/// Recordings in the folder the core-scaling run classifies.
const FOLDER_COPIES: usize = 4;

/// Prefix of the one result line a child prints on stdout.
const RESULT_TAG: &str = "ROTORSIFT_BENCH_RESULT";

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let result = if let Some(i) = args.iter().position(|a| a == "--child") {
        child(&args[i + 1..])
    } else {
        let quick = args.iter().any(|a| a == "--quick")
            || std::env::var("ROTORSIFT_BENCH_QUICK").is_ok_and(|v| !v.is_empty() && v != "0");
        let long = args.iter().any(|a| a == "--long");
        parent(quick, long)
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

/// Child: `--child MODE META REPS THREADS`. Runs MODE on the recording REPS times on a
/// rayon pool of THREADS threads (1 = one core: the pipeline's parallel parts run on the
/// pool) and prints one line: `RESULT_TAG tracks=T best_s=B mean_s=M hwm_kib=H`.
fn child(args: &[String]) -> BenchResult<()> {
    let [mode, meta_path, reps, threads] = args else {
        return Err(format!("child expects MODE META REPS THREADS, got {args:?}").into());
    };
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads.parse()?)
        .build()?;
    pool.install(|| child_on_pool(mode, meta_path, reps).map_err(|e| e.to_string()))?;
    Ok(())
}

fn child_on_pool(mode: &str, meta_path: &str, reps: &str) -> BenchResult<()> {
    let reps: usize = reps.parse()?;
    let meta = RecordingMeta::open(Path::new(meta_path))?;
    let mut times = Vec::with_capacity(reps);
    let mut tracks = 0usize;
    match mode {
        // Baseline: the process with the recording's metadata open and nothing run.
        "idle" => {}
        "read" => {
            for _ in 0..reps {
                let t0 = Instant::now();
                let mut reader = ChirpReader::open(&meta, 0)?;
                let mut block = ChirpBlock::default();
                let mut sum = 0.0f32;
                loop {
                    let got = reader.read_block(&mut block, 2048)?;
                    if got == 0 {
                        break;
                    }
                    sum += block.chirp(got - 1)[0].re;
                }
                std::hint::black_box(sum);
                times.push(t0.elapsed().as_secs_f64());
            }
        }
        "fft" => {
            let settings = PipelineSettings::default();
            for _ in 0..reps {
                times.push(bare_fft_seconds(&meta, &settings)?);
            }
        }
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

/// Seconds of the bare FFTs on this recording's shape: one range FFT of N points per chirp
/// (FMCW only; range profiles have none) and, per CPI (M chirps, the default hop), two
/// Doppler maps (cancelled and clutter paths) of K cells x M points, in place on buffers
/// of the right size, with plans made once. Reading is not included.
fn bare_fft_seconds(meta: &RecordingMeta, settings: &PipelineSettings) -> BenchResult<f64> {
    let p = &meta.params;
    let (n, k) = (p.samples_per_chirp, p.range_bins());
    let m = settings.detect.cpi_for(p.chirp_interval_s);
    let hop = settings.detect.hop_for(m);
    let fmcw = p.waveform() == rotorsift::recording::Waveform::FmcwBeat;
    let mut planner = FftPlanner::<f32>::new();
    let range = planner.plan_fft_forward(n);
    let doppler = planner.plan_fft_forward(m);
    let mut chirps = vec![Complex32::new(1.0, 0.5); n * 2048];
    let mut map = vec![Complex32::new(1.0, 0.5); k * m];
    let mut scratch = vec![
        Complex32::new(0.0, 0.0);
        range
            .get_inplace_scratch_len()
            .max(doppler.get_inplace_scratch_len())
    ];
    let t0 = Instant::now();
    if fmcw {
        let mut left = meta.chirps;
        while left > 0 {
            let got = left.min(2048);
            range.process_with_scratch(&mut chirps[..got * n], &mut scratch);
            left -= got;
        }
    }
    let cpis = meta.chirps.saturating_sub(m) / hop + 1;
    for _ in 0..2 * cpis {
        doppler.process_with_scratch(&mut map, &mut scratch);
    }
    std::hint::black_box((&chirps[0], &map[0]));
    Ok(t0.elapsed().as_secs_f64())
}

/// What a child reported.
struct Measured {
    tracks: usize,
    best_s: f64,
    hwm_kib: Option<u64>,
}

/// Runs one measurement in a child process of this binary.
fn run_child(mode: &str, meta: &Path, reps: usize, threads: usize) -> BenchResult<Measured> {
    let exe = std::env::current_exe()?;
    let out = Command::new(exe)
        .arg("--child")
        .arg(mode)
        .arg(meta)
        .arg(reps.to_string())
        .arg(threads.to_string())
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
    } else if duration_s <= 8.0 {
        3
    } else {
        1
    }
}

fn mib(kib: Option<u64>) -> String {
    kib.map_or_else(|| "n/a".into(), |k| format!("{:.1}", k as f64 / 1024.0))
}

/// The first demo scene of `radar` (`run-RADAR-NN-*.toml`, lowest NN).
fn demo_scene(scenes: &Path, radar: &str) -> BenchResult<PathBuf> {
    let prefix = format!("run-{radar}-");
    let mut names: Vec<String> = std::fs::read_dir(scenes)?
        .filter_map(|e| e.ok()?.file_name().into_string().ok())
        .filter(|n| {
            n.ends_with(".toml")
                && n.strip_prefix(&prefix)
                    .is_some_and(|r| r.as_bytes().first().is_some_and(u8::is_ascii_digit))
        })
        .collect();
    names.sort();
    let first = names
        .first()
        .ok_or_else(|| format!("no demo scene for radar {radar}"))?;
    Ok(scenes.join(first))
}

/// Wall seconds of the `rotorsift` binary classifying `dir` with `--jobs jobs`.
fn classify_folder(dir: &Path, jobs: usize) -> BenchResult<f64> {
    let t0 = Instant::now();
    let out = Command::new(env!("CARGO_BIN_EXE_rotorsift"))
        .args(["--quiet", "--jobs", &jobs.to_string(), "classify"])
        .arg(dir)
        .output()?;
    if !out.status.success() {
        return Err(format!("classify failed: {}", String::from_utf8_lossy(&out.stderr)).into());
    }
    Ok(t0.elapsed().as_secs_f64())
}

/// The peer's seconds on `meta`, or why it did not run.
fn run_peer(meta: &Path) -> std::result::Result<f64, String> {
    let python = std::env::var("ROTORSIFT_PEER_PYTHON").unwrap_or_else(|_| "python3".into());
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("scripts/frontend_peer.py");
    let out = Command::new(&python)
        .arg(&script)
        .arg(meta)
        .output()
        .map_err(|e| format!("{python}: {e}"))?;
    if !out.status.success() {
        let err = String::from_utf8_lossy(&out.stderr);
        return Err(format!(
            "{python} {}: {}",
            script.display(),
            err.lines().last().unwrap_or("failed")
        ));
    }
    let text = String::from_utf8_lossy(&out.stdout);
    text.lines()
        .find_map(|l| l.strip_prefix("PEER seconds="))
        .and_then(|v| v.split_whitespace().next()?.parse().ok())
        .ok_or_else(|| format!("the peer printed no result: {text}"))
}

fn parent(quick: bool, long: bool) -> BenchResult<()> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let scenes = root.join("labelled-demo/scenes");
    let tmp = tempfile::tempdir()?;
    let mut cases: Vec<(String, PathBuf, f64)> = Vec::new();
    if quick {
        cases.push(("xband-4k".into(), root.join(BENCH_SCENE), 2.0));
    } else {
        for &d in BENCH_DURATIONS {
            cases.push(("xband-4k".into(), root.join(BENCH_SCENE), d));
        }
        for radar in DEMO_RADARS {
            let scene = demo_scene(&scenes, radar)?;
            cases.push((radar.to_string(), scene.clone(), 60.0));
            if long {
                cases.push((radar.to_string(), scene, 600.0));
            }
        }
    }

    eprintln!(
        "end_to_end: simulating recordings into {}",
        tmp.path().display()
    );
    let mut recordings = Vec::new();
    for (radar, scene, d) in &cases {
        let t0 = Instant::now();
        let meta_path = make_recording(scene, *d, tmp.path())?;
        let meta = RecordingMeta::open(&meta_path)?;
        eprintln!(
            "end_to_end: {radar} {d} s simulated in {:.1} s",
            t0.elapsed().as_secs_f64()
        );
        recordings.push((radar.clone(), *d, meta_path, meta));
    }

    let idle = run_child("idle", &recordings[0].2, 0, 1)?;
    println!();
    println!(
        "Baseline peak RSS of a child that only opens a recording: {} MiB",
        mib(idle.hwm_kib)
    );
    println!();
    println!(
        "One core unless said (each path in its own process; RTF = recording duration / time):"
    );
    println!(
        "{:<9} {:>4} {:>4} {:>7} {:>5} {:>7} {:>7} {:>7} {:>7} {:>7} {:>6} {:>6} {:>6} {:>6} {:>6} {:>8}",
        "radar",
        "wave",
        "N",
        "PRF Hz",
        "dur s",
        "Msamp/s",
        "RTF",
        "RTF all",
        "RTF det",
        "tracks",
        "read%",
        "pass1%",
        "rest%",
        "fft%",
        "x fft",
        "peak MiB"
    );
    let cores = std::thread::available_parallelism().map_or(1, |n| n.get());
    let mut xband_60: Option<(PathBuf, f64, f64)> = None;
    for (radar, d, meta_path, meta) in &recordings {
        let samples = (meta.chirps * meta.params.samples_per_chirp * meta.num_channels) as f64;
        let reps = reps_for(*d, quick);
        let mut got = std::collections::BTreeMap::new();
        for mode in MODES {
            got.insert(*mode, run_child(mode, meta_path, reps, 1)?);
        }
        let all_cores = run_child("full", meta_path, reps, cores)?;
        let (read, fft, det, full) = (&got["read"], &got["fft"], &got["detect"], &got["full"]);
        let dur = meta.duration_s();
        let share = |x: f64| 100.0 * x / full.best_s;
        let wave = match meta.params.waveform() {
            rotorsift::recording::Waveform::FmcwBeat => "fmcw",
            rotorsift::recording::Waveform::RangeProfile => "prof",
        };
        println!(
            "{:<9} {:>4} {:>4} {:>7.0} {:>5.0} {:>7.2} {:>7.1} {:>7.1} {:>7.1} {:>7} {:>6.1} {:>6.1} {:>6.1} {:>6.1} {:>6.1} {:>8}",
            radar,
            wave,
            meta.params.samples_per_chirp,
            meta.params.prf_hz(),
            dur,
            samples / full.best_s / 1e6,
            dur / full.best_s,
            dur / all_cores.best_s,
            dur / det.best_s,
            full.tracks,
            share(read.best_s),
            share((det.best_s - read.best_s).max(0.0)),
            share((full.best_s - det.best_s).max(0.0)),
            share(fft.best_s),
            full.best_s / fft.best_s.max(1e-9),
            mib(full.hwm_kib.max(det.hwm_kib))
        );
        if radar == "xband-4k" && (*d - 60.0).abs() < 1e-9 || quick && xband_60.is_none() {
            xband_60 = Some((meta_path.clone(), det.best_s, full.best_s));
        }
    }
    println!();
    println!(
        "RTF: full path (pass one, pass two, features, built-in model); RTF all: the same on \
         every core (one recording); RTF det: pass one \
         alone; read%: decoding the samples; pass1%: detection past reading; rest%: pass \
         two, features and model; fft%: the bare rustfft cost of the same samples (range \
         FFT of every chirp, two Doppler maps a CPI) as a share of the full path, and x fft \
         the full path over it; peak MiB: the larger VmHWM of the detect and full children."
    );

    if let Some((meta_path, det_s, full_s)) = xband_60 {
        // Core scaling: a folder of copies (hard links) of the recording.
        let folder = tmp.path().join("folder");
        std::fs::create_dir_all(&folder)?;
        let data = meta_path.with_extension("sigmf-data");
        for i in 0..FOLDER_COPIES {
            let stem = format!("copy{i}");
            std::fs::copy(&meta_path, folder.join(format!("{stem}.sigmf-meta")))?;
            let target = folder.join(format!("{stem}.sigmf-data"));
            if std::fs::hard_link(&data, &target).is_err() {
                std::fs::copy(&data, &target)?;
            }
        }
        let one = classify_folder(&folder, 1)?;
        let all = classify_folder(&folder, 0)?;
        println!();
        println!(
            "Cores: `rotorsift classify` on {FOLDER_COPIES} copies of {}: --jobs 1 {one:.2} s, \
             --jobs 0 ({cores} cores) {all:.2} s: {:.2}x",
            meta_path.file_name().unwrap_or_default().to_string_lossy(),
            one / all
        );
        println!();
        match run_peer(&meta_path) {
            Ok(peer_s) => println!(
                "Peer: numpy/scipy front end (scripts/frontend_peer.py: range FFT, three-pulse \
                 canceller, range-Doppler maps, CA-CFAR) {peer_s:.2} s; rotorsift pass one \
                 {det_s:.2} s ({:.2}x the peer's throughput), full path {full_s:.2} s \
                 ({:.2}x)",
                peer_s / det_s,
                peer_s / full_s
            ),
            Err(why) => println!("Peer: not run ({why})"),
        }
    }
    Ok(())
}
