// The side sheet's solve tool: a "vary" toggle beside each number field
// and a Solve group (goal, screen, progress, cancel) that runs the
// optimiser (the document of `catoptric optimise --json`) in a worker and
// puts the result in the layout as one undo step, with the goal's value
// before and after. Variables are field paths (docs/FORMATS.md §5), kept
// while the layout is the same document.

import { startRun } from './tune.js';
import { fmtNum } from './format.js';
import { button } from './views/common.js';

const GOALS = [
  ['rms', 'smallest RMS spot'],
  ['wavefront', 'smallest RMS wavefront'],
  ['intercept', 'most light on the screen'],
];
const UNITS = { rms: 'µm RMS radius', wavefront: 'waves RMS', intercept: 'of the launched power' };

/** Paths chosen to vary, per page (a Set on the app). */
function varied(app) {
  app.varied ??= new Set();
  return app.varied;
}

/** Adds the vary toggle to a number field's row. */
export function varyToggle(row, path, app, rerender) {
  const box = document.createElement('input');
  box.type = 'checkbox';
  box.className = 'vary-toggle';
  box.dataset.vary = path;
  box.title = `Vary ${path} when solving (Solve, at the end of the sheet)`;
  box.setAttribute('aria-label', `vary ${path}`);
  box.checked = varied(app).has(path);
  box.onchange = () => {
    if (box.checked) varied(app).add(path); else varied(app).delete(path);
    rerender();
  };
  row.append(box);
}

/** The Solve group at the end of the sheet. */
export function solveGroup(form, app, rerender) {
  const paths = [...varied(app)];
  const fs = document.createElement('fieldset');
  fs.id = 'solve';
  const lg = document.createElement('legend');
  lg.textContent = 'Solve';
  fs.append(lg);
  form.append(fs);
  const note = (text, cls = 'note') => {
    const p = document.createElement('p');
    p.className = cls;
    p.textContent = text;
    fs.append(p);
    return p;
  };
  if (!paths.length) {
    note('Tick “vary” beside number fields (on any item) to let the optimiser change them, then solve for a goal here.');
    return;
  }
  note(`Varying: ${paths.join(', ')}`).id = 'solve-vars';
  const sel = (id, label, title, options) => {
    const row = document.createElement('div');
    row.className = 'field';
    const l = document.createElement('label');
    l.htmlFor = id;
    l.textContent = label;
    l.title = title;
    const s = document.createElement('select');
    s.id = id;
    s.title = title;
    for (const [v, t] of options) s.append(new Option(t, v));
    row.append(l, s);
    fs.append(row);
    return s;
  };
  const goal = sel('solve-goal', 'goal', 'What the optimiser improves (damped least squares over every ray)', GOALS);
  goal.value = app.solveGoal ?? 'rms';
  goal.onchange = () => { app.solveGoal = goal.value; };
  const screens = app.layout.elements.filter((e) => e.kind === 'screen').map((e) => [e.id, e.id]);
  const screen = sel('solve-screen', 'on screen', 'Screen the goal is measured on (all sources pooled)', screens);
  const tools = document.createElement('div');
  tools.className = 'row-buttons';
  fs.append(tools);
  const go = button(tools, 'Solve', 'Run the optimiser in the background; the result is one undo step', null);
  go.id = 'solve-run';
  const stop = button(tools, 'Cancel', 'Stop the optimiser; the layout stays as it is', null);
  stop.id = 'solve-cancel';
  stop.disabled = true;
  button(tools, 'Clear', 'Untick every vary toggle', () => { varied(app).clear(); rerender(); });
  const bar = document.createElement('progress');
  bar.id = 'solve-progress';
  bar.hidden = true;
  tools.append(bar);
  const out = note(app.solveNote ?? '', 'derived');
  out.id = 'solve-result';
  if (!screens.length) { go.disabled = true; out.textContent = 'Add a screen to solve on.'; }
  go.onclick = () => {
    const start = app.currentJson();
    const g = goal.value;
    go.disabled = true;
    stop.disabled = false;
    bar.hidden = false;
    bar.removeAttribute('value');
    out.textContent = 'Solving…';
    const run = startRun('optimise', app.layout, { vary: paths, goal: g, screen: screen.value || null, source: 'all' }, (n) => {
      out.textContent = `Solving… ${n} traces`;
    });
    stop.onclick = () => run.cancel();
    run.promise.then((doc) => {
      if (app.currentJson() !== start) {
        out.textContent = 'The layout changed while solving; the result was not applied.';
        return;
      }
      const err = app.edit((L) => {
        for (const k of Object.keys(L)) delete L[k];
        Object.assign(L, structuredClone(doc.layout));
      });
      if (err) { out.textContent = `The result was refused: ${err}`; return; }
      const vars = doc.variables.map((v) => `${v.path} ${fmtNum(v.start, 6)} → ${fmtNum(v.end, 6)}`).join('; ');
      app.solveNote = `Goal ${g}: ${fmtNum(doc.start, 5)} → ${fmtNum(doc.end, 5)} ${UNITS[g]} in ${doc.iterations} iterations. ${vars}. Undo brings back the layout before.`;
      app.message(app.solveNote, 'info');
      rerender();
    }, (e) => {
      const msg = String(e?.message ?? e);
      out.textContent = msg === 'cancelled' ? 'Cancelled; the layout is unchanged.' : `Could not solve: ${msg}`;
    }).finally(() => {
      go.disabled = false;
      stop.disabled = true;
      bar.hidden = true;
    });
  };
}
