/**
 * Flexible-lattice periodic flexes and their macroscopic strains (src/strain/flexible-lattice.ts).
 *
 * The expected values are derived here, independently of the code under test:
 *  - by hand for the square, triangular and honeycomb lattices (in the comments), and
 *  - for every lattice by duality, with a matrix built in this file from the framework alone:
 *    a strain ε is reached by a flex exactly when ⟨ε, Σ_b ω_b p_b⊗p_b⟩ = 0 for every
 *    fixed-lattice periodic self-stress ω (Fredholm alternative on the row p·(u_b − u_a + L̇ s):
 *    Σ ω_b p_b·(E L s_b) = ⟨E, Σ ω_b p_b⊗p_b⟩ once the joint equilibrium of ω is used), so the
 *    strain space is the orthogonal complement of the macroscopic stresses, and the zero-strain
 *    non-trivial flexes are the fixed-lattice flexes minus the 2 translations.
 * The flexible-lattice setting (the lattice vectors as extra unknowns of the periodic rigidity
 * matrix, trivial motions = translations and rotation) is that of Borcea & Streinu, "Periodic
 * frameworks and flexibility", Proc. R. Soc. A 466, 2633–2649 (2010); the counting of periodic
 * mechanisms and self-stresses with a deforming cell follows Guest & Hutchinson, "On the
 * determinacy of repetitive structures", J. Mech. Phys. Solids 51, 383–391 (2003). The twisted
 * kagome's one strain being a pure dilation (zero bulk modulus) is the statement of Sun, Souslov,
 * Mao & Lubensky, "Surface phonons, elastic response, and conformal invariance in twisted kagome
 * lattices", PNAS 109, 12369–12374 (2012).
 */
import { join } from 'node:path';
import { EigenvalueDecomposition, Matrix, SingularValueDecomposition } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { InputError } from '../src/errors.js';
import { buildGallery } from '../src/framework/gallery.js';
import type { Framework, Vec2 } from '../src/framework/types.js';
import { flexibleLattice, type FlexibleLatticeResult, type Sym2 } from '../src/strain/flexible-lattice.js';
import { randomFramework } from './helpers.js';
import { runCli, schemaValidators } from './cli-harness.js';

// ---------------------------------------------------------------------------------------------
// The independent computation

interface TestBar {
  a: number;
  b: number;
  s: [number, number];
  p: Vec2;
}

function barsOf(fw: Framework): TestBar[] {
  const idx = new Map(fw.joints.map((j, k) => [j.id, k]));
  const [a1, a2] = fw.lattice;
  return fw.bars.map((bar) => {
    const a = idx.get(bar.from)!;
    const b = idx.get(bar.to)!;
    const [s1, s2] = bar.shift;
    const xa = fw.joints[a].at;
    const xb = fw.joints[b].at;
    return { a, b, s: [s1, s2], p: [xb[0] + s1 * a1[0] + s2 * a2[0] - xa[0], xb[1] + s1 * a1[1] + s2 * a2[1] - xa[1]] };
  });
}

/** Orthonormal basis (columns) of the column space of M, cut at 1e-9 of the largest singular value. */
function range(M: Matrix): Matrix {
  if (M.columns === 0) return new Matrix(M.rows, 0);
  const svd = new SingularValueDecomposition(M, { autoTranspose: true });
  const s = svd.diagonal;
  const r = s.filter((v) => v > 1e-9 * s[0]).length;
  const Q = new Matrix(M.rows, r);
  for (let j = 0; j < r; j++) Q.setColumn(j, svd.leftSingularVectors.getColumn(j));
  return Q;
}

/** Strain-space projector (3×3, coordinates ε11, ε22, √2ε12) and counts by duality. */
function byDuality(fw: Framework): { projector: Matrix; strainDim: number; zeroStrain: number; fixedFlexes: number } {
  const bars = barsOf(fw);
  const S = fw.joints.length;
  const R0 = new Matrix(bars.length, 2 * S);
  bars.forEach(({ a, b, p }, r) => {
    R0.set(r, 2 * a, R0.get(r, 2 * a) - p[0]);
    R0.set(r, 2 * a + 1, R0.get(r, 2 * a + 1) - p[1]);
    R0.set(r, 2 * b, R0.get(r, 2 * b) + p[0]);
    R0.set(r, 2 * b + 1, R0.get(r, 2 * b + 1) + p[1]);
  });
  const rankR0 = range(R0).columns;
  // self-stresses: the null space of R0ᵀ, from the eigenvectors of R0 R0ᵀ with eigenvalue ~0
  const G = R0.mmul(R0.transpose());
  const eig = new EigenvalueDecomposition(G, { assumeSymmetric: true });
  const top = Math.max(1, ...eig.realEigenvalues.map(Math.abs));
  const stresses: number[][] = [];
  eig.realEigenvalues.forEach((l, j) => {
    if (Math.abs(l) <= 1e-12 * top) stresses.push(eig.eigenvectorMatrix.getColumn(j));
  });
  expect(stresses.length).toBe(bars.length - rankR0);
  // macroscopic stresses Σ ω_b p_b⊗p_b as columns
  const sigma = new Matrix(3, stresses.length);
  stresses.forEach((w, j) => {
    let xx = 0;
    let yy = 0;
    let xy = 0;
    bars.forEach(({ p }, r) => {
      xx += w[r] * p[0] * p[0];
      yy += w[r] * p[1] * p[1];
      xy += w[r] * p[0] * p[1];
    });
    sigma.setColumn(j, [xx, yy, Math.SQRT2 * xy]);
  });
  const Q = range(sigma);
  const projector = Q.columns === 0 ? Matrix.eye(3) : Matrix.eye(3).sub(Q.mmul(Q.transpose()));
  const fixedFlexes = 2 * S - rankR0;
  return { projector, strainDim: 3 - Q.columns, zeroStrain: fixedFlexes - 2, fixedFlexes };
}

function coords(e: Sym2): number[] {
  return [e[0][0], e[1][1], Math.SQRT2 * e[0][1]];
}

function projectorOf(r: FlexibleLatticeResult): Matrix {
  const P = new Matrix(3, 3);
  for (const e of r.strainSpace.basis) {
    const c = coords(e);
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) P.set(i, j, P.get(i, j) + c[i] * c[j]);
  }
  return P;
}

function expectSameMatrix(A: Matrix, B: Matrix, digits = 9): void {
  for (let i = 0; i < A.rows; i++) for (let j = 0; j < A.columns; j++) expect(A.get(i, j)).toBeCloseTo(B.get(i, j), digits);
}

/** Largest |row|/|p| of the flexible-lattice rows p·(u_b − u_a + L̇ s) for a 1×1 cell's flex. */
function residual(fw: Framework, u: number[], Ldot: [Vec2, Vec2]): number {
  let worst = 0;
  for (const { a, b, s, p } of barsOf(fw)) {
    const dx = u[2 * b] - u[2 * a] + s[0] * Ldot[0][0] + s[1] * Ldot[1][0];
    const dy = u[2 * b + 1] - u[2 * a + 1] + s[0] * Ldot[0][1] + s[1] * Ldot[1][1];
    worst = Math.max(worst, Math.abs(p[0] * dx + p[1] * dy) / Math.hypot(p[0], p[1]));
  }
  return worst;
}

/** sym(L̇ L⁻¹) for lattice columns A1, A2 and velocities Ȧ1, Ȧ2. */
function strainOf(lattice: [Vec2, Vec2], Ldot: [Vec2, Vec2]): Sym2 {
  const L = new Matrix([
    [lattice[0][0], lattice[1][0]],
    [lattice[0][1], lattice[1][1]],
  ]);
  const D = new Matrix([
    [Ldot[0][0], Ldot[1][0]],
    [Ldot[0][1], Ldot[1][1]],
  ]);
  const E = D.mmul(inverse2(L));
  const xy = (E.get(0, 1) + E.get(1, 0)) / 2;
  return [
    [E.get(0, 0), xy],
    [xy, E.get(1, 1)],
  ];
}

function inverse2(L: Matrix): Matrix {
  const [a, b, c, d] = [L.get(0, 0), L.get(0, 1), L.get(1, 0), L.get(1, 1)];
  const det = a * d - b * c;
  return new Matrix([
    [d / det, -b / det],
    [-c / det, a / det],
  ]);
}

/** The same framework on the lattice basis (a1, a1 + a2) with every joint moved by `offset`. */
function rebased(fw: Framework, offset: Vec2): Framework {
  const [a1, a2] = fw.lattice;
  return {
    lattice: [a1, [a1[0] + a2[0], a1[1] + a2[1]]],
    joints: fw.joints.map((j) => ({ id: j.id, at: [j.at[0] + offset[0], j.at[1] + offset[1]] as Vec2 })),
    // x_b + s1 a1 + s2 a2 = x_b + (s1 − s2) a1 + s2 (a1 + a2)
    bars: fw.bars.map((b) => ({ from: b.from, to: b.to, shift: [b.shift[0] - b.shift[1], b.shift[1]] as [number, number] })),
  };
}

/** The N1×N2 block of unit cells written out as one cell (lattice N1·a1, N2·a2). */
function tiled(fw: Framework, N1: number, N2: number): Framework {
  const [a1, a2] = fw.lattice;
  const joints: Framework['joints'] = [];
  const bars: Framework['bars'] = [];
  for (let j = 0; j < N2; j++)
    for (let i = 0; i < N1; i++)
      for (const jt of fw.joints) joints.push({ id: `${jt.id}@${i},${j}`, at: [jt.at[0] + i * a1[0] + j * a2[0], jt.at[1] + i * a1[1] + j * a2[1]] });
  for (let j = 0; j < N2; j++)
    for (let i = 0; i < N1; i++)
      for (const b of fw.bars) {
        const ti = i + b.shift[0];
        const tj = j + b.shift[1];
        const wi = Math.floor(ti / N1);
        const wj = Math.floor(tj / N2);
        bars.push({ from: `${b.from}@${i},${j}`, to: `${b.to}@${ti - wi * N1},${tj - wj * N2}`, shift: [wi, wj] });
      }
  return {
    lattice: [
      [N1 * a1[0], N1 * a1[1]],
      [N2 * a2[0], N2 * a2[1]],
    ],
    joints,
    bars,
  };
}

// ---------------------------------------------------------------------------------------------

describe('flexible-lattice flexes of the classical lattices (1×1 cell)', () => {
  it('square grid: one shear flex, ε ∝ e12 + e21', () => {
    // By hand: one joint, bars along a1 = (1,0) and a2 = (0,1) to its own copies, so u drops out
    // and the rows are a1·Ȧ1 = 0, a2·Ȧ2 = 0: Ȧ1 = (0, c), Ȧ2 = (b, 0), L = I, ε = sym(L̇) =
    // ((b + c)/2)(e12 + e21). The antisymmetric part (b − c)/2 is the rotation. Kernel:
    // 6 columns − 2 rows = 4 = 2 translations + rotation + one shear; zero-strain flexes 0.
    const r = flexibleLattice(buildGallery('gallery:square'));
    expect([r.flexes, r.trivialFlexes, r.nonTrivialFlexes, r.strainFlexes, r.zeroStrainFlexes]).toEqual([4, 3, 1, 1, 0]);
    const [e] = r.strainSpace.basis;
    expect(e[0][0]).toBeCloseTo(0, 12);
    expect(e[1][1]).toBeCloseTo(0, 12);
    expect(Math.abs(e[0][1])).toBeCloseTo(Math.SQRT1_2, 12);
    expect(r.strains[0].kind).toBe('shear');
    expect(r.strains[0].auxetic).toBe(false);
    expect(r.strains[0].principal.values[0]).toBeCloseTo(Math.SQRT1_2, 12);
    expect(r.strains[0].principal.values[1]).toBeCloseTo(-Math.SQRT1_2, 12);
    expect(Math.abs(r.strains[0].principal.angleDegrees)).toBeCloseTo(45, 9);
    expect(r.strainSpace.auxetic).toBe('none');
    expect(r.certified).toBe(true);
  });

  it('triangular lattice: no flex beyond the trivial ones', () => {
    // By hand: rows a1·Ȧ1 = 0, a2·Ȧ2 = 0, (a2 − a1)·(Ȧ2 − Ȧ1) = 0 on 6 columns, independent:
    // kernel 3 = the trivial flexes.
    const r = flexibleLattice(buildGallery('gallery:triangular'));
    expect([r.flexes, r.trivialFlexes, r.nonTrivialFlexes, r.strainFlexes, r.zeroStrainFlexes]).toEqual([3, 3, 0, 0, 0]);
    expect(r.strains).toEqual([]);
  });

  it('honeycomb: two flexes, together every shear (traceless strains)', () => {
    // By hand: the three bars join A to B, so the fixed-lattice rows depend on u_B − u_A only
    // (rank 2 of 3): one periodic self-stress, ω = 1 on every bar (the three bar vectors at 120°
    // sum to 0). Its macroscopic stress Σ p⊗p = (3/2)·|p|²·I is isotropic, so the strains are the
    // traceless ones (dimension 2), and none is auxetic.
    const r = flexibleLattice(buildGallery('gallery:honeycomb'));
    expect([r.flexes, r.trivialFlexes, r.nonTrivialFlexes, r.strainFlexes, r.zeroStrainFlexes]).toEqual([5, 3, 2, 2, 0]);
    const n = Matrix.columnVector([Math.SQRT1_2, Math.SQRT1_2, 0]);
    expectSameMatrix(projectorOf(r), Matrix.eye(3).sub(n.mmul(n.transpose())));
    for (const s of r.strains) expect([s.kind, s.auxetic]).toEqual(['shear', false]);
    expect(r.strainSpace.auxetic).toBe('none');
  });

  it('regular kagome: one flex, with zero strain', () => {
    // By duality: the three straight bond lines carry one self-stress each; their macroscopic
    // stresses p⊗p along three directions 60° apart span all symmetric matrices, so no strain;
    // the fixed-lattice flexes are 3 (rank 3 of 6), so 3 − 2 = 1 zero-strain flex.
    const fw = buildGallery('gallery:kagome');
    const r = flexibleLattice(fw);
    const d = byDuality(fw);
    expect(d.strainDim).toBe(0);
    expect(d.zeroStrain).toBe(1);
    expect([r.flexes, r.trivialFlexes, r.nonTrivialFlexes, r.strainFlexes, r.zeroStrainFlexes]).toEqual([4, 3, 1, 0, 1]);
    expect(r.zeroStrain).toHaveLength(1);
    const z = r.zeroStrain[0];
    expect(residual(fw, z.velocities, z.latticeVelocity)).toBeLessThan(1e-12);
    const eps = strainOf(fw.lattice, z.latticeVelocity);
    for (const row of eps) for (const x of row) expect(Math.abs(x)).toBeLessThan(1e-12);
  });

  it('twisted kagome: one flex, a pure dilation, auxetic (Sun, Souslov, Mao & Lubensky, PNAS 2012)', () => {
    for (const twist of [15, -25, 40]) {
      const fw = buildGallery(`gallery:twisted-kagome?twist=${twist}`);
      const r = flexibleLattice(fw);
      const d = byDuality(fw);
      expect(d.strainDim).toBe(1);
      expect([r.flexes, r.trivialFlexes, r.nonTrivialFlexes, r.strainFlexes, r.zeroStrainFlexes]).toEqual([4, 3, 1, 1, 0]);
      const [e] = r.strainSpace.basis;
      expect(e[0][0]).toBeCloseTo(Math.SQRT1_2, 10);
      expect(e[1][1]).toBeCloseTo(Math.SQRT1_2, 10);
      expect(e[0][1]).toBeCloseTo(0, 10);
      expect(r.strains[0].kind).toBe('dilation');
      expect(r.strains[0].auxetic).toBe(true);
      expect(r.strainSpace.auxetic).toBe('all');
    }
  });

  it('the strain space and the zero-strain count agree with the duality computation on every lattice', () => {
    const specs = ['gallery:square', 'gallery:square-diagonal', 'gallery:triangular', 'gallery:kagome', 'gallery:twisted-kagome?twist=15', 'gallery:honeycomb', 'gallery:rotating-squares', 'gallery:rotating-squares-tilted?tilt=20', 'gallery:deformed-kagome'];
    for (const spec of specs) {
      const fw = buildGallery(spec);
      const r = flexibleLattice(fw);
      const d = byDuality(fw);
      expect([spec, r.strainFlexes, r.zeroStrainFlexes, r.fixedLattice.flexes]).toEqual([spec, d.strainDim, d.zeroStrain, d.fixedFlexes]);
      expectSameMatrix(projectorOf(r), d.projector);
    }
  });

  it('… and on random frameworks, whose strain spaces lie askew to the axes', () => {
    // helpers.randomFramework: random joints, bars with random shifts, lattice (1, 0), (0.3, 1.1)
    const seen = new Set<number>();
    for (const [seed, S, B] of [
      [1, 2, 3],
      [2, 2, 4],
      [3, 3, 5],
      [4, 3, 6],
      [5, 3, 7],
      [6, 4, 7],
    ]) {
      const fw = randomFramework(seed, S, B);
      const r = flexibleLattice(fw);
      const d = byDuality(fw);
      expect([seed, r.strainFlexes, r.zeroStrainFlexes]).toEqual([seed, d.strainDim, d.zeroStrain]);
      expectSameMatrix(projectorOf(r), d.projector);
      seen.add(r.strainFlexes);
    }
    expect(seen.size).toBeGreaterThan(1);
  });

  it('each reported flex is a flex of the flexible-lattice matrix with the reported strain', () => {
    for (const spec of ['gallery:square', 'gallery:honeycomb', 'gallery:twisted-kagome?twist=15', 'gallery:rotating-squares-tilted?tilt=20']) {
      const fw = buildGallery(spec);
      const r = flexibleLattice(fw);
      for (const s of r.strains) {
        const size = Math.hypot(...s.velocities, ...s.latticeVelocity.flat());
        expect(residual(fw, s.velocities, s.latticeVelocity)).toBeLessThan(1e-10 * size);
        const eps = strainOf(fw.lattice, s.latticeVelocity);
        for (let i = 0; i < 2; i++) for (let j = 0; j < 2; j++) expect(eps[i][j]).toBeCloseTo(s.strain[i][j], 10);
        // principal strains are the eigenvalues of ε
        const ev = new EigenvalueDecomposition(new Matrix(s.strain), { assumeSymmetric: true }).realEigenvalues.sort((p, q) => q - p);
        expect(s.principal.values[0]).toBeCloseTo(ev[0], 10);
        expect(s.principal.values[1]).toBeCloseTo(ev[1], 10);
      }
      // the basis is orthonormal in the Frobenius inner product
      const B = r.strainSpace.basis.map(coords);
      for (let i = 0; i < B.length; i++) for (let j = 0; j < B.length; j++) expect(B[i].reduce((t, x, k) => t + x * B[j][k], 0)).toBeCloseTo(i === j ? 1 : 0, 10);
    }
  });
});

describe('invariance', () => {
  it('another lattice basis (a1, a1 + a2) and a shifted origin give the same strain space and counts', () => {
    for (const spec of ['gallery:square', 'gallery:honeycomb', 'gallery:kagome', 'gallery:twisted-kagome?twist=15', 'gallery:deformed-kagome', 'random:3', 'random:4']) {
      const fw = spec.startsWith('random:') ? randomFramework(Number(spec.slice(7)), 3, Number(spec.slice(7)) + 2) : buildGallery(spec);
      const a = flexibleLattice(fw);
      const b = flexibleLattice(rebased(fw, [0.37, -1.21]));
      expect([b.flexes, b.trivialFlexes, b.strainFlexes, b.zeroStrainFlexes]).toEqual([a.flexes, a.trivialFlexes, a.strainFlexes, a.zeroStrainFlexes]);
      expectSameMatrix(projectorOf(b), projectorOf(a));
      // the basis is the same, not only its span (it is built from the space alone)
      b.strainSpace.basis.forEach((e, i) => expectSameMatrix(new Matrix(e), new Matrix(a.strainSpace.basis[i])));
      expect(b.strainSpace.auxetic).toBe(a.strainSpace.auxetic);
    }
  });

  it('an N1×N2 periodic supercell equals the same block written out as one cell', () => {
    for (const [spec, N1, N2] of [
      ['gallery:square', 2, 2],
      ['gallery:kagome', 2, 2],
      ['gallery:honeycomb', 2, 1],
      ['gallery:twisted-kagome?twist=15', 2, 3],
    ] as [string, number, number][]) {
      const fw = buildGallery(spec);
      const a = flexibleLattice(fw, { cells: [N1, N2] });
      const t = tiled(fw, N1, N2);
      const b = flexibleLattice(t);
      const d = byDuality(t);
      expect([a.flexes, a.strainFlexes, a.zeroStrainFlexes, a.selfStresses]).toEqual([b.flexes, b.strainFlexes, b.zeroStrainFlexes, b.selfStresses]);
      expect([a.strainFlexes, a.zeroStrainFlexes]).toEqual([d.strainDim, d.zeroStrain]);
      expectSameMatrix(projectorOf(a), d.projector);
      expect(a.lattice).toEqual(t.lattice);
    }
  });
});

describe('bad input', () => {
  it('names the field and the fix', () => {
    const fw = buildGallery('gallery:square');
    const bad = (f: () => unknown, where: string) => {
      try {
        f();
        expect.unreachable('no error');
      } catch (e) {
        expect(e).toBeInstanceOf(InputError);
        expect((e as InputError).problems[0].where).toBe(where);
        expect((e as InputError).problems[0].fix.length).toBeGreaterThan(5);
      }
    };
    bad(() => flexibleLattice(fw, { cells: [0, 1] }), 'cells');
    bad(() => flexibleLattice(fw, { tolerance: 2 }), 'tolerance');
    bad(() => flexibleLattice({ ...fw, lattice: [[1, 0], [2, 0]] }), 'lattice');
  });
});

// ---------------------------------------------------------------------------------------------
// CLI and schema

const run = runCli;

const { ajv, validator } = schemaValidators();
const validate = validator('strain.schema.json');

describe('shimmy strain', () => {
  it('--json is valid against schema/strain.schema.json and carries the counts', async () => {
    for (const [spec, cells, dim] of [
      ['gallery:twisted-kagome?twist=15', '1x1', 1],
      ['gallery:kagome', '2x2', 0],
      ['gallery:honeycomb', '1x1', 2],
    ] as [string, string, number][]) {
      const r = await run(['strain', spec, '--cells', cells, '--json']);
      expect(r.err).toBe('');
      expect(r.code).toBe(0);
      const o = JSON.parse(r.out);
      expect(validate(o) ? '' : ajv.errorsText(validate.errors)).toBe('');
      expect(o.schemaVersion).toBe('shimmy.strain/1');
      expect(o.strainSpace.dimension).toBe(dim);
      expect(o.strains).toHaveLength(dim);
      expect(o.caution).toMatch(/first-order/);
    }
  });

  it('the table names the strain space, each strain and the caution', async () => {
    const r = await run(['strain', 'gallery:twisted-kagome?twist=15']);
    expect(r.code).toBe(0);
    for (const word of ['straining the cell', 'zero strain', 'strain space', 'dilation', 'auxetic', 'certified', 'Caution']) expect(r.out).toContain(word);
  });

  it('bad flags are errors that name the flag', async () => {
    const r = await run(['strain', 'gallery:square', '--cells', '0x2']);
    expect(r.code).toBe(2);
    expect(r.err).toContain('--cells');
    const t = await run(['strain', 'gallery:square', '--tol', '3']);
    expect(t.code).toBe(2);
    expect(t.err).toContain('--tol');
  });
});
