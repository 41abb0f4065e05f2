//! The report built from a small real run: every section present, every plot drawn, text
//! escaped, the same bytes for the same inputs, and the curves equal to the harness's own
//! tables.

mod common;

use common::{has_drawn_data, small_run, svgs};
use echobench_harness::runner::{Tallies, SCHEMA_VERSION};
use echobench_report::{grid_roc, render_html, trial_roc, RunFileError, RunFolder, Section};
use std::path::{Path, PathBuf};

fn write_json<T: serde::Serialize>(path: &Path, value: &T) -> std::io::Result<()> {
    std::fs::write(path, echobench_render::json::json_bytes(value)?)
}

fn write_roc_csv(path: &Path, tallies: &Tallies) -> std::io::Result<()> {
    let mut bytes = Vec::new();
    echobench_render::csv_files::write_roc(&mut bytes, tallies)?;
    std::fs::write(path, bytes)
}

fn scratch(name: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join(format!("report-test-{name}"));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn write_folder(run: &RunFolder, name: &str, with_timing: bool) -> PathBuf {
    let dir = scratch(name);
    write_json(&dir.join("summary.json"), &run.summary).unwrap();
    write_json(&dir.join("tallies.json"), &run.tallies).unwrap();
    if with_timing {
        write_json(&dir.join("timing.json"), run.timing.as_ref().unwrap()).unwrap();
    }
    std::fs::write(dir.join("suite.yaml"), run.suite_text.as_ref().unwrap()).unwrap();
    dir
}

/// The page's own sections and those of the (only) product's part, `p1-…`.
const SECTION_IDS: [&str; 16] = [
    "cautions",
    "p1-product",
    "p1-ranking",
    "p1-detection",
    "p1-detection-table",
    "p1-false-alarm-rooms",
    "p1-false-alarm-table",
    "p1-event-roc",
    "p1-trial-roc",
    "p1-sweeps",
    "p1-latency",
    "p1-false-alarms",
    "p1-cost",
    "p1-cfar",
    "p1-failures",
    "suite",
];

#[test]
fn every_section_is_present_and_every_plot_draws_data() {
    let run = small_run();
    let html = render_html(run, None, &[]);
    for id in SECTION_IDS {
        assert!(
            html.contains(&format!("id=\"{id}\"")),
            "section {id} missing"
        );
    }
    assert!(
        !html.contains("id=\"p1-baseline\""),
        "no baseline section without a baseline"
    );
    let plots = svgs(&html);
    // Event ROC, trial ROC, one sweep, latency, false alarms by nuisance.
    assert_eq!(plots.len(), 5, "plots: {}", plots.len());
    for (i, svg) in plots.iter().enumerate() {
        assert!(
            svg.starts_with("<svg class=\"plot\""),
            "plot {i} says it is empty: {}",
            &svg[..svg.len().min(300)]
        );
        assert!(has_drawn_data(svg), "plot {i} drew no data");
    }
    // Header facts and the decision rule.
    assert!(html.contains("report-test") && html.contains("4242"));
    assert!(html.contains("alarm when score ≥ threshold"));
    assert!(html.contains("hold 1 s"));
    assert!(html.contains("0.5 s before an event") && html.contains("2 s after its end"));
    // The cautions, prominently, before the first section.
    let cautions_at = html.find("id=\"cautions\"").unwrap();
    assert!(cautions_at < html.find("id=\"p1-ranking\"").unwrap());
    assert!(html.contains(&run.summary.cautions));
    assert!(html.contains("Simulated results do not certify a product"));
    assert!(html.contains("Radio rules"));
    // The swept field and its unit label the sweep plot.
    assert!(html.contains("actors[0].path.start_m[0] (m)"));
    // They come from the tallies, not from the suite text: the same without it.
    let mut without_suite = run.clone();
    without_suite.suite_text = None;
    let bare = render_html(&without_suite, None, &[]);
    assert!(bare.contains("actors[0].path.start_m[0] (m)"));
    assert!(bare.contains("corridor-walker</code> @ 2 m"));
    // Tallies written before they carried the field still load; the axis is then unnamed.
    let mut value = serde_json::to_value(&run.tallies).unwrap();
    for detector in value["detectors"].as_array_mut().unwrap() {
        for variant in detector["variants"].as_array_mut().unwrap() {
            let fields = variant.as_object_mut().unwrap();
            assert!(
                fields.remove("sweep_field").is_some() && fields.remove("sweep_unit").is_some()
            );
        }
    }
    let mut old = without_suite;
    old.tallies = serde_json::from_value(value).unwrap();
    let old_html = render_html(&old, None, &[]);
    assert!(!old_html.contains("start_m[0] (m)") && old_html.contains("swept value"));
    // Every detector appears in the parameters table, with its parameters.
    for d in &run.summary.detectors {
        assert!(html.contains(&format!("{}</span>", d.label)), "{}", d.label);
        for k in d.params.keys() {
            assert!(html.contains(&format!("<code>{k}</code>")), "{k}");
        }
    }
    // Nothing is fetched from outside.
    for outside in ["http://", "https://", "<link", "@import", "src="] {
        let count = html.matches(outside).count();
        let allowed = if outside == "http://" { plots.len() } else { 0 };
        assert_eq!(count, allowed, "{outside} appears {count} times");
    }
}

#[test]
fn text_from_the_run_is_escaped() {
    let run = small_run();
    let html = render_html(run, None, &[]);
    assert!(
        !html.contains("<script>alert("),
        "the suite text is inserted raw"
    );
    assert!(html.contains("&lt;script&gt;alert(&quot;not escaped&quot;)&lt;/script&gt; &amp; more"));
    // Exactly the page's own two scripts.
    assert_eq!(html.matches("<script>").count(), 2);
    let extra = Section::new("Gate <verdict>", "<p id=\"gate-body\">pass</p>");
    let html = render_html(run, None, &[extra]);
    assert!(html.contains("Gate &lt;verdict&gt;"));
    assert!(
        html.contains("<p id=\"gate-body\">pass</p>"),
        "extra HTML goes in as given"
    );
    // Extra sections of the whole run come right after the cautions, before the products.
    let extra_at = html.find("gate-body").unwrap();
    assert!(html.find("id=\"cautions\"").unwrap() < extra_at);
    assert!(extra_at < html.find("id=\"p1-product\"").unwrap());
}

#[test]
fn the_same_inputs_give_the_same_bytes_through_the_files() {
    let run = small_run();
    let first = render_html(run, None, &[]);
    assert_eq!(first, render_html(run, None, &[]));
    let dir = write_folder(run, "bytes", true);
    let loaded = RunFolder::load(&dir).unwrap();
    assert_eq!(
        render_html(&loaded, None, &[]),
        first,
        "loading the files changes nothing"
    );
}

#[test]
fn the_event_roc_is_the_roc_csv_and_the_trial_auc_the_summary() {
    let run = small_run();
    let dir = scratch("roc");
    write_roc_csv(&dir.join("roc.csv"), &run.tallies).unwrap();
    let text = std::fs::read_to_string(dir.join("roc.csv")).unwrap();
    let mut rows = text.lines().skip(1);
    for d in &run.tallies.detectors {
        for point in grid_roc(d) {
            let row: Vec<&str> = rows
                .next()
                .expect("a row per grid threshold")
                .split(',')
                .collect();
            // product, detector, threshold, events, detected, pd, …, false_alarms_per_hour
            assert_eq!((row[0], row[1]), (d.product.as_str(), d.label.as_str()));
            assert_eq!(row[2].parse::<f64>().unwrap(), point.threshold);
            let parse = |s: &str| (!s.is_empty()).then(|| s.parse::<f64>().unwrap());
            assert_eq!(parse(row[5]), point.pd, "{} pd", d.label);
            assert_eq!(
                parse(row[10]),
                point.false_alarms_per_hour,
                "{} fa/h",
                d.label
            );
        }
    }
    assert!(rows.next().is_none());
    for (d, tally) in run.summary.detectors.iter().zip(&run.tallies.detectors) {
        let roc = trial_roc(tally);
        assert_eq!(roc.as_ref().map(|r| r.auc), d.trial_auc, "{}", d.label);
        assert_eq!(roc.and_then(|r| r.auc_se), d.trial_auc_se, "{}", d.label);
    }
}

#[test]
fn ranking_failures_cost_and_cfar_say_what_they_should() {
    let run = small_run();
    let html = render_html(run, None, &[]);
    let flaky = run
        .summary
        .detectors
        .iter()
        .find(|d| d.label == "flaky")
        .unwrap();
    assert!(
        !flaky.failures.is_empty(),
        "the flaky detector failed somewhere"
    );
    assert!(html.contains(&format!("failed on {} trials", flaky.failures.len())));
    assert!(html.contains(&flaky.failures[0].message.replace('"', "&quot;")));
    // Ranking: stated rule, each target.
    assert!(
        html.contains("ranked by detection probability Pd (higher first), then by median latency")
    );
    assert!(html.contains("Target 10/h") && html.contains("Target 1/h"));
    // Cost: measured and declared.
    assert!(html.contains(" ns</td>"), "a measured time per sample");
    assert!(html.contains("16 B"), "the flaky plugin's declared state");
    // CFAR nominal against measured.
    let cfar = run
        .summary
        .detectors
        .iter()
        .find(|d| d.label == "ca-cfar")
        .unwrap();
    assert!(cfar.nominal.is_some());
    let cfar_section =
        &html[html.find("id=\"p1-cfar\"").unwrap()..html.find("id=\"p1-failures\"").unwrap()];
    assert!(cfar_section.contains("ca-cfar") && cfar_section.contains("Clopper–Pearson"));
}

#[test]
fn a_merged_run_without_timing_says_not_measured() {
    let run = small_run();
    let dir = write_folder(run, "merged", false);
    let loaded = RunFolder::load(&dir).unwrap();
    assert!(loaded.timing.is_none());
    let html = render_html(&loaded, None, &[]);
    let cost = &html[html.find("id=\"p1-cost\"").unwrap()..html.find("id=\"p1-cfar\"").unwrap()];
    assert_eq!(
        cost.matches("<td class=\"num\">not measured</td>").count(),
        2 * run.summary.detectors.len()
    );
    assert!(cost.contains("no <code>timing.json</code>"));
}

#[test]
fn a_baseline_adds_the_comparison_and_dashed_curves() {
    let run = small_run();
    let html = render_html(run, Some(run), &[]);
    assert!(html.contains("id=\"p1-baseline\""));
    let plots = svgs(&html);
    // Five plots of the run, one small ROC per detector against the baseline.
    assert_eq!(plots.len(), 5 + run.summary.detectors.len());
    for svg in &plots[5..] {
        assert!(
            svg.contains("stroke-dasharray=\"7 4\"/>"),
            "a dashed baseline curve"
        );
        assert!(has_drawn_data(svg));
    }
    let section = &html[html.find("id=\"p1-baseline\"").unwrap()..];
    for d in &run.summary.detectors {
        assert!(section.contains(&format!("{}</span>", d.label)));
    }
}

#[test]
fn loading_names_the_file_and_refuses_other_schemas() {
    let empty = scratch("empty");
    let err = RunFolder::load(&empty).unwrap_err();
    assert!(matches!(err, RunFileError::Missing { .. }));
    assert!(err.to_string().contains("summary.json"), "{err}");

    let run = small_run();
    let dir = write_folder(run, "old-schema", true);
    let mut value: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("summary.json")).unwrap()).unwrap();
    value["schema"] = serde_json::json!(SCHEMA_VERSION + 7);
    std::fs::write(dir.join("summary.json"), value.to_string()).unwrap();
    let err = RunFolder::load(&dir).unwrap_err();
    assert!(matches!(err, RunFileError::Schema { .. }), "{err}");
    let message = err.to_string();
    assert!(
        message.contains("summary.json")
            && message.contains(&format!("schema {}", SCHEMA_VERSION + 7)),
        "{message}"
    );

    std::fs::write(dir.join("summary.json"), "{ not json").unwrap();
    let err = RunFolder::load(&dir).unwrap_err();
    assert!(matches!(err, RunFileError::Parse { .. }) && err.to_string().contains("summary.json"));

    // Summary and tallies of different runs.
    let dir = write_folder(run, "mismatch", true);
    let mut other = run.summary.clone();
    other.seed += 1;
    write_json(&dir.join("summary.json"), &other).unwrap();
    let err = RunFolder::load(&dir).unwrap_err();
    assert!(matches!(err, RunFileError::Mismatch { .. }), "{err}");
}

#[test]
fn an_empty_run_renders_and_says_why_plots_are_empty() {
    // Only nuisance scenes: no target events, no Pd, no latency, no trial-level ROC.
    let text = common::SUITE;
    let start = text.find("  - id: desk-fan-room").unwrap();
    let nuisance_only = format!(
        "{}{}",
        &text[..text.find("  - id: corridor-walker").unwrap()],
        &text[start..]
    );
    let run = common::run_text(&nuisance_only);
    let html = render_html(&run, None, &[]);
    // No target scene, so no detection table.
    for id in SECTION_IDS.iter().filter(|id| **id != "p1-detection-table") {
        assert!(
            html.contains(&format!("id=\"{id}\"")),
            "section {id} missing"
        );
    }
    let plots = svgs(&html);
    for svg in &plots {
        let empty = svg.starts_with("<svg class=\"plot empty\"");
        assert!(
            empty || has_drawn_data(svg),
            "a plot is neither drawn nor marked empty"
        );
        if empty {
            assert!(svg.contains("data-empty=\""));
        }
    }
    assert!(html.contains("no target events"));
    assert!(html.contains("No scene of this product has a sweep."));
    assert!(html.contains("This product has no target scene."));
}

#[test]
fn bad_numbers_do_not_panic() {
    let mut run = small_run().clone();
    run.summary.hold_s = f64::NAN;
    run.summary.test_signal_hours = f64::INFINITY;
    for d in &mut run.summary.detectors {
        d.trial_auc = Some(f64::NAN);
        for op in &mut d.operating_points {
            op.threshold = f64::NAN;
            op.target_false_alarms_per_hour = 0.0;
            op.outcome.pd.value = Some(f64::NAN);
            op.outcome.false_alarms_per_hour.high = Some(f64::INFINITY);
            op.latency_median_s = Some(f64::NEG_INFINITY);
            for s in &mut op.by_scene {
                s.outcome.pd.low = Some(f64::NAN);
                s.outcome.false_alarms_per_hour.high = Some(f64::INFINITY);
                s.outcome.exposure_hours = f64::NAN;
                s.latency_median_s = Some(f64::INFINITY);
                s.false_on_s = f64::NAN;
            }
            for r in &mut op.calibration_rooms {
                r.exposure_hours = f64::INFINITY;
                r.false_alarms_per_hour.value = Some(f64::NAN);
            }
        }
    }
    for d in &mut run.tallies.detectors {
        d.thresholds.iter_mut().for_each(|t| *t = f64::NAN);
        for v in &mut d.variants {
            v.max_scores.iter_mut().for_each(|s| s.1 = f64::NAN);
            v.exposure_ns = 0;
        }
    }
    if let Some(t) = &mut run.timing {
        t.samples = 0;
        t.detector_s.values_mut().for_each(|s| *s = f64::NAN);
    }
    let html = render_html(&run, Some(&run), &[]);
    for svg in svgs(&html) {
        assert!(svg.starts_with("<svg class=\"plot empty\"") || has_drawn_data(svg));
        for bad in ["NaN", "inf"] {
            if let Some(at) = svg.find(bad) {
                panic!(
                    "a bad number reached the SVG: …{}…",
                    &svg[at.saturating_sub(200)..(at + 50).min(svg.len())]
                );
            }
        }
    }
    assert!(html.contains("not measured"));
    // Nor the per-product tables.
    for id in ["p1-detection-table", "p1-false-alarm-table"] {
        let at = html.find(&format!("id=\"{id}\"")).unwrap();
        let table = &html[at..at + html[at..].find("</table>").unwrap()];
        for bad in ["NaN", "inf"] {
            assert!(!table.contains(bad), "{bad} in {id}: {table}");
        }
    }
}

/// Replaces `from` by `to` in every string value (not key) of a JSON tree.
fn rename_everywhere(value: &mut serde_json::Value, from: &str, to: &str) {
    match value {
        serde_json::Value::String(s) => *s = s.replace(from, to),
        serde_json::Value::Array(items) => {
            for item in items {
                rename_everywhere(item, from, to);
            }
        }
        serde_json::Value::Object(fields) => {
            for (_, item) in fields.iter_mut() {
                rename_everywhere(item, from, to);
            }
        }
        _ => {}
    }
}

#[test]
fn hostile_detector_labels_and_scene_names_are_escaped_everywhere() {
    // Every string the run carries (summary and tallies: detector labels and ids, scene ids,
    // room names, product names) gets markup, quotes and ampersands; the page must show them
    // as text wherever they appear: tables, headings, plot legends, titles and tooltips.
    let label = "energy<script>alert(\"label\")</script>&'x'";
    let scene = "desk-fan<b onmouseover=\"x\">&amp;'room'";
    let product = "report-test<i>\"p\"</i>";
    let run = small_run();
    let mut summary = serde_json::to_value(&run.summary).unwrap();
    let mut tallies = serde_json::to_value(&run.tallies).unwrap();
    for tree in [&mut summary, &mut tallies] {
        rename_everywhere(tree, "energy", label);
        rename_everywhere(tree, "desk-fan-room", scene);
        rename_everywhere(tree, "report-test", product);
    }
    let mut hostile = run.clone();
    hostile.summary = serde_json::from_value(summary).unwrap();
    hostile.tallies = serde_json::from_value(tallies).unwrap();
    let html = render_html(&hostile, None, &[]);
    for raw in [
        "<script>alert",
        "(\"label\")",
        "&'x'",
        "<b onmouseover",
        "=\"x\">",
        "&amp;'room'",
        "<i>\"p\"",
    ] {
        assert!(!html.contains(raw), "{raw:?} reached the page unescaped");
    }
    // Exactly the page's own two scripts.
    assert_eq!(html.matches("<script").count(), 2);
    // And the names are there, escaped, in text and in the plots.
    let label_text = "energy&lt;script&gt;alert(&quot;label&quot;)&lt;/script&gt;&amp;&#39;x&#39;";
    let scene_text = "desk-fan&lt;b onmouseover=&quot;x&quot;&gt;&amp;amp;&#39;room&#39;";
    assert!(html.matches(label_text).count() >= 10);
    assert!(html.matches(scene_text).count() >= 3);
    assert!(html.contains("report-test&lt;i&gt;&quot;p&quot;&lt;/i&gt;"));
    let in_plots: usize = svgs(&html)
        .iter()
        .map(|s| s.matches(label_text).count())
        .sum();
    assert!(in_plots >= 3, "{in_plots} in plots");
}

#[test]
fn a_rare_event_gets_its_own_table_and_is_not_a_room() {
    let door = r#"  - id: fire-door
    label: nuisance
    occurrences_per_day: 6
    trials: 12
    scene:
      duration_s: 6
      sensor:
        carrier_hz: 2.45e9
        sample_rate_hz: 2000
        output: real
        position_m: [0, 0, 2.5]
        azimuth_deg: 0
        elevation_deg: -10
        beam_azimuth_3db_deg: 80
        beam_elevation_3db_deg: 40
        front_end:
          high_pass_hz: [0.5]
          low_pass_hz: [100, 100]
          gain_db: 60
          rails_v: [0, 3.3]
        adc: {bits: 12, full_scale_v: 3.3}
      coverage: {range_m: 16, azimuth_half_deg: 40}
      environment:
        white_noise_v_per_rthz: 30e-9
        flicker_corner_hz: 500
      actors:
        - {kind: door, id: door, hinge_m: [2, 0.8], closed_deg: 180, open_deg: 120, open_at_s: 1, swing_s: 1, close_at_s: 3}
"#;
    let text = common::SUITE.replace(
        "  - id: desk-fan-room\n",
        &format!("{door}  - id: desk-fan-room\n"),
    );
    let run = common::run_text(&text);
    let html = render_html(&run, None, &[]);
    let section = &html[html.find("id=\"p1-rare-events\"").expect("the section")..];
    let table = &section[..section.find("</table>").expect("a table")];
    assert!(table.contains("fire-door (6 per day)"), "{table}");
    assert!(table.contains("of 12 occurrences"), "{table}");
    assert!(table.contains(">total<"), "{table}");
    // Not a room: the false-alarm table by room lists the fan room only.
    let rooms = &html[html
        .find("id=\"p1-false-alarm-rooms\"")
        .expect("the rooms section")..];
    let rooms = &rooms[..rooms.find("</table>").expect("a table")];
    assert!(!rooms.contains("fire-door"), "{rooms}");
    // A run without rare events has no such section.
    assert!(!render_html(common::small_run(), None, &[]).contains("Rare events: false alarms"));
}
