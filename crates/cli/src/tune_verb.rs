//! `echobench tune`: arguments to `echobench-tune`, its files into a staged output folder.

use anyhow::{bail, Context, Result};
use echobench_tune::{TuneSettings, TUNED_SUITE_FILE};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

/// What the command line asked for.
pub(crate) struct TuneRequest {
    pub suite: Option<PathBuf>,
    pub out: PathBuf,
    pub replace: bool,
    pub settings: TuneSettings,
    pub threads: Option<usize>,
    pub seed: Option<u64>,
    pub allow_exec: bool,
    /// Tune only shard K/N's detector entries (a part, to be merged with `parts`).
    pub shard: Option<String>,
    /// Merge these parts' folders instead of tuning.
    pub parts: Vec<PathBuf>,
}

/// The file name a built-in scene is written under: its stem kept (the stem is the scene's
/// id, which seeds its trials), its folder dropped (an output folder is flat).
fn flat_name(embedded: &str) -> String {
    Path::new(embedded).file_name().map_or_else(
        || embedded.to_string(),
        |n| n.to_string_lossy().into_owned(),
    )
}

pub(crate) fn run_tune(plugins: &crate::Plugins, request: TuneRequest) -> Result<ExitCode> {
    let mut suite = crate::load_suite(plugins, request.suite.as_deref(), request.allow_exec)?;
    if let Some(seed) = request.seed {
        suite.seed = seed;
    }
    let problems = echobench_limits::door_problems(&suite, request.allow_exec);
    if !problems.is_empty() {
        for line in echobench_limits::cut_list(problems.clone()) {
            eprintln!("error: {line}");
        }
        bail!("the suite is refused ({} problems)", problems.len());
    }
    request
        .settings
        .check()
        .map_err(|e| anyhow::anyhow!("{e}"))?;
    if let Some(n) = request.threads {
        rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build_global()
            .context("setting the thread count")?;
    }
    let shard = request
        .shard
        .as_deref()
        .map(echobench_harness::runner::Shard::parse)
        .transpose()
        .map_err(anyhow::Error::msg)?;
    if shard.is_some() && !request.parts.is_empty() {
        bail!("--parts merges the parts of a split; it does not tune a shard");
    }
    let staging = echobench_run_folder::Staging::begin(&request.out, request.replace)?;
    let all = plugins.with_external(request.allow_exec);
    let note = |text: &str| eprintln!("tune: {text}");
    let (summary, tuned) = if !request.parts.is_empty() {
        merge_part_folders(&suite, &all, &request.parts)?
    } else if let Some(shard) = shard {
        let part = echobench_tune::entries_of_shard(&suite, shard);
        if part.detectors.is_empty() {
            bail!(
                "shard {}/{} holds no detector entry (the suite has {}): use fewer shards",
                shard.index,
                shard.count,
                suite.detectors.len()
            );
        }
        let (mut summary, tuned) = echobench_tune::tune(&part, &all, &request.settings, &note)
            .map_err(|e| anyhow::anyhow!("{e}"))?;
        summary.shards = vec![shard];
        (summary, tuned)
    } else {
        echobench_tune::tune(&suite, &all, &request.settings, &note)
            .map_err(|e| anyhow::anyhow!("{e}"))?
    };
    // The tuned suite finds its scenes from the output folder: a suite file's scene paths
    // made absolute; the built-in suite's scenes written beside it.
    let text = crate::suite_text(request.suite.as_deref())?;
    let (name, scene_files): (String, Vec<(String, String)>) = match &request.suite {
        Some(p) => (p.display().to_string(), Vec::new()),
        None => (
            echobench_suite::DEFAULT_SUITE_FILE_NAME.to_string(),
            echobench_suite::DEFAULT_SUITE_SCENES
                .iter()
                .map(|(n, t)| (flat_name(n), (*t).to_string()))
                .collect(),
        ),
    };
    let folder = request
        .suite
        .as_deref()
        .and_then(Path::parent)
        .map(|p| {
            std::path::absolute(if p.as_os_str().is_empty() {
                Path::new(".")
            } else {
                p
            })
        })
        .transpose()?;
    let rewrite = |path: &str| match &folder {
        Some(dir) => dir.join(path).display().to_string(),
        None => flat_name(path),
    };
    let header = format!(
        "Suite `{}` with each detector's tuned parameters (echobench tune: tuning seed {}, \
         judged on seed {}).\nRun it with `echobench run` like any suite.",
        suite.name, summary.tuning_seed, suite.seed
    );
    let yaml = echobench_tune::suite_file::tuned_suite_yaml(
        &name,
        &text,
        &tuned.detectors,
        &rewrite,
        &header,
    )
    .map_err(|e| anyhow::anyhow!("{e}"))?;
    let dir = staging.dir().to_path_buf();
    echobench_tune::write_outputs(&dir, &summary, &yaml, &scene_files)?;
    // The kept suite must load back as it was judged: same scenes, same detectors.
    // (Its load warnings are the suite's own, printed when it was loaded.)
    let back = echobench_suite::load_suite_file(&dir.join(TUNED_SUITE_FILE), &all)
        .map_err(|report| anyhow::anyhow!("the tuned suite file does not load back:\n{report}"))?
        .0;
    let ids =
        |s: &echobench_suite::Suite| s.scenes.iter().map(|x| x.id.clone()).collect::<Vec<_>>();
    if ids(&back) != ids(&suite) {
        bail!("the tuned suite file loads back with other scenes than were judged");
    }
    if let Some((a, b)) = back
        .detectors
        .iter()
        .zip(&tuned.detectors)
        .find(|(a, b)| a != b)
    {
        bail!(
            "the tuned suite file loads detector `{}` back as {a:?}, judged as {b:?}",
            b.label
        );
    }
    staging.commit(echobench_run_folder::FolderKind::Run)?;
    print!("{}", echobench_tune::markdown(&summary));
    println!("\nwritten: {}", request.out.display());
    Ok(ExitCode::SUCCESS)
}

/// The parts of one split (`tune --shard K/N` folders) merged: their summaries
/// ([`echobench_tune::merge_parts`]) and their tuned entries, back in suite order.
fn merge_part_folders(
    suite: &echobench_suite::Suite,
    plugins: &[std::sync::Arc<dyn echobench_core::detector::DetectorPlugin>],
    parts: &[PathBuf],
) -> Result<(echobench_tune::TuneSummary, echobench_suite::Suite)> {
    let mut summaries = Vec::new();
    let mut entries = Vec::new();
    for dir in parts {
        echobench_run_folder::verify(dir, &[echobench_tune::SUMMARY_JSON_FILE, TUNED_SUITE_FILE])?;
        summaries.push(
            echobench_tune::read_summary(&dir.join(echobench_tune::SUMMARY_JSON_FILE))
                .map_err(|e| anyhow::anyhow!("{e}"))?,
        );
        let (part, _) = echobench_suite::load_suite_file(&dir.join(TUNED_SUITE_FILE), plugins)
            .map_err(|report| anyhow::anyhow!("{}: {report}", dir.display()))?;
        entries.extend(part.detectors);
    }
    let summary =
        echobench_tune::merge_parts(suite, summaries).map_err(|e| anyhow::anyhow!("{e}"))?;
    let mut tuned = suite.clone();
    tuned.detectors = suite
        .detectors
        .iter()
        .map(|d| {
            entries
                .iter()
                .find(|e| e.label == d.label)
                .cloned()
                .with_context(|| format!("no part holds detector `{}`", d.label))
        })
        .collect::<Result<_>>()?;
    Ok((summary, tuned))
}
