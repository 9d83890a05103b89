//! Local frames of elements placed in the layout (y–z) plane.

use super::Vec3;

/// Origin plus orthonormal axes. Local z is the element's axis at
/// `axis_deg` (from +z toward +y), local y is z turned +90° in the plane,
/// local x is global x; the frame is right-handed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Frame {
    pub origin: Vec3,
    pub ex: Vec3,
    pub ey: Vec3,
    pub ez: Vec3,
}

impl Frame {
    /// Frame at layout point [y, z] with its axis at `axis_deg`.
    pub fn in_plane(yz: [f64; 2], axis_deg: f64) -> Self {
        let (s, c) = axis_deg.to_radians().sin_cos();
        Frame {
            origin: Vec3::new(0.0, yz[0], yz[1]),
            ex: Vec3::new(1.0, 0.0, 0.0),
            ey: Vec3::new(0.0, c, -s),
            ez: Vec3::new(0.0, s, c),
        }
    }
    #[inline]
    pub fn to_local_point(&self, p: &Vec3) -> Vec3 {
        let q = p - self.origin;
        Vec3::new(q.dot(&self.ex), q.dot(&self.ey), q.dot(&self.ez))
    }
    #[inline]
    pub fn to_local_dir(&self, d: &Vec3) -> Vec3 {
        Vec3::new(d.dot(&self.ex), d.dot(&self.ey), d.dot(&self.ez))
    }
    #[inline]
    pub fn to_world_point(&self, p: &Vec3) -> Vec3 {
        self.origin + self.ex * p.x + self.ey * p.y + self.ez * p.z
    }
    #[inline]
    pub fn to_world_dir(&self, d: &Vec3) -> Vec3 {
        self.ex * d.x + self.ey * d.y + self.ez * d.z
    }
}

/// Unit direction in the layout plane at `deg` from +z toward +y.
pub fn plane_dir(deg: f64) -> Vec3 {
    let (s, c) = deg.to_radians().sin_cos();
    Vec3::new(0.0, s, c)
}

#[cfg(test)]
mod tests {
    use super::*;
    #[test]
    fn right_handed_and_round_trip() {
        let f = Frame::in_plane([3.0, -2.0], 37.0);
        assert!((f.ex.cross(&f.ey) - f.ez).norm() < 1e-15);
        let p = Vec3::new(1.0, 2.0, 3.0);
        assert!((f.to_world_point(&f.to_local_point(&p)) - p).norm() < 1e-12);
        assert!((plane_dir(90.0) - Vec3::new(0.0, 1.0, 0.0)).norm() < 1e-15);
    }
}
