/**
 * The prestress check (src/stress/prestress.ts): the stress form of Connelly & Whiteley,
 * "Second-order rigidity and prestress stability for tensegrity frameworks", SIAM J. Discrete
 * Math. 9, 453–491 (1996): E_ω(u) = Σ_bars ω_b |u_b − u_a|², positive on every non-trivial flex
 * for some self-stress ω ⇔ prestress stable. Expected values are derived in the comments.
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { count } from '../src/analysis.js';
import { InputError } from '../src/errors.js';
import { buildGallery } from '../src/framework/gallery.js';
import type { Framework } from '../src/framework/types.js';
import { sparseMatVec, conjugateTranspose } from '../src/linalg/sparse.js';
import { nonTrivialFlexBasis, prestress, stressForm } from '../src/stress/prestress.js';
import type { Supercell } from '../src/supercell/supercell.js';
import { runCli, schemaValidators } from './cli-harness.js';

function setup(fw: Framework | string, cells: [number, number], bc: string) {
  const framework = typeof fw === 'string' ? buildGallery(fw) : fw;
  return count({ framework, cells, boundary: bc });
}

function eigenvalues(M: Float64Array, f: number): number[] {
  const rows = Array.from({ length: f }, (_, i) => Array.from(M.subarray(i * f, (i + 1) * f)));
  return new EigenvalueDecomposition(new Matrix(rows), { assumeSymmetric: true }).realEigenvalues.sort((p, q) => p - q);
}

/** ‖Rᵀω‖ / ‖ω‖ with R the supercell's rigidity matrix: 0 for a self-stress. */
function equilibriumDefect(analysis: ReturnType<typeof setup>['analysis'], omega: ArrayLike<number>): number {
  const Rt = conjugateTranspose(analysis.matrix());
  const r = sparseMatVec(Rt, Float64Array.from(omega), null);
  return Math.hypot(...r.re) / Math.hypot(...Array.from(omega));
}

/** Uniform tension ω = 1 on every bar of the supercell whose bar vector satisfies `keep`. */
function tension(sc: Supercell, keep: (v: [number, number]) => boolean): Float64Array {
  return Float64Array.from(sc.bars, (b) => (keep(b.vector) ? 1 : 0));
}

describe('the stress form', () => {
  it('square grid 6 columns × 4 rows pinned left and right: eigenvalues 2 − 2cos(kπ/7) on the column slides', () => {
    // Derivation. Each row is a chain of 7 horizontal bars between the two grounds; the vertical
    // bars keep each column's joints at one vertical velocity and nothing else moves: the
    // non-trivial flexes are the 6 column slides (no trivial ones: the ground fixes the frame).
    // Tension 1 in every horizontal bar is a self-stress (each row in equilibrium). On the unit
    // slide of column c (vertical velocity 1/2 at its 4 joints) write the flex Σ v_c·slide_c, an
    // orthonormal coordinate; every horizontal bar between columns c and c + 1 (the grounds are
    // columns 0 and 7, v_0 = v_7 = 0) changes its vertical velocity difference by (v_{c+1} − v_c)/2:
    //   E = 4 rows · Σ_{c=0..6} ((v_{c+1} − v_c)/2)² = Σ_{c=0..6} (v_{c+1} − v_c)²,
    // the 6×6 matrix tridiag(−1, 2, −1), whose eigenvalues are 2 − 2cos(kπ/7), k = 1…6 (common
    // practice: the discrete Dirichlet Laplacian). Vertical bars carry no stress: they add nothing.
    const { supercell: sc, analysis } = setup('gallery:square', [6, 4], 'left=pinned,right=pinned');
    expect([analysis.flexes, analysis.trivialFlexes, analysis.selfStresses]).toEqual([6, 0, 4]);
    const omega = tension(sc, (v) => v[1] === 0);
    expect(omega.reduce((s, x) => s + x, 0)).toBe(28);
    expect(equilibriumDefect(analysis, omega)).toBeLessThan(1e-12);
    const V = nonTrivialFlexBasis(sc, analysis);
    expect(V).toHaveLength(6);
    // each is a combination of column slides: no horizontal velocity, one vertical per column
    for (const v of V) {
      for (let k = 0; k < sc.jointCount; k++) expect(Math.abs(v[2 * k])).toBeLessThan(1e-12);
      for (let k = 0; k < sc.jointCount; k++) {
        const same = sc.jointCells[2 * k];
        const first = Array.from({ length: sc.jointCount }, (_, q) => q).find((q) => sc.jointCells[2 * q] === same)!;
        expect(v[2 * k + 1]).toBeCloseTo(v[2 * first + 1], 12);
      }
    }
    const lambda = eigenvalues(stressForm(sc, omega, V), 6);
    const expected = Array.from({ length: 6 }, (_, k) => 2 - 2 * Math.cos(((k + 1) * Math.PI) / 7));
    lambda.forEach((l, k) => expect(l).toBeCloseTo(expected[k], 12));

    // the check finds a stabilising stress, and it is one: in equilibrium, M(ω) positive definite
    const p = prestress(sc, analysis);
    expect(p.verdict).toBe('prestress-stable');
    expect(equilibriumDefect(analysis, p.stress!)).toBeLessThan(1e-10);
    const mine = eigenvalues(stressForm(sc, p.stress!, V), 6);
    expect(mine[0]).toBeGreaterThan(0);
    expect(mine[0]).toBeCloseTo(p.smallestEigenvalue!, 12);
  });

  it('square and kagome tori are prestress stable', () => {
    // Derivation: on a torus every joint of the square grid and of the kagome has its bars in
    // collinear opposite pairs of equal length, so ω = 1 on every bar is a self-stress, and
    // E(u) = Σ|u_b − u_a|² vanishes only when u is constant on the connected framework: a
    // translation, which is trivial. So a stabilising stress exists; the check must find one.
    for (const [spec, N] of [
      ['gallery:square', 4],
      ['gallery:square', 5],
      ['gallery:kagome', 3],
      ['gallery:kagome', 4],
    ] as [string, number][]) {
      const { supercell: sc, analysis } = setup(spec, [N, N], 'periodic');
      const V = nonTrivialFlexBasis(sc, analysis);
      expect(V.length).toBe(analysis.flexes - 2);
      const uniform = tension(sc, () => true);
      expect(equilibriumDefect(analysis, uniform)).toBeLessThan(1e-12);
      expect(eigenvalues(stressForm(sc, uniform, V), V.length)[0]).toBeGreaterThan(1e-3);
      const p = prestress(sc, analysis);
      expect([spec, N, p.verdict]).toEqual([spec, N, 'prestress-stable']);
      expect(equilibriumDefect(analysis, p.stress!)).toBeLessThan(1e-10);
      expect(eigenvalues(stressForm(sc, p.stress!, V), V.length)[0]).toBeGreaterThan(p.threshold);
    }
  });

  it('a free square grid has no self-stress and cannot be prestress stable', () => {
    // Derivation: at a corner joint the two bars are perpendicular, so a self-stress puts 0 on
    // both; without them the next joints along the sides become such corners, and peeling goes on
    // until no bar is left: no self-stress, while the grid has non-trivial flexes.
    const { supercell: sc, analysis } = setup('gallery:square', [4, 4], 'free');
    expect(analysis.selfStresses).toBe(0);
    const p = prestress(sc, analysis);
    expect(p.verdict).toBe('not-prestress-stable');
    expect(p.certificate?.kind).toBe('no-self-stress');
    expect(p.nonTrivialFlexes).toBe(analysis.flexes - analysis.trivialFlexes);
    expect(p.stress).toBeNull();
  });
});

/** A framework in one free cell: joints at (x, y) and bars within the cell. */
function finite(points: [string, number, number][], bars: string[]): Framework {
  return {
    lattice: [
      [100, 0],
      [0, 100],
    ],
    joints: points.map(([id, x, y]) => ({ id, at: [x, y] })),
    bars: bars.map((b) => ({ from: b[0], to: b[1], shift: [0, 0] })),
  };
}

describe('one self-stress and the certificates', () => {
  it('a taut collinear triple is stable; with a dangling joint the one stress leaves a zero-energy flex', () => {
    // A(0,0), C(1,0), B(2,0) with bars AC, CB, AB: ω = (1, 1, −1/2) (AC and CB tension, AB
    // compression) is the self-stress (at A: 1·(1,0) − ½·(2,0) = 0). The one non-trivial flex
    // moves C across the line: energy ω_AC + ω_CB = 2 > 0, so stable (the taut string).
    const tri = setup(finite([['A', 0, 0], ['C', 1, 0], ['B', 2, 0]], ['AC', 'CB', 'AB']), [1, 1], 'free');
    expect([tri.analysis.selfStresses, tri.analysis.flexes - tri.analysis.trivialFlexes]).toEqual([1, 1]);
    expect(prestress(tri.supercell, tri.analysis).verdict).toBe('prestress-stable');
    // D(3, 0) hangs on B alone: moving D across the line stretches no stressed bar
    const dangling = setup(finite([['A', 0, 0], ['C', 1, 0], ['B', 2, 0], ['D', 3, 0]], ['AC', 'CB', 'AB', 'BD']), [1, 1], 'free');
    const p = prestress(dangling.supercell, dangling.analysis);
    expect([p.selfStresses, p.nonTrivialFlexes, p.verdict]).toEqual([1, 2, 'not-prestress-stable']);
    expect(p.certificate?.kind).toBe('single-stress-singular');
  });

  it('two stressed parts that can move apart: a flex with zero energy under every self-stress', () => {
    // Two taut triples with no bar between them: the motion of one relative to the other is a
    // non-trivial flex, rigid on each part, so every stress gives it zero energy.
    const fw = finite(
      [['A', 0, 0], ['C', 1, 0], ['B', 2, 0], ['P', 0, 5], ['R', 1, 5], ['Q', 2, 5]],
      ['AC', 'CB', 'AB', 'PR', 'RQ', 'PQ'],
    );
    const { supercell: sc, analysis } = setup(fw, [1, 1], 'free');
    const p = prestress(sc, analysis);
    expect(p.selfStresses).toBe(2);
    expect(p.verdict).toBe('not-prestress-stable');
    expect(p.certificate?.kind).toBe('common-null-flex');
  });

  it('a rigid framework has nothing to stabilise', () => {
    const { supercell: sc, analysis } = setup('gallery:square', [3, 3], 'pinned');
    expect(prestress(sc, analysis).verdict).toBe('no-flexes');
  });

  it('refuses a twisted boundary with an error naming the boundary', () => {
    const { supercell: sc, analysis } = setup('gallery:square', [3, 3], 'twist:0.25,0');
    try {
      prestress(sc, analysis);
      expect.unreachable('no error');
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      expect((e as InputError).problems[0].where).toBe('boundary');
    }
  });
});

const run = runCli;

const { ajv, validator } = schemaValidators();
const validate = validator('count.schema.json');

describe('shimmy count --prestress', () => {
  it('--json carries a prestress object valid against schema/count.schema.json', async () => {
    for (const [spec, cells, bc, verdict] of [
      ['gallery:square', '6x4', 'left=pinned,right=pinned', 'prestress-stable'],
      ['gallery:square', '4x4', 'free', 'not-prestress-stable'],
      ['gallery:kagome', '3x3', 'periodic', 'prestress-stable'],
    ]) {
      const r = await run(['count', spec, '--cells', cells, '--bc', bc, '--prestress', '--json']);
      expect(r.err).toBe('');
      expect(r.code).toBe(0);
      const o = JSON.parse(r.out);
      expect(validate(o) ? '' : ajv.errorsText(validate.errors)).toBe('');
      expect(o.prestress.verdict).toBe(verdict);
    }
  });

  it('the table has a prestress line; a twisted boundary is an error naming --bc', async () => {
    const r = await run(['count', 'gallery:square', '--cells', '6x4', '--bc', 'left=pinned,right=pinned', '--prestress']);
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/prestress\s+prestress stable/);
    const t = await run(['count', 'gallery:square', '--cells', '3x3', '--bc', 'twist:0.25,0', '--prestress']);
    expect(t.code).toBe(2);
    expect(t.err).toContain('--bc');
    expect(t.err).toContain('--prestress');
  });
});
