// Diffraction-image worker (see psf-client.js): traces a layout and computes
// the PSF, MTF and Zernike terms of one source on one screen with the same
// wasm module as the page, so the page's thread stays free while the user
// drags. It keeps the last layout's trace, so several images of one layout
// cost one trace.
//
// In:  { id, layout (JSON text), screen, source (indices), at ('best' |
//        'screen'), grid (pupil grid side) }
// Out: { id, report (the `catoptric psf --json` object), pixels
//        (Float32Array side × side, row 0 at −v, transferred), side }
//      or { id, error }.

import init, { PsfTracer } from '../pkg/catoptric.js';

const ready = init();
let tracer = null;

self.onmessage = async (ev) => {
  const m = ev.data;
  try {
    await ready;
    tracer ??= new PsfTracer();
    const r = tracer.image(m.layout, m.screen, m.source, m.at, m.grid);
    const report = JSON.parse(r.report_json());
    const pixels = r.pixels();
    const side = r.side();
    r.free();
    self.postMessage({ id: m.id, report, pixels, side }, [pixels.buffer]);
  } catch (e) {
    self.postMessage({ id: m.id, error: String(e?.message ?? e) });
  }
};
