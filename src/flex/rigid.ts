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
  if (n === 0) return [];
  const P = sc.positions;
  let cx = 0;
  let cy = 0;
  for (let k = 0; k < n; k++) {
    cx += P[2 * k] / n;
    cy += P[2 * k + 1] / n;
  }
  const out: RigidMotion[] = [];
  for (const name of allowedRigidMotionNames(sc.boundary)) {
    const f = new Float64Array(2 * n);
    for (let k = 0; k < n; k++) {
      if (name === 'translation x') f[2 * k] = 1;
      else if (name === 'translation y') f[2 * k + 1] = 1;
      else {
        // about the centroid, hence orthogonal to both translations
        f[2 * k] = -(P[2 * k + 1] - cy);
        f[2 * k + 1] = P[2 * k] - cx;
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
