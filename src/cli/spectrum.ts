/**
 * `shimmy spectrum`: the phase-torus map of a framework's unit-cell symbol Φ(z): the smallest
 * singular values and dim ker Φ on a grid of Bloch phases, and the zero set (lines and points)
 * where the infinite framework has periodic-up-to-phase flexes.
 */
import { CAUTION, CAUTION_SHORT } from '../caution.js';
import { InputError } from '../errors.js';
import { loadFramework } from '../framework/load.js';
import { MAX_GRID, phaseMap, type PhaseMap, type ZeroLine, type ZeroPoint } from '../spectrum/phasemap.js';
import { almostPeriodicVerdict, type AlmostPeriodicVerdict } from '../spectrum/almost-periodic.js';
import { zeroTopology, type ZeroTopology } from '../spectrum/zero-set.js';
import { parseNumberFlag } from './args.js';
import type { Command } from './command.js';
import { fmt, FRAMEWORK_HELP, frameworkArg, parseTolerance, safeJson, safeText, table, titleOf } from './common.js';

const DEFAULT_GRID = 64;

/** "θ1 − 2θ2 ≡ 0.5" */
export function lineText(L: Pick<ZeroLine, 'p' | 'q' | 'c'>): string {
  const term = (k: number, name: string, first: boolean) => {
    if (k === 0) return '';
    const mag = Math.abs(k) === 1 ? '' : String(Math.abs(k));
    if (first) return `${k < 0 ? '−' : ''}${mag}${name}`;
    return ` ${k < 0 ? '−' : '+'} ${mag}${name}`;
  };
  const left = term(L.p, 'θ1', true) + term(L.q, 'θ2', L.p === 0);
  return `${left} ≡ ${fmt(L.c, 6)}`;
}

function pointText(z: Pick<ZeroPoint, 'theta'> | [number, number]): string {
  const t = Array.isArray(z) ? z : z.theta;
  return `θ = (${fmt(t[0], 6)}, ${fmt(t[1], 6)})`;
}

/** "rigid (proved): …" */
export function verdictText(v: AlmostPeriodicVerdict): string {
  const how = v.verdict === 'undecided' ? '' : v.certified ? ' (proved)' : ' (to the tolerance)';
  return `${v.verdict}${how}: ${v.reason}`;
}

function summary(spec: string, name: string | undefined, m: PhaseMap, t: ZeroTopology, v: AlmostPeriodicVerdict): string {
  const title = titleOf(name, spec);
  const zs = m.zeroSet;
  const rows: [string, string][] = [
    ['Φ', `${m.bars} bars × ${m.dof} columns (2 per joint of the unit cell)`],
    ['σ_max', `${fmt(m.sigmaMax)} (largest over the grid)`],
    ['tolerance', `σ ≤ ${m.tolerance.relative} × σ_max = ${fmt(m.tolerance.absolute)} counts as zero`],
    ['σ_min', `from ${fmt(m.sigmaMin.min)} to ${fmt(m.sigmaMin.max)} over the grid`],
    ['generic kernel', `${m.genericKernel}${m.genericKernel > 0 ? ` (dim ker Φ ≥ ${m.genericKernel} at every phase: a flat band)` : ''}`],
  ];
  if (m.detection && m.genericKernel > 0) rows.push([`σ_${m.detection.index}`, `from ${fmt(m.detection.min)} to ${fmt(m.detection.max)} over the grid (it vanishes on the zero set)`]);
  const nL = zs.lines.length;
  const nP = t.zeroPoints.length;
  const nC = t.zeroCurves.length;
  const nN = t.nearZeros.length;
  rows.push([
    'zero set',
    m.detection === null
      ? 'the whole torus (Φ has no rank at all)'
      : `${nL} line${nL === 1 ? '' : 's'}, ${nP} isolated point${nP === 1 ? '' : 's'}${nC ? `, ${nC} curve${nC === 1 ? '' : 's'}` : ''}${m.genericKernel > 0 ? ` (where dim ker > ${m.genericKernel})` : ''}${nN ? `; ${nN} near-zero${nN === 1 ? '' : 's'} (below the tolerance, charge 0, not zeros)` : ''}`,
  ]);
  let kmax = -1;
  let where = '';
  for (let i = 0; i < m.kernel.length; i++)
    if (m.kernel[i] > kmax) {
      kmax = m.kernel[i];
      where = `θ = (${fmt((i % m.grid) / m.grid, 6)}, ${fmt(Math.floor(i / m.grid) / m.grid, 6)})`;
    }
  for (const z of zs.points)
    if (z.kernel > kmax) {
      kmax = z.kernel;
      where = pointText(z);
    }
  if (kmax >= 0) rows.splice(rows.length - 1, 0, ['largest kernel', `${kmax}, first seen at ${where}`]);
  const detail: [string, string][] = [
    ...zs.lines.map((L): [string, string] => [`  line ${lineText(L)}`, `dim ker ${L.kernel}`]),
    ...t.zeroPoints.map((z): [string, string] => [`  point ${pointText(z)}`, `dim ker ${z.dimKer}, charge ${z.charge ?? 'undefined'}`]),
    ...t.zeroCurves.map((c): [string, string] => [`  curve of ${c.points.length} points from ${pointText(c.points[0])}`, `dim ker ${c.dimKer}`]),
    ...t.nearZeros.map((z): [string, string] => [`  near-zero ${pointText(z)}`, `σ = ${fmt(z.sigma)}`]),
  ];
  rows.push(['almost-periodic rigidity', verdictText(v)]);
  return (
    `shimmy spectrum: ${title}\n` +
    `  Bloch phases θ = (θ1, θ2) in turns on a ${m.grid}×${m.grid} grid, z = exp(2πiθ); lines are mod 1\n\n` +
    table([...rows, ...detail]) +
    `\n${CAUTION}\n`
  );
}

function csv(spec: string, m: PhaseMap): string {
  const g = m.grid;
  const out: string[] = [
    `# shimmy spectrum ${safeText(spec)}: grid ${g}x${g}, relative tolerance ${m.tolerance.relative} (absolute ${m.tolerance.absolute}). ${CAUTION_SHORT}`,
    'theta1,theta2,sigma1,sigma2,sigma3,sigmaMax,kernel',
  ];
  const cell = (k: number, i: number) => (k < m.smallest.length ? String(m.smallest[k][i]) : '');
  for (let i2 = 0; i2 < g; i2++)
    for (let i1 = 0; i1 < g; i1++) {
      const i = i2 * g + i1;
      out.push([String(i1 / g), String(i2 / g), cell(0, i), cell(1, i), cell(2, i), String(m.largest[i]), String(m.kernel[i])].join(','));
    }
  return out.join('\n') + '\n';
}

function json(spec: string, name: string | undefined, m: PhaseMap, t: ZeroTopology, v: AlmostPeriodicVerdict): string {
  const arr = (k: number) => (k < m.smallest.length ? Array.from(m.smallest[k]) : null);
  return (
    JSON.stringify(
      {
        schemaVersion: 'shimmy.spectrum/1', // schema/spectrum.schema.json
        framework: spec,
        name: name ?? null,
        grid: m.grid,
        layout: 'arrays are indexed i2*grid + i1 with theta1 = i1/grid and theta2 = i2/grid (turns)',
        dof: m.dof,
        bars: m.bars,
        tolerance: m.tolerance,
        sigmaMax: m.sigmaMax,
        genericKernel: m.genericKernel,
        sigmaMin: m.sigmaMin,
        arrays: { sigma1: arr(0), sigma2: arr(1), sigma3: arr(2), sigmaMax: Array.from(m.largest), kernel: Array.from(m.kernel) },
        zeroSet: m.zeroSet,
        zeroPoints: t.zeroPoints,
        zeroLines: t.zeroLines,
        zeroCurves: t.zeroCurves,
        nearZeros: t.nearZeros,
        almostPeriodic: v,
        caution: CAUTION,
      },
      null,
      2,
    ) + '\n'
  );
}

export const spectrumCommand: Command = {
  name: 'spectrum',
  summary: 'Map the unit-cell symbol over the Bloch-phase torus: smallest singular values, kernel dimension and the zero set (lines and points).',
  usage: `shimmy spectrum FRAMEWORK [--grid ${DEFAULT_GRID}] [--tol 1e-9] [--csv | --json]`,
  flags: [
    { name: '--grid', value: 'N', help: `phases per axis: θ1, θ2 = 0, 1/N, …, (N−1)/N turns (2 to ${MAX_GRID})`, default: String(DEFAULT_GRID) },
    { name: '--tol', value: 'T', help: 'relative rank tolerance: σ counts as zero when σ ≤ T·σ_max (σ_max over the grid)', default: '1e-9' },
    { name: '--csv', help: 'print one row per grid point: theta1,theta2,sigma1,sigma2,sigma3,sigmaMax,kernel' },
    { name: '--json', help: 'print one JSON object: grid, tolerance, the arrays and the zero set' },
    { name: '--help', help: 'show this help' },
  ],
  maxPositional: 1,
  details: [
    'Φ(z) is the rigidity matrix of one unit cell with Bloch phases z = (exp 2πiθ1, exp 2πiθ2): a flex of',
    'the infinite framework with u(cell + c) = z^c·u(cell) is a kernel vector of Φ(z). sigma1 ≤ sigma2 ≤ sigma3 are',
    'its smallest singular values (exact zeros first when the cell has fewer bars than 2·joints); sigma3 is',
    'blank in --csv (null in --json) for a one-joint cell. The zero set is where dim ker Φ exceeds its',
    'generic value; grid rows and columns are searched between grid points, so lines off the grid are found.',
    'CSV lines starting with # are comments.',
    'The summary and --json also give the almost-periodic rigidity verdict (Badri, Kitson & Power 2014): rigid',
    'exactly when the only flexes at θ = 0 are the two translations and Φ has no other zero on the torus. It is',
    'proved by bounds (first order near θ = 0, a Lipschitz bound elsewhere), not read off the grid.',
    '',
    ...FRAMEWORK_HELP,
  ],
  run(args, io) {
    const spec = frameworkArg(args, 'spectrum');
    const gridText = args.flags.get('--grid') as string | undefined;
    const tolText = args.flags.get('--tol') as string | undefined;
    if (args.flags.has('--csv') && args.flags.has('--json')) {
      throw new InputError('the output format is ambiguous:', [{ where: '--csv', what: '--csv and --json cannot be combined', fix: 'give one of --csv or --json (or neither, for the summary)' }]);
    }
    const grid = gridText === undefined ? DEFAULT_GRID : parseNumberFlag(gridText, '--grid', (v) => Number.isInteger(v) && v >= 2 && v <= MAX_GRID, `a whole number from 2 to ${MAX_GRID}, e.g. 64`);
    const tolerance = tolText === undefined ? 1e-9 : parseTolerance(tolText);
    const framework = loadFramework(spec, io.readText);
    const m = phaseMap(framework, { grid, tolerance });
    if (args.flags.has('--csv')) io.out(csv(spec, m));
    else {
      const verdict = almostPeriodicVerdict(framework, { tolerance });
      if (args.flags.has('--json')) io.out(safeJson(json(spec, framework.name, m, zeroTopology(framework, m), verdict)));
      else io.out(summary(spec, framework.name, m, zeroTopology(framework, m), verdict));
    }
    return 0;
  },
};
