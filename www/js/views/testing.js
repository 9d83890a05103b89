// Testing view: the centre-of-curvature (knife-edge) test of a concave
// conic — zonal mask, expected readings with a moving or fixed source,
// glass to remove from the best-fit sphere — and the measured mirror: zone
// readings typed into the table (or a CSV of radius, height departure)
// become a mirror whose zones needing work are listed and which can be
// traced in the editor. Figures from `zone_table_json`,
// `measured_readings_json` and `measured_csv_json`. Below them the
// simulated Ronchi and knife-edge pictures (testing-pictures.js), the plots
// of measured against target (testing-plots.js) and, from the tools, the
// zonal mask as SVG at 1:1 scale (`zonal_mask_svg_text`).

import { api } from '../wasm.js';
import { download, slug } from '../export.js';
import { TestPictures } from './testing-pictures.js';
import { MeasuredPlots } from './testing-plots.js';
import {
  Form, button, conicMirror, csvText, debounce, errText, figureTable, fmtNum, heading, para, rowTable, saveCsv,
  visible,
} from './common.js';

const MAX_CSV_BYTES = 1 << 20;

const ZONE_COLUMNS = [
  { key: 'inner_mm', label: 'inner', title: 'Inner edge of the zone, mm from the centre' },
  { key: 'outer_mm', label: 'outer', title: 'Outer edge of the zone, mm from the centre' },
  { key: 'r_mm', label: 'r', title: 'Radius the reading is computed at: the RMS of the edges, √((inner² + outer²)/2), which splits the zone into equal areas' },
  { key: 'reading_mm', label: 'reading', title: 'Knife-edge position for this zone, from the vertex centre of curvature, positive away from the mirror', sig: 6 },
  { key: 'removal_um', label: 'glass to remove', title: 'Depth of glass to remove at r to turn the best-fit sphere into the target surface' },
  { key: 'departure_waves', label: 'departure', unit: 'λ', title: 'Departure of the target from the best-fit sphere at r (sphere placed midway), in waves on the surface' },
];

const VERDICT_TEXT = { high: 'high — remove glass here', low: 'low — bring the surroundings down', ok: 'on figure' };

export class TestingView {
  constructor() {
    this.id = 'testing';
    this.label = 'Testing';
    this.title = 'Centre-of-curvature test: zonal mask, knife-edge readings, glass to remove; measured mirrors';
    this.table = null;
    this.readings = []; // typed measured readings, by zone index (text)
    this.measured = null; // { kind: 'readings' | 'csv', doc, name }
    this.csv = null; // { name, text }
    this.prefillKey = null;
  }

  mount(el, app) {
    this.app = app;
    this.el = el;
    el.classList.add('dview', 'dview-testing');

    const left = document.createElement('div');
    left.className = 'dview-col dview-form';
    heading(left, 'Mirror and test');
    const run = debounce(() => this.compute());
    this.form = new Form(left, {
      id: 'testing-form',
      onChange: (name) => {
        // Typed over: the mirror is no longer the one the note names.
        if (['radius', 'conic', 'diameter'].includes(name)) this.setNote('');
        this.out.dataset.state = 'pending';
        run();
      },
    });
    const f = this.form;
    f.field({ name: 'radius', label: 'vertex radius R', unit: 'mm', value: '2000', title: 'Vertex radius of curvature of the concave mirror, mm' });
    f.field({ name: 'conic', label: 'conic constant K', unit: '', value: '-1', title: 'Conic constant of the target surface (−1 paraboloid)' });
    f.field({ name: 'diameter', label: 'diameter D', unit: 'mm', value: '200', title: 'Clear diameter of the mirror, mm' });
    f.field({ name: 'zones', label: 'zones N', unit: '', value: '5', title: 'Number of zones of equal area in the mask (1 to 100)' });
    f.field({ name: 'source', label: 'source', type: 'select', options: [['moving', 'moving'], ['fixed', 'fixed']], title: 'Moving: the lamp travels with the knife edge (readings about half the fixed-source ones). Fixed: the lamp stays at the vertex centre of curvature.' });
    f.field({ name: 'wavelength', label: 'wavelength λ', unit: 'nm', value: '550', title: 'Wavelength for the departures in waves, nm' });
    f.finish();
    const tools = document.createElement('div');
    tools.className = 'row-buttons';
    button(tools, 'From the mirror', 'Fill R, K and D from the selected mirror (a revolved conic)', () => this.prefill(true));
    this.csvBtn = button(tools, 'Export CSV', 'Download the zone table (with any measured readings) as CSV', () => this.exportCsv());
    this.maskBtn = button(tools, 'Mask SVG', 'Download the zonal mask template as SVG at 1:1 scale (mm): print at 100 % and check the scale bar', () => this.exportMask());
    this.maskBtn.id = 'export-mask';
    left.append(tools);
    this.source = para(left, '');
    this.source.id = 'testing-note';
    para(left, 'Zone edges split the mirror into N equal areas: a√(X/N), X = 0 … N, a = D/2. Each zone is read at the RMS radius of its edges, √((inner² + outer²)/2). Readings are knife-edge positions from the vertex centre of curvature, + away from the mirror.', 'muted small rule');

    const mid = document.createElement('div');
    mid.className = 'dview-col dview-out';
    mid.id = 'testing-out';
    mid.dataset.state = 'none';
    this.out = mid;

    const right = document.createElement('div');
    right.className = 'dview-col dview-measured';
    right.id = 'measured';
    heading(right, 'Measured mirror', 'Build the mirror a test found and trace it');
    para(right, 'Type moving-source readings (mm, same convention) in the table’s “measured” column, or load a CSV of radius (mm), height departure from the design conic (µm unless the header names the unit).');
    this.mform = new Form(right, { id: 'measured-form', onChange: () => this.measure() });
    this.mform.field({ name: 'tolerance_nm', label: 'surface tolerance', unit: 'nm', value: '35', title: 'Surface error (after removing piston and a change of radius) beyond which a zone counts as high or low, nm. A surface error shows twice as large in the wavefront.' });
    this.mform.finish();
    const mt = document.createElement('div');
    mt.className = 'row-buttons';
    this.fileInput = document.createElement('input');
    this.fileInput.type = 'file';
    this.fileInput.accept = '.csv,.txt,text/csv,text/plain';
    this.fileInput.hidden = true;
    this.fileInput.id = 'measured-file';
    this.fileInput.onchange = () => { this.loadCsv(this.fileInput.files[0]); this.fileInput.value = ''; };
    button(mt, 'Load CSV…', 'Open a table of radius, height departure (one pair per line)', () => this.fileInput.click());
    this.clearBtn = button(mt, 'Clear', 'Forget the measured readings and the loaded table', () => this.clearMeasured());
    this.traceBtn = button(mt, 'Trace this mirror', 'Open the measured mirror as a new layout (design conic plus the measured departure, a star on axis and a screen at focus); Undo brings back your layout', () => this.traceMeasured());
    this.traceBtn.id = 'trace-measured';
    mt.append(this.fileInput);
    right.append(mt);
    this.inUse = para(right, '', 'small in-use');
    this.inUse.id = 'measured-state';
    this.mout = document.createElement('div');
    this.mout.id = 'measured-out';
    this.mout.dataset.state = 'none';
    right.append(this.mout);
    el.append(left, mid, right);
    this.pictures = new TestPictures(el, app);
    this.plots = new MeasuredPlots(el, app);
    this.showMeasured();
  }

  prefill(force) {
    const found = conicMirror(this.app);
    if (!found) {
      if (force) this.setNote('No revolved concave conic mirror in this layout: enter R, K and D by hand.');
      else if (this.prefillKey) this.setNote('');
      this.prefillKey = null;
      return;
    }
    const m = found.mirror;
    const key = `${m.id}|${m.profile.radius}|${m.profile.conic ?? 0}|${m.aperture.diameter}`;
    if (!force && key !== this.prefillKey && this.form.dirty) {
      // The layout changed but the form holds the user's own values: the
      // old "filled from" note no longer says where they came from.
      if (this.prefillKey) this.setNote('');
      this.prefillKey = null;
      return;
    }
    if (!force && (this.form.dirty || key === this.prefillKey)) return;
    this.prefillKey = key;
    this.form.set('radius', m.profile.radius);
    this.form.set('conic', m.profile.conic ?? 0);
    this.form.set('diameter', m.aperture.diameter);
    this.form.set('wavelength', this.app.layout.wavelength_nm);
    this.form.dirty = false;
    this.setNote(`Filled from ${found.selected ? 'the selected' : 'the layout’s'} mirror “${m.id}”.`);
    this.compute();
  }

  setNote(text) {
    this.source.textContent = text;
    this.source.hidden = !text;
  }

  design() {
    const f = this.form;
    return { radius: f.num('radius'), conic: f.num('conic'), diameter: f.num('diameter') };
  }

  compute() {
    const f = this.form;
    let t;
    try {
      const d = this.design();
      t = JSON.parse(api().zone_table_json(d.radius, d.conic, d.diameter, f.num('zones'), f.text('source'), f.num('wavelength')));
    } catch (e) {
      this.table = null;
      f.showError(errText(e));
      this.out.dataset.state = 'error';
      this.out.replaceChildren();
      para(this.out, 'Correct the marked field; the table comes back as soon as the input is valid. Typed measured readings are kept.');
      this.csvBtn.disabled = true;
      this.showMeasured();
      return;
    }
    f.clearErrors();
    if (this.table && this.table.zones.length !== t.zones.length) this.readings = [];
    this.table = t;
    this.csvBtn.disabled = false;
    this.render();
    this.out.dataset.state = 'ok';
    this.measure();
  }

  render() {
    const t = this.table;
    const out = this.out;
    out.replaceChildren();
    const moving = t.source === 'moving';
    const cols = [
      { key: 'zone', label: 'zone', title: 'Zone number from the centre', cell: (td, _r, i) => { td.textContent = String(i + 1); } },
      ...ZONE_COLUMNS,
      {
        key: 'measured', label: 'measured', unit: 'mm', title: 'Your moving-source reading for this zone, mm from the vertex centre of curvature (leave empty if not measured)',
        cell: (td, _r, i) => {
          const inp = document.createElement('input');
          inp.type = 'text';
          inp.inputMode = 'decimal';
          inp.className = 'cell-input';
          inp.dataset.zone = String(i);
          inp.setAttribute('aria-label', `Measured reading of zone ${i + 1}, mm`);
          inp.value = this.readings[i] ?? '';
          inp.disabled = !moving;
          inp.title = moving ? 'Your moving-source reading, mm' : 'Measured readings use the moving-source convention: switch the source to moving';
          inp.addEventListener('input', () => { this.readings[i] = inp.value; this.csv = null; this.csvReplaced = 0; this.measureSoon(); });
          td.append(inp);
        },
      },
      { key: 'surface_error_nm', label: 'error', unit: 'nm', title: 'Measured surface error at this zone after removing piston and a change of radius (+ proud of the target)', cell: (td) => { td.dataset.key = 'surface_error_nm'; } },
      { key: 'verdict', label: 'verdict', title: 'High: remove glass here. Low: bring the surroundings down.', cell: (td) => { td.dataset.key = 'verdict'; } },
    ];
    const tab = rowTable(cols, t.zones, { id: 'zones-table', caption: `Zonal mask and knife-edge readings, ${t.source} source` });
    out.append(tab);
    out.append(figureTable([
      { key: 'best_fit_sphere_radius_mm', label: 'best-fit sphere R', title: 'Radius of the sphere closest to the target over the aperture (least peak-to-valley departure), mm' },
      { key: 'removal_depth_um', label: 'deepest glass to remove', title: 'Greatest depth of glass to remove to turn the best-fit sphere into the target, µm' },
    ], t, { id: 'zones-summary' }));
    if (!moving) para(out, 'Fixed source: about twice the moving-source readings. Measured readings are taken with a moving source.');
    this.measureSoon = debounce(() => this.measure());
  }

  /** Builds the measured mirror from the typed readings (unless a CSV is loaded). */
  measure() {
    if (this.csv) { this.measureCsv(); return; }
    const t = this.table;
    const pairs = [];
    const zoneOf = [];
    let bad = null;
    if (t && t.source === 'moving') {
      t.zones.forEach((z, i) => {
        const raw = (this.readings[i] ?? '').trim();
        if (raw === '') return;
        const v = Number(raw.replace(/\u2212/g, '-').replace(',', '.'));
        if (!Number.isFinite(v) && !bad) bad = `zone ${i + 1} reading: "${raw}" is not a number`;
        pairs.push(z.r_mm, v);
        zoneOf.push(i);
      });
    }
    this.markCells(null);
    if (!t || !pairs.length) { this.measured = null; this.showMeasured(); return; }
    if (bad) { this.measured = null; this.showMeasured(bad); return; }
    let doc;
    try {
      const d = this.design();
      doc = JSON.parse(api().measured_readings_json(d.radius, d.conic, d.diameter, new Float64Array(pairs), this.mform.num('tolerance_nm')));
    } catch (e) {
      // readings[i] is the i-th filled zone: say which zone it is.
      const text = errText(e).replace(/^readings\[(\d+)\]/, (_, j) => `zone ${zoneOf[Number(j)] + 1} reading (readings[${j}])`);
      this.measured = null;
      this.showMeasured(text);
      return;
    }
    this.measured = { kind: 'readings', doc, name: `${zoneOf.length} zone reading${zoneOf.length > 1 ? 's' : ''}` };
    this.markCells(doc.zones.map((w, j) => [zoneOf[j], w]));
    this.showMeasured();
  }

  /** Writes the verdicts into the zone table's last two columns. */
  markCells(list) {
    const tab = this.out.querySelector('#zones-table');
    if (!tab) return;
    const rows = tab.tBodies[0].rows;
    for (const tr of rows) {
      for (const td of tr.querySelectorAll('td[data-key="surface_error_nm"], td[data-key="verdict"]')) {
        td.textContent = '';
        delete td.dataset.value;
        td.className = '';
      }
    }
    for (const [i, w] of list ?? []) {
      const tr = rows[i];
      const e = tr.querySelector('td[data-key="surface_error_nm"]');
      e.textContent = fmtNum(w.surface_error_nm, 3);
      e.dataset.value = JSON.stringify(w.surface_error_nm);
      const v = tr.querySelector('td[data-key="verdict"]');
      v.textContent = w.verdict;
      v.dataset.value = JSON.stringify(w.verdict);
      v.className = `verdict-${w.verdict}`;
      v.title = VERDICT_TEXT[w.verdict];
    }
  }

  async loadCsv(file) {
    if (!file) return;
    if (file.size > MAX_CSV_BYTES) { this.showMeasured(`csv: "${file.name}" is larger than 1 MiB`); return; }
    let text;
    try { text = await file.text(); } catch (e) { this.showMeasured(`csv: cannot read "${file.name}": ${errText(e)}`); return; }
    this.csv = { name: file.name, text };
    // The table replaces the typed readings: they must not look as if used.
    const typed = this.readings.filter((r) => r?.trim()).length;
    this.readings = [];
    for (const inp of this.out.querySelectorAll('input.cell-input')) inp.value = '';
    this.csvReplaced = typed;
    this.measureCsv();
  }

  measureCsv() {
    this.markCells(null);
    let doc;
    try {
      const d = this.design();
      doc = JSON.parse(api().measured_csv_json(d.radius, d.conic, d.diameter, this.csv.text, this.mform.num('tolerance_nm')));
    } catch (e) {
      this.measured = null;
      this.showMeasured(`${this.csv.name}: ${errText(e)}`);
      return;
    }
    this.measured = { kind: 'csv', doc, name: this.csv.name };
    this.showMeasured();
  }

  clearMeasured() {
    this.readings = [];
    this.csv = null;
    this.csvReplaced = 0;
    for (const inp of this.out.querySelectorAll('input.cell-input')) inp.value = '';
    this.measure();
  }

  /** The measured panel: error, or what needs work, and the trace button. */
  showMeasured(error) {
    this.showInUse(error);
    this.refreshPictures();
    const out = this.mout;
    out.replaceChildren();
    this.traceBtn.disabled = !this.measured;
    this.clearBtn.disabled = !this.measured && !this.csv && !this.readings.some((r) => r?.trim());
    if (error) {
      const p = document.createElement('div');
      p.className = 'field-error general';
      p.setAttribute('role', 'alert');
      p.textContent = error;
      out.append(p);
      out.dataset.state = 'error';
      return;
    }
    const m = this.measured;
    if (!m) {
      out.dataset.state = 'none';
      para(out, 'No measurement yet.');
      return;
    }
    out.dataset.state = 'ok';
    para(out, `From ${m.name}: the departure from the design conic spans ${fmtNum(m.doc.departure_pv_um, 4)} µm P-V.`, 'small');
    const list = m.kind === 'readings'
      ? m.doc.zones.map((w) => ({ ...w, where: `r ${fmtNum(w.r_mm, 4)} mm` }))
      : m.doc.rows.map((w) => ({ ...w, where: `r ${fmtNum(w.r_mm, 4)} mm` }));
    const work = list.filter((w) => w.verdict !== 'ok');
    const ul = document.createElement('ul');
    ul.className = 'work-list';
    ul.id = 'work-list';
    for (const w of work) {
      const li = document.createElement('li');
      li.className = `verdict-${w.verdict}`;
      li.dataset.verdict = w.verdict;
      li.textContent = `${w.where}: ${w.verdict} by ${fmtNum(Math.abs(w.surface_error_nm), 3)} nm — ${VERDICT_TEXT[w.verdict].split(' — ')[1]}`;
      ul.append(li);
    }
    if (!work.length) para(out, 'Every zone is within the tolerance.', 'small');
    else out.append(ul);
    if (m.kind === 'csv') {
      out.append(rowTable([
        { key: 'r_mm', label: 'r' },
        { key: 'departure_um', label: 'departure' },
        { key: 'surface_error_nm', label: 'error', sig: 3 },
        { key: 'verdict', label: 'verdict' },
      ], m.doc.rows, { id: 'csv-table', caption: 'Departure table' }));
    }
  }

  /** Says which measured data the pictures, plots and verdicts use. */
  showInUse(error) {
    const m = this.measured;
    let text;
    if (m?.kind === 'csv') {
      text = `In use: the loaded table “${m.name}” (${m.doc.rows.length} rows).`;
      if (this.csvReplaced) text += ` It replaced ${this.csvReplaced} typed reading${this.csvReplaced > 1 ? 's' : ''}.`;
    } else if (m) {
      text = `In use: ${m.name} typed in the table.`;
    } else if (error) {
      text = 'In use: nothing — the measured data has an error (below); the pictures show the target only.';
    } else {
      text = 'In use: no measured data; the pictures and plots show the target only.';
    }
    this.inUse.textContent = text;
    this.inUse.dataset.use = m?.kind ?? 'none';
  }

  /** Hands the current mirror and measurement to the pictures and plots. */
  refreshPictures() {
    if (!this.pictures) return;
    let design = null, wavelength = 550;
    try {
      design = this.table ? this.design() : null;
      wavelength = this.form.num('wavelength');
    } catch { design = null; }
    if (!design || !this.table) {
      this.pictures.set(null);
      this.plots.set(null);
      return;
    }
    const m = this.measured;
    const measured = m ? { kind: m.kind, doc: m.doc, name: m.name, knots: new Float64Array(m.doc.departure.flat()) } : null;
    const state = { design, wavelength, source: this.table.source, zones: this.table.zones, measured };
    this.pictures.set(state);
    this.plots.set(state);
  }

  exportMask() {
    const f = this.form;
    let svg;
    try {
      svg = api().zonal_mask_svg_text(f.num('diameter'), f.num('zones'));
    } catch (e) {
      f.showError(errText(e));
      return;
    }
    const t = this.table;
    const name = `zonal-mask-${t ? t.zones.length : f.text('zones')}-zones`;
    download(`${slug(this.app.layout.name)}-${name}.svg`, new Blob([svg], { type: 'image/svg+xml' }));
  }

  traceMeasured() {
    const m = this.measured;
    if (!m) return;
    if (this.app.loadText(JSON.stringify(m.doc.layout), 'the measured mirror')) {
      this.app.message('Opened the measured mirror as a new layout; the spot, wavefront and Strehl are in the Spot view. Undo brings back your previous layout.', 'info');
      this.app.drawer.show('spot');
    }
  }

  exportCsv() {
    const t = this.table;
    if (!t) return;
    const work = new Map();
    if (this.measured?.kind === 'readings') {
      for (const w of this.measured.doc.zones) work.set(w.r_mm, w);
    }
    const rows = t.zones.map((z, i) => {
      const w = work.get(z.r_mm);
      return { zone: i + 1, source: t.source, ...z, measured_mm: w ? w.reading_mm : '', surface_error_nm: w ? w.surface_error_nm : '', verdict: w ? w.verdict : '' };
    });
    saveCsv(this.app, `zones-${t.source}`, csvText(['zone', 'source', 'inner_mm', 'outer_mm', 'r_mm', 'reading_mm', 'removal_um', 'departure_um', 'departure_waves', 'measured_mm', 'surface_error_nm', 'verdict'], rows));
  }

  update() {
    if (!visible(this.el)) return;
    this.prefill(false);
    if (this.out.dataset.state === 'none') this.compute();
  }
}
