// The analysis drawer's height: dragged by a grip on its top edge,
// remembered in localStorage, and held so the drawing above keeps at least
// MIN_DRAWING_PX of height below the folded sun caution whatever the window
// (a short laptop screen with the caution and a message shown still leaves
// a usable drawing).

/** Height the drawing keeps however tall the drawer is dragged, px. */
export const MIN_DRAWING_PX = 300;
/** Smallest drawer worth showing: its tabs and a few lines of a view, px. */
export const MIN_DRAWER_PX = 150;
/** Default drawer height: this fraction of the window, at most DEFAULT_DRAWER_MAX_PX. */
const DEFAULT_DRAWER_FRACTION = 0.44;
const DEFAULT_DRAWER_MAX_PX = 440;
/** Key of the remembered height (px). */
export const DRAWER_HEIGHT_KEY = 'catoptric.drawer.height';

function stored() {
  try {
    const v = Number(localStorage.getItem(DRAWER_HEIGHT_KEY));
    return Number.isFinite(v) && v > 0 ? v : null;
  } catch {
    return null;
  }
}

function remember(px) {
  try { localStorage.setItem(DRAWER_HEIGHT_KEY, String(Math.round(px))); } catch { /* storage refused: the height lasts this visit */ }
}

/**
 * Sizes `drawer` (the .drawer section) and lets the user drag its top edge.
 * `onResize` runs after a change so the views can redraw.
 */
export class DrawerSize {
  constructor(drawer, onResize) {
    this.drawer = drawer;
    this.onResize = onResize;
    this.wanted = stored() ?? Math.min(DEFAULT_DRAWER_MAX_PX, DEFAULT_DRAWER_FRACTION * window.innerHeight);
    const grip = document.createElement('div');
    grip.className = 'drawer-grip';
    grip.setAttribute('role', 'separator');
    grip.setAttribute('aria-orientation', 'horizontal');
    grip.setAttribute('aria-label', 'Drawer height');
    grip.title = 'Drag to make the analysis drawer taller or shorter (the height is remembered)';
    grip.tabIndex = 0;
    drawer.prepend(grip);
    this.grip = grip;
    grip.addEventListener('pointerdown', (e) => this.start(e));
    grip.addEventListener('keydown', (e) => {
      const d = e.key === 'ArrowUp' ? 20 : e.key === 'ArrowDown' ? -20 : 0;
      if (!d) return;
      e.preventDefault();
      this.set(this.height() + d, true);
    });
    window.addEventListener('resize', () => this.apply());
    // Messages, notices, the readout's wrapping and the caution change the
    // room the drawing has.
    const watch = new ResizeObserver(() => this.apply());
    for (const sel of ['.strip', '#message', '#trace-notice', '#readout', '#sun-caution']) {
      const el = document.querySelector(sel);
      if (el) watch.observe(el);
    }
    this.apply();
  }

  /** Largest drawer height that leaves the drawing MIN_DRAWING_PX. */
  maxHeight() {
    const app = this.drawer.parentElement;
    let other = 0;
    for (const el of app.children) {
      if (el === this.drawer || el.classList.contains('work') || el.hidden) continue;
      const pos = getComputedStyle(el).position;
      if (pos === 'absolute' || pos === 'fixed') continue;
      other += el.getBoundingClientRect().height;
    }
    return Math.max(MIN_DRAWER_PX, Math.floor(window.innerHeight - other - this.cautionLine() - MIN_DRAWING_PX));
  }

  /** Height of the folded sun caution over the drawing (0 without one). */
  cautionLine() {
    const c = document.getElementById('sun-caution');
    if (!c || c.hidden) return 0;
    if (c.dataset.expanded !== 'true') this.foldedCaution = c.getBoundingClientRect().height;
    return this.foldedCaution ?? 0;
  }

  /** The height the drawer has when open. */
  height() {
    return Math.max(MIN_DRAWER_PX, Math.min(this.wanted, this.maxHeight()));
  }

  apply() {
    const h = this.height();
    if (this.shown === h) return;
    this.shown = h;
    this.drawer.style.setProperty('--drawer-h', `${Math.round(h)}px`);
    this.onResize?.();
  }

  set(px, keep) {
    this.wanted = Math.max(MIN_DRAWER_PX, Math.min(px, this.maxHeight()));
    if (keep) remember(this.wanted);
    this.apply();
  }

  start(e) {
    if (this.drawer.dataset.open !== 'true') return;
    e.preventDefault();
    const y0 = e.clientY;
    const h0 = this.height();
    this.grip.setPointerCapture(e.pointerId);
    this.drawer.classList.add('resizing');
    const move = (ev) => this.set(h0 + (y0 - ev.clientY), false);
    const end = () => {
      this.grip.removeEventListener('pointermove', move);
      this.grip.removeEventListener('pointerup', end);
      this.grip.removeEventListener('pointercancel', end);
      this.drawer.classList.remove('resizing');
      remember(this.wanted);
    };
    this.grip.addEventListener('pointermove', move);
    this.grip.addEventListener('pointerup', end);
    this.grip.addEventListener('pointercancel', end);
  }
}
