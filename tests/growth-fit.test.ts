/** Polynomial growth fits a2·N² + a1·N + a0: synthetic recovery and closed-form counts. */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { parseArgs } from '../src/cli/args.js';
import type { CliIO } from '../src/cli/command.js';
import { sweepCommand } from '../src/cli/sweep.js';
import { formula, nearestFraction, polynomialFit } from '../src/flex/growth-fit.js';
import { sweep } from '../src/flex/sweep.js';
import { buildGallery } from '../src/framework/gallery.js';
import { rng } from './helpers.js';

describe('polynomialFit on synthetic counts', () => {
  it('recovers integer and rational coefficients exactly', () => {
    const xs = [4, 6, 8, 10, 12];
    const f = polynomialFit(xs, xs.map((N) => 3 * N * N - 2 * N + 5));
    expect(f.a2).toBeCloseTo(3, 9);
    expect(f.a1).toBeCloseTo(-2, 9);
    expect(f.a0).toBeCloseTo(5, 9);
    expect(f.residual).toBeLessThan(1e-9);
    expect(f.freedom).toBe(2);
    expect(f.exact).toEqual({ a2: '3', a1: '-2', a0: '5', formula: '3N² − 2N + 5' });
    // N(N + 1)/2 on odd and even N
    const g = polynomialFit([3, 4, 5, 6, 7], [3, 4, 5, 6, 7].map((N) => (N * (N + 1)) / 2));
    expect(g.exact).toEqual({ a2: '1/2', a1: '1/2', a0: '0', formula: '(1/2)N² + (1/2)N' });
  });

  it('with rounding-level noise the exact form survives; with larger noise it is refused and the fit stays close', () => {
    const r = rng(7);
    const xs = [4, 5, 6, 7, 8, 9, 10, 11, 12];
    const truth = (N: number) => 2 * N * N + 4 * N - 1;
    const tiny = polynomialFit(xs, xs.map((N) => truth(N) + 1e-9 * (r() - 0.5)));
    expect(tiny.exact?.formula).toBe('2N² + 4N − 1');
    const noise = xs.map(() => 0.4 * (r() - 0.5));
    const noisy = polynomialFit(xs, xs.map((N, i) => truth(N) + noise[i]));
    expect(noisy.exact).toBeNull();
    // least squares: the residual is at most that of the true coefficients, the noise itself
    expect(noisy.residual as number).toBeLessThanOrEqual(Math.hypot(...noise) + 1e-12);
    expect(noisy.residual as number).toBeGreaterThan(0);
    expect(Math.abs((noisy.a2 as number) - 2)).toBeLessThan(0.05);
    expect(Math.abs((noisy.a1 as number) - 4)).toBeLessThan(1);
  });

  it('needs three distinct sizes; three interpolate (freedom 0)', () => {
    expect(polynomialFit([4, 4, 6], [1, 2, 3])).toMatchObject({ a2: null, a1: null, a0: null, residual: null, exact: null });
    const f = polynomialFit([2, 3, 4], [1, 7, 2]);
    expect(f.freedom).toBe(0);
    expect(f.residual).toBeLessThan(1e-12);
  });

  it('fractions and formulas', () => {
    expect(nearestFraction(0.5)).toEqual([1, 2]);
    expect(nearestFraction(-2 / 3 + 1e-12)).toEqual([-2, 3]);
    expect(nearestFraction(4.0000000001)).toEqual([4, 1]);
    expect(formula([[0, 1], [4, 1], [-1, 1]])).toBe('4N − 1');
    expect(formula([[1, 1], [2, 1], [0, 1]])).toBe('N² + 2N');
    expect(formula([[-1, 1], [0, 1], [0, 1]])).toBe('−N²');
    expect(formula([[0, 1], [0, 1], [0, 1]])).toBe('0');
  });
});

describe('sweeps: exact polynomials for closed-form counts', () => {
  it('regular kagome, free N×N: flexes = 4N − 1 (derived)', () => {
    // Derivation. Joints 3N². Bars: the up triangle of every cell (3N²); of the down triangle
    // B(i,j)–A(i+1,j) needs i < N−1 (N(N−1)), A(i,j)–C(i,j−1) needs j > 0 (N(N−1)), and
    // B(i,j)–C(i+1,j−1) needs both ((N−1)²): 6N² − 4N + 1 bars. Maxwell–Calladine (Calladine,
    // Int. J. Solids Struct. 14, 161–172, 1978): flexes − self-stresses = 2·3N² − (6N² − 4N + 1)
    // = 4N − 1. Self-stresses are 0: every joint of the regular kagome lies on two straight bond
    // lines, so equilibrium keeps the tension constant along each line through a joint, and at a
    // line's end (every line of a finite patch ends) the last bar's tension has nothing along its
    // direction to balance it, so it is 0; hence every bar's tension is 0.
    const r = sweep(buildGallery('gallery:kagome'), { sizes: [[3, 3], [4, 4], [5, 5], [6, 6]], boundary: 'free' });
    const f = r.polynomialFits.flexes;
    expect(f.exact?.formula).toBe('4N − 1');
    expect(Math.abs(f.a2 as number)).toBeLessThan(1e-9);
    expect(f.a1).toBeCloseTo(4, 9);
    expect(f.a0).toBeCloseTo(-1, 9);
    expect(f.residual).toBeLessThan(1e-9);
    // the log-log exponent, still reported, is biased by the offset
    expect(r.fits.flexes.exponent as number).toBeGreaterThan(1.01);
  });

  it('honeycomb (gallery cell), free N×N: flexes = N² + 2N (derived)', () => {
    // Derivation. Joints 2N². Bars: A–B in every cell (N²) and the two bars to the cells at
    // (−1, 0) and (0, −1), each present in N(N−1) cells: 3N² − 2N. Maxwell–Calladine gives
    // flexes − self-stresses = 4N² − 3N² + 2N = N² + 2N. Self-stresses are 0: the three bar
    // directions at a joint are pairwise independent, so a joint with at most two bars carries
    // zero tension in them; every finite subgraph of the honeycomb (planar, shortest cycle 6)
    // has fewer than 1.5·joints edges, hence such a joint, and removing its bars repeats the
    // argument until no bar is left.
    const r = sweep(buildGallery('gallery:honeycomb'), { sizes: [[3, 3], [4, 4], [5, 5], [6, 6]], boundary: 'free' });
    expect(r.polynomialFits.flexes.exact?.formula).toBe('N² + 2N');
    expect(r.polynomialFits.flexes.a2).toBeCloseTo(1, 9);
  });

  it('a class that grows linearly has a2 = 0: free square grid line flexes 2N (Bolker & Crapo 1979)', () => {
    // Every row and column of an unbraced grid slides on its own: N + N line flexes.
    // E. D. Bolker & H. Crapo, "Bracing rectangular frameworks I", SIAM J. Appl. Math. 36(3),
    // 473–490 (1979) (from memory).
    const r = sweep(buildGallery('gallery:square'), { sizes: [[3, 3], [4, 4], [5, 5], [6, 6]], boundary: 'free' });
    const line = r.polynomialFits.line;
    expect(Math.abs(line.a2 as number)).toBeLessThan(1e-9);
    expect(line.exact?.formula).toBe('2N');
  });

  it('strip sweeps (N1 fixed, N2 growing) fit in N2: free 3×N2 square grid has 3 + N2 flexes (Bolker & Crapo 1979)', () => {
    // a×b joints, free: a + b flexes (Bolker & Crapo, as above); the gallery square has one joint per cell.
    const r = sweep(buildGallery('gallery:square'), { sizes: [[3, 3], [3, 4], [3, 5], [3, 6]], boundary: 'free' });
    expect(r.linearSize).toBe('N2');
    expect(r.polynomialFits.flexes.exact?.formula).toBe('N + 3');
  });
});

describe('shimmy sweep prints the polynomial fits', () => {
  async function cli(argv: string[]) {
    let out = '';
    let err = '';
    const io: CliIO = { out: (t) => (out += t), err: (t) => (err += t), readText: (p) => readFileSync(p, 'utf8') };
    const code = await sweepCommand.run(parseArgs(argv, sweepCommand.flags, sweepCommand.name, sweepCommand.maxPositional), io);
    return { code, out, err };
  }
  it('--json carries polynomialFits for every count; --csv puts them on stderr', async () => {
    const j = await cli(['gallery:square', '--cells', '3..6', '--bc', 'free', '--json']);
    const o = JSON.parse(j.out);
    expect(Object.keys(o.polynomialFits).sort()).toEqual(['bulk', 'decaying', 'flexes', 'line', 'local']);
    for (const k of ['a2', 'a1', 'a0', 'residual']) expect(o.polynomialFits.flexes).toHaveProperty(k);
    expect(o.polynomialFits.flexes.exact.formula).toBe('2N'); // N×N joints: N + N flexes (Bolker & Crapo 1979)
    const c = await cli(['gallery:square', '--cells', '3..6', '--bc', 'free', '--csv']);
    expect(c.err).toMatch(/Polynomial fits/);
    expect(c.err).toMatch(/flexes\s+2N exactly/);
    expect(c.out).not.toMatch(/Polynomial/);
  });
});
