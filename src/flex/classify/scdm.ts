/**
 * SCDM localisation of the rest (A. Damle, L. Lin & L. Ying, "Compressed representation of
 * Kohn–Sham orbitals via selected columns of the density matrix", J. Chem. Theory Comput.
 * 11(4), 1463–1469, 2015), on joint blocks so that the choice turns with the drawing. The
 * column-pivoted QR is lazy (rows are eliminated only when their joint may be the pivot; the
 * same numbers as the plain one, kept as `scdmReference` for the tests), and `scdmOfSpan` works
 * on coefficients Ψ·E without forming those vectors.
 */
import { cnorm as norm } from '../../linalg/complex.js';
import type { Supercell } from '../../supercell/supercell.js';
import { allReal, allZero, combineColumns, scaleInPlace } from './cvec-ops.js';
import { polarFactor } from './polar.js';

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
    if (!done[j] && res[j] > best * (1 + PIVOT_TIE)) {
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

/** Σ_c X[i][c]·X[j][c] for rows i, j of the row-major n×r real matrix X. */
function realRowDot(Xre: Float64Array, i: number, j: number, r: number): number {
  let sr = 0;
  for (let c = 0; c < r; c++) sr += Xre[i * r + c] * Xre[j * r + c];
  return sr;
}

/** Top eigenvalue of the 2×2 Hermitian Gram [[a, b], [conj b, d]], b = br + i·bi. */
function topValue(a: number, d: number, br: number, bi: number): number {
  return (a + d) / 2 + Math.sqrt(((a - d) / 2) ** 2 + br * br + bi * bi);
}

/** The rows of Ψᴴ (c_j = conj(Ψ[j, :])) as a row-major n×r matrix; Xim empty when every imaginary part is zero. */
function rowsOf(psi: { re: Float64Array; im: Float64Array }[], imZero: boolean): { Xre: Float64Array; Xim: Float64Array } {
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
interface Selected {
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
function pivotDirection(Xre: Float64Array, Xim: Float64Array, imZero: boolean, r: number, k: number, a: number, d: number, br: number, bi: number, lam: number, qre: Float64Array, qim: Float64Array): { sel: Selected; nq: number } {
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
interface Source {
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
function sourceEntries(src: Source, k: number, outRe: Float64Array, outIm: Float64Array, real: boolean, gather: Float64Array): void {
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
function localisedBasis(src: Source, complex: boolean, sel: Selected[], entries: { re: Float64Array; im: Float64Array }[]): { re: Float64Array; im: Float64Array }[] {
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
  for (const v of out) scaleInPlace(v, 1 / norm(v));
  return out;
}

/** `pickPivot`'s scan over the candidate joints only, in pivot order (`position`: each joint's place in it). */
function pickAmong(candidates: number[], position: Int32Array, top: Float64Array): number {
  candidates.sort((x, y) => position[x] - position[y]);
  let p = -1;
  let best = -1;
  for (const j of candidates) {
    if (top[j] > best * (1 + PIVOT_TIE)) {
      best = top[j];
      p = j;
    }
  }
  return p;
}

/** Relative tie of the SCDM pivot rule (`pickPivot`). */
const PIVOT_TIE = 1e-12;

/**
 * SCDM (Damle, Lin & Ying 2015) on joint blocks: a column-pivoted QR of Ψᴴ whose candidate
 * columns are, per joint, the velocity component along the block's top direction (so the
 * choice turns with the drawing); the orthonormal localised basis is Ψ·polar(Ψ(C,:)ᴴ).
 *
 * Joint blocks: both coordinates of a joint together, so that turning the drawing (which mixes
 * x and y at every joint) selects the same columns. A step takes the joint whose residual block B
 * (rows x, y of Ψᴴ) has the largest top singular value, and the column uᴴB along B's top left
 * singular vector u (a direction in the plane, turning with the drawing); that column is then
 * eliminated from every row. A joint may be taken twice.
 *
 * Lazy elimination, the same numbers as eliminating every row at every step (`scdmReference`):
 * a row's block top value never grows under an elimination (B(I − qqᴴ)Bᴴ ≤ BBᴴ), up to
 * rounding of at most (1 + 3·p·(r + 2)·ε) over p steps, which `LAZY_SLACK` covers. So each
 * joint keeps its rows as of the step it was last brought up to date, with that value times
 * (1 + slack) as an upper bound; a step brings up to date, largest bound first, every joint whose
 * bound reaches (1 − band) times the largest exact value found, replaying the pending
 * eliminations in their order (bit for bit what the eager loop computes). Every other joint lies
 * below (1 − band)·max, and cannot change the pick: the tie rule (relative 1e-12) links values
 * only through a chain of at least band / (2·1e-12) joints each within 1e-12 of the next, more
 * than there are joints (band grows with the joint count to keep it so). Joints far from every
 * pivot (deep inside, where the localised rest is small) are then never eliminated.
 */
export function scdm(psi: { re: Float64Array; im: Float64Array }[], complex: boolean, order: Int32Array): { re: Float64Array; im: Float64Array }[] {
  return scdmCore({ psi, E: null, m: psi.length }, complex, order);
}

/**
 * `scdm` of the m vectors Ψ·E (E row-major r×m with orthonormal columns, im null when real)
 * without forming them: the rows of (Ψ·E)ᴴ are formed only for the joints that may become a
 * pivot (their bound, the top value of Ψ's own block, never lies below that of Ψ·E's, as
 * E·Eᴴ ≤ I), and the localised vectors are Ψ·(E·polar(…)).
 */
export function scdmOfSpan(psi: { re: Float64Array; im: Float64Array }[], E: { re: Float64Array; im: Float64Array | null }, m: number, complex: boolean, order: Int32Array): { re: Float64Array; im: Float64Array }[] {
  return scdmCore({ psi, E, m }, complex, order);
}

function scdmCore(src: Source, complex: boolean, order: Int32Array): { re: Float64Array; im: Float64Array }[] {
  const { psi } = src;
  const r = src.m;
  const n = psi[0].re.length;
  const J = n >> 1;
  // imaginary parts all zero (the usual real case): Xim is never formed, and the blocks'
  // off-diagonal entries are real dot products (the same numbers without the zero products);
  // zero imaginary parts also give the real elimination's numbers in the complex one
  const imZero = allReal(psi) && (!src.E || !src.E.im || allZero(src.E.im));
  const realRows = !complex || imZero;
  // rows of Ψᴴ (of (Ψ·E)ᴴ), row-major n×r: all at once without E, joint by joint with it
  const { Xre, Xim } = src.E ? { Xre: new Float64Array(n * r), Xim: new Float64Array(imZero ? 0 : n * r) } : rowsOf(psi, imZero);
  const formed = new Uint8Array(J);
  const res = new Float64Array(n);
  const top = new Float64Array(J);
  const offDiagonal = (k: number): [number, number] => (imZero ? [realRowDot(Xre, 2 * k, 2 * k + 1, r), 0] : rowDot(Xre, Xim, 2 * k, 2 * k + 1, r));
  const rowNorms = (k: number) => {
    for (let j = 2 * k; j < 2 * k + 2; j++) {
      let s = 0;
      if (imZero) for (let a = 0; a < r; a++) s += Xre[j * r + a] ** 2;
      else for (let a = 0; a < r; a++) s += Xre[j * r + a] ** 2 + Xim[j * r + a] ** 2;
      res[j] = s;
    }
    const [br, bi] = offDiagonal(k);
    top[k] = topValue(res[2 * k], res[2 * k + 1], br, bi);
    formed[k] = 1;
  };
  const entryRe = new Float64Array(2 * r);
  const entryIm = new Float64Array(2 * r);
  const gather = new Float64Array(4 * psi.length);
  const formRows = (k: number) => {
    sourceEntries(src, k, entryRe, entryIm, imZero, gather);
    for (let t = 0; t < r; t++) {
      Xre[2 * k * r + t] = entryRe[t];
      Xre[(2 * k + 1) * r + t] = entryRe[r + t];
      if (!imZero) {
        Xim[2 * k * r + t] = -entryIm[t];
        Xim[(2 * k + 1) * r + t] = -entryIm[r + t];
      }
    }
    rowNorms(k);
  };
  const slack = 1 + LAZY_SLACK(r);
  const heap = new MaxHeap(J);
  if (!src.E) {
    for (let k = 0; k < J; k++) rowNorms(k);
    for (let k = 0; k < J; k++) heap.push(k, top[k] * slack);
  } else {
    // bounds: the top value of Ψ's own 2×2 blocks (E·Eᴴ ≤ I up to rounding, covered by 1e-10)
    const a = new Float64Array(J);
    const d = new Float64Array(J);
    const br = new Float64Array(J);
    const bi = new Float64Array(J);
    for (const v of psi)
      for (let k = 0; k < J; k++) {
        const xr = v.re[2 * k];
        const xi = v.im[2 * k];
        const yr = v.re[2 * k + 1];
        const yi = v.im[2 * k + 1];
        a[k] += xr * xr + xi * xi;
        d[k] += yr * yr + yi * yi;
        br[k] += xr * yr + xi * yi;
        bi[k] += xr * yi - xi * yr;
      }
    for (let k = 0; k < J; k++) heap.push(k, topValue(a[k], d[k], br[k], bi[k]) * (1 + 1e-10) * slack);
  }
  const position = new Int32Array(J);
  Int32Array.from(order.filter((d) => (d & 1) === 0), (d) => d >> 1).forEach((k, t) => (position[k] = t));
  // the eliminated directions, step by step, and how many of them each joint's rows have had
  const Qre = new Float64Array(r * r);
  const Qim = new Float64Array(r * r);
  let steps = 0;
  const done = new Int32Array(J);
  const gram = new Float64Array(4);
  const bringUpToDate = (k: number) => {
    if (!formed[k]) formRows(k);
    if (done[k] === steps) return;
    if (realRows && imZero) replayJointReal(Xre, k, r, Qre, done[k], steps, gram);
    else {
      for (let s = done[k]; s < steps; s++) {
        const qre = Qre.subarray(s * r, (s + 1) * r);
        const qim = Qim.subarray(s * r, (s + 1) * r);
        gram[0] = eliminateRow(Xre, Xim, 2 * k, r, qre, qim, realRows);
        gram[1] = eliminateRow(Xre, Xim, 2 * k + 1, r, qre, qim, realRows);
      }
      const [br, bi] = offDiagonal(k);
      gram[2] = br;
      gram[3] = bi;
    }
    res[2 * k] = gram[0];
    res[2 * k + 1] = gram[1];
    top[k] = topValue(gram[0], gram[1], gram[2], realRows && imZero ? 0 : gram[3]);
    done[k] = steps;
  };
  const band = Math.max(1e-6, 4 * J * PIVOT_TIE);
  const taken = new Uint8Array(J);
  const timesTaken = new Uint8Array(J);
  const sel: Selected[] = [];
  const entries: { re: Float64Array; im: Float64Array }[] = [];
  const qre = new Float64Array(r);
  const qim = new Float64Array(r);
  const candidates: number[] = [];
  for (let step = 0; step < r; step++) {
    // bring up to date every joint that may be the pivot, largest bound first
    candidates.length = 0;
    let best = -Infinity;
    while (heap.size > 0 && heap.topKey() >= (1 - band) * best) {
      const k = heap.pop();
      bringUpToDate(k);
      candidates.push(k);
      if (top[k] > best) best = top[k];
    }
    const k = pickAmong(candidates, position, top);
    if (k < 0) break;
    const [br, bi] = offDiagonal(k);
    const { sel: c, nq } = pivotDirection(Xre, Xim, imZero, r, k, res[2 * k], res[2 * k + 1], br, bi, top[k], qre, qim);
    sel.push(c);
    const e = { re: new Float64Array(2 * r), im: new Float64Array(2 * r) };
    sourceEntries(src, k, e.re, e.im, imZero, gather);
    entries.push(e);
    if (nq === 0) taken[k] = 1;
    else {
      Qre.set(qre, steps * r);
      Qim.set(qim, steps * r);
      steps++;
      if (++timesTaken[k] === 2) taken[k] = 1;
    }
    for (const j of candidates) if (!taken[j]) heap.push(j, top[j] * slack);
  }
  return localisedBasis(src, complex, sel, entries);
}

/** Relative growth a block's computed top value may show over at most r eliminations: 3·r·(r + 2)·ε, doubled, plus 1e-13. */
function LAZY_SLACK(r: number): number {
  return 6 * r * (r + 2) * 2.220446049250313e-16 + 1e-13;
}

/**
 * Real rows of joint k brought from step `from` to step `to`: each pending direction q_s
 * eliminated from both rows in order (c = q·x, then x −= c·q, the sums in the order of
 * `eliminateRow`), then the block's Gram entries a = ‖x‖², d = ‖y‖², b = x·y into out (the sums
 * of `eliminateRow` and `realRowDot`, in their order). The two rows' sums interleave, so the
 * loops are not bound by the latency of one chain of additions.
 */
function replayJointReal(X: Float64Array, k: number, r: number, Q: Float64Array, from: number, to: number, out: Float64Array): void {
  const ox = 2 * k * r;
  const oy = ox + r;
  for (let s = from; s < to; s++) {
    const oq = s * r;
    let cx = 0;
    let cy = 0;
    for (let c = 0; c < r; c++) {
      const qc = Q[oq + c];
      cx += qc * X[ox + c];
      cy += qc * X[oy + c];
    }
    for (let c = 0; c < r; c++) {
      const qc = Q[oq + c];
      X[ox + c] -= cx * qc;
      X[oy + c] -= cy * qc;
    }
  }
  let a = 0;
  let d = 0;
  let b = 0;
  for (let c = 0; c < r; c++) {
    const x = X[ox + c];
    const y = X[oy + c];
    a += x ** 2;
    d += y ** 2;
    b += x * y;
  }
  out[0] = a;
  out[1] = d;
  out[2] = b;
}

/** A binary max-heap of joint indices by key (keys fixed while an index is inside). */
class MaxHeap {
  private readonly items: Int32Array;
  private readonly keys: Float64Array;
  size = 0;
  constructor(capacity: number) {
    this.items = new Int32Array(capacity);
    this.keys = new Float64Array(capacity);
  }
  topKey(): number {
    return this.keys[0];
  }
  push(item: number, key: number): void {
    let i = this.size++;
    while (i > 0) {
      const p = (i - 1) >> 1;
      if (this.keys[p] >= key) break;
      this.items[i] = this.items[p];
      this.keys[i] = this.keys[p];
      i = p;
    }
    this.items[i] = item;
    this.keys[i] = key;
  }
  pop(): number {
    const out = this.items[0];
    const item = this.items[--this.size];
    const key = this.keys[this.size];
    let i = 0;
    for (;;) {
      const l = 2 * i + 1;
      if (l >= this.size) break;
      const c = l + 1 < this.size && this.keys[l + 1] > this.keys[l] ? l + 1 : l;
      if (this.keys[c] <= key) break;
      this.items[i] = this.items[c];
      this.keys[i] = this.keys[c];
      i = c;
    }
    this.items[i] = item;
    this.keys[i] = key;
    return out;
  }
}

/**
 * The same SCDM with every row eliminated at every step (the plain column-pivoted QR, no
 * laziness): the reference `scdm` must reproduce bit for bit (tests).
 */
export function scdmReference(psi: { re: Float64Array; im: Float64Array }[], complex: boolean, order: Int32Array): { re: Float64Array; im: Float64Array }[] {
  const r = psi.length;
  const n = psi[0].re.length;
  const J = n >> 1;
  const imZero = allReal(psi);
  const realRows = !complex || imZero;
  const { Xre, Xim } = rowsOf(psi, imZero);
  const res = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    let s = 0;
    if (imZero) for (let a = 0; a < r; a++) s += Xre[j * r + a] ** 2;
    else for (let a = 0; a < r; a++) s += Xre[j * r + a] ** 2 + Xim[j * r + a] ** 2;
    res[j] = s;
  }
  const offDiagonal = (k: number): [number, number] => (imZero ? [realRowDot(Xre, 2 * k, 2 * k + 1, r), 0] : rowDot(Xre, Xim, 2 * k, 2 * k + 1, r));
  const topOf = (k: number) => {
    const [br, bi] = offDiagonal(k);
    return topValue(res[2 * k], res[2 * k + 1], br, bi);
  };
  const jointOrder = Int32Array.from(order.filter((d) => (d & 1) === 0), (d) => d >> 1);
  const taken = new Uint8Array(J);
  const top = new Float64Array(J);
  for (let k = 0; k < J; k++) top[k] = topOf(k);
  const sel: Selected[] = [];
  const qre = new Float64Array(r);
  const qim = new Float64Array(r);
  for (let step = 0; step < r; step++) {
    const k = pickPivot(jointOrder, taken, top);
    if (k < 0) break;
    const [br, bi] = offDiagonal(k);
    const { sel: c, nq } = pivotDirection(Xre, Xim, imZero, r, k, res[2 * k], res[2 * k + 1], br, bi, top[k], qre, qim);
    sel.push(c);
    if (nq === 0) {
      taken[k] = 1;
      continue;
    }
    for (let j = 0; j < n; j++) res[j] = eliminateRow(Xre, Xim, j, r, qre, qim, realRows);
    for (let kk = 0; kk < J; kk++) if (!taken[kk]) top[kk] = topOf(kk);
    if (sel.filter((x) => x.k === k).length === 2) taken[k] = 1;
  }
  const src: Source = { psi, E: null, m: r };
  const gather = new Float64Array(4 * r);
  return localisedBasis(
    src,
    complex,
    sel,
    sel.map((c) => {
      const e = { re: new Float64Array(2 * r), im: new Float64Array(2 * r) };
      sourceEntries(src, c.k, e.re, e.im, imZero, gather);
      return e;
    }),
  );
}
