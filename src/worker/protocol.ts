/**
 * The message protocol between the app (main thread) and the compute worker.
 *
 * Every request carries a run id chosen by the app; every response names the id it answers.
 * A run ends with exactly one `result` or `error` message. `progress` messages may come in
 * between. A `cancel` request asks the worker to stop the named run at its next checkpoint;
 * the app terminates and respawns the worker when a run does not stop in time (the dense SVD
 * cannot be interrupted half-way).
 *
 * Numeric arrays travel as typed arrays (transferred, not copied).
 */
import type { ClassifiedMode, FlexClass } from '../flex/classes.js';
import type { FlexCounts } from '../flex/spaces.js';
import type { Framework, Vec2 } from '../framework/types.js';
import type { Problem } from '../errors.js';
import type { SolverChoice } from '../flex/solver.js';
import type { SweepResult } from '../flex/sweep.js';
import type { SideWeights } from '../flex/side-weights.js';
import type { EdgesResult } from '../edges/edges.js';
import type { FlexibleLatticeResult } from '../strain/flexible-lattice.js';
import type { PrestressResult } from '../stress/prestress.js';
import type { MacroStress } from '../stress/classify/macroscopic.js';

/** One supercell analysis: what `shimmy count` does, plus bases and classes for display. */
export interface AnalyseJob {
  framework: Framework;
  cells: [number, number];
  /** Boundary rule in the `--bc` grammar. */
  bc: string;
  /** Relative rank tolerance (× σ_max). */
  tolerance: number;
  /** Which solver (as the CLI's --solver); 'auto' picks by size and structure. */
  solver: SolverChoice;
  /** Largest window (cells) for local flexes. */
  window: number;
  /** Largest strip width (cells) for line flexes. */
  strip: number;
  /** Compute the self-stress basis too. */
  stresses: boolean;
  /** Split the flexes into classes (local / line / decaying / bulk). */
  classify: boolean;
  /** Send the self-stresses localised and classified (src/stress/classify) in place of the raw basis. */
  classifyStresses?: boolean;
}

/** Flexes of the framework with a flexible lattice (src/strain/flexible-lattice.ts) on a periodic cell. */
export interface StrainJob {
  framework: Framework;
  /** The cell: [1, 1] for the unit cell, or an N1×N2 periodic block. */
  cells: [number, number];
  tolerance: number;
}

/** The prestress check (src/stress/prestress.ts) of one supercell; the boundary must be real. */
export interface PrestressJob {
  framework: Framework;
  cells: [number, number];
  bc: string;
  tolerance: number;
  solver: SolverChoice;
}

export interface PhaseMapJob {
  framework: Framework;
  grid: number;
  tolerance: number;
}

export interface SweepJob {
  framework: Framework;
  sizes: [number, number][];
  bc: string;
  tolerance: number;
  solver: SolverChoice;
  window: number;
  strip: number;
}

/** Edge physics at one edge phase, both edge directions (src/edges/edges.ts). */
export interface EdgesJob {
  framework: Framework;
  /** Edge phase θ in turns. */
  phase: number;
  /** Edge phases k/grid for the ξ(θ) table. */
  grid: number;
}

export type WorkerRequest =
  | { type: 'analyse'; id: number; job: AnalyseJob }
  | { type: 'phasemap'; id: number; job: PhaseMapJob }
  | { type: 'sweep'; id: number; job: SweepJob }
  | { type: 'edges'; id: number; job: EdgesJob }
  | { type: 'strain'; id: number; job: StrainJob }
  | { type: 'prestress'; id: number; job: PrestressJob }
  | { type: 'cancel'; id: number };

/** The supercell as drawn: joints and the rows of the rigidity matrix (kept and grounded bars). */
export interface GeometryData {
  lattice: [Vec2, Vec2];
  cells: [number, number];
  sites: number;
  jointCount: number;
  /** 2 per joint. */
  positions: Float64Array;
  /** Cell (i, j) of each joint, 2 per joint. */
  jointCells: Int32Array;
  /** Bar ends: joint index, or −1 for a fixed (grounded) end. */
  barA: Int32Array;
  barB: Int32Array;
  /** Unwrapped bar vectors, 2 per bar. */
  barVector: Float64Array;
  /** Phase factor of the `to` end, (re, im) per bar. */
  barPhase: Float64Array;
  /** Wrap counts along twisted axes, 2 per bar. */
  barWraps: Int32Array;
  /** Canonical boundary text. */
  bc: string;
  real: boolean;
  dropped: number;
  grounded: number;
}

/**
 * One basis flex as shown in the list: a ClassifiedMode's metrics (all optional when the flexes
 * were not classified) with its vector as transferable arrays.
 */
export interface ModeData extends Partial<Omit<ClassifiedMode, 'class' | 'vector' | 'participation'>> {
  /** The class, or null when the flexes were not classified. */
  class: FlexClass | null;
  /** Joint velocities, 2 per joint (x, y); im is null for a real vector. */
  re: Float64Array;
  im: Float64Array | null;
  participation: number;
}

/**
 * One self-stress: w per row (bar; unit 2-norm, force per unit length), im null when real.
 * Classified self-stresses also carry their class, the metrics of src/stress/classify (support
 * in bars, extents in cells, …), on a real supercell the axial bar forces t_b = w_b·|p_b|
 * (tension positive) and, on a periodic supercell, the macroscopic stress per cell.
 */
export interface StressData extends Partial<Omit<ClassifiedMode, 'class' | 'vector' | 'affine'>> {
  re: Float64Array;
  im: Float64Array | null;
  class?: FlexClass;
  forces?: Float64Array;
  macroscopicStress?: MacroStress;
}

/** The self-stress classification sent with the classified self-stresses. */
export interface StressClassificationData {
  counts: Record<FlexClass, number>;
  thresholds: Record<string, number | string>;
  /** Self-stresses on short strip pieces (counted as decaying or bulk). */
  shortStripStresses: number;
  /** Periodic supercells: the macroscopic stress map on the self-stresses (classify.ts). */
  macroscopic: { cellArea: number; convention: string; rank: number; traceless: boolean; largestTrace: number; scale: number } | null;
  warnings?: string[];
}

export interface ClassificationData {
  counts: Record<FlexClass, number>;
  thresholds: Record<string, number | string>;
  shortStripFlexes?: number;
  warnings?: string[];
  /** Flex weight per side of the supercell (src/flex/side-weights.ts); null when not computed (see sideWeightsNote). */
  sideWeights?: SideWeights | null;
  sideWeightsNote?: string;
}

/** A rigid motion the boundary allows (src/flex/rigid.ts): unit-norm real field, 2 entries per joint. */
export interface RigidData {
  name: string;
  field: Float64Array;
}

export interface AnalyseResult {
  counts: FlexCounts;
  /** The rigid motions the boundary allows (orthonormal), so the app can project them out of a drawn flex. */
  rigid: RigidData[];
  geometry: GeometryData;
  /** Display order: grouped by class (local, line, decaying, bulk), else basis order. */
  modes: ModeData[];
  /** Where the modes come from. */
  modeSource: 'classified' | 'basis';
  classification: ClassificationData | null;
  /** Why there is no classification, when there is none. */
  classificationNote?: string;
  stresses: StressData[];
  /** 'classified': localised and grouped by class (local, line, decaying, bulk); 'basis': the solver's orthonormal basis. */
  stressSource?: 'classified' | 'basis';
  stressClassification?: StressClassificationData | null;
  /** Why the self-stresses are not classified though classes were asked for. */
  stressClassificationNote?: string;
  /** Why the self-stress basis is missing, when it is. */
  stressNote?: string;
  /** Milliseconds spent per stage. */
  timings: Record<string, number>;
}

/** The phase-map result as sent to the app (a plain copy of src/spectrum/phasemap.ts's PhaseMap). */
export interface PhaseMapData {
  grid: number;
  dof: number;
  bars: number;
  tolerance: { relative: number; absolute: number };
  sigmaMax: number;
  /** σ_1 at each grid point, index i2·grid + i1. */
  sigma1: Float64Array;
  kernel: Int32Array;
  genericKernel: number;
  lines: { p: number; q: number; c: number; support: number; kernel: number }[];
  isolated: { theta: [number, number]; kernel: number }[];
  points: number;
  /** The zero set's topology (src/spectrum/zero-set.ts): isolated zeros with their charge, curves, near-zeros. */
  zeroPoints: { theta: [number, number]; dimKer: number; charge: number | null }[];
  zeroCurves: { points: [number, number][]; dimKer: number }[];
  nearZeros: { theta: [number, number]; sigma: number; rise: number }[];
}

/** A size sweep result (src/flex/sweep.ts's SweepResult is plain data already). */
export type SweepData = SweepResult;

/** Edge physics along each edge direction at the job's phase (EdgesResult is plain data). */
export interface EdgesData {
  phase: number;
  a1: EdgesResult;
  a2: EdgesResult;
}

/** The flexible-lattice result (plain data) and the periodic cell as drawn. */
export interface StrainData {
  result: FlexibleLatticeResult;
  /** The periodic cell (1×1 or the N1×N2 block): joints in the result's order, bars with their wraps. */
  geometry: GeometryData;
}

/** The prestress check's result (plain data). */
export type PrestressData = PrestressResult;

export interface WorkerFeatures {
  classify: boolean;
  phaseMap: boolean;
  sweep: boolean;
}

export type WorkerErrorKind = 'input' | 'too-large' | 'cancelled' | 'unavailable' | 'internal';

export interface WorkerError {
  kind: WorkerErrorKind;
  message: string;
  problems?: Problem[];
  bytesNeeded?: number;
  bytesAllowed?: number;
}

export type WorkerResponse =
  | { type: 'ready'; features: WorkerFeatures }
  | { type: 'progress'; id: number; fraction: number; stage: string }
  | { type: 'result'; id: number; result: AnalyseResult }
  | { type: 'phasemap-result'; id: number; result: PhaseMapData }
  | { type: 'sweep-result'; id: number; result: SweepData }
  | { type: 'edges-result'; id: number; result: EdgesData }
  | { type: 'strain-result'; id: number; result: StrainData }
  | { type: 'prestress-result'; id: number; result: PrestressData }
  | { type: 'error'; id: number; error: WorkerError };

/** Typed arrays to transfer with a result. */
export function transferablesOf(r: Pick<AnalyseResult, 'geometry' | 'modes' | 'rigid' | 'stresses'>): ArrayBuffer[] {
  const g = r.geometry;
  const out: ArrayBufferLike[] = [g.positions.buffer, g.jointCells.buffer, g.barA.buffer, g.barB.buffer, g.barVector.buffer, g.barPhase.buffer, g.barWraps.buffer];
  for (const m of r.modes) {
    out.push(m.re.buffer);
    if (m.im) out.push(m.im.buffer);
  }
  for (const m of r.rigid) out.push(m.field.buffer);
  for (const s of r.stresses) {
    out.push(s.re.buffer);
    if (s.im) out.push(s.im.buffer);
    if (s.forces) out.push(s.forces.buffer);
  }
  // Only whole, distinct buffers can be transferred.
  return [...new Set(out)].filter((b): b is ArrayBuffer => b instanceof ArrayBuffer);
}
