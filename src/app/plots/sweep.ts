/**
 * The size sweep as a figure and a table: the sizes text of the app, the plot of each count
 * against N with its fitted a2·N² + a1·N + a0 curve (the sweep's polynomialFits), and the CSV.
 */
import { InputError } from '../../errors.js';
import type { SweepQuantity, SweepResult, SweepRow } from '../../flex/sweep.js';
import type { MarkerShape } from './legend.js';
import { linePlotDocument, type LinePlot, type LinePlotSpec, type PlotSeries } from './line-plot.js';
import { tickLabel } from './axis.js';

/** Largest supercell a sweep in the browser accepts (cells); the CLI has no such limit. */
export const SWEEP_MAX_CELLS = 2500;
export const SWEEP_MAX_SIZES = 40;

export const SWEEP_SIZES_HELP =
  'write sizes separated by commas: N (N×N), N1xN2 (one rectangle), A..B or A..B:STEP (squares A×A up to B×B), ' +
  'KxA..B[:STEP] (a strip: N1 = K fixed, N2 from A to B) or A..BxK[:STEP] (N2 = K fixed), e.g. 3..6 or 4x2,6x3,8x4 or 3x4..10:2';

/** The app's sizes text as a list of [N1, N2]; an InputError names what is wrong and how to write it. */
export function parseSweepSizes(text: string): [number, number][] {
  const bad = (what: string): never => {
    throw new InputError('The sweep sizes cannot be used:', [{ where: 'sizes', what, fix: SWEEP_SIZES_HELP }]);
  };
  const whole = (t: string, part: string): number => {
    if (!/^\d+$/.test(t)) bad(`"${t}" in "${part}" is not a whole number of cells`);
    const n = Number(t);
    if (n < 1) bad(`"${part}" has a side of 0 cells; every side needs at least 1`);
    return n;
  };
  const range = (t: string, step: number, part: string): number[] => {
    const m = /^(\d+)\.\.(\d+)$/.exec(t);
    if (!m) return [whole(t, part)];
    const [a, b] = [whole(m[1], part), whole(m[2], part)];
    if (b < a) bad(`"${part}" runs backwards; write the smaller size first`);
    const out: number[] = [];
    for (let n = a; n <= b; n += step) out.push(n);
    return out;
  };
  if (!text.trim()) bad('no size was given');
  const sizes: [number, number][] = [];
  for (const raw of text.split(',')) {
    const part = raw.trim().replace(/\s+/g, '');
    if (!part) bad('there is an empty entry between two commas');
    const [body, stepText, extra] = part.split(':');
    if (extra !== undefined) bad(`"${part}" has more than one ":STEP"`);
    const step = stepText === undefined ? 1 : whole(stepText, part);
    if (stepText !== undefined && !part.includes('..')) bad(`"${part}" has a step but no range A..B`);
    const sides = body.split(/[x×X*]/);
    if (sides.length > 2) bad(`"${part}" has more than two sides`);
    const n1 = range(sides[0], step, part);
    const n2 = sides.length === 2 ? range(sides[1], step, part) : null;
    if (n2 === null) n1.forEach((n) => sizes.push([n, n]));
    else if (n1.length > 1 && n2.length > 1) bad(`"${part}" gives a range on both sides; vary one side (KxA..B) or list the rectangles (4x2,6x3)`);
    else for (const a of n1) for (const b of n2) sizes.push([a, b]);
  }
  // a size given twice runs once
  const unique: [number, number][] = [];
  for (const [a, b] of sizes) if (!unique.some(([c, d]) => c === a && d === b)) unique.push([a, b]);
  if (unique.length > SWEEP_MAX_SIZES) bad(`${unique.length} sizes are more than the ${SWEEP_MAX_SIZES} a sweep in the browser runs; use a step (A..B:2) or the command line (shimmy sweep)`);
  const big = unique.find(([a, b]) => a * b > SWEEP_MAX_CELLS);
  if (big) bad(`${big[0]}×${big[1]} is more than the ${SWEEP_MAX_CELLS} cells a sweep in the browser takes; use smaller sizes or the command line (shimmy sweep)`);
  return unique;
}

/** N of a row under the sweep's rule (the side that varies, or √(N1·N2)). */
export function linearSizeOf(row: { N1: number; N2: number }, rule: SweepResult['linearSize']): number {
  return rule === 'N1' ? row.N1 : rule === 'N2' ? row.N2 : Math.sqrt(row.N1 * row.N2);
}

/** The plotted quantities: the total and each class, with a colour and a marker shape of their own. */
export const SWEEP_SERIES: readonly { key: SweepQuantity; name: string; colour: string; marker: MarkerShape }[] = [
  { key: 'flexes', name: 'all flexes', colour: '#2b2f35', marker: 'circle' },
  { key: 'local', name: 'local', colour: '#b4531c', marker: 'square' },
  { key: 'line', name: 'line', colour: '#2f6f77', marker: 'triangle' },
  { key: 'decaying', name: 'decaying', colour: '#7a4a9c', marker: 'diamond' },
  { key: 'bulk', name: 'bulk', colour: '#5d7f2a', marker: 'cross' },
];

/** a2·N² + a1·N + a0 with decimals (3 significant digits), zero terms left out. */
export function decimalFormula(a2: number, a1: number, a0: number): string {
  const parts: string[] = [];
  const tidy = (v: number) => tickLabel(Number(Math.abs(v).toPrecision(3))).replace('−', '');
  for (const [v, power] of [[a2, 'N²'], [a1, 'N'], [a0, '']] as [number, string][]) {
    if (Math.abs(v) < 1e-9) continue;
    const mag = tidy(v);
    const coef = power && mag === '1' ? '' : mag;
    parts.push(parts.length === 0 ? `${v < 0 ? '−' : ''}${coef}${power}` : `${v < 0 ? '−' : '+'} ${coef}${power}`);
  }
  return parts.length ? parts.join(' ') : '0';
}

/** The fitted curve sampled over [lo, hi] (64 steps), or null without a fit. */
export function fitCurve(fit: SweepResult['polynomialFits'][SweepQuantity], lo: number, hi: number): [number, number][] | null {
  const { a2, a1, a0 } = fit;
  if (a2 === null || a1 === null || a0 === null) return null;
  const out: [number, number][] = [];
  for (let k = 0; k <= 64; k++) {
    const N = lo + ((hi - lo) * k) / 64;
    out.push([N, a2 * N * N + a1 * N + a0]);
  }
  return out;
}

export interface SweepPlotOptions {
  log: boolean;
  framework: string;
  width?: number;
  height?: number;
  idPrefix?: string;
}

export function sweepPlotSpec(r: SweepResult, o: SweepPlotOptions): LinePlotSpec {
  const Ns = r.rows.map((row) => linearSizeOf(row, r.linearSize));
  const lo = Math.min(...Ns);
  const hi = Math.max(...Ns);
  const series: PlotSeries[] = SWEEP_SERIES.map((s) => {
    const points = r.rows.map((row, i) => [Ns[i], row[s.key]] as [number, number]);
    const fit = r.polynomialFits[s.key];
    const curve = fitCurve(fit, lo, hi);
    const allZero = points.every((p) => p[1] === 0);
    let label: string;
    if (fit.exact) label = `${s.name}: ${fit.exact.formula}${fit.freedom === 0 ? ' (3 sizes)' : ''}`;
    else if (curve) label = `${s.name}: ${decimalFormula(fit.a2!, fit.a1!, fit.a0!)} (fit)`;
    else label = `${s.name} (joined; a fit needs 3 sizes)`;
    if (allZero && o.log) label += ', all 0';
    const sorted = [...points].sort((a, b) => a[0] - b[0]);
    return { key: s.key, label, colour: s.colour, marker: s.marker, points, curves: [curve ?? sorted], dashed: !curve };
  });
  const nText = r.linearSize === '√(N1·N2)' ? 'N = √(N1·N2) (cells)' : `N = ${r.linearSize} (cells)`;
  return {
    width: o.width ?? 720,
    height: o.height ?? 480,
    title: `Flex counts against N: ${o.framework}`,
    subtitle: `boundary ${r.boundary} · curves: least squares a2·N² + a1·N + a0`,
    x: { label: nText, kind: o.log ? 'log' : 'linear' },
    y: { label: 'number of flexes', kind: o.log ? 'log' : 'linear' },
    series,
    legend: true,
    idPrefix: o.idPrefix ?? 'sweep',
    emptyNote: 'no positive counts to show on log axes',
  };
}

/** The sweep figure as an SVG document (for the page or for a file). */
export function sweepFigure(r: SweepResult, o: SweepPlotOptions & { background: string | null; prolog: boolean; attrs?: Record<string, string> }): { svg: string; plot: LinePlot } {
  return linePlotDocument(sweepPlotSpec(r, o), {
    background: o.background,
    prolog: o.prolog,
    attrs: o.attrs,
    description: `Size sweep made by shimmy: flex counts per class at ${r.rows.map((row) => `${row.N1}×${row.N2}`).join(', ')} cells, boundary ${r.boundary}.`,
  });
}

const CSV_COLUMNS: (keyof SweepRow | 'N')[] = ['N1', 'N2', 'N', 'joints', 'bars', 'flexes', 'trivial', 'selfStresses', 'local', 'line', 'decaying', 'bulk', 'seconds'];

/** One line of a CSV comment: no line breaks inside. */
const oneLine = (s: string) => s.replace(/[\r\n]+/g, ' ');

/**
 * The sweep as CSV: '#' comment lines (framework, boundary, N and each fit), then a header and
 * one row per size. Fits: least-squares coefficients, residual and the exact formula or "none".
 */
export function sweepCsv(r: SweepResult, framework: string): string {
  const lines = [`# shimmy size sweep: ${oneLine(framework)}; boundary ${oneLine(r.boundary)}; N = ${r.linearSize}`];
  for (const s of SWEEP_SERIES) {
    const f = r.polynomialFits[s.key];
    lines.push(
      f.a2 === null
        ? `# fit ${s.key}: none (needs 3 distinct sizes)`
        : `# fit ${s.key}: a2=${f.a2}, a1=${f.a1}, a0=${f.a0}, residual=${f.residual}, points=${f.points}, exact=${f.exact ? f.exact.formula : 'none'}`,
    );
  }
  lines.push(CSV_COLUMNS.join(','));
  for (const row of r.rows) lines.push(CSV_COLUMNS.map((k) => (k === 'N' ? String(linearSizeOf(row, r.linearSize)) : String(row[k]))).join(','));
  return lines.join('\n') + '\n';
}
