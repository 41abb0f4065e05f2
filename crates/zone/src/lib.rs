//! Detection zones: where on the floor a product's detectors see a walker.
//!
//! A product team's first question about a motion sensor is "where does it see me?". This
//! crate answers it as a floor plan: walkers enter along many straight walks, each walk is
//! synthesized as a trial of the product's scene (its room, module and noise), each
//! detector's first alarm at its operating threshold is taken, and per grid cell the
//! probability that a walker passing the cell had been detected by the time it left the
//! cell's neighbourhood is tallied, with its interval, beside the density of the places of
//! first detection. Approaching walks (toward the sensor, radial) and crossing walks (across
//! its view, tangential) are kept apart: a radial walker gives the full Doppler of its speed,
//! a crossing one little but its limbs' where it passes closest.
//!
//! **Key design decision: the zone is a plan of ordinary trials and integer tallies, not a
//! second runner.** [`ZonePlan`] turns a [`ZoneSpec`] into a fixed list of [`Walk`]s, each
//! convertible to a scene whose only target is the scene crate's walker actor
//! ([`ZonePlan::trial_scene`]) with its own [`StreamKey`](echobench_core::seed::StreamKey)
//! ([`ZonePlan::trial_key`]); the runner synthesizes and scores them like any trial, sharded
//! by walk index. What comes back, one optional first-detection time per walk and detector,
//! is folded into [`ZoneTally`]: integer counts per cell and kind and a sorted list of
//! (walk, ns), so shards and threads merge exactly in any order. Everything drawn or written
//! ([`zone_csv`], [`floor_picture`], [`side_picture`]) is a pure function of the plan and
//! the tallies. The plan covers every cell with the stated number of walkers of each kind
//! greedily (far cells first, a radial walk from far away also serves the cells it passes),
//! so it needs far fewer walks than cells × walkers.
//!
//! The neighbourhood of a cell is the disc of half the cell diagonal about its centre
//! ([`Grid`]): the smallest disc holding the cell, so the discs cover the floor and a walk
//! through any part of a cell counts for it.
//!
//! # How the runner drives it
//!
//! ```text
//! let template: SceneSpec = …;            // the product's scene: sensor, room, noise, nuisances
//! let spec = ZoneSpec::new(floor, 20, 20, 24);   // from the suite (speed_mps, height_m, kinds …)
//! let plan = ZonePlan::new(&spec, &template.sensor, suite_seed)?;
//! // per detector (label → operating threshold from the product's calibration):
//! let mut tallies: Vec<ZoneTally> = detectors.iter().map(|_| ZoneTally::new(&plan)).collect();
//! for walk in plan.walks() {
//!     let key = plan.trial_key(&product_id, walk);
//!     // this shard's walks only: the runner's rule, key.trial_hash() % count == index - 1
//!     let scene = plan.trial_scene(&template, walk, walk.walker_actor());
//!     // synthesize (scene, key) once, feed every detector; for each detector the first
//!     // alarm at its threshold at or after walk.enter_s, in seconds (None if none):
//!     tallies[d].record(&plan, walk, first_alarm_s)?;
//! }
//! // shards: tally.merge(&other)?   (exact, any order)
//! let part = ZoneCsvPart { product: &product_id, plan: &plan, tallies: &[(label, &tally), …] };
//! let csv: Vec<u8> = zone_csv(&[part, …], 0.95)?;   // write atomically
//! for kind in WalkKind::ALL {
//!     let floor = floor_picture(&plan, label, kind, &tally);      // Svg
//!     if is_ceiling_mount(&plan) { let side = side_picture(&plan, label, kind, &tally); }
//! }
//! ```
//!
//! The first alarm is the harness's alarm logic (threshold, hold) applied to the scores of
//! the walk's trial; alarms before `walk.enter_s` belong to the empty room and are not passed
//! ([`ZoneTally::record`] refuses them).
#![deny(missing_docs)]

mod beam;
mod figures;
mod overview;
mod picture;
mod plan;
mod spec;
mod table;
mod tally;

pub use beam::BeamView;
pub use figures::{zone_figures, ZoneFigures};
pub use overview::overview_picture;
pub use picture::{floor_picture, is_ceiling_mount, probability_colour, side_picture};
pub use plan::{Grid, Walk, ZonePlan};
pub use spec::{FloorRect, WalkKind, ZoneError, ZoneSpec, MAX_WALKS};
pub use table::{zone_csv, ZoneCsvPart, ZoneRow};
pub use tally::{CellResult, FirstDetection, KindTally, ZoneTally};
