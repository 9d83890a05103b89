// Shared harness for the headless-browser tests (node --test).
//
// startServer() runs `catoptric serve --port 0` on loopback and returns its
// URL; launchBrowser() starts the system Chromium through playwright-core
// with networking limited to 127.0.0.1. Nothing here downloads anything.
//
// The server binary is $CATOPTRIC_BIN when set (pkg-config/test.sh sets it),
// else the newer of target/release/catoptric and target/debug/catoptric
// (under $CARGO_TARGET_DIR when set).

import assert from 'node:assert/strict';
import { execFileSync, spawn } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { createRequire } from 'node:module';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

export const REPO = resolve(dirname(fileURLToPath(import.meta.url)), '..', '..');
export const WWW = join(REPO, 'www');
export const CHROMIUM = process.env.CHROMIUM_PATH || '/usr/bin/chromium';

const STARTUP_MS = 20_000;
const STOP_MS = 5_000;

/** Path of the catoptric binary to run. */
export function serverBinary() {
  if (process.env.CATOPTRIC_BIN) return process.env.CATOPTRIC_BIN;
  const target = process.env.CARGO_TARGET_DIR
    ? resolve(REPO, process.env.CARGO_TARGET_DIR)
    : join(REPO, 'target');
  const found = ['release', 'debug']
    .map((p) => join(target, p, 'catoptric'))
    .filter((p) => existsSync(p))
    .sort((a, b) => statSync(b).mtimeMs - statSync(a).mtimeMs);
  if (found.length === 0) {
    throw new Error(`no catoptric binary under ${target}; run cargo build first`);
  }
  return found[0];
}

/**
 * Starts `catoptric serve --port 0 --root <root>` and resolves once it has
 * printed its address. Returns { url, port, stop }; `url` ends with '/'.
 * `stop()` ends the server and resolves when it has exited.
 */
export function startServer({ root = WWW, args = [] } = {}) {
  const bin = serverBinary();
  const child = spawn(bin, ['serve', '--port', '0', '--root', root, ...args], {
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let exited = false;
  const exitedP = new Promise((res) => child.once('exit', () => { exited = true; res(); }));
  const stop = async () => {
    if (!exited) child.kill('SIGTERM');
    const timer = setTimeout(() => { if (!exited) child.kill('SIGKILL'); }, STOP_MS);
    await exitedP;
    clearTimeout(timer);
  };
  return new Promise((res, rej) => {
    let out = '';
    let err = '';
    const fail = (why) => {
      clearTimeout(timer);
      stop().finally(() => rej(new Error(`${why}\nstdout: ${out}\nstderr: ${err}`)));
    };
    const timer = setTimeout(() => fail(`server did not print its address within ${STARTUP_MS} ms`), STARTUP_MS);
    child.stderr.on('data', (d) => { err += d; });
    child.stdout.on('data', (d) => {
      out += d;
      const m = /http:\/\/127\.0\.0\.1:(\d+)\//.exec(out);
      if (m) {
        clearTimeout(timer);
        child.stdout.removeAllListeners('data');
        child.stdout.resume();
        const port = Number(m[1]);
        res({ url: `http://127.0.0.1:${port}/`, port, stop, output: () => out });
      }
    });
    child.once('error', (e) => fail(`cannot start ${bin}: ${e.message}`));
    child.once('exit', (code) => { if (!/127\.0\.0\.1:\d+/.test(out)) fail(`server exited with code ${code}`); });
  });
}

/** playwright-core, installed in pkg-config/node_modules. */
export function playwright() {
  const require = createRequire(join(REPO, 'pkg-config', 'package.json'));
  return require('playwright-core');
}

/** Launches headless system Chromium; the caller closes it. */
export async function launchBrowser() {
  const { chromium } = playwright();
  return chromium.launch({
    executablePath: CHROMIUM,
    headless: true,
    args: [
      '--no-sandbox',
      '--disable-gpu',
      '--disable-quic',
      '--no-first-run',
      '--disable-background-networking',
      '--disable-component-update',
      '--disable-sync',
      '--host-resolver-rules=MAP * ~NOTFOUND , EXCLUDE 127.0.0.1',
    ],
  });
}

/**
 * Records what a page complains about: console errors, uncaught
 * exceptions, failed requests and any request to another origin.
 * Returns { errors, external }; both are arrays of strings.
 */
export function watchPage(page, origin) {
  const errors = [];
  const external = [];
  page.on('console', (m) => { if (m.type() === 'error') errors.push(`console: ${m.text()}`); });
  page.on('pageerror', (e) => errors.push(`pageerror: ${e.message}`));
  page.on('requestfailed', (r) => errors.push(`requestfailed: ${r.url()} ${r.failure()?.errorText ?? ''}`));
  page.on('request', (r) => {
    const u = r.url();
    if (!u.startsWith(origin) && !u.startsWith('data:') && !u.startsWith('blob:')) external.push(u);
  });
  return { errors, external };
}

/** Longest wait for the page to finish its full trace, ms. */
export const READY_MS = 60_000;

/** Waits until the page has traced its current layout with the full ray count. */
export async function settled(page, timeout = READY_MS) {
  await page.waitForFunction(
    () => document.body.dataset.ready === 'true' && document.body.dataset.trace === 'full',
    null, { timeout },
  );
}

/** Runs the native `catoptric` with `args` and returns its stdout. */
export function native(args) {
  return execFileSync(serverBinary(), args, { encoding: 'utf8' });
}

/**
 * Equality of one figure computed by the same Rust core built for two
 * targets (common practice): a relative 1e-6, plus 1e-9 in the figure's unit
 * for values that are rounding noise around zero.
 */
export function close(a, b) {
  return Math.abs(a - b) <= 1e-6 * Math.max(Math.abs(a), Math.abs(b)) + 1e-9;
}

/** Every statistics cell: "screen|source|key" -> value. */
export async function readStats(page) {
  return page.evaluate(() => {
    const out = {};
    for (const c of document.querySelectorAll('[data-stat]')) {
      out[`${c.dataset.screen}|${c.dataset.source}|${c.dataset.stat}`] = JSON.parse(c.dataset.value);
    }
    return out;
  });
}

/** Asserts the page's cells match the native report (and that there are some). */
export function assertMatchesNative(stats, report) {
  let compared = 0;
  const check = (key, want) => {
    assert.ok(key in stats, `the page shows ${key}`);
    const got = stats[key];
    if (Array.isArray(want)) want.forEach((w, i) => assert.ok(close(got[i], w), `${key}[${i}]: page ${got[i]}, native ${w}`));
    else if (Number.isInteger(want) && /\|(hits|rays_\w+)$/.test(key)) assert.equal(got, want, key);
    else assert.ok(close(got, want), `${key}: page ${got}, native ${want}`);
    compared++;
  };
  for (const k of ['rays_launched', 'rays_escaped', 'rays_absorbed']) check(`||${k}`, report[k]);
  for (const sc of report.screens) {
    check(`${sc.id}||hits`, sc.hits);
    check(`${sc.id}||power_w`, sc.power_w);
    for (const row of sc.by_source) {
      for (const [k, v] of Object.entries(row)) {
        if (k === 'source' || (typeof v !== 'number' && !Array.isArray(v))) continue;
        check(`${sc.id}|${row.source}|${k}`, v);
      }
    }
  }
  assert.ok(compared >= 8, `compared ${compared} figures`);
}

/**
 * What a test file needs before its first test: the page server, a browser,
 * the page origin and (with `scratchPrefix`) a scratch folder. Pair with
 * tearDown().
 */
export async function setUp(scratchPrefix) {
  const server = await startServer();
  const browser = await launchBrowser();
  const scratch = scratchPrefix ? mkdtempSync(join(tmpdir(), scratchPrefix)) : undefined;
  return { server, browser, origin: server.url.slice(0, -1), scratch };
}

/** Closes what setUp() opened; safe on a partial set-up. */
export async function tearDown(env) {
  await env?.browser?.close();
  await env?.server?.stop();
  if (env?.scratch) rmSync(env.scratch, { recursive: true, force: true });
}
