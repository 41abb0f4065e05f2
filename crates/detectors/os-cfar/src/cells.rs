//! Cells under test and their training cells, edges resolved once in `build`.
//!
//! Same edge rule as the `ca-cfar` detector and the reference pipeline
//! (`cfar_weights`): reflect about DC and the Nyquist bin for the one-sided
//! spectrum of a real signal, wrap for the two-sided I/Q spectrum.

/// How the Doppler axis continues past the ends of the spectrum.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum DopplerAxis {
    /// One-sided, `bins = N/2 + 1` (N even): reflect about bin 0 and bin `bins − 1`.
    Reflected { bins: usize },
    /// Two-sided in FFT order, `bins = N`: wrap modulo N.
    Circular { bins: usize },
}

impl DopplerAxis {
    pub fn bins(self) -> usize {
        match self {
            DopplerAxis::Reflected { bins } | DopplerAxis::Circular { bins } => bins,
        }
    }

    /// Largest guard + train with one reflection at most / no cell met twice.
    pub fn max_reach(self) -> usize {
        match self {
            DopplerAxis::Reflected { bins } => bins.saturating_sub(1),
            DopplerAxis::Circular { bins } => bins.saturating_sub(1) / 2,
        }
    }

    fn cell(self, cut: usize, offset: i64) -> usize {
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

    /// |f| of bin `k`, as `k · fs / N` (the reference pipeline's arithmetic).
    fn bin_hz(self, k: usize, frame_len: usize, sample_rate_hz: f64) -> f64 {
        let signed_index = match self {
            DopplerAxis::Circular { bins } if 2 * k > bins => bins - k,
            _ => k,
        };
        signed_index as f64 * sample_rate_hz / frame_len as f64
    }
}

/// The CUTs (ascending) and `2·train` training bins per CUT, flattened.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct CellPlan {
    pub cut_bins: Vec<usize>,
    pub training: Vec<usize>,
    pub cells_per_cut: usize,
}

impl CellPlan {
    /// Tests every bin with `low_hz ≤ |f| ≤ high_hz`; training offsets
    /// −(guard+train)..=−(guard+1) and guard+1..=guard+train.
    pub fn new(
        axis: DopplerAxis,
        frame_len: usize,
        sample_rate_hz: f64,
        (low_hz, high_hz): (f64, f64),
        guard: usize,
        train: usize,
    ) -> CellPlan {
        let cut_bins: Vec<usize> = (0..axis.bins())
            .filter(|&k| (low_hz..=high_hz).contains(&axis.bin_hz(k, frame_len, sample_rate_hz)))
            .collect();
        let (g, t) = (guard as i64, train as i64);
        let training = cut_bins
            .iter()
            .flat_map(|&k| {
                (-(g + t)..=-(g + 1))
                    .chain(g + 1..=g + t)
                    .map(move |o| axis.cell(k, o))
            })
            .collect();
        CellPlan {
            cut_bins,
            training,
            cells_per_cut: 2 * train,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

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
