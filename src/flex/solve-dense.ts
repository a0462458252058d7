/** The dense reference solver: ml-matrix SVD of the whole rigidity matrix. */
import { checkDenseFits, nullSpace, singularValues, type NullBasis } from '../linalg/dense.js';
import { decideRank } from '../linalg/rank.js';
import { conjugateTranspose } from '../linalg/sparse.js';
import { throwIfAborted, type SpaceSolver } from './solver.js';

export const denseSolver: SpaceSolver = (_sc, R, options) => {
  const m = R.rows;
  const n = R.cols;
  const complex = R.im !== null;
  checkDenseFits(m, n, complex, false, options.memoryLimit);
  throwIfAborted(options.signal);
  options.onProgress?.({ fraction: 0, stage: 'dense SVD' });
  const decision = decideRank(singularValues(R), m, n, options.relative);
  options.onProgress?.({ fraction: 1, stage: 'dense SVD' });
  let flexCache: NullBasis | undefined;
  let stressCache: NullBasis | undefined;
  return {
    solver: 'dense',
    decision,
    flexBasis() {
      if (!flexCache) {
        checkDenseFits(m, n, complex, true, options.memoryLimit);
        flexCache = nullSpace(R, n - decision.rank);
      }
      return flexCache;
    },
    selfStressBasis() {
      if (!stressCache) {
        checkDenseFits(n, m, complex, true, options.memoryLimit);
        stressCache = nullSpace(conjugateTranspose(R), m - decision.rank);
      }
      return stressCache;
    },
  };
};
