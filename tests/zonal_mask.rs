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
}
