// The page on a laptop screen (1280×800 and 1400×900): with a sun layout
// and the analysis drawer open the drawing keeps at least 300 px of height
// below the folded sunlight caution, every tool stays in reach, the drawer
// is resized by its top edge and remembers it, and the spot view gives
// each source its own panel. Waits are on conditions, never fixed sleeps.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { native, settled, setUp, tearDown, watchPage } from './harness.mjs';

let env;
before(async () => { env = await setUp(); });
after(() => tearDown(env));

const SIZES = [[1280, 800], [1400, 900]];
/** The height the drawing keeps (the page's own target, common practice for a usable canvas). */
const MIN_DRAWING = 300;

async function openPage(width, height, ctxIn) {
  const ctx = ctxIn ?? await env.browser.newContext({ viewport: { width, height }, colorScheme: 'light' });
  const page = await ctx.newPage();
  const seen = watchPage(page, env.origin);
  await page.goto(env.server.url);
  await settled(page);
  return { ctx, page, seen };
}

async function openPreset(page, file) {
  await page.selectOption('#presets', file);
  await settled(page);
}

async function openDrawer(page, view = 'spot') {
  await page.evaluate((v) => window.catoptric.drawer.open(true, v), view);
  await page.waitForFunction(() => {
    const d = document.getElementById('drawer');
    const want = getComputedStyle(d).getPropertyValue('--drawer-h');
    return Math.abs(d.getBoundingClientRect().height - parseFloat(want)) < 1;
  });
}

/** Canvas box, folded caution box and toolbox buttons, in page pixels. */
function boxes(page) {
  return page.evaluate(() => {
    const r = (el) => { const b = el.getBoundingClientRect(); return { top: b.top, bottom: b.bottom, left: b.left, right: b.right, height: b.height }; };
    const tb = document.getElementById('toolbox');
    return {
      canvas: r(document.getElementById('canvas')),
      drawing: r(document.getElementById('drawing')),
      caution: document.getElementById('sun-caution').hidden ? null : r(document.getElementById('sun-caution')),
      tools: [...tb.querySelectorAll('button')].map(r),
      toolboxScrolls: tb.scrollHeight > tb.clientHeight + 1,
      drawer: r(document.getElementById('drawer')),
    };
  });
}

/**
 * [`boxes`] once the layout has held still for a few frames: the readout
 * strip's figures change as traces and analyses finish and may wrap onto
 * another line, and the page refits the drawer to that a frame later, so
 * a box read in between is half-way through a refit.
 */
async function steadyBoxes(page) {
  const STILL_FRAMES = 5;
  await page.waitForFunction((still) => {
    const sig = ['canvas', 'drawer', 'readout', 'sun-caution']
      .map((id) => { const b = document.getElementById(id).getBoundingClientRect(); return `${b.top},${b.height}`; })
      .join('|') + document.getElementById('readout').textContent;
    const s = (window.__steady ??= { sig: '', frames: 0 });
    s.frames = s.sig === sig ? s.frames + 1 : 0;
    s.sig = sig;
    return s.frames >= still;
  }, STILL_FRAMES, { polling: 'raf' });
  await page.evaluate(() => { delete window.__steady; });
  return boxes(page);
}

describe('the page at laptop sizes', () => {
  for (const [w, h] of SIZES) {
    test(`${w}×${h}: a sun layout with the drawer open keeps ${MIN_DRAWING} px of drawing; every tool in reach; the caution folds`, async () => {
      const { ctx, page, seen } = await openPage(w, h);
      try {
        await openPreset(page, 'solar-dish.json');
        await page.locator('#sun-caution').waitFor({ state: 'visible' });
        await openDrawer(page);
        const b = await steadyBoxes(page);
        const below = b.canvas.bottom - Math.max(b.canvas.top, b.caution.bottom);
        assert.ok(below >= MIN_DRAWING, `drawing below the caution: ${below} px`);
        // The caution is one line (with its toggle), over the drawing.
        assert.ok(b.caution.height < 40, `folded caution ${b.caution.height} px`);
        assert.ok(b.caution.top >= b.drawing.top - 0.5, 'the caution lies over the drawing, not above it');
        assert.ok(await page.isVisible('#concentration-caution'), 'the concentration warning is in the folded line');
        // Every tool inside the drawing, no inner scroll.
        assert.equal(b.toolboxScrolls, false, 'the toolbox does not scroll');
        for (const t of b.tools) assert.ok(t.bottom <= b.drawing.bottom && t.top >= b.drawing.top, `a tool at ${t.top}–${t.bottom} is outside the drawing`);
        // Unfolding the caution overlays the drawing: the canvas does not move.
        await page.click('#caution-more');
        await page.waitForFunction(() => document.getElementById('sun-caution').dataset.expanded === 'true');
        const c = await steadyBoxes(page);
        assert.ok(c.caution.height > b.caution.height, 'unfolded, the caution shows more');
        // (Sub-pixel changes come from the readout's line wrapping settling.)
        assert.ok(Math.abs(c.canvas.top - b.canvas.top) < 1 && Math.abs(c.canvas.height - b.canvas.height) < 1,
          `the drawing stays put: ${c.canvas.top}/${c.canvas.height} vs ${b.canvas.top}/${b.canvas.height}`);
        assert.equal(await page.textContent('#caution-more'), 'less');
        assert.deepEqual(seen.errors, []);
      } finally {
        await ctx.close();
      }
    });
  }

  test('the drawer is resized by dragging its top edge, never leaves the drawing less than 300 px, and keeps its height over a reload', async () => {
    const ctx = await env.browser.newContext({ viewport: { width: 1280, height: 800 } });
    try {
      const { page } = await openPage(1280, 800, ctx);
      await openDrawer(page);
      const h0 = (await boxes(page)).drawer.height;
      const grip = await page.locator('#drawer .drawer-grip').boundingBox();
      const x = grip.x + grip.width / 2, y = grip.y + grip.height / 2;
      // Shorter by 100 px.
      await page.mouse.move(x, y);
      await page.mouse.down();
      await page.mouse.move(x, y + 100, { steps: 4 });
      await page.mouse.up();
      const h1 = (await boxes(page)).drawer.height;
      assert.ok(Math.abs(h1 - (h0 - 100)) < 2, `dragged from ${h0} to ${h1}`);
      // Far up: held so the drawing keeps its 300 px.
      const g2 = await page.locator('#drawer .drawer-grip').boundingBox();
      await page.mouse.move(x, g2.y + 3);
      await page.mouse.down();
      await page.mouse.move(x, 20, { steps: 6 });
      await page.mouse.up();
      const b = await boxes(page);
      assert.ok(b.canvas.height >= MIN_DRAWING - 0.5, `drawing ${b.canvas.height} px`);
      assert.ok(b.drawer.height > h0, 'the drawer grew');
      // Remembered over a reload.
      await page.reload();
      await settled(page);
      await openDrawer(page);
      const again = (await boxes(page)).drawer.height;
      assert.ok(Math.abs(again - b.drawer.height) < 2, `after a reload ${again}, before ${b.drawer.height}`);
    } finally {
      await ctx.close();
    }
  });

  test('adding a sun with the drawer open does not move the drawing under the pointer', async () => {
    const { ctx, page } = await openPage(1280, 800);
    try {
      await openDrawer(page);
      const at = () => page.evaluate(() => {
        const a = window.catoptric;
        const v = a.layout.elements[0].vertex;
        const r = document.getElementById('canvas').getBoundingClientRect();
        const [x, y] = a.editor.toScreen(v[0], v[1]);
        return [x + r.left, y + r.top];
      });
      // The user has zoomed (no automatic fit any more).
      const c = await page.locator('#canvas').boundingBox();
      await page.mouse.move(c.x + c.width / 2, c.y + c.height / 2);
      await page.mouse.wheel(0, -100);
      await page.waitForFunction(() => window.catoptric.editor.autoFit === false);
      const p0 = await at();
      await page.click('#toolbox [data-tool="sun"]');
      await page.mouse.click(c.x + 250, c.y + 60);
      await page.locator('#sun-caution').waitFor({ state: 'visible' });
      await settled(page);
      await page.evaluate(() => new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r))));
      const p1 = await at();
      assert.ok(Math.hypot(p1[0] - p0[0], p1[1] - p0[1]) < 1, `the mirror moved from ${p0} to ${p1}`);
    } finally {
      await ctx.close();
    }
  });

  test('the spot view gives each source its own panel, centred on its own centroid; wheel zooms; the Airy legend only when drawn', async () => {
    // A two-mirror design with an on-axis and an off-axis star: their
    // spots lie millimetres apart and are micrometres wide.
    const design = JSON.parse(native(['design', 'two-mirror', '--type', 'ritchey-chretien', '--diameter', '200', '--primary-focal', '600',
      '--focal', '1600', '--back-focus', '125', '--field-deg', '0.5', '--json']));
    for (const [w, h] of SIZES) {
      const { ctx, page, seen } = await openPage(w, h);
      try {
        await page.evaluate((t) => window.catoptric.loadText(t, 'the design'), JSON.stringify(design.layout));
        await settled(page);
        await openDrawer(page, 'spot');
        await page.waitForFunction(() => (window.catoptric.drawer.views[0].panels ?? []).length === 2);
        const out = await page.evaluate(() => {
          const v = window.catoptric.drawer.views[0];
          const cv = v.canvas;
          const dpr = window.devicePixelRatio || 1;
          const img = cv.getContext('2d').getImageData(0, 0, cv.width, cv.height);
          const bg = [...img.data.slice(0, 3)];
          // Non-background pixels within 12 px of each panel's centre
          // (the crosshair is one pixel wide: count coloured ones only).
          const near = v.panels.map((p) => {
            let n = 0;
            for (let dy = -12; dy <= 12; dy++) {
              for (let dx = -12; dx <= 12; dx++) {
                const i = 4 * (Math.round((p.cy + dy) * dpr) * cv.width + Math.round((p.cx + dx) * dpr));
                const [r, g, b] = img.data.slice(i, i + 3);
                if (Math.abs(r - b) > 40 && (r !== bg[0] || g !== bg[1] || b !== bg[2])) n++;
              }
            }
            return n;
          });
          return { near, options: [...document.querySelectorAll('#spot-sources option')].map((o) => o.value), airy: v.airyDrawn, note: v.note.dataset.drawn };
        });
        assert.ok(out.near.every((n) => n > 0), `each panel has its spot at its centre: ${out.near}`);
        assert.deepEqual(out.options, ['panels', 'together', 'src:on-axis', 'src:off-axis']);
        assert.equal(out.airy, true, 'the Airy circles of two stars are drawn');
        assert.equal(out.note, 'random', 'the picture is drawn from the random-pattern trace');
        // The wheel zooms about the pointer.
        const box = await page.locator('#view-spot .view-plot canvas').boundingBox();
        await page.mouse.move(box.x + box.width / 4, box.y + box.height / 2);
        await page.mouse.wheel(0, -300);
        await page.waitForFunction(() => window.catoptric.drawer.views[0].zoom > 1);
        assert.deepEqual(seen.errors, []);
      } finally {
        await ctx.close();
      }
    }
  });

  test('a sun spot: no Airy legend, and its size reads in mm', async () => {
    const { ctx, page } = await openPage(1280, 800);
    try {
      await openPreset(page, 'solar-dish.json');
      await openDrawer(page, 'spot');
      await page.waitForFunction(() => (window.catoptric.drawer.views[0].panels ?? []).length === 1);
      assert.equal(await page.evaluate(() => window.catoptric.drawer.views[0].airyDrawn), false);
      const cell = await page.textContent('#stats tr:has(td[data-stat="rms_radius_um"]) th');
      assert.match(cell, /RMS radius mm/);
    } finally {
      await ctx.close();
    }
  });

  test('free-form: revolved when chosen while drawing, knots off the 10 mm grid with Alt, edge sag including the departure', async () => {
    const { ctx, page, seen } = await openPage(1280, 800);
    try {
      await page.click('#toolbox [data-tool="freeform"]');
      await page.selectOption('#freeform-form', 'revolved');
      const c = await page.locator('#canvas').boundingBox();
      const clicks = [[400, 150], [437, 300], [400, 450]];
      for (const [x, y] of clicks) await page.mouse.click(c.x + x, c.y + y, { modifiers: ['Alt'] });
      const world = await page.evaluate((pts) => pts.map(([x, y]) => window.catoptric.editor.toWorld(x, y)), clicks);
      await page.keyboard.press('Enter');
      await settled(page);
      const m = await page.evaluate(() => window.catoptric.layout.elements.at(-1));
      assert.equal(m.form, 'revolved');
      // The middle knot's distance from the chord (plane geometry) is the
      // sag of the rim measured from the surface on the axis.
      const [a, mid, b] = world;
      const ty = b[0] - a[0], tz = b[1] - a[1];
      const dist = Math.abs((mid[0] - a[0]) * tz - (mid[1] - a[1]) * ty) / Math.hypot(ty, tz);
      const text = await page.textContent('#props .derived');
      const got = Number(/edge sag ([\d.]+)\u202fmm/.exec(text)?.[1]);
      assert.ok(Math.abs(got - dist) < 0.2, `edge sag ${text}, drawn ${dist} mm`);
      // Alt placed the middle knot off the grid step.
      assert.ok(m.profile.departure.some(([, z]) => Math.abs(z - Math.round(z / 10) * 10) > 1e-6), JSON.stringify(m.profile.departure));
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('messages: the page’s labels and plain words, shown once, cleared by the next good edit', async () => {
    const { ctx, page, seen } = await openPage(1280, 800);
    try {
      // A radius too short for the aperture: the core names the diameter
      // ((1+K)c²ρ² ≥ 1 past the conic's domain, docs/FORMATS.md §2).
      const v = await page.evaluate(() => window.catoptric.layout.elements[0].vertex);
      await page.evaluate((vv) => window.catoptric.select({ list: 'elements', index: 0 }), v);
      await page.locator('#props input[data-path$="profile.conic"]').fill('0');
      await settled(page);
      const radius = page.locator('#props input[data-path$="profile.radius"]:visible').first();
      await radius.waitFor();
      // R (or f) of 40 mm: a sphere of that radius cannot reach 100 mm out.
      await radius.fill('40');
      await page.waitForFunction(() => document.querySelectorAll('#props .field-error:not([hidden])').length > 0);
      const errs = await page.$$eval('#props .field-error:not([hidden])', (els) => els.map((e) => e.textContent));
      assert.equal(errs.length, 1, `one message: ${JSON.stringify(errs)}`);
      assert.match(errs[0], /^diameter: /);
      assert.doesNotMatch(errs[0], /elements\[|expected f64/);
      assert.equal(await page.locator('#props .field.invalid').count(), 2, 'both fields are marked');
      await radius.fill('2000');
      await page.waitForFunction(() => document.querySelectorAll('#props .field.invalid').length === 0);

      // A message about an entry goes when the next edit goes through.
      await page.evaluate(() => window.catoptric.message('elements[0].aperture.diameter: must be a number, not the text "x"', 'error', { input: true }));
      assert.equal(await page.textContent('#message-text'), 'mirror “primary”, diameter: must be a number, not the text "x"');
      await radius.fill('2100');
      await page.waitForFunction(() => document.getElementById('message').hidden);

      // Designers: an impossible off-axis segment and a very fast primary are flagged.
      await openDrawer(page, 'designers');
      const off = page.locator('#off-axis-form [name="offset"]');
      await off.fill('50');
      await page.waitForFunction(() => /across the parent axis/.test(document.querySelector('#off-axis .design-warning')?.textContent ?? ''));
      await page.fill('#two-mirror-form [name="primary_focal"]', '300');
      await page.waitForFunction(() => /faster than f\/1\.5/.test(document.querySelector('#two-mirror .design-warning')?.textContent ?? ''));

      // The conic list takes commas, semicolons and spaces.
      await openDrawer(page, 'conics');
      await page.fill('#conics-form [name="conics"]', '0; -1 -2');
      await page.waitForFunction(() => document.getElementById('conics-out')?.dataset.state === 'ok');
      const ks = await page.$$eval('#conics-table thead th', (els) => els.map((e) => e.textContent).slice(1));
      assert.deepEqual(ks, ['0', '−1', '−2']);
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });
});
