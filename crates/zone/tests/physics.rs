//! The zone against physics: one bench reflector of known RCS moving straight toward the
//! sensor with noise only, the energy detector at a threshold from noise-only trials.
//!
//! Source of the prediction: the radar range equation (Skolnik, *Introduction to Radar
//! Systems*, 3rd ed., ch. 2; docs/reference/radar-physics.md#r4), the cosⁿ beam
//! (docs/reference/radar-physics.md#r5) and the first-order RC sections of the front end
//! (docs/reference/front-end-and-noise.md#f9), computed here from the scene's numbers
//! without the scene crate's own functions. Where the detector's mean frame energy reaches
//! its threshold follows in closed form (docs/reference/radar-physics.md#r10), but the
//! first alarm comes earlier by how far a frame's noise carries its score; so the predicted
//! first detection adds the formula's echo to the very noise of each trial (the noise-only
//! scene with the same key draws the same noise) and runs the same detector on the sum. The
//! median first-detection range of the synthesized walks must lie within one cell (0.5 m,
//! a 20 × 20 grid over a 10 m room) of the predicted median, or inside its interval, on
//! boresight and 30° off it; and no later than one cell after the range at which the mean
//! energy reaches the threshold.

use echobench_core::detector::{DetectorPlugin, FrameScore, ParamValue, Params, Samples};
use echobench_core::seed::StreamKey;
use echobench_core::StreamInfo;
use echobench_detector_energy::EnergyPlugin;
use echobench_scene::{load_scene_text, synthesize, SceneSpec};
use echobench_zone::{Walk, WalkKind};
use rayon::prelude::*;

/// One cell of a 20 × 20 zone over a 10 m room, m.
const CELL_M: f64 = 0.5;
/// Walks per direction ("a few dozen seeds").
const SEEDS: u64 = 40;
/// Noise-only trials the threshold is cut from: their largest frame score, so a walk trial
/// alarms on noise alone with probability about 1/41 (order statistics, common practice).
const CALIBRATION_TRIALS: u64 = 40;
/// RCS of the reflector, m² (a small plate; sets the detection range near 6 m here).
const RCS_M2: f64 = 0.01;
const SPEED_MPS: f64 = 1.0;
const START_M: f64 = 12.0;
const STOP_M: f64 = 1.0;
const SETTLE_S: f64 = 2.0;
const TAIL_S: f64 = 0.5;

/// A 10.525 GHz module at 1 m looking along +x, white noise only; the default antenna
/// (80° × 40°, 10 dBm, 6 dBi, 7 dB conversion loss, 50 Ω). 70 Hz of Doppler at 1 m/s stays
/// far below the 300 Hz low-pass and keeps the internal rate at the ADC rate, so the
/// noise-only scene and the scene with the reflector draw the same noise.
const SCENE: &str = "
name: zone-physics
duration_s: 1
sensor:
  carrier_hz: 10.525e9
  sample_rate_hz: 2000
  output: real
  position_m: [0, 0, 1.0]
  azimuth_deg: 0
  elevation_deg: 0
  front_end:
    high_pass_hz: [0.5]
    low_pass_hz: [300]
    gain_db: 60
    rails_v: [0, 3.3]
  adc: {bits: 12, full_scale_v: 3.3}
environment:
  white_noise_v_per_rthz: 200e-9
";

/// The energy detector as raw mean x² (V²), through the plugin trait only.
fn frame_scores(samples: &[f32], info: &StreamInfo) -> Vec<FrameScore> {
    let plugin = EnergyPlugin;
    let params = Params::resolve(
        plugin.id(),
        plugin.params(),
        &[("normalise".to_string(), ParamValue::Text("none".into()))],
    )
    .expect("energy parameters");
    let mut detector = plugin
        .plan(&params, info)
        .map(|plan| plan.start())
        .expect("energy detector");
    let mut out = Vec::new();
    detector
        .process(Samples::Real(samples), &mut out)
        .expect("in-process detectors do not fail");
    out
}

fn first_alarm_s(
    scores: &[FrameScore],
    info: &StreamInfo,
    threshold: f64,
    from_s: f64,
) -> Option<f64> {
    scores
        .iter()
        .map(|s| s.timed(info.sample_rate_hz))
        .find(|s| s.t_s >= from_s && s.value >= threshold)
        .map(|s| s.t_s)
}

/// The walk along azimuth `azimuth_deg` from 12 m to 1 m, toward the sensor.
fn walk(azimuth_deg: f64) -> Walk {
    let (s, c) = azimuth_deg.to_radians().sin_cos();
    Walk {
        index: 0,
        kind: WalkKind::Approach,
        start_m: [START_M * c, START_M * s],
        end_m: [STOP_M * c, STOP_M * s],
        speed_mps: SPEED_MPS,
        height_m: 1.0,
        enter_s: SETTLE_S,
    }
}

/// The formula's echo at the ADC along the walk, V: |H(f_d)|·K·√σ·g(θ)/R²·cos(4πR/λ) while
/// the reflector moves (standing still, its echo is DC, which the coupling high-pass has
/// removed).
struct Echo {
    amplitude_at_1m_v: f64,
    wavelength_m: f64,
}

impl Echo {
    fn new(scene: &SceneSpec, azimuth_deg: f64) -> Echo {
        let s = &scene.sensor;
        let wavelength_m = 299_792_458.0 / s.carrier_hz;
        // Range equation, P_r = P_t G² λ² σ / ((4π)³ R⁴) at σ = 1 m², R = 1 m.
        let gain = 10f64.powf(s.antenna_gain_dbi / 10.0);
        let tx_w = 1e-3 * 10f64.powf(s.tx_power_dbm / 10.0);
        let received_w =
            tx_w * gain * gain * wavelength_m * wavelength_m / (4.0 * std::f64::consts::PI).powi(3);
        // Peak IF voltage across the mixer load, less the conversion loss (R4).
        let k = (2.0 * received_w * s.load_ohm).sqrt() * 10f64.powf(-s.conversion_loss_db / 20.0);
        // cosⁿ in azimuth, n from the −3 dB width (R5); elevation 0.
        let n = 0.5f64.ln() / (0.5 * s.beam_azimuth_3db_deg).to_radians().cos().ln();
        let pattern = azimuth_deg.to_radians().cos().powf(n);
        // First-order RC sections at the Doppler frequency (F9) and the stage gain.
        let doppler_hz = 2.0 * SPEED_MPS / wavelength_m;
        let fe = &s.front_end;
        let mut h = 10f64.powf(fe.gain_db / 20.0);
        for &corner in &fe.high_pass_hz {
            let x = doppler_hz / corner;
            h *= x / (1.0 + x * x).sqrt();
        }
        for &corner in &fe.low_pass_hz {
            let x = doppler_hz / corner;
            h /= (1.0 + x * x).sqrt();
        }
        Echo {
            amplitude_at_1m_v: h * k * RCS_M2.sqrt() * pattern,
            wavelength_m,
        }
    }

    fn at(&self, walk: &Walk, t_s: f64) -> f64 {
        if t_s < walk.enter_s || t_s > walk.end_s() {
            return 0.0;
        }
        let p = walk.position_at(t_s);
        let range = p[0].hypot(p[1]);
        self.amplitude_at_1m_v / (range * range)
            * (4.0 * std::f64::consts::PI * range / self.wavelength_m).cos()
    }

    /// Range at which the echo's power at the ADC is `power_v2` (R10).
    fn range_at_power(&self, power_v2: f64) -> f64 {
        (self.amplitude_at_1m_v / (2.0 * power_v2).sqrt()).sqrt()
    }
}

fn range_at(walk: &Walk, t_s: f64) -> f64 {
    let p = walk.position_at(t_s);
    p[0].hypot(p[1])
}

struct Outcome {
    synthesized_m: Option<f64>,
    predicted_m: Option<f64>,
}

fn run_direction(template: &SceneSpec, azimuth_deg: f64, threshold: f64, noise_v2: f64) {
    let walk = walk(azimuth_deg);
    let echo = Echo::new(template, azimuth_deg);
    let with_reflector = walk.trial_scene(template, walk.reflector_actor(RCS_M2, 1.0), TAIL_S);
    let mut noise_only = with_reflector.clone();
    noise_only.actors.clear();
    let outcomes: Vec<Outcome> = (0..SEEDS)
        .into_par_iter()
        .map(|seed| {
            let key = StreamKey::new(seed, format!("zone-physics/{azimuth_deg}"), 0);
            let trial = synthesize(&with_reflector, &key).expect("synthesis");
            let noise = synthesize(&noise_only, &key).expect("synthesis");
            assert_eq!(trial.oversampling, noise.oversampling, "same noise draws");
            let info = trial.info;
            let synthesized = first_alarm_s(
                &frame_scores(&trial.samples, &info),
                &info,
                threshold,
                walk.enter_s,
            );
            let fs = info.sample_rate_hz;
            let summed: Vec<f32> = noise
                .samples
                .iter()
                .enumerate()
                .map(|(i, &n)| (f64::from(n) + echo.at(&walk, i as f64 / fs)) as f32)
                .collect();
            let predicted = first_alarm_s(
                &frame_scores(&summed, &info),
                &info,
                threshold,
                walk.enter_s,
            );
            Outcome {
                synthesized_m: synthesized.map(|t| range_at(&walk, t)),
                predicted_m: predicted.map(|t| range_at(&walk, t)),
            }
        })
        .collect();
    let ranges = |pick: fn(&Outcome) -> Option<f64>| -> Vec<f64> {
        // A walk never detected counts as detected at its end (nearest range): the median
        // of the detection ranges stays a median of all walks.
        outcomes.iter().map(|o| pick(o).unwrap_or(STOP_M)).collect()
    };
    let synthesized = ranges(|o| o.synthesized_m);
    let predicted = ranges(|o| o.predicted_m);
    let median = echobench_stats::median(&synthesized).unwrap();
    let interval = echobench_stats::median_confidence_interval(&synthesized, 0.95).unwrap();
    let expected = echobench_stats::median(&predicted).unwrap();
    let mean_crossing_m = echo.range_at_power(threshold - noise_v2);
    eprintln!(
        "{azimuth_deg}°: median first detection {median:.2} m [{:.2}, {:.2}], predicted {expected:.2} m, \
         mean energy at threshold {mean_crossing_m:.2} m",
        interval.low, interval.high
    );
    // Both: within one cell and inside the median's interval (stricter than either alone).
    assert!(
        (median - expected).abs() <= CELL_M && (interval.low..=interval.high).contains(&expected),
        "{azimuth_deg}°: median first detection {median:.2} m [{:.2}, {:.2}] against {expected:.2} m predicted",
        interval.low,
        interval.high
    );
    assert!(
        median >= mean_crossing_m - CELL_M,
        "{azimuth_deg}°: median first detection {median:.2} m is more than a cell nearer than where \
         the mean energy reaches the threshold, {mean_crossing_m:.2} m"
    );
    // Not a vacuous check: the detections happen in the middle of the walk, not at its ends.
    assert!(median > STOP_M + 1.0 && median < START_M - 1.0, "{median}");
}

#[test]
fn first_detection_range_follows_the_radar_equation_on_and_off_boresight() {
    let template = load_scene_text("zone-physics.yaml", SCENE).expect("scene");
    // Thresholds from noise-only trials as long as a walk trial.
    let duration_s = walk(0.0).end_s() + TAIL_S;
    let mut quiet = template.clone();
    quiet.duration_s = duration_s;
    let calibration: Vec<(f64, f64, usize)> = (0..CALIBRATION_TRIALS)
        .into_par_iter()
        .map(|i| {
            let key = StreamKey::new(1, "zone-physics/calibration", i);
            let trial = synthesize(&quiet, &key).expect("synthesis");
            // Frames after the settle time only, as the walks are scored.
            let scores: Vec<f64> = frame_scores(&trial.samples, &trial.info)
                .iter()
                .map(|s| s.timed(trial.info.sample_rate_hz))
                .filter(|s| s.t_s >= SETTLE_S)
                .map(|s| s.value)
                .collect();
            let max = scores.iter().cloned().fold(0.0, f64::max);
            (max, scores.iter().sum::<f64>(), scores.len())
        })
        .collect();
    let threshold = calibration.iter().map(|c| c.0).fold(0.0, f64::max);
    let frames: usize = calibration.iter().map(|c| c.2).sum();
    let noise_v2 = calibration.iter().map(|c| c.1).sum::<f64>() / frames as f64;
    eprintln!("threshold {threshold:.3e} V², mean noise frame {noise_v2:.3e} V²");
    assert!(threshold > noise_v2);
    run_direction(&template, 0.0, threshold, noise_v2);
    run_direction(&template, 30.0, threshold, noise_v2);
}
