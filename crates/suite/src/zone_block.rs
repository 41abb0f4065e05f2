//! `zone:` on a product (or at the top of a suite without `products:`): the detection zone
//! to map for it — which of its scenes gives the room, placement and noise, the floor and
//! its grid, and the walkers — read into an [`echobench_zone::ZoneSpec`] and checked here,
//! so a bad zone is refused at load with its line and column, never mid-run.

use crate::model::{ProductZone, SuiteScene};
use echobench_scene::param::{Bounds, ParamFields};
use echobench_yaml_reader::{Node, Reader};
use echobench_zone::{FloorRect, WalkKind, ZoneError, ZoneSpec};

/// Reads a `zone:` mapping at `path`; every problem goes to `reader`.
pub(crate) fn read_zone(node: &Node, path: &str, reader: &mut Reader) -> Option<ProductZone> {
    let mut f = reader.fields(node, path)?;
    let scene: Option<String> = f.required("scene");
    let floor_node = f.raw("floor_m");
    let floor_path = f.path_of("floor_m");
    let cells: Option<[usize; 2]> = f.required("cells");
    let walkers_per_cell: Option<u32> = f.required("walkers_per_cell");
    let kinds: Vec<String> = f.optional_or(
        "kinds",
        WalkKind::ALL.iter().map(|k| k.name().into()).collect(),
    );
    let defaults = ZoneSpec::new(
        FloorRect {
            x_min_m: 0.0,
            x_max_m: 1.0,
            y_min_m: 0.0,
            y_max_m: 1.0,
        },
        1,
        1,
        1,
    );
    let speed_mps = f
        .param_opt("speed_mps", Bounds::ANY)
        .unwrap_or(defaults.speed_mps.clone());
    let height_m = f
        .param_opt("height_m", Bounds::ANY)
        .unwrap_or(defaults.height_m.clone());
    let settle_s: f64 = f.optional_or("settle_s", defaults.settle_s);
    let tail_s: f64 = f.optional_or("tail_s", defaults.tail_s);
    let stop_short_m: f64 = f.optional_or("stop_short_m", defaults.stop_short_m);
    let beam_plane_height_m: f64 =
        f.optional_or("beam_plane_height_m", defaults.beam_plane_height_m);
    let mut kinds_ok = true;
    let mut walk_kinds = Vec::new();
    for name in &kinds {
        match WalkKind::ALL.iter().find(|k| k.name() == name) {
            Some(k) if !walk_kinds.contains(k) => walk_kinds.push(*k),
            Some(_) => {
                f.error_at("kinds", format!("`{name}` is listed twice"));
                kinds_ok = false;
            }
            None => {
                f.error_at(
                    "kinds",
                    format!("unknown kind of walk `{name}`: expected `approach` or `cross`"),
                );
                kinds_ok = false;
            }
        }
    }
    if floor_node.is_none() {
        f.error_at(
            "floor_m",
            "missing required field: the floor walked, `{x: [min, max], y: [min, max]}` in the scene's room coordinates, m",
        );
    }
    let location = node.location;
    f.finish();
    let floor = floor_node.and_then(|n| {
        let mut g = reader.fields(n, &floor_path)?;
        let x: Option<[f64; 2]> = g.required("x");
        let y: Option<[f64; 2]> = g.required("y");
        g.finish();
        Some(FloorRect {
            x_min_m: x?[0],
            x_max_m: x?[1],
            y_min_m: y?[0],
            y_max_m: y?[1],
        })
    });
    let (scene, floor, cells, walkers_per_cell) = (scene?, floor?, cells?, walkers_per_cell?);
    let spec = ZoneSpec {
        floor,
        cells_x: cells[0],
        cells_y: cells[1],
        walkers_per_cell,
        speed_mps,
        height_m,
        kinds: walk_kinds,
        settle_s,
        tail_s,
        stop_short_m,
        beam_plane_height_m,
    };
    // With a kind refused the spec is not checked further (its list may be empty); the
    // zone is still returned, so the scene is checked too and every problem is reported.
    if let (true, Err(ZoneError::Spec(problems))) = (kinds_ok, spec.check()) {
        for problem in problems {
            // Each problem starts with the spec's field name: report it at that field.
            let field = problem.split(':').next().unwrap_or_default();
            let key = match field {
                "floor" => "floor_m",
                other => other,
            };
            match node.get(key) {
                Some(child) => reader.error(child.location, &format!("{path}.{key}"), problem),
                None => reader.error(location, path, problem),
            }
        }
        return None;
    }
    Some(ProductZone {
        scene,
        spec,
        location,
    })
}

/// Checks that the zone's `scene` is one of the product's synthetic scenes.
pub(crate) fn check_zone_scene(
    zone: &ProductZone,
    path: &str,
    scenes: &[SuiteScene],
    reader: &mut Reader,
) {
    match scenes.iter().find(|s| s.id == zone.scene) {
        None => {
            let names: Vec<&str> = scenes.iter().map(|s| s.id.as_str()).collect();
            reader.error(
                zone.location,
                &format!("{path}.scene"),
                format!(
                    "no scene `{}` in this product; its scenes are: {}",
                    zone.scene,
                    names.join(", ")
                ),
            );
        }
        Some(s) if s.capture.is_some() => reader.error(
            zone.location,
            &format!("{path}.scene"),
            format!(
                "scene `{}` plays a recording: a zone's walkers are synthesized into a synthetic room",
                zone.scene
            ),
        ),
        Some(_) => {}
    }
}
