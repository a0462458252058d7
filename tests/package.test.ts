/**
 * The package as a consumer gets it: compile lib/ (tsconfig.lib.json) in a staging copy of the
 * repository (so this test never writes into the checkout), `npm pack` it, install the tarball
 * into a scratch folder, and then use it with plain `node` (no TypeScript loader): import the
 * API, run the packed `shimmy` bin (count, and batch on its worker threads), and type-check the
 * README's TypeScript examples against the packed .d.ts files.
 *
 * Installing: `npm ci --offline` in the scratch folder, whose lockfile names the tarball and
 * takes ml-matrix and its dependencies from the repository's lockfile (so npm needs only their
 * tarballs, which `npm ci` left in its cache, not the registry's metadata). When that fails the
 * tarball is unpacked into node_modules/shimmy and node_modules/ml-matrix linked to the
 * repository's copy. The test prints which of the two it used.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { cpSync, existsSync, mkdirSync, mkdtempSync, readFileSync, renameSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

const ROOT = resolve(import.meta.dirname, '..');
const TSC = join(ROOT, 'node_modules', 'typescript', 'bin', 'tsc');
const tmp = mkdtempSync(join(tmpdir(), 'shimmy-package-'));
const stage = join(tmp, 'stage');
const scratch = join(tmp, 'scratch');
const installed = join(scratch, 'node_modules', 'shimmy');

/** Plain node: no loader or inspector options inherited from the test runner. */
function plainEnv(): NodeJS.ProcessEnv {
  const env = { ...process.env };
  delete env.NODE_OPTIONS;
  return env;
}

function node(args: string[], cwd = scratch) {
  return spawnSync(process.execPath, args, { cwd, encoding: 'utf8', env: plainEnv() });
}

/** A lockfile for the scratch folder: the tarball, and its dependencies as the repository locks them. */
function scratchLock(tarballName: string, integrity: string, dependencies: Record<string, string>): unknown {
  const repoLock = JSON.parse(readFileSync(join(ROOT, 'package-lock.json'), 'utf8')) as { packages: Record<string, { dependencies?: Record<string, string> }> };
  const packages: Record<string, unknown> = {
    '': { name: 'scratch', dependencies: { shimmy: `file:${tarballName}` } },
    'node_modules/shimmy': { version: '0.1.0', resolved: `file:${tarballName}`, integrity, dependencies, bin: { shimmy: 'bin/shimmy.cjs' } },
  };
  const todo = Object.keys(dependencies);
  while (todo.length) {
    const name = todo.pop()!;
    const entry = repoLock.packages[`node_modules/${name}`];
    if (!entry || packages[`node_modules/${name}`]) continue;
    packages[`node_modules/${name}`] = entry;
    todo.push(...Object.keys(entry.dependencies ?? {}));
  }
  return { name: 'scratch', lockfileVersion: 3, requires: true, packages };
}

let tarball = '';
let files: string[] = [];

beforeAll(() => {
  // a staging copy of what the package is made from; node_modules is shared (read only)
  mkdirSync(stage);
  for (const f of ['package.json', 'README.md', 'tsconfig.json', 'tsconfig.lib.json']) cpSync(join(ROOT, f), join(stage, f));
  for (const d of ['bin', 'schema', 'src']) cpSync(join(ROOT, d), join(stage, d), { recursive: true });
  symlinkSync(join(ROOT, 'node_modules'), join(stage, 'node_modules'), 'dir');
  execFileSync(process.execPath, [TSC, '-p', 'tsconfig.lib.json'], { cwd: stage, encoding: 'utf8' });
  const packed = JSON.parse(execFileSync('npm', ['pack', '--ignore-scripts', '--json', '--pack-destination', tmp], { cwd: stage, encoding: 'utf8' })) as { filename: string; integrity: string; files: { path: string }[] }[];
  tarball = join(tmp, packed[0].filename);
  files = packed[0].files.map((f) => f.path);

  mkdirSync(scratch);
  const tarballName = `../${packed[0].filename}`;
  writeFileSync(join(scratch, 'package.json'), JSON.stringify({ name: 'scratch', private: true, type: 'module', dependencies: { shimmy: `file:${tarballName}` } }));
  const pkg = JSON.parse(readFileSync(join(stage, 'package.json'), 'utf8')) as { dependencies: Record<string, string> };
  writeFileSync(join(scratch, 'package-lock.json'), JSON.stringify(scratchLock(tarballName, packed[0].integrity, pkg.dependencies), null, 2));
  const npm = spawnSync('npm', ['ci', '--offline', '--no-audit', '--no-fund'], { cwd: scratch, encoding: 'utf8' });
  if (npm.status === 0 && existsSync(join(installed, 'package.json'))) {
    console.info('package test: installed the tarball with npm ci --offline');
  } else {
    const why = npm.stderr.split('\n').find((l) => /error (code|request)/.test(l)) ?? npm.stderr.trim().split('\n')[0];
    console.info(`package test: npm ci --offline failed (${why}); unpacked the tarball and linked ml-matrix instead`);
    mkdirSync(join(scratch, 'node_modules'), { recursive: true });
    execFileSync('tar', ['-xzf', tarball, '-C', join(scratch, 'node_modules')]);
    renameSync(join(scratch, 'node_modules', 'package'), installed);
    symlinkSync(join(ROOT, 'node_modules', 'ml-matrix'), join(scratch, 'node_modules', 'ml-matrix'), 'dir');
  }
}, 120_000);

afterAll(() => rmSync(tmp, { recursive: true, force: true }));

describe('npm pack', () => {
  it('ships compiled modules, types, the bin and the schemas, and no sources or shells', () => {
    expect(files).toEqual(expect.arrayContaining(['package.json', 'README.md', 'bin/shimmy.cjs', 'lib/index.js', 'lib/index.d.ts', 'lib/cli/run.js', 'lib/batch/worker.js', 'schema/count.schema.json', 'schema/batch-line.schema.json']));
    expect(files.filter((f) => f.startsWith('src/') || f.startsWith('tests/') || f.endsWith('.ts') && !f.endsWith('.d.ts'))).toEqual([]);
    expect(files.filter((f) => f.startsWith('lib/app/') || f.startsWith('lib/worker/'))).toEqual([]);
    const pkg = JSON.parse(readFileSync(join(installed, 'package.json'), 'utf8')) as { dependencies: Record<string, string>; exports: Record<string, unknown> };
    expect(Object.keys(pkg.dependencies)).toEqual(['ml-matrix']);
    expect(pkg.exports['.']).toEqual({ types: './lib/index.d.ts', import: './lib/index.js' });
  });

  it('the core never imports the shells (src/app, src/worker) or browser packages', () => {
    const found = spawnSync('grep', ['-rlE', "(from |import\\()'([^']*/(app|worker)/|pixi\\.js|gif\\.js|d3-|tsx)", join(stage, 'lib'), '--include=*.js'], { encoding: 'utf8' });
    expect(found.stdout).toBe('');
    expect(found.status).toBe(1); // grep: nothing matched
  });
});

describe('the installed package from plain node', () => {
  it('imports the API and counts the 4×4 kagome torus', () => {
    const script = join(scratch, 'count.mjs');
    writeFileSync(
      script,
      `import { buildGallery, classify, count } from 'shimmy';
const { analysis: a } = count({ framework: buildGallery('gallery:kagome'), cells: [4, 4], boundary: 'periodic' });
const { classification: c } = classify({ framework: buildGallery('gallery:square'), cells: [3, 3], boundary: 'free' });
console.log(JSON.stringify({ joints: a.joints, bars: a.bars, flexes: a.flexes, selfStresses: a.selfStresses, trivial: a.trivialFlexes, certified: a.status.certified, classified: c.flexes, counts: c.counts }));
`,
    );
    const r = node([script]);
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    const o = JSON.parse(r.stdout) as Record<string, number>;
    // 3 joints and 6 bars per cell
    expect([o.joints, o.bars]).toEqual([48, 96]);
    // Maxwell–Calladine (common practice): flexes − self-stresses = 2·joints − bars
    expect(o.flexes - o.selfStresses).toBe(2 * o.joints - o.bars);
    // periodic N1×N2 kagome: N1 + N2 + gcd(N1, N2) flexes and as many self-stresses, one per closed
    // straight bond-line; Souslov, Liu & Lubensky, "Elasticity and response in nearly isostatic
    // periodic lattices", Phys. Rev. Lett. 103, 205503 (2009) (from memory), and Sun, Souslov, Mao &
    // Lubensky, "Surface phonons, elastic response, and conformal invariance in twisted kagome
    // lattices", PNAS 109(31), 12369–12374 (2012) (as in tests/published-counts.test.ts)
    expect(o.flexes).toBe(4 + 4 + 4);
    expect(o.selfStresses).toBe(12);
    expect(o.trivial).toBe(2);
    // free 3×3 square grid: a + b = 6 flexes (Bolker & Crapo, "Bracing rectangular frameworks I",
    // SIAM J. Appl. Math. 36(3), 1979; from memory), all of them classified
    expect(o.classified).toBe(6);
    expect(Object.values(o.counts as unknown as Record<string, number>).reduce((s, v) => s + v, 0)).toBe(6);
  });

  it('runs the packed bin: count --json', () => {
    const r = node([join(installed, 'bin', 'shimmy.cjs'), 'count', 'gallery:kagome', '--cells', '4x4', '--bc', 'periodic', '--json']);
    expect(r.status).toBe(0);
    const o = JSON.parse(r.stdout) as { schemaVersion: string; flexes: number; selfStresses: number; maxwellCalladine: { lhs: number; rhs: number } };
    expect(o.schemaVersion).toBe('shimmy.count/1');
    expect([o.flexes, o.selfStresses]).toEqual([12, 12]);
    expect(o.maxwellCalladine.lhs).toBe(o.maxwellCalladine.rhs);
  });

  it('runs the packed bin: batch on two worker threads of the compiled lib', () => {
    writeFileSync(join(scratch, 'plan.json'), JSON.stringify({ grid: { command: 'count', framework: 'gallery:kagome', cells: ['2x2', '3x3', '4x4'], bc: 'periodic' } }));
    const r = node([join(installed, 'bin', 'shimmy.cjs'), 'batch', 'plan.json', '--workers', '2']);
    expect(r.status).toBe(0);
    const lines = r.stdout.trim().split('\n').map((l) => JSON.parse(l) as { ok: boolean; job: { cells: [number, number] }; result: { flexes: number } });
    expect(lines.length).toBe(3);
    for (const l of lines) {
      const [n1, n2] = l.job.cells;
      const g = n1 === n2 ? n1 : 1; // square sizes here: gcd(N, N) = N
      expect(l.ok).toBe(true);
      expect(l.result.flexes).toBe(n1 + n2 + g);
    }
  });

  it("type-checks the README's TypeScript examples against the packed .d.ts", () => {
    const readme = readFileSync(join(ROOT, 'README.md'), 'utf8');
    const blocks = [...readme.matchAll(/```ts\n([\s\S]*?)```/g)].map((m) => m[1]);
    expect(blocks.length).toBeGreaterThan(0);
    const names = blocks.map((b, i) => {
      writeFileSync(join(scratch, `readme-${i}.ts`), b);
      return `readme-${i}.ts`;
    });
    // a deliberate mistake must fail, so a pass means the types were really found
    writeFileSync(join(scratch, 'wrong.ts'), "import { count } from 'shimmy';\ncount({ framework: 1, cells: [4, 4], boundary: 'free' });\n");
    writeFileSync(
      join(scratch, 'tsconfig.json'),
      JSON.stringify({
        compilerOptions: { target: 'ES2022', module: 'NodeNext', moduleResolution: 'NodeNext', strict: true, noEmit: true, skipLibCheck: true, types: ['node'], typeRoots: [join(ROOT, 'node_modules', '@types')] },
        files: [...names, 'wrong.ts'],
      }),
    );
    const r = node([TSC, '-p', 'tsconfig.json']);
    const errors = r.stdout.split('\n').filter((l) => / error TS/.test(l));
    expect(errors.filter((l) => !l.startsWith('wrong.ts'))).toEqual([]);
    expect(errors.length).toBe(1);
    expect(errors[0]).toMatch(/^wrong\.ts\(2,/);
    expect(existsSync(join(installed, 'lib', 'index.d.ts'))).toBe(true);
  });
});
