//! Pixels for the page: a perceptually even colour map of our own making,
//! and RGBA images of flux maps and caustic rasters. Plain functions over
//! slices, so the wasm glue only hands the buffers to a canvas.
//!
//! # The colour map
//!
//! Five anchor colours, chosen here in OKLCh (lightness, chroma, hue), run
//! from a deep blue-violet through rose and orange to a pale yellow with
//! lightness rising at every anchor. Between anchors the colour is
//! interpolated linearly in OKLab (Ottosson, "A perceptual color space for
//! image processing", 2020), each sample is brought into the sRGB gamut by
//! lowering its chroma at fixed lightness and hue, and the resulting path
//! is re-spaced by its OKLab arc length, so equal steps in value give
//! equal perceived colour steps and lightness never falls.

use std::sync::OnceLock;

/// Entries in the colour map.
pub const MAP_SIZE: usize = 256;

/// Anchors of the flux colour map as (L, C, h°) in OKLCh.
const ANCHORS: [[f64; 3]; 5] = [
    [0.20, 0.07, 275.0],
    [0.40, 0.15, 305.0],
    [0.60, 0.17, 5.0],
    [0.76, 0.15, 52.0],
    [0.95, 0.10, 100.0],
];

/// OKLab (L, a, b) to linear sRGB (Ottosson 2020; matrices as published).
pub fn oklab_to_linear_srgb([l, a, b]: [f64; 3]) -> [f64; 3] {
    let l_ = l + 0.396_337_777_4 * a + 0.215_803_757_3 * b;
    let m_ = l - 0.105_561_345_8 * a - 0.063_854_172_8 * b;
    let s_ = l - 0.089_484_177_5 * a - 1.291_485_548_0 * b;
    let (l3, m3, s3) = (l_ * l_ * l_, m_ * m_ * m_, s_ * s_ * s_);
    [
        4.076_741_662_1 * l3 - 3.307_711_591_3 * m3 + 0.230_969_929_2 * s3,
        -1.268_438_004_6 * l3 + 2.609_757_401_1 * m3 - 0.341_319_396_5 * s3,
        -0.004_196_086_3 * l3 - 0.703_418_614_7 * m3 + 1.707_614_701_0 * s3,
    ]
}

/// Linear sRGB to OKLab (Ottosson 2020).
pub fn linear_srgb_to_oklab([r, g, b]: [f64; 3]) -> [f64; 3] {
    let l = (0.412_221_470_8 * r + 0.536_332_536_3 * g + 0.051_445_992_9 * b).cbrt();
    let m = (0.211_903_498_2 * r + 0.680_699_545_1 * g + 0.107_396_956_6 * b).cbrt();
    let s = (0.088_302_461_9 * r + 0.281_718_837_6 * g + 0.629_978_700_5 * b).cbrt();
    [
        0.210_454_255_3 * l + 0.793_617_785_0 * m - 0.004_072_046_8 * s,
        1.977_998_495_1 * l - 2.428_592_205_0 * m + 0.450_593_709_9 * s,
        0.025_904_037_1 * l + 0.782_771_766_2 * m - 0.808_675_766_0 * s,
    ]
}

/// sRGB transfer function (IEC 61966-2-1), linear 0..1 to encoded 0..1.
pub fn srgb_encode(c: f64) -> f64 {
    let c = c.clamp(0.0, 1.0);
    if c <= 0.003_130_8 { 12.92 * c } else { 1.055 * c.powf(1.0 / 2.4) - 0.055 }
}

/// Inverse of [`srgb_encode`].
pub fn srgb_decode(c: f64) -> f64 {
    if c <= 0.040_45 { c / 12.92 } else { ((c + 0.055) / 1.055).powf(2.4) }
}

fn in_gamut(rgb: [f64; 3]) -> bool {
    const TOL: f64 = 1e-9;
    rgb.iter().all(|&c| (-TOL..=1.0 + TOL).contains(&c))
}

/// The OKLab colour nearest to `lab` inside the sRGB gamut at the same
/// lightness and hue (chroma lowered by bisection, 40 halvings).
fn clip_chroma(lab: [f64; 3]) -> [f64; 3] {
    if in_gamut(oklab_to_linear_srgb(lab)) {
        return lab;
    }
    let (mut lo, mut hi) = (0.0, 1.0);
    for _ in 0..40 {
        let mid = 0.5 * (lo + hi);
        if in_gamut(oklab_to_linear_srgb([lab[0], lab[1] * mid, lab[2] * mid])) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    [lab[0], lab[1] * lo, lab[2] * lo]
}

fn lch_to_lab([l, c, h]: [f64; 3]) -> [f64; 3] {
    let (s, co) = h.to_radians().sin_cos();
    [l, c * co, c * s]
}

fn dist(a: [f64; 3], b: [f64; 3]) -> f64 {
    ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt()
}

/// Point at parameter `x` (0 ..= len − 1) along a polyline.
fn along(path: &[[f64; 3]], x: f64) -> [f64; 3] {
    let j = (x.floor() as usize).min(path.len() - 2);
    let t = x - j as f64;
    std::array::from_fn(|i| path[j][i] + t * (path[j + 1][i] - path[j][i]))
}

/// Walks `steps` chords of OKLab length `c` along `path` from its start;
/// returns the parameter of every point, or `None` when the path ends
/// first.
fn chord_walk(path: &[[f64; 3]], c: f64, steps: usize) -> Option<Vec<f64>> {
    let end = (path.len() - 1) as f64;
    let mut xs = vec![0.0];
    let mut x = 0.0;
    for _ in 0..steps {
        let p = along(path, x);
        // First fine vertex at least `c` away, then bisect inside its segment.
        let mut j = x.floor() as usize + 1;
        while j < path.len() && dist(p, path[j]) < c {
            j += 1;
        }
        if j >= path.len() {
            return None;
        }
        let (mut lo, mut hi) = (x.max((j - 1) as f64), j as f64);
        for _ in 0..60 {
            let mid = 0.5 * (lo + hi);
            if dist(p, along(path, mid)) < c { lo = mid } else { hi = mid }
        }
        x = hi.min(end);
        xs.push(x);
    }
    Some(xs)
}

/// The colour map in OKLab, [`MAP_SIZE`] entries a constant OKLab distance
/// apart (see the module notes).
pub fn colour_map_oklab() -> &'static [[f64; 3]; MAP_SIZE] {
    static MAP: OnceLock<[[f64; 3]; MAP_SIZE]> = OnceLock::new();
    MAP.get_or_init(|| {
        const FINE: usize = 256; // samples per anchor segment
        let labs: Vec<[f64; 3]> = ANCHORS.iter().map(|&a| lch_to_lab(a)).collect();
        let mut path = Vec::with_capacity(FINE * (labs.len() - 1) + 1);
        for w in labs.windows(2) {
            for k in 0..FINE {
                let t = k as f64 / FINE as f64;
                path.push(clip_chroma(std::array::from_fn(|i| w[0][i] + t * (w[1][i] - w[0][i]))));
            }
        }
        path.push(clip_chroma(labs[labs.len() - 1]));
        // The chord length whose MAP_SIZE − 1 steps just reach the end
        // (bisection: a shorter chord stops early, a longer one runs out).
        let arc: f64 = path.windows(2).map(|w| dist(w[0], w[1])).sum();
        let end = (path.len() - 1) as f64;
        let (mut lo, mut hi) = (0.5 * arc / (MAP_SIZE - 1) as f64, arc / (MAP_SIZE - 1) as f64 * 1.0001);
        let mut best = None;
        for _ in 0..60 {
            let c = 0.5 * (lo + hi);
            match chord_walk(&path, c, MAP_SIZE - 1) {
                Some(xs) if xs[MAP_SIZE - 1] < end => {
                    lo = c;
                    best = Some(xs);
                }
                _ => hi = c,
            }
        }
        let mut xs = best.unwrap_or_else(|| (0..MAP_SIZE).map(|k| end * k as f64 / (MAP_SIZE - 1) as f64).collect());
        xs[MAP_SIZE - 1] = end;
        std::array::from_fn(|k| clip_chroma(along(&path, xs[k])))
    })
}

/// The colour map as 8-bit sRGB.
pub fn colour_map_srgb() -> &'static [[u8; 3]; MAP_SIZE] {
    static MAP: OnceLock<[[u8; 3]; MAP_SIZE]> = OnceLock::new();
    MAP.get_or_init(|| {
        let lab = colour_map_oklab();
        std::array::from_fn(|k| {
            let rgb = oklab_to_linear_srgb(lab[k]);
            std::array::from_fn(|i| (srgb_encode(rgb[i]) * 255.0).round() as u8)
        })
    })
}

/// RGBA pixels of `values` through the colour map, `lo` → first entry,
/// `hi` → last (clamped). Non-finite values and an empty or inverted
/// range give transparent pixels.
pub fn map_rgba(values: &[f64], lo: f64, hi: f64) -> Vec<u8> {
    let map = colour_map_srgb();
    let ok = lo.is_finite() && hi.is_finite() && hi > lo;
    let mut out = vec![0u8; 4 * values.len()];
    for (px, &v) in out.chunks_exact_mut(4).zip(values) {
        if !ok || !v.is_finite() {
            continue;
        }
        let t = ((v - lo) / (hi - lo)).clamp(0.0, 1.0);
        let c = map[(t * (MAP_SIZE - 1) as f64).round() as usize];
        px.copy_from_slice(&[c[0], c[1], c[2], 255]);
    }
    out
}

/// Densities above this quantile of the lit pixels get full opacity in
/// [`caustic_rgba`] (the brightest few pixels of a sharp focus would
/// otherwise wash out everything else).
pub const CAUSTIC_TOP_QUANTILE: f64 = 0.997;

/// Opacity of a pixel at the median density of the lit pixels (a region
/// crossed by evenly spread rays): a faint tint, so that only bunching
/// stands out.
pub const CAUSTIC_FLOOR: f64 = 0.12;

/// RGBA pixels of a caustic density raster in one `colour`, the density
/// carried by opacity. With m the median of the lit pixels' densities and
/// p their [`CAUSTIC_TOP_QUANTILE`] quantile, a pixel of density d gets
/// α = F·d/m below the median and α = F + (1 − F)·ln(d/m)/ln(p/m) above
/// it (F = [`CAUSTIC_FLOOR`], clamped to 1): evenly spread rays make a
/// faint wash and the envelopes where rays bunch stand out on a log scale.
pub fn caustic_rgba(density: &[f32], colour: [u8; 3]) -> Vec<u8> {
    let mut lit: Vec<f32> = density.iter().copied().filter(|d| *d > 0.0 && d.is_finite()).collect();
    let mut out = vec![0u8; 4 * density.len()];
    if lit.is_empty() {
        return out;
    }
    let n = lit.len();
    let mut pick = |q: f64| {
        let k = ((q * (n - 1) as f64).round() as usize).min(n - 1);
        *lit.select_nth_unstable_by(k, f32::total_cmp).1 as f64
    };
    let m = pick(0.5);
    let p = pick(CAUSTIC_TOP_QUANTILE).max(m * 1.01);
    let span = (p / m).ln();
    for (px, &d) in out.chunks_exact_mut(4).zip(density) {
        if d > 0.0 && d.is_finite() {
            let r = d as f64 / m;
            let a = if r <= 1.0 { CAUSTIC_FLOOR * r } else { CAUSTIC_FLOOR + (1.0 - CAUSTIC_FLOOR) * (r.ln() / span) };
            px.copy_from_slice(&[colour[0], colour[1], colour[2], (a.clamp(0.0, 1.0) * 255.0).round() as u8]);
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rel(a: f64, b: f64) -> f64 {
        (a - b).abs() / a.abs().max(b.abs()).max(1e-300)
    }

    /// Ottosson 2020 lists white as L = 1, a = b = 0 (to the printed digits).
    #[test]
    fn oklab_white_is_unit_lightness() {
        let w = linear_srgb_to_oklab([1.0, 1.0, 1.0]);
        assert!(rel(w[0], 1.0) < 1e-6, "L {}", w[0]);
        assert!(w[1].abs() < 1e-6 && w[2].abs() < 1e-6, "{w:?}");
    }

    /// The two published matrices are inverses (built from a known answer:
    /// the round trip of a few colours).
    #[test]
    fn oklab_round_trip() {
        for rgb in [[0.2, 0.5, 0.9], [0.9, 0.1, 0.05], [0.01, 0.3, 0.02]] {
            let back = oklab_to_linear_srgb(linear_srgb_to_oklab(rgb));
            for i in 0..3 {
                // The published coefficients have 10 digits.
                assert!(rel(back[i], rgb[i]) < 1e-5, "{rgb:?} -> {back:?}");
            }
        }
    }

    /// sRGB transfer function: 0.5 encoded is 0.214 linear (IEC 61966-2-1,
    /// value from memory), and the pair round-trips.
    #[test]
    fn srgb_transfer() {
        assert!(rel(srgb_decode(0.5), 0.214_041) < 1e-5);
        for c in [0.001, 0.02, 0.3, 0.9] {
            assert!(rel(srgb_decode(srgb_encode(c)), c) < 1e-9);
        }
    }

    /// Lightness rises through the whole map (common practice for a
    /// sequential map: darker means less).
    #[test]
    fn colour_map_lightness_rises() {
        let m = colour_map_oklab();
        for k in 1..MAP_SIZE {
            assert!(m[k][0] > m[k - 1][0], "L falls at entry {k}: {} -> {}", m[k - 1][0], m[k][0]);
        }
        assert!(m[MAP_SIZE - 1][0] - m[0][0] > 0.6, "lightness range");
    }

    /// Equal steps of the map are equal colour differences in OKLab to
    /// within 2 % (by construction; checks the chord spacing).
    #[test]
    fn colour_map_steps_are_even() {
        let m = colour_map_oklab();
        let steps: Vec<f64> = (1..MAP_SIZE).map(|k| dist(m[k - 1], m[k])).collect();
        let mean = steps.iter().sum::<f64>() / steps.len() as f64;
        for (k, s) in steps.iter().enumerate() {
            assert!(rel(*s, mean) < 0.02, "step {k}: {s} vs mean {mean}");
        }
    }

    /// Every entry is a real sRGB colour (clipped into the gamut).
    #[test]
    fn colour_map_in_gamut() {
        for lab in colour_map_oklab() {
            let rgb = oklab_to_linear_srgb(*lab);
            assert!(rgb.iter().all(|c| (-1e-6..=1.0 + 1e-6).contains(c)), "{lab:?} -> {rgb:?}");
        }
    }

    #[test]
    fn map_rgba_ends_and_bad_values() {
        let px = map_rgba(&[0.0, 10.0, 20.0, f64::NAN], 0.0, 10.0);
        let m = colour_map_srgb();
        assert_eq!(&px[0..3], &m[0]);
        assert_eq!(&px[4..7], &m[MAP_SIZE - 1]);
        assert_eq!(&px[8..11], &m[MAP_SIZE - 1], "clamped above hi");
        assert_eq!(px[15], 0, "NaN is transparent");
        assert!(map_rgba(&[1.0], 1.0, 1.0).iter().all(|&b| b == 0), "empty range");
    }

    #[test]
    fn caustic_opacity_follows_density() {
        // Mostly single rays (density 1), bunching up to 1000 at the end.
        let mut d = vec![1.0f32; 1000];
        d[0] = 0.0;
        for (i, v) in d.iter_mut().enumerate().skip(900) {
            *v = (i - 899) as f32 * 10.0;
        }
        let px = caustic_rgba(&d, [10, 20, 30]);
        assert_eq!(px[3], 0, "empty pixel stays transparent");
        let alpha: Vec<u8> = px.chunks_exact(4).skip(1).map(|p| p[3]).collect();
        assert!(alpha.windows(2).all(|w| w[1] >= w[0]), "opacity rises with density");
        assert_eq!(*alpha.last().unwrap(), 255);
        let floor = (CAUSTIC_FLOOR * 255.0).round() as u8;
        assert_eq!(alpha[0], floor, "evenly spread rays make a faint wash");
        assert_eq!(&px[4..7], &[10, 20, 30]);
        assert!(caustic_rgba(&[0.0; 4], [1, 2, 3]).iter().all(|&b| b == 0));
    }
}
