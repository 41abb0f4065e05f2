//! SVG pictures for echobench: the report's plots, the spectrogram and the explanation
//! pictures all draw through this crate.
//!
//! **Design decision: a writer that cannot emit unescaped text, not a scene graph.** An
//! [`Svg`] is text under construction. Elements are opened with [`Svg::tag`], whose names
//! are `&'static str` (written in code, never read from a file); every attribute value and
//! every piece of character data goes through [`escape`] on the way in, so a detector label
//! or scene id holding `<script>` or `"` cannot break out of its place. The only way to add
//! markup that was not escaped here is [`Svg::append`], which takes another [`Svg`], i.e.
//! markup this crate wrote. Output is a pure function of the calls: numbers are written with
//! the decimals the caller asks for, ids are the caller's, nothing depends on the machine,
//! so the same inputs give the same bytes (the report's byte-identity rests on it).
//!
//! Around the writer: [`axis`] (linear and logarithmic axes, nice-number ticks after
//! Heckbert 1990, number formatting, tick drawing) and [`raster`] (an RGB image embedded as
//! a deflate-compressed PNG through the `png` crate, base64 through the `base64` crate).
//! Text is left to the viewer's generic `sans-serif` font; layout uses a fixed estimate of
//! its width ([`axis::text_width`]), so no font file is needed to draw or to view.
#![deny(missing_docs)]

pub mod axis;
pub mod raster;
mod writer;

pub use writer::{Svg, Tag, SVG_NAMESPACE};

/// Escapes text for SVG and HTML, both as character data and inside a quoted attribute.
///
/// One function rather than an escaping crate, for two reasons: control characters other
/// than tab and newline are not allowed in XML 1.0 text (§2.2) and are replaced by U+FFFD
/// here, which the escaping crates leave alone; and the report's bytes must not change when a
/// crate changes its choice of entity (`&#39;` against `&#x27;`).
///
/// ```
/// assert_eq!(echobench_svg::escape("a<b & \"c\"'"), "a&lt;b &amp; &quot;c&quot;&#39;");
/// ```
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    escape_into(&mut out, text);
    out
}

/// [`escape`], appending to `out`.
pub(crate) fn escape_into(out: &mut String, text: &str) {
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c if c.is_control() && c != '\n' && c != '\t' => out.push('\u{FFFD}'),
            c => out.push(c),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escaping_covers_markup_quotes_and_controls() {
        assert_eq!(
            escape("<script>alert('x')</script> & \"y\""),
            "&lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt; &amp; &quot;y&quot;"
        );
        assert_eq!(escape("a\u{0}b\nc\td\u{1b}"), "a\u{FFFD}b\nc\td\u{FFFD}");
        assert_eq!(escape("plain µ²"), "plain µ²");
    }
}
