//! CSV sample captures: layouts, value kinds, every bad line at once, streaming.

mod common;

use common::{bits, read_all, Scratch};
use echobench_capture::{
    AdcDescription, CaptureError, CaptureFormat, CaptureReader, CsvLayout, CsvValues,
};
use echobench_core::Channels;

fn adc12() -> AdcDescription {
    AdcDescription::new(12, 3.3, None).unwrap()
}

fn layout(values: CsvValues) -> CsvLayout {
    CsvLayout {
        sample_rate_hz: 2000.0,
        values,
    }
}

#[test]
fn one_column_of_input_volts_with_header_comments_and_blank_lines() {
    let scratch = Scratch::new("csv-real");
    let path = scratch.write(
        "real.csv",
        "# bench capture\nvolts\n1.65\n\n  2.0 \n# a note in the middle\n1.3\n",
    );
    let mut reader = CaptureReader::open(
        &path,
        &CaptureFormat::Csv(layout(CsvValues::InputVolts)),
        adc12(),
    )
    .unwrap();
    assert_eq!(reader.channels(), Channels::Real);
    assert_eq!(reader.frames(), 3);
    assert_eq!(reader.sample_rate_hz(), 2000.0);
    assert!((reader.duration_s() - 1.5e-3).abs() < 1e-15);
    let volts = read_all(&mut reader, 2);
    let expected = [0.0, 2.0 - 1.65, 1.3 - 1.65];
    for (got, want) in volts.iter().zip(expected) {
        assert_eq!(*got, want as f32);
    }
}

#[test]
fn two_columns_of_codes_are_iq_and_codes_map_like_the_converter() {
    let scratch = Scratch::new("csv-iq");
    let path = scratch.write("iq.csv", "i,q\n2048,4095\n0,1024\n");
    let adc = adc12();
    let mut reader = CaptureReader::open_csv(&path, &layout(CsvValues::Codes), adc).unwrap();
    assert_eq!(reader.channels(), Channels::Iq);
    assert_eq!(reader.frames(), 2);
    let volts = read_all(&mut reader, 10);
    let lsb = 3.3 / 4096.0;
    let expected = [0.0, 4095.0 * lsb - 1.65, -1.65, 1024.0 * lsb - 1.65];
    for (got, want) in volts.iter().zip(expected) {
        assert_eq!(*got, want as f32);
    }

    // Two's-complement codes: 0 is mid-scale.
    let signed = scratch.write("signed.csv", "0,-2048\n1024,2047\n");
    let volts = read_all(
        &mut CaptureReader::open_csv(&signed, &layout(CsvValues::SignedCodes), adc).unwrap(),
        10,
    );
    let expected = [0.0, -1.65, 1024.0 * lsb, 2047.0 * lsb];
    for (got, want) in volts.iter().zip(expected) {
        assert!((f64::from(*got) - want).abs() < 1e-6, "{got} vs {want}");
    }
}

#[test]
fn every_bad_line_is_reported_at_once_with_its_number() {
    let scratch = Scratch::new("csv-bad");
    let text = "\
i,q
0.1,0.2
# comment and blank lines count in the line numbers

0.1
abc,0.3
0.1,0.2,0.3
NaN,0.1
0.2,
0.1,0.1
";
    let path = scratch.write("bad.csv", text);
    let err = CaptureReader::open_csv(&path, &layout(CsvValues::InputVolts), adc12()).unwrap_err();
    let CaptureError::Csv { problems, more, .. } = &err else {
        panic!("expected CSV problems, got {err:?}");
    };
    let lines: Vec<u64> = problems.iter().map(|p| p.line).collect();
    assert_eq!(lines, vec![5, 6, 7, 8, 9], "{err}");
    assert_eq!(*more, 0);
    let text = err.to_string();
    assert!(text.contains("bad.csv"), "{text}");
    assert!(text.contains("line 6: i `abc` is not a number"), "{text}");
    assert!(
        text.contains("line 8: i `NaN` is not a finite number"),
        "{text}"
    );
    assert!(text.contains("line 9: q is empty"), "{text}");
    assert!(
        text.contains("line 5: 1 values where the file has 2"),
        "{text}"
    );
}

#[test]
fn wrong_widths_empty_files_and_bad_rates_are_refused() {
    let scratch = Scratch::new("csv-shapes");
    let three = scratch.write("three.csv", "t_s,volts,code\n0,0.1,2100\n");
    let err = CaptureReader::open_csv(&three, &layout(CsvValues::InputVolts), adc12())
        .unwrap_err()
        .to_string();
    assert!(err.contains("line 1: header: 3 columns"), "{err}");

    let empty = scratch.write("empty.csv", "# nothing recorded\n\n");
    let err = CaptureReader::open_csv(&empty, &layout(CsvValues::InputVolts), adc12())
        .unwrap_err()
        .to_string();
    assert!(err.contains("no samples"), "{err}");

    let huge = scratch.write("huge.csv", "0.1\n1e300\n");
    let err = CaptureReader::open_csv(&huge, &layout(CsvValues::Codes), adc12())
        .unwrap_err()
        .to_string();
    assert!(err.contains("line 2: `1e300` is beyond the range"), "{err}");

    let fine = scratch.write("fine.csv", "0.1\n");
    for rate in [0.0, -5.0, f64::NAN] {
        let bad = CsvLayout {
            sample_rate_hz: rate,
            values: CsvValues::InputVolts,
        };
        let err = CaptureReader::open_csv(&fine, &bad, adc12()).unwrap_err();
        assert!(matches!(
            err,
            CaptureError::Setting {
                name: "sample_rate_hz",
                ..
            }
        ));
    }

    // More bad lines than are listed: the rest are counted.
    let many: String = std::iter::once("0.5\n".to_string())
        .chain((0..30).map(|_| "x\n".to_string()))
        .collect();
    let path = scratch.write("many.csv", &many);
    match CaptureReader::open_csv(&path, &layout(CsvValues::InputVolts), adc12()) {
        Err(CaptureError::Csv { problems, more, .. }) => {
            assert_eq!(problems.len(), echobench_capture::MAX_LINE_PROBLEMS);
            assert_eq!(more, 30 - echobench_capture::MAX_LINE_PROBLEMS);
        }
        other => panic!("{other:?}"),
    }
}

#[test]
fn blocks_and_seeks_give_the_same_samples() {
    let scratch = Scratch::new("csv-blocks");
    let mut text = String::from("i,q\n");
    for n in 0..1500 {
        text.push_str(&format!("{},{}\n", (n * 7) % 4096, (n * 13) % 4096));
        if n % 100 == 0 {
            text.push_str("# marker\n\n");
        }
    }
    let path = scratch.write("long.csv", &text);
    let open = || CaptureReader::open_csv(&path, &layout(CsvValues::Codes), adc12()).unwrap();
    let whole = read_all(&mut open(), usize::MAX);
    assert_eq!(whole.len(), 3000);
    for block in [1usize, 7, 256] {
        assert_eq!(
            bits(&read_all(&mut open(), block)),
            bits(&whole),
            "block {block}"
        );
    }
    let mut reader = open();
    for frame in [1200u64, 3, 0, 1499, 1500, 700] {
        reader.seek_to_frame(frame).unwrap();
        let mut out = Vec::new();
        let got = reader.read_block(&mut out, 50).unwrap();
        let start = 2 * frame as usize;
        assert_eq!(
            bits(&out),
            bits(&whole[start..start + 2 * got]),
            "at {frame}"
        );
        assert_eq!(got, (1500 - frame as usize).min(50));
    }
    assert!(reader.seek_to_frame(1501).is_err());
}
