//! Walk plans: the grid of cells and the walks that cross every cell often enough.

use crate::spec::{FloorRect, WalkKind, ZoneError, ZoneSpec};
use echobench_core::seed::StreamKey;
use echobench_motion::path::Path;
use echobench_scene::actors::{ActorKind, ActorSpec, PathSpec, ReflectorSpec, Route, WalkerSpec};
use echobench_scene::param::Param;
use echobench_scene::spec::{CoverageSpec, SensorSpec};
use echobench_scene::SceneSpec;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// Shortest walk planned, m: a line that only clips a corner of the floor is dropped.
const MIN_WALK_M: f64 = 0.2;

/// The floor cut into cells, each with a circular neighbourhood.
///
/// The neighbourhood of a cell is the disc about its centre with radius half the cell's
/// diagonal: the smallest disc that holds the whole cell. So the neighbourhoods cover the
/// floor without a gap, and a walk through any part of a cell always counts for it; the
/// price is overlap (a walk clipping a neighbouring cell's corner counts there too), which
/// blurs the map by less than half a cell. A disc rather than the square itself makes "the
/// time the walker left the cell" independent of the walk's direction relative to the grid.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Grid {
    /// The floor.
    pub floor: FloorRect,
    /// Cells along x.
    pub cells_x: usize,
    /// Cells along y.
    pub cells_y: usize,
}

impl Grid {
    /// Number of cells; a cell's index is `iy * cells_x + ix`.
    pub fn cell_count(&self) -> usize {
        self.cells_x * self.cells_y
    }

    /// Cell size along x and y, m.
    pub fn cell_size_m(&self) -> [f64; 2] {
        [
            self.floor.width_m() / self.cells_x as f64,
            self.floor.depth_m() / self.cells_y as f64,
        ]
    }

    /// Cell area, m².
    pub fn cell_area_m2(&self) -> f64 {
        let [w, d] = self.cell_size_m();
        w * d
    }

    /// Radius of every cell's neighbourhood: half the cell diagonal, m.
    pub fn radius_m(&self) -> f64 {
        let [w, d] = self.cell_size_m();
        0.5 * w.hypot(d)
    }

    /// Column and row of cell `index`.
    pub fn cell_xy(&self, index: usize) -> (usize, usize) {
        (index % self.cells_x, index / self.cells_x)
    }

    /// Centre of cell `index`, m.
    pub fn centre_m(&self, index: usize) -> [f64; 2] {
        let (ix, iy) = self.cell_xy(index);
        let [w, d] = self.cell_size_m();
        [
            self.floor.x_min_m + (ix as f64 + 0.5) * w,
            self.floor.y_min_m + (iy as f64 + 0.5) * d,
        ]
    }

    /// The cell holding `point` (edges belong to the cell above and right of them; the far
    /// edges of the floor to the last cell), `None` off the floor.
    pub fn cell_of(&self, point: [f64; 2]) -> Option<usize> {
        let f = &self.floor;
        if !(f.x_min_m..=f.x_max_m).contains(&point[0])
            || !(f.y_min_m..=f.y_max_m).contains(&point[1])
        {
            return None;
        }
        let [w, d] = self.cell_size_m();
        let ix = (((point[0] - f.x_min_m) / w) as usize).min(self.cells_x - 1);
        let iy = (((point[1] - f.y_min_m) / d) as usize).min(self.cells_y - 1);
        Some(iy * self.cells_x + ix)
    }
}

/// One planned walk: a straight line on the floor walked at a constant speed.
#[derive(Debug, Clone, PartialEq)]
pub struct Walk {
    /// Index in the plan (also the trial index of its synthesis key).
    pub index: u32,
    /// Approach or cross.
    pub kind: WalkKind,
    /// Where the walker appears, m.
    pub start_m: [f64; 2],
    /// Where the walk ends, m.
    pub end_m: [f64; 2],
    /// Speed, m/s.
    pub speed_mps: f64,
    /// Body height, m.
    pub height_m: f64,
    /// When the walker appears, s from the trial's start.
    pub enter_s: f64,
}

impl Walk {
    /// Length of the walk, m.
    pub fn length_m(&self) -> f64 {
        (self.end_m[0] - self.start_m[0]).hypot(self.end_m[1] - self.start_m[1])
    }

    /// When the walk ends, s.
    pub fn end_s(&self) -> f64 {
        self.enter_s + self.length_m() / self.speed_mps
    }

    /// Unit heading on the floor.
    pub fn heading(&self) -> [f64; 2] {
        let l = self.length_m();
        [
            (self.end_m[0] - self.start_m[0]) / l,
            (self.end_m[1] - self.start_m[1]) / l,
        ]
    }

    /// The walk as the motion crate's path, the one the synthesizer's walker follows.
    pub fn path(&self) -> Path {
        Path::polyline(
            vec![self.start_m, self.end_m],
            self.speed_mps,
            self.enter_s,
            f64::INFINITY,
            Vec::new(),
        )
    }

    /// Where the walker is at `t_s` (at the start before entry, at the end after it), m:
    /// the same kinematics as [`Walk::path`].
    pub fn position_at(&self, t_s: f64) -> [f64; 2] {
        let along = ((t_s - self.enter_s) * self.speed_mps).clamp(0.0, self.length_m());
        let h = self.heading();
        [
            self.start_m[0] + h[0] * along,
            self.start_m[1] + h[1] * along,
        ]
    }

    /// When the walk leaves the disc of `radius_m` about `centre_m`, s, or `None` when it
    /// never comes within `radius_m`. A walk that ends inside the disc leaves it at its end.
    pub fn leaves_disc_s(&self, centre_m: [f64; 2], radius_m: f64) -> Option<f64> {
        let h = self.heading();
        let length = self.length_m();
        let rel = [self.start_m[0] - centre_m[0], self.start_m[1] - centre_m[1]];
        // |rel + u·h|² = r², a quadratic in the distance u along the walk (|h| = 1).
        let b = rel[0] * h[0] + rel[1] * h[1];
        let c = rel[0] * rel[0] + rel[1] * rel[1] - radius_m * radius_m;
        let disc = b * b - c;
        if disc < 0.0 {
            return None;
        }
        let root = disc.sqrt();
        let (u_in, u_out) = (-b - root, -b + root);
        if u_out < 0.0 || u_in > length {
            return None;
        }
        Some(self.enter_s + u_out.min(length) / self.speed_mps)
    }

    fn path_spec(&self) -> PathSpec {
        PathSpec {
            route: Route::Points(vec![self.start_m, self.end_m]),
            speed_mps: Param::Fixed(self.speed_mps),
            enter_s: Param::Fixed(self.enter_s),
            leave_s: None,
            pauses: Vec::new(),
        }
    }

    /// The walk as the scene crate's walker actor (a target), id `zone-walker`.
    pub fn walker_actor(&self) -> ActorSpec {
        ActorSpec {
            id: "zone-walker".to_string(),
            target: true,
            kind: ActorKind::Walker(WalkerSpec {
                height_m: Param::Fixed(self.height_m),
                rcs_scale: Param::Fixed(1.0),
                path: self.path_spec(),
            }),
        }
    }

    /// The walk as a bench reflector of `rcs_m2` carried at `height_m` (a target), id
    /// `zone-reflector`: it waits at the start until the walk's entry, moves along the walk
    /// and stays at the end. A point echo of known RCS, for checks against the radar equation.
    pub fn reflector_actor(&self, rcs_m2: f64, height_m: f64) -> ActorSpec {
        let h = self.heading();
        ActorSpec {
            id: "zone-reflector".to_string(),
            target: true,
            kind: ActorKind::Reflector(ReflectorSpec {
                rcs_m2: Param::Fixed(rcs_m2),
                position_m: [
                    Param::Fixed(self.start_m[0]),
                    Param::Fixed(self.start_m[1]),
                    Param::Fixed(height_m),
                ],
                azimuth_deg: Param::Fixed(h[1].atan2(h[0]).to_degrees()),
                elevation_deg: Param::Fixed(0.0),
                speed_mps: Param::Fixed(self.speed_mps),
                move_start_s: Param::Fixed(self.enter_s),
                move_stop_s: Some(Param::Fixed(self.end_s())),
                shaker_amplitude_m: Param::Fixed(0.0),
                shaker_hz: Param::Fixed(0.0),
            }),
        }
    }
}

impl Walk {
    /// The scene of this walk's trial: `template` (room, module and noise of a product) with
    /// its target actors replaced by `actor` ([`Walk::walker_actor`] or
    /// [`Walk::reflector_actor`]); its nuisances stay. The trial lasts until `tail_s` after
    /// the walk ends, and the coverage zone reaches past the walk all around the sensor, so
    /// the walker is a target wherever it walks.
    pub fn trial_scene(&self, template: &SceneSpec, actor: ActorSpec, tail_s: f64) -> SceneSpec {
        let mut scene = template.clone();
        scene.actors.retain(|a| !a.target);
        let mut actor = actor;
        while scene.actors.iter().any(|a| a.id == actor.id) {
            actor.id.push('_');
        }
        scene.actors.push(actor);
        scene.duration_s = self.end_s() + tail_s;
        let sensor = [template.sensor.position_m[0], template.sensor.position_m[1]];
        let farthest = [self.start_m, self.end_m]
            .iter()
            .map(|p| (p[0] - sensor[0]).hypot(p[1] - sensor[1]))
            .fold(0.0, f64::max);
        scene.coverage = CoverageSpec {
            range_m: farthest + 1.0,
            azimuth_half_deg: 180.0,
        };
        scene
    }
}

/// A deterministic list of walks over a zone, for one sensor placement.
#[derive(Debug, Clone, PartialEq)]
pub struct ZonePlan {
    spec: ZoneSpec,
    grid: Grid,
    sensor: SensorSpec,
    seed: u64,
    walks: Vec<Walk>,
}

impl ZonePlan {
    /// Plans the walks of `spec` for `sensor`, drawn from `seed`.
    ///
    /// Per kind, cells are visited in a fixed order (approaches from the cell farthest from
    /// the sensor inward, since a radial walk from far away also crosses the cells nearer the
    /// sensor; crossings row by row); while a cell's neighbourhood has been passed by fewer
    /// than `walkers_per_cell` walks of that kind, one more walk is drawn through a uniform
    /// point of the cell and every cell it passes is counted. An approach runs from where the
    /// line from the sensor through that point leaves the floor, toward the sensor, to
    /// `stop_short_m` from it; a crossing runs square to that line, edge to edge, in a drawn
    /// direction. Each draw uses its own stream (`StreamKey(seed, "zone/plan/<kind>", draw)`),
    /// so the plan depends on the seed and the spec only. A cell no walk of a kind can reach
    /// (closer to the sensor than `stop_short_m`) gets what passes it and is shown as having
    /// too few walkers.
    ///
    /// # Errors
    /// The spec's problems ([`ZoneSpec::check`]).
    pub fn new(spec: &ZoneSpec, sensor: &SensorSpec, seed: u64) -> Result<ZonePlan, ZoneError> {
        spec.check()?;
        let grid = Grid {
            floor: spec.floor,
            cells_x: spec.cells_x,
            cells_y: spec.cells_y,
        };
        let mut plan = ZonePlan {
            spec: spec.clone(),
            grid,
            sensor: sensor.clone(),
            seed,
            walks: Vec::new(),
        };
        let mut kinds = spec.kinds.clone();
        kinds.sort();
        kinds.dedup();
        for kind in kinds {
            plan.plan_kind(kind);
        }
        Ok(plan)
    }

    fn sensor_floor_m(&self) -> [f64; 2] {
        [self.sensor.position_m[0], self.sensor.position_m[1]]
    }

    fn plan_kind(&mut self, kind: WalkKind) {
        let cells = self.grid.cell_count();
        let radius = self.grid.radius_m();
        let sensor = self.sensor_floor_m();
        let mut order: Vec<usize> = (0..cells).collect();
        if kind == WalkKind::Approach {
            let distance = |c: usize| {
                let p = self.grid.centre_m(c);
                (p[0] - sensor[0]).hypot(p[1] - sensor[1])
            };
            order.sort_by(|&a, &b| distance(b).total_cmp(&distance(a)).then(a.cmp(&b)));
        }
        let need = self.spec.walkers_per_cell;
        let mut passed = vec![0u32; cells];
        let mut draw: u64 = 0;
        let stream = format!("zone/plan/{}", kind.name());
        for cell in order {
            // Each draw through this cell's point passes its neighbourhood unless the point
            // lies where no walk of this kind goes; a few times the need bounds the tries.
            let mut tries = 0;
            while passed[cell] < need && tries < 4 * need {
                tries += 1;
                let key = StreamKey::new(self.seed, stream.clone(), draw);
                draw += 1;
                let mut rng = ChaCha8Rng::from_seed(key.stream_seed("walk"));
                let Some(walk) = self.draw_walk(kind, cell, &mut rng) else {
                    continue;
                };
                for (c, count) in passed.iter_mut().enumerate() {
                    if walk.leaves_disc_s(self.grid.centre_m(c), radius).is_some() {
                        *count += 1;
                    }
                }
                self.walks.push(walk);
            }
        }
    }

    fn draw_walk(&self, kind: WalkKind, cell: usize, rng: &mut ChaCha8Rng) -> Option<Walk> {
        let [w, d] = self.grid.cell_size_m();
        let centre = self.grid.centre_m(cell);
        let point = [
            centre[0] + (rng.random::<f64>() - 0.5) * w,
            centre[1] + (rng.random::<f64>() - 0.5) * d,
        ];
        let speed_mps = self.spec.speed_mps.draw(rng);
        let height_m = self.spec.height_m.draw(rng);
        let flip = rng.random::<bool>();
        let sensor = self.sensor_floor_m();
        let offset = [point[0] - sensor[0], point[1] - sensor[1]];
        let distance = offset[0].hypot(offset[1]);
        // Straight below or beside the sensor the line of sight has no floor direction: take
        // the boresight's.
        let radial = if distance > 1e-9 {
            [offset[0] / distance, offset[1] / distance]
        } else {
            let a = self.sensor.azimuth_deg.to_radians();
            [a.cos(), a.sin()]
        };
        let floor = &self.grid.floor;
        let (start_m, end_m) = match kind {
            WalkKind::Approach => {
                let (lo, hi) = floor.line_span(sensor, radial)?;
                let stop = lo.max(self.spec.stop_short_m);
                let at = |t: f64| [sensor[0] + t * radial[0], sensor[1] + t * radial[1]];
                (at(hi), at(stop))
            }
            WalkKind::Cross => {
                let across = if flip {
                    [radial[1], -radial[0]]
                } else {
                    [-radial[1], radial[0]]
                };
                let (lo, hi) = floor.line_span(point, across)?;
                let at = |t: f64| [point[0] + t * across[0], point[1] + t * across[1]];
                (at(lo), at(hi))
            }
        };
        let walk = Walk {
            index: self.walks.len() as u32,
            kind,
            start_m,
            end_m,
            speed_mps,
            height_m,
            enter_s: self.spec.settle_s,
        };
        (walk.length_m() >= MIN_WALK_M).then_some(walk)
    }

    /// The walks, indexed by [`Walk::index`].
    pub fn walks(&self) -> &[Walk] {
        &self.walks
    }

    /// The walk with `index`.
    pub fn walk(&self, index: u32) -> Option<&Walk> {
        self.walks.get(index as usize)
    }

    /// The grid.
    pub fn grid(&self) -> &Grid {
        &self.grid
    }

    /// The zone description planned.
    pub fn spec(&self) -> &ZoneSpec {
        &self.spec
    }

    /// The sensor planned for.
    pub fn sensor(&self) -> &SensorSpec {
        &self.sensor
    }

    /// The seed the walks were drawn from.
    pub fn seed(&self) -> u64 {
        self.seed
    }

    /// The synthesis key of `walk`'s trial: scene id `zone/<scene_id>`, trial = the walk's
    /// index, so every walk's noise and body draws are its own whatever shard runs it.
    pub fn trial_key(&self, scene_id: &str, walk: &Walk) -> StreamKey {
        StreamKey::new(self.seed, format!("zone/{scene_id}"), u64::from(walk.index))
    }

    /// The scene of `walk`'s trial, with this plan's tail: [`Walk::trial_scene`].
    pub fn trial_scene(&self, template: &SceneSpec, walk: &Walk, actor: ActorSpec) -> SceneSpec {
        walk.trial_scene(template, actor, self.spec.tail_s)
    }
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;

    pub(crate) fn sensor_at(position_m: [f64; 3], azimuth_deg: f64) -> SensorSpec {
        let text = format!(
            "duration_s: 1\nsensor:\n  carrier_hz: 24.125e9\n  sample_rate_hz: 2000\n  \
             position_m: [{}, {}, {}]\n  azimuth_deg: {azimuth_deg}\n  front_end: {{high_pass_hz: [0.5], low_pass_hz: [300]}}\n  adc: {{bits: 12}}\n",
            position_m[0], position_m[1], position_m[2]
        );
        echobench_scene::load_scene_text("t.yaml", &text)
            .expect("test scene")
            .sensor
    }

    fn spec() -> ZoneSpec {
        ZoneSpec::new(
            FloorRect {
                x_min_m: 0.0,
                x_max_m: 6.0,
                y_min_m: -3.0,
                y_max_m: 3.0,
            },
            6,
            6,
            5,
        )
    }

    #[test]
    fn every_reachable_cell_is_passed_by_enough_walks_of_each_kind() {
        let plan = ZonePlan::new(&spec(), &sensor_at([0.0, 0.0, 1.0], 0.0), 7).unwrap();
        let grid = plan.grid();
        for kind in WalkKind::ALL {
            let walks: Vec<&Walk> = plan.walks().iter().filter(|w| w.kind == kind).collect();
            assert!(!walks.is_empty());
            // Fewer walks than cells × need: a walk serves several cells.
            assert!(
                walks.len() < grid.cell_count() * 5,
                "{kind:?}: {}",
                walks.len()
            );
            for cell in 0..grid.cell_count() {
                let passing = walks
                    .iter()
                    .filter(|w| {
                        w.leaves_disc_s(grid.centre_m(cell), grid.radius_m())
                            .is_some()
                    })
                    .count();
                assert!(passing >= 5, "{kind:?} cell {cell}: {passing}");
            }
        }
    }

    #[test]
    fn approaches_head_for_the_sensor_and_crossings_run_square_to_it() {
        let plan = ZonePlan::new(&spec(), &sensor_at([0.0, 0.0, 1.0], 0.0), 3).unwrap();
        for walk in plan.walks() {
            let h = walk.heading();
            let mid = walk.position_at(0.5 * (walk.enter_s + walk.end_s()));
            let to_sensor = [-mid[0], -mid[1]];
            let cos =
                (h[0] * to_sensor[0] + h[1] * to_sensor[1]) / to_sensor[0].hypot(to_sensor[1]);
            match walk.kind {
                WalkKind::Approach => {
                    assert!(cos > 1.0 - 1e-9, "{walk:?}");
                    let end = walk.end_m[0].hypot(walk.end_m[1]);
                    assert!(end >= 0.5 - 1e-9, "{walk:?}");
                }
                WalkKind::Cross => {
                    // Edge to edge: both ends on the floor's boundary.
                    for end in [walk.start_m, walk.end_m] {
                        let on_edge = [end[0] - 0.0, 6.0 - end[0], end[1] + 3.0, 3.0 - end[1]]
                            .iter()
                            .any(|gap| gap.abs() < 1e-9);
                        assert!(on_edge, "{walk:?}");
                    }
                }
            }
            assert!(walk.speed_mps >= 0.8 && walk.speed_mps <= 1.6);
            assert!(walk.height_m >= 1.5 && walk.height_m <= 1.95);
        }
    }

    #[test]
    fn the_plan_is_a_function_of_seed_and_spec() {
        let sensor = sensor_at([3.0, -3.0, 2.6], 90.0);
        let a = ZonePlan::new(&spec(), &sensor, 11).unwrap();
        let b = ZonePlan::new(&spec(), &sensor, 11).unwrap();
        let c = ZonePlan::new(&spec(), &sensor, 12).unwrap();
        assert_eq!(a, b);
        assert_ne!(a.walks(), c.walks());
    }

    #[test]
    fn a_walk_leaves_a_disc_where_geometry_says() {
        let walk = Walk {
            index: 0,
            kind: WalkKind::Approach,
            start_m: [5.0, 0.0],
            end_m: [1.0, 0.0],
            speed_mps: 2.0,
            height_m: 1.7,
            enter_s: 1.0,
        };
        // Through the disc about (3, 0.6) of radius 1: leaves at x = 3 − 0.8 = 2.2, 2.8 m in.
        let out = walk.leaves_disc_s([3.0, 0.6], 1.0).unwrap();
        assert!((out - (1.0 + 2.8 / 2.0)).abs() < 1e-12);
        // Ends inside the disc about (1.2, 0): leaves at the end.
        assert_eq!(walk.leaves_disc_s([1.2, 0.0], 0.5), Some(walk.end_s()));
        assert_eq!(walk.leaves_disc_s([3.0, 2.0], 1.0), None);
        assert_eq!(walk.leaves_disc_s([6.5, 0.0], 0.4), None);
        // Position follows the motion crate's path.
        let path = walk.path();
        for t in [0.5, 1.0, 1.7, 2.9, 4.0] {
            let a = walk.position_at(t);
            let b = path.state(t).position_m;
            assert!(
                (a[0] - b[0]).abs() < 1e-9 && (a[1] - b[1]).abs() < 1e-9,
                "{t}"
            );
        }
    }

    #[test]
    fn a_bad_spec_is_refused_with_every_problem() {
        let mut bad = spec();
        bad.cells_x = 0;
        bad.walkers_per_cell = 0;
        bad.speed_mps = Param::Fixed(20.0);
        let Err(ZoneError::Spec(problems)) = bad.check() else {
            panic!("accepted");
        };
        // Cells, walkers, and the speed twice: beyond the scene's bound and the walking model's.
        assert_eq!(problems.len(), 4, "{problems:?}");
        // 4.5 m/s is a legal path speed but beyond the walking model for a 1.5 m walker
        // (3 × 0.491 × 1.5 = 2.2095 m/s).
        let mut fast = spec();
        fast.speed_mps = Param::Fixed(4.5);
        let Err(ZoneError::Spec(problems)) = fast.check() else {
            panic!("accepted");
        };
        assert_eq!(problems.len(), 1, "{problems:?}");
        assert!(problems[0].contains("2.209"), "{problems:?}");
    }
}
