// Exports of the analysis views: CSV of each curve, of the flux map, the MTF
// and the Zernike terms, and the flux and diffraction images as PNG.

import { download, slug } from '../export.js';

/** Handles the analysis entries of the Export menu; false for others. */
export function exportAnalysis(app, what) {
  const d = app.drawer;
  const view = (id) => d.views.find((v) => v.id === id);
  const csv = (r) => {
    if (!r) { app.message('Nothing to export: no curve for the chosen screen and source yet.'); return; }
    download(`${slug(app.layout.name)}-${slug(r.name)}.csv`, new Blob([`${r.header}\n${r.rows.join('\n')}\n`], { type: 'text/csv' }));
  };
  // The views read the last result; make sure theirs is current.
  const ready = (id) => { d.open(true, id); return view(id); };
  switch (what) {
    case 'focus-csv': csv(ready('focus')?.csv('focus')); return true;
    case 'longitudinal-csv': csv(ready('focus')?.csv('longitudinal')); return true;
    case 'energy-csv': csv(ready('energy')?.csv()); return true;
    case 'flux-csv': csv(ready('flux')?.csv()); return true;
    case 'mtf-csv': case 'zernike-csv': {
      const v = ready('image');
      const r = v?.csv(what === 'mtf-csv' ? 'mtf' : 'zernike');
      if (r) csv(r);
      else app.message('Nothing to export yet: the diffraction image of the chosen screen and source is not ready (see the Image view).');
      return true;
    }
    case 'psf-png': {
      const v = view('image');
      if (!v || !app.result) { app.message('Nothing to export yet.'); return true; }
      d.openThen('image', () => {
        v.update();
        if (!v.answer) { app.message('The diffraction image is not ready yet (see the Image view); try again in a moment.'); return; }
        v.drawPsf();
        v.canvas.toBlob((b) => b && download(`${slug(app.layout.name)}-${slug(v.answer.report.screen)}-psf.png`, b), 'image/png');
      });
      return true;
    }
    case 'flux-png': {
      const v = view('flux');
      if (!v || !app.result) { app.message('Nothing to export yet.'); return true; }
      // Let the drawer open and lay out before taking the picture.
      d.openThen('flux', () => {
        v.update();
        v.canvas.toBlob((b) => b && download(`${slug(app.layout.name)}-${slug(app.result.report.screens[app.spotScreen]?.id ?? 'screen')}-flux.png`, b), 'image/png');
      });
      return true;
    }
    default: return false;
  }
}
