//! The wire format, version 1: constants and the host's encoders.
//!
//! The crate doc specifies every message byte by byte; this module holds the
//! same numbers once, so that the host, the tests and anyone writing a
//! program in Rust use one definition. All integers and floats are
//! little-endian; every message starts with a 4-byte ASCII tag (or magic), so
//! a stray text line on stdout is recognised for what it is.

use echobench_core::{Channels, StreamInfo};

/// The protocol version this host speaks.
pub const VERSION: u32 = 1;

/// First bytes echobench writes: the HELLO message.
pub const HOST_MAGIC: [u8; 4] = *b"EBXH";

/// First bytes the program writes: the READY message.
pub const PROGRAM_MAGIC: [u8; 4] = *b"EBXP";

/// Host → program: a block of samples follows (`u32` count, then that many `f32`).
pub const TAG_BLOCK: [u8; 4] = *b"BLCK";

/// Host → program: no more blocks; the program should exit with status 0.
pub const TAG_END: [u8; 4] = *b"END ";

/// Program → host: one score (`f64` t_s, `f64` value).
pub const TAG_SCORE: [u8; 4] = *b"SCOR";

/// Program → host: the answer to the current block is complete.
pub const TAG_DONE: [u8; 4] = *b"DONE";

/// Length of the HELLO message in bytes.
pub const HELLO_LEN: usize = 40;

/// Most `f32` values one BLCK message carries (16 KiB of samples). Even, so
/// that a block always holds whole I/Q pairs. The host announces it in HELLO
/// so that a program can size its buffers once.
pub const MAX_BLOCK_VALUES: usize = 4096;

// A block must never split an I/Q pair.
const _: () = assert!(MAX_BLOCK_VALUES.is_multiple_of(2));

/// Longest program name accepted in READY, bytes of UTF-8.
pub const MAX_NAME_BYTES: usize = 256;

/// Length of a SCOR record including its tag.
pub const SCORE_RECORD_LEN: usize = 20;

/// Appends the HELLO message for `info` to `out`.
///
/// Layout (offsets in bytes): 0 magic `EBXH`; 4 `u32` version; 8 `f64`
/// sample rate (Hz); 16 `f64` carrier (Hz); 24 `u32` channels (1 = real,
/// 2 = I/Q interleaved); 28 `u32` ADC bits; 32 `u32` most values per block;
/// 36 `u32` reserved, 0.
///
/// ```
/// use echobench_core::detector::test_stream;
/// use echobench_detector_external::protocol::{encode_hello, HELLO_LEN};
/// let mut bytes = Vec::new();
/// encode_hello(&test_stream(2000.0), &mut bytes);
/// assert_eq!(bytes.len(), HELLO_LEN);
/// assert_eq!(&bytes[..4], b"EBXH");
/// assert_eq!(f64::from_le_bytes(bytes[8..16].try_into().unwrap()), 2000.0);
/// ```
pub fn encode_hello(info: &StreamInfo, out: &mut Vec<u8>) {
    out.extend_from_slice(&HOST_MAGIC);
    out.extend_from_slice(&VERSION.to_le_bytes());
    out.extend_from_slice(&info.sample_rate_hz.to_le_bytes());
    out.extend_from_slice(&info.carrier_hz.to_le_bytes());
    let channels: u32 = match info.channels {
        Channels::Real => 1,
        Channels::Iq => 2,
    };
    out.extend_from_slice(&channels.to_le_bytes());
    out.extend_from_slice(&u32::from(info.adc_bits).to_le_bytes());
    // MAX_BLOCK_VALUES is 4096: the cast cannot truncate.
    out.extend_from_slice(&(MAX_BLOCK_VALUES as u32).to_le_bytes());
    out.extend_from_slice(&0u32.to_le_bytes());
}

/// Shows bytes that should have been a tag: printable ASCII as text, the rest
/// as hex, so a failure message says "a text line" or "binary junk" plainly.
pub(crate) fn describe_bytes(bytes: &[u8]) -> String {
    let text: String = bytes
        .iter()
        .map(|&b| {
            if b.is_ascii_graphic() || b == b' ' {
                char::from(b)
            } else {
                '.'
            }
        })
        .collect();
    let hex: Vec<String> = bytes.iter().map(|b| format!("{b:02x}")).collect();
    format!("\"{text}\" ({})", hex.join(" "))
}

#[cfg(test)]
mod tests {
    use super::*;
    use echobench_core::detector::test_stream;

    #[test]
    fn hello_has_the_documented_layout() {
        let info = StreamInfo {
            sample_rate_hz: 1234.5,
            channels: Channels::Iq,
            adc_bits: 10,
            carrier_hz: 5.8e9,
        };
        let mut bytes = Vec::new();
        encode_hello(&info, &mut bytes);
        assert_eq!(bytes.len(), HELLO_LEN);
        let u32_at = |at: usize| u32::from_le_bytes(bytes[at..at + 4].try_into().unwrap());
        let f64_at = |at: usize| f64::from_le_bytes(bytes[at..at + 8].try_into().unwrap());
        assert_eq!(&bytes[0..4], b"EBXH");
        assert_eq!(u32_at(4), 1);
        assert_eq!(f64_at(8), 1234.5);
        assert_eq!(f64_at(16), 5.8e9);
        assert_eq!(u32_at(24), 2);
        assert_eq!(u32_at(28), 10);
        assert_eq!(u32_at(32), 4096);
        assert_eq!(u32_at(36), 0);
        let mut real = Vec::new();
        encode_hello(&test_stream(2000.0), &mut real);
        assert_eq!(u32::from_le_bytes(real[24..28].try_into().unwrap()), 1);
    }

    #[test]
    fn stray_bytes_are_shown_as_text_and_hex() {
        assert_eq!(describe_bytes(b"hel\n"), "\"hel.\" (68 65 6c 0a)");
    }
}
