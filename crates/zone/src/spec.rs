//! What a zone is: the floor, its grid, who walks and how.

use echobench_scene::param::Param;
use std::fmt;

/// The two kinds of walk, tallied and drawn apart: the Doppler physics differs.
///
/// An approaching walker moves along the line of sight (full radial speed, a clean Doppler
/// line that rises in amplitude as R⁻²); a crossing walker moves across it (radial speed near
/// zero where it passes closest, only the limbs' micro-Doppler there).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum WalkKind {
    /// From the room's edge straight toward the sensor (radial).
    Approach,
    /// Across the sensor's view, square to the line of sight (tangential).
    Cross,
}

impl WalkKind {
    /// Both kinds, in the order of outputs.
    pub const ALL: [WalkKind; 2] = [WalkKind::Approach, WalkKind::Cross];

    /// The name in files and pictures.
    pub fn name(self) -> &'static str {
        match self {
            WalkKind::Approach => "approach",
            WalkKind::Cross => "cross",
        }
    }

    /// Position in [`WalkKind::ALL`].
    pub fn index(self) -> usize {
        match self {
            WalkKind::Approach => 0,
            WalkKind::Cross => 1,
        }
    }
}

/// The floor area of the zone: a rectangle in room coordinates, m.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FloorRect {
    /// Smallest x, m.
    pub x_min_m: f64,
    /// Largest x, m.
    pub x_max_m: f64,
    /// Smallest y, m.
    pub y_min_m: f64,
    /// Largest y, m.
    pub y_max_m: f64,
}

impl FloorRect {
    /// Width along x, m.
    pub fn width_m(&self) -> f64 {
        self.x_max_m - self.x_min_m
    }

    /// Depth along y, m.
    pub fn depth_m(&self) -> f64 {
        self.y_max_m - self.y_min_m
    }

    /// The parameter interval `[t_lo, t_hi]` over which the line `origin + t·dir` lies inside
    /// the rectangle (slab method), or `None` when it misses it.
    pub(crate) fn line_span(&self, origin: [f64; 2], dir: [f64; 2]) -> Option<(f64, f64)> {
        let mut lo = f64::NEG_INFINITY;
        let mut hi = f64::INFINITY;
        for (o, d, min, max) in [
            (origin[0], dir[0], self.x_min_m, self.x_max_m),
            (origin[1], dir[1], self.y_min_m, self.y_max_m),
        ] {
            if d.abs() < 1e-12 {
                if o < min || o > max {
                    return None;
                }
            } else {
                let (a, b) = ((min - o) / d, (max - o) / d);
                lo = lo.max(a.min(b));
                hi = hi.min(a.max(b));
            }
        }
        (hi > lo).then_some((lo, hi))
    }
}

/// A zone to map: the floor, its grid, the walkers and their walks.
#[derive(Debug, Clone, PartialEq)]
pub struct ZoneSpec {
    /// The floor area walked, room coordinates.
    pub floor: FloorRect,
    /// Cells along x.
    pub cells_x: usize,
    /// Cells along y.
    pub cells_y: usize,
    /// Walkers of each kind that must pass through every cell's neighbourhood.
    pub walkers_per_cell: u32,
    /// Walking speed, m/s, drawn per walk.
    pub speed_mps: Param,
    /// Body height, m, drawn per walk.
    pub height_m: Param,
    /// Which kinds of walk to plan.
    pub kinds: Vec<WalkKind>,
    /// Time before a walker appears, s: the front end's high-pass and the detectors' noise
    /// estimates settle on an empty room first.
    pub settle_s: f64,
    /// Time after a walk ends before the trial ends, s, so a detector's last frames complete.
    pub tail_s: f64,
    /// An approaching walk ends this far (horizontally) from the sensor, m: a person stops
    /// short of the wall or the spot under a ceiling sensor.
    pub stop_short_m: f64,
    /// Height of the horizontal plane on which the beam outline is drawn, m.
    pub beam_plane_height_m: f64,
}

/// Most walks one plan may hold (a 40 × 40 grid at 40 walkers per cell and kind, with
/// room to spare): a guard against a spec that would plan for hours.
pub const MAX_WALKS: usize = 200_000;

impl ZoneSpec {
    /// A zone over `floor` with `cells_x × cells_y` cells and `walkers_per_cell` walkers of
    /// each kind per cell, both kinds, and the defaults below.
    ///
    /// Defaults: speed uniform in 0.8–1.6 m/s and height normal (mean 1.72 m, sd 0.08 m, cut
    /// at 1.5 and 1.95 m), an adult indoor walking population (from memory); 3 s to settle
    /// (a few time constants of a 0.5 Hz coupling high-pass and a detector's floor; common
    /// practice), 1 s of tail, approaches stopping 0.5 m short of the sensor, the beam drawn
    /// at 1.0 m, about an adult's chest (common practice).
    pub fn new(floor: FloorRect, cells_x: usize, cells_y: usize, walkers_per_cell: u32) -> Self {
        ZoneSpec {
            floor,
            cells_x,
            cells_y,
            walkers_per_cell,
            speed_mps: Param::Uniform {
                low: 0.8,
                high: 1.6,
            },
            height_m: Param::Normal {
                mean: 1.72,
                sd: 0.08,
                min: 1.5,
                max: 1.95,
            },
            kinds: WalkKind::ALL.to_vec(),
            settle_s: 3.0,
            tail_s: 1.0,
            stop_short_m: 0.5,
            beam_plane_height_m: 1.0,
        }
    }

    /// Checks the numbers.
    ///
    /// # Errors
    /// Every problem found, in field order.
    pub fn check(&self) -> Result<(), ZoneError> {
        let mut problems = Vec::new();
        let f = &self.floor;
        let finite = [f.x_min_m, f.x_max_m, f.y_min_m, f.y_max_m]
            .iter()
            .all(|v| v.is_finite());
        if !finite || f.width_m() <= 0.0 || f.depth_m() <= 0.0 {
            problems.push("floor: the rectangle needs finite corners with max > min".to_string());
        }
        if self.cells_x == 0 || self.cells_y == 0 {
            problems.push("cells: at least one cell along x and along y".to_string());
        }
        if self.walkers_per_cell == 0 {
            problems.push("walkers_per_cell: at least 1".to_string());
        }
        let planned = self.cells_x as u128
            * self.cells_y as u128
            * u128::from(self.walkers_per_cell)
            * self.kinds.len() as u128;
        if planned > MAX_WALKS as u128 {
            problems.push(format!(
                "cells × walkers × kinds is {planned}, more than the cap of {MAX_WALKS} walks"
            ));
        }
        let (speed_low, speed_high) = self.speed_mps.support();
        // The scene's path speed bounds, (0, 12] m/s.
        if !(speed_low > 0.0 && speed_high <= 12.0) {
            problems.push(format!(
                "speed_mps: draws must lie in (0, 12] m/s, found [{speed_low}, {speed_high}]"
            ));
        }
        let (height_low, height_high) = self.height_m.support();
        // The scene's walker height bounds, [0.5, 2.5] m.
        if !(height_low >= 0.5 && height_high <= 2.5) {
            problems.push(format!(
                "height_m: draws must lie in [0.5, 2.5] m, found [{height_low}, {height_high}]"
            ));
        }
        // The walking model holds for speed / thigh height up to 3, the thigh 0.491 of the
        // body height (Boulic 1990; docs/reference/people.md#p2): the fastest draw of the
        // shortest walker must stay inside it, or a trial would be refused mid-run.
        let fastest_allowed = 3.0 * 0.491 * height_low;
        if speed_high > fastest_allowed {
            problems.push(format!(
                "speed_mps: up to {speed_high} m/s is beyond the walking model for a \
                 {height_low} m walker (at most {fastest_allowed:.3} m/s)"
            ));
        }
        if self.kinds.is_empty() {
            problems.push("kinds: at least one kind of walk".to_string());
        }
        for (name, value) in [
            ("settle_s", self.settle_s),
            ("tail_s", self.tail_s),
            ("stop_short_m", self.stop_short_m),
            ("beam_plane_height_m", self.beam_plane_height_m),
        ] {
            if !(value.is_finite() && value >= 0.0) {
                problems.push(format!(
                    "{name}: must be finite and not negative, found {value}"
                ));
            }
        }
        if problems.is_empty() {
            Ok(())
        } else {
            Err(ZoneError::Spec(problems))
        }
    }
}

/// Why a zone could not be planned, tallied or written.
#[derive(Debug, Clone, PartialEq)]
pub enum ZoneError {
    /// The zone description is unusable; every problem found.
    Spec(Vec<String>),
    /// A first detection before its walker entered (an alarm of the empty room).
    DetectionBeforeEntry {
        /// The walk.
        walk: u32,
        /// When the detection was given, s.
        at_s: f64,
        /// When the walker entered, s.
        enter_s: f64,
    },
    /// A walk the plan does not hold, one recorded twice, or a first detection that is no time.
    Walk(String),
    /// Two tallies of different plans cannot be merged.
    Mismatch(String),
    /// Writing the CSV failed.
    Csv(String),
}

impl fmt::Display for ZoneError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ZoneError::Spec(problems) => write!(f, "zone: {}", problems.join("; ")),
            ZoneError::DetectionBeforeEntry {
                walk,
                at_s,
                enter_s,
            } => write!(
                f,
                "walk {walk}: first detection at {at_s} s is before the walker entered at \
                 {enter_s} s (pass the first alarm at or after the entry)"
            ),
            ZoneError::Walk(m) | ZoneError::Mismatch(m) | ZoneError::Csv(m) => f.write_str(m),
        }
    }
}

impl std::error::Error for ZoneError {}
