//! One gait cycle tabulated once, for callers that need the pose at many
//! thousands of instants (a walker's echoes at every synthesis node).
//!
//! The table holds every segment's centre, centre velocity and axis at a
//! grid of phases: a uniform grid plus every phase where a joint curve is
//! only C¹ (the PCHIP knots). Between two grid points the model is smooth, so
//! a cubic Hermite through the centres and their velocities is accurate to
//! h⁴·|x⁗|/384 (de Boor, *A Practical Guide to Splines*, ch. II); a knot
//! inside an interval would cost J·h²/62 for an acceleration jump J instead,
//! an error that falls only as h². Axes are interpolated linearly and
//! renormalised (they only set the aspect of the RCS).

use crate::pchip::wrap_unit;
use crate::{Gait, Pose, SEGMENT_COUNT};
use std::cell::RefCell;
use std::sync::Arc;

/// Uniform grid points per cycle (the knot phases come on top).
pub const UNIFORM_POINTS_PER_CYCLE: usize = 256;

/// Grid points closer than this in phase are merged.
const MERGE_PHASE: f64 = 1e-9;

/// Segment state at one grid phase.
#[derive(Debug, Clone, Copy, PartialEq)]
struct GridState {
    center_m: [[f64; 3]; SEGMENT_COUNT],
    velocity_mps: [[f64; 3]; SEGMENT_COUNT],
    axis: [[f64; 3]; SEGMENT_COUNT],
}

/// A [`Gait`]'s cycle on a grid, read back by Hermite interpolation.
///
/// ```
/// use echobench_gait::{CycleTable, Gait, Pose};
/// let gait = Gait::new(1.8, 1.4).unwrap();
/// let table = CycleTable::new(&gait);
/// let (mut exact, mut read) = (Pose::default(), Pose::default());
/// gait.pose(0.37, &mut exact);
/// table.pose(0.37, &mut read);
/// let error = (exact.segments[5].center_m[0] - read.segments[5].center_m[0]).abs();
/// assert!(error < 1e-6);
/// ```
#[derive(Debug, Clone, PartialEq)]
pub struct CycleTable {
    cycle_s: f64,
    /// Grid phases in [0, 1), increasing, the first 0.
    phases: Vec<f64>,
    states: Vec<GridState>,
    /// For each of `UNIFORM_POINTS_PER_CYCLE` equal bins of phase, the last
    /// grid point at or before the bin's start.
    bin_start: Vec<usize>,
    /// Names and sizes of the segments (constant over the cycle).
    template: Pose,
}

impl CycleTable {
    /// Tabulates one cycle of `gait` (about 300 evaluations of its pose and velocity).
    pub fn new(gait: &Gait) -> CycleTable {
        let n = UNIFORM_POINTS_PER_CYCLE;
        let mut phases: Vec<f64> = (0..n).map(|i| i as f64 / n as f64).collect();
        phases.extend(gait.knot_phases().into_iter().map(wrap_unit));
        phases.sort_by(f64::total_cmp);
        phases.dedup_by(|later, earlier| *later - *earlier < MERGE_PHASE);
        if phases.len() > 1 && phases[0] + 1.0 - phases[phases.len() - 1] < MERGE_PHASE {
            phases.pop();
        }
        let mut pose = Pose::default();
        let mut velocity = [[0.0; 3]; SEGMENT_COUNT];
        let states = phases
            .iter()
            .map(|&phase| {
                gait.pose_with_velocity(phase * gait.cycle_s(), &mut pose, &mut velocity);
                GridState {
                    center_m: pose.segments.map(|s| s.center_m),
                    velocity_mps: velocity,
                    axis: pose.segments.map(|s| s.axis),
                }
            })
            .collect();
        let mut bin_start = Vec::with_capacity(n);
        let mut point = 0;
        for bin in 0..n {
            let start = bin as f64 / n as f64;
            while point + 1 < phases.len() && phases[point + 1] <= start {
                point += 1;
            }
            bin_start.push(point);
        }
        CycleTable {
            cycle_s: gait.cycle_s(),
            phases,
            states,
            bin_start,
            template: pose,
        }
    }

    /// The table of `gait`, shared: a trial builds its walker twice from the
    /// same gait (once for the ground truth, once to render it), so the last
    /// table made on this thread is kept and handed out again for an equal
    /// gait. The values are those of [`CycleTable::new`] either way, so
    /// nothing depends on the cache.
    pub fn shared(gait: &Gait) -> Arc<CycleTable> {
        thread_local! {
            static LAST: RefCell<Option<(Gait, Arc<CycleTable>)>> = const { RefCell::new(None) };
        }
        LAST.with(|last| {
            let mut last = last.borrow_mut();
            if let Some((made_for, table)) = last.as_ref() {
                if made_for == gait {
                    return Arc::clone(table);
                }
            }
            let table = Arc::new(CycleTable::new(gait));
            *last = Some((gait.clone(), Arc::clone(&table)));
            table
        })
    }

    /// Number of grid points (uniform and knot phases).
    pub fn grid_points(&self) -> usize {
        self.phases.len()
    }

    /// Pose at moving time `tau_s`, as [`Gait::pose`].
    pub fn pose(&self, tau_s: f64, out: &mut Pose) {
        let mut velocity = [[0.0; 3]; SEGMENT_COUNT];
        self.pose_with_velocity(tau_s, out, &mut velocity);
    }

    /// Pose and segment-centre velocities at moving time `tau_s`, as
    /// [`Gait::pose_with_velocity`] (velocity: the derivative of the Hermite).
    pub fn pose_with_velocity(
        &self,
        tau_s: f64,
        out: &mut Pose,
        velocity_mps: &mut [[f64; 3]; SEGMENT_COUNT],
    ) {
        let tau_s = if tau_s.is_finite() { tau_s } else { 0.0 };
        let phase = wrap_unit(tau_s / self.cycle_s);
        let bins = self.bin_start.len();
        let bin = ((phase * bins as f64) as usize).min(bins - 1);
        let mut i = self.bin_start[bin];
        while i + 1 < self.phases.len() && self.phases[i + 1] <= phase {
            i += 1;
        }
        let (j, end_phase) = if i + 1 < self.phases.len() {
            (i + 1, self.phases[i + 1])
        } else {
            (0, 1.0)
        };
        let width = end_phase - self.phases[i];
        let u = (phase - self.phases[i]) / width;
        let dt = width * self.cycle_s;
        let (u2, u3) = (u * u, u * u * u);
        // Cubic Hermite basis and its derivative in u.
        let h00 = 2.0 * u3 - 3.0 * u2 + 1.0;
        let h10 = u3 - 2.0 * u2 + u;
        let h01 = 3.0 * u2 - 2.0 * u3;
        let h11 = u3 - u2;
        let d00 = (6.0 * u2 - 6.0 * u) / dt;
        let d10 = 3.0 * u2 - 4.0 * u + 1.0;
        let d11 = 3.0 * u2 - 2.0 * u;
        let (a, b) = (&self.states[i], &self.states[j]);
        let segments = out.segments.iter_mut().zip(velocity_mps);
        for (k, ((segment, velocity), template)) in
            segments.zip(&self.template.segments).enumerate()
        {
            // Names and sizes from the template, field by field: the rest is written below.
            segment.name = template.name;
            segment.radius_m = template.radius_m;
            segment.half_length_m = template.half_length_m;
            let mut axis = [0.0; 3];
            for c in 0..3 {
                let (x0, x1) = (a.center_m[k][c], b.center_m[k][c]);
                let (v0, v1) = (a.velocity_mps[k][c], b.velocity_mps[k][c]);
                segment.center_m[c] = h00 * x0 + h10 * dt * v0 + h01 * x1 + h11 * dt * v1;
                velocity[c] = d00 * (x0 - x1) + d10 * v0 + d11 * v1;
                axis[c] = a.axis[k][c] + u * (b.axis[k][c] - a.axis[k][c]);
            }
            let length = (axis[0] * axis[0] + axis[1] * axis[1] + axis[2] * axis[2]).sqrt();
            segment.axis = if length > 1e-12 {
                axis.map(|x| x / length)
            } else {
                a.axis[k]
            };
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Largest centre, velocity and axis differences between the table and
    /// the model itself over `samples` phases of one cycle.
    fn worst_errors(gait: &Gait, samples: usize) -> (f64, f64, f64) {
        let table = CycleTable::new(gait);
        let (mut exact, mut read) = (Pose::default(), Pose::default());
        let (mut v_exact, mut v_read) = ([[0.0; 3]; SEGMENT_COUNT], [[0.0; 3]; SEGMENT_COUNT]);
        let (mut center, mut velocity, mut axis) = (0.0f64, 0.0f64, 0.0f64);
        for i in 0..samples {
            // An irrational step so that the samples fall everywhere between grid points.
            let tau = gait.cycle_s() * (i as f64 * 0.618_033_988_749_895).fract();
            gait.pose_with_velocity(tau, &mut exact, &mut v_exact);
            table.pose_with_velocity(tau, &mut read, &mut v_read);
            for k in 0..SEGMENT_COUNT {
                let (e, r) = (&exact.segments[k], &read.segments[k]);
                assert_eq!(
                    (e.name, e.radius_m, e.half_length_m),
                    (r.name, r.radius_m, r.half_length_m)
                );
                for c in 0..3 {
                    center = center.max((e.center_m[c] - r.center_m[c]).abs());
                    velocity = velocity.max((v_exact[k][c] - v_read[k][c]).abs());
                    axis = axis.max((e.axis[c] - r.axis[c]).abs());
                }
            }
        }
        (center, velocity, axis)
    }

    #[test]
    fn a_shared_table_is_the_table_of_its_gait() {
        let (a, b) = (Gait::new(1.8, 1.4).unwrap(), Gait::new(1.7, 1.2).unwrap());
        let first = CycleTable::shared(&a);
        assert!(
            Arc::ptr_eq(&first, &CycleTable::shared(&a)),
            "kept for an equal gait"
        );
        let other = CycleTable::shared(&b);
        assert_eq!(*other, CycleTable::new(&b));
        assert_eq!(*first, CycleTable::new(&a));
    }

    #[test]
    fn the_table_reads_back_the_model_within_a_micrometre() {
        let gait = Gait::new(1.8, 1.4).expect("valid gait");
        assert!(CycleTable::new(&gait).grid_points() > UNIFORM_POINTS_PER_CYCLE);
        // Heights and relative velocities across the model's range (RV ≤ 3, Boulic 1990).
        for (height, rv) in [(1.2, 0.3), (1.8, 0.49), (1.8, 1.0), (1.7, 1.6), (2.0, 3.0)] {
            let gait = Gait::new(height, rv * 0.491 * height).expect("valid gait");
            let (center, velocity, axis) = worst_errors(&gait, 20_000);
            // Measured: ≤ 7.6e-7 m, 9.1e-4 m/s, 5.2e-4. A synthesis node may be
            // off by 0.01 rad of round-trip phase, 9.9 µm of range at 24.125 GHz
            // (λ/4π · 0.01); the table must stay an order of magnitude inside it.
            let label = format!("H {height} RV {rv}");
            assert!(center < 1e-6, "{label}: centre {center:e} m");
            // Against the model's own central difference (step 1e-4 cycle),
            // 0.1 % of a 1 m/s segment speed.
            assert!(velocity < 2e-3, "{label}: velocity {velocity:e} m/s");
            assert!(axis < 1e-3, "{label}: axis {axis:e}");
        }
    }
}
