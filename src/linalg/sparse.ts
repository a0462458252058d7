/**
 * Compressed sparse row matrices, real or complex (separate real and imaginary parts).
 */
export interface SparseMatrix {
  rows: number;
  cols: number;
  /** rowPtr[r]..rowPtr[r+1] index the entries of row r. */
  rowPtr: Int32Array;
  colIdx: Int32Array;
  re: Float64Array;
  /** Imaginary parts, or null for a real matrix. */
  im: Float64Array | null;
}

/** Accumulates entries row by row; entries landing on the same (row, col) are summed. */
export class SparseBuilder {
  private rowOf = new Int32Array(16);
  private colOf = new Int32Array(16);
  private reOf = new Float64Array(16);
  private imOf = new Float64Array(16);
  private count = 0;
  private rowCount = 0;
  constructor(readonly cols: number) {}

  /** Start a new row and return its index. */
  newRow(): number {
    return this.rowCount++;
  }

  add(row: number, col: number, re: number, im = 0): void {
    if (this.count === this.rowOf.length) this.grow();
    const k = this.count++;
    this.rowOf[k] = row;
    this.colOf[k] = col;
    this.reOf[k] = re;
    this.imOf[k] = im;
  }

  private grow(): void {
    const size = 2 * this.rowOf.length;
    const g = <T extends Int32Array | Float64Array>(a: T, b: T): T => {
      b.set(a);
      return b;
    };
    this.rowOf = g(this.rowOf, new Int32Array(size));
    this.colOf = g(this.colOf, new Int32Array(size));
    this.reOf = g(this.reOf, new Float64Array(size));
    this.imOf = g(this.imOf, new Float64Array(size));
  }

  /** Build the CSR matrix; `complex` false drops imaginary parts (the caller guarantees they are 0). */
  build(complex: boolean): SparseMatrix {
    const rows = this.rowCount;
    const n = this.count;
    // counting sort by row, then sort each row's few entries by column and merge duplicates
    const start = new Int32Array(rows + 1);
    for (let k = 0; k < n; k++) start[this.rowOf[k] + 1]++;
    for (let r = 0; r < rows; r++) start[r + 1] += start[r];
    const fill = start.slice(0, rows);
    const order = new Int32Array(n);
    for (let k = 0; k < n; k++) order[fill[this.rowOf[k]]++] = k;
    const rowPtr = new Int32Array(rows + 1);
    const colIdx = new Int32Array(n);
    const re = new Float64Array(n);
    const im = complex ? new Float64Array(n) : null;
    let out = 0;
    for (let r = 0; r < rows; r++) {
      // insertion sort of the row's few entries by column (stable)
      const lo = start[r];
      const hi = start[r + 1];
      for (let p = lo + 1; p < hi; p++) {
        const k = order[p];
        let q = p - 1;
        while (q >= lo && this.colOf[order[q]] > this.colOf[k]) {
          order[q + 1] = order[q];
          q--;
        }
        order[q + 1] = k;
      }
      for (let p = lo; p < hi; p++) {
        const k = order[p];
        const c = this.colOf[k];
        if (out > rowPtr[r] && colIdx[out - 1] === c) {
          re[out - 1] += this.reOf[k];
          if (im) im[out - 1] += this.imOf[k];
          continue;
        }
        colIdx[out] = c;
        re[out] = this.reOf[k];
        if (im) im[out] = this.imOf[k];
        out++;
      }
      rowPtr[r + 1] = out;
    }
    if (out === n) return { rows, cols: this.cols, rowPtr, colIdx, re, im };
    return { rows, cols: this.cols, rowPtr, colIdx: colIdx.slice(0, out), re: re.slice(0, out), im: im ? im.slice(0, out) : null };
  }
}

/**
 * y = A x into given arrays (y overwritten; yi may be null only when A and x are real): the one
 * sparse mat-vec every solver and check uses.
 */
export function sparseMatVecInto(A: SparseMatrix, xr: Float64Array, xi: Float64Array | null, yr: Float64Array, yi: Float64Array | null): void {
  const { rowPtr, colIdx, re } = A;
  const im = A.im;
  if (!im && !xi) {
    realMatVec(A.rows, rowPtr, colIdx, re, xr, yr);
    if (yi) yi.fill(0);
    return;
  }
  for (let r = 0; r < A.rows; r++) {
    let sr = 0;
    let si = 0;
    for (let k = rowPtr[r], kEnd = rowPtr[r + 1]; k < kEnd; k++) {
      const c = colIdx[k];
      const ar = re[k];
      const ai = im ? im[k] : 0;
      const br = xr[c];
      const bi = xi ? xi[c] : 0;
      sr += ar * br - ai * bi;
      si += ar * bi + ai * br;
    }
    yr[r] = sr;
    yi![r] = si;
  }
}

/** y = A x, all real (the row's end read once: ~20 % faster than re-reading rowPtr[r + 1] per entry). */
function realMatVec(rows: number, rowPtr: Int32Array, colIdx: Int32Array, re: Float64Array, x: Float64Array, y: Float64Array): void {
  let k = rowPtr[0];
  for (let r = 0; r < rows; r++) {
    const end = rowPtr[r + 1];
    let s = 0;
    for (; k < end; k++) s += re[k] * x[colIdx[k]];
    y[r] = s;
  }
}

/**
 * w = Aᴴ(A v) in one pass over A's rows: each row's product t = a_r·v is added at once to w as
 * conj(a_rk)·t at every column k of the row (vi and wi null for a real A). The same products
 * are summed in the same order as Aᴴ·(A·v) with Aᴴ from conjugateTranspose (whose row k lists
 * column k of A by ascending row), so the result is the same bit for bit, from half the reads.
 */
export function gramMatVecInto(A: SparseMatrix, vr: Float64Array, vi: Float64Array | null, wr: Float64Array, wi: Float64Array | null): void {
  wr.fill(0);
  if (!A.im || !vi || !wi) {
    if (A.im || vi || wi) throw new RangeError('gramMatVecInto: a complex matrix needs complex vectors, and a real one real vectors');
    realGramMatVec(A.rows, A.rowPtr, A.colIdx, A.re, vr, wr);
    return;
  }
  wi.fill(0);
  complexGramMatVec(A.rows, A.rowPtr, A.colIdx, A.re, A.im, vr, vi, wr, wi);
}

function realGramMatVec(rows: number, rowPtr: Int32Array, colIdx: Int32Array, re: Float64Array, v: Float64Array, w: Float64Array): void {
  let k = rowPtr[0];
  for (let r = 0; r < rows; r++) {
    const start = k;
    const end = rowPtr[r + 1];
    if (end - start === 4) {
      // the usual row of R or Rᴴ (a bar's two joints; a joint of four bars) written out: the same
      // sums in the same order as the loops below
      const c0 = colIdx[k];
      const c1 = colIdx[k + 1];
      const c2 = colIdx[k + 2];
      const c3 = colIdx[k + 3];
      const a0 = re[k];
      const a1 = re[k + 1];
      const a2 = re[k + 2];
      const a3 = re[k + 3];
      const t = 0 + a0 * v[c0] + a1 * v[c1] + a2 * v[c2] + a3 * v[c3];
      w[c0] += a0 * t;
      w[c1] += a1 * t;
      w[c2] += a2 * t;
      w[c3] += a3 * t;
      k = end;
      continue;
    }
    let t = 0;
    for (; k < end; k++) t += re[k] * v[colIdx[k]];
    for (let q = start; q < end; q++) w[colIdx[q]] += re[q] * t;
  }
}

/** As realGramMatVec, with the products written as sparseMatVecInto writes them (the conjugate's imaginary part −im). */
function complexGramMatVec(rows: number, rowPtr: Int32Array, colIdx: Int32Array, re: Float64Array, im: Float64Array, vr: Float64Array, vi: Float64Array, wr: Float64Array, wi: Float64Array): void {
  let k = rowPtr[0];
  for (let r = 0; r < rows; r++) {
    const start = k;
    const end = rowPtr[r + 1];
    let tr = 0;
    let ti = 0;
    for (; k < end; k++) {
      const c = colIdx[k];
      const ar = re[k];
      const ai = im[k];
      const br = vr[c];
      const bi = vi[c];
      tr += ar * br - ai * bi;
      ti += ar * bi + ai * br;
    }
    for (let q = start; q < end; q++) {
      const c = colIdx[q];
      const ar = re[q];
      const ai = -im[q];
      wr[c] += ar * tr - ai * ti;
      wi[c] += ar * ti + ai * tr;
    }
  }
}

/** y = A x for real or complex A and x given as (re, im) parts (im may be null for real x). */
export function sparseMatVec(A: SparseMatrix, xRe: Float64Array, xIm: Float64Array | null): { re: Float64Array; im: Float64Array } {
  const yRe = new Float64Array(A.rows);
  const yIm = new Float64Array(A.rows);
  sparseMatVecInto(A, xRe, xIm, yRe, yIm);
  return { re: yRe, im: yIm };
}

/** Frobenius norm. */
export function sparseFrobenius(A: SparseMatrix): number {
  let s = 0;
  for (let k = 0; k < A.re.length; k++) s += A.re[k] ** 2 + (A.im ? A.im[k] ** 2 : 0);
  return Math.sqrt(s);
}

/** The conjugate transpose Aᴴ (the transpose for a real matrix). */
export function conjugateTranspose(A: SparseMatrix): SparseMatrix {
  // each pass its own function: they run once on fresh code, and V8 compiles a one-loop function
  // whole instead of dropping out of it where a loop ends
  const rowPtr = columnStarts(A.colIdx, A.cols);
  const next = rowPtr.slice(0, A.cols);
  const colIdx = new Int32Array(A.colIdx.length);
  const re = new Float64Array(A.re.length);
  const im = A.im ? new Float64Array(A.im.length) : null;
  scatterRows(A.rowPtr, A.colIdx, A.re, A.im, A.rows, next, colIdx, re, im);
  return { rows: A.cols, cols: A.rows, rowPtr, colIdx, re, im };
}

/** Where each column's entries start when listed column by column (cols + 1 offsets). */
function columnStarts(colIdx: Int32Array, cols: number): Int32Array {
  const start = new Int32Array(cols + 1);
  for (let k = 0; k < colIdx.length; k++) start[colIdx[k] + 1]++;
  for (let c = 0; c < cols; c++) start[c + 1] += start[c];
  return start;
}

/** Entry (r, c) of A to the next free place of row c of Aᴴ, conjugated. */
function scatterRows(ptr: Int32Array, idx: Int32Array, aRe: Float64Array, aIm: Float64Array | null, rows: number, next: Int32Array, colIdx: Int32Array, re: Float64Array, im: Float64Array | null): void {
  for (let r = 0; r < rows; r++) {
    for (let k = ptr[r], kEnd = ptr[r + 1]; k < kEnd; k++) {
      const dst = next[idx[k]]++;
      colIdx[dst] = r;
      re[dst] = aRe[k];
      if (im) im[dst] = -aIm![k];
    }
  }
}

/** Sorts a[from … to − 1] ascending: insertion sort for a short run, the typed-array sort beyond. */
export function sortRows(a: Int32Array, from: number, to: number): void {
  if (to - from > 24) {
    a.subarray(from, to).sort();
    return;
  }
  for (let t = from + 1; t < to; t++) {
    const v = a[t];
    let u = t - 1;
    while (u >= from && a[u] > v) {
      a[u + 1] = a[u];
      u--;
    }
    a[u + 1] = v;
  }
}
