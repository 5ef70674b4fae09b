//! Faults and bad input (issue 12): atomic outputs under failure and SIGKILL, bad samples
//! (non-finite and clipped), limits checked before allocation, and batch manners. The
//! recordings are made here with `rotorsift simulate` and then patched.

mod common;

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

use common::*;
use serde_json::Value;

/// Files in `dir` (not recursive) whose name ends in `.tmp`.
fn temporaries(dir: &Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".tmp"))
        .collect()
}

/// The path of the binary under test.
fn bin_path() -> PathBuf {
    PathBuf::from(env!("CARGO_BIN_EXE_rotorsift"))
}

/// A 1 s scene on the X-band range-profile radar: one hovering rotorcraft at 150 m.
fn x94_hover(name: &str) -> String {
    format!(
        "name = \"{name}\"\nduration_s = 1.0\nseed = 5\n\n{}{}",
        x94_radar(),
        rotorcraft(
            "object",
            "quad-1",
            80.0,
            "{ type = \"hover\", position = [150.0, 0.0, 10.0], sway_m = 0.05 }"
        )
    )
}

/// A 0.8 s scene on the 24 GHz radar with the given datatype: one receding rotorcraft.
fn k24_scene(name: &str, datatype: &str) -> String {
    format!(
        "name = \"{name}\"\nduration_s = 0.8\nseed = 3\n\n{}{}",
        k24_radar(datatype),
        rotorcraft(
            "object",
            "quad-1",
            80.0,
            "{ type = \"linear\", start = [40.0, 0.0, 0.0], velocity = [6.0, 0.0, 0.0] }"
        )
    )
}

/// Every number in a JSON document (no NaN can be in one; a missing value shows as null).
fn numbers(v: &Value, out: &mut Vec<f64>) {
    match v {
        Value::Number(n) => out.push(n.as_f64().unwrap()),
        Value::Array(a) => a.iter().for_each(|x| numbers(x, out)),
        Value::Object(o) => o.values().for_each(|x| numbers(x, out)),
        _ => {}
    }
}

// ---------------------------------------------------------------------------------------
// 1. Atomic outputs
// ---------------------------------------------------------------------------------------

/// A picture written onto an existing directory, and into a missing folder: one error
/// line naming the real target (never a temporary), exit 1, nothing left behind.
#[test]
fn picture_onto_directory_or_missing_folder_names_target_and_leaves_nothing() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let rec = simulate(dir, "p", &k24_scene("p", "ci16_le"), "runs", None).remove(0);
    let target = dir.join("pic.png");
    std::fs::create_dir(&target).unwrap();
    let o = run(&[
        "plot",
        rec.to_str().unwrap(),
        "--kind",
        "spectrogram",
        "--out",
        target.to_str().unwrap(),
    ]);
    let line = assert_one_error(&o, 1, &["pic.png", "directory"]);
    assert!(!line.contains(".pic.png."), "names a temporary: {line}");
    assert!(temporaries(dir).is_empty(), "{:?}", temporaries(dir));
    assert!(target.is_dir());

    let missing = dir.join("no-such-folder").join("x.png");
    let o = run(&[
        "plot",
        rec.to_str().unwrap(),
        "--kind",
        "spectrogram",
        "--out",
        missing.to_str().unwrap(),
    ]);
    let line = assert_one_error(&o, 1, &["no-such-folder/x.png"]);
    assert!(!line.contains(".x.png."), "names a temporary: {line}");
    assert!(!missing.exists());
}

/// SIGKILL during `train`, at several moments from start-up to the end of the run: the
/// model file is afterwards either the old one byte for byte or a whole new model that
/// loads, and no temporary is left in its folder (the write is temp + fsync + rename:
/// common practice for crash-safe replacement on POSIX file systems).
#[test]
fn killed_train_leaves_old_model_or_whole_new_one_and_no_temporary() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let mut scene = format!("seed = 40\n\n{}", k24_radar("ci16_le"));
    for (i, v) in [-4.0, 3.0, 5.0].iter().enumerate() {
        scene += &format!("[[run]]\nname = \"k-rot-{i}\"\nduration_s = 0.8\n\n");
        scene += &rotorcraft(
            "run.object",
            &format!("rot-{i}"),
            80.0 + 5.0 * i as f64,
            &format!(
                "{{ type = \"linear\", start = [40.0, 0.0, 5.0], velocity = [{v:?}, 0.0, 0.0] }}"
            ),
        );
        scene += &format!("[[run]]\nname = \"k-bird-{i}\"\nduration_s = 0.8\n\n");
        scene += &format!(
            "[[run.object]]\nkind = \"bird\"\nid = \"bird-{i}\"\nwingspan_m = 1.0\nmass_kg = 0.6\n\
             body_rcs_dbsm = -20.0\nmotion = {{ type = \"linear\", start = [35.0, 5.0, 5.0], velocity = [{v:?}, 2.0, 0.0] }}\n\n"
        );
    }
    simulate(dir, "k", &scene, "runs", None);
    let models = dir.join("models");
    std::fs::create_dir(&models).unwrap();
    let model = models.join("m.json");
    let old = std::fs::read("models/default.json").unwrap();
    let mut outcomes = (0, 0);
    for delay_ms in [0u64, 20, 60, 150, 300, 600, 1000, 1600, 2500] {
        std::fs::write(&model, &old).unwrap();
        let mut child = Command::new(bin_path())
            .args(["train"])
            .arg(dir.join("runs"))
            .args(["--model"])
            .arg(&model)
            .args(["--trees", "40", "--folds", "0"])
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .unwrap();
        std::thread::sleep(std::time::Duration::from_millis(delay_ms));
        let _ = child.kill(); // SIGKILL on Unix
        let status = child.wait().unwrap();
        let now = std::fs::read(&model).expect("the model file is still there");
        if now == old {
            outcomes.0 += 1;
        } else {
            // replaced: it must be a whole model that loads
            let o = run(&[
                "classify",
                dir.join("runs/k-rot-0.sigmf-meta").to_str().unwrap(),
                "--model",
                model.to_str().unwrap(),
            ]);
            ok(&o);
            assert!(status.success(), "a replaced model from a killed run");
            outcomes.1 += 1;
        }
        assert!(
            temporaries(&models).is_empty(),
            "after a kill at {delay_ms} ms: {:?}",
            temporaries(&models)
        );
    }
    assert!(outcomes.0 > 0, "no run was killed before it finished");
}

/// A write cut short by the file-size limit (`ulimit -f`, POSIX shell; SIGXFSZ ignored
/// so the write fails with EFBIG, then again with the signal's default action, which
/// kills the process): the earlier recording of the same name is left byte for byte,
/// and no temporary or partial file is left.
#[test]
fn size_limited_write_leaves_no_partial_output() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let scene = write(dir, "s.toml", &k24_scene("s", "ci16_le"));
    let out = dir.join("runs");
    let first = simulate(dir, "s", &k24_scene("s", "ci16_le"), "runs", Some(1)).remove(0);
    let (meta0, data0) = (
        std::fs::read(&first).unwrap(),
        std::fs::read(data_of(&first)).unwrap(),
    );
    assert!(data0.len() > 1 << 20, "the recording must exceed the limit");
    for ignore in [true, false] {
        let script = format!(
            "{}ulimit -f 512; exec \"$0\" \"$@\"",
            if ignore { "trap '' XFSZ; " } else { "" }
        );
        let o = Command::new("sh")
            .arg("-c")
            .arg(&script)
            .arg(bin_path())
            .args(["simulate", "--scene"])
            .arg(&scene)
            .arg("--out")
            .arg(&out)
            .args(["--seed", "2"])
            .output()
            .unwrap();
        assert!(!o.status.success(), "the limited run must fail");
        if ignore {
            let line = assert_one_error(&o, 1, &["runs/s.sigmf-data"]);
            assert!(
                !line.contains(".s.sigmf-data."),
                "names a temporary: {line}"
            );
        }
        assert_eq!(std::fs::read(&first).unwrap(), meta0);
        assert_eq!(std::fs::read(data_of(&first)).unwrap(), data0);
        assert!(temporaries(&out).is_empty(), "{:?}", temporaries(&out));
        let names: Vec<_> = std::fs::read_dir(&out).unwrap().flatten().collect();
        assert_eq!(names.len(), 2, "only the old recording's two files");
    }
}

// ---------------------------------------------------------------------------------------
// 2. Bad samples
// ---------------------------------------------------------------------------------------

/// NaN and infinite samples in a cf32 recording: `info` counts them exactly; `classify`
/// and `features` run, every JSON number is finite, no feature is NaN, and the target is
/// still found (IEEE 754-2008: NaN and ±Inf are the exponent-all-ones encodings).
#[test]
fn nonfinite_samples_are_counted_and_never_reach_the_output() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let rec = simulate(dir, "nf", &k24_scene("nf", "cf32_le"), "runs", None).remove(0);
    let mut d = std::fs::read(data_of(&rec)).unwrap();
    let samples = d.len() / 8;
    let bad = [f32::NAN, f32::INFINITY, f32::NEG_INFINITY, 3.0e38];
    let mut patched = 0u64;
    // a stretch of 20 chirps all NaN, and scattered bad parts elsewhere
    let n = K24_N;
    for s in (1000 * n)..(1020 * n) {
        d[s * 8..s * 8 + 4].copy_from_slice(&f32::NAN.to_le_bytes());
        patched += 1;
    }
    for (k, s) in (0..samples).step_by(977).enumerate() {
        if (1000 * n..1020 * n).contains(&s) {
            continue;
        }
        let part = s * 8 + 4 * (k % 2);
        d[part..part + 4].copy_from_slice(&bad[k % bad.len()].to_le_bytes());
        patched += 1;
    }
    std::fs::write(data_of(&rec), &d).unwrap();
    let r = rec.to_str().unwrap();
    let info = ok_json(&run(&["info", r, "--format", "json"]));
    assert_eq!(info["recordings"][0]["nonfinite_samples"], patched);
    assert_eq!(info["recordings"][0]["clipped_samples"], 0);
    let v = ok_json(&run(&["classify", r, "--format", "json"]));
    let mut nums = Vec::new();
    numbers(&v, &mut nums);
    assert!(nums.iter().all(|x| x.is_finite()));
    let tracks = v["recordings"][0]["tracks"].as_array().unwrap();
    assert!(
        tracks
            .iter()
            .any(|t| (num(t, "range_m") - 42.4).abs() < 5.0),
        "the rotorcraft (40 m to 44.8 m) is still tracked: {v}"
    );
    for t in tracks {
        assert!(t["confidence"].as_f64().is_some_and(f64::is_finite), "{t}");
    }
    let csv = dir.join("f.csv");
    ok(&run(&["features", r, "--out", csv.to_str().unwrap()]));
    let text = std::fs::read_to_string(&csv).unwrap();
    assert!(text.lines().count() >= 2);
    assert!(
        !text.to_lowercase().contains("nan") && !text.contains("inf"),
        "{text}"
    );
}

/// A ci16 range-profile recording whose first five range cells (30-45 m) are saturated
/// for 0.4 s (a strong return near the radar driving a fixed-gain receiver into clipping:
/// common practice in the trade to leave the gain fixed): `info` counts the clipped
/// samples exactly (ci16 full scale: -32768 and 32767, two's complement 16 bit), and the
/// hovering rotorcraft at 150 m is still tracked and labelled as in the clean recording.
#[test]
fn clipped_stretch_near_the_radar_still_classifies_the_target_elsewhere() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let rec = simulate(dir, "cl", &x94_hover("cl"), "runs", None).remove(0);
    let r = rec.to_str().unwrap();
    let label_near = |v: &Value, range: f64| -> Option<String> {
        v["recordings"][0]["tracks"]
            .as_array()
            .unwrap()
            .iter()
            .find(|t| (num(t, "range_m") - range).abs() < 6.0)
            .map(|t| t["label"].as_str().unwrap().to_string())
    };
    let clean = ok_json(&run(&["classify", r, "--format", "json"]));
    assert_eq!(
        label_near(&clean, 150.3).as_deref(),
        Some("rotorcraft"),
        "{clean}"
    );

    let d = std::fs::read(data_of(&rec)).unwrap();
    let mut v: Vec<i16> = d
        .chunks_exact(2)
        .map(|b| i16::from_le_bytes([b[0], b[1]]))
        .collect();
    let n = X94_N;
    for m in 2000..6000 {
        for cell in 0..5 {
            for part in 0..2 {
                let i = (m * n + cell) * 2 + part;
                v[i] = if v[i] >= 0 { i16::MAX } else { i16::MIN };
            }
        }
    }
    let clipped = v
        .chunks_exact(2)
        .filter(|z| z.iter().any(|&x| x == i16::MIN || x == i16::MAX))
        .count();
    assert!(clipped >= 4000 * 5);
    let bytes: Vec<u8> = v.iter().flat_map(|x| x.to_le_bytes()).collect();
    std::fs::write(data_of(&rec), bytes).unwrap();

    let info = ok_json(&run(&["info", r, "--format", "json"]));
    assert_eq!(info["recordings"][0]["clipped_samples"], clipped as u64);
    assert_eq!(info["recordings"][0]["nonfinite_samples"], 0);
    let table = ok(&run(&["info", r]));
    assert!(table.lines().next().unwrap().contains("clipped"), "{table}");
    let sat = ok_json(&run(&["classify", r, "--format", "json"]));
    assert_eq!(
        label_near(&sat, 150.3).as_deref(),
        Some("rotorcraft"),
        "{sat}"
    );
    let mut nums = Vec::new();
    numbers(&sat, &mut nums);
    assert!(nums.iter().all(|x| x.is_finite()));
}

// ---------------------------------------------------------------------------------------
// 3. Limits before allocation
// ---------------------------------------------------------------------------------------

/// Declared sizes and counts beyond the caps of docs/output-format.md ("Limits") are
/// refused in one line naming the file, the key and the value.
#[test]
fn limits_are_refused_naming_file_key_and_value() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let good = simulate(dir, "g", &k24_scene("g", "ci16_le"), "runs", None).remove(0);
    let meta = read_meta(&good);
    let data = std::fs::read(data_of(&good)).unwrap();
    let put = |name: &str, m: &Value| {
        let p = dir.join(format!("{name}.sigmf-meta"));
        std::fs::write(&p, m.to_string()).unwrap();
        std::fs::write(data_of(&p), &data).unwrap();
        p
    };
    // too many annotations
    let mut m = meta.clone();
    let one = m["annotations"][0].clone();
    m["annotations"] = Value::Array(vec![one; 100_001]);
    let p = put("many", &m);
    assert_one_error(
        &run(&["info", p.to_str().unwrap()]),
        1,
        &["many.sigmf-meta", "annotations", "100001"],
    );
    // nesting too deep
    let mut m = meta.clone();
    let mut deep = Value::from(1);
    for _ in 0..70 {
        deep = Value::Array(vec![deep]);
    }
    m["annotations"][0]["rotorsift:truth"] = serde_json::json!({ "x": deep });
    let p = put("deep", &m);
    assert_one_error(
        &run(&["info", p.to_str().unwrap()]),
        1,
        &["deep.sigmf-meta", "depth = 74", "at most 64"],
    );
    // a declared chirp length beyond the cap
    let mut m = meta.clone();
    m["global"]["rotorsift:samples_per_chirp"] = Value::from(1u64 << 40);
    let p = put("wide", &m);
    assert_one_error(
        &run(&["info", p.to_str().unwrap()]),
        1,
        &[
            "wide.sigmf-meta",
            "rotorsift:samples_per_chirp",
            "1099511627776",
        ],
    );
    // too many channels
    let mut m = meta.clone();
    m["global"]["core:num_channels"] = Value::from(1u64 << 50);
    let p = put("chan", &m);
    assert_one_error(
        &run(&["info", p.to_str().unwrap()]),
        1,
        &["chan.sigmf-meta", "core:num_channels", "1125899906842624"],
    );
    // a model with too many trees
    let mut mv: Value =
        serde_json::from_str(&std::fs::read_to_string("models/default.json").unwrap()).unwrap();
    let t0 = mv["forest"]["trees"][0].clone();
    mv["forest"]["trees"] = Value::Array(vec![t0; 10_001]);
    let mp = dir.join("big-model.json");
    std::fs::write(&mp, mv.to_string()).unwrap();
    assert_one_error(
        &run(&[
            "classify",
            good.to_str().unwrap(),
            "--model",
            mp.to_str().unwrap(),
        ]),
        1,
        &["big-model.json", "forest.trees", "10001"],
    );
    // a scene file over 1 MiB
    let big = format!("{}{}", k24_scene("b", "ci16_le"), "#\n".repeat(600_000));
    let sp = write(dir, "big.toml", &big);
    let o = run(&[
        "simulate",
        "--scene",
        sp.to_str().unwrap(),
        "--out",
        dir.join("o").to_str().unwrap(),
    ]);
    assert_one_error(&o, 1, &["big.toml", "scene file", "1200"]);
    // a scene with a chirp length beyond the cap
    let wide =
        k24_scene("w", "ci16_le").replace("samples_per_chirp = 64", "samples_per_chirp = 100000");
    let sp = write(dir, "wide.toml", &wide);
    let o = run(&[
        "simulate",
        "--scene",
        sp.to_str().unwrap(),
        "--out",
        dir.join("o").to_str().unwrap(),
    ]);
    assert_one_error(&o, 1, &["wide.toml", "samples_per_chirp", "100000"]);
}

// ---------------------------------------------------------------------------------------
// 5. Batch manners
// ---------------------------------------------------------------------------------------

/// Three good recordings and two bad ones in one batch: every batch command reports each
/// bad one in a line, processes the good ones, prints the summary line
/// `rotorsift: 2 of 5 recordings failed` last and exits 1.
#[test]
fn batch_reports_bad_recordings_processes_the_rest_and_counts_them() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let mut scene = format!("seed = 9\n\n{}", k24_radar("ci16_le"));
    for i in 0..3 {
        scene += &format!("[[run]]\nname = \"b{i}\"\nduration_s = 0.8\n\n");
        scene += &rotorcraft(
            "run.object",
            "quad",
            80.0,
            "{ type = \"linear\", start = [40.0, 0.0, 0.0], velocity = [6.0, 0.0, 0.0] }",
        );
    }
    simulate(dir, "b", &scene, "runs", None);
    let runs = dir.join("runs");
    // a truncated data file, and metadata that is not JSON
    let d = std::fs::read(runs.join("b0.sigmf-data")).unwrap();
    std::fs::write(runs.join("bad-short.sigmf-data"), &d[..d.len() - 3]).unwrap();
    std::fs::copy(
        runs.join("b0.sigmf-meta"),
        runs.join("bad-short.sigmf-meta"),
    )
    .unwrap();
    std::fs::write(runs.join("bad-json.sigmf-meta"), "{ not json").unwrap();
    std::fs::write(runs.join("bad-json.sigmf-data"), &d).unwrap();
    let r = runs.to_str().unwrap();
    let csv = dir.join("f.csv");
    let audit = dir.join("audit");
    let cases: Vec<(Vec<&str>, Option<usize>)> = vec![
        (vec!["info", r, "--format", "json"], Some(3)),
        (vec!["detect", r, "--format", "json"], Some(3)),
        (vec!["classify", r, "--format", "json"], Some(3)),
        (vec!["evaluate", r, "--format", "json"], None),
        (vec!["features", r, "--out", csv.to_str().unwrap()], None),
        (vec!["audit", r, "--out", audit.to_str().unwrap()], None),
    ];
    for (args, recordings) in cases {
        let o = run(&args);
        assert_no_panic(&o);
        assert_eq!(o.status.code(), Some(1), "{args:?}: {}", stderr(&o));
        let err = stderr(&o);
        let errors: Vec<&str> = err
            .lines()
            .filter(|l| l.starts_with("rotorsift: error:"))
            .collect();
        assert_eq!(errors.len(), 2, "{args:?}: {err}");
        assert!(errors.iter().any(|l| l.contains("bad-short")), "{err}");
        assert!(errors.iter().any(|l| l.contains("bad-json")), "{err}");
        assert_eq!(
            err.lines()
                .filter(|l| l.contains("recordings failed"))
                .collect::<Vec<_>>(),
            ["rotorsift: 2 of 5 recordings failed"],
            "{args:?}: {err}"
        );
        if let Some(n) = recordings {
            let v: Value = serde_json::from_slice(&o.stdout).unwrap();
            assert_eq!(v["recordings"].as_array().unwrap().len(), n, "{args:?}");
        }
    }
    assert!(csv.is_file() && audit.join("index.html").is_file());
}
