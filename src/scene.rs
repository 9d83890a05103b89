//! Scene: a validated layout compiled into local-frame parts ready to trace.

use crate::geometry::{Aperture, Frame, MirrorSurface, NaturalSpline, Profile, Vec3, SELF_HIT_REL};
use crate::layout::{Element, Form, Layout, ScreenShape, Source};
use crate::trace::{seed_of, SlopeError};

/// What an element does to a ray.
// A scene holds a few elements, compiled once; the tracer reads the
// mirror's fields in place, so they stay unboxed.
#[allow(clippy::large_enum_variant)]
#[derive(Debug, Clone)]
pub enum Part {
    /// `no_return`: a pure conic that is flat or convex (c ≤ 0) lies wholly
    /// behind its tangent planes, so a ray leaving its face cannot meet it
    /// again before another reflection.
    /// `slope`: the surface's Gaussian slope error, when it has one.
    Mirror { surface: MirrorSurface, reflectivity: f64, no_return: bool, slope: Option<SlopeError> },
    /// Plane detector at local z = 0 looking along local +z; `half` is half
    /// the side (square) or the radius (circle).
    Screen { half: f64, circle: bool, opaque: bool, index: usize },
}

/// One compiled element with its frame and a world bounding sphere.
#[derive(Debug, Clone)]
pub struct SceneElement {
    pub id: String,
    pub frame: Frame,
    pub part: Part,
    pub bound_center: Vec3,
    pub bound_radius: f64,
}

/// Everything the tracer needs, compiled once per layout.
#[derive(Debug, Clone)]
pub struct Scene {
    pub elements: Vec<SceneElement>,
    pub sources: Vec<Source>,
    /// Ids of the screens, in element order; hit records use this order.
    pub screen_ids: Vec<String>,
    pub wavelength_mm: f64,
    pub max_bounces: u32,
    /// Size of the whole scene (mm): sets relative tolerances and how far
    /// escaping fan rays are drawn.
    pub scale: f64,
    /// Hits nearer than this (mm) to a ray's origin are ignored.
    pub t_eps: f64,
}

impl Scene {
    /// Compiles a layout. The layout must have passed
    /// [`crate::layout::validate`]; values are not re-checked here.
    pub fn compile(layout: &Layout) -> Scene {
        let mut elements = Vec::with_capacity(layout.elements.len());
        let mut screen_ids = Vec::new();
        let mut lo = Vec3::repeat(f64::INFINITY);
        let mut hi = Vec3::repeat(f64::NEG_INFINITY);
        let mut grow = |c: &Vec3, r: f64| {
            lo = lo.inf(&(c - Vec3::repeat(r)));
            hi = hi.sup(&(c + Vec3::repeat(r)));
        };
        for e in &layout.elements {
            match e {
                Element::Mirror(m) => {
                    let frame = Frame::in_plane(m.vertex, m.axis_deg);
                    let mut profile = Profile::conic(m.profile.radius, m.profile.conic);
                    profile.aspheric = m.profile.aspheric.clone();
                    // A revolved departure is a function of the radius: built
                    // even (knots mirrored about the axis) so the surface is
                    // smooth at the vertex.
                    let spline = match m.form {
                        Form::Revolved => NaturalSpline::even,
                        Form::Extruded => NaturalSpline::new,
                    };
                    profile.departure = m.profile.departure.as_deref().and_then(spline);
                    let a = &m.aperture;
                    let (aperture, extruded, half_xy) = match m.form {
                        Form::Revolved => (
                            Aperture::Disk { offset: a.offset, r: 0.5 * a.diameter, hole: 0.5 * a.hole },
                            false,
                            0.5 * a.diameter,
                        ),
                        Form::Extruded => {
                            let hl = 0.5 * m.length.unwrap_or(a.diameter);
                            let hw = 0.5 * a.diameter;
                            (
                                Aperture::Strip { offset: a.offset, half_width: hw, half_hole: 0.5 * a.hole, half_length: hl },
                                true,
                                (hw * hw + hl * hl).sqrt(),
                            )
                        }
                    };
                    let surface = MirrorSurface::new(profile, aperture, extruded);
                    let (z0, z1) = surface.z_range();
                    let local_c = Vec3::new(0.0, a.offset, 0.5 * (z0 + z1));
                    let bound_center = frame.to_world_point(&local_c);
                    let bound_radius = (half_xy * half_xy + 0.25 * (z1 - z0) * (z1 - z0)).sqrt() * (1.0 + 1e-9) + 1e-9;
                    grow(&bound_center, bound_radius);
                    elements.push(SceneElement {
                        id: m.id.clone(),
                        frame,
                        part: Part::Mirror {
                            no_return: surface.profile.is_conic() && surface.profile.c <= 0.0,
                            surface,
                            reflectivity: m.reflectivity,
                            slope: (m.slope_error_mrad > 0.0)
                                .then(|| SlopeError { sigma: m.slope_error_mrad * 1e-3, seed: seed_of(&m.id) }),
                        },
                        bound_center,
                        bound_radius,
                    });
                }
                Element::Screen(s) => {
                    let frame = Frame::in_plane(s.center, s.axis_deg);
                    let half = 0.5 * s.size;
                    let circle = s.shape == ScreenShape::Circle;
                    let r = if circle { half } else { half * std::f64::consts::SQRT_2 };
                    grow(&frame.origin, r);
                    elements.push(SceneElement {
                        id: s.id.clone(),
                        frame,
                        part: Part::Screen { half, circle, opaque: s.opaque, index: screen_ids.len() },
                        bound_center: frame.origin,
                        bound_radius: r,
                    });
                    screen_ids.push(s.id.clone());
                }
            }
        }
        for s in &layout.sources {
            let (c, r) = match s {
                Source::Beam(b) => (b.center, 0.5 * b.diameter),
                Source::Point(p) => (p.center, 0.0),
            };
            grow(&Vec3::new(0.0, c[0], c[1]), r);
        }
        let scale = if lo.x.is_finite() { (hi - lo).norm().max(1.0) } else { 1.0 };
        Scene {
            elements,
            sources: layout.sources.clone(),
            screen_ids,
            wavelength_mm: layout.wavelength_nm * 1e-6,
            max_bounces: layout.max_bounces,
            scale,
            t_eps: SELF_HIT_REL * scale,
        }
    }

    /// Index (in `elements`) of the screen with this id.
    pub fn screen_element(&self, id: &str) -> Option<&SceneElement> {
        self.elements.iter().find(|e| e.id == id && matches!(e.part, Part::Screen { .. }))
    }
}
