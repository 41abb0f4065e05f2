//! The CSV tables: the committed CI reference's files come back byte for byte from its
//! tallies and summary, and a label holding a comma, quotes and a line break stays one field.

use echobench_harness::runner::Tallies;
use echobench_harness::summary::Summary;
use echobench_render::csv_files::{write_events, write_roc, EVENTS_COLUMNS, ROC_COLUMNS};
use std::path::PathBuf;

fn reference() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../.ci/baseline")
}

fn reference_tallies() -> Tallies {
    serde_json::from_slice(&std::fs::read(reference().join("tallies.json")).unwrap()).unwrap()
}

fn reference_summary() -> Summary {
    serde_json::from_slice(&std::fs::read(reference().join("summary.json")).unwrap()).unwrap()
}

/// The committed CI reference's CSV files are reproduced byte for byte from its tallies and
/// summary: the CSV writers are pure functions of them, and writing through serde row
/// structs changed no byte of what the hand-listed records wrote.
#[test]
fn the_reference_csv_files_are_reproduced_from_its_tallies() {
    let mut roc = Vec::new();
    write_roc(&mut roc, &reference_tallies()).unwrap();
    let mut events = Vec::new();
    write_events(&mut events, &reference_summary()).unwrap();
    for (name, bytes) in [("roc.csv", roc), ("events.csv", events)] {
        assert!(
            bytes == std::fs::read(reference().join(name)).unwrap(),
            "{name} differs"
        );
    }
}

/// Every record of `bytes`, read back by the `csv` crate with the header as the first record.
fn records(bytes: &[u8]) -> Vec<csv::StringRecord> {
    csv::ReaderBuilder::new()
        .has_headers(false)
        .from_reader(bytes)
        .records()
        .map(|r| r.expect("well-formed CSV"))
        .collect()
}

const HOSTILE: &str = "cfar, \"rect\"\nwide";

#[test]
fn a_label_with_a_comma_quotes_and_a_line_break_stays_in_its_column() {
    let plain = reference_tallies();
    let mut hostile = plain.clone();
    let renamed = &mut hostile.detectors[0];
    let (product, label) = (renamed.product.clone(), renamed.label.clone());
    renamed.label = HOSTILE.to_string();
    renamed.product = format!("{product},\"2\"");

    let mut plain_bytes = Vec::new();
    write_roc(&mut plain_bytes, &plain).unwrap();
    let mut hostile_bytes = Vec::new();
    write_roc(&mut hostile_bytes, &hostile).unwrap();
    let (before, after) = (records(&plain_bytes), records(&hostile_bytes));
    assert_eq!(before.len(), after.len(), "one record per row, none split");
    assert_eq!(&after[0], &ROC_COLUMNS[..]);
    let detector = ROC_COLUMNS.iter().position(|c| *c == "detector").unwrap();
    let product_column = ROC_COLUMNS.iter().position(|c| *c == "product").unwrap();
    let mut renamed_rows = 0;
    for (b, a) in before.iter().zip(&after).skip(1) {
        assert_eq!(a.len(), ROC_COLUMNS.len(), "{a:?}");
        let was_renamed = b.get(detector) == Some(label.as_str())
            && b.get(product_column) == Some(product.as_str())
            && a.get(detector) == Some(HOSTILE);
        if was_renamed {
            renamed_rows += 1;
            assert_eq!(
                a.get(product_column),
                Some(format!("{product},\"2\"").as_str())
            );
        }
        // Every other field of the row is where it was, with its value.
        for c in (0..ROC_COLUMNS.len()).filter(|c| *c != detector && *c != product_column) {
            assert_eq!(a.get(c), b.get(c), "column {}", ROC_COLUMNS[c]);
        }
    }
    assert_eq!(renamed_rows, hostile.detectors[0].thresholds.len());

    // The same in events.csv, written from the summary.
    let mut summary = reference_summary();
    summary.detectors[0].label = HOSTILE.to_string();
    let mut bytes = Vec::new();
    write_events(&mut bytes, &summary).unwrap();
    let rows = records(&bytes);
    assert_eq!(&rows[0], &EVENTS_COLUMNS[..]);
    assert!(rows.iter().all(|r| r.len() == EVENTS_COLUMNS.len()));
    let with_label = rows.iter().filter(|r| r.get(1) == Some(HOSTILE)).count();
    let expected: usize = summary.detectors[0]
        .operating_points
        .iter()
        .map(|o| o.by_scene.len())
        .sum();
    assert_eq!(with_label, expected);
}
