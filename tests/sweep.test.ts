/** Finite-size sweeps: size ranges, growth fits, and class counts that grow as N or N². */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { parseArgs } from '../src/cli/args.js';
import type { CliIO, Command } from '../src/cli/command.js';
import { parsePhaseList, parseSizeList, sweepCommand } from '../src/cli/sweep.js';
import { InputError } from '../src/errors.js';
import { CancelledError } from '../src/flex/solver.js';
import { growthFit, linearSizes, sweep, twistSweep, type SweepRow } from '../src/flex/sweep.js';
import { buildGallery } from '../src/framework/gallery.js';
import { parseFramework } from '../src/framework/validate.js';

const RATTLER = parseFramework(readFileSync(new URL('../demos/rattler-mesh.json', import.meta.url), 'utf8'), 'rattler-mesh.json');

/** Run a command the way src/cli/main.ts does (exit 2 on bad input). */
async function cli(cmd: Command, argv: string[]) {
  let out = '';
  let err = '';
  const io: CliIO = { out: (t) => (out += t), err: (t) => (err += t), readText: (p) => readFileSync(p, 'utf8') };
  try {
    const code = await cmd.run(parseArgs(argv, cmd.flags, cmd.name, cmd.maxPositional), io);
    return { code, out, err };
  } catch (e) {
    if (e instanceof InputError) return { code: 2, out, err: err + e.message };
    throw e;
  }
}

describe('--cells size lists', () => {
  it('square ranges, steps, rectangular ranges scaling both sides, fixed-side ranges and lists', () => {
    expect(parseSizeList('4..8')).toEqual([[4, 4], [5, 5], [6, 6], [7, 7], [8, 8]]);
    expect(parseSizeList('4..16:4')).toEqual([[4, 4], [8, 8], [12, 12], [16, 16]]);
    const rect = parseSizeList('4x8..16x32');
    expect(rect.length).toBe(13);
    for (const [n1, n2] of rect) expect(n2).toBe(2 * n1);
    expect(parseSizeList('4x8..16x32:4')).toEqual([[4, 8], [8, 16], [12, 24], [16, 32]]);
    expect(parseSizeList('2x6..2x12:3')).toEqual([[2, 6], [2, 9], [2, 12]]);
    expect(parseSizeList('3, 5x7 ,6..7')).toEqual([[3, 3], [5, 7], [6, 6], [7, 7]]);
    expect(parseSizeList('4..9:2')).toEqual([[4, 4], [6, 6], [8, 8]]);
  });
  it.each([
    ['8..4', /backwards/],
    ['4x8..6x11', /not whole at N1 = 5/],
    ['a..b', /not a size/],
    ['4..8:0', /step/],
    ['', /no size/],
    ['0..3', /from 1/],
  ])('"%s" is refused with a reason naming --cells', (text, why) => {
    try {
      parseSizeList(text);
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      expect((e as InputError).problems[0].where).toBe('--cells');
      expect((e as InputError).message).toMatch(why);
    }
  });
});

describe('growth fits', () => {
  it('a pure power law gives its exponent with R² = 1; zero counts are left out', () => {
    const f = growthFit([2, 4, 8, 16], [12, 48, 192, 768]);
    expect(f.exponent).toBeCloseTo(2, 12);
    expect(f.r2).toBeCloseTo(1, 12);
    expect(f.points).toBe(4);
    const g = growthFit([2, 4, 8], [0, 5, 10]);
    expect(g.points).toBe(2);
    expect(g.exponent).toBeCloseTo(1, 12);
    expect(growthFit([2, 4], [0, 3])).toEqual({ exponent: null, r2: null, points: 1 });
  });
  it('the linear size is the side that varies, or √(N1·N2) when both do', () => {
    expect(linearSizes([{ N1: 4, N2: 8 }, { N1: 6, N2: 8 }])).toEqual({ sizes: [4, 6], rule: 'N1' });
    expect(linearSizes([{ N1: 2, N2: 8 }, { N1: 2, N2: 9 }])).toEqual({ sizes: [8, 9], rule: 'N2' });
    expect(linearSizes([{ N1: 4, N2: 8 }, { N1: 8, N2: 16 }]).sizes).toEqual([Math.sqrt(32), Math.sqrt(128)]);
  });
});

describe('sweeps', () => {
  it('square grid, free: the line count is 2N, exponent 1 (Bolker & Crapo 1979)', () => {
    // An unbraced N×N grid has N row and N column slides, each a line flex.
    // E. D. Bolker & H. Crapo, "Bracing rectangular frameworks I", SIAM J. Appl. Math. 36(3),
    // 473–490 (1979) (from memory).
    const rows: SweepRow[] = [];
    const r = sweep(buildGallery('gallery:square'), { sizes: [[4, 4], [6, 6], [8, 8]], boundary: 'free', onRow: (row) => rows.push(row) });
    expect(rows).toEqual(r.rows);
    r.rows.forEach((row) => {
      expect(row.line).toBe(2 * row.N1);
      expect(row.flexes).toBe(row.local + row.line + row.decaying + row.bulk);
      expect(row.trivial).toBe(3);
      expect(row.selfStresses).toBe(0);
      expect(row.seconds).toBeGreaterThan(0);
    });
    expect(r.fits.line.exponent).toBeCloseTo(1, 10);
    expect(r.fits.line.r2).toBeCloseTo(1, 10);
    expect(r.fits.local.exponent).toBeNull();
    expect(r.linearSize).toBe('√(N1·N2)');
  });
  it('rattlers, periodic: the local count is N², exponent 2 (one bead per cell)', () => {
    // A joint held by two collinear bars has one flex across them (common practice);
    // demos/rattler-mesh.json (invented) has one such bead per cell.
    const r = sweep(RATTLER, { sizes: [[3, 3], [4, 4], [5, 5]], boundary: 'periodic' });
    r.rows.forEach((row) => expect(row.local).toBe(row.N1 * row.N2));
    expect(r.fits.local.exponent).toBeCloseTo(2, 10);
    expect(r.fits.local.r2).toBeCloseTo(1, 10);
  });
  it('twisted kagome strip, x periodic and y free: 2 decaying flexes per added cell along x', () => {
    // One flex per edge at every wavenumber along the strip (Sun, Souslov, Mao & Lubensky,
    // PNAS 109(31), 12369–12374, 2012): N1 cells along x carry N1 wavenumbers, 2·N1 flexes.
    // At k = 0 those two are the rigid translations (bulk); every other one is an edge flex.
    const r = sweep(buildGallery('gallery:twisted-kagome?twist=15'), { sizes: [[4, 8], [5, 8], [6, 8]], boundary: 'x=periodic,y=free' });
    expect(r.linearSize).toBe('N1');
    r.rows.forEach((row) => {
      expect(row.flexes).toBe(2 * row.N1);
      expect(row.trivial).toBe(2);
      expect(row.bulk).toBe(row.trivial);
      expect(row.decaying).toBe(row.flexes - row.trivial);
    });
    expect(r.fits.flexes.exponent).toBeCloseTo(1, 10);
  });
  it('reports progress and can be cancelled', () => {
    const seen: number[] = [];
    sweep(buildGallery('gallery:square'), { sizes: [[3, 3], [4, 4]], boundary: 'free', onProgress: (p) => seen.push(p.fraction) });
    expect(seen).toEqual([0, 0.5, 1]);
    const ac = new AbortController();
    ac.abort();
    expect(() => sweep(buildGallery('gallery:square'), { sizes: [[3, 3]], boundary: 'free', signal: ac.signal })).toThrow(CancelledError);
  });
  it('bad input names the field', () => {
    expect(() => sweep(buildGallery('gallery:square'), { sizes: [], boundary: 'free' })).toThrow(/sizes/);
    expect(() => sweep(buildGallery('gallery:square'), { sizes: [[0, 3]], boundary: 'free' })).toThrow(InputError);
    expect(() => sweep(buildGallery('gallery:square'), { sizes: [[3, 3]], boundary: 'sideways' })).toThrow(/--bc/);
  });
});

describe('shimmy sweep', () => {
  it('--csv prints the header and one row per size', async () => {
    const r = await cli(sweepCommand, ['gallery:square', '--cells', '3..5', '--csv']);
    expect(r.code).toBe(0);
    const lines = r.out.trim().split('\n');
    expect(lines[0]).toBe('N1,N2,joints,bars,flexes,trivial,selfStresses,local,line,decaying,bulk,seconds');
    expect(lines.length).toBe(4);
    const row = lines[2].split(',');
    expect(row.slice(0, 5)).toEqual(['4', '4', '16', '24', '8']); // 4×4 joints: a + b = 8 flexes (Bolker & Crapo 1979)
    // the growth fits go to stderr, stdout stays plain CSV: free N×N square grids have
    // 2N line flexes (N rows and N columns of shear), so the line count grows as N¹
    expect(r.err).toMatch(/Growth with the linear size N/);
    expect(r.err).toMatch(/line\s+exponent 1, R² 1 over 3 sizes/);
    expect(r.out).not.toMatch(/Growth/);
  });
  it('--json prints rows, fits and thresholds; the table ends with the growth summary', async () => {
    const j = await cli(sweepCommand, ['gallery:square', '--cells', '4x4..6x6:2', '--json']);
    const o = JSON.parse(j.out);
    expect(o.rows.map((x: SweepRow) => [x.N1, x.N2])).toEqual([[4, 4], [6, 6]]);
    expect(o.fits.line.exponent).toBeCloseTo(1, 10);
    expect(o.thresholds.window).toBe(3);
    const t = await cli(sweepCommand, ['gallery:square', '--cells', '4,6']);
    expect(t.out).toMatch(/Growth with the linear size N = √\(N1·N2\)/);
    expect(t.out).toMatch(/line\s+exponent 1, R² 1 over 2 sizes/);
  });
  it('refuses bad sizes and two formats at once', async () => {
    const a = await cli(sweepCommand, ['gallery:square', '--cells', '6..3']);
    expect(a.code).toBe(2);
    expect(a.err).toMatch(/--cells/);
    const b = await cli(sweepCommand, ['gallery:square', '--cells', '3', '--csv', '--json']);
    expect(b.code).toBe(2);
    expect(b.err).toMatch(/either --csv or --json/);
    const c = await cli(sweepCommand, ['gallery:square', '--cells', '3', '--window', '0']);
    expect(c.code).toBe(2);
    expect(c.err).toMatch(/--window/);
  });
});

describe('the symbol beside the fits: a2 from flat bands, a1 from edge modes', () => {
  it('twisted kagome, free squares and strips: one edge mode per wave number on each side (Sun, Souslov, Mao & Lubensky, PNAS 109, 12369 (2012)), so a1 = 4 (squares) and 2 (N1 fixed)', () => {
    const fw = buildGallery('gallery:twisted-kagome?twist=15');
    const sq = sweep(fw, { sizes: [4, 5, 6, 7].map((n) => [n, n] as [number, number]), boundary: 'free' });
    expect(sq.prediction.genericKernel).toBe(0);
    expect(sq.prediction.perSide).toEqual({ bottom: 1, top: 1, left: 1, right: 1 });
    expect(sq.prediction.polynomial!.a1).toBeCloseTo(4, 10);
    expect(sq.polynomialFits.flexes.a1!).toBeCloseTo(sq.prediction.polynomial!.a1, 8);
    expect(sq.polynomialFits.flexes.a2!).toBeCloseTo(sq.prediction.polynomial!.a2, 8);
    const strip = sweep(fw, { sizes: [4, 5, 6, 7].map((n) => [3, n] as [number, number]), boundary: 'free' });
    expect(strip.linearSize).toBe('N2');
    expect(strip.prediction.polynomial!.a1).toBeCloseTo(2, 10);
    expect(strip.polynomialFits.flexes.a1!).toBeCloseTo(2, 8);
  });
  it('a polarised deformed kagome puts both edge modes on the bottom (Kane & Lubensky, Nature Physics 10, 39 (2014)), and the count still grows by 4 per cell', () => {
    const fw = buildGallery('gallery:deformed-kagome?x1=0.1&x2=-0.1&x3=0.1');
    const r = sweep(fw, { sizes: [4, 5, 6].map((n) => [n, n] as [number, number]), boundary: 'free' });
    expect(r.prediction.perSide.bottom).toBe(2);
    expect(r.prediction.perSide.top).toBe(0);
    expect(r.polynomialFits.flexes.a1!).toBeCloseTo(r.prediction.polynomial!.a1, 8);
  });
  it('honeycomb: Φ is 3×4, one flex per cell at every phase (Maxwell counting, common practice), the fitted a2; no edge prediction, and it says why', () => {
    const r = sweep(buildGallery('gallery:honeycomb'), { sizes: [3, 4, 5, 6].map((n) => [n, n] as [number, number]), boundary: 'free' });
    expect(r.prediction.genericKernel).toBe(1);
    expect(r.prediction.areaA2).toBeCloseTo(1, 10);
    expect(r.polynomialFits.flexes.a2!).toBeCloseTo(1, 8);
    expect(r.prediction.polynomial).toBeNull();
    expect(r.prediction.note).toMatch(/not square/);
  });
});

describe('twist-phase sweeps', () => {
  it('kagome 5×5 with both axes twisted by θ: 15 flexes at θ = 0, 5 elsewhere (reference note §3: 3N at zero twist; at equal phases only the (a2 − a1) family of lines survives)', () => {
    const r = twistSweep(buildGallery('gallery:kagome'), { cells: [5, 5], boundary: 'periodic', phases: [0, 0.1, 0.3, 0.5] });
    expect(r.rows.map((x) => x.theta)).toEqual([0, 0.1, 0.3, 0.5]);
    expect(r.rows.map((x) => x.flexes)).toEqual([15, 5, 5, 5]);
    expect(r.rows.map((x) => x.selfStresses)).toEqual([15, 5, 5, 5]);
    expect(r.rows[1].boundary).toBe('twist:0.1,0.1');
    // one axis twisted, the other free: the twist reaches only x
    const one = twistSweep(buildGallery('gallery:kagome'), { cells: [4, 3], boundary: 'x=periodic,y=free', phases: [0.25] });
    expect(one.rows[0].boundary).toMatch(/^x=twist:0.25/);
  });
  it('refuses a boundary with no twisted axis and a phase that is not a number, naming the field', () => {
    expect(() => twistSweep(buildGallery('gallery:kagome'), { cells: [3, 3], boundary: 'free', phases: [0.1] })).toThrow(/boundary/);
    expect(() => twistSweep(buildGallery('gallery:kagome'), { cells: [3, 3], boundary: 'periodic', phases: [NaN] })).toThrow(/phases\[0\]/);
    expect(() => parsePhaseList('0..0.5')).toThrow(/needs a step/);
    expect(parsePhaseList('0..0.3:0.1,0.75')).toEqual([0, 0.1, 0.2, 0.3, 0.75]);
  });
});
