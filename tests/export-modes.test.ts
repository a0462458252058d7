/** `shimmy export-modes` and `shimmy classify` on the command line: formats, exact round trips, errors. */
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parseArgs } from '../src/cli/args.js';
import { classifyCommand, runClassification } from '../src/cli/classify.js';
import type { CliIO, Command } from '../src/cli/command.js';
import { readSupercellArgs } from '../src/cli/common.js';
import { CSV_COLUMNS, exportModesCommand } from '../src/cli/export-modes.js';
import { InputError } from '../src/errors.js';

const tmp = mkdtempSync(join(tmpdir(), 'shimmy-modes-'));
const io: CliIO = { out: () => {}, err: () => {}, readText: (p) => readFileSync(p, 'utf8') };

/** Run a command the way src/cli/main.ts does (exit 2 on bad input). */
async function cli(cmd: Command, argv: string[]) {
  let out = '';
  let err = '';
  const cio: CliIO = { ...io, out: (t) => (out += t), err: (t) => (err += t) };
  try {
    const code = await cmd.run(parseArgs(argv, cmd.flags, cmd.name, cmd.maxPositional), cio);
    return { code, out, err };
  } catch (e) {
    if (e instanceof InputError) return { code: 2, out, err: err + e.message };
    throw e;
  }
}

/** The same classification computed directly (the export must reproduce its numbers exactly). */
function direct(argv: string[]) {
  const cmd = exportModesCommand;
  const a = readSupercellArgs(parseArgs(argv, cmd.flags, cmd.name, cmd.maxPositional), io, cmd.name);
  return runClassification(a, { window: 3, strip: 2 });
}

function parseCsv(text: string): string[][] {
  return text.trim().split('\n').map((l) => l.split(','));
}

describe('shimmy export-modes --csv', () => {
  const args = ['gallery:kagome', '--cells', '4x3', '--bc', 'free'];
  it('has the documented header and one row per mode and joint', async () => {
    const r = await cli(exportModesCommand, [...args, '--csv']);
    expect(r.code).toBe(0);
    const rows = parseCsv(r.out);
    expect(rows[0]).toEqual([...CSV_COLUMNS]);
    expect(rows[0].join(',')).toBe('mode,class,joint,cell_i,cell_j,site,x,y,ux_re,ux_im,uy_re,uy_im');
    const d = direct(args);
    expect(rows.length - 1).toBe(d.classification.modes.length * d.supercell.jointCount);
    // free kagome 4×3: 2(4 + 3) − 1 = 13 flexes, one per straight bond-line (Souslov, Liu & Lubensky 2009, from memory)
    expect(d.classification.modes.length).toBe(13);
  });
  it('round-trips exactly: every number parses back to the same double', async () => {
    const r = await cli(exportModesCommand, [...args, '--csv']);
    const rows = parseCsv(r.out).slice(1);
    const d = direct(args);
    const sc = d.supercell;
    for (const row of rows) {
      const [mode, cls, joint, ci, cj, site, x, y, uxr, uxi, uyr, uyi] = row;
      const m = d.classification.modes[Number(mode)];
      const k = Number(joint);
      expect(cls).toBe(m.class);
      expect([Number(ci), Number(cj)]).toEqual([sc.jointCells[2 * k], sc.jointCells[2 * k + 1]]);
      expect(site).toBe(sc.framework.joints[sc.jointSites[k]].id);
      expect(Number(x)).toBe(sc.positions[2 * k]);
      expect(Number(y)).toBe(sc.positions[2 * k + 1]);
      // exact, −0 included; imaginary parts of a real boundary are written as 0
      expect(Number(uxr)).toBe(m.vector.re[2 * k]);
      expect(Number(uxi)).toBe(m.vector.im[2 * k] + 0);
      expect(Number(uyr)).toBe(m.vector.re[2 * k + 1]);
      expect(Number(uyi)).toBe(m.vector.im[2 * k + 1] + 0);
    }
  });
  it('a twisted boundary gives complex velocities (imaginary parts present)', async () => {
    const r = await cli(exportModesCommand, ['gallery:twisted-kagome?twist=15', '--cells', '3x5', '--bc', 'x=twist:0.3,y=free', '--csv']);
    expect(r.code).toBe(0);
    const rows = parseCsv(r.out).slice(1);
    expect(rows.some((row) => Number(row[9]) !== 0 || Number(row[11]) !== 0)).toBe(true);
  });
});

describe('shimmy export-modes --json', () => {
  const args = ['gallery:honeycomb', '--cells', '3x3', '--bc', 'periodic'];
  it('holds joints and flexes with metrics and velocity arrays that round-trip exactly', async () => {
    const r = await cli(exportModesCommand, [...args, '--json']);
    expect(r.code).toBe(0);
    const o = JSON.parse(r.out);
    const d = direct(args);
    expect(o.format).toBe('shimmy mode data');
    expect(o.counts.flexes).toBe(10); // honeycomb periodic N×N: N² + 1 (Lubensky et al., Rep. Prog. Phys. 78, 073901, 2015)
    expect(o.joints.length).toBe(d.supercell.jointCount);
    expect(o.joints[5]).toEqual({ joint: 5, cell_i: d.supercell.jointCells[10], cell_j: d.supercell.jointCells[11], site: 'B', x: d.supercell.positions[10], y: d.supercell.positions[11] });
    expect(o.flexes).toHaveLength(10);
    o.flexes.forEach((m: Record<string, any>, i: number) => {
      const ref = d.classification.modes[i];
      expect(m.mode).toBe(i);
      expect(m.class).toBe(ref.class);
      expect(m.support).toBe(ref.support);
      expect(m.participation).toBe(ref.participation);
      // periodic: the matrix is real, so the imaginary parts are left out (null)
      expect(m.velocity.im).toBeNull();
      expect(ref.vector.im.every((x) => x === 0)).toBe(true);
      const J = d.supercell.jointCount;
      expect(m.velocity.re).toHaveLength(2 * J);
      for (let k = 0; k < 2 * J; k++) expect(m.velocity.re[k]).toBe(ref.vector.re[k]);
    });
  });
  it('--out writes the file and says so', async () => {
    const file = join(tmp, 'modes.json');
    const r = await cli(exportModesCommand, [...args, '--json', '--out', file]);
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/Wrote 10 modes of 18 joints as JSON/);
    const direct = await cli(exportModesCommand, [...args, '--json']);
    expect(readFileSync(file, 'utf8')).toBe(direct.out);
  });
  it('needs exactly one format and a writable --out', async () => {
    const none = await cli(exportModesCommand, args);
    expect(none.code).toBe(2);
    expect(none.err).toMatch(/write either --json or --csv/);
    const both = await cli(exportModesCommand, [...args, '--json', '--csv']);
    expect(both.code).toBe(2);
    const bad = await cli(exportModesCommand, [...args, '--csv', '--out', join(tmp, 'no-such-folder', 'x.csv')]);
    expect(bad.code).toBe(2);
    expect(bad.err).toMatch(/--out: its folder does not exist/);
  });
});

describe('shimmy classify', () => {
  it('--json prints counts, thresholds and modes without vectors', async () => {
    const r = await cli(classifyCommand, ['gallery:square', '--cells', '5x4', '--json']);
    expect(r.code).toBe(0);
    const o = JSON.parse(r.out);
    // free grid of 5×4 joints: 9 flexes, all row or column slides (Bolker & Crapo 1979, from memory)
    expect(o.flexes).toBe(9);
    expect(o.trivialFlexes).toBe(3);
    expect(o.counts).toEqual({ local: 0, line: 9, decaying: 0, bulk: 0 });
    expect(o.thresholds.window).toBe(3);
    expect(o.modes.length).toBe(9);
    for (const m of o.modes) {
      expect(m).not.toHaveProperty('vector');
      expect(Object.keys(m)).toEqual(expect.arrayContaining(['class', 'support', 'extents', 'participation', 'direction']));
    }
  });
  it('--out adds the vectors in a file; the table lists counts, thresholds and modes', async () => {
    const file = join(tmp, 'classes.json');
    const r = await cli(classifyCommand, ['gallery:twisted-kagome?twist=15', '--cells', '1x24', '--bc', 'x=twist:0.5,y=free', '--out', file]);
    expect(r.code).toBe(0);
    for (const word of ['flexes', 'local', 'line', 'decaying', 'bulk', 'Thresholds', 'headWeight', 'side bottom', 'side top', 'ξ =', 'Caution']) expect(r.out).toContain(word);
    const o = JSON.parse(readFileSync(file, 'utf8'));
    expect(o.modes.length).toBe(2);
    expect(o.modes[0].vector.re.length).toBe(2 * 3 * 24);
    expect(o.positions.length).toBe(2 * 3 * 24);
  });
  it('refuses bad window and strip values naming the flag', async () => {
    for (const [flag, v] of [['--window', '0'], ['--strip', '1.5'], ['--window', 'big']]) {
      const r = await cli(classifyCommand, ['gallery:square', '--cells', '3x3', flag, v]);
      expect(r.code).toBe(2);
      expect(r.err).toContain(flag);
    }
  });
});
