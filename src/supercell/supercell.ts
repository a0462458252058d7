/**
 * The N1×N2 supercell of a periodic framework under boundary rules.
 *
 * Cells (i, j) with 0 ≤ i < N1, 0 ≤ j < N2 of the infinite framework are kept. For each bar
 * of the infinite framework with at least one end in the supercell:
 *  - both ends inside (after wrapping twisted axes): the bar is kept;
 *  - along a twisted axis with phase θ (in turns) cell indices wrap modulo N, and the far
 *    joint's velocity picks up exp(2πiθw) for w wraps; each bar orbit gives one row;
 *  - otherwise one end lies outside: the bar is *grounded* (that end fixed) when every side it
 *    leaves through is pinned, and *dropped* when any of them is free. Bars with both ends
 *    outside do not belong to the supercell.
 * Joint index of site s in cell (i, j): (j·N1 + i)·S + s, with S joints per unit cell.
 */
import { InputError } from '../errors.js';
import { resolveBars, type Framework, type Vec2 } from '../framework/types.js';
import { cis } from '../linalg/complex.js';
import { scaledBarVectors } from './rigidity.js';
import { boundaryIsReal, reduceTurns, type AxisRule, type Boundary } from './boundary.js';

export interface SupercellBar {
  /** Joint index of the `from` end, or −1 when that end is fixed (grounded bar). */
  a: number;
  /** Joint index of the `to` end, or −1 when that end is fixed (grounded bar). */
  b: number;
  /** The bar vector p = position(to) − position(from) in the infinite framework (unwrapped). */
  vector: Vec2;
  /** Phase factor exp(2πi(θ1 w1 + θ2 w2)) carried by the `to` end's velocity. */
  phase: [number, number];
  /** Wrap counts (w1, w2) of the `to` end along twisted axes. */
  wraps: [number, number];
  /** Index of the unit-cell bar this row comes from. */
  source: number;
  /** Cell of the `from` end in the infinite framework. */
  cell: [number, number];
  grounded: boolean;
}

export interface Supercell {
  framework: Framework;
  cells: [number, number];
  boundary: Boundary;
  /** Joints per unit cell. */
  sites: number;
  /** Number of supercell joints (N1·N2·S); fixed far ends of grounded bars are not joints. */
  jointCount: number;
  /** Cartesian positions, 2 per joint (built on first read, like jointCells and jointSites). */
  readonly positions: Float64Array;
  /** Cell (i, j) of each joint, 2 per joint. */
  readonly jointCells: Int32Array;
  /** Unit-cell site of each joint. */
  readonly jointSites: Int32Array;
  /** The rows of the rigidity matrix: kept and grounded bars (listed on first read; see buildSupercell). */
  readonly bars: SupercellBar[];
  /** The same rows as typed columns (built on first read; `bars` is made from them). */
  readonly rows: BarRows;
  /** Number of rows (bars.length), known without listing them. */
  barCount: number;
  /** Bars of the infinite framework touching the supercell that were dropped at free sides. */
  dropped: number;
  grounded: number;
  /** True when every phase factor is real (each twist θ ≡ 0 or ½). */
  real: boolean;
  /**
   * The unit of length of R: every assembly of R divides bar vectors by it, so singular values
   * are in units of lengthScale. See lengthScaleOf.
   */
  lengthScale: number;
}

/**
 * The root-mean-square length of the unit cell's bar vectors, rounded to the nearest power of
 * two (dividing by it and multiplying back are then exact); 1 when there are no bars or the
 * value is 0 or not finite. Keeps R's entries near 1 at any input scale.
 */
export function lengthScaleOf(fw: Framework): number {
  const p = scaledBarVectors(fw, 1, 0);
  let big = 0;
  for (const v of p) big = Math.max(big, Math.abs(v));
  if (!(big > 0 && Number.isFinite(big))) return 1;
  // scaled by the largest component first, so squares neither overflow nor underflow
  let sum = 0;
  for (const v of p) sum += (v / big) ** 2;
  const rms = big * Math.sqrt(sum / (p.length / 2));
  if (!(rms > 0 && Number.isFinite(rms))) return 1;
  return 2 ** Math.min(1023, Math.max(-1022, Math.round(Math.log2(rms))));
}

export const MAX_CELLS_PER_AXIS = 100000;

export function checkCells(cells: [number, number], where = 'cells'): void {
  const bad = cells.filter((n) => !Number.isInteger(n) || n < 1 || n > MAX_CELLS_PER_AXIS);
  if (bad.length) {
    throw new InputError(`The supercell size ${cells.join('x')} cannot be used:`, [
      { where, what: `each side must be a whole number of cells from 1 to ${MAX_CELLS_PER_AXIS}, got ${cells.join('x')}`, fix: 'write N1xN2 with positive integers, e.g. 8x8' },
    ]);
  }
}

export function jointIndex(i: number, j: number, s: number, N1: number, S: number): number {
  return (j * N1 + i) * S + s;
}

/** The side cell c lies beyond along one axis (null: inside, or the axis is twisted). */
function sideOut(c: number, N: number, rule: AxisRule): 'low' | 'high' | null {
  if (rule.kind === 'twist') return null;
  return c < 0 ? 'low' : c >= N ? 'high' : null;
}

function pinned(rule: AxisRule, side: 'low' | 'high'): boolean {
  return rule.kind === 'sides' && rule[side] === 'pinned';
}

/** A run of `from` cells along one axis on which both ends keep their state (see barRuns). */
type Run = { lo: number; hi: number; from: 'low' | 'high' | null; to: 'low' | 'high' | null };

/** The rows of one unit-cell bar over one run of y: every x run in `xs`, cells j = y.lo … y.hi − 1. */
interface RowBlock {
  source: number;
  /** Sites of the ends and the shift of the unit-cell bar. */
  sa: number;
  sb: number;
  shift: [number, number];
  vector: Vec2;
  y: Run;
  xs: Run[];
}

/**
 * Which bars of the infinite framework give rows, as blocks of cells per unit-cell bar, and the
 * counts of rows, grounded and dropped bars, without a row object: the rows are listed from
 * these blocks only when asked for (listBars), so a solver that needs only their number (the
 * Bloch solver) never pays for them. Along an axis the `from` cells split into runs on which
 * both ends keep their state (inside, or out through the low or high side): cut at 0, N,
 * −shift and N − shift, so the work does not grow with the shift. A twisted axis is one run
 * (every cell, one orbit each). Runs where both ends are out along the axis are left out: such
 * bars never touch the supercell.
 */
function barRuns(fw: Framework, cells: [number, number], boundary: Boundary): { blocks: RowBlock[]; rows: number; grounded: number; dropped: number } {
  const [N1, N2] = cells;
  const runs = (N: number, shift: number, rule: AxisRule): Run[] => {
    if (rule.kind === 'twist') return [{ lo: 0, hi: N, from: null, to: null }];
    const cuts = [...new Set([0, N, -shift, N - shift])].sort((p, q) => p - q);
    const out: Run[] = [];
    for (let k = 0; k + 1 < cuts.length; k++) {
      const from = sideOut(cuts[k], N, rule);
      const to = sideOut(cuts[k] + shift, N, rule);
      if (from === null || to === null) out.push({ lo: cuts[k], hi: cuts[k + 1], from, to });
    }
    return out;
  };
  const blocks: RowBlock[] = [];
  let rows = 0;
  let dropped = 0;
  let grounded = 0;
  resolveBars(fw).forEach(({ from: sa, to: sb, shift, vector }, source) => {
    const [s1, s2] = shift;
    const xRuns = runs(N1, s1, boundary.x);
    for (const y of runs(N2, s2, boundary.y)) {
      // runs of x whose cells give rows; the bars of the other runs are counted as dropped at once
      const xs: Run[] = [];
      for (const x of xRuns) {
        const fromOut = x.from !== null || y.from !== null;
        const toOut = x.to !== null || y.to !== null;
        if (fromOut && toOut) continue;
        const area = (x.hi - x.lo) * (y.hi - y.lo);
        if (fromOut || toOut) {
          const [ox, oy] = fromOut ? [x.from, y.from] : [x.to, y.to];
          const ok = (ox === null || pinned(boundary.x, ox)) && (oy === null || pinned(boundary.y, oy));
          if (!ok) {
            dropped += area;
            continue;
          }
          // both ends keep their state over the run: every row of it is grounded
          grounded += area;
        }
        rows += area;
        xs.push(x);
      }
      if (xs.length) blocks.push({ source, sa, sb, shift, vector, y, xs });
    }
  });
  return { blocks, rows, grounded, dropped };
}

/**
 * The rows of R as typed columns, in R's row order (unit-cell bar, y run, j, x run, i): what the
 * assembly of R and the sparse solver read, without an object per row (see Supercell.rows).
 */
export interface BarRows {
  count: number;
  /** Joint of the `from` end, −1 when it is fixed (grounded bar). */
  a: Int32Array;
  /** Joint of the `to` end, −1 when it is fixed. */
  b: Int32Array;
  /** Unit-cell bar of each row. */
  source: Int32Array;
  /**
   * Phase factor of the `to` end's velocity (re, im), 2 per row; null when every one is 1 (a real
   * supercell with no twist), so that the common case writes and reads no array for them.
   */
  phase: Float64Array | null;
}

/**
 * Where each row lies, in the same order as BarRows: only the row objects (Supercell.bars) carry
 * it, so the solvers' rows do not write (and page in) these two arrays.
 */
interface RowPlaces {
  /** Wrap counts (w1, w2) of the `to` end, 2 per row. */
  wraps: Int32Array;
  /** Cell (i, j) of the `from` end in the infinite framework, 2 per row. */
  cells: Int32Array;
}

/** How many times cell c wraps round a twisted axis (its joints lie in cell c − wraps·N); 0 otherwise. */
function wrapCount(c: number, N: number, rule: AxisRule): number {
  return rule.kind === 'twist' ? Math.floor(c / N) : 0;
}

function isOut(c: number, N: number, rule: AxisRule): boolean {
  return sideOut(c, N, rule) !== null;
}

/** The rows of the blocks as typed columns (see BarRows); `count` rows in all. */
function listRows(blocks: RowBlock[], cells: [number, number], boundary: Boundary, S: number, count: number): BarRows {
  const [N1, N2] = cells;
  const theta1 = boundary.x.kind === 'twist' ? reduceTurns(boundary.x.theta) : 0;
  const theta2 = boundary.y.kind === 'twist' ? reduceTurns(boundary.y.theta) : 0;
  const unit = boundaryIsReal(boundary) && theta1 === 0 && theta2 === 0;
  const out: BarRows = {
    count,
    a: new Int32Array(count),
    b: new Int32Array(count),
    source: new Int32Array(count),
    phase: unit ? null : new Float64Array(2 * count),
  };
  let r = 0;
  for (const { source, sa, sb, shift: [s1, s2], y, xs } of blocks) {
    for (let j = y.lo; j < y.hi; j++) {
      const fyOut = isOut(j, N2, boundary.y);
      const fyW = wrapCount(j, N2, boundary.y);
      const tyOut = isOut(j + s2, N2, boundary.y);
      const w2 = wrapCount(j + s2, N2, boundary.y);
      for (const x of xs) r = listRun(out, r, x.lo, x.hi, j, source, sa, sb, s1, s2, N1, N2, S, boundary.x, fyOut, fyW, tyOut, w2, theta1, theta2);
    }
  }
  if (r !== count) throw new Error(`internal error: the supercell listed ${r} rows, its count is ${count}`);
  return out;
}

/**
 * The rows of cells i = lo … hi − 1 in row j of one block into out from row r; returns the next
 * row. Its own function, called once per run: V8 compiles it whole after a few calls (as one loop
 * inside listRows it ran on fresh code to its end).
 */
function listRun(out: BarRows, r: number, lo: number, hi: number, j: number, source: number, sa: number, sb: number, s1: number, s2: number, N1: number, N2: number, S: number, rx: AxisRule, fyOut: boolean, fyW: number, tyOut: boolean, w2: number, theta1: number, theta2: number): number {
  const phase = out.phase;
  for (let i = lo; i < hi; i++) {
    const fxW = wrapCount(i, N1, rx);
    const w1 = wrapCount(i + s1, N1, rx);
    const fromOut = fyOut || isOut(i, N1, rx);
    const toOut = tyOut || isOut(i + s1, N1, rx);
    out.a[r] = fromOut ? -1 : jointIndex(i - fxW * N1, j - fyW * N2, sa, N1, S);
    out.b[r] = toOut ? -1 : jointIndex(i + s1 - w1 * N1, j + s2 - w2 * N2, sb, N1, S);
    out.source[r] = source;
    if (phase) {
      const [cr, ci] = cis(theta1 * w1 + theta2 * w2);
      phase[2 * r] = cr;
      phase[2 * r + 1] = ci;
    }
    r++;
  }
  return r;
}

/** The wraps and cells of the rows, in listRows's order (see RowPlaces). */
function listPlaces(blocks: RowBlock[], cells: [number, number], boundary: Boundary, count: number): RowPlaces {
  const [N1, N2] = cells;
  const out: RowPlaces = { wraps: new Int32Array(2 * count), cells: new Int32Array(2 * count) };
  let r = 0;
  for (const { shift: [s1, s2], y, xs } of blocks)
    for (let j = y.lo; j < y.hi; j++) {
      const w2 = wrapCount(j + s2, N2, boundary.y);
      for (const x of xs)
        for (let i = x.lo; i < x.hi; i++, r++) {
          out.wraps[2 * r] = wrapCount(i + s1, N1, boundary.x);
          out.wraps[2 * r + 1] = w2;
          out.cells[2 * r] = i;
          out.cells[2 * r + 1] = j;
        }
    }
  return out;
}

/** The row objects, one per row of R, from the typed rows. */
function listBars(rows: BarRows, places: RowPlaces, vectors: Vec2[]): SupercellBar[] {
  const bars: SupercellBar[] = new Array(rows.count);
  for (let r = 0; r < rows.count; r++) {
    const a = rows.a[r];
    const b = rows.b[r];
    bars[r] = {
      a,
      b,
      vector: vectors[rows.source[r]],
      phase: rows.phase ? [rows.phase[2 * r], rows.phase[2 * r + 1]] : [1, 0],
      wraps: [places.wraps[2 * r], places.wraps[2 * r + 1]],
      source: rows.source[r],
      cell: [places.cells[2 * r], places.cells[2 * r + 1]],
      grounded: a < 0 || b < 0,
    };
  }
  return bars;
}

/** Positions, cells and sites of the N1·N2·S joints (see Supercell). */
function listJoints(fw: Framework, cells: [number, number]): Pick<Supercell, 'positions' | 'jointCells' | 'jointSites'> {
  const [N1, N2] = cells;
  const S = fw.joints.length;
  const [a1, a2] = fw.lattice;
  const jointCount = N1 * N2 * S;
  const positions = new Float64Array(2 * jointCount);
  const jointCells = new Int32Array(2 * jointCount);
  const jointSites = new Int32Array(jointCount);
  for (let j = 0; j < N2; j++)
    for (let i = 0; i < N1; i++)
      for (let s = 0; s < S; s++) {
        const k = jointIndex(i, j, s, N1, S);
        const at = fw.joints[s].at;
        positions[2 * k] = at[0] + i * a1[0] + j * a2[0];
        positions[2 * k + 1] = at[1] + i * a1[1] + j * a2[1];
        jointCells[2 * k] = i;
        jointCells[2 * k + 1] = j;
        jointSites[k] = s;
      }
  return { positions, jointCells, jointSites };
}

/**
 * The supercell. Its sizes and counts (jointCount, barCount, grounded, dropped) are computed at
 * once, in time independent of the number of cells; the per-joint arrays and the row objects
 * (`bars`) are built on first read and kept. The Bloch count reads neither: its blocks come
 * from the unit cell (src/spectrum/bloch.ts).
 */
export function buildSupercell(fw: Framework, cells: [number, number], boundary: Boundary): Supercell {
  checkCells(cells);
  const [N1, N2] = cells;
  const S = fw.joints.length;
  const { blocks, rows, grounded, dropped } = barRuns(fw, [N1, N2], boundary);
  let joints: ReturnType<typeof listJoints> | undefined;
  let rowTable: BarRows | undefined;
  let bars: SupercellBar[] | undefined;
  const rowsOf = () => (rowTable ??= listRows(blocks, [N1, N2], boundary, S, rows));
  return {
    framework: fw,
    cells: [N1, N2],
    boundary,
    sites: S,
    jointCount: N1 * N2 * S,
    get positions() {
      return (joints ??= listJoints(fw, [N1, N2])).positions;
    },
    get jointCells() {
      return (joints ??= listJoints(fw, [N1, N2])).jointCells;
    },
    get jointSites() {
      return (joints ??= listJoints(fw, [N1, N2])).jointSites;
    },
    get rows() {
      return rowsOf();
    },
    get bars() {
      return (bars ??= listBars(rowsOf(), listPlaces(blocks, [N1, N2], boundary, rows), resolveBars(fw).map((bar) => bar.vector)));
    },
    barCount: rows,
    dropped,
    grounded,
    real: boundaryIsReal(boundary),
    lengthScale: lengthScaleOf(fw),
  };
}
