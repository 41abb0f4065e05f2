//! A swaying object (potted plant, curtain, hanging sign, lamp) moved by gusts.
//!
//! The displacement x(t) of the object's tip obeys a driven damped oscillator
//! (docs/reference/nuisances.md#n1, common practice):
//!
//! ```text
//! ẍ + 2ζω₀ẋ + ω₀²x = w(t),     dw = −ω_c·w·dt + q·dW
//! ```
//!
//! where w is low-pass (first-order, corner f_c) gust noise. The response is
//! narrowband random motion at f₀ with a −3 dB width ≈ 2ζf₀. The natural
//! frequency is given, or taken from a pendulum length,
//! f₀ = (1/2π)·√(g/L) (simple pendulum, small angles).
//!
//! Users set the gust strength as the RMS tip displacement they want; the
//! noise intensity q follows from the stationary covariance of the process.
//!
//! The three-state linear SDE (x, ẋ, w) is integrated exactly on a fixed
//! internal grid: the transition matrix Φ = e^{AΔ} and the noise covariance
//! Q = ∫₀^Δ e^{As}BBᵀe^{Aᵀs}ds come from one matrix exponential (Van Loan,
//! "Computing integrals involving the matrix exponential", IEEE T-AC 23(3),
//! 1978). The process starts in its stationary state, so the RMS holds from
//! the first second. Between grid nodes positions and velocities are the
//! cubic Hermite interpolant of the grid's (x, ẋ), so the motion does not
//! depend on the times at which the model is asked.
//!
//! Echoes: three points at lever arms 1/3, 2/3 and 1 of the arm length from
//! the pivot (leaves, the hem of a curtain, the corners of a sign), each
//! displaced by its lever fraction times x(t − τ_k), with small random delays
//! τ_k (phase offsets within `point_phase_spread_rad` at f₀, no source) so
//! their returns are not exact copies. The RCS is split equally among them.

use crate::reflector::{add, hermite_node_rate_hz, scale, Check, ParamError, MIN_NODE_RATE_HZ};
use crate::{dot, Echo, MotionModel, Vec3};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;
use std::collections::VecDeque;
use std::f64::consts::PI;

/// Standard gravity, m/s² (CGPM 1901 conventional value).
pub const STANDARD_GRAVITY_MPS2: f64 = 9.80665;

/// Number of echo points of a swaying object.
pub const SWAY_POINT_COUNT: usize = 3;

/// Internal grid nodes per period of the fastest time scale (f₀ or the gust corner).
const GRID_POINTS_PER_PERIOD: f64 = 32.0;

/// Reported speeds are capped at this many stationary standard deviations of
/// the tip velocity; a Gaussian exceeds 8σ with probability ~1e−15 per
/// independent sample, so the cap practically never engages.
const SPEED_BOUND_SIGMAS: f64 = 8.0;

/// Natural frequency of a simple pendulum of length `length_m`: f₀ = (1/2π)√(g/L).
///
/// # Errors
/// If the length is not a finite positive number.
///
/// # Example
/// ```
/// use echobench_motion::sway::pendulum_natural_frequency_hz;
/// // docs/reference/check-values.md#pc17: L = 0.5 m → 0.7048 Hz.
/// let f0 = pendulum_natural_frequency_hz(0.5)?;
/// assert!((f0 - 0.7048).abs() < 1e-4);
/// # Ok::<(), echobench_motion::reflector::ParamError>(())
/// ```
pub fn pendulum_natural_frequency_hz(length_m: f64) -> Result<f64, ParamError> {
    let length_m = Check { model: "sway" }.positive("length_m", length_m)?;
    Ok((STANDARD_GRAVITY_MPS2 / length_m).sqrt() / (2.0 * PI))
}

/// Parameters of a swaying object.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SwayParams {
    /// Pivot (attachment or stem base), m.
    pub pivot_m: Vec3,
    /// Direction from the pivot to the tip (normalised by the constructor).
    pub arm_direction: Vec3,
    /// Distance from the pivot to the tip, m.
    pub arm_length_m: f64,
    /// Direction of the displacement (its component across the arm is used, normalised).
    pub sway_direction: Vec3,
    /// Natural frequency f₀, Hz (see [`pendulum_natural_frequency_hz`]).
    pub natural_frequency_hz: f64,
    /// Damping ratio ζ, in (0, 1) (trees: internal damping typically < 0.05,
    /// Moore & Maguire, Trees 18, 2004; foliage drag adds more).
    pub damping_ratio: f64,
    /// RMS displacement of the tip, m (0: still).
    pub rms_displacement_m: f64,
    /// Corner frequency of the gust noise, Hz.
    pub gust_corner_hz: f64,
    /// Total RCS, m², split equally among the points.
    pub rcs_m2: f64,
    /// Spread of the points' phase offsets at f₀, rad (0: points in phase).
    pub point_phase_spread_rad: f64,
}

impl SwayParams {
    /// A hanging object (sign, lamp) on a pendulum of `length_m` below `pivot_m`,
    /// with f₀ from the pendulum law, gust corner 2 Hz (HVAC gusts 0.05–2 Hz,
    /// no source) and point phase spread 0.5 rad (no source).
    ///
    /// # Errors
    /// If the length is not positive and finite.
    pub fn hanging(
        pivot_m: Vec3,
        length_m: f64,
        sway_direction: Vec3,
        damping_ratio: f64,
        rms_displacement_m: f64,
        rcs_m2: f64,
    ) -> Result<SwayParams, ParamError> {
        Ok(SwayParams {
            pivot_m,
            arm_direction: [0.0, 0.0, -1.0],
            arm_length_m: length_m,
            sway_direction,
            natural_frequency_hz: pendulum_natural_frequency_hz(length_m)?,
            damping_ratio,
            rms_displacement_m,
            gust_corner_hz: 2.0,
            rcs_m2,
            point_phase_spread_rad: 0.5,
        })
    }
}

type Matrix<const N: usize> = [[f64; N]; N];

fn mat_mul<const N: usize>(a: &Matrix<N>, b: &Matrix<N>) -> Matrix<N> {
    let mut c = [[0.0; N]; N];
    for i in 0..N {
        for k in 0..N {
            for j in 0..N {
                c[i][j] += a[i][k] * b[k][j];
            }
        }
    }
    c
}

fn transpose<const N: usize>(a: &Matrix<N>) -> Matrix<N> {
    let mut t = [[0.0; N]; N];
    for i in 0..N {
        for j in 0..N {
            t[j][i] = a[i][j];
        }
    }
    t
}

/// Matrix exponential by scaling and squaring with a Taylor series (the
/// scaled matrix has norm ≤ 0.5, where 24 terms reach machine precision).
fn expm<const N: usize>(a: &Matrix<N>) -> Matrix<N> {
    let norm = a
        .iter()
        .map(|row| row.iter().map(|x| x.abs()).sum::<f64>())
        .fold(0.0, f64::max);
    let squarings = if norm > 0.5 {
        (norm / 0.5).log2().ceil() as i32
    } else {
        0
    };
    let k = 0.5f64.powi(squarings);
    let mut scaled = *a;
    for row in scaled.iter_mut() {
        for x in row.iter_mut() {
            *x *= k;
        }
    }
    let mut result = [[0.0; N]; N];
    let mut term = [[0.0; N]; N];
    for i in 0..N {
        result[i][i] = 1.0;
        term[i][i] = 1.0;
    }
    for n in 1..=24 {
        term = mat_mul(&term, &scaled);
        for row in term.iter_mut() {
            for x in row.iter_mut() {
                *x /= n as f64;
            }
        }
        for i in 0..N {
            for j in 0..N {
                result[i][j] += term[i][j];
            }
        }
    }
    for _ in 0..squarings {
        result = mat_mul(&result, &result);
    }
    result
}

/// Lower Cholesky factor of a symmetric positive semi-definite 3×3 matrix
/// (non-positive pivots, from rounding, give zero columns).
fn cholesky(a: &Matrix<3>) -> Matrix<3> {
    let mut l = [[0.0; 3]; 3];
    for j in 0..3 {
        let d = a[j][j] - (0..j).map(|k| l[j][k] * l[j][k]).sum::<f64>();
        if d <= 0.0 {
            continue;
        }
        l[j][j] = d.sqrt();
        for i in j + 1..3 {
            let s = a[i][j] - (0..j).map(|k| l[i][k] * l[j][k]).sum::<f64>();
            l[i][j] = s / l[j][j];
        }
    }
    l
}

fn mat_vec(a: &Matrix<3>, x: [f64; 3]) -> [f64; 3] {
    [
        a[0][0] * x[0] + a[0][1] * x[1] + a[0][2] * x[2],
        a[1][0] * x[0] + a[1][1] * x[1] + a[1][2] * x[2],
        a[2][0] * x[0] + a[2][1] * x[1] + a[2][2] * x[2],
    ]
}

/// Exact discretization of the (x, ẋ, w) process on a step of `step_s`:
/// transition Φ, noise covariance Q and stationary covariance P, for unit
/// stationary gust variance.
fn discretize(
    omega0: f64,
    zeta: f64,
    omega_c: f64,
    step_s: f64,
) -> (Matrix<3>, Matrix<3>, Matrix<3>) {
    let a: Matrix<3> = [
        [0.0, 1.0, 0.0],
        [-omega0 * omega0, -2.0 * zeta * omega0, 1.0],
        [0.0, 0.0, -omega_c],
    ];
    // Unit stationary variance of w: q² = 2ω_c.
    let q2 = 2.0 * omega_c;
    // Van Loan: exp([[−A, BBᵀ], [0, Aᵀ]]Δ) = [[·, F12], [0, F22]]; Φ = F22ᵀ, Q = Φ·F12.
    let mut c = [[0.0; 6]; 6];
    for i in 0..3 {
        for j in 0..3 {
            c[i][j] = -a[i][j] * step_s;
            c[i + 3][j + 3] = a[j][i] * step_s;
        }
    }
    c[2][5] = q2 * step_s;
    let e = expm(&c);
    let mut f12 = [[0.0; 3]; 3];
    let mut f22 = [[0.0; 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            f12[i][j] = e[i][j + 3];
            f22[i][j] = e[i + 3][j + 3];
        }
    }
    let phi = transpose(&f22);
    let product = mat_mul(&phi, &f12);
    // Symmetrise against rounding.
    let q: Matrix<3> =
        std::array::from_fn(|i| std::array::from_fn(|j| 0.5 * (product[i][j] + product[j][i])));
    // Stationary covariance P = Σ Φᵏ Q Φᵏᵀ by doubling: P ← P + ΨPΨᵀ, Ψ ← Ψ².
    let mut p = q;
    let mut psi = phi;
    for _ in 0..64 {
        let add_term = mat_mul(&mat_mul(&psi, &p), &transpose(&psi));
        for i in 0..3 {
            for j in 0..3 {
                p[i][j] += add_term[i][j];
            }
        }
        psi = mat_mul(&psi, &psi);
        if psi.iter().flatten().all(|x| x.abs() < 1e-20) {
            break;
        }
    }
    (phi, q, p)
}

/// A swaying object.
#[derive(Debug, Clone)]
pub struct Sway {
    params: SwayParams,
    sway_axis: Vec3,
    still: bool,
    step_s: f64,
    origin_s: f64,
    phi: Matrix<3>,
    noise_factor: Matrix<3>,
    delays_s: [f64; SWAY_POINT_COUNT],
    velocity_std_mps: f64,
    rng: ChaCha8Rng,
    state: [f64; 3],
    /// Grid values (x, ẋ) from index `first_index` on.
    grid: VecDeque<[f64; 2]>,
    first_index: u64,
}

impl Sway {
    /// Checks the parameters, solves for the gust intensity that gives the
    /// requested RMS, and draws the initial state and point delays from `seed`.
    ///
    /// # Errors
    /// A [`ParamError`] naming the first bad field (non-finite or out of range
    /// numbers, zero directions, a sway direction along the arm).
    ///
    /// # Example
    /// ```
    /// use echobench_motion::sway::{Sway, SwayParams};
    /// use echobench_motion::MotionModel;
    ///
    /// // A sign on a 0.5 m hanger swaying 2 cm RMS along y.
    /// let params = SwayParams::hanging([0.0, 0.0, 2.5], 0.5, [0.0, 1.0, 0.0], 0.05, 0.02, 0.1)?;
    /// let mut sign = Sway::new(params, [3; 32])?;
    /// let mut echoes = Vec::new();
    /// sign.echoes(0.5, [3.0, 0.0, 2.0], &mut echoes);
    /// assert_eq!(echoes.len(), 3);
    /// # Ok::<(), echobench_motion::reflector::ParamError>(())
    /// ```
    pub fn new(params: SwayParams, seed: [u8; 32]) -> Result<Sway, ParamError> {
        let check = Check { model: "sway" };
        let mut params = params;
        check.finite_vec("pivot_m", params.pivot_m)?;
        params.arm_direction = check.direction("arm_direction", params.arm_direction)?;
        check.positive("arm_length_m", params.arm_length_m)?;
        let raw = check.direction("sway_direction", params.sway_direction)?;
        let across = crate::sub(
            raw,
            scale(params.arm_direction, dot(raw, params.arm_direction)),
        );
        let across_length = crate::norm(across);
        if across_length < 1e-6 {
            return Err(check.error(
                "sway_direction",
                across_length,
                "a direction not parallel to arm_direction",
            ));
        }
        let sway_axis = scale(across, 1.0 / across_length);
        params.sway_direction = sway_axis;
        check.positive("natural_frequency_hz", params.natural_frequency_hz)?;
        check.strictly_within("damping_ratio", params.damping_ratio, 0.0, 1.0)?;
        check.non_negative("rms_displacement_m", params.rms_displacement_m)?;
        check.positive("gust_corner_hz", params.gust_corner_hz)?;
        check.non_negative("rcs_m2", params.rcs_m2)?;
        check.within(
            "point_phase_spread_rad",
            params.point_phase_spread_rad,
            0.0,
            PI,
        )?;

        let omega0 = 2.0 * PI * params.natural_frequency_hz;
        let omega_c = 2.0 * PI * params.gust_corner_hz;
        let grid_rate_hz =
            GRID_POINTS_PER_PERIOD * params.natural_frequency_hz.max(params.gust_corner_hz);
        let step_s = 1.0 / grid_rate_hz;
        let (phi, q, p) = discretize(omega0, params.damping_ratio, omega_c, step_s);

        let mut rng = ChaCha8Rng::from_seed(seed);
        let mut delays_s = [0.0; SWAY_POINT_COUNT];
        for d in delays_s.iter_mut() {
            *d = params.point_phase_spread_rad * rng.random::<f64>() / omega0;
        }
        let max_delay_s = delays_s.iter().cloned().fold(0.0, f64::max);
        // The grid starts early enough that delayed points have a past at t = 0.
        let origin_s = -((max_delay_s / step_s).ceil() + 2.0) * step_s;

        let still = params.rms_displacement_m == 0.0 || p[0][0].is_nan() || p[0][0] <= 0.0;
        let gain = if still {
            0.0
        } else {
            params.rms_displacement_m / p[0][0].sqrt()
        };
        let mut noise_factor = cholesky(&q);
        let mut stationary_factor = cholesky(&p);
        for row in noise_factor.iter_mut().chain(stationary_factor.iter_mut()) {
            for x in row.iter_mut() {
                *x *= gain;
            }
        }
        let velocity_std_mps = gain * p[1][1].max(0.0).sqrt();
        let mut model = Sway {
            params,
            sway_axis,
            still,
            step_s,
            origin_s,
            phi,
            noise_factor,
            delays_s,
            velocity_std_mps,
            rng,
            state: [0.0; 3],
            grid: VecDeque::new(),
            first_index: 0,
        };
        let start = model.normal3();
        model.state = mat_vec(&stationary_factor, start);
        model.grid.push_back([model.state[0], model.state[1]]);
        Ok(model)
    }

    /// The parameters (directions normalised).
    pub fn params(&self) -> &SwayParams {
        &self.params
    }

    /// Internal grid step, s.
    pub fn grid_step_s(&self) -> f64 {
        self.step_s
    }

    /// Stationary standard deviation of the tip velocity, m/s.
    pub fn velocity_std_mps(&self) -> f64 {
        self.velocity_std_mps
    }

    fn normal3(&mut self) -> [f64; 3] {
        [
            self.rng.sample(StandardNormal),
            self.rng.sample(StandardNormal),
            self.rng.sample(StandardNormal),
        ]
    }

    fn advance_to(&mut self, index: u64) {
        while self.first_index + (self.grid.len() as u64) <= index {
            let noise = self.normal3();
            let kick = mat_vec(&self.noise_factor, noise);
            let next = mat_vec(&self.phi, self.state);
            self.state = [next[0] + kick[0], next[1] + kick[1], next[2] + kick[2]];
            self.grid.push_back([self.state[0], self.state[1]]);
        }
    }

    /// Tip displacement (m) and its rate (m/s) at `t_s`, interpolated on the grid.
    fn tip(&mut self, t_s: f64) -> (f64, f64) {
        if self.still || !t_s.is_finite() {
            return (0.0, 0.0);
        }
        let u = ((t_s - self.origin_s) / self.step_s).max(0.0);
        let n = u.floor();
        let s = u - n;
        let n = n as u64;
        self.advance_to(n + 1);
        // Queries never go back past the oldest kept node (times are non-decreasing).
        let i = n.saturating_sub(self.first_index) as usize;
        let [x0, v0] = self.grid[i];
        let [x1, v1] = self.grid[i + 1];
        let h = self.step_s;
        let (s2, s3) = (s * s, s * s * s);
        let x = (2.0 * s3 - 3.0 * s2 + 1.0) * x0
            + (s3 - 2.0 * s2 + s) * h * v0
            + (-2.0 * s3 + 3.0 * s2) * x1
            + (s3 - s2) * h * v1;
        let v = (6.0 * s2 - 6.0 * s) * x0 / h
            + (3.0 * s2 - 4.0 * s + 1.0) * v0
            + (-6.0 * s2 + 6.0 * s) * x1 / h
            + (3.0 * s2 - 2.0 * s) * v1;
        (x, v)
    }

    fn drop_before(&mut self, t_s: f64) {
        if !t_s.is_finite() {
            return;
        }
        let oldest = ((t_s - self.origin_s) / self.step_s).floor();
        if oldest <= 0.0 {
            return;
        }
        let oldest = oldest as u64;
        while self.first_index < oldest && self.grid.len() > 2 {
            self.grid.pop_front();
            self.first_index += 1;
        }
    }

    fn speed_bound_mps(&self) -> f64 {
        SPEED_BOUND_SIGMAS * self.velocity_std_mps
    }
}

impl MotionModel for Sway {
    /// The speed of the tip point (lever 1), as rendered.
    fn motion_speed_mps(&mut self, t_s: f64) -> f64 {
        let bound = self.speed_bound_mps();
        let (_, v) = self.tip(t_s - self.delays_s[SWAY_POINT_COUNT - 1]);
        v.abs().min(bound)
    }

    fn echoes(&mut self, t_s: f64, _sensor_m: Vec3, out: &mut Vec<Echo>) {
        let p = self.params;
        let amplitude_m = (p.rcs_m2 / SWAY_POINT_COUNT as f64).sqrt();
        let bound = self.speed_bound_mps();
        let mut earliest = t_s;
        for k in 0..SWAY_POINT_COUNT {
            let lever = (k + 1) as f64 / SWAY_POINT_COUNT as f64;
            let delayed = t_s - self.delays_s[k];
            earliest = earliest.min(delayed);
            let (x, v) = self.tip(delayed);
            let v = v.clamp(-bound, bound);
            let rest = add(p.pivot_m, scale(p.arm_direction, lever * p.arm_length_m));
            out.push(Echo {
                position_m: add(rest, scale(self.sway_axis, lever * x)),
                velocity_mps: scale(self.sway_axis, lever * v),
                amplitude_m,
            });
        }
        self.drop_before(earliest);
    }

    fn echo_count(&self) -> usize {
        SWAY_POINT_COUNT
    }

    fn node_rate_hz(&self, wavelength_m: f64) -> f64 {
        let p = &self.params;
        let fastest_hz = p.natural_frequency_hz.max(p.gust_corner_hz);
        // Displacements stay within ~8σ; their content lies below ~f_fast.
        let fourth = (2.0 * PI * fastest_hz).powi(4) * SPEED_BOUND_SIGMAS * p.rms_displacement_m;
        MIN_NODE_RATE_HZ
            .max(1.0 / self.step_s)
            .max(hermite_node_rate_hz(fourth, wavelength_m))
    }

    /// 8 stationary standard deviations of the tip velocity: reported
    /// velocities are capped there (a Gaussian process has no hard bound; the
    /// cap engages with probability ~1e−15 per independent sample).
    fn max_speed_mps(&self) -> f64 {
        self.speed_bound_mps()
    }

    fn active_intervals(&self, duration_s: f64) -> Vec<(f64, f64)> {
        if self.still || duration_s.is_nan() || duration_s <= 0.0 {
            Vec::new()
        } else {
            vec![(0.0, duration_s)]
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reflector::test_support::*;
    use crate::reflector::NODE_PHASE_TOLERANCE_RAD;
    use rustfft::{num_complex::Complex, FftPlanner};

    const SENSOR: Vec3 = [3.0, 0.0, 1.5];

    fn plant() -> SwayParams {
        SwayParams {
            pivot_m: [0.0, 0.0, 0.3],
            arm_direction: [0.0, 0.0, 1.0],
            arm_length_m: 1.2,
            sway_direction: [1.0, 0.0, 0.3],
            natural_frequency_hz: 1.0,
            damping_ratio: 0.05,
            rms_displacement_m: 0.02,
            gust_corner_hz: 2.0,
            rcs_m2: 0.03,
            point_phase_spread_rad: 0.5,
        }
    }

    #[test]
    fn pendulum_frequency_matches_check_17() {
        // docs/reference/check-values.md#pc17 [C]: L = 0.5 m → 0.7048 Hz; 0.25/1/2 m →
        // 0.997/0.498/0.352 Hz.
        let f = |l: f64| pendulum_natural_frequency_hz(l).unwrap();
        assert!((f(0.5) - 0.7048).abs() < 1e-4, "{}", f(0.5));
        assert!((f(0.25) - 0.997).abs() < 1e-3);
        assert!((f(1.0) - 0.498).abs() < 1e-3);
        assert!((f(2.0) - 0.352).abs() < 1e-3);
        assert_eq!(
            pendulum_natural_frequency_hz(0.0).unwrap_err().param,
            "length_m"
        );
    }

    #[test]
    fn matrix_exponential_matches_a_closed_form() {
        // exp([[0, 1], [−ω², 0]]t) = [[cos ωt, sin ωt/ω], [−ω sin ωt, cos ωt]].
        let (omega, t) = (7.0, 1.3);
        let e = expm(&[[0.0, t], [-omega * omega * t, 0.0]]);
        let (s, c) = (omega * t).sin_cos();
        let expected = [[c, s / omega], [-omega * s, c]];
        for i in 0..2 {
            for j in 0..2 {
                assert!((e[i][j] - expected[i][j]).abs() < 1e-12, "{e:?}");
            }
        }
    }

    #[test]
    fn white_noise_limit_matches_the_textbook_variance() {
        // For white forcing with E[w(t)w(t+τ)] = S·δ(τ) the stationary
        // variances are σ_x² = S/(4ζω₀³), σ_v² = S/(4ζω₀): the standard
        // random-vibration result, solved by hand from the Lyapunov equation
        // AP + PAᵀ + BBᵀ = 0 (it is the classic πS₀/(2ζω₀³) with S = 2πS₀).
        // A gust corner far above f₀ makes w white with S = 2σ_w²/ω_c = 2/ω_c;
        // this checks the Van Loan discretization and the doubling sum.
        let (omega0, zeta, omega_c) = (2.0 * PI, 0.05, 2.0 * PI * 2000.0);
        let (_, _, p) = discretize(omega0, zeta, omega_c, 1.0 / 64000.0);
        let s = 2.0 / omega_c;
        let var_x = s / (4.0 * zeta * omega0.powi(3));
        let var_v = s / (4.0 * zeta * omega0);
        assert!(
            (p[0][0] / var_x - 1.0).abs() < 2e-3,
            "{} vs {var_x}",
            p[0][0]
        );
        assert!(
            (p[1][1] / var_v - 1.0).abs() < 2e-3,
            "{} vs {var_v}",
            p[1][1]
        );
    }

    /// Tip displacement sampled at `rate_hz` for `seconds`.
    fn tip_series(params: SwayParams, seed: u8, rate_hz: f64, seconds: f64) -> Vec<f64> {
        let mut model = Sway::new(params, [seed; 32]).unwrap();
        let axis = model.sway_axis;
        let rest = add(
            params.pivot_m,
            scale(model.params.arm_direction, params.arm_length_m),
        );
        let mut out = Vec::new();
        (0..(rate_hz * seconds) as usize)
            .map(|i| {
                out.clear();
                model.echoes(i as f64 / rate_hz, SENSOR, &mut out);
                // The tip is the last point (its delay only shifts the series in time).
                dot(crate::sub(out[SWAY_POINT_COUNT - 1].position_m, rest), axis)
            })
            .collect()
    }

    #[test]
    fn spectrum_peaks_at_f0_with_width_two_zeta_f0_and_rms_on_target() {
        // docs/reference/nuisances.md#n1 [CP]: narrowband motion at f₀ with −3 dB width ≈ 2ζf₀
        // (exact half-power width of the oscillator for ζ = 0.05: 0.1003·f₀).
        let rate_hz = 8.0;
        let x = tip_series(plant(), 11, rate_hz, 32_768.0);
        let rms = (x.iter().map(|v| v * v).sum::<f64>() / x.len() as f64).sqrt();
        assert!((rms / 0.02 - 1.0).abs() < 0.03, "rms {rms}");

        // Welch: Hann segments of 2048 samples (256 s, 1/256 Hz bins), 50 % overlap.
        let segment = 2048;
        let mut planner = FftPlanner::<f64>::new();
        let fft = planner.plan_fft_forward(segment);
        let window: Vec<f64> = (0..segment)
            .map(|i| 0.5 - 0.5 * (2.0 * PI * i as f64 / segment as f64).cos())
            .collect();
        let mut psd = vec![0.0; segment / 2];
        let mut start = 0;
        while start + segment <= x.len() {
            let mut buf: Vec<Complex<f64>> = (0..segment)
                .map(|i| Complex::new(x[start + i] * window[i], 0.0))
                .collect();
            fft.process(&mut buf);
            for (k, p) in psd.iter_mut().enumerate() {
                *p += buf[k].norm_sqr();
            }
            start += segment / 2;
        }
        // 5-bin moving average (0.02 Hz, a fifth of the width) to tame the estimate's scatter.
        let smooth: Vec<f64> = (0..psd.len())
            .map(|k| {
                let lo = k.saturating_sub(2);
                let hi = (k + 3).min(psd.len());
                psd[lo..hi].iter().sum::<f64>() / (hi - lo) as f64
            })
            .collect();
        let bin_hz = rate_hz / segment as f64;
        let peak = (1..smooth.len())
            .max_by(|&a, &b| smooth[a].total_cmp(&smooth[b]))
            .unwrap();
        let peak_hz = peak as f64 * bin_hz;
        assert!((peak_hz - 1.0).abs() < 0.01, "peak at {peak_hz} Hz");
        let half = smooth[peak] / 2.0;
        let crossing = |step: isize| {
            let mut k = peak as isize;
            while smooth[(k + step) as usize] > half {
                k += step;
            }
            let (a, b) = (smooth[k as usize], smooth[(k + step) as usize]);
            (k as f64 + step as f64 * (a - half) / (a - b)) * bin_hz
        };
        let width = crossing(1) - crossing(-1);
        assert!((width / 0.1003 - 1.0).abs() < 0.1, "width {width} Hz");
    }

    #[test]
    fn points_move_in_proportion_to_their_lever_arms() {
        let mut model = Sway::new(plant(), [12; 32]).unwrap();
        let axis = model.sway_axis;
        let rests: Vec<Vec3> = (0..SWAY_POINT_COUNT)
            .map(|k| {
                let lever = (k + 1) as f64 / SWAY_POINT_COUNT as f64;
                add(
                    plant().pivot_m,
                    scale(model.params.arm_direction, lever * 1.2),
                )
            })
            .collect();
        let mut sums = [0.0; SWAY_POINT_COUNT];
        let n = 40_000;
        let mut out = Vec::new();
        for i in 0..n {
            out.clear();
            model.echoes(i as f64 * 0.1, SENSOR, &mut out);
            for k in 0..SWAY_POINT_COUNT {
                let d = crate::sub(out[k].position_m, rests[k]);
                // Only along the sway axis.
                assert!((crate::norm(d) - dot(d, axis).abs()).abs() < 1e-12);
                sums[k] += dot(d, axis).powi(2);
            }
        }
        for (k, sum) in sums.iter().enumerate() {
            let lever = (k + 1) as f64 / SWAY_POINT_COUNT as f64;
            let rms = (sum / n as f64).sqrt();
            assert!(
                (rms / (lever * 0.02) - 1.0).abs() < 0.06,
                "point {k}: {rms}"
            );
        }
        assert!((out[0].amplitude_m - (0.01f64).sqrt()).abs() < 1e-12);
    }

    #[test]
    fn motion_does_not_depend_on_the_call_pattern() {
        let mut coarse = Sway::new(plant(), [13; 32]).unwrap();
        let mut fine = Sway::new(plant(), [13; 32]).unwrap();
        let (mut a, mut b) = (Vec::new(), Vec::new());
        for i in 0..2000 {
            let t = i as f64 * 0.1;
            fine.echoes(t - 0.05, SENSOR, &mut Vec::new());
            a.clear();
            b.clear();
            coarse.echoes(t, SENSOR, &mut a);
            fine.echoes(t, SENSOR, &mut b);
            assert_eq!(a, b, "t = {t}");
        }
    }

    #[test]
    fn speeds_stay_far_below_the_bound_and_velocity_is_consistent() {
        let mut model = Sway::new(plant(), [14; 32]).unwrap();
        let times: Vec<f64> = (0..200_000).map(|i| i as f64 * 0.01).collect();
        let samples = sample(&mut model, &times, SENSOR);
        let largest = largest_speed(&samples);
        assert!(largest < 0.75 * model.max_speed_mps(), "{largest}");
        // Velocity is the derivative of the (interpolated) position.
        let mut model = Sway::new(plant(), [14; 32]).unwrap();
        let times: Vec<f64> = (1..200).map(|i| i as f64 * 0.173).collect();
        assert_velocity_is_the_derivative(&mut model, &times, SENSOR, 1e-6, 1e-6);
    }

    #[test]
    fn node_rate_keeps_interpolated_phase_accurate() {
        // At 24.125 GHz (λ = 12.4 mm) a 2 cm RMS sway spans several IF cycles.
        let lambda = 299_792_458.0 / 24.125e9;
        let make = || -> Box<dyn MotionModel> { Box::new(Sway::new(plant(), [15; 32]).unwrap()) };
        let error = worst_interpolation_phase_error(&make, lambda, 0.0, 120.0, SENSOR, 0.1);
        assert!(error <= NODE_PHASE_TOLERANCE_RAD, "{error}");
    }

    #[test]
    fn bad_parameters_are_named() {
        let bad = |p: SwayParams| Sway::new(p, [0; 32]).unwrap_err().param;
        assert_eq!(
            bad(SwayParams {
                sway_direction: [0.0, 0.0, -2.0],
                ..plant()
            }),
            "sway_direction"
        );
        assert_eq!(
            bad(SwayParams {
                damping_ratio: 0.0,
                ..plant()
            }),
            "damping_ratio"
        );
        assert_eq!(
            bad(SwayParams {
                natural_frequency_hz: f64::NAN,
                ..plant()
            }),
            "natural_frequency_hz"
        );
        assert_eq!(
            bad(SwayParams {
                rms_displacement_m: -0.01,
                ..plant()
            }),
            "rms_displacement_m"
        );
        let still = Sway::new(
            SwayParams {
                rms_displacement_m: 0.0,
                ..plant()
            },
            [0; 32],
        )
        .unwrap();
        assert!(still.active_intervals(10.0).is_empty());
        assert_eq!(still.max_speed_mps(), 0.0);
    }
}
