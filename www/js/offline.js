// Offline use: registers the service worker (www/sw.js) and reports its
// state on <body data-offline> and in the Help dialog's "Offline" line.
//
// data-offline: "unsupported" (no service workers here, e.g. a file:// page),
// "installing" (the first visit is copying the page), "ready" (this page
// works with the network off), "update" (a newer version is copied and
// opens on the next visit), "failed" (the copy could not be made; the page
// still works online). The worker's cache version is on data-offline-version.

const $ = (id) => document.getElementById(id);

function show(state, text, reg) {
  document.body.dataset.offline = state;
  const line = $('help-offline');
  if (!line) return;
  $('help-offline-text').textContent = text;
  const now = $('help-offline-now');
  now.hidden = state !== 'update';
  now.onclick = () => activateNow(reg);
}

/** The version a worker serves, from its cache's name. */
async function activeVersion() {
  const names = (await caches.keys()).filter((n) => n.startsWith('catoptric-'));
  return names.length === 1 ? names[0].slice('catoptric-'.length) : '';
}

/** Asks the waiting version to take over; the page reloads when it has. */
function activateNow(reg) {
  const waiting = reg?.waiting;
  if (!waiting) return;
  navigator.serviceWorker.addEventListener('controllerchange', () => location.reload(), { once: true });
  navigator.serviceWorker.addEventListener('message', (e) => {
    if (e.data?.type === 'other-pages-open') {
      $('help-offline-text').textContent = `The new version opens when the other ${e.data.count - 1} open page(s) of the workbench are closed, or on your next visit.`;
    }
  }, { once: true });
  waiting.postMessage({ type: 'activate-now' });
}

async function describe(reg) {
  if (reg.waiting && navigator.serviceWorker.controller) {
    show('update', 'A newer version has been copied for offline use; it opens on your next visit.', reg);
  } else if (reg.active && navigator.serviceWorker.controller) {
    document.body.dataset.offlineVersion = await activeVersion();
    show('ready', 'This page works offline: after this visit it opens and traces with the network off.', reg);
  } else if (reg.installing || reg.waiting || reg.active) {
    show('installing', 'Copying the page for offline use…', reg);
  }
}

/** Registers the service worker; never throws (the page works without it). */
export function registerOffline() {
  if (!('serviceWorker' in navigator) || !/^https?:$/.test(location.protocol)) {
    show('unsupported', 'Offline use needs the page served over http(s) by a host that allows service workers.');
    return;
  }
  const sw = navigator.serviceWorker;
  sw.register('sw.js', { updateViaCache: 'none' }).then((reg) => {
    const watch = (w) => w?.addEventListener('statechange', () => {
      if (w.state === 'redundant' && !reg.active) show('failed', 'The page could not be copied for offline use; it still works online.', reg);
      else describe(reg);
    });
    watch(reg.installing);
    reg.addEventListener('updatefound', () => watch(reg.installing));
    sw.addEventListener('controllerchange', () => describe(reg));
    describe(reg);
  }).catch(() => {
    show('failed', 'The page could not be copied for offline use (the host refused the service worker); it still works online.');
  });
}
