/**
 * SCDM localisation of the rest (A. Damle, L. Lin & L. Ying, "Compressed representation of
 * Kohn–Sham orbitals via selected columns of the density matrix", J. Chem. Theory Comput.
 * 11(4), 1463–1469, 2015), on joint blocks so that the choice turns with the drawing. The
 * column-pivoted QR is lazy (rows are eliminated only when their joint may be the pivot; the
 * same numbers as the plain one, kept as `scdmReference` for the tests), and `scdmOfSpan` works
 * on coefficients Ψ·E without forming those vectors.
 */
import type { Supercell } from '../../supercell/supercell.js';
import { allReal, allZero } from './cvec-ops.js';
import { eliminateRow, localisedBasis, pickPivot, pivotDirection, PIVOT_TIE, realRowDot, rowDot, rowsOf, sourceEntries, topValue, type Selected, type Source } from './scdm-steps.js';

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
    // real Ψ: the same sums without reading the zero imaginary parts (bi stays 0)
    if (allReal(psi)) for (const v of psi) blockSumsReal(v.re, J, a, d, br);
    else
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

/** a_k += x², d_k += y², b_k += x·y over the joints' rows (x, y) = (v_2k, v_2k+1) of a real vector. */
function blockSumsReal(v: Float64Array, J: number, a: Float64Array, d: Float64Array, b: Float64Array): void {
  for (let k = 0; k < J; k++) {
    const x = v[2 * k];
    const y = v[2 * k + 1];
    a[k] += x * x;
    d[k] += y * y;
    b[k] += x * y;
  }
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
