//! The detector plugin interface.
//!
//! Detectors are **pushed** blocks of samples of any length and **emit
//! scores**, not decisions:
//!
//! - Push, because the same detector must run on a synthetic trial held in
//!   memory, on a recording streamed from disk and, in the end, on a
//!   microcontroller's DMA buffers: whoever owns the samples decides the block
//!   size, and the detector keeps whatever state it needs between blocks. The
//!   caller owns the output buffer too, so the hot path never allocates.
//! - Scores, because the threshold is what a product team tunes: the harness
//!   sweeps it to draw ROC curves and to find the operating point that meets a
//!   false-alarm budget, and the alarm logic (threshold, hold time, M-of-N)
//!   lives once in the harness, the same for every detector.
//!
//! A plugin declares its parameters ([`ParamSpec`]: name, unit, default,
//! allowed range), so that `echobench detectors` can list them and a bad value
//! is refused with a message naming the parameter, the value and the range,
//! before any trial runs ([`DetectorPlugin::check`]). It may also declare its
//! cost ([`Cost`]): state memory and arithmetic per sample, for a team that
//! must fit it in a small MCU.

use crate::doppler::Framing;
pub use crate::param_error::{ParamError, ParamOwner};
use crate::suggest::nearest;
use crate::{Channels, Score, StreamInfo};
use std::borrow::Cow;
use std::collections::{BTreeMap, BTreeSet};
use std::fmt;
use std::sync::Arc;

/// One detector output: the score of the decision frame that ends just
/// before sample instant `end_sample`.
///
/// A detector counts samples; it does not compute times. `end_sample` is the
/// index one past the frame's last sample instant, counting from 0 at the
/// trial's first sample and one per I/Q pair, so it is exact whatever the
/// sample rate; the harness turns it into seconds in one place
/// ([`FrameScore::timed`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FrameScore {
    /// Index one past the frame's last sample instant.
    pub end_sample: u64,
    /// The score; higher means more likely motion.
    pub value: f64,
}

impl FrameScore {
    /// The score with its frame end in seconds: `end_sample / sample_rate_hz`,
    /// the one conversion from sample index to time (every built-in computed
    /// exactly this division before frame ends were counted in samples, so the
    /// times are bit-identical to theirs).
    ///
    /// ```
    /// use echobench_core::detector::FrameScore;
    /// let s = FrameScore { end_sample: 200, value: 1.5 }.timed(2000.0);
    /// assert_eq!((s.t_s, s.value), (0.1, 1.5));
    /// ```
    pub fn timed(self, sample_rate_hz: f64) -> Score {
        Score {
            t_s: self.end_sample as f64 / sample_rate_hz,
            value: self.value,
        }
    }
}

/// Why a detector can produce no more scores for its stream: an external
/// program that crashed, hung or replied out of protocol, say. In-process
/// detectors never fail this way (bad input is defined, not an error).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DetectorFailure {
    /// What happened, for the run's `failures` list.
    pub message: String,
}

impl DetectorFailure {
    /// A failure saying `message`.
    pub fn new(message: impl Into<String>) -> Self {
        DetectorFailure {
            message: message.into(),
        }
    }
}

impl fmt::Display for DetectorFailure {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for DetectorFailure {}

/// One sample instant of a quadrature receiver: `[I, Q]`, volts at the ADC input.
pub type IqSample = [f32; 2];

/// A block of samples, typed by the stream's channels, so that a block holds
/// whole sample instants: an I/Q pair is one value and can never be split
/// between two blocks.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Samples<'a> {
    /// A single-channel mixer's samples.
    Real(&'a [f32]),
    /// A quadrature receiver's samples.
    Iq(&'a [IqSample]),
}

impl<'a> Samples<'a> {
    /// Interleaved values (I, Q, I, Q, ... for I/Q streams) as a typed block.
    /// `None` when an I/Q block holds an odd number of values (a split pair).
    ///
    /// ```
    /// use echobench_core::detector::Samples;
    /// use echobench_core::Channels;
    /// let values = [0.1, 0.2, 0.3, 0.4];
    /// let block = Samples::from_values(&values, Channels::Iq).unwrap();
    /// assert_eq!(block, Samples::Iq(&[[0.1, 0.2], [0.3, 0.4]]));
    /// assert_eq!(block.values(), &values);
    /// assert!(Samples::from_values(&values[..3], Channels::Iq).is_none());
    /// ```
    pub fn from_values(values: &'a [f32], channels: Channels) -> Option<Samples<'a>> {
        match channels {
            Channels::Real => Some(Samples::Real(values)),
            Channels::Iq if values.len().is_multiple_of(2) => {
                // SAFETY: `[f32; 2]` has the size of two `f32` and the alignment
                // of one, so `len / 2` of them cover exactly the `len` values
                // (even, checked above) of the borrowed slice, for as long as
                // it lives. (`slice::as_chunks` does this without `unsafe` from
                // Rust 1.88, above this workspace's minimum.)
                let pairs = unsafe {
                    std::slice::from_raw_parts(values.as_ptr().cast::<IqSample>(), values.len() / 2)
                };
                Some(Samples::Iq(pairs))
            }
            Channels::Iq => None,
        }
    }

    /// The values, interleaved I, Q for I/Q blocks.
    pub fn values(self) -> &'a [f32] {
        match self {
            Samples::Real(x) => x,
            Samples::Iq(pairs) => pairs.as_flattened(),
        }
    }

    /// Number of sample instants (pairs for I/Q).
    pub fn len(self) -> usize {
        match self {
            Samples::Real(x) => x.len(),
            Samples::Iq(pairs) => pairs.len(),
        }
    }

    /// True when the block holds no sample.
    pub fn is_empty(self) -> bool {
        self.len() == 0
    }

    /// Real or I/Q.
    pub fn channels(self) -> Channels {
        match self {
            Samples::Real(_) => Channels::Real,
            Samples::Iq(_) => Channels::Iq,
        }
    }
}

/// A running detector: the state for one stream, made by
/// [`DetectorPlan::start`].
///
/// The runner gives each worker thread one state per detector and resets it
/// between trials, so [`Detector::reset`] must return it exactly to what
/// `start` gives: the conformance kit checks that a reset state repeats a
/// fresh state's scores bit for bit.
pub trait Detector: Send {
    /// Consumes `block` (any number of sample instants, including 0 and 1,
    /// typed as the stream it was built for) and pushes one [`FrameScore`]
    /// per completed decision frame, in time order, onto `out`. Scores must
    /// not depend on how the stream is split into blocks.
    ///
    /// # Errors
    /// When the detector can produce no more scores for this stream. The
    /// runner then records the trial as failed for this detector and feeds it
    /// nothing more; scores pushed before the error are discarded with it.
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure>;

    /// Forgets all state: back to what [`DetectorPlan::start`] gives.
    fn reset(&mut self);
}

/// A detector configured for one stream shape: everything its states read
/// and never write (checked parameters, FFT plans, windows, filter
/// coefficients, bin tables), made once by [`DetectorPlugin::plan`] and
/// shared by every worker thread of a run.
///
/// **The design decision: plan once, start many, reset between trials.**
/// Planning an FFT or tabulating a window costs more than scoring a short
/// trial, and it depends only on the parameters and the stream shape, never
/// on the samples. So the runner plans once per (detector, stream shape),
/// each worker thread starts one state from the plan, and that state is
/// reset between the trials the worker runs. States started from one plan
/// must be independent: nothing a state writes may be shared.
pub trait DetectorPlan: Send + Sync {
    /// A fresh state at the start of a stream.
    fn start(&self) -> Box<dyn Detector>;
}

/// The plan of a detector whose fresh state is a plain value: `start` clones
/// a state made fresh once. Whatever is costly to make and never written
/// (FFT plans, windows, tables) sits behind an `Arc` inside the state, so a
/// clone shares it and copies only the buffers a state writes.
///
/// ```
/// use echobench_core::detector::{DetectorPlan, PrototypePlan};
/// # use echobench_core::detector::{Detector, DetectorFailure, FrameScore, Samples};
/// # #[derive(Clone)] struct Count(u64);
/// # impl Detector for Count {
/// #     fn process(&mut self, b: Samples<'_>, _: &mut Vec<FrameScore>) -> Result<(), DetectorFailure> {
/// #         self.0 += b.len() as u64; Ok(())
/// #     }
/// #     fn reset(&mut self) { self.0 = 0 }
/// # }
/// let plan = PrototypePlan::shared(Count(0));
/// let (a, b) = (plan.start(), plan.start()); // two independent states
/// # drop((a, b));
/// ```
#[derive(Debug, Clone)]
pub struct PrototypePlan<D>(D);

impl<D: Detector + Clone + Sync + 'static> PrototypePlan<D> {
    /// The plan that starts clones of `fresh`, shareable across threads.
    pub fn shared(fresh: D) -> Arc<dyn DetectorPlan> {
        Arc::new(PrototypePlan(fresh))
    }
}

impl<D: Detector + Clone + Sync + 'static> DetectorPlan for PrototypePlan<D> {
    fn start(&self) -> Box<dyn Detector> {
        Box::new(self.0.clone())
    }
}

/// A kind of detector that can be planned from parameters.
pub trait DetectorPlugin: Send + Sync {
    /// Stable identifier used in suite files, e.g. `"ca-cfar"`.
    fn id(&self) -> &str;

    /// One line for `echobench detectors`.
    fn about(&self) -> &str;

    /// The parameters it takes, with defaults and ranges.
    fn params(&self) -> &[ParamSpec];

    /// Plans a detector for a stream shape: checks the parameters against
    /// the stream and makes everything the states share ([`DetectorPlan`]).
    ///
    /// # Errors
    /// When the parameters do not fit together or do not fit the stream
    /// (a band above Nyquist, guard cells ≥ training cells, ...).
    fn plan(&self, params: &Params, info: &StreamInfo)
        -> Result<Arc<dyn DetectorPlan>, ParamError>;

    /// Checks the parameters against the stream without planning anything:
    /// the refusals [`DetectorPlugin::plan`] would give. The suite loader
    /// calls it for every stream of a suite before any trial runs.
    ///
    /// # Errors
    /// As [`DetectorPlugin::plan`].
    fn check(&self, params: &Params, info: &StreamInfo) -> Result<(), ParamError>;

    /// What it costs on a small processor with these parameters on this
    /// stream. `None` (the default) when the plugin declares no cost (an
    /// external program, unless its suite entry declares one) or when the
    /// parameters do not fit the stream ([`DetectorPlugin::check`] says why).
    fn cost(&self, _params: &Params, _info: &StreamInfo) -> Option<Cost> {
        None
    }

    /// For detectors with a closed-form false-alarm law (CFAR): the score
    /// threshold their theory sets and the per-frame false-alarm probability it
    /// promises, valid only under that theory's assumptions (independent
    /// exponential cells). The harness reports it beside the measured rate.
    /// `None` (the default) for detectors without one.
    fn nominal_operating_point(
        &self,
        _params: &Params,
        _info: &StreamInfo,
    ) -> Option<NominalPoint> {
        None
    }

    /// The Doppler bands this detector uses with these parameters on this
    /// stream, in Hz (resolved from m/s through the carrier where they were
    /// given as speeds), so the harness can check that a target's Doppler
    /// falls where the detector looks. Empty (the default) when the plugin
    /// declares none, or when the parameters do not fit the stream (`plan`
    /// says why).
    fn doppler_bands(&self, _params: &Params, _info: &StreamInfo) -> Vec<DopplerBand> {
        Vec::new()
    }

    /// The frame this detector analyses with these parameters on this stream,
    /// for listings (`echobench detectors`). `None` (the default) when the
    /// plugin declares none or the parameters do not fit the stream.
    fn framing(&self, _params: &Params, _info: &StreamInfo) -> Option<Framing> {
        None
    }
}

/// What a detector does with the power in a Doppler band.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BandRole {
    /// Power here counts as motion (raises the score).
    Motion,
    /// Power here counts against motion (a reference or nuisance band: lowers the score).
    Nuisance,
}

impl fmt::Display for BandRole {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            BandRole::Motion => "motion",
            BandRole::Nuisance => "nuisance",
        })
    }
}

/// One Doppler band a detector declares: |f| in `[low_hz, high_hz]`.
///
/// For I/Q streams the band covers both signs (approach and recede), as the
/// built-in detectors select bins by |f|.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DopplerBand {
    /// Motion or nuisance.
    pub role: BandRole,
    /// Short name for listings and warnings (`"motion"`, `"reference"`, `"sway"`, `"cells under test"`).
    pub label: &'static str,
    /// Lower edge of |f|, Hz.
    pub low_hz: f64,
    /// Upper edge of |f|, Hz.
    pub high_hz: f64,
}

impl DopplerBand {
    /// True when `f_hz` (its magnitude) lies in the closed band.
    pub fn contains(&self, f_hz: f64) -> bool {
        let f = f_hz.abs();
        f >= self.low_hz && f <= self.high_hz
    }
}

/// A detector's theoretical operating point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NominalPoint {
    /// Score threshold set by the closed form.
    pub threshold: f64,
    /// Per-frame false-alarm probability the closed form promises at that threshold.
    pub frame_pfa: f64,
}

/// Declared resources of a configured detector.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Cost {
    /// State memory, bytes, at the data types a port to an MCU would use
    /// (as implemented here; say so in the plugin doc where they differ).
    pub state_bytes: usize,
    /// Arithmetic operations (multiply, add, compare) per input sample, an estimate.
    pub ops_per_sample: f64,
}

/// The names a choice parameter accepts: a list fixed at compile time (a
/// typed declaration's options) or names a plugin made at run time owns.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ChoiceNames {
    /// A list in the program.
    Static(&'static [&'static str]),
    /// Names made at run time.
    Owned(Vec<String>),
}

impl ChoiceNames {
    /// The names, in order.
    pub fn names(&self) -> Vec<&str> {
        match self {
            ChoiceNames::Static(names) => names.to_vec(),
            ChoiceNames::Owned(names) => names.iter().map(String::as_str).collect(),
        }
    }

    /// True when `name` is one of them.
    pub fn contains(&self, name: &str) -> bool {
        self.names().contains(&name)
    }

    /// The names joined by `separator`, for listings and messages.
    pub fn join(&self, separator: &str) -> String {
        self.names().join(separator)
    }
}

/// The kind and range of a parameter.
#[derive(Debug, Clone, PartialEq)]
pub enum ParamKind {
    /// A real number in `[min, max]`.
    Real {
        /// Smallest allowed value.
        min: f64,
        /// Largest allowed value.
        max: f64,
    },
    /// A whole number in `[min, max]`.
    Integer {
        /// Smallest allowed value.
        min: i64,
        /// Largest allowed value.
        max: i64,
    },
    /// One of a list of names.
    Choice(ChoiceNames),
    /// True or false.
    Flag,
    /// Free text (a program path, its arguments).
    Text,
}

/// A parameter value.
#[derive(Debug, Clone, PartialEq)]
pub enum ParamValue {
    /// A real number.
    Real(f64),
    /// A whole number.
    Integer(i64),
    /// A name (for [`ParamKind::Choice`]) or free text (for [`ParamKind::Text`]).
    Text(String),
    /// A flag.
    Flag(bool),
}

impl fmt::Display for ParamValue {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ParamValue::Real(x) => write!(f, "{x}"),
            ParamValue::Integer(i) => write!(f, "{i}"),
            ParamValue::Text(s) => f.write_str(s),
            ParamValue::Flag(b) => write!(f, "{b}"),
        }
    }
}

/// A declared parameter.
///
/// Its texts are `Cow`s: a typed declaration ([`crate::param_decl`]) borrows
/// `'static` strings, and a plugin made at run time (from a file it reads,
/// say) owns its names, so nothing needs to be leaked to make it.
#[derive(Debug, Clone, PartialEq)]
pub struct ParamSpec {
    /// Name, with its unit as a suffix where it has one (`frame_len`, `hold_s`, `low_hz`).
    pub name: Cow<'static, str>,
    /// Unit for display ("Hz", "s", "samples", "" for none).
    pub unit: Cow<'static, str>,
    /// What it does, one line.
    pub about: Cow<'static, str>,
    /// Kind and range.
    pub kind: ParamKind,
    /// Value used when the suite does not set it.
    pub default: DefaultValue,
    /// Whether a tuner may search this parameter, and over which range and scale
    /// (`None`: fixed at its given or default value; see [`crate::param_decl::TuneRange`]).
    pub tune: Option<crate::param_decl::TuneRange>,
}

/// A default that can live in a `static` table (or be owned by a plugin made at run time).
#[derive(Debug, Clone, PartialEq)]
pub enum DefaultValue {
    /// A real number.
    Real(f64),
    /// A whole number.
    Integer(i64),
    /// A name.
    Text(Cow<'static, str>),
    /// A flag.
    Flag(bool),
}

impl DefaultValue {
    fn to_value(&self) -> ParamValue {
        match self {
            DefaultValue::Real(x) => ParamValue::Real(*x),
            DefaultValue::Integer(i) => ParamValue::Integer(*i),
            DefaultValue::Text(s) => ParamValue::Text(s.to_string()),
            DefaultValue::Flag(b) => ParamValue::Flag(*b),
        }
    }
}

impl ParamSpec {
    /// The allowed values, for messages and listings.
    pub fn allowed(&self) -> String {
        match &self.kind {
            ParamKind::Real { min, max } => format!("a number in [{min}, {max}]"),
            ParamKind::Integer { min, max } => format!("a whole number in [{min}, {max}]"),
            ParamKind::Choice(names) => format!("one of {}", names.join(", ")),
            ParamKind::Flag => "true or false".to_string(),
            ParamKind::Text => "any text".to_string(),
        }
    }

    /// The default as a value.
    pub fn default_value(&self) -> ParamValue {
        self.default.to_value()
    }

    fn check(&self, value: &ParamValue) -> Result<ParamValue, String> {
        match (&self.kind, value) {
            (ParamKind::Real { min, max }, ParamValue::Real(x))
                if x.is_finite() && *x >= *min && *x <= *max =>
            {
                Ok(ParamValue::Real(*x))
            }
            (ParamKind::Real { min, max }, ParamValue::Integer(i))
                if (*i as f64) >= *min && (*i as f64) <= *max =>
            {
                Ok(ParamValue::Real(*i as f64))
            }
            (ParamKind::Integer { min, max }, ParamValue::Integer(i)) if i >= min && i <= max => {
                Ok(ParamValue::Integer(*i))
            }
            (ParamKind::Choice(names), ParamValue::Text(s)) if names.contains(s) => {
                Ok(value.clone())
            }
            (ParamKind::Flag, ParamValue::Flag(_)) => Ok(value.clone()),
            (ParamKind::Text, ParamValue::Text(_)) => Ok(value.clone()),
            _ => Err(format!("expected {}", self.allowed())),
        }
    }
}

/// The stream's sample rate, refused unless it is a positive finite number: the first check
/// of every plugin's `plan` and `cost`.
///
/// # Errors
/// A `ParamError` of `detector` on `sample_rate_hz`.
pub fn check_sample_rate(detector: &str, info: &StreamInfo) -> Result<f64, ParamError> {
    let fs = info.sample_rate_hz;
    if fs.is_finite() && fs > 0.0 {
        Ok(fs)
    } else {
        Err(ParamError::new(
            detector,
            "sample_rate_hz",
            fs,
            "the stream's sample rate must be a positive number",
        ))
    }
}

/// Every problem [`Params::resolve`] found (at least one), in the order the
/// parameters were given, so a suite author fixes them in one pass.
#[derive(Debug, Clone, PartialEq)]
pub struct ParamProblems(Vec<ParamError>);

impl std::ops::Deref for ParamProblems {
    type Target = [ParamError];
    fn deref(&self) -> &[ParamError] {
        &self.0
    }
}

impl fmt::Display for ParamProblems {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, problem) in self.0.iter().enumerate() {
            if i > 0 {
                f.write_str("; ")?;
            }
            write!(f, "{problem}")?;
        }
        Ok(())
    }
}

impl std::error::Error for ParamProblems {}

/// The first problem, for code that stops at one (a plugin's own tests, a
/// builder that reports one refusal); the suite loader reports them all.
impl From<ParamProblems> for ParamError {
    fn from(problems: ParamProblems) -> ParamError {
        problems
            .0
            .into_iter()
            .next()
            .expect("ParamProblems holds at least one problem")
    }
}

/// Resolved parameters: every declared parameter has a checked value.
///
/// A plugin reads them through its typed declarations
/// ([`crate::param_decl`]: `FRAME_LEN.get(&params)`), which never panic.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Params {
    /// The detector they were resolved for (empty for [`Params::defaults`]),
    /// for the messages of a read that finds no value.
    detector: String,
    values: BTreeMap<String, ParamValue>,
    /// The names the suite set (the rest hold defaults): lets a plugin take
    /// a band's unit from the parameters actually written (see `doppler`).
    given: BTreeSet<String>,
}

impl Params {
    /// Fills the defaults of `specs`, then applies `given` (name, value) pairs,
    /// checking names and ranges.
    ///
    /// # Errors
    /// Every unknown name (with the nearest known name suggested) and every
    /// value outside its range, all at once, in the order given.
    ///
    /// ```
    /// use echobench_core::detector::{DefaultValue, ParamKind, ParamSpec, ParamValue, Params};
    /// // A table written by hand (plugins write `IntegerParam { .. }.spec()`; see
    /// // `param_decl`), with an owned name as a plugin made at run time would have.
    /// let specs = [ParamSpec {
    ///     name: String::from("frame_len").into(), unit: "samples".into(), about: "frame length".into(),
    ///     kind: ParamKind::Integer { min: 8, max: 4096 }, default: DefaultValue::Integer(256),
    ///     tune: None,
    /// }];
    /// let p = Params::resolve("demo", &specs, &[]).unwrap();
    /// assert_eq!(p.value("frame_len"), Some(&ParamValue::Integer(256)));
    /// let bad = Params::resolve("demo", &specs, &[
    ///     ("frame_len".into(), ParamValue::Integer(-4)),
    ///     ("frame_ln".into(), ParamValue::Integer(64)),
    /// ]);
    /// let problems = bad.unwrap_err();
    /// assert_eq!(problems.len(), 2);
    /// assert!(problems[0].to_string().contains("whole number in [8, 4096]"));
    /// assert!(problems[1].to_string().contains("did you mean `frame_len`?"));
    /// ```
    pub fn resolve(
        detector: &str,
        specs: &[ParamSpec],
        given: &[(String, ParamValue)],
    ) -> Result<Params, ParamProblems> {
        let mut values: BTreeMap<String, ParamValue> = specs
            .iter()
            .map(|s| (s.name.to_string(), s.default_value()))
            .collect();
        let mut set = BTreeSet::new();
        let mut problems = Vec::new();
        for (name, value) in given {
            let Some(spec) = specs.iter().find(|s| s.name == name.as_str()) else {
                let names: Vec<&str> = specs.iter().map(|s| &*s.name).collect();
                let hint = nearest(name, &names).map_or_else(
                    || format!("known parameters: {}", names.join(", ")),
                    |n| format!("did you mean `{n}`?"),
                );
                problems.push(ParamError::new(
                    detector,
                    name,
                    value,
                    format!("unknown parameter ({hint})"),
                ));
                continue;
            };
            match spec.check(value) {
                Ok(checked) => {
                    values.insert(spec.name.to_string(), checked);
                    set.insert(spec.name.to_string());
                }
                Err(m) => problems.push(ParamError::new(detector, name, value, m)),
            }
        }
        if problems.is_empty() {
            Ok(Params {
                detector: detector.to_string(),
                values,
                given: set,
            })
        } else {
            Err(ParamProblems(problems))
        }
    }

    /// The defaults of `specs`.
    pub fn defaults(specs: &[ParamSpec]) -> Params {
        Params {
            detector: String::new(),
            values: specs
                .iter()
                .map(|s| (s.name.to_string(), s.default_value()))
                .collect(),
            given: BTreeSet::new(),
        }
    }

    /// True when the suite set `name` (even to its default value); false for a default.
    pub fn is_given(&self, name: &str) -> bool {
        self.given.contains(name)
    }

    /// The detector these parameters were resolved for (empty for [`Params::defaults`]).
    pub fn detector(&self) -> &str {
        &self.detector
    }

    /// The value of `name`, `None` when it is not declared. Plugins read their
    /// parameters through typed declarations ([`crate::param_decl`]); this is
    /// for code that lists or forwards values whatever their kind.
    pub fn value(&self, name: &str) -> Option<&ParamValue> {
        self.values.get(name)
    }

    /// All values, by name (for summaries).
    pub fn iter(&self) -> impl Iterator<Item = (&str, &ParamValue)> {
        self.values.iter().map(|(k, v)| (k.as_str(), v))
    }
}

/// Checks a finished score trace: finite values with non-decreasing frame ends.
///
/// The harness calls this on every detector's output, so a plugin that
/// returns NaN or scrambles its frame ends is reported, not silently scored.
///
/// # Errors
/// The index and a description of the first bad score.
pub fn check_scores(scores: &[FrameScore]) -> Result<(), (usize, String)> {
    let mut previous = 0;
    for (i, s) in scores.iter().enumerate() {
        if !s.value.is_finite() {
            return Err((
                i,
                format!(
                    "score {} of the frame ending at sample {} is not finite",
                    s.value, s.end_sample
                ),
            ));
        }
        if s.end_sample < previous {
            return Err((
                i,
                format!(
                    "frame end at sample {} comes after sample {previous}",
                    s.end_sample
                ),
            ));
        }
        previous = s.end_sample;
    }
    Ok(())
}

/// The message of a caught panic (`catch_unwind`'s payload), for reporting a plugin that
/// panicked as a failure of that plugin rather than of the whole run.
pub fn panic_message(payload: Box<dyn std::any::Any + Send>) -> String {
    if let Some(s) = payload.downcast_ref::<&str>() {
        format!("panicked: {s}")
    } else if let Some(s) = payload.downcast_ref::<String>() {
        format!("panicked: {s}")
    } else {
        "panicked".to_string()
    }
}

/// The stream an MCU-style test would feed: handy for plugin unit tests.
pub fn test_stream(sample_rate_hz: f64) -> StreamInfo {
    StreamInfo {
        sample_rate_hz,
        channels: Channels::Real,
        adc_bits: 12,
        carrier_hz: 24.125e9,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    static SPECS: [ParamSpec; 3] = [
        ParamSpec {
            name: Cow::Borrowed("low_hz"),
            unit: Cow::Borrowed("Hz"),
            about: Cow::Borrowed("lower band edge"),
            kind: ParamKind::Real { min: 0.0, max: 1e4 },
            default: DefaultValue::Real(10.0),
            tune: None,
        },
        ParamSpec {
            name: Cow::Borrowed("window"),
            unit: Cow::Borrowed(""),
            about: Cow::Borrowed("window"),
            kind: ParamKind::Choice(ChoiceNames::Static(&["hann", "rect"])),
            default: DefaultValue::Text(Cow::Borrowed("hann")),
            tune: None,
        },
        ParamSpec {
            name: Cow::Borrowed("smooth"),
            unit: Cow::Borrowed(""),
            about: Cow::Borrowed("smoothing"),
            kind: ParamKind::Flag,
            default: DefaultValue::Flag(false),
            tune: None,
        },
    ];

    #[test]
    fn defaults_and_overrides() {
        let p = Params::resolve(
            "t",
            &SPECS,
            &[
                ("low_hz".into(), ParamValue::Integer(20)),
                ("window".into(), ParamValue::Text("rect".into())),
            ],
        )
        .unwrap();
        assert_eq!(p.value("low_hz"), Some(&ParamValue::Real(20.0)));
        assert_eq!(p.value("window"), Some(&ParamValue::Text("rect".into())));
        assert_eq!(p.value("smooth"), Some(&ParamValue::Flag(false)));
        assert!(p.is_given("window") && !p.is_given("smooth"));
    }

    #[test]
    fn unknown_and_out_of_range_are_refused_with_names() {
        let e =
            Params::resolve("t", &SPECS, &[("low_hx".into(), ParamValue::Real(1.0))]).unwrap_err();
        assert!(e.to_string().contains("did you mean `low_hz`?"), "{e}");
        let e = Params::resolve(
            "t",
            &SPECS,
            &[("window".into(), ParamValue::Text("hamming".into()))],
        )
        .unwrap_err();
        assert!(e.to_string().contains("one of hann, rect"), "{e}");
        let e = Params::resolve(
            "t",
            &SPECS,
            &[("low_hz".into(), ParamValue::Real(f64::NAN))],
        )
        .unwrap_err();
        assert!(e.to_string().contains("number in [0, 10000]"), "{e}");
    }

    #[test]
    fn every_problem_is_reported_at_once_in_the_order_given() {
        let given = [
            ("low_hz".to_string(), ParamValue::Real(-1.0)),
            ("smooth".to_string(), ParamValue::Flag(true)),
            ("windw".to_string(), ParamValue::Text("hann".into())),
            ("window".to_string(), ParamValue::Text("kaiser".into())),
        ];
        let problems = Params::resolve("t", &SPECS, &given).unwrap_err();
        let named: Vec<&str> = problems.iter().map(|p| p.param.as_str()).collect();
        assert_eq!(named, ["low_hz", "windw", "window"]);
        assert!(problems[1].message.contains("did you mean `window`?"));
        assert_eq!(ParamError::from(problems.clone()).param, "low_hz");
        assert_eq!(problems.to_string().matches("detector `t`").count(), 3);
    }

    #[test]
    fn score_checks_find_nan_and_disorder() {
        let at = |end_sample: u64, value: f64| FrameScore { end_sample, value };
        assert!(check_scores(&[at(100, 1.0), at(200, 2.0), at(200, 0.5)]).is_ok());
        assert_eq!(check_scores(&[at(100, f64::NAN)]).unwrap_err().0, 0);
        assert_eq!(
            check_scores(&[at(200, 1.0), at(100, 1.0)]).unwrap_err().0,
            1
        );
    }

    #[test]
    fn frame_ends_become_seconds_by_one_division() {
        // 1/3 s is not exact in binary: the division must match `n as f64 / fs` bit for bit.
        let s = FrameScore {
            end_sample: 1000,
            value: 0.0,
        }
        .timed(3000.0);
        assert_eq!(s.t_s.to_bits(), (1000.0_f64 / 3000.0).to_bits());
    }
}
