/**
 * What the classifier's steps share: the rigidity matrix and its tolerances, the rows touching
 * each joint, the joints of each cell, the global flex basis (computed on first use), the
 * restricted-kernel cache, and (State) the span and modes found so far.
 */
import { cnorm as norm, type CVec } from '../../linalg/complex.js';
import { DENSE_MEMORY_LIMIT } from '../../linalg/dense.js';
import type { SparseMatrix } from '../../linalg/sparse.js';
import type { Supercell } from '../../supercell/supercell.js';
import type { ClassifiedMode } from '../classes.js';
import type { FlexAnalysis } from '../spaces.js';
import { allReal, markReal, scaleInPlace, subtractProjection } from './cvec-ops.js';
import type { Geometry } from './metrics.js';
import { KernelCache } from './restricted-kernel.js';
import type { Span } from './span.js';
import { SPAN_TOLERANCE } from './thresholds.js';

export type RestrictedMethod = 'restricted-svd' | 'restricted-sparse' | 'kernel-intersection';

export interface Ctx {
  sc: Supercell;
  R: SparseMatrix;
  /** Columns of R. */
  n: number;
  /** R is complex (a twist other than 0 or ½). */
  complex: boolean;
  /** The flex basis is complex (only when R is: a complex basis of a real R is made real). */
  basisComplex: () => boolean;
  /** Absolute rank tolerance of the whole R (relative × σ_max). */
  absTol: number;
  spanTol: number;
  /** Relative rank tolerance and memory limit of the analysis (for the sparse restricted solves). */
  relative: number;
  memoryLimit: number;
  /** Number of flexes (for cost estimates, without computing the basis). */
  analysisFlexes: number;
  /** Rows of R touching each joint. */
  rowsOfJoint: Int32Array[];
  /** Joints of each cell. */
  cellJoints: number[][];
  flexBasis: () => CVec[];
  /** Whether the global flex basis has been computed (the kernel intersection needs it). */
  basisReady: () => boolean;
  /** σ_max of the whole R (the sparse restricted solves cut at relative × this). */
  sigmaMax: number;
  method: 'auto' | RestrictedMethod;
  used: Record<RestrictedMethod, number>;
  /** Restricted kernels already solved, by the exact content of the restricted matrix. */
  kernels: KernelCache;
}

export function makeContext(sc: Supercell, analysis: FlexAnalysis, method: Ctx['method']): Ctx {
  const R = analysis.matrix();
  const J = sc.jointCount;
  const counts = new Int32Array(J);
  const rowJoints: number[][] = [];
  for (let r = 0; r < R.rows; r++) {
    const js = new Set<number>();
    for (let k = R.rowPtr[r]; k < R.rowPtr[r + 1]; k++) js.add(R.colIdx[k] >> 1);
    rowJoints.push([...js]);
    for (const j of js) counts[j]++;
  }
  const rowsOfJoint = Array.from({ length: J }, (_, j) => new Int32Array(counts[j]));
  const fill = new Int32Array(J);
  rowJoints.forEach((js, r) => {
    for (const j of js) rowsOfJoint[j][fill[j]++] = r;
  });
  const N1 = sc.cells[0];
  const cellJoints: number[][] = Array.from({ length: sc.cells[0] * sc.cells[1] }, () => []);
  for (let k = 0; k < J; k++) cellJoints[sc.jointCells[2 * k + 1] * N1 + sc.jointCells[2 * k]].push(k);
  let basis: CVec[] | undefined;
  const flexBasis = () => {
    if (basis) return basis;
    const nb = analysis.flexBasis();
    basis = realIfPossible(nb.vectors, nb.real, R.im === null, analysis.flexes);
    // a real R's basis is real (the solver's, or made so): later steps need not scan it
    if (R.im === null) markReal(basis);
    return basis;
  };
  return {
    sc,
    R,
    n: R.cols,
    complex: R.im !== null,
    basisComplex: () => R.im !== null,
    // R = analysis.matrix() is in units of lengthScale (a power of two: exact division)
    absTol: analysis.tolerance.absolute / analysis.lengthScale,
    analysisFlexes: analysis.flexes,
    relative: analysis.tolerance.relative,
    memoryLimit: DENSE_MEMORY_LIMIT,
    spanTol: SPAN_TOLERANCE,
    rowsOfJoint,
    cellJoints,
    flexBasis,
    basisReady: () => basis !== undefined,
    sigmaMax: analysis.sigmaMax / analysis.lengthScale,
    method,
    used: { 'restricted-svd': 0, 'restricted-sparse': 0, 'kernel-intersection': 0 },
    kernels: new KernelCache(),
  };
}

/**
 * A real matrix has a real kernel: when a solver returns complex vectors for a real R, their
 * real and imaginary parts span that kernel, and an orthonormal real basis of it is used.
 */
function realIfPossible(vectors: CVec[], solverSaysReal: boolean, realMatrix: boolean, dim: number): CVec[] {
  if (!realMatrix || solverSaysReal || allReal(vectors)) return vectors;
  const parts: { re: Float64Array; im: Float64Array }[] = [];
  for (const v of vectors) {
    parts.push({ re: v.re.slice(), im: new Float64Array(v.re.length) });
    parts.push({ re: v.im.slice(), im: new Float64Array(v.im.length) });
  }
  parts.sort((a, b) => norm(b) - norm(a));
  const out: { re: Float64Array; im: Float64Array }[] = [];
  for (const v of parts) {
    if (out.length === dim) break;
    const n0 = norm(v);
    if (n0 === 0) continue;
    for (let pass = 0; pass < 2; pass++) for (const u of out) subtractProjection(v, u);
    const nv = norm(v);
    if (nv <= 1e-6 * n0) continue;
    scaleInPlace(v, 1 / nv);
    out.push(v);
  }
  return out;
}

/** The joints of the given cells, ascending. */
export function jointsOfCells(ctx: Ctx, cells: number[]): number[] {
  const out: number[] = [];
  for (const c of cells) out.push(...ctx.cellJoints[c]);
  return out.sort((a, b) => a - b);
}

/** What every step reads and extends. */
export interface State {
  ctx: Ctx;
  geo: Geometry;
  /** The span of the local, short and line flexes found so far. */
  span: Span;
  /** The number of flexes (analysis.flexes). */
  f: number;
  /** The modes classified so far. */
  modes: ClassifiedMode[];
  /** Counts one unit of work for the progress report; throws when the run is cancelled. */
  tick: (stage: string) => void;
}
