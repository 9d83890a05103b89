// The Focus, Energy and Flux views, the caustic layer, the sunlight
// cautions and the analysis exports in headless Chromium.
//
// Reference for the figures: the native `catoptric trace --json` on the same
// layout file (the same Rust core built natively), as in workbench.test.mjs.
// Tolerance: common practice for one computation built for two targets, a
// relative 1e-6 (plus 1e-9 in the key's unit for values near zero).

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { WWW, close, native, setUp, settled, tearDown, watchPage } from './harness.mjs';

let env;
let server;
let browser;
let origin;
let scratch;

before(async () => {
  env = await setUp('catoptric-analysis-');
  ({ server, browser, origin, scratch } = env);
});

after(() => tearDown(env));



const preset = (file) => join(WWW, 'presets', file);

/** A layout file in the scratch folder: `file` from the presets, changed by `edit`. */
function variant(file, name, edit) {
  const L = JSON.parse(readFileSync(preset(file), 'utf8'));
  edit(L);
  const path = join(scratch, name);
  writeFileSync(path, JSON.stringify(L, null, 2));
  return path;
}

/** Opens the layout file `path` in a fresh page (through its share link) and waits for the full trace. */
async function openLayout(path) {
  const fragment = native(['link', path]).trim();
  const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 }, colorScheme: 'light', acceptDownloads: true });
  const page = await ctx.newPage();
  const seen = watchPage(page, origin);
  await page.goto(`${server.url}${fragment}`);
  await settled(page);
  return { ctx, page, seen };
}


/** Opens the drawer on view `id` and waits until its figures are drawn. */
async function showView(page, id) {
  if (await page.getAttribute('#drawer', 'data-open') !== 'true') await page.click('#btn-drawer');
  await page.click(`#view-tabs [data-view="${id}"]`);
  await page.waitForFunction((v) => !document.getElementById(`view-${v}`).hidden, id);
  // Wait until the drawer has finished sliding open (its height
  // transition, a CSS animation, is over), then redraw the plots at their
  // final size.
  await page.waitForFunction(() => {
    const d = document.getElementById('drawer');
    return d.dataset.open === 'true' && d.getAnimations().length === 0 && d.getBoundingClientRect().height > 0;
  });
  await page.evaluate(() => window.catoptric.drawer.update());
}

/** The figure `key` shown in view `id`. */
async function figure(page, id, key) {
  const v = await page.getAttribute(`#view-${id} [data-figure="${key}"]`, 'data-value');
  assert.ok(v !== null, `view ${id} shows ${key}`);
  return JSON.parse(v);
}

/** Pixels of a canvas that differ from its top-left pixel. */
async function inkPixels(page, selector) {
  return page.evaluate((sel) => {
    const c = document.querySelector(sel);
    const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
    let n = 0;
    for (let i = 4; i < d.length; i += 4) {
      if (Math.abs(d[i] - d[0]) + Math.abs(d[i + 1] - d[1]) + Math.abs(d[i + 2] - d[2]) > 30) n++;
    }
    return n;
  }, selector);
}

/** Keeps a snapshot of the drawing canvas in the page under `name`. */
async function snapshot(page, name) {
  await page.evaluate((n) => {
    const c = document.getElementById('canvas');
    window.catoptric.editor.draw();
    (window.snaps ??= {})[n] = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
  }, name);
}

/** Number of pixels that differ between two snapshots. */
async function pixelsChanged(page, a, b) {
  return page.evaluate(([x, y]) => {
    const p = window.snaps[x], q = window.snaps[y];
    let n = 0;
    for (let i = 0; i < p.length; i += 4) if (Math.abs(p[i] - q[i]) + Math.abs(p[i + 1] - q[i + 1]) + Math.abs(p[i + 2] - q[i + 2]) > 12) n++;
    return n;
  }, [a, b]);
}

describe('the analysis views', () => {
  test('focus and energy views show the best focus and EE50 of `catoptric trace --json`; every view draws', async () => {
    const path = preset('sphere-f5.json');
    const report = JSON.parse(native(['trace', path, '--json']));
    const row = report.screens[0].by_source[0];
    const { ctx, page, seen } = await openLayout(path);
    try {
      await showView(page, 'focus');
      const best = await figure(page, 'focus', 'best_focus_shift_mm');
      assert.ok(close(best, row.best_focus_shift_mm), `best focus: view ${best}, native ${row.best_focus_shift_mm}`);
      assert.ok(close(await figure(page, 'focus', 'rms_radius_at_best_um'), row.rms_radius_at_best_um));
      assert.ok(await inkPixels(page, '#focus-canvas') > 2000, 'through-focus plot drawn');
      assert.ok(await inkPixels(page, '#longitudinal-canvas') > 2000, 'longitudinal plot drawn');
      // A ray parallel to the axis at height h meets a sphere of radius R
      // at sin θ = h/R and crosses the axis R/(2 cos θ) from the centre of
      // curvature (plane geometry of the reflection; common practice), so
      // the marginal ray (h = 100 mm, R = 2000 mm) falls short of the
      // paraxial focus by R/2 · (1/cos θ − 1) = 1.2516 mm. The fan's
      // innermost rays are near-paraxial: compared to 1 %.
      const spread = await figure(page, 'focus', 'longitudinal_spread_mm');
      const want = 1000 * (1 / Math.sqrt(1 - 0.05 ** 2) - 1);
      assert.ok(Math.abs(spread - want) / want < 0.01, `longitudinal spread ${spread} mm, exact ${want} mm`);

      await showView(page, 'energy');
      const ee50 = await figure(page, 'energy', 'ee50_radius_um');
      assert.ok(close(ee50, row.ee50_radius_um), `EE50: view ${ee50}, native ${row.ee50_radius_um}`);
      assert.ok(close(await figure(page, 'energy', 'ee80_radius_um'), row.ee80_radius_um));
      assert.ok(await inkPixels(page, '#energy-canvas') > 2000, 'encircled-energy plot drawn');
      const verdict = await page.getAttribute('#energy-verdict .verdict', 'data-verdict');
      assert.equal(verdict, row.diffraction_limited ? 'limited' : 'not-limited');
      assert.match(await page.textContent('#energy-verdict'), /λ\/14/);

      // Hovering a plot reads out the value under the pointer.
      const box = await page.locator('#energy-canvas').boundingBox();
      await page.mouse.move(box.x + box.width * 0.5, box.y + box.height * 0.5);
      const text = await page.evaluate(() => window.catoptric.drawer.views.find((v) => v.id === 'energy').plot.readout());
      assert.match(text, /radius [\d.]+\s?µm · encircled energy [\d.]+\s?%/);

      await showView(page, 'flux');
      assert.ok(await inkPixels(page, '#flux-canvas') > 2000, 'flux map drawn');
      assert.deepEqual(seen.errors, []);
      assert.deepEqual(seen.external, []);
    } finally {
      await ctx.close();
    }
  });

  test('flux view of the solar dish: the peak of `catoptric trace --json`, a colour bar, and the concentration caution', async () => {
    const path = preset('solar-dish.json');
    const report = JSON.parse(native(['trace', path, '--json']));
    const flux = report.screens[0].flux;
    const { ctx, page, seen } = await openLayout(path);
    try {
      await showView(page, 'flux');
      const peak = await figure(page, 'flux', 'peak_w_m2');
      assert.ok(close(peak, flux.peak_w_m2), `peak: view ${peak}, native ${flux.peak_w_m2}`);
      assert.ok(close(await figure(page, 'flux', 'peak_suns'), flux.peak_suns));
      assert.ok(close(await figure(page, 'flux', 'mean_w_m2'), flux.mean_w_m2));
      assert.ok(close(await figure(page, 'flux', 'intercept'), flux.intercept));
      // The colour bar's lightness rises from bottom to top (our map is
      // built that way; relative luminance per IEC 61966-2-1 / ITU-R BT.709
      // weights, common practice).
      const lum = await page.evaluate(() => {
        const c = document.getElementById('flux-canvas');
        const g = c.getContext('2d');
        const v = window.catoptric.drawer.views.find((x) => x.id === 'flux');
        const bar = v.bar.getContext('2d').getImageData(0, 0, 1, v.bar.height).data;
        const lin = (x) => { x /= 255; return x <= 0.04045 ? x / 12.92 : ((x + 0.055) / 1.055) ** 2.4; };
        const out = [];
        for (let i = 0; i < bar.length; i += 4) out.push(0.2126 * lin(bar[i]) + 0.7152 * lin(bar[i + 1]) + 0.0722 * lin(bar[i + 2]));
        return { out, w: c.width, ok: !!g };
      });
      const ys = lum.out;
      assert.ok(ys.length >= 100);
      for (let i = 8; i < ys.length; i += 8) assert.ok(ys[i] < ys[i - 8], `lightness falls down the bar at row ${i}`);
      const caution = page.locator('#concentration-caution');
      assert.ok(await caution.isVisible(), 'the concentration caution is shown');
      assert.ok(close(Number(await caution.getAttribute('data-suns')), flux.peak_suns));
      assert.match(await caution.textContent(), /fire/);
      assert.ok(await page.locator('#view-flux .caution').isVisible(), 'the flux view repeats it');
      assert.equal(await page.locator('#filter-caution').isVisible(), false, 'an f/0.6 dish is no telescope');
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('no concentration caution for a star on the f/5 paraboloid; the solar-filter caution when the sun feeds it', async () => {
    const a = await openLayout(preset('paraboloid-f5.json'));
    try {
      assert.equal(await a.page.locator('#concentration-caution').isVisible(), false);
      assert.equal(await a.page.locator('#sun-caution').isVisible(), false);
      // A star's concentration is no burn hazard: the flux view stays calm.
      await showView(a.page, 'flux');
      assert.equal(await a.page.locator('#view-flux .caution').isVisible(), false);
    } finally {
      await a.ctx.close();
    }
    const sunlit = variant('paraboloid-f5.json', 'sunlit-f5.json', (L) => {
      L.sources[0].sun_half_angle_mrad = 4.65;
      L.sources[0].irradiance_w_m2 = 1000;
    });
    const b = await openLayout(sunlit);
    try {
      assert.ok(await b.page.locator('#filter-caution').isVisible(), 'solar-filter caution');
      assert.match(await b.page.textContent('#filter-caution'), /certified solar filter/);
      assert.deepEqual(b.seen.errors, []);
    } finally {
      await b.ctx.close();
    }
  });

  test('the caustic toggle draws a layer under the rays', async () => {
    const { ctx, page, seen } = await openLayout(preset('sphere-f5.json'));
    try {
      // The pointer stays off the drawing so no hover highlight changes it.
      await page.mouse.move(1, 1);
      await snapshot(page, 'off');
      await page.locator('#toolbox [data-action="caustic"]').dispatchEvent('click');
      await snapshot(page, 'on');
      const changed = await pixelsChanged(page, 'off', 'on');
      assert.ok(changed > 1000, `${changed} pixels changed`);
      assert.equal(await page.getAttribute('#toolbox [data-action="caustic"]', 'aria-pressed'), 'true');
      await page.locator('#toolbox [data-action="caustic"]').dispatchEvent('click');
      await snapshot(page, 'off-again');
      assert.equal(await pixelsChanged(page, 'off', 'off-again'), 0, 'off again: the same picture');
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('after a long trace in the worker the views show the full trace', async () => {
    // 250 000 rays: above the page's 200 000-ray limit for the main thread.
    const path = variant('sphere-f5.json', 'long.json', (L) => { L.sources[0].rays = 250_000; });
    const report = JSON.parse(native(['trace', path, '--json']));
    const row = report.screens[0].by_source[0];
    const { ctx, page, seen } = await openLayout(path);
    try {
      assert.equal(await page.evaluate(() => window.catoptric.result.background === true), true, 'traced in the worker');
      await showView(page, 'focus');
      assert.ok(close(await figure(page, 'focus', 'best_focus_shift_mm'), row.best_focus_shift_mm));
      await showView(page, 'energy');
      assert.ok(close(await figure(page, 'energy', 'ee50_radius_um'), row.ee50_radius_um));
      await showView(page, 'flux');
      assert.ok(close(await figure(page, 'flux', 'peak_w_m2'), report.screens[0].flux.peak_w_m2));
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('exports: curves as CSV and the flux map as PNG', async () => {
    const { ctx, page } = await openLayout(preset('sphere-f5.json'));
    try {
      const grab = async (what) => {
        await page.click('#btn-export');
        const [dl] = await Promise.all([page.waitForEvent('download'), page.click(`#export-menu [data-export="${what}"]`)]);
        const file = join(scratch, dl.suggestedFilename());
        await dl.saveAs(file);
        return { name: dl.suggestedFilename(), bytes: readFileSync(file) };
      };
      const focus = (await grab('focus-csv')).bytes.toString('utf8').trim().split('\n');
      assert.equal(focus[0], 'shift_mm,rms_radius_um');
      assert.equal(focus.length, 1 + 101, 'the through-focus curve has 101 points');
      assert.ok(focus.slice(1).every((l) => l.split(',').every((x) => Number.isFinite(Number(x)))));
      const la = (await grab('longitudinal-csv')).bytes.toString('utf8').trim().split('\n');
      assert.equal(la[0], 'pupil_height_mm,axial_crossing_mm');
      assert.ok(la.length > 50);
      const ee = (await grab('energy-csv')).bytes.toString('utf8').trim().split('\n');
      assert.equal(ee[0], 'radius_um,encircled_fraction');
      assert.equal(Number(ee[ee.length - 1].split(',')[1]), 1, 'all the power within the largest radius');
      const fx = (await grab('flux-csv')).bytes.toString('utf8').trim().split('\n');
      assert.equal(fx[0], 'u_mm,v_mm,irradiance_w_m2');
      assert.equal(fx.length, 1 + 65 * 65, "one row per pixel of the default 65 × 65 map (DEFAULT_FLUX_GRID)");
      const png = await grab('flux-png');
      assert.match(png.name, /flux\.png$/);
      // PNG signature (ISO/IEC 15948 §5.2).
      assert.deepEqual([...png.bytes.subarray(0, 8)], [137, 80, 78, 71, 13, 10, 26, 10]);
    } finally {
      await ctx.close();
    }
  });
});
