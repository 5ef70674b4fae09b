//! Development runner for the simulator: `cargo run --release --example sim -- SCENE.toml OUT_DIR [SEED]`
//! (the same call as `rotorsift simulate --scene SCENE --out OUT_DIR [--seed SEED]`).
//! Prints each recording's meta path, and the generation speed to stderr.

use std::path::Path;
use std::time::Instant;

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    if args.len() < 2 {
        eprintln!("usage: sim SCENE.toml OUT_DIR [SEED]");
        std::process::exit(2);
    }
    let seed = match args.get(2).map(|s| s.parse::<u64>()) {
        None => None,
        Some(Ok(s)) => Some(s),
        Some(Err(e)) => {
            eprintln!("sim: error: SEED: {e}");
            std::process::exit(2);
        }
    };
    let t0 = Instant::now();
    match rotorsift::simulate::simulate_scene_file(Path::new(&args[0]), Path::new(&args[1]), seed) {
        Ok(metas) => {
            let secs = t0.elapsed().as_secs_f64();
            let mut rec_s = 0.0;
            for m in &metas {
                println!("{}", m.display());
                if let Ok(meta) = rotorsift::recording::RecordingMeta::open(m) {
                    rec_s += meta.duration_s();
                }
            }
            eprintln!(
                "sim: {} recording(s), {rec_s:.2} s of recording in {secs:.3} s ({:.1} s/s)",
                metas.len(),
                rec_s / secs
            );
        }
        Err(e) => {
            eprintln!("sim: error: {e}");
            std::process::exit(1);
        }
    }
}
