//! The runner plans each detector once per stream shape, starts at most one state per worker
//! thread and shape, and resets a state between the trials it runs.

use echobench_core::detector::{
    Detector, DetectorFailure, DetectorPlan, DetectorPlugin, ParamError, ParamSpec, Params, Samples,
};
use echobench_core::{FrameScore, StreamInfo};
use echobench_harness::runner::{resolve_detectors, run_suite};
use echobench_suite::{load_suite_text, InlineOnly};
use std::collections::BTreeSet;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::{Arc, Mutex};

/// What the counting plugin saw: plans made (with their sample rates), states started,
/// resets, and trials (a state's first block after `start` or `reset`).
#[derive(Default)]
struct Counts {
    plans: AtomicUsize,
    planned_rates: Mutex<Vec<u64>>,
    starts: AtomicUsize,
    resets: AtomicUsize,
    trials: AtomicUsize,
    /// A state fed a second trial without a reset in between (its sample count ran past
    /// the trial's length).
    unreset_reuse: AtomicUsize,
}

/// Scores the mean square of each 100-sample frame, and counts what the runner does with it.
struct CountingPlugin(Arc<Counts>);

struct CountingPlan {
    counts: Arc<Counts>,
    trial_samples: u64,
}

struct CountingState {
    counts: Arc<Counts>,
    trial_samples: u64,
    consumed: u64,
    sum: f64,
    fresh: bool,
}

static NO_PARAMS: [ParamSpec; 0] = [];

impl DetectorPlugin for CountingPlugin {
    fn id(&self) -> &'static str {
        "counting"
    }
    fn about(&self) -> &'static str {
        "counts plans, states, resets and trials"
    }
    fn params(&self) -> &'static [ParamSpec] {
        &NO_PARAMS
    }
    fn plan(&self, _: &Params, info: &StreamInfo) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        self.0.plans.fetch_add(1, Ordering::SeqCst);
        self.0
            .planned_rates
            .lock()
            .unwrap()
            .push(info.sample_rate_hz as u64);
        Ok(Arc::new(CountingPlan {
            counts: self.0.clone(),
            // Every scene below lasts 4 s.
            trial_samples: (4.0 * info.sample_rate_hz) as u64,
        }))
    }
    fn check(&self, _: &Params, _: &StreamInfo) -> Result<(), ParamError> {
        Ok(())
    }
}

impl DetectorPlan for CountingPlan {
    fn start(&self) -> Box<dyn Detector> {
        self.counts.starts.fetch_add(1, Ordering::SeqCst);
        Box::new(CountingState {
            counts: self.counts.clone(),
            trial_samples: self.trial_samples,
            consumed: 0,
            sum: 0.0,
            fresh: true,
        })
    }
}

impl Detector for CountingState {
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        if self.fresh {
            self.counts.trials.fetch_add(1, Ordering::SeqCst);
            self.fresh = false;
        }
        for &x in block.values() {
            self.sum += f64::from(x) * f64::from(x);
            self.consumed += 1;
            if self.consumed.is_multiple_of(100) {
                out.push(FrameScore {
                    end_sample: self.consumed,
                    value: self.sum / 100.0,
                });
                self.sum = 0.0;
            }
        }
        if self.consumed > self.trial_samples {
            self.counts.unreset_reuse.fetch_add(1, Ordering::SeqCst);
        }
        Ok(())
    }
    fn reset(&mut self) {
        self.counts.resets.fetch_add(1, Ordering::SeqCst);
        self.consumed = 0;
        self.sum = 0.0;
        self.fresh = true;
    }
}

/// Two products, one room each, at two sample rates: two stream shapes in one run.
const SUITE: &str = "\
name: plans
seed: 5
trials: 6
calibration_trials: 4
products:
  - name: slow-module
    scenes:
      - id: slow-room
        label: nuisance
        scene:
          duration_s: 4
          sensor: {position_m: [0, 0, 2.3], carrier_hz: 2.45e9, sample_rate_hz: 1000, front_end: {high_pass_hz: [0.5], low_pass_hz: [100, 100], gain_db: 60, rails_v: [0, 3.3]}, adc: {bits: 12, full_scale_v: 3.3}}
          coverage: {range_m: 10}
          environment: {white_noise_v_per_rthz: 30e-9, flicker_corner_hz: 500}
  - name: fast-module
    scenes:
      - id: fast-room
        label: nuisance
        scene:
          duration_s: 4
          sensor: {position_m: [0, 0, 2.3], carrier_hz: 2.45e9, sample_rate_hz: 2000, front_end: {high_pass_hz: [0.5], low_pass_hz: [100, 100], gain_db: 60, rails_v: [0, 3.3]}, adc: {bits: 12, full_scale_v: 3.3}}
          coverage: {range_m: 10}
          environment: {white_noise_v_per_rthz: 30e-9, flicker_corner_hz: 500}
detectors:
  - plugin: counting
alarm: {hold_s: 1}
scoring: {early_s: 0.5, late_s: 2, target_false_alarms_per_hour: [100]}
";

#[test]
fn one_plan_per_stream_shape_one_state_per_thread_and_reset_between_trials() {
    let counts = Arc::new(Counts::default());
    let plugins: Vec<Arc<dyn DetectorPlugin>> = vec![Arc::new(CountingPlugin(counts.clone()))];
    let (suite, _) = load_suite_text("plans.yaml", SUITE, &InlineOnly, &plugins)
        .unwrap_or_else(|report| panic!("{report}"));
    let detectors = resolve_detectors(&suite, &plugins).unwrap();
    let threads = 2;
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap();
    let (tallies, _) = pool
        .install(|| run_suite(&suite, &detectors, None, &|_| {}))
        .unwrap();
    assert!(tallies.detectors[0].failures.is_empty());

    let plans = counts.plans.load(Ordering::SeqCst);
    let starts = counts.starts.load(Ordering::SeqCst);
    let resets = counts.resets.load(Ordering::SeqCst);
    let trials = counts.trials.load(Ordering::SeqCst);
    // The suite loader checks every stream but plans none: the plans are the runner's,
    // one per shape for the whole run.
    assert_eq!(plans, 2, "one plan per stream shape");
    let rates: BTreeSet<u64> = counts
        .planned_rates
        .lock()
        .unwrap()
        .iter()
        .copied()
        .collect();
    assert_eq!(rates, BTreeSet::from([1000, 2000]));
    // Calibration and test together run at least 2 rooms × (4 + 6) trials.
    assert!(trials >= 2 * (4 + 6), "{trials} trials");
    assert!(
        (1..=threads * 2).contains(&starts),
        "{starts} states started for {threads} threads and 2 shapes"
    );
    // Every trial ends with a reset (the state is kept for the thread's next trial), and
    // no state ever ran into a second trial without one.
    assert_eq!(resets, trials, "a reset after every trial");
    assert_eq!(counts.unreset_reuse.load(Ordering::SeqCst), 0);
    assert!(starts < trials, "states are reused across trials");
}
