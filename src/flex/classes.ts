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
  /**
   * Lattice directions (p, q) of the strips; default: every direction of a straight chain of
   * bars in the framework (src/flex/classify/line-directions.ts). Directions carrying no such
   * chain are left out with a warning.
   */
  directions?: [number, number][];
  /**
   * How flexes supported on a joint set are found: a dense SVD of the restricted matrix, the
   * banded sparse solver on it, the intersection with the global flex basis, or whichever is
   * cheapest (default 'auto').
   */
  restrictedSolve?: 'auto' | 'restricted-svd' | 'restricted-sparse' | 'kernel-intersection';
  onProgress?: (p: { fraction: number; stage: string }) => void;
  signal?: AbortSignal;
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
  /** Cells spanned by the support along a1 and along a2 (on a twisted axis the shortest arc covering it); at most N1, N2. */
  extents: [number, number];
  /** Lattice direction (p, q) of a line flex's strip. */
  direction?: [number, number];
  /** Where a decaying flex is anchored. */
  anchor?: Anchor;
  /** Decay length ξ in cells of a decaying flex (squared amplitude ∝ exp(−2d/ξ)... see thresholds). */
  decayLength?: number;
  /** Participation ratio (Σ|u_k|²)² / (J·Σ|u_k|⁴) over joints k, in (0, 1]. */
  participation: number;
  /** Local and line flexes: the window or strip whose restricted kernel gave the vector. */
  region?: string;
  /**
   * Decaying flexes anchored at a side: [min, max] of ξ (cells) of the roots of det Φ on that side
   * over the edge wave numbers k/N the side holds (src/flex/classify/side-decay.ts).
   */
  symbolDecay?: [number, number];
  /** Decaying flexes: R² of the fit of log amplitude against distance from the anchor. */
  fitQuality?: number;
  /** Decaying flexes: share of the squared amplitude within the head radius of the anchor. */
  headWeight?: number;
  /**
   * Bulk flexes that are affine fields u_s + L̇·cell (a rigid motion, a homogeneous mechanism
   * or a macroscopic strain mode), taken out of the rest before it is localised.
   */
  affine?: boolean;
}

export interface Classification {
  flexes: number;
  trivialFlexes: number;
  counts: Record<FlexClass, number>;
  /** Every threshold used, stated in the output. */
  thresholds: Record<string, number | string>;
  modes: ClassifiedMode[];
  /**
   * Flexes supported in a strip but on less than the line coverage of it, and in no window
   * (short strip pieces); they are part of the rest and counted as decaying or bulk.
   */
  shortStripFlexes?: number;
  /** Bulk flexes that are affine fields (rigid motions, homogeneous mechanisms, strain modes) in the rest. */
  affineFlexes?: number;
  /**
   * Window flexes at the corners of a free sample whose number had not saturated at the
   * largest window (they went to the rest), counted cumulatively for windows 1…window.
   */
  windowDependence?: { window: number; cornerConfined: number }[];
  /** Seconds spent per stage (windows, strips, lines, rest, localise). */
  timings?: Record<string, number>;
  /** Reasons to distrust the split (tolerance inconsistencies, an ambiguous rank). */
  warnings?: string[];
}
