//! Echoes to mixer output: the per-sample inner loop of the synthesizer.
//!
//! Each actor is evaluated only at its node times (every `samples_per_node`
//! internal samples). At a node, every echo's range R, range rate Ṙ and IF
//! amplitude are computed once in f64. Between nodes the range is a cubic
//! Hermite polynomial through (R, Ṙ) at both ends, so the phase 4πR/λ and its
//! rate (the Doppler) are continuous; the amplitude is linear. The phase at
//! the node is reduced modulo 2π in f64 (exact to ~1e-12 rad for rooms of tens
//! of metres), so the in-segment phase stays small and the fast sine/cosine
//! stays accurate.

use crate::fastmath::sin_cos;
use crate::radar::Beam;
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
        let offset = sub(echo.position_m, self.position_m);
        // Echoes closer than 5 cm would be in the antenna's reactive near field; clamp the range.
        let range_m = dot(offset, offset).sqrt().max(0.05);
        let range_rate_mps = dot(offset, echo.velocity_mps) / range_m;
        let gain = self.beam.gain(
            dot(offset, self.forward),
            dot(offset, self.left),
            dot(offset, self.up),
        );
        EchoNode {
            range_m,
            range_rate_mps,
            amplitude_v: self.amplitude_v_at_1m * echo.amplitude_m * gain / (range_m * range_m),
        }
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
    unit: Vec<f64>,
    phase: Vec<f64>,
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
            unit: (0..samples_per_node)
                .map(|i| i as f64 / samples_per_node as f64)
                .collect(),
            phase: vec![0.0; samples_per_node],
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
        out.clear();
        out.extend(self.scratch.iter().map(|e| radar.see(e)));
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
    pub fn render(
        &mut self,
        radar: &RadarGeometry,
        in_phase: &mut [f64],
        mut quadrature: Option<&mut [f64]>,
    ) {
        let total = in_phase.len();
        let mut done = 0;
        let h = self.samples_per_node as f64 / self.sim_rate_hz;
        while done < total {
            let take = (self.samples_per_node - self.offset).min(total - done);
            let units = &self.unit[self.offset..self.offset + take];
            let phase = &mut self.phase[..take];
            for (a, b) in self.start.iter().zip(&self.end) {
                // Hermite cubic of the range change over the segment, in u ∈ [0, 1):
                // ΔR(u) = c1 u + c2 u² + c3 u³ with end slopes h·Ṙ.
                let delta = b.range_m - a.range_m;
                let (m0, m1) = (h * a.range_rate_mps, h * b.range_rate_mps);
                let c1 = m0;
                let c2 = 3.0 * delta - 2.0 * m0 - m1;
                let c3 = m0 + m1 - 2.0 * delta;
                let k = radar.phase_per_m;
                let phase0 = (k * a.range_m).rem_euclid(std::f64::consts::TAU);
                let (a0, da) = (a.amplitude_v, b.amplitude_v - a.amplitude_v);
                if a0 == 0.0 && da == 0.0 {
                    continue;
                }
                for (p, &u) in phase.iter_mut().zip(units) {
                    *p = phase0 + k * (u * (c1 + u * (c2 + u * c3)));
                }
                let out_i = &mut in_phase[done..done + take];
                match quadrature.as_deref_mut() {
                    None => {
                        for ((o, &p), &u) in out_i.iter_mut().zip(phase.iter()).zip(units) {
                            let (_, c) = sin_cos(p);
                            *o += (a0 + da * u) * c;
                        }
                    }
                    Some(q) => {
                        // z = A·e^{−jφ}: an approaching echo (φ falling) turns positive (physics.md §0).
                        let out_q = &mut q[done..done + take];
                        for (((oi, oq), &p), &u) in out_i
                            .iter_mut()
                            .zip(out_q.iter_mut())
                            .zip(phase.iter())
                            .zip(units)
                        {
                            let (s, c) = sin_cos(p);
                            let amp = a0 + da * u;
                            *oi += amp * c;
                            *oq -= amp * s;
                        }
                    }
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
