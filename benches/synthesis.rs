//! Synthesis throughput in output samples per second (one thread).
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use echobench_benches::bench_scene;
use echobench_scene::{StreamKey, Synthesizer};

fn synthesis(c: &mut Criterion) {
    let mut group = c.benchmark_group("synthesis");
    group.sample_size(10);
    for file in [
        "corridor-walker-fan-2g4.yaml",
        "corridor-walker-fan-24g.yaml",
    ] {
        let scene = bench_scene(file);
        let samples = (scene.duration_s * scene.sensor.sample_rate_hz) as u64;
        group.throughput(Throughput::Elements(samples));
        group.bench_function(scene.name.clone(), |b| {
            let mut volts = Vec::with_capacity(samples as usize);
            let mut codes = Vec::with_capacity(samples as usize);
            let mut trial = 0;
            b.iter(|| {
                trial += 1;
                let mut synth =
                    Synthesizer::new(&scene, &StreamKey::new(1, scene.name.clone(), trial))
                        .unwrap();
                volts.clear();
                codes.clear();
                while synth.next_block(&mut volts, &mut codes, usize::MAX) > 0 {}
                volts.len()
            })
        });
    }
    group.finish();
}

criterion_group!(benches, synthesis);
criterion_main!(benches);
