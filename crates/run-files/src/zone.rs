//! The zone's files in a run folder: `zone.json` (the tallies and figures), `zone.csv` (every
//! cell of every detector) and one SVG picture per product, detector, kind of walk and view.
//! Added to a sealed run by `echobench zone` through [`echobench_run_folder::amend`]; a
//! shard's part holds `zone-part.json` only.

use crate::{read_text, RunFileError};
use echobench_harness::zone_walks::{fill_figures, ZonePicture, ZoneRecord, ZONE_SCHEMA_VERSION};
use echobench_suite::Suite;
use echobench_zone::{
    floor_picture, is_ceiling_mount, overview_picture, side_picture, zone_csv, WalkKind,
    ZoneCsvPart,
};
use std::collections::BTreeMap;
use std::path::Path;

/// The zone's record in a run folder.
pub const ZONE_FILE: &str = "zone.json";

/// A shard's part of the zone's walks.
pub const ZONE_PART_FILE: &str = "zone-part.json";

/// Every cell of every zone.
pub const ZONE_CSV_FILE: &str = "zone.csv";

/// Whether `name` is one of the zone's files (to replace them all when a zone is mapped again).
pub fn is_zone_file(name: &str) -> bool {
    name == ZONE_FILE
        || name == ZONE_CSV_FILE
        || (name.starts_with("zone-") && name.ends_with(".svg"))
}

/// A file name part from a product or detector label: letters, digits, `-`, `_` and `.` kept,
/// anything else `_` (labels are free text; file names must not be).
fn file_part(text: &str) -> String {
    text.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.') {
                c
            } else {
                '_'
            }
        })
        .collect()
}

/// The zone's files for `record` (whole, merged): figures filled in, pictures drawn and
/// named, the CSV written; returns (file name, bytes) in writing order, `zone.json` last so
/// it lists the pictures.
///
/// # Errors
/// A zone that does not fit the suite's plans, or a CSV writer failure.
pub fn zone_files(
    suite: &Suite,
    record: &mut ZoneRecord,
) -> Result<Vec<(String, Vec<u8>)>, RunFileError> {
    let fail = |message: String| RunFileError::Zone { message };
    let plans = fill_figures(suite, record).map_err(|e| fail(e.0))?;
    let mut files = Vec::new();
    let mut used = std::collections::BTreeSet::new();
    for (product, plan) in record.products.iter_mut().zip(&plans) {
        product.pictures.clear();
        // First the detectors side by side, one picture per kind of walk.
        let all: Vec<(&str, &echobench_zone::ZoneTally)> = product
            .detectors
            .iter()
            .map(|d| (d.label.as_str(), &d.tally))
            .collect();
        for kind in WalkKind::ALL {
            if !plan.spec().kinds.contains(&kind) {
                continue;
            }
            let file = format!(
                "zone-{}-overview-{}.svg",
                file_part(&product.product),
                kind.name()
            );
            used.insert(file.clone());
            let svg = overview_picture(plan, &product.product, kind, &all);
            files.push((file.clone(), svg.as_str().as_bytes().to_vec()));
            product.pictures.push(ZonePicture {
                detector: String::new(),
                kind: kind.name().to_string(),
                view: "overview".to_string(),
                file,
            });
        }
        for d in &product.detectors {
            for kind in WalkKind::ALL {
                if !plan.spec().kinds.contains(&kind) {
                    continue;
                }
                let mut views = vec![("floor", floor_picture(plan, &d.label, kind, &d.tally))];
                if is_ceiling_mount(plan) {
                    views.push(("side", side_picture(plan, &d.label, kind, &d.tally)));
                }
                for (view, svg) in views {
                    let stem = format!(
                        "zone-{}-{}-{}-{view}",
                        file_part(&product.product),
                        file_part(&d.label),
                        kind.name()
                    );
                    // Two labels that differ only in characters a file name cannot hold
                    // get numbered names.
                    let mut file = format!("{stem}.svg");
                    let mut n = 2;
                    while !used.insert(file.clone()) {
                        file = format!("{stem}-{n}.svg");
                        n += 1;
                    }
                    files.push((file.clone(), svg.as_str().as_bytes().to_vec()));
                    product.pictures.push(ZonePicture {
                        detector: d.label.clone(),
                        kind: kind.name().to_string(),
                        view: view.to_string(),
                        file,
                    });
                }
            }
        }
    }
    let labelled: Vec<Vec<(&str, &echobench_zone::ZoneTally)>> = record
        .products
        .iter()
        .map(|p| {
            p.detectors
                .iter()
                .map(|d| (d.label.as_str(), &d.tally))
                .collect()
        })
        .collect();
    let parts: Vec<ZoneCsvPart<'_>> = record
        .products
        .iter()
        .zip(&plans)
        .zip(&labelled)
        .map(|((p, plan), tallies)| ZoneCsvPart {
            product: &p.product,
            plan,
            tallies,
        })
        .collect();
    let csv = zone_csv(&parts, record.confidence).map_err(|e| fail(e.to_string()))?;
    files.push((ZONE_CSV_FILE.to_string(), csv));
    let json = serde_json::to_vec_pretty(&*record).map_err(|e| fail(e.to_string()))?;
    files.push((ZONE_FILE.to_string(), json));
    Ok(files)
}

/// Reads a zone record (`zone.json` or a shard's `zone-part.json`), its version first.
///
/// # Errors
/// An unreadable or malformed file, or another version; `Ok(None)` when there is none.
pub fn read_zone_record(path: &Path) -> Result<Option<ZoneRecord>, RunFileError> {
    let Some(text) = read_text(path)? else {
        return Ok(None);
    };
    #[derive(serde::Deserialize)]
    struct Version {
        schema: Option<u64>,
    }
    let parse = |e: serde_json::Error| RunFileError::Parse {
        path: path.to_path_buf(),
        message: e.to_string(),
    };
    let found = serde_json::from_str::<Version>(&text)
        .map_err(parse)?
        .schema;
    if found != Some(u64::from(ZONE_SCHEMA_VERSION)) {
        return Err(RunFileError::Schema {
            path: path.to_path_buf(),
            found: found.map_or_else(|| "none".to_string(), |v| v.to_string()),
            expected: ZONE_SCHEMA_VERSION,
        });
    }
    serde_json::from_str(&text).map(Some).map_err(parse)
}

/// A zone's pictures: file name → SVG text.
pub type ZonePictures = BTreeMap<String, String>;

/// The zone of a run folder and its pictures, when it has one.
///
/// # Errors
/// As [`read_zone_record`], and a picture `zone.json` lists that is missing or unreadable.
pub(crate) fn read_zone(dir: &Path) -> Result<Option<(ZoneRecord, ZonePictures)>, RunFileError> {
    let Some(record) = read_zone_record(&dir.join(ZONE_FILE))? else {
        return Ok(None);
    };
    let mut pictures = BTreeMap::new();
    for picture in record.products.iter().flat_map(|p| &p.pictures) {
        if !is_zone_file(&picture.file) || picture.file.contains('/') {
            return Err(RunFileError::Parse {
                path: dir.join(ZONE_FILE),
                message: format!("picture `{}` is not a zone picture's name", picture.file),
            });
        }
        let path = dir.join(&picture.file);
        let text = read_text(&path)?.ok_or(RunFileError::Missing { path })?;
        pictures.insert(picture.file.clone(), text);
    }
    Ok(Some((record, pictures)))
}
