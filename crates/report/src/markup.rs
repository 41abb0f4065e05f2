//! HTML that is escaped unless said otherwise.
//!
//! Product names, scene ids, detector labels and miss reasons come from user files, so the
//! page is built with [`Html`]: text goes in through [`Html::text`] (or [`Html::from_text`]),
//! which escapes it, and attribute values through [`Html::open`], which escapes them too.
//! Markup goes in through [`Html::raw`], which takes only `&'static str`, i.e. literals
//! written in this crate, so a string read from a file cannot reach the page unescaped by
//! accident. The one way in for markup built elsewhere (a plot drawn by `echobench_svg`, a
//! caller's section body) is the explicitly named [`Html::raw_html`]. Escaping is
//! `echobench_svg::escape`, the same function the pictures use.

use crate::plot::escape;

/// A piece of HTML under construction.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub(crate) struct Html(String);

impl Html {
    /// Nothing yet.
    pub(crate) fn new() -> Html {
        Html(String::new())
    }

    /// Text, escaped, as a piece of its own (a table cell).
    pub(crate) fn from_text(text: &str) -> Html {
        let mut h = Html::new();
        h.text(text);
        h
    }

    /// Markup written in this crate with `{}` holes, each filled with the next of `texts`,
    /// escaped (a caption: its wording and tags are the code's, the names in it a file's).
    ///
    /// # Panics
    /// When the number of holes and of texts differ (a mistake in the code).
    pub(crate) fn filled(template: &'static str, texts: &[&str]) -> Html {
        let pieces: Vec<&'static str> = template.split("{}").collect();
        assert_eq!(
            pieces.len(),
            texts.len() + 1,
            "holes and texts of {template:?}"
        );
        let mut h = Html::new();
        for (k, piece) in pieces.iter().enumerate() {
            h.raw(piece);
            if let Some(text) = texts.get(k) {
                h.text(text);
            }
        }
        h
    }

    /// Markup taken as it is, unescaped: only for HTML built by code (a plot drawn by
    /// `echobench_svg`, whose text is escaped there; a section body a caller hands in as
    /// HTML), never for text read from a file.
    pub(crate) fn raw_html(html: String) -> Html {
        Html(html)
    }

    /// Markup written in this crate.
    pub(crate) fn raw(&mut self, markup: &'static str) -> &mut Html {
        self.0.push_str(markup);
        self
    }

    /// Text, escaped.
    pub(crate) fn text(&mut self, text: &str) -> &mut Html {
        self.0.push_str(&escape(text));
        self
    }

    /// Another piece, as built.
    pub(crate) fn push(&mut self, other: &Html) -> &mut Html {
        self.0.push_str(&other.0);
        self
    }

    /// An opening tag with attributes; the values are escaped.
    pub(crate) fn open(
        &mut self,
        tag: &'static str,
        attributes: &[(&'static str, &str)],
    ) -> &mut Html {
        self.0.push('<');
        self.0.push_str(tag);
        for (name, value) in attributes {
            self.0.push(' ');
            self.0.push_str(name);
            self.0.push_str("=\"");
            self.0.push_str(&escape(value));
            self.0.push('"');
        }
        self.0.push('>');
        self
    }

    /// A closing tag.
    pub(crate) fn close(&mut self, tag: &'static str) -> &mut Html {
        self.0.push_str("</");
        self.0.push_str(tag);
        self.0.push('>');
        self
    }

    /// An element holding escaped text.
    pub(crate) fn element(
        &mut self,
        tag: &'static str,
        attributes: &[(&'static str, &str)],
        text: &str,
    ) -> &mut Html {
        self.open(tag, attributes).text(text).close(tag)
    }

    /// The HTML.
    pub(crate) fn into_string(self) -> String {
        self.0
    }
}

/// Writes the HTML as built (already escaped where it holds text).
impl std::fmt::Display for Html {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn text_and_attributes_are_escaped_markup_is_not() {
        let mut h = Html::new();
        h.open("td", &[("title", "a \"b\" <c>")])
            .text("<script>&")
            .raw("<br>")
            .close("td");
        assert_eq!(
            h.into_string(),
            "<td title=\"a &quot;b&quot; &lt;c&gt;\">&lt;script&gt;&amp;<br></td>"
        );
        let mut e = Html::new();
        e.element("code", &[], "x<y");
        assert_eq!(e.into_string(), "<code>x&lt;y</code>");
        let filled = Html::filled("Scene <code>{}</code> at {}.", &["a<b", "1 & 2"]);
        assert_eq!(
            filled.into_string(),
            "Scene <code>a&lt;b</code> at 1 &amp; 2."
        );
    }
}
