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
import { realDots } from '../../linalg/block.js';
import { cdot as dot, cnorm as norm } from '../../linalg/complex.js';
import { resolveBars } from '../../framework/types.js';
import type { Supercell } from '../../supercell/supercell.js';
import { addScaled, allReal, allZero, scaleInPlace, subtractProjection, type Cx, type SpanPart } from './cvec-ops.js';

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
  /** The input rest; with the affine vectors taken out it is rest·part.E (orthonormal; part null: all of `rest`). */
  rest: Cx[];
  part: SpanPart | null;
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
  const none: AffineRest = { affine: [], rest, part: null, inKernel: 0, kept: null, dropped: null };
  if (rest.length === 0) return none;
  const F = affineFields(sc);
  if (F.length === 0) return none;
  // 1. the fields that are flexes: P_K F = Φ Φᴴ F; the directions g of span F with ‖P_K g‖² ≥ 1 − tol²
  const t = F.length;
  // C[a][b] = ⟨φ_b, F_a⟩; the fields are real, so a real φ_b needs only the real products (the
  // same real part; the imaginary part is then zero)
  const allPhiReal = allReal(flexBasis);
  const realPhi = flexBasis.map((p) => allPhiReal || allZero(p.im));
  const C: [number, number][][] = F.map(() => []);
  const fieldsRe = F.map((x) => x.re);
  const dotsOfPhi = new Float64Array(F.length);
  flexBasis.forEach((p, b) => {
    if (realPhi[b]) realDots(p.re, fieldsRe, 0, dotsOfPhi, 0);
    F.forEach((x, a) => (C[a][b] = realPhi[b] ? [dotsOfPhi[a], 0] : dot(p, x)));
  });
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
  // a real rest (imaginary parts all zero) gives zero imaginary coefficients against the real
  // fields, so the real path forms the same numbers
  const realRest = allReal(rest);
  const M = new Matrix(r, inK.length);
  const Mi = new Matrix(r, inK.length);
  const inKRe = inK.map((x) => x.re);
  const dotsOfRest = new Float64Array(inK.length);
  for (let i = 0; i < r; i++) {
    if (realRest) realDots(rest[i].re, inKRe, 0, dotsOfRest, 0);
    for (let a = 0; a < inK.length; a++) {
      const [re, im] = realRest ? [dotsOfRest[a], 0] : dot(rest[i], inK[a]);
      M.set(i, a, re);
      Mi.set(i, a, im);
    }
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
  // an orthonormal basis of the affine flexes' components in the rest
  const span: Cx[] = [];
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
      addScaled(v, rest[i], cr, ci, realRest);
    }
    for (let pass = 0; pass < 2; pass++) for (const u of span) subtractProjection(v, u);
    scaleInPlace(v, 1 / norm(v));
    span.push(v);
  });
  if (span.length === 0) return { ...none, inKernel: inK.length, dropped };
  // the eigenvectors of H are arbitrary wherever its eigenvalues coincide (all near 1 when every
  // affine flex lies in the rest): the vectors of the span are chosen by fixed references instead
  const affine = canonicalAffineBasis(sc, span, F);
  // 3. rest ⊖ affine, as coefficients of the rest
  const part = complementCoefficients(rest, affine);
  // the affine vectors are combinations of the rest vectors, orthonormalised: Y has orthonormal columns
  if (!part) throw new Error('classify: an affine flex vector lies outside the rest it was built from (internal error)');
  return { affine, rest, part, inKernel: inK.length, kept, dropped };
}

/** A reference direction joins the affine basis when this much of it (unit length) is left. */
const REFERENCE_LEFT = 1e-6;

/**
 * An orthonormal basis of span(affine) that does not depend on the basis it is given in (so not
 * on the flex basis a solver returns, nor on its rounding): Gram–Schmidt, in a fixed order, of the
 * projections onto the span of reference fields — the translations along x and y, the rotation
 * about the supercell's centroid (the rigid motions, when they are affine flexes), then the
 * affine fields F of the unit cell in their own order. A reference is taken when more than
 * REFERENCE_LEFT of it is left after the directions already taken; each vector v has ⟨v, r⟩ real
 * and positive for its reference r. The span holds at most 2·(joints per cell) + 4 vectors, so the
 * cost is a few passes over them per reference.
 */
export function canonicalAffineBasis(sc: Supercell, affine: Cx[], F: Cx[]): Cx[] {
  const a = affine.length;
  const n = affine[0].re.length;
  const jc = n / 2;
  const p = sc.positions;
  let cx = 0;
  let cy = 0;
  for (let j = 0; j < jc; j++) {
    cx += p[2 * j];
    cy += p[2 * j + 1];
  }
  cx /= jc;
  cy /= jc;
  const field = (f: (j: number) => [number, number]): Cx => {
    const v = { re: new Float64Array(n), im: new Float64Array(n) };
    for (let j = 0; j < jc; j++) [v.re[2 * j], v.re[2 * j + 1]] = f(j);
    scaleInPlace(v, 1 / (norm(v) || 1));
    return v;
  };
  const refs: Cx[] = [field(() => [1, 0]), field(() => [0, 1]), field((j) => [-(p[2 * j + 1] - cy), p[2 * j] - cx]), ...F];
  // coefficients c = affineᴴ r of each reference, orthonormalised in order (complex a-vectors)
  const taken: { re: Float64Array; im: Float64Array }[] = [];
  for (const r of refs) {
    if (taken.length === a) break;
    const c = { re: new Float64Array(a), im: new Float64Array(a) };
    affine.forEach((u, k) => ([c.re[k], c.im[k]] = dot(u, r)));
    for (let pass = 0; pass < 2; pass++)
      for (const q of taken) {
        let sr = 0;
        let si = 0;
        for (let k = 0; k < a; k++) {
          sr += q.re[k] * c.re[k] + q.im[k] * c.im[k];
          si += q.re[k] * c.im[k] - q.im[k] * c.re[k];
        }
        for (let k = 0; k < a; k++) {
          c.re[k] -= sr * q.re[k] - si * q.im[k];
          c.im[k] -= sr * q.im[k] + si * q.re[k];
        }
      }
    let left = 0;
    for (let k = 0; k < a; k++) left += c.re[k] ** 2 + c.im[k] ** 2;
    left = Math.sqrt(left);
    if (!(left > REFERENCE_LEFT)) continue;
    for (let k = 0; k < a; k++) {
      c.re[k] /= left;
      c.im[k] /= left;
    }
    taken.push(c);
  }
  // the fields F span every affine field, so their projections span the affine flexes in the rest
  if (taken.length < a) throw new Error(`classify: the reference fields reach only ${taken.length} of the ${a} affine directions (internal error)`);
  const real = allReal(affine) && taken.every((q) => allZero(q.im));
  return taken.map((q) => {
    const v = { re: new Float64Array(n), im: new Float64Array(n) };
    affine.forEach((u, k) => addScaled(v, u, q.re[k], q.im[k], real));
    return v;
  });
}

/**
 * span(rest) ⊖ span(affine) as rest·C (C r×(r − a), orthonormal columns) when the affine
 * vectors lie in span(rest) (they are built from it): with Y = Restᴴ·Affine (r×a, orthonormal
 * columns), Householder reflectors H_j = I − τ_j v_j v_jᴴ reduce Y to upper triangular form
 * (Householder QR, e.g. G. H. Golub & C. F. Van Loan, "Matrix Computations", 4th ed., Johns
 * Hopkins, 2013, §5.1–5.2; from memory), so the last r − a columns of Q = H_1⋯H_a are an
 * orthonormal basis of the complement of range Y in Cʳ: C = Q(:, a:). Costs a·r passes over
 * the vectors for Y and r×r work; the vectors rest·C are never formed here. null when a column
 * of Y is shorter than ½ after the earlier reflections (an affine vector outside span(rest),
 * which splitAffine's construction rules out).
 */
export function complementCoefficients(rest: Cx[], affine: Cx[]): SpanPart | null {
  const r = rest.length;
  const a = affine.length;
  if (a > r) return null;
  const real = allReal(rest) && allReal(affine);
  // Y[i][k] = ⟨rest_i, affine_k⟩, row-major r×a
  const Yre = new Float64Array(r * a);
  const Yim = new Float64Array(r * a);
  const affineRe = affine.map((x) => x.re);
  for (let i = 0; i < r; i++) {
    if (real) {
      realDots(rest[i].re, affineRe, 0, Yre, i * a);
      continue;
    }
    for (let k = 0; k < a; k++) {
      const [sr, si] = dot(rest[i], affine[k]);
      Yre[i * a + k] = sr;
      Yim[i * a + k] = si;
    }
  }
  // Householder QR of Y: v_j (zero above row j), τ_j = 2 / vᴴv, H_j x_j = −e^{i·arg x_jj}‖x_j‖ e_j
  const reflectors: { vre: Float64Array; vim: Float64Array; tau: number }[] = [];
  for (let j = 0; j < a; j++) {
    let nx2 = 0;
    for (let i = j; i < r; i++) nx2 += Yre[i * a + j] ** 2 + Yim[i * a + j] ** 2;
    const nx = Math.sqrt(nx2);
    if (!(nx >= 0.5)) return null;
    const x0r = Yre[j * a + j];
    const x0i = Yim[j * a + j];
    const ax0 = Math.hypot(x0r, x0i);
    const pr = ax0 > 0 ? x0r / ax0 : 1;
    const pi = ax0 > 0 ? x0i / ax0 : 0;
    const vre = new Float64Array(r);
    const vim = new Float64Array(r);
    for (let i = j; i < r; i++) {
      vre[i] = Yre[i * a + j];
      vim[i] = Yim[i * a + j];
    }
    vre[j] += pr * nx;
    vim[j] += pi * nx;
    let vv = 0;
    for (let i = j; i < r; i++) vv += vre[i] ** 2 + vim[i] ** 2;
    const tau = 2 / vv;
    // the remaining columns: Y[:, c] −= τ v (vᴴ Y[:, c])
    for (let c = j + 1; c < a; c++) {
      let sr = 0;
      let si = 0;
      for (let i = j; i < r; i++) {
        sr += vre[i] * Yre[i * a + c] + vim[i] * Yim[i * a + c];
        si += vre[i] * Yim[i * a + c] - vim[i] * Yre[i * a + c];
      }
      for (let i = j; i < r; i++) {
        Yre[i * a + c] -= tau * (vre[i] * sr - vim[i] * si);
        Yim[i * a + c] -= tau * (vre[i] * si + vim[i] * sr);
      }
    }
    reflectors.push({ vre, vim, tau });
  }
  // C = H_1⋯H_a·[e_a … e_{r−1}]: each column through H_a first, H_1 last
  const m = r - a;
  const re = new Float64Array(r * m);
  const im = real ? null : new Float64Array(r * m);
  const xr = new Float64Array(r);
  const xi = new Float64Array(r);
  for (let t = 0; t < m; t++) {
    xr.fill(0);
    xi.fill(0);
    xr[a + t] = 1;
    for (let j = a - 1; j >= 0; j--) {
      const { vre, vim, tau } = reflectors[j];
      // x −= τ v (vᴴ x)
      let sr = 0;
      let si = 0;
      for (let i = j; i < r; i++) {
        sr += vre[i] * xr[i] + vim[i] * xi[i];
        si += vre[i] * xi[i] - vim[i] * xr[i];
      }
      for (let i = j; i < r; i++) {
        xr[i] -= tau * (vre[i] * sr - vim[i] * si);
        xi[i] -= tau * (vre[i] * si + vim[i] * sr);
      }
    }
    for (let i = 0; i < r; i++) {
      re[i * m + t] = xr[i];
      if (im) im[i * m + t] = xi[i];
    }
  }
  return { E: { re, im }, m };
}
