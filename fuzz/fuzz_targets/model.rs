//! Fuzz target: the model loader (`ModelFile::from_json_str`). It must refuse or accept,
//! never panic; an accepted model gives finite probabilities summing to 1 for any row,
//! NaN and infinite features included.
#![no_main]

use libfuzzer_sys::fuzz_target;
use rotorsift::model::ModelFile;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    if let Ok(m) = ModelFile::from_json_str(text, Path::new("fuzz.json")) {
        let p = m.feature_names.len();
        for fill in [0.0, f64::NAN, f64::INFINITY, -1e300] {
            let row = vec![fill; p];
            if let Ok(pr) = m.forest.predict_proba(&row) {
                assert!(pr.iter().all(|x| x.is_finite()), "{pr:?}");
                let s: f64 = pr.iter().sum();
                assert!((s - 1.0).abs() < 1e-6, "probabilities sum to {s}");
            }
        }
    }
});
