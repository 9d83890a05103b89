//! The standard benchmark scenes, built in code so the native `catoptric
//! bench` and the wasm build (`bench_scene` in `src/web/bench.rs`) trace
//! exactly the same layouts.
//!
//! 1. An f/4 paraboloid, 200 mm, on axis, screen at the focus.
//! 2. A classical two-mirror (Cassegrain-like) system: paraboloid primary
//!    with a central hole, convex hyperboloid secondary, focus behind the
//!    primary; placed with the paraxial two-mirror formulas.
//! 3. A solar dish, 1000 mm across, f = 500 mm, lit by the sun's disk, with
//!    a small screen at the focus.

use crate::layout::{
    ApertureSpec, Beam, Element, Form, Layout, Mirror, Pattern, ProfileSpec, Screen, ScreenShape, Source,
    FORMAT_TAG, FORMAT_VERSION,
};

/// Rays per scene when the caller does not choose.
pub const DEFAULT_RAYS: u64 = 1_000_000;

/// One benchmark scene.
#[derive(Debug, Clone)]
pub struct BenchScene {
    /// Short machine name (`paraboloid-f4`, `two-mirror`, `solar-dish`).
    pub key: &'static str,
    pub layout: Layout,
}

/// The standard scenes, in their fixed order (the wasm export indexes it).
pub fn scenes() -> Vec<BenchScene> {
    vec![
        BenchScene { key: "paraboloid-f4", layout: paraboloid_f4() },
        BenchScene { key: "two-mirror", layout: two_mirror() },
        BenchScene { key: "solar-dish", layout: solar_dish() },
    ]
}

fn mirror(id: &str, vertex_z: f64, axis_deg: f64, radius: f64, conic: f64, diameter: f64, hole: f64) -> Element {
    Element::Mirror(Mirror {
        id: id.into(),
        vertex: [0.0, vertex_z],
        axis_deg,
        form: Form::Revolved,
        length: None,
        profile: ProfileSpec { radius: Some(radius), conic, aspheric: vec![], departure: None },
        aperture: ApertureSpec { diameter, offset: 0.0, hole },
        reflectivity: 1.0,
        slope_error_mrad: 0.0,
    })
}

fn screen(z: f64, axis_deg: f64, size: f64, shape: ScreenShape) -> Element {
    Element::Screen(Screen { id: "focus".into(), center: [0.0, z], axis_deg, size, shape, opaque: false })
}

fn beam(id: &str, z: f64, direction_deg: f64, diameter: f64, pattern: Pattern, sun_mrad: f64) -> Source {
    Source::Beam(Beam {
        id: id.into(),
        center: [0.0, z],
        direction_deg,
        out_of_plane_deg: 0.0,
        diameter,
        rays: DEFAULT_RAYS,
        pattern,
        sun_half_angle_mrad: sun_mrad,
        irradiance_w_m2: 1000.0,
        sunshape: Default::default(),
        csr: 0.0,
    })
}

fn layout(name: &str, notes: &str, elements: Vec<Element>, sources: Vec<Source>) -> Layout {
    Layout {
        format: FORMAT_TAG.into(),
        version: FORMAT_VERSION,
        name: name.into(),
        notes: notes.into(),
        wavelength_nm: 550.0,
        max_bounces: 16,
        elements,
        sources,
        site: None,
    }
}

/// f/4 paraboloid, D = 200 mm (f = 800 mm, R = 1600 mm), a star on axis.
/// The mirror faces −z from z = 800; the focus is at z = 0.
pub fn paraboloid_f4() -> Layout {
    let (d, f) = (200.0, 800.0);
    layout(
        "Benchmark: 200 mm f/4 paraboloid on axis",
        "Standard benchmark scene 1.",
        vec![mirror("primary", f, 180.0, 2.0 * f, -1.0, d, 0.0), screen(0.0, 0.0, 10.0, ScreenShape::Square)],
        vec![beam("star", 300.0, 0.0, d, Pattern::Hex, 0.0)],
    )
}

/// Paraxial design of a two-mirror system with a concave primary of focal
/// length `f1`, secondary magnification `m` (system focal length m·f1)
/// and back focus `b` measured behind the primary vertex.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TwoMirror {
    /// Primary–secondary separation, mm.
    pub separation: f64,
    /// Secondary vertex radius, mm (negative: convex, as in layouts).
    pub r2: f64,
    /// Secondary conic that cancels the paraboloid's spherical aberration.
    pub k2: f64,
    /// Distance from the secondary to the primary focus it intercepts, mm.
    pub p: f64,
    /// Distance from the secondary to the final focus, mm.
    pub q: f64,
}

impl TwoMirror {
    /// The primary focus lies p = f1 − d beyond the secondary; the
    /// secondary images it at q = m·p = d + b, so d = (m·f1 − b)/(m + 1).
    /// The mirror equation 1/q − 1/p = −2/|R2| (virtual object) gives
    /// |R2| = 2pq/(q − p); the classical pairing with a paraboloid needs
    /// K2 = −((m + 1)/(m − 1))².
    pub fn design(f1: f64, m: f64, b: f64) -> TwoMirror {
        let separation = (m * f1 - b) / (m + 1.0);
        let p = f1 - separation;
        let q = m * p;
        let r2 = -2.0 * p * q / (q - p);
        let k2 = -((m + 1.0) / (m - 1.0)).powi(2);
        TwoMirror { separation, r2, k2, p, q }
    }
}

/// Two-mirror system: paraboloid primary R = 1600 mm, D = 200 mm with a
/// 50 mm hole; secondary magnification 4 (f/16), focus 200 mm behind the
/// primary. The primary vertex is at z = 0 facing +z; light comes from +z.
pub fn two_mirror() -> Layout {
    let (r1, d1, hole, m, b) = (1600.0, 200.0, 50.0, 4.0, 200.0);
    let t = TwoMirror::design(r1 / 2.0, m, b);
    // The on-axis cone at the secondary is d1·p/f1 wide; keep 2 mm spare.
    let d2 = d1 * t.p / (r1 / 2.0) + 2.0;
    layout(
        "Benchmark: two-mirror system with a central hole",
        "Standard benchmark scene 2: paraboloid primary, convex hyperboloid secondary, focus behind the primary.",
        vec![
            mirror("primary", 0.0, 0.0, r1, -1.0, d1, hole),
            mirror("secondary", t.separation, 180.0, t.r2, t.k2, d2, 0.0),
            screen(-b, 0.0, 10.0, ScreenShape::Square),
        ],
        vec![beam("star", t.separation + 100.0, 180.0, d1, Pattern::Hex, 0.0)],
    )
}

/// Solar dish: paraboloid D = 1000 mm, f = 500 mm, the sun on axis (mean
/// half-angle 4.65 mrad, 1000 W/m²), a 40 mm round screen at the focus.
/// The dish vertex is at z = 0 facing +z; the sunlight starts above the
/// (transparent from behind) screen.
pub fn solar_dish() -> Layout {
    let (d, f) = (1000.0, 500.0);
    layout(
        "Benchmark: 1 m solar dish",
        "Standard benchmark scene 3. Concentrated sunlight burns and starts fires; \
         never look at the focus and follow local codes and qualified practice.",
        vec![mirror("dish", 0.0, 0.0, 2.0 * f, -1.0, d, 0.0), screen(f, 180.0, 40.0, ScreenShape::Circle)],
        vec![beam("sun", f + 100.0, 180.0, d, Pattern::Random, 4.65)],
    )
}

/// Rays the page traces per source while an element is dragged.
pub const FRAME_RAYS: usize = 20_000;
/// Fan rays per source drawn on the layout.
pub const FRAME_FAN_RAYS: usize = 64;
/// Meridional rays per source behind the caustic layer.
pub const FRAME_CAUSTIC_RAYS: usize = 2000;
/// Caustic raster size: half of a 1400 × 900 canvas.
pub const FRAME_CAUSTIC_SIZE: (usize, usize) = (700, 450);

/// One frame of the page while dragging: compile the edited layout, trace
/// [`FRAME_RAYS`] rays per source, run every analysis, trace the fan and
/// rasterise the caustic over the scene. Returns the number of screen hits
/// (so nothing can be optimised away). Timed by `catoptric bench`, natively
/// and in wasm.
pub fn page_frame(layout: &Layout) -> usize {
    let scene = crate::Scene::compile(layout);
    let res = crate::trace(&scene, crate::TraceOptions { rays: Some(FRAME_RAYS), ..Default::default() });
    let analyses = crate::analysis::analyse_all(&scene, &res);
    let fan = crate::trace::trace_fan(&scene, FRAME_FAN_RAYS, None);
    let half = 0.5 * scene.scale;
    let view = [-half, -half, half, half];
    let (w, h) = FRAME_CAUSTIC_SIZE;
    let raster = crate::analysis::caustic(&scene, FRAME_CAUSTIC_RAYS, view, w, h);
    std::hint::black_box((&analyses, &fan, &raster));
    res.screens.iter().map(|s| s.len()).sum()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::trace::{trace, TraceOptions};
    use crate::{validate, Scene};

    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    #[test]
    fn every_scene_is_a_valid_layout() {
        // Common practice: generated layouts obey the same contract as files.
        for s in scenes() {
            validate(&s.layout).unwrap_or_else(|e| panic!("{}: {e}", s.key));
            let back = crate::parse_layout(&s.layout.to_json_pretty()).unwrap();
            assert_eq!(back, s.layout, "{}", s.key);
        }
    }

    #[test]
    fn two_mirror_paraxial_design_matches_the_textbook_forms() {
        // D. J. Schroeder, Astronomical Optics, 2nd ed. (2000), §6.2:
        // classical Cassegrain K2 = −((m+1)/(m−1))²; secondary images the
        // primary focus with magnification m = q/p.
        let t = TwoMirror::design(800.0, 4.0, 200.0);
        assert!(rel(t.k2, -(5.0f64 / 3.0).powi(2)) < 1e-12);
        assert!(rel(t.q / t.p, 4.0) < 1e-12);
        assert!(rel(t.separation + 200.0, t.q) < 1e-12, "final focus 200 mm behind the primary");
        // Mirror equation for the convex secondary: 1/q − 1/p = 2/R2.
        assert!(rel(1.0 / t.q - 1.0 / t.p, 2.0 / t.r2) < 1e-12);
    }

    #[test]
    fn two_mirror_scene_agrees_with_the_designer() {
        // The same system from `design::design_two_mirror` (Schroeder's
        // closed forms, 2nd ed., ch. 6): two independent routes, one answer.
        use crate::design::two_mirror::{design_two_mirror, TwoMirrorKind, TwoMirrorSpec};
        let t = TwoMirror::design(800.0, 4.0, 200.0);
        let d = design_two_mirror(&TwoMirrorSpec {
            kind: TwoMirrorKind::Cassegrain,
            diameter: 200.0,
            primary_focal: 800.0,
            focal: 3200.0,
            back_focus: 200.0,
            field_deg: 0.0,
        })
        .unwrap();
        assert!(rel(t.separation, d.separation_mm) < 1e-9);
        assert!(rel(t.r2, d.secondary.radius_mm) < 1e-9);
        assert!(rel(t.k2, d.secondary.conic) < 1e-9);
    }

    /// RMS radius (mm) of the hits about their centroid.
    fn rms(h: &crate::trace::ScreenHits) -> f64 {
        let n = h.len() as f64;
        let (cu, cv) = (h.u.iter().sum::<f64>() / n, h.v.iter().sum::<f64>() / n);
        (h.u.iter().zip(&h.v).map(|(u, v)| (u - cu).powi(2) + (v - cv).powi(2)).sum::<f64>() / n).sqrt()
    }

    #[test]
    fn on_axis_scenes_focus_to_a_point() {
        // A paraboloid images an axial point at infinity perfectly, and the
        // classical paraboloid–hyperboloid pair keeps that exactly
        // (Schroeder, Astronomical Optics, 2nd ed., §6.2). Compare the RMS
        // spot with the Airy radius 1.22 λ N (Born & Wolf, Principles of
        // Optics, 7th ed., §8.5.2).
        for (layout, n) in [(paraboloid_f4(), 4.0), (two_mirror(), 16.0)] {
            let scene = Scene::compile(&layout);
            let res = trace(&scene, TraceOptions { rays: Some(4000), ..Default::default() });
            let hits = &res.screens[0];
            assert!(hits.len() > 1000, "{}: {} hits", layout.name, hits.len());
            let airy_mm = 1.22 * 550e-6 * n;
            assert!(rms(hits) < 1e-3 * airy_mm, "{}: rms {} mm", layout.name, rms(hits));
        }
    }

    #[test]
    fn solar_dish_image_reaches_the_rim_ray_limit() {
        // Image radius on the focal plane of a paraboloid with rim angle
        // ψr lit by a sun of half-angle θs: ρr·sin θs / cos(ψr + θs), with
        // ρr = 2f/(1 + cos ψr) the rim-to-focus distance (Duffie & Beckman,
        // Solar Engineering of Thermal Processes, 4th ed., §10.8; formula
        // from memory).
        let (f, rim, ts) = (500.0f64, 500.0f64, 4.65e-3f64);
        let psi = (rim / (f - rim * rim / (4.0 * f))).atan();
        let rho = 2.0 * f / (1.0 + psi.cos());
        let limit = rho * ts.sin() / (psi + ts).cos();
        let scene = Scene::compile(&solar_dish());
        let res = trace(&scene, TraceOptions { rays: Some(20_000), ..Default::default() });
        let hits = &res.screens[0];
        let r_max = hits.u.iter().zip(&hits.v).map(|(u, v)| u.hypot(*v)).fold(0.0, f64::max);
        assert!(r_max <= limit * (1.0 + 1e-3), "r_max {r_max} mm, limit {limit} mm");
        assert!(r_max >= 0.9 * limit, "r_max {r_max} mm, limit {limit} mm");
        // Power conservation (common practice): all light the dish catches
        // reaches the 40 mm screen; only a sliver at the rim misses the dish.
        let power: f64 = hits.weight.iter().sum();
        assert!(power > 0.99 * res.power_by_source[0], "intercept {}", power / res.power_by_source[0]);
    }
}
