// Runs full traces in a module worker (see worker.js) and reports progress.
// One worker is kept while idle; a running trace that is no longer wanted is
// stopped by ending its worker (a wasm call cannot be interrupted).

export class BackgroundTracer {
  constructor({ onProgress, onDone, onError }) {
    this.cb = { onProgress, onDone, onError };
    this.worker = null;
    this.busyGen = null;
  }

  start(gen, layoutJson) {
    this.cancel();
    if (!this.worker) {
      this.worker = new Worker(new URL('./worker.js', import.meta.url), { type: 'module' });
      this.worker.onmessage = (ev) => this.message(ev.data);
      this.worker.onerror = (ev) => {
        ev.preventDefault?.();
        const gen = this.busyGen;
        this.busyGen = null;
        this.worker?.terminate();
        this.worker = null;
        this.cb.onError(gen, `the trace worker failed: ${ev.message || 'unknown error'}`);
      };
    }
    this.busyGen = gen;
    this.worker.postMessage({ gen, layout: layoutJson });
  }

  message(m) {
    if (m.gen !== this.busyGen) return;
    if (m.type === 'progress') this.cb.onProgress(m.gen, m.done, m.total);
    else if (m.type === 'done') { this.busyGen = null; this.cb.onDone(m.gen, m); }
    else if (m.type === 'error') { this.busyGen = null; this.cb.onError(m.gen, m.message); }
  }

  /** Stops a running trace; returns true when one was running. */
  cancel() {
    if (this.busyGen === null) return false;
    this.busyGen = null;
    this.worker?.terminate();
    this.worker = null;
    return true;
  }

  get busy() {
    return this.busyGen !== null;
  }
}
