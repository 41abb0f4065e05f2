//! The console table of a run's detection zones: per product, one row per detector and kind
//! of walk with how many walks it caught, the floor it covers, and how far out it first sees
//! a walker.

use super::grid_table;
use echobench_harness::zone_walks::ZoneRecord;

/// The zone table of `record` (figures filled in), product by product.
pub fn zone_table(record: &ZoneRecord) -> String {
    let mut out = String::new();
    let pct = |v: Option<f64>| v.map_or("—".to_string(), |v| format!("{:.0} %", 100.0 * v));
    for (i, product) in record.products.iter().enumerate() {
        if i > 0 {
            out.push('\n');
        }
        out.push_str(&format!(
            "Detection zone of {} ({} walks through the room of `{}`; each detector at its \
             first operating threshold):\n",
            product.product, product.walks_run, product.scene
        ));
        let columns: Vec<String> = product.detectors.iter().map(|d| d.label.clone()).collect();
        let mut rows: Vec<(String, Vec<String>)> = Vec::new();
        let kinds: Vec<&str> = product
            .detectors
            .first()
            .map(|d| d.figures.iter().map(|f| f.kind.as_str()).collect())
            .unwrap_or_default();
        for kind in kinds {
            let row = |name: &str, cell: &dyn Fn(&echobench_zone::ZoneFigures) -> String| {
                (
                    format!("{kind}: {name}"),
                    product
                        .detectors
                        .iter()
                        .map(|d| {
                            d.figures
                                .iter()
                                .find(|f| f.kind == kind)
                                .map_or("—".into(), cell)
                        })
                        .collect(),
                )
            };
            rows.push(row("walks detected", &|f| {
                format!(
                    "{} [{}, {}]",
                    pct(f.detected_fraction),
                    pct(f.detected_low),
                    pct(f.detected_high)
                )
            }));
            rows.push(row("floor with P ≥ 0.9, m²", &|f| {
                format!("{:.1}", f.area_p90_m2)
            }));
            rows.push(row("floor with P ≥ 0.5, m²", &|f| {
                format!("{:.1}", f.area_p50_m2)
            }));
            rows.push(row("median first range, m", &|f| {
                f.median_first_range_m
                    .map_or("—".into(), |r| format!("{r:.1}"))
            }));
        }
        let failed: Vec<String> = product
            .detectors
            .iter()
            .filter(|d| d.failed_walks > 0)
            .map(|d| {
                format!(
                    "  {} failed on {} walks ({})",
                    d.label,
                    d.failed_walks,
                    d.first_failure
                        .as_ref()
                        .map_or(String::new(), |f| format!("walk {}: {}", f.walk, f.message))
                )
            })
            .collect();
        out.push_str(&grid_table("", &columns, &rows));
        for line in failed {
            out.push_str(&line);
            out.push('\n');
        }
    }
    out
}
