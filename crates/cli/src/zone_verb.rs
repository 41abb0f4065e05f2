//! `echobench zone`: the detection zones of a finished run, added to its folder.
//!
//! Three forms: walk every walk and add the zone to the run (`zone RUN`); walk one shard's
//! walks into a part folder (`zone RUN --shard K/N --part DIR`); combine the parts into the
//! run (`zone RUN --parts DIR...`). The zone's thresholds are the run's, so a zone always
//! belongs to the run whose folder it is in.

use crate::{progress_bar, Plugins};
use anyhow::{bail, Context, Result};
use echobench_harness::runner::{resolve_detectors, Progress, Shard};
use echobench_harness::zone_walks::{
    merge_zone_runs, run_zones, ZoneRecord, ZONE_CONFIDENCE, ZONE_SCHEMA_VERSION,
};
use echobench_run_files::zone::{is_zone_file, read_zone_record, zone_files, ZONE_PART_FILE};
use echobench_run_files::RunFolder;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

/// What `echobench zone` was asked to do.
pub(crate) struct ZoneRequest<'a> {
    pub(crate) run: &'a Path,
    pub(crate) suite: Option<&'a Path>,
    pub(crate) shard: Option<&'a str>,
    pub(crate) part: Option<PathBuf>,
    pub(crate) parts: &'a [PathBuf],
    pub(crate) allow_exec: bool,
}

pub(crate) fn run_zone(plugins: &Plugins, request: ZoneRequest<'_>) -> Result<ExitCode> {
    let run = request.run;
    let folder = RunFolder::open(run)?;
    let run_id = echobench_run_folder::verify(run, &[])?.run_id;
    let text = folder.suite_text.as_deref().with_context(|| {
        format!(
            "{}: the run folder has no suite.yaml to map its zone from",
            run.display()
        )
    })?;
    let with_external = plugins.with_external(request.allow_exec);
    // The suite as the run ran it (scene files beside --suite, or the built-in ones), with the
    // run's seed.
    let suite = echobench_explain::ExplainRun::from_text(
        text,
        folder.tallies.clone(),
        run,
        request.suite,
        &with_external,
    )
    .map_err(|e| anyhow::anyhow!("{e}"))?
    .suite;
    if suite.products.iter().all(|p| p.zone.is_none()) {
        bail!(
            "suite `{}` declares no zone: add a `zone:` block to a product (see the README's \
             \"Detection zones\")",
            suite.name
        );
    }
    let shard = request
        .shard
        .map(Shard::parse)
        .transpose()
        .map_err(anyhow::Error::msg)?;
    match (shard, request.part.as_ref(), request.parts.is_empty()) {
        (Some(_), None, _) => bail!("--shard needs --part DIR: the folder for this shard's part"),
        (None, Some(_), _) => bail!("--part is the folder of a shard's part: give --shard K/N too"),
        (Some(_), Some(_), false) => bail!("--parts combines parts; it does not walk a shard"),
        _ => {}
    }
    let record = if request.parts.is_empty() {
        let detectors = resolve_detectors(&suite, &with_external)?;
        let bar = progress_bar();
        let report = |p: Progress| bar.update_as("zone walks", p);
        let products = run_zones(&suite, &detectors, &folder.tallies, shard, &report)?;
        bar.finish();
        ZoneRecord {
            schema: ZONE_SCHEMA_VERSION,
            suite: suite.name.clone(),
            seed: suite.seed,
            run_id: run_id.clone(),
            shards: shard.into_iter().collect(),
            confidence: ZONE_CONFIDENCE,
            products,
        }
    } else {
        combine_parts(request.parts, &run_id)?
    };
    if let (Some(_), Some(part)) = (shard, request.part.as_ref()) {
        let staging = echobench_run_folder::Staging::begin(part, false)?;
        let bytes =
            echobench_render::json::json_bytes(&record).context("encoding the zone part")?;
        echobench_core::atomic::write_atomically(&staging.dir().join(ZONE_PART_FILE), |w| {
            std::io::Write::write_all(w, &bytes)
        })?;
        staging.commit(echobench_run_folder::FolderKind::Run)?;
        println!(
            "wrote {} (shard {} of the zone's walks; combine the parts with `echobench zone {} --parts ...`)",
            part.join(ZONE_PART_FILE).display(),
            request.shard.unwrap_or_default(),
            run.display()
        );
        return Ok(ExitCode::SUCCESS);
    }
    let mut record = record;
    let files = zone_files(&suite, &mut record)?;
    echobench_run_folder::amend(run, |dir| {
        // A zone mapped again replaces every file of the old one (its pictures may differ).
        for entry in std::fs::read_dir(dir)? {
            let name = entry?.file_name().to_string_lossy().into_owned();
            if is_zone_file(&name) {
                std::fs::remove_file(dir.join(&name))?;
            }
        }
        files
            .iter()
            .try_for_each(|(name, bytes)| echobench_run_folder::write_new_file(dir, name, bytes))
    })?;
    print!("{}", echobench_render::console::zone_table(&record));
    println!(
        "wrote {}/{{zone.json, zone.csv}} and {} pictures",
        run.display(),
        files.len() - 2
    );
    // The report carries the zone: render it again from the amended folder.
    crate::run_report(plugins, run, None, None)
}

/// The parts of every shard of one run's zone, merged.
fn combine_parts(parts: &[PathBuf], run_id: &str) -> Result<ZoneRecord> {
    let mut merged: Option<ZoneRecord> = None;
    for dir in parts {
        echobench_run_folder::verify(dir, &[ZONE_PART_FILE])?;
        let path = dir.join(ZONE_PART_FILE);
        let part =
            read_zone_record(&path)?.with_context(|| format!("{}: not found", path.display()))?;
        if part.run_id != run_id {
            bail!(
                "{}: a part of the zone of run {}, not of this run ({run_id})",
                path.display(),
                part.run_id
            );
        }
        match &mut merged {
            None => merged = Some(part),
            Some(m) => {
                if m.shards.iter().any(|s| part.shards.contains(s)) {
                    bail!("{}: its shard is already among the parts", path.display());
                }
                merge_zone_runs(&mut m.products, &part.products)
                    .with_context(|| format!("merging {}", path.display()))?;
                m.shards.extend(part.shards);
            }
        }
    }
    let mut merged = merged.context("--parts needs at least one part folder")?;
    merged.shards.sort_by_key(|s| s.index);
    let count = merged.shards.first().map_or(0, |s| s.count);
    let complete = merged.shards.iter().all(|s| s.count == count)
        && merged.shards.iter().map(|s| s.index).eq(1..=count);
    if !complete {
        let have: Vec<String> = merged
            .shards
            .iter()
            .map(|s| format!("{}/{}", s.index, s.count))
            .collect();
        bail!(
            "the parts hold shards [{}]: give every shard of one split",
            have.join(", ")
        );
    }
    // A merged zone is the whole zone: it says so like one walked in one pass.
    merged.shards.clear();
    Ok(merged)
}
