// Tolerances view: how precisely the mirrors must be made and aligned.
// A seeded Monte Carlo of per-mirror decentre, tilt, despace, radius and
// conic errors (the document of `catoptric tolerance --json`, run in a
// worker with progress and cancel), a histogram of the RMS spot radius or
// the Strehl ratio over the trials, and the sensitivity table sorted by
// impact. No optics here: every number comes from the wasm module.

import { startRun } from '../tune.js';
import { Form, button, errText, figureTable, heading, para, rowTable } from './common.js';
import { prepareCanvas, ticks, tickLabel } from './plot.js';
import { sourceColour } from '../palette.js';

const FIELDS = [
  { name: 'decenter_mm', label: 'decentre ±', unit: 'mm', value: '0.05', title: 'Each mirror moves across its axis (local y, in the drawing plane) by up to this much, drawn uniformly' },
  { name: 'tilt_arcmin', label: 'tilt ±', unit: '′', value: '1', title: 'Each mirror turns about its vertex in the drawing plane by up to this many arcminutes' },
  { name: 'despace_mm', label: 'despace ±', unit: 'mm', value: '0.05', title: 'Each mirror moves along its own axis by up to this much (the mirror alone moves)' },
  { name: 'radius_pct', label: 'radius ±', unit: '% of |R|', value: '0.1', title: 'Vertex radius error as a percentage of |R|' },
  { name: 'conic', label: 'conic ±', unit: '', value: '0.01', title: 'Conic constant error (absolute)' },
  { name: 'trials', label: 'trials', unit: '', value: '200', title: 'Monte Carlo trials (each traces the perturbed layout)' },
  { name: 'seed', label: 'seed', unit: '', value: '1', title: 'Seed of the draws: the same seed repeats the run exactly' },
  { name: 'rays', label: 'rays per source', unit: 'rays', value: '20000', title: 'Rays per source in each trial’s trace' },
];

const SUMMARY = [
  { key: 'nominal.rms_radius_um', label: 'nominal RMS radius', unit: 'µm', title: 'RMS spot radius of the layout as drawn' },
  { key: 'rms_radius_um.p50', label: 'RMS radius, median', unit: 'µm', title: 'Half the trials are sharper than this' },
  { key: 'rms_radius_um.p90', label: 'RMS radius, 90 %', unit: 'µm', title: '90 % of the trials are sharper than this' },
  { key: 'rms_radius_um.max', label: 'RMS radius, worst', unit: 'µm', title: 'Largest RMS radius of any trial' },
  { key: 'nominal.strehl', label: 'nominal Strehl', unit: '', title: 'Strehl ratio of the layout as drawn (from the diffraction image at best focus, as the Image view)' },
  { key: 'strehl.p10', label: 'Strehl, 10 %', unit: '', title: '90 % of the trials reach at least this Strehl ratio' },
  { key: 'strehl.p50', label: 'Strehl, median', unit: '', title: 'Median Strehl ratio over the trials' },
  { key: 'intercept.p10', label: 'intercept, 10 %', unit: '', title: '90 % of the trials put at least this fraction of the launched power on the screen' },
];

export class ToleranceView {
  constructor() {
    this.id = 'tolerance';
    this.label = 'Tolerances';
    this.title = 'Monte Carlo of making and alignment errors, and which mirror parameter matters most';
    this.doc = null;
    this.run = null;
    this.show = 'rms';
  }

  mount(el, app) {
    this.app = app;
    this.el = el;
    el.classList.add('dview', 'dview-tolerance');
    const left = document.createElement('div');
    left.className = 'dview-col';
    heading(left, 'Errors per mirror', 'Each mirror gets its own errors, drawn uniformly within ± these values in every trial');
    this.form = new Form(left, { id: 'tolerance-form' });
    this.form.field({ name: 'screen', label: 'screen', type: 'select', options: [], title: 'Screen to measure on' });
    this.form.field({ name: 'source', label: 'source', type: 'select', options: [], title: 'Light to measure: one source, or all pooled' });
    for (const f of FIELDS) this.form.field(f);
    const row = document.createElement('div');
    row.className = 'field';
    const lab = document.createElement('label');
    lab.htmlFor = 'tolerance-refocus';
    lab.textContent = 'refocus';
    lab.title = 'Move the screen to best focus in every trial, as a maker refocuses';
    this.refocus = document.createElement('input');
    this.refocus.type = 'checkbox';
    this.refocus.id = 'tolerance-refocus';
    this.refocus.title = lab.title;
    row.append(lab, this.refocus);
    this.form.el.append(row);
    this.form.finish();
    const tools = document.createElement('div');
    tools.className = 'row-buttons';
    this.runBtn = button(tools, 'Run', 'Run the Monte Carlo and the sensitivity table in the background', () => this.start());
    this.runBtn.id = 'tolerance-run';
    this.cancelBtn = button(tools, 'Cancel', 'Stop the run', () => this.run?.cancel());
    this.cancelBtn.id = 'tolerance-cancel';
    this.cancelBtn.disabled = true;
    this.progress = document.createElement('progress');
    this.progress.id = 'tolerance-progress';
    this.progress.max = 1;
    this.progress.value = 0;
    this.progress.hidden = true;
    tools.append(this.progress);
    left.append(tools);
    this.status = para(left, 'Set the errors and press Run. Strehl ratios come from the diffraction image at best focus, as in the Image view.');
    this.status.id = 'tolerance-status';
    this.caution = para(left, 'This layout has a sun: a mirror that is off by a tolerance still concentrates sunlight, and the focus can move onto something that burns. Never look along the beam; check real installations against local codes and with qualified people.', 'caution inline');
    this.caution.hidden = true;

    const mid = document.createElement('div');
    mid.className = 'dview-col';
    heading(mid, 'Over the trials');
    const pick = document.createElement('div');
    pick.className = 'row-buttons';
    this.rmsBtn = button(pick, 'RMS radius', 'Histogram of the RMS spot radius over the trials', () => { this.show = 'rms'; this.draw(); });
    this.strehlBtn = button(pick, 'Strehl', 'Histogram of the Strehl ratio over the trials', () => { this.show = 'strehl'; this.draw(); });
    mid.append(pick);
    const plot = document.createElement('div');
    plot.className = 'view-plot tolerance-plot';
    this.canvas = document.createElement('canvas');
    this.canvas.id = 'tolerance-histogram';
    this.canvas.setAttribute('role', 'img');
    this.canvas.setAttribute('aria-label', 'Histogram over the trials');
    plot.append(this.canvas);
    mid.append(plot);
    this.summary = document.createElement('div');
    mid.append(this.summary);

    const right = document.createElement('div');
    right.className = 'dview-col';
    heading(right, 'Sensitivity', 'Each parameter alone moved by one step (its tolerance), both signs averaged; largest change of the RMS radius first');
    this.table = document.createElement('div');
    this.table.id = 'tolerance-sensitivity';
    right.append(this.table);
    el.append(left, mid, right);
    new ResizeObserver(() => this.draw()).observe(plot);
  }

  /** Screen and source choices follow the layout. */
  refreshChoices() {
    const L = this.app.layout;
    const fill = (name, items, keepAll) => {
      const sel = this.form.fields.get(name).input;
      const was = sel.value;
      sel.replaceChildren();
      if (keepAll) sel.append(new Option('all (pooled)', 'all'));
      for (const id of items) sel.append(new Option(id, id));
      if ([...sel.options].some((o) => o.value === was)) sel.value = was;
    };
    fill('screen', L.elements.filter((e) => e.kind === 'screen').map((e) => e.id), false);
    fill('source', L.sources.map((s) => s.id), true);
  }

  start() {
    if (this.run) return;
    let form;
    try {
      form = {
        screen: this.form.text('screen') || null,
        source: this.form.text('source') || null,
        refocus: this.refocus.checked,
      };
      for (const f of FIELDS) form[f.name] = this.form.num(f.name);
    } catch (e) {
      this.form.showError(errText(e));
      return;
    }
    this.form.clearErrors();
    this.runBtn.disabled = true;
    this.cancelBtn.disabled = false;
    this.progress.hidden = false;
    this.progress.value = 0;
    this.status.textContent = 'Running…';
    this.el.dataset.state = 'running';
    const name = this.app.layout.name;
    this.run = startRun('tolerance', this.app.layout, form, (done, total) => {
      this.progress.max = total;
      this.progress.value = done;
      this.status.textContent = `Traced ${done} of ${total} (nominal, trials, then the sensitivity steps)`;
    });
    this.run.promise.then((doc) => {
      this.doc = doc;
      this.el.dataset.state = 'done';
      this.status.textContent = `${doc.trials} trials of “${name}”${form.refocus ? ', refocused each trial' : ''}, seed ${form.seed}.`;
      this.render();
    }, (e) => {
      const msg = errText(e);
      this.el.dataset.state = msg === 'cancelled' ? 'cancelled' : 'error';
      if (msg === 'cancelled') this.status.textContent = 'Cancelled; the layout is unchanged.';
      else { this.status.textContent = ''; this.form.showError(msg); }
    }).finally(() => {
      this.run = null;
      this.runBtn.disabled = false;
      this.cancelBtn.disabled = true;
      this.progress.hidden = true;
    });
  }

  render() {
    const d = this.doc;
    if (!d) return;
    this.summary.replaceChildren(figureTable(SUMMARY, d, { id: 'tolerance-summary' }));
    const rows = [...d.sensitivity].sort((a, b) => Math.abs(b.d_rms_radius_um ?? 0) - Math.abs(a.d_rms_radius_um ?? 0));
    if (!rows.length) {
      this.table.replaceChildren();
      para(this.table, 'Every tolerance is zero: nothing to rank.');
    } else {
      this.table.replaceChildren(rowTable([
        { key: 'element', label: 'mirror' },
        { key: 'parameter', label: 'parameter' },
        { key: 'step', label: 'step', title: 'The tolerance of that kind (mm, arcminutes, % of |R| or conic)' },
        { key: 'd_rms_radius_um', label: 'Δ RMS radius', unit: 'µm', title: 'Change of the RMS spot radius for one step, both signs averaged' },
        { key: 'd_strehl', label: 'Δ Strehl', unit: '', title: 'Change of the Strehl ratio for one step, both signs averaged' },
      ], rows, { id: 'tolerance-table' }));
    }
    this.draw();
  }

  draw() {
    const th = this.app?.theme;
    if (!th || !this.canvas) return;
    const prep = prepareCanvas(this.canvas, 2, th.bg);
    if (!prep) return;
    const { ctx, W, H } = prep;
    this.rmsBtn.setAttribute('aria-pressed', String(this.show === 'rms'));
    this.strehlBtn.setAttribute('aria-pressed', String(this.show === 'strehl'));
    const vals = (this.doc?.samples?.[this.show === 'rms' ? 'rms_radius_um' : 'strehl'] ?? []).filter((v) => Number.isFinite(v));
    ctx.fillStyle = th.ink2;
    if (!vals.length) {
      ctx.textAlign = 'center';
      ctx.fillText(this.doc ? 'No values to show (no light, or a solar disk for the Strehl ratio)' : 'Not run yet', W / 2, H / 2);
      return;
    }
    const M = { l: 44, r: 12, t: 14, b: 34 };
    let lo = Math.min(...vals), hi = Math.max(...vals);
    if (hi - lo < 1e-12 * Math.max(1, Math.abs(hi))) { lo -= 0.5 * Math.max(Math.abs(lo) * 0.01, 1e-6); hi = lo + 2 * (hi - lo || 1e-6); }
    const bins = Math.max(5, Math.min(40, Math.round(Math.sqrt(vals.length))));
    const counts = new Array(bins).fill(0);
    for (const v of vals) counts[Math.min(bins - 1, Math.floor(((v - lo) / (hi - lo)) * bins))]++;
    const top = Math.max(...counts);
    const pw = W - M.l - M.r, ph = H - M.t - M.b;
    if (pw < 20 || ph < 20) return;
    ctx.fillStyle = sourceColour(0, th.dark);
    counts.forEach((c, i) => {
      const x = M.l + (i / bins) * pw, w = pw / bins - 1;
      const h = (c / top) * ph;
      ctx.fillRect(x, M.t + ph - h, Math.max(1, w), h);
    });
    ctx.strokeStyle = th.line;
    ctx.strokeRect(M.l, M.t, pw, ph);
    ctx.fillStyle = th.ink2;
    ctx.textAlign = 'center';
    const tx = ticks(lo, hi, pw);
    for (const v of tx.values) ctx.fillText(tickLabel(v, tx.step), M.l + ((v - lo) / (hi - lo)) * pw, H - M.b + 14);
    ctx.fillText(this.show === 'rms' ? 'RMS spot radius, µm' : 'Strehl ratio', M.l + pw / 2, H - 6);
    ctx.textAlign = 'right';
    ctx.fillText(String(top), M.l - 4, M.t + 10);
    ctx.fillText('0', M.l - 4, M.t + ph);
    ctx.save();
    ctx.translate(12, M.t + ph / 2);
    ctx.rotate(-Math.PI / 2);
    ctx.textAlign = 'center';
    ctx.fillText('trials', 0, 0);
    ctx.restore();
    ctx.textAlign = 'left';
  }

  update() {
    if (!this.app || !this.el) return;
    this.refreshChoices();
    this.caution.hidden = !this.app.layout.sources.some((s) => s.kind === 'beam' && s.sun_half_angle_mrad > 0);
  }
}
