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
    assert_eq!(
        page.matches("<p class=\"why\">predicted rotorcraft")
            .count(),
        alarms.len()
    );
    // one element per listed track, named RECORDING:ID as `classify` prints them
    for a in &alarms {
        assert_eq!(
            page.matches(&format!("data-track=\"{a}\"")).count(),
            1,
            "{a}"
        );
    }

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
    assert!(page.contains("<p class=\"why\">asked for"));
    assert!(page.contains(&format!("data-track=\"{}\"", alarms[0])));

    // the default page lists every hovering rotorcraft, among the doubtful tracks
    let v_hover: Vec<String> = v["recordings"]
        .as_array()
        .unwrap()
        .iter()
        .flat_map(|r| {
            let name = r["path"]
                .as_str()
                .unwrap()
                .rsplit('/')
                .next()
                .unwrap()
                .replace(".sigmf-meta", "");
            r["tracks"]
                .as_array()
                .unwrap()
                .iter()
                .filter(|t| t["label"] == "rotorcraft" && t["hovering"] == true)
                .map(move |t| format!("{name}:{}", t["id"]))
                .collect::<Vec<_>>()
        })
        .collect();
    let def = dir.path().join("c");
    ok(&run(&["audit", &demo(), "--out", def.to_str().unwrap()]));
    let page = std::fs::read_to_string(def.join("index.html")).unwrap();
    for h in &v_hover {
        assert!(page.contains(&format!("data-track=\"{h}\"")), "{h} listed");
    }
}
