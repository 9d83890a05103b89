// The analysis results the Focus, Energy and Flux views read, gathered from
// a session right after its trace — on the page or in the trace worker — as
// plain objects of typed arrays, so a worker can post them back whole.
//
// collectAnalysis(session) → { screens: [{ flux, sources: [per source | null] }] }
//   flux: { nx, ny, half (mm), peak, mean (W/m²), suns, intercept (null when
//          undefined), grid: Float64Array W/m², row 0 at v = +half } | null
//   per source: { focus: [shift mm, RMS µm, …] pairs, best: [shift mm, RMS µm],
//                 energy: [radius µm, fraction, …] pairs, ee: [EE50 µm, EE80 µm] }
// No DOM here: the worker imports this module too.

const orNull = (v) => (v === undefined ? null : v);
const finiteOrNull = (v) => (Number.isFinite(v) ? v : null);

export function collectAnalysis(s) {
  const screens = [];
  const nsrc = s.source_count();
  for (let i = 0; i < s.screen_count(); i++) {
    const f = s.flux_figures(i);
    const grid = s.flux_grid(i);
    const flux = f && grid
      ? { nx: f[0], ny: f[1], half: f[2], peak: f[3], mean: f[4], suns: finiteOrNull(f[5]), intercept: finiteOrNull(f[6]), grid }
      : null;
    const sources = [];
    for (let j = 0; j < nsrc; j++) {
      const focus = orNull(s.focus_curve(i, j));
      const energy = orNull(s.energy_curve(i, j));
      sources.push(focus || energy
        ? { focus, best: orNull(s.best_focus(i, j)), energy, ee: orNull(s.energy_radii(i, j)) }
        : null);
    }
    screens.push({ flux, sources });
  }
  return { screens };
}

/** The ArrayBuffers of a collected analysis, for postMessage transfer. */
export function analysisBuffers(a) {
  const out = [];
  for (const sc of a.screens) {
    if (sc.flux) out.push(sc.flux.grid.buffer);
    for (const p of sc.sources) {
      if (!p) continue;
      for (const k of ['focus', 'best', 'energy', 'ee']) if (p[k]) out.push(p[k].buffer);
    }
  }
  return out;
}

/** Splits [x0, y0, x1, y1, …] into { xs, ys }. */
export function unpair(p, scaleY = 1) {
  const n = p ? p.length >> 1 : 0;
  const xs = new Float64Array(n), ys = new Float64Array(n);
  for (let i = 0; i < n; i++) { xs[i] = p[2 * i]; ys[i] = p[2 * i + 1] * scaleY; }
  return { xs, ys };
}

/**
 * The screen and source the analysis views show: the page's chosen screen
 * and the view's chosen source among those that reach it (the first one
 * unless the user picked another).
 * Returns { screen, sc (report row), row (source row) , source (index),
 * pair (collected data) } with nulls where nothing applies.
 */
export function chosen(app) {
  const res = app.result;
  const screen = app.spotScreen;
  const sc = res?.report?.screens?.[screen] ?? null;
  const rows = sc?.by_source ?? [];
  const ids = app.layout.sources.map((s) => s.id);
  let row = rows.find((r) => r.source === app.viewSource) ?? rows[0] ?? null;
  const source = row ? ids.indexOf(row.source) : -1;
  if (source < 0) row = null;
  const pair = row ? res?.analysis?.screens?.[screen]?.sources?.[source] ?? null : null;
  return { res, screen, sc, rows, row, source, pair, flux: res?.analysis?.screens?.[screen]?.flux ?? null };
}

/** True when the drawer is open and `panel` is the view showing. */
export function visible(panel) {
  return document.getElementById('drawer')?.dataset.open === 'true' && panel && !panel.hidden;
}

/**
 * The side column of an analysis view: a tool row with the source picker
 * and a note. Returns { side, picker, note }; the caller appends the rest.
 */
export function viewSide(app) {
  const side = document.createElement('div');
  side.className = 'view-side';
  const tools = document.createElement('div');
  tools.className = 'view-tools';
  const picker = sourcePicker(app);
  const note = document.createElement('span');
  note.className = 'muted';
  tools.append(picker, note);
  side.append(tools);
  return { side, picker, note };
}

/**
 * A <select> of the sources that reach the chosen screen; picking one makes
 * it the source of every analysis view.
 */
export function sourcePicker(app) {
  const label = document.createElement('label');
  label.className = 'view-source';
  label.title = 'Light source whose figures the view shows (sources that reach the chosen screen)';
  label.append('source ');
  const sel = document.createElement('select');
  sel.setAttribute('aria-label', 'Source');
  sel.onchange = () => { app.viewSource = sel.value; app.drawer.update(); };
  label.append(sel);
  label.refresh = (rows, current) => {
    const want = rows.map((r) => r.source).join('|');
    if (sel.dataset.ids !== want) {
      sel.dataset.ids = want;
      sel.replaceChildren(...rows.map((r) => new Option(r.source, r.source)));
    }
    sel.value = current ?? '';
    sel.disabled = rows.length < 2;
  };
  return label;
}

/** A figure list (dl) whose entries tests and users can read. */
export function figureList(items) {
  const dl = document.createElement('dl');
  dl.className = 'figures';
  for (const it of items) {
    if (!it) continue;
    const dt = document.createElement('dt');
    dt.textContent = it.label;
    if (it.title) dt.title = it.title;
    const dd = document.createElement('dd');
    dd.dataset.figure = it.key;
    dd.dataset.value = JSON.stringify(it.value ?? null);
    dd.textContent = it.text;
    if (it.title) dd.title = it.title;
    dl.append(dt, dd);
  }
  return dl;
}
