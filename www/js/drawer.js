// The analysis drawer: one view at a time, chosen by tabs. The statistics
// table is built here; the spot view (views/spot.js) shows it beside the
// picture. Every view registers the same way: { id, label, title,
// mount(el, app), update(app) }. The drawer's height is drawer-size.js's.

import { swatch } from './palette.js';
import { fmtNum, fmtStat, sceneScale, statInfo, statUnit, STAT_ORDER } from './format.js';
import { SpotView } from './views/spot.js';
import { ConicsView } from './views/conics.js';
import { TestingView } from './views/testing.js';
import { DesignersView } from './views/designers.js';
import { FocusView } from './views/focus.js';
import { EnergyView } from './views/energy.js';
import { FluxView } from './views/flux.js';
import { DayView } from './views/day.js';
import { ImageView, addPsfStrehlRows } from './views/image.js';
import { ToleranceView } from './views/tolerance.js';
import { DrawerSize } from './drawer-size.js';

/** Tab order; views and planned tabs are sorted into it. */
const TAB_ORDER = ['spot', 'focus', 'energy', 'image', 'flux', 'day', 'conics', 'testing', 'designers', 'tolerance'];

/** Flattens nested report objects into dotted keys: flux.peak_w_m2. */
function flatten(obj, prefix = '', out = {}) {
  for (const [k, v] of Object.entries(obj)) {
    const key = prefix ? `${prefix}.${k}` : k;
    if (v && typeof v === 'object' && !Array.isArray(v)) flatten(v, key, out);
    else out[key] = v;
  }
  return out;
}

function statCell(tag, key, value, screen, source, opts = {}) {
  const c = document.createElement(tag);
  const info = statInfo(key);
  c.dataset.stat = key;
  c.dataset.screen = screen;
  c.dataset.source = source;
  c.dataset.value = JSON.stringify(value);
  c.textContent = fmtStat(key, value, opts);
  const shown = Array.isArray(value) ? value.map((x) => fmtNum(x, 8)).join(', ') : typeof value === 'number' ? fmtNum(value, 8) : String(value);
  c.title = value === null
    ? `${info.title}: not defined for this light (for example the wavefront of an extended source)`
    : `${info.title}: ${shown}${info.unit && typeof value !== 'boolean' ? ` ${info.unit}` : ''}`;
  return c;
}

/** The statistics table: one table per screen, one row per source. */
export function renderStats(container, app) {
  const rep = app.result?.report;
  container.replaceChildren();
  if (!rep) return;
  const top = document.createElement('p');
  top.className = 'muted';
  top.append('Whole trace: ');
  for (const key of ['rays_launched', 'rays_escaped', 'rays_absorbed']) {
    if (typeof rep[key] !== 'number') continue;
    const info = statInfo(key);
    const s = statCell('span', key, rep[key], '', '');
    top.append(`${info.label} `, s, ' · ');
  }
  top.lastChild.remove();
  top.append(app.result.kind === 'full' ? '' : ' (preview with fewer rays)');
  container.append(top);
  if (!rep.screens?.length) {
    const p = document.createElement('p');
    p.className = 'muted';
    p.textContent = 'No screen in this layout: add one with the toolbox to collect light.';
    container.append(p);
    return;
  }
  const srcIndex = new Map(app.layout.sources.map((s, i) => [s.id, i]));
  const scale = sceneScale(app.layout);
  // One table per screen: a row per figure, a column per source (the
  // analyses add many figures, sources are few), then the whole-screen
  // figures spanning the source columns.
  rep.screens.forEach((sc, si) => {
    const t = document.createElement('table');
    t.className = 'stats';
    t.dataset.screen = sc.id;
    if (si === app.spotScreen) t.classList.add('selected-screen');
    const cap = document.createElement('caption');
    cap.textContent = `Screen ${sc.id}`;
    t.append(cap);
    const rows = sc.by_source ?? [];
    const flatRows = rows.map((r) => flatten(r));
    const keys = [];
    for (const fr of flatRows) for (const k of Object.keys(fr)) if (k !== 'source' && !keys.includes(k)) keys.push(k);
    keys.sort((a, b) => {
      const ia = STAT_ORDER.indexOf(a), ib = STAT_ORDER.indexOf(b);
      return (ia < 0 ? 99 : ia) - (ib < 0 ? 99 : ib);
    });
    const ncol = Math.max(1, rows.length);
    const thead = document.createElement('thead');
    const hr = document.createElement('tr');
    const h0 = document.createElement('th');
    h0.textContent = 'figure';
    hr.append(h0);
    for (const r of rows) {
      const th = document.createElement('th');
      th.dataset.source = r.source;
      th.title = `Light from source ${r.source}`;
      th.append(swatch(srcIndex.get(r.source) ?? 0, app.theme.dark), r.source);
      hr.append(th);
    }
    if (!rows.length) {
      const th = document.createElement('th');
      th.textContent = 'no light reaches this screen';
      hr.append(th);
    }
    thead.append(hr);
    const tbody = document.createElement('tbody');
    const label = (key, unit = statInfo(key).unit) => {
      const info = statInfo(key);
      const th = document.createElement('th');
      th.title = info.title;
      th.append(info.label);
      if (unit) {
        const u = document.createElement('span');
        u.className = 'unit';
        u.textContent = ` ${unit}`;
        th.append(u);
      }
      return th;
    };
    for (const k of keys) {
      const tr = document.createElement('tr');
      // One unit per row, chosen by its largest value (µm → mm → m).
      const largest = Math.max(0, ...flatRows.map((fr) => (typeof fr[k] === 'number' ? Math.abs(fr[k]) : 0)));
      const unit = statUnit(k, largest);
      tr.append(label(k, unit));
      rows.forEach((r, ri) => tr.append(k in flatRows[ri] ? statCell('td', k, flatRows[ri][k], sc.id, r.source, { unit, scale }) : document.createElement('td')));
      tbody.append(tr);
    }
    const whole = flatten(Object.fromEntries(Object.entries(sc).filter(([k]) => k !== 'id' && k !== 'by_source')));
    const sub = document.createElement('tr');
    sub.className = 'subhead';
    const sh = document.createElement('th');
    sh.colSpan = ncol + 1;
    sh.textContent = 'whole screen';
    sub.append(sh);
    tbody.append(sub);
    for (const [k, v] of Object.entries(whole)) {
      const tr = document.createElement('tr');
      const unit = statUnit(k, typeof v === 'number' ? Math.abs(v) : 0);
      tr.append(label(k, unit));
      const td = statCell('td', k, v, sc.id, '', { unit, scale });
      td.colSpan = ncol;
      tr.append(td);
      tbody.append(tr);
    }
    t.append(thead, tbody);
    container.append(t);
  });
  addPsfStrehlRows(container, app);
}

export class Drawer {
  constructor(root, tabs, body, app) {
    this.root = root;
    this.tabs = tabs;
    this.body = body;
    this.app = app;
    this.views = [
      new SpotView(renderStats), new FocusView(), new EnergyView(), new ImageView(), new FluxView(), new DayView(),
      new ConicsView(), new TestingView(), new DesignersView(), new ToleranceView(),
    ];
    this.panels = new Map();
    this.current = 'spot';
    for (const v of this.views) {
      const b = this.tabButton(v.id, v.label, v.title, false);
      b.onclick = () => this.show(v.id);
      const panel = document.createElement('div');
      panel.id = `view-${v.id}`;
      panel.setAttribute('role', 'tabpanel');
      v.mount(panel, app);
      this.body.append(panel);
      this.panels.set(v.id, panel);
    }
    for (const id of TAB_ORDER) {
      const b = this.tabs.querySelector(`[data-view="${id}"]`);
      if (b) this.tabs.append(b);
    }
    this.show('spot');
    this.size = new DrawerSize(root, () => this.update());
  }

  tabButton(id, label, title, disabled) {
    const b = document.createElement('button');
    b.type = 'button';
    b.setAttribute('role', 'tab');
    b.dataset.view = id;
    b.textContent = label;
    b.title = title;
    b.disabled = disabled;
    this.tabs.append(b);
    return b;
  }

  show(id) {
    this.current = id;
    for (const b of this.tabs.querySelectorAll('[role="tab"]')) b.setAttribute('aria-selected', String(b.dataset.view === id));
    for (const [vid, p] of this.panels) p.hidden = vid !== id;
    this.update();
  }

  isOpen() {
    return this.root.dataset.open === 'true';
  }

  open(on, view) {
    this.root.dataset.open = String(!!on);
    const btn = document.getElementById('btn-drawer');
    btn.setAttribute('aria-expanded', String(!!on));
    btn.textContent = on ? 'Analysis ▾' : 'Analysis ▴';
    if (view) this.show(view);
    else this.update();
  }

  /**
   * Opens the drawer on `view` and calls `fn` once the drawer has its full
   * height (it slides open), so a picture taken in `fn` is not blank or cut.
   */
  openThen(view, fn) {
    const was = this.isOpen();
    this.open(true, view);
    const run = () => requestAnimationFrame(() => requestAnimationFrame(fn));
    if (was) { run(); return; }
    let done = false;
    const once = () => {
      if (done) return;
      done = true;
      this.root.removeEventListener('transitionend', once);
      run();
    };
    this.root.addEventListener('transitionend', once);
    setTimeout(once, 400);
  }

  update() {
    for (const v of this.views) v.update(this.app);
  }

  spotCanvas() {
    return this.views[0].canvas;
  }
}
