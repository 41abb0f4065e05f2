//! Times the synthesis of a scene file's first trials and prints its oversampling (a profiling aid).
//!
//! `cargo run --release --example scene_profile -- SCENE.yaml [TRIALS] [checksum]`
//!
//! With `checksum` it then synthesizes trial 0 once more (untimed, but in the
//! process's CPU time) and prints a checksum of its analog output (FNV-1a over
//! the bits of every value at the ADC input, before quantization), so two
//! builds can be compared for bit-identical synthesis.
use echobench_scene::{load_scene_text, StreamKey, Synthesizer};
fn main() {
    let mut args = std::env::args().skip(1);
    let path = args.next().expect("scene path");
    let trials: u64 = args.next().map_or(4, |t| t.parse().unwrap());
    let text = std::fs::read_to_string(&path).unwrap();
    let scene = load_scene_text(&path, &text).unwrap();
    let mut total = 0.0;
    let mut samples = 0;
    for trial in 0..trials {
        let t0 = std::time::Instant::now();
        let mut synth = Synthesizer::new(&scene, &StreamKey::new(1, "x", trial)).unwrap();
        let (mut v, mut c) = (Vec::new(), Vec::new());
        while synth.next_block(&mut v, &mut c, usize::MAX) > 0 {}
        total += t0.elapsed().as_secs_f64();
        samples += v.len();
        if trial == 0 {
            println!("oversampling {}", synth.oversampling());
        }
    }
    println!(
        "{trials} trials: {:.1} ms per trial, {:.2} M samples/s",
        total / trials as f64 * 1e3,
        samples as f64 / total / 1e6
    );
    if args.next().as_deref() == Some("checksum") {
        let mut synth = Synthesizer::new(&scene, &StreamKey::new(1, "x", 0)).unwrap();
        let mut analog = Vec::new();
        while synth.next_block_analog(&mut analog, usize::MAX) > 0 {}
        let checksum = analog.iter().fold(0xcbf2_9ce4_8422_2325_u64, |hash, v| {
            (hash ^ v.to_bits()).wrapping_mul(0x100_0000_01b3)
        });
        println!("trial 0 checksum {checksum:016x}");
    }
}
