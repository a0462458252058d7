/**
 * The rigidity (compatibility) matrix R of a supercell: one row per bar (kept or grounded),
 * two columns per joint (x then y velocity). R maps joint velocities u to first-order bar
 * length changes. The row of bar a→b with phase factor φ holds −p at a and +φ·p at b, p the
 * unwrapped bar vector of its unit-cell bar (scaledBarVectors: in units of sc.lengthScale, so
 * that the entries are near 1 at any input scale and singular values are in units of
 * lengthScale); a grounded bar has only its inside end.
 * Flexes are ker R, self-stresses ker Rᴴ.
 */
import { resolveBars, type Framework } from '../framework/types.js';
import { SparseBuilder, type SparseMatrix } from '../linalg/sparse.js';
import type { Supercell } from './supercell.js';

/**
 * In units of lengthScale the longest bar is at least ~0.7 long, so σ_max(R) ≳ 0.7 and entries
 * this small change no singular value by more than ~1e-200·√(entries): far below rounding. They
 * arise as subnormal numbers (e.g. a frame turned by 1e-320 rad), which upset the dense SVD
 * (σ_max of a 2×1 pinned square grid came out 1.74 instead of √3 with one entry of 3e-323).
 */
const NEGLIGIBLE = 1e-200;

/**
 * The unit cell's bar vectors divided by lengthScale, 2 entries per bar in file order:
 * ((to − from) + s1·a1 + s2·a2) / lengthScale. The joint difference comes first, so a framework
 * placed far from the origin loses no digits to its offset (to + shift − from would round at
 * the offset's magnitude). Every assembly of R (rigidityMatrix, rigidityApply, SymbolAssembler)
 * takes its numbers from here, so they agree exactly. Components under `negligible` (in units of
 * lengthScale) are set to 0.
 */
export function scaledBarVectors(fw: Framework, lengthScale: number, negligible = NEGLIGIBLE): Float64Array {
  const [a1, a2] = fw.lattice;
  const bars = resolveBars(fw);
  const out = new Float64Array(2 * bars.length);
  bars.forEach(({ from, to, shift: [s1, s2] }, r) => {
    const pa = fw.joints[from].at;
    const pb = fw.joints[to].at;
    out[2 * r] = (pb[0] - pa[0] + (s1 * a1[0] + s2 * a2[0])) / lengthScale;
    out[2 * r + 1] = (pb[1] - pa[1] + (s1 * a1[1] + s2 * a2[1])) / lengthScale;
  });
  for (let i = 0; i < out.length; i++) if (Math.abs(out[i]) < negligible) out[i] = 0;
  return out;
}

export function rigidityMatrix(sc: Supercell): SparseMatrix {
  const B = new SparseBuilder(2 * sc.jointCount);
  const p = scaledBarVectors(sc.framework, sc.lengthScale);
  for (const bar of sc.bars) {
    const r = B.newRow();
    const px = p[2 * bar.source];
    const py = p[2 * bar.source + 1];
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
  const p = scaledBarVectors(sc.framework, sc.lengthScale);
  sc.bars.forEach((bar, r) => {
    const px = p[2 * bar.source];
    const py = p[2 * bar.source + 1];
    let v = 0;
    if (bar.a >= 0) v += -px * u[2 * bar.a] - py * u[2 * bar.a + 1];
    if (bar.b >= 0) v += bar.phase[0] * px * u[2 * bar.b] + bar.phase[0] * py * u[2 * bar.b + 1];
    out[r] = v;
  });
  return out;
}
