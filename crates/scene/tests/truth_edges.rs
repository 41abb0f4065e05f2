//! The truth's moving edges against the motion the synthesizer renders.
//!
//! For every actor kind whose motion starts and stops (a walker with two
//! pauses, a door opening and closing, a fan switched on and off, a seated
//! breathing person who stands up and a walker who then walks away, a cat
//! that pauses, a plate on a linear stage, a plant swaying in gusts), the
//! truth of a trial is computed as the runner does ([`trial_truth`]), and the
//! same actor is rendered again from a fresh model ([`build_model`], the
//! models the synthesizer renders). The rendered speed is measured
//! independently of the models' velocity fields: by differencing echo
//! positions every millisecond, on the echo that carries the motion measure
//! (torso, chest, door edge, blade scaled to its tip). Every truth edge must
//! have a crossing of [`MOVING_SPEED_MPS`] by the rendered speed within one
//! 50 ms decision frame, and every rendered crossing a truth edge: the truth
//! matches the motion at enters, leaves, pauses and restarts.

use echobench_core::Interval;
use echobench_motion::door::DOOR_EDGE_POINTS;
use echobench_motion::walker::TORSO_ECHO;
use echobench_scene::truth::{MOVING_SPEED_MPS, TRUTH_RATE_HZ};
use echobench_scene::{build_model, load_scene_text, radar_geometry, trial_truth, SceneSpec};
use echobench_scene::{StreamKey, Truth};

/// One decision frame, s: the largest allowed distance between a truth edge
/// and the rendered crossing.
const FRAME_S: f64 = 0.05;

/// Step of the position differences, s.
const STEP_S: f64 = 0.001;

const SENSOR_AND_ROOM: &str = "\
sensor:
  carrier_hz: 24.125e9
  sample_rate_hz: 2000
  output: real
  position_m: [0, 0, 1.2]
  front_end:
    high_pass_hz: [0.5]
    low_pass_hz: [500]
    gain_db: 60
    rails_v: [0, 3.3]
  adc: {bits: 12, full_scale_v: 3.3}
coverage: {range_m: 20, azimuth_half_deg: 80}
environment:
  white_noise_v_per_rthz: 30e-9
";

fn scene(name: &str, duration_s: f64, actors: &str) -> SceneSpec {
    let text =
        format!("name: {name}\nduration_s: {duration_s}\n{SENSOR_AND_ROOM}actors:\n{actors}");
    match load_scene_text("test.yaml", &text) {
        Ok(scene) => scene,
        Err(report) => panic!("scene does not load:\n{report}"),
    }
}

/// How the rendered speed of an actor is read from its echoes.
#[derive(Clone, Copy)]
enum Probe {
    /// Speed of echo `index`.
    Echo(usize),
    /// Speed of echo `index` times `factor` (a blade centre scaled to its tip).
    Scaled(usize, f64),
}

/// Times at which the rendered speed of actor `index` crosses the moving level,
/// from position differences of fresh models (the models the synthesizer renders).
fn rendered_crossings(scene: &SceneSpec, index: usize, key: &StreamKey, probe: Probe) -> Vec<f64> {
    let mut model = build_model(scene, index, key).expect("model builds");
    let sensor = radar_geometry(scene).position_m;
    let (echo, factor) = match probe {
        Probe::Echo(i) => (i, 1.0),
        Probe::Scaled(i, f) => (i, f),
    };
    let steps = (scene.duration_s / STEP_S).round() as usize;
    let mut out = Vec::new();
    let mut previous_position: Option<[f64; 3]> = None;
    let mut previous_speed: Option<(f64, f64)> = None;
    let mut crossings = Vec::new();
    for step in 0..=steps {
        let t = step as f64 * STEP_S;
        out.clear();
        model.echoes(t, sensor, &mut out);
        let position = out[echo].position_m;
        if let Some(p) = previous_position {
            let d: f64 = (0..3)
                .map(|i| (position[i] - p[i]).powi(2))
                .sum::<f64>()
                .sqrt();
            let speed = factor * d / STEP_S;
            let mid = t - 0.5 * STEP_S;
            if let Some((t0, v0)) = previous_speed {
                if (v0 >= MOVING_SPEED_MPS) != (speed >= MOVING_SPEED_MPS) {
                    crossings.push(t0 + (MOVING_SPEED_MPS - v0) / (speed - v0) * (mid - t0));
                }
            }
            previous_speed = Some((mid, speed));
        }
        previous_position = Some(position);
    }
    crossings
}

/// Start and end times of the moving intervals of `actor` in `truth`
/// (events and moving outside the zone, merged), less the trial's own ends.
fn truth_edges(truth: &Truth, actor: &str, duration_s: f64) -> Vec<f64> {
    let intervals: Vec<Interval> = truth
        .events
        .iter()
        .chain(&truth.outside_coverage)
        .filter(|e| e.actor_id == actor)
        .map(|e| e.interval)
        .collect();
    let merged = echobench_core::merge_intervals(intervals);
    merged
        .iter()
        .flat_map(|i| [i.start_s(), i.end_s()])
        .filter(|&t| t > 1e-9 && t < duration_s - 1e-9)
        .collect()
}

/// Checks that the truth edges of `actor` and the rendered crossings pair up
/// within one frame; returns the edges.
fn check_edges(scene: &SceneSpec, actor: &str, probe: Probe) -> Vec<f64> {
    let key = StreamKey::new(3, scene.name.clone(), 0);
    let truth = trial_truth(scene, &key).expect("truth");
    let index = scene
        .actors
        .iter()
        .position(|a| a.id == actor)
        .expect("actor in scene");
    let edges = truth_edges(&truth, actor, scene.duration_s);
    let crossings = rendered_crossings(scene, index, &key, probe);
    let near = |t: f64, list: &[f64]| list.iter().any(|&u| (u - t).abs() <= FRAME_S);
    for &edge in &edges {
        assert!(
            near(edge, &crossings),
            "{actor}: truth edge at {edge} s has no rendered crossing within {FRAME_S} s \
             (crossings {crossings:?})"
        );
    }
    for &crossing in &crossings {
        assert!(
            near(crossing, &edges),
            "{actor}: rendered crossing at {crossing} s has no truth edge within {FRAME_S} s \
             (edges {edges:?})"
        );
    }
    edges
}

#[test]
fn walker_with_two_pauses_stops_and_starts_where_the_truth_says() {
    let scene = scene(
        "walker-two-pauses",
        12.0,
        "  - kind: walker
    id: walker
    height_m: 1.75
    path:
      start_m: [9, 0.5]
      heading_deg: 180
      speed_mps: 1.2
      enter_s: 1
      leave_s: 11
      pauses:
        - {at_s: 3, duration_s: 2}
        - {at_s: 7, duration_s: 1.5}
",
    );
    let edges = check_edges(&scene, "walker", Probe::Echo(TORSO_ECHO));
    // Enter, two stops, two restarts, leave; the stops and restarts lie inside
    // the easings (one step, about 0.55 s wide at 1.2 m/s) around the nominal times.
    assert_eq!(edges.len(), 6, "{edges:?}");
    assert!((edges[0] - 1.0).abs() < 1e-9 && (edges[5] - 11.0).abs() < 1e-9);
    for (edge, nominal) in edges[1..5].iter().zip([3.0, 5.0, 7.0, 8.5]) {
        assert!((edge - nominal).abs() < 0.35, "{edge} vs {nominal}");
    }
    // The pauses are present-not-moving, between the truth's stop and restart.
    let truth = trial_truth(&scene, &StreamKey::new(3, scene.name.clone(), 0)).unwrap();
    let still: Vec<(f64, f64)> = truth
        .still_presence
        .iter()
        .map(|e| (e.interval.start_s(), e.interval.end_s()))
        .collect();
    assert_eq!(
        still,
        vec![(edges[1], edges[2]), (edges[3], edges[4])],
        "{still:?}"
    );
}

#[test]
fn door_edges_follow_the_leaf_speed() {
    let scene = scene(
        "door",
        9.0,
        "  - kind: door
    id: door
    target: true
    hinge_m: [4, -1]
    open_at_s: 2
    swing_s: 1.5
    close_at_s: 6
",
    );
    let edges = check_edges(&scene, "door", Probe::Echo(DOOR_EDGE_POINTS - 1));
    assert_eq!(edges.len(), 4, "{edges:?}");
    // Not a body: a closed door is no presence.
    let truth = trial_truth(&scene, &StreamKey::new(3, scene.name.clone(), 0)).unwrap();
    assert!(truth.still_presence.is_empty());
}

#[test]
fn fan_switched_on_and_off_moves_from_spin_up_to_coast_down() {
    let (root_m, tip_m) = (0.03, 0.15);
    let scene = scene(
        "fan",
        18.0,
        &format!(
            "  - kind: fan
    id: fan
    target: true
    position_m: [3, 0.5, 1.0]
    root_radius_m: {root_m}
    tip_radius_m: {tip_m}
    rev_per_s: 20
    blade_tilt_deg: 0
    housing_vibration_m: 0
    switch_on_s: 2
    switch_off_s: 8
    spin_up_s: 3
    spin_down_s: 6
"
        ),
    );
    // Blade 0's centre echo at (r₁ + r₂)/2, scaled to the tip (a rigid rotor).
    let edges = check_edges(
        &scene,
        "fan",
        Probe::Scaled(0, tip_m / (0.5 * (root_m + tip_m))),
    );
    assert_eq!(edges.len(), 2, "{edges:?}");
    // On just after switching on; off near the end of the coast-down.
    assert!(edges[0] > 2.0 && edges[0] < 2.5, "{edges:?}");
    assert!(edges[1] > 8.0 + 0.8 * 6.0 && edges[1] < 14.0, "{edges:?}");
}

#[test]
fn seated_breather_stands_up_and_walks_away() {
    // The person breathes in a chair, stands up at 5 s (2 s) and walks away:
    // the walk is a walker who enters standing at the chair (a pause at its
    // entry) as the seated person's presence fades out.
    let scene = scene(
        "stand-up",
        14.0,
        "  - kind: breathing
    id: sitter
    target: true
    position_m: [3, 0.3]
    chest_height_m: 1.0
    facing_deg: 180
    stand_up_at_s: 5
    stand_up_s: 2
    leave_s: 7.3
  - kind: walker
    id: leaver
    target: true
    path:
      start_m: [2.75, 0.3]
      heading_deg: 90
      speed_mps: 1.1
      enter_s: 7
      pauses:
        - {at_s: 7, duration_s: 1.5}
",
    );
    let sitter = check_edges(&scene, "sitter", Probe::Echo(0));
    // One movement: standing up (breathing alone never reaches the level).
    assert_eq!(sitter.len(), 2, "{sitter:?}");
    assert!(sitter[0] > 5.0 && sitter[1] < 7.0, "{sitter:?}");
    let leaver = check_edges(&scene, "leaver", Probe::Echo(TORSO_ECHO));
    assert_eq!(leaver.len(), 1, "{leaver:?}");
    assert!((leaver[0] - 8.5).abs() < 0.35, "{leaver:?}");
    // Before standing up, and while standing before the walk, the person is
    // present, not moving.
    let truth = trial_truth(&scene, &StreamKey::new(3, scene.name.clone(), 0)).unwrap();
    let still = |id: &str| -> Vec<(f64, f64)> {
        truth
            .still_presence
            .iter()
            .filter(|e| e.actor_id == id)
            .map(|e| (e.interval.start_s(), e.interval.end_s()))
            .collect()
    };
    let seated = still("sitter");
    assert!(
        seated[0].0 < 0.1 && (seated[0].1 - sitter[0]).abs() < 1e-12,
        "{seated:?}"
    );
    assert_eq!(still("leaver"), vec![(7.0, leaver[0])]);
}

#[test]
fn animal_reflector_and_swaying_plant_edges_follow_their_rendered_speed() {
    // The other kinds: a cat that stops and goes on (its body stops as its
    // path does), a plate on a linear stage (an ideal stage: the speed steps),
    // and a plant swaying in gusts faster than the moving level (its tip
    // crosses the level at random times, each one a truth edge).
    let scene = scene(
        "others",
        12.0,
        "  - kind: animal
    id: cat
    target: true
    path:
      start_m: [2, -2]
      heading_deg: 90
      speed_mps: 0.6
      enter_s: 1
      leave_s: 10
      pauses:
        - {at_s: 4, duration_s: 2}
  - kind: reflector
    id: plate
    target: true
    position_m: [6, 0, 1.2]
    speed_mps: 0.5
    move_start_s: 2
    move_stop_s: 7
  - kind: sway
    id: plant
    target: true
    pivot_m: [3, 1, 0]
    arm_length_m: 1.2
    natural_hz: 1.0
    rms_displacement_m: 0.05
",
    );
    let cat = check_edges(&scene, "cat", Probe::Echo(0));
    assert_eq!(cat.len(), 4, "{cat:?}");
    // Its speed steps at the path's stop and go: located to within one truth sample.
    for (edge, nominal) in cat.iter().zip([1.0, 4.0, 6.0, 10.0]) {
        assert!((edge - nominal).abs() <= 1.0 / TRUTH_RATE_HZ, "{cat:?}");
    }
    let plate = check_edges(&scene, "plate", Probe::Echo(0));
    assert_eq!(plate.len(), 2, "{plate:?}");
    // The tip (lever 1) is the last of the plant's three points.
    let plant = check_edges(&scene, "plant", Probe::Echo(2));
    assert!(plant.len() > 10, "{plant:?}");
    // A cat that stands still is present, not moving; a plate or a plant is not a body.
    let truth = trial_truth(&scene, &StreamKey::new(3, scene.name.clone(), 0)).unwrap();
    let still: Vec<&str> = truth
        .still_presence
        .iter()
        .map(|e| e.actor_id.as_str())
        .collect();
    assert_eq!(still, vec!["cat"]);
}
