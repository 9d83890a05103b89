// Selection and items, mixed into the workbench (app.js): select, add,
// delete, duplicate and flip mirrors, screens and sources.

import { niceStep, roundTo } from './editor.js';
import { $ } from './dom.js';

/** The App's selection and item methods. */
export const Items = {
  select(sel) {
    const same = (a, b) => (a === b) || (a && b && a.list === b.list && a.index === b.index);
    if (same(sel, this.selection)) return;
    this.selection = sel;
    if (sel && sel.list === 'elements' && this.layout.elements[sel.index]?.kind === 'screen') {
      const idx = this.session.screen_index(this.layout.elements[sel.index].id);
      if (idx !== undefined) this.setSpotScreen(idx);
    }
    this.props.render();
    this.requestDraw();
  },

  uniqueId(base) {
    const ids = new Set([...this.layout.elements, ...this.layout.sources].map((x) => x.id));
    for (let n = 1; ; n++) if (!ids.has(`${base}-${n}`)) return `${base}-${n}`;
  },

  /** Adds a new item of `tool` kind at world point p, sized for zoom k. */
  addItem(tool, p, k) {
    const size = niceStep(150 / k);
    let list, item;
    if (tool === 'mirror') {
      list = 'elements';
      item = { kind: 'mirror', id: this.uniqueId('mirror'), vertex: p, axis_deg: 180, form: 'revolved',
        profile: { radius: 8 * size, conic: 0 }, aperture: { diameter: size } };
    } else if (tool === 'screen') {
      list = 'elements';
      item = { kind: 'screen', id: this.uniqueId('screen'), center: p, axis_deg: 0, size: niceStep(size / 5), shape: 'square' };
    } else if (tool === 'beam' || tool === 'sun') {
      list = 'sources';
      item = { kind: 'beam', id: this.uniqueId(tool === 'sun' ? 'sun' : 'beam'), center: p, direction_deg: 0,
        diameter: size, rays: 20000, pattern: tool === 'sun' ? 'random' : 'hex',
        sun_half_angle_mrad: tool === 'sun' ? 4.65 : 0, irradiance_w_m2: 1000 };
    } else if (tool === 'lamp') {
      list = 'sources';
      item = { kind: 'point', id: this.uniqueId('lamp'), center: p, direction_deg: 0,
        cone_half_angle_deg: 20, rays: 20000, pattern: 'random', power_w: 100 };
    } else return;
    const err = this.edit((L) => { L[list].push(item); });
    if (err) { this.message(`Could not add the ${tool}: ${err}`, 'error', { input: true }); return; }
    this.select({ list, index: this.layout[list].length - 1 });
  },

  addFreeform({ vertex, axis_deg, form = 'extruded', knots, diameter, offset }) {
    const item = { kind: 'mirror', id: this.uniqueId('freeform'), vertex, axis_deg, form,
      ...(form === 'extruded' ? { length: diameter } : {}), profile: { radius: null, departure: knots }, aperture: { diameter, offset } };
    const err = this.edit((L) => { L.elements.push(item); });
    if (err) { this.message(`Could not make the free-form mirror: ${err}`, 'error', { input: true }); return; }
    this.select({ list: 'elements', index: this.layout.elements.length - 1 });
  },

  deleteSelected() {
    const sel = this.selection;
    if (!sel) return;
    this.selection = null;
    const err = this.edit((L) => { L[sel.list].splice(sel.index, 1); });
    if (err) this.message(err, 'error', { input: true });
    this.props.render();
  },

  /**
   * Turns the selected mirror's reflective side over without moving its
   * surface: the frame turns 180° (local y and z change sign), so the sag
   * becomes z'(y') = −z(−y'): R, aspheric terms and spline heights change
   * sign, extruded knots mirror in ρ, and the aperture offset changes sign.
   */
  flipSelected() {
    const sel = this.selection;
    const m = sel && this.layout[sel.list][sel.index];
    if (!m || m.kind !== 'mirror') return;
    const err = this.edit((L) => {
      const it = L.elements[sel.index];
      const p = it.profile;
      it.axis_deg = roundTo((((it.axis_deg + 180) % 360) + 360) % 360, 1e-9);
      if (typeof p.radius === 'number') p.radius = -p.radius;
      if (Array.isArray(p.aspheric)) p.aspheric = p.aspheric.map((a) => -a);
      if (Array.isArray(p.departure)) {
        p.departure = it.form === 'extruded'
          ? p.departure.map(([r, dz]) => [-r, -dz]).reverse()
          : p.departure.map(([r, dz]) => [r, -dz]);
      }
      if (it.aperture.offset) it.aperture.offset = -it.aperture.offset;
    });
    if (err) this.message(err, 'error', { input: true });
  },

  duplicateSelected() {
    const sel = this.selection;
    if (!sel) return;
    const item = structuredClone(this.layout[sel.list][sel.index]);
    item.id = this.uniqueId(item.id.replace(/-\d+$/, ''));
    const st = this.editor.step() * 20;
    const key = item.kind === 'mirror' ? 'vertex' : 'center';
    item[key] = [roundTo(item[key][0] - st, st / 20), roundTo(item[key][1] + st, st / 20)];
    const err = this.edit((L) => { L[sel.list].push(item); });
    if (err) { this.message(err, 'error', { input: true }); return; }
    this.select({ list: sel.list, index: this.layout[sel.list].length - 1 });
  },

  toolChanged(tool) {
    for (const b of document.querySelectorAll('#toolbox [data-tool]')) b.classList.toggle('active', b.dataset.tool === tool);
  },
};
