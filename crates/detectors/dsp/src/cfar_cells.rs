//! CFAR cell plans: which bins are tested and which bins estimate their noise.
//!
//! Shared by the cell-averaging and ordered-statistic CFAR detectors. The
//! edge rule is the reference pipeline's (`cfar_weights`): reflect about DC and
//! the Nyquist bin for the one-sided spectrum of a real signal, wrap for the
//! two-sided I/Q spectrum. The plan is made once per detector plan: for every cell under test (CUT) the
//! indices of its `2·train` training cells, edges already resolved, so the
//! per-frame loop is a gather and a sum.

use echobench_core::doppler::{
    BandParams, FrameDefaults, FrameParams, FrameRules, FrameUnits, DEFAULT_RESOLUTION_MPS,
    MOTION_MAX_MPS, MOTION_MIN_MPS,
};
use echobench_core::param_decl::RealParam;

/// How the Doppler axis continues past the ends of the spectrum.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DopplerAxis {
    /// One-sided spectrum of a real signal, bins `0..bins` (`bins = N/2 + 1`,
    /// N even). The power spectrum of a real signal is even in frequency, so
    /// an index below 0 is reflected about DC (−j → j) and one above the top
    /// (Nyquist) bin is reflected about it (`bins − 1 + j → bins − 1 − j`).
    Reflected {
        /// Number of bins, N/2 + 1.
        bins: usize,
    },
    /// Two-sided spectrum of an I/Q signal, `bins = N` in FFT order. The DFT
    /// is periodic in frequency, so the axis wraps: −j is bin N − j, the bin
    /// just above +fs/2 is the one just above −fs/2.
    Circular {
        /// Number of bins, N.
        bins: usize,
    },
}

impl DopplerAxis {
    /// Number of bins on the axis.
    pub fn bins(self) -> usize {
        match self {
            DopplerAxis::Reflected { bins } | DopplerAxis::Circular { bins } => bins,
        }
    }

    /// The largest `guard + train` for which every CUT still has `2·train`
    /// well-defined cells: one reflection at most (real), no cell met twice
    /// by wrapping (I/Q).
    pub fn max_reach(self) -> usize {
        match self {
            DopplerAxis::Reflected { bins } => bins.saturating_sub(1),
            DopplerAxis::Circular { bins } => bins.saturating_sub(1) / 2,
        }
    }

    /// The bin reached from `cut` by `offset` bins (`|offset| ≤ max_reach`).
    pub fn cell(self, cut: usize, offset: i64) -> usize {
        let position = cut as i64 + offset;
        match self {
            DopplerAxis::Reflected { bins } => {
                let top = bins as i64 - 1;
                let folded = position.abs();
                let folded = if folded > top {
                    2 * top - folded
                } else {
                    folded
                };
                folded.clamp(0, top.max(0)) as usize
            }
            DopplerAxis::Circular { bins } => position.rem_euclid(bins.max(1) as i64) as usize,
        }
    }

    /// |f| of bin `k` in Hz, for a frame of `frame_len` samples at `sample_rate_hz`.
    ///
    /// Computed as `k · fs / N` (multiply first), the way the reference
    /// pipeline builds its frequency vector, so band edges that fall exactly
    /// on a bin select the same bins.
    pub fn bin_hz(self, k: usize, frame_len: usize, sample_rate_hz: f64) -> f64 {
        let signed_index = match self {
            DopplerAxis::Reflected { .. } => k,
            // Bins above N/2 are negative Doppler; bin N/2 (N even) is ±fs/2.
            DopplerAxis::Circular { bins } if 2 * k > bins => bins - k,
            DopplerAxis::Circular { .. } => k,
        };
        signed_index as f64 * sample_rate_hz / frame_len as f64
    }
}

/// Offsets of the training cells of a CUT, lowest first: −(guard + train)
/// ..= −(guard + 1), then guard + 1 ..= guard + train.
pub fn training_offsets(guard: usize, train: usize) -> impl Iterator<Item = i64> {
    let (guard, train) = (guard as i64, train as i64);
    (-(guard + train)..=-(guard + 1)).chain(guard + 1..=guard + train)
}

/// The cells under test and the flattened table of their training cells.
#[derive(Debug, Clone, PartialEq)]
pub struct CellPlan {
    /// Bins tested, ascending.
    pub cut_bins: Vec<usize>,
    /// `2·train` training bins per CUT, CUT after CUT.
    pub training: Vec<usize>,
    /// `2·train`.
    pub cells_per_cut: usize,
}

impl CellPlan {
    /// Tests every bin with `low_hz ≤ |f| ≤ high_hz`.
    pub fn new(
        axis: DopplerAxis,
        frame_len: usize,
        sample_rate_hz: f64,
        (low_hz, high_hz): (f64, f64),
        guard: usize,
        train: usize,
    ) -> CellPlan {
        let cut_bins: Vec<usize> = (0..axis.bins())
            .filter(|&k| {
                let f = axis.bin_hz(k, frame_len, sample_rate_hz);
                f >= low_hz && f <= high_hz
            })
            .collect();
        let training = cut_bins
            .iter()
            .flat_map(|&k| training_offsets(guard, train).map(move |o| axis.cell(k, o)))
            .collect();
        CellPlan {
            cut_bins,
            training,
            cells_per_cut: 2 * train,
        }
    }
}

/// The frame family both CFAR detectors (cell averaging and ordered statistic) declare, stated
/// once here: a velocity resolution of [`DEFAULT_RESOLUTION_MPS`] by default (0.245 s at
/// 2.45 GHz, 0.0249 s at 24.125 GHz), hop half a frame; 256/128 samples when the frame is given
/// in samples.
pub const FRAME: FrameParams = FrameParams::new(
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
        max_len: 65_536,
    },
);

/// The cells-under-test band's edge parameters of both CFAR detectors.
pub const BAND: BandParams = BandParams {
    // The historic Hz band (right at 2.45 GHz only): band_units = hz, or set in the suite.
    low_hz: RealParam {
        name: "low_hz",
        unit: "Hz",
        about: "lowest |Doppler| of the cells under test (Hz units)",
        min: 0.0,
        max: 1e7,
        default: 1.0,
    },
    high_hz: RealParam {
        name: "high_hz",
        unit: "Hz",
        about: "highest |Doppler| of the cells under test (Hz units, at most fs/2)",
        min: 0.0,
        max: 1e7,
        default: 100.0,
    },
    // Cells under test over a walker's torso to limbs, 0.3–4 m/s (echobench_core::doppler).
    low_mps: RealParam {
        name: "low_mps",
        unit: "m/s",
        about: "lowest radial speed of the cells under test",
        min: 0.0,
        max: 100.0,
        default: MOTION_MIN_MPS,
    },
    high_mps: RealParam {
        name: "high_mps",
        unit: "m/s",
        about: "highest radial speed of the cells under test (default: clipped to Nyquist)",
        min: 0.0,
        max: 100.0,
        default: MOTION_MAX_MPS,
    },
};

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reflection_matches_the_reference_pipeline_example() {
        // bench/README.md: "bin 1 uses bins 2–9 and 4–11" (guard 2, train 8, 129 bins).
        let axis = DopplerAxis::Reflected { bins: 129 };
        let cells: Vec<usize> = training_offsets(2, 8).map(|o| axis.cell(1, o)).collect();
        assert_eq!(
            cells,
            vec![9, 8, 7, 6, 5, 4, 3, 2, 4, 5, 6, 7, 8, 9, 10, 11]
        );
        // Top edge: reflect about bin 128 (Nyquist), as `cfar_weights` does.
        let top: Vec<usize> = training_offsets(0, 3).map(|o| axis.cell(127, o)).collect();
        assert_eq!(top, vec![124, 125, 126, 128, 127, 126]);
    }

    #[test]
    fn wrapping_for_iq_spectra() {
        let axis = DopplerAxis::Circular { bins: 16 };
        let cells: Vec<usize> = training_offsets(1, 3).map(|o| axis.cell(1, o)).collect();
        assert_eq!(cells, vec![13, 14, 15, 3, 4, 5]);
        assert_eq!(axis.max_reach(), 7);
        // |f| of the negative-frequency half, fs = 16 Hz, N = 16.
        assert_eq!(axis.bin_hz(15, 16, 16.0), 1.0);
        assert_eq!(axis.bin_hz(8, 16, 16.0), 8.0);
    }

    #[test]
    fn reference_band_is_bins_1_to_12() {
        // bench/README.md: f in [1, 100] Hz at 7.8125 Hz per bin = bins 1–12.
        let plan = CellPlan::new(
            DopplerAxis::Reflected { bins: 129 },
            256,
            2000.0,
            (1.0, 100.0),
            2,
            8,
        );
        assert_eq!(plan.cut_bins, (1..=12).collect::<Vec<_>>());
        assert_eq!(plan.training.len(), 12 * 16);
    }

    #[test]
    fn edges_reflect_for_real_and_wrap_for_iq() {
        // bench/README.md: with guard 2, train 8, bin 1 uses bins 2–9 and 4–11.
        let real = CellPlan::new(
            DopplerAxis::Reflected { bins: 129 },
            256,
            2000.0,
            (1.0, 100.0),
            2,
            8,
        );
        assert_eq!(real.cut_bins, (1..=12).collect::<Vec<_>>());
        assert_eq!(
            &real.training[..16],
            &[9, 8, 7, 6, 5, 4, 3, 2, 4, 5, 6, 7, 8, 9, 10, 11]
        );
        let top = CellPlan::new(
            DopplerAxis::Reflected { bins: 129 },
            256,
            2000.0,
            (990.0, 1000.0),
            0,
            3,
        );
        assert_eq!(top.cut_bins, vec![127, 128]);
        assert_eq!(&top.training[..6], &[124, 125, 126, 128, 127, 126]);
        let iq = CellPlan::new(
            DopplerAxis::Circular { bins: 16 },
            16,
            16.0,
            (0.5, 1.5),
            1,
            3,
        );
        assert_eq!(iq.cut_bins, vec![1, 15]);
        assert_eq!(&iq.training[..6], &[13, 14, 15, 3, 4, 5]);
    }
}
