// The site block and the day view in headless Chromium: the site's fields
// in the layout sheet, a sweep of the parked solar dish on its date against
// the native `catoptric day --json` (the same Rust core built natively;
// tolerance: common practice for one computation on two targets, a
// relative 1e-6), the worst moment marked, the caution with the
// local-codes note, and the time slider turning the sun in the layout as
// one undo step.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import { WWW, close, native, setUp, settled, tearDown, watchPage } from './harness.mjs';

let env;
before(async () => { env = await setUp(); });
after(() => tearDown(env));

const DATE = '2026-12-21';
const SWEEP_RAYS = 8000; // the view's rays per sun (www/js/views/day.js)

describe('day view', () => {
  test('sweeps the dish like `catoptric day`, marks the worst moment, and the slider moves the sun', async () => {
    const path = join(WWW, 'presets', 'solar-dish.json');
    const fragment = native(['link', path]).trim();
    const ctx = await env.browser.newContext({ viewport: { width: 1280, height: 860 }, colorScheme: 'light' });
    const page = await ctx.newPage();
    const seen = watchPage(page, env.origin);
    try {
      await page.goto(`${env.server.url}${fragment}`);
      await settled(page);
      // The layout sheet (nothing selected) carries the site block.
      await page.waitForSelector('#site-block');
      assert.equal(await page.inputValue('#site-block [data-path="site.latitude_deg"]'), '-23');
      assert.equal(await page.inputValue('#site-block [data-path="site.z_bearing_deg"]'), '90');
      await page.fill('#f-day-date', DATE);
      await page.dispatchEvent('#f-day-date', 'change');

      await page.click('#btn-drawer');
      await page.click('#view-tabs [data-view="day"]');
      await page.waitForFunction(() => !document.getElementById('view-day').hidden);
      await page.selectOption('#day-step', '5');
      await page.click('#day-run');
      await page.waitForFunction(() => document.getElementById('day-status').dataset.steps);
      const rep = await page.evaluate(() => window.catoptric.drawer.views.find((v) => v.id === 'day').report);
      const nat = JSON.parse(native(['day', path, '--date', DATE, '--step-min', '5', '--rays', String(SWEEP_RAYS), '--json']));
      assert.equal(rep.steps.length, nat.steps.length);
      for (let i = 0; i < nat.steps.length; i++) {
        const a = rep.steps[i], b = nat.steps[i];
        assert.equal(a.time, b.time);
        assert.ok(close(a.elevation_deg, b.elevation_deg), `${a.time}: elevation`);
        assert.equal(a.screens.length, b.screens.length, `${a.time}: screens`);
        for (let k = 0; k < b.screens.length; k++) {
          assert.ok(close(a.screens[k].peak_w_m2, b.screens[k].peak_w_m2), `${a.time}: peak ${a.screens[k].peak_w_m2} vs ${b.screens[k].peak_w_m2}`);
          assert.ok(close(a.screens[k].power_w, b.screens[k].power_w), `${a.time}: power`);
        }
      }
      assert.equal(rep.worst.time, nat.worst.time);
      assert.ok(nat.worst.peak_suns > 1000, 'the noon sun crosses the parked dish');
      // The worst moment is written out and marked; the plot is drawn.
      const worst = JSON.parse(await page.getAttribute('#day-worst', 'data-worst'));
      assert.equal(worst.time, nat.worst.time);
      assert.match(await page.textContent('#day-worst'), /Worst moment/);
      const ink = await page.evaluate(() => {
        const c = document.getElementById('day-canvas');
        const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
        let n = 0;
        for (let i = 4; i < d.length; i += 4) if (d[i] !== d[0] || d[i + 1] !== d[1] || d[i + 2] !== d[2]) n++;
        return n;
      });
      assert.ok(ink > 2000, `the curve is drawn (${ink} pixels)`);
      // The caution, with the local-codes note.
      assert.ok(await page.isVisible('#day-caution'));
      assert.match(await page.textContent('#day-caution'), /local codes/);

      // The slider starts at the worst step; moving it turns the sun beam
      // to the step's placement, and the page re-traces.
      const wi = nat.steps.findIndex((s) => s.time === nat.worst.time);
      assert.equal(Number(await page.inputValue('#day-slider')), wi);
      const target = nat.steps.findIndex((s, i) => i !== wi && s.beams.length > 0);
      await page.evaluate((i) => {
        const s = document.getElementById('day-slider');
        s.value = String(i);
        s.dispatchEvent(new Event('input'));
        s.dispatchEvent(new Event('change'));
      }, target);
      const beam = nat.steps[target].beams[0];
      const got = await page.evaluate(() => window.catoptric.layout.sources[0]);
      assert.ok(close(got.direction_deg, beam.direction_deg) && close(got.out_of_plane_deg, beam.out_of_plane_deg), JSON.stringify(got));
      assert.ok(close(got.center[0], beam.center[0]) && close(got.diameter, beam.diameter));
      assert.equal(await page.getAttribute('#day-readout', 'data-time'), nat.steps[target].time);
      await settled(page);
      // One undo step brings the preset's sun back.
      await page.click('#btn-undo');
      const back = await page.evaluate(() => window.catoptric.layout.sources[0]);
      assert.equal(back.direction_deg, 270);
      assert.deepEqual(seen.errors, []);
      assert.deepEqual(seen.external, []);
    } finally {
      await ctx.close();
    }
  });

  test('without a site the view says where to set one, and the sweep names the field', async () => {
    const ctx = await env.browser.newContext({ viewport: { width: 1280, height: 800 } });
    const page = await ctx.newPage();
    const seen = watchPage(page, env.origin);
    try {
      await page.goto(env.server.url);
      await settled(page);
      await page.click('#btn-drawer');
      await page.click('#view-tabs [data-view="day"]');
      await page.click('#day-run');
      assert.match(await page.textContent('#day-status'), /^site: /);
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });
});
