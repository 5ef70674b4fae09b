//! Helpers of the command-line tests: running the binary, writing small scenes into a
//! temporary directory, simulating them, and checking the one-line error convention of
//! docs/output-format.md ("errors go to stderr with a non-zero exit status and never as a panic").

#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::Output;

use assert_cmd::Command;
use serde_json::Value;

/// Speed of light in vacuum, m/s (exact by the SI definition of the metre).
pub const C: f64 = 299_792_458.0;

/// The 24 GHz FMCW radar of the small test scenes (the radar of
/// labelled-demo/scenes/EXAMPLE.toml): fc, N, T, fs, B, Tc.
pub const K24_FC: f64 = 24.0e9;
pub const K24_N: usize = 64;
pub const K24_T: f64 = 50e-6;
pub const K24_FS: f64 = 2.0e6;
pub const K24_B: f64 = 100e6;
pub const K24_TC: f64 = 32e-6;

/// The X-band range-profile radar of the demo scenes (run-x94-*): fc, N, T, cell, start.
pub const X94_FC: f64 = 9.4e9;
pub const X94_N: usize = 64;
pub const X94_T: f64 = 1e-4;
pub const X94_CELL: f64 = 3.0;
pub const X94_START: f64 = 30.0;

/// The `[radar]` table of the 24 GHz FMCW radar, with the given datatype.
pub fn k24_radar(datatype: &str) -> String {
    format!(
        "[radar]\n\
         waveform = \"fmcw-beat\"\n\
         carrier_hz = {K24_FC:e}\n\
         samples_per_chirp = {K24_N}\n\
         chirp_interval_s = {K24_T:e}\n\
         sample_rate_hz = {K24_FS:e}\n\
         sweep_bandwidth_hz = {K24_B:e}\n\
         sweep_duration_s = {K24_TC:e}\n\
         transmit_power_w = 0.1\n\
         tx_gain_dbi = 20.0\n\
         rx_gain_dbi = 20.0\n\
         noise_figure_db = 8.0\n\
         losses_db = 2.0\n\
         datatype = \"{datatype}\"\n\n"
    )
}

/// The `[radar]` table of the X-band range-profile radar.
pub fn x94_radar() -> String {
    format!(
        "[radar]\n\
         waveform = \"range-profile\"\n\
         carrier_hz = {X94_FC:e}\n\
         samples_per_chirp = {X94_N}\n\
         chirp_interval_s = {X94_T:e}\n\
         range_cell_m = {X94_CELL:?}\n\
         range_start_m = {X94_START:?}\n\
         transmit_power_w = 2.0\n\
         tx_gain_dbi = 28.0\n\
         rx_gain_dbi = 28.0\n\
         noise_figure_db = 4.0\n\
         losses_db = 3.0\n\
         datatype = \"ci16_le\"\n\n"
    )
}

/// A 4-rotor, 2-blade rotorcraft object table (`table` = "object" or "run.object") on
/// the given motion (an inline TOML table).
pub fn rotorcraft(table: &str, id: &str, rate_hz: f64, motion: &str) -> String {
    format!(
        "[[{table}]]\n\
         kind = \"rotorcraft\"\n\
         id = \"{id}\"\n\
         rotors = 4\n\
         blades = 2\n\
         blade_length_m = 0.12\n\
         rotor_rate_hz = {rate_hz:?}\n\
         body_rcs_dbsm = -12.0\n\
         blade_rcs_dbsm = -18.0\n\
         motion = {motion}\n\n"
    )
}

/// The binary under test.
pub fn bin() -> Command {
    Command::cargo_bin("rotorsift").expect("the rotorsift binary is built")
}

/// Runs the binary with `args` in `dir` and returns its output (never fails by itself).
pub fn run_in(dir: &Path, args: &[&str]) -> Output {
    bin()
        .current_dir(dir)
        .args(args)
        .output()
        .expect("run rotorsift")
}

/// Runs the binary with `args` (paths absolute or relative to the test's cwd).
pub fn run(args: &[&str]) -> Output {
    bin().args(args).output().expect("run rotorsift")
}

pub fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

pub fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// Asserts a successful run and returns stdout.
pub fn ok(o: &Output) -> String {
    assert!(
        o.status.success(),
        "expected success, got {:?}\nstdout:\n{}\nstderr:\n{}",
        o.status.code(),
        stdout(o),
        stderr(o)
    );
    stdout(o)
}

/// Asserts a successful run and parses stdout as JSON.
pub fn ok_json(o: &Output) -> Value {
    let text = ok(o);
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("stdout is not JSON ({e}):\n{text}"))
}

/// Asserts that stderr holds no panic text (Rust's panic handler prints "panicked" and a
/// hint naming RUST_BACKTRACE).
pub fn assert_no_panic(o: &Output) {
    let err = stderr(o);
    assert!(
        !err.contains("panicked") && !err.contains("RUST_BACKTRACE"),
        "panic text on stderr:\n{err}"
    );
}

/// Asserts exit status `code` and that stderr is exactly one line
/// `rotorsift: error: ...` containing every one of `needles`; returns that line.
pub fn assert_one_error(o: &Output, code: i32, needles: &[&str]) -> String {
    assert_no_panic(o);
    let err = stderr(o);
    assert_eq!(
        o.status.code(),
        Some(code),
        "exit status; stderr:\n{err}\nstdout:\n{}",
        stdout(o)
    );
    let lines: Vec<&str> = err.lines().collect();
    assert_eq!(lines.len(), 1, "expected one stderr line, got:\n{err}");
    let line = lines[0];
    assert!(
        line.starts_with("rotorsift: error:"),
        "stderr line does not start with `rotorsift: error:`: {line}"
    );
    for n in needles {
        assert!(line.contains(n), "stderr line lacks {n:?}: {line}");
    }
    line.to_string()
}

/// Writes `text` to `dir/file` and returns the path.
pub fn write(dir: &Path, file: &str, text: &str) -> PathBuf {
    let p = dir.join(file);
    std::fs::write(&p, text).expect("write test file");
    p
}

/// Writes the scene `text` as `dir/NAME.toml`, simulates it into `dir/out_dir` (with
/// `--seed` if given) and returns the `.sigmf-meta` paths the tool printed.
pub fn simulate(
    dir: &Path,
    name: &str,
    text: &str,
    out_dir: &str,
    seed: Option<u64>,
) -> Vec<PathBuf> {
    let scene = write(dir, &format!("{name}.toml"), text);
    let out = dir.join(out_dir);
    let seed_s = seed.map(|s| s.to_string());
    let mut args = vec![
        "simulate",
        "--scene",
        scene.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ];
    if let Some(s) = &seed_s {
        args.push("--seed");
        args.push(s);
    }
    let o = run(&args);
    let text = ok(&o);
    let metas: Vec<PathBuf> = text.lines().map(PathBuf::from).collect();
    assert!(!metas.is_empty(), "simulate printed no recordings");
    for m in &metas {
        assert!(
            m.exists(),
            "simulate printed {} which does not exist",
            m.display()
        );
    }
    metas
}

/// The `.sigmf-data` path beside a `.sigmf-meta` path.
pub fn data_of(meta: &Path) -> PathBuf {
    meta.with_extension("sigmf-data")
}

/// Parses a recording's `.sigmf-meta`.
pub fn read_meta(meta: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(meta).expect("read meta")).expect("meta JSON")
}

/// `v[key]` as f64, with a message naming the key.
pub fn num(v: &Value, key: &str) -> f64 {
    v.get(key)
        .and_then(Value::as_f64)
        .unwrap_or_else(|| panic!("{key} is not a number in {v}"))
}

/// Asserts `|a - b| <= tol`.
pub fn assert_close(what: &str, a: f64, b: f64, tol: f64) {
    assert!(
        (a - b).abs() <= tol,
        "{what}: got {a}, expected {b} (tolerance {tol})"
    );
}
