/** The CLI shell: output formats, help, exit codes and error messages (no stack traces). */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { readTextFile } from '../src/cli/main.js';
import { progressLine } from '../src/cli/progress.js';
import { DENSE_MEMORY_LIMIT, denseMemoryBytes } from '../src/linalg/dense.js';
import { TooLargeError } from '../src/errors.js';
import { checkRunSize } from '../src/flex/estimate.js';
import { buildGallery } from '../src/framework/gallery.js';
import { parseBoundary } from '../src/supercell/boundary.js';
import { runCli } from './cli-harness.js';

const run = runCli;

const tmp = mkdtempSync(join(tmpdir(), 'shimmy-cli-'));

describe('shimmy count', () => {
  it('--json prints exactly one JSON object with the promised fields', async () => {
    const r = await run(['count', 'gallery:kagome', '--cells', '4x6', '--bc', 'periodic', '--json']);
    expect(r.code).toBe(0);
    expect(r.err).toBe('');
    const o = JSON.parse(r.out);
    // kagome periodic N1×N2: N1 + N2 + gcd(N1, N2) = 12 (Sun, Souslov, Mao & Lubensky, PNAS 2012)
    expect(o).toMatchObject({ joints: 72, bars: 144, flexes: 12, trivialFlexes: 2, selfStresses: 12 });
    expect(o.maxwellCalladine).toEqual({ lhs: 0, rhs: 0, ok: true });
    expect(o.tolerance.relative).toBe(1e-9);
    expect(o.tolerance.absolute).toBeCloseTo(1e-9 * o.sigmaMax, 20);
    expect(Object.keys(o.gap).sort()).toEqual(['ambiguous', 'dropped', 'kept', 'ratio']);
    expect(o.gap.kept).toBeGreaterThan(o.tolerance.absolute);
    expect(o.gap.dropped).toBeLessThanOrEqual(o.tolerance.absolute);
    expect(o.gap.ratio).toBeCloseTo(o.gap.kept / o.gap.dropped, 0);
    expect(o.caution).toMatch(/first-order/);
  });

  it('the table names every count, the tolerance, the gap and the caution', async () => {
    const r = await run(['count', 'gallery:square', '--cells', '4x5']);
    expect(r.code).toBe(0);
    for (const word of ['joints', 'flexes', 'trivial', 'self-stresses', 'Maxwell–Calladine', 'tolerance', 'gap', 'Caution']) expect(r.out).toContain(word);
    // square grid free 4×5 joints: 9 flexes (Bolker & Crapo 1979)
    expect(r.out).toMatch(/flexes\s+9\n/);
  });

  it('--tol changes the cut and is reported', async () => {
    const r = await run(['count', 'gallery:square', '--cells', '3x3', '--tol', '1e-6', '--json']);
    expect(JSON.parse(r.out).tolerance.relative).toBe(1e-6);
  });

  it('warns when the gap is narrow (rank ambiguous)', async () => {
    // Two nearly flat triangles, apexes lifted by 3e-6 and 1e-6 above their bases: each has
    // one tiny singular value (proportional to the lift). A cut between them (1e-6 × σ_max,
    // σ_max = 3) keeps one and drops the other, so the gap ratio is about 3, far under 1e4.
    const f = join(tmp, 'thin.json');
    const joints = [['A', 0, 0], ['B', 2, 0], ['C', 1, 3e-6], ['D', 0, 3], ['E', 2, 3], ['F', 1, 3 + 1e-6]].map(([id, x, y]) => ({ id, at: [x, y] }));
    const bars = ['AB', 'BC', 'AC', 'DE', 'EF', 'DF'].map((p) => ({ from: p[0], to: p[1], shift: [0, 0] }));
    writeFileSync(f, JSON.stringify({ lattice: [[10, 0], [0, 10]], joints, bars }));
    const r = await run(['count', f, '--cells', '1x1', '--tol', '1e-6', '--json']);
    const o = JSON.parse(r.out);
    expect(o.gap.ratio).toBeGreaterThan(1);
    expect(o.gap.ratio).toBeLessThan(10);
    expect(o.gap.ambiguous).toBe(true);
    expect(o.warnings[0]).toMatch(/ambiguous/);
    const table = await run(['count', f, '--cells', '1x1', '--tol', '1e-6']);
    expect(table.out).toMatch(/Warning: .*ambiguous/);
  });
});

describe('help and errors', () => {
  it('shimmy --help lists the commands; count --help lists its flags', async () => {
    const top = await run(['--help']);
    expect(top.code).toBe(0);
    expect(top.out).toContain('count');
    const c = await run(['count', '--help']);
    expect(c.code).toBe(0);
    for (const flag of ['--cells', '--bc', '--tol', '--json']) expect(c.out).toContain(flag);
  });

  it.each([
    [['count', 'gallery:kagome', '--cellz', '4x4'], '--cellz'],
    [['count', 'gallery:kagome', '--cells', '4by4'], '--cells'],
    [['count', 'gallery:kagome', '--cells', '0x3'], '--cells'],
    [['count', 'gallery:kagome', '--bc', 'sticky'], '--bc'],
    [['count', 'gallery:kagome', '--tol', 'tiny'], '--tol'],
    [['count', 'gallery:kagome', '--cells'], '--cells'],
    [['count', 'gallery:nonesuch'], 'nonesuch'],
    [['count', join(tmp, 'missing.json')], 'no such file'],
    [['count'], 'FRAMEWORK'],
    [['frobnicate'], 'frobnicate'],
  ])('%j exits 2 naming %s', async (argv, needle) => {
    const r = await run(argv);
    expect(r.code).toBe(2);
    expect(r.out).toBe('');
    expect(r.err).toContain(needle);
    expect(r.err).not.toMatch(/\n\s+at /); // no stack trace
  });

  it('an invalid framework file lists every problem and exits 2', async () => {
    const f = join(tmp, 'bad.json');
    writeFileSync(f, JSON.stringify({ lattice: [[1, 0], [2, 0]], joints: [{ id: 'A', at: [0, 0] }], bars: [{ from: 'A', to: 'Q', shift: [1, 0.5] }] }));
    const r = await run(['count', f]);
    expect(r.code).toBe(2);
    expect(r.err).toContain('lattice');
    expect(r.err).toContain('bars[0].to');
    expect(r.err).toContain('bars[0].shift[1]');
  });

  it('refuses a dense problem too large for memory, with an estimate', async () => {
    const r = await run(['count', 'gallery:kagome', '--cells', '200x200', '--bc', 'twist:0.1,0.2', '--solver', 'dense']);
    expect(r.code).toBe(3);
    expect(r.err).toMatch(/about [\d.]+ GB/);
    // the size check before the run (src/flex/estimate.ts) names the largest size that fits
    // its memory and time limits: that size passes the check, two cells more per side do not
    const m = /use fewer cells \(about (\d+)x(\d+) would fit\)/.exec(r.err);
    expect(m).not.toBeNull();
    expect(r.err).toContain('--cells 200x200');
    const named: [number, number] = [Number(m![1]), Number(m![2])];
    const fw = buildGallery('gallery:kagome');
    const bc = parseBoundary('twist:0.1,0.2');
    expect(() => checkRunSize(fw, named, bc, { solver: 'dense' })).not.toThrow();
    expect(() => checkRunSize(fw, [named[0] + 2, named[1] + 2], bc, { solver: 'dense' })).toThrow(TooLargeError);
    // periodic kagome: 6 bars and 6 columns per cell; the named size's dense SVD fits memory
    const cells = named[0] * named[1];
    expect(denseMemoryBytes(6 * cells, 6 * cells, true, false)).toBeLessThanOrEqual(DENSE_MEMORY_LIMIT);
    expect(r.err).not.toMatch(/\n\s+at /);
  });
});

describe('the installed command', () => {
  it('bin/shimmy.cjs runs the CLI (the build npm ci makes, or the sources through tsx) and sets the exit code', () => {
    // npm ci's prepare step builds the CLI bundle
    expect(existsSync('build/cli/run.cjs')).toBe(true);
    // and the V8 code cache the build writes beside it (tools/write-code-cache.mjs)
    expect(existsSync('build/cli/run.cjs.cache')).toBe(true);
    const outputs: string[] = [];
    for (const env of [{ ...process.env, SHIMMY_FROM_SOURCE: '1' }, process.env]) {
      const ok = spawnSync(process.execPath, ['bin/shimmy.cjs', 'count', 'gallery:square', '--cells', '3x3', '--json'], { encoding: 'utf8', env });
      expect(ok.status).toBe(0);
      expect(JSON.parse(ok.stdout).flexes).toBe(6); // 3×3 joints: a + b = 6 (Bolker & Crapo 1979)
      const { seconds, ...rest } = JSON.parse(ok.stdout);
      expect(seconds).toBeGreaterThan(0); // the count's own time
      outputs.push(JSON.stringify(rest));
      const bad = spawnSync(process.execPath, ['bin/shimmy.cjs', 'count', 'gallery:square', '--bc', 'nope'], { encoding: 'utf8', env });
      expect(bad.status).toBe(2);
      expect(bad.stderr).toContain('--bc');
      expect(bad.stderr).not.toMatch(/\n\s+at /);
    }
    expect(outputs[1]).toBe(outputs[0]);
  }, 30000);
});

describe('progress line', () => {
  it('stays quiet for short runs, then prints the stage and percentage on stderr', () => {
    let err = '';
    const io = { out: () => undefined, err: (t: string) => (err += t), readText: readTextFile };
    const quiet = progressLine(io, 'count');
    quiet.report({ fraction: 0.5, stage: 'dense SVD' });
    quiet.done();
    expect(err).toBe('');
    const loud = progressLine(io, 'count', 0, 0);
    loud.report({ fraction: 0.42, stage: 'factorising' });
    loud.done();
    expect(err).toMatch(/^shimmy count: factorising 42% \(\d+\.\d s\)\n$/);
    let tty = '';
    const t = progressLine({ ...io, err: (x: string) => (tty += x), errIsTTY: true }, 'sweep', 0, 0);
    t.report({ fraction: 1, stage: '8×8' });
    t.done();
    expect(tty.startsWith('\r')).toBe(true);
    expect(tty.endsWith('\n')).toBe(true);
  });
});
