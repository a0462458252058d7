/**
 * `shimmy export-modes`: every classified basis vector as per-joint velocities (real and
 * imaginary parts), with joint positions and cells, for use in other tools. Numbers are
 * printed as JavaScript's shortest round-trip decimal form, so parsing them gives back the
 * exact doubles.
 */
import { InputError } from '../errors.js';
import { CAUTION } from '../caution.js';
import type { Command } from './command.js';
import { progressLine } from './progress.js';
import { CLASS_HELP, CLASSIFY_FLAGS, modeSummary, readClassifyFlags, runClassification, writeOutFile, type ClassifyRun } from './classify.js';
import { BOUNDARY_HELP, FRAMEWORK_HELP, readSupercellArgs, SUPERCELL_FLAGS, type SupercellArgs } from './common.js';

export const CSV_COLUMNS = ['mode', 'class', 'joint', 'cell_i', 'cell_j', 'site', 'x', 'y', 'ux_re', 'ux_im', 'uy_re', 'uy_im'] as const;

/** Shortest decimal that parses back to the same double (−0 written as 0). */
function num(x: number): string {
  return Object.is(x, -0) ? '0' : String(x);
}

function csvField(s: string): string {
  return /[",\n\r]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

export function modesCsv(r: ClassifyRun): string {
  const sc = r.supercell;
  const out: string[] = [CSV_COLUMNS.join(',')];
  const siteIds = sc.framework.joints.map((j) => csvField(j.id));
  r.classification.modes.forEach((m, mode) => {
    const v = m.vector;
    for (let k = 0; k < sc.jointCount; k++) {
      out.push(
        [
          String(mode),
          m.class,
          String(k),
          String(sc.jointCells[2 * k]),
          String(sc.jointCells[2 * k + 1]),
          siteIds[sc.jointSites[k]],
          num(sc.positions[2 * k]),
          num(sc.positions[2 * k + 1]),
          num(v.re[2 * k]),
          num(v.im[2 * k]),
          num(v.re[2 * k + 1]),
          num(v.im[2 * k + 1]),
        ].join(','),
      );
    }
  });
  return out.join('\n') + '\n';
}

export function modesJson(a: SupercellArgs, r: ClassifyRun): Record<string, unknown> {
  const sc = r.supercell;
  const c = r.classification;
  const J = sc.jointCount;
  const pick = (v: Float64Array, off: number) => Array.from({ length: J }, (_, k) => v[2 * k + off]);
  return {
    framework: a.spec,
    name: a.framework.name ?? null,
    cells: a.cells,
    boundary: a.bcText,
    flexes: c.flexes,
    trivialFlexes: c.trivialFlexes,
    counts: c.counts,
    thresholds: c.thresholds,
    warnings: c.warnings ?? [],
    joints: Array.from({ length: J }, (_, k) => ({
      joint: k,
      cell_i: sc.jointCells[2 * k],
      cell_j: sc.jointCells[2 * k + 1],
      site: sc.framework.joints[sc.jointSites[k]].id,
      x: sc.positions[2 * k],
      y: sc.positions[2 * k + 1],
    })),
    modes: c.modes.map((m, i) => ({
      ...modeSummary(m, i),
      ux_re: pick(m.vector.re, 0),
      ux_im: pick(m.vector.im, 0),
      uy_re: pick(m.vector.re, 1),
      uy_im: pick(m.vector.im, 1),
    })),
    caution: CAUTION,
  };
}

export const exportModesCommand: Command = {
  name: 'export-modes',
  summary: 'Write every classified flex basis vector as per-joint velocities (JSON or CSV) for other tools.',
  usage: 'shimmy export-modes FRAMEWORK [--cells 8x8] [--bc SPEC] (--json | --csv) [--out FILE] [--window 3] [--strip 2] [--tol 1e-9] [--solver auto]',
  flags: [
    ...SUPERCELL_FLAGS,
    ...CLASSIFY_FLAGS,
    { name: '--json', help: 'one JSON object: joints (positions, cells, sites) and modes (class, metrics, velocity arrays)' },
    { name: '--csv', help: 'one CSV row per mode and joint, columns below' },
    { name: '--out', value: 'FILE', help: 'write to FILE instead of standard output' },
    { name: '--help', help: 'show this help' },
  ],
  maxPositional: 1,
  details: [
    'CSV columns (header row first; one row per mode and joint, modes in class order):',
    '  mode          mode index from 0 (the order of shimmy classify --json)',
    '  class         local | line | decaying | bulk',
    '  joint         supercell joint index from 0: (cell_j·N1 + cell_i)·S + site index',
    '  cell_i,cell_j the joint\'s cell',
    '  site          the unit-cell joint id',
    '  x, y          the joint position (framework units)',
    '  ux_re, ux_im  real and imaginary parts of the x velocity',
    '  uy_re, uy_im  real and imaginary parts of the y velocity',
    'Each mode vector has unit 2-norm; imaginary parts are 0 when the boundary is real (twists 0 or ½).',
    'Numbers use the shortest decimal that reads back as the same double, so files round-trip exactly.',
    'The JSON holds the same numbers as arrays per mode (ux_re, ux_im, uy_re, uy_im over joints) plus each',
    "mode's metrics (support, extents, direction, anchor, decayLength, participation).",
    '',
    ...CLASS_HELP,
    '',
    ...FRAMEWORK_HELP,
    '',
    ...BOUNDARY_HELP,
  ],
  run(args, io) {
    const json = args.flags.has('--json');
    const csv = args.flags.has('--csv');
    if (json === csv) {
      throw new InputError('export-modes needs one output format:', [
        { where: json ? '--json --csv' : '--json / --csv', what: json ? 'both formats were asked for' : 'no format was given', fix: 'write either --json or --csv' },
      ]);
    }
    const a = readSupercellArgs(args, io, 'export-modes');
    const opts = readClassifyFlags(args);
    const r = runClassification(a, opts, progressLine(io, 'export-modes'));
    const text = json ? JSON.stringify(modesJson(a, r)) + '\n' : modesCsv(r);
    const outPath = args.flags.get('--out') as string | undefined;
    if (outPath !== undefined) {
      writeOutFile(outPath, text);
      io.out(`Wrote ${r.classification.modes.length} modes of ${r.supercell.jointCount} joints as ${json ? 'JSON' : 'CSV'} to ${outPath}.\n`);
    } else io.out(text);
    return 0;
  },
};
