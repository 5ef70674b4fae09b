//! Checks src/model/metrics.rs against scikit-learn 1.9.1 / numpy 2.4.6 reference values
//! in tests/reference/metrics_golden.json (written by make_metrics_golden.py): sklearn
//! `confusion_matrix`, `accuracy_score`, `precision_recall_fscore_support`
//! (zero_division=0), `brier_score_loss`; ECE after Guo et al., ICML 2017, Eq. 3, in
//! numpy.

use rotorsift::model::metrics::{expected_calibration_error, multiclass_brier, Scores};
use serde_json::Value;

const TOL: f64 = 1e-12;

fn golden() -> Value {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/metrics_golden.json"
    );
    serde_json::from_str(&std::fs::read_to_string(path).expect("golden file")).unwrap()
}

fn usizes(v: &Value) -> Vec<usize> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_u64().unwrap() as usize)
        .collect()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn close(a: f64, b: f64, what: &str) {
    assert!((a - b).abs() <= TOL, "{what}: {a} vs reference {b}");
}

#[test]
fn scores_match_sklearn() {
    let g = golden();
    let cases = g["cases"].as_array().unwrap();
    assert_eq!(cases.len(), 3);
    for c in cases {
        let name = c["name"].as_str().unwrap();
        let k = c["n_classes"].as_u64().unwrap() as usize;
        let classes: Vec<String> = (0..k).map(|i| format!("class{i}")).collect();
        let y_true = usizes(&c["y_true"]);
        let y_pred = usizes(&c["y_pred"]);
        let probs: Vec<Vec<f64>> = c["probs"].as_array().unwrap().iter().map(floats).collect();
        let s = Scores::compute(classes.clone(), &y_true, &y_pred, Some(&probs)).unwrap();
        let want_cm: Vec<Vec<usize>> = c["confusion"]
            .as_array()
            .unwrap()
            .iter()
            .map(usizes)
            .collect();
        assert_eq!(s.confusion, want_cm, "{name}");
        close(s.accuracy, c["accuracy"].as_f64().unwrap(), name);
        let (p, r, f, sup) = (
            floats(&c["precision"]),
            floats(&c["recall"]),
            floats(&c["f1"]),
            usizes(&c["support"]),
        );
        for (i, cl) in classes.iter().enumerate() {
            let cs = &s.per_class[cl];
            close(cs.precision, p[i], &format!("{name} precision {cl}"));
            close(cs.recall, r[i], &format!("{name} recall {cl}"));
            close(cs.f1, f[i], &format!("{name} f1 {cl}"));
            assert_eq!(cs.support, sup[i], "{name} support {cl}");
        }
        for (avg, got) in [("macro", s.macro_avg), ("weighted", s.weighted_avg)] {
            close(
                got.precision,
                c[avg]["precision"].as_f64().unwrap(),
                &format!("{name} {avg} P"),
            );
            close(
                got.recall,
                c[avg]["recall"].as_f64().unwrap(),
                &format!("{name} {avg} R"),
            );
            close(
                got.f1,
                c[avg]["f1"].as_f64().unwrap(),
                &format!("{name} {avg} F1"),
            );
        }
        close(
            s.brier.unwrap(),
            c["brier_sklearn"].as_f64().unwrap(),
            &format!("{name} brier"),
        );
        close(
            s.brier.unwrap(),
            c["brier_numpy"].as_f64().unwrap(),
            &format!("{name} brier np"),
        );
        close(
            s.ece.unwrap(),
            c["ece"].as_f64().unwrap(),
            &format!("{name} ece"),
        );
    }
}

/// The multiclass Brier score of two classes is twice sklearn's binary
/// `brier_score_loss` of the positive class (sklearn 1.9.1 docs of brier_score_loss).
#[test]
fn binary_brier_is_half_the_multiclass_form() {
    let b = &golden()["binary"];
    let y = usizes(&b["y_true"]);
    let probs: Vec<Vec<f64>> = b["probs"].as_array().unwrap().iter().map(floats).collect();
    let m = multiclass_brier(&probs, &y).unwrap();
    close(
        m / 2.0,
        b["brier_binary_sklearn"].as_f64().unwrap(),
        "binary brier",
    );
}

/// The JSON keys of the `evaluate --format json` of docs/output-format.md are present with their types.
#[test]
fn scores_json_has_interface_keys() {
    let s = Scores::compute(
        vec!["bird".into(), "clutter".into(), "rotorcraft".into()],
        &[0, 1, 2, 2],
        &[0, 1, 2, 0],
        None,
    )
    .unwrap();
    let v = serde_json::to_value(&s).unwrap();
    assert_eq!(v["classes"][2], "rotorcraft");
    assert_eq!(v["confusion"][2], serde_json::json!([1, 0, 1]));
    assert_eq!(v["accuracy"], 0.75);
    assert_eq!(v["per_class"]["rotorcraft"]["recall"], 0.5);
    assert_eq!(v["per_class"]["bird"]["support"], 1);
    assert!(v["brier"].is_null() && v["ece"].is_null());
    assert!(expected_calibration_error(&[vec![1.0]], &[0], 0).is_err());
    assert!(Scores::compute(vec!["a".into()], &[0], &[0], Some(&[vec![0.5, 0.5]])).is_err());
}
