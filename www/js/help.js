// The Help dialog: opens at the top (Help button, ?) or, from the "?" on
// the analysis drawer, at the entry of the view on show.

const $ = (id) => document.getElementById(id);

/** Opens Help; with `view`, scrolls to that view's entry and marks it. */
export function openHelp(view) {
  const dlg = $('help');
  dlg.hidden = false;
  for (const el of dlg.querySelectorAll('.help-here')) el.classList.remove('help-here');
  const entry = view ? $(`help-view-${view}`) : null;
  const body = $('help-body');
  if (entry) {
    entry.classList.add('help-here');
    entry.nextElementSibling?.classList.add('help-here');
    body.scrollTop = entry.offsetTop - 8;
  } else {
    body.scrollTop = 0;
  }
  dlg.querySelector('[data-close="help"]')?.focus();
}

/** Wires the Help button, the drawer's "?" and the section links. */
export function wireHelp(app) {
  $('btn-help').onclick = () => openHelp();
  $('btn-view-help').onclick = () => openHelp(app.drawer.current);
  // Section links scroll inside the dialog, never change the page's #L= link.
  for (const a of $('help').querySelectorAll('.help-nav a')) {
    a.onclick = (e) => {
      e.preventDefault();
      const t = $(a.getAttribute('href').slice(1));
      const body = $('help-body');
      body.scrollTop = t.offsetTop;
    };
  }
}
