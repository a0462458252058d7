/**
 * Small numerical building blocks: the seeded generator (src/linalg/random.ts) and Sturm
 * bisection for symmetric tridiagonal matrices (src/linalg/tridiagonal.ts), Cholesky QR twice
 * (src/linalg/block.ts).
 */
import { describe, expect, it } from 'vitest';
import { norm2, orthonormalityDefect, type Block } from '../src/linalg/block.js';
import { cholQr2 } from '../src/linalg/cholesky-qr.js';
import { hermitianEigen } from '../src/linalg/hermitian-eig.js';
import { seededUniform } from '../src/linalg/random.js';
import { gershgorinBounds, sturmCount, tridiagonalEigenvalue, tridiagonalEigenvalues, tridiagonalMax } from '../src/linalg/tridiagonal.js';
import { rng as testRng } from './helpers.js';

const EPS = 2.220446049250313e-16;

describe('seededUniform', () => {
  it('is deterministic: the same seed repeats the sequence, other seeds differ', () => {
    const a = seededUniform(42);
    const b = seededUniform(42);
    const c = seededUniform(43);
    const xa = Array.from({ length: 1000 }, a);
    const xb = Array.from({ length: 1000 }, b);
    const xc = Array.from({ length: 1000 }, c);
    expect(xa).toEqual(xb);
    expect(xa.filter((x, i) => x === xc[i]).length).toBeLessThan(5);
  });

  it('gives the same numbers as the mulberry32 copy in tests/helpers.ts; [lo, hi) is lo + (hi − lo)·u exactly', () => {
    const u = seededUniform(7);
    const h = testRng(7);
    const centred = seededUniform(7, -0.5, 0.5);
    for (let k = 0; k < 200; k++) {
      const x = u();
      expect(x).toBe(h());
      expect(centred()).toBe(x - 0.5);
    }
  });

  it('is roughly uniform on [0, 1): mean, variance and ten equal bins within 5 standard errors', () => {
    const N = 200000;
    const g = seededUniform(2024);
    let sum = 0;
    let sum2 = 0;
    const bins = new Array(10).fill(0);
    let outside = 0;
    for (let k = 0; k < N; k++) {
      const x = g();
      if (!(x >= 0 && x < 1)) outside++;
      sum += x;
      sum2 += x * x;
      bins[Math.floor(10 * x)]++;
    }
    expect(outside).toBe(0);
    const mean = sum / N;
    const variance = sum2 / N - mean * mean;
    // uniform on [0, 1): mean 1/2, variance 1/12, fourth central moment 1/80 (common practice)
    expect(Math.abs(mean - 0.5)).toBeLessThan(5 * Math.sqrt(1 / 12 / N));
    expect(Math.abs(variance - 1 / 12)).toBeLessThan(5 * Math.sqrt((1 / 80 - 1 / 144) / N));
    const binSd = Math.sqrt(N * 0.1 * 0.9);
    for (const c of bins) expect(Math.abs(c - N / 10)).toBeLessThan(5 * binSd);
  });

  it('refuses a non-finite seed or an empty range', () => {
    expect(() => seededUniform(NaN)).toThrow(/seed must be a finite number/);
    expect(() => seededUniform(1, 2, 2)).toThrow(/need finite lo < hi/);
  });
});

/** The tridiagonal with 2 on the diagonal and −1 off it: eigenvalues 2 − 2cos(kπ/(n+1)), k = 1..n (common practice). */
function laplacian(n: number): { diag: number[]; off: number[]; exact: number[] } {
  return {
    diag: Array(n).fill(2),
    off: Array(n - 1).fill(-1),
    exact: Array.from({ length: n }, (_, k) => 2 - 2 * Math.cos(((k + 1) * Math.PI) / (n + 1))),
  };
}

/** Eigenvalues of the dense symmetric matrix of (diag, off) by the Hermitian solver. */
function denseEigenvalues(diag: ArrayLike<number>, off: ArrayLike<number>): Float64Array {
  const n = diag.length;
  const re = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    re[i * n + i] = diag[i];
    if (i + 1 < n) re[i * n + i + 1] = re[(i + 1) * n + i] = off[i];
  }
  return hermitianEigen(re, null, n).values;
}

describe('tridiagonal bisection', () => {
  it.each([1, 2, 5, 50, 200])('2/−1 tridiagonal of order %i against the closed form', (n) => {
    const { diag, off, exact } = laplacian(n);
    const all = tridiagonalEigenvalues(diag, off);
    exact.forEach((l, k) => {
      expect(Math.abs(all[k] - l)).toBeLessThanOrEqual(8 * EPS * 4);
      expect(Math.abs(tridiagonalEigenvalue(diag, off, k) - l)).toBeLessThanOrEqual(8 * EPS * 4);
    });
    expect(Math.abs(tridiagonalMax(diag, off) - exact[n - 1])).toBeLessThanOrEqual(8 * EPS * 4);
  });

  it('Sturm counts step by one at each eigenvalue of the 2/−1 matrix', () => {
    const { diag, off, exact } = laplacian(30);
    expect(sturmCount(diag, off, -1)).toBe(0);
    expect(sturmCount(diag, off, 5)).toBe(30);
    for (let k = 0; k + 1 < exact.length; k++) expect(sturmCount(diag, off, 0.5 * (exact[k] + exact[k + 1]))).toBe(k + 1);
    const { lo, hi } = gershgorinBounds(diag, off);
    expect(lo).toBe(0);
    expect(hi).toBe(4);
  });

  it('a lower bound narrows the bracket without changing the answer; extra off-diagonal entries are ignored', () => {
    const { diag, off, exact } = laplacian(40);
    const top = exact[39];
    expect(Math.abs(tridiagonalMax(diag, off, top - 1e-3) - top)).toBeLessThanOrEqual(8 * EPS * 4);
    expect(Math.abs(tridiagonalMax(diag, [...off, 123, -9]) - top)).toBeLessThanOrEqual(8 * EPS * 4);
  });

  it('random, repeated and nearly repeated eigenvalues agree with the Hermitian solver', () => {
    const g = seededUniform(5, -1, 1);
    const n = 80;
    const diag = Array.from({ length: n }, g);
    const off = Array.from({ length: n - 1 }, g);
    // a zero in the middle of two equal halves: every eigenvalue exactly twice
    const half = 25;
    const hd = Array.from({ length: half }, g);
    const ho = Array.from({ length: half - 1 }, g);
    const twinDiag = [...hd, ...hd];
    const twinOff = [...ho, 0, ...ho];
    // Wilkinson's W21+ (diagonal |10 − i|, off-diagonal 1): pairs that agree to about 1e-14
    // (J. H. Wilkinson, The Algebraic Eigenvalue Problem, Oxford 1965, from memory)
    const wDiag = Array.from({ length: 21 }, (_, i) => Math.abs(10 - i));
    const wOff = Array(20).fill(1);
    for (const [d, o] of [
      [diag, off],
      [twinDiag, twinOff],
      [wDiag, wOff],
    ]) {
      const ours = tridiagonalEigenvalues(d, o);
      const dense = denseEigenvalues(d, o);
      const scale = Math.max(...d.map(Math.abs)) + 2 * Math.max(...o.map(Math.abs));
      ours.forEach((l, k) => expect(Math.abs(l - dense[k])).toBeLessThanOrEqual(10 * d.length * EPS * scale));
    }
    // the twins really are double under bisection
    const twins = tridiagonalEigenvalues(twinDiag, twinOff);
    for (let k = 0; k < 2 * half; k += 2) expect(twins[k + 1] - twins[k]).toBeLessThanOrEqual(4 * EPS * 4);
  });

  it('the zero matrix and 1×1', () => {
    expect(Array.from(tridiagonalEigenvalues([0, 0, 0], [0, 0]))).toEqual([0, 0, 0]);
    expect(tridiagonalMax([-2.5], [])).toBe(-2.5);
  });

  it('bad input is refused with the reason', () => {
    expect(() => tridiagonalEigenvalues([1, 2, 3], [1])).toThrow(/off-diagonal has length 1, needs at least 2/);
    expect(() => tridiagonalEigenvalue([1, 2], [1], 2)).toThrow(/k must be an integer in \[0, 1\]/);
    expect(() => tridiagonalMax([], [])).toThrow(/empty/);
    expect(() => sturmCount([1, NaN], [0], 0)).toThrow(/diag\[1\] is NaN/);
  });
});

// Cholesky QR twice (column kernels in src/linalg/block.ts) against the definition: the result
// is orthonormal to rounding, spans the same space (X₀ = Q·(QᴴX₀), the coefficients' residual to
// rounding), and R = QᴴX₀ is upper triangular with a positive diagonal. Column counts that are
// not multiples of the kernels' group widths (4 real, 2 complex), and graded columns (norms from
// 1 to 1e-5, condition ~1e5) beside well-conditioned ones.
describe('cholQr2', () => {
  const cases: [number, number, boolean, boolean][] = [
    [400, 13, false, false],
    [400, 13, true, false],
    [257, 10, false, true],
    [257, 11, true, true],
    [50, 1, false, false],
    [50, 2, true, false],
  ];
  it.each(cases)('%i×%i complex=%s graded=%s: orthonormal, same span, triangular coefficients', (n, k, complex, graded) => {
    const rand = seededUniform(1000 + n + k, -0.5, 0.5);
    const X0: Block = { len: n, re: [], im: complex ? [] : null };
    for (let j = 0; j < k; j++) {
      const s = graded ? 10 ** (-5 * (j / Math.max(1, k - 1))) : 1;
      X0.re.push(Float64Array.from({ length: n }, () => s * rand()));
      if (X0.im) X0.im.push(Float64Array.from({ length: n }, () => s * rand()));
    }
    const Q: Block = { len: n, re: X0.re.map((x) => x.slice()), im: X0.im ? X0.im.map((x) => x.slice()) : null };
    expect(cholQr2(Q)).toBe(true);
    expect(orthonormalityDefect(Q, k)).toBeLessThan(1e-13);
    // coefficients C = QᴴX₀ (k×k): lower triangle zero to rounding, diagonal real positive
    for (let b = 0; b < k; b++) {
      const resR = X0.re[b].slice();
      const resI = X0.im ? X0.im[b].slice() : null;
      const scale = norm2(X0.re[b], X0.im ? X0.im[b] : null);
      for (let a = 0; a < k; a++) {
        let cr = 0;
        let ci = 0;
        for (let i = 0; i < n; i++) {
          const qr = Q.re[a][i];
          const qi = Q.im ? Q.im[a][i] : 0;
          const xr = X0.re[b][i];
          const xi = X0.im ? X0.im[b][i] : 0;
          cr += qr * xr + qi * xi;
          ci += qr * xi - qi * xr;
        }
        if (a > b) expect(Math.hypot(cr, ci)).toBeLessThan(1e-12 * scale);
        if (a === b) {
          expect(cr).toBeGreaterThan(0);
          expect(Math.abs(ci)).toBeLessThan(1e-12 * scale);
        }
        for (let i = 0; i < n; i++) {
          const qr = Q.re[a][i];
          const qi = Q.im ? Q.im[a][i] : 0;
          resR[i] -= cr * qr - ci * qi;
          if (resI) resI[i] -= cr * qi + ci * qr;
        }
      }
      expect(norm2(resR, resI)).toBeLessThan(1e-12 * scale);
    }
  });

  it('reports a rank-deficient block instead of dividing by zero', () => {
    const x = Float64Array.from({ length: 30 }, (_, i) => Math.sin(i));
    const X: Block = { len: 30, re: [x.slice(), x.slice(), Float64Array.from({ length: 30 }, (_, i) => Math.cos(i))], im: null };
    expect(cholQr2(X)).toBe(false);
  });
});

// The seeded generator's bulk fill draws exactly the numbers single draws give, and continues
// the same sequence (start vectors, and so every iteration, stay as they were).
describe('seededUniform fill', () => {
  it('fill(a) equals a.length single draws, interleaved with calls', () => {
    const one = seededUniform(42, -0.5, 0.5);
    const bulk = seededUniform(42, -0.5, 0.5);
    const want = Array.from({ length: 1000 }, () => one());
    const a = new Float64Array(400);
    bulk.fill(a);
    const b = bulk();
    const c = new Float64Array(599);
    bulk.fill(c);
    expect([...a, b, ...c]).toEqual(want);
    expect(Math.min(...want)).toBeGreaterThanOrEqual(-0.5);
    expect(Math.max(...want)).toBeLessThan(0.5);
  });
});
