//! Impulsive radio bursts: envelope-detected packets of a strong in-band carrier.
//!
//! A transistor mixer also works as an envelope detector for a strong carrier in its band, so each
//! packet of a 2.4 GHz radio appears at the IF as a pulse (≈ 0.1–5 ms), later shaped by the IF
//! filter (docs/reference/front-end-and-noise.md#f6). Model: Poisson arrivals at `poisson_rate_hz`
//! plus an optional periodic train (the beacon of an access point: 100 TU = 102.4 ms, IEEE 802.11
//! TU = 1024 µs; docs/reference/check-values.md#pc20), each a rectangular pulse of `width_s`.
//! Square-law detection makes the pulse amplitude proportional to the interferer's received power
//! (common practice), so a log-normal jitter of that power with standard deviation
//! `power_jitter_db` multiplies the amplitude by 10^(σ·z/10), z ~ N(0, 1).
//!
//! Pulse edges fall at exact times; each output sample holds the pulse's average
//! over its sample interval [n/f_s, (n+1)/f_s), so an edge inside a sample gives
//! a fractional value and a pulse shorter than a sample keeps its area.
//! Overlapping pulses add.

use rand::Rng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Exp1, StandardNormal};
use std::collections::VecDeque;

use crate::error::{finite, non_negative, positive, sample_rate, ParamError};
use crate::{rng_from_seed, AdditiveNoise};

/// The IEEE 802.11 time unit: 1024 µs.
pub const IEEE_802_11_TIME_UNIT_S: f64 = 1024e-6;

/// The usual beacon interval of an IEEE 802.11 access point, 100 TU = 102.4 ms
/// (a 9.766 Hz pulse train).
pub const COMMON_BEACON_INTERVAL_S: f64 = 100.0 * IEEE_802_11_TIME_UNIT_S;

/// Parameters of [`RadioBursts`].
#[derive(Debug, Clone, PartialEq)]
pub struct RadioBurstParams {
    /// Mean rate of randomly timed (Poisson) bursts, Hz; 0 for none.
    pub poisson_rate_hz: f64,
    /// Interval of an additional periodic train, s (e.g.
    /// [`COMMON_BEACON_INTERVAL_S`]); `None` for none. Its first pulse falls at
    /// a random time within the first interval.
    pub periodic_interval_s: Option<f64>,
    /// Duration of each pulse, s.
    pub width_s: f64,
    /// Pulse amplitude before jitter, V (the sign is the detector's polarity).
    pub amplitude_v: f64,
    /// Standard deviation of the interferer's received power, dB (0 for none).
    pub power_jitter_db: f64,
}

#[derive(Debug, Clone, Copy)]
struct Pulse {
    start: f64,
    end: f64,
    amplitude_v: f64,
}

/// Poisson and periodic rectangular pulses (see the module docs).
#[derive(Debug, Clone)]
pub struct RadioBursts {
    width_samples: f64,
    amplitude_v: f64,
    power_jitter_db: f64,
    poisson_rate_per_sample: f64,
    /// Start of the next Poisson pulse, in samples (∞ when there are none).
    next_poisson_start: f64,
    periodic_offset_samples: f64,
    periodic_interval_samples: f64,
    next_periodic_index: u64,
    active: VecDeque<Pulse>,
    sample_index: u64,
    rng: ChaCha8Rng,
}

impl RadioBursts {
    /// Makes the burst generator; arrival times and jitter come from `seed`.
    ///
    /// # Errors
    /// When a rate, interval or width is not finite and positive (the rate may be
    /// 0), the amplitude is not finite, or the jitter is negative or not finite.
    ///
    /// ```
    /// use echobench_noise::{AdditiveNoise, RadioBurstParams, RadioBursts, COMMON_BEACON_INTERVAL_S};
    /// let params = RadioBurstParams {
    ///     poisson_rate_hz: 2.0,
    ///     periodic_interval_s: Some(COMMON_BEACON_INTERVAL_S),
    ///     width_s: 0.5e-3,
    ///     amplitude_v: 5e-3,
    ///     power_jitter_db: 3.0,
    /// };
    /// let mut bursts = RadioBursts::new(&params, 8000.0, [9; 32]).unwrap();
    /// let mut block = vec![0.0; 8000];
    /// bursts.add_to(&mut block);
    /// assert!(block.iter().any(|&v| v > 0.0));
    /// ```
    pub fn new(
        params: &RadioBurstParams,
        sample_rate_hz: f64,
        seed: [u8; 32],
    ) -> Result<Self, ParamError> {
        let fs = sample_rate(sample_rate_hz)?;
        let rate_hz = non_negative("poisson_rate_hz", params.poisson_rate_hz)?;
        let interval_s = match params.periodic_interval_s {
            Some(interval) => Some(positive("periodic_interval_s", interval)?),
            None => None,
        };
        let width_s = positive("width_s", params.width_s)?;
        let amplitude_v = finite("amplitude_v", params.amplitude_v)?;
        let power_jitter_db = non_negative("power_jitter_db", params.power_jitter_db)?;

        let mut rng = rng_from_seed(seed);
        let poisson_rate_per_sample = rate_hz / fs;
        let next_poisson_start = if poisson_rate_per_sample > 0.0 {
            let gap: f64 = Exp1.sample(&mut rng);
            gap / poisson_rate_per_sample
        } else {
            f64::INFINITY
        };
        let (periodic_offset_samples, periodic_interval_samples) = match interval_s {
            Some(interval) => {
                let interval_samples = interval * fs;
                (rng.random::<f64>() * interval_samples, interval_samples)
            }
            None => (f64::INFINITY, f64::INFINITY),
        };
        // Expected number of overlapping pulses is (rate + 1/interval)·width; the
        // queue is sized well above it so that it practically never grows.
        let pulses_per_s = rate_hz + interval_s.map_or(0.0, |i| 1.0 / i);
        let capacity = (8.0 + 4.0 * pulses_per_s * width_s).min(4096.0) as usize;
        Ok(RadioBursts {
            width_samples: width_s * fs,
            amplitude_v,
            power_jitter_db,
            poisson_rate_per_sample,
            next_poisson_start,
            periodic_offset_samples,
            periodic_interval_samples,
            next_periodic_index: 0,
            active: VecDeque::with_capacity(capacity),
            sample_index: 0,
            rng,
        })
    }

    fn next_periodic_start(&self) -> f64 {
        // From the index, not accumulated, so the train keeps its exact period.
        self.periodic_offset_samples
            + self.next_periodic_index as f64 * self.periodic_interval_samples
    }

    fn pulse_amplitude_v(&mut self) -> f64 {
        if self.power_jitter_db > 0.0 {
            let z: f64 = StandardNormal.sample(&mut self.rng);
            self.amplitude_v * 10f64.powf(self.power_jitter_db * z / 10.0)
        } else {
            self.amplitude_v
        }
    }
}

impl AdditiveNoise for RadioBursts {
    fn add_to(&mut self, out: &mut [f64]) {
        for sample in out.iter_mut() {
            let lo = self.sample_index as f64;
            let hi = lo + 1.0;
            // Start every pulse that begins before the end of this sample, in
            // time order (Poisson first on a tie), so draws happen in one order.
            loop {
                let periodic = self.next_periodic_start();
                let start = self.next_poisson_start.min(periodic);
                if start >= hi {
                    break;
                }
                let amplitude_v = self.pulse_amplitude_v();
                self.active.push_back(Pulse {
                    start,
                    end: start + self.width_samples,
                    amplitude_v,
                });
                if self.next_poisson_start <= periodic {
                    let gap: f64 = Exp1.sample(&mut self.rng);
                    self.next_poisson_start += gap / self.poisson_rate_per_sample;
                } else {
                    self.next_periodic_index += 1;
                }
            }
            let mut value_v = 0.0;
            for pulse in &self.active {
                let covered = hi.min(pulse.end) - lo.max(pulse.start);
                if covered > 0.0 {
                    value_v += pulse.amplitude_v * covered;
                }
            }
            *sample += value_v;
            // All pulses have the same width, so they end in the order they start.
            while self.active.front().is_some_and(|p| p.end <= hi) {
                self.active.pop_front();
            }
            self.sample_index += 1;
        }
    }
}
