//! Doppler units: radial speed ↔ Doppler frequency, frame length ↔ velocity
//! resolution, and the resolution of detector parameters given in either unit.
//!
//! **The one design decision: a detector's bands and frames are physical
//! quantities first.** A walker's torso moves at the same 0.3–1.5 m/s in
//! front of a 2.45 GHz and a 24.125 GHz module, but its Doppler line is ten
//! times higher at 24 GHz (f_D = 2·v·f_c/c, Skolnik, *Introduction to Radar
//! Systems*, 3rd ed., ch. 3; docs/reference/radar-physics.md#r1). A band written in hertz
//! therefore fits one carrier; a band written in m/s fits every carrier. The
//! same holds for frames: a frame of T seconds resolves speeds Δv = λ/(2T)
//! (one FFT bin is 1/T Hz, and 1 Hz is λ/2 m/s), so a fixed frame is ten
//! times coarser at 2.45 GHz than at 24 GHz. Detectors declare both unit
//! families and resolve them here, with one rule set:
//!
//! - **Which unit.** A choice parameter (`band_units`: `auto` | `hz` | `mps`;
//!   `frame_units`: `auto` | `samples` | `s` | `mps`). `auto`, the default,
//!   takes the unit of the parameters the suite actually set (a suite that
//!   sets `low_hz` gets hertz), refuses a mix of units, and uses the
//!   detector's default unit (m/s) when none is set. An explicit unit with a
//!   parameter of the other unit set is refused, naming both: a value the user
//!   wrote is never silently ignored.
//! - **Nyquist.** An edge the user set is never moved: above the stream's
//!   Nyquist frequency fs/2 it is refused with a [`ParamError`] naming it. An
//!   upper edge left at its m/s default is clipped to fs/2 (a 4 m/s limb band
//!   at 24 GHz is 644 Hz, above the 500 Hz Nyquist of a 1 kHz ADC: the
//!   detector keeps the part it can see, and `doppler_bands` shows the
//!   clipped band); a default band whose *lower* edge is at or above fs/2 is
//!   refused, since nothing of it is left.
//! - **Frames.** A frame given as a velocity resolution Δv lasts
//!   T = λ/(2Δv); given in seconds it lasts T. Either becomes
//!   N = ⌈T·fs⌉ samples rounded up to an even count (so a real stream's
//!   one-sided spectrum has its Nyquist bin), and, with `frame_pow2`, up to
//!   the next power of two. Rounding up means the resolution is never coarser
//!   than asked; the price is latency: at most one sample (two with the even
//!   rule), or up to ×2 with `frame_pow2`. The hop is then
//!   `hop_fraction`·N samples (at least 1).

use crate::detector::{ParamError, Params};
use crate::param_decl::{ChoiceParam, FlagParam, IntegerParam, RealParam};
use crate::StreamInfo;

/// Speed of light in vacuum, m/s (exact, SI definition of the metre).
pub const SPEED_OF_LIGHT_MPS: f64 = 299_792_458.0;

/// Wavelength λ = c/f_c of a carrier, m.
///
/// ```
/// // docs/reference/radar-physics.md#r8: 12.427 mm at 24.125 GHz.
/// let l = echobench_core::doppler::wavelength_m(24.125e9);
/// assert!((l - 12.427e-3).abs() < 1e-6);
/// ```
pub fn wavelength_m(carrier_hz: f64) -> f64 {
    SPEED_OF_LIGHT_MPS / carrier_hz
}

/// Doppler frequency of a radial speed, f_D = 2·v·f_c/c, Hz (Skolnik ch. 3;
/// docs/reference/radar-physics.md#r1).
pub fn doppler_hz(speed_mps: f64, carrier_hz: f64) -> f64 {
    2.0 * speed_mps * carrier_hz / SPEED_OF_LIGHT_MPS
}

/// Radial speed of a Doppler frequency, v = f_D·c/(2·f_c), m/s (inverse of [`doppler_hz`]).
pub fn speed_mps(doppler_hz: f64, carrier_hz: f64) -> f64 {
    doppler_hz * SPEED_OF_LIGHT_MPS / (2.0 * carrier_hz)
}

/// Velocity resolution of a coherent frame of `frame_s` seconds, Δv = λ/(2T), m/s.
///
/// One DFT bin of a T-second frame is 1/T Hz wide, and 1 Hz of Doppler is λ/2 m/s.
pub fn resolution_mps(frame_s: f64, carrier_hz: f64) -> f64 {
    wavelength_m(carrier_hz) / (2.0 * frame_s)
}

/// Frame duration that resolves `resolution_mps`, T = λ/(2Δv), s (inverse of [`resolution_mps`]).
pub fn frame_s_for_resolution(resolution_mps: f64, carrier_hz: f64) -> f64 {
    wavelength_m(carrier_hz) / (2.0 * resolution_mps)
}

/// The carrier of `info`, refused unless positive and finite: needed whenever a
/// frame is given in m/s.
///
/// # Errors
/// A [`ParamError`] of `detector` on `param` (the m/s parameter that needed it).
pub fn check_carrier(detector: &str, param: &str, info: &StreamInfo) -> Result<f64, ParamError> {
    let carrier_hz = info.carrier_hz;
    if carrier_hz.is_finite() && carrier_hz > 0.0 {
        Ok(carrier_hz)
    } else {
        Err(ParamError::new(
            detector,
            param,
            "m/s",
            format!("a speed needs the stream's carrier frequency, got {carrier_hz} Hz"),
        ))
    }
}

/// The unit a detector's Doppler bands are given in.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BandUnits {
    /// Hertz, used as written.
    Hz,
    /// Radial speed, converted through the carrier.
    Mps,
}

/// One band's edge parameters in both units, each declared once (name, range,
/// default, description): the detector's table lists their `spec()`s and
/// [`resolve_band`] reads them back.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BandParams {
    /// Lower edge in Hz.
    pub low_hz: RealParam,
    /// Upper edge in Hz.
    pub high_hz: RealParam,
    /// Lower edge in m/s.
    pub low_mps: RealParam,
    /// Upper edge in m/s.
    pub high_mps: RealParam,
}

/// The `band_units` choice (`auto` | `hz` | `mps`, default `auto`); `None` is `auto`.
pub const BAND_UNITS: ChoiceParam<Option<BandUnits>> = ChoiceParam {
    name: "band_units",
    about: "bands given as auto (by the parameters set; default m/s), hz, or mps (speeds through \
            2v/λ)",
    options: &["auto", "hz", "mps"],
    values: &[None, Some(BandUnits::Hz), Some(BandUnits::Mps)],
    default: "auto",
};

/// Decides the band unit from the choice `choice` (usually [`BAND_UNITS`]) and
/// which of `bands`' edges the suite set (module doc).
///
/// # Errors
/// Hz and m/s edges both set, or an explicit unit with an edge of the other unit set.
pub fn band_units(
    detector: &str,
    params: &Params,
    choice: &ChoiceParam<Option<BandUnits>>,
    bands: &[&BandParams],
) -> Result<BandUnits, ParamError> {
    let hz_given = bands
        .iter()
        .flat_map(|b| [b.low_hz, b.high_hz])
        .find(|p| p.is_given(params))
        .map(|p| p.name);
    let mps_given = bands
        .iter()
        .flat_map(|b| [b.low_mps, b.high_mps])
        .find(|p| p.is_given(params))
        .map(|p| p.name);
    let choice_name = choice.name;
    let mixed = |unit: &str, other: &str| {
        ParamError::new(
            detector,
            other,
            "set",
            format!(
                "{choice_name} = {unit} but `{other}` is in the other unit; give the bands in one \
                 unit (set {choice_name} to match, or remove `{other}`)"
            ),
        )
    };
    match choice.get(params)? {
        Some(BandUnits::Hz) => match mps_given {
            Some(name) => Err(mixed("hz", name)),
            None => Ok(BandUnits::Hz),
        },
        Some(BandUnits::Mps) => match hz_given {
            Some(name) => Err(mixed("mps", name)),
            None => Ok(BandUnits::Mps),
        },
        None => match (hz_given, mps_given) {
            (Some(hz), Some(mps)) => Err(ParamError::new(
                detector,
                &format!("{hz}, {mps}"),
                "both set",
                "one detector's bands are given either in Hz or in m/s, not both",
            )),
            (Some(_), None) => Ok(BandUnits::Hz),
            _ => Ok(BandUnits::Mps),
        },
    }
}

/// A band resolved to hertz, with the names of the parameters it came from
/// (for error messages that name what the user wrote).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ResolvedBand {
    /// Lower edge, Hz.
    pub low_hz: f64,
    /// Upper edge, Hz.
    pub high_hz: f64,
    /// The parameter the lower edge came from.
    pub low_name: &'static str,
    /// The parameter the upper edge came from.
    pub high_name: &'static str,
    /// True when the upper edge was a default clipped to Nyquist.
    pub clipped: bool,
}

/// Resolves one band to hertz in `units`.
///
/// In Hz the edges are returned as written (the detector applies its own
/// checks, as before m/s existed). In m/s they are converted through the
/// carrier and the Nyquist rule of the module doc applies. An edge of 0 stays
/// 0 (detectors use 0 for "off"). `open_high`: an upper edge of 0 means "no
/// upper edge" and is left at 0, not clipped or refused.
///
/// # Errors
/// No carrier for an m/s band; a set m/s edge above Nyquist; a default m/s
/// band starting at or above Nyquist.
pub fn resolve_band(
    detector: &str,
    params: &Params,
    info: &StreamInfo,
    units: BandUnits,
    band: &BandParams,
) -> Result<ResolvedBand, ParamError> {
    match units {
        BandUnits::Hz => Ok(ResolvedBand {
            low_hz: band.low_hz.get(params)?,
            high_hz: band.high_hz.get(params)?,
            low_name: band.low_hz.name,
            high_name: band.high_hz.name,
            clipped: false,
        }),
        BandUnits::Mps => {
            let carrier_hz = info.carrier_hz;
            if !(carrier_hz.is_finite() && carrier_hz > 0.0) {
                return Err(ParamError::new(
                    detector,
                    "band_units",
                    "mps",
                    format!(
                        "bands in m/s (the default) need the stream's carrier frequency, got \
                         {carrier_hz} Hz; give the bands in Hz (band_units: hz) for this stream"
                    ),
                ));
            }
            let nyquist_hz = info.sample_rate_hz / 2.0;
            let (low_mps, high_mps) = (band.low_mps.get(params)?, band.high_mps.get(params)?);
            let names = band;
            let mut band = ResolvedBand {
                low_hz: doppler_hz(low_mps, carrier_hz),
                high_hz: doppler_hz(high_mps, carrier_hz),
                low_name: names.low_mps.name,
                high_name: names.high_mps.name,
                clipped: false,
            };
            let above = |name: &str, mps: f64, hz: f64, rule: &str| {
                ParamError::new(
                    detector,
                    name,
                    format!("{mps} m/s"),
                    format!(
                        "{hz:.1} Hz at the {:.4} GHz carrier lies above the Nyquist frequency \
                         fs/2 = {nyquist_hz} Hz of this stream ({rule})",
                        carrier_hz / 1e9
                    ),
                )
            };
            if band.high_hz > nyquist_hz {
                if names.high_mps.is_given(params) {
                    return Err(above(
                        names.high_mps.name,
                        high_mps,
                        band.high_hz,
                        "an edge you set is never moved; lower it or sample faster",
                    ));
                }
                band.high_hz = nyquist_hz;
                band.clipped = true;
            }
            if band.low_hz >= nyquist_hz {
                return Err(above(
                    names.low_mps.name,
                    low_mps,
                    band.low_hz,
                    "nothing of the band is left; give the band explicitly or sample faster",
                ));
            }
            Ok(band)
        }
    }
}

/// How a detector's frame length was given.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FrameUnits {
    /// `frame_len` and `hop` in samples.
    Samples,
    /// `frame_s` in seconds, hop as `hop_fraction` of the frame.
    Seconds,
    /// `resolution_mps` as a velocity resolution Δv, hop as `hop_fraction` of the frame.
    Mps,
}

/// A resolved frame: what the detector's framer uses.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Framing {
    /// Frame length, samples (sample instants for I/Q).
    pub frame_len: usize,
    /// Samples between frame starts.
    pub hop: usize,
}

impl Framing {
    /// Frame duration at `sample_rate_hz`, s.
    pub fn frame_s(&self, sample_rate_hz: f64) -> f64 {
        self.frame_len as f64 / sample_rate_hz
    }

    /// Velocity resolution λ/(2T) of the frame at this stream's carrier, m/s.
    pub fn resolution_mps(&self, info: &StreamInfo) -> f64 {
        resolution_mps(self.frame_s(info.sample_rate_hz), info.carrier_hz)
    }
}

/// How a detector's frame family is resolved: the default unit when the suite
/// sets none of the frame parameters, and the frame lengths it accepts.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FrameRules {
    /// Unit used under `frame_units: auto` when no frame parameter is set.
    pub default_units: FrameUnits,
    /// Smallest frame, samples.
    pub min_len: usize,
    /// Largest frame, samples (also the upper bound of `frame_len` and `hop`).
    pub max_len: usize,
}

/// A detector's defaults for the frame family.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FrameDefaults {
    /// `frame_len`, samples.
    pub frame_len: i64,
    /// `hop`, samples.
    pub hop: i64,
    /// `frame_s`, s.
    pub frame_s: f64,
    /// `resolution_mps`, m/s.
    pub resolution_mps: f64,
    /// `hop_fraction`.
    pub hop_fraction: f64,
}

/// The frame family, each parameter declared once: `frame_units` (auto),
/// `frame_len`/`hop` (samples), `frame_s`, `resolution_mps`, `hop_fraction`,
/// `frame_pow2`, with the detector's defaults and [`FrameRules`]. The
/// detector's table lists each field's `spec()`; [`resolve_frame`] reads them.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FrameParams {
    /// `frame_units`: `auto` (`None`), `samples`, `s` or `mps`.
    pub units: ChoiceParam<Option<FrameUnits>>,
    /// `frame_len`, samples.
    pub frame_len: IntegerParam,
    /// `hop`, samples.
    pub hop: IntegerParam,
    /// `frame_s`, s.
    pub frame_s: RealParam,
    /// `resolution_mps`, m/s.
    pub resolution_mps: RealParam,
    /// `hop_fraction` of the frame.
    pub hop_fraction: RealParam,
    /// `frame_pow2`.
    pub pow2: FlagParam,
    /// Default unit and accepted lengths.
    pub rules: FrameRules,
}

impl FrameParams {
    /// The family with these defaults and rules.
    pub const fn new(defaults: FrameDefaults, rules: FrameRules) -> FrameParams {
        let max_len = rules.max_len as i64;
        FrameParams {
            units: ChoiceParam {
                name: "frame_units",
                about: "frame given as auto (by the parameters set; default: the velocity \
                        resolution), samples, s or mps",
                options: &["auto", "samples", "s", "mps"],
                values: &[
                    None,
                    Some(FrameUnits::Samples),
                    Some(FrameUnits::Seconds),
                    Some(FrameUnits::Mps),
                ],
                default: "auto",
            },
            frame_len: IntegerParam {
                name: "frame_len",
                unit: "samples",
                about: "frame length (frame_units = samples)",
                min: 1,
                max: max_len,
                default: defaults.frame_len,
            },
            hop: IntegerParam {
                name: "hop",
                unit: "samples",
                about: "samples between frame starts (frame_units = samples)",
                min: 1,
                max: max_len,
                default: defaults.hop,
            },
            frame_s: RealParam {
                name: "frame_s",
                unit: "s",
                about: "frame duration (frame_units = s)",
                min: 1e-4,
                max: 60.0,
                default: defaults.frame_s,
            },
            resolution_mps: RealParam {
                name: "resolution_mps",
                unit: "m/s",
                about: "velocity resolution λ/(2T) that sets the frame (frame_units = mps)",
                min: 1e-3,
                max: 100.0,
                default: defaults.resolution_mps,
            },
            hop_fraction: RealParam {
                name: "hop_fraction",
                unit: "",
                about: "hop as a fraction of the frame (frame_units = s or mps)",
                min: 0.01,
                max: 4.0,
                default: defaults.hop_fraction,
            },
            pow2: FlagParam {
                name: "frame_pow2",
                about: "round a frame given in s or m/s up to a power of two (finer Δv, longer \
                        latency)",
                default: false,
            },
            rules,
        }
    }
}

/// Resolves the frame family ([`FrameParams`]) to samples, by the rules of the
/// module doc.
///
/// # Errors
/// Parameters of two units set; a frame outside `[min_len, max_len]` samples;
/// no carrier for `resolution_mps`.
pub fn resolve_frame(
    detector: &str,
    params: &Params,
    info: &StreamInfo,
    frame: &FrameParams,
) -> Result<Framing, ParamError> {
    let fs = crate::detector::check_sample_rate(detector, info)?;
    let rules = frame.rules;
    let given = |p: RealParam| p.is_given(params).then_some(p.name);
    let samples_given = [frame.frame_len, frame.hop]
        .into_iter()
        .find(|p| p.is_given(params))
        .map(|p| p.name);
    let seconds_given = given(frame.frame_s);
    let mps_given = given(frame.resolution_mps);
    let fraction_given = given(frame.hop_fraction);
    let set: Vec<&str> = [samples_given, seconds_given, mps_given]
        .into_iter()
        .flatten()
        .collect();
    let units = match frame.units.get(params)? {
        None => {
            if set.len() > 1 {
                return Err(ParamError::new(
                    detector,
                    &set.join(", "),
                    "all set",
                    "give the frame one way: frame_len/hop (samples), frame_s (s) or \
                     resolution_mps (velocity resolution)",
                ));
            }
            if set.is_empty() {
                rules.default_units
            } else if seconds_given.is_some() {
                FrameUnits::Seconds
            } else if mps_given.is_some() {
                FrameUnits::Mps
            } else {
                FrameUnits::Samples
            }
        }
        Some(units) => units,
    };
    // Rounding applies to a frame computed from s or m/s; asked for on a frame given in
    // samples it would be ignored, so it is refused like the other foreign parameters.
    let pow2 = frame.pow2.get(params)?;
    let pow2_given = (frame.pow2.is_given(params) && pow2).then_some(frame.pow2.name);
    let foreign: &[Option<&str>] = match units {
        FrameUnits::Samples => &[seconds_given, mps_given, fraction_given, pow2_given],
        FrameUnits::Seconds => &[samples_given, mps_given],
        FrameUnits::Mps => &[samples_given, seconds_given],
    };
    if let Some(name) = foreign.iter().flatten().next() {
        return Err(ParamError::new(
            detector,
            name,
            "set",
            format!(
                "the frame is given in {} here, so `{name}` would be ignored; remove it or \
                 change frame_units",
                match units {
                    FrameUnits::Samples => "samples (frame_len, hop)",
                    FrameUnits::Seconds => "seconds (frame_s, hop_fraction)",
                    FrameUnits::Mps => "velocity resolution (resolution_mps, hop_fraction)",
                }
            ),
        ));
    }
    let in_range = |name: &str, value: String, len: usize| {
        if (rules.min_len..=rules.max_len).contains(&len) {
            Ok(len)
        } else {
            Err(ParamError::new(
                detector,
                name,
                value,
                format!(
                    "gives a frame of {len} samples at fs = {fs} Hz; expected {} to {} samples",
                    rules.min_len, rules.max_len
                ),
            ))
        }
    };
    let (frame_len, hop) = match units {
        FrameUnits::Samples => {
            let count = |p: IntegerParam| -> Result<usize, ParamError> {
                let value = p.get(params)?;
                usize::try_from(value)
                    .ok()
                    .filter(|&v| v > 0)
                    .ok_or_else(|| {
                        ParamError::new(detector, p.name, value, "must be a positive whole number")
                    })
            };
            (count(frame.frame_len)?, count(frame.hop)?)
        }
        FrameUnits::Seconds | FrameUnits::Mps => {
            let (name, value, frame_s) = if units == FrameUnits::Seconds {
                let frame_s = frame.frame_s.get(params)?;
                (frame.frame_s.name, format!("{frame_s} s"), frame_s)
            } else {
                let carrier_hz = check_carrier(detector, frame.resolution_mps.name, info)?;
                let dv = frame.resolution_mps.get(params)?;
                (
                    frame.resolution_mps.name,
                    format!("{dv} m/s"),
                    frame_s_for_resolution(dv, carrier_hz),
                )
            };
            let frame_len = frame_samples(frame_s, fs, pow2);
            let frame_len = in_range(name, value, frame_len)?;
            let hop =
                ((frame.hop_fraction.get(params)? * frame_len as f64).round() as usize).max(1);
            (frame_len, hop)
        }
    };
    Ok(Framing { frame_len, hop })
}

/// N = ⌈T·fs⌉ rounded up to even, and up to a power of two with `pow2`
/// (module doc). A product T·fs within 1e-9 of a whole number counts as that
/// number, so 0.128 s at 2 kHz is 256 samples, not 257.
pub fn frame_samples(frame_s: f64, sample_rate_hz: f64, pow2: bool) -> usize {
    let exact = frame_s * sample_rate_hz;
    let n = if (exact - exact.round()).abs() < 1e-9 {
        exact.round()
    } else {
        exact.ceil()
    };
    let n = if n.is_finite() && n >= 1.0 {
        n.min(usize::MAX as f64 / 4.0) as usize
    } else {
        1
    };
    let even = n + n % 2;
    if pow2 {
        even.next_power_of_two()
    } else {
        even
    }
}

/// Velocity resolution of the spectral detectors' default frame, m/s.
///
/// 0.25 m/s: about half the torso's own speed swing over one step (±18 %
/// around the walking speed, i.e. 0.47–0.50 m/s peak to peak at 1.3–1.4 m/s;
/// docs/reference/people.md#p4), so a finer bin would only split a line the gait itself
/// smears. The frame it takes is λ/(2Δv): 0.245 s at 2.45 GHz, 0.103 s at
/// 5.8 GHz, 0.057 s at 10.525 GHz, 0.0249 s at 24.125 GHz; a decision
/// therefore waits ten times longer at 2.45 GHz than at 24 GHz for the same
/// speed resolution.
pub const DEFAULT_RESOLUTION_MPS: f64 = 0.25;

/// Slowest radial speed of the default motion bands, m/s.
///
/// 0.3 m/s: the bottom of a walker's torso speed range (brief of issue 11; a
/// slow walker at 0.5 m/s seen 50° off its heading is at 0.32 m/s radial),
/// and above the peak speed of a swaying object (a 0.5 m pendulum at 5°:
/// 0.19 m/s, docs/reference/nuisances.md#n1), so sway stays out of the motion band.
pub const MOTION_MIN_MPS: f64 = 0.3;

/// Fastest radial speed of the default motion bands, m/s.
///
/// 4.0 m/s: the limbs of a walker at its comfortable 1.3–1.4 m/s (hands to
/// 2·v ≈ 2.8 m/s, ankles to 3.5·v ≈ 4.9 m/s at their brief mid-swing peak;
/// docs/reference/people.md#p4). The ankle's peak lasts a small part of the cycle, so the
/// band takes the bulk of limb energy without reaching a fan's blade tips
/// (12–19 m/s, docs/reference/nuisances.md#n2).
pub const MOTION_MAX_MPS: f64 = 4.0;

#[cfg(test)]
mod tests {
    use super::*;
    use crate::detector::{ParamSpec, ParamValue};

    #[test]
    fn speed_and_doppler_convert_both_ways() {
        // Hand-worked: 2 · 1.3 m/s · 2.45e9 Hz / 299 792 458 m/s
        //   = 6.37e9 / 299 792 458 = 21.248 Hz;
        // at 24.125e9 Hz: 2 · 1.3 · 24.125e9 / 299 792 458 = 62.725e9 / 299 792 458 = 209.227 Hz.
        assert!((doppler_hz(1.3, 2.45e9) - 21.2480).abs() < 1e-3);
        assert!((doppler_hz(1.3, 24.125e9) - 209.2273).abs() < 1e-3);
        // docs/reference/check-values.md#pc2: 1 m/s is 16.345 / 160.945 Hz at 2.45 / 24.125 GHz.
        assert!((doppler_hz(1.0, 2.45e9) - 16.345).abs() < 1e-3);
        assert!((doppler_hz(1.0, 24.125e9) - 160.945).abs() < 1e-3);
        // And back: 100 Hz at 24.125 GHz is 100 / 160.945 = 0.62133 m/s.
        assert!((speed_mps(100.0, 24.125e9) - 0.62133).abs() < 1e-5);
        for v in [0.01, 0.3, 1.3, 4.0, 19.0] {
            let back = speed_mps(doppler_hz(v, 5.8e9), 5.8e9);
            assert!((back - v).abs() < 1e-12 * v.max(1.0));
        }
    }

    #[test]
    fn resolution_and_frame_length_convert_both_ways() {
        // Hand-worked: λ(2.45 GHz) = 299 792 458 / 2.45e9 = 0.122364 m;
        // Δv = 0.25 m/s → T = λ / (2 · 0.25) = 0.244728 s → 489.46 samples at 2 kHz → 490.
        // λ(24.125 GHz) = 0.0124266 m → T = 0.0248532 s → 49.71 samples → 50.
        let t_low = frame_s_for_resolution(0.25, 2.45e9);
        let t_high = frame_s_for_resolution(0.25, 24.125e9);
        assert!((t_low - 0.244728).abs() < 1e-6, "{t_low}");
        assert!((t_high - 0.0248532).abs() < 1e-7, "{t_high}");
        assert_eq!(frame_samples(t_low, 2000.0, false), 490);
        assert_eq!(frame_samples(t_high, 2000.0, false), 50);
        // Power of two: 490 → 512, 50 → 64.
        assert_eq!(frame_samples(t_low, 2000.0, true), 512);
        assert_eq!(frame_samples(t_high, 2000.0, true), 64);
        // The old default frame, 256 samples at 2 kHz = 0.128 s: Δv = λ/(2T) is
        // 0.122364 / 0.256 = 0.47798 m/s at 2.45 GHz and 0.0124266 / 0.256 = 0.048541 m/s
        // at 24.125 GHz: the same frame is ten times coarser at 2.45 GHz.
        assert!((resolution_mps(0.128, 2.45e9) - 0.47798).abs() < 1e-5);
        assert!((resolution_mps(0.128, 24.125e9) - 0.048541).abs() < 1e-6);
        assert_eq!(frame_samples(0.128, 2000.0, false), 256);
        // Odd counts round up to even: 0.0105 s at 1 kHz = 10.5 → 11 → 12.
        assert_eq!(frame_samples(0.0105, 1000.0, false), 12);
    }

    const BAND: BandParams = BandParams {
        low_hz: RealParam {
            name: "low_hz",
            unit: "Hz",
            about: "",
            min: 0.0,
            max: 1e6,
            default: 1.0,
        },
        high_hz: RealParam {
            name: "high_hz",
            unit: "Hz",
            about: "",
            min: 0.0,
            max: 1e6,
            default: 100.0,
        },
        low_mps: RealParam {
            name: "low_mps",
            unit: "m/s",
            about: "",
            min: 0.0,
            max: 100.0,
            default: MOTION_MIN_MPS,
        },
        high_mps: RealParam {
            name: "high_mps",
            unit: "m/s",
            about: "",
            min: 0.0,
            max: 100.0,
            default: MOTION_MAX_MPS,
        },
    };
    const FRAME: FrameParams = FrameParams::new(
        FrameDefaults {
            frame_len: 256,
            hop: 128,
            frame_s: 0.128,
            resolution_mps: DEFAULT_RESOLUTION_MPS,
            hop_fraction: 0.5,
        },
        FrameRules {
            default_units: FrameUnits::Mps,
            min_len: 8,
            max_len: 65536,
        },
    );
    static SPECS: [ParamSpec; 12] = [
        BAND_UNITS.spec(),
        BAND.low_hz.spec(),
        BAND.high_hz.spec(),
        BAND.low_mps.spec(),
        BAND.high_mps.spec(),
        FRAME.units.spec(),
        FRAME.frame_len.spec(),
        FRAME.hop.spec(),
        FRAME.frame_s.spec(),
        FRAME.resolution_mps.spec(),
        FRAME.hop_fraction.spec(),
        FRAME.pow2.spec(),
    ];

    fn resolve(given: &[(&str, ParamValue)]) -> Result<Params, ParamError> {
        let given: Vec<(String, ParamValue)> = given
            .iter()
            .map(|(n, v)| (n.to_string(), v.clone()))
            .collect();
        Params::resolve("t", &SPECS, &given).map_err(ParamError::from)
    }

    fn stream(fs: f64, carrier_hz: f64) -> StreamInfo {
        StreamInfo {
            carrier_hz,
            ..crate::detector::test_stream(fs)
        }
    }

    fn band(given: &[(&str, ParamValue)], info: &StreamInfo) -> Result<ResolvedBand, ParamError> {
        let p = resolve(given)?;
        let units = band_units("t", &p, &BAND_UNITS, &[&BAND])?;
        resolve_band("t", &p, info, units, &BAND)
    }

    #[test]
    fn auto_units_follow_what_the_suite_set() {
        let info = stream(2000.0, 2.45e9);
        // Nothing set: m/s defaults; 1 m/s is 16.3446 Hz at 2.45 GHz
        // (docs/reference/check-values.md#pc2), so 0.3–4 m/s = 4.9034–65.378 Hz.
        let b = band(&[], &info).unwrap();
        assert_eq!((b.low_name, b.high_name), ("low_mps", "high_mps"));
        assert!((b.low_hz - 4.9034).abs() < 1e-3 && (b.high_hz - 65.378).abs() < 1e-3);
        // One Hz edge set: the band is in Hz, the other edge at its Hz default.
        let b = band(&[("high_hz", ParamValue::Real(150.0))], &info).unwrap();
        assert_eq!((b.low_hz, b.high_hz), (1.0, 150.0));
        // Both units set: refused, naming both.
        let e = band(
            &[
                ("high_hz", ParamValue::Real(150.0)),
                ("low_mps", ParamValue::Real(0.5)),
            ],
            &info,
        )
        .unwrap_err();
        assert_eq!(e.param, "high_hz, low_mps");
        // An explicit unit with a parameter of the other: refused, naming it.
        let e = band(
            &[
                ("band_units", ParamValue::Text("mps".into())),
                ("low_hz", ParamValue::Real(5.0)),
            ],
            &info,
        )
        .unwrap_err();
        assert_eq!(e.param, "low_hz");
        // band_units: hz alone keeps the Hz defaults.
        let b = band(&[("band_units", ParamValue::Text("hz".into()))], &info).unwrap();
        assert_eq!((b.low_hz, b.high_hz), (1.0, 100.0));
    }

    #[test]
    fn nyquist_clips_defaults_and_refuses_what_was_set() {
        // 4 m/s at 24.125 GHz = 643.8 Hz, above the 500 Hz Nyquist of a 1 kHz stream.
        let info = stream(1000.0, 24.125e9);
        let b = band(&[], &info).unwrap();
        assert!(b.clipped);
        assert_eq!(b.high_hz, 500.0);
        let e = band(&[("high_mps", ParamValue::Real(4.0))], &info).unwrap_err();
        assert_eq!(e.param, "high_mps");
        assert!(e.message.contains("above the Nyquist"), "{e}");
        // A default band that starts above Nyquist is refused, naming its low edge:
        // 3.5 m/s = 563 Hz > 500 Hz.
        let e = band(&[("low_mps", ParamValue::Real(3.5))], &info).unwrap_err();
        assert_eq!(e.param, "low_mps");
        // No carrier, no speed.
        let e = band(&[], &stream(1000.0, f64::NAN)).unwrap_err();
        assert!(e.message.contains("carrier"), "{e}");
    }

    #[test]
    fn frames_follow_the_unit_that_was_set() {
        let info = stream(2000.0, 2.45e9);
        let frame = |given: &[(&str, ParamValue)]| {
            resolve_frame("t", &resolve(given).unwrap(), &info, &FRAME)
        };
        // Default: Δv = 0.25 m/s → 490 samples at 2.45 GHz, hop 245.
        assert_eq!(
            frame(&[]).unwrap(),
            Framing {
                frame_len: 490,
                hop: 245
            }
        );
        assert_eq!(
            frame(&[("frame_len", ParamValue::Integer(256))]).unwrap(),
            Framing {
                frame_len: 256,
                hop: 128
            }
        );
        assert_eq!(
            frame(&[("frame_s", ParamValue::Real(0.1))]).unwrap(),
            Framing {
                frame_len: 200,
                hop: 100
            }
        );
        assert_eq!(
            frame(&[
                ("resolution_mps", ParamValue::Real(0.25)),
                ("frame_pow2", ParamValue::Flag(true)),
                ("hop_fraction", ParamValue::Real(0.25)),
            ])
            .unwrap(),
            Framing {
                frame_len: 512,
                hop: 128
            }
        );
        let e = frame(&[
            ("frame_len", ParamValue::Integer(256)),
            ("frame_s", ParamValue::Real(0.1)),
        ])
        .unwrap_err();
        assert_eq!(e.param, "frame_len, frame_s");
        let e = frame(&[
            ("frame_len", ParamValue::Integer(256)),
            ("hop_fraction", ParamValue::Real(0.25)),
        ])
        .unwrap_err();
        assert_eq!(e.param, "hop_fraction");
        let e = frame(&[
            ("frame_len", ParamValue::Integer(256)),
            ("frame_pow2", ParamValue::Flag(true)),
        ])
        .unwrap_err();
        assert_eq!(e.param, "frame_pow2");
        let e = frame(&[("resolution_mps", ParamValue::Real(0.001))]).unwrap_err();
        assert!(e.message.contains("expected 8 to 65536"), "{e}");
    }
}
