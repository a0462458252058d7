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

/**
 * R·u for a real velocity field u (2 entries per joint) without assembling R: the same entries
 * as rigidityMatrix, row by row. Only for real supercells (every phase ±1).
 */
export function rigidityApply(sc: Supercell, u: Float64Array): Float64Array {
  const out = new Float64Array(sc.bars.length);
  sc.bars.forEach((bar, r) => {
    const [px, py] = bar.vector;
    let v = 0;
    if (bar.a >= 0) v += -px * u[2 * bar.a] - py * u[2 * bar.a + 1];
    if (bar.b >= 0) v += bar.phase[0] * px * u[2 * bar.b] + bar.phase[0] * py * u[2 * bar.b + 1];
    out[r] = v;
  });
  return out;
}
