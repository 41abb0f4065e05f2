//! From an actor's drawn numbers to its motion model.
//!
//! Draw order is part of the reproducibility contract: each actor draws its
//! params from its own stream in the order written here, so changing one
//! actor never changes another's draws.

use crate::actors::ActorKind;
use crate::build::{build_path, fail};
use crate::synth::SynthError;
use echobench_motion::animal::{Animal, AnimalParams};
use echobench_motion::breathing::{Breathing, BreathingParams};
use echobench_motion::door::{Door, DoorParams};
use echobench_motion::fan::{Fan, FanParams};
use echobench_motion::reflector::{Reflector, ReflectorParams};
use echobench_motion::standing::StandingMotion;
use echobench_motion::sway::{pendulum_natural_frequency_hz, Sway, SwayParams};
use echobench_motion::walker::Walker;
use echobench_motion::MotionModel;
use rand::Rng;
use rand_chacha::ChaCha8Rng;

fn unit_from_angles(azimuth_deg: f64, elevation_deg: f64) -> [f64; 3] {
    let (sa, ca) = azimuth_deg.to_radians().sin_cos();
    let (se, ce) = elevation_deg.to_radians().sin_cos();
    [ca * ce, sa * ce, se]
}

/// Builds the model of one actor from its spec, drawing its params from `rng`.
pub fn build(
    kind: &ActorKind,
    field: &str,
    duration_s: f64,
    wavelength_m: f64,
    rng: &mut ChaCha8Rng,
    seed: [u8; 32],
) -> Result<Box<dyn MotionModel>, SynthError> {
    let model_error = |e: &dyn std::fmt::Display| fail(field.to_string(), e);
    Ok(match kind {
        ActorKind::Walker(w) => {
            let height = w.height_m.draw(rng);
            let rcs_scale = w.rcs_scale.draw(rng);
            let path = build_path(&w.path, duration_s, rng, &format!("{field}.path"))?;
            let gait = echobench_gait::Gait::new(height, path.speed_mps())
                .map_err(|e| fail(format!("{field}.path.speed_mps"), e))?;
            // The standing sway and breathing take their draws from the motion
            // seed, not the params stream, so the drawn params are unchanged.
            let walker = Walker::new(gait, path, rcs_scale).map_err(|e| model_error(&e))?;
            Box::new(walker.with_standing_motion(StandingMotion::quiet_adult(seed)))
        }
        ActorKind::Breathing(b) => {
            let position = [b.position_m[0].draw(rng), b.position_m[1].draw(rng)];
            let chest_height = b.chest_height_m.draw(rng);
            let facing = b.facing_deg.draw(rng).to_radians();
            let mut params = BreathingParams::seated_adult(position, chest_height, facing);
            params.rate_per_min = b.rate_per_min.draw(rng);
            params.peak_to_peak_m = b.displacement_pp_m.draw(rng);
            params.chest_rcs_m2 = b.rcs_m2.draw(rng);
            params.heart_amplitude_m = 0.5 * b.heartbeat_pp_m.draw(rng);
            params.heart_rate_hz = b.heart_rate_per_min.draw(rng) / 60.0;
            params.fidget_rate_per_min = b.fidgets_per_min.draw(rng);
            params.present_from_s = b.enter_s.draw(rng);
            params.present_until_s = b.leave_s.as_ref().map_or(f64::INFINITY, |p| p.draw(rng));
            params.stand_up_at_s = b
                .stand_up_at_s
                .as_ref()
                .map_or(f64::INFINITY, |p| p.draw(rng));
            params.stand_up_s = b.stand_up_s.draw(rng);
            params.standing_chest_height_m = b.standing_chest_height_m.draw(rng);
            Box::new(Breathing::new(params, seed).map_err(|e| model_error(&e))?)
        }
        ActorKind::Sway(s) => {
            let pivot = [
                s.pivot_m[0].draw(rng),
                s.pivot_m[1].draw(rng),
                s.pivot_m[2].draw(rng),
            ];
            let arm_length = s.arm_length_m.draw(rng);
            let natural = match &s.natural_hz {
                Some(p) => p.draw(rng),
                None => pendulum_natural_frequency_hz(arm_length).map_err(|e| model_error(&e))?,
            };
            let direction = s.direction_deg.draw(rng).to_radians();
            let params = SwayParams {
                pivot_m: pivot,
                arm_direction: if s.hanging {
                    [0.0, 0.0, -1.0]
                } else {
                    [0.0, 0.0, 1.0]
                },
                arm_length_m: arm_length,
                sway_direction: [direction.cos(), direction.sin(), 0.0],
                natural_frequency_hz: natural,
                damping_ratio: s.damping_ratio.draw(rng),
                rms_displacement_m: s.rms_displacement_m.draw(rng),
                gust_corner_hz: s.gust_corner_hz.draw(rng),
                rcs_m2: s.rcs_m2.draw(rng),
                // Spread of the points' phase offsets (no source; the model's default).
                point_phase_spread_rad: 0.5,
            };
            Box::new(Sway::new(params, seed).map_err(|e| model_error(&e))?)
        }
        ActorKind::Fan(f) => {
            let hub = [
                f.position_m[0].draw(rng),
                f.position_m[1].draw(rng),
                f.position_m[2].draw(rng),
            ];
            let axis =
                unit_from_angles(f.axis_azimuth_deg.draw(rng), f.axis_elevation_deg.draw(rng));
            let blades = f.blades.draw(rng).round() as usize;
            let vibration = f.housing_vibration_m.draw(rng);
            let params = FanParams {
                hub_m: hub,
                axis,
                blade_count: blades,
                root_radius_m: f.root_radius_m.draw(rng),
                tip_radius_m: f.tip_radius_m.draw(rng),
                revolutions_per_s: f.rev_per_s.draw(rng),
                blade_tilt_rad: f.blade_tilt_deg.draw(rng).to_radians(),
                blade_rcs_m2: f.blade_rcs_m2.draw(rng),
                hub_rcs_m2: f.housing_rcs_m2.draw(rng),
                imbalance_whirl_m: vibration,
                mains_vibration_m: vibration,
                mains_hz: f.mains_hz.draw(rng),
                initial_angle_rad: rng.random::<f64>() * std::f64::consts::TAU,
                switch_on_s: f64::NEG_INFINITY,
                switch_off_s: f64::INFINITY,
                spin_up_s: echobench_motion::fan::DEFAULT_SPIN_UP_S,
                spin_down_s: echobench_motion::fan::DEFAULT_SPIN_DOWN_S,
            };
            // Drawn after the older fields, so a fan without switching keeps its draws.
            let mut params = params;
            params.switch_on_s = f
                .switch_on_s
                .as_ref()
                .map_or(f64::NEG_INFINITY, |p| p.draw(rng));
            params.switch_off_s = f
                .switch_off_s
                .as_ref()
                .map_or(f64::INFINITY, |p| p.draw(rng));
            params.spin_up_s = f.spin_up_s.draw(rng);
            params.spin_down_s = f.spin_down_s.draw(rng);
            Box::new(Fan::new(params, wavelength_m).map_err(|e| model_error(&e))?)
        }
        ActorKind::Animal(a) => {
            let mass = a.mass_kg.draw(rng);
            let rcs = a.rcs_m2.as_ref().map(|p| p.draw(rng));
            let path = build_path(&a.path, duration_s, rng, &format!("{field}.path"))?;
            let mut params = AnimalParams::from_mass(path, mass);
            if rcs.is_some() {
                params.body_rcs_m2 = rcs;
            }
            Box::new(Animal::new(params).map_err(|e| model_error(&e))?)
        }
        ActorKind::Door(d) => {
            let swing = d.swing_s.draw(rng);
            let params = DoorParams {
                hinge_m: [d.hinge_m[0].draw(rng), d.hinge_m[1].draw(rng)],
                width_m: d.width_m.draw(rng),
                height_m: d.height_m.draw(rng),
                closed_angle_rad: d.closed_deg.draw(rng).to_radians(),
                open_angle_rad: d.open_deg.draw(rng).to_radians(),
                open_start_s: d.open_at_s.draw(rng),
                open_duration_s: swing,
                close_start_s: d.close_at_s.as_ref().map_or(f64::INFINITY, |p| p.draw(rng)),
                close_duration_s: swing,
                edge_rcs_m2: d.edge_rcs_m2.draw(rng),
            };
            Box::new(Door::new(params, wavelength_m).map_err(|e| model_error(&e))?)
        }
        ActorKind::Reflector(r) => {
            let start = [
                r.position_m[0].draw(rng),
                r.position_m[1].draw(rng),
                r.position_m[2].draw(rng),
            ];
            let direction = unit_from_angles(r.azimuth_deg.draw(rng), r.elevation_deg.draw(rng));
            let params = ReflectorParams {
                rcs_m2: r.rcs_m2.draw(rng),
                start_m: start,
                travel_direction: direction,
                speed_mps: r.speed_mps.draw(rng),
                move_start_s: r.move_start_s.draw(rng),
                move_stop_s: r
                    .move_stop_s
                    .as_ref()
                    .map_or(f64::INFINITY, |p| p.draw(rng)),
                shaker_amplitude_m: r.shaker_amplitude_m.draw(rng),
                shaker_frequency_hz: r.shaker_hz.draw(rng),
                shaker_direction: direction,
                shaker_phase_rad: 0.0,
            };
            Box::new(Reflector::new(params).map_err(|e| model_error(&e))?)
        }
    })
}
