/**
 * The one Lanczos iteration for σ_max: on AᴴA, resumable, used by the sparse solver and by the
 * Bloch solver's strip blocks.
 */
import { dotInto } from './block.js';
import { seededUniform } from './random.js';
import { gramMatVecInto, type SparseMatrix } from './sparse.js';
import { tridiagonalMax } from './tridiagonal.js';

/** Lanczos on AᴴA for σ_max, resumable: a coarse screening run first, a fine one on the leaders. */
export interface TopLanczos {
  /**
   * Continue until the largest Ritz value has changed by at most `stall` relative over three
   * checks 5 steps apart (or the iteration ends); returns √(largest Ritz value), a lower bound
   * of σ_max that rises with every step.
   */
  run(stall: number): number;
  /** Lanczos steps taken so far. */
  steps(): number;
}

/**
 * σ_max of a block by Lanczos on AᴴA from a fixed pseudo-random start (common practice; G. H.
 * Golub & C. F. Van Loan, Matrix Computations, ch. 10, from memory), each step one pass over A
 * (sparse.ts gramMatVecInto). No reorthogonalisation is needed for the largest eigenvalue: lost
 * orthogonality only repeats converged Ritz values.
 * The largest Ritz value rises to σ_max² (Courant–Fischer). It ends on an invariant subspace or
 * after 2000 steps. The top of a strip block's spectrum is a band of closely spaced values:
 * settling to 1e-14 takes about as many steps as the block has columns / 2 (more near phase ½).
 */
export function topLanczos(A: SparseMatrix, check: () => void): TopLanczos {
  const n = A.cols;
  const complex = A.im !== null;
  const rand = seededUniform(0x9e3779b9, -0.5, 0.5);
  // three rotating vectors: previous, current, next
  const bufRe = [new Float64Array(n), new Float64Array(n), new Float64Array(n)];
  const bufIm = complex ? [new Float64Array(n), new Float64Array(n), new Float64Array(n)] : null;
  let p = 0;
  let c = 1;
  let nx = 2;
  {
    const vr = bufRe[c];
    const vi = bufIm ? bufIm[c] : null;
    let s = 0;
    for (let i = 0; i < n; i++) {
      vr[i] = rand();
      s += vr[i] * vr[i];
    }
    if (vi)
      for (let i = 0; i < n; i++) {
        vi[i] = rand();
        s += vi[i] * vi[i];
      }
    const inv = 1 / Math.sqrt(s);
    for (let i = 0; i < n; i++) vr[i] *= inv;
    if (vi) for (let i = 0; i < n; i++) vi[i] *= inv;
  }
  const alpha: number[] = [];
  const beta: number[] = [];
  let theta = 0;
  let previous = -1;
  let prevBeta = 0;
  let ended = n === 0 || A.rows === 0;
  return {
    run(stall) {
      let calm = 0;
      while (!ended) {
        const j = alpha.length;
        if (j % 50 === 49) check();
        const vr = bufRe[c];
        const vi = bufIm ? bufIm[c] : null;
        const pr = bufRe[p];
        const pi = bufIm ? bufIm[p] : null;
        const wr = bufRe[nx];
        const wi = bufIm ? bufIm[nx] : null;
        gramMatVecInto(A, vr, vi, wr, wi);
        const a = dotInto(0, vr, wr, n) + (vi && wi ? dotInto(0, vi, wi, n) : 0);
        alpha.push(a);
        const s = threeTerm(wr, vr, pr, a, prevBeta, n) + (vi && wi && pi ? threeTerm(wi, vi, pi, a, prevBeta, n) : 0);
        const b = Math.sqrt(s);
        ended = b <= 1e-14 * Math.abs(a) || j + 1 >= 2000;
        const checkNow = ended || j % 5 === 4;
        if (checkNow) theta = tridiagonalMax(alpha, beta, Math.max(0, previous));
        if (!ended) {
          // the next Lanczos vector, so that a later run() resumes from a consistent state
          beta.push(b);
          scaleBy(wr, 1 / b, n);
          if (wi) scaleBy(wi, 1 / b, n);
          prevBeta = b;
          [p, c, nx] = [c, nx, p];
        }
        if (checkNow) {
          calm = theta - previous <= stall * theta ? calm + 1 : 0;
          previous = theta;
          if (calm >= 3) break;
        }
      }
      return Math.sqrt(Math.max(theta, 0));
    },
    steps: () => alpha.length,
  };
}

// The loops of a Lanczos step, each a small function of its own (the dot product is block.ts's
// dotInto): V8 then optimises each loop whole (inside the iteration's closure a long loop was
// compiled mid-run and left at its end on every step, a cost comparable to the mat-vecs
// themselves on a fresh process).

/** w ← w − a·v − b·p (one part), returning Σ w_i² of the result. */
function threeTerm(w: Float64Array, v: Float64Array, p: Float64Array, a: number, b: number, n: number): number {
  let s = 0;
  for (let i = 0; i < n; i++) {
    const x = w[i] - a * v[i] - b * p[i];
    w[i] = x;
    s += x * x;
  }
  return s;
}

function scaleBy(x: Float64Array, c: number, n: number): void {
  for (let i = 0; i < n; i++) x[i] *= c;
}

/**
 * An upper bound of σ_max(A) in O(nnz): ‖A‖₂² = ρ(AᴴA) ≤ ρ(|A|ᵀ|A|) ≤ the largest row sum of
 * |A|ᵀ|A| (entrywise |AᴴA| ≤ |A|ᵀ|A|, then Gershgorin on a nonnegative matrix; common practice),
 * and likewise with |A||A|ᵀ; the smaller of the two. Formed as |A|ᵀ(|A|·1) without the product.
 */
export function sigmaMaxUpperBound(A: SparseMatrix): number {
  // each pass its own function (they run once per count, on fresh code: see threeTerm's note)
  const rowSum = new Float64Array(A.rows);
  const colSum = new Float64Array(A.cols);
  absSums(A, rowSum, colSum);
  // |A|ᵀ|A|·1 = |A|ᵀ·rowSum (one entry per column) and |A||A|ᵀ·1 = |A|·colSum (one per row)
  const viaCols = new Float64Array(A.cols);
  const viaRows = absProducts(A, rowSum, colSum, viaCols);
  return Math.sqrt(Math.min(largest(viaCols), viaRows));
}

/** |A_rk| (the modulus of a complex entry). */
function absEntry(re: Float64Array, im: Float64Array | null, k: number): number {
  return im ? Math.hypot(re[k], im[k]) : Math.abs(re[k]);
}

/** Row and column sums of |A|. */
function absSums(A: SparseMatrix, rowSum: Float64Array, colSum: Float64Array): void {
  const { rows, rowPtr, colIdx, re, im } = A;
  for (let r = 0; r < rows; r++)
    for (let k = rowPtr[r], kEnd = rowPtr[r + 1]; k < kEnd; k++) {
      const a = absEntry(re, im, k);
      rowSum[r] += a;
      colSum[colIdx[k]] += a;
    }
}

/** viaCols = |A|ᵀ·rowSum; returns the largest entry of |A|·colSum. */
function absProducts(A: SparseMatrix, rowSum: Float64Array, colSum: Float64Array, viaCols: Float64Array): number {
  const { rows, rowPtr, colIdx, re, im } = A;
  let viaRows = 0;
  for (let r = 0; r < rows; r++) {
    let s = 0;
    for (let k = rowPtr[r], kEnd = rowPtr[r + 1]; k < kEnd; k++) {
      const a = absEntry(re, im, k);
      viaCols[colIdx[k]] += a * rowSum[r];
      s += a * colSum[colIdx[k]];
    }
    viaRows = Math.max(viaRows, s);
  }
  return viaRows;
}

function largest(a: Float64Array): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, a[i]);
  return m;
}
