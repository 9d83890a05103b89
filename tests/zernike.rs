//! Zernike polynomials in the ANSI Z80.28 / ISO 24157 convention and their
//! least-squares fit (src/analysis/zernike.rs).

mod analysis_support;
use analysis_support::*;
use catoptric::analysis::zernike::{fit, index, name, nm, radial, zernike, TERMS};

/// Terms written out as printed in ANSI Z80.28-2004, Annex B (the
/// RMS-normalised polynomials of Thibos, Applegate, Schwiegerling & Webb,
/// "Standards for reporting the optical aberrations of eyes", J. Refract.
/// Surg. 18, S652 (2002), Table 2; citation from memory): (j, Z_j(ρ, θ)).
type Term = (usize, fn(f64, f64) -> f64);

fn explicit() -> Vec<Term> {
    vec![
        (0, |_, _| 1.0),
        (1, |r, t| 2.0 * r * t.sin()),
        (2, |r, t| 2.0 * r * t.cos()),
        (3, |r, t| 6f64.sqrt() * r * r * (2.0 * t).sin()),
        (4, |r, _| 3f64.sqrt() * (2.0 * r * r - 1.0)),
        (5, |r, t| 6f64.sqrt() * r * r * (2.0 * t).cos()),
        (7, |r, t| 8f64.sqrt() * (3.0 * r.powi(3) - 2.0 * r) * t.sin()),
        (8, |r, t| 8f64.sqrt() * (3.0 * r.powi(3) - 2.0 * r) * t.cos()),
        (9, |r, t| 8f64.sqrt() * r.powi(3) * (3.0 * t).cos()),
        (10, |r, t| 10f64.sqrt() * r.powi(4) * (4.0 * t).sin()),
        (12, |r, _| 5f64.sqrt() * (6.0 * r.powi(4) - 6.0 * r * r + 1.0)),
        (13, |r, t| 10f64.sqrt() * (4.0 * r.powi(4) - 3.0 * r * r) * (2.0 * t).cos()),
        (18, |r, t| 12f64.sqrt() * (10.0 * r.powi(5) - 12.0 * r.powi(3) + 3.0 * r) * t.cos()),
        (24, |r, _| 7f64.sqrt() * (20.0 * r.powi(6) - 30.0 * r.powi(4) + 12.0 * r * r - 1.0)),
        (27, |r, t| 14f64.sqrt() * r.powi(6) * (6.0 * t).cos()),
    ]
}

#[test]
fn single_index_follows_ansi_z80_28() {
    // j = (n(n + 2) + m)/2 (ANSI Z80.28-2004): n ≤ 6 gives 28 terms.
    assert_eq!(TERMS, 28);
    for (j, want) in [(0, (0, 0)), (1, (1, -1)), (2, (1, 1)), (4, (2, 0)), (7, (3, -1)), (12, (4, 0)), (24, (6, 0)), (27, (6, 6))] {
        assert_eq!(nm(j), want, "j = {j}");
    }
    for j in 0..TERMS {
        let (n, m) = nm(j);
        assert!(m.unsigned_abs() <= n && (n as i32 - m) % 2 == 0, "j = {j}: ({n}, {m})");
        assert_eq!(index(n, m), j);
        assert!(!name(j).is_empty());
    }
    // Trade names beside the indices (ANSI Z80.28 Annex B names).
    assert_eq!(name(4), "defocus");
    assert_eq!(name(12), "spherical");
    assert!(name(7).contains("coma") && name(8).contains("coma"));
    assert!(name(3).contains("astigmatism") && name(5).contains("astigmatism"));
}

#[test]
fn polynomials_match_the_published_table() {
    let mut rng = Rng(7);
    for _ in 0..200 {
        let (r, t) = (rng.next().sqrt(), rng.range(-3.2, 3.2));
        let (x, y) = (r * t.cos(), r * t.sin());
        for (j, z) in explicit() {
            let (got, want) = (zernike(j, x, y), z(r, t));
            assert!((got - want).abs() < 1e-12, "Z{j}({r}, {t}) = {got}, table {want}");
        }
    }
}

#[test]
fn polynomials_are_orthonormal_over_the_unit_disk() {
    // RMS normalisation: (1/π)∫∫ Z_i Z_j dA = δ_ij (ANSI Z80.28).
    // Simpson's rule in r (400 intervals) and the midpoint rule in θ (64
    // points, exact for these trigonometric degrees).
    let (nr, nt) = (400, 64);
    let mut g = vec![[0.0f64; TERMS]; TERMS];
    for a in 0..=nr {
        let r = a as f64 / nr as f64;
        let simpson = if a == 0 || a == nr { 1.0 } else if a % 2 == 1 { 4.0 } else { 2.0 };
        for b in 0..nt {
            let t = (b as f64 + 0.5) / nt as f64 * std::f64::consts::TAU;
            let dz: Vec<f64> = (0..TERMS).map(|j| zernike(j, r * t.cos(), r * t.sin())).collect();
            let w = simpson / 3.0 * r / nr as f64 * std::f64::consts::TAU / nt as f64 / std::f64::consts::PI;
            for (row, zi) in g.iter_mut().zip(&dz) {
                for (gij, zj) in row.iter_mut().zip(&dz) {
                    *gij += w * zi * zj;
                }
            }
        }
    }
    for (i, row) in g.iter().enumerate() {
        for (j, gij) in row.iter().enumerate() {
            let want = if i == j { 1.0 } else { 0.0 };
            assert!((gij - want).abs() < 1e-6, "<Z{i}, Z{j}> = {gij}");
        }
    }
}

#[test]
fn a_synthetic_wavefront_of_known_terms_is_recovered_exactly() {
    // Built from the published table above (not from the code's own
    // polynomials), sampled at scattered points: a least-squares fit of a
    // function that lies in the span of the basis returns its coefficients
    // exactly (to rounding), on a disk and on an annulus alike.
    let table = explicit();
    let coef: Vec<(usize, f64)> = table.iter().enumerate().map(|(k, &(j, _))| (j, 0.05 * (k as f64 + 1.0) * if k % 2 == 0 { 1.0 } else { -1.0 })).collect();
    for inner in [0.0, 0.35] {
        let mut rng = Rng(11);
        let (mut xs, mut ys, mut ws, mut vs) = (vec![], vec![], vec![], vec![]);
        while xs.len() < 3000 {
            let (x, y) = (rng.range(-1.0, 1.0), rng.range(-1.0, 1.0));
            let r = x.hypot(y);
            if r > 1.0 || r < inner {
                continue;
            }
            let t = y.atan2(x);
            xs.push(x);
            ys.push(y);
            ws.push(rng.range(0.5, 1.5));
            vs.push(coef.iter().zip(&table).map(|(&(_, c), &(_, z))| c * z(r, t)).sum::<f64>());
        }
        let got = fit(&xs, &ys, &ws, &vs).expect("fits");
        for (j, g) in got.iter().enumerate() {
            let want = coef.iter().find(|c| c.0 == j).map_or(0.0, |c| c.1);
            assert!((g - want).abs() < 1e-9, "inner {inner}: Z{j} = {g}, built with {want}");
        }
    }
}

#[test]
fn too_few_samples_do_not_fit() {
    let v = vec![0.0; 10];
    assert!(fit(&v, &v, &v, &v).is_none());
    // Common practice for least squares: as many samples as unknowns at
    // points in general position determine the fit (the known
    // coefficients come back); one fewer does not.
    let pts: Vec<(f64, f64)> = (0..TERMS).map(|i| {
        let (r, a) = ((0.1 + 0.85 * ((i * 7 % TERMS) as f64 + 0.5) / TERMS as f64).sqrt(), 2.399_963 * i as f64);
        (r * a.cos(), r * a.sin())
    }).collect();
    let (x, y): (Vec<f64>, Vec<f64>) = pts.iter().copied().unzip();
    let values: Vec<f64> = pts.iter().map(|&(x, y)| 0.3 * zernike(4, x, y) - 0.1 * zernike(7, x, y)).collect();
    let w = vec![1.0; TERMS];
    let c = fit(&x, &y, &w, &values).expect("a square system in general position");
    assert!((c[4] - 0.3).abs() < 1e-6 && (c[7] + 0.1).abs() < 1e-6, "{} {}", c[4], c[7]);
    let m = TERMS - 1;
    assert!(fit(&x[..m], &y[..m], &w[..m], &values[..m]).is_none());
    // Weighted least squares with every weight zero (rays that carry no
    // power) weighs nothing: no fit, rather than all-zero coefficients.
    assert!(fit(&x, &y, &vec![0.0; TERMS], &values).is_none());
    // A weight that is not a number poisons the sums: no fit either.
    let mut bad = w.clone();
    bad[3] = f64::NAN;
    assert!(fit(&x, &y, &bad, &values).is_none());
}

#[test]
fn radial_polynomials_vanish_off_their_index_set_and_reach_one_at_the_rim() {
    // Definition and normalisation of the radial polynomials (Born & Wolf,
    // Principles of Optics, 7th ed., Appendix VII; Noll, "Zernike
    // polynomials and atmospheric turbulence", JOSA 66(3), 1976): R_n^m(ρ)
    // exists only for m ≤ n with n − m even, is zero otherwise, and
    // R_n^m(1) = 1.
    // (Every m ≤ n first: a wrong parity test fails fast there.)
    let pairs = (0..=8u32).flat_map(|n| (0..=n).map(move |k| (n, k)));
    let beyond = (0..=8u32).flat_map(|n| (n + 1..=10).map(move |k| (n, k)));
    for (n, k) in pairs.chain(beyond) {
        for rho in [0.0, 0.3, 0.77, 1.0] {
            let r = radial(n, k, rho);
            if k > n || (n - k) % 2 == 1 {
                assert_eq!(r, 0.0, "R_{n}^{k}({rho})");
            } else if rho == 1.0 {
                assert!((r - 1.0).abs() < 1e-12, "R_{n}^{k}(1) = {r}");
            }
        }
    }
}
