// Runs full traces on a pool of module workers (see worker.js): one per
// hardware thread, at most MAX_WORKERS, made at the first long trace and
// kept while idle. Worker k traces slice k of the rays (each source's rays
// numbered and cut into equal runs); worker 0 keeps its own slice, receives
// the others' hits (transferred, never copied through JSON), merges them in
// slice order — exactly the whole trace — and posts the finished result, so
// the page's main thread never traces or analyses a long trace itself.
//
// Every trace carries the page's generation number; messages of another
// generation are ignored. A running trace that is no longer wanted is
// stopped by ending the workers (a wasm call cannot be interrupted); new ones
// are made at the next trace.

/** Most workers in the pool. */
export const MAX_WORKERS = 8;

/** Workers a pool makes on this machine: one per hardware thread, 1 … MAX_WORKERS. */
export function poolSize() {
  const n = Math.floor(Number(globalThis.navigator?.hardwareConcurrency)) || 1;
  return Math.max(1, Math.min(MAX_WORKERS, n));
}

export class TracePool {
  /**
   * onProgress(gen, done, total): rays traced so far over every slice.
   * onDone(gen, m): worker.js's 'done' message plus `workers` (slices).
   * onError(gen, message).
   */
  constructor({ onProgress, onDone, onError }) {
    this.cb = { onProgress, onDone, onError };
    this.workers = [];
    this.job = null;
  }

  /**
   * Traces `layoutJson` (with `rays` per source when given; recording at
   * most `maxHits` screen hits, the core's cap when undefined) as
   * generation `gen`.
   */
  start(gen, layoutJson, rays = undefined, maxHits = undefined) {
    this.cancel();
    if (!this.workers.length) {
      const n = poolSize();
      for (let i = 0; i < n; i++) {
        const w = new Worker(new URL('./worker.js', import.meta.url), { type: 'module' });
        w.onmessage = (ev) => this.message(w, ev.data);
        w.onerror = (ev) => {
          ev.preventDefault?.();
          if (this.workers.includes(w)) this.fail(`trace worker ${i + 1} of ${n} failed: ${ev.message || 'unknown error'}`);
        };
        this.workers.push(w);
      }
    }
    const parts = this.workers.length;
    this.job = {
      gen, rays, parts, t0: performance.now(), left: parts,
      done: new Array(parts).fill(0), total: new Array(parts).fill(0), slices: new Array(parts).fill(null),
    };
    this.workers.forEach((w, k) => w.postMessage({ type: 'slice', gen, layout: layoutJson, rays, maxHits, k, parts, keep: k === 0 }));
  }

  message(worker, m) {
    const job = this.job;
    if (!job || m.gen !== job.gen || !this.workers.includes(worker)) return;
    if (m.type === 'progress') {
      job.done[m.k] = m.done;
      job.total[m.k] = m.total;
      this.progress();
    } else if (m.type === 'slice') {
      if (job.slices[m.k]) return;
      job.slices[m.k] = m;
      job.done[m.k] = job.total[m.k] = m.counts[0];
      this.progress();
      if (--job.left === 0) this.merge();
    } else if (m.type === 'done') {
      this.job = null;
      this.cb.onDone(m.gen, { ...m, workers: job.parts });
    } else if (m.type === 'error') {
      this.fail(m.message);
    }
  }

  /** Combined progress; a slice not heard from yet counts as the average size. */
  progress() {
    const { gen, done, total } = this.job;
    const known = total.filter((t) => t > 0);
    const mean = known.length ? known.reduce((a, b) => a + b, 0) / known.length : 0;
    const sum = total.reduce((a, t) => a + (t > 0 ? t : mean), 0);
    this.cb.onProgress(gen, done.reduce((a, b) => a + b, 0), sum);
  }

  /** Hands slices 1 … K−1 to worker 0 (which kept slice 0) to merge. */
  merge() {
    const job = this.job;
    const transfer = [];
    const slices = job.slices.map((m, k) => {
      if (k === 0) return null;
      for (const cols of m.hits) for (const a of cols) transfer.push(a.buffer);
      return { counts: m.counts, launched: m.launched, power: m.power, limit: m.limit, hits: m.hits };
    });
    job.slices = null;
    const ms = performance.now() - job.t0;
    this.workers[0].postMessage({ type: 'merge', gen: job.gen, rays: job.rays, parts: job.parts, ms, slices }, transfer);
  }

  fail(message) {
    const job = this.job;
    this.stop();
    if (job) this.cb.onError(job.gen, message);
  }

  stop() {
    for (const w of this.workers) w.terminate();
    this.workers = [];
    this.job = null;
  }

  /** Stops a running trace; returns true when one was running. */
  cancel() {
    if (!this.job) return false;
    this.stop();
    return true;
  }

  get busy() {
    return this.job !== null;
  }
}
