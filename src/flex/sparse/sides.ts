/**
 * The two sides of the sparse problem (A = R for flexes, A = Rᴴ for self-stresses), their
 * band orderings and the Gram band K = AᴴA.
 */
import { createBand, reverseCuthillMcKee, type BandMatrix, type Graph } from '../../linalg/banded.js';
import type { HermitianCsr } from '../../linalg/sparse-ldl/index.js';
import { sortRows, type SparseMatrix } from '../../linalg/sparse.js';

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
    for (let k = A.rowPtr[r], kEnd = A.rowPtr[r + 1]; k < kEnd; k++) {
      const p = perm[A.colIdx[k]];
      if (p < lo) lo = p;
      if (p > hi) hi = p;
    }
    if (hi - lo > bw) bw = hi - lo;
  }
  return bw;
}

/**
 * Σ over A's columns c of Σ over the rows r holding c of (entries in row r): an upper bound of the
 * entries of AᴴA's pattern row by row (products counted with repeats), one pass over Aᴴ.
 */
function productBound(A: SparseMatrix, AH: SparseMatrix): number {
  let total = 0;
  for (let k = 0; k < AH.colIdx.length; k++) {
    const r = AH.colIdx[k];
    total += A.rowPtr[r + 1] - A.rowPtr[r];
  }
  return total;
}

/**
 * The graph of AᴴA: nodes are A's columns, joined when some row of A holds both; each node's
 * neighbours in the order first met (rows of Aᴴ, then the entries of A's row). One pass into a
 * buffer sized by the count of products, then trimmed.
 */
export function gramGraph(A: SparseMatrix, AH: SparseMatrix): Graph {
  const n = A.cols;
  const mark = new Int32Array(n).fill(-1);
  const ptr = new Int32Array(n + 1);
  const buf = new Int32Array(productBound(A, AH));
  const { rowPtr: hPtr, colIdx: hIdx } = AH;
  const { rowPtr: aPtr, colIdx: aIdx } = A;
  let w = 0;
  for (let i = 0; i < n; i++) {
    mark[i] = i;
    for (let k = hPtr[i], kEnd = hPtr[i + 1]; k < kEnd; k++) {
      const r = hIdx[k];
      for (let t = aPtr[r], tEnd = aPtr[r + 1]; t < tEnd; t++) {
        const c = aIdx[t];
        if (mark[c] !== i) {
          mark[c] = i;
          buf[w++] = c;
        }
      }
    }
    ptr[i + 1] = w;
  }
  return { n, ptr, adj: buf.slice(0, w) };
}

export function inversePermutation(order: Int32Array): Int32Array {
  const perm = new Int32Array(order.length);
  for (let i = 0; i < order.length; i++) perm[order[i]] = i;
  return perm;
}

function identity(k: number): Int32Array {
  const p = new Int32Array(k);
  for (let i = 0; i < k; i++) p[i] = i;
  return p;
}

/** The narrower of the given orderings (perm[old] = new) for AᴴA; the first on a tie. */
export function narrowest(A: SparseMatrix, perms: Int32Array[]): { perm: Int32Array; bw: number } {
  let best = { perm: perms[0], bw: gramBandwidth(A, perms[0]) };
  for (let i = 1; i < perms.length; i++) {
    const bw = gramBandwidth(A, perms[i]);
    if (bw < best.bw) best = { perm: perms[i], bw };
  }
  return best;
}

/**
 * R's rows "by cell": sorted by the first, then the last band position of their columns under
 * colPerm, then by index (an empty row counts as (0, 0)). Returns order[new] = row. Two stable
 * counting sorts (by the last position, then by the first), the order a comparison sort on
 * (first, last, index) gives.
 */
export function rowsByCell(R: SparseMatrix, colPerm: Int32Array): Int32Array {
  const m = R.rows;
  const n = R.cols;
  const lo = new Int32Array(m);
  const hi = new Int32Array(m);
  for (let r = 0; r < m; r++) {
    let a = n;
    let b = -1;
    for (let k = R.rowPtr[r], kEnd = R.rowPtr[r + 1]; k < kEnd; k++) {
      const p = colPerm[R.colIdx[k]];
      if (p < a) a = p;
      if (p > b) b = p;
    }
    if (b < 0) a = b = 0;
    lo[r] = a;
    hi[r] = b;
  }
  const count = new Int32Array(Math.max(1, n) + 1);
  const pass = (key: Int32Array, from: Int32Array | null, to: Int32Array) => {
    count.fill(0);
    for (let r = 0; r < m; r++) count[key[r] + 1]++;
    for (let v = 0; v < n; v++) count[v + 1] += count[v];
    for (let t = 0; t < m; t++) {
      const r = from ? from[t] : t;
      to[count[key[r]]++] = r;
    }
  };
  const byHi = new Int32Array(m);
  pass(hi, null, byHi);
  const order = new Int32Array(m);
  pass(lo, byHi, order);
  return order;
}

/** The flex side's band ordering: the narrower of R's own column order and reverse Cuthill–McKee on RᴴR. */
function columnOrdering(R: SparseMatrix, RH: SparseMatrix): { perm: Int32Array; bw: number } {
  const colRcm = inversePermutation(reverseCuthillMcKee(gramGraph(R, RH)));
  const cols = narrowest(R, [identity(R.cols), colRcm]);
  return { perm: cols.perm, bw: Math.min(cols.bw, Math.max(0, R.cols - 1)) };
}

/** The stress side's: the narrower of R's rows by cell (under the column ordering) and reverse Cuthill–McKee on RRᴴ. */
function rowOrdering(R: SparseMatrix, RH: SparseMatrix, colPerm: Int32Array): { perm: Int32Array; bw: number } {
  const byCell = rowsByCell(R, colPerm);
  const rowRcm = inversePermutation(reverseCuthillMcKee(gramGraph(RH, R)));
  const rows = narrowest(RH, [inversePermutation(byCell), rowRcm]);
  return { perm: rows.perm, bw: Math.min(rows.bw, Math.max(0, R.rows - 1)) };
}

/** The point nearest the middle of the points' bounding box (the first of equals). */
function nearestToMiddle(positions: Float64Array, n: number): number {
  const box = new Float64Array([Infinity, -Infinity, Infinity, -Infinity]);
  boundingBox(positions, n, box);
  return nearest(positions, n, (box[0] + box[1]) / 2, (box[2] + box[3]) / 2);
}

/** box = [min x, max x, min y, max y] of n points (x, y interleaved); box starts at ±Infinity. */
function boundingBox(p: Float64Array, n: number, box: Float64Array): void {
  for (let i = 0; i < n; i++) {
    box[0] = Math.min(box[0], p[2 * i]);
    box[1] = Math.max(box[1], p[2 * i]);
    box[2] = Math.min(box[2], p[2 * i + 1]);
    box[3] = Math.max(box[3], p[2 * i + 1]);
  }
}

function nearest(p: Float64Array, n: number, cx: number, cy: number): number {
  let near = Infinity;
  let at = -1;
  for (let i = 0; i < n; i++) {
    const d = (p[2 * i] - cx) ** 2 + (p[2 * i + 1] - cy) ** 2;
    if (d < near) {
      near = d;
      at = i;
    }
  }
  return at;
}

/**
 * A lower bound of the half-bandwidth of K under every ordering: along a shortest path between
 * the first and the last unknown of a connected component (c unknowns) each step spans at most
 * b positions, so c − 1 ≤ b·diameter, and diameter ≤ 2·eccentricity(v) for any v of the
 * component (common practice). The smaller v's eccentricity, the better the bound. With
 * positions (2 per unknown), v is the unknown nearest the middle of the drawing's bounding box,
 * one search (on the gallery's open lattices its eccentricity is the smallest the path search
 * below finds). Otherwise, and for the components the middle does not reach, v is the middle
 * of a long path (two more searches find its ends), and the smaller eccentricity is used. The
 * largest component reached decides.
 */
export function bandwidthLowerBound(K: HermitianCsr, positions: Float64Array | null = null): number {
  const n = K.n;
  if (n <= 1) return 0;
  const bfs: Search = { ptr: K.ptr, idx: K.idx, level: new Int32Array(n), parent: new Int32Array(n), queue: new Int32Array(n) };
  const search = (s: number) => breadthFirst(bfs, s);
  let best = 0;
  let start = 0;
  const seen = new Uint8Array(n);
  let covered = 0;
  // a start near the middle of the drawing (it lies in the largest component, as a rule)
  const centre = positions && positions.length >= 2 * n ? nearestToMiddle(positions, n) : -1;
  // components until the rest could not beat the bound found
  while (covered < n && n - covered - 1 > 2 * best) {
    while (seen[start]) start++;
    const first = centre >= 0 && !seen[centre] ? centre : start;
    const [a, eccFirst, reached] = search(first);
    for (let i = 0; i < reached; i++) seen[bfs.queue[i]] = 1;
    covered += reached;
    let ecc = eccFirst;
    if (first !== centre) {
      const [b, length] = search(a);
      // the middle of the path a … b
      let m = b;
      for (let k = 0; k < length >> 1; k++) m = bfs.parent[m];
      ecc = Math.min(ecc, search(m)[1]);
    }
    if (ecc > 0) best = Math.max(best, Math.ceil((reached - 1) / (2 * ecc)));
  }
  return best;
}

interface Search {
  ptr: Int32Array;
  idx: Int32Array;
  level: Int32Array;
  parent: Int32Array;
  queue: Int32Array;
}

/** Breadth-first search from s over the pattern (ptr, idx): [last vertex reached, its level, vertices reached]; the queue holds them in order. */
function breadthFirst(b: Search, s: number): [number, number, number] {
  b.level.fill(-1);
  b.level[s] = 0;
  b.parent[s] = -1;
  b.queue[0] = s;
  const tail = spread(b.ptr, b.idx, b.level, b.parent, b.queue);
  const last = b.queue[tail - 1];
  return [last, b.level[last], tail];
}

/**
 * The search itself from the one vertex queued; returns how many it reached. Nothing follows the
 * loop but the return: V8 compiles the long first run of the loop with the feedback gathered so
 * far, and code after it (never run yet) would send it back to the start.
 */
function spread(ptr: Int32Array, idx: Int32Array, level: Int32Array, parent: Int32Array, queue: Int32Array): number {
  let head = 0;
  let tail = 1;
  while (head < tail) {
    const v = queue[head++];
    for (let t = ptr[v], tEnd = ptr[v + 1]; t < tEnd; t++) {
      const u = idx[t];
      if (level[u] < 0) {
        level[u] = level[v] + 1;
        parent[u] = v;
        queue[tail++] = u;
      }
    }
  }
  return tail;
}

/**
 * The two sides. Each side's band ordering (perm, bw) is computed on first read and kept (getters
 * on the side): a count factors one side, and a sparse-planned side reads only bw (for the
 * band's figures). The stress side's ordering reads the flex side's (rows by cell).
 */
export function makeSides(R: SparseMatrix, RH: SparseMatrix, positions?: SidePositions): { flex: Side; stress: Side } {
  const n = R.cols;
  const m = R.rows;
  let cols: { perm: Int32Array; bw: number } | null = null;
  let rows: { perm: Int32Array; bw: number } | null = null;
  const colsOf = () => (cols ??= columnOrdering(R, RH));
  const rowsOf = () => (rows ??= rowOrdering(R, RH, colsOf().perm));
  const flex: Side = {
    kind: 'flexes',
    A: R,
    AH: RH,
    dim: n,
    get perm() {
      return colsOf().perm;
    },
    get bw() {
      return colsOf().bw;
    },
    gramName: 'RᴴR',
    opName: 'R',
    // read when this side is ordered (a count orders only the smaller side)
    get positions() {
      return positions?.columns ?? null;
    },
  };
  const stress: Side = {
    kind: 'selfStresses',
    A: RH,
    AH: R,
    dim: m,
    get perm() {
      return rowsOf().perm;
    },
    get bw() {
      return rowsOf().bw;
    },
    gramName: 'RRᴴ',
    opName: 'Rᴴ',
    positions: positions?.rows ?? null,
  };
  return { flex, stress };
}

/** K = AᴴA in band storage, permuted. */
export function gramBand(side: Side): BandMatrix {
  const { A, perm } = side;
  const G = createBand(side.dim, side.bw, A.im !== null);
  const w = G.bw + 1;
  const gr = G.re;
  const gi = G.im;
  for (let r = 0; r < A.rows; r++) {
    for (let a = A.rowPtr[r], aEnd = A.rowPtr[r + 1]; a < aEnd; a++) {
      const i = perm[A.colIdx[a]];
      const xr = A.re[a];
      const xi = A.im ? A.im[a] : 0;
      for (let b = A.rowPtr[r], bEnd = A.rowPtr[r + 1]; b < bEnd; b++) {
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

/**
 * K = AᴴA with both triangles stored, in the side's own (unpermuted) numbering. Row by row: the
 * products accumulate per column (in the order of Aᴴ's row, then A's rows), the row's columns are
 * sorted in place, and the buffers are sized once by the count of products and trimmed at the end.
 */
export function gramCsr(side: Side): HermitianCsr {
  const { A, AH } = side;
  const n = side.dim;
  const cap = productBound(A, AH) + n;
  const g: GramRows = {
    A,
    AH,
    mark: new Int32Array(n).fill(-1),
    accR: new Float64Array(n),
    accI: A.im ? new Float64Array(n) : null,
    idx: new Int32Array(cap),
    re: new Float64Array(cap),
    im: A.im ? new Float64Array(cap) : null,
  };
  const ptr = new Int32Array(n + 1);
  // one call per row: V8 compiles the row's function whole after a few calls (as the body of one
  // long loop it ran on fresh code until compiled mid-run, and dropped out at the first new branch)
  let w = 0;
  for (let i = 0; i < n; i++) ptr[i + 1] = w = gramRow(g, i, w);
  // views, not copies: a copy would write (and page in) another few megabytes on a large side
  return { n, ptr, idx: g.idx.subarray(0, w), re: g.re.subarray(0, w), im: g.im ? g.im.subarray(0, w) : null };
}

/** gramCsr's inputs and buffers. */
interface GramRows {
  A: SparseMatrix;
  AH: SparseMatrix;
  mark: Int32Array;
  accR: Float64Array;
  accI: Float64Array | null;
  idx: Int32Array;
  re: Float64Array;
  im: Float64Array | null;
}

/** Row i of K = AᴴA into the buffers from w; returns the end of the row. */
function gramRow(g: GramRows, i: number, w: number): number {
  const { mark, accR, accI, idx, re, im } = g;
  const { rowPtr: hPtr, colIdx: hIdx, re: hRe, im: AHim } = g.AH;
  const { rowPtr: aPtr, colIdx: aIdx, re: aRe, im: Aim } = g.A;
  const begin = w;
  // K_ij = Σ_r conj(A_ri) A_rj; AH's row i holds conj(A_ri)
  for (let a = hPtr[i], aEnd = hPtr[i + 1]; a < aEnd; a++) {
    const r = hIdx[a];
    const xr = hRe[a];
    const xi = AHim ? AHim[a] : 0;
    for (let b = aPtr[r], bEnd = aPtr[r + 1]; b < bEnd; b++) {
      const j = aIdx[b];
      if (mark[j] !== i) {
        mark[j] = i;
        accR[j] = 0;
        if (accI) accI[j] = 0;
        idx[w++] = j;
      }
      const yr = aRe[b];
      accR[j] += xr * yr - (Aim ? xi * Aim[b] : 0);
      if (accI) accI[j] += xr * Aim![b] + xi * yr;
    }
  }
  const diagonal = mark[i] === i;
  if (!diagonal) idx[w++] = i; // an empty column still gets its (zero) diagonal
  sortRows(idx, begin, w);
  for (let t = begin; t < w; t++) {
    const j = idx[t];
    const here = j !== i || diagonal;
    re[t] = here ? accR[j] : 0;
    if (im) im[t] = here && j !== i ? accI![j] : 0;
  }
  return w;
}
