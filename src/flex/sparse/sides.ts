/**
 * The two sides of the sparse problem (A = R for flexes, A = Rᴴ for self-stresses), their
 * band orderings and the Gram band K = AᴴA.
 */
import { createBand, reverseCuthillMcKee, type BandMatrix, type Graph } from '../../linalg/banded.js';
import type { HermitianCsr } from '../../linalg/sparse-ldl/index.js';
import type { SparseMatrix } from '../../linalg/sparse.js';

// ---------------------------------------------------------------------------------------------
// Sides, orderings, Gram bands

/** One side of the problem: the null space of A (A = R for flexes, A = Rᴴ for self-stresses), K = AᴴA. */
export interface Side {
  kind: 'flexes' | 'selfStresses';
  A: SparseMatrix;
  AH: SparseMatrix;
  dim: number;
  /** perm[old] = position in the band. */
  perm: Int32Array;
  bw: number;
  gramName: string;
  opName: string;
  /** x, y of each unknown (2 per unknown) for the nested-dissection ordering, or null (graph only). */
  positions: Float64Array | null;
}

/** Where the unknowns of each side lie: R's columns (joint positions) and rows (bar midpoints), 2 numbers each. */
export interface SidePositions {
  columns: Float64Array | null;
  rows: Float64Array | null;
}

/** Half-bandwidth of AᴴA when its rows/columns are permuted by perm. */
export function gramBandwidth(A: SparseMatrix, perm: Int32Array): number {
  let bw = 0;
  for (let r = 0; r < A.rows; r++) {
    let lo = Infinity;
    let hi = -Infinity;
    for (let k = A.rowPtr[r]; k < A.rowPtr[r + 1]; k++) {
      const p = perm[A.colIdx[k]];
      if (p < lo) lo = p;
      if (p > hi) hi = p;
    }
    if (hi - lo > bw) bw = hi - lo;
  }
  return bw;
}

/** The graph of AᴴA: nodes are A's columns, joined when some row of A holds both (two passes: count, then fill). */
export function gramGraph(A: SparseMatrix, AH: SparseMatrix): Graph {
  const n = A.cols;
  const mark = new Int32Array(n);
  const ptr = new Int32Array(n + 1);
  // the neighbours of every column in turn; `adj` null: only count them into ptr
  const walk = (adj: Int32Array | null): void => {
    mark.fill(-1);
    let w = 0;
    for (let i = 0; i < n; i++) {
      mark[i] = i;
      for (let k = AH.rowPtr[i]; k < AH.rowPtr[i + 1]; k++) {
        const r = AH.colIdx[k];
        for (let t = A.rowPtr[r]; t < A.rowPtr[r + 1]; t++) {
          const c = A.colIdx[t];
          if (mark[c] !== i) {
            mark[c] = i;
            if (adj) adj[w] = c;
            w++;
          }
        }
      }
      ptr[i + 1] = w;
    }
  };
  walk(null);
  const adj = new Int32Array(ptr[n]);
  walk(adj);
  return { n, ptr, adj };
}

export function inversePermutation(order: Int32Array): Int32Array {
  const perm = new Int32Array(order.length);
  for (let i = 0; i < order.length; i++) perm[order[i]] = i;
  return perm;
}

/** The narrower of the given orderings (perm[old] = new) for AᴴA. */
export function narrowest(A: SparseMatrix, perms: Int32Array[]): { perm: Int32Array; bw: number } {
  let best = { perm: perms[0], bw: gramBandwidth(A, perms[0]) };
  for (const p of perms.slice(1)) {
    const bw = gramBandwidth(A, p);
    if (bw < best.bw) best = { perm: p, bw };
  }
  return best;
}

export function makeSides(R: SparseMatrix, RH: SparseMatrix, positions?: SidePositions): { flex: Side; stress: Side } {
  const n = R.cols;
  const m = R.rows;
  const identity = (k: number) => Int32Array.from({ length: k }, (_, i) => i);
  const colRcm = inversePermutation(reverseCuthillMcKee(gramGraph(R, RH)));
  const cols = narrowest(R, [identity(n), colRcm]);
  // rows of R sorted by the first (then last) band position of their columns: "by cell"
  const key = new Float64Array(m);
  for (let r = 0; r < m; r++) {
    let lo = Infinity;
    let hi = -Infinity;
    for (let k = R.rowPtr[r]; k < R.rowPtr[r + 1]; k++) {
      const p = cols.perm[R.colIdx[k]];
      lo = Math.min(lo, p);
      hi = Math.max(hi, p);
    }
    key[r] = lo === Infinity ? 0 : lo * (n + 1) + hi;
  }
  const byCell = Int32Array.from({ length: m }, (_, i) => i).sort((a, b) => key[a] - key[b] || a - b);
  const rowRcm = inversePermutation(reverseCuthillMcKee(gramGraph(RH, R)));
  const rows = narrowest(RH, [inversePermutation(byCell), rowRcm]);
  return {
    flex: { kind: 'flexes', A: R, AH: RH, dim: n, perm: cols.perm, bw: Math.min(cols.bw, Math.max(0, n - 1)), gramName: 'RᴴR', opName: 'R', positions: positions?.columns ?? null },
    stress: { kind: 'selfStresses', A: RH, AH: R, dim: m, perm: rows.perm, bw: Math.min(rows.bw, Math.max(0, m - 1)), gramName: 'RRᴴ', opName: 'Rᴴ', positions: positions?.rows ?? null },
  };
}

/** K = AᴴA in band storage, permuted. */
export function gramBand(side: Side): BandMatrix {
  const { A, perm } = side;
  const G = createBand(side.dim, side.bw, A.im !== null);
  const w = G.bw + 1;
  const gr = G.re;
  const gi = G.im;
  for (let r = 0; r < A.rows; r++) {
    for (let a = A.rowPtr[r]; a < A.rowPtr[r + 1]; a++) {
      const i = perm[A.colIdx[a]];
      const xr = A.re[a];
      const xi = A.im ? A.im[a] : 0;
      for (let b = A.rowPtr[r]; b < A.rowPtr[r + 1]; b++) {
        const j = perm[A.colIdx[b]];
        if (j > i) continue;
        // K_ij += conj(A_ri)·A_rj
        const yr = A.re[b];
        const yi = A.im ? A.im[b] : 0;
        const idx = i * w + (j - i + G.bw);
        gr[idx] += xr * yr + xi * yi;
        if (gi && i !== j) gi[idx] += xr * yi - xi * yr;
      }
    }
  }
  return G;
}

/** K = AᴴA with both triangles stored, in the side's own (unpermuted) numbering. */
export function gramCsr(side: Side): HermitianCsr {
  const { A, AH } = side;
  const n = side.dim;
  const mark = new Int32Array(n).fill(-1);
  const accR = new Float64Array(n);
  const accI = A.im ? new Float64Array(n) : null;
  const ptr = new Int32Array(n + 1);
  let idx = new Int32Array(Math.max(16, 8 * n));
  let re = new Float64Array(idx.length);
  let im = accI ? new Float64Array(idx.length) : null;
  let w = 0;
  const row: number[] = [];
  for (let i = 0; i < n; i++) {
    row.length = 0;
    // K_ij = Σ_r conj(A_ri) A_rj; AH's row i holds conj(A_ri)
    for (let a = AH.rowPtr[i]; a < AH.rowPtr[i + 1]; a++) {
      const r = AH.colIdx[a];
      const xr = AH.re[a];
      const xi = AH.im ? AH.im[a] : 0;
      for (let b = A.rowPtr[r]; b < A.rowPtr[r + 1]; b++) {
        const j = A.colIdx[b];
        if (mark[j] !== i) {
          mark[j] = i;
          accR[j] = 0;
          if (accI) accI[j] = 0;
          row.push(j);
        }
        const yr = A.re[b];
        accR[j] += xr * yr - (A.im ? xi * A.im[b] : 0);
        if (accI) accI[j] += xr * A.im![b] + xi * yr;
      }
    }
    if (mark[i] !== i) row.push(i); // an empty column still gets its (zero) diagonal
    row.sort((x, y) => x - y);
    if (w + row.length > idx.length) {
      const size = Math.max(2 * idx.length, w + row.length);
      const grow = <T extends Int32Array | Float64Array>(old: T, fresh: T): T => {
        fresh.set(old);
        return fresh;
      };
      idx = grow(idx, new Int32Array(size));
      re = grow(re, new Float64Array(size));
      if (im) im = grow(im, new Float64Array(size));
    }
    for (const j of row) {
      idx[w] = j;
      re[w] = mark[j] === i ? accR[j] : 0;
      if (im) im[w] = mark[j] === i && j !== i ? accI![j] : 0;
      w++;
    }
    ptr[i + 1] = w;
  }
  return { n, ptr, idx: idx.slice(0, w), re: re.slice(0, w), im: im ? im.slice(0, w) : null };
}
