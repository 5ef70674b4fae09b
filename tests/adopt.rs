//! `rotorsift adopt` (docs/recording-format.md, "Bring your own recordings"): a shipped
//! demo recording stripped of its `rotorsift:` keys and adopted with the shipped radar file
//! gives the original metadata back and the same `info` and `classify` output; a raw IQ
//! file adopted with a radar file reads as the recording it came from; conflicting keys, a
//! sample file that is not whole chirps and unknown radar keys are refused in one line,
//! exit 1, nothing written.
//!
//! Outside reference: the SigMF specification v1.x (open standard): `core:` keys, the
//! `core:extensions` declaration, `ci16_le` is 4 bytes a complex sample. The adopted output
//! is also validated with the `sigmf` Python package in .ci/run (scripts/check_sigmf.py).

mod common;

use std::path::{Path, PathBuf};

use common::*;
use serde_json::Value;

/// `rotorsift adopt INPUT --radar RADAR --out OUT`.
fn adopt(input: &Path, radar: &Path, out: &Path) -> std::process::Output {
    run(&[
        "adopt",
        input.to_str().unwrap(),
        "--radar",
        radar.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ])
}

fn demo(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("labelled-demo/recordings")
        .join(format!("{name}.sigmf-meta"))
}

fn radar_file(key: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("labelled-demo/radars")
        .join(format!("{key}.toml"))
}

/// Copies `meta` and its samples to `dir/NAME` with every `rotorsift:` global key and the
/// extension declaration removed: a plain SigMF recording (the annotations stay).
fn strip(meta: &Path, dir: &Path, name: &str) -> PathBuf {
    let mut v = read_meta(meta);
    let g = v["global"].as_object_mut().unwrap();
    g.retain(|k, _| !k.starts_with("rotorsift:"));
    g.remove("core:extensions");
    let out = dir.join(format!("{name}.sigmf-meta"));
    std::fs::write(&out, serde_json::to_string_pretty(&v).unwrap()).unwrap();
    std::fs::copy(data_of(meta), data_of(&out)).unwrap();
    out
}

/// A JSON document with every `path` field removed (the adopted copy lives elsewhere).
fn without_paths(mut v: Value) -> Value {
    fn walk(v: &mut Value) {
        match v {
            Value::Object(o) => {
                o.remove("path");
                o.values_mut().for_each(walk);
            }
            Value::Array(a) => a.iter_mut().for_each(walk),
            _ => {}
        }
    }
    walk(&mut v);
    v
}

fn adopt_ok(input: &Path, radar: &Path, out: &Path) -> PathBuf {
    let o = adopt(input, radar, out);
    let text = ok(&o);
    let p = PathBuf::from(text.trim());
    assert!(p.is_file(), "adopt printed {}", p.display());
    p
}

/// Both waveforms: the stripped recording adopted with the shipped radar file (plus the
/// recording's own `labels_complete`) has the original's metadata, key for key (the
/// simulator's informational `rotorsift:sim_*` keys aside), the same samples, and the same
/// `info` and `classify` output.
#[test]
fn stripped_demo_recording_adopts_back_to_the_original() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    for (rec, key, classify) in [
        ("holdout-h15-01-uav", "h15", true),
        ("holdout-h13-00-mixed", "h13", false),
    ] {
        let original = demo(rec);
        let plain = strip(&original, dir, rec);
        // the plain copy is not a rotorsift recording
        let o = run(&["info", plain.to_str().unwrap()]);
        assert_one_error(&o, 1, &["not a rotorsift recording"]);
        let radar = dir.join(format!("{key}.toml"));
        std::fs::write(
            &radar,
            std::fs::read_to_string(radar_file(key)).unwrap() + "labels_complete = true\n",
        )
        .unwrap();
        let out = dir.join(format!("out-{key}"));
        let adopted = adopt_ok(&plain, &radar, &out);
        assert_eq!(adopted, out.join(format!("{rec}.sigmf-meta")));

        let (a, b) = (read_meta(&original), read_meta(&adopted));
        let mut ga = a["global"].as_object().unwrap().clone();
        ga.retain(|k, _| !k.starts_with("rotorsift:sim_"));
        assert_eq!(&ga, b["global"].as_object().unwrap(), "{rec}: global keys");
        assert_eq!(a["captures"], b["captures"], "{rec}: captures");
        assert_eq!(a["annotations"], b["annotations"], "{rec}: annotations");
        assert_eq!(
            std::fs::read(data_of(&original)).unwrap(),
            std::fs::read(data_of(&adopted)).unwrap(),
            "{rec}: samples"
        );

        let info = |p: &Path| {
            without_paths(ok_json(&run(&[
                "info",
                p.to_str().unwrap(),
                "--format",
                "json",
            ])))
        };
        assert_eq!(info(&original), info(&adopted), "{rec}: info");
        if classify {
            let cl = |p: &Path| {
                without_paths(ok_json(&run(&[
                    "classify",
                    p.to_str().unwrap(),
                    "--format",
                    "json",
                ])))
            };
            let c = cl(&adopted);
            assert!(
                !c["recordings"][0]["tracks"].as_array().unwrap().is_empty(),
                "the demo recording has tracks"
            );
            assert_eq!(cl(&original), c, "{rec}: classify");
        }
    }
}

/// A small simulated recording on the 24 GHz FMCW radar of the test scenes.
fn small_recording(dir: &Path) -> PathBuf {
    let scene = format!(
        "name = \"small\"\nduration_s = 0.5\nseed = 5\n\n{}{}",
        k24_radar("ci16_le"),
        rotorcraft(
            "object",
            "quad-1",
            80.0,
            "{ type = \"linear\", start = [40.0, 0.0, 0.0], velocity = [6.0, 0.0, 0.0] }"
        )
    );
    simulate(dir, "small", &scene, "rec", Some(5)).remove(0)
}

/// The radar file of that radar, as a raw IQ file needs it.
fn k24_radar_file(dir: &Path, extra: &str) -> PathBuf {
    write(
        dir,
        "k24.toml",
        &format!(
            "waveform = \"fmcw-beat\"\nsamples_per_chirp = {K24_N}\nchirp_interval_s = {K24_T:e}\n\
             sweep_bandwidth_hz = {K24_B:e}\nsweep_duration_s = {K24_TC:e}\n\
             datatype = \"ci16_le\"\nsample_rate_hz = {K24_FS:e}\ncarrier_hz = {K24_FC:e}\n{extra}"
        ),
    )
}

/// A raw IQ file (the samples alone, no metadata) adopted with a radar file: `info` shows
/// the radar's figures (unambiguous speed λ/(4T), Richards 2014, from memory) and `detect`
/// finds the same tracks as on the recording the samples came from; the samples are
/// hard-linked on the same file system (same inode), not copied.
#[test]
fn raw_iq_file_adopts_with_the_radar_file() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let rec = small_recording(dir);
    let raw = dir.join("capture.iq");
    std::fs::copy(data_of(&rec), &raw).unwrap();
    let radar = k24_radar_file(dir, "site = \"test bench (fictional)\"\n");
    let out = dir.join("adopted");
    let o = adopt(&raw, &radar, &out);
    let meta = PathBuf::from(ok(&o).trim());
    assert_eq!(meta, out.join("capture.sigmf-meta"));
    assert!(stderr(&o).contains("linked"), "{}", stderr(&o));
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        assert_eq!(
            std::fs::metadata(&raw).unwrap().ino(),
            std::fs::metadata(data_of(&meta)).unwrap().ino(),
            "hard link"
        );
    }
    let v = ok_json(&run(&["info", meta.to_str().unwrap(), "--format", "json"]));
    let r = &v["recordings"][0];
    assert_eq!(r["site"], "test bench (fictional)");
    assert_eq!(r["datatype"], "ci16_le");
    assert_close(
        "unambiguous speed",
        num(r, "unambiguous_velocity_mps"),
        C / K24_FC / (4.0 * K24_T),
        1e-9,
    );
    assert_close("duration", num(r, "duration_s"), 0.5, K24_T);
    let det = |p: &Path| {
        without_paths(ok_json(&run(&[
            "detect",
            p.to_str().unwrap(),
            "--format",
            "json",
        ])))
    };
    let d = det(&meta);
    assert!(!d["recordings"][0]["tracks"].as_array().unwrap().is_empty());
    assert_eq!(det(&rec), d);
}

fn no_outputs(out: &Path) {
    let left: Vec<_> = std::fs::read_dir(out)
        .map(|rd| rd.flatten().map(|e| e.file_name()).collect())
        .unwrap_or_default();
    assert!(left.is_empty(), "adopt wrote {left:?}");
}

/// Refusals: one line, exit 1, nothing written — a radar value that differs from the
/// input's metadata (the line names the radar key and the SigMF key), a raw file that is
/// not a whole number of chirps (ci16_le is 4 bytes a sample: SigMF v1.x), an unknown
/// radar key, a raw file whose radar file lacks its SigMF keys, a missing required key.
#[test]
fn conflicts_bad_sizes_and_bad_radar_files_are_refused_writing_nothing() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let rec = small_recording(dir);
    let plain = strip(&rec, dir, "plain");
    let out = dir.join("out");

    let conflict = k24_radar_file(dir, "").with_file_name("conflict.toml");
    std::fs::write(
        &conflict,
        std::fs::read_to_string(k24_radar_file(dir, ""))
            .unwrap()
            .replace(
                &format!("sample_rate_hz = {K24_FS:e}"),
                "sample_rate_hz = 4e6",
            ),
    )
    .unwrap();
    let o = adopt(&plain, &conflict, &out);
    assert_one_error(&o, 1, &["sample_rate_hz", "core:sample_rate", "4000000"]);
    no_outputs(&out);

    let raw = dir.join("odd.iq");
    let mut bytes = std::fs::read(data_of(&rec)).unwrap();
    bytes.extend_from_slice(&[0, 0, 0, 0]); // one sample more than whole chirps
    std::fs::write(&raw, &bytes).unwrap();
    let radar = k24_radar_file(dir, "");
    let o = adopt(&raw, &radar, &out);
    let per_chirp = (K24_N * 4).to_string();
    assert_one_error(
        &o,
        1,
        &[
            "odd.iq",
            &bytes.len().to_string(),
            "whole number of chirps",
            &per_chirp,
        ],
    );
    no_outputs(&out);

    let unknown = write(
        dir,
        "unknown.toml",
        "waveform = \"fmcw-beat\"\nchirp_rate = 3\n",
    );
    let o = adopt(&plain, &unknown, &out);
    assert_one_error(&o, 1, &["unknown.toml", "chirp_rate"]);
    no_outputs(&out);

    let bare = write(
        dir,
        "bare.toml",
        &format!("waveform = \"fmcw-beat\"\nsamples_per_chirp = {K24_N}\n"),
    );
    let raw_ok = dir.join("whole.iq");
    std::fs::copy(data_of(&rec), &raw_ok).unwrap();
    let o = adopt(&raw_ok, &bare, &out);
    assert_one_error(&o, 1, &["bare.toml", "datatype"]);
    no_outputs(&out);

    // fmcw-beat needs its ramp duration (docs/recording-format.md, section 3)
    let lacking = write(
        dir,
        "lacking.toml",
        &std::fs::read_to_string(&radar)
            .unwrap()
            .lines()
            .filter(|l| !l.starts_with("sweep_duration_s"))
            .collect::<Vec<_>>()
            .join("\n"),
    );
    let o = adopt(&raw_ok, &lacking, &out);
    assert_one_error(&o, 1, &["rotorsift:sweep_duration_s"]);
    no_outputs(&out);
}
