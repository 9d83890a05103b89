// Energy view: the encircled-energy curve about the spot centroid with the
// EE50 and EE80 radii marked, the Airy radius for comparison, and the
// diffraction-limited verdict with the criterion it rests on.

import { sourceColour } from '../palette.js';
import { denoise, fmtNum, fmtSpot, withUnit } from '../format.js';
import { LinePlot } from './plot.js';
import { chosen, figureList, unpair, viewSide, visible } from './data.js';

/** Maréchal criterion: RMS wavefront error ≤ λ/14 (Born & Wolf, Principles of Optics). */
export const MARECHAL_WAVES = 1 / 14;

export class EnergyView {
  constructor() {
    this.id = 'energy';
    this.label = 'Energy';
    this.title = 'Encircled energy with EE50, EE80, the Airy radius and the diffraction-limited verdict';
  }

  mount(el, app) {
    this.app = app;
    this.panel = el;
    el.classList.add('view');
    this.plot = new LinePlot('Encircled energy against radius');
    this.plot.canvas.id = 'energy-canvas';
    const { side, picker, note } = viewSide(app);
    this.picker = picker;
    this.note = note;
    this.verdict = document.createElement('div');
    this.verdict.id = 'energy-verdict';
    this.figs = document.createElement('div');
    side.append(this.verdict, this.figs);
    el.append(this.plot.el, side);
  }

  update() {
    if (!this.app || !visible(this.panel)) return;
    const app = this.app, th = app.theme;
    const c = chosen(app);
    this.picker.refresh(c.rows, c.row?.source);
    const scId = c.sc ? `screen ${c.sc.id}` : '';
    const empty = !c.res ? 'Not traced yet' : !c.sc ? 'No screen in this layout' : !c.row ? `No light reaches ${scId}` : `Too few rays reach ${scId}`;
    const ee = c.pair?.energy ? unpair(c.pair.energy, 100) : null;
    const radii = c.pair?.ee ?? null;
    const r = c.row;
    const airy = r?.airy_radius_um;
    const marks = [];
    if (radii) {
      marks.push({ kind: 'point', x: radii[0], y: 50, label: `EE50 ${fmtSpot(radii[0])}`, colour: th.ink });
      marks.push({ kind: 'point', x: radii[1], y: 80, label: `EE80 ${fmtSpot(radii[1])}`, colour: th.ink });
      marks.push({ kind: 'hline', y: 50, dash: [2, 4] }, { kind: 'hline', y: 80, dash: [2, 4] });
    }
    if (airy > 0 && ee) marks.push({ kind: 'vline', x: airy, label: `Airy radius ${fmtSpot(airy)}` });
    this.plot.set({
      title: `Encircled energy about the centroid — ${scId}${r ? `, ${r.source}` : ''}`,
      x: { label: 'radius', unit: 'µm', include: [0, airy > 0 ? 1.15 * airy : 0], minSpan: 1, min: 0 },
      y: { label: 'encircled energy', unit: '%', min: 0, max: 104 },
      series: ee ? [{ ...ee, colour: sourceColour(Math.max(0, c.source), th.dark), name: 'encircled energy', along: 'x' }] : [],
      marks,
      empty,
    }, th);

    // verdict: Strehl estimate and the Maréchal criterion
    this.verdict.replaceChildren();
    if (r) {
      const box = document.createElement('div');
      box.className = 'verdict';
      const head = document.createElement('p');
      head.className = 'verdict-head';
      const sigma = r.wavefront_rms_waves;
      const lambda = app.layout.wavelength_nm;
      if (typeof sigma === 'number' && typeof r.strehl_estimate === 'number') {
        const ok = r.diffraction_limited === true;
        box.dataset.verdict = ok ? 'limited' : 'not-limited';
        head.textContent = ok ? 'Diffraction limited' : 'Not diffraction limited';
        const p1 = document.createElement('p');
        p1.textContent = `Strehl ≈ exp(−(2πσ)²) = ${fmtNum(r.strehl_estimate, 3)}, with σ = ${withUnit(sigma, 'waves', 3)} RMS wavefront error at λ = ${fmtNum(lambda, 4)} nm (piston, tilt and defocus removed: the best diffraction focus).`;
        const p2 = document.createElement('p');
        p2.textContent = `Criterion (Maréchal): σ ≤ λ/14 = ${fmtNum(MARECHAL_WAVES, 3)} waves, i.e. Strehl ≥ ${fmtNum(Math.exp(-((2 * Math.PI * MARECHAL_WAVES) ** 2)), 2)} in this form. `
          + `σ is ${fmtNum(denoise(sigma, 'waves') / MARECHAL_WAVES, 3)} × the limit.`;
        box.append(head, p1, p2);
      } else {
        box.dataset.verdict = 'undefined';
        head.textContent = 'No diffraction verdict';
        const p1 = document.createElement('p');
        const ext = app.layout.sources.find((s) => s.id === r.source)?.sun_half_angle_mrad > 0;
        p1.textContent = ext
          ? 'The sun’s disk is an extended source with no single wavefront; the Strehl estimate and the Maréchal criterion apply to a point source (a star or a lamp).'
          : 'Too few rays reach the screen for a wavefront fit.';
        box.append(head, p1);
      }
      this.verdict.append(box);
    }
    this.figs.replaceChildren(r ? figureList([
      { key: 'ee50_radius_um', label: 'EE50 radius', value: radii?.[0] ?? null, text: radii ? fmtSpot(radii[0]) : '–', title: 'Radius about the centroid holding 50 % of the power on the screen' },
      { key: 'ee80_radius_um', label: 'EE80 radius', value: radii?.[1] ?? null, text: radii ? fmtSpot(radii[1]) : '–', title: 'Radius about the centroid holding 80 % of the power on the screen' },
      { key: 'airy_radius_um', label: 'Airy radius', value: airy ?? null, text: airy ? fmtSpot(airy) : '–', title: 'First dark ring of a perfect focus, 1.22 λ N' },
      { key: 'ee80_over_airy', label: 'EE80 / Airy radius', value: radii && airy ? radii[1] / airy : null, text: radii && airy ? fmtNum(denoise(radii[1], 'µm') / airy, 3) : '–',
        title: 'Geometric EE80 radius against the diffraction spot; well below 1 means diffraction, not the geometry, sets the spot size' },
      { key: 'strehl_estimate', label: 'Strehl estimate', value: r.strehl_estimate, text: r.strehl_estimate === null ? '–' : fmtNum(r.strehl_estimate, 4) },
      { key: 'wavefront_rms_waves', label: 'wavefront RMS', value: r.wavefront_rms_waves, text: r.wavefront_rms_waves === null ? '–' : withUnit(r.wavefront_rms_waves, 'waves', 4) },
      { key: 'wavefront_pv_waves', label: 'wavefront P-V', value: r.wavefront_pv_waves, text: r.wavefront_pv_waves === null ? '–' : withUnit(r.wavefront_pv_waves, 'waves', 4) },
    ]) : '');
    this.note.textContent = c.res?.kind === 'preview' ? 'preview trace' : '';
  }

  csv() {
    const c = chosen(this.app);
    const ee = c.pair?.energy ? unpair(c.pair.energy) : null;
    if (!ee) return null;
    return { name: `${c.sc.id}-${c.row.source}-encircled-energy`, header: 'radius_um,encircled_fraction', rows: [...ee.xs].map((x, i) => `${x},${ee.ys[i]}`) };
  }
}
