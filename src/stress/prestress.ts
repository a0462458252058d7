/**
 * The prestress check, after R. Connelly & W. Whiteley, "Second-order rigidity and prestress
 * stability for tensegrity frameworks", SIAM J. Discrete Math. 9, 453–491 (1996): a framework is
 * prestress stable when some self-stress ω makes the stress energy
 *     E_ω(u) = Σ_bars ω_b |u_b − u_a|²
 * positive on every non-trivial flex u. Here u_b is the `to` end's velocity times the bar's phase
 * (±1 on a real supercell) and a grounded end has velocity 0, as the supercell builds its bars.
 * ω is a stress coefficient (force per unit length: bar force ω_b·|p_b|), tension positive.
 *
 * With V an orthonormal basis of the non-trivial flexes and ω_1..ω_k an orthonormal basis of the
 * self-stresses, M_i = Vᵀ Ω(ω_i) V; the question is whether M(c) = Σ c_i M_i is positive definite
 * for some c.
 *  - k = 0 (with a non-trivial flex): impossible.
 *  - k = 1: M(c) = c·M_1, so the eigenvalues of ±M_1 decide.
 *  - k ≥ 2: λ_min(M(c)) is concave in c, so its maximum over the unit ball is a convex problem;
 *    it is sought by projected gradient ascent on a smoothed minimum (log-sum-exp of the
 *    eigenvalues, sharpened in stages), from the start that maximises the trace and the ±e_i and
 *    a few seeded random ones. A failure is reported as "not found", never as "not stable",
 *    unless a certificate is at hand: a flex u with M_i u = 0 for every i (then uᵀM(c)u = 0 for
 *    every c).
 * Limits: k ≤ MAX_SELF_STRESSES and at most MAX_FLEXES non-trivial flexes (a dense eigen-
 * decomposition of an f×f matrix per step).
 */
import { InputError } from '../errors.js';
import { rigidMotions } from '../flex/rigid.js';
import type { FlexAnalysis } from '../flex/spaces.js';
import { hermitianEigen } from '../linalg/hermitian-eig.js';
import { seededUniform } from '../linalg/random.js';
import type { Supercell } from '../supercell/supercell.js';
import { Matrix, SingularValueDecomposition } from 'ml-matrix';
import { combine, dot, norm, orthonormalComplement, orthonormalise } from '../strain/subspace.js';

export const MAX_SELF_STRESSES = 32;
export const MAX_FLEXES = 120;
/** λ_min(M) must exceed this fraction of max_i ‖M_i‖₂ to count as positive. */
export const PRESTRESS_MARGIN = 1e-8;

export const PRESTRESS_METHOD =
  'k = 0: none possible; k = 1: eigenvalues of ±M(ω); k ≥ 2: projected gradient ascent of a smoothed λ_min(Σ c_i M_i) over the unit ball (concave), from the trace-maximising start, ±e_i and 4 seeded random starts';

export type PrestressVerdict = 'prestress-stable' | 'not-prestress-stable' | 'not-found' | 'no-flexes';

export interface PrestressResult {
  verdict: PrestressVerdict;
  /** What was found, in words. */
  explanation: string;
  method: string;
  limits: { maxSelfStresses: number; maxFlexes: number };
  /** k: self-stresses searched over. */
  selfStresses: number;
  /** f: non-trivial flexes (flexes minus the trivial ones). */
  nonTrivialFlexes: number;
  /** The stress used: coefficients in the self-stress basis (unit norm), or null. */
  coefficients: number[] | null;
  /** The same stress per bar (rows of the supercell, unit 2-norm, tension positive), or null. */
  stress: number[] | null;
  /** Smallest and largest eigenvalue of M at that stress (or at the best stress tried), or null. */
  smallestEigenvalue: number | null;
  largestEigenvalue: number | null;
  /** max_i ‖M_i‖₂: the scale λ is compared with (threshold PRESTRESS_MARGIN × scale). */
  scale: number;
  threshold: number;
  /** A proof that no self-stress works, when one was found. */
  certificate: null | { kind: 'no-self-stress' | 'common-null-flex' | 'single-stress-indefinite' | 'single-stress-singular'; detail: string };
}

/**
 * The stress form on the given flexes: M[i·f + j] = Σ_b ω_b (d_b(v_i) · d_b(v_j)), d_b(v) =
 * φ_b v_b − v_a (grounded ends 0). Row-major f×f. Real supercells only.
 */
export function stressForm(sc: Supercell, omega: ArrayLike<number>, flexes: readonly Float64Array[]): Float64Array {
  if (!sc.real) throw new InputError('The stress form cannot be formed:', [{ where: 'boundary', what: 'a twisted boundary (θ not 0 or ½) has complex flexes and self-stresses', fix: 'use a periodic, pinned or free boundary, or twists of 0 or ½' }]);
  if (omega.length !== sc.bars.length) throw new RangeError(`stressForm: ω has ${omega.length} entries, the supercell has ${sc.bars.length} bars`);
  const f = flexes.length;
  const M = new Float64Array(f * f);
  const dx = new Float64Array(f);
  const dy = new Float64Array(f);
  sc.bars.forEach((bar, r) => {
    const w = omega[r];
    if (w === 0) return;
    const phi = bar.phase[0];
    for (let i = 0; i < f; i++) {
      const v = flexes[i];
      let x = 0;
      let y = 0;
      if (bar.b >= 0) {
        x += phi * v[2 * bar.b];
        y += phi * v[2 * bar.b + 1];
      }
      if (bar.a >= 0) {
        x -= v[2 * bar.a];
        y -= v[2 * bar.a + 1];
      }
      dx[i] = x;
      dy[i] = y;
    }
    for (let i = 0; i < f; i++) {
      if (dx[i] === 0 && dy[i] === 0) continue;
      for (let j = i; j < f; j++) M[i * f + j] += w * (dx[i] * dx[j] + dy[i] * dy[j]);
    }
  });
  for (let i = 0; i < f; i++) for (let j = 0; j < i; j++) M[i * f + j] = M[j * f + i];
  return M;
}

/**
 * An orthonormal basis of the non-trivial flexes: the flex basis with the rigid motions the
 * boundary allows (those among the flexes) projected out.
 */
export function nonTrivialFlexBasis(sc: Supercell, analysis: FlexAnalysis): Float64Array[] {
  const basis = analysis.flexBasis();
  if (!basis.real) throw new RangeError('nonTrivialFlexBasis: the flex basis is complex (a twisted boundary)');
  const F = basis.vectors.map((v) => v.re);
  const f = F.length;
  if (analysis.trivialFlexes === 0) return F;
  // coefficients in F of the rigid motions; their span inside ker R has dimension trivialFlexes
  const C = rigidMotions(sc).map((m) => Float64Array.from(F, (v) => dot(v, m.field)));
  const M = new Matrix(Math.max(f, C.length), C.length);
  C.forEach((c, j) => c.forEach((x, i) => M.set(i, j, x)));
  const svd = new SingularValueDecomposition(M, { computeLeftSingularVectors: true, computeRightSingularVectors: false, autoTranspose: true });
  const U = svd.leftSingularVectors;
  const trivial = Array.from({ length: analysis.trivialFlexes }, (_, j) => Float64Array.from(U.getColumn(j).slice(0, f)));
  const rest = orthonormalComplement(orthonormalise(trivial), f, f - analysis.trivialFlexes);
  return rest.map((c) => combine(F, c, F[0].length));
}

interface Eig {
  values: Float64Array;
  /** Column j of the eigenvectors: vectors[i·f + j]. */
  vectors: Float64Array;
}

function eig(M: Float64Array, f: number): Eig {
  const e = hermitianEigen(M, null, f);
  return { values: e.values, vectors: e.vre };
}

function combination(Ms: readonly Float64Array[], c: ArrayLike<number>): Float64Array {
  return combine(Ms as Float64Array[], c, Ms[0].length);
}

/** xᵀ M y for row-major f×f M. */
function quad(M: Float64Array, f: number, x: ArrayLike<number>, y: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < f; i++) {
    let r = 0;
    for (let j = 0; j < f; j++) r += M[i * f + j] * y[j];
    s += x[i] * r;
  }
  return s;
}

function column(e: Eig, f: number, j: number): Float64Array {
  const v = new Float64Array(f);
  for (let i = 0; i < f; i++) v[i] = e.vectors[i * f + j];
  return v;
}

/** λ_min of M(c/‖c‖). */
function lambdaMin(Ms: readonly Float64Array[], f: number, c: ArrayLike<number>): number {
  const n = norm(c);
  if (n === 0) return 0;
  return eig(combination(Ms, c), f).values[0] / n;
}

/**
 * Projected gradient ascent of the smoothed minimum s_t(c) = −(1/t) log Σ_j exp(−t λ_j(M(c)))
 * over ‖c‖ ≤ 1 (concave: log Σ exp of eigenvalues is convex), with t = β/scale for β = 10, 100,
 * 1000, 10⁴ and a backtracking step. Returns the best unit c seen (by λ_min).
 */
function ascend(Ms: readonly Float64Array[], f: number, start: Float64Array, scale: number, goal: number): { c: Float64Array; lmin: number } {
  const k = Ms.length;
  let c = Float64Array.from(start);
  let best = { c: Float64Array.from(c), lmin: lambdaMin(Ms, f, c) };
  const smooth = (x: Float64Array, t: number): { value: number; grad: Float64Array } => {
    const e = eig(combination(Ms, x), f);
    const l0 = e.values[0];
    const w = Array.from(e.values, (l) => Math.exp(-t * (l - l0)));
    const sum = w.reduce((p, q) => p + q, 0);
    const grad = new Float64Array(k);
    for (let j = 0; j < f; j++) {
      const wj = w[j] / sum;
      if (wj < 1e-12) continue;
      const v = column(e, f, j);
      for (let i = 0; i < k; i++) grad[i] += wj * quad(Ms[i], f, v, v);
    }
    const n = norm(x);
    if (n > 0 && l0 / n > best.lmin) best = { c: x.map((y) => y / n), lmin: l0 / n };
    return { value: l0 - Math.log(sum) / t, grad };
  };
  let step = 1 / scale;
  for (const beta of [10, 100, 1000, 1e4]) {
    const t = beta / scale;
    let cur = smooth(c, t);
    for (let it = 0; it < 30; it++) {
      if (best.lmin > goal && beta >= 1000) return best;
      let accepted = false;
      for (let tries = 0; tries < 12; tries++) {
        const trial = c.map((x, i) => x + step * cur.grad[i]);
        const n = norm(trial);
        if (n > 1) for (let i = 0; i < k; i++) trial[i] /= n;
        const next = smooth(trial, t);
        if (next.value > cur.value) {
          c = trial;
          cur = next;
          step *= 2;
          accepted = true;
          break;
        }
        step /= 4;
      }
      if (!accepted) break;
    }
  }
  return best;
}

/**
 * Is the supercell prestress stable? `analysis` must come from the same supercell (its flex and
 * self-stress bases are computed if not yet). Twisted (complex) boundaries and sizes beyond
 * MAX_SELF_STRESSES / MAX_FLEXES are refused with an InputError.
 */
export function prestress(sc: Supercell, analysis: FlexAnalysis): PrestressResult {
  if (!sc.real) {
    throw new InputError('The prestress check cannot be made:', [{ where: 'boundary', what: 'a twist other than 0 or ½ makes flexes and self-stresses complex, and the stress energy needs real ones', fix: 'use a periodic, pinned or free boundary (or twists of 0 or ½), or leave out the prestress check' }]);
  }
  const k = analysis.selfStresses;
  const fAll = analysis.flexes - analysis.trivialFlexes;
  if (k > MAX_SELF_STRESSES || fAll > MAX_FLEXES) {
    throw new InputError('The prestress check cannot be made at this size:', [
      { where: 'cells', what: `it handles up to ${MAX_SELF_STRESSES} self-stresses and ${MAX_FLEXES} non-trivial flexes, this supercell has ${k} and ${fAll}`, fix: 'use fewer cells, or leave out the prestress check' },
    ]);
  }
  const base = { method: PRESTRESS_METHOD, limits: { maxSelfStresses: MAX_SELF_STRESSES, maxFlexes: MAX_FLEXES }, selfStresses: k };
  const empty = { coefficients: null, stress: null, smallestEigenvalue: null, largestEigenvalue: null, scale: 0, threshold: 0 };
  if (fAll === 0) {
    return { ...base, ...empty, verdict: 'no-flexes', nonTrivialFlexes: 0, certificate: null, explanation: 'no non-trivial flex: rigid to first order, nothing for a prestress to stabilise' };
  }
  const V = nonTrivialFlexBasis(sc, analysis);
  const f = V.length;
  if (k === 0) {
    return {
      ...base,
      ...empty,
      verdict: 'not-prestress-stable',
      nonTrivialFlexes: f,
      certificate: { kind: 'no-self-stress', detail: `there is no self-stress, and ${f} non-trivial flex${f === 1 ? '' : 'es'}` },
      explanation: 'not prestress stable: without a self-stress every non-trivial flex has zero stress energy',
    };
  }
  const W = analysis.selfStressBasis().vectors.map((v) => v.re);
  const Ms = W.map((w) => stressForm(sc, w, V));
  const eigs = Ms.map((M) => eig(M, f));
  const scale = Math.max(...eigs.map((e) => Math.max(Math.abs(e.values[0]), Math.abs(e.values[f - 1]))));
  const threshold = PRESTRESS_MARGIN * scale;
  const result = (c: Float64Array, verdict: PrestressVerdict, explanation: string, certificate: PrestressResult['certificate'] = null): PrestressResult => {
    const e = eig(combination(Ms, c), f);
    return {
      ...base,
      verdict,
      explanation,
      nonTrivialFlexes: f,
      coefficients: Array.from(c, (x) => x + 0),
      stress: Array.from(combine(W, c, sc.bars.length), (x) => x + 0),
      smallestEigenvalue: e.values[0],
      largestEigenvalue: e.values[f - 1],
      scale,
      threshold,
      certificate,
    };
  };

  if (scale === 0) {
    return { ...result(Float64Array.of(...W.map((_, i) => (i === 0 ? 1 : 0))), 'not-prestress-stable', 'not prestress stable: every self-stress has zero energy on every non-trivial flex', { kind: 'common-null-flex', detail: 'M(ω_i) = 0 for every basis self-stress' }) };
  }

  if (k === 1) {
    const { values } = eigs[0];
    if (values[0] > threshold) return result(Float64Array.of(1), 'prestress-stable', 'prestress stable: the self-stress makes the stress energy positive definite on the non-trivial flexes');
    if (values[f - 1] < -threshold) return result(Float64Array.of(-1), 'prestress-stable', 'prestress stable: the self-stress, reversed, makes the stress energy positive definite on the non-trivial flexes');
    const indefinite = values[0] < -threshold && values[f - 1] > threshold;
    return result(
      Float64Array.of(values[f - 1] >= -values[0] ? 1 : -1),
      'not-prestress-stable',
      'not prestress stable: the one self-stress gives a stress energy that is not definite on the non-trivial flexes, in either sign',
      indefinite
        ? { kind: 'single-stress-indefinite', detail: `M(ω) has eigenvalues of both signs (${values[0].toPrecision(4)} and ${values[f - 1].toPrecision(4)})` }
        : { kind: 'single-stress-singular', detail: `M(ω) has an eigenvalue within ${threshold.toPrecision(3)} of 0 (the threshold): a flex with zero stress energy` },
    );
  }

  // a flex killed by every M_i proves that no combination works
  const stacked = new Matrix(Math.max(k * f, f), f);
  Ms.forEach((M, i) => {
    for (let r = 0; r < f; r++) for (let j = 0; j < f; j++) stacked.set(i * f + r, j, M[r * f + j]);
  });
  const sv = new SingularValueDecomposition(stacked, { computeLeftSingularVectors: false, computeRightSingularVectors: true });
  const smallest = sv.diagonal[f - 1];
  if (smallest <= threshold) {
    const u = sv.rightSingularVectors.getColumn(f - 1);
    const energy = Math.max(...Ms.map((M) => Math.abs(quad(M, f, u, u))));
    const c = new Float64Array(k);
    c[0] = 1;
    return result(c, 'not-prestress-stable', 'not prestress stable: some non-trivial flex has zero stress energy under every self-stress', {
      kind: 'common-null-flex',
      detail: `a unit flex u with ‖(M_1 u; …; M_k u)‖ = ${smallest.toPrecision(3)} ≤ the threshold, so max_i |uᵀM_i u| = ${energy.toPrecision(3)}`,
    });
  }

  // the search
  const rand = seededUniform(20260101);
  const starts: Float64Array[] = [];
  const trace = Float64Array.from(eigs, (e) => e.values.reduce((p, q) => p + q, 0));
  if (norm(trace) > 0) starts.push(trace.map((x) => x / norm(trace)));
  for (let i = 0; i < k; i++)
    for (const s of [1, -1]) {
      const e = new Float64Array(k);
      e[i] = s;
      starts.push(e);
    }
  for (let r = 0; r < 4; r++) {
    const g = Float64Array.from({ length: k }, () => rand() * 2 - 1);
    starts.push(g.map((x) => x / norm(g)));
  }
  const ranked = starts.map((c) => ({ c, lmin: lambdaMin(Ms, f, c) })).sort((p, q) => q.lmin - p.lmin);
  let best = ranked[0];
  for (const start of ranked.slice(0, 3)) {
    const found = ascend(Ms, f, start.c, scale, threshold);
    if (found.lmin > best.lmin) best = found;
    if (best.lmin > threshold) break;
  }
  if (best.lmin > threshold) return result(best.c, 'prestress-stable', 'prestress stable: the stress found makes the stress energy positive definite on the non-trivial flexes');
  return result(best.c, 'not-found', 'no stabilising self-stress found by the search (this does not prove that none exists)');
}
