//! Rare events: the false alarms of something that happens a few times a day (a door
//! swinging, air conditioning starting, a vehicle passing a window), which a room's steady
//! noise does not contain and its tail fit cannot foresee.
//!
//! # Design decision: a rate is occurrences times a probability
//!
//! A suite marks a nuisance scene as a rare event with `occurrences_per_day`, and writes the
//! scene so that each trial holds one occurrence. The runner scores every test trial as usual
//! but keeps its false alarms per trial only (no exposure, no part in the pooled rates or in
//! calibration). At each operating threshold the probability that one occurrence raises a
//! false alarm is the fraction of occurrences that raised at least one, with its exact
//! (Clopper–Pearson) 95 % interval; the event adds `occurrences_per_day × p` false alarms per
//! day. Counting occurrences that raise *at least one* alarm (not all their alarms) follows
//! the alarm logic's hold: the alarms of one occurrence within the hold are one episode to
//! whoever is woken by it; an occurrence long enough to re-trigger after the hold is rare and
//! would be under-counted, which the README says.
//!
//! The product's rate with its events is the steady rate (the test trials of its rooms) plus
//! every event's contribution; the interval adds the ends of the 95 % intervals, a
//! conservative combination and not a joint confidence statement.

use crate::runner::DetectorTally;
use crate::summary::Estimate;
use serde::{Deserialize, Serialize};

/// Confidence of every interval here.
const CONFIDENCE: f64 = 0.95;

/// One rare event at one operating threshold.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct EventRate {
    /// The event's scene (`scene @ value` when swept).
    pub scene: String,
    /// Declared occurrences per day.
    pub occurrences_per_day: f64,
    /// Occurrences simulated (test trials).
    pub occurrences: u64,
    /// Of those, the ones that raised at least one false alarm.
    pub alarmed: u64,
    /// Probability that one occurrence raises a false alarm, Clopper–Pearson 95 % interval.
    pub probability: Estimate,
    /// False alarms per day it adds: occurrences per day × the probability (and its ends).
    pub per_day: Estimate,
}

/// A detector's rare events at one operating threshold, and the product's rate with them.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RareEvents {
    /// Each event.
    pub events: Vec<EventRate>,
    /// The steady rate (test trials of the rooms), per day.
    pub steady_per_day: Estimate,
    /// The events' contributions summed, per day (interval ends summed).
    pub events_per_day: Estimate,
    /// Steady plus events, per day (interval ends summed: conservative, not joint).
    pub total_per_day: Estimate,
}

fn sum(a: &Estimate, b: &Estimate) -> Estimate {
    let add = |x: Option<f64>, y: Option<f64>| Some(x? + y?);
    Estimate {
        value: add(a.value, b.value),
        low: add(a.low, b.low),
        high: add(a.high, b.high),
    }
}

fn scaled(e: &Estimate, factor: f64) -> Estimate {
    Estimate {
        value: e.value.map(|v| v * factor),
        low: e.low.map(|v| v * factor),
        high: e.high.map(|v| v * factor),
    }
}

/// The rare events of `detector` at operating point `o`, given the steady test rate per hour
/// there; `None` when the suite declares no rare event for the detector's product.
pub fn at_operating_point(
    detector: &DetectorTally,
    o: usize,
    steady_per_hour: &Estimate,
) -> Option<RareEvents> {
    let events: Vec<EventRate> = detector
        .variants
        .iter()
        .filter_map(|v| {
            let occurrences_per_day = v.occurrences_per_day?;
            let trials = &v.operating.get(o)?.trials;
            let occurrences = trials.len() as u64;
            let alarmed = trials.iter().filter(|t| t.false_alarms > 0).count() as u64;
            let probability =
                match echobench_stats::clopper_pearson_interval(alarmed, occurrences, CONFIDENCE) {
                    Ok(interval) => Estimate {
                        value: Some(alarmed as f64 / occurrences as f64),
                        low: Some(interval.low),
                        high: Some(interval.high),
                    },
                    // No occurrence scored (every trial failed, or a shard without any).
                    Err(_) => Estimate {
                        value: None,
                        low: None,
                        high: None,
                    },
                };
            Some(EventRate {
                scene: crate::runner::room_name(&v.scene, v.sweep_value.as_deref()),
                occurrences_per_day,
                occurrences,
                alarmed,
                per_day: scaled(&probability, occurrences_per_day),
                probability,
            })
        })
        .collect();
    if events.is_empty() {
        return None;
    }
    let zero = Estimate {
        value: Some(0.0),
        low: Some(0.0),
        high: Some(0.0),
    };
    let events_per_day = events.iter().fold(zero, |acc, e| sum(&acc, &e.per_day));
    let steady_per_day = scaled(steady_per_hour, 24.0);
    Some(RareEvents {
        total_per_day: sum(&steady_per_day, &events_per_day),
        steady_per_day,
        events_per_day,
        events,
    })
}
