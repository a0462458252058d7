/**
 * Orthonormalisation of tall blocks by Cholesky QR, twice (CholQR2; common practice): G = XᴴX,
 * G = UᴴU, X ← X·U⁻¹. The two O(k²n) steps (the Gram matrix and the product with U⁻¹) are cut into
 * chunks of rows that the helper thread shares (parallel/helper.ts), each summed in the order of
 * the single-thread code, and (the real Gram and X·T) in blocks of rows that stay in cache; the
 * k×k steps are functions of their own.
 */
import { realDots2Add, realDotsAdd, type Block } from './block.js';
import { CHUNKS, chunkStart, inChunks, sharedFloats, SPLIT_WORK, triangleChunkStart } from './parallel/helper.js';

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
