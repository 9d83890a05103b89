//! Turning a layout source into rays.

use super::sampling::{disk_points, seed_of, DiskPoints};
use super::sunshape::sun_directions;
use crate::geometry::{positive_part, Frame, Vec3};
use crate::layout::Source;

/// A ray `origin + t·dir` with `dir` unit length; `weight` is the power it
/// carries (W); `opl` the optical path length so far (mm).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ray {
    pub origin: Vec3,
    pub dir: Vec3,
    pub weight: f64,
    pub opl: f64,
}

/// [`Emitter::cone_dir`] for columns of disk samples (same operations, so
/// the same bits), in a loop the compiler vectorises.
fn cone_dirs(axis: Vec3, e1: Vec3, e2: Vec3, omc: f64, a: &[f64], b: &[f64], d: [&mut [f64]; 3]) {
    let [dx, dy, dz] = d;
    let n = a.len().min(b.len()).min(dx.len()).min(dy.len()).min(dz.len());
    for k in 0..n {
        let (a, b) = (a[k], b[k]);
        let r2 = a * a + b * b;
        let cos_t = 1.0 - r2 * omc;
        let sin_t = positive_part(1.0 - cos_t * cos_t).sqrt();
        let r = r2.sqrt();
        let (ua, ub) = (a / r, b / r);
        let at_axis = r2 == 0.0;
        dx[k] = if at_axis { axis.x } else { axis.x * cos_t + (e1.x * ua + e2.x * ub) * sin_t };
        dy[k] = if at_axis { axis.y } else { axis.y * cos_t + (e1.y * ua + e2.y * ub) * sin_t };
        dz[k] = if at_axis { axis.z } else { axis.z * cos_t + (e1.z * ua + e2.z * ub) * sin_t };
    }
}

/// A compiled source: its frame, its sample points and the power per ray.
#[derive(Debug, Clone)]
pub struct Emitter {
    frame: Frame,
    /// Propagation direction and the two axes of the launch disk (beam) or
    /// of the cone's cross-section (lamp).
    axis: Vec3,
    e1: Vec3,
    e2: Vec3,
    points: std::sync::Arc<DiskPoints>,
    kind: Kind,
    /// An extended sun's direction samples, one per ray.
    sun: Option<std::sync::Arc<DiskPoints>>,
    /// Power carried by each ray, W.
    pub ray_weight: f64,
    /// Power the source puts out in all, W.
    pub power_w: f64,
}

#[derive(Debug, Clone, Copy)]
enum Kind {
    Beam { radius: f64, sun_half: f64 },
    Lamp { one_minus_cos: f64 },
}

impl Emitter {
    /// Compiles `source`, launching about `rays` rays (the lattices keep the
    /// points inside the disk, so the count can differ by a percent).
    pub fn new(source: &Source, rays: usize) -> Self {
        match source {
            Source::Beam(b) => {
                let frame = Frame::in_plane(b.center, b.direction_deg);
                let (s, c) = b.out_of_plane_deg.to_radians().sin_cos();
                let axis = frame.ez * c + frame.ex * s;
                let e1 = frame.ex * c - frame.ez * s;
                let points = disk_points(b.pattern, rays, seed_of(&b.id));
                // An extended sun: its direction samples and the half-angle
                // of the cap they fill (the aureole's edge for `csr`).
                let (sun, sun_half) = if b.sun_half_angle_mrad > 0.0 {
                    let (pts, outer) =
                        sun_directions(b.sunshape, b.csr, b.sun_half_angle_mrad * 1e-3, points.len(), seed_of(&b.id));
                    (Some(pts), outer)
                } else {
                    (None, 0.0)
                };
                let radius = 0.5 * b.diameter;
                let area_m2 = std::f64::consts::PI * radius * radius * 1e-6;
                let power_w = b.irradiance_w_m2 * area_m2;
                Emitter {
                    frame,
                    axis,
                    e1,
                    e2: frame.ey,
                    ray_weight: power_w / points.len() as f64,
                    power_w,
                    points,
                    kind: Kind::Beam { radius, sun_half },
                    sun,
                }
            }
            Source::Point(p) => {
                let frame = Frame::in_plane(p.center, p.direction_deg);
                let points = disk_points(p.pattern, rays, seed_of(&p.id));
                Emitter {
                    frame,
                    axis: frame.ez,
                    e1: frame.ex,
                    e2: frame.ey,
                    ray_weight: p.power_w / points.len() as f64,
                    power_w: p.power_w,
                    points,
                    kind: Kind::Lamp { one_minus_cos: 1.0 - p.cone_half_angle_deg.to_radians().cos() },
                    sun: None,
                }
            }
        }
    }

    /// Number of rays this emitter launches (no caller asks whether it
    /// launches none, so there is no `is_empty`).
    #[allow(clippy::len_without_is_empty)]
    pub fn len(&self) -> usize {
        self.points.len()
    }

    /// Central direction of the emitted light.
    pub fn axis(&self) -> Vec3 {
        self.axis
    }

    /// Direction from a disk sample (a, b) inside a cone with 1 − cos(half
    /// angle) = `omc`: equal-area map of the disk onto the spherical cap.
    #[inline]
    fn cone_dir(&self, a: f64, b: f64, omc: f64) -> Vec3 {
        let r2 = a * a + b * b;
        let cos_t = 1.0 - r2 * omc;
        let sin_t = positive_part(1.0 - cos_t * cos_t).sqrt();
        if r2 == 0.0 {
            return self.axis;
        }
        let r = r2.sqrt();
        self.axis * cos_t + (self.e1 * (a / r) + self.e2 * (b / r)) * sin_t
    }

    /// Ray number `i` (0 ≤ i < len()).
    #[inline]
    pub fn ray(&self, i: usize) -> Ray {
        let [a, b] = self.points.get(i);
        match self.kind {
            Kind::Beam { radius, sun_half } => {
                let origin = self.frame.origin + (self.e1 * a + self.e2 * b) * radius;
                let dir = match &self.sun {
                    Some(s) if sun_half > 0.0 => {
                        let [p, q] = s.get(i);
                        self.cone_dir(p, q, 1.0 - sun_half.cos())
                    }
                    _ => self.axis,
                };
                Ray { origin, dir, weight: self.ray_weight, opl: 0.0 }
            }
            Kind::Lamp { one_minus_cos } => {
                Ray { origin: self.frame.origin, dir: self.cone_dir(a, b, one_minus_cos), weight: self.ray_weight, opl: 0.0 }
            }
        }
    }

    /// Writes rays `start..start + ox.len()` into columns (origin, direction),
    /// exactly as [`Emitter::ray`] makes them; every ray carries
    /// [`Emitter::ray_weight`] and starts with zero path.
    pub fn fill(&self, start: usize, o: [&mut [f64]; 3], d: [&mut [f64]; 3]) {
        let [ox, oy, oz] = o;
        let [dx, dy, dz] = d;
        let n = ox.len();
        let (px, py) = (&self.points.x[start..start + n], &self.points.y[start..start + n]);
        let (o, e1, e2, axis) = (self.frame.origin, self.e1, self.e2, self.axis);
        match (self.kind, &self.sun) {
            (Kind::Beam { radius, sun_half }, sun) => {
                for k in 0..n {
                    let (p, q) = (px[k], py[k]);
                    ox[k] = o.x + (e1.x * p + e2.x * q) * radius;
                    oy[k] = o.y + (e1.y * p + e2.y * q) * radius;
                    oz[k] = o.z + (e1.z * p + e2.z * q) * radius;
                }
                match sun {
                    Some(s) if sun_half > 0.0 => {
                        let (sx, sy) = (&s.x[start..start + n], &s.y[start..start + n]);
                        cone_dirs(axis, e1, e2, 1.0 - sun_half.cos(), sx, sy, [dx, dy, dz]);
                    }
                    _ => {
                        dx[..n].fill(axis.x);
                        dy[..n].fill(axis.y);
                        dz[..n].fill(axis.z);
                    }
                }
            }
            (Kind::Lamp { one_minus_cos }, _) => {
                ox[..n].fill(o.x);
                oy[..n].fill(o.y);
                oz[..n].fill(o.z);
                cone_dirs(axis, e1, e2, one_minus_cos, px, py, [dx, dy, dz]);
            }
        }
    }

    /// `n` rays of the meridional fan (in the plane of the layout, x = 0):
    /// evenly across the beam's diameter, or evenly in angle across the
    /// lamp's cone. Solar disks contribute their central direction only.
    pub fn fan_ray(&self, j: usize, n: usize) -> Ray {
        let s = if n <= 1 { 0.0 } else { -1.0 + 2.0 * j as f64 / (n - 1) as f64 };
        match self.kind {
            Kind::Beam { radius, .. } => Ray {
                origin: self.frame.origin + self.e2 * (s * radius),
                dir: self.axis,
                weight: self.ray_weight,
                opl: 0.0,
            },
            Kind::Lamp { one_minus_cos } => {
                let half = (1.0 - one_minus_cos).clamp(-1.0, 1.0).acos();
                let (sn, cs) = (s * half).sin_cos();
                Ray { origin: self.frame.origin, dir: self.axis * cs + self.e2 * sn, weight: self.ray_weight, opl: 0.0 }
            }
        }
    }
}
