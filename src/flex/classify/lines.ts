/**
 * Step 2, line flexes: the directions that can carry a line, then strips narrowest first: each
 * strip's kernel, its short sub-segment pieces (kept in the span, sent to the rest), and the
 * lines, ker_S modulo everything known.
 */
import { cnorm as norm } from '../../linalg/complex.js';
import type { Supercell } from '../../supercell/supercell.js';
import { jointsOfCells, type State } from './context.js';
import { combine, expand, hermitianEigen, scaleInPlace, type Block } from './cvec-ops.js';
import { frameworkLineDirections } from './line-directions.js';
import { basicMetrics, jointWeights } from './metrics.js';
import { shortSegments, type Region } from './regions.js';
import { certify, restrictedKernel } from './restricted-kernel.js';

/**
 * The strip directions to use: those asked for (default: the framework's straight bar chains)
 * that carry a straight line of bars; a warning for each one that does not.
 */
export function usableDirections(sc: Supercell, requested: [number, number][] | undefined, warnings: string[]): [number, number][] {
  // line directions come from the framework: the lattice directions of its straight bar chains
  const frameworkLines = frameworkLineDirections(sc.framework).map((l) => l.direction);
  const carriesLine = (d: [number, number]) => frameworkLines.some((e) => (e[0] === d[0] && e[1] === d[1]) || (e[0] === -d[0] && e[1] === -d[1]));
  const asked = (requested ?? frameworkLines).map((d) => [d[0], d[1]] as [number, number]);
  const directions = asked.filter(carriesLine);
  for (const d of asked)
    if (!carriesLine(d)) warnings.push(`direction (${d[0]}, ${d[1]}) carries no straight line of bars in this framework, so no line flex can run along it; it was not used`);
  return directions;
}

/**
 * Strips, narrowest first; for each width: the strips' kernels and their short sub-segments
 * (M grows by the short pieces), then the lines of that width, ker_S ⊖ M. Narrower lines are
 * known before wider strips are cut, so a whole short line (at a corner) is never taken as a
 * short piece of a wider strip. Returns the span indices of the short pieces and the seconds
 * spent on strips and on lines.
 */
export function findLines(state: State, strips: Region[]): { shortIdx: Set<number>; stripTime: { strips: number; lines: number } } {
  const { ctx, geo, span, f, modes, tick } = state;
  const n = ctx.n;
  const J = ctx.sc.jointCount;
  const shortIdx = new Set<number>();
  const widths = [...new Set(strips.map((s) => s.width))].sort((a, b) => a - b);
  const stripTime = { strips: 0, lines: 0 };
  for (const width of widths) {
    const stripKernels: { region: Region; block: Block }[] = [];
    let t0 = performance.now();
    for (const s of strips) {
      if (s.width !== width) continue;
      if (span.dim < f) {
        const block = restrictedKernel(ctx, jointsOfCells(ctx, s.cells));
        if (block.vectors.length) {
          stripKernels.push({ region: s, block });
          addShortPieces(state, s, block, shortIdx);
        }
      }
      tick('strips');
    }
    stripTime.strips += (performance.now() - t0) / 1000;
    t0 = performance.now();
    // lines of this width: strip kernels modulo M
    for (const { region, block } of stripKernels) {
      if (span.dim < f) {
        for (const v of span.extend(block)) {
          const full = expand(n, block.dofs, v);
          const w = jointWeights(full, J);
          modes.push({ class: 'line', vector: full, ...basicMetrics(geo, w), direction: region.direction, region: region.label });
        }
      }
      tick('lines');
    }
    stripTime.lines += (performance.now() - t0) / 1000;
  }
  return { shortIdx, stripTime };
}

/**
 * Sub-segment kernels inside ker_S (`block`, the kernel of strip s): candidates small outside
 * the segment T (≤ SPAN_TOLERANCE), cut to T and kept by the rank rule, like every restricted
 * kernel. The new ones join the span; their indices are added to `shortIdx`.
 */
function addShortPieces(state: State, s: Region, block: Block, shortIdx: Set<number>): void {
  const { ctx, geo, span } = state;
  const jointPos = new Map<number, number>();
  block.dofs.forEach((d, t) => {
    if (t % 2 === 0) jointPos.set(d >> 1, t >> 1);
  });
  const cellOfJoint = (j: number) => geo.jointCell[j];
  for (const seg of shortSegments(s)) {
    const segCells = new Set(seg.map((t) => s.cells[t]));
    const outside: number[] = [];
    for (const [j, t] of jointPos) if (!segCells.has(cellOfJoint(j))) outside.push(t);
    const k = block.vectors.length;
    const Hre = new Float64Array(k * k);
    const Him = block.vectors.some((v) => v.im.some((x) => x !== 0)) ? new Float64Array(k * k) : null;
    for (const t of outside)
      for (const comp of [2 * t, 2 * t + 1])
        for (let a = 0; a < k; a++) {
          const ar = block.vectors[a].re[comp];
          const ai = block.vectors[a].im[comp];
          for (let b = 0; b < k; b++) {
            const br = block.vectors[b].re[comp];
            const bi = block.vectors[b].im[comp];
            Hre[a * k + b] += ar * br + ai * bi;
            if (Him) Him[a * k + b] += ar * bi - ai * br;
          }
        }
    const eig = hermitianEigen(Hre, Him, k);
    const short: { re: Float64Array; im: Float64Array }[] = [];
    eig.values.forEach((lam, t) => {
      if (lam > ctx.spanTol ** 2) return;
      const v = combine(block.vectors, eig.vectors[t]);
      for (const tt of outside) v.re[2 * tt] = v.re[2 * tt + 1] = v.im[2 * tt] = v.im[2 * tt + 1] = 0;
      const nv = norm(v);
      if (nv > 0.5) {
        scaleInPlace(v, 1 / nv);
        short.push(v);
      }
    });
    const pieces = certify(ctx, block.dofs, short);
    if (pieces.length) {
      const before = span.dim;
      span.extend({ dofs: block.dofs, vectors: pieces });
      for (let t = before; t < span.dim; t++) shortIdx.add(t);
    }
  }
}
