//! The alarm statistic after the M-of-N logic, runs declustering, and the streaming
//! accumulator that keeps only what lies above a pre-threshold.
//!
//! # Semantics (what the brute-force test checks)
//!
//! **Alarm statistic.** With scores `x_k` of one trial, `s_k` is the M-th largest of the
//! window `x_{k−N+1} … x_k` (NaN scores ordered below everything, frames before the first
//! absent; `s_k` is NaN, reaching no threshold, while fewer than M numbers are in the
//! window). The M-of-N alarm condition at threshold `v` ("at least M of the last N scores
//! are `>= v`") holds at frame `k` exactly when `s_k >= v`, so one trace of `s` serves every
//! threshold. This is `echobench_core::alarm_statistic::MOfNStatistic`, the one the
//! intrusion and presence scorers use, so all three agree on when the condition holds.
//!
//! **Runs declustering at level `v`** (Smith & Weissman 1994; Coles 2001, §5.3.2, with the
//! run length measured in time). The exceedance frames of a trial are those with
//! `s_k >= v`. Each exceedance frame starts a new *cluster* when it is the first of its
//! trial or when the previous exceedance frame of the same trial lies at least the gap
//! `hold_s` earlier (up to [`HOLD_TOLERANCE_S`] of rounding); otherwise it joins the running
//! cluster. Clusters never span trials. A cluster's maximum is the largest `s_k` in it.
//!
//! **The alarm this counts.** The number of clusters at level `v` is the number of alarms
//! of a *retriggerable quiet-time* logic: an alarm is raised at a frame whose condition
//! holds when the condition has not held on any frame of the last `hold_s` (every frame on
//! which the condition holds restarts the hold). The product's intrusion scoring uses a
//! non-retriggerable hold instead (an alarm, then nothing for `hold_s`, then a condition
//! still or again on counts again). Every cluster start is also an alarm of that logic, and a
//! cluster yields exactly one such alarm when it lasts less than `hold_s` from its first to
//! its last exceedance frame ([`Cluster::span_s`]). So the cluster count is a lower bound of
//! the product's count and equal to it when no cluster lasts a hold; far in the tail
//! clusters are a few frames long, which is where the extrapolation is used.
//!
//! **Clusters at a higher level are not the clusters at `u` cut at `v`**: a `u`-cluster can
//! hold two `v`-clusters (two peaks a gap apart joined by frames between `u` and `v`). The
//! accumulator therefore keeps the exceedance *frames*, not cluster maxima, and declusters
//! at whatever level is asked ([`TailAccumulator::clusters`]); the count at every level is
//! then exact, not approximate.
//!
//! # Memory and determinism
//!
//! A trial's frames are scanned one at a time ([`TrialScan`]); only frames with `s_k` at or
//! above the floor are kept (the pre-threshold given at construction). With `max_kept` set,
//! the floor rises whenever more than `2 · max_kept` frames are held, to the `max_kept`-th
//! largest kept value (frames tied with it stay). Every query first takes the *effective
//! floor*: the pre-threshold when at most `max_kept` frames of the whole run reach it, else
//! the `max_kept`-th largest statistic of the whole run. Because raising the floor only ever
//! drops frames below that value, the effective floor and the frames at or above it depend
//! only on the frames of the run, not on how trials were split between accumulators, in what
//! order they were added or merged, or when the floor rose. Queries visit trials in key
//! order, and exposure is summed in integer nanoseconds, so results are bit-identical for
//! any split.

use crate::dispersion::TrialDispersion;
use crate::error::{parameter, TailError};
use echobench_core::alarm_statistic::{MOfN, MOfNStatistic};
use std::collections::BTreeMap;

/// Rounding allowance of the gap comparison, seconds: a gap that equals `hold_s` up to the
/// rounding of frame times separates clusters (the intrusion scoring's hold tolerance).
pub const HOLD_TOLERANCE_S: f64 = 1e-9;

/// The alarm logic whose false alarms are extrapolated: M of the last N frames at or above
/// the threshold, clusters separated by at least `hold_s`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AlarmRule {
    m_of_n: MOfN,
    hold_s: f64,
}

impl AlarmRule {
    /// # Errors
    /// Unless `1 <= m <= n` and `hold_s` is finite and `>= 0`.
    pub fn new(m: usize, n: usize, hold_s: f64) -> Result<Self, TailError> {
        let m_of_n = MOfN::new(m, n).map_err(|_| parameter("m", m as f64, "1 <= m <= n"))?;
        if !(hold_s.is_finite() && hold_s >= 0.0) {
            return Err(parameter("hold_s", hold_s, "finite and >= 0"));
        }
        Ok(AlarmRule { m_of_n, hold_s })
    }

    /// M.
    pub fn m(&self) -> usize {
        self.m_of_n.m()
    }

    /// N.
    pub fn n(&self) -> usize {
        self.m_of_n.n()
    }

    /// The M-of-N rule.
    pub fn m_of_n(&self) -> MOfN {
        self.m_of_n
    }

    /// The declustering gap (the product's hold time), seconds.
    pub fn hold_s(&self) -> f64 {
        self.hold_s
    }
}

/// The alarm statistic of a whole trace (see the module doc).
pub fn alarm_statistic(rule: &AlarmRule, scores: &[f64]) -> Vec<f64> {
    let mut filter = MOfNStatistic::new(rule.m_of_n);
    scores.iter().map(|&x| filter.push(x)).collect()
}

/// One cluster of exceedance frames (runs declustering, module doc).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Cluster {
    /// The trial's key.
    pub trial: u64,
    /// Time of its first exceedance frame, seconds.
    pub start_s: f64,
    /// Time of its last exceedance frame, seconds.
    pub end_s: f64,
    /// Time of its (first) largest statistic, seconds.
    pub peak_s: f64,
    /// The largest statistic in it.
    pub max: f64,
}

impl Cluster {
    /// From the first to the last exceedance frame, seconds.
    pub fn span_s(&self) -> f64 {
        self.end_s - self.start_s
    }
}

/// Kept frames `(t_s, s_k)` of one trial, in time order.
type Frames = Vec<(f64, f64)>;

/// The `k`-th largest statistic (1-based) among `values`.
fn kth_largest(mut values: Vec<f64>, k: usize) -> f64 {
    let at = values.len() - k;
    let (_, v, _) = values.select_nth_unstable_by(at, f64::total_cmp);
    *v
}

/// Scans one trial frame by frame, keeping the frames at or above the floor.
///
/// Obtained from [`TailAccumulator::scan`] and handed back with [`TailAccumulator::add`].
#[derive(Debug, Clone)]
pub struct TrialScan {
    key: u64,
    statistic: MOfNStatistic,
    floor: f64,
    max_kept: usize,
    frames: Vec<(f64, f64)>,
    last_t_s: f64,
    frames_seen: u64,
}

impl TrialScan {
    /// Pushes one frame (its time, seconds, and the detector's score).
    ///
    /// # Errors
    /// When `t_s` is not finite or earlier than the previous frame's.
    pub fn push(&mut self, t_s: f64, score: f64) -> Result<(), TailError> {
        if !(t_s.is_finite() && t_s >= self.last_t_s) {
            return Err(TailError::TimeOrder {
                trial: self.key,
                t_s,
            });
        }
        self.last_t_s = t_s;
        self.frames_seen += 1;
        let s = self.statistic.push(score);
        if s >= self.floor {
            self.frames.push((t_s, s));
            if self.frames.len() > self.max_kept.saturating_mul(2) {
                let v = kth_largest(self.frames.iter().map(|f| f.1).collect(), self.max_kept);
                self.floor = self.floor.max(v);
                let floor = self.floor;
                self.frames.retain(|f| f.1 >= floor);
            }
        }
        Ok(())
    }

    /// Pushes a block of frames.
    ///
    /// # Errors
    /// As [`TrialScan::push`]; also when the lengths differ.
    pub fn push_block(&mut self, times_s: &[f64], scores: &[f64]) -> Result<(), TailError> {
        if times_s.len() != scores.len() {
            return Err(parameter(
                "scores.len()",
                scores.len() as f64,
                "equal to times_s.len()",
            ));
        }
        for (&t, &x) in times_s.iter().zip(scores) {
            self.push(t, x)?;
        }
        Ok(())
    }

    /// Frames pushed so far.
    pub fn frames_seen(&self) -> u64 {
        self.frames_seen
    }
}

/// Exceedance frames of many trials, for declustering at any level at or above the floor.
/// See the module doc for what is kept and why results do not depend on the split.
#[derive(Debug, Clone)]
pub struct TailAccumulator {
    rule: AlarmRule,
    pre_threshold: f64,
    max_kept: usize,
    floor: f64,
    kept: usize,
    /// Trials with kept frames, by key (so queries visit them in key order).
    trials: BTreeMap<u64, Frames>,
    /// The noise-only time of each trial in `trials`, ns (the dispersion test weighs each
    /// trial's cluster count by its time).
    trial_ns: BTreeMap<u64, u64>,
    trial_count: u64,
    frame_count: u64,
    exposure_ns: u64,
    /// Declustered by trial (one cluster per trial: its maximum) instead of by the hold
    /// ([`TailAccumulator::by_trial`]).
    by_trial: bool,
}

impl TailAccumulator {
    /// An empty accumulator keeping frames whose statistic is at least `pre_threshold`, and
    /// at most about `max_kept` of them (`usize::MAX`: no cap).
    ///
    /// # Errors
    /// When `pre_threshold` is NaN or `max_kept` is 0.
    pub fn new(rule: AlarmRule, pre_threshold: f64, max_kept: usize) -> Result<Self, TailError> {
        if pre_threshold.is_nan() {
            return Err(parameter("pre_threshold", pre_threshold, "not NaN"));
        }
        if max_kept == 0 {
            return Err(parameter("max_kept", 0.0, ">= 1"));
        }
        Ok(TailAccumulator {
            rule,
            pre_threshold,
            max_kept,
            floor: pre_threshold,
            kept: 0,
            trials: BTreeMap::new(),
            trial_ns: BTreeMap::new(),
            trial_count: 0,
            frame_count: 0,
            exposure_ns: 0,
            by_trial: false,
        })
    }

    /// The alarm rule.
    pub fn rule(&self) -> &AlarmRule {
        &self.rule
    }

    /// The pre-threshold given at construction.
    pub fn pre_threshold(&self) -> f64 {
        self.pre_threshold
    }

    /// Starts scanning trial `key` (keys must be unique across everything merged).
    pub fn scan(&self, key: u64) -> TrialScan {
        TrialScan {
            key,
            statistic: MOfNStatistic::new(self.rule.m_of_n),
            floor: self.floor,
            max_kept: self.max_kept,
            frames: Vec::new(),
            last_t_s: f64::NEG_INFINITY,
            frames_seen: 0,
        }
    }

    /// Adds a scanned trial of `duration_s` seconds of noise-only time.
    ///
    /// # Errors
    /// When `duration_s` is not finite and `>= 0`, or the trial's key is already held.
    pub fn add(&mut self, scan: TrialScan, duration_s: f64) -> Result<(), TailError> {
        if !(duration_s.is_finite() && duration_s >= 0.0) {
            return Err(parameter("duration_s", duration_s, "finite and >= 0"));
        }
        if scan.frames.iter().any(|f| f.1 >= self.floor) && self.trials.contains_key(&scan.key) {
            return Err(TailError::DuplicateTrial { trial: scan.key });
        }
        let ns = (duration_s * 1e9).round() as u64;
        self.trial_count += 1;
        self.frame_count += scan.frames_seen;
        self.exposure_ns += ns;
        self.absorb(
            scan.floor,
            BTreeMap::from([(scan.key, scan.frames)]),
            BTreeMap::from([(scan.key, ns)]),
        );
        Ok(())
    }

    /// Scans and adds a whole trace of one trial.
    ///
    /// # Errors
    /// As [`TrialScan::push_block`] and [`TailAccumulator::add`].
    pub fn add_trace(
        &mut self,
        key: u64,
        duration_s: f64,
        times_s: &[f64],
        scores: &[f64],
    ) -> Result<(), TailError> {
        let mut scan = self.scan(key);
        scan.push_block(times_s, scores)?;
        self.add(scan, duration_s)
    }

    /// Merges another accumulator (another thread's or shard's trials) into this one.
    ///
    /// # Errors
    /// When the rules or pre-thresholds differ or both hold the same trial.
    pub fn merge(&mut self, other: TailAccumulator) -> Result<(), TailError> {
        if self.rule != other.rule
            || self.pre_threshold.to_bits() != other.pre_threshold.to_bits()
            || self.max_kept != other.max_kept
            || self.by_trial != other.by_trial
        {
            return Err(TailError::RuleMismatch);
        }
        if let Some(&key) = other.trials.keys().find(|k| self.trials.contains_key(k)) {
            return Err(TailError::DuplicateTrial { trial: key });
        }
        self.trial_count += other.trial_count;
        self.frame_count += other.frame_count;
        self.exposure_ns += other.exposure_ns;
        self.absorb(other.floor, other.trials, other.trial_ns);
        Ok(())
    }

    fn absorb(
        &mut self,
        other_floor: f64,
        trials: BTreeMap<u64, Frames>,
        trial_ns: BTreeMap<u64, u64>,
    ) {
        if other_floor > self.floor {
            self.floor = other_floor;
            self.prune_below_floor();
        }
        for (key, mut frames) in trials {
            let floor = self.floor;
            frames.retain(|f| f.1 >= floor);
            if !frames.is_empty() {
                self.kept += frames.len();
                self.trials.insert(key, frames);
                self.trial_ns
                    .insert(key, trial_ns.get(&key).copied().unwrap_or(0));
            }
        }
        if self.kept > self.max_kept.saturating_mul(2) {
            self.floor = self.floor.max(self.effective_floor());
            self.prune_below_floor();
        }
    }

    fn prune_below_floor(&mut self) {
        let floor = self.floor;
        let mut kept = 0;
        for frames in self.trials.values_mut() {
            frames.retain(|f| f.1 >= floor);
            kept += frames.len();
        }
        self.trials.retain(|_, frames| !frames.is_empty());
        let trials = &self.trials;
        self.trial_ns.retain(|key, _| trials.contains_key(key));
        self.kept = kept;
    }

    /// The lowest level at which every exceedance frame of the run is known: the
    /// pre-threshold, or the `max_kept`-th largest statistic of the run when more frames
    /// reached the pre-threshold (module doc).
    pub fn floor(&self) -> f64 {
        self.effective_floor()
    }

    fn effective_floor(&self) -> f64 {
        if self.kept > self.max_kept {
            let values = self
                .trials
                .values()
                .flat_map(|frames| frames.iter().map(|f| f.1))
                .collect();
            kth_largest(values, self.max_kept).max(self.floor)
        } else {
            self.floor
        }
    }

    /// The same frames declustered by trial: every trial's frames above a level form one
    /// cluster, whose maximum is the trial's largest statistic (runs declustering with a gap
    /// longer than any trial). Cluster maxima of different trials are independent and, when
    /// a room's parameters are drawn per trial, identically distributed draws of the mixture
    /// over those parameters, so a tail fitted to them is the tail of the mixture
    /// (docs/reference/statistics.md#s13). Its rate counts trials with an alarm, a lower bound
    /// of the alarm rate that meets it where trials rarely hold two alarms.
    pub fn by_trial(&self) -> TailAccumulator {
        TailAccumulator {
            by_trial: true,
            ..self.clone()
        }
    }

    /// Whether clusters are whole trials ([`TailAccumulator::by_trial`]).
    pub fn is_by_trial(&self) -> bool {
        self.by_trial
    }

    /// Trials added.
    pub fn trials(&self) -> u64 {
        self.trial_count
    }

    /// Frames scanned.
    pub fn frames(&self) -> u64 {
        self.frame_count
    }

    /// The statistics of the frames at or above [`TailAccumulator::floor`], largest first.
    pub fn kept_statistics(&self) -> Vec<f64> {
        let floor = self.effective_floor();
        let mut v: Vec<f64> = self
            .trials
            .values()
            .flat_map(|frames| frames.iter().map(|f| f.1))
            .filter(|&s| s >= floor)
            .collect();
        v.sort_by(|a, b| b.total_cmp(a));
        v
    }

    /// Frames currently held (for memory accounting).
    pub fn kept_frames(&self) -> usize {
        self.kept
    }

    /// Noise-only time added, whole nanoseconds.
    pub fn exposure_ns(&self) -> u64 {
        self.exposure_ns
    }

    /// Noise-only time added, hours.
    pub fn exposure_h(&self) -> f64 {
        self.exposure_ns as f64 / 3.6e12
    }

    /// The clusters at level `level` (exceedance frames `s_k >= level`), trials in key order,
    /// clusters in time order within a trial.
    ///
    /// # Errors
    /// When `level` is below [`TailAccumulator::floor`] (some of its exceedances were not
    /// kept) or NaN.
    pub fn clusters(&self, level: f64) -> Result<Vec<Cluster>, TailError> {
        let floor = self.effective_floor();
        if level.is_nan() || level < floor {
            return Err(TailError::BelowFloor { level, floor });
        }
        let gap = if self.by_trial {
            f64::INFINITY
        } else {
            self.rule.hold_s - HOLD_TOLERANCE_S
        };
        let mut out = Vec::new();
        for (&key, frames) in &self.trials {
            let mut current: Option<Cluster> = None;
            for &(t_s, s) in frames {
                if s < level {
                    continue;
                }
                match current.as_mut() {
                    Some(c) if t_s - c.end_s < gap => {
                        c.end_s = t_s;
                        if s > c.max {
                            c.max = s;
                            c.peak_s = t_s;
                        }
                    }
                    _ => {
                        if let Some(c) = current.take() {
                            out.push(c);
                        }
                        current = Some(Cluster {
                            trial: key,
                            start_s: t_s,
                            end_s: t_s,
                            peak_s: t_s,
                            max: s,
                        });
                    }
                }
            }
            if let Some(c) = current {
                out.push(c);
            }
        }
        Ok(out)
    }

    /// The number of clusters at `level`: the alarm count of the retriggerable quiet-time
    /// logic (module doc).
    ///
    /// # Errors
    /// As [`TailAccumulator::clusters`].
    pub fn alarm_count(&self, level: f64) -> Result<u64, TailError> {
        Ok(self.clusters(level)?.len() as u64)
    }

    /// The trial-to-trial dispersion of the number of clusters whose maximum is strictly
    /// above `u` (the clusters whose excesses a fit at `u` uses): Fisher's index-of-dispersion
    /// test against Poisson counts, and the quasi-likelihood scale factor that widens the
    /// fit's intervals when the counts are over-dispersed ([`crate::dispersion`]).
    ///
    /// # Errors
    /// As [`TailAccumulator::clusters`].
    pub fn trial_dispersion(&self, u: f64) -> Result<TrialDispersion, TailError> {
        let mut per_trial: BTreeMap<u64, u64> = BTreeMap::new();
        for c in self.clusters(u)?.into_iter().filter(|c| c.max > u) {
            *per_trial.entry(c.trial).or_insert(0) += 1;
        }
        let counts: Vec<(u64, u64)> = per_trial
            .into_iter()
            .map(|(key, n)| (n, self.trial_ns.get(&key).copied().unwrap_or(0)))
            .collect();
        Ok(TrialDispersion::from_counts(
            &counts,
            self.trial_count,
            self.exposure_ns,
        ))
    }

    /// The excesses `max − u` of the clusters at level `u` whose maximum is strictly above
    /// `u` (an excess of exactly 0 carries no tail information and would make the GPD
    /// likelihood unbounded for ξ > 0), in cluster order.
    ///
    /// # Errors
    /// As [`TailAccumulator::clusters`].
    pub fn excesses(&self, u: f64) -> Result<Vec<f64>, TailError> {
        Ok(self
            .clusters(u)?
            .into_iter()
            .filter(|c| c.max > u)
            .map(|c| c.max - u)
            .collect())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn m_of_n_statistic_is_the_mth_largest_of_the_padded_window() {
        let rule = AlarmRule::new(2, 3, 0.0).unwrap();
        let s = alarm_statistic(&rule, &[5.0, 1.0, f64::NAN, 7.0, 3.0, 2.0]);
        // Windows: [5] → none, [5,1] → 1, [5,1,NaN] → 1, [1,NaN,7] → 1, [NaN,7,3] → 3,
        // [7,3,2] → 3.
        assert!(s[0].is_nan());
        assert_eq!(s[1..], [1.0, 1.0, 1.0, 3.0, 3.0]);
    }

    #[test]
    fn a_gap_of_exactly_the_hold_separates_clusters() {
        let rule = AlarmRule::new(1, 1, 0.3).unwrap();
        let mut acc = TailAccumulator::new(rule, 0.0, usize::MAX).unwrap();
        let t = [0.0, 0.1, 0.2, 0.5, 0.7, 1.1];
        let x = [1.0, -1.0, 2.0, 3.0, 1.0, 1.0];
        acc.add_trace(7, 1.2, &t, &x).unwrap();
        let c = acc.clusters(0.5).unwrap();
        // 0.0 and 0.2 join (gap 0.2); 0.5 is 0.3 after 0.2 (0.1 + 0.2 in floating point): new
        // cluster; 0.7 joins; 1.1 is 0.4 after 0.7: new cluster.
        assert_eq!(c.len(), 3);
        assert_eq!((c[0].max, c[1].max, c[2].max), (2.0, 3.0, 1.0));
        assert_eq!(acc.excesses(1.0).unwrap(), vec![1.0, 2.0]);
        assert!(acc.clusters(-1.0).is_err());
    }
}
