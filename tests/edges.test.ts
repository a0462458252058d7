/**
 * Edge physics from the symbol: the polynomial root finder, det Φ as a Laurent polynomial,
 * decay lengths, winding numbers, predicted and counted edge modes, and `shimmy edges`.
 */
import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { parseArgs } from '../src/cli/args.js';
import type { CliIO } from '../src/cli/command.js';
import { edgesCommand } from '../src/cli/edges.js';
import { determinantPolynomial } from '../src/edges/determinant.js';
import { edges } from '../src/edges/edges.js';
import { complexDeterminant, LaurentSymbol } from '../src/edges/laurent.js';
import { decaySpectrum } from '../src/edges/spectrum.js';
import { stripCount } from '../src/edges/strip.js';
import { axisWinding } from '../src/edges/winding.js';
import { InputError } from '../src/errors.js';
import { SymbolAssembler } from '../src/spectrum/symbol.js';
import { buildGallery } from '../src/framework/gallery.js';
import type { Framework } from '../src/framework/types.js';
import { polyEval, polynomialRoots, type Complex } from '../src/linalg/poly-roots.js';
import { INVENTED_WEYL, symbolDeterminant } from './fixtures/invented-lattices.js';

const DEG = Math.PI / 180;
const deformed = (x1: number, x2: number, x3: number, z = 0) => buildGallery(`gallery:deformed-kagome?x1=${x1}&x2=${x2}&x3=${x3}&z=${z}`);
const twisted = (deg: number) => buildGallery(`gallery:twisted-kagome?twist=${deg}`);

/** Coefficients (low power first) of Π (z − r). */
function fromRoots(roots: Complex[]): { re: Float64Array; im: Float64Array } {
  let re = [1];
  let im = [0];
  for (const [a, b] of roots) {
    const nr = new Array(re.length + 1).fill(0);
    const ni = new Array(re.length + 1).fill(0);
    for (let k = 0; k < re.length; k++) {
      nr[k + 1] += re[k];
      ni[k + 1] += im[k];
      nr[k] -= a * re[k] - b * im[k];
      ni[k] -= a * im[k] + b * re[k];
    }
    re = nr;
    im = ni;
  }
  return { re: Float64Array.from(re), im: Float64Array.from(im) };
}

/** Largest distance from each expected root to the nearest found root (and the counts agree). */
function rootError(found: Complex[], expected: Complex[]): number {
  expect(found.length).toBe(expected.length);
  let worst = 0;
  const used = new Set<number>();
  for (const e of expected) {
    let best = Infinity;
    let bi = -1;
    found.forEach((f, i) => {
      if (used.has(i)) return;
      const d = Math.hypot(f[0] - e[0], f[1] - e[1]);
      if (d < best) {
        best = d;
        bi = i;
      }
    });
    used.add(bi);
    worst = Math.max(worst, best);
  }
  return worst;
}

describe('polynomial roots (Aberth–Ehrlich)', () => {
  it('finds the roots of polynomials built from known roots', () => {
    const cases: Complex[][] = [
      [[1, 0], [2, 0], [3, 0]],
      [[0, 1], [-2, 1], [0.5, -0.25], [3, 4]],
      [[1e-3, 0], [1e3, 0], [-1, 1]],
    ];
    for (const roots of cases) {
      const c = fromRoots(roots);
      const scale = Math.max(...roots.map((r) => Math.hypot(r[0], r[1])));
      expect(rootError(polynomialRoots(c.re, c.im), roots)).toBeLessThan(1e-12 * scale);
    }
  });

  it('gives the n-th roots of unity for z^n − 1 (closed form)', () => {
    for (const n of [2, 5, 12]) {
      const re = new Float64Array(n + 1);
      re[0] = -1;
      re[n] = 1;
      const expected: Complex[] = Array.from({ length: n }, (_, k) => [Math.cos((2 * Math.PI * k) / n), Math.sin((2 * Math.PI * k) / n)]);
      expect(rootError(polynomialRoots(re, new Float64Array(n + 1)), expected)).toBeLessThan(1e-13);
    }
  });

  it('finds a double root to about √ε (common practice: multiplicity k costs a factor 1/k in digits)', () => {
    const roots: Complex[] = [[0.5, 0.2], [0.5, 0.2], [-1, 0]];
    const c = fromRoots(roots);
    expect(rootError(polynomialRoots(c.re, c.im), roots)).toBeLessThan(1e-6);
  });

  it('agrees with numpy.roots on a random complex polynomial (NumPy: Harris et al., Nature 585, 357 (2020))', (ctx) => {
    const d = 14;
    let s = 7;
    const rnd = () => ((s = (s * 16807) % 2147483647) / 2147483647) * 2 - 1;
    const re = Float64Array.from({ length: d + 1 }, rnd);
    const im = Float64Array.from({ length: d + 1 }, rnd);
    // numpy.roots takes the highest power first; exit code 3 when numpy is missing
    const script =
      'import json,sys\ntry:\n import numpy as np\nexcept ImportError:\n sys.exit(3)\nc=json.load(sys.stdin)\nr=np.roots(np.array(c["re"][::-1])+1j*np.array(c["im"][::-1]))\nprint(json.dumps([[float(x.real),float(x.imag)] for x in r]))';
    const p = spawnSync('python3', ['-c', script], { input: JSON.stringify({ re: Array.from(re), im: Array.from(im) }), encoding: 'utf8' });
    if (p.error || p.status === 3) {
      ctx.skip(p.error ? `python3 could not be started (${p.error.message})` : 'python3 has no numpy');
      return;
    }
    expect(p.status).toBe(0);
    const ref = JSON.parse(p.stdout) as Complex[];
    expect(rootError(polynomialRoots(re, im), ref)).toBeLessThan(1e-9);
    for (const z of polynomialRoots(re, im)) {
      const { p: v } = polyEval(re, im, z[0], z[1]);
      expect(Math.hypot(v[0], v[1])).toBeLessThan(1e-12 * Math.max(1, Math.hypot(z[0], z[1]) ** d));
    }
  }, 30_000);

  it('computes the determinant of a complex matrix (closed form 2×2 and triangular)', () => {
    // [[1+i, 2], [3, 4−i]]: det = (1+i)(4−i) − 6 = −1 + 3i
    expect(complexDeterminant(Float64Array.of(1, 2, 3, 4), Float64Array.of(1, 0, 0, -1), 2).map((v) => +v.toFixed(12))).toEqual([-1, 3]);
    // triangular: the product of the diagonal, (2i)(3)(−1+i) = −6 − 6i
    const d = complexDeterminant(Float64Array.of(0, 5, 7, 0, 3, 1, 0, 0, -1), Float64Array.of(2, 1, 0, 0, 0, 2, 0, 0, 1), 3);
    expect(d[0]).toBeCloseTo(-6, 12);
    expect(d[1]).toBeCloseTo(-6, 12);
  });
});

describe('det Φ as a Laurent polynomial in the transverse variable', () => {
  it('regular kagome: det Φ ∝ (1 − z1)(1 − 1/z2)(1 − z1/z2), so the roots at an edge phase are z2 = 1 and z2 = z1, on the unit circle (bulk lines q·a2 = 0 and q·(a2 − a1) = 0; zero lines of the kagome: Sun, Souslov, Mao & Lubensky, PNAS 109, 12369 (2012); polynomial derived by hand, common practice)', () => {
    const fw = buildGallery('gallery:kagome');
    for (const theta of [0.25, 0.1, 0.4]) {
      const z1: Complex = [Math.cos(2 * Math.PI * theta), Math.sin(2 * Math.PI * theta)];
      const poly = determinantPolynomial(new LaurentSymbol(fw, 'a1', theta));
      expect([poly.lo, poly.hi]).toEqual([-2, 0]);
      // coefficients of z2^0, z2^−1, z2^−2 are proportional to 1, −(1 + z1), z1
      const [c2r, c1r, c0r] = poly.coeffRe;
      const [c2i, c1i, c0i] = poly.coeffIm;
      const ratio = (ar: number, ai: number): Complex => {
        const d = c0r * c0r + c0i * c0i;
        return [(ar * c0r + ai * c0i) / d, (ai * c0r - ar * c0i) / d];
      };
      const r1 = ratio(c1r, c1i);
      const r2 = ratio(c2r, c2i);
      expect(r1[0]).toBeCloseTo(-(1 + z1[0]), 10);
      expect(r1[1]).toBeCloseTo(-z1[1], 10);
      expect(r2[0]).toBeCloseTo(z1[0], 10);
      expect(r2[1]).toBeCloseTo(z1[1], 10);
      const s = decaySpectrum(fw, 'a1', theta);
      expect(s.bulk).toBe(2);
      expect(s.predictedLow).toBeNull();
      expect(rootError(s.roots.map((r) => r.z), [[1, 0], z1])).toBeLessThan(1e-9);
    }
    // at θ1 = 0 the factor (1 − z1) vanishes: det Φ is zero for every z2 (the line q·a1 = 0)
    const zero = decaySpectrum(fw, 'a1', 0);
    expect(zero.identicallyZero).toBe(true);
    expect(zero.predictedLow).toBeNull();
    const w = axisWinding(fw, 2);
    expect(w.value).toBeNull();
    expect(w.note).toMatch(/zero line/);
  });

  it('mode shapes are kernel vectors of Φ(z) at each root', () => {
    const fw = deformed(0.1, -0.1, 0.1);
    const L = new LaurentSymbol(fw, 'a1', 0.3183);
    for (const r of decaySpectrum(fw, 'a1', 0.3183).roots) {
      const phi = L.evaluate(r.z[0], r.z[1]);
      let res = 0;
      let fro = 0;
      for (let i = 0; i < L.rows; i++) {
        let sr = 0;
        let si = 0;
        for (let c = 0; c < L.cols; c++) {
          const ar = phi.re[i * L.cols + c];
          const ai = phi.im[i * L.cols + c];
          fro += ar * ar + ai * ai;
          sr += ar * r.mode.re[c] - ai * r.mode.im[c];
          si += ar * r.mode.im[c] + ai * r.mode.re[c];
        }
        res += sr * sr + si * si;
      }
      const norm = Math.hypot(...r.mode.re, ...r.mode.im);
      expect(norm).toBeCloseTo(1, 10);
      expect(Math.sqrt(res / fro)).toBeLessThan(1e-10);
    }
  });
});

describe('decay lengths', () => {
  it('twisted kagome at the zone edge: ξ = 1/asinh(2 tan 2α/√3) rows, one root per edge (closed form for this construction, computed independently from the model of Sun, Souslov, Mao & Lubensky, PNAS 109, 12369 (2012), volume from memory)', () => {
    for (const alpha of [Math.PI / 12, 0.1, 0.5]) {
      const s = decaySpectrum(twisted(alpha / DEG), 'a1', 0.5);
      const xi = 1 / Math.asinh((2 * Math.tan(2 * alpha)) / Math.sqrt(3));
      expect(s.low).toBe(1);
      expect(s.high).toBe(1);
      for (const r of s.roots) expect(r.decayCells).toBeCloseTo(xi, 9);
    }
    // the numbers of the reference note for α = 15°: 1.59963 rows
    expect(decaySpectrum(twisted(15), 'a1', 0.5).roots[0].decayCells).toBeCloseTo(1.59963, 5);
  });

  it('twisted kagome off the zone edge: κd = |Re arccosh(S/2)| (closed form for this construction, computed independently; Sun, Souslov, Mao & Lubensky, PNAS 109, 12369 (2012))', () => {
    const alpha = Math.PI / 12;
    const s2 = Math.sin(2 * alpha);
    const c2 = Math.cos(2 * alpha);
    for (const theta of [0.25, 0.1, 0.05]) {
      const k = 2 * Math.PI * theta;
      // S = [s(3 − cos k) + i√3 c sin k] / [s cos(k/2) + i√3 c sin(k/2)]
      const nr = s2 * (3 - Math.cos(k));
      const ni = Math.sqrt(3) * c2 * Math.sin(k);
      const dr = s2 * Math.cos(k / 2);
      const di = Math.sqrt(3) * c2 * Math.sin(k / 2);
      const dd = dr * dr + di * di;
      const wr = (nr * dr + ni * di) / dd / 2;
      const wi = (ni * dr - nr * di) / dd / 2;
      // |Re arccosh w| = |ln|w + √(w − 1)·√(w + 1)||
      const sq = (x: number, y: number): Complex => {
        const m = Math.hypot(x, y);
        const r = Math.sqrt((m + x) / 2);
        return [r, r === 0 ? Math.sqrt(m) : y / (2 * r)];
      };
      const [ar, ai] = sq(wr - 1, wi);
      const [br, bi] = sq(wr + 1, wi);
      const kappa = Math.abs(Math.log(Math.hypot(wr + ar * br - ai * bi, wi + ar * bi + ai * br)));
      const s = decaySpectrum(twisted(15), 'a1', theta);
      expect(s.roots.length).toBe(2);
      for (const r of s.roots) expect(r.decayCells).toBeCloseTo(1 / kappa, 8);
    }
    // the reference values 1.72136, 2.43901, 4.01818 rows at θ = 0.25, 0.1, 0.05
    expect(decaySpectrum(twisted(15), 'a1', 0.25).roots[0].decayCells).toBeCloseTo(1.72136, 5);
    expect(decaySpectrum(twisted(15), 'a1', 0.1).roots[0].decayCells).toBeCloseTo(2.43901, 5);
    expect(decaySpectrum(twisted(15), 'a1', 0.05).roots[0].decayCells).toBeCloseTo(4.01818, 5);
  });

  it('twisted kagome: κ → |q| as the edge wave number goes to 0 (conformal limit, Sun, Souslov, Mao & Lubensky, PNAS 109, 12369 (2012))', () => {
    const fw = twisted(15);
    const theta = 1e-3;
    const s = decaySpectrum(fw, 'a1', theta);
    const q = (2 * Math.PI * theta) / Math.hypot(...fw.lattice[0]);
    expect(s.roots.length).toBe(2);
    for (const r of s.roots) expect(Math.abs(1 / (r.decayLength as number) - q) / q).toBeLessThan(0.01);
  });

  it('deformed kagome (0.1, −0.1, 0.1, 0): two bottom roots, ξ = 2.0325 (twice) at θ = 0.5, 1.9832 and 2.2228 at 0.3183, 1.9798 and 10.651 at 0.1 (roots of det Φ computed independently with numpy, reference note for Kane & Lubensky, Nature Physics 10, 39 (2014))', () => {
    const fw = deformed(0.1, -0.1, 0.1);
    const cases: [number, number[]][] = [
      [0.5, [2.0325, 2.0325]],
      [0.3183, [1.9832, 2.2228]],
      [0.1, [1.9798, 10.651]],
    ];
    for (const [theta, xi] of cases) {
      const r = edges({ framework: fw, phase: theta, grid: 0, strip: 0 });
      expect(r.sides.bottom.predicted).toBe(2);
      expect(r.sides.top.predicted).toBe(0);
      expect(r.sides.bottom.decayLengths.length).toBe(2);
      r.sides.bottom.decayLengths.forEach((x, i) => expect(Math.abs(x - xi[i]) / xi[i]).toBeLessThan(5e-4));
      // in length units: times the row spacing √3/2 of this lattice
      r.sides.bottom.decayLengthsInLength.forEach((x, i) => expect(x).toBeCloseTo(r.sides.bottom.decayLengths[i] * (Math.sqrt(3) / 2), 12));
    }
  });
});

describe('the ξ(θ) table', () => {
  it('is symmetric under θ → 1 − θ for a real framework (Φ(−θ) = conj Φ(θ), common practice) and lists each phase\'s roots by side', () => {
    const r = edges({ framework: deformed(0.1, -0.1, 0.1), grid: 8, strip: 0 });
    expect(r.grid.map((g) => g.theta)).toEqual([0, 1, 2, 3, 4, 5, 6, 7].map((k) => k / 8));
    for (let k = 1; k < 8; k++) {
      const [a, b] = [r.grid[k], r.grid[8 - k]];
      expect(b.low.length).toBe(a.low.length);
      a.low.forEach((x, i) => expect(b.low[i]).toBeCloseTo(x, 8));
      expect([a.predictedLow, a.predictedHigh]).toEqual([2, 0]);
    }
    // θ = 0: the translations put a double root on the unit circle, so no prediction there
    expect(r.grid[0].bulk).toBe(2);
    expect(r.grid[0].predictedLow).toBeNull();
  });
});

describe('windings, polarisation and edge counts (Kane & Lubensky, Nature Physics 10, 39 (2014); table computed independently with numpy in the reference note)', () => {
  const table: [string, Framework, [number, number], [number, number, number, number]][] = [
    ['(0.1, 0.1, 0.1, 0)', deformed(0.1, 0.1, 0.1), [1, -1], [1, 1, 1, 1]],
    ['(−0.1, 0.1, 0.1, 0)', deformed(-0.1, 0.1, 0.1), [0, -1], [1, 1, 0, 2]],
    ['(0.1, −0.1, 0.1, 0)', deformed(0.1, -0.1, 0.1), [1, 0], [2, 0, 1, 1]],
    ['(0.1, 0.1, −0.1, 0)', deformed(0.1, 0.1, -0.1), [2, -2], [0, 2, 2, 0]],
    ['(0.1, −0.1, −0.1, 0)', deformed(0.1, -0.1, -0.1), [2, -1], [1, 1, 2, 0]],
    ['twisted kagome 15°', twisted(15), [1, -1], [1, 1, 1, 1]],
  ];
  for (const [label, fw, n, sides] of table) {
    it(`${label}: windings (${n.join(', ')}), edges bottom/top/left/right ${sides.join('/')}`, () => {
      const r = edges({ framework: fw, phase: 0.3183, grid: 0, strip: 0 });
      expect(r.winding).toEqual(n);
      const [a1, a2] = fw.lattice;
      expect(r.polarisation![0]).toBeCloseTo(n[0] * a1[0] + n[1] * a2[0], 12);
      expect(r.polarisation![1]).toBeCloseTo(n[0] * a1[1] + n[1] * a2[1], 12);
      const got = [r.sides.bottom, r.sides.top, r.sides.left, r.sides.right];
      expect(got.map((s) => s.predicted)).toEqual(sides);
      expect(got.map((s) => s.fromWinding)).toEqual(sides);
      // Laurent span of det Φ: −2..0 in z2 and 0..2 in z1 for this family (reference note)
      expect(r.spectra.a1.span).toEqual([-2, 0]);
      expect(r.spectra.a2.span).toEqual([0, 2]);
    });
  }

  it('the winding along θ2 equals lo + (roots inside the unit circle) at every edge phase (argument principle)', () => {
    const fw = deformed(0.1, 0.1, -0.1);
    const n2 = axisWinding(fw, 2).value!;
    for (const theta of [0.05, 0.3, 0.77]) {
      const s = decaySpectrum(fw, 'a1', theta);
      expect(s.span![0] + s.low).toBe(n2);
    }
  });

  it('twisted-like deformed kagome (0.1, 0.1, 0.1, 0.05) keeps (1, −1) and one mode per edge (reference note, computed independently)', () => {
    const r = edges({ framework: deformed(0.1, 0.1, 0.1, 0.05), phase: 0.2, grid: 0, strip: 0 });
    expect(r.winding).toEqual([1, -1]);
    expect([r.sides.bottom.predicted, r.sides.top.predicted]).toEqual([1, 1]);
  });
});

describe('strips as an independent count of modes per side', () => {
  it('deformed kagome (0.1, −0.1, 0.1, 0), 1×40 strip at θ = 0.3183: 2 flexes, projector weight 2/0 bottom/top, as predicted (reference note strip check)', () => {
    const fw = deformed(0.1, -0.1, 0.1);
    const st = stripCount(fw, 'a1', 0.3183, 40);
    expect(st.flexes).toBe(2);
    expect(st.selfStresses).toBe(0);
    expect(st.weightLow).toBeCloseTo(2, 3);
    expect(st.weightHigh).toBeCloseTo(0, 3);
  });

  it('twisted kagome 15°: 1/1 per side, as predicted (Sun, Souslov, Mao & Lubensky, PNAS 109, 12369 (2012): one surface mode per edge)', () => {
    const r = edges({ framework: twisted(15), phase: 0.3183, grid: 0, strip: 40 });
    expect(r.strip!.flexes).toBe(2);
    expect(r.strip!.weightLow).toBeCloseTo(r.sides.bottom.predicted!, 3);
    expect(r.strip!.weightHigh).toBeCloseTo(r.sides.top.predicted!, 3);
  });

  it('left/right edges through an a2 strip: (−0.1, 0.1, 0.1, 0) puts 0 on the left and 2 on the right, as predicted', () => {
    const r = edges({ framework: deformed(-0.1, 0.1, 0.1), phase: 0.3, along: 'a2', grid: 0, strip: 40 });
    expect(r.strip!.cells).toEqual([40, 1]);
    expect(r.strip!.flexes).toBe(2);
    expect(r.strip!.weightLow).toBeCloseTo(r.sides.left.predicted!, 3);
    expect(r.strip!.weightHigh).toBeCloseTo(r.sides.right.predicted!, 3);
    expect([r.sides.left.predicted, r.sides.right.predicted]).toEqual([0, 2]);
    expect(r.sides.left.counted).toBe(r.strip!.weightLow);
    expect(r.sides.bottom.counted).toBeNull();
  });

  it('pinned edges: flexes − self-stresses = predicted − bars crossing per cell, counted by a strip pinned on both sides', () => {
    // Counting (derived here): a pinned edge keeps, grounded, the Σ|s⊥| bar copies per cell that the free
    // edge drops, so its index is the free one minus that. Kane & Lubensky, Nature Physics 10, 39 (2014):
    // an edge's zero modes and self-stresses are counted together, and the polarised lattice's edge
    // without free floppy modes carries the self-stresses when pinned.
    for (const [fw, along, phase] of [
      [deformed(0.1, -0.1, 0.1), 'a1', 0.3183],
      [deformed(-0.1, 0.1, 0.1), 'a2', 0.3],
      [twisted(15), 'a1', 0.2],
    ] as const) {
      const r = edges({ framework: fw, phase, along, grid: 0, strip: 40 });
      const [lo, hi] = along === 'a1' ? (['bottom', 'top'] as const) : (['left', 'right'] as const);
      const c = fw.bars.reduce((s, b) => s + Math.abs(b.shift[along === 'a1' ? 1 : 0]), 0);
      expect(r.crossing[along]).toBe(c);
      for (const side of [lo, hi]) expect(r.sides[side].pinned.index).toBe(r.sides[side].predicted! - c);
      const st = r.pinnedStrip!;
      expect(st.certified).toBe(true);
      // both sides pinned: index −2c in all; no bulk zero at this phase, so every mode is an edge self-stress
      expect(st.flexes).toBe(0);
      expect(st.selfStresses).toBe(r.sides[lo].pinned.selfStresses! + r.sides[hi].pinned.selfStresses!);
      expect(st.stressWeightLow).toBeCloseTo(r.sides[lo].pinned.selfStresses!, 3);
      expect(st.stressWeightHigh).toBeCloseTo(r.sides[hi].pinned.selfStresses!, 3);
      expect(r.sides[lo].pinned.counted).toBe(st.stressWeightLow);
    }
    // the polarised lattice: free bottom has both modes, so the pinned top has both self-stresses
    const p = edges({ framework: deformed(0.1, -0.1, 0.1), phase: 0.3183, grid: 0, strip: 0 });
    expect([p.sides.bottom.pinned.selfStresses, p.sides.top.pinned.selfStresses]).toEqual([0, 2]);
    expect(p.pinnedStrip).toBeNull();
  });

  it('a free 2D sample counts per side what the symbol predicts, up to a deviation that does not grow with N (Sun, Souslov, Mao & Lubensky, PNAS 109, 12369 (2012): one surface mode per edge per wave number)', () => {
    const fw = twisted(20);
    for (const N of [8, 14]) {
      const r = edges({ framework: fw, phase: 0.25, grid: 0, strip: 0, cells: [N, N] });
      expect(r.sample!.certified).toBe(true);
      let total = 0;
      for (const side of ['bottom', 'top', 'left', 'right'] as const) {
        const f = r.sides[side].finite!;
        expect(f.length).toBe(N);
        expect(f.expected).toBe(N - 1); // one mode per wave number k/N, k = 1 … N − 1
        expect(Math.abs(f.deviation!)).toBeLessThan(1);
        total += f.weight;
      }
      // the side weights share out the non-trivial flexes exactly
      expect(total).toBeCloseTo(r.sample!.flexes - r.sample!.trivial, 8);
      // reference note §4: a free L×L twisted kagome has 2(L + L) − 1 flexes
      expect(r.sample!.flexes).toBe(4 * N - 1);
    }
    expect(edges({ framework: fw, grid: 0, strip: 0 }).sides.top.finite).toBeNull();
    expect(() => edges({ framework: fw, grid: 0, strip: 0, cells: [0, 4] })).toThrow(/cells/);
  });

  it('only the phase modulo 1 matters (the strip and the roots at 1.3 and −0.7 match those at 0.3)', () => {
    const fw = deformed(-0.1, 0.1, 0.1);
    const a = edges({ framework: fw, phase: 0.3, along: 'a2', grid: 0, strip: 12 });
    for (const phase of [1.3, -0.7]) {
      const b = edges({ framework: fw, phase, along: 'a2', grid: 0, strip: 12 });
      expect(b.phase).toBe(phase);
      expect(b.strip!.weightHigh).toBeCloseTo(a.strip!.weightHigh, 8);
      b.sides.right.decayLengths.forEach((x, i) => expect(x).toBeCloseTo(a.sides.right.decayLengths[i], 8));
    }
  });
});

describe('invariance under the choice of unit cell', () => {
  /** Move joint `id` by +a2 (re-anchoring its bars), reverse one shifted bar, and list the joints in reverse order. */
  function recut(fw: Framework, id: string): Framework {
    const [, a2] = fw.lattice;
    const joints = fw.joints.map((j) => (j.id === id ? { id: j.id, at: [j.at[0] + a2[0], j.at[1] + a2[1]] as [number, number] } : { ...j })).reverse();
    const bars = fw.bars.map((b) => {
      let s: [number, number] = [b.shift[0], b.shift[1]];
      // old `id` in cell c is the moved joint in cell c − e2
      if (b.to === id) s = [s[0], s[1] - 1];
      if (b.from === id) s = [s[0], s[1] + 1];
      return { from: b.from, to: b.to, shift: s };
    });
    // a bar with a shift, away from `id`: reversing it multiplies its row by z^−shift
    const k = bars.findIndex((b) => b.from !== id && b.to !== id && (b.shift[0] !== 0 || b.shift[1] !== 0));
    const r = bars[k];
    bars[k] = { from: r.to, to: r.from, shift: [-r.shift[0], -r.shift[1]] };
    return { ...fw, joints, bars };
  }

  it('per-edge counts and decay lengths stay; the windings (cell gauge) move', () => {
    for (const fw of [deformed(0.1, -0.1, 0.1), deformed(0.1, 0.1, -0.1), twisted(15)]) {
      const moved = recut(fw, 'C');
      const a = edges({ framework: fw, phase: 0.3183, grid: 0, strip: 0 });
      const b = edges({ framework: moved, phase: 0.3183, grid: 0, strip: 0 });
      for (const side of ['bottom', 'top', 'left', 'right'] as const) {
        expect(b.sides[side].predicted).toBe(a.sides[side].predicted);
        expect(b.sides[side].fromWinding).toBe(a.sides[side].fromWinding);
        b.sides[side].decayLengths.forEach((x, i) => expect(x).toBeCloseTo(a.sides[side].decayLengths[i], 8));
      }
      expect(b.winding).not.toEqual(a.winding);
    }
  });
});

describe('charged zeros of an invented Maxwell lattice (Rocklin, Chen, Falk, Vitelli & Lubensky, PRL 116, 135503 (2016): Weyl points carry a charge and the edge count jumps by it across their projection)', () => {
  // invented: 3 joints, 6 bars (Maxwell), chosen for det Φ having isolated zeros
  const weyl = INVENTED_WEYL;

  const detAt = symbolDeterminant;

  /** Summed arg increments of det along a polyline of phases, in turns of 2π. */
  function windingAlong(a: SymbolAssembler, pts: [number, number][]): number {
    let total = 0;
    let prev = detAt(a, ...pts[0]);
    for (let k = 1; k < pts.length; k++) {
      const d = detAt(a, ...pts[k]);
      total += Math.atan2(prev[0] * d[1] - prev[1] * d[0], prev[0] * d[0] + prev[1] * d[1]);
      prev = d;
    }
    return total / (2 * Math.PI);
  }

  it('n1 depends on θ2, is reported undefined, and jumps by the charges of the zeros between the cycles; the left-edge count jumps with it', () => {
    const r = edges({ framework: weyl, phase: 0.3, along: 'a2', grid: 0, strip: 0 });
    expect(r.winding).toBeNull();
    expect(r.windingNote).toMatch(/depends on the transverse phase/);
    const a = new SymbolAssembler(weyl);
    // charges: counter-clockwise winding of det around each plaquette of a G×G grid
    const G = 64;
    const sub = 6;
    const charges: { t2: number; q: number }[] = [];
    for (let i2 = 0; i2 < G; i2++)
      for (let i1 = 0; i1 < G; i1++) {
        const pts: [number, number][] = [];
        // offset so that Γ (where det vanishes to second order: the translations) is inside a plaquette
        const [x0, y0, h] = [(i1 + 0.37) / G, (i2 + 0.41) / G, 1 / G];
        for (let k = 0; k < sub; k++) pts.push([x0 + (h * k) / sub, y0]);
        for (let k = 0; k < sub; k++) pts.push([x0 + h, y0 + (h * k) / sub]);
        for (let k = 0; k < sub; k++) pts.push([x0 + h - (h * k) / sub, y0 + h]);
        for (let k = 0; k <= sub; k++) pts.push([x0, y0 + h - (h * k) / sub]);
        const q = Math.round(windingAlong(a, pts));
        if (q !== 0) charges.push({ t2: (y0 + h / 2) % 1, q });
      }
    expect(charges.length).toBeGreaterThan(0);
    // they come in opposite pairs: the total charge on the torus is 0
    expect(charges.reduce((s, c) => s + c.q, 0)).toBe(0);
    const samples = r.windingByAxis[0].samples;
    for (let k = 0; k + 1 < samples.length; k++) {
      const [lo, hi] = [samples[k], samples[k + 1]];
      // the band between the two θ1 cycles: its boundary winding is n1(lo) − n1(hi)
      const enclosed = charges.filter((c) => c.t2 > lo.transverse && c.t2 < hi.transverse).reduce((s, c) => s + c.q, 0);
      expect(lo.winding! - hi.winding!).toBe(enclosed);
      // left edge (|z1| < 1) at edge phases θ2 = lo, hi: the count changes by the same amount
      const left = (t: number) => decaySpectrum(weyl, 'a2', t).predictedLow!;
      expect(left(lo.transverse) - left(hi.transverse)).toBe(enclosed);
    }
    // the windings themselves, summed independently on a fine uniform θ1 cycle
    for (const smp of samples) {
      const pts: [number, number][] = Array.from({ length: 4001 }, (_, k) => [k / 4000, smp.transverse]);
      expect(Math.round(windingAlong(a, pts))).toBe(smp.winding);
    }
  });
});

describe('non-square symbols', () => {
  it('honeycomb (3 bars, 4 columns): no determinant, windings and predictions undefined, said so', () => {
    const r = edges({ framework: buildGallery('gallery:honeycomb'), phase: 0.3, grid: 0, strip: 0 });
    expect(r.square).toBe(false);
    expect(r.winding).toBeNull();
    expect(r.windingNote).toMatch(/not square/);
    expect(r.sides.bottom.predicted).toBeNull();
    expect(r.spectra.a1.note).toMatch(/not square/);
  });
});

function fakeIO(): CliIO & { text: () => string } {
  let out = '';
  return { out: (t) => (out += t), err: () => undefined, readText: () => '', text: () => out };
}

function cliRun(argv: string[]): string {
  const io = fakeIO();
  edgesCommand.run(parseArgs(argv, edgesCommand.flags, 'edges', 1), io);
  return io.text();
}

function problemOf(f: () => unknown): { where: string; what: string; fix: string } {
  try {
    f();
  } catch (e) {
    expect(e).toBeInstanceOf(InputError);
    return (e as InputError).problems[0];
  }
  throw new Error('no error');
}

describe('shimmy edges', () => {
  it('--json carries winding, sides with predicted and sorted decay lengths, and roots with modulus and side', () => {
    const j = JSON.parse(cliRun(['gallery:twisted-kagome?twist=15', '--phase', '0.5', '--grid', '4', '--strip', '0', '--json']));
    expect(j.winding).toEqual([1, -1]);
    expect(j.sides.bottom.predicted).toBe(1);
    expect(j.sides.top.predicted).toBe(1);
    expect(j.sides.bottom.decayLengths[0]).toBeCloseTo(1 / Math.asinh((2 * Math.tan(Math.PI / 6)) / Math.sqrt(3)), 9);
    expect(j.roots.map((r: { side: string }) => r.side).sort()).toEqual(['bottom', 'top']);
    for (const r of j.roots) expect(r.modulus).toBeCloseTo(Math.hypot(r.z[0], r.z[1]), 12);
    expect(j.grid.map((g: { theta: number }) => g.theta)).toEqual([0, 0.25, 0.5, 0.75]);
    expect(j.strip).toBeNull();
  });

  it('the summary shows the windings, the sides and the strip', () => {
    const t = cliRun(['gallery:deformed-kagome?x1=0.1&x2=-0.1&x3=0.1&z=0', '--phase', '0.3183', '--grid', '0', '--strip', '20']);
    expect(t).toMatch(/winding \(n1, n2\)\s+\(1, 0\)/);
    expect(t).toMatch(/bottom edge\s+predicted 2/);
    expect(t).toMatch(/strip 1×20/);
  });

  it('bad input names the field and the fix', () => {
    const fw = deformed(0.1, 0.1, 0.1);
    expect(problemOf(() => edges({ framework: fw, phase: NaN })).where).toBe('phase');
    expect(problemOf(() => edges({ framework: fw, phase: Infinity })).where).toBe('phase');
    expect(problemOf(() => edges({ framework: fw, along: 'a3' as 'a1' })).where).toBe('along');
    expect(problemOf(() => edges({ framework: fw, grid: 2.5 })).where).toBe('grid');
    expect(problemOf(() => cliRun(['gallery:kagome', '--phase', 'abc'])).where).toBe('--phase');
    expect(problemOf(() => cliRun(['gallery:kagome', '--phase', 'Infinity'])).where).toBe('--phase');
    const along = problemOf(() => cliRun(['gallery:kagome', '--along', 'a3']));
    expect(along.where).toBe('--along');
    expect(along.fix).toMatch(/a1.*a2/);
    expect(problemOf(() => cliRun(['gallery:kagome', '--strip', '2'])).where).toBe('--strip');
  });
});
