//! The model file's refusals: wrong format name, a newer format_version, features or
//! feature settings that differ from the running build's, a corrupt forest; that a
//! failed save leaves an existing model untouched; and that a save over an existing model
//! at the same path replaces it whole by a rename (POSIX rename(2) atomicity, common
//! practice), never by rewriting the old file in place.

use rotorsift::model::{Dataset, Forest, ForestParams, ModelFile};
use serde_json::{json, Value};
use std::path::Path;

fn model() -> ModelFile {
    let rows: Vec<Vec<f64>> = (0..40).map(|i| vec![i as f64, (i % 7) as f64]).collect();
    let labels: Vec<&str> = (0..40)
        .map(|i| if i < 20 { "bird" } else { "rotorcraft" })
        .collect();
    let groups: Vec<String> = (0..40).map(|i| format!("r{}", i / 5)).collect();
    let names = vec!["speed".to_string(), "flash".to_string()];
    let d = Dataset::from_rows(&rows, &labels, &groups, names.clone()).unwrap();
    let all: Vec<usize> = (0..d.len()).collect();
    let p = ForestParams {
        trees: 5,
        ..ForestParams::default()
    };
    let f = Forest::fit(&d, &all, &p).unwrap();
    ModelFile::new(f, d.class_names, names, settings(), json!({})).unwrap()
}

fn settings() -> Value {
    json!({"stft": {"window": 256, "hop": 64}, "cfar": "os"})
}

fn names(v: &[&str]) -> Vec<String> {
    v.iter().map(|s| s.to_string()).collect()
}

fn err_of(text: &str) -> String {
    ModelFile::from_json_str(text, Path::new("m.json"))
        .unwrap_err()
        .to_string()
}

#[test]
fn compatible_model_is_accepted() {
    model()
        .check_compatible(&names(&["speed", "flash"]), &settings())
        .unwrap();
}

#[test]
fn mismatching_features_are_named() {
    let m = model();
    let e = m
        .check_compatible(&names(&["speed", "cadence"]), &settings())
        .unwrap_err()
        .to_string();
    assert_eq!(
        e,
        "model does not fit these features: feature 1 is 'flash' in the model but 'cadence' here"
    );
    let e = m
        .check_compatible(&names(&["speed"]), &settings())
        .unwrap_err()
        .to_string();
    assert!(e.contains("extra feature 1 'flash'"), "{e}");
    let e = m
        .check_compatible(&names(&["speed", "flash", "tip"]), &settings())
        .unwrap_err()
        .to_string();
    assert!(e.contains("feature 2 'tip' is missing"), "{e}");
    assert_eq!(e.lines().count(), 1);
}

#[test]
fn mismatching_settings_are_named() {
    let m = model();
    let f = names(&["speed", "flash"]);
    let e = m
        .check_compatible(
            &f,
            &json!({"stft": {"window": 512, "hop": 64}, "cfar": "os"}),
        )
        .unwrap_err()
        .to_string();
    assert_eq!(
        e,
        "model does not fit these features: setting 'stft.window' is 256 in the model but 512 here"
    );
    let e = m
        .check_compatible(&f, &json!({"stft": {"window": 256}, "cfar": "os"}))
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("'stft.hop' is 64 in the model but absent here"),
        "{e}"
    );
}

#[test]
fn newer_version_and_foreign_files_are_refused() {
    let m = model();
    let mut v: Value = serde_json::from_str(&m.to_json_string().unwrap()).unwrap();
    v["format_version"] = json!(2);
    v["forest"] = json!("some future layout");
    let e = err_of(&v.to_string());
    assert!(
        e.starts_with("m.json: model format_version 2 is newer than this build supports (1)"),
        "{e}"
    );
    v["format"] = json!("something-else");
    assert!(err_of(&v.to_string()).contains("not a rotorsift model"));
    assert!(err_of("{not json").contains("not valid JSON"));
}

#[test]
fn corrupt_forest_is_refused() {
    let m = model();
    let mut v: Value = serde_json::from_str(&m.to_json_string().unwrap()).unwrap();
    v["forest"]["trees"][0]["feature"][0] = json!(7);
    let e = err_of(&v.to_string());
    assert!(
        e.contains("tree 0: tree node 0 splits on feature 7 of 2"),
        "{e}"
    );
    let mut v: Value = serde_json::from_str(&m.to_json_string().unwrap()).unwrap();
    v["class_names"] = json!(["bird"]);
    assert!(err_of(&v.to_string()).contains("1 class names but its forest has 2 classes"));
}

#[test]
fn failed_save_keeps_existing_file() {
    let m = model();
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("m.json");
    std::fs::write(&path, "old").unwrap();
    // a directory in place of the target makes the rename fail after the temp write
    let blocked = dir.path().join("sub");
    std::fs::create_dir(&blocked).unwrap();
    std::fs::write(blocked.join("x"), "x").unwrap();
    assert!(m.save(&blocked).is_err());
    assert_eq!(std::fs::read_to_string(&path).unwrap(), "old");
    let left: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
    assert_eq!(left.len(), 2, "temp file removed");
    m.save(&path).unwrap();
    assert_eq!(ModelFile::load(&path).unwrap(), m);
}

/// Saving a second model to the same path as a first: the path then holds the second,
/// whole, in a new file (another inode), while a handle opened on the first before the
/// save still reads the first, byte for byte — the bytes were written elsewhere and
/// renamed over the name (rename(2) is atomic: a reader of the path sees the old file or
/// the new one, never a mix). A save that truncated and rewrote the file in place would
/// show the second model, or part of it, through the old handle. No temporary is left.
#[cfg(unix)]
#[test]
fn save_over_the_same_path_replaces_the_file_by_rename() {
    use std::io::Read;
    use std::os::unix::fs::MetadataExt;
    let first = model();
    let mut second = model();
    second.training = json!({"note": "the second model"});
    assert_ne!(first, second);
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("m.json");
    first.save(&path).unwrap();
    let first_text = std::fs::read_to_string(&path).unwrap();
    let mut old = std::fs::File::open(&path).unwrap();
    let old_inode = old.metadata().unwrap().ino();

    second.save(&path).unwrap();

    assert_eq!(
        ModelFile::load(&path).unwrap(),
        second,
        "the path holds the second model"
    );
    assert_ne!(
        std::fs::metadata(&path).unwrap().ino(),
        old_inode,
        "the second model was written into the first's file, not renamed over it"
    );
    let mut through_old = String::new();
    old.read_to_string(&mut through_old).unwrap();
    assert_eq!(
        through_old, first_text,
        "the first file was changed in place"
    );
    let names: Vec<_> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name())
        .collect();
    assert_eq!(
        names,
        vec![std::ffi::OsString::from("m.json")],
        "temporaries left"
    );
}
