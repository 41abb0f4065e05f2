//! Every generator: bit-identical output for blocks of 1, 7 and 4096 samples, and
//! determinism by seed (the crate's streaming contract; common practice).

mod support;

use echobench_noise::*;
use support::{assert_block_invariant, run_in_blocks};

const FS: f64 = 8000.0;

fn all_generators(seed: [u8; 32]) -> Vec<(&'static str, Box<dyn AdditiveNoise>)> {
    vec![
        ("white", Box::new(WhiteNoise::new(1e-6, FS, seed).unwrap())),
        (
            "flicker",
            Box::new(
                FlickerNoise::new(
                    &FlickerParams {
                        white_density_v_per_rt_hz: 1e-6,
                        corner_hz: 1000.0,
                        lowest_hz: DEFAULT_FLICKER_LOWEST_HZ,
                    },
                    FS,
                    seed,
                )
                .unwrap(),
            ),
        ),
        (
            "hum",
            Box::new(
                MainsHum::new(
                    &MainsHumParams {
                        mains_hz: 50.0,
                        harmonic_amplitudes_v: vec![1e-3, 1e-4, 3e-4],
                        frequency_offset_hz: 0.07,
                    },
                    FS,
                    seed,
                )
                .unwrap(),
            ),
        ),
        (
            "lamp",
            Box::new(
                LampFlicker::new(
                    &LampFlickerParams {
                        mains_hz: 60.0,
                        harmonic_amplitudes_v: vec![2e-4, 1e-4],
                        frequency_offset_hz: 0.0,
                    },
                    FS,
                    seed,
                )
                .unwrap(),
            ),
        ),
        (
            "bursts",
            Box::new(
                RadioBursts::new(
                    &RadioBurstParams {
                        poisson_rate_hz: 40.0,
                        periodic_interval_s: Some(COMMON_BEACON_INTERVAL_S),
                        width_s: 0.37e-3,
                        amplitude_v: 1e-3,
                        power_jitter_db: 4.0,
                    },
                    FS,
                    seed,
                )
                .unwrap(),
            ),
        ),
        (
            "beat-ou",
            Box::new(
                BeatTone::new(
                    &BeatToneParams {
                        amplitude_v: 1e-3,
                        mean_offset_hz: 5.0,
                        drift: OffsetDrift::OrnsteinUhlenbeck {
                            rms_hz: 20.0,
                            time_constant_s: 0.3,
                        },
                    },
                    FS,
                    seed,
                )
                .unwrap(),
            ),
        ),
        (
            "beat-sine",
            Box::new(
                BeatTone::new(
                    &BeatToneParams {
                        amplitude_v: 1e-3,
                        mean_offset_hz: 0.0,
                        drift: OffsetDrift::Sinusoidal {
                            amplitude_hz: 40.0,
                            period_s: 2.0,
                        },
                    },
                    FS,
                    seed,
                )
                .unwrap(),
            ),
        ),
        (
            "dc-drift",
            Box::new(
                DcDrift::new(
                    &DcDriftParams {
                        rms_v: 0.01,
                        time_constant_s: 2.0,
                    },
                    FS,
                    seed,
                )
                .unwrap(),
            ),
        ),
    ]
}

#[test]
fn every_generator_is_block_size_invariant() {
    let count = all_generators([0; 32]).len();
    for index in 0..count {
        assert_block_invariant(|| all_generators([42; 32]).swap_remove(index).1, 30_000);
    }
}

#[test]
fn every_generator_is_deterministic_by_seed() {
    let first = all_generators([9; 32]);
    let again = all_generators([9; 32]);
    let other = all_generators([10; 32]);
    for (((name, mut a), (_, mut b)), (_, mut c)) in first.into_iter().zip(again).zip(other) {
        let a = run_in_blocks(a.as_mut(), 20_000, 1000);
        let b = run_in_blocks(b.as_mut(), 20_000, 1000);
        let c = run_in_blocks(c.as_mut(), 20_000, 1000);
        assert!(
            a.iter().zip(&b).all(|(x, y)| x.to_bits() == y.to_bits()),
            "{name}: same seed differs"
        );
        assert!(a != c, "{name}: a different seed gives the same output");
    }
}

/// Generators add into the block rather than overwrite it.
#[test]
fn generators_add_to_existing_samples() {
    for (name, mut generator) in all_generators([3; 32]) {
        let alone = run_in_blocks(generator.as_mut(), 1000, 1000);
        let (_, mut fresh) = all_generators([3; 32])
            .into_iter()
            .find(|(n, _)| *n == name)
            .unwrap();
        let mut block = vec![0.25; 1000];
        fresh.add_to(&mut block);
        for (sum, value) in block.iter().zip(&alone) {
            // Tone sets add one tone at a time, so rounding may differ in the last bit.
            assert!((sum - (0.25 + value)).abs() < 1e-15, "{name}");
        }
    }
}

#[test]
fn bad_sample_rates_are_rejected_everywhere() {
    for fs in [0.0, -1.0, f64::NAN, f64::INFINITY] {
        assert_eq!(
            WhiteNoise::new(1e-6, fs, [0; 32]).unwrap_err().param,
            "sample_rate_hz"
        );
        let drift = DcDriftParams {
            rms_v: 0.01,
            time_constant_s: 2.0,
        };
        assert_eq!(
            DcDrift::new(&drift, fs, [0; 32]).unwrap_err().param,
            "sample_rate_hz"
        );
    }
    assert_eq!(
        WhiteNoise::new(f64::NAN, FS, [0; 32]).unwrap_err().param,
        "density_v_per_rt_hz"
    );
    let flicker = FlickerParams {
        white_density_v_per_rt_hz: 1e-6,
        corner_hz: 100.0,
        lowest_hz: 500.0,
    };
    assert_eq!(
        FlickerNoise::new(&flicker, FS, [0; 32]).unwrap_err().param,
        "lowest_hz"
    );
    let flicker = FlickerParams {
        corner_hz: -5.0,
        lowest_hz: 0.05,
        ..flicker
    };
    assert_eq!(
        FlickerNoise::new(&flicker, FS, [0; 32]).unwrap_err().param,
        "corner_hz"
    );
}
