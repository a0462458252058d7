/**
 * The classifier's dense kernels against their plain definitions: the polar factor by Newton's
 * iteration against the SVD-based one (and the defining properties U unitary, UᴴM Hermitian
 * positive semidefinite), the packed linear combinations against a triple loop (exactly, every
 * remainder branch), and the packed weighted Gram matrix against its definition.
 */
import { describe, expect, it } from 'vitest';
import { combineColumns, normaliseInPlace, scaleInPlace, type Cx } from '../src/flex/classify/cvec-ops.js';
import { realTimes } from '../src/flex/classify/scdm-steps.js';
import { cnorm } from '../src/linalg/complex.js';
import { polarFactor, polarFactorNewton, polarFactorSvd } from '../src/flex/classify/polar.js';
import { compress, weightedGram } from '../src/flex/classify/rest-split.js';
import { hermitianEigen } from '../src/linalg/hermitian-eig.js';
import { rng } from './helpers.js';

type CMat = { re: Float64Array; im: Float64Array | null };

function randomMatrix(r: number, seed: number, complex: boolean): CMat {
  const g = rng(seed);
  return { re: Float64Array.from({ length: r * r }, () => g() - 0.5), im: complex ? Float64Array.from({ length: r * r }, () => g() - 0.5) : null };
}

/** C = A·B (complex r×r, row-major). */
function mul(A: CMat, B: CMat, r: number, conjA = false): { re: Float64Array; im: Float64Array } {
  const re = new Float64Array(r * r);
  const im = new Float64Array(r * r);
  for (let i = 0; i < r; i++)
    for (let j = 0; j < r; j++) {
      let sr = 0;
      let si = 0;
      for (let k = 0; k < r; k++) {
        // (Aᴴ)[i][k] = conj(A[k][i])
        const ar = conjA ? A.re[k * r + i] : A.re[i * r + k];
        const ai = A.im ? (conjA ? -A.im[k * r + i] : A.im[i * r + k]) : 0;
        const br = B.re[k * r + j];
        const bi = B.im ? B.im[k * r + j] : 0;
        sr += ar * br - ai * bi;
        si += ar * bi + ai * br;
      }
      re[i * r + j] = sr;
      im[i * r + j] = si;
    }
  return { re, im };
}

/** A unitary r×r matrix: the polar factor (SVD) of a random matrix. */
function randomUnitary(r: number, seed: number, complex: boolean): CMat {
  const M = randomMatrix(r, seed, complex);
  const U = polarFactorSvd(M.re, M.im, r);
  return { re: U.re, im: complex ? U.im : null };
}

/** Q1·diag(σ)·Q2ᴴ with the given singular values. */
function withSingularValues(sigma: number[], seed: number, complex: boolean): CMat {
  const r = sigma.length;
  const Q1 = randomUnitary(r, seed, complex);
  const Q2 = randomUnitary(r, seed + 1, complex);
  const S = { re: new Float64Array(r * r), im: null };
  sigma.forEach((s, i) => (S.re[i * r + i] = s));
  const Q1S = mul(Q1, S, r);
  // (Q1 S) Q2ᴴ = ((Q2 (Q1 S)ᴴ))ᴴ: form Q2ᴴ explicitly
  const Q2h = { re: new Float64Array(r * r), im: complex ? new Float64Array(r * r) : null };
  for (let i = 0; i < r; i++)
    for (let j = 0; j < r; j++) {
      Q2h.re[i * r + j] = Q2.re[j * r + i];
      if (Q2h.im && Q2.im) Q2h.im[i * r + j] = -Q2.im[j * r + i];
    }
  const M = mul(Q1S, Q2h, r);
  return { re: M.re, im: complex ? M.im : null };
}

/** Largest entry of |UᴴU − I|, of |H − Hᴴ| for H = UᴴM (relative to max|H|), and the smallest eigenvalue of (H + Hᴴ)/2 relative to its largest. */
function polarChecks(M: CMat, U: { re: Float64Array; im: Float64Array }, r: number): { unitary: number; hermitian: number; minEig: number } {
  const Uc = { re: U.re, im: M.im ? U.im : null };
  const UU = mul(Uc, Uc, r, true);
  let unitary = 0;
  for (let i = 0; i < r; i++)
    for (let j = 0; j < r; j++) unitary = Math.max(unitary, Math.abs(UU.re[i * r + j] - (i === j ? 1 : 0)), Math.abs(UU.im[i * r + j]));
  const H = mul(Uc, M, r, true);
  let big = 0;
  let skew = 0;
  for (let i = 0; i < r; i++)
    for (let j = 0; j < r; j++) {
      big = Math.max(big, Math.hypot(H.re[i * r + j], H.im[i * r + j]));
      skew = Math.max(skew, Math.abs(H.re[i * r + j] - H.re[j * r + i]), Math.abs(H.im[i * r + j] + H.im[j * r + i]));
    }
  const { values } = hermitianEigen(H.re, M.im ? H.im : null, r);
  return { unitary, hermitian: skew / big, minEig: values[0] / values[r - 1] };
}

function maxDiff(a: { re: Float64Array; im: Float64Array }, b: { re: Float64Array; im: Float64Array }): number {
  let d = 0;
  for (let i = 0; i < a.re.length; i++) d = Math.max(d, Math.abs(a.re[i] - b.re[i]), Math.abs(a.im[i] - b.im[i]));
  return d;
}

describe('polar factor by the scaled Newton iteration', () => {
  for (const complex of [false, true])
    for (const r of [1, 2, 7, 40]) {
      it(`matches the SVD's U·Vᴴ on a random ${complex ? 'complex' : 'real'} ${r}×${r} matrix, unitary with UᴴM Hermitian positive definite`, () => {
        const M = randomMatrix(r, 100 + r, complex);
        const newton = polarFactorNewton(M.re, M.im, r);
        expect(newton).not.toBeNull();
        expect(newton!.steps).toBeLessThanOrEqual(12);
        const svd = polarFactorSvd(M.re, M.im, r);
        expect(maxDiff(newton!, svd)).toBeLessThan(1e-12);
        const c = polarChecks(M, newton!, r);
        expect(c.unitary).toBeLessThan(1e-13);
        expect(c.hermitian).toBeLessThan(1e-13);
        expect(c.minEig).toBeGreaterThan(0);
        if (!complex) expect(newton!.im.every((x) => x === 0)).toBe(true);
        // what the SCDM uses is the Newton result when Newton succeeds
        expect(maxDiff(polarFactor(M.re, M.im, r), newton!)).toBe(0);
      });
    }

  it('1×1: z/|z|; 2×2: the rotation part of a known matrix', () => {
    const one = polarFactorNewton(Float64Array.of(-3), Float64Array.of(4), 1)!;
    expect(one.re[0]).toBeCloseTo(-0.6, 15);
    expect(one.im[0]).toBeCloseTo(0.8, 15);
    // [[0, 2], [−3, 0]] = [[0, 1], [−1, 0]]·diag(3, 2)
    const two = polarFactorNewton(Float64Array.of(0, 2, -3, 0), null, 2)!;
    expect(Array.from(two.re).map((x) => Math.round(x * 1e14) / 1e14)).toEqual([0, 1, -1, 0]);
  });

  for (const complex of [false, true])
    it(`ill-conditioned (κ = 1e8 and 1e12, ${complex ? 'complex' : 'real'} 12×12): still Newton, and the known polar factor to rounding`, () => {
      const r = 12;
      for (const kappa of [1e8, 1e12]) {
        // M = Q·diag(σ): each entry rounded relative to itself, a perturbation that leaves the
        // polar factor Q well determined (a general one would move it by up to ε·κ)
        const sigma = Array.from({ length: r }, (_, i) => kappa ** (-i / (r - 1)));
        const Q = randomUnitary(r, 7, complex);
        const M = { re: new Float64Array(r * r), im: complex ? new Float64Array(r * r) : null };
        for (let i = 0; i < r; i++)
          for (let j = 0; j < r; j++) {
            M.re[i * r + j] = Q.re[i * r + j] * sigma[j];
            if (M.im && Q.im) M.im[i * r + j] = Q.im[i * r + j] * sigma[j];
          }
        const newton = polarFactorNewton(M.re, M.im, r);
        expect(newton).not.toBeNull();
        // with the (1,∞)-norm scaling about 9 steps for κ up to 1e16 (Higham 2008, §8.9, from memory)
        expect(newton!.steps).toBeLessThanOrEqual(12);
        expect(maxDiff(newton!, { re: Q.re, im: Q.im ?? new Float64Array(r * r) })).toBeLessThan(1e-13);
        const c = polarChecks(M, newton!, r);
        expect(c.unitary).toBeLessThan(1e-13);
        expect(c.hermitian).toBeLessThan(1e-13);
        expect(c.minEig).toBeGreaterThan(-1e-13);
        // the SVD's factor carries errors up to ε·κ of its own
        expect(maxDiff(newton!, polarFactorSvd(M.re, M.im, r))).toBeLessThan(1e-16 * kappa * r);
      }
    });

  it('a singular matrix: Newton declines, and polarFactor falls back to the SVD (unitary, UᴴM Hermitian positive semidefinite)', () => {
    const r = 6;
    const M = withSingularValues([3, 2, 1, 0.5, 0.25, 0], 9, false);
    // exactly singular: a repeated row
    for (let j = 0; j < r; j++) M.re[5 * r + j] = M.re[4 * r + j];
    expect(polarFactorNewton(M.re, M.im, r)).toBeNull();
    const U = polarFactor(M.re, M.im, r);
    expect(maxDiff(U, polarFactorSvd(M.re, M.im, r))).toBe(0);
    const c = polarChecks(M, U, r);
    expect(c.unitary).toBeLessThan(1e-13);
    expect(c.hermitian).toBeLessThan(1e-13);
    expect(c.minEig).toBeGreaterThan(-1e-13);
  });
});

/** Σ_a W[a][b]·vectors[a][i], a in increasing order from zero (the definition, one entry at a time). */
function tripleLoop(vectors: Cx[], Wre: Float64Array, Wim: Float64Array | null, cols: number): Cx[] {
  const n = vectors[0].re.length;
  const out: Cx[] = [];
  for (let b = 0; b < cols; b++) {
    const v = { re: new Float64Array(n), im: new Float64Array(n) };
    for (let i = 0; i < n; i++) {
      let sr = 0;
      let si = 0;
      for (let a = 0; a < vectors.length; a++) {
        const wr = Wre[a * cols + b];
        const wi = Wim ? Wim[a * cols + b] : 0;
        sr += vectors[a].re[i] * wr - vectors[a].im[i] * wi;
        si += vectors[a].re[i] * wi + vectors[a].im[i] * wr;
      }
      v.re[i] = sr;
      v.im[i] = si;
    }
    out.push(v);
  }
  return out;
}

describe('combineColumns against a triple loop, exactly', () => {
  // n: below one chunk, one chunk, chunks with 1, 2, 3 leftover dofs (128-dof chunks, 4-dof blocks);
  // cols: every residue mod 4 (real) and mod 2 (complex)
  const sizes: [number, number][] = [
    [1, 1],
    [3, 2],
    [4, 3],
    [128, 4],
    [129, 5],
    [262, 6],
    [391, 7],
    [517, 8],
    [200, 9],
  ];
  for (const complex of [false, true])
    it(`${complex ? 'complex' : 'real'}: n × cols in ${sizes.map(([n, c]) => `${n}×${c}`).join(', ')} (r = 5 and 11)`, () => {
      const g = rng(complex ? 41 : 40);
      for (const r of [5, 11])
        for (const [n, cols] of sizes) {
          const vectors = Array.from({ length: r }, () => ({
            re: Float64Array.from({ length: n }, () => g() - 0.5),
            im: complex ? Float64Array.from({ length: n }, () => g() - 0.5) : new Float64Array(n),
          }));
          const Wre = Float64Array.from({ length: r * cols }, () => g() - 0.5);
          const Wim = complex ? Float64Array.from({ length: r * cols }, () => g() - 0.5) : null;
          Wre[0] = 0; // a zero weight changes nothing
          if (Wim) Wim[0] = 0;
          const got = combineColumns(vectors, Wre, Wim, cols, !complex);
          const want = tripleLoop(vectors, Wre, Wim, cols);
          expect(got.length).toBe(cols);
          for (let b = 0; b < cols; b++) expect(maxDiff(got[b], want[b]), `r ${r} n ${n} cols ${cols} column ${b}`).toBe(0);
        }
    });
});

describe('weighted Gram matrix against its definition', () => {
  for (const complex of [false, true])
    it(`${complex ? 'complex' : 'real'}: Σ_k d_k Σ_i conj(ψ_a[i]) ψ_b[i], Hermitian, for r of every residue mod 4 and joints across chunks with zero weights`, () => {
      const g = rng(complex ? 51 : 50);
      for (const [r, J] of [
        [1, 3],
        [4, 130],
        [6, 257],
        [7, 300],
        [9, 129],
      ]) {
        const d = Float64Array.from({ length: J }, () => Math.floor(g() * 4)); // about a quarter are 0
        const psi = Array.from({ length: r }, () => ({
          re: Float64Array.from({ length: 2 * J }, () => g() - 0.5),
          im: complex ? Float64Array.from({ length: 2 * J }, () => g() - 0.5) : new Float64Array(2 * J),
        }));
        const got = weightedGram(d, psi, !complex);
        let scale = 0;
        let worst = 0;
        for (let a = 0; a < r; a++)
          for (let b = 0; b < r; b++) {
            let sr = 0;
            let si = 0;
            for (let k = 0; k < J; k++)
              for (const i of [2 * k, 2 * k + 1]) {
                // conj(ψ_a[i])·ψ_b[i]
                sr += d[k] * (psi[a].re[i] * psi[b].re[i] + psi[a].im[i] * psi[b].im[i]);
                si += d[k] * (psi[a].re[i] * psi[b].im[i] - psi[a].im[i] * psi[b].re[i]);
              }
            scale = Math.max(scale, Math.hypot(sr, si));
            worst = Math.max(worst, Math.abs(got.re[a * r + b] - sr), Math.abs(got.im[a * r + b] - si));
            // exactly Hermitian
            expect(got.re[a * r + b]).toBe(got.re[b * r + a]);
            expect(got.im[a * r + b] + got.im[b * r + a]).toBe(0);
          }
        expect(worst / scale, `r ${r} J ${J}`).toBeLessThan(1e-14);
        expect(got.anyIm).toBe(complex && r > 1);
      }
    });
});

describe('real forms of complex steps give the complex forms\' numbers bit for bit', () => {
  // The real forms skip products with a zero imaginary part; they must not change a single bit,
  // so that real and complex data take the same decisions.
  it('compress: CᴴAC for real symmetric A and real C (r = 13, m = 1 … 9)', () => {
    const g = rng(61);
    const r = 13;
    const Are = new Float64Array(r * r);
    for (let a = 0; a < r; a++)
      for (let b = a; b < r; b++) Are[a * r + b] = Are[b * r + a] = g() - 0.5;
    for (let m = 1; m <= 9; m++) {
      const C = Float64Array.from({ length: r * m }, () => (g() < 0.2 ? 0 : g() - 0.5));
      const within = { E: { re: C, im: null }, m };
      const real = compress({ re: Are, im: new Float64Array(r * r), anyIm: false }, within, r);
      // anyIm true takes the complex form on the same (zero) imaginary parts
      const complex = compress({ re: Are, im: new Float64Array(r * r), anyIm: true }, within, r);
      expect(real.anyIm).toBe(false);
      expect(complex.anyIm).toBe(false);
      expect(Array.from(real.re)).toEqual(Array.from(complex.re));
      expect(real.im.every((x) => x === 0)).toBe(true);
    }
  });

  it('realTimes: C += E·W against the complex loop in the same order', () => {
    const g = rng(62);
    for (const [rows, r] of [
      [1, 1],
      [7, 5],
      [20, 12],
    ]) {
      const E = Float64Array.from({ length: rows * r }, () => (g() < 0.3 ? 0 : g() - 0.5));
      const W = Float64Array.from({ length: r * r }, () => g() - 0.5);
      const got = new Float64Array(rows * r);
      realTimes(E, W, got, rows, r);
      const want = new Float64Array(rows * r);
      for (let b = 0; b < rows; b++)
        for (let t = 0; t < r; t++) {
          const er = E[b * r + t];
          const ei = 0;
          if (er === 0 && ei === 0) continue;
          for (let s = 0; s < r; s++) want[b * r + s] += er * W[t * r + s] - ei * 0;
        }
      expect(Array.from(got)).toEqual(Array.from(want));
    }
  });

  it('normaliseInPlace: the real form scales as scaleInPlace(v, 1/‖v‖) and leaves the imaginary part alone', () => {
    const g = rng(63);
    for (const n of [1, 5, 1000]) {
      const re = Float64Array.from({ length: n }, () => g() - 0.5);
      const a: Cx = { re: re.slice(), im: new Float64Array(n) };
      const b: Cx = { re: re.slice(), im: new Float64Array(n) };
      normaliseInPlace(a, true);
      scaleInPlace(b, 1 / cnorm(b));
      expect(Array.from(a.re)).toEqual(Array.from(b.re));
      expect(a.im.every((x) => x === 0)).toBe(true);
      const c: Cx = { re: re.slice(), im: Float64Array.from({ length: n }, () => g() - 0.5) };
      const d: Cx = { re: c.re.slice(), im: c.im.slice() };
      normaliseInPlace(c, false);
      scaleInPlace(d, 1 / cnorm(d));
      expect(Array.from(c.re)).toEqual(Array.from(d.re));
      expect(Array.from(c.im)).toEqual(Array.from(d.im));
    }
  });
});
