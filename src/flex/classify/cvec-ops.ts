/**
 * Small complex linear algebra on plain { re, im } arrays, shared by the classifier's steps.
 */
import { Matrix, SingularValueDecomposition } from 'ml-matrix';
import { cdot as dot, type CVec } from '../../linalg/complex.js';
import { hermitianEigen as denseHermitianEigen } from '../../linalg/hermitian-eig.js';
import type { SparseMatrix } from '../../linalg/sparse.js';

/** A complex vector as two real arrays. */
export type Cx = { re: Float64Array; im: Float64Array };

/**
 * A subspace of span Ψ (Ψ a list of orthonormal vectors) as the columns of Ψ·E: E row-major
 * r×m with orthonormal columns (im null when real). Steps pass such coefficients instead of
 * forming the m vectors.
 */
export interface SpanPart {
  E: { re: Float64Array; im: Float64Array | null };
  m: number;
}

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

/** Dofs per chunk of `combineColumns`: a chunk of every input vector stays in the core's cache. */
const COMBINE_CHUNK = 512;

/**
 * out_b = Σ_a W[a][b]·vectors[a] for b < cols (W row-major r×cols, im null when real). Each
 * entry is the sum over a in increasing order, the numbers of one `addScaled` per weight in that
 * order (a zero weight adds a zero). Real: by chunks of dofs (a chunk of every input stays in
 * cache), four outputs × four dofs at a time (16 independent sums, each input entry and weight
 * loaded once per block), so the loop is bound neither by memory nor by one chain of additions.
 * `real`: every vector and weight is real (only real parts formed).
 */
export function combineColumns(vectors: Cx[], Wre: Float64Array, Wim: Float64Array | null, cols: number, real = false): Cx[] {
  const r = vectors.length;
  const n = r ? vectors[0].re.length : 0;
  const out: Cx[] = Array.from({ length: cols }, () => ({ re: new Float64Array(n), im: new Float64Array(n) }));
  if (real) {
    combineReal(
      vectors.map((v) => v.re),
      Wre,
      cols,
      out.map((v) => v.re),
    );
    return out;
  }
  for (let c0 = 0; c0 < n; c0 += COMBINE_CHUNK) {
    const c1 = Math.min(n, c0 + COMBINE_CHUNK);
    for (let b = 0; b < cols; b++) {
      const vr = out[b].re;
      const vi = out[b].im;
      for (let a = 0; a < r; a++) {
        const wr = Wre[a * cols + b];
        const wi = Wim ? Wim[a * cols + b] : 0;
        if (wr === 0 && wi === 0) continue;
        const pr = vectors[a].re;
        const pi = vectors[a].im;
        for (let i = c0; i < c1; i++) {
          vr[i] += pr[i] * wr - pi[i] * wi;
          vi[i] += pr[i] * wi + pi[i] * wr;
        }
      }
    }
  }
  return out;
}

/** The real case of `combineColumns`: out[b][j] = Σ_a W[a·cols + b]·P[a][j], a in increasing order. */
function combineReal(P: Float64Array[], W: Float64Array, cols: number, out: Float64Array[]): void {
  const r = P.length;
  const n = r ? P[0].length : 0;
  const Wp = new Float64Array(4 * r);
  for (let c0 = 0; c0 < n; c0 += COMBINE_CHUNK) {
    const c1 = Math.min(n, c0 + COMBINE_CHUNK);
    let b = 0;
    for (; b + 3 < cols; b += 4) {
      for (let a = 0; a < r; a++) for (let t = 0; t < 4; t++) Wp[4 * a + t] = W[a * cols + b + t];
      const o0 = out[b];
      const o1 = out[b + 1];
      const o2 = out[b + 2];
      const o3 = out[b + 3];
      let j = c0;
      for (; j + 3 < c1; j += 4) {
        let s00 = 0, s10 = 0, s20 = 0, s30 = 0, s01 = 0, s11 = 0, s21 = 0, s31 = 0;
        let s02 = 0, s12 = 0, s22 = 0, s32 = 0, s03 = 0, s13 = 0, s23 = 0, s33 = 0;
        for (let a = 0; a < r; a++) {
          const p = P[a];
          const w0 = Wp[4 * a];
          const w1 = Wp[4 * a + 1];
          const w2 = Wp[4 * a + 2];
          const w3 = Wp[4 * a + 3];
          const x0 = p[j];
          const x1 = p[j + 1];
          const x2 = p[j + 2];
          const x3 = p[j + 3];
          s00 += x0 * w0;
          s10 += x1 * w0;
          s20 += x2 * w0;
          s30 += x3 * w0;
          s01 += x0 * w1;
          s11 += x1 * w1;
          s21 += x2 * w1;
          s31 += x3 * w1;
          s02 += x0 * w2;
          s12 += x1 * w2;
          s22 += x2 * w2;
          s32 += x3 * w2;
          s03 += x0 * w3;
          s13 += x1 * w3;
          s23 += x2 * w3;
          s33 += x3 * w3;
        }
        o0[j] = s00;
        o0[j + 1] = s10;
        o0[j + 2] = s20;
        o0[j + 3] = s30;
        o1[j] = s01;
        o1[j + 1] = s11;
        o1[j + 2] = s21;
        o1[j + 3] = s31;
        o2[j] = s02;
        o2[j + 1] = s12;
        o2[j + 2] = s22;
        o2[j + 3] = s32;
        o3[j] = s03;
        o3[j + 1] = s13;
        o3[j + 2] = s23;
        o3[j + 3] = s33;
      }
      for (; j < c1; j++)
        for (let t = 0; t < 4; t++) {
          let s = 0;
          for (let a = 0; a < r; a++) s += P[a][j] * Wp[4 * a + t];
          out[b + t][j] = s;
        }
    }
    // the last cols mod 4 outputs: one input at a time over the chunk (the same sums, in order)
    for (; b < cols; b++) {
      const o = out[b];
      for (let a = 0; a < r; a++) {
        const w = W[a * cols + b];
        const p = P[a];
        for (let j = c0; j < c1; j++) o[j] += p[j] * w;
      }
    }
  }
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
