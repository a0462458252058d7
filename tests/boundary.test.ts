/**
 * Boundary rules: the `--bc` grammar and the supercell's keep / wrap / ground / drop rules,
 * pinned on small cases derived by hand (each derivation is in the test).
 */
import { describe, expect, it } from 'vitest';
import { InputError } from '../src/errors.js';
import { buildGallery } from '../src/framework/gallery.js';
import type { Framework } from '../src/framework/types.js';
import { formatBoundary, parseBoundary } from '../src/supercell/boundary.js';
import { buildSupercell } from '../src/supercell/supercell.js';
import { rigidityMatrix } from '../src/supercell/rigidity.js';
import { counts } from './helpers.js';

describe('--bc grammar', () => {
  it('reads the shorthands', () => {
    expect(parseBoundary('free')).toEqual({ x: { kind: 'sides', low: 'free', high: 'free' }, y: { kind: 'sides', low: 'free', high: 'free' } });
    expect(parseBoundary('pinned').y).toEqual({ kind: 'sides', low: 'pinned', high: 'pinned' });
    expect(parseBoundary('periodic')).toEqual({ x: { kind: 'twist', theta: 0 }, y: { kind: 'twist', theta: 0 } });
    expect(parseBoundary('twist:0.25,0.5')).toEqual({ x: { kind: 'twist', theta: 0.25 }, y: { kind: 'twist', theta: 0.5 } });
  });
  it('reads comma lists, later entries overriding earlier ones, default free', () => {
    const b = parseBoundary('x=twist:0.25,top=pinned');
    expect(b.x).toEqual({ kind: 'twist', theta: 0.25 });
    expect(b.y).toEqual({ kind: 'sides', low: 'free', high: 'pinned' });
    expect(parseBoundary('x=pinned,left=free').x).toEqual({ kind: 'sides', low: 'free', high: 'pinned' });
    expect(parseBoundary('left=pinned,x=free').x).toEqual({ kind: 'sides', low: 'free', high: 'free' });
    expect(parseBoundary('y=periodic').x).toEqual({ kind: 'sides', low: 'free', high: 'free' });
  });
  it.each(['', 'twist:0.5', 'twist:a,b', 'x=twist:', 'z=free', 'left=twist:0.5', 'x=hinged', 'left'])('rejects "%s" naming --bc', (spec) => {
    try {
      parseBoundary(spec);
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      const err = e as InputError;
      expect(err.problems.length).toBeGreaterThan(0);
      expect(err.problems[0].where).toMatch(/^--bc/);
      expect(err.problems[0].fix.length).toBeGreaterThan(5);
    }
  });
  it.each(['free', 'pinned', 'twist:0.25,0.5', 'x=twist:0.3,bottom=pinned,top=free', 'left=pinned,right=free,y=pinned', 'x=periodic,y=free'])('formats and re-reads "%s" to the same rule', (spec) => {
    const b = parseBoundary(spec);
    expect(parseBoundary(formatBoundary(b))).toEqual(b);
  });
});

/** One joint per cell with the given bar shifts (a square lattice of unit cells). */
function chain(shifts: [number, number][]): Framework {
  return { lattice: [[1, 0], [0, 1]], joints: [{ id: 'A', at: [0, 0] }], bars: shifts.map((shift) => ({ from: 'A', to: 'A', shift })) };
}

describe('supercell rules', () => {
  it('free sides drop every bar leaving the supercell', () => {
    // 3×2 square grid: horizontal bars 2 per row × 2 rows, vertical 1 per column × 3 columns.
    const sc = buildSupercell(buildGallery('gallery:square'), [3, 2], parseBoundary('free'));
    expect(sc.bars.length).toBe(4 + 3);
    expect(sc.grounded).toBe(0);
    // dropped: every bar with exactly one end inside: 2 horizontal per row at left/right (×2
    // rows) and 2 vertical per column at bottom/top (×3 columns)
    expect(sc.dropped).toBe(4 + 6);
  });

  it('a pinned side grounds the bars that leave through it; a bar leaving through a free side too is dropped', () => {
    // Square lattice with one diagonal, N×N, left pinned, bottom free. Grounded: the N
    // horizontal bars from cell (−1, j); the diagonals from (−1, j) to (0, j+1) for
    // j = 0..N−2 (N − 1 of them); the diagonal from (−1, −1) leaves through left AND bottom,
    // and bottom is free, so it is dropped.
    const N = 4;
    const sc = buildSupercell(buildGallery('gallery:square-diagonal'), [N, N], parseBoundary('left=pinned'));
    expect(sc.grounded).toBe(2 * N - 1);
    const fromCorner = sc.bars.filter((b) => b.cell[0] === -1 && b.cell[1] === -1);
    expect(fromCorner).toHaveLength(0);
    for (const b of sc.bars.filter((x) => x.grounded)) {
      expect(b.a).toBe(-1); // the outside end is the `from` end on the left side
      expect(b.b).toBeGreaterThanOrEqual(0);
    }
    // with bottom pinned as well the corner diagonal is grounded too
    const both = buildSupercell(buildGallery('gallery:square-diagonal'), [N, N], parseBoundary('left=pinned,bottom=pinned'));
    expect(both.bars.filter((b) => b.cell[0] === -1 && b.cell[1] === -1)).toHaveLength(1);
  });

  it('a twisted axis wraps indices and puts exp(2πiθw) on the far end, one row per orbit', () => {
    // A chain with a bar of shift 3 on a 1-cell supercell wraps 3 times: row (φ³ − 1)·p at the
    // single joint, φ = exp(2πi·0.1).
    const sc = buildSupercell(chain([[3, 0]]), [1, 1], parseBoundary('x=twist:0.1,y=free'));
    expect(sc.bars).toHaveLength(1);
    expect(sc.bars[0].wraps).toEqual([3, 0]);
    const R = rigidityMatrix(sc);
    const ang = 2 * Math.PI * 0.3;
    // column 0 is u_x of the joint; p = (3, 0), assembled in units of lengthScale (here 4: the
    // bar length 3 rounded to a power of two)
    expect(sc.lengthScale).toBe(4);
    expect(R.re[0]).toBeCloseTo((3 * (Math.cos(ang) - 1)) / sc.lengthScale, 14);
    expect(R.im![0]).toBeCloseTo((3 * Math.sin(ang)) / sc.lengthScale, 14);
    // on a 2-cell supercell the same bar gives 2 rows, one per orbit, wrapping once and twice
    const sc2 = buildSupercell(chain([[3, 0]]), [2, 1], parseBoundary('x=twist:0.1,y=free'));
    expect(sc2.bars.map((b) => b.wraps[0]).sort()).toEqual([1, 2]);
  });

  it('phases of ½ keep the matrix real and exact', () => {
    const sc = buildSupercell(buildGallery('gallery:kagome'), [3, 3], parseBoundary('twist:0.5,0'));
    expect(sc.real).toBe(true);
    const R = rigidityMatrix(sc);
    expect(R.im).toBeNull();
    expect(sc.bars.some((b) => b.phase[0] === -1 && b.phase[1] === 0)).toBe(true);
  });

  it('bars longer than the supercell are kept, grounded or dropped by the same rules', () => {
    // Chain with shift (2, 0) on 3 cells. Free: only 0→2 is inside (1 row). Pinned: the bars
    // from cells −2, −1 (left) and 1, 2 (right) each have one end inside: 4 grounded.
    const free = buildSupercell(chain([[2, 0]]), [3, 1], parseBoundary('free'));
    expect(free.bars).toHaveLength(1);
    expect(free.dropped).toBe(4);
    const pinned = buildSupercell(chain([[2, 0]]), [3, 1], parseBoundary('x=pinned'));
    expect(pinned.bars).toHaveLength(5);
    expect(pinned.grounded).toBe(4);
  });
});

describe('pinned and mixed boundaries: counts derived by hand', () => {
  it('square grid N1×N2, left side pinned: each column slides vertically', () => {
    // Grounded horizontal bars fix u_x along each row (rows are chains joined to the ground);
    // columns are vertical chains with no grounded bar, so each slides along y: N1 flexes.
    // Bars: N2(N1−1) + N1(N2−1) + N2 grounded; index 2·N1N2 − bars = N1, so no self-stress.
    // A pinned side fixes the frame of reference, so no flex is trivial.
    const c = counts('gallery:square', [3, 4], 'left=pinned');
    expect(c.bars).toBe(4 * 2 + 3 * 3 + 4);
    expect([c.flexes, c.trivialFlexes, c.selfStresses]).toEqual([3, 0, 0]);
  });

  it('square grid N×N pinned all round: rigid, one self-stress per row and per column', () => {
    // Every row and column is a straight chain with both ends grounded: no motion along it,
    // and a uniform tension along it is a self-stress (2N in all); motion across a chain is
    // blocked by the crossing chains, so 0 flexes. Index: 2N² − (2N(N−1) + 4N) = −2N.
    const N = 4;
    const c = counts('gallery:square', [N, N], 'pinned');
    expect([c.flexes, c.selfStresses, c.bars]).toEqual([0, 2 * N, 2 * N * (N - 1) + 4 * N]);
  });

  it('square grid periodic in x, free in y: N2 row slides + N1 column slides, N2 ring tensions', () => {
    // Rows are closed rings (slide in x, carry a tension each); columns are open chains (slide
    // in y). Translations are allowed (θ = 0), the rotation is not (a periodic axis).
    const c = counts('gallery:square', [3, 4], 'x=periodic,y=free');
    expect([c.flexes, c.selfStresses, c.trivialFlexes]).toEqual([3 + 4, 4, 2]);
  });

  it('square grid twisted in x (θ = ¼), pinned at bottom and top: rigid, a tension per column', () => {
    // A ring of bars with twist φ ≠ 1 forbids sliding (u(N) = φu(0) = u(0) ⇒ u = 0); columns
    // are chains grounded at both ends. Index: 2N1N2 − (N1N2 + N1(N2+1)) = −N1.
    const c = counts('gallery:square', [3, 4], 'x=twist:0.25,y=pinned');
    expect(c.real).toBe(false);
    expect([c.flexes, c.selfStresses]).toEqual([0, 3]);
  });

  it('square grid, only the bottom pinned: each row slides in x', () => {
    // Columns grounded at the bottom cannot move in y; rows are free chains sliding along x.
    const c = counts('gallery:square', [4, 3], 'bottom=pinned');
    expect([c.flexes, c.trivialFlexes, c.selfStresses]).toEqual([3, 0, 0]);
  });
});

describe('--bc contradictions', () => {
  // a twisted axis wraps onto itself and has no sides, so naming one of its sides contradicts it
  it.each([
    ['x=periodic,left=pinned', '--bc left'],
    ['left=pinned,x=periodic', '--bc left'],
    ['y=twist:0.25,top=free', '--bc top'],
    ['bottom=pinned,y=twist:0.5', '--bc bottom'],
  ])('refuses "%s", naming %s and the fix', (spec, where) => {
    try {
      parseBoundary(spec);
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      const p = (e as InputError).problems;
      expect(p).toHaveLength(1);
      expect(p[0].where).toBe(where);
      expect(p[0].what).toMatch(/contradicts/);
      expect(p[0].fix).toMatch(/free/);
    }
  });
  it('still reads sides on the other axis and an axis untwisted again', () => {
    expect(parseBoundary('x=periodic,bottom=pinned').y).toEqual({ kind: 'sides', low: 'pinned', high: 'free' });
    expect(parseBoundary('x=periodic,x=free,left=pinned').x).toEqual({ kind: 'sides', low: 'pinned', high: 'free' });
    expect(parseBoundary('y=periodic,left=pinned,right=free').x).toEqual({ kind: 'sides', low: 'pinned', high: 'free' });
  });
});
