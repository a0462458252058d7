/**
 * An independent check of a solved supercell, from the returned bases alone: every flex v must
 * have ‖R v‖ ≤ tol and every self-stress w ‖Rᴴ w‖ ≤ tol (R multiplied bar by bar, not through any
 * solver's factor), each basis must be orthonormal, and the dimensions must be the ones the
 * count claims: dim ker R = columns − rank, dim ker Rᴴ = rows − rank. A solver that returned too
 * few, too many or wrong vectors fails it. It costs both bases, so it runs only when asked.
 */
import { orthonormalityDefect } from '../linalg/block.js';
import type { CVec } from '../linalg/complex.js';
import { conjugateTranspose, sparseMatVecInto, type SparseMatrix } from '../linalg/sparse.js';
import type { FlexAnalysis } from './spaces.js';

export interface SpaceCheck {
  /** Vectors returned against vectors the count claims. */
  dimension: { returned: number; expected: number };
  /** Largest ‖A v‖ over the basis (R for flexes, Rᴴ for self-stresses), in units of lengthScale. */
  worstResidual: number;
  /** ‖VᴴV − I‖_F over the basis. */
  orthonormality: number;
}

export interface SelfCheck {
  passed: boolean;
  flexes: SpaceCheck;
  selfStresses: SpaceCheck;
  /** The bound both residuals are held to: the rank tolerance. */
  residualBound: number;
  /** The bound the orthonormality defect is held to. */
  orthonormalityBound: number;
  /** What failed, in words; empty when passed. */
  failures: string[];
}

function checkSpace(A: SparseMatrix, vs: readonly CVec[], expected: number): SpaceCheck {
  let worst = 0;
  const yr = new Float64Array(A.rows);
  const yi = new Float64Array(A.rows);
  for (const v of vs) {
    sparseMatVecInto(A, v.re, v.im, yr, yi);
    let s = 0;
    for (let i = 0; i < A.rows; i++) s += yr[i] * yr[i] + yi[i] * yi[i];
    worst = Math.max(worst, Math.sqrt(s));
  }
  const block = { len: A.cols, re: vs.map((x) => x.re), im: vs.map((x) => x.im) };
  return { dimension: { returned: vs.length, expected }, worstResidual: worst, orthonormality: orthonormalityDefect(block, vs.length) };
}

/**
 * Check an analysis against its own bases. R is the analysis's matrix in units of lengthScale,
 * so residuals compare with the reported `tolerance.absolute` / lengthScale.
 */
export function selfCheck(a: FlexAnalysis): SelfCheck {
  const R = a.matrix();
  const flexes = checkSpace(R, a.flexBasis().vectors, a.dof - a.rank);
  const selfStresses = checkSpace(conjugateTranspose(R), a.selfStressBasis().vectors, a.bars - a.rank);
  // R is assembled in units of lengthScale: the reported tolerance is converted to them
  const residualBound = a.tolerance.absolute / a.lengthScale;
  const orthonormalityBound = 1e-8;
  const failures: string[] = [];
  for (const [name, c] of [
    ['flex', flexes],
    ['self-stress', selfStresses],
  ] as const) {
    if (c.dimension.returned !== c.dimension.expected) failures.push(`the ${name} basis has ${c.dimension.returned} vectors, the count claims ${c.dimension.expected}`);
    if (!(c.worstResidual <= residualBound)) failures.push(`a ${name} vector has residual ${c.worstResidual.toPrecision(3)} over the tolerance ${residualBound.toPrecision(3)}`);
    if (!(c.orthonormality <= orthonormalityBound)) failures.push(`the ${name} basis is not orthonormal (defect ${c.orthonormality.toPrecision(3)})`);
  }
  return { passed: failures.length === 0, flexes, selfStresses, residualBound, orthonormalityBound, failures };
}
