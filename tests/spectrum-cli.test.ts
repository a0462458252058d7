/** `shimmy spectrum`: the summary, --csv and --json outputs, and its input errors. */
import { describe, expect, it } from 'vitest';
import { parseArgs } from '../src/cli/args.js';
import type { CliIO } from '../src/cli/command.js';
import { lineText, spectrumCommand } from '../src/cli/spectrum.js';
import { InputError } from '../src/errors.js';

function fakeIO(files: Record<string, string> = {}): CliIO & { text: () => string; errors: () => string } {
  let out = '';
  let err = '';
  return {
    out: (t) => (out += t),
    err: (t) => (err += t),
    readText: (path) => {
      if (!(path in files)) throw new InputError(`The framework file "${path}" cannot be read:`, [{ where: path, what: 'no such file', fix: 'give an existing file' }]);
      return files[path];
    },
    text: () => out,
    errors: () => err,
  };
}

async function run(argv: string[], files: Record<string, string> = {}) {
  const io = fakeIO(files);
  const code = await spectrumCommand.run(parseArgs(argv, spectrumCommand.flags, 'spectrum', 1), io);
  return { code, out: io.text(), err: io.errors() };
}

function problemOf(argv: string[], files: Record<string, string> = {}): { where: string; what: string; fix: string } {
  try {
    // run() is synchronous for this command; a throw is the InputError main() turns into exit 2
    spectrumCommand.run(parseArgs(argv, spectrumCommand.flags, 'spectrum', 1), fakeIO(files));
  } catch (e) {
    expect(e).toBeInstanceOf(InputError);
    return (e as InputError).problems[0];
  }
  throw new Error(`no error for ${argv.join(' ')}`);
}

describe('shimmy spectrum output', () => {
  it('the summary names the zero lines of the kagome, the tolerance, σ ranges and the caution', async () => {
    // Regular kagome zero lines θ1 = 0, θ2 = 0, θ1 = θ2 (Sun, Souslov, Mao & Lubensky, PNAS 109,
    // 12369 (2012)).
    const r = await run(['gallery:kagome', '--grid', '16']);
    expect(r.code).toBe(0);
    expect(r.err).toBe('');
    expect(r.out).toContain('16×16 grid');
    expect(r.out).toMatch(/zero set\s+3 lines, 0 isolated points/);
    for (const line of ['line θ1 ≡ 0', 'line θ2 ≡ 0', 'line θ1 − θ2 ≡ 0']) expect(r.out).toContain(line);
    expect(r.out).toMatch(/tolerance\s+σ ≤ 1e-9 × σ_max/);
    expect(r.out).toMatch(/σ_min\s+from \S+ to \S+ over the grid/);
    expect(r.out).toMatch(/largest kernel\s+3, first seen at θ = \(0, 0\)/);
    expect(r.out).toContain('Caution');
  });

  it('the summary of the honeycomb reports its flat band', async () => {
    const r = await run(['gallery:honeycomb', '--grid', '8']);
    expect(r.out).toMatch(/generic kernel\s+1 \(dim ker Φ ≥ 1 at every phase: a flat band\)/);
    expect(r.out).toMatch(/point θ = \(0, 0\)\s+dim ker 2/);
  });

  it('--csv prints one row per grid point with the promised columns', async () => {
    const r = await run(['gallery:kagome', '--grid', '8', '--csv']);
    const lines = r.out.trimEnd().split('\n');
    expect(lines[0]).toMatch(/^# /);
    expect(lines[0]).toMatch(/first-order/i);
    expect(lines[1]).toBe('theta1,theta2,sigma1,sigma2,sigma3,sigmaMax,kernel');
    const rows = lines.slice(2).map((l) => l.split(','));
    expect(rows.length).toBe(64);
    for (const row of rows) expect(row.length).toBe(7);
    // θ1 varies fastest
    expect(rows[1].slice(0, 2)).toEqual(['0.125', '0']);
    expect(rows[8].slice(0, 2)).toEqual(['0', '0.125']);
    const origin = rows[0].map(Number);
    expect(origin[6]).toBe(3); // kernel 3 at q = 0 (translations and twist; Sun et al. 2012, from memory)
    for (const row of rows) {
      const [s1, s2, s3, smax] = row.slice(2, 6).map(Number);
      expect(s1).toBeLessThanOrEqual(s2);
      expect(s2).toBeLessThanOrEqual(s3);
      expect(s3).toBeLessThanOrEqual(smax);
    }
  });

  it('--csv leaves sigma3 blank for a one-joint cell', async () => {
    const r = await run(['gallery:square', '--grid', '4', '--csv']);
    const rows = r.out.trimEnd().split('\n').slice(2);
    expect(rows.length).toBe(16);
    expect(rows.every((l) => l.split(',')[4] === '')).toBe(true);
  });

  it('--json prints one object with grid, arrays, zero set and tolerance', async () => {
    const r = await run(['gallery:rotating-squares', '--grid', '10', '--tol', '1e-8', '--json']);
    const o = JSON.parse(r.out);
    expect(o.grid).toBe(10);
    expect(o.tolerance.relative).toBe(1e-8);
    expect(o.tolerance.absolute).toBeCloseTo(1e-8 * o.sigmaMax, 20);
    for (const k of ['sigma1', 'sigma2', 'sigma3', 'sigmaMax', 'kernel']) expect(o.arrays[k].length).toBe(100);
    expect(Object.keys(o.zeroSet).sort()).toEqual(['isolated', 'lines', 'points']);
    // Grima & Evans, J. Mater. Sci. Lett. 19, 1563 (2000): the counter-rotation mode at (½, ½)
    expect(o.zeroSet.isolated.map((z: { theta: number[] }) => z.theta)).toEqual([[0, 0], [0.5, 0.5]]);
    expect(o.arrays.kernel[5 * 10 + 5]).toBe(1);
    expect(o.caution).toMatch(/first-order/);
  });

  it('reads a framework file through the shell’s reader', async () => {
    const square = JSON.stringify({ name: 'invented test grid', lattice: [[2, 0], [0, 2]], joints: [{ id: 'P', at: [0, 0] }], bars: [{ from: 'P', to: 'P', shift: [1, 0] }, { from: 'P', to: 'P', shift: [0, 1] }] });
    const r = await run(['grid.json', '--grid', '6', '--json'], { 'grid.json': square });
    const o = JSON.parse(r.out);
    expect(o.name).toBe('invented test grid');
    // square lattice lines θ1 = 0 and θ2 = 0 (Lubensky et al., Rep. Prog. Phys. 78, 073901 (2015))
    expect(o.zeroSet.lines.map((L: { p: number; q: number; c: number }) => [L.p, L.q, L.c])).toEqual([[1, 0, 0], [0, 1, 0]]);
    expect(o.arrays.sigma3).toBeNull();
  });

  it('writes lines as equations mod 1', () => {
    expect(lineText({ p: 1, q: 0, c: 0 })).toBe('θ1 ≡ 0');
    expect(lineText({ p: 0, q: 1, c: 0.5 })).toBe('θ2 ≡ 0.5');
    expect(lineText({ p: 2, q: -3, c: 0.25 })).toBe('2θ1 − 3θ2 ≡ 0.25');
    expect(lineText({ p: 1, q: 1, c: 0 })).toBe('θ1 + θ2 ≡ 0');
  });
});

describe('shimmy spectrum input errors', () => {
  it.each([
    [['gallery:kagome', '--grid', '0'], '--grid'],
    [['gallery:kagome', '--grid', 'many'], '--grid'],
    [['gallery:kagome', '--grid', '12.5'], '--grid'],
    [['gallery:kagome', '--grid', '5000'], '--grid'],
    [['gallery:kagome', '--tol', '2'], '--tol'],
    [['gallery:kagome', '--csv', '--json'], '--csv'],
    [[], 'FRAMEWORK'],
  ])('%j names %s and says how to fix it', (argv, where) => {
    const p = problemOf(argv);
    expect(p.where).toBe(where);
    expect(p.fix.length).toBeGreaterThan(5);
  });

  it('an unknown flag is refused by the parser, naming it', () => {
    expect(() => parseArgs(['gallery:kagome', '--grd', '8'], spectrumCommand.flags, 'spectrum', 1)).toThrow(/--grd/);
  });

  it('a broken framework file lists its problems', () => {
    const bad = JSON.stringify({ lattice: [[1, 0], [2, 0]], joints: [{ id: 'A', at: [0, 0] }], bars: [{ from: 'A', to: 'Q', shift: [1, 0] }] });
    try {
      spectrumCommand.run(parseArgs(['bad.json'], spectrumCommand.flags, 'spectrum', 1), fakeIO({ 'bad.json': bad }));
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      expect((e as InputError).message).toContain('bars[0].to');
    }
  });
});
