/**
 * One-call entry points shared by the CLI, the worker and the API: framework + cells +
 * boundary in, counts (and bases on demand) out.
 */
import type { Framework } from './framework/types.js';
import { checkFramework } from './framework/validate.js';
import { analyseSupercell, type AnalysisOptions, type FlexAnalysis } from './flex/spaces.js';
import { parseBoundary, type Boundary } from './supercell/boundary.js';
import { buildSupercell, checkCells, type Supercell } from './supercell/supercell.js';
import { InputError } from './errors.js';
import { checkRunSize, MIN_RELATIVE_TOLERANCE, toleranceProblem } from './flex/estimate.js';

export interface CountRequest extends AnalysisOptions {
  framework: Framework;
  cells: [number, number];
  /** A Boundary or its text form (the `--bc` grammar). */
  boundary: Boundary | string;
}

export interface CountResult {
  supercell: Supercell;
  analysis: FlexAnalysis;
}

export function count(req: CountRequest): CountResult {
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
  checkRunSize(fw, req.cells, boundary, { solver: req.solver, memoryLimit: req.memoryLimit, allowLarge: req.allowLarge });
  const memoryLimit = req.memoryLimit ?? (req.allowLarge ? Infinity : undefined);
  const supercell = buildSupercell(fw, req.cells, boundary);
  return { supercell, analysis: analyseSupercell(supercell, memoryLimit === undefined ? req : { ...req, memoryLimit }) };
}
