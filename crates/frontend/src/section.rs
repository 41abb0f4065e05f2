//! First-order low- and high-pass sections by the bilinear transform with pre-warping.

use std::f64::consts::{PI, TAU};

use crate::error::{positive, refuse, ParamError};

/// Low-pass or high-pass.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SectionKind {
    /// RC low-pass, H(s) = 1/(1 + s/ω_c).
    LowPass,
    /// CR (coupling-capacitor) high-pass, H(s) = (s/ω_c)/(1 + s/ω_c).
    HighPass,
}

/// One analog RC stage as a digital first-order section.
///
/// Bilinear transform with pre-warping (docs/reference/front-end-and-noise.md#f10, verified with
/// scipy.signal.bilinear): K = tan(π f_c/f_s), a1 = (K − 1)/(K + 1);
/// low-pass b0 = b1 = K/(1 + K); high-pass b0 = 1/(1 + K), b1 = −b0;
/// y\[n\] = b0·x\[n\] + b1·x\[n−1\] − a1·y\[n−1\]. Pre-warping puts the −3 dB point
/// exactly at f_c (|H| = 1/√2), whatever f_c/f_s.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FirstOrderSection {
    kind: SectionKind,
    corner_hz: f64,
    sample_rate_hz: f64,
    b0: f64,
    b1: f64,
    a1: f64,
    previous_input: f64,
    previous_output: f64,
}

impl FirstOrderSection {
    /// Makes a section with a −3 dB corner at `corner_hz`.
    ///
    /// # Errors
    /// When the sample rate is not finite and positive, or `corner_hz` is not in
    /// (0, sample_rate_hz/2).
    ///
    /// ```
    /// use echobench_frontend::{FirstOrderSection, SectionKind};
    /// let lp = FirstOrderSection::new(SectionKind::LowPass, 100.0, 1000.0).unwrap();
    /// assert!((lp.magnitude_at(100.0) - 0.5f64.sqrt()).abs() < 1e-12);
    /// assert!(FirstOrderSection::new(SectionKind::LowPass, 600.0, 1000.0).is_err());
    /// ```
    pub fn new(kind: SectionKind, corner_hz: f64, sample_rate_hz: f64) -> Result<Self, ParamError> {
        let fs = positive("sample_rate_hz", sample_rate_hz)?;
        let corner_hz = positive("corner_hz", corner_hz)?;
        if corner_hz >= fs / 2.0 {
            return Err(refuse(
                "corner_hz",
                corner_hz,
                format!("must be below sample_rate_hz/2 = {} Hz", fs / 2.0),
            ));
        }
        let k = (PI * corner_hz / fs).tan();
        let a1 = (k - 1.0) / (k + 1.0);
        let (b0, b1) = match kind {
            SectionKind::LowPass => (k / (1.0 + k), k / (1.0 + k)),
            SectionKind::HighPass => (1.0 / (1.0 + k), -1.0 / (1.0 + k)),
        };
        Ok(FirstOrderSection {
            kind,
            corner_hz,
            sample_rate_hz: fs,
            b0,
            b1,
            a1,
            previous_input: 0.0,
            previous_output: 0.0,
        })
    }

    /// A low-pass section; see [`FirstOrderSection::new`].
    ///
    /// # Errors
    /// As [`FirstOrderSection::new`].
    pub fn low_pass(corner_hz: f64, sample_rate_hz: f64) -> Result<Self, ParamError> {
        Self::new(SectionKind::LowPass, corner_hz, sample_rate_hz)
    }

    /// A high-pass section; see [`FirstOrderSection::new`].
    ///
    /// # Errors
    /// As [`FirstOrderSection::new`].
    pub fn high_pass(corner_hz: f64, sample_rate_hz: f64) -> Result<Self, ParamError> {
        Self::new(SectionKind::HighPass, corner_hz, sample_rate_hz)
    }

    /// The coefficients (b0, b1, a1) of y\[n\] = b0·x\[n\] + b1·x\[n−1\] − a1·y\[n−1\].
    pub fn coefficients(&self) -> (f64, f64, f64) {
        (self.b0, self.b1, self.a1)
    }

    /// Low-pass or high-pass.
    pub fn kind(&self) -> SectionKind {
        self.kind
    }

    /// The −3 dB corner, Hz.
    pub fn corner_hz(&self) -> f64 {
        self.corner_hz
    }

    /// Filters one sample.
    #[inline]
    pub fn process(&mut self, input: f64) -> f64 {
        let output =
            self.b0 * input + self.b1 * self.previous_input - self.a1 * self.previous_output;
        self.previous_input = input;
        self.previous_output = output;
        output
    }

    /// Clears the state (as at power-on with discharged capacitors).
    pub fn reset(&mut self) {
        self.previous_input = 0.0;
        self.previous_output = 0.0;
    }

    /// Sets the state to the steady state for a constant input held forever, and
    /// returns the steady output (the input for a low-pass, 0 for a high-pass):
    /// a chain that has been powered long enough before the trial starts.
    pub fn settle_to(&mut self, input: f64) -> f64 {
        let output = match self.kind {
            SectionKind::LowPass => input,
            SectionKind::HighPass => 0.0,
        };
        self.previous_input = input;
        self.previous_output = output;
        output
    }

    /// |H(e^{j2πf/f_s})| of this section at `f_hz`.
    pub fn magnitude_at(&self, f_hz: f64) -> f64 {
        let omega = TAU * f_hz / self.sample_rate_hz;
        // H(z) = (b0 + b1 z⁻¹)/(1 + a1 z⁻¹), z⁻¹ = e^{−jω}.
        let (cos, sin) = (omega.cos(), omega.sin());
        let numerator = ((self.b0 + self.b1 * cos).powi(2) + (self.b1 * sin).powi(2)).sqrt();
        let denominator = ((1.0 + self.a1 * cos).powi(2) + (self.a1 * sin).powi(2)).sqrt();
        numerator / denominator
    }
}

/// Corner of an RC stage, f_c = 1/(2πRC), Hz (docs/reference/front-end-and-noise.md#f9:
/// 47 kΩ·10 µF →
/// 0.339 Hz, 100 kΩ·22 nF → 72.3 Hz).
///
/// Non-positive or non-finite R or C give a non-finite or non-positive corner,
/// which the section constructors reject with a named error.
///
/// ```
/// let f = echobench_frontend::corner_from_rc_hz(47e3, 10e-6);
/// assert!((f - 0.3386).abs() < 1e-4);
/// ```
pub fn corner_from_rc_hz(r_ohm: f64, c_farad: f64) -> f64 {
    1.0 / (TAU * r_ohm * c_farad)
}

/// Where an analog corner `corner_hz` lands if the bilinear transform is used without pre-warping:
/// (f_s/π)·atan(π f_c/f_s) (frequency warping of the bilinear transform;
/// docs/reference/front-end-and-noise.md#f10: 100 Hz at 1 kHz → 96.89 Hz). Shows why
/// [`FirstOrderSection`] pre-warps.
pub fn bilinear_corner_without_prewarp_hz(corner_hz: f64, sample_rate_hz: f64) -> f64 {
    sample_rate_hz / PI * (PI * corner_hz / sample_rate_hz).atan()
}
