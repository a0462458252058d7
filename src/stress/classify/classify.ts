/**
 * Where self-stresses live: a basis-independent split of the self-stress space W = ker Rᴴ (one
 * entry per bar row) into local, line, decaying and bulk, the flex classifier's idea
 * (src/flex/classify/classify.ts, whose header has the details) carried over from joints to bars.
 *
 *  - A self-stress supported on a bar set S is a vector w, zero off S, with Rᴴw = 0 (equilibrium
 *    at every joint). These are exactly ker A_Sᴴ, A_S the rows S of R on the columns they touch
 *    (bars.ts `restrictedCokernel`, a dense SVD; σ ≤ the global absolute tolerance counts as 0,
 *    so restricted decisions agree with the global count).
 *  - The bars of a region of cells are the bars whose joint ends (ground ends aside) all lie in
 *    its cells; a grounded bar of a pinned side belongs with its inside joint.
 *  - local: the span L of the self-stresses on the bars of square windows of 1×1 up to w×w cells
 *    (default 3) at every position (regions.ts `windowsOf`, wrapping across twisted axes). A
 *    window stress whose support is one straight line of collinear bars along a strip direction,
 *    covering ≥ 2/3 of its strip (regions.ts `wholeLineOf`), is a line. Each window first offers
 *    the stresses of its straight chains (its bars parallel to a width-1 strip through it), so
 *    that several whole lines in one window enter the span one by one, not mixed.
 *    Corner windows of a free sample whose count never saturates send their stresses to the rest
 *    (local.ts `confineCorners`).
 *  - line: strips up to s cells wide (default 2) along the framework's straight bond lines
 *    (line-directions.ts), narrowest first. Per width: the stresses on the bars of the strips'
 *    sub-segments shorter than 2/3 of a strip (short pieces) join M; then the strip kernels ⊖ M
 *    (M = L + short pieces + narrower lines) are lines. On a torus a line is the tension of a
 *    closed straight bond line; with two pinned sides, the tension of a line between them.
 *  - The rest, W ⊖ (L ⊕ lines), is decided inside W from the principal angles with the global
 *    self-stress basis (sin² ≤ ½ inside), split near/far by the nearest-side distance operator
 *    (rest-split.ts), localised by SCDM (scdm.ts; Damle, Lin & Ying, J. Chem. Theory Comput. 11,
 *    1463–1469, 2015) and tested for decay from a corner, side or point (metrics.ts `decayOf`,
 *    the flex thresholds): decaying, else bulk. Pinned sides carry edge self-stresses: they land
 *    in local (when they fit a window) or decaying, anchored at that side.
 * Span decisions count a residual ≤ SPAN_TOLERANCE as known. Counts add up to the self-stresses.
 * The bar metrics reuse the flex ones with bars in place of joints (bars.ts `barGeometry`):
 * support counts bars, extents are cells, distances whole cells from a bar's cell.
 * Periodic supercells (both axes θ = 0) get each mode's macroscopic stress (macroscopic.ts).
 */
import { Matrix, SingularValueDecomposition } from 'ml-matrix';
import { FLEX_CLASSES, type ClassifiedMode, type FlexClass } from '../../flex/classes.js';
import type { FlexAnalysis } from '../../flex/spaces.js';
import { allReal, expand, type Cx } from '../../flex/classify/cvec-ops.js';
import { usableDirections } from '../../flex/classify/lines.js';
import { confineCorners, cornerOfWindow, type CornerFind } from '../../flex/classify/local.js';
import { basicMetrics, decayOf } from '../../flex/classify/metrics.js';
import { indexStrips, shortSegments, stripsOf, wholeLineOf, windowsOf, type Region } from '../../flex/classify/regions.js';
import { splitByBoundaryDistance } from '../../flex/classify/rest-split.js';
import { principalSplit } from '../../flex/classify/rest.js';
import { checkOptions } from '../../flex/classify/classify.js';
import { KERNEL_INTERSECTION_MAX_COLUMNS, KernelCache } from '../../flex/classify/restricted-kernel.js';
import { scdm } from '../../flex/classify/scdm.js';
import { Span } from '../../flex/classify/span.js';
import { FIT_FLOOR, HEAD_WEIGHT, LINE_COVERAGE, MIN_R2, SPAN_TOLERANCE, SUPPORT_AMPLITUDE } from '../../flex/classify/thresholds.js';
import { complexOrthonormalSpan, type CVec } from '../../linalg/complex.js';
import type { Supercell } from '../../supercell/supercell.js';
import { BarIndex, barGeometry, MAX_REGION_BARS, restrictedCokernel } from './bars.js';
import { cellArea, isPeriodic, macroscopicStress, TRACELESS_RELATIVE, type MacroStress } from './macroscopic.js';

/** The self-stress classes carry the flex classes' names. */
export type StressClass = FlexClass;
export const STRESS_CLASSES: readonly StressClass[] = FLEX_CLASSES;

/**
 * One localised self-stress. `vector` holds one entry per bar row (w, unit 2-norm; im all 0 when
 * real), `support` counts bars, `extents` the cells spanned by those bars; the other fields mean
 * what they mean for flexes. `affine` is never set.
 */
export interface StressMode extends ClassifiedMode {
  /** Periodic supercells only: the macroscopic stress per cell (macroscopic.ts). */
  macroscopicStress?: MacroStress;
}

export interface StressClassifyOptions {
  /** Largest window (w×w cells) for local self-stresses; default 3. */
  window?: number;
  /** Largest strip width (cells) for line self-stresses; default 2. */
  strip?: number;
  /** Strip directions; default the framework's straight bond lines. */
  directions?: [number, number][];
}

export interface StressClassification {
  selfStresses: number;
  counts: Record<StressClass, number>;
  /** Every threshold used, stated in the output. */
  thresholds: Record<string, number | string>;
  /** Local, line, decaying, bulk, in that order. */
  modes: StressMode[];
  /** Self-stresses on short strip pieces (part of the rest, counted as decaying or bulk). */
  shortStripStresses: number;
  /** Corner-window stresses of a free sample sent to the rest, cumulatively per window size. */
  windowDependence: { window: number; cornerConfined: number }[];
  /**
   * Periodic supercells: the macroscopic stress map on W. `rank` is the dimension of
   * {σ(w) : w ∈ W}; `traceless` says every self-stress has tr σ = 0. null otherwise.
   */
  macroscopic: { cellArea: number; convention: string; rank: number; traceless: boolean; largestTrace: number; scale: number } | null;
  warnings?: string[];
}


/** |w_b|² per bar. */
function barWeights(v: Cx): Float64Array {
  return Float64Array.from(v.re, (x, b) => x * x + v.im[b] * v.im[b]);
}

/** A bar vector w as a "joint" vector of the flex helpers: (w_b, 0) per bar. */
function embed(v: Cx): Cx {
  const m = v.re.length;
  const out = { re: new Float64Array(2 * m), im: new Float64Array(2 * m) };
  for (let b = 0; b < m; b++) {
    out.re[2 * b] = v.re[b];
    out.im[2 * b] = v.im[b];
  }
  return out;
}

function unembed(v: Cx): Cx {
  const m = v.re.length >> 1;
  return { re: Float64Array.from({ length: m }, (_, b) => v.re[2 * b]), im: Float64Array.from({ length: m }, (_, b) => v.im[2 * b]) };
}

/** The SCDM scan order of bars (ties broken by unit-cell bar, then cell row and column). */
function barOrder(sc: Supercell, cellOfBar: Int32Array): Int32Array {
  const [N1, N2] = sc.cells;
  const key = (d: number) => {
    const b = d >> 1;
    return ((sc.bars[b].source * N2 + Math.floor(cellOfBar[b] / N1)) * N1 + (cellOfBar[b] % N1)) * 2 + (d & 1);
  };
  return Int32Array.from({ length: 2 * sc.bars.length }, (_, d) => d).sort((x, y) => key(x) - key(y));
}

/** Whether bar b is parallel to lattice direction d (sine of the angle ≤ 1e-9). */
function barParallel(sc: Supercell, b: number, d: [number, number]): boolean {
  const [a1, a2] = sc.framework.lattice;
  const dx = d[0] * a1[0] + d[1] * a2[0];
  const dy = d[0] * a1[1] + d[1] * a2[1];
  const [px, py] = sc.bars[b].vector;
  return Math.abs(px * dy - py * dx) <= 1e-9 * Math.hypot(px, py) * Math.hypot(dx, dy);
}

/** Whether every support bar of w (weights |w_b|²) is parallel to lattice direction d. */
function barsAlong(sc: Supercell, w: Float64Array, d: [number, number]): boolean {
  let top = 0;
  for (const x of w) top = Math.max(top, x);
  return sc.bars.every((_, b) => !(w[b] > 1e-20 * top) || barParallel(sc, b, d));
}

/** An orthonormal real basis of the span of a real matrix's kernel vectors returned complex. */
function realBasis(vectors: CVec[], dim: number): CVec[] {
  if (allReal(vectors)) return vectors;
  const parts = vectors.flatMap((v) => [
    { re: Float64Array.from(v.re), im: new Float64Array(v.re.length) },
    { re: Float64Array.from(v.im), im: new Float64Array(v.re.length) },
  ]);
  return complexOrthonormalSpan(parts, 1e-6, dim);
}


/**
 * Split the self-stresses of `sc` (as analysed in `analysis`) into local, line, decaying and
 * bulk; see the file header. Counts sum to analysis.selfStresses.
 */
export function classifyStresses(sc: Supercell, analysis: FlexAnalysis, options: StressClassifyOptions = {}): StressClassification {
  const { window, strip } = checkOptions(options, 'The self-stress classification options cannot be used:');
  const warnings: string[] = [];
  const directions = usableDirections(sc, options.directions, warnings);
  const s = analysis.selfStresses;
  const m = sc.bars.length;
  const R = analysis.matrix();
  const real = R.im === null;
  // R = analysis.matrix() is in units of lengthScale (a power of two: exact division)
  const absTol = analysis.tolerance.absolute / analysis.lengthScale;
  const geo = barGeometry(sc);
  const ax = geo.ax;
  const index = new BarIndex(sc);
  const cache = new KernelCache();
  const span = new Span(m, SPAN_TOLERANCE);
  const modes: StressMode[] = [];
  const kernelOf = (cells: number[]) => restrictedCokernel(R, index.barsIn(cells), absTol, cache);

  const windows = windowsOf(ax, window);
  const strips = directions.flatMap((d) => stripsOf(ax, d, strip)).sort((a, b) => a.width - b.width);
  const stripsByCell = indexStrips(strips, ax);

  // 1. local: window kernels, smallest first (a whole straight line of the sample is a line)
  const cornerFinds: CornerFind[] = [];
  for (const win of windows) {
    if (span.dim >= s) break;
    // the window's straight chains first, so that whole lines enter the span on their own
    // (the span's sparsification cannot always undo a mixture of several lines)
    const winCells = new Set(win.cells);
    const seen = new Set<string>();
    const blocks = [];
    for (const st of new Set(win.cells.flatMap((c) => stripsByCell[c].filter((x) => x.width === 1)))) {
      const chain = index.barsIn(st.cells.filter((c) => winCells.has(c))).filter((b) => barParallel(sc, b, st.direction!));
      const key = chain.join(',');
      if (chain.length < 2 || seen.has(key)) continue;
      seen.add(key);
      blocks.push(restrictedCokernel(R, chain, absTol, cache));
    }
    blocks.push(kernelOf(win.cells));
    for (const block of blocks) {
      const base = span.dim;
      for (const [t, v] of span.extend(block).entries()) {
        const full = expand(m, block.dofs, v);
        const w = barWeights(full);
        const line = wholeLineOf(stripsByCell, geo, w);
        if (line && barsAlong(sc, w, line.direction!)) {
          modes.push({ class: 'line', vector: full, ...basicMetrics(geo, w), direction: line.direction, region: `${win.label}, whole ${line.label}` });
        } else {
          const mode: StressMode = { class: 'local', vector: full, ...basicMetrics(geo, w), region: win.label };
          modes.push(mode);
          const corner = cornerOfWindow(ax, win);
          if (corner) cornerFinds.push({ corner, size: win.width, index: base + t, mode });
        }
      }
    }
  }
  const { confinedIdx, windowDependence } = confineCorners(modes, cornerFinds, window);

  // 2. lines: per width, short pieces first (they join M), then strip kernels ⊖ M
  const shortIdx = new Set<number>();
  for (const width of [...new Set(strips.map((x) => x.width))].sort((a, b) => a - b)) {
    const found: { region: Region; block: ReturnType<typeof kernelOf> }[] = [];
    for (const st of strips) {
      if (st.width !== width || span.dim >= s) continue;
      const block = kernelOf(st.cells);
      if (block.vectors.length === 0) continue;
      found.push({ region: st, block });
      for (const seg of shortSegments(st)) {
        const before = span.dim;
        span.extend(kernelOf(seg.map((t) => st.cells[t])));
        for (let t = before; t < span.dim; t++) shortIdx.add(t);
      }
    }
    for (const { region, block } of found) {
      if (span.dim >= s) break;
      for (const v of span.extend(block)) {
        const full = expand(m, block.dofs, v);
        modes.push({ class: 'line', vector: full, ...basicMetrics(geo, barWeights(full)), direction: region.direction, region: region.label });
      }
    }
  }

  // 3. the rest, decided inside W with the global basis
  const takenIdx = Array.from({ length: span.dim }, (_, t) => t).filter((t) => !shortIdx.has(t) && !confinedIdx.has(t));
  let phi: CVec[] | null = null;
  const basis = () => (phi ??= real ? realBasis(analysis.selfStressBasis().vectors, s) : analysis.selfStressBasis().vectors);
  let rest: Cx[] = [];
  let filtration = 'no rest: the local and line self-stresses fill the count';
  if (s > 0 && (takenIdx.length < s || m <= KERNEL_INTERSECTION_MAX_COLUMNS)) {
    const r = principalSplit(basis(), span.orthonormal(takenIdx), real);
    rest = r.rest;
    filtration = `dim (local + line) ∩ W from the principal angles (sin² ≤ ½ inside): largest sin inside ${r.leakage.toExponential(2)}, smallest outside ${r.separation === null ? '—' : r.separation.toExponential(2)}`;
    if (r.inside < modes.length) {
      warnings.push(`the local and line self-stresses found span ${modes.length} dimensions but only ${r.inside} lie in the self-stress space: the rank tolerance is not consistent between the restricted problems and the whole matrix; the last ${modes.length - r.inside} found are left out`);
      modes.length = r.inside;
    }
    if (r.leakage > 1e3 * SPAN_TOLERANCE) warnings.push(`the local and line self-stresses stick out of the self-stress space by ${r.leakage.toExponential(2)}`);
  }

  // 4. near/far split, SCDM within each part, then decaying or bulk
  if (rest.length) {
    const { near, far } = splitByBoundaryDistance(geo, rest.map(embed));
    const order = barOrder(sc, geo.jointCell);
    const cplx = !real;
    const localised = [...(near.length ? scdm(near, cplx, order) : []), ...(far.length ? scdm(far, cplx, order) : [])].map(unembed);
    for (const v of localised) {
      const w = barWeights(v);
      const fit = decayOf(geo, w);
      const base = basicMetrics(geo, w);
      if (fit) modes.push({ class: 'decaying', vector: v, ...base, anchor: fit.anchor, decayLength: fit.xi, fitQuality: fit.r2, headWeight: fit.headWeight });
      else modes.push({ class: 'bulk', vector: v, ...base });
    }
  }

  // a deterministic sign for real modes: the first largest entry (in bar order) positive
  if (real)
    for (const md of modes) {
      let top = 0;
      for (const x of md.vector.re) top = Math.max(top, Math.abs(x));
      const first = md.vector.re.findIndex((x) => Math.abs(x) >= (1 - 1e-9) * top);
      if (md.vector.re[first] < 0) for (let b = 0; b < m; b++) md.vector.re[b] = -md.vector.re[b] + 0;
    }
  const order: Record<StressClass, number> = { local: 0, line: 1, decaying: 2, bulk: 3 };
  modes.sort((a, b) => order[a.class] - order[b.class]);
  const counts: Record<StressClass, number> = { local: 0, line: 0, decaying: 0, bulk: 0 };
  for (const md of modes) counts[md.class]++;

  // 5. macroscopic stress (periodic only)
  let macroscopic: StressClassification['macroscopic'] = null;
  if (isPeriodic(sc)) {
    for (const md of modes) md.macroscopicStress = macroscopicStress(sc, md.vector);
    macroscopic = { cellArea: cellArea(sc), convention: MACRO_CONVENTION, ...macroscopicMap(sc, s > 0 ? basis() : []) };
  }
  if (analysis.gap.ambiguous) warnings.push('the rank of the whole matrix is ambiguous at this tolerance (narrow singular-value gap), so the classes are too');

  return {
    selfStresses: s,
    counts,
    thresholds: {
      window,
      strip,
      directions: directions.map((d) => `(${d[0]},${d[1]})`).join(' ') || 'none (no straight line of bars)',
      barsOfRegion: 'bars whose joint ends (ground ends aside) all lie in the region’s cells',
      windowsTried: 'square, 1×1 up to window×window cells, every position; per window its straight chains of parallel bars first, then all its bars',
      windowDependence: windowDependence.map((x) => `${x.window}:${x.cornerConfined}`).join(' '),
      lineCoverage: LINE_COVERAGE,
      rankToleranceRelative: analysis.tolerance.relative,
      rankToleranceAbsolute: analysis.tolerance.absolute,
      restrictedSolve: `dense SVD of the region’s rows of R; σ ≤ rankToleranceAbsolute is zero; at most ${MAX_REGION_BARS} bars per region`,
      spanTolerance: SPAN_TOLERANCE,
      filtration,
      restSplit: 'eigenvectors of the nearest-side distance operator (bar cells) compressed to the rest: far or near at the head radius',
      restLocalisation: 'SCDM, orthonormal form (Damle, Lin & Ying 2015), over bars, within near and within far separately',
      supportAmplitude: SUPPORT_AMPLITUDE,
      headWeight: HEAD_WEIGHT,
      headRadius: 'max(1, floor(rings/4)) cells',
      minR2: MIN_R2,
      fitFloor: FIT_FLOOR,
      distance: 'whole cells from a bar’s cell (that of its from joint, or its inside joint when grounded)',
      ...(macroscopic ? { tracelessRelative: TRACELESS_RELATIVE, macroscopicRankRelative: MACRO_RANK_RELATIVE } : {}),
    },
    modes,
    shortStripStresses: shortIdx.size,
    windowDependence,
    macroscopic,
    ...(warnings.length ? { warnings } : {}),
  };
}

export const MACRO_CONVENTION =
  'σ = Σ_b t_b p_b⊗p_b/|p_b| / (N1·N2) = Σ_b w_b p_b⊗p_b / (N1·N2): w the unit self-stress vector of Rᴴ with R’s rows p·(u_to − u_from), ' +
  't_b = w_b|p_b| the axial force (tension positive), p_b the bar vector in framework units; force × length per cell (divide by cellArea for force per length)';

/** Singular values of the map w ↦ (σxx, √2σxy, σyy) on W above this × `scale` count. */
export const MACRO_RANK_RELATIVE = 1e-9;

/**
 * The macroscopic stress map on W (orthonormal basis Φ): its rank, and the largest |tr σ(w)|
 * over unit w ∈ W (= ‖Φᴴ t‖, t_b = |p_b|²/cells), traceless when ≤ TRACELESS_RELATIVE × scale,
 * scale = ‖t‖ = sqrt(Σ|p_b|⁴)/cells (a bound on ‖σ(w)‖ for unit w).
 */
function macroscopicMap(sc: Supercell, phi: CVec[]): { rank: number; traceless: boolean; largestTrace: number; scale: number } {
  const cells = sc.cells[0] * sc.cells[1];
  let scale = 0;
  for (const bar of sc.bars) scale += (bar.vector[0] ** 2 + bar.vector[1] ** 2) ** 2;
  scale = Math.sqrt(scale) / cells;
  if (phi.length === 0) return { rank: 0, traceless: true, largestTrace: 0, scale };
  const M = new Matrix(Math.max(3, phi.length), 3);
  let tr2 = 0;
  phi.forEach((v, k) => {
    const st = macroscopicStress(sc, v);
    M.set(k, 0, st.xx);
    M.set(k, 1, Math.SQRT2 * st.xy);
    M.set(k, 2, st.yy);
    tr2 += st.trace ** 2;
  });
  const sv = new SingularValueDecomposition(M, { computeLeftSingularVectors: false, computeRightSingularVectors: false }).diagonal;
  const rank = sv.filter((x) => x > MACRO_RANK_RELATIVE * scale).length;
  const largestTrace = Math.sqrt(tr2);
  return { rank, traceless: largestTrace <= TRACELESS_RELATIVE * scale, largestTrace, scale };
}

export { axialForces, cellArea, macroscopicStress, type MacroStress } from './macroscopic.js';
