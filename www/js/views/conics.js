// Conics view: one vertex radius and diameter, several conic constants side
// by side — edge sag, departure from the vertex sphere and from the
// best-fit sphere, exact wavefront at best focus for a star on axis, and the
// third-order limits for a sphere and for the conic constant. Figures from
// `compare_conics_json` (the document of `catoptric compare --json`).

import { api } from '../wasm.js';
import {
  Form, button, conicMirror, csvText, debounce, denoise, errText, figureTable, fmtNum, heading, linePlot, para, rowTable,
  saveCsv, unitOf, visible,
} from './common.js';

const DEFAULT_CONICS = [0, -0.5, -1];

/** Figures of the table: a row per figure, a column per conic. */
const ROWS = [
  ['edge_sag_mm', 'edge sag', 'Sag at the rim (depth of the curve from the vertex), mm'],
  ['departure_pv_um', 'vs vertex sphere, P-V', 'Peak-to-valley of the surface minus the sphere of the same vertex radius, µm'],
  ['best_fit_sphere_radius_mm', 'best-fit sphere R', 'Radius of the sphere closest to this surface over the aperture (least peak-to-valley departure), mm'],
  ['removal_depth_um', 'vs best-fit sphere, P-V', 'Peak-to-valley departure from the best-fit sphere: the deepest glass to remove to turn that sphere into this surface, µm'],
  ['wavefront_pv_waves', 'wavefront P-V', 'Peak-to-valley wavefront error at best focus for a collimated beam on axis, waves'],
  ['wavefront_rms_waves', 'wavefront RMS', 'RMS wavefront error at best focus for a collimated beam on axis, waves'],
  ['strehl_estimate', 'Strehl', 'Strehl ratio from the RMS wavefront (extended Maréchal approximation)'],
  ['best_focus_mm', 'best focus', 'Distance of the best (least-RMS wavefront) focus from the vertex, mm'],
];

const CSV_KEYS = ['conic', 'edge_sag_mm', 'departure_pv_um', 'best_fit_sphere_radius_mm', 'removal_depth_um',
  'wavefront_pv_waves', 'wavefront_rms_waves', 'strehl_estimate', 'best_focus_mm'];

export class ConicsView {
  constructor() {
    this.id = 'conics';
    this.label = 'Conics';
    this.title = 'Compare conic constants for one mirror: sag, departure from spheres, wavefront and Strehl';
    this.result = null;
    this.prefillKey = null;
  }

  mount(el, app) {
    this.app = app;
    this.el = el;
    el.classList.add('dview', 'dview-conics');
    const left = document.createElement('div');
    left.className = 'dview-col dview-form';
    heading(left, 'Mirror and conics');
    const run = debounce(() => this.compute());
    this.form = new Form(left, { id: 'conics-form', onChange: () => { this.pending(); run(); } });
    const f = this.form;
    f.field({ name: 'radius', label: 'vertex radius R', unit: 'mm', value: '2400', title: 'Vertex radius of curvature of the concave mirror (twice its focal length), mm' });
    f.field({ name: 'diameter', label: 'diameter D', unit: 'mm', value: '150', title: 'Clear diameter of the mirror, mm' });
    f.field({ name: 'conics', label: 'conic constants', unit: 'K', type: 'text', value: DEFAULT_CONICS.join(', '), title: 'Conic constants separated by commas, semicolons or spaces: 0 sphere, −1 paraboloid, < −1 hyperboloid, between −1 and 0 prolate ellipsoid' });
    f.field({ name: 'wavelength', label: 'wavelength λ', unit: 'nm', value: '550', title: 'Wavelength for the wavefront figures, nm' });
    f.finish();
    const tools = document.createElement('div');
    tools.className = 'row-buttons';
    this.fromBtn = button(tools, 'From the mirror', 'Fill R, D and the conic list from the selected mirror (a revolved conic), with the layout’s wavelength', () => this.prefill(true));
    this.csvBtn = button(tools, 'Export CSV', 'Download the table as CSV (one line per conic, full precision)', () => this.exportCsv());
    left.append(tools);
    this.source = para(left, '');

    const mid = document.createElement('div');
    mid.className = 'dview-col dview-out';
    mid.id = 'conics-out';
    mid.dataset.state = 'none';
    this.out = mid;

    const plot = document.createElement('div');
    plot.className = 'view-plot dview-plot';
    this.canvas = document.createElement('canvas');
    this.canvas.setAttribute('role', 'img');
    this.canvas.setAttribute('aria-label', 'Departure of each conic from the vertex sphere against radius');
    plot.append(this.canvas);
    el.append(left, mid, plot);
    new ResizeObserver(() => this.draw()).observe(plot);
  }

  pending() {
    this.out.dataset.state = 'pending';
  }

  /** Fills the form from the selected (or first) conic mirror. */
  prefill(force) {
    const found = conicMirror(this.app);
    if (!found) {
      if (force) this.source.textContent = 'No revolved concave conic mirror in this layout: enter R and D by hand.';
      return;
    }
    const m = found.mirror;
    const key = `${m.id}|${m.profile.radius}|${m.profile.conic ?? 0}|${m.aperture.diameter}|${this.app.layout.wavelength_nm}`;
    if (!force && (this.form.dirty || key === this.prefillKey)) return;
    this.prefillKey = key;
    const k = m.profile.conic ?? 0;
    const list = DEFAULT_CONICS.includes(k) ? DEFAULT_CONICS : [...DEFAULT_CONICS, k];
    this.form.set('radius', m.profile.radius);
    this.form.set('diameter', m.aperture.diameter);
    this.form.set('conics', list.join(', '));
    this.form.set('wavelength', this.app.layout.wavelength_nm);
    this.form.dirty = false;
    this.source.textContent = `Filled from ${found.selected ? 'the selected' : 'the layout’s'} mirror “${m.id}” (K = ${fmtNum(k, 6)}).`;
    this.compute();
  }

  compute() {
    const f = this.form;
    let r;
    try {
      r = JSON.parse(api().compare_conics_json(f.num('radius'), f.num('diameter'), f.text('conics'), f.num('wavelength')));
    } catch (e) {
      this.result = null;
      f.showError(errText(e));
      this.out.dataset.state = 'error';
      this.out.replaceChildren();
      para(this.out, 'Correct the marked field; the figures come back as soon as the input is valid.');
      this.csvBtn.disabled = true;
      this.draw();
      return;
    }
    f.clearErrors();
    this.result = r;
    this.csvBtn.disabled = false;
    this.render();
    this.out.dataset.state = 'ok';
    this.draw();
  }

  render() {
    const r = this.result;
    const out = this.out;
    out.replaceChildren();
    const t = document.createElement('table');
    t.className = 'stats dtable';
    t.id = 'conics-table';
    const cap = document.createElement('caption');
    cap.textContent = `R ${fmtNum(r.radius_mm, 6)} mm, D ${fmtNum(r.diameter_mm, 6)} mm (f/${fmtNum(r.focal_ratio, 4)}), λ ${fmtNum(r.wavelength_nm, 6)} nm`;
    t.append(cap);
    const head = document.createElement('tr');
    const h0 = document.createElement('th');
    h0.textContent = 'conic K';
    head.append(h0);
    r.conics.forEach((c, i) => {
      const th = document.createElement('th');
      th.dataset.key = 'conic';
      th.dataset.row = String(i);
      th.dataset.value = JSON.stringify(c.conic);
      th.textContent = fmtNum(c.conic, 6);
      th.title = c.conic === 0 ? 'sphere' : c.conic === -1 ? 'paraboloid' : c.conic < -1 ? 'hyperboloid' : c.conic < 0 ? 'prolate ellipsoid' : 'oblate ellipsoid';
      head.append(th);
    });
    const thead = document.createElement('thead');
    thead.append(head);
    const tbody = document.createElement('tbody');
    for (const [key, label, title] of ROWS) {
      const tr = document.createElement('tr');
      // The row labels reuse the row-table header cell (label plus unit).
      const th = rowTable([{ key, label, title }], []).querySelector('th');
      tr.append(th);
      r.conics.forEach((c, i) => {
        const td = document.createElement('td');
        td.dataset.key = key;
        td.dataset.row = String(i);
        td.dataset.value = JSON.stringify(c[key]);
        // A Strehl ratio far below any use reads as such, not as 7×10⁻⁶⁷.
        td.textContent = key === 'strehl_estimate' && c[key] < 1e-4 ? '< 0.0001' : fmtNum(denoise(c[key], unitOf(key)), 5);
        td.title = `${title}: ${fmtNum(c[key], 10)}`;
        tr.append(td);
      });
      tbody.append(tr);
    }
    t.append(thead, tbody);
    out.append(t);
    out.append(figureTable([
      { key: 'sphere_fastest_f_ratio', label: 'fastest sphere for λ/4, f/', unit: '', title: 'Smallest f-ratio at which a sphere of this diameter keeps a quarter-wave P-V wavefront at best focus (third order, (D/(512 λ))^⅓)' },
      { key: 'sphere_fastest_f_ratio_exact', label: 'the same, exact wavefront, f/', unit: '', title: 'The same limit found with the exact wavefront' },
      { key: 'conic_tolerance_quarter_wave', label: 'conic tolerance ΔK for λ/4', unit: '', title: 'Change of conic constant that costs a quarter wave P-V at best focus (third order, 64 λ R³/D⁴)' },
    ], r, { id: 'conics-limits', caption: 'Quarter-wave limits' }));
    para(out, 'Wavefront figures: collimated light on axis, at the best focus (piston, tilt and defocus removed). A surface figure error shows twice as large in the wavefront.');
  }

  draw() {
    if (!this.canvas || !visible(this.el)) return;
    const r = this.result;
    const series = r ? r.conics.map((c, i) => ({ label: `K ${fmtNum(c.conic, 5)}`, x: r.profiles.rho_mm, y: r.profiles.departure_um[i] })) : [];
    linePlot(this.canvas, this.app.theme, {
      series,
      xLabel: 'radius on the mirror, mm',
      yLabel: 'departure from the vertex sphere, µm',
      empty: 'Enter valid values to see the profiles',
    });
  }

  exportCsv() {
    if (!this.result) return;
    const r = this.result;
    const rows = r.conics.map((c) => ({ ...c, radius_mm: r.radius_mm, diameter_mm: r.diameter_mm, wavelength_nm: r.wavelength_nm }));
    saveCsv(this.app, 'conics', csvText(['radius_mm', 'diameter_mm', 'wavelength_nm', ...CSV_KEYS], rows));
  }

  update() {
    if (!visible(this.el)) return;
    this.prefill(false);
    if (this.out.dataset.state === 'none') this.compute();
    this.draw();
  }
}
