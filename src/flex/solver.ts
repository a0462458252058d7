/**
 * What a solver for the flex and self-stress spaces provides. The dense SVD is the reference;
 * faster solvers (Bloch block-diagonalisation, sparse factorisations) must give identical counts
 * and spaces wherever both run.
 */
import type { NullBasis } from '../linalg/dense.js';
import type { RankDecision } from '../linalg/rank.js';
import type { SparseMatrix } from '../linalg/sparse.js';
import type { Supercell } from '../supercell/supercell.js';

export type SolverName = 'dense' | 'bloch' | 'sparse';
export type SolverChoice = SolverName | 'auto';
export const SOLVER_CHOICES: SolverChoice[] = ['auto', 'dense', 'bloch', 'sparse'];

export interface Progress {
  /** Fraction done in [0, 1]. */
  fraction: number;
  /** What is being done, e.g. "factorising". */
  stage: string;
}

export interface SolveOptions {
  /** Relative rank tolerance (× σ_max). */
  relative: number;
  /** Bytes the solver may allocate. */
  memoryLimit: number;
  /** 'bound': a certified lower bound may stand in for the smallest kept σ (faster counts); default 'value'. */
  gap?: 'value' | 'bound';
  onProgress?: (p: Progress) => void;
  signal?: AbortSignal;
}

/**
 * How a solver decided its count: structured, for code to read (the prose is in `gapNote`).
 * `certified` means the count is proved by `criterion` up to the stated rounding bounds; a count
 * that is not certified is always flagged ambiguous (`decision.gap.ambiguous`) with `reasons`.
 */
export interface SolveStatus {
  certified: boolean;
  /**
   * singular-values: every singular value computed (dense SVD or Bloch blocks), none within the
   * backward-error bound of the cut; inertia-and-residuals: an inertia count (Sylvester's law)
   * matched by orthonormal vectors with ‖A v‖ ≤ tol and residual-bounded singular values above it.
   */
  criterion: 'singular-values' | 'inertia-and-residuals';
  /** Every iteration the decision relied on reached its stopping test. */
  converged: boolean;
  /** Set when another path decided after the first one could not certify its count. */
  fallback: { from: SolverName; to: SolverName; reason: string } | null;
  /** Why the count is not certified or is flagged ambiguous; empty when neither. */
  reasons: string[];
  /**
   * What gap.kept is: the smallest kept singular value as computed (dense, Bloch, and the sparse
   * path by default), or a certified lower bound of it (the sparse path when only the count was
   * asked for: `gap: 'bound'`), which spares the Lanczos run that measures it.
   */
  keptSigma: 'measured' | 'lower-bound';
  /** Sparse solver only: how the count side's Gram matrix was factored (src/flex/sparse/factors.ts). */
  factorisation?: FactorReport;
}

export interface FactorReport {
  method: 'band' | 'sparse-ldl';
  reason: string;
  /** nnz(L) and flops of one factorisation by the method used. */
  nnzL: number;
  flops: number;
  /** The band's figures, for comparison. */
  bandNnzL: number;
  bandFlops: number;
  /**
   * 'ordered': the band's figures under its ordering; 'lower-bound': lower bounds from a
   * breadth-first search, when the sparse factor needs under half of even those flops and the
   * band orderings were not computed.
   */
  bandFigures: 'ordered' | 'lower-bound';
}

export interface SolvedSpaces {
  solver: SolverName;
  /** rank, tolerance and the singular-value gap around the cut. */
  decision: RankDecision;
  /** How the count was decided and whether it is certified. */
  status: SolveStatus;
  /** How the gap figures were obtained, when not plain singular values of R. */
  gapNote?: string;
  /** Orthonormal flex basis (ker R), dimension cols − rank; computed on first call. */
  flexBasis(): NullBasis;
  /** Orthonormal self-stress basis (ker Rᴴ), dimension rows − rank; computed on first call. */
  selfStressBasis(): NullBasis;
}

/**
 * A solver of one supercell. `R` is its rigidity matrix when the caller has it, or null: a
 * solver that needs it builds it (rigidityMatrix(sc)); the Bloch solver never needs it.
 */
export type SpaceSolver = (sc: Supercell, R: SparseMatrix | null, options: SolveOptions) => SolvedSpaces;

/** Thrown when a run is cancelled through its AbortSignal. */
export class CancelledError extends Error {
  constructor() {
    super('The computation was cancelled.');
    this.name = 'CancelledError';
  }
}

export function throwIfAborted(signal?: AbortSignal): void {
  if (signal?.aborted) throw new CancelledError();
}
