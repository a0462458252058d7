/**
 * The plan of a Bloch run and the lift back: the phases and blocks of a supercell with twisted
 * axes (one cell per block when both axes are twisted, strips when one is), and how a block's
 * null vectors become vectors of the whole supercell (its phase factors, and √2·Re, √2·Im of
 * conjugate pairs in the real case). The solver is src/spectrum/bloch.ts.
 */
import { InputError } from '../errors.js';
import type { Framework } from '../framework/types.js';
import { cis, type CVec } from '../linalg/complex.js';
import type { SparseMatrix } from '../linalg/sparse.js';
import { boundaryIsReal, reduceTurns, type AxisRule, type Boundary } from '../supercell/boundary.js';
import { rigidityMatrix } from '../supercell/rigidity.js';
import { buildSupercell, jointIndex, type Supercell } from '../supercell/supercell.js';
import { SymbolAssembler, type DenseColumns } from './symbol.js';

/** Which axes are twisted: both (blocks are single cells) or one (blocks are strips). */
export type BlochKind = 'both' | 'x' | 'y';

export interface BlochBlock {
  /** Phase index along each axis (0 along an untwisted axis). */
  m: [number, number];
  /** The block's phase φ in turns along each twisted axis (0 along an untwisted one). */
  phase: [number, number];
  /** Index of the block with the conjugate phase −φ (itself when self-conjugate). */
  conjugate: number;
  rows: number;
  cols: number;
  /** Whether the block's matrix is real (its phases are all ±1). */
  real: boolean;
  /** The block's supercell (one cell, or a strip), built on first use. */
  readonly supercell: Supercell;
  /** The block's rigidity matrix, built on first use. */
  readonly matrix: SparseMatrix;
  /** The block densely, column-major, rows padded to at least `minRows` (may reuse buffers). */
  dense(minRows: number): DenseColumns;
}

export interface BlochPlan {
  kind: BlochKind;
  /** Number of phases along each axis (1 along an untwisted axis); blocks = product. */
  phases: [number, number];
  /** Cells of each block along each axis. */
  blockCells: [number, number];
  blocks: BlochBlock[];
}

export function twisted(r: AxisRule): boolean {
  return r.kind === 'twist';
}

/**
 * φ·c along one axis in turns, reduced without losing digits for large c:
 * ((θ + m)·c)/N = ((m·c mod N) + θ·c)/N (mod 1).
 */
export function turnsAlong(theta: number, m: number, N: number, c: number): number {
  const k = (((m * c) % N) + N) % N;
  return (k + theta * c) / N;
}

/** The twist of an axis reduced to [0, 1), or 0 for an untwisted axis. */
export function thetaOf(r: AxisRule): number {
  return r.kind === 'twist' ? reduceTurns(r.theta) : 0;
}

/** A strip block: the 1×N2 (or N1×1) supercell twisted by φ, built at once (its solvers need it). */
export function stripBlock(fw: Framework, cells: [number, number], boundary: Boundary, m: [number, number], phase: [number, number], conjugate: number): BlochBlock {
  const supercell = buildSupercell(fw, cells, boundary);
  const matrix = rigidityMatrix(supercell);
  return { m, phase, conjugate, rows: matrix.rows, cols: matrix.cols, real: matrix.im === null, supercell, matrix, dense: (minRows) => columnMajor(matrix, minRows) };
}

/**
 * A one-cell block: the symbol Φ(φ), which is the rigidity matrix of the one-cell supercell
 * twisted by φ (src/spectrum/symbol.ts), assembled densely for Jacobi; its supercell and sparse
 * matrix are built only when asked for (lifting bases, the dense SVD of a large cell).
 */
export function cellBlock(fw: Framework, phi: SymbolAssembler, boundary: Boundary, m: [number, number], phase: [number, number], conjugate: number): BlochBlock {
  let supercell: Supercell | undefined;
  let matrix: SparseMatrix | undefined;
  return {
    m,
    phase,
    conjugate,
    rows: phi.rows,
    cols: phi.cols,
    real: boundaryIsReal(boundary),
    get supercell() {
      return (supercell ??= buildSupercell(fw, [1, 1], boundary));
    },
    get matrix() {
      return (matrix ??= phi.sparse(phase[0], phase[1]));
    },
    dense: (minRows) => phi.assemble(phase[0], phase[1], minRows),
  };
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
  const phi = kind === 'both' ? new SymbolAssembler(sc.framework) : null;
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
      const m: [number, number] = [m1, m2];
      blocks.push(phi ? cellBlock(sc.framework, phi, boundary, m, phase, conjugate) : stripBlock(sc.framework, blockCells, boundary, m, phase, conjugate));
    }
  }
  return { kind, phases, blockCells, blocks };
}

/** Where each full column and row of R sits in a block, and the cell that carries its phase. */
export interface IndexMap {
  /** Block column of each full column. */
  col: Int32Array;
  /** Cell (i, j) of the joint of each full column (2 entries per column). */
  colCell: Int32Array;
  /** Block row of each full row. */
  row: Int32Array;
  /** Cell (i, j) of the `from` end of each full row (2 entries per row). */
  rowCell: Int32Array;
}

export function indexMap(sc: Supercell, plan: BlochPlan): IndexMap {
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
export function entryPhase(plan: BlochPlan, sc: Supercell, blk: BlochBlock, i: number, j: number): [number, number] {
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
export function lift(
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

/** Column-major dense copy of A (rows padded with zeros up to `minRows`). */
export function columnMajor(A: SparseMatrix, minRows: number): DenseColumns {
  const ld = Math.max(A.rows, minRows);
  const re = new Float64Array(ld * A.cols);
  const im = new Float64Array(ld * A.cols);
  for (let r = 0; r < A.rows; r++)
    for (let k = A.rowPtr[r]; k < A.rowPtr[r + 1]; k++) {
      re[A.colIdx[k] * ld + r] += A.re[k];
      if (A.im) im[A.colIdx[k] * ld + r] += A.im[k];
    }
  return { re, im, ld };
}
