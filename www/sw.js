// The page's service worker: after one visit the workbench opens and works
// with the network off, from whatever static host served it.
//
// pkg/offline.js (written by pkg-config/offline-list.sh with the bundle)
// names every file the page needs — the page, styles, modules, the wasm
// bundle, the presets — and a version that hashes their contents. Each
// version lives in its own cache, `catoptric-<version>`:
//
// - install: every file is fetched afresh (past the HTTP cache), its bytes
//   are checked against the version's hash, and only when all of them are
//   there and agree is the new cache written (in one `put` batch). A file
//   that fails or does not match (a host half-way through an upload) fails
//   the install; the old version stays in use and the next visit tries again.
// - activate: happens when no page runs the old version any more (the next
//   visit), or at once when the only open page asks for it; old caches are
//   then deleted. A running page is never switched under its feet: its
//   modules, wasm and workers stay of one version.
// - fetch: files of this origin under the worker's scope come from the
//   cache (query strings ignored: the page imports its wasm glue again with
//   `?instance=N`); anything else goes to the network as usual.
//
// All URLs are relative to the worker's scope, so the page works under any
// path of any static host.

importScripts('pkg/offline.js');

const { version: VERSION, files: FILES } = self.CATOPTRIC_OFFLINE;
const PREFIX = 'catoptric-';
const CACHE = `${PREFIX}${VERSION}`;
const SCOPE = self.registration.scope;
const at = (file) => new URL(file, SCOPE).href;

const hex = (buf) => [...new Uint8Array(buf)].map((b) => b.toString(16).padStart(2, '0')).join('');
const sha256 = async (bytes) => hex(await crypto.subtle.digest('SHA-256', bytes));

/** Fetches every file, checks them against the version, then fills the cache. */
async function fill() {
  if (await caches.has(CACHE)) {
    const cache = await caches.open(CACHE);
    const have = await Promise.all(FILES.map((f) => cache.match(at(f))));
    if (have.every(Boolean)) return; // filled by an earlier install of this version
    await caches.delete(CACHE);
  }
  const got = await Promise.all(FILES.map(async (f) => {
    const res = await fetch(at(f), { cache: 'no-store', credentials: 'same-origin' });
    if (!res.ok) throw new Error(`offline copy: ${f}: HTTP ${res.status}`);
    const bytes = await res.arrayBuffer();
    // The bytes are decoded: drop what described the transfer.
    const headers = new Headers(res.headers);
    for (const h of ['content-encoding', 'content-length', 'transfer-encoding']) headers.delete(h);
    return { f, bytes, headers };
  }));
  let lines = '';
  for (const { f, bytes } of got) lines += `${f} ${await sha256(bytes)}\n`;
  const sum = (await sha256(new TextEncoder().encode(lines))).slice(0, VERSION.length);
  if (sum !== VERSION) throw new Error(`offline copy: the files on the host are not version ${VERSION} (they hash to ${sum})`);
  const cache = await caches.open(CACHE);
  try {
    await Promise.all(got.map(({ f, bytes, headers }) => cache.put(at(f), new Response(bytes, { status: 200, headers }))));
  } catch (e) {
    await caches.delete(CACHE);
    throw e;
  }
}

self.addEventListener('install', (e) => {
  e.waitUntil(fill());
});

self.addEventListener('activate', (e) => {
  e.waitUntil((async () => {
    for (const name of await caches.keys()) {
      if (name.startsWith(PREFIX) && name !== CACHE) await caches.delete(name);
    }
    await self.clients.claim();
  })());
});

// The only open page may ask a waiting version to take over now (it then
// reloads); with other pages open the version waits for the next visit.
self.addEventListener('message', (e) => {
  if (e.data?.type !== 'activate-now') return;
  e.waitUntil((async () => {
    const pages = await self.clients.matchAll({ type: 'window', includeUncontrolled: true });
    if (pages.length <= 1) await self.skipWaiting();
    else e.source?.postMessage({ type: 'other-pages-open', count: pages.length });
  })());
});

async function answer(req) {
  const cache = await caches.open(CACHE);
  const url = new URL(req.url);
  // The scope's folder itself (…/app/) is the page.
  const key = req.mode === 'navigate' && url.href.split(/[?#]/)[0] === SCOPE ? at('index.html') : req;
  const hit = await cache.match(key, { ignoreSearch: true });
  return hit ?? fetch(req);
}

self.addEventListener('fetch', (e) => {
  const req = e.request;
  if (req.method !== 'GET' || !req.url.startsWith(SCOPE)) return;
  e.respondWith(answer(req));
});
