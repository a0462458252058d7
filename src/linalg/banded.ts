/**
 * Banded Hermitian matrices (real symmetric or complex Hermitian): storage, LDLᴴ factorisation
 * without pivoting, inertia counts (Sylvester), solves, and a bandwidth-reducing ordering.
 *
 * Storage: the lower band by rows. Row i holds columns i − bw … i, entry (i, j) at
 * index i·(bw+1) + (j − i + bw); slots left of column 0 are unused zeros. A complex matrix keeps
 * its imaginary parts in a second array of the same layout (the diagonal's are ignored).
 *
 * Factorisation: A − σI = L D Lᴴ with unit lower-triangular L (same band) and real diagonal D,
 * computed row by row (Crout form: each entry is one contiguous dot product). No pivoting is
 * done, so the band is kept; a pivot at or below `tiny` is reported as a breakdown and the caller
 * moves σ slightly and counts again. By Sylvester's law of inertia the number of negative
 * entries of D equals the number of eigenvalues of A below σ (Bai, Demmel, Dongarra, Ruhe &
 * van der Vorst (eds.), Templates for the Solution of Algebraic Eigenvalue Problems, SIAM 2000,
 * the Sturm sequence count).
 *
 * Without pivoting a factorisation of an indefinite matrix can grow; `growth` reports
 * max_i (Σ_k |L_ik|²|D_k|) / max_i |A_ii − σ|, the size of |L||D||Lᴴ| against A's diagonal, so a
 * caller can judge the backward error ε·(bw+1)·growth·max|A_ii − σ| of the computed inertia.
 * For σ below the spectrum (A − σI positive definite) growth is exactly 1 in exact arithmetic and
 * the factorisation is a Cholesky factorisation in LDLᴴ form, backward stable.
 */
export interface BandMatrix {
  readonly n: number;
  /** Half-bandwidth: entry (i, j) may be nonzero only for |i − j| ≤ bw. */
  readonly bw: number;
  readonly re: Float64Array;
  /** Imaginary parts (complex Hermitian), or null for a real symmetric band. */
  readonly im: Float64Array | null;
}

/** Bytes of band storage for an n×n band of half-bandwidth bw. */
export function bandBytes(n: number, bw: number, complex: boolean): number {
  return 8 * n * (bw + 1) * (complex ? 2 : 1);
}

export function createBand(n: number, bw: number, complex: boolean): BandMatrix {
  const b = Math.max(0, Math.min(bw, n - 1));
  const size = n * (b + 1);
  return { n, bw: b, re: new Float64Array(size), im: complex ? new Float64Array(size) : null };
}

/** Storage index of (i, j), i ≥ j, i − j ≤ bw. */
export function bandIndex(A: BandMatrix, i: number, j: number): number {
  return i * (A.bw + 1) + (j - i + A.bw);
}

/** Add v = re + i·im to entry (i, j); for i < j the conjugate goes to (j, i). */
export function bandAdd(A: BandMatrix, i: number, j: number, re: number, im = 0): void {
  if (i < j) return bandAdd(A, j, i, re, -im);
  if (i - j > A.bw) throw new RangeError(`entry (${i}, ${j}) lies outside the half-bandwidth ${A.bw}`);
  const k = bandIndex(A, i, j);
  A.re[k] += re;
  if (A.im && i !== j) A.im[k] += im;
}

/** Entry (i, j) as [re, im] (zero outside the band). */
export function bandGet(A: BandMatrix, i: number, j: number): [number, number] {
  if (i < j) {
    const [r, m] = bandGet(A, j, i);
    return [r, -m];
  }
  if (i - j > A.bw) return [0, 0];
  const k = bandIndex(A, i, j);
  return [A.re[k], A.im && i !== j ? A.im[k] : 0];
}

/** A band from a dense symmetric (or Hermitian, with `imag`) matrix given by rows; bw found if omitted. */
export function bandFromDense(rows: number[][], imag?: number[][], bw?: number): BandMatrix {
  const n = rows.length;
  let b = bw ?? 0;
  if (bw === undefined)
    for (let i = 0; i < n; i++) for (let j = 0; j < i; j++) if (rows[i][j] !== 0 || (imag && imag[i][j] !== 0)) b = Math.max(b, i - j);
  const A = createBand(n, b, !!imag);
  for (let i = 0; i < n; i++) for (let j = Math.max(0, i - A.bw); j <= i; j++) bandAdd(A, i, j, rows[i][j], imag ? imag[i][j] : 0);
  return A;
}

export function copyBand(A: BandMatrix): BandMatrix {
  return { n: A.n, bw: A.bw, re: A.re.slice(), im: A.im ? A.im.slice() : null };
}

export interface LdlOptions {
  /** Factor A − shift·I; default 0. */
  shift?: number;
  /**
   * A pivot with |d| ≤ tiny stops the factorisation as a breakdown. Default
   * 1e-13 · max_i |A_ii − shift| (and exactly 0 pivots always count).
   */
  tiny?: number;
  /** Overwrite A with L (saves the copy); default false. */
  overwrite?: boolean;
  /** Called with the fraction of rows done, about every 2% of the work. */
  onProgress?: (fraction: number) => void;
  /** Called between rows as often as onProgress; may throw to cancel (e.g. on an aborted signal). */
  check?: () => void;
}

export interface LdlFactor {
  /** Unit lower-triangular factor in band storage (its diagonal slots hold D). */
  L: BandMatrix;
  /** The pivots D. */
  d: Float64Array;
  shift: number;
  /** Number of negative pivots = number of eigenvalues of A below `shift` (when no breakdown). */
  negatives: number;
  /** max_i Σ_k |L_ik|²|D_k| over max_i |A_ii − shift| (1 for a positive definite A − shift·I). */
  growth: number;
  /** First pivot with |d| ≤ tiny, or null. After a breakdown L, d and negatives are incomplete. */
  breakdown: { index: number; pivot: number } | null;
}

/** A − shift·I = L D Lᴴ, row by row, no pivoting. */
export function bandLdl(A0: BandMatrix, options: LdlOptions = {}): LdlFactor {
  const A = options.overwrite ? A0 : copyBand(A0);
  const shift = options.shift ?? 0;
  const { n, bw } = A;
  const w = bw + 1;
  let diagMax = 0;
  for (let i = 0; i < n; i++) diagMax = Math.max(diagMax, Math.abs(A.re[i * w + bw] - shift));
  const tiny = options.tiny ?? 1e-13 * diagMax;
  const d = new Float64Array(n);
  let negatives = 0;
  let sMax = 0;
  let breakdown: LdlFactor['breakdown'] = null;
  // progress: the work of row i is about min(i, bw)²; report every ~2% of the total
  const total = Math.max(1, n * w * w);
  const step = Math.max(1, Math.floor(total / 50 / Math.max(1, w * w)));
  const rowFn = A.im ? ldlRowComplex : ldlRowReal;
  const ur = new Float64Array(n);
  const ui = A.im ? new Float64Array(n) : ur;
  for (let i = 0; i < n; i++) {
    if (i % step === 0 && i > 0) {
      options.onProgress?.(i / n);
      options.check?.();
    }
    const [di, si] = rowFn(A, i, d, ur, ui, shift);
    d[i] = di;
    A.re[i * w + bw] = di;
    sMax = Math.max(sMax, si + Math.abs(di));
    if (!(Math.abs(di) > tiny)) {
      breakdown = { index: i, pivot: di };
      break;
    }
    if (di < 0) negatives++;
  }
  options.onProgress?.(1);
  return { L: A, d, shift, negatives, growth: diagMax > 0 ? sMax / diagMax : 1, breakdown };
}

/** One row of the real factorisation; returns [pivot, Σ_k L_ik²|D_k|]. `u` holds L_ik·D_k. */
function ldlRowReal(A: BandMatrix, i: number, d: Float64Array, u: Float64Array, _ui: Float64Array, shift: number): [number, number] {
  const bw = A.bw;
  const w = bw + 1;
  const a = A.re;
  const j0 = Math.max(0, i - bw);
  const bi = i * w - i + bw; // a[bi + j] is entry (i, j)
  for (let j = j0; j < i; j++) {
    const bj = j * w - j + bw;
    const k0 = Math.max(j0, j - bw);
    let s = a[bi + j];
    for (let k = k0; k < j; k++) s -= u[k] * a[bj + k];
    u[j] = s;
    a[bi + j] = s / d[j];
  }
  let dd = a[bi + i] - shift;
  let g = 0;
  for (let k = j0; k < i; k++) {
    const l = a[bi + k];
    const t = u[k] * l;
    dd -= t;
    g += Math.abs(t);
  }
  return [dd, g];
}

/** One row of the complex Hermitian factorisation: A_ij = Σ_k L_ik D_k conj(L_jk). */
function ldlRowComplex(A: BandMatrix, i: number, d: Float64Array, ur: Float64Array, ui: Float64Array, shift: number): [number, number] {
  const bw = A.bw;
  const w = bw + 1;
  const ar = A.re;
  const ai = A.im!;
  const j0 = Math.max(0, i - bw);
  const bi = i * w - i + bw;
  for (let j = j0; j < i; j++) {
    const bj = j * w - j + bw;
    const k0 = Math.max(j0, j - bw);
    let sr = ar[bi + j];
    let si = ai[bi + j];
    for (let k = k0; k < j; k++) {
      // s −= u_k · conj(L_jk)
      const lr = ar[bj + k];
      const li = ai[bj + k];
      sr -= ur[k] * lr + ui[k] * li;
      si -= ui[k] * lr - ur[k] * li;
    }
    ur[j] = sr;
    ui[j] = si;
    ar[bi + j] = sr / d[j];
    ai[bi + j] = si / d[j];
  }
  let dd = ar[bi + i] - shift;
  let g = 0;
  for (let k = j0; k < i; k++) {
    // u_k conj(L_ik) = D_k |L_ik|²
    const t = ur[k] * ar[bi + k] + ui[k] * ai[bi + k];
    dd -= t;
    g += Math.abs(t);
  }
  ai[bi + i] = 0;
  return [dd, g];
}

export interface InertiaCount {
  /** Number of eigenvalues of A below `shift`. */
  below: number;
  /** The shift actually used (moved from the requested one after a breakdown). */
  shift: number;
  requestedShift: number;
  /** How many times the shift was moved after a (near-)zero pivot. */
  retries: number;
  growth: number;
}

/**
 * Number of eigenvalues of A below `shift` from the inertia of A − shift·I = L D Lᴴ.
 * On a zero or tiny pivot the shift is moved by `perturb` (relative, or absolute when the shift
 * is 0), alternately up and down and a little further each time, and the count is repeated.
 */
export function countEigenvaluesBelow(
  A: BandMatrix,
  shift: number,
  options: { perturb?: number; maxRetries?: number; tiny?: number } = {},
): InertiaCount {
  const perturb = options.perturb ?? 1e-3;
  const maxRetries = options.maxRetries ?? 8;
  let s = shift;
  for (let retry = 0; ; retry++) {
    const f = bandLdl(A, { shift: s, tiny: options.tiny });
    if (!f.breakdown) return { below: f.negatives, shift: s, requestedShift: shift, retries: retry, growth: f.growth };
    if (retry >= maxRetries) {
      throw new Error(`inertia count: the LDLᵀ factorisation broke down at every shift tried near ${shift} (last pivot ${f.breakdown.pivot} at row ${f.breakdown.index})`);
    }
    s = perturbedShift(shift, perturb, retry + 1);
  }
}

/** The shift used on retry r ≥ 1: shift·(1 ± perturb·r) (or ±perturb·r when shift = 0). */
export function perturbedShift(shift: number, perturb: number, r: number): number {
  const delta = perturb * Math.ceil(r / 2) * (r % 2 === 1 ? 1 : -1);
  return shift === 0 ? delta : shift * (1 + delta);
}

/** Solve (L D Lᴴ) x = b in place for one right-hand side (xIm null for real data and a real factor). */
export function ldlSolve(F: LdlFactor, xRe: Float64Array, xIm: Float64Array | null): void {
  ldlSolveBlock(F, [xRe], xIm ? [xIm] : null);
}

/**
 * Solve (L D Lᴴ) X = B in place for several right-hand sides (columns). Columns are processed
 * in chunks laid out row-major, so each band row is read once per chunk.
 */
export function ldlSolveBlock(F: LdlFactor, cols: Float64Array[], colsIm: Float64Array[] | null): void {
  const complex = F.L.im !== null || colsIm !== null;
  const CH = 16;
  for (let c0 = 0; c0 < cols.length; c0 += CH) {
    const c = Math.min(CH, cols.length - c0);
    if (complex) solveChunkComplex(F, cols.slice(c0, c0 + c), colsIm ? colsIm.slice(c0, c0 + c) : null, c);
    else if (c === 1) solveOneReal(F, cols[c0]);
    else solveChunkReal(F, cols.slice(c0, c0 + c), c);
  }
}

/**
 * One real right-hand side in place: solveChunkReal with c = 1, the forward row sums kept in
 * four local partial sums (the single-vector Lanczos solves are the common case, and this is
 * about twice as fast; the sums differ from solveChunkReal's only by rounding).
 */
function solveOneReal(F: LdlFactor, x: Float64Array): void {
  const { n, bw } = F.L;
  const w = bw + 1;
  const a = F.L.re;
  const d = F.d;
  for (let i = 0; i < n; i++) {
    const k0 = Math.max(0, i - bw);
    const bi = i * w - i + bw;
    // four partial sums break the chain of dependent additions
    let s0 = x[i];
    let s1 = 0;
    let s2 = 0;
    let s3 = 0;
    let k = k0;
    for (; k + 3 < i; k += 4) {
      s0 -= a[bi + k] * x[k];
      s1 -= a[bi + k + 1] * x[k + 1];
      s2 -= a[bi + k + 2] * x[k + 2];
      s3 -= a[bi + k + 3] * x[k + 3];
    }
    for (; k < i; k++) s0 -= a[bi + k] * x[k];
    x[i] = s0 + s1 + (s2 + s3);
  }
  for (let i = 0; i < n; i++) x[i] *= 1 / d[i];
  for (let j = n - 1; j >= 0; j--) {
    const k0 = Math.max(0, j - bw);
    const bj = j * w - j + bw;
    const xj = x[j];
    if (xj === 0) continue;
    for (let k = k0; k < j; k++) x[k] -= a[bj + k] * xj;
  }
}

function solveChunkReal(F: LdlFactor, cols: Float64Array[], c: number): void {
  const { n, bw } = F.L;
  const w = bw + 1;
  const a = F.L.re;
  const d = F.d;
  const X = new Float64Array(n * c);
  for (let r = 0; r < c; r++) {
    const col = cols[r];
    for (let i = 0; i < n; i++) X[i * c + r] = col[i];
  }
  // forward: y_i = b_i − Σ_k L_ik y_k
  for (let i = 0; i < n; i++) {
    const k0 = Math.max(0, i - bw);
    const bi = i * w - i + bw;
    const oi = i * c;
    for (let k = k0; k < i; k++) {
      const l = a[bi + k];
      if (l === 0) continue;
      const ok = k * c;
      for (let r = 0; r < c; r++) X[oi + r] -= l * X[ok + r];
    }
  }
  for (let i = 0; i < n; i++) {
    const inv = 1 / d[i];
    const oi = i * c;
    for (let r = 0; r < c; r++) X[oi + r] *= inv;
  }
  // backward, column form: once x_j is final, x_k −= L_jk x_j for k < j
  for (let j = n - 1; j >= 0; j--) {
    const k0 = Math.max(0, j - bw);
    const bj = j * w - j + bw;
    const oj = j * c;
    for (let k = k0; k < j; k++) {
      const l = a[bj + k];
      if (l === 0) continue;
      const ok = k * c;
      for (let r = 0; r < c; r++) X[ok + r] -= l * X[oj + r];
    }
  }
  for (let r = 0; r < c; r++) {
    const col = cols[r];
    for (let i = 0; i < n; i++) col[i] = X[i * c + r];
  }
}

function solveChunkComplex(F: LdlFactor, cols: Float64Array[], colsIm: Float64Array[] | null, c: number): void {
  if (!colsIm) throw new Error('a complex factor needs complex right-hand sides');
  const { n, bw } = F.L;
  const w = bw + 1;
  const ar = F.L.re;
  const ai = F.L.im ?? new Float64Array(ar.length);
  const d = F.d;
  const XR = new Float64Array(n * c);
  const XI = new Float64Array(n * c);
  for (let r = 0; r < c; r++) {
    const cr = cols[r];
    const ci = colsIm[r];
    for (let i = 0; i < n; i++) {
      XR[i * c + r] = cr[i];
      XI[i * c + r] = ci[i];
    }
  }
  for (let i = 0; i < n; i++) {
    const k0 = Math.max(0, i - bw);
    const bi = i * w - i + bw;
    const oi = i * c;
    for (let k = k0; k < i; k++) {
      const lr = ar[bi + k];
      const li = ai[bi + k];
      if (lr === 0 && li === 0) continue;
      const ok = k * c;
      for (let r = 0; r < c; r++) {
        const yr = XR[ok + r];
        const yi = XI[ok + r];
        XR[oi + r] -= lr * yr - li * yi;
        XI[oi + r] -= lr * yi + li * yr;
      }
    }
  }
  for (let i = 0; i < n; i++) {
    const inv = 1 / d[i];
    const oi = i * c;
    for (let r = 0; r < c; r++) {
      XR[oi + r] *= inv;
      XI[oi + r] *= inv;
    }
  }
  // Lᴴ x = z: x_k −= conj(L_jk) x_j
  for (let j = n - 1; j >= 0; j--) {
    const k0 = Math.max(0, j - bw);
    const bj = j * w - j + bw;
    const oj = j * c;
    for (let k = k0; k < j; k++) {
      const lr = ar[bj + k];
      const li = -ai[bj + k];
      if (lr === 0 && li === 0) continue;
      const ok = k * c;
      for (let r = 0; r < c; r++) {
        const xr = XR[oj + r];
        const xi = XI[oj + r];
        XR[ok + r] -= lr * xr - li * xi;
        XI[ok + r] -= lr * xi + li * xr;
      }
    }
  }
  for (let r = 0; r < c; r++) {
    const cr = cols[r];
    const ci = colsIm[r];
    for (let i = 0; i < n; i++) {
      cr[i] = XR[i * c + r];
      ci[i] = XI[i * c + r];
    }
  }
}

// ---------------------------------------------------------------------------------------------
// Bandwidth-reducing ordering

/**
 * An undirected graph in adjacency (CSR) form: the neighbours of node i are
 * adj[ptr[i]] … adj[ptr[i+1] − 1].
 */
export interface Graph {
  n: number;
  ptr: Int32Array;
  adj: Int32Array;
}

/**
 * Reverse Cuthill–McKee ordering (common practice): breadth-first from a pseudo-peripheral node
 * of each connected component, neighbours by increasing degree, then reversed.
 * Returns `order` (order[newIndex] = old node).
 */
export function reverseCuthillMcKee(g: Graph): Int32Array {
  const { n, ptr, adj } = g;
  const order = new Int32Array(n);
  const visited = new Uint8Array(n);
  let filled = 0;
  // one queue for every breadth-first search (typed, reused: a pass allocates nothing)
  const bfs: LevelSearch = { ptr, adj, visited, level: new Int32Array(n).fill(-1), queue: new Int32Array(n), depth: 0, lastMinDegree: -1 };
  for (let s = 0; s < n; s++) {
    if (visited[s]) continue;
    // pseudo-peripheral node (George & Liu's heuristic): restart from a minimum-degree node of
    // the last level (the first such in the queue) while the eccentricity grows
    let start = s;
    levelSearch(bfs, start);
    let depth = bfs.depth;
    let cand = bfs.lastMinDegree;
    for (let it = 0; it < 8; it++) {
      levelSearch(bfs, cand);
      if (bfs.depth <= depth) break;
      start = cand;
      depth = bfs.depth;
      cand = bfs.lastMinDegree;
    }
    // Cuthill–McKee from `start`
    filled = cuthillMcKee(ptr, adj, visited, order, filled, start);
  }
  order.reverse();
  return order;
}

/** State of the level searches of reverseCuthillMcKee (`level` −1 = unseen between searches). */
interface LevelSearch {
  ptr: Int32Array;
  adj: Int32Array;
  visited: Uint8Array;
  level: Int32Array;
  queue: Int32Array;
  /** Results of the last search: its depth and the first node of least degree on its last level. */
  depth: number;
  lastMinDegree: number;
}

/** Breadth-first search over the unvisited component of `start`, by levels. */
function levelSearch(st: LevelSearch, start: number): void {
  const { ptr, adj, visited, level, queue } = st;
  queue[0] = start;
  let tail = 1;
  level[start] = 0;
  let head = 0;
  let depth = 0;
  while (head < tail) {
    const v = queue[head++];
    const lv = level[v] + 1;
    for (let k = ptr[v]; k < ptr[v + 1]; k++) {
      const u = adj[k];
      if (visited[u] || level[u] >= 0) continue;
      level[u] = lv;
      if (lv > depth) depth = lv;
      queue[tail++] = u;
    }
  }
  // the last level is the queue's tail (levels are appended in order)
  let first = tail;
  while (first > 0 && level[queue[first - 1]] === depth) first--;
  let cand = queue[first];
  for (let t = first + 1; t < tail; t++) {
    const v = queue[t];
    if (ptr[v + 1] - ptr[v] < ptr[cand + 1] - ptr[cand]) cand = v;
  }
  for (let i = 0; i < tail; i++) level[queue[i]] = -1;
  st.depth = depth;
  st.lastMinDegree = cand;
}

/**
 * Cuthill–McKee from `start` into order[filled…]: breadth first, each node's unvisited neighbours
 * by increasing (degree, index). Returns the new fill.
 */
function cuthillMcKee(ptr: Int32Array, adj: Int32Array, visited: Uint8Array, order: Int32Array, filled: number, start: number): number {
  const n = visited.length;
  let head = filled;
  order[filled++] = start;
  visited[start] = 1;
  while (head < filled) {
    const v = order[head++];
    const from = filled;
    for (let k = ptr[v]; k < ptr[v + 1]; k++) {
      const u = adj[k];
      if (!visited[u]) {
        visited[u] = 1;
        order[filled++] = u;
      }
    }
    // sorted in place: insertion sort for the usual few, a typed sort of packed keys for a long run
    if (filled - from > 32) sortByDegree(order, from, filled, ptr, n);
    else {
      for (let t = from + 1; t < filled; t++) {
        const u = order[t];
        const du = ptr[u + 1] - ptr[u];
        let s = t - 1;
        while (s >= from) {
          const x = order[s];
          const dx = ptr[x + 1] - ptr[x];
          if (dx < du || (dx === du && x < u)) break;
          order[s + 1] = x;
          s--;
        }
        order[s + 1] = u;
      }
    }
  }
  return filled;
}

/** Sorts a[from … to − 1] (distinct nodes of a graph on n nodes) by (degree, index): keys degree·n + node, exact in a double. */
function sortByDegree(a: Int32Array, from: number, to: number, ptr: Int32Array, n: number): void {
  const keys = new Float64Array(to - from);
  for (let t = from; t < to; t++) keys[t - from] = (ptr[a[t] + 1] - ptr[a[t]]) * n + a[t];
  keys.sort();
  // the remainder of a double is exact
  for (let t = from; t < to; t++) a[t] = keys[t - from] % n;
}
