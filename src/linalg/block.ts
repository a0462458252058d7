/**
 * Blocks of column vectors (real or complex) and the operations the iterative solvers share on
 * them: sparse mat-vec, norms, Gram–Schmidt projection and
 * orthonormalisation (two passes of modified Gram–Schmidt; Cholesky QR is in cholesky-qr.ts), and the small
 * hot-loop kernels (axpy, dot, divide) kept as separate functions so V8 compiles them early.
 */
import type { Uniform } from './random.js';
import { sparseMatVecInto, type SparseMatrix } from './sparse.js';
import { chunkStart, floatColumns, runBeside, shareable, sharedFloats, SPLIT_ENTRIES, touchPages } from './parallel/helper.js';

/** y = A x (y overwritten): the one sparse mat-vec, re-exported under the name the solvers use. */
export const matvec = sparseMatVecInto;


/** q column vectors of length `len`; `im` null for real data. */
export interface Block {
  len: number;
  re: Float64Array[];
  im: Float64Array[] | null;
}

export function randomColumn(b: Block, rand: Uniform): { re: Float64Array; im: Float64Array | null } {
  const re = sharedFloats(b.len);
  const im = b.im ? sharedFloats(b.len) : null;
  rand.fill(re);
  if (im) rand.fill(im);
  return { re, im };
}

export function addRandomColumns(b: Block, count: number, rand: Uniform): void {
  // one buffer for all the columns (the same draws, column by column, as randomColumn)
  const re = floatColumns(count, b.len, true);
  const im = b.im ? floatColumns(count, b.len, true) : null;
  const fill = (from: number, to: number) => {
    for (let c = from; c < to; c++) {
      rand.fill(re[c]);
      if (im) rand.fill(im[c]);
    }
  };
  // the draws are sequential; the helper thread (if any) takes the page faults of the second half
  // of the fresh columns while this one fills the first
  const h = count >> 1;
  if (count * b.len < SPLIT_ENTRIES) fill(0, count);
  else {
    runBeside('touchPages', touchPages, [im ? [...re.slice(h), ...im.slice(h)] : re.slice(h)], () => fill(0, h));
    fill(h, count);
  }
  for (let c = 0; c < count; c++) {
    b.re.push(re[c]);
    if (b.im) b.im.push(im![c]);
  }
}

export function norm2(re: Float64Array, im: Float64Array | null): number {
  let s = 0;
  for (let i = 0; i < re.length; i++) s += re[i] * re[i];
  if (im) for (let i = 0; i < im.length; i++) s += im[i] * im[i];
  return Math.sqrt(s);
}

/**
 * x ← x − Σ_p q_p (q_pᴴ x) over the columns q_p (real parts qRe[p], imaginary parts qIm[p]),
 * for p < count; x is real when xi is null (then the q are real too).
 */
export function projectOut(xr: Float64Array, xi: Float64Array | null, qRe: Float64Array[], qIm: Float64Array[] | null, count: number): void {
  const n = xr.length;
  for (let p = 0; p < count; p++) {
    const qr = qRe[p];
    if (!xi) {
      let c = 0;
      for (let i = 0; i < n; i++) c += qr[i] * xr[i];
      if (c !== 0) for (let i = 0; i < n; i++) xr[i] -= c * qr[i];
    } else {
      const qi = qIm![p];
      let cr = 0;
      let ci = 0;
      for (let i = 0; i < n; i++) {
        cr += qr[i] * xr[i] + qi[i] * xi[i];
        ci += qr[i] * xi[i] - qi[i] * xr[i];
      }
      for (let i = 0; i < n; i++) {
        xr[i] -= cr * qr[i] - ci * qi[i];
        xi[i] -= cr * qi[i] + ci * qr[i];
      }
    }
  }
}

/** Orthonormalise the columns in place (modified Gram–Schmidt, two passes); dependent columns are replaced by random ones. */
export function orthonormalise(b: Block, rand: Uniform): void {
  const q = b.re.length;
  const n = b.len;
  for (let j = 0; j < q; j++) {
    for (let attempt = 0; ; attempt++) {
      const xr = b.re[j];
      const xi = b.im ? b.im[j] : null;
      const n0 = norm2(xr, xi);
      if (n0 > 0 && Number.isFinite(n0)) {
        const s = 1 / n0;
        for (let i = 0; i < n; i++) xr[i] *= s;
        if (xi) for (let i = 0; i < n; i++) xi[i] *= s;
        for (let pass = 0; pass < 2; pass++) projectOut(xr, xi, b.re, b.im, j);
        const n1 = norm2(xr, xi);
        if (n1 > 1e-10 || attempt >= 5) {
          const s1 = 1 / n1;
          for (let i = 0; i < n; i++) xr[i] *= s1;
          if (xi) for (let i = 0; i < n; i++) xi[i] *= s1;
          break;
        }
      }
      const v = randomColumn(b, rand);
      b.re[j] = v.re;
      if (b.im) b.im[j] = v.im!;
    }
  }
}

/**
 * out[offset + k] = Σ_i x[i]·ys[k][i] for every k ≥ from, four columns at a time (independent
 * sums, x read once per four); each sum runs over i in increasing order, as a plain dot product's.
 */
export function realDots(x: Float64Array, ys: Float64Array[], from: number, out: Float64Array, offset: number): void {
  out.fill(0, offset + from, offset + ys.length);
  realDotsAdd(x, ys, from, out, offset, 0, x.length);
}

/** realDots' sums continued over i0 ≤ i < i1: each out[offset + k] is the running sum so far. */
export function realDotsAdd(x: Float64Array, ys: Float64Array[], from: number, out: Float64Array, offset: number, i0: number, i1: number): void {
  let k = from;
  for (; k + 3 < ys.length; k += 4) {
    const y0 = ys[k];
    const y1 = ys[k + 1];
    const y2 = ys[k + 2];
    const y3 = ys[k + 3];
    let s0 = out[offset + k];
    let s1 = out[offset + k + 1];
    let s2 = out[offset + k + 2];
    let s3 = out[offset + k + 3];
    for (let i = i0; i < i1; i++) {
      const v = x[i];
      s0 += v * y0[i];
      s1 += v * y1[i];
      s2 += v * y2[i];
      s3 += v * y3[i];
    }
    out[offset + k] = s0;
    out[offset + k + 1] = s1;
    out[offset + k + 2] = s2;
    out[offset + k + 3] = s3;
  }
  if (k < ys.length) realDotsRest(x, ys, k, out, offset, i0, i1);
}

// The last columns (fewer than four) of realDotsAdd and realDots2Add, in functions of their own:
// code compiled while the main loop ran had never seen these loops and was thrown away on
// reaching them, call after call (V8's "insufficient type feedback" deoptimisation).

function realDotsRest(x: Float64Array, ys: Float64Array[], from: number, out: Float64Array, offset: number, i0: number, i1: number): void {
  for (let k = from; k < ys.length; k++) {
    const y = ys[k];
    let s = out[offset + k];
    for (let i = i0; i < i1; i++) s += x[i] * y[i];
    out[offset + k] = s;
  }
}

function realDots2Rest(x0: Float64Array, x1: Float64Array, ys: Float64Array[], from: number, out0: Float64Array, offset0: number, out1: Float64Array, offset1: number, i0: number, i1: number): void {
  for (let k = from; k < ys.length; k++) {
    const y = ys[k];
    let s = out0[offset0 + k];
    let t = out1[offset1 + k];
    for (let i = i0; i < i1; i++) {
      s += x0[i] * y[i];
      t += x1[i] * y[i];
    }
    out0[offset0 + k] = s;
    out1[offset1 + k] = t;
  }
}

/**
 * The running sums of realDots for two vectors at once, over i0 ≤ i < i1: out0[offset0 + k] +=
 * x0·ys[k] and out1[offset1 + k] += x1·ys[k] for every k ≥ from, as 2×4 blocks (eight independent
 * sums; six loads per eight products instead of five per four). Each sum continues over i in
 * increasing order, so the results are those of one realDots over all i, bit for bit.
 */
export function realDots2Add(x0: Float64Array, x1: Float64Array, ys: Float64Array[], from: number, out0: Float64Array, offset0: number, out1: Float64Array, offset1: number, i0: number, i1: number): void {
  let k = from;
  for (; k + 3 < ys.length; k += 4) {
    const y0 = ys[k];
    const y1 = ys[k + 1];
    const y2 = ys[k + 2];
    const y3 = ys[k + 3];
    let s0 = out0[offset0 + k];
    let s1 = out0[offset0 + k + 1];
    let s2 = out0[offset0 + k + 2];
    let s3 = out0[offset0 + k + 3];
    let t0 = out1[offset1 + k];
    let t1 = out1[offset1 + k + 1];
    let t2 = out1[offset1 + k + 2];
    let t3 = out1[offset1 + k + 3];
    for (let i = i0; i < i1; i++) {
      const u = x0[i];
      const v = x1[i];
      const p0 = y0[i];
      const p1 = y1[i];
      const p2 = y2[i];
      const p3 = y3[i];
      s0 += u * p0;
      s1 += u * p1;
      s2 += u * p2;
      s3 += u * p3;
      t0 += v * p0;
      t1 += v * p1;
      t2 += v * p2;
      t3 += v * p3;
    }
    out0[offset0 + k] = s0;
    out0[offset0 + k + 1] = s1;
    out0[offset0 + k + 2] = s2;
    out0[offset0 + k + 3] = s3;
    out1[offset1 + k] = t0;
    out1[offset1 + k + 1] = t1;
    out1[offset1 + k + 2] = t2;
    out1[offset1 + k + 3] = t3;
  }
  if (k < ys.length) realDots2Rest(x0, x1, ys, k, out0, offset0, out1, offset1, i0, i1);
}

export function identityBlock(dim: number, complex: boolean): Block {
  const b: Block = { len: dim, re: [], im: complex ? [] : null };
  for (let j = 0; j < dim; j++) {
    const v = new Float64Array(dim);
    v[j] = 1;
    b.re.push(v);
    if (b.im) b.im.push(new Float64Array(dim));
  }
  return b;
}

/**
 * Columns of `cand` made orthonormal against `locked` and each other (two passes of modified
 * Gram–Schmidt); a column whose remainder is at most 1e-10 of its norm is dropped.
 */
export function orthonormalDrop(cand: Block, locked: Block, residuals?: number[]): Block {
  const out: Block = { len: cand.len, re: [], im: cand.im ? [] : null };
  const n = cand.len;
  const basisRe = [...locked.re];
  const basisIm = locked.im ? [...locked.im] : null;
  for (let j = 0; j < cand.re.length; j++) {
    const xr = cand.re[j].slice();
    const xi = cand.im ? cand.im[j].slice() : null;
    const n0 = norm2(xr, xi);
    if (!(n0 > 0) || !Number.isFinite(n0)) continue;
    for (let i = 0; i < n; i++) xr[i] /= n0;
    if (xi) for (let i = 0; i < n; i++) xi[i] /= n0;
    for (let pass = 0; pass < 2; pass++) projectOut(xr, xi, basisRe, basisIm, basisRe.length);
    const n1 = norm2(xr, xi);
    if (!(n1 > 1e-10)) continue;
    residuals?.push(n0 * n1);
    for (let i = 0; i < n; i++) xr[i] /= n1;
    if (xi) for (let i = 0; i < n; i++) xi[i] /= n1;
    basisRe.push(xr);
    out.re.push(xr);
    if (xi) {
      basisIm!.push(xi);
      out.im!.push(xi);
    }
  }
  return out;
}

/**
 * y += a·x over n entries. A small function of its own: the caller runs once and stays
 * unoptimised for a long time, while this is hot from the first calls and is compiled early.
 */
export function axpy(y: Float64Array, x: Float64Array, a: number, n: number): void {
  for (let t = 0; t < n; t++) y[t] += a * x[t];
}

/** s + Σ x_t y_t (same order as a plain loop; small and hot, like axpy). */
export function dotInto(s: number, x: Float64Array, y: Float64Array, n: number): number {
  for (let t = 0; t < n; t++) s += x[t] * y[t];
  return s;
}

/**
 * Chunk `chunk` of `chunks` of the columns (re[j], im[j]) each divided by its norm (left alone
 * when it is zero): the columns of a block solve scaled to unit length, on either thread.
 */
export function unitColumns(re: Float64Array[], im: Float64Array[] | null, chunk: number, chunks: number): void {
  const j1 = chunkStart(re.length, chunk + 1, chunks, 1);
  for (let j = chunkStart(re.length, chunk, chunks, 1); j < j1; j++) {
    const nr = norm2(re[j], im ? im[j] : null) || 1;
    divide(re[j], nr, re[j].length);
    if (im) divide(im[j], nr, im[j].length);
  }
}

/** Chunk `chunk` of `chunks` of the columns: out[j] = ‖A x_j‖ for x_j = (re[j], im[j]). */
export function residualNorms(A: SparseMatrix, re: Float64Array[], im: Float64Array[] | null, out: Float64Array, chunk: number, chunks: number): void {
  const yr = new Float64Array(A.rows);
  const yi = im || A.im ? new Float64Array(A.rows) : null;
  const j1 = chunkStart(re.length, chunk + 1, chunks, 1);
  for (let j = chunkStart(re.length, chunk, chunks, 1); j < j1; j++) {
    matvec(A, re[j], im ? im[j] : null, yr, yi);
    out[j] = norm2(yr, yi);
  }
}

/** A with its arrays on shared memory when a helper thread is installed (copies where they are not). */
export function shareableMatrix(A: SparseMatrix): SparseMatrix {
  return { rows: A.rows, cols: A.cols, rowPtr: shareable(A.rowPtr), colIdx: shareable(A.colIdx), re: shareable(A.re), im: A.im ? shareable(A.im) : null };
}

/** x /= d entrywise. */
export function divide(x: Float64Array, d: number, n: number): void {
  for (let t = 0; t < n; t++) x[t] /= d;
}

/** ‖QᴴQ − I‖_F over the first `cols` columns of a block (the one orthonormality measure). */
export function orthonormalityDefect(Q: Block, cols: number): number {
  let s = 0;
  for (let a = 0; a < cols; a++) {
    for (let b = a; b < cols; b++) {
      let re = 0;
      let im = 0;
      const ar = Q.re[a];
      const br = Q.re[b];
      const ai = Q.im ? Q.im[a] : null;
      const bi = Q.im ? Q.im[b] : null;
      for (let i = 0; i < Q.len; i++) {
        re += ar[i] * br[i];
        if (ai && bi) {
          re += ai[i] * bi[i];
          im += ar[i] * bi[i] - ai[i] * br[i];
        }
      }
      const d = (re - (a === b ? 1 : 0)) ** 2 + im * im;
      s += a === b ? d : 2 * d;
    }
  }
  return Math.sqrt(s);
}
