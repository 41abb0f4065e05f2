//! Paths through the room: where an actor's reference point is at time t.
//!
//! A path is a polyline on the floor walked at a constant speed, entered at
//! `enter_s` and left at `leave_s` (or when the polyline ends), with optional
//! pauses (stop-and-go). The actor is present from `enter_s` to its leave time.
//! Appearing and vanishing are softened by a short amplitude ramp
//! ([`Path::presence`]) so that an actor "coming through a door" does not
//! inject an unphysical step into the IF signal.

/// Seconds over which presence ramps from 0 to 1 at entry and back at exit
/// (common practice in simulation; a raised-cosine ramp).
pub const PRESENCE_RAMP_S: f64 = 0.3;

/// A pause on the path.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Pause {
    /// When the pause starts, seconds from trial start.
    pub at_s: f64,
    /// How long the actor stands still, seconds.
    pub duration_s: f64,
}

/// Where the actor is and how it moves at one instant.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PathState {
    /// Position on the floor (x, y), m.
    pub position_m: [f64; 2],
    /// Unit heading vector on the floor.
    pub heading: [f64; 2],
    /// Speed along the path, m/s (0 while paused or absent).
    pub speed_mps: f64,
    /// Time spent moving since entry, seconds (drives gait phase continuously across pauses).
    pub moving_time_s: f64,
    /// Presence weight in [0, 1]: 0 absent, 1 fully present, ramps at entry/exit.
    pub presence: f64,
}

/// A polyline walked at constant speed, with pauses.
#[derive(Debug, Clone, PartialEq)]
pub struct Path {
    points: Vec<[f64; 2]>,
    cumulative_m: Vec<f64>,
    speed_mps: f64,
    enter_s: f64,
    leave_s: f64,
    pauses: Vec<Pause>,
}

impl Path {
    /// A polyline path. `points` has at least two distinct points; the actor
    /// leaves at `leave_s` or when it reaches the last point, whichever is first
    /// (pass `f64::INFINITY` to leave only at the end of the line).
    /// Pauses are sorted by start; pauses before entry are ignored.
    ///
    /// # Panics
    /// If fewer than two points are given, the speed is not positive and
    /// finite, or the polyline has zero length (the scene validates these first).
    pub fn polyline(
        points: Vec<[f64; 2]>,
        speed_mps: f64,
        enter_s: f64,
        leave_s: f64,
        mut pauses: Vec<Pause>,
    ) -> Path {
        assert!(points.len() >= 2, "a path needs at least two points");
        assert!(
            speed_mps > 0.0 && speed_mps.is_finite(),
            "path speed must be positive"
        );
        let mut cumulative_m = Vec::with_capacity(points.len());
        let mut total = 0.0;
        cumulative_m.push(0.0);
        for pair in points.windows(2) {
            total += ((pair[1][0] - pair[0][0]).powi(2) + (pair[1][1] - pair[0][1]).powi(2)).sqrt();
            cumulative_m.push(total);
        }
        assert!(total > 0.0, "a path needs a positive length");
        pauses.sort_by(|a, b| a.at_s.total_cmp(&b.at_s));
        let mut path = Path {
            points,
            cumulative_m,
            speed_mps,
            enter_s,
            leave_s: f64::INFINITY,
            pauses,
        };
        let end_s = path.time_at_distance(total);
        path.leave_s = leave_s.min(end_s);
        path
    }

    /// A straight walk from `start_m` along `heading_rad` (from +x towards +y).
    pub fn straight(
        start_m: [f64; 2],
        heading_rad: f64,
        speed_mps: f64,
        enter_s: f64,
        leave_s: f64,
        pauses: Vec<Pause>,
    ) -> Path {
        // Long enough to outlast any trial; the walk ends at leave_s.
        let length = speed_mps * (leave_s - enter_s).clamp(1.0, 1.0e6);
        let end = [
            start_m[0] + length * heading_rad.cos(),
            start_m[1] + length * heading_rad.sin(),
        ];
        Path::polyline(vec![start_m, end], speed_mps, enter_s, leave_s, pauses)
    }

    /// Whether the polyline turns anywhere: the heading, and so the velocity,
    /// steps at each turn (a straight path, or points along one line, does not).
    pub fn has_corners(&self) -> bool {
        self.points.windows(3).any(|w| {
            let (a, b) = (
                [w[1][0] - w[0][0], w[1][1] - w[0][1]],
                [w[2][0] - w[1][0], w[2][1] - w[1][1]],
            );
            let cross = a[0] * b[1] - a[1] * b[0];
            let dot = a[0] * b[0] + a[1] * b[1];
            cross.abs() > 1e-12 * (a[0].hypot(a[1]) * b[0].hypot(b[1])) || dot <= 0.0
        })
    }

    /// Entry time, seconds.
    pub fn enter_s(&self) -> f64 {
        self.enter_s
    }

    /// Leave time, seconds (the end of the polyline if that comes first).
    pub fn leave_s(&self) -> f64 {
        self.leave_s
    }

    /// Walking speed, m/s.
    pub fn speed_mps(&self) -> f64 {
        self.speed_mps
    }

    /// Moving time accumulated from entry up to `t_s` (pauses excluded).
    pub fn moving_time_s(&self, t_s: f64) -> f64 {
        let t = t_s.clamp(self.enter_s, self.leave_s.max(self.enter_s));
        let mut moving = t - self.enter_s;
        for pause in &self.pauses {
            let start = pause.at_s.max(self.enter_s);
            let end = (pause.at_s + pause.duration_s).max(self.enter_s);
            moving -= (t.min(end) - start).max(0.0);
        }
        moving.max(0.0)
    }

    /// True when the actor is walking (present and not paused) at `t_s`.
    pub fn is_walking(&self, t_s: f64) -> bool {
        t_s >= self.enter_s
            && t_s < self.leave_s
            && !self
                .pauses
                .iter()
                .any(|p| t_s >= p.at_s && t_s < p.at_s + p.duration_s)
    }

    /// Intervals in which the actor walks, clipped to `[0, duration_s]`.
    pub fn walking_intervals(&self, duration_s: f64) -> Vec<(f64, f64)> {
        self.walking_spans(0.0, duration_s)
    }

    /// Intervals in which the actor walks, clipped to `[from_s, until_s]`.
    pub fn walking_spans(&self, from_s: f64, until_s: f64) -> Vec<(f64, f64)> {
        let mut intervals = Vec::new();
        let mut start = self.enter_s.max(from_s);
        let end = self.leave_s.min(until_s);
        for pause in &self.pauses {
            let (p0, p1) = (pause.at_s, pause.at_s + pause.duration_s);
            if p1 <= start || p0 >= end {
                continue;
            }
            if p0 > start {
                intervals.push((start, p0));
            }
            start = start.max(p1);
        }
        if end > start {
            intervals.push((start, end));
        }
        intervals
    }

    /// Position on the floor and unit heading after `moving_s` seconds of
    /// walking (the walker's eased stops and starts run the path on their own clock).
    pub fn place_at_moving_time(&self, moving_s: f64) -> ([f64; 2], [f64; 2]) {
        let distance = (moving_s.max(0.0) * self.speed_mps).min(*self.cumulative_m.last().unwrap());
        self.point_at_distance(distance)
    }

    /// The state at `t_s`.
    pub fn state(&self, t_s: f64) -> PathState {
        let moving_time_s = self.moving_time_s(t_s);
        let distance = (moving_time_s * self.speed_mps).min(*self.cumulative_m.last().unwrap());
        let (position_m, heading) = self.point_at_distance(distance);
        let speed_mps = if self.is_walking(t_s) {
            self.speed_mps
        } else {
            0.0
        };
        PathState {
            position_m,
            heading,
            speed_mps,
            moving_time_s,
            presence: self.presence(t_s),
        }
    }

    /// Presence weight: a raised-cosine ramp of [`PRESENCE_RAMP_S`] after entry and before leaving.
    pub fn presence(&self, t_s: f64) -> f64 {
        if t_s < self.enter_s || t_s > self.leave_s {
            return 0.0;
        }
        let ramp = PRESENCE_RAMP_S.min(0.5 * (self.leave_s - self.enter_s));
        if ramp <= 0.0 {
            return 1.0;
        }
        let edge = (t_s - self.enter_s).min(self.leave_s - t_s) / ramp;
        if edge >= 1.0 {
            // Past the ramps (cos π = −1 exactly: the same value, without the call).
            return 1.0;
        }
        0.5 - 0.5 * (std::f64::consts::PI * edge).cos()
    }

    fn point_at_distance(&self, distance: f64) -> ([f64; 2], [f64; 2]) {
        let segment = match self.cumulative_m.iter().position(|&c| c > distance) {
            Some(i) => i.max(1) - 1,
            None => self.points.len() - 2,
        };
        let (a, b) = (self.points[segment], self.points[segment + 1]);
        let length = self.cumulative_m[segment + 1] - self.cumulative_m[segment];
        let heading = if length > 0.0 {
            [(b[0] - a[0]) / length, (b[1] - a[1]) / length]
        } else {
            [1.0, 0.0]
        };
        let along = (distance - self.cumulative_m[segment]).clamp(0.0, length);
        (
            [a[0] + heading[0] * along, a[1] + heading[1] * along],
            heading,
        )
    }

    fn time_at_distance(&self, distance: f64) -> f64 {
        // Walking time needed, then add the pauses that start before that instant.
        let mut t = self.enter_s + distance / self.speed_mps;
        for pause in &self.pauses {
            if pause.at_s >= self.enter_s && pause.at_s < t {
                t += pause.duration_s;
            }
        }
        t
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn straight_walk_advances_at_its_speed_and_stops_during_pauses() {
        let path = Path::straight(
            [0.0, 0.0],
            0.0,
            1.5,
            2.0,
            20.0,
            vec![Pause {
                at_s: 6.0,
                duration_s: 3.0,
            }],
        );
        assert_eq!(path.state(1.0).presence, 0.0);
        let s = path.state(4.0);
        assert!((s.position_m[0] - 3.0).abs() < 1e-12);
        assert_eq!(s.speed_mps, 1.5);
        let paused = path.state(7.0);
        assert!((paused.position_m[0] - 6.0).abs() < 1e-12);
        assert_eq!(paused.speed_mps, 0.0);
        let after = path.state(10.0);
        assert!((after.position_m[0] - 7.5).abs() < 1e-12);
        assert_eq!(path.walking_intervals(30.0), vec![(2.0, 6.0), (9.0, 20.0)]);
    }

    #[test]
    fn polyline_ends_the_walk_at_its_last_point() {
        let path = Path::polyline(
            vec![[0.0, 0.0], [3.0, 0.0], [3.0, 4.0]],
            1.0,
            0.0,
            f64::INFINITY,
            vec![],
        );
        assert!((path.leave_s() - 7.0).abs() < 1e-12);
        let s = path.state(5.0);
        assert!((s.position_m[0] - 3.0).abs() < 1e-12 && (s.position_m[1] - 2.0).abs() < 1e-12);
        assert_eq!(s.heading, [0.0, 1.0]);
        assert_eq!(path.state(8.0).presence, 0.0);
    }
}
