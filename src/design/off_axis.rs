//! Off-axis paraboloid segments, and the offset-fed dish they make.
//!
//! A segment of diameter D cut from a parent paraboloid of focal length F,
//! centred a distance H from the parent axis. By the focus–directrix
//! property of the parabola (z = ρ²/(4F), focus at (0, F)):
//!
//! * off-axis angle (between the parent axis and the ray from the segment
//!   centre to the focus) θ = 2 atan(H/(2F));
//! * reflected (effective) focal length, segment centre to focus,
//!   F + H²/(4F) = F/cos²(θ/2);
//! * the segment's surface normal at its centre leans θ/2 from the parent
//!   axis (the tilt a mount gives the segment's mechanical axis);
//! * a feed (receiver, lamp, horn) at the focus looking at the segment
//!   centre points θ off the parent axis; its rim rays leave at
//!   ψ± = 2 atan((H ± D/2)/(2F)) in the meridian, so a feed that lights the
//!   rim evenly in the meridian points along the bisector (ψ₊+ψ₋)/2 with
//!   half-angle (ψ₊−ψ₋)/2.
//!
//! # Layout
//!
//! Parent vertex at [0, 0] with its axis along +z (`axis_deg` 0); the
//! aperture offset H puts the segment at y = H. Focus (screen `focus`, a
//! square 2 % of D wide, at least 1 mm, rounded up to 0.5 mm) at [0, F],
//! facing the segment centre. The beam `on-axis` travels along −z, parallel
//! to the parent axis, and fills the segment: D wide, centred at y = H, it
//! starts 10 % of D + 1 mm above the segment's far edge (rounded up to the
//! mm), so every ray meets the segment first.

use super::two_mirror::fmt_num;
use super::{bad, checked, conic_sag, finite, finite_result, new_layout, positive, star_beam, tidy};
use crate::error::{InputError, Num};
use crate::layout::{
    ApertureSpec, Element, Form, Layout, Mirror, ProfileSpec, Screen, ScreenShape,
};
use serde::Serialize;

/// What the designer is asked for, mm.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OffAxisSpec {
    /// Parent focal length F.
    pub parent_focal: f64,
    /// Distance H of the segment centre from the parent axis (≥ 0).
    pub offset: f64,
    /// Segment diameter D.
    pub diameter: f64,
}

/// The feed of an offset-fed dish (placed at the parent focus).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Feed {
    /// Feed position [y, z] in the layout, mm (the parent focus).
    pub position_mm: [f64; 2],
    /// Direction from the feed to the segment centre, as a layout angle
    /// (degrees from +z toward +y).
    pub pointing_deg: f64,
    /// Angle of that direction from the parent axis (toward the vertex).
    pub off_axis_deg: f64,
    /// Angles ψ₋, ψ₊ of the segment's rim seen from the feed, from the
    /// parent axis, in the meridian.
    pub rim_angles_deg: [f64; 2],
    /// Bisector of the rim angles (pointing for an even meridional rim).
    pub bisector_off_axis_deg: f64,
    /// Half of the angle the segment subtends at the feed, in the meridian.
    pub half_angle_deg: f64,
}

/// The JSON of `catoptric design off-axis`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OffAxisDesign {
    pub off_axis_angle_deg: f64,
    pub reflected_focal_mm: f64,
    /// Lean of the segment's central normal from the parent axis, θ/2.
    pub segment_tilt_deg: f64,
    /// Segment centre on the surface [y, z] in the layout, mm.
    pub segment_center_mm: [f64; 2],
    /// Parent vertex radius 2F (conic −1).
    pub parent_radius_mm: f64,
    /// Reflected focal length over segment diameter.
    pub focal_ratio: f64,
    /// Sag difference between the segment's far and near edges, mm.
    pub segment_depth_mm: f64,
    pub feed: Feed,
    /// Plain-language warnings on the input (empty when none): a segment
    /// that reaches the parent axis (H < D/2) puts the focus inside the
    /// incoming beam.
    pub warnings: Vec<String>,
    pub layout: Layout,
}

/// Designs an off-axis paraboloid segment and its layout.
pub fn design_off_axis(spec: &OffAxisSpec) -> Result<OffAxisDesign, InputError> {
    let f = positive("parent_focal", spec.parent_focal)?;
    let h = finite("offset", spec.offset)?;
    if h < 0.0 {
        return Err(bad("offset", format!("must be at least 0 (got {}); the segment lies on the +y side of the parent axis", Num(h))));
    }
    let d = positive("diameter", spec.diameter)?;
    let theta = 2.0 * (h / (2.0 * f)).atan();
    let f_refl = f + h * h / (4.0 * f);
    let r = 2.0 * f;
    let center = [h, conic_sag(r, -1.0, h)];
    let psi = |y: f64| 2.0 * (y / (2.0 * f)).atan();
    let (lo, hi) = (psi(h - 0.5 * d), psi(h + 0.5 * d));
    // Feed → segment centre, as a layout angle.
    let pointing = h.atan2(center[1] - f).to_degrees();
    // Nearest and farthest radii of the segment from the parent axis.
    let near = (h - 0.5 * d).max(0.0);
    let far = h + 0.5 * d;
    let depth = conic_sag(r, -1.0, far) - conic_sag(r, -1.0, near);
    finite_result("offset", "design", &[theta, f_refl, center[1], lo, hi, pointing, depth])?;

    let mirror = Element::Mirror(Mirror {
        id: "segment".to_string(),
        vertex: [0.0, 0.0],
        axis_deg: 0.0,
        form: Form::Revolved,
        length: None,
        profile: ProfileSpec { radius: Some(r), conic: -1.0, aspheric: Vec::new(), departure: None },
        aperture: ApertureSpec { diameter: d, offset: h, hole: 0.0 },
        reflectivity: 1.0,
        slope_error_mrad: 0.0,
    });
    let screen = Element::Screen(Screen {
        id: "focus".to_string(),
        center: [0.0, f],
        axis_deg: pointing,
        size: tidy((0.02 * d).max(1.0), 0.5),
        shape: ScreenShape::Square,
        opaque: false,
    });
    let top = conic_sag(r, -1.0, far);
    let beam = star_beam("on-axis", [h, tidy(top + 0.1 * d + 1.0, 1.0)], 180.0, d);
    let name = format!("Off-axis paraboloid {} mm, {:.2}° off axis", fmt_num(d), theta.to_degrees());
    let notes = format!(
        "Generated by the off-axis designer: parent focal length {} mm, segment centre {} mm from the parent axis, reflected focal length {} mm.",
        fmt_num(f),
        fmt_num(h),
        fmt_num(f_refl)
    );
    let layout = checked(new_layout(name, notes, vec![mirror, screen], vec![beam]))?;
    let mut warnings = Vec::new();
    if h < 0.5 * d {
        // The segment spans local y from H − D/2 to H + D/2; the focus lies
        // on the parent axis (y = 0), so it is in the beam when H < D/2.
        warnings.push(format!(
            "The offset H = {} mm is less than half the diameter (D/2 = {} mm): the segment reaches across the parent axis, \
             so the focus lies inside the incoming beam, not clear of it. Use an offset of at least D/2 for a clear focus.",
            fmt_num(h),
            fmt_num(0.5 * d)
        ));
    }
    Ok(OffAxisDesign {
        off_axis_angle_deg: theta.to_degrees(),
        reflected_focal_mm: f_refl,
        segment_tilt_deg: 0.5 * theta.to_degrees(),
        segment_center_mm: center,
        parent_radius_mm: r,
        focal_ratio: f_refl / d,
        segment_depth_mm: depth,
        feed: Feed {
            position_mm: [0.0, f],
            pointing_deg: pointing,
            off_axis_deg: theta.to_degrees(),
            rim_angles_deg: [lo.to_degrees(), hi.to_degrees()],
            bisector_off_axis_deg: 0.5 * (lo + hi).to_degrees(),
            half_angle_deg: 0.5 * (hi - lo).to_degrees(),
        },
        warnings,
        layout,
    })
}
