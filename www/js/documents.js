// Documents, mixed into the workbench (app.js): open a file or an
// example, save, share a link, open a link from the address bar, export.

import { fmtInt } from './format.js';
import { exportCsv, exportSvg, download, slug } from './export.js';
import { exportAnalysis } from './views/analysis-export.js';
import { ExportDialog } from './export-size.js';
import { $, errText } from './dom.js';

/** Largest layout file opened, bytes (as the command line). */
const MAX_FILE_BYTES = 16 << 20;

/**
 * Text of a layout file, read as the command line reads it: UTF-8 (a byte
 * order mark is dropped) or UTF-16 in either byte order after its mark.
 */
function decodeLayoutBytes(bytes) {
  const enc = bytes[0] === 0xff && bytes[1] === 0xfe ? 'utf-16le'
    : bytes[0] === 0xfe && bytes[1] === 0xff ? 'utf-16be' : 'utf-8';
  return new TextDecoder(enc).decode(bytes);
}

/** The App's file, link and export methods. */
export const Documents = {
  async loadFile(file) {
    if (!file) return;
    if (file.size > MAX_FILE_BYTES) {
      this.message(`Could not open "${file.name}": the file is larger than 16 MiB. The current layout is unchanged.`);
      return;
    }
    let text;
    try {
      text = decodeLayoutBytes(new Uint8Array(await file.arrayBuffer()));
    } catch (e) {
      this.message(`Could not read "${file.name}": ${errText(e)}`);
      return;
    }
    if (this.loadText(text, `"${file.name}"`)) this.message(`Opened "${file.name}".`, 'info');
  },

  async loadPreset(file, title) {
    try {
      const r = await fetch(`presets/${encodeURIComponent(file)}`);
      if (!r.ok) throw new Error(`HTTP ${r.status}`);
      const text = await r.text();
      return this.loadText(text, `the example "${title}"`);
    } catch (e) {
      this.message(`Could not fetch the example "${title}": ${errText(e)}`);
      return false;
    }
  },

  async loadPresetIndex() {
    const sel = $('presets');
    let list = [];
    try {
      const r = await fetch('presets/index.json');
      if (r.ok) list = await r.json();
    } catch { /* offline copy without presets: the menu stays empty */ }
    if (!Array.isArray(list)) list = [];
    list = list.filter((p) => p && typeof p.file === 'string' && typeof p.title === 'string');
    for (const p of list) sel.append(new Option(p.title, p.file));
    sel.onchange = async () => {
      const p = list.find((x) => x.file === sel.value);
      sel.value = '';
      if (p && await this.loadPreset(p.file, p.title)) this.message(`Opened the example "${p.title}". Undo brings back your previous layout.`, 'info');
      $('canvas').focus();
    };
    sel.disabled = !list.length;
    return list;
  },

  save() {
    download(`${slug(this.layout.name)}.json`, new Blob([`${this.session.layout_json()}\n`], { type: 'application/json' }));
  },

  async share() {
    const url = `${location.origin}${location.pathname}${this.session.link()}`;
    const ta = $('share-link');
    ta.value = url;
    $('share').hidden = false;
    ta.focus();
    ta.select();
    let copied = false;
    try {
      await navigator.clipboard.writeText(url);
      copied = true;
    } catch { /* no clipboard permission: the text is selected for copying */ }
    $('share-status').textContent = copied
      ? `Link copied to the clipboard (${fmtInt(url.length)} characters).`
      : 'Copy the link below (the clipboard is not available here).';
  },

  /** Opens a `#L=` fragment from the address bar; true when it worked. */
  openHash() {
    const h = location.hash;
    if (!h.startsWith('#L=')) return false;
    const ok = this.loadText(h, 'the shared link', { viaLink: true });
    // The layout now lives in the page (and its autosave); drop the fragment
    // so a reload keeps later edits.
    history.replaceState(null, '', `${location.pathname}${location.search}`);
    if (ok) this.message('Opened the layout from the shared link.', 'info');
    return ok;
  },

  exportWhat(what) {
    if (exportAnalysis(this, what)) return;
    const name = slug(this.layout.name);
    if (what === 'png') {
      this.exportDialog ??= new ExportDialog(this);
      this.exportDialog.open();
    } else if (what === 'svg') {
      download(`${name}-drawing.svg`, new Blob([exportSvg(this)], { type: 'image/svg+xml' }));
    } else if (what === 'spot-png') {
      this.drawer.openThen('spot', () => {
        this.drawer.views[0].draw();
        this.drawer.spotCanvas().toBlob((b) => b && download(`${name}-spot.png`, b), 'image/png');
      });
    } else if (what === 'csv') {
      const r = exportCsv(this);
      if (r) download(`${name}-${slug(r.screen)}-hits.csv`, new Blob([r.text], { type: 'text/csv' }));
    } else if (what === 'report') {
      if (!this.result?.reportText) { this.message('Nothing traced yet.'); return; }
      download(`${name}-statistics.json`, new Blob([`${JSON.stringify(this.result.report, null, 2)}\n`], { type: 'application/json' }));
    }
  },
};
