// The analysis drawer: one view at a time, chosen by tabs. The spot view
// (diagram plus the statistics table) is built here; the other tabs are
// reserved for the focus, energy, image, flux, conics, testing and designer views,
// which register the same way: { id, label, title, mount(el, app),
// update(app) }.

import { swatch, sourceColour, sourceMarker, markerPath, markerIsLine } from './palette.js';
import { fmtInt, fmtNum, fmtStat, statInfo, STAT_ORDER, withUnit } from './format.js';
import { niceStep } from './editor.js';
import { ConicsView } from './views/conics.js';
import { TestingView } from './views/testing.js';
import { DesignersView } from './views/designers.js';
import { FocusView } from './views/focus.js';
import { EnergyView } from './views/energy.js';
import { FluxView } from './views/flux.js';
import { DayView } from './views/day.js';
import { ImageView, addPsfStrehlRows } from './views/image.js';
import { ToleranceView } from './views/tolerance.js';
import { prepareCanvas } from './views/plot.js';

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

function statCell(tag, key, value, screen, source) {
  const c = document.createElement(tag);
  const info = statInfo(key);
  c.dataset.stat = key;
  c.dataset.screen = screen;
  c.dataset.source = source;
  c.dataset.value = JSON.stringify(value);
  c.textContent = fmtStat(key, value);
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
    const label = (key) => {
      const info = statInfo(key);
      const th = document.createElement('th');
      th.title = info.title;
      th.append(info.label);
      if (info.unit) {
        const u = document.createElement('span');
        u.className = 'unit';
        u.textContent = ` ${info.unit}`;
        th.append(u);
      }
      return th;
    };
    for (const k of keys) {
      const tr = document.createElement('tr');
      tr.append(label(k));
      rows.forEach((r, ri) => tr.append(k in flatRows[ri] ? statCell('td', k, flatRows[ri][k], sc.id, r.source) : document.createElement('td')));
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
      tr.append(label(k));
      const td = statCell('td', k, v, sc.id, '');
      td.colSpan = ncol;
      tr.append(td);
      tbody.append(tr);
    }
    t.append(thead, tbody);
    container.append(t);
  });
  addPsfStrehlRows(container, app);
}

/** Spot diagram of the chosen screen. */
class SpotView {
  constructor() {
    this.id = 'spot';
    this.label = 'Spot';
    this.title = 'Spot diagram on the chosen screen, with the statistics of every screen';
  }

  mount(el, app) {
    this.app = app;
    el.classList.add('view');
    const plot = document.createElement('div');
    plot.className = 'view-plot';
    this.canvas = document.createElement('canvas');
    this.canvas.setAttribute('aria-label', 'Spot diagram');
    this.canvas.setAttribute('role', 'img');
    plot.append(this.canvas);
    const side = document.createElement('div');
    side.className = 'view-side';
    const tools = document.createElement('div');
    tools.className = 'view-tools';
    this.note = document.createElement('span');
    this.note.className = 'muted';
    tools.append(this.note);
    this.legend = document.createElement('div');
    this.legend.className = 'legend';
    this.stats = document.createElement('div');
    this.stats.id = 'stats';
    side.append(tools, this.legend, this.stats);
    el.append(plot, side);
    new ResizeObserver(() => this.draw()).observe(plot);
  }

  update() {
    renderStats(this.stats, this.app);
    this.draw();
  }

  draw() {
    const app = this.app;
    if (!app || !this.canvas) return;
    if (document.getElementById('drawer')?.dataset.open !== 'true') return;
    const cv = this.canvas;
    const th = app.theme;
    const prep = prepareCanvas(cv, 2, th.bg);
    if (!prep) return;
    const { ctx, W, H } = prep;
    this.legend.replaceChildren();
    const res = app.result;
    const sc = res?.report?.screens?.[app.spotScreen];
    const centre = (msg) => {
      ctx.fillStyle = th.ink2;
      ctx.textAlign = 'center';
      ctx.fillText(msg, W / 2, H / 2);
      ctx.textAlign = 'left';
      this.note.textContent = '';
    };
    if (!sc) { centre(res ? 'No screen in this layout' : 'Not traced yet'); return; }
    const spot = res.spot(app.spotScreen);
    const rows = sc.by_source ?? [];
    if (!spot || !rows.length) { centre(`No light reaches screen ${sc.id}`); return; }

    // Plot centre: the power-weighted mean of the sources' centroids.
    let pw = 0, cu = 0, cv0 = 0;
    for (const row of rows) {
      const w = row.power_w > 0 ? row.power_w : row.hits;
      pw += w; cu += w * row.centroid_mm[0]; cv0 += w * row.centroid_mm[1];
    }
    cu /= pw || 1; cv0 /= pw || 1;
    let extent = 0;
    for (const row of rows) {
      const d = Math.hypot(row.centroid_mm[0] - cu, row.centroid_mm[1] - cv0) * 1000;
      extent = Math.max(extent, d + row.max_radius_um, (row.airy_radius_um ?? 0) * 1.3);
    }
    // Below a micrometre the scatter is rounding noise of a perfect focus.
    extent = Math.max(extent, 1);
    const top = 40, bottom = 26; // room for the labels and the scale bar
    const avail = Math.min(W, H - top - bottom) / 2 - 8;
    if (avail < 10) return; // the drawer is still opening
    const k = avail / extent; // px per µm
    const ox = W / 2, oy = top + (H - top - bottom) / 2;

    // frame: crosshair and circles of the extent
    ctx.strokeStyle = th.line;
    ctx.lineWidth = 1;
    ctx.beginPath();
    ctx.moveTo(ox - extent * k, oy); ctx.lineTo(ox + extent * k, oy);
    ctx.moveTo(ox, oy - extent * k); ctx.lineTo(ox, oy + extent * k);
    ctx.stroke();

    const srcIndex = new Map(app.layout.sources.map((s, i) => [s.id, i]));
    // Airy circles, dashed, about each source's centroid
    ctx.setLineDash([4, 3]);
    for (const row of rows) {
      if (!(row.airy_radius_um > 0)) continue;
      const i = srcIndex.get(row.source) ?? 0;
      const x = ox + (row.centroid_mm[0] - cu) * 1000 * k, y = oy - (row.centroid_mm[1] - cv0) * 1000 * k;
      ctx.strokeStyle = sourceColour(i, th.dark);
      ctx.beginPath();
      ctx.arc(x, y, row.airy_radius_um * k, 0, 2 * Math.PI);
      ctx.stroke();
    }
    ctx.setLineDash([]);

    // hits
    const n = spot.src.length;
    const limit = 60000;
    const step = Math.max(1, Math.ceil(n / limit));
    const rad = n > 5000 ? 1.6 : n > 500 ? 2.4 : 3.4;
    const nsrc = app.layout.sources.length;
    for (let s = 0; s < nsrc; s++) {
      const kind = sourceMarker(s);
      const line = markerIsLine(kind);
      ctx.beginPath();
      let any = false;
      for (let j = 0; j < n; j += step) {
        if (spot.src[j] !== s) continue;
        any = true;
        const x = ox + (spot.uv[2 * j] - cu) * 1000 * k;
        const y = oy - (spot.uv[2 * j + 1] - cv0) * 1000 * k;
        markerPath(ctx, kind, x, y, rad);
      }
      if (!any) continue;
      ctx.fillStyle = ctx.strokeStyle = sourceColour(s, th.dark);
      ctx.globalAlpha = n > 5000 ? 0.55 : 0.85;
      ctx.lineWidth = 1;
      if (line) ctx.stroke(); else ctx.fill();
      ctx.globalAlpha = 1;
    }

    // µm scale bar
    const bar = niceStep(extent / 2.5);
    const px = bar * k;
    ctx.strokeStyle = th.ink;
    ctx.fillStyle = th.ink;
    ctx.lineWidth = 2;
    ctx.beginPath();
    ctx.moveTo(14, H - 14 - 5); ctx.lineTo(14, H - 14); ctx.lineTo(14 + px, H - 14); ctx.lineTo(14 + px, H - 14 - 5);
    ctx.stroke();
    ctx.fillText(bar >= 1000 ? withUnit(bar / 1000, 'mm') : withUnit(bar, 'µm'), 20 + px, H - 10);
    // labels
    ctx.fillStyle = th.ink2;
    ctx.fillText(`screen ${sc.id}`, 12, 18);
    const tiny = (x) => (Math.abs(x) < 1e-9 ? 0 : x);
    ctx.fillText(`centre u ${fmtNum(tiny(cu), 6)} mm, v ${fmtNum(tiny(cv0), 6)} mm`, 12, 34);
    ctx.fillText('u →', ox + extent * k + 4, oy + 4);
    ctx.fillText('v ↑', ox + 6, oy - extent * k - 2);
    if (rows.some((row) => row.airy_radius_um > 0)) ctx.fillText('dashed: Airy circle', W - 130, H - 10);

    for (const row of rows) {
      const i = srcIndex.get(row.source) ?? 0;
      const item = document.createElement('span');
      item.title = `Source ${row.source}: ${fmtInt(row.hits)} hits, RMS radius ${fmtNum(row.rms_radius_um, 6)} µm`;
      item.append(swatch(i, th.dark), `${row.source} — RMS ${withUnit(row.rms_radius_um, 'µm')}`);
      this.legend.append(item);
    }
    const thin = step > 1 || (spot.stride ?? 1) > 1;
    this.note.textContent = `${fmtInt(spot.total ?? n)} hits on ${sc.id}${thin ? `; every ${fmtInt(step * (spot.stride ?? 1))}th shown` : ''}${res.kind === 'preview' ? ' (preview)' : ''}`;
  }
}

export class Drawer {
  constructor(root, tabs, body, app) {
    this.root = root;
    this.tabs = tabs;
    this.body = body;
    this.app = app;
    this.views = [
      new SpotView(), new FocusView(), new EnergyView(), new ImageView(), new FluxView(), new DayView(),
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
