//! `products:`: each product's name, module, kind (intrusion or presence, with its timer and
//! budget) and scenes; then the checks across products (one module per product, scene ids
//! unique in the suite, calibration trials present).

use crate::load::{error, TrialCounts};
use crate::model::{PresenceOutput, Product, ProductKind, SuiteScene};
use crate::scenes::read_scenes;
use crate::sources::SceneSource;
use crate::zone_block::{check_zone_scene, read_zone};
use echobench_yaml_reader::{FromNode, Location, Node, Reader, Report, Value};

/// Largest number of products in one suite (each is calibrated on its own).
const MAX_PRODUCTS: usize = 64;

/// Module fields that belong to the room, not to the module: where it is placed.
const PLACEMENT_FIELDS: [&str; 2] = ["position_m", "azimuth_deg"];

/// Reads `products:`: each a name, optional `about` and `module`, and its scenes.
pub(crate) fn read_products(
    node: &Node,
    suite_file: &str,
    source: &dyn SceneSource,
    defaults: TrialCounts,
    report: &mut Report,
) -> Option<Vec<(Product, Vec<SuiteScene>, Location)>> {
    let Value::Seq(items) = &node.value else {
        report.problems.push(error(
            suite_file,
            node.location,
            "products".into(),
            format!("expected a list of products, found {}", node.kind_name()),
        ));
        return None;
    };
    if items.is_empty() || items.len() > MAX_PRODUCTS {
        report.problems.push(error(
            suite_file,
            node.location,
            "products".into(),
            format!(
                "a suite needs 1 to {MAX_PRODUCTS} products, found {}",
                items.len()
            ),
        ));
        return None;
    }
    let mut out = Vec::with_capacity(items.len());
    let mut ok = true;
    for (index, item) in items.iter().enumerate() {
        let path = format!("products[{index}]");
        let mut reader = Reader::new(suite_file);
        let Some(mut f) = reader.fields(item, &path) else {
            report.extend(reader.finish());
            ok = false;
            continue;
        };
        let name: Option<String> = f.required("name");
        let about: String = f.optional_or("about", String::new());
        let module_node = f.raw("module");
        let module_path = f.path_of("module");
        let scenes_node = f.raw("scenes");
        let kind_name = f.choice_or("kind", &["intrusion", "presence"], "intrusion");
        let output_node = f.raw("output");
        let output_path = f.path_of("output");
        let budget_node = f.raw("budget");
        let budget_path = f.path_of("budget");
        let hold_sweep_s: Option<Vec<f64>> = f.optional("hold_sweep_s");
        let zone_node = f.raw("zone");
        let zone_path = f.path_of("zone");
        if let Some(sweep) = hold_sweep_s.as_ref().filter(|sweep| {
            sweep.is_empty()
                || sweep.len() > MAX_HOLD_SWEEP
                || sweep.iter().any(|h| !(*h > 0.0 && *h <= MAX_TIMER_S))
        }) {
            f.error_at(
                "hold_sweep_s",
                format!(
                    "give 1 to {MAX_HOLD_SWEEP} hold times, each > 0 and at most {MAX_TIMER_S} s, found {sweep:?}"
                ),
            );
        }
        let presence_fields_given =
            output_node.is_some() || budget_node.is_some() || hold_sweep_s.is_some();
        if kind_name != "presence" && presence_fields_given {
            f.error_at(
                "kind",
                "`output`, `budget` and `hold_sweep_s` describe a presence product's timer: add `kind: presence`, or remove them",
            );
        }
        let kind = if kind_name == "presence" {
            match (output_node, budget_node) {
                (Some(output), Some(budget)) => read_presence_output(
                    output,
                    &output_path,
                    budget,
                    &budget_path,
                    hold_sweep_s,
                    f.reader(),
                )
                .map(ProductKind::Presence),
                _ => {
                    f.error_at(
                        "kind",
                        "a presence product needs `output: {hold_s, min_on_s, lockout_s}` and `budget: {false_switch_ons_per_day: [...]}`",
                    );
                    None
                }
            }
        } else {
            Some(ProductKind::Intrusion)
        };
        if name.as_ref().is_some_and(|n| n.trim().is_empty()) {
            f.error_at("name", "must not be empty");
        }
        if scenes_node.is_none() {
            f.error_at(
                "scenes",
                "missing required field: the product's target and nuisance scenes",
            );
        }
        let module = module_node.and_then(|m| {
            if let Value::Map(entries) = &m.value {
                for (key, _, at) in entries {
                    if PLACEMENT_FIELDS.contains(&key.as_str()) {
                        f.reader().error(
                            *at,
                            &format!("{module_path}.{key}"),
                            format!(
                                "`{key}` places the module in a room: it belongs to each scene's `sensor`, not to the product's module"
                            ),
                        );
                    }
                }
            }
            echobench_scene::spec::SensorSpec::from_node(m, &module_path, f.reader())
        });
        let module_failed = module_node.is_some() && module.is_none();
        f.finish();
        let zone = zone_node.and_then(|n| read_zone(n, &zone_path, &mut reader));
        let zone_failed = zone_node.is_some() && zone.is_none();
        let problems = reader.finish();
        let failed = problems.has_errors() || module_failed || zone_failed;
        report.extend(problems);
        let (Some(name), Some(scenes_node), Some(kind), false) = (name, scenes_node, kind, failed)
        else {
            ok = false;
            continue;
        };
        if out
            .iter()
            .any(|(p, _, _): &(Product, Vec<SuiteScene>, Location)| p.name == name)
        {
            report.problems.push(error(
                suite_file,
                item.location,
                format!("{path}.name"),
                format!("product `{name}` is named twice; names must be unique"),
            ));
            ok = false;
            continue;
        }
        let product = Product {
            name,
            about,
            module,
            kind,
            zone,
        };
        match read_scenes(
            scenes_node,
            &format!("{path}.scenes"),
            &product.name,
            suite_file,
            source,
            defaults,
            report,
        ) {
            Some(list) => {
                if let Some(zone) = &product.zone {
                    let mut reader = Reader::new(suite_file);
                    check_zone_scene(zone, &zone_path, &list, &mut reader);
                    let problems = reader.finish();
                    ok &= !problems.has_errors();
                    report.extend(problems);
                }
                out.push((product, list, scenes_node.location));
            }
            None => ok = false,
        }
    }
    ok.then_some(out)
}

/// Most budgets (operating points) and hold times of a presence product.
const MAX_PRESENCE_POINTS: usize = 8;

const MAX_HOLD_SWEEP: usize = 32;

/// Longest hold, minimum on-time or lock-out accepted, s (a day; timers of these modules
/// run seconds to tens of minutes, common practice).
const MAX_TIMER_S: f64 = 86_400.0;

/// Reads a presence product's `output` (its retrigger timer), `budget` and hold sweep.
fn read_presence_output(
    output: &Node,
    output_path: &str,
    budget: &Node,
    budget_path: &str,
    hold_sweep_s: Option<Vec<f64>>,
    reader: &mut Reader,
) -> Option<PresenceOutput> {
    let mut ok = true;
    let (hold_s, min_on_s, lockout_s) = {
        let mut f = reader.fields(output, output_path)?;
        let hold_s: Option<f64> = f.required("hold_s");
        let min_on_s: f64 = f.optional_or("min_on_s", 0.0);
        let lockout_s: f64 = f.optional_or("lockout_s", 0.0);
        if let Some(h) = hold_s.filter(|h| !(*h > 0.0 && *h <= MAX_TIMER_S)) {
            f.error_at(
                "hold_s",
                format!("the hold must be > 0 and at most {MAX_TIMER_S} s, found {h}"),
            );
            ok = false;
        }
        for (key, value) in [("min_on_s", min_on_s), ("lockout_s", lockout_s)] {
            if !(0.0..=MAX_TIMER_S).contains(&value) {
                f.error_at(key, format!("must be 0 to {MAX_TIMER_S} s, found {value}"));
                ok = false;
            }
        }
        f.finish();
        (hold_s?, min_on_s, lockout_s)
    };
    let false_switch_ons_per_day = {
        let mut f = reader.fields(budget, budget_path)?;
        let rates: Option<Vec<f64>> = f.required("false_switch_ons_per_day");
        if let Some(rates) = &rates {
            if rates.is_empty() || rates.len() > MAX_PRESENCE_POINTS {
                f.error_at(
                    "false_switch_ons_per_day",
                    format!(
                        "give 1 to {MAX_PRESENCE_POINTS} budgets (false switch-ons per day of empty time), found {}",
                        rates.len()
                    ),
                );
                ok = false;
            }
            if let Some(bad) = rates.iter().find(|r| **r <= 0.0) {
                f.error_at(
                    "false_switch_ons_per_day",
                    format!("every budget must be positive, found {bad}"),
                );
                ok = false;
            }
        }
        f.finish();
        rates?
    };
    let mut sweep = hold_sweep_s.unwrap_or_else(|| {
        // Default: a ladder around the product's hold, from a fifth to eight times it.
        [0.2, 0.5, 1.0, 2.0, 4.0, 8.0]
            .iter()
            .map(|k| k * hold_s)
            .filter(|h| *h <= MAX_TIMER_S)
            .collect()
    });
    sweep.push(hold_s);
    sweep.sort_by(f64::total_cmp);
    sweep.dedup();
    let out = PresenceOutput {
        hold_s,
        min_on_s,
        lockout_s,
        false_switch_ons_per_day,
        hold_sweep_s: sweep,
    };
    if let Err(e) = out.timer() {
        reader.error(output.location, output_path, e.to_string());
        ok = false;
    }
    ok.then_some(out)
}

/// Puts each product's module into its scenes (keeping their placement), or, for a
/// product without a module, checks that its scenes share one; checks scene ids across
/// products (they seed the trials).
pub(crate) fn check_products(
    read: Vec<(Product, Vec<SuiteScene>, Location)>,
    suite_file: &str,
    report: &mut Report,
) -> Option<(Vec<Product>, Vec<SuiteScene>)> {
    let mut ok = true;
    let mut products = Vec::with_capacity(read.len());
    let mut all_scenes: Vec<SuiteScene> = Vec::new();
    for (product, mut scenes, location) in read {
        match &product.module {
            Some(module) => {
                for scene in &mut scenes {
                    for variant in &mut scene.variants {
                        let own = &variant.scene.sensor;
                        variant.scene.sensor = echobench_scene::spec::SensorSpec {
                            position_m: own.position_m,
                            azimuth_deg: own.azimuth_deg,
                            ..module.clone()
                        };
                    }
                }
            }
            None => {
                if let Some(first) = scenes.first() {
                    let reference = &first.variants[0].scene.sensor;
                    for scene in &scenes {
                        for variant in &scene.variants {
                            let fields = module_differences(reference, &variant.scene.sensor);
                            if !fields.is_empty() {
                                report.problems.push(error(
                                    suite_file,
                                    location,
                                    "scenes".into(),
                                    format!(
                                        "product `{}` mixes sensor modules: scene `{}` differs from scene `{}` in {}; a product is one module (give the product a `module`, or split it into products)",
                                        product.name,
                                        scene.id,
                                        first.id,
                                        fields.join(", ")
                                    ),
                                ));
                                ok = false;
                                break;
                            }
                        }
                    }
                }
            }
        }
        for scene in &scenes {
            if let Some(other) = all_scenes.iter().find(|s| s.id == scene.id) {
                report.problems.push(error(
                    suite_file,
                    location,
                    "scenes".into(),
                    format!(
                        "scene id `{}` is used in product `{}` and in product `{}`; ids must be unique in a suite, as they seed the trials",
                        scene.id, other.product, product.name
                    ),
                ));
                ok = false;
            }
        }
        if product.kind.presence().is_some() {
            if let Some(event) = scenes.iter().find(|s| s.occurrences_per_day.is_some()) {
                report.problems.push(error(
                    suite_file,
                    location,
                    "scenes".into(),
                    format!(
                        "scene `{}` of presence product `{}` is a rare event (`occurrences_per_day`): rare events are scored on alarms, for intrusion products only so far",
                        event.id, product.name
                    ),
                ));
                ok = false;
            }
        }
        if scenes.iter().all(|s| s.calibration_trials == 0) {
            report.problems.push(error(
                suite_file,
                location,
                "scenes".into(),
                format!(
                    "product `{}` has no calibration trials: thresholds are chosen on them; give a capture entry `calibration_recordings`, or add a synthetic scene",
                    product.name
                ),
            ));
            ok = false;
        }
        all_scenes.extend(scenes);
        products.push(product);
    }
    ok.then_some((products, all_scenes))
}

/// The names of the module fields in which two sensors differ (placement ignored).
pub fn module_differences(
    a: &echobench_scene::spec::SensorSpec,
    b: &echobench_scene::spec::SensorSpec,
) -> Vec<&'static str> {
    let mut out = Vec::new();
    let mut differ = |name: &'static str, same: bool| {
        if !same {
            out.push(name);
        }
    };
    differ("carrier_hz", a.carrier_hz == b.carrier_hz);
    differ("sample_rate_hz", a.sample_rate_hz == b.sample_rate_hz);
    differ("output", a.output == b.output);
    differ("elevation_deg", a.elevation_deg == b.elevation_deg);
    differ(
        "beam_azimuth_3db_deg",
        a.beam_azimuth_3db_deg == b.beam_azimuth_3db_deg,
    );
    differ(
        "beam_elevation_3db_deg",
        a.beam_elevation_3db_deg == b.beam_elevation_3db_deg,
    );
    differ("beam_floor_db", a.beam_floor_db == b.beam_floor_db);
    differ("tx_power_dbm", a.tx_power_dbm == b.tx_power_dbm);
    differ("antenna_gain_dbi", a.antenna_gain_dbi == b.antenna_gain_dbi);
    differ(
        "conversion_loss_db",
        a.conversion_loss_db == b.conversion_loss_db,
    );
    differ("load_ohm", a.load_ohm == b.load_ohm);
    differ("mixer_dc_v", a.mixer_dc_v == b.mixer_dc_v);
    differ("drift", a.drift == b.drift);
    differ("front_end", a.front_end == b.front_end);
    differ("adc", a.adc == b.adc);
    out
}
