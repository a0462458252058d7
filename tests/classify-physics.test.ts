/**
 * Classes that mean the physics (issue 11): line directions come from the framework, corner
 * families do not move with the window or strip, and turning the drawing changes nothing.
 * Expected values come from the cited statements or derivations said to be ours.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { count } from '../src/analysis.js';
import type { Classification, ClassifyOptions } from '../src/flex/classes.js';
import { classifyFlexes } from '../src/flex/classify.js';
import { frameworkLineDirections } from '../src/flex/classify/line-directions.js';
import { buildGallery } from '../src/framework/gallery.js';
import type { Framework } from '../src/framework/types.js';
import { parseFramework } from '../src/framework/validate.js';

function classify(fw: Framework | string, cells: [number, number], bc: string, options: ClassifyOptions = {}): Classification {
  const framework = typeof fw === 'string' ? buildGallery(fw) : fw;
  const { supercell, analysis } = count({ framework, cells, boundary: bc });
  return classifyFlexes(supercell, analysis, options);
}

/** The unit square grid described with a1 = (1, 0), a2 = (2, 1): the same framework. */
const SKEWED_SQUARE: Framework = {
  name: 'square grid, skewed basis',
  lattice: [
    [1, 0],
    [2, 1],
  ],
  joints: [{ id: 'A', at: [0, 0] }],
  bars: [
    { from: 'A', to: 'A', shift: [1, 0] }, // (1, 0)
    { from: 'A', to: 'A', shift: [-2, 1] }, // −2·a1 + a2 = (0, 1)
  ],
};

function rotated(fw: Framework, degrees: number): Framework {
  const t = (degrees * Math.PI) / 180;
  const r = (v: [number, number]): [number, number] => [Math.cos(t) * v[0] - Math.sin(t) * v[1], Math.sin(t) * v[0] + Math.cos(t) * v[1]];
  return { ...fw, lattice: [r(fw.lattice[0]), r(fw.lattice[1])], joints: fw.joints.map((j) => ({ ...j, at: r(j.at) })) };
}

describe('straight lines found from the framework', () => {
  // Which bar chains run straight is read off the unit cell; the expected directions are
  // those of the drawings (common practice: a row of collinear bars is a straight line).
  it('square grid in a skewed basis: rows (1, 0) and columns (2, −1) in that basis', () => {
    expect(frameworkLineDirections(SKEWED_SQUARE).map((l) => l.direction)).toEqual([
      [1, 0],
      [2, -1],
    ]);
  });
  it('regular kagome: three families; twisted kagome and honeycomb: none', () => {
    expect(frameworkLineDirections(buildGallery('gallery:kagome')).length).toBe(3);
    expect(frameworkLineDirections(buildGallery('gallery:twisted-kagome?twist=15'))).toEqual([]);
    expect(frameworkLineDirections(buildGallery('gallery:honeycomb'))).toEqual([]);
  });
});

describe('lines: the same framework in another lattice basis', () => {
  // Periodic N×N square torus: N row slides and N column slides, 2N flexes, each on one row or
  // column (E. D. Bolker & H. Crapo, "Bracing rectangular frameworks I", SIAM J. Appl. Math.
  // 36(3), 473–490 (1979), from memory; the torus count 2N is derived in our reference note §2).
  it('6×6 periodic: 12 line flexes with a1 = (1,0), a2 = (2,1), as with the standard basis', () => {
    const skewed = classify(SKEWED_SQUARE, [6, 6], 'periodic');
    const standard = classify('gallery:square', [6, 6], 'periodic');
    expect(skewed.flexes).toBe(12);
    expect(skewed.counts).toEqual({ local: 0, line: 12, decaying: 0, bulk: 0 });
    expect(standard.counts).toEqual(skewed.counts);
  });
});

describe('regular kagome, free: one line flex per straight bond line, whatever the window', () => {
  // Every straight bond-line of a free L1×L2 kagome carries one flex supported on it, and there
  // are 2(L1 + L2) − 1 of them (reference note §3, derived from A. Souslov, A. J. Liu &
  // T. C. Lubensky, Phys. Rev. Lett. 103, 205503 (2009), from memory). The short lines cutting
  // the corners are lines too, so no count moves with the window.
  it.each([1, 2, 3, 4, 5])('8×8, window %i: 31 lines, nothing local', (window) => {
    const c = classify('gallery:kagome', [8, 8], 'free', { window });
    expect(c.flexes).toBe(2 * (8 + 8) - 1);
    expect(c.counts).toEqual({ local: 0, line: 31, decaying: 0, bulk: 0 });
  });
});

describe('twisted kagome, free: no straight bond lines, so no line flexes', () => {
  // K. Sun, A. Souslov, X. Mao & T. C. Lubensky, "Surface phonons, elastic response, and
  // conformal invariance in twisted kagome lattices", PNAS 109(31), 12369–12374 (2012): all
  // flexes of the free sample except the rigid motions are surface modes.
  const tk = 'gallery:twisted-kagome?twist=15';
  it.each([1, 2, 3])('12×12, strip %i: no line, no local', (strip) => {
    const c = classify(tk, [12, 12], 'free', { strip });
    expect(c.flexes).toBe(2 * (12 + 12) - 1);
    expect(c.counts.line).toBe(0);
    expect(c.counts.local).toBe(0);
  });
  it('12×12: the bulk is the affine flexes only (3 rigid motions and the dilation), everything else decays from the boundary', () => {
    const c = classify(tk, [12, 12], 'free');
    expect(c.counts.bulk).toBe(c.trivialFlexes + 1);
    expect(c.affineFlexes).toBe(4);
    expect(c.counts.decaying).toBe(c.flexes - 4);
  });
  it('the corner families are reported against the window size instead of counted as local', () => {
    const c = classify(tk, [12, 12], 'free', { window: 4 });
    expect(c.counts.local).toBe(0);
    // each acute corner adds one flex per window size: never saturates (derivation: ours)
    expect(c.windowDependence!.map((x) => x.cornerConfined)).toEqual([2, 4, 6, 8]);
  });
  it('a strip one cell across cannot show the lines that cross it, and says so (kagome 1×20 against 4×20, x periodic)', () => {
    const thin = classify('gallery:kagome', [1, 20], 'x=periodic,y=free');
    expect(thin.warnings!.join(' ')).toMatch(/every strip along \(0, 1\) holds the whole 1×20 supercell/);
    const wide = classify('gallery:kagome', [4, 20], 'x=periodic,y=free');
    expect((wide.warnings ?? []).join(' ')).not.toMatch(/holds the whole/);
    expect(wide.counts.line).toBe(wide.flexes);
  });
  it('a strip direction with no straight bond line creates no line flex (and says so)', () => {
    const c = classify(tk, [6, 6], 'free', { directions: [[1, 0]] });
    expect(c.counts.line).toBe(0);
    expect(c.warnings!.join(' ')).toMatch(/direction \(1, 0\) carries no straight line/);
  });
  it('decaying count linear in N: the same step from 5 to 6 as from 6 to 7', () => {
    const d = [5, 6, 7].map((N) => classify(tk, [N, N], 'free'));
    const dec = d.map((c) => c.counts.decaying + c.counts.bulk);
    // 2(L1 + L2) − 1 flexes: +4 per cell of side, all boundary modes beyond the rigid motions
    expect(dec[1] - dec[0]).toBe(4);
    expect(dec[2] - dec[1]).toBe(4);
    for (const c of d) expect(c.counts.decaying).toBe(c.flexes - c.affineFlexes!);
  });
});

describe('turning the drawing changes no class', () => {
  // Common practice: a rigid rotation of the whole drawing maps flexes to flexes joint by joint,
  // so where they live cannot change.
  const FACADE = parseFramework(readFileSync(new URL('../demos/facade-screen.json', import.meta.url), 'utf8'), 'facade-screen.json');
  it('façade screen 6×6 free at 0°, 15°, 30°, 98.9° and 120°: the same counts and anchors', () => {
    const runs = [0, 15, 30, 98.9, 120].map((deg) => classify(rotated(FACADE, deg), [6, 6], 'free'));
    const anchors = (c: Classification) =>
      c.modes
        .filter((m) => m.anchor)
        .map((m) => m.anchor!.name)
        .sort();
    for (const c of runs.slice(1)) {
      expect(c.counts).toEqual(runs[0].counts);
      expect(anchors(c)).toEqual(anchors(runs[0]));
    }
  });
  it('square grid 5×4 free turned by 37°: still all lines', () => {
    // Bolker & Crapo (1979, from memory): every flex of the unbraced grid is a row or a column.
    const c = classify(rotated(buildGallery('gallery:square'), 37), [5, 4], 'free');
    expect(c.counts).toEqual({ local: 0, line: 9, decaying: 0, bulk: 0 });
  });
});
