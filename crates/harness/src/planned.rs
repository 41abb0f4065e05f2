//! A run's detectors planned once per stream shape, with the states each worker thread
//! keeps between trials.
//!
//! **The design decision: plan once per (detector, stream shape), one state per worker
//! thread, reset between trials.** A plan (FFT plans, windows, tables) depends only on a
//! detector's parameters and the stream's shape (sample rate, channels, ADC bits, carrier),
//! so it is made the first time a trial of that shape needs it and then shared by every
//! thread. Each thread starts its own state from the plan, and after a trial resets that
//! state and keeps it for its next trial of the same shape. A state that panicked, failed
//! or panicked in `reset` is dropped, not kept: the thread's next trial starts a fresh one.
//! A reset state repeats a fresh state's scores bit for bit (the conformance kit's `reset`
//! rule), so which thread runs which trial cannot move a result.

use crate::runner::RunDetector;
use echobench_core::detector::{panic_message, Detector, DetectorPlan};
use echobench_core::StreamInfo;
use std::collections::HashMap;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::{Arc, Mutex, MutexGuard};
use std::thread::ThreadId;

/// A stream shape as a map key (`StreamInfo` holds floats: compared here by their bits).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
struct Shape {
    sample_rate_bits: u64,
    channels: usize,
    adc_bits: u8,
    carrier_bits: u64,
}

impl Shape {
    fn of(info: &StreamInfo) -> Shape {
        Shape {
            sample_rate_bits: info.sample_rate_hz.to_bits(),
            channels: info.channels.count(),
            adc_bits: info.adc_bits,
            carrier_bits: info.carrier_hz.to_bits(),
        }
    }
}

/// Plans by (detector index, stream shape); a refusal or a panic is kept as its message.
type Plans = HashMap<(usize, Shape), Result<Arc<dyn DetectorPlan>, String>>;

/// Idle states by (thread, detector index, stream shape).
type Idle = HashMap<(ThreadId, usize, Shape), Box<dyn Detector>>;

/// The plans and idle states of one run's detectors.
pub(crate) struct PlannedDetectors<'r> {
    detectors: &'r [RunDetector],
    /// Plans by (detector index, stream shape); a refusal or a panic is kept as its message,
    /// reported for every trial of that shape as a build error was.
    plans: Mutex<Plans>,
    /// Idle states by (thread, detector index, stream shape), each reset after its last trial.
    idle: Mutex<Idle>,
}

/// The map behind `mutex`; a panic while it was held (only a plugin's, caught inside) cannot
/// leave it half-changed, so a poisoned lock is taken as it is.
fn lock<T>(mutex: &Mutex<T>) -> MutexGuard<'_, T> {
    mutex
        .lock()
        .unwrap_or_else(|poisoned| poisoned.into_inner())
}

impl<'r> PlannedDetectors<'r> {
    /// Nothing planned yet for `detectors`.
    pub(crate) fn new(detectors: &'r [RunDetector]) -> Self {
        PlannedDetectors {
            detectors,
            plans: Mutex::new(HashMap::new()),
            idle: Mutex::new(HashMap::new()),
        }
    }

    /// The run's detectors, in suite order.
    pub(crate) fn detectors(&self) -> &'r [RunDetector] {
        self.detectors
    }

    /// A state of detector `index` for a stream like `info`, at the start of a trial: this
    /// thread's idle state of that shape, or one started from the plan (planned now if this
    /// is the shape's first trial).
    ///
    /// # Errors
    /// The plan's refusal, or the panic of `plan` or `start`, as a message.
    pub(crate) fn take(
        &self,
        index: usize,
        info: &StreamInfo,
    ) -> Result<Box<dyn Detector>, String> {
        let shape = Shape::of(info);
        let key = (std::thread::current().id(), index, shape);
        if let Some(state) = lock(&self.idle).remove(&key) {
            return Ok(state);
        }
        let plan = self.plan(index, info, shape)?;
        catch_unwind(AssertUnwindSafe(|| plan.start()))
            .map_err(|p| format!("{} in `start`", panic_message(p)))
    }

    /// Resets `state` (of detector `index`, for streams like `info`) after a trial and keeps
    /// it for this thread's next trial of that shape; a state whose reset panics is dropped.
    pub(crate) fn give_back(&self, index: usize, info: &StreamInfo, mut state: Box<dyn Detector>) {
        if catch_unwind(AssertUnwindSafe(|| state.reset())).is_ok() {
            let key = (std::thread::current().id(), index, Shape::of(info));
            lock(&self.idle).insert(key, state);
        }
    }

    /// The plan of detector `index` for `shape`, made on first use. Planning holds the lock,
    /// so two threads that need the same new plan make it once.
    fn plan(
        &self,
        index: usize,
        info: &StreamInfo,
        shape: Shape,
    ) -> Result<Arc<dyn DetectorPlan>, String> {
        let mut plans = lock(&self.plans);
        plans
            .entry((index, shape))
            .or_insert_with(|| {
                let d = &self.detectors[index];
                match catch_unwind(AssertUnwindSafe(|| d.plugin.plan(&d.params, info))) {
                    Ok(Ok(plan)) => Ok(plan),
                    Ok(Err(e)) => Err(e.to_string()),
                    Err(p) => Err(panic_message(p)),
                }
            })
            .clone()
    }
}
