//! `train` and `evaluate` on feature tables: the CSV `rotorsift features` writes, one per
//! recording as a batch scheduler's array jobs would make them, must train the very same
//! model (byte for byte, same seed) and give the very same scores as the recordings
//! themselves. That holds only if the table carries every number exactly: floats are
//! written in the shortest form that reads back to the same IEEE 754 double (common
//! practice; Steele & White, "How to Print Floating-Point Numbers Accurately", 1990) and
//! fields are quoted as RFC 4180 says.

mod common;

use std::path::Path;

use common::*;

const RECORDINGS: [&str; 4] = [
    "holdout-h13-00-mixed",
    "holdout-h13-05-uav",
    "holdout-h15-01-uav",
    "holdout-h15-02-mixed",
];

/// One CSV per shipped recording, written as separate `features` runs.
fn tables(dir: &Path, extra: &[&str]) -> Vec<String> {
    RECORDINGS
        .iter()
        .map(|r| {
            let out = dir.join(format!("{r}.csv")).display().to_string();
            let rec = format!("labelled-demo/recordings/{r}");
            let mut args = vec!["--quiet", "features", rec.as_str(), "--out", out.as_str()];
            args.extend(extra);
            ok(&run(&args));
            out
        })
        .collect()
}

#[test]
fn tables_train_the_same_model_and_score_the_same() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let csvs = tables(dir, &[]);
    let m_rec = dir.join("from-recordings.json").display().to_string();
    let m_tab = dir.join("from-tables.json").display().to_string();
    let m_mix = dir.join("mixed.json").display().to_string();
    let train = |inputs: &[&str], model: &str| {
        let mut args = vec!["--quiet", "train"];
        args.extend(inputs);
        args.extend([
            "--model", model, "--trees", "40", "--seed", "11", "--format", "json",
        ]);
        ok(&run(&args))
    };
    let c: Vec<&str> = csvs.iter().map(String::as_str).collect();
    let rep_rec = train(&["labelled-demo/recordings"], &m_rec);
    let rep_tab = train(&c, &m_tab);
    // tables and recordings mixed, in the recordings' order
    let mixed = [
        c[0],
        "labelled-demo/recordings/holdout-h13-05-uav",
        c[2],
        "labelled-demo/recordings/holdout-h15-02-mixed.sigmf-meta",
    ];
    let rep_mix = train(&mixed, &m_mix);
    let bytes = |p: &str| std::fs::read(p).unwrap();
    assert!(bytes(&m_rec) == bytes(&m_tab), "model from tables differs");
    assert!(
        bytes(&m_rec) == bytes(&m_mix),
        "model from mixed inputs differs"
    );
    assert_eq!(rep_rec, rep_tab);
    assert_eq!(rep_rec, rep_mix);

    // evaluate: the same scores, JSON and table, built-in model and the trained one
    for model in [None, Some(m_rec.as_str())] {
        for format in ["json", "table"] {
            let eval = |inputs: &[&str]| {
                let mut args = vec!["--quiet", "evaluate"];
                args.extend(inputs);
                args.extend(["--format", format]);
                if let Some(m) = model {
                    args.extend(["--model", m]);
                }
                ok(&run(&args))
            };
            assert_eq!(
                eval(&["labelled-demo/recordings"]),
                eval(&c),
                "{model:?} {format}"
            );
        }
    }
}

/// A table made with other detection settings than the model's (or than `train`'s own
/// options) is refused in one line, and no model is written.
#[test]
fn table_of_other_settings_is_refused() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let out = dir.join("pfa.csv").display().to_string();
    ok(&run(&[
        "--quiet",
        "features",
        "labelled-demo/recordings/holdout-h13-05-uav",
        "--out",
        &out,
        "--pfa",
        "1e-5",
    ]));
    let o = run(&["--quiet", "evaluate", &out]);
    assert_one_error(&o, 1, &["pfa.csv", "other detection/feature settings"]);
    let model = dir.join("m.json");
    let o = run(&["--quiet", "train", &out, "--model", model.to_str().unwrap()]);
    assert_one_error(&o, 1, &["pfa.csv", "fingerprint"]);
    assert!(!model.exists());
    // with the same options the table is accepted by train
    let o = run(&[
        "--quiet",
        "train",
        &out,
        "--model",
        model.to_str().unwrap(),
        "--pfa",
        "1e-5",
    ]);
    assert_no_panic(&o);
    assert!(!stderr(&o).contains("other detection/feature settings"));
}

/// A CSV that is not a feature table of this build is one bad input: one line naming the
/// file and the column, exit 1.
#[test]
fn foreign_csv_is_refused_in_one_line() {
    let tmp = tempfile::tempdir().unwrap();
    let bad = write(tmp.path(), "other.csv", "a,b,c\n1,2,3\n");
    let o = run(&["--quiet", "evaluate", bad.to_str().unwrap()]);
    assert_no_panic(&o);
    assert_eq!(o.status.code(), Some(1));
    let err = stderr(&o);
    assert!(
        err.contains("other.csv") && err.contains("column 1 is `a`"),
        "{err}"
    );
}
