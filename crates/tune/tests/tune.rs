//! Tuning end to end on a small planted suite: a plate on a linear stage moving away from a
//! 2.45 GHz module at a speed whose Doppler line is a known frequency, two quiet rooms, and a
//! room with a neighbouring module's beat tone on that very frequency; and a planted
//! detector that measures the power at one tunable frequency.

use echobench_core::detector::{
    Detector, DetectorFailure, DetectorPlan, DetectorPlugin, ParamError, ParamSpec, Params,
    PrototypePlan, Samples,
};
use echobench_core::param_decl::{RealParam, TuneRange};
use echobench_core::{FrameScore, StreamInfo};
use echobench_suite::{load_suite_text, InlineOnly, Suite};
use echobench_tune::{search, tune, TuneSettings};
use std::sync::Arc;

/// Speed of light, m/s (SI definition).
const C_MPS: f64 = 299_792_458.0;
const CARRIER_HZ: f64 = 2.45e9;
/// The plate's Doppler line, Hz: f_D = 2·v·f_c/c for a reflector moving radially on the
/// beam's axis (docs/reference/radar-physics.md#r1), so v = f_D·c/(2·f_c).
const LINE_HZ: f64 = 30.0;
/// The tuning range of the planted detector, Hz.
const RANGE_HZ: (f64, f64) = (10.0, 50.0);
/// 16 Sobol points over the range put one point in each 1/16 of it: the grid step.
const SAMPLED: usize = 16;
const RCS: f64 = 0.0002;
const GRID_STEP_HZ: f64 = (RANGE_HZ.1 - RANGE_HZ.0) / SAMPLED as f64;

/// Samples per frame of the planted detector: 0.5 s at 1 kHz, Hann-windowed, so the response
/// to a line Δf away falls from 1 at the line to 0.25 at 2 Hz (one bin), 0.1 at 2.5 Hz (the
/// grid step) and 0 at 4 Hz (two bins), with sidelobes below −31 dB beyond (Harris 1978).
const FRAME: usize = 500;
/// Samples at the start of a trial that score 0 (the front end settling).
const SETTLE_SAMPLES: u64 = 1000;

const TONE_HZ: RealParam = RealParam {
    name: "tone_hz",
    unit: "Hz",
    about: "frequency whose power the score measures",
    min: 1.0,
    max: 400.0,
    default: 10.0,
};
static TONE_PARAMS: [ParamSpec; 1] = [TONE_HZ.spec_tuned(TuneRange::Linear {
    low: RANGE_HZ.0,
    high: RANGE_HZ.1,
})];

/// The planted detector: per frame, the power at `tone_hz` (one DFT coefficient of the
/// Hann-tapered frame, mean removed), in the same units at every frequency (the rooms' noise
/// is white), large where a line sits within a bin of it. So its Pd peaks at the line.
#[derive(Clone)]
struct Tone {
    tone_hz: f64,
    sample_rate_hz: f64,
    frame: Vec<f64>,
    seen: u64,
}

impl Tone {
    fn score(&self) -> f64 {
        let n = self.frame.len() as f64;
        let mean = self.frame.iter().sum::<f64>() / n;
        let (mut re, mut im) = (0.0, 0.0);
        for (k, x) in self.frame.iter().enumerate() {
            // Hann taper (Harris 1978).
            let taper = 0.5 - 0.5 * (std::f64::consts::TAU * k as f64 / n).cos();
            let x = (x - mean) * taper;
            let phase = std::f64::consts::TAU * self.tone_hz * k as f64 / self.sample_rate_hz;
            re += x * phase.cos();
            im += x * phase.sin();
        }
        (re * re + im * im) / n
    }
}

impl Detector for Tone {
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        for &x in block.values() {
            self.frame.push(f64::from(x));
            self.seen += 1;
            if self.frame.len() == FRAME {
                // The first second is left out: the front end's high-pass settles there.
                let value = if self.seen <= SETTLE_SAMPLES {
                    0.0
                } else {
                    self.score()
                };
                out.push(FrameScore {
                    end_sample: self.seen,
                    value,
                });
                self.frame.clear();
            }
        }
        Ok(())
    }

    fn reset(&mut self) {
        self.frame.clear();
        self.seen = 0;
    }
}

struct TonePlugin;

impl DetectorPlugin for TonePlugin {
    fn id(&self) -> &str {
        "planted-tone"
    }
    fn about(&self) -> &str {
        "power at one frequency (a test's planted optimum)"
    }
    fn params(&self) -> &[ParamSpec] {
        &TONE_PARAMS
    }
    fn plan(
        &self,
        params: &Params,
        info: &StreamInfo,
    ) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        Ok(PrototypePlan::shared(Tone {
            tone_hz: TONE_HZ.get(params)?,
            sample_rate_hz: info.sample_rate_hz,
            frame: Vec::with_capacity(FRAME),
            seen: 0,
        }))
    }
    fn check(&self, params: &Params, _: &StreamInfo) -> Result<(), ParamError> {
        TONE_HZ.get(params).map(|_| ())
    }
}

fn plugins() -> Vec<Arc<dyn DetectorPlugin>> {
    vec![Arc::new(TonePlugin)]
}

/// A 4 s scene at 2.45 GHz, 1 kHz, real output, with these environment and actor lines. The
/// white noise (1 µV/√Hz at the mixer, about 14 ADC steps rms after the front end) keeps the
/// quiet rooms well above the ADC's step, so a quiet room is not a constant code.
fn scene(environment: &str, actors: &str) -> String {
    format!(
        "{{duration_s: 4, sensor: {{carrier_hz: {CARRIER_HZ}, sample_rate_hz: 1000, output: real, \
         position_m: [0, 0, 1.0], front_end: {{high_pass_hz: [0.5], low_pass_hz: [100], \
         gain_db: 54, rails_v: [0, 3.3]}}, adc: {{bits: 12, full_scale_v: 3.3}}}}, \
         coverage: {{range_m: 8}}, environment: {{white_noise_v_per_rthz: 1e-6{environment}}}, \
         actors: [{actors}]}}"
    )
}

/// The planted suite: the plate (target), two quiet rooms and the beat-tone room.
fn planted_suite(seed: u64, trials: u64) -> Suite {
    let speed_mps = LINE_HZ * C_MPS / (2.0 * CARRIER_HZ);
    let plate = format!(
        "{{kind: reflector, id: plate, target: true, rcs_m2: {RCS}, position_m: [8.5, 0, 1.0], \
         azimuth_deg: 180, speed_mps: {speed_mps}, move_start_s: 0, move_stop_s: 4}}"
    );
    // A neighbouring module's beat tone on the plate's line, steady (no drift).
    let beat = format!(
        ", neighbour: {{amplitude_v: 2.0e-5, offset_hz: {LINE_HZ}, drift_hz: 0, drift_period_s: 20}}"
    );
    let text = format!(
        "name: planted\nseed: {seed}\ntrials: {trials}\ncalibration_trials: 8\nscenes:\n\
         \x20 - {{id: stage, label: target, scene: {}}}\n\
         \x20 - {{id: quiet-a, label: nuisance, scene: {}}}\n\
         \x20 - {{id: quiet-b, label: nuisance, scene: {}}}\n\
         \x20 - {{id: beat-room, label: nuisance, scene: {}}}\n\
         detectors:\n  - plugin: planted-tone\n\
         alarm: {{hold_s: 1}}\n\
         scoring: {{early_s: 0.5, late_s: 1, target_false_alarms_per_hour: [1], \
         threshold_count: 60, threshold_rule: worst_room}}\n",
        scene("", &plate),
        scene("", ""),
        scene("", ""),
        scene(&beat, ""),
    );
    load_suite_text("planted.yaml", &text, &InlineOnly, &plugins())
        .unwrap_or_else(|r| panic!("the planted suite loads: {r}"))
        .0
}

fn tone_of(values: &std::collections::BTreeMap<String, String>) -> f64 {
    values
        .get("tone_hz")
        .map_or(TONE_HZ.default, |v| v.parse().unwrap())
}

fn settings() -> TuneSettings {
    TuneSettings {
        configs: SAMPLED,
        keep_one_in: 4,
        rungs: 2,
        last_rung_share: 1.0,
        tuning_seed: None,
        latency_limit_s: None,
        leave_one_out: false,
    }
}

#[test]
fn the_planted_optimum_is_found_within_one_grid_step() {
    // The suite without the beat-tone room, so nothing argues against the line.
    let mut suite = planted_suite(11, 16);
    suite.scenes.retain(|s| s.id != "beat-room");
    let found = search(&suite, &plugins(), &settings(), &|_| {}).unwrap();
    let chosen = &found.configurations[0][found.chosen[0]];
    let hz = tone_of(&chosen.shown());
    let history: Vec<String> = found
        .history
        .iter()
        .map(|h| {
            format!(
                "rung {} cfg {} {:?} auc {:?} pd {:?}",
                h.rung, h.config, h.params, h.auc, h.pd
            )
        })
        .collect();
    assert!(
        (hz - LINE_HZ).abs() <= GRID_STEP_HZ,
        "tuned to {hz} Hz, the line is at {LINE_HZ} Hz (grid step {GRID_STEP_HZ} Hz)\n{}",
        history.join("\n")
    );
    // The sample really spread over the range: one point per sixteenth.
    let mut cells: Vec<usize> = found.configurations[0][1..]
        .iter()
        .map(|c| ((tone_of(&c.shown()) - RANGE_HZ.0) / GRID_STEP_HZ) as usize)
        .collect();
    cells.sort_unstable();
    assert_eq!(cells, (0..SAMPLED).collect::<Vec<_>>());
}

#[test]
fn with_the_judging_seed_the_tuning_pd_is_the_judged_pd_and_otherwise_not() {
    let suite = planted_suite(5, 12);
    let same = TuneSettings {
        tuning_seed: Some(suite.seed),
        configs: 4,
        ..settings()
    };
    let (summary, _) = tune(&suite, &plugins(), &same, &|_| {}).unwrap();
    let d = &summary.detectors[0];
    assert_eq!(d.tuning, d.held_out, "same trials, same figures");
    // The summary reads back from its JSON as it was (what the report reads).
    let path = std::env::temp_dir().join(format!("echobench-tune-{}.json", std::process::id()));
    std::fs::write(&path, echobench_tune::summary_json(&summary).unwrap()).unwrap();
    let back = echobench_tune::read_summary(&path);
    let _ = std::fs::remove_file(&path);
    assert_eq!(back.unwrap(), summary);
    // The tuning seed of an ordinary tuning is not the suite's, and its trials are others:
    // the chosen configuration's threshold and Pd move.
    let (summary, _) = tune(
        &suite,
        &plugins(),
        &TuneSettings {
            configs: 4,
            ..settings()
        },
        &|_| {},
    )
    .unwrap();
    assert_ne!(summary.tuning_seed, suite.seed);
    let d = &summary.detectors[0];
    assert_ne!(d.tuning, d.held_out, "other trials, other figures");
}

#[test]
fn a_detector_that_fails_only_in_the_room_it_never_saw_is_caught() {
    let suite = planted_suite(3, 12);
    let with_rooms = TuneSettings {
        configs: 8,
        leave_one_out: true,
        ..settings()
    };
    let (summary, _) = tune(&suite, &plugins(), &with_rooms, &|_| {}).unwrap();
    let verdict = |room: &str| {
        summary
            .left_out
            .iter()
            .find(|r| r.room == room)
            .unwrap_or_else(|| panic!("room {room} judged: {:?}", summary.left_out))
    };
    let beat = verdict("beat-room");
    assert!(
        beat.fails,
        "tuned without the beat tone, it fires on it: {beat:?}"
    );
    for quiet in ["quiet-a", "quiet-b"] {
        let r = verdict(quiet);
        assert!(!r.fails, "a quiet room left out is no surprise: {r:?}");
    }
}

#[test]
fn tuning_is_bit_identical_for_one_and_two_threads() {
    let suite = planted_suite(9, 8);
    let small = TuneSettings {
        configs: 4,
        leave_one_out: true,
        ..settings()
    };
    let run = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        let (summary, tuned) = pool.install(|| tune(&suite, &plugins(), &small, &|_| {}).unwrap());
        (
            echobench_tune::summary_json(&summary).unwrap(),
            echobench_tune::history_svg(&summary),
            echobench_tune::markdown(&summary),
            format!("{:?}", tuned.detectors),
        )
    };
    let one = run(1);
    assert_eq!(one, run(2));
    // The history plot is well-formed SVG with one line or dot per configuration run.
    let svg = roxmltree::Document::parse(&one.1).expect("the history plot parses as XML");
    assert_eq!(svg.root_element().tag_name().name(), "svg");
    assert!(svg.descendants().any(|n| n.has_tag_name("circle")));
}

#[test]
fn the_tuned_suite_file_loads_back_with_the_same_scenes_and_detectors() {
    use echobench_core::detector::ParamValue;
    let plugins = echobench_detectors::builtin();
    let suite = echobench_suite::default_suite(&plugins).unwrap();
    // Entries as a tuning leaves them: the suite's parameters plus searched values.
    let mut detectors = suite.detectors.clone();
    for d in &mut detectors {
        let extra: Vec<(String, ParamValue)> = match d.plugin.as_str() {
            "energy" => vec![("frame_s".into(), ParamValue::Real(0.0731234567891))],
            "os-cfar" => vec![
                ("guard".into(), ParamValue::Integer(3)),
                ("window".into(), ParamValue::Text("rect".into())),
            ],
            _ => Vec::new(),
        };
        d.params.extend(extra);
        let plugin = plugins.iter().find(|p| p.id() == d.plugin).unwrap();
        d.resolved =
            echobench_core::detector::Params::resolve(&d.plugin, plugin.params(), &d.params)
                .unwrap();
    }
    let flat = |path: &str| path.rsplit('/').next().unwrap_or(path).to_string();
    let yaml = echobench_tune::suite_file::tuned_suite_yaml(
        echobench_suite::DEFAULT_SUITE_FILE_NAME,
        echobench_suite::DEFAULT_SUITE_YAML,
        &detectors,
        &flat,
        "a header line\nand another",
    )
    .unwrap();
    assert!(yaml.starts_with("# a header line\n# and another\n"));
    let dir = std::env::temp_dir().join(format!("echobench-tune-yaml-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    for (name, text) in echobench_suite::DEFAULT_SUITE_SCENES.iter() {
        std::fs::write(dir.join(flat(name)), text).unwrap();
    }
    std::fs::write(dir.join("tuned.yaml"), &yaml).unwrap();
    let back = echobench_suite::load_suite_file(&dir.join("tuned.yaml"), &plugins);
    let _ = std::fs::remove_dir_all(&dir);
    let (back, _) = back.unwrap_or_else(|r| panic!("loads back: {r}\n{yaml}"));
    let ids = |s: &Suite| s.scenes.iter().map(|x| x.id.clone()).collect::<Vec<_>>();
    assert_eq!(ids(&back), ids(&suite));
    assert_eq!((back.seed, back.trials), (suite.seed, suite.trials));
    for (a, b) in back.detectors.iter().zip(&detectors) {
        assert_eq!(a, b);
    }
    assert_eq!(back.detectors.len(), detectors.len());
}

/// Shards tune every N-th detector entry; their parts merge into the summary of the whole
/// tuning, byte for byte, and into the same tuned entries (rooms left out included).
#[test]
fn parts_of_a_split_merge_into_the_whole_tuning() {
    use echobench_harness::runner::Shard;
    let mut suite = planted_suite(9, 8);
    let entry = suite.detectors[0].clone();
    suite.detectors = ["tone-a", "tone-b", "tone-c"]
        .iter()
        .map(|label| echobench_suite::DetectorEntry {
            label: label.to_string(),
            ..entry.clone()
        })
        .collect();
    let small = TuneSettings {
        configs: 4,
        leave_one_out: true,
        ..settings()
    };
    let (whole, whole_tuned) = tune(&suite, &plugins(), &small, &|_| {}).unwrap();
    let mut parts = Vec::new();
    let mut entries = Vec::new();
    // Given in reverse: the merge puts the rows back in suite order.
    for index in [2, 1] {
        let shard = Shard { index, count: 2 };
        let part = echobench_tune::entries_of_shard(&suite, shard);
        assert!(part.detectors.len() < suite.detectors.len());
        let (mut summary, tuned) = tune(&part, &plugins(), &small, &|_| {}).unwrap();
        summary.shards = vec![shard];
        parts.push(summary);
        entries.extend(tuned.detectors);
    }
    let merged = echobench_tune::merge_parts(&suite, parts.clone()).unwrap();
    assert_eq!(
        echobench_tune::summary_json(&merged).unwrap(),
        echobench_tune::summary_json(&whole).unwrap()
    );
    entries.sort_by_key(|e| suite.detectors.iter().position(|d| d.label == e.label));
    assert_eq!(entries, whole_tuned.detectors);
    // A missing shard is refused.
    let error = echobench_tune::merge_parts(&suite, parts[..1].to_vec()).unwrap_err();
    assert!(error.to_string().contains("give every shard"), "{error}");
}
