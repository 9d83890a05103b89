//! Figures for people: the number formatter the command line's tables and
//! the page (www/js/format.js) share, so one value reads the same way
//! everywhere. tests/format_cases.json lists the cases both are checked
//! against.
//!
//! - [`sig`]: about `n` significant digits, trailing zeros dropped, an
//!   exponent form (`1.58×10⁷`) below 10⁻⁴ and from 10⁶, thousands
//!   grouped from 10⁴ by a narrow no-break space (U+202F: thin, and no line
//!   breaks inside a number or between it and its unit), a true minus sign, never a signed zero.
//! - [`length_mm`] / [`spot_um`]: a length in the readable unit — µm below
//!   1 mm, mm, m from 1 m (a sun's spot on a facade reads 8.6 m, not
//!   8.6×10⁶ µm).
//! - [`position_mm`]: a position or focus shift in a scene of a given size:
//!   0 below [`SCENE_NOISE_REL`] of that size (rounding and sampling noise
//!   of an exact answer), and no digit finer than it.
//!
//! # Tolerance
//! Lengths below [`LENGTH_NOISE_MM`] (0.01 nm) are rounding noise of an
//! exact result (a perfect focus gives an RMS radius of 10⁻¹¹ µm) and read
//! 0. [`SCENE_NOISE_REL`] is a micrometre per metre of scene.

use crate::layout::{Element, Layout, Source};

/// Lengths below this (mm) are rounding noise and read 0: 0.01 nm.
pub const LENGTH_NOISE_MM: f64 = 1e-8;
/// A position or shift below this fraction of the scene's size reads 0.
pub const SCENE_NOISE_REL: f64 = 1e-6;

const THIN: char = '\u{202f}';
const MINUS: char = '\u{2212}';

/// `v` with about `n` significant digits (see the module docs).
pub fn sig(v: f64, n: usize) -> String {
    let n = n.max(1);
    if v.is_nan() {
        return "–".into();
    }
    if v.is_infinite() {
        return if v > 0.0 { "∞".into() } else { format!("{MINUS}∞") };
    }
    if v == 0.0 {
        return "0".into();
    }
    let a = v.abs();
    let body = if !(1e-4..1e6).contains(&a) {
        let s = format!("{:.*e}", n - 1, a);
        let (m, e) = s.split_once('e').expect("exponent form");
        let m = trim_zeros(m);
        let e: i32 = e.parse().expect("exponent");
        format!("{m}×10{}", superscript(e))
    } else {
        let digits = (n as i32 - 1 - a.log10().floor() as i32).clamp(0, 8) as usize;
        let s = trim_zeros(&format!("{a:.digits$}"));
        if a >= 1e4 { group(&s) } else { s }
    };
    if v < 0.0 && body.bytes().any(|c| c.is_ascii_digit() && c != b'0') {
        format!("{MINUS}{body}")
    } else {
        body
    }
}

fn trim_zeros(s: &str) -> String {
    if s.contains('.') { s.trim_end_matches('0').trim_end_matches('.').to_string() } else { s.to_string() }
}

fn group(s: &str) -> String {
    let (int, frac) = s.split_once('.').map_or((s, None), |(i, f)| (i, Some(f)));
    let mut out = String::new();
    for (i, c) in int.chars().enumerate() {
        if i > 0 && (int.len() - i) % 3 == 0 {
            out.push(THIN);
        }
        out.push(c);
    }
    if let Some(f) = frac {
        out.push('.');
        out.push_str(f);
    }
    out
}

fn superscript(e: i32) -> String {
    e.to_string()
        .chars()
        .map(|c| match c {
            '-' => '⁻',
            d => ['⁰', '¹', '²', '³', '⁴', '⁵', '⁶', '⁷', '⁸', '⁹'][d.to_digit(10).unwrap_or(0) as usize],
        })
        .collect()
}

/// The readable unit of a length of `mm`: `µm` below 1 mm, `m` from 1 m.
pub fn length_unit(mm: f64) -> &'static str {
    let a = mm.abs();
    if a == 0.0 || !a.is_finite() {
        "mm"
    } else if a < 1.0 {
        "µm"
    } else if a >= 1000.0 {
        "m"
    } else {
        "mm"
    }
}

fn in_unit(mm: f64, unit: &str) -> f64 {
    match unit {
        "µm" => mm * 1000.0,
        "m" => mm / 1000.0,
        _ => mm,
    }
}

/// Rounds `v` to `n` significant digits (the value as it will print).
fn rounded(v: f64, n: usize) -> f64 {
    format!("{:.*e}", n.max(1) - 1, v).parse().unwrap_or(v)
}

fn length_in(mm: f64, n: usize, zero_unit: &str) -> String {
    if mm.is_nan() {
        return "–".into();
    }
    let clean = if mm.abs() < LENGTH_NOISE_MM { 0.0 } else { mm };
    let unit = if clean == 0.0 { zero_unit } else { length_unit(rounded(clean, n)) };
    format!("{}{THIN}{unit}", sig(in_unit(clean, unit), n))
}

/// A length in mm with its unit, `n` significant digits: "2.5 m", "400 µm".
pub fn length_mm(mm: f64, n: usize) -> String {
    length_in(mm, n, "mm")
}

/// A spot size given in µm, shown like any length: 4562 µm reads "4.562 mm".
pub fn spot_um(um: f64, n: usize) -> String {
    length_in(um / 1000.0, n, "µm")
}

/// Size of a layout in mm: the largest coordinate or extent of its parts
/// (at least 1 mm); the scale [`position_mm`] judges noise against.
pub fn scene_scale(layout: &Layout) -> f64 {
    let mut s: f64 = 1.0;
    let mut grow = |v: f64| {
        if v.is_finite() {
            s = s.max(v.abs());
        }
    };
    for e in &layout.elements {
        match e {
            Element::Mirror(m) => {
                m.vertex.iter().for_each(|&v| grow(v));
                grow(m.aperture.diameter);
                m.length.into_iter().for_each(&mut grow);
                m.profile.radius.into_iter().for_each(&mut grow);
            }
            Element::Screen(c) => {
                c.center.iter().for_each(|&v| grow(v));
                grow(c.size);
            }
        }
    }
    for src in &layout.sources {
        match src {
            Source::Beam(b) => {
                b.center.iter().for_each(|&v| grow(v));
                grow(b.diameter);
            }
            Source::Point(p) => p.center.iter().for_each(|&v| grow(v)),
        }
    }
    s
}

/// A position or shift in mm in a scene of `scale` mm: "0" below the
/// scene's noise, else up to `n` significant digits, none finer than it.
pub fn position_mm(mm: f64, scale: f64, n: usize) -> String {
    if !mm.is_finite() {
        return sig(mm, n);
    }
    let res = SCENE_NOISE_REL * if scale > 0.0 { scale } else { 1.0 };
    if mm.abs() < res {
        return "0".into();
    }
    let lead = mm.abs().log10().floor() as i64;
    let finest = res.log10().floor() as i64;
    sig(mm, (lead - finest + 1).clamp(1, n as i64) as usize)
}
