//! Roots of a t² + 2b t + c = 0 without cancellation.

/// Real roots of `a t² + 2 b t + c = 0`, smaller first, using the copysign
/// form q = −(b + sign(b)√(b² − ac)); roots q/a and c/q. When `a` is zero or
/// tiny, q/a is non-finite or huge and is dropped, leaving the linear root
/// c/q — the linear case needs no second code path. Returns the number of
/// finite roots written.
#[inline]
pub fn solve_quadratic(a: f64, b: f64, c: f64) -> (usize, [f64; 2]) {
    let disc = b * b - a * c;
    if disc < 0.0 || !disc.is_finite() {
        return (0, [0.0; 2]);
    }
    let q = -(b + b.signum() * disc.sqrt());
    if q == 0.0 {
        // b = 0 and disc = 0: a t² + c = 0 with ac = 0.
        if a != 0.0 && c == 0.0 {
            return (1, [0.0, 0.0]);
        }
        return (0, [0.0; 2]);
    }
    let r1 = q / a;
    let r2 = c / q;
    match (r1.is_finite(), r2.is_finite()) {
        (true, true) => {
            if r1 <= r2 { (2, [r1, r2]) } else { (2, [r2, r1]) }
        }
        (true, false) => (1, [r1, r1]),
        (false, true) => (1, [r2, r2]),
        (false, false) => (0, [0.0; 2]),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    #[test]
    fn roots_and_linear_case() {
        let (n, r) = solve_quadratic(1.0, -1.5, 2.0); // t² − 3t + 2
        assert_eq!(n, 2);
        assert!((r[0] - 1.0).abs() < 1e-15 && (r[1] - 2.0).abs() < 1e-15);
        let (n, r) = solve_quadratic(0.0, -1.0, 4.0); // −2t + 4 = 0
        assert_eq!(n, 1);
        assert!((r[0] - 2.0).abs() < 1e-15);
        assert_eq!(solve_quadratic(1.0, 0.0, 1.0).0, 0);
        // Cancellation-prone: a tiny root beside a huge one.
        let (n, r) = solve_quadratic(1e-12, -1.0, 1.0);
        assert_eq!(n, 2);
        assert!((r[0] - 0.5).abs() < 1e-12);
    }

    #[test]
    fn tangent_and_degenerate_cases() {
        // Numerical Recipes (Press et al., 3rd ed., §5.6) for the stable
        // form; the edge cases are common practice. A grazing ray: b² = ac
        // exactly, one double root.
        assert_eq!(solve_quadratic(1.0, -1.0, 1.0), (2, [1.0, 1.0])); // (t − 1)²
        assert_eq!(solve_quadratic(4.0, 6.0, 9.0), (2, [-1.5, -1.5])); // (2t + 3)²
        // b = 0 and ac = 0: a t² = 0 has the root 0; c = 0 alone (a = 0)
        // says nothing; c ≠ 0 with a = b = 0 has none.
        assert_eq!(solve_quadratic(2.0, 0.0, 0.0), (1, [0.0, 0.0]));
        assert_eq!(solve_quadratic(0.0, 0.0, 0.0).0, 0);
        assert_eq!(solve_quadratic(0.0, 0.0, 3.0).0, 0);
        // No real roots, and non-finite coefficients.
        assert_eq!(solve_quadratic(1.0, 0.5, 1.0).0, 0);
        assert_eq!(solve_quadratic(f64::INFINITY, 1.0, 1.0).0, 0);
        // b² overflows: no root rather than the spurious c/q = −0.
        assert_eq!(solve_quadratic(1.0, 1e200, 1.0).0, 0);
    }
}
