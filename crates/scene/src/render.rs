//! Echoes to mixer output: the per-sample inner loop of the synthesizer.
//!
//! Each actor is evaluated only at its node times (every `samples_per_node`
//! internal samples). At a node, every echo's range R, range rate Ṙ and IF
//! amplitude are computed once in f64. Between nodes the range is a cubic
//! Hermite polynomial through (R, Ṙ) at both ends, so the phase 4πR/λ and its
//! rate (the Doppler) are continuous; the amplitude is linear, times sinc x
//! for an echo with a flash (a fan blade), x a Hermite cubic too. The phase
//! at the node is reduced to [−π, π] in f64 (exact to ~1e-12 rad for rooms of
//! tens of metres).
//!
//! The key design decision: no sine or cosine per sample. A cubic phase has a
//! constant third difference, so its phasor is carried from sample to sample
//! by three complex multiplies and set again from the polynomial (one sine
//! and cosine per term) at each node and every `RESYNC_SAMPLES` (128) samples;
//! see [`ActorTrack::render`]. Against the direct formula (a sine and cosine
//! of the cubic at every sample) the difference stays below 1e-9 of the
//! echo's amplitude (tested), far under any ADC step.

use crate::radar::Beam;
use echobench_core::fastmath::{reduce_turns, sin_cos};
use echobench_motion::{dot, sub, Echo, Flash, MotionModel, Vec3, Vibration};

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

    /// Range, range rate and IF amplitude of one echo (amplitude ∝ √σ·g/R²,
    /// docs/reference/radar-physics.md#r4).
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
    /// The echoes' sinc factors at both nodes (`Flash::NONE` for most echoes).
    start_flash: Vec<Flash>,
    end_flash: Vec<Flash>,
    /// The model's vibration rendered per sample, if any, and each echo's
    /// (β, γ) at both nodes: phase excursion β = (4π/λ)·A·(û·D̂) and relative
    /// amplitude excursion γ = −2·A·(û·D̂)/R (the R⁻² law), see [`Vibration`].
    vibration: Option<Vibration>,
    start_swing: Vec<[f64; 2]>,
    end_swing: Vec<[f64; 2]>,
    /// The amplitudes go by a Catmull–Rom cubic through the nodes before the
    /// segment, at both ends and after it: the amplitudes of the node before
    /// (empty in the first segment) and the whole node after are kept.
    cubic: bool,
    before_amplitude: Vec<f64>,
    after: Vec<EchoNode>,
    after_flash: Vec<Flash>,
    after_swing: Vec<[f64; 2]>,
    /// (cos, sin) of ωt + ψ at the last resynchronisation, and of k·ω/f_sim
    /// for k = 0…`RESYNC_SAMPLES` (exact, from the sine of each angle).
    vibration_phasor: [f64; 2],
    vibration_turns: Vec<[f64; 2]>,
    /// sin(ωt + ψ) over the current stretch of samples (scratch).
    sines: Vec<f64>,
    scratch: Vec<Echo>,
    directions: Vec<Vec3>,
    /// u = i / samples_per_node for every sample i of a segment.
    unit: Vec<f64>,
    /// The current segment's echoes with a non-zero amplitude, four to a group,
    /// with their polynomials and running phasors; valid when `groups_ready`.
    groups: Vec<EchoGroup>,
    groups_ready: bool,
    /// The CPU has 256-bit vectors (AVX2): the per-sample loop runs four lanes wide.
    wide_vectors: bool,
}

impl ActorTrack {
    /// A track for `model` with nodes every `samples_per_node` samples of the
    /// internal rate `sim_rate_hz`; with `cubic`, the amplitudes go by a cubic
    /// through four nodes (see [`MotionModel::cubic_amplitude_node_rate_hz`]).
    pub fn new(
        model: Box<dyn MotionModel>,
        samples_per_node: usize,
        sim_rate_hz: f64,
        radar: &RadarGeometry,
        cubic: bool,
    ) -> Self {
        let samples_per_node = samples_per_node.max(1);
        let vibration = model.vibration();
        let step_rad = vibration.map_or(0.0, |v| v.angular_rate_rad_s) / sim_rate_hz;
        let vibration_turns = (0..=RESYNC_SAMPLES)
            .map(|k| {
                let (sin, cos) = sin_cos(reduce_turns(k as f64 * step_rad));
                [cos, sin]
            })
            .collect();
        let mut track = ActorTrack {
            model,
            samples_per_node,
            sim_rate_hz,
            segment: 0,
            offset: 0,
            start: Vec::new(),
            end: Vec::new(),
            start_flash: Vec::new(),
            end_flash: Vec::new(),
            vibration,
            start_swing: Vec::new(),
            end_swing: Vec::new(),
            cubic,
            before_amplitude: Vec::new(),
            after: Vec::new(),
            after_flash: Vec::new(),
            after_swing: Vec::new(),
            vibration_phasor: [1.0, 0.0],
            vibration_turns,
            sines: vec![0.0; RESYNC_SAMPLES],
            scratch: Vec::new(),
            directions: Vec::new(),
            unit: (0..samples_per_node)
                .map(|i| i as f64 / samples_per_node as f64)
                .collect(),
            groups: Vec::new(),
            groups_ready: false,
            wide_vectors: wide_vectors_available(),
        };
        let (mut start, mut start_flash, mut start_swing) = (Vec::new(), Vec::new(), Vec::new());
        let (mut end, mut end_flash, mut end_swing) = (Vec::new(), Vec::new(), Vec::new());
        track.evaluate_into(0, radar, &mut start, &mut start_flash, &mut start_swing);
        track.evaluate_into(1, radar, &mut end, &mut end_flash, &mut end_swing);
        (track.start, track.start_flash, track.start_swing) = (start, start_flash, start_swing);
        (track.end, track.end_flash, track.end_swing) = (end, end_flash, end_swing);
        if cubic {
            let (mut after, mut after_flash, mut after_swing) =
                (Vec::new(), Vec::new(), Vec::new());
            track.evaluate_into(2, radar, &mut after, &mut after_flash, &mut after_swing);
            (track.after, track.after_flash, track.after_swing) = (after, after_flash, after_swing);
        }
        track
    }

    fn evaluate_into(
        &mut self,
        node: u64,
        radar: &RadarGeometry,
        out: &mut Vec<EchoNode>,
        flashes: &mut Vec<Flash>,
        swings: &mut Vec<[f64; 2]>,
    ) {
        let t_s = (node * self.samples_per_node as u64) as f64 / self.sim_rate_hz;
        self.scratch.clear();
        flashes.clear();
        self.model
            .echoes_with_flashes(t_s, radar.position_m, &mut self.scratch, flashes);
        radar.see_all(&self.scratch, out, &mut self.directions);
        swings.clear();
        if let Some(vibration) = self.vibration {
            // û·D̂·A is the range change per unit of sin(ωt + ψ), û the unit line of sight.
            let amplitude_m = self.model.vibration_amplitude_m(t_s);
            for (echo, node) in self.scratch.iter().zip(out.iter()) {
                let along = dot(sub(echo.position_m, radar.position_m), vibration.direction);
                let range_change_m = amplitude_m * along / node.range_m;
                swings.push([
                    radar.phase_per_m * range_change_m,
                    -2.0 * range_change_m / node.range_m,
                ]);
            }
        }
    }

    /// ωt + ψ of the vibration at internal sample `index`, reduced to [−π, π].
    fn vibration_angle(&self, index: u64) -> f64 {
        self.vibration.map_or(0.0, |v| {
            reduce_turns(v.angular_rate_rad_s * (index as f64 / self.sim_rate_hz) + v.phase_rad)
        })
    }

    /// The contribution (I, Q) `back` samples before t = 0, by the first node
    /// interval's polynomials continued backwards and evaluated directly (a
    /// sine and cosine per echo): what an interpolator weighing samples before
    /// the start reads there ([`crate::upsample`]). Call it before rendering.
    pub(crate) fn value_before_start(&self, radar: &RadarGeometry, back: usize) -> (f64, f64) {
        let mut groups = Vec::new();
        self.segment_groups(radar, &mut groups);
        let u = -(back as f64) / self.samples_per_node as f64;
        let vibration_sin = self.vibration.map_or(0.0, |v| {
            let t_s = -(back as f64) / self.sim_rate_hz;
            (v.angular_rate_rad_s * t_s + v.phase_rad).sin()
        });
        let (mut i, mut q) = (0.0, 0.0);
        for group in &groups {
            for lane in 0..group.count {
                let c = |p: &Polynomials, j: usize| p.coefficients[j][lane];
                let cubic = |p: &Polynomials| c(p, 0) + u * (c(p, 1) + u * (c(p, 2) + u * c(p, 3)));
                let mut amplitude = group.a0[lane]
                    + u * (group.da[lane] + u * (group.a2[lane] + u * group.a3[lane]));
                if group.flash {
                    let x = cubic(&group.argument);
                    amplitude *= sinc_of(x.sin(), x);
                }
                let mut phase = cubic(&group.phase);
                if group.vibrating {
                    phase += (group.b0[lane] + group.db[lane] * u) * vibration_sin;
                    amplitude *= 1.0 + (group.g0[lane] + group.dg[lane] * u) * vibration_sin;
                }
                i += amplitude * phase.cos();
                q -= amplitude * phase.sin();
            }
        }
        (i, q)
    }

    /// The actor's contribution (I, Q) at t = 0, so the front end can start
    /// settled on everything already present when the trial begins.
    pub fn value_at_start(&self, radar: &RadarGeometry) -> (f64, f64) {
        let vibration_sin = sin_cos(self.vibration_angle(0)).0;
        let swings = self.start_swing.iter().chain(std::iter::repeat(&[0.0; 2]));
        self.start.iter().zip(&self.start_flash).zip(swings).fold(
            (0.0, 0.0),
            |(i, q), ((e, f), [beta, gamma])| {
                let phase = radar.phase_per_m * e.range_m + beta * vibration_sin;
                let amplitude =
                    e.amplitude_v * sinc(f.argument_rad) * (1.0 + gamma * vibration_sin);
                (i + amplitude * phase.cos(), q - amplitude * phase.sin())
            },
        )
    }

    /// Adds this actor's contribution to `in_phase` (and `quadrature`, for I/Q) for the next `in_phase.len()` samples.
    ///
    /// Node interval by node interval: each echo's range is the cubic Hermite
    /// polynomial through both nodes, so its phase φ is a cubic in the sample
    /// index, whose third difference is constant. The phasor e^{−jφ} is then
    /// advanced by three complex multiplies per sample (e^{−jφ} by e^{−jΔφ},
    /// that by e^{−jΔ²φ}, that by the constant e^{−jΔ³φ}) instead of a sine
    /// and cosine, and set again from the polynomial with a sine and cosine
    /// at every node and every `RESYNC_SAMPLES` (128) samples within a long
    /// interval, so the rounding of the recurrence cannot grow (tested against
    /// the direct formula). The resynchronisation points depend only on the node grid, so
    /// the output is the same for any block split. An echo with a flash
    /// (sinc factor) also advances e^{jx} of its argument the same way and
    /// multiplies its amplitude by sin x / x.
    ///
    /// Echoes go four at a time (one per lane), and each sample receives the
    /// echoes' contributions in echo order.
    pub fn render(
        &mut self,
        radar: &RadarGeometry,
        in_phase: &mut [f64],
        mut quadrature: Option<&mut [f64]>,
    ) {
        let total = in_phase.len();
        let mut done = 0;
        while done < total {
            let resync = self.offset.is_multiple_of(RESYNC_SAMPLES);
            let to_resync = RESYNC_SAMPLES - self.offset % RESYNC_SAMPLES;
            let take = (self.samples_per_node - self.offset)
                .min(total - done)
                .min(to_resync);
            if !self.groups_ready {
                let mut groups = std::mem::take(&mut self.groups);
                self.segment_groups(radar, &mut groups);
                self.groups = groups;
                self.groups_ready = true;
            }
            let units = &self.unit[self.offset..self.offset + take];
            let first = self.offset as f64;
            let out_i = &mut in_phase[done..done + take];
            let mut out_q = quadrature.as_deref_mut().map(|q| &mut q[done..done + take]);
            // sin(ωt + ψ) of the vibration at each sample: sin(α + kθ) from the
            // angle α at the last resync and the table of kθ, θ = ω/f_sim (no
            // chain from sample to sample, so the loop vectorises).
            if resync && self.vibration.is_some() {
                let index = self.segment * self.samples_per_node as u64 + self.offset as u64;
                let (sin, cos) = sin_cos(self.vibration_angle(index));
                self.vibration_phasor = [cos, sin];
            }
            let sines = &mut self.sines[..if self.vibration.is_some() { take } else { 0 }];
            if !sines.is_empty() {
                let since = self.offset % RESYNC_SAMPLES;
                let [cos, sin] = self.vibration_phasor;
                for (value, turn) in sines.iter_mut().zip(&self.vibration_turns[since..]) {
                    *value = sin * turn[0] + cos * turn[1];
                }
            }
            for group in &mut self.groups {
                if resync {
                    group.resync(first, units[0], self.wide_vectors);
                }
                let out_q = out_q.as_deref_mut();
                group.add(units, sines, out_i, out_q, self.wide_vectors);
            }
            done += take;
            self.offset += take;
            if self.offset == self.samples_per_node {
                self.next_node(radar);
            }
        }
    }

    /// Moves to the next node interval: its start is the old end, its end is
    /// evaluated (or, with cubic amplitudes, is the old node after, and the
    /// new node after is evaluated).
    fn next_node(&mut self, radar: &RadarGeometry) {
        self.offset = 0;
        self.segment += 1;
        if self.cubic {
            self.before_amplitude.clear();
            (self.before_amplitude).extend(self.start.iter().map(|e| e.amplitude_v));
        }
        std::mem::swap(&mut self.start, &mut self.end);
        std::mem::swap(&mut self.start_flash, &mut self.end_flash);
        std::mem::swap(&mut self.start_swing, &mut self.end_swing);
        if self.cubic {
            std::mem::swap(&mut self.end, &mut self.after);
            std::mem::swap(&mut self.end_flash, &mut self.after_flash);
            std::mem::swap(&mut self.end_swing, &mut self.after_swing);
            let mut after = std::mem::take(&mut self.after);
            let mut after_flash = std::mem::take(&mut self.after_flash);
            let mut after_swing = std::mem::take(&mut self.after_swing);
            self.evaluate_into(
                self.segment + 2,
                radar,
                &mut after,
                &mut after_flash,
                &mut after_swing,
            );
            (self.after, self.after_flash, self.after_swing) = (after, after_flash, after_swing);
            self.groups_ready = false;
            return;
        }
        let mut end = std::mem::take(&mut self.end);
        let mut end_flash = std::mem::take(&mut self.end_flash);
        let mut end_swing = std::mem::take(&mut self.end_swing);
        self.evaluate_into(
            self.segment + 1,
            radar,
            &mut end,
            &mut end_flash,
            &mut end_swing,
        );
        (self.end, self.end_flash, self.end_swing) = (end, end_flash, end_swing);
        self.groups_ready = false;
    }

    /// The polynomials of the current segment's echoes with a non-zero
    /// amplitude, in echo order, four to a group.
    fn segment_groups(&self, radar: &RadarGeometry, groups: &mut Vec<EchoGroup>) {
        let k = radar.phase_per_m;
        let h = self.samples_per_node as f64 / self.sim_rate_hz;
        let step = 1.0 / self.samples_per_node as f64;
        // The groups of the last interval are written over (their unused lanes
        // keep stale but finite values, which are computed and never added).
        let mut used = 0;
        let echoes = self.start.iter().zip(&self.end);
        let flashes = self.start_flash.iter().zip(&self.end_flash);
        let vibrating = self.vibration.is_some();
        for (index, ((a, b), (fa, fb))) in echoes.zip(flashes).enumerate() {
            let (a0, da) = (a.amplitude_v, b.amplitude_v - a.amplitude_v);
            // Amplitude a0 + a1 u + a2 u² + a3 u³: a line, or the Hermite cubic
            // with slopes (A₊ − A₋)/2 per node interval (Catmull–Rom; one-sided,
            // (−3A₀ + 4A₁ − A₂)/2, in the first interval).
            let [a1, a2, a3] = if self.cubic {
                let after = self.after[index].amplitude_v;
                let m0 = match self.before_amplitude.get(index) {
                    Some(before) => 0.5 * (b.amplitude_v - before),
                    None => 0.5 * (4.0 * b.amplitude_v - 3.0 * a0 - after),
                };
                let m1 = 0.5 * (after - a0);
                [m0, 3.0 * da - 2.0 * m0 - m1, m0 + m1 - 2.0 * da]
            } else {
                [da, 0.0, 0.0]
            };
            if a0 == 0.0 && a1 == 0.0 && a2 == 0.0 && a3 == 0.0 {
                continue;
            }
            if used == 0 || groups[used - 1].count == LANES {
                if groups.len() == used {
                    groups.push(EchoGroup::default());
                }
                (groups[used].count, groups[used].flash) = (0, false);
                groups[used].cubic = self.cubic;
                groups[used].vibrating = vibrating;
                used += 1;
            }
            let group = &mut groups[used - 1];
            let lane = group.count;
            group.count += 1;
            // Hermite cubic of the range change over the interval, in u ∈ [0, 1):
            // ΔR(u) = c1 u + c2 u² + c3 u³ with end slopes h·Ṙ, here in radians of phase.
            let delta = b.range_m - a.range_m;
            let (m0, m1) = (h * a.range_rate_mps, h * b.range_rate_mps);
            let phase = Cubic {
                c0: reduce_turns(k * a.range_m),
                c1: k * m0,
                c2: k * (3.0 * delta - 2.0 * m0 - m1),
                c3: k * (m0 + m1 - 2.0 * delta),
            };
            group.phase.set(lane, &phase, step);
            group.a0[lane] = a0;
            group.da[lane] = a1;
            group.a2[lane] = a2;
            group.a3[lane] = a3;
            if vibrating {
                let ([b0, g0], [b1, g1]) = (self.start_swing[index], self.end_swing[index]);
                (group.b0[lane], group.db[lane]) = (b0, b1 - b0);
                (group.g0[lane], group.dg[lane]) = (g0, g1 - g0);
            }
            if *fa != Flash::NONE || *fb != Flash::NONE {
                group.flash = true;
                let delta = fb.argument_rad - fa.argument_rad;
                let (m0, m1) = (h * fa.argument_rate_rad_s, h * fb.argument_rate_rad_s);
                let argument = Cubic {
                    c0: fa.argument_rad,
                    c1: m0,
                    c2: 3.0 * delta - 2.0 * m0 - m1,
                    c3: m0 + m1 - 2.0 * delta,
                };
                group.argument.set(lane, &argument, step);
            } else {
                // No flash: x = 0, sinc x = 1, should the group have a flash in another lane.
                let none = Cubic {
                    c0: 0.0,
                    c1: 0.0,
                    c2: 0.0,
                    c3: 0.0,
                };
                group.argument.set(lane, &none, step);
            }
        }
        groups.truncate(used);
    }
}

/// Internal samples after which a running phasor is set again from its
/// polynomial within a long node interval (see [`ActorTrack::render`]). A
/// ratio that barely turns (e^{−jΔ³φ} is 1 to within 1e-10) is multiplied in
/// with the same rounding at every step, so the magnitude error of the phasor
/// can grow as n³·ε/6 after n steps: 128 steps bound it by 4e-11 (measured
/// 1.7e-9 after 512 steps in the test below), at one resync (four sines and
/// cosines per group of echoes) per 128 samples.
const RESYNC_SAMPLES: usize = 128;

/// Echoes per group: four f64 lanes fill a 256-bit register.
const LANES: usize = 4;

/// sin x / x (1 at 0), as [`EchoGroup::add`] evaluates it per sample.
#[inline(always)]
fn sinc_of(sin_x: f64, x: f64) -> f64 {
    // Below 1e-4 rad, 1 − x²/6 is exact to 1e-18 and avoids 0/0. Both are
    // computed and one is selected (no branch), so four lanes go as one vector.
    let near_zero = 1.0 - x * x / 6.0;
    let quotient = sin_x / x;
    if x.abs() < 1e-4 {
        near_zero
    } else {
        quotient
    }
}

/// (sin x, cos x) for |x| ≤ 0.25 ([`echobench_motion::MAX_VIBRATION_PHASE_RAD`]) by
/// their Taylor series to x⁷ and x⁸: the first terms left out, x⁹/9! and x¹⁰/10!,
/// are below 1.1e-11 and 2.6e-13 there (docs/reference/radar-physics.md#r11).
#[inline(always)]
fn small_sin_cos(x: f64) -> (f64, f64) {
    let x2 = x * x;
    let sin = x * (1.0 + x2 * (-1.0 / 6.0 + x2 * (1.0 / 120.0 + x2 * (-1.0 / 5040.0))));
    let cos = 1.0 + x2 * (-0.5 + x2 * (1.0 / 24.0 + x2 * (-1.0 / 720.0 + x2 * (1.0 / 40_320.0))));
    (sin, cos)
}

/// sin x / x (1 at 0).
fn sinc(x: f64) -> f64 {
    sinc_of(sin_cos(x).0, x)
}

/// c0 + c1 u + c2 u² + c3 u³.
struct Cubic {
    c0: f64,
    c1: f64,
    c2: f64,
    c3: f64,
}

/// A cubic in u per lane, and the phasor e^{∓jθ} of its value advanced by recurrence.
#[derive(Default, Clone)]
struct Polynomials {
    /// Coefficients of u⁰…u³ per lane.
    coefficients: [[f64; LANES]; 4],
    /// The same cubic in the sample index n (u = n·step): a1 = c1·step, a2 = c2·step², a3 = c3·step³.
    per_sample: [[f64; LANES]; 3],
    /// The running phasor and its first and second ratios (real, imaginary),
    /// and the constant third ratio.
    value: [[f64; LANES]; 2],
    first: [[f64; LANES]; 2],
    second: [[f64; LANES]; 2],
    third: [[f64; LANES]; 2],
}

impl Polynomials {
    fn set(&mut self, lane: usize, cubic: &Cubic, step: f64) {
        self.coefficients[0][lane] = cubic.c0;
        self.coefficients[1][lane] = cubic.c1;
        self.coefficients[2][lane] = cubic.c2;
        self.coefficients[3][lane] = cubic.c3;
        self.per_sample[0][lane] = cubic.c1 * step;
        self.per_sample[1][lane] = cubic.c2 * step * step;
        self.per_sample[2][lane] = cubic.c3 * step * step * step;
    }

    /// Sets the phasors at sample n (`u` = n·step) from the polynomial: e^{sign·jθ(n)}
    /// and the ratios e^{sign·jΔθ(n)}, e^{sign·jΔ²θ(n)}, e^{sign·jΔ³θ}.
    #[inline(always)]
    fn resync(&mut self, n: f64, u: f64, sign: f64) {
        let [c0, c1, c2, c3] = &self.coefficients;
        let [a1, a2, a3] = &self.per_sample;
        let mut angles = [[0.0; LANES]; 4];
        for lane in 0..LANES {
            // θ(n) = c0 + u(c1 + u(c2 + u c3)) as the direct formula has it; the
            // differences of a0 + a1 n + a2 n² + a3 n³ at n:
            angles[0][lane] = c0[lane] + u * (c1[lane] + u * (c2[lane] + u * c3[lane]));
            angles[1][lane] =
                a1[lane] + a2[lane] * (2.0 * n + 1.0) + a3[lane] * (3.0 * n * n + 3.0 * n + 1.0);
            angles[2][lane] = 2.0 * a2[lane] + a3[lane] * (6.0 * n + 6.0);
            angles[3][lane] = 6.0 * a3[lane];
        }
        let mut phasors = [[[0.0; LANES]; 2]; 4];
        for (angles, phasor) in angles.iter().zip(phasors.iter_mut()) {
            for lane in 0..LANES {
                let (s, c) = sin_cos(angles[lane]);
                phasor[0][lane] = c;
                phasor[1][lane] = sign * s;
            }
        }
        [self.value, self.first, self.second, self.third] = phasors;
    }

    /// Moves the phasors one sample on: value ·= first, first ·= second, second ·= third.
    #[inline(always)]
    fn advance(&mut self) {
        complex_multiply(&mut self.value, &self.first);
        complex_multiply(&mut self.first, &self.second);
        complex_multiply(&mut self.second, &self.third);
    }
}

/// `a ·= b` lane by lane, (re, im) pairs; plain multiplies and adds (no fused multiply-add).
#[inline(always)]
fn complex_multiply(a: &mut [[f64; LANES]; 2], b: &[[f64; LANES]; 2]) {
    for lane in 0..LANES {
        let (re, im) = (a[0][lane], a[1][lane]);
        a[0][lane] = re * b[0][lane] - im * b[1][lane];
        a[1][lane] = re * b[1][lane] + im * b[0][lane];
    }
}

/// Up to four echoes of one node interval: amplitude a0 + da·u (+ a2·u² + a3·u³
/// when `cubic`), phase and
/// (for a blade) flash argument as cubics in u, with their running phasors.
/// Lanes past `count` are never added.
#[derive(Default, Clone)]
struct EchoGroup {
    count: usize,
    a0: [f64; LANES],
    da: [f64; LANES],
    cubic: bool,
    a2: [f64; LANES],
    a3: [f64; LANES],
    /// Round-trip phase φ; the phasor is e^{−jφ}.
    phase: Polynomials,
    /// Whether any lane has a flash; `argument` then holds x, with phasor e^{jx}.
    flash: bool,
    argument: Polynomials,
    /// Whether the track has a vibration: the phase then gains β·sin(ωt + ψ)
    /// per sample, β = b0 + db·u, and the amplitude a factor 1 + γ·sin(ωt + ψ),
    /// γ = g0 + dg·u.
    vibrating: bool,
    b0: [f64; LANES],
    db: [f64; LANES],
    g0: [f64; LANES],
    dg: [f64; LANES],
}

impl EchoGroup {
    /// Sets the phasors from the polynomials at sample `n` of the interval (u = `u`),
    /// on the AVX2 path when `wide` is set (same operations, as [`EchoGroup::add`]).
    fn resync(&mut self, n: f64, u: f64, wide: bool) {
        #[inline(always)]
        fn portable(group: &mut EchoGroup, n: f64, u: f64) {
            group.phase.resync(n, u, -1.0);
            if group.flash {
                group.argument.resync(n, u, 1.0);
            }
        }
        #[cfg(target_arch = "x86_64")]
        #[target_feature(enable = "avx2")]
        unsafe fn avx2(group: &mut EchoGroup, n: f64, u: f64) {
            portable(group, n, u);
        }
        #[cfg(target_arch = "x86_64")]
        if wide {
            // SAFETY: `wide` is only set when the CPU reports AVX2 (`wide_vectors_available`).
            unsafe { avx2(self, n, u) };
            return;
        }
        let _ = wide;
        portable(self, n, u);
    }

    /// Adds A·cos φ to `out_i` (and −A·sin φ to `out_q`) over `units`, four
    /// lanes wide when `wide` is set, advancing the phasors.
    ///
    /// Both paths run the same IEEE operations in the same order (AVX2 brings
    /// wider registers, not fused multiply-adds, which would round
    /// differently), so the output is bit-identical whichever runs; a test
    /// checks it.
    /// `sines` holds sin(ωt + ψ) of the track's vibration at each sample (empty without one).
    fn add(
        &mut self,
        units: &[f64],
        sines: &[f64],
        out_i: &mut [f64],
        out_q: Option<&mut [f64]>,
        wide: bool,
    ) {
        #[cfg(target_arch = "x86_64")]
        if wide {
            // SAFETY: `wide` is only set when the CPU reports AVX2 (`wide_vectors_available`).
            unsafe { self.add_avx2(units, sines, out_i, out_q) };
            return;
        }
        let _ = wide;
        self.add_portable(units, sines, out_i, out_q);
    }

    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn add_avx2(
        &mut self,
        units: &[f64],
        sines: &[f64],
        out_i: &mut [f64],
        out_q: Option<&mut [f64]>,
    ) {
        self.add_portable(units, sines, out_i, out_q);
    }

    #[inline(always)]
    fn add_portable(
        &mut self,
        units: &[f64],
        sines: &[f64],
        out_i: &mut [f64],
        out_q: Option<&mut [f64]>,
    ) {
        match (self.vibrating, self.cubic) {
            (false, false) => self.add_kind::<false, false>(units, sines, out_i, out_q),
            (false, true) => self.add_kind::<false, true>(units, sines, out_i, out_q),
            (true, false) => self.add_kind::<true, false>(units, sines, out_i, out_q),
            (true, true) => self.add_kind::<true, true>(units, sines, out_i, out_q),
        }
    }

    #[inline(always)]
    fn add_kind<const VIBRATION: bool, const CUBIC: bool>(
        &mut self,
        units: &[f64],
        sines: &[f64],
        out_i: &mut [f64],
        out_q: Option<&mut [f64]>,
    ) {
        match (out_q, self.flash) {
            (None, false) => {
                self.add_lanes::<false, false, VIBRATION, CUBIC>(units, sines, out_i, &mut [])
            }
            (None, true) => {
                self.add_lanes::<false, true, VIBRATION, CUBIC>(units, sines, out_i, &mut [])
            }
            (Some(q), false) => {
                self.add_lanes::<true, false, VIBRATION, CUBIC>(units, sines, out_i, q)
            }
            (Some(q), true) => {
                self.add_lanes::<true, true, VIBRATION, CUBIC>(units, sines, out_i, q)
            }
        }
    }

    // Lane loops index several fixed arrays at once; LLVM turns each into one vector operation.
    #[allow(clippy::needless_range_loop)]
    #[inline(always)]
    fn add_lanes<const IQ: bool, const FLASH: bool, const VIBRATION: bool, const CUBIC: bool>(
        &mut self,
        units: &[f64],
        sines: &[f64],
        out_i: &mut [f64],
        out_q: &mut [f64],
    ) {
        let count = self.count;
        for (n, &u) in units.iter().enumerate() {
            let mut amplitude = [0.0; LANES];
            for lane in 0..LANES {
                amplitude[lane] = if CUBIC {
                    self.a0[lane] + u * (self.da[lane] + u * (self.a2[lane] + u * self.a3[lane]))
                } else {
                    self.a0[lane] + self.da[lane] * u
                };
            }
            if FLASH {
                let x = &self.argument.coefficients;
                for lane in 0..LANES {
                    let argument =
                        x[0][lane] + u * (x[1][lane] + u * (x[2][lane] + u * x[3][lane]));
                    amplitude[lane] *= sinc_of(self.argument.value[1][lane], argument);
                }
                self.argument.advance();
            }
            let mut i = [0.0; LANES];
            let mut q = [0.0; LANES];
            let mut phasor = self.phase.value;
            if VIBRATION {
                // e^{−jφ}·e^{−jx}, x = β·sin(ωt + ψ), |x| ≤ MAX_VIBRATION_PHASE_RAD.
                let sine = sines[n];
                for lane in 0..LANES {
                    amplitude[lane] *= 1.0 + (self.g0[lane] + self.dg[lane] * u) * sine;
                    let x = (self.b0[lane] + self.db[lane] * u) * sine;
                    let (sin_x, cos_x) = small_sin_cos(x);
                    let (re, im) = (phasor[0][lane], phasor[1][lane]);
                    phasor[0][lane] = re * cos_x + im * sin_x;
                    phasor[1][lane] = im * cos_x - re * sin_x;
                }
            }
            for lane in 0..LANES {
                // z = A·e^{−jφ}: an approaching echo (φ falling) turns positive
                // (docs/reference/radar-physics.md#r1).
                i[lane] = amplitude[lane] * phasor[0][lane];
                q[lane] = amplitude[lane] * phasor[1][lane];
            }
            self.phase.advance();
            for &contribution in &i[..count] {
                out_i[n] += contribution;
            }
            if IQ {
                for &contribution in &q[..count] {
                    out_q[n] += contribution;
                }
            }
        }
    }
}

/// Whether [`EchoGroup::add`] may take the AVX2 path on this CPU.
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
/// [`EchoGroup::add`]; a test compares the two).
fn apply_beam(beam: &Beam, nodes: &mut [EchoNode], directions: &[Vec3], wide: bool) {
    #[inline(always)]
    fn portable(beam: &Beam, nodes: &mut [EchoNode], directions: &[Vec3]) {
        // Four echoes at a time through fixed-size arrays: a node has only a
        // handful of echoes, too few for the loop vectoriser, but a fixed
        // four-lane body is vectorised as a whole. Padding lanes point along
        // boresight and are dropped.
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

    use crate::radar::wavelength_m;
    use echobench_motion::fan::{Fan, FanParams};
    use echobench_motion::reflector::{Reflector, ReflectorParams};

    /// The direct formula the recurrence replaces (the renderer before it):
    /// at every sample a sine and cosine of the phase cubic, amplitude
    /// a0 + da·u, times sin x / x of the argument cubic for a flash. Same node
    /// walk and polynomials as [`ActorTrack::render`].
    fn render_direct(
        track: &mut ActorTrack,
        radar: &RadarGeometry,
        out_i: &mut [f64],
        out_q: &mut [f64],
    ) {
        for (i, q) in out_i.iter_mut().zip(out_q.iter_mut()) {
            let mut groups = Vec::new();
            track.segment_groups(radar, &mut groups);
            let u = track.unit[track.offset];
            let index = track.segment * track.samples_per_node as u64 + track.offset as u64;
            let vibration_sin = track.vibration_angle(index).sin();
            for group in &groups {
                for lane in 0..group.count {
                    let c = |p: &Polynomials, j: usize| p.coefficients[j][lane];
                    let cubic =
                        |p: &Polynomials| c(p, 0) + u * (c(p, 1) + u * (c(p, 2) + u * c(p, 3)));
                    let mut amplitude = if group.cubic {
                        group.a0[lane]
                            + u * (group.da[lane] + u * (group.a2[lane] + u * group.a3[lane]))
                    } else {
                        group.a0[lane] + group.da[lane] * u
                    };
                    if group.flash {
                        let x = cubic(&group.argument);
                        amplitude *= sinc_of(sin_cos(x).0, x);
                    }
                    let mut phase = cubic(&group.phase);
                    if group.vibrating {
                        phase += (group.b0[lane] + group.db[lane] * u) * vibration_sin;
                        amplitude *= 1.0 + (group.g0[lane] + group.dg[lane] * u) * vibration_sin;
                    }
                    let (sin, cos) = sin_cos(phase);
                    *i += amplitude * cos;
                    *q -= amplitude * sin;
                }
            }
            track.offset += 1;
            if track.offset == track.samples_per_node {
                track.next_node(radar);
            }
        }
    }

    fn radar(carrier_hz: f64) -> RadarGeometry {
        RadarGeometry::new(
            [0.0, 0.0, 1.0],
            0.0,
            0.0,
            Beam::new(80.0, 60.0, -25.0),
            1e-3,
            wavelength_m(carrier_hz),
        )
    }

    /// A fan 3 m in front of the radar at 24.125 GHz, turning 20 rev/s, its hub humming.
    fn fan(carrier_hz: f64) -> Box<dyn MotionModel> {
        let params = FanParams {
            mains_vibration_m: 1e-5,
            imbalance_whirl_m: 1e-5,
            blade_tilt_rad: 0.1,
            initial_angle_rad: 0.4,
            hub_rcs_m2: 0.02,
            ..FanParams::rotor([3.0, 0.5, 1.2], [-0.9, 0.3, 0.1], 3, 0.03, 0.15, 20.0, 0.01)
        };
        Box::new(Fan::new(params, wavelength_m(carrier_hz)).unwrap())
    }

    /// Three reflectors shaken fast (large phase rates and accelerations), one still.
    fn shaken(count: usize) -> Vec<Box<dyn MotionModel>> {
        (0..count)
            .map(|k| -> Box<dyn MotionModel> {
                let params = ReflectorParams {
                    shaker_amplitude_m: 0.004 * (k % 3) as f64,
                    shaker_frequency_hz: 17.0 + 5.0 * k as f64,
                    shaker_direction: [1.0, 0.2 * k as f64, 0.1],
                    shaker_phase_rad: 0.3 * k as f64,
                    speed_mps: 1.5,
                    travel_direction: [-1.0, 0.3, 0.0],
                    move_stop_s: f64::INFINITY,
                    ..ReflectorParams::stationary([2.0 + k as f64, 0.3 * k as f64, 1.0], 0.5)
                };
                Box::new(Reflector::new(params).unwrap())
            })
            .collect()
    }

    /// How a test renders: node spacing, internal rate, length and block size.
    #[derive(Clone, Copy)]
    struct Run {
        samples_per_node: usize,
        sim_rate_hz: f64,
        samples: usize,
        block: usize,
    }

    type Models = Vec<Box<dyn MotionModel>>;

    /// Renders `models` as tracks in blocks through the recurrence (`direct`:
    /// false) or the direct formula; returns I and Q.
    fn render_models(
        models: Models,
        radar: &RadarGeometry,
        run: &Run,
        direct: bool,
        wide: bool,
    ) -> (Vec<f64>, Vec<f64>) {
        render_models_with(models, radar, run, direct, wide, false)
    }

    /// [`render_models`] with the amplitudes by cubics (`cubic`) or lines.
    fn render_models_with(
        models: Models,
        radar: &RadarGeometry,
        run: &Run,
        direct: bool,
        wide: bool,
        cubic: bool,
    ) -> (Vec<f64>, Vec<f64>) {
        let Run {
            samples_per_node,
            sim_rate_hz,
            samples,
            block,
        } = *run;
        let mut tracks: Vec<ActorTrack> = models
            .into_iter()
            .map(|m| ActorTrack::new(m, samples_per_node, sim_rate_hz, radar, cubic))
            .collect();
        let (mut i, mut q) = (vec![0.0; samples], vec![0.0; samples]);
        for track in &mut tracks {
            track.wide_vectors = wide;
            let mut at = 0;
            while at < samples {
                let end = (at + block).min(samples);
                if direct {
                    render_direct(track, radar, &mut i[at..end], &mut q[at..end]);
                } else {
                    track.render(radar, &mut i[at..end], Some(&mut q[at..end]));
                }
                at = end;
            }
        }
        (i, q)
    }

    #[test]
    fn the_recurrence_stays_within_its_tolerance_of_the_direct_formula() {
        // Stated tolerance: |recurrence − direct| ≤ 1e-9 × the largest |I| or |Q|
        // of the trial, at every sample of long trials: short node intervals (the
        // fan's), intervals longer than the resync spacing (5000 samples, so
        // the phasors run 128 steps between resyncs) and a flash.
        let r = radar(24.125e9);
        let cases: Vec<(&str, Models, usize, usize)> = vec![
            ("fan", vec![fan(24.125e9)], 37, 400_000),
            ("shaken, short intervals", shaken(7), 23, 200_000),
            ("shaken, long intervals", shaken(7), 5000, 1_000_000),
            ("fan, short intervals", vec![fan(24.125e9)], 3, 100_000),
        ];
        for (name, models, samples_per_node, samples) in cases {
            let (i, q) = render_models(
                models,
                &r,
                &Run {
                    samples_per_node,
                    sim_rate_hz: 26_000.0,
                    samples,
                    block: 4096,
                },
                false,
                false,
            );
            let again: Models = match name {
                "fan" | "fan, short intervals" => vec![fan(24.125e9)],
                _ => shaken(7),
            };
            let (di, dq) = render_models(
                again,
                &r,
                &Run {
                    samples_per_node,
                    sim_rate_hz: 26_000.0,
                    samples,
                    block: 4096,
                },
                true,
                false,
            );
            let scale = di.iter().chain(&dq).fold(0.0f64, |m, x| m.max(x.abs()));
            assert!(scale > 1e-9, "{name}: the echoes were rendered");
            let mut worst: f64 = 0.0;
            for n in 0..samples {
                worst = worst.max((i[n] - di[n]).abs()).max((q[n] - dq[n]).abs());
            }
            assert!(worst <= 1e-9 * scale, "{name}: {worst:e} against {scale:e}");
        }
    }

    #[test]
    fn the_recurrence_drift_is_reset_at_every_resync() {
        // One echo passing 0.6 m from the radar at 1.5 m/s, in node intervals
        // of 20 000 samples: just after each resync (every 128 samples) the
        // recurrence gives the direct formula's own numbers, and within every
        // 128 samples, all along the 200 000, the error relative to the
        // window's amplitude stays below 1e-10 (the n³·ε/6 bound of
        // `RESYNC_SAMPLES` is 4e-11): the drift does not carry over.
        let r = radar(24.125e9);
        let model = || shaken(1);
        let samples = 200_000;
        let (i, _) = render_models(
            model(),
            &r,
            &Run {
                samples_per_node: 20_000,
                sim_rate_hz: 26_000.0,
                samples,
                block: 1000,
            },
            false,
            false,
        );
        let (di, _) = render_models(
            model(),
            &r,
            &Run {
                samples_per_node: 20_000,
                sim_rate_hz: 26_000.0,
                samples,
                block: 1000,
            },
            true,
            false,
        );
        // Resyncs at every node (20 000 samples apart) and every 128 samples after it.
        let resyncs: Vec<usize> = (0..samples)
            .filter(|n| (n % 20_000) % RESYNC_SAMPLES == 0)
            .collect();
        for &n in &resyncs {
            assert_eq!(i[n], di[n], "at resync sample {n}");
        }
        for window in resyncs.windows(2) {
            let range = window[0]..window[1];
            let error = range
                .clone()
                .map(|n| (i[n] - di[n]).abs())
                .fold(0.0, f64::max);
            let amplitude = range.clone().map(|n| di[n].abs()).fold(0.0, f64::max);
            assert!(
                error <= 1e-10 * amplitude,
                "{range:?}: {error:e} against {amplitude:e}"
            );
        }
    }

    #[test]
    fn any_block_split_gives_the_same_bits() {
        // The phasors are reset on the node grid only, so where blocks start does not matter.
        let r = radar(24.125e9);
        let mut results = Vec::new();
        for block in [1, 7, 600, 100_000] {
            let mut models = shaken(5);
            models.push(fan(24.125e9));
            results.push(render_models(
                models,
                &r,
                &Run {
                    samples_per_node: 700,
                    sim_rate_hz: 26_000.0,
                    samples: 20_000,
                    block,
                },
                false,
                false,
            ));
        }
        let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        for other in &results[1..] {
            assert_eq!(bits(&results[0].0), bits(&other.0));
            assert_eq!(bits(&results[0].1), bits(&other.1));
        }
    }

    #[test]
    fn the_wide_and_the_portable_paths_give_the_same_bits() {
        if !wide_vectors_available() {
            eprintln!("skipped: this CPU has no AVX2, only the portable path exists here");
            return;
        }
        let r = radar(24.125e9);
        // Node intervals longer and shorter than a group's width, and longer than the resync spacing.
        for samples_per_node in [29, 3, 300] {
            let run = |wide: bool| {
                // Seven echoes (a full group and a padded one) and a fan with flashes.
                let mut models = shaken(7);
                models.push(fan(24.125e9));
                render_models(
                    models,
                    &r,
                    &Run {
                        samples_per_node,
                        sim_rate_hz: 26_000.0,
                        samples: 30_000,
                        block: 1000,
                    },
                    false,
                    wide,
                )
            };
            let (portable, wide) = (run(false), run(true));
            let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
            assert_eq!(bits(&portable.0), bits(&wide.0));
            assert_eq!(bits(&portable.1), bits(&wide.1));
            assert!(portable.0.iter().any(|&x| x != 0.0));
        }
    }

    /// Hides a model's flashes, so a track renders it as before them: the
    /// whole amplitude (sinc included) interpolated linearly between nodes.
    struct WithoutFlashes(Box<dyn MotionModel>);

    impl MotionModel for WithoutFlashes {
        fn echoes(&mut self, t_s: f64, sensor_m: Vec3, out: &mut Vec<Echo>) {
            self.0.echoes(t_s, sensor_m, out);
        }
        fn echo_count(&self) -> usize {
            self.0.echo_count()
        }
        fn node_rate_hz(&self, wavelength_m: f64) -> f64 {
            self.0.node_rate_hz(wavelength_m)
        }
        fn max_speed_mps(&self) -> f64 {
            self.0.max_speed_mps()
        }
        fn active_intervals(&self, duration_s: f64) -> Vec<(f64, f64)> {
            self.0.active_intervals(duration_s)
        }
        fn motion_speed_mps(&mut self, t_s: f64) -> f64 {
            self.0.motion_speed_mps(t_s)
        }
    }

    /// A walker 1.8 m tall at 1.4 m/s passing 1 m from the radar.
    fn walker() -> Box<dyn MotionModel> {
        use echobench_gait::Gait;
        use echobench_motion::path::Path;
        use echobench_motion::walker::Walker;
        let gait = Gait::new(1.8, 1.4).unwrap();
        let path = Path::straight([6.0, 1.0], std::f64::consts::PI, 1.4, 0.2, 100.0, vec![]);
        Box::new(Walker::new(gait, path, 1.0).unwrap())
    }

    #[test]
    fn cubic_amplitudes_at_their_lower_rate_follow_the_exact_walker_as_well() {
        // The exact signal: the walker's echoes at every sample (beam, R⁻²,
        // phase 4πR/λ). Rendered with cubic amplitudes at the walker's
        // `cubic_amplitude_node_rate_hz` (100 Hz at 2.45 GHz), the rms error
        // is within 1e-3 of the signal's rms (measured 8.2e-5, against 6.9e-5
        // for the line amplitudes at their 250 Hz: the ranges' Hermite error
        // grows at the lower rate, inside the phase tolerance); the recurrence
        // keeps its 1e-9 of the direct formula, and any block split gives the
        // same bits.
        let carrier_hz = 2.45e9;
        let r = radar(carrier_hz);
        let lambda = wavelength_m(carrier_hz);
        let sim_rate_hz = 4000.0;
        let samples = 16_000;
        let mut exact_model = walker();
        let (mut exact_i, mut exact_q) = (vec![0.0; samples], vec![0.0; samples]);
        let mut echoes = Vec::new();
        for n in 0..samples {
            echoes.clear();
            exact_model.echoes(n as f64 / sim_rate_hz, r.position_m, &mut echoes);
            for echo in &echoes {
                let seen = r.see(echo);
                let phase = r.phase_per_m * seen.range_m;
                exact_i[n] += seen.amplitude_v * phase.cos();
                exact_q[n] -= seen.amplitude_v * phase.sin();
            }
        }
        let power = |i: &[f64], q: &[f64]| {
            (0..samples)
                .map(|n| (i[n] - exact_i[n]).powi(2) + (q[n] - exact_q[n]).powi(2))
                .sum::<f64>()
        };
        let signal = power(&vec![0.0; samples], &vec![0.0; samples]);
        let rendered = |cubic: bool, direct: bool, block: usize| {
            let model = walker();
            let rate_hz = if cubic {
                model.cubic_amplitude_node_rate_hz(lambda).unwrap()
            } else {
                model.node_rate_hz(lambda)
            };
            let run = Run {
                samples_per_node: (sim_rate_hz / rate_hz).floor() as usize,
                sim_rate_hz,
                samples,
                block,
            };
            render_models_with(vec![model], &r, &run, direct, false, cubic)
        };
        let (ci, cq) = rendered(true, false, 1000);
        let (li, lq) = rendered(false, false, 1000);
        let (cubic_error, line_error) = (power(&ci, &cq), power(&li, &lq));
        assert!(
            cubic_error < 2.0 * line_error,
            "{cubic_error:e} vs {line_error:e}"
        );
        assert!(cubic_error < 1e-6 * signal, "{cubic_error:e} vs {signal:e}");
        let (di, dq) = rendered(true, true, 1000);
        let scale = di.iter().chain(&dq).fold(0.0f64, |m, x| m.max(x.abs()));
        for n in 0..samples {
            assert!((ci[n] - di[n]).abs().max((cq[n] - dq[n]).abs()) <= 1e-9 * scale);
        }
        for block in [1, 7, 100_000] {
            let (bi, bq) = rendered(true, false, block);
            assert!(bi.iter().zip(&ci).all(|(a, b)| a.to_bits() == b.to_bits()));
            assert!(bq.iter().zip(&cq).all(|(a, b)| a.to_bits() == b.to_bits()));
        }
    }

    #[test]
    fn a_hum_rendered_per_sample_follows_the_exact_echo() {
        // A humming hub alone (blades of zero RCS), a = 1e-4 m at 24.125 GHz:
        // β = (4π/λ)·a = 0.2 rad, near MAX_VIBRATION_PHASE_RAD. The exact
        // signal is the model's full echo at every sample (`echoes`, with the
        // hum in its position). Rendered with the hum per sample at the
        // model's nodes (about 280 per second), what is left out is the
        // range's second-order term a²/(2R)·4π/λ ≈ 4e-6 rad, the beam's change
        // over the a/R ≈ 3e-5 rad the echo moves across the line of sight and
        // the series' 1e-11: below 1e-5 of the signal (measured 8.6e-6). With
        // the hum in the nodes instead (eight per hum cycle, 800 per second)
        // the cubic's error is larger (measured 8.0e-5): at least five times.
        let carrier_hz = 24.125e9;
        let r = radar(carrier_hz);
        let lambda = wavelength_m(carrier_hz);
        let sim_rate_hz = 26_000.0;
        let samples = 26_000;
        let humming = || {
            let params = FanParams {
                mains_vibration_m: 1e-4,
                imbalance_whirl_m: 1e-5,
                hub_rcs_m2: 0.05,
                ..FanParams::rotor([3.0, 0.5, 1.2], [-0.9, 0.3, 0.1], 3, 0.03, 0.15, 20.0, 0.0)
            };
            Fan::new(params, lambda).unwrap()
        };
        let mut exact_model = humming();
        let (mut exact_i, mut exact_q) = (vec![0.0; samples], vec![0.0; samples]);
        let mut echoes = Vec::new();
        for n in 0..samples {
            echoes.clear();
            exact_model.echoes(n as f64 / sim_rate_hz, r.position_m, &mut echoes);
            for echo in &echoes {
                let seen = r.see(echo);
                let phase = r.phase_per_m * seen.range_m;
                exact_i[n] += seen.amplitude_v * phase.cos();
                exact_q[n] -= seen.amplitude_v * phase.sin();
            }
        }
        let scale = exact_i
            .iter()
            .chain(&exact_q)
            .fold(0.0f64, |m, x| m.max(x.abs()));
        let worst_error = |per_sample: bool| {
            let mut model = humming();
            model.set_vibration_per_sample(per_sample);
            assert_eq!(model.vibration().is_some(), per_sample);
            let rate = model.flash_node_rate_hz(lambda);
            let run = Run {
                samples_per_node: (sim_rate_hz / rate).floor() as usize,
                sim_rate_hz,
                samples,
                block: 1000,
            };
            let (i, q) = render_models(vec![Box::new(model)], &r, &run, false, false);
            (0..samples)
                .map(|n| (i[n] - exact_i[n]).abs().max((q[n] - exact_q[n]).abs()))
                .fold(0.0, f64::max)
                / scale
        };
        let (per_sample, in_nodes) = (worst_error(true), worst_error(false));
        assert!(per_sample < 1e-5, "{per_sample:e}");
        assert!(
            per_sample < 0.2 * in_nodes,
            "{per_sample:e} vs {in_nodes:e}"
        );
    }

    #[test]
    fn fan_flashes_per_sample_are_closer_to_the_exact_echo_than_flash_nodes() {
        // The exact signal: the fan evaluated at every sample (echo ranges,
        // beam, √σ·sinc/R², phase 4πR/λ; Chen & Ling eq. 8.19 as `Fan` has
        // it). Rendered with its flashes per sample, at the flash node rate,
        // the error is smaller than with the whole amplitude interpolated
        // linearly at ten nodes per flash, and within 1 % (rms) of the signal.
        for carrier_hz in [2.45e9, 24.125e9] {
            let r = radar(carrier_hz);
            let lambda = wavelength_m(carrier_hz);
            let sim_rate_hz = if carrier_hz > 1e10 { 26_000.0 } else { 4_000.0 };
            let samples = (0.25 * sim_rate_hz) as usize;
            let mut exact_model = fan(carrier_hz);
            let (mut exact_i, mut exact_q) = (vec![0.0; samples], vec![0.0; samples]);
            let mut echoes = Vec::new();
            for n in 0..samples {
                echoes.clear();
                exact_model.echoes(n as f64 / sim_rate_hz, r.position_m, &mut echoes);
                for echo in &echoes {
                    let seen = r.see(echo);
                    let phase = r.phase_per_m * seen.range_m;
                    exact_i[n] += seen.amplitude_v * phase.cos();
                    exact_q[n] -= seen.amplitude_v * phase.sin();
                }
            }
            let rms_error = |model: Box<dyn MotionModel>, rate_hz: f64| {
                let spn = (sim_rate_hz / rate_hz).floor().max(1.0) as usize;
                let (i, q) = render_models(
                    vec![model],
                    &r,
                    &Run {
                        samples_per_node: spn,
                        sim_rate_hz,
                        samples,
                        block: 1024,
                    },
                    false,
                    false,
                );
                let power: f64 = (0..samples)
                    .map(|n| (i[n] - exact_i[n]).powi(2) + (q[n] - exact_q[n]).powi(2))
                    .sum();
                (power / samples as f64).sqrt()
            };
            let signal_rms = (exact_i.iter().chain(&exact_q).map(|x| x * x).sum::<f64>()
                / samples as f64)
                .sqrt();
            let new = rms_error(fan(carrier_hz), fan(carrier_hz).flash_node_rate_hz(lambda));
            let old_model = fan(carrier_hz);
            let old_rate = old_model.node_rate_hz(lambda);
            let old = rms_error(Box::new(WithoutFlashes(old_model)), old_rate);
            assert!(new < old, "{carrier_hz}: {new:e} vs {old:e}");
            assert!(
                new < 0.01 * signal_rms,
                "{carrier_hz}: {new:e} vs signal {signal_rms:e}"
            );
        }
    }
}
