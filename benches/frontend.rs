//! Front-end throughput (samples/s): range FFT, three-pulse cancelling, range-Doppler map
//! and STFT, each on seeded random input, measured with criterion.

use criterion::{black_box, criterion_group, criterion_main, Criterion, Throughput};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rotorsift::frontend::{
    Canceller, CancellerState, RangeDopplerMap, RangeDopplerPlan, RangePlan, Scaling, StftParams,
    StftPlan, Window,
};
use rustfft::num_complex::Complex32;

fn random(n: usize, seed: u64) -> Vec<Complex32> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    (0..n)
        .map(|_| Complex32::new(rng.gen_range(-1.0..1.0), rng.gen_range(-1.0..1.0)))
        .collect()
}

fn bench(c: &mut Criterion) {
    let (n, chirps) = (128usize, 256usize);
    let block = random(n * chirps, 1);

    let mut g = c.benchmark_group("frontend");
    g.throughput(Throughput::Elements((n * chirps) as u64));

    let plan = RangePlan::new(n, Window::Hann).unwrap();
    let mut buf = block.clone();
    let mut scratch = vec![Complex32::new(0.0, 0.0); plan.scratch_len()];
    g.bench_function("range_fft_n128_x256", |b| {
        b.iter(|| {
            buf.copy_from_slice(&block);
            plan.process_block_with_scratch(&mut buf, &mut scratch)
                .unwrap();
            black_box(&buf);
        })
    });

    let mut out = vec![Complex32::new(0.0, 0.0); block.len()];
    g.bench_function("three_pulse_cancel_128x256", |b| {
        b.iter(|| {
            let mut st = CancellerState::new(Canceller::ThreePulse, n, true).unwrap();
            black_box(st.push_block(&block, &mut out).unwrap());
        })
    });

    let mut rd = RangeDopplerPlan::new(chirps, Window::Hann).unwrap();
    let mut map = RangeDopplerMap::zeros(n, chirps, 1.0);
    g.bench_function("range_doppler_128x256", |b| {
        b.iter(|| {
            rd.process_into(&block, 16000.0, &mut map).unwrap();
            black_box(&map);
        })
    });

    let samples = 65536usize;
    let x = random(samples, 2);
    let stft = StftPlan::new(StftParams::new(Window::Hann, 256, 192, 256, Scaling::Psd)).unwrap();
    let frames = stft.frames(samples);
    let mut sout = vec![Complex32::new(0.0, 0.0); frames * 256];
    let mut sscr = vec![Complex32::new(0.0, 0.0); stft.scratch_len()];
    g.throughput(Throughput::Elements(samples as u64));
    g.bench_function("stft_65536_nperseg256_hop64", |b| {
        b.iter(|| {
            black_box(stft.process_with_scratch(&x, &mut sout, &mut sscr).unwrap());
        })
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
