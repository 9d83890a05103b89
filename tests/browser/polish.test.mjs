// Regressions found by an acceptance pass through the page as its users
// would drive it (mirror maker, optical designer, solar engineer), at
// 1280×800. Each test is named after the symptom it guards against.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { READY_MS, setUp, settled, tearDown, watchPage } from './harness.mjs';

let env;
let server;
let browser;
let origin;

before(async () => {
  env = await setUp();
  ({ server, browser, origin } = env);
});

after(() => tearDown(env));


/** A fresh context at 1280×800 with the first example (200 mm f/5 paraboloid). */
async function openPage() {
  const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 }, colorScheme: 'light', acceptDownloads: true });
  const page = await ctx.newPage();
  const seen = watchPage(page, origin);
  await page.goto(server.url);
  await settled(page);
  return { ctx, page, seen };
}

/** Page position of a layout point [y, z]. */
function pagePoint(page, y, z) {
  return page.evaluate(([a, b]) => {
    const r = document.getElementById('canvas').getBoundingClientRect();
    const [x, yy] = window.catoptric.editor.toScreen(a, b);
    return [x + r.left, yy + r.top];
  }, [y, z]);
}

const frames = (page) => page.evaluate(() => new Promise((res) => requestAnimationFrame(() => requestAnimationFrame(res))));

async function selectMirror(page) {
  const v = await page.evaluate(() => window.catoptric.layout.elements.find((e) => e.kind === 'mirror').vertex);
  // A point on the mirror face a little off the vertex handle.
  const [x, y] = await pagePoint(page, v[0] + 40, v[1]);
  await page.mouse.click(x, y);
  await page.waitForFunction(() => window.catoptric.selection?.list === 'elements');
}

/** Width and height of a PNG from its IHDR chunk (PNG specification, ISO/IEC 15948, 11.2.2). */
function pngSize(buf) {
  assert.equal(buf.subarray(1, 4).toString('latin1'), 'PNG');
  return [buf.readUInt32BE(16), buf.readUInt32BE(20)];
}

describe('acceptance-pass regressions', () => {
  test('a perfect focus reads 0 µm, not floating-point noise like 1.6×10⁻¹¹ µm', async () => {
    // Value from memory (any optics text, e.g. Hecht, Optics, on the
    // paraboloid): an axial beam on a paraboloid meets at one point, so the
    // exact RMS radius is 0; the trace's ~1e-11 µm is rounding.
    const { ctx, page, seen } = await openPage();
    try {
      const raw = Number(await page.getAttribute('#stats td[data-stat="rms_radius_um"]', 'data-value'));
      assert.ok(raw < 1e-6, `the trace is exact to rounding (${raw} µm)`);
      assert.equal(await page.textContent('#ro-figures [data-readout="rms_radius_um"] b'), '0\u202fµm');
      assert.equal(await page.textContent('#stats td[data-stat="rms_radius_um"]'), '0');
      assert.equal(await page.textContent('#stats td[data-stat="best_focus_shift_mm"]'), '0');
      // The hover title keeps the raw value for the curious.
      assert.match(await page.getAttribute('#stats td[data-stat="rms_radius_um"]', 'title'), /10⁻/);
      // The conic comparison: K = −1 has no wavefront error at all.
      await page.click('#btn-drawer');
      await page.click('[data-view="conics"]');
      const cell = page.locator('#view-conics td[data-key="wavefront_pv_waves"]').last();
      await cell.waitFor();
      assert.equal(await cell.textContent(), '0');
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('the readout strip wraps its figures instead of cutting them off at 1280 px', async () => {
    const { ctx, page } = await openPage();
    try {
      await selectMirror(page);
      // A sphere gives long figures (µm with decimals, a Strehl with four digits).
      const k = await page.locator('#props input[data-path$="profile.conic"]');
      await k.fill('0');
      await settled(page);
      const boxes = await page.evaluate(() => {
        const r = (el) => el.getBoundingClientRect();
        return {
          figs: [...document.querySelectorAll('#ro-figures > span')].map((s) => r(s)),
          box: r(document.getElementById('ro-figures')),
          drawer: r(document.getElementById('btn-drawer')),
          h: window.innerHeight,
        };
      });
      assert.ok(boxes.figs.length >= 4);
      for (const f of boxes.figs) {
        assert.ok(f.right <= boxes.box.right + 0.5, `a figure runs past the strip (${f.right} > ${boxes.box.right})`);
        assert.ok(f.right <= boxes.drawer.left, 'a figure runs under the Analysis button');
        assert.ok(f.bottom <= boxes.h, 'a figure falls below the window');
      }
    } finally {
      await ctx.close();
    }
  });

  test('Spot diagram as PNG from a closed drawer is the drawn diagram, not a blank 300×150 canvas', async () => {
    const { ctx, page } = await openPage();
    try {
      assert.equal(await page.evaluate(() => window.catoptric.drawer.isOpen()), false);
      const dl = page.waitForEvent('download');
      await page.click('#btn-export');
      await page.click('[data-export="spot-png"]');
      const file = await dl;
      const chunks = [];
      for await (const c of await file.createReadStream()) chunks.push(c);
      const [w, h] = pngSize(Buffer.concat(chunks));
      const cv = await page.evaluate(() => { const c = window.catoptric.drawer.spotCanvas(); return [c.width, c.height]; });
      assert.notDeepEqual([w, h], [300, 150], 'the canvas was never laid out');
      assert.deepEqual([w, h], cv, 'the picture is the spot canvas at its drawn size');
    } finally {
      await ctx.close();
    }
  });

  test('adding a sun does not shift the drawing under the pointer when the caution strip appears', async () => {
    const { ctx, page } = await openPage();
    try {
      const v = await page.evaluate(() => window.catoptric.layout.elements[0].vertex);
      const p0 = await pagePoint(page, v[0], v[1]);
      assert.equal(await page.isVisible('#sun-caution'), false);
      await page.click('#toolbox [data-tool="sun"]');
      const [x, y] = await pagePoint(page, 150, 800);
      await page.mouse.click(x, y);
      await page.locator('#sun-caution').waitFor({ state: 'visible' });
      await settled(page);
      await frames(page);
      const p1 = await pagePoint(page, v[0], v[1]);
      assert.ok(Math.abs(p1[0] - p0[0]) < 1 && Math.abs(p1[1] - p0[1]) < 1, `the mirror moved from ${p0} to ${p1}`);
    } finally {
      await ctx.close();
    }
  });

  test('an example opened with a caution strip still fits whole in the drawing', async () => {
    const { ctx, page } = await openPage();
    try {
      await page.selectOption('#presets', 'facade-sun.json');
      await page.locator('#sun-caution').waitFor({ state: 'visible' });
      await settled(page);
      await frames(page);
      const out = await page.evaluate(() => {
        const a = window.catoptric;
        const { w, h } = a.editor.size;
        const o = a.geom.outline;
        let bad = 0;
        for (let i = 0; i < o.length; i += 2) {
          const [x, y] = a.editor.toScreen(o[i], o[i + 1]);
          if (x < 0 || x > w || y < 0 || y > h) bad++;
        }
        return { bad, n: o.length / 2 };
      });
      assert.ok(out.n > 10);
      assert.equal(out.bad, 0, `${out.bad} of ${out.n} outline points are off the drawing`);
    } finally {
      await ctx.close();
    }
  });

  test('select boxes show their whole choice (sun pattern, knife-edge source)', async () => {
    const { ctx, page } = await openPage();
    try {
      await page.click('#toolbox [data-tool="sun"]');
      const [x, y] = await pagePoint(page, 150, 800);
      await page.mouse.click(x, y);
      await page.waitForFunction(() => window.catoptric.selection?.list === 'sources');
      await page.click('#btn-drawer');
      await page.click('[data-view="testing"]');
      await page.locator('#view-testing select').first().waitFor();
      const clipped = await page.evaluate(() => {
        const ctx2 = document.createElement('canvas').getContext('2d');
        const out = [];
        for (const s of document.querySelectorAll('#props select, #view-testing select')) {
          const cs = getComputedStyle(s);
          ctx2.font = `${cs.fontWeight} ${cs.fontSize} ${cs.fontFamily}`;
          const room = s.clientWidth - parseFloat(cs.paddingLeft) - parseFloat(cs.paddingRight) - 16; // the arrow
          for (const o of s.options) if (ctx2.measureText(o.text).width > room) out.push(`${o.text} (${s.id || s.name})`);
        }
        return out;
      });
      assert.deepEqual(clipped, []);
    } finally {
      await ctx.close();
    }
  });

  test('the knife-edge table shows its verdict column at 1280 px', async () => {
    const { ctx, page } = await openPage();
    try {
      await page.click('#btn-drawer');
      await page.click('[data-view="testing"]');
      const th = page.locator('#testing-out th', { hasText: 'verdict' });
      await th.waitFor();
      const [a, b] = await Promise.all([th.boundingBox(), page.locator('#testing-out').boundingBox()]);
      assert.ok(a.x + a.width <= b.x + b.width + 0.5, 'the verdict column is cut off');
    } finally {
      await ctx.close();
    }
  });

  test('the toolbox stays inside a short drawing (1280×720, drawer open, message shown)', async () => {
    const { ctx, page } = await openPage();
    try {
      await page.setViewportSize({ width: 1280, height: 720 });
      await page.click('#btn-drawer');
      await page.selectOption('#presets', 'sphere-f5.json');
      await page.locator('#message:not([hidden])').waitFor();
      await frames(page);
      const [t, d] = await Promise.all([page.locator('#toolbox').boundingBox(), page.locator('#drawing').boundingBox()]);
      assert.ok(t.y + t.height <= d.y + d.height + 0.5, `toolbox bottom ${t.y + t.height} past the drawing ${d.y + d.height}`);
    } finally {
      await ctx.close();
    }
  });

  test('a million hits read as a whole number in the readout, not 1.000×10⁶', async () => {
    const { ctx, page } = await openPage();
    try {
      await page.evaluate(() => window.catoptric.select({ list: 'sources', index: 0 }));
      await page.locator('#props input[data-path$="].rays"]').fill('1000000');
      await page.waitForFunction(() => document.body.dataset.trace === 'full' && window.catoptric.result.launched > 900000, null, { timeout: READY_MS });
      const hits = await page.evaluate(() => window.catoptric.result.report.screens[0].hits);
      const text = await page.textContent('#ro-figures [data-readout="hits"] b');
      assert.match(text, /^\d{1,3}(\u202f\d{3})+$/);
      assert.equal(Number(text.replace(/\u202f/g, '')), hits);
    } finally {
      await ctx.close();
    }
  });

  test('a damaged link message reads as one sentence (no doubled full stop)', async () => {
    const { ctx, page } = await openPage();
    try {
      await page.evaluate(() => { location.hash = '#L=!!!garbage'; });
      await page.locator('#message:not([hidden])').waitFor();
      const text = await page.textContent('#message-text');
      assert.match(text, /link/);
      assert.doesNotMatch(text, /\.\./);
    } finally {
      await ctx.close();
    }
  });
});

describe('acceptance-pass regressions: keeping work', () => {
  test('opening a shared link keeps the work from the last visit one Undo away', async () => {
    const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 }, colorScheme: 'light' });
    try {
      const page = await ctx.newPage();
      await page.goto(server.url);
      await settled(page);
      await page.fill('#layout-name', 'my mirror, half parabolized');
      await page.waitForFunction(() => window.catoptric.history.latest()?.name === 'my mirror, half parabolized');
      const link = await page.evaluate(async () => {
        const r = await fetch('presets/cassegrain.json');
        const s = new window.catoptric.session.constructor();
        s.load_json(await r.text());
        return s.link();
      });
      const p2 = await ctx.newPage();
      await p2.goto(`${server.url}${link}`);
      await settled(p2);
      const linked = await p2.inputValue('#layout-name');
      assert.match(linked, /Cassegrain/);
      assert.equal(await p2.isDisabled('#btn-undo'), false, 'Undo is offered');
      await p2.click('#btn-undo');
      assert.equal(await p2.inputValue('#layout-name'), 'my mirror, half parabolized');
    } finally {
      await ctx.close();
    }
  });
});
