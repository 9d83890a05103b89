// The conics, testing and designer views in headless Chromium: each view
// shows the numbers the native command line prints for the same inputs,
// "open in editor" loads the layout the command line writes (and it traces
// to the same statistics), bad input is marked on the field it names while
// the inputs stay, and a measured mirror can be built, judged and traced.
//
// Reference for the figures: the native `catoptric compare | zones | design
// … --json` and `catoptric trace --json` (the same Rust core compiled
// natively). Tolerances are common practice for comparing one computation
// built for two targets: a relative 1e-6, plus an absolute 1e-9 in the key's
// unit for values that are rounding noise around zero (a paraboloid's
// wavefront). Measured mirrors: a mirror whose readings equal the design's
// comes back as designed (zero surface error) — value from the definition
// of the moving-source reading (docs/FORMATS.md §3, `zones`).
//
// Set CATOPTRIC_SHOTS=<dir> to keep a screenshot of each view there.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { READY_MS, assertMatchesNative, close, native, readStats, setUp, settled, tearDown, watchPage } from './harness.mjs';

const SHOTS = process.env.CATOPTRIC_SHOTS || '';
let env;
let server;
let browser;
let origin;
let scratch;

before(async () => {
  env = await setUp('catoptric-design-');
  ({ server, browser, origin, scratch } = env);
  if (SHOTS) mkdirSync(SHOTS, { recursive: true });
});

after(() => tearDown(env));



/** Asserts a page value equals a native one (numbers, arrays, strings). */
function same(got, want, what) {
  if (Array.isArray(want)) {
    assert.equal(got.length, want.length, `${what}: length`);
    want.forEach((w, i) => same(got[i], w, `${what}[${i}]`));
  } else if (typeof want === 'number') {
    assert.equal(typeof got, 'number', `${what}: page shows a number (${got})`);
    assert.ok(close(got, want), `${what}: page ${got}, native ${want}`);
  } else if (want && typeof want === 'object') {
    assert.deepEqual(Object.keys(got).sort(), Object.keys(want).sort(), `${what}: keys`);
    for (const k of Object.keys(want)) same(got[k], want[k], `${what}.${k}`);
  } else {
    assert.equal(got, want, what);
  }
}

/** A fresh context with the page open, traced and the drawer on `view`. */
async function openView(view) {
  const ctx = await browser.newContext({ viewport: { width: 1400, height: 900 }, colorScheme: 'light' });
  const page = await ctx.newPage();
  const seen = watchPage(page, origin);
  // One load, no retry: a module request the static server never answers
  // is a bug of the server, to be seen here, not hidden.
  await page.goto(server.url);
  await settled(page);
  await page.keyboard.press('a');
  await page.locator('#drawer[data-open="true"]').waitFor();
  await page.click(`[role="tab"][data-view="${view}"]`);
  return { ctx, page, seen };
}


/** Fills named fields of a form and waits until its output is computed. */
async function fill(page, formId, outSel, values) {
  for (const [name, v] of Object.entries(values)) {
    const sel = `#${formId} [name="${name}"]`;
    if (await page.locator(sel).evaluate((e) => e.tagName === 'SELECT')) await page.selectOption(sel, v);
    else await page.fill(sel, String(v));
  }
  return waitOut(page, outSel);
}

/** Waits for an output block to leave the pending state; returns its state. */
async function waitOut(page, outSel) {
  await page.waitForFunction((s) => {
    const el = document.querySelector(s);
    return el && el.dataset.state !== 'pending' && el.dataset.state !== 'none';
  }, outSel, { timeout: READY_MS });
  return page.locator(outSel).evaluate((el) => el.dataset.state);
}

/** Cells with data-key and data-value under `sel`: "key|row" -> value. */
async function cells(page, sel) {
  return page.evaluate((s) => {
    const out = {};
    for (const c of document.querySelectorAll(`${s} [data-key][data-value]`)) {
      out[`${c.dataset.key}|${c.dataset.row ?? ''}`] = JSON.parse(c.dataset.value);
    }
    return out;
  }, sel);
}

async function shot(page, name) {
  if (SHOTS) await page.screenshot({ path: join(SHOTS, `${name}.png`) });
}

/** Opens a generated layout with `button`, checks it against the native layout file and its trace. */
async function openAndCompare(page, button, layoutFile) {
  const want = JSON.parse(readFileSync(layoutFile, 'utf8'));
  const before = await page.evaluate(() => window.catoptric.layout.name);
  await page.click(button);
  await settled(page);
  const got = await page.evaluate(() => JSON.parse(window.catoptric.session.layout_json()));
  same(got, want, 'opened layout');
  assertMatchesNative(await readStats(page), JSON.parse(native(['trace', layoutFile, '--json'])));
  // Undo brings the previous layout back.
  await page.click('#btn-undo');
  await settled(page);
  assert.equal(await page.evaluate(() => window.catoptric.layout.name), before);
}

describe('designer and testing views', () => {
  test('conics: prefilled from the mirror; R 2400, D 150, K 0 and −1 equal `catoptric compare`', async () => {
    const { ctx, page, seen } = await openView('conics');
    try {
      // Prefilled from the preset's revolved conic mirror.
      await waitOut(page, '#conics-out');
      const m = await page.evaluate(() => window.catoptric.layout.elements.find((e) => e.kind === 'mirror'));
      assert.equal(Number(await page.inputValue('#conics-form [name="radius"]')), m.profile.radius);
      assert.equal(Number(await page.inputValue('#conics-form [name="diameter"]')), m.aperture.diameter);
      const ks = (await page.inputValue('#conics-form [name="conics"]')).split(',').map(Number);
      assert.ok(ks.includes(m.profile.conic ?? 0) && ks.includes(0) && ks.includes(-0.5) && ks.includes(-1), `conics ${ks}`);

      const state = await fill(page, 'conics-form', '#conics-out', { radius: 2400, diameter: 150, conics: '0, -1', wavelength: 550 });
      assert.equal(state, 'ok');
      const want = JSON.parse(native(['compare', '--radius', '2400', '--diameter', '150', '--conics', '0,-1', '--json']));
      const got = await cells(page, '#conics-out');
      let n = 0;
      want.conics.forEach((row, i) => {
        for (const [k, v] of Object.entries(row)) { same(got[`${k}|${i}`], v, `conics[${i}].${k}`); n++; }
      });
      for (const k of ['sphere_fastest_f_ratio', 'sphere_fastest_f_ratio_exact', 'conic_tolerance_quarter_wave']) { same(got[`${k}|`], want[k], k); n++; }
      assert.ok(n >= 20, `compared ${n} figures`);
      // The plot has the two profiles drawn (coloured pixels on the canvas).
      const coloured = await page.evaluate(() => {
        const c = document.querySelector('#view-conics canvas');
        const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
        let k = 0;
        for (let i = 0; i < d.length; i += 4) if (Math.max(d[i], d[i + 1], d[i + 2]) - Math.min(d[i], d[i + 1], d[i + 2]) > 80) k++;
        return k;
      });
      assert.ok(coloured > 300, `coloured plot pixels: ${coloured}`);
      await shot(page, 'conics');
      assert.deepEqual(seen.errors, []);
      assert.deepEqual(seen.external, []);
    } finally {
      await ctx.close();
    }
  });

  test('testing: R 2000, K −1, D 200, 5 zones, moving and fixed source equal `catoptric zones`', async () => {
    const { ctx, page, seen } = await openView('testing');
    try {
      for (const source of ['moving', 'fixed']) {
        const state = await fill(page, 'testing-form', '#testing-out', { radius: 2000, conic: -1, diameter: 200, zones: 5, source, wavelength: 550 });
        assert.equal(state, 'ok');
        const want = JSON.parse(native(['zones', '--radius', '2000', '--conic', '-1', '--diameter', '200', '--zones', '5', '--source', source, '--json']));
        const got = await cells(page, '#testing-out');
        assert.equal(want.zones.length, 5);
        want.zones.forEach((z, i) => {
          for (const k of ['inner_mm', 'outer_mm', 'r_mm', 'reading_mm', 'removal_um', 'departure_waves']) same(got[`${k}|${i}`], z[k], `${source} zones[${i}].${k}`);
        });
        same(got['best_fit_sphere_radius_mm|'], want.best_fit_sphere_radius_mm, 'best-fit sphere');
        same(got['removal_depth_um|'], want.removal_depth_um, 'deepest glass to remove');
        assert.match(await page.locator('#zones-table caption').textContent(), new RegExp(source));
        await shot(page, `testing-${source}`);
      }
      const rule = await page.locator('#view-testing .rule').textContent();
      assert.match(rule, /a√\(X\/N\)/);
      assert.match(rule, /RMS radius/);
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('designers: Ritchey–Chrétien and off-axis equal `catoptric design`; open in editor traces like the written layout; undo', async () => {
    const { ctx, page, seen } = await openView('designers');
    try {
      const rcFile = join(scratch, 'rc.json');
      const state = await fill(page, 'two-mirror-form', '#two-mirror .dcard-out', {
        type: 'ritchey-chretien', diameter: 300, primary_focal: 1200, focal: 3200, back_focus: 250, field_deg: 0,
      });
      assert.equal(state, 'ok');
      const rc = JSON.parse(native(['design', 'two-mirror', '--type', 'ritchey-chretien', '--diameter', '300', '--primary-focal', '1200',
        '--focal', '3200', '--back-focus', '250', '--layout', rcFile, '--json']));
      let got = await cells(page, '#two-mirror');
      for (const k of ['primary.radius_mm', 'primary.conic', 'primary.hole_mm', 'secondary.radius_mm', 'secondary.conic',
        'secondary.diameter_mm', 'separation_mm', 'magnification', 'back_focus_mm', 'focal_ratio']) {
        same(got[`${k}|`], k.split('.').reduce((o, x) => o[x], rc), k);
      }
      same(got['obstruction_pct|'], 100 * rc.obstruction_fraction, 'obstruction');

      const oaFile = join(scratch, 'oa.json');
      assert.equal(await fill(page, 'off-axis-form', '#off-axis .dcard-out', { parent_focal: 500, offset: 200, diameter: 150 }), 'ok');
      const oa = JSON.parse(native(['design', 'off-axis', '--parent-focal', '500', '--offset', '200', '--diameter', '150', '--layout', oaFile, '--json']));
      got = await cells(page, '#off-axis');
      for (const k of ['off_axis_angle_deg', 'reflected_focal_mm', 'focal_ratio', 'segment_tilt_deg', 'segment_center_mm', 'segment_depth_mm',
        'parent_radius_mm', 'feed.position_mm', 'feed.pointing_deg', 'feed.rim_angles_deg', 'feed.bisector_off_axis_deg', 'feed.half_angle_deg']) {
        same(got[`${k}|`], k.split('.').reduce((o, x) => o[x], oa), k);
      }
      assert.ok(await page.locator('#off-axis .caution').isVisible(), 'the off-axis card shows the sunlight caution');
      await shot(page, 'designers');

      await openAndCompare(page, '[data-open="two-mirror"]', rcFile);
      await openAndCompare(page, '[data-open="off-axis"]', oaFile);
      assert.deepEqual(seen.errors, []);
      assert.deepEqual(seen.external, []);
    } finally {
      await ctx.close();
    }
  });

  test('bad input: the message names the field, the inputs stay, and good input brings the figures back', async () => {
    const { ctx, page, seen } = await openView('designers');
    try {
      await waitOut(page, '#two-mirror .dcard-out');
      const fieldError = (form, name) => page.locator(`#${form} .field[data-field="${name}"] .field-error`).textContent();
      // A negative diameter: the core refuses it, naming the field.
      assert.equal(await fill(page, 'two-mirror-form', '#two-mirror .dcard-out', { diameter: -300 }), 'error');
      assert.match(await fieldError('two-mirror-form', 'diameter'), /^diameter D: .*greater than 0/);
      assert.equal(await page.inputValue('#two-mirror-form [name="diameter"]'), '-300');
      assert.equal(await page.inputValue('#two-mirror-form [name="focal"]'), '3200');
      assert.ok(await page.locator('#two-mirror-form .field[data-field="diameter"]').evaluate((e) => e.classList.contains('invalid')));
      assert.ok(await page.locator('[data-open="two-mirror"]').isDisabled(), 'nothing to open while the input is bad');
      // Text that is not a number.
      assert.equal(await fill(page, 'off-axis-form', '#off-axis .dcard-out', { offset: '2oo' }), 'error');
      assert.match(await fieldError('off-axis-form', 'offset'), /^offset H: "2oo" is not a number/);
      assert.equal(await page.inputValue('#off-axis-form [name="offset"]'), '2oo');
      await shot(page, 'designers-error');
      // Fixed: the figures return and the marks go.
      assert.equal(await fill(page, 'two-mirror-form', '#two-mirror .dcard-out', { diameter: 300 }), 'ok');
      assert.equal(await page.locator('#two-mirror-form .field.invalid').count(), 0);

      // Conics: the bad entry of the list is named by its index.
      await page.click('[role="tab"][data-view="conics"]');
      await waitOut(page, '#conics-out');
      assert.equal(await fill(page, 'conics-form', '#conics-out', { conics: '0, x, -1' }), 'error');
      assert.match(await fieldError('conics-form', 'conics'), /^conic constants, entry 2: "x" is not a number/);
      assert.equal(await page.inputValue('#conics-form [name="conics"]'), '0, x, -1');
      // Testing: too many zones.
      await page.click('[role="tab"][data-view="testing"]');
      await waitOut(page, '#testing-out');
      assert.equal(await fill(page, 'testing-form', '#testing-out', { zones: 0 }), 'error');
      assert.match(await fieldError('testing-form', 'zones'), /^zones N: /);
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('measured mirror: readings judged zone by zone, traced in the editor; a bad CSV line is named', async () => {
    const { ctx, page, seen } = await openView('testing');
    try {
      assert.equal(await fill(page, 'testing-form', '#testing-out', { radius: 2000, conic: -1, diameter: 200, zones: 5, source: 'moving' }), 'ok');
      const want = JSON.parse(native(['zones', '--radius', '2000', '--conic', '-1', '--diameter', '200', '--zones', '5', '--json']));
      // Readings equal to the design's: every zone on figure, no error.
      for (const [i, z] of want.zones.entries()) await page.fill(`#zones-table input[data-zone="${i}"]`, String(z.reading_mm));
      assert.equal(await waitOut(page, '#measured-out'), 'ok');
      await page.waitForFunction(() => document.querySelectorAll('#zones-table td[data-key="verdict"][data-value]').length === 5);
      let got = await cells(page, '#zones-table');
      for (let i = 0; i < 5; i++) {
        assert.equal(got[`verdict|${i}`], 'ok');
        assert.ok(Math.abs(got[`surface_error_nm|${i}`]) < 0.5, `zone ${i + 1}: ${got[`surface_error_nm|${i}`]} nm`);
      }
      // Zone 3 reads 0.6 mm long: no longer a perfect mirror; something needs work.
      await page.fill('#zones-table input[data-zone="2"]', String(want.zones[2].reading_mm + 0.6));
      await page.waitForFunction(() => document.querySelectorAll('#work-list li').length > 0);
      got = await cells(page, '#zones-table');
      assert.ok([0, 1, 2, 3, 4].some((i) => got[`verdict|${i}`] !== 'ok'), 'a zone needs work');
      await shot(page, 'testing-measured');

      // Trace it: the measured mirror opens as the layout and traces like the native tracer.
      await page.click('#trace-measured');
      await settled(page);
      const layout = await page.evaluate(() => JSON.parse(window.catoptric.session.layout_json()));
      const mirror = layout.elements.find((e) => e.kind === 'mirror');
      assert.equal(mirror.profile.radius, 2000);
      assert.equal(mirror.profile.conic, -1);
      assert.ok(mirror.profile.departure.length >= 2, 'the mirror carries the measured departure');
      const file = join(scratch, 'measured.json');
      writeFileSync(file, JSON.stringify(layout));
      assertMatchesNative(await readStats(page), JSON.parse(native(['trace', file, '--json'])));
      assert.equal(await page.evaluate(() => window.catoptric.drawer.current), 'spot');
      await shot(page, 'measured-traced');
      await page.click('#btn-undo');
      await settled(page);

      // A departure table with a bad third data line (file line 4).
      await page.click('[role="tab"][data-view="testing"]');
      await page.setInputFiles('#measured-file', { name: 'bench.csv', mimeType: 'text/csv', buffer: Buffer.from('radius_mm, departure_um\n0, 0\n50, 0.05\n75, 0.1x\n100, 0\n') });
      await page.waitForFunction(() => document.querySelector('#measured-out')?.dataset.state === 'error');
      const msg = await page.locator('#measured-out .field-error').textContent();
      assert.match(msg, /bench\.csv: csv line 4 \(departure\): "0\.1x" is not a number/);
      assert.ok(await page.locator('#trace-measured').isDisabled());
      await shot(page, 'testing-csv-error');
      // A good table: rows judged, ready to trace.
      await page.setInputFiles('#measured-file', { name: 'bench.csv', mimeType: 'text/csv', buffer: Buffer.from('radius_mm, departure_um\n0, 0\n50, 0.05\n75, 0.1\n100, 0\n') });
      await page.waitForFunction(() => document.querySelector('#measured-out')?.dataset.state === 'ok');
      assert.equal(await page.locator('#csv-table tbody tr').count(), 4);
      assert.ok(await page.locator('#trace-measured').isEnabled());
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });
});
