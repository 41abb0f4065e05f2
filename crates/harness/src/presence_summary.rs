//! The verdict of a presence product: what its output pin did, per operating point, pooled
//! and per scene, each rate with its interval, and the hold-time trade-off.
//!
//! The figures are defined (and computed exactly, in whole nanoseconds) by
//! `echobench_presence`; this module only turns its tallies into rates with intervals
//! (`echobench-render` prints them). False switch-ons and drop-outs carry exact Garwood
//! intervals (counts over time); false-on time carries the gamma interval of a weighted
//! Poisson sum (Fay & Feuer 1997), because it is a sum of episodes of unequal length, not a
//! count.

use crate::runner::{DetectorTally, VariantTally};
use crate::summary::{Estimate, CONFIDENCE};
use echobench_presence::{LatencyQuantile, OccupiedKind, PresenceTally, RateEstimate, Timer};
use echobench_suite::PresenceOutput;
use serde::{Deserialize, Serialize};

/// A latency quantile: seconds, or `null` with `not_reached` when it falls among the
/// entries (exits) after which the output never switched on (off) in the trial.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Quantile {
    /// Seconds, when observed.
    pub seconds: Option<f64>,
    /// The quantile falls among the censored values.
    pub not_reached: bool,
}

impl Quantile {
    fn from(q: Result<LatencyQuantile, echobench_presence::PresenceError>) -> Quantile {
        match q {
            Ok(LatencyQuantile::Observed(seconds)) => Quantile {
                seconds: Some(seconds),
                not_reached: false,
            },
            Ok(LatencyQuantile::NotReached) => Quantile {
                seconds: None,
                not_reached: true,
            },
            _ => Quantile {
                seconds: None,
                not_reached: false,
            },
        }
    }

    /// `1.23 s`, `not reached` or `—`.
    pub fn text(&self) -> String {
        match (self.seconds, self.not_reached) {
            (Some(s), _) => format!("{s:.2} s"),
            (None, true) => "not reached".into(),
            (None, false) => "—".into(),
        }
    }
}

/// What the output pin did on a slice of the test trials.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PresenceFigures {
    /// Empty time, hours.
    pub empty_hours: f64,
    /// Occupied and moving time, hours.
    pub moving_hours: f64,
    /// Occupied and still time, hours.
    pub still_hours: f64,
    /// False-on time per day of empty time, seconds per day (Fay & Feuer gamma interval).
    pub false_on_s_per_day: Estimate,
    /// Share of empty time the output was on.
    pub false_on_fraction: Option<f64>,
    /// False switch-ons per day of empty time (Garwood).
    pub false_switch_ons_per_day: Estimate,
    /// False switch-ons counted.
    pub false_switch_ons: u64,
    /// Drop-outs per occupied hour, all (Garwood).
    pub dropouts_per_occupied_hour: Estimate,
    /// Drop-outs per hour of moving occupancy (Garwood).
    pub dropouts_per_moving_hour: Estimate,
    /// Drop-outs per hour of still occupancy (Garwood).
    pub dropouts_per_still_hour: Estimate,
    /// Drop-outs counted (moving, still).
    pub dropouts: (u64, u64),
    /// Longest drop-out, s.
    pub longest_dropout_s: f64,
    /// Occupied periods with no alarm at all (each also one drop-out).
    pub missed_periods: u64,
    /// Occupied periods.
    pub occupied_periods: u64,
    /// Entries (occupied periods starting inside a trial).
    pub entries: u64,
    /// Median switch-on latency after an entry.
    pub switch_on_median: Quantile,
    /// 90th percentile of the switch-on latency.
    pub switch_on_p90: Quantile,
    /// Exits (occupied periods ending inside a trial).
    pub exits: u64,
    /// Median time to switch off after the room empties, over the exits at which the
    /// output was on.
    pub switch_off_median: Quantile,
    /// 90th percentile of the time to switch off, over the exits at which it was on.
    pub switch_off_p90: Quantile,
    /// Exits at which the output was already off (the person was lost before leaving;
    /// their drop-out is counted).
    pub exits_already_off: u64,
}

fn estimate(rate: Result<RateEstimate, echobench_presence::PresenceError>) -> Estimate {
    match rate {
        Ok(r) => Estimate {
            value: Some(r.estimate),
            low: Some(r.interval.low),
            high: Some(r.interval.high),
        },
        Err(_) => Estimate {
            value: None,
            low: None,
            high: None,
        },
    }
}

impl PresenceFigures {
    /// The figures of a tally, for the product's timer.
    pub fn of(tally: &PresenceTally, timer: &Timer) -> PresenceFigures {
        PresenceFigures {
            empty_hours: tally.empty_ns as f64 / 3.6e12,
            moving_hours: tally.moving_ns as f64 / 3.6e12,
            still_hours: tally.still_ns as f64 / 3.6e12,
            false_on_s_per_day: estimate(tally.false_on_s_per_day(timer, CONFIDENCE)),
            false_on_fraction: (tally.empty_ns > 0)
                .then(|| tally.false_on_ns as f64 / tally.empty_ns as f64),
            false_switch_ons_per_day: estimate(tally.false_switch_ons_per_day(CONFIDENCE)),
            false_switch_ons: tally.false_switch_ons,
            dropouts_per_occupied_hour: estimate(
                tally.dropouts_per_occupied_h(OccupiedKind::All, CONFIDENCE),
            ),
            dropouts_per_moving_hour: estimate(
                tally.dropouts_per_occupied_h(OccupiedKind::Moving, CONFIDENCE),
            ),
            dropouts_per_still_hour: estimate(
                tally.dropouts_per_occupied_h(OccupiedKind::Still, CONFIDENCE),
            ),
            dropouts: (tally.dropouts_moving, tally.dropouts_still),
            longest_dropout_s: tally.longest_dropout_ns as f64 * 1e-9,
            missed_periods: tally.missed_periods,
            occupied_periods: tally.occupied_periods,
            entries: tally.entries,
            switch_on_median: Quantile::from(tally.switch_on_latency_quantile(0.5)),
            switch_on_p90: Quantile::from(tally.switch_on_latency_quantile(0.9)),
            exits: tally.exits,
            switch_off_median: Quantile::from(tally.switch_off_quantile_when_on(0.5)),
            switch_off_p90: Quantile::from(tally.switch_off_quantile_when_on(0.9)),
            exits_already_off: tally.exits_already_off(),
        }
    }
}

/// One scene variant's pin at an operating point.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PresenceScene {
    /// Scene id.
    pub scene: String,
    /// Swept value, if swept.
    pub sweep_value: Option<String>,
    /// `target` or `nuisance`.
    pub label: String,
    /// The figures.
    #[serde(flatten)]
    pub figures: PresenceFigures,
}

/// A presence product's detector at one operating point.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PresencePoint {
    /// The false switch-ons per day of empty time the threshold was chosen for.
    pub budget_per_day: f64,
    /// The threshold.
    pub threshold: f64,
    /// All test trials pooled.
    #[serde(flatten)]
    pub figures: PresenceFigures,
    /// The rooms (nuisance scenes) pooled: nobody comes in, so every moment the output is on
    /// is false, and none of it is the hold running on after someone left.
    pub rooms: PresenceFigures,
    /// The target scenes pooled: drop-outs, switch-on and switch-off times of real visits.
    pub visits: PresenceFigures,
    /// Per scene variant, in suite order.
    pub by_scene: Vec<PresenceScene>,
    /// Each room's calibration at the threshold: (room, false switch-ons per day of empty
    /// time, Garwood interval).
    pub calibration_rooms: Vec<(String, Estimate)>,
    /// The room whose calibration set the threshold (worst-room rule).
    pub limiting_room: Option<String>,
}

/// One hold time of the trade-off curve, all test trials pooled.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TradeoffRow {
    /// Hold, s.
    pub hold_s: f64,
    /// Whether it is the product's own hold.
    pub product_hold: bool,
    /// The figures at that hold.
    #[serde(flatten)]
    pub figures: PresenceFigures,
}

/// What a presence product's output did with one detector.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PresenceVerdict {
    /// The product's timer and budgets.
    pub output: PresenceOutput,
    /// One entry per budget.
    pub points: Vec<PresencePoint>,
    /// The hold-time trade-off at the first operating point's threshold.
    pub tradeoff: Vec<TradeoffRow>,
}

/// The presence verdict of one detector on a presence product (`None` for intrusion
/// products, or a timer the scorer refuses, which the suite loader refuses first).
pub fn presence_verdict(d: &DetectorTally) -> Option<PresenceVerdict> {
    let output = d.presence_output.as_ref()?;
    let timer = output.timer().ok()?;
    let pooled_where =
        |label: Option<&str>, pick: &dyn Fn(&VariantTally) -> Option<&PresenceTally>| {
            let mut sum = PresenceTally::default();
            for v in d
                .variants
                .iter()
                .filter(|v| label.is_none_or(|l| v.label == l))
            {
                if let Some(t) = pick(v) {
                    sum.merge(t);
                }
            }
            sum
        };
    let pooled = |pick: &dyn Fn(&VariantTally) -> Option<&PresenceTally>| pooled_where(None, pick);
    let points = d
        .operating
        .iter()
        .enumerate()
        .map(|(o, op)| PresencePoint {
            budget_per_day: op.target_per_hour * 24.0,
            threshold: op.threshold,
            figures: PresenceFigures::of(&pooled(&|v| v.presence.get(o)), &timer),
            rooms: PresenceFigures::of(
                &pooled_where(Some("nuisance"), &|v| v.presence.get(o)),
                &timer,
            ),
            visits: PresenceFigures::of(
                &pooled_where(Some("target"), &|v| v.presence.get(o)),
                &timer,
            ),
            by_scene: d
                .variants
                .iter()
                .filter_map(|v| {
                    Some(PresenceScene {
                        scene: v.scene.clone(),
                        sweep_value: v.sweep_value.clone(),
                        label: v.label.clone(),
                        figures: PresenceFigures::of(v.presence.get(o)?, &timer),
                    })
                })
                .collect(),
            calibration_rooms: op
                .rooms
                .iter()
                .map(|r| {
                    (
                        r.name(),
                        Estimate::rate(r.false_alarms, r.exposure_ns as f64 / 8.64e13),
                    )
                })
                .collect(),
            limiting_room: op.limiting_room.clone(),
        })
        .collect();
    let tradeoff = output
        .hold_sweep_s
        .iter()
        .enumerate()
        .filter_map(|(h, &hold_s)| {
            let swept = Timer::new(hold_s)
                .and_then(|t| timer.with_hold_ns(t.hold_ns()))
                .ok()?;
            let tally = pooled(&|v| v.hold_sweep.first().and_then(|row| row.get(h)));
            Some(TradeoffRow {
                hold_s,
                product_hold: hold_s == output.hold_s,
                figures: PresenceFigures::of(&tally, &swept),
            })
        })
        .collect();
    Some(PresenceVerdict {
        output: output.clone(),
        points,
        tradeoff,
    })
}

/// A budget per day as people say it: `24/day` or `1/day`.
pub fn budget_label(per_day: f64) -> String {
    if per_day >= 1.0 && per_day.fract() == 0.0 {
        format!("{per_day:.0}/day")
    } else {
        format!("{per_day}/day")
    }
}
