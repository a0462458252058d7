/**
 * Step 1, local flexes: the restricted kernels of square windows, smallest first; and the corner
 * windows of a free sample whose count never saturates, whose flexes go to the rest.
 */
import type { ClassifiedMode } from '../classes.js';
import { jointsOfCells, type State } from './context.js';
import { expand } from './cvec-ops.js';
import { basicMetrics, jointWeights } from './metrics.js';
import { wholeLineOf, type Axes, type Region } from './regions.js';
import { restrictedKernel } from './restricted-kernel.js';

/** A local flex found in a window holding a corner of a free sample. */
export interface CornerFind {
  corner: string;
  /** The window size. */
  size: number;
  /** The flex's index in the span. */
  index: number;
  mode: ClassifiedMode;
}

/**
 * Adds the new flexes of every window (smallest first) to the span and to the modes: local, or
 * line when the flex is a whole straight line of the sample. Returns the finds in corner windows.
 */
/** The corner of a sample with no wrapping axis that a window holds (the first, when several), or null. */
export function cornerOfWindow(ax: Axes, win: Region): string | null {
  if (ax.px || ax.py) return null;
  const corners: [string, number][] = [
    ['bottom-left', 0],
    ['bottom-right', ax.N1 - 1],
    ['top-left', (ax.N2 - 1) * ax.N1],
    ['top-right', ax.N2 * ax.N1 - 1],
  ];
  return corners.find(([, c]) => win.cells.includes(c))?.[0] ?? null;
}

export function findLocal(state: State, windows: Region[], stripsByCell: Region[][]): CornerFind[] {
  const { ctx, geo, span, f, modes, tick } = state;
  const n = ctx.n;
  const J = ctx.sc.jointCount;
  const ax = geo.ax;
  const cornerFinds: CornerFind[] = [];
  const cornerOf = (win: Region) => cornerOfWindow(ax, win);
  for (const win of windows) {
    if (span.dim < f) {
      const block = restrictedKernel(ctx, jointsOfCells(ctx, win.cells));
      const base = span.dim;
      for (const [t, v] of span.extend(block).entries()) {
        const full = expand(n, block.dofs, v);
        const w = jointWeights(full, J);
        // a window flex that is a whole straight line of the sample (a short line cutting a
        // corner) is a line: how many such lines fit in a window depends on the window only
        const line = wholeLineOf(stripsByCell, geo, w);
        if (line) modes.push({ class: 'line', vector: full, ...basicMetrics(geo, w), direction: line.direction, region: `${win.label}, whole ${line.label}` });
        else {
          const mode: ClassifiedMode = { class: 'local', vector: full, ...basicMetrics(geo, w), region: win.label };
          modes.push(mode);
          const corner = cornerOf(win);
          if (corner) cornerFinds.push({ corner, size: win.width, index: base + t, mode });
        }
      }
    }
    tick('local windows');
  }
  return cornerFinds;
}

/**
 * Corner windows: when every corner window from size w0 up to the largest adds flexes, the
 * count at that corner has not saturated; the flexes found from w0 on are pieces of a boundary
 * family (how many fit depends on the window) and go to the rest, where they are localised and
 * tested for decay like every boundary mode. Removes them from `modes`; returns their span
 * indices and how many each window size confines.
 */
export function confineCorners(
  modes: ClassifiedMode[],
  cornerFinds: CornerFind[],
  window: number,
): { confinedIdx: Set<number>; windowDependence: { window: number; cornerConfined: number }[] } {
  const confinedIdx = new Set<number>();
  const windowDependence: { window: number; cornerConfined: number }[] = [];
  // per corner, the sizes from which every larger corner window still added a flex
  const from = new Map<string, number>();
  for (const corner of new Set(cornerFinds.map((c) => c.corner))) {
    let w0 = window + 1;
    while (w0 > 1 && cornerFinds.some((c) => c.corner === corner && c.size === w0 - 1)) w0--;
    from.set(corner, w0);
  }
  const confined = cornerFinds.filter((c) => c.size >= from.get(c.corner)!);
  for (const c of confined) confinedIdx.add(c.index);
  const drop = new Set(confined.map((c) => c.mode));
  for (let t = modes.length - 1; t >= 0; t--) if (drop.has(modes[t])) modes.splice(t, 1);
  for (let size = 1; size <= window; size++) windowDependence.push({ window: size, cornerConfined: confined.filter((c) => c.size <= size).length });
  return { confinedIdx, windowDependence };
}
