// Worker for the long tolerance and optimisation runs (www/js/tune.js
// starts one per run and ends it to cancel). Same wasm module as the page.
//
// Messages in:
//   { type: 'tolerance', layout (JSON text), form (JSON text) }
//   { type: 'optimise', layout, form }
// Messages out:
//   { type: 'progress', done, total } (tolerance: jobs; optimise: traces,
//     total null), { type: 'done', doc } (the run's JSON document, parsed),
//   { type: 'error', message }.

import init, { ToleranceRun, optimise_json } from '../pkg/catoptric.js';

/** Least time between two progress messages, ms. */
const PROGRESS_MS = 100;

const ready = init();

self.onmessage = async (ev) => {
  const m = ev.data;
  try {
    await ready;
    if (m.type === 'tolerance') tolerance(m);
    else if (m.type === 'optimise') optimise(m);
    else throw new Error(`unknown message type ${String(m.type)}`);
  } catch (e) {
    self.postMessage({ type: 'error', message: String(e?.message ?? e) });
  }
};

function tolerance({ layout, form }) {
  const run = new ToleranceRun(layout, form);
  const total = run.total();
  let last = 0;
  while (run.done() < total) {
    const done = run.step(1);
    const now = performance.now();
    if (now - last > PROGRESS_MS || done === total) {
      last = now;
      self.postMessage({ type: 'progress', done, total });
    }
  }
  self.postMessage({ type: 'done', doc: JSON.parse(run.report_json()) });
  run.free();
}

function optimise({ layout, form }) {
  let last = 0;
  const text = optimise_json(layout, form, (n) => {
    const now = performance.now();
    if (now - last > PROGRESS_MS) {
      last = now;
      self.postMessage({ type: 'progress', done: n, total: null });
    }
  });
  self.postMessage({ type: 'done', doc: JSON.parse(text) });
}
