/**
 * The decay spectrum of an edge: every root z of det Φ(z) = 0 in the transverse variable at one
 * edge phase, with its side, decay length and mode shape.
 *
 * Method: the coefficients of det Φ (src/edges/determinant.ts), then the roots of that
 * polynomial (Aberth–Ehrlich, src/linalg/poly-roots.ts), then the mode shape as the singular
 * vector of Φ(z) for its smallest singular value. The determinant route rather than a companion
 * pencil of the matrix polynomial: the pencil of these symbols has many exact zero and infinite
 * eigenvalues in Jordan blocks (four of six for the kagome family), which an eigensolver returns
 * only to ε^(1/4); the trimmed determinant drops them exactly and also gives the Laurent span
 * (lo, hi) the per-edge counts need.
 *
 * Sides: a mode u(row r) ∝ z^r decays towards +r when |z| < 1, so it lives on the low side
 * (bottom for an edge along a1, left for an edge along a2); |z| > 1 the high side (top, right);
 * ||z| − 1| ≤ unitTolerance is a bulk zero mode. ξ = 1/|ln|z|| cells along the edge normal; in
 * length units ξ times the row spacing |a1 × a2| / |a_edge|.
 *
 * Non-square Φ: there is no determinant. The roots are then the points where Φ(z) loses rank
 * (its smallest of min(m, n) singular values vanishes), found through a square compression and
 * kept only when Φ itself confirms them; no per-side prediction is made.
 */
import type { Framework } from '../framework/types.js';
import { jacobiSvd } from '../spectrum/jacobi.js';
import { polynomialRoots, type Complex } from '../linalg/poly-roots.js';
import { determinantPolynomial } from './determinant.js';
import { LaurentSymbol, type EdgeAxis } from './laurent.js';

export type Side = 'bottom' | 'top' | 'left' | 'right';
export type RootSide = Side | 'bulk';

export interface EdgeRoot {
  /** The root z (transverse variable). */
  z: Complex;
  modulus: number;
  side: RootSide;
  /** ξ = 1/|ln|z|| in cells along the edge normal; null for a bulk root. */
  decayCells: number | null;
  /** ξ in units of length (times the row spacing); null for a bulk root. */
  decayLength: number | null;
  /** How many computed roots coincide with this one (to 1e-6 relative), itself included. */
  multiplicity: number;
  /** σ_min(Φ(z)) / σ_max(Φ(z)): how well Φ confirms the root. */
  residual: number;
  /** Unit mode shape: Φ's right singular vector for σ_min, 2 entries (x, y) per joint (empty for Φ with fewer bars than columns). */
  mode: { re: number[]; im: number[] };
}

export interface DecaySpectrum {
  axis: EdgeAxis;
  /** Edge phase θ in turns. */
  phase: number;
  /** Φ's size (bars × 2·joints) and whether it is square. */
  rows: number;
  cols: number;
  square: boolean;
  /** Laurent span of det Φ in the transverse variable (null: not square or det ≡ 0). */
  span: [number, number] | null;
  /** det Φ vanishes for every z at this edge phase (a zero line along the transverse axis). */
  identicallyZero: boolean;
  roots: EdgeRoot[];
  /** Roots per side at this phase (low = bottom or left, high = top or right). */
  low: number;
  high: number;
  bulk: number;
  /** Predicted zero modes per edge wave number (free edge): the roots on that side; null when undefined. */
  predictedLow: number | null;
  predictedHigh: number | null;
  /** Distance between rows of cells along the edge normal (framework units). */
  rowSpacing: number;
  note: string | null;
}

export interface DecayOptions {
  /** ||z| − 1| at or below this counts as a bulk root (default 1e-6). */
  unitTolerance?: number;
}

export const DEFAULT_UNIT_TOLERANCE = 1e-6;

export function sideNames(axis: EdgeAxis): [Side, Side] {
  return axis === 'a1' ? ['bottom', 'top'] : ['left', 'right'];
}

/** |a1 × a2| / |a_edge|: the spacing of rows of cells along the edge normal. */
export function rowSpacing(fw: Framework, axis: EdgeAxis): number {
  const [a1, a2] = fw.lattice;
  const area = Math.abs(a1[0] * a2[1] - a1[1] * a2[0]);
  const e = axis === 'a1' ? a1 : a2;
  return area / Math.hypot(e[0], e[1]);
}

/** σ_min/σ_max and the right singular vector of σ_min, for a row-major m×n matrix. */
function smallestSingular(re: Float64Array, im: Float64Array, m: number, n: number): { ratio: number; vre: number[]; vim: number[] } {
  // to column-major for jacobiSvd
  const cr = new Float64Array(m * n);
  const ci = new Float64Array(m * n);
  for (let r = 0; r < m; r++)
    for (let c = 0; c < n; c++) {
      cr[c * m + r] = re[r * n + c];
      ci[c * m + r] = im[r * n + c];
    }
  const svd = jacobiSvd(cr, ci, m, n);
  const k = svd.sigma.length;
  const smax = k ? svd.sigma[0] : 0;
  const smin = k ? svd.sigma[k - 1] : 0;
  const ratio = smax > 0 ? smin / smax : 0;
  // right vectors are n×k column-major; the smallest σ's column is the last. For a wide Φ
  // jacobiSvd forms V = ΦᴴU/σ, which is meaningless at σ ≈ 0: no mode shape then.
  if (m < n) return { ratio, vre: [], vim: [] };
  const vre = Array.from(svd.vRe.subarray((k - 1) * n, k * n));
  const vim = Array.from(svd.vIm.subarray((k - 1) * n, k * n));
  return { ratio, vre, vim };
}

export function decaySpectrum(fw: Framework, axis: EdgeAxis, phase: number, options: DecayOptions = {}): DecaySpectrum {
  const tolUnit = options.unitTolerance ?? DEFAULT_UNIT_TOLERANCE;
  const L = new LaurentSymbol(fw, axis, phase);
  const square = L.rows === L.cols;
  const spacing = rowSpacing(fw, axis);
  const [lowSide, highSide] = sideNames(axis);
  const poly = determinantPolynomial(L);
  const base = { axis, phase, rows: L.rows, cols: L.cols, square, rowSpacing: spacing };
  if (poly.identicallyZero) {
    return {
      ...base,
      span: null,
      identicallyZero: true,
      roots: [],
      low: 0,
      high: 0,
      bulk: 0,
      predictedLow: null,
      predictedHigh: null,
      note: square
        ? `det Φ vanishes for every transverse z at this edge phase: Φ has bulk zero modes for every wave number across the edge (a zero line or a flat band), so edge modes are not separated from bulk ones here`
        : `Φ (${L.rows}×${L.cols}) has rank below min(bars, 2·joints) for every transverse z at this edge phase, so no isolated roots exist`,
    };
  }
  const raw = polynomialRoots(poly.coeffRe, poly.coeffIm);
  const roots: EdgeRoot[] = [];
  for (const z of raw) {
    const phi = L.evaluate(z[0], z[1]);
    const s = smallestSingular(phi.re, phi.im, L.rows, L.cols);
    // a compression's spurious roots are not roots of Φ
    if (!square && s.ratio > 1e-6) continue;
    const modulus = Math.hypot(z[0], z[1]);
    const logm = Math.log(modulus);
    const bulk = Math.abs(modulus - 1) <= tolUnit;
    const side: RootSide = bulk ? 'bulk' : modulus < 1 ? lowSide : highSide;
    const decayCells = bulk ? null : 1 / Math.abs(logm);
    roots.push({ z, modulus, side, decayCells, decayLength: decayCells === null ? null : decayCells * spacing, multiplicity: 1, residual: s.ratio, mode: { re: s.vre, im: s.vim } });
  }
  for (const r of roots)
    r.multiplicity = roots.filter((q) => Math.hypot(q.z[0] - r.z[0], q.z[1] - r.z[1]) <= 1e-6 * Math.max(1, r.modulus)).length;
  roots.sort((a, b) => a.modulus - b.modulus);
  const low = roots.filter((r) => r.side === lowSide).length;
  const high = roots.filter((r) => r.side === highSide).length;
  const bulk = roots.filter((r) => r.side === 'bulk').length;
  let note: string | null = null;
  if (!square) note = `Φ is ${L.rows}×${L.cols}, not square: the roots are the points where Φ loses rank (found through a fixed square compression and confirmed on Φ); no per-side prediction is made`;
  else if (bulk > 0) note = `${bulk} root${bulk === 1 ? '' : 's'} on the unit circle (to ${tolUnit}): bulk zero modes at this edge phase, so the per-side counts are not defined here`;
  return {
    ...base,
    span: square ? [poly.lo, poly.hi] : null,
    identicallyZero: false,
    roots,
    low,
    high,
    bulk,
    predictedLow: square && bulk === 0 ? low : null,
    predictedHigh: square && bulk === 0 ? high : null,
    note,
  };
}
