//! Resolves the INPUT arguments of every command (docs/recording-format.md): a `.sigmf-meta` path,
//! a `.sigmf-data` path, the base path without extension, or a directory (every
//! `*.sigmf-meta` below it, recursively, sorted by path).

use std::path::{Path, PathBuf};

use crate::error::{Error, Result};

/// The `.sigmf-meta` paths named by `inputs`, in order (directories expanded and sorted),
/// each recording once.
pub fn resolve_inputs(inputs: &[PathBuf]) -> Result<Vec<PathBuf>> {
    let mut out = Vec::new();
    for p in inputs {
        if p.is_dir() {
            let mut found = Vec::new();
            walk(p, &mut found)?;
            found.sort();
            if found.is_empty() {
                return Err(Error::format(
                    p,
                    "directory holds no *.sigmf-meta recordings",
                ));
            }
            out.extend(found);
        } else {
            out.push(meta_path_of(p)?);
        }
    }
    // A recording named twice (e.g. NAME.sigmf-meta and NAME.sigmf-data from a shell glob)
    // is analysed once, at its first place.
    let mut seen = std::collections::HashSet::new();
    out.retain(|p| seen.insert(p.clone()));
    Ok(out)
}

fn meta_path_of(p: &Path) -> Result<PathBuf> {
    let name = p.to_string_lossy();
    let meta = if name.ends_with(".sigmf-meta") {
        p.to_path_buf()
    } else if name.ends_with(".sigmf-data") {
        p.with_extension("sigmf-meta")
    } else {
        super::writer::with_suffix(p, ".sigmf-meta")
    };
    if meta.is_file() {
        Ok(meta)
    } else {
        Err(Error::format(
            p,
            "no such recording (expected NAME.sigmf-meta, NAME.sigmf-data, NAME or a directory)",
        ))
    }
}

fn walk(dir: &Path, out: &mut Vec<PathBuf>) -> Result<()> {
    let rd = std::fs::read_dir(dir).map_err(|e| Error::io(dir, e))?;
    for entry in rd {
        let entry = entry.map_err(|e| Error::io(dir, e))?;
        let path = entry.path();
        if path.is_dir() {
            walk(&path, out)?;
        } else if path.to_string_lossy().ends_with(".sigmf-meta") {
            out.push(path);
        }
    }
    Ok(())
}
