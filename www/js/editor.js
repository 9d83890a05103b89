// The layout drawing: view transform, grid and scale bar, elements, the ray
// fan, selection handles and pointer/keyboard editing.
//
// World coordinates are the layout plane in mm: z to the right, y up. The
// editor never does optics: outlines and the fan come from the wasm session
// (app.geom); it only turns pointer motion into layout edits.

import { sourceColour } from './palette.js';
import { fmtLength } from './format.js';
import { scaleBar } from './views/plot.js';

const HANDLE = 7;      // px, half-size of square handles / radius of round ones
const ROT_ARM = 64;    // px, rotation handle distance from the anchor
const PICK = 7;        // px, pick distance for lines
const DRAG_START = 3;  // px of motion before a press becomes a drag
/** Free-form knots snap to the grid step over this (a 10 mm grid places knots to 1 mm)… */
const KNOT_SNAP_DIVISOR = 10;
/** …or over this with Alt held (practically where the pointer is). */
const FREE_SNAP_DIVISOR = 1000;

/** Height of a drawing label's box, px (12 px type). */
const LABEL_H = 13;

const deg = Math.PI / 180;

/** Direction (y, z) of an angle in degrees from +z toward +y. */
export function dirOf(angleDeg) {
  return [Math.sin(angleDeg * deg), Math.cos(angleDeg * deg)];
}

/** Angle (degrees, 0 ≤ a < 360) of a direction (dy, dz). */
export function angleOf(dy, dz) {
  const a = Math.atan2(dy, dz) / deg;
  return ((a % 360) + 360) % 360;
}

/** 1, 2 or 5 times a power of ten, at least `x`. */
export function niceStep(x) {
  const p = 10 ** Math.floor(Math.log10(x));
  for (const m of [1, 2, 5, 10]) if (m * p >= x) return m * p;
  return 10 * p;
}

/** Rounds `v` to a multiple of `step` without binary noise. */
export function roundTo(v, step) {
  const r = Math.round(v / step) * step;
  const dp = Math.max(0, -Math.floor(Math.log10(step)) + 1);
  return Number(r.toFixed(Math.min(dp, 12)));
}

function distToSeg(px, py, ax, ay, bx, by) {
  const dx = bx - ax, dy = by - ay;
  const l2 = dx * dx + dy * dy;
  let t = l2 > 0 ? ((px - ax) * dx + (py - ay) * dy) / l2 : 0;
  t = Math.max(0, Math.min(1, t));
  return Math.hypot(px - ax - t * dx, py - ay - t * dy);
}

/** Anchor point and angle of an element or source. */
export function anchorOf(item) {
  if (item.kind === 'mirror') return { p: item.vertex, a: item.axis_deg, key: 'vertex', akey: 'axis_deg' };
  if (item.kind === 'screen') return { p: item.center, a: item.axis_deg, key: 'center', akey: 'axis_deg' };
  return { p: item.center, a: item.direction_deg, key: 'center', akey: 'direction_deg' };
}

export class Editor {
  constructor(canvas, app) {
    this.canvas = canvas;
    this.app = app;
    this.ctx = canvas.getContext('2d');
    this.view = { k: 0.5, cy: 0, cz: 500 }; // px per mm, world point at the centre
    this.grid = true;
    this.tool = 'select';
    this.draft = [];        // free-form knots being drawn (world [y, z])
    this.freeformForm = 'extruded'; // the form the free-form tool makes (chosen in its hint)
    this.pointer = null;    // current press: {kind, ...}
    this.hover = null;      // world point under the pointer
    this.size = { w: 1, h: 1, dpr: 1 };
    this.bindEvents();
    new ResizeObserver(() => this.resize()).observe(canvas);
    this.resize();
  }

  // ---- transform -------------------------------------------------------
  toScreen(y, z) {
    const { k, cy, cz } = this.view;
    return [this.size.w / 2 + (z - cz) * k, this.size.h / 2 - (y - cy) * k];
  }
  toWorld(sx, sy) {
    const { k, cy, cz } = this.view;
    return [cy - (sy - this.size.h / 2) / k, cz + (sx - this.size.w / 2) / k];
  }
  /** Editing resolution: coordinates snap to this many mm. */
  step() {
    return 10 ** Math.floor(Math.log10(4 / this.view.k));
  }

  resize() {
    const r = this.canvas.getBoundingClientRect();
    const dpr = window.devicePixelRatio || 1;
    // While the view is still the automatic fit (nothing panned, zoomed or
    // clicked since), a new size fits again: a caution or message strip that
    // appears after a file opens must not clip the layout. Otherwise the
    // drawing stays where it is on the page when the canvas's top or bottom
    // edge moves (a strip appears above it, the readout below wraps to a
    // second line, the drawer is dragged) instead of jumping under the
    // pointer; a change of width keeps the centre.
    const top = this.pageTop;
    this.pageTop = r.top;
    if (!this.autoFit && top !== undefined && (r.top !== top || r.height !== this.size.h) && this.size.h > 1) {
      this.view.cy -= (r.top - top + (r.height - this.size.h) / 2) / this.view.k;
    }
    this.size = { w: Math.max(1, r.width), h: Math.max(1, r.height), dpr };
    this.canvas.width = Math.round(this.size.w * dpr);
    this.canvas.height = Math.round(this.size.h * dpr);
    if (this.autoFit) this.fit();
    this.app.requestDraw();
  }

  /**
   * Zooms and pans so the whole layout (outlines, sources, fan ends) fits;
   * `toolbox` leaves room for the floating toolbox (false for exports).
   */
  fit(toolbox = true) {
    const g = this.app.geom;
    let ymin = Infinity, ymax = -Infinity, zmin = Infinity, zmax = -Infinity;
    const add = (y, z) => {
      if (!Number.isFinite(y) || !Number.isFinite(z)) return;
      ymin = Math.min(ymin, y); ymax = Math.max(ymax, y); zmin = Math.min(zmin, z); zmax = Math.max(zmax, z);
    };
    for (let i = 0; i < g.outline.length; i += 2) add(g.outline[i], g.outline[i + 1]);
    for (const s of this.app.layout.sources) {
      const [dy, dz] = dirOf(s.direction_deg);
      const r = s.kind === 'beam' ? s.diameter / 2 : 0;
      add(s.center[0] + dz * r, s.center[1] - dy * r);
      add(s.center[0] - dz * r, s.center[1] + dy * r);
    }
    this.autoFit = true;
    if (!Number.isFinite(ymin)) { this.view = { k: 0.5, cy: 0, cz: 500 }; this.app.requestDraw(); return; }
    const span = Math.max(ymax - ymin, zmax - zmin, 1e-3);
    const pad = 0.1 * span;
    const w = Math.max(50, this.size.w - (toolbox ? 190 : 40)); // room for the toolbox
    // The folded sun caution lies over the top of the drawing.
    const caution = document.getElementById('sun-caution');
    const inset = toolbox && caution && !caution.hidden && caution.dataset.expanded !== 'true' ? caution.getBoundingClientRect().height : 0;
    const h = Math.max(50, this.size.h - 40 - inset);
    const k = Math.min(w / (zmax - zmin + 2 * pad), h / (ymax - ymin + 2 * pad));
    const kk = Number.isFinite(k) && k > 0 ? k : 1;
    this.view = {
      k: kk,
      cy: (ymin + ymax) / 2 + inset / (2 * kk),
      cz: (zmin + zmax) / 2 - (toolbox ? 80 : 0) / kk,
    };
    this.app.requestDraw();
  }

  zoomAt(sx, sy, factor) {
    this.autoFit = false;
    const [y, z] = this.toWorld(sx, sy);
    const k = Math.min(1e6, Math.max(1e-6, this.view.k * factor));
    this.view.k = k;
    // keep (y, z) under the pointer
    this.view.cz = z - (sx - this.size.w / 2) / k;
    this.view.cy = y + (sy - this.size.h / 2) / k;
    this.app.requestDraw();
  }

  setTool(tool) {
    this.tool = tool;
    this.draft = [];
    this.canvas.classList.toggle('placing', tool !== 'select');
    const hints = {
      mirror: 'Click where the mirror’s vertex goes (Esc cancels)',
      screen: 'Click where the screen’s centre goes (Esc cancels)',
      beam: 'Click where the beam’s centre goes (Esc cancels)',
      lamp: 'Click where the lamp goes (Esc cancels)',
      sun: 'Click where the sunlight enters (Esc cancels)',
      freeform: 'Click knots along the mirror face (Alt: no snap); double-click or Enter finishes, Backspace removes the last knot, Esc cancels.',
    };
    this.app.showHint(hints[tool] || '');
    if (tool === 'freeform') this.formChooser();
    this.app.toolChanged(tool);
    this.app.requestDraw();
  }

  /** The revolved / extruded choice in the free-form tool's hint. */
  formChooser() {
    const hint = document.getElementById('tool-hint');
    if (!hint) return;
    const label = document.createElement('label');
    label.className = 'hint-choice';
    label.title = 'Revolved: a mirror of revolution about the middle of the drawn chord. Extruded: the drawn section swept along x (a trough).';
    const sel = document.createElement('select');
    sel.id = 'freeform-form';
    sel.setAttribute('aria-label', 'Free-form mirror form');
    sel.append(new Option('revolved', 'revolved'), new Option('extruded (trough)', 'extruded'));
    sel.value = this.freeformForm;
    sel.onchange = () => { this.freeformForm = sel.value; this.canvas.focus({ preventScroll: true }); };
    label.append(' Form: ', sel);
    hint.append(label);
  }

  /**
   * Writes a label at (x, y) (baseline, left), or at the first nearby
   * place (below, above, to the left, further off) where it overlaps no
   * label written earlier in this frame; `fixed` labels stay where asked.
   */
  placeLabel(text, x, y, fixed = false) {
    const { ctx } = this;
    const w = ctx.measureText(text).width;
    const free = (bx, by) => !this.labelBoxes.some((b) => bx < b.x + b.w + 3 && b.x < bx + w + 3 && by - LABEL_H < b.y && b.y - LABEL_H < by);
    const tries = fixed ? [[0, 0]] : [[0, 0], [0, LABEL_H + 2], [0, -LABEL_H - 2], [-w - 14, 0], [0, 2 * LABEL_H + 4], [0, -2 * LABEL_H - 4], [-w - 14, LABEL_H + 2]];
    const [dx, dy] = tries.find(([ax, ay]) => free(x + ax, y + ay)) ?? [0, 0];
    ctx.fillText(text, x + dx, y + dy);
    this.labelBoxes.push({ x: x + dx, y: y + dy, w });
  }

  // ---- drawing ----------------------------------------------------------
  draw() {
    const { ctx } = this;
    const { w, h, dpr } = this.size;
    this.labelBoxes = [];
    const th = this.app.theme;
    ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
    ctx.fillStyle = th.bg;
    ctx.fillRect(0, 0, w, h);
    if (this.grid) this.drawGrid(th);
    this.app.caustic?.draw(ctx, this);
    this.drawFan(th);
    this.drawElements(th);
    this.drawSources(th);
    this.drawSelection(th);
    this.drawDraft(th);
    this.drawScaleBar(th);
  }

  drawGrid(th) {
    const { ctx } = this;
    const { w, h } = this.size;
    const minor = niceStep(14 / this.view.k);
    const major = niceStep(80 / this.view.k);
    const [y0, z0] = this.toWorld(0, h);
    const [y1, z1] = this.toWorld(w, 0);
    const lines = (stepMm, colour) => {
      ctx.beginPath();
      for (let z = Math.ceil(z0 / stepMm) * stepMm; z <= z1; z += stepMm) {
        const [sx] = this.toScreen(0, z);
        ctx.moveTo(Math.round(sx) + 0.5, 0); ctx.lineTo(Math.round(sx) + 0.5, h);
      }
      for (let y = Math.ceil(y0 / stepMm) * stepMm; y <= y1; y += stepMm) {
        const [, sy] = this.toScreen(y, 0);
        ctx.moveTo(0, Math.round(sy) + 0.5); ctx.lineTo(w, Math.round(sy) + 0.5);
      }
      ctx.strokeStyle = colour;
      ctx.lineWidth = 1;
      ctx.stroke();
    };
    if ((z1 - z0) / minor < 400) lines(minor, th.grid);
    lines(major, th.gridMajor);
    // axes through the origin
    const [ox, oy] = this.toScreen(0, 0);
    ctx.beginPath();
    ctx.moveTo(0, Math.round(oy) + 0.5); ctx.lineTo(w, Math.round(oy) + 0.5);
    ctx.moveTo(Math.round(ox) + 0.5, 0); ctx.lineTo(Math.round(ox) + 0.5, h);
    ctx.strokeStyle = th.axis;
    ctx.stroke();
    // axis names
    ctx.fillStyle = th.label;
    ctx.font = '11px system-ui, sans-serif';
    this.placeLabel('z', w - 14, Math.min(h - 6, Math.max(12, oy - 4)), true);
    this.placeLabel('y', Math.min(w - 10, Math.max(4, ox + 4)), 12, true);
  }

  drawScaleBar(th) {
    const { ctx } = this;
    const { h } = this.size;
    const len = niceStep(110 / this.view.k);
    const px = len * this.view.k;
    ctx.font = '12px system-ui, sans-serif';
    scaleBar(ctx, 16, h - 16, px, fmtLength(len), th.ink);
  }

  drawFan(th) {
    const { ctx } = this;
    const g = this.app.geom;
    const n = g.fanSrc.length;
    if (!n) return;
    const nsrc = Math.max(1, this.app.layout.sources.length);
    ctx.lineWidth = 1;
    for (let s = 0; s < nsrc; s++) {
      for (const esc of [0, 1]) {
        ctx.beginPath();
        for (let i = 0; i < n; i++) {
          if (g.fanSrc[i] !== s || g.fanEsc[i] !== esc) continue;
          const [ax, ay] = this.toScreen(g.fan[4 * i], g.fan[4 * i + 1]);
          const [bx, by] = this.toScreen(g.fan[4 * i + 2], g.fan[4 * i + 3]);
          ctx.moveTo(ax, ay); ctx.lineTo(bx, by);
        }
        ctx.strokeStyle = sourceColour(s, th.dark);
        ctx.globalAlpha = esc ? 0.3 : th.rayAlpha;
        ctx.stroke();
      }
    }
    ctx.globalAlpha = 1;
  }

  /** Outline spans grouped by element index. */
  spansOf(ei) {
    const g = this.app.geom;
    const out = [];
    for (let i = 0; i < g.spans.length; i += 3) if (g.spans[i] === ei) out.push([g.spans[i + 1], g.spans[i + 2]]);
    return out;
  }

  drawElements(th) {
    const { ctx } = this;
    const g = this.app.geom;
    const els = this.app.layout.elements;
    ctx.font = '12px system-ui, sans-serif';
    for (let ei = 0; ei < els.length; ei++) {
      const el = els[ei];
      const spans = this.spansOf(ei);
      const sel = this.isSelected('elements', ei);
      const [ay, az] = dirOf(el.axis_deg);
      // screen-space axis direction
      const ax = az, ayS = -ay;
      for (const [start, count] of spans) {
        const pts = [];
        for (let j = 0; j < count; j++) pts.push(this.toScreen(g.outline[2 * (start + j)], g.outline[2 * (start + j) + 1]));
        if (el.kind === 'mirror') {
          // back-face hatching, opposite the axis
          ctx.beginPath();
          const every = Math.max(1, Math.floor(count / 16));
          for (let j = 0; j < count; j += every) {
            const [x, y] = pts[j];
            ctx.moveTo(x, y); ctx.lineTo(x - ax * 6 - ayS * 3, y - ayS * 6 + ax * 3);
          }
          ctx.strokeStyle = th.mirrorBack;
          ctx.lineWidth = 1;
          ctx.stroke();
        } else {
          // screen: ticks on the sensitive face
          ctx.beginPath();
          const [p, q] = [pts[0], pts[pts.length - 1]];
          for (let t = 0; t <= 1.0001; t += 0.25) {
            const x = p[0] + (q[0] - p[0]) * t, y = p[1] + (q[1] - p[1]) * t;
            ctx.moveTo(x, y); ctx.lineTo(x + ax * 6, y + ayS * 6);
          }
          ctx.strokeStyle = th.screen;
          ctx.lineWidth = 1.2;
          ctx.stroke();
        }
        ctx.beginPath();
        pts.forEach(([x, y], j) => (j ? ctx.lineTo(x, y) : ctx.moveTo(x, y)));
        ctx.strokeStyle = sel ? th.select : el.kind === 'mirror' ? th.mirror : th.screen;
        ctx.lineWidth = el.kind === 'mirror' ? (sel ? 3.5 : 2.5) : sel ? 3.5 : 2.5;
        ctx.lineCap = 'round';
        ctx.stroke();
      }
      // label beside the first outline point
      if (spans.length) {
        const [start, count] = spans[spans.length - 1];
        const j = start + count - 1;
        const [x, y] = this.toScreen(g.outline[2 * j], g.outline[2 * j + 1]);
        ctx.fillStyle = th.label;
        this.placeLabel(el.id, x + 6, y - 6);
      }
    }
  }

  drawSources(th) {
    const { ctx } = this;
    const srcs = this.app.layout.sources;
    ctx.font = '12px system-ui, sans-serif';
    srcs.forEach((s, i) => {
      const col = sourceColour(i, th.dark);
      const sel = this.isSelected('sources', i);
      const [cx, cy] = this.toScreen(s.center[0], s.center[1]);
      const [dy, dz] = dirOf(s.direction_deg);
      const ux = dz, uy = -dy;         // screen direction of travel
      const px = -uy, py = ux;         // screen perpendicular
      ctx.strokeStyle = sel ? th.select : col;
      ctx.fillStyle = sel ? th.select : col;
      ctx.lineWidth = sel ? 3 : 2;
      if (s.kind === 'beam') {
        const r = Math.max(3, (s.diameter / 2) * this.view.k);
        ctx.beginPath();
        ctx.moveTo(cx - px * r, cy - py * r); ctx.lineTo(cx + px * r, cy + py * r);
        ctx.stroke();
        // arrows across the launch disk
        ctx.lineWidth = 1.5;
        ctx.beginPath();
        for (const t of [-0.8, 0, 0.8]) {
          const bx = cx + px * r * t, by = cy + py * r * t;
          const tx = bx + ux * 18, ty = by + uy * 18;
          ctx.moveTo(bx, by); ctx.lineTo(tx, ty);
          ctx.moveTo(tx - ux * 6 + px * 4, ty - uy * 6 + py * 4); ctx.lineTo(tx, ty);
          ctx.lineTo(tx - ux * 6 - px * 4, ty - uy * 6 - py * 4);
        }
        ctx.stroke();
        if (s.sun_half_angle_mrad > 0) {
          // a sun glyph behind the beam
          const gx = cx - ux * 22, gy = cy - uy * 22;
          ctx.beginPath();
          ctx.arc(gx, gy, 6, 0, 2 * Math.PI);
          ctx.fill();
          ctx.beginPath();
          for (let a = 0; a < 8; a++) {
            const c = Math.cos((a * Math.PI) / 4), d = Math.sin((a * Math.PI) / 4);
            ctx.moveTo(gx + c * 8, gy + d * 8); ctx.lineTo(gx + c * 12, gy + d * 12);
          }
          ctx.stroke();
        }
        ctx.fillStyle = th.label;
        this.placeLabel(s.id, cx + px * r + 6, cy + py * r + 4);
      } else {
        const half = Math.min(180, s.cone_half_angle_deg) * deg;
        const len = 42;
        ctx.lineWidth = 1.5;
        ctx.beginPath();
        for (const a of [-half, half]) {
          const c = Math.cos(a), d = Math.sin(a);
          ctx.moveTo(cx, cy);
          ctx.lineTo(cx + (ux * c + px * d) * len, cy + (uy * c + py * d) * len);
        }
        ctx.stroke();
        ctx.beginPath();
        const a0 = Math.atan2(uy, ux);
        ctx.arc(cx, cy, len * 0.8, a0 - half, a0 + half);
        ctx.setLineDash([3, 3]);
        ctx.stroke();
        ctx.setLineDash([]);
        ctx.beginPath();
        ctx.arc(cx, cy, 5, 0, 2 * Math.PI);
        ctx.fill();
        ctx.fillStyle = th.label;
        this.placeLabel(s.id, cx + 8, cy - 8);
      }
    });
  }

  isSelected(list, index) {
    const s = this.app.selection;
    return !!s && s.list === list && s.index === index;
  }

  /** Handles of the selected item: [{kind, x, y, ...}] in screen px. */
  handles() {
    const sel = this.app.selection;
    if (!sel) return [];
    const item = this.app.layout[sel.list][sel.index];
    if (!item) return [];
    const an = anchorOf(item);
    const [x, y] = this.toScreen(an.p[0], an.p[1]);
    const [dy, dz] = dirOf(an.a);
    const out = [
      { kind: 'move', x, y },
      { kind: 'rotate', x: x + dz * ROT_ARM, y: y - dy * ROT_ARM },
    ];
    if (item.kind === 'mirror' && Array.isArray(item.profile.departure)) {
      const [ey0, ey1] = [Math.cos(an.a * deg), -Math.sin(an.a * deg)]; // local y in (y, z)
      const [ez0, ez1] = [Math.sin(an.a * deg), Math.cos(an.a * deg)];
      item.profile.departure.forEach(([rho, dzk], j) => {
        const z = this.app.baseSag(sel.index, rho) + dzk;
        const wy = an.p[0] + ey0 * rho + ez0 * z;
        const wz = an.p[1] + ey1 * rho + ez1 * z;
        const [kx, ky] = this.toScreen(wy, wz);
        out.push({ kind: 'knot', j, x: kx, y: ky });
      });
    }
    return out;
  }

  drawSelection(th) {
    const hs = this.handles();
    if (!hs.length) return;
    const { ctx } = this;
    const [mv, rot] = hs;
    ctx.strokeStyle = th.select;
    ctx.lineWidth = 1;
    ctx.setLineDash([4, 3]);
    ctx.beginPath();
    ctx.moveTo(mv.x, mv.y); ctx.lineTo(rot.x, rot.y);
    ctx.stroke();
    ctx.setLineDash([]);
    ctx.fillStyle = th.bg;
    ctx.lineWidth = 2;
    for (const hd of hs) {
      ctx.beginPath();
      if (hd.kind === 'move') ctx.rect(hd.x - HANDLE / 1.4, hd.y - HANDLE / 1.4, HANDLE * 1.4, HANDLE * 1.4);
      else if (hd.kind === 'rotate') ctx.arc(hd.x, hd.y, HANDLE / 1.2, 0, 2 * Math.PI);
      else ctx.arc(hd.x, hd.y, HANDLE / 1.6, 0, 2 * Math.PI);
      ctx.fill();
      ctx.stroke();
    }
    // rotation arrowheads around the rotate handle
    ctx.beginPath();
    ctx.arc(rot.x, rot.y, HANDLE + 4, -0.6, 0.6);
    ctx.stroke();
  }

  drawDraft(th) {
    if (this.tool !== 'freeform' || !this.draft.length) return;
    const { ctx } = this;
    const pts = this.draft.map(([y, z]) => this.toScreen(y, z));
    if (this.hover) pts.push(this.toScreen(this.hover[0], this.hover[1]));
    ctx.strokeStyle = th.select;
    ctx.lineWidth = 2;
    ctx.setLineDash([6, 4]);
    ctx.beginPath();
    pts.forEach(([x, y], j) => (j ? ctx.lineTo(x, y) : ctx.moveTo(x, y)));
    ctx.stroke();
    ctx.setLineDash([]);
    ctx.fillStyle = th.select;
    for (const [x, y] of pts.slice(0, this.draft.length)) {
      ctx.beginPath();
      ctx.arc(x, y, 4, 0, 2 * Math.PI);
      ctx.fill();
    }
  }

  // ---- picking ------------------------------------------------------------
  pick(sx, sy) {
    for (const hd of this.handles()) {
      if (Math.hypot(hd.x - sx, hd.y - sy) <= HANDLE + 3) return { handle: hd };
    }
    const g = this.app.geom;
    let best = null;
    const consider = (d, sel) => { if (d <= PICK && (!best || d < best.d)) best = { d, sel }; };
    for (let i = 0; i < g.spans.length; i += 3) {
      const [ei, start, count] = [g.spans[i], g.spans[i + 1], g.spans[i + 2]];
      let prev = this.toScreen(g.outline[2 * start], g.outline[2 * start + 1]);
      for (let j = 1; j < count; j++) {
        const cur = this.toScreen(g.outline[2 * (start + j)], g.outline[2 * (start + j) + 1]);
        consider(distToSeg(sx, sy, prev[0], prev[1], cur[0], cur[1]), { list: 'elements', index: ei });
        prev = cur;
      }
    }
    this.app.layout.sources.forEach((s, i) => {
      const [cx, cy] = this.toScreen(s.center[0], s.center[1]);
      if (s.kind === 'beam') {
        const [dy, dz] = dirOf(s.direction_deg);
        const px = dy, py = dz; // screen perpendicular of (dz, -dy)
        const r = Math.max(3, (s.diameter / 2) * this.view.k);
        consider(distToSeg(sx, sy, cx - px * r, cy - py * r, cx + px * r, cy + py * r), { list: 'sources', index: i });
      } else {
        consider(Math.max(0, Math.hypot(sx - cx, sy - cy) - 4), { list: 'sources', index: i });
      }
    });
    return best ? { item: best.sel } : null;
  }

  // ---- events -------------------------------------------------------------
  bindEvents() {
    const c = this.canvas;
    c.addEventListener('pointerdown', (e) => this.onDown(e));
    c.addEventListener('pointermove', (e) => this.onMove(e));
    c.addEventListener('pointerup', (e) => this.onUp(e));
    c.addEventListener('pointercancel', (e) => this.onUp(e));
    c.addEventListener('dblclick', (e) => { if (this.tool === 'freeform') { e.preventDefault(); this.finishFreeform(); } });
    c.addEventListener('wheel', (e) => {
      e.preventDefault();
      const r = c.getBoundingClientRect();
      const f = Math.exp(-e.deltaY * (e.deltaMode === 1 ? 0.05 : 0.0015));
      this.zoomAt(e.clientX - r.left, e.clientY - r.top, f);
    }, { passive: false });
    c.addEventListener('contextmenu', (e) => e.preventDefault());
  }

  local(e) {
    const r = this.canvas.getBoundingClientRect();
    return [e.clientX - r.left, e.clientY - r.top];
  }

  onDown(e) {
    this.autoFit = false;
    this.canvas.focus({ preventScroll: true });
    const [sx, sy] = this.local(e);
    const w = this.toWorld(sx, sy);
    if (e.button === 1 || e.button === 2 || (e.button === 0 && this.spaceHeld)) {
      this.startPan(e, sx, sy);
      return;
    }
    if (e.button !== 0) return;
    if (this.tool === 'freeform') {
      if (e.detail > 1) return; // the second click of a double-click
      this.draft.push(this.knotAt(w, e.altKey));
      this.app.requestDraw();
      return;
    }
    if (this.tool !== 'select') {
      const st = this.step();
      this.app.addItem(this.tool, [roundTo(w[0], st), roundTo(w[1], st)], this.view.k);
      if (!e.shiftKey) this.setTool('select');
      return;
    }
    const hit = this.pick(sx, sy);
    if (hit && hit.handle) {
      const sel = this.app.selection;
      const item = this.app.layout[sel.list][sel.index];
      this.pointer = { kind: hit.handle.kind, j: hit.handle.j, sx, sy, w0: w, orig: structuredClone(item), sel, moved: false };
    } else if (hit && hit.item) {
      this.app.select(hit.item);
      const item = this.app.layout[hit.item.list][hit.item.index];
      this.pointer = { kind: 'move', sx, sy, w0: w, orig: structuredClone(item), sel: hit.item, moved: false };
    } else {
      this.app.select(null);
      this.startPan(e, sx, sy);
      return;
    }
    this.canvas.setPointerCapture(e.pointerId);
  }

  startPan(e, sx, sy) {
    this.pointer = { kind: 'pan', sx, sy, v0: { ...this.view } };
    this.canvas.classList.add('panning');
    this.canvas.setPointerCapture(e.pointerId);
  }

  onMove(e) {
    const [sx, sy] = this.local(e);
    const w = this.toWorld(sx, sy);
    this.hover = w;
    this.app.pointerAt(w);
    const p = this.pointer;
    if (!p) {
      if (this.tool === 'freeform' && this.draft.length) this.app.requestDraw();
      if (this.tool === 'select') {
        const hit = this.pick(sx, sy);
        this.canvas.classList.toggle('over-handle', !!hit && (!!hit.item || hit.handle.kind !== 'rotate'));
        this.canvas.classList.toggle('over-rotate', !!hit && !!hit.handle && hit.handle.kind === 'rotate');
      }
      return;
    }
    if (p.kind === 'pan') {
      this.view.cz = p.v0.cz - (sx - p.sx) / this.view.k;
      this.view.cy = p.v0.cy + (sy - p.sy) / this.view.k;
      this.app.requestDraw();
      return;
    }
    if (!p.moved) {
      if (Math.hypot(sx - p.sx, sy - p.sy) < DRAG_START) return;
      p.moved = true;
      this.app.beginGesture();
    }
    const st = this.step();
    const { sel, orig } = p;
    const an = anchorOf(orig);
    if (p.kind === 'move') {
      const ny = roundTo(an.p[0] + (w[0] - p.w0[0]), st);
      const nz = roundTo(an.p[1] + (w[1] - p.w0[1]), st);
      this.app.gestureEdit((L) => { L[sel.list][sel.index][an.key] = [ny, nz]; });
    } else if (p.kind === 'rotate') {
      let a = angleOf(w[0] - an.p[0], w[1] - an.p[1]);
      a = e.shiftKey ? roundTo(a, 15) % 360 : roundTo(a, 0.1) % 360;
      this.app.gestureEdit((L) => { L[sel.list][sel.index][an.akey] = a; });
    } else if (p.kind === 'knot') {
      const knots = orig.profile.departure;
      const th = an.a * deg;
      const qy = w[0] - an.p[0], qz = w[1] - an.p[1];
      let rho = qy * Math.cos(th) - qz * Math.sin(th);
      const zl = qy * Math.sin(th) + qz * Math.cos(th);
      const j = p.j;
      if (j === 0 || j === knots.length - 1) rho = knots[j][0]; // end knots keep the aperture
      else {
        const lo = knots[j - 1][0], hi = knots[j + 1][0];
        const gap = (hi - lo) * 1e-3;
        rho = Math.min(hi - gap, Math.max(lo + gap, rho));
      }
      if (orig.form === 'revolved') rho = Math.max(0, rho);
      const fine = st / 10;
      rho = j === 0 || j === knots.length - 1 ? rho : roundTo(rho, fine);
      const dzk = roundTo(zl - this.app.baseSag(sel.index, rho), fine / 10);
      this.app.gestureEdit((L) => { L.elements[sel.index].profile.departure[j] = [rho, dzk]; });
    }
  }

  onUp(e) {
    const p = this.pointer;
    this.pointer = null;
    this.canvas.classList.remove('panning');
    if (this.canvas.hasPointerCapture?.(e.pointerId)) this.canvas.releasePointerCapture(e.pointerId);
    if (p && p.kind !== 'pan' && p.moved) this.app.endGesture();
  }

  /**
   * Where a free-form knot goes for the pointer at `w`: on a tenth of the
   * grid step, so a sag comes in fine steps (1 mm on a 10 mm grid), or
   * where the pointer is (to a thousandth of the step) with Alt held.
   */
  knotAt(w, free) {
    const st = this.step() / (free ? FREE_SNAP_DIVISOR : KNOT_SNAP_DIVISOR);
    return [roundTo(w[0], st), roundTo(w[1], st)];
  }

  /**
   * Turns the drawn knots into a free-form mirror of the form chosen in the
   * hint (`this.freeformForm`): extruded, the knots' signed distance along
   * the chord; revolved, about the chord's middle, each knot at its
   * distance from the middle (a knot on either side gives the same ring).
   */
  finishFreeform() {
    const pts = this.draft;
    this.draft = [];
    if (pts.length < 2) { this.setTool('select'); return; }
    const a = pts[0], b = pts[pts.length - 1];
    let ty = b[0] - a[0], tz = b[1] - a[1];
    const len = Math.hypot(ty, tz);
    if (len < 1e-9) { this.app.message('A free-form mirror needs its first and last knots apart.'); this.setTool('select'); return; }
    ty /= len; tz /= len;
    const mid = [(a[0] + b[0]) / 2, (a[1] + b[1]) / 2];
    // local y along the chord: cos θ = ty, −sin θ = tz
    let th = Math.atan2(-tz, ty);
    const local = (p, t) => {
      const qy = p[0] - mid[0], qz = p[1] - mid[1];
      return [qy * Math.cos(t) - qz * Math.sin(t), qy * Math.sin(t) + qz * Math.cos(t)];
    };
    let knots = pts.map((p) => local(p, th));
    // The reflective face looks toward the concave side (edges bend toward +z).
    const inner = knots.slice(1, -1);
    if (inner.length && inner.reduce((s, k) => s + k[1], 0) > 0) {
      th += Math.PI;
      knots = pts.map((p) => local(p, th));
    }
    const revolved = this.freeformForm === 'revolved';
    if (revolved) knots = knots.map(([r, z]) => [Math.abs(r), z]);
    knots.sort((p, q) => p[0] - q[0]);
    const st = this.step() / 10;
    const clean = [];
    for (const [r, z] of knots) {
      const rr = roundTo(r, st / 10), zz = roundTo(z, st / 100);
      if (!clean.length || rr > clean[clean.length - 1][0]) clean.push([rr, zz]);
    }
    if (clean.length < 2) { this.setTool('select'); return; }
    const lo = revolved ? -clean[clean.length - 1][0] : clean[0][0], hi = clean[clean.length - 1][0];
    const axis = roundTo(((th / deg) % 360 + 360) % 360, 0.01);
    this.app.addFreeform({
      vertex: [roundTo(mid[0], st), roundTo(mid[1], st)],
      axis_deg: axis,
      form: revolved ? 'revolved' : 'extruded',
      knots: clean,
      diameter: roundTo(hi - lo, st / 10),
      offset: revolved ? 0 : roundTo((hi + lo) / 2, st / 10),
    });
    this.setTool('select');
  }

  /** Keyboard handling for the drawing; returns true when used. */
  onKey(e) {
    if (this.tool === 'freeform') {
      if (e.key === 'Enter') { this.finishFreeform(); return true; }
      if (e.key === 'Backspace') { this.draft.pop(); this.app.requestDraw(); return true; }
    }
    if (e.key === 'Escape') {
      if (this.tool !== 'select') { this.setTool('select'); return true; }
      if (this.app.selection) { this.app.select(null); return true; }
      return false;
    }
    const sel = this.app.selection;
    if (sel && (e.key === '[' || e.key === ']' || e.key === '{' || e.key === '}')) {
      const item = this.app.layout[sel.list][sel.index];
      const an = anchorOf(item);
      const d = (e.key === ']' || e.key === '}' ? 1 : -1) * (e.shiftKey ? 15 : 1);
      const a = roundTo((((an.a + d) % 360) + 360) % 360, 0.001);
      this.app.edit((L) => { L[sel.list][sel.index][an.akey] = a; });
      return true;
    }
    if (sel && e.key.startsWith('Arrow')) {
      const item = this.app.layout[sel.list][sel.index];
      const an = anchorOf(item);
      const st = this.step() * (e.shiftKey ? 10 : 1);
      const dy = e.key === 'ArrowUp' ? st : e.key === 'ArrowDown' ? -st : 0;
      const dz = e.key === 'ArrowRight' ? st : e.key === 'ArrowLeft' ? -st : 0;
      const p = [roundTo(an.p[0] + dy, st / 10), roundTo(an.p[1] + dz, st / 10)];
      this.app.edit((L) => { L[sel.list][sel.index][an.key] = p; });
      return true;
    }
    if (e.key === '+' || e.key === '=') { this.zoomAt(this.size.w / 2, this.size.h / 2, 1.25); return true; }
    if (e.key === '-' || e.key === '_') { this.zoomAt(this.size.w / 2, this.size.h / 2, 0.8); return true; }
    return false;
  }
}
