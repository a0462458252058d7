/**
 * Small complex linear algebra on plain { re, im } arrays, shared by the classifier's steps.
 */
import { cdot as dot, cnorm, type CVec } from '../../linalg/complex.js';
import { hermitianEigen as denseHermitianEigen } from '../../linalg/hermitian-eig.js';
import type { SparseMatrix } from '../../linalg/sparse.js';
import { CHUNKS, chunkStart, floatColumns, inChunks, shareable, SPLIT_WORK } from '../../linalg/parallel/helper.js';

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

/**
 * Whether every entry of a is zero (a plain loop: TypedArray.prototype.every with a callback
 * costs tens of times more on the long vectors of the rest).
 */
export function allZero(a: Float64Array): boolean {
  for (let i = 0; i < a.length; i++) if (a[i] !== 0) return false;
  return true;
}

/** Lists of vectors known to be real without a scan (markReal). */
const realLists = new WeakSet<readonly Cx[]>();

/**
 * Record that every vector of `list` is real and stays so (the basis of a real R's kernel, which
 * the classifier only reads): allReal then answers without reading 2·dofs·count zeros, which
 * for a fresh zero array cost a page fault per 4 kB on every first read.
 */
export function markReal<T extends readonly Cx[]>(list: T): T {
  realLists.add(list);
  return list;
}

/** Whether every vector's imaginary part is zero. */
export function allReal(vectors: readonly Cx[]): boolean {
  if (realLists.has(vectors)) return true;
  for (const v of vectors) if (!allZero(v.im)) return false;
  return true;
}

/** a *= s (in place). */
export function scaleInPlace(a: { re: Float64Array; im: Float64Array }, s: number): void {
  for (let i = 0; i < a.re.length; i++) {
    a.re[i] *= s;
    a.im[i] *= s;
  }
}

/**
 * v ← v/‖v‖. `real`: v's imaginary part is zero and is neither read nor written (the same numbers
 * as the complex form, whose zero terms change no sum: and no zero pages of untouched imaginary
 * parts are faulted in, 50 MB for 255 vectors of 24576 dofs).
 */
export function normaliseInPlace(v: Cx, real: boolean): void {
  if (!real) {
    scaleInPlace(v, 1 / cnorm(v));
    return;
  }
  const x = v.re;
  timesScalar(x, 1 / Math.sqrt(sumOfSquares(x)));
}

// normaliseInPlace's two loops in functions of their own (compiled while the first loop ran, the
// function was thrown away on reaching the second, for every vector)
function sumOfSquares(x: Float64Array): number {
  let s = 0;
  for (let i = 0; i < x.length; i++) s += x[i] ** 2;
  return s;
}

function timesScalar(x: Float64Array, f: number): void {
  for (let i = 0; i < x.length; i++) x[i] *= f;
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

/**
 * Dofs per chunk of `combineColumns` (a multiple of 4): the chunk of every input vector is copied
 * into one contiguous block (r × 128 doubles, 255 KB for r = 255), which stays in the core's
 * cache while every output is formed from it.
 */
const COMBINE_CHUNK = 128;

/**
 * out_b = Σ_a W[a][b]·vectors[a] for b < cols (W row-major r×cols, im null when real). Each
 * entry is the sum over a in increasing order, starting from zero, of the products w·p formed as
 * in `addScaled` (the numbers of one `addScaled` per weight in that order; a zero weight adds a
 * zero, which changes nothing). By chunks of dofs, packed contiguously, four outputs × four dofs
 * at a time when real (16 independent sums, each packed entry and weight loaded once per block),
 * two × two when complex, so the loop is bound neither by memory nor by one chain of additions.
 * `real`: every vector and weight is real (only real parts formed).
 */
export function combineColumns(vectors: Cx[], Wre: Float64Array, Wim: Float64Array | null, cols: number, real = false): Cx[] {
  const r = vectors.length;
  const n = r ? vectors[0].re.length : 0;
  // the outputs are written by the kernel's chunks, which fault their pages in on both threads;
  // the zero imaginary parts of real outputs are faulted in only if something reads them
  const outRe = floatColumns(cols, n, true);
  const outIm = floatColumns(cols, n, !real);
  const out: Cx[] = outRe.map((re, b) => ({ re, im: outIm[b] }));
  if (r === 0 || n === 0 || cols === 0) return out;
  const Pr = vectors.map((v) => v.re);
  const Pi = real ? null : vectors.map((v) => v.im);
  const oR = out.map((v) => v.re);
  const oI = real ? null : out.map((v) => v.im);
  const Wr = shareable(Wre);
  const Wi = real || !Wim ? null : shareable(Wim);
  // every dof of the outputs is formed from that dof of the inputs alone: chunks are independent
  inChunks('combineRows', combineRows, [Pr, Pi, Wr, Wi, cols, oR, oI], r * cols * n < SPLIT_WORK ? 1 : CHUNKS);
  return out;
}

/** Chunk `chunk` of `chunks` of the dofs of combineColumns' outputs (real data when Pi and oI are null). */
export function combineRows(
  Pr: Float64Array[],
  Pi: Float64Array[] | null,
  Wre: Float64Array,
  Wim: Float64Array | null,
  cols: number,
  oR: Float64Array[],
  oI: Float64Array[] | null,
  chunk: number,
  chunks: number,
): void {
  const n = Pr[0].length;
  const j0 = chunkStart(n, chunk, chunks, 4);
  const j1 = chunkStart(n, chunk + 1, chunks, 4);
  const part = (v: Float64Array) => v.subarray(j0, j1);
  if (!Pi || !oI) {
    combineReal(Pr.map(part), Wre, cols, oR.map(part));
    return;
  }
  const P = Pr.map((re, a) => ({ re: part(re), im: part(Pi[a]) }));
  const out = oR.map((re, b) => ({ re: part(re), im: part(oI[b]) }));
  combineComplex(P, Wre, Wim, cols, out);
}

/**
 * The weights of outputs b…b+B−1 interleaved: Wp[B·a + t] = W[a·cols + b + t] (a < r, t < B),
 * for b = 0, B, 2B, … below cols − cols mod B; block b starts at Wp[b·r].
 */
function interleaveWeights(W: Float64Array, r: number, cols: number, B: number): Float64Array {
  const Wp = new Float64Array(r * cols);
  for (let b = 0; b + B - 1 < cols; b += B)
    for (let a = 0; a < r; a++) for (let t = 0; t < B; t++) Wp[b * r + B * a + t] = W[a * cols + b + t];
  return Wp;
}

/**
 * The real case of `combineColumns`: out[b][j] = Σ_a W[a·cols + b]·P[a][j], a in increasing
 * order. The chunk of P is packed as Pk[a·L + j − c0]; blocks of 4 outputs × 4 dofs; the last
 * cols mod 4 outputs one at a time, and the last L mod 4 dofs of a chunk one at a time (the same
 * sums in the same order).
 */
function combineReal(P: Float64Array[], W: Float64Array, cols: number, out: Float64Array[]): void {
  const r = P.length;
  const n = P[0].length;
  const Wp = interleaveWeights(W, r, cols, 4);
  const Pk = new Float64Array(r * Math.min(n, COMBINE_CHUNK));
  const cols4 = cols - (cols % 4);
  for (let c0 = 0; c0 < n; c0 += COMBINE_CHUNK) {
    const L = Math.min(n, c0 + COMBINE_CHUNK) - c0;
    for (let a = 0; a < r; a++) Pk.set(P[a].subarray(c0, c0 + L), a * L);
    const L4 = L - (L % 4);
    for (let b = 0; b < cols4; b += 4) {
      const o0 = out[b];
      const o1 = out[b + 1];
      const o2 = out[b + 2];
      const o3 = out[b + 3];
      const wb = b * r;
      for (let j = 0; j < L4; j += 4) {
        let s00 = 0, s10 = 0, s20 = 0, s30 = 0, s01 = 0, s11 = 0, s21 = 0, s31 = 0;
        let s02 = 0, s12 = 0, s22 = 0, s32 = 0, s03 = 0, s13 = 0, s23 = 0, s33 = 0;
        for (let a = 0, pa = j, wa = wb; a < r; a++, pa += L, wa += 4) {
          const x0 = Pk[pa];
          const x1 = Pk[pa + 1];
          const x2 = Pk[pa + 2];
          const x3 = Pk[pa + 3];
          let w = Wp[wa];
          s00 += x0 * w;
          s10 += x1 * w;
          s20 += x2 * w;
          s30 += x3 * w;
          w = Wp[wa + 1];
          s01 += x0 * w;
          s11 += x1 * w;
          s21 += x2 * w;
          s31 += x3 * w;
          w = Wp[wa + 2];
          s02 += x0 * w;
          s12 += x1 * w;
          s22 += x2 * w;
          s32 += x3 * w;
          w = Wp[wa + 3];
          s03 += x0 * w;
          s13 += x1 * w;
          s23 += x2 * w;
          s33 += x3 * w;
        }
        const J = c0 + j;
        o0[J] = s00;
        o0[J + 1] = s10;
        o0[J + 2] = s20;
        o0[J + 3] = s30;
        o1[J] = s01;
        o1[J + 1] = s11;
        o1[J + 2] = s21;
        o1[J + 3] = s31;
        o2[J] = s02;
        o2[J + 1] = s12;
        o2[J + 2] = s22;
        o2[J + 3] = s32;
        o3[J] = s03;
        o3[J + 1] = s13;
        o3[J + 2] = s23;
        o3[J + 3] = s33;
      }
      for (let j = L4; j < L; j++)
        for (let t = 0; t < 4; t++) {
          let s = 0;
          for (let a = 0; a < r; a++) s += Pk[a * L + j] * Wp[wb + 4 * a + t];
          out[b + t][c0 + j] = s;
        }
    }
    // the last cols mod 4 outputs: one output × four dofs at a time, then the last dofs singly
    for (let b = cols4; b < cols; b++) {
      const o = out[b];
      for (let j = 0; j < L4; j += 4) {
        let s0 = 0;
        let s1 = 0;
        let s2 = 0;
        let s3 = 0;
        for (let a = 0, pa = j; a < r; a++, pa += L) {
          const w = W[a * cols + b];
          s0 += Pk[pa] * w;
          s1 += Pk[pa + 1] * w;
          s2 += Pk[pa + 2] * w;
          s3 += Pk[pa + 3] * w;
        }
        o[c0 + j] = s0;
        o[c0 + j + 1] = s1;
        o[c0 + j + 2] = s2;
        o[c0 + j + 3] = s3;
      }
      for (let j = L4; j < L; j++) {
        let s = 0;
        for (let a = 0; a < r; a++) s += Pk[a * L + j] * W[a * cols + b];
        o[c0 + j] = s;
      }
    }
  }
}

/**
 * The complex case of `combineColumns`: out[b][j] = Σ_a (Wr + i·Wi)[a][b]·P[a][j], a in
 * increasing order, each term added as (p_r·w_r − p_i·w_i) and (p_r·w_i + p_i·w_r) like
 * `addScaled`. Packed chunks as in `combineReal`; blocks of 2 outputs × 2 dofs (8 sums).
 */
function combineComplex(P: Cx[], Wre: Float64Array, Wim: Float64Array | null, cols: number, out: Cx[]): void {
  const r = P.length;
  const n = P[0].re.length;
  const Wi = Wim ?? new Float64Array(Wre.length);
  const Wpr = interleaveWeights(Wre, r, cols, 2);
  const Wpi = interleaveWeights(Wi, r, cols, 2);
  const CH = Math.min(n, COMBINE_CHUNK);
  const Kr = new Float64Array(r * CH);
  const Ki = new Float64Array(r * CH);
  const cols2 = cols - (cols % 2);
  // one entry of one output, from the packed chunk (the leftovers)
  const single = (b: number, j: number, L: number, c0: number) => {
    let sr = 0;
    let si = 0;
    for (let a = 0; a < r; a++) {
      const xr = Kr[a * L + j];
      const xi = Ki[a * L + j];
      const wr = Wre[a * cols + b];
      const wi = Wi[a * cols + b];
      sr += xr * wr - xi * wi;
      si += xr * wi + xi * wr;
    }
    out[b].re[c0 + j] = sr;
    out[b].im[c0 + j] = si;
  };
  for (let c0 = 0; c0 < n; c0 += COMBINE_CHUNK) {
    const L = Math.min(n, c0 + COMBINE_CHUNK) - c0;
    for (let a = 0; a < r; a++) {
      Kr.set(P[a].re.subarray(c0, c0 + L), a * L);
      Ki.set(P[a].im.subarray(c0, c0 + L), a * L);
    }
    const L2 = L - (L % 2);
    for (let b = 0; b < cols2; b += 2) {
      const o0r = out[b].re;
      const o0i = out[b].im;
      const o1r = out[b + 1].re;
      const o1i = out[b + 1].im;
      const wb = b * r;
      for (let j = 0; j < L2; j += 2) {
        let r00 = 0, i00 = 0, r10 = 0, i10 = 0, r01 = 0, i01 = 0, r11 = 0, i11 = 0;
        for (let a = 0, pa = j, wa = wb; a < r; a++, pa += L, wa += 2) {
          const xr0 = Kr[pa];
          const xi0 = Ki[pa];
          const xr1 = Kr[pa + 1];
          const xi1 = Ki[pa + 1];
          let wr = Wpr[wa];
          let wi = Wpi[wa];
          r00 += xr0 * wr - xi0 * wi;
          i00 += xr0 * wi + xi0 * wr;
          r10 += xr1 * wr - xi1 * wi;
          i10 += xr1 * wi + xi1 * wr;
          wr = Wpr[wa + 1];
          wi = Wpi[wa + 1];
          r01 += xr0 * wr - xi0 * wi;
          i01 += xr0 * wi + xi0 * wr;
          r11 += xr1 * wr - xi1 * wi;
          i11 += xr1 * wi + xi1 * wr;
        }
        const J = c0 + j;
        o0r[J] = r00;
        o0i[J] = i00;
        o0r[J + 1] = r10;
        o0i[J + 1] = i10;
        o1r[J] = r01;
        o1i[J] = i01;
        o1r[J + 1] = r11;
        o1i[J + 1] = i11;
      }
      for (let j = L2; j < L; j++) {
        single(b, j, L, c0);
        single(b + 1, j, L, c0);
      }
    }
    for (let b = cols2; b < cols; b++) for (let j = 0; j < L; j++) single(b, j, L, c0);
  }
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
