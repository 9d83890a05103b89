// The browser workbench in headless Chromium: it loads cleanly and offline,
// draws rays, edits re-trace, undo and autosave restore, share links and
// background traces agree with the native command line, and bad links and
// files are refused with a message naming the field while the layout stays.
//
// Reference for the figures: the native `catoptric trace --json` on the same
// layout (the same Rust core compiled natively). Tolerances are common
// practice for comparing one computation built for two targets: ray counts
// exactly, lengths to a relative 1e-6 (plus 1e-9 in the key's unit for
// values that are rounding noise around zero).

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { deflateRawSync } from 'node:zlib';
import { WWW, assertMatchesNative, close, native, readStats, setUp, settled, tearDown, watchPage } from './harness.mjs';

let env;
let server;
let browser;
let origin;
let scratch;

before(async () => {
  env = await setUp('catoptric-web-');
  ({ server, browser, origin, scratch } = env);
});

after(() => tearDown(env));

/** A fresh browser context (empty storage) with the page opened at `hash`. */
async function openPage(hash = '', { context } = {}) {
  const ctx = context ?? await browser.newContext({ viewport: { width: 1280, height: 800 }, colorScheme: 'light' });
  const page = await ctx.newPage();
  const seen = watchPage(page, origin);
  await page.goto(`${server.url}${hash}`);
  await settled(page);
  return { ctx, page, seen };
}


async function layoutOf(page) {
  return page.evaluate(() => JSON.parse(window.catoptric.session.layout_json()));
}



/** Counts bluish canvas pixels (the first source's colour, light theme). */
async function bluishPixels(page) {
  return page.evaluate(() => {
    const c = document.getElementById('canvas');
    const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
    let n = 0;
    for (let i = 0; i < d.length; i += 4) if (d[i + 2] - d[i] > 70 && d[i + 2] > 120) n++;
    return n;
  });
}

/** Screen position (page px) of a layout point [y, z] mm. */
async function screenPoint(page, y, z) {
  const box = await page.locator('#canvas').boundingBox();
  const [x, yy] = await page.evaluate(([a, b]) => window.catoptric.editor.toScreen(a, b), [y, z]);
  return [box.x + x, box.y + yy];
}

async function drag(page, from, to) {
  await page.mouse.move(from[0], from[1]);
  await page.mouse.down();
  for (let i = 1; i <= 8; i++) await page.mouse.move(from[0] + ((to[0] - from[0]) * i) / 8, from[1] + ((to[1] - from[1]) * i) / 8);
  await page.mouse.up();
}

function linkFor(layoutText) {
  const packed = deflateRawSync(Buffer.from(layoutText, 'utf8'));
  return `#L=${packed.toString('base64url')}`;
}

describe('the workbench page', () => {
  test('first visit: opens a preset, draws rays, no console error, no request elsewhere', async () => {
    const { ctx, page, seen } = await openPage();
    try {
      const layout = await layoutOf(page);
      assert.ok(layout.elements.length > 0 && layout.sources.length > 0, 'a preset with elements and sources is open');
      const index = JSON.parse(readFileSync(join(WWW, 'presets', 'index.json'), 'utf8'));
      const first = JSON.parse(readFileSync(join(WWW, 'presets', index[0].file), 'utf8'));
      assert.equal(layout.name, first.name, 'the first preset is opened');

      // Rays: bluish pixels with the fan drawn, far fewer without it.
      await page.evaluate(() => window.catoptric.editor.draw());
      const withFan = await bluishPixels(page);
      await page.evaluate(() => {
        const a = window.catoptric;
        a.geom = { ...a.geom, fan: new Float32Array(), fanSrc: new Uint16Array(), fanEsc: new Uint8Array() };
        a.editor.draw();
      });
      const withoutFan = await bluishPixels(page);
      assert.ok(withFan - withoutFan > 3000, `ray pixels: ${withFan} with the fan, ${withoutFan} without`);

      // The statistics table has the figures of every screen.
      const stats = await readStats(page);
      const screen = first.elements.find((e) => e.kind === 'screen').id;
      assert.ok(stats[`${screen}|${first.sources[0].id}|hits`] > 0, 'hits on the screen');
      assert.ok(`${screen}|${first.sources[0].id}|rms_radius_um` in stats);

      // Open the analysis drawer and the help, to exercise more of the page.
      await page.keyboard.press('a');
      await page.locator('#drawer[data-open="true"]').waitFor();
      await page.click('#btn-help');
      await page.locator('#help').waitFor();
      await page.keyboard.press('Escape');
      assert.deepEqual(seen.errors, []);
      assert.deepEqual(seen.external, []);
    } finally {
      await ctx.close();
    }
  });

  test('dragging a mirror vertex changes the statistics; undo restores them; reload restores the autosave', async () => {
    const { ctx, page, seen } = await openPage();
    try {
      const layout = await layoutOf(page);
      const mi = layout.elements.findIndex((e) => e.kind === 'mirror');
      const m = layout.elements[mi];
      const before = await readStats(page);

      // Select the mirror by clicking its outline, then drag its vertex handle.
      const pt = await page.evaluate((ei) => {
        const g = window.catoptric.geom;
        for (let i = 0; i < g.spans.length; i += 3) {
          if (g.spans[i] === ei) { const j = g.spans[i + 1] + Math.floor(g.spans[i + 2] * 0.3); return [g.outline[2 * j], g.outline[2 * j + 1]]; }
        }
        return null;
      }, mi);
      const onMirror = await screenPoint(page, pt[0], pt[1]);
      await page.mouse.click(onMirror[0], onMirror[1]);
      assert.deepEqual(await page.evaluate(() => window.catoptric.selection), { list: 'elements', index: mi });
      const handle = await screenPoint(page, m.vertex[0], m.vertex[1]);
      await drag(page, handle, [handle[0] + 40, handle[1]]);
      await settled(page);

      const moved = await layoutOf(page);
      assert.ok(moved.elements[mi].vertex[1] > m.vertex[1], `vertex z moved from ${m.vertex[1]} to ${moved.elements[mi].vertex[1]}`);
      assert.equal(moved.elements[mi].vertex[0], m.vertex[0], 'a horizontal drag keeps y');
      const after = await readStats(page);
      const rmsKeys = Object.keys(before).filter((k) => k.endsWith('|rms_radius_um'));
      assert.ok(rmsKeys.length > 0);
      assert.ok(rmsKeys.some((k) => !close(before[k], after[k])), 'an RMS radius changed');

      // Undo (keyboard) restores the layout and exactly the same figures.
      await page.locator('#canvas').focus();
      await page.keyboard.press('Control+z');
      await settled(page);
      assert.deepEqual((await layoutOf(page)).elements[mi].vertex, m.vertex);
      assert.deepEqual(await readStats(page), before);

      // Redo, then reload: the autosave brings back the moved mirror.
      await page.click('#btn-redo');
      await settled(page);
      assert.deepEqual(await readStats(page), after);
      await page.reload();
      await settled(page);
      assert.deepEqual((await layoutOf(page)).elements[mi].vertex, moved.elements[mi].vertex);
      assert.deepEqual(await readStats(page), after);
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('free-form mirror: clicked knots make a spline mirror, a dragged knot reshapes it, turning it over sends light to the screen', async () => {
    const { ctx, page, seen } = await openPage();
    try {
      const before = await layoutOf(page);
      // Paraboloid preset: beam from z = 500 toward +z, screen at z = 0 facing +z.
      await page.keyboard.press('k');
      for (const [y, z] of [[150, 800], [60, 760], [0, 750], [-60, 760], [-150, 800]]) {
        const p = await screenPoint(page, y, z);
        await page.mouse.click(p[0], p[1]);
      }
      await page.keyboard.press('Enter');
      await settled(page);
      const L = await layoutOf(page);
      assert.equal(L.elements.length, before.elements.length + 1);
      const ei = L.elements.length - 1;
      const ff = L.elements[ei];
      assert.equal(ff.form, 'extruded');
      assert.equal(ff.profile.departure.length, 5);
      const rhos = ff.profile.departure.map((k) => k[0]);
      assert.ok(rhos.every((r, i) => i === 0 || r > rhos[i - 1]), 'knots in increasing rho');
      // The face looks toward the concave side (+z here), so the beam meets its back.
      assert.ok(Math.abs(ff.axis_deg) < 1e-6 || Math.abs(ff.axis_deg - 360) < 1e-6, `axis ${ff.axis_deg}`);
      const screen = L.elements.find((e) => e.kind === 'screen').id;
      assert.equal((await readStats(page))[`${screen}||hits`], 0);

      // Drag the middle knot 20 mm toward -z: its height changes, the ends stay.
      const knots = await page.evaluate(() => window.catoptric.editor.handles().filter((h) => h.kind === 'knot'));
      assert.equal(knots.length, 5);
      const box = await page.locator('#canvas').boundingBox();
      const mid = knots[2];
      const k = await page.evaluate(() => window.catoptric.editor.view.k);
      await drag(page, [box.x + mid.x, box.y + mid.y], [box.x + mid.x - 20 * k, box.y + mid.y]);
      await settled(page);
      const after = (await layoutOf(page)).elements[ei].profile.departure;
      assert.ok(Math.abs(after[2][1] - ff.profile.departure[2][1]) > 5, `knot moved: ${ff.profile.departure[2][1]} -> ${after[2][1]}`);
      assert.deepEqual(after[0], ff.profile.departure[0]);
      assert.deepEqual(after[4], ff.profile.departure[4]);

      // Turn it over (X): the surface stays, the reflective side faces the beam,
      // and reflected light now reaches the screen.
      const outline = () => page.evaluate((i) => {
        const g = window.catoptric.geom;
        const pts = [];
        for (let s = 0; s < g.spans.length; s += 3) {
          if (g.spans[s] !== i) continue;
          for (let j = 0; j < g.spans[s + 2]; j++) pts.push([g.outline[2 * (g.spans[s + 1] + j)], g.outline[2 * (g.spans[s + 1] + j) + 1]]);
        }
        return pts;
      }, ei);
      const shape = await outline();
      await page.keyboard.press('x');
      await settled(page);
      const flipped = (await layoutOf(page)).elements[ei];
      assert.ok(Math.abs(flipped.axis_deg - 180) < 1e-6, `axis ${flipped.axis_deg}`);
      assert.ok((await readStats(page))[`${screen}||hits`] > 0, 'light reaches the screen');
      // Same surface: the outline is the old one traversed backwards (to f32 drawing precision).
      const turned = (await outline()).reverse();
      assert.equal(turned.length, shape.length);
      turned.forEach((p, j) => assert.ok(Math.hypot(p[0] - shape[j][0], p[1] - shape[j][1]) < 1e-3, `outline point ${j}: ${p} vs ${shape[j]}`));
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('keyboard editing: rotate, delete and undo', async () => {
    const { ctx, page, seen } = await openPage();
    try {
      const L0 = await layoutOf(page);
      const mi = L0.elements.findIndex((e) => e.kind === 'mirror');
      await page.evaluate((i) => window.catoptric.select({ list: 'elements', index: i }), mi);
      await page.locator('#canvas').focus();
      await page.keyboard.press(']');
      await settled(page);
      assert.equal((await layoutOf(page)).elements[mi].axis_deg, L0.elements[mi].axis_deg + 1);
      await page.keyboard.press('Shift+BracketLeft');
      await settled(page);
      assert.equal((await layoutOf(page)).elements[mi].axis_deg, L0.elements[mi].axis_deg - 14);
      await page.keyboard.press('Delete');
      await settled(page);
      assert.equal((await layoutOf(page)).elements.length, L0.elements.length - 1);
      for (let i = 0; i < 3; i++) await page.click('#btn-undo');
      await settled(page);
      assert.deepEqual(await layoutOf(page), L0);
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('a share link opened in a fresh page shows the statistics of `catoptric trace --json`', async () => {
    for (const file of ['sphere-f5.json', 'ellipsoid-lamp.json']) {
      const path = join(WWW, 'presets', file);
      const fragment = native(['link', path]).trim();
      assert.match(fragment, /^#L=[A-Za-z0-9_-]+$/);
      const report = JSON.parse(native(['trace', path, '--json']));
      const { ctx, page, seen } = await openPage(fragment);
      try {
        const stats = await readStats(page);
        assertMatchesNative(stats, report);
        assert.equal((await layoutOf(page)).name, JSON.parse(readFileSync(path, 'utf8')).name);
        // The page's own link for this layout is the same fragment.
        assert.equal(await page.evaluate(() => window.catoptric.session.link()), fragment);
        assert.deepEqual(seen.errors, []);
      } finally {
        await ctx.close();
      }
    }
  });

  test('the share button gives a link that reopens the same layout', async () => {
    const { ctx, page } = await openPage();
    try {
      await page.selectOption('#presets', 'cassegrain.json');
      await page.waitForFunction(() => /Cassegrain/i.test(document.getElementById('layout-name').value));
      await settled(page);
      const stats = await readStats(page);
      await page.click('#btn-share');
      const url = await page.inputValue('#share-link');
      assert.ok(url.startsWith(`${server.url}#L=`), url);
      const other = await openPage(url.slice(server.url.length));
      try {
        assert.deepEqual(await readStats(other.page), stats);
      } finally {
        await other.ctx.close();
      }
    } finally {
      await ctx.close();
    }
  });

  test('a corrupt link gives a clear message and keeps the current layout', async () => {
    const { ctx, page } = await openPage();
    try {
      const layout = await layoutOf(page);
      const stats = await readStats(page);
      const bad = structuredClone(layout);
      bad.elements[0].profile.conic = 'steep';
      await page.evaluate((h) => { location.hash = h; }, linkFor(JSON.stringify(bad)));
      await page.locator('#message:not([hidden])').waitFor();
      const text = await page.textContent('#message-text');
      // The field in the page's words (the link's first element, its conic), not the file's key.
      assert.match(text, /element 1, conic K: must be a number, not the text "steep"/, text);
      assert.doesNotMatch(text, /elements\[0\]|expected f64|link: link:/, text);
      assert.match(text, /unchanged/);
      assert.deepEqual(await layoutOf(page), layout);
      assert.deepEqual(await readStats(page), stats);

      await page.click('#message-close');
      await page.evaluate(() => { location.hash = '#L=@@not-base64@@'; });
      await page.locator('#message:not([hidden])').waitFor();
      // Plain words, not the decoder's "Invalid symbol 64, offset 0".
      assert.match(await page.textContent('#message-text'), /link: it has a character that cannot be in a link \(@ at position 4\)/);
      assert.deepEqual(await layoutOf(page), layout);
    } finally {
      await ctx.close();
    }
  });

  test('a corrupt link on first load is reported and a preset opens instead', async () => {
    const { ctx, page } = await openPage('#L=AAAA');
    try {
      assert.match(await page.textContent('#message-text'), /link/);
      assert.ok((await layoutOf(page)).elements.length > 0);
    } finally {
      await ctx.close();
    }
  });

  test('a corrupt file gives a clear message and keeps the current layout', async () => {
    const { ctx, page } = await openPage();
    try {
      const layout = await layoutOf(page);
      const stats = await readStats(page);
      const bad = structuredClone(layout);
      bad.elements[0].aperture.diameter = -5;
      await page.setInputFiles('#file-input', { name: 'broken.json', mimeType: 'application/json', buffer: Buffer.from(JSON.stringify(bad)) });
      await page.locator('#message:not([hidden])').waitFor();
      const text = await page.textContent('#message-text');
      assert.match(text, /broken\.json/);
      // The field in the page's words: the file's first element, its diameter.
      assert.match(text, /element 1, diameter: must be greater than 0/, text);
      assert.deepEqual(await layoutOf(page), layout);
      assert.deepEqual(await readStats(page), stats);

      await page.setInputFiles('#file-input', { name: 'notjson.json', mimeType: 'application/json', buffer: Buffer.from('{"format": "catoptric-layout", ') });
      await page.waitForFunction(() => /notjson/.test(document.getElementById('message-text').textContent));
      assert.match(await page.textContent('#message-text'), /not valid JSON/);
      assert.deepEqual(await layoutOf(page), layout);
    } finally {
      await ctx.close();
    }
  });

  test('a long trace runs on the worker pool with progress and matches the native trace', async () => {
    const layout = JSON.parse(readFileSync(join(WWW, 'presets', 'sphere-f5.json'), 'utf8'));
    layout.name = 'Sphere, many rays';
    for (const s of layout.sources) s.rays = 300_000;
    const path = join(scratch, 'many.json');
    writeFileSync(path, JSON.stringify(layout));
    const report = JSON.parse(native(['trace', path, '--json']));
    const { ctx, page, seen } = await openPage();
    try {
      await page.evaluate(() => {
        window.progressSeen = false;
        new MutationObserver(() => { if (!document.getElementById('progress').hidden) window.progressSeen = true; })
          .observe(document.getElementById('progress'), { attributes: true, attributeFilter: ['hidden'] });
      });
      await page.setInputFiles('#file-input', path);
      await page.waitForFunction(() => document.getElementById('layout-name').value === 'Sphere, many rays');
      await settled(page);
      assert.equal(await page.evaluate(() => window.progressSeen), true, 'the progress indicator showed');
      assert.equal(await page.evaluate(() => window.catoptric.result.background), true, 'the full trace came from the worker pool');
      // One worker per hardware thread, at most 8 (DEVELOPERS.md, the page's trace pool).
      const [workers, want] = await page.evaluate(() => [
        document.getElementById('ro-time').dataset.workers,
        Math.max(1, Math.min(8, navigator.hardwareConcurrency || 1)),
      ]);
      assert.equal(workers, String(want), 'the readout names the pool size');
      assertMatchesNative(await readStats(page), report);
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });
});
