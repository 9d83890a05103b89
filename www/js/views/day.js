// Day view: the layout's site swept through a date (the core's `day`
// sweep, the JSON of `catoptric day`): peak suns against time for each
// screen, the worst moment marked, and a time slider that turns every sun
// beam to the chosen step — the drawing, the trace and the flux map
// follow — beside the concentrated-sunlight caution.

import { sourceColour } from '../palette.js';
import { fmtNum } from '../format.js';
import { api } from '../wasm.js';
import { LinePlot } from './plot.js';
import { daySweepCaution } from './cautions.js';

/** Rays per sun for the sweep's traces: a quick look (the command traces the layout's own count). */
export const SWEEP_RAYS = 8000;
/** Minutes between steps offered in the view. */
const STEPS = [5, 10, 15, 30, 60];

/** Hours since local midnight of an ISO time "YYYY-MM-DDTHH:MM:SS±hh:mm". */
function clockHours(iso) {
  const m = /T(\d\d):(\d\d):(\d\d)/.exec(iso);
  return m ? Number(m[1]) + Number(m[2]) / 60 + Number(m[3]) / 3600 : NaN;
}

function clockText(iso) {
  return iso.slice(11, 16);
}

/** The date the page sweeps: the page's own choice, else this year's June solstice. */
export function dayDate(app) {
  return app.dayDate || `${new Date().getFullYear()}-06-21`;
}

export class DayView {
  constructor() {
    this.id = 'day';
    this.label = 'Day';
    this.title = 'The sun through a day at the layout\'s site: peak suns against time per screen, the worst moment, a time slider';
    this.report = null;
    this.key = '';
  }

  mount(el, app) {
    this.app = app;
    this.panel = el;
    el.classList.add('view');
    this.plot = new LinePlot('Peak concentration against time of day');
    this.plot.canvas.id = 'day-canvas';
    const side = document.createElement('div');
    side.className = 'view-side';
    const tools = document.createElement('div');
    tools.className = 'view-tools';
    const step = document.createElement('select');
    step.id = 'day-step';
    step.setAttribute('aria-label', 'Minutes between steps');
    step.title = 'Minutes between the steps of the sweep';
    for (const s of STEPS) step.append(new Option(`every ${s} min`, String(s)));
    step.value = '10';
    const run = document.createElement('button');
    run.type = 'button';
    run.id = 'day-run';
    run.textContent = 'Sweep the day';
    run.title = `Trace every step from sunrise to sunset (${SWEEP_RAYS} rays per sun; \`catoptric day\` traces the layout's own count)`;
    run.onclick = () => this.sweep();
    tools.append(step, run);
    this.stepSel = step;
    this.status = document.createElement('p');
    this.status.className = 'muted';
    this.status.id = 'day-status';
    const sl = document.createElement('div');
    sl.className = 'field';
    const lab = document.createElement('label');
    lab.htmlFor = 'day-slider';
    lab.textContent = 'time';
    this.slider = document.createElement('input');
    this.slider.type = 'range';
    this.slider.id = 'day-slider';
    this.slider.min = '0';
    this.slider.max = '0';
    this.slider.disabled = true;
    this.slider.title = 'Move the sun through the day: every sun beam turns to the chosen step and the layout is traced again';
    // One undo step per slide (pointer or keys): the gesture starts at the
    // first move and ends when the slider settles.
    this.slider.addEventListener('input', () => {
      if (app.gesture === null) app.beginGesture();
      this.toStep(Number(this.slider.value));
    });
    this.slider.addEventListener('change', () => {
      this.toStep(Number(this.slider.value));
      if (app.gesture !== null) app.endGesture();
    });
    this.readout = document.createElement('p');
    this.readout.id = 'day-readout';
    sl.append(lab, this.slider);
    this.worstBox = document.createElement('p');
    this.worstBox.id = 'day-worst';
    this.caution = document.createElement('div');
    this.caution.id = 'day-caution';
    this.caution.className = 'caution inline';
    this.caution.setAttribute('role', 'note');
    this.caution.hidden = true;
    side.append(tools, this.status, sl, this.readout, this.worstBox, this.caution);
    el.append(this.plot.el, side);
  }

  /** Runs the sweep in the core and keeps its report. */
  sweep() {
    const app = this.app;
    const date = dayDate(app);
    this.status.textContent = `Sweeping ${date}…`;
    try {
      const rays = Math.min(SWEEP_RAYS, Math.max(1, ...app.layout.sources.map((s) => s.rays)));
      this.report = JSON.parse(api().day_json(JSON.stringify(app.layout), date, '', '', Number(this.stepSel.value), rays));
      this.key = `${date}|${this.stepSel.value}|${app.currentJson()}`;
      this.status.textContent = `${date}, site time ${this.report.steps[0]?.time.slice(19) ?? ''}: ${this.report.steps.length} steps, ${rays} rays per sun at each.`;
      this.status.dataset.steps = String(this.report.steps.length);
      this.error = null;
    } catch (e) {
      this.report = null;
      this.error = String(e?.message ?? e);
      this.status.textContent = this.error;
    }
    const worst = this.worstIndex();
    this.slider.max = String(Math.max(0, (this.report?.steps.length ?? 1) - 1));
    this.slider.disabled = !this.report?.steps.length;
    this.slider.value = String(Math.max(0, worst));
    const st = this.report?.steps[Math.max(0, worst)];
    this.readout.textContent = st ? `${clockText(st.time)} — sun at azimuth ${fmtNum(st.azimuth_deg, 4)}°, elevation ${fmtNum(st.elevation_deg, 3)}°; move the slider to put the sun there` : '';
    this.update();
  }

  worstIndex() {
    const w = this.report?.worst;
    return w ? this.report.steps.findIndex((s) => s.time === w.time) : -1;
  }

  /** Turns every sun beam of the layout as the step placed it. */
  toStep(i) {
    const st = this.report?.steps[i];
    if (!st) return;
    this.readout.textContent = `${clockText(st.time)} — sun at azimuth ${fmtNum(st.azimuth_deg, 4)}°, elevation ${fmtNum(st.elevation_deg, 3)}°${st.beams.length ? '' : ' (below the horizon: nothing to trace)'}`;
    this.readout.dataset.time = st.time;
    if (!st.beams.length) return;
    const place = (L) => {
      for (const b of st.beams) {
        const s = L.sources.find((x) => x.id === b.id);
        if (!s) continue;
        s.center = b.center; s.diameter = b.diameter; s.direction_deg = b.direction_deg; s.out_of_plane_deg = b.out_of_plane_deg;
      }
    };
    this.app.gestureEdit(place);
    this.update();
  }

  update() {
    if (!this.app || this.panel.hidden) return;
    const app = this.app, th = app.theme;
    if (!app.layout.site && !this.error) {
      this.status.textContent = 'Give the layout a site (latitude, longitude, the bearing it faces) in the layout sheet: click an empty spot of the drawing.';
    }
    const r = this.report;
    const ids = [...new Set((r?.steps ?? []).flatMap((s) => s.screens.map((x) => x.id)))];
    const series = ids.map((id, k) => {
      const xs = [], ys = [];
      for (const s of r.steps) {
        const sc = s.screens.find((x) => x.id === id);
        xs.push(clockHours(s.time));
        ys.push(sc && typeof sc.peak_suns === 'number' ? sc.peak_suns : 0);
      }
      return { xs: Float64Array.from(xs), ys: Float64Array.from(ys), colour: sourceColour(k, th.dark), name: `screen ${id}`, along: 'x' };
    });
    const marks = [];
    const w = r?.worst;
    if (w) marks.push({ kind: 'point', x: clockHours(w.time), y: w.peak_suns, label: `worst ${fmtNum(w.peak_suns, 3)} suns at ${clockText(w.time)}`, colour: th.ink });
    const i = Number(this.slider.value);
    const cur = r?.steps[i];
    if (cur) marks.push({ kind: 'vline', x: clockHours(cur.time), label: clockText(cur.time), dash: [3, 3] });
    this.plot.set({
      title: `Peak concentration through ${dayDate(app)}`,
      x: { label: 'local standard time', unit: 'h', minSpan: 1 },
      y: { label: 'peak', unit: 'suns', min: 0, include: [0, 1] },
      series,
      marks,
      empty: r ? 'No screen in this layout' : 'Not swept yet: press Sweep the day',
    }, th);
    this.worstBox.replaceChildren();
    this.worstBox.dataset.worst = w ? JSON.stringify(w) : 'null';
    if (r) {
      const b = document.createElement('strong');
      b.textContent = w ? `Worst moment: ${fmtNum(w.peak_suns, 4)} suns on screen ${w.screen} at ${clockText(w.time)}` : 'The sun does not rise on this day at this site.';
      this.worstBox.append(b);
    }
    daySweepCaution(this.caution, r);
  }
}
