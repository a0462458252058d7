/**
 * What a run will cost, estimated from the unit cell, the cells and the boundary before anything
 * is allocated, and the size checks made before a supercell is built.
 *
 * Memory (bytes, the peak of one count):
 *  - the supercell: 28 bytes a joint (positions, cells, sites) and ~320 bytes a bar row (its
 *    object and small arrays; 270–480 measured on kagome, square and triangular supercells),
 *    except on a Bloch count with both axes twisted and no bases, which lists neither;
 *  - R assembled (dense and sparse paths): ~280 bytes a row (the builder's growing buffers,
 *    then the CSR arrays);
 *  - dense: 3 × denseMemoryBytes (src/linalg/dense.ts; the measured peak is ~2.7 times it),
 *    with the bases when they are asked for;
 *  - sparse: the factor of the smaller Gram matrix (both with bases): the band, 8·dim·(b+1)
 *    (×2 complex), with the half-bandwidth b of halfBandwidths (≈ 2S·(N_short·|s_long|max +
 *    |s_short|max + 1) on the flex side, B·(…) on the self-stress side, B bars per cell; RCM
 *    often does up to 1.6× better), or from dim 8000 on the nested-dissection LDLᴴ when it needs
 *    under half the band's flops, 12 bytes per nonzero of L (nestedDissectionCost), plus R, Rᴴ
 *    and 24 work vectors;
 *  - Bloch, both axes twisted: N1·N2 tiny blocks; a count keeps ~8 bytes per singular value
 *    (kagome 1024×1024 peaked at 91 MB with Node itself), bases ~40 bytes per block entry
 *    (1.5 kB a 6×6 kagome block measured);
 *  - Bloch, one axis twisted: one strip block at a time (dense or banded, as bloch.ts picks).
 * Time (seconds, rough: within a factor 2–3 of runs measured on one core of this project's
 * development machine): dense 1e-8·m·n·min(m, n) (embedded sizes when complex); sparse
 * 1.5e-9·flops (×4 complex) + 2e-7·dim·b for the band or + 2.5e-5·dim for the nested-dissection
 * factor (ordering, σ_max and the supercell dominate there); a Bloch unit-cell block 1e-8·B·(2S)² + 1e-6 (periodic kagome 512×512: 0.75 s); a
 * banded strip block 1e-4·cols + 3e-3 plus its band work; building the supercell 3e-6 a bar row.
 * Bases (classify, export-modes, sweep) add the flex vectors (at least 2·joints − bars of
 * them, by Maxwell–Calladine) and roughly double the solver's time.
 */
import { TooLargeError } from '../errors.js';
import { resolveBars, type Framework } from '../framework/types.js';
import { DENSE_MEMORY_LIMIT, denseMemoryBytes, formatBytes } from '../linalg/dense.js';
import { SPARSE_STRIP_COLUMNS } from '../spectrum/bloch.js';
import type { AxisRule, Boundary } from '../supercell/boundary.js';
import type { SolverChoice, SolverName } from './solver.js';
import { SPARSE_MIN_DOF } from './solvers.js';
import { SPARSE_MIN_DIM } from './sparse/factors.js';

/** Estimated seconds a run may take before it is refused (unless large runs are allowed). */
export const TIME_LIMIT_SECONDS = 600;

/** Index arithmetic uses Int32 arrays: 2·joints (columns of R) and 4·bar rows (its entries) stay below this. */
export const INDEX_LIMIT = 2 ** 31;

/** The smallest relative rank tolerance accepted: below it the cut sits inside rounding noise (~ε·σ_max). */
export const MIN_RELATIVE_TOLERANCE = 1e-15;

const JOINT_BYTES = 28;
const BAR_ROW_BYTES = 320;
const MATRIX_ROW_BYTES = 280;
const WORK_VECTORS = 24;
/**
 * The sparse solver's reverse Cuthill–McKee ordering gives 0.65–1.0 of halfBandwidths' figure
 * (kagome, honeycomb, square, triangular measured): the check takes 0.7, and the solver's own
 * exact band check still refuses, before factorising, what does not fit.
 */
const RCM_GAIN = 0.7;
/** Peak of a dense run over denseMemoryBytes (SVD work copies, R): 2.7 measured at 817×864. */
const DENSE_PEAK_FACTOR = 3;

export interface RunEstimate {
  cells: [number, number];
  /** The solver the run would use (what `auto` picks, or the one asked for). */
  solver: SolverName;
  /** The sparse path's factorisation of the counted side as estimated (flops ×4 when complex), as status.factorisation reports it. */
  factor?: { method: 'band' | 'sparse-ldl'; nnzL: number; flops: number };
  /** One line on the path, e.g. "sparse, band half-width ≈ 612". */
  path: string;
  joints: number;
  /** Rows of R (kept and grounded bars), estimated. */
  bars: number;
  /** Peak memory, bytes. */
  bytes: number;
  /** The part of `bytes` held as JavaScript objects (the bar rows, Bloch block records). */
  heapBytes: number;
  /** Rough wall time, seconds. */
  seconds: number;
  /** True when 2·joints or 4·bars would overflow Int32 indices. */
  overflows: boolean;
}

export interface EstimateOptions {
  solver?: SolverChoice;
  /** The run also computes the flex basis (classify, export-modes, sweep). */
  bases?: boolean;
}

export interface SizeCheckOptions extends EstimateOptions {
  /** Bytes the run may use; default DENSE_MEMORY_LIMIT (1.5 GB). */
  memoryLimit?: number;
  /** Seconds the run may take by the estimate; default TIME_LIMIT_SECONDS. */
  timeLimit?: number;
  /** Lift the default memory limit and the time limit (an explicit memoryLimit still holds). */
  allowLarge?: boolean;
  /** Bytes the JavaScript heap may hold (objects, not typed arrays); no limit when undefined. */
  heapLimit?: number;
  /** Names used in the message: the cells field and how to allow a large run. */
  labels?: { cells: string; allow: string };
}

const API_LABELS = { cells: 'cells', allow: 'ask for a large run explicitly (allowLarge: true and a memoryLimit in the API, --allow-large on the command line)' };

/** Cells along an axis from which a bar with this shift has both ends inside (or wraps). */
function axisCounts(N: number, shift: number, rule: AxisRule): { both: number } {
  return { both: rule.kind === 'twist' ? N : Math.max(0, N - Math.abs(shift)) };
}

/** Estimate memory and time of one run, allocating nothing that grows with the cells. */
export function estimateRun(fw: Framework, cells: [number, number], boundary: Boundary, options: EstimateOptions = {}): RunEstimate {
  const [N1, N2] = cells;
  const S = fw.joints.length;
  const joints = N1 * N2 * S;
  const twisted = [boundary.x, boundary.y].filter((r) => r.kind === 'twist').length;
  const anyPinned = [boundary.x, boundary.y].some((r) => r.kind === 'sides' && (r.low === 'pinned' || r.high === 'pinned'));
  const complex = [boundary.x, boundary.y].some((r) => r.kind === 'twist' && r.theta - Math.floor(r.theta) !== 0 && r.theta - Math.floor(r.theta) !== 0.5);

  // rows of R and the bars with copies inside (bars per cell)
  let rows = 0;
  let barsPerCell = 0;
  for (const bar of resolveBars(fw)) {
    const kept = axisCounts(N1, bar.shift[0], boundary.x).both * axisCounts(N2, bar.shift[1], boundary.y).both;
    rows += kept + (anyPinned ? 2 * (N1 * N2 - kept) : 0);
    if (kept > 0) barsPerCell++;
  }
  const n = 2 * joints;
  const m = rows;
  const overflows = n >= INDEX_LIMIT || 4 * m >= INDEX_LIMIT;
  const bases = options.bases === true;
  const flexVectors = bases ? Math.max(0, n - m) * n * 8 * 2 : 0;

  const choice = options.solver ?? 'auto';
  const solver: SolverName = choice !== 'auto' ? choice : twisted > 0 ? 'bloch' : n >= SPARSE_MIN_DOF ? 'sparse' : 'dense';
  // a Bloch count on two twisted axes never lists the supercell's joints or rows (they are built
  // on first read, src/supercell/supercell.ts); bases map block vectors back through the rows
  const listsRows = !(solver === 'bloch' && twisted === 2 && !bases);
  const supercellBytes = listsRows ? joints * JOINT_BYTES + m * BAR_ROW_BYTES : 0;
  const matrixBytes = m * MATRIX_ROW_BYTES * (complex ? 1.5 : 1);
  const buildSeconds = listsRows ? 3e-6 * m : 0;

  const dense = (r: number, c: number, cplx: boolean) => {
    const f = cplx ? 2 : 1;
    const [a, b] = [r * f, c * f];
    return { bytes: DENSE_PEAK_FACTOR * denseMemoryBytes(r, c, cplx, bases), seconds: 1e-8 * a * b * Math.min(a, b) * (bases ? 3 : 1) };
  };
  const widths = gramRowWidths(fw);
  const banded = (dimFlex: number, dimStress: number, bands: { flex: number; stress: number }, cplx: boolean, aspect: number) => {
    const f = cplx ? 2 : 1;
    const bFlex = Math.min(dimFlex, Math.ceil(RCM_GAIN * bands.flex));
    const bStress = Math.min(dimStress, Math.ceil(RCM_GAIN * bands.stress));
    // each side's factor as the sparse solver picks it (sparse/factors.ts factorPlan): the band,
    // or the nested-dissection LDLᴴ when the side is large and it needs under half the flops
    const side = (dim: number, b: number, width: number) => {
      // words: 8-byte words the factor keeps (×2 complex); the sparse one ~1.5 a nonzero of L with its indices
      const band = { nnzL: dim * (b + 1), words: dim * (b + 1), flops: dim * (b + 1) ** 2, b, sparse: false };
      const nd = nestedDissectionCost(dim, width, b, aspect);
      // the choice compares with the band at halfBandwidths' own width (RCM's gain ranges over
      // 0.65–1.0; on triangular 64×64 it is 1.0, and the solver picks the sparse factor there)
      const unscaled = dim * (Math.min(dim, b / RCM_GAIN) + 1) ** 2;
      return dim >= SPARSE_MIN_DIM && nd.flops < 0.5 * unscaled ? { nnzL: nd.nnzL, words: 1.5 * nd.nnzL, flops: nd.flops, b, sparse: true } : band;
    };
    const flex = side(dimFlex, bFlex, widths.flex);
    const stress = side(dimStress, bStress, widths.stress);
    // a count factorises the smaller Gram matrix; the bases need the other one too
    const [dim, counted] = dimStress <= dimFlex ? [dimStress, stress] : [dimFlex, flex];
    const factor = 8 * f * (bases ? Math.max(flex.words, stress.words) : counted.words);
    const seconds = (1.5e-9 * counted.flops * (cplx ? 4 : 1) + (counted.sparse ? 2.5e-5 * dim : 2e-7 * dim * counted.b)) * (bases ? 2 : 1);
    const figures = { method: counted.sparse ? ('sparse-ldl' as const) : ('band' as const), nnzL: counted.nnzL, flops: counted.flops * (cplx ? 4 : 1) };
    return { bytes: factor + WORK_VECTORS * 8 * f * Math.max(dimFlex, dimStress), seconds, b: counted.b, sparse: counted.sparse, figures };
  };

  let heapBytes = listsRows ? m * BAR_ROW_BYTES : 0;
  let bytes = supercellBytes + flexVectors;
  let seconds = buildSeconds;
  let path: string;
  let factor: RunEstimate['factor'];
  if (solver === 'dense' || (solver === 'bloch' && twisted === 0)) {
    const d = dense(m, n, complex);
    bytes += matrixBytes + d.bytes;
    seconds += d.seconds;
    path = `dense SVD of a ${m}×${n}${complex ? ' complex' : ''} matrix`;
  } else if (solver === 'sparse') {
    const s = banded(n, m, halfBandwidths(fw, cells, boundary), complex, Math.max(N1, N2) / Math.max(1, Math.min(N1, N2)));
    bytes += 3 * matrixBytes + s.bytes;
    seconds += s.seconds;
    path = s.sparse ? `sparse, nested-dissection LDLᴴ (band half-width ≈ ${s.b})` : `sparse, band half-width ≈ ${s.b}`;
    factor = s.figures;
  } else if (twisted === 2) {
    const B = Math.max(1, barsPerCell);
    const blocks = N1 * N2;
    // a count keeps a few numbers a block in flat arrays (kagome 1024×1024: 91 MB peak in all);
    // bases keep every block's vectors as objects
    const perBlock = bases ? 40 * B * 2 * S + 200 : 8 * Math.min(B, 2 * S) + 16;
    bytes += blocks * perBlock;
    if (bases) heapBytes += blocks * perBlock;
    seconds += blocks * (1e-8 * B * (2 * S) ** 2 + 1e-6) * (bases ? 2 : 1);
    path = `Bloch, ${blocks} unit-cell blocks of ${B}×${2 * S}`;
  } else {
    // one twisted axis: Nt strip blocks, each the 1-cell-wide supercell along the other axis
    const xTwisted = boundary.x.kind === 'twist';
    const Nt = xTwisted ? N1 : N2;
    const No = xTwisted ? N2 : N1;
    const cols = 2 * S * No;
    const blockRows = Math.max(1, Math.ceil(m / Nt));
    let per: { bytes: number; seconds: number };
    if (cols < SPARSE_STRIP_COLUMNS) per = dense(blockRows, cols, true);
    else {
      const strip: [number, number] = xTwisted ? [1, No] : [No, 1];
      const s = banded(cols, blockRows, halfBandwidths(fw, strip, boundary), true, No);
      per = { bytes: s.bytes, seconds: 1e-4 * cols + 3e-3 + s.seconds };
    }
    bytes += per.bytes + Nt * Math.min(blockRows, cols) * 8 * 2;
    seconds += Nt * per.seconds;
    path = `Bloch, ${Nt} strip blocks of ${cols} columns (${cols < SPARSE_STRIP_COLUMNS ? 'dense' : 'banded'})`;
  }
  return { cells: [N1, N2], solver, path, joints, bars: m, bytes, heapBytes, seconds, overflows, factor };
}

/**
 * Half-bandwidths of RᴴR (flex side) and RRᴴ (self-stress side) with cells numbered along the
 * shorter side: a bar from site a to site b, Δ cells apart in that numbering, couples columns
 * 2·|Δ·S + b − a| + 1 apart, and two bars meeting at a joint lie within B·(Δmax + 1) rows
 * (B bars per cell). A twisted axis wraps: its shift counts modulo N, and when the wrap closes
 * a ring along the longer side, reverse Cuthill–McKee folds it, about doubling both.
 */
function halfBandwidths(fw: Framework, cells: [number, number], boundary: Boundary): { flex: number; stress: number } {
  const [N1, N2] = cells;
  const S = fw.joints.length;
  const shortIsX = N1 <= N2;
  const along = (N: number, shift: number, rule: AxisRule): number => {
    if (rule.kind !== 'twist') return shift;
    const r = ((shift % N) + N) % N;
    return r <= N - r ? r : r - N;
  };
  let flex = 1;
  let reach = -1;
  let B = 0;
  resolveBars(fw).forEach((bar) => {
    const x = axisCounts(N1, bar.shift[0], boundary.x);
    const y = axisCounts(N2, bar.shift[1], boundary.y);
    if (x.both * y.both === 0) return;
    B++;
    const d1 = along(N1, bar.shift[0], boundary.x);
    const d2 = along(N2, bar.shift[1], boundary.y);
    const delta = shortIsX ? d2 * N1 + d1 : d1 * N2 + d2;
    flex = Math.max(flex, 2 * Math.abs(delta * S + bar.to - bar.from) + 1);
    reach = Math.max(reach, Math.abs(delta));
  });
  const longRule = shortIsX ? boundary.y : boundary.x;
  const ring = longRule.kind === 'twist' && Math.max(N1, N2) > 1 ? 2 : 1;
  return { flex: ring * flex, stress: B === 0 ? 0 : ring * B * (reach + 1) };
}

/**
 * Nonzeros of L and flops of the nested-dissection LDLᴴ (src/linalg/sparse-ldl) of a Gram matrix
 * of dimension dim with about `width` nonzeros a row, band half-width b across the shorter side,
 * on an N_long×N_short supercell (aspect = N_long/N_short). On a 2D mesh nested dissection costs
 * O(dim^1.5) flops and O(dim·log) fill (A. George, "Nested dissection of a regular finite element
 * mesh", SIAM J. Numer. Anal. 10, 345–363, 1973); the powers of width and aspect are fitted to
 * open supercells measured here (kagome, square, triangular, honeycomb 96×96, kagome 400×40
 * and 64×64, twisted kagome 96×96), and the two constants refitted once the leaves were ordered
 * by minimum degree (which cut nnz(L) by ~24 %): nnz(L) within 0.95–1.07× and flops within
 * 0.90–1.08× of the analysis on those runs.
 */
export function nestedDissectionCost(dim: number, width: number, b: number, aspect: number): { nnzL: number; flops: number } {
  const w = width / 7;
  return { nnzL: 4.1 * dim * Math.log2(b + 2) * w, flops: 15 * dim ** 1.5 * w * w * Math.max(1, aspect) ** -0.25 };
}

/**
 * Nonzeros a row of RᴴR (flex side: a joint's own 2 columns and its neighbours') and of RRᴴ
 * (self-stress side: a bar and every other bar at its two joints), averaged over the unit cell
 * (repeated bars between the same two joints counted once each: an upper estimate).
 */
function gramRowWidths(fw: Framework): { flex: number; stress: number } {
  const bars = resolveBars(fw);
  const degree = new Float64Array(fw.joints.length);
  for (const b of bars) {
    degree[b.from]++;
    degree[b.to]++;
  }
  const S = Math.max(1, fw.joints.length);
  let flex = 0;
  for (const d of degree) flex += 2 * (1 + d);
  let stress = 0;
  for (const b of bars) stress += 1 + (degree[b.from] - 1) + (degree[b.to] - 1);
  return { flex: flex / S, stress: bars.length ? stress / bars.length : 1 };
}

function formatSeconds(s: number): string {
  if (s < 60) return `${Math.max(1, Math.round(s))} s`;
  if (s < 3600) return `${Math.round(s / 60)} min`;
  if (s < 86400 * 3) return `${(s / 3600).toFixed(1)} h`;
  return `${Math.round(s / 86400)} days`;
}

/** The largest N1'×N2' (the same aspect, by bisection on the scale) for which `ok` holds, or null. */
function largestFitting(cells: [number, number], ok: (c: [number, number]) => boolean): [number, number] | null {
  const at = (f: number): [number, number] => [Math.max(1, Math.floor(cells[0] * f)), Math.max(1, Math.floor(cells[1] * f))];
  if (!ok(at(0))) return null;
  let lo = 0;
  let hi = 1;
  for (let k = 0; k < 60; k++) {
    const mid = (lo + hi) / 2;
    if (ok(at(mid))) lo = mid;
    else hi = mid;
  }
  return at(lo);
}

/**
 * Refuse, before anything is built, a run whose index arithmetic would overflow (always) or
 * whose estimate exceeds the memory or time limit (unless allowLarge). Returns the estimate.
 */
export function checkRunSize(fw: Framework, cells: [number, number], boundary: Boundary, options: SizeCheckOptions = {}): RunEstimate {
  const labels = options.labels ?? API_LABELS;
  const est = (c: [number, number]) => estimateRun(fw, c, boundary, options);
  const e = est(cells);
  const size = `${labels.cells} ${cells[0]}x${cells[1]}`;
  if (e.overflows) {
    const fit = largestFitting(cells, (c) => !est(c).overflows);
    throw new TooLargeError(
      `${size}: ${e.joints} joints and about ${e.bars} bars are too many to index: 2·joints and 4·bars must stay under 2^31. ` +
        `Fix: use fewer cells${fit ? ` (about ${fit[0]}x${fit[1]})` : ', or a smaller unit cell'}: this limit holds even for large runs.`,
      e.bytes,
      0,
      { secondsNeeded: e.seconds, largestCells: fit },
    );
  }
  const memoryLimit = options.memoryLimit ?? (options.allowLarge ? Infinity : DENSE_MEMORY_LIMIT);
  const timeLimit = options.allowLarge ? Infinity : (options.timeLimit ?? TIME_LIMIT_SECONDS);
  const heapLimit = options.heapLimit ?? Infinity;
  const fits = (x: RunEstimate) => x.bytes <= memoryLimit && x.seconds <= timeLimit && x.heapBytes <= heapLimit;
  if (fits(e)) return e;
  const fit = largestFitting(cells, (c) => fits(est(c)));
  const over = [
    e.bytes > memoryLimit ? `over the ${formatBytes(memoryLimit)} it may use` : '',
    e.seconds > timeLimit ? `over the ${formatSeconds(timeLimit)} time budget` : '',
    e.heapBytes > heapLimit ? `with ${formatBytes(e.heapBytes)} of it as JavaScript objects, over the ${formatBytes(heapLimit)} heap` : '',
  ].filter(Boolean);
  throw new TooLargeError(
    `${size} is too large for one run: the ${e.solver} solver (${e.path}) would need about ${formatBytes(e.bytes)} ` +
      `and roughly ${formatSeconds(e.seconds)} (a rough estimate), ${over.join(' and ')}. ` +
      `Fix: use fewer cells${fit ? ` (about ${fit[0]}x${fit[1]} would fit)` : ', or a smaller unit cell'}, or ${labels.allow}.`,
    e.bytes,
    Number.isFinite(memoryLimit) ? memoryLimit : e.bytes,
    { secondsNeeded: e.seconds, largestCells: fit },
  );
}

/** What is wrong with a relative rank tolerance outside [MIN_RELATIVE_TOLERANCE, 1), or null when it is usable. */
export function toleranceProblem(value: unknown): string | null {
  if (typeof value !== 'number' || !Number.isFinite(value)) return `it is ${String(value)}, not a finite number`;
  if (value < MIN_RELATIVE_TOLERANCE) return `${value} is below ${MIN_RELATIVE_TOLERANCE}: a cut that close to 0 falls inside rounding noise, so the counts would depend on rounding`;
  if (value >= 1) return `${value} is not below 1: every singular value would count as zero`;
  return null;
}
