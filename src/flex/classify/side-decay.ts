/**
 * The decay lengths the symbol gives each side of the supercell: for a side of N cells along a1
 * (bottom, top) or a2 (left, right), the roots of det Φ on that side at the edge wave numbers
 * k/N, k = 1 … N − 1, that the side holds (src/edges/spectrum.ts), as a range [min, max] of
 * ξ = 1/|ln|z|| in cells. A decaying flex anchored at a side is a mixture of these wave numbers,
 * so its fitted decay length lies inside or near this range; the range is the physics, the fit a
 * summary of one localised vector.
 */
import { decaySpectrum, type Side } from '../../edges/spectrum.js';
import type { Supercell } from '../../supercell/supercell.js';

export type SideDecay = Record<Side, [number, number] | null>;

export function sideDecay(sc: Supercell): SideDecay {
  const out: SideDecay = { bottom: null, top: null, left: null, right: null };
  const { x, y } = sc.boundary;
  const [N1, N2] = sc.cells;
  const range = (axis: 'a1' | 'a2', side: Side, N: number): [number, number] | null => {
    let lo = Infinity;
    let hi = -Infinity;
    for (let k = 1; k < N; k++) {
      for (const r of decaySpectrum(sc.framework, axis, k / N).roots)
        if (r.side === side && r.decayCells !== null) {
          lo = Math.min(lo, r.decayCells);
          hi = Math.max(hi, r.decayCells);
        }
    }
    return Number.isFinite(lo) ? [lo, hi] : null;
  };
  if (y.kind === 'sides') {
    out.bottom = range('a1', 'bottom', N1);
    out.top = range('a1', 'top', N1);
  }
  if (x.kind === 'sides') {
    out.left = range('a2', 'left', N2);
    out.right = range('a2', 'right', N2);
  }
  return out;
}
