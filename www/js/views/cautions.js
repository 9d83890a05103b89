// Sunlight cautions over the top of the drawing (#sun-caution, shown
// whenever a sun source exists): the concentration the layout reaches, a
// stronger warning above CONCENTRATION_CAUTION_SUNS, and the solar-filter
// warning when the sun feeds a telescope-like system. The box overlays the
// drawing (it never pushes it) and folds to one line, the most serious
// warning first, with a "more" toggle; it is never hidden while a sun is in
// the layout.

import { fmtNum } from '../format.js';

/** Peak concentration (suns) above which the page warns of burns and fire. */
export const CONCENTRATION_CAUTION_SUNS = 10;
/**
 * Working f-number above which a sunlit screen is taken to sit at the focus
 * of a telescope-like system (a slow cone: an eyepiece or a camera would go
 * there) rather than at a solar receiver.
 */
export const TELESCOPE_F_NUMBER = 3;

/** The caution line `id`, made before the general caution on first use. */
function part(body, id, cls, after = false) {
  let el = document.getElementById(id);
  if (!el) {
    el = document.createElement('p');
    el.id = id;
    el.className = cls;
    if (after) body.append(el);
    else body.insertBefore(el, body.querySelector('.caution-base'));
  }
  return el;
}

/** Folds the caution to one line or unfolds it. */
export function expandCaution(box, on) {
  box.dataset.expanded = String(on);
  const more = box.querySelector('.caution-more');
  if (!more) return;
  more.textContent = on ? 'less' : 'more';
  more.setAttribute('aria-expanded', String(on));
}

function wireToggle(box) {
  if (box.dataset.wired) return;
  box.dataset.wired = 'true';
  const more = box.querySelector('.caution-more');
  if (more) more.onclick = () => expandCaution(box, box.dataset.expanded !== 'true');
}

/** Refreshes the caution lines from the current layout and report. */
export function updateCautions(app) {
  const box = document.getElementById('sun-caution');
  if (!box) return;
  wireToggle(box);
  const body = box.querySelector('.caution-body') ?? box;
  const conc = part(body, 'concentration-caution', 'caution-line');
  const filter = part(body, 'filter-caution', 'caution-line');
  const figure = part(body, 'concentration-figure', 'caution-line muted-line', true);
  conc.hidden = filter.hidden = figure.hidden = true;
  const suns = new Set(app.layout.sources.filter((s) => s.kind === 'beam' && s.sun_half_angle_mrad > 0).map((s) => s.id));
  const rep = app.result?.report;
  if (!suns.size || !rep) return;

  // Highest concentration on any screen.
  let top = null;
  for (const sc of rep.screens ?? []) {
    const k = sc.flux?.peak_suns;
    if (typeof k === 'number' && sc.by_source?.some((r) => suns.has(r.source)) && (!top || k > top.k)) top = { k, sc };
  }
  if (top && top.k > CONCENTRATION_CAUTION_SUNS) {
    conc.hidden = false;
    conc.dataset.suns = String(top.k);
    conc.replaceChildren();
    const b = document.createElement('strong');
    b.textContent = `This layout concentrates sunlight ${fmtNum(top.k, 3)}-fold`;
    conc.append(b, ` on screen ${top.sc.id} (${fmtNum(top.sc.flux.peak_w_m2, 3)} W/m² at the peak; above ${CONCENTRATION_CAUTION_SUNS} suns). `
      + 'At this level skin burns and dry material can catch fire within seconds. Keep the focus clear of people, animals and anything that burns, '
      + 'cover the mirror when it is not in use, and defer to local codes and qualified practice.');
  } else if (top) {
    figure.hidden = false;
    figure.textContent = `Peak concentration ${fmtNum(top.k, 3)} suns on screen ${top.sc.id}.`;
  }

  // The sun feeding a slow, telescope-like cone.
  let scope = null;
  for (const sc of rep.screens ?? []) {
    for (const r of sc.by_source ?? []) {
      if (suns.has(r.source) && typeof r.f_number === 'number' && r.f_number > TELESCOPE_F_NUMBER && (!scope || r.f_number > scope.n)) scope = { n: r.f_number, sc };
    }
  }
  if (scope) {
    filter.hidden = false;
    filter.replaceChildren();
    const b = document.createElement('strong');
    b.textContent = 'Never observe the sun without a certified solar filter.';
    filter.append(b, ` The sun feeds an f/${fmtNum(scope.n, 2)} focus on screen ${scope.sc.id}, like a telescope: looking through such a system at the sun, `
      + 'even for a moment, causes permanent eye damage. A filter must cover the full aperture in front of the optics and meet the applicable standard.');
  }
}

/**
 * The caution beside a day sweep (the day view): how concentrated the
 * sunlight gets and when, what it does, and the local-codes note. Hidden
 * until a sweep has run.
 */
export function daySweepCaution(el, report) {
  el.replaceChildren();
  el.hidden = !report;
  if (!report) return;
  const w = report.worst;
  const b = document.createElement('strong');
  b.textContent = w && w.peak_suns > CONCENTRATION_CAUTION_SUNS
    ? `Concentrated sunlight: up to ${fmtNum(w.peak_suns, 3)} suns on screen ${w.screen} at ${w.time.slice(11, 16)}.`
    : 'Concentrated sunlight.';
  el.dataset.suns = w ? String(w.peak_suns) : '';
  el.append(b, ' A focus that moves with the sun can burn skin, set material alight and injure eyes within seconds, at hours nobody watches. '
    + 'Keep people, vehicles and anything that burns out of the path it sweeps, and check the real site against local codes and qualified practice: '
    + 'these figures are design estimates (a clear sky, the mirror as drawn).');
}
