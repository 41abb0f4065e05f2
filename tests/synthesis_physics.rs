//! End-to-end physics through the synthesizer: scene text in, ADC samples out,
//! checked against radar physics that does not depend on how the synthesizer
//! is written (Doppler, the range equation, I/Q sign, noise through a known
//! front end, aliasing through a weak anti-alias filter, reproducibility).
//!
//! The one design decision: every check drives the public path a user drives
//! (`load_scene_*` → `synthesize` / `Synthesizer::next_block`) and reads only
//! the output samples, so a bug anywhere in motion, rendering, noise, front
//! end or ADC shows up here; expected values come from closed-form physics
//! computed in this file, never from the crates under test.
#![deny(missing_docs)]

use echobench_integration_tests::{scene_from_yaml, trial, workspace_root};
use echobench_scene::{load_scene_file, synthesize, SceneSpec, StreamKey, Synthesizer, Trial};
use rayon::prelude::*;
use rustfft::num_complex::Complex64;
use rustfft::FftPlanner;
use std::f64::consts::PI;

/// Speed of light, m/s (exact by the SI definition).
const SPEED_OF_LIGHT_MPS: f64 = 299_792_458.0;

/// The four usual motion-sensor carriers, Hz (docs/reference/radar-physics.md#r8).
const CARRIERS_HZ: [f64; 4] = [2.45e9, 5.8e9, 10.525e9, 24.125e9];

/// Op-amp output bias of the bench scenes (mid-rail of 0–3.3 V, the scene default), V.
const BIAS_V: f64 = 1.65;

// ---------------------------------------------------------------------------------------------
// Scene text for a bench reflector
// ---------------------------------------------------------------------------------------------

/// A one-reflector bench scene: sensor at (0, 0, 1 m) looking along +x.
#[derive(Debug, Clone)]
struct Bench {
    carrier_hz: f64,
    sample_rate_hz: f64,
    iq: bool,
    duration_s: f64,
    high_pass_hz: Vec<f64>,
    low_pass_hz: Vec<f64>,
    gain_db: f64,
    adc_bits: u8,
    white_noise_v_per_rthz: f64,
    /// Extra lines under `environment:` (already indented by four spaces).
    environment_extra: String,
    /// Extra lines under `sensor:` (already indented by two spaces).
    sensor_extra: String,
    /// The reflector: start range on boresight, m.
    start_range_m: f64,
    /// Travel azimuth, degrees: 180 approaches the sensor, 0 recedes.
    travel_azimuth_deg: f64,
    speed_mps: f64,
    rcs_m2: f64,
    shaker_amplitude_m: f64,
    shaker_hz: f64,
}

impl Bench {
    /// A wide, quiet bench: 1 Hz high-pass, 300 Hz low-pass at 1 kHz, 60 dB, 16-bit ADC.
    fn new(carrier_hz: f64) -> Bench {
        Bench {
            carrier_hz,
            sample_rate_hz: 1000.0,
            iq: false,
            duration_s: 4.0,
            high_pass_hz: vec![1.0],
            low_pass_hz: vec![300.0],
            gain_db: 60.0,
            adc_bits: 16,
            white_noise_v_per_rthz: 30e-9,
            environment_extra: String::new(),
            sensor_extra: String::new(),
            start_range_m: 5.0,
            travel_azimuth_deg: 180.0,
            speed_mps: 0.0,
            rcs_m2: 1.0,
            shaker_amplitude_m: 0.0,
            shaker_hz: 0.0,
        }
    }

    fn yaml(&self) -> String {
        let list = |v: &[f64]| {
            format!(
                "[{}]",
                v.iter()
                    .map(|x| format!("{x:?}"))
                    .collect::<Vec<_>>()
                    .join(", ")
            )
        };
        format!(
            "name: bench\n\
             duration_s: {duration:?}\n\
             sensor:\n  \
               carrier_hz: {carrier:?}\n  \
               sample_rate_hz: {fs:?}\n  \
               output: {output}\n  \
               position_m: [0, 0, 1.0]\n\
             {sensor_extra}  \
               front_end:\n    \
                 high_pass_hz: {hp}\n    \
                 low_pass_hz: {lp}\n    \
                 gain_db: {gain:?}\n    \
                 rails_v: [0, 3.3]\n  \
               adc: {{bits: {bits}, full_scale_v: 3.3}}\n\
             coverage: {{range_m: 20}}\n\
             environment:\n  \
               white_noise_v_per_rthz: {noise:e}\n\
             {environment_extra}\
             actors:\n  \
               - kind: reflector\n    \
                 id: plate\n    \
                 target: true\n    \
                 rcs_m2: {rcs:?}\n    \
                 position_m: [{x:?}, 0, 1.0]\n    \
                 azimuth_deg: {az:?}\n    \
                 speed_mps: {v:?}\n    \
                 shaker_amplitude_m: {a:e}\n    \
                 shaker_hz: {f:?}\n",
            duration = self.duration_s,
            carrier = self.carrier_hz,
            fs = self.sample_rate_hz,
            output = if self.iq { "iq" } else { "real" },
            sensor_extra = self.sensor_extra,
            hp = list(&self.high_pass_hz),
            lp = list(&self.low_pass_hz),
            gain = self.gain_db,
            bits = self.adc_bits,
            noise = self.white_noise_v_per_rthz,
            environment_extra = self.environment_extra,
            rcs = self.rcs_m2,
            x = self.start_range_m,
            az = self.travel_azimuth_deg,
            v = self.speed_mps,
            a = self.shaker_amplitude_m,
            f = self.shaker_hz,
        )
    }

    fn scene(&self) -> SceneSpec {
        scene_from_yaml(&self.yaml())
    }

    fn run(&self) -> Trial {
        trial(&self.scene(), 7, 0)
    }
}

// ---------------------------------------------------------------------------------------------
// Physics computed here, independently of the crates under test
// ---------------------------------------------------------------------------------------------

fn wavelength_m(carrier_hz: f64) -> f64 {
    SPEED_OF_LIGHT_MPS / carrier_hz
}

/// f_d = 2·v·f0/c (Skolnik, *Introduction to Radar Systems*, ch. 3;
/// docs/reference/radar-physics.md#r1).
fn doppler_hz(speed_mps: f64, carrier_hz: f64) -> f64 {
    2.0 * speed_mps * carrier_hz / SPEED_OF_LIGHT_MPS
}

/// |H| of an analog first-order RC high-pass, (f/fc)/√(1 + (f/fc)²) (common practice).
fn analog_high_pass_gain(f_hz: f64, corner_hz: f64) -> f64 {
    let x = f_hz / corner_hz;
    x / (1.0 + x * x).sqrt()
}

/// |H| of an analog first-order RC low-pass, 1/√(1 + (f/fc)²) (common practice).
fn analog_low_pass_gain(f_hz: f64, corner_hz: f64) -> f64 {
    let x = f_hz / corner_hz;
    1.0 / (1.0 + x * x).sqrt()
}

/// Small-signal gain of a bench front end at `f_hz`, analog sections, V/V.
fn analog_front_end_gain(bench: &Bench, f_hz: f64) -> f64 {
    let hp: f64 = bench
        .high_pass_hz
        .iter()
        .map(|&c| analog_high_pass_gain(f_hz, c))
        .product();
    let lp: f64 = bench
        .low_pass_hz
        .iter()
        .map(|&c| analog_low_pass_gain(f_hz, c))
        .product();
    10f64.powf(bench.gain_db / 20.0) * hp * lp
}

/// Peak IF amplitude at the mixer of a 1 m² echo at 1 m on boresight, V.
///
/// Received power by the radar range equation P_r = P_t·G²·λ²·σ/((4π)³·R⁴)
/// (Skolnik, ch. 2), developed as a peak voltage √(2·P_r·R_load) across the
/// mixer load, less the conversion loss (docs/reference/radar-physics.md#r4: IF voltage ∝ √P_r
/// for a mixer in its small-signal regime; common practice).
fn mixer_amplitude_v_at_1m_1m2(
    tx_power_dbm: f64,
    antenna_gain_dbi: f64,
    conversion_loss_db: f64,
    load_ohm: f64,
    carrier_hz: f64,
) -> f64 {
    let lambda = wavelength_m(carrier_hz);
    let tx_w = 1e-3 * 10f64.powf(tx_power_dbm / 10.0);
    let gain = 10f64.powf(antenna_gain_dbi / 10.0);
    let received_w = tx_w * gain * gain * lambda * lambda / (4.0 * PI).powi(3);
    (2.0 * received_w * load_ohm).sqrt() * 10f64.powf(-conversion_loss_db / 20.0)
}

/// Bessel function of the first kind, order n, by its power series
/// J_n(x) = Σ_k (−1)^k (x/2)^{2k+n} / (k!(k+n)!) (Abramowitz & Stegun 9.1.10).
fn bessel_j(n: u32, x: f64) -> f64 {
    let half = 0.5 * x;
    let mut term = half.powi(n as i32) / (1..=n).map(f64::from).product::<f64>();
    let mut sum = term;
    for k in 1..40u32 {
        term *= -half * half / (f64::from(k) * f64::from(k + n));
        sum += term;
    }
    sum
}

// ---------------------------------------------------------------------------------------------
// Spectra
// ---------------------------------------------------------------------------------------------

fn fft(mut data: Vec<Complex64>) -> Vec<Complex64> {
    let plan = FftPlanner::new().plan_fft_forward(data.len());
    plan.process(&mut data);
    data
}

/// Periodic Hann window of length n (symmetric under k → n − k).
fn hann(n: usize) -> Vec<f64> {
    (0..n)
        .map(|k| 0.5 - 0.5 * (2.0 * PI * k as f64 / n as f64).cos())
        .collect()
}

/// The real channel of a trial, or I of an I/Q trial, as f64.
fn real_channel(trial: &Trial) -> Vec<f64> {
    let step = trial.info.channels.count();
    trial
        .samples
        .iter()
        .step_by(step)
        .map(|&v| f64::from(v))
        .collect()
}

/// I + jQ of an I/Q trial.
fn complex_channel(trial: &Trial) -> Vec<Complex64> {
    assert_eq!(trial.info.channels.count(), 2, "not an I/Q trial");
    trial
        .samples
        .chunks_exact(2)
        .map(|p| Complex64::new(f64::from(p[0]), f64::from(p[1])))
        .collect()
}

/// Samples from `from_s` to `to_s`.
fn window<T: Copy>(x: &[T], fs: f64, from_s: f64, to_s: f64) -> Vec<T> {
    let a = (from_s * fs).round() as usize;
    let b = ((to_s * fs).round() as usize).min(x.len());
    x[a..b].to_vec()
}

/// Hann-windowed spectrum of real samples, zero-padded by `pad`; returns |X| and the bin width.
fn real_magnitude_spectrum(x: &[f64], fs: f64, pad: usize) -> (Vec<f64>, f64) {
    let w = hann(x.len());
    let mut data: Vec<Complex64> = x
        .iter()
        .zip(&w)
        .map(|(&v, &w)| Complex64::new(v * w, 0.0))
        .collect();
    data.resize(x.len() * pad, Complex64::new(0.0, 0.0));
    let spectrum = fft(data);
    let half = spectrum.len() / 2;
    (
        spectrum[..=half].iter().map(|c| c.norm()).collect(),
        fs / spectrum.len() as f64,
    )
}

/// Hann-windowed complex spectrum, reordered from −fs/2 to fs/2; returns (frequency, |Z|) pairs.
fn complex_magnitude_spectrum(z: &[Complex64]) -> Vec<(f64, f64)> {
    let n = z.len();
    let w = hann(n);
    let spectrum = fft(z.iter().zip(&w).map(|(&v, &w)| v * w).collect());
    (0..n)
        .map(|k| {
            let signed = if k <= n / 2 {
                k as f64
            } else {
                k as f64 - n as f64
            };
            (signed, spectrum[k].norm())
        })
        .collect()
}

/// Frequency of the largest bin of |X| between `lo_hz` and `hi_hz`.
fn peak_hz(magnitude: &[f64], bin_hz: f64, lo_hz: f64, hi_hz: f64) -> f64 {
    let lo = (lo_hz / bin_hz).ceil() as usize;
    let hi = ((hi_hz / bin_hz).floor() as usize).min(magnitude.len() - 1);
    let k = (lo..=hi)
        .max_by(|&a, &b| magnitude[a].total_cmp(&magnitude[b]))
        .expect("empty search band");
    k as f64 * bin_hz
}

/// Peak refined by a parabola through the log magnitudes of the top bin and its neighbours
/// (common practice for windowed spectra; with 4× zero padding the bias is far below a bin).
fn refined_peak_hz(magnitude: &[f64], bin_hz: f64, lo_hz: f64, hi_hz: f64) -> f64 {
    let k = (peak_hz(magnitude, bin_hz, lo_hz, hi_hz) / bin_hz).round() as usize;
    let (a, b, c) = (
        magnitude[k - 1].ln(),
        magnitude[k].ln(),
        magnitude[k + 1].ln(),
    );
    let offset = 0.5 * (a - c) / (a - 2.0 * b + c);
    (k as f64 + offset) * bin_hz
}

/// |(1/N)·Σ z[n]·e^{−j2πfn/fs}|: the complex amplitude of a line at `f_hz` (signed) when the
/// window holds a whole number of its cycles (rectangular window, no leakage).
fn line_amplitude(z: &[Complex64], fs: f64, f_hz: f64) -> f64 {
    let sum: Complex64 = z
        .iter()
        .enumerate()
        .map(|(n, &v)| v * Complex64::from_polar(1.0, -2.0 * PI * f_hz * n as f64 / fs))
        .sum();
    sum.norm() / z.len() as f64
}

/// Welch estimate of the one-sided PSD (V²/Hz) of real samples: Hann segments of
/// `segment` samples, 50 % overlap; adds into `psd_sum` and returns the segment count.
/// Normalisation P = 2|X|²/(fs·Σw²) makes the mean of P the true one-sided PSD (Welch 1967).
fn welch_accumulate(x: &[f64], fs: f64, segment: usize, psd_sum: &mut [f64]) -> usize {
    let w = hann(segment);
    let power: f64 = w.iter().map(|v| v * v).sum();
    let mut count = 0;
    let mut start = 0;
    while start + segment <= x.len() {
        let data = x[start..start + segment]
            .iter()
            .zip(&w)
            .map(|(&v, &w)| Complex64::new(v * w, 0.0))
            .collect();
        let spectrum = fft(data);
        for (k, p) in psd_sum.iter_mut().enumerate() {
            let one_sided = if k == 0 || k == segment / 2 { 1.0 } else { 2.0 };
            *p += one_sided * spectrum[k].norm_sqr() / (fs * power);
        }
        count += 1;
        start += segment / 2;
    }
    count
}

fn max_abs(x: &[f64]) -> f64 {
    x.iter().fold(0.0f64, |m, v| m.max(v.abs()))
}

fn lsb_v(bits: u8) -> f64 {
    3.3 / f64::from(1u32 << bits)
}

// ---------------------------------------------------------------------------------------------
// 1. Constant-velocity point target: the spectral line sits at 2·v·f0/c
// ---------------------------------------------------------------------------------------------

#[test]
fn constant_velocity_reflector_peaks_at_the_doppler_frequency() {
    // docs/reference/check-values.md#pc1, #pc2 and radar-physics.md#r1: f_d = 2·v·f0/c (Skolnik,
    // ch. 3). A 10 m² plate approaches from 8 m at 0.8 m/s; the single-channel output's strongest
    // line must lie within one FFT bin of f_d at every carrier.
    let speed_mps = 0.8;
    for carrier_hz in CARRIERS_HZ {
        let bench = Bench {
            speed_mps,
            rcs_m2: 10.0,
            start_range_m: 8.0,
            ..Bench::new(carrier_hz)
        };
        let trial = bench.run();
        let x = real_channel(&trial);
        assert!(
            max_abs(&x) < 1.4,
            "{carrier_hz} Hz: the output reaches the rails' knee"
        );
        let (magnitude, bin_hz) = real_magnitude_spectrum(&x, bench.sample_rate_hz, 1);
        let expected_hz = doppler_hz(speed_mps, carrier_hz);
        let found_hz = peak_hz(&magnitude, bin_hz, 3.0, 450.0);
        assert!(
            (found_hz - expected_hz).abs() <= bin_hz,
            "{carrier_hz} Hz carrier: peak at {found_hz} Hz, expected {expected_hz:.3} Hz (bin {bin_hz} Hz)"
        );
    }
}

// ---------------------------------------------------------------------------------------------
// 2. Radar equation: IF amplitude ∝ R⁻²
// ---------------------------------------------------------------------------------------------

#[test]
fn echo_amplitude_falls_as_the_inverse_square_of_range() {
    // docs/reference/radar-physics.md#r4 and check-values.md#pc7, #pc8: A = K·√σ·g(θ)/R² (Skolnik,
    // ch. 2, with IF voltage ∝ √P_r). A 1 m² reflector on boresight on a radial shaker (40 Hz,
    // modulation index m = 4πa/λ = 1) gives, through an I/Q mixer, complex lines at ±40 Hz of
    // magnitude A·J1(m) whatever the mean phase 4πR/λ (Jacobi–Anger; Droitcour et al. 2004), so the
    // ratio of line magnitudes at two ranges is the ratio of the echo amplitudes, with the front
    // end's gain at 40 Hz cancelling. Window: 2 s = 80 shaker cycles, after the 2 Hz high-pass has
    // settled on the reflector's own DC (6 time constants).
    let carrier_hz = 24.125e9;
    let lambda = wavelength_m(carrier_hz);
    let modulation_index: f64 = 1.0;
    let shaker_hz = 40.0;
    let ranges_m = [1.0, 1.5, 2.5, 4.0, 7.0, 10.0, 15.0];
    let base = Bench {
        iq: true,
        sample_rate_hz: 2000.0,
        duration_s: 2.75,
        high_pass_hz: vec![2.0],
        low_pass_hz: vec![400.0],
        // 62 dB puts the 1 m echo at ≈ 1.1 V peak, inside the rails; the 20-bit ADC
        // (3.1 µV) resolves the 15 m line, 225× weaker, to better than 0.1 %.
        gain_db: 62.0,
        adc_bits: 20,
        white_noise_v_per_rthz: 0.0,
        travel_azimuth_deg: 0.0,
        rcs_m2: 1.0,
        shaker_amplitude_m: modulation_index * lambda / (4.0 * PI),
        shaker_hz,
        ..Bench::new(carrier_hz)
    };
    // Sensor defaults of the scene format: 10 dBm, 6 dBi, 7 dB conversion loss, 50 Ω.
    let k_v = mixer_amplitude_v_at_1m_1m2(10.0, 6.0, 7.0, 50.0, carrier_hz);
    let expected_line_at_1m_v =
        analog_front_end_gain(&base, shaker_hz) * k_v * bessel_j(1, modulation_index);
    let mut normalised = Vec::new();
    for range_m in ranges_m {
        let bench = Bench {
            start_range_m: range_m,
            ..base.clone()
        };
        let trial = bench.run();
        assert_eq!(
            trial.oversampling, 1,
            "everything is in band: no oversampling expected"
        );
        let z = window(&complex_channel(&trial), 2000.0, 0.75, 2.75);
        let peak = z
            .iter()
            .fold(0.0f64, |m, c| m.max(c.re.abs()).max(c.im.abs()));
        assert!(
            peak < 1.4,
            "{range_m} m: output {peak} V reaches the rails' knee"
        );
        let line_v =
            0.5 * (line_amplitude(&z, 2000.0, shaker_hz) + line_amplitude(&z, 2000.0, -shaker_hz));
        normalised.push((range_m, line_v * range_m * range_m));
        // Absolute level: the range equation and link budget at 1 m²,
        // front-end gain of the analog sections (bilinear warping at 40/2000 is 0.1 %).
        let expected_v = expected_line_at_1m_v / (range_m * range_m);
        assert!(
            (line_v / expected_v - 1.0).abs() < 0.02,
            "{range_m} m: line {line_v:e} V, range equation gives {expected_v:e} V"
        );
    }
    let reference = normalised[0].1;
    for (range_m, value) in &normalised {
        assert!(
            (value / reference - 1.0).abs() < 0.01,
            "A·R² at {range_m} m is {:.4} of its value at 1 m (R⁻² law, within 1 %): {normalised:?}",
            value / reference
        );
    }
}

// ---------------------------------------------------------------------------------------------
// 3. I/Q carries the sign of the Doppler; a single channel does not
// ---------------------------------------------------------------------------------------------

#[test]
fn iq_output_shows_the_doppler_sign() {
    // docs/reference/radar-physics.md#r1 and #r2: z = A·e^{−jφ}, φ = 4πR/λ, so an approaching
    // target (R falling) gives a positive frequency and a receding one a negative frequency. An
    // ideal quadrature mixer has no image: the other side must be ≥ 40 dB down.
    let carrier_hz = 10.525e9;
    let speed_mps = 0.8;
    let fd_hz = doppler_hz(speed_mps, carrier_hz);
    for (azimuth_deg, start_m, sign) in [(180.0, 6.0, 1.0), (0.0, 2.8, -1.0)] {
        let bench = Bench {
            iq: true,
            speed_mps,
            rcs_m2: 10.0,
            start_range_m: start_m,
            travel_azimuth_deg: azimuth_deg,
            ..Bench::new(carrier_hz)
        };
        let trial = bench.run();
        let z = complex_channel(&trial);
        let spectrum = complex_magnitude_spectrum(&z);
        let bin_hz = bench.sample_rate_hz / z.len() as f64;
        let away_from_dc = |(k, _): &&(f64, f64)| (k * bin_hz).abs() > 3.0;
        let (k, peak) = spectrum
            .iter()
            .filter(away_from_dc)
            .fold(
                (0.0, 0.0),
                |best, &(k, m)| if m > best.1 { (k, m) } else { best },
            );
        let found_hz = k * bin_hz;
        assert!(
            (found_hz - sign * fd_hz).abs() <= bin_hz,
            "travel azimuth {azimuth_deg}°: peak at {found_hz} Hz, expected {:.3} Hz",
            sign * fd_hz
        );
        let image = spectrum
            .iter()
            .filter(away_from_dc)
            .filter(|(k, _)| k * sign < 0.0)
            .fold(0.0f64, |m, &(_, v)| m.max(v));
        assert!(
            20.0 * (peak / image).log10() > 40.0,
            "image only {:.1} dB below the line",
            20.0 * (peak / image).log10()
        );
    }
}

#[test]
fn single_channel_spectra_of_approach_and_recession_are_the_same() {
    // docs/reference/radar-physics.md#r9, property (a) (Droitcour et al. 2004): Re{z} loses the
    // sign, so ±v give the same |spectrum|. The two runs are each other's time reversal (6 m → 2.8
    // m vs 2.8 m → 6 m in 4 s), and a periodic Hann window is symmetric under that reversal, so the
    // windowed magnitude spectra should agree up to the front end's phase at f_d (it shifts the
    // line's phase oppositely in the two runs), the one sample the reversal does not map, and the
    // start: the front end begins settled on the echo present at t = 0 (a module switched on long
    // before), which the reversal maps onto the unsettled end of the other run. Together about 1 %
    // of the spectrum's norm.
    let carrier_hz = 10.525e9;
    let speed_mps = 0.8;
    let run = |azimuth_deg: f64, start_m: f64| {
        let bench = Bench {
            speed_mps,
            rcs_m2: 10.0,
            start_range_m: start_m,
            travel_azimuth_deg: azimuth_deg,
            white_noise_v_per_rthz: 0.0,
            ..Bench::new(carrier_hz)
        };
        let (magnitude, bin_hz) =
            real_magnitude_spectrum(&real_channel(&bench.run()), bench.sample_rate_hz, 1);
        (magnitude, bin_hz)
    };
    let (approaching, bin_hz) = run(180.0, 6.0);
    let (receding, _) = run(0.0, 6.0 - 4.0 * speed_mps);
    let fd_hz = doppler_hz(speed_mps, carrier_hz);
    for spectrum in [&approaching, &receding] {
        assert!((peak_hz(spectrum, bin_hz, 3.0, 450.0) - fd_hz).abs() <= bin_hz);
    }
    let difference: f64 = approaching
        .iter()
        .zip(&receding)
        .map(|(a, b)| (a - b).powi(2))
        .sum::<f64>()
        .sqrt();
    let norm: f64 = approaching.iter().map(|a| a * a).sum::<f64>().sqrt();
    assert!(
        difference / norm < 0.02,
        "|X(+v)| and |X(−v)| differ by {:.4} of the norm",
        difference / norm
    );
}

// ---------------------------------------------------------------------------------------------
// 4. Doppler scales with the carrier
// ---------------------------------------------------------------------------------------------

#[test]
fn doppler_scales_linearly_with_the_carrier() {
    // docs/reference/radar-physics.md#r9, property (c): for the same motion f_d/f0 = 2v/c at every
    // carrier (Skolnik, ch. 3). Refined (zero-padded, interpolated) peaks of a plate receding from
    // 2 m at 1.25 m/s must give the same f_d/f0 to 0.1 %, equal to 2v/c.
    let speed_mps = 1.25;
    let expected_ratio = 2.0 * speed_mps / SPEED_OF_LIGHT_MPS;
    for carrier_hz in CARRIERS_HZ {
        let bench = Bench {
            speed_mps,
            rcs_m2: 1.0,
            start_range_m: 2.0,
            travel_azimuth_deg: 0.0,
            ..Bench::new(carrier_hz)
        };
        let (magnitude, bin_hz) =
            real_magnitude_spectrum(&real_channel(&bench.run()), bench.sample_rate_hz, 4);
        let ratio = refined_peak_hz(&magnitude, bin_hz, 3.0, 450.0) / carrier_hz;
        assert!(
            (ratio / expected_ratio - 1.0).abs() < 1e-3,
            "{carrier_hz} Hz: f_d/f0 = {ratio:e}, 2v/c = {expected_ratio:e}"
        );
    }
}

// ---------------------------------------------------------------------------------------------
// 5. A stationary scene is only noise after the high-pass
// ---------------------------------------------------------------------------------------------

/// A room with strong static clutter, mixer DC and a still reflector, nothing moving.
fn stationary_room(white_noise_v_per_rthz: f64) -> Bench {
    Bench {
        sample_rate_hz: 4000.0,
        duration_s: 5.0,
        high_pass_hz: vec![1.0],
        low_pass_hz: vec![50.0],
        gain_db: 70.0,
        adc_bits: 16,
        white_noise_v_per_rthz,
        sensor_extra: "  mixer_dc_v: 0.05\n".to_string(),
        environment_extra: "  static_clutter:\n    \
                              - {position_m: [4, 1, 1.2], rcs_m2: 5}\n    \
                              - {position_m: [7, -2, 0.5], rcs_m2: 20}\n"
            .to_string(),
        speed_mps: 0.0,
        rcs_m2: 2.0,
        start_range_m: 2.5,
        ..Bench::new(24.125e9)
    }
}

#[test]
fn stationary_scene_gives_only_front_end_noise() {
    // docs/reference/radar-physics.md#r9, property (d): static clutter is DC, removed by the
    // high-pass; what is left is the mixer noise shaped by the front end: one-sided PSD
    // d²·G²·|H(f)|². For one HP (f_h) and one LP (f_l) section, ∫₀^∞|H|² df = (π/2)·f_l²/(f_l +
    // f_h) (standard integral ∫ f²/((f²+a²)(f²+b²)) df = π/(2(a+b))), so the output RMS is
    // d·G·√((π/2)·f_l²/(f_l + f_h)). The still reflector's own DC enters as a step at t = 0 (the
    // chain starts settled on the static clutter only) and has decayed by 1.5 s (9 time constants
    // of the 1 Hz high-pass).
    let density = 300e-9;
    let bench = stationary_room(density);
    let fs = bench.sample_rate_hz;
    let gain = 10f64.powf(bench.gain_db / 20.0);
    let (f_h, f_l) = (bench.high_pass_hz[0], bench.low_pass_hz[0]);
    let noise_bandwidth_hz = 0.5 * PI * f_l * f_l / (f_l + f_h);
    let expected_rms = density * gain * noise_bandwidth_hz.sqrt();
    let scene = bench.scene();
    let segment = 4000;
    let mut psd_sum = vec![0.0; segment / 2 + 1];
    let mut segments = 0;
    let mut sum_squares = 0.0;
    let mut count = 0usize;
    let trials = 8u64;
    let (from_s, to_s) = (1.5, bench.duration_s);
    for index in 0..trials {
        let t = trial(&scene, 11, index);
        let x = window(&real_channel(&t), fs, from_s, to_s);
        sum_squares += x.iter().map(|v| v * v).sum::<f64>();
        count += x.len();
        segments += welch_accumulate(&x, fs, segment, &mut psd_sum);
    }
    let measured_rms = (sum_squares / count as f64).sqrt();
    // Allowance: (i) the simulation holds noise only up to f_sim/2 and its sections are bilinear
    // (docs/reference/front-end-and-noise.md#f10), whose LP noise bandwidth is (f_sim/2)·K/(1+K), K
    // = tan(πf_l/f_sim) instead of the analog (π/2)·f_l: an RMS shortfall of ½·(1 − ratio); (ii) 3
    // standard deviations of an RMS estimate over 2·B·T independent samples (common practice).
    let k = (PI * f_l / fs).tan();
    let bilinear_shortfall = 0.5 * (1.0 - (0.5 * fs * k / (1.0 + k)) / (0.5 * PI * f_l));
    let statistical =
        3.0 * 0.5 * (2.0 / (2.0 * noise_bandwidth_hz * (to_s - from_s) * trials as f64)).sqrt();
    let tolerance = bilinear_shortfall + statistical;
    assert!(
        (measured_rms / expected_rms - 1.0).abs() < tolerance,
        "output RMS {measured_rms:e} V, density × front-end gain gives {expected_rms:e} V (tolerance {tolerance:.3})"
    );
    // No line anywhere: every 1 Hz bin of the averaged PSD within 2× of d²·G²·|H(f)|²
    // (48 averaged 50 %-overlap Hann segments give ≈ 91 degrees of freedom, so a noise-only
    // bin exceeds 2× its mean with probability 5e-8 [C: χ² tail]; 998 bins are tested).
    let mut worst = (0.0, 0.0);
    for (k, &sum) in psd_sum.iter().enumerate() {
        let f_hz = k as f64 * fs / segment as f64;
        if !(3.0..=1000.0).contains(&f_hz) {
            continue;
        }
        let expected_psd = (density * analog_front_end_gain(&bench, f_hz)).powi(2);
        let ratio = sum / segments as f64 / expected_psd;
        if ratio > worst.1 {
            worst = (f_hz, ratio);
        }
    }
    assert!(
        worst.1 < 2.0,
        "a line at {} Hz: PSD {:.2}× the shaped noise floor",
        worst.0,
        worst.1
    );
}

#[test]
fn stationary_scene_without_noise_is_flat_at_the_bias() {
    // docs/reference/radar-physics.md#r9, property (d), and front-end-and-noise.md#f8 (ADC):
    // without noise a still scene is pure DC, which the high-pass blocks, so the ADC reads the bias
    // code to within one LSB once the still reflector's step has decayed (2 s = 12.6 time constants
    // of the 1 Hz HP).
    let bench = stationary_room(0.0);
    let t = bench.run();
    let lsb = lsb_v(bench.adc_bits);
    let x = window(
        &real_channel(&t),
        bench.sample_rate_hz,
        2.0,
        bench.duration_s,
    );
    assert!(
        max_abs(&x) <= lsb,
        "output strays {:e} V from the bias (LSB {lsb:e} V)",
        max_abs(&x)
    );
    let bias_code = (BIAS_V / lsb).round() as i32;
    let codes = window(&t.codes, bench.sample_rate_hz, 2.0, bench.duration_s);
    assert!(
        codes.iter().all(|&c| (c - bias_code).abs() <= 1),
        "codes leave the bias code {bias_code} by more than 1"
    );
}

// ---------------------------------------------------------------------------------------------
// 6. Aliasing through a weak anti-alias filter
// ---------------------------------------------------------------------------------------------

/// A plate approaching from 6 m with a Doppler of 650 Hz at a 500 Hz ADC (k = 1 alias at
/// +150 Hz), with or without the 100 Hz analog low-pass.
fn fast_plate(low_pass_hz: Vec<f64>, iq: bool) -> Bench {
    let carrier_hz = 24.125e9;
    Bench {
        iq,
        sample_rate_hz: 500.0,
        duration_s: 1.0,
        high_pass_hz: vec![1.0],
        low_pass_hz,
        gain_db: 66.0,
        adc_bits: 16,
        white_noise_v_per_rthz: 0.0,
        start_range_m: 6.0,
        travel_azimuth_deg: 180.0,
        speed_mps: 650.0 * wavelength_m(carrier_hz) / 2.0,
        rcs_m2: 10.0,
        ..Bench::new(carrier_hz)
    }
}

#[test]
fn doppler_above_nyquist_appears_at_its_alias() {
    // docs/reference/front-end-and-noise.md#f12 (simulation recipe; common practice): a Doppler
    // above f_s/2 is folded by the sample-and-hold to |f_d − k·f_s|, here |650 − 500| = 150 Hz; in
    // the complex spectrum the fold keeps the sign, +650 → +150 Hz. The synthesizer must have
    // raised its internal rate to hold 650 Hz before the filter.
    let fd_hz = 650.0;
    for iq in [false, true] {
        let bench = fast_plate(vec![100.0], iq);
        let trial = bench.run();
        assert!(
            trial.oversampling > 1,
            "internal oversampling {} for a {fd_hz} Hz Doppler at 500 Hz",
            trial.oversampling
        );
        let fs = bench.sample_rate_hz;
        let alias_hz = fd_hz - fs;
        if iq {
            let z = complex_channel(&trial);
            let bin_hz = fs / z.len() as f64;
            let (k, _) = complex_magnitude_spectrum(&z)
                .into_iter()
                .filter(|(k, _)| (k * bin_hz).abs() > 3.0)
                .fold((0.0, 0.0), |b, (k, m)| if m > b.1 { (k, m) } else { b });
            assert!(
                (k * bin_hz - alias_hz).abs() <= bin_hz,
                "I/Q alias at {} Hz, expected +{alias_hz} Hz",
                k * bin_hz
            );
        } else {
            let (magnitude, bin_hz) = real_magnitude_spectrum(&real_channel(&trial), fs, 1);
            let found = peak_hz(&magnitude, bin_hz, 3.0, 0.5 * fs);
            assert!(
                (found - alias_hz.abs()).abs() <= bin_hz,
                "real alias at {found} Hz, expected {alias_hz} Hz"
            );
        }
    }
}

#[test]

fn doppler_above_nyquist_keeps_the_analog_low_pass_attenuation() {
    // docs/reference/front-end-and-noise.md#f12 (common practice): what folds into the band has
    // passed the analog RC low-pass at its true frequency, so the alias carries |H_LP(f_d)| = 1/√(1
    // + (f_d/f_c)²) = 0.152 for 650 Hz through 100 Hz. Two runs with identical motion, one without
    // the low-pass, share the echo envelope (∝ R(t)⁻²) exactly, so the RMS ratio of their I/Q
    // magnitudes is the low-pass attenuation at f_d. Allowance 10 % (0.8 dB).
    let fd_hz = 650.0;
    let with_filter = fast_plate(vec![100.0], true).run();
    let without_filter = fast_plate(Vec::new(), true).run();
    assert_eq!(with_filter.oversampling, without_filter.oversampling);
    let magnitude_rms = |t: &Trial| {
        let z = window(&complex_channel(t), 500.0, 0.1, 0.9);
        (z.iter().map(|c| c.norm_sqr()).sum::<f64>() / z.len() as f64).sqrt()
    };
    let measured = magnitude_rms(&with_filter) / magnitude_rms(&without_filter);
    let expected = analog_low_pass_gain(fd_hz, 100.0);
    assert!(
        (measured / expected - 1.0).abs() < 0.10,
        "alias attenuated to {measured:.4}, the analog low-pass gives {expected:.4} at {fd_hz} Hz (internal oversampling {})",
        with_filter.oversampling
    );
}

#[test]

fn vibration_above_nyquist_aliases_through_the_low_pass() {
    // Vibrating target R = R0 + a·sin(2πf_v t): lines at n·f_v with weights J_n(4πa/λ) (Chen, Li,
    // Ho, Wechsler, IEEE T-AES 42(1), 2006; docs/reference/nuisances.md#n3). A 650 Hz shaker (m =
    // 0.3) at a 500 Hz ADC: the ±650 Hz lines fold to ±150 Hz after passing the 100 Hz analog
    // low-pass at 650 Hz (docs/reference/front-end-and-noise.md#f12, common practice), so against
    // the same run without the low-pass the ±150 Hz lines shrink by 1/√(1 + 6.5²) = 0.152.
    let carrier_hz = 24.125e9;
    let shaker_hz = 650.0;
    let make = |low_pass_hz: Vec<f64>| Bench {
        iq: true,
        sample_rate_hz: 500.0,
        duration_s: 1.0,
        high_pass_hz: vec![1.0],
        low_pass_hz,
        gain_db: 66.0,
        adc_bits: 16,
        white_noise_v_per_rthz: 0.0,
        start_range_m: 1.5,
        travel_azimuth_deg: 0.0,
        rcs_m2: 1.0,
        shaker_amplitude_m: 0.3 * wavelength_m(carrier_hz) / (4.0 * PI),
        shaker_hz,
        ..Bench::new(carrier_hz)
    };
    let with_filter = make(vec![100.0]).run();
    let without_filter = make(Vec::new()).run();
    assert!(
        with_filter.oversampling > 1,
        "internal oversampling {} for 650 Hz vibration lines at a 500 Hz ADC",
        with_filter.oversampling
    );
    // 0.8 s holds 120 cycles of the 150 Hz alias: no leakage with a rectangular window.
    let line = |t: &Trial| {
        let z = window(&complex_channel(t), 500.0, 0.2, 1.0);
        0.5 * (line_amplitude(&z, 500.0, 150.0) + line_amplitude(&z, 500.0, -150.0))
    };
    let measured = line(&with_filter) / line(&without_filter);
    let expected = analog_low_pass_gain(shaker_hz, 100.0);
    assert!(
        (measured / expected - 1.0).abs() < 0.10,
        "alias attenuated to {measured:.4}, the analog low-pass gives {expected:.4}"
    );
}

// ---------------------------------------------------------------------------------------------
// 7. Determinism
// ---------------------------------------------------------------------------------------------

/// Length the example scenes are cut to for the determinism checks, s. It must stay past
/// the living-room cat's 8 s entry: see `actor_entering_after_the_end_is_simply_absent`.
const SHORT_EXAMPLE_S: f64 = 9.0;

fn example_scene(file: &str, duration_s: f64) -> SceneSpec {
    let path = workspace_root().join("scenarios/scenes").join(file);
    let (mut scene, _warnings) =
        load_scene_file(&path).unwrap_or_else(|report| panic!("{file} does not load:\n{report}"));
    // Shortened to keep the test fast; the draws and models are those of the file.
    scene.duration_s = duration_s;
    scene
}

fn same_output(a: &Trial, b: &Trial) -> bool {
    a.codes == b.codes
        && a.samples.len() == b.samples.len()
        && a.samples
            .iter()
            .zip(&b.samples)
            .all(|(x, y)| x.to_bits() == y.to_bits())
}

#[test]
fn trials_are_identical_whatever_the_thread_count() {
    // Common practice for reproducible simulation (and the workspace rule): each trial's
    // randomness derives from its key alone, so the thread that runs it cannot matter.
    for file in [
        "living-room-ceiling-fan-24g.yaml",
        "office-corridor-24g.yaml",
    ] {
        let scene = example_scene(file, SHORT_EXAMPLE_S);
        let indices: Vec<u64> = (0..4).collect();
        let run_in = |threads: usize| -> Vec<Trial> {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .expect("thread pool");
            pool.install(|| {
                indices
                    .par_iter()
                    .map(|&i| trial(&scene, 2024, i))
                    .collect()
            })
        };
        let one = run_in(1);
        let two = run_in(2);
        for (i, (a, b)) in one.iter().zip(&two).enumerate() {
            assert!(
                same_output(a, b),
                "{file} trial {i}: output differs between 1 and 2 threads"
            );
            assert_eq!(a.truth, b.truth, "{file} trial {i}: truth differs");
        }
        assert!(
            !same_output(&one[0], &one[1]),
            "{file}: trials 0 and 1 are identical"
        );
        let other_seed = trial(&scene, 2025, 0);
        assert!(
            !same_output(&one[0], &other_seed),
            "{file}: seeds 2024 and 2025 give the same trial"
        );
    }
}

#[test]
fn output_is_independent_of_the_block_size() {
    // Streaming generators must give bit-identical output whatever block sizes they are
    // called with (workspace rule; common practice for streaming DSP).
    for file in [
        "living-room-ceiling-fan-24g.yaml",
        "office-corridor-24g.yaml",
    ] {
        let scene = example_scene(file, SHORT_EXAMPLE_S);
        let key = StreamKey::new(99, scene.name.clone(), 3);
        let whole = synthesize(&scene, &key).expect("synthesis");
        for max_instants in [1, 7, 1000, usize::MAX] {
            let mut synth = Synthesizer::new(&scene, &key).expect("synthesizer");
            let (mut volts, mut codes) = (Vec::new(), Vec::new());
            let mut instants = 0;
            loop {
                let added = synth.next_block(&mut volts, &mut codes, max_instants);
                if added == 0 {
                    break;
                }
                assert!(added <= max_instants);
                instants += added;
            }
            assert_eq!(instants, synth.total_samples());
            assert_eq!(
                codes, whole.codes,
                "{file}: codes differ with blocks of {max_instants}"
            );
            assert!(
                volts
                    .iter()
                    .zip(&whole.samples)
                    .all(|(a, b)| a.to_bits() == b.to_bits())
                    && volts.len() == whole.samples.len(),
                "{file}: volts differ with blocks of {max_instants}"
            );
        }
    }
}

// ---------------------------------------------------------------------------------------------
// 8. A walker through the whole chain
// ---------------------------------------------------------------------------------------------

/// Mean power (V²) of real samples between `lo_hz` and `hi_hz`: Hann periodogram bins
/// summed, normalised by N·Σw² so that windows of any length compare (Parseval).
fn band_power(x: &[f64], fs: f64, lo_hz: f64, hi_hz: f64) -> f64 {
    let (magnitude, bin_hz) = real_magnitude_spectrum(x, fs, 1);
    let window_power: f64 = hann(x.len()).iter().map(|w| w * w).sum();
    let in_band: f64 = magnitude
        .iter()
        .enumerate()
        .filter(|(k, _)| (lo_hz..=hi_hz).contains(&(*k as f64 * bin_hz)))
        .map(|(_, m)| m * m)
        .sum();
    2.0 * in_band / (x.len() as f64 * window_power)
}

#[test]
fn walker_raises_power_in_its_torso_doppler_band() {
    // docs/reference/people.md#p4: the torso moves at about the walking speed, so its line sits
    // near 2v/λ (Skolnik ch. 3; Chen 2011 ch. 4 for the torso dominating the return). The corridor
    // walker draws 1.1–1.5 m/s, seen from 2.5 m up at ≤ 12° below the LOS (cos ≥ 0.97): 171–241 Hz
    // at 24.125 GHz; the band 150–270 Hz holds it. During the event that band must hold far more
    // power (≥ 10 dB) than before the walker enters.
    let scene = example_scene("office-corridor-24g.yaml", 20.0);
    let fs = scene.sensor.sample_rate_hz;
    let lambda = wavelength_m(scene.sensor.carrier_hz);
    let (lo_hz, hi_hz) = (0.9 * 2.0 * 1.1 / lambda, 1.1 * 2.0 * 1.5 / lambda);
    for index in 0..3 {
        let t = trial(&scene, 5, index);
        assert_eq!(
            t.truth.events.len(),
            1,
            "trial {index}: {:?}",
            t.truth.events
        );
        let event = &t.truth.events[0];
        assert_eq!(event.actor_id, "visitor");
        // The walker enters at the earliest start of its activity, inside or outside coverage.
        let entry_s = t
            .truth
            .outside_coverage
            .iter()
            .chain(&t.truth.events)
            .filter(|e| e.actor_id == "visitor")
            .map(|e| e.interval.start_s())
            .fold(f64::INFINITY, f64::min);
        assert!(
            entry_s >= 1.0 && entry_s <= event.interval.start_s(),
            "trial {index}: entry at {entry_s} s"
        );
        let x = real_channel(&t);
        let before = band_power(&window(&x, fs, 0.2, entry_s - 0.05), fs, lo_hz, hi_hz);
        let middle_s = 0.5 * (event.interval.start_s() + event.interval.end_s());
        let during = band_power(
            &window(&x, fs, middle_s - 0.5, middle_s + 0.5),
            fs,
            lo_hz,
            hi_hz,
        );
        let ratio_db = 10.0 * (during / before).log10();
        assert!(ratio_db > 10.0, "trial {index}: band power during the event only {ratio_db:.1} dB above the level before entry");
    }
}

// ---------------------------------------------------------------------------------------------
// Robustness found on the way: an actor that enters after the trial ends
// ---------------------------------------------------------------------------------------------

#[test]

fn actor_entering_after_the_end_is_simply_absent() {
    // Common practice: a trial shorter than an actor's entry time just does not see the
    // actor (a random entry time drawn past the end must not make trials fail at random).
    // The scene loads; the walker enters at 8 s of a 5 s trial and never leaves its path.
    let text = Bench {
        duration_s: 5.0,
        ..Bench::new(24.125e9)
    }
    .yaml()
        + "  - kind: walker\n    \
             id: late\n    \
             path: {start_m: [6, 0], heading_deg: 180, speed_mps: 1.3, enter_s: 8}\n";
    let scene = scene_from_yaml(&text);
    let key = StreamKey::new(1, scene.name.clone(), 0);
    let trial = synthesize(&scene, &key)
        .unwrap_or_else(|e| panic!("a late entry makes the trial fail: {e}"));
    assert!(
        trial.truth.events.iter().all(|e| e.actor_id != "late"),
        "the late walker has an event: {:?}",
        trial.truth.events
    );
}

/// The front end starts settled on what is already there at t = 0: a plant
/// swaying from the first instant must not arrive as a step that rings through
/// the coupling high-pass (common practice: a module that has been on for a
/// while is in steady state; the reference pipeline starts its filters so too).
#[test]
fn actors_present_at_the_start_do_not_ring_the_high_pass() {
    let scene = echobench_integration_tests::scene_from_yaml(
        r#"
duration_s: 6
sensor:
  carrier_hz: 24.125e9
  sample_rate_hz: 1000
  front_end: {high_pass_hz: [0.5], low_pass_hz: [200], gain_db: 40}
  adc: {bits: 16, full_scale_v: 3.3}
environment: {white_noise_v_per_rthz: 0}
actors:
  - kind: sway
    pivot_m: [1.5, 0, 0.4]
    arm_length_m: 0.5
    natural_hz: 0.5
    rms_displacement_m: 0.0001
    rcs_m2: 0.5
"#,
    );
    let trial = echobench_integration_tests::trial(&scene, 3, 0);
    let rms = |s: &[f32]| {
        (s.iter().map(|&x| f64::from(x) * f64::from(x)).sum::<f64>() / s.len() as f64).sqrt()
    };
    let first = rms(&trial.samples[..200]);
    let rest = rms(&trial.samples[1000..]);
    assert!(
        first < 3.0 * rest,
        "first 0.2 s rms {first} vs later {rest}"
    );
}
