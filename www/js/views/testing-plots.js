// Testing view, measured against target: the surface error across the
// radius (nm or waves, after removing piston and a change of radius, as the
// zone verdicts use it) and the zone readings of the measured mirror
// against the target's. Readings of a loaded departure table come from the
// core (`surface_readings_mm`: where each zone's normal meets the axis).

import { api } from '../wasm.js';
import { LinePlot } from './plot.js';
import { heading } from './common.js';
import { sourceColour } from '../palette.js';

/** Points on the target's reading curve. */
const CURVE_POINTS = 61;

export class MeasuredPlots {
  constructor(parent, app) {
    this.app = app;
    const el = document.createElement('section');
    el.className = 'dview-col dview-compare';
    el.id = 'measured-plots';
    heading(el, 'Measured against target', 'Surface error and zone readings of the measured mirror beside the target');
    const bar = document.createElement('div');
    bar.className = 'pic-controls';
    const lab = document.createElement('label');
    lab.textContent = 'surface error in ';
    this.unit = document.createElement('select');
    this.unit.id = 'error-unit';
    this.unit.append(new Option('nm', 'nm'), new Option('waves', 'waves'));
    this.unit.addEventListener('change', () => this.draw());
    lab.append(this.unit);
    bar.append(lab);
    el.append(bar);
    const plots = document.createElement('div');
    plots.className = 'compare-plots';
    this.err = new LinePlot('Surface error of the measured mirror against radius');
    this.err.canvas.id = 'error-canvas';
    this.rd = new LinePlot('Zone readings: measured against target');
    this.rd.canvas.id = 'readings-canvas';
    this.err.el.classList.add('dview-plot');
    this.rd.el.classList.add('dview-plot');
    plots.append(this.err.el, this.rd.el);
    el.append(plots);
    parent.append(el);
    this.el = el;
    this.state = null;
  }

  /** state: { design, wavelength, zones, measured: { kind, doc, knots, name } | null } or null. */
  set(state) {
    this.state = state;
    this.draw();
  }

  draw() {
    const th = this.app.theme;
    const s = this.state;
    const m = s?.measured;
    const empty = s ? 'No measured data in use: load a CSV or type readings' : 'Enter a valid mirror';
    this.el.dataset.state = m ? 'ok' : 'none';
    const waves = this.unit.value === 'waves';
    const scale = waves ? 1 / (s?.wavelength ?? 550) : 1;
    const unit = waves ? 'λ' : 'nm';
    let errSeries = [];
    let rdSeries = [];
    if (s) {
      const a = s.design.diameter / 2;
      const rs = Array.from({ length: CURVE_POINTS }, (_, i) => (a * (i + 0.5)) / CURVE_POINTS);
      let target = null;
      try {
        target = api().surface_readings_mm(s.design.radius, s.design.conic, s.design.diameter, new Float64Array(0), new Float64Array(rs));
      } catch { target = null; }
      if (target) rdSeries.push({ xs: rs, ys: Array.from(target), colour: th.ink2, name: 'target', along: 'x' });
      if (m) {
        const rows = m.kind === 'csv' ? m.doc.rows : m.doc.zones;
        errSeries = [
          { xs: [0, a], ys: [0, 0], colour: th.ink2, name: 'target', along: 'x' },
          { xs: rows.map((r) => r.r_mm), ys: rows.map((r) => r.surface_error_nm * scale), colour: sourceColour(0, th.dark), name: 'measured', along: 'nearest', dots: true },
        ];
        const zr = s.zones.map((z) => z.r_mm);
        let measured = null;
        if (m.kind === 'readings') {
          measured = { xs: m.doc.zones.map((z) => z.r_mm), ys: m.doc.zones.map((z) => z.reading_mm) };
        } else {
          try {
            const ys = api().surface_readings_mm(s.design.radius, s.design.conic, s.design.diameter, m.knots, new Float64Array(zr));
            measured = { xs: zr, ys: Array.from(ys) };
          } catch { measured = null; }
        }
        if (measured) rdSeries.push({ ...measured, colour: sourceColour(0, th.dark), name: 'measured', along: 'nearest', dots: true });
      }
    }
    this.err.set({
      title: 'Surface error across the radius (+ proud of the target; dots: measured)',
      x: { label: 'radius', unit: 'mm', include: [0] },
      y: { label: 'surface error', unit, include: [0], minSpan: waves ? 0.02 : 10 },
      series: errSeries,
      empty,
    }, th);
    this.rd.set({
      title: 'Moving-source zone readings (line: target; dots: measured)',
      x: { label: 'zone radius', unit: 'mm', include: [0] },
      y: { label: 'reading', unit: 'mm', include: [0] },
      series: m ? rdSeries : [],
      empty,
    }, th);
  }
}
