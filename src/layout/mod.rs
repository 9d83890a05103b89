//! Layout file, version 1: the document a designer saves, shares and opens.
//!
//! The types mirror the JSON contract of docs/FORMATS.md §2 exactly. Unknown
//! fields are refused; optional fields have the documented defaults. Parsing
//! ([`parse_layout`]) reports the JSON path of the first offending field,
//! and [`validate`] checks the values (finite, positive, inside a conic's
//! domain, unique ids, ray caps).

mod link;
mod parse;
mod path;
mod text;
mod validate;

pub use link::{checked_link, decode_link, encode_link, LINK_PREFIX, MAX_LINK_LAYOUT_BYTES};
pub use parse::parse_layout;
pub use path::{field_mut, get_field, set_field};
pub use text::{decode_layout_bytes, MAX_LAYOUT_BYTES};
pub use validate::{
    MAX_SLOPE_ERROR_MRAD, MAX_CSR,
    validate, DOMAIN_MARGIN, MAX_BOUNCES_CAP, MAX_ELEMENTS, MAX_LENGTH_MM, MAX_NAME_LEN, MAX_NOTES_BYTES,
    MAX_RAYS_PER_SOURCE, MAX_RAYS_TOTAL, MIN_LENGTH_MM,
};

use serde::{Deserialize, Serialize};

/// Value of the `format` field.
pub const FORMAT_TAG: &str = "catoptric-layout";
/// The only layout version this build reads and writes.
pub const FORMAT_VERSION: u32 = 1;

fn is_zero(v: &f64) -> bool {
    *v == 0.0
}
fn is_one(v: &f64) -> bool {
    *v == 1.0
}
fn one() -> f64 {
    1.0
}
fn default_irradiance() -> f64 {
    1000.0
}
fn is_false(v: &bool) -> bool {
    !*v
}

/// A whole layout document.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Layout {
    pub format: String,
    #[serde(deserialize_with = "parse::whole_u32")]
    pub version: u32,
    pub name: String,
    #[serde(default, skip_serializing_if = "String::is_empty")]
    pub notes: String,
    pub wavelength_nm: f64,
    #[serde(deserialize_with = "parse::whole_u32")]
    pub max_bounces: u32,
    pub elements: Vec<Element>,
    pub sources: Vec<Source>,
    /// Where the layout stands on the Earth and which way it faces (for
    /// the sun through the day); absent for a bench or a sky layout.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub site: Option<Site>,
}

/// The place of a layout: the layout plane is vertical, +y up, +z toward
/// compass bearing `z_bearing_deg` (clockwise from north), +x = y × z
/// toward that bearing − 90° (see docs/FORMATS.md §2).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Site {
    /// Geodetic latitude, degrees north (−90 … 90).
    pub latitude_deg: f64,
    /// Longitude, degrees east (−180 … 180).
    pub longitude_deg: f64,
    /// Compass bearing of the layout's +z, degrees clockwise from north.
    #[serde(default, skip_serializing_if = "is_zero")]
    pub z_bearing_deg: f64,
    /// Height above sea level, m.
    #[serde(default, skip_serializing_if = "is_zero")]
    pub elevation_m: f64,
}

/// The sun's radiance across its disk (a sun beam only).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Sunshape {
    /// Uniform disk of the beam's half-angle.
    #[default]
    Disk,
    /// Limb-darkened disk of the beam's half-angle.
    Limb,
    /// Disk plus circumsolar aureole (Buie et al. 2003), `csr` of the total.
    Csr,
}

impl Sunshape {
    fn is_disk(&self) -> bool {
        *self == Sunshape::Disk
    }
}

/// Something rays can meet.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "lowercase")]
pub enum Element {
    Mirror(Mirror),
    Screen(Screen),
}

impl Element {
    pub fn id(&self) -> &str {
        match self {
            Element::Mirror(m) => &m.id,
            Element::Screen(s) => &s.id,
        }
    }
}

/// Surface of revolution about the local z axis, or a cylinder along x.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Form {
    Revolved,
    Extruded,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Mirror {
    pub id: String,
    /// Vertex position [y, z] in mm.
    pub vertex: [f64; 2],
    /// Direction of the local z axis (out of the reflective face), degrees
    /// from +z toward +y.
    pub axis_deg: f64,
    pub form: Form,
    /// Extent along x of an extruded mirror, mm (extruded only).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub length: Option<f64>,
    pub profile: ProfileSpec,
    pub aperture: ApertureSpec,
    #[serde(default = "one", skip_serializing_if = "is_one")]
    pub reflectivity: f64,
    /// σ of the Gaussian slope error of the surface, per axis of the
    /// tangent plane, mrad (0: a perfect surface).
    #[serde(default, skip_serializing_if = "is_zero")]
    pub slope_error_mrad: f64,
}

/// Sag description (ISO 10110-12 form plus a departure spline).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ProfileSpec {
    /// Vertex radius of curvature in mm; positive = concave, negative =
    /// convex, absent or null = flat.
    #[serde(default)]
    pub radius: Option<f64>,
    /// Conic constant K (0 sphere, −1 paraboloid).
    #[serde(default, skip_serializing_if = "is_zero")]
    pub conic: f64,
    /// Even aspheric coefficients A4, A6, A8, … (mm^(1−2i)).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub aspheric: Vec<f64>,
    /// Knots (ρ, Δz) in mm of a natural cubic spline of extra sag.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub departure: Option<Vec<[f64; 2]>>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ApertureSpec {
    /// Diameter (revolved) or width in local y (extruded), mm.
    pub diameter: f64,
    /// Local-y position of the aperture centre (off-axis segment), mm.
    #[serde(default, skip_serializing_if = "is_zero")]
    pub offset: f64,
    /// Diameter (or width) of a central hole, mm.
    #[serde(default, skip_serializing_if = "is_zero")]
    pub hole: f64,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum ScreenShape {
    Square,
    Circle,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Screen {
    pub id: String,
    /// Centre [y, z] in mm.
    pub center: [f64; 2],
    /// Direction the sensitive face looks along, degrees.
    pub axis_deg: f64,
    /// Side (square) or diameter (circle), mm.
    pub size: f64,
    pub shape: ScreenShape,
    #[serde(default, skip_serializing_if = "is_false")]
    pub opaque: bool,
}

/// Something that launches rays.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "lowercase")]
pub enum Source {
    Beam(Beam),
    Point(PointLamp),
}

impl Source {
    pub fn id(&self) -> &str {
        match self {
            Source::Beam(b) => &b.id,
            Source::Point(p) => &p.id,
        }
    }
    pub fn rays(&self) -> u64 {
        match self {
            Source::Beam(b) => b.rays,
            Source::Point(p) => p.rays,
        }
    }
    pub fn set_rays(&mut self, n: u64) {
        match self {
            Source::Beam(b) => b.rays = n,
            Source::Point(p) => p.rays = n,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Pattern {
    Hex,
    Grid,
    Random,
}

/// Collimated beam (a star), optionally an extended solar disk.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Beam {
    pub id: String,
    pub center: [f64; 2],
    pub direction_deg: f64,
    #[serde(default, skip_serializing_if = "is_zero")]
    pub out_of_plane_deg: f64,
    pub diameter: f64,
    #[serde(deserialize_with = "parse::whole_u64")]
    pub rays: u64,
    pub pattern: Pattern,
    #[serde(default, skip_serializing_if = "is_zero")]
    pub sun_half_angle_mrad: f64,
    #[serde(default = "default_irradiance")]
    pub irradiance_w_m2: f64,
    /// Radiance profile of a sun beam (`sun_half_angle_mrad` > 0).
    #[serde(default, skip_serializing_if = "Sunshape::is_disk")]
    pub sunshape: Sunshape,
    /// Circumsolar ratio (circumsolar over total flux) of a `csr` sun.
    #[serde(default, skip_serializing_if = "is_zero")]
    pub csr: f64,
}

/// Point lamp radiating uniformly (per solid angle) into a cone.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PointLamp {
    pub id: String,
    pub center: [f64; 2],
    pub direction_deg: f64,
    pub cone_half_angle_deg: f64,
    #[serde(deserialize_with = "parse::whole_u64")]
    pub rays: u64,
    pub pattern: Pattern,
    /// Power emitted into the cone, W.
    pub power_w: f64,
}

impl Layout {
    /// Minified canonical JSON (what share links carry).
    pub fn to_json_compact(&self) -> String {
        serde_json::to_string(self).expect("layout types always serialize")
    }
    /// Indented JSON for files.
    pub fn to_json_pretty(&self) -> String {
        serde_json::to_string_pretty(self).expect("layout types always serialize")
    }
}
