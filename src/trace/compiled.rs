//! The scene flattened for the batched tracer: one plain record per
//! element (frame as cos/sin of its axis, curvature, conic, aperture,
//! bounding sphere), grouped by what the element does so that the kind is
//! decided once per element per batch, never per ray.

use crate::geometry::{Aperture, MirrorSurface};
use super::slope::SlopeError;
use crate::layout::Source;
use crate::scene::{Part, Scene};

/// Widening of an element's local z range, relative to the scene's size:
/// far above the rounding of a point carried into the local frame.
const SLAB_MARGIN: f64 = 1e-9;

/// A layout-plane frame: origin (0, y, z), local z at angle θ from +z
/// toward +y; `c`, `s` are cos θ and sin θ. Local x is global x.
#[derive(Debug, Clone, Copy)]
pub(crate) struct PlaneFrame {
    pub oy: f64,
    pub oz: f64,
    pub c: f64,
    pub s: f64,
}

impl PlaneFrame {
    /// World direction → local (same rounding as `Frame::to_local_dir`).
    #[inline(always)]
    pub fn dir_to_local(&self, x: f64, y: f64, z: f64) -> (f64, f64, f64) {
        (x, y * self.c - z * self.s, y * self.s + z * self.c)
    }
    /// World point → local.
    #[inline(always)]
    pub fn point_to_local(&self, x: f64, y: f64, z: f64) -> (f64, f64, f64) {
        self.dir_to_local(x, y - self.oy, z - self.oz)
    }
    /// A ray's point at parameter `t0` and its direction, both local.
    #[inline(always)]
    pub fn ray_to_local(&self, o: (f64, f64, f64), d: (f64, f64, f64), t0: f64) -> ((f64, f64, f64), (f64, f64, f64)) {
        let p = self.point_to_local(o.0 + d.0 * t0, o.1 + d.1 * t0, o.2 + d.2 * t0);
        (p, self.dir_to_local(d.0, d.1, d.2))
    }
    /// Local direction → world.
    #[inline(always)]
    pub fn dir_to_world(&self, x: f64, y: f64, z: f64) -> (f64, f64, f64) {
        (x, self.c * y + self.s * z, -self.s * y + self.c * z)
    }
    /// Local point → world (same rounding as `Frame::to_world_point`).
    #[inline(always)]
    pub fn point_to_world(&self, x: f64, y: f64, z: f64) -> (f64, f64, f64) {
        (x, self.oy + self.c * y + self.s * z, self.oz + -self.s * y + self.c * z)
    }
}

/// Clear aperture of a conic mirror as plain numbers: a disk (radius²,
/// hole²) or a strip (half width, half hole, half length) about local
/// y = `offset`.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Clear {
    pub offset: f64,
    pub strip: bool,
    /// Disk: r², hole². Strip: half width, half hole.
    pub outer: f64,
    pub inner: f64,
    /// Strip only: half length along x (∞ for disks).
    pub half_length: f64,
    /// Disk: radius and hole radius (the square roots of `outer`,
    /// `inner`). Strip: half width and half hole again.
    pub outer_len: f64,
    pub inner_len: f64,
}

impl Clear {
    fn of(a: &Aperture) -> Clear {
        match *a {
            Aperture::Disk { offset, r, hole } => {
                Clear { offset, strip: false, outer: r * r, inner: hole * hole, half_length: f64::INFINITY, outer_len: r, inner_len: hole }
            }
            Aperture::Strip { offset, half_width, half_hole, half_length } => {
                Clear { offset, strip: true, outer: half_width, inner: half_hole, half_length, outer_len: half_width, inner_len: half_hole }
            }
        }
    }
    /// Same test as `Aperture::contains`, branch-free, for an aperture
    /// known to be a strip (`STRIP`, which must equal `self.strip`) or a
    /// disk: a loop over many rays then makes one of the two tests (a
    /// vectorised loop would otherwise make both and pick one).
    #[inline(always)]
    pub fn contains_as<const STRIP: bool>(&self, x: f64, y: f64) -> bool {
        let dy = y - self.offset;
        if STRIP {
            let a = dy.abs();
            (a <= self.outer) & (a >= self.inner) & (x.abs() <= self.half_length)
        } else {
            let q = x * x + dy * dy;
            (q <= self.outer) & (q >= self.inner)
        }
    }

    /// (x, y) lies more than `margin` outside the clear aperture (beyond
    /// the rim or inside the hole), so `contains_as` fails there and at any
    /// point within `margin` of it. NaN coordinates are never clearly
    /// outside. `STRIP` as for [`Clear::contains_as`].
    #[inline(always)]
    pub fn clearly_outside<const STRIP: bool>(&self, x: f64, y: f64, margin: f64) -> bool {
        let dy = y - self.offset;
        let (out, inn) = (self.outer_len + margin, self.inner_len - margin);
        let hole = |q: f64| (inn > 0.0) & (q < inn * inn);
        if STRIP {
            let a = dy.abs();
            (a > out) | hole(a * a) | (x.abs() > self.half_length + margin)
        } else {
            let q = x * x + dy * dy;
            (q > out * out) | hole(q)
        }
    }
}

/// A mirror whose surface is a pure conic (closed-form intersection).
#[derive(Debug, Clone, Copy)]
pub(crate) struct ConicRec {
    /// Vertex curvature 1/R.
    pub c: f64,
    /// (1 + K)·c.
    pub kappa: f64,
    /// Extruded along x (a trough) instead of revolved.
    pub extruded: bool,
    pub clear: Clear,
}

/// What an element does, as the batched kernels see it.
#[derive(Debug, Clone, Copy)]
pub(crate) enum Kind {
    Conic(ConicRec),
    /// Aspheric or spline mirror: solved per ray by the exact scalar solver
    /// of the scene element (`Scene::elements[index]`).
    General,
    Screen { half: f64, circle: bool, opaque: bool, screen: usize },
}

/// One element ready for the kernels.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Rec {
    pub frame: PlaneFrame,
    pub kind: Kind,
    /// Bounding sphere: centre and radius (world).
    pub bx: f64,
    pub by: f64,
    pub bz: f64,
    pub br: f64,
    /// Local z range the element lies in, widened by the scene's rounding
    /// margin: a ray starting beyond it and not heading back cannot meet
    /// the element (a second, exact cull beside the sphere's).
    pub z_lo: f64,
    pub z_hi: f64,
    /// Whether to apply that cull: only where rays can start inside the
    /// bounding sphere (another element's or a source's sphere overlaps
    /// it); elsewhere the sphere alone already drops the rays heading away.
    pub slab: bool,
    /// Mirrors: power kept per reflection, and whether a ray leaving the
    /// face can meet it again on its next leg (see `Part::Mirror`).
    pub reflectivity: f64,
    pub no_return: bool,
    /// Mirrors with a slope error: applied after the reflection, in a
    /// step of its own (`kernel::slope_pass`).
    pub slope: Option<SlopeError>,
}

/// The flattened scene.
#[derive(Debug, Clone)]
pub(crate) struct Compiled {
    pub recs: Vec<Rec>,
}

impl Compiled {
    pub fn new(scene: &Scene) -> Compiled {
        let recs = scene
            .elements
            .iter()
            .map(|e| {
                let f = &e.frame;
                let frame = PlaneFrame { oy: f.origin.y, oz: f.origin.z, c: f.ez.z, s: f.ez.y };
                let (kind, reflectivity, no_return, slope, (z_lo, z_hi)) = match &e.part {
                    Part::Mirror { surface, reflectivity, no_return, slope } => {
                        (mirror_kind(surface), *reflectivity, *no_return, *slope, surface.z_range())
                    }
                    Part::Screen { half, circle, opaque, index } => {
                        (Kind::Screen { half: *half, circle: *circle, opaque: *opaque, screen: *index }, 1.0, false, None, (0.0, 0.0))
                    }
                };
                let margin = SLAB_MARGIN * scene.scale.max(1.0);
                Rec {
                    frame,
                    kind,
                    bx: e.bound_center.x,
                    by: e.bound_center.y,
                    bz: e.bound_center.z,
                    br: e.bound_radius,
                    z_lo: z_lo - margin,
                    z_hi: z_hi + margin,
                    slab: false,
                    reflectivity,
                    no_return,
                    slope,
                }
            })
            .collect::<Vec<Rec>>();
        let sources = scene.sources.iter().map(|s| match s {
            Source::Beam(b) => (b.center, 0.5 * b.diameter),
            Source::Point(p) => (p.center, 0.0),
        });
        // (centre y, centre z, radius) of every place a ray can start from.
        let starts: Vec<(f64, f64, f64)> = recs
            .iter()
            .map(|r| (r.by, r.bz, r.br))
            .chain(sources.map(|(c, r)| (c[0], c[1], r)))
            .collect();
        let mut recs = recs;
        for (i, r) in recs.iter_mut().enumerate() {
            // Every centre lies in the layout plane (x = 0).
            r.slab = starts.iter().enumerate().any(|(j, &(y, z, rad))| {
                j != i && (y - r.by).hypot(z - r.bz) < r.br + rad
            });
        }
        Compiled { recs }
    }
}

fn mirror_kind(s: &MirrorSurface) -> Kind {
    if s.profile.is_conic() {
        Kind::Conic(ConicRec {
            c: s.profile.c,
            kappa: (1.0 + s.profile.k) * s.profile.c,
            extruded: s.extruded,
            clear: Clear::of(&s.aperture),
        })
    } else {
        Kind::General
    }
}
