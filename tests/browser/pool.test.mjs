// The page's worker pool (www/js/pool.js, DEVELOPERS.md, the page's trace pool): a long trace cut
// into numbered slices, one per worker, merged in ray order, is exactly the
// whole trace, and a newer trace stops the running one.
//
// References: the native `catoptric trace --json` on the same layout (the
// same Rust core compiled natively; ray and hit counts exactly, other
// figures to a relative 1e-6 as in the other browser tests, common
// practice), and, bit for bit, the same wasm module tracing the whole layout
// in one session on the page.
//
// The pool's size follows navigator.hardwareConcurrency, which the tests
// set per browser context, so the slicing does not depend on this machine.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { WWW, assertMatchesNative, native, readStats, setUp, settled, tearDown, watchPage } from './harness.mjs';

let env;

before(async () => {
  env = await setUp('catoptric-pool-');
});

after(() => tearDown(env));

/**
 * The f/5 sphere with a second, tilted beam (seeded random pattern) and a
 * second screen past the focus: two sources on two screens, so the merge
 * has to interleave sources and slices. `rays` are the two sources' counts.
 */
function twoBeamLayout(name, rays) {
  const L = JSON.parse(readFileSync(join(WWW, 'presets', 'sphere-f5.json'), 'utf8'));
  L.name = name;
  L.sources[0].rays = rays[0];
  L.sources.push({ ...L.sources[0], id: 'tilted', direction_deg: 0.2, pattern: 'random', rays: rays[1] });
  L.elements.push({ kind: 'screen', id: 'beyond', center: [0, -20], axis_deg: 0, size: 40, shape: 'square' });
  const path = join(env.scratch, `${name.replace(/\W+/g, '-')}.json`);
  writeFileSync(path, JSON.stringify(L));
  return path;
}

/**
 * A page whose navigator reports `threads` hardware threads; it counts the
 * trace workers it makes (window.workersMade) and the results it shows
 * (window.results).
 */
async function openPage(threads) {
  const ctx = await env.browser.newContext({ viewport: { width: 1280, height: 800 }, colorScheme: 'light' });
  await ctx.addInitScript((n) => {
    Object.defineProperty(Navigator.prototype, 'hardwareConcurrency', { get: () => n, configurable: true });
    window.workersMade = 0;
    const Real = window.Worker;
    window.Worker = class extends Real {
      constructor(...args) {
        super(...args);
        // Trace workers only (the image worker, psf-worker.js, is not the pool's).
        if (/\/worker\.js(\?|$)/.test(String(args[0]))) window.workersMade++;
      }
    };
  }, threads);
  const page = await ctx.newPage();
  const seen = watchPage(page, env.origin);
  await page.goto(env.server.url);
  await settled(page);
  await page.evaluate(() => {
    const app = window.catoptric;
    window.results = [];
    const set = app.setResult.bind(app);
    app.setResult = (res) => {
      window.results.push({ kind: res.kind, launched: res.launched, workers: res.workers ?? null });
      set(res);
    };
    window.progressSeen = false;
    new MutationObserver(() => { if (!document.getElementById('progress').hidden) window.progressSeen = true; })
      .observe(document.getElementById('progress'), { attributes: true, attributeFilter: ['hidden'] });
  });
  return { ctx, page, seen };
}

async function openFile(page, path) {
  const name = JSON.parse(readFileSync(path, 'utf8')).name;
  await page.setInputFiles('#file-input', path);
  await page.waitForFunction((n) => document.getElementById('layout-name').value === n, name);
}

describe('the trace worker pool', () => {
  test('three workers: the merged slices are the whole trace, bit for bit, and match the native trace', async () => {
    // Odd counts, so the slices differ in size.
    const path = twoBeamLayout('Two beams, pooled', [300_001, 200_002]);
    const report = JSON.parse(native(['trace', path, '--json']));
    const { ctx, page, seen } = await openPage(3);
    try {
      await openFile(page, path);
      await settled(page);
      assert.equal(await page.evaluate(() => window.progressSeen), true, 'the progress indicator showed');
      assert.equal(await page.evaluate(() => window.catoptric.result.background), true, 'the full trace came from the pool');
      assert.equal(await page.evaluate(() => document.getElementById('ro-time').dataset.workers), '3', 'three workers took part');
      assert.equal(await page.evaluate(() => window.workersMade), 3, 'one worker per reported hardware thread');
      assertMatchesNative(await readStats(page), report);

      // The same module tracing the whole layout in one session on the
      // page: the same report text and the same hits, bit for bit.
      const same = await page.evaluate(() => {
        const app = window.catoptric;
        const res = app.result;
        const s = new app.session.constructor();
        try {
          s.load_json(app.session.layout_json());
          s.retrace(undefined);
          const bits = (a) => new Uint8Array(a.buffer, a.byteOffset, a.byteLength);
          const equal = (a, b) => a.length === b.length && bits(a).every((x, i) => x === bits(b)[i]);
          const screens = [];
          for (let i = 0; i < s.screen_count(); i++) {
            const n = s.select_spot(i);
            const p = res.spot(i);
            screens.push({
              hits: n, pooled: p.total, stride: p.stride,
              uv: equal(s.spot_uv_view(), p.uv), src: equal(s.spot_source_view(), p.src), w: equal(s.spot_weight_view(), p.w),
            });
          }
          return { report: s.report_json() === res.reportText, launched: s.rays_launched() === res.launched, screens };
        } finally {
          s.free();
        }
      });
      assert.equal(same.report, true, 'the report of the pooled trace is the one-session report');
      assert.equal(same.launched, true);
      assert.equal(same.screens.length, 2);
      for (const sc of same.screens) {
        assert.ok(sc.hits > 0, 'hits on each screen');
        assert.deepEqual(sc, { hits: sc.hits, pooled: sc.hits, stride: 1, uv: true, src: true, w: true });
      }
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('bad slices are refused with a message naming what is wrong', async () => {
    const { ctx, page, seen } = await openPage(2);
    try {
      const messages = await page.evaluate(() => {
        const app = window.catoptric;
        const s = new app.session.constructor();
        const tryIt = (f) => { try { f(); return 'accepted'; } catch (e) { return String(e?.message ?? e); } };
        try {
          s.load_json(app.session.layout_json());
          const f = (n) => new Float64Array(n);
          const cols = (n, m = n) => [f(n), f(n), f(n), f(n), f(n), f(n), f(n), new Uint32Array(m), new Uint8Array(n)];
          return {
            slice: tryIt(() => s.trace_slice(undefined, 2, 2, undefined)),
            hitsFirst: tryIt(() => s.add_slice_hits(cols(1))),
            counters: tryIt(() => s.add_slice(f(3), f(1), f(1))),
            fraction: tryIt(() => s.add_slice(Float64Array.of(1.5, 0, 0, 0), f(1), f(1))),
            sources: tryIt(() => s.add_slice(f(4), f(2), f(1))),
            good: tryIt(() => s.add_slice(f(4), f(1), f(1))),
            lengths: tryIt(() => s.add_slice_hits(cols(3, 2))),
            columns: tryIt(() => s.add_slice_hits(cols(3).slice(0, 7))),
            firsts: tryIt(() => s.add_slice_hits([...cols(3).slice(0, 8), new Float64Array(3)])),
            type: tryIt(() => s.add_slice_hits([...cols(3).slice(0, 7), new Float64Array(3), new Uint8Array(3)])),
            order: tryIt(() => s.add_slice_hits([...cols(2).slice(0, 7), Uint32Array.of(0, 5), new Uint8Array(2)])),
            count: tryIt(() => s.merge_slices(undefined, 2, 0)),
            missing: tryIt(() => { s.add_slice(f(4), f(1), f(1)); s.merge_slices(undefined, 1, 0); }),
          };
        } finally {
          s.free();
        }
      });
      assert.match(messages.slice, /k = 2, parts = 2/);
      assert.match(messages.hitsFirst, /add_slice must come first/);
      assert.match(messages.counters, /expected 4 counters, got 3/);
      assert.match(messages.fraction, /rays launched must be a whole number/);
      assert.match(messages.sources, /expected 1 sources, got 2 launched counts and 1 powers/);
      assert.equal(messages.good, 'accepted');
      assert.match(messages.lengths, /columns differ in length/);
      assert.match(messages.columns, /expected 9 columns, got 7/);
      assert.match(messages.firsts, /column 8 \(first arrival\) must be a Uint8Array/);
      assert.match(messages.type, /column 7 \(source\) must be a Uint32Array/);
      assert.match(messages.order, /sources must be ascending indices below 1/);
      assert.match(messages.count, /expected 2 slices, got 1/);
      assert.match(messages.missing, /slice 0 has 0 screens and 1 sources, the layout 1 and 1/);
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('a newer trace stops the running one: its workers end and only the newer result shows', async () => {
    const big = twoBeamLayout('Two beams, very many rays', [2_000_000, 2_000_000]);
    const path = twoBeamLayout('Two beams, after', [150_000, 100_001]);
    const report = JSON.parse(native(['trace', path, '--json']));
    const { ctx, page, seen } = await openPage(2);
    try {
      await page.evaluate(() => { window.workersMade = 0; });
      await openFile(page, big);
      await page.waitForFunction(() => !document.getElementById('progress').hidden && window.workersMade === 2);
      await openFile(page, path);
      await settled(page);
      assert.equal(await page.evaluate(() => window.workersMade), 4, 'the running pool was ended and a new one made');
      assert.equal(await page.evaluate(() => document.getElementById('ro-time').dataset.workers), '2');
      const results = await page.evaluate(() => window.results);
      assert.ok(results.every((r) => r.launched !== 4_000_000), 'no result of the stopped trace showed');
      assert.deepEqual(results.at(-1), { kind: 'full', launched: report.rays_launched, workers: 2 });
      assertMatchesNative(await readStats(page), report);
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });
});
