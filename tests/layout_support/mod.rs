//! Builders and geometric helpers shared by the layout-level tests.
#![allow(dead_code)]

use catoptric::geometry::{reflect, Frame, Vec3};
use catoptric::scene::Part;
use catoptric::{Scene, TraceResult};

#[path = "../common/mod.rs"]
mod common;
pub use common::*;
use serde_json::{json, Value};

/// A mirror element. `length` Some(l) makes it extruded.
#[allow(clippy::too_many_arguments)]
pub fn mirror(
    id: &str,
    vertex: [f64; 2],
    axis_deg: f64,
    radius: Option<f64>,
    conic: f64,
    diameter: f64,
    offset: f64,
    hole: f64,
    length: Option<f64>,
) -> Value {
    let mut m = json!({
        "kind": "mirror", "id": id, "vertex": vertex, "axis_deg": axis_deg,
        "form": if length.is_some() { "extruded" } else { "revolved" },
        "profile": { "radius": radius, "conic": conic },
        "aperture": { "diameter": diameter, "offset": offset, "hole": hole }
    });
    if let Some(l) = length {
        m["length"] = json!(l);
    }
    m
}

pub fn screen(id: &str, center: [f64; 2], axis_deg: f64, size: f64, shape: &str, opaque: bool) -> Value {
    json!({ "kind": "screen", "id": id, "center": center, "axis_deg": axis_deg, "size": size,
            "shape": shape, "opaque": opaque })
}

pub fn lamp(id: &str, center: [f64; 2], direction_deg: f64, half_deg: f64, rays: u64, power_w: f64) -> Value {
    json!({ "kind": "point", "id": id, "center": center, "direction_deg": direction_deg,
            "cone_half_angle_deg": half_deg, "rays": rays, "pattern": "random", "power_w": power_w })
}

pub fn beam(id: &str, center: [f64; 2], direction_deg: f64, diameter: f64, rays: u64, pattern: &str) -> Value {
    json!({ "kind": "beam", "id": id, "center": center, "direction_deg": direction_deg, "diameter": diameter,
            "rays": rays, "pattern": pattern, "sun_half_angle_mrad": 0.0, "irradiance_w_m2": 1000.0 })
}

pub fn layout(elements: &[Value], sources: &[Value]) -> String {
    json!({ "format": "catoptric-layout", "version": 1, "name": "test layout", "wavelength_nm": 550,
            "max_bounces": 16, "elements": elements, "sources": sources })
    .to_string()
}



/// A placement of a mirror's local frame in the layout plane.
#[derive(Debug, Clone, Copy)]
pub struct Place {
    pub vertex: [f64; 2],
    pub axis_deg: f64,
}

impl Place {
    pub fn frame(&self) -> Frame {
        Frame::in_plane(self.vertex, self.axis_deg)
    }
    /// Layout point [y, z] of the local meridian point (y, z).
    pub fn pt(&self, ly: f64, lz: f64) -> [f64; 2] {
        let p = self.frame().to_world_point(&Vec3::new(0.0, ly, lz));
        [p.y, p.z]
    }
    /// World point of the local meridian point (y, z).
    pub fn world(&self, ly: f64, lz: f64) -> Vec3 {
        self.frame().to_world_point(&Vec3::new(0.0, ly, lz))
    }
    /// Layout angle (deg) of the local meridian direction (y, z).
    pub fn angle(&self, ly: f64, lz: f64) -> f64 {
        let d = self.frame().to_world_dir(&Vec3::new(0.0, ly, lz));
        d.y.atan2(d.z).to_degrees()
    }
}

/// Placements the focal tests run at: on the origin and far from it, at
/// odd and quarter-turn angles.
pub const PLACES: [Place; 5] = [
    Place { vertex: [0.0, 0.0], axis_deg: 0.0 },
    Place { vertex: [5000.0, -3000.0], axis_deg: 37.0 },
    Place { vertex: [-250.0, 700.0], axis_deg: 180.0 },
    Place { vertex: [1200.0, 40.0], axis_deg: -90.0 },
    Place { vertex: [-4321.5, 987.25], axis_deg: 123.456 },
];

/// The recorded hits of screen `i` as world lines (point, unit direction).
pub fn hit_lines(scene: &Scene, res: &TraceResult, i: usize) -> Vec<(Vec3, Vec3)> {
    let e = scene.screen_element(&scene.screen_ids[i]).expect("screen");
    let h = &res.screens[i];
    (0..h.len())
        .map(|k| {
            let p = e.frame.to_world_point(&Vec3::new(h.u[k], h.v[k], 0.0));
            let d = e.frame.to_world_dir(&Vec3::new(h.du[k], h.dv[k], h.dw[k]));
            (p, d)
        })
        .collect()
}

/// Distance from `target` to the line through `p` along unit `d`.
pub fn miss(p: &Vec3, d: &Vec3, target: &Vec3) -> f64 {
    (target - p).cross(d).norm()
}

/// Same, for the projections on the layout plane (x dropped): the 2D
/// focal property of an extruded mirror.
pub fn miss_2d(p: &Vec3, d: &Vec3, target: &Vec3) -> f64 {
    let q = Vec3::new(0.0, p.y, p.z);
    let e = Vec3::new(0.0, d.y, d.z);
    let n = e.norm();
    assert!(n > 1e-6, "ray runs along x");
    miss(&q, &(e / n), &Vec3::new(0.0, target.y, target.z))
}

/// One reflection of a world ray off mirror element `index` of the scene
/// (through the element's frame and surface, as the tracer does):
/// (hit point, reflected direction), or None when it misses or meets the
/// back face.
pub fn bounce(scene: &Scene, index: usize, o: &Vec3, d: &Vec3) -> Option<(Vec3, Vec3)> {
    let e = &scene.elements[index];
    let Part::Mirror { surface, .. } = &e.part else { panic!("not a mirror") };
    let lo = e.frame.to_local_point(o);
    let ld = e.frame.to_local_dir(d);
    let h = surface.intersect(&lo, &ld, 0.0, f64::INFINITY)?;
    if ld.dot(&h.normal) >= 0.0 {
        return None;
    }
    let r = reflect(&ld, &h.normal);
    Some((e.frame.to_world_point(&h.point), e.frame.to_world_dir(&r).normalize()))
}

// ----- random valid layouts (property tests) -----------------------------

/// Log-uniform magnitude in [lo, hi].
pub fn mag(rng: &mut Rng, lo: f64, hi: f64) -> f64 {
    (lo.ln() + (hi.ln() - lo.ln()) * rng.next()).exp()
}

pub fn sign(rng: &mut Rng) -> f64 {
    if rng.next() < 0.5 { -1.0 } else { 1.0 }
}

pub fn random_mirror(rng: &mut Rng, i: usize, size: f64) -> Value {
    let d = mag(rng, 0.01 * size, size);
    let radius = if rng.next() < 0.15 { None } else { Some(sign(rng) * mag(rng, 0.3 * d, 100.0 * size)) };
    let conic = match rng.int(5) {
        0 => 0.0,
        1 => -1.0,
        2 => rng.range(-1.0, 0.0),
        3 => -mag(rng, 1.0, 100.0),
        _ => mag(rng, 1e-3, 10.0),
    };
    let offset = if rng.next() < 0.3 { rng.range(-d, d) } else { 0.0 };
    // Keep ρ inside the conic's domain.
    let mut diameter = d;
    if let Some(r) = radius
        && conic > -1.0 {
            let lim = r.abs() / (1.0 + conic).sqrt();
            let rho = offset.abs() + 0.5 * diameter;
            if rho >= 0.999 * lim {
                diameter = (2.0 * (0.99 * lim - offset.abs())).max(1e-3 * lim);
            }
        }
    let hole = if rng.next() < 0.3 { rng.range(0.0, 0.9) * diameter } else { 0.0 };
    let extruded = rng.next() < 0.3;
    let mut profile = json!({ "radius": radius, "conic": conic });
    if rng.next() < 0.3 {
        let n = 1 + rng.int(4) as usize;
        let scale = 1e-3 * diameter;
        let a: Vec<f64> = (0..n).map(|k| rng.range(-1.0, 1.0) * scale / (0.5 * diameter).powi(4 + 2 * k as i32)).collect();
        profile["aspheric"] = json!(a);
    }
    if rng.next() < 0.3 {
        let n = 2 + rng.int(12) as usize;
        let span = offset.abs() + diameter;
        let start = if extruded { -span } else { 0.0 };
        let step = (span - start) / (n - 1) as f64;
        let knots: Vec<[f64; 2]> = (0..n).map(|k| [start + step * k as f64, rng.range(-0.01, 0.01) * diameter]).collect();
        profile["departure"] = json!(knots);
    }
    let mut m = json!({
        "kind": "mirror", "id": format!("m{i}"),
        "vertex": [rng.range(-size, size), rng.range(-size, size)],
        "axis_deg": rng.range(-360.0, 360.0),
        "form": if extruded { "extruded" } else { "revolved" },
        "profile": profile,
        "aperture": { "diameter": diameter, "offset": offset, "hole": hole },
        "reflectivity": if rng.next() < 0.2 { rng.next() } else { 1.0 },
    });
    if extruded {
        m["length"] = json!(mag(rng, 0.01 * size, 2.0 * size));
    }
    m
}

pub fn random_layout(rng: &mut Rng) -> String {
    let size = mag(rng, 1.0, 1e5);
    let mut elements = Vec::new();
    for i in 0..(1 + rng.int(5) as usize) {
        elements.push(random_mirror(rng, i, size));
    }
    for i in 0..(1 + rng.int(3) as usize) {
        elements.push(json!({
            "kind": "screen", "id": format!("s{i}"),
            "center": [rng.range(-size, size), rng.range(-size, size)],
            "axis_deg": rng.range(-180.0, 540.0),
            "size": mag(rng, 1e-3 * size, 3.0 * size),
            "shape": if rng.next() < 0.5 { "circle" } else { "square" },
            "opaque": rng.next() < 0.5,
        }));
    }
    let mut sources = Vec::new();
    for i in 0..(1 + rng.int(3) as usize) {
        let pattern = ["hex", "grid", "random"][rng.int(3) as usize];
        let rays = 1 + rng.int(300);
        if rng.next() < 0.5 {
            sources.push(json!({
                "kind": "beam", "id": format!("b{i}"),
                "center": [rng.range(-size, size), rng.range(-size, size)],
                "direction_deg": rng.range(-720.0, 720.0),
                "out_of_plane_deg": if rng.next() < 0.3 { rng.range(-89.0, 89.0) } else { 0.0 },
                "diameter": mag(rng, 1e-3 * size, 2.0 * size), "rays": rays, "pattern": pattern,
                "sun_half_angle_mrad": if rng.next() < 0.4 { rng.range(0.0, 200.0) } else { 0.0 },
                "irradiance_w_m2": if rng.next() < 0.1 { 0.0 } else { mag(rng, 1.0, 1e6) },
            }));
        } else {
            sources.push(json!({
                "kind": "point", "id": format!("p{i}"),
                "center": [rng.range(-size, size), rng.range(-size, size)],
                "direction_deg": rng.range(-720.0, 720.0),
                "cone_half_angle_deg": rng.range(1e-6, 180.0), "rays": rays, "pattern": pattern,
                "power_w": if rng.next() < 0.1 { 0.0 } else { mag(rng, 1e-3, 1e6) },
            }));
        }
    }
    json!({ "format": "catoptric-layout", "version": 1, "name": "fuzz",
            "wavelength_nm": rng.range(100.0, 100000.0), "max_bounces": 1 + rng.int(40),
            "elements": elements, "sources": sources })
    .to_string()
}

