//! The caustic raster and the catacaustic of a circular mirror.
//!
//! Source for both checks: the catacaustic of a circle for parallel light
//! is a nephroid with its cusp on the axis R/2 from the centre; the caustic
//! point of the ray incident at angle θ lies (R/4)(3 cos θ − cos 3θ) from
//! the centre along the axis and R sin³θ from it (Lawrence, A Catalog of
//! Special Plane Curves, Dover 1972; Lockwood, A Book of Curves, 1961;
//! computed independently for R = 1000, h = 100 → (507.44, 1.000)).

mod analysis_support;
use analysis_support::*;
use catoptric::analysis::{caustic, caustic_raster};
use catoptric::trace::Fan;

const R: f64 = 1000.0;

/// Circular mirror (sphere) of radius R, vertex at z = R so its centre is
/// at the origin, lit by parallel light along +z.
fn circle_scene() -> String {
    layout(&[mirror("m", R, R, 0.0, 1600.0, None)], &[beam("sun-free", 0.0, 100.0, 1600.0, 10, "hex", 0.0)])
}

/// Axial position (from the centre) of the nephroid at height y > 0.
fn nephroid_z(y: f64) -> f64 {
    let th = (y / R).cbrt().asin();
    R / 4.0 * (3.0 * th.cos() - (3.0 * th).cos())
}

#[test]
fn density_ridges_follow_the_nephroid_from_its_cusp() {
    // The raster is built from a 4001-ray fan through the general tracer;
    // its ridges must sit on the nephroid (see the file header).
    let scene = scene(&circle_scene());
    // 1 mm pixels centred on whole millimetres: row 100 straddles the axis
    // (row r is centred on y = 100 − r), column c on z = 301 + c.
    let (w, h) = (400usize, 201usize);
    let img = caustic(&scene, 4001, [-100.5, 300.5, 100.5, 700.5], w, h);
    assert_eq!(img.len(), w * h);
    let argmax = |row: usize| (0..w).max_by(|&a, &b| img[row * w + a].total_cmp(&img[row * w + b])).unwrap();
    // On the axis row the rays bunch from the cusp (z = R/2) to where the
    // two branches, tangent to the axis there, leave the row (|y| = ½
    // pixel): the densest pixel of the row lies in that stretch. In a 2-D
    // raster the branches, not the cusp point, carry the peak; at 1 mm
    // pixels and R = 1000 the stretch is 4.7 pixels long.
    let z = 301.0 + argmax(100) as f64;
    let (lo, hi) = (R / 2.0, nephroid_z(0.5));
    assert!(z >= lo - 1.0 && z <= hi + 1.0, "axis-row peak at z = {z}, nephroid from {lo} to {hi:.2}");
    // Nothing dense before the cusp: at 10 pixels short of it the axis
    // row is less than half the peak.
    assert!(img[100 * w + 189] < 0.5 * img[100 * w + argmax(100)]);
    // Off the axis each row's densest pixel lies where the upper branch
    // crosses that row, to within a pixel.
    for y in [2usize, 5, 10, 20, 40, 80] {
        let z = 301.0 + argmax(100 - y) as f64;
        let (a, b) = (nephroid_z(y as f64 - 0.5), nephroid_z(y as f64 + 0.5));
        assert!(z >= a - 1.0 && z <= b + 1.0, "row y = {y}: peak at z = {z}, nephroid from {a:.2} to {b:.2}");
    }
    // And the ridge stands well above the plain parallel light on the same
    // row far from it.
    let background = img[100 * w + 20];
    assert!(img[100 * w + argmax(100)] > 3.0 * background);
}

#[test]
fn envelope_of_neighbouring_rays_lies_on_the_nephroid() {
    // Trace pairs of single rays at heights h ± δ through the general
    // tracer, intersect their reflected lines: the envelope point.
    for h in [100.0, 300.0, 500.0] {
        let d = 1e-3 * h;
        let text = layout(
            &[mirror("m", R, R, 0.0, 1600.0, None), screen("s", 0.0, 200.0, 3000.0, "square", false)],
            &[beam("a", h - d, 300.0, 1e-6, 1, "hex", 0.0), beam("b", h + d, 300.0, 1e-6, 1, "hex", 0.0)],
        );
        let (_, res) = run(&text);
        let s = &res.screens[0];
        assert_eq!(s.len(), 2);
        // Lines (v + t·dv, w + t·dw) in the screen frame (w = z − 200).
        let (p0, d0) = ([s.v[0], 0.0], [s.dv[0], s.dw[0]]);
        let (p1, d1) = ([s.v[1], 0.0], [s.dv[1], s.dw[1]]);
        let den = d0[0] * d1[1] - d0[1] * d1[0];
        let t = ((p1[0] - p0[0]) * d1[1] - (p1[1] - p0[1]) * d1[0]) / den;
        let (y, z) = (p0[0] + t * d0[0], 200.0 + p0[1] + t * d0[1]);
        let th = (h / R).asin();
        let (ez, ey) = (R / 4.0 * (3.0 * th.cos() - (3.0 * th).cos()), R * th.sin().powi(3));
        assert!((z - ez).abs() < 1e-5 * R && (y - ey).abs() < 1e-5 * R, "h {h}: ({z}, {y}) vs ({ez}, {ey})");
        if h == 100.0 {
            assert!(rel(z, 507.44) < 1e-5 && rel(y, 1.000) < 1e-3);
        }
    }
}

#[test]
fn raster_conserves_path_length() {
    // Known answer by construction (common practice): a segment wholly
    // inside the view deposits its length; the density is length / pixel
    // area, so the sum times the pixel area is the length, at any slope.
    let fan = Fan { segments: vec![1.3, 2.1, 7.7, 9.4, 5.0, 0.5, 5.0, 9.5, 3.0, 3.0, 3.0, 3.0], source: vec![0; 3], ray: vec![0; 3], escaping: vec![0; 3] };
    let img = caustic_raster(&fan, [0.0, 0.0, 10.0, 10.0], 20, 40);
    let area = 0.5 * 0.25;
    let sum: f64 = img.iter().map(|&v| v as f64).sum::<f64>() * area;
    let expect = (6.4f64).hypot(7.3) + 9.0;
    assert!(rel(sum, expect) < 1e-6, "{sum} vs {expect}");
    // Bad views and sizes give nothing instead of a panic: an empty or
    // inverted view on either axis, a zero side, a side over the limit.
    for view in [[0.0, 0.0, 0.0, 10.0], [0.0, 0.0, 10.0, 0.0], [0.0, 5.0, 10.0, 1.0], [0.0, 0.0, 10.0, f64::NAN]] {
        assert!(caustic_raster(&fan, view, 20, 40).is_empty(), "{view:?}");
    }
    let side = catoptric::analysis::MAX_RASTER_SIDE;
    for (w, h) in [(0, 40), (20, 0), (side + 1, 4), (4, side + 1)] {
        assert!(caustic_raster(&fan, [0.0, 0.0, 10.0, 10.0], w, h).is_empty(), "{w} × {h}");
    }
    assert_eq!(caustic_raster(&fan, [0.0, 0.0, 10.0, 10.0], side, 1).len(), side);
    assert_eq!(caustic_raster(&fan, [0.0, 0.0, 10.0, 10.0], 1, side).len(), side);
    // Segments with a coordinate that is not a number, or infinite, are
    // left out; the rest draw as before.
    let mut bad = fan.clone();
    bad.segments.extend_from_slice(&[f32::NAN, 1.0, 2.0, 3.0, 1.0, 1.0, f32::INFINITY, 5.0]);
    bad.source.extend([0, 0]);
    bad.ray.extend([0, 0]);
    bad.escaping.extend([0, 0]);
    assert_eq!(caustic_raster(&bad, [0.0, 0.0, 10.0, 10.0], 20, 40), caustic_raster(&fan, [0.0, 0.0, 10.0, 10.0], 20, 40));
    // Clipping: half of a segment outside the view is dropped.
    let half = Fan { segments: vec![5.0, -10.0, 5.0, 10.0], source: vec![0], ray: vec![0], escaping: vec![0] };
    let img = caustic_raster(&half, [0.0, 0.0, 10.0, 10.0], 10, 10);
    let s: f64 = img.iter().map(|&v| v as f64).sum();
    assert!(rel(s, 10.0) < 1e-6);
}

/// Length of the segment (ya, za)–(yb, zb) inside the box [y0, y1] × [z0,
/// z1], by Liang–Barsky clipping (Liang & Barsky, "A new concept and
/// method for line clipping", ACM Transactions on Graphics 3(1), 1984).
fn clipped_length(s: [f64; 4], y0: f64, y1: f64, z0: f64, z1: f64) -> f64 {
    let [ya, za, yb, zb] = s;
    let (dy, dz) = (yb - ya, zb - za);
    let (mut t0, mut t1) = (0.0f64, 1.0f64);
    for (p, q) in [(-dy, ya - y0), (dy, y1 - ya), (-dz, za - z0), (dz, z1 - za)] {
        if p == 0.0 {
            if q < 0.0 {
                return 0.0;
            }
        } else if p < 0.0 {
            t0 = t0.max(q / p);
        } else {
            t1 = t1.min(q / p);
        }
    }
    if t1 > t0 { (t1 - t0) * dy.hypot(dz) } else { 0.0 }
}

#[test]
fn every_pixel_holds_the_path_length_inside_it() {
    // Definition of the raster (path length in each pixel over its area)
    // against clipping each segment to each pixel's square separately:
    // segments of every slope (steep, shallow, axis-parallel, diagonal)
    // starting and ending inside and outside the view.
    let mut seed = 0x9e37_79b9_u64;
    let mut next = || {
        seed = seed.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        (seed >> 11) as f64 / (1u64 << 53) as f64
    };
    let mut segs: Vec<f32> = vec![1.0, 1.0, 1.0, 9.0, 2.5, 0.5, 7.5, 0.5, 0.0, 0.0, 10.0, 10.0, 10.0, 0.0, 0.0, 10.0];
    // Nearly level and nearly plumb ones, rising and falling, crossing a
    // few rows (or columns) over a long stretch, from outside the view.
    segs.extend_from_slice(&[3.3, -1.0, 4.1, 11.0, 8.9, 10.5, 7.6, 0.2, -0.5, 2.2, 10.5, 2.9, 11.0, 6.05, -1.0, 5.4]);
    // Level and plumb ones wholly outside the view (above, below, left,
    // right): nothing inside.
    segs.extend_from_slice(&[11.0, 1.0, 11.0, 9.0, -1.0, 2.0, -1.0, 8.0, 2.0, -1.0, 8.0, -1.0, 2.0, 10.5, 8.0, 10.5]);
    // Short nearly plumb and nearly level ones inside a single pixel.
    segs.extend_from_slice(&[3.1, 5.0, 3.3, 5.01, 4.0, 6.1, 4.01, 6.3]);
    for _ in 0..200 {
        for _ in 0..4 {
            segs.push((14.0 * next() - 2.0) as f32);
        }
    }
    let m = segs.len() / 4;
    let fan = Fan { segments: segs.clone(), source: vec![0; m], ray: vec![0; m], escaping: vec![0; m] };
    let (w, h) = (23, 17);
    let view = [0.0, 0.0, 10.0, 10.0];
    let img = caustic_raster(&fan, view, w, h);
    let (pz, py) = (10.0 / w as f64, 10.0 / h as f64);
    let mut worst = 0.0f64;
    for row in 0..h {
        for col in 0..w {
            let (y1, z0) = (10.0 - row as f64 * py, col as f64 * pz);
            let want: f64 = segs
                .chunks_exact(4)
                .map(|s| clipped_length([s[0] as f64, s[1] as f64, s[2] as f64, s[3] as f64], y1 - py, y1, z0, z0 + pz))
                .sum::<f64>()
                / (pz * py);
            let got = img[row * w + col] as f64;
            worst = worst.max((got - want).abs() / (1.0 + want));
        }
    }
    // f32 pixels summed from many segments: a few ulp of f32.
    assert!(worst < 1e-5, "largest pixel error {worst}");
}
