//! A numeric field of a layout addressed by its path, for the optimiser
//! and the page's "vary" toggles (docs/FORMATS.md §5).
//!
//! A path starts at an element or a source, by index (`elements[1]`,
//! `sources[0]`) or by id (`secondary`, `focus`), or names the top-level
//! `wavelength_nm`; then fields and indices as in the file:
//! `elements[1].profile.conic`, `secondary.profile.conic`,
//! `focus.center[1]`, `primary.aperture.offset`,
//! `primary.profile.aspheric[0]`. Only continuous numbers are reachable:
//! ids, kinds, shapes, patterns and whole numbers (`rays`, `max_bounces`)
//! are refused with a message naming the field, as are fields that are
//! absent (a flat mirror has no radius, a revolved one no length).

use super::{Element, Layout, Source};
use crate::error::InputError;

/// One step of a path: a field name or an index.
#[derive(Debug, Clone, PartialEq)]
enum Step {
    Name(String),
    Index(usize),
}

fn bad(path: &str, message: impl Into<String>) -> InputError {
    InputError::new(path, message)
}

/// Splits `a.b[2].c` into steps; refuses empty names and bad indices.
fn steps(path: &str) -> Result<Vec<Step>, InputError> {
    let mut out = Vec::new();
    for part in path.split('.') {
        let (name, mut rest) = match part.find('[') {
            Some(i) => (&part[..i], &part[i..]),
            None => (part, ""),
        };
        if name.is_empty() && (out.is_empty() || rest.is_empty()) {
            return Err(bad(path, "is not a field path: expected names joined by dots, e.g. secondary.profile.conic"));
        }
        if !name.is_empty() {
            out.push(Step::Name(name.to_string()));
        }
        while !rest.is_empty() {
            let close = rest.find(']').ok_or_else(|| bad(path, "has a `[` without its `]`"))?;
            let digits = &rest[1..close];
            let i = digits
                .parse::<usize>()
                .ok()
                .filter(|_| digits.bytes().all(|b| b.is_ascii_digit()))
                .ok_or_else(|| bad(path, format!("index `{digits}` is not a whole number")))?;
            out.push(Step::Index(i));
            rest = &rest[close + 1..];
            if !rest.is_empty() && !rest.starts_with('[') {
                return Err(bad(path, "expected `.` or `[` after `]`"));
            }
        }
    }
    Ok(out)
}

/// What a path leads to inside one element or source.
fn leaf<'a>(path: &str, owner: &str, slot: Option<&'a mut f64>, absent: &str) -> Result<&'a mut f64, InputError> {
    slot.ok_or_else(|| bad(path, format!("{owner} has no such value: {absent}")))
}

fn name_at<'s>(path: &str, s: &'s [Step], k: usize) -> Result<&'s str, InputError> {
    match s.get(k) {
        Some(Step::Name(n)) => Ok(n),
        Some(Step::Index(i)) => Err(bad(path, format!("unexpected index [{i}]"))),
        None => Err(bad(path, "ends before a number: name a field (e.g. .profile.conic, .center[1])")),
    }
}

fn index_at(path: &str, s: &[Step], k: usize, len: usize, what: &str) -> Result<usize, InputError> {
    match s.get(k) {
        Some(Step::Index(i)) if *i < len => Ok(*i),
        Some(Step::Index(i)) => Err(bad(path, format!("{what} has {len} entries; index {i} is out of range"))),
        _ => Err(bad(path, format!("{what} is a list: give an index, e.g. {what}[0]"))),
    }
}

fn end(path: &str, s: &[Step], k: usize) -> Result<(), InputError> {
    if k < s.len() {
        return Err(bad(path, "goes past a number: nothing is inside it"));
    }
    Ok(())
}

fn not_number(path: &str, field: &str, what: &str) -> InputError {
    bad(path, format!("`{field}` is {what}, not a number that can vary"))
}

fn pair<'a>(path: &str, s: &[Step], k: usize, p: &'a mut [f64; 2], name: &str) -> Result<&'a mut f64, InputError> {
    let i = index_at(path, s, k, 2, name)?;
    end(path, s, k + 1)?;
    Ok(&mut p[i])
}

fn unknown(path: &str, owner: &str, field: &str, known: &str) -> InputError {
    bad(path, format!("{owner} has no field `{field}`; numeric fields: {known}"))
}

fn element_field<'a>(path: &str, s: &[Step], k: usize, e: &'a mut Element) -> Result<&'a mut f64, InputError> {
    let field = name_at(path, s, k)?;
    match e {
        Element::Mirror(m) => {
            let owner = format!("mirror `{}`", m.id);
            let known = "vertex[0|1], axis_deg, length, profile.radius, profile.conic, profile.aspheric[i], \
                         profile.departure[i][0|1], aperture.diameter, aperture.offset, aperture.hole, reflectivity";
            match field {
                "vertex" => pair(path, s, k + 1, &mut m.vertex, field),
                "axis_deg" => end(path, s, k + 1).map(|_| &mut m.axis_deg),
                "reflectivity" => end(path, s, k + 1).map(|_| &mut m.reflectivity),
                "length" => {
                    end(path, s, k + 1)?;
                    leaf(path, &owner, m.length.as_mut(), "only an extruded mirror has a length")
                }
                "id" | "kind" | "form" => Err(not_number(path, field, "a name")),
                "profile" => {
                    let sub = name_at(path, s, k + 1)?;
                    let p = &mut m.profile;
                    match sub {
                        "radius" => {
                            end(path, s, k + 2)?;
                            leaf(path, &owner, p.radius.as_mut(), "the mirror is flat (give it a radius first)")
                        }
                        "conic" => end(path, s, k + 2).map(|_| &mut p.conic),
                        "aspheric" => {
                            let i = index_at(path, s, k + 2, p.aspheric.len(), "aspheric")?;
                            end(path, s, k + 3)?;
                            Ok(&mut p.aspheric[i])
                        }
                        "departure" => {
                            let knots = p.departure.as_mut().ok_or_else(|| bad(path, format!("{owner} has no departure knots")))?;
                            let i = index_at(path, s, k + 2, knots.len(), "departure")?;
                            pair(path, s, k + 3, &mut knots[i], "departure[i]")
                        }
                        other => Err(unknown(path, &owner, &format!("profile.{other}"), known)),
                    }
                }
                "aperture" => {
                    let sub = name_at(path, s, k + 1)?;
                    end(path, s, k + 2)?;
                    let a = &mut m.aperture;
                    match sub {
                        "diameter" => Ok(&mut a.diameter),
                        "offset" => Ok(&mut a.offset),
                        "hole" => Ok(&mut a.hole),
                        other => Err(unknown(path, &owner, &format!("aperture.{other}"), known)),
                    }
                }
                other => Err(unknown(path, &owner, other, known)),
            }
        }
        Element::Screen(sc) => {
            let owner = format!("screen `{}`", sc.id);
            match field {
                "center" => pair(path, s, k + 1, &mut sc.center, field),
                "axis_deg" => end(path, s, k + 1).map(|_| &mut sc.axis_deg),
                "size" => end(path, s, k + 1).map(|_| &mut sc.size),
                "id" | "kind" | "shape" => Err(not_number(path, field, "a name")),
                "opaque" => Err(not_number(path, field, "true or false")),
                other => Err(unknown(path, &owner, other, "center[0|1], axis_deg, size")),
            }
        }
    }
}

fn source_field<'a>(path: &str, s: &[Step], k: usize, src: &'a mut Source) -> Result<&'a mut f64, InputError> {
    let field = name_at(path, s, k)?;
    if matches!(field, "id" | "kind" | "pattern") {
        return Err(not_number(path, field, "a name"));
    }
    if field == "rays" {
        return Err(not_number(path, field, "a whole number of rays"));
    }
    match src {
        Source::Beam(b) => {
            let owner = format!("beam `{}`", b.id);
            let known = "center[0|1], direction_deg, out_of_plane_deg, diameter, sun_half_angle_mrad, irradiance_w_m2";
            match field {
                "center" => pair(path, s, k + 1, &mut b.center, field),
                other => {
                    end(path, s, k + 1)?;
                    match other {
                        "direction_deg" => Ok(&mut b.direction_deg),
                        "out_of_plane_deg" => Ok(&mut b.out_of_plane_deg),
                        "diameter" => Ok(&mut b.diameter),
                        "sun_half_angle_mrad" => Ok(&mut b.sun_half_angle_mrad),
                        "irradiance_w_m2" => Ok(&mut b.irradiance_w_m2),
                        _ => Err(unknown(path, &owner, other, known)),
                    }
                }
            }
        }
        Source::Point(p) => {
            let owner = format!("point lamp `{}`", p.id);
            let known = "center[0|1], direction_deg, cone_half_angle_deg, power_w";
            match field {
                "center" => pair(path, s, k + 1, &mut p.center, field),
                other => {
                    end(path, s, k + 1)?;
                    match other {
                        "direction_deg" => Ok(&mut p.direction_deg),
                        "cone_half_angle_deg" => Ok(&mut p.cone_half_angle_deg),
                        "power_w" => Ok(&mut p.power_w),
                        _ => Err(unknown(path, &owner, other, known)),
                    }
                }
            }
        }
    }
}

/// The number a path names, to read or write. The error's `field` is the
/// path as given.
pub fn field_mut<'a>(layout: &'a mut Layout, path: &str) -> Result<&'a mut f64, InputError> {
    let s = steps(path)?;
    let root = name_at(path, &s, 0)?;
    match root {
        "elements" => {
            let i = index_at(path, &s, 1, layout.elements.len(), "elements")?;
            element_field(path, &s, 2, &mut layout.elements[i])
        }
        "sources" => {
            let i = index_at(path, &s, 1, layout.sources.len(), "sources")?;
            source_field(path, &s, 2, &mut layout.sources[i])
        }
        "wavelength_nm" => end(path, &s, 1).map(|_| &mut layout.wavelength_nm),
        "max_bounces" => Err(not_number(path, root, "a whole number of reflections")),
        "format" | "version" | "name" | "notes" => Err(not_number(path, root, "not an optical value")),
        id => {
            if let Some(e) = layout.elements.iter_mut().find(|e| e.id() == id) {
                return element_field(path, &s, 1, e);
            }
            if let Some(src) = layout.sources.iter_mut().find(|x| x.id() == id) {
                return source_field(path, &s, 1, src);
            }
            Err(bad(path, format!("no element or source has the id `{id}` (or use elements[i] / sources[i])")))
        }
    }
}

/// Reads the number at `path`.
pub fn get_field(layout: &Layout, path: &str) -> Result<f64, InputError> {
    let mut copy = layout.clone();
    field_mut(&mut copy, path).map(|v| *v)
}

/// Writes `value` at `path` (the layout is not re-validated here).
pub fn set_field(layout: &mut Layout, path: &str, value: f64) -> Result<(), InputError> {
    *field_mut(layout, path)? = value;
    Ok(())
}
