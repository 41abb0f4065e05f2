//! Tail extrapolation of false-alarm rates: from a noise-only run far shorter than the rate
//! needs, the rate at which an alarm logic fires at rare thresholds (one per day, week,
//! month), with an interval, and the threshold for a target rate.
//!
//! The pipeline, one module each:
//! 1. [`alarm`]: the **alarm statistic** after the M-of-N logic (the M-th largest score of
//!    the last N frames), **runs declustering** with the hold time as the gap, and a
//!    streaming [`TailAccumulator`] that keeps only frames above a pre-threshold and merges
//!    across threads and shards to bit-identical results;
//! 2. [`gpd`]: the **generalized Pareto** fit to excesses of cluster maxima (maximum
//!    likelihood as a profile over ξ, robust at ξ ≈ 0 and at the ξ = −1 boundary);
//! 3. [`fit`]: the **rate at any level** `λ(x) = λ_u (1 + ξ(x−u)/σ)^(−1/ξ)` and the **level
//!    for a target rate**, each with a profile-likelihood interval over the joint Poisson–GPD
//!    likelihood;
//! 4. [`threshold`]: the **stability table** (ξ, modified scale, mean excess over candidate
//!    thresholds) and an automatic threshold rule;
//! 5. [`gof`]: the **Anderson–Darling** test with Choulakian & Stephens' (2001) table; a fit
//!    that fails it (or cannot be tested) says so through [`Verdict`], so the caller falls
//!    back to the brute-force bound;
//! 6. [`extrapolate()`]: all of it in one call for a runner, ending in a [`Status`] that says
//!    whether to use the fit or the brute-force bound.
//!
//! `TAIL.md` in this crate states the formulas, sources and limits for the README.
//!
//! # Design decision: keep exceedance frames, decluster per level, fit by profile likelihood
//!
//! A false alarm is a cluster of alarm frames, not a frame, so what is extrapolated is the
//! rate of cluster maxima of the statistic the alarm logic thresholds — never raw frame
//! scores. Clusters at a high level are not the clusters at a low level cut higher (one
//! low-level cluster can hold two high-level ones), so the accumulator keeps the exceedance
//! *frames* above a pre-threshold (memory bounded by what lies above it, not by the run's
//! length) and declusters at whatever level is asked; the alarm count it reports at any level
//! at or above the floor is exact, and the same for any split of trials over threads or
//! machines. The fit and every interval come from one likelihood — Poisson for the number of
//! clusters, GPD for their excesses — and intervals are likelihood-ratio intervals of the
//! quantity asked for (rate at a level, level for a rate), because far in the tail the
//! sampling distributions are strongly skewed and symmetric (delta-method) intervals
//! under-cover exactly where the answer matters. By default the shape is constrained to
//! ξ ≥ 0 (no upper endpoint), because a light tail seen at moderate levels otherwise turns
//! into a false endpoint and a rate of 0 far out; the error then falls on the safe side
//! ([`threshold`], "The shape floor").
//!
//! Conventions: an alarm condition holds when the statistic is `>=` the threshold (the ROC
//! convention of the rest of echobench); exposure is noise-only time; rates are per hour;
//! `confidence` arguments are levels such as `0.95`.
#![deny(missing_docs)]

pub mod alarm;
mod error;
pub mod extrapolate;
pub mod fit;
pub mod gof;
pub mod gpd;
mod solve;
pub mod threshold;

pub use alarm::{
    alarm_statistic, AlarmRule, Cluster, TailAccumulator, TrialScan, HOLD_TOLERANCE_S,
};
pub use error::TailError;
pub use extrapolate::{extrapolate, Extrapolation, Status, TargetThreshold};
pub use fit::{Estimate, TailFit, Verdict};
pub use gof::{GoodnessOfFit, PValue};
pub use gpd::{Gpd, GpdFit, MIN_EXCESSES, NO_SHAPE_FLOOR};
pub use threshold::{
    candidate_thresholds, choose_from, choose_threshold, stability_table, StabilityRow,
    ThresholdRule,
};
