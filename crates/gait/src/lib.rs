//! Kinematic model of a walking person: twelve body segments moving through
//! a gait cycle, for radar echoes of a walker.
//!
//! The model is the global walking model of Boulic, Magnenat-Thalmann and
//! Thalmann (The Visual Computer 6:344–358, 1990) as transcribed for radar by
//! V. C. Chen (*The Micro-Doppler Effect in Radar*, Artech 2011, ch. 4): two
//! inputs (height and walking speed) set the cycle timing and a set of joint
//! trajectories, each given by a handful of control points per cycle and
//! interpolated with a periodic shape-preserving cubic (PCHIP).
//!
//! The one design decision: the crate produces poses in a **body frame** that
//! walks with the person (x forward, y left, z up, origin on the floor under
//! the mean position of the spine origin), with the mean forward progress
//! left out. Where the body goes — a path through the room, pauses, turns — is
//! the caller's business; this crate only says how the limbs move about that
//! reference point. So one model serves any path, and its kinematics can be
//! checked on their own against the published gait numbers.
//!
//! # Conventions
//!
//! * Body frame: x forward, y left, z up, metres. The reference leg (phase
//!   t = 0 at its heel strike) is the **right** leg; the left leg and the left
//!   arm run half a cycle later (t + 0.5), the right arm with the right leg.
//! * Sagittal angles (hip, knee, ankle, shoulder, elbow flexion), degrees in
//!   the transcription: a limb at angle α points along (sin α, 0, −cos α), so
//!   positive flexion swings the distal end forward. Knee flexion bends the
//!   shank backward (shank angle = hip − knee); ankle flexion positive lifts
//!   the toe (the foot points along (cos α, 0, sin α), α = shank + ankle);
//!   elbow flexion positive lifts the forearm forward (forearm = upper arm +
//!   elbow). Limbs swing in the body's x–z plane from their joints.
//! * Trunk tilt: the trunk axis is (sin β, 0, cos β) with β the transcribed
//!   forward/backward tilt; the upper arms hang from the trunk, so their angle
//!   is shoulder flexion − β. With this sign the tilt partly cancels the
//!   spine-origin surge at the head, which is what the reference table of
//!   ground-frame head speeds (narrower than the spine base's) requires.
//! * Pelvis list (left/right): rotation about +x (right-hand rule), so during
//!   right-leg stance the left hip drops.
//! * Pelvis and thorax torsion: the transcribed angles are applied as a
//!   rotation about −z (clockwise seen from above), which brings the right
//!   hip forward at right heel strike and turns the shoulders the other way
//!   (the usual counter-rotation of pelvis and thorax). Both are yaws of the
//!   hip line and the shoulder line relative to the walking direction.
//! * Spine-origin translations TrV, TrL, TrFB are in metres as in Chen's
//!   transcription (Boulic normalizes them by the thigh height, which would
//!   make them ≈ 12 % smaller at 1.8 m); the reference speed table matches metres.
//!
//! # Limits
//!
//! The global model does not pin the stance foot (Boulic adds a separate
//! correction step, not done here): the stance ankle slides at a few tenths
//! of a m/s and the heel of the leading foot dips up to ≈ 0.1 m (0.2 m at
//! RV = 3) below the floor around heel strike. Both are centimetre-scale
//! position errors of the weakest echoes. The wrist peak speed is ≈ 15 %
//! above the reference table of docs/reference/people.md#p4, whose implementation turned
//! the arm against the trunk tilt; here the arm is carried by the trunk.
#![deny(missing_docs)]

mod pchip;
mod table;

use pchip::{wrap_unit, PeriodicPchip};
use std::f64::consts::PI;
use std::fmt;
pub use table::CycleTable;

/// Number of body segments in a [`Pose`].
pub const SEGMENT_COUNT: usize = 12;

// Segment lengths as fractions of the body height H (Chen 2011, after Boulic 1990).
const HEAD_FRACTION: f64 = 0.130;
const SHOULDER_HALF_WIDTH_FRACTION: f64 = 0.259 / 2.0;
const TORSO_FRACTION: f64 = 0.288;
const HIP_HALF_WIDTH_FRACTION: f64 = 0.191 / 2.0;
const UPPER_LEG_FRACTION: f64 = 0.245;
const LOWER_LEG_FRACTION: f64 = 0.246;
const FOOT_FRACTION: f64 = 0.143;
const UPPER_ARM_FRACTION: f64 = 0.188;
const LOWER_ARM_FRACTION: f64 = 0.152;

// Segment radii, m (Chen 2011, ch. 4).
const HEAD_RADIUS_M: f64 = 0.10;
const TORSO_RADIUS_M: f64 = 0.15;
const UPPER_ARM_RADIUS_M: f64 = 0.06;
const FOREARM_RADIUS_M: f64 = 0.05;
const THIGH_RADIUS_M: f64 = 0.07;
const SHANK_RADIUS_M: f64 = 0.06;
const FOOT_RADIUS_M: f64 = 0.05;

/// Upper limit of the relative velocity RV = v / H_t for which the model holds (Boulic 1990).
pub const MAX_RELATIVE_VELOCITY: f64 = 3.0;

/// Central-difference step for segment velocities, as a fraction of the cycle.
const VELOCITY_STEP_CYCLES: f64 = 1e-4;

/// A walking-model parameter outside the range where the model holds.
#[derive(Debug, Clone, PartialEq)]
pub struct GaitError {
    parameter: &'static str,
    value: f64,
    allowed: String,
}

impl GaitError {
    /// Name of the offending parameter (`height_m` or `speed_mps`).
    pub fn parameter(&self) -> &'static str {
        self.parameter
    }

    /// The value given.
    pub fn value(&self) -> f64 {
        self.value
    }

    /// The allowed range, in words.
    pub fn allowed(&self) -> &str {
        &self.allowed
    }
}

impl fmt::Display for GaitError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "{} = {} is outside the walking model's range: {}",
            self.parameter, self.value, self.allowed
        )
    }
}

impl std::error::Error for GaitError {}

/// Which body segment (index into [`Pose::segments`] via [`SegmentKind::index`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum SegmentKind {
    /// Head, from the neck up.
    Head,
    /// Torso, from the spine origin (hip level) to the neck.
    Torso,
    /// Right upper arm, shoulder to elbow.
    RightUpperArm,
    /// Right forearm (with hand), elbow to wrist.
    RightForearm,
    /// Left upper arm.
    LeftUpperArm,
    /// Left forearm.
    LeftForearm,
    /// Right thigh, hip to knee.
    RightThigh,
    /// Right shank, knee to ankle.
    RightShank,
    /// Right foot, ankle to toe.
    RightFoot,
    /// Left thigh.
    LeftThigh,
    /// Left shank.
    LeftShank,
    /// Left foot.
    LeftFoot,
}

impl SegmentKind {
    /// Every segment, in [`Pose`] order.
    pub const ALL: [SegmentKind; SEGMENT_COUNT] = [
        SegmentKind::Head,
        SegmentKind::Torso,
        SegmentKind::RightUpperArm,
        SegmentKind::RightForearm,
        SegmentKind::LeftUpperArm,
        SegmentKind::LeftForearm,
        SegmentKind::RightThigh,
        SegmentKind::RightShank,
        SegmentKind::RightFoot,
        SegmentKind::LeftThigh,
        SegmentKind::LeftShank,
        SegmentKind::LeftFoot,
    ];

    /// Position in [`Pose::segments`].
    pub fn index(self) -> usize {
        self as usize
    }

    /// Lower-case name, e.g. `"right_thigh"`.
    pub fn name(self) -> &'static str {
        match self {
            SegmentKind::Head => "head",
            SegmentKind::Torso => "torso",
            SegmentKind::RightUpperArm => "right_upper_arm",
            SegmentKind::RightForearm => "right_forearm",
            SegmentKind::LeftUpperArm => "left_upper_arm",
            SegmentKind::LeftForearm => "left_forearm",
            SegmentKind::RightThigh => "right_thigh",
            SegmentKind::RightShank => "right_shank",
            SegmentKind::RightFoot => "right_foot",
            SegmentKind::LeftThigh => "left_thigh",
            SegmentKind::LeftShank => "left_shank",
            SegmentKind::LeftFoot => "left_foot",
        }
    }
}

/// One body segment, modelled as an ellipsoid of revolution.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Segment {
    /// Segment name (see [`SegmentKind::name`]).
    pub name: &'static str,
    /// Centre (mid-point between its joints), body frame, m.
    pub center_m: [f64; 3],
    /// Unit vector along the segment, from its proximal joint to its distal
    /// one (for torso and head: upward).
    pub axis: [f64; 3],
    /// Semi-axis across the segment, m.
    pub radius_m: f64,
    /// Semi-axis along the segment (half its length), m.
    pub half_length_m: f64,
}

impl Segment {
    /// The proximal joint (centre − half length along the axis), m.
    pub fn proximal_end_m(&self) -> [f64; 3] {
        along(self.center_m, self.axis, -self.half_length_m)
    }

    /// The distal joint or tip (centre + half length along the axis), m:
    /// knee, ankle, toe, elbow, wrist, neck, crown.
    pub fn distal_end_m(&self) -> [f64; 3] {
        along(self.center_m, self.axis, self.half_length_m)
    }
}

/// Positions of all body segments at one instant, body frame.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Pose {
    /// Segments in [`SegmentKind::ALL`] order.
    pub segments: [Segment; SEGMENT_COUNT],
}

impl Default for Pose {
    /// All segments named, at the origin, pointing up, with zero size.
    fn default() -> Pose {
        let segments = SegmentKind::ALL.map(|kind| Segment {
            name: kind.name(),
            center_m: [0.0; 3],
            axis: [0.0, 0.0, 1.0],
            radius_m: 0.0,
            half_length_m: 0.0,
        });
        Pose { segments }
    }
}

impl Pose {
    /// The segment of a given kind.
    pub fn segment(&self, kind: SegmentKind) -> &Segment {
        &self.segments[kind.index()]
    }
}

/// Joint angles and spine-origin offsets at one phase of the cycle.
#[derive(Debug, Clone, Copy)]
struct Articulation {
    /// Spine origin (TrFB, TrL, H_t + TrV), m.
    spine_origin_m: [f64; 3],
    /// Trunk tilt β, rad (positive: top of the trunk forward).
    trunk_tilt_rad: f64,
    /// Pelvis list about +x, rad.
    pelvis_list_rad: f64,
    /// Pelvis yaw about +z, rad.
    pelvis_yaw_rad: f64,
    /// Shoulder-line yaw about +z, rad.
    thorax_yaw_rad: f64,
    /// Per side (right, left): hip, knee, ankle, shoulder, elbow flexion, rad.
    limbs: [LimbAngles; 2],
}

#[derive(Debug, Clone, Copy, Default)]
struct LimbAngles {
    hip_rad: f64,
    knee_rad: f64,
    ankle_rad: f64,
    shoulder_rad: f64,
    elbow_rad: f64,
}

/// The walking model for one person at one speed.
///
/// ```
/// let gait = echobench_gait::Gait::new(1.8, 1.4).unwrap();
/// assert!((gait.cycle_s() - 1.0695).abs() < 1e-3);
/// let mut pose = echobench_gait::Pose::default();
/// gait.pose(0.3, &mut pose);
/// assert!(pose.segments.iter().all(|s| s.center_m[2] > -0.05));
/// ```
#[derive(Debug, Clone, PartialEq)]
pub struct Gait {
    height_m: f64,
    speed_mps: f64,
    relative_velocity: f64,
    thigh_height_m: f64,
    cycle_s: f64,
    support_s: f64,
    double_support_s: f64,
    relative_cycle_length: f64,
    vertical_amplitude_m: f64,
    lateral_amplitude_m: f64,
    surge_amplitude_m: f64,
    surge_phase: f64,
    tilt_amplitude_deg: f64,
    list_amplitude_deg: f64,
    pelvis_torsion_amplitude_deg: f64,
    shoulder_amplitude_deg: f64,
    hip_deg: PeriodicPchip,
    knee_deg: PeriodicPchip,
    ankle_deg: PeriodicPchip,
    elbow_deg: PeriodicPchip,
    thorax_torsion_deg: PeriodicPchip,
}

impl Gait {
    /// The model for a person `height_m` tall walking at `speed_mps`.
    ///
    /// # Errors
    /// If the height is not positive and finite, or the relative velocity
    /// RV = speed / (0.491 · height) is not in (0, 3] (the model's range,
    /// Boulic 1990).
    pub fn new(height_m: f64, speed_mps: f64) -> Result<Gait, GaitError> {
        if !(height_m.is_finite() && height_m > 0.0) {
            return Err(GaitError {
                parameter: "height_m",
                value: height_m,
                allowed: "a positive finite height in metres".to_string(),
            });
        }
        let thigh_height_m = (UPPER_LEG_FRACTION + LOWER_LEG_FRACTION) * height_m;
        let rv = speed_mps / thigh_height_m;
        if !(rv.is_finite() && rv > 0.0 && rv <= MAX_RELATIVE_VELOCITY) {
            return Err(GaitError {
                parameter: "speed_mps",
                value: speed_mps,
                allowed: format!(
                    "0 < speed ≤ {:.3} m/s for a {} m tall person (relative velocity \
                     speed / thigh height in (0, 3])",
                    MAX_RELATIVE_VELOCITY * thigh_height_m,
                    height_m
                ),
            });
        }

        // Global characteristics (Boulic 1990; docs/reference/people.md#p2).
        let relative_cycle_length = 1.346 * rv.sqrt();
        let cycle_s = relative_cycle_length / rv;
        let support_s = 0.752 * cycle_s - 0.143;
        let double_support_s = 0.252 * cycle_s - 0.143;
        let support_fraction = support_s / cycle_s;

        // Regime weights: a below 0.5, b in [0.5, 1.3), c in [1.3, 3].
        let kb = (rv - 0.5) / 0.8;
        let kc = (rv - 1.3) / 1.7;

        let vertical_amplitude_m = 0.015 * rv;
        // Correction (flagged): the transcription gives +0.128·RV(1−RV) and
        // +0.084·RV(1−RV) below RV = 0.5, which jump to −0.032 / −0.021 at 0.5;
        // the negative sign is taken here so both amplitudes are continuous.
        let (lateral_amplitude_m, surge_amplitude_m) = if rv < 0.5 {
            (-0.128 * rv * (1.0 - rv), -0.084 * rv * (1.0 - rv))
        } else {
            (-0.032, -0.021)
        };
        let surge_phase = 0.625 - support_fraction;
        let tilt_amplitude_deg = if rv < 0.5 {
            -8.0 * rv * rv + 8.0 * rv
        } else {
            2.0
        };

        let (hip, knee, ankle, elbow): (Vec<_>, Vec<_>, Vec<_>, Vec<_>) = if rv < 0.5 {
            (
                vec![(-0.1, 50.0 * rv), (0.5, -30.0 * rv), (0.9, 50.0 * rv)],
                vec![(0.17, 3.0), (0.4, 3.0), (0.75, 140.0 * rv), (1.0, 3.0)],
                vec![
                    (0.0, -3.0),
                    (0.08, -30.0 * rv - 3.0),
                    (0.5, 22.0 * rv - 3.0),
                    (support_fraction, -34.0 * rv - 3.0),
                    (0.85, -3.0),
                ],
                vec![
                    (0.05, 6.0 * rv + 3.0),
                    (0.5, 34.0 * rv + 3.0),
                    (0.9, 10.0 * rv + 3.0),
                ],
            )
        } else if rv < 1.3 {
            (
                vec![(-0.1, 25.0), (0.5, -15.0), (0.9, 25.0)],
                vec![(0.17, 3.0), (0.4, 3.0), (0.75, 70.0), (1.0, 3.0)],
                vec![
                    (0.0, -3.0),
                    (0.08, -18.0),
                    (0.5, 8.0),
                    (support_fraction, -20.0),
                    (0.85, -3.0),
                ],
                vec![
                    (0.05, 8.0 * kb + 6.0),
                    (0.5 + 0.01 * kb, 24.0 * kb + 20.0),
                    (0.9, 9.0 * kb + 8.0),
                ],
            )
        } else {
            (
                vec![
                    (0.2 * kc - 0.1, 5.0 * kc + 25.0),
                    (0.5, -15.0),
                    (0.9, 6.0 * kc + 25.0),
                ],
                vec![
                    (0.17 - 0.05 * kc, 22.0 * kc + 3.0),
                    (0.4, 3.0),
                    (0.75 - 0.05 * kc, 70.0 - 5.0 * kc),
                    (1.0 - 0.03 * kc, 3.0 * kc + 3.0),
                ],
                vec![
                    (0.0, 5.0 * kc - 3.0),
                    (0.08, 4.0 * kc - 18.0),
                    (0.5 - 0.1 * kc, 8.0 - 3.0 * kc),
                    (support_fraction, -8.0 * kc - 20.0),
                    (0.85, 5.0 * kc - 3.0),
                ],
                // Correction (flagged): the transcription prints the third
                // point with "(RV − .13)"; continuity with regime b at RV = 1.3
                // needs (RV − 1.3), i.e. k, as written here.
                vec![
                    (0.05, 14.0 - 6.0 * kc),
                    (0.51 + 0.04 * kc, 26.0 * kc + 44.0),
                    (0.9 - 0.1 * kc, 17.0 - 6.0 * kc),
                ],
            )
        };
        // Hip, regimes a and b: (−0.1, ·) and (0.9, ·) are the same knot after
        // the periodic wrap; PeriodicPchip merges coincident knots (the
        // transcription's replicated-points scheme would otherwise hold a
        // zero-length interval there).
        let thorax = [
            (0.1, 4.0 * rv / 3.0),
            (0.4, -1.5 * rv),
            (0.6, -4.0 * rv / 3.0),
            (0.9, 1.5 * rv),
        ];

        Ok(Gait {
            height_m,
            speed_mps,
            relative_velocity: rv,
            thigh_height_m,
            cycle_s,
            support_s,
            double_support_s,
            relative_cycle_length,
            vertical_amplitude_m,
            lateral_amplitude_m,
            surge_amplitude_m,
            surge_phase,
            tilt_amplitude_deg,
            list_amplitude_deg: 1.66 * rv,
            pelvis_torsion_amplitude_deg: 4.0 * rv,
            shoulder_amplitude_deg: 9.88 * rv,
            hip_deg: PeriodicPchip::new(&hip),
            knee_deg: PeriodicPchip::new(&knee),
            ankle_deg: PeriodicPchip::new(&ankle),
            elbow_deg: PeriodicPchip::new(&elbow),
            thorax_torsion_deg: PeriodicPchip::new(&thorax),
        })
    }

    /// Body height H, m.
    pub fn height_m(&self) -> f64 {
        self.height_m
    }

    /// Mean walking speed v, m/s. The body advances at v = RV · H_t (Chen's
    /// code advances it by RL_c per cycle, i.e. at RV m/s; corrected here).
    pub fn speed_mps(&self) -> f64 {
        self.speed_mps
    }

    /// Relative velocity RV = v / H_t, thigh heights per second.
    pub fn relative_velocity(&self) -> f64 {
        self.relative_velocity
    }

    /// Thigh height H_t = (upper + lower leg) = 0.491 H, m.
    pub fn thigh_height_m(&self) -> f64 {
        self.thigh_height_m
    }

    /// Cycle (stride) duration D_c = RL_c / RV, s.
    pub fn cycle_s(&self) -> f64 {
        self.cycle_s
    }

    /// Support (stance) duration of one leg D_s = 0.752 D_c − 0.143, s.
    pub fn support_s(&self) -> f64 {
        self.support_s
    }

    /// Duration of each double-support phase D_ds = 0.252 D_c − 0.143, s.
    pub fn double_support_s(&self) -> f64 {
        self.double_support_s
    }

    /// Stride (cycle) length RL_c · H_t, m.
    pub fn stride_m(&self) -> f64 {
        self.relative_cycle_length * self.thigh_height_m
    }

    /// Cadence, steps per minute (two steps per cycle): 120 / D_c.
    pub fn steps_per_min(&self) -> f64 {
        120.0 / self.cycle_s
    }

    /// Pose at moving time `tau_s` (seconds of walking since phase 0, which is
    /// the right heel strike), body frame: x forward, y left, z up, origin on
    /// the floor under the mean spine-origin position. The mean forward
    /// progress v · tau is not included; the oscillating translations of the
    /// spine origin are. Non-finite `tau_s` is read as 0.
    pub fn pose(&self, tau_s: f64, out: &mut Pose) {
        let phase = wrap_unit(tau_s / self.cycle_s);
        let articulation = self.articulation(phase);
        self.build_pose(&articulation, out);
    }

    /// Pose plus the velocity of every segment centre in the body frame, m/s
    /// (central difference with a step of 10⁻⁴ cycle). Add the walking
    /// velocity (v along x) for ground-frame velocities.
    pub fn pose_with_velocity(
        &self,
        tau_s: f64,
        out: &mut Pose,
        velocity_mps: &mut [[f64; 3]; SEGMENT_COUNT],
    ) {
        let tau_s = if tau_s.is_finite() { tau_s } else { 0.0 };
        // Difference in phase, not in seconds, so that large tau does not cost
        // precision: the phase is wrapped first.
        let phase = wrap_unit(tau_s / self.cycle_s);
        let step = VELOCITY_STEP_CYCLES;
        let mut ahead = Pose::default();
        let mut behind = Pose::default();
        self.build_pose(&self.articulation(wrap_unit(phase + step)), &mut ahead);
        self.build_pose(&self.articulation(wrap_unit(phase - step)), &mut behind);
        let scale = 1.0 / (2.0 * step * self.cycle_s);
        for (v, (a, b)) in velocity_mps
            .iter_mut()
            .zip(ahead.segments.iter().zip(behind.segments.iter()))
        {
            *v = std::array::from_fn(|axis| (a.center_m[axis] - b.center_m[axis]) * scale);
        }
        self.build_pose(&self.articulation(phase), out);
    }

    /// A standing pose (for pauses): upright trunk, legs straight, feet flat
    /// pointing forward, arms hanging, spine origin at the thigh height.
    pub fn standing_pose(&self, out: &mut Pose) {
        let standing = Articulation {
            spine_origin_m: [0.0, 0.0, self.thigh_height_m],
            trunk_tilt_rad: 0.0,
            pelvis_list_rad: 0.0,
            pelvis_yaw_rad: 0.0,
            thorax_yaw_rad: 0.0,
            limbs: [LimbAngles::default(); 2],
        };
        self.build_pose(&standing, out);
    }

    /// Phases in [0, 1) where some joint curve is only C¹ (the PCHIP knots of
    /// both sides, the left side half a cycle late, and the breaks of the
    /// piecewise pelvis list); everything else in the model is smooth.
    fn knot_phases(&self) -> Vec<f64> {
        let mut phases = vec![0.0, 0.15, 0.5, 0.65];
        phases.extend_from_slice(self.thorax_torsion_deg.knots());
        for curve in [
            &self.hip_deg,
            &self.knee_deg,
            &self.ankle_deg,
            &self.elbow_deg,
        ] {
            for &knot in curve.knots() {
                phases.push(knot);
                phases.push(wrap_unit(knot - 0.5));
            }
        }
        phases
    }

    /// Joint angles and translations at normalized phase `t` in [0, 1).
    fn articulation(&self, t: f64) -> Articulation {
        let tau = 2.0 * PI;
        // Spine-origin translations (Boulic 1990 via Chen 2011), m.
        let a_v = self.vertical_amplitude_m;
        let vertical_m = -a_v + a_v * (tau * (2.0 * t - 0.35)).sin();
        let lateral_m = self.lateral_amplitude_m * (tau * (t - 0.1)).sin();
        let surge_m = self.surge_amplitude_m * (tau * (2.0 * t + 2.0 * self.surge_phase)).sin();

        // Pelvis / trunk rotations, degrees.
        let a1 = self.tilt_amplitude_deg;
        let tilt_deg = -a1 + a1 * (tau * (2.0 * t - 0.1)).sin();
        let list_deg = pelvis_list_deg(self.list_amplitude_deg, t);
        let pelvis_torsion_deg = -self.pelvis_torsion_amplitude_deg * (tau * t).cos();
        let thorax_torsion_deg = self.thorax_torsion_deg.at(t);

        let limb = |phase: f64| -> LimbAngles {
            let a_s = self.shoulder_amplitude_deg;
            let shoulder_deg = 3.0 - a_s / 2.0 - a_s * (tau * phase).cos();
            LimbAngles {
                hip_rad: self.hip_deg.at(phase).to_radians(),
                knee_rad: self.knee_deg.at(phase).to_radians(),
                ankle_rad: self.ankle_deg.at(phase).to_radians(),
                shoulder_rad: shoulder_deg.to_radians(),
                elbow_rad: self.elbow_deg.at(phase).to_radians(),
            }
        };

        Articulation {
            spine_origin_m: [surge_m, lateral_m, self.thigh_height_m + vertical_m],
            trunk_tilt_rad: tilt_deg.to_radians(),
            pelvis_list_rad: list_deg.to_radians(),
            // Transcribed torsions applied about −z (see the crate conventions).
            pelvis_yaw_rad: -pelvis_torsion_deg.to_radians(),
            thorax_yaw_rad: -thorax_torsion_deg.to_radians(),
            limbs: [limb(t), limb(wrap_unit(t + 0.5))],
        }
    }

    /// Forward kinematics: joint positions from the articulation, then segments.
    fn build_pose(&self, a: &Articulation, out: &mut Pose) {
        let h = self.height_m;
        let origin = a.spine_origin_m;
        let trunk_axis = [a.trunk_tilt_rad.sin(), 0.0, a.trunk_tilt_rad.cos()];
        let torso_length = TORSO_FRACTION * h;
        let head_length = HEAD_FRACTION * h;
        let neck = along(origin, trunk_axis, torso_length);

        set_segment(
            out,
            SegmentKind::Torso,
            origin,
            trunk_axis,
            torso_length,
            TORSO_RADIUS_M,
        );
        set_segment(
            out,
            SegmentKind::Head,
            neck,
            trunk_axis,
            head_length,
            HEAD_RADIUS_M,
        );

        // Side 0 is right (−y), side 1 is left (+y).
        let sides = [
            (
                -1.0,
                [
                    SegmentKind::RightUpperArm,
                    SegmentKind::RightForearm,
                    SegmentKind::RightThigh,
                    SegmentKind::RightShank,
                    SegmentKind::RightFoot,
                ],
            ),
            (
                1.0,
                [
                    SegmentKind::LeftUpperArm,
                    SegmentKind::LeftForearm,
                    SegmentKind::LeftThigh,
                    SegmentKind::LeftShank,
                    SegmentKind::LeftFoot,
                ],
            ),
        ];
        let (sin_list, cos_list) = a.pelvis_list_rad.sin_cos();
        let (sin_pelvis, cos_pelvis) = a.pelvis_yaw_rad.sin_cos();
        let (sin_thorax, cos_thorax) = a.thorax_yaw_rad.sin_cos();
        for (side, (lateral_sign, kinds)) in sides.iter().enumerate() {
            let angles = a.limbs[side];
            let [upper_arm, forearm, thigh, shank, foot] = *kinds;

            // Hip joint: lateral offset, listed about +x, then yawed.
            let w = lateral_sign * HIP_HALF_WIDTH_FRACTION * h;
            let (y_listed, z_listed) = (w * cos_list, w * sin_list);
            let hip = [
                origin[0] - y_listed * sin_pelvis,
                origin[1] + y_listed * cos_pelvis,
                origin[2] + z_listed,
            ];
            let thigh_axis = limb_direction(angles.hip_rad);
            let shank_angle = angles.hip_rad - angles.knee_rad;
            let shank_axis = limb_direction(shank_angle);
            let foot_angle = shank_angle + angles.ankle_rad;
            let foot_axis = [foot_angle.cos(), 0.0, foot_angle.sin()];
            let upper_leg = UPPER_LEG_FRACTION * h;
            let lower_leg = LOWER_LEG_FRACTION * h;
            let knee = along(hip, thigh_axis, upper_leg);
            let ankle = along(knee, shank_axis, lower_leg);
            set_segment(out, thigh, hip, thigh_axis, upper_leg, THIGH_RADIUS_M);
            set_segment(out, shank, knee, shank_axis, lower_leg, SHANK_RADIUS_M);
            set_segment(
                out,
                foot,
                ankle,
                foot_axis,
                FOOT_FRACTION * h,
                FOOT_RADIUS_M,
            );

            // Shoulder joint: lateral offset at the neck, yawed with the thorax.
            let s = lateral_sign * SHOULDER_HALF_WIDTH_FRACTION * h;
            let shoulder = [neck[0] - s * sin_thorax, neck[1] + s * cos_thorax, neck[2]];
            // The arm hangs from the trunk: the trunk's tilt turns it with it.
            let upper_arm_angle = angles.shoulder_rad - a.trunk_tilt_rad;
            let upper_arm_axis = limb_direction(upper_arm_angle);
            let forearm_axis = limb_direction(upper_arm_angle + angles.elbow_rad);
            let upper_arm_length = UPPER_ARM_FRACTION * h;
            let elbow = along(shoulder, upper_arm_axis, upper_arm_length);
            set_segment(
                out,
                upper_arm,
                shoulder,
                upper_arm_axis,
                upper_arm_length,
                UPPER_ARM_RADIUS_M,
            );
            set_segment(
                out,
                forearm,
                elbow,
                forearm_axis,
                LOWER_ARM_FRACTION * h,
                FOREARM_RADIUS_M,
            );
        }
    }
}

/// Pelvis left/right list, degrees, a piecewise cosine with amplitude a₂ (Boulic 1990 via Chen 2011).
fn pelvis_list_deg(a2: f64, t: f64) -> f64 {
    let tau = 2.0 * PI;
    if t < 0.15 {
        -a2 + a2 * (tau * 10.0 * t / 3.0).cos()
    } else if t < 0.5 {
        -a2 - a2 * (tau * 10.0 * (t - 0.15) / 7.0).cos()
    } else if t < 0.65 {
        a2 - a2 * (tau * 10.0 * (t - 0.5) / 3.0).cos()
    } else {
        a2 + a2 * (tau * 10.0 * (t - 0.65) / 7.0).cos()
    }
}

/// Unit vector of a limb at sagittal angle `angle_rad` from straight down
/// (positive: distal end forward).
fn limb_direction(angle_rad: f64) -> [f64; 3] {
    let (s, c) = angle_rad.sin_cos();
    [s, 0.0, -c]
}

fn along(point: [f64; 3], axis: [f64; 3], distance: f64) -> [f64; 3] {
    [
        point[0] + axis[0] * distance,
        point[1] + axis[1] * distance,
        point[2] + axis[2] * distance,
    ]
}

fn set_segment(
    out: &mut Pose,
    kind: SegmentKind,
    proximal: [f64; 3],
    axis: [f64; 3],
    length_m: f64,
    radius_m: f64,
) {
    out.segments[kind.index()] = Segment {
        name: kind.name(),
        center_m: along(proximal, axis, 0.5 * length_m),
        axis,
        radius_m,
        half_length_m: 0.5 * length_m,
    };
}

#[cfg(test)]
mod tests;
