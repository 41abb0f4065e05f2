//! Floor-plan and side-view pictures of one detector's zone, through `echobench-svg`.

use crate::beam::BeamView;
use crate::plan::ZonePlan;
use crate::spec::{FloorRect, WalkKind};
use crate::tally::ZoneTally;
use echobench_svg::axis::{draw_ticks, format_number, Axis, Edge, PlotArea, TickStyle};
use echobench_svg::Svg;

pub(crate) const INK: &str = "#262626";
const GRID: &str = "#ececec";
pub(crate) const FEW: &str = "#e2e2e2";
const FEW_MARK: &str = "#9c9c9c";
const FIRST: &str = "#c2410c";
pub(crate) const BEAM: &str = "#5b3a8c";
const BEAM_FILL_3DB: &str = "#c9bbe2";
const BEAM_FILL_10DB: &str = "#ebe5f4";
const FONT_PX: f64 = 11.0;
/// Stops of the probability ramp: pale sand at 0, sage at ½, deep slate at 1 (own choice,
/// monotone in lightness so it reads in grey too).
const RAMP: [(f64, [u8; 3]); 3] = [
    (0.0, [0xf6, 0xf1, 0xe1]),
    (0.5, [0x7f, 0xb3, 0xa6]),
    (1.0, [0x1d, 0x4e, 0x63]),
];
/// Pattern levels outlined, dB below boresight (two-way).
const LEVELS_DB: [f64; 2] = [-3.0, -10.0];
/// Largest drawing of the floor, px.
const FLOOR_BOX_PX: f64 = 560.0;

const TICKS: TickStyle = TickStyle {
    ink: INK,
    grid: Some(GRID),
    font_px: FONT_PX,
    major_px: 5.0,
    minor_px: 3.0,
    bottom_label_drop_px: 18.0,
    left_label_gap_px: 8.0,
    left_label_shift_px: 4.0,
};

/// The colour of detection probability `p` (0 to 1).
pub fn probability_colour(p: f64) -> String {
    let p = p.clamp(0.0, 1.0);
    let (i, (p0, c0)) = RAMP
        .iter()
        .enumerate()
        .take(RAMP.len() - 1)
        .rfind(|(_, (at, _))| *at <= p)
        .map_or((0, RAMP[0]), |(i, stop)| (i, *stop));
    let (p1, c1) = RAMP[i + 1];
    let f = (p - p0) / (p1 - p0);
    let mix = |a: u8, b: u8| (f64::from(a) + f * (f64::from(b) - f64::from(a))).round() as u8;
    format!(
        "#{:02x}{:02x}{:02x}",
        mix(c0[0], c1[0]),
        mix(c0[1], c1[1]),
        mix(c0[2], c1[2])
    )
}

/// True for a sensor looking steeply down (elevation −45° or lower): the side view is the
/// telling picture for it.
pub fn is_ceiling_mount(plan: &ZonePlan) -> bool {
    plan.sensor().elevation_deg <= -45.0
}

pub(crate) fn polyline_d(points: impl Iterator<Item = (f64, f64)>, close: bool) -> String {
    let mut d = String::new();
    for (i, (x, y)) in points.enumerate() {
        d.push_str(&format!("{}{x:.1},{y:.1}", if i == 0 { 'M' } else { 'L' }));
    }
    if close {
        d.push('Z');
    }
    d
}

/// The horizontal distance from the sensor to the floor's farthest corner, m: how far the
/// beam outline must be traced.
pub(crate) fn reach_m(plan: &ZonePlan) -> f64 {
    let floor = plan.grid().floor;
    let sensor = plan.sensor().position_m;
    [
        [floor.x_min_m, floor.y_min_m],
        [floor.x_max_m, floor.y_min_m],
        [floor.x_min_m, floor.y_max_m],
        [floor.x_max_m, floor.y_max_m],
    ]
    .iter()
    .map(|c| (c[0] - sensor[0]).hypot(c[1] - sensor[1]))
    .fold(0.0, f64::max)
}

/// Writes a clip path of the rectangle `[x, y, width, height]` px and returns its id. The id
/// names `stem` and the floor's corners, so pictures of other floors can share one page (an
/// HTML report inlines many): the same id always stands for the same rectangle.
pub(crate) fn floor_clip(svg: &mut Svg, stem: &str, floor: &FloorRect, rect: [f64; 4]) -> String {
    let id = format!(
        "{stem}-{:x}-{:x}-{:x}-{:x}",
        floor.x_min_m.to_bits(),
        floor.x_max_m.to_bits(),
        floor.y_min_m.to_bits(),
        floor.y_max_m.to_bits()
    );
    svg.tag("clipPath").attr("id", &id).open();
    svg.tag("rect")
        .px("x", rect[0])
        .px("y", rect[1])
        .px("width", rect[2])
        .px("height", rect[3])
        .end();
    svg.close("clipPath");
    id
}

fn legend_swatch(svg: &mut Svg, x: f64, y: f64, fill: &str, stroke: Option<(&str, &str)>) {
    svg.tag("rect")
        .px("x", x)
        .px("y", y - 9.0)
        .px("width", 12.0)
        .px("height", 10.0)
        .attr("fill", fill)
        .attr_if("stroke", stroke.map(|s| s.0))
        .attr_if(
            "stroke-dasharray",
            stroke.map(|s| s.1).filter(|d| !d.is_empty()),
        )
        .end();
}

/// The floor plan of `detector`'s `kind` walks: each cell coloured by the probability that a
/// walker passing it had been detected by the time it left the cell's neighbourhood (cells
/// with fewer walkers than planned hatched grey), the first-detection points, the sensor
/// with its boresight, and the outline of the beam where the two-way pattern is −3 dB and
/// −10 dB below boresight on the plane at the spec's `beam_plane_height_m`.
pub fn floor_picture(plan: &ZonePlan, detector: &str, kind: WalkKind, tally: &ZoneTally) -> Svg {
    let grid = plan.grid();
    let floor = grid.floor;
    let scale = (FLOOR_BOX_PX / floor.width_m()).min(FLOOR_BOX_PX / floor.depth_m());
    let area = PlotArea {
        left: 56.0,
        top: 44.0,
        width: floor.width_m() * scale,
        height: floor.depth_m() * scale,
    };
    let legend_x = area.right() + 24.0;
    let width = (legend_x + 170.0).ceil();
    let height = (area.bottom() + 48.0).max(area.top + 260.0).ceil();
    let x_axis = Axis::linear("x, m", floor.x_min_m, floor.x_max_m);
    let y_axis = Axis::linear("y, m", floor.y_min_m, floor.y_max_m);
    let px = |p: [f64; 2]| {
        (
            area.x(&x_axis, p[0]).unwrap_or(area.left),
            area.y(&y_axis, p[1]).unwrap_or(area.top),
        )
    };
    let mut svg = Svg::new();
    svg.white_page(width, height);
    let radius = grid.radius_m();
    svg.text_at(area.left, 18.0, "start", 13.0)
        .content(&format!(
            "{detector}: {} walks, P(detected by leaving a cell's {} m disc)",
            kind.name(),
            format_number(radius, 3)
        ));
    svg.text_at(area.left, 34.0, "start", FONT_PX)
        .content(&format!(
            "{} walks, {} detected; {} × {} cells, {} walkers per cell planned",
            tally.kind(kind).walks,
            tally.kind(kind).detected_walks,
            grid.cells_x,
            grid.cells_y,
            plan.spec().walkers_per_cell
        ));
    // Cells.
    let [cell_w, cell_d] = grid.cell_size_m();
    for cell in tally.cells(plan, kind, 0.95) {
        let (x0, y1) = px([
            cell.centre_m[0] - 0.5 * cell_w,
            cell.centre_m[1] - 0.5 * cell_d,
        ]);
        let (x1, y0) = px([
            cell.centre_m[0] + 0.5 * cell_w,
            cell.centre_m[1] + 0.5 * cell_d,
        ]);
        let fill = match cell.probability {
            Some(p) if cell.enough => probability_colour(p),
            _ => FEW.to_string(),
        };
        svg.tag("rect")
            .px("x", x0)
            .px("y", y0)
            .px("width", x1 - x0)
            .px("height", y1 - y0)
            .attr("fill", &fill)
            .open();
        let text = match (cell.probability, cell.interval) {
            (Some(p), Some(ci)) => format!(
                "cell ({}, {}): {} of {} detected, {} [{}, {}]",
                cell.ix,
                cell.iy,
                cell.detected,
                cell.passed,
                format_number(p, 2),
                format_number(ci.low, 2),
                format_number(ci.high, 2)
            ),
            _ => format!("cell ({}, {}): no walker", cell.ix, cell.iy),
        };
        svg.tag("title").content(&text);
        svg.close("rect");
        if !cell.enough {
            for (a, b) in [((x0, y0), (x1, y1)), ((x0, y1), (x1, y0))] {
                svg.tag("line")
                    .px("x1", a.0)
                    .px("y1", a.1)
                    .px("x2", b.0)
                    .px("y2", b.1)
                    .attr("stroke", FEW_MARK)
                    .attr("stroke-width", 0.8)
                    .end();
            }
        }
    }
    draw_ticks(
        &mut svg,
        &area,
        &x_axis,
        Edge::Bottom,
        &ticks_without_grid(),
    );
    draw_ticks(&mut svg, &area, &y_axis, Edge::Left, &ticks_without_grid());
    axis_labels(&mut svg, &area, &x_axis, &y_axis);
    svg.tag("rect")
        .px("x", area.left)
        .px("y", area.top)
        .px("width", area.width)
        .px("height", area.height)
        .attr("fill", "none")
        .attr("stroke", INK)
        .end();
    // Beam outlines, clipped to the floor.
    let clip_id = floor_clip(
        &mut svg,
        "floor",
        &floor,
        [area.left, area.top, area.width, area.height],
    );
    let sensor = plan.sensor();
    let reach = reach_m(plan);
    let view = BeamView::new(sensor);
    svg.tag("g")
        .attr("clip-path", format!("url(#{clip_id})"))
        .open();
    for (level, dash) in LEVELS_DB.iter().zip(["", "5 4"]) {
        for polygon in view.outline_on_plane(plan.spec().beam_plane_height_m, *level, reach) {
            svg.tag("path")
                .attr("d", polyline_d(polygon.iter().map(|p| px(*p)), true))
                .attr("fill", "none")
                .attr("stroke", BEAM)
                .attr("stroke-width", 1.5)
                .attr_if("stroke-dasharray", (!dash.is_empty()).then_some(dash))
                .end();
        }
    }
    // First detections.
    for (_, p) in tally.first_positions(plan, kind) {
        let (x, y) = px(p);
        svg.tag("circle")
            .px("cx", x)
            .px("cy", y)
            .px("r", 2.2)
            .attr("fill", FIRST)
            .attr("fill-opacity", 0.75)
            .end();
    }
    svg.close("g");
    // The sensor and its boresight, foreshortened by the tilt (none for one looking down).
    let (sx, sy) = px([sensor.position_m[0], sensor.position_m[1]]);
    let a = sensor.azimuth_deg.to_radians();
    let shown_px = 22.0 * sensor.elevation_deg.to_radians().cos();
    svg.tag("line")
        .px("x1", sx)
        .px("y1", sy)
        .px("x2", sx + shown_px * a.cos())
        .px("y2", sy - shown_px * a.sin())
        .attr("stroke", INK)
        .attr("stroke-width", 2)
        .end();
    svg.tag("circle")
        .px("cx", sx)
        .px("cy", sy)
        .px("r", 5.0)
        .attr("fill", INK)
        .end();
    // Legend: the ramp, then the marks.
    let bar_top = area.top + 4.0;
    let bar_h = 120.0;
    let steps = 24;
    for i in 0..steps {
        let p = 1.0 - (i as f64 + 0.5) / steps as f64;
        svg.tag("rect")
            .px("x", legend_x)
            .px("y", bar_top + bar_h * i as f64 / steps as f64)
            .px("width", 14.0)
            .px("height", bar_h / steps as f64 + 0.2)
            .attr("fill", probability_colour(p))
            .end();
    }
    for (p, label) in [(1.0, "1"), (0.5, "0.5"), (0.0, "0")] {
        svg.text_at(
            legend_x + 20.0,
            bar_top + bar_h * (1.0 - p) + 4.0,
            "start",
            FONT_PX,
        )
        .content(label);
    }
    svg.text_at(legend_x, bar_top + bar_h + 18.0, "start", FONT_PX)
        .content("P(detected)");
    let mut y = bar_top + bar_h + 44.0;
    legend_swatch(&mut svg, legend_x, y, FEW, Some((FEW_MARK, "")));
    svg.text_at(legend_x + 18.0, y, "start", FONT_PX)
        .content("too few walkers");
    y += 18.0;
    svg.tag("circle")
        .px("cx", legend_x + 6.0)
        .px("cy", y - 4.0)
        .px("r", 2.5)
        .attr("fill", FIRST)
        .end();
    svg.text_at(legend_x + 18.0, y, "start", FONT_PX)
        .content("first detection");
    for (level, dash) in LEVELS_DB.iter().zip(["", "5 4"]) {
        y += 18.0;
        svg.tag("line")
            .px("x1", legend_x)
            .px("y1", y - 4.0)
            .px("x2", legend_x + 14.0)
            .px("y2", y - 4.0)
            .attr("stroke", BEAM)
            .attr("stroke-width", 1.5)
            .attr_if("stroke-dasharray", (!dash.is_empty()).then_some(dash))
            .end();
        svg.text_at(legend_x + 18.0, y, "start", FONT_PX)
            .content(&format!(
                "{} dB two-way at {} m",
                format_number(*level, 2),
                format_number(plan.spec().beam_plane_height_m, 3)
            ));
    }
    svg.close("svg");
    svg
}

/// Ticks without grid lines (the cells are the picture's grid).
fn ticks_without_grid() -> TickStyle {
    TickStyle {
        grid: None,
        ..TICKS
    }
}

/// The side view of `detector`'s `kind` walks (for ceiling mounts): height against
/// horizontal range from the sensor, with the beam's −3 dB and −10 dB regions in the
/// vertical plane along the boresight azimuth, each first-detected walker as a line of its
/// height at the range it was detected, and below the floor the probability of detection
/// by range ring (cells pooled by the distance of their centre, rings one cell wide).
pub fn side_picture(plan: &ZonePlan, detector: &str, kind: WalkKind, tally: &ZoneTally) -> Svg {
    let grid = plan.grid();
    let sensor = plan.sensor();
    let sensor_floor = [sensor.position_m[0], sensor.position_m[1]];
    let range_of = |p: [f64; 2]| (p[0] - sensor_floor[0]).hypot(p[1] - sensor_floor[1]);
    let reach = reach_m(plan);
    let tallest = plan.walks().iter().map(|w| w.height_m).fold(0.0, f64::max);
    let top_m = sensor.position_m[2].max(tallest) + 0.3;
    let strip_m = 0.5;
    let bottom_m = -strip_m - 0.1;
    let scale = (620.0 / reach).min(360.0 / (top_m - bottom_m));
    let area = PlotArea {
        left: 56.0,
        top: 44.0,
        width: reach * scale,
        height: (top_m - bottom_m) * scale,
    };
    let width = (area.right() + 240.0).ceil();
    let height = (area.bottom() + 48.0).ceil();
    let x_axis = Axis::linear("horizontal range from the sensor, m", 0.0, reach);
    let y_axis = Axis::linear("height, m", bottom_m, top_m);
    let px = |r: f64, z: f64| {
        (
            area.x(&x_axis, r).unwrap_or(area.left),
            area.y(&y_axis, z).unwrap_or(area.top),
        )
    };
    let mut svg = Svg::new();
    svg.white_page(width, height);
    svg.text_at(area.left, 18.0, "start", 13.0)
        .content(&format!(
            "{detector}: {} walks, side view along the boresight azimuth",
            kind.name()
        ));
    svg.text_at(area.left, 34.0, "start", FONT_PX)
        .content(&format!(
            "sensor at {} m, elevation {}°; lines: walkers at their first detection",
            format_number(sensor.position_m[2], 3),
            format_number(sensor.elevation_deg, 3)
        ));
    // The beam regions in the vertical plane, merged into runs along each row.
    let view = BeamView::new(sensor);
    let a = sensor.azimuth_deg.to_radians();
    let (columns, rows) = (160usize, 70usize);
    let (dr, dz) = (reach / columns as f64, top_m / rows as f64);
    for row in 0..rows {
        let z = (row as f64 + 0.5) * dz;
        let class = |col: usize| {
            let r = (col as f64 + 0.5) * dr;
            let level = view.level_db([
                sensor_floor[0] + r * a.cos(),
                sensor_floor[1] + r * a.sin(),
                z,
            ]);
            LEVELS_DB.iter().position(|&l| level >= l)
        };
        let mut col = 0;
        while col < columns {
            let here = class(col);
            let mut end = col + 1;
            while end < columns && class(end) == here {
                end += 1;
            }
            if let Some(which) = here {
                let (x0, y0) = px(col as f64 * dr, (row + 1) as f64 * dz);
                let (x1, y1) = px(end as f64 * dr, row as f64 * dz);
                svg.tag("rect")
                    .px("x", x0)
                    .px("y", y0)
                    .px("width", x1 - x0)
                    .px("height", y1 - y0 + 0.6)
                    .attr("fill", [BEAM_FILL_3DB, BEAM_FILL_10DB][which])
                    .end();
            }
            col = end;
        }
    }
    draw_ticks(&mut svg, &area, &x_axis, Edge::Bottom, &TICKS);
    draw_ticks(&mut svg, &area, &y_axis, Edge::Left, &TICKS);
    axis_labels(&mut svg, &area, &x_axis, &y_axis);
    // The floor line.
    let (fx0, fy) = px(0.0, 0.0);
    let (fx1, _) = px(reach, 0.0);
    svg.tag("line")
        .px("x1", fx0)
        .px("y1", fy)
        .px("x2", fx1)
        .px("y2", fy)
        .attr("stroke", INK)
        .end();
    // Detection by range ring, below the floor.
    let ring_m = grid.cell_size_m()[0].min(grid.cell_size_m()[1]);
    let rings = (reach / ring_m).ceil() as usize;
    let mut pooled = vec![(0u64, 0u64); rings.max(1)];
    let need = u64::from(plan.spec().walkers_per_cell);
    for cell in tally.cells(plan, kind, 0.95) {
        let ring = ((range_of(cell.centre_m) / ring_m) as usize).min(pooled.len() - 1);
        pooled[ring].0 += cell.passed;
        pooled[ring].1 += cell.detected;
    }
    for (ring, &(passed, detected)) in pooled.iter().enumerate() {
        let (x0, y0) = px(ring as f64 * ring_m, -0.1);
        let (x1, y1) = px(((ring + 1) as f64 * ring_m).min(reach), -0.1 - strip_m);
        let fill = if passed >= need && passed > 0 {
            probability_colour(detected as f64 / passed as f64)
        } else {
            FEW.to_string()
        };
        svg.tag("rect")
            .px("x", x0)
            .px("y", y0)
            .px("width", x1 - x0)
            .px("height", y1 - y0)
            .attr("fill", &fill)
            .open();
        svg.tag("title").content(&format!(
            "{}–{} m: {detected} of {passed} detected",
            format_number(ring as f64 * ring_m, 3),
            format_number((ring + 1) as f64 * ring_m, 3)
        ));
        svg.close("rect");
    }
    // Walkers at their first detection.
    for (index, p) in tally.first_positions(plan, kind) {
        let Some(walk) = plan.walk(index) else {
            continue;
        };
        let (x, y0) = px(range_of(p), 0.0);
        let (_, y1) = px(range_of(p), walk.height_m);
        svg.tag("line")
            .px("x1", x)
            .px("y1", y0)
            .px("x2", x)
            .px("y2", y1)
            .attr("stroke", FIRST)
            .attr("stroke-opacity", 0.5)
            .end();
    }
    // The sensor and its boresight.
    let (sx, sy) = px(0.0, sensor.position_m[2]);
    let e = sensor.elevation_deg.to_radians();
    svg.tag("line")
        .px("x1", sx)
        .px("y1", sy)
        .px("x2", sx + 22.0 * e.cos())
        .px("y2", sy - 22.0 * e.sin())
        .attr("stroke", INK)
        .attr("stroke-width", 2)
        .end();
    svg.tag("circle")
        .px("cx", sx)
        .px("cy", sy)
        .px("r", 5.0)
        .attr("fill", INK)
        .end();
    svg.tag("rect")
        .px("x", area.left)
        .px("y", area.top)
        .px("width", area.width)
        .px("height", area.height)
        .attr("fill", "none")
        .attr("stroke", INK)
        .end();
    // Legend.
    let lx = area.right() + 20.0;
    let mut y = area.top + 10.0;
    for (fill, label) in [
        (BEAM_FILL_3DB, "within −3 dB two-way"),
        (BEAM_FILL_10DB, "−3 to −10 dB two-way"),
    ] {
        legend_swatch(&mut svg, lx, y, fill, Some((BEAM, "")));
        svg.text_at(lx + 18.0, y, "start", FONT_PX).content(label);
        y += 18.0;
    }
    svg.tag("line")
        .px("x1", lx + 6.0)
        .px("y1", y)
        .px("x2", lx + 6.0)
        .px("y2", y - 12.0)
        .attr("stroke", FIRST)
        .end();
    svg.text_at(lx + 18.0, y, "start", FONT_PX)
        .content("walker at first detection");
    y += 18.0;
    svg.text_at(lx, y, "start", FONT_PX)
        .content("strip: P(detected) by range ring");
    svg.close("svg");
    svg
}

/// The two axis titles: the x title centred under the plot, the y title turned upright
/// along its left edge.
fn axis_labels(svg: &mut Svg, area: &PlotArea, x_axis: &Axis, y_axis: &Axis) {
    svg.text_at(
        area.left + 0.5 * area.width,
        area.bottom() + 36.0,
        "middle",
        FONT_PX,
    )
    .content(&x_axis.label);
    svg.upright_text_at(14.0, area.top + 0.5 * area.height, 0.0, FONT_PX)
        .content(&y_axis.label);
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plan::tests::sensor_at;
    use crate::spec::{FloorRect, ZoneSpec};

    #[test]
    fn the_ramp_runs_from_pale_to_dark_through_its_stops() {
        assert_eq!(probability_colour(0.0), "#f6f1e1");
        assert_eq!(probability_colour(0.5), "#7fb3a6");
        assert_eq!(probability_colour(1.0), "#1d4e63");
        assert_eq!(probability_colour(2.0), "#1d4e63");
        let lightness = |c: &str| {
            (1..7)
                .step_by(2)
                .map(|i| u32::from_str_radix(&c[i..i + 2], 16).unwrap())
                .sum::<u32>()
        };
        let mut last = u32::MAX;
        for i in 0..=20 {
            let l = lightness(&probability_colour(f64::from(i) / 20.0));
            assert!(l <= last, "{i}");
            last = l;
        }
    }

    #[test]
    fn pictures_hold_cells_points_outline_and_escaped_labels() {
        let spec = ZoneSpec::new(
            FloorRect {
                x_min_m: -3.0,
                x_max_m: 3.0,
                y_min_m: -3.0,
                y_max_m: 3.0,
            },
            4,
            4,
            2,
        );
        let mut sensor = sensor_at([0.0, 0.0, 2.7], 0.0);
        sensor.elevation_deg = -90.0;
        let plan = ZonePlan::new(&spec, &sensor, 2).unwrap();
        let mut tally = ZoneTally::new(&plan);
        for walk in plan.walks() {
            let seen = (walk.index % 2 == 0).then_some(walk.enter_s + 1.0);
            tally.record(&plan, walk, seen).unwrap();
        }
        assert!(is_ceiling_mount(&plan));
        let label = "energy <b>";
        let floor = floor_picture(&plan, label, WalkKind::Cross, &tally).into_string();
        assert!(floor.starts_with("<svg") && floor.ends_with("</svg>"));
        assert!(floor.contains("energy &lt;b&gt;") && !floor.contains("<b>"));
        assert_eq!(floor.matches("<title>cell (").count(), 16);
        let firsts = tally.first_positions(&plan, WalkKind::Cross).len();
        assert!(firsts > 0);
        assert_eq!(
            floor.matches(&format!("fill=\"{FIRST}\"")).count(),
            firsts + 1
        );
        assert!(floor.contains(&format!("stroke=\"{BEAM}\"")));
        let side = side_picture(&plan, label, WalkKind::Cross, &tally).into_string();
        assert!(side.contains(BEAM_FILL_3DB) && side.contains("range ring"));
        // Same inputs, same bytes.
        assert_eq!(
            side,
            side_picture(&plan, label, WalkKind::Cross, &tally).into_string()
        );
    }
}
