//! A presence product through the whole runner: thresholds chosen on false switch-ons per
//! day in every room, the output pin's tallies at the operating point and over the hold
//! sweep, and the summary's figures.

use echobench_core::detector::{
    Cost, Detector, DetectorFailure, DetectorPlan, DetectorPlugin, ParamError, ParamSpec, Params,
    PrototypePlan, Samples,
};
use echobench_core::{FrameScore, StreamInfo};
use echobench_harness::presence_summary::presence_verdict;
use echobench_harness::runner::{resolve_detectors, run_suite, DetectorTally, Tallies};
use echobench_suite::Suite;
use echobench_suite::{load_suite_text, InlineOnly};
use std::sync::Arc;
/// A detector that never reaches any threshold a calibration can choose: one score of 0
/// per block, so the grid's top (just above 0) is never reached.
struct SilentPlugin;
#[derive(Clone)]
struct Silent {
    samples: u64,
}

static NO_PARAMS: [ParamSpec; 0] = [];

impl Detector for Silent {
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        let block = block.values();
        self.samples += block.len() as u64;
        out.push(FrameScore {
            end_sample: self.samples,
            value: 0.0,
        });
        Ok(())
    }
    fn reset(&mut self) {
        self.samples = 0;
    }
}

impl DetectorPlugin for SilentPlugin {
    fn id(&self) -> &'static str {
        "silent"
    }
    fn about(&self) -> &'static str {
        "never fires"
    }
    fn params(&self) -> &'static [ParamSpec] {
        &NO_PARAMS
    }
    fn plan(&self, _: &Params, _: &StreamInfo) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        Ok(PrototypePlan::shared(Silent { samples: 0 }))
    }
    fn check(&self, _: &Params, _: &StreamInfo) -> Result<(), ParamError> {
        Ok(())
    }

    fn cost(&self, _: &Params, _: &StreamInfo) -> Option<Cost> {
        Some(Cost {
            state_bytes: 8,
            ops_per_sample: 1.0,
        })
    }
}

/// A 24 GHz room-lighting product: a visitor who walks in and stands still, a seated
/// reader present from the start, and an empty room with a desk fan.
const SUITE: &str = "\
name: presence-run
seed: 11
trials: 4
calibration_trials: 2
products:
  - name: room-lights
    kind: presence
    output: {hold_s: 5}
    budget: {false_switch_ons_per_day: [240, 24]}
    hold_sweep_s: [1, 2, 5, 10, 20]
    module:
      carrier_hz: 24.125e9
      sample_rate_hz: 2000
      output: real
      elevation_deg: -30
      front_end: {high_pass_hz: [0.5], low_pass_hz: [500], gain_db: 66, rails_v: [0, 3.3]}
      adc: {bits: 12, full_scale_v: 3.3}
    scenes:
      - id: visitor
        label: target
        scene:
          duration_s: 20
          sensor: {SENSOR}
          coverage: {range_m: 8}
          environment: {white_noise_v_per_rthz: 30e-9, flicker_corner_hz: 1000}
          actors:
            - kind: walker
              id: visitor
              target: true
              path:
                start_m: [7, 0.5]
                heading_deg: 180
                speed_mps: 1.1
                enter_s: 1
                pauses:
                  - {at_s: 6, duration_s: 60}
      - id: reader
        label: target
        scene:
          duration_s: 20
          sensor: {SENSOR}
          coverage: {range_m: 5}
          environment: {white_noise_v_per_rthz: 30e-9, flicker_corner_hz: 1000}
          actors:
            - kind: breathing
              id: reader
              target: true
              position_m: [2.2, 0.3]
              chest_height_m: 1.0
              facing_deg: 180
      - id: fan-room
        label: nuisance
        calibration_trials: 24
        scene:
          duration_s: 20
          sensor: {SENSOR}
          coverage: {range_m: 8}
          environment: {white_noise_v_per_rthz: 30e-9, flicker_corner_hz: 1000}
          actors:
            - kind: fan
              id: desk-fan
              position_m: [3, 1, 1.0]
              tip_radius_m: 0.15
              rev_per_s: 18
detectors:
  - plugin: energy
  - plugin: silent
";

/// Each scene states the module in full (the product's module replaces all of it but the
/// placement).
const SENSOR: &str = "{position_m: [0, 0, 2.6], carrier_hz: 24.125e9, sample_rate_hz: 2000, front_end: {high_pass_hz: [0.5], low_pass_hz: [500]}, adc: {bits: 12, full_scale_v: 3.3}}";

fn load() -> Suite {
    let mut plugins = echobench_detectors::builtin();
    plugins.push(Arc::new(SilentPlugin));
    let text = SUITE.replace("{SENSOR}", SENSOR);
    let (suite, report) = load_suite_text("presence-run.yaml", &text, &InlineOnly, &plugins)
        .unwrap_or_else(|report| panic!("does not load:\n{report}"));
    assert!(!report.has_errors(), "{report}");
    suite
}

fn run(suite: &Suite) -> Tallies {
    let mut plugins = echobench_detectors::builtin();
    plugins.push(Arc::new(SilentPlugin));
    let detectors = resolve_detectors(suite, &plugins).unwrap();
    run_suite(suite, &detectors, None, &|_| {}).unwrap().0
}

fn detector<'t>(tallies: &'t Tallies, label: &str) -> &'t DetectorTally {
    tallies
        .detectors
        .iter()
        .find(|d| d.label == label)
        .expect("the detector ran")
}

#[test]
fn a_presence_product_is_calibrated_on_switch_ons_and_scored_on_its_pin() {
    let suite = load();
    let tallies = run(&suite);
    let energy = detector(&tallies, "energy");
    assert_eq!(energy.kind, "presence");
    let output = energy.presence_output.as_ref().expect("the timer is kept");
    assert_eq!(output.hold_s, 5.0);

    // Budgets become operating points per hour, and each holds in the room in calibration.
    let targets: Vec<f64> = energy.operating.iter().map(|o| o.target_per_hour).collect();
    assert_eq!(targets, [10.0, 1.0]);
    for op in &energy.operating {
        let room = &op.rooms[0];
        assert_eq!(room.scene, "fan-room");
        // 24 trials of 20 s of empty time, in ns.
        assert_eq!(room.exposure_ns, 24 * 20_000_000_000);
        let per_day = room.false_alarms as f64 / (room.exposure_ns as f64 / 8.64e13);
        assert!(
            per_day <= op.target_per_hour * 24.0,
            "{per_day} false switch-ons per day over the budget"
        );
        // The grid step below the threshold breaks the budget (or the threshold is the
        // grid's lowest).
        if op.grid_index > 0 {
            let room_grid = &energy.calibration_rooms[0];
            let below = room_grid.false_alarms[op.grid_index - 1] as f64
                / (room_grid.exposure_ns as f64 / 8.64e13);
            assert!(below > op.target_per_hour * 24.0);
        }
    }

    // The pin's time adds up: every test trial's time is empty, moving or still.
    for v in &energy.variants {
        let p = &v.presence[0];
        assert_eq!(
            p.empty_ns + p.moving_ns + p.still_ns,
            v.trials * 20_000_000_000,
            "{}",
            v.scene
        );
        assert_eq!(v.hold_sweep[0].len(), 5);
        // The sweep at the product's own hold is the operating point's tally.
        assert_eq!(v.hold_sweep[0][2], *p, "{}", v.scene);
        // Longer holds: never more drop-outs, never less false-on time.
        for pair in v.hold_sweep[0].windows(2) {
            assert!(pair[1].dropouts() <= pair[0].dropouts(), "{}", v.scene);
            assert!(pair[1].false_on_ns >= pair[0].false_on_ns, "{}", v.scene);
        }
    }
    let visitor = energy
        .variants
        .iter()
        .find(|v| v.scene == "visitor")
        .unwrap();
    let reader = energy
        .variants
        .iter()
        .find(|v| v.scene == "reader")
        .unwrap();
    let room = energy
        .variants
        .iter()
        .find(|v| v.scene == "fan-room")
        .unwrap();
    // The visitor walks in from outside the zone, then stands still: one entry each.
    assert_eq!(visitor.presence[0].entries, 4);
    assert!(visitor.presence[0].moving_ns > 0 && visitor.presence[0].still_ns > 0);
    // The reader is there from the start and never moves: no entry, only still time.
    assert_eq!(reader.presence[0].entries, 0);
    assert_eq!(reader.presence[0].moving_ns, 0);
    assert_eq!(reader.presence[0].empty_ns, 0);
    // The fan room is empty throughout.
    assert_eq!(room.presence[0].occupied_periods, 0);
    assert_eq!(room.presence[0].empty_ns, 4 * 20_000_000_000);

    // A detector that never fires: no false-on time, and each occupied period is missed,
    // counted as one drop-out.
    let silent = detector(&tallies, "silent");
    for v in &silent.variants {
        let p = &v.presence[0];
        assert_eq!((p.false_on_ns, p.false_switch_ons), (0, 0), "{}", v.scene);
        assert_eq!(p.missed_periods, p.occupied_periods, "{}", v.scene);
        assert_eq!(p.dropouts(), p.occupied_periods, "{}", v.scene);
        assert!(p.switch_on_latency_ns.is_empty());
    }

    // The summary reads the same tallies into rates with intervals.
    let verdict = presence_verdict(silent).expect("a presence verdict");
    let figures = &verdict.points[0].figures;
    assert_eq!(figures.false_switch_ons, 0);
    assert_eq!(figures.false_on_s_per_day.value, Some(0.0));
    assert!(figures.false_on_s_per_day.high.unwrap() > 0.0);
    assert_eq!(verdict.tradeoff.len(), 5);
    assert!(verdict.tradeoff[2].product_hold);
    // Every entry of the silent detector is censored: its median switch-on is not reached.
    assert!(figures.switch_on_median.not_reached);
}
