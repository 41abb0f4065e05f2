//! Template detector: the peak amplitude of each frame after removing the frame's mean.
//!
//! **Copy this crate to add a detector** (see `ADDING-A-DETECTOR.md` beside
//! `Cargo.toml`). It is deliberately small but real: every part a detector
//! needs is here once, with a comment on every line.
//!
//! **What it detects.** Anything that makes the IF signal swing: the score of
//! a frame of `frame_s` seconds is `max |x[n] − mean(frame)|`, in volts. The
//! mean is the frame's DC (the mixer's offset), so a steady offset scores 0
//! and a walker's Doppler tone scores its amplitude. It is the digital twin
//! of a peak detector after a coupling capacitor (common practice).
//!
//! **The one design decision: no sample buffer.** max |x − m| over a frame
//! equals max(max x − m, m − min x), so the detector keeps only a running
//! sum, minimum and maximum, 40 bytes whatever the frame length.
//!
//! **Parameters.** `frame_s`: frame length in seconds (frames back to back).
//!
//! **Nominal Pfa.** None in closed form (the mean is estimated from the same
//! frame); the harness calibrates thresholds on noise-only runs.
//!
//! **Input rules.** Real streams only (I/Q refused, parameter `channels`). A
//! non-finite sample (NaN, ±∞) counts as 0. Silence scores 0. One score per
//! frame, its `end_sample` the index one past the frame's last sample.

// Every public item must have a doc comment: the build fails otherwise.
#![deny(missing_docs)]

// The plugin interface and the parameter machinery, from the core crate.
use echobench_core::detector::{
    Cost, Detector, DetectorFailure, DetectorPlan, DetectorPlugin, ParamError, ParamSpec, Params,
    PrototypePlan, Samples,
};
use std::sync::Arc;
// The typed parameter declarations: one `const` per parameter.
use echobench_core::param_decl::RealParam;
// The stream description, the score type and the channel kinds.
use echobench_core::{Channels, FrameScore, StreamInfo};

/// The id that suite files use to pick this detector (kebab-case).
const ID: &str = "template";

// Each parameter is declared once, as a `const`: its name, unit, range and
// default live here and nowhere else. `FRAME_S.spec()` is its entry in the
// table below, and `FRAME_S.get(params)` reads the checked value back as an f64.
/// `frame_s`: how long a frame is.
const FRAME_S: RealParam = RealParam {
    // The name carries its unit as a suffix (`_s` = seconds).
    name: "frame_s",
    // The unit again, for listings.
    unit: "s",
    // One line saying what it does.
    about: "length of a frame (one score per frame)",
    // 0.1 ms: shorter frames make no sense at any IF sample rate.
    // `Params::resolve` refuses values outside [min, max].
    min: 1e-4,
    // One minute: longer would be a trial, not a frame.
    max: 60.0,
    // 0.1 s: ten decisions a second, the pace of a motion sensor.
    default: 0.1,
};

// The parameter table: `static` so that `echobench detectors` can list it
// without building anything. One `spec()` per declared parameter.
static PARAMS: [ParamSpec; 1] = [FRAME_S.spec()];

/// The template detector's plugin (id `template`): what the registry lists.
pub struct TemplatePlugin;

// The plugin trait: identity, parameters, and how to plan and cost a detector.
impl DetectorPlugin for TemplatePlugin {
    // The id used in suite files.
    fn id(&self) -> &'static str {
        // Defined once above so tests and code agree.
        ID
    }

    // One line for `echobench detectors`.
    fn about(&self) -> &'static str {
        // Say what it measures, in the trade's words.
        "peak amplitude per frame after removing the frame's mean (the crate to copy)"
    }

    // The parameter table.
    fn params(&self) -> &'static [ParamSpec] {
        // A reference to the static table above.
        &PARAMS
    }

    // Checks the parameters against the stream and plans the detector: made
    // once per stream shape and shared by every worker thread, which starts
    // its own state from it and resets that state between trials.
    fn plan(
        &self,
        params: &Params,
        info: &StreamInfo,
    ) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        // All checks live in one place, shared with `check` and `cost`.
        let config = Config::from_params(params, info)?;
        // The plan keeps one fresh detector and starts clones of it. A
        // detector with costly parts that never change (an FFT plan, a
        // window, a table) makes them here, in `new`, behind an `Arc`, so
        // the clones share them (see `echobench-detector-dsp`'s spectra).
        Ok(PrototypePlan::shared(TemplateDetector::new(config)))
    }

    // The refusals `plan` would give, without planning: the suite loader
    // calls this for every stream of a suite before any trial runs.
    fn check(&self, params: &Params, info: &StreamInfo) -> Result<(), ParamError> {
        // The same checks as `plan`, in the one place they live.
        Config::from_params(params, info).map(|_| ())
    }

    // What a port to a small MCU would cost; `None` would mean "not declared".
    fn cost(&self, params: &Params, info: &StreamInfo) -> Option<Cost> {
        // Parameters that do not fit the stream have no cost (`check` says why).
        let config = Config::from_params(params, info).ok()?;
        // The declared cost.
        Some(Cost {
            // State: sum, minimum, maximum (f64) and two counters (u64) = 5 × 8 bytes.
            state_bytes: 5 * 8,
            // Per sample: 1 add and 2 compares; per frame: 1 divide, 2
            // subtractions and 1 compare, spread over the frame's samples.
            ops_per_sample: 3.0 + 4.0 / config.frame_samples as f64,
        })
    }
}

/// Checked parameters: what `plan`, `check` and `cost` agree on.
#[derive(Debug, Clone, Copy)]
struct Config {
    // Frame length converted to whole samples (at least 1). No sample rate:
    // scores carry sample indices, which the harness turns into seconds.
    frame_samples: usize,
}

// Turning user parameters into a checked configuration.
impl Config {
    // Every refusal names the parameter, the value and what would be accepted.
    fn from_params(params: &Params, info: &StreamInfo) -> Result<Config, ParamError> {
        // This detector has no meaning for interleaved I/Q: refuse it clearly.
        if info.channels != Channels::Real {
            // The "parameter" is the stream's channel layout.
            return Err(ParamError::new(
                // Which detector complains.
                ID,
                // Which parameter.
                "channels",
                // The value given.
                info.channels,
                // What would work.
                "takes real (single-channel) streams only",
            ));
        }
        // The sample rate comes from the stream; never trust it to be sane.
        let sample_rate_hz = info.sample_rate_hz;
        // NaN, zero or negative rates would make nonsense frame lengths.
        if !(sample_rate_hz.is_finite() && sample_rate_hz > 0.0) {
            // Refuse instead of panicking later.
            return Err(ParamError::new(
                ID,
                "sample_rate_hz",
                sample_rate_hz,
                "the stream's sample rate must be a positive number",
            ));
        }
        // The range check was done by `Params::resolve`; read the value through
        // its declaration (an error, never a panic, if it were missing from the table).
        let frame_s = FRAME_S.get(params)?;
        // Seconds to whole samples, rounded to the nearest.
        let frame_samples = (frame_s * sample_rate_hz).round();
        // A relation between a parameter and the stream: at least one sample.
        if frame_samples < 1.0 {
            // Tell the user the shortest frame that would work.
            return Err(ParamError::new(
                ID,
                FRAME_S.name,
                frame_s,
                format!(
                    "a frame must hold at least one sample: 1/fs = {} s",
                    1.0 / sample_rate_hz
                ),
            ));
        }
        // All checks passed.
        Ok(Config {
            // At least 1, checked just above (and finite: fs and frame_s are).
            frame_samples: frame_samples as usize,
        })
    }
}

/// A running template detector: the state for one stream. `Clone`, because
/// the plan starts each state as a clone of a fresh one.
#[derive(Debug, Clone)]
struct TemplateDetector {
    // The checked parameters.
    config: Config,
    // Sum of the current frame's samples so far (for its mean).
    sum: f64,
    // Smallest sample of the current frame so far.
    min: f64,
    // Largest sample of the current frame so far.
    max: f64,
    // Samples in the current frame so far.
    in_frame: usize,
    // Samples since the start of the stream (each score's `end_sample`).
    consumed: u64,
}

// Construction and the start of a frame.
impl TemplateDetector {
    // A detector at the start of a stream.
    fn new(config: Config) -> TemplateDetector {
        // Every counter at zero, the extremes ready for the first sample.
        TemplateDetector {
            // The parameters.
            config,
            // No samples summed yet.
            sum: 0.0,
            // +∞ so that the first sample becomes the minimum.
            min: f64::INFINITY,
            // −∞ so that the first sample becomes the maximum.
            max: f64::NEG_INFINITY,
            // The first frame is empty.
            in_frame: 0,
            // Nothing consumed.
            consumed: 0,
        }
    }

    // Forgets the current frame (after scoring it).
    fn start_frame(&mut self) {
        // Empty sum.
        self.sum = 0.0;
        // Extremes ready for the next sample.
        self.min = f64::INFINITY;
        // Same for the maximum.
        self.max = f64::NEG_INFINITY;
        // No samples in the new frame.
        self.in_frame = 0;
    }
}

// The detector trait: what the harness calls for every block of samples.
impl Detector for TemplateDetector {
    // Any block length works, and the scores do not depend on it, because all
    // state lives in `self` and is updated one sample at a time.
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        // The block's samples: `plan` refused I/Q streams, so these are real
        // (`values()` would interleave I, Q; `match block` tells them apart).
        let block = block.values();
        // One sample at a time.
        for &sample in block {
            // The documented NaN rule: a non-finite sample counts as 0.
            let x = if sample.is_finite() {
                // Work in f64 so sums over long frames keep their precision.
                f64::from(sample)
            } else {
                // NaN or ±∞ becomes silence.
                0.0
            };
            // Accumulate the frame's sum.
            self.sum += x;
            // Track the frame's minimum.
            self.min = self.min.min(x);
            // Track the frame's maximum.
            self.max = self.max.max(x);
            // One more sample in the frame.
            self.in_frame += 1;
            // One more sample in the stream.
            self.consumed += 1;
            // Frame complete?
            if self.in_frame == self.config.frame_samples {
                // The frame's DC.
                let mean = self.sum / self.in_frame as f64;
                // The larger excursion from the mean, up or down.
                let peak_v = (self.max - mean).max(mean - self.min);
                // One score per frame, stamped at the end of the frame.
                out.push(FrameScore {
                    // Index one past the frame's last sample (the harness makes it seconds).
                    end_sample: self.consumed,
                    // Rounding can leave −1e-17 for a flat frame: clamp at 0.
                    value: peak_v.max(0.0),
                });
                // Begin the next frame.
                self.start_frame();
            }
        }
        // Never a failure: every input, NaN included, has a defined score
        // (an error is for a detector that can go on no longer, such as an
        // external program that crashed).
        Ok(())
    }

    // Back to the state the plan starts: the runner calls this between trials.
    fn reset(&mut self) {
        // Same as new, with the same parameters.
        *self = TemplateDetector::new(self.config);
    }
}

// The tests double as examples of the contract every detector meets.
#[cfg(test)]
mod tests {
    // Everything from the crate above.
    use super::*;
    // The conformance kit: every rule of the detector contract in one call.
    use echobench_core::conformance;
    // Test helpers from core: score checks, a test stream, parameter values.
    use echobench_core::detector::{check_scores, test_stream, ParamValue};

    // Plans a detector with some parameters given by name and starts a state.
    fn build(frame_s: f64, info: &StreamInfo) -> Result<Box<dyn Detector>, ParamError> {
        // The suite would give (name, value) pairs like this.
        let given = [("frame_s".to_string(), ParamValue::Real(frame_s))];
        // Fill defaults and check ranges, as the harness does.
        let params = Params::resolve(ID, &PARAMS, &given)?;
        // Then plan, and start one state from the plan.
        Ok(TemplatePlugin.plan(&params, info)?.start())
    }

    // Feeds `samples` in blocks of `block` and collects the scores.
    fn run(detector: &mut dyn Detector, samples: &[f32], block: usize) -> Vec<FrameScore> {
        // The caller owns the output buffer.
        let mut out = Vec::new();
        // Split the stream into blocks.
        for chunk in samples.chunks(block) {
            // Push each block, typed as real samples; an in-process detector
            // never returns a failure.
            detector
                .process(Samples::Real(chunk), &mut out)
                .expect("no failure");
        }
        // All scores, in time order.
        out
    }

    // The whole contract in one line: core's conformance kit feeds the
    // detector blocks of 1, 7 and odd sizes, resets it after other input,
    // and gives it silence, full-scale clipping, NaN and a single sample.
    #[test]
    fn keeps_the_detector_contract() {
        // The defaults, as a suite that names only the id would use them.
        let params = Params::defaults(&PARAMS);
        // Panics with every broken rule named; add I/Q streams if you take them.
        conformance::assert_conforms(&TemplatePlugin, &params, &test_stream(2000.0));
    }

    // Known answer: a ±a square wave on a DC offset d scores exactly a.
    #[test]
    fn removes_the_offset_and_measures_the_swing() {
        // Offset 1.25 V, swing 0.25 V: both exact in binary, so no rounding.
        let square: Vec<f32> = (0..1000)
            .map(|n| if n % 2 == 0 { 1.5 } else { 1.0 })
            .collect();
        // Frames of 100 samples at 1 kHz hold 50 periods, mean exactly 1.25.
        let scores = run(
            build(0.1, &test_stream(1000.0)).expect("valid").as_mut(),
            &square,
            64,
        );
        // Ten frames.
        assert_eq!(scores.len(), 10);
        // Each scores the swing, not the offset.
        assert!(scores.iter().all(|s| s.value == 0.25));
        // The first frame ends at sample 100 (index one past its last sample).
        assert_eq!(scores[0].end_sample, 100);
    }

    // Contract: bad parameters are refused with an error naming them.
    #[test]
    fn refuses_bad_parameters() {
        // A frame shorter than one sample at 1 kHz.
        let short = build(1e-4, &test_stream(1000.0)).err().expect("refused");
        // The error names the parameter.
        assert_eq!(short.param, "frame_s");
        // Out of the declared range: refused by Params::resolve.
        assert_eq!(
            build(-1.0, &test_stream(1000.0))
                .err()
                .expect("refused")
                .param,
            "frame_s"
        );
        // An I/Q stream: refused, naming the channels.
        let iq = StreamInfo {
            channels: Channels::Iq,
            ..test_stream(1000.0)
        };
        // The error names "channels".
        assert_eq!(build(0.1, &iq).err().expect("refused").param, "channels");
        // A zero sample rate: refused, not a division by zero.
        assert!(build(0.1, &test_stream(0.0)).is_err());
    }

    // Contract: NaN, silence, clipping and a single sample behave.
    #[test]
    fn nan_silence_clipping_and_one_sample() {
        // A 1 kHz stream.
        let info = test_stream(1000.0);
        // Silence scores 0, never NaN.
        let silent = run(build(0.1, &info).expect("valid").as_mut(), &[0.0; 500], 500);
        // Five frames of zeros.
        assert!(silent.len() == 5 && silent.iter().all(|s| s.value == 0.0));
        // A NaN counts as 0: same scores as the stream with a 0 there.
        let mut with_nan = vec![0.25_f32; 200];
        // One NaN and one infinity.
        with_nan[3] = f32::NAN;
        // Infinity too.
        with_nan[150] = f32::INFINITY;
        // The same stream with zeros instead.
        let mut with_zero = vec![0.25_f32; 200];
        // Zero where the NaN was.
        with_zero[3] = 0.0;
        // Zero where the infinity was.
        with_zero[150] = 0.0;
        // Run both.
        let nan_scores = run(build(0.1, &info).expect("valid").as_mut(), &with_nan, 200);
        // Identical results.
        assert_eq!(
            nan_scores,
            run(build(0.1, &info).expect("valid").as_mut(), &with_zero, 200)
        );
        // And finite.
        assert!(check_scores(&nan_scores).is_ok());
        // Full-scale clipping (±0.1 V every other sample) is just a big swing.
        let clipped: Vec<f32> = (0..100)
            .map(|n| if n % 2 == 0 { 0.1 } else { -0.1 })
            .collect();
        // One frame of 100 samples.
        let scores = run(build(0.1, &info).expect("valid").as_mut(), &clipped, 100);
        // Its swing is 0.1 V (up to f32 rounding of 0.1).
        assert!((scores[0].value - 0.1).abs() < 1e-8);
        // A single sample: not a whole frame yet, so no score.
        assert!(run(build(0.1, &info).expect("valid").as_mut(), &[1.0], 1).is_empty());
        // A one-sample frame scores 0: the sample is its own mean.
        let one = run(build(0.001, &info).expect("valid").as_mut(), &[1.0], 1);
        // One score of 0, for the frame ending at sample 1 (1 ms).
        assert_eq!(
            one,
            vec![FrameScore {
                end_sample: 1,
                value: 0.0
            }]
        );
    }
}
