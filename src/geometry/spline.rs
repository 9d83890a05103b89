//! Natural cubic spline through knots, extrapolated linearly outside them.

/// Interpolating cubic spline with zero second derivative at both ends
/// ("natural"). Beyond the end knots it continues along the end tangent.
#[derive(Debug, Clone, PartialEq)]
pub struct NaturalSpline {
    x: Vec<f64>,
    y: Vec<f64>,
    /// Second derivatives at the knots.
    m: Vec<f64>,
}

impl NaturalSpline {
    /// Builds the spline; `knots` must have at least two points with
    /// strictly increasing x (the layout validator guarantees it). Returns
    /// `None` otherwise.
    pub fn new(knots: &[[f64; 2]]) -> Option<Self> {
        let n = knots.len();
        if n < 2 || knots.windows(2).any(|w| w[1][0].partial_cmp(&w[0][0]) != Some(std::cmp::Ordering::Greater)) {
            return None;
        }
        let x: Vec<f64> = knots.iter().map(|k| k[0]).collect();
        let y: Vec<f64> = knots.iter().map(|k| k[1]).collect();
        let mut m = vec![0.0; n];
        if n > 2 {
            // Thomas algorithm on the interior equations
            // h[i-1] m[i-1] + 2(h[i-1]+h[i]) m[i] + h[i] m[i+1] = 6(Δ[i] − Δ[i-1]).
            let k = n - 2;
            let mut cp = vec![0.0; k];
            let mut dp = vec![0.0; k];
            for j in 0..k {
                let i = j + 1;
                let h0 = x[i] - x[i - 1];
                let h1 = x[i + 1] - x[i];
                let rhs = 6.0 * ((y[i + 1] - y[i]) / h1 - (y[i] - y[i - 1]) / h0);
                let diag = 2.0 * (h0 + h1);
                if j == 0 {
                    cp[j] = h1 / diag;
                    dp[j] = rhs / diag;
                } else {
                    let den = diag - h0 * cp[j - 1];
                    cp[j] = h1 / den;
                    dp[j] = (rhs - h0 * dp[j - 1]) / den;
                }
            }
            for j in (0..k).rev() {
                let next = if j + 1 < k { m[j + 2] } else { 0.0 };
                m[j + 1] = dp[j] - cp[j] * next;
            }
        }
        Some(NaturalSpline { x, y, m })
    }

    /// Even spline for a surface of revolution: the natural spline through
    /// the knots (ρᵢ ≥ 0, increasing) and their mirror images (−ρᵢ), so it
    /// is symmetric about ρ = 0 with zero slope there — the surface stays
    /// smooth at the vertex instead of coming to a cone. Beyond the knots it
    /// is the natural spline through all of them; at ρ ≥ 0 it passes through
    /// every given knot. `None` under the conditions of [`Self::new`] or a
    /// negative ρ.
    pub fn even(knots: &[[f64; 2]]) -> Option<Self> {
        if knots.first().is_none_or(|k| k[0].is_nan() || k[0] < 0.0) {
            return None;
        }
        let mut all: Vec<[f64; 2]> = knots.iter().rev().filter(|k| k[0] > 0.0).map(|k| [-k[0], k[1]]).collect();
        all.extend_from_slice(knots);
        Self::new(&all)
    }

    pub fn knots(&self) -> impl Iterator<Item = (f64, f64)> + '_ {
        self.x.iter().copied().zip(self.y.iter().copied())
    }

    /// Value and first derivative at `t`.
    #[inline]
    pub fn eval(&self, t: f64) -> (f64, f64) {
        let n = self.x.len();
        if t <= self.x[0] {
            let d = self.end_slope(0);
            return (self.y[0] + d * (t - self.x[0]), d);
        }
        if t >= self.x[n - 1] {
            let d = self.end_slope(n - 2);
            return (self.y[n - 1] + d * (t - self.x[n - 1]), d);
        }
        // Interval i with x[i] <= t < x[i+1].
        let i = self.x.partition_point(|&v| v <= t).saturating_sub(1).min(n - 2);
        self.piece(i, t)
    }

    #[inline]
    fn piece(&self, i: usize, t: f64) -> (f64, f64) {
        let h = self.x[i + 1] - self.x[i];
        let a = (self.x[i + 1] - t) / h;
        let b = (t - self.x[i]) / h;
        let (m0, m1) = (self.m[i], self.m[i + 1]);
        let v = a * self.y[i] + b * self.y[i + 1] + ((a * a * a - a) * m0 + (b * b * b - b) * m1) * h * h / 6.0;
        let d = (self.y[i + 1] - self.y[i]) / h + ((1.0 - 3.0 * a * a) * m0 + (3.0 * b * b - 1.0) * m1) * h / 6.0;
        (v, d)
    }

    /// Slope at the outer end of the end piece `i` (0 = first, n−2 = last).
    fn end_slope(&self, i: usize) -> f64 {
        if i == 0 { self.piece(0, self.x[0]).1 } else { self.piece(i, self.x[i + 1]).1 }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    #[test]
    fn reproduces_a_line_and_interpolates_knots() {
        let s = NaturalSpline::new(&[[0.0, 1.0], [1.0, 3.0], [3.0, 7.0], [4.0, 9.0]]).unwrap();
        for t in [-1.0, 0.0, 0.5, 2.0, 3.7, 5.0] {
            let (v, d) = s.eval(t);
            assert!((v - (1.0 + 2.0 * t)).abs() < 1e-12 && (d - 2.0).abs() < 1e-12);
        }
        let s = NaturalSpline::new(&[[0.0, 0.0], [1.0, 1.0], [2.0, 0.0], [3.0, 2.0]]).unwrap();
        for (x, y) in [(0.0, 0.0), (1.0, 1.0), (2.0, 0.0), (3.0, 2.0)] {
            assert!((s.eval(x).0 - y).abs() < 1e-12);
        }
        assert!(NaturalSpline::new(&[[0.0, 0.0], [0.0, 1.0]]).is_none());
    }

    #[test]
    fn even_spline_is_smooth_at_the_axis() {
        // Knots of ρ²: the mirrored natural spline is even, flat at 0 and
        // close to the parabola near the axis (the plain natural spline has
        // zero curvature at its first knot, so a slope there).
        let k: Vec<[f64; 2]> = (0..=10).map(|i| [i as f64, (i * i) as f64]).collect();
        let e = NaturalSpline::even(&k).unwrap();
        assert_eq!(e.eval(0.0).1, 0.0);
        for t in [0.3, 1.7, 4.2] {
            assert!((e.eval(t).0 - e.eval(-t).0).abs() < 1e-12);
            assert!((e.eval(t).0 - t * t).abs() < 1e-3, "{t}: {}", e.eval(t).0);
        }
        for &[x, y] in &k {
            assert!((e.eval(x).0 - y).abs() < 1e-12);
        }
        let plain = NaturalSpline::new(&k).unwrap();
        assert!(plain.eval(0.0).1.abs() > 0.1);
        // A first knot off the axis is mirrored too; negative ρ is refused.
        let e = NaturalSpline::even(&[[2.0, 1.0], [3.0, 1.0]]).unwrap();
        assert!((e.eval(0.0).0 - 1.0).abs() < 1e-12);
        assert!(NaturalSpline::even(&[[-1.0, 0.0], [1.0, 0.0]]).is_none());
        // Refused even when the mirrored knots would still increase.
        assert!(NaturalSpline::even(&[[-1.0, 0.0], [2.0, 0.0]]).is_none());
        assert!(NaturalSpline::even(&[[f64::NAN, 0.0], [2.0, 0.0]]).is_none());
        assert!(NaturalSpline::even(&[]).is_none());
    }

    #[test]
    fn natural_spline_matches_hand_worked_examples() {
        // Natural cubic spline (Press et al., Numerical Recipes 3rd ed.
        // §3.3, eqs. 3.3.3 and 3.3.7), worked by hand.
        // Equal steps, knots (0,0) (1,1) (2,0) (3,2): interior equations
        // 4m₁ + m₂ = −12, m₁ + 4m₂ = 18, so m₁ = −4.4, m₂ = 5.6. At t = ½:
        // y = ½ + (−⅜)(−4.4)/6 = 0.775, y′ = 1 + (−¼)(−4.4)/6 = 1.18333…;
        // at t = 2.5: y = 1 − ⅜·5.6/6 = 0.65. End slopes 1 + 4.4/6 and
        // 2 + 5.6/6 continue linearly outside.
        let s = NaturalSpline::new(&[[0.0, 0.0], [1.0, 1.0], [2.0, 0.0], [3.0, 2.0]]).unwrap();
        let close = |got: (f64, f64), want: (f64, f64)| (got.0 - want.0).abs() < 1e-12 && (got.1 - want.1).abs() < 1e-12;
        assert!(close(s.eval(0.5), (0.775, 1.0 + 1.1 / 6.0)), "{:?}", s.eval(0.5));
        assert!((s.eval(2.5).0 - 0.65).abs() < 1e-12, "{:?}", s.eval(2.5));
        let (d0, d3) = (1.0 + 4.4 / 6.0, 2.0 + 5.6 / 6.0);
        assert!(close(s.eval(-1.0), (-d0, d0)), "{:?}", s.eval(-1.0));
        assert!(close(s.eval(4.0), (2.0 + d3, d3)), "{:?}", s.eval(4.0));
        // Unequal steps h₀ = 1, h₁ = 2, knots (0,0) (1,1) (3,0): one
        // interior equation 2(h₀+h₁)m₁ = 6(−½ − 1), m₁ = −1.5. At t = 2
        // (a = b = ½, h = 2): y = ½ + (−⅜)(−1.5)·4/6 = 0.875,
        // y′ = −½ + (¼)(−1.5)·2/6 = −0.625.
        let u = NaturalSpline::new(&[[0.0, 0.0], [1.0, 1.0], [3.0, 0.0]]).unwrap();
        assert!(close(u.eval(2.0), (0.875, -0.625)), "{:?}", u.eval(2.0));
        assert_eq!(u.knots().collect::<Vec<_>>(), vec![(0.0, 0.0), (1.0, 1.0), (3.0, 0.0)]);
        // The same knots moved to x = 10, 11, 13: the same curve, moved
        // (y′ at the first knot 1 + (−1)(−1.5)/6 = 1.25, continued below it).
        let moved = NaturalSpline::new(&[[10.0, 0.0], [11.0, 1.0], [13.0, 0.0]]).unwrap();
        assert!(close(moved.eval(12.0), (0.875, -0.625)), "{:?}", moved.eval(12.0));
        assert!(close(moved.eval(9.0), (-1.25, 1.25)), "{:?}", moved.eval(9.0));
    }
}
