//! The gate's verdict as a report section.

use crate::html::Section;
use crate::markup::Html;
use echobench_harness::gate::{format_p, ComparisonKey, GateReport, Verdict};

/// A section with the gate's verdict: one line per detector, then every failing check with its
/// counts, ratio, bound and p-value, then the notes.
pub fn gate_section(report: &GateReport) -> Section {
    let mut html = Html::new();
    let inconclusive = report.inconclusive().count();
    if report.regressions().next().is_some() {
        html.element(
            "p",
            &[("class", "bad")],
            &format!(
                "Gate: REGRESSION — {} failing check(s).",
                report.regressions().count()
            ),
        );
    } else if inconclusive == 0 {
        html.raw("<p class=\"good\">Gate: pass — no regression against the baseline.</p>");
    } else {
        html.element(
            "p",
            &[("class", if report.passed() { "good" } else { "bad" })],
            &format!(
                "Gate: {} — no regression; {inconclusive} budget check(s) cannot tell yet (too little noise-only time).",
                report.verdict_words()
            ),
        );
    }
    html.push(&Html::filled(
        "<p class=\"note\">Rate margin ρ₀ = {}, α = {} after Holm within each detector and check{}. \
         Paired rows count the trials where only that run alarmed falsely (or missed an event).</p>",
        &[
            &report.settings.ratio_margin.to_string(),
            &report.settings.alpha.to_string(),
            if report.paired {
                "; paired on the same seeds"
            } else {
                "; not paired (different seeds)"
            },
        ],
    ));
    // One line per detector; the failing checks in full below it.
    html.raw(
        "<table><thead><tr><th>detector</th><th class=\"num\">checks tested</th>\
         <th class=\"num\">regressions</th><th class=\"num\">smallest p (Holm)</th><th>verdict</th></tr></thead><tbody>",
    );
    let num: &[(&'static str, &str)] = &[("class", "num")];
    let mut detectors: Vec<&ComparisonKey> = Vec::new();
    for c in &report.checks {
        if !detectors.contains(&&c.key) {
            detectors.push(&c.key);
        }
    }
    for d in &detectors {
        let mine: Vec<_> = report.checks.iter().filter(|c| c.key == **d).collect();
        let tested = mine
            .iter()
            .filter(|c| c.verdict != Verdict::NotTested)
            .count();
        let failed = mine
            .iter()
            .filter(|c| c.verdict == Verdict::Regression)
            .count();
        let smallest = mine
            .iter()
            .filter_map(|c| c.adjusted_p)
            .fold(None, |m: Option<f64>, p| Some(m.map_or(p, |m| m.min(p))));
        let open = mine
            .iter()
            .filter(|c| c.verdict == Verdict::Inconclusive)
            .count();
        let verdict = if failed > 0 {
            "<span class=\"bad\">REGRESSION</span>"
        } else if open > 0 {
            "<span>pass; budget inconclusive</span>"
        } else {
            "<span class=\"good\">pass</span>"
        };
        html.raw("<tr>")
            .element("td", &[], &d.label())
            .element("td", num, &tested.to_string())
            .element("td", num, &failed.to_string())
            .element("td", num, &format_p(smallest))
            .raw("<td>")
            .raw(verdict)
            .raw("</td></tr>");
    }
    html.raw("</tbody></table>");
    let failing: Vec<_> = report.regressions().collect();
    if !failing.is_empty() {
        html.raw(
            "<h3>Failing checks</h3><table><thead><tr><th>detector</th><th>check</th><th class=\"num\">at /h</th><th>group</th>\
             <th>baseline</th><th>candidate</th><th class=\"num\">ratio</th><th class=\"num\">bound</th>\
             <th class=\"num\">p (Holm)</th><th>test</th></tr></thead><tbody>",
        );
        let number = |x: Option<f64>, digits: usize| {
            x.map_or_else(|| "—".into(), |v| format!("{v:.digits$}"))
        };
        for c in failing {
            html.raw("<tr>")
                .element("td", &[], &c.key.label())
                .element("td", &[], c.metric.name())
                .element("td", num, &c.target_per_hour.to_string())
                .element("td", &[], &c.group)
                .element("td", &[], &c.baseline.text)
                .element("td", &[], &c.candidate.text)
                .element("td", num, &number(c.ratio, 2))
                .element("td", num, &number(c.bound, 3))
                .element("td", num, &format_p(c.adjusted_p))
                .element("td", &[], &c.note)
                .raw("</tr>");
        }
        html.raw("</tbody></table>");
    }
    for c in report.inconclusive() {
        html.push(&Html::filled(
            "<p class=\"note\">Inconclusive — {}, {} at {}/h: {}</p>",
            &[
                &c.key.label(),
                c.metric.name(),
                &c.target_per_hour.to_string(),
                &c.note,
            ],
        ));
    }
    html.raw(
        "<p class=\"note\">Every check with its counts is in the run's <code>gate.md</code>, \
         <code>gate-junit.xml</code> and <code>gate.json</code> (<code>echobench gate</code>).</p>",
    );
    for note in &report.notes {
        html.element("p", &[("class", "note")], note);
    }
    // The gate checks every product; its section is about the whole run.
    Section::new("Regression gate against the baseline", html.into_string())
}
