//! The run folder's CSV tables: `roc.csv`, `events.csv` and `presence.csv`.
//!
//! Each table is a row struct serialized by serde into the `csv` crate's writer, so every
//! field goes through one quoting rule: a field holding a comma, a quote or a line break (a
//! detector label or a scene id from a user's suite) is quoted, and no label can shift a
//! column. Numbers are written as Rust prints them (`f64`'s shortest round-trip `Display`,
//! never an exponent), the form the files have always had: [`Num`] carries a number to the
//! writer that way. An absent value is an empty field.

use echobench_harness::presence_summary::{PresenceFigures, PresencePoint, Quantile};
use echobench_harness::runner::{room_name, Tallies};
use echobench_harness::summary::{outcome, Estimate, Summary};
use serde::{Serialize, Serializer};
use std::io;

/// A number as `f64`'s `Display` writes it (`0.5`, `12`, `0.000125`): the files' form.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Num(pub f64);

impl Serialize for Num {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.collect_str(&self.0)
    }
}

fn num(x: Option<f64>) -> Option<Num> {
    x.map(Num)
}

/// The CSV writer of every table: `\n` line ends, fields quoted only where they must be
/// (the `csv` crate's rule), headers written from each table's column list so that a table
/// without rows still has them.
fn writer<W: io::Write>(out: W) -> csv::Writer<W> {
    csv::WriterBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .has_headers(false)
        .from_writer(out)
}

/// The columns of `roc.csv`, in order (the fields of [`RocRow`]).
pub const ROC_COLUMNS: [&str; 14] = [
    "product",
    "detector",
    "threshold",
    "events",
    "detected",
    "pd",
    "pd_low",
    "pd_high",
    "false_alarms",
    "exposure_h",
    "false_alarms_per_hour",
    "fa_per_hour_low",
    "fa_per_hour_high",
    "retriggers",
];

/// One row of `roc.csv`: a detector at one grid threshold, all its scenes pooled.
#[derive(Debug, Clone, Serialize)]
pub struct RocRow<'a> {
    /// Product name.
    pub product: &'a str,
    /// Detector label.
    pub detector: &'a str,
    /// The grid threshold.
    pub threshold: Num,
    /// Target events.
    pub events: u64,
    /// Events detected.
    pub detected: u64,
    /// Fraction detected (Clopper–Pearson interval below).
    pub pd: Option<Num>,
    /// Lower end of Pd's 95 % interval.
    pub pd_low: Option<Num>,
    /// Upper end of Pd's 95 % interval.
    pub pd_high: Option<Num>,
    /// False alarms counted on noise-only time.
    pub false_alarms: u64,
    /// Noise-only exposure, h.
    pub exposure_h: Num,
    /// False alarms per hour of noise-only time (Garwood interval below).
    pub false_alarms_per_hour: Option<Num>,
    /// Lower end of the rate's 95 % interval.
    pub fa_per_hour_low: Option<Num>,
    /// Upper end of the rate's 95 % interval.
    pub fa_per_hour_high: Option<Num>,
    /// Alarms that restarted while the score stayed over the threshold (stuck alarms).
    pub retriggers: u64,
}

/// Writes `roc.csv` from the tallies: one row per detector and grid threshold.
///
/// # Errors
/// I/O errors of `out`.
pub fn write_roc<W: io::Write>(out: W, tallies: &Tallies) -> io::Result<()> {
    let mut w = writer(out);
    w.write_record(ROC_COLUMNS)?;
    for d in &tallies.detectors {
        let events: u64 = d.variants.iter().map(|v| v.events).sum();
        let exposure: u64 = d.variants.iter().map(|v| v.exposure_ns).sum();
        for (g, threshold) in d.thresholds.iter().enumerate() {
            let detected: u64 = d.variants.iter().map(|v| v.detected[g]).sum();
            let false_alarms: u64 = d.variants.iter().map(|v| v.false_alarms[g]).sum();
            let retriggers: u64 = d.variants.iter().map(|v| v.retriggers[g]).sum();
            let o = outcome(events, detected, false_alarms, exposure);
            w.serialize(RocRow {
                product: &d.product,
                detector: &d.label,
                threshold: Num(*threshold),
                events,
                detected,
                pd: num(o.pd.value),
                pd_low: num(o.pd.low),
                pd_high: num(o.pd.high),
                false_alarms,
                exposure_h: Num(o.exposure_hours),
                false_alarms_per_hour: num(o.false_alarms_per_hour.value),
                fa_per_hour_low: num(o.false_alarms_per_hour.low),
                fa_per_hour_high: num(o.false_alarms_per_hour.high),
                retriggers,
            })?;
        }
    }
    w.flush()
}

/// The columns of `events.csv`, in order (the fields of [`EventsRow`]).
pub const EVENTS_COLUMNS: [&str; 20] = [
    "product",
    "detector",
    "target_fa_per_hour",
    "threshold",
    "scene",
    "sweep_value",
    "label",
    "trials",
    "events",
    "detected",
    "pd",
    "pd_low",
    "pd_high",
    "false_alarms",
    "exposure_h",
    "false_alarms_per_hour",
    "fa_per_hour_low",
    "fa_per_hour_high",
    "latency_median_s",
    "false_on_s",
];

/// One row of `events.csv`: a detector at one operating point on one scene variant.
#[derive(Debug, Clone, Serialize)]
pub struct EventsRow<'a> {
    /// Product name.
    pub product: &'a str,
    /// Detector label.
    pub detector: &'a str,
    /// The operating point's target false-alarm rate, per hour.
    pub target_fa_per_hour: Num,
    /// Its threshold.
    pub threshold: Num,
    /// Scene id.
    pub scene: &'a str,
    /// The swept value as written, empty without a sweep.
    pub sweep_value: &'a str,
    /// `target`, `nuisance` or `event`.
    pub label: &'a str,
    /// Test trials.
    pub trials: u64,
    /// Target events.
    pub events: u64,
    /// Events detected.
    pub detected: u64,
    /// Fraction detected.
    pub pd: Option<Num>,
    /// Lower end of Pd's 95 % interval.
    pub pd_low: Option<Num>,
    /// Upper end of Pd's 95 % interval.
    pub pd_high: Option<Num>,
    /// False alarms on noise-only time.
    pub false_alarms: u64,
    /// Noise-only exposure, h.
    pub exposure_h: Num,
    /// False alarms per hour.
    pub false_alarms_per_hour: Option<Num>,
    /// Lower end of the rate's 95 % interval.
    pub fa_per_hour_low: Option<Num>,
    /// Upper end of the rate's 95 % interval.
    pub fa_per_hour_high: Option<Num>,
    /// Median detection latency, s.
    pub latency_median_s: Option<Num>,
    /// Time the alarm was on during noise-only time, s.
    pub false_on_s: Num,
}

/// Writes `events.csv` from the summary: one row per detector, operating point and scene
/// variant.
///
/// # Errors
/// I/O errors of `out`.
pub fn write_events<W: io::Write>(out: W, summary: &Summary) -> io::Result<()> {
    let mut w = writer(out);
    w.write_record(EVENTS_COLUMNS)?;
    for d in &summary.detectors {
        for op in &d.operating_points {
            for s in &op.by_scene {
                let o = &s.outcome;
                w.serialize(EventsRow {
                    product: &d.product,
                    detector: &d.label,
                    target_fa_per_hour: Num(op.target_false_alarms_per_hour),
                    threshold: Num(op.threshold),
                    scene: &s.scene,
                    sweep_value: s.sweep_value.as_deref().unwrap_or_default(),
                    label: &s.label,
                    trials: s.trials,
                    events: o.events,
                    detected: o.detected,
                    pd: num(o.pd.value),
                    pd_low: num(o.pd.low),
                    pd_high: num(o.pd.high),
                    false_alarms: o.false_alarms,
                    exposure_h: Num(o.exposure_hours),
                    false_alarms_per_hour: num(o.false_alarms_per_hour.value),
                    fa_per_hour_low: num(o.false_alarms_per_hour.low),
                    fa_per_hour_high: num(o.false_alarms_per_hour.high),
                    latency_median_s: num(s.latency_median_s),
                    false_on_s: Num(s.false_on_s),
                })?;
            }
        }
    }
    w.flush()
}

/// A latency quantile's cell: seconds, `not reached` (it lies among the censored values),
/// or empty when there was nothing to measure.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct QuantileCell(pub Quantile);

impl Serialize for QuantileCell {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        match (self.0.seconds, self.0.not_reached) {
            (Some(s), _) => serializer.collect_str(&s),
            (None, true) => serializer.serialize_str("not reached"),
            (None, false) => serializer.serialize_none(),
        }
    }
}

/// The columns of `presence.csv`, in order (the fields of [`PresenceRow`]).
pub const PRESENCE_COLUMNS: [&str; 37] = [
    "product",
    "detector",
    "budget_per_day",
    "threshold",
    "hold_s",
    "slice",
    "label",
    "empty_h",
    "moving_h",
    "still_h",
    "false_on_s_per_day",
    "false_on_s_per_day_low",
    "false_on_s_per_day_high",
    "false_switch_ons",
    "false_switch_ons_per_day",
    "false_switch_ons_per_day_low",
    "false_switch_ons_per_day_high",
    "dropouts_moving",
    "dropouts_still",
    "dropouts_per_occupied_h",
    "dropouts_per_occupied_h_low",
    "dropouts_per_occupied_h_high",
    "dropouts_per_moving_h",
    "dropouts_per_moving_h_low",
    "dropouts_per_moving_h_high",
    "dropouts_per_still_h",
    "dropouts_per_still_h_low",
    "dropouts_per_still_h_high",
    "longest_dropout_s",
    "missed_periods",
    "occupied_periods",
    "entries",
    "switch_on_median_s",
    "switch_on_p90_s",
    "exits_lit",
    "switch_off_median_s",
    "switch_off_p90_s",
];

/// One row of `presence.csv`: a detector's output pin at one budget and hold, on one slice
/// of the test trials (`all`, `rooms`, `visits` or one scene variant).
#[derive(Debug, Clone, Serialize)]
pub struct PresenceRow<'a> {
    /// Product name.
    pub product: &'a str,
    /// Detector label.
    pub detector: &'a str,
    /// False switch-ons per day the threshold was chosen for.
    pub budget_per_day: Num,
    /// The threshold.
    pub threshold: Num,
    /// The retrigger hold, s.
    pub hold_s: Num,
    /// `all`, `rooms`, `visits` or a scene variant's name.
    pub slice: &'a str,
    /// The slice's label (`nuisance`, `target`), empty for `all`.
    pub label: &'a str,
    /// Empty time, h.
    pub empty_h: Num,
    /// Occupied and moving time, h.
    pub moving_h: Num,
    /// Occupied and still time, h.
    pub still_h: Num,
    /// False-on time per day of empty time, s.
    pub false_on_s_per_day: Option<Num>,
    /// Lower end of its interval.
    pub false_on_s_per_day_low: Option<Num>,
    /// Upper end of its interval.
    pub false_on_s_per_day_high: Option<Num>,
    /// False switch-ons counted.
    pub false_switch_ons: u64,
    /// False switch-ons per day of empty time.
    pub false_switch_ons_per_day: Option<Num>,
    /// Lower end of its interval.
    pub false_switch_ons_per_day_low: Option<Num>,
    /// Upper end of its interval.
    pub false_switch_ons_per_day_high: Option<Num>,
    /// Drop-outs while the person moved.
    pub dropouts_moving: u64,
    /// Drop-outs while the person was still.
    pub dropouts_still: u64,
    /// Drop-outs per occupied hour.
    pub dropouts_per_occupied_h: Option<Num>,
    /// Lower end of its interval.
    pub dropouts_per_occupied_h_low: Option<Num>,
    /// Upper end of its interval.
    pub dropouts_per_occupied_h_high: Option<Num>,
    /// Drop-outs per hour of moving occupancy.
    pub dropouts_per_moving_h: Option<Num>,
    /// Lower end of its interval.
    pub dropouts_per_moving_h_low: Option<Num>,
    /// Upper end of its interval.
    pub dropouts_per_moving_h_high: Option<Num>,
    /// Drop-outs per hour of still occupancy.
    pub dropouts_per_still_h: Option<Num>,
    /// Lower end of its interval.
    pub dropouts_per_still_h_low: Option<Num>,
    /// Upper end of its interval.
    pub dropouts_per_still_h_high: Option<Num>,
    /// Longest drop-out, s.
    pub longest_dropout_s: Num,
    /// Occupied periods with no alarm at all.
    pub missed_periods: u64,
    /// Occupied periods.
    pub occupied_periods: u64,
    /// Entries (occupied periods starting inside a trial).
    pub entries: u64,
    /// Median switch-on latency after an entry.
    pub switch_on_median_s: QuantileCell,
    /// 90th percentile of the switch-on latency.
    pub switch_on_p90_s: QuantileCell,
    /// Exits at which the output was on.
    pub exits_lit: u64,
    /// Median time to switch off after the room empties.
    pub switch_off_median_s: QuantileCell,
    /// 90th percentile of the time to switch off.
    pub switch_off_p90_s: QuantileCell,
}

/// The three cells of an estimate: value, low, high.
fn cells(e: &Estimate) -> [Option<Num>; 3] {
    [num(e.value), num(e.low), num(e.high)]
}

/// Where rows of `presence.csv` sit: detector, budget and hold.
struct At<'a> {
    product: &'a str,
    detector: &'a str,
    point: &'a PresencePoint,
    hold_s: f64,
}

/// The row of slice `slice` (labelled `label`) with figures `f`.
fn presence_row<'a>(
    at: &At<'a>,
    slice: &'a str,
    label: &'a str,
    f: &PresenceFigures,
) -> PresenceRow<'a> {
    let [false_on_s_per_day, false_on_s_per_day_low, false_on_s_per_day_high] =
        cells(&f.false_on_s_per_day);
    let [false_switch_ons_per_day, false_switch_ons_per_day_low, false_switch_ons_per_day_high] =
        cells(&f.false_switch_ons_per_day);
    let [dropouts_per_occupied_h, dropouts_per_occupied_h_low, dropouts_per_occupied_h_high] =
        cells(&f.dropouts_per_occupied_hour);
    let [dropouts_per_moving_h, dropouts_per_moving_h_low, dropouts_per_moving_h_high] =
        cells(&f.dropouts_per_moving_hour);
    let [dropouts_per_still_h, dropouts_per_still_h_low, dropouts_per_still_h_high] =
        cells(&f.dropouts_per_still_hour);
    PresenceRow {
        product: at.product,
        detector: at.detector,
        budget_per_day: Num(at.point.budget_per_day),
        threshold: Num(at.point.threshold),
        hold_s: Num(at.hold_s),
        slice,
        label,
        empty_h: Num(f.empty_hours),
        moving_h: Num(f.moving_hours),
        still_h: Num(f.still_hours),
        false_on_s_per_day,
        false_on_s_per_day_low,
        false_on_s_per_day_high,
        false_switch_ons: f.false_switch_ons,
        false_switch_ons_per_day,
        false_switch_ons_per_day_low,
        false_switch_ons_per_day_high,
        dropouts_moving: f.dropouts.0,
        dropouts_still: f.dropouts.1,
        dropouts_per_occupied_h,
        dropouts_per_occupied_h_low,
        dropouts_per_occupied_h_high,
        dropouts_per_moving_h,
        dropouts_per_moving_h_low,
        dropouts_per_moving_h_high,
        dropouts_per_still_h,
        dropouts_per_still_h_low,
        dropouts_per_still_h_high,
        longest_dropout_s: Num(f.longest_dropout_s),
        missed_periods: f.missed_periods,
        occupied_periods: f.occupied_periods,
        entries: f.entries,
        switch_on_median_s: QuantileCell(f.switch_on_median),
        switch_on_p90_s: QuantileCell(f.switch_on_p90),
        exits_lit: f.exits - f.exits_already_off,
        switch_off_median_s: QuantileCell(f.switch_off_median),
        switch_off_p90_s: QuantileCell(f.switch_off_p90),
    }
}

/// Writes `presence.csv` for the run's presence products: per detector and budget, one row
/// for all test trials, the rooms, the visits and each scene variant at the product's hold,
/// then (slice `all`, first budget's threshold) one row per hold of the trade-off sweep.
///
/// # Errors
/// I/O errors of `out`.
pub fn write_presence<W: io::Write>(out: W, summary: &Summary) -> io::Result<()> {
    let mut w = writer(out);
    w.write_record(PRESENCE_COLUMNS)?;
    for d in &summary.detectors {
        let Some(verdict) = &d.presence else {
            continue;
        };
        let hold_s = verdict.output.hold_s;
        for point in &verdict.points {
            let at = At {
                product: &d.product,
                detector: &d.label,
                point,
                hold_s,
            };
            w.serialize(presence_row(&at, "all", "", &point.figures))?;
            w.serialize(presence_row(&at, "rooms", "nuisance", &point.rooms))?;
            w.serialize(presence_row(&at, "visits", "target", &point.visits))?;
            for scene in &point.by_scene {
                let name = room_name(&scene.scene, scene.sweep_value.as_deref());
                w.serialize(presence_row(&at, &name, &scene.label, &scene.figures))?;
            }
        }
        if let Some(point) = verdict.points.first() {
            for t in &verdict.tradeoff {
                let at = At {
                    product: &d.product,
                    detector: &d.label,
                    point,
                    hold_s: t.hold_s,
                };
                w.serialize(presence_row(&at, "all", "", &t.figures))?;
            }
        }
    }
    w.flush()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The header each row struct would write itself: its field names, in order.
    fn header_of<T: Serialize>(row: &T) -> Vec<String> {
        let mut w = csv::Writer::from_writer(Vec::new());
        w.serialize(row).unwrap();
        let text = String::from_utf8(w.into_inner().unwrap()).unwrap();
        text.lines()
            .next()
            .unwrap()
            .split(',')
            .map(String::from)
            .collect()
    }

    #[test]
    fn the_column_lists_are_the_row_structs_fields() {
        let roc = RocRow {
            product: "p",
            detector: "d",
            threshold: Num(1.0),
            events: 0,
            detected: 0,
            pd: None,
            pd_low: None,
            pd_high: None,
            false_alarms: 0,
            exposure_h: Num(0.0),
            false_alarms_per_hour: None,
            fa_per_hour_low: None,
            fa_per_hour_high: None,
            retriggers: 0,
        };
        assert_eq!(header_of(&roc), ROC_COLUMNS);
        let events = EventsRow {
            product: "p",
            detector: "d",
            target_fa_per_hour: Num(1.0),
            threshold: Num(1.0),
            scene: "s",
            sweep_value: "",
            label: "target",
            trials: 1,
            events: 0,
            detected: 0,
            pd: None,
            pd_low: None,
            pd_high: None,
            false_alarms: 0,
            exposure_h: Num(0.0),
            false_alarms_per_hour: None,
            fa_per_hour_low: None,
            fa_per_hour_high: None,
            latency_median_s: None,
            false_on_s: Num(0.0),
        };
        assert_eq!(header_of(&events), EVENTS_COLUMNS);
        let quantile = QuantileCell(Quantile {
            seconds: None,
            not_reached: true,
        });
        let presence = PresenceRow {
            product: "p",
            detector: "d",
            budget_per_day: Num(24.0),
            threshold: Num(1.0),
            hold_s: Num(30.0),
            slice: "all",
            label: "",
            empty_h: Num(1.0),
            moving_h: Num(1.0),
            still_h: Num(1.0),
            false_on_s_per_day: None,
            false_on_s_per_day_low: None,
            false_on_s_per_day_high: None,
            false_switch_ons: 0,
            false_switch_ons_per_day: None,
            false_switch_ons_per_day_low: None,
            false_switch_ons_per_day_high: None,
            dropouts_moving: 0,
            dropouts_still: 0,
            dropouts_per_occupied_h: None,
            dropouts_per_occupied_h_low: None,
            dropouts_per_occupied_h_high: None,
            dropouts_per_moving_h: None,
            dropouts_per_moving_h_low: None,
            dropouts_per_moving_h_high: None,
            dropouts_per_still_h: None,
            dropouts_per_still_h_low: None,
            dropouts_per_still_h_high: None,
            longest_dropout_s: Num(0.0),
            missed_periods: 0,
            occupied_periods: 0,
            entries: 0,
            switch_on_median_s: quantile,
            switch_on_p90_s: quantile,
            exits_lit: 0,
            switch_off_median_s: quantile,
            switch_off_p90_s: quantile,
        };
        assert_eq!(header_of(&presence), PRESENCE_COLUMNS);
    }

    #[test]
    fn numbers_are_written_as_rust_prints_them() {
        let mut w = writer(Vec::new());
        for x in [0.5, 12.0, 0.000125, 1e21, f64::MIN_POSITIVE] {
            w.serialize([Num(x)]).unwrap();
        }
        let text = String::from_utf8(w.into_inner().unwrap()).unwrap();
        let expected: String = [0.5, 12.0, 0.000125, 1e21, f64::MIN_POSITIVE]
            .iter()
            .map(|x| format!("{x}\n"))
            .collect();
        assert_eq!(text, expected);
        assert!(text.starts_with("0.5\n12\n0.000125\n"), "{text}");
    }
}
