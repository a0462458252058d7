/** The supercell packed into typed arrays for drawing (shared by the worker and the app's preview). */
import type { Supercell } from '../supercell/supercell.js';
import { formatBoundary } from '../supercell/boundary.js';
import type { GeometryData } from './protocol.js';

export function geometryOf(sc: Supercell): GeometryData {
  const m = sc.bars.length;
  const barA = new Int32Array(m);
  const barB = new Int32Array(m);
  const barVector = new Float64Array(2 * m);
  const barPhase = new Float64Array(2 * m);
  const barWraps = new Int32Array(2 * m);
  sc.bars.forEach((b, r) => {
    barA[r] = b.a;
    barB[r] = b.b;
    barVector[2 * r] = b.vector[0];
    barVector[2 * r + 1] = b.vector[1];
    barPhase[2 * r] = b.phase[0];
    barPhase[2 * r + 1] = b.phase[1];
    barWraps[2 * r] = b.wraps[0];
    barWraps[2 * r + 1] = b.wraps[1];
  });
  const lat = sc.framework.lattice;
  return {
    lattice: [
      [lat[0][0], lat[0][1]],
      [lat[1][0], lat[1][1]],
    ],
    cells: [sc.cells[0], sc.cells[1]],
    sites: sc.sites,
    jointCount: sc.jointCount,
    positions: Float64Array.from(sc.positions),
    jointCells: Int32Array.from(sc.jointCells),
    barA,
    barB,
    barVector,
    barPhase,
    barWraps,
    bc: formatBoundary(sc.boundary),
    real: sc.real,
    dropped: sc.dropped,
    grounded: sc.grounded,
  };
}
