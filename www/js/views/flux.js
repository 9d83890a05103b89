// Flux view: the irradiance map of the chosen screen (all sources
// together) with a colour bar in W/m² and suns, and its peak, mean,
// concentration and intercept. The map's pixels come from Rust
// (colour_map_rgba: an OKLab colour map of our own, lightness rising with
// flux) and go on the canvas as one ImageData.

import { api } from '../wasm.js';
import { fmtNum, withUnit } from '../format.js';
import { prepareCanvas, ticks, tickLabel } from './plot.js';
import { chosen, figureList, visible } from './data.js';
import { CONCENTRATION_CAUTION_SUNS } from './cautions.js';

const M = { left: 60, top: 26, bottom: 40, bar: 150 };
const BAR_STEPS = 256;

export class FluxView {
  constructor() {
    this.id = 'flux';
    this.label = 'Flux';
    this.title = 'Flux map of the chosen screen with a colour bar, peak, mean, concentration and intercept';
    this.hover = null;
  }

  mount(el, app) {
    this.app = app;
    this.panel = el;
    el.classList.add('view');
    const plot = document.createElement('div');
    plot.className = 'view-plot';
    this.canvas = document.createElement('canvas');
    this.canvas.id = 'flux-canvas';
    this.canvas.setAttribute('role', 'img');
    this.canvas.setAttribute('aria-label', 'Flux map of the chosen screen');
    plot.append(this.canvas);
    this.canvas.addEventListener('pointermove', (e) => {
      const r = this.canvas.getBoundingClientRect();
      this.hover = [e.clientX - r.left, e.clientY - r.top];
      this.draw();
    });
    this.canvas.addEventListener('pointerleave', () => { this.hover = null; this.draw(); });
    const side = document.createElement('div');
    side.className = 'view-side';
    this.note = document.createElement('p');
    this.note.className = 'muted small';
    this.caution = document.createElement('div');
    this.caution.className = 'caution inline';
    this.caution.hidden = true;
    this.figs = document.createElement('div');
    side.append(this.caution, this.figs, this.note);
    el.append(plot, side);
    this.off = document.createElement('canvas');
    this.bar = document.createElement('canvas');
    new ResizeObserver(() => this.draw()).observe(plot);
  }

  update() {
    if (!this.app || !visible(this.panel)) return;
    const c = chosen(this.app);
    const f = c.flux;
    this.current = c;
    // The map's pixels: built once per result and screen.
    if (f && f.peak > 0) {
      const px = api().colour_map_rgba(f.grid, 0, f.peak);
      this.off.width = f.nx;
      this.off.height = f.ny;
      this.off.getContext('2d').putImageData(new ImageData(px, f.nx, f.ny), 0, 0);
      const ramp = new Float64Array(BAR_STEPS);
      for (let i = 0; i < BAR_STEPS; i++) ramp[i] = BAR_STEPS - 1 - i;
      this.bar.width = 1;
      this.bar.height = BAR_STEPS;
      this.bar.getContext('2d').putImageData(new ImageData(api().colour_map_rgba(ramp, 0, BAR_STEPS - 1), 1, BAR_STEPS), 0, 0);
    }
    this.draw();
    this.figures(c);
  }

  figures(c) {
    const f = c.flux;
    const sc = c.sc;
    // Burns and fire are a matter of sunlight: a star beam's "suns" only
    // measure its concentration relative to its own irradiance.
    const sunlit = (this.app?.layout?.sources ?? []).some((s) => s.kind === 'beam' && s.sun_half_angle_mrad > 0);
    this.caution.hidden = !(sunlit && f?.suns > CONCENTRATION_CAUTION_SUNS);
    if (!this.caution.hidden) {
      this.caution.textContent = `${fmtNum(f.suns, 3)} suns at the peak: enough to burn skin, set things alight and injure eyes. `
        + 'Keep people, animals and flammable things out of the focus; follow local codes and qualified practice for real installations.';
    }
    if (!sc || !f) { this.figs.replaceChildren(); this.note.textContent = ''; return; }
    const pix = (2 * f.half) / f.nx;
    this.figs.replaceChildren(figureList([
      { key: 'peak_w_m2', label: 'peak flux', value: f.peak, text: withUnit(f.peak, 'W/m²', 4), title: 'Highest pixel irradiance on the map' },
      { key: 'peak_suns', label: 'peak concentration', value: f.suns, text: f.suns === null ? '– (no beam source)' : withUnit(f.suns, 'suns', 4),
        title: 'Peak flux over the incident irradiance of the beams' },
      { key: 'mean_w_m2', label: 'mean flux', value: f.mean, text: withUnit(f.mean, 'W/m²', 4), title: 'Power on the screen over its area' },
      { key: 'intercept', label: 'intercept', value: f.intercept, text: f.intercept === null ? '–' : `${fmtNum(100 * f.intercept, 4)} %`,
        title: 'Fraction of all launched power that reaches the screen' },
      { key: 'power_w', label: 'power on the screen', value: sc.power_w, text: withUnit(sc.power_w, 'W', 4) },
      { key: 'grid', label: 'map', value: [f.nx, f.ny], text: `${f.nx} × ${f.ny} pixels of ${withUnit(pix, 'mm', 3)}` },
    ]));
    this.note.textContent = 'All sources together. A sharp focus is as narrow as one pixel, so the peak depends on the '
      + 'pixel size (a finer map reads higher); pixels on the rim of a round screen read low.'
      + (c.res?.kind === 'preview' ? ' Preview trace: fewer rays, noisier map.' : '');
  }

  draw() {
    const app = this.app, cv = this.canvas;
    if (!app || !cv || !visible(this.panel)) return;
    const th = app.theme;
    const prep = prepareCanvas(cv, 60, th.bg);
    if (!prep) return;
    const { ctx, W, H } = prep;
    const c = this.current ?? chosen(app);
    const f = c.flux;
    const centre = (msg) => { ctx.fillStyle = th.ink2; ctx.textAlign = 'center'; ctx.fillText(msg, W / 2, H / 2); ctx.textAlign = 'left'; };
    if (!c.res) { centre('Not traced yet'); return; }
    if (!c.sc) { centre('No screen in this layout'); return; }
    if (!f || !(f.peak > 0)) { centre(`No light reaches screen ${c.sc.id}`); return; }

    const S = Math.floor(Math.min(W - M.left - M.bar, H - M.top - M.bottom));
    if (S < 20) return;
    const x0 = M.left, y0 = M.top;
    ctx.fillStyle = th.ink;
    ctx.fillText(`Flux on screen ${c.sc.id}, all sources`, x0, 16);
    ctx.imageSmoothingEnabled = false;
    ctx.drawImage(this.off, x0, y0, S, S);
    ctx.imageSmoothingEnabled = true;
    ctx.strokeStyle = th.line;
    ctx.lineWidth = 1;
    ctx.strokeRect(x0 + 0.5, y0 + 0.5, S, S);
    const shape = app.layout.elements.find((e) => e.kind === 'screen' && e.id === c.sc.id)?.shape;
    if (shape === 'circle') {
      ctx.strokeStyle = th.ink2;
      ctx.setLineDash([4, 3]);
      ctx.beginPath();
      ctx.arc(x0 + S / 2, y0 + S / 2, S / 2, 0, 2 * Math.PI);
      ctx.stroke();
      ctx.setLineDash([]);
    }
    // u, v axes in mm
    const t = ticks(-f.half, f.half, S, 60);
    const toPx = (v) => ((v + f.half) / (2 * f.half)) * S;
    ctx.fillStyle = th.ink2;
    ctx.strokeStyle = th.ink2;
    ctx.beginPath();
    for (const v of t.values) {
      const p = toPx(v);
      ctx.moveTo(x0 + p, y0 + S); ctx.lineTo(x0 + p, y0 + S + 4);
      ctx.moveTo(x0, y0 + S - p); ctx.lineTo(x0 - 4, y0 + S - p);
    }
    ctx.stroke();
    ctx.textAlign = 'center';
    for (const v of t.values) ctx.fillText(tickLabel(v, t.step), x0 + toPx(v), y0 + S + 16);
    ctx.fillStyle = th.ink;
    ctx.fillText('u (mm)', x0 + S / 2, y0 + S + 32);
    ctx.textAlign = 'right';
    ctx.fillStyle = th.ink2;
    for (const v of t.values) ctx.fillText(tickLabel(v, t.step), x0 - 6, y0 + S - toPx(v) + 4);
    ctx.save();
    ctx.translate(14, y0 + S / 2);
    ctx.rotate(-Math.PI / 2);
    ctx.textAlign = 'center';
    ctx.fillStyle = th.ink;
    ctx.fillText('v (mm)', 0, 0);
    ctx.restore();
    ctx.textAlign = 'left';

    // colour bar: W/m² on its right, suns beyond
    const bx = x0 + S + 22, bw = 14;
    ctx.drawImage(this.bar, bx, y0, bw, S);
    ctx.strokeStyle = th.line;
    ctx.strokeRect(bx + 0.5, y0 + 0.5, bw, S);
    // Large fluxes read better in kW/m² or MW/m².
    const [uk, uname] = f.peak >= 1e6 ? [1e-6, 'MW/m²'] : f.peak >= 1e4 ? [1e-3, 'kW/m²'] : [1, 'W/m²'];
    const bt = ticks(0, f.peak * uk, S, 34);
    ctx.fillStyle = th.ink2;
    ctx.strokeStyle = th.ink2;
    let widest = 0;
    for (const v of bt.values) {
      const y = y0 + S - (v / (f.peak * uk)) * S;
      ctx.beginPath(); ctx.moveTo(bx + bw, y); ctx.lineTo(bx + bw + 4, y); ctx.stroke();
      const label = tickLabel(v, bt.step);
      widest = Math.max(widest, ctx.measureText(label).width);
      ctx.fillText(label, bx + bw + 6, y + 4);
    }
    ctx.fillStyle = th.ink;
    ctx.fillText(uname, bx - 4, y0 - 8);
    if (f.suns !== null && f.suns > 0) {
      const sx = Math.max(bx + bw + 12 + widest, bx + ctx.measureText(uname).width + 8);
      const st = ticks(0, f.suns, S, 34);
      ctx.fillStyle = th.ink2;
      for (const v of st.values) {
        const y = y0 + S - (v / f.suns) * S;
        ctx.fillText(tickLabel(v, st.step), sx, y + 4);
      }
      ctx.fillStyle = th.ink;
      ctx.fillText('suns', sx, y0 - 8);
    }

    // hover: value of the pixel under the pointer
    this.hoverText = null;
    if (this.hover) {
      const [hx, hy] = this.hover;
      let text = null;
      if (hx >= x0 && hx < x0 + S && hy >= y0 && hy < y0 + S) {
        const ix = Math.min(f.nx - 1, Math.floor(((hx - x0) / S) * f.nx));
        const iy = Math.min(f.ny - 1, Math.floor(((hy - y0) / S) * f.ny));
        const w = f.grid[iy * f.nx + ix];
        const pu = -f.half + ((ix + 0.5) * 2 * f.half) / f.nx, pv = f.half - ((iy + 0.5) * 2 * f.half) / f.ny;
        text = `u ${fmtNum(pu, 4)} mm, v ${fmtNum(pv, 4)} mm: ${withUnit(w, 'W/m²', 4)}${f.suns !== null ? ` (${fmtNum((w / f.peak) * f.suns, 3)} suns)` : ''}`;
        ctx.strokeStyle = th.bg;
        ctx.lineWidth = 2;
        const ps = S / f.nx;
        ctx.strokeRect(x0 + ix * ps, y0 + iy * ps, ps, ps);
      } else if (hx >= bx && hx <= bx + bw && hy >= y0 && hy <= y0 + S) {
        const w = ((y0 + S - hy) / S) * f.peak;
        text = `${withUnit(w, 'W/m²', 4)}${f.suns !== null ? ` (${fmtNum((w / f.peak) * f.suns, 3)} suns)` : ''}`;
      }
      if (text) {
        this.hoverText = text;
        const tw = ctx.measureText(text).width + 10;
        const tx = Math.max(2, Math.min(W - tw - 2, hx - tw / 2));
        const ty = hy > 30 ? hy - 26 : hy + 12;
        ctx.fillStyle = th.bg;
        ctx.globalAlpha = 0.92;
        ctx.fillRect(tx, ty, tw, 18);
        ctx.globalAlpha = 1;
        ctx.strokeStyle = th.line;
        ctx.lineWidth = 1;
        ctx.strokeRect(tx + 0.5, ty + 0.5, tw, 18);
        ctx.fillStyle = th.ink;
        ctx.fillText(text, tx + 5, ty + 13);
      }
    }
  }

  csv() {
    const f = chosen(this.app).flux;
    const c = chosen(this.app);
    if (!f || !c.sc) return null;
    const rows = [];
    for (let iy = 0; iy < f.ny; iy++) {
      const v = f.half - ((iy + 0.5) * 2 * f.half) / f.ny;
      for (let ix = 0; ix < f.nx; ix++) {
        const u = -f.half + ((ix + 0.5) * 2 * f.half) / f.nx;
        rows.push(`${u},${v},${f.grid[iy * f.nx + ix]}`);
      }
    }
    return { name: `${c.sc.id}-flux-map`, header: 'u_mm,v_mm,irradiance_w_m2', rows };
  }
}
