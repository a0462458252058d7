/**
 * The unitary polar factor U of a square matrix M = U·H (H Hermitian positive semidefinite), for
 * SCDM's localised basis (scdm.ts): scaled Newton iteration, with a full SVD as the reference
 * and the fallback for numerically singular input.
 */
import { Matrix, SingularValueDecomposition } from 'ml-matrix';

/**
 * Polar factor U of a complex r×r matrix M = U·H (U unitary, H Hermitian positive semidefinite;
 * U = P Qᴴ for an SVD M = P Σ Qᴴ) given row-major (im null when real; then U is real).
 *
 * By the scaled Newton iteration (`polarFactorNewton`), with the SVD (`polarFactorSvd`) when it
 * declines: M numerically singular (the polar factor is then not unique), or no convergence.
 */
export function polarFactor(re: Float64Array, im: Float64Array | null, r: number): { re: Float64Array; im: Float64Array } {
  const newton = polarFactorNewton(re, im, r);
  if (newton) return { re: newton.re, im: newton.im };
  return polarFactorSvd(re, im, r);
}

/** `polarFactor` by a full SVD (ml-matrix) of M, or of its real embedding [[A, −B], [B, A]] when complex: U = P Qᴴ. */
export function polarFactorSvd(re: Float64Array, im: Float64Array | null, r: number): { re: Float64Array; im: Float64Array } {
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

/** Largest 1-norm condition estimate ‖M‖₁‖M⁻¹‖₁ at which `polarFactorNewton` still runs (M numerically singular above). */
const NEWTON_MAX_CONDITION = 1e13;
/** Newton steps allowed; with the (1,∞)-norm scaling ≤ 10 suffice for κ ≤ 1e16 (Higham 2008, §8.9, from memory). */
const NEWTON_MAX_STEPS = 25;
/** Relative change ‖X_{k+1} − X_k‖_F/‖X_{k+1}‖_F below which scaling is switched off (Higham 2008, Alg. 8.20, from memory). */
const NEWTON_UNSCALED_BELOW = 1e-2;
/**
 * Relative change at which the iteration stops, returning X_{k+1}: the change estimates the error
 * of X_k, and convergence is quadratic (error of X_{k+1} ≈ ½·error²), so X_{k+1} is then
 * accurate to rounding.
 */
const NEWTON_STOP = 1e-9;

/**
 * The polar factor of M (as `polarFactor`) by Newton's iteration with (1,∞)-norm scaling,
 *   X₀ = M,  X_{k+1} = (ζ_k X_k + ζ_k⁻¹ X_k⁻ᴴ)/2,
 *   ζ_k = (‖X_k⁻¹‖₁‖X_k⁻¹‖_∞ / (‖X_k‖₁‖X_k‖_∞))^{1/4}, ζ_k = 1 once the change is below 1e-2,
 * (N. J. Higham, "Computing the polar decomposition — with applications", SIAM J. Sci. Stat.
 * Comput. 7(4), 1160–1174, 1986; N. J. Higham, Functions of Matrices: Theory and Computation,
 * SIAM 2008, ch. 8; from memory). Every iterate is M times a rational function of MᴴM, so the
 * iteration converges (quadratically) to the unique polar factor of a nonsingular M; the
 * inverses are by Gauss–Jordan elimination with partial pivoting. The polar factors of the SCDM
 * matrices are well conditioned (κ ≈ 5–20 on the gallery), so 5–7 steps of about r³ complex
 * multiply-adds each replace an SVD of the (real-embedded) matrix.
 *
 * Null (the caller uses the SVD) when M is numerically singular (‖M‖₁‖M⁻¹‖₁ > 1e13 or a zero or
 * non-finite pivot) or the change has not fallen below 1e-9 within 25 steps.
 */
export function polarFactorNewton(re: Float64Array, im: Float64Array | null, r: number): { re: Float64Array; im: Float64Array; steps: number } | null {
  const nn = r * r;
  if (r === 0) return { re: new Float64Array(0), im: new Float64Array(0), steps: 0 };
  let Xre = Float64Array.from(re);
  let Xim = im ? Float64Array.from(im) : null;
  let Nre = new Float64Array(nn);
  let Nim = im ? new Float64Array(nn) : null;
  const Yre = new Float64Array(nn);
  const Yim = im ? new Float64Array(nn) : null;
  const perm = new Int32Array(r);
  let scaled = true;
  for (let step = 1; step <= NEWTON_MAX_STEPS; step++) {
    Yre.set(Xre);
    if (Yim && Xim) Yim.set(Xim);
    if (!invertInPlace(Yre, Yim, r, perm)) return null;
    let zeta = 1;
    if (scaled || step === 1) {
      const [x1, xInf] = oneInfNorms(Xre, Xim, r);
      const [y1, yInf] = oneInfNorms(Yre, Yim, r);
      if (step === 1 && !(x1 * y1 <= NEWTON_MAX_CONDITION)) return null;
      if (scaled) zeta = Math.sqrt(Math.sqrt((y1 * yInf) / (x1 * xInf)));
    }
    // X_{k+1}[a][b] = (ζ·X[a][b] + conj(Y[b][a])/ζ)/2; the change and the norm of X_{k+1}
    const hz = zeta / 2;
    const hy = 1 / (2 * zeta);
    let change = 0;
    let size = 0;
    for (let a = 0; a < r; a++)
      for (let b = 0; b < r; b++) {
        const i = a * r + b;
        const t = b * r + a;
        const vr = hz * Xre[i] + hy * Yre[t];
        Nre[i] = vr;
        change += (vr - Xre[i]) ** 2;
        size += vr * vr;
        if (Nim && Xim && Yim) {
          const vi = hz * Xim[i] - hy * Yim[t];
          Nim[i] = vi;
          change += (vi - Xim[i]) ** 2;
          size += vi * vi;
        }
      }
    [Xre, Nre] = [Nre, Xre];
    [Xim, Nim] = [Nim, Xim];
    const rel = Math.sqrt(change / size);
    if (!Number.isFinite(rel)) return null;
    if (rel <= NEWTON_STOP) return { re: Xre, im: Xim ?? new Float64Array(nn), steps: step };
    if (rel < NEWTON_UNSCALED_BELOW) scaled = false;
  }
  return null;
}

/** ‖A‖₁ (largest column sum of |a_ij|) and ‖A‖_∞ (largest row sum) of a complex r×r row-major A. */
function oneInfNorms(Are: Float64Array, Aim: Float64Array | null, r: number): [number, number] {
  const col = new Float64Array(r);
  let inf = 0;
  for (let a = 0; a < r; a++) {
    let row = 0;
    for (let b = 0; b < r; b++) {
      const v = Aim ? Math.hypot(Are[a * r + b], Aim[a * r + b]) : Math.abs(Are[a * r + b]);
      row += v;
      col[b] += v;
    }
    inf = Math.max(inf, row);
  }
  let one = 0;
  for (let b = 0; b < r; b++) one = Math.max(one, col[b]);
  return [one, inf];
}

/**
 * A⁻¹ in place for a complex r×r row-major A (im null when real), by Gauss–Jordan elimination
 * with partial (row) pivoting and the column interchanges undone at the end (common practice;
 * W. H. Press et al., Numerical Recipes, §2.1, from memory): about r³ (complex) multiply-adds,
 * each elimination a contiguous row update. False when a pivot is zero or not finite.
 */
function invertInPlace(Are: Float64Array, Aim: Float64Array | null, r: number, perm: Int32Array): boolean {
  for (let k = 0; k < r; k++) {
    // pivot: the largest |a_ik|, i ≥ k
    let p = k;
    let best = -1;
    for (let i = k; i < r; i++) {
      const v = Aim ? Are[i * r + k] ** 2 + Aim[i * r + k] ** 2 : Math.abs(Are[i * r + k]);
      if (v > best) {
        best = v;
        p = i;
      }
    }
    if (!(best > 0) || !Number.isFinite(best)) return false;
    perm[k] = p;
    const ok = k * r;
    if (p !== k) {
      const op = p * r;
      for (let c = 0; c < r; c++) {
        const t = Are[ok + c];
        Are[ok + c] = Are[op + c];
        Are[op + c] = t;
      }
      if (Aim)
        for (let c = 0; c < r; c++) {
          const t = Aim[ok + c];
          Aim[ok + c] = Aim[op + c];
          Aim[op + c] = t;
        }
    }
    if (!Aim) {
      // row k /= pivot (the pivot's own place becomes 1/pivot), then every other row −= a_ik·row k
      const inv = 1 / Are[ok + k];
      Are[ok + k] = 1;
      for (let c = 0; c < r; c++) Are[ok + c] *= inv;
      // two rows per pass over row k (each row's numbers as if alone)
      for (let i = 0; i < r; ) {
        if (i === k) {
          i++;
          continue;
        }
        const j = i + 1 === k ? i + 2 : i + 1;
        const oi = i * r;
        const f = Are[oi + k];
        Are[oi + k] = 0;
        if (j >= r) {
          for (let c = 0; c < r; c++) Are[oi + c] -= f * Are[ok + c];
          break;
        }
        const oj = j * r;
        const g = Are[oj + k];
        Are[oj + k] = 0;
        for (let c = 0; c < r; c++) {
          const x = Are[ok + c];
          Are[oi + c] -= f * x;
          Are[oj + c] -= g * x;
        }
        i = j + 1;
      }
      continue;
    }
    const pr = Are[ok + k];
    const pi = Aim[ok + k];
    const d = pr * pr + pi * pi;
    const ir = pr / d;
    const ii = -pi / d;
    Are[ok + k] = 1;
    Aim[ok + k] = 0;
    for (let c = 0; c < r; c++) {
      const xr = Are[ok + c];
      const xi = Aim[ok + c];
      Are[ok + c] = xr * ir - xi * ii;
      Aim[ok + c] = xr * ii + xi * ir;
    }
    for (let i = 0; i < r; i++) {
      if (i === k) continue;
      const oi = i * r;
      const fr = Are[oi + k];
      const fi = Aim[oi + k];
      if (fr === 0 && fi === 0) continue;
      Are[oi + k] = 0;
      Aim[oi + k] = 0;
      for (let c = 0; c < r; c++) {
        const xr = Are[ok + c];
        const xi = Aim[ok + c];
        Are[oi + c] -= fr * xr - fi * xi;
        Aim[oi + c] -= fr * xi + fi * xr;
      }
    }
  }
  // undo the row interchanges as column interchanges, last first
  for (let k = r - 1; k >= 0; k--) {
    const p = perm[k];
    if (p === k) continue;
    for (let i = 0; i < r; i++) {
      const o = i * r;
      let t = Are[o + k];
      Are[o + k] = Are[o + p];
      Are[o + p] = t;
      if (Aim) {
        t = Aim[o + k];
        Aim[o + k] = Aim[o + p];
        Aim[o + p] = t;
      }
    }
  }
  return true;
}
