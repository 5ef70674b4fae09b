//! The model file: versioned JSON holding the forest with the class and feature names
//! and the feature-extraction settings it was trained with, so a model is only applied
//! to features computed the same way. Written atomically ([`crate::atomic`]).

use super::domain::Domain;
use super::forest::Forest;
use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};
use serde_json::Value;
use std::path::Path;

/// Value of the `format` field.
pub const MODEL_FORMAT: &str = "rotorsift-model";
/// Newest `format_version` this build reads and the one it writes.
pub const MODEL_FORMAT_VERSION: u32 = 1;

/// A trained model as stored on disk.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ModelFile {
    /// Always [`MODEL_FORMAT`].
    pub format: String,
    /// [`MODEL_FORMAT_VERSION`] when written by this build.
    pub format_version: u32,
    /// `crate::VERSION` of the build that trained it.
    pub tool_version: String,
    /// Class names, the order of the forest's probabilities.
    pub class_names: Vec<String>,
    /// Feature names, the order of the forest's inputs.
    pub feature_names: Vec<String>,
    /// The feature-extraction settings the features were computed with.
    pub feature_settings: Value,
    /// Free-form training summary (data, split, held-out scores).
    pub training: Value,
    /// The fitted forest.
    pub forest: Forest,
    /// The features' training domain (absent in models from earlier builds: no check).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub domain: Option<Domain>,
}

impl ModelFile {
    /// Wraps a fitted forest; the name lists must match its classes and features.
    pub fn new(
        forest: Forest,
        class_names: Vec<String>,
        feature_names: Vec<String>,
        feature_settings: Value,
        training: Value,
    ) -> Result<ModelFile> {
        let m = ModelFile {
            format: MODEL_FORMAT.to_string(),
            format_version: MODEL_FORMAT_VERSION,
            tool_version: crate::VERSION.to_string(),
            class_names,
            feature_names,
            feature_settings,
            training,
            forest,
            domain: None,
        };
        m.check_consistent().map_err(Error::Invalid)?;
        Ok(m)
    }

    /// The model with the features' training domain `d` (see [`Domain`]).
    pub fn with_domain(mut self, d: Domain) -> Result<ModelFile> {
        self.domain = Some(d);
        self.check_consistent().map_err(Error::Invalid)?;
        Ok(self)
    }

    fn check_consistent(&self) -> std::result::Result<(), String> {
        if self.format != MODEL_FORMAT {
            return Err(format!(
                "not a rotorsift model (format is '{}', expected '{MODEL_FORMAT}')",
                self.format
            ));
        }
        if self.format_version > MODEL_FORMAT_VERSION {
            return Err(format!(
                "model format_version {} is newer than this build supports ({MODEL_FORMAT_VERSION}); written by rotorsift {}, this is {}",
                self.format_version,
                self.tool_version,
                crate::VERSION
            ));
        }
        if self.class_names.len() != self.forest.n_classes() {
            return Err(format!(
                "model lists {} class names but its forest has {} classes",
                self.class_names.len(),
                self.forest.n_classes()
            ));
        }
        if self.feature_names.len() != self.forest.n_features() {
            return Err(format!(
                "model lists {} feature names but its forest takes {} features",
                self.feature_names.len(),
                self.forest.n_features()
            ));
        }
        if let Some(d) = &self.domain {
            d.check(self.forest.n_features())?;
        }
        self.forest.check().map_err(|e| e.to_string())
    }

    /// JSON text of the model (compact: a forest has tens of thousands of nodes).
    pub fn to_json_string(&self) -> Result<String> {
        serde_json::to_string(self)
            .map_err(|e| Error::Invalid(format!("model cannot be serialised: {e}")))
    }

    /// Writes the model to `path`: first to a temporary file in the same directory, then
    /// renamed over `path`, so an existing file is either kept or replaced whole.
    pub fn save(&self, path: &Path) -> Result<()> {
        let mut text = self.to_json_string()?;
        text.push('\n');
        crate::atomic::write_atomic(path, text.as_bytes())
    }

    /// Reads a model file.
    pub fn load(path: &Path) -> Result<ModelFile> {
        let s = crate::limits::read_text_capped(path, crate::limits::MAX_MODEL_BYTES, "model file")
            .map_err(|e| match e {
                Error::Io { path, err } => {
                    Error::Invalid(format!("model file {}: {err}", path.display()))
                }
                other => other,
            })?;
        Self::from_json_str(&s, path)
    }

    /// Parses model JSON; `origin` names the source in errors. Checks the format name,
    /// the version and the forest's consistency.
    pub fn from_json_str(s: &str, origin: &Path) -> Result<ModelFile> {
        // look at format and version first, so a newer file is refused by its version
        // rather than by a field this build does not know
        let v: Value = serde_json::from_str(s)
            .map_err(|e| Error::format(origin, format!("not valid JSON: {e}")))?;
        check_sizes(&v, origin)?;
        if v.get("format").and_then(Value::as_str) != Some(MODEL_FORMAT) {
            return Err(Error::format(
                origin,
                format!("not a rotorsift model (no \"format\": \"{MODEL_FORMAT}\")"),
            ));
        }
        match v.get("format_version").and_then(Value::as_u64) {
            Some(n) if n <= MODEL_FORMAT_VERSION as u64 => {}
            Some(n) => {
                return Err(Error::format(
                    origin,
                    format!(
                        "model format_version {n} is newer than this build supports ({MODEL_FORMAT_VERSION}); use a newer rotorsift"
                    ),
                ))
            }
            None => return Err(Error::format(origin, "model has no integer format_version")),
        }
        let m: ModelFile = serde_json::from_value(v)
            .map_err(|e| Error::format(origin, format!("malformed model: {e}")))?;
        m.check_consistent().map_err(|e| Error::format(origin, e))?;
        Ok(m)
    }

    /// Refuses a model whose features or feature settings differ from this build's,
    /// naming the first mismatch in one line.
    pub fn check_compatible(
        &self,
        expected_feature_names: &[String],
        expected_settings: &Value,
    ) -> Result<()> {
        let (have, want) = (&self.feature_names, expected_feature_names);
        for i in 0..have.len().max(want.len()) {
            match (have.get(i), want.get(i)) {
                (Some(a), Some(b)) if a == b => {}
                (Some(a), Some(b)) => {
                    return Err(Error::Invalid(format!(
                        "model does not fit these features: feature {i} is '{a}' in the model but '{b}' here"
                    )))
                }
                (Some(a), None) => {
                    return Err(Error::Invalid(format!(
                        "model does not fit these features: the model has extra feature {i} '{a}' ({} features, {} here)",
                        have.len(),
                        want.len()
                    )))
                }
                (None, b) => {
                    return Err(Error::Invalid(format!(
                        "model does not fit these features: feature {i} '{}' is missing from the model ({} features, {} here)",
                        b.map(String::as_str).unwrap_or(""),
                        have.len(),
                        want.len()
                    )))
                }
            }
        }
        if let Some((path, a, b)) = first_difference(&self.feature_settings, expected_settings, "")
        {
            return Err(Error::Invalid(format!(
                "model does not fit these features: setting '{path}' is {a} in the model but {b} here"
            )));
        }
        Ok(())
    }
}

/// Caps on a model's JSON before it is turned into a forest (docs/output-format.md,
/// "Limits"): nesting depth, names, trees, nodes per tree, classes and features.
fn check_sizes(v: &Value, origin: &Path) -> Result<()> {
    use crate::limits::*;
    check_json_depth(v, origin)?;
    check_len(v.get("class_names"), "class_names", MAX_CLASSES, origin)?;
    check_len(
        v.get("feature_names"),
        "feature_names",
        MAX_FEATURES,
        origin,
    )?;
    let Some(forest) = v.get("forest") else {
        return Ok(());
    };
    for (key, max) in [("n_classes", MAX_CLASSES), ("n_features", MAX_FEATURES)] {
        if let Some(n) = forest.get(key).and_then(Value::as_u64) {
            if n > max as u64 {
                return Err(Error::format(
                    origin,
                    format!("forest.{key} = {n}: at most {max} allowed"),
                ));
            }
        }
    }
    check_len(
        forest.get("importances"),
        "forest.importances",
        MAX_FEATURES,
        origin,
    )?;
    check_len(forest.get("trees"), "forest.trees", MAX_TREES, origin)?;
    if let Some(Value::Array(trees)) = forest.get("trees") {
        for (i, t) in trees.iter().enumerate() {
            for key in ["feature", "threshold", "child"] {
                check_len(
                    t.get(key),
                    &format!("forest.trees[{i}].{key}"),
                    MAX_TREE_NODES,
                    origin,
                )?;
            }
            check_len(
                t.get("votes"),
                &format!("forest.trees[{i}].votes"),
                MAX_TREE_NODES.saturating_mul(MAX_CLASSES),
                origin,
            )?;
        }
    }
    Ok(())
}

/// First place where two JSON values differ: (dotted path, value in a, value in b);
/// object keys in sorted order, arrays by index; a missing key shows as `absent`.
fn first_difference(a: &Value, b: &Value, path: &str) -> Option<(String, String, String)> {
    let join = |k: &str| {
        if path.is_empty() {
            k.to_string()
        } else {
            format!("{path}.{k}")
        }
    };
    let show = |v: Option<&Value>| v.map_or("absent".to_string(), |v| v.to_string());
    match (a, b) {
        (Value::Object(x), Value::Object(y)) => {
            let keys: std::collections::BTreeSet<&String> = x.keys().chain(y.keys()).collect();
            for k in keys {
                match (x.get(k), y.get(k)) {
                    (Some(u), Some(v)) => {
                        if let Some(d) = first_difference(u, v, &join(k)) {
                            return Some(d);
                        }
                    }
                    (u, v) => return Some((join(k), show(u), show(v))),
                }
            }
            None
        }
        (Value::Array(x), Value::Array(y)) if x.len() == y.len() => x
            .iter()
            .zip(y)
            .enumerate()
            .find_map(|(i, (u, v))| first_difference(u, v, &join(&i.to_string()))),
        _ if a == b => None,
        _ => Some((
            if path.is_empty() {
                "(all)".to_string()
            } else {
                path.to_string()
            },
            a.to_string(),
            b.to_string(),
        )),
    }
}
