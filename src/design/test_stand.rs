//! The centre-of-curvature test stand, traced exactly in 3D: a concave
//! mirror (a conic, or a conic carrying a measured departure), a point
//! source on its axis, and a plane across the axis (a Ronchi grating or a
//! knife edge) that the reflected light crosses on its way to the eye.
//!
//! # Geometry (docs/FORMATS.md §3, `ronchi` and `knife`)
//!
//! Mirror frame: vertex at the origin, z along the axis toward the centre
//! of curvature of the vertex sphere (distance R), x along the mirror's
//! horizontal diameter, y along the vertical one. The plane stands at
//! z = R + S (S > 0 outside the centre of curvature, away from the mirror).
//! The moving source sits on the axis in that plane; the fixed source at
//! the vertex centre of curvature, z = R.
//!
//! For a pupil point (x, y) the ray runs from the source to the surface
//! point (x, y, z(ρ)), is reflected about the exact surface normal
//! (−z′x/ρ, −z′y/ρ, 1)/‖·‖ and continues to the plane, where it lands at
//! (X, Y). The eye behind the plane sees the pupil point lit or dark
//! according to what stands at (X, Y). Seen from behind the plane the
//! mirror's +x is on the eye's right.
//!
//! # Crossings
//!
//! Band edges and null zones are roots of smooth functions along a line
//! of the pupil. They are found by scanning the line in even steps (fine
//! enough that a step changes the function by less than a quarter of a
//! level) and refining each sign change by bisection to
//! [`CROSSING_TOL_REL`] of the semi-diameter, at most
//! [`CROSSING_MAX_ITER`] halvings. Two crossings closer than one scan step
//! (a function touching a level) may be missed.

use super::{bad, conic_reaches, finite, positive, TestSource};
use crate::error::{InputError, Num};
use crate::geometry::{reflect, unit, NaturalSpline, Profile, Sag, Vec3};

/// Steps of the first scan along a radius.
pub const SCAN_STEPS: usize = 4096;
/// Most steps a scan is refined to when the function varies fast.
pub const MAX_SCAN_STEPS: usize = 1 << 21;
/// Bisection stops when the bracket is this fraction of the semi-diameter.
pub const CROSSING_TOL_REL: f64 = 1e-13;
/// Iteration cap of the bisection.
pub const CROSSING_MAX_ITER: usize = 200;
/// Smallest gap between the plane and the mirror's rim, as a fraction of R.
pub const PLANE_CLEARANCE_REL: f64 = 1e-6;
/// Landing points closer than this fraction of R to a ruling or knife
/// edge count as on it (rounding noise of the trace is some 1e-15 of R).
pub const LANDING_TOL_REL: f64 = 1e-11;

/// A concave mirror on the test stand, with its source and plane.
#[derive(Debug, Clone)]
pub struct TestStand {
    profile: Profile,
    radius: f64,
    semi_diameter: f64,
    plane_z: f64,
    source_z: f64,
    measured: bool,
}

/// Mirror, source and plane for one simulated test. `offset_field` names
/// the plane's offset in errors (`offset_mm`, `knife_mm`); `measured`
/// holds departure knots (ρ, Δz) in mm from the design conic, ρ from 0
/// increasing, made even like a layout's departure (docs/FORMATS.md §1).
#[derive(Debug, Clone, Copy)]
pub struct StandSpec<'a> {
    pub radius: f64,
    pub conic: f64,
    pub diameter: f64,
    pub offset_field: &'a str,
    pub offset_mm: f64,
    pub source: TestSource,
    pub measured: Option<&'a [[f64; 2]]>,
}

impl TestStand {
    pub fn new(spec: StandSpec<'_>) -> Result<Self, InputError> {
        let radius = positive("radius", spec.radius)?;
        let conic = finite("conic", spec.conic)?;
        if conic.abs() > 1.0e6 {
            return Err(bad("conic", "must be between -1e6 and 1e6"));
        }
        let d = positive("diameter", spec.diameter)?;
        let a = 0.5 * d;
        conic_reaches("diameter", radius, conic, a)?;
        let offset = finite(spec.offset_field, spec.offset_mm)?;
        let mut profile = Profile::conic(Some(radius), conic);
        if let Some(knots) = spec.measured {
            check_knots(knots)?;
            profile.departure = NaturalSpline::even(knots);
            if profile.departure.is_none() {
                return Err(bad("measured", "needs at least two rows with radii from 0 increasing"));
            }
        }
        // The plane must stand in front of the whole mirror.
        let n = 256;
        let mut highest = f64::NEG_INFINITY;
        for i in 0..=n {
            let (z, dz) = profile.sag_slope(a * i as f64 / n as f64);
            if !z.is_finite() || !dz.is_finite() {
                return Err(bad("measured", "gives a surface that is not finite over the mirror"));
            }
            highest = highest.max(z);
        }
        let plane_z = radius + offset;
        if plane_z <= highest + PLANE_CLEARANCE_REL * radius {
            return Err(bad(
                spec.offset_field,
                format!(
                    "puts the plane at or behind the mirror: it must be more than {} mm (the mirror's rim stands {} mm in front of its vertex, R = {} mm)",
                    Num(highest - radius),
                    Num(highest),
                    Num(radius)
                ),
            ));
        }
        let source_z = match spec.source {
            TestSource::Moving => plane_z,
            TestSource::Fixed => radius,
        };
        Ok(TestStand { profile, radius, semi_diameter: a, plane_z, source_z, measured: spec.measured.is_some() })
    }

    pub fn semi_diameter(&self) -> f64 {
        self.semi_diameter
    }
    pub fn is_measured(&self) -> bool {
        self.measured
    }

    /// Where the ray reflected at pupil point (x, y) crosses the plane,
    /// (X, Y) in mm; `None` when it never reaches the plane.
    pub fn landing(&self, x: f64, y: f64) -> Option<(f64, f64)> {
        let rho = x.hypot(y);
        let (z, dz) = self.profile.sag_slope(rho);
        let p = Vec3::new(x, y, z);
        let n = if rho > 0.0 { unit(&Vec3::new(-dz * x / rho, -dz * y / rho, 1.0)) } else { Vec3::new(0.0, 0.0, 1.0) };
        let d = unit(&(p - Vec3::new(0.0, 0.0, self.source_z)));
        let r = reflect(&d, &n);
        if r.z <= 0.0 {
            return None;
        }
        let t = (self.plane_z - z) / r.z;
        let (lx, ly) = (p.x + t * r.x, p.y + t * r.y);
        (lx.is_finite() && ly.is_finite()).then_some((lx, ly))
    }

    /// Where the surface normal at radius ρ meets the axis, mm from the
    /// vertex centre of curvature (+ outside): the moving-source knife-edge
    /// reading of the zone, z + ρ/z′ − R (docs/FORMATS.md §3, `zones`).
    /// The paraxial limit at ρ = 0.
    pub fn normal_reading(&self, rho: f64) -> f64 {
        let rho = rho.abs().max(self.semi_diameter * 1e-9);
        let (z, dz) = self.profile.sag_slope(rho);
        z + rho / dz - self.radius
    }

    /// Distance from an edge within which a landing point counts as on it,
    /// mm ([`LANDING_TOL_REL`] of R).
    pub fn landing_tol(&self) -> f64 {
        LANDING_TOL_REL * self.radius
    }

    /// X of the landing point along the horizontal diameter (y = 0); NaN
    /// when the ray misses the plane.
    pub fn landing_x(&self, x: f64) -> f64 {
        self.landing(x, 0.0).map_or(f64::NAN, |l| l.0)
    }
}

fn check_knots(knots: &[[f64; 2]]) -> Result<(), InputError> {
    if knots.len() < 2 || knots.len() > super::measured::MAX_ROWS {
        return Err(bad("measured", format!("needs between 2 and {} rows of radius, departure", super::measured::MAX_ROWS)));
    }
    for (i, k) in knots.iter().enumerate() {
        let field = format!("measured[{i}]");
        finite(&field, k[0])?;
        finite(&field, k[1])?;
        if k[0] < 0.0 || (i > 0 && k[0] <= knots[i - 1][0]) {
            return Err(bad(&field, "radii must start at 0 or more and increase from row to row"));
        }
    }
    Ok(())
}

/// Refines a sign change of `f` between `lo` and `hi` (f(lo)·f(hi) < 0) by
/// bisection; `tol` is the bracket width to stop at.
pub fn bisect(f: impl Fn(f64) -> f64, mut lo: f64, mut hi: f64, tol: f64) -> f64 {
    let mut flo = f(lo);
    for _ in 0..CROSSING_MAX_ITER {
        if (hi - lo).abs() <= tol {
            break;
        }
        let mid = 0.5 * (lo + hi);
        let fm = f(mid);
        if fm == 0.0 {
            return mid;
        }
        if fm.is_nan() || (fm < 0.0) == (flo < 0.0) {
            lo = mid;
            flo = fm;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// Points of (`lo`, `hi`] where `g` crosses an integer level, ascending.
/// Values within `snap` of a level count as on it, so rounding noise about
/// a level is no crossing; a run of points on a level is one crossing
/// (at its first point) when `g` leaves on the other side, none when it
/// comes back or when the run starts the scan; a run that ends the scan
/// counts (an edge at `hi`). The scan is refined until
/// one step changes `g` by at most a quarter level; `None` when that would
/// take more than [`MAX_SCAN_STEPS`] or the crossings number more than
/// `max_crossings`.
pub fn level_crossings(g: impl Fn(f64) -> f64, lo: f64, hi: f64, snap: f64, max_crossings: usize) -> Option<Vec<f64>> {
    let snapped = |x: f64| {
        let v = g(x);
        let k = v.round();
        if (v - k).abs() <= snap { k } else { v }
    };
    let sample = |n: usize| -> Vec<(f64, f64)> {
        (0..=n)
            .map(|i| {
                let x = lo + (hi - lo) * i as f64 / n as f64;
                (x, snapped(x))
            })
            .collect()
    };
    let mut pts = sample(SCAN_STEPS);
    let worst = pts.windows(2).map(|w| (w[1].1 - w[0].1).abs()).filter(|v| v.is_finite()).fold(0.0, f64::max);
    if worst > 0.25 {
        let n = (SCAN_STEPS as f64 * worst / 0.25).ceil();
        if n > MAX_SCAN_STEPS as f64 {
            return None;
        }
        pts = sample(n as usize);
    }
    let tol = CROSSING_TOL_REL * (hi - lo).abs().max(lo.abs()).max(hi.abs());
    let mut out = Vec::new();
    // A run on a level: (level, side it came from (None at the start), first x).
    let mut on_level: Option<(f64, Option<bool>, f64)> = None;
    let mut prev: Option<(f64, f64)> = None;
    for &(x1, g1) in &pts {
        if !g1.is_finite() {
            prev = None;
            on_level = None;
            continue;
        }
        let Some((x0, g0)) = prev else {
            if g1 == g1.round() {
                on_level = Some((g1, None, x1));
            }
            prev = Some((x1, g1));
            continue;
        };
        if let Some((k, side, first)) = on_level
            && g1 != k {
                if side.is_some_and(|below| below != (g1 < k)) {
                    out.push(first);
                }
                on_level = None;
            }
        // Levels strictly between the two values.
        let (a, b) = (g0.min(g1).floor() as i64 + 1, g0.max(g1).ceil() as i64 - 1);
        let mut found: Vec<f64> = (a..=b).map(|k| k as f64).map(|k| bisect(|x| g(x) - k, x0, x1, tol)).collect();
        if g1 < g0 {
            found.reverse();
        }
        out.extend(found);
        if g1 == g1.round() && on_level.is_none() && g0 != g1 {
            on_level = Some((g1, Some(g0 < g1), x1));
        }
        if out.len() > max_crossings {
            return None;
        }
        prev = Some((x1, g1));
    }
    // A level reached at the end of the scan (a band edge on the rim).
    if let Some((_, Some(_), first)) = on_level {
        out.push(first);
    }
    Some(out)
}

/// Sign changes of `f` over [`lo`, `hi`] scanned in `steps` even steps,
/// ascending; values within `zero` of 0 count as 0 and are skipped over (a
/// change across them counts).
pub fn sign_changes(f: impl Fn(f64) -> f64, lo: f64, hi: f64, steps: usize, zero: f64) -> Vec<f64> {
    let tol = CROSSING_TOL_REL * (hi - lo).abs().max(hi.abs());
    let mut out = Vec::new();
    let mut last: Option<(f64, f64)> = None;
    for i in 0..=steps {
        let x = lo + (hi - lo) * i as f64 / steps as f64;
        let v = f(x);
        if !v.is_finite() || v.abs() <= zero {
            continue;
        }
        if let Some((xp, vp)) = last
            && (vp < 0.0) != (v < 0.0) {
                out.push(bisect(&f, xp, x, tol));
            }
        last = Some((x, v));
    }
    out
}

/// A picture of the mirror disk as the eye sees it: per pixel the fraction
/// of the pixel inside the disk and the fraction of that part seen lit.
/// Rows run from the top (+y) down, columns from the eye's left (−x).
#[derive(Debug, Clone, PartialEq)]
pub struct MirrorPicture {
    pub size: usize,
    /// Fraction of each pixel inside the mirror's disk, 0 … 1.
    pub inside: Vec<f32>,
    /// Fraction of the inside part seen lit, 0 … 1.
    pub lit: Vec<f32>,
}

/// Sub-samples per pixel side in a picture.
pub const PICTURE_SUPERSAMPLE: usize = 3;
/// Largest picture side, pixels.
pub const MAX_PICTURE_SIZE: usize = 2048;

/// Colour of lit glass (sRGB), of dark glass, for [`MirrorPicture::rgba`].
const LIT_RGB: [f64; 3] = [238.0, 236.0, 226.0];
const DARK_RGB: [f64; 3] = [22.0, 22.0, 28.0];

impl MirrorPicture {
    /// Renders the disk of semi-diameter `a`, `size` pixels a side, with
    /// `lit(x, y)` saying whether a pupil point is seen lit.
    pub fn render(size: usize, a: f64, lit: impl Fn(f64, f64) -> bool) -> Result<Self, InputError> {
        if size == 0 || size > MAX_PICTURE_SIZE {
            return Err(bad("size", format!("must be between 1 and {MAX_PICTURE_SIZE} pixels (got {size})")));
        }
        let s = PICTURE_SUPERSAMPLE;
        let step = 2.0 * a / (size * s) as f64;
        let mut inside = vec![0.0f32; size * size];
        let mut lit_frac = vec![0.0f32; size * size];
        for row in 0..size {
            for col in 0..size {
                let (mut n_in, mut n_lit) = (0usize, 0usize);
                for sj in 0..s {
                    let y = a - ((row * s + sj) as f64 + 0.5) * step;
                    for si in 0..s {
                        let x = -a + ((col * s + si) as f64 + 0.5) * step;
                        if x * x + y * y <= a * a {
                            n_in += 1;
                            if lit(x, y) {
                                n_lit += 1;
                            }
                        }
                    }
                }
                let i = row * size + col;
                inside[i] = n_in as f32 / (s * s) as f32;
                lit_frac[i] = if n_in > 0 { n_lit as f32 / n_in as f32 } else { 0.0 };
            }
        }
        Ok(MirrorPicture { size, inside, lit: lit_frac })
    }

    /// RGBA bytes, row by row: lit glass pale, dark glass nearly black,
    /// outside the disk transparent.
    pub fn rgba(&self) -> Vec<u8> {
        let mut out = Vec::with_capacity(self.inside.len() * 4);
        for (&inside, &lit) in self.inside.iter().zip(&self.lit) {
            let t = f64::from(lit);
            for c in 0..3 {
                out.push((DARK_RGB[c] + (LIT_RGB[c] - DARK_RGB[c]) * t).round() as u8);
            }
            out.push((255.0 * f64::from(inside)).round() as u8);
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn level_crossings_count_changes_of_side_only() {
        // 3x crosses 1, 2, 3 at x = 1/3, 2/3, 1 (the last at the end).
        let c = level_crossings(|x| 3.0 * x, 0.0, 1.0, 1e-12, 100).unwrap();
        assert_eq!(c.len(), 3);
        for (got, want) in c.iter().zip([1.0 / 3.0, 2.0 / 3.0, 1.0]) {
            assert!((got - want).abs() < 1e-12, "{got} vs {want}");
        }
        // Parabolas that touch the level 1 at x = 0.5 (a scan point) from
        // above and from below and go back.
        for sign in [1.0, -1.0] {
            let touch = level_crossings(|x| 1.0 + sign * (x - 0.5) * (x - 0.5), 0.0, 1.0, 1e-12, 100).unwrap();
            assert!(touch.is_empty(), "{sign}: {touch:?}");
        }
        // Noise about a level is no crossing.
        let noise = level_crossings(|x| 1e-14 * (1e4 * x).sin(), 0.0, 1.0, 1e-12, 100).unwrap();
        assert!(noise.is_empty(), "{noise:?}");
        // About any level, not only 0.
        let noise = level_crossings(|x| 3.0 + 1e-14 * (1e4 * x).sin(), 0.0, 1.0, 1e-12, 100).unwrap();
        assert!(noise.is_empty(), "{noise:?}");
        // Too many crossings: refused; exactly as many as allowed: kept
        // (2.5x crosses 1 and 2 at 0.4 and 0.8).
        assert!(level_crossings(|x| 1e3 * x, 0.0, 1.0, 1e-12, 100).is_none());
        let c = level_crossings(|x| 2.5 * x, 0.0, 1.0, 1e-12, 2).unwrap();
        assert!(c.len() == 2 && (c[0] - 0.4).abs() < 1e-12 && (c[1] - 0.8).abs() < 1e-12, "{c:?}");
    }

    #[test]
    fn rgba_blends_dark_to_lit_glass_and_the_disk_sets_alpha() {
        // The picture's contract (docs/FORMATS.md §3, `--png`): lit glass
        // pale, dark glass nearly black, a partly lit pixel in between
        // (linear blend, rounded), transparent outside the disk.
        let pic = MirrorPicture { size: 2, inside: vec![1.0, 1.0, 0.5, 0.0], lit: vec![1.0, 0.0, 0.5, 0.0] };
        let px = pic.rgba();
        assert_eq!(px.len(), 16);
        assert_eq!(&px[0..4], &[238, 236, 226, 255]);
        assert_eq!(&px[4..8], &[22, 22, 28, 255]);
        // Halfway: (22 + 238)/2 = 130, (22 + 236)/2 = 129, (28 + 226)/2 = 127; alpha 127.5 → 128.
        assert_eq!(&px[8..12], &[130, 129, 127, 128]);
        assert_eq!(px[15], 0);
    }

    #[test]
    fn picture_sizes_from_1_to_the_limit_are_accepted() {
        // Inclusive limits of the picture's side (common practice: a bad
        // size names the field; the page and CLI share this check).
        for bad_size in [0, MAX_PICTURE_SIZE + 1] {
            let e = MirrorPicture::render(bad_size, 1.0, |_, _| true).unwrap_err();
            assert_eq!(e.field, "size");
        }
        let one = MirrorPicture::render(1, 1.0, |_, _| true).unwrap();
        // 3 × 3 sub-samples at x, y ∈ {−2/3, 0, 2/3}: even the corners
        // (ρ² = 8/9) lie inside the unit disk.
        assert_eq!(one.inside, vec![1.0]);
        let big = MirrorPicture::render(MAX_PICTURE_SIZE, 1.0, |x, _| x > 0.0).unwrap();
        assert_eq!(big.lit.len(), MAX_PICTURE_SIZE * MAX_PICTURE_SIZE);
    }

    #[test]
    fn the_picture_covers_the_disk_and_no_more() {
        // A disk of radius a in a 2a square covers π/4 of it (area of a
        // circle, common geometry); with 3 × 3 samples a pixel the sum of
        // the coverage fractions matches to the rim's sampling error:
        // about one sample row (⅓ pixel) around the perimeter, π·n pixels
        // long. The corners lie
        // outside, and the middle row is inside from edge to edge.
        let n = 90;
        let pic = MirrorPicture::render(n, 50.0, |_, _| true).unwrap();
        let area: f64 = pic.inside.iter().map(|&v| f64::from(v)).sum();
        let want = std::f64::consts::FRAC_PI_4 * (n * n) as f64;
        assert!((area - want).abs() < std::f64::consts::PI * n as f64 / 3.0, "{area} vs {want}");
        for corner in [0, n - 1, n * (n - 1), n * n - 1] {
            assert_eq!(pic.inside[corner], 0.0, "corner {corner}");
        }
        assert!(pic.inside[n / 2 * n..(n / 2 + 1) * n].iter().all(|&v| v > 0.0));
        // Row by row, the lit width is the chord 2√(a² − y²) to within a
        // pixel at each end.
        for row in [5, 20, 44, 70] {
            let y = 50.0 - (row as f64 + 0.5) * (100.0 / n as f64);
            let chord = 2.0 * (50.0f64 * 50.0 - y * y).sqrt() * n as f64 / 100.0;
            let got: f64 = pic.inside[row * n..(row + 1) * n].iter().map(|&v| f64::from(v)).sum();
            assert!((got - chord).abs() < 2.0, "row {row}: {got} vs {chord}");
        }
    }

    #[test]
    fn crossings_of_a_scan_that_starts_past_zero() {
        // 3x over [1, 2] crosses 4 and 5 at 4/3 and 5/3 and ends on 6 at 2
        // (arithmetic, common practice); 3 at the start is no crossing.
        let c = level_crossings(|x| 3.0 * x, 1.0, 2.0, 1e-12, 100).unwrap();
        assert_eq!(c.len(), 3, "{c:?}");
        for (got, want) in c.iter().zip([4.0 / 3.0, 5.0 / 3.0, 2.0]) {
            assert!((got - want).abs() < 1e-12, "{got} vs {want}");
        }
    }

    #[test]
    fn a_wiggle_faster_than_the_first_scan_is_followed() {
        // 0.4·sin(2π·3000x + 0.3) is zero at x = (kπ − 0.3)/(6000π),
        // k = 1 … 6000 (common practice): 6000 sign changes, more than the
        // first scan's 4096 steps can see without refining.
        let g = |x: f64| 0.4 * (2.0 * std::f64::consts::PI * 3000.0 * x + 0.3).sin();
        let c = level_crossings(g, 0.0, 1.0, 1e-12, 10_000).unwrap();
        assert_eq!(c.len(), 6000);
        for (k, got) in c.iter().enumerate() {
            let want = ((k + 1) as f64 * std::f64::consts::PI - 0.3) / (6000.0 * std::f64::consts::PI);
            assert!((got - want).abs() < 1e-9, "{k}: {got} vs {want}");
        }
    }

    #[test]
    fn levels_crossed_in_one_step_come_out_in_order() {
        // −2.5·tanh((x − c)/w) falls through 2, 1, 0, −1, −2 at
        // x = c − w·atanh(k/2.5) (arithmetic, common practice). With w
        // far below the first scan's step the refined steps still span
        // several levels each; the crossings must come out ascending.
        let (c0, w) = (0.500_03, 1e-5);
        let c = level_crossings(|x| -2.5 * ((x - c0) / w).tanh(), 0.0, 1.0, 1e-12, 100).unwrap();
        assert_eq!(c.len(), 5, "{c:?}");
        for (got, k) in c.iter().zip([2.0f64, 1.0, 0.0, -1.0, -2.0]) {
            let want = c0 - w * (k / 2.5).atanh();
            assert!((got - want).abs() < 1e-12, "level {k}: {got} vs {want}");
        }
    }

    #[test]
    fn a_fast_function_refines_the_scan_and_a_too_fast_one_is_refused() {
        // Arithmetic (common practice): 3000x crosses every whole number
        // k = 1..3000 at x = k/3000. One first-scan step changes it by
        // 3000/4096 of a level, past the quarter level that refines the
        // scan: refined to 12,288 steps, every crossing found.
        let c = level_crossings(|x| 3000.0 * x, 0.0, 1.0, 1e-12, 10_000).unwrap();
        assert_eq!(c.len(), 3000);
        for (i, got) in c.iter().enumerate() {
            let want = (i + 1) as f64 / 3000.0;
            assert!((got - want).abs() < 1e-12, "{got} vs {want}");
        }
        // A ramp of 128 levels in the first step, then flat: a quarter
        // level per step takes exactly MAX_SCAN_STEPS steps, still
        // allowed; levels 1 … 127 at k/524288 and 128 held to the end.
        let c = level_crossings(|x| (524_288.0 * x).min(128.0), 0.0, 1.0, 1e-12, 1000).unwrap();
        assert_eq!(c.len(), 128);
        assert!((c[0] - 1.0 / 524_288.0).abs() < 1e-13 && (c[127] - 1.0 / 4096.0).abs() < 1e-13, "{} {}", c[0], c[127]);
        // A quarter level per step would take 4·10⁷ steps, past MAX_SCAN_STEPS.
        assert!(level_crossings(|x| 1e7 * x, 0.0, 1.0, 1e-12, usize::MAX).is_none());
    }
}
