//! An entry's `capture:`: recordings in place of synthesis, opened at load (headers for WAV,
//! one pass for CSV), labelled and cut into trials of the scene's duration.

use crate::load::error;
use crate::model::{CaptureSource, CaptureTrial};
use crate::sources::SceneSource;
use echobench_core::Channels;
use echobench_scene::SceneSpec;
use echobench_yaml_reader::{Node, Reader, Report, Value};

/// Reads an entry's `capture:`: the recordings, their labels and layout, cut into trials of
/// the scene's duration. Every file is opened here (headers only for WAV; CSV is read through
/// once), so a missing, damaged or mislabelled recording is refused before any trial runs.
pub(crate) fn read_capture(
    node: &Node,
    path: &str,
    suite_file: &str,
    source: &dyn SceneSource,
    scene: &SceneSpec,
    report: &mut Report,
) -> Option<CaptureSource> {
    use echobench_capture::{AdcDescription, CaptureFormat, CsvLayout, CsvValues, TrialCut};
    let mut reader = Reader::new(suite_file);
    let mut f = reader.fields(node, path)?;
    let recordings = f.raw("recordings");
    let calibration_recordings = f.raw("calibration_recordings");
    let hop_s: Option<f64> = f.optional("hop_s");
    let skip_s: f64 = f.optional_or("skip_s", 0.0);
    let mix_db: Option<f64> = f.optional("mix_db");
    let csv_rate: Option<f64> = f.optional("csv_sample_rate_hz");
    let csv_values = f.choice_or("csv_values", &["codes", "signed_codes", "volts"], "codes");
    if hop_s.is_some_and(|h| !(h.is_finite() && h > 0.0)) {
        f.error_at("hop_s", "must be a positive number of seconds");
    }
    if !(skip_s.is_finite() && skip_s >= 0.0) {
        f.error_at("skip_s", "must be zero or a positive number of seconds");
    }
    if mix_db.is_some_and(|g| !(g.is_finite() && (-200.0..=60.0).contains(&g))) {
        f.error_at("mix_db", "must be a gain in dB between -200 and 60");
    }
    if csv_rate.is_some_and(|r| !(r.is_finite() && r > 0.0)) {
        f.error_at("csv_sample_rate_hz", "must be a positive rate");
    }
    if recordings.is_none() {
        f.error_at(
            "recordings",
            "missing: list the recordings, e.g. `- {samples: bench/walk-01.wav, labels: bench/walk-01-labels.csv}`",
        );
    }
    let recordings_path = f.path_of("recordings");
    let calibration_path = f.path_of("calibration_recordings");
    f.finish();
    let mut ok = !reader.has_errors();
    let sensor = &scene.sensor;
    let adc = match AdcDescription::new(
        sensor.adc.bits,
        sensor.adc.full_scale_v,
        Some(sensor.front_end.bias_v),
    ) {
        Ok(adc) => Some(adc),
        Err(e) => {
            reader.error(
                node.location,
                path,
                format!("the scene's ADC cannot scale a recording: {e}"),
            );
            None
        }
    };
    let values = match csv_values {
        "signed_codes" => CsvValues::SignedCodes,
        "volts" => CsvValues::InputVolts,
        _ => CsvValues::Codes,
    };
    let cut = TrialCut {
        trial_s: scene.duration_s,
        hop_s,
        skip_s,
    };
    let mut lists = Vec::new();
    for (list, list_path) in [
        (recordings, recordings_path),
        (calibration_recordings, calibration_path),
    ] {
        let mut trials = Vec::new();
        if let (Some(list), Some(adc)) = (list, adc) {
            let context = RecordingContext {
                source,
                sensor_rate_hz: sensor.sample_rate_hz,
                channels: sensor.output,
                csv_rate,
                values,
                adc,
                cut,
            };
            match &list.value {
                Value::Seq(items) => {
                    for (i, item) in items.iter().enumerate() {
                        let item_path = format!("{list_path}[{i}]");
                        match read_recording(item, &item_path, &context, &mut reader) {
                            Some(mut more) => trials.append(&mut more),
                            None => ok = false,
                        }
                    }
                }
                _ => {
                    reader.error(
                        list.location,
                        &list_path,
                        format!("expected a list of recordings, found {}", list.kind_name()),
                    );
                    ok = false;
                }
            }
        }
        lists.push(trials);
    }
    let problems = reader.finish();
    ok &= !problems.has_errors();
    report.extend(problems);
    let calibration = lists.pop()?;
    let test = lists.pop()?;
    if ok && test.is_empty() {
        report.problems.push(error(
            suite_file,
            node.location,
            format!("{path}.recordings"),
            format!(
                "no trial of {} s fits in the recordings: shorten the scene's `duration_s`",
                scene.duration_s
            ),
        ));
        ok = false;
    }
    let format = match csv_rate {
        Some(rate) => CaptureFormat::Csv(CsvLayout {
            sample_rate_hz: rate,
            values,
        }),
        None => CaptureFormat::Wav,
    };
    (ok).then(|| CaptureSource {
        adc: adc.expect("checked above"),
        format,
        mix_gain: mix_db.map(|db| 10f64.powf(db / 20.0)),
        test,
        calibration,
    })
}

struct RecordingContext<'a> {
    source: &'a dyn SceneSource,
    sensor_rate_hz: f64,
    channels: Channels,
    csv_rate: Option<f64>,
    values: echobench_capture::CsvValues,
    adc: echobench_capture::AdcDescription,
    cut: echobench_capture::TrialCut,
}

/// One `{samples, labels}` item: opens the file, reads the labels and cuts the trials.
fn read_recording(
    node: &Node,
    path: &str,
    context: &RecordingContext<'_>,
    reader: &mut Reader,
) -> Option<Vec<CaptureTrial>> {
    use echobench_capture::{read_labels, CaptureFormat, CaptureReader, CsvLayout};
    let mut f = reader.fields(node, path)?;
    let samples: Option<String> = f.required("samples");
    let labels: Option<String> = f.optional("labels");
    let samples_at = f.raw("samples").map_or(node.location, |n| n.location);
    let labels_at = f.raw("labels").map_or(node.location, |n| n.location);
    f.finish();
    let samples = samples?;
    let Some(file) = context.source.path(&samples) else {
        reader.error(
            samples_at,
            &format!("{path}.samples"),
            "recordings can only be read by a suite file on disk",
        );
        return None;
    };
    let is_csv = samples.to_ascii_lowercase().ends_with(".csv");
    let format = match (is_csv, context.csv_rate) {
        (true, Some(rate)) => CaptureFormat::Csv(CsvLayout {
            sample_rate_hz: rate,
            values: context.values,
        }),
        (true, None) => {
            reader.error(samples_at, &format!("{path}.samples"), "a CSV recording needs `csv_sample_rate_hz` in the capture (a CSV file does not state its rate)");
            return None;
        }
        (false, _) => CaptureFormat::Wav,
    };
    let capture = match CaptureReader::open(&file, &format, context.adc) {
        Ok(capture) => capture,
        Err(e) => {
            reader.error(samples_at, &format!("{path}.samples"), e.to_string());
            return None;
        }
    };
    for warning in capture.warnings() {
        reader.warn(
            samples_at,
            &format!("{path}.samples"),
            format!("{}: {warning}", file.display()),
        );
    }
    if capture.channels() != context.channels {
        reader.error(
            samples_at,
            &format!("{path}.samples"),
            format!(
                "the recording has {} channel(s) but the scene's sensor has `output: {}`",
                capture.channels().count(),
                if context.channels == Channels::Iq {
                    "iq"
                } else {
                    "real"
                }
            ),
        );
        return None;
    }
    let file_rate_hz = capture.sample_rate_hz();
    if file_rate_hz != context.sensor_rate_hz {
        let whole = |r: f64| r.fract() == 0.0 && r >= 1.0 && r <= u32::MAX as f64;
        let refused = if whole(file_rate_hz) && whole(context.sensor_rate_hz) {
            echobench_capture::Resampler::new(
                file_rate_hz as u32,
                context.sensor_rate_hz as u32,
                context.channels,
            )
            .err()
            .map(|e| e.to_string())
        } else {
            Some("only whole-hertz rates can be resampled".into())
        };
        if let Some(why) = refused {
            reader.error(
                samples_at,
                &format!("{path}.samples"),
                format!("recorded at {file_rate_hz} Hz, the scene's sensor runs at {} Hz, and the rates cannot be converted: {why}", context.sensor_rate_hz),
            );
            return None;
        }
    }
    let duration_s = capture.duration_s();
    let label_list = match &labels {
        Some(relative) => {
            let Some(label_file) = context.source.path(relative) else {
                reader.error(
                    labels_at,
                    &format!("{path}.labels"),
                    "label files can only be read by a suite file on disk",
                );
                return None;
            };
            match read_labels(&label_file, duration_s) {
                Ok(list) => list,
                Err(e) => {
                    reader.error(labels_at, &format!("{path}.labels"), e.to_string());
                    return None;
                }
            }
        }
        None => Vec::new(),
    };
    let windows = match echobench_capture::cut_trials(
        capture.frames(),
        file_rate_hz,
        &context.cut,
        &label_list,
    ) {
        Ok(windows) => windows,
        Err(e) => {
            // Named with the file: the same recording may be listed by several entries.
            let message = format!("{}: {e}", file.display());
            reader.error(samples_at, &format!("{path}.samples"), message);
            return None;
        }
    };
    Some(
        windows
            .into_iter()
            .map(|w| CaptureTrial {
                path: file.clone(),
                file_rate_hz,
                start_frame: w.start_frame,
                frames: w.frames,
                targets: w.labels.iter().map(|l| l.interval).collect(),
            })
            .collect(),
    )
}
