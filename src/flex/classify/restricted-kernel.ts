/**
 * The restricted solve: the flexes supported on a set of joints (`restrictedKernel`), the rank
 * rule for candidate vectors (`certify`), and the cache of kernels already solved.
 */
import { Matrix, SingularValueDecomposition } from 'ml-matrix';
import { cnorm as norm } from '../../linalg/complex.js';
import { nullSpace, singularValues } from '../../linalg/dense.js';
import type { SparseMatrix } from '../../linalg/sparse.js';
import { sparseSpaces } from '../solve-sparse.js';
import type { Ctx, RestrictedMethod } from './context.js';
import { combine, scaleInPlace, subtractProjection, type Block } from './cvec-ops.js';
import { projectOntoNullSpace, psdNullSpace } from './null-space.js';

/** Per matrix: global column → local column (−1 outside) and a row marker, reused by every call (reset after). */
const restrictScratch = new WeakMap<SparseMatrix, { col: Int32Array; rowMark: Int32Array; stamp: number }>();

/**
 * The rows of R touching `joints`, restricted to those joints' columns (x, y per joint, in
 * the order given). Entries at other joints are left out: those joints do not move. Rows in
 * increasing order, each row's entries by local column (equal columns in their order in R).
 * Called once per window and strip, so it works in scratch arrays kept per R rather than maps.
 */
export function restrictedMatrix(R: SparseMatrix, rowsOfJoint: Int32Array[], joints: number[]): { matrix: SparseMatrix; dofs: Int32Array } {
  let scratch = restrictScratch.get(R);
  if (!scratch) {
    scratch = { col: new Int32Array(R.cols).fill(-1), rowMark: new Int32Array(R.rows), stamp: 0 };
    restrictScratch.set(R, scratch);
  }
  if (scratch.stamp >= 0x7fffffff) {
    scratch.rowMark.fill(0);
    scratch.stamp = 0;
  }
  const stamp = ++scratch.stamp;
  const { col, rowMark } = scratch;
  const dofs = new Int32Array(2 * joints.length);
  joints.forEach((j, t) => {
    dofs[2 * t] = 2 * j;
    dofs[2 * t + 1] = 2 * j + 1;
  });
  try {
    joints.forEach((j, t) => {
      col[2 * j] = 2 * t;
      col[2 * j + 1] = 2 * t + 1;
    });
    let nRows = 0;
    for (const j of joints)
      for (const r of rowsOfJoint[j])
        if (rowMark[r] !== stamp) {
          rowMark[r] = stamp;
          nRows++;
        }
    const rows = new Int32Array(nRows);
    let t = 0;
    for (const j of joints)
      for (const r of rowsOfJoint[j])
        if (rowMark[r] === stamp) {
          rowMark[r] = -stamp;
          rows[t++] = r;
        }
    rows.sort();
    let nnz = 0;
    for (const r of rows) for (let k = R.rowPtr[r]; k < R.rowPtr[r + 1]; k++) if (col[R.colIdx[k]] >= 0) nnz++;
    const rowPtr = new Int32Array(nRows + 1);
    const colIdx = new Int32Array(nnz);
    const re = new Float64Array(nnz);
    const im = R.im ? new Float64Array(nnz) : null;
    let e = 0;
    rows.forEach((r, q) => {
      const start = e;
      for (let k = R.rowPtr[r]; k < R.rowPtr[r + 1]; k++) {
        const c = col[R.colIdx[k]];
        if (c < 0) continue;
        // insertion by local column, after equal ones (a stable sort of the row)
        let p = e++;
        while (p > start && colIdx[p - 1] > c) {
          colIdx[p] = colIdx[p - 1];
          re[p] = re[p - 1];
          if (im) im[p] = im[p - 1];
          p--;
        }
        colIdx[p] = c;
        re[p] = R.re[k];
        if (im) im[p] = R.im![k];
      }
      rowPtr[q + 1] = e;
    });
    return { matrix: { rows: nRows, cols: dofs.length, rowPtr, colIdx, re, im }, dofs };
  } finally {
    for (const j of joints) {
      col[2 * j] = -1;
      col[2 * j + 1] = -1;
    }
  }
}

/**
 * The rank rule applied to candidate vectors supported on `dofs` (orthonormalised first): the
 * directions x of their span with ‖R x‖ ≤ the global absolute tolerance, from the singular
 * values of R·X (rows touching the dofs), computed directly. Returns orthonormal vectors.
 */
export function certify(ctx: Ctx, dofs: Int32Array, raw: { re: Float64Array; im: Float64Array }[]): { re: Float64Array; im: Float64Array }[] {
  const cand: { re: Float64Array; im: Float64Array }[] = [];
  for (const x of raw) {
    const v = { re: Float64Array.from(x.re), im: Float64Array.from(x.im) };
    for (let pass = 0; pass < 2; pass++) for (const u of cand) subtractProjection(v, u);
    const nv = norm(v);
    if (nv <= 1e-3 * norm(x)) continue;
    scaleInPlace(v, 1 / nv);
    cand.push(v);
  }
  const k = cand.length;
  if (k === 0) return [];
  const R = ctx.R;
  const where = new Map<number, number>();
  dofs.forEach((d, t) => where.set(d, t));
  const rowSet = new Set<number>();
  for (let t = 0; t < dofs.length; t += 2) for (const r of ctx.rowsOfJoint[dofs[t] >> 1]) rowSet.add(r);
  const rows = [...rowSet];
  const cplx = R.im !== null || cand.some((v) => v.im.some((x) => x !== 0));
  const f = cplx ? 2 : 1;
  const Y = new Matrix(Math.max(f * rows.length, f * k), f * k);
  rows.forEach((r, i) => {
    for (let b = 0; b < k; b++) {
      let sr = 0;
      let si = 0;
      for (let e = R.rowPtr[r]; e < R.rowPtr[r + 1]; e++) {
        const t = where.get(R.colIdx[e]);
        if (t === undefined) continue;
        const ar = R.re[e];
        const ai = R.im ? R.im[e] : 0;
        sr += ar * cand[b].re[t] - ai * cand[b].im[t];
        si += ar * cand[b].im[t] + ai * cand[b].re[t];
      }
      Y.set(i, b, sr);
      if (cplx) {
        // embedding of the complex column (re; im) and its partner (−im; re)
        Y.set(i + rows.length, b, si);
        Y.set(i, b + k, -si);
        Y.set(i + rows.length, b + k, sr);
      }
    }
  });
  const svd = new SingularValueDecomposition(Y, { computeLeftSingularVectors: false, computeRightSingularVectors: true });
  const sig = svd.diagonal;
  const V = svd.rightSingularVectors;
  const out: { re: Float64Array; im: Float64Array }[] = [];
  for (let c = 0; c < f * k; c++) {
    if (!(sig[c] <= ctx.absTol)) continue;
    const col = V.getColumn(c);
    const y = cplx ? { re: Float64Array.from(col.slice(0, k)), im: Float64Array.from(col.slice(k)) } : { re: Float64Array.from(col), im: new Float64Array(k) };
    const v = combine(cand, y);
    for (let pass = 0; pass < 2; pass++) for (const u of out) subtractProjection(v, u);
    const nv = norm(v);
    if (nv < 0.5) continue; // the embedded partner of a vector already taken
    scaleInPlace(v, 1 / nv);
    out.push(v);
  }
  return out;
}

/**
 * THE RESTRICTED SOLVE. Orthonormal basis of the flexes supported on `joints`:
 *  - 'restricted-svd': the null space of the restricted matrix (dense SVD, src/linalg/dense.ts),
 *    σ ≤ the global absolute tolerance counting as zero;
 *  - 'kernel-intersection': {x ∈ ker R : x = 0 outside the joints}, from the global flex basis Φ:
 *    candidates Φy with ‖Φ_outside y‖ ≤ SPAN_TOLERANCE (the null space of Φ_outsideᴴΦ_outside =
 *    I − Φ_SᴴΦ_S by pivoted Cholesky), cut to the joints and kept by the rank rule
 *    (`certify`: ‖R x‖ ≤ the global absolute tolerance).
 *  - 'restricted-sparse': the same null space by the banded sparse solver
 *    (src/flex/solve-sparse.ts), for regions of SPARSE_MIN_COLUMNS columns or more.
 * 'auto' takes the kernel intersection when an operation count says it is cheaper, else the
 * sparse solver for large regions and the dense SVD for small ones.
 */
export function restrictedKernel(ctx: Ctx, joints: number[]): Block {
  const nCols = 2 * joints.length;
  let method: RestrictedMethod;
  if (ctx.method !== 'auto') method = ctx.method;
  else {
    const f = ctx.analysisFlexes;
    const c = ctx.complex ? 8 : 1;
    const rowsEstimate = nCols * 1.3;
    const svdCost = c * (4 * rowsEstimate * nCols * nCols + 8 * nCols ** 3);
    const gramCost = (ctx.complex ? 4 : 1) * (0.5 * nCols * f * f + f ** 3);
    // the intersection needs the global flex basis: worth computing for it only when small
    const basisAtHand = ctx.basisReady() || ctx.n <= KERNEL_INTERSECTION_MAX_COLUMNS;
    method = gramCost < svdCost && basisAtHand ? 'kernel-intersection' : nCols >= SPARSE_MIN_COLUMNS ? 'restricted-sparse' : 'restricted-svd';
  }
  ctx.used[method]++;
  if (method === 'kernel-intersection') return kernelIntersection(ctx, joints);
  const { matrix, dofs } = restrictedMatrix(ctx.R, ctx.rowsOfJoint, joints);
  // translated regions away from the sides have identical restricted matrices: solve once
  const key = KernelCache.key(method, matrix);
  const known = ctx.kernels.get(key);
  if (known) return { dofs, vectors: known };
  let vectors: { re: Float64Array; im: Float64Array }[];
  if (method === 'restricted-sparse') vectors = sparseRestrictedKernel(matrix, ctx);
  else {
    const sigma = singularValues(matrix);
    let rank = 0;
    for (const s of sigma) if (s > ctx.absTol) rank++;
    const dim = nCols - rank;
    vectors = dim === 0 ? [] : nullSpace(matrix, dim).vectors.map((v) => ({ re: v.re, im: v.im }));
  }
  ctx.kernels.set(key, vectors);
  return { dofs, vectors };
}

/**
 * The kernel intersection: {x ∈ ker R : x = 0 outside the joints} from the global flex basis Φ
 * (see restrictedKernel).
 */
function kernelIntersection(ctx: Ctx, joints: number[]): Block {
  const nCols = 2 * joints.length;
  const phi = ctx.flexBasis();
  const f = phi.length;
  const dofs = new Int32Array(nCols);
  joints.forEach((j, t) => {
    dofs[2 * t] = 2 * j;
    dofs[2 * t + 1] = 2 * j + 1;
  });
  if (f === 0) return { dofs, vectors: [] };
  // Φ_S gathered column by column (contiguous), then H = I − Φ_SᴴΦ_S = Φ_outsideᴴΦ_outside
  const Xre = phi.map((v) => Float64Array.from(dofs, (d) => v.re[d]));
  const Xim = ctx.basisComplex() ? phi.map((v) => Float64Array.from(dofs, (d) => v.im[d])) : null;
  const Hre = new Float64Array(f * f);
  const Him = Xim ? new Float64Array(f * f) : null;
  for (let a = 0; a < f; a++) {
    const ar = Xre[a];
    const ai = Xim?.[a];
    for (let b = a; b < f; b++) {
      const br = Xre[b];
      let sr = 0;
      let si = 0;
      if (ai && Xim) {
        const bi = Xim[b];
        for (let t = 0; t < nCols; t++) {
          sr += ar[t] * br[t] + ai[t] * bi[t];
          si += ar[t] * bi[t] - ai[t] * br[t];
        }
      } else for (let t = 0; t < nCols; t++) sr += ar[t] * br[t];
      Hre[a * f + b] = (a === b ? 1 : 0) - sr;
      Hre[b * f + a] = (a === b ? 1 : 0) - sr;
      if (Him) {
        Him[a * f + b] = -si;
        Him[b * f + a] = si;
      }
    }
  }
  const vectors: { re: Float64Array; im: Float64Array }[] = [];
  for (const y of psdNullSpace(Hre, Him, f, ctx.spanTol ** 2)) {
    const v = { re: new Float64Array(nCols), im: new Float64Array(nCols) };
    for (let a = 0; a < f; a++) {
      const yr = y.re[a];
      const yi = y.im[a];
      if (yr === 0 && yi === 0) continue;
      const pr = Xre[a];
      const pi = Xim ? Xim[a] : null;
      for (let q = 0; q < nCols; q++) {
        const xr = pr[q];
        const xi = pi ? pi[q] : 0;
        v.re[q] += xr * yr - xi * yi;
        v.im[q] += xr * yi + xi * yr;
      }
    }
    vectors.push(v);
  }
  // re-orthonormalise (the vectors are Φy cut to S, where Φy is below SPAN_TOLERANCE outside)
  const ortho: { re: Float64Array; im: Float64Array }[] = [];
  for (const v of vectors) {
    for (let pass = 0; pass < 2; pass++) for (const u of ortho) subtractProjection(v, u);
    const nv = norm(v);
    if (nv < 0.5) continue;
    scaleInPlace(v, 1 / nv);
    ortho.push(v);
  }
  if (ortho.length === 0) return { dofs, vectors: [] };
  // I − Φ_SᴴΦ_S cancels to about 1e-16, so the candidates are only good to ~1e-8 outside the
  // joints: project each onto the null space of the restricted matrix, then apply the rank rule
  const { matrix } = restrictedMatrix(ctx.R, ctx.rowsOfJoint, joints);
  const polished = ortho.map((x) => projectOntoNullSpace(matrix, x, ctx.absTol));
  const cert = certify(ctx, dofs, polished);
  return { dofs, vectors: cert };
}

/** Regions with at least this many columns go to the banded sparse solver rather than a dense SVD. */
export const SPARSE_MIN_COLUMNS = 48;

/**
 * ker of a restricted matrix by the banded sparse solver (src/flex/solve-sparse.ts), cut at
 * relative × σ_max of the whole R (= the global absolute tolerance), so the decision is the
 * global rule's.
 */
function sparseRestrictedKernel(matrix: SparseMatrix, ctx: Ctx): { re: Float64Array; im: Float64Array }[] {
  const spaces = sparseSpaces(matrix, { relative: ctx.relative, memoryLimit: ctx.memoryLimit, sigmaMax: ctx.sigmaMax });
  if (spaces.decision.rank === matrix.cols) return [];
  return spaces.flexBasis().vectors.map((v) => ({ re: v.re, im: v.im }));
}

/**
 * The kernel intersection is chosen (when cheaper per region) only once the global flex basis
 * exists, or when the whole matrix has at most this many columns (its basis is then cheap).
 */
export const KERNEL_INTERSECTION_MAX_COLUMNS = 2400;

/** A restricted matrix and its method, with a 32-bit hash of its content (KernelCache.key). */
export interface KernelKey {
  method: RestrictedMethod;
  matrix: SparseMatrix;
  hash: number;
}

type Vectors = { re: Float64Array; im: Float64Array }[];

/** FNV-1a over 32-bit words (common practice), continued from `h`. */
function hashWords(h: number, words: Uint32Array | Int32Array): number {
  for (let i = 0; i < words.length; i++) h = Math.imul(h ^ words[i], 0x01000193);
  return h;
}

const floatWords = (x: Float64Array) => new Uint32Array(x.buffer, x.byteOffset, 2 * x.length);

/** Equal bit for bit (so 0 and −0 differ, as distinct inputs may give distinct vectors). */
function sameBits(x: Float64Array, y: Float64Array): boolean {
  if (x.length !== y.length) return false;
  const a = floatWords(x);
  const b = floatWords(y);
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}

function sameInts(x: Int32Array, y: Int32Array): boolean {
  if (x.length !== y.length) return false;
  for (let i = 0; i < x.length; i++) if (x[i] !== y[i]) return false;
  return true;
}

function sameMatrix(A: SparseMatrix, B: SparseMatrix): boolean {
  if (A.rows !== B.rows || A.cols !== B.cols || (A.im === null) !== (B.im === null)) return false;
  return sameInts(A.rowPtr, B.rowPtr) && sameInts(A.colIdx, B.colIdx) && sameBits(A.re, B.re) && (A.im === null || sameBits(A.im, B.im!));
}

/**
 * Restricted kernels by the exact content of their restricted matrix (sizes, structure and the
 * bits of every entry) and the method: the same input gives the same vectors, so a region whose
 * matrix was met before (a translate away from the sides) is not solved again. Looked up by a
 * hash of the content; a hit is confirmed by comparing the matrices entry by entry, so a hash
 * collision only costs a comparison. Bounded at about 64 MB (MAX_WORDS numbers, the kept
 * matrices included); past that, kernels are solved and not kept.
 */
export class KernelCache {
  private map = new Map<number, { key: KernelKey; vectors: Vectors }[]>();
  private words = 0;
  static readonly MAX_WORDS = 8e6;

  static key(method: RestrictedMethod, A: SparseMatrix): KernelKey {
    let h = 0x811c9dc5;
    for (let i = 0; i < method.length; i++) h = Math.imul(h ^ method.charCodeAt(i), 0x01000193);
    h = Math.imul(h ^ A.rows, 0x01000193);
    h = Math.imul(h ^ A.cols, 0x01000193);
    h = hashWords(h, A.rowPtr);
    h = hashWords(h, A.colIdx);
    h = hashWords(h, floatWords(A.re));
    h = A.im ? hashWords(h, floatWords(A.im)) : Math.imul(h ^ 0x2d, 0x01000193);
    return { method, matrix: A, hash: h >>> 0 };
  }

  get(key: KernelKey): Vectors | undefined {
    const bucket = this.map.get(key.hash);
    if (!bucket) return undefined;
    for (const e of bucket) if (e.key.method === key.method && sameMatrix(e.key.matrix, key.matrix)) return e.vectors;
    return undefined;
  }

  set(key: KernelKey, vectors: Vectors): void {
    const A = key.matrix;
    const w = vectors.reduce((t, v) => t + 2 * v.re.length, 0) + (A.rowPtr.length + A.colIdx.length) / 2 + A.re.length * (A.im ? 2 : 1);
    if (this.words + w > KernelCache.MAX_WORDS) return;
    this.words += w;
    // a copy: a caller or solver changing the matrix later cannot change what was cached
    const kept: KernelKey = { method: key.method, hash: key.hash, matrix: { ...A, rowPtr: A.rowPtr.slice(), colIdx: A.colIdx.slice(), re: A.re.slice(), im: A.im ? A.im.slice() : null } };
    const bucket = this.map.get(key.hash);
    if (bucket) bucket.push({ key: kept, vectors });
    else this.map.set(key.hash, [{ key: kept, vectors }]);
  }
}
