/** src/api/run.ts: the one build → solve → classify run agrees with the CLI and names bad input. */
import { describe, expect, it } from 'vitest';
import { inputProblems } from './helpers.js';
import { analyse } from '../src/api/run.js';
import { count } from '../src/analysis.js';
import { main, readTextFile } from '../src/cli/main.js';
import { TooLargeError } from '../src/errors.js';
import { buildGallery } from '../src/framework/gallery.js';
import type { Framework } from '../src/framework/types.js';

async function cliClassify(spec: string, cells: string, bc: string, extra: string[] = []) {
  let out = '';
  let err = '';
  const code = await main(['classify', spec, '--cells', cells, '--bc', bc, '--json', ...extra], { out: (t) => (out += t), err: (t) => (err += t), readText: readTextFile });
  expect(err).toBe('');
  expect(code).toBe(0);
  return JSON.parse(out);
}

const cases: { spec: string; cells: [number, number]; bc: string; window?: number; strip?: number }[] = [
  { spec: 'gallery:square', cells: [4, 5], bc: 'free' },
  { spec: 'gallery:kagome', cells: [4, 6], bc: 'periodic' },
  { spec: 'gallery:kagome', cells: [5, 4], bc: 'free', window: 2, strip: 1 },
  { spec: 'gallery:kagome', cells: [4, 4], bc: 'x=twist:0.25,y=free' },
];

describe('analyse (src/api/run.ts) against shimmy classify --json', () => {
  for (const c of cases) {
    it(`${c.spec} ${c.cells.join('x')} ${c.bc}: same counts, classes and thresholds`, async () => {
      const classify = { window: c.window ?? 3, strip: c.strip ?? 2 };
      const r = analyse({ framework: buildGallery(c.spec), cells: c.cells, boundary: c.bc, classify });
      const extra = c.window ? ['--window', String(c.window), '--strip', String(c.strip)] : [];
      const o = await cliClassify(c.spec, c.cells.join('x'), c.bc, extra);
      expect(r.analysis.joints).toBe(o.joints);
      expect(r.analysis.bars).toBe(o.bars);
      expect(r.analysis.selfStresses).toBe(o.selfStresses);
      expect(r.classification.flexes).toBe(o.flexes);
      expect(r.classification.trivialFlexes).toBe(o.trivialFlexes);
      expect(r.classification.counts).toEqual(o.counts);
      expect(r.classification.modes.map((m) => m.class)).toEqual(o.modes.map((m: { class: string }) => m.class));
      expect(r.classification.thresholds).toEqual(o.thresholds);
    });
  }

  it('--gap bound (the default) and --gap value classify alike; keptSigma says which the gap holds', async () => {
    // the sparse path certifies the count by inertia: a certified lower bound of the smallest kept σ
    // can stand in for its value, which a Lanczos run would measure
    const bound = await cliClassify('gallery:twisted-kagome?twist=15', '10x10', 'free', ['--solver', 'sparse']);
    const value = await cliClassify('gallery:twisted-kagome?twist=15', '10x10', 'free', ['--solver', 'sparse', '--gap', 'value']);
    expect(bound.keptSigma).toBe('lower-bound');
    expect(value.keptSigma).toBe('measured');
    expect(bound.counts).toEqual(value.counts);
    expect(bound.modes.map((m: { class: string }) => m.class)).toEqual(value.modes.map((m: { class: string }) => m.class));
    expect(bound.gap.kept).toBeGreaterThan(0);
    expect(bound.gap.kept).toBeLessThanOrEqual(value.gap.kept);
    const dense = await cliClassify('gallery:kagome', '4x4', 'free', ['--solver', 'dense']);
    expect(dense.keptSigma).toBe('measured'); // every singular value is computed: nothing to bound
  });

  it('matches published counts: square grid free 4×5 joints has 9 flexes, kagome periodic 4×6 has 12', () => {
    // square grid: 9 flexes (Bolker & Crapo, "Bracing rectangular frameworks I", SIAM J. Appl. Math. 1979)
    expect(analyse({ framework: buildGallery('gallery:square'), cells: [4, 5], boundary: 'free', classify: {} }).classification.flexes).toBe(9);
    // kagome periodic N1×N2: N1 + N2 + gcd(N1, N2) (Sun, Souslov, Mao & Lubensky, PNAS 2012)
    expect(analyse({ framework: buildGallery('gallery:kagome'), cells: [4, 6], boundary: 'periodic' }).analysis.flexes).toBe(12);
  });

  it('classifies only when asked, and count() is the unclassified run', () => {
    const req = { framework: buildGallery('gallery:kagome'), cells: [3, 3] as [number, number], boundary: 'free' };
    const plain = analyse(req);
    expect(plain.classification).toBeUndefined();
    const viaCount = count(req);
    expect(viaCount.analysis.flexes).toBe(plain.analysis.flexes);
    expect(viaCount.analysis.selfStresses).toBe(plain.analysis.selfStresses);
    expect(Object.keys(viaCount).sort()).toEqual(['analysis', 'supercell']);
    const counts = analyse({ ...req, classify: {} }).classification.counts;
    expect(counts.local + counts.line + counts.decaying + counts.bulk).toBe(plain.analysis.flexes);
  });
});

describe('analyse: bad input gives named errors', () => {
  const kagome = buildGallery('gallery:kagome');

  it('a tolerance outside [1e-15, 1) names tolerance', () => {
    const p = inputProblems(() => analyse({ framework: kagome, cells: [3, 3], boundary: 'free', tolerance: 2 }));
    expect(p[0].where).toBe('tolerance');
    expect(p[0].fix).toMatch(/1e-9/);
  });

  it('bad cells name cells', () => {
    const p = inputProblems(() => analyse({ framework: kagome, cells: [0, 3], boundary: 'free' }));
    expect(p[0].where).toBe('cells');
  });

  it('a bad boundary names the rule and the fix', () => {
    const p = inputProblems(() => analyse({ framework: kagome, cells: [3, 3], boundary: 'x=wobbly' }));
    expect(p.length).toBeGreaterThan(0);
    expect(p.some((q) => /free, pinned, periodic or twist/.test(q.fix))).toBe(true);
  });

  it('an invalid framework is reported with its JSON path', () => {
    const bad = { ...kagome, joints: [] } as unknown as Framework;
    const p = inputProblems(() => analyse({ framework: bad, cells: [3, 3], boundary: 'free' }));
    expect(p.some((q) => q.where.includes('joints'))).toBe(true);
  });

  it('bad classification options name window and strip', () => {
    const p = inputProblems(() => analyse({ framework: kagome, cells: [2, 2], boundary: 'free', classify: { window: 0, strip: 99 } }));
    expect(p.map((q) => q.where).sort()).toEqual(['strip', 'window']);
  });

  it('a run over the size limit is refused before building, naming cells', () => {
    expect(() => analyse({ framework: kagome, cells: [3000, 3000], boundary: 'free', classify: {} })).toThrow(TooLargeError);
    expect(() => analyse({ framework: kagome, cells: [3000, 3000], boundary: 'free' })).toThrow(/cells 3000x3000/);
  });
});
