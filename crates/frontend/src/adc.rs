//! The ADC: uniform quantization to integer codes with clipping.
//!
//! Ideal N-bit converter over a span [low, high]: LSB q = (high − low)/2^N
//! (docs/reference/front-end-and-noise.md#f8: 12 bit at 3.3 V → 0.806 mV). Conversion rounds to the
//! nearest level (mid-tread): code k stands for low + k·q, k = 0 … 2^N − 1, so
//! inside the span the error is uniform on ±q/2 with power q²/12 (Bennett 1948)
//! and a full-scale sine has SNR 6.02·N + 1.76 dB. Inputs beyond the span clip
//! to the end codes. With [`AdcCoding::TwosComplement`] the same levels are
//! numbered −2^(N−1) … 2^(N−1) − 1 (a ±V converter); the mid-span level is code
//! 2^(N−1) offset-binary or 0 two's complement.

use crate::error::{finite, positive, refuse, ParamError};

/// Most bits accepted (codes must fit i32 with room; 24 bit is the usual top).
pub const MAX_ADC_BITS: u8 = 24;

/// How the levels are numbered.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AdcCoding {
    /// 0 … 2^N − 1 from the low to the high end of the span (unipolar MCU ADCs).
    OffsetBinary,
    /// −2^(N−1) … 2^(N−1) − 1 (bipolar converters).
    TwosComplement,
}

/// An ideal N-bit ADC.
#[derive(Debug, Clone, PartialEq)]
pub struct Adc {
    bits: u8,
    low_v: f64,
    high_v: f64,
    lsb_v: f64,
    top_index: f64,
    code_offset: i32,
}

impl Adc {
    /// A unipolar ADC over 0 … `full_scale_v`, offset-binary codes 0 … 2^N − 1
    /// (the usual microcontroller ADC; a mid-rail bias centres the IF on it).
    ///
    /// # Errors
    /// When `bits` is not in 1 ..= 24 or `full_scale_v` is not finite and positive.
    ///
    /// ```
    /// use echobench_frontend::Adc;
    /// let adc = Adc::new(12, 3.3).unwrap();
    /// assert!((adc.lsb_v() - 0.806e-3).abs() < 1e-6);
    /// assert_eq!(adc.code(1.65), 2048);
    /// assert_eq!(adc.code(5.0), 4095);
    /// assert_eq!(adc.code(-1.0), 0);
    /// ```
    pub fn new(bits: u8, full_scale_v: f64) -> Result<Self, ParamError> {
        let full_scale_v = positive("full_scale_v", full_scale_v)?;
        Self::with_span(bits, 0.0, full_scale_v, AdcCoding::OffsetBinary)
    }

    /// A bipolar ADC over −`half_span_v` … +`half_span_v`, two's-complement codes.
    ///
    /// # Errors
    /// When `bits` is not in 1 ..= 24 or `half_span_v` is not finite and positive.
    pub fn bipolar(bits: u8, half_span_v: f64) -> Result<Self, ParamError> {
        let half_span_v = positive("half_span_v", half_span_v)?;
        Self::with_span(bits, -half_span_v, half_span_v, AdcCoding::TwosComplement)
    }

    /// An ADC over any span [low_v, high_v] with either coding.
    ///
    /// # Errors
    /// When `bits` is not in 1 ..= 24, or the span ends are not finite with
    /// low_v < high_v.
    pub fn with_span(
        bits: u8,
        low_v: f64,
        high_v: f64,
        coding: AdcCoding,
    ) -> Result<Self, ParamError> {
        if bits == 0 || bits > MAX_ADC_BITS {
            return Err(refuse(
                "bits",
                f64::from(bits),
                format!("must be in 1 ..= {MAX_ADC_BITS}"),
            ));
        }
        let low_v = finite("low_v", low_v)?;
        let high_v = finite("high_v", high_v)?;
        if low_v >= high_v {
            return Err(refuse(
                "high_v",
                high_v,
                format!("must be above low_v = {low_v}"),
            ));
        }
        let levels = 1u32 << bits;
        let code_offset = match coding {
            AdcCoding::OffsetBinary => 0,
            AdcCoding::TwosComplement => 1i32 << (bits - 1),
        };
        Ok(Adc {
            bits,
            low_v,
            high_v,
            lsb_v: (high_v - low_v) / f64::from(levels),
            top_index: f64::from(levels - 1),
            code_offset,
        })
    }

    /// Resolution in bits.
    pub fn bits(&self) -> u8 {
        self.bits
    }

    /// One LSB, q = span/2^N, V.
    pub fn lsb_v(&self) -> f64 {
        self.lsb_v
    }

    /// Low end of the span, V (the level of the lowest code).
    pub fn low_v(&self) -> f64 {
        self.low_v
    }

    /// High end of the span, V (the highest code stands for high − q).
    pub fn high_v(&self) -> f64 {
        self.high_v
    }

    /// The lowest code (0, or −2^(N−1) two's complement).
    pub fn min_code(&self) -> i32 {
        -self.code_offset
    }

    /// The highest code (2^N − 1, or 2^(N−1) − 1 two's complement).
    pub fn max_code(&self) -> i32 {
        self.top_index as i32 - self.code_offset
    }

    /// Converts a voltage: rounds to the nearest level and clips to the codes.
    /// A NaN input gives the lowest code.
    #[inline]
    pub fn code(&self, input_v: f64) -> i32 {
        let index = round_half_away((input_v - self.low_v) / self.lsb_v);
        // `as` saturates and maps NaN to 0, so no input can panic here.
        let index = index.clamp(0.0, self.top_index) as i32;
        index - self.code_offset
    }

    /// The voltage a code stands for, V.
    #[inline]
    pub fn volts(&self, code: i32) -> f64 {
        self.low_v + f64::from(code + self.code_offset) * self.lsb_v
    }

    /// Converts a block, appending the codes to `codes_out`.
    pub fn codes_into(&self, input_v: &[f64], codes_out: &mut Vec<i32>) {
        codes_out.extend(input_v.iter().map(|&v| self.code(v)));
    }
}

/// `y.round()` (nearest integer, halves away from zero) without the library
/// call it compiles to on baseline x86-64 (one per output sample): adding and
/// subtracting 1.5·2^52 rounds |y| to the nearest integer t, halves to even,
/// exactly for |y| < 2^51 (common practice); |y| − t is then exact, and a
/// half that went down to even is moved up. From 2^51 on, where every value
/// is an integer or a half (and then clipped to the top code anyway), and for
/// infinities and NaN, `round` itself is used. The bits are those of `round`
/// for every input (tested on every half from −2^21 to 2^21 and neighbours).
#[inline(always)]
fn round_half_away(y: f64) -> f64 {
    const ROUND_MAGIC: f64 = 6_755_399_441_055_744.0;
    let a = y.abs();
    // Also NaN (a failed comparison) goes to `round`.
    if a >= 2_251_799_813_685_248.0 || a.is_nan() {
        return y.round();
    }
    let t = (a + ROUND_MAGIC) - ROUND_MAGIC;
    let r = if a - t == 0.5 { t + 1.0 } else { t };
    r.copysign(y)
}

/// SNR of an ideal N-bit converter for a full-scale sine:
/// 10·log10(1.5·2^(2N)) = 6.02·N + 1.76 dB (Bennett 1948; docs/reference/front-end-and-noise.md#f8:
/// 10/12/16 bit → 62.0/74.0/98.1 dB).
pub fn ideal_sine_snr_db(bits: u8) -> f64 {
    10.0 * (1.5f64).log10() + 20.0 * f64::from(bits) * 2f64.log10()
}

#[cfg(test)]
mod tests {
    use super::round_half_away;

    #[test]
    fn rounding_gives_the_bits_of_round() {
        // Every half k + ½ from −2^21 to 2^21 (the ties, where halves-to-even
        // and halves-away differ), its neighbours one ulp either side, the
        // integers, signed zeros, the ends of the exact range and beyond.
        let check = |y: f64| {
            assert_eq!(round_half_away(y).to_bits(), y.round().to_bits(), "{y:e}");
        };
        for k in -(1i64 << 21)..(1i64 << 21) {
            let half = k as f64 + 0.5;
            check(half);
            check(f64::from_bits(half.to_bits() + 1));
            check(f64::from_bits(half.to_bits() - 1));
            check(k as f64);
        }
        let edge = 2_251_799_813_685_248.0f64;
        for y in [
            0.0,
            -0.0,
            0.499_999_999_999_999_94,
            -0.499_999_999_999_999_94,
            edge - 0.5,
            edge,
            edge + 1.0,
            -edge + 0.5,
            1e300,
            -1e300,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::MIN_POSITIVE,
        ] {
            check(y);
        }
        assert!(round_half_away(f64::NAN).is_nan());
        // And a spread of ordinary values.
        let mut y = 1.234_567_891_234_5e-3;
        while y < 1e16 {
            check(y);
            check(-y);
            check(y * 0.999_999_7 + 0.5);
            y *= 1.000_37;
        }
    }
}
