//! A walking person: the twelve body segments of the Boulic walking model
//! ([`echobench_gait`]) carried along a [`Path`], one echo per segment.
//!
//! Each echo sits at its segment's centre (as in Chen, *The Micro-Doppler
//! Effect in Radar*, 2011, ch. 4). Its position is the path position plus the
//! body-frame pose turned to the path heading; its velocity is the path
//! velocity plus the turned body-frame segment velocity. Its amplitude is
//! presence · √(rcs_scale · σ_k), σ_k the geometric-optics ellipsoid RCS of the
//! segment for the current line of sight ([`crate::rcs::segment_root_rcs_m`]
//! gives √σ_k), so a scene can scale the whole body's RCS with one number.
//!
//! The body-frame pose and segment velocities come from the gait cycle
//! tabulated once per walker ([`CycleTable`]: within 1 µm of the model), not
//! from the joint curves and forward kinematics at every node.
//!
//! # Stopping and starting
//!
//! A person does not stop dead: the body slows down over about one step
//! while the trailing foot is brought alongside, and speeds up over about
//! one step when it sets off (common practice in animation; one step is half
//! a gait cycle). Every stop and every restart of the path is therefore an
//! *easing* of width W (one step, less when the walk or the standstill on
//! either side is shorter) centred on the path's nominal time: the speed
//! along the path is s(t)·v with a raised-cosine s falling from 1 to 0 (or
//! rising from 0 to 1) across the easing, and the gait phase runs on the
//! eased moving time ∫s dt, so the limbs slow down with the body. The lost
//! and gained halves of a centred raised cosine are equal, so outside the
//! easings the walker is exactly where the nominal path puts it, and its
//! gait resumes after a pause at the phase where it stopped. Across the
//! same easing the body blends into the standing pose with weight w = 1 − s
//! (going straight to the standing pose would make the limbs jump by tens
//! of centimetres, a step in every echo's phase that no real person makes).
//!
//! # Standing still
//!
//! A person standing (weight w) keeps swaying and breathing
//! ([`StandingMotion`]): every segment moves with the centre of mass sway in
//! proportion to its height (an inverted pendulum about the ankles), and the
//! torso echo, which carries the chest, also with the breathing. These
//! motions stay a decade below [`MOVING_SPEED_MPS`](crate::MOVING_SPEED_MPS),
//! so the ground truth labels a standing walker *present, not moving*.
//!
//! The motion speed ([`MotionModel::motion_speed_mps`]) is the speed of the
//! torso echo, from the same state as the echoes.

use crate::path::Path;
use crate::rcs::segment_root_rcs_m;
use crate::reflector::{Check, ParamError};

const WALKER: Check = Check { model: "walker" };
use crate::standing::{StandingMotion, COM_HEIGHT_FRACTION};
use crate::{Echo, MotionModel, Vec3};
use echobench_gait::{CycleTable, Gait, Pose, SegmentKind, SEGMENT_COUNT};
use std::f64::consts::PI;
use std::sync::Arc;

/// Phases sampled per cycle when bounding the segment speeds.
const SPEED_SAMPLES_PER_CYCLE: usize = 512;

/// Margin on the sampled peak speed (the true peak falls between samples).
const SPEED_MARGIN: f64 = 1.1;

/// Range error of cubic Hermite node interpolation is J·h²/`KNOT_ERROR_DIVISOR`
/// for an acceleration jump J (see [`Walker`]'s `node_rate_hz`): 62 in theory
/// for an isolated jump, 43 measured on the walker, 30 taken for margin.
const KNOT_ERROR_DIVISOR: f64 = 30.0;

/// Lowest node rate, Hz (see `node_rate_hz`). Above the phase criteria, which
/// fall with the wavelength, this floor keeps the linear interpolation of the
/// aspect-dependent segment RCS within 1 % up to 2.6 m/s (measured by
/// `node_rate_keeps_hermite_interpolation_within_the_phase_tolerance`: 1.6 % at 196 Hz).
const NODE_RATE_FLOOR_HZ: f64 = 250.0;

/// Lowest node rate, Hz, when the renderer takes the amplitudes by a cubic
/// through four nodes (`cubic_amplitude_node_rate_hz`): keeps them within 1 %
/// up to 2.6 m/s (measured by
/// `cubic_amplitudes_stay_within_one_percent_at_their_node_rate`).
const CUBIC_NODE_RATE_FLOOR_HZ: f64 = 100.0;

/// Index of the torso echo (it carries the chest and gives the motion speed).
pub const TORSO_ECHO: usize = SegmentKind::Torso as usize;

/// One eased stop or start of the walk.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Easing {
    /// The path's nominal stop or restart time, s (the centre of the easing).
    centre_s: f64,
    /// Width of the easing, s.
    width_s: f64,
    /// True for a restart (speed rising), false for a stop.
    rising: bool,
}

/// Where the body is along its path and how fast it goes there.
#[derive(Debug, Clone, Copy)]
struct Progress {
    /// Eased moving time (drives the place on the path and the gait phase), s.
    moving_s: f64,
    /// Speed fraction s in [0, 1].
    speed_fraction: f64,
    /// Standing weight w = 1 − s and its rate, 1/s.
    standing: f64,
    standing_rate: f64,
}

/// A walking person on a path.
#[derive(Debug, Clone)]
pub struct Walker {
    gait: Gait,
    /// The gait's cycle tabulated once: a node reads the pose from it instead
    /// of evaluating the joint curves and the forward kinematics three times.
    table: Arc<CycleTable>,
    path: Path,
    rcs_scale: f64,
    /// √rcs_scale, the factor on every echo's amplitude.
    root_rcs_scale: f64,
    /// Eased stops and starts, in time order, not overlapping.
    easings: Vec<Easing>,
    /// Width of a full easing (one step, half a gait cycle), s.
    settle_s: f64,
    standing: Pose,
    residual: StandingMotion,
    max_speed_mps: f64,
    /// Largest jump of a segment centre's acceleration at the gait curves'
    /// knots, m/s² (sets the node rate).
    acceleration_jump_mps2: f64,
    /// Largest segment-centre acceleration, m/s² (sets the node rate for
    /// sensors close to the body, where the range curves fastest).
    max_acceleration_mps2: f64,
    /// The sampled cycle's largest segment speed (at least the walking speed), m/s.
    walking_peak_mps: f64,
    /// The sampled cycle's largest segment distance from the standing pose, m.
    largest_offset_m: f64,
}

/// Raised-cosine ramp R(x) = (1 − cos πx)/2 on [0, 1].
fn ramp(x: f64) -> f64 {
    0.5 - 0.5 * (PI * x).cos()
}

impl Walker {
    /// The node rate the phase criteria ask for (see `node_rate_hz`), without a floor.
    fn phase_node_rate_hz(&self, wavelength_m: f64) -> f64 {
        if !(wavelength_m.is_finite() && wavelength_m > 0.0) {
            return 0.0;
        }
        let range_tolerance_m =
            crate::reflector::NODE_PHASE_TOLERANCE_RAD * wavelength_m / (4.0 * PI);
        let knot_rate_hz =
            (self.acceleration_jump_mps2 / (KNOT_ERROR_DIVISOR * range_tolerance_m)).sqrt();
        let harmonic_rad_s = 2.0 * PI * 8.0 / self.gait.cycle_s();
        let fourth_derivative = self.max_acceleration_mps2 * harmonic_rad_s * harmonic_rad_s;
        let smooth_rate_hz =
            crate::reflector::hermite_node_rate_hz(fourth_derivative, wavelength_m);
        knot_rate_hz.max(smooth_rate_hz)
    }
    /// A person walking `gait` along `path`; `rcs_scale` multiplies every
    /// segment's cross-section (1 for the ellipsoid body of Chen 2011). While
    /// standing the person sways and breathes as [`StandingMotion::quiet_adult`]
    /// with a fixed seed; give each person its own with
    /// [`with_standing_motion`](Walker::with_standing_motion).
    ///
    /// Build the gait for the path's speed: `Gait::new(height_m, path.speed_mps())`.
    ///
    /// # Errors
    /// A [`ParamError`] if `rcs_scale` is not finite and ≥ 0, or if the gait's
    /// speed differs from the path's (the limbs would not match the progress).
    pub fn new(gait: Gait, path: Path, rcs_scale: f64) -> Result<Walker, ParamError> {
        if !(rcs_scale.is_finite() && rcs_scale >= 0.0) {
            return Err(WALKER.error("rcs_scale", rcs_scale, "a finite number >= 0"));
        }
        if (gait.speed_mps() - path.speed_mps()).abs() > 1e-9 * path.speed_mps() {
            return Err(WALKER.error(
                "speed_mps",
                gait.speed_mps(),
                &format!("the path's speed, {} m/s", path.speed_mps()),
            ));
        }
        // Stopping or starting takes about one step (common practice in
        // animation: a walk ends with the trailing foot brought alongside).
        let settle_s = 0.5 * gait.cycle_s();
        let mut standing = Pose::default();
        gait.standing_pose(&mut standing);
        let mut walker = Walker {
            table: CycleTable::shared(&gait),
            easings: easings(&path, settle_s),
            gait,
            path,
            rcs_scale,
            root_rcs_scale: rcs_scale.sqrt(),
            settle_s,
            standing,
            residual: StandingMotion::quiet_adult([0; 32]),
            max_speed_mps: 0.0,
            acceleration_jump_mps2: 0.0,
            max_acceleration_mps2: 0.0,
            walking_peak_mps: 0.0,
            largest_offset_m: 0.0,
        };
        walker.sample_cycle();
        walker.bound_speed();
        Ok(walker)
    }

    /// The same walker with `residual` as its motion while standing.
    pub fn with_standing_motion(mut self, residual: StandingMotion) -> Walker {
        self.residual = residual;
        // The gait cycle's samples do not depend on the standing motion.
        self.bound_speed();
        self
    }

    /// The walking model.
    pub fn gait(&self) -> &Gait {
        &self.gait
    }

    /// The path.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The cross-section scale.
    pub fn rcs_scale(&self) -> f64 {
        self.rcs_scale
    }

    /// Width of a full stop or start easing (half a gait cycle), s.
    pub fn settle_s(&self) -> f64 {
        self.settle_s
    }

    /// Samples one gait cycle for the speed bound and the node-rate inputs.
    fn sample_cycle(&mut self) {
        let table = &self.table;
        let cycle_s = self.gait.cycle_s();
        let v = self.gait.speed_mps();
        let n = SPEED_SAMPLES_PER_CYCLE;
        let dt = cycle_s / n as f64;
        let mut pose = Pose::default();
        let mut velocities = vec![[[0.0; 3]; SEGMENT_COUNT]; n];
        let mut walking_peak: f64 = v;
        let mut largest_offset: f64 = 0.0;
        for (i, velocity) in velocities.iter_mut().enumerate() {
            table.pose_with_velocity(i as f64 * dt, &mut pose, velocity);
            for (k, segment) in pose.segments.iter().enumerate() {
                let u = velocity[k];
                walking_peak = walking_peak.max(crate::norm([u[0] + v, u[1], u[2]]));
                let offset = crate::sub(self.standing.segments[k].center_m, segment.center_m);
                largest_offset = largest_offset.max(crate::norm(offset));
            }
        }
        self.walking_peak_mps = walking_peak;
        self.largest_offset_m = largest_offset;

        // Accelerations by differences of the velocities; a knot of the C¹
        // gait curves shows as a jump between neighbouring samples, a smooth
        // change as a difference of order (da/dt)·dt, which the jump estimate
        // therefore over-counts slightly (a safe side).
        let mut previous_acceleration = [[0.0; 3]; SEGMENT_COUNT];
        let mut max_acceleration: f64 = 0.0;
        let mut max_jump: f64 = 0.0;
        for i in 0..=n {
            let ahead = &velocities[(i + 1) % n];
            let behind = &velocities[i % n];
            for k in 0..SEGMENT_COUNT {
                let a = crate::sub(ahead[k], behind[k]).map(|d| d / dt);
                max_acceleration = max_acceleration.max(crate::norm(a));
                if i > 0 {
                    max_jump = max_jump.max(crate::norm(crate::sub(a, previous_acceleration[k])));
                }
                previous_acceleration[k] = a;
            }
        }
        self.max_acceleration_mps2 = max_acceleration;
        self.acceleration_jump_mps2 = max_jump;
    }

    /// The speed bound from the sampled cycle, the easings and the standing motion.
    fn bound_speed(&mut self) {
        let (walking_peak, largest_offset) = (self.walking_peak_mps, self.largest_offset_m);
        // Across an easing a segment moves at s·(path + (1−w)·gait velocity)
        // + ẇ·(standing − walking pose): at most (1 − R)·A + R'·B/W with A the
        // walking peak (≥ v) and B the largest offset, whose largest value
        // over the easing is A/2 + √(A²/4 + (πB/2W)²). The residual sway adds
        // its speed and ẇ times its displacement. Narrower easings (short
        // pauses) are bounded with their own width.
        let narrowest_s = self
            .easings
            .iter()
            .map(|e| e.width_s)
            .fold(self.settle_s, f64::min);
        let blend = PI / (2.0 * narrowest_s);
        let c = blend * largest_offset;
        let easing_peak = 0.5 * walking_peak + (0.25 * walking_peak * walking_peak + c * c).sqrt();
        let lever = 1.0 / COM_HEIGHT_FRACTION;
        let residual =
            self.residual.max_speed_mps(lever) + blend * self.residual.max_displacement_m(lever);
        // A walker that never stops nor stands moves at the walking peak alone
        // (and keeps the internal rate it had before walkers could stand).
        let walks_throughout = self.easings.is_empty()
            && !self
                .path
                .walking_spans(f64::NEG_INFINITY, f64::INFINITY)
                .is_empty();
        self.max_speed_mps = SPEED_MARGIN
            * if walks_throughout {
                walking_peak
            } else {
                easing_peak + residual
            };
    }

    /// Eased progress at `t_s` (inside the time on the path).
    fn progress(&self, t_s: f64) -> Progress {
        let nominal_moving_s = self.path.moving_time_s(t_s);
        // At most a few easings per walk: a linear search is cheapest.
        for e in &self.easings {
            let start = e.centre_s - 0.5 * e.width_s;
            if t_s < start {
                break;
            }
            if t_s >= start + e.width_s {
                continue;
            }
            let x = (t_s - start) / e.width_s;
            let r = ramp(x);
            let rate = 0.5 * PI * (PI * x).sin() / e.width_s;
            // ∫₀ˣ R = x/2 − sin(πx)/(2π), so ∫₀ˣ (1 − R) = x/2 + sin(πx)/(2π);
            // both reach W/2 at the end, where the nominal path has moved W/2.
            let wiggle = (PI * x).sin() / (2.0 * PI);
            let centre_moving_s = self.path.moving_time_s(e.centre_s);
            return if e.rising {
                Progress {
                    moving_s: centre_moving_s + e.width_s * (0.5 * x - wiggle),
                    speed_fraction: r,
                    standing: 1.0 - r,
                    standing_rate: -rate,
                }
            } else {
                Progress {
                    moving_s: centre_moving_s - 0.5 * e.width_s + e.width_s * (0.5 * x + wiggle),
                    speed_fraction: 1.0 - r,
                    standing: r,
                    standing_rate: rate,
                }
            };
        }
        // A walker that leaves walking is still walking at the leave instant
        // (the path's own test is half-open there).
        let leave = self.path.leave_s();
        let walking = self.path.is_walking(t_s)
            || (t_s == leave && self.path.is_walking(leave - 1e-9 * leave.abs().max(1.0)));
        Progress {
            moving_s: nominal_moving_s,
            speed_fraction: if walking { 1.0 } else { 0.0 },
            standing: if walking { 0.0 } else { 1.0 },
            standing_rate: 0.0,
        }
    }

    /// Room-frame echo positions and velocities of every segment at `t_s`,
    /// with the pose (for the segment axes) and the heading.
    fn kinematics(
        &self,
        t_s: f64,
        pose: &mut Pose,
        positions: &mut [Vec3; SEGMENT_COUNT],
        velocities: &mut [Vec3; SEGMENT_COUNT],
    ) -> [f64; 2] {
        let enter = self.path.enter_s();
        let leave = self.path.leave_s().max(enter);
        // Outside its time on the path the body holds the state it has at the
        // nearest end of that time, still (its amplitude is zero there).
        let inside = t_s >= enter && t_s <= leave;
        // max/min rather than clamp: clamp panics on a NaN bound.
        let t = if t_s.is_nan() {
            enter
        } else {
            t_s.max(enter).min(leave)
        };
        let progress = self.progress(t);
        let (place, heading) = self.path.place_at_moving_time(progress.moving_s);
        let mut body_velocity = [[0.0; 3]; SEGMENT_COUNT];
        self.table
            .pose_with_velocity(progress.moving_s, pose, &mut body_velocity);
        let (w, dw) = (progress.standing, progress.standing_rate);
        let s = progress.speed_fraction;
        if w > 0.0 {
            // Pose (1 − w)·P + w·S; velocity (1 − w)·s·P' + ẇ·(S − P).
            let gait_factor = (1.0 - w) * s;
            for ((segment, stand), v) in pose
                .segments
                .iter_mut()
                .zip(self.standing.segments.iter())
                .zip(body_velocity.iter_mut())
            {
                let offset = crate::sub(stand.center_m, segment.center_m);
                *v = std::array::from_fn(|i| gait_factor * v[i] + dw * offset[i]);
                segment.center_m = std::array::from_fn(|i| segment.center_m[i] + w * offset[i]);
                let axis: Vec3 =
                    std::array::from_fn(|i| (1.0 - w) * segment.axis[i] + w * stand.axis[i]);
                let length = crate::norm(axis);
                segment.axis = if length > 1e-9 {
                    axis.map(|c| c / length)
                } else {
                    stand.axis
                };
            }
            // The standing body sways (each point by its height over the
            // centre of mass height) and the chest breathes, in proportion to w.
            let com_height_m = COM_HEIGHT_FRACTION * self.gait.height_m();
            let (sway, sway_rate) = self.residual.sway(t);
            let (breath, breath_rate) = self.residual.breath(t);
            for (k, (segment, v)) in pose
                .segments
                .iter_mut()
                .zip(body_velocity.iter_mut())
                .enumerate()
            {
                let lever = segment.center_m[2] / com_height_m;
                let mut shift = [lever * sway[0], lever * sway[1]];
                let mut shift_rate = [lever * sway_rate[0], lever * sway_rate[1]];
                if k == TORSO_ECHO {
                    shift[0] += breath;
                    shift_rate[0] += breath_rate;
                }
                for i in 0..2 {
                    segment.center_m[i] += w * shift[i];
                    v[i] += w * shift_rate[i] + dw * shift[i];
                }
            }
        } else {
            for v in body_velocity.iter_mut() {
                *v = v.map(|c| s * c);
            }
        }
        // Body frame → room: x along the heading, y to its left, z up.
        let [hx, hy] = heading;
        let turn = |b: Vec3| -> Vec3 { [hx * b[0] - hy * b[1], hy * b[0] + hx * b[1], b[2]] };
        let path_speed = if inside {
            s * self.path.speed_mps()
        } else {
            0.0
        };
        let path_velocity = [hx * path_speed, hy * path_speed, 0.0];
        for ((segment, v), (position, velocity)) in pose
            .segments
            .iter()
            .zip(body_velocity.iter())
            .zip(positions.iter_mut().zip(velocities.iter_mut()))
        {
            let offset = turn(segment.center_m);
            *position = [place[0] + offset[0], place[1] + offset[1], offset[2]];
            *velocity = if inside {
                let turned = turn(*v);
                std::array::from_fn(|i| path_velocity[i] + turned[i])
            } else {
                [0.0; 3]
            };
        }
        heading
    }
}

/// The eased stops and starts of `path` (see the module doc), each at most
/// `settle_s` wide and no wider than the walk or standstill on either side.
fn easings(path: &Path, settle_s: f64) -> Vec<Easing> {
    let enter = path.enter_s();
    let leave = path.leave_s();
    let walks = path.walking_spans(f64::NEG_INFINITY, f64::INFINITY);
    let mut out = Vec::new();
    for (i, &(start, end)) in walks.iter().enumerate() {
        let walk_s = end - start;
        if start > enter {
            let still_before_s = start - walks.get(i.wrapping_sub(1)).map_or(enter, |w| w.1);
            out.push(Easing {
                centre_s: start,
                width_s: settle_s.min(walk_s).min(still_before_s),
                rising: true,
            });
        }
        if end < leave {
            let still_after_s = walks.get(i + 1).map_or(leave, |w| w.0) - end;
            out.push(Easing {
                centre_s: end,
                width_s: settle_s.min(walk_s).min(still_after_s),
                rising: false,
            });
        }
    }
    out.retain(|e| e.width_s > 0.0 && e.width_s.is_finite());
    out
}

impl MotionModel for Walker {
    /// The walk eases its stops and starts, presence ramps by a raised
    /// cosine and the gait's joint curves are C¹: no velocity steps, unless
    /// the path turns a corner (the heading steps there).
    fn band_limited(&self) -> bool {
        !self.path.has_corners()
    }

    fn echoes(&mut self, t_s: f64, sensor_m: Vec3, out: &mut Vec<Echo>) {
        let presence = self.path.presence(t_s);
        // Any pose will do as the starting value: `kinematics` overwrites it.
        let mut pose = self.standing;
        let mut positions = [[0.0; 3]; SEGMENT_COUNT];
        let mut velocities = [[0.0; 3]; SEGMENT_COUNT];
        let [hx, hy] = self.kinematics(t_s, &mut pose, &mut positions, &mut velocities);
        let turn = |b: Vec3| -> Vec3 { [hx * b[0] - hy * b[1], hy * b[0] + hx * b[1], b[2]] };
        for ((segment, &position_m), &velocity_mps) in
            pose.segments.iter().zip(&positions).zip(&velocities)
        {
            let to_sensor = crate::sub(sensor_m, position_m);
            let range_m = crate::norm(to_sensor);
            // At the sensor itself (or with a bad sensor position) the aspect
            // is undefined; it reads as broadside.
            let cos_aspect = if range_m > 1e-12 && range_m.is_finite() {
                crate::dot(turn(segment.axis), to_sensor) / range_m
            } else {
                0.0
            };
            let root_rcs_m =
                segment_root_rcs_m(segment.radius_m, segment.half_length_m, cos_aspect);
            out.push(Echo {
                position_m,
                velocity_mps,
                amplitude_m: presence * self.root_rcs_scale * root_rcs_m,
            });
        }
    }

    fn echo_count(&self) -> usize {
        SEGMENT_COUNT
    }
    /// Ranges of the segment centres are C¹ in time: the joint angles are
    /// piecewise cubics (PCHIP) whose second derivative jumps at the control
    /// points, so the Hermite error falls as h² near them, not h⁴. A jump J in
    /// a centre's acceleration inside a node interval h costs at most J·h²/62
    /// of range (the Hermite interpolant of J·(t − s)²₊/2 on [0, h], worst
    /// over s); measured on the walker (24.125 GHz, 1.2–1.8 m tall, 0.45–2.6
    /// m/s) the error is J·h²/43 with the smooth part included, so
    /// h ≤ √(30·e/J), e = tol·λ/4π the range error allowed by the crate's phase
    /// tolerance. The smooth part alone (h⁴·M₄/384, M₄ ≤ largest acceleration
    /// × (8 gait harmonics)²) asks far less. Measured phase errors at 24.125
    /// GHz: 0.014 rad at 200 Hz, 0.004 rad at 400 Hz (1.8 m, 1.4 m/s). The
    /// floor of 400 Hz keeps that margin for sensors next to the path, where
    /// the range bends faster than the motion, and keeps the linear
    /// interpolation of the aspect-dependent amplitudes well inside 1 %; the
    /// knot term takes over above ≈ 2.6 m/s at 24 GHz.
    fn node_rate_hz(&self, wavelength_m: f64) -> f64 {
        self.phase_node_rate_hz(wavelength_m)
            .max(NODE_RATE_FLOOR_HZ)
    }

    /// The phase criteria alone, with a floor of `CUBIC_NODE_RATE_FLOOR_HZ`
    /// for the amplitudes: at 2.45 GHz this is 90–200 Hz where the linear
    /// amplitudes need 250 Hz.
    fn cubic_amplitude_node_rate_hz(&self, wavelength_m: f64) -> Option<f64> {
        Some(
            self.phase_node_rate_hz(wavelength_m)
                .max(CUBIC_NODE_RATE_FLOOR_HZ),
        )
    }

    fn max_speed_mps(&self) -> f64 {
        self.max_speed_mps
    }

    /// The whole time on the path: walking, easing or standing (and swaying).
    fn active_intervals(&self, duration_s: f64) -> Vec<(f64, f64)> {
        self.body_presence_intervals(duration_s)
    }

    /// The torso echo's speed from entry to leaving (both included, so that a
    /// walker that enters or leaves walking is moving up to those instants).
    fn motion_speed_mps(&mut self, t_s: f64) -> f64 {
        if !(t_s >= self.path.enter_s() && t_s <= self.path.leave_s()) {
            return 0.0;
        }
        let mut pose = self.standing;
        let mut positions = [[0.0; 3]; SEGMENT_COUNT];
        let mut velocities = [[0.0; 3]; SEGMENT_COUNT];
        self.kinematics(t_s, &mut pose, &mut positions, &mut velocities);
        crate::norm(velocities[TORSO_ECHO])
    }

    fn body_presence_intervals(&self, duration_s: f64) -> Vec<(f64, f64)> {
        let start = self.path.enter_s().max(0.0);
        let end = self.path.leave_s().min(duration_s);
        if end > start {
            vec![(start, end)]
        } else {
            Vec::new()
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::path::Pause;
    use crate::standing::StandingMotion;

    const C_MPS: f64 = 299_792_458.0;

    /// A 1.8 m person entering at t = 1 s, 12 m from a sensor at the origin,
    /// heading straight at it (−x), leaving at t = 7 s.
    fn walker_towards_sensor(speed_mps: f64, pauses: Vec<Pause>) -> Walker {
        let gait = Gait::new(1.8, speed_mps).expect("valid gait");
        let path = Path::straight([12.0, 0.0], PI, speed_mps, 1.0, 7.0, pauses);
        Walker::new(gait, path, 1.0).expect("valid walker")
    }

    #[test]
    fn only_a_walk_without_corners_is_band_limited() {
        assert!(walker_towards_sensor(1.4, vec![]).band_limited());
        let gait = Gait::new(1.8, 1.0).expect("valid gait");
        let turning = Path::polyline(
            vec![[9.0, 1.0], [1.8, 0.2], [2.2, 6.5]],
            1.0,
            1.0,
            30.0,
            vec![],
        );
        assert!(!Walker::new(gait.clone(), turning, 1.0)
            .unwrap()
            .band_limited());
        let along = Path::polyline(
            vec![[0.0, 0.0], [1.0, 1.0], [3.0, 3.0]],
            1.0,
            1.0,
            30.0,
            vec![],
        );
        assert!(Walker::new(gait, along, 1.0).unwrap().band_limited());
    }

    /// Closing speed (positive approaching) of an echo as seen from `sensor_m`.
    fn closing_speed_mps(echo: &Echo, sensor_m: Vec3) -> f64 {
        let d = crate::sub(sensor_m, echo.position_m);
        crate::dot(d, echo.velocity_mps) / crate::norm(d)
    }

    #[test]
    fn doppler_of_a_walker_heading_at_the_sensor_matches_the_reference_ranges() {
        // docs/reference/people.md#p4 [C, Boulic model]: v = 1.4 m/s straight at the sensor,
        // torso 19–27 / 45–64 / 81–116 / 185–266 Hz and toe up to 97 / 229 / 415 /
        // 951 Hz at 2.45 / 5.8 / 10.525 / 24.125 GHz (±10 %). The echoes sit at
        // segment centres: the foot-centre echo is the fastest, a little slower
        // than the toe (the foot segment's tip).
        let reference = [
            (2.45e9, (19.0, 27.0), 97.0),
            (5.8e9, (45.0, 64.0), 229.0),
            (10.525e9, (81.0, 116.0), 415.0),
            (24.125e9, (185.0, 266.0), 951.0),
        ];
        let mut walker = walker_towards_sensor(1.4, vec![]);
        let sensor = [0.0, 0.0, 1.1];
        let torso = echobench_gait::SegmentKind::Torso.index();
        let (mut torso_lo, mut torso_hi, mut fastest) =
            (f64::INFINITY, f64::NEG_INFINITY, f64::NEG_INFINITY);
        let mut out = Vec::new();
        // After the entry ramp, two full cycles and more, 11 m to 4 m from the sensor.
        for i in 0..5000 {
            out.clear();
            walker.echoes(1.5 + i as f64 * 1e-3, sensor, &mut out);
            let torso_speed = closing_speed_mps(&out[torso], sensor);
            torso_lo = torso_lo.min(torso_speed);
            torso_hi = torso_hi.max(torso_speed);
            for echo in &out {
                fastest = fastest.max(closing_speed_mps(echo, sensor));
            }
        }
        let near = |x: f64, expected: f64| (x - expected).abs() <= 0.10 * expected;
        for (carrier_hz, (lo_hz, hi_hz), toe_hz) in reference {
            let per_mps = 2.0 * carrier_hz / C_MPS;
            let (lo, hi, peak) = (torso_lo * per_mps, torso_hi * per_mps, fastest * per_mps);
            assert!(
                near(lo, lo_hz) && near(hi, hi_hz),
                "{carrier_hz}: torso {lo}..{hi}"
            );
            assert!(
                near(peak, toe_hz),
                "{carrier_hz}: fastest echo {peak} vs toe {toe_hz}"
            );
        }
    }

    #[test]
    fn echo_count_is_constant_and_amplitude_is_zero_while_absent() {
        let mut walker = walker_towards_sensor(
            1.4,
            vec![Pause {
                at_s: 3.0,
                duration_s: 1.5,
            }],
        );
        assert_eq!(walker.echo_count(), SEGMENT_COUNT);
        let mut out = Vec::new();
        for i in 0..90 {
            let t = i as f64 * 0.1;
            out.clear();
            walker.echoes(t, [0.0, 0.0, 1.0], &mut out);
            assert_eq!(out.len(), SEGMENT_COUNT, "t {t}");
            let present = t > 1.0 && t < 7.0;
            for echo in &out {
                assert!(echo.amplitude_m.is_finite() && echo.amplitude_m >= 0.0);
                assert!(echo.position_m.iter().all(|c| c.is_finite()));
                if present {
                    assert!(echo.amplitude_m > 0.0, "t {t}");
                } else {
                    assert_eq!(echo.amplitude_m, 0.0, "t {t}");
                }
                if !(1.0..=7.0).contains(&t) {
                    // Before entry and after leaving the body holds still.
                    assert_eq!(echo.velocity_mps, [0.0; 3], "t {t}");
                }
            }
        }
        // Present (and so active: walking, easing or swaying) from entry to leaving.
        assert_eq!(walker.active_intervals(10.0), vec![(1.0, 7.0)]);
        assert_eq!(walker.body_presence_intervals(5.0), vec![(1.0, 5.0)]);
    }

    #[test]
    fn a_pause_settles_into_the_standing_pose_without_jumps() {
        let pause = Pause {
            at_s: 3.0,
            duration_s: 2.0,
        };
        // Without the standing sway, so that the standing pose is exact.
        let mut walker =
            walker_towards_sensor(1.4, vec![pause]).with_standing_motion(StandingMotion::none());
        let sensor = [0.0, 0.0, 1.0];
        let settle = walker.settle_s;
        let mut previous: Option<Vec<Echo>> = None;
        let mut out = Vec::new();
        let dt = 1e-3;
        for i in 0..4000 {
            let t = 2.0 + i as f64 * dt;
            out.clear();
            walker.echoes(t, sensor, &mut out);
            if let Some(prev) = &previous {
                for (a, b) in prev.iter().zip(out.iter()) {
                    // No segment moves faster than the walker's speed bound between samples.
                    let step = crate::norm(crate::sub(a.position_m, b.position_m));
                    assert!(step <= walker.max_speed_mps() * dt * 1.01, "t {t}: {step}");
                }
            }
            previous = Some(out.clone());
        }
        // Mid-pause: still, in the standing pose, at the path position.
        out.clear();
        walker.echoes(pause.at_s + 0.5 * pause.duration_s, sensor, &mut out);
        let state = walker.path().state(4.0);
        assert!(pause.duration_s > 2.0 * settle);
        for (echo, stand) in out.iter().zip(walker.standing.segments.iter()) {
            assert_eq!(echo.velocity_mps, [0.0; 3]);
            let expected = [
                state.position_m[0] - stand.center_m[0],
                state.position_m[1] - stand.center_m[1],
                stand.center_m[2],
            ];
            assert!(crate::norm(crate::sub(echo.position_m, expected)) < 1e-9);
        }
        // Outside the easings the walker is where the nominal path puts it,
        // and the gait resumes at the phase where it stopped: the eased walker
        // after the pause matches a walker that never stopped, shifted by the pause.
        let gait = Gait::new(1.8, 1.4).expect("valid gait");
        let mut straight = Walker::new(
            gait,
            Path::straight([12.0, 0.0], PI, 1.4, 1.0, 7.0, vec![]),
            1.0,
        )
        .expect("valid walker");
        let (mut before, mut after) = (Vec::new(), Vec::new());
        for later in [pause.at_s + pause.duration_s + 0.5 * settle + 0.01, 6.0] {
            before.clear();
            after.clear();
            let t_straight = later - pause.duration_s;
            straight.echoes(t_straight, sensor, &mut before);
            walker.echoes(later, sensor, &mut after);
            assert!(t_straight > pause.at_s + 0.5 * settle);
            for (a, b) in before.iter().zip(after.iter()) {
                assert!(
                    crate::norm(crate::sub(a.position_m, b.position_m)) < 1e-9,
                    "{later}"
                );
                assert!(crate::norm(crate::sub(a.velocity_mps, b.velocity_mps)) < 1e-9);
            }
        }
    }

    #[test]
    fn a_pause_eases_the_torso_to_a_stop_and_back_and_the_standing_body_sways() {
        // The torso's speed falls from walking to below the moving level
        // within the easing centred on the pause start, and rises back across
        // the easing centred on its end; in between, the body sways and breathes
        // at a few mm/s (never still, never moving).
        let pause = Pause {
            at_s: 3.0,
            duration_s: 2.0,
        };
        let mut walker = walker_towards_sensor(1.4, vec![pause])
            .with_standing_motion(StandingMotion::quiet_adult([9; 32]));
        let half = 0.5 * walker.settle_s;
        let mut out = Vec::new();
        let (mut still_min, mut still_max) = (f64::INFINITY, 0.0f64);
        // Up to just before leaving (the presence, and so the motion speed, is 0 at 7 s).
        for i in 0..5499 {
            let t = 1.5 + i as f64 * 1e-3;
            out.clear();
            walker.echoes(t, [0.0, 0.0, 1.0], &mut out);
            let speed = crate::norm(out[TORSO_ECHO].velocity_mps);
            let measured = walker.motion_speed_mps(t);
            assert!((speed - measured).abs() < 1e-12, "{t}: {speed} {measured}");
            let end = pause.at_s + pause.duration_s;
            if t < pause.at_s - half || (t > end + half && t < 7.0) {
                assert!(speed > 0.8, "walking at {t}: {speed}");
            } else if t > pause.at_s + half && t < end - half {
                still_min = still_min.min(speed);
                still_max = still_max.max(speed);
            }
        }
        assert!(still_max < 0.03 && still_min >= 0.0, "{still_max}");
        assert!(still_max > 0.001, "the standing body moves: {still_max}");
    }

    #[test]
    fn the_slowest_walker_of_interest_stays_above_the_moving_level_while_walking() {
        // 0.3 m/s (a frail walker with a frame, the reason for the 0.1 m/s
        // level): the torso's speed swings with the gait but stays well above it.
        for height_m in [1.5, 1.8] {
            let gait = Gait::new(height_m, 0.3).expect("valid gait");
            let path = Path::straight([5.0, 0.0], PI, 0.3, 0.0, 30.0, vec![]);
            let mut walker = Walker::new(gait, path, 1.0).expect("valid walker");
            let slowest = (0..10_000)
                .map(|i| walker.motion_speed_mps(1.0 + i as f64 * 1e-3))
                .fold(f64::INFINITY, f64::min);
            assert!(
                slowest > 1.5 * crate::MOVING_SPEED_MPS,
                "{height_m}: {slowest}"
            );
        }
    }

    #[test]
    fn no_echo_exceeds_the_speed_bound() {
        // Slow walkers swing their feet fastest relative to their speed (toe
        // ≈ 7 v at 0.45 m/s against ≈ 4.2 v at 1.4 m/s), so the bound is sampled
        // from the gait, not taken as a multiple of v.
        // A full-width pause checks that the bound is tight; a pause shorter
        // than one step (narrower easings, faster blends) that it still holds.
        for (speed, pause_s) in [0.3, 0.45, 1.4, 2.6]
            .into_iter()
            .flat_map(|v| [(v, 2.0), (v, 0.4)])
        {
            let mut walker = walker_towards_sensor(
                speed,
                vec![Pause {
                    at_s: 3.0,
                    duration_s: pause_s,
                }],
            );
            let bound = walker.max_speed_mps();
            assert!(
                bound > 3.0 * speed && bound < 12.0 * speed,
                "{speed}: {bound}"
            );
            let mut out = Vec::new();
            let mut fastest: f64 = 0.0;
            for i in 0..8000 {
                out.clear();
                walker.echoes(i as f64 * 1e-3, [0.0, 0.0, 1.0], &mut out);
                for echo in &out {
                    fastest = fastest.max(crate::norm(echo.velocity_mps));
                }
            }
            assert!(
                fastest <= bound && (pause_s < 1.0 || fastest > bound / 1.5),
                "{speed}: {fastest} vs {bound}"
            );
        }
    }

    /// Largest round-trip phase error (rad) of cubic Hermite interpolation of
    /// the echo ranges between nodes at `rate_hz` (ranges and range rates from
    /// the echoes, as the synthesizer does), against the exact ranges at
    /// quarter points, and the largest error of linear amplitude interpolation
    /// relative to the echo's peak amplitude.
    /// Worst phase error of the ranges' Hermite cubic and worst amplitude
    /// error (relative to each echo's peak) of the amplitudes' line through
    /// two nodes, or with `cubic` of their Catmull–Rom cubic through four
    /// (slopes (A₊ − A₋)/2 per node interval), at quarter points between nodes.
    fn interpolation_errors(
        walker: &mut Walker,
        rate_hz: f64,
        wavelength_m: f64,
        sensor_m: Vec3,
        (t0, t1): (f64, f64),
    ) -> (f64, f64) {
        interpolation_errors_with(walker, rate_hz, wavelength_m, sensor_m, (t0, t1), false)
    }

    fn interpolation_errors_with(
        walker: &mut Walker,
        rate_hz: f64,
        wavelength_m: f64,
        sensor_m: Vec3,
        (t0, t1): (f64, f64),
        cubic: bool,
    ) -> (f64, f64) {
        let h = 1.0 / rate_hz;
        let range_and_rate = |e: &Echo| {
            let d = crate::sub(e.position_m, sensor_m);
            let r = crate::norm(d);
            (r, crate::dot(d, e.velocity_mps) / r)
        };
        let (mut phase_error, mut amplitude_error): (f64, f64) = (0.0, 0.0);
        let mut peak_amplitude = [0.0f64; SEGMENT_COUNT];
        let mut amplitude_misses = [0.0f64; SEGMENT_COUNT];
        let (mut a, mut b, mut mid) = (Vec::new(), Vec::new(), Vec::new());
        let (mut before, mut after) = (Vec::new(), Vec::new());
        let nodes = ((t1 - t0) * rate_hz) as usize;
        for i in 0..nodes {
            let ta = t0 + i as f64 * h;
            a.clear();
            b.clear();
            walker.echoes(ta, sensor_m, &mut a);
            walker.echoes(ta + h, sensor_m, &mut b);
            before.clear();
            after.clear();
            walker.echoes(ta - h, sensor_m, &mut before);
            walker.echoes(ta + 2.0 * h, sensor_m, &mut after);
            for q in 1..4 {
                let s = q as f64 / 4.0;
                mid.clear();
                walker.echoes(ta + s * h, sensor_m, &mut mid);
                for k in 0..SEGMENT_COUNT {
                    let (r0, d0) = range_and_rate(&a[k]);
                    let (r1, d1) = range_and_rate(&b[k]);
                    let (exact, _) = range_and_rate(&mid[k]);
                    let (s2, s3) = (s * s, s * s * s);
                    let interpolated = (2.0 * s3 - 3.0 * s2 + 1.0) * r0
                        + (s3 - 2.0 * s2 + s) * h * d0
                        + (-2.0 * s3 + 3.0 * s2) * r1
                        + (s3 - s2) * h * d1;
                    phase_error =
                        phase_error.max(4.0 * PI * (interpolated - exact).abs() / wavelength_m);
                    let (a0, a1) = (a[k].amplitude_m, b[k].amplitude_m);
                    let estimate = if cubic {
                        let m0 = 0.5 * (a1 - before[k].amplitude_m);
                        let m1 = 0.5 * (after[k].amplitude_m - a0);
                        (2.0 * s3 - 3.0 * s2 + 1.0) * a0
                            + (s3 - 2.0 * s2 + s) * m0
                            + (-2.0 * s3 + 3.0 * s2) * a1
                            + (s3 - s2) * m1
                    } else {
                        (1.0 - s) * a0 + s * a1
                    };
                    amplitude_misses[k] =
                        amplitude_misses[k].max((estimate - mid[k].amplitude_m).abs());
                    peak_amplitude[k] = peak_amplitude[k].max(mid[k].amplitude_m);
                }
            }
        }
        for k in 0..SEGMENT_COUNT {
            amplitude_error = amplitude_error.max(amplitude_misses[k] / peak_amplitude[k]);
        }
        (phase_error, amplitude_error)
    }

    #[test]
    fn cubic_amplitudes_stay_within_one_percent_at_their_node_rate() {
        // As the test below, with the amplitudes by a cubic through four nodes
        // at `cubic_amplitude_node_rate_hz`: the phase tolerance and 1 %, at
        // rates below the linear amplitudes' 250 Hz where the carrier allows.
        let tolerance = crate::reflector::NODE_PHASE_TOLERANCE_RAD;
        for (height_m, speed_mps) in [(1.8, 1.4), (1.8, 2.6), (1.2, 1.0), (1.75, 0.5)] {
            for carrier_hz in [2.45e9, 5.8e9, 24.125e9] {
                let wavelength_m = C_MPS / carrier_hz;
                let gait = Gait::new(height_m, speed_mps).expect("valid gait");
                let path = Path::straight([2.0, 0.3], PI, speed_mps, 0.0, 100.0, vec![]);
                let mut walker = Walker::new(gait, path, 1.0).expect("valid walker");
                let rate = walker.cubic_amplitude_node_rate_hz(wavelength_m).unwrap();
                let label = format!("H {height_m} v {speed_mps} f {carrier_hz}: {rate} Hz");
                assert!(
                    (CUBIC_NODE_RATE_FLOOR_HZ..=2000.0).contains(&rate),
                    "{label}"
                );
                if carrier_hz < 3e9 {
                    assert!(rate < NODE_RATE_FLOOR_HZ, "{label}");
                }
                let (phase, amplitude) = interpolation_errors_with(
                    &mut walker,
                    rate,
                    wavelength_m,
                    [0.0, 0.0, 0.5],
                    (0.5, 2.5),
                    true,
                );
                assert!(phase < tolerance, "{label}: {phase}");
                assert!(amplitude < 0.01, "{label}: {amplitude}");
            }
        }
    }

    #[test]
    fn node_rate_keeps_hermite_interpolation_within_the_phase_tolerance() {
        // The slow, obvious version: exact ranges at points between nodes.
        let tolerance = crate::reflector::NODE_PHASE_TOLERANCE_RAD;
        for (height_m, speed_mps) in [(1.8, 1.4), (1.8, 2.6), (1.2, 1.0)] {
            for carrier_hz in [2.45e9, 5.8e9, 24.125e9] {
                let wavelength_m = C_MPS / carrier_hz;
                let gait = Gait::new(height_m, speed_mps).expect("valid gait");
                // Passing 0.3 m beside a sensor at knee height, 2 s of walking.
                let path = Path::straight([2.0, 0.3], PI, speed_mps, 0.0, 100.0, vec![]);
                let mut walker = Walker::new(gait, path, 1.0).expect("valid walker");
                let rate = walker.node_rate_hz(wavelength_m);
                assert!((NODE_RATE_FLOOR_HZ..=2000.0).contains(&rate), "{rate}");
                let (phase, amplitude) = interpolation_errors(
                    &mut walker,
                    rate,
                    wavelength_m,
                    [0.0, 0.0, 0.5],
                    (0.5, 2.5),
                );
                assert!(
                    phase < tolerance,
                    "H {height_m} v {speed_mps} f {carrier_hz}: {phase}"
                );
                assert!(amplitude < 0.01, "H {height_m} v {speed_mps}: {amplitude}");
            }
        }
        // The criterion bites: a quarter of the rate misses the tolerance at 24 GHz.
        let gait = Gait::new(1.8, 1.4).expect("valid gait");
        let path = Path::straight([3.0, 0.0], PI, 1.4, 0.0, 100.0, vec![]);
        let mut walker = Walker::new(gait, path, 1.0).expect("valid walker");
        let wavelength_m = C_MPS / 24.125e9;
        let rate = walker.node_rate_hz(wavelength_m) / 4.0;
        let (phase, _) =
            interpolation_errors(&mut walker, rate, wavelength_m, [0.0, 0.0, 1.0], (0.5, 2.5));
        assert!(phase > tolerance, "{phase}");
    }

    #[test]
    fn amplitudes_follow_the_ellipsoid_rcs_and_the_scale() {
        // Standing (mid-pause) torso seen broadside at its own height: σ = πc² with
        // c = 0.288·H/2 = 0.2592 m (H = 1.8 m) → 0.2111 m² (check-values.md#pc10,
        // Chen 2011 ellipsoid); amplitude √σ ∝ √(rcs_scale) (docs/reference/radar-physics.md#r9,
        // property b).
        let pause = vec![Pause {
            at_s: 2.0,
            duration_s: 4.0,
        }];
        let gait = Gait::new(1.8, 1.4).expect("valid gait");
        let path = Path::straight([5.0, 0.0], PI, 1.4, 1.0, 10.0, pause);
        let mut unit = Walker::new(gait.clone(), path.clone(), 1.0).expect("valid walker");
        let mut scaled = Walker::new(gait, path, 4.0).expect("valid walker");
        let torso = echobench_gait::SegmentKind::Torso.index();
        let height = 0.491 * 1.8 + 0.5 * 0.288 * 1.8;
        let (mut a, mut b) = (Vec::new(), Vec::new());
        unit.echoes(4.0, [0.0, 0.0, height], &mut a);
        scaled.echoes(4.0, [0.0, 0.0, height], &mut b);
        assert!(
            (a[torso].amplitude_m.powi(2) - 0.2111).abs() < 5e-4,
            "{}",
            a[torso].amplitude_m
        );
        for (x, y) in a.iter().zip(b.iter()) {
            assert!((y.amplitude_m - 2.0 * x.amplitude_m).abs() < 1e-12);
        }
        // Seen from straight above, the torso is end-on: πa⁴/c² = 0.02367 m²
        // (docs/reference/check-values.md#pc10).
        let torso_echo = a[torso];
        a.clear();
        unit.echoes(4.0, [torso_echo.position_m[0], 0.0, 10.0], &mut a);
        assert!((a[torso].amplitude_m.powi(2) - 0.02367).abs() < 5e-5);
        let line = Path::straight([0.0, 0.0], 0.0, 1.4, 0.0, 5.0, vec![]);
        let gait = Gait::new(1.8, 1.4).expect("valid gait");
        for bad in [f64::NAN, -1.0, f64::INFINITY] {
            let err = Walker::new(gait.clone(), line.clone(), bad).unwrap_err();
            assert_eq!(err.param, "rcs_scale");
        }
        let slower = Path::straight([0.0, 0.0], 0.0, 1.0, 0.0, 5.0, vec![]);
        assert_eq!(
            Walker::new(gait, slower, 1.0).unwrap_err().param,
            "speed_mps"
        );
    }

    #[test]
    fn body_frame_turns_with_the_heading() {
        // Walking along +y: forward is +y, the body's left is −x, so the right
        // shoulder lies at larger x than the left one.
        let gait = Gait::new(1.8, 1.4).expect("valid gait");
        let path = Path::straight([1.0, 2.0], 0.5 * PI, 1.4, 0.0, 10.0, vec![]);
        let mut walker = Walker::new(gait, path, 1.0).expect("valid walker");
        let mut out = Vec::new();
        walker.echoes(2.0, [0.0, 0.0, 1.0], &mut out);
        use echobench_gait::SegmentKind as K;
        let x = |k: K| out[k.index()].position_m[0];
        assert!(x(K::RightUpperArm) > x(K::LeftUpperArm) && x(K::RightThigh) > x(K::LeftThigh));
        let torso = out[K::Torso.index()];
        assert!((torso.position_m[0] - 1.0).abs() < 0.1);
        assert!((torso.position_m[1] - (2.0 + 1.4 * 2.0)).abs() < 0.1);
        assert!((torso.velocity_mps[1] - 1.4).abs() < 0.3 && torso.velocity_mps[0].abs() < 0.2);
    }
}
