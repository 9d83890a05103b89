//! `ronchi` and `knife`: the simulated mirror tests. Argument parsing,
//! reading the measured CSV, printing and writing the PNG around
//! `catoptric::design::{ronchi, knife}`.

use crate::Failure;
use catoptric::design::{
    knife_picture, knife_view, parse_departure_csv, ronchi_picture, ronchigram, KnifeSpec, MirrorPicture, RonchiSpec,
    TestSource,
};
use catoptric::error::{printable, Num};
use catoptric::InputError;
use clap::Args;
use std::fmt::Write as _;

/// Side of the written picture, pixels.
const PNG_SIZE: usize = 512;
/// Largest measured CSV read, bytes.
const MAX_CSV_BYTES: u64 = 1 << 20;

/// The mirror and the test's common flags.
#[derive(Args)]
pub struct StandArgs {
    /// Vertex radius of curvature, mm (concave, > 0).
    #[arg(long, allow_hyphen_values = true)]
    radius: f64,
    /// Conic constant of the target surface.
    #[arg(long, allow_hyphen_values = true)]
    conic: f64,
    /// Mirror diameter, mm.
    #[arg(long, allow_hyphen_values = true)]
    diameter: f64,
    /// moving (source on the axis in the grating or knife plane) or fixed
    /// (source at the vertex centre of curvature).
    #[arg(long, default_value = "moving")]
    source: String,
    /// Measured profile: CSV of radius (mm), departure from the design sag (µm).
    #[arg(long)]
    measured: Option<String>,
    /// Write the picture the eye sees to this PNG file.
    #[arg(long)]
    png: Option<String>,
    #[arg(long)]
    json: bool,
}

#[derive(Args)]
pub struct RonchiArgs {
    #[command(flatten)]
    stand: StandArgs,
    /// Grating lines per mm (one line = one opaque and one clear ruling).
    #[arg(long, allow_hyphen_values = true)]
    lines_per_mm: f64,
    /// Grating position from the vertex centre of curvature, mm, + away from the mirror.
    #[arg(long, allow_hyphen_values = true)]
    offset_mm: f64,
}

#[derive(Args)]
pub struct KnifeArgs {
    #[command(flatten)]
    stand: StandArgs,
    /// Knife position from the vertex centre of curvature, mm, + away from the mirror.
    #[arg(long, allow_hyphen_values = true)]
    knife_mm: f64,
    /// Lateral position of the knife's edge, mm; the knife covers x below it.
    #[arg(long, allow_hyphen_values = true, default_value_t = 0.0)]
    knife_x_mm: f64,
}

/// Core field name → flag (`lines_per_mm` → `--lines-per-mm`); the
/// measured profile's own fields (`measured[3]`, `csv line 7`) under `--measured`.
fn input(e: InputError) -> Failure {
    if e.field.starts_with("measured") || e.field.starts_with("csv") {
        return Failure::input(format!("--measured: {e}"));
    }
    Failure::input(format!("--{}: {}", e.field.replace('_', "-"), e.message))
}

/// Departure knots (ρ, Δz), mm.
type Knots = Vec<[f64; 2]>;

fn read_measured(path: &Option<String>) -> Result<Option<Knots>, Failure> {
    let Some(p) = path else { return Ok(None) };
    let cannot = |why: String| Failure::input(format!("--measured: cannot read {}: {why}", printable(p)));
    let meta = std::fs::metadata(p).map_err(|e| cannot(e.to_string()))?;
    if meta.len() > MAX_CSV_BYTES {
        return Err(cannot(format!("larger than {MAX_CSV_BYTES} bytes")));
    }
    let bytes = std::fs::read(p).map_err(|e| cannot(e.to_string()))?;
    let text = String::from_utf8(bytes).map_err(|_| cannot("not UTF-8 text".to_string()))?;
    parse_departure_csv(&text).map(Some).map_err(input)
}

fn write_png(path: &Option<String>, picture: impl FnOnce() -> Result<MirrorPicture, InputError>) -> Result<(), Failure> {
    let Some(p) = path else { return Ok(()) };
    let pic = picture().map_err(input)?;
    let cannot = |why: String| Failure::input(format!("--png: cannot write {}: {why}", printable(p)));
    let file = std::fs::File::create(p).map_err(|e| cannot(e.to_string()))?;
    let side = u32::try_from(pic.size).expect("picture sizes are capped");
    let mut enc = png::Encoder::new(std::io::BufWriter::new(file), side, side);
    enc.set_color(png::ColorType::Rgba);
    enc.set_depth(png::BitDepth::Eight);
    let mut w = enc.write_header().map_err(|e| cannot(e.to_string()))?;
    w.write_image_data(&pic.rgba()).map_err(|e| cannot(e.to_string()))?;
    w.finish().map_err(|e| cannot(e.to_string()))
}

fn to_json<T: serde::Serialize>(v: &T) -> String {
    serde_json::to_string_pretty(v).expect("reports always serialize")
}

/// The source and the measured knots of the common flags.
fn stand_inputs(a: &StandArgs) -> Result<(TestSource, Option<Knots>), Failure> {
    Ok((TestSource::parse(&a.source).map_err(input)?, read_measured(&a.measured)?))
}

/// First line of the text output: the mirror and what stands where.
fn header(a: &StandArgs, measured: bool, what: String, source: &str) -> String {
    format!(
        "R = {} mm, K = {}, D = {} mm{}; {what} from the vertex centre of curvature (+ outside), {source} source\n",
        Num(a.radius),
        Num(a.conic),
        Num(a.diameter),
        if measured { ", measured profile" } else { "" },
    )
}

const GEOMETRIC: &str = "geometric optics: no diffraction\n";

pub fn ronchi(a: RonchiArgs) -> Result<String, Failure> {
    let (source, measured) = stand_inputs(&a.stand)?;
    let st = &a.stand;
    let spec = RonchiSpec {
        radius: st.radius,
        conic: st.conic,
        diameter: st.diameter,
        lines_per_mm: a.lines_per_mm,
        offset_mm: a.offset_mm,
        source,
        measured: measured.as_deref(),
    };
    let r = ronchigram(&spec).map_err(input)?;
    write_png(&st.png, || ronchi_picture(&spec, PNG_SIZE))?;
    if st.json {
        return Ok(to_json(&r));
    }
    let what = format!("grating {} lines/mm at {} mm", Num(r.lines_per_mm), Num(r.offset_mm));
    let mut s = header(st, r.measured, what, &r.source);
    let _ = writeln!(s, "{} band edges along the horizontal radius, mm from the centre:", r.band_edges_mm.len());
    for chunk in r.band_edges_mm.chunks(8) {
        let line: Vec<String> = chunk.iter().map(|x| format!("{:.3}", Num(*x))).collect();
        let _ = writeln!(s, "  {}", line.join("  "));
    }
    s.push_str(GEOMETRIC);
    Ok(s)
}

pub fn knife(a: KnifeArgs) -> Result<String, Failure> {
    let (source, measured) = stand_inputs(&a.stand)?;
    let st = &a.stand;
    let spec = KnifeSpec {
        radius: st.radius,
        conic: st.conic,
        diameter: st.diameter,
        knife_mm: a.knife_mm,
        knife_x_mm: a.knife_x_mm,
        source,
        measured: measured.as_deref(),
    };
    let k = knife_view(&spec).map_err(input)?;
    write_png(&st.png, || knife_picture(&spec, PNG_SIZE))?;
    if st.json {
        return Ok(to_json(&k));
    }
    let what = format!("knife at {} mm", Num(k.knife_mm));
    let mut s = header(st, k.measured, what, &k.source);
    let null = match (k.null_radius_mm, k.whole_mirror_nulls) {
        (_, true) => "the whole mirror nulls at once".to_string(),
        (Some(r), false) => format!("the zone at r = {:.3} mm nulls", Num(r)),
        (None, false) => "no zone nulls".to_string(),
    };
    let _ = writeln!(s, "knife edge at x = {} mm, covering x below it", Num(k.knife_x_mm));
    let _ = writeln!(s, "{null}; {:.1}% of the mirror seen lit", Num(100.0 * k.lit_fraction));
    s.push_str(GEOMETRIC);
    Ok(s)
}
