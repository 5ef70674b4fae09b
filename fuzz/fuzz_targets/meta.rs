//! Fuzz target: the SigMF metadata parser (`RecordingMeta::from_json`) on arbitrary text,
//! against data files of a few lengths. It must refuse or accept, never panic, and what
//! it accepts must be self-consistent.
#![no_main]

use libfuzzer_sys::fuzz_target;
use rotorsift::recording::RecordingMeta;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    for len in [0u64, 4096, 2_560_000, 1 << 40] {
        if let Ok(m) = RecordingMeta::from_json(text, Path::new("fuzz.sigmf-meta"), len) {
            assert!(m.chirps >= 1);
            assert!(m.duration_s().is_finite());
            for a in &m.annotations {
                assert!(a.chirp_start + a.chirp_count <= m.chirps);
                assert!(a.range_min_m.is_finite() && a.range_max_m.is_finite());
            }
            let _ = m.params.check();
        }
    }
});
