//! A slow actor rendered at a fraction of the internal rate and interpolated up.
//!
//! The internal rate is set by the fastest actor of a scene (8× its highest
//! Doppler): at 24 GHz a desk fan's 3 kHz blades put it at 26 kHz, while a
//! walker's echoes stay below 1 kHz. Rendering the walker's twelve phasors at
//! 26 kHz spends most of their work on samples a band-limited interpolator can
//! give far more cheaply. So an actor without velocity steps
//! ([`echobench_motion::MotionModel::band_limited`]: the walker and the fan)
//! whose highest frequency B
//! ([`echobench_motion::MotionModel::max_doppler_hz`], the bound the internal
//! rate is chosen from) lies well below the internal rate is rendered at
//! f_low = f_sim / D, at least [`SLOW_RATE_PER_DOPPLER`]·B, and its sum of
//! echoes (I, and Q for I/Q) is brought up to f_sim by a polyphase
//! interpolator.
//!
//! The key design decision: the interpolator is a Kaiser-windowed sinc cut at
//! f_low/2, the middle of the band between the signal (|f| ≤ B) and its first
//! image (|f| ≥ f_low − B) — a Nyquist filter, so every D-th output sample is
//! the rendered low-rate sample itself, and the others are weighted sums of
//! the L nearest low-rate samples (L/2 on each side; the weights of each phase
//! sum to 1, so a constant passes exactly). Its length follows Kaiser's design
//! formulas for the attenuation [`DESIGN_ATTENUATION_DB`], which keeps the
//! error for any signal within ±B below [`INTERPOLATION_TOLERANCE`] of the
//! sum of its components' amplitudes (docs/reference/radar-physics.md#r12;
//! checked on a grid of frequencies for every phase of every design the
//! synthesizer can make, and against the direct rendering of a walker).
//!
//! Samples before t = 0, which the first outputs' weights reach, continue the
//! first node interval's polynomials backwards (evaluated directly: a sine and
//! cosine per echo for L/2 samples), so the start has no edge either. Each
//! output is its weighted sum in a fixed order and depends only on its index,
//! so the output is the same for any block split.

use crate::render::{ActorTrack, RadarGeometry};

/// The slow rate is at least this many times the actor's highest frequency
/// (the band edge B sits at most at a quarter of f_low, so the interpolator's
/// transition band, from B to f_low − B, is at least half of f_low wide).
pub const SLOW_RATE_PER_DOPPLER: f64 = 4.0;

/// The smallest interpolation factor: 2, so the fastest actor of a scene
/// (at 8·B of the internal rate or more) goes at half of it. Measured on the
/// 24 GHz corridor (`perf stat` of `scene_profile`): 6 % less CPU than with
/// the fan rendered directly.
pub const MIN_FACTOR: usize = 2;

/// Largest error of the interpolation, relative to the sum of the amplitudes
/// of the signal's components within ±B: 1e-5, the tolerance the renderer
/// holds for the hum it adds per sample (docs/reference/radar-physics.md#r11),
/// an eighth of the walker's rms node error (8e-5 of its signal) and 0.04 of an
/// ADC step for a signal spanning a 12-bit converter's full scale.
pub const INTERPOLATION_TOLERANCE: f64 = 1e-5;

/// Kaiser design attenuation, dB. 100 dB is a ripple of 1e-5; with 125 dB
/// every design keeps a quarter of [`INTERPOLATION_TOLERANCE`] (at most
/// 2.5e-6 on the design grid of `every_design_stays_within_its_tolerance`):
/// the polyphase branches' error exceeds the filter's ripple that Kaiser's
/// formulas set, the lengths are rounded, and the rest of the tolerance is
/// left for the part of a rendered signal outside ±B (the node polynomials'
/// kinks). 110 dB left designs at 1.4e-5.
pub const DESIGN_ATTENUATION_DB: f64 = 125.0;

/// Kaiser's shape parameter for an attenuation of `attenuation_db` (> 50 dB):
/// β = 0.1102·(A − 8.7) (Kaiser 1974; Oppenheim & Schafer, *Discrete-Time
/// Signal Processing*, 3rd ed., eq. 7.62; docs/reference/radar-physics.md#r12).
fn kaiser_beta(attenuation_db: f64) -> f64 {
    0.1102 * (attenuation_db - 8.7)
}

/// I₀(x), the modified Bessel function of order 0, by its power series
/// Σ ((x/2)ᵏ/k!)² (Abramowitz & Stegun 9.6.12): all terms positive, summed
/// until a term no longer changes the sum.
fn bessel_i0(x: f64) -> f64 {
    let quarter_x2 = 0.25 * x * x;
    let (mut sum, mut term) = (1.0, 1.0);
    for k in 1..500 {
        term *= quarter_x2 / (k * k) as f64;
        let next = sum + term;
        if next == sum {
            break;
        }
        sum = next;
    }
    sum
}

/// Low-rate samples the interpolator weighs per output (even): Kaiser's
/// length formula N − 1 = (A − 7.95)/(2.285·Δω) (Oppenheim & Schafer eq.
/// 7.63) with N ≈ L·D high-rate taps and the transition Δω = 2π·Δf/D,
/// Δf = 1 − 2B/f_low, gives L = (A − 7.95)/(2π·2.285·Δf), rounded up to even.
fn taps_for(transition_fraction: f64) -> usize {
    let taps =
        (DESIGN_ATTENUATION_DB - 7.95) / (std::f64::consts::TAU * 2.285 * transition_fraction);
    let taps = taps.ceil().max(2.0) as usize;
    taps + taps % 2
}

/// The polyphase interpolator by an integer factor D, its weights per phase.
#[derive(Debug, Clone)]
pub struct Interpolator {
    factor: usize,
    taps: usize,
    /// Row r (output kD + r) holds the weights of low-rate samples
    /// k − L/2 + 1 ..= k + L/2, in that order.
    weights: Vec<f64>,
    /// The weights of phases 1 … D − 1 by column, four phases at a time: for
    /// phases 4c + 1 … 4c + 4, column j holds their weights of sample
    /// k − L/2 + 1 + j (zero past the last phase).
    columns: Vec<f64>,
}

impl Interpolator {
    /// The interpolator by `factor` for signals within ±`band_fraction` of
    /// the low rate (B/f_low, below 1/2).
    pub fn new(factor: usize, band_fraction: f64) -> Self {
        let factor = factor.max(1);
        let band_fraction = band_fraction.clamp(0.0, 0.45);
        let taps = taps_for(1.0 - 2.0 * band_fraction);
        let half = (taps / 2) as f64;
        let beta = kaiser_beta(DESIGN_ATTENUATION_DB);
        let scale = 1.0 / bessel_i0(beta);
        let mut weights = vec![0.0; factor * taps];
        for (r, row) in weights.chunks_mut(taps).enumerate() {
            if r == 0 {
                // The Nyquist filter's own samples: exactly the low-rate sample.
                row[taps / 2 - 1] = 1.0;
                continue;
            }
            for (index, weight) in row.iter_mut().enumerate() {
                // Distance in low-rate samples from the output to input k + j.
                let j = index as f64 - (half - 1.0);
                let tau = j - r as f64 / factor as f64;
                let x = tau / half;
                let window = scale * bessel_i0(beta * (1.0 - x * x).max(0.0).sqrt());
                let angle = std::f64::consts::PI * tau;
                *weight = window * angle.sin() / angle;
            }
            let sum: f64 = row.iter().sum();
            for weight in row.iter_mut() {
                *weight /= sum;
            }
        }
        let mut columns = vec![0.0; taps * (factor - 1).div_ceil(4) * 4];
        for (r, row) in weights.chunks(taps).enumerate().skip(1) {
            for (j, &weight) in row.iter().enumerate() {
                columns[(((r - 1) / 4) * taps + j) * 4 + (r - 1) % 4] = weight;
            }
        }
        Interpolator {
            factor,
            taps,
            weights,
            columns,
        }
    }

    /// The interpolation factor D.
    pub fn factor(&self) -> usize {
        self.factor
    }

    /// Low-rate samples weighed per output, L.
    pub fn taps(&self) -> usize {
        self.taps
    }

    /// Largest error |Σⱼ wᵣ(j)·e^{i2πf(j − L/2 + 1)} − e^{i2πf·r/D}| over every
    /// phase r and `points` frequencies f from 0 to `band_fraction` cycles per
    /// low-rate sample: the interpolation error for a unit phasor (real
    /// weights, so −f gives the same).
    pub fn worst_error(&self, band_fraction: f64, points: usize) -> f64 {
        let mut worst: f64 = 0.0;
        for step in 0..=points {
            let f = band_fraction * step as f64 / points as f64;
            for (r, row) in self.weights.chunks(self.taps).enumerate() {
                let (mut re, mut im) = (0.0, 0.0);
                for (index, weight) in row.iter().enumerate() {
                    let j = index as f64 - (self.taps / 2 - 1) as f64;
                    let angle = std::f64::consts::TAU * f * j;
                    re += weight * angle.cos();
                    im += weight * angle.sin();
                }
                let target = std::f64::consts::TAU * f * r as f64 / self.factor as f64;
                worst = worst.max((re - target.cos()).hypot(im - target.sin()));
            }
        }
        worst
    }

    /// The outputs kD … kD + D − 1 for `steps` consecutive low-rate steps k
    /// (from k₀) into `out` (`steps`·D long, output k₀D + m at `out[m]`);
    /// `low` holds the low-rate samples from k₀ − L/2 + 1 to k₀ + `steps` − 1 + L/2.
    ///
    /// Each output sums its L terms in the order of the samples, one
    /// multiply and one add each, starting from zero: its bits do not depend
    /// on which other outputs are computed with it. Phase 0 is copied; the
    /// others go sixteen independent sums at a time (phases side by side,
    /// steps side by side, or both), which fills the pipeline. Portable code
    /// only: an AVX2 copy of it (as `render` has for the phasors) was 1.5 %
    /// faster on the 24 GHz corridor, within the machine's noise.
    // The lane loops index fixed arrays; LLVM turns each into one vector operation.
    #[allow(clippy::needless_range_loop)]
    fn interpolate(&self, low: &[f64], steps: usize, out: &mut [f64]) {
        let (taps, factor) = (self.taps, self.factor);
        assert!(low.len() + 1 >= steps + taps && out.len() >= steps * factor);
        // Phase 0 is the low-rate sample itself (its row is 1 at the centre
        // and 0 elsewhere, so its sum would give exactly this).
        for k in 0..steps {
            out[k * factor] = low[k + taps / 2 - 1];
        }
        match factor {
            1 => {}
            2 => self.interpolate_one_phase(low, steps, out),
            3 => self.interpolate_two_phases(low, steps, out),
            _ => self.interpolate_by_columns(low, steps, out),
        }
    }

    /// Phases 1 … D − 1, four side by side (a column of weights per sample),
    /// four steps at once: sixteen independent sums.
    #[allow(clippy::needless_range_loop)]
    #[inline(always)]
    fn interpolate_by_columns(&self, low: &[f64], steps: usize, out: &mut [f64]) {
        let (taps, factor) = (self.taps, self.factor);
        for (chunk, columns) in self.columns.chunks_exact(4 * taps).enumerate() {
            let first_phase = 1 + 4 * chunk;
            let lanes = (factor - first_phase).min(4);
            let mut k = 0;
            while k < steps {
                let group = (steps - k).min(4);
                let mut sums = [[0.0; 4]; 4];
                if group == 4 {
                    for (j, column) in columns.chunks_exact(4).enumerate() {
                        let samples = &low[k + j..k + j + 4];
                        for m in 0..4 {
                            for lane in 0..4 {
                                sums[m][lane] += column[lane] * samples[m];
                            }
                        }
                    }
                } else {
                    for (j, column) in columns.chunks_exact(4).enumerate() {
                        for m in 0..group {
                            let sample = low[k + m + j];
                            for lane in 0..4 {
                                sums[m][lane] += column[lane] * sample;
                            }
                        }
                    }
                }
                for (m, sum) in sums.iter().enumerate().take(group) {
                    let at = (k + m) * factor + first_phase;
                    out[at..at + lanes].copy_from_slice(&sum[..lanes]);
                }
                k += group;
            }
        }
    }

    /// D = 2: phase 1 alone, four steps to a vector and four vectors at once.
    #[allow(clippy::needless_range_loop)]
    #[inline(always)]
    fn interpolate_one_phase(&self, low: &[f64], steps: usize, out: &mut [f64]) {
        let taps = self.taps;
        let row = &self.weights[taps..2 * taps];
        let mut k = 0;
        while k + 16 <= steps {
            let mut sums = [[0.0; 4]; 4];
            for (j, &weight) in row.iter().enumerate() {
                for m in 0..4 {
                    let samples = &low[k + 4 * m + j..k + 4 * m + j + 4];
                    for lane in 0..4 {
                        sums[m][lane] += weight * samples[lane];
                    }
                }
            }
            for m in 0..4 {
                for lane in 0..4 {
                    out[2 * (k + 4 * m + lane) + 1] = sums[m][lane];
                }
            }
            k += 16;
        }
        for step in k..steps {
            let mut sum = 0.0;
            for (j, &weight) in row.iter().enumerate() {
                sum += weight * low[step + j];
            }
            out[2 * step + 1] = sum;
        }
    }

    /// D = 3: phases 1 and 2 of two steps to a vector, four vectors at once.
    #[allow(clippy::needless_range_loop)]
    #[inline(always)]
    fn interpolate_two_phases(&self, low: &[f64], steps: usize, out: &mut [f64]) {
        let taps = self.taps;
        let (first, second) = (&self.weights[taps..2 * taps], &self.weights[2 * taps..]);
        let mut k = 0;
        while k + 8 <= steps {
            let mut sums = [[0.0; 4]; 4];
            for j in 0..taps {
                let weights = [first[j], second[j], first[j], second[j]];
                for m in 0..4 {
                    let (x0, x1) = (low[k + 2 * m + j], low[k + 2 * m + 1 + j]);
                    let samples = [x0, x0, x1, x1];
                    for lane in 0..4 {
                        sums[m][lane] += weights[lane] * samples[lane];
                    }
                }
            }
            for (m, sum) in sums.iter().enumerate() {
                let at = 3 * (k + 2 * m);
                out[at + 1..at + 3].copy_from_slice(&sum[..2]);
                out[at + 4..at + 6].copy_from_slice(&sum[2..]);
            }
            k += 8;
        }
        for step in k..steps {
            let mut sum = [0.0; 2];
            for j in 0..taps {
                let x = low[step + j];
                sum[0] += first[j] * x;
                sum[1] += second[j] * x;
            }
            out[3 * step + 1..3 * step + 3].copy_from_slice(&sum);
        }
    }
}

/// A track rendered at f_sim/D and interpolated up to f_sim (see the module doc).
pub struct InterpolatedTrack {
    track: ActorTrack,
    interpolator: Interpolator,
    /// Low-rate samples from index `first` on (I, and Q once asked for).
    low_i: Vec<f64>,
    low_q: Vec<f64>,
    first: i64,
    /// Next low-rate index the track renders (it starts at 0).
    rendered: i64,
    /// Next internal-rate output index.
    next: u64,
    /// The samples before t = 0 (indices −L/2 + 1 … −1), I and Q.
    before_start: Vec<(f64, f64)>,
    /// Every phase of the current steps (scratch).
    values: Vec<f64>,
}

impl InterpolatedTrack {
    /// `track` renders at the slow rate f_sim/`interpolator.factor()`.
    pub fn new(track: ActorTrack, interpolator: Interpolator, radar: &RadarGeometry) -> Self {
        let lead = interpolator.taps() / 2 - 1;
        let before_start = (1..=lead)
            .rev()
            .map(|back| track.value_before_start(radar, back))
            .collect::<Vec<_>>();
        InterpolatedTrack {
            track,
            low_i: before_start.iter().map(|v| v.0).collect(),
            low_q: Vec::new(),
            first: -(lead as i64),
            rendered: 0,
            next: 0,
            values: Vec::new(),
            interpolator,
            before_start,
        }
    }

    /// The actor's contribution at t = 0 (see [`ActorTrack::value_at_start`]).
    pub fn value_at_start(&self, radar: &RadarGeometry) -> (f64, f64) {
        self.track.value_at_start(radar)
    }

    /// Adds this actor's contribution to the next `in_phase.len()` internal
    /// samples (and `quadrature`; give it on every call or on none).
    pub fn render(
        &mut self,
        radar: &RadarGeometry,
        in_phase: &mut [f64],
        quadrature: Option<&mut [f64]>,
    ) {
        let count = in_phase.len();
        if count == 0 {
            return;
        }
        let factor = self.interpolator.factor as u64;
        let taps = self.interpolator.taps;
        let half = (taps / 2) as i64;
        let iq = quadrature.is_some();
        if iq && self.low_q.len() != self.low_i.len() {
            // The first call with Q: the samples before the start, as for I.
            debug_assert_eq!(self.rendered, 0, "give quadrature on every call or none");
            self.low_q = self.before_start.iter().map(|v| v.1).collect();
        }
        // Render the low-rate samples up to the last one the last output weighs.
        let last = ((self.next + count as u64 - 1) / factor) as i64 + half;
        if last >= self.rendered {
            let new = (last + 1 - self.rendered) as usize;
            let from = self.low_i.len();
            self.low_i.resize(from + new, 0.0);
            if iq {
                self.low_q.resize(from + new, 0.0);
                let (i, q) = (&mut self.low_i[from..], &mut self.low_q[from..]);
                self.track.render(radar, i, Some(q));
            } else {
                self.track.render(radar, &mut self.low_i[from..], None);
            }
            self.rendered = last + 1;
        }
        // Every phase of the low-rate steps the outputs fall in, then the wanted ones added.
        let first_step = self.next / factor;
        let steps = ((self.next + count as u64 - 1) / factor + 1 - first_step) as usize;
        let skip = (self.next - first_step * factor) as usize;
        let start = (first_step as i64 - half + 1 - self.first) as usize;
        let window = start..start + steps + taps - 1;
        self.values.resize(steps * factor as usize, 0.0);
        let values = &mut self.values;
        self.interpolator
            .interpolate(&self.low_i[window.clone()], steps, values);
        for (out, value) in in_phase.iter_mut().zip(&values[skip..]) {
            *out += value;
        }
        if let Some(q) = quadrature {
            self.interpolator
                .interpolate(&self.low_q[window], steps, values);
            for (out, value) in q.iter_mut().zip(&values[skip..]) {
                *out += value;
            }
        }
        self.next += count as u64;
        // Keep only what the next output weighs.
        let keep_from = (self.next / factor) as i64 - half + 1;
        if keep_from > self.first {
            let drop = (keep_from - self.first) as usize;
            self.low_i.drain(..drop);
            if iq {
                self.low_q.drain(..drop);
            }
            self.first = keep_from;
        }
    }
}

/// An actor being rendered: at the internal rate, or slower and interpolated up.
pub enum Track {
    /// Rendered at the internal rate.
    Direct(Box<ActorTrack>),
    /// Rendered at a fraction of it and interpolated.
    Interpolated(Box<InterpolatedTrack>),
}

impl Track {
    /// See [`ActorTrack::value_at_start`].
    pub fn value_at_start(&self, radar: &RadarGeometry) -> (f64, f64) {
        match self {
            Track::Direct(track) => track.value_at_start(radar),
            Track::Interpolated(track) => track.value_at_start(radar),
        }
    }

    /// See [`ActorTrack::render`].
    pub fn render(
        &mut self,
        radar: &RadarGeometry,
        in_phase: &mut [f64],
        quadrature: Option<&mut [f64]>,
    ) {
        match self {
            Track::Direct(track) => track.render(radar, in_phase, quadrature),
            Track::Interpolated(track) => track.render(radar, in_phase, quadrature),
        }
    }
}

/// How a track is to be rendered: the interpolation factor D (1: directly at
/// the internal rate) and the node spacing at the track's rate.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TrackRate {
    /// D.
    pub factor: usize,
    /// Samples of the track's rate f_sim/D between nodes.
    pub samples_per_node: usize,
}

/// The rate for a model whose highest frequency is `max_doppler_hz` and whose
/// nodes come at `node_rate_hz`, at internal rate `sim_rate_hz`: the factor D
/// with f_sim/D ≥ [`SLOW_RATE_PER_DOPPLER`]·B that gives the fewest nodes per
/// second (the largest such D among equals; D = 1 when none is at least 2 or
/// a node interval would be shorter than two slow samples).
pub fn track_rate(max_doppler_hz: f64, node_rate_hz: f64, sim_rate_hz: f64) -> TrackRate {
    let direct_spacing = (sim_rate_hz / node_rate_hz).floor().max(1.0) as usize;
    let direct = TrackRate {
        factor: 1,
        samples_per_node: direct_spacing,
    };
    let largest = sim_rate_hz / (SLOW_RATE_PER_DOPPLER * max_doppler_hz);
    if !(largest >= MIN_FACTOR as f64 && max_doppler_hz > 0.0) {
        return direct;
    }
    let largest = (largest.floor() as usize).min(direct_spacing / 2);
    let mut best = direct;
    let mut best_nodes_per_s = f64::INFINITY;
    for factor in MIN_FACTOR..=largest {
        let samples_per_node = direct_spacing / factor;
        if samples_per_node < 2 {
            break;
        }
        let nodes_per_s = sim_rate_hz / (factor * samples_per_node) as f64;
        // Among equal node rates the larger factor (fewer samples to render).
        if nodes_per_s <= best_nodes_per_s {
            best_nodes_per_s = nodes_per_s;
            best = TrackRate {
                factor,
                samples_per_node,
            };
        }
    }
    best
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bessel_i0_matches_published_values() {
        // Abramowitz & Stegun, Table 9.8: e^{−x}·I₀(x) = 0.4657596077 at
        // x = 1, 0.3085083225 at x = 2 and 0.1278333372 at x = 10.
        for (x, scaled) in [
            (1.0, 0.465_759_607_7),
            (2.0, 0.308_508_322_5),
            (10.0, 0.127_833_337_2),
        ] {
            let value = bessel_i0(x) * (-x).exp();
            assert!((value - scaled).abs() < 1e-9, "{x}: {value}");
        }
    }

    #[test]
    fn every_design_stays_within_its_tolerance() {
        // Factors from 2 to 64 and band edges from B/f_low = 1/4
        // (the least slow rate allowed) down, on a grid of 400 frequencies
        // per phase: the error for a unit phasor in band is below a quarter
        // of INTERPOLATION_TOLERANCE.
        for factor in [2, 3, 4, 5, 7, 9, 13, 16, 32, 64] {
            for band_fraction in [0.25, 0.2, 0.143, 0.1, 0.02] {
                let interpolator = Interpolator::new(factor, band_fraction);
                let worst = interpolator.worst_error(band_fraction, 400);
                assert!(
                    worst <= 0.25 * INTERPOLATION_TOLERANCE,
                    "D {factor}, B/f_low {band_fraction}: {worst:e} with {} taps",
                    interpolator.taps()
                );
            }
        }
        // And the design is not wasteful: at the band edge the error is
        // within a factor 100 of the tolerance.
        let worst = Interpolator::new(4, 0.25).worst_error(0.25, 400);
        assert!(worst > INTERPOLATION_TOLERANCE / 100.0, "{worst:e}");
    }

    #[test]
    fn the_nyquist_phase_is_the_sample_itself_and_constants_pass() {
        for factor in [3, 5, 9] {
            let interpolator = Interpolator::new(factor, 0.2);
            let taps = interpolator.taps();
            let steps = 7;
            let low: Vec<f64> = (0..steps + taps).map(|j| (j as f64 * 0.7).sin()).collect();
            let mut out = vec![0.0; steps * factor];
            interpolator.interpolate(&low, steps, &mut out);
            for k in 0..steps {
                assert_eq!(out[k * factor], low[k + taps / 2 - 1]);
            }
            interpolator.interpolate(&vec![0.25; steps + taps], steps, &mut out);
            for value in &out {
                assert!((value - 0.25).abs() < 1e-15);
            }
        }
    }

    #[test]
    fn every_path_sums_each_output_in_the_order_of_its_samples() {
        // The vector layouts (phases side by side, D = 2 with four steps to a
        // vector, D = 3 with two, the last steps one by one, phase 0 copied)
        // give the bits of the plain sum Σⱼ wᵣ[j]·x[k + j] in the order of
        // j, from zero, for any number of steps.
        for factor in [2, 3, 4, 5, 6, 9] {
            let interpolator = Interpolator::new(factor, 0.2);
            let taps = interpolator.taps();
            for steps in [1, 3, 8, 13, 16, 37] {
                let low: Vec<f64> = (0..steps + taps)
                    .map(|j| (j as f64 * 1.3).sin() + 0.1 * j as f64)
                    .collect();
                let mut out = vec![f64::NAN; steps * factor];
                interpolator.interpolate(&low, steps, &mut out);
                for k in 0..steps {
                    for r in 0..factor {
                        let row = &interpolator.weights[r * taps..(r + 1) * taps];
                        let mut sum = 0.0;
                        for j in 0..taps {
                            sum += row[j] * low[k + j];
                        }
                        assert_eq!(out[k * factor + r].to_bits(), sum.to_bits());
                    }
                }
            }
        }
    }

    #[test]
    fn rates_keep_the_nodes_and_the_band() {
        // The 24 GHz corridor's walker: B = 928 Hz, 341 nodes/s, f_sim = 26 kHz:
        // 76 samples per node directly; D = 4 keeps them (19 at 6.5 kHz, ≥ 4B).
        let rate = track_rate(927.7, 341.2, 26_000.0);
        assert_eq!(
            rate,
            TrackRate {
                factor: 4,
                samples_per_node: 19
            }
        );
        // The fan that sets the rate (at 8.4 B) goes at half of it, its nodes kept.
        assert_eq!(
            track_rate(3089.9, 275.8, 26_000.0),
            TrackRate {
                factor: 2,
                samples_per_node: 47
            }
        );
        // An actor at 5 B of the internal rate is rendered directly.
        assert_eq!(track_rate(5200.0, 275.8, 26_000.0).factor, 1);
        // The 2.45 GHz corridor's walker: B = 94 Hz, 109 nodes/s at 4 kHz (36
        // samples per node): D = 9 keeps them (4 at 444 Hz).
        assert_eq!(
            track_rate(94.2, 108.7, 4000.0),
            TrackRate {
                factor: 9,
                samples_per_node: 4
            }
        );
        // A still reflector (no Doppler) is rendered directly.
        assert_eq!(track_rate(0.0, 10.0, 26_000.0).factor, 1);
        // Never fewer than two slow samples per node.
        let fast_nodes = track_rate(10.0, 9_000.0, 26_000.0);
        assert_eq!(fast_nodes.factor, 1);
    }

    use crate::radar::{wavelength_m, Beam};
    use echobench_motion::MotionModel;

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

    /// A walker 1.8 m tall at 1.4 m/s passing 1 m from the radar, entering at
    /// `enter_s` (before t = 0: already walking at the start).
    fn walker(enter_s: f64) -> Box<dyn MotionModel> {
        use echobench_gait::Gait;
        use echobench_motion::path::Path;
        use echobench_motion::walker::Walker;
        let gait = Gait::new(1.8, 1.4).unwrap();
        let path = Path::straight(
            [3.0, 1.0],
            std::f64::consts::PI,
            1.4,
            enter_s,
            100.0,
            vec![],
        );
        Box::new(Walker::new(gait, path, 1.0).unwrap())
    }

    /// The walker at 24.125 GHz as the corridor scene has it: internal rate
    /// 26 kHz (a fan's), nodes at the walker's own rate, rendered directly or
    /// at f_sim/D and interpolated, in blocks of `block`; I and Q.
    fn rendered(enter_s: f64, interpolated: bool, block: usize) -> (Vec<f64>, Vec<f64>) {
        let model = walker(enter_s);
        let rate = track_rate(
            model.max_doppler_hz(wavelength_m(24.125e9)),
            model.node_rate_hz(wavelength_m(24.125e9)),
            26_000.0,
        );
        assert!(rate.factor >= 3, "{rate:?}");
        rendered_model(model, rate, interpolated, block)
    }

    /// `model` at 24.125 GHz and an internal rate of 26 kHz, rendered at `rate`
    /// (`interpolated`) or directly with the same nodes.
    fn rendered_model(
        model: Box<dyn MotionModel>,
        rate: TrackRate,
        interpolated: bool,
        block: usize,
    ) -> (Vec<f64>, Vec<f64>) {
        let carrier_hz = 24.125e9;
        let r = radar(carrier_hz);
        let lambda = wavelength_m(carrier_hz);
        let sim_rate_hz = 26_000.0;
        let samples = 78_000;
        let band_hz = model.max_doppler_hz(lambda);
        type Render = Box<dyn FnMut(&mut [f64], &mut [f64])>;
        let mut track: Render = if interpolated {
            let slow_hz = sim_rate_hz / rate.factor as f64;
            let inner = ActorTrack::new(model, rate.samples_per_node, slow_hz, &r, false);
            let mut track = InterpolatedTrack::new(
                inner,
                Interpolator::new(rate.factor, band_hz / slow_hz),
                &r,
            );
            Box::new(move |i, q| track.render(&r, i, Some(q)))
        } else {
            let spn = rate.samples_per_node * rate.factor;
            let mut track = ActorTrack::new(model, spn, sim_rate_hz, &r, false);
            Box::new(move |i, q| track.render(&r, i, Some(q)))
        };
        let (mut i, mut q) = (vec![0.0; samples], vec![0.0; samples]);
        let mut at = 0;
        while at < samples {
            let end = (at + block).min(samples);
            track(&mut i[at..end], &mut q[at..end]);
            at = end;
        }
        (i, q)
    }

    #[test]
    fn an_interpolated_walker_follows_its_direct_rendering() {
        // Stated tolerance: with the same nodes, the interpolated walker is
        // within INTERPOLATION_TOLERANCE of the largest |I| or |Q| of the
        // direct rendering at every sample (3 s at 26 kHz, the walker 1 m
        // from the radar at its closest, so its Doppler spans the band), also
        // at the start, where the interpolator weighs samples before t = 0
        // (a walker already walking then).
        for enter_s in [0.2, -1.0] {
            let (di, dq) = rendered(enter_s, false, 4096);
            let (i, q) = rendered(enter_s, true, 4096);
            let scale = di.iter().chain(&dq).fold(0.0f64, |m, x| m.max(x.abs()));
            assert!(scale > 1e-6, "the walker was rendered");
            let worst = (0..di.len())
                .map(|n| (i[n] - di[n]).abs().max((q[n] - dq[n]).abs()))
                .fold(0.0, f64::max);
            assert!(
                worst <= INTERPOLATION_TOLERANCE * scale,
                "entering at {enter_s} s: {:e}",
                worst / scale
            );
            let start = (0..26).map(|n| (i[n] - di[n]).abs()).fold(0.0, f64::max);
            assert!(
                start <= INTERPOLATION_TOLERANCE * scale,
                "{:e}",
                start / scale
            );
        }
    }

    #[test]
    fn an_interpolated_track_gives_the_same_bits_for_any_block_split() {
        let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        let (i, q) = rendered(-1.0, true, 100_000);
        for block in [1, 7, 4096] {
            let (bi, bq) = rendered(-1.0, true, block);
            assert_eq!(bits(&i), bits(&bi), "block {block}");
            assert_eq!(bits(&q), bits(&bq), "block {block}");
        }
    }

    #[test]
    fn an_interpolated_fan_follows_its_direct_rendering() {
        // The fan that sets a 24 GHz scene's internal rate (3 kHz blade
        // Doppler at 26 kHz) goes at half the rate, D = 2, with its flashes
        // and hum per sample: within INTERPOLATION_TOLERANCE of its direct
        // rendering with the same nodes.
        use echobench_motion::fan::{Fan, FanParams};
        let fan = || -> Box<dyn MotionModel> {
            let params = FanParams {
                mains_vibration_m: 1e-5,
                imbalance_whirl_m: 1e-5,
                blade_tilt_rad: 0.1,
                initial_angle_rad: 0.4,
                hub_rcs_m2: 0.02,
                ..FanParams::rotor([3.0, 0.5, 1.2], [-0.9, 0.3, 0.1], 3, 0.03, 0.15, 20.0, 0.01)
            };
            Box::new(Fan::new(params, wavelength_m(24.125e9)).unwrap())
        };
        let lambda = wavelength_m(24.125e9);
        let model = fan();
        let rate = track_rate(
            model.max_doppler_hz(lambda),
            model.flash_node_rate_hz(lambda),
            26_000.0,
        );
        assert_eq!(rate.factor, 2, "{rate:?}");
        let (di, dq) = rendered_model(fan(), rate, false, 4096);
        let (i, q) = rendered_model(fan(), rate, true, 4096);
        let scale = di.iter().chain(&dq).fold(0.0f64, |m, x| m.max(x.abs()));
        let worst = (0..di.len())
            .map(|n| (i[n] - di[n]).abs().max((q[n] - dq[n]).abs()))
            .fold(0.0, f64::max);
        assert!(
            worst <= INTERPOLATION_TOLERANCE * scale,
            "{:e}",
            worst / scale
        );
    }
}
