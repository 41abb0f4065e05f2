//! The retrigger timer and the output pin it drives.

use crate::{seconds_to_ns, ConditionFrame, PresenceError, NS_PER_S};

/// A product's retrigger timer: hold, minimum on-time and lock-out, in whole nanoseconds.
/// Invariant: `hold_ns > 0`, the others `>= 0`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Timer {
    hold_ns: i64,
    min_on_ns: i64,
    lockout_ns: i64,
}

impl Timer {
    /// A plain retrigger timer: any condition frame restarts a hold of `hold_s`.
    ///
    /// # Errors
    /// When `hold_s` is not finite, not > 0 (after rounding to ns) or above
    /// [`crate::MAX_TIME_S`].
    ///
    /// ```
    /// let timer = echobench_presence::Timer::new(30.0).unwrap().with_lockout_s(2.0).unwrap();
    /// assert_eq!(timer.hold_ns(), 30_000_000_000);
    /// assert!(echobench_presence::Timer::new(0.0).is_err());
    /// ```
    pub fn new(hold_s: f64) -> Result<Self, PresenceError> {
        Timer::from_ns(seconds_to_ns("hold_s", hold_s)?, 0, 0)
    }

    /// A timer from whole nanoseconds.
    ///
    /// # Errors
    /// When `hold_ns <= 0`, a value is negative, or one exceeds [`crate::MAX_TIME_S`].
    pub fn from_ns(hold_ns: i64, min_on_ns: i64, lockout_ns: i64) -> Result<Self, PresenceError> {
        let max_ns = (crate::MAX_TIME_S as i64) * NS_PER_S;
        let check = |name: &'static str, value: i64, min: i64| {
            if (min..=max_ns).contains(&value) {
                Ok(value)
            } else {
                Err(PresenceError::InvalidParameter {
                    name,
                    value: value as f64 / 1e9,
                    allowed: if min > 0 {
                        "> 0 (at least 1 ns) and at most 1e9 s"
                    } else {
                        ">= 0 and at most 1e9 s"
                    },
                })
            }
        };
        Ok(Timer {
            hold_ns: check("hold_s", hold_ns, 1)?,
            min_on_ns: check("min_on_s", min_on_ns, 0)?,
            lockout_ns: check("lockout_s", lockout_ns, 0)?,
        })
    }

    /// The same timer with a minimum on-time: once on, the output stays on at least this long.
    ///
    /// # Errors
    /// When `min_on_s` is not finite, negative or too large.
    pub fn with_min_on_s(self, min_on_s: f64) -> Result<Self, PresenceError> {
        Timer::from_ns(
            self.hold_ns,
            seconds_to_ns("min_on_s", min_on_s)?,
            self.lockout_ns,
        )
    }

    /// The same timer with a lock-out: after switching off, the output cannot switch on again
    /// for this long.
    ///
    /// # Errors
    /// When `lockout_s` is not finite, negative or too large.
    pub fn with_lockout_s(self, lockout_s: f64) -> Result<Self, PresenceError> {
        Timer::from_ns(
            self.hold_ns,
            self.min_on_ns,
            seconds_to_ns("lockout_s", lockout_s)?,
        )
    }

    /// The same timer with another hold (the hold-time sweep).
    ///
    /// # Errors
    /// As [`Timer::from_ns`].
    pub fn with_hold_ns(self, hold_ns: i64) -> Result<Self, PresenceError> {
        Timer::from_ns(hold_ns, self.min_on_ns, self.lockout_ns)
    }

    /// Hold after the last trigger, ns.
    pub fn hold_ns(&self) -> i64 {
        self.hold_ns
    }

    /// Hold after the last trigger, seconds.
    pub fn hold_s(&self) -> f64 {
        self.hold_ns as f64 / 1e9
    }

    /// Minimum on-time, ns.
    pub fn min_on_ns(&self) -> i64 {
        self.min_on_ns
    }

    /// Lock-out after switching off, ns.
    pub fn lockout_ns(&self) -> i64 {
        self.lockout_ns
    }

    /// How long every switch-on keeps the output on at least (unless the trial ends first),
    /// `max(hold, min_on)`, ns.
    pub fn guaranteed_on_ns(&self) -> i64 {
        self.hold_ns.max(self.min_on_ns)
    }
}

/// The output pin of one trial: its on-intervals `[start, end)` inside `[0, duration)`, in
/// time order and separated by off time, and the instants at which a condition frame
/// triggered the timer (switched it on or restarted its hold).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct OutputPin {
    duration_ns: i64,
    on: Vec<(i64, i64)>,
    triggers_ns: Vec<i64>,
}

impl OutputPin {
    /// Drives the pin from condition frames in time order (see the crate doc for the exact
    /// rules). Frames outside `[0, duration_ns]` are ignored.
    ///
    /// # Errors
    /// When a frame comes before the previous one, or `duration_ns` is negative or above
    /// [`crate::MAX_TIME_S`].
    ///
    /// ```
    /// use echobench_presence::{ConditionFrame, OutputPin, Timer};
    /// let s = 1_000_000_000;
    /// let frames = [
    ///     ConditionFrame { t_ns: s, on: true },
    ///     ConditionFrame { t_ns: 3 * s, on: true }, // exactly when the 2 s hold runs out
    ///     ConditionFrame { t_ns: 6 * s, on: true },
    /// ];
    /// let pin = OutputPin::drive(&frames, &Timer::new(2.0).unwrap(), 7 * s).unwrap();
    /// assert_eq!(pin.on_intervals(), &[(s, 5 * s), (6 * s, 7 * s)]);
    /// ```
    pub fn drive(
        frames: &[ConditionFrame],
        timer: &Timer,
        duration_ns: i64,
    ) -> Result<Self, PresenceError> {
        if !(0..=crate::MAX_TIME_S as i64 * NS_PER_S).contains(&duration_ns) {
            return Err(PresenceError::InvalidParameter {
                name: "duration_s",
                value: duration_ns as f64 / 1e9,
                allowed: ">= 0 and at most 1e9 s",
            });
        }
        let mut on = Vec::new();
        let mut triggers_ns = Vec::new();
        // (switch-on instant, expiry) while the output is on.
        let mut running: Option<(i64, i64)> = None;
        let mut locked_until_ns = i64::MIN;
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
            if frame.t_ns < 0 || frame.t_ns > duration_ns {
                continue;
            }
            let t = frame.t_ns;
            if let Some((start, expiry)) = running {
                // Strictly after the expiry: the output went off at the expiry. A frame at
                // the expiry itself still finds it on (half-open holds that touch merge).
                if t > expiry {
                    on.push((start, expiry));
                    locked_until_ns = expiry.saturating_add(timer.lockout_ns);
                    running = None;
                }
            }
            if !frame.on {
                continue;
            }
            match running {
                Some((start, expiry)) => {
                    running = Some((start, expiry.max(t + timer.hold_ns)));
                    triggers_ns.push(t);
                }
                None if t >= locked_until_ns => {
                    running = Some((t, t + timer.guaranteed_on_ns()));
                    triggers_ns.push(t);
                }
                // Locked out: the frame is lost, not remembered for later.
                None => {}
            }
        }
        if let Some(last) = running {
            on.push(last);
        }
        let on = on
            .into_iter()
            .map(|(start, end)| (start, end.min(duration_ns)))
            .filter(|(start, end)| start < end)
            .collect();
        Ok(OutputPin {
            duration_ns,
            on,
            triggers_ns,
        })
    }

    /// The on-intervals `[start, end)`, ns, in time order; consecutive ones are separated by
    /// off time.
    pub fn on_intervals(&self) -> &[(i64, i64)] {
        &self.on
    }

    /// The instants at which a frame switched the output on or restarted its hold, ns.
    pub fn triggers_ns(&self) -> &[i64] {
        &self.triggers_ns
    }

    /// The trial's duration, ns.
    pub fn duration_ns(&self) -> i64 {
        self.duration_ns
    }

    /// The on-interval containing `t_ns`, if the output is on then.
    pub fn on_interval_at(&self, t_ns: i64) -> Option<(i64, i64)> {
        let index = self.on.partition_point(|&(_, end)| end <= t_ns);
        self.on
            .get(index)
            .copied()
            .filter(|&(start, _)| start <= t_ns)
    }

    /// Whether the output is on at `t_ns`.
    pub fn is_on(&self, t_ns: i64) -> bool {
        self.on_interval_at(t_ns).is_some()
    }

    /// Total on-time, ns.
    pub fn on_ns(&self) -> u64 {
        self.on
            .iter()
            .map(|&(start, end)| (end - start) as u64)
            .sum()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    const S: i64 = NS_PER_S;

    fn frames_at(times_s: &[f64]) -> Vec<ConditionFrame> {
        times_s
            .iter()
            .map(|&t| ConditionFrame {
                t_ns: (t * 1e9).round() as i64,
                on: true,
            })
            .collect()
    }

    #[test]
    fn hold_below_at_and_above_the_gap() {
        // Triggers at 1 s and 4 s (gap 3 s), trial 10 s.
        // hold 2 s: [1,3) and [4,6): the output is off over [3,4).
        // hold 3 s: the hold from 1 s runs out at 4 s, the instant of the next trigger: one
        //           interval [1,7) (touching half-open holds merge).
        // hold 4 s: [1,8).
        let frames = frames_at(&[1.0, 4.0]);
        let pin = |hold_s: f64| {
            OutputPin::drive(&frames, &Timer::new(hold_s).unwrap(), 10 * S)
                .unwrap()
                .on_intervals()
                .to_vec()
        };
        assert_eq!(pin(2.0), [(S, 3 * S), (4 * S, 6 * S)]);
        assert_eq!(pin(3.0), [(S, 7 * S)]);
        assert_eq!(pin(4.0), [(S, 8 * S)]);
    }

    #[test]
    fn min_on_and_lockout_worked_by_hand() {
        // hold 2 s, min-on 5 s, lock-out 2 s; triggers 1, 5, 5.5, 6, 9, 12, 17 s; trial 20 s.
        // 1 s: switches on, expiry max(1+2, 1+5) = 6.   5 s <= 6: expiry max(6, 7) = 7.
        // 5.5 s: 7.5.  6 s: 8.  9 s > 8: off at 8, locked until 10; 9 s is lost.
        // 12 s >= 10: on, expiry max(14, 17) = 17.  17 s <= 17: retrigger, expiry 19.
        let frames = frames_at(&[1.0, 5.0, 5.5, 6.0, 9.0, 12.0, 17.0]);
        let timer = Timer::new(2.0)
            .unwrap()
            .with_min_on_s(5.0)
            .unwrap()
            .with_lockout_s(2.0)
            .unwrap();
        let pin = OutputPin::drive(&frames, &timer, 20 * S).unwrap();
        assert_eq!(pin.on_intervals(), &[(S, 8 * S), (12 * S, 19 * S)]);
        let triggers: Vec<i64> = [1.0, 5.0, 5.5, 6.0, 12.0, 17.0]
            .iter()
            .map(|t: &f64| (t * 1e9) as i64)
            .collect();
        assert_eq!(pin.triggers_ns(), triggers.as_slice());
        // A frame exactly when the lock-out ends may switch on: off at 8, lock-out to 10.
        let at_end = OutputPin::drive(&frames_at(&[1.0, 10.0]), &timer, 20 * S).unwrap();
        assert_eq!(at_end.on_intervals(), &[(S, 6 * S), (10 * S, 15 * S)]);
    }

    #[test]
    fn clipped_to_the_trial_and_refuses_time_going_back() {
        // Trigger at 9 s with hold 2 s in a 10 s trial: [9,10). A frame at 10 s (the end)
        // would start an interval outside [0, 10): nothing. A frame at 11 s is ignored.
        let pin = OutputPin::drive(&frames_at(&[9.0]), &Timer::new(2.0).unwrap(), 10 * S).unwrap();
        assert_eq!(pin.on_intervals(), &[(9 * S, 10 * S)]);
        let pin =
            OutputPin::drive(&frames_at(&[10.0, 11.0]), &Timer::new(2.0).unwrap(), 10 * S).unwrap();
        assert!(pin.on_intervals().is_empty());
        let back = OutputPin::drive(&frames_at(&[2.0, 1.0]), &Timer::new(2.0).unwrap(), 10 * S);
        assert!(matches!(
            back,
            Err(PresenceError::OutOfOrder { index: 1, .. })
        ));
    }

    #[test]
    fn plain_timer_matches_the_definition_on_random_frames() {
        // Without min-on and lock-out: on(t) <=> some condition frame t_k <= t < t_k + hold.
        // Checked at every 1 ms of a grid on which every frame and hold lies.
        let mut rng = ChaCha8Rng::seed_from_u64(11);
        for _ in 0..40 {
            let period_ms: i64 = rng.random_range(5..50);
            let frames: Vec<ConditionFrame> = (1..200)
                .map(|k| ConditionFrame {
                    t_ns: k * period_ms * 1_000_000,
                    on: rng.random_bool(0.15),
                })
                .collect();
            let hold_ms: i64 = rng.random_range(1..300);
            let duration_ms = 200 * period_ms;
            let timer = Timer::from_ns(hold_ms * 1_000_000, 0, 0).unwrap();
            let pin = OutputPin::drive(&frames, &timer, duration_ms * 1_000_000).unwrap();
            for t_ms in 0..duration_ms {
                let t = t_ms * 1_000_000;
                let expected = frames
                    .iter()
                    .any(|f| f.on && f.t_ns <= t && t < f.t_ns + hold_ms * 1_000_000);
                assert_eq!(pin.is_on(t), expected, "t = {t_ms} ms, hold {hold_ms} ms");
            }
        }
    }
}
