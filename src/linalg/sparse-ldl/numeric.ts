/**
 * Numeric sparse LDLᴴ of A − shift·I (A real symmetric or complex Hermitian) on a symbolic
 * analysis (symbolic.ts): multifrontal, one dense front per supernode (I. S. Duff & J. K. Reid,
 * "The multifrontal solution of indefinite sparse symmetric linear equations", ACM Trans. Math.
 * Softw. 9, 302–325, 1983). A front gathers A's entries of the supernode's columns and its
 * children's update matrices (extend-add), factors its first columns in Crout form (each entry
 * one contiguous dot product) and passes the Schur complement of the rest to its parent.
 *
 * No pivoting, as in the band factorisation (banded.ts): a pivot at or below `tiny` is a
 * breakdown and the caller moves the shift. The negative pivots count the eigenvalues below
 * the shift (Sylvester's law of inertia), and `growth` is the band code's measure,
 * max_i (Σ_k |L_ik|²|D_k| + |D_i|) / max_i |A_ii − shift|, so the same backward-error bound
 * applies with the band's widths replaced by the pattern's (SymbolicFactor.dotLength, rowWidth).
 */
import { copyPanel, croutRowComplex, croutRowReal, croutRowsComplex, croutRowsReal, extendAddComplex, extendAddReal, pivotComplex, pivotReal, schurComplex, schurReal } from './factor-kernels.js';
import { CHUNK, solveColumns, type SolveData } from './solve.js';
import type { SymbolicFactor } from './symbolic.js';
import { inChunks, shareable, sharedFloats, SPLIT_WORK } from '../parallel/helper.js';

/** A Hermitian matrix in CSR form with both triangles stored (row i lists A_ij). */
export interface HermitianCsr {
  n: number;
  ptr: Int32Array;
  idx: Int32Array;
  re: Float64Array;
  /** Imaginary parts, or null for a real symmetric matrix. */
  im: Float64Array | null;
}

export interface SparseLdlOptions {
  /** Factor A − shift·I; default 0. */
  shift?: number;
  /** A pivot with |d| ≤ tiny is a breakdown; default 1e-13·max_i |A_ii − shift| (as bandLdl). */
  tiny?: number;
  onProgress?: (fraction: number) => void;
  /** Called between supernodes; may throw to cancel. */
  check?: () => void;
  /**
   * Keep L for solves (the default). With false only the pivots are kept: an inertia count needs
   * nothing else, and writing L (nnz(L) words of fresh memory) is a large share of its time.
   */
  keepL?: boolean;
}

/** The factor L D Lᴴ of P(A − shift·I)Pᵀ; solves take and return vectors in A's own ordering. */
export class SparseLdlFactor {
  constructor(
    readonly symbolic: SymbolicFactor,
    /** Supernode s's panel (rows × its columns, row-major) starts at panelPtr[s]. */
    readonly panelPtr: Float64Array,
    readonly re: Float64Array,
    readonly im: Float64Array | null,
    /** Pivots D in the factor's (new) ordering. */
    readonly d: Float64Array,
    readonly shift: number,
    readonly negatives: number,
    readonly growth: number,
    readonly breakdown: { index: number; pivot: number } | null,
    /** False when only the pivots were kept (SparseLdlOptions.keepL): no solves. */
    readonly solvable = true,
  ) {}

  /** The arrays a solve reads, on shared memory when the helper thread may take half the columns. */
  private solveData: SolveData | null = null;

  /** Solve (A − shift·I) x = b in place (xIm null for real data and a real factor). */
  solve(xRe: Float64Array, xIm: Float64Array | null): void {
    this.solveBlock([xRe], xIm ? [xIm] : null);
  }

  /**
   * Solve for several right-hand sides in place, in chunks of up to 32 laid out row-major (one
   * chunk buffer per part, reused across chunks). A real factor with complex right-hand sides
   * solves the real and imaginary parts apart. Many columns are split in two halves, the second
   * solved on the helper thread when one is installed (each column's arithmetic is the same).
   */
  solveBlock(cols: Float64Array[], colsIm: Float64Array[] | null): void {
    if (this.breakdown) throw new Error('sparse LDLᴴ: cannot solve with a factor that broke down');
    if (!this.solvable) throw new Error('sparse LDLᴴ: this factor kept only its pivots (keepL: false); factor again with keepL to solve');
    const complex = this.im !== null || colsIm !== null;
    if (complex && !colsIm) throw new Error('a complex factor needs complex right-hand sides');
    if (colsIm && colsIm.length !== cols.length) throw new RangeError(`solveBlock: ${cols.length} real parts but ${colsIm.length} imaginary parts; pass one imaginary part per column`);
    const { n } = this.symbolic;
    for (let q = 0; q < cols.length; q++) {
      if (cols[q].length !== n || (colsIm && colsIm[q].length !== n)) throw new RangeError(`solveBlock: column ${q} has length ${colsIm && colsIm[q].length !== n ? colsIm[q].length : cols[q].length}, the factor ${n}`);
    }
    const q = cols.length;
    if (q === 0) return;
    // chunks of about CHUNK columns (each column's arithmetic is the same in any chunk)
    const chunks = q * this.re.length < SPLIT_WORK ? 1 : Math.ceil(q / CHUNK);
    inChunks('solveColumns', solveColumns, [this.sharedSolveData(), cols, colsIm], chunks);
  }

  private sharedSolveData(): SolveData {
    if (this.solveData) return this.solveData;
    const sym = this.symbolic;
    this.solveData = {
      perm: shareable(sym.perm),
      superStart: shareable(sym.superStart),
      rowPtr: shareable(sym.rowPtr),
      superRows: shareable(sym.superRows),
      maxFront: sym.maxFront,
      panelPtr: shareable(this.panelPtr),
      re: shareable(this.re),
      im: this.im ? shareable(this.im) : null,
      d: shareable(this.d),
    };
    return this.solveData;
  }
}

/** Words of the factor's panels (per part: real, or each of real and imaginary). */
export function panelWords(sym: SymbolicFactor): number {
  let words = 0;
  for (let s = 0; s + 1 < sym.superStart.length; s++) words += (sym.rowPtr[s + 1] - sym.rowPtr[s]) * (sym.superStart[s + 1] - sym.superStart[s]);
  return words;
}

/** Bytes the numeric factorisation holds at its peak: panels, the largest front and its workspace, the update matrices. */
export function factorBytes(sym: SymbolicFactor, complex: boolean): number {
  const f = complex ? 2 : 1;
  let maxCols = 0;
  for (let s = 0; s + 1 < sym.superStart.length; s++) maxCols = Math.max(maxCols, sym.superStart[s + 1] - sym.superStart[s]);
  // update matrices: their stack at its peak (peakUpdateWords)
  return 8 * f * (panelWords(sym) + sym.maxFront * sym.maxFront + sym.maxFront * maxCols + sym.peakUpdateWords) + 8 * sym.n;
}

/** A − shift·I = P ᵀ L D Lᴴ P by the multifrontal method, no pivoting. */
export function sparseLdl(A: HermitianCsr, sym: SymbolicFactor, options: SparseLdlOptions = {}): SparseLdlFactor {
  const { n, superStart, rowPtr, superParent } = sym;
  if (A.n !== n) throw new RangeError(`sparseLdl: a ${A.n}×${A.n} matrix for an analysis of ${n} unknowns`);
  const shift = options.shift ?? 0;
  const complex = A.im !== null;
  // each loop below is its own function, and the fronts one call each: V8 compiles a long first
  // run of a loop with the feedback gathered so far, and dropped out of that code (to compile
  // it again) where a loop ended or a rarely taken branch was reached for the first time
  const diagMax = shiftedDiagonalMax(A, shift);
  const nsup = superStart.length - 1;
  const panelPtr = panelStarts(superStart, rowPtr);
  let maxCols = 0;
  for (let s = 0; s < nsup; s++) maxCols = Math.max(maxCols, superStart[s + 1] - superStart[s]);
  const keepL = options.keepL ?? true;
  const maxFront = sym.maxFront;
  const firstChild = new Int32Array(nsup).fill(-1);
  const nextSibling = new Int32Array(nsup).fill(-1);
  for (let s = nsup - 1; s >= 0; s--) {
    const p = superParent[s];
    if (p >= 0) {
      nextSibling[s] = firstChild[p];
      firstChild[p] = s;
    }
  }
  const st: Fronts = {
    A,
    sym,
    shift,
    tiny: options.tiny ?? 1e-13 * diagMax,
    keepL,
    panelPtr,
    LR: sharedFloats(keepL ? panelPtr[nsup] : 0),
    LI: complex ? sharedFloats(keepL ? panelPtr[nsup] : 0) : null,
    d: new Float64Array(n),
    rowSum: new Float64Array(n), // Σ_k |L_ik|²|D_k| per (new) row
    FR: new Float64Array(maxFront * maxFront),
    FI: complex ? new Float64Array(maxFront * maxFront) : null,
    WR: new Float64Array(maxFront * maxCols),
    WI: complex ? new Float64Array(maxFront * maxCols) : null,
    pos: new Int32Array(n),
    rel: new Int32Array(maxFront),
    gOut: new Float64Array(1),
    stackR: new Float64Array(sym.peakUpdateWords),
    stackI: complex ? new Float64Array(sym.peakUpdateWords) : null,
    top: 0,
    updateAt: new Int32Array(nsup).fill(-1),
    firstChild,
    nextSibling,
    negatives: 0,
    breakdown: null,
  };
  const totalWork = Math.max(1, sym.flops);
  let work = 0;
  // the first front reports too, so the report's branch is not new to code compiled mid-run
  let lastReport = -totalWork;
  for (let s = 0; s < nsup && factorFront(st, s); s++) {
    work += frontWork(rowPtr[s + 1] - rowPtr[s], superStart[s + 1] - superStart[s]);
    if (work - lastReport > 0.02 * totalWork) {
      lastReport = work;
      options.onProgress?.(work / totalWork);
      options.check?.();
    }
  }
  options.onProgress?.(1);
  const sMax = rowGrowthMax(st.rowSum, st.d);
  return new SparseLdlFactor(sym, panelPtr, st.LR, st.LI, st.d, shift, st.negatives, diagMax > 0 ? sMax / diagMax : 1, st.breakdown, keepL);
}

/** What the fronts of one factorisation share: the input, the factor so far, the workspace. */
interface Fronts {
  A: HermitianCsr;
  sym: SymbolicFactor;
  shift: number;
  tiny: number;
  keepL: boolean;
  panelPtr: Float64Array;
  LR: Float64Array;
  LI: Float64Array | null;
  d: Float64Array;
  rowSum: Float64Array;
  FR: Float64Array;
  FI: Float64Array | null;
  WR: Float64Array;
  WI: Float64Array | null;
  pos: Int32Array;
  rel: Int32Array;
  gOut: Float64Array;
  /**
   * The update matrices waiting for their parent, on a stack: the supernodes come in a postorder
   * (symbolic.ts), so a front's children's matrices are the topmost ones when it is assembled, and
   * its own goes where theirs were. One buffer of the peak's size, written front after front, in
   * place of a matrix allocated (and its fresh pages faulted in) per front.
   */
  stackR: Float64Array;
  stackI: Float64Array | null;
  top: number;
  /** Where supernode s's update matrix starts on the stack (−1: none waiting). */
  updateAt: Int32Array;
  firstChild: Int32Array;
  nextSibling: Int32Array;
  negatives: number;
  breakdown: SparseLdlFactor['breakdown'];
}

/** max_v |A_vv − shift| (the diagonal entries summed where A lists one twice). */
function shiftedDiagonalMax(A: HermitianCsr, shift: number): number {
  let diagMax = 0;
  for (let v = 0; v < A.n; v++) {
    let a = 0;
    for (let t = A.ptr[v], tEnd = A.ptr[v + 1]; t < tEnd; t++) if (A.idx[t] === v) a += A.re[t];
    diagMax = Math.max(diagMax, Math.abs(a - shift));
  }
  return diagMax;
}

/** Where each supernode's panel (its rows × its columns) starts in L, and L's length last. */
function panelStarts(superStart: Int32Array, rowPtr: Int32Array): Float64Array {
  const nsup = superStart.length - 1;
  const panelPtr = new Float64Array(nsup + 1);
  for (let s = 0; s < nsup; s++) panelPtr[s + 1] = panelPtr[s] + (rowPtr[s + 1] - rowPtr[s]) * (superStart[s + 1] - superStart[s]);
  return panelPtr;
}

/** Σ_k (nf − k)² over a front's w columns: its share of the flops, for progress. */
function frontWork(nf: number, w: number): number {
  let work = 0;
  for (let k = 0; k < w; k++) work += (nf - k) * (nf - k);
  return work;
}

/** max_i (rowSum_i + |d_i|): the numerator of the growth. */
function rowGrowthMax(rowSum: Float64Array, d: Float64Array): number {
  let sMax = 0;
  for (let i = 0; i < d.length; i++) sMax = Math.max(sMax, rowSum[i] + Math.abs(d[i]));
  return sMax;
}

/**
 * Supernode s: assemble its front (A's entries and the children's update matrices), factor its
 * columns, keep the panel and pass the Schur complement up. False at a breakdown (st.breakdown).
 */
function factorFront(st: Fronts, s: number): boolean {
  const { A, sym, pos, rel, FR, FI, WR, WI, d, gOut, stackR, stackI, updateAt } = st;
  const { order, perm, superStart, rowPtr, superRows, superParent } = sym;
  const f = superStart[s];
  const w = superStart[s + 1] - f;
  const r0 = rowPtr[s];
  const nf = rowPtr[s + 1] - r0;
  const nu = nf - w;
  for (let t = 0; t < nf; t++) pos[superRows[r0 + t]] = t;
  FR.fill(0, 0, nf * nf);
  if (FI) FI.fill(0, 0, nf * nf);
  assembleFront(A, order, perm, pos, f, w, nf, st.shift, FR, FI);
  // extend-add of the children's update matrices
  let base = st.top;
  let words = 0;
  for (let c = st.firstChild[s]; c >= 0; c = st.nextSibling[c]) {
    const at = updateAt[c];
    if (at < 0) continue;
    const cw = superStart[c + 1] - superStart[c];
    const cr0 = rowPtr[c] + cw;
    const nuc = rowPtr[c + 1] - cr0;
    for (let a = 0; a < nuc; a++) rel[a] = pos[superRows[cr0 + a]];
    const U = stackR.subarray(at, at + nuc * nuc);
    if (stackI) extendAddComplex(FR, FI!, U, stackI.subarray(at, at + nuc * nuc), rel, nuc, nf);
    else extendAddReal(FR, U, rel, nuc, nf);
    updateAt[c] = -1;
    base = Math.min(base, at);
    words += nuc * nuc;
  }
  // the children's matrices were the top of the stack; their space is free again
  if (base + words !== st.top) throw new Error(`sparseLdl: supernode ${s}'s children's update matrices are not the top of the stack (the supernodes are not in a postorder)`);
  st.top = base;
  // Crout rows: L_ij for j < min(i, w), D_i for i < w; W holds L_ik·D_k. Rows go in blocks of
  // four: their entries left of the block's first row (every pivot they need is known) in
  // register blocks, then row by row the rest of the block's triangle and the pivot.
  for (let i0 = 0; i0 < nf; i0 += 4) {
    const i1 = Math.min(nf, i0 + 4);
    const jShared = Math.min(i0, w);
    if (!FI) croutRowsReal(FR, WR, d, f, nf, w, i0, i1, jShared);
    else croutRowsComplex(FR, FI, WR, WI!, d, f, nf, w, i0, i1, jShared);
    for (let i = i0; i < i1; i++) {
      // the rest of row i's entries, then D_i = F_ii − Σ_k W_ik conj(L_ik) and the growth term Σ_k |W_ik conj(L_ik)|
      let dd: number;
      if (!FI) {
        croutRowReal(FR, WR, d, f, nf, w, i, jShared, Math.min(i, w));
        dd = pivotReal(FR, WR, nf, w, i, gOut);
      } else {
        croutRowComplex(FR, FI, WR, WI!, d, f, nf, w, i, jShared, Math.min(i, w));
        dd = pivotComplex(FR, FI, WR, WI!, nf, w, i, gOut);
      }
      if (i < w) {
        if (!(Math.abs(dd) > st.tiny)) {
          st.breakdown = { index: f + i, pivot: dd };
          return false;
        }
        d[f + i] = dd;
        if (dd < 0) st.negatives++;
      }
      st.rowSum[superRows[r0 + i]] += gOut[0];
    }
  }
  // keep the panel (rows × w)
  if (st.keepL) {
    copyPanel(FR, st.LR, st.panelPtr[s], nf, w);
    if (st.LI) copyPanel(FI!, st.LI, st.panelPtr[s], nf, w);
  }
  // the Schur complement of the rows below, for the parent
  if (nu > 0 && superParent[s] >= 0) {
    const at = st.top;
    if (at + nu * nu > stackR.length) throw new Error(`sparseLdl: the update stack (${stackR.length} words) is too small at supernode ${s}`);
    const U = stackR.subarray(at, at + nu * nu);
    if (!FI) schurReal(FR, WR, U, nf, w, nu);
    else schurComplex(FR, FI, WR, WI!, U, stackI!.subarray(at, at + nu * nu), nf, w, nu);
    updateAt[s] = at;
    st.top = at + nu * nu;
  }
  return true;
}

/**
 * A's entries of columns f … f+w−1 (new numbering) on and below the diagonal into the front
 * (row pos[i], column j − f): (i, j) = conj(A_(old j)(old i)); the shift off the diagonal.
 */
function assembleFront(A: HermitianCsr, order: Int32Array, perm: Int32Array, pos: Int32Array, f: number, w: number, nf: number, shift: number, FR: Float64Array, FI: Float64Array | null): void {
  for (let j = f; j < f + w; j++) {
    const v = order[j];
    const cj = j - f;
    for (let t = A.ptr[v], tEnd = A.ptr[v + 1]; t < tEnd; t++) {
      const i = perm[A.idx[t]];
      if (i < j) continue;
      const at = pos[i] * nf + cj;
      FR[at] += A.re[t];
      if (FI && i !== j) FI[at] -= A.im![t];
    }
    FR[cj * nf + cj] -= shift;
  }
}
