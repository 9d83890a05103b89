// The wasm build's batched tracer — its kernels compiled for simd128, some
// written with explicit 128-bit operations — against the scalar reference
// tracer compiled into the same module, bit for bit, on every preset (a
// trough, a sun-disk source, two-mirror systems, an off-axis section and
// a deep bowl among them). The native suite holds the native kernels to
// the same reference (tests/batched_tracer.rs); equal bits there and
// here are what lets the page's pool and the command agree.
//
// Reference: the scalar tracer (`trace_reference`), the project's own
// plain ray-by-ray implementation of the reflection law (common
// practice), kept simple on purpose.
//
// Runs in Node (no browser): the module in www/pkg, loaded as the bench
// script loads it.

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { WWW } from './harness.mjs';

const pkg = join(WWW, 'pkg');
const glue = await import(pathToFileURL(join(pkg, 'catoptric.js')).href);
glue.initSync({ module: readFileSync(join(pkg, 'catoptric_bg.wasm')) });

const presets = readdirSync(join(WWW, 'presets')).filter((f) => f.endsWith('.json') && f !== 'index.json');

test('there are presets to check', () => {
  assert.ok(presets.length >= 8, `found ${presets.length}`);
});

for (const file of presets) {
  test(`${file}: the batched tracer gives the reference's hits, bit for bit`, () => {
    const text = readFileSync(join(WWW, 'presets', file), 'utf8');
    // An odd count: the last batch is partly full, so the kernels' pairs
    // of lanes and their one-lane tails both run.
    assert.equal(glue.kernel_check(text, 6001), 0);
  });
}

test('bad input is refused with a message naming what is wrong', () => {
  assert.throws(() => glue.kernel_check('{"version": 1', 100), /not valid JSON/);
  assert.throws(() => glue.kernel_check('{}', 100), /format/);
  const text = readFileSync(join(WWW, 'presets', presets[0]), 'utf8');
  assert.throws(() => glue.kernel_check(text, 0), /rays per source/);
});
