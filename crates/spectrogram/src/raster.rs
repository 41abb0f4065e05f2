//! The few bytes-level encoders needed to embed the heat map in an SVG as one raster image:
//! an uncompressed ("stored") PNG and base64.
//!
//! One `<image>` element of at most a few hundred kilobytes replaces tens of thousands of
//! `<rect>` cells, which keeps the SVG small and quick to open whatever the trial length.

/// CRC-32 as used by PNG chunks (reflected polynomial 0xEDB88320, initial and final XOR
/// 0xFFFFFFFF). [W3C PNG Specification, 2nd ed., §5.5 and Annex D]
pub(crate) fn crc32(bytes: &[u8]) -> u32 {
    let mut crc = 0xFFFF_FFFF_u32;
    for &byte in bytes {
        crc ^= u32::from(byte);
        for _ in 0..8 {
            let mask = (crc & 1).wrapping_neg();
            crc = (crc >> 1) ^ (0xEDB8_8320 & mask);
        }
    }
    !crc
}

/// Adler-32 checksum of a zlib stream. [RFC 1950, §2.2]
pub(crate) fn adler32(bytes: &[u8]) -> u32 {
    const MODULUS: u32 = 65_521;
    let (mut a, mut b) = (1_u32, 0_u32);
    // 5552 is the longest run whose sums cannot overflow u32 before the reduction (zlib's NMAX,
    // common practice).
    for chunk in bytes.chunks(5552) {
        for &byte in chunk {
            a += u32::from(byte);
            b += a;
        }
        a %= MODULUS;
        b %= MODULUS;
    }
    (b << 16) | a
}

/// A zlib stream of stored (uncompressed) deflate blocks. [RFC 1950 §2.2; RFC 1951 §3.2.4]
fn zlib_stored(data: &[u8]) -> Vec<u8> {
    const MAX_BLOCK: usize = 65_535;
    let mut out = Vec::with_capacity(data.len() + data.len() / MAX_BLOCK * 5 + 16);
    // CMF 0x78: deflate with a 32 KiB window; FLG 0x01 makes CMF·256 + FLG a multiple of 31.
    out.extend_from_slice(&[0x78, 0x01]);
    let mut blocks = data.chunks(MAX_BLOCK).peekable();
    if blocks.peek().is_none() {
        // An empty final stored block.
        out.extend_from_slice(&[0x01, 0x00, 0x00, 0xFF, 0xFF]);
    }
    while let Some(block) = blocks.next() {
        let is_final = blocks.peek().is_none();
        out.push(u8::from(is_final)); // BFINAL bit, BTYPE = 00 (stored)
        let len = block.len() as u16;
        out.extend_from_slice(&len.to_le_bytes());
        out.extend_from_slice(&(!len).to_le_bytes());
        out.extend_from_slice(block);
    }
    out.extend_from_slice(&adler32(data).to_be_bytes());
    out
}

fn push_chunk(png: &mut Vec<u8>, kind: &[u8; 4], data: &[u8]) {
    png.extend_from_slice(&(data.len() as u32).to_be_bytes());
    let start = png.len();
    png.extend_from_slice(kind);
    png.extend_from_slice(data);
    let crc = crc32(&png[start..]);
    png.extend_from_slice(&crc.to_be_bytes());
}

/// An 8-bit RGB PNG of `width × height` pixels from row-major `rgb` (3 bytes a pixel), with
/// filter type 0 on every row. [W3C PNG Specification, 2nd ed., §11.2.2 IHDR, §9 filtering]
///
/// Returns `None` when the buffer length does not match the size or the size is zero.
pub(crate) fn encode_png_rgb(width: u32, height: u32, rgb: &[u8]) -> Option<Vec<u8>> {
    let row_bytes = width as usize * 3;
    if width == 0 || height == 0 || rgb.len() != row_bytes * height as usize {
        return None;
    }
    let mut filtered = Vec::with_capacity(rgb.len() + height as usize);
    for row in rgb.chunks_exact(row_bytes) {
        filtered.push(0); // filter type None
        filtered.extend_from_slice(row);
    }
    let mut header = Vec::with_capacity(13);
    header.extend_from_slice(&width.to_be_bytes());
    header.extend_from_slice(&height.to_be_bytes());
    // Bit depth 8, colour type 2 (truecolour), deflate, adaptive filtering, no interlace.
    header.extend_from_slice(&[8, 2, 0, 0, 0]);

    let mut png = Vec::with_capacity(filtered.len() + 128);
    png.extend_from_slice(&[0x89, b'P', b'N', b'G', b'\r', b'\n', 0x1A, b'\n']);
    push_chunk(&mut png, b"IHDR", &header);
    push_chunk(&mut png, b"IDAT", &zlib_stored(&filtered));
    push_chunk(&mut png, b"IEND", &[]);
    Some(png)
}

/// Standard base64 with padding. [RFC 4648 §4]
pub(crate) fn base64(bytes: &[u8]) -> String {
    const ALPHABET: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    let mut out = String::with_capacity(bytes.len().div_ceil(3) * 4);
    for group in bytes.chunks(3) {
        let b0 = u32::from(group[0]);
        let b1 = group.get(1).copied().map_or(0, u32::from);
        let b2 = group.get(2).copied().map_or(0, u32::from);
        let triple = (b0 << 16) | (b1 << 8) | b2;
        let symbol = |shift: u32| ALPHABET[((triple >> shift) & 0x3F) as usize] as char;
        out.push(symbol(18));
        out.push(symbol(12));
        out.push(if group.len() > 1 { symbol(6) } else { '=' });
        out.push(if group.len() > 2 { symbol(0) } else { '=' });
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn crc32_check_value() {
        // The check value of CRC-32/ISO-HDLC (the PNG and zlib CRC) over the ASCII digits
        // "123456789" is 0xCBF43926 [Cook, Catalogue of parametrised CRC algorithms; also
        // Python's zlib.crc32].
        assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
        assert_eq!(crc32(b""), 0);
        // PNG's IEND chunk always ends with the CRC of its type code: AE 42 60 82
        // (PNG Specification, every valid file).
        assert_eq!(crc32(b"IEND"), 0xAE42_6082);
    }

    #[test]
    fn adler32_values() {
        // "abc" by hand from the definition in RFC 1950 §2.2: a = 1+97+98+99 = 295, b = 98+196+295 = 589.
        assert_eq!(adler32(b"abc"), (589 << 16) | 295);
        // "Wikipedia" → 0x11E60398 (a common worked example; agrees with Python's zlib.adler32).
        assert_eq!(adler32(b"Wikipedia"), 0x11E6_0398);
        assert_eq!(adler32(b""), 1);
        // Long input exercises the modular reduction: 100 000 bytes of 0xFF.
        let long = vec![0xFF_u8; 100_000];
        let a = (1 + 255 * 100_000_u64) % 65_521;
        let b = (100_000 + 255 * (100_000 * 100_001 / 2)) % 65_521;
        assert_eq!(adler32(&long), ((b << 16) | a) as u32);
    }

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

    /// Reads back a stored-block zlib stream, checking every length field and the checksum.
    fn inflate_stored(stream: &[u8]) -> Vec<u8> {
        assert_eq!((u32::from(stream[0]) * 256 + u32::from(stream[1])) % 31, 0);
        let mut at = 2;
        let mut out = Vec::new();
        loop {
            let header = stream[at];
            assert_eq!(header & 0b110, 0, "stored block");
            let len = u16::from_le_bytes([stream[at + 1], stream[at + 2]]);
            let nlen = u16::from_le_bytes([stream[at + 3], stream[at + 4]]);
            assert_eq!(len, !nlen);
            out.extend_from_slice(&stream[at + 5..at + 5 + len as usize]);
            at += 5 + len as usize;
            if header & 1 == 1 {
                break;
            }
        }
        let checksum = u32::from_be_bytes(stream[at..at + 4].try_into().unwrap());
        assert_eq!(checksum, adler32(&out));
        assert_eq!(at + 4, stream.len());
        out
    }

    #[test]
    fn png_layout_is_valid() {
        let (width, height) = (300_u32, 90_u32); // > 64 KiB of pixels: several stored blocks
        let rgb: Vec<u8> = (0..width * height * 3)
            .map(|i| (i * 7 % 251) as u8)
            .collect();
        let png = encode_png_rgb(width, height, &rgb).unwrap();
        assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n");
        // Walk the chunks: length, type, data, CRC over type and data.
        let mut at = 8;
        let mut kinds = Vec::new();
        let mut idat = Vec::new();
        while at < png.len() {
            let len = u32::from_be_bytes(png[at..at + 4].try_into().unwrap()) as usize;
            let kind = &png[at + 4..at + 8];
            let data = &png[at + 8..at + 8 + len];
            let crc = u32::from_be_bytes(png[at + 8 + len..at + 12 + len].try_into().unwrap());
            assert_eq!(crc, crc32(&png[at + 4..at + 8 + len]));
            if kind == b"IHDR" {
                assert_eq!(&data[..4], &width.to_be_bytes());
                assert_eq!(&data[4..8], &height.to_be_bytes());
                assert_eq!(&data[8..], &[8, 2, 0, 0, 0]);
            }
            if kind == b"IDAT" {
                idat.extend_from_slice(data);
            }
            kinds.push(String::from_utf8(kind.to_vec()).unwrap());
            at += 12 + len;
        }
        assert_eq!(kinds, ["IHDR", "IDAT", "IEND"]);
        let scanlines = inflate_stored(&idat);
        assert_eq!(scanlines.len(), (height * (width * 3 + 1)) as usize);
        for (row, line) in scanlines.chunks_exact((width * 3 + 1) as usize).enumerate() {
            assert_eq!(line[0], 0);
            let start = row * (width * 3) as usize;
            assert_eq!(&line[1..], &rgb[start..start + (width * 3) as usize]);
        }
        assert!(encode_png_rgb(0, 5, &[]).is_none());
        assert!(encode_png_rgb(2, 2, &[0; 11]).is_none());
    }
}
