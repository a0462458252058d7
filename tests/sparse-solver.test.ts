/**
 * The banded sparse solver: band LDLᵀ inertia counts (Sylvester's law of inertia), then counts,
 * gap figures and spaces against the dense reference path on every gallery lattice, open
 * boundaries, random frameworks and a complex strip block.
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { CancelledError } from '../src/flex/solver.js';
import { denseSolver } from '../src/flex/solve-dense.js';
import { sparsePlan, sparseSolver, sparseSpaces } from '../src/flex/solve-sparse.js';
import { GALLERY, buildGallery } from '../src/framework/gallery.js';
import type { Framework } from '../src/framework/types.js';
import { TooLargeError } from '../src/errors.js';
import { bandFromDense, bandLdl, countEigenvaluesBelow, ldlSolve, reverseCuthillMcKee, type Graph } from '../src/linalg/banded.js';
import type { NullBasis } from '../src/linalg/dense.js';
import { sigmaMaxUpperBound } from '../src/linalg/lanczos.js';
import { SparseBuilder, conjugateTranspose, gramMatVecInto, sparseMatVec, sparseMatVecInto, type SparseMatrix } from '../src/linalg/sparse.js';
import { parseBoundary } from '../src/supercell/boundary.js';
import { rigidityMatrix } from '../src/supercell/rigidity.js';
import { buildSupercell } from '../src/supercell/supercell.js';
import { randomFramework, rng } from './helpers.js';

const OPTIONS = { relative: 1e-9, memoryLimit: 1.5 * 1024 ** 3 };

function tridiag(n: number): number[][] {
  return Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => (i === j ? 2 : Math.abs(i - j) === 1 ? -1 : 0)));
}

// Worked example of the inertia count: T = tridiag(−1, 2, −1), n = 3, eigenvalues 2 − √2, 2,
// 2 + √2. Z. Bai, J. Demmel, J. Dongarra, A. Ruhe & H. van der Vorst (eds.), Templates for the
// Solution of Algebraic Eigenvalue Problems: A Practical Guide, SIAM (2000): the number of
// negative pivots of the LDLᵀ factorisation of T − σI is the number of eigenvalues below σ.
describe('band LDLᵀ inertia (Bai et al., Templates, SIAM 2000)', () => {
  const T = bandFromDense(tridiag(3));

  it.each([
    [0.5, 0, [1.5, 5 / 6, 0.3]],
    [1.5, 1, [0.5, -1.5, 7 / 6]],
    [2.5, 2, [-0.5, 1.5, -7 / 6]],
    [3.5, 3, [-1.5, -5 / 6, -0.3]],
  ])('T − %sI has %i negative pivots', (sigma, negatives, pivots) => {
    const f = bandLdl(T, { shift: sigma });
    expect(f.breakdown).toBeNull();
    expect(f.negatives).toBe(negatives);
    // the pivots follow from d1 = 2 − σ, d_{k+1} = 2 − σ − 1/d_k (hand recurrence)
    pivots.forEach((p, k) => expect(f.d[k]).toBeCloseTo(p, 12));
    expect(countEigenvaluesBelow(T, sigma).below).toBe(negatives);
  });

  it('an exact zero pivot (σ = 1) is a breakdown; the count moves σ and still finds one eigenvalue below', () => {
    const f = bandLdl(T, { shift: 1 });
    expect(f.breakdown).toEqual({ index: 1, pivot: 0 });
    const c = countEigenvaluesBelow(T, 1);
    expect(c.retries).toBeGreaterThan(0);
    expect(c.shift).not.toBe(1);
    expect(Math.abs(c.shift - 1)).toBeLessThan(0.01);
    expect(c.below).toBe(1); // 2 − √2 < 1 < 2
  });

  it('leaves its input alone unless told to overwrite, and solves with the factor', () => {
    const A = bandFromDense([
      [4, 1, 0, 0],
      [1, 5, 2, 0],
      [0, 2, 6, 1],
      [0, 0, 1, 3],
    ]);
    const before = A.re.slice();
    const f = bandLdl(A, { shift: 0.5 });
    expect(Array.from(A.re)).toEqual(Array.from(before));
    const x = Float64Array.from([1, -2, 3, 0.5]);
    const b = new Float64Array(4);
    const dense = [
      [3.5, 1, 0, 0],
      [1, 4.5, 2, 0],
      [0, 2, 5.5, 1],
      [0, 0, 1, 2.5],
    ];
    for (let i = 0; i < 4; i++) for (let j = 0; j < 4; j++) b[i] += dense[i][j] * x[j];
    ldlSolve(f, b, null);
    for (let i = 0; i < 4; i++) expect(b[i]).toBeCloseTo(x[i], 12);
  });

  it('free 3×3 square grid: the inertia of QᵀQ − 10⁻³·I gives 6 flexes (Bai et al. 2000; counts from Calladine 1978)', () => {
    // 3×3 joints, 12 bars: N0 = a + b = 6 (C. R. Calladine, Int. J. Solids Struct. 14, 161–172,
    // 1978, counting rule; the next eigenvalue of QᵀQ is 1, so 10⁻³ lies in the gap)
    const sc = buildSupercell(buildGallery('gallery:square'), [3, 3], parseBoundary('free'));
    const R = rigidityMatrix(sc);
    const n = R.cols;
    const K = Array.from({ length: n }, () => new Array<number>(n).fill(0));
    for (let r = 0; r < R.rows; r++)
      for (let a = R.rowPtr[r]; a < R.rowPtr[r + 1]; a++)
        for (let b = R.rowPtr[r]; b < R.rowPtr[r + 1]; b++) K[R.colIdx[a]][R.colIdx[b]] += R.re[a] * R.re[b];
    expect(countEigenvaluesBelow(bandFromDense(K), 1e-3).below).toBe(6);
  });

  it('complex Hermitian LDLᴴ counts agree with the eigenvalues of the real embedding (ml-matrix)', () => {
    const g = rng(5);
    const n = 7;
    const bw = 2;
    const re = Array.from({ length: n }, () => new Array<number>(n).fill(0));
    const im = Array.from({ length: n }, () => new Array<number>(n).fill(0));
    for (let i = 0; i < n; i++) {
      re[i][i] = g() * 4 - 2;
      for (let j = Math.max(0, i - bw); j < i; j++) {
        re[i][j] = re[j][i] = g() - 0.5;
        im[i][j] = g() - 0.5;
        im[j][i] = -im[i][j];
      }
    }
    // eigenvalues of H = A + iB are those of [[A, −B], [B, A]], each twice (exact embedding)
    const E = new Matrix(2 * n, 2 * n);
    for (let i = 0; i < n; i++)
      for (let j = 0; j < n; j++) {
        E.set(i, j, re[i][j]);
        E.set(i + n, j + n, re[i][j]);
        E.set(i, j + n, -im[i][j]);
        E.set(i + n, j, im[i][j]);
      }
    const ev = new EigenvalueDecomposition(E, { assumeSymmetric: true }).realEigenvalues;
    const H = bandFromDense(re, im);
    for (const s of [-1.5, -0.3, 0, 0.7, 1.9]) {
      const expected = ev.filter((v) => v < s).length / 2;
      expect(countEigenvaluesBelow(H, s).below).toBe(expected);
    }
  });
});

describe('reverse Cuthill–McKee ordering', () => {
  it('numbers a shuffled path graph with bandwidth 1', () => {
    const n = 12;
    const label = [5, 2, 11, 0, 7, 3, 9, 1, 10, 4, 8, 6]; // path visits nodes in this order
    const nb: number[][] = Array.from({ length: n }, () => []);
    for (let k = 0; k + 1 < n; k++) {
      nb[label[k]].push(label[k + 1]);
      nb[label[k + 1]].push(label[k]);
    }
    const ptr = new Int32Array(n + 1);
    nb.forEach((l, i) => (ptr[i + 1] = ptr[i] + l.length));
    const g: Graph = { n, ptr, adj: Int32Array.from(nb.flat()) };
    const order = reverseCuthillMcKee(g);
    expect([...order].sort((a, b) => a - b)).toEqual([...Array(n).keys()]);
    const pos = new Int32Array(n);
    order.forEach((v, i) => (pos[v] = i));
    for (let k = 0; k + 1 < n; k++) expect(Math.abs(pos[label[k]] - pos[label[k + 1]])).toBe(1);
  });
});

// ---------------------------------------------------------------------------------------------
// Against the dense reference path

/** sin of the largest principal angle between two orthonormal bases of equal dimension. */
function subspaceDistance(a: NullBasis, b: NullBasis): number {
  let worst = 0;
  for (const v of a.vectors) {
    const r = { re: v.re.slice(), im: v.im.slice() };
    for (const w of b.vectors) {
      let cr = 0;
      let ci = 0;
      for (let i = 0; i < v.re.length; i++) {
        cr += w.re[i] * v.re[i] + w.im[i] * v.im[i];
        ci += w.re[i] * v.im[i] - w.im[i] * v.re[i];
      }
      for (let i = 0; i < v.re.length; i++) {
        r.re[i] -= cr * w.re[i] - ci * w.im[i];
        r.im[i] -= cr * w.im[i] + ci * w.re[i];
      }
    }
    let s = 0;
    for (let i = 0; i < r.re.length; i++) s += r.re[i] ** 2 + r.im[i] ** 2;
    worst = Math.max(worst, Math.sqrt(s));
  }
  return worst;
}

function orthonormalityError(a: NullBasis): number {
  let worst = 0;
  a.vectors.forEach((x, i) =>
    a.vectors.slice(0, i + 1).forEach((y, j) => {
      let cr = 0;
      let ci = 0;
      for (let k = 0; k < x.re.length; k++) {
        cr += x.re[k] * y.re[k] + x.im[k] * y.im[k];
        ci += x.re[k] * y.im[k] - x.im[k] * y.re[k];
      }
      worst = Math.max(worst, Math.hypot(cr - (i === j ? 1 : 0), ci));
    }),
  );
  return worst;
}

function residual(R: SparseMatrix, b: NullBasis): number {
  let worst = 0;
  for (const v of b.vectors) {
    const y = sparseMatVec(R, v.re, v.im);
    worst = Math.max(worst, Math.hypot(...y.re, ...y.im));
  }
  return worst;
}

function compareWithDense(fw: Framework, cells: [number, number], bc: string): void {
  const sc = buildSupercell(fw, cells, parseBoundary(bc));
  const R = rigidityMatrix(sc);
  const s = sparseSolver(sc, R, OPTIONS);
  const d = denseSolver(sc, R, OPTIONS);
  const where = `${fw.name} ${cells.join('x')} ${bc}`;
  expect(s.solver).toBe('sparse');
  expect(s.decision.rank, where).toBe(d.decision.rank);
  // σ_max is a Lanczos estimate from below, settled to 1e-3 relative (solve-sparse.ts step 1)
  expect(s.decision.sigmaMax, where).toBeLessThanOrEqual(d.decision.sigmaMax * (1 + 1e-12));
  expect(s.decision.sigmaMax, where).toBeGreaterThan(d.decision.sigmaMax * (1 - 1e-3));
  const gs = s.decision.gap;
  const gd = d.decision.gap;
  if (gd.kept === null) expect(gs.kept).toBeNull();
  else expect(Math.abs(gs.kept! - gd.kept), where).toBeLessThan(1e-7 * gd.kept);
  // dropped values are rounding noise, or 0 (structural zeros of a non-square R, or an exactly
  // zero column the dense SVD resolves exactly) on both paths
  if (gd.dropped === null) expect(gs.dropped).toBeNull();
  else {
    expect(gs.dropped).not.toBeNull();
    expect(gd.dropped).toBeLessThan(1e-12 * (gd.kept ?? 1));
    expect(gs.dropped!).toBeGreaterThanOrEqual(0);
    expect(gs.dropped!).toBeLessThan(1e-12 * (gd.kept ?? 1));
  }
  expect(gs.ambiguous).toBe(gd.ambiguous);
  expect(s.gapNote).toMatch(/Ritz vectors/);
  for (const [bs, bd, M] of [
    [s.flexBasis(), d.flexBasis(), R],
    [s.selfStressBasis(), d.selfStressBasis(), null],
  ] as const) {
    expect(bs.vectors.length, where).toBe(bd.vectors.length);
    expect(bs.real).toBe(bd.real);
    if (bs.real) for (const v of bs.vectors) expect(v.im.every((x) => x === 0)).toBe(true);
    expect(orthonormalityError(bs)).toBeLessThan(1e-12);
    expect(subspaceDistance(bs, bd), where).toBeLessThan(1e-8);
    if (M) expect(residual(M, bs)).toBeLessThanOrEqual(s.decision.tolerance.absolute);
  }
}

describe('sparse solver against the dense path', () => {
  const boundaries = ['free', 'pinned', 'left=pinned', 'bottom=pinned,x=free'];
  it.each(GALLERY.map((g) => g.name))('gallery %s: free, pinned and mixed open boundaries', (name) => {
    const fw = buildGallery(`gallery:${name}`);
    for (const bc of boundaries) compareWithDense(fw, [3, 3], bc);
    compareWithDense(fw, [4, 2], 'free');
  });

  it.each([
    [31, 3, 5],
    [32, 2, 4],
    [33, 3, 7],
  ])('random framework (seed %i, %i joints, %i bars per cell)', (seed, S, B) => {
    const fw = randomFramework(seed, S, B);
    compareWithDense(fw, [3, 3], 'free');
    compareWithDense(fw, [3, 2], 'top=pinned');
  });

  it('a complex strip block: 1×6 kagome with x=twist:0.3, y free (and y pinned)', () => {
    const fw = buildGallery('gallery:kagome');
    compareWithDense(fw, [1, 6], 'x=twist:0.3,y=free');
    compareWithDense(fw, [1, 6], 'x=twist:0.3,y=pinned');
    compareWithDense(buildGallery('gallery:twisted-kagome?twist=15'), [1, 5], 'x=twist:0.3,y=free');
  });

  it('periodic and twisted supercells work too (wrapped bands)', () => {
    compareWithDense(buildGallery('gallery:kagome'), [4, 4], 'periodic');
    compareWithDense(buildGallery('gallery:square'), [4, 3], 'twist:0,0.5');
  });
});

describe('published counts at sizes beyond the quick dense runs', () => {
  // N0 = NS = N1 + N2 + gcd(N1, N2) periodic and N0 = 2(L1 + L2) − 1, NS = 0 free: the straight
  // bond-line zero modes of the regular kagome (A. Souslov, A. J. Liu & T. C. Lubensky, Phys. Rev.
  // Lett. 103, 205503, 2009, from memory; count rule of T. C. Lubensky et al., Rep. Prog. Phys. 78,
  // 073901, 2015). Twisted kagome under periodic boundaries: only the 2 translations (K. Sun,
  // A. Souslov, X. Mao & T. C. Lubensky, PNAS 109, 12369–12374, 2012). Free triangular rhombus:
  // 3 rigid motions and (N − 2)² self-stresses (Calladine, Int. J. Solids Struct. 14, 1978,
  // counting rule). Honeycomb N×N periodic: N² + 1 flexes, 1 self-stress (Lubensky et al. 2015).
  it.each([
    ['gallery:kagome', 16, 'periodic', 48, 48],
    ['gallery:kagome', 12, 'free', 47, 0],
    ['gallery:twisted-kagome?twist=15', 8, 'periodic', 2, 2],
    ['gallery:triangular', 10, 'free', 3, 64],
    ['gallery:honeycomb', 8, 'periodic', 65, 1],
  ] as const)('%s, N = %i, %s: %i flexes, %i self-stresses', (spec, N, bc, flexes, stresses) => {
    const sc = buildSupercell(buildGallery(spec), [N, N], parseBoundary(bc));
    const R = rigidityMatrix(sc);
    const s = sparseSolver(sc, R, OPTIONS);
    expect(R.cols - s.decision.rank).toBe(flexes);
    expect(R.rows - s.decision.rank).toBe(stresses);
    expect(s.decision.gap.ambiguous).toBe(false);
    expect(residual(R, s.flexBasis())).toBeLessThanOrEqual(s.decision.tolerance.absolute);
  });
});

describe('sparseSpaces on a bare matrix', () => {
  /** A = U·diag(σ)·Vᵀ with random orthogonal U, V (Householder reflections). */
  function withSingularValues(sigma: number[], m: number, n: number, seed: number): SparseMatrix {
    const g = rng(seed);
    const orth = (k: number) => {
      const Q = Matrix.eye(k, k);
      for (let r = 0; r < 3; r++) {
        const v = Matrix.columnVector(Array.from({ length: k }, () => g() - 0.5));
        const h = Matrix.eye(k, k).sub(v.mmul(v.transpose()).mul(2 / v.norm() ** 2));
        Q.mmul(h).to2DArray().forEach((row, i) => row.forEach((x, j) => Q.set(i, j, x)));
      }
      return Q;
    };
    const U = orth(m);
    const V = orth(n);
    const S = new Matrix(m, n);
    sigma.forEach((s, i) => S.set(i, i, s));
    const A = U.mmul(S).mmul(V.transpose());
    const B = new SparseBuilder(n);
    for (let i = 0; i < m; i++) {
      const r = B.newRow();
      for (let j = 0; j < n; j++) B.add(r, j, A.get(i, j));
    }
    return B.build(false);
  }

  it('finds a small kept singular value between the cut and the inertia shift, and the dropped one', () => {
    // σ = 1, 0.5, 0.2, 1e-5 (kept: above 1e-9, below the inertia shift 1e-3), 1e-12 (dropped), 0, 0
    const sigma = [1, 0.5, 0.3, 0.2, 0.1, 1e-5, 1e-12];
    const R = withSingularValues(sigma, 9, 7, 3);
    const s = sparseSpaces(R, OPTIONS);
    expect(s.decision.rank).toBe(6);
    expect(s.decision.sigmaMax).toBeCloseTo(1, 12);
    expect(s.decision.gap.kept! / 1e-5).toBeCloseTo(1, 6);
    expect(Math.abs(s.decision.gap.dropped! - 1e-12)).toBeLessThan(1e-14); // absolute accuracy ~ε·σ_max
    expect(s.flexBasis().vectors).toHaveLength(1);
    expect(s.selfStressBasis().vectors).toHaveLength(3);
  });

  it('a caller-given σ_max (a Bloch block cut at the whole supercell\'s tolerance)', () => {
    const sc = buildSupercell(buildGallery('gallery:kagome'), [1, 6], parseBoundary('x=twist:0.3,y=free'));
    const R = rigidityMatrix(sc);
    const own = sparseSpaces(R, OPTIONS);
    const s = sparseSpaces(R, { ...OPTIONS, sigmaMax: 2 * own.decision.sigmaMax });
    expect(s.decision.sigmaMax).toBe(2 * own.decision.sigmaMax);
    expect(s.decision.tolerance.absolute).toBeCloseTo(2e-9 * own.decision.sigmaMax, 20);
    expect(s.decision.rank).toBe(own.decision.rank);
    expect(s.gapNote).toMatch(/given by the caller/);
  });

  it('a matrix with no bars or no nonzero entry: every σ is 0', () => {
    const empty = new SparseBuilder(4).build(false);
    const s = sparseSpaces(empty, OPTIONS);
    expect(s.decision.rank).toBe(0);
    expect(s.flexBasis().vectors).toHaveLength(4);
    expect(s.selfStressBasis().vectors).toHaveLength(0);
  });
});

describe('memory, progress and cancellation', () => {
  const sc = buildSupercell(buildGallery('gallery:kagome'), [6, 6], parseBoundary('free'));
  const R = rigidityMatrix(sc);

  it('estimates the band before allocating and names a size that would fit', () => {
    const plan = sparsePlan(R);
    expect(plan.bandwidth.flexes).toBeGreaterThan(0);
    expect(plan.bandwidth.flexes).toBeLessThan(R.cols / 3);
    let err: unknown;
    try {
      sparseSolver(sc, R, { ...OPTIONS, memoryLimit: 20_000 });
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(TooLargeError);
    const t = err as TooLargeError;
    expect(t.bytesAllowed).toBe(20_000);
    expect(t.bytesNeeded).toBeGreaterThan(20_000);
    expect(t.message).toMatch(/half-bandwidth/);
    expect(t.message).toMatch(/about \d+x\d+ would fit/);
  });

  it('reports progress by stage and stops on an aborted signal', () => {
    const stages = new Set<string>();
    sparseSolver(sc, R, { ...OPTIONS, onProgress: (p) => stages.add(p.stage.replace(/\d+/g, '#')) });
    expect([...stages].some((s) => s.startsWith('inertia count'))).toBe(true);
    // the subspace iteration runs when the inertia count finds eigenvalues below the shift; the
    // Lanczos for the smallest kept σ runs in any case
    expect([...stages].some((s) => s.startsWith('subspace iteration') || s.startsWith('Lanczos for the smallest'))).toBe(true);
    const ac = new AbortController();
    ac.abort();
    expect(() => sparseSolver(sc, R, { ...OPTIONS, signal: ac.signal })).toThrow(CancelledError);
    // cancelling from inside a progress callback stops the run at the next check
    const ac2 = new AbortController();
    expect(() => sparseSolver(sc, R, { ...OPTIONS, signal: ac2.signal, onProgress: (p) => /^(subspace|Lanczos for the smallest)/.test(p.stage) && ac2.abort() })).toThrow(CancelledError);
  });
});

// σ_max of the sparse path: a Lanczos estimate from below that settles to 1e-3 relative, and a
// proved upper bound (‖A‖₂² ≤ max row sum of |A|ᵀ|A|, Gershgorin; common practice) for the
// rounding terms. Checked against the dense SVD where the top of the spectrum is a dense band
// (a 12×12 open kagome: 864 columns, hundreds of σ within a few % of σ_max) and on random
// sparse matrices, real and complex.
describe('σ_max: the Lanczos estimate and the upper bound', () => {
  it.each(['gallery:kagome', 'gallery:twisted-kagome?twist=15'])('%s 12×12 open: estimate within 1e-3 below the dense σ_max, bound above it', (spec) => {
    const sc = buildSupercell(buildGallery(spec), [12, 12], parseBoundary('free'));
    const R = rigidityMatrix(sc);
    const d = denseSolver(sc, R, OPTIONS).decision.sigmaMax;
    const s = sparseSpaces(R, OPTIONS).decision.sigmaMax;
    expect(s).toBeLessThanOrEqual(d * (1 + 1e-12));
    expect(s).toBeGreaterThan(d * (1 - 1e-3));
    const bound = sigmaMaxUpperBound(R);
    expect(bound).toBeGreaterThanOrEqual(d * (1 - 1e-12));
    expect(bound).toBeLessThan(2 * d);
  });

  it('random sparse matrices, real and complex: the bound is never below the largest singular value', () => {
    const rand = rng(17);
    for (let trial = 0; trial < 40; trial++) {
      const rows = 5 + Math.floor(rand() * 30);
      const cols = 5 + Math.floor(rand() * 30);
      const complex = trial % 2 === 1;
      const A = randomSparse(rand, rows, cols, 0.2, complex);
      // σ_max² = the largest eigenvalue of the real symmetric embedding of AᴴA
      const n = cols;
      const G = Matrix.zeros(2 * n, 2 * n);
      for (let i = 0; i < n; i++)
        for (let j = 0; j < n; j++) {
          let re = 0;
          let im = 0;
          for (let r = 0; r < rows; r++) {
            const [ar, ai] = entry(A, r, i);
            const [br, bi] = entry(A, r, j);
            re += ar * br + ai * bi;
            im += ar * bi - ai * br;
          }
          G.set(i, j, re);
          G.set(n + i, n + j, re);
          G.set(i, n + j, -im);
          G.set(n + i, j, im);
        }
      const top = Math.sqrt(Math.max(0, ...new EigenvalueDecomposition(G).realEigenvalues));
      expect(sigmaMaxUpperBound(A)).toBeGreaterThanOrEqual(top * (1 - 1e-12));
    }
  });
});

// The Lanczos step's product Aᴴ(A v) in one pass over A (sparse.ts gramMatVecInto): the same
// sums in the same order as the two products through conjugateTranspose, so equal bit for bit;
// on rigidity matrices (real open, complex twisted-phase) and random ones with rows of many
// entries, and against a dense product to rounding.
describe('Aᴴ(A v) in one pass', () => {
  const twoProducts = (A: SparseMatrix, vr: Float64Array, vi: Float64Array | null) => {
    const AH = conjugateTranspose(A);
    const y = { re: new Float64Array(A.rows), im: vi ? new Float64Array(A.rows) : null };
    const w = { re: new Float64Array(A.cols), im: vi ? new Float64Array(A.cols) : null };
    sparseMatVecInto(A, vr, vi, y.re, y.im);
    sparseMatVecInto(AH, y.re, y.im, w.re, w.im);
    return w;
  };
  const onePass = (A: SparseMatrix, vr: Float64Array, vi: Float64Array | null) => {
    // buffers full of other numbers: the product overwrites them
    const w = { re: new Float64Array(A.cols).fill(7), im: vi ? new Float64Array(A.cols).fill(-3) : null };
    gramMatVecInto(A, vr, vi, w.re, w.im);
    return w;
  };
  const vectors = (n: number, complex: boolean, seed: number) => {
    const rand = rng(seed);
    return { vr: Float64Array.from({ length: n }, () => rand() - 0.5), vi: complex ? Float64Array.from({ length: n }, () => rand() - 0.5) : null };
  };

  it.each([
    ['gallery:twisted-kagome?twist=15', 'free'],
    ['gallery:kagome', 'x=twist:0.3,y=free'],
    ['gallery:square', 'left=pinned,right=free,y=twist:0.25'],
  ])('%s (%s), 10×12: R·Rᴴ and Rᴴ·R', (spec, bc) => {
    const R = rigidityMatrix(buildSupercell(buildGallery(spec), [10, 12], parseBoundary(bc)));
    for (const A of [R, conjugateTranspose(R)]) {
      const { vr, vi } = vectors(A.cols, A.im !== null, 5);
      const a = twoProducts(A, vr, vi);
      const b = onePass(A, vr, vi);
      expect(Array.from(b.re)).toEqual(Array.from(a.re));
      if (A.im) expect(Array.from(b.im!)).toEqual(Array.from(a.im!));
      else expect(b.im).toBeNull();
    }
  });

  it('random matrices with dense rows, real and complex, equal the two products and a dense AᴴA v to rounding', () => {
    const rand = rng(23);
    for (let trial = 0; trial < 20; trial++) {
      const rows = 10 + Math.floor(rand() * 30);
      const cols = 10 + Math.floor(rand() * 30);
      const complex = trial % 2 === 1;
      const A = randomSparse(rand, rows, cols, 0.5, complex);
      const { vr, vi } = vectors(cols, complex, trial);
      const one = onePass(A, vr, vi);
      const two = twoProducts(A, vr, vi);
      expect(Array.from(one.re)).toEqual(Array.from(two.re));
      if (complex) expect(Array.from(one.im!)).toEqual(Array.from(two.im!));
      // Σ_r conj(a_rk) (Σ_j a_rj v_j), entry by entry
      for (let k = 0; k < cols; k++) {
        let re = 0;
        let im = 0;
        for (let r = 0; r < rows; r++) {
          let tr = 0;
          let ti = 0;
          for (let j = 0; j < cols; j++) {
            const [ar, ai] = entry(A, r, j);
            const xr = vr[j];
            const xi = vi ? vi[j] : 0;
            tr += ar * xr - ai * xi;
            ti += ar * xi + ai * xr;
          }
          const [cr, ci] = entry(A, r, k);
          re += cr * tr + ci * ti;
          im += cr * ti - ci * tr;
        }
        expect(Math.abs(one.re[k] - re)).toBeLessThan(1e-12 * (1 + Math.abs(re)) * rows * cols);
        if (complex) expect(Math.abs(one.im![k] - im)).toBeLessThan(1e-12 * (1 + Math.abs(im)) * rows * cols);
      }
    }
  });

  it('refuses a complex matrix with real vectors', () => {
    const R = rigidityMatrix(buildSupercell(buildGallery('gallery:kagome'), [3, 3], parseBoundary('x=twist:0.3,y=free')));
    expect(R.im).not.toBeNull();
    expect(() => gramMatVecInto(R, new Float64Array(R.cols), null, new Float64Array(R.cols), null)).toThrow(/complex matrix needs complex vectors/);
  });
});

/** A random rows×cols matrix, each entry present with probability `density`, parts uniform in [−2, 2). */
function randomSparse(rand: () => number, rows: number, cols: number, density: number, complex: boolean): SparseMatrix {
  const b = new SparseBuilder(cols);
  for (let r = 0; r < rows; r++) {
    b.newRow();
    for (let c = 0; c < cols; c++) if (rand() < density) b.add(r, c, rand() * 4 - 2, complex ? rand() * 4 - 2 : 0);
  }
  return b.build(complex);
}

function entry(A: SparseMatrix, r: number, c: number): [number, number] {
  for (let k = A.rowPtr[r]; k < A.rowPtr[r + 1]; k++) if (A.colIdx[k] === c) return [A.re[k], A.im ? A.im[k] : 0];
  return [0, 0];
}
