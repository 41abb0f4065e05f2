//! The `echobench` command: argument parsing and printing only; the work is in the library crates.

use anyhow::{bail, Context, Result};
use clap::{Parser, Subcommand};
use echobench_scene::{export, load_scene_file, synthesize, StreamKey};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

#[derive(Parser)]
#[command(name = "echobench", version, about = "Proving ground for CW Doppler motion-sensor detection algorithms")]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
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
    /// Validate scene files; prints every problem and exits non-zero on any error.
    Check {
        /// Files to check.
        #[arg(required = true)]
        files: Vec<PathBuf>,
    },
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Synth { scene, trial, seed, out } => run_synth(&scene, trial, seed, &out),
        Command::Check { files } => run_check(&files),
    };
    match result {
        Ok(code) => code,
        Err(e) => {
            eprintln!("error: {e:#}");
            ExitCode::from(2)
        }
    }
}

fn run_check(files: &[PathBuf]) -> Result<ExitCode> {
    let mut failed = 0;
    for file in files {
        match load_scene_file(file) {
            Ok((scene, warnings)) => {
                eprint!("{warnings}");
                println!("ok: {} (scene `{}`, {} actors, {} s)", file.display(), scene.name, scene.actors.len(), scene.duration_s);
            }
            Err(report) => {
                failed += 1;
                eprint!("{report}");
                println!("failed: {} ({} errors)", file.display(), report.error_count());
            }
        }
    }
    Ok(if failed == 0 { ExitCode::SUCCESS } else { ExitCode::from(1) })
}

fn run_synth(scene_path: &Path, trial: u64, seed: u64, out: &Path) -> Result<ExitCode> {
    let (scene, warnings) = match load_scene_file(scene_path) {
        Ok(pair) => pair,
        Err(report) => {
            eprint!("{report}");
            bail!("{} has {} errors", scene_path.display(), report.error_count());
        }
    };
    eprint!("{warnings}");
    std::fs::create_dir_all(out).with_context(|| format!("creating {}", out.display()))?;
    let key = StreamKey::new(seed, scene.name.clone(), trial);
    let trial_data = synthesize(&scene, &key).with_context(|| format!("synthesizing {}", scene_path.display()))?;
    let stem = format!("{}-trial{}", scene.name, trial);
    let wav = out.join(format!("{stem}.wav"));
    let csv = out.join(format!("{stem}.csv"));
    let truth = out.join(format!("{stem}-truth.csv"));
    let picture = out.join(format!("{stem}-spectrogram.svg"));
    export::write_wav(&wav, &trial_data)?;
    export::write_samples_csv(&csv, &trial_data)?;
    export::write_truth_csv(&truth, &trial_data.truth)?;
    let marks: Vec<echobench_spectrogram::Marked> = trial_data
        .truth
        .events
        .iter()
        .map(|e| echobench_spectrogram::Marked { start_s: e.interval.start_s(), end_s: e.interval.end_s(), label: e.actor_id.clone(), is_target: true })
        .chain(trial_data.truth.nuisances.iter().filter(|n| n.kind != "interference").map(|n| echobench_spectrogram::Marked {
            start_s: n.interval.start_s(),
            end_s: n.interval.end_s(),
            label: n.source_id.clone(),
            is_target: false,
        }))
        .collect();
    let channels = trial_data.info.channels.count();
    let spectrum = echobench_spectrogram::short_time_spectrum(&trial_data.samples, trial_data.info.channels, trial_data.info.sample_rate_hz, 256, 64)?;
    let options = echobench_spectrogram::SpectrogramOptions {
        title: format!("{} — trial {} (seed {}), {:.3} GHz", scene.name, trial, seed, scene.sensor.carrier_hz / 1e9),
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
