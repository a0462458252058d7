/**
 * The Bloch reduction solver: flex and self-stress spaces of a twisted supercell from small
 * blocks, one per Bloch phase.
 *
 * Let an axis be twisted with phase θ (turns) over N cells. The N phases along it are
 * φ_m = (θ + m)/N, m = 0…N−1. Put u(i, j, s) = e(φ·cell) v(s) (e(t) = exp 2πit, cell taken
 * only along twisted axes) into the row of bar a→b from cell c whose far end wraps w times:
 *     −p·u(c, a) + e(θ·w) p·u(c + shift − N·w, b)
 *   = e(φ·c) [ −p·v(a) + e(φ·shift) e((θ − Nφ)·w) p·v(b) ]  and  θ − Nφ = −m is an integer,
 * so the row is e(φ·c) times the row of the same bar in the ONE-cell-wide supercell twisted by
 * φ, whose wrap counts equal the shifts. Hence, with V the columns u above scaled by 1/√M and
 * W the rows e(φ·c)/√M on the bar orbits (M = number of phases; both unitary by the discrete
 * Fourier orthogonality Σ_c e((φ − φ')·c) = M δ), R = W · blockdiag(B_φ) · Vᴴ where
 *   both axes twisted:  B_φ = R(buildSupercell(fw, [1, 1],  twist φ1, φ2))  (the symbol Φ),
 *   x twisted only:     B_φ = R(buildSupercell(fw, [1, N2], x twist φ1, y as given)),
 *   y twisted only:     B_φ = R(buildSupercell(fw, [N1, 1], x as given, y twist φ2)).
 * A free or pinned axis never wraps, so its cells are carried inside the block unchanged.
 * Consequences used here:
 *  - the singular values of R are exactly the union of those of the blocks (plus the
 *    structural zeros that fill min(rows, cols)); the rank rule is applied to that union at
 *    one absolute tolerance relative·σ_max(R), so counts and gap match the dense path;
 *  - ker R = ⊕ V·ker B_φ and ker Rᴴ = ⊕ W·ker B_φᴴ, each orthonormal as assembled.
 * Real boundaries (every θ ≡ 0 or ½): blocks φ and −φ are complex conjugates. A self-conjugate
 * block (φ ∈ {0, ½} per axis) is real and its kernel vectors times ±1 phases are real; for a
 * conjugate pair, √2·Re u and √2·Im u of the orthonormal vectors u of one block are an exact
 * orthonormal real basis of both sectors (the bilinear products Σ u_k u_l vanish between
 * different Fourier sectors), so the basis is real, as on the dense path.
 * Rows of R map to block rows through (bar source, cell along untwisted axes); both builders
 * iterate bars the same way, which solveBloch checks row by row.
 */
import { InputError } from '../errors.js';
import { throwIfAborted, type SolveOptions, type SolvedSpaces, type SpaceSolver } from '../flex/solver.js';
import type { CVec } from '../linalg/complex.js';
import { checkDenseFits, nullSpace, singularValues, type NullBasis } from '../linalg/dense.js';
import { decideRank } from '../linalg/rank.js';
import { conjugateTranspose, type SparseMatrix } from '../linalg/sparse.js';
import { reduceTurns, type AxisRule, type Boundary } from '../supercell/boundary.js';
import { rigidityMatrix } from '../supercell/rigidity.js';
import { buildSupercell, jointIndex, type Supercell } from '../supercell/supercell.js';
import { jacobiSingularValues, jacobiSvd } from './jacobi.js';

// ---------------------------------------------------------------------------------------------
// Block solver choice: THE ONE PLACE where the solver of a single Bloch block is picked.
// Blocks of a doubly twisted supercell are tiny (bars × 2·joints of one cell); strip blocks are
// 1×N2 (or N1×1) supercells and are banded, so a banded sparse solver can be swapped in here.

interface BlockSolver {
  name: string;
  /** The min(rows, cols) singular values of the block (any order). */
  singularValues(A: SparseMatrix): Float64Array;
  /** Orthonormal basis of ker A of the given dimension. */
  nullSpace(A: SparseMatrix, dim: number): NullBasis;
  /** Throws TooLargeError when the block does not fit the memory limit. */
  checkFits(A: SparseMatrix, vectors: boolean, memoryLimit: number): void;
}

const DENSE_BLOCKS: BlockSolver = {
  name: 'dense',
  singularValues,
  nullSpace,
  checkFits: (A, vectors, limit) => checkDenseFits(A.rows, A.cols, A.im !== null, vectors, limit),
};

/** Column-major dense copy of A (rows padded with zeros up to `minRows`). */
function columnMajor(A: SparseMatrix, minRows: number): { re: Float64Array; im: Float64Array; m: number } {
  const m = Math.max(A.rows, minRows);
  const re = new Float64Array(m * A.cols);
  const im = new Float64Array(m * A.cols);
  for (let r = 0; r < A.rows; r++)
    for (let k = A.rowPtr[r]; k < A.rowPtr[r + 1]; k++) {
      re[A.colIdx[k] * m + r] += A.re[k];
      if (A.im) im[A.colIdx[k] * m + r] += A.im[k];
    }
  return { re, im, m };
}

/** Tiny blocks (one unit cell): one-sided Jacobi, accurate and free of per-call setup cost. */
const JACOBI_BLOCKS: BlockSolver = {
  name: 'jacobi',
  singularValues(A) {
    if (A.rows === 0 || A.cols === 0) return new Float64Array(0);
    const d = columnMajor(A, 0);
    return jacobiSingularValues(d.re, d.im, d.m, A.cols);
  },
  nullSpace(A, dim) {
    const real = A.im === null;
    if (dim === 0) return { real, vectors: [] };
    const n = A.cols;
    const d = columnMajor(A, n);
    const svd = jacobiSvd(d.re, d.im, d.m, n);
    const vectors: CVec[] = [];
    for (let c = n - dim; c < n; c++) {
      const re = svd.vRe.slice(c * n, (c + 1) * n);
      const im = real ? new Float64Array(n) : svd.vIm.slice(c * n, (c + 1) * n);
      vectors.push({ re, im });
    }
    return { real, vectors };
  },
  checkFits: () => undefined,
};

/** Unit-cell blocks up to this many columns go to Jacobi; larger (strip) blocks to the dense SVD. */
const JACOBI_MAX_COLUMNS = 48;

function chooseBlockSolver(_kind: BlochKind, block: Supercell): BlockSolver {
  return 2 * block.jointCount <= JACOBI_MAX_COLUMNS ? JACOBI_BLOCKS : DENSE_BLOCKS;
}

// ---------------------------------------------------------------------------------------------

/** Which axes are twisted: both (blocks are single cells) or one (blocks are strips). */
export type BlochKind = 'both' | 'x' | 'y';

export interface BlochBlock {
  /** Phase index along each axis (0 along an untwisted axis). */
  m: [number, number];
  /** The block's phase φ in turns along each twisted axis (0 along an untwisted one). */
  phase: [number, number];
  supercell: Supercell;
  matrix: SparseMatrix;
  /** Index of the block with the conjugate phase −φ (itself when self-conjugate). */
  conjugate: number;
}

export interface BlochPlan {
  kind: BlochKind;
  /** Number of phases along each axis (1 along an untwisted axis); blocks = product. */
  phases: [number, number];
  /** Cells of each block along each axis. */
  blockCells: [number, number];
  blocks: BlochBlock[];
}

function twisted(r: AxisRule): boolean {
  return r.kind === 'twist';
}

/** exp(2πi t), exact for t a multiple of ¼. */
function cis(t: number): [number, number] {
  const r = t - Math.floor(t);
  const q = 4 * r;
  if (Number.isInteger(q)) return ([[1, 0], [0, 1], [-1, 0], [0, -1]] as [number, number][])[q % 4];
  const a = 2 * Math.PI * r;
  return [Math.cos(a), Math.sin(a)];
}

/**
 * φ·c along one axis in turns, reduced without losing digits for large c:
 * ((θ + m)·c)/N = ((m·c mod N) + θ·c)/N (mod 1).
 */
function turnsAlong(theta: number, m: number, N: number, c: number): number {
  const k = (((m * c) % N) + N) % N;
  return (k + theta * c) / N;
}

/** The twist of an axis reduced to [0, 1), or 0 for an untwisted axis. */
function thetaOf(r: AxisRule): number {
  return r.kind === 'twist' ? reduceTurns(r.theta) : 0;
}

/**
 * The phases and blocks of a supercell with at least one twisted axis. Throws InputError
 * (naming --solver) when no axis is twisted.
 */
export function blochPlan(sc: Supercell): BlochPlan {
  const b = sc.boundary;
  const tx = twisted(b.x);
  const ty = twisted(b.y);
  if (!tx && !ty) {
    throw new InputError('The bloch solver cannot be used for this boundary:', [
      {
        where: '--solver',
        what: 'bloch needs at least one twisted or periodic axis, and here both axes have free or pinned sides',
        fix: 'use --solver dense (or auto), or make an axis periodic or twisted with --bc, e.g. --bc x=periodic',
      },
    ]);
  }
  const kind: BlochKind = tx && ty ? 'both' : tx ? 'x' : 'y';
  const [N1, N2] = sc.cells;
  const phases: [number, number] = [tx ? N1 : 1, ty ? N2 : 1];
  const blockCells: [number, number] = [tx ? 1 : N1, ty ? 1 : N2];
  const th: [number, number] = [thetaOf(b.x), thetaOf(b.y)];
  const realBoundary = sc.real;
  const blocks: BlochBlock[] = [];
  const index = (m1: number, m2: number) => m2 * phases[0] + m1;
  for (let m2 = 0; m2 < phases[1]; m2++) {
    for (let m1 = 0; m1 < phases[0]; m1++) {
      const phase: [number, number] = [tx ? (th[0] + m1) / N1 : 0, ty ? (th[1] + m2) / N2 : 0];
      // The conjugate phase −φ ≡ (θ + m̄)/N needs θ ∈ {0, ½}: m̄ = (−2θ − m) mod N.
      let conjugate = -1;
      if (realBoundary) {
        const bar = (theta: number, m: number, N: number) => (((-Math.round(2 * theta) - m) % N) + N) % N;
        conjugate = index(tx ? bar(th[0], m1, N1) : 0, ty ? bar(th[1], m2, N2) : 0);
        // A self-conjugate phase is 0 or ½ exactly; write it so the block is exactly real.
        if (conjugate === index(m1, m2)) {
          phase[0] = Math.round(2 * phase[0]) / 2;
          phase[1] = Math.round(2 * phase[1]) / 2;
        }
      }
      const boundary: Boundary = {
        x: tx ? { kind: 'twist', theta: phase[0] } : b.x,
        y: ty ? { kind: 'twist', theta: phase[1] } : b.y,
      };
      const supercell = buildSupercell(sc.framework, blockCells, boundary);
      blocks.push({ m: [m1, m2], phase, supercell, matrix: rigidityMatrix(supercell), conjugate });
    }
  }
  return { kind, phases, blockCells, blocks };
}

/** Where each full column and row of R sits in a block, and the cell that carries its phase. */
interface IndexMap {
  /** Block column of each full column. */
  col: Int32Array;
  /** Cell (i, j) of the joint of each full column (2 entries per column). */
  colCell: Int32Array;
  /** Block row of each full row. */
  row: Int32Array;
  /** Cell (i, j) of the `from` end of each full row (2 entries per row). */
  rowCell: Int32Array;
}

function indexMap(sc: Supercell, plan: BlochPlan): IndexMap {
  const tx = plan.kind !== 'y';
  const ty = plan.kind !== 'x';
  const [n1b] = plan.blockCells;
  const S = sc.sites;
  const col = new Int32Array(2 * sc.jointCount);
  const colCell = new Int32Array(4 * sc.jointCount);
  for (let k = 0; k < sc.jointCount; k++) {
    const i = sc.jointCells[2 * k];
    const j = sc.jointCells[2 * k + 1];
    const kb = jointIndex(tx ? 0 : i, ty ? 0 : j, sc.jointSites[k], n1b, S);
    col[2 * k] = 2 * kb;
    col[2 * k + 1] = 2 * kb + 1;
    colCell.set([i, j, i, j], 4 * k);
  }
  const ref = plan.blocks[0].supercell;
  const key = (source: number, ci: number, cj: number) => `${source}:${ci}:${cj}`;
  const blockRow = new Map<string, number>();
  ref.bars.forEach((bar, r) => blockRow.set(key(bar.source, bar.cell[0], bar.cell[1]), r));
  const row = new Int32Array(sc.bars.length);
  const rowCell = new Int32Array(2 * sc.bars.length);
  sc.bars.forEach((bar, r) => {
    const ci = bar.cell[0];
    const cj = bar.cell[1];
    const br = blockRow.get(key(bar.source, tx ? 0 : ci, ty ? 0 : cj));
    if (br === undefined) throw new Error(`bloch: supercell row ${r} (bar ${bar.source}, cell ${ci},${cj}) has no block row`);
    // The block row must be the same bar with the same grounded end (it sees the same sides).
    const bb = ref.bars[br];
    if ((bb.a < 0) !== (bar.a < 0) || (bb.b < 0) !== (bar.b < 0)) throw new Error(`bloch: supercell row ${r} and its block row ${br} differ in grounding`);
    row[r] = br;
    rowCell[2 * r] = ci;
    rowCell[2 * r + 1] = cj;
  });
  return { col, colCell, row, rowCell };
}

/** Phase factor e(φ·cell) of a full entry, along twisted axes only. */
function entryPhase(plan: BlochPlan, sc: Supercell, blk: BlochBlock, i: number, j: number): [number, number] {
  const b = sc.boundary;
  let t = 0;
  if (plan.kind !== 'y') t += turnsAlong(thetaOf(b.x), blk.m[0], sc.cells[0], i);
  if (plan.kind !== 'x') t += turnsAlong(thetaOf(b.y), blk.m[1], sc.cells[1], j);
  return cis(t);
}

/**
 * Lift block vectors to full vectors: out[f] = e(φ·cell(f)) · v[map(f)] / √M.
 * In the real case, conjugate pairs give √2·Re and √2·Im; self-conjugate blocks give real vectors.
 */
function lift(
  plan: BlochPlan,
  sc: Supercell,
  blk: BlochBlock,
  vectors: CVec[],
  map: Int32Array,
  cells: Int32Array,
  real: boolean,
  selfConjugate: boolean,
  out: CVec[],
): void {
  const len = map.length;
  const M = plan.blocks.length;
  const scale = 1 / Math.sqrt(M);
  const phRe = new Float64Array(len);
  const phIm = new Float64Array(len);
  for (let f = 0; f < len; f++) {
    const [cr, ci] = entryPhase(plan, sc, blk, cells[2 * f], cells[2 * f + 1]);
    phRe[f] = cr * scale;
    phIm[f] = ci * scale;
  }
  for (const v of vectors) {
    const re = new Float64Array(len);
    const im = new Float64Array(len);
    for (let f = 0; f < len; f++) {
      const vr = v.re[map[f]];
      const vi = v.im[map[f]];
      re[f] = phRe[f] * vr - phIm[f] * vi;
      im[f] = phRe[f] * vi + phIm[f] * vr;
    }
    if (!real) out.push({ re, im });
    else if (selfConjugate) {
      out.push({ re, im: new Float64Array(len) });
    } else {
      const r2 = new Float64Array(len);
      const i2 = new Float64Array(len);
      for (let f = 0; f < len; f++) {
        r2[f] = Math.SQRT2 * re[f];
        i2[f] = Math.SQRT2 * im[f];
      }
      out.push({ re: r2, im: new Float64Array(len) }, { re: i2, im: new Float64Array(len) });
    }
  }
}

export const blochSolver: SpaceSolver = (sc, R, options) => solveBloch(sc, R, options);

function solveBloch(sc: Supercell, R: SparseMatrix, options: SolveOptions): SolvedSpaces {
  const plan = blochPlan(sc);
  const blocks = plan.blocks;
  const M = blocks.length;
  let rows = 0;
  let cols = 0;
  for (const blk of blocks) {
    rows += blk.matrix.rows;
    cols += blk.matrix.cols;
  }
  if (rows !== R.rows || cols !== R.cols) {
    throw new Error(`bloch: the blocks have ${rows}×${cols} entries in all but R is ${R.rows}×${R.cols}`);
  }
  const map = indexMap(sc, plan);
  const real = sc.real;
  const solvers = blocks.map((blk) => chooseBlockSolver(plan.kind, blk.supercell));

  // Singular values of every block (a conjugate block has its partner's, exactly).
  const sigma: Float64Array[] = new Array(M);
  for (let b = 0; b < M; b++) {
    throwIfAborted(options.signal);
    const blk = blocks[b];
    const c = blk.conjugate;
    if (real && c >= 0 && c < b && sigma[c]) sigma[b] = sigma[c];
    else {
      solvers[b].checkFits(blk.matrix, false, options.memoryLimit);
      sigma[b] = solvers[b].singularValues(blk.matrix);
    }
    options.onProgress?.({ fraction: (b + 1) / M, stage: `Bloch block ${b + 1} of ${M}` });
  }
  const all: number[] = [];
  for (const s of sigma) for (const v of s) all.push(v);
  // Structural zeros: R has min(rows, cols) singular values; blocks supply Σ min(r_b, c_b).
  while (all.length < Math.min(R.rows, R.cols)) all.push(0);
  const decision = decideRank(all, R.rows, R.cols, options.relative);
  const abs = decision.tolerance.absolute;
  const blockRank = sigma.map((s) => {
    let r = 0;
    for (const v of s) if (v > abs) r++;
    return r;
  });

  // In the real case one block of each conjugate pair stands for both.
  const representative = (b: number) => !real || blocks[b].conjugate >= b;

  const basis = (which: 'flex' | 'stress'): NullBasis => {
    const out: CVec[] = [];
    for (let b = 0; b < M; b++) {
      throwIfAborted(options.signal);
      if (!representative(b)) continue;
      const blk = blocks[b];
      const A = which === 'flex' ? blk.matrix : conjugateTranspose(blk.matrix);
      const dim = A.cols - blockRank[b];
      if (dim > 0) {
        solvers[b].checkFits(A, true, options.memoryLimit);
        const nb = solvers[b].nullSpace(A, dim);
        const selfConjugate = blk.conjugate === b;
        if (which === 'flex') lift(plan, sc, blk, nb.vectors, map.col, map.colCell, real, selfConjugate, out);
        else lift(plan, sc, blk, nb.vectors, map.row, map.rowCell, real, selfConjugate, out);
      }
      options.onProgress?.({ fraction: (b + 1) / M, stage: `Bloch ${which === 'flex' ? 'flex' : 'self-stress'} basis, block ${b + 1} of ${M}` });
    }
    return { real, vectors: out };
  };

  let flexCache: NullBasis | undefined;
  let stressCache: NullBasis | undefined;
  return {
    solver: 'bloch',
    decision,
    flexBasis() {
      if (!flexCache) flexCache = basis('flex');
      return flexCache;
    },
    selfStressBasis() {
      if (!stressCache) stressCache = basis('stress');
      return stressCache;
    },
  };
}
