//! Shrinking the spectrogram's heat map: the spectrogram crate embeds it as a PNG of stored
//! (uncompressed) deflate blocks; here the same pixels are encoded again with deflate and
//! adaptive row filters (the `png` crate), which keeps the image bit-identical and makes a
//! gallery of dozens of pictures a few megabytes instead of tens. Deterministic: the same
//! pixels give the same bytes.

/// The base64 alphabet of RFC 4648 §4.
const ALPHABET: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";

/// Base64 with padding (RFC 4648 §4).
pub(crate) fn base64_encode(bytes: &[u8]) -> String {
    let mut out = String::with_capacity(bytes.len().div_ceil(3) * 4);
    for chunk in bytes.chunks(3) {
        let b = [
            chunk[0],
            chunk.get(1).copied().unwrap_or(0),
            chunk.get(2).copied().unwrap_or(0),
        ];
        let n = (u32::from(b[0]) << 16) | (u32::from(b[1]) << 8) | u32::from(b[2]);
        for i in 0..4 {
            if i <= chunk.len() {
                out.push(char::from(ALPHABET[((n >> (18 - 6 * i)) & 63) as usize]));
            } else {
                out.push('=');
            }
        }
    }
    out
}

/// Decodes base64 with padding (RFC 4648 §4); `None` on any other character.
pub(crate) fn base64_decode(text: &str) -> Option<Vec<u8>> {
    let value = |c: u8| ALPHABET.iter().position(|&a| a == c).map(|v| v as u32);
    let text = text.trim_end_matches('=').as_bytes();
    let mut out = Vec::with_capacity(text.len() * 3 / 4);
    for chunk in text.chunks(4) {
        let mut n = 0u32;
        for (i, &c) in chunk.iter().enumerate() {
            n |= value(c)? << (18 - 6 * i);
        }
        let bytes = [(n >> 16) as u8, (n >> 8) as u8, n as u8];
        match chunk.len() {
            4 => out.extend_from_slice(&bytes),
            3 => out.extend_from_slice(&bytes[..2]),
            2 => out.push(bytes[0]),
            _ => return None,
        }
    }
    Some(out)
}

/// The same image, deflate-compressed with adaptive filters.
pub(crate) fn recompress_png(png_bytes: &[u8]) -> Result<Vec<u8>, String> {
    let decoder = png::Decoder::new(png_bytes);
    let mut reader = decoder.read_info().map_err(|e| e.to_string())?;
    let mut pixels = vec![0; reader.output_buffer_size()];
    let info = reader.next_frame(&mut pixels).map_err(|e| e.to_string())?;
    pixels.truncate(info.buffer_size());
    let mut out = Vec::new();
    {
        let mut encoder = png::Encoder::new(&mut out, info.width, info.height);
        encoder.set_color(info.color_type);
        encoder.set_depth(info.bit_depth);
        encoder.set_compression(png::Compression::Best);
        encoder.set_adaptive_filter(png::AdaptiveFilterType::Adaptive);
        let mut writer = encoder.write_header().map_err(|e| e.to_string())?;
        writer
            .write_image_data(&pixels)
            .map_err(|e| e.to_string())?;
    }
    Ok(out)
}

/// Every embedded PNG of `svg` encoded again, compressed.
pub(crate) fn compress_embedded_images(svg: &str) -> Result<String, String> {
    const MARK: &str = "data:image/png;base64,";
    let mut out = String::with_capacity(svg.len() / 2);
    let mut rest = svg;
    while let Some(at) = rest.find(MARK) {
        let start = at + MARK.len();
        let len = rest[start..]
            .find('"')
            .ok_or("an embedded image is not closed")?;
        let png_bytes =
            base64_decode(&rest[start..start + len]).ok_or("an embedded image is not base64")?;
        out.push_str(&rest[..start]);
        out.push_str(&base64_encode(&recompress_png(&png_bytes)?));
        rest = &rest[start + len..];
    }
    out.push_str(rest);
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn base64_matches_the_rfc_examples_and_round_trips() {
        // RFC 4648 §10 test vectors.
        for (plain, coded) in [
            ("", ""),
            ("f", "Zg=="),
            ("fo", "Zm8="),
            ("foo", "Zm9v"),
            ("foob", "Zm9vYg=="),
            ("fooba", "Zm9vYmE="),
            ("foobar", "Zm9vYmFy"),
        ] {
            assert_eq!(base64_encode(plain.as_bytes()), coded);
            assert_eq!(base64_decode(coded).unwrap(), plain.as_bytes());
        }
        let bytes: Vec<u8> = (0..=255).collect();
        assert_eq!(base64_decode(&base64_encode(&bytes)).unwrap(), bytes);
        assert!(base64_decode("Zm9v!").is_none());
    }

    #[test]
    fn recompressing_keeps_every_pixel() {
        // A 40 × 30 RGB image with a gradient and a stripe, written stored, read back.
        let (w, h) = (40u32, 30u32);
        let pixels: Vec<u8> = (0..w * h * 3)
            .map(|i| {
                if (i / 3) % w == 7 {
                    255
                } else {
                    (i % 251) as u8
                }
            })
            .collect();
        let mut stored = Vec::new();
        {
            let mut encoder = png::Encoder::new(&mut stored, w, h);
            encoder.set_color(png::ColorType::Rgb);
            encoder.set_depth(png::BitDepth::Eight);
            encoder.set_compression(png::Compression::Fast);
            let mut writer = encoder.write_header().unwrap();
            writer.write_image_data(&pixels).unwrap();
        }
        let again = recompress_png(&stored).unwrap();
        let decoder = png::Decoder::new(&again[..]);
        let mut reader = decoder.read_info().unwrap();
        let mut read = vec![0; reader.output_buffer_size()];
        let info = reader.next_frame(&mut read).unwrap();
        assert_eq!((info.width, info.height), (w, h));
        assert_eq!(&read[..info.buffer_size()], &pixels[..]);
        assert_eq!(recompress_png(&stored).unwrap(), again, "deterministic");
    }
}
