// The tolerances view and the side sheet's solve tool in headless Chromium:
// the view's figures equal the native `catoptric tolerance --json` for the
// same inputs (the same Rust core built for two targets, compared as in the
// harness: common practice), a run can be cancelled and leaves the layout
// alone, and solving a sphere's conic for the wavefront lands the
// paraboloid (K = −1, the focal property of the parabola) as one undo step.
//
// Set CATOPTRIC_SHOTS=<dir> to keep screenshots of both tools there.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { WWW, close, native, setUp, settled, tearDown, watchPage } from './harness.mjs';

const SHOTS = process.env.CATOPTRIC_SHOTS || '';
const RUN_MS = 120_000;
let env;

before(async () => {
  env = await setUp();
  if (SHOTS) mkdirSync(SHOTS, { recursive: true });
});
after(() => tearDown(env));

const preset = (file) => join(WWW, 'presets', file);

async function openLayout(path) {
  const fragment = native(['link', path]).trim();
  const ctx = await env.browser.newContext({ viewport: { width: 1400, height: 900 }, colorScheme: 'light' });
  const page = await ctx.newPage();
  const seen = watchPage(page, env.origin);
  await page.goto(`${env.server.url}${fragment}`);
  await settled(page);
  return { ctx, page, seen };
}

async function showTolerances(page) {
  if (await page.getAttribute('#drawer', 'data-open') !== 'true') await page.click('#btn-drawer');
  await page.click('#view-tabs [data-view="tolerance"]');
  await page.waitForFunction(() => !document.getElementById('view-tolerance').hidden);
}

describe('tolerances and solving on the page', () => {
  test('the tolerance view shows the native figures for the same inputs', async () => {
    const { ctx, page, seen } = await openLayout(preset('cassegrain.json'));
    try {
      await showTolerances(page);
      const inputs = { decenter_mm: '0.02', tilt_arcmin: '0.5', despace_mm: '0.02', radius_pct: '0.05', conic: '0.005', trials: '24', seed: '3', rays: '2000' };
      for (const [k, v] of Object.entries(inputs)) await page.fill(`#tolerance-form [name="${k}"]`, v);
      await page.click('#tolerance-run');
      await page.waitForFunction(() => document.getElementById('view-tolerance').dataset.state === 'done', null, { timeout: RUN_MS });
      const want = JSON.parse(native([
        'tolerance', preset('cassegrain.json'), '--screen', 'focus', '--decenter-mm', '0.02', '--tilt-arcmin', '0.5',
        '--despace-mm', '0.02', '--radius-pct', '0.05', '--conic', '0.005', '--trials', '24', '--seed', '3', '--rays', '2000', '--json',
      ]));
      const cells = await page.evaluate(() => Object.fromEntries([...document.querySelectorAll('#tolerance-summary [data-key]')]
        .map((c) => [c.dataset.key, JSON.parse(c.dataset.value)])));
      let compared = 0;
      for (const [key, v] of Object.entries(cells)) {
        const [a, b] = key.split('.');
        assert.ok(close(v, want[a][b]), `${key}: page ${v}, native ${want[a][b]}`);
        compared++;
      }
      assert.ok(compared >= 6, `compared ${compared}`);
      const rows = await page.locator('#tolerance-table tbody tr').count();
      assert.equal(rows, want.sensitivity.length);
      // Sorted by impact: the first row is the largest RMS change.
      const first = await page.getAttribute('#tolerance-table tbody tr:first-child [data-key="d_rms_radius_um"]', 'data-value');
      const top = Math.max(...want.sensitivity.map((s) => Math.abs(s.d_rms_radius_um)));
      assert.ok(close(Math.abs(JSON.parse(first)), top));
      if (SHOTS) await page.screenshot({ path: join(SHOTS, 'tolerances.png') });
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('a tolerance run can be cancelled and the layout stays', async () => {
    const { ctx, page } = await openLayout(preset('cassegrain.json'));
    try {
      await showTolerances(page);
      const before = await page.evaluate(() => window.catoptric.currentJson());
      await page.fill('#tolerance-form [name="trials"]', '20000');
      await page.click('#tolerance-run');
      await page.waitForFunction(() => document.getElementById('view-tolerance').dataset.state === 'running');
      await page.click('#tolerance-cancel');
      await page.waitForFunction(() => document.getElementById('view-tolerance').dataset.state === 'cancelled');
      assert.equal(await page.evaluate(() => window.catoptric.currentJson()), before);
      // A bad tolerance is named on its field.
      await page.fill('#tolerance-form [name="decenter_mm"]', '-1');
      await page.click('#tolerance-run');
      await page.waitForFunction(() => document.getElementById('view-tolerance').dataset.state === 'error');
      assert.equal(await page.getAttribute('#tolerance-form [data-field="decenter_mm"]', 'class'), 'field invalid');
    } finally {
      await ctx.close();
    }
  });

  test('solving a sphere for the wavefront gives the paraboloid as one undo step', async () => {
    const { ctx, page } = await openLayout(preset('sphere-f5.json'));
    try {
      await page.evaluate(() => window.catoptric.select({ list: 'elements', index: 0 }));
      await page.check('[data-vary="elements[0].profile.conic"]');
      await page.selectOption('#solve-goal', 'wavefront');
      const undo = await page.evaluate(() => window.catoptric.undo.length);
      await page.click('#solve-run');
      await page.waitForFunction(() => window.catoptric.layout.elements[0].profile.conic !== undefined && window.catoptric.layout.elements[0].profile.conic !== 0, null, { timeout: RUN_MS });
      const k = await page.evaluate(() => window.catoptric.layout.elements[0].profile.conic);
      assert.ok(Math.abs(k + 1) < 1e-6, `K = ${k}`);
      assert.equal(await page.evaluate(() => window.catoptric.undo.length), undo + 1);
      await page.locator('#solve-result').filter({ hasText: 'Goal wavefront' }).waitFor();
      if (SHOTS) await page.screenshot({ path: join(SHOTS, 'solve.png') });
      await page.click('#btn-undo');
      assert.equal(await page.evaluate(() => window.catoptric.layout.elements[0].profile.conic ?? 0), 0);
    } finally {
      await ctx.close();
    }
  });
});
