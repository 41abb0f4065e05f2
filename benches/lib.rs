//! Shared set-up of the criterion benchmarks (run them with `cargo bench -p echobench-benches`).
#![deny(missing_docs)]

/// Loads a scene of `scenarios/bench/` by file name.
///
/// # Panics
/// When the scene does not load (the benchmarks cannot run without it).
pub fn bench_scene(file: &str) -> echobench_scene::SceneSpec {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../scenarios/bench")
        .join(file);
    match echobench_scene::load_scene_file(&path) {
        Ok((scene, _)) => scene,
        Err(report) => panic!("{report}"),
    }
}
