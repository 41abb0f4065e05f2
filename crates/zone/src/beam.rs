//! The sensor's beam where people are: its outline on a horizontal plane and in the vertical
//! plane along the boresight azimuth.
//!
//! Levels are of the two-way pattern g (the scene crate's `Beam::gain`, the echo amplitude
//! relative to boresight at the same range, docs/reference/radar-physics.md#r5) in power:
//! 20·log10 g dB, so −3 dB is where an echo has half the power it would have on boresight at
//! the same range (docs/reference/radar-physics.md#r10).

use echobench_scene::radar::{wavelength_m, Beam};
use echobench_scene::render::RadarGeometry;
use echobench_scene::spec::SensorSpec;

/// Rays of the floor outline (one per degree).
const RAYS: usize = 360;
/// Steps along each ray.
const STEPS: usize = 400;

/// The sensor's antenna frame and pattern.
#[derive(Debug, Clone, Copy)]
pub struct BeamView {
    geometry: RadarGeometry,
}

impl BeamView {
    /// The beam of `sensor`.
    pub fn new(sensor: &SensorSpec) -> BeamView {
        BeamView {
            geometry: RadarGeometry::new(
                sensor.position_m,
                sensor.azimuth_deg,
                sensor.elevation_deg,
                Beam::new(
                    sensor.beam_azimuth_3db_deg,
                    sensor.beam_elevation_3db_deg,
                    sensor.beam_floor_db,
                ),
                1.0,
                wavelength_m(sensor.carrier_hz),
            ),
        }
    }

    /// Two-way pattern toward `point_m` in dB below boresight (≤ 0): 20·log10 g.
    pub fn level_db(&self, point_m: [f64; 3]) -> f64 {
        let g = &self.geometry;
        let offset = [
            point_m[0] - g.position_m[0],
            point_m[1] - g.position_m[1],
            point_m[2] - g.position_m[2],
        ];
        let dot = |a: [f64; 3]| offset[0] * a[0] + offset[1] * a[1] + offset[2] * a[2];
        20.0 * g.beam.gain(dot(g.forward), dot(g.left), dot(g.up)).log10()
    }

    /// The outline of the region on the plane `z = height_m` where the pattern is at least
    /// `level_db` (e.g. −3), within `max_range_m` of the point below the sensor: closed
    /// polygons in floor coordinates. Traced along rays from the point below the sensor,
    /// each ray's region taken as one interval (nearest to farthest point inside), which
    /// holds for a single main lobe; a ring (a tilted beam that misses the floor just below
    /// it) gives an outer and an inner polygon.
    pub fn outline_on_plane(
        &self,
        height_m: f64,
        level_db: f64,
        max_range_m: f64,
    ) -> Vec<Vec<[f64; 2]>> {
        let centre = [self.geometry.position_m[0], self.geometry.position_m[1]];
        let step = max_range_m / STEPS as f64;
        let spans: Vec<Option<(f64, f64)>> = (0..RAYS)
            .map(|ray| {
                let angle = (ray as f64 * 360.0 / RAYS as f64).to_radians();
                let (s, c) = angle.sin_cos();
                let mut span: Option<(f64, f64)> = None;
                for i in 0..=STEPS {
                    let d = i as f64 * step;
                    let p = [centre[0] + d * c, centre[1] + d * s, height_m];
                    if self.level_db(p) >= level_db {
                        span = Some(span.map_or((d, d), |(near, _)| (near, d)));
                    }
                }
                span
            })
            .collect();
        let point = |ray: usize, d: f64| {
            let angle = (ray as f64 * 360.0 / RAYS as f64).to_radians();
            [centre[0] + d * angle.cos(), centre[1] + d * angle.sin()]
        };
        if spans.iter().all(Option::is_some) {
            let outer: Vec<[f64; 2]> = (0..RAYS)
                .map(|r| point(r, spans[r].map_or(0.0, |s| s.1)))
                .collect();
            let mut rings = vec![outer];
            if spans.iter().any(|s| s.is_some_and(|s| s.0 > 0.0)) {
                rings.push(
                    (0..RAYS)
                        .map(|r| point(r, spans[r].map_or(0.0, |s| s.0)))
                        .collect(),
                );
            }
            return rings;
        }
        // Runs of rays that see the region, starting after a ray that does not.
        let Some(empty) = spans.iter().position(Option::is_none) else {
            return Vec::new();
        };
        let mut polygons = Vec::new();
        let mut run: Vec<usize> = Vec::new();
        for k in 1..=RAYS {
            let ray = (empty + k) % RAYS;
            if spans[ray].is_some() {
                run.push(ray);
            } else if !run.is_empty() {
                let mut polygon: Vec<[f64; 2]> = run
                    .iter()
                    .map(|&r| point(r, spans[r].map_or(0.0, |s| s.1)))
                    .collect();
                polygon.extend(
                    run.iter()
                        .rev()
                        .map(|&r| point(r, spans[r].map_or(0.0, |s| s.0))),
                );
                polygons.push(polygon);
                run.clear();
            }
        }
        polygons
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plan::tests::sensor_at;

    #[test]
    fn a_level_beam_outline_meets_the_half_power_angle() {
        // Sensor at 1 m looking along +x, drawn at its own height: the outline is the azimuth
        // cut. The scene's default beam is 80° one-way at −3 dB, i.e. g = 0.5 at ±40°, and
        // g = cosⁿ(az) with n = 2.601 (docs/reference/check-values.md#pc28): the two-way
        // −3 dB level (g = 10^(−3/20)) lies at az = acos(g^(1/n)) = 28.88° (docs/reference/check-values.md#pc29).
        let view = BeamView::new(&sensor_at([0.0, 0.0, 1.0], 0.0));
        let n = echobench_scene::radar::cos_exponent_for_width(80.0);
        let expected_deg = 10f64.powf(-3.0 / 20.0).powf(1.0 / n).acos().to_degrees();
        assert!((expected_deg - 28.88).abs() < 0.01, "{expected_deg}");
        let polygons = view.outline_on_plane(1.0, -3.0, 8.0);
        assert_eq!(polygons.len(), 1);
        // The widest ray inside the region is the last whole degree below the edge.
        let widest = polygons[0]
            .iter()
            .filter(|p| p[0].hypot(p[1]) > 1.0)
            .map(|p| p[1].atan2(p[0]).to_degrees().abs())
            .fold(0.0, f64::max);
        assert!((widest - expected_deg.floor()).abs() < 1e-9, "{widest}");
        // The −10 dB level lies at 50.04° (docs/reference/check-values.md#pc29).
        let polygons = view.outline_on_plane(1.0, -10.0, 8.0);
        let widest = polygons[0]
            .iter()
            .filter(|p| p[0].hypot(p[1]) > 1.0)
            .map(|p| p[1].atan2(p[0]).to_degrees().abs())
            .fold(0.0, f64::max);
        assert_eq!(widest.round(), 50.0, "{widest}");
        // Along boresight the level is 0 dB.
        assert!(view.level_db([5.0, 0.0, 1.0]).abs() < 1e-9);
    }

    #[test]
    fn a_ceiling_sensor_looking_down_draws_a_disc() {
        let mut sensor = sensor_at([2.0, 2.0, 2.8], 0.0);
        sensor.elevation_deg = -90.0;
        sensor.beam_elevation_3db_deg = 80.0;
        let view = BeamView::new(&sensor);
        let polygons = view.outline_on_plane(1.0, -3.0, 6.0);
        assert_eq!(polygons.len(), 1, "a disc, no hole");
        // Equal widths make a round beam, cosⁿ of the angle off boresight
        // (docs/reference/radar-physics.md#r5): the −3 dB radius 1.8 m below is
        // 1.8·tan 28.88° = 0.994 m (computed).
        let expected = 1.8 * 28.88f64.to_radians().tan();
        for p in &polygons[0] {
            let r = (p[0] - 2.0).hypot(p[1] - 2.0);
            assert!((r - expected).abs() < 0.03, "{r} vs {expected}");
        }
    }
}
