// Autosave history in localStorage: nothing the user made is lost.
//
// Keys (all JSON):
//   catoptric.v2.tab.<id>  this tab's versions, newest first, at most
//                          VERSIONS: [{ t, start, name, json }]. Only the tab
//                          with that id writes it, so two tabs never write
//                          over each other's work.
//   catoptric.v2.latest    { tab, t, name }: the newest save of any tab (other
//                          tabs hear of it through the `storage` event).
//   catoptric.v2.kept      versions that could not be restored, kept
//                          until the user discards them: [{ t, name, json,
//                          error }] (the text exactly as it was stored).
// A tab keeps its id over reloads (sessionStorage); a newly opened tab
// makes a new one. While the user edits, the newest version is updated in
// place; a new version starts when a whole layout is opened (file, link,
// example, a restored version) or CHECKPOINT_MS after the last one began,
// so opening something and reloading leaves the earlier work one version
// back. The one-slot autosave of earlier page versions is read once and
// moved into the history.

const PREFIX = 'catoptric.v2.';
const SLOT = `${PREFIX}tab.`;
const LATEST = `${PREFIX}latest`;
const KEPT = `${PREFIX}kept`;
const LEGACY = 'catoptric.autosave.v1';
const TAB_KEY = 'catoptric.tab';
/** Versions each tab keeps. */
export const VERSIONS = 10;
/** A new version at least this often while editing, ms. */
const CHECKPOINT_MS = 5 * 60_000;
/** Tabs whose histories are kept (the oldest are dropped past this). */
const MAX_TABS = 8;
/** Versions the page lists. */
export const LISTED = 12;

function randomId() {
  const a = new Uint32Array(2);
  crypto.getRandomValues(a);
  return `${a[0].toString(36)}${a[1].toString(36)}`;
}

export function isQuotaError(e) {
  return e?.name === 'QuotaExceededError' || e?.code === 22 || e?.code === 1014 || /quota/i.test(String(e?.message ?? ''));
}

function nameOf(json) {
  try {
    const n = JSON.parse(json)?.name;
    return typeof n === 'string' && n ? n : 'Untitled';
  } catch {
    return '(unreadable)';
  }
}

export class History {
  /** `storage`, `session`: Storage objects (the page's, by default). */
  constructor(storage = undefined, session = undefined) {
    // Reading localStorage itself throws where storage is switched off.
    try { this.store = storage ?? globalThis.localStorage ?? null; } catch { this.store = null; }
    try { session ??= globalThis.sessionStorage; } catch { session = null; }
    this.tab = this.tabId(session);
    /** Error of the last save, or null when it worked. */
    this.failure = null;
    this.migrate();
  }

  /** This tab's id: kept over a reload, new for a new or duplicated tab. */
  tabId(session) {
    let id = null;
    try {
      const nav = performance.getEntriesByType?.('navigation')?.[0]?.type;
      if (nav === 'reload') id = session?.getItem(TAB_KEY);
      if (!id) {
        id = randomId();
        session?.setItem(TAB_KEY, id);
      }
    } catch {
      id ??= randomId();
    }
    return id;
  }

  read(key, fallback) {
    let text = null;
    try { text = this.store?.getItem(key); } catch { return fallback; }
    if (text == null) return fallback;
    try { return JSON.parse(text); } catch { return { unreadable: text }; }
  }

  /** Moves the old single autosave into this tab's history (then drops it). */
  migrate() {
    let old = null;
    try { old = this.store?.getItem(LEGACY); } catch { return; }
    if (!old) return;
    const slot = this.slot();
    slot.push({ t: 1, start: 1, name: nameOf(old), json: old });
    try {
      this.store.setItem(SLOT + this.tab, JSON.stringify(slot));
      this.store.removeItem(LEGACY);
    } catch { /* left where it was: still read below */ }
  }

  slot(tab = this.tab) {
    const s = this.read(SLOT + tab, []);
    return Array.isArray(s) ? s.filter((e) => e && typeof e.json === 'string' && typeof e.t === 'number') : [];
  }

  /** Every tab's versions, newest first; equal layouts listed once (the newest). */
  entries() {
    const all = [];
    let keys = [];
    try {
      for (let i = 0; i < this.store.length; i++) keys.push(this.store.key(i));
    } catch { keys = []; }
    for (const k of keys) {
      if (!k?.startsWith(SLOT)) continue;
      const tab = k.slice(SLOT.length);
      const raw = this.read(k, []);
      if (!Array.isArray(raw)) {
        // A slot that is not a list at all: offer its text as it is.
        all.push({ tab, t: 0, name: '(unreadable)', json: raw.unreadable ?? JSON.stringify(raw), own: tab === this.tab, index: -1 });
        continue;
      }
      raw.forEach((e, index) => {
        if (e && typeof e.json === 'string' && typeof e.t === 'number') all.push({ ...e, tab, own: tab === this.tab, index });
      });
    }
    let legacy = null;
    try { legacy = this.store?.getItem(LEGACY); } catch { /* none */ }
    if (legacy) all.push({ tab: 'legacy', t: 1, name: nameOf(legacy), json: legacy, own: false, index: 0 });
    all.sort((a, b) => b.t - a.t);
    const seen = new Set();
    return all.filter((e) => (seen.has(e.json) ? false : (seen.add(e.json), true)));
  }

  /** The pointer other tabs watch: { tab, t, name } or null. */
  latest() {
    const l = this.read(LATEST, null);
    return l && typeof l.t === 'number' ? l : null;
  }

  /**
   * Saves `json` as this tab's newest version (a new version when `fresh`).
   * Returns null, or the error when the browser refused (full storage,
   * storage switched off); the layout then lives only in the page.
   */
  save(json, { fresh = false } = {}) {
    const now = Date.now();
    const slot = this.slot();
    const top = slot[0];
    if (top && top.json === json) { this.failure = null; return null; }
    const entry = { t: now, start: now, name: nameOf(json), json };
    if (top && !fresh && now - (top.start ?? top.t) < CHECKPOINT_MS) slot[0] = { ...entry, start: top.start ?? top.t };
    else slot.unshift(entry);
    slot.length = Math.min(slot.length, VERSIONS);
    const write = (list) => {
      this.store.setItem(SLOT + this.tab, JSON.stringify(list));
      this.store.setItem(LATEST, JSON.stringify({ tab: this.tab, t: now, name: entry.name }));
    };
    try {
      if (!this.store) throw new Error('this browser keeps no local storage here');
      if (!top) this.pruneTabs();
      write(slot);
      this.failure = null;
      return null;
    } catch (e) {
      if (isQuotaError(e) && slot.length > 1) {
        // Make room from this tab's own older versions, then try once more.
        try {
          write(slot.slice(0, 1));
          this.failure = null;
          return null;
        } catch { /* still full: report below */ }
      }
      this.failure = e;
      return e;
    }
  }

  /** Drops the histories of the oldest tabs beyond MAX_TABS. */
  pruneTabs() {
    const tabs = [];
    for (let i = 0; i < this.store.length; i++) {
      const k = this.store.key(i);
      if (!k?.startsWith(SLOT) || k === SLOT + this.tab) continue;
      const s = this.read(k, []);
      tabs.push({ k, t: Array.isArray(s) && s[0] ? s[0].t : 0 });
    }
    tabs.sort((a, b) => b.t - a.t);
    for (const { k } of tabs.slice(MAX_TABS - 1)) this.store.removeItem(k);
  }

  /** Versions that could not be restored, newest first. */
  kept() {
    const k = this.read(KEPT, []);
    return Array.isArray(k) ? k : [];
  }

  /**
   * Keeps a version that could not be restored (its text exactly) with the
   * error. When even that cannot be stored, this tab moves to a new slot so
   * it never writes over the version where it lies.
   */
  keep(entry, error) {
    const kept = this.kept();
    if (!kept.some((k) => k.json === entry.json)) {
      kept.unshift({ t: entry.t, name: entry.name ?? nameOf(entry.json), json: entry.json, error: String(error) });
      try {
        this.store.setItem(KEPT, JSON.stringify(kept));
      } catch {
        if (entry.tab === this.tab) this.tab = randomId();
      }
    }
  }

  discardKept(i) {
    const kept = this.kept();
    kept.splice(i, 1);
    try { this.store.setItem(KEPT, JSON.stringify(kept)); } catch { /* stays listed */ }
  }

  /** True when a `storage` event says another tab saved after `since`. */
  isNewerElsewhere(ev, since) {
    if (ev.key !== LATEST || !ev.newValue) return null;
    try {
      const l = JSON.parse(ev.newValue);
      return l.tab !== this.tab && l.t > since ? l : null;
    } catch {
      return null;
    }
  }
}
