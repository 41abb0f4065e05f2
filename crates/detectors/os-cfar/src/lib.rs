//! Ordered-statistic CFAR (OS-CFAR) along the Doppler axis of a short-time
//! power spectrum: the detector id `os-cfar`.
//!
//! **What it detects.** Motion in front of a CW sensor puts Doppler power
//! into a few bins of the IF spectrum above a noise floor of unknown level.
//! Each frame of `frame_len` samples, one every `hop` samples from sample 0,
//! is windowed and turned into the power spectrum `P[k] = |X_k|²`. Every bin
//! with |f| in [`low_hz`, `high_hz`] is a cell under test (CUT); its noise
//! level is the `rank`-th smallest of its N = 2·`train` training cells (the
//! `train` bins on each side beyond `guard` bins). The frame's score is
//!
//! ```text
//! score = max over CUT k of  P[k] / x_(rank)(training cells of k)
//! ```
//!
//! so an alarm at `score ≥ T` is Rohling's OS-CFAR test (Rohling 1983;
//! Richards 2014 §6.5.6).
//!
//! **The one design decision: an order statistic instead of the mean.** A
//! second mover, a fan line or the target's own micro-Doppler spread inside
//! the training window inflates a mean (the walker then masks itself) but
//! moves the `rank`-th smallest cell only when more than N − `rank` cells are
//! hit. Richards recommends rank ≈ 0.75·N (the default, 12 of 16) for an
//! extra loss of a few tenths of a dB over cell averaging in uniform noise.
//! The order statistic is found by selection (`select_nth_unstable_by`) in a
//! scratch row made with each state: linear on average, no sort, no allocation.
//!
//! **Edges and streams.** As the `ca-cfar` detector and the reference
//! pipeline: every CUT has exactly N cells. For real streams (one-sided
//! spectrum, N/2 + 1 bins, N even) indices below 0 are reflected about DC and
//! those above the Nyquist bin about it, because the power spectrum of a real
//! signal is even in frequency (near DC a bin may appear twice, or the CUT
//! itself among its cells). For I/Q streams (two-sided spectrum) the Doppler
//! axis wraps, and CUTs are the bins of both signs with |f| in the band.
//!
//! **Parameters** (see [`OsCfarPlugin`]'s table): `window` (hann | rect),
//! `frame_len` (≥ 8, even for real streams), `hop`, `guard` (< `train`),
//! `train` (per side), `rank` (1..=2·`train`), `low_hz` < `high_hz` ≤ fs/2,
//! and `pfa`, used only to report the nominal multiplier
//! ([`OsCfarConfig::nominal_multiplier`]); it does not change the scores.
//!
//! **Units.** The cells under test are radial speeds by default, `low_mps`..
//! `high_mps` = 0.3–4 m/s (a walker's torso to its limbs,
//! `echobench_core::doppler::MOTION_MIN_MPS`), converted through the carrier
//! (f = 2·v·f_c/c: 4.9–65.4 Hz at 2.45 GHz, 48.3–644 Hz at 24.125 GHz; a
//! default top above Nyquist is clipped to fs/2, a set one is refused). The
//! frame is by default the velocity resolution `resolution_mps` = 0.25 m/s,
//! T = λ/(2Δv): 490 samples (0.245 s) at 2.45 GHz and 2 kHz, 50 samples
//! (0.025 s) at 24.125 GHz, hop half a frame, so guard and training cells
//! span the same speeds at every carrier; the price is latency, ten times
//! longer at 2.45 GHz for the same resolution. `low_hz`/`high_hz` (Hz) and
//! `frame_len`/`hop` (samples) remain as an explicit choice: set them (or
//! `band_units: hz`, `frame_units: samples`) for the reference pipeline's
//! 1–100 Hz, 256/128 geometry. `echobench_core::doppler` states the rules.
//!
//! **What the nominal Pfa means.** [`os_pfa`] = Π_{i<k} (N−i)/(N−i+T) holds for independent,
//! identically distributed exponential cells: white Gaussian noise, a rectangular window, no
//! overlap (`hop = frame_len`), a CUT whose cells fold at neither end. The tests check that case by
//! Monte Carlo. A Hann window correlates neighbouring bins (|ρ|² = 4/9 one bin apart), overlap
//! correlates successive frames and folded cells repeat, so measured false-alarm rates differ from
//! the nominal one (docs/reference/detectors.md#d7); the harness calibrates thresholds empirically
//! on noise-only runs.
//!
//! **Input hygiene.** A non-finite input value (NaN, ±∞) is taken as 0 in the
//! frames that contain it. Silence scores 0 (the order statistic is floored
//! at [`NOISE_FLOOR`], so 0/0 is 0 and x/0 stays finite). Clipped input gives
//! finite scores. A stream shorter than one frame gives no score.
#![deny(missing_docs)]

mod closed_form;

pub use closed_form::{os_multiplier, os_pfa, os_ratio, NOISE_FLOOR};

use echobench_core::detector::{
    BandRole, Cost, Detector, DetectorFailure, DetectorPlan, DetectorPlugin, DopplerBand,
    ParamError, ParamSpec, Params, PrototypePlan, Samples,
};
use echobench_core::doppler::{self, Framing};
use echobench_core::param_decl::{ChoiceParam, IntegerParam, RealParam, TuneRange};
use echobench_core::{Channels, FrameScore, StreamInfo};
use echobench_detector_dsp::cfar_cells::{CellPlan, DopplerAxis};
use echobench_detector_dsp::{ComplexPowerSpectrum, Framer, PowerSpectrum, Window};
use std::sync::Arc;

/// The plugin id used in suite files.
pub const ID: &str = "os-cfar";

const MIN_FRAME_LEN: usize = 8;
const MAX_FRAME_LEN: usize = 65_536;
const MAX_CELLS: usize = 4_096;

/// The frame family and the cells-under-test band, shared with the other CFAR detector.
pub use echobench_detector_dsp::cfar_cells::{BAND, FRAME};

const WINDOW: ChoiceParam<Window> = Window::param(
    "taper applied to each frame before the FFT (rect keeps white-noise bins independent)",
);

const GUARD: IntegerParam = IntegerParam {
    name: "guard",
    unit: "bins",
    about: "cells left out on each side of the cell under test",
    min: 0,
    max: MAX_CELLS as i64,
    default: 2,
};

const TRAIN: IntegerParam = IntegerParam {
    name: "train",
    unit: "bins",
    about: "training cells on each side (N = 2·train)",
    min: 1,
    max: MAX_CELLS as i64,
    default: 8,
};

const RANK: IntegerParam = IntegerParam {
    name: "rank",
    unit: "",
    about: "which smallest training cell is the noise estimate (1..=2·train, ≈ 0.75·N)",
    min: 1,
    max: 2 * MAX_CELLS as i64,
    default: 12,
};

const PFA: RealParam = RealParam {
    name: "pfa",
    unit: "",
    about: "design false-alarm probability, only to report the nominal multiplier",
    min: 1e-15,
    max: 1.0,
    default: 1e-3,
};

static PARAMS: [ParamSpec; 17] = [
    // Tunable (`echobench tune`): the frame, the band and the smoothing; never the threshold,
    // which the runner calibrates.
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
    GUARD.spec_tuned(TuneRange::Integer { low: 0, high: 4 }),
    TRAIN.spec_tuned(TuneRange::Integer { low: 6, high: 12 }),
    RANK.spec_tuned(TuneRange::Integer { low: 6, high: 12 }),
    doppler::BAND_UNITS.spec(),
    BAND.low_mps.spec_tuned(TuneRange::Linear {
        low: 0.1,
        high: 0.5,
    }),
    BAND.high_mps.spec_tuned(TuneRange::Linear {
        low: 2.0,
        high: 6.0,
    }),
    BAND.low_hz.spec(),
    BAND.high_hz.spec(),
    PFA.spec(),
];

/// Typed settings of an OS-CFAR detector.
///
/// [`Default`]: Hann, 256-sample frames every 128, guard 2, train 8, rank 12,
/// CUTs in [1, 100] Hz (the reference pipeline's CFAR geometry).
#[derive(Debug, Clone, PartialEq)]
pub struct OsCfarConfig {
    /// Taper applied to each frame.
    pub window: Window,
    /// Frame length N, samples.
    pub frame_len: usize,
    /// Samples between frame starts.
    pub hop: usize,
    /// Guard cells on each side of the CUT.
    pub guard: usize,
    /// Training cells on each side of the CUT.
    pub train: usize,
    /// Rank k (1-based, ascending) of the training cell used as noise level.
    pub rank: usize,
    /// Lowest |f| of the CUTs, Hz.
    pub low_hz: f64,
    /// Highest |f| of the CUTs, Hz.
    pub high_hz: f64,
    /// The parameters the band came from (`low_hz`/`high_hz` or
    /// `low_mps`/`high_mps`), named in error messages.
    pub band_params: (&'static str, &'static str),
    /// Design false-alarm probability for [`OsCfarConfig::nominal_multiplier`].
    pub pfa: f64,
}

impl Default for OsCfarConfig {
    fn default() -> Self {
        OsCfarConfig {
            window: Window::Hann,
            frame_len: 256,
            hop: 128,
            guard: 2,
            train: 8,
            rank: 12,
            low_hz: 1.0,
            high_hz: 100.0,
            band_params: ("low_hz", "high_hz"),
            pfa: 1e-3,
        }
    }
}

impl OsCfarConfig {
    /// Reads resolved parameters (see [`Params::resolve`] with
    /// [`OsCfarPlugin`]'s table).
    ///
    /// # Errors
    /// A window name or whole number that does not fit.
    pub fn from_params(params: &Params, info: &StreamInfo) -> Result<Self, ParamError> {
        let Framing { frame_len, hop } = doppler::resolve_frame(ID, params, info, &FRAME)?;
        let units = doppler::band_units(ID, params, &doppler::BAND_UNITS, &[&BAND])?;
        let band = doppler::resolve_band(ID, params, info, units, &BAND)?;
        let window = WINDOW.get(params)?;
        // Ranges (none negative) were checked by `Params::resolve` against the declarations.
        let count = |p: IntegerParam| -> Result<usize, ParamError> {
            let value = p.get(params)?;
            usize::try_from(value)
                .map_err(|_| ParamError::new(ID, p.name, value, "must not be negative"))
        };
        Ok(OsCfarConfig {
            window,
            frame_len,
            hop,
            guard: count(GUARD)?,
            train: count(TRAIN)?,
            rank: count(RANK)?,
            low_hz: band.low_hz,
            high_hz: band.high_hz,
            band_params: (band.low_name, band.high_name),
            pfa: PFA.get(params)?,
        })
    }

    /// T with [`os_pfa`]`(2·train, rank, T) = pfa`: the nominal threshold on
    /// the score, valid for independent cells only (see the crate doc). NaN
    /// when rank or pfa is out of range.
    pub fn nominal_multiplier(&self) -> f64 {
        os_multiplier(2 * self.train, self.rank, self.pfa)
    }
}

struct Layout {
    channels: Channels,
    axis: DopplerAxis,
    plan: Arc<CellPlan>,
}

fn refuse(param: &str, value: impl std::fmt::Display, message: impl Into<String>) -> ParamError {
    ParamError::new(ID, param, value, message)
}

fn validate(c: &OsCfarConfig, info: &StreamInfo) -> Result<Layout, ParamError> {
    let fs = info.sample_rate_hz;
    if !(fs.is_finite() && fs > 0.0) {
        return Err(refuse("sample_rate_hz", fs, "must be a positive number"));
    }
    if !(MIN_FRAME_LEN..=MAX_FRAME_LEN).contains(&c.frame_len) {
        let range = format!("expected a whole number in [{MIN_FRAME_LEN}, {MAX_FRAME_LEN}]");
        return Err(refuse("frame_len", c.frame_len, range));
    }
    if info.channels == Channels::Real && !c.frame_len.is_multiple_of(2) {
        return Err(refuse(
            "frame_len",
            c.frame_len,
            "must be even for a real stream (the spectrum is reflected about its Nyquist bin)",
        ));
    }
    if !(1..=MAX_FRAME_LEN).contains(&c.hop) {
        return Err(refuse(
            "hop",
            c.hop,
            format!("expected a whole number in [1, {MAX_FRAME_LEN}]"),
        ));
    }
    if !(1..=MAX_CELLS).contains(&c.train) {
        return Err(refuse(
            "train",
            c.train,
            format!("expected a whole number in [1, {MAX_CELLS}]"),
        ));
    }
    if c.guard >= c.train {
        let message = format!("must be smaller than train = {}", c.train);
        return Err(refuse("guard", c.guard, message));
    }
    if !(1..=2 * c.train).contains(&c.rank) {
        let message = format!("must be in 1..={} (2·train training cells)", 2 * c.train);
        return Err(refuse("rank", c.rank, message));
    }
    let (low_name, high_name) = c.band_params;
    let nyquist_hz = fs / 2.0;
    if !(c.low_hz.is_finite() && c.low_hz >= 0.0) {
        return Err(refuse(low_name, c.low_hz, "expected a number ≥ 0"));
    }
    if !(c.high_hz.is_finite() && c.high_hz <= nyquist_hz) {
        let message = format!("above Nyquist: must be at most fs/2 = {nyquist_hz} Hz");
        return Err(refuse(high_name, c.high_hz, message));
    }
    if c.low_hz >= c.high_hz {
        let message = format!("must be below {high_name} → {} Hz", c.high_hz);
        return Err(refuse(low_name, c.low_hz, message));
    }
    if !(c.pfa > 0.0 && c.pfa <= 1.0) {
        return Err(refuse("pfa", c.pfa, "expected a probability in (0, 1]"));
    }
    let axis = match info.channels {
        Channels::Real => DopplerAxis::Reflected {
            bins: c.frame_len / 2 + 1,
        },
        Channels::Iq => DopplerAxis::Circular { bins: c.frame_len },
    };
    if c.guard + c.train > axis.max_reach() {
        let message = format!(
            "guard + train = {} bins do not fit a {}-bin spectrum: at most {}",
            c.guard + c.train,
            axis.bins(),
            axis.max_reach()
        );
        return Err(refuse("train", c.train, message));
    }
    let band = (c.low_hz, c.high_hz);
    let plan = CellPlan::new(axis, c.frame_len, fs, band, c.guard, c.train);
    if plan.cut_bins.is_empty() {
        let message = format!(
            "no bin lies in the band (bins are {} Hz apart)",
            fs / c.frame_len as f64
        );
        return Err(refuse(
            &format!("{low_name}, {high_name}"),
            format!("[{}, {}] Hz", c.low_hz, c.high_hz),
            message,
        ));
    }
    Ok(Layout {
        channels: info.channels,
        axis,
        plan: plan.into(),
    })
}

#[derive(Clone)]
enum Transform {
    Real(PowerSpectrum),
    Iq(ComplexPowerSpectrum),
}

/// A running OS-CFAR detector. [`OsCfarPlugin::plan`] makes one fresh
/// (FFT planned, cell table made) and every state is a clone of it: the FFT
/// plan, the window and the cell table are shared, the buffers are its own.
#[derive(Clone)]
pub struct OsCfarDetector {
    framer: Framer,
    transform: Transform,
    /// Copy of a frame with non-finite values set to 0 (used only when needed).
    clean_frame: Vec<f64>,
    power: Vec<f64>,
    /// The training cells of one CUT, reordered by the selection.
    cells: Vec<f64>,
    plan: Arc<CellPlan>,
    rank: usize,
    values_per_sample: u64,
    nominal_multiplier: f64,
}

impl OsCfarDetector {
    /// Builds a detector for a stream: plans the FFT, the cell table and the
    /// selection scratch.
    ///
    /// # Errors
    /// A parameter out of range or parameters that do not fit together or
    /// the stream (see the crate doc).
    pub fn new(config: &OsCfarConfig, info: &StreamInfo) -> Result<Self, ParamError> {
        let layout = validate(config, info)?;
        let values_per_sample = layout.channels.count();
        let frame_values = config.frame_len * values_per_sample;
        let transform = match layout.channels {
            Channels::Real => Transform::Real(PowerSpectrum::new(config.frame_len, config.window)),
            Channels::Iq => {
                Transform::Iq(ComplexPowerSpectrum::new(config.frame_len, config.window))
            }
        };
        Ok(OsCfarDetector {
            framer: Framer::new(frame_values, config.hop * values_per_sample),
            transform,
            clean_frame: vec![0.0; frame_values],
            power: vec![0.0; layout.axis.bins()],
            cells: vec![0.0; layout.plan.cells_per_cut],
            plan: layout.plan,
            rank: config.rank,
            values_per_sample: values_per_sample as u64,
            nominal_multiplier: config.nominal_multiplier(),
        })
    }

    /// The bins tested, ascending (FFT order for I/Q).
    pub fn cut_bins(&self) -> &[usize] {
        &self.plan.cut_bins
    }

    /// The nominal threshold T for the configured `pfa`.
    pub fn nominal_multiplier(&self) -> f64 {
        self.nominal_multiplier
    }
}

impl Detector for OsCfarDetector {
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        let block = block.values();
        let OsCfarDetector {
            framer,
            transform,
            clean_frame,
            power,
            cells,
            plan,
            rank,
            values_per_sample,
            ..
        } = self;
        framer.push(block, |frame, end_value| {
            let frame = if frame.iter().all(|v| v.is_finite()) {
                frame
            } else {
                for (clean, &v) in clean_frame.iter_mut().zip(frame) {
                    *clean = if v.is_finite() { v } else { 0.0 };
                }
                &clean_frame[..]
            };
            match transform {
                Transform::Real(spectrum) => spectrum.compute(frame, power),
                Transform::Iq(spectrum) => spectrum.compute(frame, power),
            }
            let mut score = 0.0f64;
            for (&k, training) in plan
                .cut_bins
                .iter()
                .zip(plan.training.chunks_exact(plan.cells_per_cut))
            {
                for (cell, &j) in cells.iter_mut().zip(training) {
                    *cell = power[j];
                }
                score = score.max(os_ratio(power[k], cells, *rank));
            }
            out.push(FrameScore {
                end_sample: end_value / *values_per_sample,
                value: score,
            });
        });
        Ok(())
    }

    fn reset(&mut self) {
        self.framer.reset();
    }
}

/// The `os-cfar` plugin.
pub struct OsCfarPlugin;

impl DetectorPlugin for OsCfarPlugin {
    fn id(&self) -> &'static str {
        ID
    }

    fn about(&self) -> &'static str {
        "ordered-statistic CFAR: strongest in-band Doppler bin over the k-th smallest training cell"
    }

    fn params(&self) -> &'static [ParamSpec] {
        &PARAMS
    }

    fn plan(
        &self,
        params: &Params,
        info: &StreamInfo,
    ) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        let config = OsCfarConfig::from_params(params, info)?;
        Ok(PrototypePlan::shared(OsCfarDetector::new(&config, info)?))
    }

    fn check(&self, params: &Params, info: &StreamInfo) -> Result<(), ParamError> {
        let config = OsCfarConfig::from_params(params, info)?;
        validate(&config, info).map(|_| ())
    }

    fn cost(&self, params: &Params, info: &StreamInfo) -> Option<Cost> {
        let config = OsCfarConfig::from_params(params, info).ok()?;
        let layout = validate(&config, info).ok()?;
        Some(cost_of(&config, &layout))
    }

    /// The cells under test, `[low, high]` in Hz as used.
    fn doppler_bands(&self, params: &Params, info: &StreamInfo) -> Vec<DopplerBand> {
        let Ok(config) = OsCfarConfig::from_params(params, info) else {
            return Vec::new();
        };
        if validate(&config, info).is_err() {
            return Vec::new();
        }
        vec![DopplerBand {
            role: BandRole::Motion,
            label: "cells under test",
            low_hz: config.low_hz,
            high_hz: config.high_hz,
        }]
    }

    fn framing(&self, params: &Params, info: &StreamInfo) -> Option<Framing> {
        let config = OsCfarConfig::from_params(params, info).ok()?;
        validate(&config, info).ok()?;
        Some(Framing {
            frame_len: config.frame_len,
            hop: config.hop,
        })
    }
}

/// Memory and arithmetic as implemented (f64 values, `usize` indices).
fn cost_of(config: &OsCfarConfig, layout: &Layout) -> Cost {
    const REAL_BYTES: usize = std::mem::size_of::<f64>();
    let n = config.frame_len;
    let frame_values = n * layout.channels.count();
    let bins = layout.axis.bins();
    let cells = layout.plan.cells_per_cut;
    let cuts = layout.plan.cut_bins.len();
    let fft_buffers = match layout.channels {
        Channels::Real => n * REAL_BYTES + bins * 2 * REAL_BYTES,
        Channels::Iq => n * 2 * REAL_BYTES,
    };
    // Framer ring (each value twice, so a frame is one slice), the
    // NaN-cleaning copy, the window, FFT buffers (library scratch not
    // counted), the power row, the selection scratch and the cell table.
    let state_bytes = 3 * frame_values * REAL_BYTES
        + n * REAL_BYTES
        + fft_buffers
        + (bins + cells) * REAL_BYTES
        + (cuts + layout.plan.training.len()) * std::mem::size_of::<usize>();
    // Per frame: finiteness test and window multiply per value; the FFT at
    // the radix-2 count (5·N·log2 N flops complex, half for a real input);
    // |X|² at 3 flops per bin; per CUT a gather of N cells, a selection at
    // about 3·N comparisons on average (quickselect, Knuth's 2·N + o(N) for
    // the median plus partition overhead), one divide and one compare.
    let log2_n = (n as f64).log2();
    let fft_ops = match layout.channels {
        Channels::Real => 2.5 * n as f64 * log2_n,
        Channels::Iq => 5.0 * n as f64 * log2_n,
    };
    let per_frame = 2.0 * frame_values as f64
        + fft_ops
        + 3.0 * bins as f64
        + cuts as f64 * (4.0 * cells as f64 + 2.0);
    Cost {
        state_bytes,
        ops_per_sample: per_frame / config.hop as f64,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use echobench_core::detector::{test_stream, ParamValue};

    fn build_with(given: &[(&str, ParamValue)], info: &StreamInfo) -> Result<(), ParamError> {
        let given: Vec<(String, ParamValue)> = given
            .iter()
            .map(|(n, v)| (n.to_string(), v.clone()))
            .collect();
        let params = Params::resolve(ID, &PARAMS, &given)?;
        OsCfarPlugin
            .plan(&params, info)
            .map(|plan| plan.start())
            .map(|_| ())
    }

    #[test]
    fn defaults_build() {
        // The reference pipeline's geometry, pinned on purpose: Hz band, 256/128 frames.
        let given: Vec<(String, ParamValue)> = vec![
            ("band_units".into(), ParamValue::Text("hz".into())),
            ("frame_len".into(), ParamValue::Integer(256)),
            ("hop".into(), ParamValue::Integer(128)),
        ];
        let params = Params::resolve(ID, &PARAMS, &given).unwrap();
        let config = OsCfarConfig::from_params(&params, &test_stream(2000.0)).unwrap();
        assert_eq!(config, OsCfarConfig::default());
        let detector = OsCfarDetector::new(&config, &test_stream(2000.0)).unwrap();
        assert_eq!(detector.cut_bins(), (1..=12).collect::<Vec<_>>().as_slice());
        assert!((os_pfa(16, 12, detector.nominal_multiplier()) / 1e-3 - 1.0).abs() < 1e-12);
    }

    /// With nothing set, the cells under test are 0.3–4 m/s and the frame resolves 0.25 m/s at any
    /// carrier: a walker head-on at 1.3 m/s (2v/λ = 21.25 Hz at 2.45 GHz, 209.2 Hz at 24.125 GHz;
    /// docs/reference/radar-physics.md#r8, 16.345 and 160.945 Hz per m/s) is under test at both.
    /// Hand-worked frames: λ/(2·0.25 m/s) = 0.24473 s → 490 samples at 2 kHz, 0.024853 s → 50
    /// samples.
    #[test]
    fn speed_defaults_test_the_torso_line_at_both_carriers() {
        let params = Params::defaults(&PARAMS);
        for (carrier_hz, frame_len) in [(2.45e9, 490), (24.125e9, 50)] {
            let info = StreamInfo {
                carrier_hz,
                ..test_stream(2000.0)
            };
            let config = OsCfarConfig::from_params(&params, &info).unwrap();
            assert_eq!((config.frame_len, config.hop), (frame_len, frame_len / 2));
            let torso_hz = 2.0 * 1.3 * carrier_hz / 299_792_458.0;
            assert!(
                config.low_hz < torso_hz && torso_hz < config.high_hz,
                "{config:?}"
            );
            let bin_hz = 2000.0 / frame_len as f64;
            let detector = OsCfarDetector::new(&config, &info).unwrap();
            let torso_bin = (torso_hz / bin_hz).round() as usize;
            assert!(detector.cut_bins().contains(&torso_bin), "{torso_bin}");
        }
    }

    #[test]
    fn bad_parameters_are_refused_with_their_names() {
        let fs = test_stream(2000.0);
        let cases: [(&[(&str, ParamValue)], &str); 9] = [
            (&[("rank", ParamValue::Integer(17))], "rank"),
            (&[("rank", ParamValue::Integer(0))], "rank"),
            (&[("guard", ParamValue::Integer(8))], "guard"),
            (&[("high_hz", ParamValue::Real(1000.5))], "high_hz"),
            (&[("low_hz", ParamValue::Real(200.0))], "low_hz"),
            (&[("frame_len", ParamValue::Integer(7))], "frame_len"),
            (&[("frame_len", ParamValue::Integer(101))], "frame_len"),
            (&[("hop", ParamValue::Integer(-1))], "hop"),
            (
                &[
                    ("frame_len", ParamValue::Integer(8)),
                    ("guard", ParamValue::Integer(0)),
                    ("high_hz", ParamValue::Real(1000.0)),
                ],
                "train",
            ),
        ];
        for (given, param) in cases {
            let err = build_with(given, &fs).expect_err(param);
            assert_eq!(err.param, param, "{err}");
        }
        // Rank up to 2·train is fine, including the largest cell.
        build_with(&[("rank", ParamValue::Integer(16))], &fs).unwrap();
        build_with(&[("rank", ParamValue::Integer(1))], &fs).unwrap();
        let err = build_with(
            &[
                ("low_hz", ParamValue::Real(3.0)),
                ("high_hz", ParamValue::Real(3.5)),
            ],
            &fs,
        )
        .unwrap_err();
        assert!(err.message.contains("no bin"), "{err}");
    }

    #[test]
    fn cost_reflects_the_selection() {
        let fs = test_stream(2000.0);
        // The reference geometry (1–100 Hz, 256/128), pinned: the counts below are for it.
        let given: Vec<(String, ParamValue)> = vec![
            ("band_units".into(), ParamValue::Text("hz".into())),
            ("frame_len".into(), ParamValue::Integer(256)),
            ("hop".into(), ParamValue::Integer(128)),
        ];
        let params = Params::resolve(ID, &PARAMS, &given).unwrap();
        let cost = OsCfarPlugin.cost(&params, &fs).unwrap();
        // FFT alone: 2.5·256·8/128 = 40 ops per sample; 12 CUTs × 66 more per frame.
        assert!(
            cost.ops_per_sample > 45.0 && cost.ops_per_sample < 70.0,
            "{cost:?}"
        );
        assert!(cost.state_bytes > 4 * 256 * 8);
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
            &OsCfarPlugin,
            &[Channels::Real, Channels::Iq],
        );
    }
}
