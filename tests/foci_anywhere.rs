//! Focal properties of every conic type, concave and convex,
//! revolved and extruded, full and off-axis, at odd placements in the
//! layout plane (rotated by 37°, 180°, −90°, 123.456° and moved thousands
//! of mm from the origin). Each traced or reflected ray must pass within
//! 1e-9 mm of the focus it is meant for.
//!
//! Foci of the vertex-form conic z = cρ²/(1+√(1−(1+K)c²ρ²)) (any
//! analytic-geometry text; the sag form is ISO 10110-12:2019): with e = √(−K),
//! K < 0, K ≠ −1, the foci are on the axis at z = R/(1+e) and z = R/(1−e)
//! (a prolate ellipsoid has both on the reflective side for R > 0; a
//! hyperboloid has R/(1+e) on that side and R/(1−e) behind the vertex);
//! a paraboloid's focus is at R/2; an oblate ellipsoid (K > 0) has its
//! meridian's foci off the axis at (y, z) = (±R√K/(1+K), R/(1+K)).
//! Reflection inside an ellipse sends a ray from one focus through the
//! other; from a hyperbola's concave side, a ray from the near focus
//! leaves as if from the far one. From the outside (convex face) a ray
//! aimed at one focus leaves as if from the other (the reflection is
//! linear in the direction, so reversing the ray reverses the property).

mod layout_support;
use catoptric::geometry::Vec3;
use layout_support::*;

const TOL: f64 = 1e-9;

/// Axial foci (near, far) for K < 0, K ≠ −1.
fn axial_foci(r: f64, k: f64) -> (f64, f64) {
    let e = (-k).sqrt();
    (r / (1.0 + e), r / (1.0 - e))
}

/// Oblate meridian foci: (|y|, z).
fn oblate_foci(r: f64, k: f64) -> (f64, f64) {
    (r * k.sqrt() / (1.0 + k), r / (1.0 + k))
}

/// How the recorded rays must relate to the target point.
#[derive(Clone, Copy, PartialEq)]
enum Kind {
    /// Converging on it (real focus ahead of the screen or behind it).
    Through,
    /// Diverging from it (virtual focus behind the mirror).
    From,
}

/// Traces `text` and checks every hit line of screen 0 against `target`.
/// Returns the number of hits checked.
fn check(text: &str, target: Vec3, kind: Kind, two_d: bool, what: &str) -> usize {
    let (scene, res) = run(text);
    let lines = hit_lines(&scene, &res, 0);
    let mut worst = 0.0f64;
    for (p, d) in &lines {
        let m = if two_d { miss_2d(p, d, &target) } else { miss(p, d, &target) };
        worst = worst.max(m);
        if kind == Kind::From {
            let away = if two_d { Vec3::new(0.0, p.y - target.y, p.z - target.z) } else { p - target };
            assert!(away.dot(d) > 0.0, "{what}: ray does not leave the virtual focus");
        }
    }
    assert!(worst < TOL, "{what}: worst miss {worst:e} mm over {} hits", lines.len());
    lines.len()
}

#[test]
fn prolate_ellipsoid_images_each_focus_on_the_other_at_any_placement() {
    // Foci 50 and 500 mm from the vertex: R = 2pq/(p+q), e = (q−p)/(q+p).
    let (p, q) = (50.0f64, 500.0f64);
    let r = 2.0 * p * q / (p + q);
    let k = -((q - p) / (q + p)).powi(2);
    let (near, far) = axial_foci(r, k);
    assert!(rel(near, p) < 1e-12 && rel(far, q) < 1e-12);
    for pl in PLACES {
        let m = mirror("m", pl.vertex, pl.axis_deg, Some(r), k, 180.0, 0.0, 12.0, None);
        // Lamp at the near focus, screen at the far one.
        let text = layout(
            &[m.clone(), screen("s", pl.pt(0.0, far), pl.angle(0.0, -1.0), 20.0, "circle", true)],
            &[lamp("l", pl.pt(0.0, near), pl.angle(0.0, -1.0), 75.0, 3000, 1.0)],
        );
        let n = check(&text, pl.world(0.0, far), Kind::Through, false, "near → far");
        assert!(n > 2000, "{n} hits");
        // Lamp at the far focus, opaque screen at the near one.
        let text = layout(
            &[m, screen("s", pl.pt(0.0, near), pl.angle(0.0, -1.0), 20.0, "circle", true)],
            &[lamp("l", pl.pt(0.0, far), pl.angle(0.0, -1.0), 12.0, 3000, 1.0)],
        );
        let n = check(&text, pl.world(0.0, near), Kind::Through, false, "far → near");
        assert!(n > 1500, "{n} hits");
    }
}

#[test]
fn off_axis_ellipsoid_and_hyperboloid_segments_keep_the_parent_foci() {
    let (r, k) = (100.0, -0.5);
    let (near, far) = axial_foci(r, k);
    for pl in PLACES {
        // Ellipsoid segment centred 70 mm off the axis, 60 mm across.
        let m = mirror("m", pl.vertex, pl.axis_deg, Some(r), k, 60.0, 70.0, 0.0, None);
        let aim = pl.angle(70.0, 20.0 - near);
        let text = layout(
            &[m, screen("s", pl.pt(0.0, far), pl.angle(0.0, -1.0), 400.0, "square", true)],
            &[lamp("l", pl.pt(0.0, near), aim, 45.0, 3000, 1.0)],
        );
        let n = check(&text, pl.world(0.0, far), Kind::Through, false, "ellipsoid segment");
        assert!(n > 300, "{n} hits");
        // Concave hyperboloid segment: from the real focus, rays leave as if
        // from the virtual focus behind the vertex.
        let (rh, kh) = (100.0, -4.0);
        let (real, virt) = axial_foci(rh, kh);
        assert!(virt < 0.0);
        // Segment ρ = 40…80 mm, all below the real focus so that no direct
        // lamp ray of the 15° cone climbs to the screen.
        let m = mirror("m", pl.vertex, pl.axis_deg, Some(rh), kh, 40.0, 60.0, 0.0, None);
        let text = layout(
            &[m, screen("s", pl.pt(0.0, 400.0), pl.angle(0.0, -1.0), 3000.0, "square", true)],
            &[lamp("l", pl.pt(0.0, real), pl.angle(60.0, 14.6 - real), 15.0, 3000, 1.0)],
        );
        let n = check(&text, pl.world(0.0, virt), Kind::From, false, "hyperboloid segment");
        assert!(n > 300, "{n} hits");
    }
}

#[test]
fn concave_hyperboloid_real_and_virtual_foci() {
    let (r, k) = (100.0, -4.0);
    let (real, virt) = axial_foci(r, k);
    for pl in PLACES {
        let m = mirror("m", pl.vertex, pl.axis_deg, Some(r), k, 120.0, 0.0, 0.0, None);
        // Lamp at the real focus: reflected rays diverge from the virtual one.
        let text = layout(
            &[m.clone(), screen("s", pl.pt(0.0, 250.0), pl.angle(0.0, -1.0), 3000.0, "square", true)],
            &[lamp("l", pl.pt(0.0, real), pl.angle(0.0, -1.0), 60.0, 3000, 1.0)],
        );
        let n = check(&text, pl.world(0.0, virt), Kind::From, false, "hyperboloid, lamp at real focus");
        assert!(n > 2000, "{n} hits");
        // Rays converging on the virtual focus reflect through the real one.
        let scene = scene(&layout(&[m], &[]));
        let (f_real, f_virt) = (pl.world(0.0, real), pl.world(0.0, virt));
        let mut checked = 0;
        for i in 0..60 {
            let y = -55.0 + 110.0 * i as f64 / 59.0;
            for x in [0.0, 17.0, -31.0] {
                let start = pl.frame().to_world_point(&Vec3::new(x, y * 1.7, 600.0));
                let d = (f_virt - start).normalize();
                let Some((hit, out)) = bounce(&scene, 0, &start, &d) else { continue };
                checked += 1;
                assert!(miss(&hit, &out, &f_real) < TOL, "{:e}", miss(&hit, &out, &f_real));
                assert!((f_real - hit).dot(&out) > 0.0, "heads for the real focus");
            }
        }
        assert!(checked > 100, "{checked}");
    }
}

#[test]
fn oblate_ellipsoid_meridian_foci() {
    // K = 0.5: the meridian ellipse's major axis is across the mirror axis.
    let (r, k) = (100.0, 0.5);
    let (fy, fz) = oblate_foci(r, k);
    for pl in PLACES {
        // Extruded: every ray's projection on the layout plane, 2D property.
        let m = mirror("m", pl.vertex, pl.axis_deg, Some(r), k, 120.0, 0.0, 0.0, Some(200.0));
        let text = layout(
            &[m, screen("s", pl.pt(-fy, fz), pl.angle(fy, -fz), 40.0, "square", true)],
            &[lamp("l", pl.pt(fy, fz), pl.angle(-fy, -fz), 40.0, 3000, 1.0)],
        );
        let n = check(&text, pl.world(-fy, fz), Kind::Through, true, "extruded oblate");
        assert!(n > 300, "{n} hits");
        // Revolved: meridional rays, reflected off the compiled scene.
        let scene = scene(&layout(&[mirror("m", pl.vertex, pl.axis_deg, Some(r), k, 120.0, 0.0, 0.0, None)], &[]));
        let (f1, f2) = (pl.world(fy, fz), pl.world(-fy, fz));
        for i in 0..=40 {
            let y = -58.0 + 116.0 * i as f64 / 40.0;
            let target = pl.world(y, 0.0);
            let d = (target - f1).normalize();
            let (hit, out) = bounce(&scene, 0, &f1, &d).expect("hits");
            assert!(miss(&hit, &out, &f2) < TOL, "y = {y}: {:e}", miss(&hit, &out, &f2));
            assert!((f2 - hit).dot(&out) > 0.0);
        }
    }
}

#[test]
fn convex_mirrors_of_every_conic_type() {
    for pl in PLACES {
        // Sphere, R < 0: rays aimed at the centre come straight back.
        let rs = -500.0;
        let sc = scene(&layout(&[mirror("m", pl.vertex, pl.axis_deg, Some(rs), 0.0, 200.0, 0.0, 0.0, None)], &[]));
        let centre = pl.world(0.0, rs);
        for i in 0..=20 {
            let start = pl.world(-120.0 + 12.0 * i as f64, 300.0);
            let d = (centre - start).normalize();
            if let Some((hit, out)) = bounce(&sc, 0, &start, &d) {
                assert!((out + d).norm() < 1e-12, "retro-reflected");
                assert!(miss(&hit, &out, &centre) < TOL);
            }
        }
        // Paraboloid, R < 0: an axial beam leaves as if from the focus R/2
        // behind the vertex (traced).
        let rp = -1000.0;
        let text = layout(
            &[
                mirror("m", pl.vertex, pl.axis_deg, Some(rp), -1.0, 200.0, 0.0, 0.0, None),
                screen("s", pl.pt(0.0, 150.0), pl.angle(0.0, -1.0), 1000.0, "square", true),
            ],
            &[beam("b", pl.pt(0.0, 100.0), pl.angle(0.0, -1.0), 200.0, 3000, "hex")],
        );
        let n = check(&text, pl.world(0.0, rp / 2.0), Kind::From, false, "convex paraboloid");
        assert!(n > 2500, "{n}");
        // Prolate ellipsoid and hyperboloid, R < 0, and oblate (revolved,
        // meridional rays, and extruded): rays aimed at one focus leave as
        // if from the other.
        let cases: [(f64, f64, Option<f64>); 5] = [
            (-90.909090909, -0.669421487603, None),
            (-100.0, -4.0, None),
            (-100.0, 0.5, None),
            (-100.0, 0.5, Some(300.0)),
            (-90.909090909, -0.669421487603, Some(300.0)),
        ];
        for (r, k, len) in cases {
            let sc = scene(&layout(&[mirror("m", pl.vertex, pl.axis_deg, Some(r), k, 120.0, 0.0, 0.0, len)], &[]));
            let (aim, other) = if k > 0.0 {
                let (fy, fz) = oblate_foci(r, k);
                ((fy, fz), (-fy, fz))
            } else {
                let (a, b) = axial_foci(r, k);
                ((0.0, a), (0.0, b))
            };
            let (fa, fb) = (pl.world(aim.0, aim.1), pl.world(other.0, other.1));
            let mut n = 0;
            for i in 0..=30 {
                let y = -55.0 + 110.0 * i as f64 / 30.0;
                let start = pl.world(y * 2.0, 400.0);
                let d = (fa - start).normalize();
                let Some((hit, out)) = bounce(&sc, 0, &start, &d) else { continue };
                n += 1;
                let m = miss(&hit, &out, &fb);
                assert!(m < TOL, "R {r} K {k}: miss {m:e}");
                // Real focus ahead (hyperboloid's far focus lies in front) or
                // virtual focus behind.
                let ahead = (fb - hit).dot(&out) > 0.0;
                let in_front = pl.frame().to_local_point(&fb).z > 0.0;
                assert_eq!(ahead, in_front, "R {r} K {k}");
            }
            assert!(n > 20, "R {r} K {k}: {n} rays hit");
        }
        // Convex hyperboloid traced from its real focus: rays leave as if
        // from the virtual one behind the vertex.
        let (near, far) = axial_foci(-100.0, -4.0);
        assert!(near < 0.0 && far > 0.0);
        let text = layout(
            &[
                mirror("m", pl.vertex, pl.axis_deg, Some(-100.0), -4.0, 120.0, 0.0, 0.0, None),
                screen("s", pl.pt(0.0, 300.0), pl.angle(0.0, -1.0), 3000.0, "square", true),
            ],
            &[lamp("l", pl.pt(0.0, far), pl.angle(0.0, -1.0), 30.0, 3000, 1.0)],
        );
        let n = check(&text, pl.world(0.0, near), Kind::From, false, "convex hyperboloid");
        assert!(n > 2000, "{n}");
    }
}

#[test]
fn extruded_conics_have_line_foci() {
    for pl in PLACES {
        // Parabolic trough, beam along the axis: line focus at R/2.
        let text = layout(
            &[
                mirror("m", pl.vertex, pl.axis_deg, Some(800.0), -1.0, 300.0, 0.0, 0.0, Some(500.0)),
                screen("s", pl.pt(0.0, 400.0), pl.angle(0.0, -1.0), 600.0, "square", false),
            ],
            &[beam("b", pl.pt(0.0, 600.0), pl.angle(0.0, -1.0), 290.0, 3000, "random")],
        );
        let n = check(&text, pl.world(0.0, 400.0), Kind::Through, true, "parabolic trough");
        assert!(n > 2500, "{n}");
        // Elliptic cylinder: lamp on one focal line, light through the other.
        let (r, k) = (90.909090909, -0.669421487603);
        let (near, far) = axial_foci(r, k);
        let text = layout(
            &[
                mirror("m", pl.vertex, pl.axis_deg, Some(r), k, 180.0, 0.0, 0.0, Some(400.0)),
                screen("s", pl.pt(0.0, far), pl.angle(0.0, -1.0), 1000.0, "square", true),
            ],
            &[lamp("l", pl.pt(0.0, near), pl.angle(0.0, -1.0), 70.0, 3000, 1.0)],
        );
        let n = check(&text, pl.world(0.0, far), Kind::Through, true, "elliptic cylinder");
        assert!(n > 1000, "{n}");
        // Hyperbolic cylinder, concave: from the real focal line, light
        // leaves as if from the virtual one.
        let (real, virt) = axial_foci(100.0, -4.0);
        let text = layout(
            &[
                mirror("m", pl.vertex, pl.axis_deg, Some(100.0), -4.0, 120.0, 0.0, 0.0, Some(400.0)),
                screen("s", pl.pt(0.0, 250.0), pl.angle(0.0, -1.0), 5000.0, "square", true),
            ],
            &[lamp("l", pl.pt(0.0, real), pl.angle(0.0, -1.0), 60.0, 3000, 1.0)],
        );
        let n = check(&text, pl.world(0.0, virt), Kind::From, true, "hyperbolic cylinder");
        assert!(n > 1000, "{n}");
        // Circular cylinder: lamp on the axis line of curvature comes back
        // to it (a sphere's centre images onto itself).
        let text = layout(
            &[
                mirror("m", pl.vertex, pl.axis_deg, Some(500.0), 0.0, 300.0, 0.0, 0.0, Some(400.0)),
                screen("s", pl.pt(0.0, 450.0), pl.angle(0.0, -1.0), 1000.0, "square", false),
            ],
            &[lamp("l", pl.pt(0.0, 500.0), pl.angle(0.0, -1.0), 15.0, 3000, 1.0)],
        );
        let n = check(&text, pl.world(0.0, 500.0), Kind::Through, true, "circular cylinder");
        assert!(n > 1000, "{n}");
    }
}

/// Elementary geometry of the circle: the exact axis crossing of a
/// parallel ray on a sphere, R − R/(2 cos θ), sin θ = h/R, also holds when
/// the mirror is turned and moved far from the origin.
#[test]
fn sphere_exact_axis_crossing_at_any_placement() {
    let r = 1000.0;
    for pl in PLACES {
        let sc = scene(&layout(&[mirror("m", pl.vertex, pl.axis_deg, Some(r), 0.0, 400.0, 0.0, 0.0, None)], &[]));
        for h in [10.0, 50.0, 100.0, 150.0, 199.0] {
            let start = pl.world(h, 300.0);
            let d = pl.frame().to_world_dir(&Vec3::new(0.0, 0.0, -1.0));
            let (hit, out) = bounce(&sc, 0, &start, &d).expect("hits");
            // Local crossing of the axis (local y = 0).
            let lp = pl.frame().to_local_point(&hit);
            let ld = pl.frame().to_local_dir(&out);
            let z = lp.z - lp.y / ld.y * ld.z;
            let cos_t = (1.0 - (h / r).powi(2)).sqrt();
            let want = r - r / (2.0 * cos_t);
            assert!((z - want).abs() < 1e-9, "h = {h}: {z} vs {want}");
        }
    }
}
