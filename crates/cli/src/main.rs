//! The `echobench` command: argument parsing and printing only; the work is in the library crates.

use anyhow::{bail, Context, Result};
use clap::{Parser, Subcommand};
use echobench_scene::{export, load_scene_file, synthesize, StreamKey};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

#[derive(Parser)]
#[command(
    name = "echobench",
    version,
    about = "Proving ground for CW Doppler motion-sensor detection algorithms"
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Run a suite (the built-in default suite when none is given) and score every detector.
    Run {
        /// The suite file (YAML); omit it for the built-in default suite.
        suite: Option<PathBuf>,
        /// Output folder (default: a new folder under runs/).
        #[arg(long)]
        out: Option<PathBuf>,
        /// Run only the test trials of shard K of N (e.g. 2/8); merge the shards' folders with `merge`.
        #[arg(long)]
        shard: Option<String>,
        /// Worker threads (default: one per core).
        #[arg(long)]
        threads: Option<usize>,
        /// Override the suite's seed.
        #[arg(long)]
        seed: Option<u64>,
        /// Also score every detector at this baseline's operating thresholds, so that
        /// `echobench gate` can compare the run with it (a run or baseline folder).
        #[arg(long)]
        baseline: Option<PathBuf>,
        /// Let detectors of the `external` plugin run the programs the suite names (off by
        /// default: a suite file alone must not start programs).
        #[arg(long)]
        allow_exec: bool,
    },
    /// Compare a run with a baseline; exit 0 when nothing regressed, 1 on a regression, 2 on an error.
    Gate {
        /// The run folder (made with `echobench run --baseline BASELINE`).
        run: PathBuf,
        /// The baseline folder (from `echobench save-baseline`, or any whole run folder).
        #[arg(long)]
        baseline: PathBuf,
        /// A false-alarm rise must exceed this rate ratio to count as a regression.
        #[arg(long, default_value_t = 1.25)]
        ratio_margin: f64,
        /// Family-wise significance of each detector's tests of one kind (Holm).
        #[arg(long, default_value_t = 0.01)]
        alpha: f64,
        /// Absolute false-alarm budget per hour (default: the suite's `false_alarm_budget_per_hour`).
        #[arg(long)]
        budget_per_hour: Option<f64>,
        /// Markdown summary file (default RUN/gate.md).
        #[arg(long)]
        markdown: Option<PathBuf>,
        /// JUnit XML file (default RUN/gate-junit.xml).
        #[arg(long)]
        junit: Option<PathBuf>,
        /// Print every check, not only the pooled ones and the regressions.
        #[arg(long)]
        all: bool,
    },
    /// Write a run's HTML report: one self-contained page (inline SVG, opens offline).
    Report {
        /// The run folder.
        run: PathBuf,
        /// A baseline to compare with (side by side; with the gate's verdict when the run
        /// was made with `--baseline` of the same baseline).
        #[arg(long)]
        baseline: Option<PathBuf>,
        /// The HTML file to write (default RUN/report.html).
        #[arg(long)]
        out: Option<PathBuf>,
    },
    /// Save a whole run folder as a baseline folder for `run --baseline` and `gate`.
    SaveBaseline {
        /// The run folder.
        run: PathBuf,
        /// The baseline folder to write (files are replaced atomically).
        #[arg(long)]
        to: PathBuf,
    },
    /// Merge the tallies of shard runs into one run folder.
    Merge {
        /// Shard run folders (each holding tallies.json).
        #[arg(required = true)]
        runs: Vec<PathBuf>,
        /// Output folder.
        #[arg(long)]
        out: PathBuf,
        /// The suite file the shards ran (omit for the built-in default suite).
        #[arg(long)]
        suite: Option<PathBuf>,
    },
    /// Synthesize one trial of a scene: WAV and CSV samples, truth CSV and a spectrogram picture.
    Synth {
        /// The scene file (YAML).
        scene: PathBuf,
        /// Trial index (each index draws its own random values).
        #[arg(long, default_value_t = 0)]
        trial: u64,
        /// Seed of the run; the same scene, seed and trial give identical files.
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Output folder (created if missing).
        #[arg(long)]
        out: PathBuf,
    },
    /// List the built-in detectors: parameters with units, defaults and ranges; state memory and cost.
    Detectors {
        /// Sample rate the cost figures are computed for, Hz.
        #[arg(long, default_value_t = 2000.0)]
        sample_rate_hz: f64,
        /// Carrier the speed-derived bands are computed for, Hz.
        #[arg(long, default_value_t = 24.125e9)]
        carrier_hz: f64,
    },
    /// Validate scene and suite files; prints every problem and exits non-zero on any error.
    Check {
        /// Files to check.
        #[arg(required = true)]
        files: Vec<PathBuf>,
    },
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Synth {
            scene,
            trial,
            seed,
            out,
        } => run_synth(&scene, trial, seed, &out),
        Command::Check { files } => run_check(&files),
        Command::Run {
            suite,
            out,
            shard,
            threads,
            seed,
            baseline,
            allow_exec,
        } => run_suite(
            suite.as_deref(),
            out,
            shard.as_deref(),
            threads,
            seed,
            baseline.as_deref(),
            allow_exec,
        ),
        Command::Gate {
            run,
            baseline,
            ratio_margin,
            alpha,
            budget_per_hour,
            markdown,
            junit,
            all,
        } => run_gate(
            &run,
            &baseline,
            echobench_harness::gate::GateSettings {
                ratio_margin,
                alpha,
                budget_per_hour,
                budget_confidence: 0.95,
            },
            markdown,
            junit,
            all,
        ),
        Command::SaveBaseline { run, to } => save_baseline(&run, &to),
        Command::Report { run, baseline, out } => run_report(&run, baseline.as_deref(), out),
        Command::Merge { runs, out, suite } => run_merge(&runs, &out, suite.as_deref()),
        Command::Detectors {
            sample_rate_hz,
            carrier_hz,
        } => run_detectors(sample_rate_hz, carrier_hz),
    };
    match result {
        Ok(code) => code,
        Err(e) => {
            eprintln!("error: {e:#}");
            ExitCode::from(2)
        }
    }
}

fn load_suite(path: Option<&Path>, allow_exec: bool) -> Result<echobench_harness::suite::Suite> {
    let plugins = echobench_detectors::with_external(allow_exec);
    let loaded = match path {
        Some(p) => echobench_harness::suite_file::load_suite_file(p, &plugins),
        None => echobench_harness::suite_file::default_suite(&plugins)
            .map(|suite| (suite, Default::default())),
    };
    match loaded {
        Ok((suite, warnings)) => {
            eprint!("{warnings}");
            Ok(suite)
        }
        Err(report) => {
            eprint!("{report}");
            bail!("the suite has {} errors", report.error_count())
        }
    }
}

/// The suite's text as run, kept in the run folder beside the results.
fn suite_text(path: Option<&Path>) -> Result<String> {
    match path {
        Some(p) => std::fs::read_to_string(p).with_context(|| format!("reading {}", p.display())),
        None => Ok(echobench_harness::suite_file::DEFAULT_SUITE_YAML.to_string()),
    }
}

fn new_run_folder(suite_name: &str) -> PathBuf {
    let stamp = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0, |d| d.as_secs());
    PathBuf::from("runs").join(format!("{suite_name}-{stamp}"))
}

fn write_run_outputs(
    out: &Path,
    suite: &echobench_harness::suite::Suite,
    suite_text: &str,
    tallies: &echobench_harness::runner::Tallies,
    timing: Option<&echobench_harness::runner::Timing>,
) -> Result<()> {
    use echobench_harness::summary;
    std::fs::create_dir_all(out).with_context(|| format!("creating {}", out.display()))?;
    let summary = summary::summarise(tallies, suite);
    echobench_core::atomic::write_atomically(&out.join("suite.yaml"), |w| {
        w.write_all(suite_text.as_bytes())
    })?;
    summary::write_json(&out.join("tallies.json"), tallies)?;
    summary::write_json(&out.join("summary.json"), &summary)?;
    summary::write_roc_csv(&out.join("roc.csv"), tallies)?;
    summary::write_events_csv(&out.join("events.csv"), &summary)?;
    if let Some(t) = timing {
        summary::write_json(&out.join("timing.json"), t)?;
    }
    let folder = echobench_report::RunFolder {
        summary: summary.clone(),
        tallies: tallies.clone(),
        timing: timing.cloned(),
        suite_text: Some(suite_text.to_string()),
    };
    let html = echobench_report::render_html(&folder, None, &[]);
    echobench_core::atomic::write_atomically(&out.join("report.html"), |w| {
        w.write_all(html.as_bytes())
    })?;
    print!("{}", summary::console_table(&summary, timing));
    println!(
        "wrote {}/{{summary.json, roc.csv, events.csv, tallies.json, suite.yaml, report.html}}",
        out.display()
    );
    Ok(())
}

fn run_suite(
    path: Option<&Path>,
    out: Option<PathBuf>,
    shard: Option<&str>,
    threads: Option<usize>,
    seed: Option<u64>,
    baseline: Option<&Path>,
    allow_exec: bool,
) -> Result<ExitCode> {
    use echobench_harness::runner::{resolve_detectors, run_suite as run, Progress, Shard};
    let mut suite = load_suite(path, allow_exec)?;
    if let Some(seed) = seed {
        suite.seed = seed;
    }
    let shard = shard
        .map(Shard::parse)
        .transpose()
        .map_err(anyhow::Error::msg)?;
    if let Some(n) = threads {
        rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build_global()
            .context("setting the thread count")?;
    }
    let plugins = echobench_detectors::with_external(allow_exec);
    let mut detectors = resolve_detectors(&suite, &plugins)?;
    if let Some(dir) = baseline {
        let base = read_tallies(dir)?;
        if base.suite != suite.name {
            bail!(
                "the baseline {} is of suite `{}`, this run of suite `{}`",
                dir.display(),
                base.suite,
                suite.name
            );
        }
        for note in echobench_harness::gate::pin_to_baseline(&mut detectors, &base) {
            eprintln!("note: {note}");
        }
    }
    let bar = progress_bar();
    let report = |p: Progress| bar.update(p);
    let (tallies, timing) = run(&suite, &detectors, shard, &report)?;
    bar.finish();
    let out = out.unwrap_or_else(|| new_run_folder(&suite.name));
    write_run_outputs(&out, &suite, &suite_text(path)?, &tallies, Some(&timing))?;
    Ok(ExitCode::SUCCESS)
}

/// The tallies of a run or baseline folder (or of a tallies.json file given directly).
fn read_tallies(path: &Path) -> Result<echobench_harness::runner::Tallies> {
    let file = if path.is_dir() {
        path.join("tallies.json")
    } else {
        path.to_path_buf()
    };
    let text =
        std::fs::read_to_string(&file).with_context(|| format!("reading {}", file.display()))?;
    let tallies: echobench_harness::runner::Tallies =
        serde_json::from_str(&text).with_context(|| format!("parsing {}", file.display()))?;
    if tallies.schema != echobench_harness::runner::SCHEMA_VERSION {
        bail!(
            "{} has schema {}, this echobench reads schema {}: rerun it",
            file.display(),
            tallies.schema,
            echobench_harness::runner::SCHEMA_VERSION
        );
    }
    Ok(tallies)
}

fn run_gate(
    run: &Path,
    baseline: &Path,
    mut settings: echobench_harness::gate::GateSettings,
    markdown: Option<PathBuf>,
    junit: Option<PathBuf>,
    all: bool,
) -> Result<ExitCode> {
    use echobench_core::atomic::write_atomically;
    let candidate = read_tallies(run)?;
    let base = read_tallies(baseline)?;
    if settings.budget_per_hour.is_none() && run.is_dir() {
        let file = run.join("summary.json");
        let text = std::fs::read_to_string(&file)
            .with_context(|| format!("reading {}", file.display()))?;
        let summary: echobench_harness::summary::Summary =
            serde_json::from_str(&text).with_context(|| format!("parsing {}", file.display()))?;
        settings.budget_per_hour = summary.false_alarm_budget_per_hour;
    }
    let report = echobench_harness::gate::gate(&candidate, &base, &settings)?;
    let folder = if run.is_dir() { run } else { Path::new(".") };
    let markdown = markdown.unwrap_or_else(|| folder.join("gate.md"));
    let junit = junit.unwrap_or_else(|| folder.join("gate-junit.xml"));
    write_atomically(&markdown, |w| w.write_all(report.markdown().as_bytes()))?;
    write_atomically(&junit, |w| w.write_all(report.junit_xml().as_bytes()))?;
    let json = folder.join("gate.json");
    echobench_harness::summary::write_json(&json, &report)?;
    print!(
        "{}",
        if all {
            report.full_table()
        } else {
            report.table()
        }
    );
    println!(
        "wrote {}, {} and {}",
        markdown.display(),
        junit.display(),
        json.display()
    );
    if report.passed() {
        println!("gate: pass");
        Ok(ExitCode::SUCCESS)
    } else {
        println!("gate: REGRESSION");
        Ok(ExitCode::from(1))
    }
}

fn run_report(run: &Path, baseline: Option<&Path>, out: Option<PathBuf>) -> Result<ExitCode> {
    use echobench_report::{gate_section, render_html, RunFolder};
    let folder = RunFolder::load(run)?;
    let base = baseline.map(RunFolder::load).transpose()?;
    let mut extra = Vec::new();
    if let Some(b) = &base {
        let settings = echobench_harness::gate::GateSettings {
            budget_per_hour: folder.summary.false_alarm_budget_per_hour,
            ..Default::default()
        };
        match echobench_harness::gate::gate(&folder.tallies, &b.tallies, &settings) {
            Ok(report) => extra.push(gate_section(&report)),
            Err(e) => eprintln!("note: no gate verdict in the report: {e}"),
        }
    }
    let html = render_html(&folder, base.as_ref(), &extra);
    let out = out.unwrap_or_else(|| run.join("report.html"));
    echobench_core::atomic::write_atomically(&out, |w| w.write_all(html.as_bytes()))?;
    println!("wrote {}", out.display());
    Ok(ExitCode::SUCCESS)
}

fn save_baseline(run: &Path, to: &Path) -> Result<ExitCode> {
    let tallies = read_tallies(run)?;
    if !tallies.shards.is_empty() {
        bail!(
            "{} holds only some shards: merge them first (`echobench merge`)",
            run.display()
        );
    }
    let failures: usize = tallies.detectors.iter().map(|d| d.failures.len()).sum();
    if failures > 0 {
        eprintln!("warning: the run has {failures} failed detector trials; they are not in the baseline's counts");
    }
    std::fs::create_dir_all(to).with_context(|| format!("creating {}", to.display()))?;
    for name in [
        "tallies.json",
        "summary.json",
        "suite.yaml",
        "roc.csv",
        "events.csv",
    ] {
        let from = run.join(name);
        match std::fs::read(&from) {
            Ok(bytes) => {
                echobench_core::atomic::write_atomically(&to.join(name), |w| w.write_all(&bytes))?
            }
            Err(e) if name == "tallies.json" => {
                return Err(e).with_context(|| format!("reading {}", from.display()))
            }
            Err(_) => eprintln!("note: {} has no {name}", run.display()),
        }
    }
    println!(
        "saved {} as the baseline {} (suite `{}`, seed {}, {} detectors)",
        run.display(),
        to.display(),
        tallies.suite,
        tallies.seed,
        tallies.detectors.len()
    );
    Ok(ExitCode::SUCCESS)
}

fn run_merge(runs: &[PathBuf], out: &Path, suite_path: Option<&Path>) -> Result<ExitCode> {
    let suite = load_suite(suite_path, false)?;
    let mut parts = Vec::new();
    for run in runs {
        let file = run.join("tallies.json");
        let text = std::fs::read_to_string(&file)
            .with_context(|| format!("reading {}", file.display()))?;
        let tallies: echobench_harness::runner::Tallies =
            serde_json::from_str(&text).with_context(|| format!("parsing {}", file.display()))?;
        parts.push(tallies);
    }
    let merged = echobench_harness::runner::merge_tallies(parts)?;
    if merged.suite != suite.name {
        bail!(
            "the shards ran suite `{}`, not `{}`: pass it with --suite",
            merged.suite,
            suite.name
        );
    }
    write_run_outputs(out, &suite, &suite_text(suite_path)?, &merged, None)?;
    Ok(ExitCode::SUCCESS)
}

/// Progress on stderr: a bar on a terminal, plain lines otherwise.
struct ProgressDisplay {
    bar: Option<indicatif::ProgressBar>,
    last_line: std::sync::Mutex<(bool, u64)>,
}

fn progress_bar() -> ProgressDisplay {
    use std::io::IsTerminal;
    let bar = std::io::stderr().is_terminal().then(|| {
        let bar = indicatif::ProgressBar::new(0);
        bar.set_style(
            indicatif::ProgressStyle::with_template(
                "{msg:12} [{bar:40}] {pos}/{len} trials {elapsed}",
            )
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
        );
        bar
    });
    ProgressDisplay {
        bar,
        last_line: std::sync::Mutex::new((true, 0)),
    }
}

impl ProgressDisplay {
    fn update(&self, p: echobench_harness::runner::Progress) {
        let phase = if p.calibration { "calibration" } else { "test" };
        match &self.bar {
            Some(bar) => {
                bar.set_message(phase);
                bar.set_length(p.total);
                bar.set_position(p.done);
            }
            None => {
                // Plain lines at every tenth of a phase, for logs.
                let mut last = self.last_line.lock().unwrap_or_else(|e| e.into_inner());
                let step = (p.total / 10).max(1);
                if last.0 != p.calibration || p.done == p.total || p.done >= last.1 + step {
                    *last = (p.calibration, p.done);
                    eprintln!("{phase}: {}/{} trials", p.done, p.total);
                }
            }
        }
    }

    fn finish(&self) {
        if let Some(bar) = &self.bar {
            bar.finish_and_clear();
        }
    }
}

fn run_detectors(sample_rate_hz: f64, carrier_hz: f64) -> Result<ExitCode> {
    use echobench_core::detector::{ParamKind, Params};
    let info = echobench_core::StreamInfo {
        sample_rate_hz,
        channels: echobench_core::Channels::Real,
        adc_bits: 12,
        carrier_hz,
    };
    for plugin in echobench_detectors::with_external(false) {
        let defaults = Params::defaults(plugin.params());
        println!("{}: {}", plugin.id(), plugin.about());
        match plugin.cost(&defaults, &info) {
            Ok(cost) => println!(
                "  cost at defaults, {} Hz real input: state {} bytes, ~{:.0} operations per sample",
                sample_rate_hz, cost.state_bytes, cost.ops_per_sample
            ),
            Err(e) => println!("  cost at defaults: not available at this stream ({e})"),
        }
        for spec in plugin.params() {
            let unit = if spec.unit.is_empty() {
                String::new()
            } else {
                format!(" [{}]", spec.unit)
            };
            let range = match spec.kind {
                ParamKind::Real { min, max } => format!("{min} to {max}"),
                ParamKind::Integer { min, max } => format!("{min} to {max}"),
                ParamKind::Choice(names) => names.join(" | "),
                ParamKind::Flag => "true | false".to_string(),
                ParamKind::Text => "text".to_string(),
            };
            println!(
                "  {:<22} default {:<10} range {:<22} {}{}",
                spec.name,
                spec.default_value(),
                range,
                spec.about,
                unit
            );
        }
        println!();
    }
    Ok(ExitCode::SUCCESS)
}

fn run_check(files: &[PathBuf]) -> Result<ExitCode> {
    let mut failed = 0;
    let mut refused = |file: &Path, report: echobench_yaml_reader::Report| {
        failed += 1;
        eprint!("{report}");
        println!(
            "failed: {} ({} errors)",
            file.display(),
            report.error_count()
        );
    };
    for file in files {
        if is_suite_file(file) {
            // `check` never runs a program, so `external` detectors are checked as if allowed.
            let plugins = echobench_detectors::with_external(true);
            match echobench_harness::suite_file::load_suite_file(file, &plugins) {
                Ok((suite, warnings)) => {
                    eprint!("{warnings}");
                    let variants: usize = suite.scenes.iter().map(|s| s.variants.len()).sum();
                    println!(
                        "ok: {} (suite `{}`, {} scenes, {} variants, {} detectors)",
                        file.display(),
                        suite.name,
                        suite.scenes.len(),
                        variants,
                        suite.detectors.len()
                    );
                }
                Err(report) => refused(file, report),
            }
            continue;
        }
        match load_scene_file(file) {
            Ok((scene, warnings)) => {
                eprint!("{warnings}");
                println!(
                    "ok: {} (scene `{}`, {} actors, {} s)",
                    file.display(),
                    scene.name,
                    scene.actors.len(),
                    scene.duration_s
                );
            }
            Err(report) => refused(file, report),
        }
    }
    Ok(if failed == 0 {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(1)
    })
}

/// A suite file has a top-level `scenes:` key; a scene file never does.
fn is_suite_file(file: &Path) -> bool {
    std::fs::read_to_string(file).is_ok_and(|text| {
        text.lines()
            .any(|line| line.starts_with("scenes:") || line.starts_with("detectors:"))
    })
}

fn run_synth(scene_path: &Path, trial: u64, seed: u64, out: &Path) -> Result<ExitCode> {
    let (scene, warnings) = match load_scene_file(scene_path) {
        Ok(pair) => pair,
        Err(report) => {
            eprint!("{report}");
            bail!(
                "{} has {} errors",
                scene_path.display(),
                report.error_count()
            );
        }
    };
    eprint!("{warnings}");
    std::fs::create_dir_all(out).with_context(|| format!("creating {}", out.display()))?;
    let key = StreamKey::new(seed, scene.name.clone(), trial);
    let trial_data = synthesize(&scene, &key)
        .with_context(|| format!("synthesizing {}", scene_path.display()))?;
    let stem = format!("{}-trial{}", scene.name, trial);
    let wav = out.join(format!("{stem}.wav"));
    let csv = out.join(format!("{stem}.csv"));
    let truth = out.join(format!("{stem}-truth.csv"));
    let picture = out.join(format!("{stem}-spectrogram.svg"));
    export::write_wav(&wav, &trial_data)?;
    export::write_samples_csv(&csv, &trial_data)?;
    export::write_truth_csv(&truth, &trial_data.truth)?;
    // The target events as a capture label file, so the WAV reads back as a recording.
    let labels_file = out.join(format!("{stem}-labels.csv"));
    let labels: Vec<echobench_capture::Label> = echobench_core::merge_intervals(
        trial_data.truth.events.iter().map(|e| e.interval).collect(),
    )
    .into_iter()
    .map(|interval| echobench_capture::Label::new(interval, "target"))
    .collect();
    echobench_capture::write_labels(&labels_file, &labels)?;
    let marks: Vec<echobench_spectrogram::Marked> = trial_data
        .truth
        .events
        .iter()
        .map(|e| echobench_spectrogram::Marked {
            start_s: e.interval.start_s(),
            end_s: e.interval.end_s(),
            label: e.actor_id.clone(),
            is_target: true,
        })
        .chain(
            trial_data
                .truth
                .nuisances
                .iter()
                .filter(|n| n.kind != "interference")
                .map(|n| echobench_spectrogram::Marked {
                    start_s: n.interval.start_s(),
                    end_s: n.interval.end_s(),
                    label: n.source_id.clone(),
                    is_target: false,
                }),
        )
        .collect();
    let channels = trial_data.info.channels.count();
    let spectrum = echobench_spectrogram::short_time_spectrum(
        &trial_data.samples,
        trial_data.info.channels,
        trial_data.info.sample_rate_hz,
        256,
        64,
    )?;
    let options = echobench_spectrogram::SpectrogramOptions {
        title: format!(
            "{} — trial {} (seed {}), {:.3} GHz",
            scene.name,
            trial,
            seed,
            scene.sensor.carrier_hz / 1e9
        ),
        ..Default::default()
    };
    echobench_spectrogram::write_picture(&picture, &spectrum, &marks, &options)?;
    println!(
        "wrote {} samples at {} Hz (internal oversampling ×{}), {} target events:",
        trial_data.samples.len() / channels,
        trial_data.info.sample_rate_hz,
        trial_data.oversampling,
        trial_data.truth.events.len()
    );
    for path in [&wav, &csv, &truth, &picture] {
        println!("  {}", path.display());
    }
    Ok(ExitCode::SUCCESS)
}
