/**
 * The sparse solver for supercells without translation symmetry (free / pinned sides, or any
 * rigidity matrix): banded factorisations of the Gram matrices instead of a dense SVD.
 *
 * Cost. Numbered along the shorter side (row by row, or by reverse Cuthill–McKee when that is
 * narrower), K = RᴴR is banded with half-bandwidth b ≈ 2S·(N·|s2|max + |s1|max + 1) for N cells
 * along the numbering direction (for the kagome ≈ 4N). A band factorisation costs about dof·b²/2
 * multiply-adds and dof·b words: O(N⁴) time and O(N³) memory for an N×N supercell, against O(N⁶)
 * and O(N⁴) for the dense SVD. A count needs one factorisation plus ~40 single solves (dof·b
 * each); a basis of k vectors one more factorisation and two k-vector solves (2·dof·b·k).
 *
 * Numerics. The rank rule is σ > tol = relative·σ_max on the singular values of R. RᴴR squares
 * σ: its eigenvalues carry absolute errors of about ε·σ_max², i.e. an eigenvalue of K only tells
 * σ to about √ε·σ_max ≈ 1e-8·σ_max, coarser than the default cut 1e-9·σ_max. So K is used only to
 * *find* the small singular subspace; every σ that decides the rank is measured as ‖A v‖ of an
 * orthonormal Ritz vector v (absolute accuracy ~ε·σ_max, as sharp as the dense path):
 *
 *  1. σ_max: Lanczos on RᴴR (no reorthogonalisation is needed for the extreme eigenvalue) until
 *     the largest Ritz value stalls to 1e-13 relative over 10 steps.
 *  2. Side: A = R (flexes, K = RᴴR) or A = Rᴴ (self-stresses, K = RRᴴ), whichever is smaller.
 *     By flexes − self-stresses = cols − rows the smaller side also has the fewer null vectors.
 *     An inertia count there at τ = (c·σ_max)², c = 1e-3, gives k = #eigenvalues of K below τ
 *     (Sylvester's law of inertia on the band LDLᴴ of K − τI; Bai, Demmel, Dongarra, Ruhe &
 *     van der Vorst (eds.), Templates for the Solution of Algebraic Eigenvalue Problems, SIAM
 *     2000). Why c = 1e-3 and not smaller: the unpivoted factorisation of the indefinite K − τI
 *     may grow like σ_max²/τ, and its backward error ε·σ_max⁴/τ must stay far below τ; at
 *     c = 1e-3 it is ~1e-4·τ, while τ stays six decades above the cut in σ. The growth actually
 *     met is measured and reported. A zero or tiny pivot moves τ by 5 % and counts again.
 *  3. The same factor, if its growth is at most 1e4 (on the lattices tried it is 1 to 5), serves
 *     as the shift-invert operator T = (K − τI)⁻¹, so a count costs one factorisation; otherwise
 *     a band Cholesky of K + δI, δ = (1e-4·σ_max)², is used. Shift-invert subspace iteration on
 *     k + 8 vectors with Rayleigh–Ritz (through the small Gram matrix (AV)ᴴ(AV), then σ_i = ‖A v_i‖
 *     directly) runs until the Ritz σ at or below the cut settle; the block grows while fewer than
 *     4 Ritz σ lie above the cut. Ritz values are upper bounds of the true ones (Courant–Fischer),
 *     so each vector counted as null is certified: ‖A v‖ ≤ tol.
 *  4. The smallest σ above the cut (gap.kept): those null vectors are locked and Lanczos on T,
 *     fully reorthogonalised, converges the extreme Ritz value far faster than block iteration
 *     when the bottom of the spectrum is clustered (edge modes); its σ is again ‖A y‖ measured
 *     directly, settled to 1e-9 relative. A Ritz vector found at or below the cut is locked too.
 *  5. The rank is the side's dimension minus the number of Ritz σ ≤ tol (the structural zeros of
 *     a non-square R taken out as the dense path does); the other count follows from the rank.
 *  6. Bases are orthonormal (real for a real R). The decision side's basis is its locked vectors;
 *     the other side's is computed on first request, its dimension fixed by the rank: a band
 *     Cholesky of its K + δI, δ = (1e-6·σ_max)² (each solve shrinks the other directions by
 *     δ/σ²), two solves on k random vectors, Cholesky QR, and every residual ‖A v‖ checked
 *     against max(1e-3·tol, 16ε·σ_max), solving again while one is larger.
 * Complex (twisted) matrices use the Hermitian LDLᴴ throughout; nothing is embedded.
 */
import { TooLargeError } from '../errors.js';
import {
  bandBytes,
  bandLdl,
  createBand,
  ldlSolveBlock,
  perturbedShift,
  reverseCuthillMcKee,
  type BandMatrix,
  type Graph,
  type LdlFactor,
} from '../linalg/banded.js';
import {
  addRandomColumns,
  axpy,
  cholQr2,
  divide,
  dotInto,
  identityBlock,
  matvec,
  norm2,
  orthonormalDrop,
  orthonormalise,
  type Block,
} from '../linalg/block.js';
import { hermitianEigen } from '../linalg/hermitian-eig.js';
import { topLanczos } from '../linalg/lanczos.js';
import { seededUniform } from '../linalg/random.js';
import { certifyCount, type CountCertificate } from '../linalg/count-certificate.js';
import { formatBytes, type NullBasis } from '../linalg/dense.js';
import { AMBIGUOUS_RATIO, type RankDecision } from '../linalg/rank.js';
import { conjugateTranspose, type SparseMatrix } from '../linalg/sparse.js';
import type { Supercell } from '../supercell/supercell.js';
import { rigidityMatrix } from '../supercell/rigidity.js';
import { denseFallback } from './solve-dense.js';
import { throwIfAborted, type Progress, type SolvedSpaces, type SolveOptions, type SolveStatus, type SpaceSolver } from './solver.js';

const EPS = 2.220446049250313e-16;
/** Largest growth of the unpivoted LDLᴴ of K − τI for which it also serves as the shift-invert operator. */
const GROWTH_LIMIT = 1e4;

export interface SparseSolveOptions extends SolveOptions {
  /** τ = (inertiaShift·σ_max)² for the inertia count; default 1e-3. */
  inertiaShift?: number;
  /** δ = (choleskyShift·σ_max)² for the shift-invert factorisation; default 1e-4. */
  choleskyShift?: number;
  /** Guard vectors beyond the expected null space; default 8 (at least 4). */
  guardVectors?: number;
  /** Most subspace-iteration sweeps before the evidence is judged as it stands; default 60. */
  maxSweeps?: number;
  /** Seed of the deterministic start vectors; default 1. */
  seed?: number;
  /**
   * σ_max to scale the tolerance (and the shifts) by, instead of R's own from Lanczos: e.g. the
   * whole supercell's when R is one Bloch block of it, so every block is cut at the same
   * absolute tolerance. It is reported as decision.sigmaMax.
   */
  sigmaMax?: number;
  /**
   * Another path for a count the sparse evidence cannot certify: returns its spaces, or null when
   * it would not fit (then the count is returned flagged). The status records the fallback.
   */
  denseFallback?: (R: SparseMatrix) => SolvedSpaces | null;
  /** Text after "Fix: " in a TooLargeError, given the bytes needed and allowed. */
  sizeAdvice?: (bytesNeeded: number, bytesAllowed: number) => string;
}

/** The band layout the solver would use, and what it would allocate. */
export interface SparsePlan {
  rows: number;
  cols: number;
  complex: boolean;
  /** Half-bandwidth of RᴴR (flex side) and RRᴴ (self-stress side) in the chosen orderings. */
  bandwidth: { flexes: number; selfStresses: number };
  /** Bytes of the larger of the two bands (one band is held at a time). */
  bandBytes: number;
  /** Flops of one band factorisation on the smaller side (≈ dim·b²; ×4 for complex). */
  factorFlops: number;
}

// ---------------------------------------------------------------------------------------------
// Sides, orderings, Gram bands

/** One side of the problem: the null space of A (A = R for flexes, A = Rᴴ for self-stresses), K = AᴴA. */
interface Side {
  kind: 'flexes' | 'selfStresses';
  A: SparseMatrix;
  AH: SparseMatrix;
  dim: number;
  /** perm[old] = position in the band. */
  perm: Int32Array;
  bw: number;
  gramName: string;
  opName: string;
}

/** Half-bandwidth of AᴴA when its rows/columns are permuted by perm. */
function gramBandwidth(A: SparseMatrix, perm: Int32Array): number {
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

/** The graph of AᴴA: nodes are A's columns, joined when some row of A holds both. */
function gramGraph(A: SparseMatrix, AH: SparseMatrix): Graph {
  const n = A.cols;
  const mark = new Int32Array(n).fill(-1);
  const ptr = new Int32Array(n + 1);
  const adj: number[] = [];
  for (let i = 0; i < n; i++) {
    mark[i] = i;
    for (let k = AH.rowPtr[i]; k < AH.rowPtr[i + 1]; k++) {
      const r = AH.colIdx[k];
      for (let t = A.rowPtr[r]; t < A.rowPtr[r + 1]; t++) {
        const c = A.colIdx[t];
        if (mark[c] !== i) {
          mark[c] = i;
          adj.push(c);
        }
      }
    }
    ptr[i + 1] = adj.length;
  }
  return { n, ptr, adj: Int32Array.from(adj) };
}

function inversePermutation(order: Int32Array): Int32Array {
  const perm = new Int32Array(order.length);
  for (let i = 0; i < order.length; i++) perm[order[i]] = i;
  return perm;
}

/** The narrower of the given orderings (perm[old] = new) for AᴴA. */
function narrowest(A: SparseMatrix, perms: Int32Array[]): { perm: Int32Array; bw: number } {
  let best = { perm: perms[0], bw: gramBandwidth(A, perms[0]) };
  for (const p of perms.slice(1)) {
    const bw = gramBandwidth(A, p);
    if (bw < best.bw) best = { perm: p, bw };
  }
  return best;
}

function makeSides(R: SparseMatrix, RH: SparseMatrix): { flex: Side; stress: Side } {
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
    flex: { kind: 'flexes', A: R, AH: RH, dim: n, perm: cols.perm, bw: Math.min(cols.bw, Math.max(0, n - 1)), gramName: 'RᴴR', opName: 'R' },
    stress: { kind: 'selfStresses', A: RH, AH: R, dim: m, perm: rows.perm, bw: Math.min(rows.bw, Math.max(0, m - 1)), gramName: 'RRᴴ', opName: 'Rᴴ' },
  };
}

/** K = AᴴA in band storage, permuted. */
function gramBand(side: Side): BandMatrix {
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

// ---------------------------------------------------------------------------------------------
// Factorisations with retries

interface Ctx {
  memoryLimit: number;
  complex: boolean;
  check: () => void;
  progress: (fraction: number, stage: string) => void;
  advice: (need: number, allowed: number) => string;
  rand: () => number;
}

function checkMemory(ctx: Ctx, side: Side, vectors: number, what: string): void {
  const f = ctx.complex ? 2 : 1;
  const band = bandBytes(side.dim, side.bw, ctx.complex);
  // block of vectors, its rotated copy, A·V, and the solve's chunk buffers
  const vec = 8 * f * (vectors * (2 * side.dim + side.A.rows) + 32 * side.dim);
  const need = band + vec;
  if (need > ctx.memoryLimit) {
    throw new TooLargeError(
      `The sparse solver would need about ${formatBytes(need)} for ${what}: the ${side.dim}×${side.dim} ${ctx.complex ? 'complex ' : ''}band of ${side.gramName} ` +
        `(half-bandwidth ${side.bw}, ${formatBytes(band)}) and ${vectors} vectors, over the ${formatBytes(ctx.memoryLimit)} it may use. Fix: ${ctx.advice(need, ctx.memoryLimit)}.`,
      need,
      ctx.memoryLimit,
    );
  }
}

/** Inertia of K − τI: the number of eigenvalues of K below τ (τ moved slightly after a breakdown). */
interface InertiaRun {
  below: number;
  shift: number;
  retries: number;
  growth: number;
  bw: number;
  F: LdlFactor;
}

/**
 * Backward-error bound e of an inertia count: the computed LDLᴴ is exact for K − τI + E with
 * ‖E‖₂ ≤ 2ε·(bw+1)·(2bw+1)·growth·σ_max² (the componentwise bound c·(bw+1)·ε·|L||D||Lᴴ| of
 * Gaussian elimination turned into a norm over a band of 2bw+1 diagonals; N. J. Higham, Accuracy
 * and Stability of Numerical Algorithms, 2nd ed., SIAM 2002, ch. 9–10, constant from memory),
 * plus the rounding of K = AᴴA itself (each entry a sum of at most nnz products, each ≤ σ_max²).
 * Eigenvalues of K move by at most e (Weyl), so the count is exact for every threshold farther
 * than e from τ.
 */
function inertiaError(side: Side, run: InertiaRun, sigmaMax: number): number {
  const A = side.A;
  let nnz = 0;
  for (let r = 0; r < A.rows; r++) nnz = Math.max(nnz, A.rowPtr[r + 1] - A.rowPtr[r]);
  const s2 = sigmaMax * sigmaMax;
  return 2 * EPS * s2 * ((run.bw + 1) * (2 * run.bw + 1) * Math.max(1, run.growth) + 4 * nnz * nnz);
}

function inertiaCount(side: Side, tau: number, ctx: Ctx, p0: number, p1: number): InertiaRun {
  for (let retry = 0; ; retry++) {
    const shift = retry === 0 ? tau : perturbedShift(tau, 0.05, retry);
    const K = gramBand(side);
    const F = bandLdl(K, { shift, overwrite: true, check: ctx.check, onProgress: (f) => ctx.progress(p0 + (p1 - p0) * f, `inertia count: LDLᴴ of ${side.gramName} − τI`) });
    if (!F.breakdown) return { below: F.negatives, shift, retries: retry, growth: F.growth, bw: K.bw, F };
    if (retry >= 8) throw new Error(`sparse solver: the inertia count of ${side.gramName} − τI broke down at every shift tried near τ = ${tau}`);
  }
}

/** Band LDLᴴ of K + δI with every pivot positive (δ raised ×100 until it is). */
function choleskyShifted(side: Side, delta0: number, deltaMax: number, ctx: Ctx, p0: number, p1: number): { F: LdlFactor; delta: number } {
  let delta = delta0;
  for (;;) {
    const K = gramBand(side);
    const F = bandLdl(K, { shift: -delta, overwrite: true, check: ctx.check, onProgress: (f) => ctx.progress(p0 + (p1 - p0) * f, `factorising ${side.gramName} + δI`) });
    if (!F.breakdown && F.negatives === 0) return { F, delta };
    if (delta >= deltaMax) throw new Error(`sparse solver: ${side.gramName} + δI is not positive definite even at δ = ${delta}`);
    delta = Math.min(deltaMax, delta * 100);
  }
}

// ---------------------------------------------------------------------------------------------
// Subspace iteration

interface SubspaceResult {
  X: Block;
  sigma: Float64Array;
  sweeps: number;
  converged: boolean;
  lanczosSteps?: number;
  certificate: CountCertificate;
  /** The phase-1 Ritz block and its σ (ascending), for certificates at other shifts. */
  ritz: { X: Block; sigma: Float64Array };
}

function applyInverse(side: Side, F: LdlFactor, X: Block): void {
  const { perm, dim } = side;
  const q = X.re.length;
  const tr: Float64Array[] = [];
  const ti: Float64Array[] | null = X.im ? [] : null;
  for (let c = 0; c < q; c++) {
    const a = new Float64Array(dim);
    const x = X.re[c];
    for (let i = 0; i < dim; i++) a[perm[i]] = x[i];
    tr.push(a);
    if (ti) {
      const b = new Float64Array(dim);
      const y = X.im![c];
      for (let i = 0; i < dim; i++) b[perm[i]] = y[i];
      ti.push(b);
    }
  }
  ldlSolveBlock(F, tr, ti);
  for (let c = 0; c < q; c++) {
    const x = X.re[c];
    const a = tr[c];
    for (let i = 0; i < dim; i++) x[i] = a[perm[i]];
    if (ti) {
      const y = X.im![c];
      const b = ti[c];
      for (let i = 0; i < dim; i++) y[i] = b[perm[i]];
    }
  }
}

/**
 * Rayleigh–Ritz for K = AᴴA on the orthonormal block X: the `take` Ritz vectors with the smallest
 * Ritz values, sorted by σ = ‖A v‖ (measured directly, absolute accuracy ~ε·σ_max).
 */
function rayleighRitz(side: Side, X: Block, take = X.re.length): { X: Block; sigma: Float64Array } {
  const A = side.A;
  const q = X.re.length;
  const m = A.rows;
  const complex = X.im !== null;
  const Yr: Float64Array[] = [];
  const Yi: Float64Array[] = [];
  for (let c = 0; c < q; c++) {
    const yr = new Float64Array(m);
    const yi = complex ? new Float64Array(m) : null;
    matvec(A, X.re[c], X.im ? X.im[c] : null, yr, yi);
    Yr.push(yr);
    if (yi) Yi.push(yi);
  }
  const gr = new Float64Array(q * q);
  const gi = complex ? new Float64Array(q * q) : null;
  for (let a = 0; a < q; a++) {
    for (let b = a; b < q; b++) {
      let sr = 0;
      let si = 0;
      const ar = Yr[a];
      const br = Yr[b];
      if (!complex) {
        for (let i = 0; i < m; i++) sr += ar[i] * br[i];
      } else {
        const ai = Yi[a];
        const bi = Yi[b];
        for (let i = 0; i < m; i++) {
          sr += ar[i] * br[i] + ai[i] * bi[i];
          si += ar[i] * bi[i] - ai[i] * br[i];
        }
      }
      gr[a * q + b] = sr;
      gr[b * q + a] = sr;
      if (gi) {
        gi[a * q + b] = si;
        gi[b * q + a] = -si;
      }
    }
  }
  const { vre, vim } = hermitianEigen(gr, gi, q);
  const n = X.len;
  const t = Math.min(take, q);
  const out: Block = { len: n, re: [], im: complex ? [] : null };
  for (let j = 0; j < t; j++) {
    const xr = new Float64Array(n);
    const xi = complex ? new Float64Array(n) : null;
    for (let i = 0; i < q; i++) {
      const wr = vre[i * q + j];
      const wi = vim ? vim[i * q + j] : 0;
      const sr = X.re[i];
      if (!xi) {
        if (wr !== 0) for (let k = 0; k < n; k++) xr[k] += wr * sr[k];
      } else {
        const si = X.im![i];
        for (let k = 0; k < n; k++) {
          xr[k] += wr * sr[k] - wi * si[k];
          xi[k] += wr * si[k] + wi * sr[k];
        }
      }
    }
    out.re.push(xr);
    if (xi) out.im!.push(xi);
  }
  const sig = new Float64Array(t);
  const yr = new Float64Array(m);
  const yi = complex ? new Float64Array(m) : null;
  for (let j = 0; j < t; j++) {
    matvec(A, out.re[j], out.im ? out.im[j] : null, yr, yi);
    sig[j] = norm2(yr, yi);
  }
  const idx = Array.from({ length: t }, (_, i) => i).sort((a, b) => sig[a] - sig[b]);
  return {
    X: { len: n, re: idx.map((i) => out.re[i]), im: out.im ? idx.map((i) => out.im![i]) : null },
    sigma: Float64Array.from(idx.map((i) => sig[i])),
  };
}

/** True when every change is settled: extrapolated remaining error ≤ max(rel·σ, floor). */
function settled(sigma: Float64Array, prev: Float64Array | null, prevDelta: Float64Array | null, count: number, rel: number, floor: number): { ok: boolean; delta: Float64Array } {
  const delta = new Float64Array(count);
  if (!prev || prev.length < count) return { ok: false, delta: delta.fill(Infinity) };
  let ok = true;
  for (let i = 0; i < count; i++) {
    delta[i] = Math.abs(sigma[i] - prev[i]);
    const rate = prevDelta && prevDelta.length > i && Number.isFinite(prevDelta[i]) && prevDelta[i] > 0 ? Math.min(0.95, delta[i] / prevDelta[i]) : 0.5;
    const est = (delta[i] * rate) / (1 - rate);
    const bound = Math.max(rel * sigma[i], floor);
    if (est > bound || delta[i] > 100 * bound) ok = false;
  }
  return { ok, delta };
}

/** What the inertia count says and how far it can be trusted (see certifyCount). */
interface InertiaEvidence {
  /** k: eigenvalues of this side's K below `tau` (structural zeros included). */
  count: number;
  tau: number;
  /** Backward-error bound e of the count, absolute in K's units. */
  error: number;
}

/**
 * The small singular subspace of A on one side, for a certified rank decision.
 *
 * Phase 1: shift-invert subspace iteration X ← orth(T·X) with T = (K + δI)⁻¹ (positive definite:
 *   it shrinks every direction by (λ + δ)⁻¹, so it cannot amplify values near a shift) or, when
 *   the inertia count found nothing below τ, the inertia factor of K − τI (then positive
 *   definite too); Rayleigh–Ritz on q = k + p vectors; after each sweep the count certificate
 *   (certifyCount) is tried, and the iteration stops once it holds on two sweeps running with
 *   the Ritz values settled. The block grows while fewer than 4 guard vectors lie beyond the k
 *   the inertia count predicts, and by 8 more every 10 sweeps without a certificate.
 * Phase 2: the null vectors are locked and the smallest σ above the cut is found by Lanczos on
 *   T orthogonal to them (lanczosSmallestKept).
 * When the block would cover the whole side, one Rayleigh–Ritz on the identity is exact.
 */
function certifiedIteration(
  side: Side,
  F: LdlFactor | null,
  q0: number,
  inertia: InertiaEvidence,
  tol: number,
  sigmaMax: number,
  ctx: Ctx,
  p0: number,
  p1: number,
  sweepLimit: number,
): SubspaceResult {
  const dim = side.dim;
  const complex = ctx.complex;
  const minGuards = 4;
  const certify = (X: Block, sigma: Float64Array) =>
    certifyCount({ A: side.A, AH: side.AH, X, sigma, tol, inertia: inertia.count, tau: inertia.tau, inertiaError: inertia.error, sigmaMax });
  let q = Math.min(dim, q0);
  if (q >= dim || !F) {
    // A second Rayleigh–Ritz on the first one's Ritz vectors: the Gram matrix of the identity
    // mixes directions whose σ² differ by less than ε·σ_max² (a σ of 1e-12 picks up 2e-6 of a
    // direction with σ 1e-5); in the rotated basis the small Gram entries are accurate to their
    // own size, so the second pass resolves them.
    const r = rayleighRitz(side, rayleighRitz(side, identityBlock(dim, complex)).X);
    return { X: r.X, sigma: r.sigma, sweeps: 0, converged: true, certificate: certify(r.X, r.sigma), ritz: r };
  }
  let X: Block = { len: dim, re: [], im: complex ? [] : null };
  addRandomColumns(X, q, ctx.rand);
  const floor = Math.max(1e-3 * tol, 16 * EPS * sigmaMax);
  let prev: Float64Array | null = null;
  let prevDelta: Float64Array | null = null;
  let sigma: Float64Array = new Float64Array(0);
  let sweeps = 0;
  let converged = false;
  let certificate: CountCertificate | null = null;
  let certifiedRuns = 0;
  // Nothing to find in phase 1 when the inertia count puts no eigenvalue below the shift: the
  // count (0 null vectors) is then certified as it stands and Lanczos alone finds the smallest σ.
  const nothingBelow = inertia.count === 0;
  const maxSweeps = nothingBelow ? 0 : sweepLimit;
  if (nothingBelow) {
    converged = true;
    certificate = certify(X, new Float64Array(0));
  }
  for (let sweep = 1; sweep <= maxSweeps; sweep++) {
    ctx.check();
    ctx.progress(p0 + ((p1 - p0) * Math.min(sweep, 8)) / 20, `subspace iteration on ${side.gramName}, sweep ${sweep} (${q} vectors)`);
    sweeps++;
    applyInverse(side, F, X);
    if (!cholQr2(X)) orthonormalise(X, ctx.rand);
    const rr = rayleighRitz(side, X);
    X = rr.X;
    sigma = rr.sigma;
    let nNull = 0;
    while (nNull < sigma.length && sigma[nNull] <= tol) nNull++;
    if (q - Math.max(nNull, inertia.count) < minGuards && q < dim) {
      const grow = Math.min(dim - q, Math.max(8, Math.ceil(q / 2)));
      addRandomColumns(X, grow, ctx.rand);
      orthonormalise(X, ctx.rand);
      q += grow;
      prev = null;
      prevDelta = null;
      continue;
    }
    const need = Math.min(q, Math.max(nNull, inertia.count));
    const s = settled(sigma, prev, prevDelta, need, 1e-8, floor);
    prev = sigma;
    prevDelta = s.delta;
    certificate = certify(X, sigma);
    certifiedRuns = certificate.certified ? certifiedRuns + 1 : 0;
    // the certificate is the proof; settled values only sharpen the reported dropped σ
    if (certifiedRuns >= 3 || (certifiedRuns >= 2 && s.ok)) {
      converged = true;
      break;
    }
    if (sweep % 10 === 0 && !certificate.certified && q < dim) {
      // slow convergence of values near the shift: more guard vectors widen the ratio
      const grow = Math.min(dim - q, 8);
      addRandomColumns(X, grow, ctx.rand);
      orthonormalise(X, ctx.rand);
      q += grow;
      prev = null;
      prevDelta = null;
    }
  }
  certificate ??= certify(X, sigma);

  const phase1: Block = { len: dim, re: [...X.re], im: X.im ? [...X.im] : null };
  const phase1Sigma = sigma;
  // Phase 2: lock the null vectors, then the smallest σ above the cut by Lanczos
  let nNull = 0;
  if (certificate.certified) nNull = certificate.provenNull;
  else while (nNull < sigma.length && sigma[nNull] <= tol) nNull++;
  const locked: Block = { len: dim, re: X.re.slice(0, nNull), im: X.im ? X.im.slice(0, nNull) : null };
  const lockedSigma = Array.from(sigma.slice(0, nNull));
  const start: Block = { len: dim, re: X.re.slice(nNull, nNull + 1), im: X.im ? X.im.slice(nNull, nNull + 1) : null };
  const kept = lanczosSmallestKept(side, F, locked, lockedSigma, start, tol, ctx, p0 + (p1 - p0) * 0.4, p1, true);
  if (locked.re.length > nNull && certificate.certified) {
    // Lanczos found a null vector the certificate did not count: the evidence contradicts itself
    certificate = { ...certificate, certified: false, reasons: [`Lanczos found ${locked.re.length - nNull} more vector(s) with ‖A v‖ ≤ tol than the certificate counted`] };
  }
  const all: Block = { len: dim, re: [...locked.re], im: locked.im ? [...locked.im] : null };
  const allSigma = [...lockedSigma];
  if (kept.vector) {
    all.re.push(kept.vector.re);
    if (all.im) all.im.push(kept.vector.im!);
    allSigma.push(kept.sigma);
  }
  return { X: all, sigma: Float64Array.from(allSigma), sweeps, converged: converged && kept.converged, lanczosSteps: kept.steps, certificate, ritz: { X: phase1, sigma: phase1Sigma } };
}

/**
 * The smallest σ above the cut: Lanczos on the shift-invert operator T (the band factor's
 * inverse), with full reorthogonalisation against the locked null vectors and its own basis.
 * Extreme Ritz values of T are the eigenvalues of K nearest the shift; for a clustered bottom
 * of the spectrum this converges far faster than block iteration (Krylov: the error falls like
 * exp(−4j·√gap) rather than gapʲ). Every few steps the Ritz vectors of the extreme Ritz values are
 * formed and σ = ‖A y‖ measured directly; one at or below the cut (a null vector phase 1 missed)
 * is locked and the iteration restarts. Converged when the smallest σ above the cut changes by
 * at most 1e-9 relative over two checks. At most 150 steps per start.
 */
function lanczosSmallestKept(
  side: Side,
  F: LdlFactor,
  locked: Block,
  lockedSigma: number[],
  start: Block,
  tol: number,
  ctx: Ctx,
  p0: number,
  p1: number,
  /** The inertia count found no eigenvalue of K below the shift of F (and none is locked). */
  noneBelowShift = false,
): { vector: { re: Float64Array; im: Float64Array | null } | null; sigma: number; steps: number; converged: boolean } {
  const dim = side.dim;
  const complex = ctx.complex;
  const free = dim - locked.re.length;
  if (free <= 0) return { vector: null, sigma: NaN, steps: 0, converged: true };
  const maxSteps = Math.min(free, 150);
  const yr = new Float64Array(side.A.rows);
  const yi = complex ? new Float64Array(side.A.rows) : null;
  const sigmaOf = (v: { re: Float64Array; im: Float64Array | null }) => {
    matvec(side.A, v.re, v.im, yr, yi);
    return norm2(yr, yi);
  };
  let steps = 0;
  for (let restart = 0; restart < 6; restart++) {
    // start: the phase-1 guard (a good guess) plus a little of everything
    const init: Block = { len: dim, re: [], im: complex ? [] : null };
    addRandomColumns(init, 1, ctx.rand);
    if (restart === 0 && start.re.length) {
      for (let i = 0; i < dim; i++) init.re[0][i] = start.re[0][i] + 1e-3 * init.re[0][i];
      if (init.im) for (let i = 0; i < dim; i++) init.im[0][i] = start.im![0][i] + 1e-3 * init.im[0][i];
    }
    const V = orthonormalDrop(init, locked);
    if (V.re.length === 0) return { vector: null, sigma: NaN, steps, converged: false };
    const alpha: number[] = [];
    const beta: number[] = [];
    type Candidate = { vector: { re: Float64Array; im: Float64Array | null }; sigma: number };
    let best = null as Candidate | null;
    let prevBest = NaN;
    let calm = 0;
    let lockedNew = false;
    for (let j = 0; j < maxSteps; j++) {
      ctx.check();
      steps++;
      ctx.progress(p0 + ((p1 - p0) * Math.min(j, 40)) / 41, `Lanczos for the smallest kept σ, step ${steps}`);
      const w: Block = { len: dim, re: [V.re[j].slice()], im: V.im ? [V.im[j].slice()] : null };
      applyInverse(side, F, w);
      const wr = w.re[0];
      const wi = w.im ? w.im[0] : null;
      let a = 0;
      const vr = V.re[j];
      const vi = V.im ? V.im[j] : null;
      for (let i = 0; i < dim; i++) a += vr[i] * wr[i];
      if (vi) for (let i = 0; i < dim; i++) a += vi[i] * wi![i];
      alpha.push(a);
      // full reorthogonalisation (twice) against the locked vectors and the Lanczos basis
      const all: Block = { len: dim, re: [...locked.re, ...V.re], im: locked.im ? [...locked.im, ...V.im!] : null };
      // b = ‖w − (its projection on all)‖, the norm orthonormalDrop divides by
      const residual: number[] = [];
      const o = orthonormalDrop(w, all, residual);
      const b = o.re.length ? residual[0] : 0;
      const invariant = o.re.length === 0 || b <= 1e-14 * Math.abs(a);
      if ((j + 1) % 3 === 0 || invariant || j === maxSteps - 1) {
        // Ritz pairs of the tridiagonal; check the extreme ones by their measured σ
        const q = alpha.length;
        const T = new Float64Array(q * q);
        for (let i = 0; i < q; i++) {
          T[i * q + i] = alpha[i];
          if (i + 1 < q) {
            T[i * q + i + 1] = beta[i];
            T[(i + 1) * q + i] = beta[i];
          }
        }
        const e = hermitianEigen(T, null, q);
        const mu = Array.from(e.values);
        const S = { get: (i: number, c: number) => e.vre[i * q + c] };
        const order = mu.map((_, i) => i).sort((x, y) => mu[y] - mu[x]);
        // the top of T's spectrum is the bottom of K's above τ; its very bottom (μ < 0) holds
        // eigenvalues of K below τ, i.e. null vectors phase 1 missed, which cannot exist when
        // the inertia count found none below the shift
        const picks = [...new Set([...order.slice(0, 3), ...(noneBelowShift ? [] : order.slice(-2))])];
        let cand = null as Candidate | null;
        for (const c of picks) {
          // the Ritz vector Σ_i S_ic V_i, accumulated in locals (hot loop)
          const yr = new Float64Array(dim);
          const yi = complex ? new Float64Array(dim) : null;
          for (let i = 0; i < q; i++) {
            const sc = S.get(i, c);
            if (sc === 0) continue;
            axpy(yr, V.re[i], sc, dim);
            if (yi) axpy(yi, V.im![i], sc, dim);
          }
          const ny = norm2(yr, yi);
          for (let t = 0; t < dim; t++) yr[t] /= ny;
          if (yi) for (let t = 0; t < dim; t++) yi[t] /= ny;
          const y = { re: yr, im: yi };
          const sg = sigmaOf(y);
          if (sg <= tol) {
            // a null vector phase 1 missed: lock it and start again
            const add = orthonormalDrop({ len: dim, re: [y.re], im: y.im ? [y.im] : null }, locked);
            if (add.re.length) {
              locked.re.push(add.re[0]);
              if (locked.im) locked.im.push(add.im![0]);
              lockedSigma.push(sigmaOf({ re: add.re[0], im: add.im ? add.im[0] : null }));
              lockedNew = true;
            }
          } else if (!cand || sg < cand.sigma) cand = { vector: y, sigma: sg };
        }
        if (lockedNew) break;
        if (cand && (!best || cand.sigma <= best.sigma)) best = cand;
        if (best) {
          calm = Math.abs(best.sigma - prevBest) <= 1e-9 * best.sigma ? calm + 1 : 0;
          prevBest = best.sigma;
          if (calm >= 2 || invariant) return { vector: best.vector, sigma: best.sigma, steps, converged: true };
        }
      }
      if (invariant) break;
      beta.push(b);
      V.re.push(o.re[0]);
      if (V.im) V.im.push(o.im![0]);
    }
    if (!lockedNew) return best ? { vector: best.vector, sigma: best.sigma, steps, converged: false } : { vector: null, sigma: NaN, steps, converged: false };
  }
  return { vector: null, sigma: NaN, steps, converged: false };
}

/**
 * An orthonormal basis of the `k`-dimensional null space of A, the dimension fixed beforehand:
 * inverse iteration X ← (K + δI)⁻¹X on k random vectors with δ = (1e-6·σ_max)², so each solve
 * shrinks the other directions by δ/σ_{k+1}²; the block is orthonormalised and every vector's
 * residual ‖A v‖ measured, and solves repeat until each is ≤ max(1e-3·tol, 16ε·σ_max) (at most 8).
 */
function nullBasisIteration(side: Side, F: LdlFactor, k: number, tol: number, sigmaMax: number, ctx: Ctx, p0: number, p1: number): Block {
  const dim = side.dim;
  const X: Block = { len: dim, re: [], im: ctx.complex ? [] : null };
  addRandomColumns(X, k, ctx.rand);
  const target = Math.max(1e-3 * tol, 16 * EPS * sigmaMax);
  const yr = new Float64Array(side.A.rows);
  const yi = ctx.complex ? new Float64Array(side.A.rows) : null;
  for (let solve = 1; solve <= 8; solve++) {
    ctx.check();
    ctx.progress(p0 + ((p1 - p0) * Math.min(solve, 3)) / 4, `null basis of ${side.opName}: solve ${solve} (${k} vectors)`);
    applyInverse(side, F, X);
    if (solve === 1) {
      // scale only; the second solve makes the null components dominate to ~(δ/σ²)²
      for (let j = 0; j < k; j++) {
        const nr = norm2(X.re[j], X.im ? X.im[j] : null) || 1;
        const xr = X.re[j];
        for (let i = 0; i < dim; i++) xr[i] /= nr;
        if (X.im) for (let i = 0; i < dim; i++) X.im[j][i] /= nr;
      }
      continue;
    }
    if (!cholQr2(X)) orthonormalise(X, ctx.rand);
    let worst = 0;
    for (let j = 0; j < k; j++) {
      matvec(side.A, X.re[j], X.im ? X.im[j] : null, yr, yi);
      worst = Math.max(worst, norm2(yr, yi));
    }
    if (worst <= target) break;
  }
  return X;
}

// ---------------------------------------------------------------------------------------------
// The solver

function toBasis(X: Block, count: number, complex: boolean): NullBasis {
  const vectors = [];
  for (let j = 0; j < count; j++) vectors.push({ re: X.re[j], im: X.im ? X.im[j] : new Float64Array(X.len) });
  return { real: !complex, vectors };
}

function unitBasis(dim: number, count: number, complex: boolean): NullBasis {
  const vectors = [];
  for (let j = 0; j < count; j++) {
    const re = new Float64Array(dim);
    re[j] = 1;
    vectors.push({ re, im: new Float64Array(dim) });
  }
  return { real: !complex, vectors };
}

/** The band layout and cost the sparse solver would have for R (no factorisation is done). */
export function sparsePlan(R: SparseMatrix): SparsePlan {
  const RH = conjugateTranspose(R);
  const { flex, stress } = makeSides(R, RH);
  const complex = R.im !== null;
  const small = R.rows <= R.cols ? stress : flex;
  return {
    rows: R.rows,
    cols: R.cols,
    complex,
    bandwidth: { flexes: flex.bw, selfStresses: stress.bw },
    bandBytes: Math.max(bandBytes(flex.dim, flex.bw, complex), bandBytes(stress.dim, stress.bw, complex)),
    factorFlops: small.dim * (small.bw + 1) ** 2 * (complex ? 4 : 1),
  };
}

/**
 * Counts, gap and (lazily) bases of ker R and ker Rᴴ by banded factorisations (see the file
 * header). Needs no supercell; real or complex R.
 */
export function sparseSpaces(R: SparseMatrix, options: SparseSolveOptions): SolvedSpaces {
  const m = R.rows;
  const n = R.cols;
  const complex = R.im !== null;
  const relative = options.relative;
  if (!(relative >= 0 && relative < 1)) throw new RangeError(`relative tolerance must lie in [0, 1), got ${relative}`);
  const check = () => throwIfAborted(options.signal);
  const report = (fraction: number, stage: string) => options.onProgress?.({ fraction: Math.max(0, Math.min(1, fraction)), stage } satisfies Progress);
  const ctx: Ctx = {
    memoryLimit: options.memoryLimit,
    complex,
    check,
    progress: report,
    advice: options.sizeAdvice ?? (() => 'use fewer cells'),
    rand: seededUniform(options.seed ?? 1, -0.5, 0.5),
  };
  const c = options.inertiaShift ?? 1e-3;
  const cChol = options.choleskyShift ?? 1e-4;
  const cBasis = 1e-6;
  const guards = Math.max(4, options.guardVectors ?? 8);
  check();
  report(0, 'ordering');
  const RH = conjugateTranspose(R);
  const { flex, stress } = makeSides(R, RH);
  // 2. the inertia count runs on the smaller Gram matrix: check its band fits before anything else
  const countSide = m <= n ? stress : flex;
  const otherSide = countSide === stress ? flex : stress;
  if (m > 0 && n > 0) checkMemory(ctx, countSide, guards, 'the inertia count');
  report(0.02, 'σ_max (Lanczos)');
  const given = options.sigmaMax;
  if (given !== undefined && !(given >= 0 && Number.isFinite(given))) throw new RangeError(`sigmaMax must be a finite number ≥ 0, got ${given}`);
  const lz = given !== undefined || n === 0 || m === 0 ? { sigma: given ?? 0, steps: 0 } : sigmaMaxByLanczos(R, RH, check);
  const sigmaMax = lz.sigma;
  const tol = relative * sigmaMax;
  const minmn = Math.min(m, n);

  if (sigmaMax === 0) {
    // no bars, or every entry zero: every σ is 0
    report(1, 'done');
    const decision: RankDecision = {
      rank: 0,
      tolerance: { relative, absolute: 0 },
      sigmaMax: 0,
      gap: { kept: null, dropped: minmn > 0 ? 0 : Math.max(m, n) > 0 ? 0 : null, ratio: null, ambiguous: false },
    };
    return {
      solver: 'sparse',
      decision,
      status: { certified: true, criterion: 'singular-values', converged: true, fallback: null, reasons: [] },
      gapNote: 'the rigidity matrix has no nonzero entry: every singular value is 0',
      flexBasis: () => unitBasis(n, n, complex),
      selfStressBasis: () => unitBasis(m, m, complex),
    };
  }

  const tau = (c * sigmaMax) ** 2;
  const first = inertiaCount(countSide, tau, ctx, 0.06, 0.45);
  const kCount = first.below;
  // The inertia count runs on the smaller Gram matrix, and the subspace iteration on the same
  // side: the other side has (its dimension − this one's) more small eigenvalues.
  const side = countSide;
  const structural = side.dim - minmn;
  const evidenceOf = (run: InertiaRun): InertiaEvidence => ({ count: run.below, tau: run.shift, error: inertiaError(side, run, sigmaMax) });
  const evidence = evidenceOf(first);
  const q0 = kCount + guards;
  checkMemory(ctx, side, Math.min(side.dim, q0), 'the subspace iteration');
  const delta0 = (cChol * sigmaMax) ** 2;
  // With nothing below τ the inertia factor of K − τI is a Cholesky factor of a positive
  // definite matrix and serves as the operator; otherwise K + δI is factored (never the
  // indefinite K − τI, whose inverse amplifies the values near τ as much as the null vectors).
  const reuse = kCount === 0 && first.growth <= GROWTH_LIMIT;
  const F = q0 >= side.dim ? null : reuse ? first.F : choleskyShifted(side, delta0, tau, ctx, 0.45, 0.85).F;
  const it = certifiedIteration(side, F, q0, evidence, tol, sigmaMax, ctx, 0.85, 1, options.maxSweeps ?? 60);
  let certificate = it.certificate;
  const counts = [`${kCount} eigenvalues of ${countSide.gramName} below τ = (${c}·σ_max)²${first.retries ? ` (moved to (${(Math.sqrt(first.shift) / sigmaMax).toPrecision(4)}·σ_max)² after a zero pivot)` : ''}`];
  // Values near τ that the iteration could not resolve: count again at lower shifts, as long as
  // the count's rounding bound stays far below the shift, and match the same Ritz vectors.
  for (const f of [1 / 16, 1 / 256]) {
    if (certificate.certified) break;
    const tau2 = tau * f;
    if (!(tau2 > 1e3 * evidence.error && tau2 > 100 * tol * tol)) break;
    const run = inertiaCount(countSide, tau2, ctx, 0.9, 0.95);
    const ev = evidenceOf(run);
    counts.push(`${run.below} below τ/${Math.round(1 / f)}`);
    const again = certifyCount({ A: side.A, AH: side.AH, X: it.ritz.X, sigma: it.ritz.sigma, tol, inertia: ev.count, tau: ev.tau, inertiaError: ev.error, sigmaMax });
    if (again.certified) certificate = again;
  }
  if (!certificate.certified && options.denseFallback) {
    const fallback = options.denseFallback(R);
    if (fallback) {
      const reason = `the sparse count could not be certified (${certificate.reasons.join('; ')})`;
      return { ...fallback, status: { ...fallback.status, fallback: { from: 'sparse', to: 'dense', reason } } };
    }
  }

  // 4. the decision: the certified null count, else the Ritz σ at or below the cut (structural zeros first)
  const sigma = it.sigma;
  const q = sigma.length;
  let nullCount = Math.min(structural, q);
  if (certificate.certified) nullCount = certificate.provenNull;
  else while (nullCount < q && sigma[nullCount] <= tol) nullCount++;
  const rank = Math.max(0, Math.min(minmn, side.dim - nullCount));
  const nonStructuralDropped = nullCount - structural;
  const kept = nullCount < q ? sigma[nullCount] : null;
  const dropped = nonStructuralDropped > 0 ? sigma[nullCount - 1] : rank < Math.max(m, n) ? 0 : null;
  const ratio = kept !== null && dropped !== null && dropped > 0 ? kept / dropped : null;
  const decision: RankDecision = {
    rank,
    tolerance: { relative, absolute: tol },
    sigmaMax,
    gap: { kept: rank > 0 ? kept : null, dropped, ratio: rank > 0 ? ratio : null, ambiguous: rank > 0 && ratio !== null && ratio < AMBIGUOUS_RATIO },
  };
  const operator = reuse ? 'the inertia factor of K − τI (positive definite: nothing below τ) as shift-invert operator' : `a Cholesky factor of K + δI, δ = (${cChol}·σ_max)², as shift-invert operator`;
  const proof = certificate.certified
    ? `certified: ${certificate.provenNull} orthonormal vectors with ‖${side.opName} V‖_F ≤ tol` +
      (certificate.provenAbove ? ` and ${certificate.provenAbove} singular values proved in (${((certificate.lowestAbove ?? 0) / sigmaMax).toPrecision(3)}·σ_max, √(τ − e)) by their residuals` : '') +
      ` match the inertia count ${certificate.inertia}; every kept σ ≥ ${((certificate.lowestAbove ?? certificate.upper) / sigmaMax).toPrecision(3)}·σ_max`
    : `not certified: ${certificate.reasons.join('; ')}`;
  const notes = [
    proof,
    F
      ? `σ from ‖${side.opName} v‖ of Ritz vectors of K = ${side.gramName}: ${
          it.sweeps === 0 ? 'none at or below the cut (the inertia count puts no eigenvalue below τ)' : `${nullCount} at or below the cut by subspace iteration (${it.sweeps} sweeps on ${q0}+ vectors)`
        }, the smallest above it by Lanczos (${it.lanczosSteps ?? 0} steps, an upper bound), with ${operator}`
      : `σ from ‖${side.opName} v‖ of the eigenvectors of K = ${side.gramName} (a full Rayleigh–Ritz: the side has only ${side.dim} dimensions)`,
    `inertia counts: ${counts.join(', ')}; rounding bound e = ${(evidence.error / (sigmaMax * sigmaMax)).toExponential(1)}·σ_max² (growth ${first.growth.toPrecision(3)})`,
    given !== undefined ? 'σ_max given by the caller' : `σ_max by Lanczos (${lz.steps} steps)`,
  ];
  if (!it.converged) notes.push('the iteration stopped before the smallest kept σ settled: it is an upper bound');
  const status: SolveStatus = {
    certified: certificate.certified,
    criterion: 'inertia-and-residuals',
    converged: it.converged,
    fallback: null,
    reasons: certificate.certified ? [] : certificate.reasons,
  };
  report(1, 'done');

  const nullDim = (s: Side) => s.dim - rank;
  const cache = new Map<Side, NullBasis>();
  cache.set(side, toBasis(it.X, nullDim(side), complex));
  const basisOf = (s: Side): NullBasis => {
    const hit = cache.get(s);
    if (hit) return hit;
    const k = nullDim(s);
    let basis: NullBasis;
    if (k === 0) basis = { real: !complex, vectors: [] };
    else {
      checkMemory(ctx, s, k, `the ${s.kind === 'flexes' ? 'flex' : 'self-stress'} basis`);
      if (k >= s.dim) basis = unitBasis(s.dim, s.dim, complex);
      else {
        const Fb = choleskyShifted(s, (cBasis * sigmaMax) ** 2, tau, ctx, 0, 0.6);
        basis = toBasis(nullBasisIteration(s, Fb.F, k, tol, sigmaMax, ctx, 0.6, 1), k, complex);
      }
      report(1, 'done');
    }
    cache.set(s, basis);
    return basis;
  };
  return {
    solver: 'sparse',
    decision,
    status,
    gapNote: notes.join('; '),
    flexBasis: () => basisOf(flex),
    selfStressBasis: () => basisOf(stress),
  };
}

/** σ_max by Lanczos on RᴴR until the largest Ritz value stalls to 1e-13 relative. */
function sigmaMaxByLanczos(R: SparseMatrix, RH: SparseMatrix, check: () => void): { sigma: number; steps: number } {
  const lz = topLanczos(R, RH, check);
  const sigma = lz.run(1e-13);
  return { sigma, steps: lz.steps() };
}

/** "about N1'×N2' cells would fit", scaling both sides (band memory grows like N1·N2·min(N1, N2)). */
function adviceFor(sc: Supercell): (need: number, allowed: number) => string {
  return (need, allowed) => {
    const [N1, N2] = sc.cells;
    const f = Math.cbrt(allowed / need) * 0.97;
    const a = Math.max(1, Math.floor(N1 * f));
    const b = Math.max(1, Math.floor(N2 * f));
    return `use fewer cells: about ${a}x${b} would fit (or raise the memory limit)`;
  };
}

export const sparseSolver: SpaceSolver = (sc, R, options) =>
  sparseSpaces(R ?? rigidityMatrix(sc), { ...options, sizeAdvice: adviceFor(sc), denseFallback: denseFallback(options) });
