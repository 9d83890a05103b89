//! A zonal mask template as SVG at 1:1 scale: the document's width and
//! height are given in millimetres and its user unit is one millimetre, so
//! printed at 100 % it lays on the mirror. It shows the mirror's rim, the
//! zone edges a√(X/N) of [`super::zones::zone_edges`] with the
//! openings along the horizontal diameter that the zones are read through,
//! a centre mark, and a scale bar to check the print.

use super::zones::{zone_edges, MAX_ZONES};
use super::{bad, positive};
use crate::error::{InputError, Num};
use std::fmt::Write as _;

/// Margin around the mirror, mm.
const MARGIN_MM: f64 = 12.0;
/// Height of the strip below the mirror for the scale bar and notes, mm.
const FOOTER_MM: f64 = 30.0;
/// Largest mirror the template draws, mm.
pub const MAX_MASK_DIAMETER_MM: f64 = 5000.0;

/// The longest round scale bar (10, 20, 50, 100 … mm) that fits `width`.
fn scale_bar(width: f64) -> f64 {
    let mut best = 10.0;
    for step in [10.0, 20.0, 50.0, 100.0, 200.0, 500.0, 1000.0, 2000.0] {
        if step <= width {
            best = step;
        }
    }
    best
}

/// The template for a mirror of `diameter` mm with `zones` equal-area zones.
pub fn zonal_mask_svg(diameter: f64, zones: usize) -> Result<String, InputError> {
    let d = positive("diameter", diameter)?;
    if d > MAX_MASK_DIAMETER_MM {
        return Err(bad("diameter", format!("a printed mask takes at most {MAX_MASK_DIAMETER_MM} mm")));
    }
    if zones == 0 || zones > MAX_ZONES {
        return Err(bad("zones", format!("must be between 1 and {MAX_ZONES} (got {zones})")));
    }
    let a = 0.5 * d;
    let w = d + 2.0 * MARGIN_MM;
    let h = d + 2.0 * MARGIN_MM + FOOTER_MM;
    let (cx, cy) = (MARGIN_MM + a, MARGIN_MM + a);
    let edges = zone_edges(d, zones);
    let font = (d / 40.0).clamp(2.5, 6.0);
    let mut s = String::new();
    let _ = writeln!(s, r##"<?xml version="1.0" encoding="UTF-8"?>"##);
    let _ = writeln!(
        s,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{w:.3}mm" height="{h:.3}mm" viewBox="0 0 {w:.3} {h:.3}" font-family="sans-serif">"#
    );
    let _ = writeln!(s, r##"<title>Zonal mask, D = {} mm, {zones} zones of equal area</title>"##, Num(d));
    let _ = writeln!(s, r##"<rect x="0" y="0" width="{w:.3}" height="{h:.3}" fill="#fff"/>"##);
    let _ = writeln!(s, r##"<g fill="none" stroke="#000" stroke-width="0.3">"##);
    // Rim and zone edges.
    for (i, &r) in edges.iter().enumerate().skip(1) {
        let width = if i == zones { 0.5 } else { 0.3 };
        let _ = writeln!(s, r##"<circle class="zone-edge" cx="{cx:.4}" cy="{cy:.4}" r="{r:.4}" stroke-width="{width}"/>"##);
    }
    // Openings along the horizontal diameter: one window per zone on each side.
    let win = (d / 12.0).clamp(4.0, 25.0);
    for e in edges.windows(2) {
        for side in [-1.0, 1.0] {
            let (x0, x1) = (cx + side * e[0], cx + side * e[1]);
            let x = x0.min(x1);
            let _ = writeln!(
                s,
                r##"<rect class="opening" x="{x:.4}" y="{:.4}" width="{:.4}" height="{win:.4}" stroke-dasharray="1.5 1"/>"##,
                cy - 0.5 * win,
                (x1 - x0).abs()
            );
        }
    }
    // Centre mark.
    let arm = (d / 20.0).clamp(3.0, 10.0);
    let _ = writeln!(
        s,
        r##"<path class="centre-mark" d="M {:.4} {cy:.4} H {:.4} M {cx:.4} {:.4} V {:.4}" stroke-width="0.25"/>"##,
        cx - arm,
        cx + arm,
        cy - arm,
        cy + arm
    );
    let _ = writeln!(s, "</g>");
    // Zone numbers and edge radii.
    let _ = writeln!(s, r##"<g font-size="{font:.2}" fill="#000" text-anchor="middle">"##);
    for (i, e) in edges.windows(2).enumerate() {
        let x = cx + 0.5 * (e[0] + e[1]);
        let _ = writeln!(s, r##"<text x="{x:.3}" y="{:.3}">{}</text>"##, cy - 0.5 * win - 1.0, i + 1);
    }
    for &r in edges.iter().skip(1) {
        let _ = writeln!(s, r##"<text x="{:.3}" y="{:.3}" font-size="{:.2}">{:.1}</text>"##, cx - r, cy + 0.5 * win + font + 0.5, 0.8 * font, r);
    }
    let _ = writeln!(s, "</g>");
    // Scale bar with 10 mm ticks.
    let bar = scale_bar(d);
    let (bx, by) = (MARGIN_MM, d + 2.0 * MARGIN_MM + 8.0);
    let _ = writeln!(s, r##"<g class="scale-bar" stroke="#000" stroke-width="0.4">"##);
    let _ = writeln!(s, r##"<path d="M {bx:.3} {by:.3} H {:.3}"/>"##, bx + bar);
    let ticks = (bar / 10.0).round() as usize;
    for t in 0..=ticks {
        let x = bx + bar * t as f64 / ticks as f64;
        let len = if t == 0 || t == ticks { 4.0 } else { 2.0 };
        let _ = writeln!(s, r##"<path d="M {x:.3} {by:.3} V {:.3}"/>"##, by - len);
    }
    let _ = writeln!(s, "</g>");
    let _ = writeln!(
        s,
        r##"<text x="{bx:.3}" y="{:.3}" font-size="3.5">This bar is {} mm long: print at 100 % (no fit to page) and measure it.</text>"##,
        by + 6.0,
        Num(bar)
    );
    let _ = writeln!(
        s,
        r##"<text x="{bx:.3}" y="{:.3}" font-size="3.5">D = {} mm, {zones} zones of equal area; edges a√(X/N) mm from the centre, as labelled.</text>"##,
        by + 11.0,
        Num(d)
    );
    let _ = writeln!(s, "</svg>");
    if !edges.iter().all(|e| e.is_finite()) {
        return Err(bad("diameter", "gives zone edges that are not finite"));
    }
    Ok(s)
}
