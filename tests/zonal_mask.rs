//! The zonal mask template (SVG at 1:1 scale): zone edges at the
//! equal-area radii a√(X/N) (Berry, Build Your Own Telescope, 2nd ed. 1994;
//! Texereau), user units of one millimetre, and a scale bar as long as it
//! says.

use catoptric::design::zonal_mask_svg;

/// Values of attribute `name` on every element whose tag starts `tag`.
fn attrs(svg: &str, tag: &str, name: &str) -> Vec<String> {
    svg.split('<')
        .filter(|e| e.starts_with(tag))
        .filter_map(|e| {
            let at = e.find(&format!(" {name}=\""))? + name.len() + 3;
            Some(e[at..at + e[at..].find('"')?].to_string())
        })
        .collect()
}

#[test]
fn mask_edges_are_the_equal_area_radii_at_one_to_one_scale() {
    // a = 100, N = 5: edges 44.72, 63.25, 77.46, 89.44, 100 (Berry; worked by hand).
    let svg = zonal_mask_svg(200.0, 5).unwrap();
    let radii: Vec<f64> = attrs(&svg, "circle", "r").iter().map(|r| r.parse().unwrap()).collect();
    let want = [44.72136, 63.24555, 77.45967, 89.44272, 100.0];
    assert_eq!(radii.len(), want.len(), "{radii:?}");
    for (r, w) in radii.iter().zip(want) {
        assert!((r - w).abs() < 1e-3, "{r} vs {w}");
    }
    // 1:1 — the document size in mm equals the viewBox in user units.
    let w = &attrs(&svg, "svg", "width")[0];
    let h = &attrs(&svg, "svg", "height")[0];
    let vb = &attrs(&svg, "svg", "viewBox")[0];
    assert!(w.ends_with("mm") && h.ends_with("mm"));
    assert_eq!(vb, &format!("0 0 {} {}", w.trim_end_matches("mm"), h.trim_end_matches("mm")));
    assert!(svg.contains("centre-mark"));
    // The scale bar: its path runs the length its label states.
    assert!(svg.contains("This bar is 200 mm long"), "{svg}");
    let bar = svg.split("class=\"scale-bar\"").nth(1).unwrap();
    let d = &attrs(bar, "path", "d")[0];
    let nums: Vec<f64> = d.split_whitespace().filter_map(|t| t.parse().ok()).collect();
    assert!((nums[2] - nums[0] - 200.0).abs() < 1e-6, "{d}");
}

#[test]
fn mask_refuses_bad_input() {
    assert_eq!(zonal_mask_svg(0.0, 5).unwrap_err().field, "diameter");
    assert_eq!(zonal_mask_svg(200.0, 0).unwrap_err().field, "zones");
    assert_eq!(zonal_mask_svg(f64::NAN, 3).unwrap_err().field, "diameter");
    // The stated limits are inclusive: 5000 mm and 100 zones are drawn,
    // one step past either is refused naming its field.
    assert!(zonal_mask_svg(5000.0, 100).is_ok());
    assert_eq!(zonal_mask_svg(5000.5, 5).unwrap_err().field, "diameter");
    assert_eq!(zonal_mask_svg(200.0, 101).unwrap_err().field, "zones");
}

/// Numbers of attribute `name` on every element whose tag starts `tag`
/// and whose class is `class`.
fn nums(svg: &str, tag: &str, class: &str, name: &str) -> Vec<f64> {
    let marked: Vec<&str> = svg.split('<').filter(|e| e.starts_with(tag) && e.contains(&format!("class=\"{class}\""))).collect();
    marked.iter().flat_map(|e| attrs(&format!("<{e}"), tag, name)).map(|v| v.parse().unwrap()).collect()
}

#[test]
fn openings_sit_on_each_zone_either_side_of_the_centre() {
    // The zonal (Couder) screen: one opening over each zone on both sides
    // of the centre along a diameter, through which the zone is read
    // (Texereau, How to Make a Telescope, 2nd ed., ch. 4, from memory).
    // D = 200, N = 5: centre at the 12 mm margin plus a = 112 mm; edges as
    // above; openings D/12 = 16.67 mm tall, centred on the diameter.
    let svg = zonal_mask_svg(200.0, 5).unwrap();
    let edges = [0.0, 44.72136, 63.24555, 77.45967, 89.44272, 100.0];
    let (cx, cy, win) = (112.0, 112.0, 200.0 / 12.0);
    for v in nums(&svg, "circle", "zone-edge", "cx").iter().chain(&nums(&svg, "circle", "zone-edge", "cy")) {
        assert!((v - 112.0).abs() < 1e-9, "circles centred on the mirror: {v}");
    }
    let (xs, ws) = (nums(&svg, "rect", "opening", "x"), nums(&svg, "rect", "opening", "width"));
    let (ys, hs) = (nums(&svg, "rect", "opening", "y"), nums(&svg, "rect", "opening", "height"));
    assert_eq!(xs.len(), 10, "two openings per zone");
    let mut spans: Vec<(f64, f64)> = xs.iter().zip(&ws).map(|(&x, &w)| (x, x + w)).collect();
    spans.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut want: Vec<(f64, f64)> = edges.windows(2).flat_map(|e| [(cx - e[1], cx - e[0]), (cx + e[0], cx + e[1])]).collect();
    want.sort_by(|a, b| a.0.total_cmp(&b.0));
    for (got, w) in spans.iter().zip(&want) {
        assert!((got.0 - w.0).abs() < 1e-3 && (got.1 - w.1).abs() < 1e-3, "opening {got:?} vs {w:?}");
    }
    for (y, h) in ys.iter().zip(&hs) {
        assert!((h - win).abs() < 1e-3 && (y + 0.5 * h - cy).abs() < 1e-3, "opening y {y}, height {h}");
    }
    // The centre mark crosses at the centre: arms of D/20 = 10 mm.
    let mark = &attrs(&svg[svg.find("<path class=\"centre-mark\"").unwrap()..], "path", "d")[0];
    let v: Vec<f64> = mark.split_whitespace().filter_map(|t| t.parse().ok()).collect();
    assert_eq!(v, [102.0, 112.0, 122.0, 112.0, 102.0, 122.0], "{mark}");
    // Zone numbers over the middle of each zone's right-hand opening.
    let labels: Vec<f64> = svg.split('<').filter(|e| e.starts_with("text") && !e.contains("font-size")).map(|e| attrs(&format!("<{e}"), "text", "x")[0].parse().unwrap()).collect();
    assert_eq!(labels.len(), 5);
    for (x, e) in labels.iter().zip(edges.windows(2)) {
        assert!((x - (cx + 0.5 * (e[0] + e[1]))).abs() < 1e-2, "label at {x}");
    }
    // The scale bar's ticks every 10 mm along its 200 mm.
    let bar = svg.split("class=\"scale-bar\"").nth(1).unwrap();
    let ticks: Vec<f64> = attrs(bar, "path", "d").iter().skip(1).map(|d| d.split_whitespace().nth(1).unwrap().parse().unwrap()).collect();
    assert_eq!(ticks.len(), 21);
    for (t, x) in ticks.iter().enumerate() {
        assert!((x - (12.0 + 10.0 * t as f64)).abs() < 1e-9, "tick {t} at {x}");
    }
}

#[test]
fn the_page_holds_the_mirror_its_labels_and_the_scale_bar() {
    // The template's own layout (our choices, pinned here): 12 mm margins
    // about the mirror and a 30 mm strip below it for the scale bar and
    // notes; the rim drawn heavier than the zone edges; the labels' size
    // D/40 and the centre mark's arms D/20, each kept within print-readable
    // limits (2.5–6 mm and 3–10 mm); end ticks of the bar longer than the
    // rest. Every drawn coordinate lies on the page.
    for (d, font, arm) in [(100.0, 2.5, 5.0), (200.0, 5.0, 10.0), (300.0, 6.0, 10.0)] {
        let svg = zonal_mask_svg(d, 4).unwrap();
        let size = |k: &str| attrs(&svg, "svg", k)[0].trim_end_matches("mm").parse::<f64>().unwrap();
        let (w, h) = (size("width"), size("height"));
        assert_eq!((w, h), (d + 24.0, d + 54.0), "D = {d}");
        let (cx, cy, a) = (12.0 + 0.5 * d, 12.0 + 0.5 * d, 0.5 * d);
        // The rim is the last edge, and the heaviest.
        let widths: Vec<f64> = nums(&svg, "circle", "zone-edge", "stroke-width");
        assert_eq!(widths, [0.3, 0.3, 0.3, 0.5], "D = {d}");
        let groups: Vec<f64> = attrs(&svg, "g", "font-size").iter().map(|v| v.parse().unwrap()).collect();
        assert_eq!(groups, [font], "D = {d}");
        let mark = &attrs(&svg[svg.find("<path class=\"centre-mark\"").unwrap()..], "path", "d")[0];
        let v: Vec<f64> = mark.split_whitespace().filter_map(|t| t.parse().ok()).collect();
        assert_eq!(v, [cx - arm, cy, cx + arm, cx, cy - arm, cy + arm], "D = {d}: {mark}");
        // The bar: below the rim, on the page; ticks 4 mm at its ends, 2 mm between.
        let bar = svg.split("class=\"scale-bar\"").nth(1).unwrap();
        let paths = attrs(bar, "path", "d");
        let line: Vec<f64> = paths[0].split_whitespace().filter_map(|t| t.parse().ok()).collect();
        let by = line[1];
        assert!(by > cy + a && by < h, "D = {d}: bar at y = {by}, rim to {}, page {h}", cy + a);
        assert_eq!(by, d + 32.0, "D = {d}: the bar 8 mm into the strip below the mirror");
        let lens: Vec<f64> = paths[1..]
            .iter()
            .map(|p| {
                let t: Vec<f64> = p.split_whitespace().filter_map(|t| t.parse().ok()).collect();
                t[1] - t[2]
            })
            .collect();
        let n = lens.len();
        for (k, len) in lens.iter().enumerate() {
            let want = if k == 0 || k + 1 == n { 4.0 } else { 2.0 };
            assert!((len - want).abs() < 1e-9, "D = {d}: tick {k} is {len} mm");
        }
        // Every x and y of the drawing on the page.
        for (tag, kx, ky) in [("text", "x", "y"), ("rect", "x", "y"), ("circle", "cx", "cy")] {
            let xs: Vec<f64> = attrs(&svg, tag, kx).iter().map(|v| v.parse().unwrap()).collect();
            let ys: Vec<f64> = attrs(&svg, tag, ky).iter().map(|v| v.parse().unwrap()).collect();
            assert!(xs.iter().all(|&x| (0.0..=w).contains(&x)) && ys.iter().all(|&y| (0.0..=h).contains(&y)), "D = {d}: {tag} off the page");
        }
    }
}
