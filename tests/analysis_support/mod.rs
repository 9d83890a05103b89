//! Layout builders shared by the analysis tests.
#![allow(dead_code)]

#[path = "../common/mod.rs"]
mod common;
pub use common::*;

/// A revolved (or extruded) mirror facing −z with its vertex at z = `z`.
pub fn mirror(id: &str, z: f64, radius: f64, conic: f64, diameter: f64, extruded_length: Option<f64>) -> String {
    let form = match extruded_length {
        Some(l) => format!(r#""form": "extruded", "length": {l},"#),
        None => r#""form": "revolved","#.to_string(),
    };
    format!(
        r#"{{ "kind": "mirror", "id": "{id}", "vertex": [0, {z}], "axis_deg": 180, {form}
            "profile": {{ "radius": {radius}, "conic": {conic} }}, "aperture": {{ "diameter": {diameter} }} }}"#
    )
}

/// A screen at [y, z] looking along +z (toward a mirror on its right).
pub fn screen(id: &str, y: f64, z: f64, size: f64, shape: &str, opaque: bool) -> String {
    format!(
        r#"{{ "kind": "screen", "id": "{id}", "center": [{y}, {z}], "axis_deg": 0, "size": {size}, "shape": "{shape}", "opaque": {opaque} }}"#
    )
}

/// A beam at [y, z] travelling along +z.
pub fn beam(id: &str, y: f64, z: f64, diameter: f64, rays: u64, pattern: &str, sun_mrad: f64) -> String {
    format!(
        r#"{{ "kind": "beam", "id": "{id}", "center": [{y}, {z}], "direction_deg": 0, "diameter": {diameter},
            "rays": {rays}, "pattern": "{pattern}", "sun_half_angle_mrad": {sun_mrad}, "irradiance_w_m2": 1000 }}"#
    )
}

/// A whole layout at 550 nm.
pub fn layout(elements: &[String], sources: &[String]) -> String {
    format!(
        r#"{{ "format": "catoptric-layout", "version": 1, "name": "test", "wavelength_nm": 550, "max_bounces": 16,
            "elements": [{}], "sources": [{}] }}"#,
        elements.join(","),
        sources.join(",")
    )
}



