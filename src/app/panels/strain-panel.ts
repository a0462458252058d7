/**
 * The strain view: flexes of the periodic framework when its lattice may deform
 * (src/strain/flexible-lattice.ts, run in the worker on request), listed with their principal
 * strains, kind and whether they are auxetic, and drawn as the cell before and after the flex.
 * Zero-strain flexes are listed too; a framework without any says so.
 */
import type { StrainData } from '../../worker/protocol.js';
import type { Host } from '../host.js';
import { RunError } from '../client.js';
import { clear, h, newId } from '../dom.js';
import { frameworkOf, frameworkTitle } from '../state.js';
import { asDrawable, drawAmount, STRAIN_INK, strainedCell, strainFigure, strainText } from '../strain-view.js';

export interface StrainPanel {
  el: HTMLElement;
  frameworkChanged(): void;
}

const FIGURE = { width: 340, height: 260 };

export function buildStrainPanel(app: Host): StrainPanel {
  const cellId = newId('strain-cell');
  const cellSel = h(
    'select',
    { id: cellId, 'data-testid': 'strain-cell' },
    h('option', { value: 'unit', selected: true }, 'the unit cell (1×1)'),
    h('option', { value: 'block' }, 'the N1×N2 block of the settings'),
  );
  const run = h('button', { type: 'button', class: 'small primary', 'data-testid': 'strain-run' }, 'Compute strains');
  const cancel = h('button', { type: 'button', class: 'small', hidden: true, 'data-testid': 'strain-cancel', onclick: () => void app.client.cancelStrain() }, 'Cancel');
  const status = h('span', { class: 'hint', 'aria-live': 'polite', 'data-testid': 'strain-status' });
  const summary = h('p', { class: 'hint', 'data-testid': 'strain-summary' });
  const list = h('div', { class: 'strain-list', role: 'listbox', 'aria-label': 'Flexes with a deforming lattice', 'data-testid': 'strain-list' });
  const figure = h('div', { class: 'strain-figure', 'data-testid': 'strain-figure' });
  const key = h(
    'div',
    { class: 'strain-key', hidden: true },
    h('span', null, h('span', { class: 'swatch', style: `border-top: 2px dashed ${STRAIN_INK.cellBefore}` }), 'before'),
    h('span', null, h('span', { class: 'swatch', style: `border-color: ${STRAIN_INK.cellAfter}` }), 'after the flex (exaggerated)'),
  );
  let shown: { d: StrainData; name: string } | null = null;
  let selected = 0;
  let generation = 0;

  /** Strain flexes first, then zero-strain ones. */
  const items = () => (shown ? [...shown.d.result.strains, ...shown.d.result.zeroStrain] : []);

  const draw = () => {
    clear(figure);
    const all = items();
    if (!shown || !all[selected]) {
      key.hidden = true;
      return;
    }
    const g = shown.d.geometry;
    const f = asDrawable(all[selected]);
    const t = drawAmount(g, f);
    const lattice = shown.d.result.lattice;
    const before = strainedCell(g, lattice, f, 0);
    const after = strainedCell(g, lattice, f, t);
    figure.innerHTML = strainFigure(before, after, { ...FIGURE, title: `${shown.name}: the cell before and after flex #${selected}` });
    figure.dataset.amount = String(t);
    key.hidden = false;
  };

  const select = (i: number, focus = false) => {
    selected = i;
    for (const b of list.querySelectorAll<HTMLElement>('[role=option]')) {
      const on = Number(b.dataset.index) === i;
      b.setAttribute('aria-selected', String(on));
      b.tabIndex = on ? 0 : -1;
      if (on && focus) b.focus();
    }
    draw();
  };

  // arrows, Home and End move the selection; the list is one Tab stop
  list.addEventListener('keydown', (e) => {
    if (e.altKey || e.ctrlKey || e.metaKey) return;
    const n = items().length;
    const to = e.key === 'ArrowDown' || e.key === 'ArrowRight' ? selected + 1 : e.key === 'ArrowUp' || e.key === 'ArrowLeft' ? selected - 1 : e.key === 'Home' ? 0 : e.key === 'End' ? n - 1 : null;
    if (to === null || n === 0) return;
    e.preventDefault();
    select(Math.max(0, Math.min(n - 1, to)), true);
  });

  const render = () => {
    clear(list);
    if (!shown) return;
    const r = shown.d.result;
    const [N1, N2] = r.cells;
    summary.dataset.strainFlexes = String(r.strainFlexes);
    summary.dataset.zeroStrainFlexes = String(r.zeroStrainFlexes);
    summary.textContent =
      `Cell ${N1}×${N2}, periodic, lattice free to deform: ${r.flexes} flexes, ${r.trivialFlexes} trivial (translations and the rotation of the whole), ` +
      `${r.strainFlexes} straining the cell, ${r.zeroStrainFlexes} with zero strain; strains that are auxetic: ${r.strainSpace.auxetic}. ` +
      `With the lattice held fixed: ${r.fixedLattice.flexes} flexes.${r.certified ? '' : ' ⚠ The counts are not certified.'}${r.reasons.length ? ` ${r.reasons.join('; ')}.` : ''}`;
    if (r.nonTrivialFlexes === 0) {
      list.append(h('p', { 'data-testid': 'strain-none' }, 'This framework has no non-trivial flex even with a deforming lattice: no flex strains its cell, and none moves its joints without straining it.'));
      return;
    }
    if (r.strainFlexes === 0) list.append(h('p', { 'data-testid': 'strain-none' }, `No flex strains the cell; ${r.zeroStrainFlexes === 1 ? 'one flex moves' : `${r.zeroStrainFlexes} flexes move`} the joints at zero strain.`));
    r.strains.forEach((f, i) => {
      list.append(
        h(
          'button',
          { type: 'button', role: 'option', class: 'strain-item', 'data-index': i, 'data-testid': `strain-flex-${i}`, 'data-kind': f.kind, 'data-auxetic': String(f.auxetic), 'aria-selected': 'false', tabindex: -1, onclick: () => select(i) },
          h('strong', null, `#${i} strain`),
          ' ',
          strainText(f),
        ),
      );
    });
    r.zeroStrain.forEach((_, j) => {
      const i = r.strains.length + j;
      list.append(
        h(
          'button',
          { type: 'button', role: 'option', class: 'strain-item', 'data-index': i, 'data-testid': `strain-zero-${j}`, 'data-kind': 'zero-strain', 'aria-selected': 'false', tabindex: -1, onclick: () => select(i) },
          h('strong', null, `#${i} zero strain`),
          ' moves the joints; the cell keeps its shape',
        ),
      );
    });
    select(0);
  };

  run.addEventListener('click', () => {
    let framework;
    try {
      framework = frameworkOf(app.state.framework);
    } catch (e) {
      app.reportError('strain', e);
      return;
    }
    const cells: [number, number] = cellSel.value === 'block' ? [app.state.cells[0], app.state.cells[1]] : [1, 1];
    const gen = generation;
    const name = frameworkTitle(app.state.framework);
    app.message('strain', null);
    status.textContent = 'computing…';
    cancel.hidden = false;
    app.client
      .strain({ framework, cells, tolerance: app.state.tolerance })
      .then((d) => {
        status.textContent = '';
        if (gen !== generation) return;
        shown = { d, name };
        render();
      })
      .catch((e: unknown) => {
        status.textContent = '';
        if (e instanceof RunError && e.error.kind === 'cancelled') status.textContent = 'cancelled';
        else app.reportError('strain', e, 'The strain view could not be computed:');
      })
      .finally(() => (cancel.hidden = true));
  });

  const el = h(
    'details',
    { class: 'panel extra', 'data-testid': 'strain-panel' },
    h('summary', null, h('h2', null, 'Strain of the cell')),
    h('p', { class: 'hint' }, 'Flexes of the periodic framework when its lattice may deform too: each with the macroscopic strain it imposes (principal strains, dilation or shear, auxetic or not), drawn as the cell before and after. Independent of the boundary settings.'),
    h('div', { class: 'row' }, h('label', { for: cellId }, 'cell'), cellSel, run, cancel, status),
    summary,
    list,
    figure,
    key,
  );

  return {
    el,
    frameworkChanged() {
      generation++;
      if (!shown) return;
      shown = null;
      clear(list);
      clear(figure);
      key.hidden = true;
      summary.textContent = 'The framework changed: compute the strains again for this one.';
      app.message('strain', null);
    },
  };
}
