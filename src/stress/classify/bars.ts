/**
 * Bars as the elements of the self-stress classifier: each bar row's cell and midpoint, the bars
 * of a region of cells, and the restricted cokernel (the self-stresses supported on a bar set).
 */
import { singularValues, nullSpace } from '../../linalg/dense.js';
import { conjugateTranspose, type SparseMatrix } from '../../linalg/sparse.js';
import type { Supercell } from '../../supercell/supercell.js';
import type { Block } from '../../flex/classify/cvec-ops.js';
import { geometryOf, type Geometry } from '../../flex/classify/metrics.js';
import { KernelCache } from '../../flex/classify/restricted-kernel.js';

/**
 * The flex classifier's Geometry with bars in place of joints: element b is bar row b, its cell
 * the cell of its `from` joint (of its `to` joint when the from end is ground), its position the
 * bar's midpoint (from-end position + p/2, unwrapped), and its fractional coordinates those of
 * the midpoint. `sc` is the supercell with `positions` and `jointCount` replaced accordingly, so
 * the metrics and anchor fits of src/flex/classify/metrics.ts read bars.
 */
export function barGeometry(sc: Supercell): Geometry {
  const m = sc.bars.length;
  const mid = new Float64Array(2 * m);
  const cellOfBar = new Int32Array(m);
  const N1 = sc.cells[0];
  sc.bars.forEach((bar, r) => {
    const [px, py] = bar.vector;
    const end = bar.a >= 0 ? bar.a : bar.b;
    const sign = bar.a >= 0 ? 0.5 : -0.5;
    mid[2 * r] = sc.positions[2 * end] + sign * px;
    mid[2 * r + 1] = sc.positions[2 * end + 1] + sign * py;
    cellOfBar[r] = sc.jointCells[2 * end + 1] * N1 + sc.jointCells[2 * end];
  });
  const joints = geometryOf(sc);
  const [a1, a2] = sc.framework.lattice;
  const detL = a1[0] * a2[1] - a1[1] * a2[0];
  const frac = new Float64Array(2 * m);
  for (let r = 0; r < m; r++) {
    const x = mid[2 * r];
    const y = mid[2 * r + 1];
    frac[2 * r] = (x * a2[1] - y * a2[0]) / detL;
    frac[2 * r + 1] = (a1[0] * y - a1[1] * x) / detL;
  }
  return { ax: joints.ax, frac, jointCell: cellOfBar, sc: { ...sc, positions: mid, jointCount: m } };
}

/** For each cell, the bar rows whose every joint end (ground ends aside) lies in that cell or others given. */
export class BarIndex {
  /** Cells of each bar's joint ends (one or two). */
  private readonly endCells: Int32Array[];
  /** Bars touching each cell. */
  private readonly barsOfCell: number[][];

  constructor(sc: Supercell) {
    const N1 = sc.cells[0];
    const cellOf = (k: number) => sc.jointCells[2 * k + 1] * N1 + sc.jointCells[2 * k];
    this.barsOfCell = Array.from({ length: sc.cells[0] * sc.cells[1] }, () => []);
    this.endCells = sc.bars.map((bar, r) => {
      const cells = [bar.a, bar.b].filter((k) => k >= 0).map(cellOf);
      for (const c of new Set(cells)) this.barsOfCell[c].push(r);
      return Int32Array.from(cells);
    });
  }

  /** The bar rows all of whose joint ends lie in `cells`, ascending. */
  barsIn(cells: Iterable<number>): number[] {
    const inside = new Set(cells);
    const out = new Set<number>();
    for (const c of inside) for (const r of this.barsOfCell[c]) if (this.endCells[r].every((e) => inside.has(e))) out.add(r);
    return [...out].sort((a, b) => a - b);
  }
}

/**
 * The rows `bars` of R restricted to the columns they touch (compacted, ascending): ker Aᴴ of
 * this matrix is the set of self-stresses supported on `bars` (Rᴴw = 0 with w = 0 elsewhere).
 */
export function barRows(R: SparseMatrix, bars: number[]): SparseMatrix {
  const cols = new Set<number>();
  for (const r of bars) for (let k = R.rowPtr[r]; k < R.rowPtr[r + 1]; k++) cols.add(R.colIdx[k]);
  const sorted = [...cols].sort((a, b) => a - b);
  const colOf = new Map(sorted.map((c, t) => [c, t]));
  const rowPtr = new Int32Array(bars.length + 1);
  const colIdx: number[] = [];
  const re: number[] = [];
  const im: number[] = [];
  bars.forEach((r, t) => {
    const entries: [number, number, number][] = [];
    for (let k = R.rowPtr[r]; k < R.rowPtr[r + 1]; k++) entries.push([colOf.get(R.colIdx[k])!, R.re[k], R.im ? R.im[k] : 0]);
    entries.sort((a, b) => a[0] - b[0]);
    for (const [c, vr, vi] of entries) {
      colIdx.push(c);
      re.push(vr);
      im.push(vi);
    }
    rowPtr[t + 1] = colIdx.length;
  });
  return { rows: bars.length, cols: sorted.length, rowPtr, colIdx: Int32Array.from(colIdx), re: Float64Array.from(re), im: R.im ? Float64Array.from(im) : null };
}

/** Bar sets above this many rows are refused by the dense restricted solve (memory and time). */
export const MAX_REGION_BARS = 2000;

/**
 * The self-stresses supported on `bars`: an orthonormal basis of ker Aᴴ, A = barRows(R, bars),
 * by a dense SVD; σ ≤ `absTol` (the global absolute tolerance, in R's units) counts as zero, so
 * the decision is the global rank rule's. Kernels are cached by the exact matrix content.
 */
export function restrictedCokernel(R: SparseMatrix, bars: number[], absTol: number, cache: KernelCache): Block {
  const dofs = Int32Array.from(bars);
  if (bars.length === 0) return { dofs, vectors: [] };
  if (bars.length > MAX_REGION_BARS) throw new Error(`a region of ${bars.length} bars is over the dense restricted solve's limit of ${MAX_REGION_BARS}`);
  const A = barRows(R, bars);
  const key = KernelCache.key('restricted-svd', A);
  const known = cache.get(key);
  if (known) return { dofs, vectors: known };
  const sigma = singularValues(A);
  let rank = 0;
  for (const s of sigma) if (s > absTol) rank++;
  const dim = bars.length - rank;
  const vectors = dim === 0 ? [] : nullSpace(conjugateTranspose(A), dim).vectors.map((v) => ({ re: v.re, im: v.im }));
  cache.set(key, vectors);
  return { dofs, vectors };
}
