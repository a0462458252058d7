/**
 * The rigidity (compatibility) matrix R of a supercell: one row per bar (kept or grounded),
 * two columns per joint (x then y velocity). R maps joint velocities u to first-order bar
 * length changes. The row of bar a→b with phase factor φ holds −p at a and +φ·p at b, p the
 * unwrapped bar vector; a grounded bar has only its inside end.
 * Flexes are ker R, self-stresses ker Rᴴ.
 */
import { SparseBuilder, type SparseMatrix } from '../linalg/sparse.js';
import type { Supercell } from './supercell.js';

export function rigidityMatrix(sc: Supercell): SparseMatrix {
  const B = new SparseBuilder(2 * sc.jointCount);
  for (const bar of sc.bars) {
    const r = B.newRow();
    const [px, py] = bar.vector;
    if (bar.a >= 0) {
      B.add(r, 2 * bar.a, -px);
      B.add(r, 2 * bar.a + 1, -py);
    }
    if (bar.b >= 0) {
      const [cr, ci] = bar.phase;
      B.add(r, 2 * bar.b, cr * px, ci * px);
      B.add(r, 2 * bar.b + 1, cr * py, ci * py);
    }
  }
  return B.build(!sc.real);
}
