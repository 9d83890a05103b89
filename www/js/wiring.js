// DOM wiring of the workbench (app.js): buttons, menus, drag and drop,
// window events and the keyboard.

import { readTheme } from './theme.js';
import { openHelp, wireHelp } from './help.js';
import { $ } from './dom.js';

const KEYS = [
  ['Drag empty space · right or middle drag', 'Pan the drawing'],
  ['Mouse wheel · <kbd>+</kbd> <kbd>−</kbd>', 'Zoom'],
  ['<kbd>F</kbd>', 'Fit the layout in view'],
  ['<kbd>G</kbd>', 'Grid on or off'],
  ['Click', 'Select a mirror, screen or source'],
  ['Drag an element or its square handle', 'Move it (coordinates snap to the zoom level)'],
  ['Drag the round handle', 'Rotate (hold <kbd>Shift</kbd> for 15° steps)'],
  ['<kbd>[</kbd> <kbd>]</kbd>', 'Rotate by 1° (with <kbd>Shift</kbd>: 15°)'],
  ['Arrow keys', 'Nudge the selection (with <kbd>Shift</kbd>: ten times as far)'],
  ['Drag a knot of a free-form mirror', 'Reshape it'],
  ['<kbd>Delete</kbd> · <kbd>Backspace</kbd>', 'Delete the selection'],
  ['<kbd>D</kbd>', 'Duplicate the selection'],
  ['<kbd>X</kbd>', 'Turn a mirror’s reflective side over (the surface stays put)'],
  ['<kbd>M</kbd> <kbd>K</kbd> <kbd>S</kbd> <kbd>B</kbd> <kbd>L</kbd> <kbd>U</kbd>', 'Add a mirror, free-form mirror, screen, beam, lamp, sun'],
  ['<kbd>Enter</kbd> · double-click', 'Finish a free-form mirror'],
  ['<kbd>Esc</kbd>', 'Cancel the tool, clear the selection, close a dialog'],
  ['<kbd>Ctrl</kbd>+<kbd>Z</kbd> · <kbd>Ctrl</kbd>+<kbd>Shift</kbd>+<kbd>Z</kbd> or <kbd>Ctrl</kbd>+<kbd>Y</kbd>', 'Undo · redo'],
  ['<kbd>Ctrl</kbd>+<kbd>S</kbd> · <kbd>Ctrl</kbd>+<kbd>O</kbd>', 'Save · open a layout file'],
  ['<kbd>A</kbd>', 'Open or close the analysis drawer'],
  ['<kbd>T</kbd>', 'Light or dark colours'],
  ['<kbd>?</kbd>', 'This help'],
];

/** The App's wiring methods. */
export const Wiring = {
  wire() {
    $('btn-undo').onclick = () => this.doUndo();
    $('btn-redo').onclick = () => this.doRedo();
    $('btn-save').onclick = () => this.save();
    $('btn-open').onclick = () => $('file-input').click();
    $('file-input').onchange = (e) => { this.loadFile(e.target.files[0]); e.target.value = ''; };
    $('btn-share').onclick = () => this.share();
    wireHelp(this);
    $('btn-theme').onclick = () => this.setTheme(document.documentElement.dataset.theme === 'dark' ? 'light' : 'dark');
    $('message-close').onclick = () => this.clearMessage();
    $('btn-delete').onclick = () => this.deleteSelected();
    $('btn-drawer').onclick = () => this.drawer.open(!this.drawer.isOpen());
    $('progress-cancel').onclick = () => {
      if (this.background.cancel()) { this.hideProgress(); this.setTraceState('preview'); this.message('Long trace stopped; the figures are from the preview trace.', 'info'); }
    };
    $('ro-screen').onchange = (e) => { if (e.target.value !== '') this.setSpotScreen(Number(e.target.value)); };
    for (const el of document.querySelectorAll('[data-close]')) el.onclick = () => { $(el.dataset.close).hidden = true; };
    for (const ov of document.querySelectorAll('.overlay')) ov.addEventListener('click', (e) => { if (e.target === ov) ov.hidden = true; });

    const name = $('layout-name');
    name.addEventListener('input', () => {
      const v = name.value;
      const err = this.edit((L) => { L.name = v; }, { coalesce: 'name' });
      if (err) this.message(err, 'error', { input: true });
    });

    // toolbox
    for (const b of document.querySelectorAll('#toolbox [data-tool]')) b.onclick = () => this.editor.setTool(b.dataset.tool);
    $('toolbox').querySelector('[data-action="fit"]').onclick = () => this.editor.fit();
    const gridBtn = $('toolbox').querySelector('[data-action="grid"]');
    gridBtn.onclick = () => { this.editor.grid = !this.editor.grid; gridBtn.classList.toggle('active', this.editor.grid); this.requestDraw(); };

    // export menu
    const menu = $('export-menu');
    const exp = $('btn-export');
    exp.onclick = (e) => { e.stopPropagation(); menu.hidden = !menu.hidden; exp.setAttribute('aria-expanded', String(!menu.hidden)); };
    document.addEventListener('click', () => { menu.hidden = true; exp.setAttribute('aria-expanded', 'false'); });
    for (const b of menu.querySelectorAll('[data-export]')) b.onclick = () => { menu.hidden = true; this.exportWhat(b.dataset.export); };

    // help keys
    $('help-keys').replaceChildren(...KEYS.map(([k, what]) => {
      const tr = document.createElement('tr');
      const a = document.createElement('td');
      a.innerHTML = k; // static text defined above, no user data
      const b = document.createElement('td');
      b.innerHTML = what;
      tr.append(a, b);
      return tr;
    }));

    // drag and drop
    let depth = 0;
    const hint = $('drop-hint');
    window.addEventListener('dragenter', (e) => { if ([...e.dataTransfer.types].includes('Files')) { depth++; hint.hidden = false; e.preventDefault(); } });
    window.addEventListener('dragleave', () => { depth = Math.max(0, depth - 1); if (!depth) hint.hidden = true; });
    window.addEventListener('dragover', (e) => { e.preventDefault(); });
    window.addEventListener('drop', (e) => {
      e.preventDefault();
      depth = 0;
      hint.hidden = true;
      const f = e.dataTransfer?.files?.[0];
      if (f) this.loadFile(f);
    });

    window.addEventListener('hashchange', () => this.openHash());
    window.addEventListener('pagehide', () => this.autosave());
    window.addEventListener('storage', (e) => this.onStorage(e));
    $('trace-notice-close').onclick = () => this.hideNotice();

    // history menu
    const hist = $('history-menu');
    const hbtn = $('btn-history');
    hbtn.onclick = (e) => {
      e.stopPropagation();
      hist.hidden = !hist.hidden;
      hbtn.setAttribute('aria-expanded', String(!hist.hidden));
      if (!hist.hidden) this.renderHistory();
    };
    hist.addEventListener('click', (e) => e.stopPropagation());
    document.addEventListener('click', () => { hist.hidden = true; hbtn.setAttribute('aria-expanded', 'false'); });
    window.addEventListener('keydown', (e) => this.onKey(e));
    window.matchMedia?.('(prefers-color-scheme: dark)').addEventListener?.('change', () => { this.theme = readTheme(); this.requestDraw(); });
  },

  onKey(e) {
    const t = e.target;
    const typing = t && (t.tagName === 'INPUT' || t.tagName === 'TEXTAREA' || t.tagName === 'SELECT');
    const ctrl = e.ctrlKey || e.metaKey;
    if (e.key === 'Escape') {
      for (const id of ['help', 'share', 'history-menu']) if (!$(id).hidden) { $(id).hidden = true; e.preventDefault(); return; }
      if (typing) { t.blur(); return; }
    }
    if (ctrl && e.key.toLowerCase() === 's') { e.preventDefault(); this.save(); return; }
    if (ctrl && e.key.toLowerCase() === 'o') { e.preventDefault(); $('file-input').click(); return; }
    if (typing) return;
    if (ctrl && e.key.toLowerCase() === 'z') { e.preventDefault(); if (e.shiftKey) this.doRedo(); else this.doUndo(); return; }
    if (ctrl && e.key.toLowerCase() === 'y') { e.preventDefault(); this.doRedo(); return; }
    if (ctrl || e.altKey) return;
    if (t === document.body || t === $('canvas') || t?.closest?.('#drawing') || t?.closest?.('.strip') || t?.closest?.('.readout')) {
      if (e.key === ' ') { this.editor.spaceHeld = true; }
      if (this.editor.onKey(e)) { e.preventDefault(); return; }
    }
    const k = e.key;
    const tools = { m: 'mirror', k: 'freeform', s: 'screen', b: 'beam', l: 'lamp', u: 'sun' };
    if ((k === 'Delete' || k === 'Backspace') && this.selection) { e.preventDefault(); this.deleteSelected(); }
    else if (tools[k.toLowerCase()] && !e.shiftKey) this.editor.setTool(tools[k.toLowerCase()]);
    else if (k === 'f' || k === 'F') this.editor.fit();
    else if (k === 'g' || k === 'G') $('toolbox').querySelector('[data-action="grid"]').click();
    else if (k === 't' || k === 'T') $('btn-theme').click();
    else if (k === 'a' || k === 'A') this.drawer.open(!this.drawer.isOpen());
    else if (k === 'd' || k === 'D') this.duplicateSelected();
    else if (k === 'x' || k === 'X') this.flipSelected();
    else if (k === '?') openHelp();
  },
};
