/**
 * `edges()`: edge physics from the symbol in one call. Decay spectra of both edge directions at
 * one edge phase, the winding numbers and polarisation, the predicted zero modes per free edge,
 * a table ξ(θ) over a grid of edge phases, and a strip count as an independent check.
 */
import { InputError, type Problem } from '../errors.js';
import type { Framework } from '../framework/types.js';
import { checkFramework } from '../framework/validate.js';
import { decaySpectrum, DEFAULT_UNIT_TOLERANCE, type DecaySpectrum, type EdgeRoot, type Side } from './spectrum.js';
import type { EdgeAxis } from './laurent.js';
import { polarisation, type AxisWinding } from './winding.js';
import { DEFAULT_STRIP_WIDTH, pinnedStripCount, stripCount, type PinnedStripCount, type StripCount } from './strip.js';
import { resolveBars } from '../framework/types.js';
import { count } from '../analysis.js';
import { sideWeights } from '../flex/side-weights.js';
import { checkCells } from '../supercell/supercell.js';

export interface EdgesRequest {
  framework: Framework;
  /** Edge phase θ in turns along the edge (default 0.25). */
  phase?: number;
  /** Which edge direction gets the roots, the ξ(θ) table and the strip (default a1). */
  along?: EdgeAxis;
  /** Edge phases k/grid, k = 0 … grid − 1, for the ξ(θ) table (default 16; 0 for none). */
  grid?: number;
  /** Width in cells of the strip count (default 40; 0 for none). */
  strip?: number;
  /** ||z| − 1| at or below this is a bulk root (default 1e-6). */
  unitTolerance?: number;
  /** A free N1×N2 sample whose side weights are counted beside the predictions (default: none). */
  cells?: [number, number];
}

export interface SideReport {
  /** Zero modes per edge wave number on this free edge at the phase: roots on this side (null when undefined). */
  predicted: number | null;
  /** Strip count: the flex projector's weight on this half of the strip (null: not this edge direction or no strip). */
  counted: number | null;
  /** ξ in cells along the normal, one per root on this side, ascending. */
  decayLengths: number[];
  /** The same in units of length (times the row spacing). */
  decayLengthsInLength: number[];
  /** From the windings: n2 − lo (bottom), hi − n2 (top), n1 − lo (left), hi − n1 (right); null when undefined. */
  fromWinding: number | null;
  /** The same edge pinned (bars leaving it grounded): see PinnedSide. */
  pinned: PinnedSide;
  /** The free N1×N2 sample's count on this side (null when no `cells` were given): see FiniteSide. */
  finite: FiniteSide | null;
}

/**
 * Counted in a finite free sample: the side weight (trace of the non-trivial flex projector over
 * the cells nearest this side, src/flex/side-weights.ts), against the prediction summed over
 * the N − 1 edge wave numbers k/N, k = 1 … N − 1, that a side of N cells holds (θ = 0 is left
 * out: its bulk roots are the rigid motions). The deviation is what corners, θ = 0 and decay
 * lengths comparable to the sample add or take away; it stays O(1) as N grows when the
 * prediction holds.
 */
export interface FiniteSide {
  weight: number;
  /** Σ_{k=1}^{N−1} predicted(k/N); null when any of them is undefined. */
  expected: number | null;
  /** weight − expected. */
  deviation: number | null;
  /** Cells along this side. */
  length: number;
}

/**
 * A pinned edge keeps the c bars per cell that cross it (c = Σ |s⊥| over the cell's bars), each
 * grounded: c more constraints than the free edge, so flexes − self-stresses per edge wave
 * number is `predicted − c` (exact, by counting). When that is negative the edge carries at
 * least −index self-stresses; generically exactly that many and no flexes.
 */
export interface PinnedSide {
  /** Flexes − self-stresses per edge wave number on this edge when pinned; null when `predicted` is. */
  index: number | null;
  /** max(0, −index): the edge self-stresses a pinned edge carries (generic count). */
  selfStresses: number | null;
  /** The strip pinned on both sides: its self-stress projector weight on this half; null when not counted. */
  counted: number | null;
}

export interface GridRow {
  theta: number;
  /** ξ (cells) of the roots on the low and high side, ascending. */
  low: number[];
  high: number[];
  bulk: number;
  predictedLow: number | null;
  predictedHigh: number | null;
}

export interface EdgesResult {
  along: EdgeAxis;
  /** The edge phase as given (every computation uses it modulo 1). */
  phase: number;
  rows: number;
  cols: number;
  square: boolean;
  /** [n1, n2] when both are defined, else null (see windingNote). */
  winding: [number, number] | null;
  windingNote: string | null;
  windingByAxis: [AxisWinding, AxisWinding];
  /** R_T = n1 a1 + n2 a2 in framework units; depends on the choice of unit cell. */
  polarisation: [number, number] | null;
  polarisationNote: string;
  sides: Record<Side, SideReport>;
  /** The roots of the `along` edge at the phase, by modulus. */
  roots: EdgeRoot[];
  spectra: { a1: DecaySpectrum; a2: DecaySpectrum };
  grid: GridRow[];
  strip: StripCount | null;
  /** The same strip with both sides pinned (edge self-stresses), or null when not run. */
  pinnedStrip: PinnedStripCount | null;
  /** Bars per cell crossing an edge along a1 (Σ |s2|) and along a2 (Σ |s1|). */
  crossing: { a1: number; a2: number };
  /** The free sample counted per side, or null (see FiniteSide). */
  sample: { cells: [number, number]; flexes: number; trivial: number; certified: boolean } | null;
  unitTolerance: number;
}

export const DEFAULT_EDGE_PHASE = 0.25;
export const DEFAULT_EDGE_GRID = 16;
export const MAX_EDGE_GRID = 1024;
export const MAX_STRIP_WIDTH = 400;

export const POLARISATION_NOTE =
  'R_T = n1 a1 + n2 a2 in the cell gauge: it changes when a joint or a bar is assigned to another cell; the per-edge counts (sides) do not.';

function checkRequest(req: EdgesRequest): Problem[] {
  const problems: Problem[] = [];
  if (req.phase !== undefined && !(typeof req.phase === 'number' && Number.isFinite(req.phase)))
    problems.push({ where: 'phase', what: `${String(req.phase)} is not a finite number`, fix: 'give the edge phase in turns, e.g. 0.25' });
  if (req.along !== undefined && req.along !== 'a1' && req.along !== 'a2')
    problems.push({ where: 'along', what: `"${String(req.along)}" is not an edge direction`, fix: 'give a1 (bottom/top edges) or a2 (left/right edges)' });
  if (req.grid !== undefined && !(Number.isInteger(req.grid) && req.grid >= 0 && req.grid <= MAX_EDGE_GRID))
    problems.push({ where: 'grid', what: `${String(req.grid)} is not a whole number from 0 to ${MAX_EDGE_GRID}`, fix: 'give the number of edge phases for the table, e.g. 16 (0 for none)' });
  if (req.strip !== undefined && !(Number.isInteger(req.strip) && (req.strip === 0 || (req.strip >= 4 && req.strip <= MAX_STRIP_WIDTH))))
    problems.push({ where: 'strip', what: `${String(req.strip)} is not 0 or a whole number from 4 to ${MAX_STRIP_WIDTH}`, fix: 'give the strip width in cells, e.g. 40 (0 for no strip count)' });
  if (req.unitTolerance !== undefined && !(typeof req.unitTolerance === 'number' && req.unitTolerance > 0 && req.unitTolerance <= 0.1))
    problems.push({ where: 'unitTolerance', what: `${String(req.unitTolerance)} is not a number in (0, 0.1]`, fix: 'give a small tolerance on ||z| − 1|, e.g. 1e-6' });
  if (req.cells !== undefined) {
    try {
      checkCells(req.cells, 'cells');
    } catch (e) {
      if (e instanceof InputError) problems.push(...e.problems);
      else throw e;
    }
  }
  return problems;
}

function sideReport(s: DecaySpectrum, side: Side, fromWinding: number | null, counted: number | null, crossing: number, pinnedCounted: number | null, finite: FiniteSide | null): SideReport {
  const mine = s.roots.filter((r) => r.side === side);
  const low = side === 'bottom' || side === 'left';
  const cells = mine.map((r) => r.decayCells as number).sort((a, b) => a - b);
  const predicted = low ? s.predictedLow : s.predictedHigh;
  const index = predicted === null ? null : predicted - crossing;
  return {
    predicted,
    counted,
    decayLengths: cells,
    decayLengthsInLength: cells.map((x) => x * s.rowSpacing),
    fromWinding,
    pinned: { index, selfStresses: index === null ? null : Math.max(0, -index), counted: pinnedCounted },
    finite,
  };
}

export function edges(req: EdgesRequest): EdgesResult {
  const problems = checkRequest(req);
  if (problems.length) throw new InputError('The edge request cannot be used:', problems);
  const fw = checkFramework(req.framework);
  const phase = req.phase ?? DEFAULT_EDGE_PHASE;
  // only θ mod 1 matters; reduced, the strip's twist text stays exact
  const theta = phase - Math.floor(phase);
  const along = req.along ?? 'a1';
  const grid = req.grid ?? DEFAULT_EDGE_GRID;
  const width = req.strip ?? DEFAULT_STRIP_WIDTH;
  const unitTolerance = req.unitTolerance ?? DEFAULT_UNIT_TOLERANCE;
  const opts = { unitTolerance };
  const a1 = decaySpectrum(fw, 'a1', theta, opts);
  const a2 = decaySpectrum(fw, 'a2', theta, opts);
  const strip = width > 0 ? stripCount(fw, along, theta, width) : null;
  const pinnedStrip = width > 0 ? pinnedStripCount(fw, along, theta, width) : null;
  const cnt = (ax: EdgeAxis, low: boolean) => (strip && ax === along ? (low ? strip.weightLow : strip.weightHigh) : null);
  const pcnt = (ax: EdgeAxis, low: boolean) => (pinnedStrip && ax === along ? (low ? pinnedStrip.stressWeightLow : pinnedStrip.stressWeightHigh) : null);
  const crossing = { a1: 0, a2: 0 };
  for (const b of resolveBars(fw)) {
    crossing.a1 += Math.abs(b.shift[1]);
    crossing.a2 += Math.abs(b.shift[0]);
  }
  const pol = polarisation(fw);
  const n1 = pol.byAxis[0].value;
  const n2 = pol.byAxis[1].value;
  const fromW = (s: DecaySpectrum, w: number | null, low: boolean): number | null =>
    w === null || s.span === null ? null : low ? w - s.span[0] : s.span[1] - w;
  let sample: EdgesResult['sample'] = null;
  const finite: Record<Side, FiniteSide | null> = { bottom: null, top: null, left: null, right: null };
  if (req.cells) {
    const { supercell, analysis } = count({ framework: fw, cells: req.cells, boundary: 'free' });
    const w = sideWeights(supercell, analysis);
    sample = { cells: req.cells, flexes: analysis.flexes, trivial: analysis.trivialFlexes, certified: analysis.status.certified };
    for (const [side, axis, N] of [
      ['bottom', 'a1', req.cells[0]],
      ['top', 'a1', req.cells[0]],
      ['left', 'a2', req.cells[1]],
      ['right', 'a2', req.cells[1]],
    ] as const) {
      let expected: number | null = 0;
      for (let k = 1; k < N && expected !== null; k++) {
        const sp = decaySpectrum(fw, axis, k / N, opts);
        const v = side === 'bottom' || side === 'left' ? sp.predictedLow : sp.predictedHigh;
        expected = v === null ? null : expected + v;
      }
      const weight = w[side] as number;
      finite[side] = { weight, expected, deviation: expected === null ? null : weight - expected, length: N };
    }
  }
  const sides: Record<Side, SideReport> = {
    bottom: sideReport(a1, 'bottom', fromW(a1, n2, true), cnt('a1', true), crossing.a1, pcnt('a1', true), finite.bottom),
    top: sideReport(a1, 'top', fromW(a1, n2, false), cnt('a1', false), crossing.a1, pcnt('a1', false), finite.top),
    left: sideReport(a2, 'left', fromW(a2, n1, true), cnt('a2', true), crossing.a2, pcnt('a2', true), finite.left),
    right: sideReport(a2, 'right', fromW(a2, n1, false), cnt('a2', false), crossing.a2, pcnt('a2', false), finite.right),
  };
  const main = along === 'a1' ? a1 : a2;
  const [lowSide, highSide] = along === 'a1' ? (['bottom', 'top'] as const) : (['left', 'right'] as const);
  const table: GridRow[] = [];
  for (let k = 0; k < grid; k++) {
    const s = decaySpectrum(fw, along, k / grid, opts);
    const xi = (side: Side) => s.roots.filter((r) => r.side === side).map((r) => r.decayCells as number).sort((a, b) => a - b);
    table.push({ theta: k / grid, low: xi(lowSide), high: xi(highSide), bulk: s.bulk, predictedLow: s.predictedLow, predictedHigh: s.predictedHigh });
  }
  return {
    along,
    phase,
    rows: a1.rows,
    cols: a1.cols,
    square: a1.square,
    winding: pol.winding,
    windingNote: pol.note,
    windingByAxis: pol.byAxis,
    polarisation: pol.polarisation,
    polarisationNote: POLARISATION_NOTE,
    sides,
    roots: main.roots,
    spectra: { a1, a2 },
    grid: table,
    strip,
    pinnedStrip,
    crossing,
    sample,
    unitTolerance,
  };
}
