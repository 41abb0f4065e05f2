//! Behaviour of the `periodicity` detector on signals made here: a walker-like
//! Doppler signal amplitude-modulated at the step rate against a fan-like
//! flash train, a slow sway, a slow rotor and noise; the closed-form noise law
//! that whitens the cadence spectrum; and the contract every detector meets.

use echobench_core::detector::{
    check_scores, DetectorPlugin, ParamError, ParamValue, Params, Samples,
};
use echobench_core::{Channels, FrameScore, StreamInfo};
use echobench_detector_periodicity::{
    CadenceReading, PeriodicityConfig, PeriodicityDetector, PeriodicityPlugin,
};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;
use std::f64::consts::TAU;

const FS_HZ: f64 = 2000.0;

/// A 2.45 GHz single-channel stream: the default 0.6–4 m/s band is 9.8–65.4 Hz.
fn stream_2g4() -> StreamInfo {
    StreamInfo {
        sample_rate_hz: FS_HZ,
        channels: Channels::Real,
        adc_bits: 12,
        carrier_hz: 2.45e9,
    }
}

/// These tests were written for the historic setting and pin it on purpose: frames of 256
/// every 64 samples and a motion band from 0.6 m/s (`frame_len`, `hop`, `motion_min_mps`
/// are added unless a test sets that name, or sets the band in Hz). The m/s defaults are
/// tested in `lib.rs` and by the coverage crate.
fn pinned(given: &[(&str, ParamValue)]) -> Vec<(String, ParamValue)> {
    let mut all: Vec<(String, ParamValue)> = given
        .iter()
        .map(|(n, v)| (n.to_string(), v.clone()))
        .collect();
    let set = |name: &str| given.iter().any(|(n, _)| *n == name);
    let hz_band = set("band_units") || set("motion_low_hz") || set("motion_high_hz");
    for (name, value, skip) in [
        ("frame_len", ParamValue::Integer(256), false),
        ("hop", ParamValue::Integer(64), false),
        ("motion_min_mps", ParamValue::Real(0.6), hz_band),
    ] {
        if !set(name) && !skip {
            all.push((name.to_string(), value));
        }
    }
    all
}

fn params(given: &[(&str, ParamValue)]) -> Params {
    Params::resolve("periodicity", PeriodicityPlugin.params(), &pinned(given))
        .expect("valid parameters")
}

fn detector(given: &[(&str, ParamValue)], info: &StreamInfo) -> PeriodicityDetector {
    let config = PeriodicityConfig::from_params(&params(given), info).expect("valid configuration");
    PeriodicityDetector::new(config)
}

fn run(
    given: &[(&str, ParamValue)],
    info: &StreamInfo,
    data: &[f32],
    block: usize,
) -> Vec<FrameScore> {
    let mut detector = PeriodicityPlugin
        .plan(&params(given), info)
        .map(|plan| plan.start())
        .expect("builds");
    let mut out = Vec::new();
    // Blocks of `block` sample instants (whole pairs on I/Q streams).
    for chunk in data.chunks(block.max(1) * info.channels.count()) {
        let chunk = Samples::from_values(chunk, info.channels).expect("whole pairs");
        detector.process(chunk, &mut out).unwrap();
    }
    out
}

fn run_with_readings(data: &[f32]) -> (Vec<FrameScore>, Vec<CadenceReading>) {
    let mut detector = detector(&[], &stream_2g4());
    let (mut scores, mut readings) = (Vec::new(), Vec::new());
    for chunk in data.chunks(1000) {
        let before = scores.len();
        use echobench_core::detector::Detector;
        detector.process(Samples::Real(chunk), &mut scores).unwrap();
        if scores.len() > before {
            readings.push(detector.last_reading().expect("a reading per score"));
        }
    }
    (scores, readings)
}

fn white_noise(rng: &mut ChaCha8Rng, len: usize, sigma: f64) -> Vec<f64> {
    (0..len)
        .map(|_| sigma * rng.sample::<f64, _>(StandardNormal))
        .collect()
}

fn to_f32(x: &[f64]) -> Vec<f32> {
    x.iter().map(|&v| v as f32).collect()
}

/// Walker-like: a torso line at 20 Hz (1.2 m/s at 2.45 GHz) whose amplitude
/// swings ±20 % at the step rate (docs/reference/people.md#p4: torso speed ±18 %), and two
/// limb lines at 36 and 55 Hz (2.2 and 3.4 m/s: hand ≈ 2 v, ankle ≈ 3.5 v)
/// that swell and fade once per step (depth 0.9), in white noise.
fn walker_like(seed: u8, seconds: f64, step_hz: f64) -> Vec<f64> {
    let mut rng = ChaCha8Rng::from_seed([seed; 32]);
    let n = (seconds * FS_HZ) as usize;
    let mut x = white_noise(&mut rng, n, 0.01);
    let lines = [(20.0, 0.05, 0.2), (36.0, 0.03, 0.9), (55.0, 0.02, 0.9)];
    for (f_hz, amplitude, depth) in lines {
        let carrier_phase = rng.random_range(0.0..TAU);
        let step_phase = rng.random_range(0.0..TAU);
        for (i, v) in x.iter_mut().enumerate() {
            let t = i as f64 / FS_HZ;
            let envelope = 1.0 + depth * (TAU * step_hz * t + step_phase).sin();
            *v += amplitude * envelope * (TAU * f_hz * t + carrier_phase).cos();
        }
    }
    x
}

/// The I/Q version of [`walker_like`] for an approaching walker: the same
/// lines as e^{+j2πft} (positive Doppler only), noise on both rails.
fn walker_like_iq(seed: u8, seconds: f64) -> Vec<f32> {
    let mut rng = ChaCha8Rng::from_seed([seed; 32]);
    let lines = [(20.0, 0.05, 0.2), (36.0, 0.03, 0.9), (55.0, 0.02, 0.9)];
    let phases: Vec<(f64, f64)> = lines
        .iter()
        .map(|_| (rng.random_range(0.0..TAU), rng.random_range(0.0..TAU)))
        .collect();
    let n = (seconds * FS_HZ) as usize;
    let mut iq = Vec::with_capacity(2 * n);
    for i in 0..n {
        let t = i as f64 / FS_HZ;
        // σ²/2 per rail: the same total noise power as the real stream's 0.01².
        let mut re = 0.007 * rng.sample::<f64, _>(StandardNormal);
        let mut im = 0.007 * rng.sample::<f64, _>(StandardNormal);
        for ((f_hz, amplitude, depth), (carrier_phase, step_phase)) in lines.iter().zip(&phases) {
            let envelope = 1.0 + depth * (TAU * 1.9 * t + step_phase).sin();
            let angle = TAU * f_hz * t + carrier_phase;
            re += amplitude * envelope * angle.cos();
            im += amplitude * envelope * angle.sin();
        }
        iq.push(re as f32);
        iq.push(im as f32);
    }
    iq
}

/// A flash: a 1 ms Gaussian burst on a 40 Hz carrier, broadband over the
/// motion band, as a blade passing broadside sweeps through all its Doppler
/// (docs/reference/nuisances.md#n2: flash ≈ λ/(L·Ω·cosβ), a few ms).
fn add_flashes(x: &mut [f64], times_s: impl Iterator<Item = (f64, f64)>, width_s: f64) {
    for (centre_s, amplitude) in times_s {
        let first = ((centre_s - 5.0 * width_s) * FS_HZ).max(0.0) as usize;
        let last = (((centre_s + 5.0 * width_s) * FS_HZ) as usize).min(x.len());
        for (i, v) in x.iter_mut().enumerate().take(last).skip(first) {
            let dt = i as f64 / FS_HZ - centre_s;
            *v += amplitude * (-0.5 * (dt / width_s).powi(2)).exp() * (TAU * 40.0 * dt).cos();
        }
    }
}

/// Fan-like: 3 blades at 15 rev/s flash 45 times a second (strictly periodic),
/// plus a steady blade/hub line at 30 Hz, in the same noise.
fn fan_like(seed: u8, seconds: f64) -> Vec<f64> {
    let mut rng = ChaCha8Rng::from_seed([seed; 32]);
    let n = (seconds * FS_HZ) as usize;
    let mut x = white_noise(&mut rng, n, 0.01);
    for (i, v) in x.iter_mut().enumerate() {
        *v += 0.02 * (TAU * 30.0 * i as f64 / FS_HZ).cos();
    }
    let flashes = (0..(seconds * 45.0) as usize).map(|j| (j as f64 / 45.0, 0.08));
    add_flashes(&mut x, flashes, 1e-3);
    x
}

/// Sway-like: a reflector swinging 3 cm at 0.4 Hz (the reference pipeline's
/// nuisance, docs/reference/detectors.md#d9):
/// phase excursion 4π·0.03/λ ≈ 3 rad, Doppler ≤ 1.2 Hz, below the motion band.
fn sway_like(seed: u8, seconds: f64) -> Vec<f64> {
    let mut rng = ChaCha8Rng::from_seed([seed; 32]);
    let n = (seconds * FS_HZ) as usize;
    let mut x = white_noise(&mut rng, n, 0.01);
    for (i, v) in x.iter_mut().enumerate() {
        let t = i as f64 / FS_HZ;
        *v += 0.1 * (1.0 + 3.0 * (TAU * 0.4 * t).sin()).cos();
    }
    x
}

fn max_score(scores: &[FrameScore]) -> f64 {
    scores
        .iter()
        .map(|s| s.value)
        .fold(f64::NEG_INFINITY, f64::max)
}

fn min_score(scores: &[FrameScore]) -> f64 {
    scores.iter().map(|s| s.value).fold(f64::INFINITY, f64::min)
}

// ---------------------------------------------------------------- discrimination

/// Step-rate modulation (1.9 Hz = 114 steps/min, inside the 81–138 range of
/// Tudor-Locke & Rowe 2012) scores far above a 45 Hz flash train (3 blades at
/// 15 rev/s, the reference pipeline's fan; an odd rotor may flash 2N times per
/// revolution, Chen 2011, which only moves the line higher), a slow sway and
/// plain noise.
#[test]
fn walker_like_modulation_scores_far_above_fan_sway_and_noise() {
    let seconds = 12.0;
    let info = stream_2g4();
    let (walker, readings) = run_with_readings(&to_f32(&walker_like(1, seconds, 1.9)));
    let fan = run(&[], &info, &to_f32(&fan_like(2, seconds)), 1000);
    let sway = run(&[], &info, &to_f32(&sway_like(3, seconds)), 1000);
    let mut rng = ChaCha8Rng::from_seed([4; 32]);
    let noise = run(
        &[],
        &info,
        &to_f32(&white_noise(&mut rng, 24_000, 0.01)),
        1000,
    );
    for scores in [&walker, &fan, &sway, &noise] {
        check_scores(scores).expect("finite, ordered");
        assert_eq!(scores.len(), 16);
    }
    let nuisance_max = max_score(&fan).max(max_score(&sway)).max(max_score(&noise));
    assert!(
        min_score(&walker) > 5.0 * nuisance_max && min_score(&walker) > 5.0,
        "walker min {} vs fan {} sway {} noise {}",
        min_score(&walker),
        max_score(&fan),
        max_score(&sway),
        max_score(&noise)
    );
    // The step-rate estimate: 1.9 Hz within one modulation bin (0.244 Hz).
    for r in &readings {
        assert!((r.step_hz - 1.9).abs() <= 0.25, "{r:?}");
    }
}

/// Cadences across the whole range of Tudor-Locke & Rowe (81–138 steps/min)
/// are found; a rhythm at 0.8 Hz (a sway's 2·f, or a stride without steps)
/// is not a step.
#[test]
fn the_step_band_covers_human_cadence_only() {
    let info = stream_2g4();
    for steps_per_min in [84.0, 138.0] {
        let scores = run(
            &[],
            &info,
            &to_f32(&walker_like(5, 10.0, steps_per_min / 60.0)),
            1000,
        );
        assert!(
            min_score(&scores) > 3.0,
            "{steps_per_min}/min: {}",
            min_score(&scores)
        );
    }
    let slow = run(&[], &info, &to_f32(&walker_like(5, 10.0, 0.8)), 1000);
    assert!(max_score(&slow) < 1.5, "0.8 Hz: {}", max_score(&slow));
}

/// The rotor penalty: a slow 5-blade rotor at 1.9 rev/s with one blade
/// brighter than the others (broadside RCS ratio 1 : 0.3², Chen & Ling eq.
/// 8.19 scaled per blade) repeats its flash pattern at 1.9 Hz, a clear line in
/// the step band, but flashes at 9.5 Hz far more strongly. The penalty must
/// cut its score well below its step-band evidence and far below a walker's,
/// and the reading must name the 9.5 Hz line.
#[test]
fn a_dominant_fast_line_penalises_a_step_band_rhythm() {
    let seconds = 12.0;
    let mut rng = ChaCha8Rng::from_seed([7; 32]);
    let mut rotor = white_noise(&mut rng, (seconds * FS_HZ) as usize, 0.01);
    let blade_gains = [1.0, 0.3, 0.3, 0.3, 0.3];
    let flashes = (0..(seconds * 9.5) as usize).map(|j| (j as f64 / 9.5, 0.1 * blade_gains[j % 5]));
    add_flashes(&mut rotor, flashes, 3e-3);
    let (rotor_scores, readings) = run_with_readings(&to_f32(&rotor));
    for r in &readings {
        assert!((r.line_hz - 9.5).abs() <= 0.25, "{r:?}");
        assert!(r.cadence > 2.5, "a step-band rhythm is there: {r:?}");
        assert!(r.line > 3.0 * r.cadence, "{r:?}");
        // Without the penalty the score would be cadence − 1.
        assert!(r.score < 0.2 * (r.cadence - 1.0).max(0.0) + 1e-12, "{r:?}");
    }
    let walker = run(
        &[],
        &stream_2g4(),
        &to_f32(&walker_like(1, seconds, 1.9)),
        1000,
    );
    assert!(
        max_score(&rotor_scores) * 5.0 < min_score(&walker),
        "rotor {} vs walker {}",
        max_score(&rotor_scores),
        min_score(&walker)
    );
}

/// I/Q streams use both Doppler signs: an approaching walker-like signal
/// (positive Doppler only) scores like the real one, the fan-like one does not.
#[test]
fn iq_streams_are_supported() {
    let info = StreamInfo {
        channels: Channels::Iq,
        ..stream_2g4()
    };
    let walker = run(&[], &info, &walker_like_iq(8, 10.0), 1000);
    assert_eq!(walker.len(), 12);
    assert!(min_score(&walker) > 5.0, "{}", min_score(&walker));
    // The fan-like flash train, put on the I rail with a noise Q rail.
    let fan = fan_like(2, 10.0);
    let mut rng = ChaCha8Rng::from_seed([9; 32]);
    let fan_iq: Vec<f32> = fan
        .iter()
        .flat_map(|&i| {
            [
                i as f32,
                (0.01 * rng.sample::<f64, _>(StandardNormal)) as f32,
            ]
        })
        .collect();
    let fan = run(&[], &info, &fan_iq, 1000);
    assert!(
        max_score(&fan) * 5.0 < min_score(&walker),
        "{}",
        max_score(&fan)
    );
}

// ---------------------------------------------------------------- noise law

/// The whitening (crate doc, step 4): for stationary Gaussian noise the
/// log-power of a bin has variance π²/6 and frames with power correlation ρ
/// have covariance Li₂(ρ), so the cadence spectrum C(f) averages 1 at every
/// modulation frequency even though the raw envelope spectrum falls ≈ 3.7×
/// from 1.5 Hz to 15 Hz (Hann frames overlapping by 3/4). A wrong covariance law
/// would tilt C(f). The level of the noise must not matter.
#[test]
fn the_cadence_spectrum_of_noise_averages_one_at_every_modulation_frequency() {
    // 24.125 GHz: the default band holds 70 bins, so each decision averages many.
    let info = StreamInfo {
        carrier_hz: 24.125e9,
        ..stream_2g4()
    };
    let config = PeriodicityConfig::from_params(&params(&[]), &info).unwrap();
    let noise_spectrum = config.noise_modulation_spectrum();
    let at =
        |f_hz: f64| noise_spectrum[(f_hz / config.modulation_frequency_hz(1)).round() as usize];
    assert!(
        at(1.5) / at(15.0) > 3.0,
        "the raw noise spectrum is strongly shaped"
    );

    let bands = [(1.3, 2.4), (5.0, 8.0), (12.0, 15.6)];
    let mut sums = [0.0f64; 3];
    let mut counts = [0usize; 3];
    let mut detector = PeriodicityDetector::new(config.clone());
    let mut rng = ChaCha8Rng::from_seed([12; 32]);
    let mut scores = Vec::new();
    // 160 s of noise in 8-s blocks; every 8th decision (4 s apart: disjoint
    // windows) is kept, so the 40 samples per band are nearly independent.
    let mut decisions = 0;
    for _ in 0..20 {
        let block = to_f32(&white_noise(&mut rng, 16_000, 3.3e-4));
        use echobench_core::detector::Detector;
        let before = scores.len();
        for chunk in block.chunks(1024) {
            let had = scores.len();
            detector.process(Samples::Real(chunk), &mut scores).unwrap();
            if scores.len() > had {
                decisions += 1;
                if decisions % 8 == 0 {
                    let spectrum = detector.cadence_spectrum();
                    for (b, &(low, high)) in bands.iter().enumerate() {
                        for (i, c) in spectrum.iter().enumerate() {
                            let f = config.modulation_frequency_hz(i);
                            if f >= low && f <= high {
                                sums[b] += c;
                                counts[b] += 1;
                            }
                        }
                    }
                }
            }
        }
        assert!(scores.len() > before);
    }
    for b in 0..3 {
        let mean = sums[b] / counts[b] as f64;
        // Per decision and frequency C averages 70 correlated bins (std ≈ 0.2);
        // over ≈ 40 windows × several frequencies the mean's std is < 0.025.
        assert!(
            (mean - 1.0).abs() < 0.1,
            "band {:?}: mean C = {mean}",
            bands[b]
        );
    }
}

/// A gain only shifts each log envelope by a constant, which the detrending
/// removes: ×1024 (exact in f32) leaves every score unchanged.
#[test]
fn scores_do_not_depend_on_the_gain() {
    let info = stream_2g4();
    let x = walker_like(3, 8.0, 1.7);
    let quiet = run(&[], &info, &to_f32(&x), 1000);
    let loud: Vec<f32> = to_f32(&x).iter().map(|v| v * 1024.0).collect();
    let loud = run(&[], &info, &loud, 1000);
    assert_eq!(quiet.len(), loud.len());
    for (q, l) in quiet.iter().zip(&loud) {
        assert!(
            (q.value - l.value).abs() <= 1e-9 * q.value.abs().max(1.0),
            "{q:?} {l:?}"
        );
    }
}

// ---------------------------------------------------------------- contract

#[test]
fn scores_do_not_depend_on_block_size() {
    let short = [
        ("analysis_s", ParamValue::Real(2.0)),
        ("decision_hop_s", ParamValue::Real(0.25)),
    ];
    let real = to_f32(&walker_like(11, 5.0, 2.0));
    let mut rng = ChaCha8Rng::from_seed([13; 32]);
    let iq = to_f32(&white_noise(&mut rng, 2 * 20_000, 0.01));
    let iq_info = StreamInfo {
        channels: Channels::Iq,
        ..stream_2g4()
    };
    let rect = [
        ("window", ParamValue::Text("rect".into())),
        ("band_units", ParamValue::Text("hz".into())),
        ("hop", ParamValue::Integer(50)),
        ("analysis_s", ParamValue::Real(2.0)),
        ("decision_hop_s", ParamValue::Real(0.25)),
    ];
    for (given, info, data) in [
        (&short[..], stream_2g4(), &real),
        (&short[..], iq_info, &iq),
        (&rect[..], stream_2g4(), &real),
    ] {
        let whole = run(given, &info, data, data.len());
        assert!(whole.len() >= 8, "{}", whole.len());
        for block in [1, 7, 256] {
            assert_eq!(run(given, &info, data, block), whole, "block {block}");
        }
        check_scores(&whole).expect("finite, ordered");
    }
}

#[test]
fn time_stamps_mark_the_end_of_the_newest_frame() {
    // 125 frames of 256 every 64: the first decision ends at 124·64 + 256 = 8192
    // samples, then one every 16 frames = 1024 samples.
    let mut rng = ChaCha8Rng::from_seed([14; 32]);
    let scores = run(
        &[],
        &stream_2g4(),
        &to_f32(&white_noise(&mut rng, 12_000, 0.01)),
        999,
    );
    let ends: Vec<u64> = scores.iter().map(|s| s.end_sample).collect();
    assert_eq!(ends, vec![8192, 9216, 10240, 11264]);
}

#[test]
fn reset_forgets_the_stream() {
    let data = to_f32(&walker_like(15, 6.0, 1.9));
    let mut detector = detector(&[], &stream_2g4());
    use echobench_core::detector::Detector;
    let mut first = Vec::new();
    detector.process(Samples::Real(&data), &mut first).unwrap();
    detector.reset();
    assert!(detector.last_reading().is_none());
    let mut second = Vec::new();
    detector.process(Samples::Real(&data), &mut second).unwrap();
    assert_eq!(first, second);
}

#[test]
fn refuses_bad_parameters_naming_them() {
    let info = stream_2g4();
    let refused = |given: &[(&str, ParamValue)], info: &StreamInfo, name: &str| {
        let given = pinned(given);
        let error = match Params::resolve("periodicity", PeriodicityPlugin.params(), &given) {
            Err(e) => ParamError::from(e),
            Ok(p) => match PeriodicityPlugin.plan(&p, info).map(|plan| plan.start()) {
                Err(e) => {
                    assert!(PeriodicityPlugin.check(&p, info).is_err());
                    e
                }
                Ok(_) => panic!("{given:?} was accepted"),
            },
        };
        assert_eq!(error.param, name, "{error}");
        assert!(error.to_string().contains(name), "{error}");
    };
    let real = ParamValue::Real;
    refused(&[("frame_len", ParamValue::Integer(0))], &info, "frame_len");
    refused(&[("hop", ParamValue::Integer(0))], &info, "hop");
    // fs/hop = 2000/256 = 7.8 Hz: its Nyquist 3.9 Hz lies below flash_min_hz = 5 Hz.
    refused(&[("hop", ParamValue::Integer(256))], &info, "hop");
    refused(&[("step_low_hz", real(2.5))], &info, "step_low_hz");
    refused(&[("step_high_hz", real(6.0))], &info, "flash_min_hz");
    refused(&[("analysis_s", real(1.0))], &info, "analysis_s");
    refused(&[("analysis_s", real(0.1))], &info, "analysis_s");
    refused(&[("decision_hop_s", real(0.01))], &info, "decision_hop_s");
    refused(&[("motion_min_mps", real(5.0))], &info, "motion_min_mps");
    // 24 GHz: 4 m/s is 644 Hz, above the 500 Hz Nyquist of a 1 kHz stream. Set by the
    // user, the edge is refused; left at its default it is clipped to 500 Hz.
    let slow_24g = StreamInfo {
        sample_rate_hz: 1000.0,
        carrier_hz: 24.125e9,
        ..info
    };
    refused(
        &[("motion_max_mps", real(4.0))],
        &slow_24g,
        "motion_max_mps",
    );
    let clipped = PeriodicityConfig::from_params(&params(&[]), &slow_24g).unwrap();
    assert_eq!(clipped.motion_band_hz.1, 500.0);
    let hz = ("band_units", ParamValue::Text("hz".into()));
    refused(
        &[
            hz.clone(),
            ("motion_low_hz", real(20.0)),
            ("motion_high_hz", real(21.0)),
        ],
        &info,
        "motion_low_hz",
    );
    refused(
        &[hz.clone(), ("motion_low_hz", real(90.0))],
        &info,
        "motion_low_hz",
    );
    refused(
        &[hz, ("motion_high_hz", real(1500.0))],
        &info,
        "motion_high_hz",
    );
    refused(
        &[("window", ParamValue::Text("kaiser".into()))],
        &info,
        "window",
    );
    refused(&[("cadence_hz", real(2.0))], &info, "cadence_hz");
    let no_carrier = StreamInfo {
        carrier_hz: f64::NAN,
        ..info
    };
    refused(&[], &no_carrier, "band_units");
    let bad_rate = StreamInfo {
        sample_rate_hz: 0.0,
        ..info
    };
    refused(&[], &bad_rate, "sample_rate_hz");
    // 60 s at fs/hop = 1 MHz with a 100-bin band would store 6e9 values.
    let fast = StreamInfo {
        sample_rate_hz: 1e6,
        ..info
    };
    refused(
        &[
            ("band_units", ParamValue::Text("hz".into())),
            ("motion_low_hz", real(4000.0)),
            ("motion_high_hz", real(400_000.0)),
            ("hop", ParamValue::Integer(1)),
            ("analysis_s", real(60.0)),
        ],
        &fast,
        "analysis_s",
    );
}

#[test]
fn silence_clipping_nan_and_a_single_sample_are_handled() {
    let info = stream_2g4();
    let silence = run(&[], &info, &vec![0.0; 12_000], 1000);
    assert_eq!(silence.len(), 4);
    assert!(silence.iter().all(|s| s.value == 0.0));

    // A pure tone: constant envelopes, no rhythm.
    let tone: Vec<f32> = (0..12_000)
        .map(|i| (0.05 * (TAU * 30.0 * i as f64 / FS_HZ).sin()) as f32)
        .collect();
    let scores = run(&[], &info, &tone, 1000);
    assert!(scores.iter().all(|s| s.value < 0.5), "{scores:?}");

    // Hard clipping of a walker-like signal at ±0.03: finite, still a rhythm.
    let clipped: Vec<f32> = walker_like(16, 8.0, 1.9)
        .iter()
        .map(|&v| v.clamp(-0.03, 0.03) as f32)
        .collect();
    let scores = run(&[], &info, &clipped, 1000);
    check_scores(&scores).unwrap();
    assert!(min_score(&scores) > 1.0, "{}", min_score(&scores));

    // NaN and infinities count as zero samples.
    let mut rng = ChaCha8Rng::from_seed([17; 32]);
    let mut data = to_f32(&white_noise(&mut rng, 10_000, 0.01));
    let mut zeroed = data.clone();
    for i in [0usize, 1234, 5000, 9999] {
        data[i] = f32::NAN;
        zeroed[i] = 0.0;
    }
    data[7000] = f32::INFINITY;
    data[7001] = f32::NEG_INFINITY;
    zeroed[7000] = 0.0;
    zeroed[7001] = 0.0;
    let with_nan = run(&[], &info, &data, 7);
    check_scores(&with_nan).unwrap();
    assert_eq!(with_nan, run(&[], &info, &zeroed, 7));
    let all_nan = run(&[], &info, &vec![f32::NAN; 10_000], 1000);
    assert!(!all_nan.is_empty() && all_nan.iter().all(|s| s.value == 0.0));

    assert!(run(&[], &info, &[0.5], 1).is_empty());
    assert!(run(&[], &info, &[], 1).is_empty());
}

#[test]
fn cost_grows_with_the_motion_band() {
    let cost_2g4 = PeriodicityPlugin.cost(&params(&[]), &stream_2g4()).unwrap();
    let info_24g = StreamInfo {
        carrier_hz: 24.125e9,
        ..stream_2g4()
    };
    let cost_24g = PeriodicityPlugin.cost(&params(&[]), &info_24g).unwrap();
    // 2.45 GHz: 7 bins; frame FFT ≈ (2.5·256·8/2 + 768 + 256)/64 ≈ 56 per sample.
    assert!(
        (40.0..120.0).contains(&cost_2g4.ops_per_sample),
        "{cost_2g4:?}"
    );
    // 24 GHz: 70 bins, 10× the envelope store and the modulation FFTs.
    assert!(
        cost_24g.ops_per_sample > 2.0 * cost_2g4.ops_per_sample,
        "{cost_24g:?}"
    );
    let envelope_bytes = 125 * 70 * 8;
    assert!(cost_24g.state_bytes > envelope_bytes, "{cost_24g:?}");
    assert!(cost_2g4.state_bytes < cost_24g.state_bytes);
}
