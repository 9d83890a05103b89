//! Running a whole trace: every source's rays, in numbered chunks spread
//! over the threads (natively) and merged back in ray order, so the result
//! is bit-identical whatever the thread count. A trace can also be cut
//! into numbered slices (the page's worker pool traces one slice each) and
//! the slices merged into exactly the whole trace.

use super::budget::{chunk_hit_cap, Limit, MAX_RECORDED_HITS};
use super::compiled::Compiled;
use super::kernel::{trace_range, Batch, Kernel, Tally};
use super::source::Emitter;
use super::tracer::{ScreenHits, TraceOptions, TraceResult};
use crate::scene::Scene;

#[cfg(not(target_arch = "wasm32"))]
mod direct;

/// Rays per chunk: the unit of work handed to a thread. Fixed, so the
/// split never depends on the thread count.
pub const CHUNK: usize = 16 * 1024;
/// Most hits per screen reserved before tracing.
const RESERVE_CAP: usize = 1 << 21;

/// Threads a trace uses: `opts.threads`, or every core the OS offers.
pub fn thread_count(opts: &TraceOptions) -> usize {
    match opts.threads {
        Some(n) => n.max(1),
        None => std::thread::available_parallelism().map(|n| n.get()).unwrap_or(1),
    }
}

fn emitters(scene: &Scene, opts: &TraceOptions) -> Vec<Emitter> {
    scene.sources.iter().map(|s| Emitter::new(s, opts.rays.unwrap_or(s.rays() as usize))).collect()
}

/// Ray numbers of slice `k` of `parts` of a source with `n` rays.
pub fn slice_range(n: usize, k: usize, parts: usize) -> std::ops::Range<usize> {
    let parts = parts.max(1);
    let at = |j: usize| ((n as u128 * j as u128) / parts as u128) as usize;
    at(k.min(parts))..at((k + 1).min(parts))
}

fn reset(res: &mut TraceResult, scene: &Scene, reserve: usize) {
    res.rays_launched = 0;
    res.rays_escaped = 0;
    res.rays_absorbed = 0;
    res.surface_hits = 0;
    res.launched_by_source.clear();
    res.power_by_source.clear();
    res.limit = None;
    res.screens.resize_with(scene.screen_ids.len(), ScreenHits::default);
    for s in &mut res.screens {
        s.clear();
        // Untouched capacity costs no memory traffic; growing by copying
        // does. (The command's allocator puts big columns on huge pages.)
        s.reserve(reserve.min(RESERVE_CAP));
    }
}

fn add_tally(res: &mut TraceResult, t: &Tally, max_hits: u64) {
    res.rays_escaped += t.escaped;
    res.rays_absorbed += t.absorbed;
    res.surface_hits += t.surface_hits;
    if t.over_cap {
        res.limit = Some(Limit::TooManyHits { cap: max_hits });
    }
}

/// A trace that hit a limit keeps its counters but no hits.
fn settle_limit(res: &mut TraceResult) {
    if res.limit.is_some() {
        res.screens.iter_mut().for_each(ScreenHits::clear);
    }
}

/// Traces into `res`, reusing its buffers; `progress(done, total)` is
/// called on the calling thread as chunks finish. Everything in `res` is
/// replaced.
pub fn trace_into(scene: &Scene, opts: TraceOptions, res: &mut TraceResult, progress: &mut dyn FnMut(u64, u64)) {
    trace_part(scene, opts, 0, 1, res, progress);
}

/// Traces slice `k` of `parts` (each source's rays numbered and cut into
/// `parts` equal runs; see [`slice_range`]) into `res`. `launched_by_source`
/// counts the slice's rays; `power_by_source` is each source's whole power.
pub fn trace_part(
    scene: &Scene,
    opts: TraceOptions,
    k: usize,
    parts: usize,
    res: &mut TraceResult,
    progress: &mut dyn FnMut(u64, u64),
) {
    let ems = emitters(scene, &opts);
    let ranges: Vec<_> = ems.iter().map(|e| slice_range(e.len(), k, parts)).collect();
    let total: u64 = ranges.iter().map(|r| r.len() as u64).sum();
    reset(res, scene, total as usize);
    for (em, r) in ems.iter().zip(&ranges) {
        res.launched_by_source.push(r.len() as u64);
        res.power_by_source.push(em.power_w);
    }
    res.rays_launched = total;
    let comp = Compiled::new(scene);
    let kernel = opts.kernel.unwrap_or_else(Kernel::detect);
    // A wasm module has no threads: its chunks run one after another.
    let threads = if cfg!(target_arch = "wasm32") { 1 } else { thread_count(&opts) };
    // Chunks in ray order: (source, ray range).
    let chunks: Vec<(usize, std::ops::Range<usize>)> = ranges
        .iter()
        .enumerate()
        .flat_map(|(si, r)| {
            (r.start..r.end).step_by(CHUNK).map(move |a| (si, a..(a + CHUNK).min(r.end)))
        })
        .collect();
    // Each chunk's share of the hit cap, from the whole trace's rays (not
    // the slice's), so a slice records what it would in the whole trace.
    let all_rays: u64 = ems.iter().map(|e| e.len() as u64).sum();
    let max_hits = opts.max_hits.unwrap_or(MAX_RECORDED_HITS);
    let cap = |rays: usize| chunk_hit_cap(rays as u64, all_rays, max_hits);
    let mut done = 0u64;
    if cfg!(target_arch = "wasm32") || threads <= 1 || chunks.len() <= 1 {
        let mut batch = Batch::new();
        for (si, r) in chunks {
            let t = trace_range(scene, &comp, kernel, &ems[si], si as u32, r.clone(), cap(r.len()), &mut batch, &mut res.screens, None);
            add_tally(res, &t, max_hits);
            done += r.len() as u64;
            progress(done, total);
            if t.over_cap {
                break;
            }
        }
        settle_limit(res);
        return;
    }
    #[cfg(not(target_arch = "wasm32"))]
    {
        let mut report = |n: u64| {
            done += n;
            progress(done, total);
        };
        if (total as usize).saturating_mul(res.screens.len()) <= DIRECT_MAX {
            direct::parallel(scene, &comp, kernel, &ems, &chunks, threads, (&cap, max_hits), res, &mut report);
        } else {
            parallel(scene, &comp, kernel, &ems, &chunks, threads, (&cap, max_hits), res, &mut report);
        }
    }
    settle_limit(res);
}

/// Most hit slots (rays × screens) a trace may reserve for its threads to
/// write hits straight into the result (see [`direct`]: every screen holds
/// a slot per ray, and chunks write all over that room, so a screen that
/// records few hits still touches most of it). Larger traces copy each
/// wave's chunk buffers in instead.
#[cfg(not(target_arch = "wasm32"))]
const DIRECT_MAX: usize = RESERVE_CAP;

/// A pool of the asked size unless the global one already is.
#[cfg(not(target_arch = "wasm32"))]
fn pool_of(threads: usize) -> Option<rayon::ThreadPool> {
    (threads != rayon::current_num_threads())
        .then(|| rayon::ThreadPoolBuilder::new().num_threads(threads).build().ok())
        .flatten()
}

#[cfg(not(target_arch = "wasm32"))]
#[allow(clippy::too_many_arguments)]
fn parallel(
    scene: &Scene,
    comp: &Compiled,
    kernel: Kernel,
    ems: &[Emitter],
    chunks: &[(usize, std::ops::Range<usize>)],
    threads: usize,
    (cap, max_hits): (&(dyn Fn(usize) -> u64 + Sync), u64),
    res: &mut TraceResult,
    progress: &mut dyn FnMut(u64),
) {
    use rayon::prelude::*;
    let screens = res.screens.len();
    let work = |wave: &[(usize, std::ops::Range<usize>)]| -> Vec<(Vec<ScreenHits>, Tally)> {
        wave.par_iter()
            .map_init(Batch::new, |batch, (si, r)| {
                let mut out = take_buffers(screens);
                let t = trace_range(scene, comp, kernel, &ems[*si], *si as u32, r.clone(), cap(r.len()), batch, &mut out, None);
                (out, t)
            })
            .collect()
    };
    let pool = pool_of(threads);
    // Waves of a few chunks per thread: progress is reported between them.
    // Each wave's outputs are appended (copies spread over the threads)
    // and their buffers go back to the pool for the next wave: memory
    // beyond the result stays at one wave's worth.
    for group in chunks.chunks(threads * 8) {
        let wave = match &pool {
            Some(p) => p.install(|| work(group)),
            None => work(group),
        };
        let mut outs = Vec::with_capacity(wave.len());
        for (out, t) in wave {
            add_tally(res, &t, max_hits);
            outs.push(out);
        }
        progress(group.iter().map(|c| c.1.len() as u64).sum());
        if res.limit.is_some() {
            outs.into_iter().for_each(give_buffers);
            return;
        }
        let concat = |res: &mut TraceResult| {
            for (k, dst) in res.screens.iter_mut().enumerate() {
                let parts: Vec<&ScreenHits> = outs.iter().map(|o| &o[k]).collect();
                concat_parallel(dst, &parts);
            }
        };
        match &pool {
            Some(p) => p.install(|| concat(res)),
            None => concat(res),
        }
        outs.into_iter().for_each(give_buffers);
    }
}

/// Appends `parts` to `dst` in order, the copies spread over the threads.
#[cfg(not(target_arch = "wasm32"))]
fn concat_parallel(dst: &mut ScreenHits, parts: &[&ScreenHits]) {
    use rayon::prelude::*;
    fn column<T: Copy + Send + Sync>(col: &mut Vec<T>, parts: Vec<&[T]>) {
        let total: usize = parts.iter().map(|p| p.len()).sum();
        col.reserve(total);
        let base = col.len();
        let mut rest = &mut col.spare_capacity_mut()[..total];
        let mut pieces = Vec::with_capacity(parts.len());
        for p in &parts {
            let (a, b) = rest.split_at_mut(p.len());
            pieces.push(a);
            rest = b;
        }
        pieces.into_par_iter().zip(parts).for_each(|(d, s)| {
            for (x, y) in d.iter_mut().zip(s) {
                x.write(*y);
            }
        });
        // SAFETY: the `total` slots after `base` were all written just above
        // (the pieces tile them exactly), and `reserve` made room for them.
        unsafe { col.set_len(base + total) };
    }
    column(&mut dst.u, parts.iter().map(|p| &p.u[..]).collect());
    column(&mut dst.v, parts.iter().map(|p| &p.v[..]).collect());
    column(&mut dst.du, parts.iter().map(|p| &p.du[..]).collect());
    column(&mut dst.dv, parts.iter().map(|p| &p.dv[..]).collect());
    column(&mut dst.dw, parts.iter().map(|p| &p.dw[..]).collect());
    column(&mut dst.opl, parts.iter().map(|p| &p.opl[..]).collect());
    column(&mut dst.weight, parts.iter().map(|p| &p.weight[..]).collect());
    column(&mut dst.source, parts.iter().map(|p| &p.source[..]).collect());
    column(&mut dst.first, parts.iter().map(|p| &p.first[..]).collect());
}

/// Chunk output buffers kept between traces: a re-trace writes into memory
/// that is already mapped instead of faulting fresh pages in on every
/// thread (which serialises threads on the kernel's memory locks).
#[cfg(not(target_arch = "wasm32"))]
static BUFFERS: std::sync::Mutex<Vec<Vec<ScreenHits>>> = std::sync::Mutex::new(Vec::new());
/// Most buffer sets kept.
#[cfg(not(target_arch = "wasm32"))]
const KEPT_BUFFERS: usize = 128;

#[cfg(not(target_arch = "wasm32"))]
fn take_buffers(screens: usize) -> Vec<ScreenHits> {
    let mut out = BUFFERS.lock().ok().and_then(|mut p| p.pop()).unwrap_or_default();
    out.resize_with(screens, ScreenHits::default);
    // Room for one hit per ray of the chunk: no growing by copying.
    out.iter_mut().for_each(|h| h.reserve(CHUNK));
    out
}

#[cfg(not(target_arch = "wasm32"))]
fn give_buffers(mut out: Vec<ScreenHits>) {
    out.iter_mut().for_each(ScreenHits::clear);
    if let Ok(mut p) = BUFFERS.lock()
        && p.len() < KEPT_BUFFERS {
            p.push(out);
        }
}

/// Merges the slices `0..parts.len()` of one trace (from [`trace_part`]
/// with the same scene and options) into exactly the whole trace.
pub fn merge_parts(parts: &[TraceResult]) -> TraceResult {
    let mut res = TraceResult::default();
    let Some(first) = parts.first() else { return res };
    let sources = first.launched_by_source.len();
    res.power_by_source = first.power_by_source.clone();
    res.launched_by_source = vec![0; sources];
    res.screens = vec![ScreenHits::default(); first.screens.len()];
    for p in parts {
        res.limit = res.limit.or(p.limit);
        res.rays_launched += p.rays_launched;
        res.rays_escaped += p.rays_escaped;
        res.rays_absorbed += p.rays_absorbed;
        res.surface_hits += p.surface_hits;
        for (a, b) in res.launched_by_source.iter_mut().zip(&p.launched_by_source) {
            *a += b;
        }
    }
    // Hits are in (source, ray) order within each part: source by source,
    // slice by slice.
    for (s, dst) in res.screens.iter_mut().enumerate() {
        let total: usize = parts.iter().map(|p| p.screens.get(s).map_or(0, |h| h.len())).sum();
        dst.reserve(total);
        let mut at: Vec<usize> = vec![0; parts.len()];
        for src in 0..sources as u32 {
            for (p, pos) in parts.iter().zip(at.iter_mut()) {
                let Some(h) = p.screens.get(s) else { continue };
                let end = *pos + h.source[*pos..].partition_point(|&x| x == src);
                dst.extend_range(h, *pos..end);
                *pos = end;
            }
        }
    }
    settle_limit(&mut res);
    res
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_trace_uses_every_core_unless_told_otherwise() {
        // The command line's contract: `--threads N`, default every core
        // the system offers; 0 is taken as 1.
        let cores = std::thread::available_parallelism().map(|n| n.get()).unwrap_or(1);
        assert_eq!(thread_count(&TraceOptions::default()), cores);
        for (asked, used) in [(0, 1), (1, 1), (3, 3), (64, 64)] {
            assert_eq!(thread_count(&TraceOptions { threads: Some(asked), ..Default::default() }), used);
        }
    }
}
