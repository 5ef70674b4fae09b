//! Criterion benchmarks of the detection stage: CA- and OS-CFAR on one range-Doppler map
//! (256 range cells × 128 Doppler bins, default window, seeded exponential noise).

use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use ndarray::Array2;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Exp1};
use rotorsift::detect::{CfarKind, CfarParams, CfarPlan};

fn cfar(c: &mut Criterion) {
    let mut rng = ChaCha8Rng::seed_from_u64(1);
    let map = Array2::from_shape_simple_fn((256, 128), || {
        let x: f64 = Exp1.sample(&mut rng);
        x as f32
    });
    let mut g = c.benchmark_group("cfar_256x128");
    g.throughput(Throughput::Elements(map.len() as u64));
    for (name, kind) in [
        ("ca", CfarKind::CellAveraging),
        (
            "os",
            CfarKind::OrderedStatistic {
                rank_fraction: 0.75,
            },
        ),
    ] {
        let mut plan = CfarPlan::new(CfarParams {
            kind,
            ..CfarParams::default()
        })
        .unwrap();
        let mut hits = Vec::new();
        g.bench_function(name, |b| {
            b.iter(|| {
                plan.detect(map.view(), None, &mut hits).unwrap();
                hits.len()
            })
        });
    }
    g.finish();
}

criterion_group!(benches, cfar);
criterion_main!(benches);
