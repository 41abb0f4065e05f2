//! Doppler coverage: does a detector look where a scene's target puts its echo energy?
//!
//! A CW Doppler sensor sees a body part moving at radial speed v at
//! f_D = 2v/λ = 2·v·f_c/c (Skolnik, *Introduction to Radar Systems*, 3rd ed.,
//! ch. 3). A detector whose bands were chosen for one carrier can miss a
//! walker entirely at another (a 10–80 Hz band catches a 1.3 m/s torso at
//! 2.45 GHz, 21 Hz, but not at 24.125 GHz, 209 Hz), and nothing in the scores
//! says why. This crate computes, from a target scene's kinematics, where the
//! target's Doppler lies ([`target_doppler`]) and compares it with the bands a
//! detector declares (`DetectorPlugin::doppler_bands`), naming detector,
//! scene and numbers in each [`CoverageWarning`] ([`coverage_warnings`]).
//!
//! # The one design decision: the same kinematics as the signal and the truth
//!
//! The target's Doppler is read from the motion models the synthesizer renders
//! (`echobench_scene::build_model`, fresh instances with the trial's seeds),
//! seen through the scene's radar geometry (`RadarGeometry::see_all`: range
//! rate, beam pattern, √σ/R² amplitude), and only over the time the truth
//! calls an event: the target moving inside the coverage zone
//! (`echobench_scene::truth::target_timeline`). So the warning is about the
//! events that are scored, not about the target walking outside the zone or
//! standing still.
//!
//! # What is measured
//!
//! Every target actor is sampled at [`SAMPLE_RATE_HZ`] through its moving
//! inside-zone intervals, in every trial key given. At each instant each echo
//! contributes |f_D| = 2·|range rate|/λ with weight A², its IF amplitude
//! squared (echo power: what a band's power sum collects). From these:
//!
//! - the **echo spread**: 5th, 50th and 95th percentiles of the power-weighted
//!   |f_D| (torso and limbs together);
//! - the **torso line**: the same percentiles of the torso echo's |f_D|, one
//!   sample per instant (the torso echo of a walker; for other kinds the
//!   strongest echo at that instant, which for a body is its trunk: the
//!   torso dominates a walker's power, docs/reference/people.md#p4);
//! - the **energy fraction** inside a set of bands.
//!
//! # When a warning fires
//!
//! - (a) **Bands miss the target**: the detector's motion bands (their union)
//!   hold less than [`MOST_FRACTION`] = ½ of the target's echo energy. "Most"
//!   is "more than half": a detector that collects less than half of the
//!   power it could have loses more than 3 dB of signal against a detector
//!   whose band fits, and with the torso line outside its band (the torso
//!   carries most of a walker's power) it is left with limb flashes only.
//!   No warning for a detector that declares no motion band.
//! - (b) **Past Nyquist**: more than [`ALIASED_FRACTION`] = 5 % of the echo
//!   energy lies above the stream's Nyquist frequency fs/2, i.e. the echo
//!   spread's 95th percentile passes it: that part folds back (a real
//!   stream) or wraps (I/Q) to a wrong Doppler.
//! - (c) **Nuisance band holds the torso**: a nuisance (reference, sway) band
//!   of the detector holds the torso line most of the time (more than half
//!   of the torso samples, same "most"), so the walker's strongest line
//!   counts against motion.
//!
//! A target with no moving time inside the zone (a seated breathing person,
//! say) gives no warning: there is no event whose Doppler could be missed.
#![deny(missing_docs)]

use echobench_core::detector::{BandRole, DopplerBand};
use echobench_core::doppler::speed_mps;
use echobench_core::seed::StreamKey;
use echobench_core::StreamInfo;
use echobench_motion::Echo;
use echobench_scene::spec::SceneSpec;
use echobench_scene::truth::target_timeline;
use echobench_scene::{build_model, radar_geometry, SynthError};
use std::fmt;

/// Rate at which target actors are sampled, Hz.
///
/// The question is the distribution of the instantaneous Doppler over
/// seconds of walking, not the signal itself: 100 samples per second put
/// about 100 samples in each gait cycle (D_c ≈ 1.07 s at 1.4 m/s,
/// docs/reference/people.md#p4), enough to resolve the swing of the limbs within a cycle.
pub const SAMPLE_RATE_HZ: f64 = 100.0;

/// "Most" of the target's Doppler energy: more than this fraction (module doc).
pub const MOST_FRACTION: f64 = 0.5;

/// Energy above Nyquist beyond which warning (b) fires: the 95th percentile passes fs/2.
pub const ALIASED_FRACTION: f64 = 0.05;

/// Three percentiles of a Doppler distribution, Hz.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Spread {
    /// 5th percentile, Hz.
    pub p05_hz: f64,
    /// Median, Hz.
    pub p50_hz: f64,
    /// 95th percentile, Hz.
    pub p95_hz: f64,
}

/// Where a scene's targets put their Doppler, pooled over the trials sampled.
#[derive(Debug, Clone, PartialEq)]
pub struct TargetDoppler {
    /// Carrier of the scene's sensor, Hz (for speeds in messages).
    pub carrier_hz: f64,
    /// Trials sampled.
    pub trials: usize,
    /// Target time sampled (moving inside the coverage zone, all targets and trials), s.
    pub moving_s: f64,
    /// Power-weighted |f_D| of every echo; `None` without moving time.
    pub echo: Option<Spread>,
    /// |f_D| of the torso line; `None` without moving time.
    pub torso: Option<Spread>,
    /// (|f_D| Hz, power) of every echo sample, sorted by frequency.
    echo_samples: Vec<(f64, f64)>,
    /// |f_D| of the torso line at each instant, sorted.
    torso_samples: Vec<f64>,
}

impl TargetDoppler {
    /// True when the targets never moved inside the coverage zone in the trials sampled.
    pub fn is_empty(&self) -> bool {
        self.echo_samples.is_empty()
    }

    /// Fraction of the echo energy whose |f_D| lies in at least one of `bands_hz` (closed).
    pub fn energy_fraction(&self, bands_hz: &[(f64, f64)]) -> f64 {
        self.weighted_fraction(|f| bands_hz.iter().any(|&(lo, hi)| f >= lo && f <= hi))
    }

    /// Fraction of the echo energy whose |f_D| lies above `hz`.
    pub fn energy_fraction_above(&self, hz: f64) -> f64 {
        self.weighted_fraction(|f| f > hz)
    }

    /// Fraction of the torso-line samples whose |f_D| lies in `band_hz` (closed).
    pub fn torso_fraction(&self, (low_hz, high_hz): (f64, f64)) -> f64 {
        if self.torso_samples.is_empty() {
            return 0.0;
        }
        let inside = self
            .torso_samples
            .iter()
            .filter(|&&f| f >= low_hz && f <= high_hz)
            .count();
        inside as f64 / self.torso_samples.len() as f64
    }

    fn weighted_fraction(&self, keep: impl Fn(f64) -> bool) -> f64 {
        let total: f64 = self.echo_samples.iter().map(|s| s.1).sum();
        if total <= 0.0 {
            return 0.0;
        }
        let inside: f64 = self
            .echo_samples
            .iter()
            .filter(|s| keep(s.0))
            .map(|s| s.1)
            .sum();
        inside / total
    }
}

/// The p-quantile of `sorted` (ascending (value, weight) pairs): the first
/// value whose cumulative weight reaches p of the total.
fn weighted_quantile(sorted: &[(f64, f64)], total: f64, p: f64) -> f64 {
    let goal = p * total;
    let mut cumulative = 0.0;
    for &(value, weight) in sorted {
        cumulative += weight;
        if cumulative >= goal {
            return value;
        }
    }
    sorted.last().map_or(0.0, |s| s.0)
}

fn spread_of(sorted: &[(f64, f64)]) -> Option<Spread> {
    let total: f64 = sorted.iter().map(|s| s.1).sum();
    (total > 0.0).then(|| Spread {
        p05_hz: weighted_quantile(sorted, total, 0.05),
        p50_hz: weighted_quantile(sorted, total, 0.50),
        p95_hz: weighted_quantile(sorted, total, 0.95),
    })
}

/// The Doppler distribution of `scene`'s target actors over the trials `keys`
/// (module doc). Deterministic: the same scene and keys give the same numbers.
///
/// # Errors
/// A model the scene's drawn values refuse (as the synthesizer would).
pub fn target_doppler(scene: &SceneSpec, keys: &[StreamKey]) -> Result<TargetDoppler, SynthError> {
    let radar = radar_geometry(scene);
    let wavelength_m = echobench_core::doppler::wavelength_m(scene.sensor.carrier_hz);
    let mut echo_samples: Vec<(f64, f64)> = Vec::new();
    let mut torso_samples: Vec<f64> = Vec::new();
    let mut moving_s = 0.0;
    let mut echoes: Vec<Echo> = Vec::new();
    let mut nodes = Vec::new();
    let mut directions = Vec::new();
    for key in keys {
        for (index, actor) in scene.actors.iter().enumerate() {
            if !actor.target {
                continue;
            }
            // One fresh model to find the event intervals, another to sample them:
            // models advance in time order only.
            let mut timeline_model = build_model(scene, index, key)?;
            let timeline = target_timeline(
                timeline_model.as_mut(),
                &radar,
                &scene.coverage,
                scene.duration_s,
            );
            let mut model = build_model(scene, index, key)?;
            let torso_index =
                (actor.kind_name() == "walker").then_some(echobench_motion::walker::TORSO_ECHO);
            for interval in &timeline.moving_inside {
                moving_s += interval.duration_s();
                let first = (interval.start_s() * SAMPLE_RATE_HZ).ceil() as u64;
                let last = (interval.end_s() * SAMPLE_RATE_HZ).floor() as u64;
                for step in first..=last {
                    let t_s = step as f64 / SAMPLE_RATE_HZ;
                    echoes.clear();
                    model.echoes(t_s, radar.position_m, &mut echoes);
                    radar.see_all(&echoes, &mut nodes, &mut directions);
                    let doppler = |n: &echobench_scene::render::EchoNode| {
                        2.0 * n.range_rate_mps.abs() / wavelength_m
                    };
                    let mut strongest: Option<(f64, f64)> = None;
                    for node in &nodes {
                        let power = node.amplitude_v * node.amplitude_v;
                        if power > 0.0 {
                            echo_samples.push((doppler(node), power));
                        }
                        if strongest.is_none_or(|(p, _)| power > p) {
                            strongest = Some((power, doppler(node)));
                        }
                    }
                    let torso = match torso_index {
                        Some(i) => nodes.get(i).map(doppler),
                        None => strongest.filter(|s| s.0 > 0.0).map(|s| s.1),
                    };
                    torso_samples.extend(torso);
                }
            }
        }
    }
    echo_samples.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.total_cmp(&b.1)));
    torso_samples.sort_by(f64::total_cmp);
    let torso_pairs: Vec<(f64, f64)> = torso_samples.iter().map(|&f| (f, 1.0)).collect();
    Ok(TargetDoppler {
        carrier_hz: scene.sensor.carrier_hz,
        trials: keys.len(),
        moving_s,
        echo: spread_of(&echo_samples),
        torso: spread_of(&torso_pairs),
        echo_samples,
        torso_samples,
    })
}

/// What is wrong, with the numbers.
#[derive(Debug, Clone, PartialEq)]
pub enum CoverageProblem {
    /// (a) The motion bands hold less than [`MOST_FRACTION`] of the echo energy.
    BandsMissTarget {
        /// The motion bands, Hz.
        motion_bands_hz: Vec<(f64, f64)>,
        /// Fraction of the echo energy they hold.
        fraction: f64,
    },
    /// (b) More than [`ALIASED_FRACTION`] of the echo energy lies above Nyquist.
    PastNyquist {
        /// The stream's Nyquist frequency, Hz.
        nyquist_hz: f64,
        /// Fraction of the echo energy above it.
        fraction: f64,
    },
    /// (c) A nuisance band holds the torso line most of the time.
    NuisanceHoldsTorso {
        /// The band's label.
        band_label: &'static str,
        /// The band, Hz.
        band_hz: (f64, f64),
        /// Fraction of the torso-line samples inside it.
        fraction: f64,
    },
}

/// One coverage warning: which detector, which scene, what, and where the target's Doppler is.
#[derive(Debug, Clone, PartialEq)]
pub struct CoverageWarning {
    /// The scene's id.
    pub scene_id: String,
    /// The detector's label in the suite.
    pub detector: String,
    /// The carrier the bands and Doppler are at, Hz.
    pub carrier_hz: f64,
    /// The target's echo spread.
    pub echo: Spread,
    /// The target's torso line.
    pub torso: Spread,
    /// What is wrong.
    pub problem: CoverageProblem,
}

fn pct(fraction: f64) -> String {
    // `max(0.0)` also turns a rounding residue of -0.0 into 0 (no "-0 %").
    format!("{:.0} %", (100.0 * fraction).max(0.0))
}

impl fmt::Display for CoverageWarning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let v = |hz: f64| speed_mps(hz, self.carrier_hz);
        let band =
            |(lo, hi): (f64, f64)| format!("{lo:.1}–{hi:.1} Hz ({:.2}–{:.2} m/s)", v(lo), v(hi));
        let target = format!(
            "the target's echo energy lies at {:.1}–{:.1} Hz (5th–95th percentile, {:.2}–{:.2} m/s), \
             its torso line at {:.1}–{:.1} Hz (median {:.1} Hz, {:.2} m/s)",
            self.echo.p05_hz,
            self.echo.p95_hz,
            v(self.echo.p05_hz),
            v(self.echo.p95_hz),
            self.torso.p05_hz,
            self.torso.p95_hz,
            self.torso.p50_hz,
            v(self.torso.p50_hz)
        );
        write!(
            f,
            "coverage: detector `{}` on scene `{}` ({:.3} GHz): ",
            self.detector,
            self.scene_id,
            self.carrier_hz / 1e9
        )?;
        match &self.problem {
            CoverageProblem::BandsMissTarget {
                motion_bands_hz,
                fraction,
            } => {
                let bands: Vec<String> = motion_bands_hz.iter().map(|&b| band(b)).collect();
                write!(
                    f,
                    "its motion band {} holds only {} of the target's Doppler energy (most, > {}, \
                     should fall inside); {target}",
                    bands.join(" + "),
                    pct(*fraction),
                    pct(MOST_FRACTION)
                )
            }
            CoverageProblem::PastNyquist {
                nyquist_hz,
                fraction,
            } => write!(
                f,
                "{} of the target's Doppler energy lies above the stream's Nyquist frequency \
                 {nyquist_hz:.1} Hz ({:.2} m/s) and folds back to a wrong Doppler; {target}",
                pct(*fraction),
                v(*nyquist_hz)
            ),
            CoverageProblem::NuisanceHoldsTorso {
                band_label,
                band_hz,
                fraction,
            } => write!(
                f,
                "its nuisance band `{band_label}` {} holds the target's torso line {} of the \
                 time, so the walker's strongest line counts against motion; {target}",
                band(*band_hz),
                pct(*fraction)
            ),
        }
    }
}

/// The warnings for one detector (its declared `bands`, as
/// `DetectorPlugin::doppler_bands` returns them for this stream) on one
/// target scene, by the rules of the module doc. Empty when the target never
/// moved inside the zone, or when all is well.
pub fn coverage_warnings(
    scene_id: &str,
    target: &TargetDoppler,
    detector_label: &str,
    bands: &[DopplerBand],
    info: &StreamInfo,
) -> Vec<CoverageWarning> {
    let (Some(echo), Some(torso)) = (target.echo, target.torso) else {
        return Vec::new();
    };
    let warning = |problem| CoverageWarning {
        scene_id: scene_id.to_string(),
        detector: detector_label.to_string(),
        carrier_hz: target.carrier_hz,
        echo,
        torso,
        problem,
    };
    let mut warnings = Vec::new();
    let motion: Vec<(f64, f64)> = bands
        .iter()
        .filter(|b| b.role == BandRole::Motion)
        .map(|b| (b.low_hz, b.high_hz))
        .collect();
    if !motion.is_empty() {
        let fraction = target.energy_fraction(&motion);
        if fraction <= MOST_FRACTION {
            warnings.push(warning(CoverageProblem::BandsMissTarget {
                motion_bands_hz: motion,
                fraction,
            }));
        }
    }
    let nyquist_hz = info.sample_rate_hz / 2.0;
    let above = target.energy_fraction_above(nyquist_hz);
    if above > ALIASED_FRACTION {
        warnings.push(warning(CoverageProblem::PastNyquist {
            nyquist_hz,
            fraction: above,
        }));
    }
    for band in bands.iter().filter(|b| b.role == BandRole::Nuisance) {
        let fraction = target.torso_fraction((band.low_hz, band.high_hz));
        if fraction > MOST_FRACTION {
            warnings.push(warning(CoverageProblem::NuisanceHoldsTorso {
                band_label: band.label,
                band_hz: (band.low_hz, band.high_hz),
                fraction,
            }));
        }
    }
    warnings
}

#[cfg(test)]
mod tests {
    use super::*;

    fn target(samples: &[(f64, f64)], torso: &[f64]) -> TargetDoppler {
        let pairs: Vec<(f64, f64)> = torso.iter().map(|&f| (f, 1.0)).collect();
        TargetDoppler {
            carrier_hz: 24.125e9,
            trials: 1,
            moving_s: 1.0,
            echo: spread_of(samples),
            torso: spread_of(&pairs),
            echo_samples: samples.to_vec(),
            torso_samples: torso.to_vec(),
        }
    }

    #[test]
    fn weighted_percentiles_and_fractions_by_hand() {
        // Weights 1, 2, 3, 4 at 10, 20, 30, 40 Hz (total 10): cumulative 1, 3, 6, 10.
        // 5 % of 10 = 0.5 → 10 Hz; 50 % = 5 → 30 Hz; 95 % = 9.5 → 40 Hz.
        let t = target(
            &[(10.0, 1.0), (20.0, 2.0), (30.0, 3.0), (40.0, 4.0)],
            &[20.0, 30.0],
        );
        assert_eq!(
            t.echo,
            Some(Spread {
                p05_hz: 10.0,
                p50_hz: 30.0,
                p95_hz: 40.0
            })
        );
        // 15–35 Hz holds weights 2 + 3 = 5 of 10; two overlapping bands count once.
        assert_eq!(t.energy_fraction(&[(15.0, 35.0)]), 0.5);
        assert_eq!(t.energy_fraction(&[(15.0, 35.0), (25.0, 45.0)]), 0.9);
        assert_eq!(t.energy_fraction_above(25.0), 0.7);
        assert_eq!(t.torso_fraction((25.0, 100.0)), 0.5);
    }

    #[test]
    fn each_rule_fires_on_its_own_numbers() {
        let t = target(&[(100.0, 1.0), (200.0, 8.0), (600.0, 1.0)], &[200.0, 210.0]);
        let info = StreamInfo {
            carrier_hz: 24.125e9,
            ..echobench_core::detector::test_stream(1000.0)
        };
        let band = |role, label, low_hz, high_hz| DopplerBand {
            role,
            label,
            low_hz,
            high_hz,
        };
        // 150–250 Hz holds 80 %: no (a); 10 % above the 500 Hz Nyquist: (b).
        let w = coverage_warnings(
            "s",
            &t,
            "d",
            &[band(BandRole::Motion, "motion", 150.0, 250.0)],
            &info,
        );
        assert_eq!(w.len(), 1);
        assert!(matches!(w[0].problem, CoverageProblem::PastNyquist { .. }));
        // 10–80 Hz holds nothing: (a); a nuisance band over the torso: (c).
        let w = coverage_warnings(
            "s",
            &t,
            "d",
            &[
                band(BandRole::Motion, "motion", 10.0, 80.0),
                band(BandRole::Nuisance, "reference", 100.0, 400.0),
            ],
            &info,
        );
        let kinds: Vec<_> = w
            .iter()
            .map(|w| std::mem::discriminant(&w.problem))
            .collect();
        assert_eq!(kinds.len(), 3, "{w:?}");
        let text = w[0].to_string();
        assert!(
            text.contains("`d`") && text.contains("`s`") && text.contains("0 %"),
            "{text}"
        );
        // No motion time: no warning at all.
        let empty = target(&[], &[]);
        assert!(coverage_warnings("s", &empty, "d", &[], &info).is_empty());
    }
}
