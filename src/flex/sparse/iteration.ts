/**
 * The iterations of the sparse solver on one side: Rayleigh–Ritz, the certifying subspace
 * iteration, Lanczos for the smallest kept σ, and the null-basis iteration.
 */
import {
  addRandomColumns,
  axpy,
  identityBlock,
  matvec,
  norm2,
  orthonormalDrop,
  orthonormalise,
  residualNorms,
  shareableMatrix,
  unitColumns,
  type Block,
} from '../../linalg/block.js';
import { cholQr2 } from '../../linalg/cholesky-qr.js';
import { CHUNKS, inChunks, sharedFloats, SPLIT_ENTRIES } from '../../linalg/parallel/helper.js';
import type { SparseMatrix } from '../../linalg/sparse.js';
import { certifyCount, type CountCertificate } from '../../linalg/count-certificate.js';
import { hermitianEigen } from '../../linalg/hermitian-eig.js';
import { EPS } from '../../linalg/rank.js';
import { applyInverse, type Ctx, type GramFactor } from './factors.js';
import type { Side } from './sides.js';

// ---------------------------------------------------------------------------------------------
// Subspace iteration

export interface SubspaceResult {
  X: Block;
  sigma: Float64Array;
  sweeps: number;
  converged: boolean;
  lanczosSteps?: number;
  certificate: CountCertificate;
  /** The phase-1 Ritz block and its σ (ascending), for certificates at other shifts. */
  ritz: { X: Block; sigma: Float64Array };
  /** The σ after the null ones is the certificate's lower bound, not a measured value. */
  keptIsBound?: boolean;
}

/**
 * Rayleigh–Ritz for K = AᴴA on the orthonormal block X: the `take` Ritz vectors with the smallest
 * Ritz values, sorted by σ = ‖A v‖ (measured directly, absolute accuracy ~ε·σ_max).
 */
export function rayleighRitz(side: Side, X: Block, take = X.re.length): { X: Block; sigma: Float64Array } {
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
export function settled(sigma: Float64Array, prev: Float64Array | null, prevDelta: Float64Array | null, count: number, rel: number, floor: number): { ok: boolean; delta: Float64Array } {
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
export interface InertiaEvidence {
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
export function certifiedIteration(
  side: Side,
  F: GramFactor | null,
  q0: number,
  inertia: InertiaEvidence,
  tol: number,
  sigmaMax: number,
  ctx: Ctx,
  p0: number,
  p1: number,
  sweepLimit: number,
  /** Measure the smallest kept σ by Lanczos; when false and the count is certified, its certified lower bound stands in. */
  measureKept = true,
  /** An upper bound of σ_max for the certificate's rounding terms (`sigmaMax` may be an estimate from below). */
  normBound = sigmaMax,
): SubspaceResult {
  const dim = side.dim;
  const complex = ctx.complex;
  const minGuards = 4;
  const certify = (X: Block, sigma: Float64Array) =>
    certifyCount({ A: side.A, AH: side.AH, X, sigma, tol, inertia: inertia.count, tau: inertia.tau, inertiaError: inertia.error, sigmaMax, normBound });
  let q = Math.min(dim, q0);
  if (q >= dim || !F) {
    // A second Rayleigh–Ritz on the first one's Ritz vectors: the Gram matrix of the identity
    // mixes directions whose σ² differ by less than ε·σ_max² (a σ of 1e-12 picks up 2e-6 of a
    // direction with σ 1e-5); in the rotated basis the small Gram entries are accurate to their
    // own size, so the second pass resolves them.
    const r = rayleighRitz(side, rayleighRitz(side, identityBlock(dim, complex)).X);
    return { X: r.X, sigma: r.sigma, sweeps: 0, converged: true, certificate: certify(r.X, r.sigma), ritz: r };
  }
  // Nothing to find in phase 1 when the inertia count puts no eigenvalue below the shift: the
  // count (0 null vectors) is then certified as it stands and Lanczos alone finds the smallest σ.
  const nothingBelow = inertia.count === 0;
  let X: Block = { len: dim, re: [], im: complex ? [] : null };
  // (with nothing below and the kept σ a bound, the block is read only by the Lanczos run of an
  // uncertified count, which then starts from a random vector of its own: it is left empty)
  addRandomColumns(X, nothingBelow && !measureKept ? 0 : q, ctx.rand);
  const floor = Math.max(1e-3 * tol, 16 * EPS * sigmaMax);
  let prev: Float64Array | null = null;
  let prevDelta: Float64Array | null = null;
  let sigma: Float64Array = new Float64Array(0);
  let sweeps = 0;
  let converged = false;
  let certificate: CountCertificate | null = null;
  let certifiedRuns = 0;
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
  if (!measureKept && certificate.certified) {
    const bound = certificate.lowestAbove ?? certificate.upper;
    return { X: locked, sigma: Float64Array.from([...lockedSigma, bound]), sweeps, converged, lanczosSteps: 0, certificate, ritz: { X: phase1, sigma: phase1Sigma }, keptIsBound: true };
  }
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
export function lanczosSmallestKept(
  side: Side,
  F: GramFactor,
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
export function nullBasisIteration(side: Side, F: GramFactor, k: number, tol: number, sigmaMax: number, ctx: Ctx, p0: number, p1: number): Block {
  const dim = side.dim;
  const X: Block = { len: dim, re: [], im: ctx.complex ? [] : null };
  addRandomColumns(X, k, ctx.rand);
  const target = Math.max(1e-3 * tol, 16 * EPS * sigmaMax);
  // column by column work of k columns in chunks, on the helper thread's side too when there is one
  const chunks = k * dim < SPLIT_ENTRIES ? 1 : CHUNKS;
  let A: SparseMatrix | null = null;
  const norms = sharedFloats(k, 0);
  for (let solve = 1; solve <= 8; solve++) {
    ctx.check();
    ctx.progress(p0 + ((p1 - p0) * Math.min(solve, 3)) / 4, `null basis of ${side.opName}: solve ${solve} (${k} vectors)`);
    applyInverse(side, F, X);
    if (solve === 1) {
      // scale only; the second solve makes the null components dominate to ~(δ/σ²)²
      inChunks('unitColumns', unitColumns, [X.re, X.im], chunks);
      continue;
    }
    if (!cholQr2(X)) orthonormalise(X, ctx.rand);
    A ??= shareableMatrix(side.A);
    inChunks('residualNorms', residualNorms, [A, X.re, X.im, norms], chunks);
    let worst = 0;
    for (let j = 0; j < k; j++) worst = Math.max(worst, norms[j]);
    if (worst <= target) break;
  }
  return X;
}
