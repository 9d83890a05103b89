// Robustness of the page (issue 14): bounded work on the page's own
// thread, layouts over the work budget open paused, traces stopped at a
// limit say why and keep the layout, a wasm trap does not poison the
// session, and the autosave history loses nothing (versions, unrestorable
// entries kept, full storage reported, two tabs).
//
// References: the native `catoptric` (same Rust core) for the work budget
// and the limit's message; the cavity cases follow the report (two
// facing concave spheres, a lamp between them, max_bounces 1000).

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { READY_MS, serverBinary, setUp, settled, tearDown, watchPage } from './harness.mjs';

let env;

before(async () => {
  env = await setUp('catoptric-robust-');
});

after(() => tearDown(env));

/**
 * Two facing concave spheres (R 100 mm, 100 mm apart: confocal), a lamp at
 * the common focus, `screens` transparent screens between them.
 */
function cavity({ name, rays, screens = 1, diameter = 120, cone = 5, bounces = 1000, screenAt = 30 }) {
  const elements = [
    { kind: 'mirror', id: 'left', vertex: [0, 0], axis_deg: 0, form: 'revolved', profile: { radius: 100, conic: 0 }, aperture: { diameter } },
    { kind: 'mirror', id: 'right', vertex: [0, 100], axis_deg: 180, form: 'revolved', profile: { radius: 100, conic: 0 }, aperture: { diameter } },
  ];
  for (let i = 0; i < screens; i++) {
    elements.push({ kind: 'screen', id: `screen-${i + 1}`, center: [0, screenAt + 4 * i], axis_deg: 0, size: diameter, shape: 'circle' });
  }
  return {
    format: 'catoptric-layout', version: 1, name, notes: '', wavelength_nm: 550, max_bounces: bounces, elements,
    sources: [{ kind: 'point', id: 'lamp', center: [0, 50], direction_deg: 180, cone_half_angle_deg: cone, rays, pattern: 'random', power_w: 100 }],
  };
}

function writeLayout(layout) {
  const path = join(env.scratch, `${layout.name.replace(/\W+/g, '-')}.json`);
  writeFileSync(path, JSON.stringify(layout));
  return path;
}

/** Runs the native command and returns { code, stdout, stderr }. */
function run(args) {
  try {
    return { code: 0, stdout: execFileSync(serverBinary(), args, { encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'] }), stderr: '' };
  } catch (e) {
    return { code: e.status, stdout: String(e.stdout), stderr: String(e.stderr) };
  }
}

/** A page with `threads` hardware threads. */
async function newContext(threads = 2) {
  const ctx = await env.browser.newContext({ viewport: { width: 1280, height: 800 }, colorScheme: 'light', acceptDownloads: true });
  await ctx.addInitScript((n) => {
    Object.defineProperty(Navigator.prototype, 'hardwareConcurrency', { get: () => n, configurable: true });
  }, threads);
  return ctx;
}

async function openPage(ctx, url = env.server.url) {
  const page = await ctx.newPage();
  const seen = watchPage(page, env.origin);
  await page.goto(url);
  await page.waitForFunction(() => document.body.dataset.ready === 'true', null, { timeout: READY_MS });
  return { page, seen };
}

const layoutName = (page) => page.evaluate(() => window.catoptric.layout.name);

async function rename(page, name) {
  await page.fill('#layout-name', name);
  await page.waitForFunction((n) => window.catoptric.history.slot()[0]?.name === n, name);
}

async function openFile(page, path) {
  const name = JSON.parse(readFileSync(path, 'utf8')).name;
  await page.setInputFiles('#file-input', path);
  await page.waitForFunction((n) => document.getElementById('layout-name').value === n, name);
}

/** The parts of a layout a load must keep (the page writes it in its own key order). */
async function sameLayout(page, want) {
  const got = await page.evaluate(() => window.catoptric.layout);
  const pick = (L) => JSON.stringify([L.name, L.max_bounces, L.elements.map((e) => [e.id, e.kind]), L.sources.map((x) => [x.id, x.rays])]);
  assert.equal(pick(got), pick(want));
}

/** Names in the History menu (opened), newest first. */
async function historyNames(page) {
  if (await page.locator('#history-menu').isHidden()) await page.click('#btn-history');
  return page.$$eval('#history-menu .history-item .history-name', (els) => els.map((e) => e.textContent));
}

describe('bounded work', () => {
  test('a cavity link over the work budget opens paused without a freeze; Trace anyway runs in the pool and Stop ends it; the earlier work survives a reload', async () => {
    // The screens stand outside the cavity: the worst case is over the
    // budget, and the full trace is long (rays bounce up to 1000 times)
    // without reaching the hit cap, so Stop finds it still running.
    const layout = cavity({ name: 'Ten-screen cavity', rays: 100_000, screens: 10, screenAt: 300 });
    const path = writeLayout(layout);
    // The native front end refuses it for the same reason.
    const cli = run(['trace', path]);
    assert.equal(cli.code, 2);
    assert.match(cli.stderr, /above the budget of 4e9/);
    const link = run(['link', path]).stdout.trim();
    assert.ok(link.startsWith('#L='), link);

    const ctx = await newContext(2);
    try {
      const { page, seen } = await openPage(ctx);
      await settled(page);
      await rename(page, 'Earlier work');

      await page.goto(`${env.server.url}${link}`);
      await page.waitForFunction(() => document.body.dataset.trace === 'paused', null, { timeout: 20_000 });
      assert.equal(await layoutName(page), layout.name);
      const notice = page.locator('#trace-notice');
      assert.equal(await notice.isVisible(), true);
      assert.equal(await notice.getAttribute('data-kind'), 'paused');
      assert.match(await notice.innerText(), /Full trace paused.*above the budget of 4 × 10⁹/s);
      const est = await page.evaluate(() => window.catoptric.session.work_estimate(undefined));
      assert.ok(est > 4e9, `estimate ${est}`);
      // The page's own thread traced a small preview only, quickly.
      const pre = await page.evaluate(() => ({ kind: window.catoptric.result?.kind, launched: window.catoptric.result?.launched }));
      assert.equal(pre.kind, 'preview');
      assert.ok(pre.launched > 0 && pre.launched <= 20_000, `preview of ${pre.launched} rays`);
      assert.equal(await page.locator('#trace-notice-action').innerText(), 'Trace anyway');

      // Trace anyway: the pool runs with progress; Stop ends it and keeps the preview.
      await page.click('#trace-notice-action');
      await page.waitForFunction(() => document.body.dataset.trace === 'running' && !document.getElementById('progress').hidden);
      assert.equal(await notice.isHidden(), true);
      // Stop once the workers are tracing (ending them while they still load
      // the module would only abort those requests).
      await page.waitForFunction(() => document.getElementById('progress-text').textContent !== '0 %', null, { timeout: READY_MS });
      await page.click('#progress-cancel');
      await page.waitForFunction(() => document.body.dataset.trace === 'preview' && document.getElementById('progress').hidden);
      assert.equal(await page.evaluate(() => window.catoptric.background.busy), false);

      // Reload: the cavity comes back paused (no freeze); the earlier work is one version back.
      await page.reload();
      await page.waitForFunction(() => document.body.dataset.ready === 'true' && document.body.dataset.trace === 'paused', null, { timeout: 20_000 });
      assert.equal(await layoutName(page), layout.name);
      const names = await historyNames(page);
      assert.deepEqual(names.slice(0, 2), [layout.name, 'Earlier work']);
      await page.click('#history-menu .history-item:nth-child(3)');
      await settled(page);
      assert.equal(await layoutName(page), 'Earlier work');
      assert.equal(await notice.isHidden(), true);
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('1,000 rays between 254 screens in a cavity: opens paused at once, without even the fan', async () => {
    const layout = cavity({ name: 'Screens in a cavity', rays: 1000, screens: 254 });
    layout.elements.slice(2).forEach((e, i) => { e.center = [0, 10 + 0.3 * i]; });
    const ctx = await newContext(2);
    try {
      const { page, seen } = await openPage(ctx);
      await settled(page);
      await openFile(page, writeLayout(layout));
      await page.waitForFunction(() => document.body.dataset.trace === 'paused', null, { timeout: 20_000 });
      assert.match(await page.locator('#trace-notice').innerText(), /6\.5 × 10¹⁰ ray–element tests.*not even the ray fan/s);
      assert.equal(await page.evaluate(() => window.catoptric.session.fan_rays_traced()), 0);
      // The caustic layer refuses rather than freeze (its rays fit no bound here).
      await page.click('[data-action="caustic"]');
      await page.waitForFunction(() => /caustic could not be drawn: .*bounce too often/.test(document.getElementById('message-text').textContent));
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('a trace that stops at the hit cap shows the core’s message and keeps the layout; one past the page thread’s cap goes to the pool', async () => {
    // 800 rays: little enough work for the page's own thread, but about
    // 400,000 hits, past the 250,000 it records there: the pool traces it,
    // whole (the same hits as the native trace).
    const small = cavity({ name: 'Small cavity', rays: 800 });
    const native = JSON.parse(run(['trace', writeLayout(small), '--json']).stdout);
    assert.ok(native.screens[0].crossings > 250_000, `${native.screens[0].crossings} crossings recorded`);
    // 30,000 rays with a cap of 200,000 hits: the native message.
    const pooled = cavity({ name: 'Pooled cavity', rays: 30_000 });
    const pooledPath = writeLayout(pooled);
    const cli = run(['trace', pooledPath, '--max-hits', '200000']);
    assert.equal(cli.code, 2);
    const message = cli.stderr.trim().replace(/^catoptric: [^:]+: /, '');
    assert.match(message, /more than 200000 screen hits/);

    const ctx = await newContext(2);
    try {
      const { page, seen } = await openPage(ctx);
      await settled(page);
      await openFile(page, writeLayout(small));
      await settled(page);
      const res = await page.evaluate(() => ({ background: window.catoptric.result.background ?? false, hits: window.catoptric.result.report.screens[0].hits, crossings: window.catoptric.result.report.screens[0].crossings }));
      assert.deepEqual(res, { background: true, hits: native.screens[0].hits, crossings: native.screens[0].crossings });
      const notice = page.locator('#trace-notice');
      assert.equal(await notice.isHidden(), true);

      // Through the pool with a lower cap: the slices carry the limit to the merge.
      await page.evaluate(() => { window.catoptric.poolMaxHits = 200_000; });
      await openFile(page, pooledPath);
      await page.waitForFunction(() => document.body.dataset.trace === 'limit', null, { timeout: READY_MS });
      assert.equal(await page.evaluate(() => window.catoptric.result.background), true, 'traced in the pool');
      assert.equal(await notice.getAttribute('data-kind'), 'limit');
      assert.equal(await notice.isVisible(), true);
      assert.ok((await notice.innerText()).includes(`The trace stopped at a limit: ${message}`), await notice.innerText());
      assert.equal(await page.locator('#ro-state').innerText(), 'stopped at a limit');
      await sameLayout(page, pooled);

      // An edit that removes the cause clears the notice.
      await page.evaluate(() => { window.catoptric.poolMaxHits = undefined; window.catoptric.edit((L) => { L.max_bounces = 4; }); });
      await settled(page);
      assert.equal(await notice.isHidden(), true);
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('slices hand their limit to the merge', async () => {
    const ctx = await newContext(2);
    try {
      const { page } = await openPage(ctx);
      const out = await page.evaluate((layout) => {
        const Session = window.catoptric.session.constructor;
        const parts = [0, 1].map((k) => {
          const s = new Session();
          s.load_json(JSON.stringify(layout));
          s.set_max_hits(100_000);
          s.trace_slice(undefined, k, 2, undefined);
          return s;
        });
        const m = parts[0];
        const limits = parts.map((s) => s.slice_limit() ?? null);
        const other = parts[1];
        const counts = other.slice_counts();
        const launched = other.slice_launched_by_source();
        const power = other.slice_power_by_source();
        const hits = [...Array(other.screen_count()).keys()].map((i) => other.slice_hits(i));
        m.clear_slices();
        m.keep_slice();
        m.add_slice(counts, launched, power, other.slice_limit());
        for (const h of hits) m.add_slice_hits(h);
        m.merge_slices(undefined, 2, 0);
        let bad = null;
        try { m.add_slice(counts, launched, power, 0.5); } catch (e) { bad = e.message; }
        return { limits, message: m.limit_message() ?? null, bad };
      }, cavity({ name: 'Sliced cavity', rays: 3000 }));
      assert.deepEqual(out.limits, [100_000, 100_000]);
      assert.match(out.message, /more than 100000 screen hits/);
      assert.match(out.bad, /hit cap must be a whole number/);
    } finally {
      await ctx.close();
    }
  });
});

describe('wasm traps', () => {
  test('a trap re-creates the module and the session with the last good layout; edits, undo, files and examples keep working', async () => {
    const ctx = await newContext(2);
    try {
      const { page } = await openPage(ctx);
      await settled(page);
      await rename(page, 'Before the trap');
      const before = await page.evaluate(() => window.catoptric.currentJson());
      const thrown = await page.evaluate(() => {
        try { window.catoptric.session.__trapForTests(); } catch (e) { return String(e.message); }
        return null;
      });
      assert.match(thrown, /WebAssembly module stopped \(unreachable/);
      await page.waitForFunction(() => document.body.dataset.recoveries === '1');
      assert.match(await page.locator('#message-text').innerText(), /restarted with your layout/);
      await settled(page);
      // The new session holds the last good layout.
      assert.equal(await page.evaluate(() => JSON.stringify(JSON.parse(window.catoptric.session.layout_json()))), before);

      // Edits, undo, an example and a file all work afterwards.
      await rename(page, 'After the trap');
      await settled(page);
      await page.click('#btn-undo');
      await page.waitForFunction(() => window.catoptric.layout.name === 'Before the trap');
      await page.selectOption('#presets', 'cassegrain.json');
      await page.waitForFunction(() => /Cassegrain/i.test(window.catoptric.layout.name));
      await settled(page);
      await openFile(page, writeLayout(cavity({ name: 'A file after the trap', rays: 500, bounces: 8 })));
      await settled(page);
      assert.ok(await page.evaluate(() => window.catoptric.result.launched) > 0);

      // A second trap is recovered from as well (a spare instance is made again).
      await page.evaluate(() => { try { window.catoptric.session.__trapForTests(); } catch { /* recovered from */ } });
      await page.waitForFunction(() => document.body.dataset.recoveries === '2');
      await settled(page);
      assert.equal(await layoutName(page), 'A file after the trap');
      const log = await page.evaluate(() => document.getElementById('message-text').textContent);
      assert.doesNotMatch(log, /recursive use/);

      // A layout whose trace traps every time: one retry, then the trace
      // waits for the user (no loop of traces and traps).
      await page.evaluate(() => {
        const app = window.catoptric;
        app.realTraceMain = app.traceMain;
        app.traceMain = function trapping() { this.session.__trapForTests(); };
        app.requestTrace(false);
      });
      await page.waitForFunction(() => document.body.dataset.trace === 'paused');
      assert.equal(await page.evaluate(() => document.body.dataset.recoveries), '4');
      await page.evaluate(() => { const app = window.catoptric; app.traceMain = app.realTraceMain; });
      assert.match(await page.locator('#trace-notice').innerText(), /stopped the WebAssembly module twice/);
      await page.click('#trace-notice-action');
      await settled(page);
      assert.equal(await layoutName(page), 'A file after the trap');
    } finally {
      await ctx.close();
    }
  });
});

describe('autosave history', () => {
  test('opening an example and a file keeps the earlier work one version back, also after a reload; History restores it', async () => {
    const ctx = await newContext(2);
    try {
      const { page, seen } = await openPage(ctx);
      await settled(page);
      await rename(page, 'My own mirror');
      await page.selectOption('#presets', 'sphere-f5.json');
      await page.waitForFunction(() => /sphere/i.test(window.catoptric.layout.name));
      const example = await layoutName(page);
      await openFile(page, writeLayout(cavity({ name: 'A small file', rays: 500, bounces: 8 })));
      await settled(page);
      await page.reload();
      await settled(page);
      assert.equal(await layoutName(page), 'A small file');
      const names = await historyNames(page);
      assert.deepEqual(names.slice(0, 3), ['A small file', example, 'My own mirror']);
      assert.ok(names.length <= 12);
      await page.click('#history-menu .history-item:nth-child(4)');
      await settled(page);
      assert.equal(await layoutName(page), 'My own mirror');
      // Undo brings back what was open.
      await page.click('#btn-undo');
      await page.waitForFunction(() => window.catoptric.layout.name === 'A small file');
      assert.deepEqual(seen.errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('a saved version that cannot be restored is kept as it was and offered for download; the next one opens', async () => {
    const ctx = await newContext(2);
    try {
      const { page } = await openPage(ctx);
      await settled(page);
      await rename(page, 'Good older work');
      const bad = JSON.stringify({ ...JSON.parse(await page.evaluate(() => window.catoptric.currentJson())), name: 'From a newer page', version: 2 });
      await page.evaluate((text) => {
        // Another tab's newer save, which this page cannot read.
        localStorage.setItem('catoptric.v2.tab.othertab', JSON.stringify([{ t: Date.now() + 60_000, start: Date.now(), name: 'From a newer page', json: text }]));
      }, bad);
      await page.reload();
      await settled(page);
      assert.equal(await layoutName(page), 'Good older work');
      const msg = await page.locator('#message-text').innerText();
      assert.match(msg, /“From a newer page”.*could not be restored: .*version/s);
      const [dl] = await Promise.all([page.waitForEvent('download'), page.click('#message-text .message-action')]);
      assert.match(dl.suggestedFilename(), /^from-a-newer-page-unrestored-.*\.json$/i);
      assert.equal(readFileSync(await dl.path(), 'utf8'), bad);

      // Edits do not write over it; History lists it with the error and a download.
      await rename(page, 'Edited afterwards');
      const kept = await page.evaluate(() => window.catoptric.history.kept());
      assert.equal(kept.length, 1);
      assert.equal(kept[0].json, bad);
      assert.equal(await page.evaluate(() => JSON.parse(localStorage.getItem('catoptric.v2.tab.othertab'))[0].json), bad);
      await page.click('#btn-history');
      const row = page.locator('#history-menu .history-kept');
      assert.match(await row.innerText(), /From a newer page[\s\S]*version/);
      const [dl2] = await Promise.all([page.waitForEvent('download'), row.locator('button', { hasText: 'Download' }).click()]);
      assert.equal(readFileSync(await dl2.path(), 'utf8'), bad);
      // Reloading does not retry it blindly or lose it.
      await page.reload();
      await settled(page);
      assert.equal(await layoutName(page), 'Edited afterwards');
      assert.equal((await page.evaluate(() => window.catoptric.history.kept())).length, 1);
    } finally {
      await ctx.close();
    }
  });

  test('a full storage is reported and the layout stays in the page', async () => {
    const ctx = await newContext(2);
    try {
      const { page } = await openPage(ctx);
      await settled(page);
      await rename(page, 'Saved before the storage filled');
      // Fill the origin's storage with a throwaway key.
      await page.evaluate(() => {
        let chunk = 'x'.repeat(1 << 20);
        let filler = '';
        for (;;) {
          try { localStorage.setItem('filler', filler + chunk); filler += chunk; } catch {
            if (chunk.length <= 64) break;
            chunk = chunk.slice(0, chunk.length >> 1);
          }
        }
      });
      const big = 'n'.repeat(60_000);
      assert.equal(await page.evaluate((notes) => window.catoptric.edit((L) => { L.notes = notes; L.name = 'Too big to keep'; }), big), null);
      await page.waitForFunction(() => document.getElementById('btn-history').dataset.saved === 'false');
      assert.match(await page.locator('#message-text').innerText(), /Could not keep this layout in the browser: .*full.*stays open in this tab/);
      assert.equal(await page.locator('#message').isVisible(), true);
      assert.equal(await layoutName(page), 'Too big to keep');
      // Room again: the next edit is kept.
      await page.evaluate(() => localStorage.removeItem('filler'));
      await rename(page, 'Kept again');
      assert.equal(await page.locator('#btn-history').getAttribute('data-saved'), 'true');
    } finally {
      await ctx.close();
    }
  });

  test('two tabs keep their own work; the newer opens on reload, the other is one version back; a tab hears of newer work', async () => {
    const ctx = await newContext(2);
    try {
      const a = await openPage(ctx);
      await settled(a.page);
      const b = await openPage(ctx);
      await settled(b.page);
      await rename(a.page, 'Work in tab A');
      await rename(b.page, 'Work in tab B');
      // Tab A hears of B's newer save and keeps its own layout.
      await a.page.waitForFunction(() => /Another tab saved newer work/.test(document.getElementById('message-text').textContent));
      assert.equal(await layoutName(a.page), 'Work in tab A');
      // A's older edit after B's does not overwrite B's work, nor B A's.
      await rename(a.page, 'More work in tab A');
      const slots = await a.page.evaluate(() => Object.keys(localStorage).filter((k) => k.startsWith('catoptric.v2.tab.'))
        .map((k) => JSON.parse(localStorage.getItem(k))[0].name).sort());
      assert.deepEqual(slots, ['More work in tab A', 'Work in tab B']);
      // Reloading B opens the newest (A's), and B's own work is listed.
      await b.page.reload();
      await settled(b.page);
      assert.equal(await layoutName(b.page), 'More work in tab A');
      assert.ok((await historyNames(b.page)).includes('Work in tab B'));
    } finally {
      await ctx.close();
    }
  });
});
