//! A raster inside an SVG: an RGB image as one `<image>` element holding a deflate-compressed
//! PNG (the `png` crate) as a base64 `data:` URI (the `base64` crate).
//!
//! One `<image>` of some tens of kilobytes replaces tens of thousands of `<rect>` cells, which
//! keeps a heat map small and quick to open whatever its source's length. The encoder is
//! deterministic: the same pixels give the same bytes, so pictures and reports stay
//! byte-identical for the same inputs.

use base64::Engine as _;

use crate::Svg;

/// An 8-bit RGB image, row-major, row 0 at the top.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RgbImage {
    /// Columns.
    pub width: u32,
    /// Rows.
    pub height: u32,
    /// Three bytes a pixel, `width × height` pixels.
    pub rgb: Vec<u8>,
}

impl RgbImage {
    /// The image as a PNG, compressed at the best level with adaptive row filters (a picture
    /// is written once and opened many times; the few milliseconds more do not matter).
    ///
    /// `None` when the buffer length does not match the size, the size is zero, or the
    /// encoder fails.
    pub fn to_png(&self) -> Option<Vec<u8>> {
        let (width, height) = (self.width, self.height);
        if width == 0 || height == 0 || self.rgb.len() != width as usize * 3 * height as usize {
            return None;
        }
        let mut out = Vec::new();
        {
            let mut encoder = png::Encoder::new(&mut out, width, height);
            encoder.set_color(png::ColorType::Rgb);
            encoder.set_depth(png::BitDepth::Eight);
            encoder.set_compression(png::Compression::Best);
            encoder.set_adaptive_filter(png::AdaptiveFilterType::Adaptive);
            let mut writer = encoder.write_header().ok()?;
            writer.write_image_data(&self.rgb).ok()?;
            writer.finish().ok()?;
        }
        Some(out)
    }
}

/// Standard base64 with padding (RFC 4648 §4), as a `data:` URI wants it.
pub fn base64(bytes: &[u8]) -> String {
    base64::engine::general_purpose::STANDARD.encode(bytes)
}

/// Where an embedded image goes and how it is shown, px.
#[derive(Debug, Clone, PartialEq)]
pub struct Placement {
    /// Left edge.
    pub x: f64,
    /// Top edge.
    pub y: f64,
    /// Drawn width (the image is stretched to it).
    pub width: f64,
    /// Drawn height.
    pub height: f64,
    /// The id of a `<clipPath>` the image is clipped to, if any.
    pub clip_id: Option<String>,
}

impl Svg {
    /// A PNG (from [`RgbImage::to_png`]) as one `<image>` element at `placement`, stretched
    /// to it with hard pixel edges: each pixel is a cell of data, not a photograph to smooth.
    pub fn png_image(&mut self, png: &[u8], placement: &Placement) {
        self.tag("image")
            .fixed("x", placement.x, 2)
            .fixed("y", placement.y, 2)
            .fixed("width", placement.width, 2)
            .fixed("height", placement.height, 2)
            .attr("preserveAspectRatio", "none")
            .attr("image-rendering", "optimizeSpeed")
            .attr(
                "style",
                "image-rendering:crisp-edges;image-rendering:pixelated",
            )
            .attr_if(
                "clip-path",
                placement.clip_id.as_deref().map(|id| format!("url(#{id})")),
            )
            .attr(
                "href",
                format_args!("data:image/png;base64,{}", base64(png)),
            )
            .end();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn base64_rfc4648_vectors() {
        // RFC 4648 §10 test vectors.
        for (input, expected) in [
            ("", ""),
            ("f", "Zg=="),
            ("fo", "Zm8="),
            ("foo", "Zm9v"),
            ("foob", "Zm9vYg=="),
            ("fooba", "Zm9vYmE="),
            ("foobar", "Zm9vYmFy"),
        ] {
            assert_eq!(base64(input.as_bytes()), expected);
        }
    }

    fn gradient(width: u32, height: u32) -> RgbImage {
        RgbImage {
            width,
            height,
            rgb: (0..height)
                .flat_map(|y| (0..width).flat_map(move |x| [(x / 3) as u8, (y * 2) as u8, 128]))
                .collect(),
        }
    }

    /// The PNG decodes (with the `png` crate's decoder) to exactly the pixels given, is much
    /// smaller than the raw pixels for a smooth image, and is the same bytes every time.
    #[test]
    fn png_round_trips_and_compresses() {
        let image = gradient(300, 90);
        let png_bytes = image.to_png().unwrap();
        assert_eq!(&png_bytes[..8], b"\x89PNG\r\n\x1a\n");
        assert!(
            png_bytes.len() * 10 < image.rgb.len(),
            "{} bytes",
            png_bytes.len()
        );
        assert_eq!(image.to_png().unwrap(), png_bytes);
        let decoder = png::Decoder::new(png_bytes.as_slice());
        let mut reader = decoder.read_info().unwrap();
        let mut pixels = vec![0; reader.output_buffer_size()];
        let info = reader.next_frame(&mut pixels).unwrap();
        assert_eq!((info.width, info.height), (300, 90));
        assert_eq!(info.color_type, png::ColorType::Rgb);
        assert_eq!(&pixels[..info.buffer_size()], image.rgb.as_slice());
        let empty = RgbImage {
            width: 0,
            height: 1,
            rgb: Vec::new(),
        };
        assert!(empty.to_png().is_none());
        let short = RgbImage {
            width: 2,
            height: 2,
            rgb: vec![0; 11],
        };
        assert!(short.to_png().is_none());
    }

    #[test]
    fn an_image_element_carries_the_png_and_its_placement() {
        let image = gradient(30, 9);
        let mut svg = Svg::new();
        let placement = Placement {
            x: 10.0,
            y: 20.5,
            width: 300.0,
            height: 90.0,
            clip_id: Some("area-1".into()),
        };
        let png = image.to_png().unwrap();
        svg.png_image(&png, &placement);
        let text = svg.into_string();
        assert!(text.starts_with(
            "<image x=\"10.00\" y=\"20.50\" width=\"300.00\" height=\"90.00\" preserveAspectRatio=\"none\""
        ));
        assert!(text.contains("clip-path=\"url(#area-1)\""));
        let data = text
            .split("base64,")
            .nth(1)
            .unwrap()
            .split('"')
            .next()
            .unwrap();
        assert_eq!(data, base64(&png));
    }
}
