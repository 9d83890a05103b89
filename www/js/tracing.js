// Trace scheduling, mixed into the workbench (app.js): every accepted
// change re-traces — a quick preview on the page's own thread in the next
// animation frame, then, when the edit settles, the full ray count, here
// when it is small enough or else on the worker pool (pool.js); a layout
// above the core's work budget waits for the user (#trace-notice). Also
// the recovery after a WebAssembly trap (wasm.js re-creates the module).

import { api } from './wasm.js';
import { fmtInt, fmtNum } from './format.js';
import { collectAnalysis } from './views/data.js';
import { updateCautions } from './views/cautions.js';
import { $, b, errText } from './dom.js';

/** Most rays the page's own thread traces (previews and small layouts). */
const MAIN_RAYS = 20_000;
/** Most worst-case element tests (work_estimate) the page's own thread traces. */
const MAIN_WORK = 5e6;
/**
 * Most screen hits a trace on the page's own thread records (≈ 15 MB); a
 * full trace that would record more is handed to the pool.
 */
export const MAIN_MAX_HITS = 250_000;
/** Quiet time after a drag before the full trace, ms. */
const SETTLE_MS = 300;

/** A large count in words a reader takes in at once: 1.2 × 10¹¹. */
function sci(x) {
  if (!(x >= 1e6)) return fmtInt(x);
  const e = Math.floor(Math.log10(x));
  const m = x / 10 ** e;
  const sup = String(e).split('').map((d) => '⁰¹²³⁴⁵⁶⁷⁸⁹'[Number(d)]).join('');
  return `${m.toFixed(1).replace(/\.0$/, '')} × 10${sup}`;
}

/** The App's tracing methods. */
export const Tracing = {
  requestTrace(live) {
    this.traceGen++;
    document.body.dataset.trace = 'pending';
    if (this.background.cancel()) this.hideProgress();
    if (!this.liveRaf) this.liveRaf = requestAnimationFrame(() => this.runLive());
    clearTimeout(this.fullTimer);
    this.fullTimer = setTimeout(() => this.runFull(), live ? SETTLE_MS : 0);
  },

  /** True when the whole trace is small enough for the page's own thread. */
  fitsMain() {
    const s = this.session;
    return s.layout_rays() <= MAIN_RAYS && s.work_estimate(undefined) <= MAIN_WORK;
  },

  /**
   * Rays per source of a preview on the page's own thread: at most
   * MAIN_RAYS in all and MAIN_WORK element tests; undefined when the whole
   * trace fits, 0 when not even one ray per source does.
   */
  previewRays() {
    const s = this.session;
    const n = s.source_count();
    if (!n || this.fitsMain()) return undefined;
    const perRay = s.work_estimate(1) / n;
    const per = Math.floor(Math.min(MAIN_RAYS, MAIN_WORK / Math.max(perRay, 1)) / n);
    return Math.max(0, Math.min(per, Math.floor(s.layout_rays() / n) || 1));
  },

  runLive() {
    this.liveRaf = 0;
    const gen = this.traceGen;
    if (this.result && this.result.gen === gen) return;
    this.traceMain(gen, this.previewRays());
  },

  runFull() {
    const gen = this.traceGen;
    if (this.result && this.result.gen === gen && this.result.kind === 'full') return;
    if (this.liveRaf) { cancelAnimationFrame(this.liveRaf); this.liveRaf = 0; }
    const handedOver = () => this.result?.gen === gen && this.result.overMain;
    if (this.fitsMain() && !handedOver()) {
      this.hideNotice();
      this.traceMain(gen, undefined);
      if (!handedOver()) return;
    }
    if (!this.result || this.result.gen !== gen) this.traceMain(gen, this.previewRays());
    if (gen !== this.traceGen) return; // the preview failed and the page moved on
    if (this.session.over_budget() && !this.allowLong) {
      this.pause();
      return;
    }
    this.hideNotice();
    this.startPool(gen);
  },

  startPool(gen) {
    this.setTraceState('running');
    this.showProgress(0, this.session.layout_rays());
    this.background.start(gen, this.session.layout_json(), undefined, this.poolMaxHits);
  },

  /** Over the work budget: keep the preview, say so, offer to trace anyway. */
  pause() {
    const s = this.session;
    const work = s.work_estimate(undefined);
    const budget = api().Session.work_budget();
    const pre = this.result?.gen === this.traceGen && this.result.kind === 'preview' ? this.result : null;
    const what = !pre ? `Nothing has been traced yet${s.fan_rays_traced() ? '' : ', not even the ray fan'}.`
      : pre.limit ? `A preview of ${fmtInt(pre.launched)} rays stopped at a limit too: ${pre.limit}.`
        : `The figures are from a preview of ${fmtInt(pre.launched)} rays.`;
    this.setTraceState('paused');
    this.notice('paused', [
      b('Full trace paused. '),
      `This layout could take up to ${sci(work)} ray–element tests (${fmtInt(s.layout_rays())} rays, max_bounces ${this.layout.max_bounces}), `,
      `above the budget of ${sci(budget)}: it might run for minutes. ${what} `,
      'Lower the rays or max_bounces and it traces at once.',
    ], { label: 'Trace anyway', title: 'Run the full trace in the background workers; Stop ends it', run: () => this.traceAnyway() });
  },

  traceAnyway() {
    this.allowLong = true;
    this.hideNotice();
    const gen = this.traceGen;
    if (this.result?.gen === gen && this.result.kind === 'full') return;
    this.startPool(gen);
  },

  /** The trace notice strip (paused or stopped at a limit): parts and an optional button. */
  notice(kind, parts, button = null) {
    const box = $('trace-notice');
    box.dataset.kind = kind;
    const text = $('trace-notice-text');
    text.replaceChildren(...parts);
    const btn = $('trace-notice-action');
    btn.hidden = !button;
    if (button) {
      btn.textContent = button.label;
      btn.title = button.title;
      btn.onclick = button.run;
    }
    box.hidden = false;
  },

  hideNotice() {
    $('trace-notice').hidden = true;
  },

  traceMain(gen, perSource) {
    const s = this.session;
    if (perSource === 0) {
      // Not even one ray per source fits the page's own thread: draw the fan only.
      try { s.retrace_fan(); } catch (e) { this.message(`Trace failed: ${errText(e)}`); return; }
      this.refreshFan();
      this.setResult(null, gen);
      return;
    }
    try {
      s.retrace(perSource);
    } catch (e) {
      this.message(`Trace failed: ${errText(e)}`);
      return;
    }
    this.refreshFan();
    const limit = s.limit_message() ?? null;
    // A whole trace here that reached this thread's hit cap goes to the pool.
    const overMain = perSource === undefined && limit !== null;
    const res = {
      gen,
      kind: perSource === undefined && !overMain ? 'full' : 'preview',
      overMain,
      reportText: s.report_json(),
      launched: s.rays_launched(),
      escaped: s.rays_escaped(),
      absorbed: s.rays_absorbed(),
      ms: s.trace_ms(),
      limit,
      spots: new Map(),
      spot: null,
    };
    res.report = res.reportText ? JSON.parse(res.reportText) : null;
    res.analysis = collectAnalysis(s);
    res.spot = (i) => {
      if (res.spots.has(i)) return res.spots.get(i);
      if (this.result !== res || i >= s.screen_count()) return null;
      const n = s.select_spot(i);
      const v = { uv: s.spot_uv_view().slice(), src: s.spot_source_view().slice(), w: s.spot_weight_view().slice(), stride: 1, total: n };
      res.spots.set(i, v);
      return v;
    };
    this.setResult(res);
  },

  workerDone(gen, m) {
    this.hideProgress();
    if (gen !== this.traceGen) return;
    const spots = new Map(m.spots.map((v, i) => [i, v]));
    const res = {
      gen, kind: 'full', reportText: m.reportText, report: JSON.parse(m.reportText),
      launched: m.launched, escaped: m.escaped, absorbed: m.absorbed, ms: m.ms, spots, analysis: m.analysis,
      spot: (i) => spots.get(i) ?? null, background: true, workers: m.workers, limit: m.limit ?? null,
    };
    this.setResult(res);
  },

  /** Shows a trace's figures (or none: `res` null, for generation `gen`). */
  setResult(res, gen = res?.gen) {
    this.result = res;
    const none = !res;
    const stopped = res?.limit && res.kind === 'full';
    if (res?.kind === 'full') this.trapJson = null; // traced through: no trap loop
    this.setTraceState(none ? 'preview' : stopped ? 'limit' : res.kind);
    $('ro-rays').textContent = none ? '–' : fmtInt(res.launched);
    $('ro-rays').title = none ? 'Too costly to preview here' : `${fmtInt(res.launched)} rays launched`;
    $('ro-fate').textContent = none ? '–' : `${fmtInt(res.escaped)} / ${fmtInt(res.absorbed)}`;
    const time = $('ro-time');
    time.textContent = none ? '–' : `${fmtNum(res.ms, 3)} ms${res.background ? ' (background)' : ''}`;
    if (res?.background) {
      time.dataset.workers = String(res.workers);
      time.title = `Wall time of the last trace, in the background on ${res.workers} worker${res.workers === 1 ? '' : 's'}`;
    } else {
      delete time.dataset.workers;
      time.removeAttribute('title');
    }
    const kind = $('trace-notice').dataset.kind;
    if (stopped) this.showLimit(res);
    else if (gen === this.traceGen && (kind === 'limit' || (kind === 'paused' && res?.kind === 'full'))) this.hideNotice();
    this.updateScreens();
    this.updateFigures();
    updateCautions(this);
    this.drawer.update();
    this.requestDraw();
  },

  /** A trace stopped at a limit: its message, and the layout stays as it is. */
  showLimit(res) {
    this.notice('limit', [
      b('The trace stopped at a limit: '),
      `${res.limit}. `,
      'Your layout is unchanged; the screens show no hits from this trace.',
    ]);
  },

  setTraceState(kind) {
    const el = $('ro-state');
    el.dataset.trace = kind;
    el.textContent = { full: 'full trace', running: 'tracing…', preview: 'preview', paused: 'paused', limit: 'stopped at a limit' }[kind] ?? '–';
    document.body.dataset.trace = kind;
  },

  showProgress(done, total) {
    $('progress').hidden = false;
    const f = total > 0 ? done / total : 0;
    $('progress-fill').style.width = `${(100 * f).toFixed(1)}%`;
    $('progress-text').textContent = `${Math.floor(100 * f)} %`;
    $('progress').title = `Full trace in the background: ${fmtInt(done)} of ${fmtInt(total)} rays`;
  },

  progress(gen, done, total) {
    if (gen === this.traceGen) this.showProgress(done, total);
  },

  hideProgress() {
    $('progress').hidden = true;
  },

  /** The wasm module trapped and was re-created: catch the page up. */
  recovered(err, ok) {
    this.recoveries++;
    document.body.dataset.recoveries = String(this.recoveries);
    this.result = null;
    this.lastEdit = { key: null, t: 0 };
    this.background.cancel();
    this.hideProgress();
    try {
      this.refreshOutline();
    } catch { /* shown below */ }
    const what = errText(err);
    this.message(ok
      ? `The WebAssembly module stopped (${what}) and was restarted with your layout; you can go on working.`
      : `The WebAssembly module stopped (${what}) and was restarted, but your layout could not be reloaded into it; it is still in History.`);
    // Trace again, unless this very layout stopped the module before: then
    // wait for the user rather than loop.
    const json = this.currentJson();
    const again = this.trapJson === json;
    this.trapJson = json;
    if (again) {
      this.traceGen++;
      clearTimeout(this.fullTimer);
      if (this.liveRaf) { cancelAnimationFrame(this.liveRaf); this.liveRaf = 0; }
      this.setTraceState('paused');
      this.notice('paused', [
        b('Trace paused. '),
        'Tracing this layout stopped the WebAssembly module twice in a row; change it (fewer rays or bounces) or trace it once more.',
      ], { label: 'Trace again', title: 'Trace this layout once more', run: () => { this.hideNotice(); this.requestTrace(false); } });
    } else {
      this.requestTrace(false);
    }
    this.requestDraw();
  },

  /** Loads the page's last good state into a replacement session. */
  restoreInto(s) {
    s.set_max_hits(MAIN_MAX_HITS);
    s.load_json(this.currentJson());
  },
};
