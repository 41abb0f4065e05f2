//! Ground truth from the same kinematics that make the signal.
//!
//! A target event is an interval in which a target actor is both moving (its
//! model's active intervals) and inside the coverage zone (horizontal range
//! and azimuth sector about the boresight). The actor's place is the
//! amplitude-weighted centroid of its echoes, sampled at [`TRUTH_RATE_HZ`];
//! entries and exits are therefore located to within 1/[`TRUTH_RATE_HZ`].
//! Nuisance actors and interference sources are listed with their active
//! intervals so that scoring can say which nuisance caused a false alarm.

use crate::render::RadarGeometry;
use crate::spec::CoverageSpec;
use echobench_core::{merge_intervals, Interval};
use echobench_motion::{Echo, MotionModel};

/// Rate at which actors are sampled to find their coverage intervals, Hz.
pub const TRUTH_RATE_HZ: f64 = 50.0;

/// One interval in which a target is to be detected.
#[derive(Debug, Clone, PartialEq)]
pub struct TargetEvent {
    /// When.
    pub interval: Interval,
    /// Which actor (its id in the scene).
    pub actor_id: String,
    /// Its kind (`walker`, `breathing`, ...).
    pub kind: String,
}

/// One interval in which something else is active.
#[derive(Debug, Clone, PartialEq)]
pub struct NuisanceActivity {
    /// When.
    pub interval: Interval,
    /// Actor id, or the interference source's name (`mains`, `radio_bursts`, ...).
    pub source_id: String,
    /// Kind (`fan`, `sway`, `interference`, ...).
    pub kind: String,
}

/// What happened in a trial.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Truth {
    /// Target events, sorted by start.
    pub events: Vec<TargetEvent>,
    /// Nuisance and interference activity, in scene order.
    pub nuisances: Vec<NuisanceActivity>,
    /// Target activity that happened outside the coverage zone (moving but not to be detected).
    pub outside_coverage: Vec<TargetEvent>,
}

fn centroid(echoes: &[Echo]) -> Option<[f64; 3]> {
    let mut weight = 0.0;
    let mut sum = [0.0; 3];
    for e in echoes {
        let w = e.amplitude_m.abs();
        weight += w;
        for (s, p) in sum.iter_mut().zip(e.position_m) {
            *s += w * p;
        }
    }
    (weight > 0.0).then(|| sum.map(|s| s / weight))
}

/// The parts of `active` (sorted, disjoint intervals in which the actor moves)
/// in which `model` is inside the coverage zone.
///
/// `model` must be a fresh instance (same seed as the one rendered): it is
/// advanced in time order, and only inside `active`, so the cost follows the
/// time the actor moves, not the trial length.
pub fn coverage_intervals(
    model: &mut dyn MotionModel,
    radar: &RadarGeometry,
    coverage: &CoverageSpec,
    active: &[Interval],
) -> Vec<Interval> {
    let mut echoes = Vec::with_capacity(model.echo_count());
    let mut intervals = Vec::new();
    for span in active {
        let first = (span.start_s() * TRUTH_RATE_HZ).ceil() as u64;
        let last = (span.end_s() * TRUTH_RATE_HZ).floor() as u64;
        let times = std::iter::once(span.start_s())
            .chain((first..=last).map(|step| step as f64 / TRUTH_RATE_HZ))
            .chain(std::iter::once(span.end_s()))
            .filter(|t| *t >= span.start_s() && *t <= span.end_s());
        let mut inside_since: Option<f64> = None;
        let mut previous = span.start_s();
        for t in times {
            if t < previous {
                continue;
            }
            previous = t;
            echoes.clear();
            model.echoes(t, radar.position_m, &mut echoes);
            let inside = centroid(&echoes).is_some_and(|c| {
                let (range, azimuth) = radar.horizontal_polar(c);
                range <= coverage.range_m && azimuth.abs() <= coverage.azimuth_half_deg
            });
            match (inside, inside_since) {
                (true, None) => inside_since = Some(t),
                (false, Some(start)) => {
                    intervals.extend(
                        Interval::new(start, t)
                            .ok()
                            .filter(|i| i.duration_s() > 0.0),
                    );
                    inside_since = None;
                }
                _ => {}
            }
        }
        if let Some(start) = inside_since {
            intervals.extend(
                Interval::new(start, span.end_s())
                    .ok()
                    .filter(|i| i.duration_s() > 0.0),
            );
        }
    }
    intervals
}

/// Intersection of two sorted, disjoint interval lists.
pub fn intersect(a: &[Interval], b: &[Interval]) -> Vec<Interval> {
    let mut out = Vec::new();
    let (mut i, mut j) = (0, 0);
    while i < a.len() && j < b.len() {
        let start = a[i].start_s().max(b[j].start_s());
        let end = a[i].end_s().min(b[j].end_s());
        if end > start {
            out.extend(Interval::new(start, end).ok());
        }
        if a[i].end_s() < b[j].end_s() {
            i += 1;
        } else {
            j += 1;
        }
    }
    out
}

/// Parts of sorted, disjoint `a` not covered by sorted, disjoint `b`.
pub fn subtract(a: &[Interval], b: &[Interval]) -> Vec<Interval> {
    let mut out = Vec::new();
    for interval in a {
        let mut start = interval.start_s();
        for cut in b {
            if cut.end_s() <= start || cut.start_s() >= interval.end_s() {
                continue;
            }
            if cut.start_s() > start {
                out.extend(Interval::new(start, cut.start_s()).ok());
            }
            start = start.max(cut.end_s());
        }
        if interval.end_s() > start {
            out.extend(Interval::new(start, interval.end_s()).ok());
        }
    }
    out
}

/// Active intervals of a model as sorted, disjoint [`Interval`]s clipped to the trial.
pub fn active_intervals(model: &dyn MotionModel, duration_s: f64) -> Vec<Interval> {
    merge_intervals(
        model
            .active_intervals(duration_s)
            .into_iter()
            .filter_map(|(a, b)| Interval::new(a.max(0.0), b.min(duration_s)).ok())
            .filter(|i| i.duration_s() > 0.0)
            .collect(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    fn iv(a: f64, b: f64) -> Interval {
        Interval::new(a, b).unwrap()
    }

    #[test]
    fn interval_algebra() {
        let a = [iv(0.0, 5.0), iv(8.0, 12.0)];
        let b = [iv(3.0, 9.0), iv(11.0, 20.0)];
        assert_eq!(
            intersect(&a, &b),
            vec![iv(3.0, 5.0), iv(8.0, 9.0), iv(11.0, 12.0)]
        );
        assert_eq!(subtract(&a, &b), vec![iv(0.0, 3.0), iv(9.0, 11.0)]);
    }
}
