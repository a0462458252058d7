/** The dense reference solver: ml-matrix SVD of the whole rigidity matrix. */
import { checkDenseFits, denseMemoryBytes, nullSpace, singularValues, type NullBasis } from '../linalg/dense.js';
import { rigidityMatrix } from '../supercell/rigidity.js';
import type { Supercell } from '../supercell/supercell.js';
import { certifyFromSingularValues, decideRank, svdBackwardError } from '../linalg/rank.js';
import { conjugateTranspose } from '../linalg/sparse.js';
import { throwIfAborted, type SpaceSolver } from './solver.js';

/**
 * "about N1'×N2' cells would fit": dense memory grows like (N1·N2)², so both sides shrink by
 * (allowed / needed)^¼; the faster solvers are named too.
 */
function sizeAdvice(sc: Supercell, need: number, limit: number): string {
  const f = Math.pow(limit / need, 0.25);
  const [a, b] = sc.cells.map((N) => Math.max(1, Math.floor(N * f)));
  return `use fewer cells (about ${a}x${b} would fit), or --solver auto, which picks the sparse or Bloch solver for large supercells`;
}

export const denseSolver: SpaceSolver = (sc, given, options) => {
  const R = given ?? rigidityMatrix(sc);
  const m = R.rows;
  const n = R.cols;
  const complex = R.im !== null;
  const need = denseMemoryBytes(m, n, complex, false);
  checkDenseFits(m, n, complex, false, options.memoryLimit, sizeAdvice(sc, need, options.memoryLimit));
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
    status: { certified: cert.certified, criterion: 'singular-values', converged: true, fallback: null, reasons: cert.reasons },
    flexBasis() {
      if (!flexCache) {
        checkDenseFits(m, n, complex, true, options.memoryLimit, sizeAdvice(sc, denseMemoryBytes(m, n, complex, true), options.memoryLimit));
        flexCache = nullSpace(R, n - decision.rank);
      }
      return flexCache;
    },
    selfStressBasis() {
      if (!stressCache) {
        checkDenseFits(n, m, complex, true, options.memoryLimit, sizeAdvice(sc, denseMemoryBytes(n, m, complex, true), options.memoryLimit));
        stressCache = nullSpace(conjugateTranspose(R), m - decision.rank);
      }
      return stressCache;
    },
  };
};
