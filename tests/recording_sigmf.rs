//! Recordings written by the reference `sigmf` Python package (PyPI, version in
//! tests/fixtures/sigmf/expected.json; script tests/reference/make_sigmf_fixtures.py),
//! following docs/recording-format.md alone, are read with the right derived figures and samples;
//! malformed ones are refused with one clear line naming the key.

use std::path::{Path, PathBuf};

use rotorsift::recording::{
    resolve_inputs, Annotation, ChirpBlock, ChirpReader, DataType, RadarParams, RangeAxis,
    RecordingMeta, RecordingWriter,
};
use rustfft::num_complex::Complex32;
use serde_json::Value;

fn fixtures() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/sigmf")
}

fn expected() -> Value {
    let text = std::fs::read_to_string(fixtures().join("expected.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * b.abs().max(1e-30)
}

#[test]
fn reads_reference_recordings() {
    let exp = expected();
    let recs = exp["recordings"].as_object().unwrap();
    assert_eq!(recs.len(), 4);
    for (name, e) in recs {
        let meta = RecordingMeta::open(&fixtures().join(format!("{name}.sigmf-meta")))
            .unwrap_or_else(|err| panic!("{name}: {err}"));
        let p = &meta.params;
        assert_eq!(
            p.waveform().as_str(),
            e["waveform"].as_str().unwrap(),
            "{name}"
        );
        assert_eq!(meta.datatype.as_str(), e["datatype"].as_str().unwrap());
        assert_eq!(meta.chirps as u64, e["chirps"].as_u64().unwrap());
        assert_eq!(
            p.samples_per_chirp as u64,
            e["samples_per_chirp"].as_u64().unwrap()
        );
        for (got, key) in [
            (p.wavelength_m(), "wavelength_m"),
            (p.range_cell_m(), "range_cell_m"),
            (p.max_range_m(), "max_range_m"),
            (p.unambiguous_velocity_mps(), "unambiguous_velocity_mps"),
            (meta.duration_s(), "duration_s"),
        ] {
            let want = e[key].as_f64().unwrap();
            assert!(close(got, want, 1e-9), "{name} {key}: {got} vs {want}");
        }
        let labels: std::collections::BTreeMap<String, usize> =
            serde_json::from_value(e["labels"].clone()).unwrap();
        assert_eq!(meta.label_counts(), labels, "{name}");

        let ch = e["channel"].as_u64().unwrap() as usize;
        let mut rd = ChirpReader::open(&meta, ch).unwrap();
        let mut block = ChirpBlock::default();
        let mut all: Vec<Complex32> = Vec::new();
        // Blocks of 3 chirps: the last block is short; the whole file comes back in order.
        while rd.read_block(&mut block, 3).unwrap() > 0 {
            all.extend_from_slice(&block.data);
        }
        assert_eq!(all.len(), meta.chirps * p.samples_per_chirp);
        let first = e["first_samples"].as_array().unwrap();
        for (i, z) in first.iter().enumerate() {
            let (re, im) = (z[0].as_f64().unwrap(), z[1].as_f64().unwrap());
            assert!(
                (all[i].re as f64 - re).abs() < 1e-6 && (all[i].im as f64 - im).abs() < 1e-6,
                "{name} sample {i}: {:?} vs ({re}, {im})",
                all[i]
            );
        }
        let last = &e["last_sample"];
        let z = all.last().unwrap();
        assert!((z.re as f64 - last[0].as_f64().unwrap()).abs() < 1e-6);
        assert!((z.im as f64 - last[1].as_f64().unwrap()).abs() < 1e-6);
    }
}

#[test]
fn annotations_and_truth() {
    let meta = RecordingMeta::open(&fixtures().join("fmcw24_cf32.sigmf-meta")).unwrap();
    let a = &meta.annotations[0];
    assert_eq!((a.chirp_start, a.chirp_count), (0, 8));
    assert_eq!(a.label, "rotorcraft");
    assert_eq!(a.target_id.as_deref(), Some("t1"));
    assert_eq!(a.truth_bool("hovering"), Some(false));
    assert_eq!(a.truth_f64("radial_velocity_mps"), Some(-3.0));
    assert_eq!((a.range_min_m, a.range_max_m), (9.0, 11.0));
    assert_eq!(meta.annotations[1].chirp_start, 8);
    assert_eq!(meta.site.as_deref(), Some("fixture bench"));
}

#[test]
fn input_forms_resolve_to_the_same_recording() {
    let base = fixtures().join("fmcw24_cf32");
    let want = fixtures().join("fmcw24_cf32.sigmf-meta");
    for p in [
        base.clone(),
        want.clone(),
        fixtures().join("fmcw24_cf32.sigmf-data"),
    ] {
        assert_eq!(resolve_inputs(&[p]).unwrap(), vec![want.clone()]);
    }
    let dir = resolve_inputs(&[fixtures()]).unwrap();
    assert_eq!(dir.len(), 4);
    assert!(dir.windows(2).all(|w| w[0] < w[1]), "sorted by path");
    assert!(resolve_inputs(&[fixtures().join("nope")]).is_err());
    // The same recording named twice (meta and data, as a shell glob gives) comes once.
    let twice =
        resolve_inputs(&[base.with_extension("sigmf-data"), want.clone(), fixtures()]).unwrap();
    assert_eq!(twice.len(), 4);
    assert_eq!(twice[0], want);
}

/// Copies a fixture to a temp dir with its metadata JSON edited by `edit`.
fn malformed(edit: impl Fn(&mut Value), data_bytes: Option<usize>) -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let src = fixtures().join("fmcw24_cf32");
    let mut meta: Value =
        serde_json::from_str(&std::fs::read_to_string(src.with_extension("sigmf-meta")).unwrap())
            .unwrap();
    edit(&mut meta);
    let mpath = dir.path().join("bad.sigmf-meta");
    std::fs::write(&mpath, serde_json::to_string(&meta).unwrap()).unwrap();
    let mut data = std::fs::read(src.with_extension("sigmf-data")).unwrap();
    if let Some(n) = data_bytes {
        data.truncate(n);
    }
    std::fs::write(dir.path().join("bad.sigmf-data"), data).unwrap();
    (dir, mpath)
}

fn refusal(edit: impl Fn(&mut Value), data_bytes: Option<usize>) -> String {
    let (_d, p) = malformed(edit, data_bytes);
    let e = RecordingMeta::open(&p)
        .expect_err("must be refused")
        .to_string();
    assert!(!e.contains('\n'), "one line: {e}");
    assert!(e.contains("bad.sigmf-meta"), "names the file: {e}");
    e
}

#[test]
fn malformed_recordings_are_refused_naming_the_key() {
    let g = |k: &'static str, v: Value| move |m: &mut Value| m["global"][k] = v.clone();
    let cases: Vec<(String, &str)> = vec![
        (
            refusal(g("core:datatype", "rf32_le".into()), None),
            "core:datatype = \"rf32_le\"",
        ),
        (
            refusal(g("rotorsift:waveform", "cw".into()), None),
            "rotorsift:waveform",
        ),
        (
            refusal(g("rotorsift:samples_per_chirp", 4.into()), None),
            "rotorsift:samples_per_chirp = 4",
        ),
        (
            refusal(g("rotorsift:samples_per_chirp", 2.5.into()), None),
            "rotorsift:samples_per_chirp = 2.5",
        ),
        (
            refusal(g("rotorsift:chirp_interval_s", (-1.0).into()), None),
            "rotorsift:chirp_interval_s = -1",
        ),
        (
            refusal(g("rotorsift:sweep_bandwidth_hz", "wide".into()), None),
            "rotorsift:sweep_bandwidth_hz",
        ),
        (
            refusal(g("core:extensions", serde_json::json!([])), None),
            "core:extensions",
        ),
        (
            refusal(g("core:version", "0.0.2".into()), None),
            "core:version",
        ),
        (
            refusal(
                |m| {
                    m["global"]
                        .as_object_mut()
                        .unwrap()
                        .remove("core:sample_rate");
                },
                None,
            ),
            "lacks required key core:sample_rate",
        ),
        (
            refusal(|m| m["captures"] = serde_json::json!([]), None),
            "captures",
        ),
        (
            refusal(|m| m["captures"][0]["core:frequency"] = 0.into(), None),
            "core:frequency = 0",
        ),
        (
            refusal(
                |m| m["annotations"][0]["core:sample_count"] = 100.into(),
                None,
            ),
            "core:sample_count = 100",
        ),
        (
            refusal(
                |m| m["annotations"][1]["core:sample_start"] = 480.into(),
                None,
            ),
            "beyond the recording",
        ),
        (
            refusal(
                |m| m["annotations"][0]["core:label"] = "rotor craft".into(),
                None,
            ),
            "core:label",
        ),
        (
            refusal(
                |m| m["annotations"][0]["rotorsift:range_max_m"] = 1.into(),
                None,
            ),
            "rotorsift:range_max_m",
        ),
        (
            refusal(
                |m| {
                    m["annotations"][0]
                        .as_object_mut()
                        .unwrap()
                        .remove("rotorsift:range_min_m");
                },
                None,
            ),
            "rotorsift:range_min_m",
        ),
        (
            refusal(|_| {}, Some(4096 - 8)),
            "not a whole number of chirps",
        ),
        (
            refusal(|_| {}, Some(4095)),
            "not a whole number of cf32_le samples",
        ),
        (
            refusal(|m| m["global"]["core:num_channels"] = 3.into(), None),
            "num_channels",
        ),
        (refusal(|m| m["global"] = "x".into(), None), "global"),
    ];
    for (err, want) in cases {
        assert!(err.contains(want), "error {err:?} should mention {want:?}");
    }
    let (_d, p) = malformed(|_| {}, None);
    std::fs::write(&p, "{not json").unwrap();
    assert!(RecordingMeta::open(&p)
        .unwrap_err()
        .to_string()
        .contains("not valid JSON"));
}

#[test]
fn channel_out_of_range_is_refused() {
    let meta = RecordingMeta::open(&fixtures().join("fmcw77_ci16_2ch.sigmf-meta")).unwrap();
    assert_eq!(meta.num_channels, 2);
    let e = ChirpReader::open(&meta, 2).err().unwrap().to_string();
    assert!(e.contains("--channel 2"), "{e}");
}

#[test]
fn written_recordings_read_back() {
    let dir = tempfile::tempdir().unwrap();
    let params = RadarParams {
        carrier_hz: 9.4e9,
        sample_rate_hz: 0.0,
        samples_per_chirp: 8,
        chirp_interval_s: 1e-4,
        range_axis: RangeAxis::RangeProfile {
            range_cell_m: 3.0,
            range_start_m: 30.0,
        },
    };
    for dt in [
        DataType::Cf32Le,
        DataType::Ci16Le,
        DataType::Ci8,
        DataType::Cf64Le,
    ] {
        let base = dir.path().join(dt.as_str());
        let mut w = RecordingWriter::create(&base, &params, dt, 1.0).unwrap();
        let samples: Vec<Complex32> = (0..8 * 5)
            .map(|i| Complex32::new((i as f32 * 0.37).sin() * 0.5, (i as f32 * 0.11).cos() * 0.5))
            .collect();
        w.write_chirps(&samples).unwrap();
        assert!(w.write_chirps(&samples[..3]).is_err());
        let ann = Annotation {
            chirp_start: 1,
            chirp_count: 3,
            label: "bird".into(),
            range_min_m: 40.0,
            range_max_m: 45.0,
            target_id: Some("b1".into()),
            truth: Some(serde_json::json!({"wingbeat_hz": 6.5})),
        };
        let mpath = w
            .finish(std::slice::from_ref(&ann), &serde_json::Map::new())
            .unwrap();
        let meta = RecordingMeta::open(&mpath).unwrap();
        assert_eq!(meta.params, params);
        assert_eq!(meta.chirps, 5);
        assert_eq!(meta.annotations, vec![ann]);
        let mut rd = ChirpReader::open(&meta, 0).unwrap();
        let mut b = ChirpBlock::default();
        rd.read_block(&mut b, 100).unwrap();
        // Quantisation step of the integer formats: 1/32767 and 1/127 of full scale.
        let tol = match dt {
            DataType::Ci8 => 0.5 / 127.0 + 1e-6,
            DataType::Ci16Le => 0.5 / 32767.0 + 1e-7,
            _ => 1e-7,
        };
        for (a, b) in b.data.iter().zip(&samples) {
            assert!((a - b).norm() <= tol * 1.5, "{dt:?}");
        }
        let stray: Vec<_> = std::fs::read_dir(dir.path())
            .unwrap()
            .flatten()
            .filter(|e| e.file_name().to_string_lossy().ends_with(".tmp"))
            .collect();
        assert!(stray.is_empty(), "temporaries left: {stray:?}");
    }
}
