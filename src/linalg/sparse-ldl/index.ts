/**
 * Sparse LDLᴴ with a fill-reducing ordering: nested dissection (ordering.ts), symbolic analysis
 * once per pattern (symbolic.ts), multifrontal numeric factorisation per shift with inertia,
 * growth and solves (numeric.ts).
 */
import type { Graph } from '../banded.js';
import { nestedDissection, type OrderingOptions } from './ordering.js';
import { analyse, type SymbolicFactor } from './symbolic.js';
import type { HermitianCsr } from './numeric.js';

export { nestedDissection, type OrderingOptions } from './ordering.js';
export { analyse, type SymbolicFactor } from './symbolic.js';
export { factorBytes, panelWords, sparseLdl, SparseLdlFactor, type HermitianCsr, type SparseLdlOptions } from './numeric.js';

/** The pattern of A as a graph (self loops included; every consumer skips them). */
export function graphOf(A: HermitianCsr): Graph {
  return { n: A.n, ptr: A.ptr, adj: A.idx };
}

/** Ordering and symbolic analysis of A's pattern in one call. */
export function analyseHermitian(A: HermitianCsr, options: OrderingOptions = {}): SymbolicFactor {
  const g = graphOf(A);
  return analyse(g, nestedDissection(g, options));
}

/** A HermitianCsr from a dense matrix given by rows (and the imaginary parts, for a complex one); zeros are left out. */
export function hermitianFromDense(rows: number[][], imag?: number[][]): HermitianCsr {
  const n = rows.length;
  const ptr = new Int32Array(n + 1);
  const idx: number[] = [];
  const re: number[] = [];
  const im: number[] = [];
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      const a = rows[i][j];
      const b = imag ? imag[i][j] : 0;
      if (a === 0 && b === 0 && i !== j) continue;
      idx.push(j);
      re.push(a);
      im.push(b);
    }
    ptr[i + 1] = idx.length;
  }
  return { n, ptr, idx: Int32Array.from(idx), re: Float64Array.from(re), im: imag ? Float64Array.from(im) : null };
}
