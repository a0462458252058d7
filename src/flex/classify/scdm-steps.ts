/**
 * The pieces of one SCDM step (scdm.ts), shared by the lazy column-pivoted QR and its eager
 * reference: the rows of Ψᴴ, the pivot rule and its direction in the plane of a joint, the
 * elimination of a row, and the forming of the localised vectors Ψ·(E·polar(…)) at the end.
 */
import { combineColumns, normaliseInPlace } from './cvec-ops.js';
import { polarFactor } from './polar.js';


/**
 * One SCDM elimination step on row j of the row-major n×r matrix X: the row minus its
 * component along the unit vector q; returns the row's new squared norm.
 */
export function eliminateRow(Xre: Float64Array, Xim: Float64Array, j: number, r: number, qre: Float64Array, qim: Float64Array, real: boolean): number {
  const o = j * r;
  if (real) {
    // imaginary parts all zero: the same numbers without the zero products
    let c = 0;
    for (let a = 0; a < r; a++) c += qre[a] * Xre[o + a];
    let s = 0;
    for (let a = 0; a < r; a++) {
      Xre[o + a] -= c * qre[a];
      s += Xre[o + a] ** 2;
    }
    return s;
  }
  let sr = 0;
  let si = 0;
  for (let a = 0; a < r; a++) {
    const xr = Xre[o + a];
    const xi = Xim[o + a];
    sr += qre[a] * xr + qim[a] * xi;
    si += qre[a] * xi - qim[a] * xr;
  }
  let s = 0;
  for (let a = 0; a < r; a++) {
    Xre[o + a] -= sr * qre[a] - si * qim[a];
    Xim[o + a] -= sr * qim[a] + si * qre[a];
    s += Xre[o + a] ** 2 + Xim[o + a] ** 2;
  }
  return s;
}

/**
 * The SCDM pivot: the first dof in `order` whose residual exceeds every earlier one by more than
 * a relative 1e-12 (ties go to the earlier dof), among those not yet taken; −1 when none is left.
 */
export function pickPivot(order: Int32Array, done: Uint8Array, res: Float64Array): number {
  let p = -1;
  let best = -1;
  for (let t = 0; t < order.length; t++) {
    const j = order[t];
    if (!done[j] && res[j] > best * (1 + PIVOT_TIE)) {
      best = res[j];
      p = j;
    }
  }
  return p;
}

/** Σ_c X[i][c]·conj(X[j][c]) for rows i, j of the row-major n×r matrix X (complex). */
export function rowDot(Xre: Float64Array, Xim: Float64Array, i: number, j: number, r: number): [number, number] {
  let sr = 0;
  let si = 0;
  for (let c = 0; c < r; c++) {
    const ar = Xre[i * r + c];
    const ai = Xim[i * r + c];
    const br = Xre[j * r + c];
    const bi = Xim[j * r + c];
    sr += ar * br + ai * bi;
    si += ai * br - ar * bi;
  }
  return [sr, si];
}

/** Σ_c X[i][c]·X[j][c] for rows i, j of the row-major n×r real matrix X. */
export function realRowDot(Xre: Float64Array, i: number, j: number, r: number): number {
  let sr = 0;
  for (let c = 0; c < r; c++) sr += Xre[i * r + c] * Xre[j * r + c];
  return sr;
}

/** Top eigenvalue of the 2×2 Hermitian Gram [[a, b], [conj b, d]], b = br + i·bi. */
export function topValue(a: number, d: number, br: number, bi: number): number {
  return (a + d) / 2 + Math.sqrt(((a - d) / 2) ** 2 + br * br + bi * bi);
}

/** The rows of Ψᴴ (c_j = conj(Ψ[j, :])) as a row-major n×r matrix; Xim empty when every imaginary part is zero. */
export function rowsOf(psi: { re: Float64Array; im: Float64Array }[], imZero: boolean): { Xre: Float64Array; Xim: Float64Array } {
  const r = psi.length;
  const n = psi[0].re.length;
  const Xre = new Float64Array(n * r);
  const Xim = new Float64Array(imZero ? 0 : n * r);
  for (let a = 0; a < r; a++) {
    const pr = psi[a].re;
    for (let j = 0; j < n; j++) Xre[j * r + a] = pr[j];
    if (!imZero) {
      const pi = psi[a].im;
      for (let j = 0; j < n; j++) Xim[j * r + a] = -pi[j];
    }
  }
  return { Xre, Xim };
}

/** The selected column of a step: joint k, direction u = (u_x, u_y) in the plane. */
export interface Selected {
  k: number;
  uxr: number;
  uxi: number;
  uyr: number;
  uyi: number;
}

/**
 * The pivot joint k's direction u (top eigenvector of its residual block's 2×2 Gram
 * [[a, b], [conj b, d]], top value lam) and the unit vector q = u_x·row_x + u_y·row_y of its
 * residual rows, written to qre/qim; returns ‖q‖ before normalising (0: nothing to eliminate).
 */
export function pivotDirection(Xre: Float64Array, Xim: Float64Array, imZero: boolean, r: number, k: number, a: number, d: number, br: number, bi: number, lam: number, qre: Float64Array, qim: Float64Array): { sel: Selected; nq: number } {
  let u: [number, number, number, number]; // ux re, ux im, uy re, uy im
  if (Math.hypot(br, bi) > 1e-14 * lam) u = [br, -bi, lam - a, 0];
  else u = a >= d ? [1, 0, 0, 0] : [0, 0, 1, 0];
  const nu = Math.hypot(...u);
  u = [u[0] / nu, u[1] / nu, u[2] / nu, u[3] / nu];
  let nq = 0;
  for (let c = 0; c < r; c++) {
    const xr = Xre[2 * k * r + c];
    const xi = imZero ? 0 : Xim[2 * k * r + c];
    const yr = Xre[(2 * k + 1) * r + c];
    const yi = imZero ? 0 : Xim[(2 * k + 1) * r + c];
    qre[c] = u[0] * xr - u[1] * xi + u[2] * yr - u[3] * yi;
    qim[c] = u[0] * xi + u[1] * xr + u[2] * yi + u[3] * yr;
    nq += qre[c] ** 2 + qim[c] ** 2;
  }
  nq = Math.sqrt(nq);
  if (nq > 0)
    for (let c = 0; c < r; c++) {
      qre[c] /= nq;
      qim[c] /= nq;
    }
  return { sel: { k, uxr: u[0], uxi: u[1], uyr: u[2], uyi: u[3] }, nq };
}

/**
 * The vectors SCDM localises: the columns of Ψ·E (E row-major r×m, im null when real), or Ψ
 * itself (E null, m = r). With E the localised vectors are formed only at the end, from Ψ and
 * E·polar(…): Ψ·E is never written out.
 */
export interface Source {
  psi: { re: Float64Array; im: Float64Array }[];
  E: { re: Float64Array; im: Float64Array | null } | null;
  m: number;
}

/**
 * Entries 2k and 2k+1 of the m source vectors: out re/im [t] at 2k, [m + t] at 2k+1. With E:
 * Σ_b ψ_b[·]·E[b][t], b in increasing order from zero, each term formed as in `combineColumns`
 * (so the same numbers). `gather` (length 4·r_in) holds ψ_b's entries at joint k; the sums run
 * four columns of E at a time (real) or two (complex), in registers.
 */
export function sourceEntries(src: Source, k: number, outRe: Float64Array, outIm: Float64Array, real: boolean, gather: Float64Array): void {
  const { psi, E, m } = src;
  if (!E) {
    for (let t = 0; t < m; t++) {
      outRe[t] = psi[t].re[2 * k];
      outIm[t] = psi[t].im[2 * k];
      outRe[m + t] = psi[t].re[2 * k + 1];
      outIm[m + t] = psi[t].im[2 * k + 1];
    }
    return;
  }
  const rin = psi.length;
  const Ere = E.re;
  // gather: x_b re at [b], y_b re at [rin + b], x_b im at [2·rin + b], y_b im at [3·rin + b]
  for (let b = 0; b < rin; b++) {
    gather[b] = psi[b].re[2 * k];
    gather[rin + b] = psi[b].re[2 * k + 1];
  }
  if (real) {
    outIm.fill(0);
    let t = 0;
    for (; t + 3 < m; t += 4) {
      let x0 = 0, x1 = 0, x2 = 0, x3 = 0, y0 = 0, y1 = 0, y2 = 0, y3 = 0;
      for (let b = 0, o = t; b < rin; b++, o += m) {
        const xr = gather[b];
        const yr = gather[rin + b];
        const e0 = Ere[o];
        const e1 = Ere[o + 1];
        const e2 = Ere[o + 2];
        const e3 = Ere[o + 3];
        x0 += xr * e0;
        x1 += xr * e1;
        x2 += xr * e2;
        x3 += xr * e3;
        y0 += yr * e0;
        y1 += yr * e1;
        y2 += yr * e2;
        y3 += yr * e3;
      }
      outRe[t] = x0;
      outRe[t + 1] = x1;
      outRe[t + 2] = x2;
      outRe[t + 3] = x3;
      outRe[m + t] = y0;
      outRe[m + t + 1] = y1;
      outRe[m + t + 2] = y2;
      outRe[m + t + 3] = y3;
    }
    for (; t < m; t++) {
      let x = 0;
      let y = 0;
      for (let b = 0, o = t; b < rin; b++, o += m) {
        x += gather[b] * Ere[o];
        y += gather[rin + b] * Ere[o];
      }
      outRe[t] = x;
      outRe[m + t] = y;
    }
    return;
  }
  for (let b = 0; b < rin; b++) {
    gather[2 * rin + b] = psi[b].im[2 * k];
    gather[3 * rin + b] = psi[b].im[2 * k + 1];
  }
  const Eim = E.im;
  for (let t = 0; t < m; t += 2) {
    const two = t + 1 < m;
    let xr0 = 0, xi0 = 0, yr0 = 0, yi0 = 0, xr1 = 0, xi1 = 0, yr1 = 0, yi1 = 0;
    for (let b = 0, o = t; b < rin; b++, o += m) {
      const xr = gather[b];
      const yr = gather[rin + b];
      const xi = gather[2 * rin + b];
      const yi = gather[3 * rin + b];
      let wr = Ere[o];
      let wi = Eim ? Eim[o] : 0;
      xr0 += xr * wr - xi * wi;
      xi0 += xr * wi + xi * wr;
      yr0 += yr * wr - yi * wi;
      yi0 += yr * wi + yi * wr;
      if (!two) continue;
      wr = Ere[o + 1];
      wi = Eim ? Eim[o + 1] : 0;
      xr1 += xr * wr - xi * wi;
      xi1 += xr * wi + xi * wr;
      yr1 += yr * wr - yi * wi;
      yi1 += yr * wi + yi * wr;
    }
    outRe[t] = xr0;
    outIm[t] = xi0;
    outRe[m + t] = yr0;
    outIm[m + t] = yi0;
    if (!two) continue;
    outRe[t + 1] = xr1;
    outIm[t + 1] = xi1;
    outRe[m + t + 1] = yr1;
    outIm[m + t + 1] = yi1;
  }
}

/**
 * The orthonormal SCDM basis: with M = Ψ(C,:)ᴴ for the selected columns, M[a][b] =
 * u_x·conj(ψ_a[2k]) + u_y·conj(ψ_a[2k+1]) for the b-th selected column (joint k, direction u,
 * entries of the source vectors at joint k in `entries`), the vectors Ψ·polar(M) (with E:
 * Ψ·(E·polar(M))), normalised.
 */
export function localisedBasis(src: Source, complex: boolean, sel: Selected[], entries: { re: Float64Array; im: Float64Array }[]): { re: Float64Array; im: Float64Array }[] {
  const r = src.m;
  const Mre = new Float64Array(r * r);
  const Mim = complex ? new Float64Array(r * r) : null;
  sel.forEach((c, b) => {
    const { re, im } = entries[b];
    for (let a = 0; a < r; a++) {
      const xr = re[a];
      const xi = im[a];
      const yr = re[r + a];
      const yi = im[r + a];
      const zr = c.uxr * xr + c.uxi * xi + c.uyr * yr + c.uyi * yi;
      const zi = c.uxr * xi - c.uxi * xr + c.uyr * yi - c.uyi * yr;
      Mre[a * r + b] = zr;
      if (Mim) Mim[a * r + b] = -zi;
    }
  });
  const W = polarFactor(Mre, Mim, r);
  let out: { re: Float64Array; im: Float64Array }[];
  if (!src.E) out = combineColumns(src.psi, W.re, W.im, r, !complex);
  else {
    // E·W (r_in × m)
    const rin = src.psi.length;
    const Cre = new Float64Array(rin * r);
    const Cim = complex ? new Float64Array(rin * r) : null;
    const Ere = src.E.re;
    const Eim = src.E.im;
    if (!Cim && !Eim) realTimes(Ere, W.re, Cre, rin, r);
    else
      for (let b = 0; b < rin; b++)
        for (let t = 0; t < r; t++) {
          const er = Ere[b * r + t];
          const ei = Eim ? Eim[b * r + t] : 0;
          if (er === 0 && ei === 0) continue;
          for (let s2 = 0; s2 < r; s2++) {
            const wr = W.re[t * r + s2];
            const wi = W.im[t * r + s2];
            Cre[b * r + s2] += er * wr - ei * wi;
            if (Cim) Cim[b * r + s2] += er * wi + ei * wr;
          }
        }
    out = combineColumns(src.psi, Cre, Cim, r, !complex);
  }
  for (const v of out) normaliseInPlace(v, !complex);
  return out;
}

/**
 * C += E·W for real row-major E (rows × r) and W (r × r): the complex loop's sums without its zero
 * products (er·wr − 0·wi is er·wr exactly), in the same order. Exported for the tests.
 */
export function realTimes(E: Float64Array, W: Float64Array, C: Float64Array, rows: number, r: number): void {
  for (let b = 0; b < rows; b++)
    for (let t = 0; t < r; t++) {
      const er = E[b * r + t];
      if (er === 0) continue;
      const c = b * r;
      const w = t * r;
      for (let s2 = 0; s2 < r; s2++) C[c + s2] += er * W[w + s2];
    }
}

/** Relative tie of the SCDM pivot rule (`pickPivot`). */
export const PIVOT_TIE = 1e-12;
