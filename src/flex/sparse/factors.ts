/**
 * Band factorisations of one side's Gram matrix: the inertia count of K − τI with its
 * backward-error bound, the positive-definite K + δI, memory checks, and solves with a factor.
 */
import { TooLargeError } from '../../errors.js';
import { bandBytes, bandLdl, ldlSolveBlock, perturbedShift, type LdlFactor } from '../../linalg/banded.js';
import type { Block } from '../../linalg/block.js';
import { formatBytes } from '../../linalg/dense.js';
import { EPS } from '../../linalg/rank.js';
import { gramBand, type Side } from './sides.js';

// ---------------------------------------------------------------------------------------------
// Factorisations with retries

export interface Ctx {
  memoryLimit: number;
  complex: boolean;
  check: () => void;
  progress: (fraction: number, stage: string) => void;
  advice: (need: number, allowed: number) => string;
  rand: () => number;
}

export function checkMemory(ctx: Ctx, side: Side, vectors: number, what: string): void {
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
export interface InertiaRun {
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
export function inertiaError(side: Side, run: InertiaRun, sigmaMax: number): number {
  const A = side.A;
  let nnz = 0;
  for (let r = 0; r < A.rows; r++) nnz = Math.max(nnz, A.rowPtr[r + 1] - A.rowPtr[r]);
  const s2 = sigmaMax * sigmaMax;
  return 2 * EPS * s2 * ((run.bw + 1) * (2 * run.bw + 1) * Math.max(1, run.growth) + 4 * nnz * nnz);
}

export function inertiaCount(side: Side, tau: number, ctx: Ctx, p0: number, p1: number): InertiaRun {
  for (let retry = 0; ; retry++) {
    const shift = retry === 0 ? tau : perturbedShift(tau, 0.05, retry);
    const K = gramBand(side);
    const F = bandLdl(K, { shift, overwrite: true, check: ctx.check, onProgress: (f) => ctx.progress(p0 + (p1 - p0) * f, `inertia count: LDLᴴ of ${side.gramName} − τI`) });
    if (!F.breakdown) return { below: F.negatives, shift, retries: retry, growth: F.growth, bw: K.bw, F };
    if (retry >= 8) throw new Error(`sparse solver: the inertia count of ${side.gramName} − τI broke down at every shift tried near τ = ${tau}`);
  }
}

/** Band LDLᴴ of K + δI with every pivot positive (δ raised ×100 until it is). */
export function choleskyShifted(side: Side, delta0: number, deltaMax: number, ctx: Ctx, p0: number, p1: number): { F: LdlFactor; delta: number } {
  let delta = delta0;
  for (;;) {
    const K = gramBand(side);
    const F = bandLdl(K, { shift: -delta, overwrite: true, check: ctx.check, onProgress: (f) => ctx.progress(p0 + (p1 - p0) * f, `factorising ${side.gramName} + δI`) });
    if (!F.breakdown && F.negatives === 0) return { F, delta };
    if (delta >= deltaMax) throw new Error(`sparse solver: ${side.gramName} + δI is not positive definite even at δ = ${delta}`);
    delta = Math.min(deltaMax, delta * 100);
  }
}

/** X ← (the factored matrix)⁻¹·X, column by column, through the band ordering. */
export function applyInverse(side: Side, F: LdlFactor, X: Block): void {
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

