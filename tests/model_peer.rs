//! Peer checks of the ensemble against two outside random forests, on the demo's exported
//! feature CSV (tests/reference/demo_features.csv, written by `rotorsift features` over the
//! 292 demo recordings; scripts/regenerate-references.sh remakes it) and the same
//! recording-grouped split (scikit-learn GroupShuffleSplit, test_size 0.3, random_state 7;
//! its test recordings are stored, so both sides use the same rows):
//!
//! - scikit-learn: `RandomForestClassifier(n_estimators=200, class_weight='balanced')`,
//!   held-out accuracy averaged over random_state 0..4 (`held_out_accuracy_mean5` in
//!   tests/reference/forest_peer_demo.json, written by tests/reference/forest_peer.py;
//!   library versions recorded there). Our forest, averaged over seeds 0..4, must be within
//!   2 points of it either way.
//! - smartcore 0.7 (`smartcore::ensemble::random_forest_classifier`, a dev-dependency):
//!   200 trees, sqrt(p) features per split, seeds 0..4, trained here on the same rows.
//!   Our forest must be within 3 points of its mean either way.
//!
//! A forest better than a peer by more than the bound would point at a leak between the
//! two sides of the split; worse by more, at a broken tree or vote.

use rotorsift::model::{Dataset, Forest, ForestParams};
use smartcore::ensemble::random_forest_classifier::{
    RandomForestClassifier, RandomForestClassifierParameters,
};
use smartcore::linalg::basic::matrix::DenseMatrix;

/// The seeds every forest is averaged over: one forest's accuracy on ~90 held-out rows
/// moves by a row or two with the seed.
const SEEDS: [u64; 5] = [0, 1, 2, 3, 4];

fn reference(name: &str) -> String {
    let p = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/reference")
        .join(name);
    std::fs::read_to_string(&p).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

/// The demo's labelled rows, the scikit-learn split of them (train rows, test rows) and
/// the stored scikit-learn figures.
fn demo_split() -> (Dataset, Vec<usize>, Vec<usize>, serde_json::Value) {
    let csv = reference("demo_features.csv");
    let mut lines = csv.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let feat_cols: Vec<usize> = (0..header.len())
        .filter(|&i| {
            header[i] != "recording" && header[i] != "label" && !header[i].starts_with("id_")
        })
        .collect();
    let (mut rows, mut labels, mut groups) = (Vec::new(), Vec::new(), Vec::new());
    for line in lines {
        let f: Vec<&str> = line.split(',').collect();
        if f[1].is_empty() {
            continue;
        }
        rows.push(
            feat_cols
                .iter()
                .map(|&i| f[i].parse::<f64>().unwrap())
                .collect::<Vec<_>>(),
        );
        labels.push(f[1].to_string());
        groups.push(f[0].to_string());
    }
    let names: Vec<String> = feat_cols.iter().map(|&i| header[i].to_string()).collect();
    assert_eq!(
        names,
        rotorsift::features::names::names(),
        "CSV is from this feature list"
    );
    let data = Dataset::from_rows(&rows, &labels, &groups, names).unwrap();
    let peer: serde_json::Value =
        serde_json::from_str(&reference("forest_peer_demo.json")).unwrap();
    let test_groups: Vec<String> = peer["test_recordings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap().to_string())
        .collect();
    let (train, test) = data.split_by_groups(&test_groups).unwrap();
    assert_eq!(test.len() as u64, peer["rows_test"].as_u64().unwrap());
    assert_eq!(train.len() as u64, peer["rows_train"].as_u64().unwrap());
    (data, train, test, peer)
}

/// Our forest's held-out accuracy, averaged over [`SEEDS`].
fn our_accuracy(data: &Dataset, train: &[usize], test: &[usize]) -> f64 {
    let mut acc = 0.0;
    for &seed in &SEEDS {
        let forest = Forest::fit(
            data,
            train,
            &ForestParams {
                seed,
                ..ForestParams::default()
            },
        )
        .unwrap();
        let correct = test
            .iter()
            .filter(|&&i| {
                let p = forest
                    .predict_proba(data.features.row(i).as_slice().unwrap())
                    .unwrap();
                rotorsift::model::forest::argmax(&p) == data.labels[i]
            })
            .count();
        acc += correct as f64 / test.len() as f64;
    }
    acc / SEEDS.len() as f64
}

#[test]
fn held_out_accuracy_matches_scikit_learn() {
    let (data, train, test, peer) = demo_split();
    let acc = our_accuracy(&data, &train, &test);
    // Both ways: neither more than 2 points worse than the peer nor more than 2 points
    // better. Measured on the current demo CSV: rotorsift 0.8874, scikit-learn 0.8886.
    let sk = peer["held_out_accuracy_mean5"].as_f64().unwrap();
    eprintln!("held-out accuracy: rotorsift {acc:.4}, scikit-learn {sk:.4} (mean of 5 seeds)");
    assert!(
        (acc - sk).abs() <= 0.02,
        "rotorsift {acc:.4} is more than 2 points from scikit-learn {sk:.4}"
    );
}

/// smartcore's random forest on the same rows: 200 trees, its defaults otherwise (Gini,
/// floor(sqrt(p)) features per split, leaves of one row, bootstrap of the rows), seeded.
#[test]
fn held_out_accuracy_matches_smartcore() {
    let (data, train, test, _) = demo_split();
    let rows = |idx: &[usize]| -> Vec<Vec<f64>> {
        idx.iter().map(|&i| data.features.row(i).to_vec()).collect()
    };
    let x_train = DenseMatrix::from_2d_vec(&rows(&train)).unwrap();
    let x_test = DenseMatrix::from_2d_vec(&rows(&test)).unwrap();
    let y_train: Vec<u32> = train.iter().map(|&i| data.labels[i] as u32).collect();
    let y_test: Vec<u32> = test.iter().map(|&i| data.labels[i] as u32).collect();
    let mut peer = 0.0;
    for &seed in &SEEDS {
        let params = RandomForestClassifierParameters::default()
            .with_n_trees(200)
            .with_seed(seed);
        let rf = RandomForestClassifier::fit(&x_train, &y_train, params).unwrap();
        let pred: Vec<u32> = rf.predict(&x_test).unwrap();
        let correct = pred.iter().zip(&y_test).filter(|(p, y)| p == y).count();
        peer += correct as f64 / test.len() as f64;
    }
    peer /= SEEDS.len() as f64;
    let acc = our_accuracy(&data, &train, &test);
    eprintln!("held-out accuracy: rotorsift {acc:.4}, smartcore {peer:.4} (mean of 5 seeds)");
    // Both ways, 3 points: smartcore weighs every row alike where ours and scikit-learn's
    // peer balance the classes, so a wider bound than scikit-learn's 2 points. Measured on
    // the current demo CSV: rotorsift 0.8874, smartcore 0.8898.
    assert!(
        (acc - peer).abs() <= 0.03,
        "rotorsift {acc:.4} is more than 3 points from smartcore {peer:.4}"
    );
}
