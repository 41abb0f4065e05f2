//! The report of a suite with two products: one part per product, each with its own
//! detection table (target scene variants × detectors) and false-alarm table (rooms ×
//! detectors), the console's calibration statements, the harness's miss reasons, zeros that
//! stand out, product names escaped, extra sections placed in their product, and the
//! baseline matched by product and label.

mod common;

use common::{two_products_run, two_products_with_a_zero};
use echobench_render::console::console_table;
use echobench_report::{render_html, RunFolder, Section};

const P1: &str = "corridor-2g4";
const P2: &str = "ceiling <24g> & co";

/// The text between the first `start` and the next `end` after it.
fn between<'a>(text: &'a str, start: &str, end: &str) -> &'a str {
    let a = text
        .find(start)
        .unwrap_or_else(|| panic!("`{start}` not found"));
    let b = text[a..]
        .find(end)
        .map_or_else(|| panic!("`{end}` not found after `{start}`"), |b| a + b);
    &text[a..b]
}

/// The text of a piece of HTML: tags dropped, the five escapes undone.
fn plain(html: &str) -> String {
    let mut out = String::new();
    let mut in_tag = false;
    for c in html.chars() {
        match c {
            '<' => in_tag = true,
            '>' => in_tag = false,
            c if !in_tag => out.push(c),
            _ => {}
        }
    }
    out.replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&quot;", "\"")
        .replace("&#39;", "'")
        .replace("&amp;", "&")
}

/// The `<table …>…</table>` with this id.
fn table<'a>(html: &'a str, id: &str) -> &'a str {
    between(html, &format!(" id=\"{id}\""), "</table>")
}

/// Row headings of a table, as text.
fn row_names(table: &str) -> Vec<String> {
    table
        .split("<th scope=\"row\">")
        .skip(1)
        .map(|rest| plain(&rest[..rest.find("</th>").unwrap()]))
        .collect()
}

/// Column headings of a table, as text.
fn column_names(table: &str) -> Vec<String> {
    let head = &between(table, "<thead>", "</thead>")["<thead>".len()..];
    head.split("<th")
        .skip(1)
        .map(|rest| {
            let body = &rest[rest.find('>').unwrap() + 1..];
            plain(&body[..body.find("</th>").unwrap()])
        })
        .collect()
}

/// The cells of the row named `row`, in column order, each from its `<td`.
fn row_cells(table: &str, row: &str) -> Vec<String> {
    let tr = table
        .split("<tr>")
        .find(|tr| {
            tr.starts_with("<th scope=\"row\">")
                && row_names(tr).first().map(String::as_str) == Some(row)
        })
        .unwrap_or_else(|| panic!("no row `{row}`"));
    tr.split("<td")
        .skip(1)
        .map(|cell| format!("<td{cell}"))
        .collect()
}

/// Each product's part of the page.
fn parts(html: &str) -> (&str, &str) {
    let p1 = between(html, "id=\"p1-product\"", "id=\"p2-product\"");
    let p2 = between(html, "id=\"p2-product\"", "id=\"suite\"");
    (p1, p2)
}

#[test]
fn each_product_has_its_part_with_a_detection_and_a_false_alarm_table() {
    let run = two_products_run();
    assert_eq!(run.summary.products.len(), 2);
    let html = render_html(run, None, &[]);
    let (p1, p2) = parts(&html);
    // Headings name the product, escaped; the description is text, not markup.
    assert!(
        p1.contains("data-product=\"corridor-2g4\"")
            && p1.contains("<h2>Product <code>corridor-2g4</code></h2>")
    );
    assert!(p2.contains("data-product=\"ceiling &lt;24g&gt; &amp; co\""));
    assert!(p2.contains("<h2>Product <code>ceiling &lt;24g&gt; &amp; co</code></h2>"));
    assert!(!html.contains("<24g>") && !html.contains("<b>not bold</b>"));
    assert!(p2.contains("Ceiling module &lt;b&gt;not bold&lt;/b&gt; &amp; friends."));
    assert!(p1.contains("2.450 GHz carrier, 2000 Hz sampling, real output"));
    assert!(p2.contains("24.125 GHz carrier, 2000 Hz sampling, real output"));

    let columns = ["target scene", "energy", "band-ratio"];
    let expect = [
        (
            p1,
            "p1",
            vec!["corridor-walker @ 2 m", "corridor-walker @ 6 m"],
            vec!["desk-fan-room", "quiet-corridor"],
        ),
        (
            p2,
            "p2",
            vec!["office-approach", "seated-reader"],
            vec!["empty-lab", "fan-lounge"],
        ),
    ];
    for (k, (part, prefix, targets, rooms)) in expect.iter().enumerate() {
        let product = &run.summary.products[k];
        let detection = table(part, &format!("{prefix}-detection-table"));
        assert_eq!(row_names(detection), *targets, "{prefix} detection rows");
        assert_eq!(
            column_names(detection),
            columns,
            "{prefix} detection columns"
        );
        assert!(detection.contains("data-rows=\"2\" data-columns=\"3\""));
        // The rows are the product's target scene variants, as the summary names them.
        let without_unit: Vec<String> = targets
            .iter()
            .map(|t| t.trim_end_matches(" m").to_string())
            .collect();
        assert_eq!(without_unit, product.target_scenes);
        let false_alarms = table(part, &format!("{prefix}-false-alarm-table"));
        assert_eq!(row_names(false_alarms), *rooms, "{prefix} rooms");
        assert_eq!(column_names(false_alarms), ["room", "energy", "band-ratio"]);
        assert_eq!(*rooms, product.nuisance_scenes);
        // The other rates' tables are there, folded.
        assert!(part.contains(&format!("id=\"{prefix}-detection-table-2\"")));
        assert!(part.contains(&format!("id=\"{prefix}-false-alarm-table-2\"")));
        assert!(part.contains("<summary>Detection table at 1/h</summary>"));

        // Each cell is the summary's numbers for that detector and variant at the first rate.
        for d in run
            .summary
            .detectors
            .iter()
            .filter(|d| d.product == product.name)
        {
            let column = columns.iter().position(|c| *c == d.label).unwrap() - 1;
            let op = &d.operating_points[0];
            for s in &op.by_scene {
                let name = match &s.sweep_value {
                    Some(v) => format!("{} @ {v} m", s.scene),
                    None => s.scene.clone(),
                };
                let within = if s.label == "target" {
                    detection
                } else {
                    false_alarms
                };
                let cell = plain(&row_cells(within, &name)[column]);
                let o = &s.outcome;
                if s.label == "target" && o.events > 0 {
                    // Pd, its interval, then detected/events · median latency.
                    let pd = format!(
                        "{:.2}[{:.2}, {:.2}]{}/{} · ",
                        o.pd.value.unwrap(),
                        o.pd.low.unwrap(),
                        o.pd.high.unwrap(),
                        o.detected,
                        o.events
                    );
                    assert!(
                        cell.starts_with(&pd),
                        "{name}/{}: `{cell}` does not start with {pd}",
                        d.label
                    );
                } else if s.label == "target" {
                    assert!(cell.starts_with("no event"), "{cell}");
                } else {
                    assert!(
                        cell.contains(&format!("test {} in", o.false_alarms)),
                        "{cell}"
                    );
                    assert!(cell.contains("cal. "), "{cell}");
                    let limiting = op.limiting_room.as_deref() == Some(name.as_str());
                    assert_eq!(
                        cell.contains("★ set threshold"),
                        limiting,
                        "{name}/{}",
                        d.label
                    );
                }
            }
            // The room that set the threshold is marked once per detector (worst-room rule).
            if let Some(room) = &op.limiting_room {
                assert!(rooms.contains(&room.as_str()), "{room}");
            }
        }
        let marks = false_alarms.matches("★ set threshold").count();
        let limited = run
            .summary
            .detectors
            .iter()
            .filter(|d| d.product == product.name && d.operating_points[0].limiting_room.is_some())
            .count();
        assert_eq!(marks, limited, "{prefix}");
    }
    // A part holds only its own product's scenes.
    assert!(!p1.contains("office-approach") && !p1.contains("fan-lounge"));
    assert!(!p2.contains("corridor-walker") && !p2.contains("desk-fan-room"));
    // The seated reader only breathes: no event to detect, said in the cell and under the table.
    let detection = table(p2, "p2-detection-table");
    assert_eq!(detection.matches("class=\"cell no-event\"").count(), 2);
    let reasons: Vec<_> = run
        .summary
        .miss_reasons
        .iter()
        .filter(|r| r.product == P2)
        .collect();
    assert_eq!(reasons.len(), 2, "the harness explains both no-event cells");
    // Each reason once, with the cells it explains, grouped by scene variant.
    let why = between(p2, "<ol class=\"why-list\">", "</ol>");
    let mut texts: Vec<&str> = reasons.iter().map(|r| r.reason.as_str()).collect();
    texts.dedup();
    assert_eq!(why.matches("<li ").count(), texts.len());
    let cells: Vec<&str> = reasons.iter().map(|r| r.detector.as_str()).collect();
    for r in &reasons {
        let line = format!("{} — {}: {}", r.reason, r.scene, cells.join(", "));
        assert!(plain(why).contains(&line), "{} lacks {line}", plain(why));
    }
    // Both cells point at it.
    assert_eq!(
        detection
            .matches("href=\"#p2-detection-table-why-1\"")
            .count(),
        2
    );
    // Every section of a part is its own: ids carry the part's number.
    for id in [
        "ranking",
        "detection",
        "false-alarm-rooms",
        "event-roc",
        "trial-roc",
        "sweeps",
        "latency",
        "false-alarms",
        "cost",
        "cfar",
        "failures",
        "parameters",
    ] {
        assert!(p1.contains(&format!("id=\"p1-{id}\"")), "p1-{id}");
        assert!(p2.contains(&format!("id=\"p2-{id}\"")), "p2-{id}");
    }
    // Only product 1 has a sweep.
    assert!(p2.contains("No scene of this product has a sweep."));
    assert!(p1.contains("actors[0].path.start_m[0] (m)"));
}

#[test]
fn the_product_heading_makes_the_consoles_calibration_statements() {
    let run = two_products_run();
    let html = render_html(run, None, &[]);
    let console = console_table(&run.summary, None);
    let (p1, p2) = parts(&html);
    for part in [p1, p2] {
        let list = between(part, "<ul class=\"statements\">", "</ul>");
        let statements: Vec<String> = list
            .split("<li")
            .skip(1)
            .map(|item| plain(&format!("<li{item}")))
            .collect();
        // The rule, each target rate, and the rooms that set the thresholds.
        assert_eq!(statements.len(), 1 + 2 + 1, "{statements:?}");
        for s in &statements {
            assert!(console.contains(s), "the console does not say: {s}");
        }
        assert!(part.contains("<dd>met in every room (worst room)</dd>"));
    }
    // Unresolved rates are flagged in the heading and in the cautions.
    let unresolved = run.summary.detectors[0]
        .operating_points
        .iter()
        .filter(|o| !o.resolved)
        .count();
    assert_eq!(p1.matches("<li class=\"bad\">").count(), unresolved);
    let cautions = between(&html, "id=\"cautions\"", "</aside>");
    assert!(cautions.contains("Product `corridor-2g4`: the calibration cannot resolve"));
    assert!(
        cautions.contains("Product `ceiling &lt;24g&gt; &amp; co`: the calibration cannot resolve")
    );
}

#[test]
fn a_zero_stands_out_and_its_reason_is_escaped() {
    let run = two_products_with_a_zero();
    let html = render_html(&run, None, &[]);
    let (p1, _) = parts(&html);
    let detection = table(p1, "p1-detection-table");
    assert_eq!(detection.matches("class=\"cell zero\"").count(), 1);
    let zero = &row_cells(detection, "corridor-walker @ 6 m")[0];
    assert!(zero.starts_with("<td class=\"cell zero\""), "{zero}");
    assert!(
        zero.contains("<strong>0.00</strong>")
            && zero.contains("out of range <a href=\"#p1-detection-table-why-1\">[1]</a>")
    );
    let why = between(p1, "<ol class=\"why-list\">", "</ol>");
    assert!(why.contains("id=\"p1-detection-table-why-1\""));
    assert!(why.contains("out of range: too weak &lt;at&gt; 6 m &amp; beyond"));
    assert!(!html.contains("<at>"));
    // The room above the target stands out.
    let false_alarms = table(p1, "p1-false-alarm-table");
    assert!(row_cells(false_alarms, "quiet-corridor")[0].starts_with("<td class=\"cell over"));
    // Untouched: the other product has no zero.
    assert_eq!(html.matches("class=\"cell zero\"").count(), 1);
}

#[test]
fn extra_sections_go_to_their_product_and_baselines_match_by_product() {
    let run = two_products_run();
    let extra = [
        Section::new("Run-wide note", "<p id=\"run-note\">x</p>"),
        Section::for_product(P2, "Gallery", "<p id=\"gallery-2\">pictures</p>"),
        Section::for_product("no-such-product", "Stray", "<p id=\"stray\">y</p>"),
    ];
    let html = render_html(run, None, &extra);
    let (p1, p2) = parts(&html);
    let before_parts = &html[..html.find("id=\"p1-product\"").unwrap()];
    assert!(before_parts.contains("id=\"run-note\""));
    assert!(before_parts.contains("Stray (product `no-such-product`, not in this run)"));
    assert!(!p1.contains("gallery-2"));
    // After the product's tables, before its plots.
    let at = p2
        .find("gallery-2")
        .expect("the gallery is in its product's part");
    assert!(p2.find("id=\"p2-false-alarm-rooms\"").unwrap() < at);
    assert!(at < p2.find("id=\"p2-event-roc\"").unwrap());
    assert!(html.contains("<a href=\"#p2-extra-2\">Gallery</a>"));

    // A baseline whose second product has another name: the first product is compared,
    // the second says its detectors are only in this run.
    let mut baseline: RunFolder = run.clone();
    for d in &mut baseline.summary.detectors {
        if d.product == P2 {
            d.product = "renamed".into();
        }
    }
    for d in &mut baseline.tallies.detectors {
        if d.product == P2 {
            d.product = "renamed".into();
        }
    }
    let html = render_html(run, Some(&baseline), &[]);
    let (p1, p2) = parts(&html);
    let b1 = between(p1, "id=\"p1-baseline\"", "id=\"p1-failures\"");
    let b2 = between(p2, "id=\"p2-baseline\"", "id=\"p2-failures\"");
    assert_eq!(
        common::svgs(b1).len(),
        2,
        "one small ROC per matched detector"
    );
    assert!(!b1.contains("Only in"));
    assert_eq!(common::svgs(b2).len(), 0);
    assert!(b2.contains("Only in this run: energy, band-ratio."));
}

#[test]
fn the_same_two_product_run_gives_the_same_bytes() {
    let run = two_products_run();
    let first = render_html(run, Some(run), &[]);
    assert_eq!(first, render_html(&run.clone(), Some(run), &[]));
    // Summary and tallies must agree detector for detector, by product and label.
    assert!(run.check_consistent().is_ok());
    let mut other = run.clone();
    other.tallies.detectors[0].product = P2.into();
    let message = other.check_consistent().unwrap_err();
    assert!(
        message.contains("corridor-2g4/energy") && message.contains("ceiling <24g> & co/energy"),
        "{message}"
    );
    assert!(P1 != P2);
}
