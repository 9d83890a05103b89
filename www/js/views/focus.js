// Focus view: RMS spot radius against screen shift with the best focus
// marked, and the longitudinal aberration of a meridional fan (where each
// ray crosses the screen's axis against its height in the pupil).

import { sourceColour } from '../palette.js';
import { fmtNum, fmtPos, fmtSpot, sceneScale } from '../format.js';
import { LinePlot } from './plot.js';
import { chosen, figureList, unpair, viewSide, visible } from './data.js';

/** Meridional rays of the longitudinal aberration curve (odd: one on axis). */
export const LONGITUDINAL_RAYS = 101;

export class FocusView {
  constructor() {
    this.id = 'focus';
    this.label = 'Focus';
    this.title = 'Through-focus spot size with the best focus, and the longitudinal aberration';
    this.laKey = '';
    this.la = null;
  }

  mount(el, app) {
    this.app = app;
    this.panel = el;
    el.classList.add('view', 'view-two');
    this.tf = new LinePlot('Through-focus curve: RMS spot radius against screen shift');
    this.tf.canvas.id = 'focus-canvas';
    this.lp = new LinePlot('Longitudinal aberration: axial crossing against pupil height');
    this.lp.canvas.id = 'longitudinal-canvas';
    const { side, picker, note } = viewSide(app);
    this.picker = picker;
    this.note = note;
    this.figs = document.createElement('div');
    const help = document.createElement('p');
    help.className = 'muted small';
    help.textContent = 'Shifts and crossings are along the screen’s axis: positive toward the arriving light, '
      + 'negative beyond the screen. The through-focus curve moves the screen plane along straight ray '
      + 'paths; the longitudinal aberration traces a fan of rays across the pupil.';
    side.append(this.figs, help);
    el.append(this.tf.el, this.lp.el, side);
  }

  /** The longitudinal curve of the chosen pair, traced once per layout. */
  longitudinal(screen, source) {
    const app = this.app;
    const key = `${app.traceGen}|${screen}|${source}`;
    if (key !== this.laKey) {
      this.laKey = key;
      let p = null;
      try {
        p = app.session.longitudinal_curve(screen, source, LONGITUDINAL_RAYS) ?? null;
      } catch { p = null; }
      // Pairs are [pupil height, crossing]; the plot puts the crossing across.
      const u = p ? unpair(p) : null;
      this.la = u ? { xs: u.ys, ys: u.xs, unit: app.session.pupil_unit(source) } : null;
    }
    return this.la;
  }

  update() {
    if (!this.app || !visible(this.panel)) return;
    const app = this.app, th = app.theme;
    const c = chosen(app);
    this.picker.refresh(c.rows, c.row?.source);
    const colour = sourceColour(Math.max(0, c.source), th.dark);
    const scId = c.sc ? `screen ${c.sc.id}` : '';
    const empty = !c.res ? 'Not traced yet' : !c.sc ? 'No screen in this layout' : !c.row ? `No light reaches ${scId}` : `Too few rays reach ${scId} for a focus`;
    const p = c.pair;
    const best = p?.best ?? null;
    const airy = c.row?.airy_radius_um;

    // through focus
    const tf = p?.focus ? unpair(p.focus) : null;
    const marks = [{ kind: 'vline', x: 0, label: 'screen', row: 1 }];
    if (best) marks.push({ kind: 'point', x: best[0], y: best[1], label: `best focus ${fmtPos(best[0], sceneScale(app.layout), 4)}\u202fmm`, colour: th.ink });
    if (airy > 0) marks.push({ kind: 'hline', y: airy, label: `Airy radius ${fmtSpot(airy)}` });
    this.tf.set({
      title: `RMS spot radius through focus — ${scId}${c.row ? `, ${c.row.source}` : ''}`,
      x: { label: 'screen shift', unit: 'mm', minSpan: 0.02 },
      y: { label: 'RMS radius', unit: 'µm', include: [0] },
      series: tf ? [{ ...tf, colour, name: 'RMS radius', along: 'x' }] : [],
      marks,
      empty: best === null && tf === null && c.row ? `${empty} (the rays arrive parallel)` : empty,
    }, th);

    // longitudinal aberration
    const la = c.row && c.source >= 0 ? this.longitudinal(c.screen, c.source) : null;
    const unitName = la?.unit === 'deg' ? '°' : 'mm';
    const laMarks = [{ kind: 'vline', x: 0, label: 'screen', row: 1 }];
    if (best) laMarks.push({ kind: 'vline', x: best[0], label: 'best focus', colour: th.ink, dash: [2, 3] });
    this.lp.set({
      title: `Longitudinal aberration — ${scId}${c.row ? `, ${c.row.source}` : ''}`,
      x: { label: 'axial crossing', unit: 'mm', minSpan: 0.02 },
      y: { label: la?.unit === 'deg' ? 'angle in cone' : 'pupil height', unit: unitName },
      series: la ? [{ xs: la.xs, ys: la.ys, colour, name: 'crossing', along: 'nearest', dots: la.xs.length < 40 }] : [],
      marks: laMarks,
      empty: c.row ? `No meridional ray crosses the axis of ${scId}` : empty,
    }, th);

    // figures
    let laSpread = null;
    if (la?.xs.length) {
      let lo = Infinity, hi = -Infinity;
      for (const x of la.xs) { lo = Math.min(lo, x); hi = Math.max(hi, x); }
      laSpread = hi - lo;
    }
    const r = c.row;
    // The statistics table's formatter: the same value reads the same here.
    const scale = sceneScale(app.layout);
    const mm = (v) => `${fmtPos(v, scale, 4)}\u202fmm`;
    this.figs.replaceChildren(r ? figureList([
      { key: 'best_focus_shift_mm', label: 'best focus shift', value: best?.[0] ?? null,
        text: best ? mm(best[0]) : 'none (rays arrive parallel)',
        title: 'Screen shift along its axis where the RMS spot is smallest (positive: toward the arriving light)' },
      { key: 'rms_radius_at_best_um', label: 'RMS radius at best focus', value: best?.[1] ?? null, text: best ? fmtSpot(best[1]) : '–' },
      { key: 'rms_radius_um', label: 'RMS radius on the screen', value: r.rms_radius_um, text: fmtSpot(r.rms_radius_um) },
      { key: 'f_number', label: 'working f-number', value: r.f_number, text: r.f_number ? `f/${fmtNum(r.f_number, 3)}` : '–',
        title: '1 / (2 sin θ), θ the widest angle of the arriving cone' },
      { key: 'airy_radius_um', label: 'Airy radius', value: airy ?? null, text: airy ? fmtSpot(airy) : '–', title: '1.22 λ N' },
      { key: 'longitudinal_spread_mm', label: 'longitudinal spread', value: laSpread,
        text: laSpread === null ? '–' : mm(laSpread),
        title: 'Distance between the nearest and farthest axial crossings of the meridional fan' },
    ]) : '');
    this.note.textContent = c.res?.kind === 'preview' ? 'preview trace' : '';
  }

  /** Rows for CSV export: { name, header, rows } or null. */
  csv(which) {
    const c = chosen(this.app);
    if (!c.row) return null;
    if (which === 'focus') {
      const tf = c.pair?.focus ? unpair(c.pair.focus) : null;
      if (!tf) return null;
      return { name: `${c.sc.id}-${c.row.source}-through-focus`, header: 'shift_mm,rms_radius_um', rows: [...tf.xs].map((x, i) => `${x},${tf.ys[i]}`) };
    }
    const la = this.longitudinal(c.screen, c.source);
    if (!la) return null;
    return { name: `${c.sc.id}-${c.row.source}-longitudinal`, header: `pupil_height_${la.unit},axial_crossing_mm`, rows: [...la.ys].map((y, i) => `${y},${la.xs[i]}`) };
  }
}
