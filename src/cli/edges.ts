/**
 * `shimmy edges`: edge physics from the unit-cell symbol: the roots of det Φ in the transverse
 * variable at one edge phase (decay lengths, sides), winding numbers and polarisation, predicted
 * zero modes per free edge, ξ(θ) over a grid of edge phases, and a strip count beside them.
 */
import { CAUTION } from '../caution.js';
import { InputError } from '../errors.js';
import { loadFramework } from '../framework/load.js';
import { DEFAULT_EDGE_GRID, DEFAULT_EDGE_PHASE, edges, MAX_EDGE_GRID, MAX_STRIP_WIDTH, type EdgesResult } from '../edges/edges.js';
import { DEFAULT_STRIP_WIDTH } from '../edges/strip.js';
import type { EdgeAxis } from '../edges/laurent.js';
import type { Side } from '../edges/spectrum.js';
import { parseCells, parseNumberFlag } from './args.js';
import type { Command } from './command.js';
import { fmt, FRAMEWORK_HELP, frameworkArg, safeJson, safeText, table, titleOf } from './common.js';

const SIDES: Side[] = ['bottom', 'top', 'left', 'right'];

function list(xs: number[]): string {
  return xs.length ? xs.map((x) => fmt(x, 5)).join(', ') : '—';
}

function summary(spec: string, name: string | undefined, r: EdgesResult): string {
  const w = r.winding;
  const rows: [string, string][] = [
    ['Φ', `${r.rows} bars × ${r.cols} columns${r.square ? '' : ' (not square: no determinant, no per-side prediction)'}`],
    ['winding (n1, n2)', w ? `(${w[0]}, ${w[1]})` : `undefined: ${r.windingNote}`],
    ['R_T = n1 a1 + n2 a2', r.polarisation ? `(${fmt(r.polarisation[0], 6)}, ${fmt(r.polarisation[1], 6)}) — depends on the unit cell; the per-edge counts do not` : '—'],
  ];
  if (w && r.windingNote) rows.push(['winding note', r.windingNote]);
  for (const side of SIDES) {
    const s = r.sides[side];
    const counted = s.counted === null ? '' : `, counted ${s.counted.toFixed(3)} (strip projector weight)`;
    rows.push([`${side} edge`, `predicted ${s.predicted ?? '—'} (from windings ${s.fromWinding ?? '—'})${counted}; ξ = ${list(s.decayLengths)} cells`]);
    if (s.pinned.index !== null) {
      const pc = s.pinned.counted === null ? '' : `, counted ${s.pinned.counted.toFixed(3)} (pinned strip)`;
      rows.push([`  pinned`, `flexes − self-stresses ${s.pinned.index}: ${s.pinned.selfStresses} edge self-stress${s.pinned.selfStresses === 1 ? '' : 'es'}${pc}`]);
    }
    if (s.finite) {
      const f = s.finite;
      rows.push([
        `  free sample`,
        `side weight ${f.weight.toFixed(3)} against ${f.expected ?? '—'} predicted over its ${f.length - 1} edge wave numbers k/${f.length}, k ≠ 0${f.deviation === null ? '' : ` (deviation ${f.deviation >= 0 ? '+' : ''}${f.deviation.toFixed(3)})`}`,
      ]);
    }
  }
  for (const ax of ['a1', 'a2'] as const) if (r.spectra[ax].note) rows.push([`note (edge along ${ax})`, r.spectra[ax].note as string]);
  const [lo, hi] = r.along === 'a1' ? ['bottom', 'top'] : ['left', 'right'];
  if (r.strip) {
    const st = r.strip;
    rows.push([
      `strip ${st.cells[0]}×${st.cells[1]} (${st.boundary})`,
      `counted ${st.flexes} flexes, ${st.selfStresses} self-stresses; projector weight ${lo} ${st.weightLow.toFixed(3)}, ${hi} ${st.weightHigh.toFixed(3)}${st.certified ? '' : ' (count not certified)'}`,
    ]);
  }
  if (r.pinnedStrip) {
    const st = r.pinnedStrip;
    rows.push([
      `strip ${st.cells[0]}×${st.cells[1]} (${st.boundary})`,
      `counted ${st.flexes} flexes, ${st.selfStresses} self-stresses; self-stress weight ${lo} ${st.stressWeightLow.toFixed(3)}, ${hi} ${st.stressWeightHigh.toFixed(3)}${st.certified ? '' : ' (count not certified)'}`,
    ]);
  }
  const roots: [string, string][] = r.roots.map((x, i) => [
    `  root ${i + 1}`,
    `z = ${fmt(x.z[0], 6)} ${x.z[1] < 0 ? '−' : '+'} ${fmt(Math.abs(x.z[1]), 6)}i, |z| = ${fmt(x.modulus, 6)}, ${x.side}${x.decayCells !== null ? `, ξ = ${fmt(x.decayCells, 6)} cells = ${fmt(x.decayLength, 6)} length` : ''}${x.multiplicity > 1 ? `, multiplicity ${x.multiplicity}` : ''}`,
  ]);
  let grid = '';
  if (r.grid.length) {
    const lines = [`  θ         ξ ${lo} (cells)            ξ ${hi} (cells)            bulk  predicted ${lo}/${hi}`];
    for (const g of r.grid)
      lines.push(`  ${fmt(g.theta, 4).padEnd(8)}  ${list(g.low).padEnd(24)}  ${list(g.high).padEnd(24)}  ${String(g.bulk).padEnd(4)}  ${g.predictedLow ?? '—'}/${g.predictedHigh ?? '—'}`);
    grid = `\n  ξ(θ) along ${r.along}:\n${lines.join('\n')}\n`;
  }
  return (
    `shimmy edges: ${titleOf(name, spec)}\n` +
    `  edge phase θ = ${fmt(r.phase, 6)} turns along the edge; roots z of det Φ = 0 in the transverse variable\n` +
    `  (|z| < 1: low side, |z| > 1: high side, ||z| − 1| ≤ ${r.unitTolerance}: bulk); ξ = 1/|ln|z|| cells along the normal\n\n` +
    table([...rows, [`roots (edge along ${r.along})`, r.roots.length ? 'by modulus:' : 'none'], ...roots]) +
    grid +
    `\n${CAUTION}\n`
  );
}

function json(spec: string, name: string | undefined, r: EdgesResult): string {
  const root = (x: EdgesResult['roots'][number]) => ({
    z: x.z,
    modulus: x.modulus,
    side: x.side,
    decayCells: x.decayCells,
    decayLength: x.decayLength,
    multiplicity: x.multiplicity,
    residual: x.residual,
    mode: x.mode.re.map((v, i) => [v, x.mode.im[i]]),
  });
  const spectrum = (ax: EdgeAxis) => {
    const s = r.spectra[ax];
    return { span: s.span, identicallyZero: s.identicallyZero, rowSpacing: s.rowSpacing, low: s.low, high: s.high, bulk: s.bulk, note: s.note, roots: s.roots.map(root) };
  };
  return (
    JSON.stringify(
      {
        schemaVersion: 'shimmy.edges/1', // schema/edges.schema.json
        framework: spec,
        name: name ?? null,
        along: r.along,
        phase: r.phase,
        gauge: 'row of bar a→b with shift s holds −p at a and +z^s·p at b, z_k = exp(2πiθ_k), θ in turns',
        phi: { rows: r.rows, cols: r.cols, square: r.square },
        winding: r.winding,
        windingNote: r.windingNote,
        windingByAxis: r.windingByAxis.map((a) => ({ axis: a.axis, value: a.value, samples: a.samples, note: a.note })),
        polarisation: r.polarisation,
        polarisationNote: r.polarisationNote,
        sides: r.sides,
        roots: r.roots.map(root),
        spectra: { a1: spectrum('a1'), a2: spectrum('a2') },
        grid: r.grid,
        strip: r.strip,
        pinnedStrip: r.pinnedStrip,
        crossing: r.crossing,
        sample: r.sample,
        unitTolerance: r.unitTolerance,
        caution: CAUTION,
      },
      null,
      2,
    ) + '\n'
  );
}

export const edgesCommand: Command = {
  name: 'edges',
  summary: 'Edge modes from the unit-cell symbol: decay lengths (roots of det Φ), winding numbers, polarisation and predicted zero modes per free edge.',
  usage: `shimmy edges FRAMEWORK [--phase ${DEFAULT_EDGE_PHASE}] [--along a1|a2] [--grid ${DEFAULT_EDGE_GRID}] [--strip ${DEFAULT_STRIP_WIDTH}] [--cells N1xN2] [--json]`,
  flags: [
    { name: '--phase', value: 'θ', help: 'edge phase in turns along the edge (the edge wave number k = 2πθ per cell)', default: String(DEFAULT_EDGE_PHASE) },
    { name: '--along', value: 'a1|a2', help: 'edge direction for the roots, the ξ(θ) table and the strip: a1 (bottom/top edges) or a2 (left/right)', default: 'a1' },
    { name: '--grid', value: 'K', help: `edge phases k/K for the ξ(θ) table (0 to ${MAX_EDGE_GRID}; 0 for none)`, default: String(DEFAULT_EDGE_GRID) },
    { name: '--strip', value: 'W', help: `width of the strip count in cells (4 to ${MAX_STRIP_WIDTH}; 0 for none)`, default: String(DEFAULT_STRIP_WIDTH) },
    { name: '--cells', value: 'N1xN2', help: 'also count a free sample of this size: side weights against the predictions (default: none)' },
    { name: '--json', help: 'print one JSON object: winding, sides, roots, spectra, grid, strip' },
    { name: '--help', help: 'show this help' },
  ],
  maxPositional: 1,
  details: [
    'Φ(z) is the unit cell\'s rigidity matrix with Bloch phases; the row of bar a→b with shift s holds −p at a and',
    '+z^s·p at b (z_k = exp 2πiθ_k). At a fixed edge phase θ along the edge, det Φ is a Laurent polynomial in the',
    'transverse z; each root is a zero mode u(row r) ∝ z^r: |z| < 1 lives on the bottom (left) edge, |z| > 1 on',
    'the top (right). The predicted count per free edge is the number of roots on its side: for an edge that',
    'cuts whole cells and drops the bars leaving them. The winding numbers (n1, n2) of det Φ and R_T = n1 a1 +',
    'n2 a2 depend on the choice of unit cell; the per-edge counts n2 − lo and hi − n2 (lo..hi the powers of det Φ',
    'in z2) do not. The strip is one cell along the edge, twisted at θ, with both sides free: its flexes are',
    'split between the halves by the trace of their projector.',
    'A pinned edge keeps (grounded) the c bars per cell that cross it (c = Σ|s⊥|), so on it flexes − self-stresses',
    '= predicted − c; a negative value is the number of edge self-stresses. The same strip with both sides pinned',
    'counts them, split between the halves by the trace of the self-stress projector over their bars.',
    'With --cells N1xN2 a free sample of that size is counted too: each side\'s weight (the trace of the non-trivial',
    'flex projector over the cells nearest it) is printed against the prediction summed over the edge wave numbers',
    'k/N, k = 1 … N − 1, that the side holds, with the difference (corners and θ = 0 make it O(1)).',
    '',
    ...FRAMEWORK_HELP,
  ],
  run(args, io) {
    const spec = frameworkArg(args, 'edges');
    const phaseText = args.flags.get('--phase') as string | undefined;
    const alongText = (args.flags.get('--along') as string | undefined) ?? 'a1';
    const gridText = args.flags.get('--grid') as string | undefined;
    const stripText = args.flags.get('--strip') as string | undefined;
    const cellsText = args.flags.get('--cells') as string | undefined;
    const cells = cellsText === undefined ? undefined : parseCells(cellsText);
    const phase = phaseText === undefined ? DEFAULT_EDGE_PHASE : parseNumberFlag(phaseText, '--phase', () => true, 'a finite number of turns, e.g. 0.25');
    if (alongText !== 'a1' && alongText !== 'a2') {
      throw new InputError(`The value of --along cannot be used:`, [
        { where: '--along', what: `"${safeText(alongText)}" is not an edge direction`, fix: 'write --along a1 (bottom/top edges) or --along a2 (left/right edges)' },
      ]);
    }
    const grid = gridText === undefined ? DEFAULT_EDGE_GRID : parseNumberFlag(gridText, '--grid', (v) => Number.isInteger(v) && v >= 0 && v <= MAX_EDGE_GRID, `a whole number from 0 to ${MAX_EDGE_GRID}, e.g. 16`);
    const strip =
      stripText === undefined
        ? DEFAULT_STRIP_WIDTH
        : parseNumberFlag(stripText, '--strip', (v) => Number.isInteger(v) && (v === 0 || (v >= 4 && v <= MAX_STRIP_WIDTH)), `0 or a whole number from 4 to ${MAX_STRIP_WIDTH}, e.g. 40`);
    const framework = loadFramework(spec, io.readText);
    const r = edges({ framework, phase, along: alongText, grid, strip, cells });
    if (args.flags.has('--json')) io.out(safeJson(json(spec, framework.name, r)));
    else io.out(summary(spec, framework.name, r));
    return 0;
  },
};
