// Offline use from a plain static host (not `catoptric serve`): a copy of
// www/ is served under a sub-path by a small file server written here. The
// page is loaded once, its service worker copies it, then the server stops
// and the browser goes offline: the page must reload, open an example and
// trace. A new build (changed page, new offline.js) is then published:
// while one of its files fails the old copy stays whole and in use; once
// the files are all there the new copy is made in full, the open page keeps
// the old one, and the next visit opens the new version with the old cache
// gone. Expected behaviour: Service Workers (W3C) install/activate
// lifecycle and Cache API semantics.

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { cpSync, mkdtempSync, readFileSync, rmSync, writeFileSync, existsSync } from 'node:fs';
import { createServer } from 'node:http';
import { tmpdir } from 'node:os';
import { extname, join, normalize } from 'node:path';
import { REPO, WWW, launchBrowser, settled, startServer } from './harness.mjs';

const SUB = '/tools/catoptric/';
const TYPES = {
  '.html': 'text/html; charset=utf-8', '.js': 'text/javascript', '.css': 'text/css', '.json': 'application/json',
  '.wasm': 'application/wasm', '.svg': 'image/svg+xml', '.webmanifest': 'application/manifest+json',
};

/** A plain static server for `root` under SUB; `failing` paths answer 500. */
function staticHost(root) {
  const host = { failing: new Set(), requests: 0 };
  const handler = (req, res) => {
    host.requests++;
    const path = decodeURIComponent(new URL(req.url, 'http://x').pathname);
    if (!path.startsWith(SUB)) { res.writeHead(404).end('not found'); return; }
    let rel = normalize(path.slice(SUB.length));
    if (rel.startsWith('..')) { res.writeHead(400).end(); return; }
    if (rel === '.' || rel === '') rel = 'index.html';
    if (host.failing.has(rel)) { res.writeHead(500).end('broken'); return; }
    const file = join(root, rel);
    if (!existsSync(file)) { res.writeHead(404).end('not found'); return; }
    res.writeHead(200, { 'Content-Type': TYPES[extname(file)] ?? 'application/octet-stream' });
    res.end(readFileSync(file));
  };
  host.start = (port = 0) => new Promise((ok) => {
    host.server = createServer(handler);
    host.server.listen(port, '127.0.0.1', () => { host.port = host.server.address().port; ok(); });
  });
  host.stop = () => new Promise((ok) => { host.server.closeAllConnections(); host.server.close(() => ok()); });
  return host;
}

const versionOf = (root) => /version: "([0-9a-f]+)"/.exec(readFileSync(join(root, 'pkg', 'offline.js'), 'utf8'))[1];

/** The page's view of the offline copy: cache names and the files in each. */
const cacheState = (page) => page.evaluate(async () => {
  const out = {};
  for (const name of await caches.keys()) out[name] = (await (await caches.open(name)).keys()).length;
  return out;
});

test('the page works offline after one visit and updates its copy atomically', { timeout: 240_000 }, async () => {
  const root = mkdtempSync(join(tmpdir(), 'catoptric-offline-'));
  cpSync(WWW, root, { recursive: true });
  // The file list and version as the build writes them (kept current here
  // for a www/ edited since the last build).
  execFileSync(join(REPO, 'pkg-config', 'offline-list.sh'), [root]);
  const host = staticHost(root);
  await host.start();
  const browser = await launchBrowser();
  try {
    const context = await browser.newContext();
    const url = `http://127.0.0.1:${host.port}${SUB}`;
    const v1 = versionOf(root);
    const files = JSON.parse(/files: (\[.*\])/.exec(readFileSync(join(root, 'pkg', 'offline.js'), 'utf8'))[1]);
    assert.ok(files.includes('pkg/catoptric_bg.wasm') && files.includes('presets/index.json') && files.includes('js/app.js'));

    // First visit: the page starts, and its worker copies every file.
    const errors = [];
    context.on('page', (p) => {
      p.on('pageerror', (e) => errors.push(`pageerror: ${e.message}`));
      p.on('console', (m) => { if (m.type() === 'error' && !/404|Not Found/.test(m.text())) errors.push(`console: ${m.text()}`); });
    });
    let page = await context.newPage();
    await page.goto(url);
    await settled(page);
    await page.waitForFunction(() => ['ready', 'failed'].includes(document.body.dataset.offline), null, { timeout: 60_000 });
    assert.equal(await page.evaluate(() => document.body.dataset.offline), 'ready');
    assert.deepEqual(await cacheState(page), { [`catoptric-${v1}`]: files.length });
    assert.equal(await page.evaluate(() => document.body.dataset.offlineVersion), v1);
    assert.ok(await page.evaluate(() => !!document.querySelector('link[rel="manifest"]')));

    // No network at all: the host is gone and the browser is offline.
    await host.stop();
    await context.setOffline(true);
    const before = host.requests;
    await page.reload();
    await settled(page);
    const names = await page.$$eval('#presets option', (os) => os.map((o) => o.value).filter(Boolean));
    assert.ok(names.length >= 5, `examples listed offline: ${names}`);
    await page.selectOption('#presets', 'paraboloid-f5.json');
    await page.waitForFunction(() => /paraboloid/i.test(document.getElementById('layout-name').value), null, { timeout: 20_000 });
    await settled(page);
    const rays = await page.evaluate(() => Number(document.querySelector('[data-stat="rays_launched"]')?.dataset.value));
    assert.ok(rays > 1000, `traced offline: ${rays} rays`);
    const hits = await page.evaluate(() => Number(document.querySelector('[data-stat="hits"]')?.dataset.value));
    assert.ok(hits > 1000, `hits on the screen offline: ${hits}`);
    // A larger example runs on the worker pool, whose module workers come
    // from the offline copy too.
    await page.selectOption('#presets', 'solar-dish.json');
    await page.waitForFunction(() => /dish/i.test(document.getElementById('layout-name').value), null, { timeout: 20_000 });
    await settled(page);
    assert.ok(Number(await page.getAttribute('#ro-time', 'data-workers')) >= 1, 'traced on the worker pool offline');
    assert.equal(host.requests, before, 'nothing reached the host');

    // A new build is published; one of its files fails at first.
    await context.setOffline(false);
    await host.start(host.port);
    const html = readFileSync(join(root, 'index.html'), 'utf8');
    writeFileSync(join(root, 'index.html'), html.replace('<title>', '<meta name="test-build" content="2"><title>'));
    execFileSync(join(REPO, 'pkg-config', 'offline-list.sh'), [root]);
    const v2 = versionOf(root);
    assert.notEqual(v2, v1, 'a changed page makes a new version');
    host.failing.add('presets/solar-dish.json');
    const tryUpdate = () => page.evaluate(async () => {
      const reg = await navigator.serviceWorker.getRegistration();
      await reg.update().catch(() => {});
      const w = reg.installing ?? reg.waiting;
      if (!w) return 'none';
      if (w.state === 'installed') return 'installed';
      return new Promise((ok) => w.addEventListener('statechange', () => {
        if (w.state === 'installed' || w.state === 'redundant') ok(w.state);
      }));
    });
    assert.equal(await tryUpdate(), 'redundant', 'the install fails while a file is missing');
    assert.deepEqual(await cacheState(page), { [`catoptric-${v1}`]: files.length }, 'the old copy is whole, no partial new one');
    await page.reload();
    await settled(page);
    assert.equal(await page.evaluate(() => document.querySelector('meta[name="test-build"]')), null, 'still the old version');

    // The files are all there: the new copy is made in full, but the open
    // page keeps its version (its modules and wasm stay of one build).
    host.failing.clear();
    assert.equal(await tryUpdate(), 'installed');
    const both = await cacheState(page);
    assert.equal(both[`catoptric-${v2}`], files.length, 'the new copy holds every file');
    assert.equal(both[`catoptric-${v1}`], files.length, 'the old copy is kept while in use');
    await page.waitForFunction(() => document.body.dataset.offline === 'update', null, { timeout: 10_000 });
    await page.reload();
    await settled(page);
    assert.equal(await page.evaluate(() => document.querySelector('meta[name="test-build"]')), null, 'a reload keeps the running version');

    // Next visit: the last page of the old version closes, the new one
    // takes over and the old cache goes.
    await page.close();
    page = await context.newPage();
    await page.goto(`http://127.0.0.1:${host.port}/elsewhere`); // same origin, outside the scope
    await page.waitForFunction(async (v) => {
      const keys = await caches.keys();
      return keys.length === 1 && keys[0] === `catoptric-${v}`;
    }, v2, { timeout: 30_000, polling: 200 });
    await host.stop();
    await context.setOffline(true);
    await page.goto(url);
    await settled(page);
    assert.equal(await page.evaluate(() => document.querySelector('meta[name="test-build"]')?.content), '2', 'the new version opens offline');
    await page.waitForFunction((v) => document.body.dataset.offlineVersion === v, v2, { timeout: 10_000 });

    // With one page open, "Use it now" under Help switches to a newer
    // version at once: the page reloads on it.
    await context.setOffline(false);
    await host.start(host.port);
    writeFileSync(join(root, 'index.html'), html.replace('<title>', '<meta name="test-build" content="3"><title>'));
    execFileSync(join(REPO, 'pkg-config', 'offline-list.sh'), [root]);
    const v3 = versionOf(root);
    assert.equal(await tryUpdate(), 'installed');
    await page.waitForFunction(() => document.body.dataset.offline === 'update', null, { timeout: 10_000 });
    await page.click('#btn-help');
    assert.match(await page.textContent('#help-offline'), /newer version/);
    await Promise.all([page.waitForEvent('load'), page.click('#help-offline-now')]);
    await settled(page);
    assert.equal(await page.evaluate(() => document.querySelector('meta[name="test-build"]')?.content), '3');
    await page.waitForFunction((v) => document.body.dataset.offlineVersion === v, v3, { timeout: 10_000 });
    assert.deepEqual(await cacheState(page), { [`catoptric-${v3}`]: files.length }, 'only the new copy is left');
    assert.deepEqual(errors, []);
    await context.close();
  } finally {
    await browser.close();
    if (host.server?.listening) await host.stop();
    rmSync(root, { recursive: true, force: true });
  }
});

test('under catoptric serve and its security policy the worker and the manifest load', { timeout: 120_000 }, async () => {
  const root = mkdtempSync(join(tmpdir(), 'catoptric-offline-serve-'));
  cpSync(WWW, root, { recursive: true });
  execFileSync(join(REPO, 'pkg-config', 'offline-list.sh'), [root]);
  const server = await startServer({ root });
  const browser = await launchBrowser();
  try {
    const res = await fetch(`${server.url}manifest.webmanifest`);
    assert.match(res.headers.get('content-type'), /^application\/manifest\+json/);
    const manifest = await res.json();
    assert.equal(manifest.start_url, './', 'relative start URL');
    assert.ok(manifest.icons.every((i) => !i.src.startsWith('/')), 'relative icon URLs');
    const context = await browser.newContext();
    const page = await context.newPage();
    const csp = [];
    page.on('console', (m) => { if (/Content Security Policy/i.test(m.text())) csp.push(m.text()); });
    await page.goto(server.url);
    await settled(page);
    await page.waitForFunction(() => ['ready', 'failed'].includes(document.body.dataset.offline), null, { timeout: 60_000 });
    assert.equal(await page.evaluate(() => document.body.dataset.offline), 'ready');
    assert.deepEqual(csp, [], 'nothing refused by the policy');
    await context.close();
  } finally {
    await browser.close();
    await server.stop();
    rmSync(root, { recursive: true, force: true });
  }
});
