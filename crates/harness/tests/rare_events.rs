//! Rare events through the whole runner: a door that swings a few times a day, each test
//! trial one swing, scored by a detector that fires on a known fraction of swings; its rate
//! is the occurrences per day times that fraction, and it changes nothing of the rooms.

use echobench_core::detector::{
    Cost, Detector, DetectorFailure, DetectorPlan, DetectorPlugin, ParamError, ParamSpec, Params,
    PrototypePlan, Samples,
};
use echobench_core::{FrameScore, StreamInfo};
use echobench_harness::runner::{resolve_detectors, run_suite, Tallies};
use echobench_harness::summary::summarise;
use echobench_suite::Suite;
use echobench_suite::{load_suite_text, InlineOnly};
use std::sync::Arc;
/// The fraction of trials on which [`CoinPlugin`] looks at all.
const FIRING_FRACTION: f64 = 0.3;

/// A detector that fires on a fixed fraction of trials: a coin, tossed once per trial from
/// the bits of its first 16 samples (the scene's noise makes them differ from trial to
/// trial), decides whether the trial's frames score their swing (max |x − first sample|
/// over 0.1 s) or 0. A door swing is far above any room's swing, so a swing fires exactly
/// when the coin says so.
struct CoinPlugin;

#[derive(Clone)]
struct Coin {
    seen: u64,
    hash: u64,
    first: f32,
    looks: bool,
    frame_max: f64,
}

const FRAME: u64 = 200;
const COIN_SAMPLES: u64 = 16;

/// splitmix64's finaliser (Steele, Lea and Flood 2014): a well-mixed hash of the bits.
fn mix(mut z: u64) -> u64 {
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

impl Detector for Coin {
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        for &x in block.values() {
            if self.seen == 0 {
                self.first = x;
            }
            if self.seen < COIN_SAMPLES {
                self.hash = mix(self.hash ^ u64::from(x.to_bits()));
                if self.seen + 1 == COIN_SAMPLES {
                    self.looks = (self.hash % 1_000_000) as f64 / 1e6 < FIRING_FRACTION;
                }
            }
            self.frame_max = self.frame_max.max(f64::from((x - self.first).abs()));
            self.seen += 1;
            if self.seen.is_multiple_of(FRAME) {
                out.push(FrameScore {
                    end_sample: self.seen,
                    value: if self.looks { self.frame_max } else { 0.0 },
                });
                self.frame_max = 0.0;
            }
        }
        Ok(())
    }

    fn reset(&mut self) {
        *self = fresh();
    }
}

fn fresh() -> Coin {
    Coin {
        seen: 0,
        hash: 0x1234_5678,
        first: 0.0,
        looks: false,
        frame_max: 0.0,
    }
}

static NO_PARAMS: [ParamSpec; 0] = [];

impl DetectorPlugin for CoinPlugin {
    fn id(&self) -> &'static str {
        "coin"
    }
    fn about(&self) -> &'static str {
        "scores the swing on a fixed fraction of trials"
    }
    fn params(&self) -> &'static [ParamSpec] {
        &NO_PARAMS
    }
    fn plan(&self, _: &Params, _: &StreamInfo) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        Ok(PrototypePlan::shared(fresh()))
    }
    fn check(&self, _: &Params, _: &StreamInfo) -> Result<(), ParamError> {
        Ok(())
    }

    fn cost(&self, _: &Params, _: &StreamInfo) -> Option<Cost> {
        Some(Cost {
            state_bytes: 32,
            ops_per_sample: 3.0,
        })
    }
}

const SENSOR: &str = "{position_m: [0, 0, 2.3], carrier_hz: 2.45e9, sample_rate_hz: 2000, front_end: {high_pass_hz: [0.5], low_pass_hz: [100, 100], gain_db: 60, rails_v: [0, 3.3]}, adc: {bits: 12, full_scale_v: 3.3}}";

/// A corridor module with a walker, a quiet room and (with `{DOOR}`) a storeroom door that
/// the ventilation pushes open and shut 12 times a day.
const SUITE: &str = "\
name: rare-events
seed: 5
trials: 6
calibration_trials: 4
scenes:
  - id: walker
    label: target
    scene:
      duration_s: 8
      sensor: {SENSOR}
      coverage: {range_m: 10}
      environment: {white_noise_v_per_rthz: 30e-9, flicker_corner_hz: 500}
      actors:
        - kind: walker
          id: walker
          target: true
          path: {start_m: [6, 0.5], heading_deg: 180, speed_mps: 1.2, enter_s: 1}
  - id: quiet-room
    label: nuisance
    calibration_trials: 60
    scene:
      duration_s: 8
      sensor: {SENSOR}
      coverage: {range_m: 10}
      environment: {white_noise_v_per_rthz: 30e-9, flicker_corner_hz: 500}
{DOOR}detectors:
  - plugin: coin
alarm: {hold_s: 2}
scoring:
  early_s: 0.5
  late_s: 2
  target_false_alarms_per_hour: [10]
  threshold_count: 60
";

const DOOR: &str = "  - id: storeroom-door
    label: nuisance
    occurrences_per_day: 12
    trials: 400
    scene:
      duration_s: 6
      sensor: {SENSOR}
      coverage: {range_m: 10}
      environment: {white_noise_v_per_rthz: 30e-9, flicker_corner_hz: 500}
      actors:
        - {kind: door, id: door, hinge_m: [2.5, 0.6], width_m: 0.9, closed_deg: 90, open_deg: 0, open_at_s: 1, swing_s: 1.2, close_at_s: 3.5}
";

fn load(with_door: bool) -> Suite {
    let mut plugins = echobench_detectors::builtin();
    plugins.push(Arc::new(CoinPlugin));
    let text = SUITE
        .replace("{DOOR}", if with_door { DOOR } else { "" })
        .replace("{SENSOR}", SENSOR);
    let (suite, report) = load_suite_text("rare-events.yaml", &text, &InlineOnly, &plugins)
        .unwrap_or_else(|report| panic!("does not load:\n{report}"));
    assert!(!report.has_errors(), "{report}");
    suite
}

fn run(suite: &Suite) -> Tallies {
    let mut plugins = echobench_detectors::builtin();
    plugins.push(Arc::new(CoinPlugin));
    let detectors = resolve_detectors(suite, &plugins).unwrap();
    run_suite(suite, &detectors, None, &|_| {}).unwrap().0
}

#[test]
fn a_door_that_fires_on_a_known_fraction_of_swings_gives_that_rate() {
    let with_door = load(true);
    let tallies = run(&with_door);
    let summary = summarise(&tallies, &with_door);
    let point = &summary.detectors[0].operating_points[0];
    let events = point
        .rare_events
        .as_ref()
        .expect("the door is a rare event");
    let door = &events.events[0];
    assert_eq!(
        (door.scene.as_str(), door.occurrences),
        ("storeroom-door", 400)
    );
    // The probability's exact interval covers the coin's fraction (Clopper and Pearson 1934:
    // coverage at least 95 %; the seed is fixed, so this is one draw, not a flaky test).
    let (low, high) = (
        door.probability.low.unwrap(),
        door.probability.high.unwrap(),
    );
    assert!(
        low <= FIRING_FRACTION && FIRING_FRACTION <= high,
        "{} of {} swings alarmed: [{low}, {high}]",
        door.alarmed,
        door.occurrences
    );
    // Its rate is the occurrences per day times that fraction, ends included.
    let fraction = door.alarmed as f64 / door.occurrences as f64;
    assert_eq!(door.per_day.value, Some(12.0 * fraction));
    assert_eq!(door.per_day.high, Some(12.0 * high));
    let steady = events.steady_per_day.value.unwrap();
    assert_eq!(events.total_per_day.value, Some(steady + 12.0 * fraction));
    // The door is not a room: no calibration, no exposure, not among the product's rooms.
    let product = &summary.products[0];
    assert_eq!(product.nuisance_scenes, ["quiet-room"]);
    assert_eq!(product.rare_events, ["storeroom-door"]);
    let door_tally = tallies.detectors[0]
        .variants
        .iter()
        .find(|v| v.scene == "storeroom-door")
        .unwrap();
    assert_eq!(
        (door_tally.label.as_str(), door_tally.exposure_ns),
        ("event", 0)
    );
    assert!(door_tally.false_alarms.iter().all(|&n| n == 0));
    // ...and it changes nothing of the rest: thresholds, steady rates and detection are those
    // of the same suite without the door.
    let without = load(false);
    let plain = summarise(&run(&without), &without);
    let plain_point = &plain.detectors[0].operating_points[0];
    assert_eq!(plain_point.threshold, point.threshold);
    assert_eq!(plain_point.outcome, point.outcome);
    assert!(plain_point.rare_events.is_none());
}

#[test]
fn a_rare_event_must_be_a_synthesized_nuisance_without_calibration() {
    let mut plugins = echobench_detectors::builtin();
    plugins.push(Arc::new(CoinPlugin));
    for (change, expected) in [
        ("occurrences_per_day: 12", "occurrences_per_day: -1"),
        (
            "occurrences_per_day: 12",
            "occurrences_per_day: 12\n    calibration_trials: 3",
        ),
        (
            "label: nuisance\n    occurrences_per_day",
            "label: target\n    occurrences_per_day",
        ),
    ] {
        let door = DOOR.replace(change, expected);
        let text = SUITE.replace("{DOOR}", &door).replace("{SENSOR}", SENSOR);
        let report = load_suite_text("bad.yaml", &text, &InlineOnly, &plugins)
            .err()
            .unwrap_or_else(|| panic!("accepted: {expected}"));
        assert!(
            report.to_string().contains("occurrences_per_day"),
            "{expected}: {report}"
        );
    }
}
