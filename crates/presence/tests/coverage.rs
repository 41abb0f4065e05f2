//! Coverage of the false-on-time interval against a simulated detector of known rate.
//!
//! The simulated detector's condition is true at each frame independently with probability
//! `p`; frames end at `jP`, `j = 1..N`; the room is empty for the whole trial `[0, NP)`; the
//! timer is a plain hold of `h` frame periods. For `t` in `[kP, (k+1)P)` the output is on iff
//! one of the frames `j` with `k − h < j ≤ k` (and `j ≥ 1`) is true, i.e. with probability
//! `1 − (1 − p)^min(k, h)` (the on-set is `∪ [t_j, t_j + hP)`, crate doc). So the expected
//! false-on time of a trial is exactly `P · Σ_{k=0}^{N−1} (1 − (1 − p)^min(k, h))`, and the
//! known rate is that over the trial's length, in seconds per day. The episodes vary in
//! length (bursts of nearby true frames merge), so this is not the equal-weight case in which
//! the gamma interval reduces to Garwood's.
//!
//! Bar: a nominal 95 % interval must cover the known rate for at least 44 of 50 seeds (the
//! bar used for the other intervals of echobench; 44 is about the 2.5 % point of
//! Binomial(50, 0.95)).

use echobench_presence::{
    score_trial, ConditionFrame, Occupancy, PresenceTally, PresenceTruth, Segment, Timer,
};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

const PERIOD_NS: i64 = 100_000_000;

struct Regime {
    name: &'static str,
    p: f64,
    hold_frames: i64,
    frames_per_trial: i64,
    trials: usize,
}

fn known_s_per_day(regime: &Regime) -> f64 {
    let mut on_frames = 0.0;
    for k in 0..regime.frames_per_trial {
        on_frames += 1.0 - (1.0 - regime.p).powi(k.min(regime.hold_frames) as i32);
    }
    on_frames / regime.frames_per_trial as f64 * 86_400.0
}

fn simulate(regime: &Regime, seed: u64) -> PresenceTally {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let duration_ns = regime.frames_per_trial * PERIOD_NS;
    let truth = PresenceTruth::from_segments(&[Segment {
        start_ns: 0,
        end_ns: duration_ns,
        occupancy: Occupancy::Empty,
    }])
    .unwrap();
    let timer = Timer::from_ns(regime.hold_frames * PERIOD_NS, 0, 0).unwrap();
    let mut total = PresenceTally::default();
    for _ in 0..regime.trials {
        let frames: Vec<ConditionFrame> = (1..=regime.frames_per_trial)
            .map(|j| ConditionFrame {
                t_ns: j * PERIOD_NS,
                on: rng.random_bool(regime.p),
            })
            .collect();
        total.merge(&score_trial(&frames, &truth, &timer).unwrap());
    }
    total
}

fn check(regime: &Regime) {
    let known = known_s_per_day(regime);
    let timer = Timer::from_ns(regime.hold_frames * PERIOD_NS, 0, 0).unwrap();
    let mut covered = 0;
    let mut width_over_rate = Vec::new();
    let mut episodes = 0;
    for seed in 0..50 {
        let tally = simulate(regime, 1000 + seed);
        let rate = tally.false_on_s_per_day(&timer, 0.95).unwrap();
        covered += usize::from(rate.interval.contains(known));
        width_over_rate.push(rate.interval.width() / known);
        episodes += tally.false_on_episodes;
    }
    width_over_rate.sort_by(f64::total_cmp);
    let median_width = width_over_rate[25];
    eprintln!(
        "{}: known {known:.1} s/day, covered {covered}/50, median width / rate {median_width:.2}, mean episodes {:.1}",
        regime.name,
        episodes as f64 / 50.0
    );
    assert!(covered >= 44, "{}: covered {covered} of 50", regime.name);
    // Not a vacuous interval: its median width stays within a bound set from the Garwood
    // width for the expected number of episodes (about 4/sqrt(episodes) of the rate, times
    // 1.5 for the spread of the episode lengths).
    let bound = 1.5 * 4.0 / (episodes as f64 / 50.0).sqrt() + 0.5;
    assert!(
        median_width < bound,
        "{}: median width {median_width} of the rate",
        regime.name
    );
}

#[test]
fn many_short_episodes() {
    // p = 2e-4 per 0.1 s frame, hold 2 s: about 7 episodes of ~2 s per hour; 4 h per seed.
    check(&Regime {
        name: "sparse, 2 s hold",
        p: 2e-4,
        hold_frames: 20,
        frames_per_trial: 36_000,
        trials: 4,
    });
}

#[test]
fn merging_bursts_of_varied_length() {
    // p = 0.01, hold 3 s: the output is on a quarter of the time, episodes merge many frames
    // and vary widely in length; 10 min per seed.
    check(&Regime {
        name: "busy, 3 s hold",
        p: 0.01,
        hold_frames: 30,
        frames_per_trial: 6_000,
        trials: 1,
    });
}

#[test]
fn a_handful_of_episodes() {
    // p = 5e-5, hold 5 s: about 3.6 episodes in the 2 h per seed, often 0–2.
    check(&Regime {
        name: "rare, 5 s hold",
        p: 5e-5,
        hold_frames: 50,
        frames_per_trial: 36_000,
        trials: 2,
    });
}
