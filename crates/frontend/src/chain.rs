//! The analog chain (HP/LP cascade, gain, output swing), decimation, and the
//! oversampled front end that ties them to the ADC.

use crate::adc::Adc;
use crate::error::{finite, positive, refuse, ParamError};
use crate::section::{FirstOrderSection, SectionKind};
use std::f64::consts::TAU;

/// Op-amp output swing: rails and the width of the soft knee before them.
///
/// Transfer (symmetric at both rails): linear up to `knee_v` from a rail, then
/// an exponential approach, y = rail − knee·e^{−(x − (rail − knee))/knee}. The
/// curve is continuous with slope 1 at the knee's start (C¹), never crosses
/// the rail and tends to it for large overdrive; `knee_v` = 0 is a hard clip.
/// An output stage that compresses gradually as it nears its rails rather than
/// breaking sharply is common practice; the exponential is our choice of shape.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OutputSwing {
    /// Lowest output voltage the stage reaches, V.
    pub rail_low_v: f64,
    /// Highest output voltage the stage reaches, V.
    pub rail_high_v: f64,
    /// Width of the soft knee inside each rail, V (0 for a hard clip).
    pub knee_v: f64,
}

impl OutputSwing {
    /// A typical knee width for rail-to-rail output op-amps, V: they begin to
    /// compress within about 0.1 V of the rails at light loads (from memory).
    pub const TYPICAL_KNEE_V: f64 = 0.1;

    fn validate(&self) -> Result<(), ParamError> {
        let low = finite("swing.rail_low_v", self.rail_low_v)?;
        let high = finite("swing.rail_high_v", self.rail_high_v)?;
        if low >= high {
            return Err(refuse(
                "swing.rail_high_v",
                high,
                format!("must be above rail_low_v = {low}"),
            ));
        }
        let knee = self.knee_v;
        if !(knee.is_finite() && knee >= 0.0 && 2.0 * knee < high - low) {
            return Err(refuse(
                "swing.knee_v",
                knee,
                format!(
                    "must be >= 0 and below half the rail span ({} V)",
                    (high - low) / 2.0
                ),
            ));
        }
        Ok(())
    }

    /// Applies the swing limit to one output voltage.
    #[inline]
    pub fn limit(&self, output_v: f64) -> f64 {
        let top = self.rail_high_v - self.knee_v;
        let bottom = self.rail_low_v + self.knee_v;
        if output_v > top {
            if self.knee_v > 0.0 {
                self.rail_high_v - self.knee_v * (-(output_v - top) / self.knee_v).exp()
            } else {
                self.rail_high_v
            }
        } else if output_v < bottom {
            if self.knee_v > 0.0 {
                self.rail_low_v + self.knee_v * (-(bottom - output_v) / self.knee_v).exp()
            } else {
                self.rail_low_v
            }
        } else {
            output_v
        }
    }
}

/// Parameters of [`AnalogChain`].
#[derive(Debug, Clone, PartialEq)]
pub struct AnalogChainParams {
    /// −3 dB corners of the first-order high-pass sections (coupling C + R), Hz.
    pub high_pass_corners_hz: Vec<f64>,
    /// −3 dB corners of the first-order low-pass sections (C‖R feedback, RC), Hz.
    pub low_pass_corners_hz: Vec<f64>,
    /// Total voltage gain of the op-amp stages, V/V (60–80 dB is typical,
    /// docs/reference/front-end-and-noise.md#f9).
    pub gain_v_per_v: f64,
    /// DC level of the output, V (mid-rail on a single supply).
    pub output_bias_v: f64,
    /// Output swing limit.
    pub swing: OutputSwing,
}

/// Input → high-pass sections → low-pass sections → gain → bias → swing limit.
///
/// The order of the linear sections does not matter (they commute); the
/// nonlinearity is at the output, where the op-amp saturates.
#[derive(Debug, Clone, PartialEq)]
pub struct AnalogChain {
    high_pass: Vec<FirstOrderSection>,
    low_pass: Vec<FirstOrderSection>,
    gain_v_per_v: f64,
    output_bias_v: f64,
    swing: OutputSwing,
    sample_rate_hz: f64,
}

impl AnalogChain {
    /// Builds the chain for a simulation at `sample_rate_hz` (use f_sim = M·f_s
    /// and a [`Decimator`] to model the sampled ADC, or [`OversampledFrontEnd`]).
    ///
    /// # Errors
    /// When a corner is not in (0, sample_rate_hz/2), the gain or bias is not
    /// finite, the bias is not strictly between the rails, or the swing is invalid.
    ///
    /// ```
    /// use echobench_frontend::{AnalogChain, AnalogChainParams, OutputSwing};
    /// let params = AnalogChainParams {
    ///     high_pass_corners_hz: vec![0.5],
    ///     low_pass_corners_hz: vec![100.0],
    ///     gain_v_per_v: 1000.0,
    ///     output_bias_v: 1.65,
    ///     swing: OutputSwing { rail_low_v: 0.0, rail_high_v: 3.3, knee_v: 0.1 },
    /// };
    /// let mut chain = AnalogChain::new(&params, 16_000.0).unwrap();
    /// let mut block = [1e-3; 32];
    /// chain.process_block(&mut block);
    /// assert!(block.iter().all(|v| (0.0..=3.3).contains(v)));
    /// ```
    pub fn new(params: &AnalogChainParams, sample_rate_hz: f64) -> Result<Self, ParamError> {
        let fs = positive("sample_rate_hz", sample_rate_hz)?;
        let make = |kind, corners: &[f64], name: &str| {
            corners
                .iter()
                .enumerate()
                .map(|(i, &corner)| {
                    FirstOrderSection::new(kind, corner, fs).map_err(|mut e| {
                        if e.param == "corner_hz" {
                            e.param = format!("{name}[{i}]");
                        }
                        e
                    })
                })
                .collect::<Result<Vec<_>, _>>()
        };
        let high_pass = make(
            SectionKind::HighPass,
            &params.high_pass_corners_hz,
            "high_pass_corners_hz",
        )?;
        let low_pass = make(
            SectionKind::LowPass,
            &params.low_pass_corners_hz,
            "low_pass_corners_hz",
        )?;
        let gain_v_per_v = finite("gain_v_per_v", params.gain_v_per_v)?;
        params.swing.validate()?;
        let bias = finite("output_bias_v", params.output_bias_v)?;
        if !(bias > params.swing.rail_low_v && bias < params.swing.rail_high_v) {
            return Err(refuse(
                "output_bias_v",
                bias,
                "must lie strictly between the rails",
            ));
        }
        Ok(AnalogChain {
            high_pass,
            low_pass,
            gain_v_per_v,
            output_bias_v: bias,
            swing: params.swing,
            sample_rate_hz: fs,
        })
    }

    /// The simulation rate the sections were designed for, Hz.
    pub fn sample_rate_hz(&self) -> f64 {
        self.sample_rate_hz
    }

    /// Processes one sample (mixer output in V → op-amp output in V).
    #[inline]
    pub fn process(&mut self, input_v: f64) -> f64 {
        let mut signal = input_v;
        for section in self.high_pass.iter_mut() {
            signal = section.process(signal);
        }
        for section in self.low_pass.iter_mut() {
            signal = section.process(signal);
        }
        self.swing
            .limit(self.output_bias_v + self.gain_v_per_v * signal)
    }

    /// Processes a block in place.
    pub fn process_block(&mut self, block: &mut [f64]) {
        // The usual section counts run on a local array the compiler keeps in
        // registers; the arithmetic is that of `process`, sample by sample.
        match self.high_pass.len() + self.low_pass.len() {
            0 => self.process_block_with::<0>(block),
            1 => self.process_block_with::<1>(block),
            2 => self.process_block_with::<2>(block),
            3 => self.process_block_with::<3>(block),
            4 => self.process_block_with::<4>(block),
            5 => self.process_block_with::<5>(block),
            6 => self.process_block_with::<6>(block),
            _ => {
                for sample in block.iter_mut() {
                    *sample = self.process(*sample);
                }
            }
        }
    }

    /// [`AnalogChain::process_block`] for exactly `N` sections.
    fn process_block_with<const N: usize>(&mut self, block: &mut [f64]) {
        let high = self.high_pass.len();
        let mut sections: [FirstOrderSection; N] = std::array::from_fn(|i| {
            if i < high {
                self.high_pass[i]
            } else {
                self.low_pass[i - high]
            }
        });
        for sample in block.iter_mut() {
            let mut signal = *sample;
            for section in sections.iter_mut() {
                signal = section.process(signal);
            }
            *sample = self
                .swing
                .limit(self.output_bias_v + self.gain_v_per_v * signal);
        }
        let (high_pass, low_pass) = sections.split_at(high);
        self.high_pass.copy_from_slice(high_pass);
        self.low_pass.copy_from_slice(low_pass);
    }

    /// Clears every section (power-on with discharged capacitors).
    pub fn reset(&mut self) {
        for section in self.high_pass.iter_mut().chain(self.low_pass.iter_mut()) {
            section.reset();
        }
    }

    /// Puts every section in the steady state for a constant input (a module
    /// that has been on for a while, with DC from leakage and static clutter),
    /// and returns the output: the bias when there is a high-pass.
    pub fn settle_to_input(&mut self, input_v: f64) -> f64 {
        let mut signal = input_v;
        for section in self.high_pass.iter_mut().chain(self.low_pass.iter_mut()) {
            signal = section.settle_to(signal);
        }
        self.swing
            .limit(self.output_bias_v + self.gain_v_per_v * signal)
    }

    /// Small-signal gain |gain·Π H_k| at `f_hz` (no swing limit), V/V.
    pub fn magnitude_at(&self, f_hz: f64) -> f64 {
        self.high_pass
            .iter()
            .chain(&self.low_pass)
            .map(|s| s.magnitude_at(f_hz))
            .product::<f64>()
            * self.gain_v_per_v.abs()
    }

    /// Time to discard after power-on or clipping: five time constants
    /// τ = 1/(2π f_HP) of the lowest high-pass corner, s
    /// (docs/reference/front-end-and-noise.md#f11:
    /// 0.5 Hz → τ = 0.318 s, 5τ = 1.6 s); 0 without a high-pass.
    pub fn settling_time_s(&self) -> f64 {
        self.high_pass
            .iter()
            .map(|s| s.corner_hz())
            .reduce(f64::min)
            .map_or(0.0, |corner| 5.0 / (TAU * corner))
    }
}

/// Keeps every M-th sample (the ADC's sample-and-hold at f_s = f_sim/M), from
/// the first; the position within the period carries over between blocks.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Decimator {
    factor: usize,
    /// Samples to skip before the next kept one.
    skip: usize,
}

impl Decimator {
    /// A decimator by `factor` (1 keeps everything).
    ///
    /// # Errors
    /// When `factor` is 0.
    ///
    /// ```
    /// let mut decimator = echobench_frontend::Decimator::new(3).unwrap();
    /// let mut kept = Vec::new();
    /// decimator.keep(&[0, 1, 2, 3], &mut kept);
    /// decimator.keep(&[4, 5, 6], &mut kept);
    /// assert_eq!(kept, vec![0, 3, 6]);
    /// ```
    pub fn new(factor: usize) -> Result<Self, ParamError> {
        if factor == 0 {
            return Err(refuse("factor", 0.0, "must be at least 1"));
        }
        Ok(Decimator { factor, skip: 0 })
    }

    /// The decimation factor M.
    pub fn factor(&self) -> usize {
        self.factor
    }

    /// Calls `kept` with each sample of `input` that is kept, in order.
    pub fn for_each_kept<T: Copy>(&mut self, input: &[T], mut kept: impl FnMut(T)) {
        let mut index = self.skip;
        while index < input.len() {
            kept(input[index]);
            index += self.factor;
        }
        self.skip = index - input.len();
    }

    /// Appends the kept samples of `input` to `out`.
    pub fn keep<T: Copy>(&mut self, input: &[T], out: &mut Vec<T>) {
        self.for_each_kept(input, |sample| out.push(sample));
    }

    /// Restarts so that the next sample is kept.
    pub fn reset(&mut self) {
        self.skip = 0;
    }
}

/// Chain at f_sim = M·f_s, sample-and-hold every M-th sample, ADC: the whole
/// acquisition path of the simulation recipe in docs/reference/front-end-and-noise.md#f12.
#[derive(Debug, Clone, PartialEq)]
pub struct OversampledFrontEnd {
    chain: AnalogChain,
    decimator: Decimator,
    adc: Adc,
    output_rate_hz: f64,
}

impl OversampledFrontEnd {
    /// Builds the chain at `output_rate_hz × oversampling` and the ADC at
    /// `output_rate_hz`.
    ///
    /// # Errors
    /// When the output rate is not finite and positive, `oversampling` is 0, or
    /// the chain parameters are invalid at the simulation rate.
    pub fn new(
        chain: &AnalogChainParams,
        adc: Adc,
        output_rate_hz: f64,
        oversampling: usize,
    ) -> Result<Self, ParamError> {
        let output_rate_hz = positive("output_rate_hz", output_rate_hz)?;
        let decimator = Decimator::new(oversampling).map_err(|mut e| {
            e.param = "oversampling".into();
            e
        })?;
        let chain = AnalogChain::new(chain, output_rate_hz * oversampling as f64)?;
        Ok(OversampledFrontEnd {
            chain,
            decimator,
            adc,
            output_rate_hz,
        })
    }

    /// The simulation rate f_sim = M·f_s at which blocks are fed, Hz.
    pub fn sim_rate_hz(&self) -> f64 {
        self.chain.sample_rate_hz()
    }

    /// The ADC's rate f_s, Hz.
    pub fn output_rate_hz(&self) -> f64 {
        self.output_rate_hz
    }

    /// Runs the chain over `block_at_sim_rate` in place (it then holds the
    /// op-amp output at f_sim) and appends the ADC codes of the kept samples.
    pub fn process_block(&mut self, block_at_sim_rate: &mut [f64], codes_out: &mut Vec<i32>) {
        self.chain.process_block(block_at_sim_rate);
        let adc = &self.adc;
        self.decimator
            .for_each_kept(block_at_sim_rate, |v| codes_out.push(adc.code(v)));
    }

    /// The analog chain.
    pub fn chain(&self) -> &AnalogChain {
        &self.chain
    }

    /// The analog chain, e.g. to [`settle_to_input`](AnalogChain::settle_to_input).
    pub fn chain_mut(&mut self) -> &mut AnalogChain {
        &mut self.chain
    }

    /// The ADC (for [`Adc::volts`]).
    pub fn adc(&self) -> &Adc {
        &self.adc
    }

    /// Clears the chain and restarts the decimator.
    pub fn reset(&mut self) {
        self.chain.reset();
        self.decimator.reset();
    }
}
