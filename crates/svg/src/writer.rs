//! The writer: elements with escaped attribute values and escaped text.

use std::fmt::{self, Display, Write as _};

use crate::escape_into;

/// The SVG namespace, for the `xmlns` attribute of a document's root element.
pub const SVG_NAMESPACE: &str = "http://www.w3.org/2000/svg";

/// SVG markup under construction: a whole document or a fragment of one.
///
/// Every attribute value and every text goes in escaped; see the crate doc.
///
/// ```
/// use echobench_svg::{Svg, SVG_NAMESPACE};
/// let mut svg = Svg::new();
/// svg.tag("svg").attr("xmlns", SVG_NAMESPACE).view_box(200, 100).open();
/// svg.tag("rect").px("x", 10.0).px("y", 5.0).attr("fill", "#ffffff").end();
/// svg.text_at(20.0, 30.0, "start", 12.0).content("a < b & \"c\"");
/// svg.close("svg");
/// assert_eq!(
///     svg.as_str(),
///     "<svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 200 100\" width=\"200\" \
///      height=\"100\"><rect x=\"10.0\" y=\"5.0\" fill=\"#ffffff\"/><text x=\"20.0\" \
///      y=\"30.0\" text-anchor=\"start\" font-size=\"12\">a &lt; b &amp; &quot;c&quot;</text></svg>"
/// );
/// ```
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Svg(String);

impl Svg {
    /// Nothing yet.
    pub fn new() -> Svg {
        Svg(String::new())
    }

    /// Opens element `name`: attributes follow on the returned [`Tag`], which then ends it
    /// empty ([`Tag::end`]), with text ([`Tag::content`]) or open for children
    /// ([`Tag::open`], closed later by [`Svg::close`]).
    pub fn tag(&mut self, name: &'static str) -> Tag<'_> {
        self.0.push('<');
        self.0.push_str(name);
        Tag {
            out: &mut self.0,
            name,
        }
    }

    /// Closes element `name`, opened earlier with [`Tag::open`].
    pub fn close(&mut self, name: &'static str) {
        self.0.push_str("</");
        self.0.push_str(name);
        self.0.push('>');
    }

    /// Character data, escaped.
    pub fn text(&mut self, text: &str) {
        escape_into(&mut self.0, text);
    }

    /// A `<text>` element at (`x`, `y`) px with its anchor and font size, as the plots write
    /// them; add attributes and finish it with [`Tag::content`].
    pub fn text_at(&mut self, x: f64, y: f64, anchor: &'static str, font_px: f64) -> Tag<'_> {
        self.tag("text")
            .px("x", x)
            .px("y", y)
            .attr("text-anchor", anchor)
            .attr("font-size", font_px)
    }

    /// A `<text>` turned upright (read from bottom to top) about (`x`, `y`) px, centred on
    /// that point, its baseline `baseline_drop_px` below it before the turn: the title of a
    /// vertical axis, as every picture of the project draws it. Finish with [`Tag::content`].
    pub fn upright_text_at(
        &mut self,
        x: f64,
        y: f64,
        baseline_drop_px: f64,
        font_px: f64,
    ) -> Tag<'_> {
        self.text_at(x, y + baseline_drop_px, "middle", font_px)
            .attr("transform", format_args!("rotate(-90 {x:.1} {y:.1})"))
    }

    /// Opens a standalone picture of `width` × `height` px: the `<svg>` root (namespace, view
    /// box, sans-serif text) and a white background, as the zone and tuning pictures start.
    /// Close it with `close("svg")`.
    pub fn white_page(&mut self, width: f64, height: f64) {
        self.tag("svg")
            .attr("xmlns", SVG_NAMESPACE)
            .view_box(width, height)
            .attr("font-family", "sans-serif")
            .open();
        self.tag("rect")
            .attr("width", width)
            .attr("height", height)
            .attr("fill", "#ffffff")
            .end();
    }

    /// Markup written by this crate (a fragment or a whole document, e.g. to nest it).
    pub fn append(&mut self, other: &Svg) {
        self.0.push_str(&other.0);
    }

    /// The markup so far.
    pub fn as_str(&self) -> &str {
        &self.0
    }

    /// Whether nothing has been written.
    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }

    /// The markup.
    pub fn into_string(self) -> String {
        self.0
    }
}

impl Display for Svg {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

/// Writes what is formatted into it escaped.
struct Escaping<'a>(&'a mut String);

impl fmt::Write for Escaping<'_> {
    fn write_str(&mut self, s: &str) -> fmt::Result {
        escape_into(self.0, s);
        Ok(())
    }
}

/// An element being opened: its attributes, then how it ends.
#[must_use = "an element must be ended with end, open or content"]
pub struct Tag<'a> {
    out: &'a mut String,
    name: &'static str,
}

impl Tag<'_> {
    /// Attribute `name` with `value` as its `Display` writes it, escaped.
    pub fn attr(self, name: &'static str, value: impl Display) -> Self {
        self.out.push(' ');
        self.out.push_str(name);
        self.out.push_str("=\"");
        // Writing into a String cannot fail.
        let _ = write!(Escaping(self.out), "{value}");
        self.out.push('"');
        self
    }

    /// Attribute `name` when `value` is `Some`.
    pub fn attr_if(self, name: &'static str, value: Option<impl Display>) -> Self {
        match value {
            Some(value) => self.attr(name, value),
            None => self,
        }
    }

    /// A coordinate or length in px with one decimal (a tenth of a pixel is below what a
    /// screen shows, and fixed decimals keep the output stable).
    pub fn px(self, name: &'static str, value: f64) -> Self {
        self.fixed(name, value, 1)
    }

    /// A number with `decimals` decimals.
    pub fn fixed(self, name: &'static str, value: f64, decimals: usize) -> Self {
        self.attr(name, format_args!("{value:.decimals$}"))
    }

    /// `viewBox="0 0 W H" width="W" height="H"`: user units are pixels.
    pub fn view_box(self, width: impl Display, height: impl Display) -> Self {
        self.attr("viewBox", format_args!("0 0 {width} {height}"))
            .attr("width", &width)
            .attr("height", &height)
    }

    /// Ends the element empty (`/>`).
    pub fn end(self) {
        self.out.push_str("/>");
    }

    /// Ends the opening tag (`>`): children follow, then [`Svg::close`] with the same name.
    pub fn open(self) {
        self.out.push('>');
    }

    /// Ends the element with `text` inside it, escaped.
    pub fn content(self, text: &str) {
        self.out.push('>');
        escape_into(self.out, text);
        self.out.push_str("</");
        self.out.push_str(self.name);
        self.out.push('>');
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn attribute_values_and_text_cannot_break_out() {
        let hostile = "\"><script>alert('x')</script><x a=\"";
        let mut svg = Svg::new();
        svg.tag("g").attr("class", hostile).open();
        svg.tag("title").content(hostile);
        svg.text(hostile);
        svg.tag("path")
            .attr("d", format_args!("M{},{}", 1, hostile))
            .end();
        svg.close("g");
        let text = svg.into_string();
        assert!(!text.contains("<script"), "{text}");
        // Only the markup written here has quotes: three attributes, two quotes each.
        assert_eq!(text.matches('"').count(), 4, "{text}");
        assert!(text.starts_with("<g class=\"&quot;&gt;&lt;script&gt;"));
        assert!(text.ends_with("\"/></g>"));
    }

    #[test]
    fn numbers_use_the_decimals_asked_for() {
        let mut svg = Svg::new();
        svg.tag("rect")
            .px("x", 1.25)
            .fixed("y", 2.0, 2)
            .attr("width", 900.0)
            .attr("height", 12.5)
            .attr_if("rx", None::<f64>)
            .attr_if("ry", Some(3))
            .end();
        assert_eq!(
            svg.as_str(),
            "<rect x=\"1.2\" y=\"2.00\" width=\"900\" height=\"12.5\" ry=\"3\"/>"
        );
        let mut nested = Svg::new();
        nested.tag("g").open();
        nested.append(&svg);
        nested.close("g");
        assert_eq!(nested.to_string(), format!("<g>{}</g>", svg.as_str()));
        assert!(!nested.is_empty() && Svg::new().is_empty());
    }
}
