//! Caps on what an input may declare, checked before anything is allocated for it
//! (docs/output-format.md, "Limits"). Each refusal is one line naming the file, the key
//! and the value.

use std::path::Path;

use serde_json::Value;

use crate::error::{Error, Result};

/// Largest `.sigmf-meta` file read, bytes.
pub const MAX_META_BYTES: u64 = 64 << 20;
/// Largest model file read, bytes (the built-in model is about 0.2 MB).
pub const MAX_MODEL_BYTES: u64 = 256 << 20;
/// Largest feature table read, bytes (a track row is about 1 kB: a million tracks).
pub const MAX_TABLE_BYTES: u64 = 1 << 30;
/// Largest scene file read, bytes.
pub const MAX_SCENE_BYTES: u64 = 1 << 20;
/// Deepest nesting of JSON arrays and objects accepted.
pub const MAX_JSON_DEPTH: usize = 64;
/// Most annotations in one recording.
pub const MAX_ANNOTATIONS: usize = 100_000;
/// Most channels in one recording.
pub const MAX_CHANNELS: u64 = 1024;
/// Most samples (or range cells) per chirp, recordings and scenes.
pub const MAX_SAMPLES_PER_CHIRP: usize = 1 << 16;
/// Most trees in a model's forest.
pub const MAX_TREES: usize = 10_000;
/// Most nodes in one tree of a model.
pub const MAX_TREE_NODES: usize = 1_000_000;
/// Most classes of a model.
pub const MAX_CLASSES: usize = 1_000;
/// Most features of a model.
pub const MAX_FEATURES: usize = 10_000;
/// Most runs in a scene file, and objects in one run.
pub const MAX_SCENE_RUNS: usize = 10_000;
/// Most objects in one run of a scene.
pub const MAX_SCENE_OBJECTS: usize = 10_000;

/// Reads a text file of at most `max` bytes; `what` names the kind of file in the error.
pub fn read_text_capped(path: &Path, max: u64, what: &str) -> Result<String> {
    use std::io::Read;
    let f = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
    let len = f.metadata().map_err(|e| Error::io(path, e))?.len();
    if len > max {
        return Err(Error::format(
            path,
            format!("{what} is {len} bytes: at most {max} allowed"),
        ));
    }
    let mut s = String::with_capacity(len as usize);
    // take(max + 1): a file that grows while being read is still caught
    f.take(max + 1)
        .read_to_string(&mut s)
        .map_err(|e| Error::io(path, e))?;
    if s.len() as u64 > max {
        return Err(Error::format(
            path,
            format!("{what} is over {max} bytes: at most {max} allowed"),
        ));
    }
    Ok(s)
}

/// Nesting depth of a JSON value (a scalar is 0, `[]` is 1), without recursion.
pub fn json_depth(v: &Value) -> usize {
    let mut max = 0;
    let mut stack = vec![(v, 0usize)];
    while let Some((v, d)) = stack.pop() {
        match v {
            Value::Array(a) => {
                max = max.max(d + 1);
                stack.extend(a.iter().map(|x| (x, d + 1)));
            }
            Value::Object(o) => {
                max = max.max(d + 1);
                stack.extend(o.values().map(|x| (x, d + 1)));
            }
            _ => {}
        }
    }
    max
}

/// Refuses JSON nested deeper than [`MAX_JSON_DEPTH`].
pub fn check_json_depth(v: &Value, path: &Path) -> Result<()> {
    let d = json_depth(v);
    if d > MAX_JSON_DEPTH {
        return Err(Error::format(
            path,
            format!("JSON nesting depth = {d}: at most {MAX_JSON_DEPTH} allowed"),
        ));
    }
    Ok(())
}

/// Refuses a JSON array at `key` longer than `max`.
pub fn check_len(v: Option<&Value>, key: &str, max: usize, path: &Path) -> Result<()> {
    if let Some(Value::Array(a)) = v {
        if a.len() > max {
            return Err(Error::format(
                path,
                format!("{key} has {} entries: at most {max} allowed", a.len()),
            ));
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn depth_counts_nesting() {
        assert_eq!(json_depth(&json!(1)), 0);
        assert_eq!(json_depth(&json!([])), 1);
        assert_eq!(json_depth(&json!({"a": [1, {"b": [[]]}]})), 5);
    }

    #[test]
    fn caps_name_file_key_and_value() {
        let d = tempfile::tempdir().unwrap();
        let p = d.path().join("big.toml");
        std::fs::write(&p, vec![b'#'; 100]).unwrap();
        let e = read_text_capped(&p, 99, "scene file")
            .unwrap_err()
            .to_string();
        assert!(e.contains("big.toml") && e.contains("100 bytes"), "{e}");
        assert_eq!(read_text_capped(&p, 100, "scene file").unwrap().len(), 100);
        let v = json!({"trees": [1, 2, 3]});
        let e = check_len(v.get("trees"), "forest.trees", 2, &p)
            .unwrap_err()
            .to_string();
        assert!(e.contains("forest.trees has 3 entries: at most 2"), "{e}");
        let mut deep = json!(0);
        for _ in 0..(MAX_JSON_DEPTH + 1) {
            deep = json!([deep]);
        }
        let e = check_json_depth(&deep, &p).unwrap_err().to_string();
        assert!(e.contains("depth = 65"), "{e}");
    }
}
