/**
 * Symbolic analysis of a sparse LDLᴴ, once per pattern and ordering: the elimination tree
 * (J. W. H. Liu, "The role of elimination trees in sparse factorization", SIAM J. Matrix Anal.
 * Appl. 11, 134–172, 1990), row and column counts of L from the row
 * subtrees, and supernodes: runs of consecutive columns j, j+1, … where each is the next one's
 * only child in the tree and their columns of L share one pattern below the run (common
 * practice), then merged into fewer, wider ones (amalgamate.ts). Each supernode's rows (its own
 * columns, then the rows below) are the front of the multifrontal factorisation.
 */
import type { Graph } from '../banded.js';
import { sortRows } from '../sparse.js';
import { amalgamate, type Structure } from './amalgamate.js';

export interface SymbolicFactor {
  n: number;
  /** order[new] = old unknown; perm[old] = new. */
  order: Int32Array;
  perm: Int32Array;
  /** Elimination tree over the new indices (−1 at a root). */
  parent: Int32Array;
  /** Nonzeros of each column of L, diagonal included. */
  colCount: Int32Array;
  /** Nonzeros of each row of L, diagonal included. */
  rowCount: Int32Array;
  /** Supernode s holds columns superStart[s] … superStart[s+1] − 1. */
  superStart: Int32Array;
  /** Rows of supernode s: superRows[rowPtr[s] … rowPtr[s+1] − 1], ascending, its own columns first. */
  rowPtr: Int32Array;
  superRows: Int32Array;
  /** Parent supernode (−1 at a root). */
  superParent: Int32Array;
  /** Σ over columns of colCount (= nnz(L), diagonal included). */
  nnzL: number;
  /** Σ over columns of colCount² (real flops of the factorisation, multiply and add counted apart). */
  flops: number;
  /** Longest inner product of the factorisation: max row count of L. */
  dotLength: number;
  /** Most nonzeros in a row of L + Lᴴ (row count + column count − 1). */
  rowWidth: number;
  /** Largest front (rows of a supernode) and the peak words of update matrices held at once. */
  maxFront: number;
  peakUpdateWords: number;
}

/**
 * Analyse the pattern g (neighbours of each unknown; self loops ignored) under `ordering`. The
 * result's `order` is an equivalent one (the same fill): a postorder of the merged supernodes'
 * tree, each one's columns in a run (the numeric factorisation keeps its update matrices on a stack). `maxSupernode` caps the columns of one supernode
 * (default 256).
 */
export function analyse(g: Graph, ordering: Int32Array, maxSupernode = 256): SymbolicFactor {
  const n = g.n;
  if (ordering.length !== n) throw new RangeError(`analyse: an ordering of ${ordering.length} for ${n} unknowns`);
  // each step is its own function: V8 compiles a long first run of a loop with the feedback
  // gathered so far, so one function holding every loop was compiled again at each new loop
  const perm = inversePermutation(ordering);
  if (!perm) throw new RangeError('analyse: the ordering is not a permutation');
  // (no postorder first: nested dissection's orders come out postordered, or nearly, and the
  // merging renumbers the columns by a postorder of the merged tree anyway)
  const order = ordering;
  const parent = new Int32Array(n).fill(-1);
  const colCount = new Int32Array(n).fill(1);
  const rowCount = new Int32Array(n);
  const mark = new Int32Array(n).fill(-1);
  treeAndCounts(g, order, perm, parent, mark, colCount, rowCount);
  const superStart = fundamentalSupernodes(parent, colCount, maxSupernode);
  const ns = superStart.length - 1;
  const superParent = new Int32Array(ns).fill(-1);
  supernodeParents(parent, superStart, superParent);
  const rowPtr = new Int32Array(ns + 1);
  frontStarts(colCount, superStart, rowPtr);
  // merged by the sizes alone; each merged front's rows are then found once, in the new numbering
  const merged = amalgamate({ n, order, perm, parent, colCount, rowCount, superStart, rowPtr, superParent }, maxSupernode);
  mark.fill(-1);
  const superRows = supernodeRows(g, merged.order, merged.perm, merged.superStart, merged.superParent, merged.rowPtr, mark);
  return finish({ ...merged, superRows });
}

/** perm[order[i]] = i, or null when order is not a permutation of 0 … n−1. */
function inversePermutation(order: Int32Array): Int32Array | null {
  const n = order.length;
  const perm = new Int32Array(n).fill(-1);
  for (let i = 0; i < n; i++) {
    const v = order[i];
    if (!(v >= 0 && v < n) || perm[v] >= 0) return null;
    perm[v] = i;
  }
  return perm;
}

/** Each supernode's parent: the supernode holding its last column's parent (−1 at a root). */
function supernodeParents(parent: Int32Array, superStart: Int32Array, superParent: Int32Array): void {
  const ns = superStart.length - 1;
  const superOf = new Int32Array(parent.length);
  for (let s = 0; s < ns; s++) superOf.fill(s, superStart[s], superStart[s + 1]);
  supernodeParentsOf(parent, superStart, superOf, superParent);
}

function supernodeParentsOf(parent: Int32Array, superStart: Int32Array, superOf: Int32Array, superParent: Int32Array): void {
  for (let s = 0; s < superParent.length; s++) {
    const p = parent[superStart[s + 1] - 1];
    if (p >= 0) superParent[s] = superOf[p];
  }
}

/** rowPtr: where each supernode's rows start (its first column's count, cumulative). */
function frontStarts(colCount: Int32Array, superStart: Int32Array, rowPtr: Int32Array): void {
  for (let s = 0; s + 1 < rowPtr.length; s++) rowPtr[s + 1] = rowPtr[s] + colCount[superStart[s]];
}

/**
 * The elimination tree over the new indices (−1 at a root) and the row and column counts of L, in
 * one pass over the rows. Row k first links the tree: from each i < k with A_ki ≠ 0, up through
 * `ancestor` (path compression) to a root, which gets parent k. Then row k of L is the union of
 * the tree paths from those i up to k (every node on them is below k, so its parent is set by
 * now): it adds 1 to the column count of every column on them.
 */
function treeAndCounts(g: Graph, order: Int32Array, perm: Int32Array, parent: Int32Array, mark: Int32Array, colCount: Int32Array, rowCount: Int32Array): void {
  const n = g.n;
  const { ptr, adj } = g;
  // path-compressed ancestors (shortcuts up the tree being built)
  const ancestor = new Int32Array(n).fill(-1);
  for (let k = 0; k < n; k++) {
    const v = order[k];
    const tBegin = ptr[v];
    const tEnd = ptr[v + 1];
    for (let t = tBegin; t < tEnd; t++) {
      let i = perm[adj[t]];
      while (i !== -1 && i < k) {
        const next = ancestor[i];
        ancestor[i] = k;
        if (next === -1) {
          parent[i] = k;
          break;
        }
        i = next;
      }
    }
    mark[k] = k;
    let row = 1;
    for (let t = tBegin; t < tEnd; t++) {
      let j = perm[adj[t]];
      if (j >= k) continue;
      while (mark[j] !== k) {
        mark[j] = k;
        colCount[j]++;
        row++;
        j = parent[j];
      }
    }
    rowCount[k] = row;
  }
}

/**
 * Fundamental supernodes: j joins j−1's when j−1's only child-to-parent link is j and the
 * patterns nest (and the supernode stays under maxSupernode columns). Returns the starts and n.
 */
function fundamentalSupernodes(parent: Int32Array, colCount: Int32Array, maxSupernode: number): Int32Array {
  const n = parent.length;
  if (n === 0) return new Int32Array(1);
  const childCount = new Int32Array(n);
  for (let j = 0; j < n; j++) if (parent[j] >= 0) childCount[parent[j]]++;
  const starts = new Int32Array(n + 1);
  let ns = 1;
  for (let j = 1; j < n; j++) {
    const size = j - starts[ns - 1];
    const joins = parent[j - 1] === j && childCount[j] === 1 && colCount[j - 1] === colCount[j] + 1 && size < maxSupernode;
    if (!joins) starts[ns++] = j;
  }
  starts[ns] = n;
  return starts.slice(0, ns + 1);
}

/** Rows of each supernode: its columns, A's entries below it, and its children's rows below it (ascending). */
function supernodeRows(g: Graph, order: Int32Array, perm: Int32Array, superStart: Int32Array, superParent: Int32Array, rowPtr: Int32Array, mark: Int32Array): Int32Array {
  const ns = superStart.length - 1;
  const superRows = new Int32Array(rowPtr[ns]);
  const firstChild = new Int32Array(ns).fill(-1);
  const nextSibling = new Int32Array(ns).fill(-1);
  for (let s = ns - 1; s >= 0; s--) {
    const p = superParent[s];
    if (p >= 0) {
      nextSibling[s] = firstChild[p];
      firstChild[p] = s;
    }
  }
  // one call per supernode: compiled whole after a few calls (see analyse)
  for (let s = 0; s < ns; s++) rowsOfSupernode(g, order, perm, superStart, rowPtr, superRows, mark, firstChild, nextSibling, s);
  return superRows;
}

/** Supernode s's rows into superRows (see supernodeRows). */
function rowsOfSupernode(g: Graph, order: Int32Array, perm: Int32Array, superStart: Int32Array, rowPtr: Int32Array, superRows: Int32Array, mark: Int32Array, firstChild: Int32Array, nextSibling: Int32Array, s: number): void {
  const { ptr, adj } = g;
  const f = superStart[s];
  const l = superStart[s + 1];
  let w = rowPtr[s];
  for (let j = f; j < l; j++) {
    mark[j] = s;
    superRows[w++] = j;
  }
  const base = w;
  for (let j = f; j < l; j++) {
    const v = order[j];
    for (let t = ptr[v], tEnd = ptr[v + 1]; t < tEnd; t++) {
      const i = perm[adj[t]];
      if (i >= l && mark[i] !== s) {
        mark[i] = s;
        superRows[w++] = i;
      }
    }
  }
  for (let c = firstChild[s]; c >= 0; c = nextSibling[c]) {
    for (let t = rowPtr[c], tEnd = rowPtr[c + 1]; t < tEnd; t++) {
      const i = superRows[t];
      if (i >= l && mark[i] !== s) {
        mark[i] = s;
        superRows[w++] = i;
      }
    }
  }
  if (w !== rowPtr[s + 1]) throw new Error(`analyse: supernode ${s} has ${w - rowPtr[s]} rows, the column count says ${rowPtr[s + 1] - rowPtr[s]}`);
  sortRows(superRows, base, w);
}

/** The figures of a structure: sizes, flops, the update matrices' peak. */
function finish(st: Structure & Pick<SymbolicFactor, 'superRows'>): SymbolicFactor {
  const { n, colCount, rowCount, superStart, rowPtr, superParent } = st;
  const ns = superStart.length - 1;
  const firstChild = new Int32Array(ns).fill(-1);
  const nextSibling = new Int32Array(ns).fill(-1);
  for (let s = ns - 1; s >= 0; s--) {
    const p = superParent[s];
    if (p >= 0) {
      nextSibling[s] = firstChild[p];
      firstChild[p] = s;
    }
  }
  // peak of the update matrices' stack (numeric.ts): a front's children's matrices are freed when
  // it is assembled, then its own is pushed (a root pushes none)
  let live = 0;
  let peakUpdateWords = 0;
  const updateWords = (s: number) => {
    const u = rowPtr[s + 1] - rowPtr[s] - (superStart[s + 1] - superStart[s]);
    return superParent[s] >= 0 ? u * u : 0;
  };
  for (let s = 0; s < ns; s++) {
    for (let c = firstChild[s]; c >= 0; c = nextSibling[c]) live -= updateWords(c);
    live += updateWords(s);
    peakUpdateWords = Math.max(peakUpdateWords, live);
  }

  // nnz(L) and flops as stored and done (explicit zeros of relaxed supernodes included)
  let nnzL = 0;
  let flops = 0;
  let maxFront = 0;
  for (let s = 0; s < ns; s++) {
    const w = superStart[s + 1] - superStart[s];
    const nf = rowPtr[s + 1] - rowPtr[s];
    maxFront = Math.max(maxFront, nf);
    for (let k = 0; k < w; k++) {
      nnzL += nf - k;
      flops += (nf - k) * (nf - k);
    }
  }
  // the rounding bound uses the exact pattern: a structural zero stays an exact zero
  let dotLength = 0;
  let rowWidth = 0;
  for (let j = 0; j < n; j++) {
    dotLength = Math.max(dotLength, rowCount[j]);
    rowWidth = Math.max(rowWidth, rowCount[j] + colCount[j] - 1);
  }
  return { ...st, nnzL, flops, dotLength, rowWidth, maxFront, peakUpdateWords };
}
