//! Tallies: integer counts per cell and kind, and the first detections, for one detector.

use crate::plan::{Walk, ZonePlan};
use crate::spec::{WalkKind, ZoneError};
use echobench_stats::{clopper_pearson_interval, Interval};
use serde::{Deserialize, Serialize};

/// Counts of one kind of walk, per cell (indexed as [`crate::Grid`]).
#[derive(Debug, Clone, PartialEq, Eq, Default, Serialize, Deserialize)]
pub struct KindTally {
    /// Walks recorded.
    pub walks: u64,
    /// Walks detected at all (during the walk or its tail).
    pub detected_walks: u64,
    /// Walks that passed through each cell's neighbourhood.
    pub passed: Vec<u64>,
    /// Of those, walks detected by the time they left it.
    pub detected: Vec<u64>,
    /// First-detection positions that fell in each cell (the square, not the disc).
    pub first_here: Vec<u64>,
}

/// One walk's first detection, in integer nanoseconds from the trial's start.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize, Deserialize)]
pub struct FirstDetection {
    /// The walk.
    pub walk: u32,
    /// When, ns.
    pub at_ns: u64,
}

/// A detector's zone tallies: integer counts only, so merging shards or threads in any order
/// gives the same numbers as one pass (addition of integers is exact and commutative).
///
/// Serialized as its counts (a run's `zone.json`, shard parts); [`ZoneTally::merge`] and
/// [`ZoneTally::check_plan`] refuse one whose lengths do not fit a plan.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct ZoneTally {
    cells: usize,
    kinds: [KindTally; 2],
    /// Sorted by walk.
    first: Vec<FirstDetection>,
    /// Walks recorded, sorted (to refuse a walk recorded twice, here or across a merge).
    recorded: Vec<u32>,
}

/// A cell's result for one detector and kind.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CellResult {
    /// Cell index (`iy * cells_x + ix`).
    pub index: usize,
    /// Column.
    pub ix: usize,
    /// Row.
    pub iy: usize,
    /// Centre, m.
    pub centre_m: [f64; 2],
    /// Walks through the neighbourhood.
    pub passed: u64,
    /// Of those, detected by the time they left it.
    pub detected: u64,
    /// `detected / passed`, `None` when no walk passed.
    pub probability: Option<f64>,
    /// Clopper–Pearson interval of the probability at the confidence asked for.
    pub interval: Option<Interval>,
    /// First detections in the cell.
    pub first_detections: u64,
    /// First detections per m² per walk of this kind (their density on the floor).
    pub first_density_per_m2: Option<f64>,
    /// At least the plan's walkers per cell passed.
    pub enough: bool,
}

fn to_ns(t_s: f64) -> u64 {
    // Round to whole ns once: every later comparison uses this integer, so a tally and
    // its merge of shards agree exactly.
    (t_s * 1e9).round().max(0.0) as u64
}

fn of_ns(at_ns: u64) -> f64 {
    at_ns as f64 * 1e-9
}

impl ZoneTally {
    /// Empty tallies for `plan`'s grid.
    pub fn new(plan: &ZonePlan) -> ZoneTally {
        let cells = plan.grid().cell_count();
        let kind = || KindTally {
            passed: vec![0; cells],
            detected: vec![0; cells],
            first_here: vec![0; cells],
            ..KindTally::default()
        };
        ZoneTally {
            cells,
            kinds: [kind(), kind()],
            first: Vec::new(),
            recorded: Vec::new(),
        }
    }

    /// Records `walk`'s outcome: the time of its first detection at the detector's operating
    /// threshold (the first alarm at or after `walk.enter_s`), or `None`.
    ///
    /// # Errors
    /// A walk not in `plan`, a walk recorded before, a time that is not finite, or a
    /// detection before the entry.
    pub fn record(
        &mut self,
        plan: &ZonePlan,
        walk: &Walk,
        first_detection_s: Option<f64>,
    ) -> Result<(), ZoneError> {
        if plan.walk(walk.index) != Some(walk) {
            return Err(ZoneError::Walk(format!(
                "walk {} is not a walk of this plan",
                walk.index
            )));
        }
        let slot = match self.recorded.binary_search(&walk.index) {
            Ok(_) => {
                return Err(ZoneError::Walk(format!(
                    "walk {} is recorded twice",
                    walk.index
                )))
            }
            Err(slot) => slot,
        };
        let at_ns = match first_detection_s {
            Some(t) if !t.is_finite() => {
                return Err(ZoneError::Walk(format!(
                    "walk {}: first detection at {t} s is not a time",
                    walk.index
                )))
            }
            Some(t) if t < walk.enter_s => {
                return Err(ZoneError::DetectionBeforeEntry {
                    walk: walk.index,
                    at_s: t,
                    enter_s: walk.enter_s,
                })
            }
            Some(t) => Some(to_ns(t)),
            None => None,
        };
        self.recorded.insert(slot, walk.index);
        let grid = plan.grid();
        let radius = grid.radius_m();
        let tally = &mut self.kinds[walk.kind.index()];
        tally.walks += 1;
        let at_s = at_ns.map(of_ns);
        for cell in 0..self.cells {
            let Some(leaves_s) = walk.leaves_disc_s(grid.centre_m(cell), radius) else {
                continue;
            };
            tally.passed[cell] += 1;
            if at_s.is_some_and(|t| t <= leaves_s) {
                tally.detected[cell] += 1;
            }
        }
        if let (Some(at_ns), Some(at_s)) = (at_ns, at_s) {
            tally.detected_walks += 1;
            if let Some(cell) = grid.cell_of(walk.position_at(at_s)) {
                tally.first_here[cell] += 1;
            }
            let entry = FirstDetection {
                walk: walk.index,
                at_ns,
            };
            let at = self.first.partition_point(|f| f.walk < walk.index);
            self.first.insert(at, entry);
        }
        Ok(())
    }

    /// Adds `other`'s counts (another shard or thread of the same plan).
    ///
    /// # Errors
    /// Tallies of a different grid, or a walk recorded in both.
    pub fn merge(&mut self, other: &ZoneTally) -> Result<(), ZoneError> {
        self.check_lengths()?;
        other.check_lengths()?;
        if other.cells != self.cells {
            return Err(ZoneError::Mismatch(format!(
                "zone tallies of {} and {} cells cannot be merged",
                self.cells, other.cells
            )));
        }
        let mut recorded = Vec::with_capacity(self.recorded.len() + other.recorded.len());
        recorded.extend_from_slice(&self.recorded);
        recorded.extend_from_slice(&other.recorded);
        recorded.sort_unstable();
        if let Some(pair) = recorded.windows(2).find(|p| p[0] == p[1]) {
            return Err(ZoneError::Walk(format!(
                "walk {} is in both tallies merged",
                pair[0]
            )));
        }
        self.recorded = recorded;
        for (mine, theirs) in self.kinds.iter_mut().zip(&other.kinds) {
            mine.walks += theirs.walks;
            mine.detected_walks += theirs.detected_walks;
            for (a, b) in [
                (&mut mine.passed, &theirs.passed),
                (&mut mine.detected, &theirs.detected),
                (&mut mine.first_here, &theirs.first_here),
            ] {
                for (x, y) in a.iter_mut().zip(b) {
                    *x += y;
                }
            }
        }
        self.first.extend_from_slice(&other.first);
        self.first.sort_unstable();
        Ok(())
    }

    /// Checks that every per-cell list has one count per cell (a tally read from a file).
    fn check_lengths(&self) -> Result<(), ZoneError> {
        let bad = self.kinds.iter().any(|k| {
            k.passed.len() != self.cells
                || k.detected.len() != self.cells
                || k.first_here.len() != self.cells
        });
        if bad {
            return Err(ZoneError::Mismatch(format!(
                "zone tallies of {} cells hold lists of another length",
                self.cells
            )));
        }
        Ok(())
    }

    /// Checks that these tallies (read from a file) belong to `plan`: one count per cell of
    /// its grid, and every walk recorded or first detected one of its walks.
    ///
    /// # Errors
    /// The first mismatch found.
    pub fn check_plan(&self, plan: &ZonePlan) -> Result<(), ZoneError> {
        self.check_lengths()?;
        if self.cells != plan.grid().cell_count() {
            return Err(ZoneError::Mismatch(format!(
                "zone tallies of {} cells do not fit a grid of {}",
                self.cells,
                plan.grid().cell_count()
            )));
        }
        let walks = plan.walks().len();
        if let Some(w) = self
            .recorded
            .iter()
            .chain(self.first.iter().map(|f| &f.walk))
            .find(|w| **w as usize >= walks)
        {
            return Err(ZoneError::Walk(format!(
                "walk {w} is not in the plan of {walks} walks"
            )));
        }
        Ok(())
    }

    /// The counts of one kind.
    pub fn kind(&self, kind: WalkKind) -> &KindTally {
        &self.kinds[kind.index()]
    }

    /// Every first detection, sorted by walk.
    pub fn first_detections(&self) -> &[FirstDetection] {
        &self.first
    }

    /// The first detections of `kind` with where they happened, m.
    pub fn first_positions(&self, plan: &ZonePlan, kind: WalkKind) -> Vec<(u32, [f64; 2])> {
        self.first
            .iter()
            .filter_map(|f| {
                let walk = plan.walk(f.walk)?;
                (walk.kind == kind).then(|| (f.walk, walk.position_at(of_ns(f.at_ns))))
            })
            .collect()
    }

    /// Per-cell results of `kind`, intervals at `confidence` (e.g. 0.95).
    pub fn cells(&self, plan: &ZonePlan, kind: WalkKind, confidence: f64) -> Vec<CellResult> {
        let grid = plan.grid();
        let need = u64::from(plan.spec().walkers_per_cell);
        let tally = self.kind(kind);
        (0..self.cells)
            .map(|index| {
                let (ix, iy) = grid.cell_xy(index);
                let (passed, detected) = (tally.passed[index], tally.detected[index]);
                let first = tally.first_here[index];
                CellResult {
                    index,
                    ix,
                    iy,
                    centre_m: grid.centre_m(index),
                    passed,
                    detected,
                    probability: (passed > 0).then(|| detected as f64 / passed as f64),
                    interval: clopper_pearson_interval(detected, passed, confidence).ok(),
                    first_detections: first,
                    first_density_per_m2: (tally.walks > 0)
                        .then(|| first as f64 / (tally.walks as f64 * grid.cell_area_m2())),
                    enough: passed >= need,
                }
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plan::tests::sensor_at;
    use crate::spec::{FloorRect, ZoneSpec};

    fn plan() -> ZonePlan {
        let spec = ZoneSpec::new(
            FloorRect {
                x_min_m: 0.0,
                x_max_m: 5.0,
                y_min_m: -2.5,
                y_max_m: 2.5,
            },
            5,
            5,
            3,
        );
        ZonePlan::new(&spec, &sensor_at([0.0, 0.0, 1.0], 0.0), 5).unwrap()
    }

    /// A made-up detector: it sees a walker once within 3 m of the sensor.
    fn outcome(walk: &Walk) -> Option<f64> {
        let steps = 2000;
        (0..=steps)
            .map(|i| walk.enter_s + (walk.end_s() - walk.enter_s) * f64::from(i) / f64::from(steps))
            .find(|&t| {
                let p = walk.position_at(t);
                p[0].hypot(p[1]) <= 3.0
            })
    }

    #[test]
    fn shards_merged_in_any_order_equal_one_pass() {
        let plan = plan();
        let mut whole = ZoneTally::new(&plan);
        for walk in plan.walks() {
            whole.record(&plan, walk, outcome(walk)).unwrap();
        }
        let mut shards = [
            ZoneTally::new(&plan),
            ZoneTally::new(&plan),
            ZoneTally::new(&plan),
        ];
        for walk in plan.walks().iter().rev() {
            shards[walk.index as usize % 3]
                .record(&plan, walk, outcome(walk))
                .unwrap();
        }
        let mut forward = shards[0].clone();
        forward.merge(&shards[1]).unwrap();
        forward.merge(&shards[2]).unwrap();
        let mut backward = shards[2].clone();
        backward.merge(&shards[0]).unwrap();
        backward.merge(&shards[1]).unwrap();
        assert_eq!(forward, whole);
        assert_eq!(backward, whole);
        assert!(forward.merge(&shards[1]).is_err(), "a walk merged twice");
    }

    #[test]
    fn a_cell_inside_the_range_is_always_detected_and_one_beyond_never() {
        let plan = plan();
        let mut tally = ZoneTally::new(&plan);
        for walk in plan.walks() {
            tally.record(&plan, walk, outcome(walk)).unwrap();
        }
        let grid = plan.grid();
        for kind in WalkKind::ALL {
            let cells = tally.cells(&plan, kind, 0.95);
            for cell in &cells {
                assert!(cell.enough, "{kind:?} {cell:?}");
                let d = cell.centre_m[0].hypot(cell.centre_m[1]);
                // Every walk through a disc wholly inside 3 m was seen before leaving it
                // (it had to come within 3 m to enter); approaches through a disc wholly
                // beyond 3 m leave it before they are seen.
                if d + grid.radius_m() <= 3.0 {
                    assert_eq!(cell.probability, Some(1.0), "{kind:?} {cell:?}");
                } else if d - grid.radius_m() > 3.0 + 1e-3 && kind == WalkKind::Approach {
                    assert_eq!(cell.probability, Some(0.0), "{kind:?} {cell:?}");
                }
                let ci = cell.interval.unwrap();
                assert!(ci.contains(cell.probability.unwrap()));
            }
            // First detections of approaches from beyond 3 m lie on the 3 m circle (within
            // one step); those starting nearer are seen where they appear.
            for (index, p) in tally.first_positions(&plan, WalkKind::Approach) {
                let start = plan.walk(index).unwrap().start_m;
                let expected = start[0].hypot(start[1]).min(3.0);
                let d = p[0].hypot(p[1]);
                assert!((d - expected).abs() < 0.02, "{d} vs {expected}");
            }
            let t = tally.kind(kind);
            let firsts: u64 = t.first_here.iter().sum();
            assert!(firsts <= t.detected_walks && t.detected_walks <= t.walks);
        }
    }

    #[test]
    fn detections_before_entry_and_repeats_are_refused() {
        let plan = plan();
        let walk = &plan.walks()[0];
        let mut tally = ZoneTally::new(&plan);
        assert!(matches!(
            tally.record(&plan, walk, Some(walk.enter_s - 0.1)),
            Err(ZoneError::DetectionBeforeEntry { .. })
        ));
        for bad in [f64::NAN, f64::INFINITY] {
            assert!(matches!(
                tally.record(&plan, walk, Some(bad)),
                Err(ZoneError::Walk(_))
            ));
        }
        tally.record(&plan, walk, None).unwrap();
        assert!(tally.record(&plan, walk, None).is_err());
    }
}
