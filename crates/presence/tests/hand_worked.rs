//! Hand-worked presence scoring: a score trace and a truth timeline written out, with every
//! expected figure derived in the comments.

use echobench_core::{Interval, Score};
use echobench_presence::{
    condition_frames, score_trial, LatencyQuantile, MOfN, Occupancy, PresenceTally, PresenceTruth,
    Timer,
};

const S: u64 = 1_000_000_000;

/// Truth of the worked example, trial 20 s:
/// empty [0, 4), moving [4, 8) (walks in), still [8, 14) (sits and reads), empty [14, 20).
fn walk_in_sit_leave() -> PresenceTruth {
    let i = |a: f64, b: f64| Interval::new(a, b).unwrap();
    PresenceTruth::new(&[
        (i(0.0, 4.0), Occupancy::Empty),
        (i(4.0, 8.0), Occupancy::OccupiedMoving),
        (i(8.0, 14.0), Occupancy::OccupiedStill),
        (i(14.0, 20.0), Occupancy::Empty),
    ])
    .unwrap()
}

/// Scores every 0.5 s from 0.5 s to 20 s: 2.0 at 1, 5, 5.5, 6, 9, 12 and 17 s, 0.1 elsewhere.
/// At threshold 1, 1-of-1, the condition holds at exactly those seven frames: a false alarm
/// at 1 s, the walk-in at 5–6 s, two fidgets of the reader at 9 and 12 s (3 s apart: the gap
/// between retriggers), a false alarm at 17 s.
fn trace() -> Vec<Score> {
    let hits = [1.0, 5.0, 5.5, 6.0, 9.0, 12.0, 17.0];
    (1..=40)
        .map(|k| {
            let t_s = 0.5 * k as f64;
            let value = if hits.contains(&t_s) { 2.0 } else { 0.1 };
            Score { t_s, value }
        })
        .collect()
}

fn score(timer: &Timer) -> PresenceTally {
    let frames = condition_frames(&trace(), 1.0, MOfN::SINGLE);
    score_trial(&frames, &walk_in_sit_leave(), timer).unwrap()
}

#[test]
fn exposure_of_the_worked_example() {
    // Empty 4 + 6 = 10 s, moving 4 s, still 6 s; one occupied period [4, 14) with an entry
    // at 4 s and an exit at 14 s.
    let tally = score(&Timer::new(3.0).unwrap());
    assert_eq!(tally.empty_ns, 10 * S);
    assert_eq!(tally.moving_ns, 4 * S);
    assert_eq!(tally.still_ns, 6 * S);
    assert_eq!(
        (tally.occupied_periods, tally.entries, tally.exits),
        (1, 1, 1)
    );
}

#[test]
fn hold_below_the_gap_drops_the_reader() {
    // Hold 2 s (below the 3 s gap). Pin: 1 -> [1,3); 5, 5.5, 6 -> [5,8); 9 > 8 -> [9,11);
    // 12 > 11 -> [12,14); 17 > 14 -> [17,19).
    // False-on: [1,3) = 2 s and [17,19) = 2 s -> 4 s in 2 episodes ([12,14) ends at the exit).
    // False switch-ons: at 1 s and 17 s (empty) -> 2.
    // Entry at 4 s: first trigger α = 5 s; the output is off at 4 s -> latency 5 − 4 = 1 s.
    // Drop-outs after α inside [4,14): off [8,9) and [11,12), both starting while the person
    // is still (8 s is still) -> 2 still drop-outs of 1 s; total 2 s, longest 1 s.
    // Exit at 14 s: the output is off at 14 s ([12,14) is half-open) -> switch-off time 0.
    let tally = score(&Timer::new(2.0).unwrap());
    assert_eq!(tally.false_on_ns, 4 * S);
    assert_eq!(tally.false_on_episodes, 2);
    assert_eq!(tally.false_switch_ons, 2);
    assert_eq!(tally.switch_on_latency_ns, vec![S]);
    assert_eq!((tally.dropouts_moving, tally.dropouts_still), (0, 2));
    assert_eq!(tally.dropout_ns, 2 * S);
    assert_eq!(tally.longest_dropout_ns, S);
    assert_eq!(tally.missed_periods, 0);
    assert_eq!(tally.switch_off_ns, vec![0]);
    assert!(tally.switch_off_censored_ns.is_empty());
}

#[test]
fn hold_at_the_gap_keeps_the_reader_lit() {
    // Hold 3 s (equal to the gap). Pin: 1 -> [1,4), off at 4 (the entry instant);
    // 5 -> expiry 8, 5.5 -> 8.5, 6 -> 9; 9 <= 9 retriggers (touching holds merge) -> 12;
    // 12 <= 12 -> 15; 17 > 15 -> [5,15); 17 -> [17,20) (clipped at the trial's end).
    // False-on: [1,4) = 3 s, [14,15) = 1 s (the hold running on after the exit),
    // [17,20) = 3 s -> 7 s in 3 episodes; false switch-ons 1 s and 17 s -> 2.
    // Entry at 4 s: α = 5 s, output off at 4 s -> latency 1 s. No off time in [5,14) -> no
    // drop-out. Exit at 14 s: on until 15 s, before the trial ends -> switch-off 1 s.
    let tally = score(&Timer::new(3.0).unwrap());
    assert_eq!(tally.false_on_ns, 7 * S);
    assert_eq!(tally.false_on_episodes, 3);
    assert_eq!(
        tally.false_on_episode_sq_ns2,
        19u128 * u128::from(S) * u128::from(S)
    );
    assert_eq!(tally.longest_false_on_episode_ns, 3 * S);
    assert_eq!(tally.false_switch_ons, 2);
    assert_eq!(tally.switch_on_latency_ns, vec![S]);
    assert_eq!(tally.dropouts(), 0);
    assert_eq!(tally.dropout_ns, 0);
    assert_eq!(tally.switch_off_ns, vec![S]);
}

#[test]
fn hold_above_the_gap_carries_over_the_false_alarm() {
    // Hold 4 s (above the gap). Pin: 1 -> [1,5); 5 <= 5 retriggers -> 9; 5.5 -> 9.5;
    // 6 -> 10; 9 -> 13; 12 -> 16; 17 > 16 -> [1,16); 17 -> [17,20).
    // False-on: [1,4) = 3 s, [14,16) = 2 s, [17,20) = 3 s -> 8 s, 3 episodes; false
    // switch-ons 1 s and 17 s -> 2.
    // Entry at 4 s: α = 5 s and the output is on all through [4,5] (the false alarm's hold
    // carried the person to the first trigger) -> latency 0. No drop-out.
    // Exit at 14 s: on until 16 s -> switch-off 2 s (the hold after the last fidget, 12 + 4,
    // minus the exit: "the hold plus whatever keeps retriggering it").
    let tally = score(&Timer::new(4.0).unwrap());
    assert_eq!(tally.false_on_ns, 8 * S);
    assert_eq!(tally.false_on_episodes, 3);
    assert_eq!(tally.false_switch_ons, 2);
    assert_eq!(tally.switch_on_latency_ns, vec![0]);
    assert_eq!(tally.dropouts(), 0);
    assert_eq!(tally.switch_off_ns, vec![2 * S]);
}

#[test]
fn min_on_and_lockout_worked_example() {
    // Hold 2 s, min-on 5 s, lock-out 2 s (pin worked in the pin module's test):
    // on [1,8) and [12,19); the fidget at 9 s falls in the lock-out (off at 8, locked to 10).
    // False-on: [1,4) = 3 s and [14,19) = 5 s -> 8 s; false switch-ons: only 1 s (12 s is
    // occupied) -> 1.
    // Entry at 4 s: α = 5 s, on through [4,5] from the 1 s switch-on -> latency 0.
    // Drop-out: off [8,12) starting while still -> 1 still drop-out of 4 s.
    // Exit at 14 s: on until 19 s -> switch-off 5 s.
    let timer = Timer::new(2.0)
        .unwrap()
        .with_min_on_s(5.0)
        .unwrap()
        .with_lockout_s(2.0)
        .unwrap();
    let tally = score(&timer);
    assert_eq!(tally.false_on_ns, 8 * S);
    assert_eq!(tally.false_switch_ons, 1);
    assert_eq!(tally.switch_on_latency_ns, vec![0]);
    assert_eq!((tally.dropouts_moving, tally.dropouts_still), (0, 1));
    assert_eq!(tally.longest_dropout_ns, 4 * S);
    assert_eq!(tally.switch_off_ns, vec![5 * S]);
}

/// Truth for the always-on and never-firing detectors, 60 s: moving [0,10) (someone is there
/// at power-up), empty [10,30), still [30,50), empty [50,60).
fn two_periods() -> PresenceTruth {
    let i = |a: f64, b: f64| Interval::new(a, b).unwrap();
    PresenceTruth::new(&[
        (i(0.0, 10.0), Occupancy::OccupiedMoving),
        (i(10.0, 30.0), Occupancy::Empty),
        (i(30.0, 50.0), Occupancy::OccupiedStill),
        (i(50.0, 60.0), Occupancy::Empty),
    ])
    .unwrap()
}

fn constant_trace(value: f64) -> Vec<Score> {
    (1..=600)
        .map(|k| Score {
            t_s: 0.1 * k as f64,
            value,
        })
        .collect()
}

#[test]
fn always_on_detector() {
    // Condition at every frame (0.1 s apart), hold 0.5 s >= the frame period: the pin is on
    // from the first frame's end, 0.1 s, to the trial's end: [0.1, 60).
    // False-on = all the empty time, 20 + 10 = 30 s (the only off time, [0, 0.1), is
    // occupied); one episode per empty segment; one switch-on, at 0.1 s, occupied -> no
    // false switch-on. Drop-outs: 0 (period 1: α = 0.1 s, never off after; period 2: α =
    // 30 s, never off). Entry at 30 s: on throughout -> latency 0. Exits at 10 s and 50 s:
    // the output never goes off -> censored at the empty time seen, 20 s and 10 s.
    let frames = condition_frames(&constant_trace(1.0), 0.5, MOfN::SINGLE);
    let tally = score_trial(&frames, &two_periods(), &Timer::new(0.5).unwrap()).unwrap();
    assert_eq!(tally.false_on_ns, tally.empty_ns);
    assert_eq!(tally.false_on_ns, 30 * S);
    assert_eq!(tally.false_on_episodes, 2);
    assert_eq!(tally.false_switch_ons, 0);
    assert_eq!(tally.dropouts(), 0);
    assert_eq!(tally.switch_on_latency_ns, vec![0]);
    assert!(tally.switch_off_ns.is_empty());
    assert_eq!(tally.switch_off_censored_ns, vec![10 * S, 20 * S]);
}

#[test]
fn never_firing_detector() {
    // No condition frame: the pin is never on. False-on 0. Each occupied period is missed:
    // one drop-out each, charged to the occupancy at its start (moving at 0 s, still at
    // 30 s), lasting the whole period (10 s, 20 s). Only the second period is an entry: its
    // latency is censored at 20 s (no switch-on before the room emptied); no observed
    // latency, so the median is "not reached". Exits at 10 and 50 s: already off -> 0.
    let frames = condition_frames(&constant_trace(0.0), 0.5, MOfN::SINGLE);
    let tally = score_trial(&frames, &two_periods(), &Timer::new(0.5).unwrap()).unwrap();
    assert_eq!(tally.false_on_ns, 0);
    assert_eq!(tally.false_switch_ons, 0);
    assert_eq!(tally.dropouts(), tally.occupied_periods);
    assert_eq!((tally.dropouts_moving, tally.dropouts_still), (1, 1));
    assert_eq!(tally.missed_periods, 2);
    assert_eq!(tally.dropout_ns, 30 * S);
    assert_eq!(tally.longest_dropout_ns, 20 * S);
    assert!(tally.switch_on_latency_ns.is_empty());
    assert_eq!(tally.switch_on_censored_ns, vec![20 * S]);
    assert_eq!(
        tally.switch_on_latency_quantile(0.5).unwrap(),
        LatencyQuantile::NotReached
    );
    assert_eq!(tally.switch_off_ns, vec![0, 0]);
}

#[test]
fn rates_of_the_worked_example() {
    // Hold 2 s: 2 false switch-ons in 10 s empty = 10/86400 day -> 17280 per day; Garwood 95 %
    // for 2 events: [0.242209, 7.224688] events per exposure unit (Garwood 1936; the stats
    // crate checks these against statsmodels) -> × 8640 per day.
    // 2 drop-outs in 10 s occupied (1/360 h) -> 720 per occupied hour; still: 2 in 6 s -> 1200.
    // False-on 4 s in 10 s empty -> 0.4 × 86400 = 34560 s per day; two episodes of 2 s each,
    // w_M = max(2 s, hold 2 s): equal weights, so the gamma interval is 2 s × Garwood(2).
    let timer = Timer::new(2.0).unwrap();
    let tally = score(&timer);
    let switch_ons = tally.false_switch_ons_per_day(0.95).unwrap();
    assert!((switch_ons.estimate - 17280.0).abs() < 1e-6);
    assert!((switch_ons.interval.low - 0.242209 * 8640.0).abs() < 0.01);
    assert!((switch_ons.interval.high - 7.224688 * 8640.0).abs() < 0.01);
    let all = tally
        .dropouts_per_occupied_h(echobench_presence::OccupiedKind::All, 0.95)
        .unwrap();
    assert!((all.estimate - 720.0).abs() < 1e-9);
    let still = tally
        .dropouts_per_occupied_h(echobench_presence::OccupiedKind::Still, 0.95)
        .unwrap();
    assert!((still.estimate - 1200.0).abs() < 1e-9);
    let false_on = tally.false_on_s_per_day(&timer, 0.95).unwrap();
    assert!((false_on.estimate - 34560.0).abs() < 1e-6);
    // 2 s × Garwood(2, exposure 10 s) in s per day: 2 × [0.242209, 7.224688] / 10 × 86400.
    assert!((false_on.interval.low - 2.0 * 0.242209 * 8640.0).abs() < 0.05);
    assert!((false_on.interval.high - 2.0 * 7.224688 * 8640.0).abs() < 0.05);
}

/// Exits with the output already off are kept apart from the switch-off times: two exits,
/// one at which the output was off (time 0), one left lit for 7 s; the "when on" median is 7 s
/// and one exit was already dark.
#[test]
fn switch_off_over_lit_exits_only() {
    let tally = PresenceTally {
        exits: 2,
        switch_off_ns: vec![0, 7_000_000_000],
        ..PresenceTally::default()
    };
    assert_eq!(tally.exits_already_off(), 1);
    assert_eq!(
        tally.switch_off_quantile_when_on(0.5).unwrap(),
        LatencyQuantile::Observed(7.0)
    );
    // The plain quantile counts the dark exit as an instant switch-off.
    assert_eq!(
        tally.switch_off_quantile(0.5).unwrap(),
        LatencyQuantile::Observed(3.5)
    );
}

/// Kaplan–Meier by hand: lit exits switching off at 20, 21, 22 s and three censored when the
/// trial ended 3, 5 and 21 s after the exit (output still on).
/// Risk sets: at 20 s, 4 at risk (3 s and 5 s left before): S = 3/4; at 21 s, 3 at risk (the
/// censoring at 21 s is still at risk, ties go to the event): S = 3/4 · 2/3 = 1/2, so the
/// median is 21 s; at 22 s, 1 at risk: S = 0, so the 90th percentile is 22 s. Ranking the
/// censored exits above every observed one instead would put the median among them.
#[test]
fn switch_off_median_by_kaplan_meier() {
    let s = 1_000_000_000u64;
    let tally = PresenceTally {
        exits: 6,
        switch_off_ns: vec![20 * s, 21 * s, 22 * s],
        switch_off_censored_ns: vec![3 * s, 5 * s, 21 * s],
        ..PresenceTally::default()
    };
    assert_eq!(
        tally.switch_off_quantile_when_on(0.5).unwrap(),
        LatencyQuantile::Observed(21.0)
    );
    assert_eq!(
        tally.switch_off_quantile_when_on(0.9).unwrap(),
        LatencyQuantile::Observed(22.0)
    );
    assert_eq!(
        tally.switch_off_quantile(0.5).unwrap(),
        LatencyQuantile::NotReached
    );
    // Everything censored: the estimate never leaves 1.
    let dark = PresenceTally {
        switch_off_censored_ns: vec![s, 2 * s],
        ..PresenceTally::default()
    };
    assert_eq!(
        dark.switch_off_quantile_when_on(0.5).unwrap(),
        LatencyQuantile::NotReached
    );
}
