// The page's side of the diffraction-image worker (psf-worker.js): one
// worker, made at the first request and kept. Requests are keyed by what
// they ask (layout text, screen, source, focus, grid); the last few answers
// are kept, a request for a kept answer is answered at once, and while the
// worker is busy only requests about the newest layout text wait (those
// about an older layout are dropped: the views ask again on every update).

/** Answers kept for repeated requests. */
const KEEP = 12;

export class PsfClient {
  constructor() {
    this.worker = null;
    this.busy = null; // { id, key, cbs }
    this.waiting = new Map(); // key → { params, cbs }, one layout text
    this.done = new Map(); // key → answer
    this.seq = 0;
  }

  /** The kept answer for `params`, or undefined. */
  cached(params) {
    return this.done.get(keyOf(params));
  }

  /**
   * Asks for the image of `params` ({ layout, screen, source, at, grid });
   * `cb(answer)` gets { report, pixels, side } or { error }.
   */
  request(params, cb) {
    const key = keyOf(params);
    const kept = this.done.get(key);
    if (kept) { cb(kept); return; }
    if (this.busy?.key === key) { this.busy.cbs.push(cb); return; }
    const w = this.waiting.get(key);
    if (w) { w.cbs.push(cb); return; }
    for (const [k, job] of this.waiting) if (job.params.layout !== params.layout) this.waiting.delete(k);
    this.waiting.set(key, { params, cbs: [cb] });
    this.pump();
  }

  pump() {
    if (this.busy || !this.waiting.size) return;
    const [key, job] = this.waiting.entries().next().value;
    this.waiting.delete(key);
    this.busy = { id: ++this.seq, key, cbs: job.cbs };
    this.ensureWorker().postMessage({ id: this.busy.id, ...job.params });
  }

  ensureWorker() {
    if (this.worker) return this.worker;
    const w = new Worker(new URL('./psf-worker.js', import.meta.url), { type: 'module' });
    w.onmessage = (ev) => this.answer(ev.data);
    w.onerror = (ev) => {
      ev.preventDefault?.();
      // A trap or a failed start: a new worker for the next request.
      w.terminate();
      this.worker = null;
      this.answer({ id: this.busy?.id, error: `the image worker failed: ${ev.message || 'unknown error'}` });
    };
    this.worker = w;
    return w;
  }

  answer(m) {
    const job = this.busy;
    if (!job || m.id !== job.id) return;
    this.busy = null;
    const ans = m.error ? { error: m.error } : { report: m.report, pixels: m.pixels, side: m.side };
    this.done.set(job.key, ans);
    while (this.done.size > KEEP) this.done.delete(this.done.keys().next().value);
    for (const cb of job.cbs) {
      try { cb(ans); } catch (e) { console.error(e); }
    }
    this.pump();
  }
}

function keyOf(p) {
  return `${p.screen}|${p.source}|${p.at}|${p.grid}|${p.layout}`;
}
