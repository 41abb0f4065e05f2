//! A plugin made at run time, from a description file it reads: an owned id, owned texts and
//! owned parameter names, nothing leaked to make them `'static`. It resolves its parameters
//! like any plugin and keeps the detector contract (the conformance kit).

use echobench_core::conformance;
use echobench_core::detector::{
    test_stream, ChoiceNames, DefaultValue, Detector, DetectorFailure, DetectorPlan,
    DetectorPlugin, ParamError, ParamKind, ParamSpec, ParamValue, Params, PrototypePlan, Samples,
};
use echobench_core::{Channels, FrameScore, StreamInfo};
use std::sync::Arc;

/// What the file says: `id`, `about`, and the names of the frame-length and statistic
/// parameters (a team might rename them per product line).
const DESCRIPTION: &str = "\
id = gated-level
about = mean or peak power per frame, described in a text file
frame_parameter = samples_per_decision
statistic_parameter = frame_statistic
";

/// The mean or peak power of each frame; its id, texts and parameter names are owned.
struct DescribedPlugin {
    id: String,
    about: String,
    specs: Vec<ParamSpec>,
}

impl DescribedPlugin {
    /// Reads a description file (`key = value` lines).
    fn from_file(path: &std::path::Path) -> DescribedPlugin {
        let text = std::fs::read_to_string(path).expect("the description is readable");
        let field = |key: &str| -> String {
            text.lines()
                .filter_map(|line| line.split_once('='))
                .find(|(k, _)| k.trim() == key)
                .map(|(_, v)| v.trim().to_string())
                .unwrap_or_else(|| panic!("no `{key}` in the description"))
        };
        let frame_name = field("frame_parameter");
        let statistic_name = field("statistic_parameter");
        DescribedPlugin {
            id: field("id"),
            about: field("about"),
            specs: vec![
                ParamSpec {
                    name: frame_name.into(),
                    unit: "samples".into(),
                    about: format!("samples per decision of {}", field("id")).into(),
                    kind: ParamKind::Integer {
                        min: 1,
                        max: 1 << 20,
                    },
                    default: DefaultValue::Integer(200),
                    tune: None,
                },
                ParamSpec {
                    name: statistic_name.into(),
                    unit: "".into(),
                    about: "mean or peak power over the frame".into(),
                    kind: ParamKind::Choice(ChoiceNames::Owned(vec![
                        "mean".to_string(),
                        "peak".to_string(),
                    ])),
                    default: DefaultValue::Text(String::from("mean").into()),
                    tune: None,
                },
            ],
        }
    }
}

#[derive(Clone)]
struct Level {
    frame_len: u64,
    peak: bool,
    acc: f64,
    in_frame: u64,
    consumed: u64,
}

impl Level {
    fn instant(&mut self, power: f64, out: &mut Vec<FrameScore>) {
        let power = if power.is_finite() { power } else { 0.0 };
        self.acc = if self.peak {
            self.acc.max(power)
        } else {
            self.acc + power
        };
        self.in_frame += 1;
        self.consumed += 1;
        if self.in_frame == self.frame_len {
            let value = if self.peak {
                self.acc
            } else {
                self.acc / self.frame_len as f64
            };
            out.push(FrameScore {
                end_sample: self.consumed,
                value,
            });
            self.acc = 0.0;
            self.in_frame = 0;
        }
    }
}

impl Detector for Level {
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        let sq = |x: f32| f64::from(x) * f64::from(x);
        match block {
            Samples::Real(x) => x.iter().for_each(|&x| self.instant(sq(x), out)),
            Samples::Iq(pairs) => pairs
                .iter()
                .for_each(|&[i, q]| self.instant(sq(i) + sq(q), out)),
        }
        Ok(())
    }

    fn reset(&mut self) {
        self.acc = 0.0;
        self.in_frame = 0;
        self.consumed = 0;
    }
}

impl DetectorPlugin for DescribedPlugin {
    fn id(&self) -> &str {
        &self.id
    }

    fn about(&self) -> &str {
        &self.about
    }

    fn params(&self) -> &[ParamSpec] {
        &self.specs
    }

    fn plan(
        &self,
        params: &Params,
        info: &StreamInfo,
    ) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        self.check(params, info)?;
        // Read by the names the file gave (a run-time plugin has no `const` declarations).
        let (frame, statistic) = (&self.specs[0].name, &self.specs[1].name);
        let Some(&ParamValue::Integer(frame_len)) = params.value(frame) else {
            return Err(ParamError::new(self.id(), frame, "absent", "not resolved"));
        };
        let Some(ParamValue::Text(statistic)) = params.value(statistic) else {
            return Err(ParamError::new(
                self.id(),
                statistic,
                "absent",
                "not resolved",
            ));
        };
        Ok(PrototypePlan::shared(Level {
            frame_len: frame_len as u64,
            peak: statistic == "peak",
            acc: 0.0,
            in_frame: 0,
            consumed: 0,
        }))
    }

    fn check(&self, _: &Params, info: &StreamInfo) -> Result<(), ParamError> {
        echobench_core::detector::check_sample_rate(self.id(), info).map(|_| ())
    }
}

fn described() -> DescribedPlugin {
    // One file per call: the tests run in parallel threads of one process, and a file shared
    // by them could be read while another rewrites it.
    static CALLS: std::sync::atomic::AtomicUsize = std::sync::atomic::AtomicUsize::new(0);
    let call = CALLS.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
    let path = std::env::temp_dir().join(format!(
        "echobench-described-{}-{call}.txt",
        std::process::id()
    ));
    std::fs::write(&path, DESCRIPTION).unwrap();
    let plugin = DescribedPlugin::from_file(&path);
    std::fs::remove_file(&path).unwrap();
    plugin
}

#[test]
fn a_plugin_made_from_a_file_resolves_its_owned_parameters() {
    let plugin: Arc<dyn DetectorPlugin> = Arc::new(described());
    assert_eq!(plugin.id(), "gated-level");
    let given = [
        ("samples_per_decision".to_string(), ParamValue::Integer(50)),
        (
            "frame_statistic".to_string(),
            ParamValue::Text("peak".into()),
        ),
    ];
    let params = Params::resolve(plugin.id(), plugin.params(), &given).unwrap();
    assert_eq!(
        params.value("samples_per_decision"),
        Some(&ParamValue::Integer(50))
    );
    assert!(params.is_given("frame_statistic"));
    // Problems name the owned parameters, with the nearest owned name suggested.
    let problems = Params::resolve(
        plugin.id(),
        plugin.params(),
        &[
            ("samples_per_decison".to_string(), ParamValue::Integer(50)),
            (
                "frame_statistic".to_string(),
                ParamValue::Text("median".into()),
            ),
        ],
    )
    .unwrap_err();
    assert_eq!(problems.len(), 2);
    assert!(
        problems[0]
            .to_string()
            .contains("did you mean `samples_per_decision`?"),
        "{}",
        problems[0]
    );
    assert!(
        problems[1].to_string().contains("one of mean, peak"),
        "{}",
        problems[1]
    );
    assert!(problems[1]
        .to_string()
        .starts_with("detector `gated-level`"));
}

#[test]
fn a_plugin_made_from_a_file_keeps_the_detector_contract() {
    let plugin = described();
    for statistic in ["mean", "peak"] {
        let params = Params::resolve(
            plugin.id(),
            plugin.params(),
            &[(
                "frame_statistic".to_string(),
                ParamValue::Text(statistic.into()),
            )],
        )
        .unwrap();
        conformance::assert_conforms(&plugin, &params, &test_stream(2000.0));
        let iq = StreamInfo {
            channels: Channels::Iq,
            ..test_stream(1000.0)
        };
        conformance::assert_conforms(&plugin, &params, &iq);
    }
    conformance::assert_conforms(
        &plugin,
        &Params::defaults(plugin.params()),
        &test_stream(2000.0),
    );
}
