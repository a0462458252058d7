/** `shimmy count`: flexes, trivial flexes, self-stresses and the rank evidence of one supercell. */
import { count } from '../analysis.js';
import { CAUTION } from '../caution.js';
import { countsOf } from '../flex/spaces.js';
import { AMBIGUOUS_RATIO } from '../linalg/rank.js';
import { describeBoundary } from '../supercell/boundary.js';
import type { Command } from './command.js';
import { progressLine } from './progress.js';
import { BOUNDARY_HELP, fmt, FRAMEWORK_HELP, readSupercellArgs, SUPERCELL_FLAGS, table } from './common.js';

export const countCommand: Command = {
  name: 'count',
  summary: 'Count the flexes (infinitesimal motions), the trivial ones among them and the self-stresses of an N1×N2 supercell.',
  usage: 'shimmy count FRAMEWORK [--cells 8x8] [--bc SPEC] [--tol 1e-9] [--json]',
  flags: [...SUPERCELL_FLAGS, { name: '--json', help: 'print one JSON object instead of a table (with `seconds`, the time the count took)' }, { name: '--help', help: 'show this help' }],
  maxPositional: 1,
  details: [...FRAMEWORK_HELP, '', ...BOUNDARY_HELP],
  run(args, io) {
    const a = readSupercellArgs(args, io, 'count');
    const progress = progressLine(io, 'count');
    const started = performance.now();
    const { analysis } = count({ framework: a.framework, cells: a.cells, boundary: a.boundary, tolerance: a.tolerance, solver: a.solver, onProgress: progress.report });
    const seconds = (performance.now() - started) / 1000;
    progress.done();
    const c = countsOf(analysis);
    const ambiguous = c.gap.ambiguous;
    if (args.flags.has('--json')) {
      const out = {
        framework: a.spec,
        name: a.framework.name ?? null,
        cells: a.cells,
        boundary: a.bcText,
        ...c,
        warnings: ambiguous ? [ambiguityWarning(c.gap.ratio)] : [],
        /** Wall time of building the supercell and counting, in this process (no start-up). */
        seconds,
        caution: CAUTION,
      };
      io.out(JSON.stringify(out, null, 2) + '\n');
      return 0;
    }
    const title = a.framework.name ? `${a.framework.name} (${a.spec})` : a.spec;
    const mc = c.maxwellCalladine;
    const tested = c.rigidMotionsTested.length ? c.rigidMotionsTested.join(', ') : 'none allowed by this boundary';
    io.out(
      `shimmy count: ${title}\n` +
        `  supercell ${a.cells[0]}×${a.cells[1]} cells, ${describeBoundary(a.boundary)}\n\n` +
        table([
          ['joints', String(c.joints)],
          ['bars (rows)', `${c.bars}${c.groundedBars ? ` (${c.groundedBars} grounded)` : ''}${c.droppedBars ? `; ${c.droppedBars} dropped at free sides` : ''}`],
          ['flexes', String(c.flexes)],
          ['  trivial', `${c.trivialFlexes} (rigid motions tested: ${tested})`],
          ['  non-trivial', String(c.flexes - c.trivialFlexes)],
          ['self-stresses', String(c.selfStresses)],
          ['Maxwell–Calladine', `flexes − self-stresses = ${mc.lhs}, 2·joints − bars = ${mc.rhs} ${mc.ok ? '(holds)' : '(FAILS)'}`],
          ['rank', `${c.rank} of ${c.dof} columns, ${c.real ? 'real' : 'complex'} matrix`],
          ['solver', `${c.solver} (${c.solverReason})`],
          ['tolerance', `σ ≤ ${c.tolerance.relative} × σ_max = ${fmt(c.tolerance.absolute)} counts as zero`],
          ['gap', `smallest kept σ ${fmt(c.gap.kept)}, largest dropped σ ${fmt(c.gap.dropped)}, ratio ${c.gap.ratio === null ? 'unbounded' : fmt(c.gap.ratio, 3)}`],
        ]) +
        (c.gapNote ? `  (${c.gapNote})\n` : '') +
        (ambiguous ? `\nWarning: ${ambiguityWarning(c.gap.ratio)}\n` : '') +
        `\n${CAUTION}\n`,
    );
    return 0;
  },
};

export function ambiguityWarning(ratio: number | null): string {
  return `the singular-value gap ratio ${fmt(ratio, 3)} is under ${AMBIGUOUS_RATIO}: the rank, and so every count, is ambiguous at this tolerance; try another --tol and compare.`;
}
