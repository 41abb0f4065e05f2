//! The report page: its sections, tables, figures, style sheet and self-check.

use crate::data::{self, GridRocPoint, Sweep};
use crate::markup::Html;
use crate::plot::{
    format_number, render_bar_chart, render_chart, Axis, Bar, BarChart, BarGroup, Chart,
    MarkedPoint, Marker, ReferenceLine, Series, Style,
};
use crate::zone_part;
use crate::{events_part, presence_part, product_part, rare_part};
use echobench_harness::runner::DetectorTally;
use echobench_harness::summary::{
    rate_label, DetectorSummary, Estimate, OperatingSummary, ProductSummary,
};
use echobench_run_files::RunFolder;

/// A section added by the caller (the gate's verdict, a gallery of explained trials): a
/// title, escaped when rendered, and a body of HTML inserted as given, so it must come from
/// trusted code. A section with a `product` goes inside that product's part of the page,
/// after its detection and false-alarm tables; one without goes right after the cautions.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Section {
    /// Heading.
    pub title: String,
    /// Body, HTML.
    pub html: String,
    /// The product whose part the section belongs to; `None` for the whole run.
    pub product: Option<String>,
}

impl Section {
    /// A section about the whole run.
    pub fn new(title: impl Into<String>, html: impl Into<String>) -> Section {
        Section {
            title: title.into(),
            html: html.into(),
            product: None,
        }
    }

    /// A section inside one product's part.
    pub fn for_product(
        product: impl Into<String>,
        title: impl Into<String>,
        html: impl Into<String>,
    ) -> Section {
        Section {
            product: Some(product.into()),
            ..Section::new(title, html)
        }
    }
}

/// Series colours: hues that stay apart for the common colour-vision deficiencies because
/// they also differ in lightness; each detector also gets its own marker shape, so the plots
/// read in greyscale print too.
const PALETTE: [&str; 8] = [
    "#1b5e9e", "#e07b00", "#1a8f6e", "#a2388f", "#56a8e0", "#9c7c00", "#c23b22", "#4a4a4a",
];
const MARKERS: [Marker; 8] = [
    Marker::Circle,
    Marker::Square,
    Marker::TriangleUp,
    Marker::Diamond,
    Marker::TriangleDown,
    Marker::Cross,
    Marker::Plus,
    Marker::Hexagon,
];

fn style_for(index: usize, dashed: bool) -> Style {
    Style {
        colour: PALETTE[index % PALETTE.len()].to_string(),
        dashed,
        // Past eight detectors, shift the shapes so no two share colour and shape.
        marker: MARKERS[(index + index / PALETTE.len()) % MARKERS.len()],
    }
}

const FIXED_CAUTIONS: [&str; 3] = [
    "Simulated results do not certify a product: they rank algorithms on models of rooms, people and nuisances, not on the installation a product will meet.",
    "Motion sensing used for safety (machine guarding, automatic doors, anything that protects people) needs certified equipment and must meet the local standards.",
    "Radio rules (frequency bands, transmit power, field strength) are local: check them where the product will be sold and used.",
];

const CSS: &str = r#"
:root { color-scheme: light; }
body { font-family: sans-serif; color: #1a1a1a; background: #ffffff; margin: 0; line-height: 1.45; font-size: 15px; }
main, header, nav, aside.cautions { max-width: 1160px; margin: 0 auto; padding: 0 24px; }
header { padding-top: 18px; }
h1 { font-size: 26px; margin: 8px 0 12px; }
h2 { font-size: 21px; margin: 34px 0 8px; padding-top: 8px; border-top: 2px solid #cfcfcf; }
h3 { font-size: 18px; margin: 28px 0 8px; padding-top: 6px; border-top: 1px solid #dddddd; }
h4 { font-size: 15px; margin: 18px 0 6px; }
section.product { margin-top: 40px; }
section.product > h2 { background: #e8eef5; border-top: 4px solid #1b5e9e; padding: 8px 12px; }
.product-head { padding: 0 4px; }
.product-head p.about { font-style: italic; margin: 4px 0 8px; }
ul.statements { margin: 0; padding-left: 18px; }
div.wide { overflow-x: auto; max-width: 100%; }
table.grid { font-size: 13px; }
table.grid th, table.grid td { padding: 3px 6px; }
table.grid th[scope=row] { font-weight: normal; white-space: nowrap; }
table.grid td.cell { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; min-width: 72px; }
table.grid td.cell .sub, table.grid td.cell .why, table.grid td.cell .limit { display: block; font-size: 12px; }
table.grid td.cell .sub { color: #444444; }
table.grid td.cell .why { color: #9a1c00; font-weight: bold; white-space: normal; }
table.grid td.cell .limit { color: #6b4400; font-weight: bold; }
ol.why-list .cells { color: #444444; }
td.zero, .legend.zero { background: #f6c9bd; color: #7a1000; }
table.grid td.cell .est strong { font-size: 15px; }
td.low, .legend.low { background: #fbe6dc; }
td.no-event, .legend.no-event { background: #ececec; color: #555555; }
td.over, .legend.over { background: #f6c9bd; }
td.limiting, .legend.limiting { box-shadow: inset 0 0 0 3px #b07a00; }
.legend { padding: 0 4px; }
ol.why-list { font-size: 14px; }
ol.why-list li { margin: 2px 0; }
details > summary { cursor: pointer; margin: 6px 0; }
code, pre { font-family: monospace; font-size: 13px; }
pre { background: #f5f5f5; border: 1px solid #dddddd; padding: 10px; overflow-x: auto; white-space: pre-wrap; }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: 3px 18px; margin: 0 0 12px; }
dl.facts dt { font-weight: bold; }
dl.facts dd { margin: 0; }
aside.cautions > div { border: 2px solid #8a5a00; border-left-width: 10px; background: #fff6e0; padding: 8px 16px; margin: 12px 0; }
aside.cautions h2 { border: none; margin: 6px 0; padding: 0; }
aside.cautions li { margin: 3px 0; }
nav.toc ol { margin: 6px 0 0; padding-left: 22px; }
nav.toc ol ol { columns: 3; margin: 2px 0 6px; }
table { border-collapse: collapse; margin: 8px 0 14px; font-size: 14px; }
th, td { border: 1px solid #cccccc; padding: 3px 8px; text-align: left; vertical-align: top; }
th { background: #eeeeee; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.meets td { background: #eef6ee; }
tr.fails td { background: #ffffff; }
figure { margin: 10px 0 18px; break-inside: avoid; page-break-inside: avoid; }
figure svg { max-width: 100%; height: auto; display: block; }
figcaption { font-size: 14px; color: #333333; max-width: 900px; margin-top: 4px; }
.grid2 { display: grid; grid-template-columns: repeat(auto-fill, minmax(440px, 1fr)); gap: 8px 18px; }
.nw { white-space: nowrap; }
.swatch { display: inline-block; width: 12px; height: 12px; margin-right: 5px; vertical-align: -1px; border: 1px solid #555555; }
.note { color: #444444; font-size: 14px; }
.bad { color: #9a1c00; font-weight: bold; }
.good { color: #1d5e1d; font-weight: bold; }
@media print {
  body { font-size: 11pt; }
  nav.toc { display: none; }
  h2 { break-after: avoid; page-break-after: avoid; }
  tr.meets td { background: #ffffff; font-weight: bold; }
  td.zero, td.over { border: 2px solid #000000; }
}
"#;

/// Records script errors and console errors before anything else runs.
const ERROR_CAPTURE: &str = r#"window.__reportErrors = [];
window.addEventListener('error', function (e) { window.__reportErrors.push('error: ' + (e.message || 'a resource failed to load')); }, true);
(function () { var original = console.error; console.error = function () { var parts = []; for (var i = 0; i < arguments.length; i++) { parts.push(String(arguments[i])); } window.__reportErrors.push('console.error: ' + parts.join(' ')); if (original) { original.apply(console, arguments); } }; })();"#;

/// Checks that every plot drew something with an area or a length, and writes the result on
/// `<body>`: `data-plots-total`, `-ok`, `-empty` (plots that say they have nothing to draw),
/// `-bad` (figure ids), `data-errors` (JSON list) and `data-page-height` (px). Checks too that
/// every shown per-product table (`table[data-check]` outside a closed `<details>`) is laid
/// out with an area and has the rows and columns it declares (`data-tables-shown`, `-ok`,
/// `-bad`), and counts the Pd-zero cells whose background differs from the page's
/// (`data-zero-cells`, `data-zero-marked`).
const SELF_CHECK: &str = r#"(function () {
  var body = document.body, errors = window.__reportErrors || [];
  var plots = document.querySelectorAll('svg.plot'), ok = 0, empty = 0, bad = [];
  var shown = 0, tablesOk = 0, tablesBad = [], zeroTotal = 0, zeroMarked = 0;
  try {
    for (var i = 0; i < plots.length; i++) {
      var svg = plots[i];
      if (svg.classList.contains('empty')) { empty++; continue; }
      var drawn = false, items = svg.querySelectorAll('.data');
      for (var j = 0; j < items.length && !drawn; j++) {
        var box = items[j].getBBox();
        if (box.width > 0 || box.height > 0) { drawn = true; }
      }
      if (drawn) { ok++; } else { var f = svg.closest('figure'); bad.push(f && f.id ? f.id : 'svg-' + i); }
    }
    var tables = document.querySelectorAll('table[data-check]');
    for (var t = 0; t < tables.length; t++) {
      var table = tables[t];
      if (table.closest('details:not([open])')) { continue; }
      shown++;
      var rows = table.tBodies.length ? table.tBodies[0].rows : [];
      var want = Number(table.getAttribute('data-columns')), good = rows.length === Number(table.getAttribute('data-rows'));
      var head = table.tHead ? table.tHead.rows[0] : null;
      if (!head || head.cells.length !== want) { good = false; }
      for (var r = 0; r < rows.length; r++) { if (rows[r].cells.length !== want) { good = false; } }
      var rect = table.getBoundingClientRect();
      if (!(rect.width > 0 && rect.height > 0)) { good = false; }
      if (good) { tablesOk++; } else { tablesBad.push(table.id || 'table-' + t); }
    }
    var background = getComputedStyle(document.body).backgroundColor;
    var zeros = document.querySelectorAll('td.zero');
    for (var z = 0; z < zeros.length; z++) {
      var own = getComputedStyle(zeros[z]).backgroundColor;
      if (own !== background && own !== 'transparent' && own !== 'rgba(0, 0, 0, 0)') { zeroMarked++; }
    }
    zeroTotal = zeros.length;
  } catch (e) { errors.push('self-check: ' + e.message); }
  body.setAttribute('data-tables-shown', String(shown));
  body.setAttribute('data-tables-ok', String(tablesOk));
  body.setAttribute('data-tables-bad', tablesBad.join(' '));
  body.setAttribute('data-zero-cells', String(zeroTotal));
  body.setAttribute('data-zero-marked', String(zeroMarked));
  body.setAttribute('data-plots-total', String(plots.length));
  body.setAttribute('data-plots-ok', String(ok));
  body.setAttribute('data-plots-empty', String(empty));
  body.setAttribute('data-plots-bad', bad.join(' '));
  body.setAttribute('data-errors', JSON.stringify(errors));
  body.setAttribute('data-page-height', String(Math.ceil(document.documentElement.scrollHeight)));
})();"#;

fn fmt_estimate(e: &Estimate, significant: usize) -> String {
    match (e.value, e.low, e.high) {
        (Some(v), Some(l), Some(h)) => format!(
            "{} [{}, {}]",
            format_number(v, significant),
            format_number(l, significant),
            format_number(h, significant)
        ),
        _ => "—".into(),
    }
}

/// The value when it is a finite number: what the text may show.
fn finite(x: Option<f64>) -> Option<f64> {
    x.filter(|v| v.is_finite())
}

fn fmt_pd(e: &Estimate) -> String {
    match (finite(e.value), finite(e.low), finite(e.high)) {
        (Some(v), Some(l), Some(h)) => format!("{v:.2} [{l:.2}, {h:.2}]"),
        _ => "—".into(),
    }
}

fn fmt_seconds(x: Option<f64>) -> String {
    finite(x).map_or_else(|| "—".into(), |v| format!("{v:.2} s"))
}

/// A target rate as people say it (`1/h`, `1/day`: `summary::rate_label`, as the console
/// prints it), or as written with "1 per N h" when it is one.
pub(crate) fn fmt_target(rate: f64) -> String {
    let named = rate_label(rate);
    if named != format!("{rate}/h") {
        return named;
    }
    let base = format!("{}/h", format_number(rate, 3));
    if rate > 0.0 && rate < 1.0 {
        let per = 1.0 / rate;
        let whole = per.round();
        if whole >= 2.0 && (per - whole).abs() <= 1e-3 * whole {
            return format!("{base} (1 per {whole:.0} h)");
        }
    }
    base
}

/// A detector as the cautions name it: `product/label` (the gate's form) when the run has
/// several products, the label alone otherwise.
fn qualified(several: bool, d: &DetectorSummary) -> String {
    if several {
        format!("{}/{}", d.product, d.label)
    } else {
        d.label.clone()
    }
}

/// A whole number with thin-space thousands groups (SI style: 11 472 000).
fn fmt_count(n: u64) -> String {
    let digits = n.to_string();
    let mut out = String::new();
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i).is_multiple_of(3) {
            out.push('\u{2009}');
        }
        out.push(c);
    }
    out
}

fn fmt_bytes(bytes: u64) -> String {
    if bytes < 1024 {
        format!("{bytes} B")
    } else {
        format!(
            "{} B ({} KiB)",
            fmt_count(bytes),
            format_number(bytes as f64 / 1024.0, 3)
        )
    }
}

/// A per-frame probability: plain decimals down to 10⁻⁴, exponent form below.
fn fmt_probability(e: &Estimate) -> String {
    fmt_estimate(e, 3)
}

/// A detector's name with its colour swatch, kept on one line.
pub(crate) fn detector_cell(index: usize, label: &str) -> Html {
    let mut h = Html::new();
    h.open("span", &[("class", "nw")])
        .open(
            "span",
            &[
                ("class", "swatch"),
                (
                    "style",
                    &format!("background:{}", PALETTE[index % PALETTE.len()]),
                ),
            ],
        )
        .close("span")
        .text(label)
        .close("span");
    h
}

/// A list item: a detector's swatch and name in bold, then why.
fn listed(index: usize, label: &str, why: &str) -> Html {
    let mut h = Html::new();
    h.open("li", &[])
        .open(
            "span",
            &[
                ("class", "swatch"),
                (
                    "style",
                    &format!("background:{}", PALETTE[index % PALETTE.len()]),
                ),
            ],
        )
        .close("span")
        .element("strong", &[], label)
        .text(": ")
        .text(why)
        .close("li");
    h
}

/// A table: headings as text, cells as HTML built with [`Html`] (so a cell's text is escaped
/// unless the cell says otherwise); columns named in `numeric` are right-aligned, a row class
/// of `""` gives none.
fn table(headers: &[&str], numeric: &[usize], rows: &[(&'static str, Vec<Html>)]) -> String {
    let num: &[(&'static str, &str)] = &[("class", "num")];
    let class_of = |i: usize| if numeric.contains(&i) { num } else { &[] };
    let mut h = Html::new();
    h.raw("<table><thead><tr>");
    for (i, heading) in headers.iter().enumerate() {
        h.element("th", class_of(i), heading);
    }
    h.raw("</tr></thead><tbody>");
    for (row_class, cells) in rows {
        if row_class.is_empty() {
            h.open("tr", &[]);
        } else {
            h.open("tr", &[("class", row_class)]);
        }
        for (i, cell) in cells.iter().enumerate() {
            h.open("td", class_of(i)).push(cell).close("td");
        }
        h.close("tr");
    }
    h.raw("</tbody></table>");
    h.into_string()
}

/// Where figures are numbered: one count over the whole page.
struct Page {
    figures: usize,
}

impl Page {
    /// A numbered figure: a plot drawn by `echobench_svg` and its caption.
    fn figure(&mut self, svg: &str, caption: &Html) -> String {
        self.figures += 1;
        let mut h = Html::new();
        h.open("figure", &[("id", &format!("figure-{}", self.figures))])
            .push(&Html::raw_html(svg.to_string()))
            .open("figcaption", &[])
            .text(&format!("Figure {}. ", self.figures))
            .push(caption)
            .close("figcaption")
            .close("figure");
        h.into_string()
    }
}

/// One section of the page: its element id, its title (plain text) and its body (HTML).
struct Entry {
    id: String,
    title: String,
    html: String,
}

/// One product's part of the page. A product is the unit of comparison (one sensor
/// module, its own thresholds), so every section inside a part is computed on that
/// product's detectors only; nothing is pooled across products.
pub(crate) struct Part<'a> {
    /// The whole run.
    pub(crate) run: &'a RunFolder,
    /// Position among the products, from 1: element ids use it, since product names come
    /// from user files.
    pub(crate) number: usize,
    /// The product's name.
    pub(crate) name: &'a str,
    /// The product's description, when the summary has one.
    pub(crate) product: Option<&'a ProductSummary>,
    /// The product's detectors: summary and tallies side by side, in run order.
    pub(crate) detectors: Vec<(&'a DetectorSummary, &'a DetectorTally)>,
}

impl<'a> Part<'a> {
    /// An element id inside this part.
    pub(crate) fn id(&self, section: &str) -> String {
        format!("p{}-{section}", self.number)
    }

    pub(crate) fn summaries(&self) -> impl Iterator<Item = &'a DetectorSummary> + '_ {
        self.detectors.iter().map(|(d, _)| *d)
    }

    pub(crate) fn tallies(&self) -> Vec<&'a DetectorTally> {
        self.detectors.iter().map(|(_, t)| *t).collect()
    }

    /// The first variant of one of the product's scenes, in the tallies.
    fn variant(&self, scene: &str) -> Option<&'a echobench_harness::runner::VariantTally> {
        let (_, first) = self.detectors.first()?;
        first.variants.iter().find(|v| v.scene == scene)
    }

    /// The swept field of one of the product's scenes, as the suite writes it (the tallies
    /// carry it; tallies written before they did give `None`).
    pub(crate) fn sweep_field(&self, scene: &str) -> Option<&'a str> {
        self.variant(scene)?.sweep_field.as_deref()
    }

    /// The unit of the swept field of one of the product's scenes, when its name gives one.
    pub(crate) fn sweep_unit(&self, scene: &str) -> Option<&'a str> {
        self.variant(scene)?.sweep_unit.as_deref()
    }

    /// The product's name as page text: in code type, escaped.
    pub(crate) fn name_html(&self) -> Html {
        let mut h = Html::new();
        h.element("code", &[], self.name);
        h
    }
}

/// The products of a run in suite order, each with its detectors. Products come from the
/// summary's list; a detector of a product the list lacks still gets a part (so nothing is
/// dropped from the page), after the listed ones.
fn parts(run: &RunFolder) -> Vec<Part<'_>> {
    let mut names: Vec<&str> = run
        .summary
        .products
        .iter()
        .map(|p| p.name.as_str())
        .collect();
    for d in &run.summary.detectors {
        if !names.contains(&d.product.as_str()) {
            names.push(&d.product);
        }
    }
    names
        .into_iter()
        .enumerate()
        .map(|(k, name)| Part {
            run,
            number: k + 1,
            name,
            product: run.summary.products.iter().find(|p| p.name == name),
            detectors: run
                .summary
                .detectors
                .iter()
                .zip(&run.tallies.detectors)
                .filter(|(d, _)| d.product == name)
                .collect(),
        })
        .collect()
}

/// Target rates of a product (every detector of a run is scored at the same ones).
pub(crate) fn targets(part: &Part) -> Vec<f64> {
    part.summaries()
        .next()
        .map(|d| {
            d.operating_points
                .iter()
                .map(|o| o.target_false_alarms_per_hour)
                .collect()
        })
        .unwrap_or_default()
}

/// Target rates of the run: those of its first detector.
fn run_targets(run: &RunFolder) -> Vec<f64> {
    run.summary
        .detectors
        .first()
        .map(|d| {
            d.operating_points
                .iter()
                .map(|o| o.target_false_alarms_per_hour)
                .collect()
        })
        .unwrap_or_default()
}

fn header(run: &RunFolder) -> String {
    let s = &run.summary;
    // Each fact's value is built as HTML: text escaped, markup only as written here.
    let mut facts: Vec<(&str, Html)> = Vec::new();
    let mut suite = Html::new();
    suite.element("code", &[], &s.suite);
    facts.push(("suite", suite));
    facts.push(("seed", Html::from_text(&s.seed.to_string())));
    let (mut target_trials, mut nuisance_trials, mut events, mut exposure_ns) = (0, 0, 0, 0);
    // Each product's trials are counted once, through its first detector.
    for part in parts(run) {
        let Some(d) = part.tallies().first().copied() else {
            continue;
        };
        for v in &d.variants {
            if v.label == "target" {
                target_trials += v.trials;
            } else {
                nuisance_trials += v.trials;
            }
            events += v.events;
            exposure_ns += v.exposure_ns;
        }
    }
    facts.push((
        "test trials",
        Html::from_text(&format!(
            "{} ({target_trials} in target scenes, {nuisance_trials} in nuisance scenes)",
            s.test_trials
        )),
    ));
    facts.push((
        "test signal",
        Html::from_text(&format!(
            "{} h ({} min); {} h of it noise-only (outside every event window); {events} target events",
            format_number(s.test_signal_hours, 3),
            format_number(s.test_signal_hours * 60.0, 3),
            format_number(exposure_ns as f64 / 3.6e12, 3)
        )),
    ));
    let m_of_n = s.m_of_n.map_or_else(
        || "one frame at or above the threshold".to_string(),
        |(m, n)| format!("{m} of the last {n} frames at or above the threshold"),
    );
    facts.push((
        "alarm logic",
        Html::from_text(&format!(
            "alarm when score ≥ threshold, {m_of_n}; hold {} s after each counted alarm (not retriggerable)",
            format_number(s.hold_s, 3)
        )),
    ));
    facts.push((
        "event matching",
        Html::from_text(&format!(
            "an alarm from {} s before an event's start to {} s after its end detects it",
            format_number(s.event_tolerance_s.0, 3),
            format_number(s.event_tolerance_s.1, 3)
        )),
    ));
    let rates: Vec<String> = run_targets(run).into_iter().map(fmt_target).collect();
    facts.push((
        "target false-alarm rates",
        Html::from_text(&if rates.is_empty() {
            "none".to_string()
        } else {
            rates.join(", ")
        }),
    ));
    let mut products = Html::new();
    let all = parts(run);
    products.text(&format!("{} (", all.len()));
    for (k, p) in all.iter().enumerate() {
        if k > 0 {
            products.raw(", ");
        }
        products
            .open("a", &[("href", &format!("#{}", p.id("product")))])
            .push(&p.name_html())
            .close("a");
    }
    products
        .raw("); each is one sensor module with its own scenes, calibrated and ranked on its own");
    facts.push(("products", products));
    let mut calibration = Html::new();
    calibration.raw("per product: thresholds chosen on that product's calibration trials (own seeds), then scored on its test trials");
    facts.push(("calibration", calibration));
    if let Some(budget) = s.false_alarm_budget_per_hour {
        facts.push((
            "false-alarm budget",
            Html::from_text(&format!("{}/h (for the gate)", format_number(budget, 3))),
        ));
    }
    facts.push((
        "intervals",
        Html::from_text(&format!(
            "{} two-sided: Wilson for proportions, exact Poisson (Garwood) for rates, Clopper–Pearson for per-frame Pfa, order statistics for medians",
            data::confidence_percent()
        )),
    ));
    if !run.tallies.shards.is_empty() {
        let shards: Vec<String> = run
            .tallies
            .shards
            .iter()
            .map(|sh| format!("{}/{}", sh.index, sh.count))
            .collect();
        let mut partial = Html::new();
        partial.element(
            "span",
            &[("class", "bad")],
            &format!("partial run: shards {} only", shards.join(", ")),
        );
        facts.push(("shards", partial));
    }
    let mut out = Html::new();
    out.raw("<header><h1>echobench report: suite ")
        .element("code", &[], &s.suite)
        .raw("</h1><dl class=\"facts\">");
    for (k, v) in facts {
        out.element("dt", &[], k)
            .open("dd", &[])
            .push(&v)
            .close("dd");
    }
    out.raw("</dl></header>");
    out.into_string()
}

/// Cautions particular to this run, in words.
fn run_cautions(run: &RunFolder, baseline: Option<&RunFolder>) -> Vec<String> {
    let mut out = Vec::new();
    let s = &run.summary;
    if !run.tallies.shards.is_empty() {
        out.push("This folder holds only some shards of the run: its rates cover only those trials. Merge every shard before deciding.".to_string());
    }
    let several = run.summary.products.len() > 1;
    let failed: Vec<String> = s
        .detectors
        .iter()
        .filter(|d| !d.failures.is_empty())
        .map(|d| qualified(several, d))
        .collect();
    if !failed.is_empty() {
        out.push(format!(
            "Detectors that failed on some trials (left out of their tallies, so their numbers are biased): {}.",
            failed.join(", ")
        ));
    }
    for part in parts(run) {
        let product = if several {
            format!("Product `{}`: ", part.name)
        } else {
            String::new()
        };
        // The same test as the console's: a rate is resolved when every room (or the pooled
        // time) is long enough for zero alarms to bound the rate below it at 95 %.
        for (o, rate) in targets(&part).iter().enumerate() {
            let resolved = part
                .summaries()
                .all(|d| d.operating_points.get(o).is_some_and(|p| p.resolved));
            if !resolved {
                out.push(format!(
                    "{product}the calibration cannot resolve {}: it needs {} h of noise-only time per room, so its threshold is the lowest with no more calibration alarms than the time allows, and its Pd is optimistic about false alarms.",
                    rate_label(*rate),
                    format_number(-(0.05f64.ln()) / rate, 3)
                ));
            }
        }
        let events: u64 = part
            .tallies()
            .first()
            .map_or(0, |d| d.variants.iter().map(|v| v.events).sum());
        if events == 0 {
            out.push(format!(
                "{product}no target events: no detection probability can be given."
            ));
        } else if events < 30 {
            out.push(format!(
                "{product}only {events} target events: detection probabilities carry wide intervals."
            ));
        }
    }
    if let Some(b) = baseline {
        if b.summary.suite != s.suite || b.summary.seed != s.seed {
            out.push(format!(
                "The baseline is suite `{}` seed {}, this run suite `{}` seed {}: the trials differ, so differences mix chance with change.",
                b.summary.suite, b.summary.seed, s.suite, s.seed
            ));
        }
    }
    out
}

fn cautions(run: &RunFolder, baseline: Option<&RunFolder>) -> String {
    let mut out = Html::new();
    out.raw("<aside class=\"cautions\" id=\"cautions\"><div><h2>Cautions</h2><p>")
        .element("strong", &[], &run.summary.cautions)
        .raw("</p><ul>");
    for c in FIXED_CAUTIONS {
        out.element("li", &[], c);
    }
    for c in run_cautions(run, baseline) {
        out.element("li", &[("class", "bad")], &c);
    }
    out.raw("</ul></div></aside>");
    out.into_string()
}

/// Why a detector cannot be ranked at a target, or `None` when it meets it.
fn ranking_verdict(d: &DetectorSummary, op: &OperatingSummary) -> Option<String> {
    if !d.failures.is_empty() {
        return Some(format!(
            "failed on {} trials (left out of its tallies)",
            d.failures.len()
        ));
    }
    let rate = &op.outcome.false_alarms_per_hour;
    match rate.value {
        None => Some("no noise-only time to measure false alarms on".into()),
        Some(v) if echobench_harness::summary::over_target(op) => Some(format!(
            "measured {}/h [{}, {}] is above the target {}",
            format_number(v, 3),
            rate.low.map_or("—".into(), |x| format_number(x, 3)),
            rate.high.map_or("—".into(), |x| format_number(x, 3)),
            fmt_target(op.target_false_alarms_per_hour)
        )),
        Some(_) => None,
    }
}

/// Orders the detectors that meet a target: higher Pd first, then shorter median latency,
/// then label (so ties are broken the same way every time).
fn rank_order(
    a: &(usize, &DetectorSummary, &OperatingSummary),
    b: &(usize, &DetectorSummary, &OperatingSummary),
) -> std::cmp::Ordering {
    let pd = |x: &OperatingSummary| x.outcome.pd.value.unwrap_or(-1.0);
    let latency = |x: &OperatingSummary| x.latency_median_s.unwrap_or(f64::INFINITY);
    pd(b.2)
        .total_cmp(&pd(a.2))
        .then(latency(a.2).total_cmp(&latency(b.2)))
        .then(a.1.label.cmp(&b.1.label))
}

fn ranking(part: &Part) -> String {
    let mut out = String::from(
        "<p>The rule: a detector <strong>meets</strong> a target false-alarm rate unless its <em>measured</em> false-alarm rate on the test trials, at the threshold calibrated for that target, is shown to be above the target (the lower end of its 95 % interval is over it: one false alarm in a short test run does not disqualify). Those that meet it are ranked by detection probability Pd (higher first), then by median latency (shorter first). A detector that meets the rate but detects no target event at that threshold is listed apart, and one that failed on any trial is not ranked. The one-sided 95 % upper bound says whether the test time was long enough to <em>show</em> the rate; where it is not, the last column gives the noise-only time that would, with no false alarm in it.</p>",
    );
    let targets = targets(part);
    if targets.is_empty() {
        out.push_str(
            "<p>The suite sets no target false-alarm rate, so there is nothing to rank.</p>",
        );
        return out;
    }
    for (o, target) in targets.iter().enumerate() {
        let mut h = Html::new();
        h.element("h4", &[], &format!("Target {}", fmt_target(*target)));
        out.push_str(&h.into_string());
        let mut meets: Vec<(usize, &DetectorSummary, &OperatingSummary)> = Vec::new();
        let mut fails: Vec<(usize, &DetectorSummary, &OperatingSummary, String)> = Vec::new();
        for (i, d) in part.summaries().enumerate() {
            let Some(op) = d.operating_points.get(o) else {
                continue;
            };
            match ranking_verdict(d, op) {
                None => meets.push((i, d, op)),
                Some(why) => fails.push((i, d, op, why)),
            }
        }
        meets.sort_by(rank_order);
        let (meets, silent): (Vec<_>, Vec<_>) = meets
            .into_iter()
            .partition(|(_, _, op)| op.outcome.pd.value.is_some_and(|pd| pd > 0.0));
        let mut rows = Vec::new();
        for (rank, (i, d, op)) in meets.iter().enumerate() {
            let upper = op.outcome.false_alarms_per_hour_upper;
            let shown = match upper {
                Some(u) if u <= *target => {
                    let mut good = Html::new();
                    good.element("span", &[("class", "good")], "shown");
                    good
                }
                Some(u) => {
                    let needed = echobench_stats::exposure_for_rate_claim(*target, 0, 0.95)
                        .map_or_else(
                            |_| "—".into(),
                            |h| format!("{} h with no false alarm", format_number(h, 3)),
                        );
                    Html::from_text(&format!(
                        "not shown (bound {}/h); needs {needed}",
                        format_number(u, 3),
                    ))
                }
                None => Html::from_text("—"),
            };
            let cost = d.declared_cost.map_or_else(
                || "—".to_string(),
                |c| {
                    format!(
                        "{}, {} ops/sample",
                        fmt_bytes(c.state_bytes),
                        format_number(c.ops_per_sample, 3)
                    )
                },
            );
            rows.push((
                "meets",
                vec![
                    Html::from_text(&(rank + 1).to_string()),
                    detector_cell(*i, &d.label),
                    Html::from_text(&fmt_pd(&op.outcome.pd)),
                    Html::from_text(&fmt_seconds(op.latency_median_s)),
                    Html::from_text(&fmt_estimate(&op.outcome.false_alarms_per_hour, 3)),
                    Html::from_text(&format!(
                        "{} in {} h",
                        op.outcome.false_alarms,
                        format_number(op.outcome.exposure_hours, 3)
                    )),
                    Html::from_text(&cost),
                    shown,
                ],
            ));
        }
        if rows.is_empty() {
            out.push_str("<p class=\"bad\">No detector meets this target.</p>");
        } else {
            out.push_str(&table(
                &[
                    "rank",
                    "detector",
                    "Pd [95 %]",
                    "median latency",
                    "FA/h [95 %]",
                    "false alarms",
                    "declared cost",
                    "rate shown at 95 %?",
                ],
                &[0, 2, 3, 4, 5],
                &rows,
            ));
        }
        if !silent.is_empty() {
            out.push_str("<p>Meet the rate but detect nothing at that threshold:</p><ul>");
            for (i, d, op) in &silent {
                let why = if op.outcome.events == 0 {
                    "the run has no target events".to_string()
                } else {
                    format!(
                        "0 of {} events detected, FA/h {}",
                        op.outcome.events,
                        fmt_estimate(&op.outcome.false_alarms_per_hour, 3)
                    )
                };
                out.push_str(&listed(*i, &d.label, &why).into_string());
            }
            out.push_str("</ul>");
        }
        if !fails.is_empty() {
            out.push_str("<p>Do not meet it:</p><ul>");
            for (i, d, _, why) in &fails {
                out.push_str(&listed(*i, &d.label, why).into_string());
            }
            out.push_str("</ul>");
        }
    }
    out
}

/// The x range of false-alarm-rate plots: every positive value drawn, and the targets.
fn rate_axis(label: &str, values: impl Iterator<Item = f64>) -> Axis {
    let (mut low, mut high) = (f64::INFINITY, 0.0f64);
    for v in values.filter(|v| v.is_finite() && *v > 0.0) {
        low = low.min(v);
        high = high.max(v);
    }
    Axis::log(label, low, high, true)
}

/// An event-level curve, drawn only over its monotone part ([`GridRocPoint::monotone`]):
/// below the first threshold at which the detected events or the false alarms fall, the
/// curve folds back towards the origin and "up and to the left is better" stops being true.
fn grid_series(points: &[GridRocPoint], style: Style, name: String) -> Series {
    Series {
        name,
        style,
        line: points
            .iter()
            .filter(|p| p.monotone)
            .filter_map(|p| Some((p.false_alarms_per_hour?, p.pd?)))
            .collect(),
        markers: Vec::new(),
    }
}

/// The caption's sentence on the fold-back rule, naming each cut curve and where it is cut.
fn fold_back_words<'a>(curves: impl Iterator<Item = (&'a str, &'a [GridRocPoint])>) -> Html {
    let cuts: Vec<(&str, f64)> = curves
        .filter_map(|(label, points)| data::fold_back_cut(points).map(|t| (label, t)))
        .collect();
    let mut h = Html::new();
    h.raw("Curves are drawn only from the highest threshold down to where the detected events or the false alarms first fall as the threshold is lowered: below that the alarm tends to stay on, fewer onsets count, both Pd and the rate drop, and the curve would fold back towards the origin, where up and to the left no longer means better. <code>roc.csv</code> keeps every threshold.");
    if cuts.is_empty() {
        h.raw(" No curve folds back in this run.");
    } else {
        h.raw(" Cut here: ");
        for (k, (label, t)) in cuts.iter().enumerate() {
            if k > 0 {
                h.raw(", ");
            }
            h.element("strong", &[], label)
                .text(&format!(" below threshold {}", format_number(*t, 4)));
        }
        h.raw(".");
    }
    h
}

fn operating_marker(d: &DetectorSummary, op: &OperatingSummary) -> Option<MarkedPoint> {
    let o = &op.outcome;
    let x = o.false_alarms_per_hour.value?;
    let y = o.pd.value?;
    Some(MarkedPoint {
        x,
        y,
        x_interval: o
            .false_alarms_per_hour
            .low
            .zip(o.false_alarms_per_hour.high),
        y_interval: o.pd.low.zip(o.pd.high),
        note: format!(
            "{} at target {}: Pd {}, FA/h {}",
            d.label,
            fmt_target(op.target_false_alarms_per_hour),
            fmt_pd(&o.pd),
            fmt_estimate(&o.false_alarms_per_hour, 3)
        ),
    })
}

const ZERO_NOTE: &str = "A log axis cannot show zero: points with no false alarm are drawn at the left edge marked 0, beyond the axis break.";

fn event_roc(page: &mut Page, part: &Part) -> String {
    let curves: Vec<Vec<GridRocPoint>> = part.tallies().into_iter().map(data::grid_roc).collect();
    let targets = targets(part);
    let axis = rate_axis(
        "false alarms per hour (test trials, log scale)",
        curves
            .iter()
            .flatten()
            .filter(|p| p.monotone)
            .filter_map(|p| p.false_alarms_per_hour)
            .chain(targets.iter().copied())
            .chain(part.summaries().flat_map(|d| {
                d.operating_points.iter().flat_map(|o| {
                    let r = &o.outcome.false_alarms_per_hour;
                    [r.value, r.low, r.high].into_iter().flatten()
                })
            })),
    );
    let mut chart = Chart::new(
        "Event-level ROC: detection probability against false alarms per hour",
        axis,
        Axis::linear("Pd, detected target events", 0.0, 1.0),
    );
    chart.empty_message =
        "no curve to draw: the run has no target events or no noise-only time".into();
    for (i, (d, points)) in part.summaries().zip(&curves).enumerate() {
        let mut series = grid_series(points, style_for(i, false), d.label.clone());
        series.markers = d
            .operating_points
            .iter()
            .filter_map(|op| operating_marker(d, op))
            .collect();
        chart.series.push(series);
    }
    chart.vertical_lines = targets
        .iter()
        .map(|&t| ReferenceLine {
            value: t,
            label: format!("target {}", fmt_target(t)),
        })
        .collect();
    let mut caption = Html::new();
    caption
        .raw("Each curve sweeps one detector's threshold grid; every scene is pooled, as in <code>roc.csv</code>: Pd is detected target events over all target events, the rate is false alarms over all noise-only test time. ")
        .push(&fold_back_words(
            part.summaries()
                .map(|d| d.label.as_str())
                .zip(curves.iter().map(Vec::as_slice)),
        ))
        .push(&Html::filled(
            " Markers are the operating points (the thresholds calibrated for each target), with {} intervals on both axes. Dashed vertical lines are the target rates. {}",
            &[&data::confidence_percent(), ZERO_NOTE],
        ));
    let figure = page.figure(&render_chart(&chart), &caption);
    let mut out = Html::new();
    out.raw("<p>Detection against false alarms, at every threshold the run tried. Up and to the left is better.</p>")
        .push(&Html::raw_html(figure));
    out.into_string()
}

fn trial_roc(page: &mut Page, part: &Part) -> String {
    let mut chart = Chart::new(
        "Trial-level ROC of the maximum score per trial",
        Axis::linear(
            "Pfa: share of nuisance-scene trials whose maximum score reaches the threshold",
            0.0,
            1.0,
        ),
        Axis::linear("Pd: share of target-scene trials", 0.0, 1.0),
    );
    chart.diagonal = true;
    chart.empty_message =
        "no curve: the run needs both target-scene and nuisance-scene trials".into();
    let mut missing = Vec::new();
    let mut rows = Vec::new();
    for (i, &(d, tally)) in part.detectors.iter().enumerate() {
        let Some(roc) = data::trial_roc(tally) else {
            missing.push(d.label.clone());
            continue;
        };
        let se = roc
            .auc_se
            .map_or_else(String::new, |se| format!(" ± {se:.3}"));
        let name = format!("{} AUC {:.3}{se}", d.label, roc.auc);
        // Markers where the curve crosses a few fixed Pfa values, so each curve can be told
        // apart without colour.
        let markers = [0.05, 0.25, 0.5, 0.75]
            .iter()
            .filter_map(|&pfa| echobench_stats::pd_at_pfa_conservative(&roc.points, pfa))
            .map(|(x, y, _)| MarkedPoint::at(x, y))
            .collect();
        chart.series.push(Series {
            name,
            style: style_for(i, false),
            line: roc.points.iter().map(|p| (p.0, p.1)).collect(),
            markers,
        });
        rows.push((
            "",
            vec![
                detector_cell(i, &d.label),
                Html::from_text(&format!("{:.3}", roc.auc)),
                Html::from_text(&roc.auc_se.map_or("—".into(), |s| format!("{s:.3}"))),
                Html::from_text(&roc.positives.to_string()),
                Html::from_text(&roc.negatives.to_string()),
            ],
        ));
    }
    let caption = "One point per trial: a target-scene trial counts as detected, a nuisance-scene trial as a false alarm, when its maximum score reaches the threshold. AUC is the Mann–Whitney area (the chance that a target trial outscores a nuisance trial), ± its Hanley–McNeil standard error. The dotted diagonal is chance. This view ignores timing; the event-level ROC above is the one that counts alarms.";
    let mut out = page.figure(&render_chart(&chart), &Html::from_text(caption));
    out.push_str(&table(
        &["detector", "AUC", "SE", "target trials", "nuisance trials"],
        &[1, 2, 3, 4],
        &rows,
    ));
    if !missing.is_empty() {
        let mut note = Html::new();
        note.element(
            "p",
            &[("class", "note")],
            &format!(
                "No trial-level ROC for: {} (a class of trials is missing).",
                missing.join(", ")
            ),
        );
        out.push_str(&note.into_string());
    }
    out
}

fn sweep_axis_label(part: &Part, sweep: &Sweep) -> String {
    match (
        part.sweep_field(&sweep.scene),
        part.sweep_unit(&sweep.scene),
    ) {
        (Some(field), Some(unit)) => format!("{field} ({unit})"),
        (Some(field), None) => field.to_string(),
        (None, _) => "swept value".to_string(),
    }
}

fn sweep_figure(page: &mut Page, part: &Part, sweep: &Sweep, op_label: &str) -> String {
    let first = sweep.by_detector.first().cloned().unwrap_or_default();
    let numeric = !first.is_empty() && first.iter().all(|p| p.value.is_some());
    let xs: Vec<f64> = if numeric {
        first.iter().filter_map(|p| p.value).collect()
    } else {
        (0..first.len()).map(|i| i as f64).collect()
    };
    let (low, high) = xs
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), &x| {
            (l.min(x), h.max(x))
        });
    let span = if high > low { high - low } else { 1.0 };
    let pad = span * 0.06 + if numeric { 0.0 } else { 0.5 };
    let mut x_axis = Axis::linear(&sweep_axis_label(part, sweep), low - pad, high + pad);
    if !numeric {
        x_axis.custom_ticks = Some(
            first
                .iter()
                .enumerate()
                .map(|(i, p)| crate::plot::Tick {
                    value: i as f64,
                    label: p.value_text.clone(),
                })
                .collect(),
        );
    }
    let target_scene = sweep.label == "target";
    let y_axis = if target_scene {
        Axis::linear("Pd, detected target events", 0.0, 1.0)
    } else {
        rate_axis(
            "false alarms per hour (log scale)",
            sweep.by_detector.iter().flatten().flat_map(|p| {
                let r = &p.false_alarms_per_hour;
                [r.value, r.low, r.high].into_iter().flatten()
            }),
        )
    };
    let mut chart = Chart::new(
        &format!(
            "{} against the swept value, scene {}",
            if target_scene {
                "Pd"
            } else {
                "False alarms per hour"
            },
            sweep.scene
        ),
        x_axis,
        y_axis,
    );
    chart.empty_message = "no value to draw for this scene".into();
    let count = sweep.by_detector.len().max(1) as f64;
    for (i, (d, points)) in part.summaries().zip(&sweep.by_detector).enumerate() {
        // Spread the detectors slightly around each value so their error bars do not overlap.
        let dodge = (i as f64 - (count - 1.0) / 2.0) * span * 0.012;
        let mut series = Series {
            name: d.label.clone(),
            style: style_for(i, false),
            line: Vec::new(),
            markers: Vec::new(),
        };
        for (k, p) in points.iter().enumerate() {
            let Some(&x) = xs.get(k) else { continue };
            let x = x + dodge;
            let estimate = if target_scene {
                &p.pd
            } else {
                &p.false_alarms_per_hour
            };
            match estimate.value {
                Some(y) => {
                    series.line.push((x, y));
                    series.markers.push(MarkedPoint {
                        x,
                        y,
                        x_interval: None,
                        y_interval: estimate.low.zip(estimate.high),
                        note: if target_scene {
                            format!(
                                "{} at {}: {} of {} events, Pd {}",
                                d.label,
                                p.value_text,
                                p.detected,
                                p.events,
                                fmt_pd(&p.pd)
                            )
                        } else {
                            format!(
                                "{} at {}: {} false alarms, {}/h",
                                d.label,
                                p.value_text,
                                p.false_alarms,
                                fmt_estimate(&p.false_alarms_per_hour, 3)
                            )
                        },
                    });
                }
                None => series.line.push((f64::NAN, f64::NAN)),
            }
        }
        chart.series.push(series);
    }
    let caption = if target_scene {
        Html::filled(
            "Scene <code>{}</code>, at the operating point for {}: Pd per sweep value with its {} Wilson interval. Points are spread slightly sideways so the intervals stay apart.",
            &[&sweep.scene, op_label, &data::confidence_percent()],
        )
    } else {
        Html::filled(
            "Nuisance scene <code>{}</code>, at the operating point for {}: false alarms per hour per sweep value with the {} exact Poisson interval. {}",
            &[
                &sweep.scene,
                op_label,
                &data::confidence_percent(),
                &ZERO_NOTE.replace("left edge", "bottom edge"),
            ],
        )
    };
    page.figure(&render_chart(&chart), &caption)
}

fn sweeps(page: &mut Page, part: &Part) -> Option<String> {
    let sweeps = data::sweeps(&part.tallies(), 0);
    if sweeps.is_empty() {
        return None;
    }
    let op_label = targets(part).first().map_or_else(
        || "the first target".to_string(),
        |t| format!("the first target, {}", fmt_target(*t)),
    );
    let mut out = String::new();
    for sweep in &sweeps {
        out.push_str(&sweep_figure(page, part, sweep, &op_label));
    }
    Some(out)
}

fn latency(page: &mut Page, part: &Part) -> String {
    let mut chart_series = Vec::new();
    let mut rows = Vec::new();
    let mut undetected = Vec::new();
    let (mut low, mut high) = (0.0f64, 0.0f64);
    for (i, &(d, tally)) in part.detectors.iter().enumerate() {
        let Some(op) = d.operating_points.first() else {
            continue;
        };
        let latencies = data::latencies_s(tally, 0);
        rows.push((
            "",
            [
                format!("{} of {}", op.outcome.detected, op.outcome.events),
                fmt_seconds(op.latency_median_s),
                op.latency_median_interval_s
                    .filter(|(l, h)| l.is_finite() && h.is_finite())
                    .map_or("—".into(), |(l, h)| format!("[{l:.2}, {h:.2}] s")),
                fmt_seconds(op.latency_p90_s),
                fmt_seconds(latencies.last().copied()),
            ]
            .iter()
            .fold(vec![detector_cell(i, &d.label)], |mut cells, text| {
                cells.push(Html::from_text(text));
                cells
            }),
        ));
        if latencies.is_empty() {
            undetected.push(d.label.clone());
            continue;
        }
        let n = latencies.len() as f64;
        let mut line = Vec::with_capacity(2 * latencies.len());
        for (k, &l) in latencies.iter().enumerate() {
            line.push((l, k as f64 / n));
            line.push((l, (k + 1) as f64 / n));
            low = low.min(l);
            high = high.max(l);
        }
        let markers = op
            .latency_median_s
            .map(|m| MarkedPoint {
                x: m,
                y: 0.5,
                x_interval: op.latency_median_interval_s,
                y_interval: None,
                note: format!("{} median latency {}", d.label, fmt_seconds(Some(m))),
            })
            .into_iter()
            .collect();
        chart_series.push(Series {
            name: format!("{} median {}", d.label, fmt_seconds(op.latency_median_s)),
            style: style_for(i, false),
            line,
            markers,
        });
    }
    let high = high.max(low + 0.5);
    let pad = (high - low) * 0.03;
    let mut chart = Chart::new(
        "Latency distribution at the first operating point",
        Axis::linear("latency from the event's start, s", low - pad, high + pad),
        Axis::linear("share of detected events", 0.0, 1.0),
    );
    chart.series = chart_series;
    chart.horizontal_lines.push(ReferenceLine {
        value: 0.5,
        label: "median".into(),
    });
    chart.empty_message = "no event was detected at the first operating point".into();
    let op_label = targets(part)
        .first()
        .map_or_else(String::new, |t| format!(" for {}", fmt_target(*t)));
    let mut caption = Html::filled(
        "Empirical distribution of the latency of detected events (first counted alarm minus the event's start; negative when the alarm came within the early tolerance), at the operating point{}. Markers are the medians with their {} distribution-free interval.",
        &[&op_label, &data::confidence_percent()],
    );
    if !undetected.is_empty() {
        caption.push(&Html::filled(
            " No event detected, so no curve: {}.",
            &[&undetected.join(", ")],
        ));
    }
    let mut out = page.figure(&render_chart(&chart), &caption);
    out.push_str(&table(
        &[
            "detector",
            "detected",
            "median",
            "median 95 %",
            "90th percentile",
            "longest",
        ],
        &[1, 2, 3, 4, 5],
        &rows,
    ));
    out
}

fn source_name(source: &str) -> String {
    if source == "none" {
        "(no nuisance active)".to_string()
    } else {
        source.to_string()
    }
}

fn false_alarms_by_nuisance(page: &mut Page, part: &Part) -> String {
    let mut groups = Vec::new();
    for (i, d) in part.summaries().enumerate() {
        let Some(op) = d.operating_points.first() else {
            continue;
        };
        let hours = op.outcome.exposure_hours;
        let bars = op
            .false_alarms_by_source
            .iter()
            .filter(|(_, &n)| n > 0)
            .filter_map(|(source, &n)| {
                let rate = Estimate::rate(n, hours);
                let value = rate.value?;
                Some(Bar {
                    label: source_name(source),
                    value,
                    interval: rate.low.zip(rate.high),
                    colour: PALETTE[i % PALETTE.len()].to_string(),
                    text: format!("{}/h ({n})", format_number(value, 3)),
                })
            })
            .collect();
        groups.push(BarGroup {
            label: d.label.clone(),
            bars,
            empty_text: if op.outcome.false_alarms == 0 {
                "no false alarm".into()
            } else {
                "false alarms not attributed".into()
            },
        });
    }
    let chart = BarChart {
        title: "False alarms per hour by the nuisance active at the time".into(),
        axis_label: "false alarms per hour of noise-only test time".into(),
        groups,
        empty_message: "no detector raised a false alarm at the first operating point".into(),
        width: 900.0,
    };
    let op_label = targets(part)
        .first()
        .map_or_else(String::new, |t| format!(" for {}", fmt_target(*t)));
    let caption = Html::filled(
        "At the operating point{}: each false alarm is counted against every nuisance source active at its time (so a scene with two swaying objects counts it twice), per hour of all noise-only test time, with the {} exact Poisson interval; the count is in brackets.",
        &[&op_label, &data::confidence_percent()],
    );
    let mut out = page.figure(&render_bar_chart(&chart), &caption);
    out.push_str(
        &Html::filled(
            "<p class=\"note\">False alarms per room, with each room's calibration rate and the room that set each threshold, are in the <a href=\"#{}\">false-alarm table</a>.</p>",
            &[&part.id("false-alarm-table")],
        )
        .into_string(),
    );
    out
}

/// The hold-time trade-off figure of a presence product.
fn hold_tradeoff(page: &mut Page, part: &Part) -> String {
    let Some(chart) = presence_part::tradeoff_chart(part, &|i| style_for(i, false)) else {
        return String::new();
    };
    let holds = presence_part::verdicts(part)
        .first()
        .map(|(_, _, v)| {
            v.tradeoff
                .iter()
                .map(|t| format!("{} s", format_number(t.hold_s, 3)))
                .collect::<Vec<_>>()
                .join(", ")
        })
        .unwrap_or_default();
    let caption = Html::filled(
        "Each line is one detector at its operating threshold for the first budget, re-scored on the same test trials at every hold of the sweep ({}), shortest hold at the left. False-on time counts all empty test time: the rooms, and the time before a visitor comes and after they leave, where a long hold keeps the light on for nobody. A longer hold never gives more drop-outs nor less false-on time (without a lock-out), so each line runs up-left to down-right: pick the hold whose drop-outs a still reader tolerates and whose false-on time the empty room can afford. The bars at the product's own hold are {} intervals.",
        &[&holds, &data::confidence_percent()],
    );
    page.figure(&render_chart(&chart), &caption)
}

fn cost(part: &Part) -> String {
    let run = part.run;
    let mut rows = Vec::new();
    for (i, d) in part.summaries().enumerate() {
        let measured = run.timing.as_ref().and_then(|t| {
            let seconds = *t.detector_s.get(&format!("{}/{}", d.product, d.label))?;
            let samples = t.samples_by_product.get(&d.product).copied().unwrap_or(0);
            (samples > 0 && seconds > 0.0).then_some((seconds, samples))
        });
        let (ns, rate) = match measured {
            Some((seconds, samples)) => (
                format!("{} ns", format_number(seconds / samples as f64 * 1e9, 3)),
                format_number(samples as f64 / seconds / 1e6, 3),
            ),
            None => ("not measured".to_string(), "not measured".to_string()),
        };
        let (memory, ops) = d.declared_cost.map_or_else(
            || ("not declared".to_string(), "not declared".to_string()),
            |c| (fmt_bytes(c.state_bytes), format_number(c.ops_per_sample, 3)),
        );
        rows.push((
            "",
            vec![
                detector_cell(i, &d.label),
                Html::from_text(&d.plugin),
                Html::from_text(&ns),
                Html::from_text(&rate),
                Html::from_text(&memory),
                Html::from_text(&ops),
            ],
        ));
    }
    let mut out = table(
        &[
            "detector",
            "plugin",
            "time per sample",
            "M samples/s",
            "declared state memory",
            "declared operations per sample",
        ],
        &[2, 3, 4, 5],
        &rows,
    );
    match &run.timing {
        Some(t) => {
            out.push_str(&Html::filled(
                "<p class=\"note\">Measured in this run: each detector's processing time summed over threads, divided by the {} samples of this product's test trials every detector was fed ({} s of wall time for the whole run, {} s of it synthesis summed over threads). It is a wall-clock figure of the machine that ran the suite, useful to compare detectors with each other; for a microcontroller, the declared state memory and arithmetic per sample (as each plugin states them for this suite's stream) are the better guide.</p>",
                &[
                    &fmt_count(t.samples_by_product.get(part.name).copied().unwrap_or(0)),
                    &format_number(t.wall_s, 3),
                    &format_number(t.synthesis_s, 3),
                ],
            ).into_string());
        }
        None => out.push_str("<p class=\"note\">Time per sample: not measured. This folder has no <code>timing.json</code> (a merged run keeps no wall-clock figures). The declared state memory and arithmetic per sample are what each plugin states for this suite's stream.</p>"),
    }
    out
}

fn nominal(part: &Part) -> Option<String> {
    let with: Vec<(usize, &DetectorSummary)> = part
        .summaries()
        .enumerate()
        .filter(|(_, d)| d.nominal.is_some())
        .collect();
    if with.is_empty() {
        return None;
    }
    let mut rows = Vec::new();
    let mut details = String::new();
    for (i, d) in &with {
        let Some(n) = &d.nominal else { continue };
        let m = &n.measured_frame_pfa;
        let mut verdict = Html::new();
        match (m.low, m.high) {
            (Some(l), Some(h)) if l <= n.nominal_frame_pfa && n.nominal_frame_pfa <= h => {
                verdict.element("span", &[("class", "good")], "consistent");
            }
            (Some(l), Some(_)) if l > n.nominal_frame_pfa => {
                let ratio = m.value.map_or("—".into(), |v| {
                    format_number(v / n.nominal_frame_pfa.max(f64::MIN_POSITIVE), 3)
                });
                verdict
                    .element("span", &[("class", "bad")], "more than promised")
                    .text(&format!(" (×{ratio})"));
            }
            (Some(_), Some(_)) => {
                verdict.text("fewer than promised");
            }
            _ => {
                verdict.text("not measured");
            }
        };
        let measured = fmt_probability(m);
        rows.push((
            "",
            vec![
                detector_cell(*i, &d.label),
                Html::from_text(&format_number(n.threshold, 4)),
                Html::from_text(&format_number(n.nominal_frame_pfa, 3)),
                Html::from_text(&measured),
                Html::from_text(&fmt_count(n.noise_frames)),
                verdict,
            ],
        ));
        let mut summary = Html::new();
        summary.raw("<details>").element(
            "summary",
            &[],
            &format!("{}: measured per-frame Pfa by scene", d.label),
        );
        details.push_str(&summary.into_string());
        let scene_rows: Vec<(&'static str, Vec<Html>)> = n
            .by_scene
            .iter()
            .map(|(scene, sweep, e)| {
                let name = match sweep {
                    Some(v) => format!("{scene} = {v}"),
                    None => scene.clone(),
                };
                (
                    "",
                    vec![Html::from_text(&name), Html::from_text(&fmt_probability(e))],
                )
            })
            .collect();
        details.push_str(&table(
            &["scene", "measured per-frame Pfa [95 %]"],
            &[1],
            &scene_rows,
        ));
        details.push_str("</details>");
    }
    let mut out = String::from("<p>For detectors with a closed-form threshold (CFAR types), the per-frame false-alarm probability the closed form promises, against the share of frames outside event windows at or above that threshold, all nuisance scenes pooled, with the 95 % Clopper–Pearson interval. The closed form assumes independent cells of white Gaussian noise (rectangular, non-overlapping windows); nuisance scenes break that assumption on purpose, so a large excess there is the nuisance at work, not a fault of the formula.</p>");
    out.push_str(&table(
        &[
            "detector",
            "threshold",
            "nominal Pfa",
            "measured Pfa [95 %]",
            "frames",
            "verdict",
        ],
        &[1, 2, 3, 4],
        &rows,
    ));
    out.push_str(&details);
    Some(out)
}

fn failures(part: &Part) -> Option<String> {
    const MAX_ROWS: usize = 100;
    let total: usize = part.summaries().map(|d| d.failures.len()).sum();
    if total == 0 {
        return None;
    }
    let mut rows = Vec::new();
    let mut more = Vec::new();
    for d in part.summaries() {
        for f in d.failures.iter().take(MAX_ROWS) {
            rows.push((
                "",
                [
                    d.label.clone(),
                    f.scene.clone(),
                    f.sweep_point.to_string(),
                    f.trial.to_string(),
                    f.phase.clone(),
                    f.message.clone(),
                ]
                .iter()
                .map(|text| Html::from_text(text))
                .collect(),
            ));
        }
        if d.failures.len() > MAX_ROWS {
            more.push(format!(
                "{}: {} more not listed",
                d.label,
                d.failures.len() - MAX_ROWS
            ));
        }
    }
    let mut out = format!(
        "<p class=\"bad\">{total} failed detector trials. A failed trial is left out of that detector's tallies, and the detector is not ranked.</p>"
    );
    out.push_str(&table(
        &[
            "detector",
            "scene",
            "sweep point",
            "trial",
            "phase",
            "message",
        ],
        &[2, 3],
        &rows,
    ));
    if !more.is_empty() {
        let mut note = Html::new();
        note.element("p", &[("class", "note")], &more.join("; "));
        out.push_str(&note.into_string());
    }
    Some(out)
}

fn parameters(part: &Part) -> String {
    let mut rows = Vec::new();
    for (i, d) in part.summaries().enumerate() {
        let mut params = Html::new();
        for (k, (key, value)) in d.params.iter().enumerate() {
            if k > 0 {
                params.raw(", ");
            }
            params.element("code", &[], key).text(" = ").text(value);
        }
        if d.params.is_empty() {
            params.text("(none)");
        }
        rows.push((
            "",
            vec![
                detector_cell(i, &d.label),
                Html::from_text(&d.plugin),
                params,
            ],
        ));
    }
    let mut out = String::from("<p class=\"note\">As each detector ran on this product's stream: bands given in m/s are converted through this product's carrier.</p>");
    out.push_str(&table(&["detector", "plugin", "parameters"], &[], &rows));
    out
}

fn suite_text(run: &RunFolder) -> String {
    let mut out = Html::new();
    match &run.suite_text {
        Some(text) => out.element("pre", &[], text),
        None => out.raw("<p class=\"note\">This folder has no <code>suite.yaml</code>.</p>"),
    };
    out.into_string()
}

fn baseline_comparison(page: &mut Page, part: &Part, baseline: &RunFolder) -> String {
    let run = part.run;
    let mut out = Html::filled(
        "<p>Baseline: suite <code>{}</code>, seed {}, {} test trials. This run: suite <code>{}</code>, seed {}, {} test trials. Detectors are matched by product and label; intervals are {}.</p>",
        &[
            &baseline.summary.suite,
            &baseline.summary.seed.to_string(),
            &baseline.summary.test_trials.to_string(),
            &run.summary.suite,
            &run.summary.seed.to_string(),
            &run.summary.test_trials.to_string(),
            &data::confidence_percent(),
        ],
    )
    .into_string();
    // The baseline's detector of the same product and label, by its index in the baseline.
    let pairs: Vec<(usize, &DetectorSummary, &DetectorSummary, usize)> = part
        .summaries()
        .enumerate()
        .filter_map(|(i, d)| {
            baseline
                .summary
                .detectors
                .iter()
                .position(|b| b.product == d.product && b.label == d.label)
                .map(|j| (i, d, &baseline.summary.detectors[j], j))
        })
        .collect();
    let auc = |d: &DetectorSummary| match (finite(d.trial_auc), finite(d.trial_auc_se)) {
        (Some(a), Some(se)) => format!("{a:.3} ± {se:.3}"),
        (Some(a), None) => format!("{a:.3}"),
        _ => "—".into(),
    };
    let rows: Vec<(&'static str, Vec<Html>)> = pairs
        .iter()
        .map(|(i, d, b, _)| {
            let delta = match (finite(d.trial_auc), finite(b.trial_auc)) {
                (Some(x), Some(y)) => format!("{:+.3}", x - y),
                _ => "—".into(),
            };
            (
                "",
                vec![
                    detector_cell(*i, &d.label),
                    Html::from_text(&auc(b)),
                    Html::from_text(&auc(d)),
                    Html::from_text(&delta),
                ],
            )
        })
        .collect();
    out.push_str("<h4>Trial-level AUC</h4>");
    out.push_str(&table(
        &[
            "detector",
            "baseline AUC ± SE",
            "this run AUC ± SE",
            "change",
        ],
        &[1, 2, 3],
        &rows,
    ));
    let targets = targets(part);
    for (o, target) in targets.iter().enumerate() {
        let rows: Vec<(&'static str, Vec<Html>)> = pairs
            .iter()
            .map(|(i, d, b, _)| {
                let ours = d.operating_points.get(o);
                let theirs = b.operating_points.get(o);
                let pd = |x: Option<&OperatingSummary>| {
                    Html::from_text(&x.map_or("—".into(), |x| fmt_pd(&x.outcome.pd)))
                };
                let fa = |x: Option<&OperatingSummary>| {
                    Html::from_text(&x.map_or("—".into(), |x| {
                        fmt_estimate(&x.outcome.false_alarms_per_hour, 3)
                    }))
                };
                (
                    "",
                    vec![
                        detector_cell(*i, &d.label),
                        pd(theirs),
                        pd(ours),
                        fa(theirs),
                        fa(ours),
                    ],
                )
            })
            .collect();
        let mut h = Html::new();
        h.element("h4", &[], &format!("At target {}", fmt_target(*target)));
        out.push_str(&h.into_string());
        out.push_str(&table(
            &[
                "detector",
                "baseline Pd",
                "this run Pd",
                "baseline FA/h",
                "this run FA/h",
            ],
            &[1, 2, 3, 4],
            &rows,
        ));
    }
    let only_here: Vec<&str> = part
        .summaries()
        .filter(|d| {
            !baseline
                .summary
                .detectors
                .iter()
                .any(|b| b.product == d.product && b.label == d.label)
        })
        .map(|d| d.label.as_str())
        .collect();
    let only_there: Vec<&str> = baseline
        .summary
        .detectors
        .iter()
        .filter(|b| b.product == part.name && !part.summaries().any(|d| d.label == b.label))
        .map(|b| b.label.as_str())
        .collect();
    if !only_here.is_empty() {
        let mut note = Html::new();
        note.element(
            "p",
            &[("class", "note")],
            &format!("Only in this run: {}.", only_here.join(", ")),
        );
        out.push_str(&note.into_string());
    }
    if !only_there.is_empty() {
        let mut note = Html::new();
        note.element(
            "p",
            &[("class", "note")],
            &format!("Only in the baseline: {}.", only_there.join(", ")),
        );
        out.push_str(&note.into_string());
    }
    out.push_str(
        &Html::filled(
            "<h4>Event-level ROC, this run (solid) against the baseline (dashed)</h4><p class=\"note\">Dashed vertical lines are the target rates. Each curve is drawn down to the threshold where its detected events or false alarms first fall (below it the curve folds back; see the event-level ROC above). {}</p><div class=\"grid2\">",
            &[ZERO_NOTE],
        )
        .into_string(),
    );
    for (i, d, _, j) in &pairs {
        let ours = data::grid_roc(part.detectors[*i].1);
        let theirs = data::grid_roc(&baseline.tallies.detectors[*j]);
        let axis = rate_axis(
            "false alarms per hour (log scale)",
            ours.iter()
                .chain(&theirs)
                .filter(|p| p.monotone)
                .filter_map(|p| p.false_alarms_per_hour)
                .chain(targets.iter().copied()),
        );
        let mut chart = Chart::new(
            &format!("{}: event-level ROC against the baseline", d.label),
            axis,
            Axis::linear("Pd", 0.0, 1.0),
        );
        chart.width = 560.0;
        chart.height = 330.0;
        chart.empty_message = "no curve in either run".into();
        let mut now = grid_series(&ours, style_for(*i, false), "this run".into());
        now.markers = d
            .operating_points
            .iter()
            .filter_map(|op| operating_marker(d, op))
            .collect();
        let mut before = grid_series(&theirs, style_for(*i, true), "baseline".into());
        before.style.marker = Marker::None;
        chart.series.push(before);
        chart.series.push(now);
        chart.vertical_lines = targets
            .iter()
            .map(|&t| ReferenceLine {
                value: t,
                // Short labels: two targets close together must fit a small plot.
                label: format!("{}/h", format_number(t, 3)),
            })
            .collect();
        let cuts: Vec<String> = [("this run", &ours), ("baseline", &theirs)]
            .iter()
            .filter_map(|(which, points)| {
                data::fold_back_cut(points)
                    .map(|t| format!("{which} cut below threshold {}", format_number(t, 4)))
            })
            .collect();
        let mut caption = Html::filled(
            "<strong>{}</strong>: markers are this run's operating points.",
            &[&d.label],
        );
        if !cuts.is_empty() {
            caption.text(&format!(" Folds back, not drawn: {}.", cuts.join("; ")));
        }
        out.push_str(&page.figure(&render_chart(&chart), &caption));
    }
    out.push_str("</div>");
    out
}

/// One product's part: its sections, in page order. Product sections of `extra` come
/// right after the detection and false-alarm tables, which they explain.
fn product_entries(
    page: &mut Page,
    part: &Part,
    baseline: Option<&RunFolder>,
    extra: &[(usize, &Section)],
) -> Vec<Entry> {
    let mut entries = Vec::new();
    let mut add = |id: &str, title: &str, html: String| {
        entries.push(Entry {
            id: part.id(id),
            title: title.to_string(),
            html,
        });
    };
    if let Some(tables) = presence_part::pin_tables(part) {
        add(
            "output-pin",
            "What the output pin does",
            tables.into_string(),
        );
        add(
            "hold-tradeoff",
            "Hold time: drop-outs against false-on time",
            hold_tradeoff(page, part),
        );
    }
    add(
        "ranking",
        if presence_part::verdicts(part).is_empty() {
            "Which detectors meet the false-alarm target"
        } else {
            "Motion events, scored as an intrusion alarm would be"
        },
        ranking(part),
    );
    add(
        "detection",
        "Detection by target scene",
        product_part::detection_tables(part).into_string(),
    );
    add(
        "false-alarm-rooms",
        "False alarms by room",
        product_part::false_alarm_tables(part).into_string(),
    );
    if let Some(table) = events_part::events_table(part) {
        add(
            "rare-events",
            "Rare events: false alarms per occurrence",
            table.into_string(),
        );
    }
    if let Some(table) = rare_part::rare_table(part) {
        let mut html = table.into_string();
        for (label, room, chart) in rare_part::rate_charts(part, &|i| style_for(i, false)) {
            let caption = Html::filled(
                "{}: false alarms per hour against threshold in {}, the room that sets its one-per-day threshold. Dots: counted on the room's calibration trials at each grid threshold above the fit threshold, with {} exact Poisson intervals (a count of 0 sits on the axis's zero edge). Solid line: the fitted generalized Pareto tail; dashed: its {} profile-likelihood band. Where the dots still reach, the curve must pass through them; below the lowest dot only the fit speaks. Horizontal lines: one false alarm per hour, day, week and month.",
                &[&label, &room, &data::confidence_percent(), &data::confidence_percent()],
            );
            html.push_str(&page.figure(&render_chart(&chart), &caption));
        }
        for (label, room, chart) in rare_part::stability_charts(part, &|i| style_for(i, false)) {
            let caption = Html::filled(
                "{}: how the fit threshold was chosen in {}. For each candidate threshold u, the shape ξ of the generalized Pareto tail fitted to the cluster maxima above u, with its {} profile-likelihood interval (fits held at ξ ≥ 0). Above a threshold where the tail model holds, ξ stays level within the intervals; the chosen u (vertical line) is the lowest candidate whose fit passes its goodness-of-fit test and whose model also describes the maxima above every higher candidate.",
                &[&label, &room, &data::confidence_percent()],
            );
            html.push_str(&page.figure(&render_chart(&chart), &caption));
        }
        add(
            "rare-rates",
            "Rare false-alarm rates: thresholds by tail extrapolation",
            html,
        );
    }
    if let Some(zone) = zone_part::zone_of(part) {
        let mut html = zone_part::zone_table(part, zone).into_string();
        for (svg, caption) in zone_part::zone_pictures(part, zone, true) {
            html.push_str(&page.figure(svg, &caption));
        }
        let each = zone_part::zone_pictures(part, zone, false);
        if !each.is_empty() {
            html.push_str("<details><summary>Each detector's floor plan, with where walkers were first detected</summary>");
            for (svg, caption) in each {
                html.push_str(&page.figure(svg, &caption));
            }
            html.push_str("</details>");
        }
        add(
            "zone",
            "Detection zone: where each detector first sees a walker",
            html,
        );
    }
    for (k, section) in extra {
        add(&format!("extra-{k}"), &section.title, section.html.clone());
    }
    add(
        "event-roc",
        "ROC: detection against false alarms per hour",
        event_roc(page, part),
    );
    add("trial-roc", "Trial-level ROC", trial_roc(page, part));
    add(
        "sweeps",
        "Detection against the swept value",
        sweeps(page, part).unwrap_or_else(|| {
            "<p class=\"note\">No scene of this product has a sweep.</p>".into()
        }),
    );
    add("latency", "Latency", latency(page, part));
    add(
        "false-alarms",
        "False alarms by nuisance",
        false_alarms_by_nuisance(page, part),
    );
    add("cost", "Cost", cost(part));
    add(
        "cfar",
        "CFAR: nominal against measured per-frame Pfa",
        nominal(part).unwrap_or_else(|| {
            "<p class=\"note\">No detector of this product has a closed-form threshold.</p>".into()
        }),
    );
    if let Some(b) = baseline {
        add(
            "baseline",
            "Against the baseline",
            baseline_comparison(page, part, b),
        );
    }
    add(
        "failures",
        "Failures",
        failures(part).unwrap_or_else(|| "<p>No detector failed on any trial.</p>".into()),
    );
    add(
        "parameters",
        "Detector parameters, as used",
        parameters(part),
    );
    entries
}

/// Renders the whole report: one HTML file with inline CSS and SVG and a small self-check
/// script, no outside resources, and no date or time in it, so the same inputs always give
/// the same bytes.
///
/// The page holds the run's facts and cautions, then the `extra` sections without a
/// product (in the order given), then one part per product (in suite order) with every
/// section computed on that product's detectors alone and that product's `extra`
/// sections after its detection and false-alarm tables, then the suite text. An extra
/// section naming a product the run does not have goes with the run's sections, its title
/// saying so.
pub fn render_html(run: &RunFolder, baseline: Option<&RunFolder>, extra: &[Section]) -> String {
    let mut page = Page { figures: 0 };
    let parts = parts(run);
    let mut top = Vec::new();
    for (k, section) in extra.iter().enumerate() {
        let known = section
            .product
            .as_deref()
            .is_none_or(|p| parts.iter().any(|part| part.name == p));
        if known && section.product.is_some() {
            continue;
        }
        let title = match &section.product {
            Some(p) => format!("{} (product `{p}`, not in this run)", section.title),
            None => section.title.clone(),
        };
        top.push(Entry {
            id: format!("extra-{}", k + 1),
            title,
            html: section.html.clone(),
        });
    }
    let mut product_parts = Vec::new();
    for part in &parts {
        let own: Vec<(usize, &Section)> = extra
            .iter()
            .enumerate()
            .filter(|(_, s)| s.product.as_deref() == Some(part.name))
            .map(|(k, s)| (k + 1, s))
            .collect();
        let entries = product_entries(&mut page, part, baseline, &own);
        product_parts.push((part, product_part::heading(part), entries));
    }

    // The page: its own markup written here, every title and name escaped by `Html`, and
    // the sections' bodies (built by this crate, or handed in by the caller as HTML) as they
    // are.
    let mut page = Html::new();
    page.raw("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">")
        .element("title", &[], &format!("echobench report: {}", run.summary.suite))
        .raw("<script>")
        .raw(ERROR_CAPTURE)
        .raw("</script><style>")
        .raw(CSS)
        .raw("</style></head><body>")
        .push(&Html::raw_html(header(run)))
        .push(&Html::raw_html(cautions(run, baseline)))
        .raw("<nav class=\"toc\"><strong>Contents</strong><ol>");
    let link = |page: &mut Html, id: &str, title: &str| {
        page.open("li", &[])
            .element("a", &[("href", &format!("#{id}"))], title)
            .close("li");
    };
    for entry in &top {
        link(&mut page, &entry.id, &entry.title);
    }
    for (part, _, entries) in &product_parts {
        page.open("li", &[])
            .open("a", &[("href", &format!("#{}", part.id("product")))])
            .raw("Product ")
            .push(&part.name_html())
            .close("a")
            .open("ol", &[]);
        for entry in entries {
            link(&mut page, &entry.id, &entry.title);
        }
        page.raw("</ol></li>");
    }
    page.raw("<li><a href=\"#suite\">The suite</a></li></ol></nav><main>");
    for entry in &top {
        page.open("section", &[("id", &entry.id)])
            .element("h2", &[], &entry.title)
            .push(&Html::raw_html(entry.html.clone()))
            .close("section");
    }
    for (part, heading, entries) in &product_parts {
        page.open(
            "section",
            &[
                ("class", "product"),
                ("id", &part.id("product")),
                ("data-product", part.name),
            ],
        )
        .raw("<h2>Product ")
        .push(&part.name_html())
        .raw("</h2>")
        .push(heading);
        for entry in entries {
            page.open("section", &[("id", &entry.id)])
                .element("h3", &[], &entry.title)
                .push(&Html::raw_html(entry.html.clone()))
                .close("section");
        }
        page.raw("</section>");
    }
    page.raw("<section id=\"suite\"><h2>The suite</h2>")
        .push(&Html::raw_html(suite_text(run)))
        .raw("</section>");
    let mut out = page.into_string();
    out.push_str("</main><script>");
    out.push_str(SELF_CHECK);
    out.push_str("</script></body></html>\n");
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn target_rates_read_plainly() {
        assert_eq!(fmt_target(1.0), "1/h");
        assert_eq!(fmt_target(1.0 / 24.0), "1/day");
        assert_eq!(fmt_target(10.0), "10/h");
        assert_eq!(fmt_target(1.0 / 48.0), "0.0208/h (1 per 48 h)");
        assert_eq!(fmt_target(0.3), "0.3/h");
        assert_eq!(fmt_bytes(2104), "2\u{2009}104 B (2.05 KiB)");
        assert_eq!(fmt_count(11_472_000), "11\u{2009}472\u{2009}000");
        assert_eq!(fmt_count(999), "999");
    }

    #[test]
    fn styles_differ_in_colour_or_shape_for_many_detectors() {
        let styles: Vec<(String, Marker)> = (0..64)
            .map(|i| {
                let s = style_for(i, false);
                (s.colour, s.marker)
            })
            .collect();
        for a in 0..styles.len() {
            for b in a + 1..styles.len() {
                assert_ne!(styles[a], styles[b], "{a} and {b}");
            }
        }
    }
}
