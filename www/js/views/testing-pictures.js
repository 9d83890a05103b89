// Testing view, simulated tests: the Ronchigram or knife-edge picture the
// eye sees on the target mirror and, when measured data is in use, on the
// measured mirror, side by side, with sliders for the grating or knife
// position, lines per mm and the knife's lateral edge. Pictures and
// figures come from `ronchi_test` and `knife_test` (an exact ray trace of
// the test stand in the core); the page only draws the pixels.

import { api } from '../wasm.js';
import { download, slug } from '../export.js';
import { button, errText, fmtNum, heading, para } from './common.js';

/** CSS side of each picture, px. */
const PICTURE_PX = 240;
/** Band edges listed under a Ronchigram. */
const EDGES_SHOWN = 6;

function slider(parent, { id, label, title, min, max, step, value, unit, onInput }) {
  const row = document.createElement('div');
  row.className = 'pic-slider';
  const lab = document.createElement('label');
  lab.htmlFor = id;
  lab.textContent = label;
  lab.title = title;
  const input = document.createElement('input');
  input.type = 'range';
  input.id = id;
  input.title = title;
  Object.assign(input, { min, max, step, value });
  const out = document.createElement('output');
  out.htmlFor = id;
  // The value, with rounding noise of the range's arithmetic about 0 removed.
  const get = () => {
    const v = Number(input.value);
    return Math.abs(v) < 1e-9 * (Number(input.max) - Number(input.min)) ? 0 : v;
  };
  const show = () => { out.textContent = `${fmtNum(get(), 4)} ${unit}`; };
  input.addEventListener('input', () => { show(); onInput(); });
  show();
  row.append(lab, input, out);
  parent.append(row);
  return { input, show, row, get };
}

export class TestPictures {
  constructor(parent, app) {
    this.app = app;
    this.state = null; // { design, source, zones, measured: { knots, name } | null }
    this.pending = 0;
    const el = document.createElement('section');
    el.className = 'dview-col dview-pictures';
    el.id = 'test-pictures';
    const side = document.createElement('div');
    side.className = 'pic-side';
    heading(side, 'Simulated test', 'What the eye behind the grating or knife sees on the mirror');
    const bar = document.createElement('div');
    bar.className = 'pic-controls';
    const kindLabel = document.createElement('label');
    kindLabel.textContent = 'test ';
    this.kind = document.createElement('select');
    this.kind.id = 'pic-kind';
    this.kind.append(new Option('Ronchi grating', 'ronchi'), new Option('knife edge', 'knife'));
    this.kind.title = 'Ronchi: a coarse grating near the centre of curvature shows bands. Knife edge: a blade cutting the returning light from the left shows the zones as light and shadow.';
    this.kind.addEventListener('change', () => { this.rangeKey = null; this.update(); });
    kindLabel.append(this.kind);
    bar.append(kindLabel);
    side.append(bar);
    const sliders = document.createElement('div');
    sliders.className = 'pic-sliders';
    const redraw = () => this.schedule();
    this.pos = slider(sliders, {
      id: 'pic-offset', label: 'position S', unit: 'mm', min: -10, max: 10, step: 0.01, value: 0, onInput: redraw,
      title: 'Grating or knife position from the vertex centre of curvature, mm; + away from the mirror (outside)',
    });
    this.lines = slider(sliders, {
      id: 'pic-lines', label: 'lines per mm', unit: '/mm', min: 0.5, max: 20, step: 0.5, value: 4, onInput: redraw,
      title: 'Grating lines per mm (one opaque and one clear ruling each)',
    });
    this.knifeX = slider(sliders, {
      id: 'pic-knife-x', label: 'knife edge x', unit: 'mm', min: -0.05, max: 0.05, step: 0.0005, value: 0, onInput: redraw,
      title: 'Lateral position of the knife edge, mm; the knife covers the light landing left of it',
    });
    side.append(sliders);
    const pics = document.createElement('div');
    pics.className = 'pic-pair';
    this.target = this.panel(pics, 'pic-target');
    this.measured = this.panel(pics, 'pic-measured');
    el.append(side, pics);
    this.error = document.createElement('div');
    this.error.className = 'field-error general';
    this.error.setAttribute('role', 'alert');
    this.error.hidden = true;
    side.append(this.error);
    para(side, 'Geometric pictures: rays from a point source traced exactly through the test, with no diffraction. A real grating near focus adds fringes at the band edges, and a real lamp of some size softens the knife-edge shadows into shading.', 'muted small pic-note');
    this.el = el;
    parent.append(el);
  }

  panel(parent, id) {
    const fig = document.createElement('figure');
    fig.className = 'pic';
    fig.id = id;
    const cap = document.createElement('figcaption');
    const canvas = document.createElement('canvas');
    canvas.setAttribute('role', 'img');
    canvas.style.width = `${PICTURE_PX}px`;
    canvas.style.height = `${PICTURE_PX}px`;
    const note = document.createElement('div');
    note.className = 'pic-figures small';
    const tools = document.createElement('div');
    tools.className = 'row-buttons';
    const p = { fig, cap, canvas, note, doc: null, name: id };
    p.png = button(tools, 'Export PNG', 'Download this picture as PNG', () => this.exportPng(p));
    fig.append(cap, canvas, note, tools);
    parent.append(fig);
    return p;
  }

  /** New inputs from the testing view; null state hides the pictures. */
  set(state) {
    this.state = state;
    this.update();
  }

  /** Slider ranges from the zone readings, kept while the mirror stays the same. */
  ranges() {
    const s = this.state;
    const d = s.design;
    const key = `${this.kind.value}|${d.radius}|${d.conic}|${d.diameter}|${s.source}`;
    if (key === this.rangeKey) return;
    this.rangeKey = key;
    const a = d.diameter / 2;
    const readings = s.zones.map((z) => z.reading_mm);
    const lo = Math.min(0, ...readings), hi = Math.max(0, ...readings);
    const span = hi - lo;
    let min, max, value;
    if (this.kind.value === 'knife') {
      const pad = 0.25 * span + 5e-4 * d.radius;
      [min, max] = [lo - pad, hi + pad];
      value = s.zones[Math.floor(s.zones.length / 2)]?.reading_mm ?? 0;
    } else {
      // About eight band edges across the radius of a sphere: x = kpR/(4S).
      const lines = this.lines.get();
      const reach = Math.max(2 * (8 / lines) * d.radius / (4 * a), 4 * span, 1e-3 * d.radius);
      [min, max] = [-reach, reach];
      value = -(8 / lines) * d.radius / (4 * a) + lo;
    }
    const step = (max - min) / 1000;
    Object.assign(this.pos.input, { min, max, step });
    this.pos.input.value = String(value);
    this.pos.show();
    const kx = Math.max(0.01, 2 * span * a / d.radius);
    Object.assign(this.knifeX.input, { min: -kx, max: kx, step: kx / 200 });
    this.knifeX.input.value = '0';
    this.knifeX.show();
  }

  schedule() {
    if (this.pending) return;
    this.pending = requestAnimationFrame(() => { this.pending = 0; this.draw(); });
  }

  update() {
    const s = this.state;
    const knife = this.kind.value === 'knife';
    this.lines.row.hidden = knife;
    this.knifeX.row.hidden = !knife;
    this.el.dataset.test = this.kind.value;
    if (!s) {
      this.el.dataset.state = 'none';
      for (const p of [this.target, this.measured]) this.blank(p, 'Enter a valid mirror to see the picture.');
      return;
    }
    this.ranges();
    this.draw();
  }

  blank(p, text) {
    p.doc = null;
    p.png.disabled = true;
    p.canvas.hidden = true;
    p.note.textContent = text;
    p.fig.dataset.state = 'none';
  }

  draw() {
    const s = this.state;
    if (!s) return;
    this.error.hidden = true;
    const knife = this.kind.value === 'knife';
    const what = knife ? 'Knife-edge picture' : 'Ronchigram';
    this.target.cap.textContent = `${what} — target (K = ${fmtNum(s.design.conic, 6)})`;
    this.target.name = `${this.kind.value}-target`;
    this.el.dataset.state = 'ok';
    if (!this.picture(this.target, new Float64Array(0))) return;
    if (s.measured) {
      this.measured.cap.textContent = `${what} — measured mirror (${s.measured.name})`;
      this.measured.name = `${this.kind.value}-measured`;
      this.picture(this.measured, s.measured.knots);
    } else {
      this.measured.cap.textContent = `${what} — measured mirror`;
      this.blank(this.measured, 'No measured data in use: load a CSV or type readings to see your mirror beside the target.');
    }
  }

  /** Draws one picture; false (and the error shown) when the core refuses. */
  picture(p, knots) {
    const s = this.state, d = s.design;
    const S = this.pos.get();
    const size = Math.min(512, Math.round(PICTURE_PX * (window.devicePixelRatio || 1)));
    let doc, px;
    let made = null;
    try {
      if (this.kind.value === 'knife') {
        made = api().knife_test(d.radius, d.conic, d.diameter, S, this.knifeX.get(), s.source, knots, size);
      } else {
        made = api().ronchi_test(d.radius, d.conic, d.diameter, this.lines.get(), S, s.source, knots, size);
      }
      doc = JSON.parse(made.json());
      px = made.rgba();
    } catch (e) {
      this.blank(p, '');
      this.error.hidden = false;
      this.error.textContent = errText(e);
      return false;
    } finally {
      made?.free();
    }
    p.doc = doc;
    // What the picture shows, for tests and tools: the inputs it was made from.
    p.fig.dataset.inputs = JSON.stringify({ test: this.kind.value, K: d.conic, S, lines: this.lines.get(), knifeX: this.knifeX.get(), measured: knots.length > 0 });
    p.canvas.hidden = false;
    p.canvas.width = size;
    p.canvas.height = size;
    const ctx = p.canvas.getContext('2d');
    ctx.putImageData(new ImageData(new Uint8ClampedArray(px.buffer, px.byteOffset, px.length), size, size), 0, 0);
    // The rim, so dark glass stands out from a dark page.
    ctx.strokeStyle = this.app.theme.ink2;
    ctx.lineWidth = Math.max(1, size / 240);
    ctx.beginPath();
    ctx.arc(size / 2, size / 2, size / 2 - ctx.lineWidth / 2, 0, 2 * Math.PI);
    ctx.stroke();
    p.png.disabled = false;
    p.fig.dataset.state = 'ok';
    if (this.kind.value === 'knife') {
      p.fig.dataset.nullRadius = JSON.stringify(doc.null_radius_mm);
      p.fig.dataset.litFraction = JSON.stringify(doc.lit_fraction);
      delete p.fig.dataset.edges;
      const nul = doc.whole_mirror_nulls ? 'the whole mirror nulls at once'
        : doc.null_radius_mm === null ? 'no zone nulls' : `the zone at r = ${fmtNum(doc.null_radius_mm, 4)} mm nulls`;
      p.note.textContent = `${nul}; ${fmtNum(100 * doc.lit_fraction, 3)} % seen lit`;
      p.canvas.setAttribute('aria-label', `Knife-edge picture: ${p.note.textContent}`);
    } else {
      const e = doc.band_edges_mm;
      p.fig.dataset.edges = JSON.stringify(e);
      delete p.fig.dataset.nullRadius;
      delete p.fig.dataset.litFraction;
      const list = e.slice(0, EDGES_SHOWN).map((x) => fmtNum(x, 4)).join(', ');
      p.note.textContent = e.length
        ? `${e.length} band edge${e.length > 1 ? 's' : ''} along the horizontal radius, at ${list}${e.length > EDGES_SHOWN ? ', …' : ''} mm`
        : 'no band edge across the radius (one band covers it)';
      p.canvas.setAttribute('aria-label', `Ronchigram: ${p.note.textContent}`);
    }
    return true;
  }

  exportPng(p) {
    if (!p.doc) return;
    p.canvas.toBlob((b) => b && download(`${slug(this.app.layout.name)}-${slug(p.name)}.png`, b), 'image/png');
  }
}
