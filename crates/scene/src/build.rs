//! Drawing one trial: from the scene's params to concrete models, noise sources and a front end.
//!
//! Every random choice of a trial comes from a stream named after what it is
//! for (`actor/2/params`, `noise/white/i`, ...) derived from the trial's
//! [`StreamKey`], so adding an actor or a noise source does not change the
//! draws of the others, and the thread that runs the trial does not matter.

use crate::actors::{ActorSpec, PathSpec, Route};
use crate::param::Param;
use crate::radar::{wavelength_m, Beam, LinkBudget};
use crate::render::{ActorTrack, RadarGeometry};
use crate::spec::SceneSpec;
use crate::synth::SynthError;
use crate::truth::{active_intervals, target_timeline, NuisanceActivity, TargetEvent, Truth};
use crate::upsample::{track_rate, InterpolatedTrack, Interpolator, Track};
use echobench_core::seed::StreamKey;
use echobench_core::{Interval, StreamInfo};
use echobench_frontend::{Adc, AnalogChain, AnalogChainParams, Decimator, OutputSwing};
use echobench_motion::MotionModel;
use echobench_noise as noise;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

/// Largest internal oversampling factor.
pub const MAX_OVERSAMPLING: usize = 64;

/// Everything a [`crate::Synthesizer`] runs.
pub struct TrialParts {
    pub(crate) info: StreamInfo,
    pub(crate) oversampling: usize,
    pub(crate) total_samples: usize,
    pub(crate) radar: RadarGeometry,
    pub(crate) tracks: Vec<Track>,
    pub(crate) noise_i: Vec<Box<dyn noise::AdditiveNoise>>,
    pub(crate) noise_q: Vec<Box<dyn noise::AdditiveNoise>>,
    pub(crate) dc_v: [f64; 2],
    pub(crate) chain_i: AnalogChain,
    pub(crate) chain_q: Option<AnalogChain>,
    pub(crate) decimator_i: Decimator,
    pub(crate) decimator_q: Option<Decimator>,
    pub(crate) adc: Adc,
    pub(crate) bias_v: f64,
    pub(crate) truth: Truth,
}

fn rng(key: &StreamKey, stream: &str) -> ChaCha8Rng {
    ChaCha8Rng::from_seed(key.stream_seed(stream))
}

pub(crate) fn fail(field: impl Into<String>, message: impl std::fmt::Display) -> SynthError {
    SynthError {
        field: field.into(),
        message: message.to_string(),
    }
}

/// The radar geometry of the scene's sensor.
pub fn radar_geometry(scene: &SceneSpec) -> RadarGeometry {
    let s = &scene.sensor;
    let lambda = wavelength_m(s.carrier_hz);
    let link = LinkBudget {
        tx_power_dbm: s.tx_power_dbm,
        antenna_gain_dbi: s.antenna_gain_dbi,
        conversion_loss_db: s.conversion_loss_db,
        load_ohm: s.load_ohm,
    };
    RadarGeometry::new(
        s.position_m,
        s.azimuth_deg,
        s.elevation_deg,
        Beam::new(
            s.beam_azimuth_3db_deg,
            s.beam_elevation_3db_deg,
            s.beam_floor_db,
        ),
        link.amplitude_v_at_1m_1m2(lambda),
        lambda,
    )
}

fn draw3(values: &[Param; 3], rng: &mut ChaCha8Rng) -> [f64; 3] {
    [
        values[0].draw(rng),
        values[1].draw(rng),
        values[2].draw(rng),
    ]
}

fn draw2(values: &[Param; 2], rng: &mut ChaCha8Rng) -> [f64; 2] {
    [values[0].draw(rng), values[1].draw(rng)]
}

pub(crate) fn build_path(
    spec: &PathSpec,
    duration_s: f64,
    rng: &mut ChaCha8Rng,
    field: &str,
) -> Result<echobench_motion::path::Path, SynthError> {
    let speed = spec.speed_mps.draw(rng);
    let enter = spec.enter_s.draw(rng);
    let leave = match &spec.leave_s {
        Some(p) => {
            let leave = p.draw(rng);
            if leave <= enter {
                return Err(fail(
                    format!("{field}.leave_s"),
                    format!("drawn leave time {leave} s is not after the entry time {enter} s"),
                ));
            }
            leave
        }
        // Without a stated leave time the actor stays to the end of the trial; one
        // drawn to enter after the end is simply absent from this trial.
        None => duration_s.max(enter + 1.0),
    };
    let pauses = spec
        .pauses
        .iter()
        .map(|p| echobench_motion::path::Pause {
            at_s: p.at_s.draw(rng),
            duration_s: p.duration_s.draw(rng),
        })
        .collect();
    Ok(match &spec.route {
        Route::Straight {
            start_m,
            heading_deg,
        } => {
            let start = draw2(start_m, rng);
            let heading = heading_deg.draw(rng).to_radians();
            echobench_motion::path::Path::straight(start, heading, speed, enter, leave, pauses)
        }
        Route::Points(points) => {
            echobench_motion::path::Path::polyline(points.clone(), speed, enter, leave, pauses)
        }
    })
}

/// Builds the motion model of actor `index`. Called twice per trial (render and truth) with the same streams.
pub fn build_model(
    scene: &SceneSpec,
    index: usize,
    key: &StreamKey,
) -> Result<Box<dyn MotionModel>, SynthError> {
    let actor: &ActorSpec = &scene.actors[index];
    let field = format!("actors[{index}]");
    let mut rng = rng(key, &format!("actor/{index}/params"));
    let seed = key.stream_seed(&format!("actor/{index}/motion"));
    let lambda = wavelength_m(scene.sensor.carrier_hz);
    crate::models::build(
        &actor.kind,
        &field,
        scene.duration_s,
        lambda,
        &mut rng,
        seed,
    )
}

/// Internal rate per highest signal frequency: the bilinear-transform sections
/// follow the analog RC response within a few per cent only well below the
/// internal Nyquist (at f = f_sim/8 a first-order low-pass is within 4 % of the
/// analog one; at 0.4·f_sim it is 2.6× too deep), so the internal rate is kept
/// at 8× the highest Doppler (docs/reference/front-end-and-noise.md#f12:
/// M ≥ 8 where aliasing matters).
pub const SIM_RATE_PER_DOPPLER: f64 = 8.0;

/// How many internal samples of a vibration rendered per sample
/// (`MotionModel::vibration`) cost as much as one node of a fan: measured
/// with `perf record` on the corridor bench scenes (a desk fan's node, about
/// 1.2 µs, against 37 ns per sample for the vibration on its group of
/// echoes; 2026-12-05, 2-core machine under load).
const VIBRATION_SAMPLES_PER_NODE: f64 = 30.0;

/// The internal oversampling factor for a highest signal frequency `max_doppler_hz` at
/// ADC rate `sample_rate_hz`: 1 when 8× that frequency fits in the ADC rate, else enough
/// that the internal rate is 8× the highest frequency.
pub fn oversampling_for(max_doppler_hz: f64, sample_rate_hz: f64) -> usize {
    ((SIM_RATE_PER_DOPPLER * max_doppler_hz / sample_rate_hz).ceil() as usize)
        .clamp(1, MAX_OVERSAMPLING)
}

/// Computes the ground truth of a trial without synthesizing it.
///
/// # Errors
/// As [`crate::Synthesizer::new`].
pub fn trial_truth(scene: &SceneSpec, key: &StreamKey) -> Result<Truth, SynthError> {
    let radar = radar_geometry(scene);
    let mut truth = Truth::default();
    for (index, actor) in scene.actors.iter().enumerate() {
        let mut model = build_model(scene, index, key)?;
        if actor.target {
            // Moving edges from the motion speed the renderer's kinematics give
            // (see `truth`), split by the coverage zone; still bodies apart.
            let timeline =
                target_timeline(model.as_mut(), &radar, &scene.coverage, scene.duration_s);
            let event = |interval: Interval| TargetEvent {
                interval,
                actor_id: actor.id.clone(),
                kind: actor.kind_name().to_string(),
            };
            truth
                .events
                .extend(timeline.moving_inside.into_iter().map(event));
            truth
                .outside_coverage
                .extend(timeline.moving_outside.into_iter().map(event));
            truth
                .still_presence
                .extend(timeline.still_inside.into_iter().map(event));
        } else {
            let active = active_intervals(model.as_ref(), scene.duration_s);
            truth
                .nuisances
                .extend(active.into_iter().map(|interval| NuisanceActivity {
                    interval,
                    source_id: actor.id.clone(),
                    kind: actor.kind_name().to_string(),
                }));
        }
    }
    let whole = Interval::new(0.0, scene.duration_s).map_err(|e| fail("duration_s", e))?;
    let env = &scene.environment;
    let sources = [
        ("mains", env.mains.is_some()),
        ("lamp", env.lamp.is_some()),
        ("radio_bursts", env.radio_bursts.is_some()),
        ("neighbour", env.neighbour.is_some()),
    ];
    for (name, present) in sources {
        if present {
            truth.nuisances.push(NuisanceActivity {
                interval: whole,
                source_id: name.to_string(),
                kind: "interference".to_string(),
            });
        }
    }
    truth
        .events
        .sort_by(|a, b| a.interval.start_s().total_cmp(&b.interval.start_s()));
    truth
        .still_presence
        .sort_by(|a, b| a.interval.start_s().total_cmp(&b.interval.start_s()));
    Ok(truth)
}

/// Noise and interference sources for one channel (`"i"` or `"q"`).
fn build_noise(
    scene: &SceneSpec,
    key: &StreamKey,
    channel: &str,
    sim_rate_hz: f64,
) -> Result<Vec<Box<dyn noise::AdditiveNoise>>, SynthError> {
    let env = &scene.environment;
    let mut draws = rng(key, "environment/params");
    let mut sources: Vec<Box<dyn noise::AdditiveNoise>> = Vec::new();
    let white = env.white_noise_v_per_rthz.draw(&mut draws);
    fn noise_err(field: &'static str) -> impl Fn(noise::ParamError) -> SynthError {
        move |e| fail(format!("environment.{field}"), e)
    }
    if white > 0.0 {
        sources.push(Box::new(
            noise::WhiteNoise::new(
                white,
                sim_rate_hz,
                key.stream_seed(&format!("noise/white/{channel}")),
            )
            .map_err(noise_err("white_noise_v_per_rthz"))?,
        ));
    }
    if let Some(corner) = &env.flicker_corner_hz {
        let params = noise::FlickerParams {
            white_density_v_per_rt_hz: white,
            corner_hz: corner.draw(&mut draws),
            lowest_hz: noise::DEFAULT_FLICKER_LOWEST_HZ,
        };
        sources.push(Box::new(
            noise::FlickerNoise::new(
                &params,
                sim_rate_hz,
                key.stream_seed(&format!("noise/flicker/{channel}")),
            )
            .map_err(noise_err("flicker_corner_hz"))?,
        ));
    }
    // Interference couples into both channels alike: the same streams for I and Q.
    if let Some(mains) = &env.mains {
        let params = noise::MainsHumParams {
            mains_hz: mains.frequency_hz,
            harmonic_amplitudes_v: mains
                .harmonics_v
                .iter()
                .map(|p| p.draw(&mut draws))
                .collect(),
            frequency_offset_hz: 0.0,
        };
        sources.push(Box::new(
            noise::MainsHum::new(&params, sim_rate_hz, key.stream_seed("mains"))
                .map_err(noise_err("mains"))?,
        ));
        if let Some(lamp) = &env.lamp {
            let params = noise::LampFlickerParams {
                mains_hz: mains.frequency_hz,
                harmonic_amplitudes_v: lamp
                    .harmonics_v
                    .iter()
                    .map(|p| p.draw(&mut draws))
                    .collect(),
                frequency_offset_hz: 0.0,
            };
            sources.push(Box::new(
                noise::LampFlicker::new(&params, sim_rate_hz, key.stream_seed("lamp"))
                    .map_err(noise_err("lamp"))?,
            ));
        }
    }
    if let Some(bursts) = &env.radio_bursts {
        let params = noise::RadioBurstParams {
            poisson_rate_hz: bursts.rate_hz.draw(&mut draws),
            periodic_interval_s: bursts.period_s.as_ref().map(|p| p.draw(&mut draws)),
            width_s: bursts.width_s.draw(&mut draws),
            amplitude_v: bursts.amplitude_v.draw(&mut draws),
            power_jitter_db: bursts.amplitude_spread_db.draw(&mut draws),
        };
        sources.push(Box::new(
            noise::RadioBursts::new(&params, sim_rate_hz, key.stream_seed("radio_bursts"))
                .map_err(noise_err("radio_bursts"))?,
        ));
    }
    if let Some(n) = &env.neighbour {
        let amplitude_v = n.amplitude_v.draw(&mut draws);
        let mean_offset_hz = n.offset_hz.draw(&mut draws);
        let amplitude_hz = n.drift_hz.draw(&mut draws);
        let period_s = n.drift_period_s.draw(&mut draws);
        let drift = if amplitude_hz > 0.0 {
            noise::OffsetDrift::Sinusoidal {
                amplitude_hz,
                period_s,
            }
        } else {
            noise::OffsetDrift::Steady
        };
        let params = noise::BeatToneParams {
            amplitude_v,
            mean_offset_hz,
            drift,
        };
        sources.push(Box::new(
            noise::BeatTone::new(&params, sim_rate_hz, key.stream_seed("neighbour"))
                .map_err(noise_err("neighbour"))?,
        ));
    }
    if let Some(drift) = &scene.sensor.drift {
        let params = noise::DcDriftParams {
            rms_v: drift.rms_v,
            time_constant_s: drift.time_constant_s,
        };
        sources.push(Box::new(
            noise::DcDrift::new(
                &params,
                sim_rate_hz,
                key.stream_seed(&format!("drift/{channel}")),
            )
            .map_err(|e| fail("sensor.drift", e))?,
        ));
    }
    Ok(sources)
}

/// Draws everything for trial `key`.
pub fn build_trial(scene: &SceneSpec, key: &StreamKey) -> Result<TrialParts, SynthError> {
    let s = &scene.sensor;
    let radar = radar_geometry(scene);
    let lambda = wavelength_m(s.carrier_hz);
    let mut models = Vec::with_capacity(scene.actors.len());
    for index in 0..scene.actors.len() {
        models.push(build_model(scene, index, key)?);
    }
    let max_doppler = models
        .iter()
        .map(|m| m.max_doppler_hz(lambda))
        .fold(0.0, f64::max);
    // The internal rate must also hold the analog corners: a low-pass corner at or
    // above the ADC's Nyquist is a weak filter, simulated at a higher internal rate.
    let highest_corner = s
        .front_end
        .high_pass_hz
        .iter()
        .chain(&s.front_end.low_pass_hz)
        .fold(0.0f64, |a, &b| a.max(b));
    let oversampling = oversampling_for(max_doppler, s.sample_rate_hz).max(
        ((highest_corner / (0.45 * s.sample_rate_hz)).ceil() as usize).clamp(1, MAX_OVERSAMPLING),
    );
    let sim_rate_hz = s.sample_rate_hz * oversampling as f64;
    let tracks: Vec<Track> = models
        .into_iter()
        .map(|mut model| {
            // An actor far slower than the internal rate, and without velocity
            // steps, is rendered at f_sim/D (at least 4× its own highest
            // frequency) and interpolated up (`upsample`), with the nodes it
            // would have had.
            let max_doppler_hz = model.max_doppler_hz(lambda);
            let slowest_rate_hz = |model: &dyn MotionModel| {
                let linear_hz = model.flash_node_rate_hz(lambda);
                match model.cubic_amplitude_node_rate_hz(lambda) {
                    Some(cubic_hz) if cubic_hz < linear_hz => cubic_hz,
                    _ => linear_hz,
                }
            };
            // Only a model without velocity steps (`band_limited`) is interpolated.
            let band_limited = model.band_limited();
            let rate_of = |node_rate_hz: f64| {
                if band_limited {
                    track_rate(max_doppler_hz, node_rate_hz, sim_rate_hz)
                } else {
                    track_rate(0.0, node_rate_hz, sim_rate_hz)
                }
            };
            let factor = rate_of(slowest_rate_hz(model.as_ref())).factor;
            let track_rate_hz = sim_rate_hz / factor as f64;
            // The renderer takes the fast sinc factors per sample (`echoes_with_flashes`),
            // so the nodes need only follow ranges, slow amplitudes and flash arguments.
            // A vibration goes per sample too where the nodes it saves cost more.
            if model.vibration().is_some() {
                let per_sample_hz = model.flash_node_rate_hz(lambda);
                model.set_vibration_per_sample(false);
                let in_nodes_hz = model.flash_node_rate_hz(lambda);
                let saved_hz = in_nodes_hz - per_sample_hz;
                model.set_vibration_per_sample(
                    saved_hz * VIBRATION_SAMPLES_PER_NODE > track_rate_hz,
                );
            }
            // Amplitudes by a cubic through four nodes where that lowers the rate.
            let linear_hz = model.flash_node_rate_hz(lambda);
            let (rate_hz, cubic) = match model.cubic_amplitude_node_rate_hz(lambda) {
                Some(cubic_hz) if cubic_hz < linear_hz => (cubic_hz, true),
                _ => (linear_hz, false),
            };
            let rate = rate_of(rate_hz);
            let track_rate_hz = sim_rate_hz / rate.factor as f64;
            let track = ActorTrack::new(model, rate.samples_per_node, track_rate_hz, &radar, cubic);
            if rate.factor == 1 {
                Track::Direct(Box::new(track))
            } else {
                let interpolator = Interpolator::new(rate.factor, max_doppler_hz / track_rate_hz);
                Track::Interpolated(Box::new(InterpolatedTrack::new(
                    track,
                    interpolator,
                    &radar,
                )))
            }
        })
        .collect();

    // Static clutter: a DC term at the mixer output (removed by the coupling high-pass).
    let mut clutter_rng = rng(key, "environment/clutter");
    let mut dc_v = [s.mixer_dc_v, 0.0];
    for reflector in &scene.environment.static_clutter {
        let position = draw3(&reflector.position_m, &mut clutter_rng);
        let rcs = reflector.rcs_m2.draw(&mut clutter_rng);
        let echo = echobench_motion::Echo {
            position_m: position,
            velocity_mps: [0.0; 3],
            amplitude_m: rcs.sqrt(),
        };
        let seen = radar.see(&echo);
        let phase = radar.phase_per_m * seen.range_m;
        dc_v[0] += seen.amplitude_v * phase.cos();
        dc_v[1] -= seen.amplitude_v * phase.sin();
    }

    let iq = s.output == echobench_core::Channels::Iq;
    let noise_i = build_noise(scene, key, "i", sim_rate_hz)?;
    let noise_q = if iq {
        build_noise(scene, key, "q", sim_rate_hz)?
    } else {
        Vec::new()
    };
    let fe = &s.front_end;
    let chain_params = AnalogChainParams {
        high_pass_corners_hz: fe.high_pass_hz.clone(),
        low_pass_corners_hz: fe.low_pass_hz.clone(),
        gain_v_per_v: 10f64.powf(fe.gain_db / 20.0),
        output_bias_v: fe.bias_v,
        swing: OutputSwing {
            rail_low_v: fe.rails_v[0],
            rail_high_v: fe.rails_v[1],
            knee_v: OutputSwing::TYPICAL_KNEE_V.min(0.2 * (fe.rails_v[1] - fe.rails_v[0])),
        },
    };
    // The module has been on for a while: every section starts settled on the
    // static DC plus what the actors present at t = 0 contribute, so a swaying
    // plant or a running fan does not arrive as a step that rings through the
    // high-pass (the analog equivalent of starting the filters in steady state).
    let (start_i, start_q) = tracks.iter().fold((0.0, 0.0), |(i, q), t| {
        let (ti, tq) = t.value_at_start(&radar);
        (i + ti, q + tq)
    });
    let make_chain = |dc: f64| -> Result<AnalogChain, SynthError> {
        let mut chain = AnalogChain::new(&chain_params, sim_rate_hz)
            .map_err(|e| fail("sensor.front_end", e))?;
        chain.settle_to_input(dc);
        Ok(chain)
    };
    let chain_i = make_chain(dc_v[0] + start_i)?;
    let chain_q = if iq {
        Some(make_chain(dc_v[1] + start_q)?)
    } else {
        None
    };
    let decimator = || Decimator::new(oversampling).map_err(|e| fail("sensor.sample_rate_hz", e));
    let adc = Adc::new(s.adc.bits, s.adc.full_scale_v).map_err(|e| fail("sensor.adc", e))?;
    let truth = trial_truth(scene, key)?;
    Ok(TrialParts {
        info: StreamInfo {
            sample_rate_hz: s.sample_rate_hz,
            channels: s.output,
            adc_bits: s.adc.bits,
            carrier_hz: s.carrier_hz,
        },
        oversampling,
        total_samples: (scene.duration_s * s.sample_rate_hz).round() as usize,
        radar,
        tracks,
        noise_i,
        noise_q,
        dc_v,
        chain_i,
        chain_q,
        decimator_i: decimator()?,
        decimator_q: if iq { Some(decimator()?) } else { None },
        adc,
        bias_v: fe.bias_v,
        truth,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn only_band_limited_actors_are_interpolated() {
        // The reference workload's walker (2 kHz, its Doppler under 110 Hz)
        // goes at a quarter of the rate; its link-budget reflector, which
        // stops dead (a velocity step), is rendered at the internal rate.
        let root = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/../../scenarios/bench/reference-workload/"
        );
        let kinds = |file: &str| {
            let path = format!("{root}{file}");
            let text = std::fs::read_to_string(&path).unwrap();
            let scene = crate::load_scene_text(&path, &text).unwrap();
            let parts = build_trial(&scene, &StreamKey::new(1, "x", 0)).unwrap();
            parts
                .tracks
                .iter()
                .map(|t| matches!(t, Track::Interpolated(_)))
                .collect::<Vec<_>>()
        };
        assert_eq!(kinds("walker.yaml"), [true]);
        assert_eq!(kinds("link-budget-check.yaml"), [false]);
    }

    #[test]
    fn oversampling_follows_the_largest_doppler() {
        assert_eq!(oversampling_for(200.0, 2000.0), 1);
        // Desk fan at 24.125 GHz: 3034 Hz tip Doppler (docs/reference/nuisances.md#n2) at
        // fs = 2 kHz.
        assert_eq!(oversampling_for(3034.0, 2000.0), 13);
        assert_eq!(oversampling_for(1e9, 2000.0), MAX_OVERSAMPLING);
    }
}
