//! Conic constants side by side for one vertex radius and aperture.
//!
//! # Wavefront (exact)
//!
//! The mirror is concave (R > 0) and lit by a collimated beam along its
//! axis. By rotational symmetry one meridian suffices: a ray at pupil
//! height ρ meets the conic at P = (ρ, z(ρ)), reflects about the exact
//! normal, and travels to a reference sphere centred at an axial point Q
//! and passing through the mirror vertex (the exit pupil is the mirror).
//! The optical path from a plane in front of the mirror to that sphere,
//! minus the chief ray's, is the wavefront W(ρ). Piston and defocus are
//! removed by least squares over the pupil with area weights (the pupil is
//! sampled at the area midpoints of equal-area rings, so all samples weigh
//! the same); tilt is zero on axis. Defocus is removed exactly: Q is moved
//! along the axis (a few Newton steps on the fitted defocus coefficient),
//! so the result is the wavefront about the best (least-RMS) focus. P-V
//! and RMS are in waves; the Strehl ratio is the extended Maréchal form
//! exp(−(2πσ)²) (Mahajan, JOSA 72, 1258, 1982).
//!
//! # Third-order figures
//!
//! A sphere differs from the paraboloid of the same vertex radius by
//! ρ⁴/(8R³) in sag, so its wavefront error at best focus is D/(2048 N³) P-V
//! (N = R/(2D)); it stays within λ/4 when N³ ≥ D/(512 λ)
//! ([`sphere_fastest_f_ratio`]). The same algebra for a conic error ΔK
//! (sag ΔK ρ⁴/(8R³)) gives a best-focus P-V of ΔK D⁴/(256 R³): a quarter
//! wave costs ΔK = 64 λ R³/D⁴ ([`conic_tolerance_quarter_wave`]).
//!
//! # Best-fit sphere
//!
//! The sphere whose departure from the target conic over the aperture has
//! the smallest peak-to-valley (found by a bounded golden-section search on
//! its curvature; P-V is convex in the curvature). Placed to touch the
//! target from the glass side, the departure is the depth of glass to
//! remove to turn that sphere into the conic; the greatest depth is its
//! P-V.

use super::{bad, conic_reaches, conic_sag, conic_sag_slope, finite_result, positive, wavelength};
use crate::error::{printable, InputError, Num};
use serde::Serialize;

/// Pupil rings used for the wavefront.
const PUPIL_RINGS: usize = 1024;
/// Radii sampled for sag departures and the best-fit sphere.
const SAG_SAMPLES: usize = 512;
/// Most conics one comparison takes.
pub const MAX_CONICS: usize = 64;

/// Wavefront figures for a collimated on-axis beam at best focus.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Wavefront {
    pub pv_waves: f64,
    pub rms_waves: f64,
    pub strehl: f64,
    /// Best focus (centre of the reference sphere), mm from the vertex.
    pub best_focus_mm: f64,
}

/// One row of a comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ConicRow {
    pub conic: f64,
    pub edge_sag_mm: f64,
    /// P-V of the conic's sag minus the vertex sphere's, µm.
    pub departure_pv_um: f64,
    pub wavefront_pv_waves: f64,
    pub wavefront_rms_waves: f64,
    pub strehl_estimate: f64,
    /// Best focus, mm from the vertex.
    pub best_focus_mm: f64,
    /// Radius of the best-fit sphere, mm.
    pub best_fit_sphere_radius_mm: f64,
    /// Greatest depth of glass to remove from the best-fit sphere, µm.
    pub removal_depth_um: f64,
}

/// The JSON of `catoptric compare`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Comparison {
    pub conics: Vec<ConicRow>,
    /// Third-order: (D/(512 λ))^(1/3).
    pub sphere_fastest_f_ratio: f64,
    /// The same limit found with the exact wavefront.
    pub sphere_fastest_f_ratio_exact: f64,
    /// Third-order change of conic constant that costs λ/4 P-V.
    pub conic_tolerance_quarter_wave: f64,
    pub radius_mm: f64,
    pub diameter_mm: f64,
    /// R/(2D).
    pub focal_ratio: f64,
    pub wavelength_nm: f64,
}

/// Smallest f-ratio at which a sphere of diameter `d` (mm) keeps λ/4 P-V
/// at best focus, third-order: N = (D/(512 λ))^(1/3), λ in mm.
pub fn sphere_fastest_f_ratio(d: f64, lambda_mm: f64) -> f64 {
    (d / (512.0 * lambda_mm)).cbrt()
}

/// Third-order conic error costing λ/4 P-V at best focus: 64 λ R³/D⁴.
pub fn conic_tolerance_quarter_wave(radius: f64, d: f64, lambda_mm: f64) -> f64 {
    64.0 * lambda_mm * radius.powi(3) / d.powi(4)
}

/// Optical path difference of the ray at height `rho` against the chief
/// ray, to the sphere centred at (0, `zq`) through the vertex.
fn opd(radius: f64, conic: f64, rho: f64, zq: f64) -> f64 {
    let (z, dz) = conic_sag_slope(radius, conic, rho);
    let nn = (1.0 + dz * dz).sqrt();
    let (n_r, n_z) = (-dz / nn, 1.0 / nn);
    // Incoming (0, −1); r = d − 2(d·n)n.
    let dn = -n_z;
    let (r_r, r_z) = (-2.0 * dn * n_r, -1.0 - 2.0 * dn * n_z);
    let (w_r, w_z) = (rho, z - zq);
    let wr = w_r * r_r + w_z * r_z;
    // |w|² − zq², without cancellation.
    let c = rho * rho + z * z - 2.0 * z * zq;
    let disc = (wr * wr - c).max(0.0);
    let t = c / (-wr + disc.sqrt());
    t - z
}

/// Exact wavefront of a concave conic (R > 0) of diameter `d` for a
/// collimated on-axis beam, about its best focus. Inputs must be valid
/// (finite, inside the conic's domain); see [`compare_conics`].
pub fn collimated_wavefront(radius: f64, conic: f64, d: f64, lambda_mm: f64) -> Wavefront {
    let a = 0.5 * d;
    let n = PUPIL_RINGS;
    let rho: Vec<f64> = (0..n).map(|i| a * ((i as f64 + 0.5) / n as f64).sqrt()).collect();
    let mut zq = 0.5 * radius;
    let h = 1e-6 * radius;
    let fit = |zq: f64| {
        let w: Vec<f64> = rho.iter().map(|&r| opd(radius, conic, r, zq)).collect();
        let g: Vec<f64> =
            rho.iter().map(|&r| (opd(radius, conic, r, zq + h) - opd(radius, conic, r, zq - h)) / (2.0 * h)).collect();
        let nf = n as f64;
        let (mw, mg) = (w.iter().sum::<f64>() / nf, g.iter().sum::<f64>() / nf);
        let (mut sgg, mut sgw) = (0.0, 0.0);
        for (wi, gi) in w.iter().zip(&g) {
            sgg += (gi - mg) * (gi - mg);
            sgw += (gi - mg) * (wi - mw);
        }
        let c = if sgg > 0.0 { sgw / sgg } else { 0.0 };
        (w, g, mw, mg, c)
    };
    let mut last = fit(zq);
    for _ in 0..6 {
        let c = last.4;
        if !c.is_finite() || c.abs() < 1e-13 * radius {
            break;
        }
        zq -= c;
        last = fit(zq);
    }
    let (w, g, mw, mg, c) = last;
    let piston = mw - c * mg;
    let res: Vec<f64> = w.iter().zip(&g).map(|(wi, gi)| wi - piston - c * gi).collect();
    let rms = (res.iter().map(|r| r * r).sum::<f64>() / n as f64).sqrt();
    // P-V over the samples plus the centre and the rim.
    let at = |r: f64| {
        let gi = (opd(radius, conic, r, zq + h) - opd(radius, conic, r, zq - h)) / (2.0 * h);
        opd(radius, conic, r, zq) - piston - c * gi
    };
    let ends = [at(0.0), at(a)];
    let hi = res.iter().chain(&ends).cloned().fold(f64::NEG_INFINITY, f64::max);
    let lo = res.iter().chain(&ends).cloned().fold(f64::INFINITY, f64::min);
    let sigma = rms / lambda_mm;
    Wavefront {
        pv_waves: (hi - lo) / lambda_mm,
        rms_waves: sigma,
        strehl: (-(2.0 * std::f64::consts::PI * sigma).powi(2)).exp(),
        best_focus_mm: zq,
    }
}

/// The sphere with the least peak-to-valley departure from a target conic
/// over an aperture, placed to touch the target from the glass side.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct BestFitSphere {
    pub radius_mm: f64,
    /// Target conic's vertex radius and conic constant.
    pub conic_radius_mm: f64,
    pub conic: f64,
    /// Axial shift of the sphere's vertex from the conic's, mm (toward the
    /// centre of curvature positive).
    pub offset_mm: f64,
    /// Greatest depth of glass to remove (the departure's P-V), mm.
    pub removal_depth_mm: f64,
}

impl BestFitSphere {
    /// Depth of glass to remove at radius `rho` (≥ 0, mm), measured along
    /// the axis: sphere minus target, for a concave mirror whose glass lies
    /// behind its face.
    /// (The sphere is placed from samples of the aperture; between them
    /// the difference can dip below zero by rounding, which is clamped.)
    pub fn removal_mm(&self, rho: f64) -> f64 {
        let v = self.offset_mm + conic_sag(self.radius_mm, 0.0, rho) - conic_sag(self.conic_radius_mm, self.conic, rho);
        v.max(0.0)
    }

    /// Signed departure of the target from the sphere at `rho`, mm, with
    /// the sphere placed midway (values from −P-V/2 to +P-V/2; positive
    /// where the target stands proud of the sphere, toward the centre of
    /// curvature).
    pub fn departure_mm(&self, rho: f64) -> f64 {
        0.5 * self.removal_depth_mm - self.removal_mm(rho)
    }
}

/// Finds the best-fit sphere of a concave conic over diameter `d`. Inputs
/// must be valid (R > 0, aperture inside the conic's domain).
pub fn best_fit_sphere(radius: f64, conic: f64, d: f64) -> BestFitSphere {
    let a = 0.5 * d;
    let rho: Vec<f64> = (0..=SAG_SAMPLES).map(|i| a * i as f64 / SAG_SAMPLES as f64).collect();
    let target: Vec<f64> = rho.iter().map(|&r| conic_sag(radius, conic, r)).collect();
    let range = |cb: f64| {
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for (r, t) in rho.iter().zip(&target) {
            let v = conic_sag(1.0 / cb, 0.0, *r) - t;
            lo = lo.min(v);
            hi = hi.max(v);
        }
        (lo, hi)
    };
    let c0 = 1.0 / radius;
    let e = {
        let (lo, hi) = range(c0);
        hi.max(-lo)
    };
    // Curvature change that moves the rim sag by 4E, capped so that the
    // sphere still reaches the rim.
    let w = 8.0 * e / (a * a) + 1e-12 * c0;
    let (mut x0, mut x1) = ((c0 - w).max(1e-3 * c0), (c0 + w).min(0.999 / a).max(c0));
    let pv = |cb: f64| {
        let (lo, hi) = range(cb);
        hi - lo
    };
    let g = 0.5 * (5f64.sqrt() - 1.0);
    let (mut p, mut q) = (x1 - g * (x1 - x0), x0 + g * (x1 - x0));
    let (mut fp, mut fq) = (pv(p), pv(q));
    for _ in 0..120 {
        if fp <= fq {
            x1 = q;
            q = p;
            fq = fp;
            p = x1 - g * (x1 - x0);
            fp = pv(p);
        } else {
            x0 = p;
            p = q;
            fp = fq;
            q = x0 + g * (x1 - x0);
            fq = pv(q);
        }
    }
    let cb = 0.5 * (x0 + x1);
    let (lo, hi) = range(cb);
    BestFitSphere { radius_mm: 1.0 / cb, conic_radius_mm: radius, conic, offset_mm: -lo, removal_depth_mm: hi - lo }
}

/// Parses a list of conic constants (field `conics`) separated by commas,
/// semicolons or spaces (any mix: "0, -1; -2 -0.5").
pub fn parse_conics(s: &str) -> Result<Vec<f64>, InputError> {
    let mut out = Vec::new();
    // Commas and semicolons separate entries (an empty one is an error);
    // within an entry, spaces separate constants.
    let mut tokens = Vec::new();
    for part in s.split([',', ';']) {
        let words: Vec<&str> = part.split_whitespace().collect();
        if words.is_empty() {
            tokens.push("");
        }
        tokens.extend(words);
    }
    for (i, t) in tokens.into_iter().enumerate() {
        let field = format!("conics[{i}]");
        // A typographic minus (as the page prints numbers) reads as a minus.
        let v: f64 = t.replace('\u{2212}', "-").parse().map_err(|_| bad(&field, format!("\"{}\" is not a number", printable(t))))?;
        out.push(v);
    }
    Ok(out)
}

/// Compares conic constants for one concave vertex radius and diameter.
pub fn compare_conics(radius: f64, d: f64, conics: &[f64], wavelength_nm: f64) -> Result<Comparison, InputError> {
    let radius = positive("radius", radius)?;
    let d = positive("diameter", d)?;
    let nm = wavelength("wavelength", wavelength_nm)?;
    if conics.is_empty() || conics.len() > MAX_CONICS {
        return Err(bad("conics", format!("give between 1 and {MAX_CONICS} conic constants")));
    }
    let a = 0.5 * d;
    conic_reaches("diameter", radius, 0.0, a)?;
    for (i, &k) in conics.iter().enumerate() {
        let field = format!("conics[{i}]");
        if !k.is_finite() || k.abs() > 1.0e6 {
            return Err(bad(&field, format!("must be a finite number between -1e6 and 1e6 (got {})", Num(k))));
        }
        conic_reaches(&field, radius, k, a)?;
    }
    let lambda = nm * 1e-6;
    let rows = conics
        .iter()
        .map(|&k| {
            let (mut lo, mut hi) = (0.0f64, 0.0f64);
            for i in 0..=SAG_SAMPLES {
                let r = a * i as f64 / SAG_SAMPLES as f64;
                let v = conic_sag(radius, k, r) - conic_sag(radius, 0.0, r);
                lo = lo.min(v);
                hi = hi.max(v);
            }
            let wf = collimated_wavefront(radius, k, d, lambda);
            let bfs = best_fit_sphere(radius, k, d);
            ConicRow {
                conic: k,
                edge_sag_mm: conic_sag(radius, k, a),
                departure_pv_um: (hi - lo) * 1e3,
                wavefront_pv_waves: wf.pv_waves,
                wavefront_rms_waves: wf.rms_waves,
                strehl_estimate: wf.strehl,
                best_focus_mm: wf.best_focus_mm,
                best_fit_sphere_radius_mm: bfs.radius_mm,
                removal_depth_um: bfs.removal_depth_mm * 1e3,
            }
        })
        .collect::<Vec<ConicRow>>();
    for (i, r) in rows.iter().enumerate() {
        let values = [
            r.edge_sag_mm,
            r.departure_pv_um,
            r.wavefront_pv_waves,
            r.wavefront_rms_waves,
            r.strehl_estimate,
            r.best_focus_mm,
            r.best_fit_sphere_radius_mm,
            r.removal_depth_um,
        ];
        finite_result(&format!("conics[{i}]"), "comparison row", &values)?;
    }
    let fastest = [sphere_fastest_f_ratio(d, lambda), sphere_fastest_f_ratio_exact(d, lambda)];
    let tolerance = conic_tolerance_quarter_wave(radius, d, lambda);
    finite_result("diameter", "sphere limit or conic tolerance", &[fastest[0], fastest[1], tolerance])?;
    Ok(Comparison {
        conics: rows,
        sphere_fastest_f_ratio: fastest[0],
        sphere_fastest_f_ratio_exact: fastest[1],
        conic_tolerance_quarter_wave: tolerance,
        radius_mm: radius,
        diameter_mm: d,
        focal_ratio: radius / (2.0 * d),
        wavelength_nm: nm,
    })
}

/// Smallest f-ratio at which a sphere of diameter `d` keeps λ/4 P-V at best
/// focus, by bisection on the exact wavefront (bounded: 60 halvings of a
/// bracket around the third-order value).
pub fn sphere_fastest_f_ratio_exact(d: f64, lambda_mm: f64) -> f64 {
    let n3 = sphere_fastest_f_ratio(d, lambda_mm);
    let pv = |n: f64| collimated_wavefront(2.0 * n * d, 0.0, d, lambda_mm).pv_waves - 0.25;
    let (mut lo, mut hi) = ((0.5 * n3).max(0.3), 2.0 * n3.max(0.3));
    if pv(lo) <= 0.0 {
        return lo;
    }
    if pv(hi) > 0.0 {
        return hi;
    }
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if pv(mid) > 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}
