// Image view: the diffraction image of the chosen source on the chosen
// screen — the PSF (linear or log scale, the Airy ring 1.22 λN marked), the
// MTF (tangential along screen v, sagittal along u, with the same pupil's
// diffraction limit) and the wavefront's Zernike terms (ANSI Z80.28
// indices) — computed in the image worker (psf-client.js), so dragging
// stays smooth. Also the readout's Strehl, taken from the PSF at the best
// focus and labelled so.
//
// Where the figures mean nothing — a few hundred hits or fewer, a partial
// pupil, the sun's extended disk — the view and the readout say so instead
// of printing a number.

import { api } from '../wasm.js';
import { denoise, fmtInt, fmtNum, withUnit } from '../format.js';
import { sourceColour } from '../palette.js';
import { niceStep } from '../editor.js';
import { PsfClient } from '../psf-client.js';
import { LinePlot, prepareCanvas } from './plot.js';
import { chosen, figureList, viewSide, visible } from './data.js';

/** At or below this many hits a diffraction image means nothing. */
export const FEW_HITS = 300;
/** A pupil lit over less than this fraction of its disk is partial. */
export const PARTIAL_FILL = 0.9;
/** Pupil grid of the readout's and the table's Strehl: the Image view's default, so they agree with its picture (and share its answer). */
export const READOUT_GRID = 128;
/** Decades the log scale spans below the peak. */
const LOG_DECADES = 5;
const GRIDS = [64, 128, 256];

/** The page's image worker client, made at the first use. */
export function psfClient(app) {
  app.psfClient ??= new PsfClient();
  return app.psfClient;
}

/** Why a diffraction image of `row` (a report row) means nothing, or null. */
export function psfRefusal(app, row) {
  const src = app.layout.sources.find((s) => s.id === row.source);
  if (src?.kind === 'beam' && src.sun_half_angle_mrad > 0) {
    return 'the sun’s disk is an extended source; a diffraction image needs a point source (a star beam or a lamp)';
  }
  if (!(row.hits > FEW_HITS)) return `only ${fmtInt(row.hits)} rays reach the screen: too few for a diffraction image (raise the source’s rays)`;
  if (row.f_number === null || row.f_number === undefined) return 'the rays arrive parallel: they form no image on this screen';
  return null;
}

/** Why the computed figures mean nothing (a partial pupil), or null. */
function answerRefusal(rep) {
  return rep.pupil_fill < PARTIAL_FILL ? `partial pupil: light fills ${fmtNum(100 * rep.pupil_fill, 2)} % of it (clipped or shadowed)` : null;
}

/** The focus an image refers to: the best diffraction focus (least RMS wavefront) or the screen. */
function focusLabel(rep) {
  return rep.at === 'screen' ? 'at the screen' : 'at best focus';
}

/**
 * Fills in the PSF Strehl ratio at the best focus of `row` (a report row)
 * on screen `screen` through `set(text, title, value)`, at once when it
 * means nothing or is kept, else when the image worker answers.
 */
function strehlInto(app, screen, row, set) {
  const why = psfRefusal(app, row);
  const source = app.layout.sources.findIndex((s) => s.id === row.source);
  if (why || source < 0) { set('–', `No Strehl ratio: ${why ?? 'unknown source'}`, null); return; }
  set('…', 'Strehl ratio from the diffraction image, being computed', null);
  const params = { layout: app.currentJson(), screen, source, at: 'best', grid: READOUT_GRID };
  psfClient(app).request(params, (ans) => {
    if (ans.error) { set('–', `No Strehl ratio: ${ans.error}`, null); return; }
    const partial = answerRefusal(ans.report);
    if (partial) { set('–', `No Strehl ratio: ${partial}`, null); return; }
    set(fmtNum(ans.report.strehl, 3), 'Peak of the diffraction image (PSF) at the best diffraction focus (least RMS wavefront) over the peak of a '
      + 'perfect image of the same pupil; the Image view shows it', ans.report.strehl);
  });
}

/**
 * The readout's Strehl for `row` (first source of the chosen screen): a
 * span filled in when the image worker answers, labelled with its focus.
 */
export function psfReadout(app, row, who) {
  const span = document.createElement('span');
  span.dataset.readout = 'strehl';
  span.dataset.focus = 'best';
  const b = document.createElement('b');
  span.append('Strehl (best focus) ', b);
  strehlInto(app, app.spotScreen, row, (text, title, value) => {
    b.textContent = text;
    span.title = `${title}${who}`;
    span.dataset.value = JSON.stringify(value);
  });
  return span;
}

/**
 * Adds to each screen's statistics table (drawer.js) a row of the PSF
 * Strehl ratio at the best focus, one cell per source column
 * (`data-psf="strehl"`, `data-value`), filled in as the worker answers.
 */
export function addPsfStrehlRows(container, app) {
  const screens = app.result?.report?.screens ?? [];
  screens.forEach((sc, si) => {
    const table = [...container.querySelectorAll('table.stats')].find((t) => t.dataset.screen === sc.id);
    const body = table?.querySelector('tbody');
    const rows = sc.by_source ?? [];
    if (!body || !rows.length) return;
    const tr = document.createElement('tr');
    const th = document.createElement('th');
    th.title = 'Peak of the diffraction image over that of a perfect image of the same pupil, at the best diffraction focus (Image view)';
    th.textContent = 'Strehl (PSF, best focus)';
    tr.append(th);
    for (const row of rows) {
      const td = document.createElement('td');
      td.dataset.psf = 'strehl';
      td.dataset.source = row.source;
      td.dataset.screen = sc.id;
      strehlInto(app, si, row, (text, title, value) => {
        td.textContent = text;
        td.title = title;
        td.dataset.value = JSON.stringify(value);
      });
      tr.append(td);
    }
    body.prepend(tr);
  });
}

export class ImageView {
  constructor() {
    this.id = 'image';
    this.label = 'Image';
    this.title = 'Diffraction image: PSF, MTF and Zernike terms, with the Strehl ratio from the PSF';
    this.at = 'best';
    this.grid = READOUT_GRID;
    this.log = false;
    this.answer = null;
    this.asked = null;
  }

  mount(el, app) {
    this.app = app;
    this.panel = el;
    el.classList.add('view', 'view-two');
    const box = document.createElement('div');
    box.className = 'view-plot';
    this.canvas = document.createElement('canvas');
    this.canvas.id = 'psf-canvas';
    this.canvas.setAttribute('role', 'img');
    this.canvas.setAttribute('aria-label', 'Point spread function');
    box.append(this.canvas);
    new ResizeObserver(() => this.drawPsf()).observe(box);
    this.mtf = new LinePlot('Modulation transfer function');
    this.mtf.canvas.id = 'mtf-canvas';
    const { side, picker, note } = viewSide(app);
    this.picker = picker;
    this.note = note;
    const tools = side.querySelector('.view-tools');
    const select = (label, title, options, get, set) => {
      const l = document.createElement('label');
      l.title = title;
      const s = document.createElement('select');
      s.setAttribute('aria-label', label);
      s.append(...options.map(([v, t]) => new Option(t, v)));
      s.value = get();
      s.onchange = () => { set(s.value); this.update(); };
      l.append(`${label} `, s);
      return l;
    };
    this.focusSel = select('focus', 'Where the image is taken: the best diffraction focus, or the screen as it stands (its defocus included)',
      [['best', 'best'], ['screen', 'screen']], () => this.at, (v) => { this.at = v; });
    this.focusSel.querySelector('select').id = 'psf-at';
    const gridSel = select('grid', 'Pupil grid side (the PSF grid is 4 times wider); larger is finer and slower',
      GRIDS.map((g) => [String(g), String(g)]), () => String(this.grid), (v) => { this.grid = Number(v); });
    gridSel.querySelector('select').id = 'psf-grid';
    const logLabel = document.createElement('label');
    logLabel.title = `Show the PSF on a log scale (${LOG_DECADES} decades below the peak) to see the rings`;
    this.logBox = document.createElement('input');
    this.logBox.type = 'checkbox';
    this.logBox.id = 'psf-log';
    this.logBox.onchange = () => { this.log = this.logBox.checked; this.drawPsf(); };
    logLabel.append(this.logBox, ' log');
    tools.append(this.focusSel, gridSel, logLabel);
    this.status = document.createElement('p');
    this.status.id = 'psf-status';
    this.status.className = 'muted small';
    this.figs = document.createElement('div');
    this.notes = document.createElement('ul');
    this.notes.className = 'muted small';
    this.zernike = document.createElement('div');
    this.legend = document.createElement('p');
    this.legend.className = 'small';
    this.legend.id = 'mtf-legend';
    side.append(this.status, this.legend, this.figs, this.notes, this.zernike);
    el.append(box, this.mtf.el, side);
    this.off = document.createElement('canvas');
  }

  update() {
    if (!this.app || !visible(this.panel)) return;
    const app = this.app;
    const c = chosen(app);
    this.picker.refresh(c.rows, c.row?.source);
    this.note.textContent = '';
    const scId = c.sc ? `screen ${c.sc.id}` : '';
    const why = !c.res ? 'Not traced yet' : !c.sc ? 'No screen in this layout' : !c.row ? `No light reaches ${scId}` : psfRefusal(app, c.row);
    if (why) { this.asked = null; this.show(null, why); return; }
    const params = { layout: app.currentJson(), screen: c.screen, source: c.source, at: this.at, grid: this.grid };
    const key = JSON.stringify([params.screen, params.source, params.at, params.grid, params.layout]);
    if (this.asked === key && this.answer) { this.drawPsf(); this.drawMtf(); return; }
    this.asked = key;
    const kept = psfClient(app).cached(params);
    if (kept) { this.show(kept); return; }
    this.status.textContent = 'Computing the diffraction image…';
    this.panel.dataset.state = 'computing';
    psfClient(app).request(params, (ans) => { if (this.asked === key) this.show(ans); });
  }

  /** Shows an answer ({ report, pixels, side } or { error }), or `why` there is none. */
  show(ans, why = null) {
    this.answer = ans && !ans.error ? ans : null;
    const rep = this.answer?.report;
    const partial = rep ? answerRefusal(rep) : null;
    const reason = why ?? ans?.error ?? null;
    this.panel.dataset.state = reason ? 'none' : partial ? 'partial' : 'ready';
    this.status.textContent = reason ? `No diffraction image: ${reason}.`
      : partial ? `Figures withheld: ${partial}; the picture shows the light that does arrive.`
        : `${focusLabel(rep)}${rep.at === 'best' ? ` (${fmtNum(denoise(rep.focus_shift_mm, 'mm'), 4)} mm from the screen along its axis)` : ''}, from ${fmtInt(rep.hits)} hits.`;
    this.drawPsf();
    this.drawMtf();
    this.figures(rep, !!partial);
  }

  figures(rep, partial) {
    this.figs.replaceChildren();
    this.notes.replaceChildren();
    this.zernike.replaceChildren();
    if (!rep) return;
    const num = (v, d = 4) => (partial || typeof v !== 'number' ? '–' : fmtNum(v, d));
    const um = (v) => (partial || typeof v !== 'number' ? '–' : withUnit(v, 'µm', 4));
    this.figs.append(figureList([
      { key: 'strehl', label: `Strehl ${focusLabel(rep)}`, value: partial ? null : rep.strehl, text: num(rep.strehl),
        title: 'Peak of the PSF over the peak of a perfect PSF of the same pupil (same obstruction): valid at any aberration' },
      { key: 'strehl_marechal', label: 'Maréchal estimate', value: rep.strehl_marechal, text: num(rep.strehl_marechal),
        title: 'exp(−(2πσ)²) from the RMS wavefront: close to the PSF Strehl for small errors only (σ ≲ 0.1 wave)' },
      { key: 'wavefront_rms_waves', label: 'wavefront RMS', value: rep.wavefront_rms_waves, text: partial ? '–' : withUnit(rep.wavefront_rms_waves, 'waves', 4),
        title: 'RMS wavefront error with piston and tilt removed, at this focus' },
      { key: 'wavefront_pv_waves', label: 'wavefront P-V', value: rep.wavefront_pv_waves, text: partial ? '–' : withUnit(rep.wavefront_pv_waves, 'waves', 4) },
      { key: 'f_number', label: 'working f-number', value: rep.f_number, text: num(rep.f_number) },
      { key: 'obscuration', label: 'obscuration', value: rep.obscuration, text: fmtNum(rep.obscuration, 3),
        title: 'Inner over outer radius of an annular pupil (0 for a full disk)' },
      { key: 'ee50_um', label: 'EE50 (diffraction)', value: rep.ee_diffraction.ee50_um, text: um(rep.ee_diffraction.ee50_um),
        title: 'Radius about the PSF centroid holding 50 % of the light' },
      { key: 'ee80_um', label: 'EE80 (diffraction)', value: rep.ee_diffraction.ee80_um, text: um(rep.ee_diffraction.ee80_um) },
      { key: 'cutoff_cyc_mm', label: 'MTF cutoff', value: rep.mtf.cutoff_cyc_mm, text: partial ? '–' : withUnit(rep.mtf.cutoff_cyc_mm, 'cycles/mm', 4), title: '1/(λN)' },
      { key: 'pixel_um', label: 'PSF pixel', value: rep.psf.pixel_um, text: `${withUnit(rep.psf.pixel_um, 'µm', 3)} (${rep.psf.size} px grid)` },
    ]));
    for (const n of rep.notes) {
      const li = document.createElement('li');
      li.textContent = n;
      this.notes.append(li);
    }
    const t = document.createElement('table');
    t.className = 'stats';
    t.id = 'zernike-table';
    const cap = document.createElement('caption');
    cap.textContent = `Zernike terms, waves (ANSI Z80.28, RMS-normalised; fitted over the ${rep.zernike_pupil})`;
    const head = document.createElement('tr');
    for (const h of ['j', '(n, m)', 'term', 'coefficient']) {
      const th = document.createElement('th');
      th.textContent = h;
      head.append(th);
    }
    const body = document.createElement('tbody');
    for (const z of rep.zernike) {
      const tr = document.createElement('tr');
      tr.dataset.zernike = String(z.j);
      const td = (text) => { const d = document.createElement('td'); d.textContent = text; tr.append(d); return d; };
      td(String(z.j));
      td(`(${z.n}, ${z.m})`);
      td(z.name);
      const v = td(typeof z.coefficient_waves === 'number' ? fmtNum(Math.abs(z.coefficient_waves) < 5e-6 ? 0 : z.coefficient_waves, 4) : '–');
      v.dataset.value = JSON.stringify(z.coefficient_waves);
      body.append(tr);
    }
    const thead = document.createElement('thead');
    thead.append(head);
    t.append(cap, thead, body);
    this.zernike.append(t);
  }

  drawPsf() {
    const app = this.app, cv = this.canvas;
    if (!app || !cv || !visible(this.panel)) return;
    const th = app.theme;
    const prep = prepareCanvas(cv, 60, th.bg);
    if (!prep) return;
    const { ctx, W, H } = prep;
    const ans = this.answer;
    if (!ans) {
      ctx.fillStyle = th.ink2;
      ctx.textAlign = 'center';
      ctx.fillText(this.panel.dataset.state === 'computing' ? 'Computing…' : 'No diffraction image', W / 2, H / 2);
      ctx.textAlign = 'left';
      return;
    }
    const rep = ans.report, n = ans.side;
    // Values for the colour map, rows flipped so +v is up.
    let peak = 0;
    for (const v of ans.pixels) peak = Math.max(peak, v);
    const vals = new Float64Array(n * n);
    const floor = peak * 10 ** -LOG_DECADES;
    for (let r = 0; r < n; r++) {
      const src = (n - 1 - r) * n;
      for (let k = 0; k < n; k++) {
        const v = ans.pixels[src + k];
        vals[r * n + k] = this.log ? Math.log10(Math.max(v, floor) / (peak || 1)) : v;
      }
    }
    const px = this.log ? api().colour_map_rgba(vals, -LOG_DECADES, 0) : api().colour_map_rgba(vals, 0, peak || 1);
    this.off.width = n;
    this.off.height = n;
    this.off.getContext('2d').putImageData(new ImageData(px, n, n), 0, 0);
    const top = 22, bottom = 44;
    const S = Math.max(10, Math.min(W - 16, H - top - bottom));
    const x0 = (W - S) / 2, y0 = top + (H - top - bottom - S) / 2;
    ctx.imageSmoothingEnabled = false;
    ctx.drawImage(this.off, x0, y0, S, S);
    const k = S / n; // canvas px per PSF pixel
    const cx = x0 + (n / 2 + 0.5) * k, cy = y0 + (n / 2 - 0.5) * k;
    // The Airy ring of this f-number, 1.22 λN.
    const airyUm = 1.22 * rep.wavelength_nm * 1e-3 * rep.f_number;
    const airyPx = (airyUm / rep.psf.pixel_um) * k;
    ctx.strokeStyle = '#ffffff';
    ctx.globalAlpha = 0.8;
    ctx.setLineDash([4, 3]);
    ctx.beginPath();
    ctx.arc(cx, cy, airyPx, 0, 2 * Math.PI);
    ctx.stroke();
    ctx.setLineDash([]);
    ctx.globalAlpha = 1;
    // µm scale bar and labels
    const spanUm = n * rep.psf.pixel_um;
    const bar = niceStep(spanUm / 4);
    const bpx = (bar / rep.psf.pixel_um) * k;
    ctx.strokeStyle = th.ink;
    ctx.fillStyle = th.ink;
    ctx.lineWidth = 2;
    ctx.beginPath();
    ctx.moveTo(x0, H - 14 - 5); ctx.lineTo(x0, H - 14); ctx.lineTo(x0 + bpx, H - 14); ctx.lineTo(x0 + bpx, H - 14 - 5);
    ctx.stroke();
    ctx.lineWidth = 1;
    ctx.fillText(withUnit(bar, 'µm'), x0 + bpx + 6, H - 10);
    ctx.fillStyle = th.ink2;
    const partial = answerRefusal(rep);
    ctx.fillText(`PSF ${focusLabel(rep)}${partial ? '' : ` — Strehl ${fmtNum(rep.strehl, 3)}`}`, 8, 15);
    ctx.fillText(`${this.log ? `log scale, ${LOG_DECADES} decades` : 'linear scale'}; dashed: Airy ring 1.22 λN = ${withUnit(airyUm, 'µm', 3)}`, x0, H - 28);
    ctx.fillStyle = '#ffffff';
    ctx.fillText('u →', x0 + S - 28, y0 + S - 6);
    ctx.fillText('v ↑', x0 + 4, y0 + 14);
  }

  drawMtf() {
    const app = this.app;
    if (!app) return;
    const th = app.theme;
    const rep = this.answer?.report;
    const partial = rep ? answerRefusal(rep) : null;
    const m = rep?.mtf;
    const f = m ? Float64Array.from(m.frequency_cyc_mm) : null;
    const series = m && !partial ? [
      { xs: f, ys: Float64Array.from(m.diffraction_limited), colour: th.ink2, name: 'diffraction limit', along: 'x' },
      { xs: f, ys: Float64Array.from(m.tangential), colour: sourceColour(0, th.dark), name: 'tangential (along v)', along: 'x', width: 2 },
      { xs: f, ys: Float64Array.from(m.sagittal), colour: sourceColour(1, th.dark), name: 'sagittal (along u)', along: 'x', width: 2 },
    ] : [];
    this.legend.replaceChildren();
    if (series.length) {
      this.legend.append('MTF: ');
      for (const sr of [...series].reverse()) {
        const k = document.createElement('span');
        k.style.color = sr.colour;
        k.textContent = `━ ${sr.name}  `;
        this.legend.append(k);
      }
    }
    this.mtf.set({
      title: m ? `MTF ${focusLabel(rep)} — tangential, sagittal and the diffraction limit` : 'MTF',
      x: { label: 'spatial frequency', unit: 'cycles/mm', min: 0 },
      y: { label: 'modulation', unit: '', min: 0, max: 1.04 },
      series,
      marks: m && !partial ? [{ kind: 'vline', x: m.cutoff_cyc_mm, label: `cutoff 1/(λN) ${fmtNum(m.cutoff_cyc_mm, 4)}` }] : [],
      empty: partial ? 'Partial pupil: no MTF' : 'No MTF',
    }, th);
  }

  /** CSV of the MTF (`mtf`), the Zernike terms (`zernike`) or the PSF (`psf`); null without an image. */
  csv(kind) {
    const rep = this.answer?.report;
    if (!rep) return null;
    const base = `${rep.screen}-${rep.source}-${rep.at}`;
    if (kind === 'mtf') {
      const m = rep.mtf;
      return { name: `${base}-mtf`, header: 'frequency_cyc_mm,tangential,sagittal,diffraction_limited',
        rows: m.frequency_cyc_mm.map((x, i) => `${x},${m.tangential[i]},${m.sagittal[i]},${m.diffraction_limited[i]}`) };
    }
    if (kind === 'zernike') {
      return { name: `${base}-zernike`, header: 'j,n,m,term,coefficient_waves', rows: rep.zernike.map((z) => `${z.j},${z.n},${z.m},${z.name},${z.coefficient_waves}`) };
    }
    const { pixels, side } = this.answer;
    const p = rep.psf.pixel_um;
    const rows = [];
    for (let r = 0; r < side; r++) {
      for (let k = 0; k < side; k++) rows.push(`${(k - side / 2) * p},${(r - side / 2) * p},${pixels[r * side + k]}`);
    }
    return { name: `${base}-psf`, header: 'u_um,v_um,relative_intensity', rows };
  }
}
