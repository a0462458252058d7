/**
 * Edge modes from the unit-cell symbol (src/edges): ξ(θ) per side over the edge phase, and at
 * the chosen phase the predicted edge modes per side against counted ones (the strip count of
 * the core, and the side weights of the analysis on show when it has them).
 */
import { InputError } from '../../errors.js';
import type { EdgesData } from '../../worker/protocol.js';
import type { Host } from '../host.js';
import { RunError } from '../client.js';
import { clear, fmt, h, newId } from '../dom.js';
import { download } from '../export/download.js';
import { edgeCountRows, supercellPrediction, xiPlotSpec } from '../plots/edges.js';
import { linePlotDocument } from '../plots/line-plot.js';
import { frameworkOf, frameworkSpec, frameworkTitle, slug } from '../state.js';

export interface EdgesPanel {
  el: HTMLElement;
  frameworkChanged(): void;
  resultChanged(): void;
}

/** Edge phases k/EDGE_GRID in the ξ(θ) table; 48 has many divisors, so a supercell's phases k/N1 are often in it. */
export const EDGE_GRID = 48;

export function buildEdgesPanel(app: Host): EdgesPanel {
  const phaseId = newId('edge-phase');
  const phase = h('input', { type: 'number', id: phaseId, class: 'num', step: 0.125, value: '0.25', 'data-testid': 'edges-phase' });
  const status = h('span', { class: 'hint', 'aria-live': 'polite', 'data-testid': 'edges-status' });
  const cancel = h('button', { type: 'button', class: 'small', hidden: true, onclick: () => void app.client.cancelEdges() }, 'Cancel');
  const run = h('button', { type: 'button', class: 'small primary', 'data-testid': 'edges-run' }, 'Compute edges');
  const svgBtn = h('button', { type: 'button', class: 'small', disabled: true, 'data-testid': 'edges-export-svg', title: 'The ξ(θ) plot as SVG' }, 'SVG');
  const plot = h('div', { class: 'edges-plot', 'data-testid': 'edges-xi-plot' });
  const counts = h('div', { class: 'edges-counts', 'data-testid': 'edges-counts' });
  let shown: { d: EdgesData; name: string; spec: string } | null = null;
  let generation = 0;

  const renderCounts = () => {
    clear(counts);
    if (!shown) return;
    const { d, spec } = shown;
    // the analysis on show, when it is of this framework
    const same = app.result && app.resultState && frameworkSpec(app.resultState.framework) === spec;
    const cls = same ? app.result!.classification : null;
    const weights = cls?.sideWeights ?? null;
    const rs = app.resultState;
    const cells: [number, number] | null = same && rs ? [rs.cells[0], rs.cells[1]] : null;
    const pred = cells && rs ? supercellPrediction(d, cells, rs.bc) : null;
    const rows = edgeCountRows(d, weights);
    const strip = d.a1.strip;
    const head = ['side', `predicted at θ = ${fmt(d.phase)}`, 'ξ (cells)', strip ? `strip, ${strip.cells[1]} cells across` : 'strip', cells ? `supercell ${cells[0]}×${cells[1]}` : 'supercell', 'predicted for it'];
    const num = (v: number | null | undefined) => (v === null || v === undefined ? '—' : fmt(Number(v.toFixed(6))));
    counts.append(
      h(
        'table',
        { class: 'sweep-table', 'data-testid': 'edges-table' },
        h('thead', null, h('tr', null, head.map((t) => h('th', null, t)))),
        h(
          'tbody',
          null,
          rows.map((r) =>
            h(
              'tr',
              { 'data-side': r.side },
              h('td', null, r.side),
              h('td', null, r.predicted === null ? 'undefined' : String(r.predicted)),
              h('td', null, r.decayLengths.map((x) => fmt(x, 3)).join(', ') || '—'),
              h('td', null, num(r.strip)),
              h('td', null, num(r.supercell)),
              h('td', null, pred && r.side in pred.sums ? (pred.sums[r.side] === null ? 'undefined' : String(pred.sums[r.side])) : '—'),
            ),
          ),
        ),
      ),
    );
    const notes: string[] = [
      'Predicted: roots of det Φ on that side at the phase, i.e. zero modes per edge wave number on a free edge (undefined at a bulk root or where det Φ ≡ 0).',
      strip && d.a2.strip
        ? `Strip: the flexes of a strip one cell long, twisted by θ along the edge (${strip.boundary} on ${strip.cells[0]}×${strip.cells[1]} cells; ${d.a2.strip.boundary} on ${d.a2.strip.cells[0]}×${d.a2.strip.cells[1]}), split between its halves by the flex projector.`
        : 'No strip count.',
    ];
    if (!app.result) notes.push('Counted in the supercell: absent, no analysis is shown yet.');
    else if (!same) notes.push('Counted in the supercell: absent, the analysis on show is of another framework.');
    else if (!cls || cls.sideWeights === undefined) notes.push('Counted in the supercell: absent, the analysis on show was not classified (switch the classification on and run).');
    else if (weights === null) notes.push(`Counted in the supercell: absent, side weights ${cls.sideWeightsNote ?? 'were not computed'}.`);
    else notes.push(`Counted in the supercell: its side weights (flex projector per side, trivial flexes removed; a twisted axis has no sides). ${pred?.note ? `Predicted for it: ${pred.note}.` : ''}`);
    const w = d.a1.winding;
    notes.push(w ? `Winding numbers (n1, n2) = (${w[0]}, ${w[1]}).` : `Winding numbers undefined${d.a1.windingNote ? `: ${d.a1.windingNote}` : ''}.`);
    counts.append(...notes.map((t) => h('p', { class: 'hint' }, t)));
  };

  const render = () => {
    if (!shown) return;
    const width = Math.max(480, Math.min(900, counts.clientWidth || 640));
    plot.innerHTML = linePlotDocument(xiPlotSpec(shown.d, { framework: shown.name, idPrefix: 'xi-view', width, height: Math.round(width * 0.68) }), { background: null, prolog: false }).svg;
    renderCounts();
  };

  svgBtn.addEventListener('click', () => {
    if (!shown) return;
    const doc = linePlotDocument(xiPlotSpec(shown.d, { framework: shown.name, idPrefix: 'xi' }), { background: '#ffffff', prolog: true, description: `Edge decay lengths made by shimmy for ${shown.name}.` });
    download(doc.svg, `${slug(shown.name)}-edge-decay.svg`, 'image/svg+xml');
  });

  run.addEventListener('click', () => {
    const text = phase.value.trim();
    const theta = Number(text);
    let framework;
    try {
      if (text === '' || !Number.isFinite(theta))
        throw new InputError('The edge phase cannot be used:', [{ where: 'edge phase θ', what: `"${phase.value}" is not a number`, fix: 'give θ in turns, e.g. 0.25 (only θ modulo 1 matters)' }]);
      framework = frameworkOf(app.state.framework);
    } catch (e) {
      app.reportError('edges', e);
      return;
    }
    app.message('edges', null);
    status.textContent = 'computing…';
    cancel.hidden = false;
    const gen = generation;
    const spec = frameworkSpec(app.state.framework);
    const name = frameworkTitle(app.state.framework);
    app.client
      .edges({ framework, phase: theta, grid: EDGE_GRID }, (f, st) => (status.textContent = `${st} ${Math.round(f * 100)} %`))
      .then((d) => {
        status.textContent = '';
        if (gen !== generation) return;
        shown = { d, name, spec };
        svgBtn.disabled = false;
        render();
      })
      .catch((e: unknown) => {
        status.textContent = '';
        if (e instanceof RunError && e.error.kind === 'cancelled') status.textContent = 'cancelled';
        else app.reportError('edges', e);
      })
      .finally(() => (cancel.hidden = true));
  });

  const el = h(
    'details',
    { class: 'panel extra', 'data-testid': 'edges-panel' },
    h('summary', null, h('h2', null, 'Edge modes (from the symbol)')),
    h('div', { class: 'row' }, h('label', { for: phaseId }, 'edge phase θ (turns)'), phase, run, cancel, status),
    h('p', { class: 'hint' }, 'Decay length ξ of each edge mode over the edge phase, per side, from the roots of det Φ; and at θ the predicted counts against counted ones.'),
    h('div', { class: 'row' }, h('span', { class: 'hint' }, 'export'), svgBtn),
    plot,
    counts,
  );

  return {
    el,
    frameworkChanged() {
      generation++;
      if (!shown) return;
      shown = null;
      svgBtn.disabled = true;
      clear(plot);
      clear(counts);
      plot.append(h('p', { class: 'hint', 'data-testid': 'edges-cleared' }, 'The framework changed: compute the edges again for this one.'));
      app.message('edges', null);
    },
    resultChanged: renderCounts,
  };
}
