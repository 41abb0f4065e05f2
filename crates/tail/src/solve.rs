//! One-dimensional root finding and maximisation on a bracket.
//!
//! Both are Brent's methods (Brent 1973, *Algorithms for Minimization without Derivatives*,
//! ch. 4 `zero` and ch. 5 `localmin`): inverse quadratic / parabolic steps guarded by
//! bisection / golden-section steps, so they never leave the bracket and converge even when
//! the function is only piecewise smooth. Non-finite function values (a likelihood outside
//! the support is `-inf`) force the guarded step.

/// A root of `f` in `[a, b]`, given `f(a)` and `f(b)` of opposite signs (or one zero),
/// to an absolute tolerance `tol` in the argument.
pub(crate) fn brent_root(
    f: &mut dyn FnMut(f64) -> f64,
    mut a: f64,
    mut b: f64,
    mut fa: f64,
    mut fb: f64,
    tol: f64,
) -> f64 {
    if fa == 0.0 {
        return a;
    }
    if fb == 0.0 {
        return b;
    }
    debug_assert!(fa.signum() != fb.signum(), "root not bracketed");
    let mut c = a;
    let mut fc = fa;
    let mut d = b - a;
    let mut e = d;
    for _ in 0..200 {
        if fb.signum() == fc.signum() {
            c = a;
            fc = fa;
            d = b - a;
            e = d;
        }
        if fc.abs() < fb.abs() {
            a = b;
            b = c;
            c = a;
            fa = fb;
            fb = fc;
            fc = fa;
        }
        let tol1 = 2.0 * f64::EPSILON * b.abs() + 0.5 * tol;
        let xm = 0.5 * (c - b);
        if xm.abs() <= tol1 || fb == 0.0 {
            return b;
        }
        let interpolate = e.abs() >= tol1
            && fa.abs() > fb.abs()
            && fa.is_finite()
            && fb.is_finite()
            && fc.is_finite();
        if interpolate {
            let s = fb / fa;
            let (mut p, mut q);
            if a == c {
                p = 2.0 * xm * s;
                q = 1.0 - s;
            } else {
                let qq = fa / fc;
                let r = fb / fc;
                p = s * (2.0 * xm * qq * (qq - r) - (b - a) * (r - 1.0));
                q = (qq - 1.0) * (r - 1.0) * (s - 1.0);
            }
            if p > 0.0 {
                q = -q;
            }
            p = p.abs();
            let min1 = 3.0 * xm * q - (tol1 * q).abs();
            let min2 = (e * q).abs();
            if 2.0 * p < min1.min(min2) {
                e = d;
                d = p / q;
            } else {
                d = xm;
                e = d;
            }
        } else {
            d = xm;
            e = d;
        }
        a = b;
        fa = fb;
        b += if d.abs() > tol1 { d } else { tol1.copysign(xm) };
        fb = f(b);
        if fb.is_nan() {
            // Treat an undefined value as the far side of the bracket (c's sign flipped)
            // so that bisection continues towards the defined part.
            fb = -fc;
        }
    }
    b
}

/// The maximum of `f` on `[a, b]`: `(argmax, max)`, with the argument to an absolute
/// tolerance `tol`. Finds a local maximum; callers bracket it first on a grid.
pub(crate) fn brent_max(f: &mut dyn FnMut(f64) -> f64, a: f64, b: f64, tol: f64) -> (f64, f64) {
    // Brent's localmin on g = -f.
    let golden = 0.5 * (3.0 - 5f64.sqrt());
    let (mut a, mut b) = (a.min(b), a.max(b));
    let mut x = a + golden * (b - a);
    let mut w = x;
    let mut v = x;
    let mut fx = -f(x);
    let mut fw = fx;
    let mut fv = fx;
    let mut d: f64 = 0.0;
    let mut e: f64 = 0.0;
    for _ in 0..200 {
        let xm = 0.5 * (a + b);
        let tol1 = f64::EPSILON.sqrt() * 1e-3 * x.abs() + tol / 3.0;
        let tol2 = 2.0 * tol1;
        if (x - xm).abs() <= tol2 - 0.5 * (b - a) {
            break;
        }
        let mut golden_step = true;
        if e.abs() > tol1 && fx.is_finite() && fw.is_finite() && fv.is_finite() {
            let r = (x - w) * (fx - fv);
            let mut q = (x - v) * (fx - fw);
            let mut p = (x - v) * q - (x - w) * r;
            q = 2.0 * (q - r);
            if q > 0.0 {
                p = -p;
            }
            q = q.abs();
            let etemp = e;
            if !(p.abs() >= (0.5 * q * etemp).abs() || p <= q * (a - x) || p >= q * (b - x)) {
                e = d;
                d = p / q;
                let u = x + d;
                if u - a < tol2 || b - u < tol2 {
                    d = tol1.copysign(xm - x);
                }
                golden_step = false;
            }
        }
        if golden_step {
            e = if x >= xm { a - x } else { b - x };
            d = golden * e;
        }
        let u = if d.abs() >= tol1 {
            x + d
        } else {
            x + tol1.copysign(d)
        };
        let mut fu = -f(u);
        if fu.is_nan() {
            fu = f64::INFINITY;
        }
        if fu <= fx {
            if u >= x {
                a = x;
            } else {
                b = x;
            }
            v = w;
            fv = fw;
            w = x;
            fw = fx;
            x = u;
            fx = fu;
        } else {
            if u < x {
                a = u;
            } else {
                b = u;
            }
            if fu <= fw || w == x {
                v = w;
                fv = fw;
                w = u;
                fw = fu;
            } else if fu <= fv || v == x || v == w {
                v = u;
                fv = fu;
            }
        }
    }
    (x, -fx)
}

/// The maximum of `f` over `[lo, hi]`: a grid of `points` evaluations locates the best
/// neighbourhood, then [`brent_max`] refines it. Returns `(argmax, max)`.
pub(crate) fn grid_then_brent_max(
    f: &mut dyn FnMut(f64) -> f64,
    lo: f64,
    hi: f64,
    points: usize,
    tol: f64,
) -> (f64, f64) {
    let points = points.max(3);
    let step = (hi - lo) / (points - 1) as f64;
    let mut best = (lo, f64::NEG_INFINITY);
    let mut best_i = 0;
    for i in 0..points {
        let x = if i + 1 == points {
            hi
        } else {
            lo + step * i as f64
        };
        let fx = f(x);
        if fx > best.1 {
            best = (x, fx);
            best_i = i;
        }
    }
    if !best.1.is_finite() {
        return best;
    }
    let a = lo + step * best_i.saturating_sub(1) as f64;
    let b = (lo + step * (best_i + 1) as f64).min(hi);
    let refined = brent_max(f, a, b, tol);
    if refined.1 >= best.1 {
        refined
    } else {
        best
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn root_of_a_cubic_matches_the_closed_form() {
        // x^3 - 2 = 0 has the root 2^(1/3).
        let mut f = |x: f64| x * x * x - 2.0;
        let r = brent_root(&mut f, 0.0, 3.0, -2.0, 25.0, 1e-15);
        assert!((r - 2f64.cbrt()).abs() < 1e-14, "{r}");
    }

    #[test]
    fn maximum_of_a_smooth_function_matches_the_closed_form() {
        // x e^{-x} peaks at x = 1 with value 1/e.
        let mut f = |x: f64| x * (-x).exp();
        let (x, fx) = brent_max(&mut f, 0.0, 5.0, 1e-10);
        assert!((x - 1.0).abs() < 1e-7, "{x}");
        assert!((fx - (-1f64).exp()).abs() < 1e-14);
        let (x, _) = grid_then_brent_max(&mut f, 0.0, 30.0, 31, 1e-10);
        assert!((x - 1.0).abs() < 1e-7, "{x}");
    }

    #[test]
    fn infinite_values_do_not_derail_the_search() {
        // -inf outside (0, 2), a maximum at 1.5.
        let mut f = |x: f64| {
            if x <= 0.0 || x >= 2.0 {
                f64::NEG_INFINITY
            } else {
                -(x - 1.5) * (x - 1.5)
            }
        };
        let (x, _) = grid_then_brent_max(&mut f, -1.0, 3.0, 9, 1e-10);
        assert!((x - 1.5).abs() < 1e-7, "{x}");
    }
}
