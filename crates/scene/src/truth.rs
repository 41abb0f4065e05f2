//! Ground truth from the same kinematics that make the signal.
//!
//! # Moving, and present but not moving
//!
//! An actor is *moving* while its motion speed
//! ([`MotionModel::motion_speed_mps`]) is at least [`MOVING_SPEED_MPS`] =
//! 0.1 m/s. The motion speed is read from the same state that gives the
//! echoes the synthesizer renders: for a person the torso (chest) speed, for
//! an animal its body, for a door the leaf's free edge, for a fan its blade
//! tips, for a swaying object its tip, for a bench reflector its line speed
//! plus its shaker's velocity amplitude. 0.1 m/s is a decade above what a
//! person who stays put still does (breathing and postural sway move the
//! chest and body at 5–25 mm/s) and three times below the slowest walk of
//! interest (0.3 m/s); see `echobench_motion`'s crate doc.
//!
//! A target event is an interval in which a target actor is both moving and
//! inside the coverage zone (horizontal range and azimuth sector about the
//! boresight). A target person (or animal) who is there, inside the zone,
//! but not moving is *present, not moving* ([`Truth::still_presence`]): a
//! walker standing at a pause (it sways and breathes), a seated person
//! breathing. Intrusion-style scoring counts those intervals neither as
//! detections nor as false alarms.
//!
//! # How the edges are found
//!
//! Each target actor is sampled at [`TRUTH_RATE_HZ`] on a fresh model (same
//! seed as the one rendered), only inside the intervals in which it moves at
//! all or is there ([`MotionModel::active_intervals`],
//! [`MotionModel::body_presence_intervals`]), so the cost follows the time
//! the actor is there, not the trial length. A moving edge is placed where
//! the motion speed, interpolated linearly between two samples, crosses the
//! level: for the smooth speed curves of the models (a walker's eased stop
//! and start, a door's swing, a fan's spin-up) that is within a few
//! milliseconds of the rendered crossing, well inside one 50 ms decision
//! frame (a test checks it for every actor kind). A speed that steps (an
//! ideal linear stage, an animal's stop) is located to within
//! 1/[`TRUTH_RATE_HZ`]. Coverage edges come from
//! the amplitude-weighted centroid of the echoes and are located to within
//! 1/[`TRUTH_RATE_HZ`].
//!
//! Nuisance actors are listed over the whole time in which any part of them
//! moves at all ([`MotionModel::active_intervals`]: any motion may cause a
//! false alarm, and a curtain swaying at 4 cm/s is below the moving level but
//! still a nuisance), and interference sources over the whole trial, so that
//! scoring can say which nuisance caused a false alarm.

use crate::render::RadarGeometry;
use crate::spec::CoverageSpec;
use echobench_core::{merge_intervals, Interval};
pub use echobench_motion::MOVING_SPEED_MPS;
use echobench_motion::{Echo, MotionModel};

/// Rate at which actors are sampled to find their truth intervals, Hz.
pub const TRUTH_RATE_HZ: f64 = 50.0;

/// One interval of a target actor: an event to detect, or (in
/// [`Truth::still_presence`]) a time in which it is there but not moving.
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
    /// Target events (a target moving inside the coverage zone), sorted by start.
    pub events: Vec<TargetEvent>,
    /// Nuisance and interference activity, in scene order.
    pub nuisances: Vec<NuisanceActivity>,
    /// Target activity that happened outside the coverage zone (moving but not to be detected).
    pub outside_coverage: Vec<TargetEvent>,
    /// Present, not moving: a target person (or animal) inside the coverage zone
    /// whose motion speed is below [`MOVING_SPEED_MPS`], sorted by start.
    /// Neither an event to detect nor time in which an alarm is false.
    pub still_presence: Vec<TargetEvent>,
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
    if weight > 0.0 {
        return Some(sum.map(|s| s / weight));
    }
    // At the instant an actor appears or vanishes its amplitudes are zero, but
    // it has a place: the plain mean of its echoes.
    let count = echoes.len() as f64;
    (!echoes.is_empty()).then(|| {
        let mut mean = [0.0; 3];
        for e in echoes {
            for (m, p) in mean.iter_mut().zip(e.position_m) {
                *m += p / count;
            }
        }
        mean
    })
}

/// The truth intervals of one target actor.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct TargetTimeline {
    /// Moving inside the coverage zone: the events to detect.
    pub moving_inside: Vec<Interval>,
    /// Moving outside the coverage zone.
    pub moving_outside: Vec<Interval>,
    /// There (a body), inside the zone, not moving.
    pub still_inside: Vec<Interval>,
    /// Moving, anywhere (for tests and pictures).
    pub moving: Vec<Interval>,
}

/// Collects sorted, disjoint intervals from "on" edges found in time order.
#[derive(Default)]
struct EdgeTrack {
    since: Option<f64>,
    out: Vec<Interval>,
}

impl EdgeTrack {
    fn set(&mut self, on: bool, t_s: f64) {
        match (on, self.since) {
            (true, None) => self.since = Some(t_s),
            (false, Some(start)) => {
                self.out.extend(
                    Interval::new(start, t_s)
                        .ok()
                        .filter(|i| i.duration_s() > 0.0),
                );
                self.since = None;
            }
            _ => {}
        }
    }
}

/// Samples a target actor and splits its time into moving inside and outside
/// the coverage zone and present-not-moving inside it (see the module doc).
///
/// `model` must be a fresh instance (same seed as the one rendered): it is
/// advanced in time order, and only while it moves or is there.
pub fn target_timeline(
    model: &mut dyn MotionModel,
    radar: &RadarGeometry,
    coverage: &CoverageSpec,
    duration_s: f64,
) -> TargetTimeline {
    let presence = to_intervals(model.body_presence_intervals(duration_s), duration_s);
    let mut spans = to_intervals(model.active_intervals(duration_s), duration_s);
    spans.extend(presence.iter().copied());
    let spans = merge_intervals(spans);
    let mut echoes = Vec::with_capacity(model.echo_count());
    let mut moving = EdgeTrack::default();
    let mut inside = EdgeTrack::default();
    for span in &spans {
        let first = (span.start_s() * TRUTH_RATE_HZ).floor() as u64 + 1;
        let times = std::iter::once(span.start_s())
            .chain(
                (first..)
                    .map(|step| step as f64 / TRUTH_RATE_HZ)
                    .take_while(|t| *t < span.end_s()),
            )
            .chain(std::iter::once(span.end_s()));
        let mut previous: Option<(f64, f64)> = None;
        for t in times {
            let speed = model.motion_speed_mps(t);
            echoes.clear();
            model.echoes(t, radar.position_m, &mut echoes);
            let in_zone = centroid(&echoes).is_some_and(|c| {
                let (range, azimuth) = radar.horizontal_polar(c);
                range <= coverage.range_m && azimuth.abs() <= coverage.azimuth_half_deg
            });
            let is_moving = speed >= MOVING_SPEED_MPS;
            let edge_s = match previous {
                // The crossing of the level, interpolated between the samples.
                Some((t0, v0)) if (v0 >= MOVING_SPEED_MPS) != is_moving && speed != v0 => {
                    t0 + (MOVING_SPEED_MPS - v0) / (speed - v0) * (t - t0)
                }
                _ => t,
            };
            moving.set(is_moving, edge_s);
            inside.set(in_zone, t);
            previous = Some((t, speed));
        }
        moving.set(false, span.end_s());
        inside.set(false, span.end_s());
    }
    let inside_zone = inside.out;
    let moving = moving.out;
    TargetTimeline {
        moving_inside: intersect(&moving, &inside_zone),
        moving_outside: subtract(&moving, &inside_zone),
        still_inside: subtract(&intersect(&presence, &inside_zone), &moving),
        moving,
    }
}

fn to_intervals(raw: Vec<(f64, f64)>, duration_s: f64) -> Vec<Interval> {
    merge_intervals(
        raw.into_iter()
            .filter_map(|(a, b)| Interval::new(a.max(0.0), b.min(duration_s)).ok())
            .filter(|i| i.duration_s() > 0.0)
            .collect(),
    )
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

/// Intervals in which any part of a model moves, as sorted, disjoint
/// [`Interval`]s clipped to the trial (the listing of a nuisance).
pub fn active_intervals(model: &dyn MotionModel, duration_s: f64) -> Vec<Interval> {
    to_intervals(model.active_intervals(duration_s), duration_s)
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
