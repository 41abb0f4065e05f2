//! Energy detector: band-limited frame energy over a tracked noise floor.
//!
//! **What it detects.** Anything that raises the power of the IF signal in a
//! band: a walker, but also a fan, a swaying plant or hum in the band. It is
//! the square-law energy detector of Urkowitz (1967), analysed in Kay (1998,
//! Vol. II, energy detector chapter): the statistic over a frame of N samples
//! is the mean of x², and with white Gaussian noise of known variance σ²,
//! N·score/σ² follows χ²_N (real samples) or Gamma(N, 1) (I/Q samples with
//! total variance σ² = E|z|²), which gives closed-form thresholds.
//!
//! **Method, per sample then per frame.**
//! 1. Optional band limit: a second-order Butterworth high-pass at `low_hz`
//!    and a second-order Butterworth low-pass at `high_hz` (bilinear transform
//!    with pre-warping, coefficients as in Bristow-Johnson's audio-EQ cookbook;
//!    0 turns either off). The sections start in the steady state of the first
//!    sample (like `sosfilt` with `sosfilt_zi · x[0]`), so a DC offset does not
//!    ring at t = 0. For I/Q streams the same real filters run on I and on Q,
//!    which limits |f| to the band on both sides of DC.
//! 2. Frame energy E = (1/N) Σ y² (real) or (1/N) Σ (y_I² + y_Q²) (I/Q) over
//!    `frame_len` samples, one frame every `hop` samples.
//! 3. `normalise: none`: score = E in V² (the reference pipeline's energy:
//!    "the mean of x² over the raw frame", frames of 256 every 128).
//!    `normalise: floor`: score = E / F, F a tracked noise floor (below).
//!
//! **The one design decision: a gated exponential floor.** F is an exponential
//! average of past frame energies with time constant `floor_s` (per frame,
//! F ← F + a·(E − F) with a = 1 − exp(−hop / (fs · floor_s)), so a step in
//! level is followed as 1 − exp(−t / floor_s)), updated only from frames with
//! E ≤ `floor_gate` · F. Frames far above the floor (motion) are therefore
//! scored against the floor learned before them and do not raise it; the
//! floor follows any fall, and any rise smaller than the gate, with time
//! constant `floor_s`. A rise
//! larger than the gate (a fan switched on for good) is never learned: its
//! frames keep scoring ≥ `floor_gate`, which is the intent for a detector
//! whose job is to report it, but raise `floor_gate` where a drifting
//! background must be followed. Each frame is scored against the floor before
//! that frame updates it. Start-up: the first frame sets F (it scores 1), and
//! the k-th accepted frame uses a = max(1/k, a), a running mean until it has
//! seen about 1/a frames, so F does not depend on a guessed initial value. A
//! floor below [`FLOOR_MIN_V2`] (silence) counts as not yet learned: the next
//! frame sets it afresh. The gate assumes noise frames rarely exceed it: with
//! N = 256 the spread of E is ±9 % (√(2/N)), far inside the default gate of 4,
//! but with very short frames (N ≤ 4) χ²_N/N exceeds 4 often and F is biased
//! low; raise the gate there.
//!
//! **Parameters.** The frame: `frame_s` = 0.128 s by default (256 samples at
//! 2 kHz), hop half a frame (`hop_fraction`); or `frame_len`/`hop` in samples;
//! a velocity resolution (`resolution_mps`) is accepted for symmetry with the
//! spectral detectors but means nothing more than T = λ/(2Δv) here. The band
//! limit is off by default (the square-law detector's point is all the
//! power); its corners may be set as radial speeds `low_mps`, `high_mps`
//! (converted by f = 2v·f_c/c, so a band fits every carrier) or in Hz as
//! `low_hz`, `high_hz` (0 = off). `normalise` (`floor` | `none`), `floor_s`
//! (s), `floor_gate` (ratio). `echobench_core::doppler` states the unit rules.
//!
//! **What the nominal Pfa means.** With `normalise: none`, no band limit and
//! `hop = frame_len`, frames of white Gaussian noise are independent and
//! γ = σ²·χ²_N⁻¹(1 − Pfa)/N gives the per-frame Pfa exactly (the tests check it
//! by Monte Carlo). Overlapping frames are correlated, a band limit colours
//! the noise (fewer effective degrees of freedom than N) and the floor is an
//! estimate, so in general the harness calibrates thresholds empirically on
//! noise-only runs.
//!
//! **Input rules.** A non-finite sample (NaN, ±∞) is treated as 0 before the
//! filters, so the filters stay finite and the frame scores as if that sample
//! were silent. Silence scores 0 in both modes (the floor division is guarded
//! by [`FLOOR_MIN_V2`]). Timestamps: t_s = (index one past the frame's last
//! sample) / fs, counting I/Q pairs as one sample.
#![deny(missing_docs)]

use echobench_core::detector::{
    BandRole, Cost, Detector, DetectorFailure, DetectorPlan, DetectorPlugin, DopplerBand,
    ParamError, ParamSpec, Params, PrototypePlan, Samples,
};
use echobench_core::doppler::{
    self, BandParams, FrameDefaults, FrameParams, FrameRules, FrameUnits, Framing,
};
use echobench_core::param_decl::{ChoiceParam, RealParam, TuneRange};
use echobench_core::{FrameScore, StreamInfo};
use std::sync::Arc;

/// The plugin's id in suite files.
const ID: &str = "energy";

/// Smallest noise floor (V²) a frame energy is divided by: 1e-24 V² is
/// (1 pV)², twelve orders of magnitude below the quantisation noise of a
/// 12-bit ADC at ±0.1 V (LSB²/12 ≈ 2e-10 V²), so it only matters for silence.
pub const FLOOR_MIN_V2: f64 = 1e-24;

/// Largest `frame_len` and `hop` accepted (2²⁰ samples: 8 MiB of f64 ring).
const MAX_FRAME: i64 = 1 << 20;

/// The frame family: 0.128 s (256 samples at 2 kHz), hop half a frame, by
/// default in seconds: a time-domain energy has no frequency bins, so a
/// velocity resolution would only be a roundabout way to say a duration.
pub const FRAME: FrameParams = FrameParams::new(
    FrameDefaults {
        frame_len: 256,
        hop: 128,
        frame_s: 0.128,
        resolution_mps: doppler::DEFAULT_RESOLUTION_MPS,
        hop_fraction: 0.5,
    },
    FrameRules {
        default_units: FrameUnits::Seconds,
        min_len: 1,
        max_len: MAX_FRAME as usize,
    },
);

/// The band-limit corners. Off by default: the energy detector's point is all
/// the power (the reference pipeline's energy has no band limit); set the
/// corners as speeds to band-limit it.
pub const BAND: BandParams = BandParams {
    low_mps: RealParam {
        name: "low_mps",
        unit: "m/s",
        about: "high-pass corner as a radial speed (0 = off)",
        min: 0.0,
        max: 100.0,
        default: 0.0,
    },
    high_mps: RealParam {
        name: "high_mps",
        unit: "m/s",
        about: "low-pass corner as a radial speed (0 = off)",
        min: 0.0,
        max: 100.0,
        default: 0.0,
    },
    low_hz: RealParam {
        name: "low_hz",
        unit: "Hz",
        about: "corner of the 2nd-order Butterworth high-pass (0 = off; Hz units)",
        min: 0.0,
        max: 1e9,
        default: 0.0,
    },
    high_hz: RealParam {
        name: "high_hz",
        unit: "Hz",
        about: "corner of the 2nd-order Butterworth low-pass (0 = off; Hz units)",
        min: 0.0,
        max: 1e9,
        default: 0.0,
    },
};

/// `normalise`: how frame energy becomes a score.
const NORMALISE: ChoiceParam<Normalise> = ChoiceParam {
    name: "normalise",
    about: "floor: energy / tracked noise floor; none: raw mean of x^2 (V^2)",
    options: &["floor", "none"],
    values: &[Normalise::Floor, Normalise::None],
    default: "floor",
};

/// `floor_s`: the floor's time constant.
const FLOOR_S: RealParam = RealParam {
    name: "floor_s",
    unit: "s",
    about: "time constant of the noise-floor average",
    min: 1e-3,
    max: 1e7,
    default: 10.0,
};

/// `floor_gate`: frames above it times the floor leave the floor alone.
const FLOOR_GATE: RealParam = RealParam {
    name: "floor_gate",
    unit: "",
    about: "frames above gate x floor do not update the floor",
    min: 1.0,
    max: 1e12,
    default: 4.0,
};

static PARAMS: [ParamSpec; 15] = [
    // Tunable (`echobench tune`): the frame, the band and the smoothing; never the threshold,
    // which the runner calibrates.
    FRAME.units.spec(),
    FRAME.frame_len.spec(),
    FRAME.hop.spec(),
    FRAME.frame_s.spec_tuned(TuneRange::Log {
        low: 0.032,
        high: 0.5,
    }),
    FRAME.resolution_mps.spec(),
    FRAME.hop_fraction.spec(),
    FRAME.pow2.spec(),
    doppler::BAND_UNITS.spec(),
    BAND.low_mps.spec_tuned(TuneRange::Linear {
        low: 0.0,
        high: 0.4,
    }),
    BAND.high_mps.spec(),
    BAND.low_hz.spec(),
    BAND.high_hz.spec(),
    NORMALISE.spec(),
    FLOOR_S.spec_tuned(TuneRange::Log {
        low: 1.0,
        high: 100.0,
    }),
    FLOOR_GATE.spec_tuned(TuneRange::Log {
        low: 2.0,
        high: 20.0,
    }),
];

/// The energy detector plugin (id `energy`).
pub struct EnergyPlugin;

impl DetectorPlugin for EnergyPlugin {
    fn id(&self) -> &'static str {
        ID
    }

    fn about(&self) -> &'static str {
        "band-limited frame energy (mean of x^2) over a tracked noise floor"
    }

    fn params(&self) -> &'static [ParamSpec] {
        &PARAMS
    }

    fn plan(
        &self,
        params: &Params,
        info: &StreamInfo,
    ) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        Ok(PrototypePlan::shared(EnergyDetector::new(params, info)?))
    }

    fn check(&self, params: &Params, info: &StreamInfo) -> Result<(), ParamError> {
        Config::from_params(params, info).map(|_| ())
    }

    fn cost(&self, params: &Params, info: &StreamInfo) -> Option<Cost> {
        let config = Config::from_params(params, info).ok()?;
        let channels = config.channels;
        let sections = usize::from(config.low_hz > 0.0) + usize::from(config.high_hz > 0.0);
        // State as implemented (f64 everywhere): the ring of frame_len squared
        // values, per section 5 coefficients plus 2 states per channel, the
        // floor and its frame count, and the framing counters (head, filled,
        // countdown, consumed: 4 × 8 bytes) plus the pending I of a pair.
        let state_bytes =
            config.frame_len * 8 + sections * (5 + 2 * channels) * 8 + 2 * 8 + 4 * 8 + 8;
        // Per sample instant: each biquad in direct form II transposed costs
        // 5 multiplies + 4 adds per channel; squaring costs 1 multiply per
        // channel (+1 add to combine I and Q); summing a frame costs frame_len
        // adds once per hop, i.e. frame_len / hop per sample; the division and
        // the floor update (~6 operations) happen once per hop.
        let ops_per_sample = (sections * 9 * channels) as f64
            + (2 * channels - 1) as f64
            + config.frame_len as f64 / config.hop as f64
            + 6.0 / config.hop as f64;
        Some(Cost {
            state_bytes,
            ops_per_sample,
        })
    }

    /// The band the energy is taken over: from the high-pass corner (0 when
    /// off) to the low-pass corner (Nyquist when off). The corners are −3 dB
    /// points of second-order sections, not brick walls.
    fn doppler_bands(&self, params: &Params, info: &StreamInfo) -> Vec<DopplerBand> {
        let Ok(config) = Config::from_params(params, info) else {
            return Vec::new();
        };
        let high_hz = if config.high_hz > 0.0 {
            config.high_hz
        } else {
            config.sample_rate_hz / 2.0
        };
        vec![DopplerBand {
            role: BandRole::Motion,
            label: "energy band",
            low_hz: config.low_hz,
            high_hz,
        }]
    }

    fn framing(&self, params: &Params, info: &StreamInfo) -> Option<Framing> {
        let config = Config::from_params(params, info).ok()?;
        Some(Framing {
            frame_len: config.frame_len,
            hop: config.hop,
        })
    }
}

/// How frame energy becomes a score.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Normalise {
    /// Energy / tracked noise floor.
    Floor,
    /// Raw mean of x², V².
    None,
}

/// Checked parameters.
#[derive(Debug, Clone, Copy)]
struct Config {
    frame_len: usize,
    hop: usize,
    low_hz: f64,
    high_hz: f64,
    normalise: Normalise,
    floor_s: f64,
    floor_gate: f64,
    sample_rate_hz: f64,
    channels: usize,
}

impl Config {
    fn from_params(params: &Params, info: &StreamInfo) -> Result<Config, ParamError> {
        let fs = echobench_core::detector::check_sample_rate(ID, info)?;
        let Framing { frame_len, hop } = doppler::resolve_frame(ID, params, info, &FRAME)?;
        let units = doppler::band_units(ID, params, &doppler::BAND_UNITS, &[&BAND])?;
        let band = doppler::resolve_band(ID, params, info, units, &BAND)?;
        let nyquist_hz = fs / 2.0;
        let corner = |name: &str, hz: f64| -> Result<f64, ParamError> {
            if !(hz.is_finite() && hz >= 0.0) {
                return Err(ParamError::new(
                    ID,
                    name,
                    hz,
                    "expected 0 (off) or a positive corner",
                ));
            }
            if hz >= nyquist_hz {
                return Err(ParamError::new(
                    ID,
                    name,
                    hz,
                    format!(
                        "must be below the Nyquist frequency fs/2 = {nyquist_hz} Hz (0 turns it off)"
                    ),
                ));
            }
            Ok(hz)
        };
        let low_hz = corner(band.low_name, band.low_hz)?;
        let high_hz = corner(band.high_name, band.high_hz)?;
        if low_hz > 0.0 && high_hz > 0.0 && low_hz >= high_hz {
            return Err(ParamError::new(
                ID,
                &format!("{}, {}", band.low_name, band.high_name),
                format!("{low_hz}, {high_hz}"),
                "the band's low edge must be below its high edge",
            ));
        }
        // Ranges were checked by `Params::resolve` against the declarations.
        let normalise = NORMALISE.get(params)?;
        let floor_s = FLOOR_S.get(params)?;
        let floor_gate = FLOOR_GATE.get(params)?;
        Ok(Config {
            frame_len,
            hop,
            low_hz,
            high_hz,
            normalise,
            floor_s,
            floor_gate,
            sample_rate_hz: fs,
            channels: info.channels.count(),
        })
    }
}

/// One second-order section, direct form II transposed, in f64.
#[derive(Debug, Clone, Copy)]
struct Biquad {
    b0: f64,
    b1: f64,
    b2: f64,
    a1: f64,
    a2: f64,
    s1: f64,
    s2: f64,
    primed: bool,
}

impl Biquad {
    /// Butterworth (Q = 1/√2) section by the bilinear transform pre-warped at
    /// the corner: Bristow-Johnson's cookbook LPF/HPF with cos ω0, sin ω0.
    fn butterworth(corner_hz: f64, sample_rate_hz: f64, high_pass: bool) -> Biquad {
        let omega = std::f64::consts::TAU * corner_hz / sample_rate_hz;
        let (sin_w, cos_w) = omega.sin_cos();
        let alpha = sin_w / std::f64::consts::SQRT_2; // sin ω0 / (2Q), Q = 1/√2
        let a0 = 1.0 + alpha;
        let (b0, b1) = if high_pass {
            let half = (1.0 + cos_w) / 2.0;
            (half, -2.0 * half)
        } else {
            let half = (1.0 - cos_w) / 2.0;
            (half, 2.0 * half)
        };
        Biquad {
            b0: b0 / a0,
            b1: b1 / a0,
            b2: b0 / a0,
            a1: -2.0 * cos_w / a0,
            a2: (1.0 - alpha) / a0,
            s1: 0.0,
            s2: 0.0,
            primed: false,
        }
    }

    fn process(&mut self, x: f64) -> f64 {
        if !self.primed {
            // Steady state for a constant input x: y = H(1)·x, and the two
            // states that reproduce it (the `sosfilt_zi` idea, common practice).
            let dc_gain = (self.b0 + self.b1 + self.b2) / (1.0 + self.a1 + self.a2);
            let y = dc_gain * x;
            self.s1 = y - self.b0 * x;
            self.s2 = self.b2 * x - self.a2 * y;
            self.primed = true;
        }
        let y = self.b0 * x + self.s1;
        self.s1 = self.b1 * x - self.a1 * y + self.s2;
        self.s2 = self.b2 * x - self.a2 * y;
        y
    }

    fn reset(&mut self) {
        self.s1 = 0.0;
        self.s2 = 0.0;
        self.primed = false;
    }
}

/// The optional band limit of one channel.
#[derive(Debug, Clone, Copy)]
struct BandLimit {
    high_pass: Option<Biquad>,
    low_pass: Option<Biquad>,
}

impl BandLimit {
    fn new(config: &Config) -> BandLimit {
        let section = |hz: f64, high| {
            (hz > 0.0).then(|| Biquad::butterworth(hz, config.sample_rate_hz, high))
        };
        BandLimit {
            high_pass: section(config.low_hz, true),
            low_pass: section(config.high_hz, false),
        }
    }

    fn process(&mut self, mut x: f64) -> f64 {
        if let Some(section) = &mut self.high_pass {
            x = section.process(x);
        }
        if let Some(section) = &mut self.low_pass {
            x = section.process(x);
        }
        x
    }

    fn reset(&mut self) {
        for section in [&mut self.high_pass, &mut self.low_pass]
            .into_iter()
            .flatten()
        {
            section.reset();
        }
    }
}

/// The gated exponential noise floor (see the crate doc).
#[derive(Debug, Clone, Copy)]
struct NoiseFloor {
    /// Per-frame step of the exponential average, 1 − exp(−hop / (fs·floor_s)).
    step: f64,
    gate: f64,
    floor_v2: f64,
    accepted_frames: u64,
}

impl NoiseFloor {
    fn new(config: &Config) -> NoiseFloor {
        let frame_period_s = config.hop as f64 / config.sample_rate_hz;
        NoiseFloor {
            // -expm1 keeps precision when hop/fs is tiny against floor_s.
            step: -(-frame_period_s / config.floor_s).exp_m1(),
            gate: config.floor_gate,
            floor_v2: 0.0,
            accepted_frames: 0,
        }
    }

    /// Scores a frame energy against the floor, then lets it update the floor.
    fn score(&mut self, energy_v2: f64) -> f64 {
        if self.accepted_frames == 0 || self.floor_v2 <= FLOOR_MIN_V2 {
            self.floor_v2 = energy_v2;
            self.accepted_frames = 1;
            return energy_v2 / energy_v2.max(FLOOR_MIN_V2);
        }
        let score = energy_v2 / self.floor_v2;
        if energy_v2 <= self.gate * self.floor_v2 {
            self.accepted_frames += 1;
            let step = (1.0 / self.accepted_frames as f64).max(self.step);
            self.floor_v2 += step * (energy_v2 - self.floor_v2);
        }
        score
    }

    fn reset(&mut self) {
        self.floor_v2 = 0.0;
        self.accepted_frames = 0;
    }
}

/// A running energy detector (what [`EnergyPlugin`] builds).
///
/// Besides the [`Detector`] interface (f32 samples), it takes f64 samples
/// through [`EnergyDetector::process_f64`], for callers that hold volts in
/// double precision (the reference-pipeline cross-check needs it: rounding
/// code·LSB to f32 moves frame energies by up to 1.2e-7 relative).
#[derive(Debug, Clone)]
pub struct EnergyDetector {
    config: Config,
    bands: [BandLimit; 2],
    /// Ring of the last `frame_len` instantaneous powers (y² or y_I² + y_Q²).
    powers: Vec<f64>,
    head: usize,
    filled: usize,
    /// Sample instants until the next frame end.
    countdown: usize,
    /// Sample instants consumed since the start.
    consumed: u64,
    /// The I value of an I/Q pair whose Q has not arrived yet.
    pending_in_phase: Option<f64>,
    floor: NoiseFloor,
}

impl EnergyDetector {
    /// A detector for `info` with resolved `params` (of [`EnergyPlugin`]).
    ///
    /// # Errors
    /// A corner at or above Nyquist, `low_hz ≥ high_hz` with both set, a
    /// non-positive sample rate, or a count outside its range.
    pub fn new(params: &Params, info: &StreamInfo) -> Result<EnergyDetector, ParamError> {
        let config = Config::from_params(params, info)?;
        let band = BandLimit::new(&config);
        Ok(EnergyDetector {
            config,
            bands: [band; 2],
            powers: vec![0.0; config.frame_len],
            head: 0,
            filled: 0,
            countdown: config.frame_len,
            consumed: 0,
            pending_in_phase: None,
            floor: NoiseFloor::new(&config),
        })
    }

    /// As [`Detector::process`], for samples held as f64.
    pub fn process_f64(&mut self, block: &[f64], out: &mut Vec<FrameScore>) {
        for &value in block {
            self.push_value(value, out);
        }
    }

    fn push_value(&mut self, value: f64, out: &mut Vec<FrameScore>) {
        let value = if value.is_finite() { value } else { 0.0 };
        let power = if self.config.channels == 2 {
            let Some(in_phase) = self.pending_in_phase.take() else {
                self.pending_in_phase = Some(value);
                return;
            };
            let i = self.bands[0].process(in_phase);
            let q = self.bands[1].process(value);
            i * i + q * q
        } else {
            let y = self.bands[0].process(value);
            y * y
        };
        self.push_power(power, out);
    }

    fn push_power(&mut self, power: f64, out: &mut Vec<FrameScore>) {
        let n = self.config.frame_len;
        self.powers[self.head] = power;
        self.head += 1;
        if self.head == n {
            self.head = 0;
        }
        self.filled = (self.filled + 1).min(n);
        self.consumed += 1;
        self.countdown -= 1;
        if self.countdown == 0 {
            self.countdown = self.config.hop;
            if self.filled == n {
                let energy_v2 = self.powers.iter().sum::<f64>() / n as f64;
                let value = match self.config.normalise {
                    Normalise::None => energy_v2,
                    Normalise::Floor => self.floor.score(energy_v2),
                };
                out.push(FrameScore {
                    end_sample: self.consumed,
                    value,
                });
            }
        }
    }
}

impl Detector for EnergyDetector {
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        let block = block.values();
        for &value in block {
            self.push_value(f64::from(value), out);
        }
        Ok(())
    }

    fn reset(&mut self) {
        for band in &mut self.bands {
            band.reset();
        }
        self.powers.fill(0.0);
        self.head = 0;
        self.filled = 0;
        self.countdown = self.config.frame_len;
        self.consumed = 0;
        self.pending_in_phase = None;
        self.floor.reset();
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use echobench_core::detector::{check_scores, test_stream, ParamValue};
    use echobench_core::Channels;
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;
    use rand_distr::{Distribution, Normal};

    fn params(given: &[(&str, ParamValue)]) -> Result<Params, ParamError> {
        let given: Vec<(String, ParamValue)> = given
            .iter()
            .map(|(name, value)| (name.to_string(), value.clone()))
            .collect();
        Params::resolve(ID, &PARAMS, &given).map_err(ParamError::from)
    }

    fn build(
        given: &[(&str, ParamValue)],
        info: &StreamInfo,
    ) -> Result<Box<dyn Detector>, ParamError> {
        EnergyPlugin
            .plan(&params(given)?, info)
            .map(|plan| plan.start())
    }

    /// Feeds a real stream in blocks of `block` samples.
    fn run(detector: &mut dyn Detector, samples: &[f32], block: usize) -> Vec<FrameScore> {
        run_as(detector, samples, block, Channels::Real)
    }

    /// Feeds interleaved `samples` in blocks of `block` sample instants.
    fn run_as(
        detector: &mut dyn Detector,
        samples: &[f32],
        block: usize,
        channels: Channels,
    ) -> Vec<FrameScore> {
        let mut out = Vec::new();
        for chunk in samples.chunks(block.max(1) * channels.count()) {
            let chunk = Samples::from_values(chunk, channels).expect("whole pairs");
            detector.process(chunk, &mut out).unwrap();
        }
        out
    }

    fn noise(seed: u8, len: usize, sigma: f64) -> Vec<f32> {
        let mut rng = ChaCha8Rng::from_seed([seed; 32]);
        let normal = Normal::new(0.0, sigma).expect("valid sigma");
        (0..len).map(|_| normal.sample(&mut rng) as f32).collect()
    }

    fn iq_stream(fs: f64) -> StreamInfo {
        StreamInfo {
            channels: Channels::Iq,
            ..test_stream(fs)
        }
    }

    fn real(x: f64) -> ParamValue {
        ParamValue::Real(x)
    }

    fn int(i: i64) -> ParamValue {
        ParamValue::Integer(i)
    }

    fn text(s: &str) -> ParamValue {
        ParamValue::Text(s.to_string())
    }

    /// The detector contract (detectors brief): blocks of 1, 7, 256 or the
    /// whole trial give bit-identical scores, for real and I/Q streams, with
    /// the band limit and the floor switched on (the stateful parts).
    #[test]
    fn scores_do_not_depend_on_block_size() {
        let fs = 2000.0;
        let mut samples = noise(7, 20_000, 0.01);
        // A burst in the middle so that the floor gate is exercised.
        for x in &mut samples[9_000..11_000] {
            *x *= 10.0;
        }
        let given = [
            ("low_hz", real(5.0)),
            ("high_hz", real(300.0)),
            ("frame_len", int(200)),
            ("hop", int(70)),
        ];
        for info in [test_stream(fs), iq_stream(fs)] {
            let mut detector = build(&given, &info).expect("valid parameters");
            let whole = run_as(detector.as_mut(), &samples, samples.len(), info.channels);
            assert!(check_scores(&whole).is_ok());
            let expected_frames = (samples.len() / info.channels.count() - 200) / 70 + 1;
            assert_eq!(whole.len(), expected_frames);
            for block in [1, 7, 256] {
                let mut detector = build(&given, &info).expect("valid parameters");
                assert_eq!(
                    run_as(detector.as_mut(), &samples, block, info.channels),
                    whole,
                    "block {block}"
                );
            }
            detector.reset();
            assert_eq!(
                run_as(detector.as_mut(), &samples, 333, info.channels),
                whole,
                "after reset"
            );
        }
    }

    #[test]
    fn refuses_bad_parameters_naming_them() {
        let fs = 1000.0;
        let info = test_stream(fs);
        let refused = |given: &[(&str, ParamValue)]| match build(given, &info) {
            Ok(_) => panic!("{given:?} was accepted"),
            Err(e) => e,
        };
        assert_eq!(refused(&[("low_hz", real(500.0))]).param, "low_hz");
        assert_eq!(refused(&[("high_hz", real(600.0))]).param, "high_hz");
        let band = refused(&[("low_hz", real(100.0)), ("high_hz", real(50.0))]);
        assert_eq!(band.param, "low_hz, high_hz");
        assert!(band.to_string().contains("below its high edge"), "{band}");
        assert_eq!(refused(&[("frame_len", int(0))]).param, "frame_len");
        assert_eq!(refused(&[("hop", int(-3))]).param, "hop");
        assert_eq!(refused(&[("normalise", text("rms"))]).param, "normalise");
        assert_eq!(refused(&[("floor_gate", real(0.5))]).param, "floor_gate");
        assert_eq!(refused(&[("floor_s", real(0.0))]).param, "floor_s");
        let no_rate = EnergyPlugin
            .plan(&Params::defaults(&PARAMS), &test_stream(0.0))
            .map(|plan| plan.start())
            .err()
            .expect("zero sample rate refused");
        assert_eq!(no_rate.param, "sample_rate_hz");
        assert!(EnergyPlugin
            .check(&Params::defaults(&PARAMS), &test_stream(f64::NAN))
            .is_err());
    }

    #[test]
    fn silence_clipping_nan_and_a_single_sample_behave() {
        let info = test_stream(2000.0);
        for mode in ["floor", "none"] {
            let mut detector = build(&[("normalise", text(mode))], &info).expect("valid");
            let silent = run(detector.as_mut(), &[0.0; 4096], 4096);
            assert_eq!(silent.len(), (4096 - 256) / 128 + 1);
            assert!(
                silent.iter().all(|s| s.value == 0.0),
                "{mode}: silence scores 0"
            );
        }
        // Full-scale clipping: a ±0.1 V square wave has mean x² = 0.01 V² exactly
        // (0.1 rounds to f32 first, hence the f32 value).
        let full_scale = f64::from(0.1_f32);
        let square: Vec<f32> = (0..2048)
            .map(|i| if i % 2 == 0 { 0.1 } else { -0.1 })
            .collect();
        let mut detector = build(&[("normalise", text("none"))], &info).expect("valid");
        for s in run(detector.as_mut(), &square, 100) {
            assert!(
                (s.value - full_scale * full_scale).abs() <= 1e-15,
                "{}",
                s.value
            );
        }
        // NaN and ±inf count as 0: the same scores as the stream with zeros there.
        let clean = noise(3, 3000, 0.02);
        let mut zeroed = clean.clone();
        let mut poisoned = clean.clone();
        for (k, bad) in [
            (10, f32::NAN),
            (1500, f32::INFINITY),
            (2999, f32::NEG_INFINITY),
        ] {
            zeroed[k] = 0.0;
            poisoned[k] = bad;
        }
        let given = [("low_hz", real(10.0)), ("high_hz", real(400.0))];
        let mut a = build(&given, &info).expect("valid");
        let mut b = build(&given, &info).expect("valid");
        let from_poisoned = run(a.as_mut(), &poisoned, 64);
        assert!(check_scores(&from_poisoned).is_ok());
        assert_eq!(from_poisoned, run(b.as_mut(), &zeroed, 64));
        // A single sample: no complete frame of 256; one frame of 1.
        let mut detector = build(&[], &info).expect("valid");
        assert!(run(detector.as_mut(), &[0.5], 1).is_empty());
        let mut detector = build(
            &[
                ("frame_len", int(1)),
                ("hop", int(1)),
                ("normalise", text("none")),
            ],
            &info,
        )
        .expect("valid");
        assert_eq!(
            run(detector.as_mut(), &[0.5], 1),
            vec![FrameScore {
                end_sample: 1,
                value: 0.25
            }]
        );
    }

    #[test]
    fn time_stamps_mark_the_end_of_each_frame() {
        let fs = 2000.0;
        let mut detector = build(&[], &test_stream(fs)).expect("valid");
        let scores = run(detector.as_mut(), &noise(1, 1000, 0.01), 1000);
        let ends: Vec<u64> = scores.iter().map(|s| s.end_sample).collect();
        assert_eq!(ends, vec![256, 384, 512, 640, 768, 896]);
        // I/Q: an instant is one I, Q pair, so 1000 values are 500 instants.
        let mut detector =
            build(&[("frame_len", int(100)), ("hop", int(50))], &iq_stream(fs)).expect("valid");
        let scores = run_as(detector.as_mut(), &noise(2, 1000, 0.01), 3, Channels::Iq);
        let ends: Vec<u64> = scores.iter().map(|s| s.end_sample).collect();
        assert_eq!(ends, (2..=10).map(|k| k * 50).collect::<Vec<u64>>());
    }

    /// |H|² of the bilinear-transformed Butterworth filter of order 2:
    /// 1 / (1 + (Ω/Ωc)^±4) with Ω = tan(π f / fs) (Butterworth 1930 for the
    /// prototype; the tan warping is the bilinear transform's, Oppenheim &
    /// Schafer, Discrete-Time Signal Processing, ch. 7, from memory).
    fn butterworth_power_gain(f_hz: f64, corner_hz: f64, fs: f64, high_pass: bool) -> f64 {
        let ratio = (std::f64::consts::PI * f_hz / fs).tan()
            / (std::f64::consts::PI * corner_hz / fs).tan();
        let ratio = if high_pass { 1.0 / ratio } else { ratio };
        1.0 / (1.0 + ratio.powi(4))
    }

    #[test]
    fn band_limit_follows_the_butterworth_response() {
        // Frames of 200 samples at 1 kHz hold whole periods of multiples of
        // 5 Hz, so a sine's frame energy is exactly A²/2·|H|² once settled.
        let fs = 1000.0;
        let amplitude = 0.05;
        for (name, corner_hz, high_pass) in [("low_hz", 50.0, true), ("high_hz", 50.0, false)] {
            for f_hz in [25.0, 50.0, 100.0, 200.0] {
                let sine: Vec<f32> = (0..4000)
                    .map(|n| {
                        (amplitude * (std::f64::consts::TAU * f_hz * n as f64 / fs).sin()) as f32
                    })
                    .collect();
                let given = [
                    (name, real(corner_hz)),
                    ("normalise", text("none")),
                    ("frame_len", int(200)),
                    ("hop", int(200)),
                ];
                let mut detector = build(&given, &test_stream(fs)).expect("valid");
                let scores = run(detector.as_mut(), &sine, 4000);
                // The f32 samples carry their own rounding; the sum is of those.
                let input_energy: f64 = sine[3800..]
                    .iter()
                    .map(|&x| f64::from(x).powi(2))
                    .sum::<f64>()
                    / 200.0;
                let expected =
                    input_energy * butterworth_power_gain(f_hz, corner_hz, fs, high_pass);
                let settled = scores.last().expect("20 frames").value;
                assert!(
                    (settled / expected - 1.0).abs() < 1e-6,
                    "{name} {corner_hz} Hz at {f_hz} Hz: {settled} vs {expected}"
                );
            }
        }
    }

    #[test]
    fn filters_start_in_the_steady_state_of_the_first_sample() {
        // A constant offset (a mixer's DC) through the high-pass must not ring
        // at t = 0; through the low-pass it must pass unchanged.
        let offset = [0.7_f32; 2000];
        let info = test_stream(1000.0);
        let mut high =
            build(&[("low_hz", real(5.0)), ("normalise", text("none"))], &info).expect("valid");
        assert!(run(high.as_mut(), &offset, 2000)
            .iter()
            .all(|s| s.value <= 1e-24));
        let mut low = build(
            &[("high_hz", real(5.0)), ("normalise", text("none"))],
            &info,
        )
        .expect("valid");
        let expected = f64::from(0.7_f32).powi(2);
        for s in run(low.as_mut(), &offset, 2000) {
            assert!((s.value / expected - 1.0).abs() < 1e-12, "{}", s.value);
        }
    }

    /// A sine whose frames hold whole periods has the same energy in every
    /// frame, so the floor's path is deterministic and can be checked exactly.
    fn stepped_sine(amplitudes: &[(usize, f64)], fs: f64) -> Vec<f32> {
        let mut samples = Vec::new();
        for &(count, amplitude) in amplitudes {
            for _ in 0..count {
                let n = samples.len() as f64;
                samples.push((amplitude * (std::f64::consts::TAU * 50.0 * n / fs).sin()) as f32);
            }
        }
        samples
    }

    fn frame_energy(samples: &[f32]) -> f64 {
        samples.iter().map(|&x| f64::from(x).powi(2)).sum::<f64>() / samples.len() as f64
    }

    #[test]
    fn floor_follows_a_fall_with_its_time_constant() {
        // First-order (exponential) tracking: after a step the floor moves
        // as 1 − exp(−t/τ), the definition of a time constant (common practice).
        let fs = 1000.0;
        let floor_s = 1.0;
        let samples = stepped_sine(&[(5000, 0.1), (3000, 0.01)], fs);
        let given = [
            ("frame_len", int(100)),
            ("hop", int(100)),
            ("floor_s", real(floor_s)),
        ];
        let mut detector = build(&given, &test_stream(fs)).expect("valid");
        let scores = run(detector.as_mut(), &samples, 500);
        assert_eq!(scores.len(), 80);
        assert_eq!(scores[0].value, 1.0, "the first frame sets the floor");
        let high = frame_energy(&samples[4900..5000]);
        let low = frame_energy(&samples[7900..8000]);
        for s in &scores[1..50] {
            assert!(
                (s.value - 1.0).abs() < 1e-9,
                "steady level scores 1: {}",
                s.value
            );
        }
        // Frame k ≥ 1 after the step is scored against the floor after k − 1
        // updates by `low`: F = low + (high − low)·exp(−(k − 1)·hop/(fs·τ)).
        for (k, s) in scores[50..].iter().enumerate() {
            let elapsed_s = k as f64 * 100.0 / fs;
            let floor = low + (high - low) * (-elapsed_s / floor_s).exp();
            let expected = low / floor;
            assert!(
                (s.value / expected - 1.0).abs() < 1e-6,
                "frame {k} after the fall: {} vs {expected}",
                s.value
            );
        }
    }

    #[test]
    fn floor_learns_small_rises_but_not_motion_above_the_gate() {
        let fs = 1000.0;
        let given = [
            ("frame_len", int(100)),
            ("hop", int(100)),
            ("floor_s", real(0.5)),
            ("floor_gate", real(4.0)),
        ];
        // ×1.5 in amplitude = ×2.25 in energy, inside the gate of 4: learned.
        let small = stepped_sine(&[(3000, 0.01), (5000, 0.015)], fs);
        let mut detector = build(&given, &test_stream(fs)).expect("valid");
        let scores = run(detector.as_mut(), &small, 700);
        assert!(
            (scores[30].value - 2.25).abs() < 1e-3,
            "{}",
            scores[30].value
        );
        assert!(
            (scores[79].value - 1.0).abs() < 1e-3,
            "{}",
            scores[79].value
        );
        // ×3 in amplitude = ×9 in energy, above the gate: every frame keeps
        // scoring 9 against the floor learned before the rise.
        let large = stepped_sine(&[(3000, 0.01), (5000, 0.03)], fs);
        let mut detector = build(&given, &test_stream(fs)).expect("valid");
        let scores = run(detector.as_mut(), &large, 700);
        let ratio = frame_energy(&large[7900..8000]) / frame_energy(&large[2900..3000]);
        for s in &scores[30..] {
            assert!(
                (s.value / ratio - 1.0).abs() < 1e-9,
                "{} vs {ratio}",
                s.value
            );
        }
        // After silence the floor is learned afresh from the first non-silent frame.
        let mut after_silence = vec![0.0_f32; 1000];
        after_silence.extend(stepped_sine(&[(2000, 0.02)], fs));
        let mut detector = build(&given, &test_stream(fs)).expect("valid");
        let scores = run(detector.as_mut(), &after_silence, 1);
        assert!(scores[..10].iter().all(|s| s.value == 0.0));
        assert!(scores[10..].iter().all(|s| (s.value - 1.0).abs() < 1e-9));
    }

    #[test]
    fn cost_counts_the_ring_and_the_filters() {
        let info = test_stream(2000.0);
        let raw = EnergyPlugin
            .cost(
                &params(&[("normalise", text("none"))]).expect("valid"),
                &info,
            )
            .expect("valid");
        let banded = EnergyPlugin
            .cost(
                &params(&[("low_hz", real(1.0)), ("high_hz", real(100.0))]).expect("valid"),
                &info,
            )
            .expect("valid");
        assert!(raw.state_bytes >= 256 * 8);
        // Two sections of 5 multiplies + 4 adds per sample (DF2T).
        assert!((banded.ops_per_sample - raw.ops_per_sample - 18.0).abs() < 1e-12);
        assert!(banded.state_bytes > raw.state_bytes);
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
            &EnergyPlugin,
            &[Channels::Real, Channels::Iq],
        );
    }
}
