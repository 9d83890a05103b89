//! The threaded trace writing its hits straight into the result.
//!
//! Every screen's columns reserve a hit per ray, and each chunk of rays
//! owns the window of them at its rays' place (chunk `i` of rays
//! `a..b` owns slots `a..b`, counted over the whole trace). A chunk's
//! batches land in its window while they are still in cache, so the hits
//! cross memory once instead of being written to a chunk buffer, read
//! back and copied. Afterwards the windows are closed up in ray order;
//! when every ray met a screen once (an on-axis focus) nothing moves.
//! A chunk with more hits than rays on a screen (a ray crossing it twice)
//! puts the rest aside, and that screen is then assembled by copying.

use std::mem::MaybeUninit;
use std::ops::Range;

use rayon::prelude::*;

use super::super::compiled::Compiled;
use super::super::kernel::{trace_range, Batch, Kernel};
use super::super::source::Emitter;
use super::super::tracer::{ScreenHits, TraceResult};
use super::super::stream::{fence, put_f64};
use super::{add_tally, pool_of};
use crate::scene::Scene;

/// Chunks traced between two progress reports, per thread.
const WAVE_PER_THREAD: usize = 8;

/// One chunk's window on one screen's result columns, and what did not
/// fit in it.
struct Window<'a> {
    /// u, v, du, dv, dw, opl, weight.
    cols: [&'a mut [MaybeUninit<f64>]; 7],
    source: &'a mut [MaybeUninit<u32>],
    first: &'a mut [MaybeUninit<bool>],
    /// Slots written, from the window's start.
    len: usize,
    spill: ScreenHits,
}

fn put<T: Copy>(dst: &mut [MaybeUninit<T>], src: &[T]) {
    for (d, s) in dst.iter_mut().zip(src) {
        d.write(*s);
    }
}

impl Window<'_> {
    /// Moves a batch's hits (in ray order) from `b` into the window, the
    /// overflow into the spill.
    fn take(&mut self, b: &mut ScreenHits) {
        let n = b.len();
        let at = self.len;
        let k = n.min(self.source.len() - at);
        let src = [&b.u, &b.v, &b.du, &b.dv, &b.dw, &b.opl, &b.weight];
        for (d, s) in self.cols.iter_mut().zip(src) {
            put_f64(&mut d[at..at + k], &s[..k]);
        }
        put(&mut self.source[at..at + k], &b.source[..k]);
        put(&mut self.first[at..at + k], &b.first[..k]);
        self.len += k;
        if k < n {
            self.spill.extend_range(b, k..n);
        }
        b.clear();
    }
}

/// The spare capacity of `col` (emptied) cut into consecutive pieces of
/// `sizes`.
fn pieces<'a, T>(col: &'a mut Vec<T>, sizes: &[usize]) -> Vec<&'a mut [MaybeUninit<T>]> {
    let total: usize = sizes.iter().sum();
    col.clear();
    col.reserve(total);
    let mut rest = &mut col.spare_capacity_mut()[..total];
    sizes
        .iter()
        .map(|&n| {
            let (a, b) = std::mem::take(&mut rest).split_at_mut(n);
            rest = b;
            a
        })
        .collect()
}

/// Every chunk's windows, one per screen: `[chunk][screen]`.
fn windows<'a>(screens: &'a mut [ScreenHits], sizes: &[usize]) -> Vec<Vec<Window<'a>>> {
    let mut out: Vec<Vec<Window<'a>>> = sizes.iter().map(|_| Vec::with_capacity(screens.len())).collect();
    for s in screens.iter_mut() {
        let ScreenHits { u, v, du, dv, dw, opl, weight, source, first } = s;
        let mut cols = [u, v, du, dv, dw, opl, weight].map(|c| pieces(c, sizes).into_iter());
        let mut source = pieces(source, sizes).into_iter();
        let mut first = pieces(first, sizes).into_iter();
        for w in out.iter_mut() {
            // Each iterator yields exactly `sizes.len()` pieces.
            let cols = cols.each_mut().map(|c| c.next().unwrap_or_default());
            let (Some(source), Some(first)) = (source.next(), first.next()) else { break };
            w.push(Window { cols, source, first, len: 0, spill: ScreenHits::default() });
        }
    }
    out
}

/// Traces `chunks` on `threads` threads straight into `res` (whose screens
/// `reset` has emptied); `progress(rays)` after each wave.
#[allow(clippy::too_many_arguments)]
pub(super) fn parallel(
    scene: &Scene,
    comp: &Compiled,
    kernel: Kernel,
    ems: &[Emitter],
    chunks: &[(usize, Range<usize>)],
    threads: usize,
    (cap, max_hits): (&(dyn Fn(usize) -> u64 + Sync), u64),
    res: &mut TraceResult,
    progress: &mut dyn FnMut(u64),
) {
    let sizes: Vec<usize> = chunks.iter().map(|c| c.1.len()).collect();
    let n_screens = res.screens.len();
    let pool = pool_of(threads);
    let mut tallies = Vec::with_capacity(chunks.len());
    let (lens, spills): (Vec<Vec<usize>>, Vec<Vec<ScreenHits>>) = {
        let mut wins = windows(&mut res.screens, &sizes);
        for (group, ws) in chunks.chunks(threads * WAVE_PER_THREAD).zip(wins.chunks_mut(threads * WAVE_PER_THREAD)) {
            let mut work = move || {
                group
                    .par_iter()
                    .zip(ws.par_iter_mut())
                    .map_init(
                        || (Batch::new(), vec![ScreenHits::default(); n_screens]),
                        |(batch, out), ((si, r), w)| {
                            let mut flush = |o: &mut [ScreenHits]| {
                                for (win, b) in w.iter_mut().zip(o.iter_mut()) {
                                    win.take(b);
                                }
                            };
                            let t = trace_range(scene, comp, kernel, &ems[*si], *si as u32, r.clone(), cap(r.len()), batch, out, Some(&mut flush));
                            fence();
                            t
                        },
                    )
                    .collect::<Vec<_>>()
            };
            let wave = match &pool {
                Some(p) => p.install(work),
                None => work(),
            };
            let stop = wave.iter().any(|t| t.over_cap);
            tallies.extend(wave);
            progress(group.iter().map(|c| c.1.len() as u64).sum());
            if stop {
                break;
            }
        }
        wins.iter_mut()
            .map(|ws| ws.iter_mut().map(|w| (w.len, std::mem::take(&mut w.spill))).unzip())
            .unzip()
    };
    for t in &tallies {
        add_tally(res, t, max_hits);
    }
    if res.limit.is_some() {
        // `settle_limit` keeps no hits; the columns are still empty.
        return;
    }
    let done = lens.len();
    for (s, dst) in res.screens.iter_mut().enumerate() {
        let lens: Vec<usize> = lens.iter().map(|l| l[s]).collect();
        if spills.iter().all(|sp| sp[s].is_empty()) {
            close_up(dst, &sizes[..done], &lens);
        } else {
            let parts: Vec<&ScreenHits> = spills.iter().map(|sp| &sp[s]).collect();
            assemble(dst, &sizes[..done], &lens, &parts);
        }
    }
}

/// Moves each window's hits down after the previous one's, in every
/// column, and sets the columns' lengths.
fn close_up(dst: &mut ScreenHits, sizes: &[usize], lens: &[usize]) {
    fn column<T: Copy + Send>(col: &mut Vec<T>, sizes: &[usize], lens: &[usize]) {
        let spare = col.spare_capacity_mut();
        let (mut start, mut at) = (0, 0);
        for (&size, &len) in sizes.iter().zip(lens) {
            if start != at {
                spare.copy_within(start..start + len, at);
            }
            start += size;
            at += len;
        }
        // SAFETY: slots `0..at` now hold, in order, the `len` initialised
        // slots at the start of every window (written by `Window::take`);
        // `copy_within` moved them down, never over an unmoved one since
        // each window starts at or after where its hits go.
        unsafe { col.set_len(at) };
    }
    let ScreenHits { u, v, du, dv, dw, opl, weight, source, first } = dst;
    // Nine independent moves, spread over the threads.
    let f64s = [u, v, du, dv, dw, opl, weight];
    rayon::join(
        || f64s.into_par_iter().for_each(|c| column(c, sizes, lens)),
        || {
            column(source, sizes, lens);
            column(first, sizes, lens);
        },
    );
}

/// A screen some chunk overflowed: rebuilt as each window's hits followed
/// by that chunk's spill.
fn assemble(dst: &mut ScreenHits, sizes: &[usize], lens: &[usize], spills: &[&ScreenHits]) {
    fn init<T>(s: &[MaybeUninit<T>]) -> &[T] {
        // SAFETY: called only on the written prefix of a window.
        unsafe { &*(s as *const [MaybeUninit<T>] as *const [T]) }
    }
    let total = lens.iter().sum::<usize>() + spills.iter().map(|s| s.len()).sum::<usize>();
    let mut out = ScreenHits::default();
    out.reserve(total);
    let mut start = 0;
    for ((&size, &len), sp) in sizes.iter().zip(lens).zip(spills) {
        let w = start..start + len;
        out.u.extend_from_slice(init(&dst.u.spare_capacity_mut()[w.clone()]));
        out.v.extend_from_slice(init(&dst.v.spare_capacity_mut()[w.clone()]));
        out.du.extend_from_slice(init(&dst.du.spare_capacity_mut()[w.clone()]));
        out.dv.extend_from_slice(init(&dst.dv.spare_capacity_mut()[w.clone()]));
        out.dw.extend_from_slice(init(&dst.dw.spare_capacity_mut()[w.clone()]));
        out.opl.extend_from_slice(init(&dst.opl.spare_capacity_mut()[w.clone()]));
        out.weight.extend_from_slice(init(&dst.weight.spare_capacity_mut()[w.clone()]));
        out.source.extend_from_slice(init(&dst.source.spare_capacity_mut()[w.clone()]));
        out.first.extend_from_slice(init(&dst.first.spare_capacity_mut()[w]));
        out.extend_range(sp, 0..sp.len());
        start += size;
    }
    *dst = out;
}
