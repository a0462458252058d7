/**
 * A smallest vertex cover of the edges across a cut of the nested dissection (ordering.ts), from
 * a largest matching of the bipartite graph between the cut's two boundaries: by König's theorem
 * the cover is the low nodes that no alternating path from an unmatched low node reaches, and the
 * high nodes that one reaches, and it is as large as the matching (common practice).
 */

/**
 * The bipartite graph of the edges across a cut and the buffers of its matching, reused from cut
 * to cut (grown when short). Low node i and high node j are places in the two boundary lists;
 * the edges of low node i are adj[ptr[i] … ptr[i+1] − 1] (high places).
 */
export class CutGraph {
  low = new Int32Array(0);
  high = new Int32Array(0);
  /** slot[v]: v's place in its list (read only for boundary nodes of the current cut). */
  slot: Int32Array;
  ptr = new Int32Array(0);
  adj = new Int32Array(0);
  mateLow = new Int32Array(0);
  mateHigh = new Int32Array(0);
  visited = new Int32Array(0);
  stackLow = new Int32Array(0);
  cursor = new Int32Array(0);
  via = new Int32Array(0);
  reachedLow = new Uint8Array(0);
  reachedHigh = new Uint8Array(0);
  constructor(n: number) {
    this.slot = new Int32Array(n);
  }
  /** Sizes the matching's buffers for nl low and nh high nodes and clears them. */
  prepare(nl: number, nh: number): void {
    if (this.mateLow.length < nl) {
      const k = Math.max(nl, 2 * this.mateLow.length);
      this.mateLow = new Int32Array(k);
      this.stackLow = new Int32Array(k);
      this.cursor = new Int32Array(k);
      this.via = new Int32Array(k);
      this.reachedLow = new Uint8Array(k);
    }
    if (this.mateHigh.length < nh) {
      const k = Math.max(nh, 2 * this.mateHigh.length);
      this.mateHigh = new Int32Array(k);
      this.visited = new Int32Array(k);
      this.reachedHigh = new Uint8Array(k);
    }
    this.mateLow.fill(-1, 0, nl);
    this.mateHigh.fill(-1, 0, nh);
    this.visited.fill(0, 0, nh);
    this.reachedLow.fill(0, 0, nl);
    this.reachedHigh.fill(0, 0, nh);
  }
}

/**
 * A smallest vertex cover of the cut graph (nl low, nh high nodes): returns its size; the cover is
 * the low nodes with reachedLow 0 and the high nodes with reachedHigh 1.
 */
export function smallestCover(cut: CutGraph, nl: number, nh: number): number {
  cut.prepare(nl, nh);
  const size = maximumMatching(cut, nl);
  alternatingReach(cut, nl);
  return size;
}

/**
 * A largest matching of the cut's bipartite graph: each low node in turn, by a depth-first search
 * for an augmenting path (explicit stack; each high node visited once per search). Returns its size.
 */
function maximumMatching(cut: CutGraph, nl: number): number {
  let size = 0;
  for (let root = 0; root < nl; root++) if (augment(cut, root, root + 1)) size++;
  return size;
}

function augment(cut: CutGraph, root: number, stamp: number): boolean {
  const { ptr, adj, mateLow, mateHigh, visited, stackLow, cursor, via } = cut;
  let depth = 0;
  stackLow[0] = root;
  cursor[0] = ptr[root];
  while (depth >= 0) {
    const i = stackLow[depth];
    if (cursor[depth] === ptr[i + 1]) {
      depth--;
      continue;
    }
    const j = adj[cursor[depth]++];
    if (visited[j] === stamp) continue;
    visited[j] = stamp;
    via[depth] = j;
    const next = mateHigh[j];
    if (next < 0) {
      // flip the path root … j
      for (let d = depth; d >= 0; d--) {
        mateLow[stackLow[d]] = via[d];
        mateHigh[via[d]] = stackLow[d];
      }
      return true;
    }
    stackLow[++depth] = next;
    cursor[depth] = ptr[next];
  }
  return false;
}

/** The nodes alternating paths from the unmatched low nodes reach (reachedLow, reachedHigh). */
function alternatingReach(cut: CutGraph, nl: number): void {
  const { ptr, adj, mateLow, mateHigh, reachedLow, reachedHigh, stackLow } = cut;
  let top = 0;
  for (let i = 0; i < nl; i++) {
    if (mateLow[i] < 0) {
      reachedLow[i] = 1;
      stackLow[top++] = i;
    }
  }
  while (top > 0) {
    const i = stackLow[--top];
    for (let k = ptr[i], kEnd = ptr[i + 1]; k < kEnd; k++) {
      const j = adj[k];
      if (reachedHigh[j]) continue;
      reachedHigh[j] = 1;
      // matched, or the matching would not be largest
      const i2 = mateHigh[j];
      if (!reachedLow[i2]) {
        reachedLow[i2] = 1;
        stackLow[top++] = i2;
      }
    }
  }
}
