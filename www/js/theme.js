// Light/dark theme: the CSS custom properties are the one palette; the
// canvases read them here.

const KEY = 'catoptric.theme';

export function initialTheme() {
  try {
    const t = localStorage.getItem(KEY);
    if (t === 'light' || t === 'dark') return t;
  } catch { /* storage may be off */ }
  return window.matchMedia?.('(prefers-color-scheme: dark)').matches ? 'dark' : 'light';
}

export function applyTheme(name, remember = false) {
  document.documentElement.dataset.theme = name;
  if (remember) {
    try { localStorage.setItem(KEY, name); } catch { /* ignore */ }
  }
}

/** Colours for canvas drawing, read from the stylesheet. */
export function readTheme() {
  const cs = getComputedStyle(document.documentElement);
  const v = (n) => cs.getPropertyValue(n).trim();
  return {
    dark: document.documentElement.dataset.theme === 'dark',
    bg: v('--cv-bg'),
    grid: v('--cv-grid'),
    gridMajor: v('--cv-grid-major'),
    axis: v('--cv-axis'),
    mirror: v('--cv-mirror'),
    mirrorBack: v('--cv-mirror-back'),
    screen: v('--cv-screen'),
    select: v('--cv-select'),
    label: v('--cv-label'),
    ink: v('--ink'),
    ink2: v('--ink-2'),
    line: v('--line'),
    rayAlpha: Number(v('--cv-ray-alpha')) || 0.85,
  };
}
