//! The runner end to end: determinism across threads and shards, misbehaving
//! detectors, and detection statistics through the whole chain.

use echobench_core::detector::{
    Cost, Detector, DetectorFailure, DetectorPlan, DetectorPlugin, ParamError, ParamSpec, Params,
    PrototypePlan, Samples,
};
use echobench_core::param_decl::IntegerParam;
use echobench_core::{FrameScore, StreamInfo};
use echobench_harness::runner::{merge_tallies, resolve_detectors, run_suite, Shard, Tallies};
use echobench_harness::summary::summarise;
use echobench_suite::Suite;
use echobench_suite::{default_suite, load_suite_text, FolderSource};
use std::sync::Arc;

fn plugins() -> Vec<Arc<dyn DetectorPlugin>> {
    echobench_detectors::builtin()
}

/// The default suite, cut down to `trials` test and `calibration` calibration trials per variant.
fn small_default(trials: u64, calibration: u64) -> Suite {
    let mut suite = default_suite(&plugins()).expect("the default suite loads");
    for scene in &mut suite.scenes {
        scene.trials = trials;
        scene.calibration_trials = calibration;
    }
    suite
}

fn run(
    suite: &Suite,
    shard: Option<Shard>,
    threads: usize,
    extra: &[Arc<dyn DetectorPlugin>],
) -> Tallies {
    let mut all = plugins();
    all.extend_from_slice(extra);
    let detectors = resolve_detectors(suite, &all).unwrap();
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap();
    pool.install(|| run_suite(suite, &detectors, shard, &|_| {}))
        .unwrap()
        .0
}

/// What the run folder's data files are rendered from (`echobench-render` writes them as pure
/// functions of these): the summary and the tallies, as JSON.
fn output_bytes(tallies: &Tallies, suite: &Suite) -> (Vec<u8>, Vec<u8>) {
    (
        serde_json::to_vec_pretty(&summarise(tallies, suite)).unwrap(),
        serde_json::to_vec_pretty(tallies).unwrap(),
    )
}

#[test]
fn outputs_are_identical_for_one_and_two_threads_and_for_merged_shards() {
    let suite = small_default(3, 1);
    let one = run(&suite, None, 1, &[]);
    let two = run(&suite, None, 2, &[]);
    assert_eq!(output_bytes(&one, &suite), output_bytes(&two, &suite));
    let shards: Vec<Tallies> = (1..=3)
        .map(|k| run(&suite, Some(Shard { index: k, count: 3 }), 2, &[]))
        .collect();
    assert!(
        shards.iter().all(|s| s.test_trials < one.test_trials),
        "each shard runs a part"
    );
    let merged = merge_tallies(shards).unwrap();
    assert_eq!(merged, one, "merged shards equal the whole run");
    assert_eq!(output_bytes(&merged, &suite), output_bytes(&one, &suite));
}

/// Panics on any trial whose first sample is positive: about half the trials, always the same ones.
struct PanickingPlugin;
#[derive(Clone)]
struct Panicking {
    first: bool,
}

static NO_PARAMS: [ParamSpec; 0] = [];

impl Detector for Panicking {
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        let block = block.values();
        if self.first && block.first().is_some_and(|&x| x > 0.0) {
            panic!("deliberate failure for the test");
        }
        self.first = false;
        out.push(FrameScore {
            end_sample: 0,
            value: 0.0,
        });
        Ok(())
    }
    fn reset(&mut self) {
        self.first = true;
    }
}

impl DetectorPlugin for PanickingPlugin {
    fn id(&self) -> &'static str {
        "panicking"
    }
    fn about(&self) -> &'static str {
        "panics on some trials"
    }
    fn params(&self) -> &'static [ParamSpec] {
        &NO_PARAMS
    }
    fn plan(&self, _: &Params, _: &StreamInfo) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        Ok(PrototypePlan::shared(Panicking { first: true }))
    }
    fn check(&self, _: &Params, _: &StreamInfo) -> Result<(), ParamError> {
        Ok(())
    }

    fn cost(&self, _: &Params, _: &StreamInfo) -> Option<Cost> {
        Some(Cost {
            state_bytes: 1,
            ops_per_sample: 1.0,
        })
    }
}

/// Returns NaN scores.
struct NanPlugin;
#[derive(Clone)]
struct NanDetector;

static NAN_PARAMS: [ParamSpec; 1] = [IntegerParam {
    name: "frame_len",
    unit: "samples",
    about: "frame",
    min: 1,
    max: 100_000,
    default: 1000,
}
.spec()];

impl Detector for NanDetector {
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        let block = block.values();
        if !block.is_empty() {
            out.push(FrameScore {
                end_sample: 1,
                value: f64::NAN,
            });
        }
        Ok(())
    }
    fn reset(&mut self) {}
}

impl DetectorPlugin for NanPlugin {
    fn id(&self) -> &'static str {
        "nan"
    }
    fn about(&self) -> &'static str {
        "returns NaN"
    }
    fn params(&self) -> &'static [ParamSpec] {
        &NAN_PARAMS
    }
    fn plan(&self, _: &Params, _: &StreamInfo) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        Ok(PrototypePlan::shared(NanDetector))
    }
    fn check(&self, _: &Params, _: &StreamInfo) -> Result<(), ParamError> {
        Ok(())
    }

    fn cost(&self, _: &Params, _: &StreamInfo) -> Option<Cost> {
        Some(Cost {
            state_bytes: 1,
            ops_per_sample: 1.0,
        })
    }
}

#[test]
fn a_panicking_or_nan_detector_is_reported_and_the_others_complete() {
    let mut suite = small_default(2, 1);
    let clean = run(&suite, None, 2, &[]);
    for plugin in [
        Arc::new(PanickingPlugin) as Arc<dyn DetectorPlugin>,
        Arc::new(NanPlugin),
    ] {
        suite.detectors.push(echobench_suite::DetectorEntry {
            label: plugin.id().into(),
            plugin: plugin.id().into(),
            params: vec![],
            resolved: Params::defaults(plugin.params()),
        });
    }
    let tallies = run(
        &suite,
        None,
        2,
        &[Arc::new(PanickingPlugin), Arc::new(NanPlugin)],
    );
    // The last product's last two detectors.
    let panicking = &tallies.detectors[tallies.detectors.len() - 2];
    let nan = &tallies.detectors[tallies.detectors.len() - 1];
    assert!(!panicking.failures.is_empty(), "the panics are recorded");
    assert!(panicking
        .failures
        .iter()
        .all(|f| f.message.contains("deliberate failure")));
    let tallied: u64 = panicking.variants.iter().map(|v| v.trials).sum();
    assert!(tallied > 0, "trials without a panic are still tallied");
    assert!(
        !nan.failures.is_empty()
            && nan
                .failures
                .iter()
                .all(|f| f.message.contains("not finite"))
    );
    // The well-behaved detectors are untouched, product by product.
    let well_behaved: Vec<_> = tallies
        .detectors
        .iter()
        .filter(|d| d.label != "panicking" && d.label != "nan")
        .cloned()
        .collect();
    assert_eq!(well_behaved, clean.detectors);
}

/// A noise-only scene: white noise, no low-pass, a rectangular-window CA-CFAR
/// with a single cell under test and no overlap. The cells are then independent
/// unit-mean exponentials (up to a scale), so the per-frame false-alarm
/// probability at α is (1 + α/N)^−N (Finn & Johnson 1968; Richards,
/// *Fundamentals of Radar Signal Processing*, 2014, eq. 6.135), measured through
/// synthesis, the front end, the ADC, the detector and the runner.
#[test]
fn ca_cfar_false_alarm_probability_matches_the_closed_form_through_the_runner() {
    let text = r#"
name: cfar-noise
seed: 7
trials: 6
calibration_trials: 1
scenes:
  - id: empty-room
    label: nuisance
    scene:
      duration_s: 120
      sensor:
        carrier_hz: 24.125e9
        sample_rate_hz: 2000
        front_end: {high_pass_hz: [0.5], gain_db: 66}
        adc: {bits: 16, full_scale_v: 3.3}
      environment: {white_noise_v_per_rthz: 30.0e-9}
detectors:
  - plugin: ca-cfar
    label: rect-one-cell
    params: {window: rect, frame_len: 256, hop: 256, low_hz: 390, high_hz: 392, guard: 1, train: 8, pfa: 0.01}
"#;
    let (suite, _) = load_suite_text("cfar.yaml", text, &FolderSource::new("."), &plugins())
        .unwrap_or_else(|r| panic!("{r}"));
    let tallies = run(&suite, None, 2, &[]);
    let summary = summarise(&tallies, &suite);
    let nominal = summary.detectors[0]
        .nominal
        .as_ref()
        .expect("ca-cfar has a nominal point");
    // One cell under test, N = 16: the frame Pfa is the cell Pfa.
    assert!(
        (nominal.nominal_frame_pfa - 0.01).abs() < 1e-12,
        "{}",
        nominal.nominal_frame_pfa
    );
    let measured = nominal.measured_frame_pfa;
    let (low, high) = (measured.low.unwrap(), measured.high.unwrap());
    assert!(
        nominal.noise_frames > 5000,
        "{} frames",
        nominal.noise_frames
    );
    assert!(
        low <= 0.01 && 0.01 <= high,
        "measured {measured:?} over {} frames",
        nominal.noise_frames
    );
}

/// Regularised upper incomplete gamma through statrs, for the noncentral χ² tail.
fn noncentral_chi2_sf(x: f64, k: f64, lambda: f64) -> f64 {
    // Poisson mixture of central χ² tails (docs/reference/detectors.md#d2;
    // Johnson, Kotz & Balakrishnan): Σ_j Pois(j; λ/2)·Q(k/2 + j, x/2).
    let half = lambda / 2.0;
    let mut total = 0.0;
    for j in 0..2000 {
        let log_weight =
            -half + j as f64 * half.ln() - statrs::function::gamma::ln_gamma(j as f64 + 1.0);
        let term =
            log_weight.exp() * statrs::function::gamma::gamma_ur(k / 2.0 + j as f64, x / 2.0);
        total += term;
        if j as f64 > half && term < 1e-17 {
            break;
        }
    }
    total
}

/// A sinusoid in white Gaussian noise at a known SNR: the energy detector's
/// measured Pd at a set Pfa matches the noncentral χ² closed form (Urkowitz
/// 1967; Kay 1998 vol. II; docs/reference/detectors.md#d2 and check-values.md#cv1).
#[test]
fn energy_detector_pd_on_a_sinusoid_matches_the_noncentral_chi_square() {
    use rand::SeedableRng;
    use rand_distr::{Distribution, StandardNormal};
    use statrs::distribution::{ChiSquared, ContinuousCDF};
    let n = 16usize;
    let pfa = 1e-2;
    let gamma = ChiSquared::new(n as f64).unwrap().inverse_cdf(1.0 - pfa);
    // λ = Σ s²/σ² = N·A²/(2σ²) for whole cycles in the frame: a 0 dB per-sample SNR gives λ = 16.
    let sigma = 1.0f64;
    let amplitude = (2.0f64).sqrt() * sigma;
    let lambda = n as f64 * amplitude * amplitude / (2.0 * sigma * sigma);
    let expected_pd = noncentral_chi2_sf(gamma, n as f64, lambda);
    // CV1's value at λ = 16 and Pfa 1e-3 checks the helper itself (scipy ncx2.sf,
    // docs/reference/check-values.md#cv1).
    let cv1 = noncentral_chi2_sf(39.252355, 16.0, 16.0);
    assert!((cv1 - 0.216690).abs() < 1e-6, "{cv1}");

    let plugin = echobench_detectors::find("energy").unwrap();
    let params = Params::resolve(
        "energy",
        plugin.params(),
        &[
            (
                "frame_len".into(),
                echobench_core::detector::ParamValue::Integer(n as i64),
            ),
            (
                "hop".into(),
                echobench_core::detector::ParamValue::Integer(n as i64),
            ),
            (
                "normalise".into(),
                echobench_core::detector::ParamValue::Text("none".into()),
            ),
        ],
    )
    .unwrap();
    let fs = 1600.0;
    let info = StreamInfo {
        sample_rate_hz: fs,
        channels: echobench_core::Channels::Real,
        adc_bits: 16,
        carrier_hz: 24.125e9,
    };
    let mut detector = plugin.plan(&params, &info).unwrap().start();
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
    let frames = 40_000;
    let f0 = 400.0; // 4 whole cycles per 16-sample frame at 1600 Hz
    let samples: Vec<f32> = (0..frames * n)
        .map(|i| {
            let z: f64 = StandardNormal.sample(&mut rng);
            (amplitude * (std::f64::consts::TAU * f0 * i as f64 / fs + 0.3).sin() + sigma * z)
                as f32
        })
        .collect();
    let mut scores = Vec::new();
    detector
        .process(Samples::Real(&samples), &mut scores)
        .unwrap();
    assert_eq!(scores.len(), frames);
    // Raw mode scores the mean of x², so N·score/σ² is the χ² statistic.
    let detected = scores
        .iter()
        .filter(|s| n as f64 * s.value / (sigma * sigma) >= gamma)
        .count() as f64;
    let pd = detected / frames as f64;
    let bound = 4.5 * (expected_pd * (1.0 - expected_pd) / frames as f64).sqrt();
    assert!(
        (pd - expected_pd).abs() <= bound + 2e-4,
        "Pd {pd} vs closed form {expected_pd} ± {bound}"
    );
}

/// Detection against range: with the threshold fixed, the share of walks detected
/// cannot grow as the walker starts farther away (R⁻² amplitude law, Skolnik).
#[test]
fn detection_falls_with_range_at_a_fixed_threshold() {
    let mut suite = small_default(6, 2);
    // The range sweep plus the nuisance scenes, so that thresholds are calibrated
    // on nuisance time as in the default suite.
    suite
        .scenes
        .retain(|s| s.sweep_field.is_some() || s.label == echobench_suite::SceneLabel::Nuisance);
    suite.detectors.retain(|d| d.label == "energy");
    let tallies = run(&suite, None, 2, &[]);
    let d = &tallies.detectors[0];
    let swept: Vec<_> = d
        .variants
        .iter()
        .filter(|v| v.sweep_number.is_some())
        .collect();
    let ranges: Vec<f64> = swept.iter().map(|v| v.sweep_number.unwrap()).collect();
    assert!(ranges.windows(2).all(|w| w[0] < w[1]), "{ranges:?}");
    // Allow one event of Monte Carlo slack between neighbours.
    let slack = 1.0 / swept[0].events.max(1) as f64 + 1e-12;
    let mut falls_somewhere = false;
    // Thresholds at or above the 1-per-hour operating point: below it alarms fire on
    // noise, and "detection" then depends on where the hold time falls.
    for g in d.operating[0].grid_index..d.thresholds.len() {
        let pd: Vec<f64> = swept
            .iter()
            .map(|v| v.detected[g] as f64 / v.events.max(1) as f64)
            .collect();
        for w in pd.windows(2) {
            assert!(
                w[1] <= w[0] + slack,
                "threshold {}: Pd against range {ranges:?}: {pd:?}",
                d.thresholds[g]
            );
        }
        falls_somewhere |= pd[0] > pd[pd.len() - 1];
    }
    assert!(
        falls_somewhere,
        "at some threshold the far walks are missed more than the near ones"
    );
}
