// Small DOM helpers shared by the page's modules.

/** The element with this id. */
export const $ = (id) => document.getElementById(id);

/** A bold run of text. */
export function b(text) {
  const el = document.createElement('b');
  el.textContent = text;
  return el;
}

/** An error's text (an Error's message, or the value itself). */
export function errText(e) {
  return String(e?.message ?? e);
}
