/**
 * The solver registry and the `auto` choice. Each solver lives in its own file; this is the
 * one place that knows them all.
 */
import { InputError } from '../errors.js';
import type { Supercell } from '../supercell/supercell.js';
import { blochSolver } from '../spectrum/bloch.js';
import { denseSolver } from './solve-dense.js';
import { sparseSolver } from './solve-sparse.js';
import type { SolverChoice, SolverName, SpaceSolver } from './solver.js';

const SOLVERS: Partial<Record<SolverName, SpaceSolver>> = {
  dense: denseSolver,
  bloch: blochSolver,
  sparse: sparseSolver,
};

/** Open supercells with at least this many columns go to the sparse solver (measured crossover). */
export const SPARSE_MIN_DOF = 200;

export function availableSolvers(): SolverName[] {
  return Object.keys(SOLVERS) as SolverName[];
}

export function chooseSolver(sc: Supercell, choice: SolverChoice): { solve: SpaceSolver; name: SolverName; reason: string } {
  if (choice === 'auto') {
    const twisted = [sc.boundary.x, sc.boundary.y].filter((r) => r.kind === 'twist').length;
    if (twisted === 2) return { solve: blochSolver, name: 'bloch', reason: 'auto: both axes twisted, one unit-cell block per Bloch phase' };
    if (twisted === 1) return { solve: blochSolver, name: 'bloch', reason: 'auto: one twisted axis, one strip problem per Bloch phase' };
    const cols = 2 * sc.jointCount;
    if (cols >= SPARSE_MIN_DOF) return { solve: sparseSolver, name: 'sparse', reason: `auto: open boundaries and ${cols} ≥ ${SPARSE_MIN_DOF} columns, banded factorisation` };
    return { solve: denseSolver, name: 'dense', reason: `auto: open boundaries and only ${cols} columns, dense reference path` };
  }
  const solve = SOLVERS[choice];
  if (!solve) {
    throw new InputError(`The solver "${choice}" cannot be used:`, [
      { where: '--solver', what: `"${choice}" is not available`, fix: `use one of auto, ${availableSolvers().join(', ')}` },
    ]);
  }
  return { solve, name: choice, reason: `requested with --solver ${choice}` };
}
