/**
 * Where self-stresses live (src/stress/classify/): the classes against published statements and
 * our own derivations (said so beside each check), the macroscopic stress, invariance under a
 * rotated self-stress basis, and the export (schema, exact round trip) and `classify --stresses`.
 * Expected values come from the cited statements or from constructions made here, never from
 * our output.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import Ajv2020 from 'ajv/dist/2020.js';
import { describe, expect, it } from 'vitest';
import { count } from '../src/analysis.js';
import { main, readTextFile } from '../src/cli/main.js';
import { edges } from '../src/edges/edges.js';
import { InputError } from '../src/errors.js';
import type { FlexAnalysis } from '../src/flex/spaces.js';
import { buildGallery } from '../src/framework/gallery.js';
import { modesToJson } from '../src/io/modes.js';
import { parseModesJson } from '../src/io/modes-read.js';
import { flexibleLattice } from '../src/strain/flexible-lattice.js';
import { classifyStresses, type StressClassification } from '../src/stress/classify/classify.js';
import type { Supercell } from '../src/supercell/supercell.js';
import { rng } from './helpers.js';

interface Run {
  sc: Supercell;
  analysis: FlexAnalysis;
  c: StressClassification;
}

function run(spec: string, cells: [number, number], bc: string, wrap?: (a: FlexAnalysis) => FlexAnalysis): Run {
  const { supercell: sc, analysis } = count({ framework: buildGallery(spec), cells, boundary: bc });
  const a = wrap ? wrap(analysis) : analysis;
  return { sc, analysis: a, c: classifyStresses(sc, a) };
}

function total(c: StressClassification): number {
  return c.counts.local + c.counts.line + c.counts.decaying + c.counts.bulk;
}

/** ‖Rᴴ w‖ for a real w given per bar, assembled from the bar vectors here (not from R). */
function equilibriumResidual(sc: Supercell, w: ArrayLike<number>): number {
  const f = new Float64Array(2 * sc.jointCount);
  sc.bars.forEach((bar, b) => {
    const [px, py] = bar.vector;
    if (bar.a >= 0) {
      f[2 * bar.a] -= w[b] * px;
      f[2 * bar.a + 1] -= w[b] * py;
    }
    if (bar.b >= 0) {
      f[2 * bar.b] += bar.phase[0] * w[b] * px;
      f[2 * bar.b + 1] += bar.phase[0] * w[b] * py;
    }
  });
  return Math.hypot(...f);
}

/**
 * The straight bond lines of a supercell, built from geometry alone: bars are joined when they
 * are parallel and share a joint (a joint where two parallel bars meet lies on one straight line).
 * Returns the bar rows of each line.
 */
function straightLines(sc: Supercell): number[][] {
  const parent = sc.bars.map((_, b) => b);
  const find = (b: number): number => (parent[b] === b ? b : (parent[b] = find(parent[b])));
  const parallel = (x: number, y: number) => {
    const [ax, ay] = sc.bars[x].vector;
    const [bx, by] = sc.bars[y].vector;
    return Math.abs(ax * by - ay * bx) <= 1e-9 * Math.hypot(ax, ay) * Math.hypot(bx, by);
  };
  const atJoint = new Map<number, number[]>();
  sc.bars.forEach((bar, b) => {
    for (const k of [bar.a, bar.b]) if (k >= 0) atJoint.set(k, [...(atJoint.get(k) ?? []), b]);
  });
  for (const list of atJoint.values())
    for (const x of list) for (const y of list) if (x < y && parallel(x, y)) parent[find(x)] = find(y);
  const groups = new Map<number, number[]>();
  sc.bars.forEach((_, b) => groups.set(find(b), [...(groups.get(find(b)) ?? []), b]));
  return [...groups.values()];
}

/** Rank of a set of real vectors (Gram–Schmidt, relative cut 1e-8). */
function rankOf(vectors: Float64Array[]): number {
  const basis: Float64Array[] = [];
  for (const v0 of vectors) {
    const v = Float64Array.from(v0);
    const n0 = Math.hypot(...v);
    for (let pass = 0; pass < 2; pass++)
      for (const u of basis) {
        let d = 0;
        for (let i = 0; i < v.length; i++) d += u[i] * v[i];
        for (let i = 0; i < v.length; i++) v[i] -= d * u[i];
      }
    const n = Math.hypot(...v);
    if (n > 1e-8 * n0) basis.push(v.map((x) => x / n));
  }
  return basis.length;
}

/** The support bars of a vector (|w_b| above 1e-8 of the largest). */
function supportOf(w: Float64Array): number[] {
  const top = Math.max(...w.map(Math.abs));
  return Array.from(w.keys()).filter((b) => Math.abs(w[b]) > 1e-8 * top);
}

describe('line self-stresses', () => {
  it('kagome N×N torus: the self-stresses are the 3N straight-line tensions, one per closed bond line', () => {
    // A. Souslov, A. J. Liu & T. C. Lubensky, Phys. Rev. Lett. 103, 205503 (2009) (from memory),
    // with the index N0 − NS = dN − NB of T. C. Lubensky, C. L. Kane, X. Mao, A. Souslov & K. Sun,
    // Rep. Prog. Phys. 78, 073901 (2015): 3N zero modes on the torus and as many self-stresses,
    // the uniform tensions of the 3N closed straight bond lines.
    for (const N of [4, 5]) {
      const { sc, analysis, c } = run('gallery:kagome', [N, N], 'periodic');
      const lines = straightLines(sc);
      expect(lines).toHaveLength(3 * N);
      expect(analysis.selfStresses).toBe(3 * N);
      expect(c.counts).toEqual({ local: 0, line: 3 * N, decaying: 0, bulk: 0 });
      // each line tension, built here, is a self-stress
      const tensions = lines.map((bars) => {
        const w = new Float64Array(sc.bars.length);
        for (const b of bars) w[b] = 1;
        return w;
      });
      for (const w of tensions) expect(equilibriumResidual(sc, w)).toBeLessThan(1e-12);
      // each classified mode is one whole line with one tension on all its bars
      const lineOf = new Map<string, number>(lines.map((bars, i) => [bars.join(','), i]));
      const hit = new Set<number>();
      for (const m of c.modes) {
        const s = supportOf(m.vector.re);
        const i = lineOf.get(s.join(','));
        expect(i).toBeDefined();
        hit.add(i!);
        for (const b of s) expect(m.vector.re[b]).toBeCloseTo(m.vector.re[s[0]], 10);
      }
      expect(hit.size).toBe(3 * N);
      // and the modes span what the line tensions span
      expect(rankOf([...tensions, ...c.modes.map((m) => m.vector.re)])).toBe(3 * N);
    }
  });

  it('square grid pinned on its left and right sides: one tension per row, as a line', () => {
    // Derivation (common practice of statics): a row is a straight chain of bars between two
    // grounded ends; a constant tension balances every joint on it, while the columns end at
    // free sides and carry none. So NS = rows, each the tension of one row.
    for (const [N1, N2] of [
      [4, 3],
      [3, 3],
    ] as [number, number][]) {
      const { sc, c } = run('gallery:square', [N1, N2], 'left=pinned,right=pinned');
      expect(c.selfStresses).toBe(N2);
      expect(c.counts).toEqual({ local: 0, line: N2, decaying: 0, bulk: 0 });
      const rows = new Set<number>();
      for (const m of c.modes) {
        expect(m.direction).toEqual([1, 0]);
        const s = supportOf(m.vector.re);
        expect(s).toHaveLength(N1 + 1); // N1 − 1 inside bars and 2 grounded ones
        for (const b of s) expect(sc.bars[b].vector[1]).toBe(0);
        rows.add(sc.bars[s[0]].cell[1]);
        for (const b of s) expect(m.vector.re[b]).toBeCloseTo(m.vector.re[s[0]], 10);
      }
      expect(rows.size).toBe(N2);
    }
  });
});

describe('edge self-stresses of a pinned polarised kagome', () => {
  // Deformed kagome (x1, x2, x3) = (0.1, −0.1, 0.1): a polarised lattice in the sense of C. L. Kane
  // & T. C. Lubensky, "Topological boundary modes in isostatic lattices", Nature Physics 10, 39–45
  // (2014) (from memory). The count per edge comes from edges() (the symbol's winding, an
  // independent path): pinned top 2 self-stresses per edge wave number, pinned bottom none.
  const spec = 'gallery:deformed-kagome?x1=0.1&x2=-0.1&x3=0.1';
  for (const theta of [0.25, 0.5]) {
    it(`a 1×8 strip twisted by θ = ${theta} along a1, pinned at top and bottom, carries them at the top`, () => {
      const e = edges({ framework: buildGallery(spec), phase: theta, strip: 0, grid: 0 });
      const top = e.sides.top.pinned.selfStresses!;
      const bottom = e.sides.bottom.pinned.selfStresses!;
      expect([top, bottom]).toEqual([2, 0]);
      const { sc, c } = run(spec, [1, 8], `x=twist:${theta},bottom=pinned,top=pinned`);
      expect(c.selfStresses).toBe(top + bottom);
      expect(total(c)).toBe(c.selfStresses);
      for (const m of c.modes) {
        // decaying from the top side (or local in a window at the top)
        if (m.class === 'decaying') expect(m.anchor?.name).toBe('top');
        else expect(m.class).toBe('local');
        let upper = 0;
        let all = 0;
        sc.bars.forEach((bar, b) => {
          const k = bar.a >= 0 ? bar.a : bar.b;
          const w = m.vector.re[b] ** 2 + m.vector.im[b] ** 2;
          all += w;
          if (sc.jointCells[2 * k + 1] >= 4) upper += w;
        });
        expect(upper / all).toBeGreaterThan(0.9);
      }
    });
  }
});

describe('macroscopic stress of periodic self-stresses', () => {
  /**
   * Derivation (virtual work): a periodic self-stress does no work on any strain the lattice can
   * take without stretching a bar, so σ : ε = 0 for every strain flex ε of the flexible lattice,
   * and the macroscopic stresses span at most 3 − (strain flexes) dimensions.
   */
  it('twisted kagome torus: two self-stresses with traceless macroscopic stress', () => {
    // K. Sun, A. Souslov, X. Mao & T. C. Lubensky, PNAS 109, 12369–12374 (2012): the twisted
    // kagome's bulk modulus vanishes (its one strain flex is a pure dilation), so its two
    // periodic self-stresses carry traceless (pure shear) macroscopic stress.
    for (const N of [3, 4]) {
      const { c } = run('gallery:twisted-kagome?twist=15', [N, N], 'periodic');
      expect(c.selfStresses).toBe(2);
      expect(c.macroscopic?.traceless).toBe(true);
      expect(c.macroscopic?.rank).toBe(2);
      for (const m of c.modes) {
        const s = m.macroscopicStress!;
        expect(s.traceless).toBe(true);
        expect(Math.abs(s.xx + s.yy)).toBeLessThan(1e-12 * Math.hypot(s.xx, s.yy, s.xy));
      }
    }
  });

  it('σ : ε = 0 for every strain flex (square, kagome, twisted kagome)', () => {
    for (const spec of ['gallery:square', 'gallery:kagome', 'gallery:twisted-kagome?twist=15']) {
      const { c } = run(spec, [4, 4], 'periodic');
      const strains = flexibleLattice(buildGallery(spec)).strainSpace.basis;
      expect(c.macroscopic!.rank).toBe(3 - strains.length);
      for (const m of c.modes) {
        const s = m.macroscopicStress!;
        const size = Math.hypot(s.xx, s.yy, Math.SQRT2 * s.xy);
        // σ : ε with ε = [[e00, e01], [e10, e11]] (unit Frobenius norm)
        for (const e of strains) expect(Math.abs(s.xx * e[0][0] + s.xy * (e[0][1] + e[1][0]) + s.yy * e[1][1])).toBeLessThan(1e-10 * size);
      }
    }
  });

  it('a line tension along a1 of the square torus gives σ = w·|p|²/cells · x⊗x (hand computation)', () => {
    // Derivation: N unit bars of tension w along x in an N×N torus: Σ w p⊗p / N² = w/N · x⊗x.
    const { c } = run('gallery:square', [4, 4], 'periodic');
    const m = c.modes.find((x) => x.direction?.[0] === 1 && x.direction[1] === 0)!;
    const w = m.vector.re[supportOf(m.vector.re)[0]];
    expect(m.macroscopicStress!.xx).toBeCloseTo(w / 4, 14);
    expect(m.macroscopicStress!.yy).toBe(0);
    expect(m.macroscopicStress!.traceless).toBe(false);
  });

  it('no macroscopic stress unless both axes are periodic', () => {
    expect(run('gallery:square', [4, 3], 'left=pinned,right=pinned').c.macroscopic).toBeNull();
  });
});

/** The self-stress basis turned by a random orthogonal (real) or unitary matrix. */
function rotatedStresses(a: FlexAnalysis, seed: number, complex: boolean): FlexAnalysis {
  const basis = a.selfStressBasis();
  const s = basis.vectors.length;
  const r = rng(seed);
  const U: { re: number[]; im: number[] }[] = [];
  while (U.length < s) {
    const v = { re: Array.from({ length: s }, () => r() - 0.5), im: Array.from({ length: s }, () => (complex ? r() - 0.5 : 0)) };
    for (let pass = 0; pass < 2; pass++)
      for (const u of U) {
        let sr = 0;
        let si = 0;
        for (let i = 0; i < s; i++) {
          sr += u.re[i] * v.re[i] + u.im[i] * v.im[i];
          si += u.re[i] * v.im[i] - u.im[i] * v.re[i];
        }
        for (let i = 0; i < s; i++) {
          v.re[i] -= sr * u.re[i] - si * u.im[i];
          v.im[i] -= sr * u.im[i] + si * u.re[i];
        }
      }
    const nv = Math.hypot(...v.re, ...v.im);
    U.push({ re: v.re.map((x) => x / nv), im: v.im.map((x) => x / nv) });
  }
  const m = basis.vectors[0].re.length;
  const vectors = U.map((u) => {
    const out = { re: new Float64Array(m), im: new Float64Array(m) };
    basis.vectors.forEach((b, k) => {
      for (let i = 0; i < m; i++) {
        out.re[i] += u.re[k] * b.re[i] - u.im[k] * b.im[i];
        out.im[i] += u.re[k] * b.im[i] + u.im[k] * b.re[i];
      }
    });
    return out;
  });
  return { ...a, selfStressBasis: () => ({ real: basis.real && !complex, vectors }) };
}

describe('invariance: the classes do not depend on the basis the solver returns', () => {
  // Common practice: a split of a subspace must not depend on the basis it is handed.
  const cases: [string, [number, number], string][] = [
    ['gallery:deformed-kagome?x1=0.1&x2=-0.1&x3=0.1', [1, 8], 'x=twist:0.5,bottom=pinned,top=pinned'],
    ['gallery:deformed-kagome?x1=0.1&x2=-0.1&x3=0.1', [1, 8], 'x=twist:0.25,bottom=pinned,top=pinned'],
    ['gallery:twisted-kagome?twist=15', [4, 4], 'periodic'],
    ['gallery:kagome', [3, 5], 'periodic'],
  ];
  for (const [spec, cells, bc] of cases) {
    it(`${spec} ${cells.join('×')} ${bc}`, () => {
      const base = run(spec, cells, bc);
      expect(base.c.counts.decaying + base.c.counts.bulk).toBeGreaterThan(0); // the rest uses the basis
      for (const [seed, complex] of [
        [7, false],
        [5, true],
      ] as [number, boolean][]) {
        const r = run(spec, cells, bc, (a) => rotatedStresses(a, seed, complex));
        expect(r.c.counts).toEqual(base.c.counts);
        expect(r.c.modes.map((m) => m.anchor?.name ?? null)).toEqual(base.c.modes.map((m) => m.anchor?.name ?? null));
        if (base.sc.real) for (const m of r.c.modes) expect(m.vector.im.every((x) => x === 0)).toBe(true);
      }
    });
  }
});

describe('options and bad input', () => {
  it('a bad window or strip is an InputError naming the field', () => {
    const { supercell, analysis } = count({ framework: buildGallery('gallery:square'), cells: [3, 3], boundary: 'periodic' });
    let err: unknown;
    try {
      classifyStresses(supercell, analysis, { window: 0, strip: 2.5 });
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(InputError);
    expect((err as InputError).problems.map((p) => p.where)).toEqual(['window', 'strip']);
  });
});

describe('export-modes and classify --stresses', () => {
  const ajv = new Ajv2020({ strict: true, allowUnionTypes: true, allErrors: true });
  const schemaDir = join(import.meta.dirname, '..', 'schema');
  ajv.addSchema(JSON.parse(readFileSync(join(schemaDir, 'framework.schema.json'), 'utf8')));
  const modesSchema = ajv.compile(JSON.parse(readFileSync(join(schemaDir, 'modes.schema.json'), 'utf8')));
  const classifySchema = ajv.compile(JSON.parse(readFileSync(join(schemaDir, 'classify.schema.json'), 'utf8')));
  async function cli(argv: string[]): Promise<string> {
    let out = '';
    const code = await main(argv, { out: (t) => (out += t), err: () => {}, readText: readTextFile });
    expect(code).toBe(0);
    return out;
  }

  for (const [spec, cells, bc] of [
    ['gallery:kagome', '3x3', 'periodic'],
    ['gallery:deformed-kagome?x1=0.1&x2=-0.1&x3=0.1', '1x6', 'x=twist:0.25,bottom=pinned,top=pinned'],
  ]) {
    it(`export-modes --json writes the classified self-stresses (${spec} ${cells} ${bc}); schema-valid, exact round trip`, async () => {
      const text = await cli(['export-modes', spec, '--cells', cells, '--bc', bc, '--json']);
      const doc = JSON.parse(text);
      expect(modesSchema(doc) ? '' : ajv.errorsText(modesSchema.errors)).toBe('');
      expect(doc.selfStressNote).toBeUndefined();
      expect(doc.selfStresses).toHaveLength(doc.counts.selfStresses);
      const sc = doc.stressClassification;
      expect(sc.counts.local + sc.counts.line + sc.counts.decaying + sc.counts.bulk).toBe(doc.counts.selfStresses);
      for (const s of doc.selfStresses) {
        expect(['local', 'line', 'decaying', 'bulk']).toContain(s.class);
        // axial force = w_b·|p_b| (the bar vectors of the file)
        doc.bars.forEach((bar: { vector: [number, number] }, b: number) => expect(s.axialForce.re[b]).toBeCloseTo(s.tension.re[b] * Math.hypot(...bar.vector), 14));
      }
      const back = parseModesJson(text);
      expect(modesToJson(back)).toBe(text);
    });
  }

  it('parseModesJson refuses class counts that do not match the self-stresses', async () => {
    const doc = JSON.parse(await cli(['export-modes', 'gallery:square', '--cells', '3x3', '--bc', 'left=pinned,right=pinned', '--json']));
    doc.stressClassification.counts.line += 1;
    let err: unknown;
    try {
      parseModesJson(JSON.stringify(doc));
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(InputError);
    expect((err as InputError).problems.map((p) => p.where)).toContain('stressClassification.counts.line');
  });

  it('classify --stresses --json carries the self-stress classes and validates', async () => {
    const out = JSON.parse(await cli(['classify', 'gallery:twisted-kagome?twist=15', '--cells', '4x4', '--bc', 'periodic', '--stresses', '--json']));
    expect(classifySchema(out) ? '' : ajv.errorsText(classifySchema.errors)).toBe('');
    expect(out.stresses.selfStresses).toBe(out.selfStresses);
    expect(out.stresses.modes).toHaveLength(2);
    expect(out.stresses.macroscopic.traceless).toBe(true);
    const plain = JSON.parse(await cli(['classify', 'gallery:square', '--cells', '3x3', '--bc', 'periodic', '--json']));
    expect(plain.stresses).toBeUndefined();
  });
});
