//! Cell-averaging CFAR (CA-CFAR) along the Doppler axis of a short-time power
//! spectrum: the detector id `ca-cfar`.
//!
//! **What it detects.** Something moving in front of a CW sensor puts Doppler
//! power into a few bins of the IF spectrum, standing out of a noise floor
//! whose level nobody knows in advance (it changes with the module, the
//! amplifier gain and the room). Each frame of `frame_len` samples, one every
//! `hop` samples and starting at sample 0, is windowed and transformed into
//! the power spectrum `P[k] = |X_k|²`. Every bin whose frequency lies in
//! [`low_hz`, `high_hz`] is a cell under test (CUT); its noise level is
//! estimated as the mean of `train` cells on each side, leaving `guard`
//! cells next to it out so that the target's own spectral spread does not
//! raise the estimate. The frame's score is
//!
//! ```text
//! score = max over CUT k of  P[k] / mean(P[k ± (guard+1 ..= guard+train)])
//! ```
//!
//! so an alarm at `score ≥ α` is exactly the CA-CFAR test "some CUT exceeds
//! α times its local noise mean" (Finn & Johnson 1968; Richards 2014 §6.5.3).
//! The harness sweeps the threshold; [`ca_multiplier`] gives the nominal one.
//!
//! **The one design decision: every CUT has exactly `2·train` cells.** Near
//! the ends of the axis the training window is folded back instead of being
//! cut short, so the statistic, its cost and its closed-form law are the
//! same for every CUT:
//! - real streams (one-sided spectrum, N/2 + 1 bins, N even): the power
//!   spectrum of a real signal is even in frequency, so an index below 0 is
//!   reflected about DC and one above the Nyquist bin about that bin. This is
//!   the reference pipeline's definition (`cfar_weights` in the numpy bench):
//!   with guard 2 and train 8, bin 1 uses bins 2–9 and 4–11. Near DC a bin
//!   may be counted twice, and for a CUT k with guard < 2k ≤ guard + train
//!   the mirrored window even holds the CUT itself (k = 2, guard 2: offset −4
//!   lands on bin 2); that lowers the ratio near DC and is kept for
//!   compatibility;
//! - I/Q streams (two-sided spectrum, N bins): the DFT is periodic in
//!   frequency, so the Doppler axis wraps (bin −1 is bin N − 1). A CUT is
//!   every bin with |f| in [`low_hz`, `high_hz`], approaching and receding
//!   targets alike.
//!
//! **Parameters** (see [`CaCfarPlugin`]'s table): `window` (hann | rect),
//! `frame_len` (even for real streams, ≥ 8), `hop`, `guard` (< `train`),
//! `train` (per side), `low_hz` < `high_hz` ≤ fs/2, and `pfa`, used only to
//! report the nominal multiplier α = N (Pfa^(−1/N) − 1), N = 2·train
//! ([`CaCfarConfig::nominal_multiplier`]); it does not change the scores.
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
//! **What the nominal Pfa means.** (1 + α/N)^(−N) ([`ca_pfa`]) holds when the
//! N training cells and the CUT are independent, identically distributed
//! exponential powers: white Gaussian noise, a rectangular window, no frame
//! overlap (`hop = frame_len`), and a CUT far enough from DC and Nyquist that
//! no cell is folded. The tests check exactly that case by Monte Carlo. With
//! a Hann window neighbouring bins are correlated (|ρ|² = 4/9 one bin apart),
//! overlapping frames correlate successive scores, and the folded cells near
//! DC repeat; measured false-alarm rates then differ from the nominal one by
//! factors of 2 to 4 either way (docs/reference/detectors.md#d7: 2.2e-3 with guard 2,
//! 0.26e-3 with no guard, for a nominal 1e-3), so the harness calibrates
//! thresholds empirically on noise-only runs and reports nominal and
//! measured side by side.
//!
//! **Input hygiene.** A non-finite input value (NaN, ±∞) is taken as 0 in the
//! frames that contain it (a dropped sample, not a dropped frame). Silence
//! scores 0: the noise mean is floored at [`NOISE_FLOOR`], so 0/0 is 0 and
//! x/0 stays finite. Full-scale clipping only spreads harmonics; scores stay
//! finite. A stream shorter than one frame (a single sample, say) gives no
//! score at all.
#![deny(missing_docs)]

mod closed_form;

pub use closed_form::{ca_multiplier, ca_pfa, ca_ratio, NOISE_FLOOR};
pub use echobench_detector_dsp::cfar_cells::{training_offsets, DopplerAxis};

use closed_form::ratio_to_mean;
use echobench_core::detector::{
    BandRole, Cost, Detector, DetectorFailure, DetectorPlan, DetectorPlugin, DopplerBand,
    ParamError, ParamSpec, Params, PrototypePlan, Samples,
};
use echobench_core::doppler::{self, Framing};
use echobench_core::param_decl::{ChoiceParam, IntegerParam, RealParam, TuneRange};
use echobench_core::{Channels, FrameScore, StreamInfo};
use echobench_detector_dsp::cfar_cells::CellPlan;
use echobench_detector_dsp::{ComplexPowerSpectrum, Framer, PowerSpectrum, Window};
use std::sync::Arc;

/// The plugin id used in suite files.
pub const ID: &str = "ca-cfar";

const MIN_FRAME_LEN: i64 = 8;
const MAX_FRAME_LEN: i64 = 65_536;
const MAX_CELLS: i64 = 4_096;

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
    max: MAX_CELLS,
    default: 2,
};

const TRAIN: IntegerParam = IntegerParam {
    name: "train",
    unit: "bins",
    about: "training cells averaged on each side (N = 2·train)",
    min: 1,
    max: MAX_CELLS,
    default: 8,
};

const PFA: RealParam = RealParam {
    name: "pfa",
    unit: "",
    about: "design false-alarm probability, only to report the nominal multiplier",
    min: 1e-15,
    max: 1.0,
    default: 1e-3,
};

static PARAMS: [ParamSpec; 16] = [
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
    TRAIN.spec_tuned(TuneRange::Integer { low: 4, high: 16 }),
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

/// Typed settings of a CA-CFAR detector.
///
/// [`Default`] is the reference pipeline's configuration: Hann, 256-sample
/// frames every 128, guard 2, train 8, CUTs in [1, 100] Hz.
#[derive(Debug, Clone, PartialEq)]
pub struct CaCfarConfig {
    /// Taper applied to each frame.
    pub window: Window,
    /// Frame length N, samples (even for real streams).
    pub frame_len: usize,
    /// Samples between frame starts.
    pub hop: usize,
    /// Guard cells on each side of the CUT.
    pub guard: usize,
    /// Training cells on each side of the CUT.
    pub train: usize,
    /// Lowest |f| of the CUTs, Hz.
    pub low_hz: f64,
    /// Highest |f| of the CUTs, Hz.
    pub high_hz: f64,
    /// The parameters the band came from (`low_hz`/`high_hz` or
    /// `low_mps`/`high_mps`), named in error messages.
    pub band_params: (&'static str, &'static str),
    /// Design false-alarm probability for [`CaCfarConfig::nominal_multiplier`].
    pub pfa: f64,
}

impl Default for CaCfarConfig {
    fn default() -> Self {
        CaCfarConfig {
            window: Window::Hann,
            frame_len: 256,
            hop: 128,
            guard: 2,
            train: 8,
            low_hz: 1.0,
            high_hz: 100.0,
            band_params: ("low_hz", "high_hz"),
            pfa: 1e-3,
        }
    }
}

impl CaCfarConfig {
    /// Reads resolved parameters (see [`Params::resolve`] with
    /// [`CaCfarPlugin`]'s table).
    ///
    /// # Errors
    /// A window name or a whole number that does not fit (only possible with
    /// parameters resolved against another table).
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
        Ok(CaCfarConfig {
            window,
            frame_len,
            hop,
            guard: count(GUARD)?,
            train: count(TRAIN)?,
            low_hz: band.low_hz,
            high_hz: band.high_hz,
            band_params: (band.low_name, band.high_name),
            pfa: PFA.get(params)?,
        })
    }

    /// Number of training cells per CUT, N = 2·train.
    pub fn training_cells(&self) -> usize {
        2 * self.train
    }

    /// α = N (Pfa^(−1/N) − 1) for the configured `pfa`: the nominal threshold
    /// on the score (Richards 2014 eq. 6.135). Only valid for independent
    /// cells (see the crate doc); NaN when `pfa` is not in (0, 1].
    pub fn nominal_multiplier(&self) -> f64 {
        ca_multiplier(self.training_cells(), self.pfa)
    }
}

/// The checked geometry of a configured detector.
struct Layout {
    channels: Channels,
    axis: DopplerAxis,
    plan: Arc<CellPlan>,
}

fn validate(config: &CaCfarConfig, info: &StreamInfo) -> Result<Layout, ParamError> {
    let fs = echobench_core::detector::check_sample_rate(ID, info)?;
    let frame_len = config.frame_len;
    if !(MIN_FRAME_LEN as usize..=MAX_FRAME_LEN as usize).contains(&frame_len) {
        return Err(ParamError::new(
            ID,
            "frame_len",
            frame_len,
            format!("expected a whole number in [{MIN_FRAME_LEN}, {MAX_FRAME_LEN}]"),
        ));
    }
    if info.channels == Channels::Real && !frame_len.is_multiple_of(2) {
        return Err(ParamError::new(
            ID,
            "frame_len",
            frame_len,
            "must be even for a real stream: the one-sided spectrum is reflected about its \
             Nyquist bin, which only exists for even N",
        ));
    }
    if !(1..=MAX_FRAME_LEN as usize).contains(&config.hop) {
        return Err(ParamError::new(
            ID,
            "hop",
            config.hop,
            format!("expected a whole number in [1, {MAX_FRAME_LEN}]"),
        ));
    }
    if !(1..=MAX_CELLS as usize).contains(&config.train) {
        return Err(ParamError::new(
            ID,
            "train",
            config.train,
            format!("expected a whole number in [1, {MAX_CELLS}]"),
        ));
    }
    if config.guard >= config.train {
        return Err(ParamError::new(
            ID,
            "guard",
            config.guard,
            format!(
                "must be smaller than train = {} (guard cells only keep the target's own \
                 spread out of the noise estimate)",
                config.train
            ),
        ));
    }
    let (low_name, high_name) = config.band_params;
    let nyquist_hz = fs / 2.0;
    if !(config.low_hz.is_finite() && config.low_hz >= 0.0) {
        return Err(ParamError::new(
            ID,
            low_name,
            config.low_hz,
            "expected a number ≥ 0",
        ));
    }
    if !(config.high_hz.is_finite() && config.high_hz <= nyquist_hz) {
        return Err(ParamError::new(
            ID,
            high_name,
            config.high_hz,
            format!("above Nyquist: must be at most fs/2 = {nyquist_hz} Hz"),
        ));
    }
    if config.low_hz >= config.high_hz {
        return Err(ParamError::new(
            ID,
            low_name,
            config.low_hz,
            format!("must be below {high_name} → {} Hz", config.high_hz),
        ));
    }
    if !(config.pfa > 0.0 && config.pfa <= 1.0) {
        return Err(ParamError::new(
            ID,
            "pfa",
            config.pfa,
            "expected a probability in (0, 1]",
        ));
    }
    let axis = match info.channels {
        Channels::Real => DopplerAxis::Reflected {
            bins: frame_len / 2 + 1,
        },
        Channels::Iq => DopplerAxis::Circular { bins: frame_len },
    };
    let reach = config.guard + config.train;
    if reach > axis.max_reach() {
        return Err(ParamError::new(
            ID,
            "train",
            config.train,
            format!(
                "guard + train = {reach} bins do not fit a {}-bin spectrum: at most {} \
                 (use fewer cells or a longer frame_len)",
                axis.bins(),
                axis.max_reach()
            ),
        ));
    }
    let plan = CellPlan::new(
        axis,
        frame_len,
        fs,
        (config.low_hz, config.high_hz),
        config.guard,
        config.train,
    );
    if plan.cut_bins.is_empty() {
        return Err(ParamError::new(
            ID,
            &format!("{low_name}, {high_name}"),
            format!("[{}, {}] Hz", config.low_hz, config.high_hz),
            format!(
                "no bin lies in the band (bins are {} Hz apart): widen it or lengthen frame_len",
                fs / frame_len as f64
            ),
        ));
    }
    Ok(Layout {
        channels: info.channels,
        axis,
        plan: plan.into(),
    })
}

/// Real or I/Q transform, planned once.
#[derive(Clone)]
enum Transform {
    Real(PowerSpectrum),
    Iq(ComplexPowerSpectrum),
}

impl Transform {
    fn compute(&mut self, frame: &[f64], power: &mut [f64]) {
        match self {
            Transform::Real(spectrum) => spectrum.compute(frame, power),
            Transform::Iq(spectrum) => spectrum.compute(frame, power),
        }
    }
}

/// A running CA-CFAR detector. [`CaCfarPlugin::plan`] makes one fresh
/// (FFT planned, cell table made) and every state is a clone of it: the FFT
/// plan, the window and the cell table are shared, the buffers are its own.
#[derive(Clone)]
pub struct CaCfarDetector {
    framer: Framer,
    transform: Transform,
    /// Copy of a frame with non-finite values set to 0 (used only when needed).
    clean_frame: Vec<f64>,
    power: Vec<f64>,
    plan: Arc<CellPlan>,
    values_per_sample: u64,
    nominal_multiplier: f64,
}

impl CaCfarDetector {
    /// Builds a detector for a stream: plans the FFT and the cell table.
    ///
    /// # Errors
    /// A parameter out of range or parameters that do not fit together or
    /// the stream (see the crate doc).
    pub fn new(config: &CaCfarConfig, info: &StreamInfo) -> Result<Self, ParamError> {
        let layout = validate(config, info)?;
        let values_per_sample = layout.channels.count();
        let frame_values = config.frame_len * values_per_sample;
        let transform = match layout.channels {
            Channels::Real => Transform::Real(PowerSpectrum::new(config.frame_len, config.window)),
            Channels::Iq => {
                Transform::Iq(ComplexPowerSpectrum::new(config.frame_len, config.window))
            }
        };
        Ok(CaCfarDetector {
            framer: Framer::new(frame_values, config.hop * values_per_sample),
            transform,
            clean_frame: vec![0.0; frame_values],
            power: vec![0.0; layout.axis.bins()],
            plan: layout.plan,
            values_per_sample: values_per_sample as u64,
            nominal_multiplier: config.nominal_multiplier(),
        })
    }

    /// The bins tested, ascending (FFT order for I/Q).
    pub fn cut_bins(&self) -> &[usize] {
        &self.plan.cut_bins
    }

    /// The nominal threshold α for the configured `pfa` (see
    /// [`CaCfarConfig::nominal_multiplier`]).
    pub fn nominal_multiplier(&self) -> f64 {
        self.nominal_multiplier
    }
}

/// `frame` itself when every value is finite, else a copy with the
/// non-finite values set to 0.
fn finite_frame<'a>(frame: &'a [f64], scratch: &'a mut [f64]) -> &'a [f64] {
    if frame.iter().all(|v| v.is_finite()) {
        return frame;
    }
    for (clean, &v) in scratch.iter_mut().zip(frame) {
        *clean = if v.is_finite() { v } else { 0.0 };
    }
    scratch
}

/// Max over CUTs of P[k] / mean(training cells of k).
fn frame_score(power: &[f64], plan: &CellPlan) -> f64 {
    plan.cut_bins
        .iter()
        .zip(plan.training.chunks_exact(plan.cells_per_cut))
        .map(|(&k, cells)| {
            let sum: f64 = cells.iter().map(|&j| power[j]).sum();
            ratio_to_mean(power[k], sum, plan.cells_per_cut)
        })
        .fold(0.0, f64::max)
}

impl Detector for CaCfarDetector {
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        let block = block.values();
        let CaCfarDetector {
            framer,
            transform,
            clean_frame,
            power,
            plan,
            values_per_sample,
            ..
        } = self;
        framer.push(block, |frame, end_value| {
            let frame = finite_frame(frame, clean_frame);
            transform.compute(frame, power);
            out.push(FrameScore {
                end_sample: end_value / *values_per_sample,
                value: frame_score(power, plan),
            });
        });
        Ok(())
    }

    fn reset(&mut self) {
        self.framer.reset();
    }
}

/// The `ca-cfar` plugin.
pub struct CaCfarPlugin;

impl DetectorPlugin for CaCfarPlugin {
    fn id(&self) -> &'static str {
        ID
    }

    fn about(&self) -> &'static str {
        "cell-averaging CFAR: strongest in-band Doppler bin over the mean of its training cells"
    }

    fn params(&self) -> &'static [ParamSpec] {
        &PARAMS
    }

    fn plan(
        &self,
        params: &Params,
        info: &StreamInfo,
    ) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        let config = CaCfarConfig::from_params(params, info)?;
        Ok(PrototypePlan::shared(CaCfarDetector::new(&config, info)?))
    }

    fn check(&self, params: &Params, info: &StreamInfo) -> Result<(), ParamError> {
        let config = CaCfarConfig::from_params(params, info)?;
        validate(&config, info).map(|_| ())
    }

    fn cost(&self, params: &Params, info: &StreamInfo) -> Option<Cost> {
        let config = CaCfarConfig::from_params(params, info).ok()?;
        let layout = validate(&config, info).ok()?;
        Some(cost_of(&config, &layout))
    }

    /// The cells under test, `[low, high]` in Hz as used.
    fn doppler_bands(&self, params: &Params, info: &StreamInfo) -> Vec<DopplerBand> {
        let Ok(config) = CaCfarConfig::from_params(params, info) else {
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
        let config = CaCfarConfig::from_params(params, info).ok()?;
        validate(&config, info).ok()?;
        Some(Framing {
            frame_len: config.frame_len,
            hop: config.hop,
        })
    }

    /// The CA-CFAR multiplier α for the configured `pfa`, and the per-frame
    /// false-alarm probability 1 − (1 − pfa)^(cells under test) that it promises
    /// when the cells are independent (rectangular window, no overlap); with a
    /// Hann window or overlap the real rate differs
    /// (docs/reference/detectors.md#d7).
    fn nominal_operating_point(
        &self,
        params: &Params,
        info: &StreamInfo,
    ) -> Option<echobench_core::detector::NominalPoint> {
        let config = CaCfarConfig::from_params(params, info).ok()?;
        let layout = validate(&config, info).ok()?;
        let cuts = layout.plan.cut_bins.len() as i32;
        Some(echobench_core::detector::NominalPoint {
            threshold: config.nominal_multiplier(),
            frame_pfa: 1.0 - (1.0 - config.pfa).powi(cuts),
        })
    }
}

/// Memory and arithmetic of a configured detector, as implemented (f64 values,
/// `usize` indices; a fixed-point port would halve or quarter the bytes).
fn cost_of(config: &CaCfarConfig, layout: &Layout) -> Cost {
    const REAL_BYTES: usize = std::mem::size_of::<f64>();
    const COMPLEX_BYTES: usize = 2 * REAL_BYTES;
    let n = config.frame_len;
    let frame_values = n * layout.channels.count();
    let bins = layout.axis.bins();
    let cuts = layout.plan.cut_bins.len();
    let table = layout.plan.cut_bins.len() + layout.plan.training.len();
    let fft_buffers = match layout.channels {
        Channels::Real => n * REAL_BYTES + bins * COMPLEX_BYTES,
        Channels::Iq => n * COMPLEX_BYTES,
    };
    // Framer ring (each value stored twice so a frame is one slice), the
    // NaN-cleaning copy, the window, FFT buffers (library scratch not
    // counted), the power row and the cell table.
    let state_bytes = 2 * frame_values * REAL_BYTES
        + frame_values * REAL_BYTES
        + n * REAL_BYTES
        + fft_buffers
        + bins * REAL_BYTES
        + table * std::mem::size_of::<usize>();

    let log2_n = (n as f64).log2();
    // Per frame: a finiteness test and a window multiply per value; the FFT
    // at the usual radix-2 count, 5·N·log2 N flops complex and half that for a
    // real input; |X|² at 3 flops per bin; per CUT 2·train adds for the sum,
    // one divide for the mean, one for the ratio and one compare for the max.
    let fft_ops = match layout.channels {
        Channels::Real => 2.5 * n as f64 * log2_n,
        Channels::Iq => 5.0 * n as f64 * log2_n,
    };
    let per_frame = 2.0 * frame_values as f64
        + fft_ops
        + 3.0 * bins as f64
        + cuts as f64 * (layout.plan.cells_per_cut as f64 + 3.0);
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
        CaCfarPlugin
            .plan(&params, info)
            .map(|plan| plan.start())
            .map(|_| ())
    }

    #[test]
    fn defaults_build_and_match_the_reference_configuration() {
        // The reference pipeline's geometry, pinned on purpose: Hz band, 256/128 frames.
        let given: Vec<(String, ParamValue)> = vec![
            ("band_units".into(), ParamValue::Text("hz".into())),
            ("frame_len".into(), ParamValue::Integer(256)),
            ("hop".into(), ParamValue::Integer(128)),
        ];
        let params = Params::resolve(ID, &PARAMS, &given).unwrap();
        let config = CaCfarConfig::from_params(&params, &test_stream(2000.0)).unwrap();
        assert_eq!(config, CaCfarConfig::default());
        let detector = CaCfarDetector::new(&config, &test_stream(2000.0)).unwrap();
        assert_eq!(detector.cut_bins(), (1..=12).collect::<Vec<_>>().as_slice());
        // docs/reference/check-values.md#cv7: N = 16, Pfa = 1e-3.
        assert!((detector.nominal_multiplier() - 8.638824).abs() < 1e-6);
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
            let config = CaCfarConfig::from_params(&params, &info).unwrap();
            assert_eq!((config.frame_len, config.hop), (frame_len, frame_len / 2));
            let torso_hz = 2.0 * 1.3 * carrier_hz / 299_792_458.0;
            assert!(
                config.low_hz < torso_hz && torso_hz < config.high_hz,
                "{config:?}"
            );
            let bin_hz = 2000.0 / frame_len as f64;
            let detector = CaCfarDetector::new(&config, &info).unwrap();
            let torso_bin = (torso_hz / bin_hz).round() as usize;
            assert!(detector.cut_bins().contains(&torso_bin), "{torso_bin}");
        }
    }

    #[test]
    fn bad_parameters_are_refused_with_their_names() {
        let fs = test_stream(2000.0);
        let cases: [(&[(&str, ParamValue)], &str); 8] = [
            (&[("guard", ParamValue::Integer(8))], "guard"),
            (&[("guard", ParamValue::Integer(9))], "guard"),
            (&[("high_hz", ParamValue::Real(1500.0))], "high_hz"),
            (
                &[
                    ("low_hz", ParamValue::Real(100.0)),
                    ("high_hz", ParamValue::Real(100.0)),
                ],
                "low_hz",
            ),
            (&[("frame_len", ParamValue::Integer(4))], "frame_len"),
            (&[("frame_len", ParamValue::Integer(255))], "frame_len"),
            (&[("hop", ParamValue::Integer(0))], "hop"),
            // 16 + 20 cells do not fit the 17 bins of a 32-point real frame.
            (
                &[
                    ("frame_len", ParamValue::Integer(32)),
                    ("train", ParamValue::Integer(20)),
                ],
                "train",
            ),
        ];
        for (given, param) in cases {
            let err = build_with(given, &fs).expect_err(param);
            assert_eq!(err.param, param, "{err}");
            assert!(err.to_string().contains(param), "{err}");
        }
        // A band between two bins: 3.0–3.5 Hz at 7.8125 Hz per bin.
        let err = build_with(
            &[
                ("low_hz", ParamValue::Real(3.0)),
                ("high_hz", ParamValue::Real(3.5)),
            ],
            &fs,
        )
        .unwrap_err();
        assert!(err.message.contains("no bin"), "{err}");
        // A stream with no sample rate.
        let err = build_with(&[], &test_stream(0.0)).unwrap_err();
        assert_eq!(err.param, "sample_rate_hz");
        // Odd frames are fine for I/Q, whose axis wraps.
        let iq = StreamInfo {
            channels: Channels::Iq,
            ..fs
        };
        build_with(&[("frame_len", ParamValue::Integer(255))], &iq).unwrap();
    }

    #[test]
    fn cost_scales_with_the_frame_and_the_hop() {
        let fs = test_stream(2000.0);
        let params = Params::resolve(
            ID,
            &PARAMS,
            &[
                ("frame_len".into(), ParamValue::Integer(256)),
                ("hop".into(), ParamValue::Integer(128)),
            ],
        )
        .unwrap();
        let cost = CaCfarPlugin.cost(&params, &fs).unwrap();
        // 256-point real FFT every 128 samples: 2.5·256·8/128 = 40 ops for the FFT alone.
        assert!(
            cost.ops_per_sample > 40.0 && cost.ops_per_sample < 60.0,
            "{cost:?}"
        );
        assert!(cost.state_bytes > 4 * 256 * 8, "{cost:?}");
        let half_hop = Params::resolve(
            ID,
            &PARAMS,
            &[
                ("frame_len".into(), ParamValue::Integer(256)),
                ("hop".into(), ParamValue::Integer(64)),
            ],
        )
        .unwrap();
        let denser = CaCfarPlugin.cost(&half_hop, &fs).unwrap();
        assert!((denser.ops_per_sample / cost.ops_per_sample - 2.0).abs() < 1e-12);
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
            &CaCfarPlugin,
            &[Channels::Real, Channels::Iq],
        );
    }
}
