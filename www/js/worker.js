// Trace worker, one of the pool's (see pool.js), running the same wasm
// module as the page. Each worker keeps one session between messages.
//
// Messages in:
//   { type: 'slice', gen, layout (JSON text), rays (per source or
//     undefined), maxHits (hit cap or undefined), k, parts, keep } — trace
//     slice k of parts. With keep (the
//     merging worker's own slice 0) the hits stay in this worker's session.
//   { type: 'merge', gen, rays, parts, ms, slices } — slices[1..parts] as
//     the other workers posted them (slices[0] is the kept one): merge,
//     analyse and post the result.
// Messages out:
//   { gen, type: 'progress', k, done, total } (the slice's ray counts),
//   { gen, type: 'slice', k, counts, launched, power, limit, hits } where
//     limit is the hit cap the slice stopped at (undefined when it ran to
//     the end) and hits[i] is screen i's [u, v, du, dv, dw, opl, weight,
//     source] typed arrays (transferred; absent for a kept slice),
//   { gen, type: 'done', reportText, launched, escaped, absorbed, ms, limit
//     (the core's message, or null), spots, analysis } after a merge,
//   { gen, type: 'error', message }.

import init, { Session } from '../pkg/catoptric.js';
import { analysisBuffers, collectAnalysis } from './views/data.js';

/** Most hits per screen sent back for plotting and CSV (evenly thinned). */
const MAX_HITS_SENT = 1_000_000;
/** Least time between two progress messages, ms. */
const PROGRESS_MS = 80;

const ready = init();
let session = null;
/** Generation whose slice 0 waits in `session` for the merge. */
let keptGen = null;

self.onmessage = async (ev) => {
  const m = ev.data;
  try {
    await ready;
    session ??= new Session();
    if (m.type === 'slice') traceSlice(session, m);
    else if (m.type === 'merge') merge(session, m);
    else throw new Error(`unknown message type ${String(m.type)}`);
  } catch (e) {
    self.postMessage({ gen: m.gen, type: 'error', message: String(e?.message ?? e) });
  }
};

function traceSlice(s, { gen, layout, rays, maxHits, k, parts, keep }) {
  keptGen = null;
  s.load_json(layout);
  s.set_max_hits(maxHits);
  let last = 0;
  s.trace_slice(rays, k, parts, (done, total) => {
    const now = performance.now();
    if (now - last > PROGRESS_MS || done === total) {
      last = now;
      self.postMessage({ gen, type: 'progress', k, done, total });
    }
  });
  const msg = {
    gen, type: 'slice', k, counts: s.slice_counts(), launched: s.slice_launched_by_source(), power: s.slice_power_by_source(),
    limit: s.slice_limit(),
  };
  if (keep) {
    s.clear_slices();
    s.keep_slice();
    keptGen = gen;
    self.postMessage(msg);
    return;
  }
  // Copies, made by the session: safe to transfer.
  msg.hits = [];
  for (let i = 0; i < s.screen_count(); i++) msg.hits.push(s.slice_hits(i));
  self.postMessage(msg, msg.hits.flat().map((a) => a.buffer));
}

function merge(s, { gen, rays, parts, ms, slices }) {
  if (keptGen !== gen) throw new Error('the merging worker no longer holds its own slice');
  keptGen = null;
  for (let k = 1; k < parts; k++) {
    const p = slices[k];
    s.add_slice(p.counts, p.launched, p.power, p.limit);
    for (const cols of p.hits) s.add_slice_hits(cols);
    slices[k] = null;
  }
  s.merge_slices(rays, parts, ms);
  postDone(gen, s);
}

/** Posts the finished trace of `s`: figures, thinned spots and analyses. */
function postDone(gen, s) {
  const spots = [];
  const transfer = [];
  for (let i = 0; i < s.screen_count(); i++) {
    const n = s.select_spot(i);
    const stride = Math.max(1, Math.ceil(n / MAX_HITS_SENT));
    // Copy out of wasm memory before the next call into the session.
    let uv = s.spot_uv_view();
    let src = s.spot_source_view();
    let w = s.spot_weight_view();
    if (stride === 1) {
      uv = uv.slice(); src = src.slice(); w = w.slice();
    } else {
      const m = Math.ceil(n / stride);
      const uv2 = new Float64Array(2 * m), src2 = new Uint32Array(m), w2 = new Float64Array(m);
      for (let j = 0, k = 0; j < n; j += stride, k++) {
        uv2[2 * k] = uv[2 * j]; uv2[2 * k + 1] = uv[2 * j + 1]; src2[k] = src[j]; w2[k] = w[j];
      }
      uv = uv2; src = src2; w = w2;
    }
    spots.push({ uv, src, w, stride, total: n });
    transfer.push(uv.buffer, src.buffer, w.buffer);
  }
  // Curves and flux maps of the full trace for the analysis views.
  const analysis = collectAnalysis(s);
  transfer.push(...analysisBuffers(analysis));
  self.postMessage({
    gen, type: 'done', analysis,
    reportText: s.report_json(),
    launched: s.rays_launched(), escaped: s.rays_escaped(), absorbed: s.rays_absorbed(),
    ms: s.trace_ms(),
    limit: s.limit_message() ?? null,
    spots,
  }, transfer);
}
