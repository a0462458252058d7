/**
 * `shimmy batch`: plans (expansion, ids, errors with JSON paths), shards that cover the plan
 * exactly once, resuming, a failing job among good ones, results equal to single runs, and
 * every line valid against schema/batch-line.schema.json. The worker threads run from the
 * sources here (through tsx); the built CLI bundle is run too when `npm run build:cli` has made
 * its worker (tests/package.test.ts runs the compiled lib's).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import Ajv2020 from 'ajv/dist/2020.js';
import { afterAll, describe, expect, it } from 'vitest';
import { main, readTextFile } from '../src/cli/main.js';
import { InputError } from '../src/errors.js';
import { parsePlan, parseShard, shardJobs } from '../src/batch/plan.js';

const ROOT = resolve(import.meta.dirname, '..');
const tmp = mkdtempSync(join(tmpdir(), 'shimmy-batch-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

/** Runs the CLI in this process; framework files are read relative to `dir`, as from a shell there. */
async function run(argv: string[], dir = tmp) {
  let out = '';
  let err = '';
  const code = await main(argv, { out: (t) => (out += t), err: (t) => (err += t), readText: (p) => readTextFile(resolve(dir, p)) });
  return { code, out, err };
}

interface Line {
  id: string;
  job: { command: string; framework: string; cells?: [number, number]; bc?: string; options: Record<string, string | number | boolean> };
  ok: boolean;
  exitCode: number;
  result?: Record<string, unknown>;
  error?: { kind: string; message: string; problems?: { where: string; what: string; fix: string }[] };
}

function readLines(path: string): Line[] {
  return readFileSync(path, 'utf8')
    .split('\n')
    .filter((l) => l !== '')
    .map((l) => JSON.parse(l) as Line);
}

function writePlan(name: string, plan: unknown): string {
  const p = join(tmp, name);
  writeFileSync(p, JSON.stringify(plan, null, 2));
  return p;
}

/** The InputError a plan gives, or null. */
function planError(plan: unknown): InputError | null {
  try {
    parsePlan(JSON.stringify(plan), 'plan.json', tmp);
    return null;
  } catch (e) {
    if (e instanceof InputError) return e;
    throw e;
  }
}

// a framework file that loads but is not valid: a bar to a joint that does not exist
writeFileSync(join(tmp, 'broken.json'), JSON.stringify({ lattice: [[1, 0], [0, 1]], joints: [{ id: 'A', at: [0, 0] }], bars: [{ from: 'A', to: 'Z', shift: [1, 0] }] }));
// a valid file: the square grid's unit cell
writeFileSync(join(tmp, 'square.json'), JSON.stringify({ name: 'square from a file', lattice: [[1, 0], [0, 1]], joints: [{ id: 'A', at: [0, 0] }], bars: [{ from: 'A', to: 'A', shift: [1, 0] }, { from: 'A', to: 'A', shift: [0, 1] }] }));

const SCAN = {
  jobs: [
    { command: 'count', framework: 'gallery:kagome', cells: '4x4', bc: 'periodic' },
    { command: 'edges', framework: 'gallery:kagome', options: { grid: 4, strip: 0 } },
    { id: 'the square file', command: 'classify', framework: 'square.json', cells: [3, 4], bc: 'free' },
  ],
  grid: [
    { command: 'count', framework: ['gallery:twisted-kagome?twist=0..20:10', 'square.json'], cells: ['3x3', [2, 5]], bc: ['free', 'x=periodic'], options: { tol: [1e-9, 1e-6] } },
    { command: 'classify', framework: 'gallery:square', cells: '2..3', options: { window: 2 } },
  ],
};

describe('plans', () => {
  it('expand grids in order with ids from the command line, and defaults for cells and bc', () => {
    const plan = parsePlan(JSON.stringify(SCAN), 'scan.json', tmp);
    // 3 jobs + count grid 4 frameworks × 2 cells × 2 bc × 2 tol + classify grid 2 sizes
    expect(plan.jobs.length).toBe(3 + 4 * 2 * 2 * 2 + 2);
    expect(plan.jobs[0].id).toBe('count gallery:kagome --cells 4x4 --bc periodic');
    expect(plan.jobs[1].id).toBe('edges gallery:kagome --grid 4 --strip 0');
    expect(plan.jobs[2].id).toBe('the square file');
    expect(plan.jobs[3].id).toBe('count gallery:twisted-kagome?twist=0 --cells 3x3 --bc free --tol 1e-9');
    expect(plan.jobs.map((j) => j.framework)).toContain('gallery:twisted-kagome?twist=20');
    expect(plan.jobs.at(-1)).toMatchObject({ command: 'classify', framework: 'gallery:square', cells: [3, 3], bc: 'free', options: { window: 2 } });
    expect(new Set(plan.jobs.map((j) => j.id)).size).toBe(plan.jobs.length);
    // the same text gives the same jobs, ids and order
    expect(parsePlan(JSON.stringify(SCAN), 'scan.json', tmp).jobs).toEqual(plan.jobs);
  });

  it('expand gallery parameter ranges and lists into every combination, first parameter slowest', () => {
    const plan = parsePlan(JSON.stringify({ grid: { command: 'edges', framework: 'gallery:deformed-kagome?x1=-0.1..0.1:0.1&x2=0,0.05' } }), 'p.json', tmp);
    expect(plan.jobs.map((j) => j.framework)).toEqual(
      ['x1=-0.1&x2=0', 'x1=-0.1&x2=0.05', 'x1=0&x2=0', 'x1=0&x2=0.05', 'x1=0.1&x2=0', 'x1=0.1&x2=0.05'].map((q) => `gallery:deformed-kagome?${q}`),
    );
    const e = planError({ grid: { command: 'edges', framework: 'gallery:deformed-kagome?x1=0.2..0:0.1' } });
    expect(e?.problems[0]).toMatchObject({ where: 'grid.framework (parameter "x1")' });
    expect(e?.problems[0].what).toContain('backwards');
  });

  it('name the JSON path and the fix of every problem at once', () => {
    const e = planError({
      jobz: [],
      jobs: [
        { command: 'cout', framework: 'gallery:kagome' },
        { command: 'count', framework: 'missing.json', cells: '4y4', bc: 'twist:a' },
        { command: 'edges', framework: 'gallery:kagome', cells: '4x4' },
        { command: 'count', framework: 'gallery:kagome', options: { verify: 'yes', window: 3 } },
      ],
      grid: { command: 'count', framework: 'gallery:twisted-kagome?twist=0..90:30' },
    });
    expect(e).not.toBeNull();
    const where = e!.problems.map((p) => p.where);
    expect(where).toEqual(
      expect.arrayContaining(['jobz', 'jobs[0].command', 'jobs[1].framework', 'jobs[1].cells', 'jobs[1].bc', 'jobs[2].cells', 'jobs[3].options.verify', 'jobs[3].options.window']),
    );
    expect(where.some((w) => w.startsWith('grid.framework') && w.includes('twist'))).toBe(true);
    expect(e!.problems.find((p) => p.where === 'jobs[0].command')!.what).toContain('did you mean count?');
    for (const p of e!.problems) expect(p.fix.length).toBeGreaterThan(10);
  });

  it('refuse a job listed twice, an empty plan and text that is not JSON', () => {
    const twice = planError({ jobs: [{ command: 'count', framework: 'gallery:kagome' }], grid: { command: 'count', framework: 'gallery:kagome', cells: '8x8', bc: 'free' } });
    expect(twice?.problems[0].what).toContain('also in jobs[0]');
    expect(planError({ grid: { command: 'count', framework: 'gallery:kagome', cells: [] } })?.problems[0].what).toContain('no jobs');
    expect(() => parsePlan('{ "jobs": [', 'p.json', tmp)).toThrow(/not valid JSON/);
  });
});

describe('shards', () => {
  const jobs = parsePlan(JSON.stringify(SCAN), 'scan.json', tmp).jobs;
  it.each([1, 2, 3, 5, 7, 40, 100])('%i shards hold every job of the plan exactly once', (n) => {
    const seen = new Map<string, number>();
    for (let i = 1; i <= n; i++) for (const j of shardJobs(jobs, parseShard(`${i}/${n}`))) seen.set(j.id, (seen.get(j.id) ?? 0) + 1);
    expect([...seen.keys()].sort()).toEqual(jobs.map((j) => j.id).sort());
    expect([...seen.values()].every((c) => c === 1)).toBe(true);
  });

  it('--shard takes i/n with 1 ≤ i ≤ n', () => {
    for (const bad of ['0/3', '4/3', '1/0', '1', 'a/b']) expect(() => parseShard(bad)).toThrow(InputError);
  });
});

describe('shimmy batch', () => {
  const planPath = writePlan('scan.json', SCAN);
  const whole = join(tmp, 'whole.jsonl');
  const ajv = new Ajv2020({ strict: true, allowUnionTypes: true, allErrors: true });
  for (const s of ['framework', 'count', 'classify', 'edges']) ajv.addSchema(JSON.parse(readFileSync(join(ROOT, 'schema', `${s}.schema.json`), 'utf8')));
  const validLine = ajv.compile(JSON.parse(readFileSync(join(ROOT, 'schema', 'batch-line.schema.json'), 'utf8')));

  it('runs the plan on worker threads: one valid line per job, and the same result as a single run', async () => {
    const r = await run(['batch', planPath, '--out', whole, '--workers', '2']);
    expect(r.err).toContain('running 37 on 2 worker threads');
    expect(r.code).toBe(0);
    const lines = readLines(whole);
    const expected = parsePlan(JSON.stringify(SCAN), 'scan.json', tmp).jobs;
    expect(lines.map((l) => l.id).sort()).toEqual(expected.map((j) => j.id).sort());
    for (const line of lines) {
      expect(validLine(line) ? '' : ajv.errorsText(validLine.errors)).toBe('');
      expect(line.ok).toBe(true);
    }
    // kagome 4×4 torus: N1 + N2 + gcd = 12 flexes and self-stresses (see tests/published-counts.test.ts)
    expect(lines.find((l) => l.id === 'count gallery:kagome --cells 4x4 --bc periodic')?.result).toMatchObject({ flexes: 12, selfStresses: 12 });
    // every result equals the command run alone from the plan's folder (count's `seconds` is a timing)
    for (const line of lines) {
      const j = line.job;
      const flags = [...(j.cells ? ['--cells', `${j.cells[0]}x${j.cells[1]}`] : []), ...(j.bc ? ['--bc', j.bc] : []), ...Object.entries(j.options).flatMap(([k, v]) => (v === true ? [`--${k}`] : [`--${k}`, String(v)]))];
      const single = await run([j.command, j.framework, ...flags, '--json']);
      expect(single.code).toBe(0);
      const { seconds: _a, ...alone } = JSON.parse(single.out) as Record<string, unknown>;
      const { seconds: _b, ...batched } = line.result!;
      expect(batched).toEqual(alone);
    }
  });

  it('a failing job writes its error line, the rest go on, and the exit code says so', async () => {
    const p = writePlan('with-bad.json', {
      grid: { command: 'count', framework: ['gallery:square', 'broken.json', 'gallery:kagome'], cells: '3x3' },
    });
    const out = join(tmp, 'with-bad.jsonl');
    const r = await run(['batch', p, '--out', out, '--workers', '2']);
    expect(r.code).toBe(5);
    expect(r.err).toContain('1 of 3 jobs failed');
    const lines = readLines(out);
    expect(lines.length).toBe(3);
    const bad = lines.find((l) => l.job.framework === 'broken.json')!;
    expect(bad).toMatchObject({ ok: false, exitCode: 2, error: { kind: 'input' } });
    expect(bad.error!.problems![0].where).toBe('bars[0].to');
    expect(bad.result).toBeUndefined();
    expect(lines.filter((l) => l.ok).map((l) => l.job.framework).sort()).toEqual(['gallery:kagome', 'gallery:square']);
    for (const line of lines) expect(validLine(line) ? '' : ajv.errorsText(validLine.errors)).toBe('');
  });

  it('n shards run as separate commands give the lines of the whole run, each once', async () => {
    const parts: Line[] = [];
    for (let i = 1; i <= 3; i++) {
      const out = join(tmp, `part-${i}.jsonl`);
      const r = await run(['batch', planPath, '--shard', `${i}/3`, '--out', out, '--workers', '1']);
      expect(r.code).toBe(0);
      parts.push(...readLines(out));
    }
    const strip = (l: Line) => ({ ...l, seconds: 0, result: { ...l.result, seconds: 0 } });
    const byId = (a: Line, b: Line) => (a.id < b.id ? -1 : a.id > b.id ? 1 : 0);
    expect(parts.map(strip).sort(byId)).toEqual(readLines(whole).map(strip).sort(byId));
  });

  it('resumes: finished ids are skipped and a line cut short is rewritten', async () => {
    const p = writePlan('resume.json', { grid: { command: 'count', framework: 'gallery:kagome', cells: ['2x2', '3x3', '4x4'], bc: 'periodic' } });
    const out = join(tmp, 'resume.jsonl');
    expect((await run(['batch', p, '--out', out, '--workers', '2'])).code).toBe(0);
    const full = readFileSync(out, 'utf8');
    const ids = readLines(out).map((l) => l.id);
    // an interruption in the middle of writing the last line
    writeFileSync(out, full.slice(0, full.length - 40));
    const list = await run(['batch', p, '--out', out, '--list']);
    expect(list.out).toBe(`${ids[2]}\n`);
    const again = await run(['batch', p, '--out', out, '--workers', '2']);
    expect(again.code).toBe(0);
    expect(again.err).toContain('2 already in');
    expect(readLines(out).map((l) => l.id)).toEqual(ids);
    // nothing left to do
    const idle = await run(['batch', p, '--out', out]);
    expect(idle.err).toContain('running 0');
    expect(readLines(out).length).toBe(3);
  });

  it('bad flags and a bad results file are input errors naming the fix', async () => {
    const r = await run(['batch', planPath, '--shard', '4/3']);
    expect(r.code).toBe(2);
    expect(r.err).toContain('--shard');
    const junk = join(tmp, 'junk.jsonl');
    writeFileSync(junk, 'not json\n');
    const j = await run(['batch', planPath, '--out', junk]);
    expect(j.code).toBe(2);
    expect(j.err).toContain('line 1');
    expect((await run(['batch', join(tmp, 'nothing.json')])).err).toContain('no such file');
  });

  const bundle = join(ROOT, 'build', 'cli');
  const bundled = existsSync(join(bundle, 'worker.js')) && existsSync(join(bundle, 'run.cjs')) && statSync(join(bundle, 'worker.js')).mtimeMs >= statSync(join(ROOT, 'src', 'batch', 'worker.ts')).mtimeMs;
  it.skipIf(!bundled)('the CLI bundle (build/cli, npm run build:cli) runs its worker threads too', () => {
    const p = writePlan('bundle.json', { grid: { command: ['count', 'edges'], framework: 'gallery:kagome', options: {} } });
    const r = spawnSync(process.execPath, [join(bundle, 'run.cjs'), 'batch', p, '--workers', '2'], { encoding: 'utf8' });
    expect(r.status).toBe(0);
    const lines = r.stdout.trim().split('\n').map((l) => JSON.parse(l) as Line);
    expect(lines.map((l) => l.job.command).sort()).toEqual(['count', 'edges']);
    expect(lines.every((l) => l.ok)).toBe(true);
  });
});
