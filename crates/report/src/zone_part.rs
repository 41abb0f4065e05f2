//! A product's detection zone in the report (when `echobench zone` added one to the run): a
//! table of each detector's zone in numbers and the floor-plan pictures the run folder
//! holds, approach and crossing walks apart.

use crate::html::{detector_cell, Part};
use crate::markup::Html;
use echobench_harness::zone_walks::ProductZoneRun;

/// The product's zone from the run's `zone.json`, when it has one.
pub(crate) fn zone_of<'a>(part: &Part<'a>) -> Option<&'a ProductZoneRun> {
    part.run
        .zone
        .as_ref()?
        .products
        .iter()
        .find(|p| p.product == part.name)
}

/// The text and table of the zone; the pictures are added by the caller as figures.
pub(crate) fn zone_table(part: &Part, zone: &ProductZoneRun) -> Html {
    let pct = |v: Option<f64>| v.map_or("—".to_string(), |v| format!("{:.0} %", 100.0 * v));
    let mut h = Html::new();
    h.raw("<p>Where each detector sees a walker, at the operating threshold this run calibrated for it (its first target). Walkers enter the floor of the room named here along straight walks, toward the sensor (approach: radial, the full Doppler of the walking speed) or across its view (cross: tangential, little Doppler but the limbs'), with speeds and heights drawn per walk; each walk is a trial of its own, with the room's noise and nuisances. A cell's probability is that of a walker passing through the disc about the cell's centre (radius half the cell diagonal) having been detected by the time it left the disc, with its Clopper–Pearson interval in <code>zone.csv</code>; the floor areas count the cells with the planned number of walkers at that probability or above. The first-detection range is measured on the floor from the sensor. The thresholds are the product's, set by its worst nuisance room: a zone drawn in a quiet room is what a detector held quiet in the noisiest room still sees.</p>");
    h.open("p", &[]).text(&format!(
        "{} walks through the room of `{}`.",
        zone.walks_run, zone.scene
    ));
    h.close("p");
    h.raw("<div class=\"wide\">").open(
        "table",
        &[
            ("class", "grid zone"),
            ("id", &part.id("zone-table")),
            ("data-check", "zone"),
            ("data-rows", &zone.detectors.len().to_string()),
        ],
    );
    let kinds: Vec<String> = zone
        .detectors
        .first()
        .map(|d| d.figures.iter().map(|f| f.kind.clone()).collect())
        .unwrap_or_default();
    h.raw("<thead><tr>")
        .element("th", &[("scope", "col")], "detector")
        .element("th", &[("scope", "col")], "threshold");
    for kind in &kinds {
        for column in [
            "walks detected",
            "floor P ≥ 0.9, m²",
            "floor P ≥ 0.5, m²",
            "median first range, m",
        ] {
            h.element("th", &[("scope", "col")], &format!("{kind}: {column}"));
        }
    }
    h.raw("</tr></thead><tbody>");
    for d in &zone.detectors {
        let index = part
            .detectors
            .iter()
            .position(|(s, _)| s.label == d.label)
            .unwrap_or(0);
        h.raw("<tr><th scope=\"row\">")
            .push(&detector_cell(index, &d.label))
            .raw("</th>");
        h.element(
            "td",
            &[("class", "cell")],
            &crate::plot::format_number(d.threshold, 4),
        );
        for kind in &kinds {
            match d.figures.iter().find(|f| &f.kind == kind) {
                Some(f) => {
                    for cell in [
                        format!(
                            "{} [{}, {}]",
                            pct(f.detected_fraction),
                            pct(f.detected_low),
                            pct(f.detected_high)
                        ),
                        format!("{:.1}", f.area_p90_m2),
                        format!("{:.1}", f.area_p50_m2),
                        f.median_first_range_m
                            .map_or("—".into(), |r| format!("{r:.1}")),
                    ] {
                        h.element("td", &[("class", "cell")], &cell);
                    }
                }
                None => {
                    for _ in 0..4 {
                        h.element("td", &[("class", "cell")], "—");
                    }
                }
            }
        }
        h.raw("</tr>");
    }
    h.raw("</tbody></table></div>");
    let failed: Vec<String> = zone
        .detectors
        .iter()
        .filter(|d| d.failed_walks > 0)
        .map(|d| {
            format!(
                "{} failed on {} walks (not counted)",
                d.label, d.failed_walks
            )
        })
        .collect();
    if !failed.is_empty() {
        h.raw("<ol class=\"notes\">");
        for note in &failed {
            h.element("li", &[], note);
        }
        h.raw("</ol>");
    }
    h
}

/// The pictures of the zone of one `view` kind (`overview`, or else each detector's), in
/// `zone.json`'s order: (SVG text, caption).
pub(crate) fn zone_pictures<'a>(
    part: &Part<'a>,
    zone: &ProductZoneRun,
    overview: bool,
) -> Vec<(&'a str, Html)> {
    zone.pictures
        .iter()
        .filter(|p| (p.view == "overview") == overview)
        .filter_map(|p| {
            let svg = part.run.zone_pictures.get(&p.file)?;
            let caption = if p.view == "overview" {
                Html::filled(
                    "Every detector's zone for {} walks, side by side: each cell shaded by the probability that a walker passing it had been detected by the time it left the cell's disc (grey: fewer walkers than planned), the sensor (dot) and the beam's −3 dB two-way outline ({}).",
                    &[&p.kind, &p.file],
                )
            } else if p.view == "side" {
                Html::filled(
                    "{}, {} walks, side view: height against range of the first detections, with the beam's outline ({}).",
                    &[&p.detector, &p.kind, &p.file],
                )
            } else {
                Html::filled(
                    "{}, {} walks: each cell shaded by the probability that a walker passing it had been detected by the time it left the cell's disc (hatched: fewer walkers than planned); dots: where walkers were first detected; lines: the beam's −3 dB and −10 dB two-way outline at the stated height ({}).",
                    &[&p.detector, &p.kind, &p.file],
                )
            };
            Some((svg.as_str(), caption))
        })
        .collect()
}
