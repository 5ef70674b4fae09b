//! Fuzz target: the scene parser (`Scene::parse_all`) on arbitrary text. It must refuse
//! or accept, never panic; an accepted run gives radar settings and a chirp count.
#![no_main]

use libfuzzer_sys::fuzz_target;
use rotorsift::simulate::Scene;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    if let Ok(runs) = Scene::parse_all(text) {
        for r in &runs {
            let _ = r.radar.params();
            let _ = r.radar.datatype();
            let _ = r.chirps();
        }
    }
});
