//! A detector's zone in a few numbers per kind of walk, for tables: how many walks it caught,
//! the floor area it covers at two probabilities, and how far out it first sees a walker.

use crate::plan::ZonePlan;
use crate::spec::WalkKind;
use crate::tally::ZoneTally;
use echobench_stats::wilson_interval;
use serde::{Deserialize, Serialize};

/// One detector's zone figures for one kind of walk.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ZoneFigures {
    /// `approach` or `cross`.
    pub kind: String,
    /// Walks recorded.
    pub walks: u64,
    /// Walks detected at all.
    pub detected_walks: u64,
    /// `detected_walks / walks`.
    pub detected_fraction: Option<f64>,
    /// Lower end of its Wilson interval at the confidence asked for.
    pub detected_low: Option<f64>,
    /// Upper end.
    pub detected_high: Option<f64>,
    /// Floor area of the cells (with the planned walkers) whose probability of detection by
    /// the time a walker leaves is at least 0.5, m².
    pub area_p50_m2: f64,
    /// The same at 0.9, m².
    pub area_p90_m2: f64,
    /// Cells with the planned number of walkers, of all cells.
    pub cells_with_walkers: u64,
    /// All cells.
    pub cells: u64,
    /// Median horizontal distance from the sensor at first detection, m (of detected walks).
    pub median_first_range_m: Option<f64>,
}

/// The figures of `tally` for each kind `plan` walks, intervals at `confidence`.
pub fn zone_figures(plan: &ZonePlan, tally: &ZoneTally, confidence: f64) -> Vec<ZoneFigures> {
    let grid = plan.grid();
    let sensor = [plan.sensor().position_m[0], plan.sensor().position_m[1]];
    WalkKind::ALL
        .iter()
        .filter(|k| plan.spec().kinds.contains(k))
        .map(|&kind| {
            let counts = tally.kind(kind);
            let cells = tally.cells(plan, kind, confidence);
            let area_at = |p: f64| {
                cells
                    .iter()
                    .filter(|c| c.enough && c.probability.is_some_and(|q| q >= p))
                    .count() as f64
                    * grid.cell_area_m2()
            };
            let mut ranges: Vec<f64> = tally
                .first_positions(plan, kind)
                .iter()
                .map(|(_, at)| (at[0] - sensor[0]).hypot(at[1] - sensor[1]))
                .collect();
            ranges.sort_by(f64::total_cmp);
            // The sample median: the middle value, or the mean of the middle two.
            let median = match ranges.len() {
                0 => None,
                n if n % 2 == 1 => Some(ranges[n / 2]),
                n => Some(0.5 * (ranges[n / 2 - 1] + ranges[n / 2])),
            };
            let interval = wilson_interval(counts.detected_walks, counts.walks, confidence).ok();
            ZoneFigures {
                kind: kind.name().to_string(),
                walks: counts.walks,
                detected_walks: counts.detected_walks,
                detected_fraction: (counts.walks > 0)
                    .then(|| counts.detected_walks as f64 / counts.walks as f64),
                detected_low: interval.map(|i| i.low),
                detected_high: interval.map(|i| i.high),
                area_p50_m2: area_at(0.5),
                area_p90_m2: area_at(0.9),
                cells_with_walkers: cells.iter().filter(|c| c.enough).count() as u64,
                cells: cells.len() as u64,
                median_first_range_m: median,
            }
        })
        .collect()
}
