//! Where a trial's samples come from: synthesis, or a recording cut into trials (resampled
//! to the scene's rate when needed, and with the scene's synthesized signal mixed in at a
//! stated gain when the suite asks for it).

use echobench_capture::{CaptureReader, Resampler};
use echobench_core::seed::StreamKey;
use echobench_core::{Interval, StreamInfo};
use echobench_scene::Synthesizer;
use echobench_suite::{CaptureSource, CaptureTrial, SceneVariant};

/// Frames read from a recording at a time.
const READ_FRAMES: usize = 4096;

/// A trial's signal.
pub enum TrialSignal {
    /// Synthesized from the scene.
    Synthetic(Box<Synthesizer>),
    /// Read from a recording (with the scene's signal mixed in when asked).
    Recorded(Box<RecordedSignal>),
}

/// A window of a recording, streamed.
pub struct RecordedSignal {
    reader: CaptureReader,
    info: StreamInfo,
    channels: usize,
    frames_left: u64,
    resampler: Option<Resampler>,
    resampler_done: bool,
    pending: Vec<f32>,
    read_buffer: Vec<f32>,
    out_frames_total: u64,
    out_frames_done: u64,
    mix: Option<(Synthesizer, f64)>,
    analog: Vec<f64>,
    targets: Vec<Interval>,
}

/// The truth of a trial, as the scorer takes it.
pub struct SignalTruth {
    /// Target events.
    pub events: Vec<Interval>,
    /// Nuisance activity and its source.
    pub nuisances: Vec<(Interval, String)>,
    /// A person present but not moving (ignored by intrusion scoring).
    pub still: Vec<Interval>,
}

impl TrialSignal {
    /// Prepares the trial `key` of a variant: synthesis, or the recording window `trial`.
    pub fn new(
        variant: &SceneVariant,
        capture: Option<(&CaptureSource, &CaptureTrial)>,
        key: &StreamKey,
    ) -> Result<TrialSignal, String> {
        let Some((source, trial)) = capture else {
            let synth = Synthesizer::new(&variant.scene, key).map_err(|e| e.to_string())?;
            return Ok(TrialSignal::Synthetic(Box::new(synth)));
        };
        let scene = &variant.scene;
        let mut reader = CaptureReader::open(&trial.path, &source.format, source.adc)
            .map_err(|e| e.to_string())?;
        reader
            .seek_to_frame(trial.start_frame)
            .map_err(|e| e.to_string())?;
        let channels = scene.sensor.output;
        let rate_hz = scene.sensor.sample_rate_hz;
        let resampler = if trial.file_rate_hz != rate_hz {
            Some(
                Resampler::new(trial.file_rate_hz as u32, rate_hz as u32, channels)
                    .map_err(|e| e.to_string())?,
            )
        } else {
            None
        };
        let mut out_frames_total = match &resampler {
            Some(r) => r.total_output_frames(trial.frames),
            None => trial.frames,
        };
        let mix = match source.mix_gain {
            Some(gain) => {
                let synth = Synthesizer::new(scene, key).map_err(|e| e.to_string())?;
                out_frames_total = out_frames_total.min(synth.total_samples() as u64);
                Some((synth, gain))
            }
            None => None,
        };
        let info = StreamInfo {
            sample_rate_hz: rate_hz,
            channels,
            adc_bits: scene.sensor.adc.bits,
            carrier_hz: scene.sensor.carrier_hz,
        };
        Ok(TrialSignal::Recorded(Box::new(RecordedSignal {
            reader,
            info,
            channels: channels.count(),
            frames_left: trial.frames,
            resampler,
            resampler_done: false,
            pending: Vec::new(),
            read_buffer: Vec::with_capacity(READ_FRAMES * 2),
            out_frames_total,
            out_frames_done: 0,
            mix,
            analog: Vec::new(),
            targets: trial.targets.clone(),
        })))
    }

    /// What detectors are told about the stream.
    pub fn info(&self) -> StreamInfo {
        match self {
            TrialSignal::Synthetic(s) => s.info(),
            TrialSignal::Recorded(r) => r.info,
        }
    }

    /// Appends up to `max_frames` sample instants (volts less bias) to `volts`; 0 at the end.
    pub fn next_block(
        &mut self,
        volts: &mut Vec<f32>,
        codes: &mut Vec<i32>,
        max_frames: usize,
    ) -> Result<usize, String> {
        match self {
            TrialSignal::Synthetic(s) => Ok(s.next_block(volts, codes, max_frames)),
            TrialSignal::Recorded(r) => r.next_block(volts, max_frames),
        }
    }

    /// The trial's truth: the synthesized scene's, or the recording's labels (and the mixed
    /// scene's events and nuisances).
    pub fn truth(&self) -> SignalTruth {
        let from_synth = |s: &Synthesizer| {
            let t = s.truth();
            SignalTruth {
                events: t.events.iter().map(|e| e.interval).collect(),
                // A target moving outside the coverage zone is noise-only time too; its
                // alarms are blamed on it by name.
                nuisances: t
                    .nuisances
                    .iter()
                    .map(|n| (n.interval, n.source_id.clone()))
                    .chain(
                        t.outside_coverage
                            .iter()
                            .map(|e| (e.interval, format!("{} outside the zone", e.actor_id))),
                    )
                    .collect(),
                still: t.still_presence.iter().map(|e| e.interval).collect(),
            }
        };
        match self {
            TrialSignal::Synthetic(s) => from_synth(s),
            TrialSignal::Recorded(r) => {
                let mut truth = match &r.mix {
                    Some((synth, _)) => from_synth(synth),
                    None => SignalTruth {
                        events: Vec::new(),
                        nuisances: Vec::new(),
                        still: Vec::new(),
                    },
                };
                truth.events.extend(r.targets.iter().copied());
                truth
                    .events
                    .sort_by(|a, b| a.start_s().total_cmp(&b.start_s()));
                truth
            }
        }
    }
}

impl RecordedSignal {
    fn next_block(&mut self, volts: &mut Vec<f32>, max_frames: usize) -> Result<usize, String> {
        let want = (max_frames as u64).min(self.out_frames_total - self.out_frames_done) as usize;
        if want == 0 {
            return Ok(0);
        }
        while self.pending.len() < want * self.channels && !self.exhausted() {
            self.fill()?;
        }
        let frames = (self.pending.len() / self.channels).min(want);
        if frames == 0 {
            return Ok(0);
        }
        let values = frames * self.channels;
        match &mut self.mix {
            None => volts.extend_from_slice(&self.pending[..values]),
            Some((synth, gain)) => {
                self.analog.clear();
                while self.analog.len() < values {
                    let need = (values - self.analog.len()) / self.channels;
                    if synth.next_block_analog(&mut self.analog, need) == 0 {
                        break;
                    }
                }
                let mixed = self.analog.len().min(values);
                // The module's converter sees the sum: quantize it again (clipping included).
                for (recorded, added) in self.pending[..mixed].iter().zip(&self.analog) {
                    volts.push(synth.quantize(f64::from(*recorded) + *gain * added) as f32);
                }
                if mixed < values {
                    return Err("the mixed scene ended before the recording".into());
                }
            }
        }
        self.pending.drain(..values);
        self.out_frames_done += frames as u64;
        Ok(frames)
    }

    fn exhausted(&self) -> bool {
        self.frames_left == 0 && (self.resampler.is_none() || self.resampler_done)
    }

    /// Reads one more piece of the recording into `pending` (through the resampler).
    fn fill(&mut self) -> Result<(), String> {
        if self.frames_left > 0 {
            self.read_buffer.clear();
            let n = (self.frames_left.min(READ_FRAMES as u64)) as usize;
            let got = self
                .reader
                .read_block(&mut self.read_buffer, n)
                .map_err(|e| e.to_string())?;
            if got == 0 {
                // The file ended early (it changed since the suite was read).
                self.frames_left = 0;
            } else {
                self.frames_left -= got as u64;
            }
            match &mut self.resampler {
                Some(r) => {
                    r.process(&self.read_buffer, &mut self.pending)
                        .map_err(|e| e.to_string())?;
                }
                None => self.pending.extend_from_slice(&self.read_buffer),
            }
        } else if let Some(r) = &mut self.resampler {
            if !self.resampler_done {
                r.finish(&mut self.pending).map_err(|e| e.to_string())?;
                self.resampler_done = true;
            }
        }
        Ok(())
    }
}
