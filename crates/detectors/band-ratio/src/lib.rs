//! The `band-ratio` detector: short-time power in the human-motion Doppler band
//! divided by power in nuisance (reference) bands.
//!
//! # What it detects
//!
//! A CW Doppler return of a target moving at radial speed v sits at f_d = 2v/λ = 2·v·f_c/c
//! (docs/reference/radar-physics.md#r1; Skolnik ch. 3). A walking person fills a characteristic
//! band (torso at the walking speed, limbs at up to ≈ 4× it, docs/reference/people.md#p4), while
//! the usual false-alarm sources put their power elsewhere: a fan's blade tips far above it, a
//! swaying plant or curtain within a few hertz of DC (docs/reference/nuisances.md), mains hum on
//! k·50 or k·60 Hz lines. The score of each frame is
//!
//! ```text
//! R = S(P_k, k ∈ motion bins) / S(P_k, k ∈ reference bins),   S = Σ or mean
//! ```
//!
//! with P_k = |X_k|² of the windowed frame. Higher means more likely motion.
//!
//! # The one design decision: a ratio, not a level
//!
//! The score divides by power measured in the same frame, so it does not
//! depend on the IF gain, the range of the target or the (unknown) noise
//! level: a gain change multiplies both sums alike. That is what makes it
//! constant-false-alarm-rate in white noise, and what makes it prefer "power
//! where a walker puts it" over "a lot of power", which is why it separates
//! walkers from fans and sways where plain energy and CA-CFAR fail (bench
//! README: AUC 0.99 against 0.42 and 0.12).
//!
//! # Parameters
//!
//! Bands are radial speeds by default, converted through
//! `StreamInfo::carrier_hz` by f = 2v/λ = 2·v·f_c/c, so one default serves
//! 2.4, 5.8, 10.5 and 24 GHz modules (`echobench_core::doppler` states the
//! unit and Nyquist rules once for every detector):
//!
//! - `motion_min_mps`..`motion_max_mps` (0.3–4 m/s: a walker's torso to its
//!   limbs; 4.9–65.4 Hz at 2.45 GHz, 48.3–644 Hz at 24.125 GHz).
//! - `reference_min_mps`..`reference_max_mps`, the nuisance band (4.5–25
//!   m/s: two resolution cells above the motion band, up past the fastest
//!   fan blade tips, 12–19 m/s, docs/reference/nuisances.md#n2). Its default top is clipped to
//!   the stream's Nyquist frequency; a stream whose Nyquist lies below
//!   4.5 m/s (24 GHz sampled at 1 kHz: 3.1 m/s) has no room for it, and the
//!   detector is refused there with a message naming `reference_min_mps`.
//! - `sway_in_reference` with `sway_min_mps`..`sway_max_mps` (0.05–0.25 m/s:
//!   a swaying object peaks near 0.19 m/s, docs/reference/nuisances.md#n1): also count the
//!   slow-sway band in the reference, so that a swaying object lowers the
//!   score. The reference set is the union of the two bands.
//! - In hertz, as an explicit choice: `band_units: hz`, or any of
//!   `motion_low_hz`, `motion_high_hz`, `reference_low_hz`,
//!   `reference_high_hz`, `sway_low_hz`, `sway_high_hz` set in the suite
//!   (`band_units: auto`, the default, then takes hertz for every band). The
//!   Hz defaults are the historic 10–80 over 100–400 Hz (sway 0.5–8 Hz),
//!   right for 2.45 GHz only. Speeds and hertz are never mixed in one
//!   detector (refused, naming both).
//! - `mains_hz` (0 = off, 50 or 60) with `notch_width_hz`: **always in Hz**:
//!   hum is electrical, at k·50 or k·60 Hz whatever the carrier, not a
//!   Doppler line. Every bin whose span `[f_k − Δf/2, f_k + Δf/2]` overlaps
//!   `[h·mains − w/2, h·mains + w/2]` for some harmonic h ≥ 1, Δf = fs/N, is
//!   removed from both sets. With `w = 0` this removes the bin that holds
//!   each line; with a Hann window a line leaks over ±2 bins (the main lobe),
//!   so full suppression needs `w ≈ 4·Δf`.
//! - `statistic`: `sum` (Σ/Σ, the reference pipeline's choice) or `mean`
//!   (mean/mean, whose null law is the F distribution below). The two differ
//!   by the constant n/m.
//! - `window` (`hann` | `rect`).
//! - The frame: by default a velocity resolution `resolution_mps` = 0.25 m/s
//!   (`echobench_core::doppler::DEFAULT_RESOLUTION_MPS`), i.e. T = λ/(2Δv):
//!   0.245 s (490 samples at 2 kHz) at 2.45 GHz, 0.0249 s (50 samples) at
//!   24.125 GHz, hop `hop_fraction` = ½ frame. **Latency**: a score is due
//!   one frame after the motion starts, so the same speed resolution costs
//!   ten times the wait at 2.45 GHz (≈ 0.25 s) as at 24 GHz (≈ 0.025 s).
//!   Alternatively `frame_s` (seconds) or `frame_len`/`hop` (samples; the
//!   reference pipeline's 256/128). `frame_pow2` rounds a frame given in s
//!   or m/s up to a power of two (finer Δv, up to twice the latency).
//! - `pfa`: only sets the nominal threshold reported to the harness
//!   ([`BandRatioConfig::nominal_threshold`]); scores do not depend on it.
//!
//! Bins are selected with inclusive edges on their centre frequency
//! `f_k = k·fs/N` (k = 0..N/2 for real streams), exactly as the reference
//! pipeline does (docs/reference/detectors.md#d9): with fs = 2 kHz, N = 256 the Hz bands are
//! bins 2–10 (15.6–78.1 Hz) and 13–51 (101.6–398.4 Hz). For I/Q streams both
//! Doppler signs are used (approach and recede): a bin is selected when |f_k|
//! lies in the band, so each band has about twice as many bins.
//!
//! # What the nominal Pfa means
//!
//! With a rectangular window and no overlap, the DFT bins of white Gaussian
//! noise (other than DC and Nyquist) are independent, |X_k|²/σ² exponential
//! (Kay, *Modern Spectral Estimation*, 1988, ch. 4, from memory), so the
//! mean-ratio statistic over m motion and n reference bins follows the
//! Fisher–Snedecor law F(2m, 2n) whatever σ² is, and the threshold
//! `F⁻¹(1 − Pfa; 2m, 2n)` gives exactly that per-frame Pfa (docs/reference/detectors.md#d3,
//! check value cv15; tested here). For I/Q streams every selected |f| counts
//! its two bins. **With a Hann window this law does not hold**: adjacent bins
//! are correlated (|ρ|² = 4/9, docs/reference/detectors.md#d7), each band has fewer
//! effective degrees of freedom, the tail is heavier and the measured Pfa at
//! the F threshold is higher than nominal (also tested here). Overlapping
//! frames leave the per-frame law as it is but make successive frames
//! dependent, so exceedances come in clusters. The harness calibrates
//! thresholds empirically on noise-only runs; use the F threshold only for a
//! rectangular window, no overlap and white noise.
//!
//! # Edge cases
//!
//! Non-finite samples (NaN, ±∞) are taken as 0 before framing. A reference sum
//! (or mean) below [`REFERENCE_FLOOR_V2`] is taken as that floor, so silence
//! scores 0 and a tone on an exactly silent stream scores large but finite.
#![deny(missing_docs)]

use echobench_core::detector::{
    BandRole, Cost, Detector, DetectorFailure, DetectorPlan, DetectorPlugin, DopplerBand,
    NominalPoint, ParamError, ParamSpec, Params, PrototypePlan, Samples,
};
use echobench_core::doppler::{
    self, BandParams, FrameDefaults, FrameParams, FrameRules, FrameUnits, Framing, ResolvedBand,
    DEFAULT_RESOLUTION_MPS, MOTION_MAX_MPS, MOTION_MIN_MPS,
};
use echobench_core::param_decl::{ChoiceParam, FlagParam, IntegerParam, RealParam, TuneRange};
use echobench_core::{Channels, FrameScore, StreamInfo};
use echobench_detector_dsp::{ComplexPowerSpectrum, Framer, PowerSpectrum, Window};
use statrs::distribution::{ContinuousCDF, FisherSnedecor};
use std::sync::Arc;

/// The plugin's identifier in suite files.
pub const ID: &str = "band-ratio";

/// Smallest reference power used as a divisor, V² (per-bin |X_k|² units).
///
/// Far below the quantisation noise of any ADC (a 24-bit, 1 V converter has
/// LSB² ≈ 1e-14 V²), so it only acts on exactly silent input.
pub const REFERENCE_FLOOR_V2: f64 = 1e-30;

/// Values cleaned of NaN per pass: a small stack buffer, so `process` never allocates.
const CLEAN_CHUNK: usize = 64;

pub use echobench_core::doppler::doppler_hz;

/// Frames of 8 to 65 536 samples, given by default as a velocity resolution.
/// The bands resolved to Hz (before bins are chosen).
struct ResolvedBands {
    motion: ResolvedBand,
    reference: ResolvedBand,
    sway: Option<ResolvedBand>,
}

fn resolve_bands(params: &Params, info: &StreamInfo) -> Result<ResolvedBands, ParamError> {
    let units = doppler::band_units(
        ID,
        params,
        &doppler::BAND_UNITS,
        &[&MOTION, &REFERENCE, &SWAY],
    )?;
    let motion = doppler::resolve_band(ID, params, info, units, &MOTION)?;
    let reference = doppler::resolve_band(ID, params, info, units, &REFERENCE)?;
    let sway = if SWAY_IN_REFERENCE.get(params)? {
        Some(doppler::resolve_band(ID, params, info, units, &SWAY)?)
    } else {
        None
    };
    Ok(ResolvedBands {
        motion,
        reference,
        sway,
    })
}

/// The `band-ratio` plugin.
pub struct BandRatioPlugin;

/// The frame family: a velocity resolution of [`DEFAULT_RESOLUTION_MPS`] by
/// default (0.245 s at 2.45 GHz, 0.0249 s at 24.125 GHz), hop half a frame;
/// 256/128 samples when the frame is given in samples.
pub const FRAME: FrameParams = FrameParams::new(
    FrameDefaults {
        frame_len: 256,
        hop: 128,
        frame_s: 0.128,
        resolution_mps: DEFAULT_RESOLUTION_MPS,
        hop_fraction: 0.5,
    },
    FrameRules {
        default_units: FrameUnits::Mps,
        min_len: 8,
        max_len: 65536,
    },
);

/// A band edge in Hz: 0 to 1 MHz.
const fn hz(name: &'static str, about: &'static str, default: f64) -> RealParam {
    RealParam {
        name,
        unit: "Hz",
        about,
        min: 0.0,
        max: 1e6,
        default,
    }
}

/// A band edge as a radial speed: 0 to 100 m/s.
const fn mps(name: &'static str, about: &'static str, default: f64) -> RealParam {
    RealParam {
        name,
        unit: "m/s",
        about,
        min: 0.0,
        max: 100.0,
        default,
    }
}

// The Hz edges of every band are the historic Hz bands (right at 2.45 GHz only), used
// when band_units = hz or when a suite sets any of them.

/// The motion band's edge parameters: walker torso to limbs, 0.3–4 m/s (see
/// `echobench_core::doppler::MOTION_MIN_MPS`).
pub const MOTION: BandParams = BandParams {
    low_mps: mps(
        "motion_min_mps",
        "slowest radial speed of the motion band",
        MOTION_MIN_MPS,
    ),
    high_mps: mps(
        "motion_max_mps",
        "fastest radial speed of the motion band",
        MOTION_MAX_MPS,
    ),
    low_hz: hz(
        "motion_low_hz",
        "lower edge of the motion band (Hz units)",
        10.0,
    ),
    high_hz: hz(
        "motion_high_hz",
        "upper edge of the motion band (Hz units)",
        80.0,
    ),
};

/// The reference (nuisance) band's edge parameters: above the motion band by
/// two resolution cells (a Hann main lobe is ±2 bins wide), up past the
/// fastest fan blade tips (desk fan 18.85 m/s, docs/reference/nuisances.md#n2).
pub const REFERENCE: BandParams = BandParams {
    low_mps: mps(
        "reference_min_mps",
        "slowest radial speed of the nuisance (reference) band",
        4.5,
    ),
    high_mps: mps(
        "reference_max_mps",
        "fastest radial speed of the nuisance (reference) band (default: clipped to Nyquist)",
        25.0,
    ),
    low_hz: hz(
        "reference_low_hz",
        "lower edge of the nuisance (reference) band (Hz units)",
        100.0,
    ),
    high_hz: hz(
        "reference_high_hz",
        "upper edge of the nuisance (reference) band (Hz units)",
        400.0,
    ),
};

/// The slow-sway band's edge parameters: a swaying object's speed (a 0.5 m
/// pendulum at 5° peaks at 0.19 m/s, docs/reference/nuisances.md#n1), from
/// 0.05 m/s so the DC bin (static clutter) stays out.
pub const SWAY: BandParams = BandParams {
    low_mps: mps(
        "sway_min_mps",
        "slowest radial speed of the slow-sway band (sway_in_reference)",
        0.05,
    ),
    high_mps: mps(
        "sway_max_mps",
        "fastest radial speed of the slow-sway band (sway_in_reference)",
        0.25,
    ),
    low_hz: hz(
        "sway_low_hz",
        "lower edge of the slow-sway band (Hz units, sway_in_reference)",
        0.5,
    ),
    high_hz: hz(
        "sway_high_hz",
        "upper edge of the slow-sway band (Hz units, sway_in_reference)",
        8.0,
    ),
};

const SWAY_IN_REFERENCE: FlagParam = FlagParam {
    name: "sway_in_reference",
    about: "also count the slow-sway band in the reference",
    default: false,
};

const MAINS_HZ: IntegerParam = IntegerParam {
    name: "mains_hz",
    unit: "Hz",
    about: "mains frequency whose lines k·mains are removed from both bands: 0 (off), 50 or \
                60 (electrical, always in Hz)",
    min: 0,
    max: 60,
    default: 0,
};

const NOTCH_WIDTH_HZ: RealParam = RealParam {
    name: "notch_width_hz",
    unit: "Hz",
    about: "full width of each mains notch; bins whose span overlaps it are removed",
    min: 0.0,
    max: 100.0,
    default: 10.0,
};

const STATISTIC: ChoiceParam<Statistic> = ChoiceParam {
    name: "statistic",
    about: "sum (Σ/Σ) or mean (mean/mean, F-distributed for rect windows) over the bins",
    options: &["sum", "mean"],
    values: &[Statistic::Sum, Statistic::Mean],
    default: "sum",
};

const WINDOW: ChoiceParam<Window> = Window::param("frame window");

const PFA: RealParam = RealParam {
    name: "pfa",
    unit: "",
    about: "per-frame false-alarm probability of the nominal F threshold (reported, not applied)",
    min: 1e-12,
    max: 0.5,
    default: 1e-3,
};

static PARAMS: [ParamSpec; 26] = [
    // Tunable (`echobench tune`): the frame, the band and the smoothing; never the threshold,
    // which the runner calibrates.
    doppler::BAND_UNITS.spec(),
    MOTION.low_mps.spec_tuned(TuneRange::Linear {
        low: 0.1,
        high: 0.6,
    }),
    MOTION.high_mps.spec_tuned(TuneRange::Linear {
        low: 2.0,
        high: 4.4,
    }),
    REFERENCE.low_mps.spec(),
    REFERENCE.high_mps.spec(),
    SWAY.low_mps.spec(),
    SWAY.high_mps.spec(),
    MOTION.low_hz.spec(),
    MOTION.high_hz.spec(),
    REFERENCE.low_hz.spec(),
    REFERENCE.high_hz.spec(),
    SWAY_IN_REFERENCE.spec(),
    SWAY.low_hz.spec(),
    SWAY.high_hz.spec(),
    MAINS_HZ.spec(),
    NOTCH_WIDTH_HZ.spec(),
    STATISTIC.spec_tuned(),
    WINDOW.spec_tuned(),
    FRAME.units.spec(),
    FRAME.frame_len.spec(),
    FRAME.hop.spec(),
    FRAME.frame_s.spec(),
    FRAME.resolution_mps.spec_tuned(TuneRange::Log {
        low: 0.1,
        high: 0.6,
    }),
    FRAME.hop_fraction.spec(),
    FRAME.pow2.spec(),
    PFA.spec(),
];

/// How the bins of a band are combined.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Statistic {
    /// Σ P over the bins.
    Sum,
    /// Mean P over the bins.
    Mean,
}

/// A validated configuration: the selected bins and the framing.
///
/// [`BandRatioPlugin::plan`] and [`BandRatioPlugin::cost`] both start from it,
/// and it is public so a user can see which bins a parameter set selects.
#[derive(Debug, Clone, PartialEq)]
pub struct BandRatioConfig {
    /// Sample rate, Hz.
    pub sample_rate_hz: f64,
    /// Real or I/Q input.
    pub channels: Channels,
    /// Frame length, samples (sample instants for I/Q).
    pub frame_len: usize,
    /// Hop, samples.
    pub hop: usize,
    /// Frame window.
    pub window: Window,
    /// How bins are combined.
    pub statistic: Statistic,
    /// Motion band edges actually used, Hz (derived from speeds when the bands are in m/s).
    pub motion_band_hz: (f64, f64),
    /// Reference band edges actually used, Hz.
    pub reference_band_hz: (f64, f64),
    /// Sway band edges actually used, Hz, when `sway_in_reference`.
    pub sway_band_hz: Option<(f64, f64)>,
    /// Indices into the power spectrum (one-sided for real, FFT order for I/Q) of the motion bins.
    pub motion_bins: Vec<usize>,
    /// Indices of the reference bins (reference band ∪ optional sway band, minus notches).
    pub reference_bins: Vec<usize>,
    /// Per-frame false-alarm probability for [`BandRatioConfig::nominal_threshold`].
    pub pfa: f64,
}

impl BandRatioConfig {
    /// Validates `params` against the stream and selects the bins.
    ///
    /// # Errors
    /// A [`ParamError`] naming the parameter: a band with low ≥ high, above
    /// Nyquist or holding no bin, motion and reference bands sharing bins,
    /// `mains_hz` not 0/50/60, notches that empty a band, `band_units = mps`
    /// without a carrier, or a stream with a bad sample rate.
    pub fn from_params(params: &Params, info: &StreamInfo) -> Result<Self, ParamError> {
        let fs = echobench_core::detector::check_sample_rate(ID, info)?;
        let Framing { frame_len, hop } = doppler::resolve_frame(ID, params, info, &FRAME)?;
        let window = WINDOW.get(params)?;
        let statistic = STATISTIC.get(params)?;
        let nyquist_hz = fs / 2.0;
        let spectrum = BinLayout {
            channels: info.channels,
            frame_len,
            sample_rate_hz: fs,
        };
        let bands = resolve_bands(params, info)?;
        let motion = bands.motion;
        let motion_band_hz = (motion.low_hz, motion.high_hz);
        check_band(
            motion_band_hz,
            nyquist_hz,
            (motion.low_name, motion.high_name),
            "",
        )?;
        let reference = bands.reference;
        let reference_band_hz = (reference.low_hz, reference.high_hz);
        check_band(
            reference_band_hz,
            nyquist_hz,
            (reference.low_name, reference.high_name),
            "",
        )?;
        let motion_name = motion.low_name;
        let mut motion_bins = spectrum.bins_in(motion_band_hz);
        if motion_bins.is_empty() {
            return Err(empty_band(motion_name, motion_band_hz, &spectrum));
        }
        let mut reference_bins = spectrum.bins_in(reference_band_hz);
        if reference_bins.is_empty() {
            return Err(empty_band(reference.low_name, reference_band_hz, &spectrum));
        }
        if let Some(shared) = first_shared(&motion_bins, &reference_bins) {
            return Err(ParamError::new(
                ID,
                reference.low_name,
                format!("{}..{} Hz", reference_band_hz.0, reference_band_hz.1),
                format!(
                    "shares bin {shared} ({} Hz) with the motion band {}..{} Hz; the bands must be disjoint",
                    spectrum.abs_frequency_hz(shared),
                    motion_band_hz.0,
                    motion_band_hz.1
                ),
            ));
        }
        if let Some(sway) = bands.sway {
            let sway_band_hz = (sway.low_hz, sway.high_hz);
            check_band(
                sway_band_hz,
                nyquist_hz,
                (sway.low_name, sway.high_name),
                "",
            )?;
            let sway_bins = spectrum.bins_in(sway_band_hz);
            if sway_bins.is_empty() {
                return Err(empty_band(sway.low_name, sway_band_hz, &spectrum));
            }
            if let Some(shared) = first_shared(&motion_bins, &sway_bins) {
                return Err(ParamError::new(
                    ID,
                    sway.high_name,
                    sway_band_hz.1,
                    format!(
                        "the sway band shares bin {shared} ({} Hz) with the motion band; the bands must be disjoint",
                        spectrum.abs_frequency_hz(shared)
                    ),
                ));
            }
            reference_bins.extend(sway_bins);
            reference_bins.sort_unstable();
            reference_bins.dedup();
        }

        let mains_hz = MAINS_HZ.get(params)?;
        if ![0, 50, 60].contains(&mains_hz) {
            return Err(ParamError::new(
                ID,
                "mains_hz",
                mains_hz,
                "expected 0 (no notch), 50 or 60",
            ));
        }
        if mains_hz > 0 {
            let notch_width_hz = NOTCH_WIDTH_HZ.get(params)?;
            let keep = |k: &usize| !spectrum.in_mains_notch(*k, mains_hz as f64, notch_width_hz);
            motion_bins.retain(keep);
            reference_bins.retain(keep);
            for (bins, band) in [(&motion_bins, "motion"), (&reference_bins, "reference")] {
                if bins.is_empty() {
                    return Err(ParamError::new(
                        ID,
                        "notch_width_hz",
                        notch_width_hz,
                        format!("the {mains_hz} Hz notches remove every bin of the {band} band"),
                    ));
                }
            }
        }

        Ok(BandRatioConfig {
            sample_rate_hz: fs,
            channels: info.channels,
            frame_len,
            hop,
            window,
            statistic,
            motion_band_hz,
            reference_band_hz,
            sway_band_hz: bands.sway.map(|b| (b.low_hz, b.high_hz)),
            motion_bins,
            reference_bins,
            pfa: PFA.get(params)?,
        })
    }

    /// The score threshold whose per-frame false-alarm probability is `pfa`
    /// under the F law: F⁻¹(1 − pfa; 2m, 2n) for the mean statistic, × m/n for
    /// the sum (Σ/Σ = (m/n)·mean/mean). It holds for white Gaussian noise with
    /// a rectangular window and no overlap (and, for real streams, without the
    /// DC and Nyquist bins, whose powers are χ²₁); with a Hann window the true
    /// rate at this threshold is higher (crate doc). `None` if the
    /// distribution cannot be formed.
    pub fn nominal_threshold(&self) -> Option<f64> {
        let (m, n) = (
            self.motion_bins.len() as f64,
            self.reference_bins.len() as f64,
        );
        let law = FisherSnedecor::new(2.0 * m, 2.0 * n).ok()?;
        if !(self.pfa > 0.0 && self.pfa < 1.0) {
            return None;
        }
        let mean_threshold = law.inverse_cdf(1.0 - self.pfa);
        let threshold = match self.statistic {
            Statistic::Mean => mean_threshold,
            Statistic::Sum => mean_threshold * m / n,
        };
        threshold.is_finite().then_some(threshold)
    }

    /// Number of power bins per frame (N/2 + 1 real, N for I/Q).
    pub fn bin_count(&self) -> usize {
        self.layout().bin_count()
    }

    /// |frequency| of power bin `k`, Hz.
    pub fn bin_frequency_hz(&self, k: usize) -> f64 {
        self.layout().abs_frequency_hz(k)
    }

    fn layout(&self) -> BinLayout {
        BinLayout {
            channels: self.channels,
            frame_len: self.frame_len,
            sample_rate_hz: self.sample_rate_hz,
        }
    }

    /// Bytes of state the built detector keeps (its buffers at the f64 types
    /// used here; an f32 port halves them).
    fn state_bytes(&self) -> usize {
        let f64_bytes = std::mem::size_of::<f64>();
        let complex_bytes = 2 * f64_bytes;
        let values = self.frame_len * self.channels.count();
        let bins = self.bin_count();
        // Framer ring (every value written twice so a frame is contiguous).
        let ring = 2 * values * f64_bytes;
        let window = self.frame_len * f64_bytes;
        let fft_buffers = match self.channels {
            // realfft: real input, N/2 + 1 complex outputs, about as much scratch.
            Channels::Real => self.frame_len * f64_bytes + 2 * bins * complex_bytes,
            // rustfft in place: N complex values plus as much scratch.
            Channels::Iq => 2 * self.frame_len * complex_bytes,
        };
        // Twiddle factors held by the FFT plan: about N/2 complex values.
        let twiddles = self.frame_len / 2 * complex_bytes;
        let power = bins * f64_bytes;
        let bin_lists =
            (self.motion_bins.len() + self.reference_bins.len()) * std::mem::size_of::<usize>();
        ring + window + fft_buffers + twiddles + power + bin_lists
    }

    /// Arithmetic per input sample instant.
    ///
    /// Per frame: the window (N multiplies, 2N for I/Q), the FFT (a complex
    /// N-point FFT ≈ 2.5·N·log2 N flops, the usual radix-2 count; a real
    /// N-point FFT ≈ half of that plus ≈ 3N for the split), |X|² (3 per bin),
    /// the two band sums (1 add per selected bin) and 1–3 divides. Per sample:
    /// a finite-check and a copy into the ring (2 per value). The frame cost is
    /// spread over the hop.
    fn ops_per_sample(&self) -> f64 {
        let n = self.frame_len as f64;
        let log2_n = n.log2().max(1.0);
        let (window_ops, fft_ops) = match self.channels {
            Channels::Real => (n, 2.5 * n * log2_n / 2.0 + 3.0 * n),
            Channels::Iq => (2.0 * n, 2.5 * n * log2_n),
        };
        let magnitude_ops = 3.0 * self.bin_count() as f64;
        let band_ops = (self.motion_bins.len() + self.reference_bins.len()) as f64 + 3.0;
        let per_frame = window_ops + fft_ops + magnitude_ops + band_ops;
        per_frame / self.hop as f64 + 2.0 * self.channels.count() as f64
    }
}

/// Where the bins of a frame's power spectrum lie in frequency.
#[derive(Debug, Clone, Copy)]
struct BinLayout {
    channels: Channels,
    frame_len: usize,
    sample_rate_hz: f64,
}

impl BinLayout {
    fn bin_count(&self) -> usize {
        match self.channels {
            Channels::Real => self.frame_len / 2 + 1,
            Channels::Iq => self.frame_len,
        }
    }

    /// |f_k|, computed as (k·fs)/N like numpy's `arange(nbins) * fs / N`, so
    /// band edges that fall exactly on a bin select the same bins as the
    /// reference pipeline.
    fn abs_frequency_hz(&self, k: usize) -> f64 {
        let folded = match self.channels {
            Channels::Real => k,
            // FFT order: bins above N/2 are negative frequencies.
            Channels::Iq => k.min(self.frame_len - k),
        };
        folded as f64 * self.sample_rate_hz / self.frame_len as f64
    }

    fn bins_in(&self, (low_hz, high_hz): (f64, f64)) -> Vec<usize> {
        (0..self.bin_count())
            .filter(|&k| {
                let f = self.abs_frequency_hz(k);
                f >= low_hz && f <= high_hz
            })
            .collect()
    }

    fn in_mains_notch(&self, k: usize, mains_hz: f64, notch_width_hz: f64) -> bool {
        let f = self.abs_frequency_hz(k);
        let reach_hz = (notch_width_hz + self.sample_rate_hz / self.frame_len as f64) / 2.0;
        // The nearest harmonic h ≥ 1 is the only one that can overlap.
        let harmonic = (f / mains_hz).round().max(1.0);
        (f - harmonic * mains_hz).abs() < reach_hz
    }
}

fn check_band(
    (low_hz, high_hz): (f64, f64),
    nyquist_hz: f64,
    (low_name, high_name): (&str, &str),
    note: &str,
) -> Result<(), ParamError> {
    if low_hz >= high_hz {
        return Err(ParamError::new(
            ID,
            low_name,
            low_hz,
            format!("the band's low edge must be below its high edge ({high_name} → {high_hz} Hz)"),
        ));
    }
    if high_hz > nyquist_hz {
        return Err(ParamError::new(
            ID,
            high_name,
            high_hz,
            format!("{high_hz} Hz{note} lies above the Nyquist frequency {nyquist_hz} Hz"),
        ));
    }
    Ok(())
}

fn empty_band(name: &str, (low_hz, high_hz): (f64, f64), layout: &BinLayout) -> ParamError {
    ParamError::new(
        ID,
        name,
        format!("{low_hz}..{high_hz} Hz"),
        format!(
            "the band holds no bin centre (bins are {} Hz apart); widen it or lengthen frame_len",
            layout.sample_rate_hz / layout.frame_len as f64
        ),
    )
}

fn first_shared(a: &[usize], b: &[usize]) -> Option<usize> {
    a.iter().copied().find(|k| b.contains(k))
}

impl DetectorPlugin for BandRatioPlugin {
    fn id(&self) -> &'static str {
        ID
    }

    fn about(&self) -> &'static str {
        "power in the human-motion Doppler band over power in nuisance bands, per STFT frame"
    }

    fn params(&self) -> &'static [ParamSpec] {
        &PARAMS
    }

    fn plan(
        &self,
        params: &Params,
        info: &StreamInfo,
    ) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        let config = BandRatioConfig::from_params(params, info)?;
        Ok(PrototypePlan::shared(BandRatioDetector::new(config)))
    }

    fn check(&self, params: &Params, info: &StreamInfo) -> Result<(), ParamError> {
        BandRatioConfig::from_params(params, info).map(|_| ())
    }

    fn cost(&self, params: &Params, info: &StreamInfo) -> Option<Cost> {
        let config = BandRatioConfig::from_params(params, info).ok()?;
        Some(Cost {
            state_bytes: config.state_bytes(),
            ops_per_sample: config.ops_per_sample(),
        })
    }

    /// The motion band, the reference band and (with `sway_in_reference`) the
    /// sway band, in Hz as used (edges, not bin centres).
    fn doppler_bands(&self, params: &Params, info: &StreamInfo) -> Vec<DopplerBand> {
        let Ok(config) = BandRatioConfig::from_params(params, info) else {
            return Vec::new();
        };
        let band = |role, label, (low_hz, high_hz): (f64, f64)| DopplerBand {
            role,
            label,
            low_hz,
            high_hz,
        };
        let mut bands = vec![
            band(BandRole::Motion, "motion", config.motion_band_hz),
            band(BandRole::Nuisance, "reference", config.reference_band_hz),
        ];
        if let Some(sway) = config.sway_band_hz {
            bands.push(band(BandRole::Nuisance, "sway", sway));
        }
        bands
    }

    fn framing(&self, params: &Params, info: &StreamInfo) -> Option<Framing> {
        let config = BandRatioConfig::from_params(params, info).ok()?;
        Some(Framing {
            frame_len: config.frame_len,
            hop: config.hop,
        })
    }

    /// The F-law threshold for the configured `pfa` (one decision per frame,
    /// so the frame Pfa is `pfa`); see [`BandRatioConfig::nominal_threshold`]
    /// for when it holds. Reported for every window, so that the harness shows
    /// how far a Hann window moves the measured rate from it.
    fn nominal_operating_point(&self, params: &Params, info: &StreamInfo) -> Option<NominalPoint> {
        let config = BandRatioConfig::from_params(params, info).ok()?;
        Some(NominalPoint {
            threshold: config.nominal_threshold()?,
            frame_pfa: config.pfa,
        })
    }
}

#[derive(Clone)]
enum Spectrum {
    Real(PowerSpectrum),
    Iq(ComplexPowerSpectrum),
}

/// What turns a frame into a score; separate from the framer so the framer's
/// callback can borrow it while the framer itself is borrowed.
#[derive(Clone)]
struct FrameScorer {
    spectrum: Spectrum,
    power: Vec<f64>,
    /// Bin tables, shared by every state of a plan.
    motion_bins: Arc<[usize]>,
    reference_bins: Arc<[usize]>,
    statistic: Statistic,
}

impl FrameScorer {
    fn score(&mut self, frame: &[f64]) -> f64 {
        match &mut self.spectrum {
            Spectrum::Real(s) => s.compute(frame, &mut self.power),
            Spectrum::Iq(s) => s.compute(frame, &mut self.power),
        }
        let motion: f64 = self.motion_bins.iter().map(|&k| self.power[k]).sum();
        let reference: f64 = self.reference_bins.iter().map(|&k| self.power[k]).sum();
        let (motion, reference) = match self.statistic {
            Statistic::Sum => (motion, reference),
            Statistic::Mean => (
                motion / self.motion_bins.len() as f64,
                reference / self.reference_bins.len() as f64,
            ),
        };
        motion / reference.max(REFERENCE_FLOOR_V2)
    }
}

/// A running band-ratio detector for one stream. [`BandRatioPlugin::plan`]
/// makes one fresh and every state is a clone of it (FFT plan, window and bin
/// tables shared, buffers its own).
#[derive(Clone)]
pub struct BandRatioDetector {
    framer: Framer,
    scorer: FrameScorer,
    values_per_sample: u64,
}

impl BandRatioDetector {
    /// A detector for a validated configuration (FFT planned and buffers made here).
    pub fn new(config: BandRatioConfig) -> Self {
        let values_per_sample = config.channels.count();
        let spectrum = match config.channels {
            Channels::Real => Spectrum::Real(PowerSpectrum::new(config.frame_len, config.window)),
            Channels::Iq => {
                Spectrum::Iq(ComplexPowerSpectrum::new(config.frame_len, config.window))
            }
        };
        BandRatioDetector {
            framer: Framer::new(
                config.frame_len * values_per_sample,
                config.hop * values_per_sample,
            ),
            scorer: FrameScorer {
                spectrum,
                power: vec![0.0; config.bin_count()],
                motion_bins: config.motion_bins.into(),
                reference_bins: config.reference_bins.into(),
                statistic: config.statistic,
            },
            values_per_sample: values_per_sample as u64,
        }
    }
}

impl Detector for BandRatioDetector {
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        let block = block.values();
        let mut clean = [0.0f32; CLEAN_CHUNK];
        let scorer = &mut self.scorer;
        let values_per_sample = self.values_per_sample;
        for chunk in block.chunks(CLEAN_CHUNK) {
            for (c, &v) in clean.iter_mut().zip(chunk) {
                *c = if v.is_finite() { v } else { 0.0 };
            }
            self.framer.push(&clean[..chunk.len()], |frame, end_index| {
                out.push(FrameScore {
                    end_sample: end_index / values_per_sample,
                    value: scorer.score(frame),
                });
            });
        }
        Ok(())
    }

    fn reset(&mut self) {
        self.framer.reset();
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use echobench_core::detector::{test_stream, ParamValue};

    fn config(
        given: &[(&str, ParamValue)],
        info: &StreamInfo,
    ) -> Result<BandRatioConfig, ParamError> {
        let given: Vec<(String, ParamValue)> = given
            .iter()
            .map(|(n, v)| (n.to_string(), v.clone()))
            .collect();
        let params = Params::resolve(ID, &PARAMS, &given)?;
        BandRatioConfig::from_params(&params, info)
    }

    /// The reference pipeline's setting, pinned on purpose: the Hz bands and 256/128 frames.
    fn hz_config(
        given: &[(&str, ParamValue)],
        info: &StreamInfo,
    ) -> Result<BandRatioConfig, ParamError> {
        let mut given: Vec<(String, ParamValue)> = given
            .iter()
            .map(|(n, v)| (n.to_string(), v.clone()))
            .collect();
        given.push(("band_units".into(), ParamValue::Text("hz".into())));
        given.push(("frame_len".into(), ParamValue::Integer(256)));
        given.push(("hop".into(), ParamValue::Integer(128)));
        let params = Params::resolve(ID, &PARAMS, &given)?;
        BandRatioConfig::from_params(&params, info)
    }

    #[test]
    fn default_bands_select_the_reference_pipeline_bins() {
        // docs/reference/detectors.md#d9: bins 2–10 (15.6–78.1 Hz) over 13–51 (101.6–398.4 Hz).
        let c = hz_config(&[], &test_stream(2000.0)).unwrap();
        assert_eq!(c.motion_bins, (2..=10).collect::<Vec<_>>());
        assert_eq!(c.reference_bins, (13..=51).collect::<Vec<_>>());
    }

    #[test]
    fn speed_band_follows_two_v_over_lambda() {
        // docs/reference/people.md#p4: v = 1.4 m/s at 24.125 GHz → torso Doppler ≈ 225 Hz
        // (185–266 Hz range quoted).
        let f = doppler_hz(1.4, 24.125e9);
        assert!((f - 2.0 * 1.4 * 24.125e9 / 299_792_458.0).abs() < 1e-9);
        assert!((185.0..=266.0).contains(&f), "{f}");
        let mut info = test_stream(2000.0);
        info.carrier_hz = 2.45e9;
        let c = config(
            &[
                ("band_units", ParamValue::Text("mps".into())),
                ("motion_min_mps", ParamValue::Real(0.6)),
                ("motion_max_mps", ParamValue::Real(4.0)),
                ("frame_len", ParamValue::Integer(256)),
            ],
            &info,
        )
        .unwrap();
        // 2·0.6/λ = 9.81 Hz, 2·4/λ = 65.4 Hz at 2.45 GHz: bins 2..=8 (15.6..62.5 Hz).
        assert!(
            (c.motion_band_hz.0 - 9.8066).abs() < 1e-3,
            "{:?}",
            c.motion_band_hz
        );
        assert_eq!(c.motion_bins, (2..=8).collect::<Vec<_>>());
    }

    #[test]
    fn mains_notch_removes_the_bins_that_hold_the_lines() {
        // 50 Hz lines with 7.8125 Hz bins: 50 Hz lies in bin 6's span [42.97, 50.78],
        // 100 in bin 13's [97.66, 105.47], 150 in 19's, 200 in 26's, ...
        let c = hz_config(
            &[
                ("mains_hz", ParamValue::Integer(50)),
                ("notch_width_hz", ParamValue::Real(0.0)),
            ],
            &test_stream(2000.0),
        )
        .unwrap();
        assert_eq!(c.motion_bins, vec![2, 3, 4, 5, 7, 8, 9, 10]);
        for k in [13, 19, 26, 32, 38, 45, 51] {
            assert!(!c.reference_bins.contains(&k), "bin {k} kept");
        }
        assert!(c.reference_bins.contains(&14) && c.reference_bins.contains(&50));
        // A 16 Hz notch around 50 Hz ([42, 58]) also overlaps bins 5 and 7.
        let wide = hz_config(
            &[
                ("mains_hz", ParamValue::Integer(50)),
                ("notch_width_hz", ParamValue::Real(16.0)),
            ],
            &test_stream(2000.0),
        )
        .unwrap();
        assert_eq!(wide.motion_bins, vec![2, 3, 4, 8, 9, 10]);
    }

    #[test]
    fn iq_bands_take_both_doppler_signs() {
        let mut info = test_stream(2000.0);
        info.channels = Channels::Iq;
        let c = hz_config(&[], &info).unwrap();
        let mut expected: Vec<usize> = (2..=10).collect();
        expected.extend((256 - 10)..=(256 - 2));
        assert_eq!(c.motion_bins, expected);
        assert_eq!(c.reference_bins.len(), 2 * 39);
    }
}

// The contract every detector keeps (block splits, reset, silence, clipping, NaN,
// a single sample, time order), checked by core's conformance kit.
#[cfg(test)]
mod conformance_tests {
    use super::*;
    use echobench_core::Channels;

    #[test]
    fn keeps_the_detector_contract_with_its_defaults() {
        echobench_core::conformance::assert_defaults_conform(
            &BandRatioPlugin,
            &[Channels::Real, Channels::Iq],
        );
    }
}
