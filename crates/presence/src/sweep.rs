//! The hold-time trade-off: the same condition frames at several holds.
//!
//! **Why it is monotone** (no lock-out, min-on no longer than any hold). Then the output is
//! `on_H(t) ⇔ ∃ condition frame t_k ≤ t < t_k + H`, so `H ≤ H'` gives `on_H ⊆ on_H'`:
//! false-on time `|on ∩ empty|` cannot shrink. The triggers are the condition frames for
//! every hold, so each occupied period's acquisition `α` and its being missed do not depend
//! on `H`. Let `C` be an off-stretch of `on_H` inside `[α, b)`; it starts at a switch-off, so
//! the output is on (under `H`, hence under `H'`) just before it. If some `x ∈ C` is on under
//! `H'`, its frame `t_k ≤ x` is on under `H` and so lies before `C`, and `[t_k, x]` is on
//! under `H'`: what stays off of `C` under `H'` is at most one final piece of it. So each
//! `H'` drop-out lies in its own `H` drop-out and is no longer: the number of drop-outs, their
//! total and the longest cannot grow. (Only the total: a drop-out that shrinks from its start
//! may begin while the person is still instead of moving, so the moving/still split can move.)
//! With a lock-out or a longer min-on, a longer hold moves later switch-ons and the curve
//! need not be monotone (the tests show both).

use crate::{score_trial, ConditionFrame, PresenceError, PresenceTally, PresenceTruth, Timer};

/// One trial's input to the sweep.
#[derive(Debug, Clone, Copy)]
pub struct PresenceTrial<'a> {
    /// Condition frames in time order.
    pub frames: &'a [ConditionFrame],
    /// The trial's truth.
    pub truth: &'a PresenceTruth,
}

/// One point of the hold-time trade-off: the timer used and the trials' summed tally.
#[derive(Debug, Clone, PartialEq)]
pub struct TradeoffPoint {
    /// The timer at this hold.
    pub timer: Timer,
    /// All trials' tallies at this hold, merged.
    pub tally: PresenceTally,
}

impl TradeoffPoint {
    /// Drop-outs per occupied hour (`None` without occupied time).
    pub fn dropouts_per_occupied_h(&self) -> Option<f64> {
        let hours = self.tally.occupied_ns() as f64 / 3.6e12;
        (hours > 0.0).then(|| self.tally.dropouts() as f64 / hours)
    }

    /// False-on time per day of empty time, seconds per day (`None` without empty time).
    pub fn false_on_s_per_day(&self) -> Option<f64> {
        let days = self.tally.empty_ns as f64 / 8.64e13;
        (days > 0.0).then(|| self.tally.false_on_ns as f64 / 1e9 / days)
    }
}

/// Scores every trial at each hold of `holds_s` (other timer settings from `timer`), in the
/// order given.
///
/// # Errors
/// A hold that [`Timer::new`] refuses, or frames out of order.
pub fn hold_sweep(
    trials: &[PresenceTrial<'_>],
    timer: &Timer,
    holds_s: &[f64],
) -> Result<Vec<TradeoffPoint>, PresenceError> {
    holds_s
        .iter()
        .map(|&hold_s| {
            let timer = timer.with_hold_ns(Timer::new(hold_s)?.hold_ns())?;
            let mut tally = PresenceTally::default();
            for trial in trials {
                tally.merge(&score_trial(trial.frames, trial.truth, &timer)?);
            }
            Ok(TradeoffPoint { timer, tally })
        })
        .collect()
}
