// Help and the drawing export at a chosen size.
//
// Help: reachable from the strip, the ? key and the "?" on the analysis
// drawer from every view, which opens it at that view's entry; every figure
// the statistics table shows has an entry that explains it.
//
// Export: the PNG has the size asked for (read from its IHDR chunk, PNG
// specification, ISO/IEC 15948 §11.2.2: width and height as 4-byte
// big-endian integers at bytes 16–23), whatever the canvas's size on the
// page; lines and text scale with the picture; "whole layout" frames every
// element; the page's own canvas and view are left as they were.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { setUp, tearDown, settled, watchPage } from './harness.mjs';

let env;
before(async () => { env = await setUp(); });
after(async () => { await tearDown(env); });

async function openPage(viewport = { width: 1280, height: 800 }, reducedMotion = 'no-preference') {
  const context = await env.browser.newContext({ viewport, acceptDownloads: true, reducedMotion });
  const page = await context.newPage();
  const seen = watchPage(page, env.origin);
  await page.goto(env.server.url);
  await settled(page);
  return { context, page, seen };
}

/** Is `el` scrolled into the visible part of the help body? */
const inView = (page, sel) => page.evaluate((s) => {
  const body = document.getElementById('help-body').getBoundingClientRect();
  const r = document.querySelector(s).getBoundingClientRect();
  return r.top >= body.top - 1 && r.bottom <= body.bottom + 1;
}, sel);

test('help opens from the strip, the ? key and every analysis view', { timeout: 120_000 }, async () => {
  const { context, page, seen } = await openPage();
  try {
    await page.click('#btn-help');
    assert.ok(await page.isVisible('#help'));
    for (const id of ['help-conventions', 'help-views', 'help-figures', 'help-keyboard']) {
      assert.ok(await page.locator(`#${id}`).count(), id);
    }
    const text = await page.textContent('#help');
    for (const words of ['y–z plane', 'millimetres', 'nanometres', 'degrees', 'w < 0', 'u along global x', 'Strehl', 'EE50', 'peak suns', 'f-number']) {
      assert.ok(text.includes(words), `help mentions ${words}`);
    }
    await page.keyboard.press('Escape');
    assert.ok(await page.isHidden('#help'));

    await page.focus('#canvas');
    await page.keyboard.press('?');
    assert.ok(await page.isVisible('#help'));
    await page.keyboard.press('Escape');

    await page.click('#btn-drawer');
    const views = await page.$$eval('#view-tabs [role="tab"]', (bs) => bs.map((b) => b.dataset.view));
    assert.ok(views.length >= 6, `views: ${views}`);
    for (const v of views) {
      await page.click(`#view-tabs [data-view="${v}"]`);
      await page.click('#btn-view-help');
      assert.ok(await page.isVisible('#help'), `help from ${v}`);
      const entry = `#help-view-${v}`;
      assert.equal(await page.locator(entry).count(), 1, `help has an entry for the ${v} view`);
      assert.ok(await page.locator(entry).evaluate((e) => e.classList.contains('help-here')), `${v}: its entry is marked`);
      assert.ok(await inView(page, entry), `${v}: its entry is scrolled into view`);
      await page.click('#help [data-close="help"]');
    }
    assert.deepEqual(seen.errors, []);
  } finally {
    await context.close();
  }
});

test('every figure in the statistics table has a help entry', { timeout: 120_000 }, async () => {
  const { context, page, seen } = await openPage();
  try {
    const covered = new Set((await page.$$eval('#help-figures [data-keys]', (ds) => ds.map((d) => d.dataset.keys))).join(' ').split(' '));
    const shown = new Set();
    for (const preset of ['solar-dish.json', 'cassegrain.json', 'paraboloid-f5.json']) {
      const was = await page.inputValue('#layout-name');
      await page.selectOption('#presets', preset);
      await page.waitForFunction((n) => document.getElementById('layout-name').value !== n, was);
      await settled(page);
      for (const k of await page.$$eval('[data-stat]', (cs) => cs.map((c) => c.dataset.stat))) shown.add(k);
    }
    assert.ok(shown.size >= 15, `figures shown: ${[...shown]}`);
    const missing = [...shown].filter((k) => !covered.has(k));
    assert.deepEqual(missing, [], 'figures without a help entry');
    assert.deepEqual(seen.errors, []);
  } finally {
    await context.close();
  }
});

/** Width and height from a PNG's IHDR chunk. */
function pngSize(bytes) {
  assert.deepEqual([...bytes.subarray(0, 8)], [137, 80, 78, 71, 13, 10, 26, 10], 'PNG signature');
  assert.equal(bytes.subarray(12, 16).toString('latin1'), 'IHDR');
  return { width: bytes.readUInt32BE(16), height: bytes.readUInt32BE(20) };
}

/**
 * Waits until the drawer has slid to the height it was given (its
 * --drawer-h), the canvas's pixels match its box and nothing has moved for
 * ten frames: a slow machine may still be sliding, or the editor may not
 * have sized the canvas yet, when a fixed number of frames has passed.
 */
function layoutSettled(page) {
  return page.waitForFunction(() => new Promise((ok) => {
    const c = document.getElementById('canvas');
    const d = document.getElementById('drawer');
    const state = () => {
      const r = c.getBoundingClientRect();
      const dpr = window.devicePixelRatio || 1;
      const target = parseFloat(d.style.getPropertyValue('--drawer-h'));
      const dh = d.getBoundingClientRect().height;
      const done = Math.abs(dh - target) < 1.5 && c.height === Math.round(r.height * dpr) && c.width === Math.round(r.width * dpr);
      return done ? `${r.width}x${r.height}x${dh}` : null;
    };
    const s0 = state();
    if (s0 === null) { requestAnimationFrame(() => ok(false)); return; }
    let n = 0;
    const tick = () => {
      if (state() !== s0) { ok(false); return; }
      if (++n === 10) { ok(d.getBoundingClientRect().height > 200); return; }
      requestAnimationFrame(tick);
    };
    requestAnimationFrame(tick);
  }), null, { timeout: 30_000 });
}

test('the drawing exports as a PNG of the chosen size', { timeout: 120_000 }, async () => {
  // Reduced motion: the drawer opens at once instead of sliding.
  const { context, page, seen } = await openPage(undefined, 'reduce');
  try {
    await page.click('#btn-drawer'); // the canvas is short and wide now
    await page.evaluate(() => window.catoptric.clearMessage()); // an info strip would leave later and resize the canvas
    await layoutSettled(page);
    const canvasBefore = await page.evaluate(() => {
      const c = document.getElementById('canvas');
      return { w: c.width, h: c.height, view: { ...window.catoptric.editor.view } };
    });

    await page.click('#btn-export');
    await page.click('[data-export="png"]');
    assert.ok(await page.isVisible('#export-png'));
    // The 3× button and the canvas's box read in one go: nothing can move in between.
    const scaled = await page.evaluate(() => {
      document.querySelector('#export-png [data-scale="3"]').click();
      const r = document.getElementById('canvas').getBoundingClientRect();
      const shown = (id) => !document.getElementById(id).hidden && document.getElementById(id).textContent.trim();
      return {
        w: Number(document.getElementById('export-width').value), h: Number(document.getElementById('export-height').value),
        css: r.width, cssH: r.height, strips: [shown('message'), shown('trace-notice')],
      };
    });
    assert.equal(scaled.w, Math.round(scaled.css * 3), JSON.stringify(scaled));
    assert.equal(scaled.h, Math.round(scaled.cssH * 3), JSON.stringify(scaled));

    // A bad size names its field and saves nothing.
    await page.fill('#export-width', '20000');
    await page.click('#export-go');
    assert.match(await page.textContent('#export-error'), /^Width: a whole number of pixels/);
    assert.ok(await page.isVisible('#export-png'));

    await page.uncheck('#export-keep');
    await page.fill('#export-width', '1600');
    await page.fill('#export-height', '1000');
    await page.check('#export-png input[value="fit"]');
    const [dl] = await Promise.all([page.waitForEvent('download'), page.click('#export-go')]);
    assert.match(dl.suggestedFilename(), /-drawing-1600x1000\.png$/);
    const size = pngSize(readFileSync(await dl.path()));
    assert.deepEqual(size, { width: 1600, height: 1000 });
    assert.notEqual(canvasBefore.h, 1000, 'the picture does not follow the canvas size');

    await layoutSettled(page);
    const canvasAfter = await page.evaluate(() => {
      const c = document.getElementById('canvas');
      const shown = (id) => !document.getElementById(id).hidden && document.getElementById(id).textContent.trim();
      return { w: c.width, h: c.height, view: { ...window.catoptric.editor.view }, strips: [shown('message'), shown('trace-notice')] };
    });
    assert.deepEqual({ w: canvasAfter.w, h: canvasAfter.h }, { w: canvasBefore.w, h: canvasBefore.h }, JSON.stringify(canvasAfter.strips));
    assert.deepEqual(canvasAfter.view, canvasBefore.view, 'the page keeps its view');
    assert.deepEqual(seen.errors, []);
  } finally {
    await context.close();
  }
});

test('an exported picture scales the drawing and frames the whole layout', { timeout: 120_000 }, async () => {
  const { context, page, seen } = await openPage();
  try {
    await page.click('#toolbox [data-action="grid"]'); // grid off: only the layout and rays are ink
    const r = await page.evaluate(async () => {
      const { renderDrawing } = await import('./js/export.js');
      const app = window.catoptric;
      const rgb = (css) => {
        const probe = document.createElement('canvas').getContext('2d');
        probe.fillStyle = css;
        probe.fillRect(0, 0, 1, 1);
        return probe.getImageData(0, 0, 1, 1).data;
      };
      // Pixels near `colour` (or, with `away`, far from it): their share
      // of the picture and their bounding box.
      const ink = (c, colour, away) => {
        const [r0, g0, b0] = rgb(colour);
        const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
        let n = 0, x0 = c.width, x1 = -1, y0 = c.height, y1 = -1;
        for (let i = 0; i < d.length; i += 4) {
          const near = Math.abs(d[i] - r0) + Math.abs(d[i + 1] - g0) + Math.abs(d[i + 2] - b0) < 40;
          if (near === away) continue;
          n++;
          const p = i / 4, x = p % c.width, y = Math.floor(p / c.width);
          x0 = Math.min(x0, x); x1 = Math.max(x1, x); y0 = Math.min(y0, y); y1 = Math.max(y1, y);
        }
        return { share: n / (c.width * c.height), x0, x1, y0, y1, w: c.width, h: c.height };
      };
      const th = app.theme;
      const { w, h } = app.editor.size;
      const one = ink(renderDrawing(app, { width: Math.round(w), height: Math.round(h) }), th.bg, true);
      const two = ink(renderDrawing(app, { width: Math.round(2 * w), height: Math.round(2 * h) }), th.bg, true);
      const framed = renderDrawing(app, { width: 900, height: 900, fit: true });
      const fit = { mirror: ink(framed, th.mirror, false), screen: ink(framed, th.screen, false) };
      return { one, two, fit };
    });
    // The same drawing at twice the pixels: ink covers the same share of
    // the picture (lines and text grow with it) — within 25 %.
    assert.ok(r.one.share > 0.005, `ink at 1×: ${r.one.share}`);
    assert.ok(Math.abs(r.two.share / r.one.share - 1) < 0.25, `ink share 1× ${r.one.share}, 2× ${r.two.share}`);
    // Whole layout framed (the paraboloid example: the screen at the left,
    // the mirror at the right): both drawn, inside the picture, spanning
    // most of its width.
    const { mirror: m, screen: sc } = r.fit;
    assert.ok(m.share > 0 && sc.share > 0, `mirror and screen drawn: ${JSON.stringify(r.fit)}`);
    for (const b of [m, sc]) assert.ok(b.x0 > 0 && b.y0 > 0 && b.x1 < b.w - 1 && b.y1 < b.h - 1, `inside: ${JSON.stringify(b)}`);
    assert.ok(m.x1 - sc.x0 > 0.6 * m.w, `framed: ${JSON.stringify(r.fit)}`);
    assert.deepEqual(seen.errors, []);
  } finally {
    await context.close();
  }
});
