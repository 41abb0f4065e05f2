//! The gate's verdict as a report section.

use crate::html::Section;
use crate::plot::escape;
use echobench_harness::gate::{ComparisonKey, GateReport, Verdict};
use std::fmt::Write as _;

/// A section with the gate's verdict: one line per detector, then every failing check with its
/// counts, ratio, bound and p-value, then the notes.
pub fn gate_section(report: &GateReport) -> Section {
    let mut html = String::new();
    let inconclusive = report.inconclusive().count();
    let verdict = if report.regressions().next().is_some() {
        format!(
            "<p class=\"bad\">Gate: REGRESSION — {} failing check(s).</p>",
            report.regressions().count()
        )
    } else if inconclusive == 0 {
        "<p class=\"good\">Gate: pass — no regression against the baseline.</p>".to_string()
    } else {
        format!(
            "<p class=\"{}\">Gate: {} — no regression; {inconclusive} budget check(s) cannot tell yet (too little noise-only time).</p>",
            if report.passed() { "good" } else { "bad" },
            escape(&report.verdict_words())
        )
    };
    html.push_str(&verdict);
    let _ = write!(
        html,
        "<p class=\"note\">Rate margin ρ₀ = {}, α = {} after Holm within each detector and check{}. \
         Paired rows count the trials where only that run alarmed falsely (or missed an event).</p>",
        report.settings.ratio_margin,
        report.settings.alpha,
        if report.paired {
            "; paired on the same seeds"
        } else {
            "; not paired (different seeds)"
        }
    );
    // One line per detector; the failing checks in full below it.
    html.push_str(
        "<table><thead><tr><th>detector</th><th class=\"num\">checks tested</th>\
         <th class=\"num\">regressions</th><th class=\"num\">smallest p (Holm)</th><th>verdict</th></tr></thead><tbody>",
    );
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
        let _ = write!(
            html,
            "<tr><td>{}</td><td class=\"num\">{tested}</td><td class=\"num\">{failed}</td><td class=\"num\">{}</td><td>{verdict}</td></tr>",
            escape(&d.label()),
            p_text(smallest)
        );
    }
    html.push_str("</tbody></table>");
    let failing: Vec<_> = report.regressions().collect();
    if !failing.is_empty() {
        html.push_str(
            "<h3>Failing checks</h3><table><thead><tr><th>detector</th><th>check</th><th class=\"num\">at /h</th><th>group</th>\
             <th>baseline</th><th>candidate</th><th class=\"num\">ratio</th><th class=\"num\">bound</th>\
             <th class=\"num\">p (Holm)</th><th>test</th></tr></thead><tbody>",
        );
        let number = |x: Option<f64>, digits: usize| {
            x.map_or_else(|| "—".into(), |v| format!("{v:.digits$}"))
        };
        for c in failing {
            let _ = write!(
                html,
                "<tr><td>{}</td><td>{}</td><td class=\"num\">{}</td><td>{}</td><td>{}</td><td>{}</td>\
                 <td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td>{}</td></tr>",
                escape(&c.key.label()),
                escape(c.metric.name()),
                c.target_per_hour,
                escape(&c.group),
                escape(&c.baseline),
                escape(&c.candidate),
                number(c.ratio, 2),
                number(c.bound, 3),
                p_text(c.adjusted_p),
                escape(&c.note)
            );
        }
        html.push_str("</tbody></table>");
    }
    for c in report.inconclusive() {
        let _ = write!(
            html,
            "<p class=\"note\">Inconclusive — {}, {} at {}/h: {}</p>",
            escape(&c.key.label()),
            escape(c.metric.name()),
            c.target_per_hour,
            escape(&c.note)
        );
    }
    html.push_str(
        "<p class=\"note\">Every check with its counts is in the run's <code>gate.md</code>, \
         <code>gate-junit.xml</code> and <code>gate.json</code> (<code>echobench gate</code>).</p>",
    );
    for note in &report.notes {
        let _ = write!(html, "<p class=\"note\">{}</p>", escape(note));
    }
    // The gate checks every product; its section is about the whole run.
    Section::new("Regression gate against the baseline", html)
}

fn p_text(p: Option<f64>) -> String {
    match p {
        None => "—".into(),
        Some(p) if p < 1e-4 => format!("{p:.1e}"),
        Some(p) => format!("{p:.4}"),
    }
}
