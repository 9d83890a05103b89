// The page's figures against published formulas, not against the native
// build: the other browser tests compare the page with `catoptric trace`
// (the same Rust core), which guards the glue; these guard the optics as
// the page shows them.
//
// Sources:
// - Wavefront of a spherical mirror with parallel light: the sag
//   difference sphere − paraboloid is r⁴/(8R³), doubled on reflection, so
//   W040 = r⁴/(4R³) at the rim; at best focus (defocus balancing the
//   spherical term) the RMS is W040/(6√5) (Born & Wolf, Principles of
//   Optics, 7th ed., §9.2, and Mahajan, Optical Imaging and Aberrations I,
//   the balanced primary spherical aberration).
// - Strehl estimate exp(−(2πσ)²) (Mahajan, JOSA 72 (1982) 1258).
// - Working f-number N = 1/(2 sin θ) of the marginal ray and the Airy
//   radius 1.22 λ N (Born & Wolf §8.5.2).
// - A paraboloid images an axial point at infinity perfectly (Descartes;
//   any optics text): zero geometric spot.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { WWW, native, readStats, setUp, settled, tearDown, watchPage } from './harness.mjs';

let env;
before(async () => { env = await setUp('catoptric-optics-'); });
after(() => tearDown(env));

/** A preset, changed by `edit`, written to the scratch folder. */
function variant(file, edit) {
  const L = JSON.parse(readFileSync(join(WWW, 'presets', file), 'utf8'));
  edit(L);
  const path = join(env.scratch, `${Math.random().toString(36).slice(2)}-${file}`);
  writeFileSync(path, JSON.stringify(L));
  return { path, L };
}

/** The statistics the page shows for `path` (opened through its share link). */
async function pageStats(path) {
  const ctx = await env.browser.newContext({ viewport: { width: 1400, height: 900 } });
  try {
    const page = await ctx.newPage();
    const seen = watchPage(page, env.origin);
    await page.goto(`${env.server.url}${native(['link', path]).trim()}`);
    await settled(page);
    if (await page.getAttribute('#drawer', 'data-open') !== 'true') await page.click('#btn-drawer');
    await page.click('#view-tabs [data-view="spot"]');
    await page.waitForFunction(() => document.querySelectorAll('[data-stat]').length > 5);
    const stats = await readStats(page);
    assert.deepEqual(seen.errors, [], 'no page errors');
    return stats;
  } finally {
    await ctx.close();
  }
}

describe('figures the page shows, against published formulas', () => {
  for (const nm of [550, 633]) {
    test(`f/5 sphere at ${nm} nm: wavefront RMS at best focus is W040/(6√5), Strehl exp(−(2πσ)²)`, async () => {
      const { path, L } = variant('sphere-f5.json', (l) => { l.wavelength_nm = nm; });
      const mirror = L.elements.find((e) => e.kind === 'mirror');
      const R = Math.abs(mirror.profile.radius);
      const r = mirror.aperture.diameter / 2;
      const w040Waves = (r ** 4 / (4 * R ** 3)) / (nm * 1e-6);
      const want = w040Waves / (6 * Math.sqrt(5));
      const s = await pageStats(path);
      const got = s['focus|star|wavefront_rms_waves'];
      // Higher orders (r⁶/R⁵ terms) and the lattice's sampling of the
      // pupil: within 3 %.
      assert.ok(Math.abs(got - want) <= 0.03 * want, `RMS ${got} waves, formula ${want}`);
      const strehl = s['focus|star|strehl_estimate'];
      assert.ok(Math.abs(strehl - Math.exp(-((2 * Math.PI * got) ** 2))) <= 1e-9, `Strehl ${strehl} for σ ${got}`);
    });
  }

  test('f/5 paraboloid: a point focus, working f-number 1/(2 sin θ) and Airy radius 1.22 λN', async () => {
    const { path, L } = variant('paraboloid-f5.json', (l) => { l.wavelength_nm = 480; });
    const mirror = L.elements.find((e) => e.kind === 'mirror');
    const f = Math.abs(mirror.profile.radius) / 2;
    const h = mirror.aperture.diameter / 2;
    // The marginal ray leaves the rim (height h, sag h²/4f) for the focus.
    const theta = Math.atan2(h, f - (h * h) / (4 * f));
    const N = 1 / (2 * Math.sin(theta));
    const s = await pageStats(path);
    assert.ok(s['focus|star|rms_radius_um'] < 1e-3, `RMS ${s['focus|star|rms_radius_um']} µm`);
    // The lattice's outermost ray lies a little inside the rim: N within 1 %.
    const n = s['focus|star|f_number'];
    assert.ok(n >= N * (1 - 1e-9) && n <= N * 1.01, `f-number ${n}, rim ${N}`);
    const airy = s['focus|star|airy_radius_um'];
    assert.ok(Math.abs(airy - 1.22 * 0.48 * n) <= 1e-9 * airy, `Airy ${airy} µm for N ${n} at 480 nm`);
  });
});
