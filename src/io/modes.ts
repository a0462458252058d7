/**
 * The mode-data file: one format for the flexes of one supercell run, written by
 * `shimmy export-modes` (JSON or CSV) and by the app's "Mode data (JSON)" export, and read back
 * by `parseModesJson`.
 *
 * Pure core: no file system, no DOM, no `process`. The shells turn their run into a `ModeData`
 * (`modeDataOfRun` from a Supercell, counts and classification; `modeData` from plain arrays)
 * and write it with `modesToJson` / `modesToCsv`.
 *
 * Numbers are written as the shortest decimal that reads back as the same double, −0 as `-0`,
 * so a file read back gives every number bit for bit. Non-finite numbers are never written.
 */
import { CAUTION } from '../caution.js';
import { InputError, type Problem } from '../errors.js';
import { FLEX_CLASSES, type Anchor, type Classification, type FlexClass } from '../flex/classes.js';
import type { FlexCounts } from '../flex/spaces.js';
import type { SolveStatus } from '../flex/solver.js';
import type { Framework } from '../framework/types.js';
import { validateFramework } from '../framework/validate.js';
import { formatBoundary } from '../supercell/boundary.js';
import { MAX_CELLS_PER_AXIS, type Supercell } from '../supercell/supercell.js';
import type { StressClassification } from '../stress/classify/classify.js';
import { axialForces, type MacroStress } from '../stress/classify/macroscopic.js';

export const MODE_DATA_FORMAT = 'shimmy mode data';
/** Version 1 was the app's earlier export; version 2 is the format shared by CLI and app. */
export const MODE_DATA_VERSION = 2;
/** Names schema/modes.schema.json; optional on reading (files written before it lack it). */
export const MODE_DATA_SCHEMA = 'shimmy.modes/2';

/** The CSV columns: one row per mode and joint. */
export const MODE_CSV_COLUMNS = ['mode', 'class', 'joint', 'cell_i', 'cell_j', 'site', 'x', 'y', 'ux_re', 'ux_im', 'uy_re', 'uy_im'] as const;

/** Plain-text conventions carried in every JSON file (so the file explains itself). */
export const MODE_DATA_CONVENTIONS: Readonly<Record<string, string>> = {
  joints: 'joint k of site s in cell (i, j) is k = (j·N1 + i)·S + s, S = unit-cell joints; x, y are Cartesian positions in framework units',
  velocity:
    'flexes[].velocity.re and .im hold 2 entries per joint (x then y), joints in the order of "joints"; im is null when every imaginary part is 0; ' +
    'each vector has unit 2-norm; the motion is p + ε·Re(e^{iφ} u)',
  bars: 'one rigidity-matrix row per bar; an end of −1 is fixed ground; vector is the unwrapped bar vector; phase (re, im) multiplies the to-end velocity; wraps counts crossings of twisted axes',
  tension: 'selfStresses[].tension: one tension per bar row, positive = tension (the overall sign of a basis vector is arbitrary); null when the basis was not computed',
  axialForce:
    'selfStresses[].axialForce (when written): the bar forces t_b = w_b·|p_b| of the same vector w = tension (R’s rows are p·(u_to − u_from), so Rᴴw = 0 balances the forces w_b·p_b); ' +
    'class and metrics as for flexes, counted over bars (stressClassification); macroscopicStress (periodic only): Σ_b w_b p_b⊗p_b / (N1·N2)',
  numbers: 'every number is the shortest decimal that reads back as the same double (−0 written as -0)',
};

// ---------------------------------------------------------------------------------------------
// The document

export interface ModeJoint {
  joint: number;
  cell_i: number;
  cell_j: number;
  /** Unit-cell joint id. */
  site: string;
  x: number;
  y: number;
}

export interface ModeBar {
  /** Joint index of the from end, or −1 for a fixed (grounded) end. */
  from: number;
  to: number;
  vector: [number, number];
  phase: [number, number];
  wraps: [number, number];
}

/** A complex vector; im is null when every imaginary part is 0. */
export interface ComplexData {
  re: Float64Array;
  im: Float64Array | null;
}

export interface ModeFlex {
  mode: number;
  /** null when the flexes were not classified (the solver's orthonormal basis). */
  class: FlexClass | null;
  participation: number;
  support?: number;
  extents?: [number, number];
  direction?: [number, number];
  anchor?: Anchor;
  decayLength?: number;
  region?: string;
  fitQuality?: number;
  headWeight?: number;
  /** A bulk flex that is an affine field (rigid motion, homogeneous mechanism or strain mode). */
  affine?: boolean;
  /** 2 entries per joint (x, y). */
  velocity: ComplexData;
}

export interface ModeStress {
  index: number;
  /** The self-stress class (local, line, decaying, bulk) when the self-stresses were classified. */
  class?: FlexClass;
  participation?: number;
  /** Bars carrying the vector's weight. */
  support?: number;
  extents?: [number, number];
  direction?: [number, number];
  anchor?: Anchor;
  decayLength?: number;
  region?: string;
  fitQuality?: number;
  headWeight?: number;
  /** Periodic supercells: the macroscopic stress per cell (src/stress/classify/macroscopic.ts). */
  macroscopicStress?: MacroStress;
  /** One entry per bar row: the self-stress vector w of Rᴴ (unit 2-norm). */
  tension: ComplexData;
  /** One entry per bar row: the axial force w_b·|p_b| (framework units). */
  axialForce?: ComplexData;
}

/** The split of the self-stresses into classes (src/stress/classify/). */
export interface ModeStressClassification {
  counts: Record<FlexClass, number>;
  thresholds: Record<string, number | string>;
  shortStripStresses: number;
  warnings: string[];
  /** Periodic supercells: the macroscopic stress map on the self-stresses; else null. */
  macroscopic: StressClassification['macroscopic'];
}

export interface ModeClassification {
  counts: Record<FlexClass, number>;
  thresholds: Record<string, number | string>;
  shortStripFlexes: number;
  warnings: string[];
}

export interface ModeData {
  format: typeof MODE_DATA_FORMAT;
  version: typeof MODE_DATA_VERSION;
  schemaVersion?: typeof MODE_DATA_SCHEMA;
  caution: string;
  framework: {
    /** How the framework was given: a gallery spec, a file name or path, or null. */
    spec: string | null;
    name: string | null;
    /** The unit cell itself, so the file stands on its own. */
    unitCell: Framework;
  };
  cells: [number, number];
  /** Canonical boundary text (the `--bc` grammar). */
  boundary: string;
  /** Relative rank tolerance (× σ_max); counts.tolerance has the absolute one too. */
  tolerance: number;
  counts: FlexCounts;
  /** null when the flexes were not classified. */
  classification: ModeClassification | null;
  classificationNote?: string;
  conventions: Record<string, string>;
  joints: ModeJoint[];
  bars: ModeBar[];
  flexes: ModeFlex[];
  /** null when the self-stress basis was not computed (selfStressNote says why). */
  selfStresses: ModeStress[] | null;
  selfStressNote?: string;
  /** Present when the self-stresses were classified (selfStresses then carry their class). */
  stressClassification?: ModeStressClassification;
}

// ---------------------------------------------------------------------------------------------
// Building a document

/** The joint layout of a supercell: a Supercell and the worker's GeometryData both fit. */
export interface JointLayout {
  cells: readonly number[];
  /** Joints per unit cell. */
  sites: number;
  jointCount: number;
  /** 2 per joint. */
  positions: ArrayLike<number>;
  /** Cell (i, j) of each joint, 2 per joint. */
  jointCells: ArrayLike<number>;
}

export interface BarInput {
  a: number;
  b: number;
  vector: readonly number[];
  phase: readonly number[];
  wraps: readonly number[];
}

export interface ComplexInput {
  re: ArrayLike<number>;
  /** null (or all zero) for a real vector. */
  im: ArrayLike<number> | null;
}

export interface ModeInput extends ComplexInput {
  class: FlexClass | null;
  participation: number;
  support?: number;
  extents?: readonly number[];
  direction?: readonly number[];
  anchor?: Anchor;
  decayLength?: number;
  region?: string;
  fitQuality?: number;
  headWeight?: number;
  affine?: boolean;
}

export interface ClassificationInput {
  counts: Record<FlexClass, number>;
  thresholds: Record<string, number | string>;
  shortStripFlexes?: number;
  warnings?: string[];
}

/** A self-stress to write: the vector w (one entry per bar row) and, when classified, its class and metrics. */
export interface StressInput extends ComplexInput {
  class?: FlexClass;
  participation?: number;
  support?: number;
  extents?: readonly number[];
  direction?: readonly number[];
  anchor?: Anchor;
  decayLength?: number;
  region?: string;
  fitQuality?: number;
  headWeight?: number;
  macroscopicStress?: MacroStress;
  /** The axial forces w_b·|p_b|. */
  axialForce?: ComplexInput;
}

/** Everything a mode-data file is made from, as plain data. */
export interface ModeDataInput {
  spec: string | null;
  framework: Framework;
  layout: JointLayout;
  bars: readonly BarInput[];
  /** Canonical boundary text. */
  boundary: string;
  counts: FlexCounts;
  classification: ClassificationInput | null;
  classificationNote?: string;
  /** In the order to write them (the classifier's order: local, line, decaying, bulk). */
  modes: readonly ModeInput[];
  /** null when not computed. */
  selfStresses: readonly StressInput[] | null;
  selfStressNote?: string;
  stressClassification?: ModeStressClassification;
}

const pair = (v: ArrayLike<number>): [number, number] => [v[0], v[1]];

function complexOf(v: ComplexInput): ComplexData {
  const re = Float64Array.from(v.re);
  if (v.im === null) return { re, im: null };
  for (let i = 0; i < v.im.length; i++) if (v.im[i] !== 0) return { re, im: Float64Array.from(v.im) };
  return { re, im: null };
}

function countsCopy(c: FlexCounts): FlexCounts {
  return {
    joints: c.joints,
    bars: c.bars,
    dof: c.dof,
    flexes: c.flexes,
    trivialFlexes: c.trivialFlexes,
    rigidMotionsTested: [...c.rigidMotionsTested],
    selfStresses: c.selfStresses,
    rank: c.rank,
    tolerance: { relative: c.tolerance.relative, absolute: c.tolerance.absolute },
    sigmaMax: c.sigmaMax,
    gap: { kept: c.gap.kept, dropped: c.gap.dropped, ratio: c.gap.ratio, ambiguous: c.gap.ambiguous },
    ...(c.gapNote !== undefined ? { gapNote: c.gapNote } : {}),
    maxwellCalladine: { lhs: c.maxwellCalladine.lhs, rhs: c.maxwellCalladine.rhs, ok: c.maxwellCalladine.ok },
    real: c.real,
    solver: c.solver,
    solverReason: c.solverReason,
    groundedBars: c.groundedBars,
    droppedBars: c.droppedBars,
    status: { ...c.status, fallback: c.status.fallback ? { ...c.status.fallback } : null, reasons: [...c.status.reasons] },
  };
}

function frameworkCopy(fw: Framework): Framework {
  return {
    ...(fw.name !== undefined ? { name: fw.name } : {}),
    ...(fw.description !== undefined ? { description: fw.description } : {}),
    lattice: [pair(fw.lattice[0]), pair(fw.lattice[1])],
    joints: fw.joints.map((j) => ({ id: j.id, at: pair(j.at) })),
    bars: fw.bars.map((b) => ({ from: b.from, to: b.to, shift: pair(b.shift) })),
  };
}

/** The mode-data document of a run given as plain data. */
export function modeData(input: ModeDataInput): ModeData {
  const L = input.layout;
  const fw = input.framework;
  const c = input.classification;
  return {
    format: MODE_DATA_FORMAT,
    version: MODE_DATA_VERSION,
    schemaVersion: MODE_DATA_SCHEMA,
    caution: CAUTION,
    framework: { spec: input.spec, name: fw.name ?? null, unitCell: frameworkCopy(fw) },
    cells: [L.cells[0], L.cells[1]],
    boundary: input.boundary,
    tolerance: input.counts.tolerance.relative,
    counts: countsCopy(input.counts),
    classification: c
      ? {
          counts: Object.fromEntries(FLEX_CLASSES.map((k) => [k, c.counts[k]])) as Record<FlexClass, number>,
          thresholds: { ...c.thresholds },
          shortStripFlexes: c.shortStripFlexes ?? 0,
          warnings: [...(c.warnings ?? [])],
        }
      : null,
    ...(input.classificationNote !== undefined ? { classificationNote: input.classificationNote } : {}),
    conventions: { ...MODE_DATA_CONVENTIONS },
    joints: Array.from({ length: L.jointCount }, (_, k) => ({
      joint: k,
      cell_i: L.jointCells[2 * k],
      cell_j: L.jointCells[2 * k + 1],
      site: fw.joints[k % L.sites].id,
      x: L.positions[2 * k],
      y: L.positions[2 * k + 1],
    })),
    bars: input.bars.map((b) => ({ from: b.a, to: b.b, vector: pair(b.vector), phase: pair(b.phase), wraps: pair(b.wraps) })),
    // Each mode in the written order, optional metrics only when present.
    flexes: input.modes.map(
      (m, mode): ModeFlex => ({
        mode,
        class: m.class,
        participation: m.participation,
        ...(m.support !== undefined ? { support: m.support } : {}),
        ...(m.extents !== undefined ? { extents: pair(m.extents) } : {}),
        ...(m.direction !== undefined ? { direction: pair(m.direction) } : {}),
        ...(m.anchor !== undefined ? { anchor: { kind: m.anchor.kind, name: m.anchor.name, at: pair(m.anchor.at) } } : {}),
        ...(m.decayLength !== undefined ? { decayLength: m.decayLength } : {}),
        ...(m.region !== undefined ? { region: m.region } : {}),
        ...(m.fitQuality !== undefined ? { fitQuality: m.fitQuality } : {}),
        ...(m.headWeight !== undefined ? { headWeight: m.headWeight } : {}),
        ...(m.affine !== undefined ? { affine: m.affine } : {}),
        velocity: complexOf(m),
      }),
    ),
    selfStresses: input.selfStresses === null ? null : input.selfStresses.map((s, index) => stressOf(s, index)),
    ...(input.selfStressNote !== undefined ? { selfStressNote: input.selfStressNote } : {}),
    ...(input.stressClassification !== undefined ? { stressClassification: stressClassificationCopy(input.stressClassification) } : {}),
  };
}

/** One self-stress entry, optional class and metrics only when present. */
function stressOf(s: StressInput, index: number): ModeStress {
  const ms = s.macroscopicStress;
  return {
    index,
    ...(s.class !== undefined ? { class: s.class } : {}),
    ...(s.participation !== undefined ? { participation: s.participation } : {}),
    ...(s.support !== undefined ? { support: s.support } : {}),
    ...(s.extents !== undefined ? { extents: pair(s.extents) } : {}),
    ...(s.direction !== undefined ? { direction: pair(s.direction) } : {}),
    ...(s.anchor !== undefined ? { anchor: { kind: s.anchor.kind, name: s.anchor.name, at: pair(s.anchor.at) } } : {}),
    ...(s.decayLength !== undefined ? { decayLength: s.decayLength } : {}),
    ...(s.region !== undefined ? { region: s.region } : {}),
    ...(s.fitQuality !== undefined ? { fitQuality: s.fitQuality } : {}),
    ...(s.headWeight !== undefined ? { headWeight: s.headWeight } : {}),
    ...(ms !== undefined ? { macroscopicStress: { xx: ms.xx, xy: ms.xy, yy: ms.yy, trace: ms.trace, traceless: ms.traceless } } : {}),
    tension: complexOf(s),
    ...(s.axialForce !== undefined ? { axialForce: complexOf(s.axialForce) } : {}),
  };
}

function stressClassificationCopy(c: ModeStressClassification): ModeStressClassification {
  return {
    counts: Object.fromEntries(FLEX_CLASSES.map((k) => [k, c.counts[k]])) as Record<FlexClass, number>,
    thresholds: { ...c.thresholds },
    shortStripStresses: c.shortStripStresses,
    warnings: [...c.warnings],
    macroscopic: c.macroscopic === null ? null : { ...c.macroscopic },
  };
}

/** The mode-data document of a classified run: the supercell, its counts and classification. */
export function modeDataOfRun(run: {
  spec: string | null;
  supercell: Supercell;
  counts: FlexCounts;
  classification: Classification;
  /** The self-stress basis, when computed (default: not computed). */
  selfStresses?: readonly ComplexInput[] | null;
  selfStressNote?: string;
  /** The classified self-stresses: written as selfStresses (class, metrics, axial forces) in place of `selfStresses`. */
  stressClassification?: StressClassification;
}): ModeData {
  const sc = run.supercell;
  const st = run.stressClassification;
  const stresses: readonly StressInput[] | null = st
    ? st.modes.map((m) => {
        const { vector, affine: _a, ...metrics } = m;
        const force = axialForces(sc, vector);
        return { ...metrics, re: vector.re, im: sc.real ? null : vector.im, axialForce: { re: force.re, im: sc.real ? null : force.im } };
      })
    : (run.selfStresses ?? null);
  return modeData({
    spec: run.spec,
    framework: sc.framework,
    layout: sc,
    bars: sc.bars,
    boundary: formatBoundary(sc.boundary),
    counts: run.counts,
    classification: run.classification,
    modes: run.classification.modes.map((m) => ({ ...m, re: m.vector.re, im: sc.real ? null : m.vector.im })),
    selfStresses: stresses,
    ...(run.selfStressNote !== undefined ? { selfStressNote: run.selfStressNote } : {}),
    ...(st
      ? {
          stressClassification: { counts: st.counts, thresholds: st.thresholds, shortStripStresses: st.shortStripStresses, warnings: st.warnings ?? [], macroscopic: st.macroscopic },
        }
      : {}),
  });
}

// ---------------------------------------------------------------------------------------------
// Writing

/** Shortest round-trip decimal of a finite double; −0 as "-0". */
function numText(x: number, where: string): string {
  if (!Number.isFinite(x)) throw new Error(`mode data: ${where} is ${x}; only finite numbers can be written`);
  return Object.is(x, -0) ? '-0' : String(x);
}

function isPrimitive(v: unknown): boolean {
  return v === null || typeof v === 'number' || typeof v === 'string' || typeof v === 'boolean';
}

function isFlatList(v: unknown): boolean {
  return v instanceof Float64Array || (Array.isArray(v) && v.every(isPrimitive));
}

function entries(v: object): [string, unknown][] {
  return Object.entries(v).filter(([, x]) => x !== undefined);
}

/** An object goes on one line when it holds only plain values (no long texts) and lists of them. */
function isFlat(v: object): boolean {
  return entries(v).every(([, x]) => (isPrimitive(x) && !(typeof x === 'string' && x.length > 40)) || isFlatList(x));
}

function jsonText(v: unknown, where: string, indent: string): string {
  if (v === null) return 'null';
  if (typeof v === 'number') return numText(v, where);
  if (typeof v === 'string') return JSON.stringify(v);
  if (typeof v === 'boolean') return v ? 'true' : 'false';
  if (v instanceof Float64Array || Array.isArray(v)) {
    const items = Array.from(v as ArrayLike<unknown>, (x, i) => jsonText(x, `${where}[${i}]`, indent + ' '));
    if (items.length === 0) return '[]';
    if (isFlatList(v)) return `[${items.join(', ')}]`;
    return `[\n${items.map((t) => indent + ' ' + t).join(',\n')}\n${indent}]`;
  }
  if (typeof v !== 'object' || v === undefined) throw new Error(`mode data: ${where} is ${typeof v}; only JSON values can be written`);
  const fields = entries(v);
  const parts = fields.map(([k, x]) => `${JSON.stringify(k)}: ${jsonText(x, where ? `${where}.${k}` : k, indent + ' ')}`);
  if (parts.length === 0) return '{}';
  if (isFlat(v)) return `{${parts.join(', ')}}`;
  return `{\n${parts.map((t) => indent + ' ' + t).join(',\n')}\n${indent}}`;
}

/** The JSON text of a mode-data document (one trailing newline). */
export function modesToJson(data: ModeData): string {
  return jsonText(data, '', '') + '\n';
}

function csvField(s: string): string {
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

/** The CSV text: a header row (MODE_CSV_COLUMNS), then one row per mode and joint. */
export function modesToCsv(data: ModeData): string {
  const out: string[] = [MODE_CSV_COLUMNS.join(',')];
  const sites = data.joints.map((j) => csvField(j.site));
  for (const m of data.flexes) {
    const { re, im } = m.velocity;
    const w = `flexes[${m.mode}].velocity`;
    const imText = (i: number) => (im ? numText(im[i], `${w}.im[${i}]`) : '0');
    data.joints.forEach((j, k) => {
      out.push(
        [
          String(m.mode),
          m.class ?? '',
          String(k),
          String(j.cell_i),
          String(j.cell_j),
          sites[k],
          numText(j.x, `joints[${k}].x`),
          numText(j.y, `joints[${k}].y`),
          numText(re[2 * k], `${w}.re[${2 * k}]`),
          imText(2 * k),
          numText(re[2 * k + 1], `${w}.re[${2 * k + 1}]`),
          imText(2 * k + 1),
        ].join(','),
      );
    });
  }
  return out.join('\n') + '\n';
}

// ---------------------------------------------------------------------------------------------
// Reading

const TOP = '(top level)';
const MAX_PROBLEMS = 20;
const REEXPORT = 'export the file again with shimmy export-modes --json or the app’s Mode data (JSON) button';

function describe(v: unknown): string {
  if (v === null) return 'null';
  if (Array.isArray(v)) return `a list of ${v.length} entries`;
  if (typeof v === 'string') return `the text ${JSON.stringify(v.length > 40 ? v.slice(0, 40) + '…' : v)}`;
  if (typeof v === 'number' || typeof v === 'boolean') return `${typeof v} ${v}`;
  return `an ${typeof v}`;
}

const at = (path: string, key: string | number) => (typeof key === 'number' ? `${path}[${key}]` : path ? `${path}.${key}` : key);

class Reader {
  problems: Problem[] = [];
  more = 0;
  report(where: string, what: string, fix: string): undefined {
    if (this.problems.length < MAX_PROBLEMS) this.problems.push({ where: where || TOP, what, fix });
    else this.more++;
    return undefined;
  }
  expected(where: string, v: unknown, what: string, fix: string): undefined {
    // A missing field was reported once by record(); do not report it again as a wrong value.
    if (v === undefined) return this.problems.some((p) => p.where === where) ? undefined : this.report(where, 'the required field is missing', `add it (or ${REEXPORT})`);
    return this.report(where, `expected ${what}, found ${describe(v)}`, fix);
  }
  num(v: unknown, p: string): number | undefined {
    return typeof v === 'number' && Number.isFinite(v) ? v : this.expected(p, v, 'a finite number', 'write a number such as 0.5');
  }
  /** A whole number, at least `min` when given. */
  int(v: unknown, p: string, min: number | null = 0): number | undefined {
    if (typeof v === 'number' && Number.isInteger(v) && (min === null || v >= min)) return v;
    return min === null ? this.expected(p, v, 'a whole number', 'write a whole number such as -1, 0 or 2') : this.expected(p, v, `a whole number of at least ${min}`, `write a whole number ≥ ${min}`);
  }
  str(v: unknown, p: string): string | undefined {
    return typeof v === 'string' ? v : this.expected(p, v, 'a text', 'write a JSON string in double quotes');
  }
  bool(v: unknown, p: string): boolean | undefined {
    return typeof v === 'boolean' ? v : this.expected(p, v, 'true or false', 'write true or false');
  }
  oneOf<T extends string>(v: unknown, p: string, values: readonly T[]): T | undefined {
    return typeof v === 'string' && (values as readonly string[]).includes(v) ? (v as T) : this.expected(p, v, `one of ${values.map((x) => `"${x}"`).join(', ')}`, `write one of ${values.join(', ')}`);
  }
  nullable<T>(v: unknown, p: string, f: (v: unknown, p: string) => T | undefined): T | null | undefined {
    return v === null ? null : f(v, p);
  }
  list<T>(v: unknown, p: string, f: (v: unknown, p: string) => T | undefined): T[] | undefined {
    if (!Array.isArray(v)) return this.expected(p, v, 'a list', 'write a JSON list [ … ]');
    const out: T[] = [];
    let ok = true;
    v.forEach((x, i) => {
      const y = f(x, at(p, i));
      if (y === undefined) ok = false;
      else out.push(y);
    });
    return ok ? out : undefined;
  }
  pair(v: unknown, p: string, f: (v: unknown, p: string) => number | undefined = (x, q) => this.num(x, q)): [number, number] | undefined {
    if (!Array.isArray(v) || v.length !== 2) return this.expected(p, v, 'a list of 2 numbers', 'write [a, b]');
    const a = f(v[0], at(p, 0));
    const b = f(v[1], at(p, 1));
    return a === undefined || b === undefined ? undefined : [a, b];
  }
  numbers(v: unknown, p: string): Float64Array | undefined {
    if (!Array.isArray(v)) return this.expected(p, v, 'a list of numbers', 'write a JSON list of numbers');
    const out = new Float64Array(v.length);
    let ok = true;
    for (let i = 0; i < v.length; i++) {
      const x = v[i];
      if (typeof x === 'number' && Number.isFinite(x)) out[i] = x;
      else ok = this.expected(at(p, i), x, 'a finite number', 'write a number') ?? false;
    }
    return ok ? out : undefined;
  }
  /** An object with any field names. */
  object(v: unknown, p: string): Record<string, unknown> | undefined {
    return typeof v === 'object' && v !== null && !Array.isArray(v) ? (v as Record<string, unknown>) : this.expected(p, v, 'an object { … }', REEXPORT);
  }
  /**
   * The fields of an object: reports a non-object, missing required and unknown fields; returns
   * the object whenever it is one, so that its fields are checked too.
   */
  record(v: unknown, p: string, required: readonly string[], optional: readonly string[] = []): Record<string, unknown> | undefined {
    const o = this.object(v, p);
    if (!o) return undefined;
    for (const k of required) {
      if (!Object.prototype.hasOwnProperty.call(o, k)) this.report(at(p, k), `the required field "${k}" is missing`, `add "${k}" (or ${REEXPORT})`);
    }
    const known = new Set([...required, ...optional]);
    for (const k of Object.keys(o)) {
      if (!known.has(k)) this.report(at(p, k), `"${k}" is not a field here (known: ${[...known].join(', ')})`, `remove "${k}" or correct its spelling`);
    }
    return o;
  }
}

type Fields<T> = { [K in keyof T]: T[K] | undefined };

/** Every field read (none undefined); optional ones may be absent. */
function complete<T extends object>(o: Fields<T>, optional: readonly string[] = []): T | undefined {
  for (const [k, v] of Object.entries(o)) if (v === undefined && !optional.includes(k)) return undefined;
  for (const k of optional) if ((o as Record<string, unknown>)[k] === undefined) delete (o as Record<string, unknown>)[k];
  return o as T;
}

function readSchemaVersion(r: Reader, v: unknown): typeof MODE_DATA_SCHEMA | undefined {
  if (v === MODE_DATA_SCHEMA) return MODE_DATA_SCHEMA;
  return r.report('schemaVersion', `expected "${MODE_DATA_SCHEMA}", found ${describe(v)}`, `remove the field or write "${MODE_DATA_SCHEMA}" (or ${REEXPORT})`);
}

function readComplex(r: Reader, v: unknown, p: string): ComplexData | undefined {
  const o = r.record(v, p, ['re', 'im']);
  if (!o) return undefined;
  return complete<ComplexData>({ re: r.numbers(o.re, at(p, 're')), im: r.nullable(o.im, at(p, 'im'), (x, q) => r.numbers(x, q)) });
}

function readCounts(r: Reader, v: unknown, p: string): FlexCounts | undefined {
  const req = ['joints', 'bars', 'dof', 'flexes', 'trivialFlexes', 'rigidMotionsTested', 'selfStresses', 'rank', 'tolerance', 'sigmaMax', 'gap', 'maxwellCalladine', 'real', 'solver', 'solverReason', 'groundedBars', 'droppedBars'];
  const o = r.record(v, p, req, ['gapNote', 'status']);
  if (!o) return undefined;
  const q = (k: string) => at(p, k);
  const tol = r.record(o.tolerance, q('tolerance'), ['relative', 'absolute']);
  const gap = r.record(o.gap, q('gap'), ['kept', 'dropped', 'ratio', 'ambiguous']);
  const mc = r.record(o.maxwellCalladine, q('maxwellCalladine'), ['lhs', 'rhs', 'ok']);
  const num = (x: unknown, w: string) => r.num(x, w);
  return complete<FlexCounts>(
    {
      joints: r.int(o.joints, q('joints')),
      bars: r.int(o.bars, q('bars')),
      dof: r.int(o.dof, q('dof')),
      flexes: r.int(o.flexes, q('flexes')),
      trivialFlexes: r.int(o.trivialFlexes, q('trivialFlexes')),
      rigidMotionsTested: r.list(o.rigidMotionsTested, q('rigidMotionsTested'), (x, w) => r.oneOf(x, w, ['translation x', 'translation y', 'rotation'] as const)),
      selfStresses: r.int(o.selfStresses, q('selfStresses')),
      rank: r.int(o.rank, q('rank')),
      tolerance: tol && complete({ relative: r.num(tol.relative, at(q('tolerance'), 'relative')), absolute: r.num(tol.absolute, at(q('tolerance'), 'absolute')) }),
      sigmaMax: r.num(o.sigmaMax, q('sigmaMax')),
      gap:
        gap &&
        complete({
          kept: r.nullable(gap.kept, at(q('gap'), 'kept'), num),
          dropped: r.nullable(gap.dropped, at(q('gap'), 'dropped'), num),
          ratio: r.nullable(gap.ratio, at(q('gap'), 'ratio'), num),
          ambiguous: r.bool(gap.ambiguous, at(q('gap'), 'ambiguous')),
        }),
      gapNote: o.gapNote === undefined ? undefined : r.str(o.gapNote, q('gapNote')),
      // flexes − self-stresses = 2·joints − bars is negative when bars outnumber the degrees of freedom
      maxwellCalladine: mc && complete({ lhs: r.int(mc.lhs, at(q('maxwellCalladine'), 'lhs'), null), rhs: r.int(mc.rhs, at(q('maxwellCalladine'), 'rhs'), null), ok: r.bool(mc.ok, at(q('maxwellCalladine'), 'ok')) }),
      real: r.bool(o.real, q('real')),
      solver: r.oneOf(o.solver, q('solver'), ['dense', 'bloch', 'sparse'] as const),
      solverReason: r.str(o.solverReason, q('solverReason')),
      groundedBars: r.int(o.groundedBars, q('groundedBars')),
      droppedBars: r.int(o.droppedBars, q('droppedBars')),
      status: o.status === undefined ? UNRECORDED_STATUS : readStatus(r, o.status, q('status')),
    },
    ['gapNote'],
  );
}

/** Files written before counts carried a status read as uncertified, saying why. */
const UNRECORDED_STATUS: SolveStatus = { certified: false, criterion: 'singular-values', converged: true, fallback: null, reasons: ['this file does not record how the count was decided'], keptSigma: 'measured' };

function readStatus(r: Reader, v: unknown, p: string): SolveStatus | undefined {
  const o = r.record(v, p, ['certified', 'criterion', 'converged', 'fallback', 'reasons'], ['keptSigma']);
  if (!o) return undefined;
  const q = (k: string) => at(p, k);
  const solvers = ['dense', 'bloch', 'sparse'] as const;
  const fallback = r.nullable(o.fallback, q('fallback'), (x, w) => {
    const f = r.record(x, w, ['from', 'to', 'reason']);
    return f ? complete<NonNullable<SolveStatus['fallback']>>({ from: r.oneOf(f.from, at(w, 'from'), solvers), to: r.oneOf(f.to, at(w, 'to'), solvers), reason: r.str(f.reason, at(w, 'reason')) }) : undefined;
  });
  return complete<SolveStatus>({
    certified: r.bool(o.certified, q('certified')),
    criterion: r.oneOf(o.criterion, q('criterion'), ['singular-values', 'inertia-and-residuals'] as const),
    converged: r.bool(o.converged, q('converged')),
    fallback,
    reasons: r.list(o.reasons, q('reasons'), (x, w) => r.str(x, w)),
    keptSigma: o.keptSigma === undefined ? 'measured' : r.oneOf(o.keptSigma, q('keptSigma'), ['measured', 'lower-bound'] as const),
  });
}

function readClassification(r: Reader, v: unknown, p: string): ModeClassification | undefined {
  const o = r.record(v, p, ['counts', 'thresholds', 'shortStripFlexes', 'warnings']);
  if (!o) return undefined;
  const co = r.record(o.counts, at(p, 'counts'), FLEX_CLASSES);
  const counts = co && complete<Record<FlexClass, number>>(Object.fromEntries(FLEX_CLASSES.map((k) => [k, r.int(co[k], at(at(p, 'counts'), k))])) as Fields<Record<FlexClass, number>>);
  // Thresholds: any names, each a number or a text.
  let thresholds: Record<string, number | string> | undefined;
  const to = r.object(o.thresholds, at(p, 'thresholds'));
  if (to) {
    thresholds = {};
    for (const [k, x] of Object.entries(to)) {
      if (typeof x === 'string' || (typeof x === 'number' && Number.isFinite(x))) thresholds[k] = x;
      else r.expected(at(at(p, 'thresholds'), k), x, 'a number or a text', 'write the threshold as a number or a string');
    }
  }
  return complete<ModeClassification>({
    counts,
    thresholds,
    shortStripFlexes: r.int(o.shortStripFlexes, at(p, 'shortStripFlexes')),
    warnings: r.list(o.warnings, at(p, 'warnings'), (x, w) => r.str(x, w)),
  });
}

const FLEX_OPTIONAL = ['support', 'extents', 'direction', 'anchor', 'decayLength', 'region', 'fitQuality', 'headWeight', 'affine'] as const;

function readFlex(r: Reader, v: unknown, p: string): ModeFlex | undefined {
  const o = r.record(v, p, ['mode', 'class', 'participation', 'velocity'], FLEX_OPTIONAL);
  if (!o) return undefined;
  const q = (k: string) => at(p, k);
  const opt = <T>(k: string, f: (x: unknown, w: string) => T | undefined): T | undefined => (o[k] === undefined ? undefined : f(o[k], q(k)));
  const flex: Fields<ModeFlex> = {
    mode: r.int(o.mode, q('mode')),
    class: r.nullable(o.class, q('class'), (x, w) => r.oneOf(x, w, FLEX_CLASSES)),
    participation: r.num(o.participation, q('participation')),
    support: opt('support', (x, w) => r.int(x, w)),
    extents: opt('extents', (x, w) => r.pair(x, w)),
    direction: opt('direction', (x, w) => r.pair(x, w, (y, u) => r.int(y, u, null))),
    anchor: opt('anchor', (x, w) => {
      const a = r.record(x, w, ['kind', 'name', 'at']);
      return a && complete<Anchor>({ kind: r.oneOf(a.kind, at(w, 'kind'), ['side', 'corner', 'point'] as const), name: r.str(a.name, at(w, 'name')), at: r.pair(a.at, at(w, 'at')) });
    }),
    decayLength: opt('decayLength', (x, w) => r.num(x, w)),
    region: opt('region', (x, w) => r.str(x, w)),
    fitQuality: opt('fitQuality', (x, w) => r.num(x, w)),
    headWeight: opt('headWeight', (x, w) => r.num(x, w)),
    affine: opt('affine', (x, w) => r.bool(x, w)),
    velocity: readComplex(r, o.velocity, q('velocity')),
  };
  // (An optional metric present but unreadable has been reported; the whole read then fails.)
  return complete<ModeFlex>(flex, FLEX_OPTIONAL);
}

const STRESS_OPTIONAL = ['class', 'participation', 'support', 'extents', 'direction', 'anchor', 'decayLength', 'region', 'fitQuality', 'headWeight', 'macroscopicStress', 'axialForce'] as const;

function readAnchor(r: Reader, x: unknown, w: string): Anchor | undefined {
  const a = r.record(x, w, ['kind', 'name', 'at']);
  return a && complete<Anchor>({ kind: r.oneOf(a.kind, at(w, 'kind'), ['side', 'corner', 'point'] as const), name: r.str(a.name, at(w, 'name')), at: r.pair(a.at, at(w, 'at')) });
}

function readStress(r: Reader, v: unknown, p: string): ModeStress | undefined {
  const o = r.record(v, p, ['index', 'tension'], STRESS_OPTIONAL);
  if (!o) return undefined;
  const q = (k: string) => at(p, k);
  const opt = <T>(k: string, f: (x: unknown, w: string) => T | undefined): T | undefined => (o[k] === undefined ? undefined : f(o[k], q(k)));
  const stress: Fields<ModeStress> = {
    index: r.int(o.index, q('index')),
    class: opt('class', (x, w) => r.oneOf(x, w, FLEX_CLASSES)),
    participation: opt('participation', (x, w) => r.num(x, w)),
    support: opt('support', (x, w) => r.int(x, w)),
    extents: opt('extents', (x, w) => r.pair(x, w)),
    direction: opt('direction', (x, w) => r.pair(x, w, (y, u) => r.int(y, u, null))),
    anchor: opt('anchor', (x, w) => readAnchor(r, x, w)),
    decayLength: opt('decayLength', (x, w) => r.num(x, w)),
    region: opt('region', (x, w) => r.str(x, w)),
    fitQuality: opt('fitQuality', (x, w) => r.num(x, w)),
    headWeight: opt('headWeight', (x, w) => r.num(x, w)),
    macroscopicStress: opt('macroscopicStress', (x, w) => {
      const ms = r.record(x, w, ['xx', 'xy', 'yy', 'trace', 'traceless']);
      return ms && complete<MacroStress>({ xx: r.num(ms.xx, at(w, 'xx')), xy: r.num(ms.xy, at(w, 'xy')), yy: r.num(ms.yy, at(w, 'yy')), trace: r.num(ms.trace, at(w, 'trace')), traceless: r.bool(ms.traceless, at(w, 'traceless')) });
    }),
    tension: readComplex(r, o.tension, q('tension')),
    axialForce: opt('axialForce', (x, w) => readComplex(r, x, w)),
  };
  return complete<ModeStress>(stress, STRESS_OPTIONAL);
}

function readStressClassification(r: Reader, v: unknown, p: string): ModeStressClassification | undefined {
  const o = r.record(v, p, ['counts', 'thresholds', 'shortStripStresses', 'warnings', 'macroscopic']);
  if (!o) return undefined;
  const co = r.record(o.counts, at(p, 'counts'), FLEX_CLASSES);
  const counts = co && complete<Record<FlexClass, number>>(Object.fromEntries(FLEX_CLASSES.map((k) => [k, r.int(co[k], at(at(p, 'counts'), k))])) as Fields<Record<FlexClass, number>>);
  let thresholds: Record<string, number | string> | undefined;
  const to = r.object(o.thresholds, at(p, 'thresholds'));
  if (to) {
    thresholds = {};
    for (const [k, x] of Object.entries(to)) {
      if (typeof x === 'string' || (typeof x === 'number' && Number.isFinite(x))) thresholds[k] = x;
      else r.expected(at(at(p, 'thresholds'), k), x, 'a number or a text', 'write the threshold as a number or a string');
    }
  }
  const w = at(p, 'macroscopic');
  const macroscopic = r.nullable(o.macroscopic, w, (x) => {
    const m = r.record(x, w, ['cellArea', 'convention', 'rank', 'traceless', 'largestTrace', 'scale']);
    return (
      m &&
      complete<NonNullable<ModeStressClassification['macroscopic']>>({
        cellArea: r.num(m.cellArea, at(w, 'cellArea')),
        convention: r.str(m.convention, at(w, 'convention')),
        rank: r.int(m.rank, at(w, 'rank')),
        traceless: r.bool(m.traceless, at(w, 'traceless')),
        largestTrace: r.num(m.largestTrace, at(w, 'largestTrace')),
        scale: r.num(m.scale, at(w, 'scale')),
      })
    );
  });
  return complete<ModeStressClassification>({
    counts,
    thresholds,
    shortStripStresses: r.int(o.shortStripStresses, at(p, 'shortStripStresses')),
    warnings: r.list(o.warnings, at(p, 'warnings'), (x, q) => r.str(x, q)),
    macroscopic,
  });
}

function checkLength(r: Reader, v: ComplexData, p: string, n: number, what: string): void {
  if (v.re.length !== n) r.report(at(p, 're'), `has ${v.re.length} entries but needs ${n} (${what})`, REEXPORT);
  if (v.im && v.im.length !== n) r.report(at(p, 'im'), `has ${v.im.length} entries but needs ${n} (${what})`, `give ${n} entries, or null for a real vector`);
}

/** Cross-field checks on a structurally valid document. */
function checkConsistency(r: Reader, d: ModeData): void {
  const [N1, N2] = d.cells;
  d.cells.forEach((n, i) => {
    if (n < 1 || n > MAX_CELLS_PER_AXIS) r.report(`cells[${i}]`, `${n} cells is outside 1 to ${MAX_CELLS_PER_AXIS}`, 'write a positive whole number of cells');
  });
  const S = d.framework.unitCell.joints.length;
  const J = N1 * N2 * S;
  if (d.joints.length !== J) r.report('joints', `has ${d.joints.length} entries but ${N1}×${N2} cells of ${S} joints make ${J}`, REEXPORT);
  d.joints.forEach((j, k) => {
    if (j.joint !== k) r.report(`joints[${k}].joint`, `is ${j.joint} but the joints must be listed in order (joint ${k} here)`, `write ${k}`);
    const cell = Math.floor(k / S);
    if (j.cell_i !== cell % N1 || j.cell_j !== Math.floor(cell / N1)) r.report(`joints[${k}]`, `cell (${j.cell_i}, ${j.cell_j}) does not match joint ${k} = (j·N1 + i)·S + s`, `write cell_i ${cell % N1}, cell_j ${Math.floor(cell / N1)}`);
    const site = d.framework.unitCell.joints[k % S]?.id;
    if (site !== undefined && j.site !== site) r.report(`joints[${k}].site`, `is "${j.site}" but joint ${k} is unit-cell joint "${site}"`, `write "${site}"`);
  });
  const c = d.counts;
  if (c.joints !== J) r.report('counts.joints', `is ${c.joints} but the supercell has ${J} joints`, REEXPORT);
  if (c.dof !== 2 * J) r.report('counts.dof', `is ${c.dof} but ${J} joints have ${2 * J} degrees of freedom`, REEXPORT);
  if (c.bars !== d.bars.length) r.report('counts.bars', `is ${c.bars} but "bars" lists ${d.bars.length}`, REEXPORT);
  if (c.tolerance.relative !== d.tolerance) r.report('tolerance', `is ${d.tolerance} but counts.tolerance.relative is ${c.tolerance.relative}`, 'make the two agree');
  d.bars.forEach((b, i) => {
    for (const k of ['from', 'to'] as const) {
      if (b[k] < -1 || b[k] >= J || !Number.isInteger(b[k])) r.report(`bars[${i}].${k}`, `joint ${b[k]} does not exist (0 to ${J - 1}, or −1 for ground)`, REEXPORT);
    }
  });
  if (d.flexes.length !== c.flexes) r.report('flexes', `lists ${d.flexes.length} modes but counts.flexes is ${c.flexes}`, REEXPORT);
  const perClass: Record<string, number> = {};
  d.flexes.forEach((f, i) => {
    const p = `flexes[${i}]`;
    if (f.mode !== i) r.report(`${p}.mode`, `is ${f.mode} but the modes must be numbered in order (${i} here)`, `write ${i}`);
    if ((f.class === null) !== (d.classification === null)) {
      r.report(`${p}.class`, d.classification === null ? `is "${f.class}" but there is no classification` : 'is null but the flexes are classified', d.classification === null ? 'write null' : 'write local, line, decaying or bulk');
    }
    if (f.class !== null) perClass[f.class] = (perClass[f.class] ?? 0) + 1;
    checkLength(r, f.velocity, `${p}.velocity`, 2 * J, `x and y for each of ${J} joints`);
  });
  if (d.classification) {
    for (const k of FLEX_CLASSES) {
      const n = d.classification.counts[k];
      if (n !== (perClass[k] ?? 0)) r.report(`classification.counts.${k}`, `is ${n} but "flexes" holds ${perClass[k] ?? 0} of class ${k}`, REEXPORT);
    }
  }
  if (d.selfStresses) {
    if (d.selfStresses.length !== c.selfStresses) r.report('selfStresses', `lists ${d.selfStresses.length} but counts.selfStresses is ${c.selfStresses}`, 'list every self-stress, or write null when the basis was not computed');
    d.selfStresses.forEach((s, i) => {
      if (s.index !== i) r.report(`selfStresses[${i}].index`, `is ${s.index} but the self-stresses must be numbered in order (${i} here)`, `write ${i}`);
      checkLength(r, s.tension, `selfStresses[${i}].tension`, d.bars.length, `one per bar, ${d.bars.length} bars`);
      if (s.axialForce) checkLength(r, s.axialForce, `selfStresses[${i}].axialForce`, d.bars.length, `one per bar, ${d.bars.length} bars`);
      if ((s.class === undefined) !== (d.stressClassification === undefined)) {
        r.report(`selfStresses[${i}].class`, d.stressClassification === undefined ? 'is given but there is no stressClassification' : 'is missing but the self-stresses are classified', REEXPORT);
      }
    });
    if (d.stressClassification) {
      for (const k of FLEX_CLASSES) {
        const n = d.stressClassification.counts[k];
        const found = d.selfStresses.filter((s) => s.class === k).length;
        if (n !== found) r.report(`stressClassification.counts.${k}`, `is ${n} but "selfStresses" holds ${found} of class ${k}`, REEXPORT);
      }
    }
  } else if (d.stressClassification) {
    r.report('stressClassification', 'is given but selfStresses is null', REEXPORT);
  }
}

/**
 * Read mode-data JSON text (format "shimmy mode data", version 2). Throws InputError listing the
 * problems, each naming its field; never repairs.
 */
export function parseModesJson(text: string, source = 'mode data file'): ModeData {
  const context = `The ${source} cannot be read:`;
  const body = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
  let value: unknown;
  try {
    value = JSON.parse(body);
  } catch (e) {
    throw new InputError(context, [{ where: TOP, what: `it is not valid JSON (${(e as Error).message})`, fix: REEXPORT }]);
  }
  // Format and version first: a file of another kind would otherwise list every field as wrong.
  const top = value as Record<string, unknown> | null;
  const isObject = typeof value === 'object' && value !== null && !Array.isArray(value);
  if (isObject && top!.format !== MODE_DATA_FORMAT) {
    throw new InputError(context, [{ where: 'format', what: `expected "${MODE_DATA_FORMAT}", found ${top!.format === undefined ? 'no "format" field' : describe(top!.format)}`, fix: 'read a file written by shimmy export-modes --json or the app’s Mode data (JSON) export' }]);
  }
  if (isObject && top!.version !== MODE_DATA_VERSION) {
    const what = top!.version === 1 ? 'version 1 (the app’s earlier export) has a different layout' : `expected ${MODE_DATA_VERSION}, found ${top!.version === undefined ? 'no "version" field' : describe(top!.version)}`;
    throw new InputError(context, [{ where: 'version', what, fix: `export the run again with this shimmy (version ${MODE_DATA_VERSION})` }]);
  }
  const r = new Reader();
  const required = ['format', 'version', 'caution', 'framework', 'cells', 'boundary', 'tolerance', 'counts', 'classification', 'conventions', 'joints', 'bars', 'flexes', 'selfStresses'];
  const o = r.record(value, '', required, ['schemaVersion', 'classificationNote', 'selfStressNote', 'stressClassification']);
  if (!o) throw new InputError(context, r.problems);

  let framework: ModeData['framework'] | undefined;
  const fo = r.record(o.framework, 'framework', ['spec', 'name', 'unitCell']);
  if (fo) {
    const fwProblems = fo.unitCell === undefined ? [] : validateFramework(fo.unitCell);
    for (const p of fwProblems) r.report(p.where === TOP ? 'framework.unitCell' : `framework.unitCell.${p.where}`, p.what, p.fix);
    framework = complete({
      spec: r.nullable(fo.spec, 'framework.spec', (x, w) => r.str(x, w)),
      name: r.nullable(fo.name, 'framework.name', (x, w) => r.str(x, w)),
      unitCell: fwProblems.length || fo.unitCell === undefined ? undefined : frameworkCopy(fo.unitCell as Framework),
    });
  }

  let conventions: Record<string, string> | undefined;
  const co = r.object(o.conventions, 'conventions');
  if (co) {
    conventions = {};
    for (const [k, x] of Object.entries(co)) {
      const s = r.str(x, at('conventions', k));
      if (s !== undefined) conventions[k] = s;
    }
  }

  const doc = complete<ModeData>(
    {
      format: MODE_DATA_FORMAT,
      version: MODE_DATA_VERSION,
      schemaVersion: o.schemaVersion === undefined ? undefined : readSchemaVersion(r, o.schemaVersion),
      caution: r.str(o.caution, 'caution'),
      framework,
      cells: r.pair(o.cells, 'cells', (x, w) => r.int(x, w, 1)),
      boundary: r.str(o.boundary, 'boundary'),
      tolerance: r.num(o.tolerance, 'tolerance'),
      counts: readCounts(r, o.counts, 'counts'),
      classification: r.nullable(o.classification, 'classification', (x, w) => readClassification(r, x, w)),
      classificationNote: o.classificationNote === undefined ? undefined : r.str(o.classificationNote, 'classificationNote'),
      conventions,
      joints: r.list(o.joints, 'joints', (x, p) => {
        const j = r.record(x, p, ['joint', 'cell_i', 'cell_j', 'site', 'x', 'y']);
        return j && complete<ModeJoint>({ joint: r.int(j.joint, at(p, 'joint')), cell_i: r.int(j.cell_i, at(p, 'cell_i')), cell_j: r.int(j.cell_j, at(p, 'cell_j')), site: r.str(j.site, at(p, 'site')), x: r.num(j.x, at(p, 'x')), y: r.num(j.y, at(p, 'y')) });
      }),
      bars: r.list(o.bars, 'bars', (x, p) => {
        const b = r.record(x, p, ['from', 'to', 'vector', 'phase', 'wraps']);
        const int = (y: unknown, w: string) => r.int(y, w, null);
        return b && complete<ModeBar>({ from: r.int(b.from, at(p, 'from'), -1), to: r.int(b.to, at(p, 'to'), -1), vector: r.pair(b.vector, at(p, 'vector')), phase: r.pair(b.phase, at(p, 'phase')), wraps: r.pair(b.wraps, at(p, 'wraps'), int) });
      }),
      flexes: r.list(o.flexes, 'flexes', (x, p) => readFlex(r, x, p)),
      selfStresses: r.nullable(o.selfStresses, 'selfStresses', (x, w) => r.list(x, w, (y, p) => readStress(r, y, p))),
      selfStressNote: o.selfStressNote === undefined ? undefined : r.str(o.selfStressNote, 'selfStressNote'),
      stressClassification: o.stressClassification === undefined ? undefined : readStressClassification(r, o.stressClassification, 'stressClassification'),
    },
    ['schemaVersion', 'classificationNote', 'selfStressNote', 'stressClassification'],
  );
  if (doc && r.problems.length === 0) checkConsistency(r, doc);
  if (r.more) r.problems.push({ where: '(more)', what: `${r.more} further problems are not listed`, fix: 'fix the ones above and read the file again' });
  if (r.problems.length || !doc) throw new InputError(context, r.problems.length ? r.problems : [{ where: TOP, what: 'the file could not be read', fix: REEXPORT }]);
  return doc;
}
