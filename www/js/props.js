// The property sheet: a form for the selected element, source, or (with
// nothing selected) the layout itself. Every field shows its unit and a
// hover explanation; a value the session refuses stays in the field, marked,
// with the session's message under it, while the layout keeps its last
// valid state.

import { fmtInt, fmtLength, fmtNum, withUnit } from './format.js';
import { solveGroup, varyToggle } from './solve.js';
import { plainError } from './messages.js';
import { dayDate } from './views/day.js';

/** Dotted field path as the session reports it: elements[0].profile.conic. */
function pathText(path) {
  return path.reduce((s, p) => (typeof p === 'number' ? `${s}[${p}]` : s ? `${s}.${p}` : p), '');
}

function getAt(obj, path) {
  let o = obj;
  for (const p of path) {
    if (o === null || o === undefined) return undefined;
    o = o[p];
  }
  return o;
}

function setAt(obj, path, value) {
  let o = obj;
  for (let i = 0; i < path.length - 1; i++) {
    if (o[path[i]] === null || o[path[i]] === undefined) o[path[i]] = typeof path[i + 1] === 'number' ? [] : {};
    o = o[path[i]];
  }
  o[path[path.length - 1]] = value;
}

const PATTERNS = [['hex', 'hexagonal'], ['grid', 'square grid'], ['random', 'quasi-random']];

export class Props {
  constructor(form, title, delBtn, app) {
    this.form = form;
    this.title = title;
    this.delBtn = delBtn;
    this.app = app;
    this.fields = [];
    this.curveMode = new Map(); // element id -> 'radius' | 'focal' | 'flat'
    form.addEventListener('submit', (e) => e.preventDefault());
  }

  /** Rebuilds the form for the current selection. */
  render() {
    this.form.replaceChildren();
    this.fields = [];
    const sel = this.app.selection;
    const L = this.app.layout;
    if (!sel) {
      this.title.textContent = 'Layout';
      this.delBtn.hidden = true;
      this.layoutForm(L);
      solveGroup(this.form, this.app, () => this.render());
      return;
    }
    const item = L[sel.list][sel.index];
    this.delBtn.hidden = false;
    const base = [sel.list, sel.index];
    const kindName = item.kind === 'mirror'
      ? (item.profile.departure ? 'Free-form mirror' : 'Mirror')
      : item.kind === 'screen' ? 'Screen'
        : item.kind === 'point' ? 'Lamp'
          : item.sun_half_angle_mrad > 0 ? 'Sun' : 'Beam';
    this.title.textContent = `${kindName} “${item.id}”`;
    this.title.title = `${kindName} ${item.id}`;
    if (item.kind === 'mirror') this.mirrorForm(item, base, sel.index);
    else if (item.kind === 'screen') this.screenForm(item, base);
    else if (item.kind === 'beam') this.beamForm(item, base);
    else this.lampForm(item, base);
    solveGroup(this.form, this.app, () => this.render());
  }

  /** Updates shown values after an edit made elsewhere (drawing, undo). */
  refresh() {
    const sel = this.app.selection;
    const key = sel ? `${sel.list}:${sel.index}:${this.app.layout[sel.list][sel.index]?.kind}` : 'layout';
    if (key !== this.renderedKey) { this.renderedKey = key; this.render(); return; }
    for (const f of this.fields) {
      if (document.activeElement === f.input || f.invalid) continue;
      f.show();
    }
    for (const d of this.derived ?? []) d();
  }

  // ---- building blocks ----------------------------------------------------------
  group(legend) {
    const fs = document.createElement('fieldset');
    const lg = document.createElement('legend');
    lg.textContent = legend;
    fs.append(lg);
    this.form.append(fs);
    return fs;
  }

  /**
   * A field. spec: { label, unit, title, path (into the layout), type:
   * 'number' | 'int' | 'text' | 'select' | 'check' | 'textarea', options,
   * def (shown when absent), toValue/fromValue (display transforms),
   * errPath (path whose errors show here), after (called after a change) }.
   */
  field(parent, spec) {
    const row = document.createElement('div');
    row.className = 'field';
    const id = `f-${pathText(spec.path).replace(/[^a-z0-9]+/gi, '-')}${spec.suffix ?? ''}`;
    const label = document.createElement('label');
    label.htmlFor = id;
    label.textContent = spec.label;
    label.title = spec.title;
    let input;
    if (spec.type === 'select') {
      input = document.createElement('select');
      for (const [v, text] of spec.options) input.append(new Option(text, v));
    } else if (spec.type === 'textarea') {
      input = document.createElement('textarea');
      input.rows = 3;
      row.classList.add('wide');
    } else {
      input = document.createElement('input');
      input.type = spec.type === 'check' ? 'checkbox' : 'text';
      if (spec.type === 'number' || spec.type === 'int') input.inputMode = 'decimal';
      input.spellcheck = false;
      if (spec.type === 'text') input.className = 'text';
    }
    input.id = id;
    input.title = spec.title;
    input.dataset.path = pathText(spec.errPath ?? spec.path);
    const unit = document.createElement('span');
    unit.className = 'unit';
    unit.textContent = spec.unit ?? '';
    const err = document.createElement('div');
    err.className = 'field-error';
    err.hidden = true;
    // Text boxes and unit-less selects take the unit column too.
    if (spec.type === 'textarea' || spec.type === 'text' || (spec.type === 'select' && !spec.unit)) row.append(label, input, err);
    else row.append(label, input, unit, err);
    parent.append(row);
    if (spec.type === 'number') varyToggle(row, input.dataset.path, this.app, () => this.render());

    const f = {
      input, spec, invalid: false,
      show: () => {
        let v = getAt(this.app.layout, spec.path);
        if (v === undefined || v === null) v = spec.def;
        if (spec.toValue) v = spec.toValue(v);
        if (spec.type === 'check') input.checked = !!v;
        else if (spec.type === 'number') input.value = v === undefined || v === null ? '' : String(v);
        else input.value = v ?? '';
      },
      // `quiet`: only mark the field (its message shows under another one).
      setError: (msg, quiet = false) => {
        f.invalid = !!msg;
        row.classList.toggle('invalid', !!msg);
        err.hidden = !msg || quiet;
        err.textContent = quiet ? '' : msg || '';
        input.setAttribute('aria-invalid', msg ? 'true' : 'false');
      },
    };
    f.show();
    const commit = () => {
      let v;
      if (spec.type === 'check') v = input.checked;
      else if (spec.type === 'number' || spec.type === 'int') {
        const t = input.value.trim().replace(/\u2212/g, '-').replace(',', '.');
        if (t === '' && spec.allowEmpty) v = null;
        else {
          v = Number(t);
          if (t === '' || !Number.isFinite(v)) { f.setError(`${spec.label}: enter a number${spec.unit ? ` in ${spec.unit}` : ''}`); return; }
          if (spec.type === 'int' && !Number.isInteger(v)) { f.setError(`${spec.label}: enter a whole number`); return; }
        }
      } else v = input.value;
      if (spec.fromValue) v = spec.fromValue(v);
      const errText = this.app.edit((L) => {
        if (spec.apply) spec.apply(L, v);
        else setAt(L, spec.path, v);
      }, { coalesce: pathText(spec.path) });
      if (errText) this.showError(errText, f);
      else {
        for (const g of this.fields) if (g.invalid) { g.setError(null); if (g !== f) g.show(); }
        spec.after?.();
      }
    };
    input.addEventListener(spec.type === 'select' || spec.type === 'check' ? 'change' : 'input', commit);
    input.addEventListener('blur', () => { if (!f.invalid) f.show(); });
    this.fields.push(f);
    return f;
  }

  /**
   * Shows a session error once: under the field being edited (`fallback`),
   * naming the field it is about by its label when that is another one,
   * which is only marked.
   */
  showError(text, fallback) {
    const i = text.indexOf(': ');
    const path = i > 0 ? text.slice(0, i) : '';
    const msg = i > 0 ? text.slice(i + 2) : text;
    const target = this.fields.find((g) => g.input.dataset.path === path)
      ?? this.fields.find((g) => path.startsWith(`${g.input.dataset.path}[`) || path.startsWith(`${g.input.dataset.path}.`));
    if (target === fallback) fallback.setError(`${fallback.spec.label}: ${msg}`);
    else {
      target?.setError(msg, true);
      fallback.setError(target ? `${target.spec.label}: ${msg}` : plainError(text, this.app.layout));
    }
  }

  note(parent, text, cls = 'note') {
    const p = document.createElement('p');
    p.className = cls;
    p.textContent = text;
    parent.append(p);
    return p;
  }

  placement(parent, base, item, key, angleKey, angleLabel, angleTitle) {
    const pt = key === 'vertex' ? 'vertex' : 'centre';
    this.field(parent, { label: `${pt} y`, unit: 'mm', type: 'number', path: [...base, key, 0], title: `Height of the ${pt} above the axis line (y up)` });
    this.field(parent, { label: `${pt} z`, unit: 'mm', type: 'number', path: [...base, key, 1], title: `Position of the ${pt} along z (to the right)` });
    this.field(parent, { label: angleLabel, unit: '°', type: 'number', path: [...base, angleKey], title: angleTitle });
  }

  idField(parent, base) {
    this.field(parent, { label: 'id', type: 'text', path: [...base, 'id'], title: 'Name of this item; every element and source needs its own (it labels the statistics)' });
  }

  // ---- forms ----------------------------------------------------------------------
  layoutForm(L) {
    this.renderedKey = 'layout';
    const g = this.group('Layout');
    this.field(g, { label: 'name', type: 'text', path: ['name'], title: 'Name of the layout (also in the top strip)' });
    this.field(g, { label: 'wavelength', unit: 'nm', type: 'number', path: ['wavelength_nm'], title: 'Wavelength for diffraction figures (Airy radius, waves of wavefront error)' });
    this.field(g, { label: 'max bounces', unit: '', type: 'int', path: ['max_bounces'], title: 'A ray is stopped after this many reflections' });
    this.field(g, { label: 'notes', type: 'textarea', path: ['notes'], def: '', title: 'Free notes kept in the file' });
    const s = this.group('Contents');
    const nm = L.elements.filter((e) => e.kind === 'mirror').length;
    const ns = L.elements.length - nm;
    const rays = L.sources.reduce((a, x) => a + x.rays, 0);
    this.note(s, `${nm} mirror${nm === 1 ? '' : 's'}, ${ns} screen${ns === 1 ? '' : 's'}, ${L.sources.length} source${L.sources.length === 1 ? '' : 's'}; ${fmtInt(rays)} rays in a full trace.`);
    this.note(s, 'Click an item in the drawing to edit it, or add one with the toolbox on the left. Above 20\u202f000 rays (or with many bounces) the full trace runs in the background while a quicker preview follows your edits; a layout that could take minutes waits until you ask for it.');
    this.derived = [];
    this.siteForm(L);
  }

  /**
   * The site block: where the layout stands and which way it faces, for
   * the day view (the layout plane upright, +y up, +z toward the bearing),
   * and the date the day view sweeps (kept by the page, not in the file).
   */
  siteForm(L) {
    const g = this.group('Site (the sun through the day)');
    g.id = 'site-block';
    const on = !!L.site;
    this.field(g, { label: 'on the Earth', type: 'check', path: ['site', '__on'], suffix: '-on', toValue: () => on,
      title: 'Stand the layout plane upright at a place on the Earth, so the day view can move the sun',
      apply: (M, v) => {
        if (v) M.site = M.site ?? { latitude_deg: 45, longitude_deg: 0, z_bearing_deg: 180, elevation_m: 0 };
        else delete M.site;
      },
      after: () => this.render() });
    if (!on) return;
    this.field(g, { label: 'latitude', unit: '°', type: 'number', path: ['site', 'latitude_deg'], title: 'Latitude, degrees north (south negative), −90 to 90' });
    this.field(g, { label: 'longitude', unit: '°', type: 'number', path: ['site', 'longitude_deg'], title: 'Longitude, degrees east (west negative), −180 to 180; times are local standard time, round(longitude/15) hours from UTC' });
    this.field(g, { label: '+z faces', unit: '°', type: 'number', path: ['site', 'z_bearing_deg'], def: 0, title: 'Compass bearing the drawing\'s +z (to the right) points to, degrees clockwise from north; +y is up' });
    this.field(g, { label: 'elevation', unit: 'm', type: 'number', path: ['site', 'elevation_m'], def: 0, title: 'Height of the site above sea level' });
    const row = document.createElement('div');
    row.className = 'field';
    const lab = document.createElement('label');
    lab.htmlFor = 'f-day-date';
    lab.textContent = 'date';
    const input = document.createElement('input');
    input.type = 'date';
    input.id = 'f-day-date';
    input.value = dayDate(this.app);
    input.title = 'Date the day view sweeps (kept in the page, not in the layout file)';
    input.addEventListener('change', () => { if (input.value) { this.app.dayDate = input.value; this.app.drawer.update(); } });
    row.append(lab, input);
    g.append(row);
    this.note(g, 'Open the Day view in the analysis drawer to sweep this date.');
  }

  mirrorForm(m, base, ei) {
    const app = this.app;
    this.derived = [];
    const g0 = this.group('Identity and placement');
    this.idField(g0, base);
    this.placement(g0, base, m, 'vertex', 'axis_deg', 'axis', 'Direction the reflective face looks (its axis), degrees from +z toward +y; the back absorbs');

    const gs = this.group('Surface');
    this.field(gs, { label: 'form', type: 'select', path: [...base, 'form'],
      options: [['revolved', 'revolved'], ['extruded', 'extruded']],
      title: 'Revolved: a surface of revolution about the axis. Extruded: the section swept along x (a trough or cylinder)',
      apply: (L, v) => {
        const it = L.elements[ei];
        it.form = v;
        if (v === 'extruded' && !(it.length > 0)) it.length = it.aperture.diameter;
        if (v === 'revolved') delete it.length;
      },
      after: () => this.render() });
    if (m.form === 'extruded') {
      this.field(gs, { label: 'length', unit: 'mm', type: 'number', path: [...base, 'length'], title: 'Extent of the extruded mirror along x (into the page)' });
    }
    const id = m.id;
    const mode = this.curveMode.get(id) ?? (m.profile.radius === null || m.profile.radius === undefined ? 'flat' : 'radius');
    this.field(gs, { label: 'curvature by', type: 'select', path: [...base, 'profile', '__mode'], suffix: '-mode',
      options: [['radius', 'radius R'], ['focal', 'focal length'], ['flat', 'flat']],
      title: 'How to give the vertex curvature',
      toValue: () => mode,
      apply: (L, v) => {
        const p = L.elements[ei].profile;
        delete p.__mode;
        if (v === 'flat') p.radius = null;
        else if (p.radius === null || p.radius === undefined) p.radius = 8 * L.elements[ei].aperture.diameter;
      },
      fromValue: (v) => { this.curveMode.set(id, v); return v; },
      after: () => this.render() });
    if (mode === 'radius') {
      this.field(gs, { label: 'radius R', unit: 'mm', type: 'number', path: [...base, 'profile', 'radius'],
        title: 'Vertex radius of curvature: positive = concave (centre on the reflective side), negative = convex' });
    } else if (mode === 'focal') {
      this.field(gs, { label: 'focal length f', unit: 'mm', type: 'number', path: [...base, 'profile', 'radius'], suffix: '-f',
        title: 'Paraxial focal length f = R/2: positive = concave (converging), negative = convex',
        toValue: (r) => (r === null || r === undefined ? '' : r / 2), fromValue: (f) => f * 2 });
    }
    if (mode !== 'flat') {
      this.field(gs, { label: 'conic K', unit: '', type: 'number', path: [...base, 'profile', 'conic'], def: 0,
        title: 'Conic constant: 0 sphere, −1 paraboloid, below −1 hyperboloid, between −1 and 0 prolate ellipsoid, above 0 oblate' });
    }
    const fb = document.createElement('div');
    fb.className = 'row-buttons';
    const flip = document.createElement('button');
    flip.type = 'button';
    flip.textContent = 'Turn the reflective side over';
    flip.title = 'Make the other face reflect, keeping the surface where it is (X)';
    flip.onclick = () => { app.flipSelected(); this.render(); };
    fb.append(flip);
    gs.append(fb);
    if (m.profile.aspheric?.length) this.note(gs, `${m.profile.aspheric.length} aspheric coefficient(s) A4… kept from the file.`);
    if (Array.isArray(m.profile.departure)) {
      this.note(gs, `Free-form departure: ${m.profile.departure.length} knots (drag them in the drawing).`);
      const rb = document.createElement('div');
      rb.className = 'row-buttons';
      const clear = document.createElement('button');
      clear.type = 'button';
      clear.textContent = 'Remove the departure';
      clear.title = 'Drop the free-form spline and keep only the conic (or flat) base';
      clear.onclick = () => { const e = app.edit((L) => { delete L.elements[ei].profile.departure; }); if (e) app.message(e); this.render(); };
      rb.append(clear);
      gs.append(rb);
    }

    const ga = this.group('Aperture');
    this.field(ga, { label: 'diameter', unit: 'mm', type: 'number', path: [...base, 'aperture', 'diameter'],
      title: m.form === 'extruded' ? 'Width of the strip across the section (local y)' : 'Diameter of the clear aperture' });
    this.field(ga, { label: 'off-axis offset', unit: 'mm', type: 'number', path: [...base, 'aperture', 'offset'], def: 0,
      title: 'Distance of the aperture centre from the axis (an off-axis segment of the parent surface)' });
    this.field(ga, { label: 'central hole', unit: 'mm', type: 'number', path: [...base, 'aperture', 'hole'], def: 0,
      title: 'Diameter (or width) of a central hole; 0 for none' });
    this.field(ga, { label: 'reflectivity', unit: '', type: 'number', path: [...base, 'reflectivity'], def: 1,
      title: 'Fraction of the power reflected (0 to 1)' });
    this.field(ga, { label: 'slope error σ', unit: 'mrad', type: 'number', path: [...base, 'slope_error_mrad'], def: 0,
      title: 'Gaussian error of the surface normal, σ per axis of the tangent plane (0: a perfect surface); the reflected ray strays by about twice this' });

    const info = this.note(ga, '', 'derived');
    const update = () => {
      const it = app.layout.elements[ei];
      if (!it || it.kind !== 'mirror') return;
      const r = it.profile.radius;
      const d = it.aperture.diameter;
      // The rim's sag from the surface on the axis, departure included (a
      // drawn free-form mirror's knots may put the axis point well off the
      // vertex); an extruded strip's farther edge.
      const off = it.aperture.offset ?? 0;
      const rims = it.form === 'extruded' ? [off - d / 2, off + d / 2] : [Math.abs(off) + d / 2];
      const s0 = app.session.sag_at(ei, 0);
      let sag;
      for (const rho of rims) {
        const v = app.session.sag_at(ei, rho);
        if (v !== undefined && s0 !== undefined && (sag === undefined || Math.abs(v - s0) > Math.abs(sag))) sag = v - s0;
      }
      const parts = [];
      if (r) parts.push(`f = ${withUnit(r / 2, 'mm')}`, `f/${fmtNum(Math.abs(r / 2) / d, 3)}`);
      if (sag !== undefined) parts.push(`edge sag ${fmtLength(sag)}`);
      info.textContent = parts.join(' · ');
      info.title = 'Paraxial focal length f = R/2, focal ratio f/D, and the sag at the edge of the aperture measured from the surface on the mirror axis (conic, aspheric terms and departure)';
    };
    update();
    this.derived.push(update);
  }

  screenForm(s, base) {
    this.derived = [];
    const g0 = this.group('Identity and placement');
    this.idField(g0, base);
    this.placement(g0, base, s, 'center', 'axis_deg', 'facing', 'Direction the sensitive face looks, degrees from +z toward +y; light arriving against this direction is recorded');
    const g = this.group('Screen');
    this.field(g, { label: 'size', unit: 'mm', type: 'number', path: [...base, 'size'], title: 'Side of a square screen or diameter of a round one' });
    this.field(g, { label: 'shape', type: 'select', path: [...base, 'shape'], options: [['square', 'square'], ['circle', 'round']], title: 'Outline of the screen' });
    this.field(g, { label: 'opaque', type: 'check', path: [...base, 'opaque'], def: false, title: 'An opaque screen stops the light it records; a clear one lets it pass (a virtual detector)' });
  }

  beamForm(b, base) {
    this.derived = [];
    const sun = b.sun_half_angle_mrad > 0;
    if (sun) this.sunCaution();
    const g0 = this.group('Identity and placement');
    this.idField(g0, base);
    this.placement(g0, base, b, 'center', 'direction_deg', 'direction', 'Direction the light travels, degrees from +z toward +y');
    this.field(g0, { label: 'out of plane', unit: '°', type: 'number', path: [...base, 'out_of_plane_deg'], def: 0, title: 'Tilt of the beam out of the drawing plane (a field angle across the page)' });
    const g = this.group('Beam');
    this.field(g, { label: 'diameter', unit: 'mm', type: 'number', path: [...base, 'diameter'], title: 'Diameter of the disk the rays start from, across the direction of travel' });
    this.field(g, { label: 'rays', unit: 'rays', type: 'int', path: [...base, 'rays'], title: 'Rays launched in a full 3D trace (the lattice may round this by a percent)' });
    this.field(g, { label: 'pattern', type: 'select', path: [...base, 'pattern'], options: PATTERNS, title: 'How start points fill the disk (quasi-random: a low-discrepancy sequence); all are deterministic, so results repeat exactly' });
    this.field(g, { label: 'sun half-angle', unit: 'mrad', type: 'number', path: [...base, 'sun_half_angle_mrad'], def: 0,
      title: 'Angular radius of an extended solar disk (4.65 mrad is the mean sun); 0 for a point-like star',
      after: () => this.render() });
    this.field(g, { label: 'irradiance', unit: 'W/m²', type: 'number', path: [...base, 'irradiance_w_m2'], def: 1000, title: 'Power per area across the beam (about 1000 W/m² for clear-sky sunlight)' });
    if (!sun) return;
    this.field(g, { label: 'sun shape', type: 'select', path: [...base, 'sunshape'], def: 'disk',
      options: [['disk', 'uniform'], ['limb', 'limb-darkened'], ['csr', 'circumsolar']],
      title: 'Radiance across the sun: uniform; darker toward the limb; or with the circumsolar aureole out to 43.6 mrad (Buie et al. 2003)',
      apply: (L, v) => {
        const it = L.sources[base[1]];
        it.sunshape = v;
        if (v === 'csr') it.csr = it.csr || 0.05; else delete it.csr;
      },
      after: () => this.render() });
    if (b.sunshape === 'csr') {
      this.field(g, { label: 'circumsolar ratio', unit: '', type: 'number', path: [...base, 'csr'], def: 0,
        title: 'Share of the sun\'s power that comes from the aureole around the disk, 0 to 0.4 (clear skies about 0.02 to 0.1)' });
    }
  }

  lampForm(p, base) {
    this.derived = [];
    const g0 = this.group('Identity and placement');
    this.idField(g0, base);
    this.placement(g0, base, p, 'center', 'direction_deg', 'direction', 'Central direction of the cone, degrees from +z toward +y');
    const g = this.group('Lamp');
    this.field(g, { label: 'cone half-angle', unit: '°', type: 'number', path: [...base, 'cone_half_angle_deg'], title: 'Half-angle of the cone the lamp radiates into (uniform per solid angle), up to 180°' });
    this.field(g, { label: 'rays', unit: 'rays', type: 'int', path: [...base, 'rays'], title: 'Rays launched in a full 3D trace' });
    this.field(g, { label: 'pattern', type: 'select', path: [...base, 'pattern'], options: PATTERNS, title: 'How directions fill the cone; all are deterministic' });
    this.field(g, { label: 'power', unit: 'W', type: 'number', path: [...base, 'power_w'], title: 'Power radiated into the cone' });
  }

  sunCaution() {
    const d = document.createElement('div');
    d.className = 'caution inline';
    d.setAttribute('role', 'note');
    d.textContent = 'Sunlight source. Focused sunlight burns skin, ignites materials and blinds in an instant; never look at the sun or its reflection through or toward optics. Real installations must follow local codes and qualified practice.';
    this.form.append(d);
  }
}
