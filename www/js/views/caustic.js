// Caustic layer of the drawing: the density of a dense meridional fan
// (CAUSTIC_RAYS per source) over the visible part of the layout, at half
// the canvas resolution, drawn under the ray fan. The pixels are built in
// Rust (Session.caustic_pixels) and go on an offscreen canvas as one
// ImageData, which is then scaled onto the drawing.

export const CAUSTIC_RAYS = 2000;

export class CausticLayer {
  constructor(app) {
    this.app = app;
    this.on = false;
    this.key = '';
    this.off = document.createElement('canvas');
    this.button = document.querySelector('#toolbox [data-action="caustic"]');
    if (this.button) this.button.onclick = () => this.toggle();
  }

  toggle(on = !this.on) {
    this.on = on;
    this.button?.classList.toggle('active', on);
    this.button?.setAttribute('aria-pressed', String(on));
    this.app.requestDraw();
  }

  /** Draws the layer (when on) with the editor's current view. */
  draw(ctx, ed) {
    if (!this.on) return;
    const { w, h, dpr } = ed.size;
    const pw = Math.max(1, Math.round((w * dpr) / 2)), ph = Math.max(1, Math.round((h * dpr) / 2));
    const [y0, z0] = ed.toWorld(0, h);
    const [y1, z1] = ed.toWorld(w, 0);
    const dark = this.app.theme.dark;
    const key = `${this.app.traceGen}|${y0}|${z0}|${y1}|${z1}|${pw}|${ph}|${dark}`;
    if (key !== this.key) {
      this.key = key;
      try {
        const s = this.app.session;
        s.caustic_pixels(y0, z0, y1, z1, pw, ph, CAUSTIC_RAYS, dark);
        // The view is valid until the next call into the session: put it on
        // the offscreen canvas at once.
        const v = s.caustic_pixels_view();
        const img = new ImageData(new Uint8ClampedArray(v.buffer, v.byteOffset, v.length), pw, ph);
        this.off.width = pw;
        this.off.height = ph;
        this.off.getContext('2d').putImageData(img, 0, 0);
      } catch (e) {
        this.off.width = 1;
        this.off.height = 1;
        this.app.message(`The caustic could not be drawn: ${e?.message ?? e}`);
        this.toggle(false);
        return;
      }
    }
    ctx.drawImage(this.off, 0, 0, w, h);
  }
}
