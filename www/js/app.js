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

import { api, guardSession, prepareSpare, startWasm } from './wasm.js';
import { History, LISTED, isQuotaError } from './history.js';
import { Editor, niceStep, roundTo } from './editor.js';
import { Props } from './props.js';
import { Drawer } from './drawer.js';
import { plainError } from './messages.js';
import { TracePool } from './pool.js';
import { applyTheme, initialTheme, readTheme } from './theme.js';
import { fmtInt, fmtNum, fmtStat, sceneScale, statInfo, statUnit } from './format.js';
import { exportCsv, exportSvg, download, slug } from './export.js';
import { collectAnalysis } from './views/data.js';
import { CausticLayer } from './views/caustic.js';
import { updateCautions } from './views/cautions.js';
import { exportAnalysis } from './views/analysis-export.js';
import { psfReadout } from './views/image.js';
import { openHelp, wireHelp } from './help.js';
import { registerOffline } from './offline.js';
import { ExportDialog } from './export-size.js';

/** Most rays the page's own thread traces (previews and small layouts). */
const MAIN_RAYS = 20_000;
/** Most worst-case element tests (work_estimate) the page's own thread traces. */
const MAIN_WORK = 5e6;
/**
 * Most screen hits a trace on the page's own thread records (≈ 15 MB); a
 * full trace that would record more is handed to the pool.
 */
const MAIN_MAX_HITS = 250_000;
const SETTLE_MS = 300;
const MAX_FILE_BYTES = 16 << 20;
const UNDO_DEPTH = 200;

const $ = (id) => document.getElementById(id);

const KEYS = [
  ['Drag empty space · right or middle drag', 'Pan the drawing'],
  ['Mouse wheel · <kbd>+</kbd> <kbd>−</kbd>', 'Zoom'],
  ['<kbd>F</kbd>', 'Fit the layout in view'],
  ['<kbd>G</kbd>', 'Grid on or off'],
  ['Click', 'Select a mirror, screen or source'],
  ['Drag an element or its square handle', 'Move it (coordinates snap to the zoom level)'],
  ['Drag the round handle', 'Rotate (hold <kbd>Shift</kbd> for 15° steps)'],
  ['<kbd>[</kbd> <kbd>]</kbd>', 'Rotate by 1° (with <kbd>Shift</kbd>: 15°)'],
  ['Arrow keys', 'Nudge the selection (with <kbd>Shift</kbd>: ten times as far)'],
  ['Drag a knot of a free-form mirror', 'Reshape it'],
  ['<kbd>Delete</kbd> · <kbd>Backspace</kbd>', 'Delete the selection'],
  ['<kbd>D</kbd>', 'Duplicate the selection'],
  ['<kbd>X</kbd>', 'Turn a mirror’s reflective side over (the surface stays put)'],
  ['<kbd>M</kbd> <kbd>K</kbd> <kbd>S</kbd> <kbd>B</kbd> <kbd>L</kbd> <kbd>U</kbd>', 'Add a mirror, free-form mirror, screen, beam, lamp, sun'],
  ['<kbd>Enter</kbd> · double-click', 'Finish a free-form mirror'],
  ['<kbd>Esc</kbd>', 'Cancel the tool, clear the selection, close a dialog'],
  ['<kbd>Ctrl</kbd>+<kbd>Z</kbd> · <kbd>Ctrl</kbd>+<kbd>Shift</kbd>+<kbd>Z</kbd> or <kbd>Ctrl</kbd>+<kbd>Y</kbd>', 'Undo · redo'],
  ['<kbd>Ctrl</kbd>+<kbd>S</kbd> · <kbd>Ctrl</kbd>+<kbd>O</kbd>', 'Save · open a layout file'],
  ['<kbd>A</kbd>', 'Open or close the analysis drawer'],
  ['<kbd>T</kbd>', 'Light or dark colours'],
  ['<kbd>?</kbd>', 'This help'],
];

/**
 * Text of a layout file, read as the command line reads it: UTF-8 (a byte
 * order mark is dropped) or UTF-16 in either byte order after its mark.
 */
function decodeLayoutBytes(bytes) {
  const enc = bytes[0] === 0xff && bytes[1] === 0xfe ? 'utf-16le'
    : bytes[0] === 0xfe && bytes[1] === 0xff ? 'utf-16be' : 'utf-8';
  return new TextDecoder(enc).decode(bytes);
}

/** A bold run of text. */
function b(text) {
  const el = document.createElement('b');
  el.textContent = text;
  return el;
}

function errText(e) {
  return String(e?.message ?? e);
}

/** A large count in words a reader takes in at once: 1.2 × 10¹¹. */
function sci(x) {
  if (!(x >= 1e6)) return fmtInt(x);
  const e = Math.floor(Math.log10(x));
  const m = x / 10 ** e;
  const sup = String(e).split('').map((d) => '⁰¹²³⁴⁵⁶⁷⁸⁹'[Number(d)]).join('');
  return `${m.toFixed(1).replace(/\.0$/, '')} × 10${sup}`;
}

function clock(t) {
  if (!(t > 1)) return 'earlier';
  const d = new Date(t);
  const today = new Date().toDateString() === d.toDateString();
  return today ? d.toLocaleTimeString() : d.toLocaleString();
}

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

  /**
   * Keeps the layout in this tab's autosave history (a new version after a
   * whole layout was opened). A refused save (full storage) is said once
   * and marked on the History button; the layout stays in the page.
   */
  autosave() {
    const fresh = this.freshSave;
    this.freshSave = false;
    const err = this.history.save(this.currentJson(), { fresh });
    const btn = $('btn-history');
    if (err) {
      if (btn.dataset.saved !== 'false') {
        const why = isQuotaError(err) ? 'the browser’s storage for this page is full' : errText(err);
        this.message(`Could not keep this layout in the browser: ${why}. It stays open in this tab — use Save to keep it as a file.`);
      }
      btn.dataset.saved = 'false';
      btn.title = `Not kept in this browser: ${errText(err)}`;
    } else {
      btn.dataset.saved = 'true';
      btn.title = 'Earlier versions of your work kept in this browser';
      this.seenSave = Math.max(this.seenSave, this.history.latest()?.t ?? 0);
    }
    if (!$('history-menu').hidden) this.renderHistory();
  }

  /** The History menu: saved versions (newest first) and kept unrestorable ones. */
  renderHistory() {
    const menu = $('history-menu');
    const rows = [];
    const status = document.createElement('p');
    status.className = 'menu-note';
    status.textContent = this.history.failure
      ? `Not kept in this browser: ${errText(this.history.failure)}. Use Save to keep a file.`
      : 'Kept in this browser as you work; choose a version to open it (Undo comes back).';
    rows.push(status);
    const current = this.currentJson();
    const list = this.history.entries().slice(0, LISTED);
    for (const e of list) {
      const btn = document.createElement('button');
      btn.type = 'button';
      btn.setAttribute('role', 'menuitem');
      btn.className = 'history-item';
      btn.dataset.history = String(e.t);
      const same = e.json === current;
      const name = document.createElement('span');
      name.className = 'history-name';
      name.textContent = e.name;
      const when = document.createElement('span');
      when.className = 'history-when';
      when.textContent = `${clock(e.t)}${e.own ? '' : ' · other tab'}${same ? ' · open now' : ''}`;
      btn.append(name, when);
      btn.title = `${e.name}, saved ${e.t > 1 ? new Date(e.t).toLocaleString() : 'by an earlier version of the page'}`;
      btn.disabled = same;
      btn.onclick = () => {
        menu.hidden = true;
        if (this.loadText(e.json, `the version saved ${clock(e.t)}`)) this.message(`Opened the version of “${e.name}” saved ${clock(e.t)}. Undo brings back what you had.`, 'info');
      };
      rows.push(btn);
    }
    if (!list.length) {
      const p = document.createElement('p');
      p.className = 'menu-note';
      p.textContent = 'No saved versions yet.';
      rows.push(p);
    }
    const kept = this.history.kept();
    if (kept.length) {
      const h = document.createElement('p');
      h.className = 'menu-head';
      h.textContent = 'Could not be restored (kept as they were)';
      rows.push(h);
      kept.forEach((k, i) => {
        const row = document.createElement('div');
        row.className = 'history-kept';
        row.dataset.kept = String(i);
        const what = document.createElement('span');
        what.className = 'history-name';
        what.textContent = `${k.name} · ${clock(k.t)}`;
        const why = document.createElement('span');
        why.className = 'history-error';
        why.textContent = k.error;
        const dl = document.createElement('button');
        dl.type = 'button';
        dl.textContent = 'Download';
        dl.title = 'Download this version exactly as it was kept, as a .json file';
        dl.onclick = () => this.downloadKept(k);
        const del = document.createElement('button');
        del.type = 'button';
        del.textContent = 'Discard';
        del.title = 'Forget this version';
        del.onclick = () => { this.history.discardKept(i); this.renderHistory(); };
        row.append(what, why, dl, del);
        rows.push(row);
      });
    }
    menu.replaceChildren(...rows);
  }

  downloadKept(k) {
    const stamp = k.t > 1 ? new Date(k.t).toISOString().slice(0, 19).replace(/[T:]/g, '-') : 'earlier';
    download(`${slug(k.name)}-unrestored-${stamp}.json`, new Blob([k.json], { type: 'application/json' }));
  }

  /** Another tab saved newer work: say so and list it. */
  onStorage(ev) {
    const l = this.history.isNewerElsewhere(ev, this.seenSave);
    if (!l) return;
    this.seenSave = l.t;
    // A tab that only saved what this one shows has nothing new.
    if (this.history.slot(l.tab)[0]?.json === this.currentJson()) return;
    if (!$('history-menu').hidden) this.renderHistory();
    this.message(`Another tab saved newer work (“${l.name}”, ${clock(l.t)}). It is in History; this tab keeps its own layout.`, 'info');
  }

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
  }

  /** Loads the page's last good state into a replacement session. */
  restoreInto(s) {
    s.set_max_hits(MAIN_MAX_HITS);
    s.load_json(this.currentJson());
  }

  // ---- selection and items ---------------------------------------------------------
  select(sel) {
    const same = (a, b) => (a === b) || (a && b && a.list === b.list && a.index === b.index);
    if (same(sel, this.selection)) return;
    this.selection = sel;
    if (sel && sel.list === 'elements' && this.layout.elements[sel.index]?.kind === 'screen') {
      const idx = this.session.screen_index(this.layout.elements[sel.index].id);
      if (idx !== undefined) this.setSpotScreen(idx);
    }
    this.props.render();
    this.requestDraw();
  }

  uniqueId(base) {
    const ids = new Set([...this.layout.elements, ...this.layout.sources].map((x) => x.id));
    for (let n = 1; ; n++) if (!ids.has(`${base}-${n}`)) return `${base}-${n}`;
  }

  /** Adds a new item of `tool` kind at world point p, sized for zoom k. */
  addItem(tool, p, k) {
    const size = niceStep(150 / k);
    let list, item;
    if (tool === 'mirror') {
      list = 'elements';
      item = { kind: 'mirror', id: this.uniqueId('mirror'), vertex: p, axis_deg: 180, form: 'revolved',
        profile: { radius: 8 * size, conic: 0 }, aperture: { diameter: size } };
    } else if (tool === 'screen') {
      list = 'elements';
      item = { kind: 'screen', id: this.uniqueId('screen'), center: p, axis_deg: 0, size: niceStep(size / 5), shape: 'square' };
    } else if (tool === 'beam' || tool === 'sun') {
      list = 'sources';
      item = { kind: 'beam', id: this.uniqueId(tool === 'sun' ? 'sun' : 'beam'), center: p, direction_deg: 0,
        diameter: size, rays: 20000, pattern: tool === 'sun' ? 'random' : 'hex',
        sun_half_angle_mrad: tool === 'sun' ? 4.65 : 0, irradiance_w_m2: 1000 };
    } else if (tool === 'lamp') {
      list = 'sources';
      item = { kind: 'point', id: this.uniqueId('lamp'), center: p, direction_deg: 0,
        cone_half_angle_deg: 20, rays: 20000, pattern: 'random', power_w: 100 };
    } else return;
    const err = this.edit((L) => { L[list].push(item); });
    if (err) { this.message(`Could not add the ${tool}: ${err}`, 'error', { input: true }); return; }
    this.select({ list, index: this.layout[list].length - 1 });
  }

  addFreeform({ vertex, axis_deg, form = 'extruded', knots, diameter, offset }) {
    const item = { kind: 'mirror', id: this.uniqueId('freeform'), vertex, axis_deg, form,
      ...(form === 'extruded' ? { length: diameter } : {}), profile: { radius: null, departure: knots }, aperture: { diameter, offset } };
    const err = this.edit((L) => { L.elements.push(item); });
    if (err) { this.message(`Could not make the free-form mirror: ${err}`, 'error', { input: true }); return; }
    this.select({ list: 'elements', index: this.layout.elements.length - 1 });
  }

  deleteSelected() {
    const sel = this.selection;
    if (!sel) return;
    this.selection = null;
    const err = this.edit((L) => { L[sel.list].splice(sel.index, 1); });
    if (err) this.message(err, 'error', { input: true });
    this.props.render();
  }

  /**
   * Turns the selected mirror's reflective side over without moving its
   * surface: the frame turns 180° (local y and z change sign), so the sag
   * becomes z'(y') = −z(−y'): R, aspheric terms and spline heights change
   * sign, extruded knots mirror in ρ, and the aperture offset changes sign.
   */
  flipSelected() {
    const sel = this.selection;
    const m = sel && this.layout[sel.list][sel.index];
    if (!m || m.kind !== 'mirror') return;
    const err = this.edit((L) => {
      const it = L.elements[sel.index];
      const p = it.profile;
      it.axis_deg = roundTo((((it.axis_deg + 180) % 360) + 360) % 360, 1e-9);
      if (typeof p.radius === 'number') p.radius = -p.radius;
      if (Array.isArray(p.aspheric)) p.aspheric = p.aspheric.map((a) => -a);
      if (Array.isArray(p.departure)) {
        p.departure = it.form === 'extruded'
          ? p.departure.map(([r, dz]) => [-r, -dz]).reverse()
          : p.departure.map(([r, dz]) => [r, -dz]);
      }
      if (it.aperture.offset) it.aperture.offset = -it.aperture.offset;
    });
    if (err) this.message(err, 'error', { input: true });
  }

  duplicateSelected() {
    const sel = this.selection;
    if (!sel) return;
    const item = structuredClone(this.layout[sel.list][sel.index]);
    item.id = this.uniqueId(item.id.replace(/-\d+$/, ''));
    const st = this.editor.step() * 20;
    const key = item.kind === 'mirror' ? 'vertex' : 'center';
    item[key] = [roundTo(item[key][0] - st, st / 20), roundTo(item[key][1] + st, st / 20)];
    const err = this.edit((L) => { L[sel.list].push(item); });
    if (err) { this.message(err, 'error', { input: true }); return; }
    this.select({ list: sel.list, index: this.layout[sel.list].length - 1 });
  }

  toolChanged(tool) {
    for (const b of document.querySelectorAll('#toolbox [data-tool]')) b.classList.toggle('active', b.dataset.tool === tool);
  }

  // ---- tracing --------------------------------------------------------------------
  requestTrace(live) {
    this.traceGen++;
    document.body.dataset.trace = 'pending';
    if (this.background.cancel()) this.hideProgress();
    if (!this.liveRaf) this.liveRaf = requestAnimationFrame(() => this.runLive());
    clearTimeout(this.fullTimer);
    this.fullTimer = setTimeout(() => this.runFull(), live ? SETTLE_MS : 0);
  }

  /** True when the whole trace is small enough for the page's own thread. */
  fitsMain() {
    const s = this.session;
    return s.layout_rays() <= MAIN_RAYS && s.work_estimate(undefined) <= MAIN_WORK;
  }

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
  }

  runLive() {
    this.liveRaf = 0;
    const gen = this.traceGen;
    if (this.result && this.result.gen === gen) return;
    this.traceMain(gen, this.previewRays());
  }

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
  }

  startPool(gen) {
    this.setTraceState('running');
    this.showProgress(0, this.session.layout_rays());
    this.background.start(gen, this.session.layout_json(), undefined, this.poolMaxHits);
  }

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
  }

  traceAnyway() {
    this.allowLong = true;
    this.hideNotice();
    const gen = this.traceGen;
    if (this.result?.gen === gen && this.result.kind === 'full') return;
    this.startPool(gen);
  }

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
  }
  hideNotice() {
    $('trace-notice').hidden = true;
  }

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
  }

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
  }

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
  }

  /** A trace stopped at a limit: its message, and the layout stays as it is. */
  showLimit(res) {
    this.notice('limit', [
      b('The trace stopped at a limit: '),
      `${res.limit}. `,
      'Your layout is unchanged; the screens show no hits from this trace.',
    ]);
  }

  setTraceState(kind) {
    const el = $('ro-state');
    el.dataset.trace = kind;
    el.textContent = { full: 'full trace', running: 'tracing…', preview: 'preview', paused: 'paused', limit: 'stopped at a limit' }[kind] ?? '–';
    document.body.dataset.trace = kind;
  }

  showProgress(done, total) {
    $('progress').hidden = false;
    const f = total > 0 ? done / total : 0;
    $('progress-fill').style.width = `${(100 * f).toFixed(1)}%`;
    $('progress-text').textContent = `${Math.floor(100 * f)} %`;
    $('progress').title = `Full trace in the background: ${fmtInt(done)} of ${fmtInt(total)} rays`;
  }
  progress(gen, done, total) {
    if (gen === this.traceGen) this.showProgress(done, total);
  }
  hideProgress() {
    $('progress').hidden = true;
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

  // ---- files, links, export -----------------------------------------------------------------
  async loadFile(file) {
    if (!file) return;
    if (file.size > MAX_FILE_BYTES) {
      this.message(`Could not open "${file.name}": the file is larger than 16 MiB. The current layout is unchanged.`);
      return;
    }
    let text;
    try {
      text = decodeLayoutBytes(new Uint8Array(await file.arrayBuffer()));
    } catch (e) {
      this.message(`Could not read "${file.name}": ${errText(e)}`);
      return;
    }
    if (this.loadText(text, `"${file.name}"`)) this.message(`Opened "${file.name}".`, 'info');
  }

  async loadPreset(file, title) {
    try {
      const r = await fetch(`presets/${encodeURIComponent(file)}`);
      if (!r.ok) throw new Error(`HTTP ${r.status}`);
      const text = await r.text();
      return this.loadText(text, `the example "${title}"`);
    } catch (e) {
      this.message(`Could not fetch the example "${title}": ${errText(e)}`);
      return false;
    }
  }

  save() {
    download(`${slug(this.layout.name)}.json`, new Blob([`${this.session.layout_json()}\n`], { type: 'application/json' }));
  }

  async share() {
    const url = `${location.origin}${location.pathname}${this.session.link()}`;
    const ta = $('share-link');
    ta.value = url;
    $('share').hidden = false;
    ta.focus();
    ta.select();
    let copied = false;
    try {
      await navigator.clipboard.writeText(url);
      copied = true;
    } catch { /* no clipboard permission: the text is selected for copying */ }
    $('share-status').textContent = copied
      ? `Link copied to the clipboard (${fmtInt(url.length)} characters).`
      : 'Copy the link below (the clipboard is not available here).';
  }

  /** Opens a `#L=` fragment from the address bar; true when it worked. */
  openHash() {
    const h = location.hash;
    if (!h.startsWith('#L=')) return false;
    const ok = this.loadText(h, 'the shared link', { viaLink: true });
    // The layout now lives in the page (and its autosave); drop the fragment
    // so a reload keeps later edits.
    history.replaceState(null, '', `${location.pathname}${location.search}`);
    if (ok) this.message('Opened the layout from the shared link.', 'info');
    return ok;
  }

  exportWhat(what) {
    if (exportAnalysis(this, what)) return;
    const name = slug(this.layout.name);
    if (what === 'png') {
      this.exportDialog ??= new ExportDialog(this);
      this.exportDialog.open();
    } else if (what === 'svg') {
      download(`${name}-drawing.svg`, new Blob([exportSvg(this)], { type: 'image/svg+xml' }));
    } else if (what === 'spot-png') {
      this.drawer.openThen('spot', () => {
        this.drawer.views[0].draw();
        this.drawer.spotCanvas().toBlob((b) => b && download(`${name}-spot.png`, b), 'image/png');
      });
    } else if (what === 'csv') {
      const r = exportCsv(this);
      if (r) download(`${name}-${slug(r.screen)}-hits.csv`, new Blob([r.text], { type: 'text/csv' }));
    } else if (what === 'report') {
      if (!this.result?.reportText) { this.message('Nothing traced yet.'); return; }
      download(`${name}-statistics.json`, new Blob([`${JSON.stringify(this.result.report, null, 2)}\n`], { type: 'application/json' }));
    }
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

  // ---- DOM wiring ---------------------------------------------------------------------------
  wire() {
    $('btn-undo').onclick = () => this.doUndo();
    $('btn-redo').onclick = () => this.doRedo();
    $('btn-save').onclick = () => this.save();
    $('btn-open').onclick = () => $('file-input').click();
    $('file-input').onchange = (e) => { this.loadFile(e.target.files[0]); e.target.value = ''; };
    $('btn-share').onclick = () => this.share();
    wireHelp(this);
    $('btn-theme').onclick = () => this.setTheme(document.documentElement.dataset.theme === 'dark' ? 'light' : 'dark');
    $('message-close').onclick = () => this.clearMessage();
    $('btn-delete').onclick = () => this.deleteSelected();
    $('btn-drawer').onclick = () => this.drawer.open(!this.drawer.isOpen());
    $('progress-cancel').onclick = () => {
      if (this.background.cancel()) { this.hideProgress(); this.setTraceState('preview'); this.message('Long trace stopped; the figures are from the preview trace.', 'info'); }
    };
    $('ro-screen').onchange = (e) => { if (e.target.value !== '') this.setSpotScreen(Number(e.target.value)); };
    for (const el of document.querySelectorAll('[data-close]')) el.onclick = () => { $(el.dataset.close).hidden = true; };
    for (const ov of document.querySelectorAll('.overlay')) ov.addEventListener('click', (e) => { if (e.target === ov) ov.hidden = true; });

    const name = $('layout-name');
    name.addEventListener('input', () => {
      const v = name.value;
      const err = this.edit((L) => { L.name = v; }, { coalesce: 'name' });
      if (err) this.message(err, 'error', { input: true });
    });

    // toolbox
    for (const b of document.querySelectorAll('#toolbox [data-tool]')) b.onclick = () => this.editor.setTool(b.dataset.tool);
    $('toolbox').querySelector('[data-action="fit"]').onclick = () => this.editor.fit();
    const gridBtn = $('toolbox').querySelector('[data-action="grid"]');
    gridBtn.onclick = () => { this.editor.grid = !this.editor.grid; gridBtn.classList.toggle('active', this.editor.grid); this.requestDraw(); };

    // export menu
    const menu = $('export-menu');
    const exp = $('btn-export');
    exp.onclick = (e) => { e.stopPropagation(); menu.hidden = !menu.hidden; exp.setAttribute('aria-expanded', String(!menu.hidden)); };
    document.addEventListener('click', () => { menu.hidden = true; exp.setAttribute('aria-expanded', 'false'); });
    for (const b of menu.querySelectorAll('[data-export]')) b.onclick = () => { menu.hidden = true; this.exportWhat(b.dataset.export); };

    // help keys
    $('help-keys').replaceChildren(...KEYS.map(([k, what]) => {
      const tr = document.createElement('tr');
      const a = document.createElement('td');
      a.innerHTML = k; // static text defined above, no user data
      const b = document.createElement('td');
      b.innerHTML = what;
      tr.append(a, b);
      return tr;
    }));

    // drag and drop
    let depth = 0;
    const hint = $('drop-hint');
    window.addEventListener('dragenter', (e) => { if ([...e.dataTransfer.types].includes('Files')) { depth++; hint.hidden = false; e.preventDefault(); } });
    window.addEventListener('dragleave', () => { depth = Math.max(0, depth - 1); if (!depth) hint.hidden = true; });
    window.addEventListener('dragover', (e) => { e.preventDefault(); });
    window.addEventListener('drop', (e) => {
      e.preventDefault();
      depth = 0;
      hint.hidden = true;
      const f = e.dataTransfer?.files?.[0];
      if (f) this.loadFile(f);
    });

    window.addEventListener('hashchange', () => this.openHash());
    window.addEventListener('pagehide', () => this.autosave());
    window.addEventListener('storage', (e) => this.onStorage(e));
    $('trace-notice-close').onclick = () => this.hideNotice();

    // history menu
    const hist = $('history-menu');
    const hbtn = $('btn-history');
    hbtn.onclick = (e) => {
      e.stopPropagation();
      hist.hidden = !hist.hidden;
      hbtn.setAttribute('aria-expanded', String(!hist.hidden));
      if (!hist.hidden) this.renderHistory();
    };
    hist.addEventListener('click', (e) => e.stopPropagation());
    document.addEventListener('click', () => { hist.hidden = true; hbtn.setAttribute('aria-expanded', 'false'); });
    window.addEventListener('keydown', (e) => this.onKey(e));
    window.matchMedia?.('(prefers-color-scheme: dark)').addEventListener?.('change', () => { this.theme = readTheme(); this.requestDraw(); });
  }

  onKey(e) {
    const t = e.target;
    const typing = t && (t.tagName === 'INPUT' || t.tagName === 'TEXTAREA' || t.tagName === 'SELECT');
    const ctrl = e.ctrlKey || e.metaKey;
    if (e.key === 'Escape') {
      for (const id of ['help', 'share', 'history-menu']) if (!$(id).hidden) { $(id).hidden = true; e.preventDefault(); return; }
      if (typing) { t.blur(); return; }
    }
    if (ctrl && e.key.toLowerCase() === 's') { e.preventDefault(); this.save(); return; }
    if (ctrl && e.key.toLowerCase() === 'o') { e.preventDefault(); $('file-input').click(); return; }
    if (typing) return;
    if (ctrl && e.key.toLowerCase() === 'z') { e.preventDefault(); if (e.shiftKey) this.doRedo(); else this.doUndo(); return; }
    if (ctrl && e.key.toLowerCase() === 'y') { e.preventDefault(); this.doRedo(); return; }
    if (ctrl || e.altKey) return;
    if (t === document.body || t === $('canvas') || t?.closest?.('#drawing') || t?.closest?.('.strip') || t?.closest?.('.readout')) {
      if (e.key === ' ') { this.editor.spaceHeld = true; }
      if (this.editor.onKey(e)) { e.preventDefault(); return; }
    }
    const k = e.key;
    const tools = { m: 'mirror', k: 'freeform', s: 'screen', b: 'beam', l: 'lamp', u: 'sun' };
    if ((k === 'Delete' || k === 'Backspace') && this.selection) { e.preventDefault(); this.deleteSelected(); }
    else if (tools[k.toLowerCase()] && !e.shiftKey) this.editor.setTool(tools[k.toLowerCase()]);
    else if (k === 'f' || k === 'F') this.editor.fit();
    else if (k === 'g' || k === 'G') $('toolbox').querySelector('[data-action="grid"]').click();
    else if (k === 't' || k === 'T') $('btn-theme').click();
    else if (k === 'a' || k === 'A') this.drawer.open(!this.drawer.isOpen());
    else if (k === 'd' || k === 'D') this.duplicateSelected();
    else if (k === 'x' || k === 'X') this.flipSelected();
    else if (k === '?') openHelp();
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

  /**
   * Opens the newest saved version that loads. One that does not is kept
   * (never written over) and offered for download; the next newer-to-older
   * one is tried. Returns true when a version was opened.
   */
  restoreNewest() {
    const failed = [];
    let opened = null;
    const known = new Set(this.history.kept().map((k) => k.json));
    for (const e of this.history.entries()) {
      if (known.has(e.json)) continue; // failed before: listed under History, never retried blindly
      try {
        this.session.load_json(e.json);
      } catch (err) {
        const why = errText(err).replace(/\.+$/, '');
        this.history.keep(e, why);
        failed.push({ ...e, error: why });
        continue;
      }
      opened = e;
      break;
    }
    this.seenSave = this.history.latest()?.t ?? 0;
    if (opened) {
      // A new version, so a restored layout never writes over this tab's own.
      this.freshSave = true;
      this.adopt();
      this.undo.length = 0;
      this.updateUndo();
    }
    if (failed.length) {
      const f = failed[0];
      const then = opened ? ` Opened the version of “${opened.name}” saved ${clock(opened.t)} instead.` : '';
      this.message(`The layout “${f.name}” saved ${f.t > 1 ? `at ${clock(f.t)}` : 'earlier'} could not be restored: ${f.error}. It is kept as it was (History → Download).${then}`);
      const box = $('message-text');
      const dl = document.createElement('button');
      dl.type = 'button';
      dl.className = 'message-action';
      dl.textContent = 'Download it';
      dl.title = 'Download the layout that could not be restored, exactly as it was kept, as a .json file';
      dl.onclick = () => this.downloadKept(f);
      box.append(' ', dl);
    }
    return opened !== null;
  }

  async loadPresetIndex() {
    const sel = $('presets');
    let list = [];
    try {
      const r = await fetch('presets/index.json');
      if (r.ok) list = await r.json();
    } catch { /* offline copy without presets: the menu stays empty */ }
    if (!Array.isArray(list)) list = [];
    list = list.filter((p) => p && typeof p.file === 'string' && typeof p.title === 'string');
    for (const p of list) sel.append(new Option(p.title, p.file));
    sel.onchange = async () => {
      const p = list.find((x) => x.file === sel.value);
      sel.value = '';
      if (p && await this.loadPreset(p.file, p.title)) this.message(`Opened the example "${p.title}". Undo brings back your previous layout.`, 'info');
      $('canvas').focus();
    };
    sel.disabled = !list.length;
    return list;
  }
}

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
