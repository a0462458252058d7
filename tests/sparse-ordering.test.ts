/**
 * The sparse solver's front end: the sides' band orderings (computed on first read), the Gram
 * pattern and matrix, reverse Cuthill–McKee, the coordinate nested dissection and the symbolic
 * counts, each against a plain reference written here (comparison sorts, full scans, dense
 * elimination), so the faster code gives the same orderings and figures, not just valid ones.
 */
import { describe, expect, it } from 'vitest';
import { bandwidthLowerBound, gramCsr, gramGraph, makeSides, rowsByCell, type Side } from '../src/flex/sparse/sides.js';
import { sparseSolver, sparseSpaces } from '../src/flex/solve-sparse.js';
import { buildGallery } from '../src/framework/gallery.js';
import { reverseCuthillMcKee, type Graph } from '../src/linalg/banded.js';
import { analyse, nestedDissection, type HermitianCsr } from '../src/linalg/sparse-ldl/index.js';
import { CutGraph, smallestCover } from '../src/linalg/sparse-ldl/cut-cover.js';
import { MinimumDegreeWork, minimumDegree } from '../src/linalg/sparse-ldl/minimum-degree.js';
import { conjugateTranspose, type SparseMatrix } from '../src/linalg/sparse.js';
import { parseBoundary } from '../src/supercell/boundary.js';
import { rigidityMatrix } from '../src/supercell/rigidity.js';
import { buildSupercell } from '../src/supercell/supercell.js';
import { rng } from './helpers.js';

// ---------------------------------------------------------------------------------------------
// References (the plain versions of what the code does)

function refGramGraph(A: SparseMatrix, AH: SparseMatrix): Graph {
  const n = A.cols;
  const lists: number[][] = [];
  for (let i = 0; i < n; i++) {
    const seen = new Set<number>([i]);
    const row: number[] = [];
    for (let k = AH.rowPtr[i]; k < AH.rowPtr[i + 1]; k++) {
      const r = AH.colIdx[k];
      for (let t = A.rowPtr[r]; t < A.rowPtr[r + 1]; t++) {
        const c = A.colIdx[t];
        if (!seen.has(c)) {
          seen.add(c);
          row.push(c);
        }
      }
    }
    lists.push(row);
  }
  const ptr = new Int32Array(n + 1);
  lists.forEach((l, i) => (ptr[i + 1] = ptr[i] + l.length));
  return { n, ptr, adj: Int32Array.from(lists.flat()) };
}

/** Reverse Cuthill–McKee with array sorts and a fresh search per start (George & Liu's pseudo-peripheral node). */
function refRcm(g: Graph): Int32Array {
  const { n, ptr, adj } = g;
  const deg = (v: number) => ptr[v + 1] - ptr[v];
  const visited = new Uint8Array(n);
  const order: number[] = [];
  const levels = (start: number): { last: number[]; depth: number } => {
    const level = new Map<number, number>([[start, 0]]);
    const queue = [start];
    for (let h = 0; h < queue.length; h++) {
      const v = queue[h];
      for (let k = ptr[v]; k < ptr[v + 1]; k++) {
        const u = adj[k];
        if (visited[u] || level.has(u)) continue;
        level.set(u, level.get(v)! + 1);
        queue.push(u);
      }
    }
    const depth = Math.max(...level.values());
    return { last: queue.filter((v) => level.get(v) === depth), depth };
  };
  for (let s = 0; s < n; s++) {
    if (visited[s]) continue;
    let start = s;
    let { last, depth } = levels(start);
    for (let it = 0; it < 8; it++) {
      let cand = last[0];
      for (const v of last) if (deg(v) < deg(cand)) cand = v;
      const next = levels(cand);
      if (next.depth <= depth) break;
      start = cand;
      last = next.last;
      depth = next.depth;
    }
    const begin = order.length;
    order.push(start);
    visited[start] = 1;
    for (let h = begin; h < order.length; h++) {
      const v = order[h];
      const nb: number[] = [];
      for (let k = ptr[v]; k < ptr[v + 1]; k++) {
        const u = adj[k];
        if (!visited[u]) {
          visited[u] = 1;
          nb.push(u);
        }
      }
      nb.sort((x, y) => deg(x) - deg(y) || x - y);
      order.push(...nb);
    }
  }
  return Int32Array.from(order.reverse());
}

function bandwidth(A: SparseMatrix, perm: Int32Array): number {
  let bw = 0;
  for (let r = 0; r < A.rows; r++) {
    const p = Array.from(A.colIdx.subarray(A.rowPtr[r], A.rowPtr[r + 1]), (c) => perm[c]);
    if (p.length) bw = Math.max(bw, Math.max(...p) - Math.min(...p));
  }
  return bw;
}

const inverse = (order: ArrayLike<number>) => {
  const p = new Int32Array(order.length);
  for (let i = 0; i < order.length; i++) p[order[i]] = i;
  return p;
};

/** The sides' orderings as makeSides computed them eagerly before they became lazy. */
function refOrderings(R: SparseMatrix, RH: SparseMatrix) {
  const n = R.cols;
  const m = R.rows;
  const narrowest = (A: SparseMatrix, perms: Int32Array[]) => {
    let best = { perm: perms[0], bw: bandwidth(A, perms[0]) };
    for (const p of perms.slice(1)) if (bandwidth(A, p) < best.bw) best = { perm: p, bw: bandwidth(A, p) };
    return best;
  };
  const cols = narrowest(R, [Int32Array.from({ length: n }, (_, i) => i), inverse(refRcm(refGramGraph(R, RH)))]);
  const key = (r: number) => {
    const p = Array.from(R.colIdx.subarray(R.rowPtr[r], R.rowPtr[r + 1]), (c) => cols.perm[c]);
    return p.length ? Math.min(...p) * (n + 1) + Math.max(...p) : 0;
  };
  const byCell = Array.from({ length: m }, (_, i) => i).sort((a, b) => key(a) - key(b) || a - b);
  const rows = narrowest(RH, [inverse(byCell), inverse(refRcm(refGramGraph(RH, R)))]);
  return {
    flex: { perm: cols.perm, bw: Math.min(cols.bw, Math.max(0, n - 1)) },
    stress: { perm: rows.perm, bw: Math.min(rows.bw, Math.max(0, m - 1)) },
    byCell,
  };
}

function matrixOf(spec: string, cells: [number, number], bc: string) {
  const fw = buildGallery(`gallery:${spec}`);
  const sc = buildSupercell(fw, cells, parseBoundary(bc));
  const R = rigidityMatrix(sc);
  return { R, RH: conjugateTranspose(R), sc };
}

/** A random sparse matrix (some rows empty, some columns untouched), complex when asked. */
function randomSparse(rows: number, cols: number, perRow: number, seed: number, complex: boolean): SparseMatrix {
  const rand = rng(seed);
  const rowPtr = new Int32Array(rows + 1);
  const colIdx: number[] = [];
  const re: number[] = [];
  const im: number[] = [];
  for (let r = 0; r < rows; r++) {
    const k = rand() < 0.1 ? 0 : 1 + Math.floor(rand() * perRow);
    const cs = new Set<number>();
    while (cs.size < Math.min(k, cols)) cs.add(Math.floor(rand() * cols * 0.9));
    for (const c of [...cs].sort((a, b) => a - b)) {
      colIdx.push(c);
      re.push(rand() - 0.5);
      im.push(rand() - 0.5);
    }
    rowPtr[r + 1] = colIdx.length;
  }
  return { rows, cols, rowPtr, colIdx: Int32Array.from(colIdx), re: Float64Array.from(re), im: complex ? Float64Array.from(im) : null };
}

// ---------------------------------------------------------------------------------------------

describe('the sides: band orderings on first read', () => {
  const cases: [string, [number, number], string][] = [
    ['kagome', [7, 6], 'free'],
    ['twisted-kagome', [5, 6], 'free'],
    ['kagome', [6, 5], 'pinned'],
    ['honeycomb', [6, 6], 'x=twist:0.3,y=free'],
    ['square-diagonal', [5, 7], 'left=pinned'],
  ];
  for (const [spec, cells, bc] of cases) {
    it(`${spec} ${cells.join('×')} ${bc}: perm and bw equal the eager reference, whichever side is read first`, () => {
      const { R, RH } = matrixOf(spec, cells, bc);
      const ref = refOrderings(R, RH);
      const a = makeSides(R, RH);
      // the stress side first: it reads the flex side's ordering (rows by cell)
      expect(Array.from(a.stress.perm)).toEqual(Array.from(ref.stress.perm));
      expect(a.stress.bw).toBe(ref.stress.bw);
      expect(Array.from(a.flex.perm)).toEqual(Array.from(ref.flex.perm));
      expect(a.flex.bw).toBe(ref.flex.bw);
      const b = makeSides(R, RH);
      expect(b.flex.bw).toBe(ref.flex.bw);
      expect(Array.from(b.stress.perm)).toEqual(Array.from(ref.stress.perm));
      // kept: the same array on every read, and a spread copies the values
      expect(a.flex.perm).toBe(a.flex.perm);
      const copy: Side = { ...a.stress };
      expect(copy.bw).toBe(ref.stress.bw);
      expect(copy.perm).toBe(a.stress.perm);
      expect(ref.flex.bw).toBeGreaterThan(0);
    });
  }

  it('rows by cell (two counting sorts) equal the comparison sort on (first, last, index), empty rows as (0, 0)', () => {
    for (const seed of [1, 2, 3]) {
      const A = randomSparse(300, 80, 5, seed, false);
      const perm = inverse(refRcm(refGramGraph(A, conjugateTranspose(A))));
      const n = A.cols;
      const key = (r: number) => {
        const p = Array.from(A.colIdx.subarray(A.rowPtr[r], A.rowPtr[r + 1]), (c) => perm[c]);
        return p.length ? Math.min(...p) * (n + 1) + Math.max(...p) : 0;
      };
      const expected = Array.from({ length: A.rows }, (_, i) => i).sort((a, b) => key(a) - key(b) || a - b);
      expect(Array.from(rowsByCell(A, perm))).toEqual(expected);
    }
    // no columns at all: every row is empty and keeps its place
    const empty: SparseMatrix = { rows: 3, cols: 0, rowPtr: new Int32Array(4), colIdx: new Int32Array(0), re: new Float64Array(0), im: null };
    expect(Array.from(rowsByCell(empty, new Int32Array(0)))).toEqual([0, 1, 2]);
  });
});

describe('the Gram pattern and matrix', () => {
  it('gramGraph (one pass into a bound-sized buffer) lists the same neighbours in the same order as the reference', () => {
    for (const [seed, complex] of [[4, false], [5, true]] as const) {
      const A = randomSparse(200, 120, 6, seed, complex);
      const AH = conjugateTranspose(A);
      for (const [X, XH] of [[A, AH], [AH, A]]) {
        const g = gramGraph(X, XH);
        const r = refGramGraph(X, XH);
        expect(Array.from(g.ptr)).toEqual(Array.from(r.ptr));
        expect(Array.from(g.adj)).toEqual(Array.from(r.adj));
      }
    }
  });

  it('gramCsr equals AᴴA summed densely, rows sorted, a zero diagonal for an empty column, real and complex', () => {
    for (const complex of [false, true]) {
      const A = randomSparse(90, 40, 7, complex ? 7 : 6, complex);
      const AH = conjugateTranspose(A);
      const side = { kind: 'flexes', A, AH, dim: A.cols, perm: new Int32Array(0), bw: 0, gramName: 'K', opName: 'A', positions: null } as Side;
      const K = gramCsr(side);
      const n = A.cols;
      // dense K_ij = Σ_r conj(A_ri) A_rj
      const kr = Array.from({ length: n }, () => new Float64Array(n));
      const ki = Array.from({ length: n }, () => new Float64Array(n));
      const touched = Array.from({ length: n }, () => new Uint8Array(n));
      for (let r = 0; r < A.rows; r++) {
        for (let a = A.rowPtr[r]; a < A.rowPtr[r + 1]; a++) {
          for (let b = A.rowPtr[r]; b < A.rowPtr[r + 1]; b++) {
            const i = A.colIdx[a];
            const j = A.colIdx[b];
            const [xr, xi] = [A.re[a], A.im ? A.im[a] : 0];
            const [yr, yi] = [A.re[b], A.im ? A.im[b] : 0];
            kr[i][j] += xr * yr + xi * yi;
            ki[i][j] += xr * yi - xi * yr;
            touched[i][j] = 1;
          }
        }
      }
      let emptyColumns = 0;
      for (let i = 0; i < n; i++) {
        const cols = Array.from(K.idx.subarray(K.ptr[i], K.ptr[i + 1]));
        const expected = [...Array(n).keys()].filter((j) => touched[i][j] || j === i);
        expect(cols).toEqual(expected);
        if (!touched[i][i]) emptyColumns++;
        for (let t = K.ptr[i]; t < K.ptr[i + 1]; t++) {
          const j = K.idx[t];
          expect(K.re[t]).toBeCloseTo(kr[i][j], 12);
          if (complex) expect(K.im![t]).toBeCloseTo(i === j ? 0 : ki[i][j], 12);
        }
      }
      expect(K.im === null).toBe(!complex);
      expect(emptyColumns).toBeGreaterThan(0); // the random matrix leaves the last tenth of columns empty
    }
  });
});

describe('reverse Cuthill–McKee', () => {
  it('equals the reference with comparison sorts, on several components and with a node of 60 neighbours', () => {
    for (const seed of [11, 12, 13]) {
      const rand = rng(seed);
      const n = 400;
      const sets = Array.from({ length: n }, () => new Set<number>());
      const join = (a: number, b: number) => {
        if (a === b) return;
        sets[a].add(b);
        sets[b].add(a);
      };
      // three components: nodes ≡ 0, 1, 2 mod 3, joined to nearby nodes of their class
      for (let v = 0; v < n; v++) {
        for (let e = 0; e < 3; e++) {
          const u = v + 3 * (1 + Math.floor(rand() * 6));
          if (u < n) join(v, u);
        }
      }
      for (let k = 0; k < 60; k++) join(3 * 20, 3 * (30 + k)); // a hub (more than 32 new neighbours at once)
      const lists = sets.map((s) => [...s].sort(() => rand() - 0.5));
      const ptr = new Int32Array(n + 1);
      lists.forEach((l, i) => (ptr[i + 1] = ptr[i] + l.length));
      const g: Graph = { n, ptr, adj: Int32Array.from(lists.flat()) };
      expect(Array.from(reverseCuthillMcKee(g))).toEqual(Array.from(refRcm(g)));
    }
  });
});

/**
 * Minimum degree as its definition reads, on sets: repeatedly the unknown of fewest neighbours
 * (the lowest index on a tie) leaves, and its neighbours are joined pairwise.
 */
function refMinimumDegree(g: Graph): number[] {
  const adj = Array.from({ length: g.n }, (_, v) => new Set(Array.from(g.adj.subarray(g.ptr[v], g.ptr[v + 1])).filter((u) => u !== v)));
  const left = new Set(Array.from({ length: g.n }, (_, v) => v));
  const order: number[] = [];
  while (left.size) {
    let v = -1;
    for (const u of left) if (v < 0 || adj[u].size < adj[v].size || (adj[u].size === adj[v].size && u < v)) v = u;
    left.delete(v);
    order.push(v);
    const nb = [...adj[v]];
    for (const a of nb) {
      adj[a].delete(v);
      for (const b of nb) if (a !== b) adj[a].add(b);
    }
  }
  return order;
}

describe('minimum degree (the leaves of the dissection)', () => {
  it('equals the set-based reference on random graphs, with self-loops and isolated unknowns', () => {
    const r = rng(77);
    const work = new MinimumDegreeWork();
    // the last trials are larger than a leaf (several words a row, many degree buckets)
    for (let trial = 0; trial < 34; trial++) {
      const n = trial < 30 ? 1 + Math.floor(r() * 90) : 200 + Math.floor(r() * 200);
      const lists: number[][] = Array.from({ length: n }, () => []);
      const edges = Math.floor(r() * 3 * n);
      for (let e = 0; e < edges; e++) {
        const a = Math.floor(r() * n);
        const b = Math.floor(r() * n);
        lists[a].push(b);
        if (a !== b) lists[b].push(a);
      }
      const ptr = new Int32Array(n + 1);
      lists.forEach((l, i) => (ptr[i + 1] = ptr[i] + l.length));
      const g: Graph = { n, ptr, adj: Int32Array.from(lists.flat()) };
      // every other trial reuses one set of buffers left over from graphs of other sizes
      expect(Array.from(minimumDegree(g, trial % 2 ? work : undefined))).toEqual(refMinimumDegree(g));
    }
  });

  it('fills less than reverse Cuthill–McKee on a 12×12 grid (nnz of L by the symbolic analysis)', () => {
    const n = 144;
    const lists: number[][] = Array.from({ length: n }, (_, v) => [v]);
    for (let i = 0; i < 12; i++)
      for (let j = 0; j < 12; j++) {
        const v = 12 * i + j;
        if (i < 11) lists[v].push(v + 12), lists[v + 12].push(v);
        if (j < 11) lists[v].push(v + 1), lists[v + 1].push(v);
      }
    const ptr = new Int32Array(n + 1);
    lists.forEach((l, i) => (ptr[i + 1] = ptr[i] + l.length));
    const g: Graph = { n, ptr, adj: Int32Array.from(lists.flat()) };
    const md = analyse(g, minimumDegree(g)).nnzL;
    const rcm = analyse(g, reverseCuthillMcKee(g)).nnzL;
    expect(md).toBeLessThan(rcm);
  });
});

// ---------------------------------------------------------------------------------------------
// Nested dissection by coordinate bisection: the reference scans every node of every cut

/** Cuts of refDissection whose cover was smaller than either one-sided boundary. */
let refCoverSmaller = 0;

function refDissection(g: Graph, p: Float64Array, leafSize = 128): Int32Array {
  const n = g.n;
  const label = new Int32Array(n);
  let next = 1;
  const order: number[] = [];
  const leaf = (nodes: number[]) => {
    if (nodes.length <= 2) return order.push(...nodes);
    const local = new Map(nodes.map((v, i) => [v, i]));
    const ptr = new Int32Array(nodes.length + 1);
    const adj: number[] = [];
    nodes.forEach((v, i) => {
      for (let t = g.ptr[v]; t < g.ptr[v + 1]; t++) {
        const j = local.get(g.adj[t]);
        if (j !== undefined && j !== i) adj.push(j);
      }
      ptr[i + 1] = adj.length;
    });
    for (const i of refMinimumDegree({ n: nodes.length, ptr, adj: Int32Array.from(adj) })) order.push(nodes[i]);
  };
  const dissect = (nodes: number[]): void => {
    if (nodes.length <= leafSize) return void leaf(nodes);
    const id = next++;
    for (const v of nodes) label[v] = id;
    const xs = nodes.map((v) => p[2 * v]);
    const ys = nodes.map((v) => p[2 * v + 1]);
    const axis = Math.max(...xs) - Math.min(...xs) >= Math.max(...ys) - Math.min(...ys) ? 0 : 1;
    const c = (v: number) => p[2 * v + axis];
    const half = nodes.length >> 1;
    const median = nodes.map(c).sort((a, b) => a - b)[half];
    const low = new Map(nodes.map((v) => [v, c(v) < median]));
    let count = nodes.filter((v) => low.get(v)).length;
    for (const v of nodes) {
      if (count >= half) break;
      if (!low.get(v) && c(v) === median) {
        low.set(v, true);
        count++;
      }
    }
    // the separator: a smallest vertex cover of the edges across the cut (König's theorem), from
    // a largest matching by Kuhn's augmenting paths, low nodes in the nodes' order, neighbours in
    // the graph's order
    const across = (v: number) => Array.from(g.adj.subarray(g.ptr[v], g.ptr[v + 1])).filter((u) => label[u] === id && low.get(u) !== low.get(v));
    const lowBoundary = nodes.filter((v) => low.get(v) && across(v).length > 0);
    const mate = new Map<number, number>(); // high node → low node
    const matched = new Set<number>(); // low nodes
    for (const root of lowBoundary) {
      const visited = new Set<number>();
      const kuhn = (v: number): boolean => {
        for (const u of across(v)) {
          if (visited.has(u)) continue;
          visited.add(u);
          if (!mate.has(u) || kuhn(mate.get(u)!)) {
            mate.set(u, v);
            return true;
          }
        }
        return false;
      };
      if (kuhn(root)) matched.add(root);
    }
    // alternating paths from the unmatched low nodes
    const reached = new Set<number>(lowBoundary.filter((v) => !matched.has(v)));
    const queue = [...reached];
    while (queue.length) {
      for (const u of across(queue.pop()!)) {
        if (reached.has(u)) continue;
        reached.add(u);
        const w = mate.get(u)!;
        if (!reached.has(w)) reached.add(w), queue.push(w);
      }
    }
    const cover = new Set(nodes.filter((v) => (low.get(v) ? lowBoundary.includes(v) && !reached.has(v) : reached.has(v))));
    expect(cover.size).toBe(mate.size);
    const highBoundary = nodes.filter((v) => !low.get(v) && across(v).length > 0);
    if (cover.size < Math.min(lowBoundary.length, highBoundary.length)) refCoverSmaller++;
    if (cover.size >= nodes.length / 2) return void leaf(nodes);
    const S = nodes.filter((v) => cover.has(v));
    const A = nodes.filter((v) => !S.includes(v) && low.get(v));
    const B = nodes.filter((v) => !S.includes(v) && !low.get(v));
    if (A.length === 0 && B.length === 0) return void leaf(nodes);
    for (const v of S) label[v] = 0;
    if (A.length) dissect(A);
    if (B.length) dissect(B);
    order.push(...S);
  };
  dissect([...Array(n).keys()]);
  return Int32Array.from(order);
}

/** Points on a jittered grid with many equal coordinates, joined to near neighbours and a few long links. */
function geometricGraph(side: number, seed: number): { g: Graph; p: Float64Array } {
  const rand = rng(seed);
  const n = side * side;
  const p = new Float64Array(2 * n);
  for (let v = 0; v < n; v++) {
    // a third of the points keep exact grid coordinates (ties at the median), the rest move a little
    const jitter = v % 3 === 0 ? 0 : 0.3;
    p[2 * v] = (v % side) + jitter * (rand() - 0.5);
    p[2 * v + 1] = Math.floor(v / side) * 0.7 + jitter * (rand() - 0.5);
  }
  const sets = Array.from({ length: n }, (_, v) => new Set<number>([v]));
  for (let v = 0; v < n; v++) {
    for (let u = 0; u < n; u++) {
      if (u !== v && Math.hypot(p[2 * u] - p[2 * v], p[2 * u + 1] - p[2 * v + 1]) < 1.25) {
        sets[v].add(u);
        sets[u].add(v);
      }
    }
  }
  for (let k = 0; k < side; k++) {
    const a = Math.floor(rand() * n);
    const b = Math.floor(rand() * n);
    sets[a].add(b);
    sets[b].add(a);
  }
  const lists = sets.map((s) => [...s]);
  const ptr = new Int32Array(n + 1);
  lists.forEach((l, i) => (ptr[i + 1] = ptr[i] + l.length));
  return { g: { n, ptr, adj: Int32Array.from(lists.flat()) }, p };
}

// The separator of a cut (cut-cover.ts): a smallest vertex cover of a bipartite graph, from a
// largest matching (König's theorem; common practice), against every subset of small graphs.
describe('smallest vertex cover of a cut', () => {
  const coverOf = (nl: number, nh: number, edges: [number, number][]) => {
    const cut = new CutGraph(0);
    cut.ptr = new Int32Array(nl + 1);
    const lists: number[][] = Array.from({ length: nl }, () => []);
    for (const [i, j] of edges) lists[i].push(j);
    lists.forEach((l, i) => (cut.ptr[i + 1] = cut.ptr[i] + l.length));
    cut.adj = Int32Array.from(lists.flat());
    const size = smallestCover(cut, nl, nh);
    const low = Array.from({ length: nl }, (_, i) => cut.reachedLow[i] === 0);
    const high = Array.from({ length: nh }, (_, j) => cut.reachedHigh[j] === 1);
    return { size, low, high };
  };
  const bruteForce = (nl: number, nh: number, edges: [number, number][]) => {
    let best = nl + nh;
    for (let mask = 0; mask < 1 << (nl + nh); mask++) {
      const inCover = (v: number) => (mask >> v) & 1;
      if (edges.every(([i, j]) => inCover(i) || inCover(nl + j))) best = Math.min(best, popcount(mask));
    }
    return best;
  };
  const popcount = (x: number) => {
    let c = 0;
    for (; x; x &= x - 1) c++;
    return c;
  };

  it('a path of five edges across the cut needs three nodes; a star one', () => {
    // low 0–high 0–low 1–high 1–low 2–high 2 (alternating path of 5 edges)
    expect(coverOf(3, 3, [[0, 0], [1, 0], [1, 1], [2, 1], [2, 2]]).size).toBe(3);
    // one high node joined to four low ones
    const star = coverOf(4, 1, [[0, 0], [1, 0], [2, 0], [3, 0]]);
    expect(star.size).toBe(1);
    expect(star.high).toEqual([true]);
    expect(star.low).toEqual([false, false, false, false]);
  });

  it('random bipartite graphs up to 6 + 6 nodes: as small as the smallest cover, and a cover', () => {
    const rand = rng(77);
    for (let trial = 0; trial < 200; trial++) {
      const nl = 1 + Math.floor(rand() * 6);
      const nh = 1 + Math.floor(rand() * 6);
      const edges: [number, number][] = [];
      for (let i = 0; i < nl; i++) for (let j = 0; j < nh; j++) if (rand() < 0.35) edges.push([i, j]);
      const c = coverOf(nl, nh, edges);
      expect(c.size).toBe(bruteForce(nl, nh, edges));
      expect(c.low.filter(Boolean).length + c.high.filter(Boolean).length).toBe(c.size);
      for (const [i, j] of edges) expect(c.low[i] || c.high[j]).toBe(true);
    }
  });
});

describe('nested dissection by coordinate bisection', () => {
  it('equals the reference that scans every node of every cut (grids with ties and long links, far from the origin too)', () => {
    refCoverSmaller = 0;
    for (const [side, seed, shift] of [[20, 21, 0], [27, 22, 0], [24, 23, 1e6]]) {
      const { g, p } = geometricGraph(side, seed);
      for (let i = 0; i < p.length; i++) p[i] += shift;
      for (const leafSize of [8, 48, 128]) {
        const order = nestedDissection(g, { positions: p, leafSize });
        expect(Array.from(order)).toEqual(Array.from(refDissection(g, p, leafSize)));
      }
    }
    // the separators are smallest vertex covers of the cut, here often smaller than both sides' boundaries
    expect(refCoverSmaller).toBeGreaterThan(5);
  });

  it('a NaN coordinate turns the skipping off and still gives the reference ordering', () => {
    const { g, p } = geometricGraph(16, 24);
    p[2 * 37] = NaN;
    const order = nestedDissection(g, { positions: p, leafSize: 8 });
    expect(Array.from(order)).toEqual(Array.from(refDissection(g, p, 8)));
    expect(new Set(order).size).toBe(g.n);
  });
});

describe('symbolic analysis', () => {
  /** Dense boolean elimination of g's pattern under `order`: column and row counts and each column's rows. */
  function eliminate(g: Graph, order: Int32Array) {
    const n = g.n;
    const perm = inverse(order);
    const M = Array.from({ length: n }, () => new Uint8Array(n));
    for (let v = 0; v < n; v++) for (let t = g.ptr[v]; t < g.ptr[v + 1]; t++) M[perm[v]][perm[g.adj[t]]] = 1;
    const col = new Int32Array(n);
    const row = new Int32Array(n);
    const pattern: number[][] = [];
    for (let k = 0; k < n; k++) {
      const below = [];
      for (let i = k; i < n; i++) if (i === k || M[i][k]) below.push(i);
      col[k] = below.length;
      pattern.push(below);
      for (const i of below) row[i]++;
      for (const i of below) for (const j of below) if (i !== k && j !== k) M[i][j] = 1;
    }
    return { col, row, pattern };
  }

  it('column and row counts, nnz(L) and flops equal a dense boolean elimination; the equivalent order has the same fill', () => {
    const { g, p } = geometricGraph(14, 31);
    const order = nestedDissection(g, { positions: p, leafSize: 8 });
    const sym = analyse(g, order);
    // the analysis renumbers (a postorder, merged supernodes in runs): the same fill as the order given
    const given = eliminate(g, order);
    const { col, row, pattern } = eliminate(g, sym.order);
    expect(col.reduce((a, b) => a + b, 0)).toBe(given.col.reduce((a, b) => a + b, 0));
    expect(Array.from(col, (c) => c * c).reduce((a, b) => a + b, 0)).toBe(Array.from(given.col, (c) => c * c).reduce((a, b) => a + b, 0));
    expect(Array.from(sym.colCount)).toEqual(Array.from(col));
    expect(Array.from(sym.rowCount)).toEqual(Array.from(row));
    expect(sym.dotLength).toBe(Math.max(...row));
    expect(sym.rowWidth).toBe(Math.max(...Array.from(row, (r, j) => r + col[j] - 1)));
    // every column of a supernode lies in it, and its rows from that column on cover the column's pattern
    let stored = 0;
    for (let s = 0; s + 1 < sym.superStart.length; s++) {
      const w = sym.superStart[s + 1] - sym.superStart[s];
      const nf = sym.rowPtr[s + 1] - sym.rowPtr[s];
      for (let k = 0; k < w; k++) stored += nf - k;
      const rows = Array.from(sym.superRows.subarray(sym.rowPtr[s], sym.rowPtr[s + 1]));
      expect(rows).toEqual([...rows].sort((a, b) => a - b));
      for (let k = 0; k < w; k++) {
        const j = sym.superStart[s] + k;
        expect(rows[k]).toBe(j);
        const front = new Set(rows.slice(k));
        expect(pattern[j].filter((i) => !front.has(i))).toEqual([]);
      }
    }
    expect(sym.nnzL).toBe(stored);
    expect(sym.nnzL).toBeGreaterThanOrEqual(col.reduce((a, b) => a + b, 0));
    // relaxed supernodes: fewer than the fundamental ones, and some hold two siblings' columns
    // (a column whose tree parent is not the next column: merged across a branch)
    const childCount = new Int32Array(g.n);
    for (let j = 0; j < g.n; j++) if (sym.parent[j] >= 0) childCount[sym.parent[j]]++;
    let fundamental = 1;
    for (let j = 1; j < g.n; j++) if (!(sym.parent[j - 1] === j && childCount[j] === 1 && col[j - 1] === col[j] + 1)) fundamental++;
    const supernodes = sym.superStart.length - 1;
    expect(supernodes).toBeLessThan(fundamental);
    let acrossBranches = 0;
    for (let s = 0; s < supernodes; s++) for (let j = sym.superStart[s]; j + 1 < sym.superStart[s + 1]; j++) if (sym.parent[j] !== j + 1) acrossBranches++;
    expect(acrossBranches).toBeGreaterThan(0);
  });
});

// The band's bandwidth from below (sides.ts bandwidthLowerBound): never above the bandwidth of
// the orderings the band would use, also with several connected parts; and a large open count
// that skips the band orderings still reports the same count as the band factorisation.
describe('the band bandwidth lower bound', () => {
  it('is at most the ordered bandwidth on open, pinned and periodic supercells and a graph in parts', () => {
    const cases: [string, [number, number], string][] = [
      ['gallery:kagome', [12, 9], 'free'],
      ['gallery:twisted-kagome?twist=15', [10, 10], 'pinned'],
      ['gallery:honeycomb', [14, 6], 'x=periodic'],
      ['gallery:square', [8, 8], 'free'],
    ];
    for (const [spec, cells, bc] of cases) {
      const sc = buildSupercell(buildGallery(spec), cells, parseBoundary(bc));
      const R = rigidityMatrix(sc);
      const { flex, stress } = makeSides(R, conjugateTranspose(R));
      for (const side of [flex, stress]) {
        const low = bandwidthLowerBound(gramCsr(side));
        expect(low, `${spec} ${bc} ${side.gramName}`).toBeLessThanOrEqual(side.bw);
        // and not a trivial bound: within a factor 6 of the ordered one on these lattices
        expect(low * 6, `${spec} ${bc} ${side.gramName}`).toBeGreaterThanOrEqual(side.bw);
      }
    }
    // two paths (10 and 30 vertices): the longer decides, (30 − 1)/diameter 29 → 1; a 5×5 grid
    // (25 vertices, diameter 8) beside an isolated vertex → ⌈24/8⌉ = 3
    const csr = (n: number, edges: [number, number][]): HermitianCsr => {
      const rows: number[][] = Array.from({ length: n }, (_, i) => [i]);
      for (const [a, b] of edges) rows[a].push(b), rows[b].push(a);
      const ptr = new Int32Array(n + 1);
      rows.forEach((r, i) => (ptr[i + 1] = ptr[i] + r.length));
      const idx = Int32Array.from(rows.flatMap((r) => r.sort((x, y) => x - y)));
      return { n, ptr, idx, re: new Float64Array(idx.length), im: null };
    };
    const paths = csr(40, [...Array.from({ length: 9 }, (_, i) => [i, i + 1] as [number, number]), ...Array.from({ length: 29 }, (_, i) => [10 + i, 11 + i] as [number, number])]);
    expect(bandwidthLowerBound(paths)).toBe(1);
    const grid: [number, number][] = [];
    for (let i = 0; i < 5; i++) for (let j = 0; j < 5; j++) {
      if (i < 4) grid.push([5 * i + j, 5 * i + j + 5]);
      if (j < 4) grid.push([5 * i + j, 5 * i + j + 1]);
    }
    // from the middle of the drawing: the centre's eccentricity is 4; without positions the
    // middle of a long path may be another corner (eccentricity 8): a weaker bound, still valid
    const at = Float64Array.from({ length: 52 }, (_, t) => (t >= 50 ? 2 + 0.1 * (t - 50) : t % 2 === 0 ? Math.floor(t / 2 / 5) : (t / 2 - 0.5) % 5));
    expect(bandwidthLowerBound(csr(26, grid), at)).toBe(3);
    expect(bandwidthLowerBound(csr(26, grid))).toBeGreaterThanOrEqual(2);
    expect(bandwidthLowerBound(csr(26, grid))).toBeLessThanOrEqual(3);
  });

  it('an open kagome 48×48 count takes the sparse factor on the bound alone and counts as the band does', () => {
    const sc = buildSupercell(buildGallery('gallery:kagome'), [48, 48], parseBoundary('free'));
    const R = rigidityMatrix(sc);
    // the solver passes the drawing's positions (for the dissection and the bound)
    const auto = sparseSolver(sc, R, { relative: 1e-9, memoryLimit: 1.5 * 1024 ** 3 });
    const band = sparseSpaces(R, { relative: 1e-9, memoryLimit: 1.5 * 1024 ** 3, factor: 'band' });
    const f = auto.status.factorisation!;
    expect(f.method).toBe('sparse-ldl');
    expect(f.bandFigures).toBe('lower-bound');
    expect(f.flops).toBeLessThan(0.5 * f.bandFlops);
    // the band's true figures are at least the bounds
    expect(band.status.factorisation!.bandFigures).toBe('ordered');
    expect(band.status.factorisation!.flops).toBeGreaterThanOrEqual(f.bandFlops);
    expect(auto.decision.rank).toBe(band.decision.rank);
    expect(auto.status.certified && band.status.certified).toBe(true);
  });
});
