// Downloads: layout files, pictures, hit lists.

import { sourceColour } from './palette.js';
import { dirOf } from './editor.js';

/** A file-name-safe version of a layout name. */
export function slug(name) {
  const s = String(name || 'layout').normalize('NFKD').replace(/[^\w.-]+/g, '-').replace(/^-+|-+$/g, '').slice(0, 60);
  return s || 'layout';
}

/** Saves a blob under `name` through a temporary link. */
export function download(name, blob) {
  const url = URL.createObjectURL(blob);
  const a = document.createElement('a');
  a.href = url;
  a.download = name;
  document.body.append(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 10_000);
}

/** Largest side and area of an exported picture, px (well inside browser canvas limits). */
export const MAX_SIDE = 8192;
export const MAX_AREA = 40e6;

/**
 * The drawing rendered into an offscreen canvas of `width` × `height` px,
 * whatever the canvas's size on the page. Lines and text scale with the
 * picture as if the on-screen drawing were magnified to `width`; with `fit`
 * the whole layout is framed, else the view on screen keeps its centre and
 * zoom. The selection and any half-drawn mirror are left out.
 */
export function renderDrawing(app, { width, height, fit = false }) {
  const ed = app.editor;
  const saved = { ctx: ed.ctx, size: ed.size, view: { ...ed.view }, autoFit: ed.autoFit, draft: ed.draft, hover: ed.hover, selection: app.selection };
  const out = document.createElement('canvas');
  out.width = width;
  out.height = height;
  const dpr = width / saved.size.w;
  try {
    ed.ctx = out.getContext('2d');
    ed.size = { w: saved.size.w, h: height / dpr, dpr };
    ed.draft = [];
    ed.hover = null;
    app.selection = null;
    if (fit) ed.fit(false);
    ed.draw();
  } finally {
    Object.assign(ed, { ctx: saved.ctx, size: saved.size, view: saved.view, autoFit: saved.autoFit, draft: saved.draft, hover: saved.hover });
    app.selection = saved.selection;
    app.requestDraw();
  }
  return out;
}

/** CSV of the hits on the chosen screen: screen, source, u_mm, v_mm, power_w. */
export function exportCsv(app) {
  const res = app.result;
  const sc = res?.report?.screens?.[app.spotScreen];
  if (!sc) { app.message('Nothing to export: no screen has been traced.'); return null; }
  const spot = res.spot(app.spotScreen);
  if (!spot) { app.message('Nothing to export yet.'); return null; }
  const ids = app.layout.sources.map((s) => s.id);
  const quote = (t) => (/[",\n]/.test(t) ? `"${t.replace(/"/g, '""')}"` : t);
  const lines = ['screen,source,u_mm,v_mm,power_w'];
  const scr = quote(sc.id);
  for (let j = 0; j < spot.src.length; j++) {
    lines.push(`${scr},${quote(ids[spot.src[j]] ?? String(spot.src[j]))},${spot.uv[2 * j]},${spot.uv[2 * j + 1]},${spot.w[j]}`);
  }
  if ((spot.stride ?? 1) > 1) {
    app.message(`The CSV holds every ${spot.stride}th of ${spot.total} hits (the background trace sends at most a million per screen).`, 'info');
  }
  return { screen: sc.id, text: `${lines.join('\n')}\n` };
}

const esc = (t) => String(t).replace(/[<>&"]/g, (c) => ({ '<': '&lt;', '>': '&gt;', '&': '&amp;', '"': '&quot;' })[c]);

/** The drawing (fan, elements, sources) as an SVG document in layout mm. */
export function exportSvg(app) {
  const g = app.geom;
  const th = app.theme;
  const ed = app.editor;
  const { w, h } = ed.size;
  const P = (y, z) => ed.toScreen(y, z).map((v) => v.toFixed(2)).join(',');
  const parts = [];
  parts.push(`<svg xmlns="http://www.w3.org/2000/svg" width="${w}" height="${h}" viewBox="0 0 ${w} ${h}">`);
  parts.push(`<title>${esc(app.layout.name)}</title>`);
  parts.push(`<rect width="100%" height="100%" fill="${th.bg}"/>`);
  const nsrc = app.layout.sources.length;
  for (let s = 0; s < nsrc; s++) {
    const d = [];
    for (let i = 0; i < g.fanSrc.length; i++) {
      if (g.fanSrc[i] !== s) continue;
      d.push(`M${P(g.fan[4 * i], g.fan[4 * i + 1])}L${P(g.fan[4 * i + 2], g.fan[4 * i + 3])}`);
    }
    if (d.length) parts.push(`<path d="${d.join('')}" stroke="${sourceColour(s, th.dark)}" stroke-width="1" fill="none" opacity="0.85"/>`);
  }
  for (let i = 0; i < g.spans.length; i += 3) {
    const [ei, start, count] = [g.spans[i], g.spans[i + 1], g.spans[i + 2]];
    const el = app.layout.elements[ei];
    const pts = [];
    for (let j = 0; j < count; j++) pts.push(P(g.outline[2 * (start + j)], g.outline[2 * (start + j) + 1]));
    parts.push(`<polyline points="${pts.join(' ')}" fill="none" stroke="${el?.kind === 'screen' ? th.screen : th.mirror}" stroke-width="2.5" stroke-linecap="round"><title>${esc(el?.id ?? '')}</title></polyline>`);
  }
  app.layout.sources.forEach((s, i) => {
    const col = sourceColour(i, th.dark);
    if (s.kind === 'beam') {
      const [dy, dz] = dirOf(s.direction_deg);
      const r = s.diameter / 2;
      parts.push(`<path d="M${P(s.center[0] - dz * r, s.center[1] + dy * r)}L${P(s.center[0] + dz * r, s.center[1] - dy * r)}" stroke="${col}" stroke-width="2"><title>${esc(s.id)}</title></path>`);
    } else {
      const [x, y] = ed.toScreen(s.center[0], s.center[1]);
      parts.push(`<circle cx="${x.toFixed(2)}" cy="${y.toFixed(2)}" r="5" fill="${col}"><title>${esc(s.id)}</title></circle>`);
    }
  });
  parts.push('</svg>');
  return `${parts.join('\n')}\n`;
}
