/**
 * Hostile input found by fuzzing: every case ends in a named error with a fix (exit 2 for bad
 * input, 3 for too large), never a stack trace or "internal error", or in a correct answer.
 */
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { count } from '../src/analysis.js';
import { InputError, TooLargeError } from '../src/errors.js';
import { checkRunSize, MIN_RELATIVE_TOLERANCE } from '../src/flex/estimate.js';
import { buildGallery } from '../src/framework/gallery.js';
import type { Framework } from '../src/framework/types.js';
import { parseFramework, validateFramework } from '../src/framework/validate.js';
import { MAX_TWIST_TURNS, parseBoundary } from '../src/supercell/boundary.js';
import { buildSupercell } from '../src/supercell/supercell.js';
import { runCli } from './cli-harness.js';

const run = runCli;

const tmp = mkdtempSync(join(tmpdir(), 'shimmy-bad-'));
function file(name: string, value: unknown): string {
  const path = join(tmp, name);
  writeFileSync(path, typeof value === 'string' ? value : JSON.stringify(value));
  return path;
}

/** A refusal the user can act on: the exit code, the field named, a fix, no trace. */
function expectRefusal(r: { code: number; err: string }, code: number, field: string) {
  expect(r.code).toBe(code);
  expect(r.err).toContain(field);
  expect(r.err).toContain('Fix:');
  expect(r.err).not.toContain('internal error');
  expect(r.err).not.toMatch(/\n\s+at /);
}

const squareWith = (id: string): Framework => ({
  lattice: [
    [1, 0],
    [0, 1],
  ],
  joints: [{ id, at: [0, 0] }],
  bars: [
    { from: id, to: id, shift: [1, 0] },
    { from: id, to: id, shift: [0, 1] },
  ],
});

describe('1. names that are also Object.prototype properties', () => {
  it.each(['constructor', '__proto__', 'toString', 'hasOwnProperty'])('a joint id "%s" works like any other id', (id) => {
    const fw = parseFramework(JSON.stringify(squareWith(id)));
    const got = count({ framework: fw, cells: [4, 5], boundary: 'free' }).analysis;
    const ref = count({ framework: buildGallery('gallery:square'), cells: [4, 5], boundary: 'free' }).analysis;
    expect([got.flexes, got.selfStresses, got.trivialFlexes]).toEqual([ref.flexes, ref.selfStresses, ref.trivialFlexes]);
  });

  it('fields named constructor and __proto__ at any level are unknown fields, reported at their path', async () => {
    const text =
      '{"lattice": [[1, 0], [0, 1]], "constructor": 1, "__proto__": {"x": 1},' +
      ' "joints": [{"id": "A", "at": [0, 0], "constructor": 3}],' +
      ' "bars": [{"from": "A", "to": "A", "shift": [1, 0], "__proto__": 1}]}';
    const r = await run(['count', file('proto.json', text), '--cells', '2x2']);
    expectRefusal(r, 2, 'joints[0].constructor');
    for (const where of ['  - constructor:', '  - __proto__:', 'bars[0].__proto__']) expect(r.err).toContain(where);
  });

  it('a bar end "__proto__" that names no joint is reported at bars[0].from', async () => {
    const fw = { ...squareWith('A'), bars: [{ from: '__proto__', to: 'A', shift: [1, 0] }] };
    expectRefusal(await run(['count', file('from-proto.json', fw), '--cells', '2x2']), 2, 'bars[0].from');
  });

  it('gallery parameters and --bc keys named constructor or __proto__ are unknown keys', async () => {
    expectRefusal(await run(['count', 'gallery:twisted-kagome?constructor=1', '--cells', '2x2']), 2, 'parameter "constructor"');
    expectRefusal(await run(['count', 'gallery:square?__proto__=1', '--cells', '2x2']), 2, 'parameter "__proto__"');
    expectRefusal(await run(['count', 'gallery:constructor', '--cells', '2x2']), 2, 'gallery name "constructor"');
    expectRefusal(await run(['count', 'gallery:square', '--bc', 'constructor=free']), 2, '--bc');
    expectRefusal(await run(['count', 'gallery:square', '--bc', '__proto__=free']), 2, '--bc');
  });

  it('the API validator takes an own "__proto__" key as an unknown field', () => {
    const problems = validateFramework(JSON.parse('{"__proto__": 1, "lattice": [[1, 0], [0, 1]], "joints": [{"id": "A", "at": [0, 0]}], "bars": []}'));
    expect(problems.map((p) => p.where)).toEqual(['__proto__']);
  });
});

describe('2. supercells with a single bar', () => {
  // A single bar between two joints: 4 velocities, 1 constraint, so 3 flexes, all rigid motions
  // (two translations and the rotation) and no self-stress (common practice).
  it('count gallery:square --cells 1x2 --bc free: 2 joints, 1 bar, 3 flexes, all trivial', async () => {
    const r = await run(['count', 'gallery:square', '--cells', '1x2', '--bc', 'free', '--json']);
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    expect(JSON.parse(r.out)).toMatchObject({ joints: 2, bars: 1, flexes: 3, trivialFlexes: 3, selfStresses: 0 });
  });

  it('classify gallery:honeycomb --cells 1x1 runs (one bar inside the cell)', async () => {
    const r = await run(['classify', 'gallery:honeycomb', '--cells', '1x1', '--json']);
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    const o = JSON.parse(r.out);
    expect([o.joints, o.bars, o.flexes, o.trivialFlexes]).toEqual([2, 1, 3, 3]);
  });
});

describe('3. sizes are checked as a whole, before anything is built', () => {
  it('--cells 46341x46341 overflows Int32 joint indices: refused with the largest size that fits, even with --allow-large', async () => {
    for (const extra of [[], ['--allow-large']]) {
      const r = await run(['count', 'gallery:square', '--cells', '46341x46341', ...extra]);
      expectRefusal(r, 3, '--cells 46341x46341');
      expect(r.err).toContain('2^31');
      const m = /about (\d+)x(\d+)/.exec(r.err)!;
      // the free square grid on a×b cells has a(b − 1) + b(a − 1) bars; 4·bars must stay under 2^31
      const bars = (a: number, b: number) => a * (b - 1) + b * (a - 1);
      const [a, b] = [Number(m[1]), Number(m[2])];
      expect(4 * bars(a, b)).toBeLessThan(2 ** 31);
      expect(4 * bars(a + 1, b + 1)).toBeGreaterThanOrEqual(2 ** 31);
    }
  });

  it('20000x20000 and 1000x1000 are refused with the estimate and a size that fits', async () => {
    expectRefusal(await run(['count', 'gallery:square', '--cells', '20000x20000']), 3, '--cells 20000x20000');
    const r = await run(['count', 'gallery:square', '--cells', '1000x1000']);
    expectRefusal(r, 3, '--cells 1000x1000');
    expect(r.err).toContain('--allow-large');
    expect(r.err).toMatch(/about [\d.]+ GB/);
    const m = /use fewer cells \(about (\d+)x(\d+) would fit\)/.exec(r.err)!;
    const fw = buildGallery('gallery:square');
    const named: [number, number] = [Number(m[1]), Number(m[2])];
    expect(named[0]).toBe(named[1]); // the aspect is kept
    expect(() => checkRunSize(fw, named, parseBoundary('free'))).not.toThrow();
    expect(() => checkRunSize(fw, [named[0] + 1, named[1] + 1], parseBoundary('free'))).toThrow(TooLargeError);
  });

  it('the API refuses before building, naming cells and allowLarge; allowLarge lifts the default limits only', () => {
    const framework = buildGallery('gallery:kagome');
    let e: unknown;
    try {
      count({ framework, cells: [1000, 1000], boundary: 'free' });
    } catch (x) {
      e = x;
    }
    expect(e).toBeInstanceOf(TooLargeError);
    expect((e as TooLargeError).message).toContain('cells 1000x1000');
    expect((e as TooLargeError).message).toContain('allowLarge');
    expect((e as TooLargeError).bytesNeeded).toBeGreaterThan((e as TooLargeError).bytesAllowed);
    const b = parseBoundary('free');
    expect(() => checkRunSize(framework, [1000, 1000], b, { allowLarge: true, memoryLimit: 2 ** 50 })).not.toThrow();
    expect(() => checkRunSize(framework, [1000, 1000], b, { allowLarge: true, memoryLimit: 2 ** 30 })).toThrow(TooLargeError);
  });

  it('classify, export-modes and sweep make the same check', async () => {
    expectRefusal(await run(['classify', 'gallery:square', '--cells', '1000x1000']), 3, '--cells 1000x1000');
    expectRefusal(await run(['export-modes', 'gallery:square', '--cells', '1000x1000', '--json']), 3, '--cells 1000x1000');
    expectRefusal(await run(['sweep', 'gallery:square', '--cells', '4,1000']), 3, '--cells 1000x1000');
  });
});

describe('4. cost that does not grow with a dropped shift or with the joint count squared', () => {
  const far: Framework = {
    lattice: [
      [1, 0],
      [0, 1],
    ],
    joints: [{ id: 'A', at: [0, 0] }],
    bars: [
      { from: 'A', to: 'A', shift: [1e9, 0] },
      { from: 'A', to: 'A', shift: [0, 1] },
    ],
  };

  it('a bar shifted 1e9 cells leaves a 30x30 free supercell in every copy: counted as dropped', () => {
    // each of the 900 cells is the near end of one copy and the far end of another, so 1800
    // copies of the far bar touch the supercell, all with one end outside; the (0, 1) bar keeps
    // 30·29 copies and loses 30 at the top and 30 at the bottom
    const sc = buildSupercell(far, [30, 30], parseBoundary('free'));
    expect(sc.bars.length).toBe(30 * 29);
    expect(sc.dropped).toBe(1800 + 60);
    expect(sc.bars.every((b) => b.source === 1)).toBe(true);
  });

  it('on pinned sides the same copies are grounded, each with its inside end', () => {
    const sc = buildSupercell(far, [30, 30], parseBoundary('pinned'));
    expect(sc.grounded).toBe(1800 + 60);
    expect(sc.dropped).toBe(0);
    const groundedFar = sc.bars.filter((b) => b.source === 0);
    expect(groundedFar.length).toBe(1800);
    expect(groundedFar.every((b) => (b.a === -1) !== (b.b === -1))).toBe(true);
  });

  it('20 000 joints in one cell are checked for coincidences correctly (one duplicate far down the list)', () => {
    const joints = Array.from({ length: 20000 }, (_, k) => ({ id: `J${k}`, at: [(k % 200) / 200, Math.floor(k / 200) / 200] as [number, number] }));
    // joints[19999] moved onto the copy of joints[5] one cell up
    joints[19999].at = [joints[5].at[0], joints[5].at[1] + 1];
    const problems = validateFramework({ lattice: [[1, 0], [0, 1]], joints, bars: [] });
    expect(problems.map((p) => p.where)).toEqual(['joints[19999].at']);
    expect(problems[0].what).toContain('joints[5]');
    expect(problems[0].what).toContain('[0, 1]');
  });

  it('no bars: every velocity is a flex (2 per joint)', () => {
    const joints = Array.from({ length: 5000 }, (_, k) => ({ id: `J${k}`, at: [(k % 100) / 100, Math.floor(k / 100) / 100] as [number, number] }));
    const a = count({ framework: { lattice: [[1, 0], [0, 1]], joints, bars: [] }, cells: [1, 2], boundary: 'free' }).analysis;
    expect([a.joints, a.bars, a.flexes, a.selfStresses]).toEqual([10000, 0, 20000, 0]);
  });
});

describe('5. a cell far larger than its bars', () => {
  const big = (a1x: number, bShift: [number, number]): Framework => ({
    lattice: [
      [a1x, 0],
      [0, 1],
    ],
    joints: [{ id: 'A', at: [0, 0] }],
    bars: [{ from: 'A', to: 'A', shift: bShift }],
  });

  it('a bar of length 1 beside a lattice vector of 1e13 is reported as lost to rounding, not as zero length', () => {
    const p = validateFramework(big(1e13, [0, 1])).find((x) => x.where === 'bars[0]')!;
    expect(p.what).toContain('rounding');
    expect(p.what).not.toContain('zero length');
    expect(p.fix).toMatch(/lattice vectors/);
  });

  it('a bar whose ends really coincide is still reported as zero length', () => {
    // B at A + a1 with a1 = 1e13: A → B shifted by −1 lands on A exactly
    const fw: Framework = {
      lattice: [
        [1e13, 0],
        [0, 1],
      ],
      joints: [
        { id: 'A', at: [0, 0] },
        { id: 'B', at: [1e13, 0] },
      ],
      bars: [{ from: 'A', to: 'B', shift: [-1, 0] }],
    };
    expect(validateFramework(fw).find((x) => x.where === 'bars[0]')!.what).toContain('zero length');
  });
});

describe('6. control characters in names and ids are shown escaped', () => {
  const evil = '\u001b[31mRED\u202e\u0007';
  const raw = /[\u0000-\u0009\u000b-\u001f\u007f-\u009f\u202a-\u202e\u2066-\u2069]/;
  const fw = { ...squareWith('A'), name: evil, description: evil };

  it('count and classify tables escape the name; JSON stays exact and safe', async () => {
    const path = file('evil.json', fw);
    for (const cmd of ['count', 'classify']) {
      const r = await run([cmd, path, '--cells', '2x2']);
      expect(r.code).toBe(0);
      expect(r.out).not.toMatch(raw);
      expect(r.out).toContain('\\u001b[31mRED\\u202e\\u0007');
      const j = await run([cmd, path, '--cells', '2x2', '--json']);
      expect(j.out).not.toMatch(raw);
      expect(JSON.parse(j.out).name).toBe(evil);
    }
  });

  it('sweep and spectrum escape it too', async () => {
    const path = file('evil2.json', fw);
    for (const argv of [['sweep', path, '--cells', '2..3'], ['spectrum', path, '--grid', '4'], ['spectrum', path, '--grid', '4', '--json']]) {
      const r = await run(argv);
      expect(r.code).toBe(0);
      expect(r.out).not.toMatch(raw);
    }
  });

  it('joint ids and gallery names echoed in errors are escaped', async () => {
    const bad = { ...squareWith('A\u001b[2J'), bars: [{ from: 'A\u001b[2J', to: 'B\u202e\u001b]0;x\u0007', shift: [1, 0] }] };
    const r = await run(['count', file('evil-id.json', bad), '--cells', '2x2']);
    expectRefusal(r, 2, 'bars[0].to');
    expect(r.err).not.toMatch(raw);
    const g = await run(['count', 'gallery:squ\u001b[2Jare\u202e']);
    expectRefusal(g, 2, 'gallery name');
    expect(g.err).not.toMatch(raw);
  });
});

describe('7. numbers are plain decimals; huge phases are refused', () => {
  it.each(['twist:0x10,0', 'twist:0b1,0', 'twist:0o7,0', 'twist:Infinity,0', 'x=twist:1e999', 'x=twist:0x1'])('--bc %s is refused naming --bc', async (bc) => {
    expectRefusal(await run(['count', 'gallery:square', '--cells', '2x2', '--bc', bc]), 2, '--bc');
  });

  it('a phase whose fraction of a turn is lost is refused with the fix; plain decimals pass', async () => {
    const r = await run(['count', 'gallery:square', '--cells', '2x2', '--bc', 'twist:1e300,0']);
    expectRefusal(r, 2, '--bc');
    expect(r.err).toContain('too large');
    expect(() => parseBoundary(`twist:${MAX_TWIST_TURNS},0`)).toThrow(InputError);
    expect(parseBoundary(`twist:${MAX_TWIST_TURNS - 0.5},.25`)).toEqual({ x: { kind: 'twist', theta: MAX_TWIST_TURNS - 0.5 }, y: { kind: 'twist', theta: 0.25 } });
    expect(parseBoundary('twist: 2.5e-1 , -0.5')).toEqual({ x: { kind: 'twist', theta: 0.25 }, y: { kind: 'twist', theta: -0.5 } });
  });

  it.each([
    ['--tol', '0x1'],
    ['--tol', 'Infinity'],
    ['--tol', '0b1'],
    ['--cells', '0x10'],
    ['--cells', '1e3'],
    ['--window', '0x2'],
  ])('%s %s is refused naming the flag', async (flag, value) => {
    const argv = flag === '--window' ? ['classify', 'gallery:square', '--cells', '2x2', flag, value] : ['count', 'gallery:square', flag, value];
    expectRefusal(await run(argv), 2, flag);
  });
});

describe('8. the rank tolerance has a floor', () => {
  it.each(['0', '1e-16', '1', '-1e-9'])('--tol %s is refused naming --tol', async (tol) => {
    const r = await run(['count', 'gallery:square', '--cells', '2x2', '--tol', tol]);
    expectRefusal(r, 2, '--tol');
    expect(r.err).toContain(String(MIN_RELATIVE_TOLERANCE));
  });

  it('spectrum applies the same floor', async () => {
    expectRefusal(await run(['spectrum', 'gallery:square', '--tol', '0']), 2, '--tol');
  });

  it('the API refuses tolerance 0 naming the field; the floor itself is accepted', () => {
    const framework = buildGallery('gallery:square');
    let e: unknown;
    try {
      count({ framework, cells: [2, 2], boundary: 'free', tolerance: 0 });
    } catch (x) {
      e = x;
    }
    expect(e).toBeInstanceOf(InputError);
    expect((e as InputError).problems[0].where).toBe('tolerance');
    expect((e as InputError).problems[0].fix).toContain('1e-9');
    expect(count({ framework, cells: [2, 2], boundary: 'free', tolerance: MIN_RELATIVE_TOLERANCE }).analysis.tolerance.relative).toBe(MIN_RELATIVE_TOLERANCE);
  });
});
