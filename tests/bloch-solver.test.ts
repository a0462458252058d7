/**
 * The Bloch reduction solver against the dense reference path: the same counts, the same gap
 * and the same flex and self-stress spaces (compared through their orthogonal projectors), on
 * every gallery lattice and on random frameworks, at several sizes, twists and mixed boundaries.
 * Block-diagonalisation of a translation-invariant operator by the discrete Fourier transform is
 * common practice (N. W. Ashcroft & N. D. Mermin, Solid State Physics (1976), ch. 8, from memory).
 */
import { describe, expect, it } from 'vitest';
import { InputError } from '../src/errors.js';
import { denseSolver } from '../src/flex/solve-dense.js';
import { CancelledError, type SolvedSpaces, type SpaceSolver } from '../src/flex/solver.js';
import { buildGallery, GALLERY } from '../src/framework/gallery.js';
import type { Framework } from '../src/framework/types.js';
import type { CVec } from '../src/linalg/complex.js';
import { conjugateTranspose, sparseMatVec, type SparseMatrix } from '../src/linalg/sparse.js';
import { AMBIGUOUS_RATIO, combineRankParts, decideRank, rankPartOf } from '../src/linalg/rank.js';
import { blochPlan, blochSolver, makeBlochSolver, SPARSE_STRIP_COLUMNS } from '../src/spectrum/bloch.js';
import { parseBoundary } from '../src/supercell/boundary.js';
import { rigidityApply, rigidityMatrix, rigiditySquaredNorm } from '../src/supercell/rigidity.js';
import { rigidMotions } from '../src/flex/rigid.js';
import { analyseSupercell } from '../src/flex/spaces.js';
import { buildSupercell, type Supercell } from '../src/supercell/supercell.js';
import { randomFramework, rng } from './helpers.js';

const OPTIONS = { relative: 1e-9, memoryLimit: 1.5 * 1024 ** 3 };

/**
 * ‖P_a − P_b‖_F for orthonormal bases of equal dimension: √2 · ‖(I − P_a) b‖_F, computed from
 * the residuals of projecting b onto span a (accurate down to rounding, unlike √(2k − 2‖aᴴb‖²)).
 */
function projectorDistance(a: CVec[], b: CVec[]): number {
  let sum = 0;
  for (const v of b) {
    const rr = Float64Array.from(v.re);
    const ri = Float64Array.from(v.im);
    for (const u of a) {
      let sr = 0;
      let si = 0;
      for (let i = 0; i < u.re.length; i++) {
        sr += u.re[i] * v.re[i] + u.im[i] * v.im[i];
        si += u.re[i] * v.im[i] - u.im[i] * v.re[i];
      }
      for (let i = 0; i < u.re.length; i++) {
        rr[i] -= sr * u.re[i] - si * u.im[i];
        ri[i] -= sr * u.im[i] + si * u.re[i];
      }
    }
    for (let i = 0; i < rr.length; i++) sum += rr[i] ** 2 + ri[i] ** 2;
  }
  return Math.SQRT2 * Math.sqrt(sum);
}

/** max |⟨u_k, u_l⟩ − δ_kl| */
function orthonormalityError(a: CVec[]): number {
  let worst = 0;
  for (let k = 0; k < a.length; k++)
    for (let l = k; l < a.length; l++) {
      let sr = 0;
      let si = 0;
      for (let i = 0; i < a[k].re.length; i++) {
        sr += a[k].re[i] * a[l].re[i] + a[k].im[i] * a[l].im[i];
        si += a[k].re[i] * a[l].im[i] - a[k].im[i] * a[l].re[i];
      }
      worst = Math.max(worst, Math.hypot(sr - (k === l ? 1 : 0), si));
    }
  return worst;
}

/** max ‖A u‖ over the basis. */
function residual(A: SparseMatrix, a: CVec[]): number {
  let worst = 0;
  for (const u of a) {
    const y = sparseMatVec(A, u.re, u.im);
    let s = 0;
    for (let i = 0; i < y.re.length; i++) s += y.re[i] ** 2 + y.im[i] ** 2;
    worst = Math.max(worst, Math.sqrt(s));
  }
  return worst;
}

/**
 * How a run's blocks are solved: 'spectral' (every block by an SVD, every σ known) or 'sparse'
 * (the strip blocks by the banded sparse solver, which finds only the σ near the cut).
 */
type BlockPathExpected = 'spectral' | 'sparse';

/** Each Bloch solver given (default: the default one) against one dense run. */
function compare(fw: Framework, cells: [number, number], bc: string, runs: [SpaceSolver, BlockPathExpected][] = [[blochSolver, 'spectral']]): void {
  const sc = buildSupercell(fw, cells, parseBoundary(bc));
  const R = rigidityMatrix(sc);
  const d: SolvedSpaces = denseSolver(sc, R, OPTIONS);
  for (const [solver, path] of runs) compareWith(sc, R, d, solver(sc, R, OPTIONS), path, `${fw.name} ${cells.join('x')} ${bc} (${path} blocks)`);
}

function compareWith(sc: Supercell, R: SparseMatrix, d: SolvedSpaces, b: SolvedSpaces, path: BlockPathExpected, where: string): void {
  const smax = d.decision.sigmaMax;
  expect(b.solver, where).toBe('bloch');
  if (path === 'sparse') expect(b.gapNote, where).toMatch(/strip blocks by the banded sparse solver/);
  else expect(b.gapNote, where).toBeUndefined();
  expect(b.decision.rank, where).toBe(d.decision.rank);
  expect(Math.abs(b.decision.sigmaMax - smax), where).toBeLessThanOrEqual(1e-12 * smax);
  expect(b.decision.tolerance.relative, where).toBe(d.decision.tolerance.relative);
  expect(Math.abs(b.decision.tolerance.absolute - d.decision.tolerance.absolute), where).toBeLessThanOrEqual(1e-20 + 1e-12 * d.decision.tolerance.absolute);
  const gb = b.decision.gap;
  const gd = d.decision.gap;
  // Smallest kept σ: a genuine singular value, equal to 1e-12 relative from an SVD; the sparse
  // solver settles it to 1e-9 relative.
  if (gd.kept === null) expect(gb.kept, where).toBeNull();
  else if (path === 'spectral') expect(Math.abs(gb.kept! - gd.kept), where).toBeLessThanOrEqual(1e-12 * smax);
  else expect(Math.abs(gb.kept! - gd.kept), where).toBeLessThanOrEqual(1e-9 * gd.kept);
  // Largest dropped σ: 0 for structural zeros, null when nothing is dropped, else a rounding
  // level value that both paths put below 1e-12 · σ_max (its digits are noise on either path).
  // (0 may also be a computed value: an exact zero from one SVD is rounding noise from another)
  // The sparse path measures it as ‖B v‖ of a Ritz vector: only "at or below the cut" is exact.
  if (gd.dropped === null) expect(gb.dropped, where).toBeNull();
  else {
    expect(gb.dropped, where).not.toBeNull();
    if (path === 'spectral') expect(Math.abs(gb.dropped! - gd.dropped), where).toBeLessThanOrEqual(1e-12 * smax);
    else {
      expect(gb.dropped!, where).toBeGreaterThanOrEqual(0);
      expect(gb.dropped!, where).toBeLessThanOrEqual(b.decision.tolerance.absolute);
    }
  }
  expect(gb.ambiguous, where).toBe(gd.ambiguous);

  for (const which of ['flex', 'stress'] as const) {
    const vb = which === 'flex' ? b.flexBasis() : b.selfStressBasis();
    const vd = which === 'flex' ? d.flexBasis() : d.selfStressBasis();
    const A = which === 'flex' ? R : conjugateTranspose(R);
    const w = `${where} ${which}`;
    expect(vb.vectors.length, w).toBe(which === 'flex' ? R.cols - d.decision.rank : R.rows - d.decision.rank);
    expect(vb.vectors.length, w).toBe(vd.vectors.length);
    expect(vb.real, w).toBe(vd.real);
    expect(vb.real, w).toBe(sc.real);
    if (vb.real) for (const v of vb.vectors) expect(v.im.every((x) => x === 0), w).toBe(true);
    expect(orthonormalityError(vb.vectors), w).toBeLessThan(1e-12);
    if (path === 'spectral') {
      expect(residual(A, vb.vectors), w).toBeLessThan(1e-12 * Math.max(1, smax));
      expect(projectorDistance(vb.vectors, vd.vectors), w).toBeLessThan(1e-9);
    } else {
      // every vector of a sparse block basis is certified with ‖B v‖ at or below the cut
      expect(residual(A, vb.vectors), w).toBeLessThanOrEqual(b.decision.tolerance.absolute);
      expect(projectorDistance(vb.vectors, vd.vectors), w).toBeLessThan(1e-8);
    }
  }
}

const BOUNDARIES = [
  'periodic',
  'twist:0.5,0',
  'twist:0.5,0.5',
  'twist:0.3,0.7',
  'twist:0.25,0',
  'x=periodic,y=free',
  'x=twist:0.5,bottom=pinned',
  'x=twist:0.2,y=pinned',
  'y=periodic,x=free',
  'y=twist:0.5,left=pinned',
  'y=twist:0.35,right=pinned,left=free',
];

describe('bloch solver equals the dense path on the gallery', () => {
  for (const entry of GALLERY) {
    const fw = entry.build({});
    it(`${entry.name}`, () => {
      BOUNDARIES.forEach((bc, k) => {
        compare(fw, [1, 1], bc);
        compare(fw, k % 2 ? [2, 3] : [3, 2], bc);
      });
    });
  }
});

describe('bloch solver equals the dense path on random frameworks', () => {
  const sizes: [number, number][] = [[1, 1], [2, 2], [3, 1], [1, 3], [5, 1], [1, 5], [3, 2]];
  for (const seed of [3, 7, 19, 42]) {
    it(`seed ${seed}`, () => {
      const fw = randomFramework(seed, 2 + (seed % 3), 4 + (seed % 4));
      // every boundary at two sizes, the sizes cycling so each seed covers all of them
      BOUNDARIES.forEach((bc, k) => {
        compare(fw, sizes[(k + seed) % sizes.length], bc);
        compare(fw, sizes[(k + seed + 3) % sizes.length], bc);
      });
    });
  }
  it('a larger square supercell, 5×5, periodic and twisted', () => {
    const fw = GALLERY.find((e) => e.name === 'kagome')!.build({});
    compare(fw, [5, 5], 'periodic');
    compare(fw, [5, 4], 'twist:0.5,0.125');
    compare(fw, [5, 3], 'x=twist:0.5,y=free');
  });
});

describe('bloch solver: plan, errors, progress, cancellation', () => {
  const kagome = GALLERY.find((e) => e.name === 'kagome')!.build({});

  it('the blocks are the single cell twisted by ((θ1+m1)/N1, (θ2+m2)/N2), and strips are 1×N2', () => {
    const sc = buildSupercell(kagome, [3, 2], parseBoundary('twist:0.3,0.5'));
    const plan = blochPlan(sc);
    expect(plan.kind).toBe('both');
    expect(plan.blocks.length).toBe(6);
    expect(plan.blockCells).toEqual([1, 1]);
    const phases = plan.blocks.map((b) => b.phase.map((x) => +x.toFixed(12)));
    expect(phases).toContainEqual([+(1.3 / 3).toFixed(12), 0.75]);
    const strip = blochPlan(buildSupercell(kagome, [4, 5], parseBoundary('x=periodic,y=free')));
    expect(strip.kind).toBe('x');
    expect(strip.blockCells).toEqual([1, 5]);
    expect(strip.blocks.map((b) => b.phase[0])).toEqual([0, 0.25, 0.5, 0.75]);
    // real boundary: φ and −φ are paired; 0 and ½ are their own partners
    expect(strip.blocks.map((b) => b.conjugate)).toEqual([0, 3, 2, 1]);
  });

  it('refuses a boundary without a twisted axis, naming --solver', () => {
    const sc = buildSupercell(kagome, [2, 2], parseBoundary('free'));
    const run = () => blochSolver(sc, rigidityMatrix(sc), OPTIONS);
    expect(run).toThrow(InputError);
    try {
      run();
    } catch (e) {
      const p = (e as InputError).problems[0];
      expect(p.where).toBe('--solver');
      expect(p.what).toMatch(/twisted or periodic axis/);
      expect(p.fix).toMatch(/--solver dense/);
    }
  });

  it('reports progress per block and stops on an aborted signal', () => {
    const sc = buildSupercell(kagome, [3, 2], parseBoundary('periodic'));
    const R = rigidityMatrix(sc);
    const seen: number[] = [];
    blochSolver(sc, R, { ...OPTIONS, onProgress: (p) => seen.push(p.fraction) });
    expect(seen.length).toBe(6);
    expect(seen[seen.length - 1]).toBe(1);
    for (let k = 1; k < seen.length; k++) expect(seen[k]).toBeGreaterThan(seen[k - 1]);
    const ctl = new AbortController();
    ctl.abort();
    expect(() => blochSolver(sc, R, { ...OPTIONS, signal: ctl.signal })).toThrow(CancelledError);
  });

  it('kagome periodic 4×6: N1 + N2 + gcd(N1, N2) = 12 flexes and self-stresses', () => {
    // Sun, Souslov, Mao & Lubensky, "Surface phonons, elastic response, and conformal
    // invariance in twisted kagome lattices", PNAS 109, 12369 (2012): zero modes on the lines
    // q·e = 0; the N1 + N2 + gcd count of closed straight lines follows from them.
    const sc = buildSupercell(kagome, [4, 6], parseBoundary('periodic'));
    const R = rigidityMatrix(sc);
    const s = blochSolver(sc, R, OPTIONS);
    expect(R.cols - s.decision.rank).toBe(12);
    expect(R.rows - s.decision.rank).toBe(12);
  });
});

describe('strip blocks: the banded sparse solver against the dense path', () => {
  // every strip block to the sparse solver, and every one to an SVD
  const sparseBlocks = makeBlochSolver({ sparseStripColumns: 0 });
  const svdBlocks = makeBlochSolver({ sparseStripColumns: Infinity });
  const STRIPS = ['x=twist:0.3,y=free', 'x=twist:0.3,y=pinned', 'x=periodic,y=free', 'y=twist:0.3,x=free', 'y=twist:0.3,x=pinned', 'y=periodic,x=free'];
  const frameworks: [string, Framework][] = [
    ['kagome', GALLERY.find((e) => e.name === 'kagome')!.build({})],
    ['twisted kagome', GALLERY.find((e) => e.name === 'twisted-kagome')!.build({})],
    ['square', GALLERY.find((e) => e.name === 'square')!.build({})],
    ['random framework', randomFramework(11, 3, 6)],
  ];
  for (const [name, fw] of frameworks) {
    it(`${name}: both block paths, both strip axes`, () => {
      STRIPS.forEach((bc, k) => {
        compare(fw, bc.startsWith('x') ? [3, 2] : [2, 3], bc, [
          [sparseBlocks, 'sparse'],
          [svdBlocks, 'spectral'],
        ]);
      });
    });
  }

  it('a single strip (one phase) and real boundaries with self-conjugate phases', () => {
    const kagome = GALLERY.find((e) => e.name === 'kagome')!.build({});
    compare(kagome, [1, 6], 'x=twist:0.3,y=free', [[sparseBlocks, 'sparse']]);
    compare(kagome, [4, 3], 'x=twist:0.5,y=pinned', [[sparseBlocks, 'sparse']]);
    compare(kagome, [3, 4], 'y=periodic,left=pinned,right=free', [[sparseBlocks, 'sparse']]);
  });

  it(`by default strips of ${SPARSE_STRIP_COLUMNS} columns or more go to the sparse solver, smaller ones to an SVD`, () => {
    const kagome = GALLERY.find((e) => e.name === 'kagome')!.build({});
    const perCell = 2 * kagome.joints.length;
    const long = Math.ceil(SPARSE_STRIP_COLUMNS / perCell);
    compare(kagome, [1, long], 'x=periodic,y=free', [[blochSolver, 'sparse']]);
    compare(kagome, [long, 1], 'y=twist:0.3,x=free', [[blochSolver, 'sparse']]);
    compare(kagome, [1, long - 1], 'x=twist:0.5,y=free', [[blochSolver, 'spectral']]);
  });

  it('unit-cell blocks (both axes twisted) never go to the sparse solver', () => {
    const kagome = GALLERY.find((e) => e.name === 'kagome')!.build({});
    compare(kagome, [3, 2], 'twist:0.3,0.7', [[sparseBlocks, 'spectral']]);
  });

  it('refuses a threshold that is not a number ≥ 0, naming it', () => {
    expect(() => makeBlochSolver({ sparseStripColumns: -1 })).toThrow(/sparseStripColumns must be a number ≥ 0/);
    expect(() => makeBlochSolver({ sparseStripColumns: Number.NaN })).toThrow(RangeError);
  });

  it('progress never goes back and ends at 1; an abort from inside a block stops the run', () => {
    const kagome = GALLERY.find((e) => e.name === 'kagome')!.build({});
    const sc = buildSupercell(kagome, [4, 5], parseBoundary('x=twist:0.3,y=free'));
    const R = rigidityMatrix(sc);
    const seen: number[] = [];
    const stages = new Set<string>();
    const s = sparseBlocks(sc, R, {
      ...OPTIONS,
      onProgress: (p) => {
        seen.push(p.fraction);
        stages.add(p.stage.replace(/\d+/g, '#'));
      },
    });
    expect(seen[seen.length - 1]).toBe(1);
    for (let k = 1; k < seen.length; k++) expect(seen[k]).toBeGreaterThanOrEqual(seen[k - 1]);
    expect([...stages].some((x) => /^Bloch block # of #: inertia count/.test(x))).toBe(true);
    expect(s.flexBasis().vectors.length).toBe(R.cols - s.decision.rank);
    const ctl = new AbortController();
    const run = () => sparseBlocks(sc, R, { ...OPTIONS, signal: ctl.signal, onProgress: (p) => /subspace iteration|Lanczos for the smallest/.test(p.stage) && ctl.abort() });
    expect(run).toThrow(CancelledError);
  });
});

describe('the rank decision assembled from block parts', () => {
  it('equals decideRank on the union of the blocks\' singular values (with structural zeros)', () => {
    // Assembling the decision of a block-diagonal matrix from its blocks is common practice.
    const r = rng(17);
    for (let trial = 0; trial < 200; trial++) {
      const shapes = Array.from({ length: 1 + Math.floor(r() * 4) }, () => [Math.floor(r() * 5), Math.floor(r() * 5)] as [number, number]);
      const scale = r() < 0.1 ? 0 : 1 + r();
      const blocks = shapes.map(([m, n]) =>
        Float64Array.from({ length: Math.min(m, n) }, () => {
          const u = r();
          return scale * (u < 0.25 ? 0 : u < 0.45 ? 1e-14 * r() : u < 0.5 ? 1e-9 * (1 + (r() - 0.5) * 1e-3) : r());
        }),
      );
      const rows = shapes.reduce((a, [m]) => a + m, 0);
      const cols = shapes.reduce((a, [, n]) => a + n, 0);
      const union: number[] = blocks.flatMap((s) => Array.from(s));
      while (union.length < Math.min(rows, cols)) union.push(0);
      const ref = decideRank(union, rows, cols, 1e-9);
      const parts = blocks.map((s, k) => rankPartOf(s, shapes[k][0], shapes[k][1], ref.tolerance.absolute));
      const got = combineRankParts(parts, rows, cols, 1e-9, ref.sigmaMax);
      expect(got, `trial ${trial}`).toEqual(ref);
    }
  });

  it('flags an ambiguous gap (ratio under AMBIGUOUS_RATIO) and refuses inconsistent parts', () => {
    const d = combineRankParts([{ rank: 2, kept: 1e-6, dropped: 1e-12 }, { rank: 1, kept: 1e-8, dropped: 1e-10 }], 5, 5, 1e-9, 1);
    expect(d.rank).toBe(3);
    expect(d.gap).toEqual({ kept: 1e-8, dropped: 1e-10, ratio: 100, ambiguous: 100 < AMBIGUOUS_RATIO });
    expect(() => combineRankParts([{ rank: 3, kept: 1, dropped: null }], 2, 3, 1e-9, 1)).toThrow(RangeError);
  });
});

describe('a Bloch analysis works without the full rigidity matrix', () => {
  it('gives the same counts and trivial flexes with R passed or not, and builds R on request', () => {
    // The rigid-motion test multiplies bar by bar (rigidityApply) instead of through R; both are
    // checked against the assembled matrix on real boundaries, periodic and mixed.
    const r = rng(41);
    for (const [spec, bc] of [
      ['gallery:kagome', 'periodic'],
      ['gallery:square', 'x=periodic,y=free'],
      ['gallery:twisted-kagome?twist=15', 'twist:0.5,0'],
    ] as const) {
      const fw = buildGallery(spec);
      const sc = buildSupercell(fw, [4, 3], parseBoundary(bc));
      const R = rigidityMatrix(sc);
      const withR = blochSolver(sc, R, OPTIONS).decision;
      const without = blochSolver(sc, null, OPTIONS).decision;
      expect(without).toEqual(withR);
      const a = analyseSupercell(sc, { solver: 'bloch' });
      expect(a.rank).toBe(withR.rank);
      const M = a.matrix();
      expect([M.rows, M.cols]).toEqual([R.rows, R.cols]);
      expect(Array.from(M.re)).toEqual(Array.from(R.re));
      expect(Array.from(M.colIdx)).toEqual(Array.from(R.colIdx));
      for (let t = 0; t < 3; t++) {
        const u = Float64Array.from({ length: R.cols }, () => 2 * r() - 1);
        const ref = sparseMatVec(R, u, null).re;
        const got = rigidityApply(sc, u);
        for (let i = 0; i < ref.length; i++) expect(Math.abs(got[i] - ref[i])).toBeLessThanOrEqual(1e-14 * (1 + Math.abs(ref[i])));
      }
      // ‖R·[u v w]‖_F² in one pass (the rigid-motion test's first look) against the products
      const fields = [0, 1, 2].map(() => Float64Array.from({ length: R.cols }, () => 2 * r() - 1));
      const sum = fields.reduce((s, u) => s + sparseMatVec(R, u, null).re.reduce((t, x) => t + x * x, 0), 0);
      expect(sum).toBeGreaterThan(1);
      expect(Math.abs(rigiditySquaredNorm(sc, fields) - sum)).toBeLessThanOrEqual(1e-13 * sum);
      // the rigid motions themselves: R·T vanishes to rounding, far below the tolerance, so the
      // count of trivial flexes is the number of motions tested without a QR
      // (none are allowed with an axis twisted by θ ≠ 0)
      const motions = rigidMotions(sc);
      expect(motions.length).toBe(bc === 'twist:0.5,0' ? 0 : 2);
      expect(Math.sqrt(rigiditySquaredNorm(sc, motions.map((m) => m.field)))).toBeLessThan(1e-12);
      expect(a.trivialFlexes).toBe(motions.length);
    }
    // free sides: the rotation too, whose field is rounded (positions about the centroid)
    const free = buildSupercell(buildGallery('gallery:twisted-kagome?twist=15'), [6, 5], parseBoundary('free'));
    const motions = rigidMotions(free);
    expect(motions.map((m) => m.name)).toEqual(['translation x', 'translation y', 'rotation']);
    expect(Math.sqrt(rigiditySquaredNorm(free, motions.map((m) => m.field)))).toBeLessThan(1e-12);
    expect(analyseSupercell(free).trivialFlexes).toBe(3);
  });
});
