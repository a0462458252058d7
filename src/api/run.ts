/**
 * The one place that orchestrates build → solve → classify: check the framework, the boundary,
 * the cells and the run size, build the supercell, analyse it and, when asked, classify its
 * flexes. `count()` (src/analysis.ts), the CLI (classify, export-modes), the sweep and the worker
 * all run through `analyse`.
 */
import { InputError } from '../errors.js';
import type { Framework } from '../framework/types.js';
import { checkFramework } from '../framework/validate.js';
import type { Classification } from '../flex/classes.js';
import { classifyFlexes } from '../flex/classify.js';
import { checkRunSize, MIN_RELATIVE_TOLERANCE, toleranceProblem, type SizeCheckOptions } from '../flex/estimate.js';
import { analyseSupercell, type AnalysisOptions, type FlexAnalysis } from '../flex/spaces.js';
import { parseBoundary, type Boundary } from '../supercell/boundary.js';
import { buildSupercell, checkCells, type Supercell } from '../supercell/supercell.js';

export interface RunRequest extends AnalysisOptions {
  framework: Framework;
  cells: [number, number];
  /** A Boundary or its text form (the `--bc` grammar). */
  boundary: Boundary | string;
  /** Classify the flexes (window and strip default to the classifier's), or not (false, the default). */
  classify?: { window?: number; strip?: number } | false;
  /**
   * Extra options of the size check made before building (labels, heapLimit), or false when
   * the caller has already checked this size with its own wording (the CLI, the sweep's shells).
   */
  sizeCheck?: Pick<SizeCheckOptions, 'labels' | 'heapLimit' | 'timeLimit'> | false;
}

export interface RunResult {
  supercell: Supercell;
  analysis: FlexAnalysis;
  /** Present when `classify` was asked for. */
  classification?: Classification;
}

export interface ClassifiedRun extends RunResult {
  classification: Classification;
}

/** Build the supercell, analyse it, and classify its flexes when asked. Bad input throws InputError. */
export function analyse(req: RunRequest & { classify: { window?: number; strip?: number } }): ClassifiedRun;
export function analyse(req: RunRequest): RunResult;
export function analyse(req: RunRequest): RunResult {
  const tolProblem = req.tolerance === undefined ? null : toleranceProblem(req.tolerance);
  if (tolProblem) {
    throw new InputError('The rank tolerance cannot be used:', [
      { where: 'tolerance', what: `the relative tolerance ${tolProblem}`, fix: `give a number from ${MIN_RELATIVE_TOLERANCE} up to (not including) 1, e.g. 1e-9 (the default)` },
    ]);
  }
  const fw = checkFramework(req.framework);
  const boundary = typeof req.boundary === 'string' ? parseBoundary(req.boundary) : req.boundary;
  checkCells(req.cells);
  // refuse before building: the size check allocates nothing that grows with the cells
  if (req.sizeCheck !== false) {
    checkRunSize(fw, req.cells, boundary, { solver: req.solver, memoryLimit: req.memoryLimit, allowLarge: req.allowLarge, bases: req.classify ? true : undefined, ...req.sizeCheck });
  }
  const memoryLimit = req.memoryLimit ?? (req.allowLarge ? Infinity : undefined);
  const supercell = buildSupercell(fw, req.cells, boundary);
  const analysis = analyseSupercell(supercell, {
    tolerance: req.tolerance,
    memoryLimit,
    allowLarge: req.allowLarge,
    gap: req.gap,
    solver: req.solver,
    onProgress: req.onProgress,
    signal: req.signal,
  });
  if (!req.classify) return { supercell, analysis };
  const classification = classifyFlexes(supercell, analysis, { window: req.classify.window, strip: req.classify.strip, onProgress: req.onProgress, signal: req.signal });
  return { supercell, analysis, classification };
}
