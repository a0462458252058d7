/**
 * Finite-size sweeps: classify the flexes of one framework at a series of supercell sizes and
 * fit how each class count grows with the linear size.
 *
 * The linear size N is the side that varies: N1 when every size has the same N2, N2 when
 * every size has the same N1, and √(N1·N2) otherwise (when both sides scale together, a fixed
 * aspect ratio, the exponent against √(N1·N2) equals the exponent against N1). The growth
 * exponent of a count c is the slope of the least-squares line through (ln N, ln c) over the
 * sizes where c > 0, with its R²; it needs at least two distinct sizes. The primary figure is the
 * polynomial fit c ≈ a2·N² + a1·N + a0 (src/flex/growth-fit.ts), which separates area, edge and
 * corner terms; the exponent is kept as a secondary figure.
 */
import { InputError } from '../errors.js';
import type { Framework } from '../framework/types.js';
import { checkFramework } from '../framework/validate.js';
import { formatBoundary, parseBoundary, type Boundary } from '../supercell/boundary.js';
import { checkCells } from '../supercell/supercell.js';
import { analyse } from '../api/run.js';
import { FLEX_CLASSES, type Classification, type FlexClass } from './classes.js';
import { EXACT_TOLERANCE, MAX_DENOMINATOR, polynomialFit, type PolynomialFit } from './growth-fit.js';
import { throwIfAborted, type SolverChoice } from './solver.js';
import { symbolPrediction, type SymbolPrediction } from './sweep-prediction.js';

export interface SweepOptions {
  sizes: [number, number][];
  /** A Boundary or its text form (the `--bc` grammar). */
  boundary: Boundary | string;
  /** Relative rank tolerance (× σ_max); default 1e-9. */
  tolerance?: number;
  window?: number;
  strip?: number;
  solver?: SolverChoice;
  memoryLimit?: number;
  /** Called before each size (fraction of sizes done) and once at the end. */
  onProgress?: (p: { fraction: number; stage: string; size?: [number, number] }) => void;
  /** Called with each finished row, in order (lets a shell print rows as they come). */
  onRow?: (row: SweepRow) => void;
  signal?: AbortSignal;
}

export interface SweepRow {
  N1: number;
  N2: number;
  joints: number;
  bars: number;
  flexes: number;
  trivial: number;
  selfStresses: number;
  local: number;
  line: number;
  decaying: number;
  bulk: number;
  /** Wall-clock seconds for this size (solve and classification). */
  seconds: number;
  /** Warnings of the classification at this size (an ambiguous rank, ...). */
  warnings: string[];
}

export type SweepQuantity = FlexClass | 'flexes';
export const SWEEP_QUANTITIES: readonly SweepQuantity[] = ['flexes', ...FLEX_CLASSES];

export interface GrowthFit {
  /** Slope of ln(count) against ln(N), or null with fewer than two usable sizes. */
  exponent: number | null;
  /** R² of that fit (1 for exactly two sizes), or null. */
  r2: number | null;
  /** Number of sizes used (those with count > 0). */
  points: number;
}

export interface SweepResult {
  boundary: string;
  rows: SweepRow[];
  fits: Record<SweepQuantity, GrowthFit>;
  /** Least-squares a2·N² + a1·N + a0 of each count (all sizes), with exact fractions where they fit. */
  polynomialFits: Record<SweepQuantity, PolynomialFit>;
  /** Which linear size N the fits use: 'N1', 'N2' or '√(N1·N2)'. */
  linearSize: 'N1' | 'N2' | '√(N1·N2)';
  /** What the symbol predicts for a2 (flat bands) and a1 (edge modes), beside the fits. */
  prediction: SymbolPrediction;
  /** What N means and the classification thresholds of the last size. */
  thresholds: Classification['thresholds'];
}

/** Least-squares slope of ln y against ln x with its R², over the points with y > 0. */
export function growthFit(xs: number[], ys: number[]): GrowthFit {
  const pts = xs.map((x, i) => [x, ys[i]] as const).filter(([x, y]) => y > 0 && x > 0);
  const lx = pts.map(([x]) => Math.log(x));
  const ly = pts.map(([, y]) => Math.log(y));
  const distinct = new Set(lx).size;
  if (distinct < 2) return { exponent: null, r2: null, points: pts.length };
  const n = pts.length;
  const mx = lx.reduce((a, b) => a + b, 0) / n;
  const my = ly.reduce((a, b) => a + b, 0) / n;
  let sxx = 0;
  let sxy = 0;
  let syy = 0;
  for (let i = 0; i < n; i++) {
    sxx += (lx[i] - mx) ** 2;
    sxy += (lx[i] - mx) * (ly[i] - my);
    syy += (ly[i] - my) ** 2;
  }
  const exponent = sxy / sxx;
  const r2 = syy === 0 ? 1 : (sxy * sxy) / (sxx * syy);
  return { exponent, r2, points: n };
}

/** The linear size of each row: the side that varies, or √(N1·N2) when both do. */
export function linearSizes(rows: { N1: number; N2: number }[]): { sizes: number[]; rule: SweepResult['linearSize'] } {
  const sameN2 = rows.every((r) => r.N2 === rows[0].N2);
  const sameN1 = rows.every((r) => r.N1 === rows[0].N1);
  if (sameN2 && !sameN1) return { sizes: rows.map((r) => r.N1), rule: 'N1' };
  if (sameN1 && !sameN2) return { sizes: rows.map((r) => r.N2), rule: 'N2' };
  return { sizes: rows.map((r) => Math.sqrt(r.N1 * r.N2)), rule: '√(N1·N2)' };
}

/** One size and boundary: the analysis and classification of a sweep row, timed. */
function sweepRow(framework: Framework, cells: [number, number], boundary: Boundary, options: Omit<SweepOptions, 'sizes' | 'onRow' | 'boundary'>): { row: SweepRow; classification: Classification } {
  const t0 = performance.now();
  // no size check here, as before: the CLI checks every size first, in its own wording
  const { analysis, classification: c } = analyse({
    framework,
    cells,
    boundary,
    tolerance: options.tolerance,
    solver: options.solver,
    memoryLimit: options.memoryLimit,
    signal: options.signal,
    classify: { window: options.window, strip: options.strip },
    sizeCheck: false,
  });
  const row: SweepRow = {
    N1: cells[0],
    N2: cells[1],
    joints: analysis.joints,
    bars: analysis.bars,
    flexes: analysis.flexes,
    trivial: analysis.trivialFlexes,
    selfStresses: analysis.selfStresses,
    ...c.counts,
    seconds: (performance.now() - t0) / 1000,
    warnings: c.warnings ?? [],
  };
  return { row, classification: c };
}

export function sweep(fw: Framework, options: SweepOptions): SweepResult {
  const framework = checkFramework(fw);
  const boundary = typeof options.boundary === 'string' ? parseBoundary(options.boundary) : options.boundary;
  if (!Array.isArray(options.sizes) || options.sizes.length === 0) {
    throw new InputError('The sweep cannot run:', [{ where: 'sizes', what: 'no supercell sizes were given', fix: 'give at least one size N1×N2, e.g. --cells 4..12' }]);
  }
  options.sizes.forEach((s, i) => checkCells(s, `sizes[${i}]`));
  const rows: SweepRow[] = [];
  let last: Classification | undefined;
  options.sizes.forEach((size, i) => {
    throwIfAborted(options.signal);
    options.onProgress?.({ fraction: i / options.sizes.length, stage: `${size[0]}×${size[1]}`, size });
    const { row, classification } = sweepRow(framework, size, boundary, options);
    last = classification;
    rows.push(row);
    options.onRow?.(row);
  });
  options.onProgress?.({ fraction: 1, stage: 'done' });
  const { sizes: N, rule } = linearSizes(rows);
  const fits = Object.fromEntries(SWEEP_QUANTITIES.map((q) => [q, growthFit(N, rows.map((r) => r[q]))])) as Record<SweepQuantity, GrowthFit>;
  const polynomialFits = Object.fromEntries(SWEEP_QUANTITIES.map((q) => [q, polynomialFit(N, rows.map((r) => r[q]))])) as Record<SweepQuantity, PolynomialFit>;
  return {
    boundary: typeof options.boundary === 'string' ? options.boundary : JSON.stringify(options.boundary),
    rows,
    fits,
    polynomialFits,
    linearSize: rule,
    prediction: symbolPrediction(framework, boundary, rows, N),
    thresholds: {
      ...(last?.thresholds ?? {}),
      linearSize: rule,
      exponent: 'least-squares slope of ln(count) against ln(N) over the sizes with count > 0',
      polynomialFit: `least squares of count against a2·N² + a1·N + a0 over all sizes (at least 3 distinct N); exact when fractions with denominator ≤ ${MAX_DENOMINATOR} reproduce every count to ${EXACT_TOLERANCE}`,
    },
  };
}

export interface TwistSweepOptions extends Omit<SweepOptions, 'sizes' | 'onRow'> {
  cells: [number, number];
  /** Twist phases θ in turns; each replaces the phase of every twisted axis of `boundary`. */
  phases: number[];
  onRow?: (row: TwistSweepRow) => void;
}

export interface TwistSweepRow extends SweepRow {
  theta: number;
  /** The boundary of this row in the --bc grammar. */
  boundary: string;
}

/**
 * Counts and classes at one supercell size over a series of twist phases: the boundary's twisted
 * axes all take the phase θ in turn (a periodic axis is a twisted one at θ = 0). At least one
 * axis must be twisted. No growth fits: the size does not change.
 */
export function twistSweep(fw: Framework, options: TwistSweepOptions): { rows: TwistSweepRow[]; thresholds: Classification['thresholds'] } {
  const framework = checkFramework(fw);
  const boundary = typeof options.boundary === 'string' ? parseBoundary(options.boundary) : options.boundary;
  checkCells(options.cells, 'cells');
  const problems = [];
  if (boundary.x.kind !== 'twist' && boundary.y.kind !== 'twist')
    problems.push({ where: 'boundary', what: 'no axis is twisted, so a twist phase has nothing to act on', fix: 'give a boundary with a periodic or twisted axis, e.g. periodic or x=periodic,y=free' });
  if (!Array.isArray(options.phases) || options.phases.length === 0) problems.push({ where: 'phases', what: 'no twist phase was given', fix: 'give phases in turns, e.g. 0..0.5:0.1' });
  else options.phases.forEach((t, i) => {
    if (!Number.isFinite(t)) problems.push({ where: `phases[${i}]`, what: `${String(t)} is not a finite number`, fix: 'give phases in turns, e.g. 0.25' });
  });
  if (problems.length) throw new InputError('The twist sweep cannot run:', problems);
  const rows: TwistSweepRow[] = [];
  let last: Classification | undefined;
  options.phases.forEach((theta, i) => {
    throwIfAborted(options.signal);
    options.onProgress?.({ fraction: i / options.phases.length, stage: `θ = ${theta}` });
    const b: Boundary = {
      x: boundary.x.kind === 'twist' ? { kind: 'twist', theta } : boundary.x,
      y: boundary.y.kind === 'twist' ? { kind: 'twist', theta } : boundary.y,
    };
    const { row: base, classification } = sweepRow(framework, options.cells, b, options);
    last = classification;
    const row: TwistSweepRow = { theta, boundary: formatBoundary(b), ...base };
    rows.push(row);
    options.onRow?.(row);
  });
  options.onProgress?.({ fraction: 1, stage: 'done' });
  return { rows, thresholds: { ...(last?.thresholds ?? {}), twist: 'every twisted axis of the boundary takes the phase θ of the row' } };
}
