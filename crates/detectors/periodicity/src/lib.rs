//! The `periodicity` detector: a walking person is recognised by the rhythm
//! of the micro-Doppler, at the step rate, which fans, swaying objects, hum
//! and noise do not have.
//!
//! # The physics it uses
//!
//! - **Gait is periodic at the step rate.** Cadence is 81–138 steps/min in
//!   the laboratory (115 on average for observed pedestrians; Tudor-Locke &
//!   Rowe, *Sports Med* 2012), i.e. a step rate of 1.35–2.3 Hz; the Boulic
//!   global walking model gives 2/D_c ≈ 1.7–2.1 Hz for relative speeds 1.3–2
//!   (Boulic, Magnenat-Thalmann & Thalmann, *The Visual Computer* 6, 1990;
//!   docs/reference/people.md#p1 to #p4). At every step one leg swings: shin and foot reach
//!   3.5–4.5× the body speed in mid-swing and the torso speed itself swings
//!   ±18 % at the step rate, so the power in every Doppler bin above the
//!   torso line rises and falls once per step. The spectrogram of a walker is
//!   periodic along time at the cadence (the idea behind the
//!   cadence-velocity diagram: Otero, SPIE 5807, 2005; Björklund, Petersson &
//!   Hendeby, 2012 — both from memory).
//! - **Fans are periodic too, but fast.** A rotor's blades flash when
//!   broadside to the sensor, N (even N) or 2N (odd N) times per revolution
//!   (Chen, *The Micro-Doppler Effect in Radar*, 2011, from memory;
//!   docs/reference/nuisances.md#n2): tens of hertz, with a comb of sharp harmonics and an
//!   extremely regular period.
//! - **Sways are slow and narrowband.** A pendulum or a plant moves at
//!   0.1–1 Hz with peak speeds of a few cm/s to 0.2 m/s (docs/reference/nuisances.md#n1):
//!   its Doppler stays below the motion band, which starts at a slow
//!   walker's torso speed (0.3 m/s by default).
//! - Noise, hum, lamp flicker and static clutter are stationary: their
//!   envelopes fluctuate, but not at a rhythm.
//!
//! # Method
//!
//! 1. Short-time power spectrum P_k(j) of frames of `frame_len` samples every
//!    `hop` (Hann by default); only the bins k of the motion band are kept.
//! 2. Each kept bin gives a log-power envelope e_k(j) = ln(P_k(j) + ε),
//!    sampled at r = fs/hop (16.3 Hz at 2.45 GHz, 154 Hz at 24.125 GHz, at
//!    the defaults and 2 kHz).
//! 3. Every `decision_hop_s`, over the last `analysis_s`: remove each
//!    envelope's mean and linear trend (a walker approaching or leaving
//!    changes its level by R⁻⁴), apply a Hann window, and take the
//!    modulation spectrum |E_k(f)|² by FFT.
//! 4. Whiten. For a stationary Gaussian input each bin's power is an
//!    exponential variable whatever its level, so ln P_k has the Gumbel
//!    variance π²/6 and two frames whose bin powers have correlation ρ have
//!    log-powers with covariance Li₂(ρ) = Σ ρⁿ/n² (from the Laguerre series of
//!    Kibble's bivariate exponential, from memory; checked by Monte Carlo in
//!    this crate's tests). For white noise ρ_d = `(Σ w[n]·w[n+d·hop] / Σ w²)²`,
//!    so the noise's modulation spectrum S(f) = Σ_d Li₂(ρ_d) e^{−j2πfd/r} is
//!    known in closed form, and the cadence spectrum
//!    C(f) = mean_k |E_k(f)|² / S(f) is ≈ 1 for any stationary noise or
//!    clutter, at any level: a CFAR normalisation in the modulation domain.
//! 5. `cadence` = max C(f) over the step band (`step_low_hz`..`step_high_hz`);
//!    `line` = max C(f) from `flash_min_hz` to the envelope's Nyquist r/2;
//!    **score = max(cadence − 1, 0) / (1 + (line/cadence)²)**.
//!
//! The first factor is the gait evidence: step-rate modulation beyond what a
//! stationary signal would show. The second is the rotor penalty: when the
//! strongest rhythm lies at a high modulation frequency (a blade-flash comb,
//! or the beat of deterministic lines) and dominates the step band, the score
//! is cut (by half when equal, by 5 when twice as strong); a walker's
//! envelope has most of its modulation at the step rate and its low
//! harmonics, so it keeps its score.
//!
//! # The one design decision: log-power envelopes whitened by their noise law
//!
//! There is no separate "motion energy above a floor" factor: in the log
//! domain a component weaker than the noise of a bin modulates that bin's
//! log-power only in proportion to its SNR, so step-rate modulation that
//! rises above the noise's own (known) fluctuation already requires motion
//! energy above the floor, and a gain or range change only adds a constant to each
//! envelope, which the detrending removes. The score therefore needs no
//! noise-level estimate, no reference band and no calibration constant, and is
//! the same for a sensor at 2.4 or 24 GHz once the motion band is given in
//! speeds (`band_units = mps`, the default).
//!
//! # Parameters
//!
//! - The motion band is `motion_min_mps`..`motion_max_mps` by default (0.3–4
//!   m/s: a walker's torso to its limbs, `echobench_core::doppler`), through
//!   f = 2v/λ = 2·v·f_c/c with `StreamInfo::carrier_hz`; a default top above
//!   Nyquist is clipped to fs/2. `motion_low_hz`..`motion_high_hz` (or
//!   `band_units: hz`) give it in Hz instead, as an explicit choice. Bins are
//!   selected with inclusive edges on their centre frequency; the DC bin
//!   (and, for real streams, the Nyquist bin, whose power is χ²₁ and not
//!   exponential) is never used. For I/Q streams both Doppler signs are used.
//! - The frame: by default the velocity resolution `resolution_mps` = 0.25
//!   m/s (T = λ/(2Δv): 0.245 s at 2.45 GHz, 0.025 s at 24.125 GHz), hop a
//!   quarter frame (`hop_fraction`); or `frame_s`, or `frame_len`/`hop` in
//!   samples. The frame is also the envelope's anti-alias filter: a
//!   modulation near a multiple of r folds into the step band attenuated only
//!   by the frame's response, so keep the hop ≤ frame/4 (the default) to put
//!   the first fold at 4/T, deep in the Hann frame's stop band. The envelope
//!   rate r = fs/hop is then 16 Hz at 2.45 GHz and 154 Hz at 24 GHz (2 kHz);
//!   the first score still waits `analysis_s`, so the frame's length hardly
//!   changes this detector's latency.
//! - `step_low_hz`, `step_high_hz`, `flash_min_hz` stay in Hz: they are
//!   rates of the envelope (cadence, blade flashes), the same at any carrier.
//! - `analysis_s` (4 s: about 8 steps), `decision_hop_s` (0.5 s).
//! - `step_low_hz`, `step_high_hz` (1.3–2.4 Hz, the cadence range above with
//!   a small margin), `flash_min_hz` (5 Hz: above the second step harmonic).
//!
//! # Scores, latency, nominal Pfa
//!
//! The first score comes once `analysis_s` of frames exist; each score
//! describes the `analysis_s` before its time stamp (the end of its newest
//! frame). For noise alone the cadence spectrum averages 1 and the score
//! stays mostly below 0.5 (slow sways in the tests: up to ≈ 1.5); it has no
//! closed-form law (the bins are correlated through the Hann window, the
//! modulation bins through the analysis window, and the score takes
//! maxima), so thresholds must be calibrated empirically on
//! noise-only runs, as the harness does. A walker clearly inside the band
//! scores about 5–40.
//!
//! # Limits
//!
//! A walker crossing the beam tangentially has little radial motion and
//! scores low. A pendulum fast enough to reach the motion band modulates it
//! at twice its frequency, which can fall in the step band (a 0.25 m pendulum
//! swings at 1 Hz). A slow rotor turning at 1.3–2.4 rev/s whose flashes are
//! dominated by a single blade is itself a rhythm at the step rate; the
//! penalty only acts when its faster flash lines outweigh that rhythm (one
//! blade 10 dB brighter than the other four is cut, see the tests; one 20 dB
//! brighter scores like a walker). Strong stationary power in the walker's
//! bins (a fan's Doppler overlapping the walker's) dilutes the walker's
//! modulation. A long run of zeros inside a noisy stream (a data dropout) is
//! a broadband step in every envelope.
//!
//! # Edge cases
//!
//! Non-finite samples (NaN, ±∞) are taken as 0. Powers below
//! [`LOG_FLOOR_V2`] are taken as that floor, so silence gives constant
//! envelopes and scores 0; so does any signal whose envelopes do not
//! fluctuate (a pure tone).
#![deny(missing_docs)]

use echobench_core::detector::{
    BandRole, Cost, Detector, DetectorFailure, DetectorPlan, DetectorPlugin, DopplerBand,
    ParamError, ParamSpec, Params, PrototypePlan, Samples,
};
use echobench_core::doppler::{
    self, BandParams, FrameDefaults, FrameParams, FrameRules, FrameUnits, Framing,
    DEFAULT_RESOLUTION_MPS, MOTION_MAX_MPS, MOTION_MIN_MPS,
};
use echobench_core::param_decl::{ChoiceParam, RealParam, TuneRange};
use echobench_core::{Channels, FrameScore, StreamInfo};
use echobench_detector_dsp::{ComplexPowerSpectrum, Framer, PowerSpectrum, Window};
use realfft::num_complex::Complex;
use realfft::{RealFftPlanner, RealToComplex};
use std::f64::consts::PI;
use std::sync::Arc;

/// The plugin's identifier in suite files.
pub const ID: &str = "periodicity";

/// Bin powers below this (V², |X_k|² units) are taken as it before the logarithm.
pub const LOG_FLOOR_V2: f64 = 1e-30;

/// Values cleaned of NaN per pass: a stack buffer, so `process` never allocates.
const CLEAN_CHUNK: usize = 64;

/// Largest envelope store (analysis frames × motion bins) a configuration may ask for.
const MAX_ENVELOPE_VALUES: usize = 1 << 22;

pub use echobench_core::doppler::doppler_hz;

/// The dilogarithm Li₂(x) = Σ_{n≥1} xⁿ/n² for x in [0, 1]: the covariance of
/// ln a and ln b for unit-mean exponential powers a, b with correlation x
/// (Li₂(1) = π²/6, the variance of the log of a unit exponential).
///
/// The series is summed directly for x ≤ ½ and through Euler's reflection
/// Li₂(x) = π²/6 − ln x·ln(1−x) − Li₂(1−x) above (Abramowitz & Stegun 27.7),
/// so at most ~60 terms are needed. Values outside [0, 1] are clamped.
///
/// ```
/// use echobench_detector_periodicity::log_power_covariance;
/// assert!((log_power_covariance(1.0) - std::f64::consts::PI.powi(2) / 6.0).abs() < 1e-15);
/// assert!((log_power_covariance(0.5) - 0.582_240_526_465_012_5).abs() < 1e-13);
/// ```
pub fn log_power_covariance(power_correlation: f64) -> f64 {
    let x = if power_correlation.is_nan() {
        0.0
    } else {
        power_correlation.clamp(0.0, 1.0)
    };
    if x == 0.0 {
        return 0.0;
    }
    if x == 1.0 {
        return PI * PI / 6.0;
    }
    if x > 0.5 {
        return PI * PI / 6.0 - x.ln() * (1.0 - x).ln() - dilog_series(1.0 - x);
    }
    dilog_series(x)
}

fn dilog_series(x: f64) -> f64 {
    let mut sum = 0.0;
    let mut power = 1.0;
    for n in 1..200 {
        power *= x;
        let term = power / (n * n) as f64;
        sum += term;
        if term < 1e-18 * sum {
            break;
        }
    }
    sum
}

/// The correlation of one bin's power between two frames `lag_samples` apart,
/// for white Gaussian input: `(Σ w[n]·w[n+lag] / Σ w²)²`.
pub fn frame_power_correlation(window: &[f64], lag_samples: usize) -> f64 {
    let energy: f64 = window.iter().map(|w| w * w).sum();
    if lag_samples >= window.len() || energy <= 0.0 {
        return 0.0;
    }
    let overlap: f64 = window
        .iter()
        .zip(&window[lag_samples..])
        .map(|(a, b)| a * b)
        .sum();
    (overlap / energy).powi(2)
}

/// The `periodicity` plugin.
pub struct PeriodicityPlugin;

/// The frame family: a velocity resolution of [`DEFAULT_RESOLUTION_MPS`] by
/// default, hop a quarter frame (the envelope's anti-alias rule below);
/// 256/64 samples when the frame is given in samples.
pub const FRAME: FrameParams = FrameParams::new(
    FrameDefaults {
        frame_len: 256,
        hop: 64,
        frame_s: 0.128,
        resolution_mps: DEFAULT_RESOLUTION_MPS,
        hop_fraction: 0.25,
    },
    FrameRules {
        default_units: FrameUnits::Mps,
        min_len: 8,
        max_len: 65_536,
    },
);

/// The motion band's edge parameters.
pub const MOTION: BandParams = BandParams {
    low_hz: RealParam {
        name: "motion_low_hz",
        unit: "Hz",
        about: "lower edge of the motion band (Hz units)",
        min: 0.0,
        max: 1e6,
        default: 10.0,
    },
    high_hz: RealParam {
        name: "motion_high_hz",
        unit: "Hz",
        about: "upper edge of the motion band (Hz units)",
        min: 0.0,
        max: 1e6,
        default: 80.0,
    },
    low_mps: RealParam {
        name: "motion_min_mps",
        unit: "m/s",
        about: "slowest radial speed of the motion band",
        min: 0.0,
        max: 100.0,
        // A walker's torso to its limbs (echobench_core::doppler::MOTION_MIN_MPS).
        default: MOTION_MIN_MPS,
    },
    high_mps: RealParam {
        name: "motion_max_mps",
        unit: "m/s",
        about: "fastest radial speed of the motion band (default: clipped to Nyquist)",
        min: 0.0,
        max: 100.0,
        default: MOTION_MAX_MPS,
    },
};

const WINDOW: ChoiceParam<Window> = Window::param("frame window");

const ANALYSIS_S: RealParam = RealParam {
    name: "analysis_s",
    unit: "s",
    about: "length of envelope analysed for cadence",
    min: 0.5,
    max: 60.0,
    default: 4.0,
};

const DECISION_HOP_S: RealParam = RealParam {
    name: "decision_hop_s",
    unit: "s",
    about: "time between scores",
    min: 1e-3,
    max: 60.0,
    default: 0.5,
};

const STEP_LOW_HZ: RealParam = RealParam {
    name: "step_low_hz",
    unit: "Hz",
    about: "lowest step rate (cadence/60) searched",
    min: 0.1,
    max: 50.0,
    // 81 steps/min = 1.35 Hz (Tudor-Locke & Rowe 2012), with a small margin.
    default: 1.3,
};

const STEP_HIGH_HZ: RealParam = RealParam {
    name: "step_high_hz",
    unit: "Hz",
    about: "highest step rate (cadence/60) searched",
    min: 0.1,
    max: 50.0,
    // 138 steps/min = 2.3 Hz (Tudor-Locke & Rowe 2012), with a small margin.
    default: 2.4,
};

const FLASH_MIN_HZ: RealParam = RealParam {
    name: "flash_min_hz",
    unit: "Hz",
    about: "modulation frequency above which the strongest line counts against the score (rotors)",
    min: 0.2,
    max: 1e5,
    default: 5.0,
};

static PARAMS: [ParamSpec; 18] = [
    // Tunable (`echobench tune`): the frame, the band and the smoothing; never the threshold,
    // which the runner calibrates.
    doppler::BAND_UNITS.spec(),
    MOTION.low_mps.spec_tuned(TuneRange::Linear {
        low: 0.1,
        high: 0.6,
    }),
    MOTION.high_mps.spec_tuned(TuneRange::Linear {
        low: 2.0,
        high: 6.0,
    }),
    MOTION.low_hz.spec(),
    MOTION.high_hz.spec(),
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
    WINDOW.spec(),
    ANALYSIS_S.spec_tuned(TuneRange::Log {
        low: 2.0,
        high: 8.0,
    }),
    DECISION_HOP_S.spec(),
    STEP_LOW_HZ.spec(),
    STEP_HIGH_HZ.spec(),
    FLASH_MIN_HZ.spec_tuned(TuneRange::Log {
        low: 2.0,
        high: 20.0,
    }),
];

/// A validated configuration: the bins, the envelope sampling and the analysis layout.
///
/// [`PeriodicityPlugin::plan`] and [`PeriodicityPlugin::cost`] both start
/// from it; it is public so a user can see what a parameter set selects.
#[derive(Debug, Clone, PartialEq)]
pub struct PeriodicityConfig {
    /// Sample rate, Hz.
    pub sample_rate_hz: f64,
    /// Real or I/Q input.
    pub channels: Channels,
    /// Frame length, samples (sample instants for I/Q).
    pub frame_len: usize,
    /// Hop between frames, samples.
    pub hop: usize,
    /// Frame window.
    pub window: Window,
    /// Motion band edges actually used, Hz.
    pub motion_band_hz: (f64, f64),
    /// Power-spectrum indices of the motion bins (one-sided for real, FFT order for I/Q).
    pub motion_bins: Vec<usize>,
    /// Envelope sample rate fs/hop, Hz.
    pub envelope_rate_hz: f64,
    /// Frames per analysis window.
    pub analysis_frames: usize,
    /// Frames between decisions.
    pub decision_frames: usize,
    /// Length of the modulation-spectrum FFT (a power of two ≥ `analysis_frames`).
    pub modulation_fft_len: usize,
    /// Modulation-spectrum indices of the step band, inclusive.
    pub step_range: (usize, usize),
    /// Modulation-spectrum indices of the rotor-line search, inclusive.
    pub line_range: (usize, usize),
}

impl PeriodicityConfig {
    /// Validates `params` against the stream.
    ///
    /// # Errors
    /// A [`ParamError`] naming the parameter: a motion band with low ≥ high,
    /// above Nyquist or without a usable bin; `band_units = mps` without a
    /// carrier; a step band with low ≥ high, reaching `flash_min_hz`, or
    /// holding no modulation bin; `flash_min_hz` above the envelope's Nyquist
    /// (fs/hop/2); an analysis window shorter than two periods of
    /// `step_low_hz` or too large to store; a bad stream sample rate.
    pub fn from_params(params: &Params, info: &StreamInfo) -> Result<Self, ParamError> {
        let fs = echobench_core::detector::check_sample_rate(ID, info)?;
        let Framing { frame_len, hop } = doppler::resolve_frame(ID, params, info, &FRAME)?;
        let window = WINDOW.get(params)?;
        let layout = BinLayout {
            channels: info.channels,
            frame_len,
            sample_rate_hz: fs,
        };
        let nyquist_hz = fs / 2.0;

        let units = doppler::band_units(ID, params, &doppler::BAND_UNITS, &[&MOTION])?;
        let band = doppler::resolve_band(ID, params, info, units, &MOTION)?;
        let (motion_band_hz, low_name, high_name) =
            ((band.low_hz, band.high_hz), band.low_name, band.high_name);
        if motion_band_hz.0 >= motion_band_hz.1 {
            return Err(ParamError::new(
                ID,
                low_name,
                format!("{} Hz", motion_band_hz.0),
                format!("must lie below {high_name} ({} Hz)", motion_band_hz.1),
            ));
        }
        if motion_band_hz.1 > nyquist_hz {
            return Err(ParamError::new(
                ID,
                high_name,
                format!("{} Hz", motion_band_hz.1),
                format!("lies above the Nyquist frequency {nyquist_hz} Hz"),
            ));
        }
        let motion_bins = layout.usable_bins_in(motion_band_hz);
        if motion_bins.is_empty() {
            return Err(ParamError::new(
                ID,
                low_name,
                format!("{}..{} Hz", motion_band_hz.0, motion_band_hz.1),
                format!(
                    "the band holds no usable bin (bins are {} Hz apart, DC and Nyquist excluded); widen it or lengthen frame_len",
                    fs / frame_len as f64
                ),
            ));
        }

        let envelope_rate_hz = fs / hop as f64;
        let envelope_nyquist_hz = envelope_rate_hz / 2.0;
        let (step_low_hz, step_high_hz) = (STEP_LOW_HZ.get(params)?, STEP_HIGH_HZ.get(params)?);
        let flash_min_hz = FLASH_MIN_HZ.get(params)?;
        if step_low_hz >= step_high_hz {
            return Err(ParamError::new(
                ID,
                "step_low_hz",
                step_low_hz,
                format!("must lie below step_high_hz = {step_high_hz}"),
            ));
        }
        if step_high_hz >= flash_min_hz {
            return Err(ParamError::new(
                ID,
                "flash_min_hz",
                flash_min_hz,
                format!("must lie above the step band's top, step_high_hz = {step_high_hz}"),
            ));
        }
        if flash_min_hz >= envelope_nyquist_hz {
            return Err(ParamError::new(
                ID,
                "hop",
                hop,
                format!(
                    "the envelope is sampled at fs/hop = {envelope_rate_hz} Hz, whose Nyquist \
                     {envelope_nyquist_hz} Hz must lie above flash_min_hz = {flash_min_hz}"
                ),
            ));
        }
        let analysis_s = ANALYSIS_S.get(params)?;
        if analysis_s * step_low_hz < 2.0 {
            return Err(ParamError::new(
                ID,
                "analysis_s",
                analysis_s,
                format!(
                    "must hold at least two periods of the slowest step rate, 2/step_low_hz = {} s",
                    2.0 / step_low_hz
                ),
            ));
        }
        let analysis_frames = (analysis_s * envelope_rate_hz).round() as usize;
        if analysis_frames.saturating_mul(motion_bins.len()) > MAX_ENVELOPE_VALUES {
            return Err(ParamError::new(
                ID,
                "analysis_s",
                analysis_s,
                format!(
                    "{analysis_frames} frames × {} motion bins exceed the {MAX_ENVELOPE_VALUES} \
                     envelope values this detector stores; shorten it, raise hop or narrow the band",
                    motion_bins.len()
                ),
            ));
        }
        let decision_hop_s = DECISION_HOP_S.get(params)?;
        let decision_frames = (decision_hop_s * envelope_rate_hz).round() as usize;
        if decision_frames == 0 {
            return Err(ParamError::new(
                ID,
                "decision_hop_s",
                decision_hop_s,
                format!(
                    "is shorter than one frame hop ({} s)",
                    1.0 / envelope_rate_hz
                ),
            ));
        }
        let modulation_fft_len = analysis_frames.next_power_of_two();
        let resolution_hz = envelope_rate_hz / modulation_fft_len as f64;
        let index_range = |low_hz: f64, high_hz: f64| {
            let first = (low_hz / resolution_hz).ceil() as usize;
            let last = ((high_hz / resolution_hz).floor() as usize).min(modulation_fft_len / 2);
            (first <= last).then_some((first, last))
        };
        let step_range = index_range(step_low_hz, step_high_hz).ok_or_else(|| {
            ParamError::new(
                ID,
                "step_low_hz",
                format!("{step_low_hz}..{step_high_hz} Hz"),
                format!(
                    "the step band holds no modulation bin ({resolution_hz} Hz apart); widen it or lengthen analysis_s"
                ),
            )
        })?;
        let line_range = index_range(flash_min_hz, envelope_nyquist_hz).ok_or_else(|| {
            ParamError::new(
                ID,
                "flash_min_hz",
                flash_min_hz,
                format!("leaves no modulation bin below the envelope's Nyquist {envelope_nyquist_hz} Hz"),
            )
        })?;

        Ok(PeriodicityConfig {
            sample_rate_hz: fs,
            channels: info.channels,
            frame_len,
            hop,
            window,
            motion_band_hz,
            motion_bins,
            envelope_rate_hz,
            analysis_frames,
            decision_frames,
            modulation_fft_len,
            step_range,
            line_range,
        })
    }

    /// Modulation frequency of modulation-spectrum index `i`, Hz.
    pub fn modulation_frequency_hz(&self, i: usize) -> f64 {
        i as f64 * self.envelope_rate_hz / self.modulation_fft_len as f64
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

    /// The modulation spectrum of stationary white Gaussian noise's log-power
    /// envelope, S(f) = Σ_d Li₂(ρ_d) cos(2πfd/r), at indices 0..=L/2.
    pub fn noise_modulation_spectrum(&self) -> Vec<f64> {
        let window = self.window.values(self.frame_len);
        let mut covariances = vec![log_power_covariance(1.0)];
        let mut lag = 1;
        while lag * self.hop < self.frame_len {
            covariances.push(log_power_covariance(frame_power_correlation(
                &window,
                lag * self.hop,
            )));
            lag += 1;
        }
        let len = self.modulation_fft_len;
        (0..=len / 2)
            .map(|i| {
                covariances[0]
                    + covariances
                        .iter()
                        .enumerate()
                        .skip(1)
                        .map(|(d, c)| {
                            2.0 * c * (std::f64::consts::TAU * (i * d) as f64 / len as f64).cos()
                        })
                        .sum::<f64>()
            })
            .collect()
    }

    /// Bytes of state the built detector keeps (its buffers at the f64 types
    /// used here; an f32 port halves them).
    fn state_bytes(&self) -> usize {
        let f64_bytes = std::mem::size_of::<f64>();
        let complex_bytes = 2 * f64_bytes;
        let values = self.frame_len * self.channels.count();
        let bins = self.layout().bin_count();
        let spectrum = match self.channels {
            // Framer ring (written twice), window, realfft input/output/scratch, twiddles.
            Channels::Real => {
                2 * values * f64_bytes
                    + 2 * self.frame_len * f64_bytes
                    + 2 * bins * complex_bytes
                    + self.frame_len / 2 * complex_bytes
            }
            // Framer ring, window, in-place buffer and scratch, twiddles.
            Channels::Iq => {
                2 * values * f64_bytes
                    + self.frame_len * f64_bytes
                    + 2 * self.frame_len * complex_bytes
                    + self.frame_len / 2 * complex_bytes
            }
        };
        let power = bins * f64_bytes;
        let motion_list = self.motion_bins.len() * std::mem::size_of::<usize>();
        let envelopes = self.analysis_frames * self.motion_bins.len() * f64_bytes;
        let modulation_half = self.modulation_fft_len / 2 + 1;
        // Analysis window and centred ramp; FFT input, output, scratch, twiddles;
        // accumulated spectrum and noise spectrum.
        let analysis = 2 * self.analysis_frames * f64_bytes
            + self.modulation_fft_len * f64_bytes
            + 2 * modulation_half * complex_bytes
            + self.modulation_fft_len / 2 * complex_bytes
            + 2 * modulation_half * f64_bytes;
        spectrum + power + motion_list + envelopes + analysis
    }

    /// Arithmetic per input sample instant.
    ///
    /// Per frame (every `hop` samples): window (N, 2N for I/Q), FFT (complex
    /// N-point ≈ 2.5·N·log2 N flops, the usual radix-2 count; real N-point ≈
    /// half of that plus ≈ 3N for the split), |X|² of the motion bins (3 each)
    /// and their logarithms (≈ 20 flops each, a polynomial log). Per decision
    /// (every `decision_frames` frames), for each motion bin: mean and slope
    /// (4W), detrend and window (3W), a real L-point FFT (2.5·(L/2)·log2(L/2)
    /// plus 3L) and |E|² accumulation (3 per modulation bin); then the whitening
    /// and the two maxima (3 per modulation bin). Per sample: a finite-check
    /// and a copy into the ring (2 per value).
    fn ops_per_sample(&self) -> f64 {
        let n = self.frame_len as f64;
        let log2 = |x: f64| x.log2().max(1.0);
        let (window_ops, fft_ops) = match self.channels {
            Channels::Real => (n, 2.5 * n * log2(n) / 2.0 + 3.0 * n),
            Channels::Iq => (2.0 * n, 2.5 * n * log2(n)),
        };
        let m = self.motion_bins.len() as f64;
        let per_frame = window_ops + fft_ops + 23.0 * m;
        let w = self.analysis_frames as f64;
        let l = self.modulation_fft_len as f64;
        let half = l / 2.0 + 1.0;
        let per_decision =
            m * (7.0 * w + 2.5 * (l / 2.0) * log2(l / 2.0) + 3.0 * l + 3.0 * half) + 3.0 * half;
        let hop = self.hop as f64;
        per_frame / hop
            + per_decision / (hop * self.decision_frames as f64)
            + 2.0 * self.channels.count() as f64
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

    fn abs_frequency_hz(&self, k: usize) -> f64 {
        let folded = match self.channels {
            Channels::Real => k,
            // FFT order: bins above N/2 are negative frequencies.
            Channels::Iq => k.min(self.frame_len - k),
        };
        folded as f64 * self.sample_rate_hz / self.frame_len as f64
    }

    /// Bins whose |f| lies in the band, without DC (static clutter, and a
    /// real χ²₁ power) and without a real stream's Nyquist bin (also χ²₁).
    fn usable_bins_in(&self, (low_hz, high_hz): (f64, f64)) -> Vec<usize> {
        let real_nyquist = match self.channels {
            Channels::Real if self.frame_len.is_multiple_of(2) => Some(self.frame_len / 2),
            _ => None,
        };
        (1..self.bin_count())
            .filter(|&k| Some(k) != real_nyquist)
            .filter(|&k| {
                let f = self.abs_frequency_hz(k);
                f >= low_hz && f <= high_hz
            })
            .collect()
    }
}

impl DetectorPlugin for PeriodicityPlugin {
    fn id(&self) -> &'static str {
        ID
    }

    fn about(&self) -> &'static str {
        "gait cadence (1.3–2.4 Hz step rhythm) in the micro-Doppler envelopes, rotor lines penalised"
    }

    fn params(&self) -> &'static [ParamSpec] {
        &PARAMS
    }

    fn plan(
        &self,
        params: &Params,
        info: &StreamInfo,
    ) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        let config = PeriodicityConfig::from_params(params, info)?;
        Ok(PrototypePlan::shared(PeriodicityDetector::new(config)))
    }

    fn check(&self, params: &Params, info: &StreamInfo) -> Result<(), ParamError> {
        PeriodicityConfig::from_params(params, info).map(|_| ())
    }

    fn cost(&self, params: &Params, info: &StreamInfo) -> Option<Cost> {
        let config = PeriodicityConfig::from_params(params, info).ok()?;
        Some(Cost {
            state_bytes: config.state_bytes(),
            ops_per_sample: config.ops_per_sample(),
        })
    }

    /// The motion band in Hz as used (the step and flash bands are modulation
    /// frequencies of the envelope, cadence and rotor rates, not Doppler bands).
    fn doppler_bands(&self, params: &Params, info: &StreamInfo) -> Vec<DopplerBand> {
        let Ok(config) = PeriodicityConfig::from_params(params, info) else {
            return Vec::new();
        };
        vec![DopplerBand {
            role: BandRole::Motion,
            label: "motion",
            low_hz: config.motion_band_hz.0,
            high_hz: config.motion_band_hz.1,
        }]
    }

    fn framing(&self, params: &Params, info: &StreamInfo) -> Option<Framing> {
        let config = PeriodicityConfig::from_params(params, info).ok()?;
        Some(Framing {
            frame_len: config.frame_len,
            hop: config.hop,
        })
    }
}

/// What one decision found.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CadenceReading {
    /// Time of the score, s (end of the newest frame).
    pub t_s: f64,
    /// Largest whitened modulation C(f) in the step band (≈ 1 for noise).
    pub cadence: f64,
    /// Where it lies: the step-rate estimate, Hz (steps per minute = 60 × this).
    pub step_hz: f64,
    /// Largest whitened modulation from `flash_min_hz` to the envelope's Nyquist.
    pub line: f64,
    /// Where it lies, Hz (possibly folded: the envelope is sampled at fs/hop).
    pub line_hz: f64,
    /// The score, max(cadence − 1, 0) / (1 + (line/cadence)²).
    pub score: f64,
}

#[derive(Clone)]
enum Spectrum {
    Real(PowerSpectrum),
    Iq(ComplexPowerSpectrum),
}

/// Everything but the framer, so the framer's callback can borrow it. The
/// tables (`Arc`) are shared by every state of a plan; the rest is its own.
#[derive(Clone)]
struct State {
    spectrum: Spectrum,
    power: Vec<f64>,
    motion_bins: Arc<[usize]>,
    /// Log-power envelopes: row = frame index mod W, column = motion bin.
    envelopes: Vec<f64>,
    frames_seen: u64,
    analysis_frames: usize,
    decision_frames: usize,
    values_per_sample: u64,
    sample_rate_hz: f64,
    /// Periodic Hann window over the analysis frames.
    analysis_window: Arc<[f64]>,
    /// n − (W−1)/2, for the least-squares slope.
    centred_ramp: Arc<[f64]>,
    ramp_energy: f64,
    analysis_window_energy: f64,
    modulation_fft: Arc<dyn RealToComplex<f64>>,
    modulation_input: Vec<f64>,
    modulation_output: Vec<Complex<f64>>,
    modulation_scratch: Vec<Complex<f64>>,
    /// Σ_k |E_k(f)|², then C(f) after the decision.
    cadence_spectrum: Vec<f64>,
    noise_spectrum: Arc<[f64]>,
    step_range: (usize, usize),
    line_range: (usize, usize),
    modulation_resolution_hz: f64,
    last: Option<CadenceReading>,
}

impl State {
    fn on_frame(&mut self, frame: &[f64], end_index: u64, out: &mut Vec<FrameScore>) {
        match &mut self.spectrum {
            Spectrum::Real(s) => s.compute(frame, &mut self.power),
            Spectrum::Iq(s) => s.compute(frame, &mut self.power),
        }
        let m = self.motion_bins.len();
        let row = (self.frames_seen % self.analysis_frames as u64) as usize * m;
        for (e, &k) in self.envelopes[row..row + m]
            .iter_mut()
            .zip(self.motion_bins.iter())
        {
            *e = (self.power[k] + LOG_FLOOR_V2).ln();
        }
        self.frames_seen += 1;
        let w = self.analysis_frames as u64;
        if self.frames_seen >= w
            && (self.frames_seen - w).is_multiple_of(self.decision_frames as u64)
        {
            let end_sample = end_index / self.values_per_sample;
            let reading = self.analyse(end_sample as f64 / self.sample_rate_hz);
            out.push(FrameScore {
                end_sample,
                value: reading.score,
            });
            self.last = Some(reading);
        }
    }

    fn analyse(&mut self, t_s: f64) -> CadenceReading {
        let w = self.analysis_frames;
        let m = self.motion_bins.len();
        // The newest frame sits in row (frames_seen − 1) mod W, so the oldest in frames_seen mod W.
        let oldest = (self.frames_seen % w as u64) as usize;
        self.cadence_spectrum.fill(0.0);
        for bin in 0..m {
            let (mut sum, mut ramp_sum) = (0.0, 0.0);
            for n in 0..w {
                let e = self.envelopes[((oldest + n) % w) * m + bin];
                self.modulation_input[n] = e;
                sum += e;
                ramp_sum += self.centred_ramp[n] * e;
            }
            let mean = sum / w as f64;
            let slope = ramp_sum / self.ramp_energy;
            for n in 0..w {
                let detrended = self.modulation_input[n] - mean - slope * self.centred_ramp[n];
                self.modulation_input[n] = detrended * self.analysis_window[n];
            }
            // realfft uses its input as scratch: the zero padding is rewritten every time.
            self.modulation_input[w..].fill(0.0);
            self.modulation_fft
                .process_with_scratch(
                    &mut self.modulation_input,
                    &mut self.modulation_output,
                    &mut self.modulation_scratch,
                )
                .expect("buffer lengths are fixed at construction");
            for (acc, z) in self
                .cadence_spectrum
                .iter_mut()
                .zip(&self.modulation_output)
            {
                *acc += z.norm_sqr();
            }
        }
        let normalisation = 1.0 / (m as f64 * self.analysis_window_energy);
        for (c, s) in self
            .cadence_spectrum
            .iter_mut()
            .zip(self.noise_spectrum.iter())
        {
            *c *= normalisation / s;
        }
        let peak = |(first, last): (usize, usize), spectrum: &[f64]| {
            let mut best = (first, spectrum[first]);
            for (i, &c) in spectrum.iter().enumerate().take(last + 1).skip(first + 1) {
                if c > best.1 {
                    best = (i, c);
                }
            }
            best
        };
        let (step_index, cadence) = peak(self.step_range, &self.cadence_spectrum);
        let (line_index, line) = peak(self.line_range, &self.cadence_spectrum);
        let score = if cadence > 1.0 {
            (cadence - 1.0) / (1.0 + (line / cadence).powi(2))
        } else {
            0.0
        };
        CadenceReading {
            t_s,
            cadence,
            step_hz: step_index as f64 * self.modulation_resolution_hz,
            line,
            line_hz: line_index as f64 * self.modulation_resolution_hz,
            score: if score.is_finite() { score } else { 0.0 },
        }
    }
}

/// A running periodicity detector for one stream. [`PeriodicityPlugin::plan`]
/// makes one fresh and every state is a clone of it (both FFT plans, the
/// windows, the bin table and the noise spectrum shared, buffers its own).
#[derive(Clone)]
pub struct PeriodicityDetector {
    framer: Framer,
    state: State,
}

impl PeriodicityDetector {
    /// A detector for a validated configuration (FFTs planned and buffers made here).
    pub fn new(config: PeriodicityConfig) -> Self {
        let values_per_sample = config.channels.count();
        let spectrum = match config.channels {
            Channels::Real => Spectrum::Real(PowerSpectrum::new(config.frame_len, config.window)),
            Channels::Iq => {
                Spectrum::Iq(ComplexPowerSpectrum::new(config.frame_len, config.window))
            }
        };
        let w = config.analysis_frames;
        let analysis_window = Window::Hann.values(w);
        let centred_ramp: Vec<f64> = (0..w).map(|n| n as f64 - (w as f64 - 1.0) / 2.0).collect();
        let modulation_fft =
            RealFftPlanner::<f64>::new().plan_fft_forward(config.modulation_fft_len);
        let noise_spectrum = config.noise_modulation_spectrum();
        PeriodicityDetector {
            framer: Framer::new(
                config.frame_len * values_per_sample,
                config.hop * values_per_sample,
            ),
            state: State {
                spectrum,
                power: vec![0.0; config.layout().bin_count()],
                envelopes: vec![0.0; w * config.motion_bins.len()],
                motion_bins: config.motion_bins.clone().into(),
                frames_seen: 0,
                analysis_frames: w,
                decision_frames: config.decision_frames,
                values_per_sample: values_per_sample as u64,
                sample_rate_hz: config.sample_rate_hz,
                ramp_energy: centred_ramp.iter().map(|r| r * r).sum::<f64>().max(1e-300),
                analysis_window_energy: analysis_window.iter().map(|a| a * a).sum(),
                analysis_window: analysis_window.into(),
                centred_ramp: centred_ramp.into(),
                modulation_input: modulation_fft.make_input_vec(),
                modulation_output: modulation_fft.make_output_vec(),
                modulation_scratch: modulation_fft.make_scratch_vec(),
                modulation_fft,
                cadence_spectrum: vec![0.0; config.modulation_fft_len / 2 + 1],
                noise_spectrum: noise_spectrum.into(),
                step_range: config.step_range,
                line_range: config.line_range,
                modulation_resolution_hz: config.envelope_rate_hz
                    / config.modulation_fft_len as f64,
                last: None,
            },
        }
    }

    /// What the latest decision found (cadence, step rate, rotor line), if any yet.
    pub fn last_reading(&self) -> Option<CadenceReading> {
        self.state.last
    }

    /// The whitened cadence spectrum C(f) of the latest decision, indices
    /// 0..=L/2 (see [`PeriodicityConfig::modulation_frequency_hz`]); zeros before the first.
    pub fn cadence_spectrum(&self) -> &[f64] {
        &self.state.cadence_spectrum
    }
}

impl Detector for PeriodicityDetector {
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        let block = block.values();
        let mut clean = [0.0f32; CLEAN_CHUNK];
        let state = &mut self.state;
        for chunk in block.chunks(CLEAN_CHUNK) {
            for (c, &v) in clean.iter_mut().zip(chunk) {
                *c = if v.is_finite() { v } else { 0.0 };
            }
            self.framer.push(&clean[..chunk.len()], |frame, end_index| {
                state.on_frame(frame, end_index, out);
            });
        }
        Ok(())
    }

    fn reset(&mut self) {
        self.framer.reset();
        self.state.frames_seen = 0;
        self.state.envelopes.fill(0.0);
        self.state.cadence_spectrum.fill(0.0);
        self.state.last = None;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use echobench_core::detector::{test_stream, ParamValue};

    fn config(
        given: &[(&str, ParamValue)],
        info: &StreamInfo,
    ) -> Result<PeriodicityConfig, ParamError> {
        let given: Vec<(String, ParamValue)> = given
            .iter()
            .map(|(n, v)| (n.to_string(), v.clone()))
            .collect();
        PeriodicityConfig::from_params(&Params::resolve(ID, &PARAMS, &given)?, info)
    }

    #[test]
    fn dilogarithm_matches_known_values() {
        // Li₂(1/2) = π²/12 − ln²2/2 (Abramowitz & Stegun 27.7.3 evaluation, exact).
        let half = PI * PI / 12.0 - std::f64::consts::LN_2.powi(2) / 2.0;
        assert!((log_power_covariance(0.5) - half).abs() < 1e-14);
        // Reflection branch agrees with the plain series where both converge.
        for x in [0.55, 0.7, 0.9, 0.99] {
            let direct: f64 = (1..20000).map(|n| x_pow(x, n) / (n * n) as f64).sum();
            assert!((log_power_covariance(x) - direct).abs() < 1e-9, "{x}");
        }
        assert_eq!(log_power_covariance(0.0), 0.0);
        assert_eq!(log_power_covariance(f64::NAN), 0.0);
    }

    fn x_pow(x: f64, n: usize) -> f64 {
        x.powi(n as i32)
    }

    #[test]
    fn rectangular_frames_have_triangular_power_correlation() {
        // For a rectangular window the overlap fraction is (N − lag)/N.
        let window = Window::Rectangular.values(100);
        assert!((frame_power_correlation(&window, 25) - 0.75f64.powi(2)).abs() < 1e-15);
        assert_eq!(frame_power_correlation(&window, 100), 0.0);
    }

    #[test]
    fn defaults_at_two_and_twenty_four_gigahertz() {
        // Hand-worked. 2.45 GHz: λ = 0.122364 m, Δv = 0.25 m/s → T = 0.244728 s → 490
        // samples at 2 kHz (4.0816 Hz bins), hop round(490/4) = 123. Band 0.3–4 m/s =
        // 4.903–65.378 Hz → bins 2..=16 (8.16–65.31 Hz).
        let mut info = test_stream(2000.0);
        info.carrier_hz = 2.45e9;
        let c = config(&[], &info).unwrap();
        assert_eq!((c.frame_len, c.hop), (490, 123));
        assert_eq!(c.motion_bins, (2..=16).collect::<Vec<_>>());
        // Envelope at 2000/123 = 16.26 Hz: 4 s = 65 frames, 0.5 s = 8, FFT 128.
        assert_eq!(
            (c.analysis_frames, c.decision_frames, c.modulation_fft_len),
            (65, 8, 128)
        );
        assert!(c.modulation_frequency_hz(c.step_range.0) >= 1.3);
        assert!(c.modulation_frequency_hz(c.step_range.1) <= 2.4);
        assert!(c.modulation_frequency_hz(c.line_range.1) <= 2000.0 / 123.0 / 2.0);
        // 24.125 GHz: λ = 0.0124266 m → T = 0.0248532 s → 50 samples (40 Hz bins), hop 13;
        // 48.28–643.8 Hz → bins 2..=16 again: the same speeds at either carrier.
        let c = config(&[], &test_stream(2000.0)).unwrap();
        assert_eq!((c.frame_len, c.hop), (50, 13));
        assert_eq!(c.motion_bins, (2..=16).collect::<Vec<_>>());
        // The historic setting, given explicitly: 0.6–4 m/s with 256/64 frames, bins 13..=82.
        let c = config(
            &[
                ("motion_min_mps", ParamValue::Real(0.6)),
                ("frame_len", ParamValue::Integer(256)),
                ("hop", ParamValue::Integer(64)),
            ],
            &test_stream(2000.0),
        )
        .unwrap();
        assert_eq!(c.motion_bins, (13..=82).collect::<Vec<_>>());
    }

    #[test]
    fn dc_and_nyquist_bins_are_never_used() {
        let c = config(
            &[
                ("band_units", ParamValue::Text("hz".into())),
                ("motion_low_hz", ParamValue::Real(0.0)),
                ("motion_high_hz", ParamValue::Real(1000.0)),
                ("frame_len", ParamValue::Integer(256)),
            ],
            &test_stream(2000.0),
        )
        .unwrap();
        assert_eq!(c.motion_bins, (1..128).collect::<Vec<_>>());
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
            &PeriodicityPlugin,
            &[Channels::Real, Channels::Iq],
        );
    }
}
