//! Poisson–Gaussian tails and density by numerical inversion along a contour through the
//! saddle point, with the trapezoidal rule's error bounded in closed form.
//!
//! Used by `poisson_gaussian` when σ and √μ are both large (the direct sum would need
//! thousands of terms); returns `None` whenever its proven bound cannot be met within
//! [`MAX_NODES`], and the caller then sums directly. No other distribution here.
//!
//! # The method
//! With K(t) = μ(eᵗ − 1) + σ²t²/2 the cumulant generating function of x = N + R, for any
//! c > 0 the survival is the inversion integral (Gil-Pelaez/Bromwich form)
//! ```text
//! S(τ) = (1/2π) ∫ ψ(u) du,   ψ(u) = exp(K(c + iu) − (c + iu)τ) / (c + iu)
//! ```
//! and for c < 0 the same integral is −F(τ). The trapezoidal rule with step h equals, by the
//! Poisson summation formula, exactly
//! ```text
//! S_h(τ) = Σ_k e^{ckL} S(τ + kL),   L = 2π/h
//! ```
//! so its error is the sum over k ≠ 0, all terms positive: with S ≤ 1 on one side and the
//! Chernoff bound S(y) ≤ exp(K(2c) − 2cy) on the other,
//! ```text
//! 0 ≤ S_h − S ≤ (1 + e^{K(2c) − 2cτ}) · e^{−|c|L} / (1 − e^{−|c|L}).
//! ```
//! The sum is cut at node J; with |ψ(u)| ≤ e^{K(c) − cτ} · e^{−2μe^c sin²(u/2) − σ²u²/2}/|u|,
//! 1 − cos u ≥ 2u²/π² on [0, π], and the Gaussian factor alone beyond π, the neglected nodes
//! add at most
//! ```text
//! (A/π)·[ (1/U)·√(π/β)·Q(U√(2β)) + (1/(π − h))·(√(2π)/σ)·Q((π − h)σ) ],
//!   A = e^{K(c) − cτ}, β = σ²/2 + 2μe^c/π², U = J·h < π
//! ```
//! (the revival of the periodic Poisson factor at u = 2π is what the second term bounds;
//! it is why σ must not be small). c is the saddle point K′(c) = τ, moved to
//! |c| ≥ 1/√(μ + σ²) near the mean so that the pole at t = 0 stays away. The density is the
//! same integral without the 1/t, with the density bound f(y) ≤ e^{K(t) − ty}/(σ√(2π)).
//!
//! # Source
//! J. Abate and W. Whitt, "The Fourier-series method for inverting transforms of probability
//! distributions", *Queueing Systems* 10:5–88, 1992 (the aliasing identity of the trapezoidal
//! rule, from memory); C. W. Helstrom, "Approximate calculation of cumulative distribution
//! functions", IEEE Trans. Aerospace and Electronic Systems, 1978, and Helstrom & Ritcey,
//! "Evaluating radar detection probabilities by steepest descent integration", 1984
//! (integration through the saddle point, from memory). The bounds above are derived here.

use super::brent;
use super::normal;
use super::poisson::Bounded;
use super::poisson_gaussian::Side;
use std::f64::consts::PI;

/// Smallest σ [e⁻] for which the contour is tried: below it the Poisson factor's revival at
/// u = 2π is not damped by the Gaussian, and the direct sum (at most 23σ terms) is cheap.
pub const MIN_SIGMA_E: f64 = 1.0;

/// Most trapezoid nodes one evaluation may use; past it the caller sums directly.
pub const MAX_NODES: f64 = 4000.0;

/// Relative error aimed at (aliasing and truncation each); the a-posteriori check accepts
/// up to ten times this, 1e-12, else the contour result is refused.
const REL_TARGET: f64 = 1e-13;

/// What the integral computes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Kind {
    Tail,
    Density,
}

/// The saddle point t̂ of K(t) − tx: μeᵗ + σ²t = x, from a proven bracket.
fn saddle(mu: f64, s2: f64, x: f64) -> Option<f64> {
    let g = |t: f64| mu * t.exp_m1() + s2 * t - (x - mu);
    if x == mu {
        return Some(0.0);
    }
    // K′(t) ≥ μ + σ²t for t ≥ 0 and K′(t) ≤ μ + σ²t for t ≤ 0, so (x − μ)/σ² brackets t̂;
    // for x > μ also K′(ln(x/μ)) ≥ x.
    let mut far = (x - mu) / s2;
    if x > mu && mu > 0.0 {
        far = far.min((x / mu).ln());
    }
    let (a, b) = if far > 0.0 { (0.0, far) } else { (far, 0.0) };
    let tol = 1e-15 * far.abs();
    brent::find_root(g, a, b, tol).map(|r| r.x)
}

/// ln(1 + eˣ) without overflow.
fn softplus(x: f64) -> f64 {
    if x > 40.0 {
        x
    } else {
        x.exp().ln_1p()
    }
}

/// The trapezoidal sum on the contour: (value on the contour's own side, error bound, c).
fn integrate(mu: f64, s: f64, x: f64, kind: Kind) -> Option<(f64, f64, f64)> {
    if !(s >= MIN_SIGMA_E) || !x.is_finite() || !(mu >= 0.0) {
        return None;
    }
    let s2 = s * s;
    let var = mu + s2;
    let t_hat = saddle(mu, s2, x)?;
    let sign = if x >= mu { 1.0 } else { -1.0 };
    let c_min = 1.0 / var.sqrt();
    let c = if t_hat.abs() >= c_min {
        t_hat
    } else {
        sign * c_min
    };
    let ec = c.exp();
    let k2c = mu * ec + s2; // K″(c)
    let ln_a = mu * c.exp_m1() + 0.5 * s2 * c * c - c * x; // K(c) − cx
    let ln_k2 = mu * (2.0 * c).exp_m1() + 2.0 * s2 * c * c - 2.0 * c * x; // K(2c) − 2cx
    let (ln_est, scale) = match kind {
        // Leading saddle-point term of the tail, and of the density.
        Kind::Tail => (ln_a - (c.abs() * (2.0 * PI * k2c).sqrt()).ln(), 1.0),
        Kind::Density => (
            ln_a - 0.5 * (2.0 * PI * k2c).ln(),
            1.0 / (s * (2.0 * PI).sqrt()),
        ),
    };
    let ln_target = REL_TARGET.ln() + ln_est;
    // Aliasing: scale·(1 + e^{ln_k2})·e^{−X}/(1 − e^{−X}) ≤ target, X = |c|L, with the last
    // factor ≤ 2 for X ≥ ln 2.
    let big_x = (softplus(ln_k2) + scale.ln() + 2f64.ln() - ln_target).max(1.0);
    let h = 2.0 * PI * c.abs() / big_x;
    let aliasing = (scale.ln() + softplus(ln_k2) - big_x).exp() / -(-big_x).exp_m1();
    // Truncation: the nodes past U = J·h.
    let beta = 0.5 * s2 + 2.0 * mu * ec / (PI * PI);
    let pole = |u: f64| match kind {
        Kind::Tail => 1.0 / u,
        Kind::Density => 1.0,
    };
    let revival = |from: f64| {
        let from = from.max(h);
        pole(from) * (2.0 * PI).sqrt() / s * normal::survival(from * s)
    };
    let truncation_rel = |u: f64| {
        if u < PI {
            pole(u) * (PI / beta).sqrt() * normal::survival(u * (2.0 * beta).sqrt())
                + revival(PI - h)
        } else {
            revival(u - h)
        }
    };
    let budget = PI * (ln_target - ln_a).exp();
    if revival(PI - h) > budget && PI / h > MAX_NODES {
        return None; // the revival at 2π needs nodes past π, and too many of them
    }
    let mut u = 1.0 / (2.0 * beta).sqrt();
    let mut doublings = 0;
    while truncation_rel(u) > budget {
        u *= 1.25;
        doublings += 1;
        if doublings > 200 || u / h > MAX_NODES {
            return None;
        }
    }
    let nodes = (u / h).ceil();
    if nodes > MAX_NODES {
        return None;
    }
    let a = ln_a.exp();
    let slope = mu * ec + s2 * c - x; // K′(c) − x: 0 at the saddle, not when c was moved
    let mut sum = match kind {
        Kind::Tail => 0.5 / c,
        Kind::Density => 0.5,
    };
    let mut j = 1.0;
    while j <= nodes {
        let uj = j * h;
        let half = (0.5 * uj).sin();
        let rho = -2.0 * mu * ec * half * half - 0.5 * s2 * uj * uj;
        let phase = mu * ec * (uj.sin() - uj) + uj * slope;
        let (sp, cp) = phase.sin_cos();
        let term = match kind {
            Kind::Tail => (c * cp + uj * sp) / (c * c + uj * uj),
            Kind::Density => cp,
        };
        sum += rho.exp() * term;
        j += 1.0;
    }
    let mut value = h / PI * a * sum;
    if kind == Kind::Tail && c < 0.0 {
        value = -value;
    }
    let bound = aliasing + a / PI * truncation_rel(nodes * h);
    // A-posteriori check: the proven bound must be small against the value found.
    if !(value.is_finite() && bound.is_finite()) || bound > 10.0 * REL_TARGET * value.abs() {
        return None;
    }
    Some((value, bound, c))
}

/// P(x > τ) or P(x ≤ τ) by the contour integral, or `None` when the method does not apply
/// (σ below [`MIN_SIGMA_E`], or more than [`MAX_NODES`] nodes needed).
pub(crate) fn tail(mu: f64, s: f64, tau: f64, side: Side) -> Option<Bounded> {
    let (value, bound, c) = integrate(mu, s, tau, Kind::Tail)?;
    let own = if c > 0.0 {
        Side::Above
    } else {
        Side::AtOrBelow
    };
    let value = if own == side { value } else { 1.0 - value };
    Some(Bounded {
        value: value.clamp(0.0, 1.0),
        error_bound: bound,
    })
}

/// The density of x at `x_e` by the contour integral, or `None` as for [`tail`].
pub(crate) fn density(mu: f64, s: f64, x_e: f64) -> Option<f64> {
    integrate(mu, s, x_e, Kind::Density).map(|(v, _, _)| v.max(0.0))
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used)]
    use super::*;
    use crate::detection::poisson_gaussian::PoissonGaussian;

    #[test]
    fn the_pure_gaussian_case_is_q() {
        // μ = 0: x is Normal(0, σ²), S(τ) = Q(τ/σ) exactly.
        for (s, tau) in [
            (3.0, 9.0),
            (10.0, 70.0),
            (1e6, 3e6),
            (5.0, -20.0),
            (50.0, 1.0),
        ] {
            let t = tail(0.0, s, tau, Side::Above).unwrap();
            let want = normal::survival(tau / s);
            assert!(
                (t.value / want - 1.0).abs() < 1e-11,
                "σ {s} τ {tau}: {} vs {want}",
                t.value
            );
        }
    }

    #[test]
    fn agrees_with_the_direct_sum() {
        // Where both apply, the two exact methods must agree within their bounds.
        for (mu, s, z) in [
            (1e4f64, 10.0f64, 3.0),
            (1e5, 30.0, -2.0),
            (2e3, 40.0, 6.0),
            (1e4, 5.0, 0.1),
        ] {
            let tau = mu + z * (mu + s * s).sqrt();
            let pg = PoissonGaussian::new(mu, s).unwrap();
            let direct = pg.survival_direct(tau);
            let contour = tail(mu, s, tau, Side::Above).unwrap();
            assert!(
                (contour.value / direct - 1.0).abs() < 1e-10,
                "μ {mu} σ {s} z {z}: contour {} direct {direct}",
                contour.value
            );
        }
    }
}

/// Shape below which [`gamma_tail`] is not tried: the truncation bound needs a > 2, and below
/// ~1e5 the Poisson tail sums it serves are cheaper than the contour anyway.
pub const MIN_GAMMA_SHAPE: f64 = 1e4;

/// P(Γ > x) or P(Γ ≤ x) for Γ ~ Gamma(shape a, scale 1), by the same contour inversion with
/// K(t) = −a·ln(1 − t) (t < 1); `None` when the bound cannot be met within [`MAX_NODES`].
///
/// It gives the Poisson tails for large means in a bounded number of steps:
/// P(N ≥ m) = P(Γ_m ≤ μ) and P(N ≤ m) = P(Γ_{m+1} > μ) (the Poisson–gamma relation, e.g.
/// Johnson, Kemp & Kotz, *Univariate Discrete Distributions*, 3rd ed., 2005, §4.2, from memory).
///
/// # Formula and bounds
/// Saddle point t̂ = 1 − a/x (closed form); c = t̂, moved to |c| ≥ 1/√a near the mean.
/// Aliasing as in the module notes, with the Chernoff point t′ = c + min(c, (1 − c)/2) for
/// c > 0 (K is finite only below 1) and t′ = 2c for c < 0. With b = 1 − c,
/// |e^{K(c+iu)}| = e^{K(c)}(1 + u²/b²)^{−a/2}, and for u ≥ U,
/// 1 + u²/b² ≥ (1 + U²/b²)(1 + k(u − U)) with k = 2U/(b² + U²), so the nodes past U add at
/// most (A/π)·(1 + U²/b²)^{−a/2}·(b² + U²)/(U²(a − 2)) (derived here; a > 2).
pub(crate) fn gamma_tail(shape: f64, x: f64, side: Side) -> Option<Bounded> {
    let a = shape;
    if !(a >= MIN_GAMMA_SHAPE) || !(x > 0.0) || !x.is_finite() || !a.is_finite() {
        return None;
    }
    let t_hat = 1.0 - a / x;
    let sign = if x >= a { 1.0 } else { -1.0 };
    let c_min = 1.0 / a.sqrt();
    let c = if t_hat.abs() >= c_min {
        t_hat
    } else {
        sign * c_min
    };
    let b = 1.0 - c;
    let k_at = |t: f64| -a * (-t).ln_1p(); // K(t)
    let ln_a = k_at(c) - c * x;
    let k2 = a / (b * b); // K″(c)
    let ln_est = ln_a - (c.abs() * (2.0 * PI * k2).sqrt()).ln();
    let ln_target = REL_TARGET.ln() + ln_est;
    let delta = if c > 0.0 { c.min(0.5 * b) } else { c.abs() };
    let t2 = if c > 0.0 { c + delta } else { 2.0 * c };
    let ln_k2 = k_at(t2) - t2 * x;
    let ln4 = 4f64.ln();
    let big_l = ((ln4 - ln_target) / c.abs())
        .max((ln_k2 + ln4 - ln_target) / delta)
        .max(2f64.ln() / c.abs().min(delta));
    let h = 2.0 * PI / big_l;
    let aliasing = (-c.abs() * big_l).exp() / -(-c.abs() * big_l).exp_m1()
        + (ln_k2 - delta * big_l).exp() / -(-delta * big_l).exp_m1();
    let truncation_rel = |u: f64| {
        let r = u * u / (b * b);
        (-0.5 * a * r.ln_1p()).exp() * (b * b + u * u) / (u * u * (a - 2.0))
    };
    let budget = PI * (ln_target - ln_a).exp();
    let mut u = b / a.sqrt();
    let mut steps = 0;
    while truncation_rel(u) > budget {
        u *= 1.25;
        steps += 1;
        if steps > 400 || u / h > MAX_NODES {
            return None;
        }
    }
    let nodes = (u / h).ceil();
    let slope = a / b - x; // K′(c) − x
    let mut sum = 0.5 / c;
    let mut j = 1.0;
    while j <= nodes {
        let uj = j * h;
        let v = uj / b;
        let rho = -0.5 * a * (v * v).ln_1p();
        let phase = a * (v.atan() - v) + uj * slope;
        let (sp, cp) = phase.sin_cos();
        sum += rho.exp() * (c * cp + uj * sp) / (c * c + uj * uj);
        j += 1.0;
    }
    let amp = ln_a.exp();
    let mut value = h / PI * amp * sum;
    if c < 0.0 {
        value = -value;
    }
    let bound = aliasing + amp / PI * truncation_rel(nodes * h);
    if !(value.is_finite() && bound.is_finite()) || bound > 10.0 * REL_TARGET * value.abs() {
        return None;
    }
    let own = if c > 0.0 {
        Side::Above
    } else {
        Side::AtOrBelow
    };
    let value = if own == side { value } else { 1.0 - value };
    Some(Bounded {
        value: value.clamp(0.0, 1.0),
        error_bound: bound,
    })
}

#[cfg(test)]
mod gamma_tests {
    #![allow(clippy::unwrap_used)]
    use super::*;
    use crate::detection::poisson;

    #[test]
    fn gamma_contour_agrees_with_poisson_sums() {
        // P(N ≥ m) for Poisson(μ) two ways: the bounded sum and P(Γ_m ≤ μ) by the contour.
        for (mu, dz) in [
            (1e5f64, 0.0f64),
            (1e5, 3.0),
            (1e6, -4.0),
            (1e7, 7.5),
            (2e4, 0.4),
        ] {
            let m = (mu + dz * mu.sqrt()).round();
            let sum = poisson::upper_tail_summed(m, mu).value;
            let contour = gamma_tail(m, mu, Side::AtOrBelow).unwrap().value;
            assert!(
                (contour / sum - 1.0).abs() < 1e-10,
                "μ {mu} m {m}: {contour} vs {sum}"
            );
        }
    }
}
