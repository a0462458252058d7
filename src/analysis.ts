/**
 * One-call entry points shared by the CLI, the worker and the API: framework + cells +
 * boundary in, counts (and bases on demand) out.
 */
import type { Framework } from './framework/types.js';
import type { Classification } from './flex/classes.js';
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

export interface ClassifyRequest extends CountRequest {
  /** Largest window (W×W cells) searched for local flexes (the classifier's default when left out). */
  window?: number;
  /** Widest strip (cells) searched for line flexes (the classifier's default when left out). */
  strip?: number;
}

export interface ClassifyResult extends CountResult {
  /** Counts per class (local, line, decaying, bulk), the localised modes and the thresholds used. */
  classification: Classification;
}

/** Count and classify the flexes: where they live (local, line, decaying, bulk). */
export function classify(req: ClassifyRequest): ClassifyResult {
  const { window, strip, ...rest } = req;
  const { supercell, analysis, classification } = analyse({ ...rest, classify: { window, strip } });
  return { supercell, analysis, classification };
}
