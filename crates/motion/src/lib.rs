//! Motion models: what moves in a room, as a set of point echoes over time.
//!
//! Every actor of a scene (a walking person, a breathing person, a swaying
//! plant, a fan, a pet, a door, a bench reflector) is turned into a handful of
//! point echoes, each with a position, a velocity and a signed amplitude
//! `√σ` (square root of its radar cross-section, in metres). The scene crate
//! owns the radar: it applies the antenna pattern, the R⁻² amplitude law and
//! the round-trip phase 4πR/λ. Keeping the models radar-agnostic means one
//! synthesis loop serves every actor, and the models can be tested on their
//! kinematics alone.
//!
//! Models are evaluated at a modest "node" rate that each model declares
//! ([`MotionModel::node_rate_hz`]); the synthesizer interpolates ranges between
//! nodes with cubic Hermite polynomials, using the velocities given here.
//! Calls come with non-decreasing times, so a model may keep state (a random
//! gust process, for instance) and advance it.
#![deny(missing_docs)]

pub mod animal;
pub mod breathing;
pub mod door;
pub mod fan;
pub mod path;
pub mod rcs;
pub mod reflector;
pub mod standing;
pub mod sway;
pub mod walker;

/// The speed at or above which an actor counts as moving, m/s (see the crate doc).
pub const MOVING_SPEED_MPS: f64 = 0.1;

/// Room coordinates: x, y horizontal, z up, metres.
pub type Vec3 = [f64; 3];

/// One point echo at one instant.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Echo {
    /// Position in room coordinates, m.
    pub position_m: Vec3,
    /// Velocity in room coordinates, m/s (used to interpolate the range between nodes).
    pub velocity_mps: Vec3,
    /// Signed amplitude √σ in m (σ = radar cross-section in m²). A sign change
    /// flips the echo's phase by π, as a sinc-shaped blade return does.
    pub amplitude_m: f64,
}

/// A fast factor sinc x = sin x / x of an echo's amplitude, given by its
/// argument and the argument's rate at a node.
///
/// A line scatterer (a fan blade) returns √σ·sinc(x) with x proportional to
/// the line's component along the line of sight (see [`fan`]); as the line
/// turns through broadside, x sweeps through zero in a fraction of a
/// revolution (the flash). The amplitude then changes far faster than the
/// range, but x itself is as smooth as the range, so the renderer can take x
/// by cubic Hermite interpolation from its value and rate at the nodes and
/// evaluate sinc x per sample, with nodes at the range's rate rather than
/// many per flash ([`MotionModel::echoes_with_flashes`]).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Flash {
    /// The argument x, rad.
    pub argument_rad: f64,
    /// dx/dt, rad/s.
    pub argument_rate_rad_s: f64,
}

impl Flash {
    /// No fast factor: sinc 0 = 1.
    pub const NONE: Flash = Flash {
        argument_rad: 0.0,
        argument_rate_rad_s: 0.0,
    };
}

/// A fast sinusoidal displacement shared by every echo of a model,
/// A(t)·sin(ωt + ψ) along a fixed unit direction D̂ (a housing humming at
/// twice the mains frequency), which the renderer adds per sample instead of
/// following it with nodes.
///
/// For an echo at unit line of sight û (from the sensor) the displacement
/// changes the range by A·sin(ωt + ψ)·(û·D̂) to first order, so its phase
/// gains β·sin(ωt + ψ) with β = (4π/λ)·A·(û·D̂) and its R⁻² amplitude a
/// factor 1 + γ·sin(ωt + ψ), γ = −2A·(û·D̂)/R; the renderer takes β and γ
/// from the nodes (linear between them, as the slow amplitudes) and the sine
/// at every sample. Second-order terms are left out (4e-7 rad for A = 2e-5 m
/// at 24 GHz and R ≥ 1 m; docs/reference/radar-physics.md#r11).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Vibration {
    /// Direction of the displacement, a unit vector.
    pub direction: Vec3,
    /// ω, rad/s.
    pub angular_rate_rad_s: f64,
    /// ψ, the phase at t = 0, rad.
    pub phase_rad: f64,
    /// The largest amplitude A over the trial, m.
    pub max_amplitude_m: f64,
}

/// The largest phase excursion (4π/λ)·A, rad, of a [`Vibration`] the renderer
/// takes per sample: it evaluates e^{−jβ·sin} by a short series (error below
/// 1e-11 up to this bound). A model whose vibration swings the phase further
/// keeps it in its echoes and its node rate.
pub const MAX_VIBRATION_PHASE_RAD: f64 = 0.25;

/// A moving thing, seen as point echoes.
pub trait MotionModel: Send {
    /// Appends this model's echoes at time `t_s` (seconds from trial start).
    ///
    /// `sensor_m` is the sensor position: aspect-dependent cross-sections
    /// (body-segment ellipsoids, fan blades, door plates) need the line of
    /// sight. Calls come with non-decreasing `t_s`. An absent actor appends nothing
    /// or echoes of zero amplitude; the number of echoes may not change while
    /// the actor is present (the synthesizer pairs echoes between nodes by index),
    /// so models that appear and disappear keep their echo count and ramp amplitudes.
    fn echoes(&mut self, t_s: f64, sensor_m: Vec3, out: &mut Vec<Echo>);

    /// Like [`echoes`](MotionModel::echoes), for rendering: the same echoes, but an
    /// echo whose amplitude holds a fast sinc factor gives its amplitude without
    /// it and the factor's argument in `flashes` (one entry appended per echo,
    /// [`Flash::NONE`] where there is none). The renderer multiplies the
    /// amplitude by sinc of the interpolated argument at every sample, and
    /// places its nodes at [`flash_node_rate_hz`](MotionModel::flash_node_rate_hz).
    /// By default every echo has [`Flash::NONE`].
    fn echoes_with_flashes(
        &mut self,
        t_s: f64,
        sensor_m: Vec3,
        out: &mut Vec<Echo>,
        flashes: &mut Vec<Flash>,
    ) {
        self.echoes(t_s, sensor_m, out);
        flashes.resize(out.len(), Flash::NONE);
    }

    /// The node rate, Hz, for rendering through
    /// [`echoes_with_flashes`](MotionModel::echoes_with_flashes): the ranges, the
    /// slow amplitudes and the flash arguments interpolated as accurately as
    /// [`node_rate_hz`](MotionModel::node_rate_hz) promises for the whole echo.
    /// By default the same as `node_rate_hz`.
    fn flash_node_rate_hz(&self, wavelength_m: f64) -> f64 {
        self.node_rate_hz(wavelength_m)
    }

    /// A fast vibration the renderer adds per sample: when this returns `Some`,
    /// [`echoes_with_flashes`](MotionModel::echoes_with_flashes) leaves the
    /// vibration's displacement (and its velocity) out of every echo,
    /// [`vibration_amplitude_m`](MotionModel::vibration_amplitude_m) gives
    /// its amplitude, and [`flash_node_rate_hz`](MotionModel::flash_node_rate_hz)
    /// need not follow it; (4π/λ)·`max_amplitude_m` is at most
    /// [`MAX_VIBRATION_PHASE_RAD`] at the model's wavelength. `echoes` still
    /// includes it. By default there is none.
    fn vibration(&self) -> Option<Vibration> {
        None
    }

    /// Whether the model may hand its vibration to the renderer (`true`, the
    /// default) or must keep it in its echoes and node rate (`false`: then
    /// [`vibration`](MotionModel::vibration) returns `None`). The synthesizer
    /// chooses whichever costs less (per-sample work against nodes saved).
    fn set_vibration_per_sample(&mut self, _per_sample: bool) {}

    /// The amplitude A of [`vibration`](MotionModel::vibration) at `t_s`, m
    /// (a slow function of time: the renderer interpolates it linearly between nodes).
    fn vibration_amplitude_m(&self, _t_s: f64) -> f64 {
        0.0
    }

    /// The node rate, Hz, at which this model's ranges stay within the phase
    /// tolerance and its slow amplitudes within 1 % when the renderer takes the
    /// amplitudes by a cubic through four nodes (slopes by central differences,
    /// Catmull–Rom) instead of a line through two; `None` (the default) when the
    /// model does not offer it (amplitudes with steps, which a cubic would ring
    /// around). The synthesizer uses it where it is below
    /// [`flash_node_rate_hz`](MotionModel::flash_node_rate_hz).
    fn cubic_amplitude_node_rate_hz(&self, _wavelength_m: f64) -> Option<f64> {
        None
    }

    /// Number of echoes [`echoes`](MotionModel::echoes) appends on every call.
    fn echo_count(&self) -> usize;

    /// The lowest rate, in Hz, at which this model must be evaluated so that
    /// cubic interpolation of its ranges (and linear interpolation of its
    /// amplitudes) stays accurate at wavelength `wavelength_m`.
    fn node_rate_hz(&self, wavelength_m: f64) -> f64;

    /// An upper bound on the speed of any of its echoes, m/s (sets the
    /// synthesizer's oversampling factor from the largest Doppler 2v/λ).
    fn max_speed_mps(&self) -> f64;

    /// The highest frequency, Hz, in this model's echoes at `wavelength_m`:
    /// the largest Doppler 2v/λ, plus any modulation rate that widens the
    /// spectrum beyond it (a shaker or a housing vibrating at f_v puts
    /// sidebands out to about 2v/λ + f_v, Carson's rule). Sets the
    /// synthesizer's internal rate.
    fn max_doppler_hz(&self, wavelength_m: f64) -> f64 {
        2.0 * self.max_speed_mps() / wavelength_m
    }

    /// Whether the echoes' sum stays within ±[`max_doppler_hz`](MotionModel::max_doppler_hz)
    /// closely enough to be rendered at a few times that rate and brought up to
    /// the internal rate by a band-limited interpolator (the scene crate's
    /// `upsample`): true only for a model whose velocities and amplitudes never
    /// step (eased starts and stops, raised-cosine ramps). A velocity step (a
    /// reflector stopping dead) is a kink in the phase, whose spectrum falls
    /// only as 1/f²: interpolated from four samples per Doppler cycle it is
    /// off by per cents near the kink, so such a model is rendered at the
    /// internal rate. By default false.
    fn band_limited(&self) -> bool {
        false
    }

    /// Intervals (seconds) in which any part of the actor moves at all, clipped to
    /// `[0, duration_s]`: the truth lists a nuisance over these (any motion may
    /// cause a false alarm), and samples [`motion_speed_mps`](MotionModel::motion_speed_mps)
    /// only inside them (outside, the motion speed is zero).
    fn active_intervals(&self, duration_s: f64) -> Vec<(f64, f64)>;

    /// The actor's motion speed at `t_s`, m/s: the speed that says whether it is
    /// moving (see the crate doc for each kind); 0 while absent. Calls come
    /// with non-decreasing `t_s`, as for [`echoes`](MotionModel::echoes), and
    /// may be interleaved with them at the same times.
    fn motion_speed_mps(&mut self, t_s: f64) -> f64;

    /// Intervals (seconds, clipped to `[0, duration_s]`) in which a body (a
    /// person or an animal) is there, moving or not: the truth labels the parts
    /// of them below [`MOVING_SPEED_MPS`] *present, not moving*. Empty for
    /// objects (a closed door or a fan at rest is not a presence).
    fn body_presence_intervals(&self, _duration_s: f64) -> Vec<(f64, f64)> {
        Vec::new()
    }
}

/// Euclidean norm.
pub fn norm(v: Vec3) -> f64 {
    (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt()
}

/// `a - b`.
pub fn sub(a: Vec3, b: Vec3) -> Vec3 {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

/// Dot product.
pub fn dot(a: Vec3, b: Vec3) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}
