//! The gate's report as text: the terminal table (pooled checks and regressions, or every
//! check), the Markdown summary for a pull-request comment and the JUnit XML document for CI.
//! The checks themselves, their numbers and verdicts, are `echobench_harness::gate`'s.

use echobench_harness::gate::{format_p, Check, ComparisonKey, GateReport, Metric, Verdict};
use quick_xml::events::{BytesDecl, BytesText, Event};
use quick_xml::Writer;
use std::borrow::Cow;
use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::io;

/// A plain-text table for the terminal: the pooled checks and every regression.
pub fn table(report: &GateReport) -> String {
    render_table(report, report.headline().collect())
}

/// A plain-text table of every check, per scene too.
pub fn full_table(report: &GateReport) -> String {
    render_table(report, report.checks.iter().collect())
}

fn render_table(report: &GateReport, checks: Vec<&Check>) -> String {
    let mut out = String::new();
    let header = [
        "detector",
        "check",
        "at /h",
        "group",
        "baseline",
        "candidate",
        "ratio",
        "bound",
        "p",
        "p (Holm)",
        "verdict",
    ];
    let rows: Vec<[String; 11]> = checks
        .iter()
        .map(|c| {
            [
                c.key.label(),
                c.metric.name().into(),
                format!("{}", c.target_per_hour),
                c.group.clone(),
                c.baseline.text.clone(),
                c.candidate.text.clone(),
                fmt_opt(c.ratio, 2),
                fmt_opt(c.bound, 3),
                format_p(c.p_value),
                format_p(c.adjusted_p),
                verdict_word(c.verdict).into(),
            ]
        })
        .collect();
    let mut widths: Vec<usize> = header.iter().map(|h| h.chars().count()).collect();
    for row in &rows {
        for (w, cell) in widths.iter_mut().zip(row) {
            *w = (*w).max(cell.chars().count());
        }
    }
    let line = |cells: &[&str]| {
        let mut l = String::new();
        for (cell, w) in cells.iter().zip(&widths) {
            let pad = w - cell.chars().count();
            let _ = write!(l, "{cell}{}  ", " ".repeat(pad));
        }
        l.trim_end().to_string() + "\n"
    };
    out += &line(&header);
    for row in &rows {
        out += &line(&row.iter().map(String::as_str).collect::<Vec<_>>());
    }
    footer(report, &mut out, false);
    out
}

fn footer(report: &GateReport, out: &mut String, markdown: bool) {
    let bullet = if markdown { "- " } else { "  " };
    let tested = report
        .checks
        .iter()
        .filter(|c| c.verdict != Verdict::NotTested)
        .count();
    let failed = report.regressions().count();
    let inconclusive = report.inconclusive().count();
    let _ = writeln!(
        out,
        "\n{} checks ({} tested), {} regression{}, {} inconclusive; rate margin ρ₀ = {}, α = {} (Holm within each detector and check){}",
        report.checks.len(),
        tested,
        failed,
        if failed == 1 { "" } else { "s" },
        inconclusive,
        report.settings.ratio_margin,
        report.settings.alpha,
        if report.paired { "; paired on the same seeds" } else { "" },
    );
    if let Some(budget) = report.settings.budget_per_hour {
        let _ = writeln!(
            out,
            "{bullet}budget {budget}/h: pass when the one-sided {:.0} % upper bound is under it, regression when the lower bound is over it (Holm across each detector's operating points), otherwise inconclusive{}",
            report.settings.budget_confidence * 100.0,
            if report.settings.require_conclusive {
                ", which fails the gate (--require-conclusive)"
            } else {
                ", which does not fail the gate"
            }
        );
    }
    if report.paired {
        let _ = writeln!(
            out,
            "{bullet}paired rows count the trials where only that run alarmed falsely (or missed an event)"
        );
    }
    for c in report.regressions() {
        let _ = writeln!(
            out,
            "{bullet}{}: {} at {}/h (threshold {}), {}: baseline {}, candidate {}; {} (p = {}, Holm {})",
            c.key.label(),
            c.metric.name(),
            c.target_per_hour,
            fmt_threshold(c.threshold),
            c.group,
            c.baseline.text,
            c.candidate.text,
            c.note,
            format_p(c.p_value),
            format_p(c.adjusted_p),
        );
    }
    for c in report.inconclusive() {
        let _ = writeln!(
            out,
            "{bullet}{}: {} at {}/h (threshold {}), {}: {}; {}",
            c.key.label(),
            c.metric.name(),
            c.target_per_hour,
            fmt_threshold(c.threshold),
            c.group,
            c.candidate.text,
            c.note,
        );
    }
    for n in &report.notes {
        let _ = writeln!(out, "{bullet}note: {n}");
    }
}

/// A Markdown summary for a pull-request comment.
pub fn markdown(report: &GateReport) -> String {
    let mut out = format!(
        "## echobench gate: {} — suite `{}`\n\n",
        report.verdict_words(),
        report.suite
    );
    out += "| detector | check | at /h | group | baseline | candidate | ratio | bound | p (Holm) | verdict |\n";
    out += "|---|---|---|---|---|---|---|---|---|---|\n";
    for c in report.headline() {
        let _ = writeln!(
            out,
            "| {} | {} | {} | {} | {} | {} | {} | {} | {} | {} |",
            md_escape(&c.key.label()),
            c.metric.name(),
            c.target_per_hour,
            md_escape(&c.group),
            c.baseline.text,
            c.candidate.text,
            fmt_opt(c.ratio, 2),
            fmt_opt(c.bound, 3),
            format_p(c.adjusted_p),
            match c.verdict {
                Verdict::Regression => "**REGRESSION**",
                Verdict::Inconclusive => "*inconclusive*",
                v => verdict_word(v),
            },
        );
    }
    footer(report, &mut out, true);
    out
}

/// A JUnit XML document: one test case per comparison key, metric and operating point; a
/// failing group makes its case fail, with every failing group in the message. A case
/// with an inconclusive check and no failure is skipped, its message naming the exposure
/// that would settle it (with `require_conclusive` too: the verdict is "cannot tell", the
/// exit status carries the policy).
///
/// Written by `quick-xml`'s writer, which escapes every attribute value and text; characters
/// XML 1.0 cannot carry at all (C0 controls other than tab, line feed and carriage return)
/// are replaced by spaces first ([`xml_chars`]).
pub fn junit_xml(report: &GateReport) -> String {
    type CaseKey = (ComparisonKey, Metric, String);
    let mut cases: BTreeMap<CaseKey, Vec<&Check>> = BTreeMap::new();
    let mut order: Vec<CaseKey> = Vec::new();
    for c in &report.checks {
        let key = (c.key.clone(), c.metric, format!("{}", c.target_per_hour));
        if !cases.contains_key(&key) {
            order.push(key.clone());
        }
        cases.entry(key).or_default().push(c);
    }
    let failures = order
        .iter()
        .filter(|k| cases[*k].iter().any(|c| c.verdict == Verdict::Regression))
        .count();
    let skip_reason = |group: &[&Check]| -> Option<String> {
        if group.iter().any(|c| c.verdict == Verdict::Regression) {
            return None;
        }
        let open: Vec<String> = group
            .iter()
            .filter(|c| c.verdict == Verdict::Inconclusive)
            .map(|c| format!("{}: {}", c.group, c.note))
            .collect();
        if !open.is_empty() {
            Some(open.join("; "))
        } else if group.iter().all(|c| c.verdict == Verdict::NotTested) {
            Some(group[0].note.clone())
        } else {
            None
        }
    };
    let skipped = order
        .iter()
        .filter(|k| skip_reason(&cases[*k]).is_some())
        .count();
    let case = |w: &mut Writer<Vec<u8>>, key: &CaseKey| -> io::Result<()> {
        let group = &cases[key];
        let (key, metric, target) = key;
        let classname = format!("echobench.gate.{}", key.junit_class());
        let name = format!("{} at {target}/h", metric.name());
        let (classname, name) = (xml_chars(&classname), xml_chars(&name));
        let element = w
            .create_element("testcase")
            .with_attributes([("classname", &*classname), ("name", &*name)]);
        let failing: Vec<&&Check> = group
            .iter()
            .filter(|c| c.verdict == Verdict::Regression)
            .collect();
        if !failing.is_empty() {
            let message = failing
                .iter()
                .map(|c| {
                    format!(
                        "{}: baseline {}, candidate {}, p (Holm) {}",
                        c.group,
                        c.baseline.text,
                        c.candidate.text,
                        format_p(c.adjusted_p)
                    )
                })
                .collect::<Vec<_>>()
                .join("; ");
            let detail = failing
                .iter()
                .map(|c| format!("{} — {}", c.group, c.note))
                .collect::<Vec<_>>()
                .join("\n");
            element.write_inner_content(|w| {
                w.create_element("failure")
                    .with_attributes([("type", "regression"), ("message", &*xml_chars(&message))])
                    .write_text_content(BytesText::new(&xml_chars(&detail)))?;
                Ok(())
            })?;
        } else if let Some(reason) = skip_reason(group) {
            element.write_inner_content(|w| {
                w.create_element("skipped")
                    .with_attribute(("message", &*xml_chars(&reason)))
                    .write_empty()?;
                Ok(())
            })?;
        } else {
            element.write_empty()?;
        }
        Ok(())
    };
    let mut w = Writer::new_with_indent(Vec::new(), b' ', 2);
    let (tests, failures, skipped) = (
        order.len().to_string(),
        failures.to_string(),
        skipped.to_string(),
    );
    let counts = [
        ("tests", tests.as_str()),
        ("failures", failures.as_str()),
        ("skipped", skipped.as_str()),
    ];
    let written: io::Result<()> = (|| {
        w.write_event(Event::Decl(BytesDecl::new("1.0", Some("UTF-8"), None)))?;
        w.create_element("testsuites")
            .with_attribute(("name", "echobench gate"))
            .with_attributes(counts)
            .write_inner_content(|w| {
                w.create_element("testsuite")
                    .with_attribute(("name", &*xml_chars(&report.suite)))
                    .with_attributes(counts)
                    .write_inner_content(|w| order.iter().try_for_each(|key| case(w, key)))?;
                Ok(())
            })?;
        Ok(())
    })();
    // Writing into memory cannot fail, and the writer emits UTF-8 from `&str`s only.
    written.expect("writing XML into memory");
    let mut out = String::from_utf8(w.into_inner()).expect("the XML writer emits UTF-8");
    out.push('\n');
    out
}

/// `text` with the characters XML 1.0 cannot carry, even escaped (C0 controls other than tab,
/// line feed and carriage return), replaced by spaces; the XML writer escapes the rest.
pub fn xml_chars(text: &str) -> Cow<'_, str> {
    let forbidden = |c: char| (c as u32) < 0x20 && !matches!(c, '\n' | '\r' | '\t');
    if text.contains(forbidden) {
        Cow::Owned(text.replace(forbidden, " "))
    } else {
        Cow::Borrowed(text)
    }
}

fn fmt_opt(x: Option<f64>, digits: usize) -> String {
    x.map_or_else(|| "—".into(), |v| format!("{v:.digits$}"))
}

/// Four significant digits, enough to recognise a threshold.
fn fmt_threshold(t: f64) -> String {
    if t != 0.0 && (t.abs() < 1e-3 || t.abs() >= 1e6) {
        format!("{t:.3e}")
    } else {
        format!("{}", (t * 1e4).round() / 1e4)
    }
}

fn verdict_word(v: Verdict) -> &'static str {
    match v {
        Verdict::Pass => "pass",
        Verdict::Regression => "REGRESSION",
        Verdict::Inconclusive => "inconclusive",
        Verdict::NotTested => "not tested",
    }
}

fn md_escape(s: &str) -> String {
    s.replace('|', "\\|")
}

#[cfg(test)]
mod tests {
    use super::*;
    use echobench_harness::gate::{CheckSide, Counts, GateSettings};

    fn check(detector: &str, group: &str, verdict: Verdict, note: &str) -> Check {
        Check {
            key: ComparisonKey {
                product: "hall & <lobby>".into(),
                detector: detector.into(),
            },
            metric: Metric::FalseAlarmRate,
            target_per_hour: 1.0,
            threshold: 2.5,
            group: group.into(),
            baseline: CheckSide {
                counts: Some(Counts {
                    count: 3.0,
                    of: 2.1,
                    unit: "h",
                }),
                rate_per_hour: None,
                text: "3 in 2.10 h".into(),
            },
            candidate: CheckSide {
                counts: Some(Counts {
                    count: 30.0,
                    of: 2.1,
                    unit: "h",
                }),
                rate_per_hour: None,
                text: "30 in 2.10 h".into(),
            },
            ratio: Some(10.0),
            bound: Some(3.2),
            rate_bounds_per_hour: None,
            needed_exposure_h: None,
            p_value: Some(1e-6),
            adjusted_p: Some(2e-6),
            verdict,
            note: note.into(),
        }
    }

    #[test]
    fn junit_escapes_every_value_and_drops_what_xml_cannot_carry() {
        let detector = "cfar \"rect\" <'a' & b>\u{1}|x";
        let report = GateReport {
            suite: "suite <&> \"q\"".into(),
            seeds: (1, 1),
            paired: true,
            settings: GateSettings::default(),
            checks: vec![
                check(detector, "all scenes", Verdict::Regression, "rise & <more>"),
                check("quiet", "all scenes", Verdict::Pass, ""),
            ],
            notes: Vec::new(),
        };
        let xml = junit_xml(&report);
        let doc = roxmltree::Document::parse(&xml).unwrap_or_else(|e| panic!("{e}\n{xml}"));
        let root = doc.root_element();
        assert_eq!(root.attribute("tests"), Some("2"));
        assert_eq!(root.attribute("failures"), Some("1"));
        let suite = root.first_element_child().unwrap();
        assert_eq!(suite.attribute("name"), Some("suite <&> \"q\""));
        let cases: Vec<_> = suite.children().filter(|n| n.is_element()).collect();
        assert_eq!(cases.len(), 2);
        // The control character became a space; everything else came back as written.
        let expected = "echobench.gate.hall & <lobby>.cfar \"rect\" <'a' & b> |x";
        assert_eq!(cases[0].attribute("classname"), Some(expected));
        let failure = cases[0].first_element_child().unwrap();
        assert_eq!(failure.tag_name().name(), "failure");
        assert_eq!(failure.text(), Some("all scenes — rise & <more>"));
        assert!(failure
            .attribute("message")
            .unwrap()
            .contains("baseline 3 in 2.10 h, candidate 30 in 2.10 h"));
        assert!(cases[1].first_element_child().is_none());
        // The layout CI logs show: one element per line, two spaces a level.
        assert!(xml.starts_with("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<testsuites "));
        assert!(xml.ends_with("  </testsuite>\n</testsuites>\n"), "{xml}");
        // Markdown cells escape the column bar.
        assert!(markdown(&report).contains("<'a' & b>\u{1}\\|x"));
    }
}
