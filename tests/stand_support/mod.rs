//! An independent exact trace of the centre-of-curvature test, written
//! here from first principles and sharing no code with the library: the
//! conic as the implicit surface F = x² + y² − 2Rz + (1+K)z² = 0 (the
//! vertex form of a conic of revolution; any analytic-geometry text), its
//! normal from the gradient of F, reflection by the vector law
//! r = d − 2(d·n)n, and a straight line to the plane z = R + S. A
//! departure e(ρ) from the conic (a measured mirror) adds to z and its
//! slope e′ to the gradient. Crossings are found by a dense scan and plain
//! bisection.
#![allow(dead_code)]

/// Surface height of the conic at radius ρ from the implicit form:
/// (1+K)z² − 2Rz + ρ² = 0, the root through the vertex.
pub fn conic_z(r: f64, k: f64, rho: f64) -> f64 {
    let q = 1.0 + k;
    if q.abs() < 1e-15 {
        return rho * rho / (2.0 * r);
    }
    // z = (R − √(R² − qρ²)) / q, written without cancellation.
    rho * rho / (r + (r * r - q * rho * rho).sqrt())
}

/// A mirror on the stand: conic plus an optional departure e(ρ) (mm) with
/// its derivative.
pub struct Stand<'a> {
    pub r: f64,
    pub k: f64,
    /// Plane position from the vertex centre of curvature, + outside.
    pub s: f64,
    /// `true`: source in the plane (moving); `false`: at the centre (fixed).
    pub moving: bool,
    pub departure: Option<&'a dyn Fn(f64) -> (f64, f64)>,
}

impl Stand<'_> {
    /// Landing point (X, Y) of the ray reflected at pupil point (x, y).
    pub fn land(&self, x: f64, y: f64) -> (f64, f64) {
        let rho = (x * x + y * y).sqrt();
        let (e, de) = self.departure.map_or((0.0, 0.0), |f| f(rho));
        let z0 = conic_z(self.r, self.k, rho);
        let z = z0 + e;
        // −∇F/2 for the conic is (−x, −y, R − (1+K)z0); dividing by its
        // z component gives the slope form (−z′ x/ρ, −z′ y/ρ, 1), to which
        // the departure's slope adds.
        let w = self.r - (1.0 + self.k) * z0;
        let (gx, gy) = if rho > 0.0 { (-x / w - de * x / rho, -y / w - de * y / rho) } else { (0.0, 0.0) };
        let nl = (gx * gx + gy * gy + 1.0).sqrt();
        let n = [gx / nl, gy / nl, 1.0 / nl];
        let zs = if self.moving { self.r + self.s } else { self.r };
        let dv = [x, y, z - zs];
        let dl = (dv[0] * dv[0] + dv[1] * dv[1] + dv[2] * dv[2]).sqrt();
        let d = [dv[0] / dl, dv[1] / dl, dv[2] / dl];
        let dn = d[0] * n[0] + d[1] * n[1] + d[2] * n[2];
        let rr = [d[0] - 2.0 * dn * n[0], d[1] - 2.0 * dn * n[1], d[2] - 2.0 * dn * n[2]];
        let t = (self.r + self.s - z) / rr[2];
        (x + t * rr[0], y + t * rr[1])
    }
}

/// Plain bisection of a sign change of f on [a, b].
pub fn bisect(f: &dyn Fn(f64) -> f64, mut a: f64, mut b: f64) -> f64 {
    let fa = f(a);
    for _ in 0..200 {
        let m = 0.5 * (a + b);
        if (f(m) > 0.0) == (fa > 0.0) {
            a = m;
        } else {
            b = m;
        }
    }
    0.5 * (a + b)
}

/// Ronchi band edges along the horizontal radius: where 2X/p crosses a
/// whole number, 0 < x ≤ a, by a scan of `n` steps and bisection.
pub fn band_edges(stand: &Stand, a: f64, period: f64, n: usize) -> Vec<f64> {
    let g = |x: f64| 2.0 * stand.land(x, 0.0).0 / period;
    let mut out = Vec::new();
    let mut prev = (0.0, g(0.0));
    for i in 1..=n {
        let x = a * i as f64 / n as f64;
        let v = g(x);
        let (lo, hi) = (prev.1.min(v), prev.1.max(v));
        // Levels strictly crossed in this step (x = 0 is on a level).
        let mut ks: Vec<f64> = ((lo.floor() as i64 + 1)..=(hi.ceil() as i64 - 1)).map(|k| k as f64).collect();
        if v < prev.1 {
            ks.reverse();
        }
        for k in ks {
            out.push(bisect(&|t| g(t) - k, prev.0, x));
        }
        prev = (x, v);
    }
    out
}

/// Runs the command-line binary: (exit code, stdout, stderr). The binary
/// is the one Cargo built for the test (`CARGO_BIN_EXE_catoptric`).
pub fn run(args: &[&str]) -> (i32, String, String) {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_catoptric")).args(args).output().expect("runs");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}
