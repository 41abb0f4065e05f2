//! The suite as read: which scenes, how many trials, which detectors, and how to score them.
//!
//! A suite is a YAML file (or the built-in default suite). Scenes are files
//! (paths relative to the suite file) or inline mappings, each with a label
//! saying whether it contains a target, and optionally a sweep: one field of
//! the scene set in turn to each value of a list (a walker's start range, a
//! fan's speed), each value giving a scene variant.
//!
//! **A product is the unit of comparison.** A suite holds one or more products, each one
//! sensor module sold into many rooms, with its own target and nuisance scenes. The module
//! (carrier, output, antenna, front end, ADC, tilt) belongs to the product; a scene keeps
//! only where the module is placed in its room (`position_m`, `azimuth_deg`). Thresholds,
//! operating points, rankings and the gate are per product, because a product ships one
//! module and its detector is tuned for that module alone. A suite without `products:` is
//! one product named after the suite.

use echobench_core::detector::{ParamValue, Params};
use echobench_scene::SceneSpec;

/// A whole suite, read and checked.
#[derive(Debug, Clone)]
pub struct Suite {
    /// Name, for outputs.
    pub name: String,
    /// Where it came from (a path, or `<built-in default suite>`).
    pub source: String,
    /// Seed of every trial's random streams.
    pub seed: u64,
    /// Test trials per scene variant (a scene may override it; 0 when the suite sets none).
    pub trials: u64,
    /// Calibration trials per scene variant (own seeds; used to fix thresholds; 0 when the
    /// suite sets none).
    pub calibration_trials: u64,
    /// The products, in suite order (at least one).
    pub products: Vec<Product>,
    /// The scenes of every product, product by product, in suite order.
    pub scenes: Vec<SuiteScene>,
    /// The detectors, each with its label and parameters.
    pub detectors: Vec<DetectorEntry>,
    /// How score traces become alarms.
    pub alarm: AlarmSpec,
    /// How alarms are scored.
    pub scoring: ScoringSpec,
    /// Where a detector's Doppler bands miss a target scene's motion, found at load from
    /// the scene's kinematics (the same findings `check` prints as warnings).
    pub coverage: Vec<CoverageFinding>,
}

/// A detector whose bands miss a target scene variant's Doppler (see `echobench-coverage`).
#[derive(Debug, Clone, PartialEq)]
pub struct CoverageFinding {
    /// Scene id.
    pub scene: String,
    /// Swept value, if swept.
    pub sweep_value: Option<String>,
    /// Detector label.
    pub detector: String,
    /// Short form for tables: `out of band (34 % of the echo energy in band)`, ...
    pub short: String,
    /// The whole warning, with the numbers.
    pub message: String,
}

/// One product: a sensor module and the rooms it is sold into.
#[derive(Debug, Clone, PartialEq)]
pub struct Product {
    /// Unique name in the suite (part of every output row).
    pub name: String,
    /// Free text shown in reports.
    pub about: String,
    /// The module as the product states it (placement fields are the scenes'); `None` when
    /// the product takes the module its scenes share.
    pub module: Option<echobench_scene::spec::SensorSpec>,
    /// What the product's output is for, and how it is judged.
    pub kind: ProductKind,
    /// The detection zone to map for it (`echobench zone`), when the suite asks for one.
    pub zone: Option<ProductZone>,
}

/// A product's detection zone: the floor its walkers cross, and the scene that gives the
/// room, the module's placement and the noise they walk through.
#[derive(Debug, Clone, PartialEq)]
pub struct ProductZone {
    /// Id of one of the product's synthetic scenes: its room, placement, noise and
    /// nuisances stay, its targets are replaced by each walk's walker (first sweep point).
    pub scene: String,
    /// Floor, grid, walkers and timing.
    pub spec: echobench_zone::ZoneSpec,
    /// Where the block is in the suite file.
    pub location: echobench_yaml_reader::Location,
}

/// What a product's output is for.
#[derive(Debug, Clone, PartialEq, Default)]
pub enum ProductKind {
    /// An alarm: onsets counted against motion events (detection, false alarms per hour).
    #[default]
    Intrusion,
    /// An output pin held on by a retrigger timer (a light, a fan, a display), judged on
    /// the pin against who is in the room.
    Presence(PresenceOutput),
}

impl ProductKind {
    /// `intrusion` or `presence`, as in suite files and outputs.
    pub fn name(&self) -> &'static str {
        match self {
            ProductKind::Intrusion => "intrusion",
            ProductKind::Presence(_) => "presence",
        }
    }

    /// The presence output, for a presence product.
    pub fn presence(&self) -> Option<&PresenceOutput> {
        match self {
            ProductKind::Presence(p) => Some(p),
            ProductKind::Intrusion => None,
        }
    }
}

/// The retrigger timer of a presence product and the budget its thresholds are chosen for.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct PresenceOutput {
    /// Any alarm frame restarts a hold of this long; the output is on while it runs, s.
    pub hold_s: f64,
    /// Once on, the output stays on at least this long, s (0: no minimum).
    pub min_on_s: f64,
    /// After switching off, the output cannot switch on for this long, s (0: none).
    pub lockout_s: f64,
    /// False switch-ons per day of empty time at which operating thresholds are chosen,
    /// in each room as the product's threshold rule says (e.g. 24 and 1).
    pub false_switch_ons_per_day: Vec<f64>,
    /// Hold times of the trade-off curve, s, ascending (the product's own hold among them).
    pub hold_sweep_s: Vec<f64>,
}

impl PresenceOutput {
    /// The product's timer.
    ///
    /// # Errors
    /// A hold, minimum on-time or lock-out the presence scorer refuses (the suite loader
    /// refuses these first).
    pub fn timer(&self) -> Result<echobench_presence::Timer, echobench_presence::PresenceError> {
        echobench_presence::Timer::new(self.hold_s)?
            .with_min_on_s(self.min_on_s)?
            .with_lockout_s(self.lockout_s)
    }
}

impl Suite {
    /// The suite cut to one product: its scenes only, and that product alone.
    ///
    /// Trial seeds depend on the suite seed and scene ids only, so the cut suite runs
    /// exactly the trials the product runs inside the whole suite.
    pub fn product_view(&self, product: &str) -> Suite {
        Suite {
            products: self
                .products
                .iter()
                .filter(|p| p.name == product)
                .cloned()
                .collect(),
            scenes: self
                .scenes
                .iter()
                .filter(|s| s.product == product)
                .cloned()
                .collect(),
            ..self.clone()
        }
    }
}

/// Whether a scene contains something to detect.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SceneLabel {
    /// It contains a target: a trial is a positive for the trial-level ROC.
    Target,
    /// It contains only nuisances or nothing: a negative.
    Nuisance,
}

/// One scene entry of a suite, expanded into its variants.
#[derive(Debug, Clone)]
pub struct SuiteScene {
    /// Stable id (the scene's name, or the entry's `id`): part of every trial's seed.
    pub id: String,
    /// The product whose module this scene runs with.
    pub product: String,
    /// Target or nuisance.
    pub label: SceneLabel,
    /// Test trials per variant.
    pub trials: u64,
    /// Calibration trials per variant.
    pub calibration_trials: u64,
    /// The swept field's path, when there is a sweep.
    pub sweep_field: Option<String>,
    /// The variants: one without a sweep, one per sweep value with it.
    pub variants: Vec<SceneVariant>,
    /// Recorded signal in place of synthesis, when the entry has `capture` (the scene then
    /// describes the module and, with a mix level, what is added to the recording).
    pub capture: Option<CaptureSource>,
    /// A rare event (`occurrences_per_day` in the suite): each test trial holds one
    /// occurrence, scored for whether it raises a false alarm; the scene has no calibration
    /// trials and no part in the steady false-alarm rate.
    pub occurrences_per_day: Option<f64>,
}

impl SuiteScene {
    /// The swept field's unit, from its name ([`unit_of_field`]).
    pub fn sweep_unit(&self) -> Option<&'static str> {
        self.sweep_field.as_deref().and_then(unit_of_field)
    }
}

/// The unit a field path's last name gives by the project's naming rule, a unit suffix on
/// every quantity (`start_m[0]` → `m`, `speed_mps` → `m/s`); `None` for a name without one.
///
/// ```
/// use echobench_suite::unit_of_field;
/// assert_eq!(unit_of_field("actors[0].path.start_m[0]"), Some("m"));
/// assert_eq!(unit_of_field("actors[1].speed_mps"), Some("m/s"));
/// assert_eq!(unit_of_field("actors[0].kind"), None);
/// ```
pub fn unit_of_field(field: &str) -> Option<&'static str> {
    let last = field.rsplit('.').next().unwrap_or(field);
    let name = last.split('[').next().unwrap_or(last);
    let units: [(&str, &str); 10] = [
        ("_mps", "m/s"),
        ("_hz", "Hz"),
        ("_db", "dB"),
        ("_deg", "°"),
        ("_rpm", "rpm"),
        ("_dbsm", "dBsm"),
        ("_m2", "m²"),
        ("_m", "m"),
        ("_s", "s"),
        ("_v", "V"),
    ];
    units
        .iter()
        .find(|(suffix, _)| name.ends_with(suffix))
        .map(|(_, unit)| *unit)
}

/// Recordings as a scene's signal: each is cut into trials of the scene's duration.
#[derive(Debug, Clone)]
pub struct CaptureSource {
    /// How the files' numbers become volts (the scene's ADC and front-end bias).
    pub adc: echobench_capture::AdcDescription,
    /// How the files are read (WAV, or CSV with its rate and value kind).
    pub format: echobench_capture::CaptureFormat,
    /// Gain applied to the scene's synthesized signal before it is added (`mix_db`), if any.
    pub mix_gain: Option<f64>,
    /// Test trials: one window of one recording each.
    pub test: Vec<CaptureTrial>,
    /// Calibration trials.
    pub calibration: Vec<CaptureTrial>,
}

/// One trial cut from a recording.
#[derive(Debug, Clone)]
pub struct CaptureTrial {
    /// The recording.
    pub path: std::path::PathBuf,
    /// Its sample rate, Hz (resampled to the scene's rate when they differ).
    pub file_rate_hz: f64,
    /// First frame of the trial in the file.
    pub start_frame: u64,
    /// Frames of the trial in the file.
    pub frames: u64,
    /// Labelled target intervals in trial time, s.
    pub targets: Vec<echobench_core::Interval>,
}

/// One scene variant.
#[derive(Debug, Clone)]
pub struct SceneVariant {
    /// Index of the sweep point (0 without a sweep).
    pub sweep_point: u64,
    /// The swept value as written (e.g. `"6"`), `None` without a sweep.
    pub sweep_value: Option<String>,
    /// The swept value as a number, when it is one (for detection-vs-range tables).
    pub sweep_number: Option<f64>,
    /// The scene with the sweep applied.
    pub scene: SceneSpec,
}

/// One detector configuration of a suite.
#[derive(Debug, Clone, PartialEq)]
pub struct DetectorEntry {
    /// Unique label in the suite (defaults to the plugin id).
    pub label: String,
    /// The plugin's id.
    pub plugin: String,
    /// Parameters set by the suite (the rest take their defaults), as written (an `external`
    /// command's relative path already joined to the suite's folder).
    pub params: Vec<(String, ParamValue)>,
    /// Every declared parameter's value, resolved against the plugin at load (the given
    /// ones checked, the rest at their defaults): what the runner configures the detector
    /// with, so parameters are resolved once.
    pub resolved: Params,
}

/// Alarm logic, the same for every detector.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AlarmSpec {
    /// Non-retriggerable hold after a counted alarm, s.
    pub hold_s: f64,
    /// Optional M-of-N: an alarm needs M of the last N frames above threshold.
    pub m_of_n: Option<(u32, u32)>,
}

/// Scoring settings.
#[derive(Debug, Clone, PartialEq)]
pub struct ScoringSpec {
    /// An alarm up to this long before an event's start still detects it, s (τ_pre).
    pub early_s: f64,
    /// An alarm up to this long after an event's end still detects it, s (τ_post).
    pub late_s: f64,
    /// False-alarm rates at which operating thresholds are chosen, per hour (e.g. 1 and 1/24).
    pub target_false_alarms_per_hour: Vec<f64>,
    /// Number of thresholds in each detector's ROC sweep.
    pub threshold_count: usize,
    /// Absolute false-alarm budget for the CI gate, per hour (`None`: no budget).
    pub false_alarm_budget_per_hour: Option<f64>,
    /// How the operating threshold for a target rate is chosen from the nuisance scenes.
    pub threshold_rule: ThresholdRule,
    /// What the gate's budget check judges the candidate's rate by: the test trials' counts
    /// (`false`, the default) or the calibration rooms' tail fit at the pinned threshold.
    pub budget_from_tail: bool,
}

/// How calibration turns a target false-alarm rate into an operating threshold.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ThresholdRule {
    /// The lowest threshold whose calibration rate meets the target in *every* nuisance
    /// scene variant of the product (the worst room): a product must hold its budget in
    /// each environment it is sold into, not on their average.
    #[default]
    WorstRoom,
    /// The lowest threshold whose rate, pooled over all calibration noise-only time of
    /// the product (nuisance and target scenes), meets the target.
    Pooled,
}

impl ThresholdRule {
    /// The name used in suite files and outputs.
    pub fn name(self) -> &'static str {
        match self {
            ThresholdRule::WorstRoom => "worst_room",
            ThresholdRule::Pooled => "pooled",
        }
    }
}

impl Default for AlarmSpec {
    fn default() -> Self {
        AlarmSpec {
            hold_s: 5.0,
            m_of_n: None,
        }
    }
}

impl Default for ScoringSpec {
    fn default() -> Self {
        ScoringSpec {
            early_s: 0.5,
            late_s: 2.0,
            target_false_alarms_per_hour: vec![1.0, 1.0 / 24.0],
            threshold_count: 120,
            false_alarm_budget_per_hour: None,
            threshold_rule: ThresholdRule::WorstRoom,
            budget_from_tail: false,
        }
    }
}
