/** Flags and helpers shared by the commands that analyse one supercell. */
import { loadFramework } from '../framework/load.js';
import type { Framework } from '../framework/types.js';
import { InputError } from '../errors.js';
import { parseBoundary, type Boundary } from '../supercell/boundary.js';
import { parseCells, parseNumberFlag, type FlagSpec, type ParsedArgs } from './args.js';
import type { CliIO } from './command.js';
import { SOLVER_CHOICES, type SolverChoice } from '../flex/solver.js';
import { checkRunSize, MIN_RELATIVE_TOLERANCE, type RunEstimate } from '../flex/estimate.js';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { totalmem } from 'node:os';

export const FRAMEWORK_HELP = [
  'FRAMEWORK is a framework file (JSON, see schema/framework.schema.json) or a built-in lattice',
  'gallery:NAME[?key=value&...], e.g. gallery:kagome or "gallery:twisted-kagome?twist=15".',
  'Run `shimmy gallery` for the list of lattices and their parameters.',
];

export const BOUNDARY_HELP = [
  'Boundary rules (--bc): free | pinned | periodic | twist:θ1,θ2 (phases in turns), or a comma list',
  'of x=RULE, y=RULE (RULE: free, pinned, periodic, twist:θ) and left=, right=, bottom=, top=',
  '(free or pinned); later entries override earlier ones, anything unspecified is free.',
  'Example: --bc x=twist:0.25,bottom=pinned. A bar leaving through a pinned side is grounded',
  '(its far end fixed); one leaving through any free side is dropped.',
];

export const SUPERCELL_FLAGS: FlagSpec[] = [
  { name: '--cells', value: 'N1xN2', help: 'supercell size in unit cells', default: '8x8' },
  { name: '--bc', value: 'SPEC', help: 'boundary rules, see below', default: 'free' },
  { name: '--tol', value: 'T', help: 'relative rank tolerance: σ counts as zero when σ ≤ T·σ_max', default: '1e-9' },
  { name: '--solver', value: 'NAME', help: 'auto | dense | bloch | sparse (auto picks by size and structure and says which)', default: 'auto' },
  { name: '--allow-large', help: 'run even when the size estimate is over 1.5 GB or 10 minutes (still refused beyond this machine\'s memory)' },
];

/** --gap: measure the smallest kept σ, or let a certified lower bound stand in (count and classify). */
export const GAP_FLAG: FlagSpec = {
  name: '--gap',
  value: 'value|bound',
  help: 'value: measure the smallest kept σ on every path; bound: where the count is certified by an inertia count, report its certified lower bound instead (faster)',
  default: 'bound',
};

export function readGapFlag(args: ParsedArgs): 'value' | 'bound' {
  const gapText = (args.flags.get('--gap') as string | undefined) ?? 'bound';
  if (gapText !== 'value' && gapText !== 'bound') {
    throw new InputError('The --gap value cannot be used:', [{ where: '--gap', what: `"${safeText(gapText)}" is not a choice`, fix: 'give --gap value (measure the smallest kept σ) or --gap bound (its certified lower bound, faster)' }]);
  }
  return gapText;
}

export interface SupercellArgs {
  spec: string;
  framework: Framework;
  cells: [number, number];
  boundary: Boundary;
  bcText: string;
  tolerance: number;
  solver: SolverChoice;
  /** --allow-large: the memory limit becomes this machine's memory and the time limit goes. */
  allowLarge: boolean;
  /** Bytes a run may use: the machine's memory with --allow-large, else undefined (the default). */
  memoryLimit?: number;
}

export function frameworkArg(args: ParsedArgs, command: string): string {
  const spec = args.positional[0];
  if (spec === undefined) {
    throw new InputError(`no framework given:`, [
      { where: 'FRAMEWORK', what: 'the command needs a framework', fix: `write shimmy ${command} FILE.json or shimmy ${command} gallery:kagome` },
    ]);
  }
  return spec;
}

export function readSupercellArgs(args: ParsedArgs, io: CliIO, command: string): SupercellArgs {
  const spec = frameworkArg(args, command);
  const cellsText = (args.flags.get('--cells') as string | undefined) ?? '8x8';
  const bcText = (args.flags.get('--bc') as string | undefined) ?? 'free';
  const tolText = args.flags.get('--tol') as string | undefined;
  const solverText = (args.flags.get('--solver') as string | undefined) ?? 'auto';
  if (!(SOLVER_CHOICES as string[]).includes(solverText)) {
    throw new InputError(`The solver "${solverText}" cannot be used:`, [
      { where: '--solver', what: `"${solverText}" is not a solver`, fix: `write --solver followed by one of ${SOLVER_CHOICES.join(', ')}` },
    ]);
  }
  const framework = loadFramework(spec, io.readText);
  return {
    spec,
    framework,
    cells: parseCells(cellsText),
    boundary: parseBoundary(bcText),
    bcText,
    solver: solverText as SolverChoice,
    tolerance: tolText === undefined ? 1e-9 : parseTolerance(tolText),
    allowLarge: args.flags.has('--allow-large'),
    memoryLimit: args.flags.has('--allow-large') ? totalmem() : undefined,
  };
}

/** --tol: a decimal number from MIN_RELATIVE_TOLERANCE (1e-15) up to, not including, 1. */
export function parseTolerance(text: string, flag = '--tol'): number {
  return parseNumberFlag(text, flag, (v) => v >= MIN_RELATIVE_TOLERANCE && v < 1, `a number from ${MIN_RELATIVE_TOLERANCE} up to (not including) 1, e.g. 1e-9 (smaller cuts fall inside rounding noise)`);
}

/**
 * The size check before a run, worded for the command line (--cells, --allow-large); `bases`
 * when the command also computes the flex basis. With --allow-large the JavaScript heap, which
 * holds the supercell's bar objects, is the other limit.
 */
export function checkSize(a: SupercellArgs, bases: boolean, cells: [number, number] = a.cells): RunEstimate {
  return checkRunSize(a.framework, cells, a.boundary, {
    solver: a.solver,
    bases,
    allowLarge: a.allowLarge,
    memoryLimit: a.memoryLimit,
    // (node:v8 loaded only here: ~4 ms of start-up that other commands need not pay)
    heapLimit: a.allowLarge ? (createRequire(import.meta.url)('node:v8') as typeof import('node:v8')).getHeapStatistics().heap_size_limit : undefined,
    labels: { cells: '--cells', allow: `add --allow-large to run it anyway (up to this machine's ${formatGB(totalmem())})` },
  });
}

function formatGB(bytes: number): string {
  return `${(bytes / 1024 ** 3).toFixed(1)} GB`;
}

/** Control characters (C0, DEL, C1), bidi controls and line separators a terminal would act on. */
const UNSAFE_CHARS = /[\u0000-\u001f\u007f-\u009f\u061c\u200e\u200f\u2028-\u202e\u2066-\u2069]/g;
/** The same without the line break \n (for multi-line text). */
const UNSAFE_IN_LINES = /[\u0000-\u0009\u000b-\u001f\u007f-\u009f\u061c\u200e\u200f\u2028-\u202e\u2066-\u2069]/g;
/** What JSON.stringify leaves raw inside strings: DEL, C1 and bidi controls, U+2028/2029. */
const UNSAFE_IN_JSON = /[\u007f-\u009f\u061c\u200e\u200f\u2028-\u202e\u2066-\u2069]/g;

function escapeChar(c: string): string {
  return `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`;
}

/** Text from the user (a name, a joint id, a path) made safe to print: control characters as \u001b etc. */
export function safeText(s: string): string {
  return s.replace(UNSAFE_CHARS, escapeChar);
}

/** Multi-line text made safe to print: line breaks kept, every other control character escaped. */
export function safeLines(s: string): string {
  return s.replace(UNSAFE_IN_LINES, escapeChar);
}

/** JSON text made safe to print; still valid JSON that parses to the same values. */
export function safeJson(text: string): string {
  return text.replace(UNSAFE_IN_JSON, escapeChar);
}

/** "name (spec)" or the spec alone, safe to print. */
export function titleOf(name: string | undefined, spec: string): string {
  return name ? `${safeText(name)} (${safeText(spec)})` : safeText(spec);
}

export function fmt(x: number | null, digits = 4): string {
  if (x === null) return '—';
  if (x === 0) return '0';
  return Math.abs(x) >= 1e-3 && Math.abs(x) < 1e5 ? Number(x.toPrecision(digits)).toString() : x.toExponential(digits - 1);
}

/** Left-aligned two-column table. */
export function table(rows: [string, string][]): string {
  const w = Math.max(...rows.map((r) => r[0].length));
  return rows.map(([k, v]) => `  ${k.padEnd(w)}  ${v}`).join('\n') + '\n';
}

/** A framework file read from disk, with a clear error naming the path when it cannot be. */
export function readTextFile(path: string): string {
  try {
    return readFileSync(path, 'utf8');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    const what = code === 'ENOENT' ? 'no such file' : code === 'EISDIR' ? 'it is a folder, not a file' : code === 'EACCES' ? 'permission denied' : `it cannot be read (${code ?? 'unknown error'})`;
    throw new InputError(`The framework file "${path}" cannot be read:`, [
      { where: path, what, fix: 'give the path of a framework JSON file, or a built-in lattice such as gallery:kagome' },
    ]);
  }
}
