/**
 * Fill-reducing orderings for the sparse LDLᴴ: nested dissection (A. George, "Nested dissection
 * of a regular finite element mesh", SIAM J. Numer. Anal. 10, 345–363, 1973).
 *
 * A set of unknowns is split into two halves and a vertex separator S (no edge joins the two
 * halves once S is removed); each half is ordered recursively and S comes last, so eliminating
 * one half never fills the other. Halves come from the unknowns' positions when the caller gives
 * them (recursive coordinate bisection at the median of the longer extent; S is a smallest
 * vertex cover of the edges across the cut, cut-cover.ts), otherwise from the graph alone (a breadth-first
 * level structure from a pseudo-peripheral node; S is the median level). Subsets of at most
 * `leafSize` unknowns are ordered by minimum degree (minimum-degree.ts): on open kagome 96×96,
 * leaves of 128 so ordered leave 24 % fewer entries in L (and 10 % fewer flops) than leaves of
 * 48 in reverse Cuthill–McKee order.
 */
import { reverseCuthillMcKee, type Graph } from '../banded.js';
import { CutGraph, smallestCover } from './cut-cover.js';
import { MinimumDegreeWork, minimumDegree } from './minimum-degree.js';

export interface OrderingOptions {
  /** x, y of every unknown (2 per unknown), or null/undefined for the graph-only bisection. */
  positions?: Float64Array | null;
  /** Subsets this small are ordered by minimum degree, not split; default 128. */
  leafSize?: number;
}

/** The largest leaf ordered by minimum degree (it keeps a dense elimination graph of the leaf). */
const MAX_LEAF = 1024;

/** Nested dissection of g: returns `order` (order[newIndex] = old unknown). */
export function nestedDissection(g: Graph, options: OrderingOptions = {}): Int32Array {
  const { n } = g;
  const positions = options.positions ?? null;
  if (positions && positions.length !== 2 * n) throw new RangeError(`nestedDissection: ${positions.length} coordinates given for ${n} unknowns (need 2 per unknown)`);
  const leafSize = Math.max(2, Math.min(MAX_LEAF, options.leafSize ?? 128));
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
    for (let t = 0; t < nodes.length; t++) {
      const v = nodes[t];
      order[filled++] = v;
      label[v] = -1;
    }
  };
  const work = new MinimumDegreeWork();
  const subgraphWork = { ptr: new Int32Array(MAX_LEAF + 1), adj: new Int32Array(0) };
  const leaf = (nodes: Int32Array) => {
    if (nodes.length <= 2) return emit(nodes);
    // a subset that could not be split may be large: reverse Cuthill–McKee then (linear memory)
    const local = inducedSubgraph(g, nodes, localIndex, nodes.length <= MAX_LEAF ? subgraphWork : null);
    const o = nodes.length <= MAX_LEAF ? minimumDegree(local, work) : reverseCuthillMcKee(local);
    for (let t = 0; t < o.length; t++) {
      const v = nodes[o[t]];
      order[filled++] = v;
      label[v] = -1;
    }
  };
  const relabel = (nodes: Int32Array): number => {
    const id = nextLabel++;
    for (let t = 0; t < nodes.length; t++) label[nodes[t]] = id;
    return id;
  };

  const split: GeometricSplit | null = positions
    ? { ptr: g.ptr, adj: g.adj, p: positions, reach: neighbourReach(g, positions), coords: new Float64Array(n), isLow, inBoundary, label, box: new Float64Array(5), counts: new Int32Array(2), cut: new CutGraph(n), scratch: new Int32Array(n) }
    : null;

  /** Breadth-first level structure inside the subset; returns the nodes reached, by level. */
  const bfs = (start: number, id: number): { seen: number[]; depth: number } => {
    const seen = [start];
    level[start] = 0;
    let depth = 0;
    for (let head = 0; head < seen.length; head++) {
      const v = seen[head];
      for (let k = g.ptr[v], kEnd = g.ptr[v + 1]; k < kEnd; k++) {
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
    if (split) parts = splitGeometric(split, nodes, id);
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

  const all = new Int32Array(n);
  for (let i = 0; i < n; i++) all[i] = i;
  dissect(all);
  if (filled !== n) throw new Error(`nestedDissection: ordered ${filled} of ${n} unknowns`);
  return order;
}

/**
 * What a coordinate bisection reads and writes. Each step below is its own function with one
 * loop and nothing after it but a plain return (results go to `box` and `counts` inside the loop):
 * the first split runs over every unknown, and V8 compiles a long-running loop on the spot with
 * the feedback gathered so far. Code after the loop has none then; that compiled loop is reused
 * by later calls, which dropped out of it at the loop's end once per call (thousands of times),
 * and a function holding several loops was compiled and thrown away once per loop.
 */
interface GeometricSplit {
  ptr: Int32Array;
  adj: Int32Array;
  /** x, y per unknown; the neighbour reach per unknown and axis (neighbourReach). */
  p: Float64Array;
  reach: Float64Array;
  /** The coordinates of the subset being split (a prefix), reordered by partitionAt. */
  coords: Float64Array;
  isLow: Uint8Array;
  inBoundary: Uint8Array;
  label: Int32Array;
  /** Results of the steps: the extents (extents), the low and high boundary counts (markBoundary). */
  box: Float64Array;
  counts: Int32Array;
  /** The bipartite graph of the edges across a cut and its matching (coverCut), buffers reused. */
  cut: CutGraph;
  /** Room for one subset's nodes while they are put in order (splitGeometric). */
  scratch: Int32Array;
}

/** Split `nodes` (all carrying label `id`) into [A, B, S]; null when no useful split exists. */
function splitGeometric(st: GeometricSplit, nodes: Int32Array, id: number): [Int32Array, Int32Array, Int32Array] | null {
  const len = nodes.length;
  const box = st.box;
  extents(st.p, nodes, box);
  // (Math.min/max turned an extent NaN, and the comparison false, when a coordinate was NaN)
  const axis = box[4] === 0 && box[1] - box[0] >= box[3] - box[2] ? 0 : 1;
  // the low half: coordinates below the median, then ties in index order up to half
  const along = st.coords.subarray(0, len);
  gatherAxis(st.p, nodes, axis, along);
  const half = len >> 1;
  partitionAt(along, half);
  const median = along[half];
  let lowCount = markBelow(st.p, nodes, axis, median, st.isLow);
  if (lowCount < half) lowCount = markTies(st.p, nodes, axis, median, st.isLow, lowCount, half);
  // the one-sided boundaries of the cut, both in one pass (a node is on its side's boundary when
  // a neighbour in the subset lies across the cut); the separator is a smallest set of boundary
  // nodes touching every edge across the cut (never larger than either boundary)
  markBoundary(st, nodes, id, axis, median);
  const cover = coverCut(st, nodes, id);
  if (cover.size >= len / 2) return null;
  // the parts in place, as views of `nodes`: no fresh memory at each level of the dissection
  const a = lowCount - cover.low;
  const b = len - lowCount - (cover.size - cover.low);
  distribute(nodes, st.isLow, st.inBoundary, a, b, st.scratch);
  nodes.set(st.scratch.subarray(0, len));
  return [nodes.subarray(0, a), nodes.subarray(a, a + b), nodes.subarray(a + b)];
}

/**
 * A smallest vertex cover of the edges across the cut, from a largest matching between the low
 * and the high boundary (König's theorem: the cover is the low nodes no alternating path from an
 * unmatched low node reaches, and the high nodes it reaches; common practice). On a kagome
 * lattice's bars cut across its rows the one-sided boundaries hold 1.5 times as many nodes; the
 * open kagome 96×96 factor takes 14 % fewer flops than with the smaller boundary, the square
 * 128×128 one 34 %.
 * inBoundary is left 1 exactly on the cover; returns its size and how many of it are low.
 */
function coverCut(st: GeometricSplit, nodes: Int32Array, id: number): { size: number; low: number } {
  const nl = st.counts[0];
  const nh = st.counts[1];
  const cut = st.cut;
  if (cut.low.length < nl) cut.low = new Int32Array(Math.max(nl, 2 * cut.low.length));
  if (cut.high.length < nh) cut.high = new Int32Array(Math.max(nh, 2 * cut.high.length));
  if (cut.ptr.length < nl + 1) cut.ptr = new Int32Array(Math.max(nl + 1, 2 * cut.ptr.length));
  const degrees = listBoundary(st, nodes, cut.low, cut.high);
  if (cut.adj.length < degrees) cut.adj = new Int32Array(Math.max(degrees, 2 * cut.adj.length));
  const edges = cutEdges(st, id, nl, cut);
  if (edges === 0) {
    clearBoundary(st.inBoundary, cut.low, nl);
    clearBoundary(st.inBoundary, cut.high, nh);
    return { size: 0, low: 0 };
  }
  const size = smallestCover(cut, nl, nh);
  const low = keepCover(st.inBoundary, cut.low, cut.reachedLow, nl, 0);
  keepCover(st.inBoundary, cut.high, cut.reachedHigh, nh, 1);
  return { size, low };
}

/** box = [min x, max x, min y, max y, 1 if a coordinate is NaN else 0] over the nodes (written as they change). */
function extents(p: Float64Array, nodes: Int32Array, box: Float64Array): void {
  box[0] = box[2] = Infinity;
  box[1] = box[3] = -Infinity;
  box[4] = 0;
  for (let t = 0; t < nodes.length; t++) {
    const v = nodes[t];
    const x = p[2 * v];
    const y = p[2 * v + 1];
    if (x < box[0]) box[0] = x;
    if (x > box[1]) box[1] = x;
    if (y < box[2]) box[2] = y;
    if (y > box[3]) box[3] = y;
    if (x !== x || y !== y) box[4] = 1;
  }
}

function gatherAxis(p: Float64Array, nodes: Int32Array, axis: number, out: Float64Array): void {
  for (let t = 0; t < nodes.length; t++) out[t] = p[2 * nodes[t] + axis];
}

/** isLow = coordinate below the median; returns how many are. */
function markBelow(p: Float64Array, nodes: Int32Array, axis: number, median: number, isLow: Uint8Array): number {
  let count = 0;
  for (let t = 0; t < nodes.length; t++) {
    const v = nodes[t];
    if (p[2 * v + axis] < median) {
      isLow[v] = 1;
      count++;
    } else isLow[v] = 0;
  }
  return count;
}

/** Nodes at the median join the low side in index order until it holds `half`. */
function markTies(p: Float64Array, nodes: Int32Array, axis: number, median: number, isLow: Uint8Array, count: number, half: number): number {
  for (let t = 0; t < nodes.length && count < half; t++) {
    const v = nodes[t];
    if (!isLow[v] && p[2 * v + axis] === median) {
      isLow[v] = 1;
      count++;
    }
  }
  return count;
}

/**
 * inBoundary = 1 for a node with a neighbour in the subset across the cut; st.counts gets the low
 * and the high side's counts (written inside the loop). A low node whose farthest neighbour along the
 * axis still lies below the median (a high one: above it) has no neighbour across the cut and is
 * not scanned: its reach is never below the true distance and rounding is monotone, so the test
 * only skips nodes the scan would clear.
 */
function markBoundary(st: GeometricSplit, nodes: Int32Array, id: number, axis: number, median: number): void {
  const { ptr, adj, p, reach, isLow, inBoundary, label, counts } = st;
  counts[0] = counts[1] = 0;
  for (let t = 0; t < nodes.length; t++) {
    const v = nodes[t];
    const side = isLow[v];
    inBoundary[v] = 0;
    const c = p[2 * v + axis];
    if (side ? c + reach[2 * v + axis] < median : c - reach[2 * v + axis] > median) continue;
    for (let k = ptr[v], kEnd = ptr[v + 1]; k < kEnd; k++) {
      const u = adj[k];
      if (label[u] === id && isLow[u] !== side) {
        inBoundary[v] = 1;
        counts[side ? 0 : 1]++;
        break;
      }
    }
  }
}

/** The boundary nodes into low and high lists (slot[v] = the place in its list); returns the edges the low ones have in all. */
function listBoundary(st: GeometricSplit, nodes: Int32Array, low: Int32Array, high: Int32Array): number {
  const { ptr, isLow, inBoundary } = st;
  const slot = st.cut.slot;
  let a = 0;
  let b = 0;
  let degrees = 0;
  for (let t = 0; t < nodes.length; t++) {
    const v = nodes[t];
    if (!inBoundary[v]) continue;
    if (isLow[v]) {
      slot[v] = a;
      low[a++] = v;
      degrees += ptr[v + 1] - ptr[v];
    } else {
      slot[v] = b;
      high[b++] = v;
    }
  }
  return degrees;
}

/** Each low boundary node's neighbours across the cut, as places in the high list; returns how many. */
function cutEdges(st: GeometricSplit, id: number, nl: number, cut: CutGraph): number {
  const { ptr, adj, isLow, label } = st;
  const { low, slot } = cut;
  let w = 0;
  cut.ptr[0] = 0;
  for (let i = 0; i < nl; i++) {
    const v = low[i];
    for (let k = ptr[v], kEnd = ptr[v + 1]; k < kEnd; k++) {
      const u = adj[k];
      if (label[u] === id && !isLow[u]) cut.adj[w++] = slot[u];
    }
    cut.ptr[i + 1] = w;
  }
  return w;
}

function clearBoundary(inBoundary: Uint8Array, list: Int32Array, k: number): void {
  for (let i = 0; i < k; i++) inBoundary[list[i]] = 0;
}

/** inBoundary = 1 on the listed nodes whose reached flag equals `coverWhen`, 0 on the others; returns how many are 1. */
function keepCover(inBoundary: Uint8Array, list: Int32Array, reached: Uint8Array, k: number, coverWhen: number): number {
  let kept = 0;
  for (let i = 0; i < k; i++) {
    if (reached[i] === coverWhen) {
      inBoundary[list[i]] = 1;
      kept++;
    } else inBoundary[list[i]] = 0;
  }
  return kept;
}

/**
 * Into out: the low side (the first lowSize), the high side (the next highSize), then the
 * separator (inBoundary), each in the nodes' order.
 */
function distribute(nodes: Int32Array, isLow: Uint8Array, inBoundary: Uint8Array, lowSize: number, highSize: number, out: Int32Array): void {
  let a = 0;
  let b = lowSize;
  let c = lowSize + highSize;
  for (let t = 0; t < nodes.length; t++) {
    const v = nodes[t];
    if (inBoundary[v]) out[c++] = v;
    else if (isLow[v]) out[a++] = v;
    else out[b++] = v;
  }
}

/**
 * The subgraph on `nodes` (local indices 0…k−1), self loops dropped; `local` is −1 everywhere and
 * left so. With `work` the graph's arrays are views of its buffers (grown when short), valid until
 * the next call: the leaves of a dissection are ordered one after another.
 */
function inducedSubgraph(g: Graph, nodes: Int32Array, local: Int32Array, work: { ptr: Int32Array; adj: Int32Array } | null): Graph {
  const k = nodes.length;
  let bound = 0;
  for (let i = 0; i < k; i++) {
    const v = nodes[i];
    local[v] = i;
    bound += g.ptr[v + 1] - g.ptr[v];
  }
  if (work && work.adj.length < bound) work.adj = new Int32Array(Math.max(bound, 2 * work.adj.length));
  const ptr = work ? work.ptr : new Int32Array(k + 1);
  const adj = work ? work.adj : new Int32Array(bound);
  const w = localEdges(g, nodes, local, ptr, adj);
  for (let i = 0; i < k; i++) local[nodes[i]] = -1;
  return { n: k, ptr: ptr.subarray(0, k + 1), adj: adj.subarray(0, w) };
}

/** The edges of the subgraph into ptr, adj; returns how many. */
function localEdges(g: Graph, nodes: Int32Array, local: Int32Array, ptr: Int32Array, adj: Int32Array): number {
  let w = 0;
  ptr[0] = 0;
  for (let i = 0; i < nodes.length; i++) {
    const v = nodes[i];
    for (let t = g.ptr[v], tEnd = g.ptr[v + 1]; t < tEnd; t++) {
      const j = local[g.adj[t]];
      if (j >= 0 && j !== i) adj[w++] = j;
    }
    ptr[i + 1] = w;
  }
  return w;
}

/**
 * For every unknown v and axis a: a number never below |p(u)_a − p(v)_a| for any neighbour u (the
 * rounded difference raised by 2⁻⁴⁰ relative); Infinity on every axis when some coordinate is not
 * finite, so nothing is skipped. Two per unknown, like the positions.
 */
function neighbourReach(g: Graph, p: Float64Array): Float64Array {
  const { n, ptr, adj } = g;
  const reach = new Float64Array(2 * n);
  for (let i = 0; i < 2 * n; i++) {
    if (!Number.isFinite(p[i])) return reach.fill(Infinity);
  }
  const up = 1 + 2 ** -40;
  for (let v = 0; v < n; v++) {
    const x = p[2 * v];
    const y = p[2 * v + 1];
    let rx = 0;
    let ry = 0;
    for (let k = ptr[v], kEnd = ptr[v + 1]; k < kEnd; k++) {
      const u = adj[k];
      const dx = Math.abs(p[2 * u] - x);
      const dy = Math.abs(p[2 * u + 1] - y);
      if (dx > rx) rx = dx;
      if (dy > ry) ry = dy;
    }
    reach[2 * v] = rx * up;
    reach[2 * v + 1] = ry * up;
  }
  return reach;
}

/**
 * The k-th smallest entry (0-based) of a, the value a full sort would put at index k; a is
 * reordered (partitionAt).
 */
export function selectKth(a: Float64Array, k: number): number {
  partitionAt(a, k);
  return a[k];
}

/**
 * Reorders a so a[k] holds the value a full sort would put there, with nothing larger before it
 * and nothing smaller after it. Quickselect with the median of three as pivot and Hoare
 * partitioning (C. A. R. Hoare, "Algorithm 65: Find", Comm. ACM 4(7), 321–322, 1961): O(length)
 * expected, where the sort it replaces cost O(length·log length) at every level of the dissection.
 */
function partitionAt(a: Float64Array, k: number): void {
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
    else return;
  }
}

function swap(a: Float64Array, i: number, j: number): void {
  const t = a[i];
  a[i] = a[j];
  a[j] = t;
}
