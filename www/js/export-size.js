// The "Drawing as PNG" dialog: the picture's size (1×, 2×, 3× the drawing
// on screen, or a width and height in pixels) and its framing (the view on
// screen, or the whole layout), then one PNG rendered offscreen at that size
// (export.js renderDrawing), whatever the canvas's size on the page.

import { MAX_AREA, MAX_SIDE, download, renderDrawing, slug } from './export.js';

const MIN_SIDE = 16;

const HTML = `
  <div class="dialog export-dialog">
    <div class="dialog-head"><h2 id="export-png-title">Drawing as PNG</h2>
      <button type="button" class="icon-btn" data-x title="Close (Esc)" aria-label="Close">×</button></div>
    <div class="export-size">
      <span>Scale</span>
      <span role="group" aria-label="Scale of the drawing on screen">
        <button type="button" data-scale="1" title="The size the drawing has on screen">1×</button>
        <button type="button" data-scale="2" title="Twice the on-screen size, for sharp prints and high-density displays">2×</button>
        <button type="button" data-scale="3" title="Three times the on-screen size">3×</button>
      </span>
      <label for="export-width">Width</label>
      <span><input id="export-width" type="number" min="${MIN_SIDE}" max="${MAX_SIDE}" step="1"> px</span>
      <label for="export-height">Height</label>
      <span><input id="export-height" type="number" min="${MIN_SIDE}" max="${MAX_SIDE}" step="1"> px
        <label title="Keep the drawing's on-screen proportions when the width changes"><input id="export-keep" type="checkbox" checked> keep proportions</label></span>
      <span>Frame</span>
      <span><label title="Frame every element, source and ray of the layout"><input type="radio" name="export-frame" value="fit" checked> whole layout</label>
        <label title="What the drawing shows now, centred the same way"><input type="radio" name="export-frame" value="view"> view on screen</label></span>
    </div>
    <p id="export-error" class="muted" role="alert" hidden></p>
    <div class="export-actions">
      <button type="button" data-x>Cancel</button>
      <button type="button" id="export-go" class="primary">Save PNG</button>
    </div>
  </div>`;

export class ExportDialog {
  constructor(app) {
    this.app = app;
    const el = document.createElement('div');
    el.id = 'export-png';
    el.className = 'overlay';
    el.setAttribute('role', 'dialog');
    el.setAttribute('aria-modal', 'true');
    el.setAttribute('aria-labelledby', 'export-png-title');
    el.hidden = true;
    el.innerHTML = HTML; // static markup, no user data
    document.getElementById('app').append(el);
    this.el = el;
    this.width = el.querySelector('#export-width');
    this.height = el.querySelector('#export-height');
    this.keep = el.querySelector('#export-keep');
    this.error = el.querySelector('#export-error');
    for (const b of el.querySelectorAll('[data-x]')) b.onclick = () => this.close();
    el.addEventListener('click', (e) => { if (e.target === el) this.close(); });
    el.addEventListener('keydown', (e) => {
      if (e.key === 'Escape') { e.stopPropagation(); this.close(); }
      if (e.key === 'Enter' && e.target.tagName === 'INPUT') { e.preventDefault(); this.save(); }
    });
    for (const b of el.querySelectorAll('[data-scale]')) b.onclick = () => this.scale(Number(b.dataset.scale));
    this.width.addEventListener('input', () => {
      const w = Number(this.width.value);
      if (this.keep.checked && Number.isFinite(w) && w > 0) this.height.value = String(Math.round(w / this.aspect()));
      this.error.hidden = true;
    });
    this.height.addEventListener('input', () => { this.error.hidden = true; });
    el.querySelector('#export-go').onclick = () => this.save();
  }

  /** Width over height of the drawing on screen. */
  aspect() {
    const { w, h } = this.app.editor.size;
    return w / Math.max(1, h);
  }

  scale(k) {
    const { w, h } = this.app.editor.size;
    this.width.value = String(Math.round(w * k));
    this.height.value = String(Math.round(h * k));
    this.error.hidden = true;
  }

  open() {
    if (!this.width.value) this.scale(2);
    else if (this.keep.checked) this.height.value = String(Math.round(Number(this.width.value) / this.aspect()));
    this.error.hidden = true;
    this.el.hidden = false;
    this.width.focus();
    this.width.select();
  }

  close() {
    this.el.hidden = true;
    document.getElementById('canvas').focus();
  }

  /** The chosen size, or an error naming the field. */
  size() {
    const side = (input, name) => {
      const v = Number(input.value);
      if (input.value.trim() === '' || !Number.isInteger(v) || v < MIN_SIDE || v > MAX_SIDE) {
        return { error: `${name}: a whole number of pixels from ${MIN_SIDE} to ${MAX_SIDE}.` };
      }
      return { v };
    };
    const w = side(this.width, 'Width');
    if (w.error) return w;
    const h = side(this.height, 'Height');
    if (h.error) return h;
    if (w.v * h.v > MAX_AREA) return { error: `Width × height: at most ${MAX_AREA / 1e6} million pixels (${w.v} × ${h.v} is ${(w.v * h.v / 1e6).toFixed(1)} million).` };
    return { width: w.v, height: h.v };
  }

  save() {
    const s = this.size();
    if (s.error) {
      this.error.textContent = s.error;
      this.error.hidden = false;
      return;
    }
    const fit = this.el.querySelector('input[name="export-frame"]:checked')?.value === 'fit';
    const canvas = renderDrawing(this.app, { width: s.width, height: s.height, fit });
    const name = `${slug(this.app.layout.name)}-drawing-${s.width}x${s.height}.png`;
    canvas.toBlob((b) => {
      if (b) download(name, b);
      else this.app.message('The picture could not be made at that size; try a smaller one.');
    }, 'image/png');
    this.close();
  }
}
