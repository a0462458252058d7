/**
 * Counted edge modes: a strip one cell long along the edge, twisted there by the edge phase,
 * `width` cells across with both sides free (boundary `x=twist:θ,y=free` for an edge along a1).
 * Its flexes are the zero modes at that edge wave number. They are split between the sides
 * without choosing a basis: the weight of a side is the trace of the flex projector over the
 * joints in that half of the strip (rows of cells below or above the middle; the middle row of
 * an odd width is shared equally).
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

export const DEFAULT_STRIP_WIDTH = 40;

export function stripCount(fw: Framework, axis: EdgeAxis, phase: number, width = DEFAULT_STRIP_WIDTH): StripCount {
  const cells: [number, number] = axis === 'a1' ? [1, width] : [width, 1];
  const boundary = axis === 'a1' ? `x=twist:${phase},y=free` : `x=free,y=twist:${phase}`;
  const { analysis } = count({ framework: fw, cells, boundary });
  const S = fw.joints.length;
  // joint index (j·N1 + i)·S + s: with one cell along the edge, floor(k / S) is the row across it
  let low = 0;
  let high = 0;
  if (analysis.flexes > 0) {
    for (const v of analysis.flexBasis().vectors) {
      for (let k = 0; k < v.re.length / 2; k++) {
        const row = Math.floor(k / S);
        const w = v.re[2 * k] ** 2 + v.im[2 * k] ** 2 + v.re[2 * k + 1] ** 2 + v.im[2 * k + 1] ** 2;
        const mid = (width - 1) / 2;
        if (row < mid) low += w;
        else if (row > mid) high += w;
        else {
          low += w / 2;
          high += w / 2;
        }
      }
    }
  }
  return { cells, boundary, flexes: analysis.flexes, selfStresses: analysis.selfStresses, weightLow: low, weightHigh: high, certified: analysis.status.certified };
}
