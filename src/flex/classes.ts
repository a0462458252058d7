/**
 * The data model of "where flexes live": classes, a localised basis and its metrics.
 * (The classifier itself is src/flex/classify.ts; this file is types and constants only, so
 * the CLI, the worker and the app can share them.)
 */
import type { CVec } from '../linalg/complex.js';

export type FlexClass = 'local' | 'line' | 'decaying' | 'bulk';
export const FLEX_CLASSES: readonly FlexClass[] = ['local', 'line', 'decaying', 'bulk'];

export interface ClassifyOptions {
  /** Largest window (w×w cells) for local flexes; default 3. */
  window?: number;
  /** Largest strip width (cells) for line flexes; default 2. */
  strip?: number;
}

export interface Anchor {
  /** A side of the supercell, a corner, or an interior point. */
  kind: 'side' | 'corner' | 'point';
  /** 'left' | 'right' | 'bottom' | 'top' for sides, e.g. 'bottom-left' for corners, 'interior' for points. */
  name: string;
  /** Cartesian position of the anchor (a point on the side, the corner, or the point). */
  at: [number, number];
}

export interface ClassifiedMode {
  class: FlexClass;
  /** Joint velocities, 2 entries per supercell joint (x, y), unit 2-norm; im all 0 when real. */
  vector: CVec;
  /** Number of joints carrying the vector's weight (to the rank tolerance). */
  support: number;
  /** Extents of the support along its two principal directions, in cells. */
  extents: [number, number];
  /** Lattice direction (p, q) of a line flex's strip. */
  direction?: [number, number];
  /** Where a decaying flex is anchored. */
  anchor?: Anchor;
  /** Decay length ξ in cells of a decaying flex (squared amplitude ∝ exp(−2d/ξ)... see thresholds). */
  decayLength?: number;
  /** Participation ratio (Σ|u_k|²)² / (J·Σ|u_k|⁴) over joints k, in (0, 1]. */
  participation: number;
}

export interface Classification {
  flexes: number;
  trivialFlexes: number;
  counts: Record<FlexClass, number>;
  /** Every threshold used, stated in the output. */
  thresholds: Record<string, number | string>;
  modes: ClassifiedMode[];
}
