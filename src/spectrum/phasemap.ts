/**
 * The phase-torus map: singular values and kernel dimension of the unit-cell symbol Φ(z),
 * z = (exp 2πiθ1, exp 2πiθ2), over θ ∈ [0, 1)², and the zero set where Φ loses rank.
 *
 * Method.
 *  1. Grid. Φ is assembled densely at the grid×grid phases θ = (i1, i2)/grid and its singular
 *     values are computed by one-sided Jacobi on Φ itself (src/spectrum/jacobi.ts), which keeps
 *     values near zero accurate to ~1e-15·σ_max (eigenvalues of ΦᴴΦ would not). The list has
 *     n = 2·joints entries: Φ as a map on C^n, padded with exact zeros when there are fewer bars
 *     than n, so σ_1 = min ‖Φv‖ over unit v and dim ker = #{σ ≤ tol}.
 *     tol = relative · σ_max, σ_max the largest singular value over the grid.
 *  2. Generic kernel k0 = the smallest dim ker over the grid and a few off-grid phases (a
 *     framework with fewer bars than degrees of freedom, like the honeycomb, has k0 ≥ 1
 *     everywhere: a flat band). The zero set is where dim ker > k0; it is detected with the
 *     function f(θ) = σ_{k0+1}(θ), which vanishes exactly there.
 *  3. Zero points. Grid points with f ≤ tol are zero points. Then, along every grid row (θ2
 *     fixed) and column (θ1 fixed), each local minimum v of f above tol is refined by Brent's
 *     method (golden section with parabolic steps) on f² inside the two neighbouring grid
 *     intervals, first coarsely (to 1e-9, dropping minima with f still above
 *     max(1e3·tol, 1e-6·σ_max)) and then finely (to 1e-15). Minima with v above 0.45 times the
 *     sum of their two neighbours are skipped: across a zero line f is V-shaped and gives
 *     v ≤ (left + right)/4. f² is locally quadratic across a transversal zero line, so the
 *     parabolic steps land on the crossing and f there falls below tol: a zero line off the grid
 *     is met on every row and column it crosses. Coarse 2D local minima of f with no zero point
 *     within 1.5 grid steps are refined in the plane by damped Newton steps on the smooth
 *     function uᴴΦ(θ)v of the singular triplet (newtonZero), falling back on a derivative-free
 *     stencil descent on f² (stencilMinimum) where that misses, e.g. where Φ loses rank to first
 *     order along one direction only; this finds isolated zeros between grid points. Two
 *     isolated zeros within about one grid step of each other may share one coarse minimum, so
 *     one can be missed: compare two grid sizes when zeros are dense.
 *  4. Lines. For every direction (p, q) with |p|, |q| ≤ 3 and gcd 1, the values
 *     c = p·θ1 + q·θ2 (mod 1) of the zero points are clustered; a cluster of at least
 *     max(3, grid/2) points is a candidate line p·θ1 + q·θ2 ≡ c, which is accepted only if f
 *     vanishes (within tol, after a refinement of at most 1e-7 across the line) at 8 points
 *     spread along the whole closed line, off the grid. c is snapped to a fraction k/d (d ≤ 12)
 *     when within 1e-9. Zero points farther than 1e-4 from every accepted line are the isolated
 *     points (merged within 1e-5). A curved zero set shows up here as many isolated points;
 *     src/spectrum/zero-set.ts traces them into curves and gives each isolated zero its charge.
 * Arrays are indexed i2·grid + i1 (θ1 varies fastest).
 * Units: Φ is assembled with bar vectors divided by the framework's lengthScale (a power of
 * two, see lengthScaleOf) and every σ figure of the result is multiplied back, so the map
 * reports σ in the framework's own units of length (exactly, as the factor is a power of two).
 */
import { InputError } from '../errors.js';
import { throwIfAborted, type Progress } from '../flex/solver.js';
import type { Framework } from '../framework/types.js';
import { checkFramework } from '../framework/validate.js';
import { DEFAULT_RELATIVE_TOLERANCE } from '../linalg/rank.js';
import { jacobiSingularValues, jacobiSvd } from './jacobi.js';
import { SymbolAssembler } from './symbol.js';

export const MAX_GRID = 1024;
/** Row/column minima above V_TEST·(left + right neighbour) cannot hide a zero crossing (a V gives ≤ ¼). */
const V_TEST = 0.45;
/**
 * Zero points closer than this are one isolated point: at a zero where Φ loses rank to first
 * order along one direction only, f grows quadratically along it and refinements from
 * different starts stop up to ~1e-6 apart while f is already below the tolerance.
 */
const ISOLATED_MERGE = 1e-5;
/**
 * A zero point within this of a recognised line (|p·θ1 + q·θ2 − c| mod 1) belongs to it: where
 * f grows only quadratically across a line, refinements stop up to ~√tol away from it.
 */
const LINE_MEMBER = 1e-4;
/** How many of the smallest singular values the map keeps per grid point. */
export const KEPT_SMALLEST = 3;

export interface PhaseMapOptions {
  /** Points per axis (grid×grid phases θ = (i1, i2)/grid), 2 … MAX_GRID. */
  grid: number;
  /** Relative rank tolerance (× the largest σ_max over the grid); default 1e-9. */
  tolerance?: number;
  onProgress?: (p: Progress) => void;
  signal?: AbortSignal;
}

export interface ZeroPoint {
  theta: [number, number];
  /** f = σ_{k0+1} there (the detection value; ≤ tolerance.absolute). */
  sigma: number;
  /** dim ker Φ there. */
  kernel: number;
  /** How it was found: on a grid point, refined along a row or a column, or refined in the plane. */
  found: 'grid' | 'row' | 'column' | 'plane';
}

/** The closed line p·θ1 + q·θ2 ≡ c (mod 1), gcd(p, q) = 1, p > 0 or (p, q) = (0, 1). */
export interface ZeroLine {
  p: number;
  q: number;
  /** In [0, 1). */
  c: number;
  /** Zero points found on it. */
  support: number;
  /** The smallest dim ker Φ seen at the check points along the line. */
  kernel: number;
}

export interface ZeroSet {
  /** Every zero point found (deduplicated). */
  points: ZeroPoint[];
  lines: ZeroLine[];
  /** Zero points on no recognised line, merged within 1e-5. */
  isolated: ZeroPoint[];
}

export interface PhaseMap {
  grid: number;
  /** Columns of Φ (2 per joint) and rows (bars). */
  dof: number;
  bars: number;
  tolerance: { relative: number; absolute: number };
  /** Largest σ_max over the grid: the scale of the tolerance. */
  sigmaMax: number;
  /** smallest[k][i2·grid + i1] = σ_{k+1}, ascending in k; min(3, dof) arrays. */
  smallest: Float64Array[];
  /** σ_max at each grid point. */
  largest: Float64Array;
  /** dim ker Φ at each grid point. */
  kernel: Int32Array;
  /** dim ker Φ at a generic phase (≥ 1 everywhere means a flat band). */
  genericKernel: number;
  /** Range of σ_1 over the grid. */
  sigmaMin: { min: number; max: number };
  /**
   * The detection function σ_{index} (index = genericKernel + 1, 1-based ascending) and its
   * range over the grid; null when Φ has no rank to lose (no bars).
   */
  detection: { index: number; min: number; max: number } | null;
  zeroSet: ZeroSet;
}

// ---------------------------------------------------------------------------------------------
// Fast evaluation of the symbol's singular values

/**
 * Singular values and triplets of Φ(θ), assembled densely by SymbolAssembler (src/spectrum/symbol.ts),
 * in units of its lengthScale (bar vectors divided by it).
 */
export class SymbolEvaluator {
  readonly rows: number;
  readonly cols: number;
  /** The unit of the σ values returned here (the assembler's lengthScale). */
  readonly lengthScale: number;
  private readonly phi: SymbolAssembler;

  constructor(fw: Framework) {
    this.phi = new SymbolAssembler(fw);
    this.rows = this.phi.rows;
    this.cols = this.phi.cols;
    this.lengthScale = this.phi.lengthScale;
  }

  /** The `cols` singular values of Φ(θ) as a map on C^cols, ASCENDING (structural zeros first). */
  sigma(theta1: number, theta2: number): Float64Array {
    const m = this.rows;
    const n = this.cols;
    const { re, im } = this.phi.assemble(theta1, theta2);
    const s = jacobiSingularValues(re, im, m, n);
    const out = new Float64Array(n);
    // s is descending with min(m, n) entries; the n − min(m, n) structural zeros come first
    for (let t = 0; t < s.length; t++) out[n - 1 - t] = s[t];
    return out;
  }

  /**
   * The singular triplet (σ, u, v) of Φ(θ) at ascending position `index` (as in sigma()), and
   * the derivatives a_k = uᴴ (∂Φ/∂θ_k) v, so that uᴴ Φ(θ + δ) v ≈ σ + a_1 δ1 + a_2 δ2.
   * Null when `index` is a structural zero (no triplet).
   */
  triplet(theta1: number, theta2: number, index: number): { sigma: number; a1: [number, number]; a2: [number, number] } | null {
    const m = this.rows;
    const n = this.cols;
    const j = n - 1 - index; // descending position
    if (j < 0 || j >= Math.min(m, n)) return null;
    const phi = this.phi;
    const { re, im } = phi.assemble(theta1, theta2);
    const svd = jacobiSvd(re, im, m, n);
    const sigma = svd.sigma[j];
    const a1: [number, number] = [0, 0];
    const a2: [number, number] = [0, 0];
    for (let r = 0; r < m; r++) {
      const b = phi.to[r];
      // w = conj(u_r) · z_r · (p · v_b), then ∂_k contributes 2πi·s_k·w
      const ur = svd.uRe[j * m + r];
      const ui = -svd.uIm[j * m + r];
      const pvr = phi.px[r] * svd.vRe[j * n + 2 * b] + phi.py[r] * svd.vRe[j * n + 2 * b + 1];
      const pvi = phi.px[r] * svd.vIm[j * n + 2 * b] + phi.py[r] * svd.vIm[j * n + 2 * b + 1];
      const zr = phi.zr[r];
      const zi = phi.zi[r];
      const tr = zr * pvr - zi * pvi;
      const ti = zr * pvi + zi * pvr;
      const wr = ur * tr - ui * ti;
      const wi = ur * ti + ui * tr;
      // 2πi·w = 2π(−wi, wr)
      const k1 = 2 * Math.PI * phi.s1[r];
      const k2 = 2 * Math.PI * phi.s2[r];
      a1[0] -= k1 * wi;
      a1[1] += k1 * wr;
      a2[0] -= k2 * wi;
      a2[1] += k2 * wr;
    }
    return { sigma, a1, a2 };
  }
}

/** The 2·joints singular values of Φ at one phase, ascending (structural zeros included), in the framework's units. */
export function symbolSingularValues(fw: Framework, theta: [number, number]): Float64Array {
  const ev = new SymbolEvaluator(fw);
  return ev.sigma(theta[0], theta[1]).map((v) => v * ev.lengthScale);
}

/** The map's σ figures multiplied by L (the evaluator's lengthScale, a power of two: exact). */
function inLengthUnits(m: PhaseMap, L: number): PhaseMap {
  if (L === 1) return m;
  const times = (a: Float64Array) => a.map((v) => v * L);
  const point = (z: ZeroPoint): ZeroPoint => ({ ...z, sigma: z.sigma * L });
  return {
    ...m,
    tolerance: { relative: m.tolerance.relative, absolute: m.tolerance.absolute * L },
    sigmaMax: m.sigmaMax * L,
    smallest: m.smallest.map(times),
    largest: times(m.largest),
    sigmaMin: { min: m.sigmaMin.min * L, max: m.sigmaMin.max * L },
    detection: m.detection && { ...m.detection, min: m.detection.min * L, max: m.detection.max * L },
    zeroSet: { points: m.zeroSet.points.map(point), lines: m.zeroSet.lines, isolated: m.zeroSet.isolated.map(point) },
  };
}

// ---------------------------------------------------------------------------------------------
// One-dimensional and planar minimisation

/**
 * Minimum of f on [a, b] by Brent's method (golden-section steps, parabolic steps when they
 * behave), stopping when the bracket is within `tol` (absolute) of the best point.
 */
function brentMinimum(f: (x: number) => number, a: number, b: number, tol: number, maxIter = 100): { x: number; fx: number } {
  const GOLD = (3 - Math.sqrt(5)) / 2;
  let x = a + GOLD * (b - a);
  let w = x;
  let v = x;
  let fx = f(x);
  let fw = fx;
  let fv = fx;
  let d = 0;
  let e = 0;
  for (let it = 0; it < maxIter && fx > 0; it++) {
    const mid = 0.5 * (a + b);
    const tol2 = 2 * tol;
    if (Math.abs(x - mid) <= tol2 - 0.5 * (b - a)) break;
    let golden = true;
    if (Math.abs(e) > tol) {
      const r = (x - w) * (fx - fv);
      let q = (x - v) * (fx - fw);
      let p = (x - v) * q - (x - w) * r;
      q = 2 * (q - r);
      if (q > 0) p = -p;
      else q = -q;
      if (Math.abs(p) < Math.abs(0.5 * q * e) && p > q * (a - x) && p < q * (b - x)) {
        e = d;
        d = p / q;
        const u = x + d;
        if (u - a < tol2 || b - u < tol2) d = x < mid ? tol : -tol;
        golden = false;
      }
    }
    if (golden) {
      e = (x < mid ? b : a) - x;
      d = GOLD * e;
    }
    const u = Math.abs(d) >= tol ? x + d : x + (d > 0 ? tol : -tol);
    const fu = f(u);
    if (fu <= fx) {
      if (u < x) b = x;
      else a = x;
      v = w;
      fv = fw;
      w = x;
      fw = fx;
      x = u;
      fx = fu;
    } else {
      if (u < x) a = u;
      else b = u;
      if (fu <= fw || w === x) {
        v = w;
        fv = fw;
        w = u;
        fw = fu;
      } else if (fu <= fv || v === x || v === w) {
        v = u;
        fv = fu;
      }
    }
  }
  return { x, fx };
}

/**
 * A zero of σ(θ) = the singular value at ascending position `index`, near x0, by damped
 * Gauss–Newton (Levenberg–Marquardt) on the smooth complex function h(θ') = uᴴ Φ(θ') v built
 * from the singular triplet (σ, u, v) at the current θ: h = σ there and ∂h/∂θ_k = a_k, so each
 * step solves σ + a_1 δ1 + a_2 δ2 = 0 (real and imaginary parts) in the least-squares sense.
 * Quadratic convergence at a conical zero; still convergent (linearly) where Φ loses rank to
 * first order along one direction only. Steps are capped at maxStep; stops when σ ≤ target or
 * when no damped step lowers σ any more (a nonzero minimum).
 */
export function newtonZero(
  ev: SymbolEvaluator,
  index: number,
  x0: [number, number],
  maxStep: number,
  target: number,
  signal?: AbortSignal,
): { x: [number, number]; sigma: number } {
  let x = x0[0];
  let y = x0[1];
  const first = ev.triplet(frac(x), frac(y), index);
  if (!first) return { x: [x, y], sigma: 0 };
  let t: { sigma: number; a1: [number, number]; a2: [number, number] } = first;
  let lambda = 0;
  for (let it = 0; it < 100 && t.sigma > target; it++) {
    throwIfAborted(signal);
    const [a1r, a1i] = t.a1;
    const [a2r, a2i] = t.a2;
    const s = t.sigma;
    // normal equations of J δ = −(σ, 0), J = [[Re a1, Re a2], [Im a1, Im a2]]
    const h11 = a1r * a1r + a1i * a1i;
    const h22 = a2r * a2r + a2i * a2i;
    const h12 = a1r * a2r + a1i * a2i;
    const g1 = a1r * s;
    const g2 = a2r * s;
    const tiny = 1e-14 * (h11 + h22);
    const d11 = h11 + lambda * (h11 + tiny) + tiny;
    const d22 = h22 + lambda * (h22 + tiny) + tiny;
    const det = d11 * d22 - h12 * h12;
    if (!(det > 0)) {
      lambda = lambda ? lambda * 8 : 1e-3;
      if (lambda > 1e12) break;
      continue;
    }
    let dx = -(d22 * g1 - h12 * g2) / det;
    let dy = -(d11 * g2 - h12 * g1) / det;
    const len = Math.hypot(dx, dy);
    if (!(len > 0)) break;
    if (len > maxStep) {
      dx *= maxStep / len;
      dy *= maxStep / len;
    }
    const trial = ev.triplet(frac(x + dx), frac(y + dy), index)!;
    if (trial.sigma < s) {
      x += dx;
      y += dy;
      t = trial;
      lambda = lambda < 1e-9 ? 0 : lambda / 4;
    } else {
      lambda = lambda ? lambda * 8 : 1e-3;
      if (lambda > 1e12) break;
    }
  }
  return { x: [frac(x), frac(y)], sigma: t.sigma };
}

/**
 * Local minimum of g near x0 in the plane, derivative-free: Newton steps on the quadratic
 * model of g fitted to a 3×3 stencil of spacing h (central differences), with the stencil shrinking as steps shrink.
 * g = f² is locally quadratic at an isolated zero, so the model steps land on it. Gives up once
 * the model's minimum lies inside the stencil with a value above 4·floor (floor = tol²) and
 * above 0.9 times the current value, or when a dozen rounds have not lowered g a hundredfold.
 */
function stencilMinimum(g: (x: number, y: number) => number, x0: [number, number], h0: number, floor: number, signal?: AbortSignal): { x: [number, number]; gx: number } {
  let x = x0[0];
  let y = x0[1];
  let gx = g(x, y);
  let h = h0;
  const g0 = gx;
  for (let it = 0; it < 80 && gx > 0 && h > 1e-14; it++) {
    throwIfAborted(signal);
    // little progress after a dozen rounds and still far above zero: not heading for a zero
    if (it === 12 && gx > 0.01 * g0 && gx > 4 * floor) break;
    const gpx = g(x + h, y);
    const gmx = g(x - h, y);
    const gpy = g(x, y + h);
    const gmy = g(x, y - h);
    const gpp = g(x + h, y + h);
    const gpm = g(x + h, y - h);
    const gmp = g(x - h, y + h);
    const gmm = g(x - h, y - h);
    const g1 = (gpx - gmx) / (2 * h);
    const g2 = (gpy - gmy) / (2 * h);
    const H11 = (gpx - 2 * gx + gmx) / (h * h);
    const H22 = (gpy - 2 * gx + gmy) / (h * h);
    const H12 = (gpp - gpm - gmp + gmm) / (4 * h * h);
    // best stencil point
    const stencil: [number, number, number][] = [
      [x + h, y, gpx], [x - h, y, gmx], [x, y + h, gpy], [x, y - h, gmy],
      [x + h, y + h, gpp], [x + h, y - h, gpm], [x - h, y + h, gmp], [x - h, y - h, gmm],
    ];
    let best: [number, number, number] = [x, y, gx];
    for (const s of stencil) if (s[2] < best[2]) best = s;
    const det = H11 * H22 - H12 * H12;
    let stepLen = 0;
    if (H11 > 0 && det > 0) {
      let dx = -(H22 * g1 - H12 * g2) / det;
      let dy = -(H11 * g2 - H12 * g1) / det;
      const len = Math.hypot(dx, dy);
      // The model's minimum lies inside the stencil, is clearly above zero and hardly below the
      // current value: a converged smooth nonzero minimum. (Near a zero the model predicts a
      // large drop: to 0 where g = f² is quadratic, to a third where it is quartic.)
      const predicted = gx + 0.5 * (g1 * dx + g2 * dy);
      if (len < h && predicted > 4 * floor && predicted > 0.9 * gx) return { x: [x, y], gx };
      const cap = 4 * h;
      if (len > cap) {
        dx *= cap / len;
        dy *= cap / len;
      }
      const gn = g(x + dx, y + dy);
      if (gn < best[2]) {
        best = [x + dx, y + dy, gn];
        stepLen = Math.min(len, cap);
      }
    }
    if (best[2] < gx) {
      x = best[0];
      y = best[1];
      gx = best[2];
      if (stepLen > 0) h = Math.max(Math.min(h, stepLen), 1e-14);
    } else h /= 4;
  }
  return { x: [x, y], gx };
}

// ---------------------------------------------------------------------------------------------

function checkOptions(opts: PhaseMapOptions): { grid: number; relative: number } {
  const problems = [];
  const g = opts.grid;
  if (!Number.isInteger(g) || g < 2 || g > MAX_GRID) {
    problems.push({ where: 'grid', what: `the grid must be a whole number of points per axis from 2 to ${MAX_GRID}, got ${g}`, fix: 'give e.g. 64 (64×64 phases)' });
  }
  const t = opts.tolerance ?? DEFAULT_RELATIVE_TOLERANCE;
  if (!(typeof t === 'number' && t >= 0 && t < 1)) {
    problems.push({ where: 'tolerance', what: `the relative tolerance must lie in [0, 1), got ${t}`, fix: 'give e.g. 1e-9' });
  }
  if (problems.length) throw new InputError('The phase map cannot be computed with these settings:', problems);
  return { grid: g, relative: t };
}

/** Reduce to [0, 1). */
function frac(t: number): number {
  const r = t - Math.floor(t);
  return r >= 1 ? 0 : r;
}

/** Distance on the circle R/Z. */
function circ(a: number, b: number): number {
  const d = frac(a - b);
  return Math.min(d, 1 - d);
}

function gcd(a: number, b: number): number {
  a = Math.abs(a);
  b = Math.abs(b);
  while (b) [a, b] = [b, a % b];
  return a;
}

/** Directions (p, q) with |p|, |q| ≤ 3, gcd 1, in canonical sign (p > 0, or p = 0 and q = 1). */
const DIRECTIONS: [number, number][] = (() => {
  const out: [number, number][] = [];
  for (let p = 0; p <= 3; p++)
    for (let q = -3; q <= 3; q++) {
      if (gcd(p, q) !== 1) continue;
      if (p === 0 && q !== 1) continue;
      out.push([p, q]);
    }
  // simplest first
  return out.sort((u, v) => Math.abs(u[0]) + Math.abs(u[1]) - Math.abs(v[0]) - Math.abs(v[1]) || v[0] - u[0] || v[1] - u[1]);
})();

/** Off-grid phases used to find the generic kernel (any fixed irrational-looking values). */
const GENERIC_PHASES: [number, number][] = [
  [0.1234567, 0.3456789],
  [0.7390851, 0.2718281],
  [0.4142135, 0.8660254],
  [0.5772156, 0.6931471],
];

export function phaseMap(framework: Framework, opts: PhaseMapOptions): PhaseMap {
  const { grid: g, relative } = checkOptions(opts);
  const fw = checkFramework(framework);
  const signal = opts.signal;
  const progress = (fraction: number, stage: string) => opts.onProgress?.({ fraction, stage });
  const ev = new SymbolEvaluator(fw);
  const n = ev.cols;
  const kept = Math.min(KEPT_SMALLEST, n);
  const P = g * g;
  const smallest = Array.from({ length: kept }, () => new Float64Array(P));
  const largest = new Float64Array(P);
  // every grid point's n singular values, ascending, in one flat array (point i at i·n)
  const all = new Float64Array(P * n);

  // 1. the grid
  for (let i2 = 0; i2 < g; i2++) {
    throwIfAborted(signal);
    for (let i1 = 0; i1 < g; i1++) {
      const s = ev.sigma(i1 / g, i2 / g);
      const idx = i2 * g + i1;
      all.set(s, idx * n);
      for (let k = 0; k < kept; k++) smallest[k][idx] = s[k];
      largest[idx] = n ? s[n - 1] : 0;
    }
    progress((0.6 * (i2 + 1)) / g, 'phase grid');
  }
  let sigmaMax = 0;
  for (let i = 0; i < P; i++) sigmaMax = Math.max(sigmaMax, largest[i]);
  const absolute = relative * sigmaMax;
  const kernelOf = (s: Float64Array) => {
    let k = 0;
    while (k < s.length && s[k] <= absolute) k++;
    return k;
  };
  const kernel = new Int32Array(P);
  for (let i = 0; i < P; i++) kernel[i] = kernelOf(all.subarray(i * n, (i + 1) * n));

  // 2. generic kernel and the detection function
  let k0 = n;
  for (let i = 0; i < P; i++) k0 = Math.min(k0, kernel[i]);
  for (const [t1, t2] of GENERIC_PHASES) k0 = Math.min(k0, kernelOf(ev.sigma(t1, t2)));
  let s1min = Infinity;
  let s1max = -Infinity;
  if (kept > 0) for (let i = 0; i < P; i++) {
    s1min = Math.min(s1min, smallest[0][i]);
    s1max = Math.max(s1max, smallest[0][i]);
  }
  const sigmaMin = kept > 0 ? { min: s1min, max: s1max } : { min: 0, max: 0 };

  const base = { grid: g, dof: n, bars: ev.rows, tolerance: { relative, absolute }, sigmaMax, smallest, largest, kernel, genericKernel: k0, sigmaMin };
  if (k0 >= n) {
    progress(1, 'done');
    return inLengthUnits({ ...base, detection: null, zeroSet: { points: [], lines: [], isolated: [] } }, ev.lengthScale);
  }
  const F = new Float64Array(P);
  let dmin = Infinity;
  let dmax = -Infinity;
  for (let i = 0; i < P; i++) {
    F[i] = all[i * n + k0];
    dmin = Math.min(dmin, F[i]);
    dmax = Math.max(dmax, F[i]);
  }
  const f = (t1: number, t2: number) => ev.sigma(frac(t1), frac(t2))[k0];
  const f2 = (t1: number, t2: number) => {
    const v = f(t1, t2);
    return v * v;
  };

  // 3. zero points
  const found: ZeroPoint[] = [];
  const addPoint = (t1: number, t2: number, how: ZeroPoint['found']) => {
    const s = ev.sigma(frac(t1), frac(t2));
    found.push({ theta: [frac(t1), frac(t2)], sigma: s[k0], kernel: kernelOf(s), found: how });
  };
  for (let i = 0; i < P; i++) if (F[i] <= absolute) addPoint((i % g) / g, Math.floor(i / g) / g, 'grid');
  const at = (i1: number, i2: number) => F[(((i2 % g) + g) % g) * g + (((i1 % g) + g) % g)];
  const lineTol = 1e-15;
  // Across a zero crossing f ≈ s·|x − x0| with s of order σ_max, so within 1e-9 of a crossing
  // f is far below this; a coarse minimum above it is not a zero.
  const nearZero = Math.max(1e3 * absolute, 1e-6 * sigmaMax);
  // rows (θ2 fixed) and columns (θ1 fixed)
  for (let axis = 0; axis < 2; axis++) {
    for (let line = 0; line < g; line++) {
      throwIfAborted(signal);
      for (let k = 0; k < g; k++) {
        const v = axis === 0 ? at(k, line) : at(line, k);
        if (v <= absolute) continue;
        const prev = axis === 0 ? at(k - 1, line) : at(line, k - 1);
        const next = axis === 0 ? at(k + 1, line) : at(line, k + 1);
        if (!(v < prev && v <= next)) continue;
        // Across a zero crossing f is V-shaped, f ≈ s·|x − x0| with |x0 − x| ≤ h/2, so
        // v ≤ (prev + next)/4; a minimum far above that is a smooth nonzero one (cut at V_TEST).
        if (v > V_TEST * (prev + next)) continue;
        const fixed = line / g;
        const along = (x: number) => (axis === 0 ? f2(x, fixed) : f2(fixed, x));
        // coarse pass (a nonzero minimum stops here), then a fine pass around a near-zero
        let r = brentMinimum(along, (k - 1) / g, (k + 1) / g, 1e-9);
        if (Math.sqrt(r.fx) > nearZero) continue;
        const fine = brentMinimum(along, r.x - 2e-9, r.x + 2e-9, lineTol);
        if (fine.fx < r.fx) r = fine;
        if (Math.sqrt(r.fx) <= absolute) {
          if (axis === 0) addPoint(r.x, fixed, 'row');
          else addPoint(fixed, r.x, 'column');
        }
      }
      progress(0.6 + (0.2 * (axis * g + line + 1)) / (2 * g), axis === 0 ? 'refining along rows' : 'refining along columns');
    }
  }
  // planar refinement of coarse local minima with no zero point nearby
  const near = (t1: number, t2: number, r: number) => found.some((z) => circ(z.theta[0], t1) <= r && circ(z.theta[1], t2) <= r);
  for (let i2 = 0; i2 < g; i2++) {
    throwIfAborted(signal);
    for (let i1 = 0; i1 < g; i1++) {
      const v = at(i1, i2);
      if (v <= absolute) continue;
      let isMin = true;
      for (let d2 = -1; d2 <= 1 && isMin; d2++)
        for (let d1 = -1; d1 <= 1; d1++) {
          if (d1 === 0 && d2 === 0) continue;
          const w = at(i1 + d1, i2 + d2);
          // strict on one half of the neighbourhood, so a plateau yields one minimum
          if (w < v || (w === v && (d2 > 0 || (d2 === 0 && d1 > 0)))) {
            isMin = false;
            break;
          }
        }
      if (!isMin || near(i1 / g, i2 / g, 1.5 / g)) continue;
      const target = 1e-15 * sigmaMax;
      let r = newtonZero(ev, k0, [i1 / g, i2 / g], 1 / g, target, signal);
      if (r.sigma > absolute) {
        // Newton's linear model can miss zeros where Φ loses rank to first order along one
        // direction only, or where σ_{k0+1} couples to a generic kernel; the derivative-free
        // stencil descent on f² still reaches them.
        const q = stencilMinimum(f2, [i1 / g, i2 / g], 0.5 / g, absolute * absolute, signal);
        if (Math.sqrt(q.gx) <= 1e3 * absolute) {
          const polished = newtonZero(ev, k0, q.x, 0.1 / g, target, signal);
          r = polished.sigma < Math.sqrt(q.gx) ? polished : { x: [frac(q.x[0]), frac(q.x[1])], sigma: Math.sqrt(q.gx) };
        }
      }
      if (r.sigma <= absolute) addPoint(r.x[0], r.x[1], 'plane');
    }
  }
  progress(0.85, 'recognising lines');
  const points = dedupe(found, 1e-9);

  // 4. lines
  const minSupport = Math.max(3, Math.ceil(g / 2));
  const lines: ZeroLine[] = [];
  const onLine = (z: ZeroPoint, L: { p: number; q: number; c: number }, r: number) => circ(L.p * z.theta[0] + L.q * z.theta[1], L.c) <= r;
  for (const [p, q] of DIRECTIONS) {
    throwIfAborted(signal);
    const cs = points.map((z) => frac(p * z.theta[0] + q * z.theta[1])).sort((a, b) => a - b);
    for (const cluster of circularClusters(cs, 1e-7)) {
      if (cluster.length < minSupport) continue;
      let c = frac(cluster[0] + cluster.reduce((s, x) => s + (frac(x - cluster[0] + 0.5) - 0.5), 0) / cluster.length);
      for (let d = 1; d <= 12; d++) {
        const k = Math.round(c * d);
        if (Math.abs(c - k / d) < 1e-9) {
          c = frac(k / d);
          break;
        }
      }
      if (lines.some((L) => L.p === p && L.q === q && circ(L.c, c) <= 1e-7)) continue;
      const check = verifyLine(p, q, c, f2, ev, kernelOf, k0, absolute);
      if (check === null) continue;
      const L = { p, q, c, support: 0, kernel: check };
      L.support = points.filter((z) => onLine(z, L, LINE_MEMBER)).length;
      lines.push(L);
    }
  }
  const rest = points.filter((z) => !lines.some((L) => onLine(z, L, LINE_MEMBER)));
  const isolated = dedupe(rest, ISOLATED_MERGE);
  progress(1, 'done');
  return inLengthUnits({ ...base, detection: { index: k0 + 1, min: dmin, max: dmax }, zeroSet: { points, lines, isolated } }, ev.lengthScale);
}

/**
 * Check a candidate line at 8 points spread along it: after a refinement of at most 1e-7
 * across the line, f must be within tol at each. Returns the smallest kernel seen, or null.
 */
function verifyLine(
  p: number,
  q: number,
  c: number,
  f2: (a: number, b: number) => number,
  ev: SymbolEvaluator,
  kernelOf: (s: Float64Array) => number,
  k0: number,
  absolute: number,
): number | null {
  const K = 8;
  const base: [number, number] = p !== 0 ? [c / p, 0] : [0, c / q];
  const nn = p * p + q * q;
  let kmin = Infinity;
  for (let k = 0; k < K; k++) {
    const t = (k + 0.3819660113) / K;
    const x = base[0] - q * t;
    const y = base[1] + p * t;
    const g = (d: number) => f2(x + (p * d) / nn, y + (q * d) / nn);
    const r = brentMinimum(g, -1e-7, 1e-7, 1e-16);
    if (!(Math.sqrt(r.fx) <= absolute)) return null;
    const s = ev.sigma(frac(x + (p * r.x) / nn), frac(y + (q * r.x) / nn));
    kmin = Math.min(kmin, kernelOf(s));
  }
  return kmin > k0 ? kmin : null;
}

/** Clusters of sorted values on the circle R/Z whose neighbours are within eps. */
function circularClusters(sorted: number[], eps: number): number[][] {
  if (sorted.length === 0) return [];
  const clusters: number[][] = [];
  let cur: number[] = [sorted[0]];
  for (let i = 1; i < sorted.length; i++) {
    if (sorted[i] - sorted[i - 1] <= eps) cur.push(sorted[i]);
    else {
      clusters.push(cur);
      cur = [sorted[i]];
    }
  }
  clusters.push(cur);
  // join the last and first across 1 ≡ 0
  if (clusters.length > 1 && sorted[0] + 1 - sorted[sorted.length - 1] <= eps) {
    const last = clusters.pop()!;
    clusters[0] = [...last, ...clusters[0]];
  }
  return clusters;
}

/** Merge points within r on the torus, keeping the one with the smallest detection value. */
function dedupe(points: ZeroPoint[], r: number): ZeroPoint[] {
  const cell = Math.max(r, 1e-12) * 4;
  const bins = new Map<string, ZeroPoint[]>();
  const keyOf = (a: number, b: number) => `${a}:${b}`;
  const nb = Math.round(1 / cell);
  const out: ZeroPoint[] = [];
  const sorted = [...points].sort((a, b) => a.sigma - b.sigma);
  for (const z of sorted) {
    const b1 = Math.floor(z.theta[0] / cell);
    const b2 = Math.floor(z.theta[1] / cell);
    let dup = false;
    for (let d1 = -1; d1 <= 1 && !dup; d1++)
      for (let d2 = -1; d2 <= 1 && !dup; d2++) {
        const list = bins.get(keyOf((((b1 + d1) % nb) + nb) % nb, (((b2 + d2) % nb) + nb) % nb));
        if (list?.some((w) => circ(w.theta[0], z.theta[0]) <= r && circ(w.theta[1], z.theta[1]) <= r)) dup = true;
      }
    if (dup) continue;
    const key = keyOf(((b1 % nb) + nb) % nb, ((b2 % nb) + nb) % nb);
    const list = bins.get(key);
    if (list) list.push(z);
    else bins.set(key, [z]);
    out.push(z);
  }
  // by θ2 then θ1, treating values within 1e-6 as equal so refined points order stably
  const key = (t: number) => Math.round(t * 1e6);
  return out.sort((a, b) => key(a.theta[1]) - key(b.theta[1]) || key(a.theta[0]) - key(b.theta[0]));
}
