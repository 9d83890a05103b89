// Trace worker: runs long traces off the main thread with the same wasm
// module. Message in: { gen, layout (JSON text) }. Messages out:
// { gen, type: 'progress', done, total }, then { gen, type: 'done', ... }
// or { gen, type: 'error', message }.

import init, { Session } from '../pkg/catoptric.js';
import { analysisBuffers, collectAnalysis } from './views/data.js';

/** Most hits per screen sent back for plotting and CSV (evenly thinned). */
const MAX_HITS_SENT = 1_000_000;

const ready = init();

self.onmessage = async (ev) => {
  const { gen, layout } = ev.data;
  try {
    await ready;
    const s = new Session();
    s.load_json(layout);
    let last = 0;
    s.retrace_with_progress(undefined, (done, total) => {
      const now = performance.now();
      if (now - last > 80 || done === total) {
        last = now;
        self.postMessage({ gen, type: 'progress', done, total });
      }
    });
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
      spots,
    }, transfer);
    s.free();
  } catch (e) {
    self.postMessage({ gen, type: 'error', message: String(e?.message ?? e) });
  }
};
