//! Times the synthesis of a bench scene with parts removed (a profiling aid).
use echobench_scene::{load_scene_text, StreamKey, Synthesizer};
fn main() {
    let base = std::fs::read_to_string("../scenarios/bench/corridor-walker-fan-2g4.yaml").unwrap();
    let head = base.split("actors:").next().unwrap().to_string();
    let walker = base.split("  - kind: fan").next().unwrap().to_string();
    let fan = format!(
        "{head}actors:\n  - kind: fan{}",
        base.split("  - kind: fan").nth(1).unwrap()
    );
    for (name, text) in [
        ("full", base.clone()),
        ("no actors", head),
        ("walker only", walker),
        ("fan only", fan),
    ] {
        let scene = load_scene_text("x.yaml", &text).unwrap();
        let t0 = std::time::Instant::now();
        let mut synth = Synthesizer::new(&scene, &StreamKey::new(1, "x", 0)).unwrap();
        let (mut v, mut c) = (Vec::new(), Vec::new());
        while synth.next_block(&mut v, &mut c, usize::MAX) > 0 {}
        let t = t0.elapsed().as_secs_f64();
        println!(
            "{name:12} {:7.1} ms  {:5.2} M samples/s  oversampling {}",
            t * 1e3,
            v.len() as f64 / t / 1e6,
            synth.oversampling()
        );
    }
}
