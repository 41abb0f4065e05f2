//! Event-level ROC curves that fold back are cut: a real run's tallies, doctored so that at
//! the two lowest thresholds both the detected events and the false alarms fall (as when an
//! alarm sticks on and fewer onsets count), give a curve drawn only down to the threshold
//! above the fall, a caption that names the cut, and drawn lines that never turn back.

mod common;

use common::{run_text, svgs};
use echobench_report::{fold_back_cut, grid_roc, render_html, RunFolder};
use std::sync::OnceLock;

/// One sensor module for every scene (a product is one module).
const SENSOR: &str = "
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

/// A walker, a desk fan and an empty room, two detectors, a fine threshold grid: a real
/// run with detections and false alarms over most of the grid.
fn walker_run() -> &'static RunFolder {
    static RUN: OnceLock<RunFolder> = OnceLock::new();
    RUN.get_or_init(|| {
        run_text(&format!(
            r#"
name: roc-fold-back
seed: 77
trials: 4
calibration_trials: 2
scenes:
  - id: walker
    label: target
    scene:
      duration_s: 8{SENSOR}
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
      duration_s: 8{SENSOR}
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
  - id: quiet-room
    label: nuisance
    scene:
      duration_s: 8{SENSOR}
detectors:
  - plugin: energy
  - plugin: band-ratio
alarm: {{hold_s: 1}}
scoring:
  target_false_alarms_per_hour: [10]
  threshold_count: 40
"#
        ))
    })
}

/// The `points` attribute of every `<polyline>` in `svg`, as pixel pairs.
fn polylines(svg: &str) -> Vec<Vec<(f64, f64)>> {
    svg.match_indices("<polyline")
        .filter_map(|(at, _)| {
            let rest = &svg[at..];
            let start = rest.find(" points=\"")? + " points=\"".len();
            let end = start + rest[start..].find('"')?;
            Some(
                rest[start..end]
                    .split_whitespace()
                    .filter_map(|pair| {
                        let (x, y) = pair.split_once(',')?;
                        Some((x.parse().ok()?, y.parse().ok()?))
                    })
                    .collect(),
            )
        })
        .collect()
}

/// A line that only moves one way in both pixel coordinates: right and up (y falls), or
/// left and down, allowing for the tenth-of-a-pixel rounding of the drawing.
fn never_turns_back(line: &[(f64, f64)]) -> bool {
    let steps: Vec<(f64, f64)> = line
        .windows(2)
        .map(|w| (w[1].0 - w[0].0, w[1].1 - w[0].1))
        .collect();
    let tolerance = 0.11;
    let right_and_up = steps
        .iter()
        .all(|&(dx, dy)| dx >= -tolerance && dy <= tolerance);
    let left_and_down = steps
        .iter()
        .all(|&(dx, dy)| dx <= tolerance && dy >= -tolerance);
    right_and_up || left_and_down
}

#[test]
fn a_folded_back_event_roc_is_cut_where_its_counts_first_fall() {
    let mut run = walker_run().clone();
    // A detector with detections and false alarms at its third-lowest grid threshold.
    let pooled = |d: &echobench_harness::runner::DetectorTally, g: usize| {
        (
            d.variants.iter().map(|v| v.detected[g]).sum::<u64>(),
            d.variants.iter().map(|v| v.false_alarms[g]).sum::<u64>(),
        )
    };
    let index = run
        .tallies
        .detectors
        .iter()
        .position(|d| {
            let (detected, false_alarms) = pooled(d, 2);
            detected >= 1 && false_alarms >= 1
        })
        .expect("a detector with detections and false alarms low on its grid");
    let detector = &mut run.tallies.detectors[index];
    for v in &mut detector.variants {
        for g in 0..2 {
            v.detected[g] = v.detected[2] / 2;
            v.false_alarms[g] = v.false_alarms[2] / 2;
        }
    }
    let (low_detected, low_false_alarms) = pooled(detector, 1);
    let (detected, false_alarms) = pooled(detector, 2);
    assert!(
        low_detected < detected && low_false_alarms < false_alarms,
        "the doctored curve must fold back"
    );

    let points = grid_roc(detector);
    let cut = fold_back_cut(&points).expect("a folded curve is cut");
    assert!(cut >= points[2].threshold, "cut at {cut}");
    assert!(!points[0].monotone && !points[1].monotone);
    // Everything kept is monotone: from the top threshold down, Pd and the rate never fall.
    let kept: Vec<_> = points.iter().rev().take_while(|p| p.monotone).collect();
    assert_eq!(kept.len(), points.iter().filter(|p| p.monotone).count());
    for w in kept.windows(2) {
        assert!(w[1].pd >= w[0].pd && w[1].false_alarms_per_hour >= w[0].false_alarms_per_hour);
    }

    let html = render_html(&run, None, &[]);
    let label = &run.tallies.detectors[index].label;
    assert!(
        html.contains(&format!(
            "Cut here: <strong>{label}</strong> below threshold"
        )),
        "the caption names the cut curve"
    );
    assert!(html.contains("would fold back towards the origin"));
    // The event-level ROC is the page's first plot; none of its curves turns back.
    let event_roc = svgs(&html)[0];
    assert!(event_roc.contains("Event-level ROC"));
    let lines = polylines(event_roc);
    assert!(!lines.is_empty());
    for line in &lines {
        assert!(never_turns_back(line), "{line:?}");
    }
    // The untouched run's caption names no cut for a curve that does not fold.
    let plain = render_html(walker_run(), None, &[]);
    let untouched = grid_roc(&walker_run().tallies.detectors[index]);
    if fold_back_cut(&untouched).is_none() {
        assert!(!plain.contains(&format!("<strong>{label}</strong> below threshold")));
    }
}
