/**
 * `shimmy strain`: periodic flexes when the lattice may deform too, modulo the trivial ones, with
 * the macroscopic strain of each (src/strain/flexible-lattice.ts).
 */
import { CAUTION } from '../caution.js';
import { loadFramework } from '../framework/load.js';
import type { Vec2 } from '../framework/types.js';
import { flexibleLattice, type FlexibleLatticeResult, type StrainFlex, type Sym2 } from '../strain/flexible-lattice.js';
import { parseCells } from './args.js';
import type { Command } from './command.js';
import { fmt, FRAMEWORK_HELP, frameworkArg, parseTolerance, safeJson, table, titleOf } from './common.js';
import { ambiguityWarning } from './count.js';

function vec(v: Vec2): string {
  return `(${fmt(v[0], 6)}, ${fmt(v[1], 6)})`;
}

function sym(e: Sym2): string {
  // entries of a unit-norm strain under 1e-12 are rounding: shown as 0 (the JSON keeps them)
  const x = (v: number) => fmt(Math.abs(v) < 1e-12 ? 0 : v, 5);
  return `[[${x(e[0][0])}, ${x(e[0][1])}], [${x(e[1][0])}, ${x(e[1][1])}]]`;
}

function plural(n: number, word: string, many: string): string {
  return `${n} ${n === 1 ? word : many}`;
}

function strainLine(s: StrainFlex): string {
  const [l1, l2] = s.principal.values;
  return `ε = ${sym(s.strain)}: ${s.kind}, principal ${fmt(l1, 5)} at ${fmt(s.principal.angleDegrees, 4)}° and ${fmt(l2, 5)}, ${s.auxetic ? 'auxetic' : 'not auxetic'}`;
}

function warningsOf(r: FlexibleLatticeResult): string[] {
  return r.rank.gap.ambiguous || r.strainSpace.decision.gap.ambiguous ? [ambiguityWarning(r.reasons)] : [];
}

function summary(spec: string, name: string | undefined, r: FlexibleLatticeResult): string {
  const g = r.rank.gap;
  const sg = r.strainSpace.decision.gap;
  const rows: [string, string][] = [
    ['joints', String(r.joints)],
    ['bars (rows)', String(r.bars)],
    ['flexes', `${r.flexes} (of ${r.columns} columns: 2 per joint and 4 for the lattice velocity)`],
    ['  trivial', `${r.trivialFlexes} (translations x, y and the rotation of the whole)`],
    ['  non-trivial', String(r.nonTrivialFlexes)],
    ['    straining the cell', String(r.strainFlexes)],
    ['    zero strain', String(r.zeroStrainFlexes)],
    ['self-stresses', `${r.selfStresses} (periodic ones that survive a deforming lattice)`],
    ['fixed lattice', `${plural(r.fixedLattice.flexes, 'flex', 'flexes')}, ${plural(r.fixedLattice.selfStresses, 'self-stress', 'self-stresses')}`],
    ['tolerance', `σ ≤ ${r.rank.tolerance.relative} × σ_max = ${fmt(r.rank.tolerance.absolute)} counts as zero`],
    ['gap', `smallest kept σ ${fmt(g.kept)}, largest dropped σ ${fmt(g.dropped)}, ratio ${g.ratio === null ? 'unbounded' : fmt(g.ratio, 3)}`],
    ['strain map gap', `kept ${fmt(sg.kept)}, dropped ${fmt(sg.dropped)} (fractions of ‖L⁻¹‖₂), ratio ${sg.ratio === null ? 'unbounded' : fmt(sg.ratio, 3)}`],
    ['certified', r.certified ? 'yes: every singular value computed, none within rounding of the cut' : `NO: ${r.reasons.join('; ')}`],
    ['strain space', `dimension ${r.strainSpace.dimension}; auxetic strains: ${r.strainSpace.auxetic}`],
    ...r.strains.map((s, i) => [`  strain ${i + 1}`, strainLine(s)] as [string, string]),
  ];
  const [A1, A2] = r.lattice;
  return (
    `shimmy strain: ${titleOf(name, spec)}\n` +
    `  cell ${r.cells[0]}×${r.cells[1]}, periodic, lattice A1 = ${vec(A1)}, A2 = ${vec(A2)} free to deform\n` +
    `  strain ε = sym(L̇ L⁻¹); basis orthonormal in the Frobenius inner product\n\n` +
    table(rows) +
    warningsOf(r).map((w) => `\nWarning: ${w}\n`).join('') +
    `\n${CAUTION}\n`
  );
}

export const strainCommand: Command = {
  name: 'strain',
  summary: 'Periodic flexes with a deformable lattice: how many strain the cell, their macroscopic strains, principal strains and whether they are auxetic.',
  usage: 'shimmy strain FRAMEWORK [--cells 1x1] [--tol 1e-9] [--json]',
  flags: [
    { name: '--cells', value: 'N1xN2', help: 'the periodic cell in unit cells (the lattice is then N1·a1, N2·a2)', default: '1x1' },
    { name: '--tol', value: 'T', help: 'relative rank tolerance: σ counts as zero when σ ≤ T·σ_max (also cuts the strain map at T·‖L⁻¹‖₂)', default: '1e-9' },
    { name: '--json', help: 'print one JSON object instead of a table (schema/strain.schema.json)' },
    { name: '--help', help: 'show this help' },
  ],
  maxPositional: 1,
  details: [
    'The row of bar a→b reaching w cells away is p·(u_b − u_a + L̇·w) = 0 with p the bar vector and L̇ the',
    'lattice velocity. The strain of a flex is ε = sym(L̇ L⁻¹); the trivial flexes (translations, the rotation',
    'with L̇ = Ω·L) have none. The strain space is the set of strains of all flexes; its basis comes with one',
    'flex per basis strain. A strain is auxetic when both principal strains are nonzero and of one sign.',
    '',
    ...FRAMEWORK_HELP,
  ],
  run(args, io) {
    const spec = frameworkArg(args, 'strain');
    const cellsText = (args.flags.get('--cells') as string | undefined) ?? '1x1';
    const tolText = args.flags.get('--tol') as string | undefined;
    const cells = parseCells(cellsText);
    const tolerance = tolText === undefined ? 1e-9 : parseTolerance(tolText);
    const framework = loadFramework(spec, io.readText);
    const started = performance.now();
    const r = flexibleLattice(framework, { cells, tolerance });
    const seconds = (performance.now() - started) / 1000;
    if (args.flags.has('--json')) {
      const out = {
        schemaVersion: 'shimmy.strain/1', // schema/strain.schema.json
        framework: spec,
        name: framework.name ?? null,
        cells: r.cells,
        lattice: r.lattice,
        joints: r.joints,
        bars: r.bars,
        columns: r.columns,
        flexes: r.flexes,
        trivialFlexes: r.trivialFlexes,
        nonTrivialFlexes: r.nonTrivialFlexes,
        strainFlexes: r.strainFlexes,
        zeroStrainFlexes: r.zeroStrainFlexes,
        selfStresses: r.selfStresses,
        fixedLattice: r.fixedLattice,
        tolerance: r.rank.tolerance,
        sigmaMax: r.rank.sigmaMax,
        gap: r.rank.gap,
        certified: r.certified,
        reasons: r.reasons,
        lengthScale: r.lengthScale,
        strainSpace: r.strainSpace,
        strains: r.strains,
        zeroStrain: r.zeroStrain,
        warnings: warningsOf(r),
        seconds,
        caution: CAUTION,
      };
      io.out(safeJson(JSON.stringify(out, null, 2)) + '\n');
      return 0;
    }
    io.out(summary(spec, framework.name, r));
    return 0;
  },
};
