//! Bracketed root finding (Brent's method) for the detection solvers: never unbounded.
//!
//! Pure arithmetic on a caller's function of one `f64`; knows nothing of probabilities.

/// The result of a bracketed root search.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Root {
    /// The estimate of the root (the end of the final bracket with the smaller |f|).
    pub x: f64,
    /// Half the width of the final bracket: the root lies within `x ± half_width`.
    pub half_width: f64,
    /// Evaluations of the function used.
    pub evaluations: u32,
    /// Whether the tolerance was met within the evaluation limit.
    pub converged: bool,
}

/// Evaluation limit of one search. Brent's method needs at most about (log₂(w/t))² steps
/// for a bracket w and tolerance t; for w/t ≤ 2⁵⁰ that is well over the ~10–40 used in
/// practice, and 200 keeps a pathological function from running long.
pub const MAX_EVALUATIONS: u32 = 200;

/// A root of `f` in the bracket [a, b], where f(a) and f(b) differ in sign (or one is zero).
///
/// Returns `None` when the ends do not bracket a root or are not finite. The search stops
/// when the bracket's half-width is below `tol + 2·ε·|x|` (ε the f64 rounding unit), or after
/// [`MAX_EVALUATIONS`] evaluations (then `converged` is false, and the root is still within
/// the reported bracket, provided `f` is continuous).
///
/// # Formula
/// Brent's method: inverse quadratic interpolation or the secant step when it stays well
/// inside the bracket and shrinks it fast enough, else bisection; the bracket always holds a
/// sign change.
///
/// # Source
/// R. P. Brent, *Algorithms for Minimization without Derivatives* (Prentice-Hall 1973),
/// chapter 4, procedure `zero`; as in Forsythe, Malcolm & Moler, *Computer Methods for
/// Mathematical Computations* (1977), `zeroin` (from memory).
///
/// ```
/// // √2 as the root of x² − 2 on [1, 2] (√2 = 1.4142135623730951).
/// let r = engine::detection::brent::find_root(|x| x * x - 2.0, 1.0, 2.0, 1e-15).unwrap();
/// assert!((r.x - std::f64::consts::SQRT_2).abs() < 1e-14 && r.converged);
/// ```
pub fn find_root(mut f: impl FnMut(f64) -> f64, a: f64, b: f64, tol: f64) -> Option<Root> {
    let fa = f(a);
    let fb = f(b);
    find_root_with(&mut f, a, fa, b, fb, tol)
}

/// [`find_root`] with the function's values at the ends already known.
pub fn find_root_with(
    f: &mut impl FnMut(f64) -> f64,
    a: f64,
    fa: f64,
    b: f64,
    fb: f64,
    tol: f64,
) -> Option<Root> {
    if !a.is_finite() || !b.is_finite() || fa.is_nan() || fb.is_nan() {
        return None;
    }
    if fa == 0.0 {
        return Some(Root {
            x: a,
            half_width: 0.0,
            evaluations: 0,
            converged: true,
        });
    }
    if fb == 0.0 {
        return Some(Root {
            x: b,
            half_width: 0.0,
            evaluations: 0,
            converged: true,
        });
    }
    if (fa > 0.0) == (fb > 0.0) {
        return None;
    }
    let tol = tol.max(0.0);
    let (mut a, mut fa, mut b, mut fb) = (a, fa, b, fb);
    let (mut c, mut fc) = (a, fa);
    let mut d = b - a;
    let mut e = d;
    let mut evaluations = 0u32;
    loop {
        if (fb > 0.0) == (fc > 0.0) {
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
        let m = 0.5 * (c - b);
        if m.abs() <= tol1 || fb == 0.0 {
            return Some(Root {
                x: b,
                half_width: m.abs(),
                evaluations,
                converged: true,
            });
        }
        if evaluations >= MAX_EVALUATIONS {
            return Some(Root {
                x: b,
                half_width: m.abs(),
                evaluations,
                converged: false,
            });
        }
        if e.abs() < tol1 || fa.abs() <= fb.abs() {
            d = m;
            e = m;
        } else {
            let s = fb / fa;
            let (mut p, mut q);
            if a == c {
                p = 2.0 * m * s;
                q = 1.0 - s;
            } else {
                let qa = fa / fc;
                let r = fb / fc;
                p = s * (2.0 * m * qa * (qa - r) - (b - a) * (r - 1.0));
                q = (qa - 1.0) * (r - 1.0) * (s - 1.0);
            }
            if p > 0.0 {
                q = -q;
            } else {
                p = -p;
            }
            let s_prev = e;
            e = d;
            if 2.0 * p < 3.0 * m * q - (tol1 * q).abs() && p < (0.5 * s_prev * q).abs() {
                d = p / q;
            } else {
                d = m;
                e = m;
            }
        }
        a = b;
        fa = fb;
        b += if d.abs() > tol1 {
            d
        } else if m > 0.0 {
            tol1
        } else {
            -tol1
        };
        fb = f(b);
        evaluations += 1;
        if fb.is_nan() {
            return None;
        }
    }
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used)]
    use super::*;

    #[test]
    fn refuses_a_non_bracket_and_stops_on_a_step() {
        assert!(find_root(|x| x * x + 1.0, -1.0, 1.0, 1e-12).is_none());
        assert!(find_root(|x| x, f64::NAN, 1.0, 1e-12).is_none());
        // A discontinuous function: the bracket still closes on the jump.
        let r = find_root(|x| if x < 0.3 { -1.0 } else { 1.0 }, 0.0, 1.0, 1e-12).unwrap();
        assert!((r.x - 0.3).abs() < 1e-11 && r.evaluations < MAX_EVALUATIONS);
    }
}
