//! The zone's walks through the runner: the same record for one and two threads and for
//! merged shards, every planned walk judged once per detector at the run's own operating
//! threshold, and a zone of another run's detectors refused.

use echobench_core::detector::DetectorPlugin;
use echobench_harness::runner::{resolve_detectors, run_suite, Shard, Tallies};
use echobench_harness::zone_walks::{
    fill_figures, merge_zone_runs, product_zone_plan, run_zones, ProductZoneRun, ZoneRecord,
    ZONE_CONFIDENCE, ZONE_SCHEMA_VERSION,
};
use echobench_suite::{default_suite, Suite};
use echobench_zone::WalkKind;
use std::sync::Arc;

fn plugins() -> Vec<Arc<dyn DetectorPlugin>> {
    echobench_detectors::builtin()
}

/// The default suite with one trial per variant and its zones cut to 3 × 3 cells of one
/// walker each, so a test walks a few dozen walks.
fn small_suite() -> Suite {
    let mut suite = default_suite(&plugins()).expect("the default suite loads");
    for scene in &mut suite.scenes {
        scene.trials = 1;
        scene.calibration_trials = 1;
    }
    for product in &mut suite.products {
        let zone = product
            .zone
            .as_mut()
            .expect("the default suite maps both zones");
        zone.spec.cells_x = 3;
        zone.spec.cells_y = 3;
        zone.spec.walkers_per_cell = 1;
    }
    suite
}

fn pool(threads: usize) -> rayon::ThreadPool {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap()
}

fn zones(
    suite: &Suite,
    run: &Tallies,
    shard: Option<Shard>,
    threads: usize,
) -> Vec<ProductZoneRun> {
    let detectors = resolve_detectors(suite, &plugins()).unwrap();
    pool(threads)
        .install(|| run_zones(suite, &detectors, run, shard, &|_| {}))
        .unwrap()
}

fn record(suite: &Suite, products: Vec<ProductZoneRun>) -> Vec<u8> {
    let mut record = ZoneRecord {
        schema: ZONE_SCHEMA_VERSION,
        suite: suite.name.clone(),
        seed: suite.seed,
        run_id: "test".into(),
        shards: Vec::new(),
        confidence: ZONE_CONFIDENCE,
        products,
    };
    fill_figures(suite, &mut record).unwrap();
    serde_json::to_vec_pretty(&record).unwrap()
}

#[test]
fn a_zone_is_the_same_for_one_and_two_threads_and_merged_shards() {
    let suite = small_suite();
    let detectors = resolve_detectors(&suite, &plugins()).unwrap();
    let (run, _) = pool(2)
        .install(|| run_suite(&suite, &detectors, None, &|_| {}))
        .unwrap();
    let one = zones(&suite, &run, None, 1);
    let two = zones(&suite, &run, None, 2);
    assert_eq!(record(&suite, one.clone()), record(&suite, two));

    // Each product's every planned walk is judged once per detector, at the run's threshold.
    for product in &one {
        let (plan, _) = product_zone_plan(&suite, &product.product)
            .unwrap()
            .unwrap();
        assert_eq!(product.planned_walks, plan.walks().len() as u64);
        assert_eq!(product.walks_run, product.planned_walks);
        for d in &product.detectors {
            let walks: u64 = WalkKind::ALL.iter().map(|k| d.tally.kind(*k).walks).sum();
            assert_eq!(walks + d.failed_walks, product.planned_walks, "{}", d.label);
            let tally = run
                .detectors
                .iter()
                .find(|t| t.product == product.product && t.label == d.label)
                .unwrap();
            assert_eq!(
                d.threshold.to_bits(),
                tally.operating[0].threshold.to_bits()
            );
        }
    }

    let mut parts: Vec<Vec<ProductZoneRun>> = (1..=2)
        .map(|k| zones(&suite, &run, Some(Shard { index: k, count: 2 }), 2))
        .collect();
    assert!(
        parts
            .iter()
            .all(|p| p[0].walks_run > 0 && p[0].walks_run < one[0].walks_run),
        "each shard walks a part"
    );
    // Merged in either order, the parts are the whole zone.
    let second = parts.pop().unwrap();
    let mut first = parts.pop().unwrap();
    let mut reversed = second.clone();
    merge_zone_runs(&mut reversed, &first).unwrap();
    merge_zone_runs(&mut first, &second).unwrap();
    assert_eq!(record(&suite, first), record(&suite, one.clone()));
    assert_eq!(record(&suite, reversed), record(&suite, one.clone()));

    // A part merged twice is refused: its walks are in both.
    let mut twice = one.clone();
    assert!(merge_zone_runs(&mut twice, &one).is_err());
}

#[test]
fn a_run_without_the_detector_is_refused_by_name() {
    let suite = small_suite();
    let detectors = resolve_detectors(&suite, &plugins()).unwrap();
    let (mut run, _) = pool(2)
        .install(|| run_suite(&suite, &detectors, None, &|_| {}))
        .unwrap();
    run.detectors.retain(|d| d.label != "energy");
    let error = pool(1)
        .install(|| run_zones(&suite, &detectors, &run, None, &|_| {}))
        .unwrap_err()
        .to_string();
    assert!(
        error.contains("no operating threshold of `energy`"),
        "{error}"
    );
}
