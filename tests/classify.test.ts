/**
 * Where flexes live: the classifier against published statements and hand derivations, and
 * its invariance under a rotated kernel basis, relabelled joints and a moved cell origin.
 * Expected values come from the cited statements (or derivations said to be ours), never from
 * our output.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { count } from '../src/analysis.js';
import type { Classification, ClassifiedMode, ClassifyOptions } from '../src/flex/classes.js';
import { classifyFlexes, psdNullSpace } from '../src/flex/classify.js';
import type { FlexAnalysis } from '../src/flex/spaces.js';
import { buildGallery } from '../src/framework/gallery.js';
import type { Framework } from '../src/framework/types.js';
import { parseFramework } from '../src/framework/validate.js';
import { InputError } from '../src/errors.js';
import { sparseMatVec } from '../src/linalg/sparse.js';
import type { Supercell } from '../src/supercell/supercell.js';
import { rng } from './helpers.js';

const RATTLER = parseFramework(readFileSync(new URL('../demos/rattler-mesh.json', import.meta.url), 'utf8'), 'rattler-mesh.json');

interface Run {
  sc: Supercell;
  analysis: FlexAnalysis;
  c: Classification;
}

function run(fw: Framework | string, cells: [number, number], bc: string, options: ClassifyOptions = {}, wrap?: (a: FlexAnalysis) => FlexAnalysis): Run {
  const framework = typeof fw === 'string' ? buildGallery(fw) : fw;
  const { supercell: sc, analysis } = count({ framework, cells, boundary: bc });
  const a = wrap ? wrap(analysis) : analysis;
  return { sc, analysis: a, c: classifyFlexes(sc, a, options) };
}

const cache = new Map<string, Run>();
function cached(fw: string, cells: [number, number], bc: string, options: ClassifyOptions = {}): Run {
  const key = JSON.stringify([fw, cells, bc, options]);
  if (!cache.has(key)) cache.set(key, run(fw, cells, bc, options));
  return cache.get(key)!;
}

/**
 * Fit of a flex's velocities at the first joint of every cell to u0 + i·ȧ1 + j·ȧ2 (least squares),
 * the residual of the fit and the strain sym([ȧ1 ȧ2]·L⁻¹) (L = [a1 a2]); real part only.
 */
function strainOf(sc: Supercell, m: ClassifiedMode): { xx: number; yy: number; xy: number; residual: number } {
  const [N1, N2] = sc.cells;
  const S = sc.framework.joints.length;
  // normal equations of the 3-parameter fit (1, i, j) per coordinate
  const A = [
    [0, 0, 0],
    [0, 0, 0],
    [0, 0, 0],
  ];
  const bx = [0, 0, 0];
  const by = [0, 0, 0];
  for (let j = 0; j < N2; j++)
    for (let i = 0; i < N1; i++) {
      const k = (j * N1 + i) * S;
      const f = [1, i, j];
      for (let a = 0; a < 3; a++) {
        for (let b = 0; b < 3; b++) A[a][b] += f[a] * f[b];
        bx[a] += f[a] * m.vector.re[2 * k];
        by[a] += f[a] * m.vector.re[2 * k + 1];
      }
    }
  const solve = (b: number[]) => {
    const M = A.map((row, r) => [...row, b[r]]);
    for (let c = 0; c < 3; c++) {
      const p = M.slice(c).reduce((best, row, r) => (Math.abs(row[c]) > Math.abs(M[best][c]) ? r + c : best), c);
      [M[c], M[p]] = [M[p], M[c]];
      for (let r = 0; r < 3; r++) if (r !== c) {
        const t = M[r][c] / M[c][c];
        for (let q = c; q < 4; q++) M[r][q] -= t * M[c][q];
      }
    }
    return M.map((row, r) => row[3] / row[r]);
  };
  const cx = solve(bx);
  const cy = solve(by);
  let residual = 0;
  for (let j = 0; j < N2; j++)
    for (let i = 0; i < N1; i++) {
      const k = (j * N1 + i) * S;
      residual = Math.max(residual, Math.abs(m.vector.re[2 * k] - cx[0] - cx[1] * i - cx[2] * j), Math.abs(m.vector.re[2 * k + 1] - cy[0] - cy[1] * i - cy[2] * j));
    }
  // velocity gradient G with G·a1 = ȧ1 = (cx[1], cy[1]), G·a2 = ȧ2 = (cx[2], cy[2])
  const [[a1x, a1y], [a2x, a2y]] = sc.framework.lattice;
  const det = a1x * a2y - a2x * a1y;
  const inv = [
    [a2y / det, -a2x / det],
    [-a1y / det, a1x / det],
  ]; // rows of L⁻¹, L = [[a1x, a2x], [a1y, a2y]]
  const G = [
    [cx[1] * inv[0][0] + cx[2] * inv[1][0], cx[1] * inv[0][1] + cx[2] * inv[1][1]],
    [cy[1] * inv[0][0] + cy[2] * inv[1][0], cy[1] * inv[0][1] + cy[2] * inv[1][1]],
  ];
  return { xx: G[0][0], yy: G[1][1], xy: (G[0][1] + G[1][0]) / 2, residual };
}

/** Joints whose amplitude is above `rel` × the largest amplitude. */
function supportOf(m: ClassifiedMode, rel = 1e-8): number[] {
  const J = m.vector.re.length / 2;
  const amp = Array.from({ length: J }, (_, k) => Math.hypot(m.vector.re[2 * k], m.vector.re[2 * k + 1], m.vector.im[2 * k], m.vector.im[2 * k + 1]));
  const top = Math.max(...amp);
  return amp.flatMap((a, k) => (a > rel * top ? [k] : []));
}

function pos(sc: Supercell, k: number): [number, number] {
  return [sc.positions[2 * k], sc.positions[2 * k + 1]];
}

/** The straight line through all the points (key "angle|offset"), or null if they are not collinear. */
function lineThrough(points: [number, number][]): string | null {
  let best: [number, number, number] = [0, 0, -1];
  for (let a = 0; a < points.length; a++)
    for (let b = a + 1; b < points.length; b++) {
      const d = Math.hypot(points[b][0] - points[a][0], points[b][1] - points[a][1]);
      if (d > best[2]) best = [a, b, d];
    }
  if (best[2] <= 0) return null;
  const [p, q] = [points[best[0]], points[best[1]]];
  let t = [(q[0] - p[0]) / best[2], (q[1] - p[1]) / best[2]];
  if (t[1] < -1e-12 || (Math.abs(t[1]) <= 1e-12 && t[0] < 0)) t = [-t[0], -t[1]]; // direction in [0, π)
  const nrm = [-t[1], t[0]];
  const offset = nrm[0] * p[0] + nrm[1] * p[1];
  for (const r of points) if (Math.abs(nrm[0] * r[0] + nrm[1] * r[1] - offset) > 1e-9) return null;
  return `${Math.atan2(t[1], t[0]).toFixed(6)}|${(offset + 0).toFixed(6)}`;
}

function countsOf(c: Classification) {
  return { ...c.counts };
}

describe('square grid, free', () => {
  // An unbraced grid of a×b joints has a + b flexes (3 rigid): each row slides along itself
  // and each column along itself; every flex is supported on one row or one column.
  // E. D. Bolker & H. Crapo, "Bracing rectangular frameworks I", SIAM J. Appl. Math. 36(3),
  // 473–490 (1979) (from memory).
  const { sc, c } = cached('gallery:square', [6, 5], 'free');
  it('every flex is a line: 5 row slides and 6 column slides (Bolker & Crapo 1979)', () => {
    expect(c.flexes).toBe(11);
    expect(countsOf(c)).toEqual({ local: 0, line: 11, decaying: 0, bulk: 0 });
    expect(c.trivialFlexes).toBe(3);
  });
  it('each line flex is one whole row sliding in x or one whole column sliding in y', () => {
    const rows = new Set<number>();
    const cols = new Set<number>();
    for (const m of c.modes) {
      const s = supportOf(m);
      const js = new Set(s.map((k) => sc.jointCells[2 * k + 1]));
      const is = new Set(s.map((k) => sc.jointCells[2 * k]));
      const ux = s.map((k) => m.vector.re[2 * k]);
      const uy = s.map((k) => m.vector.re[2 * k + 1]);
      if (js.size === 1) {
        expect(s.length).toBe(6);
        expect(m.direction).toEqual([1, 0]);
        for (const u of uy) expect(Math.abs(u)).toBeLessThan(1e-12);
        for (const u of ux) expect(u).toBeCloseTo(ux[0], 12);
        rows.add([...js][0]);
      } else {
        expect(is.size).toBe(1);
        expect(s.length).toBe(5);
        expect(m.direction).toEqual([0, 1]);
        for (const u of ux) expect(Math.abs(u)).toBeLessThan(1e-12);
        for (const u of uy) expect(u).toBeCloseTo(uy[0], 12);
        cols.add([...is][0]);
      }
    }
    expect(rows.size).toBe(5);
    expect(cols.size).toBe(6);
  });
});

describe('regular kagome, free', () => {
  // Each straight bond-line of the free kagome carries exactly one flex, supported on the
  // joints of that line (the two off-line bars at each line joint are collinear); a free
  // L1×L2 sample has 2(L1 + L2) − 1 bond-lines and as many flexes. A. Souslov, A. J. Liu &
  // T. C. Lubensky, "Elasticity and response in nearly isostatic periodic lattices",
  // Phys. Rev. Lett. 103, 205503 (2009) (from memory); the count is derived from it.
  const { sc, c } = cached('gallery:kagome', [6, 6], 'free');
  it('every flex is local or line-supported, none decaying or bulk (Souslov, Liu & Lubensky 2009)', () => {
    expect(c.flexes).toBe(2 * (6 + 6) - 1);
    expect(c.counts.local + c.counts.line).toBe(c.flexes);
    expect(c.counts.decaying + c.counts.bulk).toBe(0);
  });
  it('each flex lies on one straight bond-line, and no two on the same line', () => {
    const lines = new Set<string>();
    for (const m of c.modes) {
      const key = lineThrough(supportOf(m).map((k) => pos(sc, k)));
      expect(key).not.toBeNull();
      lines.add(key!);
    }
    expect(lines.size).toBe(c.flexes);
  });
  it('the short corner lines are lines too (found in a window, a whole line of the sample)', () => {
    // Changed (issue 11): the short corner lines used to be "local", their number set by the
    // window size; a straight bond-line from side to side is a line however short.
    expect(c.counts.line).toBe(c.flexes);
    for (const m of c.modes) expect(m.region).toMatch(/^strip|whole strip/);
  });
  it('at 21×21 (over 2400 columns: banded restricted solves, translates solved once) the same holds', () => {
    const big = cached('gallery:kagome', [21, 21], 'free');
    expect(big.c.flexes).toBe(2 * (21 + 21) - 1);
    expect(big.c.counts.local + big.c.counts.line).toBe(big.c.flexes);
    expect(big.c.thresholds.restrictedSolve).toMatch(/restricted-sparse ×\d+/);
    expect(big.c.thresholds.restrictedSolve).not.toMatch(/kernel-intersection/);
    const lines = new Set<string>();
    for (const m of big.c.modes) {
      const key = lineThrough(supportOf(m).map((k) => pos(big.sc, k)));
      expect(key).not.toBeNull();
      lines.add(key!);
    }
    expect(lines.size).toBe(big.c.flexes);
  });
});

describe('twisted kagome, free', () => {
  // All flexes of the free twisted kagome except the rigid motions live at the surface (K. Sun,
  // A. Souslov, X. Mao & T. C. Lubensky, "Surface phonons, elastic response, and conformal
  // invariance in twisted kagome lattices", PNAS 109(31), 12369–12374 (2012)), with one
  // exception a free sample shows: the homogeneous dilation of the lattice (the Guest mode;
  // S. D. Guest & J. W. Hutchinson, "On the determinacy of repetitive structures", J. Mech. Phys.
  // Solids 51, 383–391 (2003); Sun et al.: zero bulk modulus). It is a flex of any free sample
  // and bulk by nature. The count 2(L1 + L2) − 1 is derived in our reference note.
  const sizes = [5, 6, 7];
  const runs = sizes.map((N) => cached('gallery:twisted-kagome?twist=15', [N, N], 'free'));
  it('bulk = the 3 rigid motions and the dilation, at every size and at 15° and −20°', () => {
    for (const r of [...runs, cached('gallery:twisted-kagome?twist=-20', [5, 5], 'free')]) {
      expect(r.c.trivialFlexes).toBe(3);
      expect(r.c.counts.bulk).toBe(4);
      expect(r.c.affineFlexes).toBe(4);
      const bulk = r.c.modes.filter((m) => m.class === 'bulk');
      expect(bulk.every((m) => m.affine)).toBe(true);
      // independent reading of the vectors: fit u = u0 + i·ȧ1 + j·ȧ2 over the cells' first joints,
      // strain = sym([ȧ1 ȧ2]·L⁻¹); the four span one strain direction, a pure dilation
      const strains = bulk.map((m) => strainOf(r.sc, m));
      for (const e of strains) expect(e.residual).toBeLessThan(1e-8);
      const rows = strains.map((e) => [e.xx, e.yy, e.xy]);
      const big = rows.reduce((b, x) => (Math.hypot(...x) > Math.hypot(...b) ? x : b));
      expect(Math.hypot(...big)).toBeGreaterThan(1e-3);
      expect(Math.abs(big[0] - big[1]) / Math.hypot(...big)).toBeLessThan(1e-8);
      expect(Math.abs(big[2]) / Math.hypot(...big)).toBeLessThan(1e-8);
      for (const x of rows) {
        // every strain is a multiple of the dilation
        const t = (x[0] * big[0] + x[1] * big[1] + x[2] * big[2]) / (big[0] ** 2 + big[1] ** 2 + big[2] ** 2);
        expect(Math.hypot(x[0] - t * big[0], x[1] - t * big[1], x[2] - t * big[2])).toBeLessThan(1e-8);
      }
    }
  });
  it('the decaying count grows linearly with N: +4 per cell of side, everything but the affine flexes', () => {
    runs.forEach((r, t) => expect(r.c.flexes).toBe(2 * (sizes[t] + sizes[t]) - 1));
    // compact corner and edge-row flexes do not grow with N
    for (const r of runs) {
      expect(r.c.counts.local).toBe(runs[0].c.counts.local);
      expect(r.c.counts.line).toBe(runs[0].c.counts.line);
    }
    const rest = runs.map((r) => r.c.counts.decaying + r.c.counts.bulk);
    expect(rest[1] - rest[0]).toBe(4);
    expect(rest[2] - rest[1]).toBe(4);
    runs.forEach((r, t) => expect(r.c.counts.decaying).toBe(rest[t] - r.c.affineFlexes!));
  });
  it('decaying flexes are anchored at sides or corners, with a finite decay length', () => {
    for (const m of runs[2].c.modes.filter((x) => x.class === 'decaying')) {
      expect(['side', 'corner']).toContain(m.anchor!.kind);
      expect(m.decayLength!).toBeGreaterThan(0);
      expect(m.decayLength!).toBeLessThan(7);
      expect(m.headWeight!).toBeGreaterThanOrEqual(0.8);
    }
  });
  it('the compact edge flexes are real: a row of triangles each held at one corner by two bars', () => {
    // Derivation (ours): along a free edge every triangle of the outer row is attached to the
    // next row only at one corner, by two non-collinear bars, so it can only turn about that
    // corner; n triangles and n − 1 bars between them leave exactly one flex on that row.
    const lines = runs[2].c.modes.filter((x) => x.class === 'line');
    for (const m of lines.filter((x) => /width 1/.test(x.region!))) {
      const s = supportOf(m);
      const rowsOrCols = m.direction![0] === 1 ? new Set(s.map((k) => runs[2].sc.jointCells[2 * k + 1])) : new Set(s.map((k) => runs[2].sc.jointCells[2 * k]));
      expect(rowsOrCols.size).toBe(1);
      expect([0, 6]).toContain([...rowsOrCols][0]);
    }
  });
});

describe('twisted kagome strip at the zone edge', () => {
  // An x-periodic strip with free top and bottom has exactly one flex per edge at each
  // wavenumber (Sun, Souslov, Mao & Lubensky, PNAS 109(31), 12369–12374, 2012). One cell
  // along x with twist ½ keeps only k = π. At k = π the amplitude falls by e^{−κd} per row of
  // cells with κd = asinh(2 tan 2α / √3): a lattice derivation in our reference note, not a
  // published number. The fitted ξ (amplitude, in rows) must equal 1/(κd).
  it.each([
    ['15', Math.PI / 12],
    ['28.64788975654116', 0.5],
  ])('twist %s°: one decaying flex per edge with ξ = 1/asinh(2 tan 2α/√3) rows', (deg, alpha) => {
    const { c } = run(`gallery:twisted-kagome?twist=${deg}`, [1, 24], 'x=twist:0.5,y=free');
    expect(c.flexes).toBe(2);
    expect(c.counts.decaying).toBe(2);
    const names = c.modes.map((m) => m.anchor!.name).sort();
    expect(names).toEqual(['bottom', 'top']);
    const kd = Math.asinh((2 * Math.tan(2 * alpha)) / Math.sqrt(3));
    for (const m of c.modes) {
      expect(m.anchor!.kind).toBe('side');
      expect(Math.abs(m.decayLength! * kd - 1)).toBeLessThan(0.01);
      expect(m.fitQuality!).toBeGreaterThan(0.999);
    }
  });
});

describe('polarized deformed kagome strip', () => {
  // A topologically polarized Maxwell lattice puts its edge flexes unevenly on opposite edges:
  // the imbalance per wavenumber is 2|G·R_T|/2π and the two edges together carry 2.
  // C. L. Kane & T. C. Lubensky, "Topological boundary modes in isostatic lattices", Nature
  // Physics 10, 39–45 (2014) (from memory). Which edge gets them for these parameters is a
  // derivation in our reference note (x-periodic strip, free top and bottom); at k = π
  // (one cell, twist ½) there are just the 2 flexes of that wavenumber.
  it.each([
    ['x1=0.1&x2=-0.1&x3=0.1&z=0', ['bottom', 'bottom']],
    ['x1=0.1&x2=0.1&x3=-0.1&z=0', ['top', 'top']],
    ['x1=-0.1&x2=0.1&x3=0.1&z=0', ['bottom', 'top']],
    ['x1=0.1&x2=0.1&x3=0.1&z=0', ['bottom', 'top']],
  ])('%s: decaying flexes anchored at %j', (params, sides) => {
    const { c } = run(`gallery:deformed-kagome?${params}`, [1, 24], 'x=twist:0.5,y=free');
    expect(c.flexes).toBe(2);
    expect(c.counts.decaying).toBe(2);
    expect(c.modes.map((m) => m.anchor!.name).sort()).toEqual(sides);
  });
});

describe('honeycomb, periodic', () => {
  // The rotation of a single hexagon ring (tangential velocities) is an exact flex; the N²
  // rings have rank N² − 1 and with the 2 translations span all N² + 1 flexes.
  // Lubensky, Kane, Mao, Souslov & Sun, "Phonons and elasticity in critically coordinated
  // lattices", Rep. Prog. Phys. 78, 073901 (2015) (the flat zero band; from memory).
  const N = 4;
  const { sc, c } = cached('gallery:honeycomb', [N, N], 'periodic');
  it('N² − 1 local flexes, each one hexagon turning about its centre', () => {
    expect(c.flexes).toBe(N * N + 1);
    expect(c.counts.local).toBe(N * N - 1);
    for (const m of c.modes.filter((x) => x.class === 'local')) {
      const s = supportOf(m);
      expect(s.length).toBe(6);
      // unwrap the ring across the periodic sides: take each joint's image nearest the first
      const [a1, a2] = sc.framework.lattice;
      const L1: [number, number] = [N * a1[0], N * a1[1]];
      const L2: [number, number] = [N * a2[0], N * a2[1]];
      const p0 = pos(sc, s[0]);
      const pts = s.map((k) => {
        let best = pos(sc, k);
        let bd = Infinity;
        for (let u = -1; u <= 1; u++)
          for (let v = -1; v <= 1; v++) {
            const q: [number, number] = [pos(sc, k)[0] + u * L1[0] + v * L2[0], pos(sc, k)[1] + u * L1[1] + v * L2[1]];
            const d = Math.hypot(q[0] - p0[0], q[1] - p0[1]);
            if (d < bd) [best, bd] = [q, d];
          }
        return best;
      });
      const cx = pts.reduce((t, p) => t + p[0], 0) / 6;
      const cy = pts.reduce((t, p) => t + p[1], 0) / 6;
      const speeds: number[] = [];
      s.forEach((k, t) => {
        const r = [pts[t][0] - cx, pts[t][1] - cy];
        expect(Math.hypot(r[0], r[1])).toBeCloseTo(1, 9); // unit bars: ring radius 1
        const u = [m.vector.re[2 * k], m.vector.re[2 * k + 1]];
        expect(Math.abs(u[0] * r[0] + u[1] * r[1])).toBeLessThan(1e-10); // tangential
        speeds.push(Math.hypot(u[0], u[1]));
      });
      for (const v of speeds) expect(v).toBeCloseTo(speeds[0], 10);
    }
  });
  it('the other two are closed zigzag chains sliding rigidly along themselves (lines)', () => {
    // Derivation (ours): the bars joining a zigzag chain to its neighbours are perpendicular
    // to the chain, so sliding one closed chain along itself is a flex; modulo the hexagon
    // rings all chains of one direction are equivalent and the translations span the rest.
    // Changed (issue 11): the honeycomb has no straight line of bars (its chains zigzag), so
    // no line flexes; modulo the rings the two left are the translations, which are bulk.
    expect(c.counts.line).toBe(0);
    expect(c.counts.bulk).toBe(2);
    for (const m of c.modes.filter((x) => x.class === 'line')) {
      const s = supportOf(m);
      expect(s.length).toBe(2 * N);
      const u0 = [m.vector.re[2 * s[0]], m.vector.re[2 * s[0] + 1]];
      for (const k of s) {
        expect(m.vector.re[2 * k]).toBeCloseTo(u0[0], 12);
        expect(m.vector.re[2 * k + 1]).toBeCloseTo(u0[1], 12);
      }
      const [a1, a2] = sc.framework.lattice;
      const dir = m.direction![0] === 1 && m.direction![1] === 0 ? a1 : a2;
      expect(Math.abs(u0[0] * dir[1] - u0[1] * dir[0])).toBeLessThan(1e-12); // along the chain
    }
  });
});

describe('rattlers', () => {
  // A joint held by two collinear bars can move perpendicular to them at first order: one
  // flex per such joint (common practice). demos/rattler-mesh.json (invented) has one bead
  // per cell on a horizontal wire inside an otherwise triangulated mesh.
  it.each([['free'], ['periodic']])('%s 4×4: one local flex per rattler, the bead alone moving across its wire', (bc) => {
    const { sc, c } = run(RATTLER, [4, 4], bc);
    expect(c.counts.local).toBe(16);
    expect(c.counts.bulk).toBeLessThanOrEqual(c.trivialFlexes);
    const beads = new Set<number>();
    for (const m of c.modes.filter((x) => x.class === 'local')) {
      const s = supportOf(m);
      expect(s.length).toBe(1);
      expect(RATTLER.joints[sc.jointSites[s[0]]].id).toBe('M');
      expect(Math.abs(m.vector.re[2 * s[0]])).toBeLessThan(1e-12); // across the horizontal wire
      expect(Math.abs(m.vector.re[2 * s[0] + 1])).toBeCloseTo(1, 12);
      beads.add(s[0]);
    }
    expect(beads.size).toBe(16);
  });
});

// ---------------------------------------------------------------------------------------------
// Invariances

/** A random unitary (real orthogonal when `complex` is false) applied to the kernel basis. */
function rotatedBasis(a: FlexAnalysis, seed: number, complex: boolean): FlexAnalysis {
  const basis = a.flexBasis();
  const f = basis.vectors.length;
  const r = rng(seed);
  const U: { re: number[]; im: number[] }[] = [];
  while (U.length < f) {
    const v = { re: Array.from({ length: f }, () => r() - 0.5), im: Array.from({ length: f }, () => (complex ? r() - 0.5 : 0)) };
    for (let pass = 0; pass < 2; pass++)
      for (const u of U) {
        let sr = 0;
        let si = 0;
        for (let i = 0; i < f; i++) {
          sr += u.re[i] * v.re[i] + u.im[i] * v.im[i];
          si += u.re[i] * v.im[i] - u.im[i] * v.re[i];
        }
        for (let i = 0; i < f; i++) {
          v.re[i] -= sr * u.re[i] - si * u.im[i];
          v.im[i] -= sr * u.im[i] + si * u.re[i];
        }
      }
    const nv = Math.hypot(...v.re, ...v.im);
    U.push({ re: v.re.map((x) => x / nv), im: v.im.map((x) => x / nv) });
  }
  const n = basis.vectors[0].re.length;
  const vectors = U.map((u) => {
    const out = { re: new Float64Array(n), im: new Float64Array(n) };
    basis.vectors.forEach((b, k) => {
      for (let i = 0; i < n; i++) {
        out.re[i] += u.re[k] * b.re[i] - u.im[k] * b.im[i];
        out.im[i] += u.re[k] * b.im[i] + u.im[k] * b.re[i];
      }
    });
    return out;
  });
  // a complex rotation makes the vectors complex: the basis says so (NullBasis.real is a claim
  // about the vectors, which the classifier trusts)
  return { ...a, flexBasis: () => ({ real: basis.real && !complex, vectors }) };
}

function permuteJoints(fw: Framework, seed: number): Framework {
  const r = rng(seed);
  const order = fw.joints.map((_, i) => [r(), i] as const).sort((x, y) => x[0] - y[0]).map(([, i]) => i);
  return { ...fw, joints: order.map((i) => fw.joints[i]) };
}

/** Move joint `id` by the lattice vector by·(a1, a2) and fix the shifts so the framework is the same. */
function moveJoint(fw: Framework, id: string, by: [number, number]): Framework {
  const [a1, a2] = fw.lattice;
  return {
    ...fw,
    joints: fw.joints.map((j) => (j.id === id ? { ...j, at: [j.at[0] + by[0] * a1[0] + by[1] * a2[0], j.at[1] + by[0] * a1[1] + by[1] * a2[1]] as [number, number] } : j)),
    bars: fw.bars.map((b) => {
      let s: [number, number] = [b.shift[0], b.shift[1]];
      if (b.to === id) s = [s[0] - by[0], s[1] - by[1]];
      if (b.from === id) s = [s[0] + by[0], s[1] + by[1]];
      return { ...b, shift: s };
    }),
  };
}

function shiftOrigin(fw: Framework, t: [number, number]): Framework {
  const [a1, a2] = fw.lattice;
  return { ...fw, joints: fw.joints.map((j) => ({ ...j, at: [j.at[0] + t[0] * a1[0] + t[1] * a2[0], j.at[1] + t[0] * a1[1] + t[1] * a2[1]] as [number, number] })) };
}

describe('invariance of the counts (basis, labels, origin)', () => {
  // Common practice: a classification of subspaces must not depend on the basis a solver
  // returns, on the order of the joints, or on where the unit cell's origin sits.
  const TK = buildGallery('gallery:twisted-kagome?twist=15');
  const base = cached('gallery:twisted-kagome?twist=15', [5, 5], 'free');
  it('the reference case has decaying flexes and, having no straight bond lines, no line flexes', () => {
    // Changed (issue 11): the twisted kagome's "line" and corner "local" flexes were pieces of
    // its edge and corner modes; with no straight line of bars it has no line flexes.
    expect(base.c.counts.decaying).toBeGreaterThan(0);
    expect(base.c.counts.line).toBe(0);
  });
  it('kernel basis rotated by a random orthogonal matrix (real) or unitary (complex)', () => {
    const real = run(TK, [5, 5], 'free', {}, (a) => rotatedBasis(a, 7, false));
    expect(real.c.counts).toEqual(base.c.counts);
    // a real matrix with a complex unitary applied to its (real) basis: still the same space
    const mixed = run(TK, [5, 5], 'free', {}, (a) => rotatedBasis(a, 5, true));
    expect(mixed.c.counts).toEqual(base.c.counts);
    for (const m of mixed.c.modes) expect(m.vector.im.every((x) => x === 0)).toBe(true); // a real matrix gives real modes
    const cx = run(TK, [4, 6], 'x=twist:0.3,y=free');
    expect(cx.sc.real).toBe(false);
    const cxRot = run(TK, [4, 6], 'x=twist:0.3,y=free', {}, (a) => rotatedBasis(a, 9, true));
    expect(cxRot.c.counts).toEqual(cx.c.counts);
    expect(cx.c.counts.decaying).toBeGreaterThan(0);
  });
  it('joints of the unit cell relabelled (permuted)', () => {
    for (const seed of [3, 11]) expect(run(permuteJoints(TK, seed), [5, 5], 'free').c.counts).toEqual(base.c.counts);
  });
  it('cell origin moved: every joint shifted by a lattice fraction', () => {
    const r = run(shiftOrigin(TK, [0.37, 0.21]), [5, 5], 'free');
    expect(r.c.counts).toEqual(base.c.counts);
    const anchors = (x: Run) => x.c.modes.filter((m) => m.anchor).map((m) => m.anchor!.name).sort();
    expect(anchors(r)).toEqual(anchors(base));
  });
  it('cell origin re-chosen: one joint moved by a lattice vector along wrapped axes', () => {
    // Under free sides this changes the sample's termination (a different framework), so the
    // check uses axes that wrap: the supercell is then the same framework relabelled, up to a
    // phase on the moved joint for a twisted axis.
    const cases: [Framework, [number, number], string, string, [number, number]][] = [
      [TK, [6, 6], 'x=periodic,y=free', 'B', [1, 0]],
      [TK, [4, 6], 'x=twist:0.3,y=free', 'C', [1, 0]],
      [buildGallery('gallery:honeycomb'), [4, 4], 'periodic', 'B', [0, 1]],
      [buildGallery('gallery:kagome'), [4, 4], 'periodic', 'A', [1, 1]],
    ];
    for (const [fw, cells, bc, id, by] of cases) {
      const before = run(fw, cells, bc).c.counts;
      expect(run(moveJoint(fw, id, by), cells, bc).c.counts).toEqual(before);
    }
  });
});

// ---------------------------------------------------------------------------------------------
// The basis itself and the restricted solves

describe('the classified modes', () => {
  it('form a basis of the flex space: unit flexes, independent, local and line vectors inside their region', () => {
    const { analysis, c } = base();
    const R = analysis.matrix();
    const f = c.flexes;
    expect(c.modes.length).toBe(f);
    for (const m of c.modes) {
      let nn = 0;
      for (let i = 0; i < m.vector.re.length; i++) nn += m.vector.re[i] ** 2 + m.vector.im[i] ** 2;
      expect(Math.sqrt(nn)).toBeCloseTo(1, 12);
      const y = sparseMatVec(R, m.vector.re, m.vector.im);
      expect(Math.hypot(...y.re, ...y.im)).toBeLessThan(1e3 * analysis.tolerance.absolute);
    }
    // Gram matrix of all modes has full rank (smallest eigenvalue well above 0)
    const G = c.modes.map((a) => c.modes.map((b) => a.vector.re.reduce((t, x, i) => t + x * b.vector.re[i] + a.vector.im[i] * b.vector.im[i], 0)));
    expect(psdNullSpace(Float64Array.from(G.flat()), null, f, 1e-10).length).toBe(0);
  });
  it('decaying and bulk vectors are orthonormal and orthogonal to the local and line ones', () => {
    const { c } = base();
    expect(c.shortStripFlexes).toBe(0);
    const rest = c.modes.filter((m) => m.class === 'decaying' || m.class === 'bulk');
    const compact = c.modes.filter((m) => m.class === 'local' || m.class === 'line');
    const ip = (a: ClassifiedMode, b: ClassifiedMode) => a.vector.re.reduce((t, x, i) => t + x * b.vector.re[i] + a.vector.im[i] * b.vector.im[i], 0);
    rest.forEach((a, i) => rest.forEach((b, j) => expect(ip(a, b)).toBeCloseTo(i === j ? 1 : 0, 10)));
    for (const a of rest) for (const b of compact) expect(Math.abs(ip(a, b))).toBeLessThan(1e-10);
  });
  it('the restricted SVD, the banded sparse solver and the kernel intersection give the same split', () => {
    for (const [spec, cells, bc] of [
      ['gallery:twisted-kagome?twist=15', [4, 5], 'free'],
      ['gallery:kagome', [4, 4], 'free'],
      ['gallery:twisted-kagome?twist=15', [3, 5], 'x=twist:0.3,y=free'],
    ] as [string, [number, number], string][]) {
      const { supercell: sc, analysis } = count({ framework: buildGallery(spec), cells, boundary: bc });
      const a = classifyFlexes(sc, analysis, { restrictedSolve: 'restricted-svd' });
      const b = classifyFlexes(sc, analysis, { restrictedSolve: 'kernel-intersection' });
      expect(b.counts).toEqual(a.counts);
      expect(a.thresholds.restrictedSolve).toMatch(/^restricted-svd ×\d+$/);
      expect(b.thresholds.restrictedSolve).toMatch(/^kernel-intersection ×\d+$/);
      if (spec === 'gallery:kagome') {
        const c = classifyFlexes(sc, analysis, { restrictedSolve: 'restricted-sparse' });
        expect(c.counts).toEqual(a.counts);
        expect(c.thresholds.restrictedSolve).toMatch(/^restricted-sparse ×\d+$/);
      }
    }
  });
  it('the split does not depend on the solver that produced the basis (dense or Bloch)', () => {
    for (const [spec, cells, bc] of [
      ['gallery:kagome', [4, 4], 'periodic'],
      ['gallery:twisted-kagome?twist=15', [3, 5], 'x=twist:0.3,y=free'],
    ] as [string, [number, number], string][]) {
      const counts = (['dense', 'bloch'] as const).map((solver) => {
        const { supercell, analysis } = count({ framework: buildGallery(spec), cells, boundary: bc, solver });
        return classifyFlexes(supercell, analysis).counts;
      });
      expect(counts[1]).toEqual(counts[0]);
    }
  });
  it('corner flexes of the twisted kagome do not depend on the window: they go to the rest', () => {
    // Changed (issue 11): with window 3 the 2×2 corner flexes were "local" and with window 1
    // short strip pieces; their number grows with the window (2 per size), so they are pieces
    // of a corner family and belong to the rest, whatever the window.
    const w3 = cached('gallery:twisted-kagome?twist=15', [6, 6], 'free');
    const w1 = run('gallery:twisted-kagome?twist=15', [6, 6], 'free', { window: 1 });
    expect(w1.c.counts).toEqual(w3.c.counts);
    expect(w3.c.counts.local).toBe(0);
    expect(w3.c.windowDependence!.map((x) => x.cornerConfined)).toEqual([2, 4, 6]);
    const sum = (x: Classification) => x.counts.local + x.counts.line + x.counts.decaying + x.counts.bulk;
    expect(sum(w1.c)).toBe(w1.c.flexes);
  });
  it('states every threshold and rejects bad options naming the field', () => {
    const { c } = base();
    for (const k of ['window', 'strip', 'directions', 'lineCoverage', 'rankToleranceRelative', 'spanTolerance', 'supportAmplitude', 'headWeight', 'headRadius', 'minR2', 'restLocalisation']) expect(c.thresholds).toHaveProperty(k);
    const { sc, analysis } = base();
    expect(() => classifyFlexes(sc, analysis, { window: 0 })).toThrow(InputError);
    expect(() => classifyFlexes(sc, analysis, { strip: 2.5 })).toThrow(/strip/);
    expect(() => classifyFlexes(sc, analysis, { directions: [[2, 2]] })).toThrow(/directions/);
  });
});

function base(): Run {
  return cached('gallery:twisted-kagome?twist=15', [5, 5], 'free');
}

describe('counts that sum by construction', () => {
  it('the filtration local ⊂ local + line ⊂ ker R is decided inside ker R, so the classes always add up to the flexes', () => {
    // a consistent run: every class count from the filtration, stated in the thresholds
    const ok = cached('gallery:twisted-kagome?twist=15', [6, 6], 'free');
    expect(Object.values(ok.c.counts).reduce((s, x) => s + x, 0)).toBe(ok.c.flexes);
    expect(String(ok.c.thresholds.filtration)).toMatch(/principal angles/);
    // an inconsistent one: the whole-matrix analysis claims two flexes fewer than the 23 straight
    // bond lines the restricted problems find (kagome free 6×6; reference note §3)
    // (restricted problems solved on their own matrices, not from the flex basis)
    const lying = run('gallery:kagome', [6, 6], 'free', { restrictedSolve: 'restricted-svd' }, (a) => {
      const basis = a.flexBasis();
      const f = a.flexes - 2;
      return { ...a, flexes: f, flexBasis: () => ({ ...basis, vectors: basis.vectors.slice(0, f) }) };
    });
    expect(lying.c.flexes).toBe(21);
    expect(Object.values(lying.c.counts).reduce((s, x) => s + x, 0)).toBe(21);
    expect(lying.c.modes.length).toBe(21);
    expect(lying.c.warnings!.join(" ")).toMatch(/span 21 dimensions but only \d+ of them lie in the flex space/);
    expect(lying.c.counts.line).toBeLessThan(21);
  });
});

describe('extents: cells spanned along a1 and a2, never more than the supercell', () => {
  it('kagome lines span a whole row or column (reference note §3: one flex per straight bond line), honeycomb hexagons at most 2 cells', () => {
    const free = cached('gallery:kagome', [6, 4], 'free');
    for (const m of free.c.modes) {
      expect(m.extents[0]).toBeLessThanOrEqual(6);
      expect(m.extents[1]).toBeLessThanOrEqual(4);
    }
    // a line along a1 that is not the short corner piece spans all 6 columns and one row
    const rows = free.c.modes.filter((m) => m.direction && m.direction[0] === 1 && m.direction[1] === 0);
    expect(rows.length).toBeGreaterThan(0);
    expect(rows.some((m) => m.extents[0] === 6 && m.extents[1] === 1)).toBe(true);
    const hex = cached('gallery:honeycomb', [4, 4], 'free');
    for (const m of hex.c.modes.filter((x) => x.class === 'local')) expect(Math.max(...m.extents)).toBeLessThanOrEqual(3);
  });
  it('on a wrapping axis a support across the seam spans the short arc', () => {
    // periodic 6×6 kagome: every line closes on itself (6 cells long); a window flex across the seam would be ≤ 3
    const per = cached('gallery:kagome', [6, 6], 'periodic');
    for (const m of per.c.modes) {
      expect(m.extents[0]).toBeLessThanOrEqual(6);
      expect(m.extents[1]).toBeLessThanOrEqual(6);
    }
    // the twisted-axis seam: the rattler bead at cell column 5 and 0 of a 6-cell ring is 2 cells, not 6
    const r = run(RATTLER, [6, 2], 'x=periodic,y=free');
    for (const m of r.c.modes.filter((x) => x.class === 'local')) expect(m.extents[0]).toBeLessThanOrEqual(3);
  });
});

describe('decaying or bulk: decisions near a threshold are flagged', () => {
  it('a profile decaying from the bottom side is marginal when its head weight is within 2 % of the threshold, not when it is far above', async () => {
    const { geometryOf, decayDecision, DECISION_MARGIN } = await import('../src/flex/classify/metrics.js');
    const { HEAD_WEIGHT } = await import('../src/flex/classify/thresholds.js');
    const { buildSupercell } = await import('../src/supercell/supercell.js');
    const { parseBoundary } = await import('../src/supercell/boundary.js');
    const sc = buildSupercell(buildGallery('gallery:square'), [10, 10], parseBoundary('free'));
    const geo = geometryOf(sc);
    // squared amplitude q^row, uniform along the bottom side (one joint per cell, row = j)
    const profile = (q: number) => Float64Array.from({ length: sc.jointCount }, (_, k) => q ** Math.floor(k / 10));
    const head = (q: number) => decayDecision(geo, profile(q)).fit?.headWeight ?? 0;
    // head weight falls as q grows: bisect for a q just above the threshold
    let lo = 0.01;
    let hi = 0.99;
    for (let it = 0; it < 60; it++) {
      const mid = (lo + hi) / 2;
      if (head(mid) >= HEAD_WEIGHT * (1 + DECISION_MARGIN / 2)) lo = mid;
      else hi = mid;
    }
    const near = decayDecision(geo, profile(lo));
    expect(near.fit).not.toBeNull();
    expect(near.fit!.anchor.name).toBe('bottom');
    expect(near.fit!.headWeight).toBeLessThan(HEAD_WEIGHT * (1 + DECISION_MARGIN));
    expect(near.marginal).toBe(true);
    const far = decayDecision(geo, profile(0.05));
    expect(far.fit!.headWeight).toBeGreaterThan(0.95);
    expect(far.marginal).toBe(false);
  });
});

describe('decay lengths from the symbol beside the fits', () => {
  it('side-anchored decaying flexes of a polarised deformed kagome carry the range of ξ from det Φ on their side (Kane & Lubensky, Nature Physics 10, 39 (2014): edge modes decay with the roots of det Φ)', async () => {
    const { decaySpectrum } = await import('../src/edges/spectrum.js');
    const fw = 'gallery:deformed-kagome?x1=0.1&x2=-0.1&x3=0.1';
    const r = cached(fw, [10, 10], 'free');
    const sided = r.c.modes.filter((m) => m.class === 'decaying' && m.anchor!.kind === 'side');
    expect(sided.length).toBeGreaterThan(0);
    for (const m of sided) {
      const side = m.anchor!.name as 'bottom' | 'top' | 'left' | 'right';
      const axis = side === 'bottom' || side === 'top' ? 'a1' : 'a2';
      // independent recomputation of the range over k/10, k = 1 … 9
      const xs = Array.from({ length: 9 }, (_, k) => decaySpectrum(buildGallery(fw), axis, (k + 1) / 10).roots.filter((x) => x.side === side).map((x) => x.decayCells!)).flat();
      expect(m.symbolDecay![0]).toBeCloseTo(Math.min(...xs), 10);
      expect(m.symbolDecay![1]).toBeCloseTo(Math.max(...xs), 10);
      // the fit of one localised vector lands near the range (a mixture of those wave numbers)
      expect(m.decayLength!).toBeGreaterThan(0.5 * m.symbolDecay![0]);
      expect(m.decayLength!).toBeLessThan(2 * m.symbolDecay![1]);
    }
  });
});
