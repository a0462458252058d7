/**
 * A proof that exactly `k − r` singular values of A lie at or below the cut `tol`, from three
 * pieces of evidence an iterative solver has in hand:
 *
 *  1. an inertia count (Sylvester's law on an LDLᴴ factorisation of K − τI, K = AᴴA, with a
 *     backward-error bound e): at most k eigenvalues of K lie below τ − e, i.e.
 *     #{σ < upper} + structural zeros ≤ k with upper = √(τ − e);
 *  2. L orthonormal vectors V_L with ‖A V_L‖_F ≤ tol: by Courant–Fischer K has at least L
 *     eigenvalues ≤ tol², i.e. #{σ ≤ tol} + structural zeros ≥ L;
 *  3. r approximate singular triplets with every value proved inside (tol, upper): with U an
 *     orthonormal basis of A V_r and W = [U; V_r]/√2, the compression M = Wᴴ H W of the
 *     Hermitian H = [[0, A], [Aᴴ, 0]] (whose positive eigenvalues are the singular values of A)
 *     has eigenvalues μ_i, and H has r eigenvalues, counted with multiplicity, within
 *     ρ = ‖H W − W M‖₂ of them (Kahan's theorem for Hermitian matrices: B. N. Parlett, The
 *     Symmetric Eigenvalue Problem, SIAM 1998, Theorem 11.5.1). When every [μ_i − ρ, μ_i + ρ]
 *     lies in (tol, upper), A has at least r singular values there.
 *
 * Together: L ≤ #{σ ≤ tol} + structural ≤ k − r, so L = k − r proves the count. ρ is bounded by
 * the Frobenius norm, widened by the measured loss of orthonormality of U and V times σ_max and
 * a rounding allowance for the products (16ε·σ_max).
 */
import { matvec, norm2, orthonormalDrop, orthonormalityDefect, type Block } from './block.js';
import { hermitianEigen } from './hermitian-eig.js';
import { EPS } from './rank.js';
import type { SparseMatrix } from './sparse.js';

export interface CountCertificate {
  certified: boolean;
  /** The inertia count k the evidence must add up to (structural zeros included). */
  inertia: number;
  /** L: orthonormal vectors with ‖A V_L‖_F ≤ tol (a lower bound on the null count, structural zeros included). */
  provenNull: number;
  /** r: singular values proved inside (tol, upper). */
  provenAbove: number;
  /** The residual bound ρ used for the r values (0 when r = 0). */
  residual: number;
  /** Lower end of the proved values (min μ − ρ), or null when r = 0. */
  lowestAbove: number | null;
  /** The upper end √(τ − e) of the range the inertia count covers. */
  upper: number;
  /** What is missing when not certified; empty when certified. */
  reasons: string[];
}

export interface CertificateInput {
  A: SparseMatrix;
  AH: SparseMatrix;
  /** Orthonormal Ritz vectors of K = AᴴA, ascending by `sigma`. */
  X: Block;
  /** σ_i = ‖A x_i‖, ascending. */
  sigma: ArrayLike<number>;
  tol: number;
  /** Inertia count k of K − τI. */
  inertia: number;
  tau: number;
  /** Backward-error bound e of that count (absolute, in K's units). */
  inertiaError: number;
  sigmaMax: number;
  /** An upper bound of σ_max for the rounding terms when `sigmaMax` is an estimate (default: sigmaMax). */
  normBound?: number;
}

export function certifyCount(input: CertificateInput): CountCertificate {
  const { A, AH, X, sigma, tol, inertia: k, tau, inertiaError, sigmaMax } = input;
  const upper = Math.sqrt(Math.max(0, tau - inertiaError));
  const base = { inertia: k, upper, residual: 0, lowestAbove: null as number | null };
  const reasons: string[] = [];
  if (!(upper > tol)) {
    reasons.push(`the inertia count's rounding bound ${(inertiaError / (sigmaMax * sigmaMax)).toPrecision(2)}·σ_max² leaves no room between the cut and the shift`);
    return { ...base, certified: false, provenNull: 0, provenAbove: 0, reasons };
  }
  // 2. L: the longest head of the Ritz vectors with ‖A V_L‖_F ≤ tol
  const norm = Math.max(sigmaMax, input.normBound ?? sigmaMax);
  const slack = 16 * EPS * norm;
  let L = 0;
  let sumSq = 0;
  while (L < sigma.length && Math.sqrt(sumSq + sigma[L] * sigma[L]) + slack <= tol) {
    sumSq += sigma[L] * sigma[L];
    L++;
  }
  if (L > k) {
    reasons.push(`${L} vectors with ‖A v‖ ≤ tol, but the inertia count allows only ${k} eigenvalues below τ: the inertia count is off`);
    return { ...base, certified: false, provenNull: L, provenAbove: 0, reasons };
  }
  // 3. the k − L values between: Ritz values are upper bounds, so candidates lie below `upper`
  const r = k - L;
  let candidates = 0;
  while (candidates < r && L + candidates < sigma.length && sigma[L + candidates] < upper) candidates++;
  if (candidates < r) {
    reasons.push(
      `the inertia count puts ${k} eigenvalues of K below τ, but only ${L} vectors are proved null and ${candidates} lie between the cut and √τ: ` +
        `${r - candidates} small singular value${r - candidates === 1 ? ' is' : 's are'} not resolved`,
    );
    return { ...base, certified: false, provenNull: L, provenAbove: 0, reasons };
  }
  // only now, with the counts able to match, the O(k²·n) orthonormality check of the vectors used
  const defectV = orthonormalityDefect(X, Math.min(X.re.length, k));
  if (defectV > 1e-8) {
    reasons.push(`the iteration's vectors lost orthonormality (defect ${defectV.toPrecision(2)})`);
    return { ...base, certified: false, provenNull: L, provenAbove: 0, reasons };
  }
  if (r === 0) return { ...base, certified: true, provenNull: L, provenAbove: 0, reasons };
  const V: Block = { len: X.len, re: X.re.slice(L, L + r), im: X.im ? X.im.slice(L, L + r) : null };
  const m = A.rows;
  const complex = X.im !== null || A.im !== null;
  const AV: Block = { len: m, re: [], im: complex ? [] : null };
  for (let j = 0; j < r; j++) {
    const yr = new Float64Array(m);
    const yi = complex ? new Float64Array(m) : null;
    matvec(A, V.re[j], V.im ? V.im[j] : null, yr, yi);
    AV.re.push(yr);
    if (yi) AV.im!.push(yi);
  }
  const U = orthonormalDrop(AV, { len: m, re: [], im: complex ? [] : null });
  if (U.re.length < r) {
    reasons.push('the range vectors of the values between the cut and √τ are dependent');
    return { ...base, certified: false, provenNull: L, provenAbove: 0, reasons };
  }
  // M = (B + Bᴴ)/2 with B = Uᴴ A V
  const mr = new Float64Array(r * r);
  const mi = complex ? new Float64Array(r * r) : null;
  for (let a = 0; a < r; a++) {
    for (let b = 0; b < r; b++) {
      let re = 0;
      let im = 0;
      const ur = U.re[a];
      const ui = U.im ? U.im[a] : null;
      const yr = AV.re[b];
      const yi = AV.im ? AV.im[b] : null;
      for (let i = 0; i < m; i++) {
        // conj(u)·y
        re += ur[i] * yr[i] + (ui && yi ? ui[i] * yi[i] : 0);
        if (mi) im += ur[i] * (yi ? yi[i] : 0) - (ui ? ui[i] * yr[i] : 0);
      }
      mr[a * r + b] = re;
      if (mi) mi[a * r + b] = im;
    }
  }
  const Mr = new Float64Array(r * r);
  const Mi = mi ? new Float64Array(r * r) : null;
  for (let a = 0; a < r; a++) {
    for (let b = 0; b < r; b++) {
      Mr[a * r + b] = 0.5 * (mr[a * r + b] + mr[b * r + a]);
      if (Mi) Mi[a * r + b] = 0.5 * (mi![a * r + b] - mi![b * r + a]);
    }
  }
  // ‖H W − W M‖_F² · 2 = ‖A V − U M‖_F² + ‖Aᴴ U − V M‖_F²
  let res2 = 0;
  const n = X.len;
  for (let c = 0; c < r; c++) {
    // A v_c − Σ_a u_a M_ac
    const er = AV.re[c].slice();
    const ei = AV.im ? AV.im[c].slice() : null;
    for (let a = 0; a < r; a++) {
      const wr = Mr[a * r + c];
      const wi = Mi ? Mi[a * r + c] : 0;
      const ur = U.re[a];
      const ui = U.im ? U.im[a] : null;
      for (let i = 0; i < m; i++) {
        er[i] -= wr * ur[i] - wi * (ui ? ui[i] : 0);
        if (ei) ei[i] -= wr * (ui ? ui[i] : 0) + wi * ur[i];
      }
    }
    res2 += norm2(er, ei) ** 2;
    // Aᴴ u_c − Σ_a v_a M_ac
    const fr = new Float64Array(n);
    const fi = complex ? new Float64Array(n) : null;
    matvec(AH, U.re[c], U.im ? U.im[c] : null, fr, fi);
    for (let a = 0; a < r; a++) {
      const wr = Mr[a * r + c];
      const wi = Mi ? Mi[a * r + c] : 0;
      const vr = V.re[a];
      const vi = V.im ? V.im[a] : null;
      for (let i = 0; i < n; i++) {
        fr[i] -= wr * vr[i] - wi * (vi ? vi[i] : 0);
        if (fi) fi[i] -= wr * (vi ? vi[i] : 0) + wi * vr[i];
      }
    }
    res2 += norm2(fr, fi) ** 2;
  }
  const defectU = orthonormalityDefect(U, r);
  const rho = Math.sqrt(res2 / 2) + (defectU + defectV) * norm + slack;
  const mu = hermitianEigen(Mr, Mi, r).values;
  const lo = mu[0] - rho;
  const hi = mu[r - 1] + rho;
  if (lo > tol && hi < upper) return { ...base, certified: true, provenNull: L, provenAbove: r, residual: rho, lowestAbove: lo, reasons };
  const rel = (v: number) => `${(v / sigmaMax).toPrecision(3)}·σ_max`;
  reasons.push(
    `${r} singular value${r === 1 ? '' : 's'} between the cut and √τ could not be proved there: estimates ${rel(mu[0])}…${rel(mu[r - 1])} ± ${rel(rho)}` +
      ` against the cut ${rel(tol)} and √(τ − e) = ${rel(upper)}`,
  );
  return { ...base, certified: false, provenNull: L, provenAbove: 0, residual: rho, lowestAbove: null, reasons };
}
