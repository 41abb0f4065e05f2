//! Actor entries of a scene file: what moves, as written by the user.

use crate::param::{Bounds, Param, ParamFields};
use crate::spec::read_param_array;
use echobench_yaml_reader::{Fields, Node, Reader, Value};

/// The kinds of actor a scene can hold.
pub const ACTOR_KINDS: [&str; 7] = [
    "walker",
    "breathing",
    "sway",
    "fan",
    "animal",
    "door",
    "reflector",
];

/// One actor of a scene.
#[derive(Debug, Clone, PartialEq)]
pub struct ActorSpec {
    /// A name unique in the scene (defaults to `kind` and its index).
    pub id: String,
    /// Whether it is something the sensor must detect (walkers by default).
    pub target: bool,
    /// What it is, with its numbers.
    pub kind: ActorKind,
}

impl ActorSpec {
    /// The kind's name as written in files.
    pub fn kind_name(&self) -> &'static str {
        match self.kind {
            ActorKind::Walker(_) => "walker",
            ActorKind::Breathing(_) => "breathing",
            ActorKind::Sway(_) => "sway",
            ActorKind::Fan(_) => "fan",
            ActorKind::Animal(_) => "animal",
            ActorKind::Door(_) => "door",
            ActorKind::Reflector(_) => "reflector",
        }
    }
}

/// Kind-specific numbers.
#[derive(Debug, Clone, PartialEq)]
pub enum ActorKind {
    /// A walking person.
    Walker(WalkerSpec),
    /// A person sitting and breathing.
    Breathing(BreathingSpec),
    /// A swaying object: plant, curtain, hanging sign.
    Sway(SwaySpec),
    /// A fan.
    Fan(FanSpec),
    /// A small animal.
    Animal(AnimalSpec),
    /// A door swinging.
    Door(DoorSpec),
    /// A bench reflector (plate, corner reflector) on a line, a shaker, or both.
    Reflector(ReflectorSpec),
}

/// A walk through the room.
#[derive(Debug, Clone, PartialEq)]
pub struct PathSpec {
    /// Either a start and heading, or a polyline.
    pub route: Route,
    /// Walking speed, m/s.
    pub speed_mps: Param,
    /// Entry time, s.
    pub enter_s: Param,
    /// Leave time, s (`None`: at the end of the trial or of the polyline).
    pub leave_s: Option<Param>,
    /// Stop-and-go pauses.
    pub pauses: Vec<PauseSpec>,
}

/// The geometry of a path.
#[derive(Debug, Clone, PartialEq)]
pub enum Route {
    /// Straight from a start point along a heading.
    Straight {
        /// Start on the floor (x, y), m.
        start_m: [Param; 2],
        /// Heading from +x towards +y, degrees.
        heading_deg: Param,
    },
    /// Through fixed points on the floor, m.
    Points(Vec<[f64; 2]>),
}

/// A pause on a path.
#[derive(Debug, Clone, PartialEq)]
pub struct PauseSpec {
    /// Start, s.
    pub at_s: Param,
    /// Length, s.
    pub duration_s: Param,
}

/// A walking person (Boulic walking model).
#[derive(Debug, Clone, PartialEq)]
pub struct WalkerSpec {
    /// Body height, m.
    pub height_m: Param,
    /// Scale on every segment's RCS (1 = the ellipsoid model as is).
    pub rcs_scale: Param,
    /// The walk.
    pub path: PathSpec,
}

/// A person sitting and breathing.
#[derive(Debug, Clone, PartialEq)]
pub struct BreathingSpec {
    /// Seat position on the floor (x, y), m.
    pub position_m: [Param; 2],
    /// Chest height, m.
    pub chest_height_m: Param,
    /// Direction the person faces, degrees from +x.
    pub facing_deg: Param,
    /// Breaths per minute.
    pub rate_per_min: Param,
    /// Chest-wall displacement, peak to peak, m.
    pub displacement_pp_m: Param,
    /// Chest RCS, m².
    pub rcs_m2: Param,
    /// Heartbeat displacement peak to peak, m (0 = none).
    pub heartbeat_pp_m: Param,
    /// Heart rate, beats per minute.
    pub heart_rate_per_min: Param,
    /// Fidgets (posture shifts, reaching) per minute (0 = none).
    pub fidgets_per_min: Param,
    /// Presence window start, s.
    pub enter_s: Param,
    /// Presence window end, s (`None`: the whole trial).
    pub leave_s: Option<Param>,
    /// When the person starts to stand up, s (`None`: stays seated).
    pub stand_up_at_s: Option<Param>,
    /// How long standing up takes, s.
    pub stand_up_s: Param,
    /// Chest height once standing, m.
    pub standing_chest_height_m: Param,
}

/// A swaying object: a driven, damped oscillator on an arm (a plant's stem, a sign's cord).
#[derive(Debug, Clone, PartialEq)]
pub struct SwaySpec {
    /// The pivot: a plant's stem base, a sign's hook, a curtain rail, m.
    pub pivot_m: [Param; 3],
    /// Pivot-to-tip length, m.
    pub arm_length_m: Param,
    /// True when the arm hangs down from the pivot (sign, lamp, curtain); false when it stands up (plant).
    pub hanging: bool,
    /// Natural frequency, Hz (`None`: a simple pendulum of the arm's length).
    pub natural_hz: Option<Param>,
    /// Damping ratio ζ.
    pub damping_ratio: Param,
    /// RMS displacement of the tip, m.
    pub rms_displacement_m: Param,
    /// Direction of the sway on the floor plane, degrees from +x.
    pub direction_deg: Param,
    /// Corner frequency of the gust noise, Hz.
    pub gust_corner_hz: Param,
    /// Total RCS of the moving part, m².
    pub rcs_m2: Param,
}

/// A fan.
#[derive(Debug, Clone, PartialEq)]
pub struct FanSpec {
    /// Hub position, m.
    pub position_m: [Param; 3],
    /// Rotor axis azimuth, degrees from +x.
    pub axis_azimuth_deg: Param,
    /// Rotor axis elevation, degrees (90 = ceiling fan).
    pub axis_elevation_deg: Param,
    /// Number of blades.
    pub blades: Param,
    /// Blade root radius, m.
    pub root_radius_m: Param,
    /// Blade tip radius, m.
    pub tip_radius_m: Param,
    /// Revolutions per second.
    pub rev_per_s: Param,
    /// Blade pitch (tilt of the blade out of the rotor plane), degrees.
    pub blade_tilt_deg: Param,
    /// Peak (broadside) RCS of one blade, m².
    pub blade_rcs_m2: Param,
    /// Housing vibration displacement amplitude, m.
    pub housing_vibration_m: Param,
    /// Housing RCS, m².
    pub housing_rcs_m2: Param,
    /// Mains frequency that drives the motor's 2·f vibration, Hz.
    pub mains_hz: Param,
    /// When the fan is switched on, s (`None`: running from before the trial).
    pub switch_on_s: Option<Param>,
    /// When it is switched off, s (`None`: never).
    pub switch_off_s: Option<Param>,
    /// Spin-up time after switching on, s.
    pub spin_up_s: Param,
    /// Coast-down time after switching off, s.
    pub spin_down_s: Param,
}

/// A small animal.
#[derive(Debug, Clone, PartialEq)]
pub struct AnimalSpec {
    /// Body mass, kg.
    pub mass_kg: Param,
    /// Body RCS, m² (`None`: from the mass).
    pub rcs_m2: Option<Param>,
    /// The walk.
    pub path: PathSpec,
}

/// A door.
#[derive(Debug, Clone, PartialEq)]
pub struct DoorSpec {
    /// Hinge position on the floor (x, y), m.
    pub hinge_m: [Param; 2],
    /// Door width, m.
    pub width_m: Param,
    /// Door height, m.
    pub height_m: Param,
    /// Closed angle, degrees from +x.
    pub closed_deg: Param,
    /// Open angle, degrees from +x.
    pub open_deg: Param,
    /// Start of the opening swing, s.
    pub open_at_s: Param,
    /// Length of a swing, s.
    pub swing_s: Param,
    /// Start of the closing swing, s (`None`: stays open).
    pub close_at_s: Option<Param>,
    /// Total edge and corner RCS, m² (the specular flash comes on top of it).
    pub edge_rcs_m2: Param,
}

/// A bench reflector.
#[derive(Debug, Clone, PartialEq)]
pub struct ReflectorSpec {
    /// RCS, m².
    pub rcs_m2: Param,
    /// Start position, m.
    pub position_m: [Param; 3],
    /// Direction of travel: azimuth, degrees.
    pub azimuth_deg: Param,
    /// Direction of travel: elevation, degrees.
    pub elevation_deg: Param,
    /// Travel speed, m/s (0 = stays put).
    pub speed_mps: Param,
    /// Travel start, s.
    pub move_start_s: Param,
    /// Travel stop, s (`None`: the end).
    pub move_stop_s: Option<Param>,
    /// Shaker amplitude along the travel direction, m (0 = none).
    pub shaker_amplitude_m: Param,
    /// Shaker frequency, Hz.
    pub shaker_hz: Param,
}

const TIME: Bounds = Bounds::NON_NEGATIVE;
const ANGLE: Bounds = Bounds::closed(-360.0, 360.0);

/// A value that stands in for a field that failed to read: the problem is
/// already recorded, so the scene is refused and the value never used.
const FAILED: Param = Param::Fixed(f64::NAN);

fn required(f: &mut Fields<'_, '_>, key: &'static str, bounds: Bounds) -> Param {
    f.param(key, bounds).unwrap_or(FAILED)
}

/// Records an error unless every draw of `earlier` comes before every draw of `later`.
fn require_before(
    f: &mut Fields<'_, '_>,
    earlier: (&'static str, &Param),
    later: (&'static str, &Param),
    what: &str,
) {
    let (_, earliest_max) = earlier.1.support();
    let (later_min, _) = later.1.support();
    if earliest_max.is_finite() && later_min.is_finite() && earliest_max >= later_min {
        f.error_at(
            later.0,
            format!(
                "{what}: `{}` (up to {earliest_max}) must stay below `{}` (from {later_min})",
                earlier.0, later.0
            ),
        );
    }
}

/// Records an error unless every value `param` can take is a whole number.
fn require_whole(f: &mut Fields<'_, '_>, key: &'static str, param: &Param) {
    let whole = match param {
        Param::Fixed(x) => x.fract() == 0.0,
        Param::Choice(values) => values.iter().all(|x| x.fract() == 0.0),
        Param::Uniform { .. } | Param::Normal { .. } => false,
    };
    if !whole {
        f.error_at(
            key,
            "must be a whole number (use {choice: [...]} to vary it)",
        );
    }
}

fn array<const N: usize>(f: &mut Fields<'_, '_>, key: &'static str, bounds: Bounds) -> [Param; N] {
    let path = f.path_of(key);
    let read = match f.raw(key) {
        Some(node) => read_param_array::<N>(node, &path, bounds, f.reader()),
        None => {
            f.error_at(key, "missing required field");
            None
        }
    };
    read.unwrap_or_else(|| std::array::from_fn(|_| FAILED))
}

fn read_path(node: &Node, path: &str, reader: &mut Reader) -> Option<PathSpec> {
    let mut f = reader.fields(node, path)?;
    let has_start = f.has("start_m");
    let has_points = f.has("points_m");
    let route = match (has_start, has_points) {
        (true, false) => {
            let start_m = array::<2>(&mut f, "start_m", Bounds::ANY);
            let heading_deg = f.param("heading_deg", ANGLE);
            heading_deg.map(|heading_deg| Route::Straight {
                start_m,
                heading_deg,
            })
        }
        (false, true) => {
            let points: Option<Vec<[f64; 2]>> = f.required("points_m");
            match points {
                Some(points) if points.len() >= 2 => {
                    let length: f64 = points
                        .windows(2)
                        .map(|w| (w[1][0] - w[0][0]).hypot(w[1][1] - w[0][1]))
                        .sum();
                    if length <= 0.0 {
                        f.error_at("points_m", "the points must not all coincide");
                        None
                    } else {
                        Some(Route::Points(points))
                    }
                }
                Some(_) => {
                    f.error_at("points_m", "a path needs at least two points");
                    None
                }
                None => None,
            }
        }
        (true, true) => {
            // `heading_deg` belongs to a path too: not an unknown field here.
            f.has("heading_deg");
            f.error_at(
                "points_m",
                "give either `start_m` with `heading_deg`, or `points_m`, not both",
            );
            None
        }
        (false, false) => {
            f.error_at(
                "start_m",
                "missing: give `start_m` with `heading_deg`, or `points_m`",
            );
            None
        }
    };
    let speed_mps = f.param("speed_mps", Bounds::above(0.0, 12.0));
    let enter_s = f.param_or("enter_s", TIME, 0.0);
    let leave_s = f.param_opt("leave_s", TIME);
    let mut pauses = Vec::new();
    let mut ok = true;
    if let Some(list) = f.raw("pauses") {
        let list_path = f.path_of("pauses");
        match &list.value {
            Value::Seq(items) => {
                for (i, item) in items.iter().enumerate() {
                    let Some(mut g) = f.reader().fields(item, &format!("{list_path}[{i}]")) else {
                        ok = false;
                        continue;
                    };
                    let at_s = g.param("at_s", TIME);
                    let duration_s = g.param("duration_s", Bounds::POSITIVE);
                    g.finish();
                    match (at_s, duration_s) {
                        (Some(at_s), Some(duration_s)) => {
                            pauses.push(PauseSpec { at_s, duration_s })
                        }
                        _ => ok = false,
                    }
                }
            }
            _ => {
                f.error_at("pauses", "expected a list of {at_s, duration_s}");
                ok = false;
            }
        }
    }
    if let (Some(Param::Fixed(leave)), Param::Fixed(enter)) = (&leave_s, &enter_s) {
        if leave <= enter {
            f.error_at(
                "leave_s",
                format!("leave time {leave} s is not after the entry time {enter} s"),
            );
            ok = false;
        }
    }
    f.finish();
    if !ok {
        return None;
    }
    Some(PathSpec {
        route: route?,
        speed_mps: speed_mps?,
        enter_s,
        leave_s,
        pauses,
    })
}

fn sub_path(f: &mut Fields<'_, '_>, key: &'static str) -> Option<PathSpec> {
    let path = f.path_of(key);
    match f.raw(key) {
        Some(node) => read_path(node, &path, f.reader()),
        None => {
            f.error_at(key, "missing required field");
            None
        }
    }
}

/// Reads one entry of `actors:`; `index` gives the default id.
pub fn read_actor(node: &Node, path: &str, index: usize, reader: &mut Reader) -> Option<ActorSpec> {
    let mut f = reader.fields(node, path)?;
    let kind = f.required_choice("kind", &ACTOR_KINDS);
    let id = f.optional_or("id", format!("{}-{index}", kind.unwrap_or("actor")));
    let target_node = f.raw("target");
    // With an unknown kind, the other fields cannot be judged: report the kind alone.
    let kind = match kind? {
        "walker" => {
            let height_m = f.param_or("height_m", Bounds::closed(0.5, 2.5), 1.75);
            let rcs_scale = f.param_or("rcs_scale", Bounds::POSITIVE, 1.0);
            let path = sub_path(&mut f, "path");
            match path {
                Some(path) => ActorKind::Walker(WalkerSpec {
                    height_m,
                    rcs_scale,
                    path,
                }),
                None => {
                    f.finish();
                    return None;
                }
            }
        }
        "breathing" => {
            let position_m = array::<2>(&mut f, "position_m", Bounds::ANY);
            let spec = BreathingSpec {
                position_m: [Param::Fixed(0.0), Param::Fixed(0.0)],
                chest_height_m: f.param_or("chest_height_m", Bounds::closed(0.1, 2.5), 1.1),
                facing_deg: f.param_or("facing_deg", ANGLE, 180.0),
                rate_per_min: f.param_or("rate_per_min", Bounds::closed(4.0, 60.0), 15.0),
                displacement_pp_m: f.param_or(
                    "displacement_pp_m",
                    Bounds::closed(0.0, 0.05),
                    0.005,
                ),
                rcs_m2: f.param_or("rcs_m2", Bounds::POSITIVE, 0.3),
                heartbeat_pp_m: f.param_or("heartbeat_pp_m", Bounds::closed(0.0, 0.002), 0.0003),
                heart_rate_per_min: f.param_or(
                    "heart_rate_per_min",
                    Bounds::closed(30.0, 200.0),
                    70.0,
                ),
                fidgets_per_min: f.param_or("fidgets_per_min", Bounds::closed(0.0, 30.0), 0.0),
                enter_s: f.param_or("enter_s", TIME, 0.0),
                leave_s: f.param_opt("leave_s", TIME),
                stand_up_at_s: f.param_opt("stand_up_at_s", TIME),
                stand_up_s: f.param_or(
                    "stand_up_s",
                    Bounds::closed(0.5, 10.0),
                    echobench_motion::breathing::DEFAULT_STAND_UP_S,
                ),
                standing_chest_height_m: f.param_or(
                    "standing_chest_height_m",
                    Bounds::closed(0.1, 2.5),
                    echobench_motion::breathing::DEFAULT_STANDING_CHEST_HEIGHT_M,
                ),
            };
            if let Some(leave) = &spec.leave_s {
                require_before(
                    &mut f,
                    ("enter_s", &spec.enter_s),
                    ("leave_s", leave),
                    "the person must arrive before leaving",
                );
            }
            ActorKind::Breathing(BreathingSpec { position_m, ..spec })
        }
        "sway" => ActorKind::Sway(SwaySpec {
            pivot_m: array::<3>(&mut f, "pivot_m", Bounds::ANY),
            arm_length_m: f.param_or("arm_length_m", Bounds::above(0.0, 20.0), 1.0),
            hanging: f.optional_or("hanging", false),
            natural_hz: f.param_opt("natural_hz", Bounds::above(0.0, 50.0)),
            damping_ratio: f.param_or("damping_ratio", Bounds::above(0.0, 0.999), 0.05),
            rms_displacement_m: required(&mut f, "rms_displacement_m", Bounds::closed(0.0, 1.0)),
            direction_deg: f.param_or("direction_deg", ANGLE, 0.0),
            gust_corner_hz: f.param_or("gust_corner_hz", Bounds::above(0.0, 50.0), 2.0),
            rcs_m2: f.param_or("rcs_m2", Bounds::POSITIVE, 0.1),
        }),
        "fan" => {
            let position_m = array::<3>(&mut f, "position_m", Bounds::ANY);
            let spec = FanSpec {
                position_m: [Param::Fixed(0.0), Param::Fixed(0.0), Param::Fixed(0.0)],
                axis_azimuth_deg: f.param_or("axis_azimuth_deg", ANGLE, 180.0),
                axis_elevation_deg: f.param_or(
                    "axis_elevation_deg",
                    Bounds::closed(-90.0, 90.0),
                    0.0,
                ),
                blades: f.param_or("blades", Bounds::closed(1.0, 16.0), 3.0),
                root_radius_m: f.param_or("root_radius_m", Bounds::NON_NEGATIVE, 0.03),
                tip_radius_m: required(&mut f, "tip_radius_m", Bounds::above(0.0, 3.0)),
                rev_per_s: required(&mut f, "rev_per_s", Bounds::above(0.0, 100.0)),
                blade_tilt_deg: f.param_or("blade_tilt_deg", Bounds::closed(0.0, 60.0), 12.0),
                blade_rcs_m2: f.param_or("blade_rcs_m2", Bounds::POSITIVE, 0.01),
                housing_vibration_m: f.param_or(
                    "housing_vibration_m",
                    Bounds::closed(0.0, 0.01),
                    2e-5,
                ),
                housing_rcs_m2: f.param_or("housing_rcs_m2", Bounds::NON_NEGATIVE, 0.05),
                mains_hz: f.param_or("mains_hz", Bounds::closed(50.0, 60.0), 50.0),
                switch_on_s: f.param_opt("switch_on_s", TIME),
                switch_off_s: f.param_opt("switch_off_s", TIME),
                spin_up_s: f.param_or(
                    "spin_up_s",
                    Bounds::above(0.0, 60.0),
                    echobench_motion::fan::DEFAULT_SPIN_UP_S,
                ),
                spin_down_s: f.param_or(
                    "spin_down_s",
                    Bounds::above(0.0, 120.0),
                    echobench_motion::fan::DEFAULT_SPIN_DOWN_S,
                ),
            };
            if let (Some(on), Some(off)) = (&spec.switch_on_s, &spec.switch_off_s) {
                // Switching off must wait for the spin-up to end.
                let (_, on_max) = on.support();
                let (_, up_max) = spec.spin_up_s.support();
                let (off_min, _) = off.support();
                if on_max + up_max > off_min {
                    f.error_at(
                        "switch_off_s",
                        format!(
                            "the fan must have spun up before it is switched off: `switch_off_s` \
                             (from {off_min}) must be at least `switch_on_s` + `spin_up_s` \
                             (up to {})",
                            on_max + up_max
                        ),
                    );
                }
            }
            require_whole(&mut f, "blades", &spec.blades);
            require_before(
                &mut f,
                ("root_radius_m", &spec.root_radius_m),
                ("tip_radius_m", &spec.tip_radius_m),
                "a blade runs from root to tip",
            );
            ActorKind::Fan(FanSpec { position_m, ..spec })
        }
        "animal" => {
            let mass_kg = f.param_or("mass_kg", Bounds::closed(0.1, 100.0), 4.0);
            let rcs_m2 = f.param_opt("rcs_m2", Bounds::POSITIVE);
            let path = sub_path(&mut f, "path");
            match path {
                Some(path) => ActorKind::Animal(AnimalSpec {
                    mass_kg,
                    rcs_m2,
                    path,
                }),
                None => {
                    f.finish();
                    return None;
                }
            }
        }
        "door" => {
            let hinge_m = array::<2>(&mut f, "hinge_m", Bounds::ANY);
            let spec = DoorSpec {
                hinge_m: [Param::Fixed(0.0), Param::Fixed(0.0)],
                width_m: f.param_or("width_m", Bounds::above(0.0, 3.0), 0.9),
                height_m: f.param_or("height_m", Bounds::above(0.0, 4.0), 2.0),
                closed_deg: f.param_or("closed_deg", ANGLE, 0.0),
                open_deg: f.param_or("open_deg", ANGLE, 90.0),
                open_at_s: required(&mut f, "open_at_s", TIME),
                swing_s: f.param_or("swing_s", Bounds::POSITIVE, 1.5),
                close_at_s: f.param_opt("close_at_s", TIME),
                edge_rcs_m2: f.param_or("edge_rcs_m2", Bounds::NON_NEGATIVE, 0.1),
            };
            if let Some(close) = &spec.close_at_s {
                // The door must finish opening before it starts closing.
                let open_max = spec.open_at_s.support().1 + spec.swing_s.support().1;
                if close.support().0 < open_max {
                    f.error_at(
                        "close_at_s",
                        format!("the door closes (from {} s) before it has opened (`open_at_s` + `swing_s` up to {open_max} s)", close.support().0),
                    );
                }
            }
            ActorKind::Door(DoorSpec { hinge_m, ..spec })
        }
        "reflector" => {
            let position_m = array::<3>(&mut f, "position_m", Bounds::ANY);
            let spec = ReflectorSpec {
                rcs_m2: f.param_or("rcs_m2", Bounds::POSITIVE, 1.0),
                position_m: [Param::Fixed(0.0), Param::Fixed(0.0), Param::Fixed(0.0)],
                azimuth_deg: f.param_or("azimuth_deg", ANGLE, 180.0),
                elevation_deg: f.param_or("elevation_deg", Bounds::closed(-90.0, 90.0), 0.0),
                speed_mps: f.param_or("speed_mps", Bounds::closed(0.0, 50.0), 0.0),
                move_start_s: f.param_or("move_start_s", TIME, 0.0),
                move_stop_s: f.param_opt("move_stop_s", TIME),
                shaker_amplitude_m: f.param_or("shaker_amplitude_m", Bounds::closed(0.0, 0.5), 0.0),
                shaker_hz: f.param_or("shaker_hz", Bounds::closed(0.0, 2000.0), 0.0),
            };
            if let Some(stop) = &spec.move_stop_s {
                require_before(
                    &mut f,
                    ("move_start_s", &spec.move_start_s),
                    ("move_stop_s", stop),
                    "the stage must start before it stops",
                );
            }
            ActorKind::Reflector(ReflectorSpec { position_m, ..spec })
        }
        _ => unreachable!("required_choice returns one of ACTOR_KINDS"),
    };
    let default_target = matches!(kind, ActorKind::Walker(_));
    let target = match target_node {
        Some(node) => f
            .reader()
            .read::<bool>(node, &format!("{path}.target"))
            .unwrap_or(default_target),
        None => default_target,
    };
    f.finish();
    Some(ActorSpec { id, target, kind })
}
