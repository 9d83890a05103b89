// Autosaved versions, mixed into the workbench (app.js): every accepted
// change is kept in this tab's history (history.js holds the storage), the
// History menu lists the versions and the ones that could not be restored,
// other tabs' newer saves are noticed, and the page starts from the newest
// version that loads.

import { LISTED, isQuotaError } from './history.js';
import { download, slug } from './export.js';
import { $, errText } from './dom.js';

/** When a version was saved, in words. */
function clock(t) {
  if (!(t > 1)) return 'earlier';
  const d = new Date(t);
  const today = new Date().toDateString() === d.toDateString();
  return today ? d.toLocaleTimeString() : d.toLocaleString();
}

/** The App's autosave and History methods. */
export const Versions = {
  /**
   * Keeps the layout in this tab's autosave history (a new version after a
   * whole layout was opened). A refused save (full storage) is said once
   * and marked on the History button; the layout stays in the page.
   */
  autosave() {
    const fresh = this.freshSave;
    this.freshSave = false;
    const err = this.history.save(this.currentJson(), { fresh });
    const btn = $('btn-history');
    if (err) {
      if (btn.dataset.saved !== 'false') {
        const why = isQuotaError(err) ? 'the browser’s storage for this page is full' : errText(err);
        this.message(`Could not keep this layout in the browser: ${why}. It stays open in this tab — use Save to keep it as a file.`);
      }
      btn.dataset.saved = 'false';
      btn.title = `Not kept in this browser: ${errText(err)}`;
    } else {
      btn.dataset.saved = 'true';
      btn.title = 'Earlier versions of your work kept in this browser';
      this.seenSave = Math.max(this.seenSave, this.history.latest()?.t ?? 0);
    }
    if (!$('history-menu').hidden) this.renderHistory();
  },

  /** The History menu: saved versions (newest first) and kept unrestorable ones. */
  renderHistory() {
    const menu = $('history-menu');
    const rows = [];
    const status = document.createElement('p');
    status.className = 'menu-note';
    status.textContent = this.history.failure
      ? `Not kept in this browser: ${errText(this.history.failure)}. Use Save to keep a file.`
      : 'Kept in this browser as you work; choose a version to open it (Undo comes back).';
    rows.push(status);
    const current = this.currentJson();
    const list = this.history.entries().slice(0, LISTED);
    for (const e of list) {
      const btn = document.createElement('button');
      btn.type = 'button';
      btn.setAttribute('role', 'menuitem');
      btn.className = 'history-item';
      btn.dataset.history = String(e.t);
      const same = e.json === current;
      const name = document.createElement('span');
      name.className = 'history-name';
      name.textContent = e.name;
      const when = document.createElement('span');
      when.className = 'history-when';
      when.textContent = `${clock(e.t)}${e.own ? '' : ' · other tab'}${same ? ' · open now' : ''}`;
      btn.append(name, when);
      btn.title = `${e.name}, saved ${e.t > 1 ? new Date(e.t).toLocaleString() : 'by an earlier version of the page'}`;
      btn.disabled = same;
      btn.onclick = () => {
        menu.hidden = true;
        if (this.loadText(e.json, `the version saved ${clock(e.t)}`)) this.message(`Opened the version of “${e.name}” saved ${clock(e.t)}. Undo brings back what you had.`, 'info');
      };
      rows.push(btn);
    }
    if (!list.length) {
      const p = document.createElement('p');
      p.className = 'menu-note';
      p.textContent = 'No saved versions yet.';
      rows.push(p);
    }
    const kept = this.history.kept();
    if (kept.length) {
      const h = document.createElement('p');
      h.className = 'menu-head';
      h.textContent = 'Could not be restored (kept as they were)';
      rows.push(h);
      kept.forEach((k, i) => {
        const row = document.createElement('div');
        row.className = 'history-kept';
        row.dataset.kept = String(i);
        const what = document.createElement('span');
        what.className = 'history-name';
        what.textContent = `${k.name} · ${clock(k.t)}`;
        const why = document.createElement('span');
        why.className = 'history-error';
        why.textContent = k.error;
        const dl = document.createElement('button');
        dl.type = 'button';
        dl.textContent = 'Download';
        dl.title = 'Download this version exactly as it was kept, as a .json file';
        dl.onclick = () => this.downloadKept(k);
        const del = document.createElement('button');
        del.type = 'button';
        del.textContent = 'Discard';
        del.title = 'Forget this version';
        del.onclick = () => { this.history.discardKept(i); this.renderHistory(); };
        row.append(what, why, dl, del);
        rows.push(row);
      });
    }
    menu.replaceChildren(...rows);
  },

  downloadKept(k) {
    const stamp = k.t > 1 ? new Date(k.t).toISOString().slice(0, 19).replace(/[T:]/g, '-') : 'earlier';
    download(`${slug(k.name)}-unrestored-${stamp}.json`, new Blob([k.json], { type: 'application/json' }));
  },

  /** Another tab saved newer work: say so and list it. */
  onStorage(ev) {
    const l = this.history.isNewerElsewhere(ev, this.seenSave);
    if (!l) return;
    this.seenSave = l.t;
    // A tab that only saved what this one shows has nothing new.
    if (this.history.slot(l.tab)[0]?.json === this.currentJson()) return;
    if (!$('history-menu').hidden) this.renderHistory();
    this.message(`Another tab saved newer work (“${l.name}”, ${clock(l.t)}). It is in History; this tab keeps its own layout.`, 'info');
  },

  /**
   * Opens the newest saved version that loads. One that does not is kept
   * (never written over) and offered for download; the next newer-to-older
   * one is tried. Returns true when a version was opened.
   */
  restoreNewest() {
    const failed = [];
    let opened = null;
    const known = new Set(this.history.kept().map((k) => k.json));
    for (const e of this.history.entries()) {
      if (known.has(e.json)) continue; // failed before: listed under History, never retried blindly
      try {
        this.session.load_json(e.json);
      } catch (err) {
        const why = errText(err).replace(/\.+$/, '');
        this.history.keep(e, why);
        failed.push({ ...e, error: why });
        continue;
      }
      opened = e;
      break;
    }
    this.seenSave = this.history.latest()?.t ?? 0;
    if (opened) {
      // A new version, so a restored layout never writes over this tab's own.
      this.freshSave = true;
      this.adopt();
      this.undo.length = 0;
      this.updateUndo();
    }
    if (failed.length) {
      const f = failed[0];
      const then = opened ? ` Opened the version of “${opened.name}” saved ${clock(opened.t)} instead.` : '';
      this.message(`The layout “${f.name}” saved ${f.t > 1 ? `at ${clock(f.t)}` : 'earlier'} could not be restored: ${f.error}. It is kept as it was (History → Download).${then}`);
      const box = $('message-text');
      const dl = document.createElement('button');
      dl.type = 'button';
      dl.className = 'message-action';
      dl.textContent = 'Download it';
      dl.title = 'Download the layout that could not be restored, exactly as it was kept, as a .json file';
      dl.onclick = () => this.downloadKept(f);
      box.append(' ', dl);
    }
    return opened !== null;
  },
};
