//! The `echobench` command line as a library, so a team can run it with detectors of its own.
//!
//! ```no_run
//! fn main() -> std::process::ExitCode {
//!     let mut plugins = echobench_detectors::builtin();
//!     // plugins.push(Arc::new(my_detector::MyPlugin)); // a team's own, after the built-ins
//!     echobench::main_with(plugins)
//! }
//! ```
//!
//! [`main_with`] parses the process's arguments and runs any verb (`run`, `check`, `merge`,
//! `gate`, `report`, `explain`, `detectors`, ...) with the given plugins known to every one of
//! them: a suite may name them, the default suite scores them (it lists `registered: all`),
//! `detectors` lists them, and a reference or a shard made with them reads back. The
//! `external` plugin is always added last, allowed to run programs only with `--allow-exec`.
//!
//! **Key design decision: this crate parses arguments and prints; it holds no logic a
//! library user would need.** Loading is `echobench-suite`, running and scoring are
//! `echobench-harness`, the run folder's files are `echobench-run-files`, the report is
//! `echobench-report`. The `echobench` binary is [`main_with`] on the built-ins.
#![deny(missing_docs)]

// First, so that its `print!` family shadows std's in everything below (quiet on closed pipes).
#[macro_use]
mod output;
mod tune_verb;
mod zone_verb;

use anyhow::{bail, Context, Result};
use clap::{Parser, Subcommand};
use echobench_core::detector::DetectorPlugin;
use echobench_run_files::RunFolder;
use echobench_scene::{export, load_scene_file, synthesize, StreamKey};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::sync::Arc;

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
        /// Output folder (default: a new folder under runs/). An existing folder is refused
        /// unless `--replace`.
        #[arg(long)]
        out: Option<PathBuf>,
        /// Replace an existing `--out` folder as a whole (an atomic exchange: the folder holds
        /// the old run or the new one, never a mix).
        #[arg(long)]
        replace: bool,
        /// Run only the test trials of shard K of N (e.g. 2/8); merge the shards' folders with `merge`.
        #[arg(long)]
        shard: Option<String>,
        /// Worker threads (default: one per core; at most 256).
        #[arg(long, value_parser = parse_threads)]
        threads: Option<usize>,
        /// Override the suite's seed.
        #[arg(long)]
        seed: Option<u64>,
        /// Also score every detector at this reference's operating thresholds, so that
        /// `echobench gate` can compare the run with it (a folder from `echobench keep`, or a
        /// whole run folder).
        #[arg(long)]
        against: Option<PathBuf>,
        /// Let detectors of the `external` plugin run the programs the suite names (off by
        /// default: a suite file alone must not start programs).
        #[arg(long)]
        allow_exec: bool,
    },
    /// Compare a run with a reference; exit 0 when nothing regressed, 1 on a regression (or an
    /// inconclusive budget check with --require-conclusive), 2 on an error.
    Gate {
        /// The run folder (made with `echobench run --against REFERENCE`).
        run: PathBuf,
        /// The reference folder (from `echobench keep`, or any whole run folder).
        #[arg(long)]
        against: PathBuf,
        /// A false-alarm rise must exceed this rate ratio to count as a regression (1 to 100).
        #[arg(long, default_value_t = 1.25, value_parser = parse_ratio_margin)]
        ratio_margin: f64,
        /// Family-wise significance of each detector's tests of one kind (Holm), in (0, 0.5].
        #[arg(long, default_value_t = 0.01, value_parser = parse_alpha)]
        alpha: f64,
        /// Absolute false-alarm budget per hour (default: the suite's `false_alarm_budget_per_hour`).
        #[arg(long, value_parser = parse_budget)]
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
        /// Exit 1 also when a budget check is inconclusive (too little noise-only time to
        /// tell the rate from the budget).
        #[arg(long)]
        require_conclusive: bool,
    },
    /// Write a run's HTML report: one self-contained page (inline SVG, opens offline).
    Report {
        /// The run folder.
        run: PathBuf,
        /// A reference to compare with (side by side; with the gate's verdict when the run
        /// was made with `--against` the same reference).
        #[arg(long)]
        against: Option<PathBuf>,
        /// The HTML file to write (default RUN/report.html).
        #[arg(long)]
        out: Option<PathBuf>,
        /// A tuning's output folder (`echobench tune --out DIR`): its verdict and search history
        /// become a section of the report.
        #[arg(long)]
        tuning: Option<PathBuf>,
    },
    /// Tune every detector's tunable parameters on tuning trials of their own (a Sobol sample
    /// cut by successive halving), then judge the tuned detectors beside their defaults on the
    /// suite's own trials; writes the tuned suite file and the summary into `--out`.
    Tune {
        /// The suite file (YAML); omit it for the built-in default suite.
        suite: Option<PathBuf>,
        /// Output folder (complete or absent). An existing folder is refused unless `--replace`.
        #[arg(long)]
        out: PathBuf,
        /// Replace an existing `--out` folder as a whole.
        #[arg(long)]
        replace: bool,
        /// Sampled configurations per detector at the first rung (the default is tried too).
        #[arg(long, default_value_t = 16)]
        configs: usize,
        /// Rungs of successive halving.
        #[arg(long, default_value_t = 3)]
        rungs: usize,
        /// After each rung, one configuration in this many goes on.
        #[arg(long, default_value_t = 3)]
        keep_one_in: usize,
        /// The last rung's trials as a share of the suite's own (0 < share ≤ 1).
        #[arg(long, default_value_t = 1.0)]
        last_rung_share: f64,
        /// Rank configurations whose median latency at the operating point exceeds this, s,
        /// below the others.
        #[arg(long)]
        latency_limit_s: Option<f64>,
        /// Skip the judgement that leaves each nuisance room out of tuning in turn (it repeats
        /// the search once per room).
        #[arg(long)]
        without_room_check: bool,
        /// Worker threads (default: one per core; at most 256).
        #[arg(long, value_parser = parse_threads)]
        threads: Option<usize>,
        /// Override the suite's seed (the judging trials; the tuning seed derives from it).
        #[arg(long)]
        seed: Option<u64>,
        /// Tune only shard K of N of the detector entries (every N-th entry) into `--out`;
        /// merge the parts with `--parts`.
        #[arg(long)]
        shard: Option<String>,
        /// Merge these shards' output folders into `--out` instead of tuning.
        #[arg(long, num_args = 1..)]
        parts: Vec<PathBuf>,
        /// Let detectors of the `external` plugin run the programs the suite names.
        #[arg(long)]
        allow_exec: bool,
    },
    /// Map where each detector of a run first sees a walker: the detection zone of every
    /// product whose suite declares a `zone:`, at the run's operating thresholds, added to
    /// the run folder (zone.json, zone.csv, floor-plan pictures, the report).
    Zone {
        /// The run folder (its thresholds are used, and the zone is added to it).
        run: PathBuf,
        /// The suite file that was run, when it names scene files (they are read beside it);
        /// not needed for the built-in default suite.
        #[arg(long)]
        suite: Option<PathBuf>,
        /// Walk only shard K of N (e.g. 2/4) into the folder `--part`; combine with `--parts`.
        #[arg(long)]
        shard: Option<String>,
        /// The folder a shard's part is written to (refused if it exists).
        #[arg(long)]
        part: Option<PathBuf>,
        /// Combine these shards' part folders into the run instead of walking.
        #[arg(long, num_args = 1..)]
        parts: Vec<PathBuf>,
        /// Worker threads (default: one per core; at most 256).
        #[arg(long, value_parser = parse_threads)]
        threads: Option<usize>,
        /// Let detectors of the `external` plugin run the programs the suite names.
        #[arg(long)]
        allow_exec: bool,
    },
    /// Keep a whole run's results as a reference folder, for `run --against` and `gate`.
    Keep {
        /// The run folder.
        run: PathBuf,
        /// The reference folder to write (refused if it exists, unless `--replace`).
        #[arg(long = "as", value_name = "REFERENCE")]
        as_folder: PathBuf,
        /// Replace an existing folder as a whole (atomic exchange).
        #[arg(long)]
        replace: bool,
    },
    /// Merge the tallies of shard runs into one run folder.
    Merge {
        /// Shard run folders (each holding tallies.json).
        #[arg(required = true)]
        runs: Vec<PathBuf>,
        /// Output folder (refused if it exists, unless `--replace`).
        #[arg(long)]
        out: PathBuf,
        /// The suite file the shards ran (omit for the built-in default suite).
        #[arg(long)]
        suite: Option<PathBuf>,
        /// Write the merge even when shards are missing (the folder then says which it holds,
        /// and cannot be kept as a reference).
        #[arg(long)]
        partial: bool,
        /// Replace an existing `--out` folder as a whole (atomic exchange).
        #[arg(long)]
        replace: bool,
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
    /// List the known detectors (built-in and embedded): parameters with units, defaults and ranges; state memory and cost.
    Detectors {
        /// Sample rate the costs, bands and frames are computed for, Hz.
        #[arg(long, default_value_t = 2000.0)]
        sample_rate_hz: f64,
        /// Carrier the bands and frames given as speeds are converted through, Hz.
        #[arg(long, default_value_t = 24.125e9)]
        carrier_hz: f64,
    },
    /// Validate scene and suite files; prints every problem and exits non-zero on any error.
    Check {
        /// Files to check.
        #[arg(required = true)]
        files: Vec<PathBuf>,
    },
    /// Draw why a detector missed or alarmed on one trial of a run: the trial re-created from
    /// its seed, with its spectrogram, score, threshold, alarm state and truth (one SVG).
    Explain {
        /// The run folder.
        run: PathBuf,
        /// The detector's label in the suite.
        #[arg(long)]
        detector: String,
        /// The trial as the report's gallery prints it: SCENE[@SWEEP]/TRIAL, e.g.
        /// `office-corridor-range@6/3` (`calibration/...` for a calibration trial).
        #[arg(long)]
        trial: String,
        /// The product (checked against the product of the trial's scene).
        #[arg(long)]
        product: Option<String>,
        /// The target false-alarm rate whose operating threshold is used, per hour (default:
        /// the run's first, e.g. 1).
        #[arg(long, value_parser = parse_budget)]
        target_rate: Option<f64>,
        /// The SVG file to write (default: explain-DETECTOR-KEY.svg in the current folder).
        #[arg(long)]
        out: Option<PathBuf>,
        /// The suite file that was run, when it names scene files (they are read beside it);
        /// not needed for the built-in default suite or a suite of inline scenes.
        #[arg(long)]
        suite: Option<PathBuf>,
        /// Let an `external` detector run its program again.
        #[arg(long)]
        allow_exec: bool,
    },
}

/// Runs the command line (the process's arguments) with `plugins` as the detectors every verb
/// knows, then `external`; returns the exit status (0 done, 1 a failed check or gate, 2 an
/// error, 3 a detector that failed on every test trial).
pub fn main_with(plugins: Vec<Arc<dyn DetectorPlugin>>) -> ExitCode {
    let plugins = Plugins { own: plugins };
    if let Some(id) = plugins.repeated_id() {
        // A suite names a detector by its id: two plugins with one id would be a coin toss.
        eprintln!("error: two plugins have the id `{id}` (every plugin id must be unique, `external` included)");
        return ExitCode::from(2);
    }
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Synth {
            scene,
            trial,
            seed,
            out,
        } => run_synth(&scene, trial, seed, &out),
        Command::Check { files } => run_check(&plugins, &files),
        Command::Run {
            suite,
            out,
            replace,
            shard,
            threads,
            seed,
            against,
            allow_exec,
        } => run_suite(
            &plugins,
            suite.as_deref(),
            out,
            replace,
            shard.as_deref(),
            threads,
            seed,
            against.as_deref(),
            allow_exec,
        ),
        Command::Gate {
            run,
            against,
            ratio_margin,
            alpha,
            budget_per_hour,
            markdown,
            junit,
            all,
            require_conclusive,
        } => run_gate(
            &run,
            &against,
            echobench_harness::gate::GateSettings {
                ratio_margin,
                alpha,
                budget_per_hour,
                budget_confidence: 0.95,
                require_conclusive,
                budget_from_tail: false,
            },
            markdown,
            junit,
            all,
        ),
        Command::Keep {
            run,
            as_folder,
            replace,
        } => keep_reference(&run, &as_folder, replace),
        Command::Tune {
            suite,
            out,
            replace,
            configs,
            rungs,
            keep_one_in,
            last_rung_share,
            latency_limit_s,
            without_room_check,
            threads,
            seed,
            shard,
            parts,
            allow_exec,
        } => tune_verb::run_tune(
            &plugins,
            tune_verb::TuneRequest {
                suite,
                out,
                replace,
                settings: echobench_tune::TuneSettings {
                    configs,
                    keep_one_in,
                    rungs,
                    last_rung_share,
                    tuning_seed: None,
                    latency_limit_s,
                    leave_one_out: !without_room_check,
                },
                threads,
                seed,
                allow_exec,
                shard,
                parts,
            },
        ),
        Command::Zone {
            run,
            suite,
            shard,
            part,
            parts,
            threads,
            allow_exec,
        } => set_threads(threads).and_then(|()| {
            zone_verb::run_zone(
                &plugins,
                zone_verb::ZoneRequest {
                    run: &run,
                    suite: suite.as_deref(),
                    shard: shard.as_deref(),
                    part,
                    parts: &parts,
                    allow_exec,
                },
            )
        }),
        Command::Report {
            run,
            against,
            out,
            tuning,
        } => run_report_with(&plugins, &run, against.as_deref(), out, tuning.as_deref()),
        Command::Merge {
            runs,
            out,
            suite,
            partial,
            replace,
        } => run_merge(&plugins, &runs, &out, suite.as_deref(), partial, replace),
        Command::Detectors {
            sample_rate_hz,
            carrier_hz,
        } => run_detectors(&plugins, sample_rate_hz, carrier_hz),
        Command::Explain {
            run,
            detector,
            trial,
            product,
            target_rate,
            out,
            suite,
            allow_exec,
        } => run_explain(
            &plugins,
            &run,
            echobench_explain::ExplainRequest {
                detector,
                trial,
                product,
                target_per_hour: target_rate,
            },
            out,
            suite.as_deref(),
            allow_exec,
        ),
    };
    match result {
        Ok(code) => code,
        Err(e) => {
            eprintln!("error: {e:#}");
            ExitCode::from(2)
        }
    }
}

/// The detectors every verb knows: the caller's list, then `external`.
struct Plugins {
    own: Vec<Arc<dyn DetectorPlugin>>,
}

impl Plugins {
    /// An id that two of the plugins (with `external`) share, if any.
    fn repeated_id(&self) -> Option<String> {
        let all = self.with_external(false);
        let mut seen = std::collections::BTreeSet::new();
        all.iter()
            .map(|p| p.id())
            .find(|id| !seen.insert(*id))
            .map(str::to_string)
    }

    /// The caller's plugins and `external`, which may run programs only when `allow_exec`.
    fn with_external(&self, allow_exec: bool) -> Vec<Arc<dyn DetectorPlugin>> {
        echobench_detectors::add_external(self.own.clone(), allow_exec)
    }
}

fn load_suite(
    plugins: &Plugins,
    path: Option<&Path>,
    allow_exec: bool,
) -> Result<echobench_suite::Suite> {
    let plugins = plugins.with_external(allow_exec);
    let loaded = match path {
        Some(p) => echobench_suite::load_suite_file(p, &plugins),
        None => echobench_suite::default_suite(&plugins).map(|suite| (suite, Default::default())),
    };
    match loaded {
        Ok((suite, warnings)) => {
            eprint!("{warnings}");
            Ok(suite)
        }
        Err(report) => {
            eprint!("{}", shown(&report));
            bail!("the suite has {} errors", report.error_count())
        }
    }
}

/// The suite's text as run, kept in the run folder beside the results.
fn suite_text(path: Option<&Path>) -> Result<String> {
    match path {
        Some(p) => std::fs::read_to_string(p).with_context(|| format!("reading {}", p.display())),
        None => Ok(echobench_suite::DEFAULT_SUITE_YAML.to_string()),
    }
}

fn new_run_folder(suite_name: &str) -> PathBuf {
    let stamp = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0, |d| d.as_secs());
    PathBuf::from("runs").join(format!("{suite_name}-{stamp}"))
}

/// Writes a run's files into its staged folder (`echobench-run-files`), renders the report
/// with its gallery, then seals the folder and moves it into place as a whole
/// (`echobench_run_folder`): the `--out` folder is the complete run or absent.
fn write_run_outputs(
    plugins: &Plugins,
    staging: echobench_run_folder::Staging,
    suite: &echobench_suite::Suite,
    suite_text: &str,
    tallies: &echobench_harness::runner::Tallies,
    timing: Option<&echobench_harness::runner::Timing>,
) -> Result<()> {
    let out = staging.dir().to_path_buf();
    let folder = RunFolder::from_run(suite, suite_text, tallies.clone(), timing.cloned());
    folder.write_into(&out)?;
    // The gallery of worst misses and false alarms, each trial re-created from its seed.
    let gallery = echobench_explain::ExplainRun::new(suite.clone(), tallies.clone())
        .map(|run| {
            echobench_explain::gallery_sections(
                &run,
                &plugins.with_external(false),
                echobench_explain::GALLERY_PER_DETECTOR,
            )
        })
        .unwrap_or_else(|e| {
            eprintln!("note: no gallery in the report: {e}");
            Vec::new()
        });
    let html = echobench_report::render_html(&folder, None, &gallery);
    echobench_core::atomic::write_atomically(&out.join("report.html"), |w| {
        w.write_all(html.as_bytes())
    })?;
    echobench_run_folder::fault_point("report.html");
    let target = staging.target().to_path_buf();
    let (manifest, placement) = staging.commit(echobench_run_folder::FolderKind::Run)?;
    print!(
        "{}",
        echobench_render::console::console_table(&folder.summary, timing)
    );
    let names: Vec<&str> = manifest.files.iter().map(|f| f.name.as_str()).collect();
    println!(
        "wrote {}/{{{}, {}}} ({placement}; run {})",
        target.display(),
        names.join(", "),
        echobench_run_folder::MANIFEST_FILE,
        manifest.run_id
    );
    Ok(())
}

/// Exit status of a run in which some detector failed on every test trial.
const EXIT_DETECTOR_FAILED: u8 = 3;

/// Labels of the detectors that failed on every test trial of the run (none when no test
/// trial ran).
fn detectors_failed_everywhere(tallies: &echobench_harness::runner::Tallies) -> Vec<String> {
    tallies
        .detectors
        .iter()
        .filter(|d| {
            let failed = d.failures.iter().filter(|f| f.phase == "test").count() as u64;
            tallies.test_trials > 0 && failed >= tallies.test_trials
        })
        .map(|d| d.label.clone())
        .collect()
}

/// Sets the worker threads of the process's one pool (default: one per core).
fn set_threads(threads: Option<usize>) -> Result<()> {
    if let Some(n) = threads {
        rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build_global()
            .context("setting the thread count")?;
    }
    Ok(())
}

fn parse_threads(text: &str) -> Result<usize, String> {
    let n: usize = text
        .parse()
        .map_err(|_| format!("`{text}` is not a whole number"))?;
    if (1..=MAX_THREADS).contains(&n) {
        Ok(n)
    } else {
        Err(format!("{n} threads: give 1 to {MAX_THREADS}"))
    }
}

/// Most worker threads `run --threads` accepts (each holds a trial's signal and detector
/// state; far above any core count this tool is run on).
const MAX_THREADS: usize = 256;

/// A finite number in `[low, high]` (or `(low, high]` when `open_low`).
fn parse_bounded(text: &str, low: f64, high: f64, open_low: bool) -> Result<f64, String> {
    let x: f64 = text
        .parse()
        .map_err(|_| format!("`{text}` is not a number"))?;
    let above = if open_low { x > low } else { x >= low };
    if x.is_finite() && above && x <= high {
        Ok(x)
    } else {
        let open = if open_low { "(" } else { "[" };
        Err(format!("{text} is outside {open}{low}, {high}]"))
    }
}

fn parse_alpha(text: &str) -> Result<f64, String> {
    // A family-wise error rate above one half would call a coin toss a regression.
    parse_bounded(text, 0.0, 0.5, true)
}

fn parse_ratio_margin(text: &str) -> Result<f64, String> {
    // Below 1 an unchanged rate would count as a rise; above 100 the test never fires.
    parse_bounded(text, 1.0, 100.0, false)
}

fn parse_budget(text: &str) -> Result<f64, String> {
    parse_bounded(text, 0.0, 1e6, true)
}

#[allow(clippy::too_many_arguments)]
fn run_suite(
    plugins: &Plugins,
    path: Option<&Path>,
    out: Option<PathBuf>,
    replace: bool,
    shard: Option<&str>,
    threads: Option<usize>,
    seed: Option<u64>,
    baseline: Option<&Path>,
    allow_exec: bool,
) -> Result<ExitCode> {
    use echobench_harness::runner::{resolve_detectors, run_suite as run, Progress, Shard};
    let mut suite = load_suite(plugins, path, allow_exec)?;
    if let Some(seed) = seed {
        suite.seed = seed;
    }
    // The same limits `check` applies, before any work.
    let problems = echobench_limits::door_problems(&suite, allow_exec);
    if !problems.is_empty() {
        for line in echobench_limits::cut_list(problems.clone()) {
            eprintln!("error: {line}");
        }
        bail!("the suite is refused ({} problems)", problems.len());
    }
    let shard = shard
        .map(Shard::parse)
        .transpose()
        .map_err(anyhow::Error::msg)?;
    set_threads(threads)?;
    let mut detectors = resolve_detectors(&suite, &plugins.with_external(allow_exec))?;
    if let Some(dir) = baseline {
        let base = echobench_run_files::read_tallies(dir)?;
        if base.suite != suite.name {
            bail!(
                "the reference {} is of suite `{}`, this run of suite `{}`",
                dir.display(),
                base.suite,
                suite.name
            );
        }
        for note in echobench_harness::gate::pin_to_baseline(&mut detectors, &base) {
            eprintln!("note: {note}");
        }
    }
    // Claimed before the work, so an existing --out is refused at once, not after hours.
    let out = out.unwrap_or_else(|| new_run_folder(&suite.name));
    let staging = echobench_run_folder::Staging::begin(&out, replace)?;
    let text = suite_text(path)?;
    let bar = progress_bar();
    let report = |p: Progress| bar.update(p);
    let (tallies, timing) = run(&suite, &detectors, shard, &report)?;
    bar.finish();
    write_run_outputs(plugins, staging, &suite, &text, &tallies, Some(&timing))?;
    let failed = detectors_failed_everywhere(&tallies);
    if !failed.is_empty() {
        eprintln!(
            "error: detector{} {} failed on every test trial (see `failures` in tallies.json); exit {EXIT_DETECTOR_FAILED}",
            if failed.len() == 1 { "" } else { "s" },
            failed.join(", ")
        );
        return Ok(ExitCode::from(EXIT_DETECTOR_FAILED));
    }
    Ok(ExitCode::SUCCESS)
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
    // A run folder is opened once (its manifest verified once, its summary and tallies
    // checked to be of one run); a bare tallies file is read as it is.
    let candidate = if run.is_dir() {
        let folder = echobench_run_files::RunFolder::open(run)?;
        // The suite's budget (unless given on the command line) and its evidence.
        if settings.budget_per_hour.is_none() {
            settings.budget_per_hour = folder.summary.false_alarm_budget_per_hour;
        }
        settings.budget_from_tail |= folder.summary.budget_from_tail;
        folder.tallies
    } else {
        echobench_run_files::read_tallies(run)?
    };
    let base = echobench_run_files::read_tallies(baseline)?;
    let report = echobench_harness::gate::gate(&candidate, &base, &settings)?;
    let folder = if run.is_dir() { run } else { Path::new(".") };
    let json = folder.join("gate.json");
    let markdown_text = echobench_render::gate::markdown(&report);
    let junit_text = echobench_render::gate::junit_xml(&report);
    // Files going into the run folder are added as a whole-folder amendment (the folder
    // stays sealed); files named elsewhere are written one by one, atomically.
    let mut into_run: Vec<(&str, Vec<u8>)> = Vec::new();
    let mut place = |given: Option<PathBuf>, name: &'static str, bytes: Vec<u8>| match given {
        Some(path) => write_atomically(&path, |w| w.write_all(&bytes)).map(|()| path),
        None if run.is_dir() => {
            into_run.push((name, bytes));
            Ok(run.join(name))
        }
        None => write_atomically(&folder.join(name), |w| w.write_all(&bytes))
            .map(|()| folder.join(name)),
    };
    let markdown = place(markdown, "gate.md", markdown_text.into_bytes())?;
    let junit = place(junit, "gate-junit.xml", junit_text.into_bytes())?;
    let json_bytes = echobench_render::json::json_bytes(&report).context("encoding gate.json")?;
    place(None, "gate.json", json_bytes)?;
    if !into_run.is_empty() {
        echobench_run_folder::amend(run, |dir| {
            into_run.iter().try_for_each(|(name, bytes)| {
                echobench_run_folder::write_new_file(dir, name, bytes)
            })
        })?;
    }
    print!(
        "{}",
        if all {
            echobench_render::gate::full_table(&report)
        } else {
            echobench_render::gate::table(&report)
        }
    );
    println!(
        "wrote {}, {} and {}",
        markdown.display(),
        junit.display(),
        json.display()
    );
    println!("gate: {}", report.verdict_words());
    Ok(if report.passed() {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(1)
    })
}

fn run_report(
    plugins: &Plugins,
    run: &Path,
    baseline: Option<&Path>,
    out: Option<PathBuf>,
) -> Result<ExitCode> {
    run_report_with(plugins, run, baseline, out, None)
}

fn run_report_with(
    plugins: &Plugins,
    run: &Path,
    baseline: Option<&Path>,
    out: Option<PathBuf>,
    tuning: Option<&Path>,
) -> Result<ExitCode> {
    use echobench_report::{gate_section, render_html};
    let folder = RunFolder::open(run)?;
    let base = baseline.map(RunFolder::open).transpose()?;
    let mut extra = Vec::new();
    if let Some(dir) = tuning {
        echobench_run_folder::verify(dir, &[])?;
        let summary = echobench_tune::read_summary(&dir.join(echobench_tune::SUMMARY_JSON_FILE))
            .map_err(|e| anyhow::anyhow!("{e}"))?;
        if summary.suite != folder.summary.suite {
            bail!(
                "{}: a tuning of suite `{}`, not of this run's suite `{}`",
                dir.display(),
                summary.suite,
                folder.summary.suite
            );
        }
        extra.push(echobench_report::tuning_section(&summary));
    }
    if let Some(b) = &base {
        let settings = echobench_harness::gate::GateSettings {
            budget_per_hour: folder.summary.false_alarm_budget_per_hour,
            budget_from_tail: folder.summary.budget_from_tail,
            ..Default::default()
        };
        match echobench_harness::gate::gate(&folder.tallies, &b.tallies, &settings) {
            Ok(report) => extra.push(gate_section(&report)),
            Err(e) => eprintln!("note: no gate verdict in the report: {e}"),
        }
    }
    // The gallery of worst misses and false alarms, each trial re-created from its seed.
    let plugins = plugins.with_external(false);
    match folder.suite_text.as_deref().map(|text| {
        echobench_explain::ExplainRun::from_text(text, folder.tallies.clone(), run, None, &plugins)
    }) {
        Some(Ok(again)) => extra.extend(echobench_explain::gallery_sections(
            &again,
            &plugins,
            echobench_explain::GALLERY_PER_DETECTOR,
        )),
        Some(Err(e)) => eprintln!("note: no gallery in the report: {e}"),
        None => eprintln!("note: no gallery in the report: the run folder has no suite.yaml"),
    }
    let html = render_html(&folder, base.as_ref(), &extra);
    let out = match out {
        Some(out) => {
            echobench_core::atomic::write_atomically(&out, |w| w.write_all(html.as_bytes()))?;
            out
        }
        None => {
            // Into the run folder as a whole-folder amendment, so it stays sealed.
            echobench_run_folder::amend(run, |dir| {
                echobench_run_folder::write_new_file(dir, "report.html", html.as_bytes())
            })?;
            run.join("report.html")
        }
    };
    println!("wrote {}", out.display());
    Ok(ExitCode::SUCCESS)
}

fn run_explain(
    plugins: &Plugins,
    run: &Path,
    request: echobench_explain::ExplainRequest,
    out: Option<PathBuf>,
    suite: Option<&Path>,
    allow_exec: bool,
) -> Result<ExitCode> {
    let plugins = plugins.with_external(allow_exec);
    let again = echobench_explain::ExplainRun::load(run, suite, &plugins)?;
    let explanation = echobench_explain::explain_trial(&again, &plugins, &request)?;
    let out = out.unwrap_or_else(|| PathBuf::from(explanation.file_name()));
    echobench_core::atomic::write_atomically(&out, |w| w.write_all(explanation.svg.as_bytes()))?;
    print!("{}", explanation.text());
    println!("wrote {}", out.display());
    Ok(ExitCode::SUCCESS)
}

fn keep_reference(run: &Path, to: &Path, replace: bool) -> Result<ExitCode> {
    if run.is_file() {
        bail!("{}: not a run folder", run.display());
    }
    let tallies = echobench_run_files::read_tallies(run)?;
    if !tallies.shards.is_empty() {
        bail!(
            "{} holds only some shards: merge them first (`echobench merge`)",
            run.display()
        );
    }
    let failures: usize = tallies.detectors.iter().map(|d| d.failures.len()).sum();
    if failures > 0 {
        eprintln!("warning: the run has {failures} failed detector trials; they are not in the reference's counts");
    }
    // The result files a later run and the gate read; the rest of a run folder (report,
    // timing, gate files) describes that one run only.
    let manifest = echobench_run_folder::verify(run, &["tallies.json"])?;
    let mut names = Vec::new();
    for name in echobench_run_files::REFERENCE_FILES {
        if manifest.file(name).is_some() {
            names.push(name);
        } else {
            eprintln!("note: {} has no {name}", run.display());
        }
    }
    let staging = echobench_run_folder::stage_copy(run, &names, to, replace)?;
    let (kept, placement) = staging.commit(echobench_run_folder::FolderKind::Reference)?;
    println!(
        "kept {} as the reference {} (suite `{}`, seed {}, {} detectors; run {}, {placement})",
        run.display(),
        to.display(),
        tallies.suite,
        tallies.seed,
        tallies.detectors.len(),
        kept.run_id
    );
    Ok(ExitCode::SUCCESS)
}

fn run_merge(
    plugins: &Plugins,
    runs: &[PathBuf],
    out: &Path,
    suite_path: Option<&Path>,
    partial: bool,
    replace: bool,
) -> Result<ExitCode> {
    let suite = load_suite(plugins, suite_path, false)?;
    let staging = echobench_run_folder::Staging::begin(out, replace)?;
    let mut parts = Vec::new();
    for run in runs {
        if run.is_file() {
            bail!("{}: not a shard's run folder", run.display());
        }
        parts.push(echobench_run_files::read_tallies(run)?);
    }
    let merged = echobench_harness::runner::merge_tallies(parts)?;
    if merged.suite != suite.name {
        bail!(
            "the shards ran suite `{}`, not `{}`: pass it with --suite",
            merged.suite,
            suite.name
        );
    }
    if let Some(first) = merged.shards.first() {
        let have: Vec<u64> = merged.shards.iter().map(|s| s.index).collect();
        let missing: Vec<String> = (1..=first.count)
            .filter(|k| !have.contains(k))
            .map(|k| format!("{k}/{}", first.count))
            .collect();
        let what = format!(
            "{} of {} shards merged; missing {}",
            have.len(),
            first.count,
            missing.join(", ")
        );
        if !partial {
            bail!("{what}: pass every shard's folder, or --partial to write an incomplete merge");
        }
        eprintln!("warning: {what}; the folder holds a partial run (--partial)");
    }
    write_run_outputs(
        plugins,
        staging,
        &suite,
        &suite_text(suite_path)?,
        &merged,
        None,
    )?;
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
        self.update_as(phase, p);
    }

    /// As [`ProgressDisplay::update`], with the phase named by the caller (e.g. the zone's
    /// walks, which are neither calibration nor test trials).
    fn update_as(&self, phase: &str, p: echobench_harness::runner::Progress) {
        match &self.bar {
            Some(bar) => {
                bar.set_message(phase.to_string());
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

fn run_detectors(plugins: &Plugins, sample_rate_hz: f64, carrier_hz: f64) -> Result<ExitCode> {
    use echobench_core::detector::{ParamKind, Params};
    use echobench_core::doppler::{doppler_hz, speed_mps, wavelength_m};
    use echobench_core::param_decl::TuneRange;
    if !(sample_rate_hz.is_finite() && sample_rate_hz > 0.0) {
        anyhow::bail!("--sample-rate-hz must be a positive number, got {sample_rate_hz}");
    }
    if !(carrier_hz.is_finite() && carrier_hz > 0.0) {
        anyhow::bail!("--carrier-hz must be a positive number, got {carrier_hz}");
    }
    let info = echobench_core::StreamInfo {
        sample_rate_hz,
        channels: echobench_core::Channels::Real,
        adc_bits: 12,
        carrier_hz,
    };
    let nyquist_hz = sample_rate_hz / 2.0;
    println!(
        "At a {:.3} GHz carrier (λ = {:.2} mm; 1 m/s is {:.1} Hz of Doppler) and {} Hz real input \
         (Nyquist {} Hz = {:.2} m/s):",
        carrier_hz / 1e9,
        wavelength_m(carrier_hz) * 1e3,
        doppler_hz(1.0, carrier_hz),
        sample_rate_hz,
        nyquist_hz,
        speed_mps(nyquist_hz, carrier_hz)
    );
    println!();
    for plugin in plugins.with_external(false) {
        let defaults = Params::defaults(plugin.params());
        println!("{}: {}", plugin.id(), plugin.about());
        match (plugin.cost(&defaults, &info), plugin.check(&defaults, &info)) {
            (Some(cost), _) => println!(
                "  cost at defaults, {} Hz real input: state {} bytes, ~{:.0} operations per sample",
                sample_rate_hz, cost.state_bytes, cost.ops_per_sample
            ),
            (None, Err(e)) => println!("  cost at defaults: not available at this stream ({e})"),
            (None, Ok(())) => println!("  cost at defaults: not declared"),
        }
        let bands = plugin.doppler_bands(&defaults, &info);
        if bands.is_empty() {
            println!("  bands at defaults: none declared at this stream");
        }
        for band in &bands {
            let at_nyquist = if band.high_hz >= nyquist_hz {
                " (top at Nyquist)"
            } else {
                ""
            };
            println!(
                "  {} band `{}` at defaults: {:.1}–{:.1} Hz = {:.2}–{:.2} m/s{}",
                band.role,
                band.label,
                band.low_hz,
                band.high_hz,
                speed_mps(band.low_hz, carrier_hz),
                speed_mps(band.high_hz, carrier_hz),
                at_nyquist
            );
        }
        if let Some(framing) = plugin.framing(&defaults, &info) {
            println!(
                "  frame at defaults: {} samples = {:.4} s, velocity resolution λ/(2T) = {:.3} m/s \
                 ({:.2} Hz bins); hop {} samples = {:.4} s",
                framing.frame_len,
                framing.frame_s(sample_rate_hz),
                framing.resolution_mps(&info),
                sample_rate_hz / framing.frame_len as f64,
                framing.hop,
                framing.hop as f64 / sample_rate_hz
            );
        }
        for spec in plugin.params() {
            let unit = if spec.unit.is_empty() {
                String::new()
            } else {
                format!(" [{}]", spec.unit)
            };
            let range = match &spec.kind {
                ParamKind::Real { min, max } => format!("{min} to {max}"),
                ParamKind::Integer { min, max } => format!("{min} to {max}"),
                ParamKind::Choice(names) => names.join(" | "),
                ParamKind::Flag => "true | false".to_string(),
                ParamKind::Text => "text".to_string(),
            };
            // What `echobench tune` may search, as the table declares it.
            let tuned = match spec.tune {
                Some(r @ (TuneRange::Linear { low, high } | TuneRange::Log { low, high })) => {
                    format!("; tunable, {} {low} to {high}", r.scale_name())
                }
                Some(
                    r @ (TuneRange::Integer { low, high } | TuneRange::IntegerLog { low, high }),
                ) => format!("; tunable, {} {low} to {high}", r.scale_name()),
                Some(TuneRange::Choice) => "; tunable, every option".to_string(),
                None => String::new(),
            };
            println!(
                "  {:<22} default {:<10} range {:<22} {}{}{}",
                spec.name,
                spec.default_value(),
                range,
                spec.about,
                unit,
                tuned
            );
        }
        println!();
    }
    Ok(ExitCode::SUCCESS)
}

fn run_check(plugins: &Plugins, files: &[PathBuf]) -> Result<ExitCode> {
    let mut failed = 0;
    let mut limit_failures = 0;
    let mut refused = |file: &Path, report: echobench_yaml_reader::Report| {
        failed += 1;
        eprint!("{}", shown(&report));
        println!(
            "failed: {} ({} errors)",
            file.display(),
            report.error_count()
        );
    };
    for file in files {
        if is_suite_file(file) {
            // `check` never runs a program, so `external` detectors are checked as if allowed.
            let plugins = plugins.with_external(true);
            match echobench_suite::load_suite_file(file, &plugins) {
                Ok((suite, warnings)) => {
                    eprint!("{}", shown(&warnings));
                    // Every limit `run` applies; the allow-exec gate only as a note.
                    let problems = echobench_limits::door_problems(&suite, true);
                    if !problems.is_empty() {
                        limit_failures += 1;
                        for line in echobench_limits::cut_list(problems.clone()) {
                            eprintln!("{}: error: {line}", file.display());
                        }
                        println!("failed: {} ({} errors)", file.display(), problems.len());
                        continue;
                    }
                    let variants: usize = suite.scenes.iter().map(|s| s.variants.len()).sum();
                    let external = echobench_limits::needs_exec(&suite);
                    let exec_note = if external.is_empty() {
                        String::new()
                    } else {
                        format!("; would need --allow-exec for {}", external.join(", "))
                    };
                    println!(
                        "ok: {} (suite `{}`, {} scenes, {} variants, {} detectors{exec_note})",
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
    Ok(if failed + limit_failures == 0 {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(1)
    })
}

/// A problem report cut after the first `echobench_limits::SHOWN_PROBLEMS` problems, with
/// a count of the rest.
fn shown(report: &echobench_yaml_reader::Report) -> String {
    let lines: Vec<String> = report.problems.iter().map(ToString::to_string).collect();
    let mut text = echobench_limits::cut_list(lines).join("\n");
    if !text.is_empty() {
        text.push('\n');
    }
    text
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_plugin_id_given_twice_is_found() {
        let built_in = Plugins {
            own: echobench_detectors::builtin(),
        };
        assert_eq!(built_in.repeated_id(), None);
        let mut twice = echobench_detectors::builtin();
        twice.push(Arc::clone(&twice[0]));
        let twice = Plugins { own: twice };
        assert_eq!(twice.repeated_id().as_deref(), Some("energy"));
    }
}
