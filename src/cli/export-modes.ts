/**
 * `shimmy export-modes`: every classified basis vector as per-joint velocities (real and
 * imaginary parts), with joint positions and cells, for use in other tools. Writes the mode-data
 * format of src/io/modes.ts (the same JSON as the app's export), whose numbers read back as the
 * exact doubles.
 */
import { InputError } from '../errors.js';
import { countsOf } from '../flex/spaces.js';
import { MODE_CSV_COLUMNS, modeDataOfRun, modesToCsv, modesToJson, type ModeData } from '../io/modes.js';
import { classifyStresses, type StressClassification } from '../stress/classify/classify.js';
import type { Command } from './command.js';
import { progressLine } from './progress.js';
import { CLASSIFY_DETAILS, CLASSIFY_FLAGS, readClassifyFlags, runClassification, writeOutFile, type ClassifyRun } from './classify.js';
import { readSupercellArgs, safeJson, safeLines, safeText, SUPERCELL_FLAGS, type SupercellArgs } from './common.js';

/** The CSV columns (the shared mode-data format's). */
export const CSV_COLUMNS = MODE_CSV_COLUMNS;

/** What export-modes wrote before it classified the self-stresses (kept for readers of old files). */
export const SELF_STRESS_NOTE = 'not computed by shimmy export-modes (it writes the flexes)';

/**
 * The mode-data document of one export-modes run (src/io/modes.ts): the classified flexes and
 * the classified self-stresses (w, axial forces, class; src/stress/classify/).
 */
export function exportData(a: SupercellArgs, r: ClassifyRun, stresses: StressClassification): ModeData {
  return modeDataOfRun({ spec: a.spec, supercell: r.supercell, counts: countsOf(r.analysis), classification: r.classification, stressClassification: stresses });
}

export const exportModesCommand: Command = {
  name: 'export-modes',
  summary: 'Write every classified flex basis vector as per-joint velocities (JSON or CSV) for other tools.',
  usage: 'shimmy export-modes FRAMEWORK [--cells 8x8] [--bc SPEC] (--json | --csv) [--out FILE] [--window 3] [--strip 2] [--tol 1e-9] [--solver auto]',
  flags: [
    ...SUPERCELL_FLAGS,
    ...CLASSIFY_FLAGS,
    { name: '--json', help: 'one JSON object (format "shimmy mode data"): counts, joints (positions, cells, sites), bars, flexes (class, metrics, velocities) and self-stresses (class, metrics, bar tensions and forces)' },
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
    'Numbers use the shortest decimal that reads back as the same double (−0 as -0), so files round-trip exactly.',
    'The JSON ("shimmy mode data", version 2, the same format as the app\'s Mode data export) holds the framework',
    '(spec, name, unit cell), cells, boundary, tolerance, counts, classification (counts, thresholds), joints,',
    'bars (rigidity-matrix rows), and flexes: per mode its class and metrics (participation, support, extents,',
    'direction, anchor, decayLength, region, fitQuality, headWeight) and velocity.re / velocity.im with 2 entries',
    'per joint (x then y; im null when real), plus the caution text.',
    'selfStresses lists the self-stresses classified like the flexes (local, line, decaying, bulk over bars; counts in',
    'stressClassification): per self-stress its class and metrics (support in bars), tension (the vector w of Rᴴ, unit',
    '2-norm, one entry per bar in the order of "bars", positive = tension), axialForce (w_b·|p_b|, the bar forces) and,',
    'when both axes are periodic, macroscopicStress per cell. The CSV holds the flexes only.',
    '',
    ...CLASSIFY_DETAILS,
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
    const data = exportData(a, r, classifyStresses(r.supercell, r.analysis, opts));
    const text = json ? modesToJson(data) : modesToCsv(data);
    const outPath = args.flags.get('--out') as string | undefined;
    if (outPath !== undefined) {
      writeOutFile(outPath, text);
      io.out(`Wrote ${r.classification.modes.length} modes of ${r.supercell.jointCount} joints as ${json ? 'JSON' : 'CSV'} to ${safeText(outPath)}.\n`);
    } else io.out(json ? safeJson(text) : safeLines(text));
    return 0;
  },
};
