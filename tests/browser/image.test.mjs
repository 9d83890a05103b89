// The Image view (diffraction image: PSF, MTF, Zernike terms) and the
// readout's Strehl ratio taken from the PSF, in headless Chromium.
//
// Reference for the figures: the native `catoptric psf --json` on the same
// layout file (the same Rust core built natively). Tolerance: common
// practice for one computation built for two targets, a relative 1e-6
// (plus 1e-9 near zero; `close` in harness.mjs).

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
  env = await setUp('catoptric-image-');
  ({ server, browser, origin, scratch } = env);
});

after(() => tearDown(env));

const preset = (file) => join(WWW, 'presets', file);

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

/** Opens the drawer on the Image view and waits for its answer. */
async function showImage(page) {
  if (await page.getAttribute('#drawer', 'data-open') !== 'true') await page.click('#btn-drawer');
  await page.click('#view-tabs [data-view="image"]');
  await page.waitForFunction(() => {
    const d = document.getElementById('drawer');
    return !document.getElementById('view-image').hidden && d.getAnimations().length === 0 && d.getBoundingClientRect().height > 0;
  });
  await page.evaluate(() => window.catoptric.drawer.update());
  await page.waitForFunction(() => document.getElementById('view-image').dataset.state !== 'computing', null, { timeout: 60_000 });
}

async function figure(page, key) {
  const v = await page.getAttribute(`#view-image [data-figure="${key}"]`, 'data-value');
  assert.ok(v !== null, `the Image view shows ${key}`);
  return JSON.parse(v);
}

/** The readout's Strehl once the image worker has answered: { value, focus, text }. */
async function readoutStrehl(page) {
  await page.waitForFunction(() => {
    const s = document.querySelector('[data-readout="strehl"] b');
    return s && s.textContent !== '…';
  }, null, { timeout: 60_000 });
  return page.evaluate(() => {
    const s = document.querySelector('[data-readout="strehl"]');
    return { value: JSON.parse(s.dataset.value), focus: s.dataset.focus, text: s.textContent };
  });
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

describe('the Image view', () => {
  test('sphere f/5: PSF Strehl, Zernike terms and MTF of `catoptric psf --json`; the readout takes its Strehl from the PSF', async () => {
    const path = preset('sphere-f5.json');
    const rep = JSON.parse(native(['psf', path, '--json', '--grid', '128']));
    const atScreen = JSON.parse(native(['psf', path, '--json', '--grid', '128', '--at', 'screen']));
    const { ctx, page, seen } = await openLayout(path);
    try {
      // The readout: the PSF's Strehl at the best focus, labelled so —
      // not the Maréchal estimate, which means nothing at 0.4 waves RMS.
      const ro = await readoutStrehl(page);
      assert.equal(ro.focus, 'best');
      assert.match(ro.text, /best focus/);
      assert.ok(close(ro.value, rep.strehl), `readout ${ro.value}, native ${rep.strehl}`);
      const marechal = JSON.parse(native(['trace', path, '--json'])).screens[0].by_source[0].strehl_estimate;
      assert.ok(Math.abs(ro.value - marechal) > 0.05, `the readout is not the Maréchal estimate ${marechal}`);
      // The statistics table carries the same PSF Strehl, labelled with its focus.
      await page.waitForFunction(() => {
        const c = document.querySelector('#stats [data-psf="strehl"]');
        return c && c.textContent !== '…';
      }, null, { timeout: 60_000 });
      const cell = await page.getAttribute('#stats [data-psf="strehl"][data-source="star"]', 'data-value');
      assert.ok(close(JSON.parse(cell), rep.strehl), `table ${cell}, native ${rep.strehl}`);
      assert.match(await page.textContent('#stats table.stats tbody tr:first-child th'), /Strehl \(PSF, best focus\)/);

      await showImage(page);
      assert.equal(await page.getAttribute('#view-image', 'data-state'), 'ready');
      assert.ok(close(await figure(page, 'strehl'), rep.strehl), 'Strehl from the PSF');
      assert.ok(close(await figure(page, 'wavefront_rms_waves'), rep.wavefront_rms_waves));
      assert.ok(close(await figure(page, 'cutoff_cyc_mm'), rep.mtf.cutoff_cyc_mm));
      assert.ok(close(await figure(page, 'ee80_um'), rep.ee_diffraction.ee80_um));
      const rows = await page.locator('#zernike-table tbody tr').count();
      assert.equal(rows, 28);
      const z12 = JSON.parse(await page.getAttribute('#zernike-table tr[data-zernike="12"] td:last-child', 'data-value'));
      assert.ok(close(z12, rep.zernike[12].coefficient_waves), `spherical ${z12} vs ${rep.zernike[12].coefficient_waves}`);
      assert.match(await page.textContent('#zernike-table tr[data-zernike="12"]'), /spherical/);
      assert.ok(await inkPixels(page, '#psf-canvas') > 2000, 'PSF drawn');
      assert.ok(await inkPixels(page, '#mtf-canvas') > 2000, 'MTF drawn');

      // The log scale shows the faint rings: more of the picture lights up.
      const linear = await inkPixels(page, '#psf-canvas');
      await page.check('#psf-log');
      assert.ok(await inkPixels(page, '#psf-canvas') > linear, 'log scale lights more of the picture');

      // At the screen: the screen's defocus is in the figures.
      await page.selectOption('#psf-at', 'screen');
      await page.waitForFunction(() => document.getElementById('view-image').dataset.state === 'ready');
      assert.ok(close(await figure(page, 'strehl'), atScreen.strehl), 'Strehl at the screen');
      assert.match(await page.textContent('#psf-status'), /at the screen/);

      // Exports: the MTF and the Zernike terms as CSV, the picture as PNG.
      const [mtf] = await Promise.all([page.waitForEvent('download'), page.evaluate(() => window.catoptric.exportWhat('mtf-csv'))]);
      const text = readFileSync(await mtf.path(), 'utf8');
      assert.match(text.split('\n')[0], /^frequency_cyc_mm,tangential,sagittal,diffraction_limited$/);
      const [png] = await Promise.all([page.waitForEvent('download'), page.evaluate(() => window.catoptric.exportWhat('psf-png'))]);
      assert.match(png.suggestedFilename(), /psf\.png$/);
      assert.deepEqual(seen.errors, []);
      assert.deepEqual(seen.external, []);
    } finally {
      await ctx.close();
    }
  });

  test('where a diffraction image means nothing the view and the readout say so instead of a number', async () => {
    // The sun's disk: no single wavefront.
    const sun = await openLayout(preset('solar-dish.json'));
    try {
      await showImage(sun.page);
      assert.equal(await sun.page.getAttribute('#view-image', 'data-state'), 'none');
      assert.match(await sun.page.textContent('#psf-status'), /point source/);
      assert.equal(await sun.page.locator('#view-image [data-figure="strehl"]').count(), 0);
      assert.deepEqual(sun.seen.errors, []);
    } finally {
      await sun.ctx.close();
    }
    // A few hundred hits: too few.
    const L = JSON.parse(readFileSync(preset('paraboloid-f5.json'), 'utf8'));
    L.sources[0].rays = 200;
    const path = join(scratch, 'few.json');
    writeFileSync(path, JSON.stringify(L));
    const few = await openLayout(path);
    try {
      const ro = await readoutStrehl(few.page);
      assert.equal(ro.value, null);
      assert.match(await few.page.getAttribute('[data-readout="strehl"]', 'title'), /too few/);
      await showImage(few.page);
      assert.match(await few.page.textContent('#psf-status'), /too few/);
      assert.deepEqual(few.seen.errors, []);
    } finally {
      await few.ctx.close();
    }
  });
});
