//! The alarm statistic, runs declustering and the streaming accumulator against plain
//! brute-force loops on random traces (the semantics are stated in the `alarm` module doc).

mod common;

use echobench_tail::{alarm_statistic, AlarmRule, Cluster, TailAccumulator};
use rand::Rng;

const TOL_S: f64 = echobench_tail::HOLD_TOLERANCE_S;

struct Trace {
    key: u64,
    duration_s: f64,
    t_s: Vec<f64>,
    x: Vec<f64>,
}

/// Random trials: frames every 0.1 s with occasional dropped frames, noise scores with
/// bursts (so clusters of several frames and chattering near a level both occur), a few NaN.
fn traces(seed: u64) -> Vec<Trace> {
    let mut rng = common::rng("declustering", seed);
    (0..12)
        .map(|i| {
            let frames = rng.random_range(20..400);
            let mut t = 0.0;
            let mut t_s = Vec::new();
            let mut x = Vec::new();
            let mut burst = 0;
            for _ in 0..frames {
                t += if rng.random::<f64>() < 0.05 { 0.3 } else { 0.1 };
                if rng.random::<f64>() < 0.02 {
                    burst = rng.random_range(1..8);
                }
                let base = common::normal(&mut rng);
                let v = if rng.random::<f64>() < 0.01 {
                    f64::NAN
                } else if burst > 0 {
                    burst -= 1;
                    base + 3.0
                } else {
                    base
                };
                t_s.push(t);
                x.push(v);
            }
            Trace {
                // Keys out of order, so key order differs from insertion order.
                key: (i * 7919 % 13) as u64,
                duration_s: t + 0.1,
                t_s,
                x,
            }
        })
        .collect()
}

/// The M-of-N statistic by sorting each window (frames before the first absent; NaN lowest).
fn brute_statistic(m: usize, n: usize, x: &[f64]) -> Vec<f64> {
    (0..x.len())
        .map(|k| {
            let from = (k + 1).saturating_sub(n);
            let mut w: Vec<f64> = x[from..=k]
                .iter()
                .copied()
                .filter(|v| !v.is_nan())
                .collect();
            w.sort_by(|a, b| b.total_cmp(a));
            w.get(m - 1).copied().unwrap_or(f64::NAN)
        })
        .collect()
}

/// Alarms of the retriggerable quiet-time logic at `level`: a frame whose condition holds
/// raises one when no frame of the trial within the last `hold_s` had the condition.
fn brute_quiet_alarms(t_s: &[f64], s: &[f64], level: f64, hold_s: f64) -> usize {
    let mut count = 0;
    for k in 0..s.len() {
        if s[k].is_nan() || s[k] < level {
            continue;
        }
        let recent = (0..k).any(|j| s[j] >= level && t_s[k] - t_s[j] < hold_s - TOL_S);
        if !recent {
            count += 1;
        }
    }
    count
}

/// Alarms of a non-retriggerable hold at `level` (a condition frame at least `hold_s` after
/// the last counted alarm counts), as the intrusion scoring counts on noise-only time.
fn brute_held_alarms(t_s: &[f64], s: &[f64], level: f64, hold_s: f64) -> usize {
    let mut last = f64::NEG_INFINITY;
    let mut count = 0;
    for k in 0..s.len() {
        if s[k] >= level && t_s[k] >= last + hold_s - TOL_S {
            count += 1;
            last = t_s[k];
        }
    }
    count
}

fn accumulate(rule: AlarmRule, traces: &[&Trace], pre: f64, max_kept: usize) -> TailAccumulator {
    let mut acc = TailAccumulator::new(rule, pre, max_kept).unwrap();
    for tr in traces {
        // Feed in uneven blocks, as a streaming caller would.
        let mut scan = acc.scan(tr.key);
        let mid = tr.x.len() / 3;
        scan.push_block(&tr.t_s[..mid], &tr.x[..mid]).unwrap();
        scan.push_block(&tr.t_s[mid..], &tr.x[mid..]).unwrap();
        acc.add(scan, tr.duration_s).unwrap();
    }
    acc
}

#[test]
fn statistic_matches_sorting_each_window() {
    for seed in 0..5 {
        for (m, n) in [(1, 1), (2, 3), (3, 5), (1, 4)] {
            let rule = AlarmRule::new(m, n, 0.0).unwrap();
            for tr in traces(seed) {
                let fast = alarm_statistic(&rule, &tr.x);
                let slow = brute_statistic(m, n, &tr.x);
                for (a, b) in fast.iter().zip(&slow) {
                    assert!(
                        a == b || (a.is_nan() && b.is_nan()),
                        "{m}-of-{n}: {a} vs {b}"
                    );
                }
            }
        }
    }
}

#[test]
fn cluster_counts_equal_quiet_time_alarm_counts_at_every_level() {
    // How often each case occurred, so the test shows it exercised them all.
    let (mut more_held, mut equal_short, mut multi_frame) = (0, 0, 0);
    for seed in 0..10 {
        let all = traces(seed);
        for (m, n, hold_s) in [(1, 1, 0.0), (1, 1, 0.35), (2, 3, 0.35), (3, 5, 1.0)] {
            let rule = AlarmRule::new(m, n, hold_s).unwrap();
            let refs: Vec<&Trace> = all.iter().collect();
            let acc = accumulate(rule, &refs, 0.5, usize::MAX);
            let floor = acc.floor();
            assert_eq!(floor, 0.5);
            for level in [0.5, 1.0, 1.7, 2.5, 3.2, 4.0] {
                let clusters = acc.clusters(level).unwrap();
                let mut quiet = 0;
                let mut held = 0;
                let mut longest_span_s: f64 = 0.0;
                for tr in &all {
                    let s = brute_statistic(m, n, &tr.x);
                    quiet += brute_quiet_alarms(&tr.t_s, &s, level, hold_s);
                    held += brute_held_alarms(&tr.t_s, &s, level, hold_s);
                }
                for c in &clusters {
                    longest_span_s = longest_span_s.max(c.span_s());
                }
                assert_eq!(
                    clusters.len(),
                    quiet,
                    "{m}-of-{n} hold {hold_s} level {level}"
                );
                assert_eq!(acc.alarm_count(level).unwrap() as usize, quiet);
                // The product's non-retriggerable count is never lower, and equal when no
                // cluster lasts a hold (module doc).
                assert!(held >= quiet);
                if held > quiet {
                    more_held += 1;
                }
                if longest_span_s < hold_s - TOL_S {
                    assert_eq!(held, quiet, "{m}-of-{n} hold {hold_s} level {level}");
                    equal_short += 1;
                }
                if clusters.iter().any(|c| c.span_s() > 0.0) {
                    multi_frame += 1;
                }
            }
            // Every frame at or above the floor within a cluster; maxima are the frames' maxima.
            let excess = acc.excesses(1.0).unwrap();
            let maxima: Vec<f64> = acc
                .clusters(1.0)
                .unwrap()
                .iter()
                .filter(|c| c.max > 1.0)
                .map(|c| c.max - 1.0)
                .collect();
            assert_eq!(excess, maxima);
        }
    }
    println!(
        "held > quiet: {more_held}, short clusters: {equal_short}, multi-frame: {multi_frame}"
    );
    assert!(more_held > 0 && equal_short > 0 && multi_frame > 0);
}

#[test]
fn results_do_not_depend_on_split_merge_order_or_pruning() {
    let rule = AlarmRule::new(2, 3, 0.35).unwrap();
    for seed in 0..5 {
        let all = traces(seed);
        let refs: Vec<&Trace> = all.iter().collect();
        // A cap small enough that the floor rises during accumulation.
        let cap = 60;
        let whole = accumulate(rule, &refs, f64::NEG_INFINITY, cap);
        let reference: Vec<Cluster> = whole.clusters(whole.floor()).unwrap();
        assert!(whole.floor() > f64::NEG_INFINITY);
        for shards in [2, 3, 5] {
            let mut parts: Vec<TailAccumulator> = (0..shards)
                .map(|s| {
                    let mine: Vec<&Trace> = all
                        .iter()
                        .filter(|t| t.key as usize % shards == s)
                        .collect();
                    accumulate(rule, &mine, f64::NEG_INFINITY, cap)
                })
                .collect();
            // Merge in reverse order.
            let mut merged = parts.pop().unwrap();
            while let Some(p) = parts.pop() {
                merged.merge(p).unwrap();
            }
            assert_eq!(merged.floor().to_bits(), whole.floor().to_bits());
            assert_eq!(merged.exposure_ns(), whole.exposure_ns());
            assert_eq!(merged.trials(), whole.trials());
            assert_eq!(merged.frames(), whole.frames());
            let c = merged.clusters(merged.floor()).unwrap();
            assert_eq!(c, reference, "{shards} shards");
        }
        // The floor is the cap-th largest statistic of the run, and the clusters above it are
        // those of an uncapped accumulator at that level.
        let uncapped = accumulate(rule, &refs, f64::NEG_INFINITY, usize::MAX);
        let mut stats: Vec<f64> = all
            .iter()
            .flat_map(|t| alarm_statistic(&rule, &t.x))
            .filter(|v| !v.is_nan())
            .collect();
        stats.sort_by(|a, b| b.total_cmp(a));
        assert_eq!(whole.floor(), stats[cap - 1]);
        assert_eq!(uncapped.clusters(whole.floor()).unwrap(), reference);
        assert!(whole.kept_frames() <= 2 * cap + 1);
    }
}

#[test]
fn refused_inputs_are_named() {
    let rule = AlarmRule::new(1, 1, 0.1).unwrap();
    assert!(AlarmRule::new(0, 1, 0.1).is_err());
    assert!(AlarmRule::new(3, 2, 0.1).is_err());
    assert!(AlarmRule::new(1, 1, -1.0).is_err());
    let mut acc = TailAccumulator::new(rule, 0.0, 10).unwrap();
    let mut scan = acc.scan(1);
    scan.push(1.0, 2.0).unwrap();
    assert!(scan.push(0.5, 2.0).is_err(), "time order");
    acc.add(scan, 2.0).unwrap();
    let mut again = acc.scan(1);
    again.push(0.0, 5.0).unwrap();
    assert!(acc.add(again, 1.0).is_err(), "duplicate trial");
    assert!(acc.clusters(-0.5).is_err(), "below the floor");
    let other = TailAccumulator::new(AlarmRule::new(1, 2, 0.1).unwrap(), 0.0, 10).unwrap();
    assert!(acc.merge(other).is_err(), "different rule");
}
