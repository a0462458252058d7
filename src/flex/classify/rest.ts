/**
 * Step 3, the rest: ker R ⊖ (L ⊕ lines), the orthogonal complement in the flex space of the
 * local and line flexes taken (short pieces and corner-confined window flexes belong to it).
 */
import { realDots } from '../../linalg/block.js';
import { cdot as dot, cnorm as norm } from '../../linalg/complex.js';
import type { Ctx } from './context.js';
import { addScaled, hermitianEigen, scaleInPlace, subtractProjection, type Cx } from './cvec-ops.js';
import type { Span } from './span.js';

/**
 * The filtration (local + line) ⊂ ker R decided in ker R itself: with C = Qᴴ Φ (Q an orthonormal
 * basis of the taken span, Φ the global flex basis), the eigenvalues of I − CᴴC (f of them, in
 * [0, 1]) are sin² of the principal angles between ker R and the taken span, padded with 1. The
 * taken span holds `inside` dimensions of ker R: the eigenvalues ≤ ½. So inside ≤ f and the
 * rest, the eigenvectors of the f − inside others, completes the count to f by construction.
 * `leakage` is √ of the largest eigenvalue counted inside (about 0 when the restricted problems
 * agree with the whole matrix), `separation` √ of the smallest counted outside (about 1).
 */
export interface RestSplit {
  rest: Cx[];
  inside: number;
  /**
   * null when not measured: on large supercells (measure = false) taken vectors that are exactly
   * f (each a kernel vector of R by its restricted problem) fill the count without forming a basis.
   */
  leakage: number | null;
  separation: number | null;
}

export function restOf(ctx: Ctx, span: Span, f: number, takenIndices: number[], measure: boolean): RestSplit {
  const rest: { re: Float64Array; im: Float64Array }[] = [];
  if (f === 0) return { rest, inside: 0, leakage: 0, separation: null };
  if (takenIndices.length === f && !measure) return { rest, inside: f, leakage: null, separation: null };
  if (takenIndices.length === 0) {
    // nothing taken: the rest is the whole flex space, the flex basis itself (shared, not
    // copied: the steps after this only read the rest)
    return { rest: ctx.flexBasis(), inside: 0, leakage: 0, separation: 1 };
  }
  // the global flex basis is needed only for a rest (the count f is known without it)
  return principalSplit(ctx.flexBasis(), span.orthonormal(takenIndices), !ctx.basisComplex());
}

/**
 * The split of a space with orthonormal basis Φ (s vectors) by an orthonormal set Q (the taken
 * span): with C = Qᴴ Φ the eigenvalues of I − CᴴC are sin² of the principal angles between them
 * (padded with 1); those ≤ ½ count as inside the taken span, and the eigenvectors of the others,
 * orthogonalised against Q, are an orthonormal basis of the rest. Shared by the flex and the
 * self-stress classifiers. `real` when every vector is real.
 */
export function principalSplit(phi: Cx[], taken: Cx[], real: boolean): { rest: Cx[]; inside: number; leakage: number; separation: number | null } {
  const s = phi.length;
  const d = taken.length;
  const n = s ? phi[0].re.length : 0;
  const Cre = new Float64Array(d * s);
  const Cim = new Float64Array(d * s);
  if (real) {
    // real vectors: the real parts' dot products, four at a time (the same sums as the complex
    // dot's, whose imaginary terms are all zero); C has s entries a row
    const phiRe = phi.map((v) => v.re);
    for (let a = 0; a < d; a++) realDots(taken[a].re, phiRe, 0, Cre, a * s);
  } else
    for (let a = 0; a < d; a++)
      for (let b = 0; b < s; b++) {
        const [sr, si] = dot(taken[a], phi[b]);
        Cre[a * s + b] = sr;
        Cim[a * s + b] = si;
      }
  // G = I − CᴴC, Hermitian: the upper triangle summed, the lower one its conjugate (the same
  // numbers: each entry's sum runs over c in the same order either way)
  const Gre = new Float64Array(s * s);
  const Gim = real ? null : new Float64Array(s * s);
  for (let a = 0; a < s; a++)
    for (let b = a; b < s; b++) {
      let sr = a === b ? 1 : 0;
      let si = 0;
      if (real)
        for (let c = 0; c < d; c++) sr -= Cre[c * s + a] * Cre[c * s + b];
      else
        for (let c = 0; c < d; c++) {
          const xr = Cre[c * s + a];
          const xi = Cim[c * s + a];
          const yr = Cre[c * s + b];
          const yi = Cim[c * s + b];
          sr -= xr * yr + xi * yi;
          si -= xr * yi - xi * yr;
        }
      Gre[a * s + b] = sr;
      Gre[b * s + a] = sr;
      if (Gim) {
        Gim[a * s + b] = si;
        Gim[b * s + a] = a === b ? si : -si;
      }
    }
  const eig = hermitianEigen(Gre, Gim, s);
  // ascending eigenvalues: the taken span holds those ≤ ½ (at most d of them)
  let inside = 0;
  while (inside < Math.min(d, s) && eig.values[inside] <= 0.5) inside++;
  const leakage = inside > 0 ? Math.sqrt(Math.max(0, eig.values[inside - 1])) : 0;
  const separation = inside < s ? Math.sqrt(Math.max(0, eig.values[inside])) : null;
  const rest: Cx[] = [];
  for (let t = s - 1; t >= inside; t--) {
    const y = eig.vectors[t];
    const v = { re: new Float64Array(n), im: new Float64Array(n) };
    for (let b = 0; b < s; b++) {
      const yr = y.re[b];
      const yi = y.im[b];
      if (yr === 0 && yi === 0) continue;
      addScaled(v, phi[b], yr, yi, real);
    }
    for (let pass = 0; pass < 2; pass++) for (const u of taken) subtractProjection(v, u, real);
    for (const u of rest) subtractProjection(v, u, real);
    scaleInPlace(v, 1 / norm(v));
    rest.push(v);
  }
  return { rest, inside, leakage, separation };
}
