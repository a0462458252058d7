/**
 * The dense reference path: singular values and null spaces by ml-matrix's SVD.
 *
 * Complex matrices use the exact real embedding M = A + iB ↦ E = [[A, −B], [B, A]]: E's
 * singular values are M's, each exactly twice, and (x; y) ∈ ker E ⇔ x + iy ∈ ker M.
 * Nothing is approximated; the embedding only costs a constant factor.
 */
import { Matrix, SingularValueDecomposition } from 'ml-matrix';
import { TooLargeError } from '../errors.js';
import { complexOrthonormalSpan, type CVec } from './complex.js';
import type { SparseMatrix } from './sparse.js';

/** What the dense path may allocate by default (bytes). */
export const DENSE_MEMORY_LIMIT = 1.5 * 1024 ** 3;

/**
 * Bytes the dense path needs for an m×n matrix: the working copies of ml-matrix's SVD
 * (input, its transpose, U and V as needed), embedded for complex matrices.
 */
export function denseMemoryBytes(m: number, n: number, complex: boolean, vectors: boolean): number {
  const f = complex ? 2 : 1;
  const rows = Math.max(m, n) * f;
  const cols = Math.min(m, n) * f;
  const full = Math.max(m, n) * f;
  // input + transposed working copy; with vectors also V (full×full) and U (cols×rows)
  const doubles = 2 * rows * cols + (vectors ? full * full + rows * cols + 2 * full * full : 0);
  return 8 * doubles;
}

export function checkDenseFits(m: number, n: number, complex: boolean, vectors: boolean, limit = DENSE_MEMORY_LIMIT, advice = 'use fewer cells'): void {
  const need = denseMemoryBytes(m, n, complex, vectors);
  if (need > limit) {
    throw new TooLargeError(
      `The dense solver would need about ${formatBytes(need)} for this ${m}×${n} ${complex ? 'complex ' : ''}rigidity matrix, ` +
        `over the ${formatBytes(limit)} it may use. Fix: ${advice}.`,
      need,
      limit,
    );
  }
}

export function formatBytes(b: number): string {
  if (b >= 1024 ** 3) return `${(b / 1024 ** 3).toFixed(2)} GB`;
  if (b >= 1024 ** 2) return `${(b / 1024 ** 2).toFixed(1)} MB`;
  return `${Math.ceil(b / 1024)} kB`;
}

/**
 * Dense real matrix of A (real part only) or of its real embedding (complex), with at least
 * `minRows` rows (zero rows appended: they change no singular value but give the SVD a full V).
 */
function denseOf(A: SparseMatrix, transpose: boolean, minRows: number): Matrix {
  const complex = A.im !== null;
  const f = complex ? 2 : 1;
  const r = (transpose ? A.cols : A.rows) * f;
  const c = (transpose ? A.rows : A.cols) * f;
  const M = new Matrix(Math.max(r, minRows), c);
  const rowsA = A.rows;
  const colsA = A.cols;
  for (let i = 0; i < rowsA; i++) {
    for (let k = A.rowPtr[i]; k < A.rowPtr[i + 1]; k++) {
      const j = A.colIdx[k];
      const re = A.re[k];
      const im = A.im ? A.im[k] : 0;
      // entry (i, j) of A; of Aᵀ it is (j, i). Aᵀ here is the plain transpose (not conjugated):
      // callers wanting Aᴴ pass conjugateTranspose(A) with transpose = false.
      const [p, q, pr, qc] = transpose ? [j, i, colsA, rowsA] : [i, j, rowsA, colsA];
      M.set(p, q, re);
      if (complex) {
        M.set(p, q + qc, -im);
        M.set(p + pr, q, im);
        M.set(p + pr, q + qc, re);
      }
    }
  }
  return M;
}

/** The min(m, n) singular values of A, descending. */
export function singularValues(A: SparseMatrix): Float64Array {
  const complex = A.im !== null;
  if (A.rows === 0 || A.cols === 0) return new Float64Array(0);
  const tall = A.rows >= A.cols;
  const M = denseOf(A, !tall, 0);
  const svd = new SingularValueDecomposition(M, { computeLeftSingularVectors: false, computeRightSingularVectors: false });
  const s = Float64Array.from(svd.diagonal).sort().reverse();
  if (!complex) return s;
  // Each singular value of the complex matrix appears twice in the embedding: average the pairs.
  const out = new Float64Array(s.length / 2);
  for (let k = 0; k < out.length; k++) out[k] = 0.5 * (s[2 * k] + s[2 * k + 1]);
  return out;
}

/** A basis of ker A: orthonormal real vectors for a real A, orthonormal complex ones otherwise. */
export interface NullBasis {
  /** True when every vector's imaginary part is zero (the solvers set it for a real R and real boundary). */
  real: boolean;
  vectors: CVec[];
}

/**
 * Orthonormal basis of ker A of dimension `dim` (decided beforehand by the rank rule): the
 * right singular vectors of the `dim` smallest singular values (structural zeros included).
 */
export function nullSpace(A: SparseMatrix, dim: number): NullBasis {
  const complex = A.im !== null;
  const f = complex ? 2 : 1;
  const n = A.cols * f;
  if (A.cols === 0) return { real: !complex, vectors: [] };
  let realVectors: Float64Array[];
  if (dim === 0) return { real: !complex, vectors: [] };
  if (A.rows === 0) {
    realVectors = Array.from({ length: n }, (_, j) => {
      const v = new Float64Array(n);
      v[j] = 1;
      return v;
    });
  } else {
    const M = denseOf(A, false, n);
    const svd = new SingularValueDecomposition(M, { computeLeftSingularVectors: false, computeRightSingularVectors: true });
    // ml-matrix returns singular values in descending order with V's columns to match
    const V = svd.rightSingularVectors;
    realVectors = [];
    for (let j = n - f * dim; j < n; j++) realVectors.push(Float64Array.from(V.getColumn(j)));
  }
  if (!complex) return { real: true, vectors: realVectors.map((re) => ({ re, im: new Float64Array(re.length) })) };
  const half = A.cols;
  const candidates = realVectors.map((v) => ({ re: v.slice(0, half), im: v.slice(half) }));
  return { real: false, vectors: complexOrthonormalSpan(candidates, 1e-6, dim) };
}
