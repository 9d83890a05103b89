//! Zernike polynomials in the ANSI Z80.28 / ISO 24157 convention, and their
//! least-squares fit to a sampled wavefront.
//!
//! # Convention
//!
//! Single index j = (n(n + 2) + m) / 2, starting at j = 0 (piston). The
//! polynomials are RMS-normalised (orthonormal over the unit disk):
//!
//! Z_j(ρ, θ) = N_n^m R_n^|m|(ρ) · { cos(mθ) for m ≥ 0, sin(|m|θ) for m < 0 },
//! N_n^m = √(2(n + 1) / (1 + δ_m0)),
//!
//! R_n^k(ρ) = Σ_s (−1)^s (n − s)! / (s! ((n + k)/2 − s)! ((n − k)/2 − s)!) ρ^(n − 2s).
//!
//! θ runs from +x toward +y (docs/FORMATS.md §3 gives the pupil axes). The
//! fit takes every term up to radial order [`MAX_ORDER`] (28 terms),
//! piston and tilt included, by weighted least squares over the samples
//! given; an annular pupil is fitted over the annulus with the same
//! polynomials (they are then not orthogonal over it, and the report says
//! so).

use nalgebra::{DMatrix, DVector};

/// Highest radial order fitted.
pub const MAX_ORDER: u32 = 6;

/// Number of terms up to [`MAX_ORDER`]: (n + 1)(n + 2)/2.
pub const TERMS: usize = ((MAX_ORDER + 1) * (MAX_ORDER + 2) / 2) as usize;

/// Singular values below this fraction of the largest are dropped in the
/// fit (a pupil too small or too thin to tell some terms apart).
const FIT_RCOND: f64 = 1e-9;

/// (n, m) of ANSI index j.
pub fn nm(j: usize) -> (u32, i32) {
    let mut n = 0usize;
    while (n + 1) * (n + 2) / 2 <= j {
        n += 1;
    }
    let m = 2 * j as i64 - (n * (n + 2)) as i64;
    (n as u32, m as i32)
}

/// ANSI index j of (n, m).
pub fn index(n: u32, m: i32) -> usize {
    ((n as i64 * (n as i64 + 2) + m as i64) / 2) as usize
}

/// The trade's name of term j (up to [`MAX_ORDER`]); x and y are the pupil
/// axes (y the tangential direction), angles from +x.
pub fn name(j: usize) -> &'static str {
    const NAMES: [&str; TERMS] = [
        "piston",
        "tilt y",
        "tilt x",
        "astigmatism 45°",
        "defocus",
        "astigmatism 0°",
        "trefoil y",
        "coma y",
        "coma x",
        "trefoil x",
        "quadrafoil 22.5°",
        "secondary astigmatism 45°",
        "spherical",
        "secondary astigmatism 0°",
        "quadrafoil 0°",
        "pentafoil y",
        "secondary trefoil y",
        "secondary coma y",
        "secondary coma x",
        "secondary trefoil x",
        "pentafoil x",
        "hexafoil 15°",
        "secondary quadrafoil 22.5°",
        "tertiary astigmatism 45°",
        "secondary spherical",
        "tertiary astigmatism 0°",
        "secondary quadrafoil 0°",
        "hexafoil 0°",
    ];
    NAMES.get(j).copied().unwrap_or("")
}

fn factorial(n: u32) -> f64 {
    (1..=n).map(f64::from).product()
}

/// Radial polynomial R_n^k(ρ), k = |m| ≤ n, n − k even.
pub fn radial(n: u32, k: u32, rho: f64) -> f64 {
    if k > n || !(n - k).is_multiple_of(2) {
        return 0.0;
    }
    let mut sum = 0.0;
    for s in 0..=(n - k) / 2 {
        let c = factorial(n - s) / (factorial(s) * factorial((n + k) / 2 - s) * factorial((n - k) / 2 - s));
        let sign = if s % 2 == 0 { 1.0 } else { -1.0 };
        sum += sign * c * rho.powi((n - 2 * s) as i32);
    }
    sum
}

/// Z_j at pupil point (x, y) (unit disk), RMS-normalised.
pub fn zernike(j: usize, x: f64, y: f64) -> f64 {
    let (n, m) = nm(j);
    let rho = x.hypot(y);
    let theta = y.atan2(x);
    let k = m.unsigned_abs();
    let norm = if m == 0 { f64::from(n + 1).sqrt() } else { (2.0 * f64::from(n + 1)).sqrt() };
    let ang = if m >= 0 { (f64::from(k) * theta).cos() } else { (f64::from(k) * theta).sin() };
    norm * radial(n, k, rho) * ang
}

/// All [`TERMS`] polynomials at (x, y), into `out`.
pub fn zernike_all(x: f64, y: f64, out: &mut [f64; TERMS]) {
    for (j, o) in out.iter_mut().enumerate() {
        *o = zernike(j, x, y);
    }
}

/// Weighted least-squares Zernike coefficients (in the unit of `values`)
/// of samples at pupil points (`x`, `y`) with weights `w`. `None` when
/// there are fewer samples than terms, every weight is zero or the sums
/// are not finite.
pub fn fit(x: &[f64], y: &[f64], w: &[f64], values: &[f64]) -> Option<[f64; TERMS]> {
    let n = x.len().min(y.len()).min(w.len()).min(values.len());
    if n < TERMS {
        return None;
    }
    let mut ata = DMatrix::<f64>::zeros(TERMS, TERMS);
    let mut atb = DVector::<f64>::zeros(TERMS);
    let mut z = [0.0; TERMS];
    for k in 0..n {
        zernike_all(x[k], y[k], &mut z);
        let wk = w[k];
        for a in 0..TERMS {
            let za = wk * z[a];
            atb[a] += za * values[k];
            for b in a..TERMS {
                ata[(a, b)] += za * z[b];
            }
        }
    }
    for a in 0..TERMS {
        for b in 0..a {
            ata[(a, b)] = ata[(b, a)];
        }
    }
    // Checked before the SVD, whose iteration need not end on a NaN.
    if !(ata.iter().all(|v| v.is_finite()) && atb.iter().all(|v| v.is_finite())) {
        return None;
    }
    let svd = ata.svd(true, true);
    let smax = svd.singular_values.max();
    if !(smax > 0.0 && smax.is_finite()) {
        return None;
    }
    let sol = svd.solve(&atb, smax * FIT_RCOND).ok()?;
    let mut out = [0.0; TERMS];
    out.iter_mut().zip(sol.iter()).for_each(|(o, s)| *o = *s);
    out.iter().all(|v| v.is_finite()).then_some(out)
}
