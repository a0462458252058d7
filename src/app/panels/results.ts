/** Results panel: run status and progress, counts, rank evidence, classes, and the lists of flexes and self-stresses. */
import { CAUTION_SHORT } from '../../caution.js';
import { FLEX_CLASSES, type FlexClass } from '../../flex/classes.js';
import { MAX_FLEXES, MAX_SELF_STRESSES } from '../../stress/prestress.js';
import type { ModeData, PrestressData, StressData } from '../../worker/protocol.js';
import type { Host } from '../host.js';
import { RunError } from '../client.js';
import { clear, fmt, h, section } from '../dom.js';
import { displayBoundary, frameworkOf } from '../state.js';

export interface ResultsPanel {
  el: HTMLElement;
  refresh(): void;
  refreshStatus(): void;
  refreshStale(): void;
  refreshSelection(): void;
  focusSelection(): void;
}

const CLASS_TEXT: Record<FlexClass, { title: string; help: string }> = {
  local: { title: 'Local', help: 'supported inside a small window of cells' },
  line: { title: 'Line', help: 'supported along a narrow strip in a lattice direction' },
  decaying: { title: 'Decaying', help: 'amplitude falls off away from a side, corner or point' },
  bulk: { title: 'Bulk', help: 'spread through the supercell' },
};

/**
 * The extent of a mode as shown: the cells its support spans along a1 and a2 (at most the
 * supercell's sides; a file written by an older version may hold larger principal-axis
 * lengths, which read "whole supercell").
 */
export function extentText(extents: [number, number], cells?: readonly [number, number]): string {
  const side = cells ? Math.max(cells[0], cells[1]) : Infinity;
  const one = (e: number) => (e > side ? null : fmt(e, 3));
  const [a, b] = [one(extents[0]), one(extents[1])];
  if (a === null && b === null) return `extent: the whole ${cells![0]} × ${cells![1]} supercell`;
  if (a === null) return `extent across the whole supercell × ${b} cells`;
  return `extent ${a} × ${b} cells`;
}

export function modeSummary(m: ModeData, cells?: readonly [number, number]): string {
  const parts: string[] = [];
  if (m.support !== undefined) parts.push(`support ${m.support} joints`);
  if (m.extents) parts.push(extentText(m.extents, cells));
  if (m.direction) parts.push(`direction (${m.direction[0]}, ${m.direction[1]})`);
  if (m.decayLength !== undefined) parts.push(`ξ ${fmt(m.decayLength, 3)} cells`);
  if (m.anchor) parts.push(`anchor ${m.anchor.kind === 'point' ? `point (${fmt(m.anchor.at[0], 3)}, ${fmt(m.anchor.at[1], 3)})` : `${m.anchor.kind} ${m.anchor.name}`}`);
  parts.push(`participation ${fmt(m.participation, 3)}`);
  if (m.im) parts.push('complex (travelling phase)');
  return parts.join(' · ');
}

const STRESS_CLASS_TEXT: Record<FlexClass, string> = {
  local: 'supported on the bars of a small window of cells',
  line: 'the tension of one straight line of bars',
  decaying: 'force falls off away from a side, corner or point',
  bulk: 'spread through the supercell',
};

/** A classified self-stress in one line: bars carrying it, extent, direction, decay, anchor. */
export function stressSummary(st: StressData, cells?: readonly [number, number]): string {
  const parts: string[] = [];
  if (st.support !== undefined) parts.push(`${st.support} bars`);
  if (st.extents) parts.push(extentText(st.extents, cells));
  if (st.direction) parts.push(`direction (${st.direction[0]}, ${st.direction[1]})`);
  if (st.decayLength !== undefined) parts.push(`ξ ${fmt(st.decayLength, 3)} cells`);
  if (st.anchor) parts.push(`anchor ${st.anchor.kind === 'point' ? `point (${fmt(st.anchor.at[0], 3)}, ${fmt(st.anchor.at[1], 3)})` : `${st.anchor.kind} ${st.anchor.name}`}`);
  if (st.im) parts.push('complex (shown after aligning its phase)');
  return parts.join(' · ');
}

/** The macroscopic stress per cell as text: the tensor, its trace, and whether it is traceless. */
export function macroText(m: NonNullable<StressData['macroscopicStress']>): string {
  const n = (x: number) => fmt(Math.abs(x) < 1e-12 ? 0 : x, 4);
  return `σ = [[${n(m.xx)}, ${n(m.xy)}], [${n(m.xy)}, ${n(m.yy)}]] per cell · trace ${n(m.trace)}${m.traceless ? ' (traceless)' : ''}`;
}

/** The prestress verdict in words for the results panel. */
export const PRESTRESS_VERDICT_TEXT: Record<PrestressData['verdict'], string> = {
  'prestress-stable': 'prestress stable',
  'not-prestress-stable': 'not prestress stable',
  'not-found': 'no stabilising self-stress found (not a proof that none exists)',
  'no-flexes': 'no non-trivial flex: nothing to stabilise',
};

export function buildResultsPanel(app: Host): ResultsPanel {
  const status = h('div', { class: 'status', 'data-testid': 'status', 'aria-live': 'polite' });
  const stale = h('div', { class: 'stale', hidden: true, 'data-testid': 'stale' }, 'Settings changed since this result. ', h('button', { type: 'button', class: 'link', onclick: () => app.run() }, 'Run to update'));
  const title = h('p', { class: 'result-title', 'data-testid': 'result-title' });
  const cell = (testid: string) => h('span', { class: 'count', 'data-testid': testid }, '—');
  const c = {
    flexes: cell('count-flexes'),
    trivial: cell('count-trivial'),
    nontrivial: cell('count-nontrivial'),
    stresses: cell('count-self-stresses'),
    mc: h('span', { 'data-testid': 'maxwell-calladine' }, '—'),
    rank: h('span', null, '—'),
    gap: h('span', { 'data-testid': 'gap' }, '—'),
    certified: h('span', { 'data-testid': 'certified' }, '—'),
    size: h('span', null, '—'),
    solver: h('span', null, '—'),
  };
  const gapWarning = h('p', { class: 'gap-warning', hidden: true, 'data-testid': 'gap-warning', role: 'status' });
  const row = (label: string, value: HTMLElement, help?: string) => [h('dt', { title: help }, label), h('dd', null, value)];
  const counts = h(
    'dl',
    { class: 'counts' },
    row('flexes', c.flexes, 'dim ker R: infinitesimal motions, rigid ones included'),
    row('  of which trivial', c.trivial, 'rigid motions the boundary allows that are flexes'),
    row('  non-trivial', c.nontrivial),
    row('self-stresses', c.stresses, 'dim ker Rᴴ: bar tensions in equilibrium without load'),
  );
  // the rank evidence folds away so that the flex list stays in sight on a laptop screen
  const evidence = h(
    'dl',
    { class: 'counts' },
    row('Maxwell–Calladine', c.mc, 'flexes − self-stresses = 2·joints − bars, an identity of the counts'),
    row('rank', c.rank),
    row('singular-value gap', c.gap, 'smallest kept σ / largest dropped σ; under 10⁴ the rank is ambiguous'),
    row('certified', c.certified, 'whether the count is proved: from every singular value (dense, Bloch) or from an inertia count matched by proved null vectors (sparse)'),
    row('supercell', c.size),
    row('solver', c.solver),
  );
  const caution = h('p', { class: 'caution-line', 'data-testid': 'caution-short' }, CAUTION_SHORT, ' ', h('button', { type: 'button', class: 'link', onclick: () => app.openAbout() }, 'More'));
  const classCells = Object.fromEntries(FLEX_CLASSES.map((k) => [k, h('span', { class: 'count', 'data-testid': `count-${k}` }, '—')])) as Record<FlexClass, HTMLElement>;
  const classNote = h('p', { class: 'hint', 'data-testid': 'classes-note' });
  const classes = h(
    'div',
    { class: 'classes' },
    FLEX_CLASSES.map((k) => h('div', { class: `class-tile class-${k}`, title: CLASS_TEXT[k].help }, h('span', { class: 'class-name' }, CLASS_TEXT[k].title), classCells[k])),
  );

  const tabFlex = h('button', { type: 'button', role: 'tab', class: 'tab', 'data-testid': 'tab-flexes', 'aria-selected': 'true' }, 'Flexes');
  const tabStress = h('button', { type: 'button', role: 'tab', class: 'tab', 'data-testid': 'tab-stresses', 'aria-selected': 'false' }, 'Self-stresses');
  const list = h('div', { class: 'mode-list', role: 'listbox', 'aria-label': 'Basis flexes', 'data-testid': 'mode-list', tabindex: '-1' });
  let listing: 'flex' | 'stress' = 'flex';
  // arrow keys, Home and End move the selection inside the list and keep the focus on it
  list.addEventListener('keydown', (e) => {
    if (e.altKey || e.ctrlKey || e.metaKey) return;
    const r = app.result;
    const n = !r ? 0 : listing === 'flex' ? r.modes.length : r.stresses.length;
    const cur = listing === 'flex' ? app.state.view.flex : app.state.view.stress;
    const to = e.key === 'ArrowDown' || e.key === 'ArrowRight' ? cur + 1 : e.key === 'ArrowUp' || e.key === 'ArrowLeft' ? cur - 1 : e.key === 'Home' ? 0 : e.key === 'End' ? n - 1 : null;
    if (to === null || n === 0) return;
    e.preventDefault();
    const i = Math.max(0, Math.min(n - 1, to));
    if (listing === 'flex') app.selectFlex(i);
    else app.selectStress(i);
    list.querySelector<HTMLElement>('[aria-selected=true]')?.focus();
  });
  const stressClasses = h('p', { class: 'hint', 'data-testid': 'stress-classes', hidden: true });
  const macro = h('p', { class: 'stress-macro', 'data-testid': 'stress-macro', hidden: true, 'aria-live': 'polite' });

  // ---- the prestress check (real boundaries only), run on request for the result on show
  const preRun = h('button', { type: 'button', class: 'small', 'data-testid': 'prestress-run', title: 'Whether some self-stress makes the stress energy positive on every non-trivial flex (Connelly & Whiteley 1996)' }, 'Check prestress');
  const preCancel = h('button', { type: 'button', class: 'small', hidden: true, 'data-testid': 'prestress-cancel', onclick: () => void app.client.cancelPrestress() }, 'Cancel');
  const preOut = h('div', { class: 'prestress-out', 'data-testid': 'prestress-verdict', 'aria-live': 'polite' });
  const preNote = h('span', { class: 'hint', 'data-testid': 'prestress-note' });
  const preBox = h('div', { class: 'prestress', 'data-testid': 'prestress' }, h('div', { class: 'row' }, preRun, preCancel, preNote), preOut);
  /** Bumped by every new result: a check of an older one is dropped when it arrives. */
  let preGeneration = 0;
  preRun.addEventListener('click', () => {
    const s = app.resultState;
    if (!s || !app.result) return;
    let framework;
    try {
      framework = frameworkOf(s.framework);
    } catch (e) {
      app.reportError('prestress', e);
      return;
    }
    const gen = preGeneration;
    app.message('prestress', null);
    preOut.replaceChildren(h('span', { class: 'hint' }, 'checking…'));
    delete preOut.dataset.verdict;
    preCancel.hidden = false;
    preRun.disabled = true;
    app.client
      .prestress({ framework, cells: [s.cells[0], s.cells[1]], bc: s.bc, tolerance: s.tolerance, solver: s.solver })
      .then((p) => {
        if (gen !== preGeneration) return;
        preOut.dataset.verdict = p.verdict;
        preOut.replaceChildren(
          h('div', { class: `verdict ${p.verdict === 'prestress-stable' ? 'good' : p.verdict === 'not-prestress-stable' ? 'bad' : ''}`, 'data-testid': 'prestress-result' }, PRESTRESS_VERDICT_TEXT[p.verdict]),
          h('div', null, p.explanation),
          h('div', { 'data-testid': 'prestress-eigenvalue' }, `smallest eigenvalue of the stress energy on the non-trivial flexes: ${p.smallestEigenvalue === null ? '—' : fmt(p.smallestEigenvalue)} (counts as positive above ${fmt(p.threshold)}); ${p.selfStresses} self-stresses, ${p.nonTrivialFlexes} non-trivial flexes`),
          h('div', { class: 'hint', 'data-testid': 'prestress-method' }, `Method: ${p.method}. Limits: up to ${p.limits.maxSelfStresses} self-stresses and ${p.limits.maxFlexes} non-trivial flexes.`),
        );
        if (p.certificate) preOut.append(h('div', { class: 'hint' }, `Proof: ${p.certificate.detail}.`));
      })
      .catch((e: unknown) => {
        if (gen !== preGeneration) return;
        preOut.replaceChildren();
        if (e instanceof RunError && e.error.kind === 'cancelled') preOut.append(h('span', { class: 'hint' }, 'cancelled'));
        else app.reportError('prestress', e, 'The prestress check could not be made:');
      })
      .finally(() => {
        if (gen !== preGeneration) return;
        preCancel.hidden = true;
        refreshPrestress();
      });
  });
  /** A new result: the old verdict goes; the button is offered when the check can run. */
  const resetPrestress = () => {
    preGeneration++;
    preOut.replaceChildren();
    delete preOut.dataset.verdict;
    preCancel.hidden = true;
    app.message('prestress', null);
    refreshPrestress();
  };
  const refreshPrestress = () => {
    const r = app.result;
    preBox.hidden = !r;
    if (!r) return;
    const k = r.counts;
    const f = k.flexes - k.trivialFlexes;
    let why = '';
    if (!r.geometry.real) why = 'The prestress check needs a real boundary (twists 0 or ½): the flexes and self-stresses are complex here.';
    else if (k.selfStresses > MAX_SELF_STRESSES || f > MAX_FLEXES) why = `The check handles up to ${MAX_SELF_STRESSES} self-stresses and ${MAX_FLEXES} non-trivial flexes; this supercell has ${k.selfStresses} and ${f}.`;
    preRun.disabled = why !== '' || !preCancel.hidden;
    preNote.textContent = why || 'Optional: can a self-stress stabilise the non-trivial flexes?';
  };

  tabFlex.addEventListener('click', () => {
    listing = 'flex';
    renderList();
    if (app.result?.modes.length) app.selectFlex(Math.min(app.state.view.flex, app.result.modes.length - 1));
  });
  tabStress.addEventListener('click', () => {
    listing = 'stress';
    renderList();
    if (app.result?.stresses.length) app.selectStress(Math.min(app.state.view.stress, app.result.stresses.length - 1));
  });

  const renderList = () => {
    clear(list);
    const r = app.result;
    tabFlex.setAttribute('aria-selected', String(listing === 'flex'));
    tabStress.setAttribute('aria-selected', String(listing === 'stress'));
    list.setAttribute('aria-label', listing === 'flex' ? 'Basis flexes' : 'Basis self-stresses');
    if (!r) return;
    tabFlex.textContent = `Flexes (${r.modes.length})`;
    tabStress.textContent = `Self-stresses (${r.stresses.length})`;
    if (listing === 'flex') {
      if (!r.modes.length) list.append(h('p', { class: 'hint' }, 'No flexes: the supercell is infinitesimally rigid under this boundary rule.'));
      let group: string | null = '';
      r.modes.forEach((m, i) => {
        const g = m.class ?? null;
        if (g !== group) {
          group = g;
          list.append(h('div', { class: 'group-head', role: 'presentation' }, g ? `${CLASS_TEXT[g].title} — ${CLASS_TEXT[g].help}` : 'Solver basis (not classified)'));
        }
        list.append(
          h(
            'button',
            { type: 'button', role: 'option', class: `mode ${m.class ? `class-${m.class}` : ''}`, 'data-index': i, 'data-testid': `flex-${i}`, 'aria-selected': 'false', onclick: () => app.selectFlex(i) },
            h('span', { class: 'mode-index' }, `#${i}`),
            h('span', { class: 'mode-class' }, m.class ?? 'basis'),
            h('span', { class: 'mode-metrics' }, modeSummary(m, r.geometry.cells)),
          ),
        );
      });
    } else if (r.stressSource === 'classified') {
      let group: string | null = null;
      r.stresses.forEach((st, i) => {
        const g = st.class ?? 'bulk';
        if (g !== group) {
          group = g;
          list.append(h('div', { class: 'group-head', role: 'presentation' }, `${CLASS_TEXT[g].title} — ${STRESS_CLASS_TEXT[g]}`));
        }
        list.append(
          h(
            'button',
            { type: 'button', role: 'option', class: `mode class-${g}`, 'data-index': i, 'data-testid': `stress-${i}`, 'data-class': g, 'aria-selected': 'false', onclick: () => app.selectStress(i) },
            h('span', { class: 'mode-index' }, `#${i}`),
            h('span', { class: 'mode-class' }, g),
            h('span', { class: 'mode-metrics' }, stressSummary(st, r.geometry.cells)),
          ),
        );
      });
    } else {
      if (!r.stresses.length) list.append(h('p', { class: 'hint' }, r.stressNote ? `Self-stress basis ${r.stressNote}.` : 'No self-stresses.'));
      r.stresses.forEach((st, i) => {
        let nz = 0;
        let max = 0;
        for (let k = 0; k < st.re.length; k++) {
          const a = Math.hypot(st.re[k], st.im ? st.im[k] : 0);
          max = Math.max(max, a);
        }
        for (let k = 0; k < st.re.length; k++) if (Math.hypot(st.re[k], st.im ? st.im[k] : 0) > 1e-3 * max) nz++;
        list.append(
          h(
            'button',
            { type: 'button', role: 'option', class: 'mode', 'data-index': i, 'data-testid': `stress-${i}`, 'aria-selected': 'false', onclick: () => app.selectStress(i) },
            h('span', { class: 'mode-index' }, `#${i}`),
            h('span', { class: 'mode-class' }, 'stress'),
            h('span', { class: 'mode-metrics' }, `${nz} bars carry tension or compression${st.im ? ' · complex (shown after aligning its phase)' : ''}`),
          ),
        );
      });
    }
    refreshSelection();
  };

  const refreshStressInfo = () => {
    const r = app.result;
    const v = app.state.view;
    const on = listing === 'stress' && !!r;
    const sc = r?.stressClassification;
    stressClasses.hidden = !on || !r!.stresses.length;
    stressClasses.textContent = !on
      ? ''
      : sc
        ? `Self-stresses by class: ${FLEX_CLASSES.map((k) => `${k} ${sc.counts[k]}`).join(' · ')}. Bar width and colour show the bar force (tension blue, compression orange).${sc.warnings?.length ? ` ⚠ ${sc.warnings.join(' ')}` : ''}`
        : `The solver's orthonormal basis of the self-stresses (not localised)${r!.stressClassificationNote ? `: ${r!.stressClassificationNote}` : '; switch the classes on to localise and classify them'}.`;
    const st = on ? r!.stresses[v.stress] : undefined;
    macro.hidden = !st?.macroscopicStress;
    macro.textContent = st?.macroscopicStress ? `Self-stress #${v.stress}, macroscopic stress: ${macroText(st.macroscopicStress)}${sc?.macroscopic ? `; over all self-stresses the map has rank ${sc.macroscopic.rank}${sc.macroscopic.traceless ? ', every one traceless' : ''}` : ''}.` : '';
  };

  const refreshSelection = () => {
    refreshStressInfo();
    const v = app.state.view;
    if ((v.show === 'stress') !== (listing === 'stress')) {
      listing = v.show === 'stress' ? 'stress' : 'flex';
      renderList();
      return;
    }
    const sel = listing === 'flex' ? v.flex : v.stress;
    const rows = Array.from(list.querySelectorAll<HTMLElement>('[role=option]'));
    for (const b of rows) {
      const on = Number(b.dataset.index) === sel;
      b.setAttribute('aria-selected', String(on));
      // roving tabindex: the list is one Tab stop, on the selected row (the first when none is)
      b.tabIndex = on ? 0 : -1;
    }
    if (rows.length && !rows.some((b) => b.tabIndex === 0)) rows[0].tabIndex = 0;
    scrollToSelection();
  };
  /** Scrolls the list (only the list) so that the selected row is visible. */
  const scrollToSelection = () => {
    const row = list.querySelector<HTMLElement>('[aria-selected=true]');
    if (!row) return;
    const top = row.offsetTop;
    const head = 22; // the sticky group heading
    if (top - head < list.scrollTop) list.scrollTop = Math.max(0, top - head);
    else if (top + row.offsetHeight > list.scrollTop + list.clientHeight) list.scrollTop = top + row.offsetHeight - list.clientHeight;
  };

  // persistent progress elements (re-rendering them would move the Cancel button under the pointer)
  const progLabel = h('span');
  const progBar = h('progress', { max: 1, value: 0 });
  const progBox = h('div', { class: 'progress', 'data-testid': 'progress' }, h('div', null, h('span', { class: 'spinner', 'aria-hidden': 'true' }), ' ', progLabel), progBar, h('button', { type: 'button', class: 'small', 'data-testid': 'cancel', onclick: () => app.cancelRun() }, 'Cancel'));
  const quick = h('span', null, h('span', { class: 'spinner', 'aria-hidden': 'true' }), ' computing…');
  const doneText = h('span');
  let ticking = 0;
  const refreshStatus = () => {
    const st = app.status;
    clearTimeout(ticking);
    let show: HTMLElement | null = null;
    if (st.kind === 'running') {
      if (!st.showProgress) show = quick;
      else {
        show = progBox;
        progLabel.textContent = `${st.stage} — ${((performance.now() - st.started) / 1000).toFixed(1)} s`;
        progBar.value = st.fraction;
        ticking = window.setTimeout(() => {
          if (app.status === st) refreshStatus();
        }, 250);
      }
    } else if (st.kind === 'done' && app.result) {
      show = doneText;
      doneText.textContent = `computed in ${(st.ms / 1000).toFixed(2)} s`;
    }
    if (show && status.firstChild !== show) status.replaceChildren(show);
    else if (!show) status.replaceChildren();
  };

  const refreshStale = () => {
    stale.hidden = !app.result || !app.isStale();
  };

  let version = 0;
  const refresh = () => {
    const r = app.result;
    if (r) el.dataset.version = String(++version);
    refreshStatus();
    refreshStale();
    if (!r) return;
    const k = r.counts;
    const s = app.resultState!;
    title.textContent = `${r.geometry.cells[0]}×${r.geometry.cells[1]} cells · ${displayBoundary(r.geometry.bc)}`;
    c.flexes.textContent = String(k.flexes);
    c.trivial.textContent = String(k.trivialFlexes);
    c.nontrivial.textContent = String(k.flexes - k.trivialFlexes);
    c.stresses.textContent = String(k.selfStresses);
    const mc = k.maxwellCalladine;
    // an identity of the counts (both come from one rank), shown as such, not as a check
    c.mc.textContent = `${k.flexes} − ${k.selfStresses} = 2·${k.joints} − ${k.bars} = ${mc.rhs}`;
    c.mc.className = '';
    c.rank.textContent = `${k.rank} of ${k.dof} columns (${k.real ? 'real' : 'complex'} matrix), tol ${fmt(k.tolerance.relative)}·σ_max = ${fmt(k.tolerance.absolute)}`;
    c.gap.textContent = `kept σ ${fmt(k.gap.kept)}, dropped σ ${fmt(k.gap.dropped)}, ratio ${k.gap.ratio === null ? 'unbounded' : fmt(k.gap.ratio, 3)}${k.gapNote ? ` (${k.gapNote})` : ''}`;
    c.gap.className = k.gap.ambiguous ? 'bad' : '';
    const st = k.status;
    c.certified.textContent = !st ? '—' : st.certified ? `yes${st.fallback ? ` (after falling back from the ${st.fallback.from} solver)` : ''}` : 'no: see the warning below';
    c.certified.className = st && !st.certified ? 'bad' : '';
    gapWarning.hidden = !k.gap.ambiguous;
    const why = k.status?.reasons.length ? k.status.reasons.join('; ') : `the gap ratio ${fmt(k.gap.ratio, 3)} is under 10⁴`;
    gapWarning.textContent = k.gap.ambiguous ? `⚠ The count may be wrong at this tolerance (${s.tolerance}): ${why}. Try another tolerance and compare.` : '';
    c.size.textContent = `${k.joints} joints, ${k.bars} bars${k.groundedBars ? ` (${k.groundedBars} grounded)` : ''}${k.droppedBars ? `, ${k.droppedBars} dropped at free sides` : ''}`;
    c.solver.textContent = `${k.solver} (${k.solverReason})`;
    const cls = r.classification;
    for (const key of FLEX_CLASSES) classCells[key].textContent = cls ? String(cls.counts[key]) : '—';
    resetPrestress();
    classNote.textContent = cls
      ? `Windows up to ${s.window}×${s.window} cells, strips up to ${s.strip} cells wide.${cls.shortStripFlexes ? ` ${cls.shortStripFlexes} short strip pieces are counted as decaying or bulk.` : ''} Rigid motions are not projected out: they usually count as bulk.`
      : r.classificationNote ?? 'Not classified.';
    renderList();
  };

  const el = section(
    'Results',
    status,
    stale,
    title,
    counts,
    h('details', { class: 'evidence', 'data-testid': 'rank-evidence' }, h('summary', null, 'Rank evidence: Maxwell–Calladine, gap, certificate, solver'), evidence),
    gapWarning,
    caution,
    h('h3', null, 'Where the flexes live'),
    classes,
    classNote,
    h('h3', null, 'Prestress'),
    preBox,
    h('div', { class: 'tabs', role: 'tablist' }, tabFlex, tabStress),
    stressClasses,
    list,
    macro,
    h('p', { class: 'hint' }, 'Select a flex to animate it; ← / → step through the list, space plays or pauses.'),
  );
  el.setAttribute('data-testid', 'results');
  el.dataset.version = '0';
  return {
    el,
    refresh,
    refreshStatus,
    refreshStale,
    refreshSelection,
    focusSelection() {
      // after keyboard navigation, bring the row into sight even if the column must scroll
      list.querySelector<HTMLElement>('[aria-selected=true]')?.scrollIntoView({ block: 'nearest' });
    },
  };
}
