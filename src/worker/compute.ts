/**
 * What the worker computes, as plain async functions (no messaging), so they can be tested
 * outside a browser. Runs the same core as the CLI: `analyse` from src/api/run.ts (build and
 * solve; the classifier runs after the bases, between checkpoints), and the optional spectrum tools.
 */
import { analyse as run } from '../api/run.js';
import { InputError, TooLargeError } from '../errors.js';
import { FLEX_CLASSES, type ClassifiedMode, type FlexClass } from '../flex/classes.js';
import { classifyFlexes } from '../flex/classify.js';
import { CancelledError, throwIfAborted } from '../flex/solver.js';
import { countsOf } from '../flex/spaces.js';
import type { CVec } from '../linalg/complex.js';
import { phaseMap } from '../spectrum/phasemap.js';
import { zeroTopology } from '../spectrum/zero-set.js';
import { sweep } from '../flex/sweep.js';
import { SIDE_WEIGHTS_DEFAULT_MAX_COLUMNS, sideWeights } from '../flex/side-weights.js';
import { rigidMotions } from '../flex/rigid.js';
import { edges } from '../edges/edges.js';
import { checkFramework } from '../framework/validate.js';
import { flexibleLattice } from '../strain/flexible-lattice.js';
import { prestress } from '../stress/prestress.js';
import { axialForces, classifyStresses } from '../stress/classify/classify.js';
import { parseBoundary } from '../supercell/boundary.js';
import { buildSupercell } from '../supercell/supercell.js';
import { geometryOf } from './geometry.js';
import type {
  AnalyseJob,
  AnalyseResult,
  EdgesData,
  EdgesJob,
  ModeData,
  PhaseMapData,
  PhaseMapJob,
  PrestressData,
  PrestressJob,
  StrainData,
  StrainJob,
  StressClassificationData,
  StressData,
  SweepData,
  SweepJob,
  WorkerError,
  WorkerFeatures,
} from './protocol.js';

/** Side weights need the whole flex basis: computed up to this many columns (as `shimmy classify` does by default). */
export const SIDE_WEIGHTS_MAX_DOF = SIDE_WEIGHTS_DEFAULT_MAX_COLUMNS;

export interface Hooks {
  onProgress?: (fraction: number, stage: string) => void;
  signal?: AbortSignal;
  /** Awaited between stages (the worker yields there so that a cancel message can arrive). */
  checkpoint?: () => Promise<void>;
}

export function features(): WorkerFeatures {
  return { classify: true, phaseMap: true, sweep: true };
}

/** Participation ratio (Σ|u_k|²)² / (J·Σ|u_k|⁴) over joints k. */
export function participation(re: Float64Array, im: Float64Array | null): number {
  const J = re.length / 2;
  let s2 = 0;
  let s4 = 0;
  for (let k = 0; k < J; k++) {
    let a = re[2 * k] ** 2 + re[2 * k + 1] ** 2;
    if (im) a += im[2 * k] ** 2 + im[2 * k + 1] ** 2;
    s2 += a;
    s4 += a * a;
  }
  return s4 > 0 ? (s2 * s2) / (J * s4) : 0;
}

function split(v: CVec, real: boolean): { re: Float64Array; im: Float64Array | null } {
  const re = Float64Array.from(v.re);
  if (real) return { re, im: null };
  let any = false;
  for (let i = 0; i < v.im.length && !any; i++) any = v.im[i] !== 0;
  return { re, im: any ? Float64Array.from(v.im) : null };
}

export async function analyse(job: AnalyseJob, hooks: Hooks = {}): Promise<AnalyseResult> {
  const timings: Record<string, number> = {};
  const progress = (f: number, stage: string) => hooks.onProgress?.(f, stage);
  const step = async () => {
    if (hooks.checkpoint) await hooks.checkpoint();
    throwIfAborted(hooks.signal);
  };
  let t = performance.now();
  const lap = (name: string) => {
    const now = performance.now();
    timings[name] = now - t;
    t = now;
  };

  progress(0, 'building the supercell and its rigidity matrix');
  await step();
  const { supercell, analysis } = run({
    framework: job.framework,
    cells: job.cells,
    boundary: job.bc,
    tolerance: job.tolerance,
    solver: job.solver,
    signal: hooks.signal,
    // the solver's own stage names are internals; the app says what is being found
    onProgress: (p) => progress(0.05 + 0.35 * p.fraction, 'counting flexes and self-stresses (the rank of R)'),
    // classified below, after the bases, only when there are flexes
    classify: false,
  });
  lap('rank');
  const counts = countsOf(analysis);
  const geometry = geometryOf(supercell);
  const rigid = rigidMotions(supercell).map((m) => ({ name: m.name, field: Float64Array.from(m.field) }));

  progress(0.4, 'finding the flexes');
  await step();
  const basis = analysis.flexBasis();
  lap('flex basis');

  let stresses: StressData[] = [];
  let stressNote: string | undefined;
  let stressSource: AnalyseResult['stressSource'] = 'basis';
  let stressClassification: StressClassificationData | null = null;
  let stressClassificationNote: string | undefined;
  if (job.stresses && analysis.selfStresses > 0) {
    progress(0.55, job.classifyStresses ? 'finding the self-stresses and where they live' : 'finding the self-stresses');
    await step();
    try {
      let c: ReturnType<typeof classifyStresses> | null = null;
      if (job.classifyStresses) {
        try {
          c = classifyStresses(supercell, analysis, { window: job.window, strip: job.strip });
        } catch (e) {
          // the basis is still worth showing; the note says why it is not classified
          if (e instanceof TooLargeError || e instanceof CancelledError) throw e;
          stressClassificationNote = `the self-stresses could not be classified (${e instanceof Error ? e.message : String(e)}); the list shows the solver's basis`;
        }
      }
      if (c) {
        stresses = c.modes.map((m) => stressDataOf(m, supercell, analysis.real));
        stressSource = 'classified';
        stressClassification = { counts: { ...c.counts }, thresholds: { ...c.thresholds }, shortStripStresses: c.shortStripStresses, macroscopic: c.macroscopic ? { ...c.macroscopic } : null, ...(c.warnings?.length ? { warnings: [...c.warnings] } : {}) };
      } else stresses = analysis.selfStressBasis().vectors.map((v) => split(v, analysis.real));
    } catch (e) {
      if (!(e instanceof TooLargeError)) throw e;
      stressNote = e.message;
    }
    lap('self-stress basis');
  } else if (!job.stresses) {
    stressNote = 'not computed (switched off)';
  }

  let modes: ModeData[];
  let modeSource: AnalyseResult['modeSource'] = 'basis';
  let classification: AnalyseResult['classification'] = null;
  let classificationNote: string | undefined;
  if (job.classify && analysis.flexes > 0) {
    progress(0.65, 'classifying the flexes');
    await step();
    const c = classifyFlexes(supercell, analysis, {
      window: job.window,
      strip: job.strip,
      signal: hooks.signal,
      onProgress: (p) => progress(0.65 + 0.35 * p.fraction, 'sorting the flexes: local, line, decaying, bulk'),
    });
    lap('classify');
    const order: Record<FlexClass, number> = { local: 0, line: 1, decaying: 2, bulk: 3 };
    modes = c.modes
      .map((m, i) => ({ m, i }))
      .sort((a, b) => order[a.m.class] - order[b.m.class] || a.i - b.i)
      .map(({ m }) => {
        const { re, im } = split(m.vector, analysis.real);
        return copyMetrics(m, { class: m.class, re, im, participation: m.participation, support: m.support, extents: [m.extents[0], m.extents[1]] } as ModeData);
      });
    modeSource = 'classified';
    const counts = Object.fromEntries(FLEX_CLASSES.map((k) => [k, c.counts[k] ?? 0])) as Record<FlexClass, number>;
    classification = { counts, thresholds: { ...c.thresholds } };
    if (c.shortStripFlexes !== undefined) classification.shortStripFlexes = c.shortStripFlexes;
    if (c.warnings?.length) classification.warnings = [...c.warnings];
    if (analysis.dof <= SIDE_WEIGHTS_MAX_DOF) classification.sideWeights = { ...sideWeights(supercell, analysis) };
    else {
      classification.sideWeights = null;
      classification.sideWeightsNote = `not computed: ${analysis.dof} columns is over ${SIDE_WEIGHTS_MAX_DOF} (they need the whole flex basis)`;
    }
  } else {
    modes = basis.vectors.map((v) => {
      const { re, im } = split(v, analysis.real);
      return { class: null, re, im, participation: participation(re, im) };
    });
    if (analysis.flexes === 0) {
      classification = { counts: { local: 0, line: 0, decaying: 0, bulk: 0 }, thresholds: { window: job.window, strip: job.strip } };
      modeSource = 'classified';
    } else {
      classificationNote = 'classification switched off: the list shows the orthonormal basis of the solver';
    }
  }
  progress(1, 'done');
  return { counts, rigid, geometry, modes, modeSource, classification, ...(classificationNote ? { classificationNote } : {}), stresses, stressSource, stressClassification, ...(stressClassificationNote ? { stressClassificationNote } : {}), ...(stressNote ? { stressNote } : {}), timings };
}

/** A classified self-stress as sent to the app: its vector, metrics, axial forces and macroscopic stress. */
function stressDataOf(m: ReturnType<typeof classifyStresses>['modes'][number], sc: Parameters<typeof axialForces>[0], real: boolean): StressData {
  const { re, im } = split(m.vector, real);
  const out: StressData = { re, im, class: m.class, participation: m.participation, support: m.support, extents: [m.extents[0], m.extents[1]] };
  // real supercells only: a complex stress's forces are aligned by the app before drawing
  if (real) out.forces = Float64Array.from(axialForces(sc, m.vector).re);
  copyMetrics(m, out);
  if (m.macroscopicStress) out.macroscopicStress = { ...m.macroscopicStress };
  return out;
}

/** Flexes with a flexible lattice on the periodic cell (1×1 or the job's block), with the cell as drawn. */
export async function runStrain(job: StrainJob, hooks: Hooks = {}): Promise<StrainData> {
  await hooks.checkpoint?.();
  throwIfAborted(hooks.signal);
  hooks.onProgress?.(0, 'flexes of the cell with a deforming lattice');
  const result = JSON.parse(JSON.stringify(flexibleLattice(job.framework, { cells: job.cells, tolerance: job.tolerance }))) as StrainData['result'];
  // the same validated framework and cell as flexibleLattice builds, so joints come in its order
  const geometry = geometryOf(buildSupercell(checkFramework(job.framework), [job.cells[0], job.cells[1]], parseBoundary('periodic')));
  hooks.onProgress?.(1, 'done');
  return { result, geometry };
}

/** The prestress check of the job's supercell (the boundary must be real: src/stress/prestress.ts says why). */
export async function runPrestress(job: PrestressJob, hooks: Hooks = {}): Promise<PrestressData> {
  await hooks.checkpoint?.();
  throwIfAborted(hooks.signal);
  hooks.onProgress?.(0, 'flexes and self-stresses of the supercell');
  const { supercell, analysis } = run({ framework: job.framework, cells: job.cells, boundary: job.bc, tolerance: job.tolerance, solver: job.solver, signal: hooks.signal, classify: false });
  await hooks.checkpoint?.();
  throwIfAborted(hooks.signal);
  hooks.onProgress?.(0.5, 'the stress energy on the flexes');
  const r = JSON.parse(JSON.stringify(prestress(supercell, analysis))) as PrestressData;
  hooks.onProgress?.(1, 'done');
  return r;
}

export async function runPhaseMap(job: PhaseMapJob, hooks: Hooks = {}): Promise<PhaseMapData> {
  await hooks.checkpoint?.();
  const pm = phaseMap(job.framework, {
    grid: job.grid,
    tolerance: job.tolerance,
    signal: hooks.signal,
    onProgress: (p) => hooks.onProgress?.(p.fraction, p.stage),
  });
  await hooks.checkpoint?.();
  throwIfAborted(hooks.signal);
  hooks.onProgress?.(1, 'charges of the zero set');
  const topology = zeroTopology(job.framework, pm);
  const k = pm.detection ? pm.detection.index - 1 : 0;
  const field = pm.smallest[Math.min(k, pm.smallest.length - 1)] ?? new Float64Array(pm.grid * pm.grid);
  return {
    grid: pm.grid,
    dof: pm.dof,
    bars: pm.bars,
    tolerance: { ...pm.tolerance },
    sigmaMax: pm.sigmaMax,
    sigma1: Float64Array.from(field),
    kernel: Int32Array.from(pm.kernel),
    genericKernel: pm.genericKernel,
    lines: pm.zeroSet.lines.map((l) => ({ p: l.p, q: l.q, c: l.c, support: l.support, kernel: l.kernel })),
    isolated: pm.zeroSet.isolated.map((z) => ({ theta: [z.theta[0], z.theta[1]], kernel: z.kernel })),
    points: pm.zeroSet.points.length,
    zeroPoints: topology.zeroPoints.map((z) => ({ theta: [z.theta[0], z.theta[1]], dimKer: z.dimKer, charge: z.charge })),
    zeroCurves: topology.zeroCurves.map((c) => ({ points: c.points.map((p) => [p[0], p[1]] as [number, number]), dimKer: c.dimKer })),
    nearZeros: topology.nearZeros.map((z) => ({ theta: [z.theta[0], z.theta[1]], sigma: z.sigma, rise: z.rise })),
  };
}

/** Edge physics along a1 and along a2 at the job's phase, each with its ξ(θ) table and strip count. */
export async function runEdges(job: EdgesJob, hooks: Hooks = {}): Promise<EdgesData> {
  const out: Partial<EdgesData> = { phase: job.phase };
  for (const [i, along] of (['a1', 'a2'] as const).entries()) {
    await hooks.checkpoint?.();
    throwIfAborted(hooks.signal);
    hooks.onProgress?.(i / 2, `edges along ${along}`);
    out[along] = JSON.parse(JSON.stringify(edges({ framework: job.framework, phase: job.phase, along, grid: job.grid }))) as EdgesData['a1'];
  }
  hooks.onProgress?.(1, 'done');
  return out as EdgesData;
}

export async function runSweep(job: SweepJob, hooks: Hooks = {}): Promise<SweepData> {
  await hooks.checkpoint?.();
  const r = sweep(job.framework, {
    sizes: job.sizes,
    boundary: job.bc,
    tolerance: job.tolerance,
    solver: job.solver,
    window: job.window,
    strip: job.strip,
    signal: hooks.signal,
    onProgress: (p) => hooks.onProgress?.(p.fraction, p.stage),
  });
  return JSON.parse(JSON.stringify(r)) as SweepData;
}

export class UnavailableError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'UnavailableError';
  }
}

/** Any thrown value as a message the app can show. */
export function toWorkerError(e: unknown): WorkerError {
  if (e instanceof InputError) return { kind: 'input', message: e.message, problems: e.problems.map((p) => ({ ...p })) };
  if (e instanceof TooLargeError) return { kind: 'too-large', message: e.message, bytesNeeded: e.bytesNeeded, bytesAllowed: e.bytesAllowed };
  if (e instanceof CancelledError) return { kind: 'cancelled', message: e.message };
  if (e instanceof UnavailableError) return { kind: 'unavailable', message: e.message };
  if (e instanceof RangeError && /Invalid array length|Array buffer allocation failed/i.test(e.message)) {
    return { kind: 'too-large', message: `The browser could not allocate memory for this problem (${e.message}). Fix: use fewer cells.` };
  }
  const message = e instanceof Error ? `${e.name}: ${e.message}` : String(e);
  return { kind: 'internal', message: `An unexpected error stopped the computation: ${message}` };
}

/** The optional metrics a classified flex or self-stress carries, copied as plain data (anchors and pairs cloned). */
function copyMetrics<T extends Pick<ModeData, 'direction' | 'anchor' | 'decayLength' | 'region' | 'fitQuality' | 'headWeight'>>(
  m: Partial<Pick<ClassifiedMode, 'direction' | 'anchor' | 'decayLength' | 'region' | 'fitQuality' | 'headWeight'>>,
  out: T,
): T {
  if (m.direction) out.direction = [m.direction[0], m.direction[1]];
  if (m.anchor) out.anchor = { kind: m.anchor.kind, name: m.anchor.name, at: [m.anchor.at[0], m.anchor.at[1]] };
  if (m.decayLength !== undefined) out.decayLength = m.decayLength;
  if (m.region !== undefined) out.region = m.region;
  if (m.fitQuality !== undefined) out.fitQuality = m.fitQuality;
  if (m.headWeight !== undefined) out.headWeight = m.headWeight;
  return out;
}
