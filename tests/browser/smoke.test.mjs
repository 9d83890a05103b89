// Smoke test of the browser-test plumbing: the server starts on loopback,
// sends the security headers, and headless Chromium loads a page and an
// ES module under the content security policy (common practice: a module
// script from 'self' is allowed, an inline script is blocked by
// script-src 'self').

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { existsSync, mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { WWW, launchBrowser, startServer, watchPage } from './harness.mjs';

function tinySite() {
  const root = mkdtempSync(join(tmpdir(), 'catoptric-smoke-'));
  mkdirSync(join(root, 'js'));
  writeFileSync(join(root, 'index.html'), `<!doctype html>
<html><head><meta charset="utf-8"><title>smoke</title>
<script type="module" src="js/main.mjs"></script></head>
<body><p id="out">waiting</p>
<script>document.title = 'inline ran';</script></body></html>`);
  writeFileSync(join(root, 'js', 'main.mjs'), `document.getElementById('out').textContent = 'module ran';`);
  return root;
}

test('the server, the browser and the CSP work together', async () => {
  const root = tinySite();
  const server = await startServer({ root });
  let browser;
  try {
    const res = await fetch(server.url);
    assert.equal(res.status, 200);
    assert.match(res.headers.get('content-type'), /^text\/html/);
    assert.match(res.headers.get('content-security-policy'), /script-src 'self' 'wasm-unsafe-eval'/);
    assert.equal(res.headers.get('x-content-type-options'), 'nosniff');

    browser = await launchBrowser();
    const page = await browser.newPage();
    const seen = watchPage(page, server.url.slice(0, -1));
    const nav = await page.goto(server.url, { timeout: 20_000 });
    assert.equal(nav.status(), 200);
    await page.waitForFunction(() => document.getElementById('out').textContent !== 'waiting', null, { timeout: 10_000 });
    assert.equal(await page.textContent('#out'), 'module ran');
    // The inline script must have been refused by the policy.
    assert.equal(await page.title(), 'smoke');
    assert.deepEqual(seen.external, []);
  } finally {
    await browser?.close();
    await server.stop();
    rmSync(root, { recursive: true, force: true });
  }
});

test('the app page is reachable', { skip: !existsSync(join(WWW, 'index.html')) && 'www/index.html not built yet' }, async () => {
  const server = await startServer();
  try {
    const res = await fetch(server.url);
    assert.equal(res.status, 200);
    assert.match(res.headers.get('content-type'), /^text\/html/);
    assert.match(await res.text(), /<html/i);
    // The page cannot run without its wasm bundle: a missing one fails
    // here, with the way to build it, instead of skipping the check.
    assert.ok(existsSync(join(WWW, 'pkg', 'catoptric_bg.wasm')), 'www/pkg/catoptric_bg.wasm is missing: build it with pkg-config/build-web.sh');
    const w = await fetch(new URL('pkg/catoptric_bg.wasm', server.url));
    assert.equal(w.status, 200);
    assert.equal(w.headers.get('content-type'), 'application/wasm');
    await w.arrayBuffer();
  } finally {
    await server.stop();
  }
});
