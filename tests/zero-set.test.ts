import { describe, expect, it } from 'vitest';
import { buildGallery } from '../src/framework/gallery.js';
import type { Framework } from '../src/framework/types.js';
import { phaseMap } from '../src/spectrum/phasemap.js';
import { SymbolAssembler, symbolKernel } from '../src/spectrum/symbol.js';
import { zeroTopology } from '../src/spectrum/zero-set.js';
import { INVENTED_INVERSION, INVENTED_WEYL, symbolDeterminant } from './fixtures/invented-lattices.js';

// invented (tests/fixtures/invented-lattices.ts): 3 joints, 6 bars, isolated zeros of det Φ
const weyl = INVENTED_WEYL;

const inversion = INVENTED_INVERSION;

const detAt = symbolDeterminant;

/** Winding of det on a circle of radius r around c, 2000 uniform steps. */
function circleWinding(a: SymbolAssembler, c: [number, number], r: number): number {
  const K = 2000;
  let total = 0;
  let prev = detAt(a, c[0] + r, c[1]);
  for (let k = 1; k <= K; k++) {
    const s = (2 * Math.PI * k) / K;
    const d = detAt(a, c[0] + r * Math.cos(s), c[1] + r * Math.sin(s));
    total += Math.atan2(prev[0] * d[1] - prev[1] * d[0], prev[0] * d[0] + prev[1] * d[1]);
    prev = d;
  }
  return total / (2 * Math.PI);
}

const sigmaMinRatio = (fw: Framework, t: [number, number]) => {
  const s = symbolKernel(fw, t).sigma;
  return s[s.length - 1] / s[0];
};

const isTrim = (t: [number, number]) => t.every((v) => Math.abs(2 * v - Math.round(2 * v)) < 1e-9);

describe('charged zeros (Rocklin, Chen, Falk, Vitelli & Lubensky, PRL 116, 135503 (2016): Weyl points of Maxwell lattices carry a charge, the winding of det Φ on a small loop, in opposite pairs)', () => {
  const topo = zeroTopology(weyl, phaseMap(weyl, { grid: 48 }));

  it('every isolated zero has a charge; off the time-reversal-invariant phases each is ±1, and they sum to 0 on the torus', () => {
    expect(topo.zeroLines).toEqual([]);
    expect(topo.zeroCurves).toEqual([]);
    const charged = topo.zeroPoints.filter((z) => !isTrim(z.theta));
    expect(charged.length).toBeGreaterThanOrEqual(2);
    for (const z of charged) expect(Math.abs(z.charge!)).toBe(1);
    // Φ(−θ) = conj Φ(θ) (real bar vectors), so the charge at −θ is minus that at θ, and 0 at θ ≡ −θ
    // (a derivation, common practice)
    for (const z of topo.zeroPoints.filter((z) => isTrim(z.theta))) expect(z.charge).toBe(0);
    expect(topo.zeroPoints.reduce((s, z) => s + z.charge!, 0)).toBe(0);
  });

  it('each charge agrees with an independent winding of det Φ on a finer loop, and σ_min vanishes there', () => {
    const a = new SymbolAssembler(weyl);
    for (const z of topo.zeroPoints) {
      expect(Math.round(circleWinding(a, z.theta, 2e-3)) + 0).toBe(z.charge);
      expect(sigmaMinRatio(weyl, z.theta)).toBeLessThan(1e-8);
    }
  });
});

describe('lines stay lines', () => {
  it('the regular kagome: three zero lines, no points or curves, and Φ is singular along each line', () => {
    const k = buildGallery('gallery:kagome');
    const topo = zeroTopology(k, phaseMap(k, { grid: 32 }));
    expect(topo.zeroLines.length).toBe(3);
    expect(topo.zeroPoints).toEqual([]);
    expect(topo.zeroCurves).toEqual([]);
    expect(topo.nearZeros).toEqual([]);
    for (const L of topo.zeroLines) {
      const base: [number, number] = L.p !== 0 ? [L.c / L.p, 0] : [0, L.c / L.q];
      for (const t of [0.137, 0.421, 0.779]) {
        const th: [number, number] = [base[0] - L.q * t, base[1] + L.p * t].map((v) => v - Math.floor(v)) as [number, number];
        expect(symbolKernel(k, th).kernel).toBeGreaterThanOrEqual(1);
      }
    }
  });
});

describe('near-zeros', () => {
  it('with a coarse tolerance the invented lattice has charge-0 minima of σ below it that are not zeros', () => {
    const m = phaseMap(weyl, { grid: 48, tolerance: 1e-3 });
    const topo = zeroTopology(weyl, m);
    expect(topo.nearZeros.length).toBeGreaterThan(0);
    const a = new SymbolAssembler(weyl);
    for (const n of topo.nearZeros) {
      expect(n.sigma).toBeLessThanOrEqual(m.tolerance.absolute);
      expect(topo.zeroPoints.some((z) => Math.hypot(z.theta[0] - n.theta[0], z.theta[1] - n.theta[1]) < 1e-3)).toBe(false);
      // independently: σ_min there is nonzero and it is a local minimum on a fine ring
      const s = symbolKernel(weyl, n.theta).sigma;
      const smin = s[s.length - 1];
      expect(smin).toBeGreaterThan(1e-6 * s[0]);
      expect(Math.abs(smin - n.sigma)).toBeLessThan(1e-6 * n.sigma);
      for (let k = 0; k < 12; k++) {
        const ang = (2 * Math.PI * k) / 12;
        const r = symbolKernel(weyl, [n.theta[0] + 1e-3 * Math.cos(ang), n.theta[1] + 1e-3 * Math.sin(ang)]).sigma;
        expect(r[r.length - 1]).toBeGreaterThan(smin);
      }
      // and det Φ does not wind around it
      expect(Math.round(circleWinding(a, n.theta, 2e-3)) + 0).toBe(0);
    }
  });
});

describe('zero curves (Rocklin, Chen, Falk, Vitelli & Lubensky, PRL 116, 135503 (2016): zeros of inversion-symmetric Maxwell lattices are generically curves)', () => {
  it('an invented inversion-symmetric lattice: one traced curve, no isolated points, σ_min ≈ 0 at every curve point', () => {
    const grid = 48;
    const topo = zeroTopology(inversion, phaseMap(inversion, { grid }));
    expect(topo.zeroLines).toEqual([]);
    expect(topo.zeroPoints).toEqual([]);
    expect(topo.zeroCurves.length).toBeGreaterThanOrEqual(1);
    const pts = topo.zeroCurves.flatMap((c) => c.points);
    expect(pts.length).toBeGreaterThanOrEqual(grid);
    for (const p of pts) expect(sigmaMinRatio(inversion, p)).toBeLessThan(1e-8);
    // not a line: the points do not share one value of p·θ1 + q·θ2 for any small direction
    for (const [p, q] of [[1, 0], [0, 1], [1, 1], [1, -1], [1, 2], [2, 1]]) {
      const c = pts.map((t) => (((p * t[0] + q * t[1]) % 1) + 1) % 1);
      expect(Math.max(...c) - Math.min(...c)).toBeGreaterThan(0.05);
    }
  });
});
