//! The sensor description that turns file samples into volts.

use crate::error::CaptureError;

/// Most converter bits accepted (a 32-bit integer WAV is the widest container read).
pub const MAX_ADC_BITS: u8 = 32;

/// The converter a capture was recorded with: what one code or one unit of
/// the file is worth in volts at the ADC input.
///
/// The ADC is unipolar over `0 … full_scale_v` with `2^bits` levels, code `k`
/// standing for `k · lsb_v`, `lsb_v = full_scale_v / 2^bits` (the same ideal
/// converter echobench synthesizes with). Samples handed on are volts at the
/// ADC input **less the front end's bias**, so they are centred on zero as
/// the detectors expect; `bias_v = None` takes the bias at mid-scale
/// (`full_scale_v / 2`), right for a recording whose silence sits at the
/// middle of the code range.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AdcDescription {
    bits: u8,
    full_scale_v: f64,
    bias_v: f64,
    bias_given: bool,
    lsb_v: f64,
    half_codes: f64,
}

impl AdcDescription {
    /// Describes a `bits`-bit converter over `0 … full_scale_v` volts, with the
    /// front end's output bias `bias_v` (`None`: mid-scale).
    ///
    /// # Errors
    /// When `bits` is not in `1 ..= 32`, `full_scale_v` is not finite and
    /// positive, or `bias_v` is not finite.
    ///
    /// ```
    /// use echobench_capture::AdcDescription;
    /// let adc = AdcDescription::new(12, 3.3, None).unwrap();
    /// assert_eq!(adc.bias_v(), 1.65);
    /// // Code 2048 of a 12-bit converter is mid-scale: zero volts after the bias.
    /// assert_eq!(adc.volts_from_code(2048.0), 0.0);
    /// assert!(AdcDescription::new(0, 3.3, None).is_err());
    /// ```
    pub fn new(bits: u8, full_scale_v: f64, bias_v: Option<f64>) -> Result<Self, CaptureError> {
        if bits == 0 || bits > MAX_ADC_BITS {
            return Err(CaptureError::setting(
                "bits",
                bits,
                format!("must be in 1 ..= {MAX_ADC_BITS}"),
            ));
        }
        if !(full_scale_v.is_finite() && full_scale_v > 0.0) {
            return Err(CaptureError::setting(
                "full_scale_v",
                full_scale_v,
                "must be a finite, positive voltage",
            ));
        }
        if let Some(bias) = bias_v {
            if !bias.is_finite() {
                return Err(CaptureError::setting(
                    "bias_v",
                    bias,
                    "must be a finite voltage",
                ));
            }
        }
        // Powers of two are exact in f64 up to 2^1023, so these are exact.
        let levels = 2f64.powi(i32::from(bits));
        Ok(AdcDescription {
            bits,
            full_scale_v,
            bias_v: bias_v.unwrap_or(0.5 * full_scale_v),
            bias_given: bias_v.is_some(),
            // The same expression as the synthesizer's ADC, (high − low)/2^N
            // with low = 0, so that codes map to bit-identical volts.
            lsb_v: full_scale_v / levels,
            half_codes: 0.5 * levels,
        })
    }

    /// Converter resolution, bits.
    pub fn bits(&self) -> u8 {
        self.bits
    }

    /// Top of the converter span, V.
    pub fn full_scale_v(&self) -> f64 {
        self.full_scale_v
    }

    /// The bias subtracted from every sample, V (the one given, or mid-scale).
    pub fn bias_v(&self) -> f64 {
        self.bias_v
    }

    /// True when the bias was given rather than taken at mid-scale.
    pub fn bias_given(&self) -> bool {
        self.bias_given
    }

    /// One code step, V.
    pub fn lsb_v(&self) -> f64 {
        self.lsb_v
    }

    /// The mid-scale code, `2^(bits − 1)`.
    pub fn mid_code(&self) -> f64 {
        self.half_codes
    }

    /// Volts less bias for an offset-binary code (`0 … 2^bits − 1`; fractions allowed).
    #[inline]
    pub fn volts_from_code(&self, code: f64) -> f64 {
        // Evaluated as the synthesizer does, code·lsb then − bias, so an
        // echobench capture reads back to the very same f32 values.
        code * self.lsb_v - self.bias_v
    }

    /// Volts less bias for a two's-complement code (`−2^(bits−1) … 2^(bits−1) − 1`, mid-scale 0).
    #[inline]
    pub fn volts_from_signed_code(&self, code: f64) -> f64 {
        self.volts_from_code(code + self.half_codes)
    }

    /// Volts less bias for an absolute voltage at the ADC input.
    #[inline]
    pub fn volts_from_input_v(&self, input_v: f64) -> f64 {
        input_v - self.bias_v
    }

    /// Volts less bias for a signed fraction of full scale about mid-scale:
    /// `±1.0` is `±full_scale_v / 2` from mid-scale.
    #[inline]
    pub fn volts_from_fraction(&self, fraction: f64) -> f64 {
        self.volts_from_signed_code(fraction * self.half_codes)
    }
}
