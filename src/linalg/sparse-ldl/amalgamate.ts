/**
 * Relaxed supernodes (C. Ashcraft & R. Grimes, "The influence of relaxed supernode partitions on
 * the multifrontal method", ACM Trans. Math. Softw. 15, 291–309, 1989): a supernode is merged into
 * its parent when the explicit zeros this stores stay few, so the two become one front. Fewer,
 * larger fronts run faster than many tiny ones: a nested-dissection ordering of a lattice leaves
 * tens of thousands of one- and two-column supernodes in its leaves.
 *
 * Any child may be merged, not only the one numbered just before its parent: the columns are
 * renumbered afterwards by a postorder of the merged tree, each merged front's columns in a run.
 * Every topological order of the elimination tree (children before parents) has the same filled
 * pattern up to the renumbering (J. W. H. Liu, "The role of elimination trees in sparse
 * factorization", SIAM J. Matrix Anal. Appl. 11, 134–172, 1990), so only the stored zeros change.
 */
import type { SymbolicFactor } from './symbolic.js';

/** The supernodes' columns, sizes and tree (their rows are found after merging: symbolic.ts). */
export type Structure = Pick<SymbolicFactor, 'n' | 'order' | 'perm' | 'parent' | 'colCount' | 'rowCount' | 'superStart' | 'rowPtr' | 'superParent'>;

/** Entries of a supernode's trapezoid: w columns over nf rows, diagonal included. */
export const trapezoid = (w: number, nf: number) => w * nf - (w * (w - 1)) / 2;

/**
 * How many stored zeros a merged front may hold, as a fraction of its entries, by its columns:
 * small fronts are dominated by the cost of visiting them, so they take many zeros; wide ones
 * do real work, so they take few (set by measurement on open kagome 96×96: 25k supernodes become
 * 7.3k, the flops grow by 0.1 % and the stored entries by 12 %; looser limits bought no more speed).
 */
export function zerosAllowed(columns: number): number {
  if (columns <= 8) return 0.5;
  if (columns <= 32) return 0.15;
  return 0.05;
}

/**
 * Merge supernodes into their parents while the zeros stay within `zerosAllowed`, then renumber
 * the columns by a postorder of the merged tree, so each merged front is a run (order, perm, the
 * elimination tree and the counts renumbered alike).
 */
export function amalgamate(st: Structure, maxSupernode: number): Structure {
  const { superStart, rowPtr, superParent } = st;
  const ns = superStart.length - 1;
  // per group, kept at its top supernode: columns, rows below the front's columns, true entries
  const cols = new Int32Array(ns);
  const below = new Int32Array(ns);
  const entries = new Float64Array(ns);
  const head = new Int32Array(ns).fill(-1);
  const next = new Int32Array(ns).fill(-1);
  for (let s = ns - 1; s >= 0; s--) {
    cols[s] = superStart[s + 1] - superStart[s];
    below[s] = rowPtr[s + 1] - rowPtr[s] - cols[s];
    entries[s] = trapezoid(cols[s], rowPtr[s + 1] - rowPtr[s]);
    const p = superParent[s];
    if (p >= 0) {
      next[s] = head[p];
      head[p] = s;
    }
  }
  // a child's number is below its parent's, so each child is decided first and is its group's top
  const into = new Int32Array(ns).fill(-1);
  const cand = new Int32Array(ns);
  const cost = new Float64Array(ns);
  for (let p = 0; p < ns; p++) {
    const k = childrenByZeros(p, head, next, cols, below, entries, cand, cost);
    for (let t = 0; t < k; t++) {
      const c = cand[t];
      const w = cols[p] + cols[c];
      const stored = trapezoid(w, w + below[p]);
      const zeros = stored - entries[p] - entries[c];
      if (w > maxSupernode || zeros > zerosAllowed(w) * stored) continue;
      cols[p] = w;
      entries[p] += entries[c];
      into[c] = p;
    }
  }
  // renumbered even with nothing merged: the factorisation needs the supernodes in a postorder
  return renumber(st, into);
}

/**
 * Supernode p's children into cand[0 … k−1] (k returned), by the zeros each would add if merged
 * alone (the lower number first on a tie): an insertion sort, as there are few.
 */
function childrenByZeros(p: number, head: Int32Array, next: Int32Array, cols: Int32Array, below: Int32Array, entries: Float64Array, cand: Int32Array, cost: Float64Array): number {
  let k = 0;
  for (let c = head[p]; c >= 0; c = next[c]) {
    const w = cols[p] + cols[c];
    const z = trapezoid(w, w + below[p]) - entries[p] - entries[c];
    let u = k++;
    while (u > 0 && (cost[u - 1] > z || (cost[u - 1] === z && cand[u - 1] > c))) {
      cand[u] = cand[u - 1];
      cost[u] = cost[u - 1];
      u--;
    }
    cand[u] = c;
    cost[u] = z;
  }
  return k;
}

/**
 * The structure of the merged fronts (into[s] = the supernode s was merged into, −1 for a top).
 * Each pass is a one-loop function of its own: they run once per analysis on fresh code, and V8
 * compiles a long first run of a loop mid-run and drops out of it where the loop ends.
 */
function renumber(st: Structure, into: Int32Array): Structure {
  const { n, superStart, superParent } = st;
  const ns = superStart.length - 1;
  // the top of each supernode's group (merges point upwards, so one pass from the roots down)
  const top = new Int32Array(ns);
  groupTops(into, top);
  // members of each group, ascending (children before parents); the groups' tree
  const memberHead = new Int32Array(ns).fill(-1);
  const memberNext = new Int32Array(ns).fill(-1);
  const groupHead = new Int32Array(ns).fill(-1);
  const groupNext = new Int32Array(ns).fill(-1);
  groupLists(top, superParent, memberHead, memberNext, groupHead, groupNext);
  // a postorder of the groups; q[old column] = new column
  const q = new Int32Array(n);
  const groupIndex = new Int32Array(ns).fill(-1);
  const tops = new Int32Array(ns);
  const starts = new Int32Array(ns + 1);
  const G = postorderGroups(top, superParent, superStart, memberHead, memberNext, groupHead, groupNext, q, groupIndex, tops, starts);
  starts[G] = n;
  const start = starts.slice(0, G + 1);
  const ptr = new Int32Array(G + 1);
  const parentG = new Int32Array(G).fill(-1);
  frontSizes(st, tops, start, top, groupIndex, ptr, parentG);
  const out = { n, order: new Int32Array(n), perm: new Int32Array(n), parent: new Int32Array(n), colCount: new Int32Array(n), rowCount: new Int32Array(n) };
  relabelColumns(st, q, out);
  return { ...out, superStart: start, rowPtr: ptr, superParent: parentG };
}

function groupTops(into: Int32Array, top: Int32Array): void {
  for (let s = into.length - 1; s >= 0; s--) top[s] = into[s] < 0 ? s : top[into[s]];
}

function groupLists(top: Int32Array, superParent: Int32Array, memberHead: Int32Array, memberNext: Int32Array, groupHead: Int32Array, groupNext: Int32Array): void {
  for (let s = top.length - 1; s >= 0; s--) {
    const g = top[s];
    memberNext[s] = memberHead[g];
    memberHead[g] = s;
    if (g === s && superParent[s] >= 0) {
      const pg = top[superParent[s]];
      groupNext[s] = groupHead[pg];
      groupHead[pg] = s;
    }
  }
}

/** The groups in a postorder (tops, the first new column of each in starts), q filled; returns their number. */
function postorderGroups(top: Int32Array, superParent: Int32Array, superStart: Int32Array, memberHead: Int32Array, memberNext: Int32Array, groupHead: Int32Array, groupNext: Int32Array, q: Int32Array, groupIndex: Int32Array, tops: Int32Array, starts: Int32Array): number {
  const ns = top.length;
  const stack = new Int32Array(ns);
  let G = 0;
  let col = 0;
  for (let r = 0; r < ns; r++) {
    if (top[r] !== r || superParent[r] >= 0) continue;
    let depth = 0;
    stack[0] = r;
    while (depth >= 0) {
      const g = stack[depth];
      const c = groupHead[g];
      if (c >= 0) {
        groupHead[g] = groupNext[c];
        stack[++depth] = c;
        continue;
      }
      depth--;
      groupIndex[g] = G;
      tops[G] = g;
      starts[G++] = col;
      for (let m = memberHead[g]; m >= 0; m = memberNext[m]) for (let j = superStart[m], jEnd = superStart[m + 1]; j < jEnd; j++) q[j] = col++;
    }
  }
  return G;
}

/** Each merged front's row count (ptr, cumulative) and parent. */
function frontSizes(st: Structure, tops: Int32Array, start: Int32Array, top: Int32Array, groupIndex: Int32Array, ptr: Int32Array, parentG: Int32Array): void {
  const { rowPtr, superStart, superParent } = st;
  for (let g = 0; g < parentG.length; g++) {
    const t = tops[g];
    const ownBelow = rowPtr[t + 1] - rowPtr[t] - (superStart[t + 1] - superStart[t]);
    ptr[g + 1] = ptr[g] + (start[g + 1] - start[g]) + ownBelow;
    if (superParent[t] >= 0) parentG[g] = groupIndex[top[superParent[t]]];
  }
}

/** order, perm, the elimination tree and the counts under the new numbering q. */
function relabelColumns(st: Structure, q: Int32Array, out: Pick<Structure, 'order' | 'perm' | 'parent' | 'colCount' | 'rowCount'>): void {
  const { order, parent, colCount, rowCount } = st;
  for (let j = 0; j < q.length; j++) {
    const k = q[j];
    out.order[k] = order[j];
    out.perm[order[j]] = k;
    out.parent[k] = parent[j] >= 0 ? q[parent[j]] : -1;
    out.colCount[k] = colCount[j];
    out.rowCount[k] = rowCount[j];
  }
}
