//! Integration tests of the `rotorsift` binary as a new user meets it: help and version,
//! errors on missing and malformed inputs, usage errors, the simulator's determinism, and
//! the JSON layouts of `info`, `detect`, `classify` and `evaluate` from
//! docs/recording-format.md and docs/output-format.md (the outside contract). Every recording is generated at test
//! time by `rotorsift simulate` from a small scene written into a temporary directory.
//!
//! Sources of the expected values are named beside each check:
//! - Richards, "Fundamentals of Radar Signal Processing", 2nd ed., 2014: FMCW beat
//!   frequency f_b = 2 S R / c, hence range of bin k = k c fs / (2 S N) (Sec. 4.6 / Eq. 4.x,
//!   from memory); Doppler f_D = 2 v / lambda and unambiguous radial speed lambda / (4 T)
//!   for complex slow-time samples at 1/T (Ch. 8, from memory).
//! - Chen, "The Micro-Doppler Effect in Radar", 2011: a rotor with an even number N of
//!   blades flashes N times per revolution (Ch. 4).
//! - SigMF specification v1.x (open standard): `cf32_le` is 8 bytes per complex sample.
//! - Precision, recall, F1 = 2 P R / (P + R), support = true count: van Rijsbergen,
//!   "Information Retrieval", 1979; the same definitions as scikit-learn's
//!   `classification_report` (common practice).

mod common;

use std::path::Path;

use common::*;
use serde_json::Value;

const SUBCOMMANDS: [&str; 9] = [
    "info", "simulate", "detect", "features", "train", "classify", "evaluate", "audit", "plot",
];

// ---------------------------------------------------------------------------------------
// 1. Help and version
// ---------------------------------------------------------------------------------------

/// `--help` of the binary names every subcommand; each subcommand's `--help` exits 0 and
/// names its key options (docs/output-format.md: "Every subcommand has `--help`").
#[test]
fn help_names_subcommands_and_their_key_options() {
    let top = ok(&run(&["--help"]));
    for s in SUBCOMMANDS {
        assert!(
            top.contains(s),
            "top-level --help lacks subcommand {s}:\n{top}"
        );
    }
    let key_options: [(&str, &[&str]); 9] = [
        ("info", &["--format"]),
        ("simulate", &["--scene", "--out", "--seed"]),
        (
            "detect",
            &[
                "--format",
                "--canceller",
                "--cfar",
                "--pfa",
                "--cpi",
                "--channel",
            ],
        ),
        ("features", &["--out", "--list", "--canceller"]),
        (
            "train",
            &[
                "--model",
                "--holdout-fraction",
                "--seed",
                "--trees",
                "--unlabelled-as",
            ],
        ),
        ("classify", &["--model", "--min-confidence", "--format"]),
        ("evaluate", &["--model", "--min-confidence", "--format"]),
        ("audit", &["--model", "--out", "--low-confidence"]),
        (
            "plot",
            &[
                "--kind",
                "--track",
                "--out",
                "--velocity-span",
                "--cadence-max",
            ],
        ),
    ];
    for (sub, opts) in key_options {
        let o = run(&[sub, "--help"]);
        assert_no_panic(&o);
        let text = ok(&o);
        assert!(
            text.contains("Usage:"),
            "{sub} --help has no usage line:\n{text}"
        );
        for opt in opts {
            assert!(text.contains(opt), "{sub} --help lacks {opt}:\n{text}");
        }
    }
    // `help SUB` is the same as `SUB --help`.
    assert!(ok(&run(&["help", "detect"])).contains("--canceller"));
}

/// `--version` prints the crate version (Cargo.toml), the same one written as
/// `tool_version` into JSON output.
#[test]
fn version_prints_crate_version() {
    let text = ok(&run(&["--version"]));
    assert_eq!(
        text.trim(),
        format!("rotorsift {}", env!("CARGO_PKG_VERSION"))
    );
}

// ---------------------------------------------------------------------------------------
// 2. Wrong paths
// ---------------------------------------------------------------------------------------

/// A path that does not exist: exit 1, one error line naming it, nothing on stdout.
#[test]
fn missing_path_is_one_error_line_and_exit_1() {
    for sub in ["info", "detect", "features", "classify"] {
        let mut args = vec![sub, "/no/such"];
        if sub == "features" {
            args.extend(["--out", "/tmp/rotorsift-never-written.csv"]);
        }
        let o = run(&args);
        assert_one_error(&o, 1, &["/no/such"]);
        assert!(
            o.stdout.is_empty(),
            "{sub}: stdout not empty: {}",
            stdout(&o)
        );
    }
    assert!(!Path::new("/tmp/rotorsift-never-written.csv").exists());
}

// ---------------------------------------------------------------------------------------
// 3. Malformed recordings
// ---------------------------------------------------------------------------------------

/// A 0.8 s scene: one receding rotorcraft (the detect test's target) on the 24 GHz radar.
fn small_scene(name: &str) -> String {
    format!(
        "name = \"{name}\"\nduration_s = 0.8\nseed = 3\n\n{}{}",
        k24_radar("ci16_le"),
        rotorcraft(
            "object",
            "quad-1",
            80.0,
            "{ type = \"linear\", start = [40.0, 0.0, 0.0], velocity = [6.0, 0.0, 0.0] }"
        )
    )
}

/// Writes `dir/NAME.sigmf-meta` + `.sigmf-data` as copies of `good`, with the meta text
/// transformed by `meta` and the data bytes by `data`.
fn corrupt_copy(
    good: &Path,
    dir: &Path,
    name: &str,
    meta: impl Fn(String) -> String,
    data: impl Fn(Vec<u8>) -> Vec<u8>,
) -> std::path::PathBuf {
    let m = std::fs::read_to_string(good).unwrap();
    let d = std::fs::read(data_of(good)).unwrap();
    let out = dir.join(format!("{name}.sigmf-meta"));
    std::fs::write(&out, meta(m)).unwrap();
    std::fs::write(data_of(&out), data(d)).unwrap();
    out
}

/// Each corruption is refused by `info` and `detect` with one line naming the recording
/// and what is wrong, exit 1; in a batch with a good recording the good one is still
/// reported on stdout and the exit status is 1 (docs/recording-format.md: datatypes other than the
/// listed ones "refused with a clear message"; the extension "must" be present;
/// `total_samples = M * N`).
#[test]
fn malformed_recordings_are_refused_one_line_each() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let good = simulate(dir, "good", &small_scene("good"), "runs", None).remove(0);
    let bad = dir.join("bad");
    std::fs::create_dir(&bad).unwrap();
    let id = |s: String| s;
    let same = |d: Vec<u8>| d;

    // Truncated mid-sample (ci16_le: 4 bytes per complex sample, SigMF spec).
    let trunc = corrupt_copy(&good, &bad, "trunc", id, |mut d| {
        d.truncate(d.len() - 3);
        d
    });
    // Truncated by one whole sample: no longer M * N samples (docs/recording-format.md).
    let trunc_chirp = corrupt_copy(&good, &bad, "trunc-chirp", id, |mut d| {
        d.truncate(d.len() - 4);
        d
    });
    let dtype = corrupt_copy(
        &good,
        &bad,
        "dtype",
        |m| {
            assert!(m.contains("\"ci16_le\""));
            m.replace("\"ci16_le\"", "\"cu12_xx\"")
        },
        same,
    );
    let noext = corrupt_copy(
        &good,
        &bad,
        "noext",
        |m| {
            let mut v: Value = serde_json::from_str(&m).unwrap();
            v["global"]["core:extensions"] = Value::Array(vec![]);
            v.to_string()
        },
        same,
    );
    let nojson = corrupt_copy(&good, &bad, "nojson", |_| "this is { not JSON".into(), same);

    let cases: [(&Path, &[&str]); 5] = [
        (&trunc, &["trunc.sigmf-", "data"]),
        (&trunc_chirp, &["trunc-chirp.sigmf-", "chirp"]),
        (&dtype, &["dtype.sigmf-", "cu12_xx"]),
        (&noext, &["noext.sigmf-", "extension"]),
        (&nojson, &["nojson.sigmf-", "JSON"]),
    ];
    for (path, needles) in cases {
        let p = path.to_str().unwrap();
        for sub in ["info", "detect"] {
            let o = run(&[sub, p, "--format", "json"]);
            assert_one_error(&o, 1, needles);
            // stdout, if any, is a valid report holding no recording.
            if !o.stdout.is_empty() {
                let v: Value = serde_json::from_slice(&o.stdout).expect("stdout JSON");
                assert_eq!(
                    v["recordings"].as_array().map(Vec::len),
                    Some(0),
                    "{sub} {p}"
                );
            }
        }
    }

    // A batch: one good, one bad. The good recording is reported; exit status 1; stderr
    // holds the bad one's error line and the summary line.
    let g = good.to_str().unwrap();
    for (sub, bad_one) in [("info", &dtype), ("detect", &noext)] {
        let o = run(&[sub, g, bad_one.to_str().unwrap(), "--format", "json"]);
        assert_no_panic(&o);
        assert_eq!(o.status.code(), Some(1), "{sub}");
        let err = stderr(&o);
        let lines: Vec<&str> = err.lines().collect();
        assert_eq!(lines.len(), 2, "{sub}: {err}");
        assert!(
            lines[0].starts_with("rotorsift: error:")
                && lines[0].contains(bad_one.file_stem().unwrap().to_str().unwrap()),
            "{sub}: {err}"
        );
        assert_eq!(lines[1], "rotorsift: 1 of 2 recordings failed", "{sub}");
        let v: Value = serde_json::from_slice(&o.stdout).expect("stdout JSON");
        let recs = v["recordings"].as_array().expect("recordings");
        assert_eq!(recs.len(), 1, "{sub}: {v}");
        assert!(recs[0]["path"]
            .as_str()
            .unwrap()
            .ends_with("good.sigmf-meta"));
    }
}

// ---------------------------------------------------------------------------------------
// 4. Usage errors
// ---------------------------------------------------------------------------------------

/// Command-line usage errors exit 2 (common practice: getopt-based tools, Python's
/// argparse and clap all use 2 for a bad command line), print nothing on stdout and no
/// panic. Paths need not exist: a parsed command line would fail on them with 1 instead.
#[test]
fn usage_errors_exit_2() {
    let cases: [&[&str]; 9] = [
        &["info", "--bogus", "x"],
        &["detect", "x", "--canceller", "four-pulse"],
        &["detect", "x", "--format", "xml"],
        &["info", "x", "--format", "xml"],
        &["detect", "x", "--cfar", "median"],
        &["detect", "x", "--phase-align", "maybe"],
        &["info"],
        &["simulate", "--out", "x"],
        &["frobnicate"],
    ];
    for args in cases {
        let o = run(args);
        assert_no_panic(&o);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", stderr(&o));
        assert_eq!(stderr(&o).lines().count(), 1, "{args:?}: {}", stderr(&o));
        assert!(o.stdout.is_empty(), "{args:?}: stdout {}", stdout(&o));
        assert!(!o.stderr.is_empty(), "{args:?}: no message");
    }
    // The message names the bad value.
    let o = run(&["detect", "x", "--canceller", "four-pulse"]);
    assert!(stderr(&o).contains("four-pulse"));
}

// ---------------------------------------------------------------------------------------
// 5. Simulator
// ---------------------------------------------------------------------------------------

/// The same scene and seed give byte-identical files; another seed gives other bytes
/// (EXAMPLE.toml: "The same scene and seed give the same bytes").
#[test]
fn simulate_is_deterministic_per_seed() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let scene = small_scene("det");
    let a = simulate(dir, "det", &scene, "a", Some(5)).remove(0);
    let b = simulate(dir, "det", &scene, "b", Some(5)).remove(0);
    let c = simulate(dir, "det", &scene, "c", Some(6)).remove(0);
    let bytes = |p: &Path| std::fs::read(p).unwrap();
    assert!(
        bytes(&data_of(&a)) == bytes(&data_of(&b)),
        "data differ for one seed"
    );
    assert!(bytes(&a) == bytes(&b), "meta differ for one seed");
    assert!(
        bytes(&data_of(&a)) != bytes(&data_of(&c)),
        "seeds 5 and 6 give the same data"
    );
    // The seed-free run uses the scene's seed, again reproducibly.
    let d = simulate(dir, "det", &scene, "d", None).remove(0);
    let e = simulate(dir, "det", &scene, "e", None).remove(0);
    assert!(bytes(&data_of(&d)) == bytes(&data_of(&e)));
}

/// A scene with an unknown key is refused: exit 1, the message names the key and the
/// scene file, no recording written.
#[test]
fn simulate_refuses_unknown_key_naming_it() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let scene = small_scene("bk").replace("losses_db = 2.0\n", "losses_db = 2.0\nfrobnicate = 3\n");
    assert!(scene.contains("frobnicate"));
    let path = write(dir, "bk.toml", &scene);
    let out = dir.join("out");
    let o = run(&[
        "simulate",
        "--scene",
        path.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_no_panic(&o);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    let err = stderr(&o);
    assert!(err.starts_with("rotorsift: error:"), "{err}");
    assert!(err.contains("frobnicate"), "message lacks the key: {err}");
    assert!(err.contains("bk.toml"), "message lacks the file: {err}");
    assert!(!out.join("bk.sigmf-meta").exists());
}

/// The same refusal in one line, as every other error of the tool
/// (src/error.rs: "a single line fit for `rotorsift: error: ...`").
#[test]
fn simulate_unknown_key_error_is_one_line() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let scene = small_scene("bk").replace("losses_db = 2.0\n", "losses_db = 2.0\nfrobnicate = 3\n");
    let path = write(dir, "bk.toml", &scene);
    let out = dir.join("out");
    let o = run(&[
        "simulate",
        "--scene",
        path.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_one_error(&o, 1, &["frobnicate", "bk.toml"]);
}

/// A missing file named on the command line gives one line that states the OS error once.
#[test]
fn io_error_is_stated_once() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let rec = simulate(dir, "io", &small_scene("io"), "runs", None).remove(0);
    let r = rec.to_str().unwrap();
    let cases: [&[&str]; 3] = [
        &[
            "simulate",
            "--scene",
            "/no/such.toml",
            "--out",
            "/tmp/rotorsift-x",
        ],
        &["classify", r, "--model", "/no/such.json"],
        &["features", r, "--out", "/no/dir/f.csv"],
    ];
    for args in cases {
        let o = run(args);
        let line = assert_one_error(&o, 1, &["/no/"]);
        // the OS error at most once; a missing output folder is said in words
        assert!(line.matches("os error").count() <= 1, "{args:?}: {line}");
        assert!(
            line.contains("os error 2") || line.contains("does not exist"),
            "{args:?}: {line}"
        );
    }
}

// ---------------------------------------------------------------------------------------
// 6. info --format json
// ---------------------------------------------------------------------------------------

/// `info --format json` on an FMCW (cf32_le) and a range-profile (ci16_le) recording:
/// the keys of docs/output-format.md, with the derived figures computed here from the scene's radar.
#[test]
fn info_json_layout_and_derived_figures() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let dur = 0.6;
    let fmcw_scene = format!(
        "name = \"fm\"\nduration_s = {dur:?}\n\n{}{}\
         [[object]]\nkind = \"bird\"\nid = \"b-1\"\nwingspan_m = 1.0\nmass_kg = 0.6\n\
         motion = {{ type = \"linear\", start = [30.0, 0.0, 5.0], velocity = [3.0, 0.0, 0.0] }}\n\n\
         [[object]]\nkind = \"vegetation\"\nid = \"v-1\"\nrange_min_m = 20.0\nrange_max_m = 25.0\n\
         rcs_dbsm_per_cell = -5.0\nwind_mph = 12.0\n\n\
         [[object]]\nkind = \"stationary\"\nid = \"s-1\"\nposition = [60.0, 0.0, 0.0]\nrcs_dbsm = 5.0\n",
        k24_radar("cf32_le"),
        rotorcraft(
            "object",
            "r-1",
            80.0,
            "{ type = \"hover\", position = [45.0, 0.0, 5.0] }"
        )
    );
    let rp_scene = format!(
        "name = \"rp\"\nduration_s = {dur:?}\n\n{}{}",
        x94_radar(),
        rotorcraft(
            "object",
            "r-1",
            70.0,
            "{ type = \"hover\", position = [100.0, 0.0, 10.0] }"
        )
    );
    let fm = simulate(dir, "fm", &fmcw_scene, "runs", None).remove(0);
    let rp = simulate(dir, "rp", &rp_scene, "runs", None).remove(0);

    // SigMF: cf32_le holds 8 bytes per complex sample; M = round(duration / T) chirps.
    let m_fm = (dur / K24_T).round() as u64;
    assert_eq!(
        std::fs::metadata(data_of(&fm)).unwrap().len(),
        m_fm * K24_N as u64 * 8
    );

    let o = run(&[
        "info",
        fm.to_str().unwrap(),
        rp.to_str().unwrap(),
        "--format",
        "json",
    ]);
    let v = ok_json(&o);
    let recs = v["recordings"].as_array().expect("recordings array");
    assert_eq!(recs.len(), 2);
    for r in recs {
        for key in [
            "path",
            "waveform",
            "carrier_hz",
            "wavelength_m",
            "samples_per_chirp",
            "chirps",
            "chirp_interval_s",
            "duration_s",
            "range_cell_m",
            "max_range_m",
            "unambiguous_velocity_mps",
            "labels",
        ] {
            assert!(r.get(key).is_some(), "info JSON lacks {key}: {r}");
        }
        assert!(r["labels"].is_object());
        assert!(r["samples_per_chirp"].is_u64() && r["chirps"].is_u64());
    }

    // FMCW: lambda = c / fc; slope S = B / Tc; range of bin k = k c fs / (2 S N)
    // (Richards 2014, FMCW beat frequency f_b = 2 S R / c); max range = N cells (the
    // contract's example: N = 128, cell 1.0 m, max 128 m); v_max = lambda / (4 T)
    // (Richards 2014: Doppler 2 v / lambda, unambiguous for |f_D| < 1 / (2 T)).
    let f = &recs[0];
    assert!(
        f["path"].as_str().unwrap().ends_with("fm.sigmf-meta"),
        "{f}"
    );
    assert_eq!(f["waveform"], "fmcw-beat");
    let lambda = C / K24_FC;
    let s = K24_B / K24_TC;
    let cell = C * K24_FS / (2.0 * s * K24_N as f64);
    assert_close("carrier_hz", num(f, "carrier_hz"), K24_FC, 1.0);
    assert_close("wavelength_m", num(f, "wavelength_m"), lambda, 1e-9);
    assert_eq!(f["samples_per_chirp"], K24_N as u64);
    assert_eq!(f["chirps"].as_u64(), Some(m_fm));
    assert_close("chirp_interval_s", num(f, "chirp_interval_s"), K24_T, 1e-15);
    assert_close(
        "duration_s",
        num(f, "duration_s"),
        m_fm as f64 * K24_T,
        1e-9,
    );
    assert_close("range_cell_m", num(f, "range_cell_m"), cell, 1e-6);
    assert_close(
        "max_range_m",
        num(f, "max_range_m"),
        K24_N as f64 * cell,
        1e-4,
    );
    assert_close(
        "unambiguous_velocity_mps",
        num(f, "unambiguous_velocity_mps"),
        lambda / (4.0 * K24_T),
        1e-6,
    );
    // One annotation per annotated object; the stationary return is not annotated
    // (EXAMPLE.toml); vegetation is labelled "clutter".
    let labels = &f["labels"];
    assert_eq!(labels["rotorcraft"], 1, "{labels}");
    assert_eq!(labels["bird"], 1, "{labels}");
    assert_eq!(labels["clutter"], 1, "{labels}");
    assert_eq!(labels.as_object().unwrap().len(), 3, "{labels}");

    // Range profile: cells as given; far edge range_start + N cells (same rule).
    let r = &recs[1];
    assert!(
        r["path"].as_str().unwrap().ends_with("rp.sigmf-meta"),
        "{r}"
    );
    assert_eq!(r["waveform"], "range-profile");
    let lambda = C / X94_FC;
    let m_rp = (dur / X94_T).round() as u64;
    assert_close("wavelength_m", num(r, "wavelength_m"), lambda, 1e-9);
    assert_eq!(r["samples_per_chirp"], X94_N as u64);
    assert_eq!(r["chirps"].as_u64(), Some(m_rp));
    assert_close(
        "duration_s",
        num(r, "duration_s"),
        m_rp as f64 * X94_T,
        1e-9,
    );
    assert_close("range_cell_m", num(r, "range_cell_m"), X94_CELL, 1e-9);
    assert_close(
        "max_range_m",
        num(r, "max_range_m"),
        X94_START + X94_N as f64 * X94_CELL,
        1e-6,
    );
    assert_close(
        "unambiguous_velocity_mps",
        num(r, "unambiguous_velocity_mps"),
        lambda / (4.0 * X94_T),
        1e-6,
    );
    assert_eq!(r["labels"]["rotorcraft"], 1);
}

// ---------------------------------------------------------------------------------------
// 7. detect --format json: a moving rotorcraft and a stationary return
// ---------------------------------------------------------------------------------------

const TRACK_KEYS: [&str; 11] = [
    "id",
    "start_s",
    "end_s",
    "range_m",
    "range_min_m",
    "range_max_m",
    "radial_velocity_mps",
    "snr_db",
    "hovering",
    "blade_flash_hz",
    "tip_speed_mps",
];

/// Checks one track object against the `detect --format json` layout of docs/output-format.md;
/// `duration` bounds its times.
fn check_detect_track(t: &Value, duration: f64) {
    for key in TRACK_KEYS {
        assert!(t.get(key).is_some(), "track lacks {key}: {t}");
    }
    for key in ["label", "confidence", "probabilities"] {
        assert!(
            t.get(key).is_none(),
            "detect track has model field {key}: {t}"
        );
    }
    assert!(t["id"].is_u64(), "{t}");
    assert!(t["hovering"].is_boolean(), "{t}");
    for key in ["blade_flash_hz", "tip_speed_mps"] {
        assert!(t[key].is_null() || t[key].is_f64(), "{key}: {t}");
    }
    let (s, e) = (num(t, "start_s"), num(t, "end_s"));
    assert!(
        0.0 <= s && s < e && e <= duration + 1e-9,
        "times {s}..{e} of {duration}"
    );
    let (lo, mid, hi) = (
        num(t, "range_min_m"),
        num(t, "range_m"),
        num(t, "range_max_m"),
    );
    assert!(lo <= mid && mid <= hi, "range {lo} <= {mid} <= {hi}");
    assert!(num(t, "snr_db").is_finite());
}

/// One receding and one approaching rotorcraft, each with a strong stationary return:
/// each run gives a track at the true median range (within two cells) with the right
/// velocity sign (docs/output-format.md: positive = receding) within 0.5 m/s, and no track at the
/// stationary return's range (a stationary point has zero Doppler and is cancelled:
/// Richards 2014, MTI cancellers null f_D = 0).
#[test]
fn detect_json_moving_rotorcraft_and_stationary_return() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let dur = 0.8;
    let stationary = "[[run.object]]\nkind = \"stationary\"\nid = \"hut-1\"\n\
                      position = [25.0, 0.0, 0.0]\nrcs_dbsm = 10.0\n\n";
    // Motion along +x from the radar: radial velocity = vx exactly.
    let scene = format!(
        "seed = 3\n\n{}\
         [[run]]\nname = \"recede\"\nduration_s = {dur:?}\n\n{}{stationary}\
         [[run]]\nname = \"approach\"\nduration_s = {dur:?}\n\n{}{stationary}",
        k24_radar("ci16_le"),
        rotorcraft(
            "run.object",
            "quad-r",
            80.0,
            "{ type = \"linear\", start = [40.0, 0.0, 0.0], velocity = [6.0, 0.0, 0.0] }"
        ),
        rotorcraft(
            "run.object",
            "quad-a",
            80.0,
            "{ type = \"linear\", start = [50.0, 0.0, 0.0], velocity = [-6.0, 0.0, 0.0] }"
        ),
    );
    let metas = simulate(dir, "movers", &scene, "runs", None);
    assert_eq!(metas.len(), 2);

    let o = run(&[
        "detect",
        dir.join("runs").to_str().unwrap(),
        "--format",
        "json",
    ]);
    let v = ok_json(&o);
    assert_eq!(v["tool_version"], env!("CARGO_PKG_VERSION"));
    assert!(
        matches!(v.get("model"), None | Some(Value::Null)),
        "detect names a model: {v}"
    );
    let recs = v["recordings"].as_array().expect("recordings");
    assert_eq!(recs.len(), 2);
    let cell = C * K24_FS / (2.0 * (K24_B / K24_TC) * K24_N as f64);
    // Directory inputs are sorted by path: approach, then recede.
    // Truth: R(t) = R0 + v t; median over [0, dur] = R0 + v dur / 2.
    for (rec, name, r0, vel) in [
        (&recs[0], "approach", 50.0, -6.0),
        (&recs[1], "recede", 40.0, 6.0),
    ] {
        assert!(rec["path"]
            .as_str()
            .unwrap()
            .ends_with(&format!("{name}.sigmf-meta")));
        let duration = num(rec, "duration_s");
        assert_close("duration_s", duration, dur, 1e-9);
        let tracks = rec["tracks"].as_array().expect("tracks");
        for t in tracks {
            check_detect_track(t, duration);
            assert!(
                (num(t, "range_m") - 25.0).abs() > 2.0 * cell,
                "{name}: a track at the stationary return's range: {t}"
            );
        }
        let truth_r = r0 + vel * dur / 2.0;
        let hit = tracks
            .iter()
            .find(|t| (num(t, "range_m") - truth_r).abs() <= 2.0 * cell)
            .unwrap_or_else(|| panic!("{name}: no track near {truth_r} m: {rec}"));
        let v_est = num(hit, "radial_velocity_mps");
        assert_eq!(v_est.signum(), vel.signum(), "{name}: velocity sign: {hit}");
        assert_close("radial_velocity_mps", v_est, vel, 0.5);
        assert_eq!(hit["hovering"], false, "{name}: {hit}");
    }
}

// ---------------------------------------------------------------------------------------
// 8. Hovering rotorcraft: blade flash rate
// ---------------------------------------------------------------------------------------

/// A hover scene at 24 GHz: one 4-rotor, 2-blade rotorcraft, sway 0.05 m, plus `extra`.
fn hover_scene(extra: &str) -> String {
    format!(
        "name = \"hov\"\nduration_s = 0.8\nseed = 3\n\n{}{}{extra}",
        k24_radar("ci16_le"),
        rotorcraft(
            "object",
            "quad-h",
            80.0,
            "{ type = \"hover\", position = [35.0, 10.0, 5.0], sway_m = 0.05, sway_period_s = 3.0 }"
        )
    )
}

/// The annotation's `rotorsift:truth` of a recording's first annotation.
fn truth_of(meta: &Path) -> Value {
    read_meta(meta)["annotations"][0]["rotorsift:truth"].clone()
}

/// The track nearest in range to the truth.
fn nearest_track(rec: &Value, range: f64) -> &Value {
    rec["tracks"]
        .as_array()
        .expect("tracks")
        .iter()
        .min_by(|a, b| {
            let da = (num(a, "range_m") - range).abs();
            let db = (num(b, "range_m") - range).abs();
            da.total_cmp(&db)
        })
        .unwrap_or_else(|| panic!("no track: {rec}"))
}

/// A hovering rotorcraft is tracked with `hovering: true` and a blade flash rate within
/// 5 % of N f_rot for N = 2 blades (Chen 2011: an even-bladed rotor flashes N times per
/// revolution), on the FMCW and on the range-profile radar.
#[test]
fn hovering_rotorcraft_blade_flash_rate() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let fm = simulate(dir, "hov", &hover_scene(""), "fm", None).remove(0);
    let rp_scene = format!(
        "name = \"hovrp\"\nduration_s = 0.8\nseed = 11\n\n{}{}",
        x94_radar(),
        rotorcraft(
            "object",
            "quad-h",
            70.0,
            "{ type = \"hover\", position = [80.0, 60.0, 20.0], sway_m = 0.05, sway_period_s = 3.0 }"
        )
    );
    let rp = simulate(dir, "hovrp", &rp_scene, "rp", None).remove(0);
    for (meta, cell) in [
        (&fm, C * K24_FS / (2.0 * (K24_B / K24_TC) * K24_N as f64)),
        (&rp, X94_CELL),
    ] {
        let truth = truth_of(meta);
        // The annotation itself follows Chen: flash = blades x mean rotor rate.
        let flash = num(&truth, "blade_flash_hz");
        assert_eq!(truth["blades"], 2);
        assert_close(
            "truth flash",
            flash,
            2.0 * num(&truth, "rotor_rate_hz"),
            0.01,
        );
        assert_eq!(truth["hovering"], true);

        let v = ok_json(&run(&[
            "detect",
            meta.to_str().unwrap(),
            "--format",
            "json",
        ]));
        let rec = &v["recordings"][0];
        let t = nearest_track(rec, num(&truth, "range_m"));
        check_detect_track(t, num(rec, "duration_s"));
        assert_close(
            "range_m",
            num(t, "range_m"),
            num(&truth, "range_m"),
            2.0 * cell,
        );
        assert_eq!(t["hovering"], true, "{t}");
        assert!(num(t, "radial_velocity_mps").abs() < 0.5, "{t}");
        let est = t["blade_flash_hz"]
            .as_f64()
            .unwrap_or_else(|| panic!("blade_flash_hz is null: {t}"));
        assert_close("blade_flash_hz", est, flash, 0.05 * flash);
    }
}

/// The same over several seeds (noise and rotor phases change, the physics does not).
#[test]
fn hovering_blade_flash_rate_across_seeds() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let mut bad = Vec::new();
    for seed in 1..=10u64 {
        let meta = simulate(
            dir,
            "hov",
            &hover_scene(""),
            &format!("s{seed}"),
            Some(seed),
        )
        .remove(0);
        let truth = truth_of(&meta);
        let flash = num(&truth, "blade_flash_hz");
        let v = ok_json(&run(&[
            "detect",
            meta.to_str().unwrap(),
            "--format",
            "json",
        ]));
        let t = nearest_track(&v["recordings"][0], num(&truth, "range_m"));
        match t["blade_flash_hz"].as_f64() {
            Some(est) if (est - flash).abs() <= 0.05 * flash => {}
            other => bad.push(format!("seed {seed}: {other:?} vs {flash}")),
        }
    }
    assert!(bad.is_empty(), "blade flash off by > 5 %: {bad:?}");
}

/// The passing half of the next test: a strong stationary return alone, and beside a
/// hovering rotorcraft with `--phase-align off`, gives no track at its range (zero
/// Doppler, constant phase: nulled by the MTI canceller, Richards 2014).
#[test]
fn stationary_return_alone_or_without_phase_align_is_not_tracked() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let stationary = "[[object]]\nkind = \"stationary\"\nid = \"hut-1\"\n\
                      position = [25.0, 0.0, 0.0]\nrcs_dbsm = 10.0\n";
    let alone = format!(
        "name = \"st\"\nduration_s = 0.8\n\n{}{stationary}",
        k24_radar("ci16_le")
    );
    let cell = C * K24_FS / (2.0 * (K24_B / K24_TC) * K24_N as f64);
    for seed in [1u64, 4, 5] {
        let st = simulate(dir, "st", &alone, &format!("a{seed}"), Some(seed)).remove(0);
        let v = ok_json(&run(&["detect", st.to_str().unwrap(), "--format", "json"]));
        let tracks = v["recordings"][0]["tracks"].as_array().unwrap();
        assert!(
            tracks.is_empty(),
            "seed {seed}: tracks from a stationary point: {v}"
        );

        let hov = simulate(
            dir,
            "hovst",
            &hover_scene(stationary),
            &format!("h{seed}"),
            Some(seed),
        )
        .remove(0);
        let h = hov.to_str().unwrap();
        let v = ok_json(&run(&[
            "detect",
            h,
            "--format",
            "json",
            "--phase-align",
            "off",
        ]));
        let tracks = v["recordings"][0]["tracks"].as_array().unwrap();
        assert!(
            tracks
                .iter()
                .all(|t| (num(t, "range_m") - 25.0).abs() > 2.0 * cell),
            "seed {seed}, --phase-align off: a track at the stationary return: {v}"
        );
        let truth = truth_of(&hov);
        let t = nearest_track(&v["recordings"][0], num(&truth, "range_m"));
        assert_close(
            "range_m",
            num(t, "range_m"),
            num(&truth, "range_m"),
            2.0 * cell,
        );
    }
}

/// A strong stationary return (10 dBsm at 25 m) beside a hovering rotorcraft is never
/// tracked (zero Doppler, constant phase: cancelled by the MTI filter, Richards 2014): on
/// each of seeds 1 to 6 no track lies within two range cells of it.
#[test]
fn stationary_return_beside_hovering_rotorcraft_is_not_tracked() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let extra = "[[object]]\nkind = \"stationary\"\nid = \"hut-1\"\n\
                 position = [25.0, 0.0, 0.0]\nrcs_dbsm = 10.0\n";
    let cell = C * K24_FS / (2.0 * (K24_B / K24_TC) * K24_N as f64);
    let mut bad = Vec::new();
    for seed in 1..=6u64 {
        let meta = simulate(
            dir,
            "hovst",
            &hover_scene(extra),
            &format!("s{seed}"),
            Some(seed),
        )
        .remove(0);
        let v = ok_json(&run(&[
            "detect",
            meta.to_str().unwrap(),
            "--format",
            "json",
        ]));
        for t in v["recordings"][0]["tracks"].as_array().unwrap() {
            if (num(t, "range_m") - 25.0).abs() <= 2.0 * cell {
                bad.push(format!("seed {seed}: {t}"));
            }
        }
    }
    assert!(
        bad.is_empty(),
        "tracks at the stationary return:\n{}",
        bad.join("\n")
    );
}

// ---------------------------------------------------------------------------------------
// 9. train, classify, evaluate
// ---------------------------------------------------------------------------------------

/// Eight short labelled runs on the 24 GHz radar: 3 rotorcraft, 3 birds, 2 vegetation.
fn training_scene() -> String {
    let mut s = format!("seed = 100\n\n{}", k24_radar("ci16_le"));
    let run = |name: &str| format!("[[run]]\nname = \"{name}\"\nduration_s = 0.8\n\n");
    let rot = [
        (
            80.0,
            "{ type = \"hover\", position = [35.0, 10.0, 5.0], sway_m = 0.05 }",
        ),
        (
            90.0,
            "{ type = \"linear\", start = [50.0, 0.0, 5.0], velocity = [-4.0, 0.0, 0.0] }",
        ),
        (
            70.0,
            "{ type = \"linear\", start = [30.0, 0.0, 5.0], velocity = [3.0, 2.0, 0.0] }",
        ),
    ];
    for (i, (rate, motion)) in rot.iter().enumerate() {
        s += &run(&format!("t-rot-{i}"));
        s += &rotorcraft("run.object", &format!("rot-{i}"), *rate, motion);
    }
    let birds = [
        ("[30.0, -10.0, 5.0]", "[5.0, 2.0, 0.0]", 1.0, 0.6),
        ("[60.0, 10.0, 5.0]", "[-6.0, 0.0, 0.0]", 0.8, 0.4),
        ("[45.0, 0.0, 8.0]", "[2.0, 4.0, 0.0]", 1.2, 0.8),
    ];
    for (i, (start, vel, span, mass)) in birds.iter().enumerate() {
        s += &run(&format!("t-bird-{i}"));
        s += &format!(
            "[[run.object]]\nkind = \"bird\"\nid = \"bird-{i}\"\nwingspan_m = {span:?}\n\
             mass_kg = {mass:?}\nbody_rcs_dbsm = -20.0\n\
             motion = {{ type = \"linear\", start = {start}, velocity = {vel} }}\n\n"
        );
    }
    // gale-force wind: foliage spread past the canceller notch (a hedge in a breeze
    // stays inside it, raises no track, and is no alarm)
    for (i, (r, wind)) in [(20.0, 40.0), (40.0, 45.0)].iter().enumerate() {
        s += &run(&format!("t-veg-{i}"));
        s += &format!(
            "[[run.object]]\nkind = \"vegetation\"\nid = \"veg-{i}\"\nrange_min_m = {r:?}\n\
             range_max_m = {:?}\nrcs_dbsm_per_cell = -5.0\nwind_mph = {wind:?}\n\n",
            r + 5.0
        );
    }
    s
}

/// Trains a small model, then checks `classify --format json` (label, confidence,
/// probabilities: a distribution whose max is the confidence), `--min-confidence`
/// (labels below it become `unknown`) and `evaluate --format json` (docs/output-format.md keys;
/// confusion matrix sums to targets_detected; per-class figures from the matrix).
#[test]
fn train_then_classify_and_evaluate() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let metas = simulate(dir, "train", &training_scene(), "runs", None);
    assert_eq!(metas.len(), 8);
    let runs = dir.join("runs");
    let runs_s = runs.to_str().unwrap();
    let model = dir.join("m.json");
    let model_s = model.to_str().unwrap();

    let o = run(&["train", runs_s, "--model", model_s, "--trees", "30"]);
    ok(&o);
    let mv: Value =
        serde_json::from_str(&std::fs::read_to_string(&model).expect("model written")).unwrap();
    assert!(mv.is_object(), "model file is not a JSON object");

    // classify --format json
    let v = ok_json(&run(&[
        "classify", runs_s, "--model", model_s, "--format", "json",
    ]));
    assert_eq!(v["tool_version"], env!("CARGO_PKG_VERSION"));
    assert!(v["model"].is_string(), "{}", v["model"]);
    let recs = v["recordings"].as_array().unwrap();
    assert_eq!(recs.len(), 8);
    let mut n_tracks = 0;
    let mut confidences = Vec::new();
    for rec in recs {
        for t in rec["tracks"].as_array().unwrap() {
            n_tracks += 1;
            for key in TRACK_KEYS {
                assert!(t.get(key).is_some(), "track lacks {key}: {t}");
            }
            let label = t["label"].as_str().expect("label");
            let conf = num(t, "confidence");
            let probs = t["probabilities"].as_object().expect("probabilities");
            let sum: f64 = probs.values().map(|p| p.as_f64().unwrap()).sum();
            assert_close("sum of probabilities", sum, 1.0, 1e-6);
            let (best, pmax) = probs
                .iter()
                .map(|(k, p)| (k.clone(), p.as_f64().unwrap()))
                .max_by(|a, b| a.1.total_cmp(&b.1))
                .unwrap();
            assert!(probs
                .values()
                .all(|p| (0.0..=1.0).contains(&p.as_f64().unwrap())));
            assert_close("confidence = max probability", conf, pmax, 1e-12);
            assert_eq!(label, best, "label is not the most probable class: {t}");
            confidences.push(conf);
        }
    }
    assert!(n_tracks >= 8, "only {n_tracks} tracks from 8 labelled runs");

    // --min-confidence 0.999: every track below it is `unknown`, probabilities unchanged.
    let v = ok_json(&run(&[
        "classify",
        runs_s,
        "--model",
        model_s,
        "--format",
        "json",
        "--min-confidence",
        "0.999",
    ]));
    let mut unknown = 0;
    for rec in v["recordings"].as_array().unwrap() {
        for t in rec["tracks"].as_array().unwrap() {
            let conf = num(t, "confidence");
            if conf < 0.999 {
                assert_eq!(t["label"], "unknown", "{t}");
                unknown += 1;
            } else {
                assert_ne!(t["label"], "unknown", "{t}");
            }
        }
    }
    assert!(
        unknown > 0,
        "no track below 0.999 confidence (confidences {confidences:?})"
    );

    // evaluate --format json
    let v = ok_json(&run(&[
        "evaluate", runs_s, "--model", model_s, "--format", "json",
    ]));
    check_evaluate(&v, 8);
    let v = ok_json(&run(&[
        "evaluate",
        runs_s,
        "--model",
        model_s,
        "--format",
        "json",
        "--min-confidence",
        "0.999",
    ]));
    check_evaluate(&v, 8);

    // Held out: the same eight runs simulated with seeds 101 and 102 (other noise, blade
    // phases, wingbeat phases and foliage motion; the model never saw them), scored with
    // `evaluate`. Measured: 1.000 (16 of 16 targets); the bound allows three misses.
    let mut held = Vec::new();
    for seed in [101u64, 102] {
        held.extend(simulate(
            dir,
            "held",
            &training_scene(),
            &format!("held-{seed}"),
            Some(seed),
        ));
    }
    assert_eq!(held.len(), 16);
    let mut args = vec!["evaluate", "--model", model_s, "--format", "json"];
    let held_s: Vec<&str> = held.iter().map(|p| p.to_str().unwrap()).collect();
    args.extend(held_s.iter().copied());
    let v = ok_json(&run(&args));
    check_evaluate(&v, 16);
    let acc = num(&v, "accuracy");
    eprintln!(
        "held-out accuracy {acc:.3} over {} of 16 targets",
        v["targets_detected"]
    );
    assert!(
        acc >= HELD_OUT_MIN_ACCURACY,
        "held-out accuracy {acc:.3} below {HELD_OUT_MIN_ACCURACY}: {}",
        v["confusion"]
    );
}

/// Least held-out accuracy of the small model in `train_then_classify_and_evaluate`.
const HELD_OUT_MIN_ACCURACY: f64 = 0.8;

/// docs/output-format.md "evaluate --format json": keys, a square confusion matrix in the order of
/// `classes` summing to targets_detected, accuracy = trace / total, per-class precision,
/// recall, F1 and support from the matrix (van Rijsbergen 1979; scikit-learn's
/// definitions).
fn check_evaluate(v: &Value, targets: u64) {
    for key in [
        "classes",
        "confusion",
        "accuracy",
        "per_class",
        "targets",
        "targets_detected",
        "tracks_unmatched",
    ] {
        assert!(v.get(key).is_some(), "evaluate JSON lacks {key}: {v}");
    }
    let classes: Vec<&str> = v["classes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap())
        .collect();
    let k = classes.len();
    let cm: Vec<Vec<u64>> = v["confusion"]
        .as_array()
        .unwrap()
        .iter()
        .map(|row| {
            row.as_array()
                .unwrap()
                .iter()
                .map(|x| x.as_u64().unwrap())
                .collect()
        })
        .collect();
    assert_eq!(cm.len(), k);
    assert!(
        cm.iter().all(|row| row.len() == k),
        "confusion not square: {cm:?}"
    );
    let total: u64 = cm.iter().flatten().sum();
    assert_eq!(v["targets"].as_u64(), Some(targets));
    let detected = v["targets_detected"].as_u64().unwrap();
    assert!(detected <= targets);
    assert_eq!(
        total, detected,
        "confusion sums to {total}, targets_detected {detected}"
    );
    assert!(v["tracks_unmatched"].is_u64());
    let trace: u64 = (0..k).map(|i| cm[i][i]).sum();
    assert_close(
        "accuracy",
        num(v, "accuracy"),
        trace as f64 / total as f64,
        1e-9,
    );
    let per = v["per_class"].as_object().unwrap();
    for (i, c) in classes.iter().enumerate() {
        let row: u64 = cm[i].iter().sum();
        let col: u64 = (0..k).map(|r| cm[r][i]).sum();
        let Some(pc) = per.get(*c) else {
            // A class nobody belongs to and nobody was given may be left out.
            assert!(row == 0 && col == 0, "per_class lacks {c}");
            continue;
        };
        assert_eq!(pc["support"].as_u64(), Some(row), "support of {c}");
        let tp = cm[i][i] as f64;
        if col > 0 {
            assert_close(
                &format!("precision {c}"),
                num(pc, "precision"),
                tp / col as f64,
                1e-9,
            );
        }
        if row > 0 {
            assert_close(
                &format!("recall {c}"),
                num(pc, "recall"),
                tp / row as f64,
                1e-9,
            );
        }
        let (p, r) = (num(pc, "precision"), num(pc, "recall"));
        if p + r > 0.0 {
            assert_close(
                &format!("f1 {c}"),
                num(pc, "f1"),
                2.0 * p * r / (p + r),
                1e-9,
            );
        }
    }
}

/// A model file that is not a model, or the built-in model with its feature list edited,
/// is refused by `classify` and `evaluate`: exit 1, one line naming the file.
#[test]
fn bad_model_files_are_refused() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let rec = simulate(dir, "bm", &small_scene("bm"), "runs", None).remove(0);
    let r = rec.to_str().unwrap();
    let builtin =
        std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("models/default.json"))
            .expect("models/default.json");
    let base: Value = serde_json::from_str(&builtin).unwrap();
    let names = base["feature_names"].as_array().expect("feature_names");
    assert!(names.len() >= 2);

    let mut renamed = base.clone();
    renamed["feature_names"][0] = Value::from("wingbeat_banana");
    let mut swapped = base.clone();
    swapped["feature_names"][0] = names[1].clone();
    swapped["feature_names"][1] = names[0].clone();
    let mut shorter = base.clone();
    shorter["feature_names"].as_array_mut().unwrap().pop();
    // A feature setting this build does not know (it would be silently dropped).
    let mut unknown_setting = base.clone();
    unknown_setting["feature_settings"]["detect"]["mystery_knob"] = Value::from(1);

    let files = [
        write(dir, "not-a-model.json", "{\"a\": 1}\n"),
        write(dir, "scene-not-model.json", &small_scene("x")),
        write(dir, "half-model.json", &builtin[..builtin.len() / 2]),
        write(dir, "empty-model.json", ""),
        write(dir, "renamed-feature.json", &renamed.to_string()),
        write(dir, "swapped-features.json", &swapped.to_string()),
        write(dir, "shorter-features.json", &shorter.to_string()),
        write(dir, "unknown-setting.json", &unknown_setting.to_string()),
    ];
    for f in &files {
        let name = f.file_name().unwrap().to_str().unwrap();
        for sub in ["classify", "evaluate"] {
            let o = run(&[sub, r, "--model", f.to_str().unwrap()]);
            assert_one_error(&o, 1, &[name]);
        }
    }
    // The unedited copy loads (the refusals above are the edits, not the copying).
    let copy = write(dir, "copy.json", &builtin);
    ok(&run(&["classify", r, "--model", copy.to_str().unwrap()]));
}

/// `classify` without `--model` uses the built-in model (models/default.json, embedded at
/// build time): exit 0, a `label` column, a label from the built-in vocabulary
/// (docs/recording-format.md: rotorcraft, bird, clutter) on every row, and the scene's one
/// object, a receding quadrotor, labelled `rotorcraft` on the track at its range.
#[test]
fn classify_with_builtin_model() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let rec = simulate(dir, "bi", &small_scene("bi"), "runs", None).remove(0);
    // Run from an empty directory: the model must not be read from the working directory.
    let empty = dir.join("cwd");
    std::fs::create_dir(&empty).unwrap();
    let text = ok(&run_in(&empty, &["classify", rec.to_str().unwrap()]));
    let mut lines = text.lines();
    let header = lines.next().expect("header line");
    let cols: Vec<&str> = header.split_whitespace().collect();
    let li = cols
        .iter()
        .position(|c| *c == "label")
        .unwrap_or_else(|| panic!("no label column: {header}"));
    let rows: Vec<&str> = lines.filter(|l| l.starts_with("bi ")).collect();
    assert!(!rows.is_empty(), "no track row:\n{text}");
    for row in rows {
        let cells: Vec<&str> = row.split_whitespace().collect();
        assert_eq!(cells.len(), cols.len(), "{row}");
        assert!(
            ["rotorcraft", "bird", "clutter"].contains(&cells[li]),
            "label {:?} not in the built-in vocabulary: {row}",
            cells[li]
        );
    }
    let v = ok_json(&run_in(
        &empty,
        &["classify", rec.to_str().unwrap(), "--format", "json"],
    ));
    assert_eq!(v["model"], "built-in");
    // The quadrotor flies from 40 m to 44.8 m; its track (the longest within that span
    // and a few cells) must be labelled rotorcraft.
    let tracks = v["recordings"][0]["tracks"].as_array().unwrap();
    let quad = tracks
        .iter()
        .filter(|t| (38.0..=47.0).contains(&num(t, "range_m")))
        .max_by(|a, b| {
            (num(a, "end_s") - num(a, "start_s")).total_cmp(&(num(b, "end_s") - num(b, "start_s")))
        })
        .unwrap_or_else(|| panic!("no track at the quadrotor's range: {v}"));
    assert_eq!(quad["label"], "rotorcraft", "{quad}");
}

// ---------------------------------------------------------------------------------------
// 10. Atomic writing
// ---------------------------------------------------------------------------------------

/// `features --out F.csv` onto an existing file: an input that fails entirely (a bad
/// path) leaves the old file intact and no temporary beside it; a good input replaces it
/// with one row per track, header first, with a `label` column holding the matched class.
#[test]
fn features_out_is_atomic_and_written_on_success() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let csv = write(dir, "F.csv", "old contents\n");
    let c = csv.to_str().unwrap();
    let o = run(&["features", "/no/such", "--out", c]);
    assert_one_error(&o, 1, &["/no/such"]);
    assert_eq!(std::fs::read_to_string(&csv).unwrap(), "old contents\n");
    let leftovers: Vec<_> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name())
        .collect();
    assert_eq!(leftovers.len(), 1, "files beside F.csv: {leftovers:?}");

    let rec = simulate(dir, "fe", &small_scene("fe"), "runs", None).remove(0);
    let r = rec.to_str().unwrap();
    let o = run(&["features", r, "--out", c]);
    ok(&o);
    let text = std::fs::read_to_string(&csv).unwrap();
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let li = header
        .iter()
        .position(|h| *h == "label")
        .expect("label column");
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
    let det = ok_json(&run(&["detect", r, "--format", "json"]));
    let n_tracks = det["recordings"][0]["tracks"].as_array().unwrap().len();
    assert_eq!(rows.len(), n_tracks, "one row per track:\n{text}");
    assert!(rows.iter().all(|row| row.len() == header.len()));
    assert!(
        rows.iter().any(|row| row[li] == "rotorcraft"),
        "no row matched to the rotorcraft annotation:\n{text}"
    );
}

/// When every input is refused (here: one malformed recording), nothing was produced, so
/// the existing output must stay as it was.
#[test]
fn features_keeps_old_file_when_every_input_is_refused() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let good = simulate(dir, "ka", &small_scene("ka"), "runs", None).remove(0);
    let bad = corrupt_copy(
        &good,
        dir,
        "bad",
        |m| m.replace("\"ci16_le\"", "\"cu12_xx\""),
        |d| d,
    );
    let csv = write(dir, "F.csv", "old contents\n");
    let o = run(&[
        "features",
        bad.to_str().unwrap(),
        "--out",
        csv.to_str().unwrap(),
    ]);
    assert_no_panic(&o);
    assert_eq!(o.status.code(), Some(1));
    assert_eq!(std::fs::read_to_string(&csv).unwrap(), "old contents\n");
}

// ---------------------------------------------------------------------------------------
// Pictures and the audit page
// ---------------------------------------------------------------------------------------

/// PNG signature (ISO/IEC 15948, the PNG standard: the first eight bytes of every file)
/// and the IHDR image size.
fn png_size(path: &Path) -> (u32, u32) {
    let b = std::fs::read(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    assert_eq!(
        &b[..8],
        b"\x89PNG\r\n\x1a\n",
        "{} is not a PNG",
        path.display()
    );
    assert_eq!(&b[12..16], b"IHDR");
    let be = |i: usize| u32::from_be_bytes([b[i], b[i + 1], b[i + 2], b[i + 3]]);
    (be(16), be(20))
}

/// The RGB pixels of an 8-bit RGB PNG (what `plot` writes).
fn png_pixels(path: &std::path::Path) -> Vec<u8> {
    let dec = png::Decoder::new(std::io::BufReader::new(std::fs::File::open(path).unwrap()));
    let mut r = dec.read_info().unwrap();
    let mut img = vec![0; r.output_buffer_size()];
    r.next_frame(&mut img).unwrap();
    img
}

/// `plot` draws each kind as a PNG; an unknown track id and a missing recording are one
/// error line each, and a failed plot leaves an existing file untouched.
#[test]
fn plot_writes_each_kind_and_refuses_bad_requests() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let meta = simulate(dir, "hov", &hover_scene(""), "rec", None).remove(0);
    let m = meta.to_str().unwrap();
    for kind in ["range-doppler", "spectrogram", "cepstrogram", "cadence"] {
        let out = dir.join(format!("{kind}.png"));
        let o = run(&["plot", m, "--kind", kind, "--out", out.to_str().unwrap()]);
        assert_no_panic(&o);
        assert!(o.status.success(), "plot {kind}: {}", stderr(&o));
        assert_eq!(png_size(&out), (960, 600), "{kind}");
    }
    // Text is drawn: the title band (y 8..34 of docs/output-format.md's layout) holds
    // dark ink on the white margin, mixed-case DejaVu Sans, not a uniform strip.
    let img = png_pixels(&dir.join("spectrogram.png"));
    let dark = (8..34)
        .flat_map(|y| (92..700).map(move |x| (x, y)))
        .filter(|&(x, y)| {
            let i = (y * 960 + x) * 3;
            (img[i] as u32 + img[i + 1] as u32 + img[i + 2] as u32) < 300
        })
        .count();
    assert!(dark > 200, "title band has {dark} dark pixels");
    // Axis overrides draw; out-of-range values and other formats are usage errors
    // (exit 2) before any work: the recording is not even looked for.
    let zoomed = dir.join("zoomed.png");
    let o = run(&[
        "plot",
        m,
        "--kind",
        "cadence",
        "--velocity-span",
        "3",
        "--cadence-max",
        "50",
        "--out",
        zoomed.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "zoomed cadence: {}", stderr(&o));
    assert_ne!(
        std::fs::read(&zoomed).unwrap(),
        std::fs::read(dir.join("cadence.png")).unwrap(),
        "the overrides changed nothing"
    );
    for (opt, v, needle) in [
        ("--velocity-span", "0", "m/s"),
        ("--velocity-span", "-2", "m/s"),
        ("--velocity-span", "fast", "m/s"),
        ("--cadence-max", "0", "Hz"),
        ("--cadence-max", "inf", "Hz"),
    ] {
        let arg = format!("{opt}={v}");
        let o = run(&[
            "plot", "/no/such", "--kind", "cadence", &arg, "--out", "x.png",
        ]);
        assert_one_error(&o, 2, &[opt, needle]);
    }
    for bad in ["pic.jpg", "pic.svg", "pic"] {
        let out = dir.join(bad);
        let o = run(&[
            "plot",
            "/no/such",
            "--kind",
            "spectrogram",
            "--out",
            out.to_str().unwrap(),
        ]);
        assert_one_error(&o, 2, &[bad, ".png"]);
        assert!(!out.exists(), "{bad} written");
    }
    let keep = dir.join("spectrogram.png");
    let before = std::fs::read(&keep).unwrap();
    let o = run(&[
        "plot",
        m,
        "--kind",
        "spectrogram",
        "--track",
        "999",
        "--out",
        keep.to_str().unwrap(),
    ]);
    assert_one_error(&o, 1, &["no track 999"]);
    assert_eq!(
        std::fs::read(&keep).unwrap(),
        before,
        "a failed plot changed the file"
    );
    let o = run(&[
        "plot",
        "/no/such",
        "--kind",
        "cadence",
        "--out",
        keep.to_str().unwrap(),
    ]);
    assert_one_error(&o, 1, &["/no/such"]);
}

/// `audit` writes DIR/index.html (docs/output-format.md) whose every picture exists; with a
/// confidence threshold above 1 every track is listed.
#[test]
fn audit_writes_an_index_with_its_pictures() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let meta = simulate(dir, "hov", &hover_scene(""), "rec", None).remove(0);
    let out = dir.join("audit");
    let o = run(&[
        "audit",
        meta.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--low-confidence",
        "1.0",
    ]);
    assert_no_panic(&o);
    assert!(o.status.success(), "audit: {}", stderr(&o));
    let html = std::fs::read_to_string(out.join("index.html")).unwrap();
    assert!(
        html.starts_with("<!DOCTYPE html>") && html.contains("low confidence"),
        "{html}"
    );
    let mut pictures = 0;
    for part in html.split("src=\"").skip(1) {
        let file = &part[..part.find('"').unwrap()];
        assert_eq!(png_size(&out.join(file)), (960, 600), "{file}");
        pictures += 1;
    }
    assert!(pictures >= 2, "no pictures in the audit page");
    // Every track is listed: one data-track element per track `detect` finds.
    let tracks = ok_json(&run(&[
        "detect",
        meta.to_str().unwrap(),
        "--format",
        "json",
    ]))["recordings"][0]["tracks"]
        .as_array()
        .unwrap()
        .len();
    assert!(tracks >= 1, "no track in the hover scene");
    assert_eq!(
        html.matches("data-track=\"").count(),
        tracks,
        "audit lists a different number of tracks than detect finds"
    );
    let o = run(&[
        "audit",
        meta.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--doubt",
        "2",
    ]);
    // out of range: a usage error, one line, exit 2
    assert_one_error(&o, 2, &["--doubt", "2"]);
}

// ---------------------------------------------------------------------------------------
// Rough edges a new user meets (docs/output-format.md: usage errors exit 2 in one line;
// a bad file is one line naming it)
// ---------------------------------------------------------------------------------------

/// `train` on the demo's four recordings with the default 5 folds works: the folds are
/// capped to the recordings, with a note.
#[test]
fn train_on_the_demo_caps_folds_to_the_recordings() {
    let tmp = tempfile::tempdir().unwrap();
    let model = tmp.path().join("m.json");
    let demo = format!("{}/labelled-demo", env!("CARGO_MANIFEST_DIR"));
    let o = run(&[
        "train",
        &demo,
        "--model",
        model.to_str().unwrap(),
        "--trees",
        "20",
    ]);
    let text = ok(&o);
    assert!(model.is_file());
    assert!(
        stderr(&o).contains("--folds 5: only 4 labelled recordings, so 4 folds"),
        "{}",
        stderr(&o)
    );
    assert!(text.contains("grouped 4-fold"), "{text}");
    assert!(!text.contains(" 1 recordings"), "{text}");
}

/// Out-of-range values are usage errors (exit 2, one line naming the value), `--cpi`
/// below the CFAR window included; no message uses Rust's range syntax.
#[test]
fn out_of_range_values_are_usage_errors_in_plain_words() {
    let cases: [(&[&str], &str); 4] = [
        (&["detect", "x", "--pfa", "2"], "2"),
        (&["detect", "x", "--cpi", "100000"], "100000"),
        (&["detect", "x", "--cpi", "16"], "16"),
        (&["classify", "x", "--min-confidence", "1.5"], "1.5"),
    ];
    for (args, value) in cases {
        let line = assert_one_error(&run(args), 2, &[value]);
        assert!(!line.contains("..="), "{args:?}: {line}");
    }
}

/// When every input fails, no empty table header is printed; a missing model file is
/// called the model file.
#[test]
fn failed_inputs_print_no_header_and_missing_model_is_named() {
    let tmp = tempfile::tempdir().unwrap();
    let bad = write(tmp.path(), "bad.sigmf-meta", "garbage");
    write(tmp.path(), "bad.sigmf-data", "");
    for cmd in ["detect", "classify", "info"] {
        let o = run(&[cmd, bad.to_str().unwrap()]);
        assert_one_error(&o, 1, &["bad.sigmf-meta"]);
        assert!(o.stdout.is_empty(), "{cmd}: {}", stdout(&o));
    }
    let o = run(&[
        "classify",
        bad.to_str().unwrap(),
        "--model",
        "/no/such/model.json",
    ]);
    assert_one_error(&o, 1, &["model file", "/no/such/model.json"]);
}

/// The track table states its conventions under it (velocity sign: docs/recording-format.md
/// section 5; SNR; hover as near-zero radial speed), and the JSON flags a tip speed at the
/// unambiguous speed λ/(4T) as a bound (Richards 2014, from memory).
#[test]
fn track_tables_state_their_meanings_and_tip_bounds() {
    let tmp = tempfile::tempdir().unwrap();
    let meta = simulate(tmp.path(), "hov", &hover_scene(""), "rec", None).remove(0);
    let table = ok(&run(&["classify", meta.to_str().unwrap()]));
    for needle in [
        "positive = receding",
        "snr_dB: mean detection SNR",
        "near-zero radial speed",
        "lower bound",
    ] {
        assert!(table.contains(needle), "{needle}: {table}");
    }
    let v = ok_json(&run(&[
        "classify",
        meta.to_str().unwrap(),
        "--format",
        "json",
    ]));
    let vmax = C / K24_FC / (4.0 * K24_T);
    for t in v["recordings"][0]["tracks"].as_array().unwrap() {
        let bound = t["tip_speed_is_bound"]
            .as_bool()
            .expect("tip_speed_is_bound");
        match t["tip_speed_mps"].as_f64() {
            Some(tip) => assert_eq!(bound, tip >= vmax * (1.0 - 1e-6), "{t}"),
            None => assert!(!bound, "{t}"),
        }
        if t["label"] == "bird" || t["label"] == "clutter" {
            assert!(t["tip_speed_mps"].is_null());
        }
    }
}
