/**
 * What the symbol predicts for a size sweep, to set beside the fitted a2·N² + a1·N + a0.
 *
 *  - Area: g = dim ker Φ at a generic phase (a flat band when g > 0) gives g flexes per cell.
 *  - Edges: each free side carries, per edge wave number, the roots of det Φ on its side
 *    (src/edges/spectrum.ts); a pinned side carries max(0, predicted − c) flexes (c = bars per
 *    cell crossing it; see src/edges/edges.ts PinnedSide). Averaged over edge phases θ = k/M
 *    (k = 1 … M − 1) and multiplied by the wave numbers the side holds: L − 1 on a side of L cells
 *    when the axis along it is open or untwisted (θ = 0, Γ, is left out: there live the rigid
 *    motions and the bulk roots), L when twisted by a phase off 0.
 * Expected count E(N1, N2) = g·N1·N2 + Σ_sides mean·(wave numbers); its polynomial fit over the
 * sweep's sizes gives the predicted a2 and a1. Corners, Γ and zero lines of Φ are not in it, so
 * a0 is not predicted; a side with bulk roots (|z| = 1) at some phase has no prediction (null).
 */
import { decaySpectrum } from '../edges/spectrum.js';
import type { Side } from '../edges/spectrum.js';
import { resolveBars, type Framework } from '../framework/types.js';
import { symbolKernel } from '../spectrum/symbol.js';
import type { Boundary } from '../supercell/boundary.js';
import { polynomialFit } from './growth-fit.js';

/** Edge phases averaged over: k/PHASES for k = 1 … PHASES − 1. */
const PHASES = 24;
/** Phases where Φ is generic (no rational relation to the lattice). */
const GENERIC: [number, number][] = [
  [0.1234567, 0.3456789],
  [0.7390851, 0.2718281],
  [0.4142135, 0.8660254],
];

export interface SymbolPrediction {
  /** dim ker Φ at a generic phase: flexes per cell that every size carries (flat bands). */
  genericKernel: number;
  /** Flexes per edge wave number on each side, averaged over the edge phase; null: not defined (bulk roots, or no side). */
  perSide: Record<Side, number | null>;
  /** Expected count per row, or null when a side needed has no prediction. */
  expected: (number | null)[];
  /** Fit of the expected counts to a2·N² + a1·N + a0 over the sweep's N (null without 3 distinct N or a prediction). */
  polynomial: { a2: number; a1: number; a0: number } | null;
  /** The area term alone, g·N1·N2, fitted the same way: its a2 (null without 3 distinct N). */
  areaA2: number | null;
  note: string;
}

function meanPredicted(fw: Framework, axis: 'a1' | 'a2', low: boolean, crossing: number, pinned: boolean, why: string[]): number | null {
  let sum = 0;
  for (let k = 1; k < PHASES; k++) {
    const s = decaySpectrum(fw, axis, k / PHASES);
    const v = low ? s.predictedLow : s.predictedHigh;
    if (v === null) {
      if (!why.length) why.push(`edge along ${axis} at θ = ${k}/${PHASES}: ${s.note ?? 'no prediction'}`);
      return null;
    }
    sum += pinned ? Math.max(0, v - crossing) : v;
  }
  return sum / (PHASES - 1);
}

export function symbolPrediction(fw: Framework, boundary: Boundary, rows: { N1: number; N2: number }[], N: number[]): SymbolPrediction {
  let g = Infinity;
  for (const t of GENERIC) g = Math.min(g, symbolKernel(fw, t).kernel);
  const crossing = { a1: 0, a2: 0 };
  for (const b of resolveBars(fw)) {
    crossing.a1 += Math.abs(b.shift[1]);
    crossing.a2 += Math.abs(b.shift[0]);
  }
  const perSide: Record<Side, number | null> = { bottom: null, top: null, left: null, right: null };
  const why: string[] = [];
  // sides of y (bottom/top) run along a1; sides of x (left/right) run along a2
  const y = boundary.y;
  const x = boundary.x;
  if (y.kind === 'sides') {
    perSide.bottom = meanPredicted(fw, 'a1', true, crossing.a1, y.low === 'pinned', why);
    perSide.top = meanPredicted(fw, 'a1', false, crossing.a1, y.high === 'pinned', why);
  }
  if (x.kind === 'sides') {
    perSide.left = meanPredicted(fw, 'a2', true, crossing.a2, x.low === 'pinned', why);
    perSide.right = meanPredicted(fw, 'a2', false, crossing.a2, x.high === 'pinned', why);
  }
  const waves = (L: number, along: Boundary['x']) => (along.kind === 'twist' && along.theta - Math.floor(along.theta) !== 0 ? L : L - 1);
  const undefinedSide = (y.kind === 'sides' && (perSide.bottom === null || perSide.top === null)) || (x.kind === 'sides' && (perSide.left === null || perSide.right === null));
  const expected = rows.map((r) => {
    if (undefinedSide) return null;
    let e = g * r.N1 * r.N2;
    if (y.kind === 'sides') e += ((perSide.bottom as number) + (perSide.top as number)) * waves(r.N1, x);
    if (x.kind === 'sides') e += ((perSide.left as number) + (perSide.right as number)) * waves(r.N2, y);
    return e;
  });
  let polynomial: SymbolPrediction['polynomial'] = null;
  if (expected.every((e) => e !== null)) {
    const f = polynomialFit(N, expected as number[]);
    if (f.a2 !== null && f.a1 !== null && f.a0 !== null) polynomial = { a2: f.a2, a1: f.a1, a0: f.a0 };
  }
  const area = polynomialFit(N, rows.map((r) => g * r.N1 * r.N2));
  const note = undefinedSide
    ? `no edge prediction (${why[0]}); the area term g still holds`
    : 'expected = g·N1·N2 + Σ_sides (flexes per edge wave number, averaged over the edge phase)·(wave numbers on the side, θ = 0 left out); corners, θ = 0 and zero lines of Φ are not in it, so compare a2 and a1, not a0';
  return { genericKernel: g, perSide, expected, polynomial, areaA2: area.a2, note };
}
