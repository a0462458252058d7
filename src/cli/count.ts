/** `shimmy count`: flexes, trivial flexes, self-stresses and the rank evidence of one supercell. */
import { count } from '../analysis.js';
import { CAUTION } from '../caution.js';
import { InputError } from '../errors.js';
import type { SolveStatus } from '../flex/solver.js';
import { countsOf } from '../flex/spaces.js';
import { selfCheck, type SelfCheck } from '../flex/verify.js';
import { AMBIGUOUS_RATIO } from '../linalg/rank.js';
import { describeBoundary } from '../supercell/boundary.js';
import { prestress, type PrestressResult } from '../stress/prestress.js';
import type { Command } from './command.js';
import { progressLine } from './progress.js';
import { BOUNDARY_HELP, checkSize, fmt, FRAMEWORK_HELP, GAP_FLAG, readGapFlag, readSupercellArgs, safeJson, SUPERCELL_FLAGS, table, titleOf } from './common.js';

export const countCommand: Command = {
  name: 'count',
  summary: 'Count the flexes (infinitesimal motions), the trivial ones among them and the self-stresses of an N1×N2 supercell.',
  usage: 'shimmy count FRAMEWORK [--cells 8x8] [--bc SPEC] [--tol 1e-9] [--verify] [--prestress] [--json]',
  flags: [
    ...SUPERCELL_FLAGS,
    GAP_FLAG,
    { name: '--verify', help: 'also compute both bases and check them independently: ‖R v‖ and ‖Rᴴ w‖ within the tolerance, orthonormal, as many as the count claims (exit code 4 when the check fails)' },
    { name: '--prestress', help: 'also check prestress stability: whether some self-stress makes the stress energy positive on every non-trivial flex (computes both bases; real boundaries only)' },
    { name: '--json', help: 'print one JSON object instead of a table (with `seconds`, the time the count took)' },
    { name: '--help', help: 'show this help' },
  ],
  maxPositional: 1,
  details: [...FRAMEWORK_HELP, '', ...BOUNDARY_HELP],
  run(args, io) {
    const a = readSupercellArgs(args, io, 'count');
    checkSize(a, args.flags.has('--verify') || args.flags.has('--prestress')); // both compute both bases
    const progress = progressLine(io, 'count');
    const started = performance.now();
    const gapText = readGapFlag(args);
    // --verify computes both bases: then the Lanczos run for the kept σ is cheap beside them
    const gap = args.flags.has('--verify') ? 'value' : gapText;
    const { supercell, analysis } = count({ framework: a.framework, cells: a.cells, boundary: a.boundary, tolerance: a.tolerance, solver: a.solver, allowLarge: a.allowLarge, memoryLimit: a.memoryLimit, gap, onProgress: progress.report });
    const seconds = (performance.now() - started) / 1000;
    progress.done();
    const c = countsOf(analysis);
    const ambiguous = c.gap.ambiguous;
    const check = args.flags.has('--verify') ? selfCheck(analysis) : null;
    const stability = args.flags.has('--prestress') ? prestressOf(supercell, analysis) : null;
    const warnings = ambiguous ? [ambiguityWarning(c.status.reasons)] : [];
    if (check && !check.passed) warnings.push(`the self-check failed: ${check.failures.join('; ')}`);
    const code = check && !check.passed ? 4 : 0;
    if (args.flags.has('--json')) {
      const out = {
        schemaVersion: 'shimmy.count/1', // schema/count.schema.json
        framework: a.spec,
        name: a.framework.name ?? null,
        cells: a.cells,
        boundary: a.bcText,
        ...c,
        ...(check ? { selfCheck: check } : {}),
        ...(stability ? { prestress: stability } : {}),
        warnings,
        /** Wall time of building the supercell and counting, in this process (no start-up). */
        seconds,
        caution: CAUTION,
      };
      io.out(safeJson(JSON.stringify(out, null, 2)) + '\n');
      return code;
    }
    const title = titleOf(a.framework.name, a.spec);
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
          ['Maxwell–Calladine', `flexes − self-stresses = 2·joints − bars = ${mc.rhs} (an identity of the counts, not a check)`],
          ['rank', `${c.rank} of ${c.dof} columns, ${c.real ? 'real' : 'complex'} matrix`],
          ['solver', `${c.solver} (${c.solverReason})`],
          ['tolerance', `σ ≤ ${c.tolerance.relative} × σ_max = ${fmt(c.tolerance.absolute)} counts as zero`],
          c.status.keptSigma === 'lower-bound'
            ? ['gap', `smallest kept σ ≥ ${fmt(c.gap.kept)} (certified bound; --gap value measures it), largest dropped σ ${fmt(c.gap.dropped)}, ratio ${c.gap.ratio === null ? 'unbounded' : `≥ ${fmt(c.gap.ratio, 3)}`}`]
            : ['gap', `smallest kept σ ${fmt(c.gap.kept)}, largest dropped σ ${fmt(c.gap.dropped)}, ratio ${c.gap.ratio === null ? 'unbounded' : fmt(c.gap.ratio, 3)}`],
          ['certified', certificationText(c.status)],
          ...(check ? [['self-check', selfCheckText(check)] as [string, string]] : []),
          ...(stability ? [['prestress', prestressText(stability)] as [string, string]] : []),
        ]) +
        (c.gapNote ? `  (${c.gapNote})\n` : '') +
        warnings.map((w) => `\nWarning: ${w}\n`).join('') +
        `\n${CAUTION}\n`,
    );
    return code;
  },
};

/** The warning for an ambiguous count, with every reason the solver and the gap gave. */
export function ambiguityWarning(reasons: readonly string[]): string {
  const why = reasons.length ? reasons.join('; ') : `the singular-value gap ratio is under ${AMBIGUOUS_RATIO}`;
  return `the rank, and so every count, is ambiguous at this tolerance (${why}); try another --tol and compare.`;
}

function certificationText(s: SolveStatus): string {
  const how = s.criterion === 'singular-values' ? 'every singular value computed, none within rounding of the cut' : 'inertia count matched by proved null vectors and residual-bounded singular values';
  const fallback = s.fallback ? ` after a fallback from the ${s.fallback.from} to the ${s.fallback.to} solver` : '';
  return s.certified ? `yes: ${how}${fallback}` : `NO${fallback}: ${s.reasons.join('; ') || 'see the warning'}`;
}

/** The prestress check, its InputErrors renamed to the flag that asked for it. */
function prestressOf(...args: Parameters<typeof prestress>): PrestressResult {
  try {
    return prestress(...args);
  } catch (e) {
    if (e instanceof InputError) throw new InputError(e.message.split('\n')[0], e.problems.map((p) => ({ ...p, where: p.where === 'cells' ? '--cells' : p.where === 'boundary' ? '--bc' : p.where, fix: p.fix.replace('leave out the prestress check', 'leave out --prestress') })));
    throw e;
  }
}

function prestressText(p: PrestressResult): string {
  const lambda = p.smallestEigenvalue === null ? '' : `; smallest eigenvalue of the stress form ${fmt(p.smallestEigenvalue)} (threshold ${fmt(p.threshold)})`;
  return `${p.explanation}${lambda}${p.certificate ? `; proof: ${p.certificate.detail}` : ''} (${p.selfStresses} self-stresses, ${p.nonTrivialFlexes} non-trivial flexes)`;
}

function selfCheckText(c: SelfCheck): string {
  const f = c.flexes;
  const w = c.selfStresses;
  const figures = `max ‖R v‖ ${fmt(f.worstResidual)}, max ‖Rᴴ w‖ ${fmt(w.worstResidual)} (bound ${fmt(c.residualBound)}), orthonormality ${fmt(Math.max(f.orthonormality, w.orthonormality))}`;
  return c.passed ? `passed: ${f.dimension.returned} flexes and ${w.dimension.returned} self-stresses; ${figures}` : `FAILED: ${c.failures.join('; ')}`;
}
