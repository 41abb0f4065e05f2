//! A small zone run the way the runner will run it: walks synthesized as walker trials of a
//! product's scene, the energy detector at a threshold from noise-only trials, first alarms
//! tallied; the CSV and pictures must be byte-identical for one thread, two threads and
//! shards merged in either order.

use echobench_core::detector::{DetectorPlugin, Params, Samples};
use echobench_core::seed::StreamKey;
use echobench_detector_energy::EnergyPlugin;
use echobench_scene::{load_scene_text, synthesize, SceneSpec};
use echobench_zone::{
    floor_picture, side_picture, zone_csv, FloorRect, Walk, WalkKind, ZoneCsvPart, ZonePlan,
    ZoneSpec, ZoneTally,
};
use rayon::prelude::*;

/// A 10.525 GHz module on a wall at 2.2 m, tilted 15° down, in a 6 m × 6 m room.
const SCENE: &str = "
name: small-room
duration_s: 1
sensor:
  carrier_hz: 10.525e9
  sample_rate_hz: 2000
  output: real
  position_m: [0, 3, 2.2]
  azimuth_deg: 0
  elevation_deg: -15
  front_end:
    high_pass_hz: [0.5]
    low_pass_hz: [300]
    gain_db: 60
    rails_v: [0, 3.3]
  adc: {bits: 12, full_scale_v: 3.3}
environment:
  white_noise_v_per_rthz: 100e-9
";

fn max_after(samples: &[f32], info: &echobench_core::StreamInfo, from_s: f64) -> Vec<(f64, f64)> {
    let plugin = EnergyPlugin;
    let params = Params::defaults(plugin.params());
    let mut detector = plugin
        .plan(&params, info)
        .map(|plan| plan.start())
        .expect("energy detector");
    let mut out = Vec::new();
    detector
        .process(Samples::Real(samples), &mut out)
        .expect("in-process detectors do not fail");
    out.iter()
        .map(|s| s.timed(info.sample_rate_hz))
        .filter(|s| s.t_s >= from_s)
        .map(|s| (s.t_s, s.value))
        .collect()
}

fn first_alarm(template: &SceneSpec, plan: &ZonePlan, walk: &Walk, threshold: f64) -> Option<f64> {
    let scene = plan.trial_scene(template, walk, walk.walker_actor());
    let trial = synthesize(&scene, &plan.trial_key(&template.name, walk)).expect("synthesis");
    max_after(&trial.samples, &trial.info, walk.enter_s)
        .into_iter()
        .find(|&(_, score)| score >= threshold)
        .map(|(t, _)| t)
}

fn outputs(plan: &ZonePlan, tally: &ZoneTally) -> (Vec<u8>, String) {
    let part = ZoneCsvPart {
        product: "small-room",
        plan,
        tallies: &[("energy", tally)],
    };
    let csv = zone_csv(&[part], 0.95).unwrap();
    let mut pictures = String::new();
    for kind in WalkKind::ALL {
        pictures.push_str(floor_picture(plan, "energy", kind, tally).as_str());
        pictures.push_str(side_picture(plan, "energy", kind, tally).as_str());
    }
    (csv, pictures)
}

#[test]
fn a_zone_is_the_same_for_one_thread_two_threads_and_merged_shards() {
    let template = load_scene_text("small-room.yaml", SCENE).expect("scene");
    let spec = ZoneSpec::new(
        FloorRect {
            x_min_m: 0.0,
            x_max_m: 6.0,
            y_min_m: 0.0,
            y_max_m: 6.0,
        },
        3,
        3,
        2,
    );
    let plan = ZonePlan::new(&spec, &template.sensor, 42).unwrap();
    let longest = plan.walks().iter().map(Walk::end_s).fold(0.0, f64::max);
    // The operating threshold: the largest score of a few empty-room trials as long as the
    // longest walk (the runner takes it from the product's calibration).
    let mut empty = template.clone();
    empty.duration_s = longest + spec.tail_s;
    let threshold = (0..4)
        .into_par_iter()
        .map(|i| {
            let trial =
                synthesize(&empty, &StreamKey::new(42, "calibration/small-room", i)).unwrap();
            max_after(&trial.samples, &trial.info, spec.settle_s)
                .iter()
                .map(|s| s.1)
                .fold(0.0, f64::max)
        })
        .reduce(|| 0.0, f64::max);
    let started = std::time::Instant::now();
    let alarms: Vec<Option<f64>> = plan
        .walks()
        .par_iter()
        .map(|walk| first_alarm(&template, &plan, walk, threshold))
        .collect();
    eprintln!(
        "{} walks in {:.2} s on the pool's threads",
        plan.walks().len(),
        started.elapsed().as_secs_f64()
    );
    // One pass in walk order.
    let mut whole = ZoneTally::new(&plan);
    for (walk, &alarm) in plan.walks().iter().zip(&alarms) {
        whole.record(&plan, walk, alarm).unwrap();
    }
    // Two threads, each folding its own tally, merged as rayon joins them.
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .build()
        .unwrap();
    let threaded = pool.install(|| {
        plan.walks()
            .par_iter()
            .zip(alarms.par_iter())
            .fold(
                || ZoneTally::new(&plan),
                |mut tally, (walk, &alarm)| {
                    tally.record(&plan, walk, alarm).unwrap();
                    tally
                },
            )
            .reduce(
                || ZoneTally::new(&plan),
                |mut a, b| {
                    a.merge(&b).unwrap();
                    a
                },
            )
    });
    // Two shards by walk index, merged both ways.
    let mut shards = [ZoneTally::new(&plan), ZoneTally::new(&plan)];
    for (walk, &alarm) in plan.walks().iter().zip(&alarms).rev() {
        shards[walk.index as usize % 2]
            .record(&plan, walk, alarm)
            .unwrap();
    }
    let mut one_way = shards[0].clone();
    one_way.merge(&shards[1]).unwrap();
    let mut other_way = shards[1].clone();
    other_way.merge(&shards[0]).unwrap();
    let reference = outputs(&plan, &whole);
    for tally in [&threaded, &one_way, &other_way] {
        assert!(outputs(&plan, tally) == reference, "outputs differ");
    }
    // A walker a few metres from a 10 GHz module in a quiet room is seen: most walks are
    // detected, and every cell's row is there.
    let csv = String::from_utf8(reference.0).unwrap();
    assert_eq!(csv.lines().count(), 1 + 2 * 9);
    for kind in WalkKind::ALL {
        let t = whole.kind(kind);
        assert!(
            2 * t.detected_walks > t.walks,
            "{kind:?}: {} of {}",
            t.detected_walks,
            t.walks
        );
    }
}
