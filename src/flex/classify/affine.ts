/**
 * Step 3a, the affine flexes: fields u(cell c, joint s) = u_s + L̇·c built from a flex of the unit
 * cell with a flexible lattice (u_s per joint, L̇ the lattice velocity, a 2×2 matrix whose columns
 * move a1 and a2). Bar a→b with shift s, p = x_b + L·s − x_a, gives the row p·(u_b − u_a + L̇·s) = 0
 * (common practice for periodic frameworks with a flexible lattice). These fields hold the rigid
 * motions (u_s = t, L̇ = 0; u_s = Ω x_s, L̇ = Ω L) and every homogeneous mechanism of the
 * framework — a q = 0 internal motion (L̇ = 0) or a macroscopic strain mode (L̇ ≠ 0, e.g. the pure
 * dilation of the twisted kagome). Whichever of them are flexes of the supercell are bulk flexes
 * by nature: they sit in the rest only as far as the local and line spans do not already hold
 * them, and they are taken out of the rest before it is localised, so that no rigid motion or
 * strain mode is hidden inside boundary-anchored vectors.
 */
import { Matrix, SingularValueDecomposition } from 'ml-matrix';
import { cdot as dot, cnorm as norm } from '../../linalg/complex.js';
import { resolveBars } from '../../framework/types.js';
import type { Supercell } from '../../supercell/supercell.js';
import { scaleInPlace, subtractProjection, type Cx } from './cvec-ops.js';

/** An affine field lies in the flex space when its distance to it is at most this (unit field). */
export const AFFINE_IN_KERNEL = 1e-6;
/** A direction of the affine flexes belongs to the rest when its component there exceeds this. */
export const AFFINE_IN_REST = 1e-3;

/** Orthonormal basis of the affine fields of the supercell (the unit-cell flexible-lattice kernel). */
export function affineFields(sc: Supercell): Cx[] {
  const fw = sc.framework;
  const S = fw.joints.length;
  const bars = resolveBars(fw);
  const cols = 2 * S + 4;
  const A = new Matrix(Math.max(bars.length, 1), cols);
  const [[l11, l21], [l12, l22]] = fw.lattice; // a1 = (l11, l21), a2 = (l12, l22)
  bars.forEach((b, r) => {
    const xa = fw.joints[b.from].at;
    const xb = fw.joints[b.to].at;
    const px = xb[0] + b.shift[0] * l11 + b.shift[1] * l12 - xa[0];
    const py = xb[1] + b.shift[0] * l21 + b.shift[1] * l22 - xa[1];
    const len = Math.hypot(px, py) || 1;
    const ux = px / len;
    const uy = py / len;
    A.set(r, 2 * b.from, A.get(r, 2 * b.from) - ux);
    A.set(r, 2 * b.from + 1, A.get(r, 2 * b.from + 1) - uy);
    A.set(r, 2 * b.to, A.get(r, 2 * b.to) + ux);
    A.set(r, 2 * b.to + 1, A.get(r, 2 * b.to + 1) + uy);
    // L̇·s = s1·ȧ1 + s2·ȧ2, columns (ȧ1x, ȧ1y, ȧ2x, ȧ2y)
    A.set(r, 2 * S, ux * b.shift[0]);
    A.set(r, 2 * S + 1, uy * b.shift[0]);
    A.set(r, 2 * S + 2, ux * b.shift[1]);
    A.set(r, 2 * S + 3, uy * b.shift[1]);
  });
  // kernel of A: right singular vectors of the (padded square) matrix with σ ≤ 1e-9·σ_max
  const padded = A.rows < cols ? Matrix.zeros(cols, cols).setSubMatrix(A, 0, 0) : A;
  const svd = new SingularValueDecomposition(padded, { computeLeftSingularVectors: false, autoTranspose: true });
  const sigma = svd.diagonal;
  const smax = Math.max(...sigma, 0);
  const V = svd.rightSingularVectors;
  const [N1, N2] = sc.cells;
  const n = 2 * sc.jointCount;
  const fields: Cx[] = [];
  sigma.forEach((s, k) => {
    if (s > 1e-9 * smax) return;
    const v = { re: new Float64Array(n), im: new Float64Array(n) };
    for (let j = 0; j < N2; j++)
      for (let i = 0; i < N1; i++)
        for (let s0 = 0; s0 < S; s0++) {
          const q = 2 * ((j * N1 + i) * S + s0);
          v.re[q] = V.get(2 * s0, k) + i * V.get(2 * S, k) + j * V.get(2 * S + 2, k);
          v.re[q + 1] = V.get(2 * s0 + 1, k) + i * V.get(2 * S + 1, k) + j * V.get(2 * S + 3, k);
        }
    for (let pass = 0; pass < 2; pass++) for (const u of fields) subtractProjection(v, u, true);
    const nv = norm(v);
    if (nv > 1e-8 * Math.sqrt(n)) {
      scaleInPlace(v, 1 / nv);
      fields.push(v);
    }
  });
  return fields;
}

export interface AffineRest {
  /** Orthonormal vectors of the rest that are affine flexes (bulk by nature). */
  affine: Cx[];
  /** The rest with them taken out (orthonormal). */
  rest: Cx[];
  /** Dimension of the affine fields that are flexes, and the singular values beside the rest cut. */
  inKernel: number;
  kept: number | null;
  dropped: number | null;
}

/** Hermitian r×r eigen-decomposition, largest first (small dense; r ≤ 2·joints per cell + 4). */
function smallEigen(G: Matrix): { values: number[]; vectors: Matrix } {
  const svd = new SingularValueDecomposition(G, { autoTranspose: false });
  return { values: svd.diagonal, vectors: svd.leftSingularVectors };
}

/**
 * The affine flexes inside `rest` (orthonormal, ⊂ ker R), and `rest` without them. Fields are
 * real; the rest may be complex (twisted axes), where only L̇ = 0 fields with zero twist survive.
 */
export function splitAffine(sc: Supercell, flexBasis: Cx[], rest: Cx[]): AffineRest {
  const none: AffineRest = { affine: [], rest, inKernel: 0, kept: null, dropped: null };
  if (rest.length === 0) return none;
  const F = affineFields(sc);
  if (F.length === 0) return none;
  // 1. the fields that are flexes: P_K F = Φ Φᴴ F; the directions g of span F with ‖P_K g‖² ≥ 1 − tol²
  const t = F.length;
  const C = F.map((x) => flexBasis.map((p) => dot(p, x))); // C[a][b] = ⟨φ_b, F_a⟩
  const G = new Matrix(t, t);
  for (let a = 0; a < t; a++)
    for (let b = 0; b < t; b++) {
      let s = 0;
      for (let k = 0; k < flexBasis.length; k++) s += C[a][k][0] * C[b][k][0] + C[a][k][1] * C[b][k][1];
      G.set(a, b, s);
    }
  const eg = smallEigen(G);
  const inK: Cx[] = [];
  eg.values.forEach((lam, k) => {
    if (1 - lam > AFFINE_IN_KERNEL ** 2 * 2) return;
    const v = { re: new Float64Array(F[0].re.length), im: new Float64Array(F[0].re.length) };
    for (let a = 0; a < t; a++) {
      const y = eg.vectors.get(a, k);
      for (let i = 0; i < v.re.length; i++) v.re[i] += y * F[a].re[i];
    }
    inK.push(v);
  });
  if (inK.length === 0) return none;
  // 2. their components in the rest: singular values of Restᴴ·A (r × a)
  const r = rest.length;
  const M = new Matrix(r, inK.length);
  const Mi = new Matrix(r, inK.length);
  for (let i = 0; i < r; i++)
    for (let a = 0; a < inK.length; a++) {
      const [re, im] = dot(rest[i], inK[a]);
      M.set(i, a, re);
      Mi.set(i, a, im);
    }
  // the Gram matrix MᴴM is real when the rest is real; a complex rest gives a Hermitian one
  const H = new Matrix(inK.length, inK.length);
  for (let a = 0; a < inK.length; a++)
    for (let b = 0; b < inK.length; b++) {
      let s = 0;
      for (let i = 0; i < r; i++) s += M.get(i, a) * M.get(i, b) + Mi.get(i, a) * Mi.get(i, b);
      H.set(a, b, s);
    }
  const eh = smallEigen(H);
  const affine: Cx[] = [];
  let kept: number | null = null;
  let dropped: number | null = null;
  eh.values.forEach((lam, k) => {
    const s = Math.sqrt(Math.max(0, lam));
    if (s <= AFFINE_IN_REST) {
      dropped = dropped === null ? s : Math.max(dropped, s);
      return;
    }
    kept = kept === null ? s : Math.min(kept, s);
    // the rest's component: Σ_i rest_i ⟨rest_i, A y⟩
    const n = rest[0].re.length;
    const v = { re: new Float64Array(n), im: new Float64Array(n) };
    for (let i = 0; i < r; i++) {
      let cr = 0;
      let ci = 0;
      for (let a = 0; a < inK.length; a++) {
        const y = eh.vectors.get(a, k);
        cr += M.get(i, a) * y;
        ci += Mi.get(i, a) * y;
      }
      const x = rest[i];
      for (let q = 0; q < n; q++) {
        v.re[q] += cr * x.re[q] - ci * x.im[q];
        v.im[q] += cr * x.im[q] + ci * x.re[q];
      }
    }
    for (let pass = 0; pass < 2; pass++) for (const u of affine) subtractProjection(v, u);
    scaleInPlace(v, 1 / norm(v));
    affine.push(v);
  });
  if (affine.length === 0) return { ...none, inKernel: inK.length, dropped };
  // 3. rest ⊖ affine: re-orthonormalise the rest against the affine vectors, dropping the lost directions
  const left: Cx[] = [];
  const candidates = rest.map((x) => ({ re: Float64Array.from(x.re), im: Float64Array.from(x.im) }));
  const scored = candidates.map((v) => {
    for (let pass = 0; pass < 2; pass++) for (const u of affine) subtractProjection(v, u);
    return { v, size: norm(v) };
  });
  scored.sort((a, b) => b.size - a.size);
  for (const { v } of scored) {
    if (left.length === r - affine.length) break;
    for (let pass = 0; pass < 2; pass++) {
      for (const u of affine) subtractProjection(v, u);
      for (const u of left) subtractProjection(v, u);
    }
    const nv = norm(v);
    if (nv < 1e-6) continue;
    scaleInPlace(v, 1 / nv);
    left.push(v);
  }
  return { affine, rest: left, inKernel: inK.length, kept, dropped };
}
