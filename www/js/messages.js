// Error texts in the page's own words: the core names a field by its path
// in the layout file (`elements[0].aperture.diameter: …`, docs/FORMATS.md
// §2); the page says which element and which of its visible labels
// (`mirror “primary”, diameter: …`), and never repeats a prefix
// ("link: link: …").

/** The property sheet's labels for layout field paths (the leaf after the element). */
const LABELS = {
  name: 'name',
  wavelength_nm: 'wavelength',
  max_bounces: 'max bounces',
  notes: 'notes',
  'site.latitude_deg': 'latitude',
  'site.longitude_deg': 'longitude',
  'site.z_bearing_deg': '+z faces',
  'site.elevation_m': 'elevation',
  id: 'id',
  vertex: 'vertex',
  center: 'centre',
  axis_deg: 'axis',
  direction_deg: 'direction',
  form: 'form',
  length: 'length',
  'profile.radius': 'radius R',
  'profile.conic': 'conic K',
  'profile.aspheric': 'aspheric terms',
  'profile.departure': 'free-form departure',
  'aperture.diameter': 'diameter',
  'aperture.offset': 'off-axis offset',
  'aperture.hole': 'central hole',
  reflectivity: 'reflectivity',
  slope_error_mrad: 'slope error σ',
  size: 'size',
  shape: 'shape',
  opaque: 'opaque',
  out_of_plane_deg: 'out of plane',
  diameter: 'diameter',
  rays: 'rays',
  pattern: 'pattern',
  sun_half_angle_mrad: 'sun half-angle',
  irradiance_w_m2: 'irradiance',
  sunshape: 'sun shape',
  csr: 'circumsolar ratio',
  cone_half_angle_deg: 'cone half-angle',
  power_w: 'power',
};

const KIND_WORD = { mirror: 'mirror', screen: 'screen', beam: 'beam', point: 'lamp' };

/** The label of a path's leaf: `aperture.diameter` → "diameter"; `vertex[1]` → "vertex z". */
function leafLabel(leaf) {
  const m = /^(.*?)(?:\[(\d+)\])?((?:\[\d+\])*)$/.exec(leaf);
  const base = m?.[1] ?? leaf;
  const label = LABELS[base] ?? base.replace(/_(deg|mm|nm|mrad|w_m2|w|m)$/, '').replace(/[._]/g, ' ');
  if ((base === 'vertex' || base === 'center') && m?.[2] !== undefined) return `${label} ${m[2] === '0' ? 'y' : 'z'}`;
  if (base === 'profile.departure' && m?.[2] !== undefined) return `${label}, knot ${Number(m[2]) + 1}`;
  return label;
}

/**
 * Words for a layout field path: "elements[0].aperture.diameter" reads
 * "mirror “primary”, diameter" (the element's id taken from `layout`).
 */
export function pathLabel(path, layout) {
  const m = /^(elements|sources)\[(\d+)\](?:\.(.+))?$/.exec(path);
  if (!m) return LABELS[path] ?? leafLabel(path);
  const item = layout?.[m[1]]?.[Number(m[2])];
  const who = item ? `${KIND_WORD[item.kind] ?? item.kind} “${item.id}”` : `${m[1] === 'elements' ? 'element' : 'source'} ${Number(m[2]) + 1}`;
  return m[3] ? `${who}, ${leafLabel(m[3])}` : who;
}

const PATH = String.raw`(?:elements|sources)\[\d+\](?:\.[\w.]+(?:\[\d+\])*)?|wavelength_nm|max_bounces|site\.\w+`;
const PATH_AT = new RegExp(`(^|: )(link: )?(${PATH}): `, 'g');

/**
 * An error text from the core in the page's words: repeated prefixes
 * once, a field path (at the start or after "…: ", maybe after "link: ")
 * as the visible labels. A path inside a link names the link's layout,
 * not `layout`, so it is told by position.
 */
export function plainError(text, layout) {
  let t = String(text ?? '');
  // "link: link: …", "x: x: …" → once.
  for (let prev = ''; prev !== t;) {
    prev = t;
    t = t.replace(/(^|: )([^:]{1,40}): \2: /, '$1$2: ');
  }
  t = t.replace(PATH_AT, (_, lead, link, path) => `${lead}${link ?? ''}${pathLabel(path, link ? null : layout)}: `);
  // "… the shared link: link: is cut short" → "… the shared link: it is cut short".
  return t.replace(/(link): link: (?=(?:is|has|does) )/, '$1: it ').replace(/(link): link: /, '$1: ');
}
