//! The console verdict of the committed CI reference (the default suite): a block per
//! product, the rare event's block, the calibration statements and the cautions.

use echobench_harness::summary::{Summary, CAUTIONS};
use echobench_render::console::{calibration_statements, console_table};

fn reference_summary() -> Summary {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../../.ci/baseline");
    serde_json::from_slice(&std::fs::read(path.join("summary.json")).unwrap()).unwrap()
}

#[test]
fn the_reference_console_has_every_product_its_rare_event_and_the_cautions() {
    let summary = reference_summary();
    let console = console_table(&summary, None);
    for product in &summary.products {
        assert!(
            console.contains(&format!("== product `{}`", product.name)),
            "{console}"
        );
    }
    // The default suite's fire door is a rare event of six occurrences a day.
    assert!(console.contains("rare events @"), "{console}");
    assert!(
        console.contains("corridor-fire-door-draught (6/day)"),
        "{console}"
    );
    assert!(console.ends_with(&format!("\n{CAUTIONS}\n")));
    // The calibration statements the report also prints are the console's lines.
    let first = &summary.products[0].name;
    let detectors: Vec<_> = summary
        .detectors
        .iter()
        .filter(|d| &d.product == first)
        .collect();
    let rates: Vec<f64> = detectors[0]
        .operating_points
        .iter()
        .map(|o| o.target_false_alarms_per_hour)
        .collect();
    for statement in calibration_statements(&detectors, &rates) {
        assert!(console.contains(&statement.text), "{}", statement.text);
    }
}
