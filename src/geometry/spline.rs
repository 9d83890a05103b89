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
}
