/**
 * Every --json output of the CLI validates against its schema in schema/ and names it in
 * `schemaVersion`. Validator: Ajv (draft 2020-12 build), a devDependency.
 */
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { MODE_DATA_SCHEMA, modesToJson } from '../src/io/modes.js';
import { parseModesJson } from '../src/io/modes-read.js';
import { InputError } from '../src/errors.js';
import { runCli, SCHEMA_DIR, schemaValidators } from './cli-harness.js';

const run = runCli;

// modes.schema.json refers to the framework schema for its unit cell; the harness adds it
const { ajv, validator } = schemaValidators();
const schemaDir = SCHEMA_DIR;
const validators = {
  count: validator('count.schema.json'),
  classify: validator('classify.schema.json'),
  sweep: validator('sweep.schema.json'),
  spectrum: validator('spectrum.schema.json'),
  edges: validator('edges.schema.json'),
  modes: validator('modes.schema.json'),
  'twist-sweep': validator('twist-sweep.schema.json'),
};
type Kind = keyof typeof validators;

/** The errors of validating `value`, as text ('' when valid), so a failure shows what is wrong. */
function problems(kind: Kind, value: unknown): string {
  const v = validators[kind];
  return v(value) ? '' : ajv.errorsText(v.errors, { separator: '\n' });
}

/** Run a command, check it succeeded, and return its parsed JSON after validating it. */
async function validOutput(kind: Kind, argv: string[]): Promise<Record<string, unknown>> {
  const r = await run(argv);
  // progress lines appear only after a second, so on a busy machine (src/cli/progress.ts): not errors
  expect(r.err.replace(/^shimmy [\w-]+: .*\(\d+\.\d s\)\n/gm, '')).toBe('');
  expect(r.code).toBe(0);
  const o = JSON.parse(r.out) as Record<string, unknown>;
  expect(problems(kind, o)).toBe('');
  return o;
}

const tmp = mkdtempSync(join(tmpdir(), 'shimmy-schemas-'));

/** Two nearly flat triangles (as in tests/cli.test.ts): at --tol 1e-6 the rank is ambiguous. */
function thinFramework(): string {
  const f = join(tmp, 'thin.json');
  const joints = [['A', 0, 0], ['B', 2, 0], ['C', 1, 3e-6], ['D', 0, 3], ['E', 2, 3], ['F', 1, 3 + 1e-6]].map(([id, x, y]) => ({ id, at: [x, y] }));
  const bars = ['AB', 'BC', 'AC', 'DE', 'EF', 'DF'].map((p) => ({ from: p[0], to: p[1], shift: [0, 0] }));
  writeFileSync(f, JSON.stringify({ lattice: [[10, 0], [0, 10]], joints, bars }));
  return f;
}

describe('every schema', () => {
  it('is valid draft 2020-12 and names its schemaVersion as a constant', () => {
    const names: Record<Kind, string> = { count: 'shimmy.count/1', classify: 'shimmy.classify/1', sweep: 'shimmy.sweep/1', spectrum: 'shimmy.spectrum/1', edges: 'shimmy.edges/1', modes: MODE_DATA_SCHEMA, 'twist-sweep': 'shimmy.twist-sweep/1' };
    for (const kind of Object.keys(validators) as Kind[]) {
      const s = JSON.parse(readFileSync(join(schemaDir, `${kind}.schema.json`), 'utf8'));
      expect(s.$schema).toBe('https://json-schema.org/draft/2020-12/schema');
      expect(s.properties.schemaVersion.const).toBe(names[kind]);
    }
  });
});

describe('shimmy count --json', () => {
  it('periodic kagome: valid, carries its schemaVersion', async () => {
    const o = await validOutput('count', ['count', 'gallery:kagome', '--cells', '4x6', '--bc', 'periodic', '--json']);
    expect(o.schemaVersion).toBe('shimmy.count/1');
  });

  it('twisted boundary (Bloch solver, complex matrix) with --verify', async () => {
    const o = await validOutput('count', ['count', 'gallery:kagome', '--cells', '3x4', '--bc', 'twist:0.25,0.1', '--verify', '--json']);
    expect(o.real).toBe(false);
    expect(o.selfCheck).toBeDefined();
  });

  it('sparse solver run, with the certified lower bound of the gap', async () => {
    const o = await validOutput('count', ['count', 'gallery:square', '--cells', '12x12', '--solver', 'sparse', '--json']);
    expect(o.solver).toBe('sparse');
    expect((o.status as { keptSigma: string }).keptSigma).toBe('lower-bound');
  });

  it('an ambiguous count (narrow gap) with its warning', async () => {
    const o = await validOutput('count', ['count', thinFramework(), '--cells', '1x1', '--tol', '1e-6', '--json']);
    expect((o.gap as { ambiguous: boolean }).ambiguous).toBe(true);
    expect((o.warnings as string[]).length).toBeGreaterThan(0);
  });

  it('the schema rejects an output with a field missing, a wrong type or an unknown field', async () => {
    const o = await validOutput('count', ['count', 'gallery:square', '--cells', '3x3', '--json']);
    const { flexes: _f, ...missing } = o;
    expect(problems('count', missing)).toMatch(/flexes/);
    expect(problems('count', { ...o, rank: '4' })).toMatch(/rank/);
    expect(problems('count', { ...o, extra: 1 })).toMatch(/additional/);
    expect(problems('count', { ...o, schemaVersion: 'shimmy.count/0' })).toMatch(/schemaVersion/);
  });
});

describe('shimmy classify --json', () => {
  it('free and twisted supercells, and the --out file with vectors', async () => {
    const free = await validOutput('classify', ['classify', 'gallery:kagome', '--cells', '3x3', '--json']);
    expect(free.schemaVersion).toBe('shimmy.classify/1');
    expect(free.sideWeights).not.toBeNull();
    const twisted = await validOutput('classify', ['classify', 'gallery:square', '--cells', '3x4', '--bc', 'x=twist:0.25,y=free', '--json']);
    expect((twisted.modes as unknown[]).length).toBeGreaterThan(0);
    const out = join(tmp, 'classify.json');
    await validOutput('classify', ['classify', 'gallery:square', '--cells', '3x3', '--json', '--out', out]);
    const file = JSON.parse(readFileSync(out, 'utf8'));
    expect(problems('classify', file)).toBe('');
    expect(file.modes[0].vector.re.length).toBe(2 * file.joints);
  });

  it('deformed kagome: decaying flexes with anchor, decay length and fit quality', async () => {
    const o = await validOutput('classify', ['classify', 'gallery:deformed-kagome', '--cells', '5x5', '--json']);
    const decaying = (o.modes as { class: string; anchor?: unknown }[]).filter((m) => m.class === 'decaying');
    expect(decaying.length).toBeGreaterThan(0);
    expect(decaying[0].anchor).toBeDefined();
  });
});

describe('shimmy sweep --json', () => {
  it('free and twisted sweeps', async () => {
    const o = await validOutput('sweep', ['sweep', 'gallery:square', '--cells', '2..4', '--json']);
    expect(o.schemaVersion).toBe('shimmy.sweep/1');
    expect((o.rows as unknown[]).length).toBe(3);
    await validOutput('sweep', ['sweep', 'gallery:kagome', '--cells', '2..3', '--bc', 'twist:0.25,0.25', '--json']);
  });
  it('a twist sweep', async () => {
    const o = await validOutput('twist-sweep', ['sweep', 'gallery:kagome', '--cells', '3x3', '--twist', '0..0.5:0.25', '--json']);
    expect((o.rows as { theta: number }[]).map((r) => r.theta)).toEqual([0, 0.25, 0.5]);
  });
});

describe('shimmy spectrum --json', () => {
  it('kagome and a one-joint cell (sigma2, sigma3 null)', async () => {
    const o = await validOutput('spectrum', ['spectrum', 'gallery:kagome', '--grid', '6', '--json']);
    expect(o.schemaVersion).toBe('shimmy.spectrum/1');
    const sq = await validOutput('spectrum', ['spectrum', 'gallery:square', '--grid', '4', '--json']);
    expect((sq.arrays as { sigma3: unknown }).sigma3).toBeNull();
  });
});

describe('shimmy edges --json', () => {
  it('kagome along a1 and a2', async () => {
    const o = await validOutput('edges', ['edges', 'gallery:kagome', '--json']);
    expect(o.schemaVersion).toBe('shimmy.edges/1');
    await validOutput('edges', ['edges', 'gallery:kagome', '--along', 'a2', '--phase', '0.1', '--grid', '4', '--json']);
  });

  it('twisted kagome: defined windings, polarisation and edge roots', async () => {
    const o = await validOutput('edges', ['edges', 'gallery:twisted-kagome', '--grid', '4', '--json']);
    expect(o.winding).not.toBeNull();
    expect(o.polarisation).not.toBeNull();
  });
});

describe('shimmy export-modes --json', () => {
  it('free and twisted runs validate and read back exactly, schemaVersion included', async () => {
    const free = await validOutput('modes', ['export-modes', 'gallery:square', '--cells', '2x2', '--json']);
    expect(free.schemaVersion).toBe(MODE_DATA_SCHEMA);
    const r = await run(['export-modes', 'gallery:kagome', '--cells', '2x3', '--bc', 'twist:0.25,0.1', '--json']);
    expect(r.code).toBe(0);
    const twisted = JSON.parse(r.out);
    expect(problems('modes', twisted)).toBe('');
    expect(modesToJson(parseModesJson(r.out))).toBe(r.out);
  });

  it('the reader accepts a file without schemaVersion and rejects a wrong one, naming the field', async () => {
    const r = await run(['export-modes', 'gallery:square', '--cells', '2x2', '--json']);
    const o = JSON.parse(r.out);
    const { schemaVersion: _s, ...older } = o;
    const back = parseModesJson(JSON.stringify(older));
    expect(back.schemaVersion).toBeUndefined();
    expect(modesToJson(back)).not.toContain('schemaVersion');
    let error: unknown;
    try {
      parseModesJson(JSON.stringify({ ...o, schemaVersion: 'shimmy.modes/1' }));
    } catch (e) {
      error = e;
    }
    expect(error).toBeInstanceOf(InputError);
    expect((error as InputError).problems.map((p) => p.where)).toContain('schemaVersion');
  });
});
