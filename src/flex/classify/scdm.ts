/**
 * SCDM localisation of the rest (A. Damle, L. Lin & L. Ying, "Compressed representation of
 * Kohn–Sham orbitals via selected columns of the density matrix", J. Chem. Theory Comput.
 * 11(4), 1463–1469, 2015), on joint blocks so that the choice turns with the drawing.
 */
import { cnorm as norm } from '../../linalg/complex.js';
import type { Supercell } from '../../supercell/supercell.js';
import { addScaled, polarFactor, scaleInPlace } from './cvec-ops.js';

/**
 * One SCDM elimination step on row j of the row-major n×r matrix X: the row minus its
 * component along the unit vector q; returns the row's new squared norm.
 */
function eliminateRow(Xre: Float64Array, Xim: Float64Array, j: number, r: number, qre: Float64Array, qim: Float64Array, real: boolean): number {
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
function pickPivot(order: Int32Array, done: Uint8Array, res: Float64Array): number {
  let p = -1;
  let best = -1;
  for (let t = 0; t < order.length; t++) {
    const j = order[t];
    if (!done[j] && res[j] > best * (1 + 1e-12)) {
      best = res[j];
      p = j;
    }
  }
  return p;
}

/**
 * The order in which SCDM scans the dofs for its pivot, so that exact ties (symmetric
 * translates) are broken the same way whatever the joint labels: by unit-cell site, then the
 * cell's row and column, then x before y. (The joint index orders by cell first, so moving a
 * site by a lattice vector would change which of two tied joints of different sites came first.)
 */
export function pivotOrder(sc: Supercell): Int32Array {
  const J = sc.jointCount;
  const [N1, N2] = sc.cells;
  const key = (d: number) => {
    const k = d >> 1;
    return ((sc.jointSites[k] * N2 + sc.jointCells[2 * k + 1]) * N1 + sc.jointCells[2 * k]) * 2 + (d & 1);
  };
  return Int32Array.from({ length: 2 * J }, (_, d) => d).sort((x, y) => key(x) - key(y));
}

/** Σ_c X[i][c]·conj(X[j][c]) for rows i, j of the row-major n×r matrix X (complex). */
function rowDot(Xre: Float64Array, Xim: Float64Array, i: number, j: number, r: number): [number, number] {
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

/**
 * SCDM (Damle, Lin & Ying 2015) on joint blocks: a column-pivoted QR of Ψᴴ whose candidate
 * columns are, per joint, the velocity component along the block's top direction (so the
 * choice turns with the drawing); the orthonormal localised basis is Ψ·polar(Ψ(C,:)ᴴ).
 */
export function scdm(psi: { re: Float64Array; im: Float64Array }[], complex: boolean, order: Int32Array): { re: Float64Array; im: Float64Array }[] {
  const r = psi.length;
  const n = psi[0].re.length;
  // columns of Ψᴴ: c_j = conj(Ψ[j, :]), stored row-major n×r
  const Xre = new Float64Array(n * r);
  const Xim = new Float64Array(n * r);
  const res = new Float64Array(n);
  for (let a = 0; a < r; a++)
    for (let j = 0; j < n; j++) {
      Xre[j * r + a] = psi[a].re[j];
      Xim[j * r + a] = -psi[a].im[j];
    }
  for (let j = 0; j < n; j++) {
    let s = 0;
    for (let a = 0; a < r; a++) s += Xre[j * r + a] ** 2 + Xim[j * r + a] ** 2;
    res[j] = s;
  }
  // joint blocks: both coordinates of a joint together, so that turning the drawing (which
  // mixes x and y at every joint) selects the same columns. A step takes the joint whose
  // residual block B (rows x, y of Ψᴴ) has the largest top singular value, and the column
  // uᴴB along B's top left singular vector u (a direction in the plane, turning with the
  // drawing); that column is then eliminated from every row. A joint may be taken twice.
  const qre = new Float64Array(r);
  const qim = new Float64Array(r);
  const J = n >> 1;
  const jointOrder = Int32Array.from(order.filter((d) => (d & 1) === 0), (d) => d >> 1);
  const taken = new Uint8Array(J);
  const top = new Float64Array(J);
  const topOf = (k: number) => {
    const a = res[2 * k];
    const d = res[2 * k + 1];
    const [br, bi] = rowDot(Xre, Xim, 2 * k, 2 * k + 1, r);
    return (a + d) / 2 + Math.sqrt(((a - d) / 2) ** 2 + br * br + bi * bi);
  };
  for (let k = 0; k < J; k++) top[k] = topOf(k);
  // column selected at each step: u_x·Ψᴴ[:, 2k] + u_y·Ψᴴ[:, 2k+1] (of the original Ψ in M)
  const sel: { k: number; uxr: number; uxi: number; uyr: number; uyi: number }[] = [];
  for (let step = 0; step < r; step++) {
    const k = pickPivot(jointOrder, taken, top);
    if (k < 0) break;
    // top eigenvector u of the 2×2 Gram [[a, b], [conj b, d]] of the residual block
    const a = res[2 * k];
    const d = res[2 * k + 1];
    const [br, bi] = rowDot(Xre, Xim, 2 * k, 2 * k + 1, r);
    const lam = top[k];
    let u: [number, number, number, number]; // ux re, ux im, uy re, uy im
    if (Math.hypot(br, bi) > 1e-14 * lam) u = [br, -bi, lam - a, 0];
    else u = a >= d ? [1, 0, 0, 0] : [0, 0, 1, 0];
    const nu = Math.hypot(...u);
    u = [u[0] / nu, u[1] / nu, u[2] / nu, u[3] / nu];
    sel.push({ k, uxr: u[0], uxi: u[1], uyr: u[2], uyi: u[3] });
    // q = u_x·row_x + u_y·row_y of the residual, normalised
    let nq = 0;
    for (let c = 0; c < r; c++) {
      const xr = Xre[2 * k * r + c];
      const xi = Xim[2 * k * r + c];
      const yr = Xre[(2 * k + 1) * r + c];
      const yi = Xim[(2 * k + 1) * r + c];
      qre[c] = u[0] * xr - u[1] * xi + u[2] * yr - u[3] * yi;
      qim[c] = u[0] * xi + u[1] * xr + u[2] * yi + u[3] * yr;
      nq += qre[c] ** 2 + qim[c] ** 2;
    }
    nq = Math.sqrt(nq);
    if (nq === 0) {
      taken[k] = 1;
      continue;
    }
    for (let c = 0; c < r; c++) {
      qre[c] /= nq;
      qim[c] /= nq;
    }
    for (let j = 0; j < n; j++) res[j] = eliminateRow(Xre, Xim, j, r, qre, qim, !complex);
    for (let kk = 0; kk < J; kk++) if (!taken[kk]) top[kk] = topOf(kk);
    if (sel.filter((x) => x.k === k).length === 2) taken[k] = 1;
  }
  // M = Ψ(C,:)ᴴ for the selected columns: M[a][b] = u_x·conj(ψ_a[2k]) + u_y·conj(ψ_a[2k+1])
  const Mre = new Float64Array(r * r);
  const Mim = complex ? new Float64Array(r * r) : null;
  for (let a = 0; a < r; a++)
    sel.forEach((c, b) => {
      const xr = psi[a].re[2 * c.k];
      const xi = psi[a].im[2 * c.k];
      const yr = psi[a].re[2 * c.k + 1];
      const yi = psi[a].im[2 * c.k + 1];
      const zr = c.uxr * xr + c.uxi * xi + c.uyr * yr + c.uyi * yi;
      const zi = c.uxr * xi - c.uxi * xr + c.uyr * yi - c.uyi * yr;
      Mre[a * r + b] = zr;
      if (Mim) Mim[a * r + b] = -zi;
    });
  const W = polarFactor(Mre, Mim, r);
  const out: { re: Float64Array; im: Float64Array }[] = [];
  for (let b = 0; b < r; b++) {
    const v = { re: new Float64Array(n), im: new Float64Array(n) };
    for (let a = 0; a < r; a++) {
      const wr = W.re[a * r + b];
      const wi = W.im[a * r + b];
      if (wr === 0 && wi === 0) continue;
      addScaled(v, psi[a], wr, wi, !complex);
    }
    const nv = norm(v);
    scaleInPlace(v, 1 / nv);
    out.push(v);
  }
  return out;
}
