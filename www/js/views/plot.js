// A small line plot on a canvas: axes with tick labels and units, a few
// series and markers, and a hover readout of the value under the pointer.
//
// plot.set({
//   x: { label, unit, minSpan?, include?: [values] },
//   y: { label, unit, minSpan?, include?: [values], min?, max? },
//   series: [{ xs, ys, colour, name, along: 'x' | 'nearest', width? }],
//   marks: [{ kind: 'point' | 'vline' | 'hline', x?, y?, label, colour?, dash? }],
//   empty: 'message shown instead of a plot',
// })

import { niceStep } from '../editor.js';
import { fmtNum } from '../format.js';

/**
 * Sizes `canvas` to its on-page box at the device pixel ratio, clears it to
 * `bg` and sets the plot font. Returns { ctx, W, H } in CSS pixels, or null
 * when the box is smaller than `minSide` (hidden or collapsed).
 */
export function prepareCanvas(canvas, minSide, bg) {
  const r = canvas.getBoundingClientRect();
  if (r.width < minSide || r.height < minSide) return null;
  const dpr = window.devicePixelRatio || 1;
  canvas.width = Math.round(r.width * dpr);
  canvas.height = Math.round(r.height * dpr);
  const ctx = canvas.getContext('2d');
  ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
  const W = r.width, H = r.height;
  ctx.fillStyle = bg;
  ctx.fillRect(0, 0, W, H);
  ctx.font = '12px system-ui, sans-serif';
  return { ctx, W, H };
}


/** A scale bar of `px` pixels with its end ticks at (x, y), labelled `text`. */
export function scaleBar(ctx, x, y, px, text, ink) {
  ctx.strokeStyle = ink;
  ctx.fillStyle = ink;
  ctx.lineWidth = 2;
  ctx.beginPath();
  ctx.moveTo(x, y - 5); ctx.lineTo(x, y); ctx.lineTo(x + px, y); ctx.lineTo(x + px, y - 5);
  ctx.stroke();
  ctx.fillText(text, x + px + 6, y + 1);
}

const M = { left: 62, right: 22, top: 24, bottom: 38 };
const MINUS = '\u2212';

/** Tick values covering [lo, hi] about every `px` pixels of `len`. */
export function ticks(lo, hi, len, px = 70) {
  const span = hi - lo;
  if (!(span > 0) || !Number.isFinite(span)) return { step: 1, values: [lo] };
  const step = niceStep(span / Math.max(1, Math.floor(len / px)));
  const values = [];
  for (let v = Math.ceil(lo / step - 1e-9) * step; v <= hi + step * 1e-9; v += step) values.push(Math.abs(v) < step * 1e-9 ? 0 : v);
  return { step, values };
}

/** A tick label with as many decimals as the step needs. */
export function tickLabel(v, step) {
  const a = Math.abs(step);
  if (a >= 1e5 || a < 1e-4) return fmtNum(v, 3);
  const dec = Math.max(0, -Math.floor(Math.log10(a) + 1e-9));
  let s = v.toFixed(Math.min(dec, 8));
  if (Math.abs(v) >= 1e4) s = s.replace(/^(-?\d+)/, (m) => m.replace(/\B(?=(\d{3})+(?!\d))/g, '\u202f'));
  return s.replace(/^-/, MINUS);
}

/** [lo, hi] of the finite values, widened to `minSpan` and padded. */
function range(values, { minSpan = 0, min, max } = {}) {
  let lo = Infinity, hi = -Infinity;
  for (const v of values) if (Number.isFinite(v)) { lo = Math.min(lo, v); hi = Math.max(hi, v); }
  if (!Number.isFinite(lo)) return [0, 1];
  const c = (lo + hi) / 2;
  let span = Math.max(hi - lo, minSpan, Math.abs(c) * 1e-9, 1e-12);
  lo = c - span / 2; hi = c + span / 2;
  const pad = span * 0.05;
  lo = min ?? lo - pad;
  hi = max ?? hi + pad;
  return [lo, hi];
}

export class LinePlot {
  constructor(label) {
    this.el = document.createElement('div');
    this.el.className = 'view-plot';
    this.canvas = document.createElement('canvas');
    this.canvas.setAttribute('role', 'img');
    this.canvas.setAttribute('aria-label', label);
    this.el.append(this.canvas);
    this.spec = null;
    this.hover = null;
    this.theme = null;
    this.canvas.addEventListener('pointermove', (e) => {
      const r = this.canvas.getBoundingClientRect();
      this.hover = [e.clientX - r.left, e.clientY - r.top];
      this.draw();
    });
    this.canvas.addEventListener('pointerleave', () => { this.hover = null; this.draw(); });
    new ResizeObserver(() => this.draw()).observe(this.el);
  }

  set(spec, theme) {
    this.spec = spec;
    this.theme = theme;
    this.draw();
  }

  /** Text of the value under the pointer (also drawn on the plot). */
  readout() {
    return this.hoverText ?? '';
  }

  draw() {
    const cv = this.canvas, spec = this.spec, th = this.theme;
    this.hoverText = null;
    if (!spec || !th) return;
    const prep = prepareCanvas(cv, 40, th.bg);
    if (!prep) return;
    const { ctx, W, H } = prep;
    if (spec.title) {
      ctx.fillStyle = th.ink;
      ctx.fillText(spec.title, M.left, 15);
    }
    const series = (spec.series ?? []).filter((s) => s.xs?.length);
    if (!series.length) {
      ctx.fillStyle = th.ink2;
      ctx.textAlign = 'center';
      ctx.fillText(spec.empty ?? 'Nothing to plot', W / 2, H / 2);
      ctx.textAlign = 'left';
      return;
    }
    const marks = spec.marks ?? [];
    const xr = range([...series.flatMap((s) => [...s.xs]), ...marks.filter((m) => m.kind !== 'hline').map((m) => m.x), ...(spec.x.include ?? [])], spec.x);
    const yr = range([...series.flatMap((s) => [...s.ys]), ...marks.filter((m) => m.kind !== 'vline').map((m) => m.y), ...(spec.y.include ?? [])], spec.y);
    const pw = W - M.left - M.right, ph = H - M.top - M.bottom;
    const X = (x) => M.left + ((x - xr[0]) / (xr[1] - xr[0])) * pw;
    const Y = (y) => M.top + ph - ((y - yr[0]) / (yr[1] - yr[0])) * ph;
    const Xinv = (px) => xr[0] + ((px - M.left) / pw) * (xr[1] - xr[0]);

    // frame, grid and ticks
    ctx.strokeStyle = th.line;
    ctx.lineWidth = 1;
    ctx.strokeRect(M.left + 0.5, M.top + 0.5, pw, ph);
    const xt = ticks(xr[0], xr[1], pw, 80), yt = ticks(yr[0], yr[1], ph, 40);
    ctx.beginPath();
    for (const v of xt.values) { const x = Math.round(X(v)) + 0.5; ctx.moveTo(x, M.top); ctx.lineTo(x, M.top + ph); }
    for (const v of yt.values) { const y = Math.round(Y(v)) + 0.5; ctx.moveTo(M.left, y); ctx.lineTo(M.left + pw, y); }
    ctx.globalAlpha = 0.45;
    ctx.stroke();
    ctx.globalAlpha = 1;
    ctx.fillStyle = th.ink2;
    ctx.textAlign = 'center';
    // A tick label at either end stays whole inside the canvas.
    for (const v of xt.values) {
      const t = tickLabel(v, xt.step), hw = ctx.measureText(t).width / 2;
      ctx.fillText(t, Math.min(W - hw - 2, Math.max(hw + 2, X(v))), M.top + ph + 14);
    }
    ctx.textAlign = 'right';
    for (const v of yt.values) ctx.fillText(tickLabel(v, yt.step), M.left - 5, Y(v) + 4);
    ctx.textAlign = 'center';
    const unit = (a) => (a.unit ? ` (${a.unit})` : '');
    ctx.fillStyle = th.ink;
    ctx.fillText(`${spec.x.label}${unit(spec.x)}`, M.left + pw / 2, H - 6);
    ctx.save();
    ctx.translate(13, M.top + ph / 2);
    ctx.rotate(-Math.PI / 2);
    ctx.fillText(`${spec.y.label}${unit(spec.y)}`, 0, 0);
    ctx.restore();
    ctx.textAlign = 'left';

    ctx.save();
    ctx.beginPath();
    ctx.rect(M.left, M.top, pw, ph);
    ctx.clip();
    // Vertical guide labels take the first row (from their own) where they
    // overlap no label placed before them, left to right.
    const placed = [];
    const vrow = new Map();
    for (const m of marks.filter((q) => q.kind === 'vline' && q.label && Number.isFinite(q.x)).sort((a, b) => a.x - b.x)) {
      const w = ctx.measureText(m.label).width;
      const x0 = Math.min(X(m.x) + 4, M.left + pw - w - 3);
      let row = m.row ?? 0;
      while (placed.some((b) => b.row === row && x0 < b.x1 + 6 && b.x0 < x0 + w + 6)) row++;
      placed.push({ row, x0, x1: x0 + w });
      vrow.set(m, row);
    }
    // guide lines
    for (const m of marks) {
      if (m.kind === 'point' || !Number.isFinite(m.kind === 'vline' ? m.x : m.y)) continue;
      ctx.strokeStyle = m.colour ?? th.ink2;
      ctx.setLineDash(m.dash ?? [5, 4]);
      ctx.lineWidth = 1.2;
      ctx.beginPath();
      if (m.kind === 'vline') { ctx.moveTo(X(m.x), M.top); ctx.lineTo(X(m.x), M.top + ph); }
      else { ctx.moveTo(M.left, Y(m.y)); ctx.lineTo(M.left + pw, Y(m.y)); }
      ctx.stroke();
      ctx.setLineDash([]);
      if (m.label) {
        ctx.fillStyle = m.colour ?? th.ink2;
        if (m.kind === 'vline') ctx.fillText(m.label, Math.min(X(m.x) + 4, M.left + pw - ctx.measureText(m.label).width - 3), M.top + 13 + (vrow.get(m) ?? 0) * 14);
        // A horizontal guide near the top has its label below the line, not cut by the frame.
        else ctx.fillText(m.label, M.left + pw - ctx.measureText(m.label).width - 4, Y(m.y) - 4 < M.top + 12 ? Y(m.y) + 13 : Y(m.y) - 4);
      }
    }
    // series
    for (const s of series) {
      ctx.strokeStyle = s.colour;
      ctx.lineWidth = s.width ?? 2;
      ctx.beginPath();
      for (let i = 0; i < s.xs.length; i++) {
        const x = X(s.xs[i]), y = Y(s.ys[i]);
        if (i === 0) ctx.moveTo(x, y); else ctx.lineTo(x, y);
      }
      ctx.stroke();
      if (s.dots) {
        ctx.fillStyle = s.colour;
        for (let i = 0; i < s.xs.length; i++) { ctx.beginPath(); ctx.arc(X(s.xs[i]), Y(s.ys[i]), 2, 0, 2 * Math.PI); ctx.fill(); }
      }
    }
    // marked points
    for (const m of marks) {
      if (m.kind !== 'point' || !Number.isFinite(m.x) || !Number.isFinite(m.y)) continue;
      const x = X(m.x), y = Y(m.y);
      ctx.fillStyle = m.colour ?? th.ink;
      ctx.strokeStyle = th.bg;
      ctx.lineWidth = 2;
      ctx.beginPath();
      ctx.moveTo(x, y - 6); ctx.lineTo(x + 6, y); ctx.lineTo(x, y + 6); ctx.lineTo(x - 6, y); ctx.closePath();
      ctx.stroke();
      ctx.fill();
      if (m.label) {
        ctx.fillStyle = m.colour ?? th.ink;
        const tw = ctx.measureText(m.label).width;
        const lx = x + 9 + tw > M.left + pw ? x - 9 - tw : x + 9;
        ctx.fillText(m.label, lx, y - 8 < M.top + 10 ? y + 16 : y - 8);
      }
    }
    ctx.restore();

    // hover readout
    if (this.hover) {
      const [hx, hy] = this.hover;
      if (hx >= M.left && hx <= M.left + pw && hy >= M.top && hy <= M.top + ph) {
        const s0 = series[0];
        let px = null, py = null;
        if (s0.along === 'nearest') {
          let best = Infinity;
          for (let i = 0; i < s0.xs.length; i++) {
            const d = Math.hypot(X(s0.xs[i]) - hx, Y(s0.ys[i]) - hy);
            if (d < best) { best = d; px = s0.xs[i]; py = s0.ys[i]; }
          }
        } else {
          const xv = Xinv(hx);
          const { xs, ys } = s0;
          if (xv >= xs[0] && xv <= xs[xs.length - 1]) {
            let j = 1;
            while (j < xs.length - 1 && xs[j] < xv) j++;
            const t = xs[j] > xs[j - 1] ? (xv - xs[j - 1]) / (xs[j] - xs[j - 1]) : 0;
            px = xv; py = ys[j - 1] + t * (ys[j] - ys[j - 1]);
          }
        }
        if (px !== null) {
          const x = X(px), y = Y(py);
          ctx.strokeStyle = th.ink2;
          ctx.lineWidth = 1;
          ctx.setLineDash([2, 3]);
          ctx.beginPath();
          ctx.moveTo(x, M.top); ctx.lineTo(x, M.top + ph); ctx.moveTo(M.left, y); ctx.lineTo(M.left + pw, y);
          ctx.stroke();
          ctx.setLineDash([]);
          ctx.fillStyle = s0.colour;
          ctx.beginPath(); ctx.arc(x, y, 4, 0, 2 * Math.PI); ctx.fill();
          const u = (a) => (a.unit ? `\u202f${a.unit}` : '');
          const text = `${spec.x.label} ${fmtNum(px, 5)}${u(spec.x)} · ${spec.y.label} ${fmtNum(py, 5)}${u(spec.y)}`;
          this.hoverText = text;
          const tw = ctx.measureText(text).width + 10;
          const bx = Math.min(Math.max(M.left + 2, x - tw / 2), M.left + pw - tw - 2);
          const by = y > M.top + 34 ? y - 28 : y + 10;
          ctx.fillStyle = th.bg;
          ctx.globalAlpha = 0.92;
          ctx.fillRect(bx, by, tw, 18);
          ctx.globalAlpha = 1;
          ctx.strokeStyle = th.line;
          ctx.strokeRect(bx + 0.5, by + 0.5, tw, 18);
          ctx.fillStyle = th.ink;
          ctx.fillText(text, bx + 5, by + 13);
        }
      }
    }
  }
}
