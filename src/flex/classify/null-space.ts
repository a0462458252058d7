/**
 * Null spaces for the restricted solve: the projection of a vector onto ker A (CGLS) and the
 * null space of a Hermitian positive semi-definite matrix (pivoted Cholesky).
 */
import { cnorm as norm } from '../../linalg/complex.js';
import type { SparseMatrix } from '../../linalg/sparse.js';
import { applyA, applyAH, scaleInPlace, subtractProjection } from './cvec-ops.js';

/**
 * x − δ with δ the least-squares solution of A δ = A x (CGLS from δ = 0): the projection of
 * x onto ker A, to the accuracy the iteration reaches (it stops once ‖A(x − δ)‖ is a hundredth
 * of `target`, stalls, or after 400 steps). Components along tiny but nonzero singular values
 * converge slowly and stay, so the rank rule applied afterwards still rejects them.
 */
export function projectOntoNullSpace(A: SparseMatrix, x0: { re: Float64Array; im: Float64Array }, target: number): { re: Float64Array; im: Float64Array } {
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
