/** `shimmy classify`: where the flexes of one supercell live (local, line, decaying, bulk). */
import { writeFileSync } from 'node:fs';
import { CAUTION } from '../caution.js';
import { InputError } from '../errors.js';
import { FLEX_CLASSES, type Classification, type ClassifiedMode } from '../flex/classes.js';
import { DEFAULT_STRIP, DEFAULT_WINDOW } from '../flex/classify.js';
import { SIDE_WEIGHTS_DEFAULT_MAX_COLUMNS, sideWeights, type SideWeights } from '../flex/side-weights.js';
import type { FlexAnalysis } from '../flex/spaces.js';
import { describeBoundary } from '../supercell/boundary.js';
import type { Supercell } from '../supercell/supercell.js';
import { classifyStresses, type StressClassification } from '../stress/classify/classify.js';
import { analyse } from '../api/run.js';
import { parseNumberFlag, type FlagSpec, type ParsedArgs } from './args.js';
import { progressLine, type ProgressLine } from './progress.js';
import type { Command } from './command.js';
import { BOUNDARY_HELP, checkSize, fmt, FRAMEWORK_HELP, GAP_FLAG, readGapFlag, readSupercellArgs, safeJson, safeText, SUPERCELL_FLAGS, table, titleOf, type SupercellArgs } from './common.js';

export const CLASSIFY_FLAGS: FlagSpec[] = [
  { name: '--window', value: 'W', help: 'largest window (W×W cells) for local flexes', default: String(DEFAULT_WINDOW) },
  { name: '--strip', value: 'S', help: 'largest strip width (cells) for line flexes', default: String(DEFAULT_STRIP) },
];

export const CLASS_HELP = [
  'Classes (counts add up to the flexes; rigid motions are not removed first):',
  '  local     supported inside a window of at most W×W cells (anywhere, corners and edges included)',
  '  line      supported inside a strip at most S cells wide along (1,0), (0,1), (1,1) or (1,−1),',
  '            running along at least 2/3 of the strip, and not local',
  '  decaying  the rest, localised (SCDM), whose weight falls off exponentially from a side, a',
  '            corner or a point with most of it close by; ξ is the amplitude decay length in cells',
  '  bulk      everything else',
];

/** The help text every classifying command ends with: classes, frameworks, boundary rules. */
export const CLASSIFY_DETAILS = [...CLASS_HELP, '', ...FRAMEWORK_HELP, '', ...BOUNDARY_HELP];

export interface ClassifyRun {
  supercell: Supercell;
  analysis: FlexAnalysis;
  classification: Classification;
}

export function readClassifyFlags(args: ParsedArgs): { window: number; strip: number } {
  const int = (name: string, dflt: number) => {
    const t = args.flags.get(name) as string | undefined;
    return t === undefined ? dflt : parseNumberFlag(t, name, (v) => Number.isInteger(v) && v >= 1 && v <= 50, 'a whole number of cells from 1 to 50');
  };
  return { window: int('--window', DEFAULT_WINDOW), strip: int('--strip', DEFAULT_STRIP) };
}

export function runClassification(a: SupercellArgs, opts: { window: number; strip: number }, progress?: ProgressLine, gap: 'value' | 'bound' = 'bound'): ClassifyRun {
  // the size check in the CLI's wording (--cells, --allow-large), then the shared run
  checkSize(a, true);
  const { supercell, analysis, classification } = analyse({
    framework: a.framework,
    cells: a.cells,
    boundary: a.boundary,
    tolerance: a.tolerance,
    solver: a.solver,
    memoryLimit: a.memoryLimit,
    allowLarge: a.allowLarge,
    onProgress: progress?.report,
    gap,
    classify: opts,
    sizeCheck: false,
  });
  progress?.done();
  return { supercell, analysis, classification };
}

/** The plain-data description of a mode (no vector). */
export function modeSummary(m: ClassifiedMode, index: number): Record<string, unknown> {
  const { vector: _v, ...rest } = m;
  return { mode: index, ...rest };
}

export function writeOutFile(path: string, text: string, flag = '--out'): void {
  try {
    writeFileSync(path, text);
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    const what = code === 'ENOENT' ? 'its folder does not exist' : code === 'EISDIR' ? 'it is a folder' : code === 'EACCES' ? 'permission denied' : `it cannot be written (${code ?? 'unknown error'})`;
    throw new InputError(`The output file "${path}" cannot be written:`, [{ where: flag, what, fix: 'give a file path in an existing, writable folder' }]);
  }
}

export function modeWhere(m: ClassifiedMode): string {
  if (m.class === 'decaying' && m.anchor) {
    const a = m.anchor;
    const place = a.kind === 'point' ? `point (${fmt(a.at[0], 3)}, ${fmt(a.at[1], 3)})` : `${a.kind} ${a.name}`;
    return `${place}, ξ = ${fmt(m.decayLength ?? null, 3)} cells (R² ${fmt(m.fitQuality ?? null, 3)})`;
  }
  if (m.class === 'line' && m.direction) return `direction (${m.direction[0]}, ${m.direction[1]}); ${m.region ?? ''}`;
  if (m.affine) return 'affine field (rigid motion, homogeneous mechanism or strain mode)';
  return m.region ?? '';
}

const SIDE_WEIGHTS_ALWAYS_DOF = SIDE_WEIGHTS_DEFAULT_MAX_COLUMNS;

/** The `stresses` field of the JSON (--stresses): class counts, macroscopic stress and the modes (vectors with --out). */
function stressOutput(st: StressClassification, withVectors: boolean): Record<string, unknown> {
  return {
    selfStresses: st.selfStresses,
    counts: st.counts,
    shortStripStresses: st.shortStripStresses,
    macroscopic: st.macroscopic,
    thresholds: st.thresholds,
    warnings: st.warnings ?? [],
    modes: st.modes.map((m, i) => (withVectors ? { ...modeSummary(m, i), vector: { re: Array.from(m.vector.re), im: Array.from(m.vector.im) } } : modeSummary(m, i))),
  };
}

function outputObject(a: SupercellArgs, r: ClassifyRun, withVectors: boolean, sides: SideWeights | null, stresses: StressClassification | null = null): Record<string, unknown> {
  const c = r.classification;
  return {
    schemaVersion: 'shimmy.classify/1', // schema/classify.schema.json (also the --out file)
    framework: a.spec,
    name: a.framework.name ?? null,
    cells: a.cells,
    boundary: a.bcText,
    joints: r.analysis.joints,
    bars: r.analysis.bars,
    flexes: c.flexes,
    trivialFlexes: c.trivialFlexes,
    selfStresses: r.analysis.selfStresses,
    counts: c.counts,
    sideWeights: sides,
    ...(sides ? {} : { sideWeightsNote: sideWeightsSkipped(r) }),
    shortStripFlexes: c.shortStripFlexes ?? 0,
    affineFlexes: c.affineFlexes ?? 0,
    thresholds: c.thresholds,
    solver: r.analysis.solver,
    gap: r.analysis.gap,
    keptSigma: r.analysis.status.keptSigma,
    warnings: c.warnings ?? [],
    modes: c.modes.map((m, i) => (withVectors ? { ...modeSummary(m, i), vector: { re: Array.from(m.vector.re), im: Array.from(m.vector.im) } } : modeSummary(m, i))),
    ...(withVectors ? { positions: Array.from(r.supercell.positions), vectorLayout: 'vector.re/im hold 2 entries per joint (x then y), joints in supercell order; positions likewise' } : {}),
    ...(stresses ? { stresses: stressOutput(stresses, withVectors) } : {}),
    caution: CAUTION,
  };
}

const PER_CLASS_SHOWN = 5;

export const classifyCommand: Command = {
  name: 'classify',
  summary: 'Split the flexes of an N1×N2 supercell into local, line, decaying and bulk ones, with a localised basis.',
  usage: 'shimmy classify FRAMEWORK [--cells 8x8] [--bc SPEC] [--window 3] [--strip 2] [--tol 1e-9] [--solver auto] [--stresses] [--json] [--out FILE]',
  flags: [
    ...SUPERCELL_FLAGS,
    ...CLASSIFY_FLAGS,
    GAP_FLAG,
    { name: '--stresses', help: 'also classify the self-stresses over bars (local, line, decaying, bulk; macroscopic stress per cell when both axes are periodic)' },
    { name: '--side-weights', help: `compute the side weights even above ${SIDE_WEIGHTS_ALWAYS_DOF} columns (they need the whole flex basis, which the classifier otherwise avoids)` },
    { name: '--json', help: 'print one JSON object (counts, thresholds, modes without vectors)' },
    { name: '--out', value: 'FILE', help: 'also write the full JSON, vectors included, to FILE' },
    { name: '--help', help: 'show this help' },
  ],
  maxPositional: 1,
  details: CLASSIFY_DETAILS,
  run(args, io) {
    const a = readSupercellArgs(args, io, 'classify');
    const opts = readClassifyFlags(args);
    const outPath = args.flags.get('--out') as string | undefined;
    const r = runClassification(a, opts, progressLine(io, 'classify'), readGapFlag(args));
    const c = r.classification;
    const sides = args.flags.has('--side-weights') || r.analysis.dof <= SIDE_WEIGHTS_ALWAYS_DOF ? sideWeights(r.supercell, r.analysis) : null;
    const st = args.flags.has('--stresses') ? classifyStresses(r.supercell, r.analysis, opts) : null;
    if (outPath !== undefined) writeOutFile(outPath, JSON.stringify(outputObject(a, r, true, sides, st)) + '\n');
    if (args.flags.has('--json')) {
      io.out(safeJson(JSON.stringify({ ...outputObject(a, r, false, sides, st), ...(outPath !== undefined ? { out: outPath } : {}) }, null, 2)) + '\n');
      return 0;
    }
    const title = titleOf(a.framework.name, a.spec);
    const lines: string[] = [];
    lines.push(`shimmy classify: ${title}`, `  supercell ${a.cells[0]}×${a.cells[1]} cells, ${describeBoundary(a.boundary)}`, '');
    lines.push(
      table([
        ['flexes', `${c.flexes} (${c.trivialFlexes} of them trivial: rigid motions the boundary allows, not removed)`],
        ...FLEX_CLASSES.map((k) => [k, String(c.counts[k])] as [string, string]),
        [
          'side weights',
          sides
            ? `bottom ${fmt(sides.bottom, 4)}, top ${fmt(sides.top, 4)}, left ${fmt(sides.left, 4)}, right ${fmt(sides.right, 4)} (non-trivial flexes by nearest side; — on a twisted or periodic axis)`
            : sideWeightsSkipped(r),
        ],
        ['short strip pieces', `${c.shortStripFlexes ?? 0} (in no window and on under 2/3 of a strip; counted as decaying or bulk)`],
        ['affine flexes', `${c.affineFlexes ?? 0} of the bulk (rigid motions, homogeneous mechanisms and strain modes: u_s + L̇·cell)`],
        ['solver', `${r.analysis.solver} (${r.analysis.solverReason})`],
        ...(st ? stressRows(st) : []),
      ]).trimEnd(),
    );
    lines.push('', 'Thresholds:');
    lines.push(table(Object.entries(c.thresholds).map(([k, v]) => [k, String(v)])).trimEnd());
    for (const w of c.warnings ?? []) lines.push('', `Warning: ${w}`);
    const shown: [number, ClassifiedMode][] = [];
    for (const k of FLEX_CLASSES) c.modes.forEach((m, i) => {
      if (m.class === k && shown.filter(([, x]) => x.class === k).length < PER_CLASS_SHOWN) shown.push([i, m]);
    });
    if (shown.length) {
      lines.push('', `Modes (${shown.length} of ${c.modes.length} shown, at most ${PER_CLASS_SHOWN} per class; --json lists all, --out FILE adds the vectors):`);
      const rows = [['mode', 'class', 'support', 'extents (cells)', 'participation', 'where'], ...shown.map(([i, m]) => [String(i), m.class, `${m.support} joints`, `${fmt(m.extents[0], 3)} × ${fmt(m.extents[1], 3)}`, fmt(m.participation, 3), modeWhere(m)])];
      const widths = rows[0].map((_, col) => Math.max(...rows.map((row) => row[col].length)));
      for (const row of rows) lines.push('  ' + row.map((cell, col) => (col === row.length - 1 ? cell : cell.padEnd(widths[col]))).join('  ').trimEnd());
    }
    if (outPath !== undefined) lines.push('', `Wrote the full classification with vectors to ${safeText(outPath)}.`);
    lines.push('', CAUTION, '');
    io.out(lines.join('\n'));
    return 0;
  },
};

/** The table rows of --stresses. */
function stressRows(st: StressClassification): [string, string][] {
  const rows: [string, string][] = [['self-stresses', `${st.selfStresses}: ${FLEX_CLASSES.map((k) => `${k} ${st.counts[k]}`).join(', ')} (over bars; ${st.shortStripStresses} short strip pieces among decaying and bulk)`]];
  const mac = st.macroscopic;
  if (mac) rows.push(['macroscopic stress', `rank ${mac.rank} of 3 on the self-stresses, ${mac.traceless ? 'every one traceless' : 'not all traceless'} (largest |tr σ| ${fmt(mac.largestTrace, 3)} per unit self-stress, scale ${fmt(mac.scale, 3)})`]);
  for (const w of st.warnings ?? []) rows.push(['self-stress warning', w]);
  return rows;
}

function sideWeightsSkipped(r: ClassifyRun): string {
  return `not computed: ${r.analysis.dof} columns is over ${SIDE_WEIGHTS_ALWAYS_DOF}, and they need the whole flex basis (pass --side-weights)`;
}
