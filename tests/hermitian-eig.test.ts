/**
 * The dense Hermitian eigensolver (src/linalg/hermitian-eig.ts): residual and orthonormality
 * bounds of the size c·n·ε (the usual backward-error size of a unitary reduction; common
 * practice), repeated eigenvalues up to multiplicity 60 (the defect that made the former
 * real-embedding path in the classifier return 57 vectors), small closed forms, and a
 * cross-check against numpy.linalg.eigh (NumPy: Harris et al., "Array programming with NumPy",
 * Nature 585, 357–362 (2020)) when python3 with numpy is available.
 */
import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { hermitianEigen as classifierEigen } from '../src/flex/classify.js';
import { hermitianEigen } from '../src/linalg/hermitian-eig.js';
import { seededUniform } from '../src/linalg/random.js';

const EPS = 2.220446049250313e-16;
/** The constant c in the bounds c·n·ε. */
const C = 10;

interface Herm {
  re: Float64Array;
  im: Float64Array | null;
  n: number;
}

/** A random unitary (orthogonal when real) matrix: Gram–Schmidt, twice, on random columns. Columns q[j]. */
function randomUnitary(n: number, complex: boolean, seed: number): { re: Float64Array; im: Float64Array }[] {
  const rand = seededUniform(seed, -1, 1);
  const q: { re: Float64Array; im: Float64Array }[] = [];
  for (let j = 0; j < n; j++) {
    const a = new Float64Array(n);
    const b = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      a[i] = rand();
      b[i] = complex ? rand() : 0;
    }
    const s = removeSpan(a, b, q);
    for (let i = 0; i < n; i++) {
      a[i] /= s;
      b[i] /= s;
    }
    q.push({ re: a, im: b });
  }
  return q;
}

/** H = Q·diag(lambda)·Qᴴ for a random unitary Q. */
function withSpectrum(lambda: number[], complex: boolean, seed: number): Herm {
  const n = lambda.length;
  const q = randomUnitary(n, complex, seed);
  const re = new Float64Array(n * n);
  const im = new Float64Array(n * n);
  for (let k = 0; k < n; k++) {
    const { re: ur, im: ui } = q[k];
    const l = lambda[k];
    for (let i = 0; i < n; i++)
      for (let j = 0; j < n; j++) {
        // l · u_i · conj(u_j)
        re[i * n + j] += l * (ur[i] * ur[j] + ui[i] * ui[j]);
        im[i * n + j] += l * (ui[i] * ur[j] - ur[i] * ui[j]);
      }
  }
  return { re, im: complex ? im : null, n };
}

function frobenius(h: Herm): number {
  let s = 0;
  for (let k = 0; k < h.n * h.n; k++) s += h.re[k] ** 2 + (h.im ? h.im[k] ** 2 : 0);
  return Math.sqrt(s);
}

/** ‖HV − VΛ‖_F and ‖VᴴV − I‖_F. */
function quality(h: Herm, r: ReturnType<typeof hermitianEigen>): { residual: number; orth: number } {
  const { n } = h;
  const vi = r.vim ?? new Float64Array(n * n);
  let res = 0;
  for (let j = 0; j < n; j++)
    for (let i = 0; i < n; i++) {
      let sr = 0;
      let si = 0;
      for (let k = 0; k < n; k++) {
        const hr = h.re[i * n + k];
        const hi = h.im ? h.im[i * n + k] : 0;
        sr += hr * r.vre[k * n + j] - hi * vi[k * n + j];
        si += hr * vi[k * n + j] + hi * r.vre[k * n + j];
      }
      res += (sr - r.values[j] * r.vre[i * n + j]) ** 2 + (si - r.values[j] * vi[i * n + j]) ** 2;
    }
  let orth = 0;
  for (let a = 0; a < n; a++)
    for (let b = 0; b < n; b++) {
      let cr = 0;
      let ci = 0;
      for (let i = 0; i < n; i++) {
        const xr = r.vre[i * n + a];
        const xi = vi[i * n + a];
        const yr = r.vre[i * n + b];
        const yi = vi[i * n + b];
        cr += xr * yr + xi * yi;
        ci += xr * yi - xi * yr;
      }
      orth += (cr - (a === b ? 1 : 0)) ** 2 + ci * ci;
    }
  return { residual: Math.sqrt(res), orth: Math.sqrt(orth) };
}

/** Rank of the returned vectors by Gram–Schmidt with a norm cut of 1/2 (independent of the solver under test). */
function numericalRank(r: ReturnType<typeof hermitianEigen>, n: number): number {
  const vi = r.vim ?? new Float64Array(n * n);
  const basis: { re: Float64Array; im: Float64Array }[] = [];
  for (let j = 0; j < n; j++) {
    const a = new Float64Array(n);
    const b = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      a[i] = r.vre[i * n + j];
      b[i] = vi[i * n + j];
    }
    const s = removeSpan(a, b, basis);
    if (s < 0.5) continue;
    basis.push({ re: a.map((x) => x / s), im: b.map((x) => x / s) });
  }
  return basis.length;
}

function expectAccurate(h: Herm, lambda: number[] | null): ReturnType<typeof hermitianEigen> {
  const r = hermitianEigen(h.re, h.im, h.n);
  const norm = frobenius(h);
  const { residual, orth } = quality(h, r);
  expect(r.values.length).toBe(h.n);
  expect(r.vre.length).toBe(h.n * h.n);
  expect(r.vim === null).toBe(h.im === null);
  expect(residual).toBeLessThanOrEqual(C * h.n * EPS * Math.max(norm, Number.MIN_VALUE));
  expect(orth).toBeLessThanOrEqual(C * h.n * EPS);
  for (let j = 1; j < h.n; j++) expect(r.values[j]).toBeGreaterThanOrEqual(r.values[j - 1]);
  if (lambda) {
    const sorted = lambda.slice().sort((a, b) => a - b);
    // Weyl: the eigenvalues move by at most the norm of the backward error
    sorted.forEach((l, j) => expect(Math.abs(r.values[j] - l)).toBeLessThanOrEqual(C * h.n * EPS * norm));
  }
  return r;
}

/** 80 eigenvalues: 1 sixty times, then 20 distinct ones. */
function multiplicity60(): number[] {
  return Array.from({ length: 80 }, (_, k) => (k < 60 ? 1 : 2 + 0.1 * k));
}

describe('hermitianEigen: repeated eigenvalues keep every eigenvector', () => {
  it.each([
    ['complex', true],
    ['real', false],
  ])('%s, an eigenvalue of multiplicity 60 among 80: 80 orthonormal vectors', (_, complex) => {
    for (const seed of [1, 2, 3]) {
      const lambda = multiplicity60();
      const h = withSpectrum(lambda, complex as boolean, seed);
      const r = expectAccurate(h, lambda);
      expect(numericalRank(r, h.n)).toBe(80);
    }
  });

  it('the classifier wrapper returns all 80 (its former real-embedding path returned 77 here)', () => {
    const lambda = multiplicity60();
    const h = withSpectrum(lambda, true, 1);
    const e = classifierEigen(h.re, h.im, h.n);
    expect(e.vectors.length).toBe(80);
    expect(e.values.length).toBe(80);
    // as columns again: orthonormal with residual ~ε, so the eigenspace of 1 is spanned
    const vre = new Float64Array(80 * 80);
    const vim = new Float64Array(80 * 80);
    e.vectors.forEach((v, j) => v.re.forEach((x, i) => ((vre[i * 80 + j] = x), (vim[i * 80 + j] = v.im[i]))));
    const { residual, orth } = quality(h, { values: Float64Array.from(e.values), vre, vim });
    expect(residual).toBeLessThanOrEqual(C * 80 * EPS * frobenius(h));
    expect(orth).toBeLessThanOrEqual(C * 80 * EPS);
    expect(e.values.filter((l) => Math.abs(l - 1) < 1e-9).length).toBe(60);
  });

  it.each([
    ['complex', true],
    ['real', false],
  ])('%s, all eigenvalues equal', (_, complex) => {
    const lambda = Array.from({ length: 40 }, () => -2.5);
    expectAccurate(withSpectrum(lambda, complex as boolean, 4), lambda);
  });

  it.each([
    ['complex', 120, true],
    ['real', 150, false],
  ])('%s n = %i, tight clusters (gaps 1e-12) and multiplicities', (_, n, complex) => {
    const lambda: number[] = [];
    for (let k = 0; k < (n as number); k++) {
      const cluster = Math.floor(k / 10);
      lambda.push(cluster % 3 === 0 ? cluster : cluster + 1e-12 * (k % 10));
    }
    const h = withSpectrum(lambda, complex as boolean, 5);
    const r = expectAccurate(h, lambda);
    expect(numericalRank(r, h.n)).toBe(n);
  });
});

describe('hermitianEigen: small and special matrices', () => {
  it('0×0 gives empty results', () => {
    const r = hermitianEigen(new Float64Array(0), null, 0);
    expect(r.values.length).toBe(0);
    expect(r.vre.length).toBe(0);
  });

  it('1×1: the entry itself, vector 1 (the imaginary diagonal part is ignored)', () => {
    const r = hermitianEigen(Float64Array.of(-3.25), Float64Array.of(0.7), 1);
    expect(Array.from(r.values)).toEqual([-3.25]);
    expect(r.vre[0] ** 2 + r.vim![0] ** 2).toBeCloseTo(1, 15);
  });

  it('the zero matrix: eigenvalues 0 and an orthonormal basis', () => {
    for (const complex of [false, true]) {
      const n = 7;
      const h: Herm = { re: new Float64Array(n * n), im: complex ? new Float64Array(n * n) : null, n };
      const r = expectAccurate(h, Array(n).fill(0));
      expect(Array.from(r.values)).toEqual(Array(n).fill(0));
    }
  });

  it('a diagonal matrix: its entries sorted, unit coordinate vectors', () => {
    const diag = [3, -1, 0.5, 3, -7, 2];
    const n = diag.length;
    const re = new Float64Array(n * n);
    diag.forEach((x, i) => (re[i * n + i] = x));
    const r = hermitianEigen(re, null, n);
    expect(Array.from(r.values)).toEqual(diag.slice().sort((a, b) => a - b));
    for (let j = 0; j < n; j++) {
      const comps = Array.from({ length: n }, (_, i) => Math.abs(r.vre[i * n + j]));
      expect(comps.filter((x) => x === 1).length).toBe(1);
      expect(comps.filter((x) => x === 0).length).toBe(n - 1);
      expect(diag[comps.indexOf(1)]).toBe(r.values[j]);
    }
  });

  it('2×2 closed form: λ = (a+d)/2 ± √(((a−d)/2)² + |b|²), vector ∝ (b, λ − a) (common practice)', () => {
    const cases: [number, number, number, number][] = [
      [1, 4, 2, -3],
      [2, 2, 1e-8, 0],
      [-5, 1e3, 0, 7],
      [0, 0, 1, 1],
    ];
    for (const [a, d, br, bi] of cases) {
      const r = hermitianEigen(Float64Array.of(a, br, br, d), Float64Array.of(0, bi, -bi, 0), 2);
      const mid = (a + d) / 2;
      const rad = Math.sqrt(((a - d) / 2) ** 2 + br * br + bi * bi);
      const scale = Math.abs(a) + Math.abs(d) + Math.hypot(br, bi);
      expect(Math.abs(r.values[0] - (mid - rad))).toBeLessThanOrEqual(4 * EPS * scale);
      expect(Math.abs(r.values[1] - (mid + rad))).toBeLessThanOrEqual(4 * EPS * scale);
      for (let j = 0; j < 2; j++) {
        const lam = j === 0 ? mid - rad : mid + rad;
        // w = (b, λ − a)/‖·‖; |⟨v, w⟩| = 1 for the same eigenvector up to phase
        const w = [br, bi, lam - a, 0];
        const nw = Math.hypot(...w);
        const v = [r.vre[j], r.vim![j], r.vre[2 + j], r.vim![2 + j]];
        const ip = [v[0] * w[0] + v[1] * w[1] + v[2] * w[2] + v[3] * w[3], v[0] * w[1] - v[1] * w[0] + v[2] * w[3] - v[3] * w[2]];
        expect(Math.hypot(ip[0], ip[1]) / nw).toBeCloseTo(1, 12);
      }
    }
  });

  it('a real tridiagonal and a complex matrix with a random spectrum', () => {
    const n = 60;
    const re = new Float64Array(n * n);
    const g = seededUniform(11, -1, 1);
    for (let i = 0; i < n; i++) {
      re[i * n + i] = g();
      if (i + 1 < n) re[i * n + i + 1] = re[(i + 1) * n + i] = g();
    }
    expectAccurate({ re, im: null, n }, null);
    const lambda = Array.from({ length: 100 }, () => 1e3 * g());
    expectAccurate(withSpectrum(lambda, true, 12), lambda);
  });

  it('entries near the overflow and underflow limits: eigenvalues scale with the matrix', () => {
    const lambda = Array.from({ length: 30 }, (_, k) => (k % 4) - 1.5);
    const h = withSpectrum(lambda, true, 13);
    const base = hermitianEigen(h.re, h.im, h.n).values;
    for (const f of [1e250, 1e-250]) {
      const r = hermitianEigen(h.re.map((x) => x * f), h.im!.map((x) => x * f), h.n);
      r.values.forEach((l, j) => expect(Math.abs(l / f - base[j])).toBeLessThanOrEqual(C * h.n * EPS * frobenius(h)));
      expect(r.vre.every(Number.isFinite)).toBe(true);
    }
  });

  it('bad input is refused with the reason', () => {
    expect(() => hermitianEigen(new Float64Array(3), null, 2)).toThrow(/re has 3 entries, needs n·n = 4/);
    expect(() => hermitianEigen(new Float64Array(4), new Float64Array(2), 2)).toThrow(/im has 2 entries/);
    expect(() => hermitianEigen(Float64Array.of(1, NaN, NaN, 1), null, 2)).toThrow(/entry \(0, 1\) is not finite/);
    expect(() => hermitianEigen(new Float64Array(4), null, 1.5)).toThrow(/n must be a non-negative integer/);
  });
});

// ---------------------------------------------------------------------------------------------
// NumPy cross-check (NumPy: Harris et al., "Array programming with NumPy", Nature 585, 357–362 (2020))

const python = spawnSync('python3', ['-c', 'import numpy'], { encoding: 'utf8' });
const hasNumpy = python.status === 0;
const numpyNote = hasNumpy ? '' : ' — SKIPPED: python3 with numpy is not available on this machine';

const NUMPY_EIGH = `
import json, sys, numpy as np
d = json.load(sys.stdin)
n = d["n"]
H = np.array(d["re"]).reshape(n, n) + 1j * np.array(d["im"]).reshape(n, n)
w, V = np.linalg.eigh(H)
json.dump({"w": w.tolist(), "vre": V.real.ravel().tolist(), "vim": V.imag.ravel().tolist()}, sys.stdout)
`;

/** (a + ib) minus its projection on the orthonormal vectors (two Gram–Schmidt passes); returns the norm left. */
function removeSpan(a: Float64Array, b: Float64Array, basis: readonly { re: ArrayLike<number>; im: ArrayLike<number> }[]): number {
  const n = a.length;
  for (let pass = 0; pass < 2; pass++)
    for (const u of basis) {
      let cr = 0;
      let ci = 0;
      for (let i = 0; i < n; i++) {
        cr += u.re[i] * a[i] + u.im[i] * b[i];
        ci += u.re[i] * b[i] - u.im[i] * a[i];
      }
      for (let i = 0; i < n; i++) {
        a[i] -= cr * u.re[i] - ci * u.im[i];
        b[i] -= cr * u.im[i] + ci * u.re[i];
      }
    }
  let s = 0;
  for (let i = 0; i < n; i++) s += a[i] * a[i] + b[i] * b[i];
  return Math.sqrt(s);
}

describe('hermitianEigen against numpy.linalg.eigh', () => {
  it.skipIf(!hasNumpy)(`eigenvalues and eigenspace projectors agree (complex n = 90, multiplicities 30 and 20)${numpyNote}`, () => {
    const lambda = Array.from({ length: 90 }, (_, k) => (k < 30 ? -1 : k < 50 ? 2 : 3 + 0.05 * k));
    const h = withSpectrum(lambda, true, 21);
    const n = h.n;
    const out = spawnSync('python3', ['-c', NUMPY_EIGH], {
      input: JSON.stringify({ n, re: Array.from(h.re), im: Array.from(h.im!) }),
      encoding: 'utf8',
      maxBuffer: 64 << 20,
    });
    expect(out.status, out.stderr).toBe(0);
    const ref = JSON.parse(out.stdout) as { w: number[]; vre: number[]; vim: number[] };
    const r = hermitianEigen(h.re, h.im, n);
    const norm = frobenius(h);
    ref.w.forEach((w, j) => expect(Math.abs(r.values[j] - w)).toBeLessThanOrEqual(C * n * EPS * norm));
    // projector onto each group of equal eigenvalues: ‖P_ours − P_numpy‖_F small (gap ≥ 0.05)
    const groups = [
      [0, 30],
      [30, 50],
      [50, 51],
      [89, 90],
    ];
    for (const [lo, hi] of groups) {
      let diff = 0;
      for (let i = 0; i < n; i++)
        for (let k = 0; k < n; k++) {
          let pr = 0;
          let pi = 0;
          for (let j = lo; j < hi; j++) {
            // ours − numpy, entry (i, k) of Σ_j v_j v_jᴴ
            const a = [r.vre[i * n + j], r.vim![i * n + j], r.vre[k * n + j], r.vim![k * n + j]];
            const b = [ref.vre[i * n + j], ref.vim[i * n + j], ref.vre[k * n + j], ref.vim[k * n + j]];
            pr += a[0] * a[2] + a[1] * a[3] - (b[0] * b[2] + b[1] * b[3]);
            pi += a[1] * a[2] - a[0] * a[3] - (b[1] * b[2] - b[0] * b[3]);
          }
          diff += pr * pr + pi * pi;
        }
      expect(Math.sqrt(diff)).toBeLessThan(1e-11);
    }
  });
});

describe('clusters at zero', () => {
  it('I − QQᵀ with 190 orthonormal columns in 196 dimensions: 190 eigenvalues at 0 and 6 at 1 (a projector; common practice), where the QL step once failed to converge', () => {
    const s = 196;
    const k = 190;
    const r = seededUniform(3, -1, 1);
    const Q: Float64Array[] = [];
    while (Q.length < k) {
      const v = Float64Array.from({ length: s }, () => r());
      for (let pass = 0; pass < 2; pass++)
        for (const q of Q) {
          let d = 0;
          for (let i = 0; i < s; i++) d += q[i] * v[i];
          for (let i = 0; i < s; i++) v[i] -= d * q[i];
        }
      const n = Math.hypot(...v);
      Q.push(v.map((x) => x / n));
    }
    const G = new Float64Array(s * s);
    for (let a = 0; a < s; a++)
      for (let b = 0; b < s; b++) {
        let x = a === b ? 1 : 0;
        for (const q of Q) x -= q[a] * q[b];
        G[a * s + b] = x;
      }
    const e = hermitianEigen(G, null, s);
    for (let t = 0; t < k; t++) expect(Math.abs(e.values[t])).toBeLessThan(1e-13);
    for (let t = k; t < s; t++) expect(e.values[t]).toBeCloseTo(1, 12);
    // the eigenvectors of the 1-cluster are orthogonal to every column of Q
    for (let t = k; t < s; t++)
      for (const q of Q.slice(0, 10)) {
        let d = 0;
        for (let i = 0; i < s; i++) d += q[i] * e.vre[i * s + t];
        expect(Math.abs(d)).toBeLessThan(1e-12);
      }
  });
});
