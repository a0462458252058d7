/**
 * Small complex linear algebra on plain { re, im } arrays, shared by the classifier's steps.
 */
import { Matrix, SingularValueDecomposition } from 'ml-matrix';
import { cdot as dot, type CVec } from '../../linalg/complex.js';
import { hermitianEigen as denseHermitianEigen } from '../../linalg/hermitian-eig.js';
import type { SparseMatrix } from '../../linalg/sparse.js';

/** A complex vector as two real arrays. */
export type Cx = { re: Float64Array; im: Float64Array };

/** A set of vectors supported on the same degrees of freedom (column indices of R). */
export interface Block {
  dofs: Int32Array;
  vectors: { re: Float64Array; im: Float64Array }[];
}

export interface HermitianEigen {
  /** Ascending. */
  values: number[];
  vectors: { re: Float64Array; im: Float64Array }[];
}

/**
 * Eigen-decomposition of a Hermitian k×k matrix H = A + iB given row-major (im null for a real
 * H), by the shared dense solver (src/linalg/hermitian-eig.ts): k orthonormal eigenvectors
 * however the eigenvalues repeat; imaginary parts are zero for a real H.
 */
export function hermitianEigen(re: Float64Array, im: Float64Array | null, k: number): HermitianEigen {
  if (k === 0) return { values: [], vectors: [] };
  const { values, vre, vim } = denseHermitianEigen(re, im, k);
  const vectors: { re: Float64Array; im: Float64Array }[] = [];
  for (let j = 0; j < k; j++) {
    const v = { re: new Float64Array(k), im: new Float64Array(k) };
    for (let i = 0; i < k; i++) {
      v.re[i] = vre[i * k + j];
      if (vim) v.im[i] = vim[i * k + j];
    }
    vectors.push(v);
  }
  return { values: Array.from(values), vectors };
}

/** a *= s (in place). */
export function scaleInPlace(a: { re: Float64Array; im: Float64Array }, s: number): void {
  for (let i = 0; i < a.re.length; i++) {
    a.re[i] *= s;
    a.im[i] *= s;
  }
}

/** v −= ⟨u, v⟩ u for unit u. */
export function subtractProjection(v: { re: Float64Array; im: Float64Array }, u: { re: Float64Array; im: Float64Array }, real = false): void {
  if (real) {
    // both vectors real (imaginary parts zero): the same result without the zero products
    const vr = v.re;
    const ur = u.re;
    let c = 0;
    for (let i = 0; i < vr.length; i++) c += ur[i] * vr[i];
    for (let i = 0; i < vr.length; i++) vr[i] -= c * ur[i];
    return;
  }
  const [cr, ci] = dot(u, v);
  for (let i = 0; i < v.re.length; i++) {
    v.re[i] -= cr * u.re[i] - ci * u.im[i];
    v.im[i] -= cr * u.im[i] + ci * u.re[i];
  }
}

/**
 * Σ_b y_b · vectors[b] (all on the same dofs). `real`: every vector and y are real (imaginary
 * parts zero), so only real parts are formed (the same numbers).
 */
export function combine(vectors: { re: Float64Array; im: Float64Array }[], y: { re: Float64Array; im: Float64Array }, real = false): { re: Float64Array; im: Float64Array } {
  const len = vectors.length ? vectors[0].re.length : 0;
  const out = { re: new Float64Array(len), im: new Float64Array(len) };
  vectors.forEach((v, b) => {
    const yr = y.re[b];
    const yi = y.im[b];
    if (yr === 0 && yi === 0) return;
    addScaled(out, v, yr, yi, real);
  });
  return out;
}

/** Polar factor W = U Vᴴ of a complex r×r matrix M = U Σ Vᴴ given row-major (im null when real). */
export function polarFactor(re: Float64Array, im: Float64Array | null, r: number): { re: Float64Array; im: Float64Array } {
  const f = im ? 2 : 1;
  const E = new Matrix(f * r, f * r);
  for (let a = 0; a < r; a++)
    for (let b = 0; b < r; b++) {
      E.set(a, b, re[a * r + b]);
      if (im) {
        E.set(a + r, b + r, re[a * r + b]);
        E.set(a, b + r, -im[a * r + b]);
        E.set(a + r, b, im[a * r + b]);
      }
    }
  const svd = new SingularValueDecomposition(E, { computeLeftSingularVectors: true, computeRightSingularVectors: true });
  const W = svd.leftSingularVectors.mmul(svd.rightSingularVectors.transpose());
  const out = { re: new Float64Array(r * r), im: new Float64Array(r * r) };
  for (let a = 0; a < r; a++)
    for (let b = 0; b < r; b++) {
      out.re[a * r + b] = W.get(a, b);
      if (im) out.im[a * r + b] = W.get(a + r, b);
    }
  return out;
}

/** v += (wr + i·wi)·p over all entries (complex axpy; hot, so its own function). */
export function addScaled(v: Cx, p: Cx, wr: number, wi: number, real = false): void {
  const vr = v.re;
  if (real) {
    const pr0 = p.re;
    for (let i = 0; i < vr.length; i++) vr[i] += pr0[i] * wr;
    return;
  }
  const vi = v.im;
  const pr = p.re;
  const pi = p.im;
  for (let i = 0; i < vr.length; i++) {
    vr[i] += pr[i] * wr - pi[i] * wi;
    vi[i] += pr[i] * wi + pi[i] * wr;
  }
}

/** y = A x (complex). */
export function applyA(A: SparseMatrix, x: { re: Float64Array; im: Float64Array }): { re: Float64Array; im: Float64Array } {
  const y = { re: new Float64Array(A.rows), im: new Float64Array(A.rows) };
  for (let r = 0; r < A.rows; r++) {
    let sr = 0;
    let si = 0;
    for (let e = A.rowPtr[r]; e < A.rowPtr[r + 1]; e++) {
      const c = A.colIdx[e];
      const ar = A.re[e];
      const ai = A.im ? A.im[e] : 0;
      sr += ar * x.re[c] - ai * x.im[c];
      si += ar * x.im[c] + ai * x.re[c];
    }
    y.re[r] = sr;
    y.im[r] = si;
  }
  return y;
}

/** y = Aᴴ x (complex). */
export function applyAH(A: SparseMatrix, x: { re: Float64Array; im: Float64Array }): { re: Float64Array; im: Float64Array } {
  const y = { re: new Float64Array(A.cols), im: new Float64Array(A.cols) };
  for (let r = 0; r < A.rows; r++) {
    const xr = x.re[r];
    const xi = x.im[r];
    for (let e = A.rowPtr[r]; e < A.rowPtr[r + 1]; e++) {
      const c = A.colIdx[e];
      const ar = A.re[e];
      const ai = A.im ? -A.im[e] : 0; // conj
      y.re[c] += ar * xr - ai * xi;
      y.im[c] += ar * xi + ai * xr;
    }
  }
  return y;
}

/** The compact vector v (entries on `dofs`) written out at full length n. */
export function expand(n: number, dofs: Int32Array, v: { re: Float64Array; im: Float64Array }): CVec {
  const out = { re: new Float64Array(n), im: new Float64Array(n) };
  dofs.forEach((d, i) => {
    out.re[d] = v.re[i];
    out.im[d] = v.im[i];
  });
  return out;
}
