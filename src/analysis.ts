/**
 * One-call entry points shared by the CLI, the worker and the API: framework + cells +
 * boundary in, counts (and bases on demand) out.
 */
import type { Framework } from './framework/types.js';
import type { AnalysisOptions, FlexAnalysis } from './flex/spaces.js';
import type { Boundary } from './supercell/boundary.js';
import type { Supercell } from './supercell/supercell.js';
import { analyse } from './api/run.js';

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
  const { supercell, analysis } = analyse({ ...req, classify: false });
  return { supercell, analysis };
}
