//! Writing a trial to files: WAV and CSV samples, and the truth as CSV.
//!
//! WAV holds the raw ADC codes as signed PCM, offset by half the code range
//! (code − 2^(N−1)) and left-justified into a 16-bit container for N ≤ 16
//! bits (24-bit container for more), so an audio tool plays it at full
//! scale and the codes come back exactly by a right shift. Real output is
//! mono; I/Q output is two channels (I left, Q right).

use crate::synth::Trial;
use crate::truth::Truth;
use echobench_core::atomic::write_atomically;
use echobench_core::Channels;
use std::io::{self, Write};
use std::path::Path;

/// The WAV container width for an ADC of `adc_bits` bits.
pub fn wav_container_bits(adc_bits: u8) -> u16 {
    if adc_bits <= 16 {
        16
    } else {
        24
    }
}

/// Writes the trial's ADC codes as a WAV file.
///
/// # Errors
/// I/O errors, naming the file.
pub fn write_wav(path: &Path, trial: &Trial) -> io::Result<()> {
    let bits = wav_container_bits(trial.info.adc_bits);
    let spec = hound::WavSpec {
        channels: trial.info.channels.count() as u16,
        sample_rate: trial.info.sample_rate_hz.round() as u32,
        bits_per_sample: bits,
        sample_format: hound::SampleFormat::Int,
    };
    let shift = u32::from(bits) - u32::from(trial.info.adc_bits);
    let offset = 1i32 << (trial.info.adc_bits - 1);
    write_atomically(path, |w| {
        let mut writer = hound::WavWriter::new(w, spec).map_err(to_io)?;
        for &code in &trial.codes {
            writer
                .write_sample((code - offset) << shift)
                .map_err(to_io)?;
        }
        writer.finalize().map_err(to_io)
    })
}

fn to_io(e: hound::Error) -> io::Error {
    match e {
        hound::Error::IoError(e) => e,
        other => io::Error::other(other.to_string()),
    }
}

/// Writes the samples as CSV: `t_s`, then `volts` and `code` (real) or `i_volts`, `q_volts`, `i_code`, `q_code` (I/Q).
///
/// # Errors
/// I/O errors, naming the file.
pub fn write_samples_csv(path: &Path, trial: &Trial) -> io::Result<()> {
    let fs = trial.info.sample_rate_hz;
    write_atomically(path, |w| match trial.info.channels {
        Channels::Real => {
            writeln!(w, "t_s,volts,code")?;
            for (i, (v, c)) in trial.samples.iter().zip(&trial.codes).enumerate() {
                writeln!(w, "{},{},{}", i as f64 / fs, v, c)?;
            }
            Ok(())
        }
        Channels::Iq => {
            writeln!(w, "t_s,i_volts,q_volts,i_code,q_code")?;
            for (i, (v, c)) in trial
                .samples
                .chunks_exact(2)
                .zip(trial.codes.chunks_exact(2))
                .enumerate()
            {
                writeln!(w, "{},{},{},{},{}", i as f64 / fs, v[0], v[1], c[0], c[1])?;
            }
            Ok(())
        }
    })
}

/// Writes the truth as CSV: `start_s,end_s,role,source,kind`, role `target`
/// (moving inside the coverage zone: to be detected), `target-outside-coverage`,
/// `present-not-moving` (a target person inside the zone below the moving
/// level: neither a detection nor a false alarm) or `nuisance`.
///
/// # Errors
/// I/O errors, naming the file.
pub fn write_truth_csv(path: &Path, truth: &Truth) -> io::Result<()> {
    write_atomically(path, |w| {
        writeln!(w, "start_s,end_s,role,source,kind")?;
        for e in &truth.events {
            writeln!(
                w,
                "{},{},target,{},{}",
                e.interval.start_s(),
                e.interval.end_s(),
                e.actor_id,
                e.kind
            )?;
        }
        for e in &truth.outside_coverage {
            writeln!(
                w,
                "{},{},target-outside-coverage,{},{}",
                e.interval.start_s(),
                e.interval.end_s(),
                e.actor_id,
                e.kind
            )?;
        }
        for e in &truth.still_presence {
            writeln!(
                w,
                "{},{},present-not-moving,{},{}",
                e.interval.start_s(),
                e.interval.end_s(),
                e.actor_id,
                e.kind
            )?;
        }
        for n in &truth.nuisances {
            writeln!(
                w,
                "{},{},nuisance,{},{}",
                n.interval.start_s(),
                n.interval.end_s(),
                n.source_id,
                n.kind
            )?;
        }
        Ok(())
    })
}
