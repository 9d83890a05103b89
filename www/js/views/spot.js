// The spot view: the chosen screen's hits, and the statistics of every
// screen beside them.
//
// Several sources (a designer's on-axis and off-axis stars) get one panel
// each, centred on that source's own centroid at its own scale, so spots
// millimetres apart are not drawn as dots in one frame; a picker shows one
// source alone or all of them together. The wheel zooms about the pointer,
// a drag pans, a double-click goes back to the fit; the scale bar in each
// panel fits what it shows.
//
// Sources sampled on a lattice (`hex`, `grid`) print the lattice into the
// picture as rosettes and rows that read like aberration. By default the
// picture is therefore drawn from a second trace of the same layout with
// those sources on the seeded random pattern (docs/FORMATS.md §2), at most
// PICTURE_RAYS rays per source; the statistics always come from the trace
// the page reports, and the note under the picture says which rays are
// drawn.

import { swatch, sourceColour, sourceMarker, markerPath, markerIsLine } from '../palette.js';
import { fmtInt, fmtPos, fmtSpot, inUnit, lengthUnit, sceneScale, withUnit } from '../format.js';
import { niceStep } from '../editor.js';
import { api } from '../wasm.js';
import { prepareCanvas, scaleBar } from './plot.js';

/** Rays per source of the picture-only trace (the random pattern). */
export const PICTURE_RAYS = 20000;
/** Most hits drawn per picture; more are thinned evenly. */
const MAX_DRAWN = 60000;
/** Zoom limits relative to the fit. */
const MIN_ZOOM = 0.05;
const MAX_ZOOM = 1e4;
/** Smallest Airy circle worth drawing, px of radius. */
const MIN_AIRY_PX = 1;

/** A layout with every lattice-sampled source on the random pattern, or null when none is. */
export function pictureLayout(layout) {
  const lattice = layout.sources.some((s) => s.pattern === 'hex' || s.pattern === 'grid');
  if (!lattice) return null;
  const L = structuredClone(layout);
  for (const s of L.sources) {
    if (s.pattern === 'hex' || s.pattern === 'grid') s.pattern = 'random';
    s.rays = Math.min(s.rays, PICTURE_RAYS);
  }
  return L;
}

/** A <label> holding `text` and a <select>; returns [label, select]. */
function labelledSelect(text, id, aria, title) {
  const label = document.createElement('label');
  label.className = 'view-source';
  label.title = title;
  const sel = document.createElement('select');
  sel.id = id;
  sel.setAttribute('aria-label', aria);
  label.append(`${text} `, sel);
  return [label, sel];
}

export class SpotView {
  /** `renderStats(container, app)` fills the statistics table beside the picture. */
  constructor(renderStats) {
    this.renderStats = renderStats;
    this.id = 'spot';
    this.label = 'Spot';
    this.title = 'Spot diagram on the chosen screen, with the statistics of every screen';
    this.zoom = 1;
    this.pan = [0, 0]; // in units of a panel's half-size
    this.picture = null; // { key, spots: Map(screen -> hits) }
  }

  mount(el, app) {
    this.app = app;
    el.classList.add('view');
    const plot = document.createElement('div');
    plot.className = 'view-plot';
    this.canvas = document.createElement('canvas');
    this.canvas.setAttribute('aria-label', 'Spot diagram: wheel to zoom, drag to pan, double-click to fit');
    this.canvas.setAttribute('role', 'img');
    plot.append(this.canvas);
    const side = document.createElement('div');
    side.className = 'view-side';
    const tools = document.createElement('div');
    tools.className = 'view-tools';
    const [pick, pickSel] = labelledSelect('show', 'spot-sources', 'Sources shown',
      'Show every source in its own panel, all in one frame, or one source alone');
    this.pick = pickSel;
    this.pick.onchange = () => { this.resetView(); this.draw(); };
    const [rays, raysSel] = labelledSelect('rays', 'spot-rays', 'Rays drawn',
      'Which rays the picture draws: a random pattern does not print the sampling lattice; the figures always come from the reported trace');
    this.rays = raysSel;
    this.rays.append(new Option('random pattern', 'random'), new Option('as traced', 'traced'));
    this.rays.onchange = () => this.draw();
    const fit = document.createElement('button');
    fit.type = 'button';
    fit.textContent = 'Fit';
    fit.title = 'Back to the whole spot (double-click the picture)';
    fit.onclick = () => { this.resetView(); this.draw(); };
    tools.append(pick, rays, fit);
    this.note = document.createElement('p');
    this.note.className = 'muted small spot-note';
    this.legend = document.createElement('div');
    this.legend.className = 'legend';
    this.stats = document.createElement('div');
    this.stats.id = 'stats';
    side.append(tools, this.note, this.legend, this.stats);
    el.append(plot, side);
    new ResizeObserver(() => this.draw()).observe(plot);
    this.wirePointer();
  }

  resetView() {
    this.zoom = 1;
    this.pan = [0, 0];
  }

  wirePointer() {
    const cv = this.canvas;
    cv.addEventListener('wheel', (e) => {
      const p = this.panelAt(e.offsetX, e.offsetY);
      if (!p) return;
      e.preventDefault();
      const f = Math.exp(-e.deltaY * 0.0015);
      const z = Math.min(MAX_ZOOM, Math.max(MIN_ZOOM, this.zoom * f));
      const g = z / this.zoom;
      // Keep the point under the pointer where it is.
      const rx = (e.offsetX - p.cx) / p.half, ry = (e.offsetY - p.cy) / p.half;
      this.pan = [rx - (rx - this.pan[0]) * g, ry - (ry - this.pan[1]) * g];
      this.zoom = z;
      this.draw();
    }, { passive: false });
    cv.addEventListener('pointerdown', (e) => {
      const p = this.panelAt(e.offsetX, e.offsetY);
      if (!p || e.button !== 0) return;
      cv.setPointerCapture(e.pointerId);
      const start = [e.clientX, e.clientY, ...this.pan];
      const move = (ev) => {
        this.pan = [start[2] + (ev.clientX - start[0]) / p.half, start[3] + (ev.clientY - start[1]) / p.half];
        this.draw();
      };
      const up = () => {
        cv.removeEventListener('pointermove', move);
        cv.removeEventListener('pointerup', up);
        cv.removeEventListener('pointercancel', up);
      };
      cv.addEventListener('pointermove', move);
      cv.addEventListener('pointerup', up);
      cv.addEventListener('pointercancel', up);
    });
    cv.addEventListener('dblclick', () => { this.resetView(); this.draw(); });
  }

  panelAt(x, y) {
    return (this.panels ?? []).find((p) => Math.abs(x - p.cx) <= p.w / 2 && Math.abs(y - p.cy) <= p.h / 2) ?? null;
  }

  update() {
    this.renderStats(this.stats, this.app);
    this.draw();
  }

  /** The source choices: all in panels, all together, or one alone. */
  updatePicker(rows) {
    const want = ['panels', 'together', ...rows.map((r) => `src:${r.source}`)];
    if (this.pick.dataset.options !== want.join('|')) {
      const old = this.pick.value;
      this.pick.dataset.options = want.join('|');
      this.pick.replaceChildren(
        new Option('each source in its panel', 'panels'),
        new Option('all sources together', 'together'),
        ...rows.map((r) => new Option(`source ${r.source}`, `src:${r.source}`)),
      );
      this.pick.value = want.includes(old) ? old : 'panels';
    }
    this.pick.disabled = rows.length < 2;
  }

  /** Hits to draw on `screen`: the picture trace's, or the reported trace's. */
  hitsFor(screen, res) {
    const traced = res.spot(screen);
    if (this.rays.value !== 'random') return { hits: traced, drawn: 'traced' };
    const L = pictureLayout(this.app.layout);
    if (!L) return { hits: traced, drawn: 'traced' };
    const key = JSON.stringify(L);
    if (this.picture?.key !== key) this.picture = { key, spots: new Map(), session: null, failed: false };
    const pic = this.picture;
    if (pic.failed) return { hits: traced, drawn: 'traced', why: pic.failed };
    if (!pic.spots.has(screen)) {
      try {
        if (!pic.session) {
          const s = new (api().Session)();
          s.set_layout_json(key);
          if (s.over_budget()) throw new Error('the layout is too costly to trace twice');
          s.retrace(undefined);
          pic.session = s;
        }
        const s = pic.session;
        const n = s.select_spot(screen);
        pic.spots.set(screen, { uv: s.spot_uv_view().slice(), src: s.spot_source_view().slice(), total: n, stride: 1 });
      } catch (e) {
        pic.failed = String(e?.message ?? e);
        pic.session?.free?.();
        pic.session = null;
        return { hits: traced, drawn: 'traced', why: pic.failed };
      }
    }
    return { hits: pic.spots.get(screen), drawn: 'random' };
  }

  draw() {
    const app = this.app;
    if (!app || !this.canvas) return;
    if (document.getElementById('drawer')?.dataset.open !== 'true') return;
    const th = app.theme;
    const prep = prepareCanvas(this.canvas, 2, th.bg);
    if (!prep) return;
    const { ctx, W, H } = prep;
    this.legend.replaceChildren();
    this.panels = [];
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
    const rows = (sc.by_source ?? []).filter((r) => r.hits > 0);
    this.updatePicker(rows);
    const { hits, drawn, why } = this.hitsFor(app.spotScreen, res);
    if (!hits || !rows.length) { centre(`No light reaches screen ${sc.id}`); return; }

    const srcIndex = new Map(app.layout.sources.map((s, i) => [s.id, i]));
    const mode = rows.length < 2 ? 'together' : this.pick.value;
    const groups = mode === 'panels' ? rows.map((r) => [r])
      : mode === 'together' ? [rows]
        : [rows.filter((r) => `src:${r.source}` === mode)];
    const n = groups.length;
    const cols = n <= 3 ? n : Math.ceil(Math.sqrt(n * W / Math.max(1, H)));
    const nrows = Math.ceil(n / cols);
    const pw = W / cols, ph = H / nrows;
    const scale = sceneScale(app.layout);
    let airyDrawn = false;
    groups.forEach((g, gi) => {
      const x0 = (gi % cols) * pw, y0 = Math.floor(gi / cols) * ph;
      if (n > 1) {
        ctx.strokeStyle = th.line;
        ctx.lineWidth = 1;
        ctx.strokeRect(x0 + 0.5, y0 + 0.5, pw - 1, ph - 1);
      }
      airyDrawn = this.drawPanel(ctx, { x0, y0, w: pw, h: ph }, g, hits, srcIndex, scale, sc, n > 1) || airyDrawn;
    });
    this.airyDrawn = airyDrawn;
    // The hover keeps the raw centroids (a centre drawn as 0 may be rounding noise).
    this.canvas.title = `${rows.map((r) => `${r.source}: centroid u ${r.centroid_mm[0]} mm, v ${r.centroid_mm[1]} mm`).join('\n')}\nWheel to zoom, drag to pan, double-click to fit.`;
    if (airyDrawn) {
      ctx.fillStyle = th.ink2;
      ctx.textAlign = 'right';
      ctx.fillText('dashed: Airy circle', W - 10, H - 10);
      ctx.textAlign = 'left';
    }

    for (const row of rows) {
      const i = srcIndex.get(row.source) ?? 0;
      const item = document.createElement('span');
      item.title = `Source ${row.source}: ${fmtInt(row.hits)} hits, RMS radius ${row.rms_radius_um} µm`;
      item.append(swatch(i, th.dark), `${row.source} — RMS ${fmtSpot(row.rms_radius_um)}`);
      this.legend.append(item);
    }
    const step = Math.max(1, Math.ceil(hits.src.length / MAX_DRAWN));
    const thin = step > 1 || (hits.stride ?? 1) > 1;
    const what = drawn === 'random'
      ? `Drawn: ${fmtInt(hits.total ?? hits.src.length)} hits of a second trace with the lattice-sampled sources on the random pattern (at most ${fmtInt(PICTURE_RAYS)} rays each), so the sampling lattice does not show as a pattern. The figures are from the reported trace (${fmtInt(res.report.screens[app.spotScreen].hits)} hits).`
      : `Drawn: the reported trace's ${fmtInt(hits.total ?? hits.src.length)} hits on ${sc.id}${app.layout.sources.some((s) => s.pattern === 'hex' || s.pattern === 'grid') ? '; a hex or grid pattern shows its lattice as rows and rosettes, not as aberration' : ''}${why ? ` (no random-pattern picture: ${why})` : ''}.`;
    this.note.textContent = `${what}${thin ? ` Every ${fmtInt(step * (hits.stride ?? 1))}th hit shown.` : ''}${res.kind === 'preview' ? ' (preview)' : ''}`;
    this.note.dataset.drawn = drawn;
  }

  /** One panel: `rows` about their power-weighted centre. Returns whether an Airy circle was drawn. */
  drawPanel(ctx, box, rows, hits, srcIndex, scale, sc, titled) {
    const th = this.app.theme;
    let pw = 0, cu = 0, cv0 = 0;
    for (const row of rows) {
      const w = row.power_w > 0 ? row.power_w : row.hits;
      pw += w; cu += w * row.centroid_mm[0]; cv0 += w * row.centroid_mm[1];
    }
    cu /= pw || 1; cv0 /= pw || 1;
    let extent = 0; // µm
    for (const row of rows) {
      const d = Math.hypot(row.centroid_mm[0] - cu, row.centroid_mm[1] - cv0) * 1000;
      extent = Math.max(extent, d + row.max_radius_um, (row.airy_radius_um ?? 0) * 1.3);
    }
    // Below a micrometre the scatter is rounding noise of a perfect focus.
    extent = Math.max(extent, 1);
    const top = 40, bottom = 28;
    const half = Math.min(box.w, box.h - top - bottom) / 2 - 8;
    if (half < 10) return false; // the drawer is still opening
    const cx0 = box.x0 + box.w / 2, cy0 = box.y0 + top + (box.h - top - bottom) / 2;
    const k = (half / extent) * this.zoom; // px per µm
    const ox = cx0 + this.pan[0] * half, oy = cy0 + this.pan[1] * half;
    this.panels.push({ cx: cx0, cy: cy0, w: box.w, h: box.h, half });

    ctx.save();
    ctx.beginPath();
    ctx.rect(box.x0 + 1, box.y0 + 1, box.w - 2, box.h - 2);
    ctx.clip();
    // crosshair through the centre
    ctx.strokeStyle = th.line;
    ctx.lineWidth = 1;
    ctx.beginPath();
    ctx.moveTo(box.x0, oy); ctx.lineTo(box.x0 + box.w, oy);
    ctx.moveTo(ox, box.y0 + top - 6); ctx.lineTo(ox, box.y0 + box.h - bottom + 6);
    ctx.stroke();

    // Airy circles, dashed, about each point source's centroid, when at least a pixel
    let airy = false;
    ctx.setLineDash([4, 3]);
    for (const row of rows) {
      const src = this.app.layout.sources[srcIndex.get(row.source) ?? 0];
      const extended = src?.kind === 'beam' && src.sun_half_angle_mrad > 0;
      const r = (row.airy_radius_um ?? 0) * k;
      if (extended || !(r >= MIN_AIRY_PX)) continue;
      const x = ox + (row.centroid_mm[0] - cu) * 1000 * k, y = oy - (row.centroid_mm[1] - cv0) * 1000 * k;
      ctx.strokeStyle = sourceColour(srcIndex.get(row.source) ?? 0, th.dark);
      ctx.beginPath();
      ctx.arc(x, y, r, 0, 2 * Math.PI);
      ctx.stroke();
      airy = true;
    }
    ctx.setLineDash([]);

    // hits
    const total = hits.src.length;
    const step = Math.max(1, Math.ceil(total / MAX_DRAWN));
    const rad = total > 5000 ? 1.6 : total > 500 ? 2.4 : 3.4;
    for (const row of rows) {
      const s = srcIndex.get(row.source) ?? 0;
      const kind = sourceMarker(s);
      ctx.beginPath();
      let any = false;
      for (let j = 0; j < total; j += step) {
        if (hits.src[j] !== s) continue;
        any = true;
        markerPath(ctx, kind, ox + (hits.uv[2 * j] - cu) * 1000 * k, oy - (hits.uv[2 * j + 1] - cv0) * 1000 * k, rad);
      }
      if (!any) continue;
      ctx.fillStyle = ctx.strokeStyle = sourceColour(s, th.dark);
      ctx.globalAlpha = total > 5000 ? 0.55 : 0.85;
      ctx.lineWidth = 1;
      if (markerIsLine(kind)) ctx.stroke(); else ctx.fill();
      ctx.globalAlpha = 1;
    }
    ctx.restore();

    // Scale bar fitting the panel's view, in the spot's own unit.
    const seen = extent / this.zoom; // µm from the centre to the panel's edge
    const barUm = niceStep(Math.max(seen / 2.5, 1e-6));
    const px = barUm * k;
    const unit = lengthUnit(barUm / 1000);
    scaleBar(ctx, box.x0 + 14, box.y0 + box.h - 14, px, withUnit(inUnit(barUm / 1000, unit), unit), th.ink);
    // labels
    ctx.fillStyle = th.ink2;
    const head = titled || rows.length === 1 ? `${rows.length === 1 ? `source ${rows[0].source}` : 'all sources'} on ${sc.id}` : `screen ${sc.id}`;
    ctx.fillText(head, box.x0 + 12, box.y0 + 18);
    ctx.fillText(`centre u ${fmtPos(cu, scale)} mm, v ${fmtPos(cv0, scale)} mm`, box.x0 + 12, box.y0 + 34);
    return airy;
  }
}
