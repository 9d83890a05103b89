//! The trace report: the JSON document `catoptric trace --json` prints and
//! the page's statistics table shows (DESIGN.md §5).

use super::spot::spot_stats;
use crate::scene::Scene;
use crate::trace::TraceResult;
use serde::Serialize;

/// Figures for one source on one screen.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct SourceReport {
    pub source: String,
    pub hits: u64,
    pub power_w: f64,
    pub centroid_mm: [f64; 2],
    pub rms_radius_um: f64,
    pub max_radius_um: f64,
}

/// Figures for one screen.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct ScreenReport {
    pub id: String,
    pub hits: u64,
    pub power_w: f64,
    pub by_source: Vec<SourceReport>,
}

/// The whole report.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct TraceReport {
    pub rays_launched: u64,
    pub rays_escaped: u64,
    pub rays_absorbed: u64,
    pub screens: Vec<ScreenReport>,
}

/// Builds the report of a finished trace.
pub fn trace_report(scene: &Scene, res: &TraceResult) -> TraceReport {
    let screens = scene
        .screen_ids
        .iter()
        .zip(&res.screens)
        .map(|(id, hits)| {
            let by_source = scene
                .sources
                .iter()
                .enumerate()
                .filter_map(|(si, s)| {
                    let st = spot_stats(hits, Some(si as u32));
                    (st.hits > 0).then(|| SourceReport {
                        source: s.id().to_string(),
                        hits: st.hits,
                        power_w: st.power_w,
                        centroid_mm: st.centroid,
                        rms_radius_um: st.rms_radius * 1e3,
                        max_radius_um: st.max_radius * 1e3,
                    })
                })
                .collect();
            ScreenReport { id: id.clone(), hits: hits.len() as u64, power_w: hits.weight.iter().sum(), by_source }
        })
        .collect();
    TraceReport {
        rays_launched: res.rays_launched,
        rays_escaped: res.rays_escaped,
        rays_absorbed: res.rays_absorbed,
        screens,
    }
}
