/**
 * The rigidity (compatibility) matrix R of a supercell: one row per bar (kept or grounded),
 * two columns per joint (x then y velocity). R maps joint velocities u to first-order bar
 * length changes. The row of bar a→b with phase factor φ holds −p at a and +φ·p at b, p the
 * unwrapped bar vector of its unit-cell bar (scaledBarVectors: in units of sc.lengthScale, so
 * that the entries are near 1 at any input scale and singular values are in units of
 * lengthScale); a grounded bar has only its inside end.
 * Flexes are ker R, self-stresses ker Rᴴ.
 */
import { resolveBars, type Framework } from '../framework/types.js';
import type { SparseMatrix } from '../linalg/sparse.js';
import type { Supercell } from './supercell.js';

/**
 * In units of lengthScale the longest bar is at least ~0.7 long, so σ_max(R) ≳ 0.7 and entries
 * this small change no singular value by more than ~1e-200·√(entries): far below rounding. They
 * arise as subnormal numbers (e.g. a frame turned by 1e-320 rad), which upset the dense SVD
 * (σ_max of a 2×1 pinned square grid came out 1.74 instead of √3 with one entry of 3e-323).
 */
const NEGLIGIBLE = 1e-200;

/**
 * The unit cell's bar vectors divided by lengthScale, 2 entries per bar in file order:
 * ((to − from) + s1·a1 + s2·a2) / lengthScale. The joint difference comes first, so a framework
 * placed far from the origin loses no digits to its offset (to + shift − from would round at
 * the offset's magnitude). Every assembly of R (rigidityMatrix, rigidityApply, SymbolAssembler)
 * takes its numbers from here, so they agree exactly. Components under `negligible` (in units of
 * lengthScale) are set to 0.
 */
export function scaledBarVectors(fw: Framework, lengthScale: number, negligible = NEGLIGIBLE): Float64Array {
  const [a1, a2] = fw.lattice;
  const bars = resolveBars(fw);
  const out = new Float64Array(2 * bars.length);
  bars.forEach(({ from, to, shift: [s1, s2] }, r) => {
    const pa = fw.joints[from].at;
    const pb = fw.joints[to].at;
    out[2 * r] = (pb[0] - pa[0] + (s1 * a1[0] + s2 * a2[0])) / lengthScale;
    out[2 * r + 1] = (pb[1] - pa[1] + (s1 * a1[1] + s2 * a2[1])) / lengthScale;
  });
  for (let i = 0; i < out.length; i++) if (Math.abs(out[i]) < negligible) out[i] = 0;
  return out;
}

export function rigidityMatrix(sc: Supercell): SparseMatrix {
  const p = scaledBarVectors(sc.framework, sc.lengthScale);
  const { count: m, a: A, b: B, source, phase } = sc.rows;
  const complex = !sc.real;
  // at most 4 entries per row, in column order; the two ends' entries are summed when a bar
  // joins a joint to itself (a one-cell twisted axis), in the order −p then φ·p. Each pass its
  // own function: they run once per matrix on fresh code (see linalg/sparse.ts conjugateTranspose).
  const rowPtr = new Int32Array(m + 1);
  const nnz = entryCount(A, B, m);
  const colIdx = new Int32Array(nnz);
  const re = new Float64Array(nnz);
  const im = complex ? new Float64Array(nnz) : null;
  fillRows(A, B, source, phase, p, m, rowPtr, colIdx, re, im);
  return { rows: m, cols: 2 * sc.jointCount, rowPtr, colIdx, re, im };
}

/** Entries of R: 2 per inside end of each bar, 2 for a bar joining a joint to itself. */
function entryCount(A: Int32Array, B: Int32Array, m: number): number {
  let nnz = 0;
  for (let r = 0; r < m; r++) nnz += (A[r] >= 0 ? 2 : 0) + (B[r] >= 0 && B[r] !== A[r] ? 2 : 0);
  return nnz;
}

/** R's rows (see rigidityMatrix). */
function fillRows(A: Int32Array, B: Int32Array, source: Int32Array, phase: Float64Array | null, p: Float64Array, m: number, rowPtr: Int32Array, colIdx: Int32Array, re: Float64Array, im: Float64Array | null): void {
  let k = 0;
  for (let r = 0; r < m; r++) {
    const a = A[r];
    const b = B[r];
    const s = source[r];
    const px = p[2 * s];
    const py = p[2 * s + 1];
    const cr = phase ? phase[2 * r] : 1;
    const ci = phase ? phase[2 * r + 1] : 0;
    if (a >= 0 && b === a) {
      colIdx[k] = 2 * a;
      // (0 + …: the fixed end's imaginary part is 0, and a sum never gives −0)
      re[k] = -px + cr * px;
      if (im) im[k] = 0 + ci * px;
      colIdx[k + 1] = 2 * a + 1;
      re[k + 1] = -py + cr * py;
      if (im) im[k + 1] = 0 + ci * py;
      k += 2;
    } else {
      // the lower-numbered end first
      const bFirst = a >= 0 && b >= 0 && b < a;
      if (bFirst) k = putEnd(colIdx, re, im, k, b, px, py, cr, ci);
      if (a >= 0) {
        colIdx[k] = 2 * a;
        re[k] = -px;
        colIdx[k + 1] = 2 * a + 1;
        re[k + 1] = -py;
        k += 2;
      }
      if (b >= 0 && !bFirst) k = putEnd(colIdx, re, im, k, b, px, py, cr, ci);
    }
    rowPtr[r + 1] = k;
  }
}

/** The far end's two entries φ·p at joint b from entry k; returns the next entry. */
function putEnd(colIdx: Int32Array, re: Float64Array, im: Float64Array | null, k: number, b: number, px: number, py: number, cr: number, ci: number): number {
  colIdx[k] = 2 * b;
  re[k] = cr * px;
  colIdx[k + 1] = 2 * b + 1;
  re[k + 1] = cr * py;
  if (im) {
    im[k] = ci * px;
    im[k + 1] = ci * py;
  }
  return k + 2;
}

/**
 * ‖R·[u_1 … u_t]‖_F² for real velocity fields (2 entries per joint), in one pass over the rows
 * without assembling R or the products (each entry formed as rigidityApply forms it). Only for
 * real supercells (every phase ±1).
 */
export function rigiditySquaredNorm(sc: Supercell, fields: Float64Array[]): number {
  const { count: m, a: A, b: B, source, phase } = sc.rows;
  const p = scaledBarVectors(sc.framework, sc.lengthScale);
  let s = 0;
  for (let r = 0; r < m; r++) {
    const px = p[2 * source[r]];
    const py = p[2 * source[r] + 1];
    const cr = phase ? phase[2 * r] : 1;
    for (let c = 0; c < fields.length; c++) {
      const v = rowTimes(fields[c], A[r], B[r], px, py, cr);
      s += v * v;
    }
  }
  return s;
}

/**
 * R·u for a real velocity field u (2 entries per joint) without assembling R: the same entries
 * as rigidityMatrix, row by row. Only for real supercells (every phase ±1).
 */
export function rigidityApply(sc: Supercell, u: Float64Array): Float64Array {
  const { count: m, a: A, b: B, source, phase } = sc.rows;
  const out = new Float64Array(m);
  const p = scaledBarVectors(sc.framework, sc.lengthScale);
  for (let r = 0; r < m; r++) {
    const px = p[2 * source[r]];
    const py = p[2 * source[r] + 1];
    out[r] = rowTimes(u, A[r], B[r], px, py, phase ? phase[2 * r] : 1);
  }
  return out;
}

/** Row r of R times a real field u: −p·u_a + φ·p·u_b (a fixed end, index −1, adds nothing). */
function rowTimes(u: Float64Array, a: number, b: number, px: number, py: number, cr: number): number {
  let v = 0;
  if (a >= 0) v += -px * u[2 * a] - py * u[2 * a + 1];
  if (b >= 0) v += cr * px * u[2 * b] + cr * py * u[2 * b + 1];
  return v;
}
