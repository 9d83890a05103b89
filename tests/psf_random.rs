//! Random valid layouts (the generator of tests/random_layouts.rs) through
//! the diffraction image: never a panic on input (docs/FORMATS.md §4) —
//! every screen and source gives an image or an input error naming
//! `screen` or `source`, and an image's figures are finite, its Strehl
//! within [0, 1] (a peak cannot exceed the in-phase sum; common practice),
//! its MTF within [0, 1] (the autocorrelation's modulus is largest at zero
//! shift, Schwarz's inequality).

mod layout_support;
use catoptric::analysis::{psf, PsfFocus, PsfOptions};
use catoptric::{parse_layout, trace, Scene, TraceOptions};
use layout_support::*;

/// Slack for rounding in the FFT's sums.
const ROUNDING: f64 = 1e-9;

#[test]
fn random_layouts_give_an_image_or_an_input_error() {
    let mut rng = Rng(90210);
    let (mut images, mut refusals) = (0, 0);
    for _ in 0..120 * fuzz_scale() {
        // The generator's sources carry at most 300 rays; an image needs
        // more, so each source gets twenty times its count.
        let mut v: serde_json::Value = serde_json::from_str(&random_layout(&mut rng)).unwrap();
        for s in v["sources"].as_array_mut().unwrap() {
            s["rays"] = (s["rays"].as_u64().unwrap() * 20).into();
        }
        let text = v.to_string();
        let Ok(layout) = parse_layout(&text) else { continue };
        let scene = Scene::compile(&layout);
        let res = trace(&scene, TraceOptions::default());
        for screen in 0..scene.screen_ids.len() {
            for source in 0..scene.sources.len() {
                for at in [PsfFocus::Best, PsfFocus::Screen] {
                    match psf(&scene, &res, &PsfOptions { screen, source, at, grid: 32 }) {
                        Err(e) => {
                            assert!(e.field == "screen" || e.field == "source", "{e}\n{text}");
                            refusals += 1;
                        }
                        Ok(p) => {
                            let r = &p.report;
                            assert!(r.strehl.is_finite() && r.strehl >= 0.0 && r.strehl <= 1.0 + ROUNDING, "Strehl {}\n{text}", r.strehl);
                            assert!(r.wavefront_rms_waves.is_finite() && r.f_number.is_finite(), "{text}");
                            for v in r.mtf.tangential.iter().chain(&r.mtf.sagittal).chain(&r.mtf.diffraction_limited) {
                                assert!(v.is_finite() && *v >= 0.0 && *v <= 1.0 + ROUNDING, "MTF {v}\n{text}");
                            }
                            assert!(r.ee_diffraction.fraction.iter().all(|f| f.is_finite() && *f >= 0.0 && *f <= 1.0 + ROUNDING), "{text}");
                            assert!(p.image.iter().all(|v| v.is_finite()), "{text}");
                            images += 1;
                        }
                    }
                }
            }
        }
    }
    assert!(images > 0 && refusals > 0, "{images} images, {refusals} refusals");
}
