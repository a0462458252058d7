/**
 * The mode-data file: one format for the flexes of one supercell run, written by
 * `shimmy export-modes` (JSON or CSV) and by the app's "Mode data (JSON)" export, and read back
 * by `parseModesJson` (src/io/modes-read.ts).
 *
 * Pure core: no file system, no DOM, no `process`. The shells turn their run into a `ModeData`
 * (`modeDataOfRun` from a Supercell, counts and classification; `modeData` from plain arrays)
 * and write it with `modesToJson` / `modesToCsv`.
 *
 * Numbers are written as the shortest decimal that reads back as the same double, −0 as `-0`,
 * so a file read back gives every number bit for bit. Non-finite numbers are never written.
 */
import { CAUTION } from '../caution.js';
import { FLEX_CLASSES, type Anchor, type Classification, type FlexClass } from '../flex/classes.js';
import type { FlexCounts } from '../flex/spaces.js';
import type { Framework } from '../framework/types.js';
import { formatBoundary } from '../supercell/boundary.js';
import type { Supercell } from '../supercell/supercell.js';
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

export function frameworkCopy(fw: Framework): Framework {
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
