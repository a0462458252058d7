/**
 * Where flexes live: a basis-independent split of the flex space K = ker R into four classes.
 *
 * Everything works with SUBSPACES of K, never with the basis a solver returned, so the counts
 * do not change when that basis is rotated, when joints are relabelled, or when the unit
 * cell's origin moves (as long as the windows and strips still hold the same supports).
 * Cells are the supercell's cells (i, j); a region is a set of cells and its joints.
 *
 *  - local: flexes supported inside a window of at most w×w cells (default w = 3), at any
 *    position: corners and edges included, wrapping across twisted axes. A flex supported on
 *    a joint set S is exactly a kernel vector of R restricted to the columns of S and the
 *    rows of every bar touching S (bars to outside joints constrain too: outside joints do
 *    not move). The local span L is the sum of these restricted kernels over square windows
 *    of 1×1 up to w×w cells at every position. Restricted problems count σ ≤ the global
 *    absolute tolerance (relative × σ_max of the whole R) as zero, so their decisions agree
 *    with the global count.
 *  - line: flexes supported inside a strip at most s cells wide (default s = 2) along a
 *    lattice direction (p, q) of a straight chain of bars of the framework
 *    (line-directions.ts; none for the twisted kagome) whose support runs along
 *    at least 2/3 of the strip's length inside the supercell. For each strip S with ℓ cells
 *    along it, the short pieces are ker_T for the sub-segments T of S shorter than 2/3·ℓ;
 *    with M = L + Σ_S Σ_T ker_T (local plus short pieces), the line span is
 *    (M + Σ_S ker_S) ⊖ M, i.e. ker_S modulo (L + short pieces), summed over strips. Strips
 *    along twisted axes wrap into closed lines whose sub-segments are arcs.
 *    Strips are taken narrowest first (short pieces of a width, then its lines), and a window
 *    flex that is a whole straight line of the sample (a short corner line) is a line.
 *    Corner windows of a free sample that keep adding flexes up to the largest window
 *    (not saturated) send those flexes to the rest; `windowDependence` counts them.
 *  - A window or strip holding every cell of the supercell is not used: in a supercell at
 *    most w (or s) cells across every flex would otherwise be local (or a line).
 *  - decaying and bulk split the rest, ker R ⊖ (L ⊕ lines) (short pieces belong to it).
 *    First the nearest-side distance operator (cells to the closest non-wrapping side) is
 *    compressed to the rest and diagonalised; eigenvectors whose mean distance reaches the
 *    head radius h (below; within 1e-9·h, so rounding never decides) are "far", the others
 *    "near" (basis-independent). Each part is
 *    then localised by SCDM, selected columns of the density matrix (A. Damle, L. Lin &
 *    L. Ying, "Compressed representation of Kohn–Sham orbitals via selected columns of the
 *    density matrix", J. Chem. Theory Comput. 11(4), 1463–1469, 2015), in its orthonormal
 *    form Ψ·U·Vᴴ with Ψ(C,:)ᴴ = UΣVᴴ and C the pivots of a column-pivoted QR of Ψᴴ; it
 *    depends on the subspace only. A localised vector is decaying when, for some anchor
 *    (a corner, a side, or the interior point given by its heaviest cell), at least
 *    HEAD_WEIGHT of its squared amplitude lies within h = max(1, ⌊E/4⌋) cells of the anchor
 *    (E = the number of distance rings from that anchor) and a least-squares fit of log
 *    amplitude (root mean square per joint of each ring, rings below FIT_FLOOR × the largest
 *    left out) against distance, each ring weighted by its share of the squared amplitude,
 *    has a negative slope with (weighted) R² ≥ MIN_R2. ξ = −1/slope, in
 *    cells, is the amplitude decay length: squared amplitude ∝ exp(−2d/ξ). Corners are tried
 *    first, then sides, then the point; among passing corners (or sides) the one with the
 *    smallest mean distance is reported. Anything else is bulk.
 * Rigid motions are NOT projected out first (that would destroy locality); they usually land
 * in bulk, and `trivialFlexes` is reported beside the counts. Counts sum to the flexes.
 *
 * Distances are whole cells from cell indices: from a side, the number of cells between a
 * joint's cell and that side; from a corner or a point, the larger of the two cell offsets
 * (wrapping along twisted axes).
 *
 * Vectors: local and line modes are the restricted-kernel vectors as found, smallest regions
 * first, each new direction made as sparse as possible by elementary operations within its
 * region (unit norm, independent, compact; not mutually orthogonal). Decaying and bulk modes
 * are the orthonormal SCDM vectors, orthogonal to every local mode (and to every line mode
 * when there are no short strip pieces).
 *
 * The restricted problems are dense SVDs (src/linalg/dense.ts) of the restricted rigidity
 * matrix for small regions, the banded sparse solver (src/flex/solve-sparse.ts) for large
 * ones, or, when the flex space is small, the same kernel {x ∈ K : x = 0 outside S} from the
 * global flex basis (candidates projected onto the restricted null space and kept by the
 * rank rule, so every method decides alike). Short pieces are kept by the same rank rule.
 * The one function that decides and runs the restricted solve is `restrictedKernel`
 * (restricted-kernel.ts). Span decisions (is a region's flex new?, span.ts) count a residual
 * ≤ SPAN_TOLERANCE as already known.
 * Cost: about 3·N1·N2 window and 4·s·(N1 + N2) strip problems, each small.
 *
 * The files of src/flex/classify/, in the order `classifyFlexes` below uses them:
 *  - thresholds.ts: the numbers named above, each with its meaning;
 *  - regions.ts: the supercell's axes, windows, strips and their short sub-segments;
 *  - context.ts: what the steps share (the matrix, tolerances, flex basis, State);
 *  - restricted-kernel.ts, null-space.ts: the restricted solve and the rank rule;
 *  - span.ts: the growing span of compact vectors (and their sparsification);
 *  - local.ts, lines.ts, rest.ts: the steps local, lines and rest;
 *  - rest-split.ts: near/far by the nearest-side distance;
 *  - scdm.ts: the SCDM localisation;
 *  - metrics.ts: support, extents, participation, and the anchor fits (decaying or bulk);
 *  - cvec-ops.ts: small complex helpers; line-directions.ts: the framework's line directions.
 */
import { InputError } from '../../errors.js';
import { prepareHelperThread, SPLIT_WORK } from '../../linalg/parallel/helper.js';
import type { Supercell } from '../../supercell/supercell.js';
import type { Classification, ClassifyOptions, FlexClass } from '../classes.js';
import { throwIfAborted } from '../solver.js';
import type { FlexAnalysis } from '../spaces.js';
import { AFFINE_IN_KERNEL, AFFINE_IN_REST, splitAffine } from './affine.js';
import { KERNEL_INTERSECTION_MAX_COLUMNS } from './restricted-kernel.js';
import { sideDecay, type SideDecay } from './side-decay.js';
import type { Side } from '../../edges/spectrum.js';
import { makeContext, type RestrictedMethod, type State } from './context.js';
import { findLines, usableDirections } from './lines.js';
import { confineCorners, findLocal } from './local.js';
import { basicMetrics, DECISION_MARGIN, decayDecision, geometryOf, jointWeights } from './metrics.js';
import { gcd, indexStrips, stripsOf, windowsOf } from './regions.js';
import { boundaryDistanceParts } from './rest-split.js';
import { restOf } from './rest.js';
import { pivotOrder, scdm, scdmOfSpan } from './scdm.js';
import type { SpanPart } from './cvec-ops.js';
import { Span } from './span.js';
import { DEFAULT_STRIP, DEFAULT_WINDOW, FIT_FLOOR, HEAD_WEIGHT, LINE_COVERAGE, MIN_R2, SUPPORT_AMPLITUDE } from './thresholds.js';

/** The window, strip and directions options, checked (shared with the self-stress classifier). */
export function checkOptions(o: Pick<ClassifyOptions, 'window' | 'strip' | 'directions'>, context = 'The classification options cannot be used:'): { window: number; strip: number } {
  const window = o.window ?? DEFAULT_WINDOW;
  const strip = o.strip ?? DEFAULT_STRIP;
  const problems = [];
  if (!Number.isInteger(window) || window < 1 || window > 50)
    problems.push({ where: 'window', what: `the window size must be a whole number of cells from 1 to 50, got ${window}`, fix: 'use e.g. window 3 (--window 3)' });
  if (!Number.isInteger(strip) || strip < 1 || strip > 50)
    problems.push({ where: 'strip', what: `the strip width must be a whole number of cells from 1 to 50, got ${strip}`, fix: 'use e.g. strip 2 (--strip 2)' });
  for (const d of o.directions ?? []) {
    if (!Array.isArray(d) || d.length !== 2 || !d.every(Number.isInteger) || gcd(d[0], d[1]) !== 1)
      problems.push({ where: 'directions', what: `(${String(d)}) is not a primitive lattice direction`, fix: 'give integer pairs (p, q) with gcd 1, e.g. [1, 0] or [1, -1]' });
  }
  if (problems.length) throw new InputError(context, problems);
  return { window, strip };
}

/**
 * Split the flex space of `sc` (as analysed in `analysis`) into local, line, decaying and
 * bulk flexes; see the file header for the definitions. Counts sum to analysis.flexes.
 */
export function classifyFlexes(sc: Supercell, analysis: FlexAnalysis, options: ClassifyOptions = {}): Classification {
  const { window, strip } = checkOptions(options);
  const warnings: string[] = [];
  const directions = usableDirections(sc, options.directions, warnings);
  const progress = options.onProgress;
  const signal = options.signal;
  const ctx = makeContext(sc, analysis, options.restrictedSolve ?? 'auto');
  const geo = geometryOf(sc);
  const ax = geo.ax;
  const J = sc.jointCount;
  const f = analysis.flexes;
  // a basis of f vectors over 2J dofs is ahead: its kernels will be split between two threads
  if (2 * J * f * f >= SPLIT_WORK) prepareHelperThread();

  const timings: Record<string, number> = {};
  let clock = performance.now();
  const lap = (name: string) => {
    const now = performance.now();
    timings[name] = (now - clock) / 1000;
    clock = now;
  };
  const windows = windowsOf(ax, window);
  const strips = directions.flatMap((d) => stripsOf(ax, d, strip)).sort((a, b) => a.width - b.width);
  for (const d of directions)
    if (!strips.some((r) => r.direction![0] === d[0] && r.direction![1] === d[1]))
      warnings.push(
        `every strip along (${d[0]}, ${d[1]}) holds the whole ${sc.cells[0]}×${sc.cells[1]} supercell, so flexes on those lines cannot be told from bulk ones here; use a supercell at least 2 cells across that direction`,
      );
  const totalSteps = windows.length + 2 * strips.length + 1;
  let step = 0;
  const tick = (stage: string) => {
    step++;
    if (progress && (step % 16 === 0 || step === totalSteps)) progress({ fraction: Math.min(1, step / totalSteps), stage });
    throwIfAborted(signal);
  };
  const state: State = { ctx, geo, span: new Span(ctx.n, ctx.spanTol), f, modes: [], tick };
  const { span, modes } = state;

  // 1. local: window kernels, smallest windows first; corner windows that never saturate send
  //    their flexes to the rest
  const cornerFinds = findLocal(state, windows, indexStrips(strips, ax));
  const { confinedIdx, windowDependence } = confineCorners(modes, cornerFinds, window);
  lap('windows');

  // 2. lines: strips narrowest first, their short pieces, then their lines
  const { shortIdx, stripTime } = findLines(state, strips);
  const nShort = shortIdx.size;
  timings.strips = stripTime.strips;
  timings.lines = stripTime.lines;
  clock = performance.now();
  // 3. the rest: ker R ⊖ (L ⊕ lines), the filtration's dimensions decided inside ker R (rest.ts)
  const takenIndices = Array.from({ length: span.dim }, (_, t) => t).filter((t) => !shortIdx.has(t) && !confinedIdx.has(t));
  const { rest: fullRest, inside, leakage, separation } = restOf(ctx, span, f, takenIndices, ctx.n <= KERNEL_INTERSECTION_MAX_COLUMNS);
  if (inside < modes.length) {
    warnings.push(
      `the local and line flexes found span ${modes.length} dimensions but only ${inside} of them lie in the flex space (principal angles: sin² ≤ ½ counts as inside): the rank tolerance is not consistent between the restricted problems and the whole matrix; the last ${modes.length - inside} found are left out`,
    );
    modes.length = inside;
  }
  if (leakage !== null && leakage > 1e3 * ctx.spanTol) warnings.push(`the local and line flexes stick out of the flex space by ${leakage.toExponential(2)}: the rank tolerance is not consistent between the restricted problems and the whole matrix`);
  throwIfAborted(signal);
  lap('rest');
  // 3a. affine flexes (rigid motions, homogeneous mechanisms and strain modes) are bulk by nature
  //    (the rest without them is rest·within.E: coefficients, never formed)
  const aff = splitAffine(sc, fullRest.length ? ctx.flexBasis() : [], fullRest);
  const rest = aff.rest;
  const within = aff.part;
  for (const v of aff.affine) modes.push({ class: 'bulk', vector: v, ...basicMetrics(geo, jointWeights(v, J)), affine: true });
  lap('affine');

  // 4. near/far: split off the extended part (boundary-distance operator); 5. localise: SCDM
  //    within each part; 6. decaying or bulk, vector by vector
  //    (the parts stay coefficients of the rest, near = rest·E_near: SCDM forms only the rows it needs)
  const parts = boundaryDistanceParts(geo, rest, within);
  lap('nearFar');
  const cplx = rest.length > 0 && ctx.basisComplex();
  const pivots = pivotOrder(sc);
  const localise = (p: SpanPart | null) => (p === null ? (rest.length ? scdm(rest, cplx, pivots) : []) : p.m ? scdmOfSpan(rest, p.E, p.m, cplx, pivots) : []);
  const localised = parts ? [...localise(parts.near), ...localise(parts.far)] : localise(within);
  lap('scdm');
  let marginal = 0;
  let decay: SideDecay | undefined;
  for (const v of localised) {
    // a real R's basis is made real (context.ts, realIfPossible), and SCDM keeps it real
    const w = jointWeights(v, J, !cplx);
    const decision = decayDecision(geo, w);
    const fit = decision.fit;
    if (decision.marginal) marginal++;
    const base = basicMetrics(geo, w);
    if (fit) {
      const fromSymbol = fit.anchor.kind === 'side' ? (decay ??= sideDecay(sc))[fit.anchor.name as Side] : null;
      modes.push({ class: 'decaying', vector: v, ...base, anchor: fit.anchor, decayLength: fit.xi, fitQuality: fit.r2, headWeight: fit.headWeight, ...(fromSymbol ? { symbolDecay: fromSymbol } : {}) });
    } else modes.push({ class: 'bulk', vector: v, ...base });
  }
  if (marginal > 0)
    warnings.push(
      `${marginal} of the ${localised.length} localised vectors of the rest pass or fail the decaying test within ${DECISION_MARGIN * 100} % of its thresholds (head weight ${HEAD_WEIGHT}, R² ${MIN_R2}): their decaying/bulk class can change with small changes of the sample`,
    );
  tick('rest');
  lap('decay');

  // 7. assemble: counts, modes in class order, the thresholds used
  const counts: Record<FlexClass, number> = { local: 0, line: 0, decaying: 0, bulk: 0 };
  for (const m of modes) counts[m.class]++;
  const order: Record<FlexClass, number> = { local: 0, line: 1, decaying: 2, bulk: 3 };
  modes.sort((a, b) => order[a.class] - order[b.class]);
  if (analysis.gap.ambiguous) warnings.push('the rank of the whole matrix is ambiguous at this tolerance (narrow singular-value gap), so the classes are too');

  return {
    flexes: f,
    trivialFlexes: analysis.trivialFlexes,
    counts,
    thresholds: {
      window,
      strip,
      directions: directions.map((d) => `(${d[0]},${d[1]})`).join(' ') || 'none (no straight line of bars)',
      lineDirections: 'lattice directions of straight chains of collinear bars, found from the unit cell',
      windowsTried: 'square, 1×1 up to window×window cells, every position',
      windowDependence: windowDependence.map((x) => `${x.window}:${x.cornerConfined}`).join(' '),
      cornerConfined: 'flexes of corner windows of sizes w0…window at a corner where each of those sizes added flexes (not saturated) go to the rest; windowDependence counts them by window size',
      lineCoverage: LINE_COVERAGE,
      rankToleranceRelative: analysis.tolerance.relative,
      rankToleranceAbsolute: analysis.tolerance.absolute,
      spanTolerance: ctx.spanTol,
      restrictedSolve: (Object.keys(ctx.used) as RestrictedMethod[]).filter((k) => ctx.used[k] > 0).map((k) => `${k} ×${ctx.used[k]}`).join(', ') || 'none',
      localBasis: 'restricted-kernel vectors as found (compact, unit norm, independent, not mutually orthogonal)',
      filtration: `dim (local + line) ∩ ker R from the principal angles (sin² ≤ ½ inside): largest sin inside ${leakage === null ? `not measured (over ${KERNEL_INTERSECTION_MAX_COLUMNS} columns the local and line flexes that fill the count are taken as found)` : leakage.toExponential(2)}, smallest outside ${separation === null ? '—' : separation.toExponential(2)}; the rest completes the count`,
      affine: `fields u_s + L̇·cell from the flexible-lattice unit cell that are flexes (distance ≤ ${AFFINE_IN_KERNEL}) and reach into the rest (component > ${AFFINE_IN_REST}) are bulk; the rest is localised without them`,
      affineGap: aff.kept === null && aff.dropped === null ? 'none' : `smallest kept ${aff.kept?.toExponential(2) ?? '—'}, largest dropped ${aff.dropped?.toExponential(2) ?? '—'}`,
      restSplit: 'eigenvectors of the nearest-side distance operator compressed to the rest: mean distance ≥ head radius (far) or below it (near), within 1e-9 × head radius',
      restLocalisation: 'SCDM, orthonormal form (Damle, Lin & Ying 2015), within near and within far separately',
      supportAmplitude: SUPPORT_AMPLITUDE,
      headWeight: HEAD_WEIGHT,
      headRadius: 'max(1, floor(rings/4)) cells',
      minR2: MIN_R2,
      fit: 'least squares of ln(ring amplitude) against distance, rings weighted by their share of the squared amplitude',
      symbolDecay: 'decaying flexes anchored at a side also carry the range of ξ (cells) of the roots of det Φ on that side over the edge wave numbers k/N it holds: the physics; decayLength is a fit to one localised vector that mixes those wave numbers',
      fitFloor: FIT_FLOOR,
      distance: 'whole cells: from a side, cells between; from a corner or point, the larger cell offset',
    },
    modes,
    shortStripFlexes: nShort,
    affineFlexes: aff.affine.length,
    windowDependence,
    timings,
    ...(warnings.length ? { warnings } : {}),
  };
}
