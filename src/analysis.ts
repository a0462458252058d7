/**
 * One-call entry points shared by the CLI, the worker and the API: framework + cells +
 * boundary in, counts (and bases on demand) out.
 */
import type { Framework } from './framework/types.js';
import { checkFramework } from './framework/validate.js';
import { analyseSupercell, type AnalysisOptions, type FlexAnalysis } from './flex/spaces.js';
import { parseBoundary, type Boundary } from './supercell/boundary.js';
import { buildSupercell, type Supercell } from './supercell/supercell.js';

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
  const fw = checkFramework(req.framework);
  const boundary = typeof req.boundary === 'string' ? parseBoundary(req.boundary) : req.boundary;
  const supercell = buildSupercell(fw, req.cells, boundary);
  return { supercell, analysis: analyseSupercell(supercell, req) };
}
