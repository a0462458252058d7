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
 *  1. σ_max: Lanczos on RRᴴ (no reorthogonalisation is needed for the extreme eigenvalue) until
 *     the largest Ritz value stalls to SIGMA_MAX_STALL = 1e-3 relative over 15 steps: an estimate
 *     from below (within ~5e-4 on the gallery lattices at 96×96, 40 steps; 1e-4 took 65–70) that
 *     scales the tolerance and the shifts. A cut 5e-4 lower than the dense path's can change a
 *     count only through a σ within 5e-4 of the cut, and any σ within 100× of it is flagged.
 *     The top of a supercell's spectrum is a dense band, so settling to 1e-13 took 300–600 steps
 *     and a third of a whole count; the tolerance needs σ_max to a few digits, not to 13. The
 *     rounding bounds of the certificate use a proved upper bound instead (sigmaMaxUpperBound).
 *  2. Side: A = R (flexes, K = RᴴR) or A = Rᴴ (self-stresses, K = RRᴴ), whichever is smaller.
 *     By flexes − self-stresses = cols − rows the smaller side also has the fewer null vectors.
 *     An inertia count there at τ = (c·σ_max)², c = 1e-3, gives k = #eigenvalues of K below τ
 *     (Sylvester's law of inertia on the band LDLᴴ of K − τI; Bai, Demmel, Dongarra, Ruhe &
 *     van der Vorst (eds.), Templates for the Solution of Algebraic Eigenvalue Problems, SIAM
 *     2000), exact for K − τI + E with ‖E‖ ≤ e, a bound from the measured growth of the factor
 *     (sparse/factors.ts inertiaError). A zero or tiny pivot moves τ by 5 % and counts again.
 *  3. Shift-invert subspace iteration on k + 8 vectors with the positive-definite operator
 *     (K + δI)⁻¹, δ = (1e-4·σ_max)² (or the inertia factor itself when nothing lies below τ, when
 *     it is positive definite too), with Rayleigh–Ritz through the small Gram matrix (AV)ᴴ(AV) and
 *     σ_i = ‖A v_i‖ measured directly. After each sweep the count certificate is tried
 *     (linalg/count-certificate.ts): L orthonormal vectors with ‖A V_L‖_F ≤ tol and r singular
 *     values proved inside (tol, √(τ − e)) by a Kahan residual bound must add up to k; the
 *     iteration stops once it holds on consecutive sweeps, and grows its block when it stalls.
 *  4. Evidence that does not add up is tried against inertia counts at τ/16 and τ/256 (values
 *     crowding τ), then handed to the dense fallback the caller gives (small matrices), else
 *     returned as it stands with status.certified = false and the reasons.
 *  5. The smallest σ above the cut (gap.kept, an upper bound; the certificate gives the lower
 *     bound √(τ − e) or the lowest proved value): the null vectors are locked and Lanczos on the
 *     operator, fully reorthogonalised, converges the extreme Ritz value far faster than block
 *     iteration when the bottom of the spectrum is clustered (edge modes).
 *  6. Bases are orthonormal (real for a real R). The decision side's basis is its locked vectors;
 *     the other side's is computed on first request, its dimension fixed by the rank: a band
 *     Cholesky of its K + δI, δ = (1e-6·σ_max)² (each solve shrinks the other directions by
 *     δ/σ²), two solves on k random vectors, Cholesky QR, and every residual ‖A v‖ checked
 *     against max(1e-3·tol, 16ε·σ_max), solving again while one is larger.
 * Complex (twisted) matrices use the Hermitian LDLᴴ throughout; nothing is embedded.
 */
import { bandBytes } from '../linalg/banded.js';
import type { Block } from '../linalg/block.js';
import { certifyCount } from '../linalg/count-certificate.js';
import type { NullBasis } from '../linalg/dense.js';
import { sigmaMaxUpperBound, topLanczos } from '../linalg/lanczos.js';
import { floatColumns } from '../linalg/parallel/helper.js';
import { seededUniform } from '../linalg/random.js';
import { AMBIGUOUS_RATIO, type RankDecision } from '../linalg/rank.js';
import { conjugateTranspose, type SparseMatrix } from '../linalg/sparse.js';
import { resolveBars } from '../framework/types.js';
import type { Supercell } from '../supercell/supercell.js';
import { rigidityMatrix } from '../supercell/rigidity.js';
import { denseFallback } from './solve-dense.js';
import { throwIfAborted, type Progress, type SolvedSpaces, type SolveOptions, type SolveStatus, type SpaceSolver } from './solver.js';
import { checkMemory, choleskyShifted, factorReport, inertiaCount, inertiaError, type Ctx, type FactorChoice, type FactorReport, type InertiaRun } from './sparse/factors.js';
import { certifiedIteration, nullBasisIteration, type InertiaEvidence } from './sparse/iteration.js';
import { makeSides, type Side, type SidePositions } from './sparse/sides.js';

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
  /** Band or sparse (nested-dissection) factorisations of K; default 'auto' (sparse/factors.ts factorPlan). */
  factor?: FactorChoice;
  /** Positions of R's columns and rows for the nested-dissection ordering; without them it uses the graph alone. */
  positions?: SidePositions;
}

/** The status of a sparse count, with how its count side was factored (count --json: status.factorisation). */
export type SparseStatus = SolveStatus & { factorisation: FactorReport };

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
// The solver

function toBasis(X: Block, count: number, complex: boolean): NullBasis {
  // the zero imaginary parts of a real basis as views of one fresh buffer, whose pages stay
  // unmapped until something reads them (the classifier knows the basis is real and does not)
  const zeros = X.im ? null : floatColumns(count, X.len, false);
  const vectors = [];
  for (let j = 0; j < count; j++) vectors.push({ re: X.re[j], im: X.im ? X.im[j] : zeros![j] });
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
    factor: options.factor,
  };
  const c = options.inertiaShift ?? 1e-3;
  const cChol = options.choleskyShift ?? 1e-4;
  const cBasis = 1e-6;
  const guards = Math.max(4, options.guardVectors ?? 8);
  check();
  report(0, 'ordering');
  const RH = conjugateTranspose(R);
  const { flex, stress } = makeSides(R, RH, options.positions);
  // 2. the inertia count runs on the smaller Gram matrix: check its band fits before anything else
  const countSide = m <= n ? stress : flex;
  if (m > 0 && n > 0) checkMemory(ctx, countSide, guards, 'the inertia count');
  report(0.02, 'σ_max (Lanczos)');
  const given = options.sigmaMax;
  if (given !== undefined && !(given >= 0 && Number.isFinite(given))) throw new RangeError(`sigmaMax must be a finite number ≥ 0, got ${given}`);
  const lz = given !== undefined || n === 0 || m === 0 ? { sigma: given ?? 0, steps: 0 } : sigmaMaxByLanczos(RH, check);
  const sigmaMax = lz.sigma;
  // a proved upper bound of σ_max for the rounding terms (an estimate from below does not bound them)
  const normBound = given !== undefined ? given : Math.max(sigmaMax, sigmaMaxUpperBound(R));
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
      status: { certified: true, criterion: 'singular-values', converged: true, fallback: null, reasons: [], keptSigma: 'measured' },
      gapNote: 'the rigidity matrix has no nonzero entry: every singular value is 0',
      flexBasis: () => unitBasis(n, n, complex),
      selfStressBasis: () => unitBasis(m, m, complex),
    };
  }

  const tau = (c * sigmaMax) ** 2;
  // its factor is solved with when nothing is below τ and the smallest kept σ is measured (or,
  // rarely, when the count is not certified: a pivots-only factor is then formed again with L)
  const first = inertiaCount(countSide, tau, ctx, 0.06, 0.45, options.gap === 'bound');
  const factor = factorReport(countSide, ctx);
  const kCount = first.below;
  // The inertia count runs on the smaller Gram matrix, and the subspace iteration on the same
  // side: the other side has (its dimension − this one's) more small eigenvalues.
  const side = countSide;
  const structural = side.dim - minmn;
  const evidenceOf = (run: InertiaRun): InertiaEvidence => ({ count: run.below, tau: run.shift, error: inertiaError(side, run, normBound) });
  const evidence = evidenceOf(first);
  const q0 = kCount + guards;
  checkMemory(ctx, side, Math.min(side.dim, q0), 'the subspace iteration');
  const delta0 = (cChol * sigmaMax) ** 2;
  // With nothing below τ the inertia factor of K − τI is a Cholesky factor of a positive
  // definite matrix and serves as the operator; otherwise K + δI is factored (never the
  // indefinite K − τI, whose inverse amplifies the values near τ as much as the null vectors).
  const reuse = kCount === 0 && first.growth <= GROWTH_LIMIT;
  const F = q0 >= side.dim ? null : reuse ? first.F : choleskyShifted(side, delta0, tau, ctx, 0.45, 0.85).F;
  const it = certifiedIteration(side, F, q0, evidence, tol, sigmaMax, ctx, 0.85, 1, options.maxSweeps ?? 60, options.gap !== 'bound', normBound);
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
    const again = certifyCount({ A: side.A, AH: side.AH, X: it.ritz.X, sigma: it.ritz.sigma, tol, inertia: ev.count, tau: ev.tau, inertiaError: ev.error, sigmaMax, normBound });
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
        }, ${it.keptIsBound ? 'the smallest above it not measured (its certified lower bound is reported)' : `the smallest above it by Lanczos (${it.lanczosSteps ?? 0} steps, an upper bound)`}, with ${operator}`
      : `σ from ‖${side.opName} v‖ of the eigenvectors of K = ${side.gramName} (a full Rayleigh–Ritz: the side has only ${side.dim} dimensions)`,
    `${side.gramName} factored by ${factor.reason}`,
    `inertia counts: ${counts.join(', ')}; rounding bound e = ${(evidence.error / (sigmaMax * sigmaMax)).toExponential(1)}·σ_max² (growth ${first.growth.toPrecision(3)})`,
    given !== undefined
      ? 'σ_max given by the caller'
      : `σ_max by Lanczos (${lz.steps} steps, settled to ${SIGMA_MAX_STALL} relative; an estimate from below), rounding bounds with the upper bound ${(normBound / sigmaMax).toPrecision(3)}·σ_max`,
  ];
  if (!it.converged) notes.push('the iteration stopped before the smallest kept σ settled: it is an upper bound');
  const status: SparseStatus = {
    factorisation: factor,
    certified: certificate.certified,
    criterion: 'inertia-and-residuals',
    converged: it.converged,
    fallback: null,
    reasons: certificate.certified ? [] : certificate.reasons,
    keptSigma: it.keptIsBound ? 'lower-bound' : 'measured',
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

/** How far the Lanczos estimate of σ_max settles (relative change over three checks 5 steps apart). */
export const SIGMA_MAX_STALL = 1e-3;

/** σ_max by Lanczos on RRᴴ until the largest Ritz value stalls to SIGMA_MAX_STALL relative. */
function sigmaMaxByLanczos(RH: SparseMatrix, check: () => void): { sigma: number; steps: number } {
  // On RRᴴ (one unknown per bar), not RᴴR: turning or moving the framework multiplies R by an
  // orthogonal matrix on the joints' side and leaves RRᴴ unchanged, so the estimate (which stops
  // short of convergence) comes out the same for every placement, to rounding.
  const lz = topLanczos(RH, check);
  const sigma = lz.run(SIGMA_MAX_STALL);
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

/** Joint positions for R's columns (formed on first read: a count orders one side), bar midpoints for its rows (a grounded bar's from its joint). */
function sidePositions(sc: Supercell): SidePositions {
  const p = sc.positions;
  let columns: Float64Array | null = null;
  const { count: m, a: A, b: B, source } = sc.rows;
  const half = new Float64Array(resolveBars(sc.framework).flatMap((bar) => [bar.vector[0] / 2, bar.vector[1] / 2]));
  return {
    get columns() {
      return (columns ??= jointColumns(p, sc.jointCount));
    },
    rows: barMidpoints(p, A, B, source, half, m),
  };
}

/** Each joint's position twice (its two columns of R). */
function jointColumns(p: Float64Array, joints: number): Float64Array {
  const columns = new Float64Array(4 * joints);
  for (let k = 0; k < joints; k++) {
    columns[4 * k] = columns[4 * k + 2] = p[2 * k];
    columns[4 * k + 1] = columns[4 * k + 3] = p[2 * k + 1];
  }
  return columns;
}

/** Each bar's midpoint (a grounded bar's from its joint), 2 per bar; `half` holds each unit-cell bar's vector / 2. */
function barMidpoints(p: Float64Array, A: Int32Array, B: Int32Array, source: Int32Array, half: Float64Array, m: number): Float64Array {
  const rows = new Float64Array(2 * m);
  for (let r = 0; r < m; r++) {
    const a = A[r];
    const s = 2 * source[r];
    if (a >= 0) {
      rows[2 * r] = p[2 * a] + half[s];
      rows[2 * r + 1] = p[2 * a + 1] + half[s + 1];
    } else {
      const b = B[r];
      rows[2 * r] = p[2 * b] - half[s];
      rows[2 * r + 1] = p[2 * b + 1] - half[s + 1];
    }
  }
  return rows;
}

export const sparseSolver: SpaceSolver = (sc, R, options) =>
  sparseSpaces(R ?? rigidityMatrix(sc), { ...options, positions: sidePositions(sc), sizeAdvice: adviceFor(sc), denseFallback: denseFallback(options) });
