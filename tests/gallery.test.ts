import { readFileSync, readdirSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { InputError } from '../src/errors';
import {
  GALLERY,
  buildGallery,
  galleryEntry,
  gallerySpec,
  parseGallerySpec,
} from '../src/framework/gallery';
import type { Bar, Framework, Vec2 } from '../src/framework/types';
import { checkFramework, parseFramework } from '../src/framework/validate';

// ---------------------------------------------------------------------------------------------
// Local helpers, independent of the code under test

const SQRT3 = Math.sqrt(3);
const DEG = Math.PI / 180;
const TOL = 1e-12;

function cellOrigin(f: Framework, s: [number, number]): Vec2 {
  const [a1, a2] = f.lattice;
  return [s[0] * a1[0] + s[1] * a2[0], s[0] * a1[1] + s[1] * a2[1]];
}

function at(f: Framework, id: string): Vec2 {
  const j = f.joints.find((q) => q.id === id);
  if (!j) throw new Error(`no joint ${id}`);
  return j.at;
}

/** Cartesian vector from the `from` end to the `to` end of a bar. */
function barVector(f: Framework, b: Bar): Vec2 {
  const p = at(f, b.from);
  const q = at(f, b.to);
  const o = cellOrigin(f, b.shift);
  return [q[0] + o[0] - p[0], q[1] + o[1] - p[1]];
}

function len(v: Vec2): number {
  return Math.hypot(v[0], v[1]);
}

function cross(u: Vec2, v: Vec2): number {
  return u[0] * v[1] - u[1] * v[0];
}

function angleOf(v: Vec2): number {
  return Math.atan2(v[1], v[0]);
}

/** True when p − q is an integer combination of the lattice vectors. */
function sameModLattice(lattice: [Vec2, Vec2], p: Vec2, q: Vec2): boolean {
  const [a1, a2] = lattice;
  const d: Vec2 = [p[0] - q[0], p[1] - q[1]];
  const det = cross(a1, a2);
  const c1 = cross(d, a2) / det;
  const c2 = cross(a1, d) / det;
  return Math.abs(c1 - Math.round(c1)) < 1e-9 && Math.abs(c2 - Math.round(c2)) < 1e-9;
}

/** Bar as a segment [start, end] with its `from` end in cell (0, 0). */
function segment(f: Framework, b: Bar): [Vec2, Vec2] {
  const p = at(f, b.from);
  const v = barVector(f, b);
  return [p, [p[0] + v[0], p[1] + v[1]]];
}

/** True when the two segments are translates of each other by a lattice vector (either sense). */
function sameSegmentModLattice(lattice: [Vec2, Vec2], s: [Vec2, Vec2], t: [Vec2, Vec2]): boolean {
  const close = (u: Vec2, v: Vec2) => len([u[0] - v[0], u[1] - v[1]]) < 1e-9;
  const vs: Vec2 = [s[1][0] - s[0][0], s[1][1] - s[0][1]];
  const vt: Vec2 = [t[1][0] - t[0][0], t[1][1] - t[0][1]];
  if (close(vs, vt)) return sameModLattice(lattice, s[0], t[0]);
  if (close(vs, [-vt[0], -vt[1]])) return sameModLattice(lattice, s[0], t[1]);
  return false;
}

/** Every bar vector that leaves joint `id` (bars seen from both ends). */
function barsAt(f: Framework, id: string): Vec2[] {
  const out: Vec2[] = [];
  for (const b of f.bars) {
    const v = barVector(f, b);
    if (b.from === id) out.push(v);
    if (b.to === id) out.push([-v[0], -v[1]]);
  }
  return out;
}

/**
 * Sanity problems of a framework: duplicate or empty ids, bars naming missing joints,
 * non-integer shifts, a degenerate lattice, zero-length bars, duplicate bars (same two
 * joint images, either orientation) and joints that coincide with another joint's image in a
 * nearby cell.
 */
function sanityProblems(f: Framework): string[] {
  const problems: string[] = [];
  const [a1, a2] = f.lattice;
  const area = Math.abs(cross(a1, a2));
  if (!(area > 1e-9 * (len(a1) * len(a2)))) problems.push('lattice vectors do not span the plane');
  const ids = new Set<string>();
  for (const j of f.joints) {
    if (typeof j.id !== 'string' || j.id === '') problems.push('empty joint id');
    if (ids.has(j.id)) problems.push(`duplicate joint id ${j.id}`);
    ids.add(j.id);
    if (!j.at.every(Number.isFinite)) problems.push(`joint ${j.id} has a non-finite position`);
  }
  const scaleLen = Math.sqrt(area);
  const seen: string[] = [];
  for (const [i, b] of f.bars.entries()) {
    if (!ids.has(b.from) || !ids.has(b.to)) {
      problems.push(`bar ${i} names a missing joint`);
      continue;
    }
    if (!b.shift.every(Number.isInteger)) problems.push(`bar ${i} has a non-integer shift`);
    if (len(barVector(f, b)) < 1e-9 * scaleLen) problems.push(`bar ${i} has zero length`);
    const key = `${b.from}|${b.to}|${b.shift[0]}|${b.shift[1]}`;
    const rev = `${b.to}|${b.from}|${-b.shift[0]}|${-b.shift[1]}`;
    if (seen.includes(key) || seen.includes(rev)) problems.push(`bar ${i} duplicates an earlier bar`);
    seen.push(key);
  }
  for (const p of f.joints) {
    for (const q of f.joints) {
      for (let s1 = -3; s1 <= 3; s1++) {
        for (let s2 = -3; s2 <= 3; s2++) {
          if (p.id === q.id && s1 === 0 && s2 === 0) continue;
          const o = cellOrigin(f, [s1, s2]);
          const d = len([q.at[0] + o[0] - p.at[0], q.at[1] + o[1] - p.at[1]]);
          if (d < 1e-6 * scaleLen) problems.push(`joint ${p.id} coincides with ${q.id} in cell (${s1}, ${s2})`);
        }
      }
    }
  }
  return problems;
}

function expectInputError(fn: () => unknown): InputError {
  try {
    fn();
  } catch (e) {
    expect(e).toBeInstanceOf(InputError);
    return e as InputError;
  }
  throw new Error('expected an InputError, but nothing was thrown');
}

function entry(name: string) {
  return galleryEntry(name);
}

/** Sample values across each parameter's range (min, max, default and points between). */
function sampleValues(min: number, max: number, dflt: number): number[] {
  return [min, min + (max - min) * 0.25, (min + max) / 2, dflt, min + (max - min) * 0.8, max];
}

// ---------------------------------------------------------------------------------------------

describe('gallery catalogue', () => {
  it('has the expected entries with unique kebab-case names', () => {
    const names = GALLERY.map((e) => e.name);
    expect(new Set(names).size).toBe(names.length);
    for (const n of names) expect(n).toMatch(/^[a-z0-9]+(-[a-z0-9]+)*$/);
    for (const required of [
      'square',
      'square-diagonal',
      'triangular',
      'kagome',
      'twisted-kagome',
      'honeycomb',
      'rotating-squares',
      'deformed-kagome',
    ]) {
      expect(names).toContain(required);
    }
  });

  it('has defaults inside their ranges and sensible steps', () => {
    for (const e of GALLERY) {
      for (const p of e.params) {
        expect(p.min).toBeLessThan(p.max);
        expect(p.default).toBeGreaterThanOrEqual(p.min);
        expect(p.default).toBeLessThanOrEqual(p.max);
        expect(p.step).toBeGreaterThan(0);
        expect(p.step).toBeLessThanOrEqual(p.max - p.min);
        expect(p.help.length).toBeGreaterThan(10);
      }
    }
  });

  it('builds a sane framework for every entry across each parameter range', () => {
    for (const e of GALLERY) {
      const cases: Record<string, number>[] = [{}];
      for (const p of e.params) {
        for (const v of sampleValues(p.min, p.max, p.default)) cases.push({ [p.key]: v });
      }
      if (e.params.length > 1) {
        cases.push(Object.fromEntries(e.params.map((p) => [p.key, p.min])));
        cases.push(Object.fromEntries(e.params.map((p) => [p.key, p.max])));
        cases.push(Object.fromEntries(e.params.map((p, i) => [p.key, i % 2 ? p.min : p.max])));
      }
      for (const c of cases) {
        const f = e.build(c);
        expect(sanityProblems(f), `${e.name} ${JSON.stringify(c)}`).toEqual([]);
      }
    }
  });

  it('passes the framework validator for every entry at defaults and range ends', () => {
    for (const e of GALLERY) {
      const cases: Record<string, number>[] = [
        {},
        Object.fromEntries(e.params.map((p) => [p.key, p.min])),
        Object.fromEntries(e.params.map((p) => [p.key, p.max])),
      ];
      for (const c of cases) {
        const f = e.build(c);
        expect(() => checkFramework(f, e.name)).not.toThrow();
      }
    }
  });

  it('galleryEntry rejects an unknown name, lists the known ones and suggests the closest', () => {
    const err = expectInputError(() => galleryEntry('kagom'));
    expect(err.problems).toHaveLength(1);
    const text = err.message;
    expect(text).toContain('"kagom"');
    for (const e of GALLERY) expect(text).toContain(e.name);
    expect(err.problems[0].fix).toContain('"kagome"');
    const err2 = expectInputError(() => galleryEntry('honeycomn'));
    expect(err2.problems[0].fix).toContain('"honeycomb"');
  });
});

describe('simple lattices', () => {
  it('square: unit bars along the lattice vectors', () => {
    const f = entry('square').build({});
    expect(f.lattice).toEqual([
      [1, 0],
      [0, 1],
    ]);
    expect(f.joints).toEqual([{ id: 'A', at: [0, 0] }]);
    expect(f.bars.map((b) => b.shift)).toEqual([
      [1, 0],
      [0, 1],
    ]);
    for (const b of f.bars) expect(len(barVector(f, b))).toBeCloseTo(1, 14);
    // Coordination number 4 for the square grid (common practice).
    expect((2 * f.bars.length) / f.joints.length).toBe(4);
  });

  it('square-diagonal: the square grid plus one √2 diagonal', () => {
    const f = entry('square-diagonal').build({});
    expect(f.bars).toHaveLength(3);
    expect(f.bars[2]).toEqual({ from: 'A', to: 'A', shift: [1, 1] });
    expect(len(barVector(f, f.bars[2]))).toBeCloseTo(Math.SQRT2, 14);
  });

  it('triangular: three unit bars at 60° to one another, coordination 6', () => {
    const f = entry('triangular').build({});
    expect(f.joints).toHaveLength(1);
    expect(f.bars.map((b) => b.shift)).toEqual([
      [1, 0],
      [0, 1],
      [-1, 1],
    ]);
    const angles = f.bars.map((b) => angleOf(barVector(f, b)) / DEG);
    expect(angles[0]).toBeCloseTo(0, 12);
    expect(angles[1]).toBeCloseTo(60, 12);
    expect(angles[2]).toBeCloseTo(120, 12);
    for (const b of f.bars) expect(len(barVector(f, b))).toBeCloseTo(1, 14);
    // Coordination number 6 for the triangular lattice (common practice).
    expect((2 * f.bars.length) / f.joints.length).toBe(6);
  });

  it('honeycomb: two joints, three unit bars at 120°, lattice constant √3', () => {
    const f = entry('honeycomb').build({});
    expect(f.joints).toHaveLength(2);
    expect(f.bars).toHaveLength(3);
    expect(len(f.lattice[0])).toBeCloseTo(SQRT3, 14);
    expect(len(f.lattice[1])).toBeCloseTo(SQRT3, 14);
    // 60° between the lattice vectors of a hexagonal lattice (common practice).
    expect(Math.acos((f.lattice[0][0] * f.lattice[1][0] + f.lattice[0][1] * f.lattice[1][1]) / 3) / DEG).toBeCloseTo(
      60,
      12,
    );
    for (const id of ['A', 'B']) {
      const vs = barsAt(f, id);
      expect(vs).toHaveLength(3); // coordination 3 (common practice)
      for (const v of vs) expect(len(v)).toBeCloseTo(1, 14);
      // Bars at a joint are 120° apart, so the three unit vectors sum to zero.
      const sum = vs.reduce((s, v) => [s[0] + v[0], s[1] + v[1]] as Vec2, [0, 0] as Vec2);
      expect(len(sum)).toBeLessThan(TOL);
    }
  });
});

describe('kagome', () => {
  it('uses a1 = (1,0), a2 = (1/2, √3/2) with A = 0, B = a1/2, C = a2/2 and six bars of length 1/2', () => {
    const f = entry('kagome').build({});
    expect(f.lattice[0]).toEqual([1, 0]);
    expect(f.lattice[1][0]).toBe(0.5);
    expect(f.lattice[1][1]).toBeCloseTo(SQRT3 / 2, 15);
    expect(f.joints.map((j) => j.id)).toEqual(['A', 'B', 'C']);
    expect(at(f, 'A')).toEqual([0, 0]);
    expect(at(f, 'B')).toEqual([0.5, 0]);
    expect(at(f, 'C')[0]).toBe(0.25);
    expect(at(f, 'C')[1]).toBeCloseTo(SQRT3 / 4, 15);
    expect(f.bars).toEqual([
      { from: 'A', to: 'B', shift: [0, 0] },
      { from: 'A', to: 'C', shift: [0, 0] },
      { from: 'B', to: 'C', shift: [0, 0] },
      { from: 'B', to: 'A', shift: [1, 0] },
      { from: 'B', to: 'C', shift: [1, -1] },
      { from: 'A', to: 'C', shift: [0, -1] },
    ]);
    for (const b of f.bars) expect(len(barVector(f, b))).toBeCloseTo(0.5, 14);
  });

  it('has straight bond lines: the four bars at each joint form two opposite pairs', () => {
    // Regular kagome: every joint lies on two straight lines of bonds (common practice).
    const f = entry('kagome').build({});
    for (const id of ['A', 'B', 'C']) {
      const vs = barsAt(f, id);
      expect(vs).toHaveLength(4);
      for (const v of vs) {
        const opposite = vs.filter((w) => len([v[0] + w[0], v[1] + w[1]]) < TOL);
        expect(opposite).toHaveLength(1);
      }
    }
  });
});

describe('twisted kagome', () => {
  const twisted = entry('twisted-kagome');
  const angles = [-55, -30, -7.5, 1, 10, 15, 22.5, 30, 45, 55];

  // Construction: up-triangles turned by +α, down-triangles by −α about their centres, with the
  // lattice constant shrinking to a_L = 2ℓ cos α and all bonds keeping length ℓ (K. Sun,
  // A. Souslov, X. Mao, T. C. Lubensky, "Surface phonons, elastic response, and conformal
  // invariance in twisted kagome lattices", PNAS 109, 12369–12374, 2012).
  it('keeps all six bars at length ℓ = 1/2 and shrinks the lattice to 2ℓ cos α', () => {
    for (const deg of angles) {
      const a = deg * DEG;
      const f = twisted.build({ twist: deg });
      expect(f.bars).toHaveLength(6);
      for (const b of f.bars) expect(Math.abs(len(barVector(f, b)) - 0.5)).toBeLessThan(TOL);
      expect(len(f.lattice[0])).toBeCloseTo(2 * 0.5 * Math.cos(a), 14);
      expect(len(f.lattice[1])).toBeCloseTo(2 * 0.5 * Math.cos(a), 14);
      // The lattice shrinks without turning: a1 stays along x and a2 at 60°.
      expect(angleOf(f.lattice[0])).toBeCloseTo(0, 14);
      expect(angleOf(f.lattice[1]) / DEG).toBeCloseTo(60, 12);
    }
  });

  it('turns the up-triangle by +α and the down-triangle by −α', () => {
    for (const deg of angles) {
      const f = twisted.build({ twist: deg });
      const [ab, ac, bc, baDown, bcDown, acDown] = f.bars.map((b) => barVector(f, b));
      // Up triangle A(0) B(0) C(0): at α = 0 its edges point at 0°, 60° and 120°.
      expect(angleOf(ab) / DEG).toBeCloseTo(deg, 10);
      expect(angleOf(ac) / DEG).toBeCloseTo(60 + deg, 10);
      expect(angleOf(bc) / DEG).toBeCloseTo(120 + deg, 10);
      // Down triangle B(0), A(+a1), C(+a1−a2): at α = 0, B→A(+a1) points at 0° and
      // B→C(+a1−a2) at −60°; A→C(−a2) at −120°.
      expect(angleOf(baDown) / DEG).toBeCloseTo(-deg, 10);
      expect(angleOf(bcDown) / DEG).toBeCloseTo(-60 - deg, 10);
      expect(angleOf(acDown) / DEG).toBeCloseTo(-120 - deg, 10);
    }
  });

  it('breaks the straight bond lines for α ≠ 0', () => {
    const f = twisted.build({ twist: 10 });
    const vs = barsAt(f, 'B');
    for (const v of vs) {
      for (const w of vs) expect(len([v[0] + w[0], v[1] + w[1]])).toBeGreaterThan(0.05);
    }
  });

  it('reproduces the regular kagome exactly at α = 0', () => {
    const k = entry('kagome').build({});
    const t = twisted.build({ twist: 0 });
    expect(t.lattice).toEqual(k.lattice);
    expect(t.joints).toEqual(k.joints);
    expect(t.bars).toEqual(k.bars);
  });
});

describe('rotating squares', () => {
  it('primitive cell: 2 joints, 5 bars, unit sides and one √2 diagonal', () => {
    const f = entry('rotating-squares').build({});
    expect(f.lattice).toEqual([
      [1, 1],
      [1, -1],
    ]);
    expect(f.joints).toHaveLength(2);
    expect(f.bars).toHaveLength(5);
    const lengths = f.bars.map((b) => len(barVector(f, b))).sort((x, y) => x - y);
    const side = lengths[0];
    expect(side).toBeCloseTo(1, 14);
    for (const l of lengths.slice(0, 4)) expect(l).toBeCloseTo(side, 14);
    expect(lengths[4]).toBeCloseTo(Math.SQRT2 * side, 14);
  });

  it('primitive cell: the five bars are the sides and a diagonal of the unit square [0,1]²', () => {
    // Checkerboard of rigid squares sharing corners (J. N. Grima & K. E. Evans, "Auxetic
    // behavior from rotating squares", J. Mater. Sci. Lett. 19, 1563–1565, 2000; journal
    // details from memory).
    const f = entry('rotating-squares').build({});
    expect(at(f, 'A')).toEqual([0, 0]);
    expect(at(f, 'B')).toEqual([1, 0]);
    const sq: [Vec2, Vec2][] = [
      [[0, 0], [1, 0]],
      [[1, 0], [1, 1]],
      [[1, 1], [0, 1]],
      [[0, 1], [0, 0]],
      [[0, 0], [1, 1]],
    ];
    for (const target of sq) {
      const matches = f.bars.filter((b) => sameSegmentModLattice(f.lattice, segment(f, b), target));
      expect(matches, JSON.stringify(target)).toHaveLength(1);
    }
  });

  it('tilted two-square cell: unit sides, √2 diagonals and a lattice shrunk by cos θ', () => {
    const e = entry('rotating-squares-tilted');
    for (const deg of [-40, -12, 0, 5, 15, 30, 40]) {
      const f = e.build({ tilt: deg });
      expect(f.joints).toHaveLength(4);
      expect(f.bars).toHaveLength(10);
      const diagonals = [4, 9];
      f.bars.forEach((b, i) => {
        const l = len(barVector(f, b));
        expect(Math.abs(l - (diagonals.includes(i) ? Math.SQRT2 : 1))).toBeLessThan(TOL);
      });
      // Alternate squares counter-rotate; corner sharing needs the centres to move in by cos θ
      // (same argument as for the twisted kagome: each joint is the midpoint of two centres).
      const c = Math.cos(deg * DEG);
      expect(f.lattice[0][0]).toBeCloseTo(2 * c, 14);
      expect(f.lattice[0][1]).toBe(0);
      expect(f.lattice[1][0]).toBe(0);
      expect(f.lattice[1][1]).toBeCloseTo(2 * c, 14);
      // Square P (bars 0–4) turned by +θ, square Q (bars 5–9) by −θ.
      expect(angleOf(barVector(f, f.bars[0])) / DEG).toBeCloseTo(deg, 10);
      expect(angleOf(barVector(f, f.bars[5])) / DEG).toBeCloseTo(-deg, 10);
    }
  });

  it('tilted two-square cell at θ = 0 is a supercell of the primitive cell', () => {
    const prim = entry('rotating-squares').build({});
    const f = entry('rotating-squares-tilted').build({ tilt: 0 });
    expect(f.lattice).toEqual([
      [2, 0],
      [0, 2],
    ]);
    expect(f.joints.map((j) => j.at)).toEqual([
      [0, 0],
      [1, 0],
      [1, 1],
      [0, 1],
    ]);
    // Every supercell bar is a primitive bar moved by a primitive lattice vector, and each
    // primitive bar is met exactly twice (two squares per supercell).
    const counts = prim.bars.map(() => 0);
    for (const b of f.bars) {
      const hits = prim.bars
        .map((q, k) => (sameSegmentModLattice(prim.lattice, segment(f, b), segment(prim, q)) ? k : -1))
        .filter((k) => k >= 0);
      expect(hits).toHaveLength(1);
      counts[hits[0]]++;
    }
    expect(counts).toEqual([2, 2, 2, 2, 2]);
  });
});

describe('deformed kagome', () => {
  const e = entry('deformed-kagome');
  const a1: Vec2 = [1, 0];
  const a2: Vec2 = [0.5, SQRT3 / 2];
  const rot90 = (v: Vec2): Vec2 => [-v[1], v[0]];
  const unitv = (v: Vec2): Vec2 => [v[0] / len(v), v[1] / len(v)];
  const n1 = rot90(unitv(a1));
  const n2 = rot90(unitv(a2));
  const n3 = rot90(unitv([a2[0] - a1[0], a2[1] - a1[1]]));
  const dotp = (u: Vec2, v: Vec2) => u[0] * v[0] + u[1] * v[1];

  /** Recovers (x1, x2, x3, z) from a built framework, from the definitions. */
  function recover(f: Framework) {
    const A = at(f, 'A');
    const B = at(f, 'B');
    const C = at(f, 'C');
    const dA: Vec2 = [A[0], A[1]];
    const dB: Vec2 = [B[0] - a1[0] / 2, B[1] - a1[1] / 2];
    const dC: Vec2 = [C[0] - a2[0] / 2, C[1] - a2[1] / 2];
    const sub = (u: Vec2, v: Vec2): Vec2 => [u[0] - v[0], u[1] - v[1]];
    return {
      x1: dotp(sub(dB, dA), n1),
      x2: dotp(sub(dC, dA), n2),
      x3: dotp(sub(dC, dB), n3),
      z: dotp(sub(dB, dA), unitv(a1)),
    };
  }

  // Parameterization: Kane & Lubensky, "Topological boundary modes in isostatic lattices",
  // Nature Physics 10, 39–45 (2014) (x_i buckle the three line families, z keeps them straight;
  // from memory); the explicit site formulas are the project's own fixed-lattice version.
  it('recovers the input (x1, x2, x3, z) from the built coordinates', () => {
    const cases = [
      { x1: 0.1, x2: 0.1, x3: 0.1, z: 0 },
      { x1: -0.1, x2: 0.1, x3: 0.1, z: 0 },
      { x1: 0.1, x2: -0.1, x3: 0.1, z: 0 },
      { x1: 0.1, x2: 0.1, x3: -0.1, z: 0 },
      { x1: 0.1, x2: 0.1, x3: 0.1, z: 0.05 },
      { x1: -0.15, x2: 0.07, x3: 0.15, z: -0.1 },
      { x1: 0.03, x2: -0.15, x3: -0.02, z: 0.1 },
    ];
    for (const c of cases) {
      const f = e.build(c);
      expect(f.lattice[0]).toEqual(a1);
      expect(f.lattice[1][0]).toBe(0.5);
      expect(f.lattice[1][1]).toBeCloseTo(SQRT3 / 2, 15);
      expect(at(f, 'A')).toEqual([0, 0]);
      const r = recover(f);
      expect(r.x1).toBeCloseTo(c.x1, 14);
      expect(r.x2).toBeCloseTo(c.x2, 14);
      expect(r.x3).toBeCloseTo(c.x3, 14);
      expect(r.z).toBeCloseTo(c.z, 14);
    }
  });

  it('uses the kagome bond list and gives the regular kagome when all parameters are zero', () => {
    const k = entry('kagome').build({});
    const f = e.build({ x1: 0, x2: 0, x3: 0, z: 0 });
    expect(f.lattice).toEqual(k.lattice);
    expect(f.joints).toEqual(k.joints);
    expect(f.bars).toEqual(k.bars);
    expect(e.build({}).bars).toEqual(k.bars);
  });

  it('buckles exactly the bond-line families whose x_i is nonzero', () => {
    // Family 1 (A–B lines along a1) at A: A→B(0) and the reversed B(−a1)→A bar, i.e. bars
    // (A,B,(0,0)) and (B,A,(1,0)); family 2 (A–C along a2): (A,C,(0,0)) and (A,C,(0,−1));
    // family 3 (B–C along a2 − a1): (B,C,(0,0)) and (B,C,(1,−1)).
    const pairs: [number, number][] = [
      [0, 3],
      [1, 5],
      [2, 4],
    ];
    const bend = (f: Framework, i: number) => {
      const [p, q] = pairs[i];
      const u = barVector(f, f.bars[p]);
      const v = barVector(f, f.bars[q]);
      return cross(u, v) / (len(u) * len(v));
    };
    const straight = e.build({ x1: 0, x2: 0, x3: 0, z: 0.08 });
    for (const i of [0, 1, 2]) expect(Math.abs(bend(straight, i))).toBeLessThan(TOL);
    expect(len(barVector(straight, straight.bars[0]))).toBeCloseTo(0.58, 14); // z lengthens A–B
    for (const i of [0, 1, 2]) {
      const x = [0, 0, 0];
      x[i] = 0.1;
      const f = e.build({ x1: x[0], x2: x[1], x3: x[2], z: 0 });
      for (const j of [0, 1, 2]) {
        if (j === i) expect(Math.abs(bend(f, j))).toBeGreaterThan(0.05);
        else expect(Math.abs(bend(f, j))).toBeLessThan(TOL);
      }
    }
  });
});

describe('gallery specs', () => {
  it('parses a full spec and fills defaults for missing keys', () => {
    expect(parseGallerySpec('gallery:twisted-kagome?twist=20')).toEqual({
      name: 'twisted-kagome',
      params: { twist: 20 },
    });
    expect(parseGallerySpec('gallery:twisted-kagome')).toEqual({ name: 'twisted-kagome', params: { twist: 15 } });
    expect(parseGallerySpec('gallery:deformed-kagome?x2=-0.1&z=0.05')).toEqual({
      name: 'deformed-kagome',
      params: { x1: 0.1, x2: -0.1, x3: 0.1, z: 0.05 },
    });
    expect(parseGallerySpec('gallery:square')).toEqual({ name: 'square', params: {} });
    expect(parseGallerySpec('gallery:twisted-kagome?twist=-1.5e1').params.twist).toBe(-15);
  });

  it('requires the gallery: prefix', () => {
    const err = expectInputError(() => parseGallerySpec('twisted-kagome?twist=15'));
    expect(err.problems[0].what).toContain('gallery:');
    expect(err.problems[0].fix).toContain('gallery:twisted-kagome');
  });

  it('rejects a missing or unknown lattice name with the known names', () => {
    expect(expectInputError(() => parseGallerySpec('gallery:')).problems[0].what).toContain('name is missing');
    const err = expectInputError(() => parseGallerySpec('gallery:twisted-kagom?twist=3'));
    expect(err.problems[0].fix).toContain('"twisted-kagome"');
    expect(err.message).toContain('honeycomb');
  });

  it('rejects an unknown key, naming it and listing the allowed keys, ranges and defaults', () => {
    const err = expectInputError(() => parseGallerySpec('gallery:twisted-kagome?twst=10'));
    expect(err.problems).toHaveLength(1);
    const p = err.problems[0];
    expect(p.where).toContain('"twst"');
    expect(p.fix).toContain('twist');
    expect(p.fix).toContain('-55');
    expect(p.fix).toContain('55');
    expect(p.fix).toContain('default 15');
    expect(p.fix).toContain('closest key is "twist"');
    const none = expectInputError(() => parseGallerySpec('gallery:square?size=2'));
    expect(none.problems[0].what).toContain('takes no parameters');
  });

  it('rejects non-numbers, naming the key, the range and the default', () => {
    for (const bad of ['abc', '15deg', '', '0x10', 'Infinity', 'NaN', '1,5']) {
      const err = expectInputError(() => parseGallerySpec(`gallery:twisted-kagome?twist=${bad}`));
      expect(err.problems).toHaveLength(1);
      const p = err.problems[0];
      expect(p.where).toContain('"twist"');
      expect(p.fix).toContain('-55° to 55°');
      expect(p.fix).toContain('default 15°');
    }
    expect(expectInputError(() => parseGallerySpec('gallery:twisted-kagome?twist')).problems[0].what).toContain(
      'no "=value"',
    );
  });

  it('rejects out-of-range values, naming the key, the range and the default', () => {
    const err = expectInputError(() => parseGallerySpec('gallery:twisted-kagome?twist=60'));
    const p = err.problems[0];
    expect(p.where).toContain('"twist"');
    expect(p.what).toContain('60');
    expect(p.what).toContain('-55° to 55°');
    expect(p.what).toContain('default 15°');
    const many = expectInputError(() => parseGallerySpec('gallery:deformed-kagome?x1=0.5&x3=oops&z=-1&q=1'));
    expect(many.problems.map((q) => q.where)).toEqual([
      'gallery:deformed-kagome parameter "x1"',
      'gallery:deformed-kagome parameter "x3"',
      'gallery:deformed-kagome parameter "z"',
      'gallery:deformed-kagome parameter "q"',
    ]);
    // Range ends are allowed.
    expect(parseGallerySpec('gallery:twisted-kagome?twist=-55').params.twist).toBe(-55);
    expect(parseGallerySpec('gallery:deformed-kagome?z=0.1').params.z).toBe(0.1);
  });

  it('rejects a repeated key', () => {
    const err = expectInputError(() => parseGallerySpec('gallery:twisted-kagome?twist=1&twist=2'));
    expect(err.problems[0].what).toContain('more than once');
  });

  it('entry.build checks its parameters too', () => {
    const e = entry('twisted-kagome');
    expect(expectInputError(() => e.build({ twist: Number.NaN })).problems[0].where).toContain('"twist"');
    expect(expectInputError(() => e.build({ twist: 90 })).problems[0].what).toContain('outside');
    expect(expectInputError(() => e.build({ angle: 1 })).problems[0].where).toContain('"angle"');
  });

  it('buildGallery records every parameter value in the name and describes the lattice in one sentence', () => {
    const f = buildGallery('gallery:twisted-kagome');
    expect(f.name).toBe('twisted-kagome (twist=15°)');
    expect(buildGallery('gallery:deformed-kagome?x1=-0.1').name).toBe(
      'deformed-kagome (x1=-0.1, x2=0.1, x3=0.1, z=0)',
    );
    expect(buildGallery('gallery:kagome').name).toBe('kagome');
    for (const e of GALLERY) {
      const g = e.build({});
      expect(typeof g.description).toBe('string');
      const d = g.description as string;
      expect(d.endsWith('.')).toBe(true);
      expect(d.slice(0, -1)).not.toMatch(/\.\s/); // one sentence
    }
  });

  it('round-trips specs: gallerySpec → parseGallerySpec → build', () => {
    const cases: [string, Record<string, number>][] = [
      ['twisted-kagome', { twist: -22.5 }],
      ['deformed-kagome', { x1: -0.1, x2: 0.1, x3: 0.12, z: 0.01 }],
      ['rotating-squares-tilted', { tilt: 7 }],
      ['honeycomb', {}],
    ];
    for (const [name, params] of cases) {
      const spec = gallerySpec(name, params);
      expect(spec.startsWith(`gallery:${name}`)).toBe(true);
      const parsed = parseGallerySpec(spec);
      expect(parsed.name).toBe(name);
      expect(parsed.params).toEqual(params);
      expect(buildGallery(spec)).toEqual(galleryEntry(name).build(params));
    }
    expect(gallerySpec('twisted-kagome')).toBe('gallery:twisted-kagome?twist=15');
  });
});

// ---------------------------------------------------------------------------------------------

describe('demo files', () => {
  const demoDir = join(dirname(fileURLToPath(import.meta.url)), '..', 'demos');
  const files = readdirSync(demoDir).filter((n) => n.endsWith('.json'));
  const load = (n: string) => JSON.parse(readFileSync(join(demoDir, n), 'utf8')) as Framework;

  it('include the three required scenarios', () => {
    expect(files.length).toBeGreaterThanOrEqual(3);
    for (const n of ['gripper-pad.json', 'facade-screen.json', 'deployable-canopy.json']) expect(files).toContain(n);
  });

  it('are pretty-printed JSON with the right fields, labelled as invented, and sane', () => {
    for (const n of files) {
      const text = readFileSync(join(demoDir, n), 'utf8');
      expect(text.startsWith('{\n  "')).toBe(true);
      const f = JSON.parse(text) as Framework;
      expect(Object.keys(f).sort()).toEqual(['bars', 'description', 'joints', 'lattice', 'name']);
      expect(typeof f.name).toBe('string');
      expect(f.description).toMatch(/^Invented example: /);
      expect(f.lattice).toHaveLength(2);
      for (const v of f.lattice) {
        expect(v).toHaveLength(2);
        for (const x of v) expect(typeof x).toBe('number');
      }
      for (const j of f.joints) {
        expect(Object.keys(j).sort()).toEqual(['at', 'id']);
        expect(j.at).toHaveLength(2);
      }
      for (const b of f.bars) {
        expect(Object.keys(b).sort()).toEqual(['from', 'shift', 'to']);
        expect(b.shift).toHaveLength(2);
      }
      expect(sanityProblems(f), n).toEqual([]);
      expect(() => parseFramework(text, n)).not.toThrow();
    }
  });

  it('gripper pad: 4 mm rigid pads (four sides and a diagonal each)', () => {
    const f = load('gripper-pad.json');
    const lengths = f.bars.map((b) => len(barVector(f, b)));
    expect(lengths.filter((l) => Math.abs(l - 4) < 1e-9)).toHaveLength(8);
    expect(lengths.filter((l) => Math.abs(l - 4 * Math.SQRT2) < 1e-9)).toHaveLength(2);
  });

  it('façade screen: every bar is 0.3 m', () => {
    const f = load('facade-screen.json');
    for (const b of f.bars) expect(len(barVector(f, b))).toBeCloseTo(0.3, 12);
  });

  it('deployable canopy: 1.2 m honeycomb struts (three per joint) plus one 1.2·√3 tie', () => {
    const f = load('deployable-canopy.json');
    const lengths = f.bars.map((b) => len(barVector(f, b)));
    expect(lengths.filter((l) => Math.abs(l - 1.2) < 1e-9)).toHaveLength(6);
    expect(lengths.filter((l) => Math.abs(l - 1.2 * SQRT3) < 1e-9)).toHaveLength(1);
    const struts = f.bars.filter((_, i) => Math.abs(lengths[i] - 1.2) < 1e-9);
    for (const j of f.joints) {
      const degree = struts.filter((b) => b.from === j.id).length + struts.filter((b) => b.to === j.id).length;
      expect(degree).toBe(3);
    }
  });

  it('rattler mesh: the bead sits between two collinear opposite bars and the replaced wire is gone', () => {
    if (!files.includes('rattler-mesh.json')) return;
    const f = load('rattler-mesh.json');
    const beadBars = barsAt(f, 'M');
    expect(beadBars).toHaveLength(2);
    const [u, v] = beadBars;
    expect(Math.abs(cross(u, v))).toBeLessThan(TOL);
    expect(u[0] * v[0] + u[1] * v[1]).toBeLessThan(0); // pointing away from each other
    // The two far ends are mesh joints one unit apart, and no bar joins them directly.
    const mAt = at(f, 'M');
    const ends = f.bars
      .filter((b) => b.from === 'M' || b.to === 'M')
      .map((b) => {
        const w = barVector(f, b);
        return b.from === 'M' ? [mAt[0] + w[0], mAt[1] + w[1]] : [mAt[0] - w[0], mAt[1] - w[1]];
      });
    expect(len([ends[0][0] - ends[1][0], ends[0][1] - ends[1][1]])).toBeCloseTo(1, 12);
    const span: [Vec2, Vec2] = [ends[0] as Vec2, ends[1] as Vec2];
    for (const b of f.bars) {
      if (b.from === 'M' || b.to === 'M') continue;
      expect(sameSegmentModLattice(f.lattice, segment(f, b), span)).toBe(false);
    }
  });
});
