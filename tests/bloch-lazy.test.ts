/**
 * The supercell's rows and joint arrays are listed on first read, so a Bloch count (whose blocks
 * come from the unit cell) never builds them: the counts known at once (rows, grounded,
 * dropped) against a brute-force enumeration of the infinite framework's bars; a Bloch count on
 * a supercell that refuses every read of its rows and joints; the rigid-motion test made on the
 * supercell one cell wide along the twisted axes against the same test on the whole one.
 */
import { Matrix, SingularValueDecomposition } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { analyse } from '../src/api/run.js';
import { analyseSupercell, countsOf } from '../src/flex/spaces.js';
import { rigidMotions } from '../src/flex/rigid.js';
import { buildGallery } from '../src/framework/gallery.js';
import { resolveBars, type Framework } from '../src/framework/types.js';
import { parseBoundary, type AxisRule, type Boundary } from '../src/supercell/boundary.js';
import { SparseBuilder, type SparseMatrix } from '../src/linalg/sparse.js';
import { rigidityApply, rigidityMatrix, scaledBarVectors } from '../src/supercell/rigidity.js';
import { buildSupercell, type Supercell } from '../src/supercell/supercell.js';
import { randomFramework } from './helpers.js';

/** Rows, grounded and dropped bars by visiting every bar of the infinite framework near the supercell. */
function bruteCounts(fw: Framework, cells: [number, number], b: Boundary): { rows: number; grounded: number; dropped: number } {
  const rules: [AxisRule, AxisRule] = [b.x, b.y];
  let rows = 0;
  let grounded = 0;
  let dropped = 0;
  for (const { shift } of resolveBars(fw)) {
    const range = (ax: 0 | 1) => {
      const N = cells[ax];
      if (rules[ax].kind === 'twist') return [0, N];
      const s = Math.abs(shift[ax]);
      return [-s - 1, N + s + 1];
    };
    const [x0, x1] = range(0);
    const [y0, y1] = range(1);
    /** The sides the end in cell (i, j) lies beyond (empty when it is inside). */
    const outside = (c: [number, number]) => {
      const sides: { ax: 0 | 1; side: 'low' | 'high' }[] = [];
      for (const ax of [0, 1] as const) {
        if (rules[ax].kind === 'twist') continue;
        if (c[ax] < 0) sides.push({ ax, side: 'low' });
        else if (c[ax] >= cells[ax]) sides.push({ ax, side: 'high' });
      }
      return sides;
    };
    for (let i = x0; i < x1; i++)
      for (let j = y0; j < y1; j++) {
        const from = outside([i, j]);
        const to = outside([i + shift[0], j + shift[1]]);
        if (from.length && to.length) continue;
        if (!from.length && !to.length) {
          rows++;
          continue;
        }
        const sides = from.length ? from : to;
        const ok = sides.every(({ ax, side }) => {
          const r = rules[ax];
          return r.kind === 'sides' && r[side] === 'pinned';
        });
        if (ok) {
          rows++;
          grounded++;
        } else dropped++;
      }
  }
  return { rows, grounded, dropped };
}

const BOUNDARIES = ['free', 'pinned', 'periodic', 'twist:0.25,0.1', 'x=periodic', 'y=twist:0.3,left=pinned', 'x=periodic,bottom=pinned,top=free', 'left=pinned,top=pinned'];

/**
 * Each row against the geometry of the infinite framework: the `from` end is the unit-cell bar's
 * `from` site in its cell (i, j), and the `to` end, moved back by the wraps times the supercell's
 * periods, lies one bar vector further; a fixed end lies outside a free or pinned side.
 */
function checkRowGeometry(fw: Framework, sc: Supercell): void {
  const bars = resolveBars(fw);
  const [a1, a2] = fw.lattice;
  const [N1, N2] = sc.cells;
  const rules = [sc.boundary.x, sc.boundary.y];
  const at = (site: number, i: number, j: number) => [fw.joints[site].at[0] + i * a1[0] + j * a2[0], fw.joints[site].at[1] + i * a1[1] + j * a2[1]];
  for (const row of sc.bars) {
    const bar = bars[row.source];
    const [i, j] = row.cell;
    const from = at(bar.from, i, j);
    const to = at(bar.to, i + bar.shift[0], j + bar.shift[1]);
    if (row.a >= 0) {
      expect(sc.jointSites[row.a]).toBe(bar.from);
      const [wi, wj] = rules.map((r, ax) => (r.kind === 'twist' ? Math.floor([i, j][ax] / [N1, N2][ax]) : 0));
      const p = [from[0] - wi * N1 * a1[0] - wj * N2 * a2[0], from[1] - wi * N1 * a1[1] - wj * N2 * a2[1]];
      expect(sc.positions[2 * row.a]).toBeCloseTo(p[0], 9);
      expect(sc.positions[2 * row.a + 1]).toBeCloseTo(p[1], 9);
    }
    if (row.b >= 0) {
      expect(sc.jointSites[row.b]).toBe(bar.to);
      const [w1, w2] = row.wraps;
      expect(sc.positions[2 * row.b] + w1 * N1 * a1[0] + w2 * N2 * a2[0]).toBeCloseTo(to[0], 9);
      expect(sc.positions[2 * row.b + 1] + w1 * N1 * a1[1] + w2 * N2 * a2[1]).toBeCloseTo(to[1], 9);
    }
    expect(row.grounded).toBe(row.a < 0 || row.b < 0);
    expect(Math.hypot(row.phase[0], row.phase[1])).toBeCloseTo(1, 14);
  }
}

/** R as the definition reads, summed entry by entry through SparseBuilder from the row objects. */
function builderRigidity(sc: Supercell): SparseMatrix {
  const B = new SparseBuilder(2 * sc.jointCount);
  const p = scaledBarVectors(sc.framework, sc.lengthScale);
  for (const bar of sc.bars) {
    const r = B.newRow();
    const [px, py] = [p[2 * bar.source], p[2 * bar.source + 1]];
    if (bar.a >= 0) {
      B.add(r, 2 * bar.a, -px);
      B.add(r, 2 * bar.a + 1, -py);
    }
    if (bar.b >= 0) {
      const [cr, ci] = bar.phase;
      B.add(r, 2 * bar.b, cr * px, ci * px);
      B.add(r, 2 * bar.b + 1, cr * py, ci * py);
    }
  }
  return B.build(!sc.real);
}

describe('supercell counts known without listing the rows', () => {
  const frameworks: [string, Framework][] = [
    ['kagome', buildGallery('gallery:kagome')],
    ['random (shifts up to 2)', randomFramework(7, 3, 8)],
    ['random (shifts up to 2), second', randomFramework(11, 2, 6)],
  ];
  for (const [name, fw] of frameworks)
    for (const bc of BOUNDARIES)
      for (const cells of [[1, 1], [3, 2], [5, 7]] as [number, number][]) {
        it(`${name}, ${cells.join('x')}, ${bc}`, () => {
          const boundary = parseBoundary(bc);
          const sc = buildSupercell(fw, cells, boundary);
          const ref = bruteCounts(fw, cells, boundary);
          expect({ rows: sc.barCount, grounded: sc.grounded, dropped: sc.dropped }).toEqual(ref);
          // the listed rows agree with the counts
          expect(sc.bars.length).toBe(sc.barCount);
          expect(sc.bars.filter((r) => r.grounded).length).toBe(sc.grounded);
          expect(sc.bars.filter((r) => r.a < 0 || r.b < 0).length).toBe(sc.grounded);
          expect(sc.positions.length).toBe(2 * sc.jointCount);
          expect(sc.jointSites.length).toBe(sc.jointCount);
          checkRowGeometry(fw, sc);
          // R from the typed rows, entry for entry (bit for bit) as assembled from the row objects
          const R = rigidityMatrix(sc);
          const B = builderRigidity(sc);
          expect({ rows: R.rows, cols: R.cols }).toEqual({ rows: B.rows, cols: B.cols });
          expect(Array.from(R.rowPtr)).toEqual(Array.from(B.rowPtr));
          expect(Array.from(R.colIdx)).toEqual(Array.from(B.colIdx));
          expect(Array.from(R.re)).toEqual(Array.from(B.re));
          expect(R.im ? Array.from(R.im) : null).toEqual(B.im ? Array.from(B.im) : null);
        });
      }

  it('lists the rows once and keeps them', () => {
    const sc = buildSupercell(buildGallery('gallery:square'), [4, 3], parseBoundary('x=periodic'));
    expect(sc.bars).toBe(sc.bars);
    expect(sc.positions).toBe(sc.positions);
    // a copy of the supercell carries every field (the stress classifier spreads it)
    const copy = { ...sc };
    expect(copy.bars).toBe(sc.bars);
    expect(copy.jointCells).toBe(sc.jointCells);
    expect(copy.barCount).toBe(20); // 12 horizontal bars round the periodic axis, 8 vertical ones inside
  });
});

/** The supercell, refusing every read of its rows and joint arrays. */
function guarded(sc: Supercell): Supercell {
  const refused = new Set(['rows', 'bars', 'positions', 'jointCells', 'jointSites']);
  return new Proxy(sc, {
    get(target, key, receiver) {
      if (typeof key === 'string' && refused.has(key)) throw new Error(`the Bloch count read supercell.${key}`);
      return Reflect.get(target, key, receiver);
    },
  });
}

describe('a Bloch count reads neither the rows nor the joints of the whole supercell', () => {
  const cases: [string, [number, number], string][] = [
    ['gallery:kagome', [12, 12], 'periodic'],
    ['gallery:twisted-kagome', [10, 6], 'twist:0.25,0.1'],
    ['gallery:square', [9, 8], 'twist:0.5,0'],
    ['gallery:honeycomb', [6, 10], 'x=periodic'],
    ['gallery:kagome', [5, 7], 'y=twist:0.2,left=pinned'],
  ];
  for (const [spec, cells, bc] of cases) {
    it(`${spec}, ${cells.join('x')}, ${bc}: the same counts as on the open supercell`, () => {
      const fw = buildGallery(spec);
      const boundary = parseBoundary(bc);
      const lazy = analyseSupercell(guarded(buildSupercell(fw, cells, boundary)), { solver: 'bloch' });
      const dense = analyseSupercell(buildSupercell(fw, cells, boundary), { solver: 'dense' });
      for (const key of ['joints', 'bars', 'dof', 'flexes', 'selfStresses', 'rank', 'trivialFlexes', 'rigidMotionsTested', 'groundedBars', 'droppedBars', 'real'] as const) {
        expect(lazy[key], key).toEqual(dense[key]);
      }
      expect(lazy.status.certified).toBe(true);
      expect(lazy.sigmaMax).toBeCloseTo(dense.sigmaMax, 12);
    });
  }

  it('the API keeps the supercell whole: its rows are listed when read after the count', () => {
    const run = analyse({ framework: buildGallery('gallery:kagome'), cells: [16, 16], boundary: 'periodic', solver: 'bloch' });
    const c = countsOf(run.analysis);
    expect(c.bars).toBe(6 * 256);
    expect(c.flexes).toBe(3 * 16); // Φ(φ) is singular on three lines of phases through 0 (16 phases each, sharing φ = 0, where Φ has three zero modes)
    expect(c.trivialFlexes).toBe(2);
    expect(run.supercell.bars.length).toBe(c.bars);
    expect(run.analysis.matrix().rows).toBe(c.bars);
  });
});

/** The trivial flexes by the definition, on the whole supercell: rank of R·T from its Gram matrix. */
function trivialByDefinition(sc: Supercell, absTol: number): number {
  const motions = rigidMotions(sc);
  const cols = motions.map((m) => rigidityApply(sc, m.field));
  const t = cols.length;
  if (t === 0) return 0;
  const G = new Matrix(t, t);
  for (let a = 0; a < t; a++)
    for (let b = 0; b < t; b++) {
      let s = 0;
      for (let i = 0; i < cols[a].length; i++) s += cols[a][i] * cols[b][i];
      G.set(a, b, s);
    }
  const sv = new SingularValueDecomposition(G, { computeLeftSingularVectors: false, computeRightSingularVectors: false }).diagonal;
  return t - sv.filter((v) => Math.sqrt(v) > absTol).length;
}

describe('the rigid motions tested on the supercell one cell wide along the twisted axes', () => {
  const cases: [string, [number, number], string, number][] = [
    ['gallery:kagome', [8, 8], 'periodic', 2],
    ['gallery:kagome', [8, 8], 'twist:0.25,0', 0],
    ['gallery:square', [6, 5], 'x=periodic', 2],
    ['gallery:honeycomb', [4, 7], 'y=periodic', 2],
    ['gallery:square', [6, 5], 'x=periodic,bottom=pinned', 0],
    ['gallery:twisted-kagome', [5, 5], 'twist:0.5,0.5', 0],
  ];
  for (const [spec, cells, bc, expected] of cases) {
    it(`${spec}, ${cells.join('x')}, ${bc}: ${expected} trivial flexes, as on the whole supercell`, () => {
      const sc = buildSupercell(buildGallery(spec), cells, parseBoundary(bc));
      const a = analyseSupercell(sc, { solver: 'bloch' });
      expect(a.trivialFlexes).toBe(expected);
      expect(a.rigidMotionsTested).toEqual(rigidMotions(sc).map((m) => m.name));
      expect(trivialByDefinition(sc, a.tolerance.absolute / sc.lengthScale)).toBe(expected);
    });
  }
});
