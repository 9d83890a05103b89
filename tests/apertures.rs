//! Clear apertures (src/geometry/aperture.rs): the stretch of a ray inside
//! an aperture's prism, which bounds where the general (aspheric, spline)
//! solver looks for a hit, and the ρ range the profile is evaluated over.
//! Expectations from the definitions themselves — a point of the line is
//! inside a disk's prism when its (x, y) lies within r of the disk's
//! centre, inside a strip's when |y − offset| ≤ half width and |x| ≤ half
//! length — checked point by point (analytic geometry, common practice),
//! not from the quadratic the code solves.

mod common;
use catoptric::geometry::{Aperture, Vec3};
use common::Rng;

/// Is the line's point at t inside the prism (rim only: the prism ignores
/// the hole)?
fn in_prism(a: &Aperture, o: &Vec3, d: &Vec3, t: f64) -> bool {
    let p = o + d * t;
    match *a {
        Aperture::Disk { offset, r, .. } => p.x * p.x + (p.y - offset) * (p.y - offset) <= r * r,
        Aperture::Strip { offset, half_width, half_length, .. } => {
            (p.y - offset).abs() <= half_width && p.x.abs() <= half_length
        }
    }
}

/// Distance of the line's point at t from the prism's wall, signed
/// (negative inside), for the disk.
fn disk_wall(offset: f64, r: f64, o: &Vec3, d: &Vec3, t: f64) -> f64 {
    let p = o + d * t;
    (p.x * p.x + (p.y - offset) * (p.y - offset)).sqrt() - r
}

fn random_line(rng: &mut Rng) -> (Vec3, Vec3) {
    let o = Vec3::new(rng.range(-150.0, 150.0), rng.range(-150.0, 150.0), rng.range(-50.0, 50.0));
    let d = Vec3::new(rng.range(-1.0, 1.0), rng.range(-1.0, 1.0), rng.range(-1.0, 1.0)).normalize();
    (o, d)
}

#[test]
fn a_disk_prism_interval_runs_from_wall_to_wall() {
    let mut rng = Rng(0xa9e7_0001);
    let (mut crossing, mut missing) = (0, 0);
    for _ in 0..4000 {
        let a = Aperture::Disk { offset: rng.range(-60.0, 60.0), r: rng.range(5.0, 100.0), hole: 0.0 };
        let Aperture::Disk { offset, r, .. } = a else { unreachable!() };
        let (o, d) = random_line(&mut rng);
        match a.prism_interval(&o, &d) {
            Some((t0, t1)) => {
                crossing += 1;
                assert!(t0 <= t1, "{a:?}: interval ({t0}, {t1}) reversed");
                // Both ends on the cylinder's wall, the middle inside,
                // just beyond either end outside.
                let span = (t1 - t0).max(1.0);
                for t in [t0, t1] {
                    assert!(disk_wall(offset, r, &o, &d, t).abs() < 1e-9 * r, "{a:?}: end {t} off the wall");
                }
                assert!(in_prism(&a, &o, &d, 0.5 * (t0 + t1)), "{a:?}: middle outside");
                assert!(disk_wall(offset, r, &o, &d, t0 - 1e-3 * span) > 0.0, "{a:?}: before the interval still inside");
                assert!(disk_wall(offset, r, &o, &d, t1 + 1e-3 * span) > 0.0, "{a:?}: after the interval still inside");
            }
            None => {
                missing += 1;
                // The line's (x, y) projection passes farther than r from
                // the centre: its closest approach, found independently.
                let (px, py, qx, qy) = (o.x, o.y - offset, d.x, d.y);
                let tc = -(px * qx + py * qy) / (qx * qx + qy * qy);
                assert!(disk_wall(offset, r, &o, &d, tc) > -1e-9 * r, "{a:?}: a crossing line reported as missing");
            }
        }
    }
    assert!(crossing > 1000 && missing > 500, "cases: {crossing} crossing, {missing} missing");
}

#[test]
fn a_line_along_the_axis_is_inside_a_disk_prism_everywhere_or_nowhere() {
    let a = Aperture::Disk { offset: 20.0, r: 50.0, hole: 10.0 };
    for dz in [1.0, -1.0] {
        let d = Vec3::new(0.0, 0.0, dz);
        // Inside (even in the hole: the prism is the rim's) and on the rim.
        for y in [20.0, 25.0, 70.0, -30.0] {
            assert_eq!(a.prism_interval(&Vec3::new(0.0, y, 5.0), &d), Some((f64::NEG_INFINITY, f64::INFINITY)), "y = {y}");
        }
        for y in [70.0 + 1e-9, -30.5, 200.0] {
            assert_eq!(a.prism_interval(&Vec3::new(0.0, y, 5.0), &d), None, "y = {y}");
        }
    }
}

#[test]
fn a_strip_prism_interval_is_where_both_slabs_overlap() {
    let mut rng = Rng(0xa9e7_0002);
    let (mut crossing, mut missing) = (0, 0);
    for _ in 0..4000 {
        let a = Aperture::Strip {
            offset: rng.range(-60.0, 60.0),
            half_width: rng.range(5.0, 80.0),
            half_hole: 0.0,
            half_length: rng.range(5.0, 120.0),
        };
        let (o, d) = random_line(&mut rng);
        match a.prism_interval(&o, &d) {
            Some((t0, t1)) => {
                crossing += 1;
                assert!(t0 <= t1);
                let span = (t1 - t0).max(1e-6);
                assert!(in_prism(&a, &o, &d, 0.5 * (t0 + t1)), "{a:?}: middle outside");
                assert!(!in_prism(&a, &o, &d, t0 - 1e-3 * span), "{a:?}: before the interval still inside");
                assert!(!in_prism(&a, &o, &d, t1 + 1e-3 * span), "{a:?}: after the interval still inside");
            }
            None => {
                missing += 1;
                // No point of the line lies in both slabs: sample densely.
                for k in 0..=2000 {
                    let t = -400.0 + 0.4 * k as f64;
                    assert!(!in_prism(&a, &o, &d, t), "{a:?}: point t = {t} inside a missed prism");
                }
            }
        }
    }
    assert!(crossing > 1000 && missing > 500, "cases: {crossing} crossing, {missing} missing");
}

#[test]
fn rho_range_and_largest_rho_follow_the_aperture_outline() {
    // Disk of radius 40 about y = −25: radial distance from the mirror's
    // axis runs from 0 (the disk covers the axis) to 65.
    let disk = Aperture::Disk { offset: -25.0, r: 40.0, hole: 5.0 };
    assert_eq!(disk.rho_range(), (0.0, 65.0));
    assert_eq!(disk.rho_max(), 65.0);
    // Off-axis disk clear of the axis: 60 ± 15.
    let off = Aperture::Disk { offset: 60.0, r: 15.0, hole: 0.0 };
    assert_eq!(off.rho_range(), (45.0, 75.0));
    assert_eq!(off.rho_max(), 75.0);
    // A strip's ρ is the signed local y: offset ± half width.
    let strip = Aperture::Strip { offset: -30.0, half_width: 20.0, half_hole: 4.0, half_length: 200.0 };
    assert_eq!(strip.rho_range(), (-50.0, -10.0));
    assert_eq!(strip.rho_max(), 50.0);
}
