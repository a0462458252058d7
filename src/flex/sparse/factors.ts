/**
 * Factorisations of one side's Gram matrix, banded or sparse (nested dissection, chosen per side
 * by predicted flops): the inertia count of K − τI with its backward-error bound, the
 * positive-definite K + δI, memory checks, and solves with a factor.
 */
import { TooLargeError } from '../../errors.js';
import { bandBytes, bandLdl, ldlSolveBlock, perturbedShift, type LdlFactor } from '../../linalg/banded.js';
import type { Block } from '../../linalg/block.js';
import { formatBytes } from '../../linalg/dense.js';
import type { Uniform } from '../../linalg/random.js';
import { EPS } from '../../linalg/rank.js';
import { analyseHermitian, factorBytes, sparseLdl, type HermitianCsr, type SparseLdlFactor, type SymbolicFactor } from '../../linalg/sparse-ldl/index.js';
import { bandwidthLowerBound, gramBand, gramCsr, type Side } from './sides.js';

// ---------------------------------------------------------------------------------------------
// Factorisations with retries

export interface Ctx {
  memoryLimit: number;
  complex: boolean;
  check: () => void;
  progress: (fraction: number, stage: string) => void;
  advice: (need: number, allowed: number) => string;
  rand: Uniform;
  /** Which factorisation of K: the band, the sparse nested-dissection one, or auto (the default). */
  factor?: FactorChoice;
}

// ---------------------------------------------------------------------------------------------
// Band or sparse: the choice per side

export type FactorChoice = 'auto' | 'band' | 'sparse';

/**
 * Sides with fewer unknowns than this keep the band under 'auto': below it the ordering and
 * analysis cost as much as they save (whole open-kagome counts on a 2-core machine: the band
 * faster at 32×32, 6017 unknowns; the sparse factor faster from 48×48, 13633).
 */
export const SPARSE_MIN_DIM = 8000;

/** Which factorisation a side uses, and the figures it was chosen by. */
export interface FactorPlan {
  kind: 'band' | 'sparse';
  reason: string;
  /** Nonzeros of L (diagonal included) and flops of one factorisation (Σ column count², ×4 complex), per method. */
  band: { nnzL: number; flops: number; bytes: number };
  /** 'ordered': the band's figures under its ordering; 'lower-bound': bounds from below (the band was not ordered). */
  bandFigures: 'ordered' | 'lower-bound';
  sparse: { nnzL: number; flops: number; bytes: number; supernodes: number; largestFront: number } | null;
  symbolic: SymbolicFactor | null;
  K: HermitianCsr | null;
}

const plans = new WeakMap<Side, FactorPlan>();

/** The factorisation of this side's K (analysed once per side and kept). */
export function factorPlan(side: Side, ctx: Pick<Ctx, 'complex' | 'memoryLimit' | 'factor'>): FactorPlan {
  const hit = plans.get(side);
  if (hit) return hit;
  const c = ctx.complex ? 4 : 1;
  const n = side.dim;
  const bandOf = (bw: number) => ({ nnzL: n * (bw + 1), flops: c * n * (bw + 1) * (bw + 1), bytes: bandBytes(n, bw, ctx.complex) });
  const mode = ctx.factor ?? 'auto';
  let plan: FactorPlan;
  if (mode === 'band' || (mode === 'auto' && n < SPARSE_MIN_DIM)) {
    const why = mode === 'band' ? 'the band factorisation was asked for' : `band: ${n} unknowns are too few for a fill-reducing analysis to pay`;
    plan = { kind: 'band', reason: why, band: bandOf(side.bw), bandFigures: 'ordered', sparse: null, symbolic: null, K: null };
  } else {
    const K = gramCsr(side);
    const symbolic = analyseHermitian(K, { positions: side.positions });
    const sparse = {
      nnzL: symbolic.nnzL,
      flops: c * symbolic.flops,
      bytes: factorBytes(symbolic, ctx.complex),
      supernodes: symbolic.superStart.length - 1,
      largestFront: symbolic.maxFront,
    };
    const order = side.positions ? 'nested dissection by coordinate bisection' : 'nested dissection by level structures';
    // the band's bandwidth from below first (one breadth-first search on K's pattern): when the
    // sparse factor needs under half of even that band's flops, the band orderings (two reverse
    // Cuthill–McKee runs, a tenth of a large count) are not computed, and the band's figures
    // are reported as the lower bounds they are
    const low = mode === 'auto' ? bandOf(bandwidthLowerBound(K, side.positions)) : null;
    const bounded = low !== null && sparse.flops < 0.5 * low.flops;
    const band = bounded ? low : bandOf(side.bw);
    const ratio = `${bounded ? 'at most ' : ''}${(sparse.flops / Math.max(1, band.flops)).toPrecision(2)} of the band's flops${bounded ? ' (its bandwidth bounded below by a breadth-first search; the band was not ordered)' : ''}`;
    let kind: FactorPlan['kind'];
    let reason: string;
    if (mode === 'sparse') [kind, reason] = ['sparse', `sparse LDLᴴ (${order}) as asked for; ${ratio}`];
    else if (sparse.flops < 0.5 * band.flops) [kind, reason] = ['sparse', `sparse LDLᴴ (${order}): ${ratio}`];
    else if (band.bytes > ctx.memoryLimit && sparse.bytes < band.bytes) [kind, reason] = ['sparse', `sparse LDLᴴ (${order}): the band would not fit in memory; ${ratio}`];
    else [kind, reason] = ['band', `band: the sparse LDLᴴ (${order}) would take ${ratio}, not under ½`];
    const bandFigures = bounded ? 'lower-bound' : 'ordered';
    plan = kind === 'sparse' ? { kind, reason, band, bandFigures, sparse, symbolic, K } : { kind, reason, band, bandFigures, sparse, symbolic: null, K: null };
  }
  plans.set(side, plan);
  return plan;
}

/** What `count --json` reports about a side's factorisation (status.factorisation). */
export type { FactorReport } from '../solver.js';
import type { FactorReport } from '../solver.js';

export function factorReport(side: Side, ctx: Pick<Ctx, 'complex' | 'memoryLimit' | 'factor'>): FactorReport {
  const p = factorPlan(side, ctx);
  const used = p.kind === 'sparse' ? p.sparse! : p.band;
  return { method: p.kind === 'sparse' ? 'sparse-ldl' : 'band', reason: p.reason, nnzL: used.nnzL, flops: used.flops, bandNnzL: p.band.nnzL, bandFlops: p.band.flops, bandFigures: p.bandFigures };
}

/**
 * A sparse LDLᴴ factor of one side's Gram matrix, with the figures the iterations read. An
 * inertia count keeps only the pivots; the first solve factors the same matrix again with L kept
 * (the same arithmetic, so the same pivots).
 */
export class SparseGramFactor {
  readonly d: Float64Array;
  readonly shift: number;
  readonly negatives: number;
  readonly growth: number;
  readonly breakdown: LdlFactor['breakdown'];
  private withL: SparseLdlFactor | null;
  constructor(
    readonly sparse: SparseLdlFactor,
    private readonly again: (() => SparseLdlFactor) | null = null,
  ) {
    this.d = sparse.d;
    this.shift = sparse.shift;
    this.negatives = sparse.negatives;
    this.growth = sparse.growth;
    this.breakdown = sparse.breakdown;
    this.withL = sparse.solvable ? sparse : null;
  }

  /** The factor with L, for solves. */
  forSolves(): SparseLdlFactor {
    if (this.withL) return this.withL;
    if (!this.again) throw new Error('sparse solver: a factor without L and no way to factor again');
    this.withL = this.again();
    return this.withL;
  }
}

/** Either factor of K − shift·I: the band one or the sparse one (solve with applyInverse). */
export type GramFactor = LdlFactor | SparseGramFactor;

/**
 * Factor K − shift·I by the side's plan. `pivotsOnly`: the sparse factor keeps only its pivots
 * and factors again on its first solve (for an inertia count, whose factor is seldom solved with).
 */
function factorGram(side: Side, shift: number, ctx: Ctx, onProgress: (f: number) => void, pivotsOnly = false): { F: GramFactor; dotLength: number; rowWidth: number } {
  const plan = factorPlan(side, ctx);
  if (plan.kind === 'sparse') {
    const sym = plan.symbolic!;
    const first = sparseLdl(plan.K!, sym, { shift, check: ctx.check, onProgress, keepL: !pivotsOnly });
    const F = new SparseGramFactor(first, () => sparseLdl(plan.K!, sym, { shift, check: ctx.check }));
    return { F, dotLength: sym.dotLength, rowWidth: sym.rowWidth };
  }
  const K = gramBand(side);
  const F = bandLdl(K, { shift, overwrite: true, check: ctx.check, onProgress });
  return { F, dotLength: K.bw + 1, rowWidth: 2 * K.bw + 1 };
}

export function checkMemory(ctx: Ctx, side: Side, vectors: number, what: string): void {
  const f = ctx.complex ? 2 : 1;
  const plan = factorPlan(side, ctx);
  const band = plan.kind === 'sparse' ? plan.sparse!.bytes : bandBytes(side.dim, side.bw, ctx.complex);
  // block of vectors, its rotated copy, A·V, and the solve's chunk buffers
  const vec = 8 * f * (vectors * (2 * side.dim + side.A.rows) + 32 * side.dim);
  const need = band + vec;
  if (need > ctx.memoryLimit) {
    const what2 = plan.kind === 'sparse' ? `sparse LDLᴴ factor of ${side.gramName} (nnz(L) ${plan.sparse!.nnzL}` : `band of ${side.gramName} (half-bandwidth ${side.bw}`;
    throw new TooLargeError(
      `The sparse solver would need about ${formatBytes(need)} for ${what}: the ${side.dim}×${side.dim} ${ctx.complex ? 'complex ' : ''}${what2}, ${formatBytes(band)}) ` +
        `and ${vectors} vectors, over the ${formatBytes(ctx.memoryLimit)} it may use. Fix: ${ctx.advice(need, ctx.memoryLimit)}.`,
      need,
      ctx.memoryLimit,
    );
  }
}

/** Inertia of K − τI: the number of eigenvalues of K below τ (τ moved slightly after a breakdown). */
export interface InertiaRun {
  below: number;
  shift: number;
  retries: number;
  growth: number;
  /** Longest inner product of the factorisation (bw + 1 for the band) and most nonzeros in a row of L + Lᴴ (2bw + 1). */
  dotLength: number;
  rowWidth: number;
  F: GramFactor;
}

/**
 * Backward-error bound e of an inertia count: the computed LDLᴴ is exact for K − τI + E with
 * ‖E‖₂ ≤ 2ε·(bw+1)·(2bw+1)·growth·σ_max² (the componentwise bound c·(bw+1)·ε·|L||D||Lᴴ| of
 * Gaussian elimination turned into a norm over a band of 2bw+1 diagonals; N. J. Higham, Accuracy
 * and Stability of Numerical Algorithms, 2nd ed., SIAM 2002, ch. 9–10, constant from memory;
 * for the sparse factor bw+1 is its longest inner product and 2bw+1 its widest row of L + Lᴴ),
 * plus the rounding of K = AᴴA itself (each entry a sum of at most nnz products, each ≤ σ_max²).
 * Eigenvalues of K move by at most e (Weyl), so the count is exact for every threshold farther
 * than e from τ.
 */
export function inertiaError(side: Side, run: InertiaRun, sigmaMax: number): number {
  const A = side.A;
  let nnz = 0;
  for (let r = 0; r < A.rows; r++) nnz = Math.max(nnz, A.rowPtr[r + 1] - A.rowPtr[r]);
  const s2 = sigmaMax * sigmaMax;
  return 2 * EPS * s2 * (run.dotLength * run.rowWidth * Math.max(1, run.growth) + 4 * nnz * nnz);
}

/**
 * The inertia count of K − τI. `pivotsOnly`: a sparse factor keeps only its pivots (run.F then
 * factors again on its first solve); pass false when the factor will likely be solved with.
 */
export function inertiaCount(side: Side, tau: number, ctx: Ctx, p0: number, p1: number, pivotsOnly = true): InertiaRun {
  for (let retry = 0; ; retry++) {
    const shift = retry === 0 ? tau : perturbedShift(tau, 0.05, retry);
    const { F, dotLength, rowWidth } = factorGram(side, shift, ctx, (f) => ctx.progress(p0 + (p1 - p0) * f, `inertia count: LDLᴴ of ${side.gramName} − τI`), pivotsOnly);
    if (!F.breakdown) return { below: F.negatives, shift, retries: retry, growth: F.growth, dotLength, rowWidth, F };
    if (retry >= 8) throw new Error(`sparse solver: the inertia count of ${side.gramName} − τI broke down at every shift tried near τ = ${tau}`);
  }
}

/** LDLᴴ of K + δI with every pivot positive (δ raised ×100 until it is). */
export function choleskyShifted(side: Side, delta0: number, deltaMax: number, ctx: Ctx, p0: number, p1: number): { F: GramFactor; delta: number } {
  let delta = delta0;
  for (;;) {
    const { F } = factorGram(side, -delta, ctx, (f) => ctx.progress(p0 + (p1 - p0) * f, `factorising ${side.gramName} + δI`));
    if (!F.breakdown && F.negatives === 0) return { F, delta };
    if (delta >= deltaMax) throw new Error(`sparse solver: ${side.gramName} + δI is not positive definite even at δ = ${delta}`);
    delta = Math.min(deltaMax, delta * 100);
  }
}

/** X ← (the factored matrix)⁻¹·X, column by column, through the factor's ordering. */
export function applyInverse(side: Side, F: GramFactor, X: Block): void {
  if (F instanceof SparseGramFactor) {
    // the sparse factor permutes by its own ordering
    F.forSolves().solveBlock(X.re, X.im);
    return;
  }
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

