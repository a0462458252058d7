/** Flags and helpers shared by the commands that analyse one supercell. */
import { loadFramework } from '../framework/load.js';
import type { Framework } from '../framework/types.js';
import { InputError } from '../errors.js';
import { parseBoundary, type Boundary } from '../supercell/boundary.js';
import { parseCells, parseNumberFlag, type FlagSpec, type ParsedArgs } from './args.js';
import type { CliIO } from './command.js';
import { SOLVER_CHOICES, type SolverChoice } from '../flex/solver.js';

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
];

export interface SupercellArgs {
  spec: string;
  framework: Framework;
  cells: [number, number];
  boundary: Boundary;
  bcText: string;
  tolerance: number;
  solver: SolverChoice;
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
    tolerance: tolText === undefined ? 1e-9 : parseNumberFlag(tolText, '--tol', (v) => v >= 0 && v < 1, 'a number from 0 up to (not including) 1, e.g. 1e-9'),
  };
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
