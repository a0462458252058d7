/** The dense reference solver: ml-matrix SVD of the whole rigidity matrix. */
import { checkDenseFits, denseMemoryBytes, nullSpace, singularValues, type NullBasis } from '../linalg/dense.js';
import { rigidityMatrix } from '../supercell/rigidity.js';
import type { Supercell } from '../supercell/supercell.js';
import { certifyFromSingularValues, decideRank, svdBackwardError } from '../linalg/rank.js';
import { conjugateTranspose, type SparseMatrix } from '../linalg/sparse.js';
import { throwIfAborted, type SolvedSpaces, type SolveOptions, type SpaceSolver } from './solver.js';

/**
 * The largest min(rows, cols) for which a sparse count that cannot be certified is redone
 * densely (ml-matrix's SVD of a 1200×1200 matrix takes some seconds here).
 */
export const DENSE_FALLBACK_MAX = 1200;

/**
 * "about N1'×N2' cells would fit": dense memory grows like (N1·N2)², so both sides shrink by
 * (allowed / needed)^¼; the faster solvers are named too.
 */
function sizeAdvice(sc: Supercell, need: number, limit: number): string {
  const f = Math.pow(limit / need, 0.25);
  const [a, b] = sc.cells.map((N) => Math.max(1, Math.floor(N * f)));
  return `use fewer cells (about ${a}x${b} would fit), or --solver auto, which picks the sparse or Bloch solver for large supercells`;
}

/** Counts, gap and (lazily) bases of ker R and ker Rᴴ from a dense SVD of R. */
export function denseSpaces(R: SparseMatrix, options: SolveOptions, advice: (need: number, limit: number) => string = () => 'use fewer cells'): SolvedSpaces {
  const m = R.rows;
  const n = R.cols;
  const complex = R.im !== null;
  checkDenseFits(m, n, complex, false, options.memoryLimit, advice(denseMemoryBytes(m, n, complex, false), options.memoryLimit));
  throwIfAborted(options.signal);
  options.onProgress?.({ fraction: 0, stage: 'dense SVD' });
  const decision = decideRank(singularValues(R), m, n, options.relative);
  options.onProgress?.({ fraction: 1, stage: 'dense SVD' });
  const cert = certifyFromSingularValues(decision, svdBackwardError(m, n, decision.sigmaMax));
  let flexCache: NullBasis | undefined;
  let stressCache: NullBasis | undefined;
  return {
    solver: 'dense',
    decision,
    status: { certified: cert.certified, criterion: 'singular-values', converged: true, fallback: null, reasons: cert.reasons, keptSigma: 'measured' },
    flexBasis() {
      if (!flexCache) {
        checkDenseFits(m, n, complex, true, options.memoryLimit, advice(denseMemoryBytes(m, n, complex, true), options.memoryLimit));
        flexCache = nullSpace(R, n - decision.rank);
      }
      return flexCache;
    },
    selfStressBasis() {
      if (!stressCache) {
        checkDenseFits(n, m, complex, true, options.memoryLimit, advice(denseMemoryBytes(n, m, complex, true), options.memoryLimit));
        stressCache = nullSpace(conjugateTranspose(R), m - decision.rank);
      }
      return stressCache;
    },
  };
}

/**
 * The dense path as a fallback for another solver: its spaces when R is small enough
 * (min(rows, cols) ≤ DENSE_FALLBACK_MAX and the SVD with bases fits in memory), else null.
 */
export function denseFallback(options: SolveOptions): (R: SparseMatrix) => SolvedSpaces | null {
  return (R) => {
    const complex = R.im !== null;
    if (Math.min(R.rows, R.cols) > DENSE_FALLBACK_MAX) return null;
    if (denseMemoryBytes(R.rows, R.cols, complex, true) > options.memoryLimit) return null;
    return denseSpaces(R, { ...options, onProgress: undefined });
  };
}

export const denseSolver: SpaceSolver = (sc, given, options) => denseSpaces(given ?? rigidityMatrix(sc), options, (need, limit) => sizeAdvice(sc, need, limit));
