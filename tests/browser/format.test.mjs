// The page's number formatter (www/js/format.js) against the case table it
// shares with the command line (tests/format_cases.json; the Rust side is
// tests/format.rs), so one value reads the same way on the page and in
// the terminal. The expected strings are the formatting rules written out
// by hand (common practice: significant digits, SI units switched by
// magnitude, thin-space digit groups as in ISO 80000-1 §7.3.1).

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { REPO } from './harness.mjs';
import { fmtLength, fmtNum, fmtPos, fmtSpot, fmtStat, sceneScale, statUnit } from '../../www/js/format.js';

const { cases } = JSON.parse(readFileSync(join(REPO, 'tests', 'format_cases.json'), 'utf8'));

test('the shared cases print as the table says', () => {
  assert.ok(cases.length >= 20);
  for (const c of cases) {
    const got = c.kind === 'sig' ? fmtNum(c.v, c.n)
      : c.kind === 'spot' ? fmtSpot(c.v, c.n)
        : c.kind === 'length' ? fmtLength(c.v, c.n)
          : fmtPos(c.v, c.scale, c.n);
    assert.equal(got, c.want, JSON.stringify(c));
  }
});

test('a statistics row in metres when its largest spot is metres; noise shifts read 0', () => {
  // "RMS 8.598×10⁶ µm" on a facade is 8.598 m.
  const unit = statUnit('rms_radius_um', 8.598e6);
  assert.equal(unit, 'm');
  assert.equal(fmtStat('rms_radius_um', 8.598e6, { unit }), '8.598');
  assert.equal(statUnit('rms_radius_um', 1.6e-11), 'µm');
  // A centred spot's centroid and best focus in a metre-sized layout.
  const layout = { elements: [{ kind: 'mirror', vertex: [0, 1000], aperture: { diameter: 200 }, profile: { radius: 2000 } }], sources: [] };
  const scale = sceneScale(layout);
  assert.equal(scale, 2000);
  assert.equal(fmtStat('best_focus_shift_mm', -8.501e-5, { scale }), '0');
  assert.equal(fmtStat('centroid_mm', [1e-12, -6.51002e-5], { scale }), '0, 0');
  assert.ok(!fmtNum(-1e-300, 4).startsWith('-'), 'no ASCII minus');
});
