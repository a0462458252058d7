/**
 * The dense reference path (ml-matrix SVD, exact real embedding for complex matrices) against
 * an independent general-purpose library: svd-js (a JavaScript port of Golub & Reinsch,
 * "Singular value decomposition and least squares solutions", Numer. Math. 14, 403–420, 1970).
 */
import { SVD } from 'svd-js';
import { describe, expect, it } from 'vitest';
import { complexOrthonormalSpan, cdot, cnorm } from '../src/linalg/complex.js';
import { nullSpace, singularValues } from '../src/linalg/dense.js';
import { decideRank } from '../src/linalg/rank.js';
import { SparseBuilder, sparseMatVec, type SparseMatrix } from '../src/linalg/sparse.js';
import { rng } from './helpers.js';

function sparseOf(rows: number[][], imag?: number[][]): SparseMatrix {
  const B = new SparseBuilder(rows[0].length);
  rows.forEach((row, i) => {
    const r = B.newRow();
    row.forEach((v, j) => {
      const w = imag ? imag[i][j] : 0;
      if (v !== 0 || w !== 0) B.add(r, j, v, w);
    });
  });
  return B.build(!!imag);
}

/** A random m×n matrix of rank r (product of m×r and r×n Gaussian-like factors). */
function lowRank(seed: number, m: number, n: number, r: number): number[][] {
  const g = rng(seed);
  const L = Array.from({ length: m }, () => Array.from({ length: r }, () => g() * 2 - 1));
  const Rt = Array.from({ length: r }, () => Array.from({ length: n }, () => g() * 2 - 1));
  return L.map((row) => Array.from({ length: n }, (_, j) => row.reduce((s, v, k) => s + v * Rt[k][j], 0)));
}

function referenceSigma(a: number[][]): number[] {
  const tall = a.length >= a[0].length ? a : a[0].map((_, j) => a.map((row) => row[j]));
  return SVD(tall, false, false).q.slice().sort((x, y) => y - x);
}

describe('singular values and rank against svd-js', () => {
  it.each([
    [1, 12, 7, 7],
    [2, 7, 12, 7],
    [3, 15, 15, 9],
    [4, 20, 11, 3],
    [5, 9, 30, 1],
  ])('seed %i: %i×%i of rank %i', (seed, m, n, r) => {
    const a = lowRank(seed, m, n, r);
    const ours = singularValues(sparseOf(a));
    const ref = referenceSigma(a);
    expect(ours.length).toBe(Math.min(m, n));
    for (let k = 0; k < ref.length; k++) expect(ours[k]).toBeCloseTo(ref[k], 10);
    const d = decideRank(ours, m, n);
    expect(d.rank).toBe(r);
    expect(decideRank(ref, m, n).rank).toBe(r);
    // the gap around the cut is wide for an exactly rank-deficient matrix
    if (r < Math.min(m, n)) expect(d.gap.ratio === null || d.gap.ratio > 1e8).toBe(true);
  });

  it('a complex matrix: the real embedding gives the same singular values as the Hermitian square root', () => {
    // σ(A + iB) are the square roots of the eigenvalues of MᴴM; the embedding [[A,−B],[B,A]]
    // has each of them twice, which svd-js confirms on the embedded matrix.
    const g = rng(9);
    const m = 8;
    const n = 6;
    const A = lowRank(10, m, n, 4);
    const Bm = A.map((row) => row.map(() => 0));
    // B = A·S for a random real S keeps the complex rank at most 4
    const S = Array.from({ length: n }, () => Array.from({ length: n }, () => g() - 0.5));
    for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) Bm[i][j] = A[i].reduce((s, v, k) => s + v * S[k][j], 0);
    const ours = singularValues(sparseOf(A, Bm));
    const E = [...A.map((row, i) => [...row, ...Bm[i].map((v) => -v)]), ...A.map((row, i) => [...Bm[i], ...row])];
    const ref = referenceSigma(E);
    for (let k = 0; k < ours.length; k++) {
      expect(ours[k]).toBeCloseTo(ref[2 * k], 10);
      expect(ours[k]).toBeCloseTo(ref[2 * k + 1], 10);
    }
    expect(decideRank(ours, m, n).rank).toBe(4);
  });

  it('null space vectors are orthonormal and annihilated, real and complex', () => {
    const a = lowRank(21, 6, 10, 4);
    const R = sparseOf(a);
    const basis = nullSpace(R, 6);
    expect(basis.vectors).toHaveLength(6);
    for (const v of basis.vectors) {
      const y = sparseMatVec(R, v.re, v.im);
      expect(Math.hypot(...y.re, ...y.im)).toBeLessThan(1e-12);
      expect(cnorm(v)).toBeCloseTo(1, 12);
    }
    const g = rng(4);
    const im = a.map((row) => row.map(() => g() - 0.5));
    const C = sparseOf(a, im.map((row, i) => row.map((v, j) => (j < 4 ? v : 0) + 0 * a[i][j])));
    const k = 10 - decideRank(singularValues(C), 6, 10).rank;
    const cb = nullSpace(C, k);
    expect(cb.real).toBe(false);
    expect(cb.vectors).toHaveLength(k);
    for (let i = 0; i < cb.vectors.length; i++) {
      const y = sparseMatVec(C, cb.vectors[i].re, cb.vectors[i].im);
      expect(Math.hypot(...y.re, ...y.im)).toBeLessThan(1e-12);
      for (let j = 0; j < i; j++) expect(Math.hypot(...cdot(cb.vectors[j], cb.vectors[i]))).toBeLessThan(1e-12);
    }
  });

  it('complex Gram–Schmidt spans multiples by i once', () => {
    const v = { re: Float64Array.from([1, 2, 0]), im: Float64Array.from([0, 1, 1]) };
    const iv = { re: v.im.map((x) => -x), im: Float64Array.from(v.re) };
    const w = { re: Float64Array.from([0, 0, 1]), im: Float64Array.from([0, 0, 0]) };
    expect(complexOrthonormalSpan([v, iv, w])).toHaveLength(2);
  });
});

describe('rank decision rule', () => {
  it('reports the values on both sides of the cut and flags a narrow gap', () => {
    const d = decideRank([1, 0.5, 1e-3, 1e-12], 4, 6, 1e-9);
    expect(d.rank).toBe(3);
    expect(d.tolerance.absolute).toBe(1e-9);
    expect(d.gap.kept).toBe(1e-3);
    expect(d.gap.dropped).toBe(1e-12);
    expect(d.gap.ratio).toBeCloseTo(1e9, 0);
    expect(d.gap.ambiguous).toBe(false);
    const narrow = decideRank([1, 2e-9, 5e-10], 3, 3, 1e-9);
    expect(narrow.rank).toBe(2);
    expect(narrow.gap.ratio).toBeCloseTo(4, 10);
    expect(narrow.gap.ambiguous).toBe(true);
  });
  it('structural zeros of a wide matrix are dropped values of size 0', () => {
    const d = decideRank([2, 1], 2, 5);
    expect(d.rank).toBe(2);
    expect(d.gap.dropped).toBe(0);
    expect(d.gap.ratio).toBeNull();
    expect(decideRank([2, 1], 2, 2).gap.dropped).toBeNull();
  });
});
