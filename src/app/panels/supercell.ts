/** Supercell panel: size, boundary rule per side or per axis, tolerance, class widths, Run. */
import { InputError, formatProblem } from '../../errors.js';
import { describeBoundary, parseBoundary, type AxisRule, type Boundary, type SideRule } from '../../supercell/boundary.js';
import type { Host } from '../host.js';
import type { SolverChoice } from '../../flex/solver.js';
import { checkbox, clear, h, newId, section, select, sliderField } from '../dom.js';
import { estimateText } from './size-guard.js';
import { boundaryText, LIMITS } from '../state.js';

export interface SupercellPanel {
  el: HTMLElement;
  refresh(): void;
  refreshEstimate(): void;
}

function intInput(label: string, value: number, min: number, max: number, testid: string, onChange: (v: number) => void) {
  const id = newId('n');
  const input = h('input', { type: 'number', id, min, max, step: 1, value: String(value), class: 'num', 'data-testid': testid });
  const msg = h('div', { class: 'field-msg', role: 'status' });
  input.addEventListener('change', () => {
    const v = Number(input.value);
    const ok = input.value.trim() !== '' && Number.isInteger(v) && v >= min && v <= max;
    input.setAttribute('aria-invalid', String(!ok));
    msg.textContent = ok ? '' : `${label}: give a whole number from ${min} to ${max}.`;
    if (ok) onChange(v);
  });
  return { el: h('div', { class: 'field' }, h('label', { for: id }, label), input, msg), input, msg };
}

export function buildSupercellPanel(app: Host): SupercellPanel {
  const s = () => app.state;
  const n1 = intInput('N1 (cells along a₁)', s().cells[0], 1, LIMITS.cells.max, 'cells-n1', (v) => {
    s().cells = [v, s().cells[1]];
    app.settingsChanged();
  });
  const n2 = intInput('N2 (cells along a₂)', s().cells[1], 1, LIMITS.cells.max, 'cells-n2', (v) => {
    s().cells = [s().cells[0], v];
    app.settingsChanged();
  });

  // ---- boundary
  const bcInput = h('input', { type: 'text', class: 'mono', id: 'bc-text', 'data-testid': 'bc-text', spellcheck: 'false', 'aria-describedby': 'bc-desc' });
  const bcMsg = h('div', { class: 'field-msg', role: 'status' });
  const bcDesc = h('div', { class: 'hint', id: 'bc-desc' });
  const axesBox = h('div', { class: 'axes' });
  const setBoundary = (b: Boundary) => {
    s().bc = boundaryText(b);
    renderAxes();
    app.settingsChanged();
  };
  const current = (): Boundary => {
    try {
      return parseBoundary(s().bc);
    } catch {
      return parseBoundary('free');
    }
  };
  const axisRow = (axis: 'x' | 'y') => {
    const b = current();
    const rule = b[axis];
    const [lowName, highName] = axis === 'x' ? ['left', 'right'] : ['bottom', 'top'];
    const kindId = newId('k');
    const kind = h(
      'select',
      { id: kindId, 'data-testid': `bc-${axis}-kind` },
      h('option', { value: 'sides', selected: rule.kind === 'sides' }, 'sides free / pinned'),
      h('option', { value: 'twist', selected: rule.kind === 'twist' }, 'twisted (wraps with phase θ)'),
    );
    kind.addEventListener('change', () => {
      const nb = current();
      nb[axis] = kind.value === 'twist' ? { kind: 'twist', theta: 0 } : ({ kind: 'sides', low: 'free', high: 'free' } as AxisRule);
      setBoundary(nb);
    });
    const body = h('div', { class: 'axis-body' });
    if (rule.kind === 'sides') {
      const side = (name: string, value: SideRule, which: 'low' | 'high') => {
        const id = newId('side');
        const sel = h('select', { id, 'data-testid': `bc-${name}` }, (['free', 'pinned'] as const).map((v) => h('option', { value: v, selected: v === value }, v)));
        sel.addEventListener('change', () => {
          const nb = current();
          const r = nb[axis];
          const base = r.kind === 'sides' ? r : { kind: 'sides' as const, low: 'free' as const, high: 'free' as const };
          nb[axis] = { ...base, [which]: sel.value as SideRule };
          setBoundary(nb);
        });
        return h('div', { class: 'field inline' }, h('label', { for: id }, name), sel);
      };
      body.append(side(lowName, rule.low, 'low'), side(highName, rule.high, 'high'));
    } else {
      const theta = sliderField({
        label: 'phase θ',
        min: 0,
        max: 1,
        step: 0.005,
        value: rule.theta,
        unit: 'turns',
        help: 'The twist phase: a joint seen through the boundary moves with exp(2πiθ) times the velocity of its copy. θ = 0 is periodic, θ = ½ antiperiodic.',
        testid: `bc-${axis}-theta`,
        // a drag runs once, when it settles; while dragging only the text follows
        settle: true,
        onInput: (v) => {
          const nb = current();
          nb[axis] = { kind: 'twist', theta: v };
          bcInput.value = boundaryText(nb);
          bcDesc.textContent = describeBoundary(nb);
        },
        onChange: (v) => {
          const nb = current();
          nb[axis] = { kind: 'twist', theta: v };
          s().bc = boundaryText(nb);
          bcInput.value = s().bc;
          bcDesc.textContent = describeBoundary(nb);
          app.settingsChanged();
        },
      });
      body.append(theta.el);
    }
    return h('fieldset', { class: 'axis' }, h('legend', null, axis === 'x' ? 'Axis 1 (a₁: left / right)' : 'Axis 2 (a₂: bottom / top)'), h('div', { class: 'field' }, h('label', { for: kindId }, 'rule'), kind), body);
  };
  const renderAxes = () => {
    clear(axesBox);
    axesBox.append(axisRow('x'), axisRow('y'));
    bcInput.value = s().bc;
    bcInput.removeAttribute('aria-invalid');
    bcMsg.textContent = '';
    bcDesc.textContent = describeBoundary(current());
  };
  const applyBcText = () => {
    try {
      const b = parseBoundary(bcInput.value, 'boundary');
      app.message('bc', null);
      setBoundary(b);
    } catch (e) {
      bcInput.setAttribute('aria-invalid', 'true');
      bcMsg.textContent = e instanceof InputError ? e.problems.map(formatProblem).join(' ') : String(e);
      app.reportError('bc', e);
    }
  };
  bcInput.addEventListener('change', applyBcText);
  bcInput.addEventListener('keydown', (e) => {
    if (e.key === 'Enter') applyBcText();
  });
  const preset = (label: string, text: string) => h('button', { type: 'button', class: 'small', onclick: () => setBoundary(parseBoundary(text)) }, label);

  // ---- tolerance and classes
  const tolId = newId('tol');
  const tol = h('input', { type: 'text', id: tolId, class: 'mono num', value: String(s().tolerance), 'data-testid': 'tolerance', inputmode: 'decimal' });
  const tolMsg = h('div', { class: 'field-msg', role: 'status' });
  tol.addEventListener('change', () => {
    const v = Number(tol.value);
    const ok = tol.value.trim() !== '' && Number.isFinite(v) && v >= 0 && v < 1;
    tol.setAttribute('aria-invalid', String(!ok));
    tolMsg.textContent = ok ? '' : 'Tolerance: give a number from 0 up to (not including) 1, e.g. 1e-9.';
    if (ok) {
      s().tolerance = v;
      app.settingsChanged();
    }
  });
  const solver = select<SolverChoice>(
    'solver',
    [
      { value: 'auto', label: 'auto (picks by size and structure)' },
      { value: 'dense', label: 'dense (reference SVD)' },
      { value: 'bloch', label: 'bloch (twisted axes)' },
      { value: 'sparse', label: 'sparse (open boundaries)' },
    ],
    s().solver,
    (v) => {
      s().solver = v;
      app.settingsChanged();
    },
    'solver',
  );
  const win = intInput('local window (cells)', s().window, 1, 50, 'window', (v) => {
    s().window = v;
    app.settingsChanged();
  });
  const strip = intInput('line strip width (cells)', s().strip, 1, 50, 'strip', (v) => {
    s().strip = v;
    app.settingsChanged();
  });
  const classify = checkbox('split flexes into classes', s().classify, (v) => {
    s().classify = v;
    app.settingsChanged();
  }, 'classify');
  const stresses = checkbox('compute the self-stress basis', s().stresses, (v) => {
    s().stresses = v;
    app.settingsChanged();
  }, 'stresses');

  const estimate = h('p', { class: 'hint', 'data-testid': 'size-estimate' });
  const runBtn = h('button', { type: 'button', class: 'primary', 'data-testid': 'run', onclick: () => app.run() }, 'Run');
  const auto = checkbox('run on every change (small problems)', app.autoRun, (v) => {
    app.autoRun = v;
  }, 'auto-run');

  // N1 and N2 are one edit: the automatic run waits until the focus leaves the pair (or Enter)
  const cellsPair = h('div', { class: 'grid2', 'data-hold-run': '' }, n1.el, n2.el);
  cellsPair.addEventListener('focusout', (e) => {
    if (!cellsPair.contains(e.relatedTarget as Node | null)) app.commitSettings();
  });
  cellsPair.addEventListener('keydown', (e) => {
    // after the field's own change handler (Enter commits the typed value first)
    if (e.key === 'Enter') setTimeout(() => app.commitSettings(), 0);
  });
  const el = section(
    'Supercell',
    cellsPair,
    h('h3', null, 'Boundary rule'),
    h('div', { class: 'row presets' }, preset('free', 'free'), preset('pinned', 'pinned'), preset('periodic', 'periodic')),
    axesBox,
    h('div', { class: 'field' }, h('label', { for: 'bc-text' }, 'as text (the --bc grammar)'), bcInput, bcMsg),
    bcDesc,
    h('h3', null, 'Rank and classes'),
    h('div', { class: 'field' }, h('label', { for: tolId }, 'relative rank tolerance (σ ≤ tol·σ_max is zero)'), tol, tolMsg),
    solver.el,
    h('div', { class: 'grid2' }, win.el, strip.el),
    classify.el,
    stresses.el,
    estimate,
    h('div', { class: 'row run-row' }, runBtn, auto.el),
  );

  const refreshEstimate = () => {
    const v = app.sizeVerdict();
    estimate.classList.toggle('bad', v.kind === 'refused');
    if (v.kind === 'ok') estimate.textContent = `${estimateText(v.estimate)}${app.estimateDof() > 1200 ? ' Large: it runs on Run or after you confirm.' : ''}`;
    else if (v.kind === 'refused') estimate.textContent = `Too large: ${v.error.largestCells ? `at most about ${v.error.largestCells[0]}×${v.error.largestCells[1]} cells fit.` : 'not even one cell fits.'}`;
    else estimate.textContent = '';
  };
  const refresh = () => {
    n1.input.value = String(s().cells[0]);
    n2.input.value = String(s().cells[1]);
    tol.value = String(s().tolerance);
    solver.input.value = s().solver;
    win.input.value = String(s().window);
    strip.input.value = String(s().strip);
    classify.input.checked = s().classify;
    stresses.input.checked = s().stresses;
    renderAxes();
    refreshEstimate();
  };
  refresh();
  return { el, refresh, refreshEstimate };
}
