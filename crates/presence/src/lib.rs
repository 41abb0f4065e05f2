//! Presence scoring: what a product's *output pin* does, judged against who is in the room.
//!
//! Many modules never raise an alarm: any alarm restarts a retrigger timer, and the output
//! (a light, a fan) is on while the timer runs. This crate computes, exactly, what such a
//! product is judged on: time falsely on while the room is empty, the output dropping while
//! someone is present, how long the output takes to come on after an entry and to go off after
//! the room empties, and how the hold time trades drop-outs against false-on time.
//!
//! # Design decision: whole nanoseconds from the door on
//!
//! Frame times, truth boundaries and timer settings are rounded to whole nanoseconds once,
//! when they enter ([`condition_frames`], [`PresenceTruth::new`], [`Timer::new`]); every
//! comparison and sum after that is integer arithmetic. So "a retrigger exactly when the hold
//! runs out" is decided exactly (no tolerance as in the intrusion scoring), and the per-trial
//! [`PresenceTally`] adds across trials and shards exactly and in any order (its lists are kept
//! sorted, its maxima are maxima).
//!
//! # Conventions
//!
//! **Frames.** A score's `t_s` is the *end* of its decision frame: the decision exists from
//! that instant on, so the output can switch on no earlier than the first frame's end. The
//! per-frame *condition* is the intrusion scoring's: decision `score >= threshold` (NaN never
//! reaches a threshold), then M-of-N over the last N decisions, frames before the first
//! counting as false. It is re-implemented here in [`condition_frames`]; a caller that already
//! has the per-frame condition passes [`ConditionFrame`]s directly. A frame whose time is not
//! finite still enters the M-of-N window but is dropped afterwards (it cannot be placed);
//! frames outside `[0, duration]` are ignored by the pin; frames must be in time order.
//!
//! **Pin** ([`OutputPin::drive`]). All intervals are half-open, `[start, end)`. A condition
//! frame at `t` *triggers* the timer: if the output is on (`t <= expiry`: a retrigger at the
//! very instant the hold runs out keeps the output on, so holds that touch merge) the expiry
//! becomes `max(expiry, t + hold)`; if it is off and no lock-out runs, the output switches on
//! at `t` with expiry `t + max(hold, min_on)`. The output goes off at the expiry; a lock-out
//! then blocks switch-ons for frames at `t < off + lockout` (such frames are lost, not
//! remembered). Without min-on and lock-out this is `on(t) ⇔ ∃ condition frame t_k ≤ t <
//! t_k + hold`. The pin starts off with no lock-out (power-up), and on-intervals are clipped
//! to `[0, duration)`. The hold must be > 0.
//!
//! **Truth** ([`PresenceTruth`]). Segments `[start, end)` labelled [`Occupancy`] tile
//! `[0, duration)`; a boundary instant belongs to the later segment, so a switch-on at the
//! instant of an entry is not false, one at the instant the room empties is.
//!
//! **Metrics** ([`PresenceTally`], [`tally_pin`]), per trial:
//! - *false-on time*: `|on ∩ empty|`; a *false-on episode* is a connected piece of it
//!   (it starts with a false switch-on or with the output still on when the room empties:
//!   the hold after an exit is false-on time too, which is what the hold trade-off is about);
//! - *false switch-ons*: switch-ons at an empty instant;
//! - an *occupied period* `[a, b)` is a maximal run of occupied time; an *entry* is its start
//!   when `a > 0`, an *exit* its end when `b < duration`. Its *acquisition* `α` is the first
//!   trigger of the timer inside it (the detector has seen the person);
//! - *drop-outs*: the off-stretches of the output inside `[α, b)`, each charged to the
//!   occupancy (moving or still) at its start; a period with no trigger at all (`α` does not
//!   exist) is *missed* and counts as one drop-out, charged to the occupancy at `a`, lasting
//!   `b − a`. An output still running from before the entry that lapses before `α` is not a
//!   drop-out (the person had not been detected yet): it shows in the latency instead;
//! - *switch-on latency* after an entry: 0 when the output is on throughout `[a, α]` (a hold
//!   running since before the entry carries the person to the first trigger), else `α − a`.
//!   A missed period's latency is *censored* at `b − a` (the output did not come on before
//!   the room emptied, or the trial ended) and is kept in a separate list;
//! - *switch-off time* after an exit at `b`, with the room empty until `c`: 0 if the output is
//!   off at `b`, else the time to its first off instant, censored at `c − b` when the output
//!   is still on at `c` (a re-entry, or the trial's end).
//!
//! **Rates** ([`RateEstimate`]): false switch-ons per day of empty time and drop-outs per
//! occupied hour with exact Garwood intervals; false-on time per day of empty time with the
//! gamma interval of a weighted Poisson sum (Fay & Feuer 1997), see [`gamma_weighted_interval`].
//!
//! **Hold trade-off** ([`hold_sweep`]): the same condition frames at several holds. With no
//! lock-out and a min-on no longer than the hold, a longer hold never gives less false-on
//! time nor more drop-outs (see [`hold_sweep`] for the argument).
#![deny(missing_docs)]

mod condition;
mod grid;
mod pin;
mod rates;
mod score;
mod sweep;
mod truth;

pub use condition::{condition_frames, statistic_frames, ConditionFrame, MOfN, StatisticFrame};
pub use grid::false_switch_ons_at;
pub use pin::{OutputPin, Timer};
pub use rates::{gamma_weighted_interval, LatencyQuantile, OccupiedKind, RateEstimate};
pub use score::{score_trial, tally_pin, PresenceTally};
pub use sweep::{hold_sweep, PresenceTrial, TradeoffPoint};
pub use truth::{Occupancy, PresenceTruth, Segment};

use std::fmt;

/// Nanoseconds per second.
pub const NS_PER_S: i64 = 1_000_000_000;

/// Largest time accepted, seconds (about 31 years): sums of a few of these stay far inside
/// `i64` nanoseconds.
pub const MAX_TIME_S: f64 = 1e9;

/// Why a presence computation was refused.
#[derive(Debug, Clone, PartialEq)]
pub enum PresenceError {
    /// A parameter lies outside its domain.
    InvalidParameter {
        /// Which parameter.
        name: &'static str,
        /// The refused value.
        value: f64,
        /// What would have been accepted.
        allowed: &'static str,
    },
    /// A truth timeline does not tile `[0, duration]`.
    Timeline {
        /// What is wrong, with the segment's index.
        reason: String,
    },
    /// Condition frames go back in time.
    OutOfOrder {
        /// Index of the frame that goes back.
        index: usize,
        /// Its time, ns.
        t_ns: i64,
        /// The previous frame's time, ns.
        previous_ns: i64,
    },
    /// A statistic could not be computed (e.g. no exposure).
    Stats(echobench_stats::StatsError),
}

impl fmt::Display for PresenceError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            PresenceError::InvalidParameter {
                name,
                value,
                allowed,
            } => write!(f, "{name} = {value} is not valid: must be {allowed}"),
            PresenceError::Timeline { reason } => write!(f, "presence truth: {reason}"),
            PresenceError::OutOfOrder {
                index,
                t_ns,
                previous_ns,
            } => write!(
                f,
                "condition frame {index} at {t_ns} ns comes before the previous one at {previous_ns} ns"
            ),
            PresenceError::Stats(e) => write!(f, "{e}"),
        }
    }
}

impl std::error::Error for PresenceError {}

impl From<echobench_stats::StatsError> for PresenceError {
    fn from(e: echobench_stats::StatsError) -> Self {
        PresenceError::Stats(e)
    }
}

/// A time in seconds as whole nanoseconds (rounded to nearest), checked finite, `>= 0` and at
/// most [`MAX_TIME_S`].
pub(crate) fn seconds_to_ns(name: &'static str, seconds: f64) -> Result<i64, PresenceError> {
    if seconds.is_finite() && (0.0..=MAX_TIME_S).contains(&seconds) {
        Ok((seconds * 1e9).round() as i64)
    } else {
        Err(PresenceError::InvalidParameter {
            name,
            value: seconds,
            allowed: "finite, >= 0 and at most 1e9 s",
        })
    }
}
