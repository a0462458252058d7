/**
 * The symbol Φ(z) of a periodic framework: the unit cell's rigidity matrix for Bloch phases
 * z = (z1, z2) = (exp 2πiθ1, exp 2πiθ2), θ in turns. The row of bar a→b with shift s holds
 * −p at a and +z1^s1·z2^s2·p at b. A flex of the infinite framework with
 * u(c + cell) = z^cell·u(c) is exactly a kernel vector of Φ(z).
 */
import type { Framework } from '../framework/types.js';
import { DEFAULT_RELATIVE_TOLERANCE } from '../linalg/rank.js';
import { SparseBuilder, type SparseMatrix } from '../linalg/sparse.js';
import { singularValues } from '../linalg/dense.js';

export function symbolMatrix(fw: Framework, theta: [number, number]): SparseMatrix {
  const site = new Map(fw.joints.map((j, k) => [j.id, k]));
  const [a1, a2] = fw.lattice;
  const B = new SparseBuilder(2 * fw.joints.length);
  for (const bar of fw.bars) {
    const a = site.get(bar.from)!;
    const b = site.get(bar.to)!;
    const [s1, s2] = bar.shift;
    const pa = fw.joints[a].at;
    const pb = fw.joints[b].at;
    const px = pb[0] + s1 * a1[0] + s2 * a2[0] - pa[0];
    const py = pb[1] + s1 * a1[1] + s2 * a2[1] - pa[1];
    const ang = 2 * Math.PI * (theta[0] * s1 + theta[1] * s2);
    const cr = Math.cos(ang);
    const ci = Math.sin(ang);
    const r = B.newRow();
    B.add(r, 2 * a, -px);
    B.add(r, 2 * a + 1, -py);
    B.add(r, 2 * b, cr * px, ci * px);
    B.add(r, 2 * b + 1, cr * py, ci * py);
  }
  return B.build(true);
}

export interface SymbolKernel {
  theta: [number, number];
  kernel: number;
  cokernel: number;
  /** Singular values of Φ, descending. */
  sigma: Float64Array;
}

/**
 * dim ker Φ and dim ker Φᴴ at one phase, with the rank tolerance relative to `scale`
 * (pass the supercell's σ_max to compare with a supercell count; default: Φ's own σ_max).
 */
export function symbolKernel(fw: Framework, theta: [number, number], relative = DEFAULT_RELATIVE_TOLERANCE, scale?: number): SymbolKernel {
  const phi = symbolMatrix(fw, theta);
  const sigma = singularValues(phi);
  const smax = scale ?? (sigma.length ? sigma[0] : 0);
  const tol = relative * smax;
  let rank = 0;
  for (const s of sigma) if (s > tol) rank++;
  return { theta, kernel: phi.cols - rank, cokernel: phi.rows - rank, sigma };
}
