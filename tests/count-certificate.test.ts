/**
 * The sparse count certificate (src/linalg/count-certificate.ts) and what the sparse solver does
 * when it cannot be met: retry at lower shifts, fall back to the dense path, or flag the count.
 *
 * Test matrices are built with exactly known singular values: a diagonal D = diag(σ) turned by
 * Givens rotations on neighbouring index pairs (orthogonal, so the σ are D's to rounding, and the
 * matrix stays banded, like a rigidity matrix numbered by cells).
 */
import { describe, expect, it } from 'vitest';
import { count } from '../src/analysis.js';
import { denseFallback } from '../src/flex/solve-dense.js';
import { sparseSpaces } from '../src/flex/solve-sparse.js';
import { buildGallery } from '../src/framework/gallery.js';
import { parseFramework } from '../src/framework/validate.js';
import type { Block } from '../src/linalg/block.js';
import { certifyCount } from '../src/linalg/count-certificate.js';
import { flagDecision } from '../src/linalg/rank.js';
import { conjugateTranspose, SparseBuilder, type SparseMatrix } from '../src/linalg/sparse.js';
import { rigidityMatrix } from '../src/supercell/rigidity.js';
import { rng } from './helpers.js';

const OPTIONS = { relative: 1e-9, memoryLimit: 1.5 * 1024 ** 3 };

/** Dense row-major m×n matrix diag(σ) rotated by `sweeps` passes of random Givens rotations on both sides. */
function banded(sigma: readonly number[], m: number, n: number, seed: number, sweeps = 2): SparseMatrix {
  const A = Array.from({ length: m }, (_, i) => Float64Array.from({ length: n }, (_, j) => (i === j && i < sigma.length ? sigma[i] : 0)));
  const g = rng(seed);
  for (let s = 0; s < sweeps; s++) {
    for (let i = 0; i + 1 < m; i++) {
      const t = 2 * Math.PI * g();
      const c = Math.cos(t);
      const d = Math.sin(t);
      for (let j = 0; j < n; j++) {
        const a = A[i][j];
        const b = A[i + 1][j];
        A[i][j] = c * a - d * b;
        A[i + 1][j] = d * a + c * b;
      }
    }
    for (let j = 0; j + 1 < n; j++) {
      const t = 2 * Math.PI * g();
      const c = Math.cos(t);
      const d = Math.sin(t);
      for (let i = 0; i < m; i++) {
        const a = A[i][j];
        const b = A[i][j + 1];
        A[i][j] = c * a - d * b;
        A[i][j + 1] = d * a + c * b;
      }
    }
  }
  const B = new SparseBuilder(n);
  for (let i = 0; i < m; i++) {
    const r = B.newRow();
    for (let j = 0; j < n; j++) if (A[i][j] !== 0) B.add(r, j, A[i][j]);
  }
  return B.build(false);
}

/** Unit vectors e_0 … e_{k−1} as a block of length n. */
function units(n: number, k: number): Block {
  const re = Array.from({ length: k }, (_, j) => {
    const v = new Float64Array(n);
    v[j] = 1;
    return v;
  });
  return { len: n, re, im: null };
}

/** The diagonal matrix diag(σ) (n×n), whose right singular vectors are the unit vectors. */
function diagonal(sigma: readonly number[]): SparseMatrix {
  const B = new SparseBuilder(sigma.length);
  sigma.forEach((s, i) => B.add(B.newRow(), i, s));
  return B.build(false);
}

describe('certifyCount: inertia count, proved null vectors, residual-bounded values between', () => {
  // σ_max = 1, cut 1e-9, τ = 1e-6 (√τ = 1e-3)
  const sigma = [0, 1e-13, 1e-6, 1e-5, 0.5, 1];
  const A = diagonal(sigma);
  const AH = conjugateTranspose(A);
  const base = { A, AH, X: units(6, 6), sigma, tol: 1e-9, tau: 1e-6, inertiaError: 1e-14, sigmaMax: 1 };

  it('certifies when the null vectors and the proved values add up to the inertia count', () => {
    const c = certifyCount({ ...base, inertia: 4 });
    expect(c.certified).toBe(true);
    expect(c.provenNull).toBe(2);
    expect(c.provenAbove).toBe(2);
    expect(c.lowestAbove!).toBeGreaterThan(1e-9);
    expect(c.lowestAbove!).toBeLessThanOrEqual(1e-6);
  });

  it('refuses when the inertia count says more lie below τ than the evidence accounts for', () => {
    // the Ritz values 0.5 and 1 are not below √τ: nothing can make up a count of 5
    const c = certifyCount({ ...base, inertia: 5 });
    expect(c.certified).toBe(false);
    expect(c.reasons.join(' ')).toMatch(/not resolved/);
  });

  it('refuses when more vectors are null than the inertia count allows (a wrong inertia count)', () => {
    const c = certifyCount({ ...base, inertia: 1 });
    expect(c.certified).toBe(false);
    expect(c.reasons.join(' ')).toMatch(/inertia count is off/);
  });

  it('refuses a value between the cut and √τ whose residual is too large to place it', () => {
    // a vector mixing the 1e-6 and 0.5 directions: its Ritz value is above the cut but its
    // residual (≈ 0.5·0.01) is far larger than the distance to √τ
    const X = units(6, 6);
    X.re[2] = new Float64Array(6);
    X.re[2][2] = Math.sqrt(1 - 1e-4);
    X.re[2][4] = 1e-2;
    const s = [0, 1e-13, Math.hypot(1e-6 * Math.sqrt(1 - 1e-4), 0.5e-2), 1e-5, 0.5, 1].sort((a, b) => a - b);
    const c = certifyCount({ ...base, X, sigma: s, inertia: 4 });
    expect(c.certified).toBe(false);
  });
});

describe('sparseSpaces on matrices with known singular values: certified or flagged', () => {
  it('20 exact zeros and a cluster of 30 just below √τ beside 30 just above: certified, the cluster proved by its residuals', () => {
    const n = 300;
    const sigma: number[] = [];
    for (let i = 0; i < n; i++) sigma.push(i < 20 ? 0 : i < 50 ? 0.9e-3 * (1 + 1e-4 * i) : i < 80 ? 1.1e-3 * (1 + 1e-4 * i) : 0.01 + i / n);
    const R = banded(sigma, n + 10, n, 7);
    const s = sparseSpaces(R, OPTIONS);
    const sigmaMax = Math.max(...sigma);
    const truth = sigma.filter((v) => v > 1e-9 * sigmaMax).length;
    expect(s.status.certified).toBe(true);
    expect(s.decision.rank).toBe(truth);
    expect(s.gapNote).toMatch(/20 orthonormal vectors .* and 30 singular values proved/);
  });

  it('values within 2× of the cut: the count matches, and the decision is flagged as near the cut', () => {
    const n = 240;
    const sigma = Array.from({ length: n }, (_, i) => (i < 5 ? 0 : i === 5 ? 1.6e-9 : i === 6 ? 0.6e-9 : 0.05 + i / n));
    const R = banded(sigma, n, n, 11);
    const s = sparseSpaces(R, OPTIONS);
    expect(s.decision.rank).toBe(sigma.filter((v) => v > 1e-9 * Math.max(...sigma)).length);
    const flagged = flagDecision(s.decision, s.status.certified, s.status.reasons);
    expect(flagged.decision.gap.ambiguous).toBe(true);
    expect(flagged.reasons.join(' ')).toMatch(/within 100× above the cut/);
    expect(flagged.reasons.join(' ')).toMatch(/within 100× below the cut/);
  });
});

describe('the sparse solver when its evidence cannot be matched', () => {
  // An invented test framework (three unconnected sublattices: a bare grid, a braced frame, and a
  // bead on a slightly bent link); the dense SVD gives 33 flexes and 64 self-stresses at 10×10
  // free (checked with numpy's SVD when this case was found).
  const bead = parseFramework(
    JSON.stringify({
      name: 'bead on a bent link (invented for testing)',
      lattice: [[1, 0], [0, 1]],
      joints: [
        { id: 'G', at: [0, 0] },
        { id: 'F', at: [0.5, 0.5] },
        { id: 'B', at: [1.0, 0.5028] },
      ],
      bars: [
        { from: 'G', to: 'G', shift: [1, 0] },
        { from: 'G', to: 'G', shift: [0, 1] },
        { from: 'F', to: 'F', shift: [1, 0] },
        { from: 'F', to: 'F', shift: [0, 1] },
        { from: 'F', to: 'F', shift: [1, 1] },
        { from: 'F', to: 'B', shift: [0, 0] },
        { from: 'B', to: 'F', shift: [1, 0] },
      ],
    }),
  );
  const { supercell, analysis: dense } = count({ framework: bead, cells: [10, 10], boundary: 'free', solver: 'dense' });
  const R = rigidityMatrix(supercell);

  it('the default sparse path certifies the dense count', () => {
    const { analysis } = count({ framework: bead, cells: [10, 10], boundary: 'free', solver: 'sparse' });
    expect(dense.flexes).toBe(33);
    expect(analysis.flexes).toBe(dense.flexes);
    expect(analysis.selfStresses).toBe(dense.selfStresses);
    expect(analysis.status.certified).toBe(true);
    expect(analysis.gap.ambiguous).toBe(false);
  });

  it('one sweep is not enough: without a fallback the count is returned flagged, with its reason', () => {
    const s = sparseSpaces(R, { ...OPTIONS, maxSweeps: 1 });
    expect(s.status.certified).toBe(false);
    expect(s.status.reasons.join(' ')).toMatch(/could not be proved|not resolved/);
  });

  it('one sweep is not enough: with the dense fallback the count is the dense one, and says so', () => {
    const s = sparseSpaces(R, { ...OPTIONS, maxSweeps: 1, denseFallback: denseFallback(OPTIONS) });
    expect(s.solver).toBe('dense');
    expect(s.status.fallback?.from).toBe('sparse');
    expect(s.status.certified).toBe(true);
    expect(R.cols - s.decision.rank).toBe(dense.flexes);
  });
});

describe("gap: 'bound' spares the Lanczos run and reports a certified lower bound", () => {
  it.each([
    ['gallery:kagome', 'free'],
    ['gallery:twisted-kagome?twist=15', 'free'],
    ['gallery:square', 'pinned'],
  ])('%s %s at 12×12: same counts, kept bound ≤ measured kept σ', (spec, bc) => {
    const framework = buildGallery(spec);
    const value = count({ framework, cells: [12, 12], boundary: bc, solver: 'sparse' }).analysis;
    const bound = count({ framework, cells: [12, 12], boundary: bc, solver: 'sparse', gap: 'bound' }).analysis;
    expect(bound.flexes).toBe(value.flexes);
    expect(bound.selfStresses).toBe(value.selfStresses);
    expect(value.status.keptSigma).toBe('measured');
    expect(bound.status.certified).toBe(true);
    expect(bound.status.keptSigma).toBe('lower-bound');
    expect(bound.gap.kept!).toBeLessThanOrEqual(value.gap.kept! * (1 + 1e-12));
    expect(bound.gap.kept!).toBeGreaterThan(bound.tolerance.absolute);
  });
});
