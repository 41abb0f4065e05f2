//! Window comparator: the analog chain of a cheap motion module, as a digital baseline.
//!
//! **Why it is here.** Most low-cost CW Doppler motion modules ship with this
//! chain after the mixer, built from an op-amp or two and a timer: a coupling
//! capacitor that blocks the mixer's DC, an RC low-pass, a window comparator
//! that trips when the amplified IF leaves a band ±θ around zero, and a
//! retriggerable one-shot that holds the output on for a while after the last
//! trip (common practice in module designs). It is the baseline a product already ships with, so every other
//! detector in echobench has to beat it to be worth its code and its MCU.
//!
//! **Chain, per sample** (each stage as an analog designer would draw it):
//! 1. DC block: first-order high-pass at `dc_block_hz` (0 = off).
//! 2. Optional first-order low-pass at `low_pass_hz` (0 = off).
//!    Both are bilinear transforms of the RC sections s/(s + ωc) and
//!    ωc/(s + ωc), pre-warped so the corner is exact (common practice). They
//!    start in the steady state of the first sample (a powered-up, settled
//!    module), so a DC offset does not trip the comparator at t = 0.
//! 3. Two-sided threshold on |y|: the comparator trips at a sample with
//!    y ≥ θ or y ≤ −θ.
//! 4. Retriggerable one-shot: the output is on at the tripping sample and for
//!    R = round(`retrigger_s` · fs) samples after the last trip.
//!
//! **The one design decision: the score is a windowed peak, so that sweeping a
//! threshold on it is the comparator.** A comparator gives a yes/no per
//! sample for one θ; the harness wants one continuous score per decision frame
//! (F = round(`decision_s` · fs) samples, frames back to back) to sweep θ. The
//! score of the frame of samples [s, e) is
//!
//! `score = max |y[m]| over m ∈ [s − R, e − 1]`
//!
//! (F + R samples; fewer at the start of the stream), in volts. Exact
//! equivalence, for every θ ≥ 0 and every frame: **score ≥ θ ⇔ the chain
//! above with window ±θ had its output on at some sample of the frame.**
//! Proof: the output is on at n iff some m ∈ [n − R, n] has `|y[m]| ≥ θ`; the
//! union of those ranges over n ∈ [s, e − 1] is [s − R, e − 1]. So the ROC the
//! harness draws by sweeping the score is the ROC of the shipped module over
//! its threshold trimmer, at this retrigger time. Set `retrigger_s: 0` when
//! the harness's own hold logic should play the timer's role. A pulse count
//! (trips per window) could not serve: it depends on θ, so no single number
//! per frame reproduces it for every θ. Nor can a *non*-retriggerable timer
//! (output held for R after the first trip, trips during the hold ignored):
//! its output is not monotone in θ. With trips at 0 and 3 for a low θ but
//! only at 3 for a high θ and a hold of 4, the output at sample 5 is off for
//! the low θ (its hold ran [0, 4]) and on for the high one ([3, 7]).
//!
//! **Parameters.** The filter corners are radial speeds by default:
//! `dc_block_mps` = 0.06 m/s (a fifth of the slowest walker torso, 0.3 m/s, so
//! a walker passes with ≤ 2 % loss; 0.98 Hz at 2.45 GHz, 9.7 Hz at 24.125 GHz)
//! and `low_pass_mps` = 0 (off), converted by f = 2v·f_c/c; or `dc_block_hz`,
//! `low_pass_hz` in Hz (0 = off) as an explicit choice (`band_units`,
//! `echobench_core::doppler`). `decision_s`, `retrigger_s` (s).
//!
//! **Nominal Pfa.** With both filters off and white Gaussian noise of σ, each
//! sample trips with p = 2Q(θ/σ) and a frame's window of F + R independent
//! samples is on with 1 − (1 − p)^(F + R) (the tests check this by Monte
//! Carlo). The filters correlate the samples and neighbouring windows overlap
//! by R, so in general the harness calibrates θ empirically.
//!
//! **Input rules.** Real (single-channel) streams only: the analog chain
//! exists for single-channel modules, so I/Q streams are refused (parameter
//! `channels`). A non-finite sample counts as 0 before the filters. Silence
//! scores 0. t_s = (index one past the frame's last sample) / fs.
#![deny(missing_docs)]

use echobench_core::detector::{
    BandRole, Cost, Detector, DetectorFailure, DetectorPlan, DetectorPlugin, DopplerBand,
    ParamError, ParamSpec, Params, PrototypePlan, Samples,
};
use echobench_core::doppler::{self, BandParams};
use echobench_core::param_decl::{RealParam, TuneRange};
use echobench_core::{Channels, FrameScore, StreamInfo};
use std::sync::Arc;

/// The plugin's id in suite files.
const ID: &str = "window-comparator";

/// Longest peak window (decision frame + retrigger) accepted, in samples: 2²⁴
/// entries of 16 bytes are 256 MiB, past any sensible hold time.
const MAX_WINDOW_SAMPLES: usize = 1 << 24;

/// The filter corners' parameters (the chain's pass band).
pub const BAND: BandParams = BandParams {
    low_hz: RealParam {
        name: "dc_block_hz",
        unit: "Hz",
        about: "corner of the first-order DC-blocking high-pass (0 = off; Hz units)",
        min: 0.0,
        max: 1e9,
        default: 1.0,
    },
    high_hz: RealParam {
        name: "low_pass_hz",
        unit: "Hz",
        about: "corner of the optional first-order low-pass (0 = off; Hz units)",
        min: 0.0,
        max: 1e9,
        default: 0.0,
    },
    // 0.06 m/s = a fifth of the slowest walker torso (0.3 m/s), so a first-order
    // high-pass passes a walker with ≤ 2 % loss (1/√(1 + (1/5)²) = 0.981) while blocking
    // DC; it is 0.98 Hz at 2.45 GHz (the 1 Hz coupling corner this chain had before)
    // and 9.7 Hz at 24.125 GHz.
    low_mps: RealParam {
        name: "dc_block_mps",
        unit: "m/s",
        about: "corner of the first-order DC-blocking high-pass as a radial speed (0 = off)",
        min: 0.0,
        max: 100.0,
        default: 0.06,
    },
    high_mps: RealParam {
        name: "low_pass_mps",
        unit: "m/s",
        about: "corner of the optional first-order low-pass as a radial speed (0 = off)",
        min: 0.0,
        max: 100.0,
        default: 0.0,
    },
};

const DECISION_S: RealParam = RealParam {
    name: "decision_s",
    unit: "s",
    about: "length of a decision frame (one score per frame)",
    min: 1e-6,
    max: 3600.0,
    default: 0.05,
};

const RETRIGGER_S: RealParam = RealParam {
    name: "retrigger_s",
    unit: "s",
    about: "hold of the retriggerable one-shot after the last trip",
    min: 0.0,
    max: 3600.0,
    default: 1.0,
};

static PARAMS: [ParamSpec; 7] = [
    // Tunable (`echobench tune`): the frame, the band and the smoothing; never the threshold,
    // which the runner calibrates.
    doppler::BAND_UNITS.spec(),
    BAND.low_mps.spec_tuned(TuneRange::Linear {
        low: 0.02,
        high: 0.3,
    }),
    BAND.high_mps.spec(),
    BAND.low_hz.spec(),
    BAND.high_hz.spec(),
    DECISION_S.spec_tuned(TuneRange::Log {
        low: 0.02,
        high: 0.25,
    }),
    RETRIGGER_S.spec_tuned(TuneRange::Linear {
        low: 0.25,
        high: 3.0,
    }),
];

/// The window-comparator plugin (id `window-comparator`).
pub struct WindowComparatorPlugin;

impl DetectorPlugin for WindowComparatorPlugin {
    fn id(&self) -> &'static str {
        ID
    }

    fn about(&self) -> &'static str {
        "DC block, low-pass, window comparator and retrigger timer: the analog baseline"
    }

    fn params(&self) -> &'static [ParamSpec] {
        &PARAMS
    }

    fn plan(
        &self,
        params: &Params,
        info: &StreamInfo,
    ) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        let config = Config::from_params(params, info)?;
        Ok(PrototypePlan::shared(WindowComparator::new(&config)))
    }

    fn check(&self, params: &Params, info: &StreamInfo) -> Result<(), ParamError> {
        Config::from_params(params, info).map(|_| ())
    }

    fn cost(&self, params: &Params, info: &StreamInfo) -> Option<Cost> {
        let config = Config::from_params(params, info).ok()?;
        let window = config.frame_samples + config.retrigger_samples;
        let sections =
            usize::from(config.dc_block_hz > 0.0) + usize::from(config.low_pass_hz > 0.0);
        // As implemented: the peak deque holds up to F + R (index u64, |y| f64)
        // pairs, each filter 3 coefficients and 2 states (f64), and 4 counters.
        // A firmware with one fixed θ needs none of the deque: the comparator
        // and a countdown timer are the filter states plus a few bytes.
        let state_bytes = window * 16 + sections * 5 * 8 + 4 * 8;
        // Per sample: each first-order section is 2 multiplies + 2 adds; |y| is
        // 1; the deque costs 1 compare to expire the oldest entry and, amortised,
        // at most 2 more (every entry is pushed once and popped at most once).
        let ops_per_sample = (sections * 4) as f64 + 1.0 + 3.0;
        Some(Cost {
            state_bytes,
            ops_per_sample,
        })
    }

    /// The chain's pass band: from the DC block's corner (0 when off) to the
    /// low-pass corner (Nyquist when off). First-order corners are −3 dB
    /// points with 6 dB/octave skirts, not brick walls.
    fn doppler_bands(&self, params: &Params, info: &StreamInfo) -> Vec<DopplerBand> {
        let Ok(config) = Config::from_params(params, info) else {
            return Vec::new();
        };
        let high_hz = if config.low_pass_hz > 0.0 {
            config.low_pass_hz
        } else {
            config.sample_rate_hz / 2.0
        };
        vec![DopplerBand {
            role: BandRole::Motion,
            label: "pass band",
            low_hz: config.dc_block_hz,
            high_hz,
        }]
    }
}

/// Checked parameters, in samples.
#[derive(Debug, Clone, Copy)]
struct Config {
    dc_block_hz: f64,
    low_pass_hz: f64,
    frame_samples: usize,
    retrigger_samples: usize,
    sample_rate_hz: f64,
}

impl Config {
    fn from_params(params: &Params, info: &StreamInfo) -> Result<Config, ParamError> {
        if info.channels != Channels::Real {
            return Err(ParamError::new(
                ID,
                "channels",
                info.channels,
                "the window comparator models a single-channel module: it takes real streams only",
            ));
        }
        let fs = echobench_core::detector::check_sample_rate(ID, info)?;
        let nyquist_hz = fs / 2.0;
        let units = doppler::band_units(ID, params, &doppler::BAND_UNITS, &[&BAND])?;
        let band = doppler::resolve_band(ID, params, info, units, &BAND)?;
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
                    format!("must be below the Nyquist frequency fs/2 = {nyquist_hz} Hz (0 turns it off)"),
                ));
            }
            Ok(hz)
        };
        let dc_block_hz = corner(band.low_name, band.low_hz)?;
        let low_pass_hz = corner(band.high_name, band.high_hz)?;
        if dc_block_hz > 0.0 && low_pass_hz > 0.0 && dc_block_hz >= low_pass_hz {
            return Err(ParamError::new(
                ID,
                &format!("{}, {}", band.low_name, band.high_name),
                format!("{dc_block_hz}, {low_pass_hz}"),
                "the DC block's corner must be below the low-pass corner",
            ));
        }
        let decision_s = DECISION_S.get(params)?;
        let frame = (decision_s * fs).round();
        if !(frame.is_finite() && frame >= 1.0) {
            return Err(ParamError::new(
                ID,
                "decision_s",
                decision_s,
                format!(
                    "a decision frame must hold at least one sample (1/fs = {} s)",
                    1.0 / fs
                ),
            ));
        }
        let retrigger_s = RETRIGGER_S.get(params)?;
        let retrigger = (retrigger_s * fs).round();
        if !(retrigger.is_finite() && retrigger >= 0.0) {
            return Err(ParamError::new(
                ID,
                "retrigger_s",
                retrigger_s,
                "expected a time of 0 s or more",
            ));
        }
        if frame + retrigger > MAX_WINDOW_SAMPLES as f64 {
            return Err(ParamError::new(
                ID,
                "decision_s, retrigger_s",
                format!("{decision_s}, {retrigger_s}"),
                format!(
                    "decision frame + retrigger = {} samples is longer than the {MAX_WINDOW_SAMPLES} supported",
                    frame + retrigger
                ),
            ));
        }
        Ok(Config {
            dc_block_hz,
            low_pass_hz,
            frame_samples: frame as usize,
            retrigger_samples: retrigger as usize,
            sample_rate_hz: fs,
        })
    }
}

/// A first-order section y[n] = b0·x[n] + b1·x[n−1] − a1·y[n−1].
#[derive(Debug, Clone, Copy)]
struct FirstOrder {
    b0: f64,
    b1: f64,
    a1: f64,
    previous_in: f64,
    previous_out: f64,
    primed: bool,
}

impl FirstOrder {
    /// Bilinear transform of s/(s + ωc) (high-pass) or ωc/(s + ωc) (low-pass)
    /// with pre-warping: with K = tan(π fc / fs), H(z) = (1 − z⁻¹)/((1 + K) +
    /// (K − 1) z⁻¹) or K (1 + z⁻¹)/((1 + K) + (K − 1) z⁻¹).
    fn new(corner_hz: f64, sample_rate_hz: f64, high_pass: bool) -> FirstOrder {
        let k = (std::f64::consts::PI * corner_hz / sample_rate_hz).tan();
        let (b0, b1) = if high_pass {
            (1.0 / (1.0 + k), -1.0 / (1.0 + k))
        } else {
            (k / (1.0 + k), k / (1.0 + k))
        };
        FirstOrder {
            b0,
            b1,
            a1: (k - 1.0) / (k + 1.0),
            previous_in: 0.0,
            previous_out: 0.0,
            primed: false,
        }
    }

    fn process(&mut self, x: f64) -> f64 {
        if !self.primed {
            // Steady state for a constant input: y = H(1)·x (0 for the high-pass).
            self.previous_in = x;
            self.previous_out = (self.b0 + self.b1) / (1.0 + self.a1) * x;
            self.primed = true;
        }
        let y = self.b0 * x + self.b1 * self.previous_in - self.a1 * self.previous_out;
        self.previous_in = x;
        self.previous_out = y;
        y
    }

    fn reset(&mut self) {
        self.previous_in = 0.0;
        self.previous_out = 0.0;
        self.primed = false;
    }
}

/// Sliding maximum over the last `capacity` samples: a monotone deque (each
/// entry is larger than every later one), kept in a fixed ring.
#[derive(Debug, Clone)]
struct PeakWindow {
    entries: Vec<(u64, f64)>,
    front: usize,
    len: usize,
}

impl PeakWindow {
    fn new(capacity: usize) -> PeakWindow {
        PeakWindow {
            entries: vec![(0, 0.0); capacity],
            front: 0,
            len: 0,
        }
    }

    /// Ring index `offset` entries after the front (`offset` ≤ capacity).
    fn slot(&self, offset: usize) -> usize {
        // A subtraction, not `%`: this runs several times per sample, and an
        // integer division costs more than the rest of the update.
        let index = self.front + offset;
        if index >= self.entries.len() {
            index - self.entries.len()
        } else {
            index
        }
    }

    /// Adds |y| of sample `index`; forgets samples older than the window.
    fn push(&mut self, index: u64, magnitude: f64) {
        let capacity = self.entries.len() as u64;
        if self.len > 0 && self.entries[self.front].0 + capacity <= index {
            self.front = self.slot(1);
            self.len -= 1;
        }
        while self.len > 0 && self.entries[self.slot(self.len - 1)].1 <= magnitude {
            self.len -= 1;
        }
        let back = self.slot(self.len);
        self.entries[back] = (index, magnitude);
        self.len += 1;
    }

    /// The largest |y| in the window (0 when empty).
    fn peak(&self) -> f64 {
        if self.len == 0 {
            0.0
        } else {
            self.entries[self.front].1
        }
    }

    fn reset(&mut self) {
        self.front = 0;
        self.len = 0;
    }
}

/// A running window comparator.
#[derive(Debug, Clone)]
struct WindowComparator {
    dc_block: Option<FirstOrder>,
    low_pass: Option<FirstOrder>,
    peaks: PeakWindow,
    frame_samples: usize,
    countdown: usize,
    consumed: u64,
}

impl WindowComparator {
    fn new(config: &Config) -> WindowComparator {
        let section =
            |hz: f64, high| (hz > 0.0).then(|| FirstOrder::new(hz, config.sample_rate_hz, high));
        WindowComparator {
            dc_block: section(config.dc_block_hz, true),
            low_pass: section(config.low_pass_hz, false),
            peaks: PeakWindow::new(config.frame_samples + config.retrigger_samples),
            frame_samples: config.frame_samples,
            countdown: config.frame_samples,
            consumed: 0,
        }
    }
}

impl Detector for WindowComparator {
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        let block = block.values();
        for &sample in block {
            let mut y = if sample.is_finite() {
                f64::from(sample)
            } else {
                0.0
            };
            if let Some(section) = &mut self.dc_block {
                y = section.process(y);
            }
            if let Some(section) = &mut self.low_pass {
                y = section.process(y);
            }
            self.peaks.push(self.consumed, y.abs());
            self.consumed += 1;
            self.countdown -= 1;
            if self.countdown == 0 {
                self.countdown = self.frame_samples;
                out.push(FrameScore {
                    end_sample: self.consumed,
                    value: self.peaks.peak(),
                });
            }
        }
        Ok(())
    }

    fn reset(&mut self) {
        for section in [&mut self.dc_block, &mut self.low_pass]
            .into_iter()
            .flatten()
        {
            section.reset();
        }
        self.peaks.reset();
        self.countdown = self.frame_samples;
        self.consumed = 0;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use echobench_core::detector::{check_scores, test_stream, ParamValue};
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;
    use rand_distr::{Distribution, Normal};
    use statrs::distribution::{ContinuousCDF, Normal as StandardNormal};

    fn params(given: &[(&str, f64)]) -> Params {
        let given: Vec<(String, ParamValue)> = given
            .iter()
            .map(|(name, value)| (name.to_string(), ParamValue::Real(*value)))
            .collect();
        Params::resolve(ID, &PARAMS, &given).expect("parameters inside their ranges")
    }

    fn build(given: &[(&str, f64)], fs: f64) -> Box<dyn Detector> {
        WindowComparatorPlugin
            .plan(&params(given), &test_stream(fs))
            .map(|plan| plan.start())
            .expect("valid parameters")
    }

    fn run(detector: &mut dyn Detector, samples: &[f32], block: usize) -> Vec<FrameScore> {
        let mut out = Vec::new();
        for chunk in samples.chunks(block.max(1)) {
            detector.process(Samples::Real(chunk), &mut out).unwrap();
        }
        out
    }

    /// Noise with bursts of a 40 Hz tone on a DC offset: something for every stage.
    fn test_signal(seed: u8, len: usize, fs: f64) -> Vec<f32> {
        let mut rng = ChaCha8Rng::from_seed([seed; 32]);
        let normal = Normal::new(0.0, 0.01).expect("valid sigma");
        (0..len)
            .map(|n| {
                let t = n as f64 / fs;
                let burst = if (n / 3000) % 3 == 1 { 0.05 } else { 0.0 };
                let tone = burst * (std::f64::consts::TAU * 40.0 * t).sin();
                (0.3 + tone + normal.sample(&mut rng)) as f32
            })
            .collect()
    }

    /// |H| of the pre-warped bilinear first-order sections, from H(z) on the
    /// unit circle: (z − 1)/(z + 1) = j·tan(ω/2), so |H_hp| = t/√(t² + K²) and
    /// |H_lp| = K/√(t² + K²), t = tan(π f/fs), K = tan(π fc/fs) (bilinear
    /// transform, Oppenheim & Schafer, Discrete-Time Signal Processing, ch. 7,
    /// from memory).
    fn first_order_gain(f_hz: f64, corner_hz: f64, fs: f64, high_pass: bool) -> f64 {
        let t = (std::f64::consts::PI * f_hz / fs).tan();
        let k = (std::f64::consts::PI * corner_hz / fs).tan();
        (if high_pass { t } else { k }) / (t * t + k * k).sqrt()
    }

    #[test]
    fn a_sine_trips_the_window_only_when_it_reaches_it() {
        // 50 Hz at 2 kHz is 40 samples a period: the largest sample of a period
        // lies within half a step (π·f/fs) of the true peak, so the steady
        // score is in [g·A·cos(π f/fs), g·A], g = the chain's gain at 50 Hz.
        let fs = 2000.0;
        let amplitude = 0.02;
        let f_hz = 50.0;
        let samples: Vec<f32> = (0..20_000)
            .map(|n| {
                (1.5 + amplitude * (std::f64::consts::TAU * f_hz * n as f64 / fs).sin()) as f32
            })
            .collect();
        let given = [
            ("dc_block_hz", 2.0),
            ("low_pass_hz", 100.0),
            ("decision_s", 0.1),
            ("retrigger_s", 0.0),
        ];
        let gain = first_order_gain(f_hz, 2.0, fs, true) * first_order_gain(f_hz, 100.0, fs, false);
        let peak = gain * amplitude;
        let lowest = peak * (std::f64::consts::PI * f_hz / fs).cos();
        let mut detector = build(&given, fs);
        let scores = run(detector.as_mut(), &samples, 20_000);
        // The 2 Hz DC block has settled (τ = 80 ms) well before 3 s; the 1.5 V
        // offset is gone and only the tone is left.
        for s in scores.iter().filter(|s| s.end_sample as f64 / fs > 3.0) {
            let v = s.value;
            assert!(
                v >= lowest * (1.0 - 1e-6) && v <= peak * (1.0 + 1e-6),
                "{v} outside [{lowest}, {peak}]"
            );
            // A window of ±0.9·g·A is left every period; one of ±1.05·g·A never.
            assert!(v >= 0.9 * peak && v < 1.05 * peak);
        }
    }

    #[test]
    fn retrigger_holds_the_output_after_the_last_trip() {
        // An impulse at sample m with the filters off: with a hold of R samples
        // the output is on over [m, m + R], so exactly the frames touching that
        // range score ≥ θ (here θ = 0.5, impulse 1 V, everything else 0).
        let fs = 1000.0;
        let m = 1234;
        let mut samples = vec![0.0_f32; 5000];
        samples[m] = 1.0;
        for (retrigger_s, hold) in [(0.0, 0_usize), (0.25, 250), (0.999, 999)] {
            let given = [
                ("dc_block_hz", 0.0),
                ("low_pass_hz", 0.0),
                ("decision_s", 0.1),
                ("retrigger_s", retrigger_s),
            ];
            let mut detector = build(&given, fs);
            let scores = run(detector.as_mut(), &samples, 97);
            assert_eq!(scores.len(), 50);
            let on: Vec<usize> = (0..scores.len())
                .filter(|&k| scores[k].value >= 0.5)
                .collect();
            let expected: Vec<usize> = (m / 100..=(m + hold) / 100).collect();
            assert_eq!(on, expected, "retrigger {retrigger_s} s");
        }
        // A second trip during the hold extends it (retriggerable): impulses at
        // 1234 and 1400 with R = 250 keep the output on to 1650.
        samples[1400] = 1.0;
        let given = [
            ("dc_block_hz", 0.0),
            ("decision_s", 0.1),
            ("retrigger_s", 0.25),
        ];
        let mut detector = build(&given, fs);
        let scores = run(detector.as_mut(), &samples, 5000);
        let on: Vec<usize> = (0..scores.len())
            .filter(|&k| scores[k].value >= 0.5)
            .collect();
        assert_eq!(on, (12..=16).collect::<Vec<_>>());
    }

    /// The slow, obvious model of the analog chain for one θ: filters, a
    /// comparator on |y| ≥ θ, a retriggerable one-shot counting down R samples.
    fn comparator_model(samples: &[f32], theta: f64, config: &Config) -> Vec<bool> {
        let mut dc_block = FirstOrder::new(config.dc_block_hz, config.sample_rate_hz, true);
        let mut low_pass = FirstOrder::new(config.low_pass_hz, config.sample_rate_hz, false);
        let mut remaining_hold: Option<usize> = None;
        let mut frames = Vec::new();
        let mut frame_on = false;
        for (n, &x) in samples.iter().enumerate() {
            let y = low_pass.process(dc_block.process(f64::from(x)));
            if y >= theta || y <= -theta {
                remaining_hold = Some(config.retrigger_samples);
            } else if let Some(left) = remaining_hold {
                remaining_hold = left.checked_sub(1);
            }
            frame_on |= remaining_hold.is_some();
            if (n + 1) % config.frame_samples == 0 {
                frames.push(frame_on);
                frame_on = false;
            }
        }
        frames
    }

    #[test]
    fn sweeping_a_threshold_on_the_score_is_the_comparator() {
        let fs = 2000.0;
        let samples = test_signal(5, 40_000, fs);
        for (decision_s, retrigger_s) in [(0.05, 0.3), (0.01, 0.0), (0.1, 0.0125)] {
            let given = [
                ("dc_block_hz", 1.0),
                ("low_pass_hz", 150.0),
                ("decision_s", decision_s),
                ("retrigger_s", retrigger_s),
            ];
            let config = Config::from_params(&params(&given), &test_stream(fs)).expect("valid");
            let scores = run(build(&given, fs).as_mut(), &samples, 1000);
            for theta in [0.0, 0.01, 0.02, 0.03, 0.045, 0.06, 0.08] {
                let model = comparator_model(&samples, theta, &config);
                let swept: Vec<bool> = scores.iter().map(|s| s.value >= theta).collect();
                assert_eq!(
                    swept, model,
                    "θ = {theta}, frame {decision_s} s, hold {retrigger_s} s"
                );
            }
            // The thresholds above cut through the data, not past it.
            let on = scores.iter().filter(|s| s.value >= 0.045).count();
            assert!(on > 0 && on < scores.len(), "{on} of {}", scores.len());
        }
    }

    #[test]
    fn scores_do_not_depend_on_block_size() {
        let fs = 2000.0;
        let samples = test_signal(9, 30_001, fs);
        let given = [
            ("low_pass_hz", 200.0),
            ("decision_s", 0.037),
            ("retrigger_s", 0.41),
        ];
        let mut detector = build(&given, fs);
        let whole = run(detector.as_mut(), &samples, samples.len());
        assert!(check_scores(&whole).is_ok());
        assert_eq!(whole.len(), 30_001 / 74);
        for block in [1, 7, 256] {
            assert_eq!(
                run(build(&given, fs).as_mut(), &samples, block),
                whole,
                "block {block}"
            );
        }
        detector.reset();
        assert_eq!(run(detector.as_mut(), &samples, 4096), whole, "after reset");
    }

    #[test]
    fn refuses_bad_parameters_naming_them() {
        let fs = 1000.0;
        let refused = |given: &[(&str, f64)], info: StreamInfo| {
            WindowComparatorPlugin
                .plan(&params(given), &info)
                .map(|plan| plan.start())
                .err()
                .expect("refused")
                .param
        };
        let real = test_stream(fs);
        assert_eq!(refused(&[("dc_block_hz", 500.0)], real), "dc_block_hz");
        assert_eq!(refused(&[("low_pass_hz", 700.0)], real), "low_pass_hz");
        assert_eq!(
            refused(&[("dc_block_hz", 50.0), ("low_pass_hz", 20.0)], real),
            "dc_block_hz, low_pass_hz"
        );
        assert_eq!(refused(&[("decision_s", 1e-4)], real), "decision_s");
        assert_eq!(
            refused(
                &[("retrigger_s", 3600.0), ("decision_s", 3600.0)],
                test_stream(4000.0)
            ),
            "decision_s, retrigger_s"
        );
        let iq = StreamInfo {
            channels: Channels::Iq,
            ..real
        };
        assert_eq!(refused(&[], iq), "channels");
        assert_eq!(refused(&[], test_stream(0.0)), "sample_rate_hz");
        assert!(WindowComparatorPlugin.check(&params(&[]), &iq).is_err());
        // Out-of-range values never reach build: the table's ranges refuse them.
        let negative = Params::resolve(
            ID,
            &PARAMS,
            &[("retrigger_s".to_string(), ParamValue::Real(-1.0))],
        );
        assert!(negative.is_err());
    }

    #[test]
    fn silence_clipping_nan_and_a_single_sample_behave() {
        let fs = 1000.0;
        let given = [
            ("low_pass_hz", 100.0),
            ("decision_s", 0.1),
            ("retrigger_s", 0.2),
        ];
        let silent = run(build(&given, fs).as_mut(), &[0.0; 1000], 1000);
        assert_eq!(silent.len(), 10);
        assert!(silent.iter().all(|s| s.value == 0.0));
        // Clipping at full scale: a ±0.1 V square wave (filters off) peaks at 0.1.
        let square: Vec<f32> = (0..1000)
            .map(|i| if (i / 5) % 2 == 0 { 0.1 } else { -0.1 })
            .collect();
        let flat = [("dc_block_hz", 0.0), ("decision_s", 0.1)];
        for s in run(build(&flat, fs).as_mut(), &square, 33) {
            assert_eq!(s.value, f64::from(0.1_f32));
        }
        // NaN and ±inf count as 0.
        let mut rng = ChaCha8Rng::from_seed([4; 32]);
        let clean: Vec<f32> = (0..2000).map(|_| rng.random_range(-0.05..0.05)).collect();
        let (mut zeroed, mut poisoned) = (clean.clone(), clean.clone());
        for (k, bad) in [
            (0, f32::NAN),
            (700, f32::INFINITY),
            (1999, f32::NEG_INFINITY),
        ] {
            zeroed[k] = 0.0;
            poisoned[k] = bad;
        }
        let from_poisoned = run(build(&given, fs).as_mut(), &poisoned, 13);
        assert!(check_scores(&from_poisoned).is_ok());
        assert_eq!(from_poisoned, run(build(&given, fs).as_mut(), &zeroed, 13));
        // One sample: no complete frame of 100; a frame of one sample scores it.
        assert!(run(build(&given, fs).as_mut(), &[0.5], 1).is_empty());
        let one = [
            ("dc_block_hz", 0.0),
            ("decision_s", 0.001),
            ("retrigger_s", 0.0),
        ];
        assert_eq!(
            run(build(&one, fs).as_mut(), &[-0.5], 1),
            vec![FrameScore {
                end_sample: 1,
                value: 0.5
            }]
        );
    }

    #[test]
    fn white_noise_trips_with_the_gaussian_tail_probability() {
        // Filters off, no hold, white Gaussian noise: a sample trips with
        // p = 2Q(θ/σ) and a frame of F independent samples with
        // 1 − (1 − p)^F (Gaussian tail, e.g. Kay 1998 Vol. II ch. 2). Choose θ
        // for a frame Pfa of 1e-3 with F = 16, via statrs' normal quantile.
        let (sigma, frame, frames) = (0.01, 16_usize, 1_000_000_usize);
        let pfa: f64 = 1e-3;
        let per_sample = 1.0 - (1.0 - pfa).powf(1.0 / frame as f64);
        let standard = StandardNormal::new(0.0, 1.0).expect("standard normal");
        let theta = sigma * standard.inverse_cdf(1.0 - per_sample / 2.0);
        let fs = 1000.0;
        let given = [
            ("dc_block_hz", 0.0),
            ("decision_s", 0.016),
            ("retrigger_s", 0.0),
        ];
        let mut detector = build(&given, fs);
        let mut rng = ChaCha8Rng::from_seed([21; 32]);
        let normal = Normal::new(0.0, sigma).expect("valid sigma");
        let mut block = vec![0.0_f32; 16 * 512];
        let mut out = Vec::with_capacity(512);
        let (mut alarms, mut seen) = (0_usize, 0_usize);
        while seen < frames {
            for x in &mut block {
                *x = normal.sample(&mut rng) as f32;
            }
            detector.process(Samples::Real(&block), &mut out).unwrap();
            seen += out.len();
            alarms += out.iter().filter(|s| s.value >= theta).count();
            out.clear();
        }
        let measured = alarms as f64 / seen as f64;
        let half_width = 4.5 * (pfa * (1.0 - pfa) / seen as f64).sqrt();
        assert!(
            (measured - pfa).abs() <= half_width,
            "{measured} vs {pfa} ± {half_width}"
        );
    }

    #[test]
    fn cost_grows_with_the_window() {
        let info = test_stream(2000.0);
        let short = WindowComparatorPlugin
            .cost(&params(&[("retrigger_s", 0.0)]), &info)
            .expect("valid");
        let long = WindowComparatorPlugin
            .cost(&params(&[("retrigger_s", 1.0)]), &info)
            .expect("valid");
        // 1 s more hold at 2 kHz is 2000 more deque entries of 16 bytes.
        assert_eq!(long.state_bytes - short.state_bytes, 2000 * 16);
        assert!(short.ops_per_sample > 0.0);
    }
}

// The contract every detector keeps (block splits, reset, silence, clipping, NaN,
// a single sample, time order), checked by core's conformance kit.
#[cfg(test)]
mod conformance_tests {
    use super::*;
    use echobench_core::conformance;
    use echobench_core::detector::{test_stream, DetectorPlugin, Params};

    #[test]
    fn keeps_the_detector_contract_with_its_defaults() {
        let params = Params::defaults(WindowComparatorPlugin.params());
        conformance::assert_conforms(&WindowComparatorPlugin, &params, &test_stream(2000.0));
    }
}
