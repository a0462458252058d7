/** `shimmy sweep`: classify the flexes at a series of sizes and fit their growth with N. */
import { CAUTION } from '../caution.js';
import { InputError } from '../errors.js';
import { SWEEP_QUANTITIES, sweep, twistSweep, type SweepResult, type SweepRow, type TwistSweepRow } from '../flex/sweep.js';
import { MAX_CELLS_PER_AXIS } from '../supercell/supercell.js';
import { describeBoundary } from '../supercell/boundary.js';
import type { Progress } from '../flex/solver.js';
import { progressLine } from './progress.js';
import type { Command } from './command.js';
import { CLASSIFY_DETAILS, CLASSIFY_FLAGS, readClassifyFlags } from './classify.js';
import { checkSize, fmt, readSupercellArgs, safeJson, SUPERCELL_FLAGS, titleOf } from './common.js';

const RANGE_HELP =
  'write N, N1xN2, A..B[:STEP] (square sizes A×A up to B×B) or A1xA2..B1xB2[:STEP], or a comma list of these, e.g. --cells 4..16:4 or --cells 4x8..16x32';

/**
 * The sizes of `--cells`: a comma list of single sizes (N or N1xN2) and ranges.
 *  - A..B[:s]            square sizes N×N for N = A, A+s, …, up to B (s defaults to 1);
 *  - A1xA2..B1xB2[:s]    both sides scale together: N1 = A1, A1+s, … up to B1, and
 *                        N2 = A2 + (N1 − A1)·(B2 − A2)/(B1 − A1), which must be whole
 *                        (e.g. 4x8..16x32 gives N2 = 2·N1). When A1 = B1, N1 stays fixed
 *                        and N2 runs A2, A2+s, … up to B2.
 */
export function parseSizeList(text: string, flag = '--cells'): [number, number][] {
  const bad = (what: string): never => {
    throw new InputError(`The sizes "${text}" cannot be used:`, [{ where: flag, what, fix: RANGE_HELP }]);
  };
  const size = (t: string): [number, number] => {
    const m = /^\s*(\d+)\s*(?:[x×X]\s*(\d+))?\s*$/.exec(t);
    if (!m) return bad(`"${t}" is not a size of whole cells`);
    const a = Number(m[1]);
    const b = Number(m[2] ?? m[1]);
    if (a < 1 || b < 1 || a > MAX_CELLS_PER_AXIS || b > MAX_CELLS_PER_AXIS) return bad(`each side of "${t}" must be from 1 to ${MAX_CELLS_PER_AXIS}`);
    return [a, b];
  };
  const out: [number, number][] = [];
  if (text.trim() === '') bad('no size given');
  for (const part of text.split(',')) {
    const range = /^(.*)\.\.([^:]*)(?::\s*(\d+)\s*)?$/.exec(part.trim());
    if (!range) {
      out.push(size(part));
      continue;
    }
    const [lo, hi] = [size(range[1]), size(range[2])];
    const step = range[3] === undefined ? 1 : Number(range[3]);
    if (!(step >= 1)) bad(`the step of "${part}" must be a whole number of at least 1`);
    if (lo[0] === hi[0]) {
      if (hi[1] < lo[1]) bad(`"${part}" runs backwards; write the smaller size first`);
      for (let n2 = lo[1]; n2 <= hi[1]; n2 += step) out.push([lo[0], n2]);
      continue;
    }
    if (hi[0] < lo[0]) bad(`"${part}" runs backwards; write the smaller size first`);
    for (let n1 = lo[0]; n1 <= hi[0]; n1 += step) {
      const n2 = lo[1] + ((n1 - lo[0]) * (hi[1] - lo[1])) / (hi[0] - lo[0]);
      if (!Number.isInteger(n2)) bad(`in "${part}" the second side ${lo[1]} + (N1 − ${lo[0]})·${hi[1] - lo[1]}/${hi[0] - lo[0]} is not whole at N1 = ${n1}; choose ends and a step that keep it whole`);
      if (n2 < 1) bad(`in "${part}" the second side falls below 1 at N1 = ${n1}`);
      out.push([n1, n2]);
    }
  }
  if (out.length > 1000) bad(`${out.length} sizes is too many for one sweep (at most 1000)`);
  return out;
}

const PHASE_HELP = 'write phases in turns as decimals: A..B:STEP (e.g. 0..0.5:0.05) or a comma list (e.g. 0,0.25,0.3333)';

/** The phases of `--twist`: a comma list of numbers and ranges A..B:STEP (STEP required, values rounded to 12 digits). */
export function parsePhaseList(text: string, flag = '--twist'): number[] {
  const bad = (what: string): never => {
    throw new InputError(`The phases "${text}" cannot be used:`, [{ where: flag, what, fix: PHASE_HELP }]);
  };
  const num = (t: string): number => {
    const v = Number(t.trim());
    if (t.trim() === '' || !Number.isFinite(v)) return bad(`"${t.trim()}" is not a number of turns`);
    return v;
  };
  const out: number[] = [];
  if (text.trim() === '') bad('no phase given');
  for (const part of text.split(',')) {
    const range = /^(.*)\.\.([^:]*)(?::(.*))?$/.exec(part.trim());
    if (!range) {
      out.push(num(part));
      continue;
    }
    const [a, b] = [num(range[1]), num(range[2])];
    if (range[3] === undefined) bad(`the range "${part.trim()}" needs a step, e.g. ${a}..${b}:0.05`);
    const step = num(range[3] as string);
    if (!(step > 0)) bad(`the step of "${part.trim()}" must be positive`);
    if (b < a) bad(`"${part.trim()}" runs backwards; write the smaller phase first`);
    const n = Math.floor((b - a) / step + 1e-9);
    if (n > 1000) bad(`"${part.trim()}" has ${n + 1} phases, over 1000`);
    for (let k = 0; k <= n; k++) out.push(Number((a + k * step).toPrecision(12)));
  }
  if (out.length > 1000) bad(`${out.length} phases is too many for one sweep (at most 1000)`);
  return out;
}

const COLUMNS: (keyof SweepRow)[] = ['N1', 'N2', 'joints', 'bars', 'flexes', 'trivial', 'selfStresses', 'local', 'line', 'decaying', 'bulk', 'seconds'];

function cell(row: SweepRow, k: keyof SweepRow): string {
  const v = row[k];
  if (k === 'seconds') return (v as number).toFixed(2);
  return String(v);
}

function polynomialLines(r: SweepResult): string[] {
  const lines = [`Polynomial fits, count ≈ a2·N² + a1·N + a0 with N = ${r.linearSize} (least squares over all sizes):`];
  for (const q of SWEEP_QUANTITIES) {
    const f = r.polynomialFits[q];
    if (f.a2 === null || f.a1 === null || f.a0 === null) {
      lines.push(`  ${q.padEnd(9)} no fit (needs 3 distinct sizes)`);
      continue;
    }
    const coeffs = `a2 ${fmt(f.a2, 4)}, a1 ${fmt(f.a1, 4)}, a0 ${fmt(f.a0, 4)}, residual ${fmt(f.residual, 3)} over ${f.points} sizes`;
    const exact = f.exact ? `${f.exact.formula} exactly${f.freedom === 0 ? ' (3 sizes: interpolation, not a test)' : ''}; ` : 'not an exact polynomial; ';
    lines.push(`  ${q.padEnd(9)} ${exact}${coeffs}`);
  }
  const p = r.prediction;
  const side = (v: number | null) => (v === null ? '—' : fmt(v, 4));
  lines.push(
    `From the symbol: ${p.genericKernel} flex${p.genericKernel === 1 ? '' : 'es'} per cell at a generic phase; flexes per edge wave number: bottom ${side(p.perSide.bottom)}, top ${side(p.perSide.top)}, left ${side(p.perSide.left)}, right ${side(p.perSide.right)}`,
  );
  const f = r.polynomialFits.flexes;
  if (p.polynomial && f.a2 !== null && f.a1 !== null)
    lines.push(`  flexes    predicted a2 ${fmt(p.polynomial.a2, 4)}, a1 ${fmt(p.polynomial.a1, 4)} against fitted a2 ${fmt(f.a2, 4)}, a1 ${fmt(f.a1, 4)}`);
  else if (p.areaA2 !== null && f.a2 !== null) lines.push(`  flexes    predicted a2 ${fmt(p.areaA2, 4)} (area term) against fitted a2 ${fmt(f.a2, 4)}`);
  lines.push(`  (${p.note})`);
  return lines;
}

function fitLines(r: SweepResult): string[] {
  const lines = [...polynomialLines(r), `Growth with the linear size N = ${r.linearSize} (secondary figure: least squares of ln count against ln N, sizes with count > 0):`];
  for (const q of SWEEP_QUANTITIES) {
    const f = r.fits[q];
    lines.push(`  ${q.padEnd(9)} ${f.exponent === null ? `no fit (${f.points} usable size${f.points === 1 ? '' : 's'})` : `exponent ${fmt(f.exponent, 3)}, R² ${fmt(f.r2, 4)} over ${f.points} sizes`}`);
  }
  return lines;
}

/** --csv, --json or the table (both formats at once is refused). */
function outputMode(args: Parameters<Command['run']>[0]): 'csv' | 'json' | 'table' {
  if (args.flags.has('--csv') && args.flags.has('--json')) {
    throw new InputError('sweep prints one format:', [{ where: '--csv --json', what: 'both formats were asked for', fix: 'write either --csv or --json (or neither for a table)' }]);
  }
  return args.flags.has('--csv') ? 'csv' : args.flags.has('--json') ? 'json' : 'table';
}

/** Prints rows as they come: aligned columns for the table, comma-separated for CSV (seconds unrounded), nothing for JSON. */
function rowWriter<R extends { seconds: number }>(io: Parameters<Command['run']>[1], mode: 'csv' | 'json' | 'table', columns: (keyof R)[], text: (row: R, k: keyof R) => string) {
  const widths = columns.map((k) => Math.max(String(k).length, 7));
  return {
    header() {
      if (mode === 'table') io.out('  ' + columns.map((k, i) => String(k).padStart(widths[i])).join(' ') + '\n');
      if (mode === 'csv') io.out(columns.join(',') + '\n');
    },
    write: (row: R) => {
      if (mode === 'table') io.out('  ' + columns.map((k, i) => text(row, k).padStart(widths[i])).join(' ') + '\n');
      if (mode === 'csv') io.out(columns.map((k) => (k === 'seconds' ? String(row.seconds) : text(row, k))).join(',') + '\n');
    },
  };
}

/** The solve and classify settings every sweep row runs with. */
function runOptions(a: ReturnType<typeof readSupercellArgs>, opts: ReturnType<typeof readClassifyFlags>, onProgress: (p: Progress) => void) {
  return { tolerance: a.tolerance, solver: a.solver, memoryLimit: a.memoryLimit, window: opts.window, strip: opts.strip, onProgress };
}

export const sweepCommand: Command = {
  name: 'sweep',
  summary: 'Classify the flexes at a series of supercell sizes and fit how each class count grows with N.',
  usage: 'shimmy sweep FRAMEWORK --cells A..B[:STEP] [--bc SPEC] [--twist A..B:STEP] [--window 3] [--strip 2] [--tol 1e-9] [--solver auto] [--csv | --json]',
  flags: [
    { name: '--cells', value: 'SIZES', help: 'sizes: A..B[:STEP] (squares), A1xA2..B1xB2[:STEP] (both sides together) or a comma list', default: '4..8' },
    ...SUPERCELL_FLAGS.filter((f) => f.name !== '--cells'),
    { name: '--twist', value: 'PHASES', help: 'sweep the twist phase instead of the size: one size in --cells, and every twisted axis of --bc (default periodic) takes each phase in turn (A..B:STEP or a comma list, turns)' },
    ...CLASSIFY_FLAGS,
    { name: '--csv', help: 'print the rows as CSV on stdout (header first); the growth fits go to stderr, so a redirected file stays plain CSV' },
    { name: '--json', help: 'print one JSON object: rows, polynomialFits, fits and thresholds' },
    { name: '--help', help: 'show this help' },
  ],
  maxPositional: 1,
  details: [
    'Sizes: A..B[:STEP] means N×N for N = A, A+STEP, … up to B (STEP defaults to 1). A1xA2..B1xB2[:STEP]',
    'scales both sides together: N1 runs from A1 by STEP up to B1 and N2 = A2 + (N1 − A1)·(B2 − A2)/(B1 − A1)',
    '(so 4x8..16x32 gives N1 = 4…16 with N2 = 2·N1); with A1 = B1 only N2 steps. Sizes may be listed with commas.',
    'Columns: N1, N2, joints, bars, flexes, trivial (rigid motions among the flexes), selfStresses, the four',
    'class counts and seconds (solve and classification). The fits use the side that varies as N',
    '(N1 or N2), or √(N1·N2) when both do: each count is fitted to a2·N² + a1·N + a0 (area, edge and',
    'corner terms; exact fractions where they reproduce every count), with the log-log exponent as a',
    'secondary figure. Every size runs the full analysis, so the time grows',
    'quickly with size for the dense solver.',
    'With --twist the size stays fixed and the twist phase θ runs instead: every twisted (or periodic) axis of --bc',
    'takes θ in turn (one row per phase, first column theta; no growth fits).',
    '',
    ...CLASSIFY_DETAILS,
  ],
  run(args, io) {
    if (args.flags.has('--twist')) return runTwist(args, io);
    const sizes = parseSizeList((args.flags.get('--cells') as string | undefined) ?? '4..8');
    const first = `${sizes[0][0]}x${sizes[0][1]}`;
    const flags = new Map(args.flags);
    flags.set('--cells', first); // the sizes are parsed above; this only satisfies the shared reader
    const a = readSupercellArgs({ positional: args.positional, flags }, io, 'sweep');
    const opts = readClassifyFlags(args);
    for (const size of sizes) checkSize(a, true, size);
    const mode = outputMode(args);
    const rows = rowWriter(io, mode, COLUMNS, cell);
    if (mode === 'table') io.out(`shimmy sweep: ${titleOf(a.framework.name, a.spec)}\n  ${describeBoundary(a.boundary)}; ${sizes.length} size${sizes.length === 1 ? '' : 's'}\n\n`);
    rows.header();
    const progress = progressLine(io, 'sweep');
    const result = sweep(a.framework, { sizes, boundary: a.bcText, ...runOptions(a, opts, progress.report), onRow: rows.write });
    progress.done();
    if (mode === 'json') {
      io.out(safeJson(JSON.stringify({ schemaVersion: 'shimmy.sweep/1', framework: a.spec, name: a.framework.name ?? null, ...result }, null, 2)) + '\n');
      return 0;
    }
    if (mode === 'csv') io.err(fitLines(result).join('\n') + '\n');
    if (mode === 'table') {
      const warned = result.rows.filter((r) => r.warnings.length);
      io.out('\n' + fitLines(result).join('\n') + '\n');
      for (const r of warned) io.out(`\nWarning at ${r.N1}×${r.N2}: ${r.warnings.join('; ')}\n`);
      io.out(`\n${CAUTION}\n`);
    }
    return 0;
  },
};

const TWIST_COLUMNS: (keyof TwistSweepRow)[] = ['theta', ...COLUMNS.filter((k) => k !== 'N1' && k !== 'N2')];

function runTwist(args: Parameters<Command['run']>[0], io: Parameters<Command['run']>[1]): number {
  const phases = parsePhaseList(args.flags.get('--twist') as string);
  const sizes = parseSizeList((args.flags.get('--cells') as string | undefined) ?? '6x6');
  if (sizes.length !== 1) throw new InputError('A twist sweep runs at one size:', [{ where: '--cells', what: `${sizes.length} sizes were given`, fix: 'give one size with --twist, e.g. --cells 6x6' }]);
  const flags = new Map(args.flags);
  flags.set('--cells', `${sizes[0][0]}x${sizes[0][1]}`);
  if (!flags.has('--bc')) flags.set('--bc', 'periodic');
  const a = readSupercellArgs({ positional: args.positional, flags }, io, 'sweep');
  const opts = readClassifyFlags(args);
  checkSize(a, true);
  const mode = outputMode(args);
  const text = (row: TwistSweepRow, k: keyof TwistSweepRow) => (k === 'theta' ? String(row.theta) : cell(row, k as keyof SweepRow));
  const rows = rowWriter(io, mode, TWIST_COLUMNS, text);
  if (mode === 'table') io.out(`shimmy sweep: ${titleOf(a.framework.name, a.spec)}\n  ${a.cells[0]}×${a.cells[1]} cells, ${describeBoundary(a.boundary)}; twist phase θ over ${phases.length} value${phases.length === 1 ? '' : 's'} (every twisted axis)\n\n`);
  rows.header();
  const progress = progressLine(io, 'sweep');
  const result = twistSweep(a.framework, { cells: a.cells, phases, boundary: a.boundary, ...runOptions(a, opts, progress.report), onRow: rows.write });
  progress.done();
  if (mode === 'json') {
    // schema/twist-sweep.schema.json
    io.out(safeJson(JSON.stringify({ schemaVersion: 'shimmy.twist-sweep/1', framework: a.spec, name: a.framework.name ?? null, cells: a.cells, boundary: a.bcText, ...result }, null, 2)) + '\n');
  }
  if (mode === 'table') {
    for (const r of result.rows.filter((x) => x.warnings.length)) io.out(`\nWarning at θ = ${r.theta}: ${r.warnings.join('; ')}\n`);
    io.out(`\n${CAUTION}\n`);
  }
  return 0;
}
