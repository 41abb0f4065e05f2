//! A walker head-on at 1.3 m/s, at 2.45 and at 24.125 GHz, against every built-in
//! detector's default bands, and the coverage warnings the issue asks for.
//!
//! Reference values: f_D = 2v/λ (Skolnik, ch. 3); 1 m/s is 16.345 Hz at 2.45 GHz and
//! 160.945 Hz at 24.125 GHz (docs/reference/check-values.md#pc2), so the walking speed's line is
//! 1.3 × 16.345 = 21.25 Hz and 1.3 × 160.945 = 209.2 Hz. The torso speed swings ±18 %
//! around the walking speed over a step (docs/reference/people.md#p4).

use echobench_core::detector::{BandRole, Params};
use echobench_core::{Channels, StreamInfo};
use echobench_coverage::{coverage_warnings, target_doppler, CoverageProblem, TargetDoppler};
use echobench_scene::{load_scene_text, SceneSpec, StreamKey};

/// A sensor at 1.2 m looking along +x; a 1.75 m walker starting 8 m out, walking straight
/// at it at 1.3 m/s from 0.5 s to 5.5 s (it ends 1.5 m away).
fn walker_scene(carrier_hz: f64) -> SceneSpec {
    let text = format!(
        r#"
name: head-on-walker
description: A walker coming straight at the sensor.
duration_s: 6
sensor:
  carrier_hz: {carrier_hz}
  sample_rate_hz: 2000
  output: real
  position_m: [0, 0, 1.2]
  azimuth_deg: 0
  elevation_deg: 0
  beam_azimuth_3db_deg: 80
  beam_elevation_3db_deg: 40
  tx_power_dbm: 10
  antenna_gain_dbi: 6
  mixer_dc_v: 0.05
  front_end:
    high_pass_hz: [0.5]
    low_pass_hz: [900]
    gain_db: 60
    rails_v: [0, 3.3]
  adc: {{bits: 12, full_scale_v: 3.3}}
coverage: {{range_m: 10, azimuth_half_deg: 40}}
environment:
  white_noise_v_per_rthz: 30e-9
actors:
  - kind: walker
    id: visitor
    height_m: 1.75
    path:
      start_m: [8, 0]
      heading_deg: 180
      speed_mps: 1.3
      enter_s: 0.5
      leave_s: 5.5
"#
    );
    load_scene_text("head-on-walker.yaml", &text).expect("a valid scene")
}

fn stream(carrier_hz: f64) -> StreamInfo {
    StreamInfo {
        sample_rate_hz: 2000.0,
        channels: Channels::Real,
        adc_bits: 12,
        carrier_hz,
    }
}

fn doppler_of(scene: &SceneSpec) -> TargetDoppler {
    let keys: Vec<StreamKey> = (0..2).map(|t| StreamKey::new(7, "head-on", t)).collect();
    target_doppler(scene, &keys).expect("the scene builds")
}

#[test]
fn the_torso_line_sits_at_two_v_over_lambda() {
    for (carrier_hz, line_hz) in [(2.45e9, 21.25), (24.125e9, 209.2)] {
        let target = doppler_of(&walker_scene(carrier_hz));
        // Moving 0.5–5.5 s, inside 10 m the whole time (it enters at 8 m): about 5 s per trial.
        assert!(
            target.moving_s > 2.0 * 4.5,
            "{carrier_hz}: {} s",
            target.moving_s
        );
        let torso = target.torso.expect("moving time");
        eprintln!("{carrier_hz} Hz: torso {torso:?}, echoes {:?}", target.echo);
        // The median within 10 % of 2v/λ (the line is seen slightly off-axis near the
        // sensor, and its speed swings ±18 % within a step).
        assert!(
            (torso.p50_hz / line_hz - 1.0).abs() < 0.10,
            "{carrier_hz}: torso median {} Hz vs {line_hz} Hz",
            torso.p50_hz
        );
        assert!(torso.p05_hz > 0.6 * line_hz && torso.p95_hz < 1.4 * line_hz);
        // Limbs reach beyond the torso: the echo spread's top is above the torso's.
        let echo = target.echo.expect("moving time");
        assert!(echo.p95_hz > torso.p95_hz, "{echo:?} vs {torso:?}");
    }
}

#[test]
fn every_default_band_covers_the_torso_line_at_both_carriers() {
    for carrier_hz in [2.45e9, 24.125e9] {
        let scene = walker_scene(carrier_hz);
        let target = doppler_of(&scene);
        let torso = target.torso.unwrap().p50_hz;
        let info = stream(carrier_hz);
        let mut with_bands = 0;
        for plugin in echobench_detectors::builtin() {
            let params = Params::defaults(plugin.params());
            let bands = plugin.doppler_bands(&params, &info);
            if bands.is_empty() {
                continue;
            }
            with_bands += 1;
            assert!(
                bands
                    .iter()
                    .any(|b| b.role == BandRole::Motion && b.contains(torso)),
                "{} at {carrier_hz} Hz: bands {bands:?} miss the torso line {torso} Hz",
                plugin.id()
            );
            assert!(
                !bands
                    .iter()
                    .any(|b| b.role == BandRole::Nuisance && b.contains(torso)),
                "{} at {carrier_hz} Hz: a nuisance band holds the torso line",
                plugin.id()
            );
            let warnings = coverage_warnings("head-on", &target, plugin.id(), &bands, &info);
            assert!(
                warnings.is_empty(),
                "{} at {carrier_hz} Hz: {}",
                plugin.id(),
                warnings
                    .iter()
                    .map(|w| w.to_string())
                    .collect::<Vec<_>>()
                    .join("\n")
            );
        }
        // All seven built-ins declare bands.
        assert_eq!(with_bands, echobench_detectors::builtin().len());
    }
}

#[test]
fn band_ratio_in_hertz_misses_a_24_ghz_walker_and_says_so() {
    let scene = walker_scene(24.125e9);
    let target = doppler_of(&scene);
    let info = stream(24.125e9);
    let plugin = echobench_detectors::find("band-ratio").unwrap();
    // The historic Hz bands: motion 10–80 Hz over reference 100–400 Hz.
    let hz = Params::resolve(
        "band-ratio",
        plugin.params(),
        &[(
            "band_units".to_string(),
            echobench_core::detector::ParamValue::Text("hz".into()),
        )],
    )
    .unwrap();
    let bands = plugin.doppler_bands(&hz, &info);
    let warnings = coverage_warnings("head-on", &target, "band-ratio-hz", &bands, &info);
    let misses = warnings
        .iter()
        .find(|w| matches!(w.problem, CoverageProblem::BandsMissTarget { .. }))
        .expect("warning (a)");
    let CoverageProblem::BandsMissTarget { fraction, .. } = misses.problem else {
        unreachable!()
    };
    assert!(fraction < 0.2, "{misses}");
    // The torso line (≈ 209 Hz) sits in the 100–400 Hz reference band: warning (c).
    assert!(warnings
        .iter()
        .any(|w| matches!(w.problem, CoverageProblem::NuisanceHoldsTorso { .. })));
    for w in &warnings {
        eprintln!("{w}");
    }
    let text = misses.to_string();
    assert!(
        text.contains("band-ratio-hz") && text.contains("head-on") && text.contains("10.0–80.0 Hz"),
        "{text}"
    );
    // The m/s defaults: no warning.
    let defaults = Params::defaults(plugin.params());
    let bands = plugin.doppler_bands(&defaults, &info);
    assert!(coverage_warnings("head-on", &target, "band-ratio", &bands, &info).is_empty());
}

#[test]
fn a_slow_adc_at_24_ghz_is_past_nyquist() {
    // At 500 Hz sampling the Nyquist frequency, 250 Hz, is 1.55 m/s at 24.125 GHz: the
    // limbs (to about 4 m/s) fold back.
    let scene = walker_scene(24.125e9);
    let target = doppler_of(&scene);
    let info = StreamInfo {
        sample_rate_hz: 500.0,
        ..stream(24.125e9)
    };
    let warnings = coverage_warnings("head-on", &target, "any", &[], &info);
    assert!(
        warnings
            .iter()
            .any(|w| matches!(w.problem, CoverageProblem::PastNyquist { .. })),
        "{warnings:?}"
    );
    // And it is deterministic: the same scene and keys give the same numbers.
    assert_eq!(doppler_of(&scene), target);
}
