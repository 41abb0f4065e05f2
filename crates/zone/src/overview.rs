//! One picture of every detector's zone side by side (small multiples): the same floor, the
//! same shading and the same beam outline in each panel, so a product team compares the
//! detectors at a glance before opening each one's full picture.

use crate::beam::BeamView;
use crate::picture::{floor_clip, polyline_d, probability_colour, reach_m, BEAM, FEW, INK};
use crate::plan::ZonePlan;
use crate::spec::WalkKind;
use crate::tally::ZoneTally;
use echobench_svg::Svg;

/// Largest drawing of the floor in a panel, px.
const PANEL_BOX_PX: f64 = 190.0;
/// Panels per row.
const PER_ROW: usize = 4;

/// The `kind` walks of every detector in `tallies` (label, tallies), one panel each in the
/// order given: cells shaded by the probability of detection by the time a walker leaves
/// them (grey: fewer walkers than planned), the sensor and the −3 dB two-way beam outline.
pub fn overview_picture(
    plan: &ZonePlan,
    product: &str,
    kind: WalkKind,
    tallies: &[(&str, &ZoneTally)],
) -> Svg {
    let grid = plan.grid();
    let floor = grid.floor;
    let scale = (PANEL_BOX_PX / floor.width_m()).min(PANEL_BOX_PX / floor.depth_m());
    let (panel_w, panel_h) = (floor.width_m() * scale, floor.depth_m() * scale);
    let (gap, title_h, top) = (18.0, 30.0, 40.0);
    let columns = tallies.len().clamp(1, PER_ROW);
    let rows = tallies.len().div_ceil(PER_ROW).max(1);
    let width = (gap + columns as f64 * (panel_w + gap)).ceil();
    let height = (top + rows as f64 * (panel_h + title_h + gap)).ceil();
    let mut svg = Svg::new();
    svg.white_page(width, height);
    svg.text_at(gap, 20.0, "start", 13.0).content(&format!(
        "{product}: {} walks, P(detected by leaving a cell) per detector; line: beam −3 dB two-way at {} m",
        kind.name(),
        plan.spec().beam_plane_height_m
    ));
    let sensor = plan.sensor();
    let reach = reach_m(plan);
    let outline =
        BeamView::new(sensor).outline_on_plane(plan.spec().beam_plane_height_m, -3.0, reach);
    let [cell_w, cell_d] = grid.cell_size_m();
    for (i, (label, tally)) in tallies.iter().enumerate() {
        let left = gap + (i % PER_ROW) as f64 * (panel_w + gap);
        let panel_top = top + (i / PER_ROW) as f64 * (panel_h + title_h + gap) + title_h;
        // Room coordinates to pixels: x to the right, y up.
        let px = |p: [f64; 2]| {
            (
                left + (p[0] - floor.x_min_m) * scale,
                panel_top + (floor.y_max_m - p[1]) * scale,
            )
        };
        let counts = tally.kind(kind);
        let share = if counts.walks > 0 {
            format!(
                "{:.0} % of {} walks",
                100.0 * counts.detected_walks as f64 / counts.walks as f64,
                counts.walks
            )
        } else {
            "no walks".to_string()
        };
        svg.text_at(left, panel_top - 16.0, "start", 12.0)
            .content(label);
        svg.text_at(left, panel_top - 4.0, "start", 10.0)
            .content(&share);
        for cell in tally.cells(plan, kind, 0.95) {
            let (x0, y0) = px([
                cell.centre_m[0] - 0.5 * cell_w,
                cell.centre_m[1] + 0.5 * cell_d,
            ]);
            let fill = match cell.probability {
                Some(p) if cell.enough => probability_colour(p),
                _ => FEW.to_string(),
            };
            svg.tag("rect")
                .px("x", x0)
                .px("y", y0)
                .px("width", cell_w * scale)
                .px("height", cell_d * scale)
                .attr("fill", &fill)
                .end();
        }
        // The outline, clipped to the panel.
        let clip_id = floor_clip(
            &mut svg,
            &format!("overview-{i}"),
            &floor,
            [left, panel_top, panel_w, panel_h],
        );
        svg.tag("g")
            .attr("clip-path", format!("url(#{clip_id})"))
            .open();
        for polygon in &outline {
            svg.tag("path")
                .attr("d", polyline_d(polygon.iter().map(|p| px(*p)), true))
                .attr("fill", "none")
                .attr("stroke", BEAM)
                .attr("stroke-width", 1.2)
                .end();
        }
        svg.close("g");
        let (sx, sy) = px([sensor.position_m[0], sensor.position_m[1]]);
        svg.tag("circle")
            .px("cx", sx)
            .px("cy", sy)
            .px("r", 3.5)
            .attr("fill", INK)
            .end();
        svg.tag("rect")
            .px("x", left)
            .px("y", panel_top)
            .px("width", panel_w)
            .px("height", panel_h)
            .attr("fill", "none")
            .attr("stroke", INK)
            .end();
    }
    svg.close("svg");
    svg
}
