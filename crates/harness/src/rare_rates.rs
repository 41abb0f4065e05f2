//! Rare false-alarm rates from the calibration rooms by tail extrapolation: per detector and
//! room, the declustered maxima of the alarm statistic are fitted with a generalized Pareto
//! tail (`echobench_tail`), giving a threshold with an interval for rates the calibration
//! time cannot reach by counting (one per day, week, month).
//!
//! # Design decision: per room, then the worst room
//!
//! Rooms differ in kind (a fan, a curtain, an empty lab), so their tails are fitted one by
//! one; the product's threshold for a rate is the highest room threshold, as the worst-room
//! rule asks of counted thresholds. Its interval is `[max of the lower ends, max of the upper
//! ends]`: the maximum of the rooms' thresholds is increasing in each of them, so the set of
//! maxima of values inside each room's interval spans exactly that range (a conservative
//! combination: it is not a joint confidence statement, and says so in the README). A room
//! whose fit fails its checks leaves the rate without an extrapolated threshold, and the
//! output names the room and why: the counted (brute-force) bound is then all there is.

use crate::runner::room_name;
use echobench_tail::{
    extrapolate, AlarmRule, Status, TailAccumulator, ThresholdRule, TrialDispersion,
};
use serde::{Deserialize, Serialize};

/// The rates reported for every detector, per hour: one per hour, day, week and month (30 days).
pub const REPORT_RATES_PER_HOUR: [f64; 4] = [1.0, 1.0 / 24.0, 1.0 / 168.0, 1.0 / 720.0];

/// Most exceedance frames an accumulator keeps per room and detector (its floor rises past
/// this): the tail fit needs the upper few hundred cluster maxima, not every frame.
pub const MAX_KEPT_FRAMES: usize = 4_000;

/// Candidate thresholds probed by the automatic choice: enough for the stability check to
/// see a trend, few enough that each room's fit stays in the tens of milliseconds (a choice
/// of ours; the tail crate's tests use 10).
const CANDIDATES: usize = 12;

/// A threshold for one rate in one room (or the product), with its interval.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RateThreshold {
    /// The false-alarm rate, per hour.
    pub rate_per_hour: f64,
    /// The threshold, when the tail gives one.
    pub threshold: Option<f64>,
    /// Lower end of its 95 % interval.
    pub low: Option<f64>,
    /// Upper end of its 95 % interval (may be `+inf`, written as `null`).
    pub high: Option<f64>,
    /// Why there is none, when there is none.
    pub note: Option<String>,
}

/// One room's tail fit for one detector.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RoomTail {
    /// Scene id.
    pub scene: String,
    /// Swept value, if swept.
    pub sweep_value: Option<String>,
    /// `fitted`, `too few clusters`, `no stable threshold` or
    /// `scores too coarse for a tail fit (…)` (with the lattice step found).
    pub status: String,
    /// Noise-only time fed to the fit, ns.
    pub exposure_ns: u64,
    /// The chosen threshold u of the peaks-over-threshold fit.
    pub fit_threshold: Option<f64>,
    /// Cluster maxima above u.
    pub exceedances: Option<u64>,
    /// Shape ξ of the fitted tail.
    pub xi: Option<f64>,
    /// Scale σ of the fitted tail.
    pub sigma: Option<f64>,
    /// The Anderson–Darling p-value of the fit (a table value or a bound).
    pub gof_p: Option<f64>,
    /// Thresholds for [`REPORT_RATES_PER_HOUR`] and the product's targets.
    pub thresholds: Vec<RateThreshold>,
    /// The fitted rate per hour against threshold with its 95 % band, from the fit threshold
    /// to the one-per-month threshold: (threshold, rate, low, high). Computed for the room
    /// that sets the product's one-per-day threshold only (what the report draws).
    #[serde(default)]
    pub band: Vec<(f64, f64, f64, f64)>,
    /// The threshold-stability table the fit threshold was chosen from (`echobench_tail`'s
    /// threshold module; Coles 2001, §4.3.4), one row per candidate u, ascending. Kept, like
    /// `band`, for the room that sets the product's one-per-day threshold only (the report
    /// draws it); empty for the others and without a table.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub stability: Vec<StabilityPoint>,
    /// The excesses over the fit threshold of the cluster maxima the drawn fit was made from,
    /// ascending, so that a reader can refit it (`echobench_tail::TailFit::from_excesses` with
    /// `fit_threshold` and `exposure_ns`) and read the rate, with its interval, at any
    /// threshold. Kept with `band` (the room that sets the one-per-day threshold); empty for
    /// the others.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub excesses: Vec<f64>,
    /// The trial-to-trial dispersion of the cluster counts above the fit threshold (Fisher's
    /// index-of-dispersion test) and the scale factor that widened the fit's intervals
    /// (`echobench_tail::dispersion`; docs/reference/statistics.md#s12). A reader refitting
    /// from `excesses` applies it with `TailFit::with_dispersion`. `None` without a fit.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dispersion: Option<TrialDispersion>,
    /// What was fitted: alarm clusters (declustered by the hold) or trial maxima (one per
    /// trial); [`fit_room`] fits both and keeps the one that is more cautious at the rarest
    /// rate (docs/reference/statistics.md#s13). A reader refitting from `excesses` declusters
    /// the same way.
    #[serde(default)]
    pub basis: Basis,
    /// Why this basis, and what the other one gave.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub basis_note: Option<String>,
    /// The room's largest alarm peaks counted, not fitted: entry `k` (from 0) is the highest
    /// level at which the calibration holds at least `k + 1` alarm clusters (`M₁`, `M₂`, …;
    /// docs/reference/statistics.md#s11), up to [`ALARM_PEAKS`] of them, exact at the
    /// statistic's own values.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub alarm_peaks: Vec<f64>,
}

/// How many of a room's largest alarm peaks [`RoomTail::alarm_peaks`] keeps.
pub const ALARM_PEAKS: usize = 5;

/// `M₁ … M_k` of `acc` (see [`RoomTail::alarm_peaks`]): the kept statistics are walked down
/// from the top, re-forming clusters at each level (one burst can hold two peaks a hold apart,
/// so the count is not read off a single low level).
fn alarm_peaks(acc: &TailAccumulator, k: usize) -> Vec<f64> {
    let mut levels = acc.kept_statistics();
    levels.dedup();
    let mut peaks = Vec::new();
    for v in levels {
        let Ok(count) = acc.alarm_count(v) else {
            break;
        };
        while (peaks.len() as u64) < count.min(k as u64) {
            peaks.push(v);
        }
        if peaks.len() >= k {
            break;
        }
    }
    peaks
}

/// What a room's tail fit was made of (docs/reference/statistics.md#s13).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Basis {
    /// Alarm clusters, declustered by the hold: the rate of alarms, right when trials are
    /// alike.
    #[default]
    Clusters,
    /// Each trial's largest statistic: the tail of the mixture over trials whose parameters
    /// differ; its rate counts trials with an alarm (at most the alarm rate, equal far out).
    TrialMaxima,
}

impl Basis {
    /// The accumulator this basis declusters.
    pub fn view(self, acc: &TailAccumulator) -> std::borrow::Cow<'_, TailAccumulator> {
        match self {
            Basis::Clusters => std::borrow::Cow::Borrowed(acc),
            Basis::TrialMaxima => std::borrow::Cow::Owned(acc.by_trial()),
        }
    }

    /// `alarm clusters` or `trial maxima`.
    pub fn label(self) -> &'static str {
        match self {
            Basis::Clusters => "alarm clusters",
            Basis::TrialMaxima => "trial maxima",
        }
    }
}

/// Fits one room's tail twice, on alarm clusters and on trial maxima, and reads the
/// thresholds of `rates_per_hour` from the one that is more cautious (the higher threshold)
/// at the rarest of them; a basis whose fit fails leaves the other
/// (docs/reference/statistics.md#s13).
///
/// Why both: clusters are the right units when every trial is like every other, and they
/// count every alarm; when a room's parameters are drawn per trial, the far tail belongs to
/// the worst trials, which a fit dominated by the many ordinary clusters of a short run
/// under-states, while trial maxima are independent, identically distributed draws of the
/// mixture. Each can be optimistic where the other is not (trial maxima count a trial with
/// two alarms once), so the more cautious of the two is kept, as the worst room is.
pub fn fit_room(
    scene: &str,
    sweep_value: Option<&str>,
    acc: &TailAccumulator,
    rates_per_hour: &[f64],
) -> RoomTail {
    let clusters = fit_declustered(scene, sweep_value, acc, rates_per_hour);
    let trials = fit_declustered(scene, sweep_value, &acc.by_trial(), rates_per_hour);
    let rarest = rates_per_hour.iter().copied().fold(f64::INFINITY, f64::min);
    let at_rarest = |room: &RoomTail| {
        room.thresholds
            .iter()
            .find(|t| t.rate_per_hour == rarest)
            .and_then(|t| t.threshold)
    };
    let describe = |room: &RoomTail| match at_rarest(room) {
        Some(t) => format!("{} gave {t:.6} at {rarest:.3e}/h", room.basis.label()),
        None => format!("{}: {}", room.basis.label(), room.status),
    };
    let (mut kept, other) = match (at_rarest(&clusters), at_rarest(&trials)) {
        (Some(c), Some(t)) if t > c => (trials, clusters),
        (None, Some(_)) => (trials, clusters),
        _ => (clusters, trials),
    };
    kept.basis_note = Some(format!("kept {}; {}", kept.basis.label(), describe(&other)));
    kept.alarm_peaks = alarm_peaks(acc, ALARM_PEAKS);
    kept
}

/// One candidate threshold of a room's stability table, as the report draws it: above a
/// valid threshold the shape ξ and the modified scale σ* = σ − ξu stay constant within their
/// intervals.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct StabilityPoint {
    /// The candidate threshold u.
    pub threshold: f64,
    /// Cluster maxima above u.
    pub exceedances: u64,
    /// ξ and its 95 % profile-likelihood interval `(value, low, high)` (`high` `None`:
    /// unbounded); `None` without a regular fit here.
    pub xi: Option<(f64, f64, Option<f64>)>,
    /// σ* and its 95 % delta-method interval, as `xi`.
    pub modified_scale: Option<(f64, f64, Option<f64>)>,
    /// Whether this is the chosen fit threshold.
    pub chosen: bool,
}

impl RoomTail {
    /// `scene` or `scene @ value`.
    pub fn name(&self) -> String {
        room_name(&self.scene, self.sweep_value.as_deref())
    }
}

/// A fresh accumulator for one room and detector.
///
/// # Errors
/// An alarm rule the tail crate refuses (the suite loader refuses these first).
pub fn accumulator(m: usize, n: usize, hold_s: f64) -> Result<TailAccumulator, String> {
    let rule = AlarmRule::new(m, n, hold_s).map_err(|e| e.to_string())?;
    TailAccumulator::new(rule, f64::NEG_INFINITY, MAX_KEPT_FRAMES).map_err(|e| e.to_string())
}

fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

/// Fits one room's tail and reads the thresholds of `rates_per_hour`.
fn fit_declustered(
    scene: &str,
    sweep_value: Option<&str>,
    acc: &TailAccumulator,
    rates_per_hour: &[f64],
) -> RoomTail {
    let mut room = RoomTail {
        scene: scene.to_string(),
        sweep_value: sweep_value.map(str::to_string),
        status: String::new(),
        exposure_ns: acc.exposure_ns(),
        fit_threshold: None,
        exceedances: None,
        xi: None,
        sigma: None,
        gof_p: None,
        thresholds: Vec::new(),
        band: Vec::new(),
        stability: Vec::new(),
        excesses: Vec::new(),
        dispersion: None,
        basis: if acc.is_by_trial() {
            Basis::TrialMaxima
        } else {
            Basis::Clusters
        },
        basis_note: None,
        alarm_peaks: Vec::new(),
    };
    let none = |rate: f64, note: &str| RateThreshold {
        rate_per_hour: rate,
        threshold: None,
        low: None,
        high: None,
        note: Some(note.to_string()),
    };
    match extrapolate(acc, &ThresholdRule::default(), CANDIDATES, rates_per_hour) {
        Err(e) => {
            room.status = format!("not fitted: {e}");
            room.thresholds = rates_per_hour
                .iter()
                .map(|&r| none(r, &room.status))
                .collect();
        }
        Ok(x) => {
            room.status = match x.status {
                Status::Fitted => "fitted".to_string(),
                Status::TooFewClusters => "too few clusters".to_string(),
                Status::NoStableThreshold => "no stable threshold".to_string(),
                Status::CoarseScores { step, distinct } => format!(
                    "scores too coarse for a tail fit ({distinct} distinct cluster maxima{})",
                    step.map_or(String::new(), |s| format!(", on a lattice of step {s:.3e}"))
                ),
            };
            let triple = |e: &echobench_tail::Estimate| (e.value, e.lower, finite(e.upper));
            room.stability = x
                .table
                .iter()
                .enumerate()
                .map(|(i, row)| StabilityPoint {
                    threshold: row.threshold,
                    exceedances: row.exceedances as u64,
                    xi: row.xi.as_ref().map(triple),
                    modified_scale: row.modified_scale.as_ref().map(triple),
                    chosen: x.chosen == Some(i),
                })
                .collect();
            if let Some(fit) = &x.fit {
                room.fit_threshold = Some(fit.threshold());
                room.exceedances = Some(fit.exceedances() as u64);
                room.xi = Some(fit.gpd().xi());
                room.sigma = Some(fit.gpd().sigma());
                room.gof_p = fit.goodness_of_fit().p_value.map(|p| p.value());
                room.dispersion = Some(fit.dispersion());
            }
            room.thresholds = if x.status == Status::Fitted {
                x.targets
                    .iter()
                    .map(|t| match &t.threshold {
                        Ok(e) => RateThreshold {
                            rate_per_hour: t.rate_per_h,
                            threshold: finite(e.value),
                            low: finite(e.lower),
                            high: finite(e.upper),
                            note: None,
                        },
                        Err(e) => none(t.rate_per_h, &e.to_string()),
                    })
                    .collect()
            } else {
                rates_per_hour
                    .iter()
                    .map(|&r| none(r, &room.status))
                    .collect()
            };
        }
    }
    room
}

/// A room's (or the product's) false-alarm rate at one threshold, with its 95 % interval.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RateAt {
    /// The threshold.
    pub threshold: f64,
    /// Rate per hour.
    pub rate_per_hour: f64,
    /// Lower end, per hour.
    pub low: f64,
    /// Upper end, per hour (`None`: unbounded).
    pub high: Option<f64>,
    /// The room it is for (the worst room, for a product).
    pub room: String,
    /// `tail fit` above the fit threshold, `counted` (declustered alarms over the room's
    /// calibration time, Garwood interval) below it or without a fit.
    pub method: String,
}

/// A room's rate at threshold `x`: from its tail fit at or above the fit threshold, else
/// counted (the accumulator's declustered alarms over its time, with Garwood's interval).
pub fn rate_at(room: &RoomTail, acc: &TailAccumulator, x: f64) -> Option<RateAt> {
    let fitted = room.status == "fitted";
    if let (true, Some(u)) = (fitted, room.fit_threshold) {
        if x >= u {
            let fit = echobench_tail::TailFit::from_accumulator(
                &room.basis.view(acc),
                u,
                ThresholdRule::default().shape_floor,
            )
            .ok()?;
            let e = fit.rate_interval(x, 0.95).ok()?;
            return Some(RateAt {
                threshold: x,
                rate_per_hour: e.value,
                low: e.lower,
                high: finite(e.upper),
                room: room.name(),
                method: "tail fit".into(),
            });
        }
    }
    let hours = acc.exposure_h();
    let count = acc.alarm_count(x).ok()?;
    let interval = echobench_stats::garwood_interval(count, hours, 0.95).ok()?;
    Some(RateAt {
        threshold: x,
        rate_per_hour: count as f64 / hours,
        low: interval.low,
        high: Some(interval.high),
        room: room.name(),
        method: "counted".into(),
    })
}

/// The product's rate at `x`: the worst room's, with `[max of lows, max of highs]` (as for
/// thresholds, module doc); `None` when a room has no rate.
pub fn product_rate_at(
    rooms: &[RoomTail],
    accumulators: &[TailAccumulator],
    x: f64,
) -> Option<RateAt> {
    let per_room: Vec<RateAt> = rooms
        .iter()
        .zip(accumulators)
        .map(|(room, acc)| rate_at(room, acc, x))
        .collect::<Option<_>>()?;
    let worst = per_room
        .iter()
        .max_by(|a, b| a.rate_per_hour.total_cmp(&b.rate_per_hour))?;
    let high = per_room
        .iter()
        .map(|r| r.high)
        .try_fold(0.0f64, |m, h| h.map(|h| m.max(h)));
    Some(RateAt {
        low: per_room.iter().map(|r| r.low).fold(0.0, f64::max),
        high,
        ..worst.clone()
    })
}

/// Points on the fitted rate curve drawn by the report, crowded towards the fit threshold
/// (quadratic spacing), where the rate falls fastest.
const BAND_POINTS: usize = 14;

/// Adds to `room` the fitted rate against threshold with its band (see [`RoomTail::band`]),
/// refitting at its chosen threshold (one fit; the stability search is not repeated).
pub fn add_band(room: &mut RoomTail, acc: &TailAccumulator) {
    let Some(u) = room.fit_threshold else {
        return;
    };
    let Ok(mut excesses) = room.basis.view(acc).excesses(u) else {
        return;
    };
    let Ok(fit) = echobench_tail::TailFit::from_excesses(
        u,
        &excesses,
        acc.exposure_h(),
        ThresholdRule::default().shape_floor,
    )
    .and_then(|f| f.with_dispersion(room.dispersion.unwrap_or(TrialDispersion::NONE))) else {
        return;
    };
    excesses.sort_by(f64::total_cmp);
    room.excesses = excesses;
    let top = room
        .thresholds
        .iter()
        .filter_map(|t| t.threshold)
        .fold(u, f64::max);
    if top <= u {
        return;
    }
    room.band = (0..BAND_POINTS)
        .filter_map(|k| {
            let f = k as f64 / (BAND_POINTS - 1) as f64;
            let x = u + (top - u) * f * f;
            let e = fit.rate_interval(x, 0.95).ok()?;
            Some((x, e.value, e.lower, e.upper))
        })
        .collect();
}

/// The product's threshold for each rate: the worst room's, with `[max of lows, max of
/// highs]` (module doc), or why there is none.
pub fn worst_room(
    rooms: &[RoomTail],
    rates_per_hour: &[f64],
) -> Vec<(RateThreshold, Option<String>)> {
    rates_per_hour
        .iter()
        .map(|&rate| {
            let per_room: Vec<(&RoomTail, &RateThreshold)> = rooms
                .iter()
                .filter_map(|r| {
                    r.thresholds
                        .iter()
                        .find(|t| t.rate_per_hour == rate)
                        .map(|t| (r, t))
                })
                .collect();
            if let Some((room, t)) = per_room.iter().find(|(_, t)| t.threshold.is_none()) {
                return (
                    RateThreshold {
                        rate_per_hour: rate,
                        threshold: None,
                        low: None,
                        high: None,
                        note: Some(format!(
                            "{}: {}",
                            room.name(),
                            t.note.as_deref().unwrap_or("no threshold")
                        )),
                    },
                    None,
                );
            }
            let worst = per_room.iter().max_by(|a, b| {
                a.1.threshold
                    .unwrap_or(f64::NEG_INFINITY)
                    .total_cmp(&b.1.threshold.unwrap_or(f64::NEG_INFINITY))
            });
            let low = per_room
                .iter()
                .filter_map(|(_, t)| t.low)
                .fold(None, |m: Option<f64>, x| Some(m.map_or(x, |m| m.max(x))));
            // An unbounded upper end in any room makes the product's unbounded.
            let high = if per_room.iter().any(|(_, t)| t.high.is_none()) {
                None
            } else {
                per_room
                    .iter()
                    .filter_map(|(_, t)| t.high)
                    .fold(None, |m: Option<f64>, x| Some(m.map_or(x, |m| m.max(x))))
            };
            (
                RateThreshold {
                    rate_per_hour: rate,
                    threshold: worst.and_then(|(_, t)| t.threshold),
                    low,
                    high,
                    note: None,
                },
                worst.map(|(r, _)| r.name()),
            )
        })
        .collect()
}

/// A detector's threshold for one rare rate on its product, for the summary.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RareThreshold {
    /// The false-alarm rate, per hour.
    pub rate_per_hour: f64,
    /// The extrapolated threshold (worst room) with its interval, and why there is none.
    pub extrapolated: RateThreshold,
    /// The room whose tail set it.
    pub limiting_room: Option<String>,
    /// The counted (brute-force) threshold for the same rate, when it is one of the
    /// product's targets.
    pub counted_threshold: Option<f64>,
    /// Whether the calibration time resolves that counted threshold.
    pub counted_resolved: Option<bool>,
}

impl RareThreshold {
    /// The threshold as a table cell: `value [low, high]` (`∞` for an unbounded end), then
    /// ` (room)` when `with_room`, then ` | counted` (with `?` when not resolved); a missing
    /// threshold is `— (k)`, its note numbered in `notes` (shared by the table's cells).
    pub fn cell(
        &self,
        number: &dyn Fn(f64) -> String,
        notes: &mut Vec<String>,
        with_room: bool,
    ) -> String {
        let e = &self.extrapolated;
        let mut cell = match (e.threshold, e.low) {
            (Some(v), Some(l)) => format!(
                "{} [{}, {}]",
                number(v),
                number(l),
                e.high.map_or("∞".into(), number)
            ),
            (Some(v), None) => number(v),
            _ => {
                let note = e.note.clone().unwrap_or_default();
                let k = notes.iter().position(|n| *n == note).unwrap_or_else(|| {
                    notes.push(note);
                    notes.len() - 1
                });
                format!("— ({})", k + 1)
            }
        };
        if let (true, Some(room)) = (with_room, &self.limiting_room) {
            cell.push_str(&format!(" ({room})"));
        }
        if let Some(c) = self.counted_threshold {
            let unresolved = if self.counted_resolved == Some(true) {
                ""
            } else {
                "?"
            };
            cell.push_str(&format!(" | {}{unresolved}", number(c)));
        }
        cell
    }
}

/// The rare-rate thresholds of one detector on its product, for [`REPORT_RATES_PER_HOUR`].
pub fn rare_thresholds(
    d: &crate::runner::DetectorTally,
    operating: &[crate::summary::OperatingSummary],
) -> Vec<RareThreshold> {
    if d.tail.is_empty() {
        return Vec::new();
    }
    worst_room(&d.tail, &REPORT_RATES_PER_HOUR)
        .into_iter()
        .map(|(extrapolated, limiting_room)| {
            let rate = extrapolated.rate_per_hour;
            let counted = operating
                .iter()
                .find(|o| (o.target_false_alarms_per_hour / rate - 1.0).abs() < 1e-6);
            RareThreshold {
                rate_per_hour: rate,
                extrapolated,
                limiting_room,
                counted_threshold: counted.map(|o| o.threshold),
                counted_resolved: counted.map(|o| o.resolved),
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};

    /// Exponential scores, one frame a second, 1-of-1 with a hold shorter than a frame: each
    /// frame above a high level is its own alarm, so the rate at x is 3600·e^(−x) per hour
    /// and the threshold for rate r is ln(3600/r) (the exponential tail, ξ = 0). 200 h of
    /// frames; the 1/h, 1/day and 1/week thresholds (8.19, 11.4, 13.3) must lie inside their
    /// intervals (one fixed seed; the tail crate measures coverage over many).
    #[test]
    fn exponential_scores_give_the_closed_form_thresholds() {
        let mut acc = accumulator(1, 1, 0.5).unwrap();
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(3);
        for trial in 0..200u64 {
            let mut scan = acc.scan(trial);
            for k in 0..3600 {
                let u: f64 = rng.random();
                scan.push(k as f64 + 1.0, -(1.0 - u).ln()).unwrap();
            }
            acc.add(scan, 3600.0).unwrap();
        }
        let rates = [1.0, 1.0 / 24.0, 1.0 / 168.0];
        let room = fit_room("quiet", None, &acc, &rates);
        assert_eq!(room.status, "fitted");
        // The drawn curve: from the fit threshold up, falling with the threshold, inside its
        // band (whether the band holds the truth is a coverage question, measured over many
        // seeds in the tail crate; one seed's pointwise band may miss it).
        // The stability table: ascending candidates, the chosen one is the fit threshold,
        // and on an exponential tail (ξ = 0) the chosen row's shape interval holds 0 (the
        // floor ξ >= 0 puts the low end at 0 or above; 0 must not lie above the high end).
        let chosen: Vec<&StabilityPoint> = room.stability.iter().filter(|p| p.chosen).collect();
        assert_eq!(chosen.len(), 1);
        assert_eq!(Some(chosen[0].threshold), room.fit_threshold);
        let (_, xi_low, xi_high) = chosen[0].xi.unwrap();
        assert!(xi_low <= 0.0 + 1e-9 && xi_high.is_none_or(|h| h >= 0.0));
        assert!(room
            .stability
            .windows(2)
            .all(|w| w[0].threshold < w[1].threshold));
        let mut room = room;
        add_band(&mut room, &acc);
        assert_eq!(room.band.len(), BAND_POINTS);
        // The stored excesses refit to the same curve.
        let refit = echobench_tail::TailFit::from_excesses(
            room.fit_threshold.unwrap(),
            &room.excesses,
            room.exposure_ns as f64 / 3.6e12,
            ThresholdRule::default().shape_floor,
        )
        .unwrap()
        .with_dispersion(room.dispersion.unwrap())
        .unwrap();
        for b in &room.band {
            assert_eq!(refit.rate_per_h(b.0), b.1);
        }
        for pair in room.band.windows(2) {
            assert!(pair[1].0 > pair[0].0 && pair[1].1 < pair[0].1);
        }
        assert_eq!(room.band[0].0, room.fit_threshold.unwrap());
        for &(_, rate, low, high) in &room.band {
            assert!(low <= rate && rate <= high);
        }
        // The rate at a pinned threshold: from the fit above u, counted below it.
        let u = room.fit_threshold.unwrap();
        let above = rate_at(&room, &acc, u + 3.0).unwrap();
        assert_eq!(above.method, "tail fit");
        let truth = 3600.0 * (-(u + 3.0)).exp();
        assert!(above.low <= truth && truth <= above.high.unwrap());
        // Without a fit (or below u) the rate is counted; below the accumulator's floor (the
        // lowest level at which it knows every frame) there is no rate at all.
        let unfitted = RoomTail {
            status: "too few clusters".into(),
            ..room.clone()
        };
        let x = u + 1.0;
        let below = rate_at(&unfitted, &acc, x).unwrap();
        assert_eq!(below.method, "counted");
        let truth = 3600.0 * (-x).exp();
        assert!(rate_at(&unfitted, &acc, acc.floor() - 1.0).is_none());
        // The counted rate is a Poisson count over 200 h: within 4 standard deviations of
        // the truth (a false failure once in about 16 000 seeds), and its interval is
        // Garwood's around the count.
        let expected = truth * 200.0;
        let counted = below.rate_per_hour * 200.0;
        assert!(
            (counted - expected).abs() <= 4.0 * expected.sqrt(),
            "{below:?} vs {truth}"
        );
        assert!(below.low < below.rate_per_hour && below.rate_per_hour < below.high.unwrap());
        let product = product_rate_at(
            std::slice::from_ref(&room),
            std::slice::from_ref(&acc),
            u + 3.0,
        );
        assert_eq!(product, Some(above));
        for t in &room.thresholds {
            let truth = (3600.0 / t.rate_per_hour).ln();
            let (low, high) = (t.low.unwrap(), t.high.unwrap_or(f64::INFINITY));
            assert!(
                low <= truth && truth <= high,
                "{}/h: truth {truth} outside [{low}, {high}] (estimate {:?})",
                t.rate_per_hour,
                t.threshold
            );
        }
    }

    /// A room whose trials differ: 5 % of 300 trials are "gusty" (exponential scores of scale
    /// 1.6 instead of 1, 1800 frames each). Far out the gusty trials set the rate, so the
    /// mixture's one-per-month threshold solves `3600·(0.95 e^(−x) + 0.05 e^(−x/1.6)) = 1/720`
    /// per hour of frames. Both bases are fitted, the kept one has the higher threshold at the
    /// rarest rate, the note names the other, and the kept interval holds the mixture's truth.
    #[test]
    fn a_mixture_of_trials_keeps_the_more_cautious_basis() {
        let mut acc = accumulator(1, 1, 0.5).unwrap();
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
        for trial in 0..300u64 {
            let scale = if trial % 20 == 7 { 1.6 } else { 1.0 };
            let mut scan = acc.scan(trial);
            for k in 0..1800 {
                let u: f64 = rng.random();
                scan.push(k as f64 + 1.0, -scale * (1.0 - u).ln()).unwrap();
            }
            acc.add(scan, 1800.0).unwrap();
        }
        let rates = [1.0 / 24.0, 1.0 / 720.0];
        let room = fit_room("porch", None, &acc, &rates);
        let clusters = fit_declustered("porch", None, &acc, &rates);
        let trials = fit_declustered("porch", None, &acc.by_trial(), &rates);
        let at = |r: &RoomTail| r.thresholds[1].threshold.unwrap_or(f64::NEG_INFINITY);
        assert_eq!(at(&room), at(&clusters).max(at(&trials)));
        let other = if room.basis == Basis::Clusters {
            "trial maxima"
        } else {
            "alarm clusters"
        };
        assert!(room.basis_note.as_deref().unwrap().contains(other));
        // The mixture's truth by bisection of its rate (exact for 1-of-1 frames).
        let rate = |x: f64| 3600.0 * (0.95 * (-x).exp() + 0.05 * (-x / 1.6).exp());
        let (mut lo, mut hi) = (0.0, 40.0);
        for _ in 0..100 {
            let mid = 0.5 * (lo + hi);
            if rate(mid) > 1.0 / 720.0 {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        let t = &room.thresholds[1];
        println!(
            "truth {lo:.3}; clusters {:?}; trial maxima {:?}",
            clusters.thresholds[1], trials.thresholds[1]
        );
        assert!(
            t.low.unwrap() <= lo && lo <= t.high.unwrap_or(f64::INFINITY),
            "truth {lo} outside {t:?} ({:?})",
            room.basis
        );
        // The counted peaks: M₁ is the largest score, and each next one is lower.
        let top = acc.kept_statistics()[0];
        assert_eq!(room.alarm_peaks[0], top);
        assert!(room.alarm_peaks.windows(2).all(|w| w[0] > w[1]));
        assert_eq!(room.alarm_peaks.len(), ALARM_PEAKS);
    }

    #[test]
    fn alarm_peaks_re_form_clusters_at_each_level() {
        // One trial, hold 1 s: frames 9 and 8 at 0.0 s and 0.5 s form one cluster at level 8
        // (M₁ = 9), but at level 5 the frame 6 at 1.0 s joins them, and the frame 7 at 3.0 s is a
        // second cluster: M₂ = 7. A frame 8.5 in another trial makes M₂ = 8.5 instead.
        let mut acc = accumulator(1, 1, 1.0).unwrap();
        acc.add_trace(0, 5.0, &[0.0, 0.5, 1.0, 3.0], &[9.0, 8.0, 6.0, 7.0])
            .unwrap();
        assert_eq!(alarm_peaks(&acc, 3), vec![9.0, 7.0]);
        acc.add_trace(1, 5.0, &[1.0], &[8.5]).unwrap();
        assert_eq!(alarm_peaks(&acc, 3), vec![9.0, 8.5, 7.0]);
    }

    fn room(name: &str, value: Option<f64>, low: f64, high: Option<f64>) -> RoomTail {
        RoomTail {
            scene: name.into(),
            sweep_value: None,
            status: if value.is_some() {
                "fitted"
            } else {
                "too few clusters"
            }
            .into(),
            exposure_ns: 0,
            fit_threshold: None,
            exceedances: None,
            xi: None,
            sigma: None,
            gof_p: None,
            thresholds: vec![RateThreshold {
                rate_per_hour: 1.0,
                threshold: value,
                low: value.map(|_| low),
                high,
                note: value.is_none().then(|| "too few clusters".to_string()),
            }],
            band: Vec::new(),
            stability: Vec::new(),
            excesses: Vec::new(),
            dispersion: None,
            basis: Basis::Clusters,
            basis_note: None,
            alarm_peaks: Vec::new(),
        }
    }

    #[test]
    fn the_worst_room_sets_the_threshold_and_each_end_of_its_interval() {
        let rooms = [
            room("fan", Some(10.0), 9.0, Some(14.0)),
            room("cat", Some(12.0), 8.0, Some(13.0)),
        ];
        let (t, limiting) = &worst_room(&rooms, &[1.0])[0];
        assert_eq!(t.threshold, Some(12.0));
        assert_eq!((t.low, t.high), (Some(9.0), Some(14.0)));
        assert_eq!(limiting.as_deref(), Some("cat"));
        // An unbounded upper end anywhere leaves the product's unbounded.
        let rooms = [
            room("fan", Some(10.0), 9.0, None),
            room("cat", Some(12.0), 8.0, Some(13.0)),
        ];
        assert_eq!(worst_room(&rooms, &[1.0])[0].0.high, None);
        // A room without a fit leaves no threshold, and says which and why.
        let rooms = [
            room("fan", Some(10.0), 9.0, Some(14.0)),
            room("lab", None, 0.0, None),
        ];
        let (t, _) = &worst_room(&rooms, &[1.0])[0];
        assert_eq!(t.threshold, None);
        assert_eq!(t.note.as_deref(), Some("lab: too few clusters"));
    }
}
