//! A bracketed, safeguarded scalar root finder (Brent's method).
//!
//! Written here rather than taken from a crate because it sits on the hot path of every steady
//! state and scan point (hundreds of thousands of calls per scan): the callers already hold
//! the bracket and both end values, and a general optimisation framework's executor and
//! bookkeeping would cost more than the dozen function evaluations it needs.

/// Finds a root of `f` in `[a, b]`, given `fa = f(a)` and `fb = f(b)` of opposite signs (or one
/// of them zero). Stops when the bracket is narrower than `tol` (absolute, in the units of x)
/// or `f` is exactly 0. Returns `None` if the bracket is not valid or `f` gives a non-finite value.
pub fn brent(mut f: impl FnMut(f64) -> f64, a: f64, b: f64, fa: f64, fb: f64, tol: f64) -> Option<f64> {
    let (mut a, mut b, mut fa, mut fb) = (a, b, fa, fb);
    if !(fa.is_finite() && fb.is_finite()) || fa * fb > 0.0 {
        return None;
    }
    if fa == 0.0 {
        return Some(a);
    }
    if fb == 0.0 {
        return Some(b);
    }
    let (mut c, mut fc) = (a, fa);
    let mut d = b - a;
    let mut e = d;
    for _ in 0..200 {
        if fb * fc > 0.0 {
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
            return Some(b);
        }
        if e.abs() >= tol1 && fa.abs() > fb.abs() {
            // Inverse quadratic interpolation, or the secant step when only two points differ.
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
        if !fb.is_finite() {
            return None;
        }
    }
    Some(b)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_the_cube_root_of_two() {
        // x³ − 2 = 0 has the real root 2^(1/3) = 1.259921049894873 (common practice).
        let r = brent(|x| x * x * x - 2.0, 0.0, 2.0, -2.0, 6.0, 1e-14).unwrap();
        assert!((r - 2f64.cbrt()).abs() < 1e-13);
    }

    #[test]
    fn refuses_a_bracket_without_a_sign_change() {
        assert!(brent(|x| x * x + 1.0, -1.0, 1.0, 2.0, 2.0, 1e-12).is_none());
    }
}
