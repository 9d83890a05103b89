// Runs a tolerance analysis or an optimisation in its own worker
// (tune-worker.js), so the page stays responsive; cancelling ends the
// worker. One run at a time per caller.

/**
 * Starts a run. type: 'tolerance' | 'optimise'; layout: the layout object;
 * form: the run's options; onProgress(done, total). Returns { promise,
 * cancel }: the promise resolves with the run's document, or rejects with
 * an Error (its message "field: …" from the core, or "cancelled").
 */
export function startRun(type, layout, form, onProgress) {
  const worker = new Worker(new URL('./tune-worker.js', import.meta.url), { type: 'module' });
  let settle = null;
  const promise = new Promise((resolve, reject) => {
    settle = { resolve, reject };
    worker.onmessage = (ev) => {
      const m = ev.data;
      if (m.type === 'progress') onProgress?.(m.done, m.total);
      else if (m.type === 'done') { worker.terminate(); resolve(m.doc); }
      else if (m.type === 'error') { worker.terminate(); reject(new Error(m.message)); }
    };
    worker.onerror = (e) => { worker.terminate(); reject(new Error(e.message || 'the worker failed')); };
  });
  worker.postMessage({ type, layout: JSON.stringify(layout), form: JSON.stringify(form) });
  const cancel = () => {
    worker.terminate();
    settle.reject(new Error('cancelled'));
  };
  return { promise, cancel };
}
