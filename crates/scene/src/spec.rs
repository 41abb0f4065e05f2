//! The scene file: sensor, environment and actors, read strictly.

use crate::actors::{read_actor, ActorSpec};
use crate::param::{Bounds, Param, ParamFields};
use echobench_core::Channels;
use echobench_yaml_reader::{parse, FromNode, Limits, Node, Reader, Report};

/// Most output samples one trial may hold (50 M samples, 200 MB as f32): a
/// trial is written whole by `echobench synth`, so its length is capped.
pub const MAX_SAMPLES_PER_TRIAL: f64 = 50.0e6;

/// Longest trial, s (one day): long negative trials give false-alarm exposure,
/// but a trial is also the unit of parallel work and of ground-truth sampling.
pub const MAX_TRIAL_DURATION_S: f64 = 86_400.0;

/// A scene: one sensor, its environment and what moves in front of it.
#[derive(Debug, Clone, PartialEq)]
pub struct SceneSpec {
    /// A short name (defaults to the file stem).
    pub name: String,
    /// Free text shown in reports.
    pub description: String,
    /// Length of one trial, seconds.
    pub duration_s: f64,
    /// The sensor under test.
    pub sensor: SensorSpec,
    /// The zone in which a target counts as "to be detected".
    pub coverage: CoverageSpec,
    /// Noise and interference.
    pub environment: EnvironmentSpec,
    /// Everything that moves.
    pub actors: Vec<ActorSpec>,
}

/// The sensor: RF, antenna, front end, ADC. Its numbers are fixed: the sensor
/// is the device under test; the room and what moves in it vary per trial.
#[derive(Debug, Clone, PartialEq)]
pub struct SensorSpec {
    /// Carrier frequency, Hz.
    pub carrier_hz: f64,
    /// ADC sample rate, Hz.
    pub sample_rate_hz: f64,
    /// Single-channel (`real`) or quadrature (`iq`) mixer output.
    pub output: Channels,
    /// Position in the room, m.
    pub position_m: [f64; 3],
    /// Boresight azimuth from +x towards +y, degrees.
    pub azimuth_deg: f64,
    /// Boresight elevation, degrees (negative tilts down).
    pub elevation_deg: f64,
    /// Full −3 dB beam width in azimuth, degrees.
    pub beam_azimuth_3db_deg: f64,
    /// Full −3 dB beam width in elevation, degrees.
    pub beam_elevation_3db_deg: f64,
    /// Floor of the side and back lobes of the two-way pattern, dB.
    pub beam_floor_db: f64,
    /// Transmit power, dBm.
    pub tx_power_dbm: f64,
    /// Gain of each antenna on boresight, dBi.
    pub antenna_gain_dbi: f64,
    /// Mixer conversion loss, dB.
    pub conversion_loss_db: f64,
    /// Mixer load, Ω.
    pub load_ohm: f64,
    /// DC at the mixer output from TX leakage and static clutter, V.
    pub mixer_dc_v: f64,
    /// Slow (thermal) drift of that DC.
    pub drift: Option<DriftSpec>,
    /// The analog band-pass and amplifier.
    pub front_end: FrontEndSpec,
    /// The converter.
    pub adc: AdcSpec,
}

/// Slow drift of the mixer DC level.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DriftSpec {
    /// RMS of the drift, V.
    pub rms_v: f64,
    /// Correlation time, s.
    pub time_constant_s: f64,
}

/// The analog front end: first-order high-pass and low-pass sections, a gain, the op-amp's output swing.
#[derive(Debug, Clone, PartialEq)]
pub struct FrontEndSpec {
    /// High-pass (coupling) corners, Hz, one per first-order section.
    pub high_pass_hz: Vec<f64>,
    /// Low-pass corners, Hz, one per first-order section.
    pub low_pass_hz: Vec<f64>,
    /// Total voltage gain, dB.
    pub gain_db: f64,
    /// Op-amp output swing [low, high], V.
    pub rails_v: [f64; 2],
    /// Output bias (mid-rail), V.
    pub bias_v: f64,
}

/// The ADC: unipolar, 0 V to full scale.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AdcSpec {
    /// Resolution, bits (1–24).
    pub bits: u8,
    /// Full-scale input, V.
    pub full_scale_v: f64,
}

/// Where a target must be to count as present: a horizontal range and beam sector.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CoverageSpec {
    /// Largest horizontal distance from the sensor, m.
    pub range_m: f64,
    /// Half-angle of the sector about the boresight azimuth, degrees.
    pub azimuth_half_deg: f64,
}

/// Noise and interference at the mixer output.
#[derive(Debug, Clone, PartialEq)]
pub struct EnvironmentSpec {
    /// Strong static reflectors (they set the mixer DC with `mixer_dc_v`).
    pub static_clutter: Vec<StaticReflector>,
    /// White noise density at the mixer output, V/√Hz.
    pub white_noise_v_per_rthz: Param,
    /// 1/f noise corner (where it equals the white level), Hz; `None` for none.
    pub flicker_corner_hz: Option<Param>,
    /// Mains hum.
    pub mains: Option<MainsSpec>,
    /// Gas-discharge lamp flicker at twice mains.
    pub lamp: Option<LampSpec>,
    /// Impulsive radio bursts.
    pub radio_bursts: Option<BurstSpec>,
    /// A neighbouring sensor's beat tone.
    pub neighbour: Option<NeighbourSpec>,
}

/// A static reflector.
#[derive(Debug, Clone, PartialEq)]
pub struct StaticReflector {
    /// Position, m.
    pub position_m: [Param; 3],
    /// RCS, m².
    pub rcs_m2: Param,
}

/// Mains hum lines.
#[derive(Debug, Clone, PartialEq)]
pub struct MainsSpec {
    /// 50 or 60 Hz.
    pub frequency_hz: f64,
    /// Amplitudes of the fundamental and its harmonics, V at the mixer output.
    pub harmonics_v: Vec<Param>,
}

/// Lamp flicker lines at 2·f_mains and harmonics.
#[derive(Debug, Clone, PartialEq)]
pub struct LampSpec {
    /// Amplitudes of the 2·f_mains line and its harmonics, V.
    pub harmonics_v: Vec<Param>,
}

/// Impulsive radio bursts.
#[derive(Debug, Clone, PartialEq)]
pub struct BurstSpec {
    /// Mean rate of random bursts, per second.
    pub rate_hz: Param,
    /// Optional periodic train interval (e.g. a 102.4 ms beacon), s.
    pub period_s: Option<Param>,
    /// Pulse width, s.
    pub width_s: Param,
    /// Pulse amplitude at the mixer output, V.
    pub amplitude_v: Param,
    /// Spread of the amplitude, dB (log-normal).
    pub amplitude_spread_db: Param,
}

/// A neighbouring sensor's beat tone.
#[derive(Debug, Clone, PartialEq)]
pub struct NeighbourSpec {
    /// Amplitude at the mixer output, V.
    pub amplitude_v: Param,
    /// Mean carrier offset between the two sensors, Hz.
    pub offset_hz: Param,
    /// Peak drift of the offset, Hz.
    pub drift_hz: Param,
    /// Period of the drift, s.
    pub drift_period_s: Param,
}

const SCENE_FIELDS_LIMITS: Limits = Limits {
    max_bytes: 1 << 20,
    max_nodes: 100_000,
    max_depth: 32,
};

/// Reads a scene from YAML text; `file` names it in messages and gives the default name.
///
/// # Errors
/// A report listing every problem found (syntax, unknown or missing fields,
/// wrong types, impossible physics). Warnings ride along in `Ok` via [`load_scene_text_with_warnings`].
pub fn load_scene_text(file: &str, text: &str) -> Result<SceneSpec, Report> {
    load_scene_text_with_warnings(file, text).map(|(scene, _)| scene)
}

/// Like [`load_scene_text`], also returning the warnings (legal but suspicious settings).
///
/// # Errors
/// As [`load_scene_text`].
pub fn load_scene_text_with_warnings(
    file: &str,
    text: &str,
) -> Result<(SceneSpec, Report), Report> {
    let root = parse(file, text, &SCENE_FIELDS_LIMITS)?;
    load_scene_node(file, &root)
}

/// Reads a scene from a parsed tree (used by suites with inline scenes).
///
/// # Errors
/// As [`load_scene_text`].
pub fn load_scene_node(file: &str, root: &Node) -> Result<(SceneSpec, Report), Report> {
    let mut reader = Reader::new(file);
    let default_name = std::path::Path::new(file)
        .file_stem()
        .map_or_else(|| "scene".to_string(), |s| s.to_string_lossy().into_owned());
    let scene = read_scene(root, &default_name, &mut reader);
    let report = reader.finish();
    match scene {
        Some(scene) if !report.has_errors() => Ok((scene, report)),
        _ => Err(report),
    }
}

fn read_scene(root: &Node, default_name: &str, reader: &mut Reader) -> Option<SceneSpec> {
    let mut f = reader.fields(root, "")?;
    let name = f.optional_or("name", default_name.to_string());
    let description = f.optional_or("description", String::new());
    let duration_s: Option<f64> = f.required("duration_s");
    let sensor: Option<SensorSpec> = f.required("sensor");
    let coverage_node = f.raw("coverage");
    let environment = match f.raw("environment") {
        Some(node) => read_environment(node, "environment", f.reader()),
        None => Some(EnvironmentSpec::quiet()),
    };
    let mut actors = Vec::new();
    let mut actors_ok = true;
    if let Some(node) = f.raw("actors") {
        match &node.value {
            echobench_yaml_reader::Value::Seq(items) => {
                for (i, item) in items.iter().enumerate() {
                    match read_actor(item, &format!("actors[{i}]"), i, f.reader()) {
                        Some(actor) => actors.push(actor),
                        None => actors_ok = false,
                    }
                }
            }
            _ => {
                f.error_at(
                    "actors",
                    format!("expected a list of actors, found {}", node.kind_name()),
                );
                actors_ok = false;
            }
        }
    }
    if let Some(d) = duration_s {
        if d <= 0.0 {
            f.error_at("duration_s", "must be positive");
        } else if d > MAX_TRIAL_DURATION_S {
            f.error_at("duration_s", format!("{d} s is longer than the cap of {MAX_TRIAL_DURATION_S} s (one day) per trial; use more trials"));
        }
    }
    for (i, actor) in actors.iter().enumerate() {
        if actors[..i].iter().any(|a: &ActorSpec| a.id == actor.id) {
            let location = root.get("actors").and_then(|list| match &list.value {
                echobench_yaml_reader::Value::Seq(items) => items
                    .get(i)
                    .map(|n| n.get("id").map_or(n.location, |id| id.location)),
                _ => None,
            });
            f.reader().error(
                location.unwrap_or(root.location),
                &format!("actors[{i}].id"),
                format!("actor id `{}` is used twice; ids must be unique", actor.id),
            );
        }
    }
    f.finish();
    let sensor = sensor?;
    let duration_s = duration_s?;
    let coverage = match coverage_node {
        Some(node) => read_coverage(node, &sensor, reader)?,
        None => CoverageSpec {
            range_m: 10.0,
            azimuth_half_deg: 0.5 * sensor.beam_azimuth_3db_deg,
        },
    };
    if duration_s > 0.0 && duration_s * sensor.sample_rate_hz > MAX_SAMPLES_PER_TRIAL {
        reader.error(
            root.get("duration_s").map_or(root.location, |n| n.location),
            "duration_s",
            format!(
                "{duration_s} s at {} Hz is {:.0} samples, more than the cap of {:.0} samples per trial (200 MB as f32); split it into several trials",
                sensor.sample_rate_hz,
                duration_s * sensor.sample_rate_hz,
                MAX_SAMPLES_PER_TRIAL
            ),
        );
    }
    let environment = environment?;
    if !actors_ok {
        return None;
    }
    Some(SceneSpec {
        name,
        description,
        duration_s,
        sensor,
        coverage,
        environment,
        actors,
    })
}

fn read_coverage(node: &Node, sensor: &SensorSpec, reader: &mut Reader) -> Option<CoverageSpec> {
    let mut f = reader.fields(node, "coverage")?;
    let range_m: Option<f64> = f.required("range_m");
    let azimuth_half_deg = f.optional_or("azimuth_half_deg", 0.5 * sensor.beam_azimuth_3db_deg);
    if let Some(r) = range_m {
        if r <= 0.0 {
            f.error_at("range_m", "must be positive");
        }
    }
    if !(0.0..=180.0).contains(&azimuth_half_deg) || azimuth_half_deg == 0.0 {
        f.error_at("azimuth_half_deg", "must be in (0, 180] degrees");
    }
    f.finish();
    Some(CoverageSpec {
        range_m: range_m?,
        azimuth_half_deg,
    })
}

impl EnvironmentSpec {
    /// A noise floor only: 30 nV/√Hz white noise (a typical module floor order of magnitude, from memory).
    pub fn quiet() -> Self {
        EnvironmentSpec {
            static_clutter: Vec::new(),
            white_noise_v_per_rthz: Param::Fixed(30e-9),
            flicker_corner_hz: None,
            mains: None,
            lamp: None,
            radio_bursts: None,
            neighbour: None,
        }
    }
}

/// Reads a fixed-length list of params (e.g. a position whose coordinates may be drawn).
pub fn read_param_array<const N: usize>(
    node: &Node,
    path: &str,
    bounds: Bounds,
    reader: &mut Reader,
) -> Option<[Param; N]> {
    match &node.value {
        echobench_yaml_reader::Value::Seq(items) if items.len() == N => {
            let mut out: Vec<Param> = Vec::with_capacity(N);
            let mut ok = true;
            for (i, item) in items.iter().enumerate() {
                match Param::read(item, &format!("{path}[{i}]"), bounds, reader) {
                    Some(p) => out.push(p),
                    None => ok = false,
                }
            }
            if !ok {
                return None;
            }
            out.try_into().ok()
        }
        _ => {
            reader.error(
                node.location,
                path,
                format!("expected a list of {N} numbers"),
            );
            None
        }
    }
}

fn read_params(node: &Node, path: &str, bounds: Bounds, reader: &mut Reader) -> Option<Vec<Param>> {
    match &node.value {
        echobench_yaml_reader::Value::Seq(items) if !items.is_empty() => {
            let mut out = Vec::new();
            let mut ok = true;
            for (i, item) in items.iter().enumerate() {
                match Param::read(item, &format!("{path}[{i}]"), bounds, reader) {
                    Some(p) => out.push(p),
                    None => ok = false,
                }
            }
            ok.then_some(out)
        }
        _ => {
            reader.error(
                node.location,
                path,
                "expected a non-empty list of amplitudes",
            );
            None
        }
    }
}

fn read_environment(node: &Node, path: &str, reader: &mut Reader) -> Option<EnvironmentSpec> {
    let mut f = reader.fields(node, path)?;
    let mut ok = true;
    let mut static_clutter = Vec::new();
    if let Some(list) = f.raw("static_clutter") {
        let list_path = f.path_of("static_clutter");
        match &list.value {
            echobench_yaml_reader::Value::Seq(items) => {
                for (i, item) in items.iter().enumerate() {
                    let item_path = format!("{list_path}[{i}]");
                    let Some(mut g) = f.reader().fields(item, &item_path) else {
                        ok = false;
                        continue;
                    };
                    let position = g.raw("position_m");
                    let rcs_m2 = g.param("rcs_m2", Bounds::POSITIVE);
                    let position_path = g.path_of("position_m");
                    let position_m = match position {
                        Some(p) => {
                            read_param_array::<3>(p, &position_path, Bounds::ANY, g.reader())
                        }
                        None => {
                            g.error_at("position_m", "missing required field");
                            None
                        }
                    };
                    g.finish();
                    match (position_m, rcs_m2) {
                        (Some(position_m), Some(rcs_m2)) => {
                            static_clutter.push(StaticReflector { position_m, rcs_m2 })
                        }
                        _ => ok = false,
                    }
                }
            }
            _ => {
                f.error_at("static_clutter", "expected a list of reflectors");
                ok = false;
            }
        }
    }
    let white_noise_v_per_rthz = f.param_or("white_noise_v_per_rthz", Bounds::NON_NEGATIVE, 30e-9);
    let flicker_corner_hz = f.param_opt("flicker_corner_hz", Bounds::POSITIVE);
    let mains = match f.raw("mains") {
        Some(node) => {
            let p = f.path_of("mains");
            let r = f.reader();
            let mut g = r.fields(node, &p)?;
            let frequency_hz: Option<f64> = g.required("frequency_hz");
            if let Some(hz) = frequency_hz {
                if hz != 50.0 && hz != 60.0 {
                    g.error_at("frequency_hz", format!("mains is 50 or 60 Hz, found {hz}"));
                }
            }
            let harmonics = g.raw("harmonics_v");
            let hp = g.path_of("harmonics_v");
            let harmonics_v = match harmonics {
                Some(h) => read_params(h, &hp, Bounds::NON_NEGATIVE, g.reader()),
                None => {
                    g.error_at("harmonics_v", "missing required field");
                    None
                }
            };
            g.finish();
            match (frequency_hz, harmonics_v) {
                (Some(frequency_hz), Some(harmonics_v)) => Some(MainsSpec {
                    frequency_hz,
                    harmonics_v,
                }),
                _ => {
                    ok = false;
                    None
                }
            }
        }
        None => None,
    };
    let lamp = match f.raw("lamp") {
        Some(node) => {
            let p = f.path_of("lamp");
            let mut g = f.reader().fields(node, &p)?;
            let harmonics = g.raw("harmonics_v");
            let hp = g.path_of("harmonics_v");
            let harmonics_v = match harmonics {
                Some(h) => read_params(h, &hp, Bounds::NON_NEGATIVE, g.reader()),
                None => {
                    g.error_at("harmonics_v", "missing required field");
                    None
                }
            };
            g.finish();
            match harmonics_v {
                Some(harmonics_v) => Some(LampSpec { harmonics_v }),
                None => {
                    ok = false;
                    None
                }
            }
        }
        None => None,
    };
    if lamp.is_some() && mains.is_none() {
        f.error_at(
            "lamp",
            "lamp flicker runs at twice the mains frequency: add `mains` with its frequency_hz",
        );
        ok = false;
    }
    let radio_bursts = match f.raw("radio_bursts") {
        Some(node) => {
            let p = f.path_of("radio_bursts");
            let mut g = f.reader().fields(node, &p)?;
            let rate_hz = g.param_or("rate_hz", Bounds::NON_NEGATIVE, 0.0);
            let period_s = g.param_opt("period_s", Bounds::POSITIVE);
            let width_s = g.param("width_s", Bounds::POSITIVE);
            let amplitude_v = g.param("amplitude_v", Bounds::NON_NEGATIVE);
            let amplitude_spread_db = g.param_or("amplitude_spread_db", Bounds::NON_NEGATIVE, 0.0);
            g.finish();
            let spec = match (width_s, amplitude_v) {
                (Some(width_s), Some(amplitude_v)) => Some(BurstSpec {
                    rate_hz,
                    period_s,
                    width_s,
                    amplitude_v,
                    amplitude_spread_db,
                }),
                _ => None,
            };
            if spec.is_none() {
                ok = false;
            }
            spec
        }
        None => None,
    };
    let neighbour = match f.raw("neighbour") {
        Some(node) => {
            let p = f.path_of("neighbour");
            let mut g = f.reader().fields(node, &p)?;
            let amplitude_v = g.param("amplitude_v", Bounds::NON_NEGATIVE);
            let offset_hz = g.param("offset_hz", Bounds::ANY);
            let drift_hz = g.param_or("drift_hz", Bounds::NON_NEGATIVE, 0.0);
            let drift_period_s = g.param_or("drift_period_s", Bounds::POSITIVE, 60.0);
            g.finish();
            match (amplitude_v, offset_hz) {
                (Some(amplitude_v), Some(offset_hz)) => Some(NeighbourSpec {
                    amplitude_v,
                    offset_hz,
                    drift_hz,
                    drift_period_s,
                }),
                _ => {
                    ok = false;
                    None
                }
            }
        }
        None => None,
    };
    f.finish();
    ok.then_some(EnvironmentSpec {
        static_clutter,
        white_noise_v_per_rthz,
        flicker_corner_hz,
        mains,
        lamp,
        radio_bursts,
        neighbour,
    })
}

impl FromNode for SensorSpec {
    fn from_node(node: &Node, path: &str, reader: &mut Reader) -> Option<Self> {
        let mut f = reader.fields(node, path)?;
        let carrier_hz: Option<f64> = f.required("carrier_hz");
        let sample_rate_hz: Option<f64> = f.required("sample_rate_hz");
        let output = match f.choice_or("output", &["real", "iq"], "real") {
            "iq" => Channels::Iq,
            _ => Channels::Real,
        };
        let position_m = f.optional_or("position_m", [0.0, 0.0, 1.0]);
        let azimuth_deg = f.optional_or("azimuth_deg", 0.0);
        let elevation_deg = f.optional_or("elevation_deg", 0.0);
        // Defaults: an 80° × 40° patch-antenna module (docs/reference/radar-physics.md#r5 uses the
        // 80° beam); a −25 dB lobe floor (common practice for small patch arrays); 10 dBm and 6 dBi
        // per antenna as in the range-equation example of docs/reference/radar-physics.md#r4; 7 dB
        // mixer conversion loss and a 50 Ω load (common practice for single-diode / transistor
        // mixers).
        let beam_azimuth_3db_deg = f.optional_or("beam_azimuth_3db_deg", 80.0);
        let beam_elevation_3db_deg = f.optional_or("beam_elevation_3db_deg", 40.0);
        let beam_floor_db = f.optional_or("beam_floor_db", -25.0);
        let tx_power_dbm = f.optional_or("tx_power_dbm", 10.0);
        let antenna_gain_dbi = f.optional_or("antenna_gain_dbi", 6.0);
        let conversion_loss_db = f.optional_or("conversion_loss_db", 7.0);
        let load_ohm = f.optional_or("load_ohm", 50.0);
        let mixer_dc_v = f.optional_or("mixer_dc_v", 0.0);
        let drift = f.raw("drift").and_then(|n| {
            let p = f.path_of("drift");
            let mut g = f.reader().fields(n, &p)?;
            let rms_v: Option<f64> = g.required("rms_v");
            let time_constant_s: Option<f64> = g.required("time_constant_s");
            if rms_v.is_some_and(|v| v < 0.0) {
                g.error_at("rms_v", "must not be negative");
            }
            if time_constant_s.is_some_and(|v| v <= 0.0) {
                g.error_at("time_constant_s", "must be positive");
            }
            g.finish();
            Some(DriftSpec {
                rms_v: rms_v?,
                time_constant_s: time_constant_s?,
            })
        });
        let front_end: Option<FrontEndSpec> = f.required("front_end");
        let adc: Option<AdcSpec> = f.required("adc");

        let positive = [
            ("carrier_hz", carrier_hz),
            ("sample_rate_hz", sample_rate_hz),
            ("load_ohm", Some(load_ohm)),
        ];
        for (key, value) in positive {
            if value.is_some_and(|v| v <= 0.0) {
                f.error_at(key, "must be positive");
            }
        }
        for (key, width) in [
            ("beam_azimuth_3db_deg", beam_azimuth_3db_deg),
            ("beam_elevation_3db_deg", beam_elevation_3db_deg),
        ] {
            if !(width > 0.0 && width < 180.0) {
                f.error_at(
                    key,
                    format!("a −3 dB width must be in (0, 180) degrees, found {width}"),
                );
            }
        }
        if beam_floor_db >= 0.0 {
            f.error_at("beam_floor_db", "the lobe floor must be below 0 dB");
        }
        if let Some(carrier) = carrier_hz {
            if carrier > 0.0 && !(1e8..=3e11).contains(&carrier) {
                f.warn_at(
                    "carrier_hz",
                    format!("{carrier} Hz is far from the usual 2.4–24 GHz motion-sensor bands"),
                );
            }
        }
        if let (Some(fe), Some(fs)) = (&front_end, sample_rate_hz) {
            for &corner in fe.high_pass_hz.iter().chain(&fe.low_pass_hz) {
                if corner >= 0.5 * fs {
                    f.warn_at(
                        "front_end",
                        format!("a corner at {corner} Hz is at or above Nyquist ({} Hz): the analog filter does little before the ADC and signals alias", 0.5 * fs),
                    );
                }
            }
        }
        f.finish();
        Some(SensorSpec {
            carrier_hz: carrier_hz?,
            sample_rate_hz: sample_rate_hz?,
            output,
            position_m,
            azimuth_deg,
            elevation_deg,
            beam_azimuth_3db_deg,
            beam_elevation_3db_deg,
            beam_floor_db,
            tx_power_dbm,
            antenna_gain_dbi,
            conversion_loss_db,
            load_ohm,
            mixer_dc_v,
            drift,
            front_end: front_end?,
            adc: adc?,
        })
    }
}

/// A corner given in Hz or as an R–C pair.
fn read_corner(node: &Node, path: &str, reader: &mut Reader) -> Option<f64> {
    match &node.value {
        echobench_yaml_reader::Value::Map(_) => {
            let mut f = reader.fields(node, path)?;
            let r_ohm: Option<f64> = f.required("r_ohm");
            let c_farad: Option<f64> = f.required("c_farad");
            f.finish();
            let (r, c) = (r_ohm?, c_farad?);
            if r <= 0.0 || c <= 0.0 {
                reader.error(node.location, path, "R and C must be positive");
                return None;
            }
            Some(echobench_frontend::corner_from_rc_hz(r, c))
        }
        _ => {
            let hz: f64 = reader.read(node, path)?;
            if hz <= 0.0 {
                reader.error(
                    node.location,
                    path,
                    format!("a corner frequency must be positive, found {hz}"),
                );
                return None;
            }
            Some(hz)
        }
    }
}

fn read_corners(node: Option<&Node>, path: &str, reader: &mut Reader) -> Option<Vec<f64>> {
    let Some(node) = node else {
        return Some(Vec::new());
    };
    match &node.value {
        echobench_yaml_reader::Value::Seq(items) => {
            let mut out = Vec::new();
            let mut ok = true;
            for (i, item) in items.iter().enumerate() {
                match read_corner(item, &format!("{path}[{i}]"), reader) {
                    Some(hz) => out.push(hz),
                    None => ok = false,
                }
            }
            ok.then_some(out)
        }
        _ => read_corner(node, path, reader).map(|hz| vec![hz]),
    }
}

impl FromNode for FrontEndSpec {
    fn from_node(node: &Node, path: &str, reader: &mut Reader) -> Option<Self> {
        let mut f = reader.fields(node, path)?;
        let hp_node = f.raw("high_pass_hz");
        let lp_node = f.raw("low_pass_hz");
        let hp_path = f.path_of("high_pass_hz");
        let lp_path = f.path_of("low_pass_hz");
        let high_pass_hz = read_corners(hp_node, &hp_path, f.reader());
        let low_pass_hz = read_corners(lp_node, &lp_path, f.reader());
        let gain_db = f.optional_or("gain_db", 60.0);
        let rails_v = f.optional_or("rails_v", [0.0, 3.3]);
        let bias_v = f.optional_or("bias_v", 0.5 * (rails_v[0] + rails_v[1]));
        if rails_v[0] >= rails_v[1] {
            f.error_at("rails_v", "the low rail must be below the high rail");
        } else if !(bias_v > rails_v[0] && bias_v < rails_v[1]) {
            f.error_at("bias_v", "the bias must lie strictly between the rails");
        }
        if let (Some(hp), Some(lp)) = (&high_pass_hz, &low_pass_hz) {
            let highest_hp = hp.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
            let lowest_lp = lp.iter().cloned().fold(f64::INFINITY, f64::min);
            if highest_hp >= lowest_lp {
                f.error_at(
                    "high_pass_hz",
                    format!("the high-pass corner {highest_hp} Hz is not below the low-pass corner {lowest_lp} Hz: the pass band is empty"),
                );
            }
        }
        f.finish();
        Some(FrontEndSpec {
            high_pass_hz: high_pass_hz?,
            low_pass_hz: low_pass_hz?,
            gain_db,
            rails_v,
            bias_v,
        })
    }
}

impl FromNode for AdcSpec {
    fn from_node(node: &Node, path: &str, reader: &mut Reader) -> Option<Self> {
        let mut f = reader.fields(node, path)?;
        let bits: u8 = f.optional_or("bits", 12);
        let full_scale_v: f64 = f.optional_or("full_scale_v", 3.3);
        if !(1..=24).contains(&bits) {
            f.error_at(
                "bits",
                format!("ADC resolution must be 1 to 24 bits, found {bits}"),
            );
        }
        if full_scale_v <= 0.0 {
            f.error_at("full_scale_v", "must be positive");
        }
        f.finish();
        Some(AdcSpec { bits, full_scale_v })
    }
}
