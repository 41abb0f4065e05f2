//! Per-trial presence metrics as integer tallies that add exactly across trials.

use crate::{ConditionFrame, Occupancy, OutputPin, PresenceError, PresenceTruth, Timer};

/// What one trial (or a sum of trials) did, in whole nanoseconds and counts; see the crate doc
/// for each definition. [`PresenceTally::merge`] adds two tallies exactly: counts and times
/// add, maxima take the maximum, lists are concatenated and kept sorted, so the result does not
/// depend on the order of the trials.
#[derive(Debug, Clone, Default, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct PresenceTally {
    /// Empty time, ns (the exposure of false-on time and false switch-ons).
    pub empty_ns: u64,
    /// Occupied time with the person moving, ns.
    pub moving_ns: u64,
    /// Occupied time with the person still, ns.
    pub still_ns: u64,
    /// Occupied periods (maximal runs of occupied time).
    pub occupied_periods: u64,
    /// Entries: occupied periods that start after the trial's start.
    pub entries: u64,
    /// Exits: occupied periods that end before the trial's end.
    pub exits: u64,
    /// Time the output was on while the room was empty, ns.
    pub false_on_ns: u64,
    /// Switch-ons at an instant when the room was empty.
    pub false_switch_ons: u64,
    /// Connected pieces of false-on time (false switch-ons and holds running on after exits).
    pub false_on_episodes: u64,
    /// Sum of the squared lengths of the false-on episodes, ns² (for the interval).
    pub false_on_episode_sq_ns2: u128,
    /// Longest false-on episode, ns.
    pub longest_false_on_episode_ns: u64,
    /// Drop-outs starting while the person was moving (missed periods starting moving included).
    pub dropouts_moving: u64,
    /// Drop-outs starting while the person was still (missed periods starting still included).
    pub dropouts_still: u64,
    /// Occupied periods without a single trigger (each is also one drop-out above).
    pub missed_periods: u64,
    /// Total length of the drop-outs, ns.
    pub dropout_ns: u64,
    /// Longest drop-out, ns (clipped to the trial).
    pub longest_dropout_ns: u64,
    /// Switch-on latencies after entries, ns, sorted.
    pub switch_on_latency_ns: Vec<u64>,
    /// Entries after which the output never came on while the person was there: the occupied
    /// time seen (a lower bound on the latency), ns, sorted.
    pub switch_on_censored_ns: Vec<u64>,
    /// Times from an exit to the output going off, ns, sorted.
    pub switch_off_ns: Vec<u64>,
    /// Exits after which the output was still on at the next entry or the trial's end: the
    /// empty time seen (a lower bound), ns, sorted.
    pub switch_off_censored_ns: Vec<u64>,
}

fn merge_sorted(into: &mut Vec<u64>, other: &[u64]) {
    into.extend_from_slice(other);
    into.sort_unstable();
}

impl PresenceTally {
    /// Adds another tally to this one (exact, order-independent).
    pub fn merge(&mut self, other: &PresenceTally) {
        self.empty_ns += other.empty_ns;
        self.moving_ns += other.moving_ns;
        self.still_ns += other.still_ns;
        self.occupied_periods += other.occupied_periods;
        self.entries += other.entries;
        self.exits += other.exits;
        self.false_on_ns += other.false_on_ns;
        self.false_switch_ons += other.false_switch_ons;
        self.false_on_episodes += other.false_on_episodes;
        self.false_on_episode_sq_ns2 += other.false_on_episode_sq_ns2;
        self.longest_false_on_episode_ns = self
            .longest_false_on_episode_ns
            .max(other.longest_false_on_episode_ns);
        self.dropouts_moving += other.dropouts_moving;
        self.dropouts_still += other.dropouts_still;
        self.missed_periods += other.missed_periods;
        self.dropout_ns += other.dropout_ns;
        self.longest_dropout_ns = self.longest_dropout_ns.max(other.longest_dropout_ns);
        merge_sorted(&mut self.switch_on_latency_ns, &other.switch_on_latency_ns);
        merge_sorted(
            &mut self.switch_on_censored_ns,
            &other.switch_on_censored_ns,
        );
        merge_sorted(&mut self.switch_off_ns, &other.switch_off_ns);
        merge_sorted(
            &mut self.switch_off_censored_ns,
            &other.switch_off_censored_ns,
        );
    }

    /// All drop-outs, moving and still.
    pub fn dropouts(&self) -> u64 {
        self.dropouts_moving + self.dropouts_still
    }

    /// Occupied time, ns.
    pub fn occupied_ns(&self) -> u64 {
        self.moving_ns + self.still_ns
    }

    fn add_dropout(&mut self, occupancy: Occupancy, length_ns: i64) {
        match occupancy {
            Occupancy::OccupiedStill => self.dropouts_still += 1,
            // A drop-out starts inside an occupied period, so Empty cannot happen; moving is
            // the only other label.
            _ => self.dropouts_moving += 1,
        }
        let length = length_ns as u64;
        self.dropout_ns += length;
        self.longest_dropout_ns = self.longest_dropout_ns.max(length);
    }
}

/// Scores one trial's pin against its truth. The pin and the truth must cover the same
/// duration.
///
/// # Errors
/// When the durations differ.
pub fn tally_pin(pin: &OutputPin, truth: &PresenceTruth) -> Result<PresenceTally, PresenceError> {
    let duration = truth.duration_ns();
    if pin.duration_ns() != duration {
        return Err(PresenceError::InvalidParameter {
            name: "pin duration_s",
            value: pin.duration_ns() as f64 / 1e9,
            allowed: "the truth's duration",
        });
    }
    let mut tally = PresenceTally::default();
    let on = pin.on_intervals();

    // Exposure, false-on time and its episodes. Empty segments are maximal and on-intervals
    // are separated by off time, so each non-empty (on-interval ∩ empty segment) is one
    // connected piece of false-on time.
    for segment in truth.segments() {
        let length = (segment.end_ns - segment.start_ns) as u64;
        match segment.occupancy {
            Occupancy::Empty => tally.empty_ns += length,
            Occupancy::OccupiedMoving => tally.moving_ns += length,
            Occupancy::OccupiedStill => tally.still_ns += length,
        }
        if segment.occupancy != Occupancy::Empty {
            continue;
        }
        let first = on.partition_point(|&(_, end)| end <= segment.start_ns);
        for &(start, end) in on.get(first..).unwrap_or_default() {
            if start >= segment.end_ns {
                break;
            }
            let piece = (end.min(segment.end_ns) - start.max(segment.start_ns)) as u64;
            tally.false_on_ns += piece;
            tally.false_on_episodes += 1;
            tally.false_on_episode_sq_ns2 += u128::from(piece) * u128::from(piece);
            tally.longest_false_on_episode_ns = tally.longest_false_on_episode_ns.max(piece);
        }
    }
    tally.false_switch_ons = on
        .iter()
        .filter(|&&(start, _)| truth.occupancy_at(start) == Occupancy::Empty)
        .count() as u64;

    let periods = truth.occupied_periods();
    let triggers = pin.triggers_ns();
    for (index, &(a, b)) in periods.iter().enumerate() {
        tally.occupied_periods += 1;
        let entry = a > 0;
        tally.entries += u64::from(entry);
        // Acquisition: the first trigger inside [a, b).
        let first_trigger = triggers.partition_point(|&t| t < a);
        let acquisition = triggers.get(first_trigger).copied().filter(|&t| t < b);
        match acquisition {
            None => {
                tally.missed_periods += 1;
                tally.add_dropout(truth.occupancy_at(a), b - a);
                if entry {
                    tally.switch_on_censored_ns.push((b - a) as u64);
                }
            }
            Some(alpha) => {
                // A trigger leaves the output on, so this interval exists.
                let (on_start, on_end) = pin.on_interval_at(alpha).unwrap_or((alpha, alpha));
                if entry {
                    let latency = if on_start <= a { 0 } else { alpha - a };
                    tally.switch_on_latency_ns.push(latency as u64);
                }
                // Off-stretches of [alpha, b), each from a switch-off to the next switch-on.
                let mut off_from = on_end;
                let mut next = on.partition_point(|&(start, _)| start <= alpha);
                while off_from < b {
                    let next_on = on.get(next).map_or(i64::MAX, |&(start, _)| start);
                    tally.add_dropout(truth.occupancy_at(off_from), next_on.min(b) - off_from);
                    match on.get(next) {
                        Some(&(_, end)) if next_on < b => off_from = end,
                        _ => break,
                    }
                    next += 1;
                }
            }
        }
        // Switch-off after the exit at b; the room stays empty until c.
        if b < duration {
            tally.exits += 1;
            let c = periods
                .get(index + 1)
                .map_or(duration, |&(next_a, _)| next_a);
            match pin.on_interval_at(b) {
                None => tally.switch_off_ns.push(0),
                Some((_, end)) if end < c => tally.switch_off_ns.push((end - b) as u64),
                Some(_) => tally.switch_off_censored_ns.push((c - b) as u64),
            }
        }
    }
    tally.switch_on_latency_ns.sort_unstable();
    tally.switch_on_censored_ns.sort_unstable();
    tally.switch_off_ns.sort_unstable();
    tally.switch_off_censored_ns.sort_unstable();
    Ok(tally)
}

/// Drives the pin from `frames` with `timer` over the truth's duration and scores it.
///
/// # Errors
/// As [`OutputPin::drive`].
pub fn score_trial(
    frames: &[ConditionFrame],
    truth: &PresenceTruth,
    timer: &Timer,
) -> Result<PresenceTally, PresenceError> {
    let pin = OutputPin::drive(frames, timer, truth.duration_ns())?;
    tally_pin(&pin, truth)
}
