// Building blocks of the designer and mirror-testing views: small forms
// whose fields carry the core's field names (so an error "radius: …" marks
// the radius field), result tables whose cells carry their JSON key and
// full-precision value, CSV export of those tables and a line plot.
// No optics here: every number comes from the wasm functions.

import { denoise, fmtNum } from '../format.js';
import { plainError } from '../messages.js';
import { download, slug } from '../export.js';
import { niceStep } from '../editor.js';
import { sourceColour } from '../palette.js';
import { prepareCanvas } from './plot.js';

/** Text of a thrown error. */
export function errText(e) {
  return String(e?.message ?? e);
}

/**
 * A small form of named fields. Inputs keep whatever the user typed; values
 * are read on demand and errors shown under the field they name.
 */
export class Form {
  constructor(parent, { onChange, id } = {}) {
    this.el = document.createElement('form');
    this.el.className = 'dform';
    this.el.autocomplete = 'off';
    this.el.noValidate = true;
    if (id) this.el.id = id;
    this.el.addEventListener('submit', (e) => e.preventDefault());
    this.fields = new Map();
    this.onChange = onChange;
    this.dirty = false;
    this.general = document.createElement('div');
    this.general.className = 'field-error general';
    this.general.setAttribute('role', 'alert');
    this.general.hidden = true;
    parent.append(this.el);
  }

  /**
   * Adds a field. spec: { name (the core's field name), label, unit, title,
   * value, type: 'number' | 'text' | 'select', options: [[value, text]] }.
   */
  field(spec) {
    const row = document.createElement('div');
    row.className = 'field';
    row.dataset.field = spec.name;
    const id = `${this.el.id || 'f'}-${spec.name}`;
    const label = document.createElement('label');
    label.htmlFor = id;
    label.textContent = spec.label;
    label.title = spec.title ?? '';
    let input;
    if (spec.type === 'select') {
      input = document.createElement('select');
      for (const [v, t] of spec.options) input.append(new Option(t, v));
    } else {
      input = document.createElement('input');
      input.type = 'text';
      input.spellcheck = false;
      if (spec.type !== 'text') input.inputMode = 'decimal';
    }
    input.id = id;
    input.name = spec.name;
    input.title = spec.title ?? '';
    if (spec.value !== undefined) input.value = spec.value;
    const unit = document.createElement('span');
    unit.className = 'unit';
    unit.textContent = spec.unit ?? '';
    const err = document.createElement('div');
    err.className = 'field-error';
    err.hidden = true;
    row.append(label, input, unit, err);
    this.el.append(row);
    input.addEventListener(spec.type === 'select' ? 'change' : 'input', () => {
      this.dirty = true;
      this.onChange?.(spec.name);
    });
    this.fields.set(spec.name, { row, input, err, spec });
    return input;
  }

  /** Raw text of a field. */
  text(name) {
    return this.fields.get(name).input.value;
  }

  set(name, value) {
    this.fields.get(name).input.value = String(value);
  }

  /**
   * A number from a field; throws "name: …" when it is not one (the text
   * stays in the field). Accepts a typographic minus and a decimal comma.
   */
  num(name) {
    const t = this.text(name).trim().replace(/\u2212/g, '-').replace(',', '.');
    const v = Number(t);
    if (t === '') throw new Error(`${name}: enter a value`);
    if (!Number.isFinite(v)) throw new Error(`${name}: "${this.text(name).trim()}" is not a number`);
    return v;
  }

  /** Puts the general error box (for errors no field owns) at the form's end. */
  finish() {
    this.el.append(this.general);
  }

  clearErrors() {
    for (const f of this.fields.values()) {
      f.row.classList.remove('invalid');
      f.err.hidden = true;
      f.err.textContent = '';
      f.input.removeAttribute('aria-invalid');
    }
    this.general.hidden = true;
    this.general.textContent = '';
  }

  /**
   * Shows an error "field: message" under its field (`conics[2]` belongs to
   * `conics`); an error no field owns goes in the general box, whole.
   * Returns the field name it was shown under, or ''.
   */
  showError(text) {
    this.clearErrors();
    const i = text.indexOf(': ');
    const path = i > 0 ? text.slice(0, i) : '';
    const base = path.replace(/[[.(\s].*$/, '');
    const f = this.fields.get(path) ?? this.fields.get(base);
    if (f) {
      // The field's visible label, not the core's key (`back_focus`); an
      // entry of a list keeps its number (`conics[2]` → entry 3).
      const entry = /\[(\d+)\]/.exec(path.slice(base.length));
      f.row.classList.add('invalid');
      f.err.hidden = false;
      f.err.textContent = `${f.spec.label}${entry ? `, entry ${Number(entry[1]) + 1}` : ''}: ${text.slice(i + 2)}`;
      f.input.setAttribute('aria-invalid', 'true');
      return f.spec.name;
    }
    this.general.hidden = false;
    this.general.textContent = plainError(text);
    return '';
  }
}

/** Runs `fn` once input has paused for `ms` milliseconds. */
export function debounce(fn, ms = 120) {
  let t = 0;
  const run = (...a) => { clearTimeout(t); t = setTimeout(() => fn(...a), ms); };
  run.now = (...a) => { clearTimeout(t); fn(...a); };
  return run;
}

/** A heading plus optional help text. */
export function heading(parent, text, title) {
  const h = document.createElement('h3');
  h.className = 'dview-h';
  h.textContent = text;
  if (title) h.title = title;
  parent.append(h);
  return h;
}

export function para(parent, text, cls = 'muted small') {
  const p = document.createElement('p');
  p.className = cls;
  p.textContent = text;
  parent.append(p);
  return p;
}

export function button(parent, text, title, onclick) {
  const b = document.createElement('button');
  b.type = 'button';
  b.textContent = text;
  b.title = title;
  b.onclick = onclick;
  parent.append(b);
  return b;
}

/** Unit text for a JSON key, from its suffix (radius_mm → mm). */
export function unitOf(key) {
  const leaf = key.split('.').pop();
  const units = [['_um', 'µm'], ['_mm', 'mm'], ['_deg', '°'], ['_waves', 'waves'], ['_nm', 'nm']];
  return units.find(([s]) => leaf.endsWith(s))?.[1] ?? '';
}

/** Reads a dotted key out of a nested object: primary.radius_mm. */
export function pick(obj, key) {
  return key.split('.').reduce((o, k) => (o === null || o === undefined ? undefined : o[k]), obj);
}

function valueCell(tag, key, row, value, sig) {
  const c = document.createElement(tag);
  c.dataset.key = key;
  if (row !== null) c.dataset.row = String(row);
  c.dataset.value = JSON.stringify(value ?? null);
  const u = unitOf(key);
  c.textContent = Array.isArray(value) ? value.map((x) => fmtNum(denoise(x, u), sig)).join(', ') : typeof value === 'number' ? fmtNum(denoise(value, u), sig) : String(value ?? '–');
  if (typeof value === 'number') c.title = `${fmtNum(value, 10)}${unitOf(key) ? ` ${unitOf(key)}` : ''}`;
  return c;
}

function headCell(col) {
  const th = document.createElement('th');
  th.title = col.title ?? '';
  th.append(col.label);
  const u = col.unit ?? unitOf(col.key);
  if (u) {
    const s = document.createElement('span');
    s.className = 'unit';
    s.textContent = ` ${u}`;
    th.append(s);
  }
  return th;
}

/**
 * A table with a row per item and a column per key. columns: [{ key,
 * label, unit?, title?, sig?, cell?(td, row, i) }]. Cells carry data-key,
 * data-row and data-value (full precision).
 */
export function rowTable(columns, rows, { caption, id } = {}) {
  const t = document.createElement('table');
  t.className = 'stats dtable';
  if (id) t.id = id;
  if (caption) {
    const c = document.createElement('caption');
    c.textContent = caption;
    t.append(c);
  }
  const thead = document.createElement('thead');
  const hr = document.createElement('tr');
  for (const col of columns) hr.append(headCell(col));
  thead.append(hr);
  const tbody = document.createElement('tbody');
  rows.forEach((r, i) => {
    const tr = document.createElement('tr');
    for (const col of columns) {
      if (col.cell) {
        const td = document.createElement('td');
        td.dataset.row = String(i);
        col.cell(td, r, i);
        tr.append(td);
      } else tr.append(valueCell('td', col.key, i, pick(r, col.key), col.sig ?? 5));
    }
    tbody.append(tr);
  });
  t.append(thead, tbody);
  return t;
}

/**
 * A two-column table of named figures: items [{ key, label, title?, unit?,
 * sig? }] read from `doc` by dotted key.
 */
export function figureTable(items, doc, { caption, id } = {}) {
  const t = document.createElement('table');
  t.className = 'stats dtable figures';
  if (id) t.id = id;
  if (caption) {
    const c = document.createElement('caption');
    c.textContent = caption;
    t.append(c);
  }
  const tbody = document.createElement('tbody');
  for (const it of items) {
    const tr = document.createElement('tr');
    const th = headCell(it);
    tr.append(th, valueCell('td', it.key, null, pick(doc, it.key), it.sig ?? 6));
    tbody.append(tr);
  }
  t.append(tbody);
  return t;
}

/** CSV text: a header of keys, then one line per row, full precision. */
export function csvText(keys, rows) {
  const q = (v) => {
    if (v === null || v === undefined) return '';
    const t = Array.isArray(v) ? v.join(' ') : String(v);
    return /[",\n]/.test(t) ? `"${t.replace(/"/g, '""')}"` : t;
  };
  const lines = [keys.join(',')];
  for (const r of rows) lines.push(keys.map((k) => q(pick(r, k))).join(','));
  return `${lines.join('\n')}\n`;
}

/** Downloads CSV text as `<layout>-<what>.csv`. */
export function saveCsv(app, what, text) {
  download(`${slug(app.layout.name)}-${slug(what)}.csv`, new Blob([text], { type: 'text/csv' }));
}

/**
 * Draws line series on a canvas: series [{ label, x[], y[] }], axis labels
 * with units. Colours follow the source palette by series index.
 */
export function linePlot(canvas, theme, { series, xLabel, yLabel, empty }) {
  const prep = prepareCanvas(canvas, 2, theme.bg);
  if (!prep) return;
  const { ctx, W, H } = prep;
  if (!series?.length) {
    ctx.fillStyle = theme.ink2;
    ctx.textAlign = 'center';
    ctx.fillText(empty ?? 'Nothing to plot', W / 2, H / 2);
    return;
  }
  let x0 = Infinity, x1 = -Infinity, y0 = Infinity, y1 = -Infinity;
  for (const s of series) {
    for (const v of s.x) { x0 = Math.min(x0, v); x1 = Math.max(x1, v); }
    for (const v of s.y) { y0 = Math.min(y0, v); y1 = Math.max(y1, v); }
  }
  if (!(x1 > x0)) x1 = x0 + 1;
  if (!(y1 - y0 > 1e-12 * Math.max(1, Math.abs(y0)))) { y0 -= 0.5; y1 += 0.5; }
  const ys = niceStep((y1 - y0) / 5), xs = niceStep((x1 - x0) / 6);
  y0 = Math.floor(y0 / ys) * ys; y1 = Math.ceil(y1 / ys) * ys;
  const L = 58, R = 12, T = 38, B = 36;
  const px = (x) => L + ((x - x0) / (x1 - x0)) * (W - L - R);
  const py = (y) => T + ((y1 - y) / (y1 - y0)) * (H - T - B);
  ctx.strokeStyle = theme.line;
  ctx.fillStyle = theme.ink2;
  ctx.lineWidth = 1;
  ctx.textAlign = 'right';
  for (let y = y0; y <= y1 + ys * 1e-6; y += ys) {
    ctx.beginPath(); ctx.moveTo(L, py(y)); ctx.lineTo(W - R, py(y)); ctx.stroke();
    ctx.fillText(fmtNum(Math.abs(y) < ys * 1e-6 ? 0 : y, 4), L - 5, py(y) + 4);
  }
  ctx.textAlign = 'center';
  for (let x = Math.ceil(x0 / xs) * xs; x <= x1 + xs * 1e-6; x += xs) {
    ctx.beginPath(); ctx.moveTo(px(x), T); ctx.lineTo(px(x), H - B); ctx.stroke();
    ctx.fillText(fmtNum(x, 4), px(x), H - B + 15);
  }
  ctx.fillText(xLabel, L + (W - L - R) / 2, H - 5);
  ctx.textAlign = 'left';
  ctx.fillText(yLabel, 6, T - 6);
  series.forEach((s, i) => {
    ctx.strokeStyle = sourceColour(i, theme.dark);
    ctx.lineWidth = 2;
    ctx.setLineDash(i % 2 ? [6, 3] : []);
    ctx.beginPath();
    s.x.forEach((x, j) => (j ? ctx.lineTo(px(x), py(s.y[j])) : ctx.moveTo(px(x), py(s.y[j]))));
    ctx.stroke();
  });
  ctx.setLineDash([]);
  // legend in the top margin, right-aligned, one entry after another
  let x = W - R;
  ctx.textAlign = 'right';
  for (let i = series.length - 1; i >= 0; i--) {
    const s = series[i];
    const y = 11;
    ctx.strokeStyle = sourceColour(i, theme.dark);
    ctx.lineWidth = 2;
    ctx.setLineDash(i % 2 ? [6, 3] : []);
    ctx.beginPath(); ctx.moveTo(x - 20, y); ctx.lineTo(x, y); ctx.stroke();
    ctx.fillStyle = theme.ink;
    ctx.fillText(s.label, x - 24, y + 4);
    x -= 24 + ctx.measureText(s.label).width + 14;
  }
  ctx.setLineDash([]);
  ctx.textAlign = 'left';
}

/**
 * The selected mirror when it is a revolved concave conic on axis (no
 * departure, no aspheric terms, no offset), else the first such mirror of
 * the layout; null when there is none. Returns { mirror, selected }.
 */
export function conicMirror(app) {
  const ok = (m) => m?.kind === 'mirror' && m.form === 'revolved' && typeof m.profile?.radius === 'number'
    && m.profile.radius > 0 && !(m.profile.departure?.length) && !(m.profile.aspheric ?? []).some((a) => a !== 0)
    && !(m.aperture?.offset);
  const sel = app.selection;
  const s = sel?.list === 'elements' ? app.layout.elements[sel.index] : null;
  if (ok(s)) return { mirror: s, selected: true };
  const first = app.layout.elements.find(ok);
  return first ? { mirror: first, selected: false } : null;
}

/** Is the drawer panel of this view on screen? */
export function visible(el) {
  return !!el && !el.closest('[hidden]') && document.getElementById('drawer')?.dataset.open === 'true';
}

export { denoise, fmtNum };
