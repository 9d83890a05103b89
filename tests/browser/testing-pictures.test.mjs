// The testing view's simulated pictures in headless Chromium: the knife
// and Ronchi figures under the pictures equal the native `catoptric knife
// | ronchi --json` (the same core built for two targets; tolerances as in
// harness.mjs `close`), a knife at a zone's reading nulls that zone (the
// moving-source reading ρ²/(2R) of a paraboloid, Texereau, How to Make a
// Telescope, 2nd Eng. ed. 1984), a sphere's bands are spaced pR/(4S)
// (common practice of the Ronchi test with the source moving with the
// grating; derived in tests/ronchi.rs), a loaded CSV shows the measured
// mirror beside the target and replaces typed readings visibly, the
// "filled from" note goes once the values are typed over, and the zonal
// mask downloads as SVG at 1:1 scale.
//
// Set CATOPTRIC_SHOTS=<dir> to keep screenshots there.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { READY_MS, close, native, settled, setUp, tearDown, watchPage } from './harness.mjs';

const SHOTS = process.env.CATOPTRIC_SHOTS || '';
let env;

before(async () => {
  env = await setUp('catoptric-pictures-');
  if (SHOTS) mkdirSync(SHOTS, { recursive: true });
});

after(() => tearDown(env));

async function openTesting() {
  const ctx = await env.browser.newContext({ viewport: { width: 1400, height: 1000 }, colorScheme: 'light' });
  const page = await ctx.newPage();
  const seen = watchPage(page, env.origin);
  await page.goto(env.server.url);
  await settled(page);
  await page.keyboard.press('a');
  await page.locator('#drawer[data-open="true"]').waitFor();
  await page.click('[role="tab"][data-view="testing"]');
  return { ctx, page, seen };
}

async function fill(page, values) {
  for (const [name, v] of Object.entries(values)) {
    const sel = `#testing-form [name="${name}"]`;
    if (await page.locator(sel).evaluate((e) => e.tagName === 'SELECT')) await page.selectOption(sel, v);
    else await page.fill(sel, String(v));
  }
  await page.waitForFunction(() => document.querySelector('#testing-out')?.dataset.state === 'ok', null, { timeout: READY_MS });
}

/** Sets a range input's value as a user dragging it would. */
async function slide(page, id, value) {
  await page.evaluate(([i, v]) => {
    const el = document.getElementById(i);
    el.min = String(Math.min(Number(el.min), v));
    el.max = String(Math.max(Number(el.max), v));
    el.step = 'any';
    el.value = String(v);
    el.dispatchEvent(new Event('input', { bubbles: true }));
  }, [id, value]);
}

/**
 * Waits until a picture shows the inputs `want` (its `data-inputs`, a
 * subset) and its figure `key` (a data attribute); returns the figure parsed.
 */
async function figure(page, sel, key, want = {}) {
  const h = await page.waitForFunction(([s, k, w]) => {
    const el = document.querySelector(s);
    if (el?.dataset.state !== 'ok' || el.dataset[k] === undefined) return null;
    const got = JSON.parse(el.dataset.inputs);
    return Object.entries(w).every(([n, v]) => got[n] === v) ? el.dataset[k] : null;
  }, [sel, key, want], { timeout: READY_MS });
  return JSON.parse(await h.jsonValue());
}

async function shot(page, name, sel = '#test-pictures') {
  if (!SHOTS) return;
  await page.locator(sel).scrollIntoViewIfNeeded();
  await page.screenshot({ path: join(SHOTS, `${name}.png`) });
}

describe('testing view: simulated pictures', () => {
  test('knife at a zone reading nulls that zone; Ronchi bands of a sphere; equal to the native commands', async () => {
    const { ctx, page, seen } = await openTesting();
    try {
      await fill(page, { radius: 2000, conic: -1, diameter: 200, zones: 5, source: 'moving' });
      await page.selectOption('#pic-kind', 'knife');
      // Zone ρ = 50 of an R = 2000 paraboloid reads 0.625 mm (Texereau).
      await slide(page, 'pic-offset', 0.625);
      const knifeAt = { test: 'knife', S: 0.625 };
      const nul = await figure(page, '#pic-target', 'nullRadius', knifeAt);
      const lit = await figure(page, '#pic-target', 'litFraction', knifeAt);
      assert.ok(Math.abs(nul - 50) < 1e-6, `null zone ${nul}`);
      const want = JSON.parse(native(['knife', '--radius', '2000', '--conic', '-1', '--diameter', '200', '--knife-mm', '0.625', '--json']));
      assert.ok(close(nul, want.null_radius_mm) && close(lit, want.lit_fraction), `${nul} ${lit} vs ${JSON.stringify(want)}`);
      assert.equal(await page.locator('#pic-measured').getAttribute('data-state'), 'none');
      assert.match(await page.locator('#test-pictures').textContent(), /no diffraction/);
      await shot(page, 'pictures-knife');

      await fill(page, { conic: 0 });
      await page.selectOption('#pic-kind', 'ronchi');
      await slide(page, 'pic-lines', 4);
      await slide(page, 'pic-offset', 10);
      const edges = await figure(page, '#pic-target', 'edges', { test: 'ronchi', S: 10, lines: 4 });
      assert.equal(edges.length, 8);
      // pR/(4S) = 0.25 · 2000 / 40 = 12.5 mm.
      edges.forEach((x, i) => assert.ok(Math.abs(x - 12.5 * (i + 1)) < 0.003 * 12.5 * (i + 1), `edge ${i}: ${x}`));
      const wantR = JSON.parse(native(['ronchi', '--radius', '2000', '--conic', '0', '--diameter', '200', '--lines-per-mm', '4', '--offset-mm', '10', '--json']));
      wantR.band_edges_mm.forEach((x, i) => assert.ok(close(edges[i], x), `edge ${i}: ${edges[i]} vs ${x}`));
      await shot(page, 'pictures-ronchi');
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('a loaded CSV shows the measured mirror beside the target and replaces typed readings', async () => {
    const { ctx, page, seen } = await openTesting();
    try {
      await fill(page, { radius: 2000, conic: -1, diameter: 200, zones: 5, source: 'moving' });
      await page.fill('#zones-table input[data-zone="0"]', '0.06');
      await page.fill('#zones-table input[data-zone="1"]', '0.2');
      await page.waitForFunction(() => document.querySelector('#measured-state')?.dataset.use === 'readings');
      await page.waitForFunction(() => document.querySelector('#pic-measured')?.dataset.state === 'ok');
      // A turned-down edge: the last 20 % of the radius falls by up to 0.2 µm.
      let csv = 'radius_mm, departure_um\n';
      for (let i = 0; i <= 40; i++) {
        const r = 2.5 * i;
        const u = Math.max(0, (r - 80) / 20);
        csv += `${r}, ${-0.2 * u * u * u}\n`;
      }
      await page.setInputFiles('#measured-file', { name: 'turned.csv', mimeType: 'text/csv', buffer: Buffer.from(csv) });
      await page.waitForFunction(() => document.querySelector('#measured-state')?.dataset.use === 'csv');
      const state = await page.locator('#measured-state').textContent();
      assert.match(state, /turned\.csv/);
      assert.match(state, /replaced 2 typed readings/);
      const typed = await page.$$eval('#zones-table input.cell-input', (els) => els.map((e) => e.value));
      assert.deepEqual(typed, ['', '', '', '', ''], 'typed readings cleared');
      await page.selectOption('#pic-kind', 'ronchi');
      await slide(page, 'pic-lines', 4);
      await slide(page, 'pic-offset', -8);
      const ronchiAt = { test: 'ronchi', S: -8, lines: 4 };
      const target = await figure(page, '#pic-target', 'edges', ronchiAt);
      const measured = await figure(page, '#pic-measured', 'edges', { ...ronchiAt, measured: true });
      const file = join(env.scratch, 'turned.csv');
      writeFileSync(file, csv);
      const want = JSON.parse(native(['ronchi', '--radius', '2000', '--conic', '-1', '--diameter', '200', '--lines-per-mm', '4', '--offset-mm', '-8', '--measured', file, '--json']));
      assert.equal(measured.length, want.band_edges_mm.length);
      want.band_edges_mm.forEach((x, i) => assert.ok(close(measured[i], x), `edge ${i}: ${measured[i]} vs ${x}`));
      assert.ok(measured.some((x, i) => Math.abs(x - target[i]) > 0.1), 'the band ends bend at the turned edge');
      await page.waitForFunction(() => document.querySelector('#measured-plots')?.dataset.state === 'ok');
      await shot(page, 'pictures-measured');
      await shot(page, 'plots-measured', '#measured-plots');
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('the fill note goes when the values are typed over; the mask downloads at 1:1', async () => {
    const { ctx, page, seen } = await openTesting();
    try {
      await page.getByRole('button', { name: 'From the mirror' }).click();
      await page.waitForFunction(() => /Filled from|No revolved/.test(document.querySelector('#testing-note')?.textContent ?? ''));
      await fill(page, { radius: 1500, conic: -1, diameter: 150, zones: 4 });
      assert.equal(await page.locator('#testing-note').textContent(), '');
      const [dl] = await Promise.all([page.waitForEvent('download'), page.click('#export-mask')]);
      assert.match(dl.suggestedFilename(), /zonal-mask-4-zones\.svg$/);
      const svg = readFileSync(await dl.path(), 'utf8');
      // Edges a√(X/N), a = 75, N = 4: 37.5, 53.03, 64.95, 75 (Berry, Build Your Own Telescope).
      const radii = [...svg.matchAll(/<circle[^>]* r="([\d.]+)"/g)].map((m) => Number(m[1]));
      [37.5, 53.033, 64.952, 75].forEach((w, i) => assert.ok(Math.abs(radii[i] - w) < 1e-3, `${radii[i]} vs ${w}`));
      assert.match(svg, /width="[\d.]+mm" height="[\d.]+mm"/);
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });
});
