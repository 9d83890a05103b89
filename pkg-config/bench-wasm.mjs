// Times the standard benchmark scenes inside the wasm build (www/pkg) under
// Node, best of N runs each after warm-up runs, single thread. Prints JSON on stdout:
// {"engine":"node <version>","scenes":[{"index","key","rays","seconds","frame_ms"}]}.
// frame_ms: one dragging frame of the page (20k rays, analyses, fan, caustic).
// `catoptric bench` runs this and prints wasm beside native.
//
// Usage: node pkg-config/bench-wasm.mjs [--rays N] [--runs K] [--pkg DIR]

import { readFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const repo = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const opts = { rays: 1_000_000, runs: 3, pkg: join(repo, 'www', 'pkg') };
const argv = process.argv.slice(2);
for (let i = 0; i < argv.length; i += 2) {
  const [k, v] = [argv[i], argv[i + 1]];
  if (k === '--rays' || k === '--runs') {
    const n = Number(v);
    if (!Number.isInteger(n) || n < 1) {
      console.error(`bench-wasm: ${k} must be a positive integer (got ${v})`);
      process.exit(2);
    }
    opts[k.slice(2)] = n;
  } else if (k === '--pkg' && v) {
    opts.pkg = resolve(v);
  } else {
    console.error(`bench-wasm: unknown option ${k}`);
    process.exit(2);
  }
}

const glue = await import(pathToFileURL(join(opts.pkg, 'catoptric.js')).href);
glue.initSync({ module: readFileSync(join(opts.pkg, 'catoptric_bg.wasm')) });

// V8 first runs wasm from its quick baseline compiler and swaps in the
// optimised code once a function is hot; untimed warm-up runs make the
// timed ones measure the optimised code, as a page does after a few frames.
const WARMUP = 3;
const scenes = [];
for (let index = 0; index < glue.bench_scene_count(); index++) {
  for (let r = 0; r < WARMUP; r++) {
    glue.bench_scene(index, Math.min(opts.rays, 200_000));
    glue.bench_frame_ms(index);
  }
  let best = Infinity;
  for (let r = 0; r < opts.runs; r++) {
    const s = glue.bench_scene(index, opts.rays);
    if (!Number.isFinite(s)) {
      console.error(`bench-wasm: scene ${index} refused ${opts.rays} rays`);
      process.exit(2);
    }
    best = Math.min(best, s);
  }
  let frame = Infinity;
  for (let r = 0; r < opts.runs; r++) frame = Math.min(frame, glue.bench_frame_ms(index));
  scenes.push({ index, key: glue.bench_scene_key(index), rays: opts.rays, seconds: best, frame_ms: frame });
}
console.log(JSON.stringify({ engine: `node ${process.version}`, scenes }));
