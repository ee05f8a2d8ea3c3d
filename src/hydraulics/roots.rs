//! Bracketing root finders used by the hydraulics core.
//!
//! Every solver here starts from a bracket `[a, b]` on which the function changes sign, so it
//! converges for any continuous function (no Newton step is taken without a bracket to fall back
//! on). Reference: R. P. Brent (1973), *Algorithms for Minimization without Derivatives*, ch. 4.

/// Why a bracketing solve could not start.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum RootError {
    /// `f(a)` and `f(b)` have the same sign, so the bracket holds no guaranteed root.
    #[error("no sign change on [{a}, {b}]: f(a) = {fa}, f(b) = {fb}")]
    NoSignChange {
        /// Lower end of the bracket.
        a: f64,
        /// Upper end of the bracket.
        b: f64,
        /// Function value at `a`.
        fa: f64,
        /// Function value at `b`.
        fb: f64,
    },
    /// The function returned NaN inside the bracket.
    #[error("the function is not finite inside [{a}, {b}]")]
    NotFinite {
        /// Lower end of the bracket.
        a: f64,
        /// Upper end of the bracket.
        b: f64,
    },
}

/// Finds a root of `f` in `[a, b]` by Brent's method (inverse quadratic interpolation, secant
/// and bisection, Brent 1973 ch. 4), to an absolute tolerance of about `4·ε·|x| + tol`.
///
/// `f(a)` and `f(b)` must have opposite signs (or one of them be zero).
// Brent's algorithm tests `a == c` exactly: it asks whether two stored iterates are the same
// point (then only a secant step is possible), not whether two computed values are close.
#[allow(clippy::float_cmp)]
pub fn brent<F: FnMut(f64) -> f64>(mut f: F, a: f64, b: f64, tol: f64) -> Result<f64, RootError> {
    let (mut a, mut b) = (a, b);
    let (mut fa, mut fb) = (f(a), f(b));
    if fa.is_nan() || fb.is_nan() {
        return Err(RootError::NotFinite { a, b });
    }
    if fa == 0.0 {
        return Ok(a);
    }
    if fb == 0.0 {
        return Ok(b);
    }
    if fa.signum() == fb.signum() {
        return Err(RootError::NoSignChange { a, b, fa, fb });
    }
    let (mut c, mut fc) = (a, fa);
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
            return Ok(b);
        }
        if e.abs() >= tol1 && fa.abs() > fb.abs() {
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
            return Err(RootError::NotFinite { a, b });
        }
    }
    // 200 Brent steps shrink any bracket below f64 resolution; reaching here means the
    // function is discontinuous at the root, and `b` is the best point found.
    Ok(b)
}

/// Newton's method kept inside a bracket (Press et al., *Numerical Recipes*, 3rd ed., §9.4
/// `rtsafe`): `f` returns the value and the derivative; a step that would leave `[lo, hi]`, or
/// that does not halve the bracket fast enough, is replaced by bisection. `f(lo)` and `f(hi)`
/// must differ in sign.
pub fn newton_bracketed<F: FnMut(f64) -> (f64, f64)>(mut f: F, lo: f64, hi: f64, x0: f64) -> Result<f64, RootError> {
    let (flo, _) = f(lo);
    let (fhi, _) = f(hi);
    if flo.is_nan() || fhi.is_nan() {
        return Err(RootError::NotFinite { a: lo, b: hi });
    }
    if flo == 0.0 {
        return Ok(lo);
    }
    if fhi == 0.0 {
        return Ok(hi);
    }
    if flo.signum() == fhi.signum() {
        return Err(RootError::NoSignChange {
            a: lo,
            b: hi,
            fa: flo,
            fb: fhi,
        });
    }
    // orient so that f(neg) < 0 < f(pos)
    let (mut neg, mut pos) = if flo < 0.0 { (lo, hi) } else { (hi, lo) };
    let mut x = if x0 > lo.min(hi) && x0 < lo.max(hi) {
        x0
    } else {
        0.5 * (lo + hi)
    };
    let mut dx_old = (hi - lo).abs();
    let mut dx = dx_old;
    for _ in 0..200 {
        let (fx, dfx) = f(x);
        if fx.is_nan() {
            return Err(RootError::NotFinite { a: lo, b: hi });
        }
        if fx == 0.0 {
            return Ok(x);
        }
        if fx < 0.0 {
            neg = x;
        } else {
            pos = x;
        }
        let newton = x - fx / dfx;
        // a Newton step below the rounding level of x: converged
        if (newton - x).abs() <= 4.0 * f64::EPSILON * x.abs() {
            return Ok(newton);
        }
        let inside = (newton - neg) * (newton - pos) < 0.0;
        if !inside || !newton.is_finite() || (2.0 * fx).abs() > (dx_old * dfx).abs() {
            dx_old = dx;
            dx = 0.5 * (pos - neg);
            x = neg + dx;
        } else {
            dx_old = dx;
            dx = newton - x;
            x = newton;
        }
        if dx.abs() <= 4.0 * f64::EPSILON * x.abs() || (pos - neg).abs() <= 4.0 * f64::EPSILON * x.abs() {
            return Ok(x);
        }
    }
    Ok(x)
}

/// Real roots of `a·x² + b·x + c = 0`, in ascending order, computed in the cancellation-free form
/// (Press et al., *Numerical Recipes*, 3rd ed., §5.6). Degenerates to the linear root when `a = 0`.
pub fn quadratic_roots(a: f64, b: f64, c: f64) -> Vec<f64> {
    let scale = a.abs().max(b.abs()).max(c.abs());
    if scale == 0.0 {
        return Vec::new();
    }
    if a.abs() <= 1e-15 * scale {
        return if b != 0.0 { vec![-c / b] } else { Vec::new() };
    }
    let disc = b * b - 4.0 * a * c;
    if disc < 0.0 {
        return Vec::new();
    }
    let q = -0.5 * (b + b.signum() * disc.sqrt());
    let mut roots = if q == 0.0 { vec![0.0] } else { vec![q / a, c / q] };
    roots.sort_by(f64::total_cmp);
    roots
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn brent_finds_cube_root_of_two() {
        // analytic: 2^(1/3)
        let x = brent(|x| x * x * x - 2.0, 0.0, 2.0, 0.0).expect("bracketed");
        assert_relative_eq!(x, 2f64.cbrt(), max_relative = 1e-15);
    }

    #[test]
    fn newton_bracketed_finds_cube_root_of_two_from_a_poor_guess() {
        // analytic: 2^(1/3)
        let x = newton_bracketed(|x| (x * x * x - 2.0, 3.0 * x * x), 0.0, 10.0, 9.9).expect("bracketed");
        assert_relative_eq!(x, 2f64.cbrt(), max_relative = 1e-15);
    }

    #[test]
    fn brent_rejects_bracket_without_sign_change() {
        let err = brent(|x| x * x + 1.0, -1.0, 1.0, 0.0).unwrap_err();
        assert!(matches!(err, RootError::NoSignChange { .. }));
    }

    #[test]
    fn quadratic_roots_are_accurate_when_cancellation_threatens() {
        // x² − 1e8·x + 1 = 0: roots ≈ 1e-8 and 1e8 (analytic)
        let r = quadratic_roots(1.0, -1e8, 1.0);
        assert_relative_eq!(r[0], 1e-8, max_relative = 1e-12);
        assert_relative_eq!(r[1], 1e8, max_relative = 1e-12);
    }
}
