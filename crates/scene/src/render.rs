//! Echoes to mixer output: the per-sample inner loop of the synthesizer.
//!
//! Each actor is evaluated only at its node times (every `samples_per_node`
//! internal samples). At a node, every echo's range R, range rate Ṙ and IF
//! amplitude are computed once in f64. Between nodes the range is a cubic
//! Hermite polynomial through (R, Ṙ) at both ends, so the phase 4πR/λ and its
//! rate (the Doppler) are continuous; the amplitude is linear. The phase at
//! the node is reduced to [−π, π] in f64 (exact to ~1e-12 rad for rooms of tens
//! of metres), so the in-segment phase stays small and the fast sine/cosine
//! stays accurate. The samples are written in two passes (phases, then one
//! long sine/cosine loop per echo; see [`ActorTrack::render`]).

use crate::radar::Beam;
use echobench_core::fastmath::{reduce_turns, sin_cos};
use echobench_motion::{dot, sub, Echo, MotionModel, Vec3};

/// The radar seen from the echo's side: where the sensor is, how it points and how strong it is.
#[derive(Debug, Clone, Copy)]
pub struct RadarGeometry {
    /// Sensor position, m.
    pub position_m: Vec3,
    /// Unit vectors of the antenna frame: boresight, left, up.
    pub forward: Vec3,
    /// See `forward`.
    pub left: Vec3,
    /// See `forward`.
    pub up: Vec3,
    /// The beam.
    pub beam: Beam,
    /// IF amplitude of a 1 m² echo at 1 m on boresight, V.
    pub amplitude_v_at_1m: f64,
    /// 4π/λ, rad/m.
    pub phase_per_m: f64,
}

/// An echo at a node, as the radar sees it.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct EchoNode {
    /// Range, m.
    pub range_m: f64,
    /// Range rate, m/s (positive receding).
    pub range_rate_mps: f64,
    /// Peak IF amplitude at the mixer output, V.
    pub amplitude_v: f64,
}

impl RadarGeometry {
    /// Builds the antenna frame from the boresight azimuth and elevation (degrees).
    pub fn new(
        position_m: Vec3,
        azimuth_deg: f64,
        elevation_deg: f64,
        beam: Beam,
        amplitude_v_at_1m: f64,
        wavelength_m: f64,
    ) -> Self {
        let (sa, ca) = azimuth_deg.to_radians().sin_cos();
        let (se, ce) = elevation_deg.to_radians().sin_cos();
        let forward = [ca * ce, sa * ce, se];
        let left = [-sa, ca, 0.0];
        let up = [-ca * se, -sa * se, ce];
        RadarGeometry {
            position_m,
            forward,
            left,
            up,
            beam,
            amplitude_v_at_1m,
            phase_per_m: 4.0 * std::f64::consts::PI / wavelength_m,
        }
    }

    /// Range, range rate and IF amplitude of one echo (amplitude ∝ √σ·g/R², physics.md §1.2).
    pub fn see(&self, echo: &Echo) -> EchoNode {
        let mut out = Vec::with_capacity(1);
        self.see_all(std::slice::from_ref(echo), &mut out, &mut Vec::new());
        out[0]
    }

    /// [`RadarGeometry::see`] for every echo of a node, into `out` (cleared
    /// first); `directions` is scratch. The beam pattern runs as one loop
    /// over the echoes, which vectorises.
    pub fn see_all(&self, echoes: &[Echo], out: &mut Vec<EchoNode>, directions: &mut Vec<Vec3>) {
        out.clear();
        directions.clear();
        for echo in echoes {
            let offset = sub(echo.position_m, self.position_m);
            // Echoes closer than 5 cm would be in the antenna's reactive near field; clamp the range.
            let range_m = dot(offset, offset).sqrt().max(0.05);
            out.push(EchoNode {
                range_m,
                range_rate_mps: dot(offset, echo.velocity_mps) / range_m,
                amplitude_v: self.amplitude_v_at_1m * echo.amplitude_m / (range_m * range_m),
            });
            directions.push([
                dot(offset, self.forward),
                dot(offset, self.left),
                dot(offset, self.up),
            ]);
        }
        apply_beam(&self.beam, out, directions, wide_vectors_available());
    }

    /// Horizontal distance and azimuth off boresight (degrees) of a point.
    pub fn horizontal_polar(&self, point: Vec3) -> (f64, f64) {
        let dx = point[0] - self.position_m[0];
        let dy = point[1] - self.position_m[1];
        let forward = [self.forward[0], self.forward[1]];
        let norm = forward[0].hypot(forward[1]).max(1e-12);
        let (fx, fy) = (forward[0] / norm, forward[1] / norm);
        let along = dx * fx + dy * fy;
        let across = -dx * fy + dy * fx;
        (dx.hypot(dy), across.atan2(along).to_degrees())
    }
}

/// One actor being rendered: its model and the two nodes around the current segment.
pub struct ActorTrack {
    model: Box<dyn MotionModel>,
    samples_per_node: usize,
    sim_rate_hz: f64,
    /// Index of the node at the start of the current segment.
    segment: u64,
    /// Internal samples of the current segment already rendered.
    offset: usize,
    start: Vec<EchoNode>,
    end: Vec<EchoNode>,
    scratch: Vec<Echo>,
    directions: Vec<Vec3>,
    unit: Vec<f64>,
    /// Chunk buffers, echo-major: phase (rad) and amplitude (V) per sample.
    phase: Vec<f64>,
    amplitude: Vec<f64>,
    /// Which echoes have a non-zero amplitude somewhere in the chunk.
    live: Vec<bool>,
    /// The CPU has 256-bit vectors (AVX2): the per-sample loop runs four lanes wide.
    wide_vectors: bool,
}

impl ActorTrack {
    /// A track for `model` with nodes every `samples_per_node` samples of the internal rate `sim_rate_hz`.
    pub fn new(
        model: Box<dyn MotionModel>,
        samples_per_node: usize,
        sim_rate_hz: f64,
        radar: &RadarGeometry,
    ) -> Self {
        let samples_per_node = samples_per_node.max(1);
        let mut track = ActorTrack {
            model,
            samples_per_node,
            sim_rate_hz,
            segment: 0,
            offset: 0,
            start: Vec::new(),
            end: Vec::new(),
            scratch: Vec::new(),
            directions: Vec::new(),
            unit: (0..samples_per_node)
                .map(|i| i as f64 / samples_per_node as f64)
                .collect(),
            phase: Vec::new(),
            amplitude: Vec::new(),
            live: Vec::new(),
            wide_vectors: wide_vectors_available(),
        };
        let mut start = Vec::new();
        let mut end = Vec::new();
        track.evaluate_into(0, radar, &mut start);
        track.evaluate_into(1, radar, &mut end);
        track.start = start;
        track.end = end;
        track
    }

    fn evaluate_into(&mut self, node: u64, radar: &RadarGeometry, out: &mut Vec<EchoNode>) {
        let t_s = (node * self.samples_per_node as u64) as f64 / self.sim_rate_hz;
        self.scratch.clear();
        self.model.echoes(t_s, radar.position_m, &mut self.scratch);
        radar.see_all(&self.scratch, out, &mut self.directions);
    }

    /// The actor's contribution (I, Q) at t = 0, so the front end can start
    /// settled on everything already present when the trial begins.
    pub fn value_at_start(&self, radar: &RadarGeometry) -> (f64, f64) {
        self.start.iter().fold((0.0, 0.0), |(i, q), e| {
            let phase = radar.phase_per_m * e.range_m;
            (
                i + e.amplitude_v * phase.cos(),
                q - e.amplitude_v * phase.sin(),
            )
        })
    }

    /// Adds this actor's contribution to `in_phase` (and `quadrature`, for I/Q) for the next `in_phase.len()` samples.
    ///
    /// In chunks of [`RENDER_CHUNK`] samples, two passes: every echo's phase
    /// and amplitude are written out sample by sample from its node
    /// polynomials (short loops, one node interval each), then each echo is
    /// added over the whole chunk in one long loop, where the sine/cosine
    /// polynomial runs at full vector throughput. The additions into each
    /// sample come in echo order, as they would echo by echo per interval.
    pub fn render(
        &mut self,
        radar: &RadarGeometry,
        in_phase: &mut [f64],
        mut quadrature: Option<&mut [f64]>,
    ) {
        let total = in_phase.len();
        let mut chunk_start = 0;
        while chunk_start < total {
            let len = RENDER_CHUNK.min(total - chunk_start);
            self.expand(radar, len);
            for (echo, &live) in self.live.iter().enumerate() {
                if !live {
                    continue;
                }
                let at = echo * RENDER_CHUNK;
                let samples = Samples {
                    phase: &self.phase[at..at + len],
                    amplitude: &self.amplitude[at..at + len],
                };
                let chunk = chunk_start..chunk_start + len;
                let out_q = quadrature.as_deref_mut().map(|q| &mut q[chunk.clone()]);
                samples.add(&mut in_phase[chunk], out_q, self.wide_vectors);
            }
            chunk_start += len;
        }
    }

    /// Writes the phase and amplitude of every echo for the next `len` samples
    /// into the chunk buffers, moving to the next node at each interval's end.
    fn expand(&mut self, radar: &RadarGeometry, len: usize) {
        let echoes = self.start.len();
        self.phase.resize(echoes * RENDER_CHUNK, 0.0);
        self.amplitude.resize(echoes * RENDER_CHUNK, 0.0);
        self.live.clear();
        self.live.resize(echoes, false);
        let k = radar.phase_per_m;
        let h = self.samples_per_node as f64 / self.sim_rate_hz;
        let mut done = 0;
        while done < len {
            let take = (self.samples_per_node - self.offset).min(len - done);
            let units = &self.unit[self.offset..self.offset + take];
            for (echo, (a, b)) in self.start.iter().zip(&self.end).enumerate() {
                let at = echo * RENDER_CHUNK + done;
                let phase = &mut self.phase[at..at + take];
                let amplitude = &mut self.amplitude[at..at + take];
                let (a0, da) = (a.amplitude_v, b.amplitude_v - a.amplitude_v);
                if a0 == 0.0 && da == 0.0 {
                    phase.fill(0.0);
                    amplitude.fill(0.0);
                    continue;
                }
                self.live[echo] = true;
                // Hermite cubic of the range change over the interval, in u ∈ [0, 1):
                // ΔR(u) = c1 u + c2 u² + c3 u³ with end slopes h·Ṙ, here in radians of phase.
                let delta = b.range_m - a.range_m;
                let (m0, m1) = (h * a.range_rate_mps, h * b.range_rate_mps);
                let c1 = k * m0;
                let c2 = k * (3.0 * delta - 2.0 * m0 - m1);
                let c3 = k * (m0 + m1 - 2.0 * delta);
                let phase0 = reduce_turns(k * a.range_m);
                for ((p, m), &u) in phase.iter_mut().zip(amplitude.iter_mut()).zip(units) {
                    *p = phase0 + u * (c1 + u * (c2 + u * c3));
                    *m = a0 + da * u;
                }
            }
            done += take;
            self.offset += take;
            if self.offset == self.samples_per_node {
                self.offset = 0;
                self.segment += 1;
                std::mem::swap(&mut self.start, &mut self.end);
                let mut end = std::mem::take(&mut self.end);
                self.evaluate_into(self.segment + 1, radar, &mut end);
                self.end = end;
            }
        }
    }
}

/// Internal samples rendered per pass (see [`ActorTrack::render`]): long
/// enough for the vector loop, short enough that an actor's buffers
/// (echoes × 2 × 4 kB) stay in the cache.
const RENDER_CHUNK: usize = 512;

/// Whether [`Samples::add`] may take the AVX2 path on this CPU.
fn wide_vectors_available() -> bool {
    #[cfg(target_arch = "x86_64")]
    {
        std::arch::is_x86_feature_detected!("avx2")
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        false
    }
}

/// Multiplies every node's amplitude by the beam pattern in its direction,
/// on the AVX2 path when `wide` is set (the same operations either way, as
/// [`Samples::add`]; a test compares the two).
fn apply_beam(beam: &Beam, nodes: &mut [EchoNode], directions: &[Vec3], wide: bool) {
    #[inline(always)]
    fn portable(beam: &Beam, nodes: &mut [EchoNode], directions: &[Vec3]) {
        // Four echoes at a time through fixed-size arrays: a node has only a
        // handful of echoes, too few for the loop vectoriser, but a fixed
        // four-lane body is vectorised as a whole. Padding lanes point along
        // boresight and are dropped.
        const LANES: usize = 4;
        for (nodes, directions) in nodes.chunks_mut(LANES).zip(directions.chunks(LANES)) {
            let (mut forward, mut left, mut up) = ([1.0; LANES], [0.0; LANES], [0.0; LANES]);
            for (j, d) in directions.iter().enumerate() {
                (forward[j], left[j], up[j]) = (d[0], d[1], d[2]);
            }
            let mut gains = [0.0; LANES];
            for j in 0..LANES {
                gains[j] = beam.gain(forward[j], left[j], up[j]);
            }
            for (node, gain) in nodes.iter_mut().zip(gains) {
                node.amplitude_v *= gain;
            }
        }
    }
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn avx2(beam: &Beam, nodes: &mut [EchoNode], directions: &[Vec3]) {
        portable(beam, nodes, directions);
    }
    #[cfg(target_arch = "x86_64")]
    if wide {
        // SAFETY: `wide` is only set when the CPU reports AVX2 (`wide_vectors_available`).
        unsafe { avx2(beam, nodes, directions) };
        return;
    }
    let _ = wide;
    portable(beam, nodes, directions);
}

/// One echo over a chunk: its phase (rad) and peak amplitude (V) at every sample.
struct Samples<'a> {
    phase: &'a [f64],
    amplitude: &'a [f64],
}

impl Samples<'_> {
    /// Adds A·cos φ to `out_i` (and −A·sin φ to `out_q`), four lanes wide when `wide` is set.
    ///
    /// Both paths run the same IEEE operations in the same order (AVX2 brings
    /// wider registers, not fused multiply-adds, which would round
    /// differently), so the output is bit-identical whichever runs; a test
    /// checks it.
    fn add(&self, out_i: &mut [f64], out_q: Option<&mut [f64]>, wide: bool) {
        #[cfg(target_arch = "x86_64")]
        if wide {
            // SAFETY: `wide` is only set when the CPU reports AVX2 (`wide_vectors_available`).
            unsafe { self.add_avx2(out_i, out_q) };
            return;
        }
        let _ = wide;
        self.add_portable(out_i, out_q);
    }

    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn add_avx2(&self, out_i: &mut [f64], out_q: Option<&mut [f64]>) {
        self.add_portable(out_i, out_q);
    }

    #[inline(always)]
    fn add_portable(&self, out_i: &mut [f64], out_q: Option<&mut [f64]>) {
        let echo = self.phase.iter().zip(self.amplitude);
        match out_q {
            None => {
                for (o, (&p, &a)) in out_i.iter_mut().zip(echo) {
                    let (_, c) = sin_cos(p);
                    *o += a * c;
                }
            }
            Some(q) => {
                // z = A·e^{−jφ}: an approaching echo (φ falling) turns positive (physics.md §0).
                for ((oi, oq), (&p, &a)) in out_i.iter_mut().zip(q.iter_mut()).zip(echo) {
                    let (s, c) = sin_cos(p);
                    *oi += a * c;
                    *oq -= a * s;
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_beam_pattern_gives_the_same_bits_on_both_paths() {
        if !wide_vectors_available() {
            eprintln!("skipped: this CPU has no AVX2, only the portable path exists here");
            return;
        }
        let beam = Beam::new(80.0, 60.0, -25.0);
        // Seven echoes: one full four-lane group and a padded one, one behind the antenna.
        let directions: Vec<Vec3> = (0..7)
            .map(|i| [2.0 - 0.7 * i as f64, 0.3 * i as f64 - 1.0, 0.1 * i as f64])
            .collect();
        let nodes: Vec<EchoNode> = (0..7)
            .map(|i| EchoNode {
                range_m: 1.0 + i as f64,
                range_rate_mps: 0.0,
                amplitude_v: 1e-3 * (1.0 + i as f64),
            })
            .collect();
        let mut results = Vec::new();
        for wide in [false, true] {
            let mut out = nodes.clone();
            apply_beam(&beam, &mut out, &directions, wide);
            results.push(
                out.iter()
                    .map(|n| n.amplitude_v.to_bits())
                    .collect::<Vec<_>>(),
            );
        }
        assert_eq!(results[0], results[1]);
        // The pattern was applied: each amplitude is the node's times the scalar gain.
        for ((node, d), bits) in nodes.iter().zip(&directions).zip(&results[0]) {
            let expected = node.amplitude_v * beam.gain(d[0], d[1], d[2]);
            assert_eq!(f64::from_bits(*bits), expected);
        }
    }

    #[test]
    fn the_wide_and_the_portable_paths_give_the_same_bits() {
        if !wide_vectors_available() {
            eprintln!("skipped: this CPU has no AVX2, only the portable path exists here");
            return;
        }
        let phase: Vec<f64> = (0..37).map(|i| -40.0 + 2.3 * i as f64).collect();
        let amplitude: Vec<f64> = (0..37).map(|i| 1e-3 * (1.0 + 0.1 * i as f64)).collect();
        let samples = Samples {
            phase: &phase,
            amplitude: &amplitude,
        };
        for iq in [false, true] {
            let mut results = Vec::new();
            for wide in [false, true] {
                let mut i = vec![0.25; phase.len()];
                let mut q = vec![-0.5; phase.len()];
                samples.add(&mut i, iq.then_some(&mut q[..]), wide);
                results.push((i, q));
            }
            let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
            assert_eq!(bits(&results[0].0), bits(&results[1].0), "I, iq {iq}");
            assert_eq!(bits(&results[0].1), bits(&results[1].1), "Q, iq {iq}");
            assert!(results[0].0.iter().any(|&x| x != 0.25));
        }
    }
}
