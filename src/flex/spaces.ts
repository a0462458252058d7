/**
 * Flex and self-stress spaces of a supercell.
 *
 *   flexes        = dim ker R       (infinitesimal motions, rigid ones included)
 *   self-stresses = dim ker Rᴴ      (bar tensions in equilibrium with zero load)
 *   trivial       = dim(ker R ∩ rigid motions the boundary allows)
 * Rank uses σ > tol with tol = relative · σ_max (default relative 1e-9), and the singular
 * values on both sides of the cut are reported. Maxwell–Calladine:
 *   flexes − self-stresses = 2·joints − bars  (an exact identity of the counts).
 */
import { Matrix, SingularValueDecomposition } from 'ml-matrix';
import { DENSE_MEMORY_LIMIT, type NullBasis } from '../linalg/dense.js';
import { DEFAULT_RELATIVE_TOLERANCE, flagDecision, type Gap, type RankDecision } from '../linalg/rank.js';
import type { SparseMatrix } from '../linalg/sparse.js';
import { rigidityApply, rigidityMatrix, rigiditySquaredNorm } from '../supercell/rigidity.js';
import { buildSupercell, type Supercell } from '../supercell/supercell.js';
import { rigidMotions, type RigidMotion } from './rigid.js';
import { chooseSolver } from './solvers.js';
import type { Progress, SolverChoice, SolverName, SolveStatus } from './solver.js';

export interface AnalysisOptions {
  /** Relative rank tolerance (× σ_max); default 1e-9. */
  tolerance?: number;
  /** Bytes a solver may use; default 1.5 GB. */
  memoryLimit?: number;
  /** Run even when the size check's estimate exceeds the default memory (1.5 GB) or time limit (src/flex/estimate.ts). */
  allowLarge?: boolean;
  /**
   * 'bound': when only the counts are needed, a certified lower bound may stand in for the
   * smallest kept σ (status.keptSigma says which), sparing the sparse path a Lanczos run;
   * default 'value' (measured on every path).
   */
  gap?: 'value' | 'bound';
  /** Which solver; default 'auto' (picked by size and structure, reported in `solver`). */
  solver?: SolverChoice;
  onProgress?: (p: Progress) => void;
  signal?: AbortSignal;
}

export interface FlexCounts {
  joints: number;
  bars: number;
  /** Columns of R: 2 per joint. */
  dof: number;
  flexes: number;
  trivialFlexes: number;
  /** The rigid motions that were tested for being flexes. */
  rigidMotionsTested: RigidMotion['name'][];
  selfStresses: number;
  rank: number;
  /** Absolute figures (tolerance.absolute, sigmaMax, gap.kept/dropped) are in the framework's units of length. */
  tolerance: { relative: number; absolute: number };
  sigmaMax: number;
  gap: Gap;
  /**
   * The unit the solvers work in: R is assembled with bar vectors divided by it (the RMS bar
   * length of the unit cell, a power of two; see lengthScaleOf), and the absolute figures above
   * are multiplied back. matrix() returns R in these units: its σ are the reported ones / lengthScale.
   * Informational (every figure here is already in the framework's units); optional because
   * counts read back from a mode-data file (src/io/modes.ts) do not carry it.
   */
  lengthScale?: number;
  gapNote?: string;
  /**
   * How the count was decided and whether it is proved; `reasons` lists every doubt (an
   * uncertified count, a narrow gap, a singular value near the cut), and any of them sets
   * gap.ambiguous.
   */
  status: SolveStatus;
  maxwellCalladine: { lhs: number; rhs: number; ok: boolean };
  /** Whether the rigidity matrix is real (every phase ±1). */
  real: boolean;
  solver: SolverName;
  /** Why `solver` was picked. */
  solverReason: string;
  groundedBars: number;
  droppedBars: number;
}

export interface FlexAnalysis extends FlexCounts {
  /** Always present on a fresh analysis (see FlexCounts.lengthScale). */
  lengthScale: number;
  /** The rigidity matrix R in units of lengthScale (assembled on first call: the Bloch solver works without it). */
  matrix(): SparseMatrix;
  /** Orthonormal basis of the flexes (computed on first call). */
  flexBasis(): NullBasis;
  /** Orthonormal basis of the self-stresses (computed on first call). */
  selfStressBasis(): NullBasis;
}

/**
 * Number of independent columns of R·T for orthonormal rigid fields T, at the given absolute
 * tolerance (R·T formed bar by bar, without assembling R). Every singular value of R·T is at most
 * ‖R·T‖_F, so at or below half the tolerance the rank is 0 (the QR below would say the same: its
 * values carry errors of about ε·‖R·T‖_F). The allowed rigid motions move every framework they are
 * tested on without stretching a bar, so this one pass is the rule. Otherwise the m×t product is
 * reduced by Householder QR to its min(m, t)×t triangle (same singular values, to rounding),
 * whose SVD is tiny.
 */
function rigidRank(sc: Supercell, motions: RigidMotion[], absTol: number): number {
  const t = motions.length;
  const m = sc.barCount;
  if (t === 0 || m === 0) return 0;
  if (Math.sqrt(rigiditySquaredNorm(sc, motions.map((mo) => mo.field))) <= 0.5 * absTol) return 0;
  const cols = motions.map((mo) => rigidityApply(sc, mo.field));
  // q×t upper triangle; q < t when there are fewer bars than motions (e.g. a 2×1 free square)
  const q = Math.min(m, t);
  const tri = new Matrix(q, t);
  for (let k = 0; k < q; k++) {
    // Householder reflection zeroing column k below row k (each loop its own function: these
    // run once per count on fresh code, see rigid.ts)
    const x = cols[k];
    const norm = Math.sqrt(sumSquaresFrom(x, k, m));
    const alpha = x[k] > 0 ? -norm : norm;
    const v = x.slice(k, m);
    v[0] -= alpha;
    const vv = sumSquaresFrom(v, 0, v.length);
    for (let j = k; j < t; j++) {
      const y = cols[j];
      if (vv > 0) reflect(v, y, k, m, vv);
      tri.set(k, j, y[k]);
    }
  }
  const s = new SingularValueDecomposition(tri, { computeLeftSingularVectors: false, computeRightSingularVectors: false, autoTranspose: true }).diagonal;
  return s.filter((v) => v > absTol).length;
}

function sumSquaresFrom(x: Float64Array, from: number, to: number): number {
  let s = 0;
  for (let i = from; i < to; i++) s += x[i] * x[i];
  return s;
}

/** y ← y − (2 vᴴy / vv)·v on rows k … m−1 (v holds those rows from 0). */
function reflect(v: Float64Array, y: Float64Array, k: number, m: number, vv: number): void {
  let d = 0;
  for (let i = k; i < m; i++) d += v[i - k] * y[i];
  const f = (2 * d) / vv;
  for (let i = k; i < m; i++) y[i] -= f * v[i - k];
}

/**
 * The supercell whose rigid motions are tested: sc itself, or with a twisted axis the supercell
 * one cell wide along every twisted axis (the same boundary). With a twisted axis the allowed
 * motions are the two translations and only at twist 0 with no pinned side (src/flex/rigid.ts),
 * so every phase is 1, no bar is grounded, and which bars give rows and the row of R·T for each
 * depend on the unit-cell bar and the cell along the untwisted axes alone: R·T is the small supercell's R_r·T_r with each row repeated K times (K the cells
 * along the twisted axes) and scaled by 1/√K (T's columns are unit vectors on K times as many
 * joints). The repetition scaled by 1/√K has orthonormal columns, so both have the same
 * singular values, and the test needs neither the whole supercell's rows nor its joints.
 */
function rigidTestCell(sc: Supercell): Supercell {
  const tx = sc.boundary.x.kind === 'twist';
  const ty = sc.boundary.y.kind === 'twist';
  if (!tx && !ty) return sc;
  const [N1, N2] = sc.cells;
  const cells: [number, number] = [tx ? 1 : N1, ty ? 1 : N2];
  return cells[0] === N1 && cells[1] === N2 ? sc : buildSupercell(sc.framework, cells, sc.boundary);
}

/** A decision's absolute figures multiplied by L (a power of two, so exactly). */
function inLengthUnits(d: RankDecision, L: number): RankDecision {
  const times = (v: number | null) => (v === null ? null : v * L);
  return {
    ...d,
    tolerance: { relative: d.tolerance.relative, absolute: d.tolerance.absolute * L },
    sigmaMax: d.sigmaMax * L,
    gap: { ...d.gap, kept: times(d.gap.kept), dropped: times(d.gap.dropped) },
  };
}

export function analyseSupercell(sc: Supercell, options: AnalysisOptions = {}): FlexAnalysis {
  const relative = options.tolerance ?? DEFAULT_RELATIVE_TOLERANCE;
  const m = sc.barCount;
  const n = 2 * sc.jointCount;
  const { solve, name, reason } = chooseSolver(sc, options.solver ?? 'auto');
  let R: SparseMatrix | null = name === 'bloch' ? null : rigidityMatrix(sc);
  const spaces = solve(sc, R, { relative, memoryLimit: options.memoryLimit ?? DENSE_MEMORY_LIMIT, gap: options.gap, onProgress: options.onProgress, signal: options.signal });
  const flagged = flagDecision(inLengthUnits(spaces.decision, sc.lengthScale), spaces.status.certified, spaces.status.reasons);
  const decision = flagged.decision;
  const status: SolveStatus = { ...spaces.status, reasons: flagged.reasons };
  const flexes = n - decision.rank;
  const selfStresses = m - decision.rank;
  const tested = sc.real ? rigidTestCell(sc) : null;
  const motions = tested ? rigidMotions(tested) : [];
  const trivialFlexes = tested ? motions.length - rigidRank(tested, motions, spaces.decision.tolerance.absolute) : 0;
  return {
    joints: sc.jointCount,
    bars: m,
    dof: n,
    flexes,
    trivialFlexes,
    rigidMotionsTested: motions.map((x) => x.name),
    selfStresses,
    rank: decision.rank,
    tolerance: decision.tolerance,
    sigmaMax: decision.sigmaMax,
    gap: decision.gap,
    lengthScale: sc.lengthScale,
    ...(spaces.gapNote ? { gapNote: spaces.gapNote } : {}),
    status,
    maxwellCalladine: { lhs: flexes - selfStresses, rhs: 2 * sc.jointCount - m, ok: flexes - selfStresses === 2 * sc.jointCount - m },
    real: sc.real,
    solver: name,
    solverReason: reason,
    groundedBars: sc.grounded,
    droppedBars: sc.dropped,
    matrix: () => (R ??= rigidityMatrix(sc)),
    flexBasis: () => spaces.flexBasis(),
    selfStressBasis: () => spaces.selfStressBasis(),
  };
}

/** The plain-data part of an analysis (what `count --json` prints). */
export function countsOf(a: FlexAnalysis): FlexCounts {
  const { matrix: _m, flexBasis: _f, selfStressBasis: _s, ...rest } = a;
  return rest;
}
