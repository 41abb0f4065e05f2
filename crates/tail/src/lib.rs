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
//!    whether to use the fit or the brute-force bound;
//! 7. [`dispersion`]: **trials that differ** — Fisher's dispersion test of per-trial cluster
//!    counts and the quasi-likelihood widening of the intervals by it
//!    ([`TailAccumulator::by_trial`] declusters by trial for a fit of the mixture's tail);
//! 8. [`lattice`]: **scores on a lattice** — the step of tied maxima, and a
//!    [`Verdict::Coarse`] where it is too coarse for a continuous tail.
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
//! # Example
//!
//! ```
//! use echobench_tail::{extrapolate, AlarmRule, Status, TailAccumulator, ThresholdRule};
//!
//! // 2-of-3 frames, clusters a hold of 1 s apart; keep the top 5000 frames of the run.
//! let rule = AlarmRule::new(2, 3, 1.0)?;
//! let mut acc = TailAccumulator::new(rule, f64::NEG_INFINITY, 5_000)?;
//! // One noise-only trial: ten minutes of frames every 50 ms with exponential scores.
//! let mut state = 1u64;
//! let mut scan = acc.scan(0);
//! for k in 0..12_000 {
//!     state = state.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
//!     let uniform = ((state >> 11) as f64 + 0.5) / (1u64 << 53) as f64;
//!     scan.push(k as f64 * 0.05, -uniform.ln())?;
//! }
//! acc.add(scan, 600.0)?;
//! // The threshold for one false alarm per day, with its 95 % interval (a run 144 times
//! // shorter than a day). A status other than `Fitted` means: use the brute-force bound.
//! let ex = extrapolate(&acc, &ThresholdRule::default(), 10, &[1.0 / 24.0])?;
//! assert_eq!(ex.status, Status::Fitted);
//! let t = ex.targets[0].threshold.as_ref().unwrap();
//! // Closed form: an alarm needs two scores above x in adjacent or next-but-one frames,
//! // about 2 e^(−2x) per frame; one per day (1 in 1 728 000 frames) is x ≈ 7.5.
//! let x_day = (2.0f64 * 1_728_000.0).ln() / 2.0;
//! assert!(t.lower <= x_day && x_day <= t.upper);
//! # Ok::<(), echobench_tail::TailError>(())
//! ```
//!
//! Conventions: an alarm condition holds when the statistic is `>=` the threshold (the ROC
//! convention of the rest of echobench); exposure is noise-only time; rates are per hour;
//! `confidence` arguments are levels such as `0.95`.
#![deny(missing_docs)]

pub mod alarm;
pub mod dispersion;
mod error;
pub mod extrapolate;
pub mod fit;
pub mod gof;
pub mod gpd;
pub mod lattice;
mod solve;
pub mod threshold;

pub use alarm::{
    alarm_statistic, AlarmRule, Cluster, TailAccumulator, TrialScan, HOLD_TOLERANCE_S,
};
pub use dispersion::TrialDispersion;
pub use error::TailError;
pub use extrapolate::{extrapolate, Extrapolation, Status, TargetThreshold};
pub use fit::{Estimate, TailFit, Verdict};
pub use gof::{GoodnessOfFit, PValue};
pub use gpd::{Gpd, GpdFit, MIN_EXCESSES, NO_SHAPE_FLOOR};
pub use threshold::{
    candidate_thresholds, choose_from, choose_threshold, stability_table, StabilityRow,
    ThresholdRule,
};
