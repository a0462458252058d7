/**
 * The rigid motions a boundary allows, as orthonormal velocity fields on the supercell joints.
 *
 * Translations need every axis untwisted-or-periodic (θ = 0 wherever an axis is twisted);
 * the rotation needs no twisted axis at all (a periodic copy cannot rotate with the sample).
 * A pinned side ties the supercell to fixed ground, which fixes the frame of reference: then
 * no rigid motion is trivial (a motion relative to the ground is a genuine mechanism).
 */
import { hasPinnedSide, reduceTurns, type Boundary } from '../supercell/boundary.js';
import type { Supercell } from '../supercell/supercell.js';

export interface RigidMotion {
  name: 'translation x' | 'translation y' | 'rotation';
  /** Unit-norm velocity field, 2 entries per joint. */
  field: Float64Array;
}

export function allowedRigidMotionNames(b: Boundary): RigidMotion['name'][] {
  if (hasPinnedSide(b)) return [];
  const axes = [b.x, b.y];
  const twistFree = axes.every((r) => r.kind !== 'twist' || reduceTurns(r.theta) === 0);
  const noTwistedAxis = axes.every((r) => r.kind !== 'twist');
  const out: RigidMotion['name'][] = [];
  if (twistFree) out.push('translation x', 'translation y');
  if (noTwistedAxis) out.push('rotation');
  return out;
}

export function rigidMotions(sc: Supercell): RigidMotion[] {
  const n = sc.jointCount;
  const names = allowedRigidMotionNames(sc.boundary);
  if (n === 0 || names.length === 0) return [];
  const rel = relativePositions(sc);
  const out: RigidMotion[] = [];
  for (const name of names) {
    const f = new Float64Array(2 * n);
    for (let k = 0; k < n; k++) {
      if (name === 'translation x') f[2 * k] = 1;
      else if (name === 'translation y') f[2 * k + 1] = 1;
      else {
        // about the centroid (rel is centred), hence orthogonal to both translations
        f[2 * k] = -rel[2 * k + 1];
        f[2 * k + 1] = rel[2 * k];
      }
    }
    let s = 0;
    for (const v of f) s += v * v;
    const norm = Math.sqrt(s);
    if (norm === 0) continue; // a single joint cannot rotate about itself
    for (let i = 0; i < f.length; i++) f[i] /= norm;
    out.push({ name, field: f });
  }
  return out;
}

/**
 * Joint positions relative to their centroid, in units of sc.lengthScale, computed without
 * cancellation: (at_s − at_ref) + i·a1 + j·a2 with at_ref the first joint's position, so a
 * framework placed far from the origin (or at any scale) gives the same field as at the origin.
 * Absolute positions (sc.positions) would carry rounding errors of the offset's size.
 */
function relativePositions(sc: Supercell): Float64Array {
  const n = sc.jointCount;
  const fw = sc.framework;
  const [a1, a2] = fw.lattice;
  const ref = fw.joints[0].at;
  const L = sc.lengthScale;
  const d = fw.joints.map((jt) => [(jt.at[0] - ref[0]) / L, (jt.at[1] - ref[1]) / L]);
  const b1 = [a1[0] / L, a1[1] / L];
  const b2 = [a2[0] / L, a2[1] / L];
  const rel = new Float64Array(2 * n);
  let cx = 0;
  let cy = 0;
  for (let k = 0; k < n; k++) {
    const s = sc.jointSites[k];
    const i = sc.jointCells[2 * k];
    const j = sc.jointCells[2 * k + 1];
    rel[2 * k] = d[s][0] + i * b1[0] + j * b2[0];
    rel[2 * k + 1] = d[s][1] + i * b1[1] + j * b2[1];
    cx += rel[2 * k];
    cy += rel[2 * k + 1];
  }
  cx /= n;
  cy /= n;
  for (let k = 0; k < n; k++) {
    rel[2 * k] -= cx;
    rel[2 * k + 1] -= cy;
  }
  return rel;
}
