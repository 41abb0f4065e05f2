//! Periodic shape-preserving piecewise cubic Hermite interpolation (PCHIP).
//!
//! Fritsch & Carlson, "Monotone piecewise cubic interpolation", SIAM J. Numer.
//! Anal. 17(2):238–246, 1980, with the knot-slope formula of Fritsch & Butland
//! (1984) — the weighted harmonic mean of the neighbouring secants, zero at a
//! local extremum — which is the form of the usual `pchip` routines. The gait
//! model's control points cover one cycle; interpolating through them
//! replicated at t − 1, t and t + 1 and reading the result on [0, 1) is the
//! same as giving every knot its periodic neighbours, which is what is done
//! here (and makes the curve exactly periodic).

/// Two knots closer than this (in normalized time) are one knot.
const COINCIDENT_KNOTS: f64 = 1e-9;

/// A periodic curve of period 1 through control points.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct PeriodicPchip {
    /// Knot times in [0, 1), increasing.
    knots: Vec<f64>,
    /// Values at the knots.
    values: Vec<f64>,
    /// Slopes (value per unit normalized time) at the knots.
    slopes: Vec<f64>,
}

impl PeriodicPchip {
    /// A curve through `points` `(t, value)`; `t` may lie outside [0, 1) and is wrapped.
    /// Points that coincide after wrapping are merged (their values averaged:
    /// in the gait tables they are equal).
    ///
    /// An empty list gives the zero curve.
    pub(crate) fn new(points: &[(f64, f64)]) -> PeriodicPchip {
        let mut wrapped: Vec<(f64, f64)> = points
            .iter()
            .map(|&(t, value)| (wrap_unit(t), value))
            .collect();
        wrapped.sort_by(|a, b| a.0.total_cmp(&b.0));

        // Merge coincident knots, including the pair straddling the wrap
        // (a knot just below 1 and one at 0).
        let mut merged: Vec<(f64, f64, usize)> = Vec::with_capacity(wrapped.len());
        for (t, value) in wrapped {
            match merged.last_mut() {
                Some(last) if t - last.0 < COINCIDENT_KNOTS => {
                    last.1 += value;
                    last.2 += 1;
                }
                _ => merged.push((t, value, 1)),
            }
        }
        if merged.len() > 1 {
            let first = merged[0];
            let last_index = merged.len() - 1;
            if first.0 + 1.0 - merged[last_index].0 < COINCIDENT_KNOTS {
                merged[0].1 += merged[last_index].1;
                merged[0].2 += merged[last_index].2;
                merged.pop();
            }
        }
        let knots: Vec<f64> = merged.iter().map(|m| m.0).collect();
        let values: Vec<f64> = merged.iter().map(|m| m.1 / m.2 as f64).collect();

        let n = knots.len();
        let mut slopes = vec![0.0; n];
        for i in 0..n {
            let (prev_t, prev_v) = periodic_knot(&knots, &values, i as isize - 1);
            let (next_t, next_v) = periodic_knot(&knots, &values, i as isize + 1);
            let h_prev = knots[i] - prev_t;
            let h_next = next_t - knots[i];
            let secant_prev = (values[i] - prev_v) / h_prev;
            let secant_next = (next_v - values[i]) / h_next;
            slopes[i] = if secant_prev * secant_next <= 0.0 {
                // Local extremum or flat piece: a zero slope keeps the curve
                // from overshooting (the shape-preserving condition).
                0.0
            } else {
                let w_prev = 2.0 * h_next + h_prev;
                let w_next = h_next + 2.0 * h_prev;
                (w_prev + w_next) / (w_prev / secant_prev + w_next / secant_next)
            };
        }
        PeriodicPchip {
            knots,
            values,
            slopes,
        }
    }

    /// Knot times in [0, 1), increasing: where the curve's second derivative may jump.
    pub(crate) fn knots(&self) -> &[f64] {
        &self.knots
    }

    /// The curve at normalized time `t` (any real; wrapped into [0, 1)).
    pub(crate) fn at(&self, t: f64) -> f64 {
        let n = self.knots.len();
        if n == 0 {
            return 0.0;
        }
        let t = wrap_unit(t);
        // The interval [knot i, knot i+1) holding t; before the first knot, t
        // belongs to the wrap interval from the last knot to the first + 1.
        let (i, t) = match self.knots.partition_point(|&k| k <= t) {
            0 => (n - 1, t + 1.0),
            p => (p - 1, t),
        };
        let (x0, y0, d0) = (self.knots[i], self.values[i], self.slopes[i]);
        let (x1, y1, d1) = if i + 1 < n {
            (self.knots[i + 1], self.values[i + 1], self.slopes[i + 1])
        } else {
            (self.knots[0] + 1.0, self.values[0], self.slopes[0])
        };
        let h = x1 - x0;
        if h <= 0.0 {
            return y0;
        }
        let s = (t - x0) / h;
        let s2 = s * s;
        let s3 = s2 * s;
        let h00 = 2.0 * s3 - 3.0 * s2 + 1.0;
        let h10 = s3 - 2.0 * s2 + s;
        let h01 = -2.0 * s3 + 3.0 * s2;
        let h11 = s3 - s2;
        h00 * y0 + h10 * h * d0 + h01 * y1 + h11 * h * d1
    }
}

/// Knot `index` of the periodic sequence (indices outside 0..n refer to the
/// neighbouring periods, shifted by ±1 in time).
fn periodic_knot(knots: &[f64], values: &[f64], index: isize) -> (f64, f64) {
    let n = knots.len() as isize;
    let period = index.div_euclid(n);
    let i = index.rem_euclid(n) as usize;
    (knots[i] + period as f64, values[i])
}

/// `x` wrapped into [0, 1); non-finite input gives 0.
pub(crate) fn wrap_unit(x: f64) -> f64 {
    if !x.is_finite() {
        return 0.0;
    }
    let r = x.rem_euclid(1.0);
    // rem_euclid of a tiny negative number rounds to exactly 1.0.
    if r >= 1.0 {
        0.0
    } else {
        r
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The slow, obvious version: a non-periodic PCHIP through the points
    /// replicated at t − 1, t, t + 1 (as the gait model's transcription
    /// describes), with the same Fritsch–Butland slopes and one-sided end slopes.
    fn replicated_pchip(points: &[(f64, f64)], t: f64) -> f64 {
        let mut xs: Vec<(f64, f64)> = Vec::new();
        for shift in [-1.0, 0.0, 1.0] {
            for &(x, y) in points {
                xs.push((x + shift, y));
            }
        }
        xs.sort_by(|a, b| a.0.total_cmp(&b.0));
        xs.dedup_by(|a, b| (a.0 - b.0).abs() < 1e-12);
        let n = xs.len();
        let h: Vec<f64> = (0..n - 1).map(|i| xs[i + 1].0 - xs[i].0).collect();
        let m: Vec<f64> = (0..n - 1).map(|i| (xs[i + 1].1 - xs[i].1) / h[i]).collect();
        let mut d = vec![0.0; n];
        d[0] = m[0];
        d[n - 1] = m[n - 2];
        for i in 1..n - 1 {
            if m[i - 1] * m[i] > 0.0 {
                let w1 = 2.0 * h[i] + h[i - 1];
                let w2 = h[i] + 2.0 * h[i - 1];
                d[i] = (w1 + w2) / (w1 / m[i - 1] + w2 / m[i]);
            }
        }
        let i = (0..n - 1)
            .find(|&i| xs[i].0 <= t && t < xs[i + 1].0)
            .unwrap();
        let s = (t - xs[i].0) / h[i];
        let (s2, s3) = (s * s, s * s * s);
        (2.0 * s3 - 3.0 * s2 + 1.0) * xs[i].1
            + (s3 - 2.0 * s2 + s) * h[i] * d[i]
            + (-2.0 * s3 + 3.0 * s2) * xs[i + 1].1
            + (s3 - s2) * h[i] * d[i + 1]
    }

    #[test]
    fn periodic_curve_equals_the_replicated_interpolant_on_one_cycle() {
        // Knee control points of regime b (docs/reference/people.md#p2, after Chen 2011) and the
        // regime-b ankle with D_s/D_c = 0.618.
        for points in [
            vec![(0.17, 3.0), (0.4, 3.0), (0.75, 70.0), (1.0, 3.0)],
            vec![
                (0.0, -3.0),
                (0.08, -18.0),
                (0.5, 8.0),
                (0.618, -20.0),
                (0.85, -3.0),
            ],
        ] {
            let curve = PeriodicPchip::new(&points);
            for step in 0..1000 {
                let t = step as f64 / 1000.0;
                let expected = replicated_pchip(&points, t);
                assert!((curve.at(t) - expected).abs() < 1e-9, "t {t}");
            }
        }
    }

    #[test]
    fn interpolant_passes_through_its_points_and_does_not_overshoot() {
        // Fritsch & Carlson 1980: the interpolant keeps the data's monotonicity,
        // so it never leaves the range of the control values.
        let points = [(0.05, 14.0), (0.51, 44.0), (0.9, 17.0)];
        let curve = PeriodicPchip::new(&points);
        for &(t, v) in &points {
            assert!((curve.at(t) - v).abs() < 1e-12);
        }
        for step in 0..2000 {
            let v = curve.at(step as f64 / 2000.0);
            assert!((14.0 - 1e-12..=44.0 + 1e-12).contains(&v), "{v}");
        }
    }

    #[test]
    fn coincident_points_after_wrapping_are_merged() {
        // Hip, regimes a/b: (−0.1, 25) and (0.9, 25) are one knot
        // (docs/reference/people.md#p3).
        let curve = PeriodicPchip::new(&[(-0.1, 25.0), (0.5, -15.0), (0.9, 25.0)]);
        assert_eq!(curve.knots.len(), 2);
        assert!((curve.at(0.9) - 25.0).abs() < 1e-12);
        assert!((curve.at(0.5) + 15.0).abs() < 1e-12);
        assert!((curve.at(0.2) - curve.at(1.2)).abs() < 1e-12);
    }

    #[test]
    fn wrap_handles_rounding_and_bad_numbers() {
        assert_eq!(wrap_unit(-1e-18), 0.0);
        assert_eq!(wrap_unit(f64::NAN), 0.0);
        assert!((wrap_unit(-0.25) - 0.75).abs() < 1e-15);
    }
}
