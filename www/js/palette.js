// One colour and one marker shape per source. Colours are the Okabe–Ito
// colour-blind-safe set (Okabe & Ito, "Color Universal Design", 2002),
// reordered so the first few read well on light and dark grounds; the
// marker shape repeats the distinction for readers who cannot tell the
// colours apart.

const COLOURS = ['#0072B2', '#D55E00', '#009E73', '#CC79A7', '#E69F00', '#56B4E9', '#F0E442', '#7f7f7f'];
const COLOURS_DARK = ['#56B4E9', '#E69F00', '#009E73', '#CC79A7', '#D55E00', '#8fb8ff', '#F0E442', '#b0b0b0'];
export const MARKERS = ['circle', 'square', 'triangle', 'diamond', 'plus', 'cross', 'triangle-down', 'star'];

export function sourceColour(i, dark) {
  const c = dark ? COLOURS_DARK : COLOURS;
  return c[i % c.length];
}

export function sourceMarker(i) {
  return MARKERS[Math.floor(i) % MARKERS.length];
}

/** Adds marker `kind` of half-size `r` at (x, y) to the current path. */
export function markerPath(ctx, kind, x, y, r) {
  switch (kind) {
    case 'square':
      ctx.rect(x - r * 0.85, y - r * 0.85, r * 1.7, r * 1.7);
      break;
    case 'triangle':
      ctx.moveTo(x, y - r * 1.1); ctx.lineTo(x + r, y + r * 0.75); ctx.lineTo(x - r, y + r * 0.75); ctx.closePath();
      break;
    case 'triangle-down':
      ctx.moveTo(x, y + r * 1.1); ctx.lineTo(x + r, y - r * 0.75); ctx.lineTo(x - r, y - r * 0.75); ctx.closePath();
      break;
    case 'diamond':
      ctx.moveTo(x, y - r * 1.2); ctx.lineTo(x + r, y); ctx.lineTo(x, y + r * 1.2); ctx.lineTo(x - r, y); ctx.closePath();
      break;
    case 'plus':
      ctx.moveTo(x - r, y); ctx.lineTo(x + r, y); ctx.moveTo(x, y - r); ctx.lineTo(x, y + r);
      break;
    case 'cross':
      ctx.moveTo(x - r, y - r); ctx.lineTo(x + r, y + r); ctx.moveTo(x - r, y + r); ctx.lineTo(x + r, y - r);
      break;
    case 'star':
      for (let k = 0; k < 3; k++) {
        const a = (k * Math.PI) / 3;
        ctx.moveTo(x - r * Math.cos(a), y - r * Math.sin(a)); ctx.lineTo(x + r * Math.cos(a), y + r * Math.sin(a));
      }
      break;
    default:
      ctx.moveTo(x + r, y); ctx.arc(x, y, r, 0, 2 * Math.PI);
  }
}

/** Stroke-only markers (lines) versus filled ones. */
export function markerIsLine(kind) {
  return kind === 'plus' || kind === 'cross' || kind === 'star';
}

/** A small legend swatch (canvas) for source `i`. */
export function swatch(i, dark, size = 14) {
  const c = document.createElement('canvas');
  const dpr = window.devicePixelRatio || 1;
  c.width = size * dpr; c.height = size * dpr;
  c.className = 'swatch';
  const ctx = c.getContext('2d');
  ctx.scale(dpr, dpr);
  const kind = sourceMarker(i);
  ctx.beginPath();
  markerPath(ctx, kind, size / 2, size / 2, size * 0.36);
  ctx.strokeStyle = ctx.fillStyle = sourceColour(i, dark);
  ctx.lineWidth = 1.6;
  if (markerIsLine(kind)) ctx.stroke(); else ctx.fill();
  return c;
}
