//! An example of a team's own detector, kept outside echobench's workspace: the energy of
//! the IF signal above a speed gate.
//!
//! **What it detects.** A target moving at radial speed v makes a Doppler tone at
//! f = 2 v / λ (the CW Doppler relation; docs/reference in echobench). A first-order
//! high-pass at the Doppler of `min_speed_mps` removes the mixer's DC and the slow drift
//! below it; the score of a frame of `frame_s` seconds is the mean square of what passes,
//! in dB re 1 V². The high-pass is the discrete RC section y[n] = a (y[n−1] + x[n] − x[n−1])
//! with a = RC / (RC + Δt), RC = 1 / (2π f_c) (common practice: the backward-difference
//! form of an RC high-pass).
//!
//! **Key design decision: the gate is a speed, not a frequency.** The same parameters mean
//! the same thing on a 2.45 GHz and a 24 GHz module: the corner follows the carrier.
//!
//! Real streams only; a non-finite sample counts as 0; one score per frame.
#![deny(missing_docs)]

use echobench_core::detector::{
    Cost, Detector, DetectorFailure, DetectorPlan, DetectorPlugin, FrameScore, ParamError,
    ParamSpec, Params, PrototypePlan, Samples,
};
use echobench_core::param_decl::RealParam;
use echobench_core::{Channels, StreamInfo};
use std::sync::Arc;

const ID: &str = "gated-energy";

/// Speed of light in vacuum, m/s (SI definition).
const SPEED_OF_LIGHT_MPS: f64 = 299_792_458.0;

const MIN_SPEED_MPS: RealParam = RealParam {
    name: "min_speed_mps",
    unit: "m/s",
    about: "radial speed whose Doppler sets the high-pass corner",
    min: 0.02,
    max: 5.0,
    default: 0.3,
};

const FRAME_S: RealParam = RealParam {
    name: "frame_s",
    unit: "s",
    about: "length of a frame (one score per frame)",
    min: 0.01,
    max: 10.0,
    default: 0.25,
};

static PARAMS: [ParamSpec; 2] = [MIN_SPEED_MPS.spec(), FRAME_S.spec()];

/// The plugin a team adds to echobench's list (id `gated-energy`).
pub struct GatedEnergyPlugin;

impl DetectorPlugin for GatedEnergyPlugin {
    fn id(&self) -> &'static str {
        ID
    }

    fn about(&self) -> &'static str {
        "mean square above a speed gate (one-pole high-pass at the gate's Doppler), dB"
    }

    fn params(&self) -> &'static [ParamSpec] {
        &PARAMS
    }

    fn plan(
        &self,
        params: &Params,
        info: &StreamInfo,
    ) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        Ok(PrototypePlan::shared(GatedEnergy::new(
            Config::from_params(params, info)?,
        )))
    }

    fn check(&self, params: &Params, info: &StreamInfo) -> Result<(), ParamError> {
        Config::from_params(params, info).map(|_| ())
    }

    fn cost(&self, params: &Params, info: &StreamInfo) -> Option<Cost> {
        let config = Config::from_params(params, info).ok()?;
        Some(Cost {
            // Previous input, previous output, running sum (f32 on an MCU) and a counter.
            state_bytes: 4 * 4,
            // Per sample: 2 adds and 1 multiply for the section, 1 multiply-add for the
            // square; per frame one divide and a logarithm, spread over the frame.
            ops_per_sample: 5.0 + 20.0 / config.frame_samples as f64,
        })
    }
}

/// Checked parameters.
#[derive(Debug, Clone, Copy)]
struct Config {
    /// The high-pass coefficient a = RC / (RC + Δt).
    coefficient: f64,
    /// Samples per frame (at least 1).
    frame_samples: usize,
}

impl Config {
    fn from_params(params: &Params, info: &StreamInfo) -> Result<Config, ParamError> {
        if info.channels != Channels::Real {
            return Err(ParamError::new(
                ID,
                "channels",
                info.channels,
                "takes real (single-channel) streams only",
            ));
        }
        let fs = echobench_core::detector::check_sample_rate(ID, info)?;
        let min_speed_mps = MIN_SPEED_MPS.get(params)?;
        let corner_hz = 2.0 * min_speed_mps * info.carrier_hz / SPEED_OF_LIGHT_MPS;
        if !(corner_hz.is_finite() && corner_hz > 0.0 && corner_hz < fs / 2.0) {
            return Err(ParamError::new(
                ID,
                MIN_SPEED_MPS.name,
                min_speed_mps,
                format!(
                    "its Doppler ({corner_hz:.1} Hz at this carrier) must lie below Nyquist ({} Hz)",
                    fs / 2.0
                ),
            ));
        }
        let frame_s = FRAME_S.get(params)?;
        let frame_samples = (frame_s * fs).round();
        if frame_samples < 1.0 {
            return Err(ParamError::new(
                ID,
                FRAME_S.name,
                frame_s,
                "a frame must hold at least one sample",
            ));
        }
        let rc_s = 1.0 / (2.0 * std::f64::consts::PI * corner_hz);
        Ok(Config {
            coefficient: rc_s / (rc_s + 1.0 / fs),
            frame_samples: frame_samples as usize,
        })
    }
}

/// The running detector.
#[derive(Debug, Clone)]
struct GatedEnergy {
    config: Config,
    previous_input: f64,
    previous_output: f64,
    sum_square: f64,
    in_frame: usize,
    consumed: u64,
}

impl GatedEnergy {
    fn new(config: Config) -> GatedEnergy {
        GatedEnergy {
            config,
            previous_input: 0.0,
            previous_output: 0.0,
            sum_square: 0.0,
            in_frame: 0,
            consumed: 0,
        }
    }
}

impl Detector for GatedEnergy {
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        let block = block.values();
        for &sample in block {
            let x = if sample.is_finite() {
                f64::from(sample)
            } else {
                0.0
            };
            // The first sample starts the section from rest at its own level, so the DC the
            // mixer puts out does not ring through as a false step.
            if self.consumed == 0 {
                self.previous_input = x;
            }
            let y = self.config.coefficient * (self.previous_output + x - self.previous_input);
            self.previous_input = x;
            self.previous_output = y;
            self.sum_square += y * y;
            self.in_frame += 1;
            self.consumed += 1;
            if self.in_frame == self.config.frame_samples {
                let mean_square_v2 = self.sum_square / self.in_frame as f64;
                out.push(FrameScore {
                    end_sample: self.consumed,
                    value: 10.0 * (mean_square_v2 + 1e-30).log10(),
                });
                self.sum_square = 0.0;
                self.in_frame = 0;
            }
        }
        Ok(())
    }

    fn reset(&mut self) {
        *self = GatedEnergy::new(self.config);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use echobench_core::detector::test_stream;

    fn scores(samples: &[f32], block: usize) -> Vec<FrameScore> {
        let info = test_stream(2000.0);
        let params = Params::defaults(&PARAMS);
        let mut detector = GatedEnergyPlugin
            .plan(&params, &info)
            .map(|plan| plan.start())
            .expect("defaults fit");
        let mut out = Vec::new();
        for chunk in samples.chunks(block) {
            detector
                .process(Samples::Real(chunk), &mut out)
                .expect("no failure");
        }
        out
    }

    #[test]
    fn a_tone_above_the_gate_passes_and_dc_does_not() {
        // 24.125 GHz, 0.3 m/s: corner 2 v f_c / c = 48.3 Hz. A 1 V tone at 400 Hz (about
        // 2.5 m/s) passes with the section's gain |H(e^jw)| = a |1 - e^-jw| / |1 - a e^-jw|
        // (its transfer function a (1 - z^-1) / (1 - a z^-1) on the unit circle), so the
        // frame's mean square is |H|^2 / 2.
        let fs = 2000.0;
        let corner_hz = 2.0 * 0.3 * 24.125e9 / SPEED_OF_LIGHT_MPS;
        let rc_s = 1.0 / (2.0 * std::f64::consts::PI * corner_hz);
        let a = rc_s / (rc_s + 1.0 / fs);
        let w = 2.0 * std::f64::consts::PI * 400.0 / fs;
        let gain = a * 2.0 * (w / 2.0).sin() / (1.0 - 2.0 * a * w.cos() + a * a).sqrt();
        let expected_db = 10.0 * (gain * gain / 2.0).log10();
        let tone: Vec<f32> = (0..4000).map(|n| (w * n as f64).sin() as f32).collect();
        let last = scores(&tone, 97).last().copied().expect("frames");
        assert!(
            (last.value - expected_db).abs() < 0.02,
            "{last:?} vs {expected_db}"
        );
        let offset = scores(&[1.2; 4000], 4000);
        assert!(offset.iter().all(|s| s.value < -250.0), "{offset:?}");
    }

    #[test]
    fn any_block_split_gives_the_same_scores() {
        let noise: Vec<f32> = (0..3001u32)
            .map(|n| ((n.wrapping_mul(2_654_435_761) >> 8) as f32 / 16_777_216.0) - 0.5)
            .collect();
        let whole = scores(&noise, noise.len());
        assert_eq!(whole, scores(&noise, 1));
        assert_eq!(whole, scores(&noise, 7));
    }
}
