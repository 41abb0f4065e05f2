//! Properties on random trials: the tally against a brute-force reading of the definitions,
//! the hold trade-off's monotonicity (and where it ends), exact order-independent sums.

use echobench_presence::{
    hold_sweep, score_trial, ConditionFrame, Occupancy, PresenceTally, PresenceTrial,
    PresenceTruth, Segment, Timer,
};
use rand::seq::SliceRandom;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

const MS: i64 = 1_000_000;

/// A random truth on a 10 ms grid: 2–8 segments of 0.5–6 s, labels changing at each boundary.
fn random_truth(rng: &mut ChaCha8Rng) -> PresenceTruth {
    let labels = [
        Occupancy::Empty,
        Occupancy::OccupiedMoving,
        Occupancy::OccupiedStill,
    ];
    let mut segments = Vec::new();
    let mut start = 0;
    let mut label = labels[rng.random_range(0..3)];
    for _ in 0..rng.random_range(2..=8) {
        let end = start + 10 * MS * rng.random_range(50..600);
        segments.push(Segment {
            start_ns: start,
            end_ns: end,
            occupancy: label,
        });
        start = end;
        let others: Vec<Occupancy> = labels.iter().copied().filter(|&l| l != label).collect();
        label = others[rng.random_range(0..2)];
    }
    PresenceTruth::from_segments(&segments).unwrap()
}

/// Bursty condition frames every `period_ms` (a two-state chain: bursts and quiet spells),
/// the last one at the trial's end.
fn random_frames(rng: &mut ChaCha8Rng, duration_ns: i64, period_ms: i64) -> Vec<ConditionFrame> {
    let mut on = false;
    (1..=duration_ns / (period_ms * MS))
        .map(|k| {
            on = if on {
                rng.random_bool(0.7)
            } else {
                rng.random_bool(0.05)
            };
            ConditionFrame {
                t_ns: k * period_ms * MS,
                on,
            }
        })
        .collect()
}

/// The definitions read literally on a 1 ms grid, for a plain timer (no min-on, no lock-out):
/// on(t) ⇔ a condition frame t_k ≤ t < t_k + hold. Every frame, hold and boundary lies on
/// the grid, so counting grid points × 1 ms measures the half-open sets exactly.
/// Returns (false-on ns, drop-outs, latencies ns sorted).
fn brute_force(
    frames: &[ConditionFrame],
    truth: &PresenceTruth,
    hold_ns: i64,
) -> (u64, u64, Vec<u64>) {
    let points = (truth.duration_ns() / MS) as usize;
    let mut on = vec![false; points];
    for frame in frames.iter().filter(|f| f.on) {
        let from = (frame.t_ns / MS) as usize;
        let to = (((frame.t_ns + hold_ns) / MS) as usize).min(points);
        for slot in on.iter_mut().take(to).skip(from) {
            *slot = true;
        }
    }
    let occupied = |i: usize| truth.occupancy_at(i as i64 * MS).is_occupied();
    let false_on = (0..points).filter(|&i| on[i] && !occupied(i)).count() as u64 * MS as u64;
    let mut dropouts = 0;
    let mut latencies = Vec::new();
    for (a, b) in truth.occupied_periods() {
        let alpha = frames
            .iter()
            .find(|f| f.on && f.t_ns >= a && f.t_ns < b)
            .map(|f| f.t_ns);
        let Some(alpha) = alpha else {
            dropouts += 1;
            continue;
        };
        let (ia, ib, ialpha) = ((a / MS) as usize, (b / MS) as usize, (alpha / MS) as usize);
        if a > 0 {
            let carried = (ia..=ialpha).all(|i| on[i]);
            latencies.push(if carried { 0 } else { (alpha - a) as u64 });
        }
        // Count off-runs in [alpha, b): a grid point off whose predecessor is on.
        dropouts += (ialpha + 1..ib).filter(|&i| !on[i] && on[i - 1]).count() as u64;
    }
    latencies.sort_unstable();
    (false_on, dropouts, latencies)
}

#[test]
fn tally_matches_the_definitions_read_on_a_grid() {
    let mut rng = ChaCha8Rng::seed_from_u64(7);
    for _ in 0..60 {
        let truth = random_truth(&mut rng);
        let period_ms = 10 * rng.random_range(2..=10);
        let frames = random_frames(&mut rng, truth.duration_ns(), period_ms);
        let hold_ns = MS * rng.random_range(1..4000);
        let timer = Timer::from_ns(hold_ns, 0, 0).unwrap();
        let tally = score_trial(&frames, &truth, &timer).unwrap();
        let (false_on, dropouts, latencies) = brute_force(&frames, &truth, hold_ns);
        assert_eq!(tally.false_on_ns, false_on);
        assert_eq!(tally.dropouts(), dropouts);
        let mut all_latencies = tally.switch_on_latency_ns.clone();
        // The brute force has no censoring; censored entries are the missed ones.
        assert_eq!(all_latencies.len(), latencies.len());
        all_latencies.sort_unstable();
        assert_eq!(all_latencies, latencies);
        assert_eq!(
            tally.empty_ns + tally.moving_ns + tally.still_ns,
            truth.duration_ns() as u64
        );
    }
}

#[test]
fn longer_hold_never_more_dropouts_never_less_false_on() {
    // The argument is in the sweep module's doc. Checked on 80 random trials at 12 holds
    // from 10 ms to 8 s, each alone and all pooled, with a min-on no longer than the
    // shortest hold.
    let mut rng = ChaCha8Rng::seed_from_u64(2026);
    let holds_s = [
        0.01, 0.02, 0.05, 0.1, 0.2, 0.35, 0.5, 1.0, 1.5, 2.5, 4.0, 8.0,
    ];
    let mut owned = Vec::new();
    for _ in 0..80 {
        let truth = random_truth(&mut rng);
        let period_ms = 10 * rng.random_range(1..=10);
        let frames = random_frames(&mut rng, truth.duration_ns(), period_ms);
        owned.push((frames, truth));
    }
    let trials: Vec<PresenceTrial> = owned
        .iter()
        .map(|(frames, truth)| PresenceTrial { frames, truth })
        .collect();
    let timer = Timer::from_ns(MS, 5 * MS, 0).unwrap();
    let check = |trials: &[PresenceTrial]| {
        let curve = hold_sweep(trials, &timer, &holds_s).unwrap();
        for pair in curve.windows(2) {
            let (short, long) = (&pair[0].tally, &pair[1].tally);
            assert!(long.false_on_ns >= short.false_on_ns);
            assert!(long.dropouts() <= short.dropouts());
            assert!(long.dropout_ns <= short.dropout_ns);
            assert!(long.longest_dropout_ns <= short.longest_dropout_ns);
            assert_eq!(long.missed_periods, short.missed_periods);
            // Each entry's latency can only fall (0 once a hold carries over the entry).
            assert_eq!(long.switch_on_censored_ns, short.switch_on_censored_ns);
            assert!(long
                .switch_on_latency_ns
                .iter()
                .zip(&short.switch_on_latency_ns)
                .all(|(l, s)| l <= s));
            let rates = (
                pair[0].false_on_s_per_day(),
                pair[1].false_on_s_per_day(),
                pair[0].dropouts_per_occupied_h(),
                pair[1].dropouts_per_occupied_h(),
            );
            if let (Some(f0), Some(f1), Some(d0), Some(d1)) = rates {
                assert!(f1 >= f0 && d1 <= d0);
            }
        }
    };
    for trial in &trials {
        check(std::slice::from_ref(trial));
    }
    check(&trials);
    // The test has teeth: over the sweep, pooled drop-outs fall and false-on time rises.
    let curve = hold_sweep(&trials, &timer, &holds_s).unwrap();
    let (first, last) = (&curve[0].tally, &curve[curve.len() - 1].tally);
    assert!(
        first.dropouts() > last.dropouts() + 50,
        "{} {}",
        first.dropouts(),
        last.dropouts()
    );
    assert!(first.false_on_ns * 2 < last.false_on_ns);
}

#[test]
fn monotonicity_needs_no_lockout_and_a_short_min_on() {
    let s = 1_000_000_000i64;
    let empty = PresenceTruth::from_segments(&[Segment {
        start_ns: 0,
        end_ns: 30 * s,
        occupancy: Occupancy::Empty,
    }])
    .unwrap();
    let frames_at = |times_ms: &[i64]| -> Vec<ConditionFrame> {
        times_ms
            .iter()
            .map(|&t| ConditionFrame {
                t_ns: t * MS,
                on: true,
            })
            .collect()
    };
    // Lock-out 2 s, triggers at 1 s and 3.5 s, empty room.
    // Hold 0.5 s: [1, 1.5), locked until 3.5; 3.5 >= 3.5 -> [3.5, 4.0): false-on 1.0 s.
    // Hold 0.6 s: [1, 1.6), locked until 3.6; 3.5 is lost: false-on 0.6 s — less.
    let frames = frames_at(&[1000, 3500]);
    let with_lockout = |hold_ms: i64| {
        let timer = Timer::from_ns(hold_ms * MS, 0, 2 * s).unwrap();
        score_trial(&frames, &empty, &timer).unwrap().false_on_ns
    };
    assert_eq!(with_lockout(500), 1000 * MS as u64);
    assert_eq!(with_lockout(600), 600 * MS as u64);
    // Min-on 10 s, triggers at 0.5, 10 and 11.5 s.
    // Hold 1 s: on 0.5, expiry max(10.5, 1.5) = 10.5; 10 -> max(10.5, 11) = 11; 11.5 > 11:
    // off at 11, on again at 11.5 until 21.5: 10.5 + 10 = 20.5 s.
    // Hold 2 s: expiry 10.5; 10 -> 12; 11.5 -> 13.5: one interval [0.5, 13.5) = 13 s — less.
    let frames = frames_at(&[500, 10_000, 11_500]);
    let with_min_on = |hold_ms: i64| {
        let timer = Timer::from_ns(hold_ms * MS, 10 * s, 0).unwrap();
        score_trial(&frames, &empty, &timer).unwrap().false_on_ns
    };
    assert_eq!(with_min_on(1000), 20_500 * MS as u64);
    assert_eq!(with_min_on(2000), 13_000 * MS as u64);
}

#[test]
fn sums_are_exact_and_independent_of_order() {
    // 200 random trials with times in odd nanoseconds (frame period 33.333333 ms rounds to
    // whole ns differently at every frame): the merged tally is the same in forward, reverse
    // and 5 shuffled orders, and each count or time equals the plain integer sum over trials.
    let mut rng = ChaCha8Rng::seed_from_u64(99);
    let timer = Timer::new(1.7).unwrap().with_lockout_s(0.3).unwrap();
    let tallies: Vec<PresenceTally> = (0..200)
        .map(|_| {
            let truth = random_truth(&mut rng);
            let mut on = false;
            let frames: Vec<ConditionFrame> = (1..)
                .map(|k| ((k as f64 / 30.0) * 1e9).round() as i64)
                .take_while(|&t| t <= truth.duration_ns())
                .map(|t_ns| {
                    on = if on {
                        rng.random_bool(0.6)
                    } else {
                        rng.random_bool(0.03)
                    };
                    ConditionFrame { t_ns, on }
                })
                .collect();
            score_trial(&frames, &truth, &timer).unwrap()
        })
        .collect();
    let merged = |order: &[usize]| {
        let mut total = PresenceTally::default();
        for &i in order {
            total.merge(&tallies[i]);
        }
        total
    };
    let forward: Vec<usize> = (0..tallies.len()).collect();
    let reference = merged(&forward);
    let reverse: Vec<usize> = forward.iter().rev().copied().collect();
    assert_eq!(merged(&reverse), reference);
    for _ in 0..5 {
        let mut order = forward.clone();
        order.shuffle(&mut rng);
        assert_eq!(merged(&order), reference);
    }
    // Pairwise tree merge (as shards would) gives the same too.
    let mut level: Vec<PresenceTally> = tallies.clone();
    while level.len() > 1 {
        level = level
            .chunks(2)
            .map(|pair| {
                let mut sum = pair[0].clone();
                if let Some(second) = pair.get(1) {
                    sum.merge(second);
                }
                sum
            })
            .collect();
    }
    assert_eq!(level[0], reference);
    let sum = |field: fn(&PresenceTally) -> u64| tallies.iter().map(field).sum::<u64>();
    assert_eq!(reference.false_on_ns, sum(|t| t.false_on_ns));
    assert_eq!(reference.empty_ns, sum(|t| t.empty_ns));
    assert_eq!(reference.dropout_ns, sum(|t| t.dropout_ns));
    assert_eq!(reference.dropouts(), sum(|t| t.dropouts()));
    assert_eq!(reference.false_switch_ons, sum(|t| t.false_switch_ons));
    assert_eq!(
        reference.switch_on_latency_ns.len() as u64,
        sum(|t| t.switch_on_latency_ns.len() as u64)
    );
    assert!(reference.false_on_ns > 0 && reference.dropouts() > 0);
}
