//! The audit's selections on the shipped demo recordings: `--predicted rotorcraft` lists
//! exactly the tracks `classify` labels rotorcraft ("every drone alarm"), `--track NAME:ID`
//! lists that one track, and a track labelled bird or clutter shows no rotor figures on the
//! page, as in `classify` (docs/output-format.md).

mod common;

use common::{ok, ok_json, run};

fn demo() -> String {
    format!("{}/labelled-demo", env!("CARGO_MANIFEST_DIR"))
}

fn listed(page: &str) -> usize {
    page.matches("class=\"track\"").count()
}

#[test]
fn predicted_lists_every_alarm_and_track_lists_one() {
    let v = ok_json(&run(&["classify", &demo(), "--format", "json"]));
    let mut alarms = Vec::new();
    for r in v["recordings"].as_array().unwrap() {
        let name = r["path"]
            .as_str()
            .unwrap()
            .rsplit('/')
            .next()
            .unwrap()
            .replace(".sigmf-meta", "");
        for t in r["tracks"].as_array().unwrap() {
            if t["label"] == "rotorcraft" {
                alarms.push(format!("{name}:{}", t["id"]));
            }
        }
    }
    assert!(!alarms.is_empty(), "the demo has rotorcraft alarms");
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("a");
    ok(&run(&[
        "audit",
        &demo(),
        "--out",
        out.to_str().unwrap(),
        "--predicted",
        "rotorcraft",
    ]));
    let page = std::fs::read_to_string(out.join("index.html")).unwrap();
    assert_eq!(
        listed(&page),
        alarms.len(),
        "every rotorcraft alarm listed, nothing else"
    );
    assert_eq!(page.matches("predicted rotorcraft").count(), alarms.len());

    let one = dir.path().join("b");
    ok(&run(&[
        "audit",
        &demo(),
        "--out",
        one.to_str().unwrap(),
        "--track",
        &alarms[0],
    ]));
    let page = std::fs::read_to_string(one.join("index.html")).unwrap();
    assert_eq!(listed(&page), 1);
    assert!(page.contains("asked for"));
}
