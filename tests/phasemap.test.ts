/**
 * The phase-torus map: the Jacobi singular values it rests on, the zero sets of the gallery
 * lattices against published statements, zero lines and points off the grid, and the Bloch sum
 * rule linking the map to supercell flex counts.
 */
import { describe, expect, it } from 'vitest';
import { count } from '../src/analysis.js';
import { InputError } from '../src/errors.js';
import { CancelledError } from '../src/flex/solver.js';
import { buildGallery } from '../src/framework/gallery.js';
import type { Framework } from '../src/framework/types.js';
import { complexOrthonormalSpan, type CVec } from '../src/linalg/complex.js';
import { singularValues } from '../src/linalg/dense.js';
import { SparseBuilder } from '../src/linalg/sparse.js';
import { jacobiSingularValues, jacobiSingularValuesInto, jacobiWork } from '../src/spectrum/jacobi.js';
import { phaseMap, SymbolEvaluator, type PhaseMap, type ZeroLine } from '../src/spectrum/phasemap.js';
import { symbolKernel, symbolMatrix } from '../src/spectrum/symbol.js';
import { rigidityMatrix } from '../src/supercell/rigidity.js';
import { buildSupercell } from '../src/supercell/supercell.js';
import { gcd, randomFramework, rng } from './helpers.js';

type Cx = { re: Float64Array; im: Float64Array; m: number; n: number };

function randomComplex(r: () => number, m: number, n: number): Cx {
  const re = new Float64Array(m * n);
  const im = new Float64Array(m * n);
  for (let i = 0; i < m * n; i++) {
    re[i] = 2 * r() - 1;
    im[i] = 2 * r() - 1;
  }
  return { re, im, m, n };
}

function multiply(A: Cx, B: Cx): Cx {
  const C = { re: new Float64Array(A.m * B.n), im: new Float64Array(A.m * B.n), m: A.m, n: B.n };
  for (let c = 0; c < B.n; c++)
    for (let k = 0; k < A.n; k++) {
      const br = B.re[c * B.m + k];
      const bi = B.im[c * B.m + k];
      for (let r = 0; r < A.m; r++) {
        const ar = A.re[k * A.m + r];
        const ai = A.im[k * A.m + r];
        C.re[c * A.m + r] += ar * br - ai * bi;
        C.im[c * A.m + r] += ar * bi + ai * br;
      }
    }
  return C;
}

/** The dense reference path (ml-matrix SVD of the real embedding) on a column-major matrix. */
function referenceSigma(A: Cx): Float64Array {
  const B = new SparseBuilder(A.n);
  for (let r = 0; r < A.m; r++) {
    const row = B.newRow();
    for (let c = 0; c < A.n; c++) B.add(row, c, A.re[c * A.m + r], A.im[c * A.m + r]);
  }
  return singularValues(B.build(true));
}

/** Columns of a random unitary k×k matrix (orthonormalised random vectors). */
function randomUnitary(r: () => number, k: number): CVec[] {
  const vs = Array.from({ length: k }, () => {
    const v = randomComplex(r, k, 1);
    return { re: v.re, im: v.im };
  });
  return complexOrthonormalSpan(vs, 1e-8);
}

describe('one-sided Jacobi singular values', () => {
  it('agree with the ml-matrix SVD on random tall, wide and rank-deficient complex matrices', () => {
    const r = rng(5);
    for (const [m, n, rank] of [[6, 6, 6], [9, 4, 4], [3, 8, 3], [7, 7, 4], [5, 9, 2], [12, 6, 5]]) {
      const A = rank === Math.min(m, n) ? randomComplex(r, m, n) : multiply(randomComplex(r, m, rank), randomComplex(r, rank, n));
      const s = jacobiSingularValues(A.re, A.im, m, n);
      const ref = referenceSigma(A);
      expect(s.length).toBe(Math.min(m, n));
      for (let k = 0; k < s.length; k++) expect(Math.abs(s[k] - ref[k])).toBeLessThan(1e-13 * ref[0]);
      for (let k = rank; k < s.length; k++) expect(s[k]).toBeLessThan(1e-14 * s[0]);
    }
  });

  it('the allocation-free form writes the same values at an offset of a shared array, with one scratch for every size', () => {
    const r = rng(6);
    const work = jacobiWork(12, 12);
    const out = new Float64Array(64).fill(-1);
    let offset = 3;
    for (const [m, n] of [[6, 6], [9, 4], [3, 8], [12, 6]]) {
      const A = randomComplex(r, m, n);
      const k = jacobiSingularValuesInto(A.re, A.im, m, n, work, out, offset);
      expect(k).toBe(Math.min(m, n));
      const got = Array.from(out.subarray(offset, offset + k)).sort((a, b) => b - a);
      expect(got).toEqual(Array.from(jacobiSingularValues(A.re, A.im, m, n)));
      offset += k;
    }
    expect(out[2]).toBe(-1);
    expect(out[offset]).toBe(-1);
  });

  it('recovers tiny singular values of U·diag(σ)·Vᴴ to ~1e-15·σ_max (ΦᴴΦ could not)', () => {
    // A constructed test (common practice): known σ, random unitary U and V.
    const r = rng(9);
    const sigma = [3, 1, 1e-6, 1e-12, 1e-14, 0];
    const k = sigma.length;
    const U = randomUnitary(r, k);
    const V = randomUnitary(r, k);
    const A: Cx = { re: new Float64Array(k * k), im: new Float64Array(k * k), m: k, n: k };
    for (let c = 0; c < k; c++)
      for (let row = 0; row < k; row++)
        for (let t = 0; t < k; t++) {
          // A[row, c] = Σ_t U[row, t] σ_t conj(V[c, t])
          const ur = U[t].re[row];
          const ui = U[t].im[row];
          const vr = V[t].re[c];
          const vi = -V[t].im[c];
          A.re[c * k + row] += sigma[t] * (ur * vr - ui * vi);
          A.im[c * k + row] += sigma[t] * (ur * vi + ui * vr);
        }
    const s = jacobiSingularValues(A.re, A.im, k, k);
    for (let t = 0; t < k; t++) expect(Math.abs(s[t] - sigma[t])).toBeLessThan(3e-15 * 3);
  });

  it('the symbol evaluator gives the singular values of the one-cell twisted supercell at any phase', () => {
    // Φ(θ) is the rigidity matrix of the 1×1 supercell twisted by θ on both axes; that matrix is
    // assembled by independent code (supercell.ts + rigidity.ts) and solved by ml-matrix's SVD.
    const r = rng(2);
    for (const spec of ['gallery:kagome', 'gallery:honeycomb', 'gallery:rotating-squares-tilted', 'gallery:square']) {
      const fw = buildGallery(spec);
      const ev = new SymbolEvaluator(fw);
      for (let t = 0; t < 5; t++) {
        const theta: [number, number] = [r(), r()];
        const s = ev.sigma(theta[0], theta[1]);
        const cell = buildSupercell(fw, [1, 1], { x: { kind: 'twist', theta: theta[0] }, y: { kind: 'twist', theta: theta[1] } });
        const ref = singularValues(rigidityMatrix(cell)); // descending, min(m, n) values
        expect(s.length).toBe(2 * fw.joints.length);
        for (let k = 0; k < ref.length; k++) expect(Math.abs(s[s.length - 1 - k] - ref[k])).toBeLessThan(1e-13 * ref[0]);
        for (let k = 0; k < s.length - ref.length; k++) expect(s[k]).toBe(0);
        // the sparse form of the same assembly holds the same entries
        const sp = symbolMatrix(fw, theta);
        const dense = rigidityMatrix(cell);
        for (let row = 0; row < dense.rows; row++)
          for (let col = 0; col < dense.cols; col++) {
            const at = (A: typeof sp, im: boolean) => {
              for (let k = A.rowPtr[row]; k < A.rowPtr[row + 1]; k++) if (A.colIdx[k] === col) return im ? (A.im ? A.im[k] : 0) : A.re[k];
              return 0;
            };
            expect(Math.abs(at(sp, false) - at(dense, false))).toBeLessThan(1e-14);
            expect(Math.abs(at(sp, true) - at(dense, true))).toBeLessThan(1e-14);
          }
      }
    }
  });
});

// ---------------------------------------------------------------------------------------------

/** Canonical primitive (p, q): gcd 1, p > 0 or p = 0 < q. */
function canonical(p: number, q: number): [number, number] {
  const g = gcd(Math.abs(p), Math.abs(q));
  p /= g;
  q /= g;
  if (p < 0 || (p === 0 && q < 0)) return [-p, -q];
  return [p, q];
}

/**
 * The zero lines q·e ≡ 0 (mod 2π) for the bond directions e of a framework: e in lattice
 * coordinates (x, y) scaled to the primitive lattice vector along the bond, (n1, n2), gives the
 * line n1·θ1 + n2·θ2 ≡ 0.
 */
function bondLines(fw: Framework): string[] {
  const [a1, a2] = fw.lattice;
  const det = a1[0] * a2[1] - a1[1] * a2[0];
  const site = new Map(fw.joints.map((j, k) => [j.id, j.at]));
  const out = new Set<string>();
  for (const bar of fw.bars) {
    const pa = site.get(bar.from)!;
    const pb = site.get(bar.to)!;
    const px = pb[0] + bar.shift[0] * a1[0] + bar.shift[1] * a2[0] - pa[0];
    const py = pb[1] + bar.shift[0] * a1[1] + bar.shift[1] * a2[1] - pa[1];
    const x = (px * a2[1] - py * a2[0]) / det;
    const y = (a1[0] * py - a1[1] * px) / det;
    // smallest multiple with integer coordinates (bonds here are 1/k of a lattice vector, k ≤ 6)
    let k = 1;
    while (k <= 6 && !(Math.abs(k * x - Math.round(k * x)) < 1e-9 && Math.abs(k * y - Math.round(k * y)) < 1e-9)) k++;
    const [p, q] = canonical(Math.round(k * x), Math.round(k * y));
    out.add(`${p},${q},0`);
  }
  return [...out].sort();
}

function lineKeys(m: PhaseMap): string[] {
  return m.zeroSet.lines.map((L: ZeroLine) => `${L.p},${L.q},${L.c}`).sort();
}

function isolated(m: PhaseMap): [number, number, number][] {
  return m.zeroSet.isolated.map((z) => [+z.theta[0].toFixed(9), +z.theta[1].toFixed(9), z.kernel]);
}

const kernelAt = (m: PhaseMap, i1: number, i2: number) => m.kernel[i2 * m.grid + i1];

describe('zero sets of the gallery lattices', () => {
  it('regular kagome: the three lines q·e = 0 over the bond directions e', () => {
    // Sun, Souslov, Mao & Lubensky, "Surface phonons, elastic response, and conformal invariance
    // in twisted kagome lattices", PNAS 109, 12369 (2012); Lubensky et al., "Phonons and
    // elasticity in critically coordinated lattices", Rep. Prog. Phys. 78, 073901 (2015):
    // bulk zero modes of the regular kagome lie on the lines q·e = 0, one per bond direction.
    const fw = buildGallery('gallery:kagome');
    const expected = bondLines(fw);
    // gallery:kagome has a1 = (1, 0), a2 = (1/2, √3/2) and bonds along a1, a2 and a2 − a1:
    // θ1 = 0, θ2 = 0 and θ1 = θ2.
    expect(expected).toEqual(['0,1,0', '1,-1,0', '1,0,0']);
    for (const grid of [32, 15]) {
      const m = phaseMap(fw, { grid });
      expect(m.genericKernel).toBe(0);
      expect(lineKeys(m)).toEqual(expected);
      expect(m.zeroSet.lines.every((L) => L.kernel === 1)).toBe(true);
      expect(isolated(m)).toEqual([]);
      // at q = 0: two translations and the twist mode (Sun et al. 2012, from memory)
      expect(kernelAt(m, 0, 0)).toBe(3);
      // off the lines there is no kernel
      expect(kernelAt(m, 1, 2)).toBe(0);
    }
  });

  it('twisted kagome: only θ = (0, 0), the two translations', () => {
    // Sun, Souslov, Mao & Lubensky, PNAS 109, 12369 (2012): twisting removes the bulk zero
    // lines; under periodic conditions only the trivial translations remain (q = 0).
    for (const spec of ['gallery:twisted-kagome', 'gallery:twisted-kagome?twist=30']) {
      for (const grid of [24, 13]) {
        const m = phaseMap(buildGallery(spec), { grid });
        expect(m.zeroSet.lines).toEqual([]);
        expect(isolated(m)).toEqual([[0, 0, 2]]);
      }
    }
  });

  it('square lattice: the lines θ1 = 0 and θ2 = 0, one row- or column-sliding mode each', () => {
    // Lubensky et al., Rep. Prog. Phys. 78, 073901 (2015): Φ = diag(z1 − 1, z2 − 1) for the
    // square lattice, zero modes on q·a1 = 0 and q·a2 = 0.
    const fw = buildGallery('gallery:square');
    const m = phaseMap(fw, { grid: 16 });
    expect(lineKeys(m)).toEqual(bondLines(fw));
    expect(lineKeys(m)).toEqual(['0,1,0', '1,0,0']);
    expect(m.zeroSet.lines.map((L) => L.kernel)).toEqual([1, 1]);
    expect(kernelAt(m, 0, 0)).toBe(2);
    expect(m.smallest.length).toBe(2); // one joint: Φ has two columns
  });

  it('square lattice in a sheared cell: the line 2θ1 + θ2 = 0 crosses the rows between grid points', () => {
    // The same square grid (Lubensky et al. 2015) described with a1 = (1, 0), a2 = (−2, 1):
    // the vertical bond is 2a1 + a2, so its zero line q·e = 0 is 2θ1 + θ2 ≡ 0, which meets the
    // row θ2 = j/grid at θ1 = (k − j/grid)/2, off the grid for odd j.
    const fw: Framework = {
      name: 'square grid, sheared cell',
      lattice: [[1, 0], [-2, 1]],
      joints: [{ id: 'A', at: [0, 0] }],
      bars: [{ from: 'A', to: 'A', shift: [1, 0] }, { from: 'A', to: 'A', shift: [2, 1] }],
    };
    expect(bondLines(fw)).toEqual(['1,0,0', '2,1,0']);
    for (const grid of [15, 16]) {
      const m = phaseMap(fw, { grid });
      expect(lineKeys(m)).toEqual(['1,0,0', '2,1,0']);
      expect(isolated(m)).toEqual([]);
      const refined = m.zeroSet.points.filter((z) => z.found === 'row');
      expect(refined.length).toBeGreaterThan(grid / 2);
      for (const z of refined) expect(Math.abs(Math.sin(Math.PI * (2 * z.theta[0] + z.theta[1])))).toBeLessThan(1e-9);
    }
  });

  it('a grid whose horizontal bars span two cells: θ1 = 0, θ1 = ½ (off an odd grid) and θ2 = 0', () => {
    // Derived by hand from the rows −p + z^shift·p (common practice): Φ = diag(z1² − 1, z2 − 1),
    // singular where z1 = ±1 or z2 = 1.
    const fw: Framework = {
      name: 'two-cell horizontal bars',
      lattice: [[1, 0], [0, 1]],
      joints: [{ id: 'A', at: [0, 0] }],
      bars: [{ from: 'A', to: 'A', shift: [2, 0] }, { from: 'A', to: 'A', shift: [0, 1] }],
    };
    const m = phaseMap(fw, { grid: 15 });
    expect(lineKeys(m)).toEqual(['0,1,0', '1,0,0', '1,0,0.5']);
    expect(isolated(m)).toEqual([]);
  });

  it('rotating squares: an isolated zero at (½, ½) besides (0, 0), found off an odd grid too', () => {
    // Grima & Evans, "Auxetic behavior from rotating squares", J. Mater. Sci. Lett. 19, 1563
    // (2000): the counter-rotation of neighbouring squares, a Bloch mode at q = (π, π);
    // Dennis, Hagh & Corwin, arXiv:2201.02456 (2022): a zero mode the primitive torus misses.
    const fw = buildGallery('gallery:rotating-squares');
    for (const grid of [16, 15]) {
      const m = phaseMap(fw, { grid });
      expect(m.zeroSet.lines).toEqual([]);
      expect(isolated(m)).toEqual([[0, 0, 2], [0.5, 0.5, 1]]);
      if (grid % 2) expect(m.zeroSet.isolated[1].found).toBe('plane');
    }
  });

  it('honeycomb: dim ker Φ ≥ 1 at every phase (a flat band), 2 at θ = 0', () => {
    // Index theorem per phase, dim ker − dim coker = 2·joints − bars = 4 − 3 = 1 (Lubensky et
    // al., Rep. Prog. Phys. 78, 073901 (2015)); q = 0 adds the second translation.
    const m = phaseMap(buildGallery('gallery:honeycomb'), { grid: 12 });
    expect(m.genericKernel).toBe(1);
    expect(Math.min(...m.kernel)).toBe(1);
    expect(kernelAt(m, 0, 0)).toBe(2);
    expect(m.detection?.index).toBe(2);
    expect(m.zeroSet.isolated.some((z) => z.theta[0] === 0 && z.theta[1] === 0 && z.kernel === 2)).toBe(true);
  });
});

describe('zero sets of random frameworks', () => {
  // No published values: checks of the map against itself and against the dense SVD.
  const SEEDS = [2, 4, 6, 7, 12];
  it.each(SEEDS)('seed %i: the same zero set on two grids, each part checked with the dense SVD', (seed) => {
    const fw = randomFramework(seed, 2 + (seed % 3), 3 + (seed % 5));
    const maps = [16, 23].map((grid) => phaseMap(fw, { grid }));
    const keys = maps.map((m) => ({
      lines: lineKeys(m).map((k) => k.replace(/,([\d.e-]+)$/, (_, c) => `,${(+c).toFixed(6)}`)),
      isolated: m.zeroSet.isolated.map((z) => `${(+z.theta[0].toFixed(4) % 1).toFixed(4)},${(+z.theta[1].toFixed(4) % 1).toFixed(4)},${z.kernel}`).sort(),
    }));
    expect(keys[1]).toEqual(keys[0]);
    const m = maps[1];
    const k0 = m.genericKernel;
    const smax = m.sigmaMax;
    for (const z of m.zeroSet.isolated) {
      // the dense reference path at the reported phase, with the map's tolerance scale
      const ref = symbolKernel(fw, z.theta, 1e-9, smax);
      expect(ref.kernel).toBe(z.kernel);
      expect(z.kernel).toBeGreaterThan(k0);
    }
    for (const L of m.zeroSet.lines) {
      for (const t of [0.11, 0.37, 0.62, 0.89]) {
        const base: [number, number] = L.p !== 0 ? [L.c / L.p, 0] : [0, L.c / L.q];
        const theta: [number, number] = [base[0] - L.q * t, base[1] + L.p * t];
        const ref = symbolKernel(fw, theta, 1e-7, smax);
        expect(ref.kernel).toBeGreaterThan(k0);
      }
    }
  });

  it.each([[1, 4], [2, 3], [7, 3], [12, 3]])('seed %i: Σ of the map’s kernels over the phases of a periodic N×N supercell (N = %i) = its flex count', (seed, N) => {
    // Bloch sum rule (Ashcroft & Mermin 1976, ch. 8, from memory)
    const fw = randomFramework(seed, 2 + (seed % 3), 3 + (seed % 5));
    const grid = 2 * N;
    const m = phaseMap(fw, { grid });
    let sum = 0;
    for (let m2 = 0; m2 < N; m2++) for (let m1 = 0; m1 < N; m1++) sum += kernelAt(m, 2 * m1, 2 * m2);
    expect(sum).toBe(count({ framework: fw, cells: [N, N], boundary: 'periodic' }).analysis.flexes);
  });
});

describe('Bloch sum rule on the map', () => {
  // Σ over the N1·N2 phases ((θ1 + m1)/N1, (θ2 + m2)/N2) of dim ker Φ = the supercell's flex
  // count: standard Bloch theory, N. W. Ashcroft & N. D. Mermin, Solid State Physics (1976),
  // ch. 8 (from memory), stated for frameworks in Lubensky et al., Rep. Prog. Phys. 78 (2015).
  const CASES: [string, number, [number, number], number][] = [
    ['gallery:kagome', 4, [0, 0], 8],
    ['gallery:kagome', 3, [0.5, 0], 6],
    ['gallery:rotating-squares', 4, [0, 0], 8],
    ['gallery:rotating-squares', 3, [0, 0], 9],
    ['gallery:honeycomb', 3, [0, 0], 6],
    ['gallery:twisted-kagome', 3, [0, 0], 9],
    ['gallery:square', 5, [0, 0.5], 10],
  ];
  it.each(CASES)('%s, N = %i, twist %j, from a grid of %i', (spec, N, theta, grid) => {
    const fw = buildGallery(spec);
    const m = phaseMap(fw, { grid });
    let sum = 0;
    for (let m2 = 0; m2 < N; m2++)
      for (let m1 = 0; m1 < N; m1++) {
        // phase (θ + m)/N on the grid: index (θ + m)·grid/N
        const i1 = Math.round(((theta[0] + m1) * grid) / N);
        const i2 = Math.round(((theta[1] + m2) * grid) / N);
        expect(Math.abs(i1 - ((theta[0] + m1) * grid) / N)).toBeLessThan(1e-12);
        sum += kernelAt(m, i1, i2);
      }
    const c = count({ framework: fw, cells: [N, N], boundary: `twist:${theta[0]},${theta[1]}` }).analysis;
    expect(sum).toBe(c.flexes);
  });
});

describe('phaseMap options', () => {
  const fw = buildGallery('gallery:kagome');
  it.each([
    [{ grid: 1 }, 'grid'],
    [{ grid: 2.5 }, 'grid'],
    [{ grid: 5000 }, 'grid'],
    [{ grid: 8, tolerance: 1 }, 'tolerance'],
    [{ grid: 8, tolerance: -1e-9 }, 'tolerance'],
  ])('%j is refused naming %s', (opts, where) => {
    try {
      phaseMap(fw, opts);
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      expect((e as InputError).problems[0].where).toBe(where);
    }
  });

  it('a tolerance is stated relative to the largest σ_max over the grid', () => {
    const m = phaseMap(fw, { grid: 8, tolerance: 1e-6 });
    expect(m.tolerance.relative).toBe(1e-6);
    expect(m.tolerance.absolute).toBe(1e-6 * Math.max(...m.largest));
    expect(m.smallest.length).toBe(3);
    for (let i = 0; i < 64; i++) expect(m.smallest[0][i]).toBeLessThanOrEqual(m.smallest[1][i]);
  });

  it('reports progress up to 1 and stops on an aborted signal', () => {
    const seen: number[] = [];
    phaseMap(fw, { grid: 8, onProgress: (p) => seen.push(p.fraction) });
    expect(seen[seen.length - 1]).toBe(1);
    for (let k = 1; k < seen.length; k++) expect(seen[k]).toBeGreaterThanOrEqual(seen[k - 1]);
    const ctl = new AbortController();
    ctl.abort();
    expect(() => phaseMap(fw, { grid: 8, signal: ctl.signal })).toThrow(CancelledError);
  });

  it('refuses an invalid framework with the validator’s problems', () => {
    const bad = { lattice: [[1, 0], [2, 0]], joints: [{ id: 'A', at: [0, 0] }], bars: [] } as unknown as Framework;
    expect(() => phaseMap(bad, { grid: 8 })).toThrow(InputError);
  });
});
