// The page's WebAssembly module, its session, and recovery from a trap.
//
// A trap inside a wasm call (`unreachable`, an allocation that failed, an
// out-of-bounds access) ends the call with a WebAssembly.RuntimeError and
// leaves the session it was using borrowed for good: every later call says
// "recursive use of an object detected which would lead to unsafe aliasing
// in rust". The page therefore talks to its session through a guard
// (`guardSession`): when a call fails that way, the guard swaps in a
// session made on a fresh instance of the module (its own memory), loads
// the last good layout into it, and rethrows a readable error. A spare
// instance is kept ready so the swap needs no await. The module is compiled
// once: instances are made from the compiled module, and the spare's glue
// is imported while the page starts, so a recovery fetches nothing.
//
// Stateless functions (designers, tables, colour maps) are reached through
// `api()`, which follows the instance the session runs on.

import init, * as firstModule from '../pkg/catoptric.js';

let current = firstModule;
let instances = 1;
let spare = null;
let spareLoading = null;
/** The compiled module every instance is made from. */
let compiled = null;
/** The next instance's glue (a fresh import: its own `wasm` variable). */
let nextGlue = null;

/** The module namespace now in use (functions and the Session class). */
export function api() {
  return current;
}

function importGlue() {
  const url = new URL('../pkg/catoptric.js', import.meta.url);
  url.searchParams.set('instance', String(++instances));
  return import(url.href);
}

/** Compiles the module and instantiates the one the page starts with. */
export async function startWasm() {
  const url = new URL('../pkg/catoptric_bg.wasm', import.meta.url);
  nextGlue = importGlue();
  nextGlue.catch(() => { nextGlue = null; });
  try {
    compiled = await WebAssembly.compileStreaming(fetch(url));
  } catch {
    compiled = await WebAssembly.compile(await (await fetch(url)).arrayBuffer());
  }
  await init({ module_or_path: compiled });
  try { await nextGlue; } catch { /* made again when needed */ }
  return current;
}

/** A new instance of the module, with fresh memory. */
async function loadInstance() {
  const glue = nextGlue ?? importGlue();
  nextGlue = null;
  const mod = await glue;
  await mod.default(compiled ? { module_or_path: compiled } : undefined);
  return mod;
}

/** Starts loading a spare instance in the background (once). */
export function prepareSpare() {
  if (spare || spareLoading) return spareLoading;
  spareLoading = loadInstance().then((m) => { spare = m; spareLoading = null; return m; }, () => { spareLoading = null; return null; });
  return spareLoading;
}

/** True for an error that leaves the module or the session unusable. */
export function isFatal(e) {
  if (typeof WebAssembly !== 'undefined' && e instanceof WebAssembly.RuntimeError) return true;
  return /recursive use of an object|unreachable|memory access out of bounds|unsafe aliasing/i.test(String(e?.message ?? e));
}

/**
 * Wraps a session so every method call is guarded. `restore(session)`
 * loads the last good state into a replacement session; `onRecovered(err,
 * ok)` is told after a swap. Returns { session, swap }, where `session` is
 * the object the page calls (the same object before and after a swap).
 */
export function guardSession(first, { restore, onRecovered }) {
  const holder = { s: first, recovering: null };
  const replace = (mod) => {
    const s = new mod.Session();
    restore(s);
    current = mod;
    holder.s = s;
  };
  const recover = (err) => {
    try { holder.s.free?.(); } catch { /* the old one is borrowed for good */ }
    holder.s = null;
    if (spare) {
      const mod = spare;
      spare = null;
      let ok = true;
      try { replace(mod); } catch { ok = false; }
      if (!ok) { holder.s = new mod.Session(); current = mod; }
      prepareSpare();
      onRecovered(err, ok);
      return;
    }
    holder.recovering = (async () => {
      const mod = (await prepareSpare()) ?? await loadInstance();
      spare = null;
      let ok = true;
      try { replace(mod); } catch { ok = false; }
      if (!ok) { holder.s = new mod.Session(); current = mod; }
      holder.recovering = null;
      prepareSpare();
      onRecovered(err, ok);
    })();
  };
  const session = new Proxy({}, {
    get(_, prop) {
      if (prop === 'then') return undefined;
      const s = holder.s;
      if (!s) {
        return () => { throw new Error('the workbench is restarting its WebAssembly module; try again in a moment'); };
      }
      const v = s[prop];
      if (typeof v !== 'function' || prop === 'constructor') return v;
      return (...args) => {
        try {
          return v.apply(s, args);
        } catch (e) {
          if (!isFatal(e) || holder.s !== s) throw e;
          recover(e);
          throw new Error(`the WebAssembly module stopped (${String(e?.message ?? e)}); the page restarted it with your last good layout`);
        }
      };
    },
  });
  return { session, recovering: () => holder.recovering };
}
