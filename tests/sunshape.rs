//! Sun shapes (docs/FORMATS.md §2, `sunshape`): the directions a sun beam
//! launches, checked against the published profiles computed here
//! independently: the energy inside the disk (1 for `disk` and `limb`,
//! 1 − CSR for `csr`, CSR being circumsolar over total flux as Buie,
//! Monger & Dey define it, Solar Energy 74 (2003) 113–122), the
//! limb-darkened disk's radial distribution, the aureole's power-law
//! slope γ and its 43.6 mrad edge.

use catoptric::layout::{parse_layout, Source};
use catoptric::trace::Emitter;

const RAYS: usize = 200_000;

fn sun(shape: &str, csr: f64, half_mrad: f64) -> Source {
    let extra = if shape == "csr" { format!(r#","csr":{csr}"#) } else { String::new() };
    let text = format!(
        r#"{{"format":"catoptric-layout","version":1,"name":"s","wavelength_nm":550,"max_bounces":4,"elements":[],
        "sources":[{{"kind":"beam","id":"sun","center":[0,0],"direction_deg":30,"diameter":10,"rays":{RAYS},
        "pattern":"random","sun_half_angle_mrad":{half_mrad},"sunshape":"{shape}"{extra}}}]}}"#
    );
    parse_layout(&text).unwrap().sources.remove(0)
}

/// Angles (mrad) of every launched ray from the beam's axis.
fn angles(src: &Source) -> Vec<f64> {
    let em = Emitter::new(src, RAYS);
    let a = em.axis();
    (0..em.len()).map(|i| em.ray(i).dir.dot(&a).clamp(-1.0, 1.0).acos() * 1e3).collect()
}

fn fraction_within(th: &[f64], limit: f64) -> f64 {
    th.iter().filter(|&&t| t <= limit).count() as f64 / th.len() as f64
}

/// Buie et al. (2003): κ = 0.9 ln(13.5χ) χ^−0.3, γ = 2.2 ln(0.52χ) χ^0.43 − 0.1,
/// φ = cos(0.326θ)/cos(0.308θ) for θ ≤ 4.65 mrad, e^κ θ^γ to 43.6 mrad.
fn buie(theta: f64, chi: f64) -> f64 {
    if theta <= 4.65 {
        (0.326 * theta).cos() / (0.308 * theta).cos()
    } else if theta <= 43.6 {
        let k = 0.9 * (13.5 * chi).ln() * chi.powf(-0.3);
        let g = 2.2 * (0.52 * chi).ln() * chi.powf(0.43) - 0.1;
        k.exp() * theta.powf(g)
    } else {
        0.0
    }
}

/// The model's CSR for χ by the midpoint rule over the sky (θ dθ), and the
/// χ that gives a wanted CSR by bisection: an independent calibration.
fn chi_for(csr: f64) -> f64 {
    let integral = |a: f64, b: f64, chi: f64| {
        let n = 20_000;
        let h = (b - a) / n as f64;
        (0..n).map(|i| a + (i as f64 + 0.5) * h).map(|t| buie(t, chi) * t * h).sum::<f64>()
    };
    let model = |chi: f64| {
        let (d, c) = (integral(0.0, 4.65, chi), integral(4.65, 43.6, chi));
        c / (c + d)
    };
    let (mut lo, mut hi) = (1e-6f64, 0.99f64);
    for _ in 0..80 {
        let mid = (lo * hi).sqrt();
        if model(mid) < csr { lo = mid } else { hi = mid }
    }
    (lo * hi).sqrt()
}

#[test]
fn the_disk_and_the_limb_darkened_disk_keep_all_their_energy_inside_the_disk() {
    for shape in ["disk", "limb"] {
        let th = angles(&sun(shape, 0.0, 4.65));
        assert_eq!(fraction_within(&th, 4.65 * (1.0 + 1e-9)), 1.0, "{shape}");
        assert!(fraction_within(&th, 4.5) < 1.0, "{shape} reaches its rim");
    }
}

#[test]
fn the_limb_darkened_disk_follows_the_eddington_law() {
    // I(μ)/I(1) = (2 + 3μ)/5 (grey atmosphere, Eddington approximation;
    // Mihalas, Stellar Atmospheres, 2nd ed. 1978): the power inside a
    // fraction ρ of the radius is (2 − μ² − μ³)/2 with μ = √(1 − ρ²)
    // (integrated by hand). A uniform disk would give ρ².
    let th = angles(&sun("limb", 0.0, 4.65));
    for rho in [0.3f64, 0.5, 0.8, 0.95] {
        let mu: f64 = (1.0 - rho * rho).sqrt();
        let want = (2.0 - mu * mu - mu * mu * mu) / 2.0;
        let got = fraction_within(&th, rho * 4.65);
        assert!((got - want).abs() < 0.003, "ρ = {rho}: {got} vs {want} (uniform {})", rho * rho);
    }
    // The centre is brighter than the mean: the mean of (2 + 3μ)/5 over
    // the disk is 4/5, so the centre reads 1/(4/5) = 1.25 times the mean.
    let inner = fraction_within(&th, 0.1 * 4.65) / 0.01;
    assert!(inner > 1.2 && inner < 1.3, "centre radiance over the mean: {inner}, want about 1.25");
}

#[test]
fn the_circumsolar_share_outside_the_disk_equals_csr() {
    for csr in [0.02, 0.05, 0.1, 0.2, 0.3, 0.4] {
        let th = angles(&sun("csr", csr, 4.65));
        let outside = 1.0 - fraction_within(&th, 4.65);
        assert!((outside - csr).abs() <= 0.01 * csr, "csr {csr}: traced fraction outside the disk {outside}");
        let max = th.iter().copied().fold(0.0, f64::max);
        assert!(max <= 43.6 * (1.0 + 1e-6), "csr {csr}: aureole ends at 43.6 mrad, got {max}");
        assert!(max > 40.0, "csr {csr}: the aureole reaches out to its edge ({max})");
    }
    // CSR 0 is the Buie disk alone.
    let th = angles(&sun("csr", 0.0, 4.65));
    assert_eq!(fraction_within(&th, 4.65 * (1.0 + 1e-9)), 1.0);
}

#[test]
fn the_aureole_falls_off_with_the_published_slope() {
    // Radiance in annuli ∝ rays / (annulus area) for small angles; its
    // log–log slope across the aureole is γ of the χ that gives this CSR.
    for csr in [0.05, 0.2] {
        let th = angles(&sun("csr", csr, 4.65));
        let gamma = 2.2 * (0.52 * chi_for(csr)).ln() * chi_for(csr).powf(0.43) - 0.1;
        let edges: Vec<f64> = (0..=8).map(|k| 6.0 * (40.0f64 / 6.0).powf(k as f64 / 8.0)).collect();
        let (mut xs, mut ys) = (Vec::new(), Vec::new());
        for w in edges.windows(2) {
            let n = th.iter().filter(|&&t| t > w[0] && t <= w[1]).count() as f64;
            let area = w[1] * w[1] - w[0] * w[0];
            xs.push((0.5 * (w[0] + w[1])).ln());
            ys.push((n / area).ln());
        }
        let m = xs.len() as f64;
        let (mx, my) = (xs.iter().sum::<f64>() / m, ys.iter().sum::<f64>() / m);
        let slope = xs.iter().zip(&ys).map(|(x, y)| (x - mx) * (y - my)).sum::<f64>()
            / xs.iter().map(|x| (x - mx) * (x - mx)).sum::<f64>();
        assert!((slope - gamma).abs() < 0.08, "csr {csr}: fitted slope {slope}, Buie γ {gamma}");
    }
}

#[test]
fn a_smaller_sun_scales_the_whole_profile() {
    // The profile is scaled so the disk edge sits at the beam's half-angle
    // (docs/FORMATS.md §2): the CSR is kept, the aureole ends at
    // 43.6 · half / 4.65.
    let th = angles(&sun("csr", 0.1, 2.325));
    let outside = 1.0 - fraction_within(&th, 2.325);
    assert!((outside - 0.1).abs() <= 0.001, "{outside}");
    assert!(th.iter().copied().fold(0.0, f64::max) <= 21.8 * (1.0 + 1e-6));
}
