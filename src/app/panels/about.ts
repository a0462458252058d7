/** The about dialog: what the app does, the full caution, the keyboard. */
import { CAUTION } from '../../caution.js';
import { h } from '../dom.js';

export function buildAboutDialog(): HTMLDialogElement {
  const close = h('button', { type: 'button', class: 'primary small', 'data-testid': 'about-close' }, 'Close');
  const dlg = h(
    'dialog',
    { class: 'about', 'aria-labelledby': 'about-title', 'data-testid': 'about-dialog' },
    h('h2', { id: 'about-title' }, 'About shimmy'),
    h('p', { class: 'caution', 'data-testid': 'caution' }, CAUTION),
    h(
      'p',
      null,
      'shimmy builds an N1×N2 supercell of a periodic bar-and-joint framework under free, pinned, twisted-phase or mixed boundary rules, assembles its rigidity matrix R, and computes the flexes (ker R, infinitesimal joint velocities that keep every bar length to first order) and the self-stresses (ker Rᴴ). Every rank decision is reported with its tolerance and the singular-value gap around the cut.',
    ),
    h('p', null, 'The animation shows p + ε·Re(e^(iφ)·u) over one period (φ from 0 to 2π): a drawing of a first-order motion, not a finite motion. Large amplitudes visibly stretch bars; that is expected.'),
    h(
      'p',
      null,
      'The computation runs in a background worker with the same code as the command line (npx shimmy count …), so the counts here equal the CLI’s for the same input.',
    ),
    h('h3', null, 'Keyboard'),
    h('ul', null, h('li', null, 'Space: play or pause'), h('li', null, '← / → (or ↑ / ↓): previous / next flex in the list'), h('li', null, 'On the stage: + / − zoom, 0 fits')),
    h('div', { class: 'row' }, close),
  );
  close.addEventListener('click', () => dlg.close());
  return dlg;
}
