/**
 * Macroscopic stress of a periodic self-stress (both axes periodic, θ = 0).
 *
 * Convention. R's row of bar b is p_b·(u_to − u_from) with p_b the bar vector (not the unit
 * vector), so Rᴴw = 0 says that the forces w_b·p_b balance at every joint: w_b is a force per
 * unit length and the bar's axial force (tension positive) is t_b = w_b·|p_b|. The macroscopic
 * stress per cell is
 *   σ = (1 / (N1·N2)) Σ_b t_b · p_b⊗p_b / |p_b|  =  (1 / (N1·N2)) Σ_b w_b · p_b⊗p_b,
 * the virial sum of force ⊗ bar vector (common practice). w is a unit basis vector, so σ has the
 * units of force × length per cell for w in force per length; divide by the cell area
 * |a1 × a2| for a stress in force per length. The overall sign of a basis vector is arbitrary.
 * p_b is in framework units (sc.bars[b].vector).
 */
import type { CVec } from '../../linalg/complex.js';
import { reduceTurns } from '../../supercell/boundary.js';
import type { Supercell } from '../../supercell/supercell.js';

/** A symmetric 2×2 tensor [[xx, xy], [xy, yy]]. */
export interface MacroStress {
  xx: number;
  xy: number;
  yy: number;
  trace: number;
  /** |trace| ≤ TRACELESS_RELATIVE × Σ_b |w_b|·|p_b|² / (N1·N2) (the size of the sum's terms). */
  traceless: boolean;
}

/** A trace below this fraction of the sum of the terms' sizes counts as zero. */
export const TRACELESS_RELATIVE = 1e-9;

/** The macroscopic stress is defined when both axes are periodic (twist θ ≡ 0). */
export function isPeriodic(sc: Supercell): boolean {
  const zero = (r: Supercell['boundary']['x']) => r.kind === 'twist' && reduceTurns(r.theta) === 0;
  return zero(sc.boundary.x) && zero(sc.boundary.y);
}

/** The cell area |a1 × a2| in framework units. */
export function cellArea(sc: Supercell): number {
  const [a1, a2] = sc.framework.lattice;
  return Math.abs(a1[0] * a2[1] - a1[1] * a2[0]);
}

/** σ of one self-stress w (one entry per bar row; real part used: a periodic R is real). */
export function macroscopicStress(sc: Supercell, w: CVec): MacroStress {
  const cells = sc.cells[0] * sc.cells[1];
  let xx = 0;
  let xy = 0;
  let yy = 0;
  let scale = 0;
  sc.bars.forEach((bar, b) => {
    const [px, py] = bar.vector;
    const wb = w.re[b];
    xx += wb * px * px;
    xy += wb * px * py;
    yy += wb * py * py;
    scale += Math.abs(wb) * (px * px + py * py);
  });
  const trace = (xx + yy) / cells;
  return { xx: xx / cells, xy: xy / cells, yy: yy / cells, trace, traceless: Math.abs(trace) <= (TRACELESS_RELATIVE * scale) / cells };
}

/** Axial forces t_b = w_b·|p_b| (framework units) of a self-stress w (see the file header). */
export function axialForces(sc: Supercell, w: CVec): CVec {
  const re = new Float64Array(w.re.length);
  const im = new Float64Array(w.re.length);
  sc.bars.forEach((bar, b) => {
    const len = Math.hypot(bar.vector[0], bar.vector[1]);
    re[b] = w.re[b] * len;
    im[b] = w.im[b] * len;
  });
  return { re, im };
}
