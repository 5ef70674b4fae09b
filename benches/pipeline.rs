//! Criterion benchmarks of the whole pipeline on one simulated 2 s recording of the 24 GHz
//! demo radar (scene run-k24-28-mixed: hovering rotorcraft, a bird, vegetation and point
//! clutter): detection alone (`find_tracks`) and detection + features (`analyse`), with
//! throughput in complex samples of the recording.

use std::path::Path;
use std::time::Duration;

use criterion::{black_box, criterion_group, criterion_main, Criterion, SamplingMode, Throughput};
use rotorsift::pipeline::{analyse, find_tracks, PipelineSettings};
use rotorsift::recording::RecordingMeta;

/// Demo scene, and the duration it is rewritten to, s.
const SCENE: &str = "labelled-demo/scenes/run-k24-28-mixed.toml";
const DURATION_S: f64 = 2.0;

/// Simulates the scene with its duration set to [`DURATION_S`] into `dir`.
fn recording(dir: &Path) -> RecordingMeta {
    let scene = Path::new(env!("CARGO_MANIFEST_DIR")).join(SCENE);
    let mut table: toml::Table = std::fs::read_to_string(scene)
        .expect("demo scene readable")
        .parse()
        .expect("demo scene is TOML");
    table.insert("name".into(), toml::Value::String("bench-k24-2s".into()));
    table.insert("duration_s".into(), toml::Value::Float(DURATION_S));
    let path = dir.join("bench-k24-2s.toml");
    std::fs::write(&path, toml::to_string(&table).expect("scene serialises"))
        .expect("scene written");
    let metas =
        rotorsift::simulate::simulate_scene_file(&path, dir, None).expect("scene simulates");
    RecordingMeta::open(&metas[0]).expect("recording opens")
}

fn pipeline(c: &mut Criterion) {
    let tmp = tempfile::tempdir().expect("temporary directory");
    let meta = recording(tmp.path());
    let samples = (meta.chirps * meta.params.samples_per_chirp * meta.num_channels) as u64;
    let settings = PipelineSettings::default();

    let mut g = c.benchmark_group("pipeline_k24_2s");
    g.throughput(Throughput::Elements(samples));
    // Each iteration takes a few hundred ms: one iteration per sample.
    g.sampling_mode(SamplingMode::Flat);
    g.sample_size(10);
    g.warm_up_time(Duration::from_secs(1));
    g.measurement_time(Duration::from_secs(8));
    g.bench_function("find_tracks", |b| {
        b.iter(|| {
            find_tracks(black_box(&meta), 0, &settings.detect)
                .expect("detection runs")
                .tracks
                .len()
        })
    });
    g.bench_function("analyse_with_features", |b| {
        b.iter(|| {
            analyse(black_box(&meta), 0, &settings, true)
                .expect("analysis runs")
                .tracks
                .len()
        })
    });
    g.finish();
}

criterion_group!(benches, pipeline);
criterion_main!(benches);
