//! The zone CSV: one row per detector × walk kind × cell, numbers as numbers.

use crate::plan::ZonePlan;
use crate::spec::{WalkKind, ZoneError};
use crate::tally::ZoneTally;
use serde::Serialize;

/// One row of the zone CSV.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ZoneRow<'a> {
    /// Product name.
    pub product: &'a str,
    /// Detector label.
    pub detector: &'a str,
    /// `approach` or `cross`.
    pub kind: &'static str,
    /// Column of the cell (0 at the smallest x).
    pub cell_x: usize,
    /// Row of the cell (0 at the smallest y).
    pub cell_y: usize,
    /// Centre x, m.
    pub centre_x_m: f64,
    /// Centre y, m.
    pub centre_y_m: f64,
    /// Radius of the neighbourhood, m.
    pub radius_m: f64,
    /// Walks through the neighbourhood.
    pub walkers: u64,
    /// Of those, detected by the time they left it.
    pub detected: u64,
    /// `detected / walkers` (empty when no walk passed).
    pub p_detected: Option<f64>,
    /// Lower end of the Clopper–Pearson interval.
    pub p_low: Option<f64>,
    /// Upper end.
    pub p_high: Option<f64>,
    /// Level of the interval.
    pub confidence: f64,
    /// First detections in the cell.
    pub first_detections: u64,
    /// First detections per m² per walk of this kind.
    pub first_density_per_m2: Option<f64>,
    /// At least the planned walkers per cell passed.
    pub enough_walkers: bool,
}

/// One product's part of the zone CSV: its plan and its detectors' tallies, in order.
#[derive(Debug, Clone, Copy)]
pub struct ZoneCsvPart<'a> {
    /// Product name (the first column).
    pub product: &'a str,
    /// The product's plan.
    pub plan: &'a ZonePlan,
    /// (detector label, tallies), in the order of the rows.
    pub tallies: &'a [(&'a str, &'a ZoneTally)],
}

/// The CSV of every product's detectors (in the order given), each planned kind, every
/// cell, with intervals at `confidence`; the caller writes the bytes (atomically).
///
/// # Errors
/// When the CSV writer fails (it writes into memory, so only on a bug).
pub fn zone_csv(parts: &[ZoneCsvPart<'_>], confidence: f64) -> Result<Vec<u8>, ZoneError> {
    let mut writer = csv::Writer::from_writer(Vec::new());
    let csv_error = |e: csv::Error| ZoneError::Csv(format!("zone CSV: {e}"));
    for part in parts {
        let plan = part.plan;
        let radius_m = plan.grid().radius_m();
        for &(detector, tally) in part.tallies {
            for kind in WalkKind::ALL {
                if tally.kind(kind).walks == 0 && !plan.spec().kinds.contains(&kind) {
                    continue;
                }
                for cell in tally.cells(plan, kind, confidence) {
                    writer
                        .serialize(ZoneRow {
                            product: part.product,
                            detector,
                            kind: kind.name(),
                            cell_x: cell.ix,
                            cell_y: cell.iy,
                            centre_x_m: cell.centre_m[0],
                            centre_y_m: cell.centre_m[1],
                            radius_m,
                            walkers: cell.passed,
                            detected: cell.detected,
                            p_detected: cell.probability,
                            p_low: cell.interval.map(|i| i.low),
                            p_high: cell.interval.map(|i| i.high),
                            confidence,
                            first_detections: cell.first_detections,
                            first_density_per_m2: cell.first_density_per_m2,
                            enough_walkers: cell.enough,
                        })
                        .map_err(csv_error)?;
                }
            }
        }
    }
    writer
        .into_inner()
        .map_err(|e| ZoneError::Csv(format!("zone CSV: {e}")))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plan::tests::sensor_at;
    use crate::spec::{FloorRect, ZoneSpec};

    #[test]
    fn rows_carry_numbers_and_empty_fields_for_no_value() {
        let mut spec = ZoneSpec::new(
            FloorRect {
                x_min_m: 0.0,
                x_max_m: 4.0,
                y_min_m: -2.0,
                y_max_m: 2.0,
            },
            2,
            2,
            2,
        );
        spec.kinds = vec![WalkKind::Approach];
        let plan = ZonePlan::new(&spec, &sensor_at([0.0, 0.0, 1.0], 0.0), 1).unwrap();
        let mut tally = ZoneTally::new(&plan);
        let walk = &plan.walks()[0];
        tally.record(&plan, walk, Some(walk.enter_s + 0.5)).unwrap();
        let part = ZoneCsvPart {
            product: "hall",
            plan: &plan,
            tallies: &[("energy", &tally)],
        };
        let text = String::from_utf8(zone_csv(&[part], 0.95).unwrap()).unwrap();
        let mut lines = text.lines();
        assert_eq!(
            lines.next().unwrap(),
            "product,detector,kind,cell_x,cell_y,centre_x_m,centre_y_m,radius_m,walkers,detected,\
             p_detected,p_low,p_high,confidence,first_detections,first_density_per_m2,\
             enough_walkers"
        );
        let rows: Vec<&str> = lines.collect();
        assert_eq!(rows.len(), 4, "approach only, 2 × 2 cells");
        for row in &rows {
            let fields: Vec<&str> = row.split(',').collect();
            assert_eq!(fields[0], "hall");
            assert_eq!(fields[1], "energy");
            assert_eq!(fields[2], "approach");
            let walkers: u64 = fields[8].parse().unwrap();
            if walkers == 0 {
                assert_eq!(fields[10], "");
            } else {
                let p: f64 = fields[10].parse().unwrap();
                assert!((0.0..=1.0).contains(&p));
            }
            let _: f64 = fields[5].parse().unwrap();
        }
    }
}
