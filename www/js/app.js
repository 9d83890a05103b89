// Catoptric workbench: wires the DOM, the drawing, the property sheet and
// the analysis drawer to the wasm session. No optics happens here.
//
// State flow: the page keeps a JS copy of the layout (`app.layout`, always
// the last layout the session accepted). An edit clones it, changes the
// clone and sends the JSON to the session, which validates it; a refused
// edit leaves both untouched and the message names the field. Every
// accepted change re-traces: first a quick preview in the next animation
// frame, then, when the edit settles, the full ray count. The page's own
// thread traces at most MAIN_RAYS rays and MAIN_WORK element tests (the
// core's worst-case estimate) and records at most MAIN_MAX_HITS hits: a
// layout above that gets a preview here and its full trace on the worker
// pool (pool.js), as does a trace here that reaches MAIN_MAX_HITS; a layout
// above the core's work budget is paused until the
// user asks for it (#trace-notice). A trace that stops at a limit keeps
// the layout and says why.
//
// The session is guarded (wasm.js): a trap re-creates the module and the
// session with the last good layout. Autosave keeps a history (history.js).
//
// The App's methods are grouped by concern: this file holds the state,
// messages, drawing, edits with undo, figures and start-up; trace
// scheduling (tracing.js), autosaved versions (versions.js), files and
// links (documents.js), selection and items (items.js) and the DOM wiring
// (wiring.js) are mixed in below.

import { guardSession, prepareSpare, startWasm } from './wasm.js';
import { History } from './history.js';
import { Editor } from './editor.js';
import { Props } from './props.js';
import { Drawer } from './drawer.js';
import { plainError } from './messages.js';
import { TracePool } from './pool.js';
import { applyTheme, initialTheme, readTheme } from './theme.js';
import { fmtInt, fmtStat, sceneScale, statInfo, statUnit } from './format.js';
import { CausticLayer } from './views/caustic.js';
import { psfReadout } from './views/image.js';
import { registerOffline } from './offline.js';
import { $, errText } from './dom.js';
import { Tracing, MAIN_MAX_HITS } from './tracing.js';
import { Versions } from './versions.js';
import { Documents } from './documents.js';
import { Items } from './items.js';
import { Wiring } from './wiring.js';

/** Undo steps kept. */
const UNDO_DEPTH = 200;

class App {
  constructor(session) {
    this.session = session;
    session.set_max_hits(MAIN_MAX_HITS);
    this.history = new History();
    /** The next autosave starts a new version (after a whole layout was opened). */
    this.freshSave = false;
    /** Time of the newest save this tab knows of (its own or another tab's). */
    this.seenSave = 0;
    /** The user asked to trace this layout although it is over the work budget. */
    this.allowLong = false;
    /** Hit cap for the pool's traces (undefined: the core's default). */
    this.poolMaxHits = undefined;
    this.recoveries = 0;
    this.layout = JSON.parse(session.layout_json());
    this.selection = null;
    this.geom = { outline: new Float32Array(), spans: new Uint32Array(), fan: new Float32Array(), fanSrc: new Uint16Array(), fanEsc: new Uint8Array() };
    this.result = null;
    this.undo = [];
    this.redo = [];
    this.gesture = null;
    this.lastEdit = { key: null, t: 0 };
    this.traceGen = 0;
    this.liveRaf = 0;
    this.fullTimer = 0;
    this.drawRaf = 0;
    this.spotScreen = 0;
    this.theme = readTheme();
    this.background = new TracePool({
      onProgress: (gen, done, total) => this.progress(gen, done, total),
      onDone: (gen, m) => this.workerDone(gen, m),
      onError: (gen, msg) => { this.hideProgress(); this.setTraceState('preview'); this.message(`The full trace failed: ${msg}. Your layout is unchanged.`); },
    });
    this.caustic = new CausticLayer(this);
    this.editor = new Editor($('canvas'), this);
    this.props = new Props($('props'), $('sheet-title'), $('btn-delete'), this);
    this.drawer = new Drawer($('drawer'), $('view-tabs'), $('view-body'), this);
    this.wire();
  }

  // ---- messages -----------------------------------------------------------
  /**
   * Shows a message; errors in the page's words (messages.js). `input`:
   * an error about what the user just entered, cleared by the next edit
   * that goes through.
   */
  message(text, kind = 'error', { input = false, about = this.layout } = {}) {
    const box = $('message');
    // `about`: the layout the error's field paths point into (null: another one, e.g. a file that did not open).
    $('message-text').textContent = kind === 'error' ? plainError(text, about) : text;
    box.classList.toggle('info', kind === 'info');
    box.hidden = false;
    box.dataset.kind = kind;
    box.dataset.input = String(input);
    clearTimeout(this.msgTimer);
    if (kind === 'info') this.msgTimer = setTimeout(() => { box.hidden = true; }, 5000);
  }
  clearMessage() {
    $('message').hidden = true;
  }
  showHint(text) {
    const h = $('tool-hint');
    h.textContent = text;
    h.hidden = !text;
  }

  // ---- geometry and drawing --------------------------------------------------
  /** Copies outlines out of wasm memory (views go stale on the next call). */
  refreshOutline() {
    const s = this.session;
    const outline = s.outline_points_view().slice();
    const spans = s.outline_spans_view().slice();
    this.geom = { ...this.geom, outline, spans };
  }
  refreshFan() {
    const s = this.session;
    const fan = s.fan_segments_view().slice();
    const fanSrc = s.fan_sources_view().slice();
    const fanEsc = s.fan_escaping_view().slice();
    this.geom = { ...this.geom, fan, fanSrc, fanEsc };
  }
  requestDraw() {
    if (this.drawRaf) return;
    this.drawRaf = requestAnimationFrame(() => {
      this.drawRaf = 0;
      this.editor.draw();
    });
  }
  baseSag(elementIndex, rho) {
    return this.session.base_sag_at(elementIndex, rho) ?? 0;
  }
  pointerAt(w) {
    const st = this.editor.step();
    const dp = Math.max(0, -Math.floor(Math.log10(st)));
    $('coords').textContent = `y ${w[0].toFixed(dp)} mm · z ${w[1].toFixed(dp)} mm`;
  }

  // ---- layout changes ----------------------------------------------------------
  currentJson() {
    return JSON.stringify(this.layout);
  }

  /** Validates a changed copy in the session; returns an error text or null. */
  tryApply(mutator) {
    const cand = structuredClone(this.layout);
    mutator(cand);
    try {
      this.session.set_layout_json(JSON.stringify(cand));
    } catch (e) {
      return errText(e);
    }
    this.layout = cand;
    this.refreshOutline();
    return null;
  }

  pushUndo(json) {
    this.undo.push(json);
    if (this.undo.length > UNDO_DEPTH) this.undo.shift();
    this.redo.length = 0;
    this.updateUndo();
  }

  /**
   * One-step edit. `coalesce` (a field key) merges quick successive edits
   * of the same field into one undo step. Returns an error text or null.
   */
  edit(mutator, { coalesce = null } = {}) {
    const before = this.currentJson();
    const err = this.tryApply(mutator);
    if (err) return err;
    if ($('message').dataset.input === 'true') this.clearMessage(); // the input it was about has changed
    if (before === this.currentJson()) return null;
    const now = performance.now();
    const merge = coalesce && this.lastEdit.key === coalesce && now - this.lastEdit.t < 2000;
    if (!merge) this.pushUndo(before);
    this.lastEdit = { key: coalesce, t: now };
    this.changed({ live: false });
    return null;
  }

  beginGesture() {
    this.gesture = this.currentJson();
    this.lastEdit = { key: null, t: 0 };
  }
  gestureEdit(mutator) {
    const err = this.tryApply(mutator);
    if (err) { this.message(err, 'error', { input: true }); return; }
    this.changed({ live: true });
  }
  endGesture() {
    if (this.gesture !== null && this.gesture !== this.currentJson()) this.pushUndo(this.gesture);
    this.gesture = null;
    this.changed({ live: false });
  }

  /** After any accepted change: save, redraw, re-trace, refresh the UI. */
  changed({ live, refit = false }) {
    if (!live) this.autosave();
    if (this.selection && !this.layout[this.selection.list][this.selection.index]) this.selection = null;
    if (refit) this.editor.fit();
    this.props.refresh();
    this.updateChrome();
    this.requestTrace(live);
    this.requestDraw();
  }

  /** Replaces the whole layout from text (file, preset, link). */
  loadText(text, what, { viaLink = false } = {}) {
    const before = this.currentJson();
    try {
      if (viaLink) this.session.load_link(text); else this.session.load_json(text);
    } catch (e) {
      this.message(`Could not open ${what}: ${errText(e).replace(/\.+$/, '')}. The current layout is unchanged.`, 'error', { about: null });
      return false;
    }
    this.pushUndo(before);
    this.freshSave = true;
    this.adopt();
    return true;
  }

  /** Takes the session's layout as the page's copy (after a load). */
  adopt() {
    this.layout = JSON.parse(this.session.layout_json());
    this.allowLong = false;
    this.selection = null;
    this.spotScreen = 0;
    this.refreshOutline();
    this.geom = { ...this.geom, fan: new Float32Array(), fanSrc: new Uint16Array(), fanEsc: new Uint8Array() };
    this.props.render();
    this.changed({ live: false, refit: true });
  }

  restore(json) {
    try {
      this.session.set_layout_json(json);
    } catch (e) {
      this.message(`Undo failed: ${errText(e)}`);
      return;
    }
    this.layout = JSON.parse(json);
    this.refreshOutline();
    this.lastEdit = { key: null, t: 0 };
    this.props.render();
    this.changed({ live: false });
  }
  doUndo() {
    if (!this.undo.length) return;
    this.redo.push(this.currentJson());
    this.restore(this.undo.pop());
    this.updateUndo();
  }
  doRedo() {
    if (!this.redo.length) return;
    this.undo.push(this.currentJson());
    this.restore(this.redo.pop());
    this.updateUndo();
  }
  updateUndo() {
    $('btn-undo').disabled = !this.undo.length;
    $('btn-redo').disabled = !this.redo.length;
  }

  // ---- screens and figures -----------------------------------------------------------------
  screenIds() {
    return this.layout.elements.filter((e) => e.kind === 'screen').map((e) => e.id);
  }

  setSpotScreen(i) {
    this.spotScreen = i;
    $('ro-screen').value = String(i);
    this.updateFigures();
    this.drawer.update();
  }

  updateScreens() {
    const ids = this.screenIds();
    if (this.spotScreen >= ids.length) this.spotScreen = 0;
    const sel = $('ro-screen');
    const want = ids.map((id, i) => `${i}:${id}`).join('|');
    if (sel.dataset.ids !== want) {
      sel.dataset.ids = want;
      sel.replaceChildren(...ids.map((id, i) => new Option(id, String(i))));
      if (!ids.length) sel.append(new Option('(no screen)', ''));
    }
    sel.value = ids.length ? String(this.spotScreen) : '';
    sel.disabled = !ids.length;
  }

  /** Main figures of the chosen screen in the readout strip. */
  updateFigures() {
    const box = $('ro-figures');
    box.replaceChildren();
    const rep = this.result?.report;
    const sc = rep?.screens?.[this.spotScreen];
    if (!sc) return;
    const add = (key, value, extra = '') => {
      const info = statInfo(key);
      const span = document.createElement('span');
      // The hover keeps the raw value (a figure shown as 0 may be rounding noise).
      span.title = `${info.title}${extra}: ${value}${info.unit ? ` ${info.unit}` : ''}`;
      span.dataset.readout = key;
      const b = document.createElement('b');
      // The statistics table's formatter: lengths switch unit (µm → mm → m),
      // shifts below the scene's noise read 0.
      const unit = statUnit(key, Math.abs(value));
      b.textContent = key === 'hits' ? fmtInt(value)
        : `${fmtStat(key, value, { unit, scale: sceneScale(this.layout) })}${unit ? `\u202f${unit}` : ''}`;
      span.append(`${info.label} `, b);
      box.append(span);
    };
    add('hits', sc.hits);
    add('power_w', sc.power_w);
    const src = sc.by_source?.[0];
    if (src) {
      const who = sc.by_source.length > 1 ? ` — source ${src.source}` : '';
      add('rms_radius_um', src.rms_radius_um, who);
      if (typeof src.best_focus_shift_mm === 'number') add('best_focus_shift_mm', src.best_focus_shift_mm, who);
      const sun = this.session.has_sun();
      if (sun && typeof sc.flux?.peak_suns === 'number') add('flux.peak_suns', sc.flux.peak_suns);
      else box.append(psfReadout(this, src, who));
    } else {
      const span = document.createElement('span');
      span.className = 'muted';
      span.textContent = 'no light on this screen';
      box.append(span);
    }
  }

  /** Name field, sun caution, undo buttons, drawer-independent chrome. */
  updateChrome() {
    const name = $('layout-name');
    if (document.activeElement !== name) name.value = this.layout.name;
    document.title = `${this.layout.name} — Catoptric`;
    $('sun-caution').hidden = !this.session.has_sun();
    this.updateUndo();
  }

  // ---- theme ------------------------------------------------------------------------------
  setTheme(name) {
    applyTheme(name, true);
    this.theme = readTheme();
    $('btn-theme').textContent = name === 'dark' ? 'Light' : 'Dark';
    this.props.render();
    this.drawer.update();
    this.requestDraw();
  }

  // ---- start ----------------------------------------------------------------------------------
  async start() {
    this.setTheme(document.documentElement.dataset.theme || 'light');
    const presets = await this.loadPresetIndex();
    const restored = this.restoreNewest();
    // A shared link opens over the restored work, which stays one Undo away
    // and one version back in History.
    if (this.openHash()) {
      if (restored) this.message('Opened the layout from the shared link. Undo (or History) brings back the layout you were working on.', 'info');
      return;
    }
    if (restored) return;
    if (presets.length) {
      await this.loadPreset(presets[0].file, presets[0].title);
      this.undo.length = 0;
      this.updateUndo();
    } else {
      this.adopt();
    }
  }
}

Object.assign(App.prototype, Tracing, Versions, Documents, Items, Wiring);

async function main() {
  applyTheme(initialTheme());
  let mod;
  try {
    mod = await startWasm();
  } catch (e) {
    const box = $('message');
    $('message-text').textContent = `The workbench could not start: its WebAssembly module did not load (${errText(e)}).`;
    box.hidden = false;
    return;
  }
  let app = null;
  const { session } = guardSession(new mod.Session(), {
    restore: (s) => app.restoreInto(s),
    onRecovered: (err, ok) => app.recovered(err, ok),
  });
  app = new App(session);
  window.catoptric = app; // for the browser tests and the console
  await app.start();
  document.body.dataset.ready = 'true';
  // A spare module instance, so a trap is recovered from at once.
  prepareSpare();
  // The offline copy is made once the page has started.
  registerOffline();
}

main();
