// Designers view: a two-mirror telescope (Cassegrain and Gregorian
// families) from its first-order layout, and an off-axis paraboloid segment
// with its feed. Each opens its generated layout in the editor (undoable).
// Figures from `two_mirror_json` and `off_axis_json` (the documents of
// `catoptric design … --json`).

import { api } from '../wasm.js';
import { Form, button, csvText, debounce, errText, figureTable, heading, para, pick, saveCsv, visible } from './common.js';

const TYPES = [
  ['cassegrain', 'classical Cassegrain'],
  ['ritchey-chretien', 'Ritchey–Chrétien'],
  ['dall-kirkham', 'Dall–Kirkham'],
  ['gregorian', 'classical Gregorian'],
  ['aplanatic-gregorian', 'aplanatic Gregorian'],
];

const TWO_MIRROR_FIGURES = [
  { key: 'primary.radius_mm', label: 'primary radius', title: 'Vertex radius of the primary (concave +), mm' },
  { key: 'primary.conic', label: 'primary conic', title: 'Conic constant of the primary' },
  { key: 'primary.hole_mm', label: 'primary hole', title: 'Diameter of the central hole the converging beam passes through, mm' },
  { key: 'secondary.radius_mm', label: 'secondary radius', title: 'Vertex radius of the secondary (concave +, convex −), mm' },
  { key: 'secondary.conic', label: 'secondary conic', title: 'Conic constant of the secondary' },
  { key: 'secondary.diameter_mm', label: 'secondary diameter', title: 'Secondary size that passes the on-axis beam and the beam at the field angle unvignetted, mm' },
  { key: 'separation_mm', label: 'separation', title: 'Distance between the mirror vertices, mm' },
  { key: 'magnification', label: 'secondary magnification m', unit: '', title: 'F/f₁; negative for the Gregorian family (the secondary inverts the prime-focus image)' },
  { key: 'back_focus_mm', label: 'back focus', title: 'Focus behind the primary vertex, mm' },
  { key: 'focal_ratio', label: 'focal ratio, f/', unit: '', title: 'System focal length over the diameter' },
  { key: 'obstruction_pct', label: 'obstruction', unit: '% of D', title: 'Secondary diameter as a fraction of the primary diameter (linear obstruction)' },
];

const OFF_AXIS_FIGURES = [
  { key: 'off_axis_angle_deg', label: 'off-axis angle', title: 'Angle between the parent axis and the ray from the segment centre to the focus, 2 atan(H/(2F))' },
  { key: 'reflected_focal_mm', label: 'reflected focal length', title: 'Distance from the segment centre to the focus, F + H²/(4F), mm' },
  { key: 'focal_ratio', label: 'focal ratio, f/', unit: '', title: 'Reflected focal length over the segment diameter' },
  { key: 'segment_tilt_deg', label: 'segment tilt', title: 'Lean of the segment’s central normal from the parent axis (half the off-axis angle)' },
  { key: 'segment_center_mm', label: 'segment centre [y, z]', title: 'Centre of the segment on the surface, layout coordinates, mm' },
  { key: 'segment_depth_mm', label: 'segment depth', title: 'Sag difference between the far and near edges of the segment, mm' },
  { key: 'parent_radius_mm', label: 'parent vertex radius', title: 'Vertex radius of the parent paraboloid, 2F (conic −1), mm' },
  { key: 'feed.position_mm', label: 'feed position [y, z]', title: 'Feed (receiver, lamp) at the parent focus, layout coordinates, mm' },
  { key: 'feed.pointing_deg', label: 'feed pointing', title: 'Direction from the feed to the segment centre as a layout angle (from +z toward +y)' },
  { key: 'feed.rim_angles_deg', label: 'rim seen from the feed', title: 'Angles of the segment’s near and far rim from the parent axis, seen from the feed, in the drawing plane' },
  { key: 'feed.bisector_off_axis_deg', label: 'feed bisector', title: 'Feed direction that lights both rims evenly in the drawing plane, from the parent axis' },
  { key: 'feed.half_angle_deg', label: 'feed half-angle', title: 'Half the angle the segment subtends at the feed, in the drawing plane' },
];

/** One designer card: form, figures, open-in-editor and CSV buttons. */
class Card {
  constructor(parent, { id, title, fields, figures, run, what, note }) {
    this.id = id;
    this.figures = figures;
    this.runFn = run;
    this.what = what;
    this.doc = null;
    const card = document.createElement('div');
    card.className = 'dview-col dcard';
    card.id = id;
    heading(card, title);
    const body = document.createElement('div');
    body.className = 'dcard-body';
    const left = document.createElement('div');
    const go = debounce(() => this.compute());
    this.form = new Form(left, { id: `${id}-form`, onChange: () => { this.out.dataset.state = 'pending'; go(); } });
    for (const f of fields) this.form.field(f);
    this.form.finish();
    const tools = document.createElement('div');
    tools.className = 'row-buttons';
    this.openBtn = button(tools, 'Open in editor', 'Open the generated layout (mirrors, a screen at focus, a star on axis) in the editor; Undo brings back your layout', () => this.open());
    this.openBtn.dataset.open = id;
    this.csvBtn = button(tools, 'Export CSV', 'Download these figures as CSV (one line per figure)', () => this.exportCsv());
    left.append(tools);
    if (note) para(left, note);
    this.out = document.createElement('div');
    this.out.className = 'dcard-out';
    this.out.dataset.state = 'none';
    body.append(left, this.out);
    card.append(body);
    parent.append(card);
  }

  compute() {
    try {
      this.doc = this.runFn(this.form);
    } catch (e) {
      this.doc = null;
      this.form.showError(errText(e));
      this.out.dataset.state = 'error';
      this.out.replaceChildren();
      para(this.out, 'Correct the marked field; the design comes back as soon as the input is valid.');
      this.openBtn.disabled = this.csvBtn.disabled = true;
      return;
    }
    this.form.clearErrors();
    this.out.replaceChildren(figureTable(this.figures, this.doc, { id: `${this.id}-figures`, caption: this.doc.layout.name }));
    // The core's warnings on impossible or extreme input, above the figures.
    for (const w of this.doc.warnings ?? []) {
      const p = document.createElement('p');
      p.className = 'design-warning';
      p.setAttribute('role', 'alert');
      const b = document.createElement('strong');
      b.textContent = 'Check the input. ';
      p.append(b, w);
      this.out.prepend(p);
    }
    this.out.dataset.state = 'ok';
    this.openBtn.disabled = this.csvBtn.disabled = false;
  }

  open() {
    if (!this.doc) return;
    if (this.app.loadText(JSON.stringify(this.doc.layout), this.what)) {
      this.app.message(`Opened “${this.doc.layout.name}” in the editor. Undo brings back your previous layout.`, 'info');
    }
  }

  exportCsv() {
    if (!this.doc) return;
    const rows = this.figures.map((f) => ({ figure: f.key, value: pick(this.doc, f.key), unit: f.unit ?? (f.key.endsWith('_mm') ? 'mm' : f.key.endsWith('_deg') ? 'deg' : '') }));
    saveCsv(this.app, this.id, csvText(['figure', 'value', 'unit'], rows));
  }
}

export class DesignersView {
  constructor() {
    this.id = 'designers';
    this.label = 'Designers';
    this.title = 'Two-mirror telescope and off-axis paraboloid designers';
  }

  mount(el, app) {
    this.app = app;
    this.el = el;
    el.classList.add('dview', 'dview-designers');
    this.two = new Card(el, {
      id: 'two-mirror',
      title: 'Two-mirror telescope',
      what: 'the two-mirror design',
      fields: [
        { name: 'type', label: 'type', type: 'select', options: TYPES, title: 'Family: Cassegrain types have a convex secondary before the prime focus, Gregorian types a concave one after it' },
        { name: 'diameter', label: 'diameter D', unit: 'mm', value: '300', title: 'Clear diameter of the primary, mm' },
        { name: 'primary_focal', label: 'primary focal f₁', unit: 'mm', value: '1200', title: 'Focal length of the primary, mm' },
        { name: 'focal', label: 'system focal F', unit: 'mm', value: '3200', title: 'Focal length of the telescope, mm (positive for every type)' },
        { name: 'back_focus', label: 'back focus B', unit: 'mm', value: '250', title: 'Focus distance behind the primary vertex, mm (positive behind it)' },
        { name: 'field_deg', label: 'field angle', unit: '°', value: '0', title: 'Field angle the secondary and the hole must pass unvignetted; also adds an off-axis star, degrees' },
      ],
      figures: TWO_MIRROR_FIGURES,
      note: 'Radii are signed as in layouts: concave +, convex −. Closed forms from the first-order layout; open the layout to trace it.',
      run: (f) => {
        const d = JSON.parse(api().two_mirror_json(f.text('type'), f.num('diameter'), f.num('primary_focal'), f.num('focal'), f.num('back_focus'), f.num('field_deg')));
        d.obstruction_pct = 100 * d.obstruction_fraction;
        return d;
      },
    });
    this.two.form.set('type', 'ritchey-chretien');
    this.off = new Card(el, {
      id: 'off-axis',
      title: 'Off-axis paraboloid',
      what: 'the off-axis design',
      fields: [
        { name: 'parent_focal', label: 'parent focal F', unit: 'mm', value: '500', title: 'Focal length of the parent paraboloid, mm' },
        { name: 'offset', label: 'offset H', unit: 'mm', value: '200', title: 'Distance of the segment centre from the parent axis, mm' },
        { name: 'diameter', label: 'diameter D', unit: 'mm', value: '150', title: 'Diameter of the segment, mm' },
      ],
      figures: OFF_AXIS_FIGURES,
      note: 'A segment of a paraboloid: light parallel to the parent axis meets at the parent focus, which is clear of the incoming beam when the offset H is at least D/2. The same geometry places the feed of an offset dish.',
      run: (f) => JSON.parse(api().off_axis_json(f.num('parent_focal'), f.num('offset'), f.num('diameter'))),
    });
    const caution = document.createElement('p');
    caution.className = 'caution inline';
    caution.textContent = 'A dish or segment turned toward the sun concentrates it at the feed: it can burn skin, start fires and cause permanent eye injury in an instant. Never look along the beam; check real installations against local codes and with qualified people.';
    this.off.out.parentElement.firstChild.append(caution);
    this.two.app = this.off.app = app;
  }

  update() {
    if (!visible(this.el)) return;
    for (const c of [this.two, this.off]) if (c.out.dataset.state === 'none') c.compute();
  }
}
