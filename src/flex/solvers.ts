/**
 * The solver registry and the `auto` choice. Each solver lives in its own file; this is the
 * one place that knows them all.
 */
import { InputError } from '../errors.js';
import type { SparseMatrix } from '../linalg/sparse.js';
import type { Supercell } from '../supercell/supercell.js';
import { denseSolver } from './solve-dense.js';
import type { SolverChoice, SolverName, SpaceSolver } from './solver.js';

const SOLVERS: Partial<Record<SolverName, SpaceSolver>> = {
  dense: denseSolver,
};

export function availableSolvers(): SolverName[] {
  return Object.keys(SOLVERS) as SolverName[];
}

export function chooseSolver(_sc: Supercell, _R: SparseMatrix, choice: SolverChoice): { solve: SpaceSolver; name: SolverName; reason: string } {
  if (choice === 'auto') return { solve: denseSolver, name: 'dense', reason: 'auto: the dense reference path' };
  const solve = SOLVERS[choice];
  if (!solve) {
    throw new InputError(`The solver "${choice}" cannot be used:`, [
      { where: '--solver', what: `"${choice}" is not available`, fix: `use one of auto, ${availableSolvers().join(', ')}` },
    ]);
  }
  return { solve, name: choice, reason: `requested with --solver ${choice}` };
}
