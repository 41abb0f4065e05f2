//! Energy detector in firmware C: the worked example of bringing a team's C code in.
//!
//! **What it is.** The `energy` detector's raw mode (the mean of x² over
//! frames of `frame_len` samples every `hop` samples, no band limit, no
//! floor: the square-law energy statistic of Urkowitz 1967) written the way
//! firmware is written, in `c/energy.c` and `c/energy.h`: C99,
//! single-precision `float` as on an MCU with a single-precision FPU, one
//! fixed-size state struct, no `malloc`, no library calls. `build.rs`
//! compiles it with the `cc` crate; this crate wraps it in the
//! [`Detector`] trait through `extern "C"` calls, so the harness scores the
//! firmware's own arithmetic next to every Rust detector.
//!
//! **The one design decision: the host owns an opaque state.** Rust never
//! mirrors the C struct. It asks the C code for `energy_state_size()` and
//! `energy_state_align()` and allocates that many bytes once per state (the plan's fresh state, copied),
//! exactly as firmware would reserve a `static energy_state`, then passes
//! the pointer to `energy_init`, `energy_push` (one call per sample) and
//! `energy_reset`. A team can therefore change the struct, or the whole C
//! file, without touching a line of Rust, as long as those functions keep
//! their signatures.
//!
//! **Agreement with the Rust detector.** Same frames, same time stamps, and
//! scores within 1e-5 relative of `energy` with `normalise: none` (tested on
//! random input and on the reference-pipeline fixture). The difference is
//! single against double precision: each float square and addition rounds
//! with relative error ≤ u = 2⁻²⁴ ≈ 6e-8, so a recursive float sum of N
//! positive terms plus the final division is off by at most (N + 1)·u
//! (Higham, Accuracy and Stability of Numerical Algorithms, 2002, §4.2):
//! 1.5e-5 for N = 256 in the worst case, where every rounding goes the same
//! way. Roundings of a sum behave like independent zero-mean errors, so the
//! typical error is about √N·u ≈ 1e-6 (Higham's rule of thumb, same
//! section). The test asserts the rigorous (N + 1)·u on every frame and
//! 1e-5 on the per-trial maxima, ten times the typical error; a real bug
//! (one sample missing from a frame of 256) is a change of ~0.4 %. The Rust
//! side squares the same f32 samples in f64, exactly.
//!
//! **Parameters.** `frame_len` (1 to `ENERGY_MAX_FRAME` = 2048 samples) and
//! `hop` (samples). Real streams only (I/Q refused, parameter `channels`).
//! A non-finite sample counts as 0 (in C, `isfinite`), silence scores 0, and
//! t_s = (index one past the frame's last sample) / fs. As for `energy`,
//! the nominal Pfa from χ²_N holds only for white Gaussian noise with
//! `hop = frame_len`; the harness calibrates thresholds empirically.
//!
//! **Cost.** The declared state is `sizeof(energy_state)`: the RAM this build
//! of the C code needs, sized for `ENERGY_MAX_FRAME` (8 KiB of ring), not for
//! the configured frame. A product built for one frame length sets
//! `ENERGY_MAX_FRAME` to it and needs 4·N + 20 bytes.
//!
//! # Replacing `energy.c` with your own firmware file
//!
//! 1. Put your C (or C++ with `extern "C"`) sources and headers in `c/`, as
//!    they are in the firmware repository; do not edit them for the bench.
//! 2. If their interface differs from `energy.h`, add a small adapter file
//!    `c/shim.c` that implements the seven `energy_*` functions by calling
//!    your code: `energy_state` becomes a struct holding your module's state,
//!    `energy_push` calls your per-sample (or per-DMA-block) entry point and
//!    reports when it has a new decision value. Keep `energy_state_size` and
//!    `energy_state_align` returning `sizeof`/alignment of that struct, and
//!    `energy_max_frame` the largest frame your code accepts.
//! 3. In `build.rs`, list your files (`.file("c/your_detector.c")`,
//!    `.file("c/shim.c")`), their include folders (`.include(...)`) and the
//!    defines your firmware build uses (`.define("FRAME_LEN", "256")`). Keep
//!    `-ffp-contract=off` if your MCU's compiler does not fuse multiply-adds;
//!    drop it if it does, so the host rounds as the target does.
//! 4. Rename the crate and the plugin id (see the template crate's
//!    `ADDING-A-DETECTOR.md`), adjust the parameter table to your
//!    firmware's compile-time or run-time settings, and register it.
//! 5. Keep a comparison test like `tests/against_rust.rs`: against a Rust or
//!    Python reference of the same algorithm, or against outputs recorded
//!    from the device, with a tolerance derived from the arithmetic as above.
#![deny(missing_docs)]

use echobench_core::detector::{
    BandRole, Cost, Detector, DetectorFailure, DetectorPlan, DetectorPlugin, DopplerBand,
    ParamError, ParamSpec, Params, PrototypePlan, Samples,
};
use echobench_core::doppler::Framing;
use echobench_core::param_decl::{IntegerParam, TuneRange};
use echobench_core::{Channels, FrameScore, StreamInfo};
use std::ffi::{c_int, c_void};
use std::sync::Arc;

/// The plugin's id in suite files.
const ID: &str = "energy-c";

/// `ENERGY_MAX_FRAME` of `c/energy.h` (a test checks they agree).
pub const MAX_FRAME: i64 = 2048;

/// The C interface of `c/energy.h`; the state is opaque to Rust.
mod ffi {
    use std::ffi::{c_int, c_void};

    extern "C" {
        pub fn energy_init(state: *mut c_void, frame_len: u32, hop: u32) -> c_int;
        pub fn energy_reset(state: *mut c_void);
        pub fn energy_push(state: *mut c_void, sample: f32, score: *mut f32) -> c_int;
        pub fn energy_state_size() -> usize;
        pub fn energy_state_align() -> usize;
        pub fn energy_max_frame() -> u32;
        pub fn energy_flt_eval_method() -> c_int;
    }
}

const FRAME_LEN: IntegerParam = IntegerParam {
    name: "frame_len",
    unit: "samples",
    about: "samples per frame (at most ENERGY_MAX_FRAME of the C build)",
    min: 1,
    max: MAX_FRAME,
    default: 256,
};

const HOP: IntegerParam = IntegerParam {
    name: "hop",
    unit: "samples",
    about: "samples between the starts of consecutive frames",
    min: 1,
    max: 1 << 20,
    default: 128,
};

// Tunable (`echobench tune`): frame and hop on a log scale (a factor matters, not a difference).
static PARAMS: [ParamSpec; 2] = [
    FRAME_LEN.spec_tuned(TuneRange::IntegerLog {
        low: 64,
        high: 1024,
    }),
    HOP.spec_tuned(TuneRange::IntegerLog { low: 32, high: 512 }),
];

/// The C energy detector plugin (id `energy-c`).
pub struct EnergyCPlugin;

impl DetectorPlugin for EnergyCPlugin {
    fn id(&self) -> &'static str {
        ID
    }

    fn about(&self) -> &'static str {
        "frame energy (mean of x^2) computed by firmware C code in single precision"
    }

    fn params(&self) -> &'static [ParamSpec] {
        &PARAMS
    }

    /// One C state initialised by `energy_init` (which may refuse the
    /// parameters); every state is a copy of it.
    fn plan(
        &self,
        params: &Params,
        info: &StreamInfo,
    ) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        let config = Config::from_params(params, info)?;
        Ok(PrototypePlan::shared(EnergyC::new(config)?))
    }

    fn check(&self, params: &Params, info: &StreamInfo) -> Result<(), ParamError> {
        Config::from_params(params, info).map(|_| ())
    }

    fn cost(&self, params: &Params, info: &StreamInfo) -> Option<Cost> {
        let config = Config::from_params(params, info).ok()?;
        // Per sample: the NaN test, one square, the ring and countdown updates
        // (~4 operations); per frame end: frame_len adds and one divide.
        let ops_per_sample = 4.0 + (config.frame_len as f64 + 1.0) / config.hop as f64;
        Some(Cost {
            state_bytes: firmware_facts().state_bytes,
            ops_per_sample,
        })
    }

    /// No band limit: the frame energy takes every frequency from DC to Nyquist.
    /// (Its frame stays in samples: the firmware's buffer is sized in samples.)
    fn doppler_bands(&self, params: &Params, info: &StreamInfo) -> Vec<DopplerBand> {
        let Ok(config) = Config::from_params(params, info) else {
            return Vec::new();
        };
        vec![DopplerBand {
            role: BandRole::Motion,
            label: "full band",
            low_hz: 0.0,
            high_hz: config.sample_rate_hz / 2.0,
        }]
    }

    fn framing(&self, params: &Params, info: &StreamInfo) -> Option<Framing> {
        let config = Config::from_params(params, info).ok()?;
        Some(Framing {
            frame_len: config.frame_len as usize,
            hop: config.hop as usize,
        })
    }
}

/// What the compiled C code reports about itself.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FirmwareFacts {
    /// `sizeof(energy_state)`, bytes.
    pub state_bytes: usize,
    /// Alignment of `energy_state`, bytes.
    pub state_align: usize,
    /// `ENERGY_MAX_FRAME`, samples.
    pub max_frame: u32,
    /// The C compiler's `FLT_EVAL_METHOD` (0: every float operation rounds to float).
    pub flt_eval_method: i32,
}

/// Asks the C code for its state size, alignment, largest frame and float evaluation method.
pub fn firmware_facts() -> FirmwareFacts {
    // SAFETY: these C functions take no arguments and only return constants.
    unsafe {
        FirmwareFacts {
            state_bytes: ffi::energy_state_size(),
            state_align: ffi::energy_state_align(),
            max_frame: ffi::energy_max_frame(),
            flt_eval_method: ffi::energy_flt_eval_method(),
        }
    }
}

/// Checked parameters.
#[derive(Debug, Clone, Copy)]
struct Config {
    frame_len: u32,
    hop: u32,
    sample_rate_hz: f64,
}

impl Config {
    fn from_params(params: &Params, info: &StreamInfo) -> Result<Config, ParamError> {
        if info.channels != Channels::Real {
            return Err(ParamError::new(
                ID,
                "channels",
                info.channels,
                "the C code takes one real sample at a time: real streams only",
            ));
        }
        let fs = echobench_core::detector::check_sample_rate(ID, info)?;
        let max_frame = firmware_facts().max_frame;
        let frame = FRAME_LEN.get(params)?;
        let frame_len = u32::try_from(frame)
            .ok()
            .filter(|&n| n >= 1 && n <= max_frame)
            .ok_or_else(|| {
                ParamError::new(
                    ID,
                    "frame_len",
                    frame,
                    format!("expected 1 to {max_frame} samples (ENERGY_MAX_FRAME of the C build)"),
                )
            })?;
        let hop_given = HOP.get(params)?;
        let hop = u32::try_from(hop_given)
            .ok()
            .filter(|&n| n >= 1)
            .ok_or_else(|| ParamError::new(ID, "hop", hop_given, "expected at least 1 sample"))?;
        Ok(Config {
            frame_len,
            hop,
            sample_rate_hz: fs,
        })
    }
}

/// A running C energy detector: the C state in a host-owned buffer.
///
/// Cloning copies the buffer, which copies the state: `energy_state` is plain
/// data (a float array and counters, no pointers; `c/energy.h`), as firmware
/// that keeps it in a `static` relies on too.
#[derive(Clone)]
struct EnergyC {
    /// `energy_state_size()` bytes, 8-byte aligned (u64 words); only C reads it.
    state: Box<[u64]>,
    consumed: u64,
}

impl EnergyC {
    fn new(config: Config) -> Result<EnergyC, ParamError> {
        let facts = firmware_facts();
        if facts.state_align > std::mem::align_of::<u64>() || facts.state_align == 0 {
            return Err(ParamError::new(
                ID,
                "firmware",
                facts.state_align,
                "the C state needs an alignment above 8 bytes: allocate it with a wider word",
            ));
        }
        let words = facts.state_bytes.div_ceil(std::mem::size_of::<u64>());
        let mut state = vec![0_u64; words].into_boxed_slice();
        // SAFETY: `state` holds at least energy_state_size() bytes at the
        // alignment energy_state_align() asks for (checked above), and lives
        // as long as this detector; C keeps no pointer after returning.
        let status = unsafe {
            ffi::energy_init(
                state.as_mut_ptr().cast::<c_void>(),
                config.frame_len,
                config.hop,
            )
        };
        if status != 0 {
            return Err(ParamError::new(
                ID,
                "frame_len, hop",
                format!("{}, {}", config.frame_len, config.hop),
                format!("the C code's energy_init refused them (code {status})"),
            ));
        }
        Ok(EnergyC { state, consumed: 0 })
    }
}

impl Detector for EnergyC {
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        let block = block.values();
        let state = self.state.as_mut_ptr().cast::<c_void>();
        for &sample in block {
            let mut score = 0.0_f32;
            // SAFETY: `state` was set up by energy_init in `new`; `score` is a
            // valid f32 for C to write.
            let ready: c_int = unsafe { ffi::energy_push(state, sample, &mut score) };
            self.consumed += 1;
            if ready != 0 {
                out.push(FrameScore {
                    end_sample: self.consumed,
                    value: f64::from(score),
                });
            }
        }
        Ok(())
    }

    fn reset(&mut self) {
        // SAFETY: as in `process`.
        unsafe { ffi::energy_reset(self.state.as_mut_ptr().cast::<c_void>()) };
        self.consumed = 0;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use echobench_core::detector::{check_scores, test_stream, ParamValue};
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;
    use rand_distr::{Distribution, Normal};

    fn build(given: &[(&str, i64)], info: &StreamInfo) -> Result<Box<dyn Detector>, ParamError> {
        let given: Vec<(String, ParamValue)> = given
            .iter()
            .map(|(name, value)| (name.to_string(), ParamValue::Integer(*value)))
            .collect();
        EnergyCPlugin
            .plan(&Params::resolve(ID, &PARAMS, &given)?, info)
            .map(|plan| plan.start())
    }

    fn run(detector: &mut dyn Detector, samples: &[f32], block: usize) -> Vec<FrameScore> {
        let mut out = Vec::new();
        for chunk in samples.chunks(block.max(1)) {
            detector.process(Samples::Real(chunk), &mut out).unwrap();
        }
        out
    }

    #[test]
    fn the_c_build_matches_the_declarations() {
        let facts = firmware_facts();
        assert_eq!(
            i64::from(facts.max_frame),
            MAX_FRAME,
            "ENERGY_MAX_FRAME vs MAX_FRAME"
        );
        // ENERGY_MAX_FRAME floats and five u32 fields.
        assert_eq!(facts.state_bytes, 4 * MAX_FRAME as usize + 5 * 4);
        assert_eq!(facts.state_align, 4);
        // Single rounding per float operation, as on a single-precision FPU
        // (C99 §5.2.4.2.2: FLT_EVAL_METHOD 0); otherwise the host would
        // compute the "float" code in wider precision than the MCU.
        assert_eq!(facts.flt_eval_method, 0);
        let cost = EnergyCPlugin
            .cost(&Params::defaults(&PARAMS), &test_stream(2000.0))
            .expect("valid");
        assert_eq!(cost.state_bytes, facts.state_bytes);
    }

    #[test]
    fn scores_do_not_depend_on_block_size() {
        let mut rng = ChaCha8Rng::from_seed([8; 32]);
        let normal = Normal::new(0.0, 0.02).expect("valid sigma");
        let samples: Vec<f32> = (0..12_345)
            .map(|_| normal.sample(&mut rng) as f32)
            .collect();
        let info = test_stream(2000.0);
        let given = [("frame_len", 300), ("hop", 77)];
        let mut detector = build(&given, &info).expect("valid");
        let whole = run(detector.as_mut(), &samples, samples.len());
        assert_eq!(whole.len(), (12_345 - 300) / 77 + 1);
        assert!(check_scores(&whole).is_ok());
        for block in [1, 7, 256] {
            let mut fresh = build(&given, &info).expect("valid");
            assert_eq!(run(fresh.as_mut(), &samples, block), whole, "block {block}");
        }
        detector.reset();
        assert_eq!(run(detector.as_mut(), &samples, 1000), whole, "after reset");
    }

    #[test]
    fn refuses_bad_parameters_naming_them() {
        let info = test_stream(2000.0);
        let refused = |given: &[(&str, i64)], info: &StreamInfo| {
            build(given, info).err().expect("refused").param
        };
        assert_eq!(refused(&[("frame_len", 4096)], &info), "frame_len");
        assert_eq!(refused(&[("frame_len", 0)], &info), "frame_len");
        assert_eq!(refused(&[("hop", 0)], &info), "hop");
        let iq = StreamInfo {
            channels: Channels::Iq,
            ..info
        };
        assert_eq!(refused(&[], &iq), "channels");
        assert_eq!(refused(&[], &test_stream(-1.0)), "sample_rate_hz");
        // The C code's own check agrees with the table's range.
        let mut buffer = vec![0_u64; firmware_facts().state_bytes.div_ceil(8)];
        // SAFETY: the buffer has the size and alignment the C code reports.
        let status = unsafe {
            ffi::energy_init(
                buffer.as_mut_ptr().cast::<c_void>(),
                MAX_FRAME as u32 + 1,
                1,
            )
        };
        assert_eq!(status, -1, "ENERGY_BAD_FRAME");
    }

    #[test]
    fn silence_nan_clipping_and_a_single_sample_behave() {
        let info = test_stream(1000.0);
        let silent = run(
            build(&[], &info).expect("valid").as_mut(),
            &[0.0; 1024],
            1024,
        );
        assert_eq!(silent.len(), 7);
        assert!(silent.iter().all(|s| s.value == 0.0));
        let mut poisoned = vec![0.01_f32; 512];
        let mut zeroed = poisoned.clone();
        for (k, bad) in [
            (5, f32::NAN),
            (300, f32::INFINITY),
            (511, f32::NEG_INFINITY),
        ] {
            poisoned[k] = bad;
            zeroed[k] = 0.0;
        }
        let from_poisoned = run(build(&[], &info).expect("valid").as_mut(), &poisoned, 3);
        assert!(check_scores(&from_poisoned).is_ok());
        assert_eq!(
            from_poisoned,
            run(build(&[], &info).expect("valid").as_mut(), &zeroed, 3)
        );
        // A ±0.1 V square wave: every square is the same float, so the float
        // sum of 256 of them is exact up to one rounding per addition.
        let square: Vec<f32> = (0..512)
            .map(|n| if n % 2 == 0 { 0.1 } else { -0.1 })
            .collect();
        let expected = f64::from(0.1_f32 * 0.1_f32);
        for s in run(build(&[], &info).expect("valid").as_mut(), &square, 100) {
            assert!(
                (s.value / expected - 1.0).abs() < 257.0 * 6e-8,
                "{}",
                s.value
            );
        }
        assert!(run(build(&[], &info).expect("valid").as_mut(), &[0.5], 1).is_empty());
        let one = run(
            build(&[("frame_len", 1), ("hop", 1)], &info)
                .expect("valid")
                .as_mut(),
            &[0.5],
            1,
        );
        assert_eq!(
            one,
            vec![FrameScore {
                end_sample: 1,
                value: 0.25
            }]
        );
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
        let params = Params::defaults(EnergyCPlugin.params());
        conformance::assert_conforms(&EnergyCPlugin, &params, &test_stream(2000.0));
    }
}
