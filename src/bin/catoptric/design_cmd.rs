//! `design`, `compare` and `zones`: argument parsing and printing around
//! `catoptric::design`.

use crate::Failure;
use catoptric::design::{
    compare::parse_conics, compare_conics, design_off_axis, design_two_mirror, zone_table, OffAxisSpec, TestSource,
    TwoMirrorKind, TwoMirrorSpec, DEFAULT_WAVELENGTH_NM,
};
use catoptric::layout::Layout;
use catoptric::error::{printable, Num};
use catoptric::InputError;
use clap::{Args, Subcommand};
use std::fmt::Write as _;

#[derive(Subcommand)]
pub enum DesignCmd {
    /// Two-mirror telescope (Cassegrain and Gregorian families).
    TwoMirror(TwoMirrorArgs),
    /// Off-axis paraboloid segment (and offset-fed dish feed).
    OffAxis(OffAxisArgs),
}

#[derive(Args)]
pub struct TwoMirrorArgs {
    /// cassegrain, ritchey-chretien, dall-kirkham, gregorian or aplanatic-gregorian.
    #[arg(long = "type")]
    kind: String,
    /// Primary clear diameter, mm.
    #[arg(long, allow_hyphen_values = true)]
    diameter: f64,
    /// Primary focal length, mm.
    #[arg(long, allow_hyphen_values = true)]
    primary_focal: f64,
    /// System focal length, mm (positive for every type).
    #[arg(long, allow_hyphen_values = true)]
    focal: f64,
    /// Back focus from the primary vertex, mm, positive behind it.
    #[arg(long, allow_hyphen_values = true)]
    back_focus: f64,
    /// Field angle for the secondary size, the hole and an `off-axis` beam, degrees.
    #[arg(long, allow_hyphen_values = true, default_value_t = 0.0)]
    field_deg: f64,
    /// Write the generated layout to this file.
    #[arg(long)]
    layout: Option<String>,
    /// Machine-readable output.
    #[arg(long)]
    json: bool,
}

#[derive(Args)]
pub struct OffAxisArgs {
    /// Focal length of the parent paraboloid, mm.
    #[arg(long, allow_hyphen_values = true)]
    parent_focal: f64,
    /// Distance of the segment centre from the parent axis, mm.
    #[arg(long, allow_hyphen_values = true)]
    offset: f64,
    /// Segment diameter, mm.
    #[arg(long, allow_hyphen_values = true)]
    diameter: f64,
    /// Write the generated layout to this file.
    #[arg(long)]
    layout: Option<String>,
    #[arg(long)]
    json: bool,
}

#[derive(Args)]
pub struct CompareArgs {
    /// Vertex radius of curvature, mm (concave, > 0).
    #[arg(long, allow_hyphen_values = true)]
    radius: f64,
    /// Mirror diameter, mm.
    #[arg(long, allow_hyphen_values = true)]
    diameter: f64,
    /// Comma-separated conic constants, e.g. 0,-1,-0.5.
    #[arg(long, allow_hyphen_values = true)]
    conics: String,
    /// Wavelength, nm.
    #[arg(long, allow_hyphen_values = true, default_value_t = DEFAULT_WAVELENGTH_NM)]
    wavelength: f64,
    #[arg(long)]
    json: bool,
}

#[derive(Args)]
pub struct ZonesArgs {
    /// Vertex radius of curvature, mm (concave, > 0).
    #[arg(long, allow_hyphen_values = true)]
    radius: f64,
    /// Conic constant of the target surface.
    #[arg(long, allow_hyphen_values = true)]
    conic: f64,
    /// Mirror diameter, mm.
    #[arg(long, allow_hyphen_values = true)]
    diameter: f64,
    /// Number of zones (equal areas).
    #[arg(long, allow_hyphen_values = true)]
    zones: i64,
    /// moving (source travels with the knife) or fixed (source at the centre of curvature).
    #[arg(long, default_value = "moving")]
    source: String,
    /// Wavelength for departures in waves, nm.
    #[arg(long, allow_hyphen_values = true, default_value_t = DEFAULT_WAVELENGTH_NM)]
    wavelength: f64,
    #[arg(long)]
    json: bool,
}

/// Core field name → command-line flag (`back_focus` → `--back-focus`,
/// `conics[2]` → `--conics[2]`); layout fields stay as they are.
pub(crate) fn input(e: InputError) -> Failure {
    if e.field.is_empty() || e.field.starts_with("layout.") {
        return Failure::input(e);
    }
    let field = format!("--{}", e.field.replace('_', "-"));
    Failure::input(format!("{field}: {}", e.message))
}

pub(crate) fn to_json<T: serde::Serialize>(v: &T) -> String {
    serde_json::to_string_pretty(v).expect("reports always serialize")
}

fn write_layout(path: &Option<String>, layout: &Layout) -> Result<(), Failure> {
    if let Some(p) = path {
        std::fs::write(p, layout.to_json_pretty() + "\n")
            .map_err(|e| Failure::input(format!("--layout: cannot write {p}: {e}")))?;
    }
    Ok(())
}

pub fn design(c: DesignCmd) -> Result<String, Failure> {
    match c {
        DesignCmd::TwoMirror(a) => two_mirror(a),
        DesignCmd::OffAxis(a) => off_axis(a),
    }
}

fn two_mirror(a: TwoMirrorArgs) -> Result<String, Failure> {
    let spec = TwoMirrorSpec {
        kind: TwoMirrorKind::parse(&a.kind).map_err(input)?,
        diameter: a.diameter,
        primary_focal: a.primary_focal,
        focal: a.focal,
        back_focus: a.back_focus,
        field_deg: a.field_deg,
    };
    let d = design_two_mirror(&spec).map_err(input)?;
    write_layout(&a.layout, &d.layout)?;
    if a.json {
        return Ok(to_json(&d));
    }
    let mut s = String::new();
    let _ = writeln!(s, "{}", printable(&d.layout.name));
    let _ = writeln!(
        s,
        "focal length {:.3} mm (f/{:.3}), secondary magnification {:.5}, height ratio k {:.6}",
        Num(d.focal_mm),
        Num(d.focal_ratio),
        Num(d.magnification),
        Num(d.height_ratio)
    );
    let _ = writeln!(s, "separation {:.3} mm, back focus {:.3} mm behind the primary vertex", Num(d.separation_mm), Num(d.back_focus_mm));
    let _ = writeln!(s, "{:<10} {:>13} {:>12} {:>14} {:>10}", "mirror", "radius mm", "conic", "diameter mm", "hole mm");
    let p = &d.primary;
    let _ = writeln!(s, "{:<10} {:>13.3} {:>12.6} {:>14.3} {:>10.3}", "primary", Num(p.radius_mm), Num(p.conic), Num(p.diameter_mm), Num(p.hole_mm));
    let q = &d.secondary;
    let _ = writeln!(s, "{:<10} {:>13.3} {:>12.6} {:>14.3} {:>10}", "secondary", Num(q.radius_mm), Num(q.conic), Num(q.diameter_mm), "-");
    let _ = writeln!(s, "obstruction {:.1}% of the diameter (radii: concave +, convex −)", Num(100.0 * d.obstruction_fraction));
    warnings(&mut s, &d.warnings);
    Ok(s)
}

/// The designers' warnings on extreme input, one line each.
fn warnings(s: &mut String, list: &[String]) {
    for w in list {
        let _ = writeln!(s, "Warning: {w}");
    }
}

fn off_axis(a: OffAxisArgs) -> Result<String, Failure> {
    let spec = OffAxisSpec { parent_focal: a.parent_focal, offset: a.offset, diameter: a.diameter };
    let d = design_off_axis(&spec).map_err(input)?;
    write_layout(&a.layout, &d.layout)?;
    if a.json {
        return Ok(to_json(&d));
    }
    let mut s = String::new();
    let _ = writeln!(s, "{}", printable(&d.layout.name));
    let _ = writeln!(s, "off-axis angle       {:.4}°", Num(d.off_axis_angle_deg));
    let _ = writeln!(s, "reflected focal      {:.4} mm (f/{:.3})", Num(d.reflected_focal_mm), Num(d.focal_ratio));
    let _ = writeln!(s, "segment tilt         {:.4}° (normal at the segment centre from the parent axis)", Num(d.segment_tilt_deg));
    let _ = writeln!(
        s,
        "segment centre       y {:.3} mm, sag {:.4} mm; depth across the segment {:.4} mm",
        Num(d.segment_center_mm[0]),
        Num(d.segment_center_mm[1]),
        Num(d.segment_depth_mm)
    );
    let f = &d.feed;
    let _ = writeln!(
        s,
        "feed at the focus    [{:.3}, {:.3}] mm, pointing {:.4}° (layout), {:.4}° off the parent axis",
        Num(f.position_mm[0]),
        Num(f.position_mm[1]),
        Num(f.pointing_deg),
        Num(f.off_axis_deg)
    );
    let _ = writeln!(
        s,
        "rim seen from feed   {:.4}° to {:.4}° off axis: bisector {:.4}°, half-angle {:.4}°",
        Num(f.rim_angles_deg[0]),
        Num(f.rim_angles_deg[1]),
        Num(f.bisector_off_axis_deg),
        Num(f.half_angle_deg)
    );
    warnings(&mut s, &d.warnings);
    // The same geometry feeds an offset solar dish (the page's card says so too).
    let _ = writeln!(
        s,
        "\nCaution: turned toward the sun, such a segment concentrates sunlight at the feed: burns, fire and eye injury \
         in an instant. Never look along the beam; follow local codes and qualified practice."
    );
    Ok(s)
}

pub fn compare(a: CompareArgs) -> Result<String, Failure> {
    let conics = parse_conics(&a.conics).map_err(input)?;
    let c = compare_conics(a.radius, a.diameter, &conics, a.wavelength).map_err(input)?;
    if a.json {
        return Ok(to_json(&c));
    }
    let mut s = String::new();
    let _ = writeln!(
        s,
        "R = {} mm, D = {} mm (f/{:.3}), λ = {} nm; wavefront at best focus, collimated on-axis beam",
        Num(c.radius_mm),
        Num(c.diameter_mm),
        Num(c.focal_ratio),
        Num(c.wavelength_nm)
    );
    let _ = writeln!(
        s,
        "{:>10} {:>13} {:>16} {:>10} {:>10} {:>8} {:>14} {:>12}",
        "conic", "edge sag mm", "vs sphere µm P-V", "P-V waves", "RMS waves", "Strehl", "BFS radius mm", "removal µm"
    );
    for r in &c.conics {
        let _ = writeln!(
            s,
            "{:>10} {:>13.6} {:>16.4} {:>10.4} {:>10.4} {:>8.4} {:>14.3} {:>12.4}",
            Num(r.conic),
            Num(r.edge_sag_mm),
            Num(r.departure_pv_um),
            Num(r.wavefront_pv_waves),
            Num(r.wavefront_rms_waves),
            Num(r.strehl_estimate),
            Num(r.best_fit_sphere_radius_mm),
            Num(r.removal_depth_um)
        );
    }
    let _ = writeln!(
        s,
        "a sphere of this diameter keeps λ/4 P-V down to f/{:.3} (third order; exact f/{:.3})",
        Num(c.sphere_fastest_f_ratio),
        Num(c.sphere_fastest_f_ratio_exact)
    );
    let _ = writeln!(s, "a conic error of ±{:.4} costs λ/4 P-V (third order)", Num(c.conic_tolerance_quarter_wave));
    Ok(s)
}

pub fn zones(a: ZonesArgs) -> Result<String, Failure> {
    let source = TestSource::parse(&a.source).map_err(input)?;
    if a.zones < 1 {
        return Err(Failure::input(format!("--zones: must be at least 1 (got {})", a.zones)));
    }
    let n = usize::try_from(a.zones).unwrap_or(usize::MAX);
    let t = zone_table(a.radius, a.conic, a.diameter, n, source, a.wavelength).map_err(input)?;
    if a.json {
        return Ok(to_json(&t));
    }
    let mut s = String::new();
    let _ = writeln!(
        s,
        "R = {} mm, K = {}, D = {} mm, {} source; readings from the vertex centre of curvature, + away from the mirror",
        Num(t.radius_mm),
        Num(t.conic),
        Num(t.diameter_mm),
        t.source
    );
    let _ = writeln!(
        s,
        "{:>5} {:>10} {:>10} {:>10} {:>12} {:>12} {:>14}",
        "zone", "inner mm", "outer mm", "r mm", "reading mm", "remove µm", "departure λ"
    );
    for (i, z) in t.zones.iter().enumerate() {
        let _ = writeln!(
            s,
            "{:>5} {:>10.3} {:>10.3} {:>10.3} {:>12.5} {:>12.4} {:>14.4}",
            i + 1,
            Num(z.inner_mm),
            Num(z.outer_mm),
            Num(z.r_mm),
            Num(z.reading_mm),
            Num(z.removal_um),
            Num(z.departure_waves)
        );
    }
    let _ = writeln!(
        s,
        "best-fit sphere R = {:.3} mm; deepest glass to remove {:.4} µm",
        Num(t.best_fit_sphere_radius_mm),
        Num(t.removal_depth_um)
    );
    Ok(s)
}
