/**
 * Blocks of column vectors (real or complex) and the operations the iterative solvers share on
 * them: sparse mat-vec, norms, Gram–Schmidt projection and
 * orthonormalisation (two passes of modified Gram–Schmidt, or Cholesky QR twice), and the small
 * hot-loop kernels (axpy, dot, divide) kept as separate functions so V8 compiles them early.
 */
import type { Uniform } from './random.js';
import { sparseMatVecInto, type SparseMatrix } from './sparse.js';
import { CHUNKS, chunkStart, floatColumns, inChunks, runBeside, shareable, sharedFloats, SPLIT_WORK, touchPages, triangleChunkStart } from './parallel/helper.js';

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
  if (count * b.len < SPLIT_WORK / 16) fill(0, count);
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

/**
 * G[a][b] = Σ_i conj(x_a[i])·x_b[i] for a ≤ b (the upper triangle of the row-major k×k G, which
 * is overwritten), straight from the columns: four columns b at a time for real data and two for
 * complex, so each x_a is read once per group (the row-by-row form streamed all of G past every
 * row and ran 2.3× slower on 24576×255). Each entry is summed over i in ascending order, as before.
 */
function gramUpper(X: Block, Gr: Float64Array, Gi: Float64Array | null): void {
  const k = X.re.length;
  const n = X.len;
  // chunks of rows of about equal numbers of entries, starting at even rows (the real kernel's pairs)
  inChunks('gramRows', gramRows, [X.re, X.im, Gr, Gi], k * k * n < SPLIT_WORK ? 1 : CHUNKS);
}

/** Chunk `chunk` of `chunks` of gramUpper's rows of G (about equal numbers of entries). */
export function gramRows(R: Float64Array[], I: Float64Array[] | null, Gr: Float64Array, Gi: Float64Array | null, chunk: number, chunks: number): void {
  const k = R.length;
  const n = R.length ? R[0].length : 0;
  const a0 = triangleChunkStart(k, chunk, chunks, 2);
  const a1 = triangleChunkStart(k, chunk + 1, chunks, 2);
  if (!I || !Gi) {
    // rows a and a + 1 together from column a + 1 on, and G_aa apart; the sums run on block by
    // block of rows of X that stays in cache (the same sums, in the same order)
    for (let a = a0; a < a1; a++) Gr.fill(0, a * k + a, a * k + k);
    const B = rowBlock(k, false);
    for (let i0 = 0; i0 < n; i0 += B) {
      const i1 = Math.min(n, i0 + B);
      for (let a = a0; a < a1; a += 2) {
        const g = a * k;
        if (a + 1 === a1) {
          realDotsAdd(R[a], R, a, Gr, g, i0, i1);
          break;
        }
        let d = Gr[g + a];
        const x = R[a];
        for (let i = i0; i < i1; i++) d += x[i] * x[i];
        Gr[g + a] = d;
        realDots2Add(R[a], R[a + 1], R, a + 1, Gr, g, Gr, g + k, i0, i1);
      }
    }
    return;
  }
  for (let a = a0; a < a1; a++) {
    const ar = R[a];
    const g = a * k;
    let b = a;
    const ai = I[a];
    for (; b < k; b += 2) {
      const pair = b + 1 < k;
      const r0 = R[b];
      const i0 = I[b];
      const r1 = pair ? R[b + 1] : r0;
      const i1 = pair ? I[b + 1] : i0;
      let sr0 = 0;
      let si0 = 0;
      let sr1 = 0;
      let si1 = 0;
      for (let i = 0; i < n; i++) {
        const vr = ar[i];
        const vi = ai[i];
        sr0 += vr * r0[i] + vi * i0[i];
        si0 += vr * i0[i] - vi * r0[i];
        sr1 += vr * r1[i] + vi * i1[i];
        si1 += vr * i1[i] - vi * r1[i];
      }
      Gr[g + b] = sr0;
      Gi[g + b] = si0;
      if (pair) {
        Gr[g + b + 1] = sr1;
        Gi[g + b + 1] = si1;
      }
    }
  }
}

/**
 * X ← X·T in place for an upper triangular T (row-major k×k, strict lower triangle zero):
 * x_b = Σ_{a ≤ b} T_ab x_a. Columns are formed from the last one down, four at a time into
 * scratch columns, since x_b needs only the x_a with a ≤ b, which are not yet overwritten; each
 * x_a is read once per group of four. Each entry is summed over a in ascending order, as before.
 */
function timesUpper(X: Block, Tr: Float64Array, Ti: Float64Array | null): void {
  const k = X.re.length;
  const n = X.len;
  // each row of X is formed from that row alone: chunks of rows are independent
  inChunks('timesUpperRows', timesUpperRows, [X.re, X.im, Tr, Ti], k * k * n < SPLIT_WORK ? 1 : CHUNKS);
}

/**
 * Rows per block of the blocked kernels: every column's block (k·rows doubles) stays in a 512 kB
 * second-level cache while it is reused, instead of streaming whole columns from memory for every
 * group of outputs (which made the kernels memory-bound: the two threads slowed each other).
 */
function rowBlock(k: number, complex: boolean): number {
  return Math.max(64, 4 * Math.floor(65536 / ((complex ? 2 : 1) * Math.max(1, k)) / 4));
}

/** Chunk `chunk` of `chunks` of timesUpper's rows of X ← X·T, in blocks of rows that stay in cache. */
export function timesUpperRows(X: Float64Array[], XI: Float64Array[] | null, Tr: Float64Array, Ti: Float64Array | null, chunk: number, chunks: number): void {
  const k = X.length;
  const len = k ? X[0].length : 0;
  const i0 = chunkStart(len, chunk, chunks, 4);
  const i1 = chunkStart(len, chunk + 1, chunks, 4);
  const B = rowBlock(k, XI !== null);
  for (let b0 = i0; b0 < i1; b0 += B) {
    const b1 = Math.min(i1, b0 + B);
    timesUpperBlock(
      X.map((x) => x.subarray(b0, b1)),
      XI ? XI.map((x) => x.subarray(b0, b1)) : null,
      Tr,
      Ti,
    );
  }
}

/** X ← X·T on every row of the (sub)columns R (I). */
function timesUpperBlock(R: Float64Array[], I: Float64Array[] | null, Tr: Float64Array, Ti: Float64Array | null): void {
  const k = R.length;
  const n = k ? R[0].length : 0;
  const complex = I !== null && Ti !== null;
  const width = complex ? 2 : 4;
  const bufR = Array.from({ length: Math.min(width, k) }, () => new Float64Array(n));
  const bufI = complex ? Array.from({ length: Math.min(width, k) }, () => new Float64Array(n)) : null;
  for (let hi = k; hi > 0; ) {
    const lo = Math.max(0, hi - width);
    const w = hi - lo;
    for (let j = 0; j < w; j++) {
      bufR[j].fill(0);
      if (bufI) bufI[j].fill(0);
    }
    if (!complex && w === 4) {
      const [y0, y1, y2, y3] = bufR;
      let a = 0;
      // four inputs at a time: each output entry still adds T_ab·x_a in ascending a (left to
      // right), so the sums are those of one input at a time, bit for bit
      for (; a + 3 < hi; a += 4) {
        const x0 = R[a];
        const x1 = R[a + 1];
        const x2 = R[a + 2];
        const x3 = R[a + 3];
        const t = a * k + lo;
        const t00 = Tr[t];
        const t01 = Tr[t + 1];
        const t02 = Tr[t + 2];
        const t03 = Tr[t + 3];
        const t10 = Tr[t + k];
        const t11 = Tr[t + k + 1];
        const t12 = Tr[t + k + 2];
        const t13 = Tr[t + k + 3];
        const t20 = Tr[t + 2 * k];
        const t21 = Tr[t + 2 * k + 1];
        const t22 = Tr[t + 2 * k + 2];
        const t23 = Tr[t + 2 * k + 3];
        const t30 = Tr[t + 3 * k];
        const t31 = Tr[t + 3 * k + 1];
        const t32 = Tr[t + 3 * k + 2];
        const t33 = Tr[t + 3 * k + 3];
        for (let i = 0; i < n; i++) {
          const v0 = x0[i];
          const v1 = x1[i];
          const v2 = x2[i];
          const v3 = x3[i];
          y0[i] = y0[i] + v0 * t00 + v1 * t10 + v2 * t20 + v3 * t30;
          y1[i] = y1[i] + v0 * t01 + v1 * t11 + v2 * t21 + v3 * t31;
          y2[i] = y2[i] + v0 * t02 + v1 * t12 + v2 * t22 + v3 * t32;
          y3[i] = y3[i] + v0 * t03 + v1 * t13 + v2 * t23 + v3 * t33;
        }
      }
      for (; a < hi; a++) {
        const x = R[a];
        const t = a * k + lo;
        const t0 = Tr[t];
        const t1 = Tr[t + 1];
        const t2 = Tr[t + 2];
        const t3 = Tr[t + 3];
        for (let i = 0; i < n; i++) {
          const v = x[i];
          y0[i] += v * t0;
          y1[i] += v * t1;
          y2[i] += v * t2;
          y3[i] += v * t3;
        }
      }
    } else if (!complex) {
      for (let j = 0; j < w; j++) {
        const y = bufR[j];
        for (let a = 0; a <= lo + j; a++) {
          const x = R[a];
          const tb = Tr[a * k + lo + j];
          for (let i = 0; i < n; i++) y[i] += x[i] * tb;
        }
      }
    } else if (w === 2) {
      const [yr0, yr1] = bufR;
      const [yi0, yi1] = bufI!;
      for (let a = 0; a < hi; a++) {
        const xr = R[a];
        const xi = I![a];
        const t = a * k + lo;
        const tr0 = Tr[t];
        const ti0 = Ti![t];
        const tr1 = Tr[t + 1];
        const ti1 = Ti![t + 1];
        for (let i = 0; i < n; i++) {
          const mr = xr[i];
          const mi = xi[i];
          yr0[i] += mr * tr0 - mi * ti0;
          yi0[i] += mr * ti0 + mi * tr0;
          yr1[i] += mr * tr1 - mi * ti1;
          yi1[i] += mr * ti1 + mi * tr1;
        }
      }
    } else {
      for (let j = 0; j < w; j++) {
        const yr = bufR[j];
        const yi = bufI![j];
        const b = lo + j;
        for (let a = 0; a <= b; a++) {
          const xr = R[a];
          const xi = I![a];
          const tr = Tr[a * k + b];
          const ti = Ti![a * k + b];
          for (let i = 0; i < n; i++) {
            const mr = xr[i];
            const mi = xi[i];
            yr[i] += mr * tr - mi * ti;
            yi[i] += mr * ti + mi * tr;
          }
        }
      }
    }
    for (let j = 0; j < w; j++) {
      R[lo + j].set(bufR[j]);
      if (bufI) I![lo + j].set(bufI[j]);
    }
    hi = lo;
  }
}

// The k×k steps of cholQr2, each in a function of its own (inside cholQr2 the nested loops were
// compiled mid-loop and left at their ends, and took half a second for k = 255).

/**
 * Cholesky G = Uᴴ U with U upper triangular (U = Lᴴ), in place in the upper triangle of the
 * row-major k×k G (imaginary parts Gi, or null); false when a pivot is not above 1e-14·max G_aa.
 */
function choleskyUpper(Gr: Float64Array, Gi: Float64Array | null, k: number): boolean {
  let maxDiag = 0;
  for (let a = 0; a < k; a++) maxDiag = Math.max(maxDiag, Gr[a * k + a]);
  for (let a = 0; a < k; a++) {
    let d = Gr[a * k + a];
    for (let l = 0; l < a; l++) d -= Gr[l * k + a] ** 2 + (Gi ? Gi[l * k + a] ** 2 : 0);
    if (!(d > 1e-14 * maxDiag)) return false;
    const u = Math.sqrt(d);
    Gr[a * k + a] = u;
    if (Gi) Gi[a * k + a] = 0;
    if (Gi) choleskyRowComplex(Gr, Gi, k, a, u);
    else choleskyRowReal(Gr, k, a, u);
  }
  return true;
}

/** U_ab = (G_ab − Σ_l U_la U_lb) / U_aa for b > a (real). */
function choleskyRowReal(Gr: Float64Array, k: number, a: number, u: number): void {
  for (let b = a + 1; b < k; b++) {
    let sr = Gr[a * k + b];
    for (let l = 0; l < a; l++) sr -= Gr[l * k + a] * Gr[l * k + b];
    Gr[a * k + b] = sr / u;
  }
}

/** U_ab = (G_ab − Σ_l conj(U_la) U_lb) / U_aa for b > a (complex). */
function choleskyRowComplex(Gr: Float64Array, Gi: Float64Array, k: number, a: number, u: number): void {
  for (let b = a + 1; b < k; b++) {
    let sr = Gr[a * k + b];
    let si = Gi[a * k + b];
    for (let l = 0; l < a; l++) {
      const ur = Gr[l * k + a];
      const vr = Gr[l * k + b];
      const ui = Gi[l * k + a];
      const vi = Gi[l * k + b];
      sr -= ur * vr + ui * vi;
      si -= ur * vi - ui * vr;
    }
    Gr[a * k + b] = sr / u;
    Gi[a * k + b] = si / u;
  }
}

/** T = U⁻¹ (upper triangular) by columns, U T = I; U in the upper triangle of (Gr, Gi). */
function invertUpper(Gr: Float64Array, Gi: Float64Array | null, k: number, Tr: Float64Array, Ti: Float64Array | null): void {
  for (let b = 0; b < k; b++) {
    Tr[b * k + b] = 1 / Gr[b * k + b];
    if (Ti && Gi) invertColumnComplex(Gr, Gi, k, Tr, Ti, b);
    else invertColumnReal(Gr, k, Tr, b);
  }
}

function invertColumnReal(Gr: Float64Array, k: number, Tr: Float64Array, b: number): void {
  for (let a = b - 1; a >= 0; a--) {
    let sr = 0;
    for (let l = a + 1; l <= b; l++) sr += Gr[a * k + l] * Tr[l * k + b];
    const inv = 1 / Gr[a * k + a];
    Tr[a * k + b] = -sr * inv;
  }
}

function invertColumnComplex(Gr: Float64Array, Gi: Float64Array, k: number, Tr: Float64Array, Ti: Float64Array, b: number): void {
  for (let a = b - 1; a >= 0; a--) {
    let sr = 0;
    let si = 0;
    for (let l = a + 1; l <= b; l++) {
      const ur = Gr[a * k + l];
      const tr = Tr[l * k + b];
      const ui = Gi[a * k + l];
      const ti = Ti[l * k + b];
      sr += ur * tr - ui * ti;
      si += ur * ti + ui * tr;
    }
    const inv = 1 / Gr[a * k + a];
    Tr[a * k + b] = -sr * inv;
    Ti[a * k + b] = -si * inv;
  }
}

/**
 * Orthonormalise the columns in place by Cholesky QR, twice (CholQR2; common practice for tall
 * blocks): G = XᴴX, G = UᴴU, X ← X·U⁻¹. Returns false (X unchanged or partly done, to be redone
 * by Gram–Schmidt) when G is not numerically positive definite.
 */
export function cholQr2(X: Block): boolean {
  const k = X.re.length;
  if (k === 0) return true;
  const complex = X.im !== null;
  for (let pass = 0; pass < 2; pass++) {
    const Gr = sharedFloats(k * k, 0);
    const Gi = complex ? sharedFloats(k * k, 0) : null;
    gramUpper(X, Gr, Gi);
    if (!choleskyUpper(Gr, Gi, k)) return false;
    const Tr = sharedFloats(k * k, 0);
    const Ti = complex ? sharedFloats(k * k, 0) : null;
    invertUpper(Gr, Gi, k, Tr, Ti);
    timesUpper(X, Tr, Ti);
  }
  return true;
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
