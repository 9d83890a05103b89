//! Clear apertures in a mirror's local xy plane.

/// Outline of the reflecting part, seen along the local z axis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Aperture {
    /// Revolved mirror: disk of radius `r` centred at local y = `offset`,
    /// minus a concentric hole of radius `hole`.
    Disk { offset: f64, r: f64, hole: f64 },
    /// Extruded mirror: |y − offset| ≤ `half_width`, |y − offset| ≥
    /// `half_hole`, |x| ≤ `half_length`.
    Strip { offset: f64, half_width: f64, half_hole: f64, half_length: f64 },
}

impl Aperture {
    /// Is local point (x, y) on the reflecting part?
    #[inline]
    pub fn contains(&self, x: f64, y: f64) -> bool {
        match *self {
            Aperture::Disk { offset, r, hole } => {
                let dy = y - offset;
                let q = x * x + dy * dy;
                q <= r * r && q >= hole * hole
            }
            Aperture::Strip { offset, half_width, half_hole, half_length } => {
                let a = (y - offset).abs();
                a <= half_width && a >= half_hole && x.abs() <= half_length
            }
        }
    }

    /// Largest |ρ| the profile is evaluated at (ρ = radius or local y).
    pub fn rho_max(&self) -> f64 {
        match *self {
            Aperture::Disk { offset, r, .. } => offset.abs() + r,
            Aperture::Strip { offset, half_width, .. } => offset.abs() + half_width,
        }
    }

    /// Range of ρ covered: radial distance for a disk, signed y for a strip.
    pub fn rho_range(&self) -> (f64, f64) {
        match *self {
            Aperture::Disk { offset, r, .. } => ((offset.abs() - r).max(0.0), offset.abs() + r),
            Aperture::Strip { offset, half_width, .. } => (offset - half_width, offset + half_width),
        }
    }

    /// Ray parameter interval inside the aperture's prism (infinite along
    /// local z), or `None` when the ray misses it.
    #[inline]
    pub fn prism_interval(&self, o: &super::Vec3, d: &super::Vec3) -> Option<(f64, f64)> {
        match *self {
            Aperture::Disk { offset, r, .. } => {
                let oy = o.y - offset;
                let a = d.x * d.x + d.y * d.y;
                let b = o.x * d.x + oy * d.y;
                let c = o.x * o.x + oy * oy - r * r;
                if a == 0.0 {
                    return if c <= 0.0 { Some((f64::NEG_INFINITY, f64::INFINITY)) } else { None };
                }
                let (n, t) = super::solve_quadratic(a, b, c);
                match n {
                    2 => Some((t[0], t[1])),
                    _ => None,
                }
            }
            Aperture::Strip { offset, half_width, half_length, .. } => {
                let (a0, a1) = slab(o.y - offset, d.y, half_width)?;
                let (b0, b1) = slab(o.x, d.x, half_length)?;
                let (lo, hi) = (a0.max(b0), a1.min(b1));
                (lo <= hi).then_some((lo, hi))
            }
        }
    }
}

/// Interval of t with |o + t d| ≤ h.
#[inline]
pub(crate) fn slab(o: f64, d: f64, h: f64) -> Option<(f64, f64)> {
    if d == 0.0 {
        return if o.abs() <= h { Some((f64::NEG_INFINITY, f64::INFINITY)) } else { None };
    }
    let t0 = (-h - o) / d;
    let t1 = (h - o) / d;
    Some(if t0 <= t1 { (t0, t1) } else { (t1, t0) })
}
