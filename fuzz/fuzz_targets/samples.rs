//! Fuzz target: the sample reader. The first byte picks the datatype, channel count and
//! block size; the rest is the data file of a recording with 8 samples a chirp, written
//! beside its metadata. Reading must refuse (a ragged length) or succeed, never panic,
//! and every sample handed on must be finite and within range.
#![no_main]

use libfuzzer_sys::fuzz_target;
use rotorsift::recording::{
    scan_samples, to_json, ChirpBlock, ChirpReader, DataType, RadarParams, RangeAxis,
    RecordingMeta, MAX_SAMPLE_MAGNITUDE,
};

fuzz_target!(|data: &[u8]| {
    let Some((&sel, body)) = data.split_first() else {
        return;
    };
    let dt = [
        DataType::Cf32Le,
        DataType::Cf64Le,
        DataType::Ci16Le,
        DataType::Ci8,
    ][sel as usize & 3];
    let channels = 1 + ((sel >> 2) & 1) as usize;
    let block_chirps = 1 + (sel >> 3) as usize;
    let params = RadarParams {
        carrier_hz: 9.4e9,
        sample_rate_hz: 0.0,
        samples_per_chirp: 8,
        chirp_interval_s: 1e-4,
        range_axis: RangeAxis::RangeProfile {
            range_cell_m: 3.0,
            range_start_m: 0.0,
        },
    };
    let mut meta = to_json(&params, dt, &[], &Default::default());
    meta["global"]["core:num_channels"] = serde_json::json!(channels);
    let dir = std::env::temp_dir().join(format!("rotorsift-fuzz-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let mp = dir.join("x.sigmf-meta");
    std::fs::write(&mp, meta.to_string()).unwrap();
    std::fs::write(dir.join("x.sigmf-data"), body).unwrap();
    let Ok(m) = RecordingMeta::open(&mp) else {
        return;
    };
    let all = scan_samples(&m).expect("scan of an accepted recording");
    assert_eq!(all.samples, (body.len() / dt.bytes_per_sample()) as u64);
    for ch in 0..channels {
        let mut r = ChirpReader::open(&m, ch).unwrap();
        let mut b = ChirpBlock::default();
        let mut chirps = 0;
        loop {
            let got = r.read_block(&mut b, block_chirps).unwrap();
            if got == 0 {
                break;
            }
            chirps += got;
            assert!(b.data.iter().all(|z| z.re.is_finite()
                && z.im.is_finite()
                && z.norm() <= 2.0 * MAX_SAMPLE_MAGNITUDE));
        }
        assert_eq!(chirps, m.chirps);
        let s = r.stats();
        assert!(s.nonfinite <= all.nonfinite && s.clipped <= all.clipped);
    }
});
