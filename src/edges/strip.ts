/**
 * Counted edge modes: a strip one cell long along the edge, twisted there by the edge phase,
 * `width` cells across with both sides free (boundary `x=twist:θ,y=free` for an edge along a1).
 * Its flexes are the zero modes at that edge wave number. They are split between the sides
 * without choosing a basis: the weight of a side is the trace of the flex projector over the
 * joints in that half of the strip (rows of cells below or above the middle; the middle row of
 * an odd width is shared equally).
 *
 * Counted edge self-stresses: the same strip with both sides pinned. Its self-stresses are
 * split the same way by the trace of their projector over the bars of each half (a bar sits at
 * the mean row of its moving ends; a grounded bar at the row of its one moving end).
 */
import { count } from '../analysis.js';
import type { Framework } from '../framework/types.js';
import type { EdgeAxis } from './laurent.js';

export interface StripCount {
  /** Supercell size and boundary text given to count(). */
  cells: [number, number];
  boundary: string;
  flexes: number;
  selfStresses: number;
  /** Projector weight of the flexes on the low and high halves (sum = flexes). */
  weightLow: number;
  weightHigh: number;
  /** Whether the count is certified (src/flex/solver.ts status). */
  certified: boolean;
}

export interface PinnedStripCount {
  cells: [number, number];
  boundary: string;
  flexes: number;
  selfStresses: number;
  /** Projector weight of the self-stresses on the bars of the low and high halves (sum = selfStresses). */
  stressWeightLow: number;
  stressWeightHigh: number;
  certified: boolean;
}

export const DEFAULT_STRIP_WIDTH = 40;

/** Adds w to low or high by row against the middle (mid row shared equally). */
function split(acc: { low: number; high: number }, row: number, mid: number, w: number): void {
  if (row < mid) acc.low += w;
  else if (row > mid) acc.high += w;
  else {
    acc.low += w / 2;
    acc.high += w / 2;
  }
}

export function stripCount(fw: Framework, axis: EdgeAxis, phase: number, width = DEFAULT_STRIP_WIDTH): StripCount {
  const cells: [number, number] = axis === 'a1' ? [1, width] : [width, 1];
  const boundary = axis === 'a1' ? `x=twist:${phase},y=free` : `x=free,y=twist:${phase}`;
  const { analysis } = count({ framework: fw, cells, boundary });
  const S = fw.joints.length;
  // joint index (j·N1 + i)·S + s: with one cell along the edge, floor(k / S) is the row across it
  const acc = { low: 0, high: 0 };
  if (analysis.flexes > 0) {
    for (const v of analysis.flexBasis().vectors) {
      for (let k = 0; k < v.re.length / 2; k++) {
        const w = v.re[2 * k] ** 2 + v.im[2 * k] ** 2 + v.re[2 * k + 1] ** 2 + v.im[2 * k + 1] ** 2;
        split(acc, Math.floor(k / S), (width - 1) / 2, w);
      }
    }
  }
  return { cells, boundary, flexes: analysis.flexes, selfStresses: analysis.selfStresses, weightLow: acc.low, weightHigh: acc.high, certified: analysis.status.certified };
}

export function pinnedStripCount(fw: Framework, axis: EdgeAxis, phase: number, width = DEFAULT_STRIP_WIDTH): PinnedStripCount {
  const cells: [number, number] = axis === 'a1' ? [1, width] : [width, 1];
  const boundary = axis === 'a1' ? `x=twist:${phase},y=pinned` : `x=pinned,y=twist:${phase}`;
  const { supercell, analysis } = count({ framework: fw, cells, boundary });
  const S = fw.joints.length;
  const acc = { low: 0, high: 0 };
  if (analysis.selfStresses > 0) {
    const rowOf = supercell.bars.map((b) => {
      const ends = [b.a, b.b].filter((j) => j >= 0).map((j) => Math.floor(j / S));
      return ends.reduce((x, y) => x + y, 0) / ends.length;
    });
    for (const v of analysis.selfStressBasis().vectors)
      for (let r = 0; r < v.re.length; r++) split(acc, rowOf[r], (width - 1) / 2, v.re[r] ** 2 + v.im[r] ** 2);
  }
  return { cells, boundary, flexes: analysis.flexes, selfStresses: analysis.selfStresses, stressWeightLow: acc.low, stressWeightHigh: acc.high, certified: analysis.status.certified };
}
