// Number formatting, units and the meaning of every figure the page shows.
// A figure's key is the JSON key of the statistics report (docs/FORMATS.md §3);
// its unit comes from the key's suffix.

const THIN = '\u202f'; // narrow no-break space: thin, and never a line break

/** Integer with thousands grouped by a narrow no-break space: 20 000 (never split across lines). */
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
    let [m, e] = v.toExponential(sig - 1).split('e');
    if (m.includes('.')) m = m.replace(/0+$/, '').replace(/\.$/, '');
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

/**
 * Lengths switch unit as they grow: below 1 mm in µm, from 1 m in m
 * (a sun's spot on a facade is metres, not 10⁶ µm). The command line's
 * tables follow the same rule (src/format.rs); tests/format_cases.json
 * holds the cases both are checked against.
 */
const LENGTH_UNITS = [['µm', 1e-3], ['mm', 1], ['m', 1e3]];

/** The readable unit for a length of `mm` (its magnitude): 'µm', 'mm' or 'm'. */
export function lengthUnit(mm) {
  const a = Math.abs(mm);
  if (!(a > 0) || !Number.isFinite(a)) return 'mm';
  if (a < 1) return 'µm';
  if (a >= 1000) return 'm';
  return 'mm';
}

/** `mm` expressed in `unit` ('µm', 'mm' or 'm'). */
export function inUnit(mm, unit) {
  const f = LENGTH_UNITS.find(([u]) => u === unit)?.[1] ?? 1;
  return mm / f;
}

/**
 * A length in mm shown in the most readable unit (µm, mm, m), `sig`
 * digits; a length that is zero (or rounding noise) reads in `zeroUnit`.
 */
export function fmtLength(mm, sig = 4, zeroUnit = 'mm') {
  if (typeof mm !== 'number' || Number.isNaN(mm)) return '–';
  const clean = denoise(mm, 'mm');
  // The unit of the value as rounded, so 999.96 µm reads 1 mm, not 1000 µm.
  const unit = clean === 0 ? zeroUnit : lengthUnit(Number(clean.toPrecision(sig)));
  return withUnit(inUnit(clean, unit), unit, sig);
}

/** A spot size given in µm, shown like any length: 4562 µm reads 4.562 mm. */
export function fmtSpot(um, sig = 4) {
  return fmtLength(denoise(um, 'µm') / 1000, sig, 'µm');
}

/**
 * Fraction of the scene's size below which a position or a focus shift is
 * rounding and sampling noise of an exact answer (a centred spot's
 * centroid at 6.5×10⁻⁵ mm in a metre-sized layout): a micrometre per
 * metre. Such a value shows as 0, and no digit finer than this is shown.
 */
export const SCENE_NOISE_REL = 1e-6;

/** Size of a layout in mm: the largest coordinate or extent of its parts (at least 1 mm). */
export function sceneScale(layout) {
  let s = 1;
  const grow = (v) => { if (typeof v === 'number' && Number.isFinite(v)) s = Math.max(s, Math.abs(v)); };
  for (const e of [...(layout?.elements ?? []), ...(layout?.sources ?? [])]) {
    for (const p of [e.vertex, e.center]) if (Array.isArray(p)) p.forEach(grow);
    grow(e.aperture?.diameter); grow(e.size); grow(e.diameter); grow(e.length);
    grow(e.profile?.radius);
  }
  return s;
}

/**
 * A position or shift in mm in a scene of size `scale` mm: 0 when below
 * the scene's noise (SCENE_NOISE_REL × scale), otherwise up to `sig`
 * significant digits and none finer than that noise.
 */
export function fmtPos(mm, scale, sig = 5) {
  if (typeof mm !== 'number' || Number.isNaN(mm)) return '–';
  if (!Number.isFinite(mm)) return fmtNum(mm);
  const res = SCENE_NOISE_REL * (scale > 0 ? scale : 1);
  if (Math.abs(mm) < res) return '0';
  const lead = Math.floor(Math.log10(Math.abs(mm)));
  const finest = Math.floor(Math.log10(res));
  return fmtNum(mm, Math.max(1, Math.min(sig, lead - finest + 1)));
}

/** Labels, units and hover explanations of report keys. */
const INFO = {
  rays_launched: ['launched', 'rays', 'Rays launched by all sources in the last trace'],
  rays_escaped: ['escaped', 'rays', 'Rays that left the scene without being absorbed (including rays that crossed a see-through screen)'],
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

/**
 * The unit a row of the statistics table (or a readout figure) shows
 * `key` in, given its largest value: lengths in µm switch to mm or m.
 */
export function statUnit(key, largest) {
  const u = statInfo(key).unit;
  if (u !== 'µm' || typeof largest !== 'number' || !Number.isFinite(largest)) return u;
  const clean = denoise(largest, 'µm');
  return clean === 0 ? 'µm' : lengthUnit(Number((clean / 1000).toPrecision(4)));
}

/**
 * Formats a report value (number, [u, v] pair or other) for a cell, in
 * `unit` (statUnit) when given; `scale` is the scene's size in mm
 * (sceneScale), below whose noise positions and shifts read 0.
 */
export function fmtStat(key, v, { unit, scale } = {}) {
  const mm = key.endsWith('_mm');
  if (Array.isArray(v)) return v.map((x) => (mm ? fmtPos(x, scale ?? 1) : fmtNum(x, 5))).join(', ');
  if (typeof v === 'boolean') return v ? 'yes' : 'no';
  if (typeof v !== 'number') return v === null || v === undefined ? '–' : String(v);
  if (key === 'hits' || key.startsWith('rays_')) return fmtInt(v);
  if (mm) return fmtPos(v, scale ?? 1, 4);
  const base = statInfo(key).unit;
  if (base === 'µm' && unit && unit !== 'µm') return fmtNum(inUnit(denoise(v, 'µm') / 1000, unit), 4);
  return fmtNum(denoise(v, base), 4);
}
