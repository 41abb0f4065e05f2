//! WAV captures: the mapping to volts, streaming, seeking, and damaged files.

mod common;

use common::{bits, read_all, write_float_wav, write_int_wav, Scratch};
use echobench_capture::{AdcDescription, CaptureError, CaptureReader, CaptureWarning};
use echobench_core::Channels;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

fn adc12() -> AdcDescription {
    AdcDescription::new(12, 3.3, None).unwrap()
}

#[test]
fn integer_samples_are_fractions_of_the_container_about_mid_scale() {
    // The documented mapping: volts = s / 2^(C−1) · FS/2 (bias at mid-scale).
    // Chosen values are exact binary fractions, so equality is exact.
    let scratch = Scratch::new("wav-int");
    for (container, full) in [(8u16, 128i32), (16, 32768), (24, 1 << 23), (32, i32::MIN)] {
        let full = if container == 32 {
            1i64 << 31
        } else {
            i64::from(full)
        };
        let samples: Vec<i32> = [0i64, full / 2, -full / 2, -full, full / 4]
            .iter()
            .map(|&s| s as i32)
            .collect();
        let path = scratch.path(&format!("int{container}.wav"));
        write_int_wav(&path, 1, 8000, container, &samples);
        let mut reader = CaptureReader::open_wav(&path, adc12()).unwrap();
        assert_eq!(reader.channels(), Channels::Real);
        assert_eq!(reader.sample_rate_hz(), 8000.0);
        assert_eq!(reader.frames(), 5);
        let volts = read_all(&mut reader, 64);
        let expected = [0.0f32, 0.825, -0.825, -1.65, 0.4125];
        for (got, want) in volts.iter().zip(expected) {
            assert!(
                (got - want).abs() <= 1e-6,
                "{container}-bit: {got} vs {want}"
            );
        }
        assert_eq!(volts.len(), 5);
    }
}

#[test]
fn float_samples_map_plus_minus_one_to_half_full_scale_and_refuse_nan() {
    let scratch = Scratch::new("wav-float");
    let path = scratch.path("float.wav");
    write_float_wav(&path, 1, 1000, &[0.0, 0.5, -1.0, 1.0]);
    let mut reader = CaptureReader::open_wav(&path, adc12()).unwrap();
    assert_eq!(read_all(&mut reader, 3), vec![0.0, 0.825, -1.65, 1.65]);

    let nan = scratch.path("nan.wav");
    write_float_wav(&nan, 2, 1000, &[0.1, 0.2, 0.3, f32::NAN]);
    let mut reader = CaptureReader::open_wav(&nan, adc12()).unwrap();
    let mut out = Vec::new();
    let err = reader.read_block(&mut out, 10).unwrap_err();
    let text = err.to_string();
    assert!(
        text.contains("nan.wav") && text.contains("frame 1"),
        "{text}"
    );
    assert!(out.is_empty(), "a failed read leaves the buffer as it was");

    // Finite but so large that its voltage overflows an f32 sample.
    let huge = scratch.path("huge.wav");
    write_float_wav(&huge, 1, 1000, &[0.0, 3.0e38]);
    let mut reader = CaptureReader::open_wav(&huge, adc12()).unwrap();
    let err = reader.read_block(&mut out, 10).unwrap_err().to_string();
    assert!(err.contains("frame 1") && err.contains("voltage"), "{err}");
}

#[test]
fn a_given_bias_is_subtracted_from_the_input_voltage() {
    // Mid-scale code of a 3.3 V converter is 1.65 V at the input; less a 1.5 V bias: 0.15 V.
    let scratch = Scratch::new("wav-bias");
    let path = scratch.path("bias.wav");
    write_int_wav(&path, 1, 1000, 16, &[0, 16384]);
    let adc = AdcDescription::new(12, 3.3, Some(1.5)).unwrap();
    let volts = read_all(&mut CaptureReader::open_wav(&path, adc).unwrap(), 10);
    assert!((volts[0] - 0.15).abs() < 1e-6);
    assert!((volts[1] - (1.65 + 0.825 - 1.5)).abs() < 1e-6);
}

#[test]
fn two_channels_are_iq_interleaved_and_three_are_refused() {
    let scratch = Scratch::new("wav-channels");
    let path = scratch.path("iq.wav");
    write_int_wav(&path, 2, 1000, 16, &[16384, -16384, 0, 8192]);
    let mut reader = CaptureReader::open_wav(&path, adc12()).unwrap();
    assert_eq!(reader.channels(), Channels::Iq);
    assert_eq!(reader.frames(), 2);
    let info = reader.stream_info(24.125e9);
    assert_eq!(info.channels, Channels::Iq);
    assert_eq!(info.adc_bits, 12);
    assert_eq!(read_all(&mut reader, 1), vec![0.825, -0.825, 0.0, 0.4125]);

    let three = scratch.path("three.wav");
    write_int_wav(&three, 3, 1000, 16, &[1, 2, 3]);
    match CaptureReader::open_wav(&three, adc12()) {
        Err(CaptureError::ChannelCount { channels: 3, path }) => assert_eq!(path, three),
        other => panic!("expected a channel-count error, got {other:?}"),
    }
}

#[test]
fn blocks_of_any_size_and_seeks_give_the_same_samples() {
    let scratch = Scratch::new("wav-blocks");
    let mut rng = ChaCha8Rng::from_seed([3; 32]);
    let samples: Vec<i32> = (0..2 * 5003)
        .map(|_| rng.random_range(-32768..32768))
        .collect();
    let mut wholes = Vec::new();
    for (name, spec_ex) in [
        ("packed.wav", None),
        // 24 valid bits in 4-byte containers: hound's own seek would step 3
        // bytes per sample there, so this checks the reader's fallback.
        ("wide.wav", Some(4u16)),
    ] {
        let path = scratch.path(name);
        match spec_ex {
            None => write_int_wav(&path, 2, 2000, 16, &samples),
            Some(bytes) => {
                let spec = hound::WavSpecEx {
                    spec: hound::WavSpec {
                        channels: 2,
                        sample_rate: 2000,
                        bits_per_sample: 24,
                        sample_format: hound::SampleFormat::Int,
                    },
                    bytes_per_sample: bytes,
                };
                let mut w = hound::WavWriter::new_with_spec_ex(
                    std::io::BufWriter::new(std::fs::File::create(&path).unwrap()),
                    spec,
                )
                .unwrap();
                for &s in &samples {
                    w.write_sample(s * 256).unwrap();
                }
                w.finalize().unwrap();
                assert!(std::fs::metadata(&path).unwrap().len() >= 4 * 2 * 5003);
            }
        }
        let mut reader = CaptureReader::open_wav(&path, adc12()).unwrap();
        assert_eq!(reader.frames(), 5003, "{name}");
        let whole = read_all(&mut reader, usize::MAX);
        assert_eq!(whole.len(), 2 * 5003);
        assert_eq!(reader.read_block(&mut Vec::new(), 10).unwrap(), 0);
        for block in [1usize, 7, 256, 5002] {
            let mut reader = CaptureReader::open_wav(&path, adc12()).unwrap();
            assert_eq!(
                bits(&read_all(&mut reader, block)),
                bits(&whole),
                "{name}, block {block}"
            );
        }
        let mut reader = CaptureReader::open_wav(&path, adc12()).unwrap();
        for frame in [4000u64, 17, 0, 5003, 2500] {
            reader.seek_to_frame(frame).unwrap();
            assert_eq!(reader.position_frames(), frame);
            let mut out = Vec::new();
            let got = reader.read_block(&mut out, 100).unwrap();
            let start = 2 * frame as usize;
            assert_eq!(got, (5003 - frame as usize).min(100), "{name} at {frame}");
            assert_eq!(
                bits(&out),
                bits(&whole[start..start + 2 * got]),
                "{name} at {frame}"
            );
        }
        assert!(matches!(
            reader.seek_to_frame(5004),
            Err(CaptureError::SeekPastEnd {
                frame: 5004,
                frames: 5003,
                ..
            })
        ));
        reader.seek_to_frame(5000).unwrap();
        assert_eq!(reader.skip_frames(10).unwrap(), 3);
        wholes.push(bits(&whole));
    }
    // The same codes, 16-bit packed or 24-bit in 4 bytes, are the same volts.
    assert_eq!(wholes[0], wholes[1]);
}

fn valid_wav_bytes(scratch: &Scratch, frames: usize) -> Vec<u8> {
    let path = scratch.path("source.wav");
    let samples: Vec<i32> = (0..frames as i32)
        .map(|i| (i * 37) % 20000 - 10000)
        .collect();
    write_int_wav(&path, 1, 1000, 16, &samples);
    std::fs::read(&path).unwrap()
}

#[test]
fn a_data_chunk_cut_mid_file_gives_the_frames_present_and_a_warning() {
    let scratch = Scratch::new("wav-cut-data");
    let bytes = valid_wav_bytes(&scratch, 1000);
    let header = bytes.len() - 2000;
    let full = {
        let path = scratch.path("full.wav");
        std::fs::write(&path, &bytes).unwrap();
        read_all(&mut CaptureReader::open_wav(&path, adc12()).unwrap(), 333)
    };
    // Cut inside frame 600 (one byte of its two): 600 whole frames remain.
    let cut = scratch.path("cut.wav");
    std::fs::write(&cut, &bytes[..header + 2 * 600 + 1]).unwrap();
    let mut reader = CaptureReader::open_wav(&cut, adc12()).unwrap();
    assert_eq!(reader.frames(), 600);
    assert_eq!(
        reader.warnings(),
        &[CaptureWarning::TruncatedData {
            declared_frames: 1000,
            present_frames: 600
        }]
    );
    assert!(reader.warnings()[0].to_string().contains("cut short"));
    let got = read_all(&mut reader, 77);
    assert_eq!(bits(&got), bits(&full[..600]));

    // Stereo cut between I and Q of frame 10: the half frame is dropped.
    let path = scratch.path("iq.wav");
    write_int_wav(&path, 2, 1000, 16, &(0..40).collect::<Vec<_>>());
    let iq = std::fs::read(&path).unwrap();
    let iq_header = iq.len() - 80;
    std::fs::write(&path, &iq[..iq_header + 4 * 10 + 2]).unwrap();
    let reader = CaptureReader::open_wav(&path, adc12()).unwrap();
    assert_eq!(reader.frames(), 10);
}

#[test]
fn a_cut_or_garbage_header_is_a_clear_error_never_a_panic() {
    let scratch = Scratch::new("wav-bad");
    let bytes = valid_wav_bytes(&scratch, 50);
    let header = bytes.len() - 100;
    let path = scratch.path("bad.wav");
    // Every cut inside the header.
    for len in 0..header {
        std::fs::write(&path, &bytes[..len]).unwrap();
        match CaptureReader::open_wav(&path, adc12()) {
            Err(e @ CaptureError::Wav { .. }) => {
                let text = e.to_string();
                assert!(text.contains("bad.wav"), "{text}");
            }
            other => panic!("cut at {len} of {header} header bytes: {other:?}"),
        }
    }
    // Random garbage, and random bytes behind a valid-looking RIFF/WAVE tag,
    // and the valid header with random bytes flipped: an error or a file
    // that reads, never a panic.
    let mut rng = ChaCha8Rng::from_seed([9; 32]);
    for round in 0..600 {
        let mut data: Vec<u8> = match round % 3 {
            0 => (0..rng.random_range(0..200))
                .map(|_| rng.random())
                .collect(),
            1 => {
                let mut d = b"RIFF\x24\x08\x00\x00WAVEfmt ".to_vec();
                d.extend((0..rng.random_range(0..120)).map(|_| rng.random::<u8>()));
                d
            }
            _ => {
                let mut d = bytes.clone();
                for _ in 0..rng.random_range(1..4) {
                    let at = rng.random_range(0..header);
                    d[at] = rng.random();
                }
                d
            }
        };
        if round % 7 == 0 {
            data.truncate(rng.random_range(0..=data.len()));
        }
        std::fs::write(&path, &data).unwrap();
        if let Ok(mut reader) = CaptureReader::open_wav(&path, adc12()) {
            let mut out = Vec::new();
            while let Ok(n) = reader.read_block(&mut out, 64) {
                if n == 0 {
                    break;
                }
            }
            assert!(out.iter().all(|v| v.is_finite()));
        }
    }
    let missing = scratch.path("missing.wav");
    match CaptureReader::open_wav(&missing, adc12()) {
        Err(e @ CaptureError::Io { .. }) => assert!(e.to_string().contains("missing.wav")),
        other => panic!("{other:?}"),
    }
}

#[test]
fn adc_descriptions_are_checked() {
    assert!(AdcDescription::new(33, 3.3, None).is_err());
    assert!(AdcDescription::new(12, 0.0, None).is_err());
    assert!(AdcDescription::new(12, f64::NAN, None).is_err());
    assert!(AdcDescription::new(12, 3.3, Some(f64::INFINITY)).is_err());
    let err = AdcDescription::new(12, -1.0, None).unwrap_err().to_string();
    assert!(err.contains("full_scale_v") && err.contains("-1"), "{err}");
    // docs/reference/check-values.md#pc22: 12 bit over 3.3 V → LSB 0.806 mV.
    let adc = adc12();
    assert!((adc.lsb_v() - 0.806e-3).abs() < 1e-6);
    assert_eq!(adc.mid_code(), 2048.0);
    assert_eq!(adc.volts_from_signed_code(0.0), 0.0);
}

#[test]
fn the_reader_can_move_to_another_thread() {
    fn is_send<T: Send>() {}
    is_send::<CaptureReader>();
    is_send::<echobench_capture::Resampler>();
}
