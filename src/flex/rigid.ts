/**
 * The rigid motions a boundary allows, as orthonormal velocity fields on the supercell joints.
 *
 * Translations need every axis untwisted-or-periodic (θ = 0 wherever an axis is twisted);
 * the rotation needs no twisted axis at all (a periodic copy cannot rotate with the sample).
 * A pinned side ties the supercell to fixed ground, which fixes the frame of reference: then
 * no rigid motion is trivial (a motion relative to the ground is a genuine mechanism).
 */
import { norm2 } from '../linalg/block.js';
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
  // (each loop a small function of its own: these run once per count, on fresh code, and V8
  // compiles a one-loop function whole instead of dropping out of it where a loop ends)
  for (const name of names) {
    const f = new Float64Array(2 * n);
    if (name === 'translation x') everySecond(f, 0);
    else if (name === 'translation y') everySecond(f, 1);
    // about the centroid (rel is centred), hence orthogonal to both translations
    else quarterTurn(rel, f);
    const norm = norm2(f, null);
    if (norm === 0) continue; // a single joint cannot rotate about itself
    divideAll(f, norm);
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
  const dx = Float64Array.from(d, (v) => v[0]);
  const dy = Float64Array.from(d, (v) => v[1]);
  placeJoints(rel, sc.jointSites, sc.jointCells, dx, dy, b1[0], b1[1], b2[0], b2[1]);
  const cx = sumEverySecond(rel, 0) / n;
  const cy = sumEverySecond(rel, 1) / n;
  subtractPairs(rel, cx, cy);
  return rel;
}

/** rel_k = d_(site k) + i·b1 + j·b2 for joint k in cell (i, j). */
function placeJoints(rel: Float64Array, sites: Int32Array, cells: Int32Array, dx: Float64Array, dy: Float64Array, b1x: number, b1y: number, b2x: number, b2y: number): void {
  for (let k = 0; k < sites.length; k++) {
    const s = sites[k];
    const i = cells[2 * k];
    const j = cells[2 * k + 1];
    rel[2 * k] = dx[s] + i * b1x + j * b2x;
    rel[2 * k + 1] = dy[s] + i * b1y + j * b2y;
  }
}

/** Σ_k a[2k + offset], in order. */
function sumEverySecond(a: Float64Array, offset: number): number {
  let s = 0;
  for (let i = offset; i < a.length; i += 2) s += a[i];
  return s;
}

function subtractPairs(a: Float64Array, x: number, y: number): void {
  for (let i = 0; i < a.length; i += 2) {
    a[i] -= x;
    a[i + 1] -= y;
  }
}

/** a[2k + offset] = 1 for every k. */
function everySecond(a: Float64Array, offset: number): void {
  for (let i = offset; i < a.length; i += 2) a[i] = 1;
}

/** f = the joints' positions turned by a quarter: (−y, x). */
function quarterTurn(rel: Float64Array, f: Float64Array): void {
  for (let i = 0; i < f.length; i += 2) {
    f[i] = -rel[i + 1];
    f[i + 1] = rel[i];
  }
}

function divideAll(a: Float64Array, c: number): void {
  for (let i = 0; i < a.length; i++) a[i] /= c;
}
