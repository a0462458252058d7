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
  private readonly rowsOut: Array<Map<number, [number, number]>> = [];
  constructor(readonly cols: number) {}

  /** Start a new row and return its index. */
  newRow(): number {
    this.rowsOut.push(new Map());
    return this.rowsOut.length - 1;
  }

  add(row: number, col: number, re: number, im = 0): void {
    const m = this.rowsOut[row];
    const cur = m.get(col);
    if (cur) {
      cur[0] += re;
      cur[1] += im;
    } else m.set(col, [re, im]);
  }

  /** Build the CSR matrix; `complex` false drops imaginary parts (the caller guarantees they are 0). */
  build(complex: boolean): SparseMatrix {
    let nnz = 0;
    for (const m of this.rowsOut) nnz += m.size;
    const rowPtr = new Int32Array(this.rowsOut.length + 1);
    const colIdx = new Int32Array(nnz);
    const re = new Float64Array(nnz);
    const im = complex ? new Float64Array(nnz) : null;
    let k = 0;
    this.rowsOut.forEach((m, r) => {
      const cols = [...m.keys()].sort((a, b) => a - b);
      for (const c of cols) {
        const v = m.get(c)!;
        colIdx[k] = c;
        re[k] = v[0];
        if (im) im[k] = v[1];
        k++;
      }
      rowPtr[r + 1] = k;
    });
    return { rows: this.rowsOut.length, cols: this.cols, rowPtr, colIdx, re, im };
  }
}

/** y = A x for real or complex A and x given as (re, im) parts (im may be null for real x). */
export function sparseMatVec(
  A: SparseMatrix,
  xRe: Float64Array,
  xIm: Float64Array | null,
): { re: Float64Array; im: Float64Array } {
  const yRe = new Float64Array(A.rows);
  const yIm = new Float64Array(A.rows);
  for (let r = 0; r < A.rows; r++) {
    let sr = 0;
    let si = 0;
    for (let k = A.rowPtr[r]; k < A.rowPtr[r + 1]; k++) {
      const c = A.colIdx[k];
      const ar = A.re[k];
      const ai = A.im ? A.im[k] : 0;
      const br = xRe[c];
      const bi = xIm ? xIm[c] : 0;
      sr += ar * br - ai * bi;
      si += ar * bi + ai * br;
    }
    yRe[r] = sr;
    yIm[r] = si;
  }
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
  const count = new Int32Array(A.cols + 1);
  for (let k = 0; k < A.colIdx.length; k++) count[A.colIdx[k] + 1]++;
  for (let c = 0; c < A.cols; c++) count[c + 1] += count[c];
  const rowPtr = count.slice();
  const next = count.slice(0, A.cols);
  const colIdx = new Int32Array(A.colIdx.length);
  const re = new Float64Array(A.re.length);
  const im = A.im ? new Float64Array(A.im.length) : null;
  for (let r = 0; r < A.rows; r++) {
    for (let k = A.rowPtr[r]; k < A.rowPtr[r + 1]; k++) {
      const dst = next[A.colIdx[k]]++;
      colIdx[dst] = r;
      re[dst] = A.re[k];
      if (im) im[dst] = -A.im![k];
    }
  }
  return { rows: A.cols, cols: A.rows, rowPtr, colIdx, re, im };
}
