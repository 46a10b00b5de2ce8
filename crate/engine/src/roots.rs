//! The positive root of the quadratics the model solves (threshold signal, threshold exposure).
//!
//! Pure arithmetic on already-validated numbers; it knows nothing of scenarios.

/// Positive root x of `a·x² − b·x − c = 0` for `a > 0`, `b ≥ 0`, `c ≥ 0`.
///
/// Returns `None` when `a ≤ 0` (no positive root of this form) or the root is not finite.
///
/// # Formula
/// ```text
/// x = (b + √(b² + 4ac)) / (2a)
/// ```
/// With `b ≥ 0` both terms of the numerator are non-negative, so there is no cancellation:
/// this is the numerically stable choice of the two textbook forms.
///
/// # Source
/// The quadratic formula; stability note from Press et al., *Numerical Recipes*, 3rd ed., §5.6
/// (from memory).
///
/// ```
/// // x² − x − 6 = 0 has roots 3 and −2 (worked by hand).
/// assert_eq!(engine::roots::positive_root(1.0, 1.0, 6.0), Some(3.0));
/// assert_eq!(engine::roots::positive_root(0.0, 1.0, 6.0), None);
/// ```
#[must_use]
pub fn positive_root(a: f64, b: f64, c: f64) -> Option<f64> {
    if a.is_nan() || a <= 0.0 {
        return None;
    }
    let disc = b.mul_add(b, 4.0 * a * c);
    let x = (b + disc.sqrt()) / (2.0 * a);
    x.is_finite().then_some(x)
}
