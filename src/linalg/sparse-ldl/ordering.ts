/**
 * Fill-reducing orderings for the sparse LDLᴴ: nested dissection (A. George, "Nested dissection
 * of a regular finite element mesh", SIAM J. Numer. Anal. 10, 345–363, 1973).
 *
 * A set of unknowns is split into two halves and a vertex separator S (no edge joins the two
 * halves once S is removed); each half is ordered recursively and S comes last, so eliminating
 * one half never fills the other. Halves come from the unknowns' positions when the caller gives
 * them (recursive coordinate bisection at the median of the longer extent; S is the smaller of
 * the two one-sided boundaries of the cut), otherwise from the graph alone (a breadth-first
 * level structure from a pseudo-peripheral node; S is the median level). Subsets of at most
 * `leafSize` unknowns are ordered by reverse Cuthill–McKee (common practice).
 */
import { reverseCuthillMcKee, type Graph } from '../banded.js';

export interface OrderingOptions {
  /** x, y of every unknown (2 per unknown), or null/undefined for the graph-only bisection. */
  positions?: Float64Array | null;
  /** Subsets this small are ordered by reverse Cuthill–McKee, not split; default 48. */
  leafSize?: number;
}

/** Nested dissection of g: returns `order` (order[newIndex] = old unknown). */
export function nestedDissection(g: Graph, options: OrderingOptions = {}): Int32Array {
  const { n } = g;
  const positions = options.positions ?? null;
  if (positions && positions.length !== 2 * n) throw new RangeError(`nestedDissection: ${positions.length} coordinates given for ${n} unknowns (need 2 per unknown)`);
  const leafSize = Math.max(2, options.leafSize ?? 48);
  const order = new Int32Array(n);
  let filled = 0;
  // label[v] = id of the subset v currently belongs to (−1: already ordered)
  const label = new Int32Array(n);
  let nextLabel = 1;
  const level = new Int32Array(n).fill(-1);
  const isLow = new Uint8Array(n);
  const inBoundary = new Uint8Array(n);
  const localIndex = new Int32Array(n).fill(-1);

  const emit = (nodes: Int32Array) => {
    for (const v of nodes) {
      order[filled++] = v;
      label[v] = -1;
    }
  };
  const leaf = (nodes: Int32Array) => {
    if (nodes.length <= 2) return emit(nodes);
    const local = inducedSubgraph(g, nodes, localIndex);
    const o = reverseCuthillMcKee(local);
    emit(o.map((i) => nodes[i]));
  };
  const relabel = (nodes: Int32Array): number => {
    const id = nextLabel++;
    for (const v of nodes) label[v] = id;
    return id;
  };

  /** Split `nodes` (all carrying label `id`) into [A, B, S]; null when no useful split exists. */
  const splitGeometric = (nodes: Int32Array, id: number): [Int32Array, Int32Array, Int32Array] | null => {
    const p = positions!;
    let x0 = Infinity;
    let x1 = -Infinity;
    let y0 = Infinity;
    let y1 = -Infinity;
    for (let t = 0; t < nodes.length; t++) {
      const v = nodes[t];
      x0 = Math.min(x0, p[2 * v]);
      x1 = Math.max(x1, p[2 * v]);
      y0 = Math.min(y0, p[2 * v + 1]);
      y1 = Math.max(y1, p[2 * v + 1]);
    }
    const axis = x1 - x0 >= y1 - y0 ? 0 : 1;
    // the low half: coordinates below the median, then ties in index order up to half
    const coords = new Float64Array(nodes.length);
    for (let i = 0; i < nodes.length; i++) coords[i] = p[2 * nodes[i] + axis];
    const half = nodes.length >> 1;
    const median = selectKth(coords, half);
    let lowCount = 0;
    for (let t = 0; t < nodes.length; t++) {
      const v = nodes[t];
      const low = p[2 * v + axis] < median;
      isLow[v] = low ? 1 : 0;
      if (low) lowCount++;
    }
    for (let t = 0; t < nodes.length; t++) {
      const v = nodes[t];
      if (lowCount >= half) break;
      if (!isLow[v] && p[2 * v + axis] === median) {
        isLow[v] = 1;
        lowCount++;
      }
    }
    // the one-sided boundaries of the cut, both in one pass (a node is on its side's boundary when
    // a neighbour in the subset lies across the cut); the smaller is the separator
    let lowBoundary = 0;
    let highBoundary = 0;
    const { ptr, adj } = g;
    for (let t = 0; t < nodes.length; t++) {
      const v = nodes[t];
      const side = isLow[v];
      inBoundary[v] = 0;
      for (let k = ptr[v]; k < ptr[v + 1]; k++) {
        const u = adj[k];
        if (label[u] === id && isLow[u] !== side) {
          inBoundary[v] = 1;
          if (side) lowBoundary++;
          else highBoundary++;
          break;
        }
      }
    }
    const sepSide = lowBoundary <= highBoundary ? 1 : 0;
    const sepSize = Math.min(lowBoundary, highBoundary);
    if (sepSize >= nodes.length / 2) return null;
    const A = new Int32Array(lowCount - (sepSide === 1 ? sepSize : 0));
    const B = new Int32Array(nodes.length - lowCount - (sepSide === 0 ? sepSize : 0));
    const S = new Int32Array(sepSize);
    let a = 0;
    let b = 0;
    let c = 0;
    for (let t = 0; t < nodes.length; t++) {
      const v = nodes[t];
      if (inBoundary[v] && isLow[v] === sepSide) S[c++] = v;
      else if (isLow[v]) A[a++] = v;
      else B[b++] = v;
    }
    return [A, B, S];
  };

  /** Breadth-first level structure inside the subset; returns the nodes reached, by level. */
  const bfs = (start: number, id: number): { seen: number[]; depth: number } => {
    const seen = [start];
    level[start] = 0;
    let depth = 0;
    for (let head = 0; head < seen.length; head++) {
      const v = seen[head];
      for (let k = g.ptr[v]; k < g.ptr[v + 1]; k++) {
        const u = g.adj[k];
        if (label[u] !== id || level[u] >= 0) continue;
        level[u] = level[v] + 1;
        depth = Math.max(depth, level[u]);
        seen.push(u);
      }
    }
    return { seen, depth };
  };
  const clearLevels = (nodes: number[]) => {
    for (const v of nodes) level[v] = -1;
  };

  const splitByLevels = (nodes: Int32Array, id: number): [Int32Array, Int32Array, Int32Array] | 'disconnected' | null => {
    let start = nodes[0];
    let { seen, depth } = bfs(start, id);
    if (seen.length < nodes.length) {
      clearLevels(seen);
      return 'disconnected';
    }
    // pseudo-peripheral start: restart from a last-level node while the depth grows
    for (let it = 0; it < 4; it++) {
      const last = seen.filter((v) => level[v] === depth);
      const cand = last[0];
      clearLevels(seen);
      const next = bfs(cand, id);
      if (next.depth <= depth) {
        clearLevels(next.seen);
        ({ seen, depth } = bfs(start, id));
        break;
      }
      start = cand;
      seen = next.seen;
      depth = next.depth;
    }
    if (depth < 2) {
      clearLevels(seen);
      return null;
    }
    const counts = new Int32Array(depth + 1);
    for (const v of seen) counts[level[v]]++;
    // the separating level: the one where the running count passes half (never the first or last)
    let cut = 1;
    let acc = counts[0];
    while (cut < depth - 1 && acc + counts[cut] < nodes.length / 2) acc += counts[cut++];
    const A: number[] = [];
    const B: number[] = [];
    const S: number[] = [];
    for (const v of seen) (level[v] < cut ? A : level[v] > cut ? B : S).push(v);
    clearLevels(seen);
    return [Int32Array.from(A), Int32Array.from(B), Int32Array.from(S)];
  };

  const components = (nodes: Int32Array, id: number): Int32Array[] => {
    const out: Int32Array[] = [];
    for (const v of nodes) {
      if (label[v] !== id || level[v] >= 0) continue;
      const { seen } = bfs(v, id);
      out.push(Int32Array.from(seen));
    }
    for (const c of out) clearLevels(Array.from(c));
    return out;
  };

  const dissect = (nodes: Int32Array): void => {
    if (nodes.length <= leafSize) return leaf(nodes);
    const id = relabel(nodes);
    let parts: [Int32Array, Int32Array, Int32Array] | null;
    if (positions) parts = splitGeometric(nodes, id);
    else {
      const r = splitByLevels(nodes, id);
      if (r === 'disconnected') {
        for (const c of components(nodes, id)) dissect(c);
        return;
      }
      parts = r;
    }
    if (!parts || (parts[0].length === 0 && parts[1].length === 0)) return leaf(nodes);
    const [A, B, S] = parts;
    // S keeps its label until emitted, so the halves' splits see it as outside
    for (const v of S) label[v] = 0;
    if (A.length) dissect(A);
    if (B.length) dissect(B);
    emit(S);
  };

  const all = Int32Array.from({ length: n }, (_, i) => i);
  dissect(all);
  if (filled !== n) throw new Error(`nestedDissection: ordered ${filled} of ${n} unknowns`);
  return order;
}

/** The subgraph on `nodes` (local indices 0…k−1), self loops dropped; `local` is −1 everywhere and left so. */
function inducedSubgraph(g: Graph, nodes: Int32Array, local: Int32Array): Graph {
  const k = nodes.length;
  nodes.forEach((v, i) => (local[v] = i));
  const ptr = new Int32Array(k + 1);
  const adj: number[] = [];
  for (let i = 0; i < k; i++) {
    const v = nodes[i];
    for (let t = g.ptr[v]; t < g.ptr[v + 1]; t++) {
      const j = local[g.adj[t]];
      if (j >= 0 && j !== i) adj.push(j);
    }
    ptr[i + 1] = adj.length;
  }
  for (const v of nodes) local[v] = -1;
  return { n: k, ptr, adj: Int32Array.from(adj) };
}

/**
 * The k-th smallest entry (0-based) of a, the value a full sort would put at index k; a is
 * reordered. Quickselect with the median of three as pivot and Hoare partitioning (C. A. R.
 * Hoare, "Algorithm 65: Find", Comm. ACM 4(7), 321–322, 1961): O(length) expected, where the
 * sort it replaces cost O(length·log length) at every level of the dissection.
 */
export function selectKth(a: Float64Array, k: number): number {
  let lo = 0;
  let hi = a.length - 1;
  while (hi > lo) {
    const mid = (lo + hi) >> 1;
    // median of three into a[mid]
    if (a[mid] < a[lo]) swap(a, mid, lo);
    if (a[hi] < a[lo]) swap(a, hi, lo);
    if (a[hi] < a[mid]) swap(a, hi, mid);
    const pivot = a[mid];
    let i = lo;
    let j = hi;
    while (i <= j) {
      while (a[i] < pivot) i++;
      while (a[j] > pivot) j--;
      if (i <= j) {
        swap(a, i, j);
        i++;
        j--;
      }
    }
    // now a[lo..j] ≤ pivot ≤ a[i..hi], and a[j+1..i−1] equal the pivot
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else return a[k];
  }
  return a[k];
}

function swap(a: Float64Array, i: number, j: number): void {
  const t = a[i];
  a[i] = a[j];
  a[j] = t;
}
