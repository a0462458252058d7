/**
 * Edge physics as a figure and a table: ξ(θ) per side over the edge phase, and at the chosen
 * phase the predicted edge modes per side (roots of det Φ on that side) against counted ones.
 */
import type { SideWeights } from '../../flex/side-weights.js';
import { parseBoundary } from '../../supercell/boundary.js';
import type { EdgesData } from '../../worker/protocol.js';
import type { MarkerShape } from './legend.js';
import type { LinePlotSpec, PlotSeries } from './line-plot.js';

export type SideName = 'bottom' | 'top' | 'left' | 'right';
export const SIDE_NAMES: readonly SideName[] = ['bottom', 'top', 'left', 'right'];

export const SIDE_STYLE: Record<SideName, { colour: string; marker: MarkerShape }> = {
  bottom: { colour: '#2f6f77', marker: 'circle' },
  top: { colour: '#b4531c', marker: 'square' },
  left: { colour: '#7a4a9c', marker: 'triangle' },
  right: { colour: '#5d7f2a', marker: 'diamond' },
};

/** ξ(θ) of one side from the table of its edge direction: the j-th smallest ξ at each θ is branch j. */
export function sideBranches(d: EdgesData, side: SideName): { points: [number, number][]; branches: [number, number][][] } {
  const r = side === 'bottom' || side === 'top' ? d.a1 : d.a2;
  const low = side === 'bottom' || side === 'left';
  const points: [number, number][] = [];
  const branches: [number, number][][] = [];
  for (const row of r.grid) {
    const xi = low ? row.low : row.high;
    xi.forEach((v, j) => {
      points.push([row.theta, v]);
      (branches[j] ??= []).push([row.theta, v]);
    });
  }
  return { points, branches };
}

export function xiPlotSpec(d: EdgesData, o: { framework: string; width?: number; height?: number; idPrefix?: string }): LinePlotSpec {
  const series: PlotSeries[] = SIDE_NAMES.map((side) => {
    const { points, branches } = sideBranches(d, side);
    return { key: side, label: `${side} (edge along ${side === 'bottom' || side === 'top' ? 'a1' : 'a2'})`, colour: SIDE_STYLE[side].colour, marker: SIDE_STYLE[side].marker, points, curves: branches.filter((b) => b.length > 1) };
  });
  return {
    width: o.width ?? 640,
    height: o.height ?? 420,
    title: `Edge decay lengths: ${o.framework}`,
    subtitle: `ξ = 1/|ln|z|| per root of det Φ on each side, ${d.a1.grid.length} edge phases`,
    x: { label: 'edge phase θ (turns)', kind: 'linear', domain: [0, 1] },
    y: { label: 'ξ (cells)', kind: 'log' },
    series,
    legend: true,
    idPrefix: o.idPrefix ?? 'xi',
    emptyNote: 'no roots off the unit circle: no decaying edge modes at any edge phase',
  };
}

export interface EdgeCountRow {
  side: SideName;
  /** Roots on this side at the phase (null: undefined there, e.g. a bulk root). */
  predicted: number | null;
  /** ξ of those roots (cells). */
  decayLengths: number[];
  /** The strip count of src/edges/strip.ts (1 × 40 cells, twisted along the edge). */
  strip: number | null;
  /** The current supercell's side weight, or null. */
  supercell: number | null;
}

export function edgeCountRows(d: EdgesData, weights: SideWeights | null | undefined): EdgeCountRow[] {
  return SIDE_NAMES.map((side) => {
    const r = side === 'bottom' || side === 'top' ? d.a1 : d.a2;
    const s = r.sides[side];
    return { side, predicted: s.predicted, decayLengths: s.decayLengths, strip: s.counted, supercell: weights ? weights[side] : null };
  });
}

/**
 * What the supercell's side weights can be compared with. Its edge along a1 (bottom/top) with x
 * twisted by Θ over N1 cells holds the edge phases (Θ + k)/N1, so its weight on a side is the
 * sum of the predicted counts over those phases (for wide enough samples); with x free the
 * weights also hold the corners and no single phase applies. Returns the sum per side where the
 * table has every needed phase, and a note saying what was compared.
 */
export function supercellPrediction(d: EdgesData, cells: [number, number], bc: string): { sums: Partial<Record<SideName, number | null>>; note: string } {
  let b;
  try {
    b = parseBoundary(bc);
  } catch {
    return { sums: {}, note: `the boundary "${bc}" cannot be read` };
  }
  const sums: Partial<Record<SideName, number | null>> = {};
  const notes: string[] = [];
  for (const [axis, sides, across, N, res] of [
    ['x', ['bottom', 'top'], b.y, cells[0], d.a1],
    ['y', ['left', 'right'], b.x, cells[1], d.a2],
  ] as const) {
    const along = axis === 'x' ? b.x : b.y;
    if (across.kind === 'twist') continue; // no sides across: nothing to compare
    if (across.low !== 'free' || across.high !== 'free') {
      notes.push(`${sides.join('/')}: a pinned side, while the predictions are for free edges`);
      continue;
    }
    if (along.kind !== 'twist') {
      notes.push(`${sides.join('/')}: ${axis} is not twisted, so the weights mix every edge phase and the corners`);
      continue;
    }
    const g = res.grid.length;
    const phases = Array.from({ length: N }, (_, k) => (along.theta + k) / N - Math.floor((along.theta + k) / N));
    const rows = phases.map((t) => res.grid.find((r) => Math.abs(r.theta - t) < 1e-9));
    if (rows.some((r) => !r)) {
      notes.push(`${sides.join('/')}: the phases (Θ + k)/${N} are not all in the ${g}-phase table`);
      continue;
    }
    for (const [i, side] of sides.entries()) {
      const vals = rows.map((r) => (i === 0 ? r!.predictedLow : r!.predictedHigh));
      sums[side] = vals.some((v) => v === null) ? null : vals.reduce((a, v) => a! + v!, 0);
    }
    notes.push(`${sides.join('/')}: summed over the ${N} edge phases (Θ + k)/${N} of the supercell`);
  }
  return { sums, note: notes.join('; ') };
}
