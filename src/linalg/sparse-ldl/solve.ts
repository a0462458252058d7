/**
 * Solves with the sparse LDLᴴ factor (numeric.ts): chunks of up to 32 right-hand sides laid out
 * row-major, forward and backward through the supernodes' panels (solve-kernels.ts). A block of
 * many columns is cut into chunks of columns that the helper thread shares; each column's
 * arithmetic is the same in any chunk.
 */
import { chunkStart } from '../parallel/helper.js';
import { backwardComplex, backwardReal, forwardComplex, forwardReal } from './solve-kernels.js';

/** What a solve reads of a factor (typed arrays only, so that the helper thread can share them). */
export interface SolveData {
  perm: Int32Array;
  superStart: Int32Array;
  rowPtr: Int32Array;
  superRows: Int32Array;
  maxFront: number;
  panelPtr: Float64Array;
  re: Float64Array;
  im: Float64Array | null;
  d: Float64Array;
}

/** This thread's chunk buffers (real and imaginary parts), grown on demand and reused: fresh memory costs a page fault per 4 KB. */
let bufR = new Float64Array(0);
let bufI = new Float64Array(0);

/** Solve in place for chunk `chunk` of `chunks` of the columns (see SparseLdlFactor.solveBlock), on this thread. */
export function solveColumns(f: SolveData, all: Float64Array[], allIm: Float64Array[] | null, chunk: number, chunks: number): void {
  const first = chunkStart(all.length, chunk, chunks, 4);
  const end = chunkStart(all.length, chunk + 1, chunks, 4);
  const cols = all.slice(first, end);
  const colsIm = allIm ? allIm.slice(first, end) : null;
  const q = cols.length;
  if (q === 0) return;
  const complex = f.im !== null || colsIm !== null;
  const n = f.perm.length;
  // buffers of equal width (multiples of 4 where possible: the kernels block four columns)
  const buffers = Math.ceil(q / CHUNK);
  const width = Math.min(CHUNK, 4 * Math.ceil(q / buffers / 4));
  const words = n * Math.min(width, q);
  if (bufR.length < words) bufR = new Float64Array(words);
  if (complex && bufI.length < words) bufI = new Float64Array(words);
  const XR = bufR;
  const XI = complex ? bufI : null;
  for (let c0 = 0; c0 < q; c0 += width) {
    const c = Math.min(width, q - c0);
    gather(cols, c0, c, f.perm, XR);
    if (XI) gather(colsIm!, c0, c, f.perm, XI);
    if (XI && f.im) solveChunkComplex(f, XR, XI, c);
    else {
      solveChunkReal(f, XR, c);
      if (XI) solveChunkReal(f, XI, c);
    }
    scatter(cols, c0, c, f.perm, XR);
    if (XI) scatter(colsIm!, c0, c, f.perm, XI);
  }
}

/** Row offsets (new index × c) of supernode s's front rows into `off`. */
function offsets(f: SolveData, s: number, c: number, off: Int32Array): void {
  const r0 = f.rowPtr[s];
  const nf = f.rowPtr[s + 1] - r0;
  for (let t = 0; t < nf; t++) off[t] = f.superRows[r0 + t] * c;
}

function solveChunkReal(f: SolveData, X: Float64Array, c: number): void {
  const { superStart, rowPtr, maxFront, panelPtr } = f;
  const P = f.re;
  const ns = superStart.length - 1;
  const off = new Int32Array(maxFront);
  for (let s = 0; s < ns; s++) {
    offsets(f, s, c, off);
    forwardReal(P, panelPtr[s], superStart[s + 1] - superStart[s], rowPtr[s + 1] - rowPtr[s], off, X, c);
  }
  const d = f.d;
  for (let i = 0, o = 0; i < d.length; i++) {
    const inv = 1 / d[i];
    for (let r = 0; r < c; r++, o++) X[o] *= inv;
  }
  for (let s = ns - 1; s >= 0; s--) {
    offsets(f, s, c, off);
    backwardReal(P, panelPtr[s], superStart[s + 1] - superStart[s], rowPtr[s + 1] - rowPtr[s], off, X, c);
  }
}

function solveChunkComplex(f: SolveData, XR: Float64Array, XI: Float64Array, c: number): void {
  const { superStart, rowPtr, maxFront, panelPtr } = f;
  const PR = f.re;
  const PI = f.im!;
  const ns = superStart.length - 1;
  const off = new Int32Array(maxFront);
  for (let s = 0; s < ns; s++) {
    offsets(f, s, c, off);
    forwardComplex(PR, PI, panelPtr[s], superStart[s + 1] - superStart[s], rowPtr[s + 1] - rowPtr[s], off, XR, XI, c);
  }
  const d = f.d;
  for (let i = 0, o = 0; i < d.length; i++) {
    const inv = 1 / d[i];
    for (let r = 0; r < c; r++, o++) {
      XR[o] *= inv;
      XI[o] *= inv;
    }
  }
  // Lᴴ x = z: x_k −= Σ_i conj(L_ik) x_i
  for (let s = ns - 1; s >= 0; s--) {
    offsets(f, s, c, off);
    backwardComplex(PR, PI, panelPtr[s], superStart[s + 1] - superStart[s], rowPtr[s + 1] - rowPtr[s], off, XR, XI, c);
  }
}

/** Right-hand sides per chunk of solveBlock (the solve's buffers: n × 32 words per part, as checkMemory counts). */
export const CHUNK = 32;

/** Columns c0 … c0+c−1 of `cols` into the row-major chunk X in the factor's ordering, one row of X at a time. */
function gather(cols: Float64Array[], c0: number, c: number, perm: Int32Array, X: Float64Array): void {
  const n = perm.length;
  const v = cols.slice(c0, c0 + c);
  for (let i = 0; i < n; i++) {
    const o = perm[i] * c;
    for (let r = 0; r < c; r++) X[o + r] = v[r][i];
  }
}

/** The chunk X back into columns c0 … c0+c−1 of `cols` (A's ordering), one row of X at a time. */
function scatter(cols: Float64Array[], c0: number, c: number, perm: Int32Array, X: Float64Array): void {
  const n = perm.length;
  const v = cols.slice(c0, c0 + c);
  for (let i = 0; i < n; i++) {
    const o = perm[i] * c;
    for (let r = 0; r < c; r++) v[r][i] = X[o + r];
  }
}
