/**
 * The sparse LDLᴴ (src/linalg/sparse-ldl): nested-dissection orderings, the symbolic analysis
 * against a brute-force elimination, inertia and solves against the dense eigenvalues (ml-matrix)
 * and the band factorisation on random sparse Hermitian matrices with clustered eigenvalues, and
 * whole counts through the sparse solver with the new factor against the dense solver.
 */
import Ajv2020 from 'ajv/dist/2020.js';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { EigenvalueDecomposition, LuDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { main, readTextFile } from '../src/cli/main.js';
import { denseSolver } from '../src/flex/solve-dense.js';
import { sparseSolver, sparseSpaces, type SparseStatus } from '../src/flex/solve-sparse.js';
import { SparseGramFactor } from '../src/flex/sparse/factors.js';
import { buildGallery } from '../src/framework/gallery.js';
import type { Framework } from '../src/framework/types.js';
import { bandFromDense, bandLdl, ldlSolve, reverseCuthillMcKee, type Graph } from '../src/linalg/banded.js';
import { analyse, analyseHermitian, hermitianFromDense, nestedDissection, sparseLdl } from '../src/linalg/sparse-ldl/index.js';
import { selectKth } from '../src/linalg/sparse-ldl/ordering.js';
import { parseBoundary } from '../src/supercell/boundary.js';
import { rigidityMatrix } from '../src/supercell/rigidity.js';
import { buildSupercell } from '../src/supercell/supercell.js';
import { beadFramework, denseReference } from './differential-helpers.js';
import { rng } from './helpers.js';

const EPS = 2 ** -52;

// ---------------------------------------------------------------------------------------------
// Random sparse Hermitian matrices

interface TestMatrix {
  re: number[][];
  im: number[][] | null;
  positions: Float64Array;
  /** Eigenvalues by ml-matrix (dense), ascending. */
  eig: number[];
  norm: number;
}

/**
 * n points in a square, joined when closer than r (a sparse, mesh-like pattern); random
 * couplings, the diagonal from `diagonal`. The first `cluster` unknowns get diagonal values
 * τ + 1e-7·k and couplings 1e-9 among themselves only, so about `cluster` eigenvalues lie within
 * ~1e-5 of τ, 1e-7 apart.
 */
function randomSparse(n: number, seed: number, complex: boolean, diagonal: (i: number, g: () => number) => number, tau: number, cluster: number): TestMatrix {
  const g = rng(seed);
  const side = Math.sqrt(n / 3);
  const positions = new Float64Array(2 * n);
  for (let i = 0; i < 2 * n; i++) positions[i] = g() * side;
  const re = Array.from({ length: n }, () => new Array<number>(n).fill(0));
  const im = complex ? Array.from({ length: n }, () => new Array<number>(n).fill(0)) : null;
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < i; j++) {
      const dx = positions[2 * i] - positions[2 * j];
      const dy = positions[2 * i + 1] - positions[2 * j + 1];
      if (dx * dx + dy * dy > 1.1) continue;
      const inCluster = i < cluster || j < cluster;
      if (inCluster && !(i < cluster && j < cluster)) continue;
      const scale = inCluster ? 1e-9 : 0.4;
      const a = scale * (g() - 0.5);
      re[i][j] = a;
      re[j][i] = a;
      if (im) {
        const b = scale * (g() - 0.5);
        im[i][j] = b;
        im[j][i] = -b;
      }
    }
  }
  for (let i = 0; i < n; i++) re[i][i] = i < cluster ? tau + 1e-7 * (i - cluster / 2) : diagonal(i, g);
  // eigenvalues: of the real embedding [[A, −B], [B, A]] (each twice) for a complex matrix
  let eig: number[];
  if (im) {
    const big = Matrix.zeros(2 * n, 2 * n);
    for (let i = 0; i < n; i++)
      for (let j = 0; j < n; j++) {
        big.set(i, j, re[i][j]);
        big.set(n + i, n + j, re[i][j]);
        big.set(i, n + j, -im[i][j]);
        big.set(n + i, j, im[i][j]);
      }
    const all = new EigenvalueDecomposition(big, { assumeSymmetric: true }).realEigenvalues.sort((a, b) => a - b);
    eig = all.filter((_, k) => k % 2 === 0);
  } else eig = new EigenvalueDecomposition(new Matrix(re), { assumeSymmetric: true }).realEigenvalues.sort((a, b) => a - b);
  const norm = Math.max(...eig.map(Math.abs));
  return { re, im, positions, eig, norm };
}

/** Shifts between adjacent eigenvalues (inside the cluster and across the spectrum), with the count below each. */
function shiftsOf(m: TestMatrix, tau: number): { shift: number; below: number }[] {
  const out: { shift: number; below: number }[] = [];
  const e = m.eig;
  const near = e.findIndex((x) => x > tau);
  const picks = new Set<number>([0, 1, Math.floor(e.length / 3), Math.floor(e.length / 2), e.length - 2]);
  for (let k = Math.max(0, near - 6); k < Math.min(e.length - 1, near + 6); k++) picks.add(k);
  for (const k of picks) {
    // a shift only where the gap is far wider than the rounding of the factorisation
    if (e[k + 1] - e[k] < 1e4 * e.length * EPS * m.norm) continue;
    out.push({ shift: (e[k] + e[k + 1]) / 2, below: k + 1 });
  }
  out.push({ shift: e[0] - 0.5, below: 0 });
  return out;
}

/** max |(A − shift·I)x − b| / (‖A‖·max|x|) for a solution x of (A − shift·I)x = b. */
function relativeResidual(m: TestMatrix, shift: number, x: [Float64Array, Float64Array | null], b: [Float64Array, Float64Array | null]): number {
  const n = m.re.length;
  let worst = 0;
  let xmax = 0;
  for (let i = 0; i < n; i++) xmax = Math.max(xmax, Math.abs(x[0][i]), x[1] ? Math.abs(x[1][i]) : 0);
  for (let i = 0; i < n; i++) {
    let sr = -shift * x[0][i];
    let si = x[1] ? -shift * x[1][i] : 0;
    for (let j = 0; j < n; j++) {
      const ar = m.re[i][j];
      const ai = m.im ? m.im[i][j] : 0;
      if (ar === 0 && ai === 0) continue;
      const xr = x[0][j];
      const xi = x[1] ? x[1][j] : 0;
      sr += ar * xr - ai * xi;
      si += ar * xi + ai * xr;
    }
    worst = Math.max(worst, Math.abs(sr - b[0][i]), Math.abs(si - (b[1] ? b[1][i] : 0)));
  }
  return worst / (m.norm * xmax);
}

const CASES = [
  { label: 'real, indefinite', n: 240, complex: false, diag: (_: number, g: () => number) => 4 * (g() - 0.5), tau: 0.2 },
  { label: 'real, positive definite', n: 220, complex: false, diag: (_: number, g: () => number) => 1.5 + g(), tau: 1.2 },
  { label: 'complex Hermitian, indefinite', n: 200, complex: true, diag: (_: number, g: () => number) => 4 * (g() - 0.5), tau: -0.3 },
  { label: 'complex Hermitian, positive definite', n: 200, complex: true, diag: (_: number, g: () => number) => 1.5 + g(), tau: 1.1 },
];

describe('sparse LDLᴴ on random sparse Hermitian matrices against the dense eigenvalues and the band', () => {
  CASES.forEach((c, idx) => {
    it(`${c.label} (n = ${c.n}, 30 eigenvalues clustered near τ): inertia at every shift, solves, growth`, () => {
      const m = randomSparse(c.n, 100 + idx, c.complex, c.diag, c.tau, 30);
      const H = hermitianFromDense(m.re, m.im ?? undefined);
      const band = bandFromDense(m.re, m.im ?? undefined);
      const shifts = shiftsOf(m, c.tau);
      // several shifts fall inside the cluster (gaps of 1e-7)
      expect(shifts.filter((s) => Math.abs(s.shift - c.tau) < 1e-5).length).toBeGreaterThanOrEqual(6);
      for (const positions of [m.positions, null]) {
        const sym = analyseHermitian(H, { positions, leafSize: 12 });
        for (const { shift, below } of shifts) {
          const F = sparseLdl(H, sym, { shift });
          const B = bandLdl(band, { shift });
          // keeping only the pivots changes nothing of them
          const P = sparseLdl(H, sym, { shift, keepL: false });
          expect(Array.from(P.d)).toEqual(Array.from(F.d));
          expect([P.negatives, P.growth, P.solvable, F.solvable]).toEqual([F.negatives, F.growth, false, true]);
          expect(() => P.solve(new Float64Array(c.n), c.complex ? new Float64Array(c.n) : null)).toThrow(/kept only its pivots/);
          expect(F.breakdown).toBeNull();
          expect(F.negatives, `shift ${shift}`).toBe(below);
          expect(B.negatives, `band at shift ${shift}`).toBe(below);
          expect(F.growth).toBeGreaterThanOrEqual(1 - 1e-12);
          if (below === 0) expect(F.growth).toBeCloseTo(1, 10); // positive definite: growth 1
        }
        // solves: one vector and a block of 20 (more than one chunk of 16), at a shift inside the spectrum
        const { shift } = shifts[Math.floor(shifts.length / 2)];
        const F = sparseLdl(H, sym, { shift });
        const g = rng(7 + idx);
        const rhs = Array.from({ length: 21 }, () => [Float64Array.from({ length: c.n }, () => g() - 0.5), c.complex ? Float64Array.from({ length: c.n }, () => g() - 0.5) : null] as [Float64Array, Float64Array | null]);
        const xs = rhs.map(([a, b]) => [a.slice(), b ? b.slice() : null] as [Float64Array, Float64Array | null]);
        F.solve(xs[0][0], xs[0][1]);
        F.solveBlock(
          xs.slice(1).map((x) => x[0]),
          c.complex ? xs.slice(1).map((x) => x[1]!) : null,
        );
        const bandX = [rhs[0][0].slice(), rhs[0][1] ? rhs[0][1].slice() : null] as [Float64Array, Float64Array | null];
        const Bf = bandLdl(band, { shift });
        // the band's solution agrees with the sparse one to the conditioning of A − shift·I
        let gap = Infinity;
        for (const e of m.eig) gap = Math.min(gap, Math.abs(e - shift));
        ldlSolve(Bf, bandX[0], bandX[1]);
        let diff = 0;
        let size = 0;
        for (let i = 0; i < c.n; i++) {
          diff = Math.max(diff, Math.abs(bandX[0][i] - xs[0][0][i]), bandX[1] ? Math.abs(bandX[1][i] - xs[0][1]![i]) : 0);
          size = Math.max(size, Math.abs(xs[0][0][i]));
        }
        expect(diff / size).toBeLessThan(1e4 * c.n * EPS * (m.norm / gap));
        for (let r = 0; r < rhs.length; r++) expect(relativeResidual(m, shift, xs[r], rhs[r])).toBeLessThan(1e-12);
      }
    });
  });

  it('a factor that kept only its pivots factors again, once, on its first solve (the same solution bit for bit)', () => {
    const m = randomSparse(200, 9, true, CASES[2].diag, CASES[2].tau, 30);
    const H = hermitianFromDense(m.re, m.im ?? undefined);
    const sym = analyseHermitian(H, { positions: m.positions, leafSize: 12 });
    const shift = shiftsOf(m, CASES[2].tau)[3].shift;
    let again = 0;
    const G = new SparseGramFactor(sparseLdl(H, sym, { shift, keepL: false }), () => {
      again++;
      return sparseLdl(H, sym, { shift });
    });
    const b = () => [Float64Array.from({ length: 200 }, (_, i) => Math.sin(i)), Float64Array.from({ length: 200 }, (_, i) => Math.cos(3 * i))] as const;
    const [xr, xi] = b();
    G.forSolves().solve(xr, xi);
    const [yr, yi] = b();
    sparseLdl(H, sym, { shift }).solve(yr, yi);
    expect(Array.from(xr)).toEqual(Array.from(yr));
    expect(Array.from(xi)).toEqual(Array.from(yi));
    expect(G.forSolves()).toBe(G.forSolves());
    expect(again).toBe(1);
  });

  it('a zero pivot is reported as a breakdown, and the input matrix is left alone', () => {
    // [[1, 1], [1, 1]] − 0: the second pivot is exactly 0
    const H = hermitianFromDense([
      [1, 1],
      [1, 1],
    ]);
    const before = H.re.slice();
    const F = sparseLdl(H, analyseHermitian(H), { shift: 0 });
    expect(F.breakdown).not.toBeNull();
    expect(F.breakdown!.pivot).toBe(0);
    expect(Array.from(H.re)).toEqual(Array.from(before));
    expect(() => F.solve(new Float64Array(2), null)).toThrow(/broke down/);
  });
});

// ---------------------------------------------------------------------------------------------
// The dense kernels: blocked solves and the blocked Crout factorisation

/** The dense solution of (A − shift·I) X = B for each column, through ml-matrix (a complex A by its real embedding). */
function denseSolve(m: TestMatrix, shift: number, b: [Float64Array, Float64Array | null][]): [Float64Array, Float64Array | null][] {
  const n = m.re.length;
  const complex = m.im !== null;
  const N = complex ? 2 * n : n;
  const M = Matrix.zeros(N, N);
  for (let i = 0; i < n; i++)
    for (let j = 0; j < n; j++) {
      const a = m.re[i][j] - (i === j ? shift : 0);
      M.set(i, j, a);
      if (complex) {
        M.set(n + i, n + j, a);
        M.set(i, n + j, -m.im![i][j]);
        M.set(n + i, j, m.im![i][j]);
      }
    }
  const rhs = Matrix.zeros(N, b.length);
  b.forEach(([re, im], q) => {
    for (let i = 0; i < n; i++) {
      rhs.set(i, q, re[i]);
      if (complex) rhs.set(n + i, q, im ? im[i] : 0);
    }
  });
  const x = new LuDecomposition(M).solve(rhs);
  return b.map((_, q) => [Float64Array.from({ length: n }, (_, i) => x.get(i, q)), complex ? Float64Array.from({ length: n }, (_, i) => x.get(n + i, q)) : null]);
}

/** max_i |x_i − y_i| / max_i |y_i| over both parts. */
function relDiff(x: [Float64Array, Float64Array | null], y: [Float64Array, Float64Array | null]): number {
  let num = 0;
  let den = 0;
  for (let i = 0; i < x[0].length; i++) {
    num = Math.max(num, Math.abs(x[0][i] - y[0][i]), x[1] ? Math.abs(x[1][i] - y[1]![i]) : 0);
    den = Math.max(den, Math.abs(y[0][i]), y[1] ? Math.abs(y[1][i]) : 0);
  }
  return num / den;
}

/** The midpoint of the widest gap between eigenvalues in the middle half of the spectrum (a well-conditioned indefinite shift), with the gap. */
function middleGapShift(eig: number[]): { shift: number; gap: number; below: number } {
  let best = { shift: 0, gap: -1, below: 0 };
  for (let k = Math.floor(eig.length / 4); k < Math.floor((3 * eig.length) / 4); k++) {
    const gap = eig[k + 1] - eig[k];
    if (gap > best.gap) best = { shift: (eig[k] + eig[k + 1]) / 2, gap: gap / 2, below: k + 1 };
  }
  return best;
}

/** Distinct supernode widths of an analysis. */
function widths(sym: ReturnType<typeof analyseHermitian>): Set<number> {
  const out = new Set<number>();
  for (let s = 0; s + 1 < sym.superStart.length; s++) out.add(sym.superStart[s + 1] - sym.superStart[s]);
  return out;
}

describe('the blocked kernels of the sparse LDLᴴ', () => {
  const KERNEL_CASES = [
    { label: 'real', n: 260, complex: false, seed: 301 },
    { label: 'complex Hermitian', n: 210, complex: true, seed: 302 },
  ];
  KERNEL_CASES.forEach(({ label, n, complex, seed }) => {
    it(`${label} (n = ${n}, supernodes of several widths): solveBlock with 1, 3, 4, 5, 16, 17, 37 columns equals single solves and the dense solve`, () => {
      const m = randomSparse(n, seed, complex, (_, g) => 4 * (g() - 0.5), 0, 0);
      const H = hermitianFromDense(m.re, m.im ?? undefined);
      // large leaves: wide supernodes (odd and even widths, so every remainder path of the kernels runs)
      const sym = analyseHermitian(H, { positions: m.positions, leafSize: 40 });
      const ws = widths(sym);
      expect(ws.size).toBeGreaterThanOrEqual(4);
      expect(Math.max(...ws)).toBeGreaterThanOrEqual(9);
      expect([...ws].some((w) => w % 2 === 1 && w > 1)).toBe(true);
      const { shift, gap, below } = middleGapShift(m.eig);
      const F = sparseLdl(H, sym, { shift });
      expect(F.breakdown).toBeNull();
      expect(F.negatives).toBe(below);
      const g = rng(seed + 1);
      const bound = 20 * n * EPS * (m.norm / gap); // rounding of two backward-stable solves, amplified by the conditioning
      const residualBound = 4 * n * EPS * Math.max(1, F.growth);
      for (const q of [1, 3, 4, 5, 16, 17, 37]) {
        const rhs = Array.from({ length: q }, () => [Float64Array.from({ length: n }, () => g() - 0.5), complex ? Float64Array.from({ length: n }, () => g() - 0.5) : null] as [Float64Array, Float64Array | null]);
        const block = rhs.map(([a, b]) => [a.slice(), b ? b.slice() : null] as [Float64Array, Float64Array | null]);
        F.solveBlock(
          block.map((x) => x[0]),
          complex ? block.map((x) => x[1]!) : null,
        );
        const dense = denseSolve(m, shift, rhs);
        for (let r = 0; r < q; r++) {
          const single: [Float64Array, Float64Array | null] = [rhs[r][0].slice(), rhs[r][1] ? rhs[r][1]!.slice() : null];
          F.solve(single[0], single[1]);
          expect(relDiff(block[r], single), `q = ${q}, column ${r} against its single solve`).toBeLessThan(bound);
          expect(relDiff(block[r], dense[r]), `q = ${q}, column ${r} against the dense solve`).toBeLessThan(bound);
          // a backward-stable solve: residual of order n·ε times the factor's growth (no pivoting)
          expect(relativeResidual(m, shift, block[r], rhs[r])).toBeLessThan(residualBound);
        }
      }
      expect(bound).toBeLessThan(1e-9); // the comparison means something
      expect(residualBound).toBeLessThan(1e-9); // growth of these random indefinite factors: ~100–1300
    });

    it(`${label}: the factor's L D Lᴴ reproduces A − shift·I entry by entry, and the inertia equals the dense eigenvalue count at shifted indefinite points`, () => {
      const m = randomSparse(n, seed + 10, complex, (_, g) => 4 * (g() - 0.5), 0, 0);
      const H = hermitianFromDense(m.re, m.im ?? undefined);
      const sym = analyseHermitian(H, { positions: m.positions, leafSize: 40 });
      expect(Math.max(...widths(sym))).toBeGreaterThanOrEqual(9);
      for (const frac of [0.2, 0.5, 0.8]) {
        // between two eigenvalues near the given fraction of the spectrum
        const k = Math.floor(frac * n);
        const shift = (m.eig[k - 1] + m.eig[k]) / 2;
        const F = sparseLdl(H, sym, { shift });
        expect(F.breakdown).toBeNull();
        expect(F.negatives, `shift ${shift}`).toBe(k);
        expect(F.growth).toBeGreaterThanOrEqual(1 - 1e-12);
        // dense L (new ordering) from the panels, then (L D Lᴴ)_ij against (A − shift·I)_(order i)(order j)
        const Lr = Array.from({ length: n }, () => new Float64Array(n));
        const Li = Array.from({ length: n }, () => new Float64Array(n));
        for (let s = 0; s + 1 < sym.superStart.length; s++) {
          const f = sym.superStart[s];
          const w = sym.superStart[s + 1] - f;
          for (let t = 0; t < sym.rowPtr[s + 1] - sym.rowPtr[s]; t++) {
            const i = sym.superRows[sym.rowPtr[s] + t];
            for (let c = 0; c < w && f + c < i; c++) {
              Lr[i][f + c] = F.re[F.panelPtr[s] + t * w + c];
              Li[i][f + c] = F.im ? F.im[F.panelPtr[s] + t * w + c] : 0;
            }
          }
        }
        for (let i = 0; i < n; i++) Lr[i][i] = 1;
        let worst = 0;
        let scale = 0;
        for (let i = 0; i < n; i++)
          for (let j = 0; j <= i; j++) {
            let sr = 0;
            let si = 0;
            let mag = 0;
            for (let c = 0; c <= j; c++) {
              // L_ic D_c conj(L_jc)
              const ar = Lr[i][c] * F.d[c];
              const ai = Li[i][c] * F.d[c];
              sr += ar * Lr[j][c] + ai * Li[j][c];
              si += ai * Lr[j][c] - ar * Li[j][c];
              mag += Math.hypot(ar, ai) * Math.hypot(Lr[j][c], Li[j][c]);
            }
            const oi = sym.order[i];
            const oj = sym.order[j];
            const er = m.re[oi][oj] - (i === j ? shift : 0);
            const ei = m.im ? m.im[oi][oj] : 0;
            worst = Math.max(worst, Math.hypot(sr - er, si - ei));
            scale = Math.max(scale, mag);
          }
        // the backward error of LDLᴴ: c·(dot length)·ε·max (|L||D||Lᴴ|)_ij (Higham 2002, ch. 10, from memory)
        expect(worst).toBeLessThan(4 * sym.dotLength * EPS * scale);
        expect(worst).toBeLessThan(1e-12 * Math.max(m.norm, scale));
      }
    });
  });

  it('a real factor solves complex right-hand sides (real and imaginary parts apart) as a complex solve would', () => {
    const n = 230;
    const m = randomSparse(n, 311, false, (_, g) => 4 * (g() - 0.5), 0, 0);
    const H = hermitianFromDense(m.re);
    const sym = analyseHermitian(H, { positions: m.positions, leafSize: 40 });
    const { shift, gap } = middleGapShift(m.eig);
    const F = sparseLdl(H, sym, { shift });
    const g = rng(312);
    const rhs = Array.from({ length: 6 }, () => [Float64Array.from({ length: n }, () => g() - 0.5), Float64Array.from({ length: n }, () => g() - 0.5)] as [Float64Array, Float64Array]);
    const xs = rhs.map(([a, b]) => [a.slice(), b.slice()] as [Float64Array, Float64Array]);
    F.solveBlock(
      xs.map((x) => x[0]),
      xs.map((x) => x[1]),
    );
    for (let r = 0; r < rhs.length; r++) {
      const re = rhs[r][0].slice();
      const im = rhs[r][1].slice();
      F.solve(re, null);
      F.solve(im, null);
      expect(relDiff(xs[r], [re, im])).toBeLessThan(20 * n * EPS * (m.norm / gap));
      expect(relativeResidual(m, shift, xs[r], rhs[r])).toBeLessThan(1e-13);
    }
  });

  it('solveBlock rejects mismatched right-hand sides with a message naming them', () => {
    const H = hermitianFromDense([
      [2, 1],
      [1, 3],
    ]);
    const F = sparseLdl(H, analyseHermitian(H));
    expect(() => F.solveBlock([new Float64Array(3)], null)).toThrow(/column 0 has length 3, the factor 2/);
    expect(() => F.solveBlock([new Float64Array(2), new Float64Array(2)], [new Float64Array(2)])).toThrow(/2 real parts but 1 imaginary/);
  });
});

// ---------------------------------------------------------------------------------------------
// Orderings and the symbolic analysis

/** The 5-point grid graph on k×k nodes, numbered row by row. */
function grid(k: number): Graph {
  const ptr = new Int32Array(k * k + 1);
  const adj: number[] = [];
  for (let y = 0; y < k; y++)
    for (let x = 0; x < k; x++) {
      if (x > 0) adj.push(y * k + x - 1);
      if (x + 1 < k) adj.push(y * k + x + 1);
      if (y > 0) adj.push((y - 1) * k + x);
      if (y + 1 < k) adj.push((y + 1) * k + x);
      ptr[y * k + x + 1] = adj.length;
    }
  return { n: k * k, ptr, adj: Int32Array.from(adj) };
}

/** Nonzeros of L (diagonal included) by eliminating a boolean pattern densely in `order`. */
function bruteForceNnzL(g: Graph, order: Int32Array): number {
  const n = g.n;
  const perm = new Int32Array(n);
  order.forEach((v, i) => (perm[v] = i));
  const P = Array.from({ length: n }, () => new Uint8Array(n));
  for (let v = 0; v < n; v++) for (let t = g.ptr[v]; t < g.ptr[v + 1]; t++) P[perm[v]][perm[g.adj[t]]] = 1;
  let nnz = 0;
  for (let k = 0; k < n; k++) {
    const below: number[] = [];
    for (let i = k + 1; i < n; i++) if (P[i][k]) below.push(i);
    nnz += 1 + below.length;
    for (const i of below) for (const j of below) P[i][j] = 1;
  }
  return nnz;
}

describe('nested dissection and the symbolic analysis', () => {
  it('the median of a cut is the value a full sort puts there, ties and all (quickselect)', () => {
    const rand = rng(23);
    for (let t = 0; t < 3000; t++) {
      const n = 1 + Math.floor(rand() * 80);
      // every third array drawn from 4 values: the duplicated coordinates of a lattice's rows
      const a = Float64Array.from({ length: n }, () => (t % 3 === 0 ? Math.floor(rand() * 4) : rand()));
      const k = Math.floor(rand() * n);
      const sorted = a.slice().sort();
      expect(selectKth(a, k)).toBe(sorted[k]);
    }
  });


  it('orderings are permutations; column counts equal a brute-force elimination; supernodes hold every column pattern', () => {
    const g = grid(15);
    const positions = new Float64Array(2 * g.n);
    for (let v = 0; v < g.n; v++) positions.set([v % 15, Math.floor(v / 15)], 2 * v);
    for (const pos of [positions, null]) {
      const order = nestedDissection(g, { positions: pos, leafSize: 8 });
      expect(Array.from(order).sort((a, b) => a - b)).toEqual(Array.from({ length: g.n }, (_, i) => i));
      const sym = analyse(g, order);
      let exact = 0;
      for (let j = 0; j < g.n; j++) exact += sym.colCount[j];
      expect(exact).toBe(bruteForceNnzL(g, order));
      // relaxed supernodes store at least the exact pattern
      expect(sym.nnzL).toBeGreaterThanOrEqual(exact);
      for (let s = 0; s + 1 < sym.superStart.length; s++) {
        const f = sym.superStart[s];
        expect(sym.rowPtr[s + 1] - sym.rowPtr[s]).toBeGreaterThanOrEqual(sym.colCount[f]);
      }
    }
  });

  it('on a 60×60 grid nested dissection does far fewer flops than the band of reverse Cuthill–McKee (George 1973: O(n^1.5) against O(n²))', () => {
    const g = grid(60);
    const positions = new Float64Array(2 * g.n);
    for (let v = 0; v < g.n; v++) positions.set([v % 60, Math.floor(v / 60)], 2 * v);
    // band flops Σ (bw+1)² of the reverse Cuthill–McKee numbering
    const rcm = reverseCuthillMcKee(g);
    const rank = new Int32Array(g.n);
    rcm.forEach((v, i) => (rank[v] = i));
    let bw = 0;
    for (let v = 0; v < g.n; v++) for (let t = g.ptr[v]; t < g.ptr[v + 1]; t++) bw = Math.max(bw, Math.abs(rank[v] - rank[g.adj[t]]));
    const bandFlops = g.n * (bw + 1) ** 2;
    for (const pos of [positions, null]) {
      const sym = analyse(g, nestedDissection(g, { positions: pos }));
      expect(sym.flops).toBeLessThan(bandFlops / 2);
    }
  });

  it('rejects positions of the wrong length and a non-permutation', () => {
    const g = grid(3);
    expect(() => nestedDissection(g, { positions: new Float64Array(5) })).toThrow(/2 per unknown/);
    expect(() => analyse(g, new Int32Array(9))).toThrow(/not a permutation/);
  });
});

// ---------------------------------------------------------------------------------------------
// Whole counts through the sparse solver with the sparse factor

const OPTIONS = { relative: 1e-9, memoryLimit: 1.5e9 };

function countsBoth(fw: Framework, cells: [number, number], bc: string) {
  const sc = buildSupercell(fw, cells, parseBoundary(bc));
  const R = rigidityMatrix(sc);
  const dense = denseSolver(sc, R, OPTIONS);
  const sparse = sparseSolver(sc, R, { ...OPTIONS, factor: 'sparse' } as typeof OPTIONS);
  return { R, dense, sparse };
}

describe('counts through the sparse solver with the sparse factor equal the dense solver', { timeout: 120_000 }, () => {
  it.each([
    ['gallery:kagome', 12, 'free'],
    ['gallery:twisted-kagome?twist=15', 12, 'free'],
    ['gallery:kagome', 12, 'pinned'],
    ['gallery:deformed-kagome?x1=0&x2=0&x3=0.003&z=0', 10, 'free'],
  ] as const)('%s, N = %i, %s: certified, the dense counts, factored by the sparse LDLᴴ', (spec, N, bc) => {
    const { R, dense, sparse } = countsBoth(buildGallery(spec), [N, N], bc);
    expect(dense.status.certified).toBe(true);
    expect(sparse.status.certified).toBe(true);
    expect(sparse.status.fallback).toBeNull();
    expect(R.cols - sparse.decision.rank).toBe(R.cols - dense.decision.rank);
    expect(R.rows - sparse.decision.rank).toBe(R.rows - dense.decision.rank);
    const f = (sparse.status as SparseStatus).factorisation;
    expect(f.method).toBe('sparse-ldl');
    expect(f.nnzL).toBeLessThan(f.bandNnzL);
  });

  it.each([
    [2.8e-3, 12],
    [1e-4, 10],
  ] as const)('bead framework (invented for testing; tests/differential-helpers.ts), d = %s, N = %i, free', (d, N) => {
    const sc = buildSupercell(beadFramework([{ d, along: 'x' }]), [N, N], parseBoundary('free'));
    const R = rigidityMatrix(sc);
    // the dense reference per connected component (exact; see tests/differential-helpers.ts)
    const ref = denseReference(R, OPTIONS.relative);
    const sparse = sparseSolver(sc, R, { ...OPTIONS, factor: 'sparse' } as typeof OPTIONS);
    expect(ref.certified).toBe(true);
    expect(sparse.status.certified).toBe(true);
    expect(sparse.status.fallback).toBeNull();
    expect(R.cols - sparse.decision.rank).toBe(ref.flexes);
    expect(R.rows - sparse.decision.rank).toBe(ref.selfStresses);
    expect((sparse.status as SparseStatus).factorisation.method).toBe('sparse-ldl');
  });

  it('a complex matrix (kagome 6×8, x twisted by 0.3, y free) through sparseSpaces without positions', () => {
    const sc = buildSupercell(buildGallery('gallery:kagome'), [6, 8], parseBoundary('x=twist:0.3,y=free'));
    const R = rigidityMatrix(sc);
    expect(R.im).not.toBeNull();
    const dense = denseSolver(sc, R, OPTIONS);
    const sparse = sparseSpaces(R, { ...OPTIONS, factor: 'sparse' });
    expect(sparse.status.certified).toBe(true);
    expect(sparse.decision.rank).toBe(dense.decision.rank);
    expect((sparse.status as SparseStatus).factorisation.reason).toMatch(/level structures/);
  });

  it('open kagome 24×24 and twisted kagome 24×24: the band and sparse factors give the same certified counts (kagome: 2(L1 + L2) − 1 = 95 flexes)', () => {
    // the free kagome count rule as in tests/sparse-solver.test.ts (Souslov, Liu & Lubensky, PRL 103, 205503, 2009, from memory)
    for (const spec of ['gallery:kagome', 'gallery:twisted-kagome?twist=15']) {
      const sc = buildSupercell(buildGallery(spec), [24, 24], parseBoundary('free'));
      const R = rigidityMatrix(sc);
      const band = sparseSolver(sc, R, { ...OPTIONS, factor: 'band' } as typeof OPTIONS);
      const sparse = sparseSolver(sc, R, { ...OPTIONS, factor: 'sparse' } as typeof OPTIONS);
      expect(band.status.certified && sparse.status.certified).toBe(true);
      expect(sparse.decision.rank).toBe(band.decision.rank);
      if (spec === 'gallery:kagome') expect(R.cols - sparse.decision.rank).toBe(2 * (24 + 24) - 1);
      expect((band.status as SparseStatus).factorisation.method).toBe('band');
      expect((sparse.status as SparseStatus).factorisation.method).toBe('sparse-ldl');
    }
  });

  it('bases from the sparse factor: ‖R v‖ within the tolerance and as many as the count', () => {
    const sc = buildSupercell(buildGallery('gallery:kagome'), [12, 12], parseBoundary('free'));
    const R = rigidityMatrix(sc);
    const s = sparseSolver(sc, R, { ...OPTIONS, factor: 'sparse' } as typeof OPTIONS);
    const flex = s.flexBasis();
    const stress = s.selfStressBasis();
    expect(flex.vectors.length).toBe(R.cols - s.decision.rank);
    expect(stress.vectors.length).toBe(R.rows - s.decision.rank);
    for (const v of flex.vectors) {
      let worst = 0;
      for (let r = 0; r < R.rows; r++) {
        let t = 0;
        for (let k = R.rowPtr[r]; k < R.rowPtr[r + 1]; k++) t += R.re[k] * v.re[R.colIdx[k]];
        worst += t * t;
      }
      expect(Math.sqrt(worst)).toBeLessThanOrEqual(s.decision.tolerance.absolute);
    }
  });
});

describe('count --json', { timeout: 120_000 }, () => {
  it('reports the factorisation under status, valid against schema/count.schema.json', async () => {
    let out = '';
    const code = await main(['count', 'gallery:kagome', '--cells', '40x40', '--bc', 'free', '--solver', 'sparse', '--json'], { out: (t) => (out += t), err: () => {}, readText: readTextFile });
    expect(code).toBe(0);
    const o = JSON.parse(out);
    const ajv = new Ajv2020({ strict: true, allowUnionTypes: true });
    const validate = ajv.compile(JSON.parse(readFileSync(join(import.meta.dirname, '..', 'schema', 'count.schema.json'), 'utf8')));
    expect(validate(o), ajv.errorsText(validate.errors)).toBe(true);
    expect(o.status.factorisation.method).toBe('sparse-ldl');
    expect(o.status.factorisation.flops).toBeLessThan(o.status.factorisation.bandFlops / 2);
    expect(o.flexes).toBe(2 * (40 + 40) - 1);
  });
});
