//! A small real run shared by the report tests: a tiny inline suite through the harness's
//! suite loader and runner, with a detector that fails on some trials.

#![allow(dead_code)]

use echobench_core::detector::{
    Cost, Detector, DetectorFailure, DetectorPlan, DetectorPlugin, ParamError, ParamSpec, Params,
    PrototypePlan, Samples,
};
use echobench_core::{FrameScore, StreamInfo};
use echobench_harness::runner::{resolve_detectors, run_suite};
use echobench_harness::summary::summarise;
use echobench_report::RunFolder;
use echobench_suite::{load_suite_text, FolderSource};
use std::sync::Arc;
use std::sync::OnceLock;

/// A suite small enough to run in about a second: a walker at two start ranges, a desk fan,
/// an empty room; three built-in detectors and one that fails on about half the trials.
/// The comment line checks that the suite text is escaped in the report.
pub const SUITE: &str = r#"# Report test suite. <script>alert("not escaped")</script> & more
name: report-test
seed: 4242
trials: 4
calibration_trials: 2
scenes:
  - id: corridor-walker
    label: target
    sweep:
      field: actors[0].path.start_m[0]
      values: [2, 6]
    scene:
      duration_s: 8
      sensor:
        carrier_hz: 2.45e9
        sample_rate_hz: 2000
        output: real
        position_m: [0, 0, 2.5]
        azimuth_deg: 0
        elevation_deg: -10
        beam_azimuth_3db_deg: 80
        beam_elevation_3db_deg: 40
        front_end:
          high_pass_hz: [0.5]
          low_pass_hz: [100, 100]
          gain_db: 60
          rails_v: [0, 3.3]
        adc: {bits: 12, full_scale_v: 3.3}
      coverage: {range_m: 16, azimuth_half_deg: 40}
      environment:
        white_noise_v_per_rthz: 30e-9
        flicker_corner_hz: 500
      actors:
        - kind: walker
          id: office-worker
          height_m: 1.75
          path:
            start_m: [4, 0]
            heading_deg: 0
            speed_mps: {uniform: [1.0, 1.3]}
            enter_s: {uniform: [1, 2]}
            leave_s: 5
  - id: desk-fan-room
    label: nuisance
    scene:
      duration_s: 8
      sensor:
        carrier_hz: 2.45e9
        sample_rate_hz: 2000
        output: real
        position_m: [0, 0, 2.1]
        azimuth_deg: 0
        elevation_deg: -10
        beam_azimuth_3db_deg: 80
        beam_elevation_3db_deg: 40
        front_end:
          high_pass_hz: [0.5]
          low_pass_hz: [100, 100]
          gain_db: 60
          rails_v: [0, 3.3]
        adc: {bits: 12, full_scale_v: 3.3}
      coverage: {range_m: 6}
      environment:
        white_noise_v_per_rthz: 30e-9
        flicker_corner_hz: 500
      actors:
        - kind: fan
          id: desk-fan
          position_m: [3.0, 0.8, 1.2]
          axis_azimuth_deg: {uniform: [190, 230]}
          blades: 3
          root_radius_m: 0.04
          tip_radius_m: 0.15
          rev_per_s: {uniform: [15, 22]}
          blade_tilt_deg: 20
          blade_rcs_m2: 0.01
          housing_vibration_m: 2.0e-5
          housing_rcs_m2: 0.05
          mains_hz: 50
  - id: quiet-room
    label: nuisance
    scene:
      duration_s: 8
      sensor:
        carrier_hz: 2.45e9
        sample_rate_hz: 2000
        output: real
        elevation_deg: -10
        front_end:
          high_pass_hz: [0.5]
          low_pass_hz: [100, 100]
          gain_db: 60
          rails_v: [0, 3.3]
        adc: {bits: 12, full_scale_v: 3.3}
      environment:
        white_noise_v_per_rthz: 30e-9
detectors:
  - plugin: energy
  - plugin: ca-cfar
  - plugin: band-ratio
  - plugin: flaky
alarm: {hold_s: 1}
scoring:
  target_false_alarms_per_hour: [10, 1]
  threshold_count: 40
"#;

/// The 2.45 GHz module of the first product of [`two_products_suite`], as each of its
/// scenes carries it (a product without `module` takes the one its scenes share).
const MODULE_2G4: &str = "
      sensor:
        carrier_hz: 2.45e9
        sample_rate_hz: 2000
        output: real
        position_m: [0, 0, 2.5]
        elevation_deg: -10
        beam_azimuth_3db_deg: 80
        beam_elevation_3db_deg: 40
        front_end:
          high_pass_hz: [0.5]
          low_pass_hz: [100, 100]
          gain_db: 60
          rails_v: [0, 3.3]
        adc: {bits: 12, full_scale_v: 3.3}
      environment:
        white_noise_v_per_rthz: 30e-9
        flicker_corner_hz: 500";

/// The 24.125 GHz scenes' sensor: the second product states its module, which replaces
/// everything here but the placement.
const SENSOR_24G: &str = "
      sensor:
        carrier_hz: 24.125e9
        sample_rate_hz: 2000
        output: real
        position_m: [0, 0, 2.6]
        elevation_deg: -30
        beam_azimuth_3db_deg: 80
        beam_elevation_3db_deg: 34
        front_end:
          high_pass_hz: [0.5]
          low_pass_hz: [500]
          gain_db: 66
          rails_v: [0, 3.3]
        adc: {bits: 12, full_scale_v: 3.3}
      environment:
        white_noise_v_per_rthz: 30e-9
        flicker_corner_hz: 1000";

/// Two products, small enough to run in about a second: a 2.45 GHz corridor module (a
/// walker swept over two start ranges; a desk-fan room and a quiet room) and a 24 GHz
/// ceiling module whose name and description hold markup (a walker approaching, a
/// seated reader who only breathes, i.e. present but not moving; an empty lab and a
/// ceiling-fan lounge). Two detectors.
pub fn two_products_suite() -> String {
    // The blocks are written for a scene at the suite's top level; here scenes sit four
    // columns deeper, inside their product.
    let deeper = |block: &str| block.replace('\n', "\n    ");
    let (module_2g4, sensor_24g) = (deeper(MODULE_2G4), deeper(SENSOR_24G));
    format!(
        r#"name: two-products
seed: 9090
trials: 3
calibration_trials: 2
products:
  - name: corridor-2g4
    about: Wall-mounted 2.45 GHz corridor module.
    scenes:
      - id: corridor-walker
        label: target
        sweep:
          field: actors[0].path.start_m[0]
          values: [2, 6]
        scene:
          duration_s: 6{module_2g4}
          actors:
            - kind: walker
              id: walker
              height_m: 1.75
              path:
                start_m: [4, 0]
                heading_deg: 0
                speed_mps: {{uniform: [1.0, 1.3]}}
                enter_s: {{uniform: [1, 2]}}
                leave_s: 5
      - id: desk-fan-room
        label: nuisance
        scene:
          duration_s: 6{module_2g4}
          actors:
            - kind: fan
              id: desk-fan
              position_m: [3.0, 0.8, 1.2]
              axis_azimuth_deg: {{uniform: [190, 230]}}
              blades: 3
              root_radius_m: 0.04
              tip_radius_m: 0.15
              rev_per_s: {{uniform: [15, 22]}}
              blade_tilt_deg: 20
              blade_rcs_m2: 0.01
              housing_vibration_m: 2.0e-5
              housing_rcs_m2: 0.05
              mains_hz: 50
      - id: quiet-corridor
        label: nuisance
        scene:
          duration_s: 6{module_2g4}
  - name: "ceiling <24g> & co"
    about: "Ceiling module <b>not bold</b> & friends."
    module:
      carrier_hz: 24.125e9
      sample_rate_hz: 2000
      output: real
      elevation_deg: -30
      beam_azimuth_3db_deg: 80
      beam_elevation_3db_deg: 34
      front_end:
        high_pass_hz: [0.5]
        low_pass_hz: [500]
        gain_db: 66
        rails_v: [0, 3.3]
      adc: {{bits: 12, full_scale_v: 3.3}}
    scenes:
      - id: office-approach
        label: target
        scene:
          duration_s: 6{sensor_24g}
          actors:
            - kind: walker
              id: visitor
              target: true
              height_m: 1.72
              path:
                start_m: [6, 0.5]
                heading_deg: 180
                speed_mps: {{uniform: [1.0, 1.4]}}
                enter_s: {{uniform: [1, 2]}}
                leave_s: 5
      - id: seated-reader
        label: target
        scene:
          duration_s: 6{sensor_24g}
          actors:
            - kind: breathing
              id: reader
              target: true
              position_m: [2.2, 0.3]
              chest_height_m: 1.0
              facing_deg: 180
              rate_per_min: {{uniform: [10, 16]}}
              displacement_pp_m: {{uniform: [0.003, 0.008]}}
      - id: empty-lab
        label: nuisance
        scene:
          duration_s: 6{sensor_24g}
      - id: fan-lounge
        label: nuisance
        scene:
          duration_s: 6{sensor_24g}
          actors:
            - kind: fan
              id: ceiling-fan
              position_m: [4.0, 0.5, 2.6]
              axis_azimuth_deg: 0
              axis_elevation_deg: 90
              blades: 3
              root_radius_m: 0.15
              tip_radius_m: 0.65
              rev_per_s: {{uniform: [2.5, 3.5]}}
              blade_tilt_deg: 12
              blade_rcs_m2: 0.05
              housing_vibration_m: 2.0e-5
              housing_rcs_m2: 0.05
detectors:
  - plugin: energy
  - plugin: band-ratio
alarm: {{hold_s: 1}}
scoring:
  target_false_alarms_per_hour: [10, 1]
  threshold_count: 40
"#
    )
}

/// The shared two-product run.
pub fn two_products_run() -> &'static RunFolder {
    static RUN: OnceLock<RunFolder> = OnceLock::new();
    RUN.get_or_init(|| run_text(&two_products_suite()))
}

/// Scores the mean magnitude of each block, but fails (a NaN score) on any trial whose
/// first block has a positive mean: about half the trials, always the same ones.
pub struct FlakyPlugin;
#[derive(Clone)]
struct Flaky {
    samples: u64,
}

static NO_PARAMS: [ParamSpec; 0] = [];

impl Detector for Flaky {
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        let block = block.values();
        if block.is_empty() {
            return Ok(());
        }
        let fail = self.samples == 0 && block.iter().map(|&x| f64::from(x)).sum::<f64>() > 0.0;
        self.samples += block.len() as u64;
        let mean = block.iter().map(|x| f64::from(x.abs())).sum::<f64>() / block.len() as f64;
        out.push(FrameScore {
            end_sample: self.samples,
            value: if fail { f64::NAN } else { mean },
        });
        Ok(())
    }
    fn reset(&mut self) {
        self.samples = 0;
    }
}

impl DetectorPlugin for FlakyPlugin {
    fn id(&self) -> &'static str {
        "flaky"
    }
    fn about(&self) -> &'static str {
        "fails on some trials, for the report's failure table"
    }
    fn params(&self) -> &'static [ParamSpec] {
        &NO_PARAMS
    }
    fn plan(&self, _: &Params, _: &StreamInfo) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        Ok(PrototypePlan::shared(Flaky { samples: 0 }))
    }
    fn check(&self, _: &Params, _: &StreamInfo) -> Result<(), ParamError> {
        Ok(())
    }

    fn cost(&self, _: &Params, _: &StreamInfo) -> Option<Cost> {
        Some(Cost {
            state_bytes: 16,
            ops_per_sample: 2.0,
        })
    }
}

fn plugins() -> Vec<Arc<dyn DetectorPlugin>> {
    let mut all = echobench_detectors::builtin();
    all.push(Arc::new(FlakyPlugin));
    all
}

/// Runs a suite text and returns its run folder (in memory, with timing).
pub fn run_text(text: &str) -> RunFolder {
    let plugins = plugins();
    let (suite, _) = load_suite_text("report-test.yaml", text, &FolderSource::new("."), &plugins)
        .unwrap_or_else(|r| panic!("{r}"));
    let detectors = resolve_detectors(&suite, &plugins).expect("detectors resolve");
    let (tallies, timing) = run_suite(&suite, &detectors, None, &|_| {}).expect("the suite runs");
    RunFolder {
        summary: summarise(&tallies, &suite),
        tallies,
        timing: Some(timing),
        suite_text: Some(text.to_string()),
        zone: None,
        zone_pictures: Default::default(),
    }
}

/// The shared small run.
pub fn small_run() -> &'static RunFolder {
    static RUN: OnceLock<RunFolder> = OnceLock::new();
    RUN.get_or_init(|| run_text(SUITE))
}

/// Each `<svg …>…</svg>` of a page.
pub fn svgs(html: &str) -> Vec<&str> {
    html.match_indices("<svg ")
        .map(|(start, _)| {
            let end = html[start..]
                .find("</svg>")
                .map_or(html.len(), |e| start + e + "</svg>".len());
            &html[start..end]
        })
        .collect()
}

fn attribute<'a>(element: &'a str, name: &str) -> Option<&'a str> {
    let key = format!(" {name}=\"");
    let start = element.find(&key)? + key.len();
    let end = element[start..].find('"')? + start;
    Some(&element[start..end])
}

/// Whether a plot has at least one data element with a visible extent: a polyline through
/// two different points, a marker path, or a bar of positive width.
pub fn has_drawn_data(svg: &str) -> bool {
    svg.match_indices("class=\"data\"").any(|(at, _)| {
        let open = svg[..at].rfind('<').unwrap_or(0);
        let close = svg[at..].find('>').map_or(svg.len(), |e| at + e);
        let element = &svg[open..=close.min(svg.len() - 1)];
        if element.starts_with("<polyline") {
            let points: Vec<&str> = attribute(element, "points")
                .unwrap_or("")
                .split_whitespace()
                .collect();
            points.windows(2).any(|w| w[0] != w[1])
        } else if element.starts_with("<path") {
            attribute(element, "d").is_some_and(|d| d.len() > 4)
        } else if element.starts_with("<rect") {
            attribute(element, "width")
                .and_then(|w| w.parse::<f64>().ok())
                .is_some_and(|w| w > 0.0)
        } else {
            false
        }
    })
}

/// The two-product run with one detection cell set to Pd 0 and given a miss reason that
/// holds markup, and one room's test false alarms raised above the target: the page must
/// make both stand out and escape the reason.
pub fn two_products_with_a_zero() -> RunFolder {
    use echobench_harness::summary::{Estimate, MissReason};
    let mut run = two_products_run().clone();
    let d = run
        .summary
        .detectors
        .iter_mut()
        .find(|d| d.product == "corridor-2g4" && d.label == "energy")
        .expect("corridor-2g4/energy");
    let op = &mut d.operating_points[0];
    let target = op.target_false_alarms_per_hour;
    let cell = op
        .by_scene
        .iter_mut()
        .find(|s| s.scene == "corridor-walker" && s.sweep_value.as_deref() == Some("6"))
        .expect("corridor-walker @ 6");
    cell.outcome.detected = 0;
    cell.outcome.pd = Estimate::proportion(0, cell.outcome.events);
    cell.latency_median_s = None;
    let room = op
        .by_scene
        .iter_mut()
        .find(|s| s.scene == "quiet-corridor")
        .expect("quiet-corridor");
    let hours = room.outcome.exposure_hours;
    let false_alarms = (target * hours).ceil() as u64 + 2;
    room.outcome.false_alarms = false_alarms;
    room.outcome.false_alarms_per_hour = Estimate::rate(false_alarms, hours);
    run.summary.miss_reasons.push(MissReason {
        product: "corridor-2g4".into(),
        detector: "energy".into(),
        scene: "corridor-walker".into(),
        sweep_value: Some("6".into()),
        pd: 0.0,
        kind: "out of range".into(),
        reason: "out of range: too weak <at> 6 m & beyond".into(),
    });
    run
}
