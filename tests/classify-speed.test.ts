/**
 * The classifier's fast paths against their plain definitions: the lazy SCDM against the
 * column-pivoted QR that eliminates every row at every step (bit for bit), SCDM of Ψ·E without
 * forming Ψ·E, the affine complement as coefficients, the blocked linear combinations, and the
 * near/far split of a rest given as coefficients. Expected values are the definitions computed
 * the plain way, never the fast path's own output.
 */
import { describe, expect, it } from 'vitest';
import { count } from '../src/analysis.js';
import { complementCoefficients, splitAffine } from '../src/flex/classify/affine.js';
import { combineColumns, type Cx } from '../src/flex/classify/cvec-ops.js';
import { geometryOf } from '../src/flex/classify/metrics.js';
import { boundaryDistanceParts, splitByBoundaryDistance } from '../src/flex/classify/rest-split.js';
import { pivotOrder, scdm, scdmOfSpan, scdmReference } from '../src/flex/classify/scdm.js';
import { buildGallery } from '../src/framework/gallery.js';
import { cdot, complexOrthonormalSpan } from '../src/linalg/complex.js';
import type { Supercell } from '../src/supercell/supercell.js';
import { rng } from './helpers.js';

function flexBasisOf(fw: string, cells: [number, number], bc: string): { sc: Supercell; phi: Cx[]; complex: boolean } {
  const { supercell: sc, analysis } = count({ framework: buildGallery(fw), cells, boundary: bc });
  const phi = analysis.flexBasis().vectors;
  return { sc, phi, complex: phi.some((v) => v.im.some((x) => x !== 0)) };
}

/** n×m complex (or real) matrix with orthonormal columns, row-major, from random numbers. */
function randomOrthonormal(n: number, m: number, seed: number, complex: boolean): { re: Float64Array; im: Float64Array | null } {
  const r = rng(seed);
  const cols = Array.from({ length: m }, () => ({
    re: Float64Array.from({ length: n }, () => r() - 0.5),
    im: complex ? Float64Array.from({ length: n }, () => r() - 0.5) : new Float64Array(n),
  }));
  const q = complexOrthonormalSpan(cols);
  expect(q.length).toBe(m);
  const re = new Float64Array(n * m);
  const im = complex ? new Float64Array(n * m) : null;
  q.forEach((v, t) => {
    for (let i = 0; i < n; i++) {
      re[i * m + t] = v.re[i];
      if (im) im[i * m + t] = v.im[i];
    }
  });
  return { re, im };
}

/** Σ_a W[a][b]·vectors[a], one entry at a time in increasing a (the definition). */
function plainCombination(vectors: Cx[], W: { re: Float64Array; im: Float64Array | null }, cols: number): Cx[] {
  const n = vectors[0].re.length;
  return Array.from({ length: cols }, (_, b) => {
    const out = { re: new Float64Array(n), im: new Float64Array(n) };
    for (let i = 0; i < n; i++) {
      let sr = 0;
      let si = 0;
      vectors.forEach((v, a) => {
        const wr = W.re[a * cols + b];
        const wi = W.im ? W.im[a * cols + b] : 0;
        sr += v.re[i] * wr - v.im[i] * wi;
        si += v.re[i] * wi + v.im[i] * wr;
      });
      out.re[i] = sr;
      out.im[i] = si;
    }
    return out;
  });
}

function maxDiff(a: Cx[], b: Cx[]): number {
  expect(a.length).toBe(b.length);
  let d = 0;
  a.forEach((v, t) => {
    for (let i = 0; i < v.re.length; i++) d = Math.max(d, Math.abs(v.re[i] - b[t].re[i]), Math.abs(v.im[i] - b[t].im[i]));
  });
  return d;
}

/** ‖P_A − P_B‖ entrywise on the first `rows` rows, P = Σ v vᴴ of an orthonormal set (subspace equality). */
function projectorGap(A: Cx[], B: Cx[], rows: number): number {
  const entry = (V: Cx[], i: number, j: number): [number, number] => {
    let sr = 0;
    let si = 0;
    for (const v of V) {
      sr += v.re[i] * v.re[j] + v.im[i] * v.im[j];
      si += v.im[i] * v.re[j] - v.re[i] * v.im[j];
    }
    return [sr, si];
  };
  let d = 0;
  for (let i = 0; i < rows; i++)
    for (let j = 0; j < rows; j++) {
      const [ar, ai] = entry(A, i, j);
      const [br, bi] = entry(B, i, j);
      d = Math.max(d, Math.abs(ar - br), Math.abs(ai - bi));
    }
  return d;
}

describe('lazy SCDM', () => {
  // free twisted kagome (real, edge modes on every side), free kagome (real, many exact ties
  // between mirror images), twisted kagome with a twisted axis (complex), free honeycomb
  // (extended flexes as well as edge ones)
  for (const [fw, cells, bc] of [
    ['gallery:twisted-kagome?twist=15', [10, 10], 'free'],
    ['gallery:kagome', [6, 6], 'free'],
    ['gallery:twisted-kagome?twist=15', [8, 8], 'x=twist:0.25'],
    ['gallery:honeycomb', [8, 8], 'free'],
  ] as const) {
    it(`picks the same columns and returns the same vectors, bit for bit, as eliminating every row at every step (${fw} ${cells.join('×')} ${bc})`, () => {
      const { sc, phi, complex } = flexBasisOf(fw, [cells[0], cells[1]], bc);
      expect(phi.length).toBeGreaterThan(10);
      if (bc !== 'free') expect(complex).toBe(true);
      const order = pivotOrder(sc);
      const lazy = scdm(phi, complex, order);
      const eager = scdmReference(phi, complex, order);
      expect(lazy.length).toBe(phi.length);
      expect(maxDiff(lazy, eager)).toBe(0);
    });
  }

  it('of Ψ·E without forming Ψ·E: the vectors SCDM gives for the formed Ψ·E (to rounding)', () => {
    for (const [fw, cells, bc] of [
      ['gallery:twisted-kagome?twist=15', [10, 10], 'free'],
      ['gallery:twisted-kagome?twist=15', [8, 8], 'x=twist:0.25'],
    ] as const) {
      const { sc, phi, complex } = flexBasisOf(fw, [cells[0], cells[1]], bc);
      const r = phi.length;
      const m = r - 7;
      const E = randomOrthonormal(r, m, 11, complex);
      const formed = plainCombination(phi, E, m);
      const order = pivotOrder(sc);
      const want = scdm(formed, complex, order);
      const got = scdmOfSpan(phi, E, m, complex, order);
      expect(got.length).toBe(m);
      expect(maxDiff(got, want), `${fw} ${bc}`).toBeLessThan(1e-12);
    }
  });
});

describe('blocked linear combinations', () => {
  it('combineColumns gives the plain sums exactly (real: blocks of 4 outputs × 4 dofs and the leftovers; complex)', () => {
    const r = rng(5);
    for (const [k, n, cols, complex] of [
      [9, 1031, 7, false],
      [6, 2050, 8, false],
      [5, 37, 3, true],
    ] as const) {
      const vectors = Array.from({ length: k }, () => ({
        re: Float64Array.from({ length: n }, () => r() - 0.5),
        im: complex ? Float64Array.from({ length: n }, () => r() - 0.5) : new Float64Array(n),
      }));
      const W = { re: Float64Array.from({ length: k * cols }, () => r() - 0.5), im: complex ? Float64Array.from({ length: k * cols }, () => r() - 0.5) : null };
      // a zero weight (skipped by the complex path) must not change anything
      W.re[3] = 0;
      if (W.im) W.im[3] = 0;
      const got = combineColumns(vectors, W.re, W.im, cols, !complex);
      expect(maxDiff(got, plainCombination(vectors, W, cols))).toBe(0);
    }
  });
});

describe('affine complement as coefficients', () => {
  for (const complex of [false, true]) {
    it(`rest·C is orthonormal, orthogonal to the affine vectors and of dimension r − a; C·Cᴴ = I − Y·Yᴴ (${complex ? 'complex' : 'real'})`, () => {
      const n = 60;
      const r = 12;
      const a = 3;
      const P = randomOrthonormal(n, r, 21, complex);
      const rest: Cx[] = Array.from({ length: r }, (_, t) => ({
        re: Float64Array.from({ length: n }, (_, i) => P.re[i * r + t]),
        im: Float64Array.from({ length: n }, (_, i) => (P.im ? P.im[i * r + t] : 0)),
      }));
      const Y = randomOrthonormal(r, a, 22, complex);
      const affine = plainCombination(rest, Y, a);
      const part = complementCoefficients(rest, affine)!;
      expect(part).not.toBeNull();
      expect(part.m).toBe(r - a);
      const left = plainCombination(rest, part.E, part.m);
      for (let s = 0; s < part.m; s++) {
        for (let t = 0; t < part.m; t++) {
          const [re, im] = cdot(left[s], left[t]);
          expect(Math.abs(re - (s === t ? 1 : 0)) + Math.abs(im)).toBeLessThan(1e-13);
        }
        for (const u of affine) {
          const [re, im] = cdot(u, left[s]);
          expect(Math.hypot(re, im)).toBeLessThan(1e-13);
        }
      }
      // in coefficient space: C·Cᴴ + Y·Yᴴ = I (the two parts fill the rest)
      for (let i = 0; i < r; i++)
        for (let j = 0; j < r; j++) {
          let sr = 0;
          let si = 0;
          for (let t = 0; t < part.m; t++) {
            const ar = part.E.re[i * part.m + t];
            const ai = part.E.im ? part.E.im[i * part.m + t] : 0;
            const br = part.E.re[j * part.m + t];
            const bi = part.E.im ? part.E.im[j * part.m + t] : 0;
            sr += ar * br + ai * bi;
            si += ai * br - ar * bi;
          }
          for (let t = 0; t < a; t++) {
            const ar = Y.re[i * a + t];
            const ai = Y.im ? Y.im[i * a + t] : 0;
            const br = Y.re[j * a + t];
            const bi = Y.im ? Y.im[j * a + t] : 0;
            sr += ar * br + ai * bi;
            si += ai * br - ar * bi;
          }
          expect(Math.abs(sr - (i === j ? 1 : 0)) + Math.abs(si)).toBeLessThan(1e-13);
        }
    });
  }

  it('refuses vectors outside span(rest) (the caller then uses Gram–Schmidt)', () => {
    const n = 30;
    const P = randomOrthonormal(n, 6, 31, false);
    const cols = (t: number) => ({ re: Float64Array.from({ length: n }, (_, i) => P.re[i * 6 + t]), im: new Float64Array(n) });
    const rest = [0, 1, 2, 3].map(cols);
    expect(complementCoefficients(rest, [cols(5)])).toBeNull();
  });

  it('on the free twisted kagome: the affine flexes (rigid motions and the dilation) leave a rest of f − 4 dimensions', () => {
    const { sc, phi } = flexBasisOf('gallery:twisted-kagome?twist=15', [10, 10], 'free');
    const aff = splitAffine(sc, phi, phi);
    // two translations, the rotation and the twisted kagome's dilation (Guest–Hutchinson mode)
    expect(aff.affine.length).toBe(4);
    expect(aff.part).not.toBeNull();
    expect(aff.part!.m).toBe(phi.length - 4);
    const left = plainCombination(phi, aff.part!.E, aff.part!.m);
    let worst = 0;
    for (const v of left) for (const u of aff.affine) worst = Math.max(worst, Math.hypot(...cdot(u, v)));
    expect(worst).toBeLessThan(1e-12);
  });
});

describe('near/far split of a rest given as coefficients', () => {
  it('boundaryDistanceParts(Ψ, C) spans the near and far spaces of the formed Ψ·C (free honeycomb: both parts)', () => {
    const { sc, phi } = flexBasisOf('gallery:honeycomb', [8, 8], 'free');
    const geo = geometryOf(sc);
    const aff = splitAffine(sc, phi, phi);
    const C = aff.part!;
    const formed = plainCombination(phi, C.E, C.m);
    const want = splitByBoundaryDistance(geo, formed);
    const got = boundaryDistanceParts(geo, phi, C)!;
    expect(want.near.length).toBeGreaterThan(0);
    expect(want.far.length).toBeGreaterThan(0);
    expect(got.near.m).toBe(want.near.length);
    expect(got.far.m).toBe(want.far.length);
    expect(got.near.m + got.far.m).toBe(C.m);
    const near = plainCombination(phi, got.near.E, got.near.m);
    const far = plainCombination(phi, got.far.E, got.far.m);
    expect(projectorGap(near, want.near, 40)).toBeLessThan(1e-10);
    expect(projectorGap(far, want.far, 40)).toBeLessThan(1e-10);
  });
});
