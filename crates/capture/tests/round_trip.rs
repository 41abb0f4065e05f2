//! Round trip: a synthesized trial written as an echobench WAV (and as a CSV
//! of codes) reads back as exactly the synthesis volts, every built-in
//! detector scores both identically, and the truth survives as a label file.

mod common;

use common::{bits, Scratch};
use echobench_capture::{
    cut_trials, read_labels, write_labels, AdcDescription, CaptureReader, CsvLayout, CsvValues,
    Label, TrialCut,
};
use echobench_core::detector::Params;
use echobench_scene::{export, load_scene_file, synthesize, SceneSpec, StreamKey, Trial};
use std::io::Write;
use std::path::PathBuf;

fn scene(name: &str) -> SceneSpec {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("../../scenarios/scenes")
        .join(name);
    match load_scene_file(&path) {
        Ok((scene, _warnings)) => scene,
        Err(report) => panic!("{name} does not load:\n{report}"),
    }
}

/// The converter description of a scene's sensor.
fn adc_of(scene: &SceneSpec) -> AdcDescription {
    AdcDescription::new(
        scene.sensor.adc.bits,
        scene.sensor.adc.full_scale_v,
        Some(scene.sensor.front_end.bias_v),
    )
    .unwrap()
}

fn read_capture(reader: &mut CaptureReader, block: usize) -> Vec<f32> {
    let mut out = Vec::new();
    while reader.read_block(&mut out, block).unwrap() > 0 {}
    out
}

fn scores_of(
    plugin: &dyn echobench_core::detector::DetectorPlugin,
    info: &echobench_core::StreamInfo,
    samples: &[f32],
    block_values: usize,
) -> Result<Vec<echobench_core::FrameScore>, String> {
    let params = Params::defaults(plugin.params());
    let mut detector = plugin
        .plan(&params, info)
        .map(|plan| plan.start())
        .map_err(|e| e.to_string())?;
    let mut scores = Vec::new();
    // Whole sample instants per block (pairs on I/Q streams).
    let per_instant = info.channels.count();
    let block_values = block_values.div_ceil(per_instant) * per_instant;
    for block in samples.chunks(block_values) {
        let block = echobench_core::detector::Samples::from_values(block, info.channels)
            .ok_or("the samples split an I/Q pair")?;
        detector
            .process(block, &mut scores)
            .map_err(|e| e.to_string())?;
    }
    Ok(scores)
}

/// Runs the round trip; returns how many target events the trial had.
fn round_trip(scene_file: &str) -> usize {
    let scene = scene(scene_file);
    let trial: Trial = synthesize(&scene, &StreamKey::new(7, scene.name.clone(), 0)).unwrap();
    let scratch = Scratch::new("round-trip");

    // WAV: exactly the synthesis volts (the codes come back exactly).
    let wav = scratch.path("trial.wav");
    export::write_wav(&wav, &trial).unwrap();
    let mut reader = CaptureReader::open_wav(&wav, adc_of(&scene)).unwrap();
    assert!(reader.warnings().is_empty());
    assert_eq!(
        reader.frames() as usize,
        trial.samples.len() / trial.info.channels.count()
    );
    let info = reader.stream_info(scene.sensor.carrier_hz);
    assert_eq!(info, trial.info, "{scene_file}: stream description");
    let from_wav = read_capture(&mut reader, 333);
    assert_eq!(
        bits(&from_wav),
        bits(&trial.samples),
        "{scene_file}: WAV volts"
    );

    // CSV of the raw offset-binary codes (one or two columns): the same volts.
    let csv = scratch.path("codes.csv");
    {
        let mut file = std::io::BufWriter::new(std::fs::File::create(&csv).unwrap());
        let per_frame = trial.info.channels.count();
        writeln!(file, "# {} trial 0 codes", scene.name).unwrap();
        for frame in trial.codes.chunks(per_frame) {
            let row: Vec<String> = frame.iter().map(|c| c.to_string()).collect();
            writeln!(file, "{}", row.join(",")).unwrap();
        }
    }
    let layout = CsvLayout {
        sample_rate_hz: scene.sensor.sample_rate_hz,
        values: CsvValues::Codes,
    };
    let mut csv_reader = CaptureReader::open_csv(&csv, &layout, adc_of(&scene)).unwrap();
    assert_eq!(csv_reader.channels(), trial.info.channels);
    assert_eq!(
        bits(&read_capture(&mut csv_reader, 1000)),
        bits(&trial.samples),
        "{scene_file}: CSV volts"
    );

    // Every built-in detector, default parameters: the same scores on both.
    // (A detector that refuses the stream, e.g. a real-only one on I/Q, must
    // refuse both alike.)
    let mut compared = 0;
    for plugin in echobench_detectors::builtin() {
        let synthetic = scores_of(
            plugin.as_ref(),
            &trial.info,
            &trial.samples,
            trial.samples.len(),
        );
        let recorded = scores_of(plugin.as_ref(), &info, &from_wav, 2 * 257);
        if let Ok(scores) = &synthetic {
            assert!(!scores.is_empty(), "{}: no scores", plugin.id());
            compared += 1;
        }
        assert_eq!(
            synthetic,
            recorded,
            "{scene_file}: detector `{}`",
            plugin.id()
        );
    }
    assert!(
        compared >= 3,
        "{scene_file}: only {compared} detectors took the stream"
    );

    // The truth as a label file, read back for the capture's duration.
    let labels: Vec<Label> = trial
        .truth
        .events
        .iter()
        .map(|e| Label::new(e.interval, e.kind.clone()))
        .collect();
    let label_path = scratch.path("labels.csv");
    write_labels(&label_path, &labels).unwrap();
    let back = read_labels(&label_path, reader.duration_s()).unwrap();
    assert_eq!(back.len(), labels.len());
    for (a, b) in labels.iter().zip(&back) {
        assert_eq!((a.interval, &a.kind), (b.interval, &b.kind));
    }
    // One trial spanning the whole capture carries the labels unchanged.
    let whole = cut_trials(
        reader.frames(),
        reader.sample_rate_hz(),
        &echobench_capture::TrialCut::back_to_back(reader.duration_s()),
        &back,
    )
    .unwrap();
    assert_eq!(whole.len(), 1);
    let carried: Vec<_> = whole[0].labels.iter().map(|l| l.interval).collect();
    let original: Vec<_> = labels.iter().map(|l| l.interval).collect();
    assert_eq!(carried, original);

    // A seek to a trial's start reads the same frames as the trial's slice.
    let halves = cut_trials(
        reader.frames(),
        reader.sample_rate_hz(),
        &TrialCut::back_to_back(0.5 * reader.duration_s()),
        &back,
    )
    .unwrap();
    let second = &halves[1];
    reader.seek_to_frame(second.start_frame).unwrap();
    let mut part = Vec::new();
    reader
        .read_block(&mut part, second.frames as usize)
        .unwrap();
    let per_frame = trial.info.channels.count();
    let start = second.start_frame as usize * per_frame;
    assert_eq!(bits(&part), bits(&trial.samples[start..start + part.len()]));
    labels.len()
}

#[test]
fn a_real_if_trial_reads_back_exactly_and_scores_the_same() {
    let events = round_trip("office-corridor-24g.yaml");
    assert!(events > 0, "the walker gives at least one labelled event");
}

#[test]
fn an_iq_trial_reads_back_exactly_and_scores_the_same() {
    round_trip("bench-reflector-2g4.yaml");
}
