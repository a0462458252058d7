/**
 * Polynomial growth fits: a count c(N) fitted to a2·N² + a1·N + a0 by least squares, so area
 * (a2), edge (a1) and corner (a0) terms are told apart; a log-log slope mixes them whenever the
 * count has an offset (4N − 1 looks like N^1.2 over small N).
 *
 * Exact coefficients: each fitted coefficient is rounded to the nearest fraction p/q with
 * q ≤ MAX_DENOMINATOR; the rounded polynomial is reported as exact when it reproduces every
 * count to EXACT_TOLERANCE. With three sizes the fit interpolates (residual 0 by construction);
 * from four sizes on the residual and the exact match test the quadratic form.
 */
import { Matrix, QrDecomposition } from 'ml-matrix';

export const MAX_DENOMINATOR = 12;
export const EXACT_TOLERANCE = 1e-6;

export interface PolynomialFit {
  /** Least-squares coefficients of a2·N² + a1·N + a0, or null with fewer than 3 distinct sizes. */
  a2: number | null;
  a1: number | null;
  a0: number | null;
  /** √(Σ (count − fit)²) over the sizes, or null without a fit. */
  residual: number | null;
  /** Number of sizes used. */
  points: number;
  /** Sizes beyond the three coefficients (0: the fit interpolates and proves nothing). */
  freedom: number;
  /** Fractions that reproduce every count to EXACT_TOLERANCE, or null when none do. */
  exact: { a2: string; a1: string; a0: string; formula: string } | null;
}

/** Least-squares fit of ys to a2·x² + a1·x + a0. */
export function polynomialFit(xs: number[], ys: number[]): PolynomialFit {
  const n = xs.length;
  const none: PolynomialFit = { a2: null, a1: null, a0: null, residual: null, points: n, freedom: 0, exact: null };
  if (n !== ys.length || new Set(xs).size < 3 || !xs.every(Number.isFinite) || !ys.every(Number.isFinite)) return none;
  // columns 1, t, t² with t = x / max|x| keep the system well conditioned
  const s = Math.max(...xs.map(Math.abs));
  const A = new Matrix(xs.map((x) => [1, x / s, (x / s) ** 2]));
  const c = new QrDecomposition(A).solve(Matrix.columnVector(ys)).getColumn(0);
  const [a0, a1, a2] = [c[0], c[1] / s, c[2] / (s * s)];
  const residual = Math.sqrt(xs.reduce((acc, x, i) => acc + (ys[i] - (a2 * x * x + a1 * x + a0)) ** 2, 0));
  return { a2, a1, a0, residual, points: n, freedom: n - 3, exact: exactCoefficients(xs, ys, [a2, a1, a0]) };
}

/** The nearest fraction p/q to v with q ≤ maxDen (smallest q among the nearest). */
export function nearestFraction(v: number, maxDen = MAX_DENOMINATOR): [number, number] {
  let best: [number, number] = [Math.round(v), 1];
  let err = Math.abs(v - best[0]);
  for (let q = 2; q <= maxDen; q++) {
    const p = Math.round(v * q);
    const e = Math.abs(v - p / q);
    if (e < err - 1e-15) [best, err] = [[p, q], e];
  }
  const g = gcd(Math.abs(best[0]), best[1]);
  return [best[0] / g + 0, best[1] / g];
}

function gcd(a: number, b: number): number {
  return b === 0 ? a || 1 : gcd(b, a % b);
}

function exactCoefficients(xs: number[], ys: number[], coeffs: number[]): PolynomialFit['exact'] {
  const fr = coeffs.map((v) => nearestFraction(v));
  const [b2, b1, b0] = fr.map(([p, q]) => p / q);
  const ok = xs.every((x, i) => Math.abs(ys[i] - (b2 * x * x + b1 * x + b0)) <= EXACT_TOLERANCE);
  if (!ok) return null;
  const text = ([p, q]: [number, number]) => (q === 1 ? String(p) : `${p}/${q}`);
  return { a2: text(fr[0]), a1: text(fr[1]), a0: text(fr[2]), formula: formula(fr) };
}

/** e.g. [[1,1],[2,1],[0,1]] → "N² + 2N"; [[0,1],[4,1],[-1,1]] → "4N − 1"; all zero → "0". */
export function formula(fr: [number, number][]): string {
  const parts: string[] = [];
  ['N²', 'N', ''].forEach((power, k) => {
    const [p, q] = fr[k];
    if (p === 0) return;
    const mag = Math.abs(p);
    const coef = q === 1 ? (mag === 1 && power ? '' : String(mag)) : `(${mag}/${q})`;
    const sign = p < 0 ? '−' : '+';
    parts.push(parts.length === 0 ? `${p < 0 ? '−' : ''}${coef}${power}` : `${sign} ${coef}${power}`);
  });
  return parts.length ? parts.join(' ') : '0';
}
