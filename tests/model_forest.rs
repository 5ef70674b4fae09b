//! The forest on seeded synthetic data: Gaussian blobs of 3 classes spread over
//! recordings (each recording adds its own offset, so rows of one recording are alike).
//! Checks held-out-recording accuracy, that temperature calibration lowers the held-out
//! negative log-likelihood, byte-identical refits, importances and JSON round trips.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;
use rotorsift::model::calibration::mean_nll;
use rotorsift::model::{
    Bootstrap, Calibration, ClassWeight, Dataset, FeatureSampling, Forest, ForestParams, ModelFile,
};

/// `recordings` recordings of `per` rows; recording r holds class r % 3 (class 0 has
/// twice the recordings, for imbalance). Features 0..4 carry the class: mean
/// `sep * onehot(class)` on 0..3 and `sep/2 * class` on 3; features 4..8 are noise.
/// Each recording adds an offset N(0, 0.3^2) per feature; rows add N(0, 1).
pub fn blobs(recordings: usize, per: usize, sep: f64, seed: u64) -> Dataset {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let names = ["bird", "clutter", "rotorcraft"];
    let (mut rows, mut labels, mut groups) = (vec![], vec![], vec![]);
    for r in 0..recordings {
        let c = [0, 0, 1, 2][r % 4];
        let offset: Vec<f64> = (0..8)
            .map(|_| 0.3 * rng.sample::<f64, _>(StandardNormal))
            .collect();
        for _ in 0..per {
            let row: Vec<f64> = (0..8)
                .map(|j| {
                    let mean = match j {
                        0..=2 if j == c => sep,
                        3 => sep / 2.0 * c as f64,
                        _ => 0.0,
                    };
                    mean + offset[j] + rng.sample::<f64, _>(StandardNormal)
                })
                .collect();
            rows.push(row);
            labels.push(names[c]);
            groups.push(format!("rec{r:03}"));
        }
    }
    let feats = (0..8).map(|j| format!("f{j}")).collect();
    Dataset::from_rows(&rows, &labels, &groups, feats).unwrap()
}

fn accuracy(f: &Forest, d: &Dataset, rows: &[usize]) -> f64 {
    let ok = rows
        .iter()
        .filter(|&&r| {
            let p = f
                .predict_proba(d.features.row(r).as_slice().unwrap())
                .unwrap();
            rotorsift::model::forest::argmax(&p) == d.labels[r]
        })
        .count();
    ok as f64 / rows.len() as f64
}

fn small(seed: u64) -> ForestParams {
    ForestParams {
        trees: 60,
        seed,
        ..ForestParams::default()
    }
}

#[test]
fn held_out_recordings_are_classified() {
    let d = blobs(40, 15, 3.0, 1);
    let (tr, te) = d.grouped_holdout(0.3, 1).unwrap();
    let f = Forest::fit(&d, &tr, &ForestParams::default()).unwrap();
    let acc = accuracy(&f, &d, &te);
    assert!(acc > 0.9, "held-out accuracy {acc}");
    assert!(f.oob_accuracy() > 0.9, "oob accuracy {}", f.oob_accuracy());
}

/// Averaged leaf votes of a forest are under-confident on well-separated classes (the
/// trees disagree near the edges), so the fitted temperature is below 1. The
/// temperature fitted out-of-bag on the training recordings must lower the NLL on the
/// held-out recordings of every one of 5 grouped folds below that of the raw votes
/// (T = 1, same eps), and lie within 0.25 of the temperature that would be best on the
/// held-out rows themselves. Temperature scaling after Guo et al., ICML 2017, §4.2.
#[test]
fn calibration_lowers_held_out_nll() {
    let d = blobs(40, 15, 2.0, 2);
    for (fold, (tr, te)) in d.grouped_kfold(5, 2).unwrap().into_iter().enumerate() {
        let f = Forest::fit(&d, &tr, &small(3)).unwrap();
        let votes: Vec<Vec<f64>> = te
            .iter()
            .map(|&r| f.votes(d.features.row(r).as_slice().unwrap()).unwrap())
            .collect();
        let y: Vec<usize> = te.iter().map(|&r| d.labels[r]).collect();
        let c = f.calibration();
        let raw = mean_nll(&votes, &y, 1.0, c.eps);
        let cal = mean_nll(&votes, &y, c.temperature, c.eps);
        assert!(cal < raw, "fold {fold}: calibrated NLL {cal} vs raw {raw}");
        let best = Calibration::fit(&votes, &y, c.eps).unwrap().temperature;
        assert!(
            (c.temperature - best).abs() < 0.25,
            "fold {fold}: T {} vs held-out best {best}",
            c.temperature
        );
    }
}

/// The `trees` of a forest's JSON.
fn trees_of(json: &str) -> serde_json::Value {
    let v: serde_json::Value = serde_json::from_str(json).unwrap();
    assert!(v["trees"].is_array(), "forest JSON without trees");
    v["trees"].clone()
}

#[test]
fn refit_is_byte_identical_and_seed_matters() {
    let d = blobs(24, 10, 1.5, 4);
    let (tr, _) = d.grouped_holdout(0.3, 4).unwrap();
    for (sampling, bootstrap) in [
        (FeatureSampling::PerSplit, Bootstrap::Rows),
        (FeatureSampling::PerTree, Bootstrap::Recordings),
    ] {
        let p = ForestParams {
            feature_sampling: sampling,
            bootstrap,
            ..small(11)
        };
        let a = serde_json::to_string(&Forest::fit(&d, &tr, &p).unwrap()).unwrap();
        let b = serde_json::to_string(&Forest::fit(&d, &tr, &p).unwrap()).unwrap();
        assert_eq!(a, b, "{sampling:?}: equal seeds, equal forests");
        // Another seed with the same settings gives other trees (the seed is used). The
        // trees alone are compared: the file also stores the settings, seed included, so
        // the whole text would differ even if the seed were ignored.
        let q = ForestParams {
            seed: 12,
            ..p.clone()
        };
        let c = serde_json::to_string(&Forest::fit(&d, &tr, &q).unwrap()).unwrap();
        assert!(
            trees_of(&a) != trees_of(&c),
            "{sampling:?}: the seed is ignored (seeds 11 and 12 grow the same trees)"
        );
    }
}

#[test]
fn importances_favour_informative_features() {
    let d = blobs(40, 15, 3.0, 5);
    let all: Vec<usize> = (0..d.len()).collect();
    let f = Forest::fit(&d, &all, &small(5)).unwrap();
    let imp = f.feature_importances();
    assert_eq!(imp.len(), 8);
    assert!((imp.iter().sum::<f64>() - 1.0).abs() < 1e-12);
    let informative = imp[..4].iter().cloned().fold(f64::INFINITY, f64::min);
    let noise = imp[4..].iter().cloned().fold(0.0, f64::max);
    assert!(informative > noise, "{imp:?}");
}

#[test]
fn model_file_round_trip_gives_identical_probabilities() {
    let d = blobs(20, 10, 1.5, 6);
    let (tr, te) = d.grouped_holdout(0.3, 6).unwrap();
    let f = Forest::fit(&d, &tr, &small(6)).unwrap();
    let m = ModelFile::new(
        f,
        d.class_names.clone(),
        d.feature_names.clone(),
        serde_json::json!({"window": 256}),
        serde_json::json!({"rows": tr.len()}),
    )
    .unwrap();
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("m.json");
    m.save(&path).unwrap();
    let back = ModelFile::load(&path).unwrap();
    assert_eq!(back, m);
    assert_eq!(back.to_json_string().unwrap(), m.to_json_string().unwrap());
    for &r in &te {
        let row = d.features.row(r);
        let (a, b) = (
            m.forest.predict_proba(row.as_slice().unwrap()).unwrap(),
            back.forest.predict_proba(row.as_slice().unwrap()).unwrap(),
        );
        assert!(a.iter().zip(&b).all(|(x, y)| x.to_bits() == y.to_bits()));
    }
    // only the model file is left in the directory (no temporary file)
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
}

#[test]
fn bad_params_and_rows_are_refused() {
    let d = blobs(8, 5, 1.5, 7);
    let all: Vec<usize> = (0..d.len()).collect();
    for (p, needle) in [
        (
            ForestParams {
                trees: 0,
                ..small(0)
            },
            "--trees 0: expected 1 to 10000 trees",
        ),
        (
            ForestParams {
                min_samples_leaf: 0,
                ..small(0)
            },
            "min_samples_leaf = 0",
        ),
        (
            ForestParams {
                feature_fraction: Some(1.5),
                ..small(0)
            },
            "feature_fraction = 1.5",
        ),
        (
            ForestParams {
                max_depth: Some(0),
                ..small(0)
            },
            "max_depth = 0",
        ),
    ] {
        let e = Forest::fit(&d, &all, &p).unwrap_err().to_string();
        assert!(e.contains(needle), "{e}");
    }
    assert!(Forest::fit(&d, &[], &small(0)).is_err());
    assert!(Forest::fit(&d, &[d.len()], &small(0)).is_err());
    let f = Forest::fit(
        &d,
        &all,
        &ForestParams {
            class_weight: ClassWeight::None,
            ..small(0)
        },
    )
    .unwrap();
    assert!(f.predict_proba(&[0.0; 7]).is_err());
    let p = f.predict_proba(&[0.0; 8]).unwrap();
    assert!((p.iter().sum::<f64>() - 1.0).abs() < 1e-12);
}
