//! A day swept in steps (docs/FORMATS.md §3, `day`): at each step the sun's
//! direction from the layout's site, every sun beam turned to it and
//! re-placed so it still lights every mirror, a trace on every core, and
//! per screen the peak flux, its place, and the power.

use super::position::{local, parse_clock, parse_date, sun_at_site, sun_vector, SunPosition};
use crate::analysis::{first_arrivals, flux_map, flux_stats_with, FluxMap, DEFAULT_FLUX_GRID};
use crate::error::InputError;
use crate::geometry::Vec3;
use crate::layout::{validate, Layout, Site, Source};
use crate::scene::{Part, Scene};
use crate::trace::{trace, TraceOptions};
use chrono::{DateTime, Duration, FixedOffset, NaiveDate, NaiveTime};
use serde::Serialize;

/// Largest step, minutes (half a day).
pub const MAX_STEP_MIN: u32 = 720;
/// Out-of-plane angle past which a sun is taken as edge-on to the layout
/// plane and its step is not traced (a beam may tilt at most 89°).
pub const MAX_OUT_OF_PLANE_DEG: f64 = 89.0;
/// Room left between a re-placed beam's launch disk and the nearest
/// mirror, as a fraction of the scene's size.
const LAUNCH_GAP_REL: f64 = 0.01;

/// Where a sun beam was put for one step (enough to re-trace it by hand).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PlacedBeam {
    pub id: String,
    pub center: [f64; 2],
    pub diameter: f64,
    pub direction_deg: f64,
    pub out_of_plane_deg: f64,
}

/// One screen's figures at one step.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StepScreen {
    pub id: String,
    pub peak_w_m2: f64,
    pub peak_suns: Option<f64>,
    pub power_w: f64,
    /// Centre of the peak pixel of the default flux grid, [u, v] mm.
    pub peak_at_mm: [f64; 2],
}

/// One step of the day.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DayStep {
    /// ISO 8601 with its offset.
    pub time: String,
    pub azimuth_deg: f64,
    pub elevation_deg: f64,
    pub beams: Vec<PlacedBeam>,
    pub screens: Vec<StepScreen>,
}

/// The highest concentration of the day.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Worst {
    pub time: String,
    pub screen: String,
    pub peak_suns: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DayReport {
    pub steps: Vec<DayStep>,
    pub worst: Option<Worst>,
}

/// What to sweep: a date, an optional clock window (inclusive; default
/// sunrise to sunset, rounded out to the step), the step in minutes.
#[derive(Debug, Clone, Default)]
pub struct DayRequest {
    pub date: String,
    pub from: Option<String>,
    pub to: Option<String>,
    pub step_min: u32,
}

/// The layout's site, or an error naming `site`.
pub fn site_of(layout: &Layout) -> Result<Site, InputError> {
    layout.site.ok_or_else(|| {
        InputError::new("site", "the layout has no site: add {\"latitude_deg\", \"longitude_deg\", \"z_bearing_deg\", \"elevation_m\"}")
    })
}

/// Is this source a sun beam (an extended solar disk)?
pub fn is_sun(s: &Source) -> bool {
    matches!(s, Source::Beam(b) if b.sun_half_angle_mrad > 0.0)
}

/// The clock times of the sweep at the site's standard offset.
pub fn day_times(site: &Site, req: &DayRequest) -> Result<Vec<DateTime<FixedOffset>>, InputError> {
    let date: NaiveDate = parse_date(&req.date, "--date")?;
    if req.step_min == 0 || req.step_min > MAX_STEP_MIN {
        return Err(InputError::new("--step-min", format!("must be between 1 and {MAX_STEP_MIN} minutes")));
    }
    let step = req.step_min as i64;
    let midnight = local(date.and_time(NaiveTime::MIN), site.longitude_deg, "--date")?;
    let minute = |m: i64| midnight + Duration::minutes(m);
    let clock = |t: &Option<String>, f: &str| -> Result<Option<i64>, InputError> {
        match t.as_deref() {
            None => Ok(None),
            Some("24:00") => Ok(Some(24 * 60)),
            Some(s) => {
                let c = parse_clock(s, f)?;
                Ok(Some(c.signed_duration_since(NaiveTime::MIN).num_minutes()))
            }
        }
    };
    let (from, to) = (clock(&req.from, "--from")?, clock(&req.to, "--to")?);
    let (from, to) = match (from, to) {
        (Some(a), Some(b)) => (a, b),
        (a, b) => {
            // Sunrise and sunset: the first and last minute the sun's
            // centre is up, rounded out to the step grid.
            let mut up = Vec::new();
            for m in 0..24 * 60 {
                if sun_at_site(site, &minute(m))?.elevation_deg > 0.0 {
                    up.push(m);
                }
            }
            let (rise, set) = match (up.first(), up.last()) {
                (Some(&r), Some(&s)) => ((r / step) * step, ((s + step - 1) / step) * step),
                _ => (0, ((24 * 60 - 1) / step) * step),
            };
            (a.unwrap_or(rise), b.unwrap_or(set.min(24 * 60)))
        }
    };
    if to < from {
        return Err(InputError::new("--to", "must not be before --from"));
    }
    let mut times = Vec::new();
    let mut m = from;
    while m <= to {
        times.push(minute(m));
        m += step;
    }
    Ok(times)
}

/// ISO 8601 text of a time with its offset.
pub fn iso(t: &DateTime<FixedOffset>) -> String {
    t.format("%Y-%m-%dT%H:%M:%S%:z").to_string()
}

/// The layout with every sun beam turned to travel along −`s` (unit vector
/// toward the sun, layout frame) and re-placed so its disk covers every
/// mirror's bounding sphere as seen along the rays and starts before every
/// element. `None` when the sun is edge-on to the layout plane
/// (out of plane by more than [`MAX_OUT_OF_PLANE_DEG`]).
pub fn aim_suns(layout: &Layout, s: &Vec3) -> Option<(Layout, Vec<PlacedBeam>)> {
    let u = -s;
    let out_of_plane = u.x.clamp(-1.0, 1.0).asin();
    if out_of_plane.to_degrees().abs() > MAX_OUT_OF_PLANE_DEG {
        return None;
    }
    let direction_deg = u.y.atan2(u.z).to_degrees();
    let scene = Scene::compile(layout);
    let spheres: Vec<(Vec3, f64)> = scene
        .elements
        .iter()
        .filter(|e| matches!(e.part, Part::Mirror { .. }))
        .map(|e| (e.bound_center, e.bound_radius))
        .collect();
    let all: Vec<(Vec3, f64)> = scene.elements.iter().map(|e| (e.bound_center, e.bound_radius)).collect();
    let mut out = layout.clone();
    let mut placed = Vec::new();
    for src in out.sources.iter_mut() {
        let Source::Beam(b) = src else { continue };
        if b.sun_half_angle_mrad <= 0.0 {
            continue;
        }
        let (center, diameter) = if spheres.is_empty() {
            ([b.center[0], b.center[1]], b.diameter)
        } else {
            cover(&spheres, &all, &u, scene.scale)
        };
        b.center = center;
        b.diameter = diameter;
        b.direction_deg = direction_deg;
        b.out_of_plane_deg = out_of_plane.to_degrees();
        placed.push(PlacedBeam {
            id: b.id.clone(),
            center,
            diameter,
            direction_deg: b.direction_deg,
            out_of_plane_deg: b.out_of_plane_deg,
        });
    }
    Some((out, placed))
}

/// A launch disk (centre in the layout plane x = 0, diameter) perpendicular
/// to `u` that covers the mirrors' spheres as seen along `u` and lies
/// before every element (so a receiver still casts its shadow).
fn cover(spheres: &[(Vec3, f64)], all: &[(Vec3, f64)], u: &Vec3, scale: f64) -> ([f64; 2], f64) {
    let p0 = spheres.iter().fold(Vec3::zeros(), |a, (c, _)| a + c) / spheres.len() as f64;
    let mut radius: f64 = 0.0;
    let mut t_first = f64::INFINITY;
    for (c, r) in spheres {
        let d = c - p0;
        let t = d.dot(u);
        radius = radius.max((d - u * t).norm() + r);
    }
    for (c, r) in all {
        t_first = t_first.min((c - p0).dot(u) - r);
    }
    let t = t_first - LAUNCH_GAP_REL * scale;
    // Slide the centre within the disk's plane back onto x = 0; the disk
    // grows by the slide.
    let ux = u.x;
    let a = if ux.abs() < 1.0 { -t * ux / (1.0 - ux * ux) } else { 0.0 };
    let w = (Vec3::new(1.0, 0.0, 0.0) - u * ux) * a;
    let c = p0 + u * t + w;
    let grow = w.norm();
    ([c.y, c.z], 2.0 * (radius + grow) * (1.0 + 1e-9))
}

/// Per-screen figures of one traced layout: peak and place of the peak on
/// the default flux grid, peak suns, first-arrival power.
pub fn screen_figures(layout: &Layout, opts: TraceOptions) -> Vec<StepScreen> {
    let scene = Scene::compile(layout);
    let res = trace(&scene, opts);
    (0..scene.screen_ids.len())
        .map(|k| {
            let map = flux_map(&scene, &res, k, DEFAULT_FLUX_GRID, DEFAULT_FLUX_GRID).unwrap_or_default();
            let power_w = res.screens.get(k).map_or(0.0, |h| first_arrivals(h).1);
            let stats = flux_stats_with(&scene, &res, k, &map, power_w);
            StepScreen {
                id: scene.screen_ids[k].clone(),
                peak_w_m2: stats.peak_w_m2,
                peak_suns: stats.peak_suns,
                power_w,
                peak_at_mm: peak_at(&map),
            }
        })
        .collect()
}

/// Centre [u, v] (mm) of the first pixel holding the map's peak.
pub fn peak_at(map: &FluxMap) -> [f64; 2] {
    if map.nx == 0 || map.ny == 0 {
        return [0.0, 0.0];
    }
    let mut best = 0;
    for (i, &w) in map.w_m2.iter().enumerate() {
        if w > map.w_m2[best] {
            best = i;
        }
    }
    let (ix, iy) = (best % map.nx, best / map.nx);
    let (pu, pv) = (2.0 * map.half_mm / map.nx as f64, 2.0 * map.half_mm / map.ny as f64);
    [-map.half_mm + (ix as f64 + 0.5) * pu, map.half_mm - (iy as f64 + 0.5) * pv]
}

/// One step: the sun at `time`, the beams turned and placed, the trace.
pub fn day_step(layout: &Layout, site: &Site, time: &DateTime<FixedOffset>, opts: TraceOptions) -> Result<DayStep, InputError> {
    let p: SunPosition = sun_at_site(site, time)?;
    let mut step = DayStep {
        time: iso(time),
        azimuth_deg: p.azimuth_deg,
        elevation_deg: p.elevation_deg,
        beams: Vec::new(),
        screens: Vec::new(),
    };
    if p.elevation_deg <= 0.0 {
        return Ok(step);
    }
    if let Some((placed, beams)) = aim_suns(layout, &sun_vector(site, &p)) {
        validate(&placed)?;
        step.screens = screen_figures(&placed, opts);
        step.beams = beams;
    }
    Ok(step)
}

/// The whole sweep. The layout must be valid, have a site and a sun beam.
pub fn day_sweep(layout: &Layout, req: &DayRequest, opts: TraceOptions) -> Result<DayReport, InputError> {
    let site = site_of(layout)?;
    if !layout.sources.iter().any(is_sun) {
        return Err(InputError::new("sources", "the layout has no sun beam (a beam with sun_half_angle_mrad above 0)"));
    }
    let times = day_times(&site, req)?;
    let mut steps = Vec::with_capacity(times.len());
    for t in &times {
        steps.push(day_step(layout, &site, t, opts)?);
    }
    let worst = worst_of(&steps);
    Ok(DayReport { steps, worst })
}

/// The step and screen with the highest peak suns (the first of equals).
pub fn worst_of(steps: &[DayStep]) -> Option<Worst> {
    let mut w: Option<Worst> = None;
    for s in steps {
        for sc in &s.screens {
            let Some(ps) = sc.peak_suns else { continue };
            if w.as_ref().is_none_or(|w| ps > w.peak_suns) {
                w = Some(Worst { time: s.time.clone(), screen: sc.id.clone(), peak_suns: ps });
            }
        }
    }
    w
}
