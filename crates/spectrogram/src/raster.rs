//! The heat map as one raster image inside the SVG: a deflate-compressed PNG with adaptive
//! row filters (the `png` crate), base64-encoded (the `base64` crate).
//!
//! One `<image>` element of some tens of kilobytes replaces tens of thousands of `<rect>`
//! cells, which keeps the SVG small and quick to open whatever the trial length. The encoder
//! is deterministic: the same pixels give the same bytes, so pictures and reports stay
//! byte-identical for the same inputs.

use base64::Engine as _;

/// An 8-bit RGB PNG of `width × height` pixels from row-major `rgb` (3 bytes a pixel),
/// compressed at the best level with adaptive filters (the picture is written once and
/// opened many times; the few milliseconds more do not matter).
///
/// Returns `None` when the buffer length does not match the size, the size is zero, or the
/// encoder fails.
pub(crate) fn encode_png_rgb(width: u32, height: u32, rgb: &[u8]) -> Option<Vec<u8>> {
    if width == 0 || height == 0 || rgb.len() != width as usize * 3 * height as usize {
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
        writer.write_image_data(rgb).ok()?;
        writer.finish().ok()?;
    }
    Some(out)
}

/// Standard base64 with padding (RFC 4648 §4), as a `data:` URI wants it.
pub(crate) fn base64(bytes: &[u8]) -> String {
    base64::engine::general_purpose::STANDARD.encode(bytes)
}

/// CRC-32 of `bytes` (the zlib/PNG polynomial): a short stable id for the picture's clip path.
pub(crate) fn crc32(bytes: &[u8]) -> u32 {
    crc32fast::hash(bytes)
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

    #[test]
    fn crc32_check_value() {
        // The check value of CRC-32/ISO-HDLC over "123456789" is 0xCBF43926 (Cook, Catalogue
        // of parametrised CRC algorithms; also Python's zlib.crc32).
        assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
    }

    /// The PNG decodes (with the `png` crate's decoder) to exactly the pixels given, is much
    /// smaller than the raw pixels for a smooth image, and is the same bytes every time.
    #[test]
    fn png_round_trips_and_compresses() {
        let (width, height) = (300_u32, 90_u32);
        let rgb: Vec<u8> = (0..height)
            .flat_map(|y| (0..width).flat_map(move |x| [(x / 3) as u8, (y * 2) as u8, 128]))
            .collect();
        let png_bytes = encode_png_rgb(width, height, &rgb).unwrap();
        assert_eq!(&png_bytes[..8], b"\x89PNG\r\n\x1a\n");
        assert!(
            png_bytes.len() * 10 < rgb.len(),
            "{} bytes",
            png_bytes.len()
        );
        assert_eq!(encode_png_rgb(width, height, &rgb).unwrap(), png_bytes);
        let decoder = png::Decoder::new(png_bytes.as_slice());
        let mut reader = decoder.read_info().unwrap();
        let mut pixels = vec![0; reader.output_buffer_size()];
        let info = reader.next_frame(&mut pixels).unwrap();
        assert_eq!((info.width, info.height), (width, height));
        assert_eq!(info.color_type, png::ColorType::Rgb);
        assert_eq!(&pixels[..info.buffer_size()], rgb.as_slice());
        assert!(encode_png_rgb(0, 1, &[]).is_none());
        assert!(encode_png_rgb(2, 2, &[0; 11]).is_none());
    }
}
