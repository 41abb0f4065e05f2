//! Statistics that turn detector scores and alarm counts into the numbers echobench reports
//! and gates on: ROC curves and AUC from scored trials, confidence intervals for detection
//! probabilities and false-alarm rates, the exact tests that decide whether a change made the
//! false-alarm rate worse, and order-statistic summaries of detection latency.
//!
//! **Design decision: exact small-count methods, nothing asymptotic.** A motion sensor is
//! judged on a handful of false alarms over many hours and on a few dozen walk-through events,
//! so normal approximations (Wald intervals, z-tests) are wrong exactly where it matters: they
//! give `[0, 0]` for zero alarms and a CI gate built on them flakes. Every interval here is
//! exact (Clopper–Pearson, Garwood) or one with good small-sample coverage (Wilson, Jeffreys;
//! Brown, Cai & DasGupta 2001), and every test is an exact conditional or permutation test
//! whose size never exceeds its nominal level. Distribution functions come from `statrs`.
//!
//! Conventions (shared with `docs/reference/detectors.md#d1` and `statistics.md#s1`):
//! - a detector **alarms when `score >= threshold`**;
//! - Pfa is the false-alarm probability per noise-only trial, Pd the detection probability;
//! - rates are events per unit of exposure; echobench passes exposures in hours, so rates are
//!   false alarms per hour;
//! - `confidence` arguments are levels such as `0.95`, strictly between 0 and 1;
//! - functions never panic on bad numbers: they return [`StatsError`], `None`, or (for the AUC,
//!   whose signature is fixed) NaN, as each documents.
#![deny(missing_docs)]

mod calibration;
mod compare;
mod error;
mod interval;
mod order;
mod proportion;
mod rate;
mod roc;

pub use calibration::EmpiricalThresholdPfa;
pub use compare::{
    fisher_exact_greater, holm_adjust, holm_reject, mcnemar_exact, rate_ratio_test,
    rate_ratio_test_power, EventCount, PairedTest, RatePowerDesign, RateTest,
};
pub use error::StatsError;
pub use interval::Interval;
pub use order::{
    median, median_confidence_interval, median_interval_ranks, quantile, MedianInterval,
    OrderStatisticRanks,
};
pub use proportion::{
    clopper_pearson_interval, clopper_pearson_lower_bound, clopper_pearson_upper_bound,
    jeffreys_interval, rule_of_three_upper_bound, trials_for_zero_event_claim, wilson_interval,
};
pub use rate::{
    exposure_for_rate_claim, exposure_to_resolve_rate, garwood_interval, garwood_lower_bound,
    garwood_upper_bound, rate_over_limit_p_value,
};
pub use roc::{
    auc_mann_whitney, auc_standard_error_hanley_mcneil, event_roc_monotone_len, mann_whitney_u,
    partial_auc, partial_auc_mcclish, pd_at_pfa_conservative, pd_at_pfa_interpolated, roc_area,
    roc_points, RocPoint,
};
