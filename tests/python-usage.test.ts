/**
 * The README's "Use from Python" snippet, run unchanged with python3 and numpy (skipped when
 * either is missing): `shimmy` on the PATH is this checkout's bin/shimmy.cjs. A few lines
 * appended after the snippet print what it loaded, and the checks below read that.
 */
import { spawnSync } from 'node:child_process';
import { chmodSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { delimiter, join, resolve } from 'node:path';
import { tmpdir } from 'node:os';
import { afterAll, describe, expect, it } from 'vitest';

const ROOT = resolve(import.meta.dirname, '..');
const hasNumpy = spawnSync('python3', ['-c', 'import numpy'], { encoding: 'utf8' }).status === 0;
if (!hasNumpy) console.info('python-usage test: skipped (python3 with numpy is not available)');

function gcd(a: number, b: number): number {
  return b === 0 ? a : gcd(b, a % b);
}

describe.skipIf(!hasNumpy)('README: Use from Python', () => {
  const tmp = mkdtempSync(join(tmpdir(), 'shimmy-python-'));
  afterAll(() => rmSync(tmp, { recursive: true, force: true }));

  it('runs the snippet: batch lines and a mode file become numpy arrays', () => {
    const readme = readFileSync(join(ROOT, 'README.md'), 'utf8');
    const blocks = [...readme.matchAll(/```python\n([\s\S]*?)```/g)].map((m) => m[1]);
    expect(blocks.length).toBe(1);
    // `shimmy` on the PATH: this checkout's command
    const bin = join(tmp, 'bin');
    mkdirSync(bin);
    writeFileSync(join(bin, 'shimmy'), `#!/bin/sh\nexec "${process.execPath}" "${join(ROOT, 'bin', 'shimmy.cjs')}" "$@"\n`);
    chmodSync(join(bin, 'shimmy'), 0o755);
    const report = `
print(json.dumps({"cells": cells.tolist(), "counts": counts.tolist(),
                  "sizes": [[r["result"]["joints"], r["result"]["bars"]] for r in rows],
                  "jobs": [[r["job"]["framework"], r["job"]["bc"]] for r in rows],
                  "xy": list(xy.shape), "U": list(U.shape), "flexes": modes["counts"]["flexes"],
                  "complex": bool(np.iscomplexobj(U)), "largest": float(np.abs(U).max())}))
`;
    writeFileSync(join(tmp, 'snippet.py'), blocks[0] + report);
    const env: NodeJS.ProcessEnv = { ...process.env, PATH: `${bin}${delimiter}${process.env.PATH ?? ''}` };
    delete env.NODE_OPTIONS;
    const r = spawnSync('python3', ['snippet.py'], { cwd: tmp, encoding: 'utf8', env });
    expect(r.status, r.stderr).toBe(0);
    const o = JSON.parse(r.stdout.trim().split('\n').pop()!) as {
      cells: [number, number][];
      counts: [number, number][];
      sizes: [number, number][];
      jobs: [string, string][];
      xy: number[];
      U: number[];
      flexes: number;
      complex: boolean;
      largest: number;
    };
    // the plan's grid: 4 twists (0, 10, 20, 30) × 2 sizes × 2 boundary rules
    expect(o.cells.length).toBe(16);
    expect(o.counts.length).toBe(16);
    o.counts.forEach(([flexes, stresses], i) => {
      const [joints, bars] = o.sizes[i];
      // Maxwell–Calladine (common practice): flexes − self-stresses = 2·joints − bars
      expect(flexes - stresses).toBe(2 * joints - bars);
      // twist 0 is the regular kagome: periodic N1×N2 has N1 + N2 + gcd(N1, N2) flexes (Souslov, Liu &
      // Lubensky, Phys. Rev. Lett. 103, 205503 (2009), from memory; see tests/published-counts.test.ts)
      const [framework, bc] = o.jobs[i];
      const [n1, n2] = o.cells[i];
      if (framework.endsWith('twist=0') && bc === 'periodic') expect(flexes).toBe(n1 + n2 + gcd(n1, n2));
    });
    // 4×4 kagome torus: 48 joints; 12 flexes by the same count, each a velocity per joint
    expect(o.xy).toEqual([48, 2]);
    expect(o.flexes).toBe(12);
    expect(o.U).toEqual([12, 48, 2]);
    expect(o.complex).toBe(true);
    expect(o.largest).toBeGreaterThan(0);
  });
});
