/**
 * Where flexes live: a basis-independent split of the flex space K = ker R into four classes.
 *
 * Everything works with SUBSPACES of K, never with the basis a solver returned, so the counts
 * do not change when that basis is rotated, when joints are relabelled, or when the unit
 * cell's origin moves (as long as the windows and strips still hold the same supports).
 * Cells are the supercell's cells (i, j); a region is a set of cells and its joints.
 *
 *  - local: flexes supported inside a window of at most w×w cells (default w = 3), at any
 *    position: corners and edges included, wrapping across twisted axes. A flex supported on
 *    a joint set S is exactly a kernel vector of R restricted to the columns of S and the
 *    rows of every bar touching S (bars to outside joints constrain too: outside joints do
 *    not move). The local span L is the sum of these restricted kernels over square windows
 *    of 1×1 up to w×w cells at every position. Restricted problems count σ ≤ the global
 *    absolute tolerance (relative × σ_max of the whole R) as zero, so their decisions agree
 *    with the global count.
 *  - line: flexes supported inside a strip at most s cells wide (default s = 2) along a
 *    lattice direction (p, q) of a straight chain of bars of the framework
 *    (src/flex/classify/line-directions.ts; none for the twisted kagome) whose support runs along
 *    at least 2/3 of the strip's length inside the supercell. For each strip S with ℓ cells
 *    along it, the short pieces are ker_T for the sub-segments T of S shorter than 2/3·ℓ;
 *    with M = L + Σ_S Σ_T ker_T (local plus short pieces), the line span is
 *    (M + Σ_S ker_S) ⊖ M, i.e. ker_S modulo (L + short pieces), summed over strips. Strips
 *    along twisted axes wrap into closed lines whose sub-segments are arcs.
 *    Strips are taken narrowest first (short pieces of a width, then its lines), and a window
 *    flex that is a whole straight line of the sample (a short corner line) is a line.
 *    Corner windows of a free sample that keep adding flexes up to the largest window
 *    (not saturated) send those flexes to the rest; `windowDependence` counts them.
 *  - A window or strip holding every cell of the supercell is not used: in a supercell at
 *    most w (or s) cells across every flex would otherwise be local (or a line).
 *  - decaying and bulk split the rest, ker R ⊖ (L ⊕ lines) (short pieces belong to it).
 *    First the nearest-side distance operator (cells to the closest non-wrapping side) is
 *    compressed to the rest and diagonalised; eigenvectors whose mean distance reaches the
 *    head radius h (below; within 1e-9·h, so rounding never decides) are "far", the others
 *    "near" (basis-independent). Each part is
 *    then localised by SCDM, selected columns of the density matrix (A. Damle, L. Lin &
 *    L. Ying, "Compressed representation of Kohn–Sham orbitals via selected columns of the
 *    density matrix", J. Chem. Theory Comput. 11(4), 1463–1469, 2015), in its orthonormal
 *    form Ψ·U·Vᴴ with Ψ(C,:)ᴴ = UΣVᴴ and C the pivots of a column-pivoted QR of Ψᴴ; it
 *    depends on the subspace only. A localised vector is decaying when, for some anchor
 *    (a corner, a side, or the interior point given by its heaviest cell), at least
 *    HEAD_WEIGHT of its squared amplitude lies within h = max(1, ⌊E/4⌋) cells of the anchor
 *    (E = the number of distance rings from that anchor) and a least-squares fit of log
 *    amplitude (root mean square per joint of each ring, rings below FIT_FLOOR × the largest
 *    left out) against distance, each ring weighted by its share of the squared amplitude,
 *    has a negative slope with (weighted) R² ≥ MIN_R2. ξ = −1/slope, in
 *    cells, is the amplitude decay length: squared amplitude ∝ exp(−2d/ξ). Corners are tried
 *    first, then sides, then the point; among passing corners (or sides) the one with the
 *    smallest mean distance is reported. Anything else is bulk.
 * Rigid motions are NOT projected out first (that would destroy locality); they usually land
 * in bulk, and `trivialFlexes` is reported beside the counts. Counts sum to the flexes.
 *
 * Distances are whole cells from cell indices: from a side, the number of cells between a
 * joint's cell and that side; from a corner or a point, the larger of the two cell offsets
 * (wrapping along twisted axes).
 *
 * Vectors: local and line modes are the restricted-kernel vectors as found, smallest regions
 * first, each new direction made as sparse as possible by elementary operations within its
 * region (unit norm, independent, compact; not mutually orthogonal). Decaying and bulk modes
 * are the orthonormal SCDM vectors, orthogonal to every local mode (and to every line mode
 * when there are no short strip pieces).
 *
 * The restricted problems are dense SVDs (src/linalg/dense.ts) of the restricted rigidity
 * matrix for small regions, the banded sparse solver (src/flex/solve-sparse.ts) for large
 * ones, or, when the flex space is small, the same kernel {x ∈ K : x = 0 outside S} from the
 * global flex basis (candidates projected onto the restricted null space and kept by the
 * rank rule, so every method decides alike). Short pieces are kept by the same rank rule.
 * The one function that decides and runs the restricted solve is `restrictedKernel`. Span
 * decisions (is a region's flex new?) count a residual ≤ SPAN_TOLERANCE as already known.
 * Cost: about 3·N1·N2 window and 4·s·(N1 + N2) strip problems, each small.
 */
import { Matrix, SingularValueDecomposition } from 'ml-matrix';
import { InputError } from '../errors.js';
import { cdot as dot, cnorm as norm, type CVec } from '../linalg/complex.js';
import { DENSE_MEMORY_LIMIT, nullSpace, singularValues } from '../linalg/dense.js';
import { hermitianEigen as denseHermitianEigen } from '../linalg/hermitian-eig.js';
import type { SparseMatrix } from '../linalg/sparse.js';
import type { Supercell } from '../supercell/supercell.js';
import type { Anchor, Classification, ClassifiedMode, ClassifyOptions, FlexClass } from './classes.js';
import { frameworkLineDirections } from './classify/line-directions.js';
import { sparseSpaces } from './solve-sparse.js';
import { throwIfAborted } from './solver.js';
import type { FlexAnalysis } from './spaces.js';

// ---------------------------------------------------------------------------------------------
// Thresholds (every one is reported in Classification.thresholds)

export const DEFAULT_WINDOW = 3;
export const DEFAULT_STRIP = 2;
/** A strip flex is a line when its support runs along at least this fraction of the strip. */
export const LINE_COVERAGE = 2 / 3;
/**
 * Two subspaces of unit vectors are told apart at this residual: a vector whose distance to a
 * span is at most SPAN_TOLERANCE (relative to its norm) lies in that span.
 */
export const SPAN_TOLERANCE = 1e-5;
/** Joints whose amplitude is at least this fraction of the largest amplitude form the support. */
export const SUPPORT_AMPLITUDE = 1e-3;
/** Decaying: at least this share of the squared amplitude lies within the head radius. */
export const HEAD_WEIGHT = 0.8;
/** Decaying: the fit of log amplitude against distance must reach this R². */
export const MIN_R2 = 0.6;
/** Rings whose amplitude is below this fraction of the largest ring amplitude are left out of the fit. */
export const FIT_FLOOR = 1e-6;

// ---------------------------------------------------------------------------------------------
// Small complex linear algebra on plain arrays

/** A set of vectors supported on the same degrees of freedom (column indices of R). */
interface Block {
  dofs: Int32Array;
  vectors: { re: Float64Array; im: Float64Array }[];
}

interface HermitianEigen {
  /** Ascending. */
  values: number[];
  vectors: { re: Float64Array; im: Float64Array }[];
}

/**
 * Eigen-decomposition of a Hermitian k×k matrix H = A + iB given row-major (im null for a real
 * H), by the shared dense solver (src/linalg/hermitian-eig.ts): k orthonormal eigenvectors
 * however the eigenvalues repeat; imaginary parts are zero for a real H.
 */
export function hermitianEigen(re: Float64Array, im: Float64Array | null, k: number): HermitianEigen {
  if (k === 0) return { values: [], vectors: [] };
  const { values, vre, vim } = denseHermitianEigen(re, im, k);
  const vectors: { re: Float64Array; im: Float64Array }[] = [];
  for (let j = 0; j < k; j++) {
    const v = { re: new Float64Array(k), im: new Float64Array(k) };
    for (let i = 0; i < k; i++) {
      v.re[i] = vre[i * k + j];
      if (vim) v.im[i] = vim[i * k + j];
    }
    vectors.push(v);
  }
  return { values: Array.from(values), vectors };
}


function scaleInPlace(a: { re: Float64Array; im: Float64Array }, s: number): void {
  for (let i = 0; i < a.re.length; i++) {
    a.re[i] *= s;
    a.im[i] *= s;
  }
}

/** v −= ⟨u, v⟩ u for unit u. */
function subtractProjection(v: { re: Float64Array; im: Float64Array }, u: { re: Float64Array; im: Float64Array }, real = false): void {
  if (real) {
    // both vectors real (imaginary parts zero): the same result without the zero products
    const vr = v.re;
    const ur = u.re;
    let c = 0;
    for (let i = 0; i < vr.length; i++) c += ur[i] * vr[i];
    for (let i = 0; i < vr.length; i++) vr[i] -= c * ur[i];
    return;
  }
  const [cr, ci] = dot(u, v);
  for (let i = 0; i < v.re.length; i++) {
    v.re[i] -= cr * u.re[i] - ci * u.im[i];
    v.im[i] -= cr * u.im[i] + ci * u.re[i];
  }
}

/**
 * Σ_b y_b · vectors[b] (all on the same dofs). `real`: every vector and y are real (imaginary
 * parts zero), so only real parts are formed (the same numbers).
 */
function combine(vectors: { re: Float64Array; im: Float64Array }[], y: { re: Float64Array; im: Float64Array }, real = false): { re: Float64Array; im: Float64Array } {
  const len = vectors.length ? vectors[0].re.length : 0;
  const out = { re: new Float64Array(len), im: new Float64Array(len) };
  vectors.forEach((v, b) => {
    const yr = y.re[b];
    const yi = y.im[b];
    if (yr === 0 && yi === 0) return;
    addScaled(out, v, yr, yi, real);
  });
  return out;
}

/** Polar factor W = U Vᴴ of a complex r×r matrix M = U Σ Vᴴ given row-major (im null when real). */
function polarFactor(re: Float64Array, im: Float64Array | null, r: number): { re: Float64Array; im: Float64Array } {
  const f = im ? 2 : 1;
  const E = new Matrix(f * r, f * r);
  for (let a = 0; a < r; a++)
    for (let b = 0; b < r; b++) {
      E.set(a, b, re[a * r + b]);
      if (im) {
        E.set(a + r, b + r, re[a * r + b]);
        E.set(a, b + r, -im[a * r + b]);
        E.set(a + r, b, im[a * r + b]);
      }
    }
  const svd = new SingularValueDecomposition(E, { computeLeftSingularVectors: true, computeRightSingularVectors: true });
  const W = svd.leftSingularVectors.mmul(svd.rightSingularVectors.transpose());
  const out = { re: new Float64Array(r * r), im: new Float64Array(r * r) };
  for (let a = 0; a < r; a++)
    for (let b = 0; b < r; b++) {
      out.re[a * r + b] = W.get(a, b);
      if (im) out.im[a * r + b] = W.get(a + r, b);
    }
  return out;
}

// ---------------------------------------------------------------------------------------------
// Regions: windows and strips of cells

/** Cell index c = j·N1 + i. */
interface Region {
  kind: 'window' | 'strip';
  /** Cells of the region (distinct). */
  cells: number[];
  /** For strips: the along-strip coordinate of each cell (same order as `cells`). */
  along?: number[];
  direction?: [number, number];
  width: number;
  /** Strips: true when the strip closes on itself along a twisted axis. */
  closed?: boolean;
  /** Strips: the number of along-strip positions inside the supercell (the period when closed). */
  length?: number;
  label: string;
}

interface Axes {
  N1: number;
  N2: number;
  /** True for a twisted (wrapping) axis. */
  px: boolean;
  py: boolean;
}

function axesOf(sc: Supercell): Axes {
  return { N1: sc.cells[0], N2: sc.cells[1], px: sc.boundary.x.kind === 'twist', py: sc.boundary.y.kind === 'twist' };
}

function mod(a: number, n: number): number {
  return ((a % n) + n) % n;
}

function gcd(a: number, b: number): number {
  a = Math.abs(a);
  b = Math.abs(b);
  while (b) [a, b] = [b, a % b];
  return a;
}

/** The supercell cell at unwrapped cell coordinates (i, j), or −1 when outside. */
function cellAt(ax: Axes, i: number, j: number): number {
  let ii = i;
  let jj = j;
  if (ax.px) ii = mod(i, ax.N1);
  else if (i < 0 || i >= ax.N1) return -1;
  if (ax.py) jj = mod(j, ax.N2);
  else if (j < 0 || j >= ax.N2) return -1;
  return jj * ax.N1 + ii;
}

/** Square windows of 1×1 up to w×w cells at every position (wrapping along twisted axes), deduplicated. */
function windowsOf(ax: Axes, w: number): Region[] {
  const out: Region[] = [];
  const seen = new Set<string>();
  for (let size = 1; size <= w; size++) {
    const positions = (N: number, periodic: boolean): [number, number][] => {
      const span = Math.min(size, N);
      if (span === N) return [[0, N]];
      const count = periodic ? N : N - span + 1;
      return Array.from({ length: count }, (_, p) => [p, span] as [number, number]);
    };
    for (const [j0, sj] of positions(ax.N2, ax.py))
      for (const [i0, si] of positions(ax.N1, ax.px)) {
        const cells: number[] = [];
        for (let dj = 0; dj < sj; dj++) for (let di = 0; di < si; di++) cells.push(cellAt(ax, i0 + di, j0 + dj));
        const key = [...cells].sort((a, b) => a - b).join(',');
        // a window holding every cell is the whole supercell, not a window
        if (seen.has(key) || cells.length === ax.N1 * ax.N2) continue;
        seen.add(key);
        out.push({ kind: 'window', cells, width: size, label: `window ${si}×${sj} at cell (${i0}, ${j0})` });
      }
  }
  return out;
}

function det(a: [number, number], b: [number, number]): number {
  return a[0] * b[1] - a[1] * b[0];
}

/** A transverse step e with det(d, e) = 1 (d primitive). */
function transverse(d: [number, number]): [number, number] {
  // extended Euclid on (p, q): find (x, y) with p·y − q·x = 1
  const [p, q] = d;
  const ext = (a: number, b: number): [number, number, number] => {
    if (b === 0) return [a, 1, 0];
    const [g, x, y] = ext(b, a % b);
    return [g, y, x - Math.trunc(a / b) * y];
  };
  const [g, s, t] = ext(p, -q); // p·s + (−q)·t = g = ±1
  const e: [number, number] = [t / g, s / g];
  if (det(d, e) !== 1) throw new Error(`no transverse step for direction (${p}, ${q})`);
  return e;
}

/**
 * Strips of width 1..s along direction d. Cells are written c = k·d + m·e (det(d, e) = 1):
 * lines are m = const with along-coordinate k. Twisted axes identify (k, m) with
 * (k + τ_k, m + τ_m) for τ = N·u (u the axis); lines close when some identification keeps m.
 */
function stripsOf(ax: Axes, d: [number, number], sMax: number): Region[] {
  const e = transverse(d);
  const taus: [number, number][] = [];
  if (ax.px) taus.push([det([ax.N1, 0], e), det(d, [ax.N1, 0])]);
  if (ax.py) taus.push([det([0, ax.N2], e), det(d, [0, ax.N2])]);
  // transverse period g (m identified modulo g) and along period P (closed lines), if any
  let g = 0;
  for (const t of taus) g = gcd(g, t[1]);
  let P = 0;
  if (taus.length === 1 && taus[0][1] === 0) P = Math.abs(taus[0][0]);
  if (taus.length === 2) {
    const [t1, t2] = taus;
    const h = gcd(t1[1], t2[1]);
    if (h === 0) P = gcd(t1[0], t2[0]);
    else P = Math.abs((t2[1] / h) * t1[0] - (t1[1] / h) * t2[0]);
  }
  const cellOf = (k: number, m: number): number => cellAt(ax, k * d[0] + m * e[0], k * d[1] + m * e[1]);
  // range of m
  let mLo: number;
  let mHi: number;
  if (g > 0) {
    mLo = 0;
    mHi = g - 1;
  } else {
    mLo = Infinity;
    mHi = -Infinity;
    for (let j = 0; j < ax.N2; j++)
      for (let i = 0; i < ax.N1; i++) {
        const m = det(d, [i, j]);
        mLo = Math.min(mLo, m);
        mHi = Math.max(mHi, m);
      }
  }
  // k range of line m (open lines)
  const kBound = 2 * (ax.N1 + ax.N2) + 4;
  const lineCells = (m: number): { k: number; cell: number }[] => {
    const out: { k: number; cell: number }[] = [];
    if (P > 0) {
      for (let k = 0; k < P; k++) {
        const c = cellOf(k, m);
        if (c >= 0) out.push({ k, cell: c });
      }
      return out;
    }
    for (let k = -kBound; k <= kBound; k++) {
      const c = cellOf(k, m);
      if (c >= 0) out.push({ k, cell: c });
    }
    return out;
  };
  const out: Region[] = [];
  const seen = new Set<string>();
  const span = mHi - mLo + 1;
  for (let s = 1; s <= Math.min(sMax, span); s++) {
    const starts = g > 0 ? (s === g ? [0] : Array.from({ length: g }, (_, t) => t)) : Array.from({ length: span - s + 1 }, (_, t) => mLo + t);
    for (const m0 of starts) {
      const cells: number[] = [];
      const along: number[] = [];
      const used = new Set<number>();
      for (let m = m0; m < m0 + s; m++)
        for (const { k, cell } of lineCells(m)) {
          if (used.has(cell)) continue;
          used.add(cell);
          cells.push(cell);
          along.push(k);
        }
      // a strip holding every cell is the whole supercell, not a strip
      if (cells.length === 0 || cells.length === ax.N1 * ax.N2) continue;
      const key = [...cells].sort((a, b) => a - b).join(',');
      if (seen.has(key)) continue;
      seen.add(key);
      let length: number;
      if (P > 0) length = P;
      else length = Math.max(...along) - Math.min(...along) + 1;
      out.push({
        kind: 'strip',
        cells,
        along,
        direction: [d[0], d[1]],
        width: s,
        closed: P > 0,
        length,
        label: `strip (${d[0]}, ${d[1]}) of width ${s} at offset ${m0}${P > 0 ? ' (closed)' : ''}`,
      });
    }
  }
  return out;
}

/** Sub-segments of a strip shorter than LINE_COVERAGE of its length (maximal ones, all positions). */
function shortSegments(strip: Region): number[][] {
  const L = strip.length!;
  const lenT = Math.ceil(LINE_COVERAGE * L) - 1;
  if (lenT < 1) return [];
  const along = strip.along!;
  const out: number[][] = [];
  if (strip.closed) {
    for (let k0 = 0; k0 < L; k0++) {
      const idx: number[] = [];
      along.forEach((k, t) => {
        if (mod(k - k0, L) < lenT) idx.push(t);
      });
      out.push(idx);
    }
  } else {
    const lo = Math.min(...along);
    const hi = Math.max(...along);
    for (let k0 = lo; k0 + lenT - 1 <= hi; k0++) {
      const idx: number[] = [];
      along.forEach((k, t) => {
        if (k >= k0 && k < k0 + lenT) idx.push(t);
      });
      out.push(idx);
    }
  }
  return out;
}

// ---------------------------------------------------------------------------------------------
// The context shared by the steps

type RestrictedMethod = 'restricted-svd' | 'restricted-sparse' | 'kernel-intersection';

interface Ctx {
  sc: Supercell;
  R: SparseMatrix;
  /** Columns of R. */
  n: number;
  /** R is complex (a twist other than 0 or ½). */
  complex: boolean;
  /** The flex basis is complex (only when R is: a complex basis of a real R is made real). */
  basisComplex: () => boolean;
  /** Absolute rank tolerance of the whole R (relative × σ_max). */
  absTol: number;
  spanTol: number;
  /** Relative rank tolerance and memory limit of the analysis (for the sparse restricted solves). */
  relative: number;
  memoryLimit: number;
  /** Number of flexes (for cost estimates, without computing the basis). */
  analysisFlexes: number;
  /** Rows of R touching each joint. */
  rowsOfJoint: Int32Array[];
  /** Joints of each cell. */
  cellJoints: number[][];
  flexBasis: () => CVec[];
  /** Whether the global flex basis has been computed (the kernel intersection needs it). */
  basisReady: () => boolean;
  /** σ_max of the whole R (the sparse restricted solves cut at relative × this). */
  sigmaMax: number;
  method: 'auto' | RestrictedMethod;
  used: Record<RestrictedMethod, number>;
  /** Restricted kernels already solved, by the exact content of the restricted matrix. */
  kernels: KernelCache;
}

function makeContext(sc: Supercell, analysis: FlexAnalysis, method: Ctx['method']): Ctx {
  const R = analysis.matrix();
  const J = sc.jointCount;
  const counts = new Int32Array(J);
  const rowJoints: number[][] = [];
  for (let r = 0; r < R.rows; r++) {
    const js = new Set<number>();
    for (let k = R.rowPtr[r]; k < R.rowPtr[r + 1]; k++) js.add(R.colIdx[k] >> 1);
    rowJoints.push([...js]);
    for (const j of js) counts[j]++;
  }
  const rowsOfJoint = Array.from({ length: J }, (_, j) => new Int32Array(counts[j]));
  const fill = new Int32Array(J);
  rowJoints.forEach((js, r) => {
    for (const j of js) rowsOfJoint[j][fill[j]++] = r;
  });
  const N1 = sc.cells[0];
  const cellJoints: number[][] = Array.from({ length: sc.cells[0] * sc.cells[1] }, () => []);
  for (let k = 0; k < J; k++) cellJoints[sc.jointCells[2 * k + 1] * N1 + sc.jointCells[2 * k]].push(k);
  let basis: CVec[] | undefined;
  const flexBasis = () => (basis ??= realIfPossible(analysis.flexBasis().vectors, R.im === null, analysis.flexes));
  return {
    sc,
    R,
    n: R.cols,
    complex: R.im !== null,
    basisComplex: () => R.im !== null,
    // R = analysis.matrix() is in units of lengthScale (a power of two: exact division)
    absTol: analysis.tolerance.absolute / analysis.lengthScale,
    analysisFlexes: analysis.flexes,
    relative: analysis.tolerance.relative,
    memoryLimit: DENSE_MEMORY_LIMIT,
    spanTol: SPAN_TOLERANCE,
    rowsOfJoint,
    cellJoints,
    flexBasis,
    basisReady: () => basis !== undefined,
    sigmaMax: analysis.sigmaMax / analysis.lengthScale,
    method,
    used: { 'restricted-svd': 0, 'restricted-sparse': 0, 'kernel-intersection': 0 },
    kernels: new KernelCache(),
  };
}

/**
 * A real matrix has a real kernel: when a solver returns complex vectors for a real R, their
 * real and imaginary parts span that kernel, and an orthonormal real basis of it is used.
 */
function realIfPossible(vectors: CVec[], realMatrix: boolean, dim: number): CVec[] {
  if (!realMatrix || vectors.every((v) => v.im.every((x) => x === 0))) return vectors;
  const parts: { re: Float64Array; im: Float64Array }[] = [];
  for (const v of vectors) {
    parts.push({ re: Float64Array.from(v.re), im: new Float64Array(v.re.length) });
    parts.push({ re: Float64Array.from(v.im), im: new Float64Array(v.im.length) });
  }
  parts.sort((a, b) => norm(b) - norm(a));
  const out: { re: Float64Array; im: Float64Array }[] = [];
  for (const v of parts) {
    if (out.length === dim) break;
    const n0 = norm(v);
    if (n0 === 0) continue;
    for (let pass = 0; pass < 2; pass++) for (const u of out) subtractProjection(v, u);
    const nv = norm(v);
    if (nv <= 1e-6 * n0) continue;
    scaleInPlace(v, 1 / nv);
    out.push(v);
  }
  return out;
}

function jointsOfCells(ctx: Ctx, cells: number[]): number[] {
  const out: number[] = [];
  for (const c of cells) out.push(...ctx.cellJoints[c]);
  return out.sort((a, b) => a - b);
}

/**
 * The rows of R touching `joints`, restricted to those joints' columns (x, y per joint, in
 * the order given). Entries at other joints are left out: those joints do not move.
 */
export function restrictedMatrix(R: SparseMatrix, rowsOfJoint: Int32Array[], joints: number[]): { matrix: SparseMatrix; dofs: Int32Array } {
  const colOf = new Map<number, number>();
  const dofs = new Int32Array(2 * joints.length);
  joints.forEach((j, t) => {
    colOf.set(2 * j, 2 * t);
    colOf.set(2 * j + 1, 2 * t + 1);
    dofs[2 * t] = 2 * j;
    dofs[2 * t + 1] = 2 * j + 1;
  });
  const rowSet = new Set<number>();
  for (const j of joints) for (const r of rowsOfJoint[j]) rowSet.add(r);
  const rows = [...rowSet].sort((a, b) => a - b);
  const rowPtr = new Int32Array(rows.length + 1);
  const colIdx: number[] = [];
  const re: number[] = [];
  const im: number[] = [];
  rows.forEach((r, t) => {
    const entries: [number, number, number][] = [];
    for (let k = R.rowPtr[r]; k < R.rowPtr[r + 1]; k++) {
      const c = colOf.get(R.colIdx[k]);
      if (c !== undefined) entries.push([c, R.re[k], R.im ? R.im[k] : 0]);
    }
    entries.sort((a, b) => a[0] - b[0]);
    for (const [c, vr, vi] of entries) {
      colIdx.push(c);
      re.push(vr);
      im.push(vi);
    }
    rowPtr[t + 1] = colIdx.length;
  });
  return {
    matrix: { rows: rows.length, cols: dofs.length, rowPtr, colIdx: Int32Array.from(colIdx), re: Float64Array.from(re), im: R.im ? Float64Array.from(im) : null },
    dofs,
  };
}

/**
 * The rank rule applied to candidate vectors supported on `dofs` (orthonormalised first): the
 * directions x of their span with ‖R x‖ ≤ the global absolute tolerance, from the singular
 * values of R·X (rows touching the dofs), computed directly. Returns orthonormal vectors.
 */
function certify(ctx: Ctx, dofs: Int32Array, raw: { re: Float64Array; im: Float64Array }[]): { re: Float64Array; im: Float64Array }[] {
  const cand: { re: Float64Array; im: Float64Array }[] = [];
  for (const x of raw) {
    const v = { re: Float64Array.from(x.re), im: Float64Array.from(x.im) };
    for (let pass = 0; pass < 2; pass++) for (const u of cand) subtractProjection(v, u);
    const nv = norm(v);
    if (nv <= 1e-3 * norm(x)) continue;
    scaleInPlace(v, 1 / nv);
    cand.push(v);
  }
  const k = cand.length;
  if (k === 0) return [];
  const R = ctx.R;
  const where = new Map<number, number>();
  dofs.forEach((d, t) => where.set(d, t));
  const rowSet = new Set<number>();
  for (let t = 0; t < dofs.length; t += 2) for (const r of ctx.rowsOfJoint[dofs[t] >> 1]) rowSet.add(r);
  const rows = [...rowSet];
  const cplx = R.im !== null || cand.some((v) => v.im.some((x) => x !== 0));
  const f = cplx ? 2 : 1;
  const Y = new Matrix(Math.max(f * rows.length, f * k), f * k);
  rows.forEach((r, i) => {
    for (let b = 0; b < k; b++) {
      let sr = 0;
      let si = 0;
      for (let e = R.rowPtr[r]; e < R.rowPtr[r + 1]; e++) {
        const t = where.get(R.colIdx[e]);
        if (t === undefined) continue;
        const ar = R.re[e];
        const ai = R.im ? R.im[e] : 0;
        sr += ar * cand[b].re[t] - ai * cand[b].im[t];
        si += ar * cand[b].im[t] + ai * cand[b].re[t];
      }
      Y.set(i, b, sr);
      if (cplx) {
        // embedding of the complex column (re; im) and its partner (−im; re)
        Y.set(i + rows.length, b, si);
        Y.set(i, b + k, -si);
        Y.set(i + rows.length, b + k, sr);
      }
    }
  });
  const svd = new SingularValueDecomposition(Y, { computeLeftSingularVectors: false, computeRightSingularVectors: true });
  const sig = svd.diagonal;
  const V = svd.rightSingularVectors;
  const out: { re: Float64Array; im: Float64Array }[] = [];
  for (let c = 0; c < f * k; c++) {
    if (!(sig[c] <= ctx.absTol)) continue;
    const col = V.getColumn(c);
    const y = cplx ? { re: Float64Array.from(col.slice(0, k)), im: Float64Array.from(col.slice(k)) } : { re: Float64Array.from(col), im: new Float64Array(k) };
    const v = combine(cand, y);
    for (let pass = 0; pass < 2; pass++) for (const u of out) subtractProjection(v, u);
    const nv = norm(v);
    if (nv < 0.5) continue; // the embedded partner of a vector already taken
    scaleInPlace(v, 1 / nv);
    out.push(v);
  }
  return out;
}

/**
 * THE RESTRICTED SOLVE. Orthonormal basis of the flexes supported on `joints`:
 *  - 'restricted-svd': the null space of the restricted matrix (dense SVD, src/linalg/dense.ts),
 *    σ ≤ the global absolute tolerance counting as zero;
 *  - 'kernel-intersection': {x ∈ ker R : x = 0 outside the joints}, from the global flex basis Φ:
 *    candidates Φy with ‖Φ_outside y‖ ≤ SPAN_TOLERANCE (the null space of Φ_outsideᴴΦ_outside =
 *    I − Φ_SᴴΦ_S by pivoted Cholesky), cut to the joints and kept by the rank rule
 *    (`certify`: ‖R x‖ ≤ the global absolute tolerance).
 *  - 'restricted-sparse': the same null space by the banded sparse solver
 *    (src/flex/solve-sparse.ts), for regions of SPARSE_MIN_COLUMNS columns or more.
 * 'auto' takes the kernel intersection when an operation count says it is cheaper, else the
 * sparse solver for large regions and the dense SVD for small ones.
 */
function restrictedKernel(ctx: Ctx, joints: number[]): Block {
  const nCols = 2 * joints.length;
  let method: RestrictedMethod;
  if (ctx.method !== 'auto') method = ctx.method;
  else {
    const f = ctx.analysisFlexes;
    const c = ctx.complex ? 8 : 1;
    const rowsEstimate = nCols * 1.3;
    const svdCost = c * (4 * rowsEstimate * nCols * nCols + 8 * nCols ** 3);
    const gramCost = (ctx.complex ? 4 : 1) * (0.5 * nCols * f * f + f ** 3);
    // the intersection needs the global flex basis: worth computing for it only when small
    const basisAtHand = ctx.basisReady() || ctx.n <= KERNEL_INTERSECTION_MAX_COLUMNS;
    method = gramCost < svdCost && basisAtHand ? 'kernel-intersection' : nCols >= SPARSE_MIN_COLUMNS ? 'restricted-sparse' : 'restricted-svd';
  }
  ctx.used[method]++;
  if (method !== 'kernel-intersection') {
    const { matrix, dofs } = restrictedMatrix(ctx.R, ctx.rowsOfJoint, joints);
    // translated regions away from the sides have identical restricted matrices: solve once
    const key = KernelCache.key(method, matrix);
    const known = ctx.kernels.get(key);
    if (known) return { dofs, vectors: known };
    let vectors: { re: Float64Array; im: Float64Array }[];
    if (method === 'restricted-sparse') vectors = sparseRestrictedKernel(matrix, ctx);
    else {
      const sigma = singularValues(matrix);
      let rank = 0;
      for (const s of sigma) if (s > ctx.absTol) rank++;
      const dim = nCols - rank;
      vectors = dim === 0 ? [] : nullSpace(matrix, dim).vectors.map((v) => ({ re: v.re, im: v.im }));
    }
    ctx.kernels.set(key, vectors);
    return { dofs, vectors };
  }
  const phi = ctx.flexBasis();
  const f = phi.length;
  const dofs = new Int32Array(nCols);
  joints.forEach((j, t) => {
    dofs[2 * t] = 2 * j;
    dofs[2 * t + 1] = 2 * j + 1;
  });
  if (f === 0) return { dofs, vectors: [] };
  // Φ_S gathered column by column (contiguous), then H = I − Φ_SᴴΦ_S = Φ_outsideᴴΦ_outside
  const Xre = phi.map((v) => Float64Array.from(dofs, (d) => v.re[d]));
  const Xim = ctx.basisComplex() ? phi.map((v) => Float64Array.from(dofs, (d) => v.im[d])) : null;
  const Hre = new Float64Array(f * f);
  const Him = Xim ? new Float64Array(f * f) : null;
  for (let a = 0; a < f; a++) {
    const ar = Xre[a];
    const ai = Xim?.[a];
    for (let b = a; b < f; b++) {
      const br = Xre[b];
      let sr = 0;
      let si = 0;
      if (ai && Xim) {
        const bi = Xim[b];
        for (let t = 0; t < nCols; t++) {
          sr += ar[t] * br[t] + ai[t] * bi[t];
          si += ar[t] * bi[t] - ai[t] * br[t];
        }
      } else for (let t = 0; t < nCols; t++) sr += ar[t] * br[t];
      Hre[a * f + b] = (a === b ? 1 : 0) - sr;
      Hre[b * f + a] = (a === b ? 1 : 0) - sr;
      if (Him) {
        Him[a * f + b] = -si;
        Him[b * f + a] = si;
      }
    }
  }
  const vectors: { re: Float64Array; im: Float64Array }[] = [];
  for (const y of psdNullSpace(Hre, Him, f, ctx.spanTol ** 2)) {
    const v = { re: new Float64Array(nCols), im: new Float64Array(nCols) };
    for (let a = 0; a < f; a++) {
      const yr = y.re[a];
      const yi = y.im[a];
      if (yr === 0 && yi === 0) continue;
      const pr = Xre[a];
      const pi = Xim ? Xim[a] : null;
      for (let q = 0; q < nCols; q++) {
        const xr = pr[q];
        const xi = pi ? pi[q] : 0;
        v.re[q] += xr * yr - xi * yi;
        v.im[q] += xr * yi + xi * yr;
      }
    }
    vectors.push(v);
  }
  // re-orthonormalise (the vectors are Φy cut to S, where Φy is below SPAN_TOLERANCE outside)
  const ortho: { re: Float64Array; im: Float64Array }[] = [];
  for (const v of vectors) {
    for (let pass = 0; pass < 2; pass++) for (const u of ortho) subtractProjection(v, u);
    const nv = norm(v);
    if (nv < 0.5) continue;
    scaleInPlace(v, 1 / nv);
    ortho.push(v);
  }
  if (ortho.length === 0) return { dofs, vectors: [] };
  // I − Φ_SᴴΦ_S cancels to about 1e-16, so the candidates are only good to ~1e-8 outside the
  // joints: project each onto the null space of the restricted matrix, then apply the rank rule
  const { matrix } = restrictedMatrix(ctx.R, ctx.rowsOfJoint, joints);
  const polished = ortho.map((x) => projectOntoNullSpace(matrix, x, ctx.absTol));
  const cert = certify(ctx, dofs, polished);
  return { dofs, vectors: cert };
}

/** y = A x (complex). */
function applyA(A: SparseMatrix, x: { re: Float64Array; im: Float64Array }): { re: Float64Array; im: Float64Array } {
  const y = { re: new Float64Array(A.rows), im: new Float64Array(A.rows) };
  for (let r = 0; r < A.rows; r++) {
    let sr = 0;
    let si = 0;
    for (let e = A.rowPtr[r]; e < A.rowPtr[r + 1]; e++) {
      const c = A.colIdx[e];
      const ar = A.re[e];
      const ai = A.im ? A.im[e] : 0;
      sr += ar * x.re[c] - ai * x.im[c];
      si += ar * x.im[c] + ai * x.re[c];
    }
    y.re[r] = sr;
    y.im[r] = si;
  }
  return y;
}

/** y = Aᴴ x (complex). */
function applyAH(A: SparseMatrix, x: { re: Float64Array; im: Float64Array }): { re: Float64Array; im: Float64Array } {
  const y = { re: new Float64Array(A.cols), im: new Float64Array(A.cols) };
  for (let r = 0; r < A.rows; r++) {
    const xr = x.re[r];
    const xi = x.im[r];
    for (let e = A.rowPtr[r]; e < A.rowPtr[r + 1]; e++) {
      const c = A.colIdx[e];
      const ar = A.re[e];
      const ai = A.im ? -A.im[e] : 0; // conj
      y.re[c] += ar * xr - ai * xi;
      y.im[c] += ar * xi + ai * xr;
    }
  }
  return y;
}

/**
 * x − δ with δ the least-squares solution of A δ = A x (CGLS from δ = 0): the projection of
 * x onto ker A, to the accuracy the iteration reaches (it stops once ‖A(x − δ)‖ is a hundredth
 * of `target`, stalls, or after 400 steps). Components along tiny but nonzero singular values
 * converge slowly and stay, so the rank rule applied afterwards still rejects them.
 */
function projectOntoNullSpace(A: SparseMatrix, x0: { re: Float64Array; im: Float64Array }, target: number): { re: Float64Array; im: Float64Array } {
  const b = applyA(A, x0);
  const nrm2 = (v: { re: Float64Array; im: Float64Array }) => {
    let t = 0;
    for (let i = 0; i < v.re.length; i++) t += v.re[i] * v.re[i] + v.im[i] * v.im[i];
    return t;
  };
  if (Math.sqrt(nrm2(b)) <= 0.01 * target) return x0;
  const n = A.cols;
  const delta = { re: new Float64Array(n), im: new Float64Array(n) };
  const r = { re: Float64Array.from(b.re), im: Float64Array.from(b.im) };
  let sv = applyAH(A, r);
  const p = { re: Float64Array.from(sv.re), im: Float64Array.from(sv.im) };
  let gamma = nrm2(sv);
  let best = nrm2(r);
  for (let it = 0; it < 400 && gamma > 0; it++) {
    const q = applyA(A, p);
    const qq = nrm2(q);
    if (qq === 0) break;
    const alpha = gamma / qq;
    for (let i = 0; i < n; i++) {
      delta.re[i] += alpha * p.re[i];
      delta.im[i] += alpha * p.im[i];
    }
    for (let i = 0; i < r.re.length; i++) {
      r.re[i] -= alpha * q.re[i];
      r.im[i] -= alpha * q.im[i];
    }
    const rr = nrm2(r);
    if (Math.sqrt(rr) <= 0.01 * target) break;
    if (it % 50 === 49) {
      if (rr > 0.25 * best) break; // stalled
      best = rr;
    }
    sv = applyAH(A, r);
    const gNew = nrm2(sv);
    const beta = gNew / gamma;
    gamma = gNew;
    for (let i = 0; i < n; i++) {
      p.re[i] = sv.re[i] + beta * p.re[i];
      p.im[i] = sv.im[i] + beta * p.im[i];
    }
  }
  const x = { re: new Float64Array(n), im: new Float64Array(n) };
  for (let i = 0; i < n; i++) {
    x.re[i] = x0.re[i] - delta.re[i];
    x.im[i] = x0.im[i] - delta.im[i];
  }
  return x;
}

/** Regions with at least this many columns go to the banded sparse solver rather than a dense SVD. */
export const SPARSE_MIN_COLUMNS = 48;

/**
 * ker of a restricted matrix by the banded sparse solver (src/flex/solve-sparse.ts), cut at
 * relative × σ_max of the whole R (= the global absolute tolerance), so the decision is the
 * global rule's.
 */
function sparseRestrictedKernel(matrix: SparseMatrix, ctx: Ctx): { re: Float64Array; im: Float64Array }[] {
  const spaces = sparseSpaces(matrix, { relative: ctx.relative, memoryLimit: ctx.memoryLimit, sigmaMax: ctx.sigmaMax });
  if (spaces.decision.rank === matrix.cols) return [];
  return spaces.flexBasis().vectors.map((v) => ({ re: v.re, im: v.im }));
}

/**
 * The kernel intersection is chosen (when cheaper per region) only once the global flex basis
 * exists, or when the whole matrix has at most this many columns (its basis is then cheap).
 */
export const KERNEL_INTERSECTION_MAX_COLUMNS = 2400;

/**
 * Restricted kernels by the exact content of their restricted matrix (sizes, structure and the
 * bits of every entry) and the method: the same input gives the same vectors, so a region whose
 * matrix was met before (a translate away from the sides) is not solved again. Bounded at about
 * 64 MB (MAX_WORDS numbers); past that, kernels are solved and not kept.
 */
class KernelCache {
  private map = new Map<string, { re: Float64Array; im: Float64Array }[]>();
  private words = 0;
  static readonly MAX_WORDS = 8e6;

  static key(method: RestrictedMethod, A: SparseMatrix): string {
    const parts: string[] = [method, String(A.rows), String(A.cols), A.rowPtr.join(','), A.colIdx.join(',')];
    const bits = (x: Float64Array) => {
      const u = new Uint32Array(x.buffer, x.byteOffset, 2 * x.length);
      let out = '';
      for (let i = 0; i < u.length; i += 4096) out += String.fromCharCode(...u.subarray(i, i + 4096).map((w) => w & 0xffff), ...u.subarray(i, i + 4096).map((w) => w >>> 16));
      return out;
    };
    parts.push(bits(A.re), A.im ? bits(A.im) : '-');
    return parts.join('|');
  }

  get(key: string): { re: Float64Array; im: Float64Array }[] | undefined {
    return this.map.get(key);
  }

  set(key: string, vectors: { re: Float64Array; im: Float64Array }[]): void {
    const w = vectors.reduce((t, v) => t + 2 * v.re.length, 0) + key.length / 4;
    if (this.words + w > KernelCache.MAX_WORDS) return;
    this.words += w;
    this.map.set(key, vectors);
  }
}

/**
 * Orthonormal basis of the (numerical) null space of a Hermitian positive semi-definite k×k
 * matrix H (row-major): pivoted Cholesky H ≈ P L Lᴴ Pᵀ stops when every remaining pivot is
 * at most `tol2`; the null vectors solve L11ᴴ y1 = −L21ᴴ y2 for unit y2 (rank-revealing for
 * PSD matrices, and far cheaper than a full eigen-decomposition).
 */
export function psdNullSpace(Hre: Float64Array, Him: Float64Array | null, k: number, tol2: number): { re: Float64Array; im: Float64Array }[] {
  const Are = Float64Array.from(Hre);
  const Aim = Him ? Float64Array.from(Him) : new Float64Array(k * k);
  const perm = Int32Array.from({ length: k }, (_, i) => i);
  const swap = (arr: Float64Array, x: number, y: number) => {
    const t = arr[x];
    arr[x] = arr[y];
    arr[y] = t;
  };
  let r = 0;
  for (; r < k; r++) {
    let p = r;
    for (let i = r + 1; i < k; i++) if (Are[i * k + i] > Are[p * k + p]) p = i;
    if (!(Are[p * k + p] > tol2)) break;
    if (p !== r) {
      for (let c = 0; c < k; c++) {
        swap(Are, r * k + c, p * k + c);
        swap(Aim, r * k + c, p * k + c);
      }
      for (let c = 0; c < k; c++) {
        swap(Are, c * k + r, c * k + p);
        swap(Aim, c * k + r, c * k + p);
      }
      const t = perm[r];
      perm[r] = perm[p];
      perm[p] = t;
    }
    const d = Math.sqrt(Are[r * k + r]);
    Are[r * k + r] = d;
    Aim[r * k + r] = 0;
    for (let i = r + 1; i < k; i++) {
      Are[i * k + r] /= d;
      Aim[i * k + r] /= d;
    }
    for (let i = r + 1; i < k; i++) {
      const lr = Are[i * k + r];
      const li = Aim[i * k + r];
      if (lr === 0 && li === 0) continue;
      for (let j = r + 1; j < k; j++) {
        const mr = Are[j * k + r];
        const mi = -Aim[j * k + r];
        Are[i * k + j] -= lr * mr - li * mi;
        Aim[i * k + j] -= lr * mi + li * mr;
      }
    }
  }
  const out: { re: Float64Array; im: Float64Array }[] = [];
  for (let j = r; j < k; j++) {
    const yr = new Float64Array(k);
    const yi = new Float64Array(k);
    yr[j] = 1;
    // L11ᴴ y1 = −L21ᴴ e_j:  rhs[c] = −conj(L[j][c])
    for (let c = r - 1; c >= 0; c--) {
      let sr = -Are[j * k + c];
      let si = Aim[j * k + c];
      for (let c2 = c + 1; c2 < r; c2++) {
        // conj(L[c2][c]) · y1[c2]
        const lr = Are[c2 * k + c];
        const li = -Aim[c2 * k + c];
        sr -= lr * yr[c2] - li * yi[c2];
        si -= lr * yi[c2] + li * yr[c2];
      }
      const dd = Are[c * k + c];
      yr[c] = sr / dd;
      yi[c] = si / dd;
    }
    const z = { re: new Float64Array(k), im: new Float64Array(k) };
    for (let i = 0; i < k; i++) {
      z.re[perm[i]] = yr[i];
      z.im[perm[i]] = yi[i];
    }
    for (let pass = 0; pass < 2; pass++) for (const u of out) subtractProjection(z, u);
    const nz = norm(z);
    if (nz === 0) continue;
    scaleInPlace(z, 1 / nz);
    out.push(z);
  }
  return out;
}

// ---------------------------------------------------------------------------------------------
// A growing span of compact vectors

type Cx = { re: Float64Array; im: Float64Array };

/**
 * The span of the accepted compact vectors w_0, w_1, … (each unit norm, supported on a few
 * dofs). An orthonormal basis of it is kept implicitly as Q = W·T with T upper triangular
 * (column j: q_j = Σ_{i≤j} T_ij w_i), built by classical Gram–Schmidt applied twice in the
 * coefficients: with g = Wᴴv and the Gram matrix G = WᴴW, Qᴴv = Tᴴg and Wᴴ(v − W y) = g − G y.
 * Every product with a w touches only its own dofs, so nothing costs a full-length pass; the
 * rounding error of the coefficients grows only with the condition of W, which the residual
 * threshold keeps below 1/tol. Full-length q_j are formed only on request (orthonormal()).
 */
class Span {
  private readonly w: { dofs: Int32Array; re: Float64Array; im: Float64Array; lo: number; hi: number }[] = [];
  /** Column j of T (length j + 1). */
  private readonly tCol: Cx[] = [];
  /** Row j of G: G_ij = ⟨w_i, w_j⟩ for i ≤ j (length j + 1). */
  private readonly gRow: Cx[] = [];
  /** Scatter space for one compact vector at a time. */
  private readonly sRe: Float64Array;
  private readonly sIm: Float64Array;

  constructor(
    readonly n: number,
    readonly tol: number,
  ) {
    this.sRe = new Float64Array(n);
    this.sIm = new Float64Array(n);
  }

  get dim(): number {
    return this.w.length;
  }

  /** g_i = ⟨w_i, x⟩ for every accepted w_i, x given on `dofs` (sorted or not). */
  private overlaps(dofs: Int32Array, x: Cx): Cx {
    const d = this.w.length;
    const g = { re: new Float64Array(d), im: new Float64Array(d) };
    let lo = Infinity;
    let hi = -Infinity;
    for (let t = 0; t < dofs.length; t++) {
      this.sRe[dofs[t]] = x.re[t];
      this.sIm[dofs[t]] = x.im[t];
      lo = Math.min(lo, dofs[t]);
      hi = Math.max(hi, dofs[t]);
    }
    for (let i = 0; i < d; i++) {
      const wi = this.w[i];
      if (wi.hi < lo || wi.lo > hi) continue;
      let sr = 0;
      let si = 0;
      for (let t = 0; t < wi.dofs.length; t++) {
        const q = wi.dofs[t];
        const xr = this.sRe[q];
        const xi = this.sIm[q];
        sr += wi.re[t] * xr + wi.im[t] * xi;
        si += wi.re[t] * xi - wi.im[t] * xr;
      }
      g.re[i] = sr;
      g.im[i] = si;
    }
    for (let t = 0; t < dofs.length; t++) {
      this.sRe[dofs[t]] = 0;
      this.sIm[dofs[t]] = 0;
    }
    return g;
  }

  /** c = Tᴴ g (the coefficients ⟨q_j, x⟩ from g = Wᴴx). */
  private tH(g: Cx): Cx {
    const d = g.re.length;
    const c = { re: new Float64Array(d), im: new Float64Array(d) };
    for (let j = 0; j < d; j++) {
      const t = this.tCol[j];
      let sr = 0;
      let si = 0;
      for (let i = 0; i <= j; i++) {
        sr += t.re[i] * g.re[i] + t.im[i] * g.im[i];
        si += t.re[i] * g.im[i] - t.im[i] * g.re[i];
      }
      c.re[j] = sr;
      c.im[j] = si;
    }
    return c;
  }

  /** y = T c (coefficients on W of Q c). */
  private t(c: Cx): Cx {
    const d = c.re.length;
    const y = { re: new Float64Array(d), im: new Float64Array(d) };
    for (let j = 0; j < d; j++) {
      const t = this.tCol[j];
      const cr = c.re[j];
      const ci = c.im[j];
      if (cr === 0 && ci === 0) continue;
      for (let i = 0; i <= j; i++) {
        y.re[i] += t.re[i] * cr - t.im[i] * ci;
        y.im[i] += t.re[i] * ci + t.im[i] * cr;
      }
    }
    return y;
  }

  /** G y. */
  private g(y: Cx): Cx {
    const d = y.re.length;
    const out = { re: new Float64Array(d), im: new Float64Array(d) };
    for (let j = 0; j < d; j++) {
      const row = this.gRow[j];
      for (let i = 0; i <= j; i++) {
        // G_ij = row[i] (i ≤ j) and G_ji = conj(row[i])
        out.re[i] += row.re[i] * y.re[j] - row.im[i] * y.im[j];
        out.im[i] += row.re[i] * y.im[j] + row.im[i] * y.re[j];
        if (i !== j) {
          out.re[j] += row.re[i] * y.re[i] + row.im[i] * y.im[i];
          out.im[j] += row.re[i] * y.im[i] - row.im[i] * y.re[i];
        }
      }
    }
    return out;
  }

  /** Accepts unit vector v (on `dofs`) when its residual against the span exceeds the tolerance. */
  private accept(dofs: Int32Array, v: Cx): boolean {
    const d = this.w.length;
    const g = this.overlaps(dofs, v);
    const c = this.tH(g);
    let cc = 0;
    for (let j = 0; j < d; j++) cc += c.re[j] * c.re[j] + c.im[j] * c.im[j];
    const y = this.t(c);
    // second pass: Qᴴ(v − W y) = Tᴴ(g − G y)
    const Gy = this.g(y);
    const g2 = { re: g.re.map((x, i) => x - Gy.re[i]), im: g.im.map((x, i) => x - Gy.im[i]) };
    const c2 = this.tH(g2);
    let cc2 = 0;
    for (let j = 0; j < d; j++) cc2 += c2.re[j] * c2.re[j] + c2.im[j] * c2.im[j];
    const rho2 = 1 - cc - cc2;
    if (!(rho2 > this.tol * this.tol)) return false;
    const rho = Math.sqrt(rho2);
    const y2 = this.t(c2);
    const col = { re: new Float64Array(d + 1), im: new Float64Array(d + 1) };
    for (let i = 0; i < d; i++) {
      col.re[i] = -(y.re[i] + y2.re[i]) / rho;
      col.im[i] = -(y.im[i] + y2.im[i]) / rho;
    }
    col.re[d] = 1 / rho;
    const row = { re: new Float64Array(d + 1), im: new Float64Array(d + 1) };
    row.re.set(g.re);
    row.im.set(g.im);
    row.re[d] = 1;
    let lo = Infinity;
    let hi = -Infinity;
    for (const q of dofs) {
      lo = Math.min(lo, q);
      hi = Math.max(hi, q);
    }
    this.w.push({ dofs, re: v.re, im: v.im, lo, hi });
    this.tCol.push(col);
    this.gRow.push(row);
    return true;
  }

  /**
   * Adds the directions of span(block) that are not yet in this span (residual above the
   * tolerance). Returns the accepted directions as compact vectors on the block's dofs (unit
   * norm), one per new dimension.
   */
  extend(block: Block): Cx[] {
    const V = block.vectors;
    const k = V.length;
    if (k === 0) return [];
    const d = this.w.length;
    const dofs = block.dofs;
    // C = Qᴴ V (d×k)
    const Cre = new Float64Array(d * k);
    const Cim = new Float64Array(d * k);
    for (let b = 0; b < k; b++) {
      const c = this.tH(this.overlaps(dofs, V[b]));
      for (let a = 0; a < d; a++) {
        Cre[a * k + b] = c.re[a];
        Cim[a * k + b] = c.im[a];
      }
    }
    // residual Gram G = VᴴV − CᴴC
    const Gre = new Float64Array(k * k);
    const Gim = new Float64Array(k * k);
    let anyIm = false;
    for (let a = 0; a < k; a++)
      for (let b = 0; b < k; b++) {
        let [sr, si] = dot(V[a], V[b]);
        for (let c = 0; c < d; c++) {
          const xr = Cre[c * k + a];
          const xi = Cim[c * k + a];
          const yr = Cre[c * k + b];
          const yi = Cim[c * k + b];
          sr -= xr * yr + xi * yi;
          si -= xr * yi - xi * yr;
        }
        Gre[a * k + b] = sr;
        Gim[a * k + b] = si;
        if (si !== 0) anyIm = true;
      }
    const eig = hermitianEigen(Gre, anyIm ? Gim : null, k);
    const fresh: Cx[] = [];
    const known: Cx[] = [];
    for (let t = k - 1; t >= 0; t--) (eig.values[t] > this.tol * this.tol ? fresh : known).push(combine(V, eig.vectors[t]));
    if (fresh.length === 0) return [];
    sparsify(fresh, known);
    const accepted: Cx[] = [];
    for (const v of fresh) {
      const nv = norm(v);
      if (nv === 0) continue;
      scaleInPlace(v, 1 / nv);
      if (this.accept(dofs, v)) accepted.push(v);
    }
    return accepted;
  }

  /** The orthonormal q_j (full length) for the given indices j, in that order. */
  orthonormal(indices: number[]): Cx[] {
    return indices.map((j) => {
      const q = { re: new Float64Array(this.n), im: new Float64Array(this.n) };
      const t = this.tCol[j];
      for (let i = 0; i <= j; i++) {
        const tr = t.re[i];
        const ti = t.im[i];
        if (tr === 0 && ti === 0) continue;
        const wi = this.w[i];
        for (let s = 0; s < wi.dofs.length; s++) {
          const p = wi.dofs[s];
          q.re[p] += tr * wi.re[s] - ti * wi.im[s];
          q.im[p] += tr * wi.im[s] + ti * wi.re[s];
        }
      }
      return q;
    });
  }
}

/** Number of entries above 1e-10 × the largest modulus. */
function nonzeros(v: { re: Float64Array; im: Float64Array }): number {
  let top = 0;
  for (let i = 0; i < v.re.length; i++) top = Math.max(top, v.re[i] * v.re[i] + v.im[i] * v.im[i]);
  const cut = 1e-20 * top;
  let c = 0;
  for (let i = 0; i < v.re.length; i++) if (v.re[i] * v.re[i] + v.im[i] * v.im[i] > cut) c++;
  return c;
}

/**
 * Make the new vectors of a block as sparse as possible without changing what they span
 * modulo the known part: greedy elementary operations w ← w − (w_p / b_p)·b with b a known
 * vector or another new one, keeping the step that zeroes the most entries, while it helps.
 * (A new line that shares a joint with a known corner flex becomes the bare line again.)
 */
function sparsify(fresh: { re: Float64Array; im: Float64Array }[], known: { re: Float64Array; im: Float64Array }[]): void {
  if (fresh.length + known.length < 2) return;
  const m = fresh[0].re.length;
  for (let i = 0; i < fresh.length; i++) {
    for (let round = 0; round < 4 * (fresh.length + known.length); round++) {
      const w = fresh[i];
      let bestNnz = nonzeros(w);
      let best: { re: Float64Array; im: Float64Array } | null = null;
      let wTop = 0;
      for (let q = 0; q < m; q++) wTop = Math.max(wTop, Math.hypot(w.re[q], w.im[q]));
      for (const b of [...known, ...fresh.filter((_, j) => j !== i)]) {
        let bTop = 0;
        for (let q = 0; q < m; q++) bTop = Math.max(bTop, Math.hypot(b.re[q], b.im[q]));
        for (let p = 0; p < m; p++) {
          const bm = Math.hypot(b.re[p], b.im[p]);
          if (bm <= 1e-6 * bTop || Math.hypot(w.re[p], w.im[p]) <= 1e-10 * wTop) continue;
          // c = w_p / b_p
          const den = b.re[p] * b.re[p] + b.im[p] * b.im[p];
          const cr = (w.re[p] * b.re[p] + w.im[p] * b.im[p]) / den;
          const ci = (w.im[p] * b.re[p] - w.re[p] * b.im[p]) / den;
          const cand = { re: new Float64Array(m), im: new Float64Array(m) };
          for (let q = 0; q < m; q++) {
            cand.re[q] = w.re[q] - (cr * b.re[q] - ci * b.im[q]);
            cand.im[q] = w.im[q] - (cr * b.im[q] + ci * b.re[q]);
          }
          cand.re[p] = 0;
          cand.im[p] = 0;
          const nn = nonzeros(cand);
          if (nn < bestNnz && norm(cand) > 1e-6 * norm(w)) {
            bestNnz = nn;
            best = cand;
          }
        }
      }
      if (!best) break;
      fresh[i] = best;
    }
  }
}

// ---------------------------------------------------------------------------------------------
// Metrics of one vector

interface Geometry {
  ax: Axes;
  /** Fractional (cell) coordinates of each joint, 2 per joint. */
  frac: Float64Array;
  jointCell: Int32Array;
  sc: Supercell;
}

function geometryOf(sc: Supercell): Geometry {
  const [a1, a2] = sc.framework.lattice;
  const detL = a1[0] * a2[1] - a1[1] * a2[0];
  const J = sc.jointCount;
  const frac = new Float64Array(2 * J);
  const jointCell = new Int32Array(J);
  for (let k = 0; k < J; k++) {
    const x = sc.positions[2 * k];
    const y = sc.positions[2 * k + 1];
    frac[2 * k] = (x * a2[1] - y * a2[0]) / detL;
    frac[2 * k + 1] = (a1[0] * y - a1[1] * x) / detL;
    jointCell[k] = sc.jointCells[2 * k + 1] * sc.cells[0] + sc.jointCells[2 * k];
  }
  return { ax: axesOf(sc), frac, jointCell, sc };
}

function jointWeights(v: { re: Float64Array; im: Float64Array }, J: number): Float64Array {
  const w = new Float64Array(J);
  for (let k = 0; k < J; k++) w[k] = v.re[2 * k] ** 2 + v.re[2 * k + 1] ** 2 + v.im[2 * k] ** 2 + v.im[2 * k + 1] ** 2;
  return w;
}

interface BasicMetrics {
  support: number;
  extents: [number, number];
  participation: number;
}

function basicMetrics(geo: Geometry, w: Float64Array): BasicMetrics {
  const J = w.length;
  let total = 0;
  let sq = 0;
  let wmax = 0;
  for (let k = 0; k < J; k++) {
    total += w[k];
    sq += w[k] * w[k];
    wmax = Math.max(wmax, w[k]);
  }
  const cut = SUPPORT_AMPLITUDE ** 2 * wmax;
  const pts: [number, number][] = [];
  for (let k = 0; k < J; k++) if (w[k] >= cut && w[k] > 0) pts.push([geo.frac[2 * k], geo.frac[2 * k + 1]]);
  let extents: [number, number] = [0, 0];
  if (pts.length) {
    const mx = pts.reduce((s, p) => s + p[0], 0) / pts.length;
    const my = pts.reduce((s, p) => s + p[1], 0) / pts.length;
    let sxx = 0;
    let sxy = 0;
    let syy = 0;
    for (const [x, y] of pts) {
      sxx += (x - mx) ** 2;
      sxy += (x - mx) * (y - my);
      syy += (y - my) ** 2;
    }
    const ang = 0.5 * Math.atan2(2 * sxy, sxx - syy);
    const u: [number, number] = [Math.cos(ang), Math.sin(ang)];
    const v: [number, number] = [-u[1], u[0]];
    const range = (dir: [number, number]) => {
      let lo = Infinity;
      let hi = -Infinity;
      for (const [x, y] of pts) {
        const t = x * dir[0] + y * dir[1];
        lo = Math.min(lo, t);
        hi = Math.max(hi, t);
      }
      return hi - lo + 1;
    };
    const e1 = range(u);
    const e2 = range(v);
    extents = e1 >= e2 ? [e1, e2] : [e2, e1];
  }
  return { support: pts.length, extents, participation: total > 0 ? (total * total) / (J * sq) : 0 };
}

interface AnchorFit {
  anchor: Anchor;
  rings: number;
  head: number;
  headWeight: number;
  xi: number;
  r2: number;
  meanDistance: number;
  pass: boolean;
}

function cartesian(sc: Supercell, f1: number, f2: number): [number, number] {
  const [a1, a2] = sc.framework.lattice;
  return [f1 * a1[0] + f2 * a2[0] + 0, f1 * a1[1] + f2 * a2[1] + 0];
}

/** Weighted least-squares line through (x, y) with weights w; returns slope and weighted R². */
function fitLine(xs: number[], ys: number[], ws: number[]): { slope: number; r2: number } {
  const W = ws.reduce((a, b) => a + b, 0);
  const mx = xs.reduce((a, x, t) => a + ws[t] * x, 0) / W;
  const my = ys.reduce((a, y, t) => a + ws[t] * y, 0) / W;
  let sxx = 0;
  let sxy = 0;
  let syy = 0;
  for (let t = 0; t < xs.length; t++) {
    sxx += ws[t] * (xs[t] - mx) ** 2;
    sxy += ws[t] * (xs[t] - mx) * (ys[t] - my);
    syy += ws[t] * (ys[t] - my) ** 2;
  }
  const slope = sxx > 0 ? sxy / sxx : 0;
  const r2 = syy > 0 && sxx > 0 ? (sxy * sxy) / (sxx * syy) : 1;
  return { slope, r2 };
}

function fitAnchor(geo: Geometry, w: Float64Array, anchor: Anchor, dist: (cell: number) => number): AnchorFit {
  const J = w.length;
  const ringW: number[] = [];
  const ringN: number[] = [];
  let total = 0;
  let first = 0;
  for (let k = 0; k < J; k++) {
    const r = dist(geo.jointCell[k]);
    while (ringW.length <= r) {
      ringW.push(0);
      ringN.push(0);
    }
    ringW[r] += w[k];
    ringN[r]++;
    total += w[k];
    first += r * w[k];
  }
  const rings = ringW.length;
  const head = Math.max(1, Math.floor(rings / 4));
  let hw = 0;
  for (let r = 0; r <= Math.min(head, rings - 1); r++) hw += ringW[r];
  hw /= total || 1;
  const amp = ringW.map((x, r) => (ringN[r] ? Math.sqrt(x / ringN[r]) : 0));
  const amax = Math.max(...amp);
  const xs: number[] = [];
  const ys: number[] = [];
  const ws: number[] = [];
  amp.forEach((a, r) => {
    if (ringN[r] && a > FIT_FLOOR * amax) {
      xs.push(r);
      ys.push(Math.log(a));
      ws.push(ringW[r]);
    }
  });
  let xi = Infinity;
  let r2 = 0;
  if (xs.length >= 2) {
    const fit = fitLine(xs, ys, ws);
    r2 = fit.r2;
    xi = fit.slope < 0 ? -1 / fit.slope : Infinity;
  }
  const pass = rings >= 2 && hw >= HEAD_WEIGHT && Number.isFinite(xi) && r2 >= MIN_R2;
  return { anchor, rings, head, headWeight: hw, xi, r2, meanDistance: first / (total || 1), pass };
}

/** Corner, side and point anchors the boundary offers, with their cell distances. */
function anchorCandidates(geo: Geometry, w: Float64Array): { corners: AnchorFit[]; sides: AnchorFit[]; point: AnchorFit } {
  const { ax, sc } = geo;
  const { N1, N2 } = ax;
  const ci = (c: number) => c % N1;
  const cj = (c: number) => Math.floor(c / N1);
  // the joint of largest weight (ties: the first)
  let kmax = 0;
  for (let k = 1; k < w.length; k++) if (w[k] > w[kmax]) kmax = k;
  const f1 = geo.frac[2 * kmax];
  const f2 = geo.frac[2 * kmax + 1];
  const sides: AnchorFit[] = [];
  const corners: AnchorFit[] = [];
  const sideDefs: { name: string; dist: (c: number) => number; at: [number, number] }[] = [];
  if (!ax.px) {
    sideDefs.push({ name: 'left', dist: (c) => ci(c), at: cartesian(sc, 0, f2) });
    sideDefs.push({ name: 'right', dist: (c) => N1 - 1 - ci(c), at: cartesian(sc, N1, f2) });
  }
  if (!ax.py) {
    sideDefs.push({ name: 'bottom', dist: (c) => cj(c), at: cartesian(sc, f1, 0) });
    sideDefs.push({ name: 'top', dist: (c) => N2 - 1 - cj(c), at: cartesian(sc, f1, N2) });
  }
  for (const s of sideDefs) sides.push(fitAnchor(geo, w, { kind: 'side', name: s.name, at: s.at }, s.dist));
  if (!ax.px && !ax.py) {
    for (const [v, h] of [
      ['bottom', 'left'],
      ['bottom', 'right'],
      ['top', 'left'],
      ['top', 'right'],
    ] as const) {
      const di = (c: number) => (h === 'left' ? ci(c) : N1 - 1 - ci(c));
      const dj = (c: number) => (v === 'bottom' ? cj(c) : N2 - 1 - cj(c));
      const at = cartesian(sc, h === 'left' ? 0 : N1, v === 'bottom' ? 0 : N2);
      corners.push(fitAnchor(geo, w, { kind: 'corner', name: `${v}-${h}`, at }, (c) => Math.max(di(c), dj(c))));
    }
  }
  // point: the cell of largest total weight
  const cellW = new Float64Array(N1 * N2);
  for (let k = 0; k < w.length; k++) cellW[geo.jointCell[k]] += w[k];
  let cmax = 0;
  for (let c = 1; c < cellW.length; c++) if (cellW[c] > cellW[cmax]) cmax = c;
  const i0 = ci(cmax);
  const j0 = cj(cmax);
  const wrapDist = (a: number, b: number, N: number, periodic: boolean) => {
    const d = Math.abs(a - b);
    return periodic ? Math.min(d, N - d) : d;
  };
  let px = 0;
  let py = 0;
  let pw = 0;
  for (let k = 0; k < w.length; k++)
    if (geo.jointCell[k] === cmax) {
      px += w[k] * sc.positions[2 * k];
      py += w[k] * sc.positions[2 * k + 1];
      pw += w[k];
    }
  const point = fitAnchor(
    geo,
    w,
    { kind: 'point', name: 'interior', at: [px / (pw || 1), py / (pw || 1)] },
    (c) => Math.max(wrapDist(ci(c), i0, N1, ax.px), wrapDist(cj(c), j0, N2, ax.py)),
  );
  return { corners, sides, point };
}

/** Decaying or bulk for one localised vector of the rest. */
function decayOf(geo: Geometry, w: Float64Array): AnchorFit | null {
  const { corners, sides, point } = anchorCandidates(geo, w);
  const best = (fits: AnchorFit[]) => fits.filter((f) => f.pass).sort((a, b) => a.meanDistance - b.meanDistance)[0];
  return best(corners) ?? best(sides) ?? (point.pass ? point : null);
}

// ---------------------------------------------------------------------------------------------
// The classifier

function checkOptions(o: ClassifyOptions): { window: number; strip: number } {
  const window = o.window ?? DEFAULT_WINDOW;
  const strip = o.strip ?? DEFAULT_STRIP;
  const problems = [];
  if (!Number.isInteger(window) || window < 1 || window > 50)
    problems.push({ where: 'window', what: `the window size must be a whole number of cells from 1 to 50, got ${window}`, fix: 'use e.g. window 3 (--window 3)' });
  if (!Number.isInteger(strip) || strip < 1 || strip > 50)
    problems.push({ where: 'strip', what: `the strip width must be a whole number of cells from 1 to 50, got ${strip}`, fix: 'use e.g. strip 2 (--strip 2)' });
  for (const d of o.directions ?? []) {
    if (!Array.isArray(d) || d.length !== 2 || !d.every(Number.isInteger) || gcd(d[0], d[1]) !== 1)
      problems.push({ where: 'directions', what: `(${String(d)}) is not a primitive lattice direction`, fix: 'give integer pairs (p, q) with gcd 1, e.g. [1, 0] or [1, -1]' });
  }
  if (problems.length) throw new InputError('The classification options cannot be used:', problems);
  return { window, strip };
}

function expand(n: number, dofs: Int32Array, v: { re: Float64Array; im: Float64Array }): CVec {
  const out = { re: new Float64Array(n), im: new Float64Array(n) };
  dofs.forEach((d, i) => {
    out.re[d] = v.re[i];
    out.im[d] = v.im[i];
  });
  return out;
}

/**
 * Split the flex space of `sc` (as analysed in `analysis`) into local, line, decaying and
 * bulk flexes; see the file header for the definitions. Counts sum to analysis.flexes.
 */
export function classifyFlexes(sc: Supercell, analysis: FlexAnalysis, options: ClassifyOptions = {}): Classification {
  const { window, strip } = checkOptions(options);
  const warnings: string[] = [];
  // line directions come from the framework: the lattice directions of its straight bar chains
  const frameworkLines = frameworkLineDirections(sc.framework).map((l) => l.direction);
  const carriesLine = (d: [number, number]) => frameworkLines.some((e) => (e[0] === d[0] && e[1] === d[1]) || (e[0] === -d[0] && e[1] === -d[1]));
  const asked = (options.directions ?? frameworkLines).map((d) => [d[0], d[1]] as [number, number]);
  const directions = asked.filter(carriesLine);
  for (const d of asked)
    if (!carriesLine(d)) warnings.push(`direction (${d[0]}, ${d[1]}) carries no straight line of bars in this framework, so no line flex can run along it; it was not used`);
  const progress = options.onProgress;
  const signal = options.signal;
  const ctx = makeContext(sc, analysis, options.restrictedSolve ?? 'auto');
  const geo = geometryOf(sc);
  const ax = geo.ax;
  const n = ctx.n;
  const J = sc.jointCount;
  const f = analysis.flexes;

  const span = new Span(n, ctx.spanTol);
  const modes: ClassifiedMode[] = [];
  const timings: Record<string, number> = {};
  let clock = performance.now();
  const lap = (name: string) => {
    const now = performance.now();
    timings[name] = (now - clock) / 1000;
    clock = now;
  };
  const windows = windowsOf(ax, window);
  const strips = directions.flatMap((d) => stripsOf(ax, d, strip)).sort((a, b) => a.width - b.width);
  const stripsByCell = indexStrips(strips, ax);
  const cornerFinds: { corner: string; size: number; index: number; mode: ClassifiedMode }[] = [];
  const cornerCells: [string, number][] =
    ax.px || ax.py
      ? []
      : [
          ['bottom-left', 0],
          ['bottom-right', ax.N1 - 1],
          ['top-left', (ax.N2 - 1) * ax.N1],
          ['top-right', ax.N2 * ax.N1 - 1],
        ];
  /** The corner of a free sample a window holds (the first, when it holds several), or null. */
  const cornerOf = (win: Region): string | null => cornerCells.find(([, c]) => win.cells.includes(c))?.[0] ?? null;
  const totalSteps = windows.length + 2 * strips.length + 1;
  let step = 0;
  const tick = (stage: string) => {
    step++;
    if (progress && (step % 16 === 0 || step === totalSteps)) progress({ fraction: Math.min(1, step / totalSteps), stage });
    throwIfAborted(signal);
  };

  // 1. local: window kernels, smallest windows first
  for (const win of windows) {
    if (span.dim < f) {
      const block = restrictedKernel(ctx, jointsOfCells(ctx, win.cells));
      const base = span.dim;
      for (const [t, v] of span.extend(block).entries()) {
        const full = expand(n, block.dofs, v);
        const w = jointWeights(full, J);
        // a window flex that is a whole straight line of the sample (a short line cutting a
        // corner) is a line: how many such lines fit in a window depends on the window only
        const line = wholeLineOf(stripsByCell, geo, w);
        if (line) modes.push({ class: 'line', vector: full, ...basicMetrics(geo, w), direction: line.direction, region: `${win.label}, whole ${line.label}` });
        else {
          const mode: ClassifiedMode = { class: 'local', vector: full, ...basicMetrics(geo, w), region: win.label };
          modes.push(mode);
          const corner = cornerOf(win);
          if (corner) cornerFinds.push({ corner, size: win.width, index: base + t, mode });
        }
      }
    }
    tick('local windows');
  }
  // corner windows: when every corner window from size w0 up to the largest adds flexes, the
  // count at that corner has not saturated; the flexes found from w0 on are pieces of a
  // boundary family (how many fit depends on the window) and go to the rest, where they are
  // localised and tested for decay like every boundary mode
  const confinedIdx = new Set<number>();
  const windowDependence: { window: number; cornerConfined: number }[] = [];
  {
    // per corner, the sizes from which every larger corner window still added a flex
    const from = new Map<string, number>();
    for (const corner of new Set(cornerFinds.map((c) => c.corner))) {
      let w0 = window + 1;
      while (w0 > 1 && cornerFinds.some((c) => c.corner === corner && c.size === w0 - 1)) w0--;
      from.set(corner, w0);
    }
    const confined = cornerFinds.filter((c) => c.size >= from.get(c.corner)!);
    for (const c of confined) confinedIdx.add(c.index);
    const drop = new Set(confined.map((c) => c.mode));
    for (let t = modes.length - 1; t >= 0; t--) if (drop.has(modes[t])) modes.splice(t, 1);
    for (let size = 1; size <= window; size++) windowDependence.push({ window: size, cornerConfined: confined.filter((c) => c.size <= size).length });
  }
  lap('windows');

  // 2. strips, narrowest first; for each width: the strips' kernels and their short
  //    sub-segments (M grows by the short pieces), then the lines of that width, ker_S ⊖ M.
  //    Narrower lines are known before wider strips are cut, so a whole short line (at a
  //    corner) is never taken as a short piece of a wider strip.
  const shortIdx = new Set<number>();
  const widths = [...new Set(strips.map((s) => s.width))].sort((a, b) => a - b);
  const stripTime = { strips: 0, lines: 0 };
  for (const width of widths) {
    const stripKernels: { region: Region; block: Block }[] = [];
    let t0 = performance.now();
    for (const s of strips) {
      if (s.width !== width) continue;
      if (span.dim < f) {
        const block = restrictedKernel(ctx, jointsOfCells(ctx, s.cells));
        if (block.vectors.length) {
          stripKernels.push({ region: s, block });
          // sub-segment kernels inside ker_S: candidates small outside T (≤ SPAN_TOLERANCE),
          // cut to T and kept by the rank rule, like every restricted kernel
          const jointPos = new Map<number, number>();
          block.dofs.forEach((d, t) => {
            if (t % 2 === 0) jointPos.set(d >> 1, t >> 1);
          });
          const cellOfJoint = (j: number) => geo.jointCell[j];
          for (const seg of shortSegments(s)) {
            const segCells = new Set(seg.map((t) => s.cells[t]));
            const outside: number[] = [];
            for (const [j, t] of jointPos) if (!segCells.has(cellOfJoint(j))) outside.push(t);
            const k = block.vectors.length;
            const Hre = new Float64Array(k * k);
            const Him = block.vectors.some((v) => v.im.some((x) => x !== 0)) ? new Float64Array(k * k) : null;
            for (const t of outside)
              for (const comp of [2 * t, 2 * t + 1])
                for (let a = 0; a < k; a++) {
                  const ar = block.vectors[a].re[comp];
                  const ai = block.vectors[a].im[comp];
                  for (let b = 0; b < k; b++) {
                    const br = block.vectors[b].re[comp];
                    const bi = block.vectors[b].im[comp];
                    Hre[a * k + b] += ar * br + ai * bi;
                    if (Him) Him[a * k + b] += ar * bi - ai * br;
                  }
                }
            const eig = hermitianEigen(Hre, Him, k);
            const short: { re: Float64Array; im: Float64Array }[] = [];
            eig.values.forEach((lam, t) => {
              if (lam > ctx.spanTol ** 2) return;
              const v = combine(block.vectors, eig.vectors[t]);
              for (const tt of outside) v.re[2 * tt] = v.re[2 * tt + 1] = v.im[2 * tt] = v.im[2 * tt + 1] = 0;
              const nv = norm(v);
              if (nv > 0.5) {
                scaleInPlace(v, 1 / nv);
                short.push(v);
              }
            });
            const pieces = certify(ctx, block.dofs, short);
            if (pieces.length) {
              const before = span.dim;
              span.extend({ dofs: block.dofs, vectors: pieces });
              for (let t = before; t < span.dim; t++) shortIdx.add(t);
            }
          }
        }
      }
      tick('strips');
    }
    stripTime.strips += (performance.now() - t0) / 1000;
    t0 = performance.now();
    // lines of this width: strip kernels modulo M
    for (const { region, block } of stripKernels) {
      if (span.dim < f) {
        for (const v of span.extend(block)) {
          const full = expand(n, block.dofs, v);
          const w = jointWeights(full, J);
          modes.push({ class: 'line', vector: full, ...basicMetrics(geo, w), direction: region.direction, region: region.label });
        }
      }
      tick('lines');
    }
    stripTime.lines += (performance.now() - t0) / 1000;
  }
  const nShort = shortIdx.size;
  timings.strips = stripTime.strips;
  timings.lines = stripTime.lines;
  clock = performance.now();
  if (span.dim > f) warnings.push(`the local, short and line spans have ${span.dim} dimensions, more than the ${f} flexes: the rank tolerance is not consistent between the restricted problems and the whole matrix`);
  // keep the counts summing to the flexes even then: drop the last line (then local) modes found
  while (modes.length > f) modes.pop();

  // 4. the rest: ker R ⊖ (L ⊕ lines)
  const takenIndices = Array.from({ length: span.dim }, (_, t) => t).filter((t) => !shortIdx.has(t) && !confinedIdx.has(t)).slice(0, f);
  const restDim = Math.max(0, f - takenIndices.length);
  const taken = restDim > 0 ? span.orthonormal(takenIndices) : [];
  // the global flex basis is needed only for a rest (the count f is known without it)
  const phi = restDim > 0 ? ctx.flexBasis() : [];
  const rest: { re: Float64Array; im: Float64Array }[] = [];
  const restComplex = ctx.basisComplex();
  let leakage = 0;
  if (restDim > 0) {
    const d = taken.length;
    const Cre = new Float64Array(d * f);
    const Cim = new Float64Array(d * f);
    for (let a = 0; a < d; a++)
      for (let b = 0; b < f; b++) {
        const [sr, si] = dot(taken[a], phi[b]);
        Cre[a * f + b] = sr;
        Cim[a * f + b] = si;
      }
    const Gre = new Float64Array(f * f);
    const Gim = ctx.basisComplex() ? new Float64Array(f * f) : null;
    for (let a = 0; a < f; a++)
      for (let b = 0; b < f; b++) {
        let sr = a === b ? 1 : 0;
        let si = 0;
        for (let c = 0; c < d; c++) {
          const xr = Cre[c * f + a];
          const xi = Cim[c * f + a];
          const yr = Cre[c * f + b];
          const yi = Cim[c * f + b];
          sr -= xr * yr + xi * yi;
          si -= xr * yi - xi * yr;
        }
        Gre[a * f + b] = sr;
        if (Gim) Gim[a * f + b] = si;
      }
    const eig = hermitianEigen(Gre, Gim, f);
    // the d smallest eigenvalues should vanish (L ⊕ lines ⊂ ker R)
    if (d > 0) leakage = Math.sqrt(Math.max(0, eig.values[Math.min(d, f) - 1]));
    for (let t = f - 1; t >= f - restDim; t--) {
      const y = eig.vectors[t];
      const v = { re: new Float64Array(n), im: new Float64Array(n) };
      for (let b = 0; b < f; b++) {
        const yr = y.re[b];
        const yi = y.im[b];
        if (yr === 0 && yi === 0) continue;
        addScaled(v, phi[b], yr, yi, !restComplex);
      }
      for (let pass = 0; pass < 2; pass++) for (const u of taken) subtractProjection(v, u, !restComplex);
      for (const u of rest) subtractProjection(v, u, !restComplex);
      const nv = norm(v);
      scaleInPlace(v, 1 / nv);
      rest.push(v);
    }
    if (leakage > 1e3 * ctx.spanTol) warnings.push(`the local and line flexes stick out of the flex space by ${leakage.toExponential(2)}: the rank tolerance is not consistent between the restricted problems and the whole matrix`);
  }
  throwIfAborted(signal);
  lap('rest');

  // 5. split off the extended part (boundary-distance operator), SCDM within each part, then
  //    decaying or bulk vector by vector
  const { near, far } = splitByBoundaryDistance(geo, rest);
  const cplx = rest.length > 0 && ctx.basisComplex();
  const pivots = pivotOrder(sc);
  const localised = [...(near.length ? scdm(near, cplx, pivots) : []), ...(far.length ? scdm(far, cplx, pivots) : [])];
  for (const v of localised) {
    const w = jointWeights(v, J);
    const fit = decayOf(geo, w);
    const base = basicMetrics(geo, w);
    if (fit) {
      modes.push({ class: 'decaying', vector: v, ...base, anchor: fit.anchor, decayLength: fit.xi, fitQuality: fit.r2, headWeight: fit.headWeight });
    } else modes.push({ class: 'bulk', vector: v, ...base });
  }
  tick('rest');
  lap('localise');

  const counts: Record<FlexClass, number> = { local: 0, line: 0, decaying: 0, bulk: 0 };
  for (const m of modes) counts[m.class]++;
  const order: Record<FlexClass, number> = { local: 0, line: 1, decaying: 2, bulk: 3 };
  modes.sort((a, b) => order[a.class] - order[b.class]);
  if (analysis.gap.ambiguous) warnings.push('the rank of the whole matrix is ambiguous at this tolerance (narrow singular-value gap), so the classes are too');

  return {
    flexes: f,
    trivialFlexes: analysis.trivialFlexes,
    counts,
    thresholds: {
      window,
      strip,
      directions: directions.map((d) => `(${d[0]},${d[1]})`).join(' ') || 'none (no straight line of bars)',
      lineDirections: 'lattice directions of straight chains of collinear bars, found from the unit cell',
      windowsTried: 'square, 1×1 up to window×window cells, every position',
      windowDependence: windowDependence.map((x) => `${x.window}:${x.cornerConfined}`).join(' '),
      cornerConfined: 'flexes of corner windows of sizes w0…window at a corner where each of those sizes added flexes (not saturated) go to the rest; windowDependence counts them by window size',
      lineCoverage: LINE_COVERAGE,
      rankToleranceRelative: analysis.tolerance.relative,
      rankToleranceAbsolute: analysis.tolerance.absolute,
      spanTolerance: ctx.spanTol,
      restrictedSolve: (Object.keys(ctx.used) as RestrictedMethod[]).filter((k) => ctx.used[k] > 0).map((k) => `${k} ×${ctx.used[k]}`).join(', ') || 'none',
      localBasis: 'restricted-kernel vectors as found (compact, unit norm, independent, not mutually orthogonal)',
      restSplit: 'eigenvectors of the nearest-side distance operator compressed to the rest: mean distance ≥ head radius (far) or below it (near), within 1e-9 × head radius',
      restLocalisation: 'SCDM, orthonormal form (Damle, Lin & Ying 2015), within near and within far separately',
      supportAmplitude: SUPPORT_AMPLITUDE,
      headWeight: HEAD_WEIGHT,
      headRadius: 'max(1, floor(rings/4)) cells',
      minR2: MIN_R2,
      fit: 'least squares of ln(ring amplitude) against distance, rings weighted by their share of the squared amplitude',
      fitFloor: FIT_FLOOR,
      distance: 'whole cells: from a side, cells between; from a corner or point, the larger cell offset',
    },
    modes,
    shortStripFlexes: nShort,
    windowDependence,
    timings,
    ...(warnings.length ? { warnings } : {}),
  };
}

/** The strips holding each cell, narrowest first. */
function indexStrips(strips: Region[], ax: Axes): Region[][] {
  const out: Region[][] = Array.from({ length: ax.N1 * ax.N2 }, () => []);
  for (const s of [...strips].sort((a, b) => a.width - b.width)) for (const c of s.cells) out[c].push(s);
  return out;
}

/**
 * The strip of which the vector (joint weights w) is a whole line: its support lies in the
 * strip and runs along at least LINE_COVERAGE of the strip's length. Null when none.
 */
function wholeLineOf(stripsByCell: Region[][], geo: Geometry, w: Float64Array): Region | null {
  let top = 0;
  for (const x of w) top = Math.max(top, x);
  const cells = new Set<number>();
  const joints: number[] = [];
  for (let k = 0; k < w.length; k++)
    if (w[k] > 1e-20 * top) {
      cells.add(geo.jointCell[k]);
      joints.push(k);
    }
  if (joints.length < 2) return null;
  const first = cells.values().next().value as number;
  for (const s of stripsByCell[first]) {
    const alongOf = new Map<number, number>();
    s.cells.forEach((c, t) => alongOf.set(c, s.along![t]));
    const ks: number[] = [];
    let inside = true;
    for (const c of cells) {
      const k = alongOf.get(c);
      if (k === undefined) {
        inside = false;
        break;
      }
      ks.push(k);
    }
    if (!inside) continue;
    const covered = s.closed ? new Set(ks).size : Math.max(...ks) - Math.min(...ks) + 1;
    if (covered >= LINE_COVERAGE * s.length! && onOneLine(geo, joints, s.direction!)) return s;
  }
  return null;
}

/** Whether the joints lie on one straight line along lattice direction d (fractional coordinates). */
function onOneLine(geo: Geometry, joints: number[], d: [number, number]): boolean {
  const off = (k: number) => d[0] * geo.frac[2 * k + 1] - d[1] * geo.frac[2 * k];
  const o0 = off(joints[0]);
  return joints.every((k) => Math.abs(off(k) - o0) <= 1e-9 * (1 + Math.abs(o0)));
}

/** Relative margin of the near/far comparison of mean distances (see splitByBoundaryDistance). */
const FAR_MARGIN = 1e-9;

/** Distance in whole cells from each cell to the nearest side, or null when every axis wraps. */
function sideDistance(ax: Axes): Int32Array | null {
  if (ax.px && ax.py) return null;
  const d = new Int32Array(ax.N1 * ax.N2);
  for (let j = 0; j < ax.N2; j++)
    for (let i = 0; i < ax.N1; i++) {
      let m = Infinity;
      if (!ax.px) m = Math.min(m, i, ax.N1 - 1 - i);
      if (!ax.py) m = Math.min(m, j, ax.N2 - 1 - j);
      d[j * ax.N1 + i] = m;
    }
  return d;
}

/**
 * The spectral decomposition of the nearest-side distance operator D (diagonal, in cells)
 * compressed to the rest, Ψᴴ D Ψ: eigenvectors whose mean distance reaches the head radius
 * h = max(1, ⌊E/4⌋) (E = number of distance rings) are `far` (candidates for bulk), the others
 * `near`. Basis-independent; with no side at all everything is `near`. Means are rational
 * numbers that can equal h exactly (a uniform field on a strip of 6 rows has mean 1 = h), so
 * the comparison allows 1e-9·h: rounding of the eigenvalues never decides the side.
 */
function splitByBoundaryDistance(geo: Geometry, psi: { re: Float64Array; im: Float64Array }[]): { near: typeof psi; far: typeof psi } {
  const dist = sideDistance(geo.ax);
  const r = psi.length;
  if (!dist || r === 0) return { near: psi, far: [] };
  const J = geo.jointCell.length;
  const dJ = Float64Array.from({ length: J }, (_, k) => dist[geo.jointCell[k]]);
  let rings = 0;
  for (const x of dist) rings = Math.max(rings, x + 1);
  const head = Math.max(1, Math.floor(rings / 4));
  const Are = new Float64Array(r * r);
  const Aim = new Float64Array(r * r);
  let anyIm = false;
  const out: [number, number] = [0, 0];
  for (let a = 0; a < r; a++)
    for (let b = a; b < r; b++) {
      weightedDot(dJ, J, psi[a], psi[b], out);
      const [sr, si] = out;
      Are[a * r + b] = Are[b * r + a] = sr;
      Aim[a * r + b] = si;
      Aim[b * r + a] = -si;
      if (si !== 0) anyIm = true;
    }
  const eig = hermitianEigen(Are, anyIm ? Aim : null, r);
  const near: typeof psi = [];
  const far: typeof psi = [];
  const real = !anyIm && psi.every((v) => v.im.every((x) => x === 0));
  eig.values.forEach((mean, t) => {
    const v = combine(psi, eig.vectors[t], real);
    scaleInPlace(v, 1 / norm(v));
    (mean >= head * (1 - FAR_MARGIN) ? far : near).push(v);
  });
  return { near, far };
}

/**
 * Σ_k d_k Σ_{i ∈ {2k, 2k+1}} conj(a_i) b_i into out (joints with d_k = 0 skipped). A function of
 * its own so that V8 optimises the hot loop early (its callers run once).
 */
function weightedDot(d: Float64Array, J: number, pa: Cx, pb: Cx, out: [number, number]): void {
  let sr = 0;
  let si = 0;
  const ar = pa.re;
  const ai = pa.im;
  const br = pb.re;
  const bi = pb.im;
  for (let k = 0; k < J; k++) {
    const dk = d[k];
    if (dk === 0) continue;
    const i = 2 * k;
    sr += dk * (ar[i] * br[i] + ai[i] * bi[i]);
    si += dk * (ar[i] * bi[i] - ai[i] * br[i]);
    const j = i + 1;
    sr += dk * (ar[j] * br[j] + ai[j] * bi[j]);
    si += dk * (ar[j] * bi[j] - ai[j] * br[j]);
  }
  out[0] = sr;
  out[1] = si;
}

/**
 * One SCDM elimination step on row j of the row-major n×r matrix X: the row minus its
 * component along the unit vector q; returns the row's new squared norm.
 */
function eliminateRow(Xre: Float64Array, Xim: Float64Array, j: number, r: number, qre: Float64Array, qim: Float64Array, real: boolean): number {
  const o = j * r;
  if (real) {
    // imaginary parts all zero: the same numbers without the zero products
    let c = 0;
    for (let a = 0; a < r; a++) c += qre[a] * Xre[o + a];
    let s = 0;
    for (let a = 0; a < r; a++) {
      Xre[o + a] -= c * qre[a];
      s += Xre[o + a] ** 2;
    }
    return s;
  }
  let sr = 0;
  let si = 0;
  for (let a = 0; a < r; a++) {
    const xr = Xre[o + a];
    const xi = Xim[o + a];
    sr += qre[a] * xr + qim[a] * xi;
    si += qre[a] * xi - qim[a] * xr;
  }
  let s = 0;
  for (let a = 0; a < r; a++) {
    Xre[o + a] -= sr * qre[a] - si * qim[a];
    Xim[o + a] -= sr * qim[a] + si * qre[a];
    s += Xre[o + a] ** 2 + Xim[o + a] ** 2;
  }
  return s;
}

/**
 * The SCDM pivot: the first dof in `order` whose residual exceeds every earlier one by more than
 * a relative 1e-12 (ties go to the earlier dof), among those not yet taken; −1 when none is left.
 */
function pickPivot(order: Int32Array, done: Uint8Array, res: Float64Array): number {
  let p = -1;
  let best = -1;
  for (let t = 0; t < order.length; t++) {
    const j = order[t];
    if (!done[j] && res[j] > best * (1 + 1e-12)) {
      best = res[j];
      p = j;
    }
  }
  return p;
}

/** v += (wr + i·wi)·p over all entries (complex axpy; hot, so its own function). */
function addScaled(v: Cx, p: Cx, wr: number, wi: number, real = false): void {
  const vr = v.re;
  if (real) {
    const pr0 = p.re;
    for (let i = 0; i < vr.length; i++) vr[i] += pr0[i] * wr;
    return;
  }
  const vi = v.im;
  const pr = p.re;
  const pi = p.im;
  for (let i = 0; i < vr.length; i++) {
    vr[i] += pr[i] * wr - pi[i] * wi;
    vi[i] += pr[i] * wi + pi[i] * wr;
  }
}

/**
 * SCDM (Damle, Lin & Ying 2015) on joint blocks: a column-pivoted QR of Ψᴴ whose candidate
 * columns are, per joint, the velocity component along the block's top direction (so the
 * choice turns with the drawing); the orthonormal localised basis is Ψ·polar(Ψ(C,:)ᴴ).
 */
/**
 * The order in which SCDM scans the dofs for its pivot, so that exact ties (symmetric
 * translates) are broken the same way whatever the joint labels: by unit-cell site, then the
 * cell's row and column, then x before y. (The joint index orders by cell first, so moving a
 * site by a lattice vector would change which of two tied joints of different sites came first.)
 */
function pivotOrder(sc: Supercell): Int32Array {
  const J = sc.jointCount;
  const [N1, N2] = sc.cells;
  const key = (d: number) => {
    const k = d >> 1;
    return ((sc.jointSites[k] * N2 + sc.jointCells[2 * k + 1]) * N1 + sc.jointCells[2 * k]) * 2 + (d & 1);
  };
  return Int32Array.from({ length: 2 * J }, (_, d) => d).sort((x, y) => key(x) - key(y));
}

/** Σ_c X[i][c]·conj(X[j][c]) for rows i, j of the row-major n×r matrix X (complex). */
function rowDot(Xre: Float64Array, Xim: Float64Array, i: number, j: number, r: number): [number, number] {
  let sr = 0;
  let si = 0;
  for (let c = 0; c < r; c++) {
    const ar = Xre[i * r + c];
    const ai = Xim[i * r + c];
    const br = Xre[j * r + c];
    const bi = Xim[j * r + c];
    sr += ar * br + ai * bi;
    si += ai * br - ar * bi;
  }
  return [sr, si];
}

function scdm(psi: { re: Float64Array; im: Float64Array }[], complex: boolean, order: Int32Array): { re: Float64Array; im: Float64Array }[] {
  const r = psi.length;
  const n = psi[0].re.length;
  // columns of Ψᴴ: c_j = conj(Ψ[j, :]), stored row-major n×r
  const Xre = new Float64Array(n * r);
  const Xim = new Float64Array(n * r);
  const res = new Float64Array(n);
  for (let a = 0; a < r; a++)
    for (let j = 0; j < n; j++) {
      Xre[j * r + a] = psi[a].re[j];
      Xim[j * r + a] = -psi[a].im[j];
    }
  for (let j = 0; j < n; j++) {
    let s = 0;
    for (let a = 0; a < r; a++) s += Xre[j * r + a] ** 2 + Xim[j * r + a] ** 2;
    res[j] = s;
  }
  // joint blocks: both coordinates of a joint together, so that turning the drawing (which
  // mixes x and y at every joint) selects the same columns. A step takes the joint whose
  // residual block B (rows x, y of Ψᴴ) has the largest top singular value, and the column
  // uᴴB along B's top left singular vector u (a direction in the plane, turning with the
  // drawing); that column is then eliminated from every row. A joint may be taken twice.
  const qre = new Float64Array(r);
  const qim = new Float64Array(r);
  const J = n >> 1;
  const jointOrder = Int32Array.from(order.filter((d) => (d & 1) === 0), (d) => d >> 1);
  const taken = new Uint8Array(J);
  const top = new Float64Array(J);
  const topOf = (k: number) => {
    const a = res[2 * k];
    const d = res[2 * k + 1];
    const [br, bi] = rowDot(Xre, Xim, 2 * k, 2 * k + 1, r);
    return (a + d) / 2 + Math.sqrt(((a - d) / 2) ** 2 + br * br + bi * bi);
  };
  for (let k = 0; k < J; k++) top[k] = topOf(k);
  // column selected at each step: u_x·Ψᴴ[:, 2k] + u_y·Ψᴴ[:, 2k+1] (of the original Ψ in M)
  const sel: { k: number; uxr: number; uxi: number; uyr: number; uyi: number }[] = [];
  for (let step = 0; step < r; step++) {
    const k = pickPivot(jointOrder, taken, top);
    if (k < 0) break;
    // top eigenvector u of the 2×2 Gram [[a, b], [conj b, d]] of the residual block
    const a = res[2 * k];
    const d = res[2 * k + 1];
    const [br, bi] = rowDot(Xre, Xim, 2 * k, 2 * k + 1, r);
    const lam = top[k];
    let u: [number, number, number, number]; // ux re, ux im, uy re, uy im
    if (Math.hypot(br, bi) > 1e-14 * lam) u = [br, -bi, lam - a, 0];
    else u = a >= d ? [1, 0, 0, 0] : [0, 0, 1, 0];
    const nu = Math.hypot(...u);
    u = [u[0] / nu, u[1] / nu, u[2] / nu, u[3] / nu];
    sel.push({ k, uxr: u[0], uxi: u[1], uyr: u[2], uyi: u[3] });
    // q = u_x·row_x + u_y·row_y of the residual, normalised
    let nq = 0;
    for (let c = 0; c < r; c++) {
      const xr = Xre[2 * k * r + c];
      const xi = Xim[2 * k * r + c];
      const yr = Xre[(2 * k + 1) * r + c];
      const yi = Xim[(2 * k + 1) * r + c];
      qre[c] = u[0] * xr - u[1] * xi + u[2] * yr - u[3] * yi;
      qim[c] = u[0] * xi + u[1] * xr + u[2] * yi + u[3] * yr;
      nq += qre[c] ** 2 + qim[c] ** 2;
    }
    nq = Math.sqrt(nq);
    if (nq === 0) {
      taken[k] = 1;
      continue;
    }
    for (let c = 0; c < r; c++) {
      qre[c] /= nq;
      qim[c] /= nq;
    }
    for (let j = 0; j < n; j++) res[j] = eliminateRow(Xre, Xim, j, r, qre, qim, !complex);
    for (let kk = 0; kk < J; kk++) if (!taken[kk]) top[kk] = topOf(kk);
    if (sel.filter((x) => x.k === k).length === 2) taken[k] = 1;
  }
  // M = Ψ(C,:)ᴴ for the selected columns: M[a][b] = u_x·conj(ψ_a[2k]) + u_y·conj(ψ_a[2k+1])
  const Mre = new Float64Array(r * r);
  const Mim = complex ? new Float64Array(r * r) : null;
  for (let a = 0; a < r; a++)
    sel.forEach((c, b) => {
      const xr = psi[a].re[2 * c.k];
      const xi = psi[a].im[2 * c.k];
      const yr = psi[a].re[2 * c.k + 1];
      const yi = psi[a].im[2 * c.k + 1];
      const zr = c.uxr * xr + c.uxi * xi + c.uyr * yr + c.uyi * yi;
      const zi = c.uxr * xi - c.uxi * xr + c.uyr * yi - c.uyi * yr;
      Mre[a * r + b] = zr;
      if (Mim) Mim[a * r + b] = -zi;
    });
  const W = polarFactor(Mre, Mim, r);
  const out: { re: Float64Array; im: Float64Array }[] = [];
  for (let b = 0; b < r; b++) {
    const v = { re: new Float64Array(n), im: new Float64Array(n) };
    for (let a = 0; a < r; a++) {
      const wr = W.re[a * r + b];
      const wi = W.im[a * r + b];
      if (wr === 0 && wi === 0) continue;
      addScaled(v, psi[a], wr, wi, !complex);
    }
    const nv = norm(v);
    scaleInPlace(v, 1 / nv);
    out.push(v);
  }
  return out;
}
