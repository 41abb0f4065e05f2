//! False switch-ons at every threshold of a grid in one pass: what a presence product's
//! thresholds are chosen by on its calibration trials.
//!
//! # Why one pass works
//!
//! With a plain retrigger timer (no lock-out, a minimum on-time no longer than the hold),
//! the output is on at a frame's instant `t_k` exactly when some earlier trigger `t_j`
//! has `t_j + hold >= t_k` (a trigger at the very expiry keeps the output on; see the
//! crate doc). At threshold θ the triggers are the frames whose alarm statistic is ≥ θ,
//! so frame `k` switches the output on at θ iff `statistic_k >= θ` and
//! `W_k < θ`, with `W_k` the largest statistic of the earlier frames within one hold of
//! `t_k`. The thresholds at which frame `k` is a switch-on are therefore the contiguous
//! run `(W_k, statistic_k]` of the sorted grid. `W_k` is a sliding-window maximum
//! (a monotone deque, O(1) amortised per frame), and the runs are added with a
//! difference array, so a trace costs O(frames · log grid) instead of O(frames · grid).
//! A timer with a lock-out or a longer minimum on-time makes the output's state depend
//! on its own history at each threshold; then every threshold is driven on its own
//! ([`OutputPin::drive`]), which is exact and slower.

use crate::{Occupancy, OutputPin, PresenceError, PresenceTruth, StatisticFrame, Timer};
use std::collections::VecDeque;

/// False switch-ons (switch-ons at an instant when the room is empty) of one trial at each
/// threshold of `thresholds` (any order; NaN thresholds are never reached), for the output
/// pin of `timer` against `truth`.
///
/// # Errors
/// Frames out of time order.
pub fn false_switch_ons_at(
    frames: &[StatisticFrame],
    truth: &PresenceTruth,
    timer: &Timer,
    thresholds: &[f64],
) -> Result<Vec<u64>, PresenceError> {
    if timer.lockout_ns() > 0 || timer.min_on_ns() > timer.hold_ns() {
        return thresholds
            .iter()
            .map(|&theta| {
                let conditions: Vec<_> = frames.iter().map(|f| f.condition(theta)).collect();
                let pin = OutputPin::drive(&conditions, timer, truth.duration_ns())?;
                Ok(pin
                    .on_intervals()
                    .iter()
                    .filter(|&&(start, _)| truth.occupancy_at(start) == Occupancy::Empty)
                    .count() as u64)
            })
            .collect();
    }
    let mut order: Vec<usize> = (0..thresholds.len())
        .filter(|&i| !thresholds[i].is_nan())
        .collect();
    order.sort_by(|&a, &b| thresholds[a].total_cmp(&thresholds[b]));
    let sorted: Vec<f64> = order.iter().map(|&i| thresholds[i]).collect();
    let mut difference = vec![0i64; sorted.len() + 1];
    // Earlier triggers still within a hold, as (t_ns, statistic) with decreasing statistics.
    let mut window: VecDeque<(i64, f64)> = VecDeque::new();
    let hold = timer.hold_ns();
    let duration = truth.duration_ns();
    let mut previous_ns = i64::MIN;
    for (index, frame) in frames.iter().enumerate() {
        if frame.t_ns < previous_ns {
            return Err(PresenceError::OutOfOrder {
                index,
                t_ns: frame.t_ns,
                previous_ns,
            });
        }
        previous_ns = frame.t_ns;
        let t = frame.t_ns;
        // Frames outside the trial are ignored by the pin; a NaN statistic triggers nothing.
        if t < 0 || t > duration || frame.statistic.is_nan() {
            continue;
        }
        while window.front().is_some_and(|&(tj, _)| tj + hold < t) {
            window.pop_front();
        }
        let covered = window.front().map(|&(_, s)| s);
        if truth.occupancy_at(t) == Occupancy::Empty {
            // Switch-on thresholds: θ <= statistic, and θ > covered.
            let upper = sorted.partition_point(|&theta| theta <= frame.statistic);
            let lower = covered.map_or(0, |w| sorted.partition_point(|&theta| theta <= w));
            if lower < upper {
                difference[lower] += 1;
                difference[upper] -= 1;
            }
        }
        while window.back().is_some_and(|&(_, s)| s <= frame.statistic) {
            window.pop_back();
        }
        window.push_back((t, frame.statistic));
    }
    let mut out = vec![0u64; thresholds.len()];
    let mut running = 0i64;
    for (slot, step) in order.iter().zip(&difference) {
        running += step;
        out[*slot] = running.max(0) as u64;
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{tally_pin, Segment};
    use rand::{Rng, SeedableRng};

    fn plain(
        frames: &[StatisticFrame],
        truth: &PresenceTruth,
        timer: &Timer,
        thresholds: &[f64],
    ) -> Vec<u64> {
        thresholds
            .iter()
            .map(|&theta| {
                let conditions: Vec<_> = frames.iter().map(|f| f.condition(theta)).collect();
                let pin = OutputPin::drive(&conditions, timer, truth.duration_ns()).unwrap();
                tally_pin(&pin, truth).unwrap().false_switch_ons
            })
            .collect()
    }

    /// The one-pass grid equals driving the pin at each threshold and counting its false
    /// switch-ons with the trial scorer, on random traces, truths and timers (including
    /// frames exactly one hold apart and ties between statistics and thresholds).
    #[test]
    fn grid_equals_the_pin_at_every_threshold() {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
        for case in 0..300 {
            let frame_ns = 50_000_000i64;
            let count = rng.random_range(1..200usize);
            let duration = frame_ns * (count as i64 + rng.random_range(0..5i64));
            let frames: Vec<StatisticFrame> = (0..count)
                .map(|k| StatisticFrame {
                    t_ns: frame_ns * (k as i64 + 1) - rng.random_range(0..2i64) * frame_ns / 2,
                    statistic: if rng.random_bool(0.05) {
                        f64::NAN
                    } else {
                        f64::from(rng.random_range(0..12u8))
                    },
                })
                .collect();
            let mut frames = frames;
            frames.sort_by_key(|f| f.t_ns);
            let mut segments = Vec::new();
            let mut start = 0i64;
            while start < duration {
                let end = (start + frame_ns * rng.random_range(1..40i64)).min(duration);
                let occupancy = match rng.random_range(0..3u8) {
                    0 => Occupancy::Empty,
                    1 => Occupancy::OccupiedMoving,
                    _ => Occupancy::OccupiedStill,
                };
                segments.push(Segment {
                    start_ns: start,
                    end_ns: end,
                    occupancy,
                });
                start = end;
            }
            let truth = PresenceTruth::from_segments(&segments).unwrap();
            let hold_frames = rng.random_range(1..30i64);
            let mut timer = Timer::from_ns(frame_ns * hold_frames, 0, 0).unwrap();
            if case % 5 == 0 {
                timer = Timer::from_ns(frame_ns * hold_frames, frame_ns * 3, frame_ns * 2).unwrap();
            }
            let thresholds: Vec<f64> = vec![11.0, -1.0, 0.0, 3.0, 3.5, f64::NAN, 7.0, 12.0, 5.0];
            assert_eq!(
                false_switch_ons_at(&frames, &truth, &timer, &thresholds).unwrap(),
                plain(&frames, &truth, &timer, &thresholds),
                "case {case}"
            );
        }
    }

    /// Hand-worked: hold 2 s, statistics at 1 s, 3 s, 6 s of 5, 2, 4; empty throughout.
    /// At θ = 2: triggers at 1, 3 (exactly at the expiry: stays on), 6 → 2 switch-ons.
    /// At θ = 4: triggers at 1 and 6 → 2. At θ = 5: only 1 → 1. At θ = 6: none.
    /// At θ = 3: triggers 1, 6 → 2.
    #[test]
    fn hand_worked_grid() {
        let s = 1_000_000_000;
        let frames = [
            StatisticFrame {
                t_ns: s,
                statistic: 5.0,
            },
            StatisticFrame {
                t_ns: 3 * s,
                statistic: 2.0,
            },
            StatisticFrame {
                t_ns: 6 * s,
                statistic: 4.0,
            },
        ];
        let truth = PresenceTruth::from_segments(&[Segment {
            start_ns: 0,
            end_ns: 10 * s,
            occupancy: Occupancy::Empty,
        }])
        .unwrap();
        let timer = Timer::new(2.0).unwrap();
        assert_eq!(
            false_switch_ons_at(&frames, &truth, &timer, &[2.0, 3.0, 4.0, 5.0, 6.0]).unwrap(),
            [2, 2, 2, 1, 0]
        );
    }
}
