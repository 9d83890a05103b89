// Number formatting, units and the meaning of every figure the page shows.
// A figure's key is the JSON key of the statistics report (docs/FORMATS.md §3);
// its unit comes from the key's suffix.

const THIN = '\u2009';

/** Integer with thin-space thousands separators: 20 000. */
export function fmtInt(n) {
  if (!Number.isFinite(n)) return '–';
  const s = Math.round(Math.abs(n)).toString().replace(/\B(?=(\d{3})+(?!\d))/g, THIN);
  return n < 0 ? `−${s}` : s;
}

/** A measured value with about `sig` significant digits. */
export function fmtNum(v, sig = 4) {
  if (v === null || v === undefined || Number.isNaN(v)) return '–';
  if (!Number.isFinite(v)) return v > 0 ? '∞' : '−∞';
  if (v === 0) return '0';
  const a = Math.abs(v);
  let s;
  if (a >= 1e6 || a < 1e-4) {
    const [m, e] = v.toExponential(sig - 1).split('e');
    s = `${m}×10^${Number(e)}`.replace(/\^(-?\d+)/, (_, x) => sup(x));
  } else {
    const digits = Math.max(0, sig - 1 - Math.floor(Math.log10(a)));
    s = v.toFixed(Math.min(digits, 8));
    if (s.includes('.')) s = s.replace(/0+$/, '').replace(/\.$/, '');
    if (a >= 1e4) s = s.replace(/^(-?\d+)/, (m) => m.replace(/\B(?=(\d{3})+(?!\d))/g, THIN));
  }
  return s.replace(/^-/, '−');
}

function sup(x) {
  const map = { '-': '⁻', 0: '⁰', 1: '¹', 2: '²', 3: '³', 4: '⁴', 5: '⁵', 6: '⁶', 7: '⁷', 8: '⁸', 9: '⁹' };
  return [...String(x)].map((c) => map[c] ?? c).join('');
}

/**
 * Magnitudes below which a figure in this unit is floating-point noise of an
 * exact result (a perfect focus gives an RMS radius of 1e-11 µm, not 0):
 * 0.01 nm of length, a millionth of a wave. Shown as 0; hover titles and
 * exports keep the raw value.
 */
const NOISE_FLOOR = { 'µm': 1e-5, mm: 1e-8, nm: 1e-2, waves: 1e-6, 'λ': 1e-6 };

/** `v`, or 0 when it is below the noise floor of `unit`. */
export function denoise(v, unit) {
  const f = NOISE_FLOOR[unit];
  return f && typeof v === 'number' && Math.abs(v) < f ? 0 : v;
}

/** Value plus unit, e.g. "12.5 µm". */
export function withUnit(v, unit, sig) {
  const n = fmtNum(denoise(v, unit), sig);
  return unit ? `${n}${THIN}${unit}` : n;
}

/** A length in mm shown in the most readable unit (µm, mm, m). */
export function fmtLength(mm) {
  const a = Math.abs(mm);
  if (a > 0 && a < 1) return withUnit(mm * 1000, 'µm', 3);
  if (a >= 10000) return withUnit(mm / 1000, 'm', 4);
  return withUnit(mm, 'mm', 4);
}

/** Labels, units and hover explanations of report keys. */
const INFO = {
  rays_launched: ['launched', 'rays', 'Rays launched by all sources in the last trace'],
  rays_escaped: ['escaped', 'rays', 'Rays that left the scene without being absorbed'],
  rays_absorbed: ['absorbed', 'rays', 'Rays stopped by a mirror back, an opaque screen or the bounce limit'],
  hits: ['hits', '', 'Rays arriving on the sensitive face of the screen'],
  power_w: ['power', 'W', 'Power carried by the rays that reached the screen'],
  centroid_mm: ['centroid u, v', 'mm', 'Power-weighted centre of the spot in screen coordinates (u along x, v along the screen)'],
  rms_radius_um: ['RMS radius', 'µm', 'Root-mean-square distance of the hits from the spot centroid, weighted by power'],
  max_radius_um: ['max radius', 'µm', 'Distance of the farthest hit from the centroid'],
  best_focus_shift_mm: ['best focus', 'mm', 'Signed shift along the screen axis where the RMS spot is smallest (positive: toward the arriving light)'],
  rms_radius_at_best_um: ['RMS at best', 'µm', 'RMS spot radius at the best-focus shift'],
  f_number: ['f-number', '', 'Working f-number from the cone of arriving rays'],
  airy_radius_um: ['Airy radius', 'µm', 'Radius of the first dark ring of a perfect focus, 1.22 λ N'],
  wavefront_pv_waves: ['wavefront P-V', 'waves', 'Peak-to-valley wavefront error at best diffraction focus, in waves'],
  wavefront_rms_waves: ['wavefront RMS', 'waves', 'RMS wavefront error at best diffraction focus, in waves'],
  strehl_estimate: ['Strehl est. (Maréchal)', '', 'exp(−(2πσ)²) from the RMS wavefront at best focus: a fair estimate for small errors only (σ ≲ 0.1 wave); the Image view and the readout give the Strehl ratio from the PSF'],
  ee50_radius_um: ['EE50 radius', 'µm', 'Radius about the centroid holding 50 % of the power'],
  ee80_radius_um: ['EE80 radius', 'µm', 'Radius about the centroid holding 80 % of the power'],
  diffraction_limited: ['diffraction-limited', '', 'Whether the wavefront error is within the Maréchal criterion (Strehl ≥ 0.8)'],
  'flux.peak_w_m2': ['peak flux', 'W/m²', 'Highest irradiance on the screen'],
  'flux.mean_w_m2': ['mean flux', 'W/m²', 'Power on the screen divided by its area'],
  'flux.peak_suns': ['peak', 'suns', 'Peak irradiance over the incident irradiance (concentration ratio)'],
  'flux.intercept': ['intercept', '', 'Fraction of the launched power that reaches the screen'],
};

const SUFFIX_UNITS = [
  ['_w_m2', 'W/m²'], ['_um', 'µm'], ['_mm', 'mm'], ['_deg', '°'], ['_waves', 'waves'],
  ['_suns', 'suns'], ['_w', 'W'], ['_nm', 'nm'], ['_mrad', 'mrad'],
];

/** { label, unit, title } of a report key (dotted for nested keys). */
export function statInfo(key) {
  const known = INFO[key];
  if (known) return { label: known[0], unit: known[1], title: known[2] };
  const leaf = key.split('.').pop();
  const hit = SUFFIX_UNITS.find(([s]) => leaf.endsWith(s));
  const unit = hit ? hit[1] : '';
  const base = hit ? leaf.slice(0, -hit[0].length) : leaf;
  return { label: base.replace(/_/g, ' '), unit, title: `${base.replace(/_/g, ' ')}${unit ? ` (${unit})` : ''}` };
}

/** Preferred column order; other keys follow in report order. */
export const STAT_ORDER = [
  'hits', 'power_w', 'centroid_mm', 'rms_radius_um', 'max_radius_um', 'best_focus_shift_mm',
  'rms_radius_at_best_um', 'f_number', 'airy_radius_um', 'wavefront_pv_waves', 'wavefront_rms_waves',
  'strehl_estimate', 'ee50_radius_um', 'ee80_radius_um',
];

/** Formats a report value (number, [u, v] pair or other) for a cell. */
export function fmtStat(key, v) {
  // Positions below a picometre are rounding noise of a centred spot.
  if (Array.isArray(v)) return v.map((x) => fmtNum(key.endsWith('_mm') && Math.abs(x) < 1e-9 ? 0 : x, 5)).join(', ');
  if (typeof v === 'boolean') return v ? 'yes' : 'no';
  if (typeof v !== 'number') return v === null || v === undefined ? '–' : String(v);
  if (key === 'hits' || key.startsWith('rays_')) return fmtInt(v);
  return fmtNum(denoise(v, statInfo(key).unit), 4);
}
