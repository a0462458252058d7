/**
 * Step 3, the rest: ker R ⊖ (L ⊕ lines), the orthogonal complement in the flex space of the
 * local and line flexes taken (short pieces and corner-confined window flexes belong to it).
 */
import { cdot as dot, cnorm as norm } from '../../linalg/complex.js';
import type { Ctx } from './context.js';
import { addScaled, hermitianEigen, scaleInPlace, subtractProjection, type Cx } from './cvec-ops.js';
import type { Span } from './span.js';

/**
 * An orthonormal basis of the rest (f − takenIndices.length vectors), from the eigenvectors of
 * I − CᴴC with C = Qᴴ Φ (Q the taken span, Φ the global flex basis), and the leakage: how far
 * the taken span sticks out of the flex space (it should be about zero).
 */
export function restOf(ctx: Ctx, span: Span, f: number, takenIndices: number[]): { rest: Cx[]; leakage: number } {
  const n = ctx.n;
  const restDim = Math.max(0, f - takenIndices.length);
  const rest: { re: Float64Array; im: Float64Array }[] = [];
  if (restDim === 0) return { rest, leakage: 0 };
  const taken = span.orthonormal(takenIndices);
  // the global flex basis is needed only for a rest (the count f is known without it)
  const phi = ctx.flexBasis();
  const restComplex = ctx.basisComplex();
  let leakage = 0;
  const d = taken.length;
  const Cre = new Float64Array(d * f);
  const Cim = new Float64Array(d * f);
  for (let a = 0; a < d; a++)
    for (let b = 0; b < f; b++) {
      const [sr, si] = dot(taken[a], phi[b]);
      Cre[a * f + b] = sr;
      Cim[a * f + b] = si;
    }
  const Gre = new Float64Array(f * f);
  const Gim = ctx.basisComplex() ? new Float64Array(f * f) : null;
  for (let a = 0; a < f; a++)
    for (let b = 0; b < f; b++) {
      let sr = a === b ? 1 : 0;
      let si = 0;
      for (let c = 0; c < d; c++) {
        const xr = Cre[c * f + a];
        const xi = Cim[c * f + a];
        const yr = Cre[c * f + b];
        const yi = Cim[c * f + b];
        sr -= xr * yr + xi * yi;
        si -= xr * yi - xi * yr;
      }
      Gre[a * f + b] = sr;
      if (Gim) Gim[a * f + b] = si;
    }
  const eig = hermitianEigen(Gre, Gim, f);
  // the d smallest eigenvalues should vanish (L ⊕ lines ⊂ ker R)
  if (d > 0) leakage = Math.sqrt(Math.max(0, eig.values[Math.min(d, f) - 1]));
  for (let t = f - 1; t >= f - restDim; t--) {
    const y = eig.vectors[t];
    const v = { re: new Float64Array(n), im: new Float64Array(n) };
    for (let b = 0; b < f; b++) {
      const yr = y.re[b];
      const yi = y.im[b];
      if (yr === 0 && yi === 0) continue;
      addScaled(v, phi[b], yr, yi, !restComplex);
    }
    for (let pass = 0; pass < 2; pass++) for (const u of taken) subtractProjection(v, u, !restComplex);
    for (const u of rest) subtractProjection(v, u, !restComplex);
    const nv = norm(v);
    scaleInPlace(v, 1 / nv);
    rest.push(v);
  }
  return { rest, leakage };
}
