/**
 * The Bloch reduction solver: flex and self-stress spaces of a twisted supercell from small
 * blocks, one per Bloch phase.
 *
 * Let an axis be twisted with phase θ (turns) over N cells. The N phases along it are
 * φ_m = (θ + m)/N, m = 0…N−1. Put u(i, j, s) = e(φ·cell) v(s) (e(t) = exp 2πit, cell taken
 * only along twisted axes) into the row of bar a→b from cell c whose far end wraps w times:
 *     −p·u(c, a) + e(θ·w) p·u(c + shift − N·w, b)
 *   = e(φ·c) [ −p·v(a) + e(φ·shift) e((θ − Nφ)·w) p·v(b) ]  and  θ − Nφ = −m is an integer,
 * so the row is e(φ·c) times the row of the same bar in the ONE-cell-wide supercell twisted by
 * φ, whose wrap counts equal the shifts. Hence, with V the columns u above scaled by 1/√M and
 * W the rows e(φ·c)/√M on the bar orbits (M = number of phases; both unitary by the discrete
 * Fourier orthogonality Σ_c e((φ − φ')·c) = M δ), R = W · blockdiag(B_φ) · Vᴴ where
 *   both axes twisted:  B_φ = R(buildSupercell(fw, [1, 1],  twist φ1, φ2))  (the symbol Φ),
 *   x twisted only:     B_φ = R(buildSupercell(fw, [1, N2], x twist φ1, y as given)),
 *   y twisted only:     B_φ = R(buildSupercell(fw, [N1, 1], x as given, y twist φ2)).
 * A free or pinned axis never wraps, so its cells are carried inside the block unchanged.
 * Consequences used here:
 *  - the singular values of R are exactly the union of those of the blocks (plus the
 *    structural zeros that fill min(rows, cols)); the rank rule is applied to that union at
 *    one absolute tolerance relative·σ_max(R), so counts and gap match the dense path. Large
 *    strip blocks go to the banded sparse solver, which finds only the σ near the cut: σ_max(R)
 *    is then the largest block σ_max (Lanczos), every block is cut at relative·σ_max(R), and
 *    the decision is assembled from the blocks' ranks and gap figures (combineRankParts);
 *  - ker R = ⊕ V·ker B_φ and ker Rᴴ = ⊕ W·ker B_φᴴ, each orthonormal as assembled.
 * Real boundaries (every θ ≡ 0 or ½): blocks φ and −φ are complex conjugates. A self-conjugate
 * block (φ ∈ {0, ½} per axis) is real and its kernel vectors times ±1 phases are real; for a
 * conjugate pair, √2·Re u and √2·Im u of the orthonormal vectors u of one block are an exact
 * orthonormal real basis of both sectors (the bilinear products Σ u_k u_l vanish between
 * different Fourier sectors), so the basis is real, as on the dense path.
 * Rows of R map to block rows through (bar source, cell along untwisted axes); both builders
 * iterate bars the same way, which solveBloch checks row by row.
 * The plan (phases, blocks) and the lift of block vectors are in src/spectrum/bloch-plan.ts.
 */
import { denseFallback } from '../flex/solve-dense.js';
import { sparseSpaces } from '../flex/solve-sparse.js';
import { throwIfAborted, type Progress, type SolveOptions, type SolvedSpaces, type SolveStatus, type SpaceSolver } from '../flex/solver.js';
import type { CVec } from '../linalg/complex.js';
import { checkDenseFits, nullSpace, singularValues, type NullBasis } from '../linalg/dense.js';
import { topLanczos, type TopLanczos } from '../linalg/lanczos.js';
import { certifyFromSingularValues, combineRankParts, rankPartOf, svdBackwardError, type RankDecision, type RankPart } from '../linalg/rank.js';
import { conjugateTranspose, type SparseMatrix } from '../linalg/sparse.js';
import { buildSupercell, type Supercell } from '../supercell/supercell.js';
import { jacobiSingularValues, jacobiSingularValuesInto, jacobiSvd, jacobiWork, type JacobiWork } from './jacobi.js';
import { SymbolAssembler } from './symbol.js';
import { blochPlan, columnMajor, indexMap, lift, thetaOf, twisted, type BlochBlock, type BlochKind, type BlochPlan, type IndexMap } from './bloch-plan.js';

export { blochPlan, type BlochBlock, type BlochKind, type BlochPlan } from './bloch-plan.js';

// ---------------------------------------------------------------------------------------------
// Block solver choice: THE ONE PLACE where the solver of a single Bloch block is picked.
// Blocks of a doubly twisted supercell are tiny (bars × 2·joints of one cell): one-sided Jacobi,
// or the dense SVD past JACOBI_MAX_COLUMNS. Strip blocks are 1×N2 (or N1×1) supercells and
// banded: from SPARSE_STRIP_COLUMNS columns on they go to the banded sparse solver, each cut at
// the whole supercell's tolerance (relative × the largest σ_max over the blocks).

/** A block solver that yields every singular value of the block (the rank is decided on them). */
interface BlockSolver {
  name: 'dense' | 'jacobi';
  /** The min(rows, cols) singular values of the block (any order). */
  singularValues(blk: BlochBlock): Float64Array;
  /** Orthonormal basis of ker A (A the block, or its conjugate transpose) of the given dimension. */
  nullSpace(A: SparseMatrix, dim: number): NullBasis;
  /** Throws TooLargeError when the block does not fit the memory limit. */
  checkFits(rows: number, cols: number, complex: boolean, vectors: boolean, memoryLimit: number): void;
}

const DENSE_BLOCKS: BlockSolver = {
  name: 'dense',
  singularValues: (blk) => singularValues(blk.matrix),
  nullSpace,
  checkFits: (rows, cols, complex, vectors, limit) => checkDenseFits(rows, cols, complex, vectors, limit),
};

/** Scratch of the Jacobi sweeps, shared by every block (they are solved one at a time). */
let work: JacobiWork | undefined;

/** Tiny blocks (one unit cell): one-sided Jacobi, accurate and free of per-call setup cost. */
const JACOBI_BLOCKS: BlockSolver = {
  name: 'jacobi',
  singularValues(blk) {
    if (blk.rows === 0 || blk.cols === 0) return new Float64Array(0);
    const d = blk.dense(0);
    if (!work || work.wr.length < d.ld * blk.cols) work = jacobiWork(d.ld, blk.cols);
    return jacobiSingularValues(d.re, d.im, d.ld, blk.cols, work);
  },
  nullSpace(A, dim) {
    const real = A.im === null;
    if (dim === 0) return { real, vectors: [] };
    const n = A.cols;
    const d = columnMajor(A, n);
    const svd = jacobiSvd(d.re, d.im, d.ld, n);
    const vectors: CVec[] = [];
    for (let c = n - dim; c < n; c++) {
      const re = svd.vRe.slice(c * n, (c + 1) * n);
      const im = real ? new Float64Array(n) : svd.vIm.slice(c * n, (c + 1) * n);
      vectors.push({ re, im });
    }
    return { real, vectors };
  },
  checkFits: () => undefined,
};

/** Unit-cell blocks up to this many columns go to Jacobi; larger ones to the dense SVD. */
const JACOBI_MAX_COLUMNS = 48;

/**
 * Strip blocks with at least this many columns go to the banded sparse solver. Measured (one
 * core, after warm-up) on 8×N2 supercells, 8 strip blocks, counts without bases, dense SVD /
 * Jacobi against sparse: kagome x periodic, y free: 48 columns per block 0.06 s / 0.10 s,
 * 60 columns 0.06 / 0.04, 96 columns 0.25 / 0.06, 120 columns 0.47 / 0.10, 300 columns
 * 8.6 / 0.8; kagome y twisted 0.3, x free: 48 columns 0.08 / 0.06, 96 columns 0.22 / 0.10;
 * square x periodic, y pinned: 48 columns 0.05 / 0.10, 96 columns 0.28 / 0.10. Bases are
 * cheaper still on the sparse path (120 columns: 2.9 s / 0.01 s). The crossover lies near 60
 * columns; from 96 on the sparse path is 2.5× faster or more, below it both are fast.
 */
export const SPARSE_STRIP_COLUMNS = 96;

/** Settings of the Bloch solver; the defaults serve every run. */
export interface BlochSettings {
  /**
   * Strip blocks (one twisted axis) with at least this many columns are solved by the banded
   * sparse solver, smaller ones by the dense SVD or Jacobi. Default SPARSE_STRIP_COLUMNS;
   * 0 sends every strip block to the sparse solver, Infinity none.
   */
  sparseStripColumns?: number;
}

type BlockPath = BlockSolver | 'sparse';

function chooseBlockSolver(kind: BlochKind, block: BlochBlock, sparseStripColumns: number): BlockPath {
  if (kind !== 'both' && block.cols >= sparseStripColumns && block.rows > 0 && block.cols > 0) return 'sparse';
  return block.cols <= JACOBI_MAX_COLUMNS ? JACOBI_BLOCKS : DENSE_BLOCKS;
}

/**
 * Screening: every sparse block's Lanczos runs until its top Ritz value settles to 1e-5 over
 * 15 steps (on kagome strips of 64 and 128 cells it is then at most 6e-5 below σ_max, in a
 * third of the steps full settling takes); only blocks within 1 % of the largest screened
 * value go on to settle to 1e-14. Missing the block that holds σ_max(R) would need a screened
 * value a hundred times further off than any seen, and even then σ_max(R) would come out low
 * by under that block's screening error: every value is a lower bound.
 */
const SCREEN_STALL = 1e-5;
const SCREEN_MARGIN = 1e-2;
const FINAL_STALL = 1e-14;

// ---------------------------------------------------------------------------------------------

/** "use fewer cells along the strip": a strip block's band grows linearly with its length. */
function stripAdvice(sc: Supercell, kind: BlochKind): (need: number, allowed: number) => string {
  return (need, allowed) => {
    const axis = kind === 'x' ? 'y' : 'x';
    const N = kind === 'x' ? sc.cells[1] : sc.cells[0];
    const fit = Math.max(1, Math.floor(N * (allowed / need) * 0.97));
    return `use fewer cells along ${axis} (each Bloch strip block holds all ${N}): about ${fit} would fit (or raise the memory limit)`;
  };
}

/** A progress reporter that never goes back (stages of one phase may restart their fractions). */
function monotoneProgress(onProgress: SolveOptions['onProgress']): (fraction: number, stage: string) => void {
  let last = 0;
  return (fraction, stage) => {
    if (!onProgress) return;
    last = Math.max(last, Math.min(1, fraction));
    onProgress({ fraction: last, stage });
  };
}

/** The Bloch solver with non-default settings (the block solver threshold). */
export function makeBlochSolver(settings: BlochSettings = {}): SpaceSolver {
  const sparseStripColumns = settings.sparseStripColumns ?? SPARSE_STRIP_COLUMNS;
  if (!(sparseStripColumns >= 0)) throw new RangeError(`sparseStripColumns must be a number ≥ 0 (Infinity for none), got ${sparseStripColumns}`);
  return (sc, R, options) => solveBloch(sc, R, options, sparseStripColumns);
}

export const blochSolver: SpaceSolver = makeBlochSolver();

function solveBloch(sc: Supercell, R: SparseMatrix | null, options: SolveOptions, sparseStripColumns: number): SolvedSpaces {
  if (twisted(sc.boundary.x) && twisted(sc.boundary.y)) {
    const cells = solveCells(sc, R, options);
    if (cells) return cells;
  }
  const plan = blochPlan(sc);
  const blocks = plan.blocks;
  const M = blocks.length;
  let rows = 0;
  let cols = 0;
  for (const blk of blocks) {
    rows += blk.rows;
    cols += blk.cols;
  }
  const fullRows = sc.barCount;
  const fullCols = 2 * sc.jointCount;
  if (rows !== fullRows || cols !== fullCols || (R && (R.rows !== fullRows || R.cols !== fullCols))) {
    throw new Error(`bloch: the blocks have ${rows}×${cols} entries in all but R is ${fullRows}×${fullCols}`);
  }
  let map: IndexMap | undefined;
  const real = sc.real;
  const paths = blocks.map((blk) => chooseBlockSolver(plan.kind, blk, sparseStripColumns));
  const check = () => throwIfAborted(options.signal);
  // In the real case one block of each conjugate pair stands for both (its partner has the
  // conjugate matrix: the same singular values and conjugate null vectors).
  const representative = (b: number) => !real || blocks[b].conjugate >= b;
  const source = (b: number) => (representative(b) ? b : blocks[b].conjugate);

  // Pass 1: every singular value of the blocks solved by an SVD; σ_max of the sparse ones by
  // Lanczos. The union of the blocks' σ is R's, so σ_max(R) is the largest of them.
  let done = 0;
  const decisionProgress = monotoneProgress(options.onProgress);
  const sigma: (Float64Array | null)[] = new Array(M).fill(null);
  const blockMax = new Float64Array(M);
  const lanczos: (TopLanczos | null)[] = new Array(M).fill(null);
  for (let b = 0; b < M; b++) {
    check();
    const blk = blocks[b];
    const path = paths[b];
    if (!representative(b)) blockMax[b] = blockMax[source(b)];
    else if (path === 'sparse') {
      const lz = topLanczos(blk.matrix, check);
      blockMax[b] = lz.run(SCREEN_STALL);
      lanczos[b] = lz;
    } else {
      path.checkFits(blk.rows, blk.cols, !blk.real, false, options.memoryLimit);
      const s = path.singularValues(blk);
      sigma[b] = s;
      let mx = 0;
      for (const v of s) if (v > mx) mx = v;
      blockMax[b] = mx;
    }
    if (path !== 'sparse') decisionProgress(++done / M, `Bloch block ${b + 1} of ${M}`);
    else decisionProgress(done / M, `Bloch block ${b + 1} of ${M}: σ_max (Lanczos)`);
  }
  let screened = 0;
  for (const v of blockMax) if (v > screened) screened = v;
  for (let b = 0; b < M; b++) {
    const lz = lanczos[b];
    if (lz && blockMax[b] >= (1 - SCREEN_MARGIN) * screened) blockMax[b] = lz.run(FINAL_STALL);
  }
  lanczos.fill(null);
  for (let b = 0; b < M; b++) if (!representative(b)) blockMax[b] = blockMax[source(b)];
  let sigmaMax = 0;
  for (const v of blockMax) if (v > sigmaMax) sigmaMax = v;
  const relative = options.relative;
  const absolute = relative * sigmaMax;

  // Pass 2: every block's rank and gap figures at the one absolute cut; the sparse blocks are
  // solved here, given the global σ_max.
  const parts: RankPart[] = new Array(M);
  const sparse: (SolvedSpaces | null)[] = new Array(M).fill(null);
  /** Where the progress of the sparse solve under way goes (decision now, bases later). */
  let inner: ((p: Progress) => void) | null = null;
  const advice = stripAdvice(sc, plan.kind);
  for (let b = 0; b < M; b++) {
    check();
    const blk = blocks[b];
    const path = paths[b];
    if (!representative(b)) parts[b] = parts[source(b)];
    else if (path !== 'sparse') parts[b] = rankPartOf(sigma[b]!, blk.rows, blk.cols, absolute);
    else {
      const base = done;
      inner = (p) => decisionProgress((base + p.fraction) / M, `Bloch block ${b + 1} of ${M}: ${p.stage}`);
      const solved = sparseSpaces(blk.matrix, {
        relative,
        memoryLimit: options.memoryLimit,
        signal: options.signal,
        sigmaMax,
        sizeAdvice: advice,
        denseFallback: denseFallback(options),
        onProgress: (p) => inner?.(p),
      });
      inner = null;
      sparse[b] = solved;
      const g = solved.decision.gap;
      parts[b] = { rank: solved.decision.rank, kept: g.kept, dropped: g.dropped };
    }
    if (path === 'sparse') decisionProgress(++done / M, `Bloch block ${b + 1} of ${M}`);
  }
  const decision = combineRankParts(parts, fullRows, fullCols, relative, sigmaMax);
  const status = blochStatus(blocks, paths, sparse, decision);
  const blockRank = parts.map((p) => p.rank);

  const basis = (which: 'flex' | 'stress'): NullBasis => {
    const out: CVec[] = [];
    const progress = monotoneProgress(options.onProgress);
    const what = which === 'flex' ? 'flex' : 'self-stress';
    for (let b = 0; b < M; b++) {
      check();
      if (!representative(b)) continue;
      const blk = blocks[b];
      const path = paths[b];
      const dim = (which === 'flex' ? blk.cols : blk.rows) - blockRank[b];
      if (dim > 0) {
        map ??= indexMap(sc, plan);
        let nb: NullBasis;
        if (path === 'sparse') {
          inner = (p) => progress((b + p.fraction) / M, `Bloch ${what} basis, block ${b + 1} of ${M}: ${p.stage}`);
          nb = which === 'flex' ? sparse[b]!.flexBasis() : sparse[b]!.selfStressBasis();
          inner = null;
          if (nb.vectors.length !== dim) throw new Error(`bloch: block ${b} has a ${what} basis of ${nb.vectors.length} vectors, expected ${dim}`);
        } else {
          const A = which === 'flex' ? blk.matrix : conjugateTranspose(blk.matrix);
          path.checkFits(A.rows, A.cols, A.im !== null, true, options.memoryLimit);
          nb = path.nullSpace(A, dim);
        }
        const selfConjugate = blk.conjugate === b;
        if (which === 'flex') lift(plan, sc, blk, nb.vectors, map.col, map.colCell, real, selfConjugate, out);
        else lift(plan, sc, blk, nb.vectors, map.row, map.rowCell, real, selfConjugate, out);
      }
      progress((b + 1) / M, `Bloch ${what} basis, block ${b + 1} of ${M}`);
    }
    return { real, vectors: out };
  };

  const gapNote = sparseNote(plan, paths, sparse, real);
  let flexCache: NullBasis | undefined;
  let stressCache: NullBasis | undefined;
  return {
    solver: 'bloch',
    decision,
    status,
    ...(gapNote ? { gapNote } : {}),
    flexBasis() {
      if (!flexCache) flexCache = basis('flex');
      return flexCache;
    },
    selfStressBasis() {
      if (!stressCache) stressCache = basis('stress');
      return stressCache;
    },
  };
}

/**
 * Both axes twisted, cells of at most JACOBI_MAX_COLUMNS columns (else null): the same blocks,
 * arithmetic and results as the general path below, without a block object per phase. Blocks
 * are described by their index b = m2·N1 + m1; Φ is assembled into one reused buffer, the
 * Jacobi sweeps use one scratch, and every σ goes into one flat array (k per block). The
 * BlochPlan (block objects) is built only when a basis is asked for.
 */
function solveCells(sc: Supercell, R: SparseMatrix | null, options: SolveOptions): SolvedSpaces | null {
  const phi = new SymbolAssembler(sc.framework);
  const rows = phi.rows;
  const cols = phi.cols;
  if (cols > JACOBI_MAX_COLUMNS) return null;
  const [N1, N2] = sc.cells;
  const M = N1 * N2;
  const fullRows = sc.barCount;
  const fullCols = 2 * sc.jointCount;
  if (M * rows !== fullRows || M * cols !== fullCols || (R && (R.rows !== fullRows || R.cols !== fullCols))) {
    throw new Error(`bloch: the blocks have ${M * rows}×${M * cols} entries in all but R is ${fullRows}×${fullCols}`);
  }
  const th0 = thetaOf(sc.boundary.x);
  const th1 = thetaOf(sc.boundary.y);
  const real = sc.real;
  const check = () => throwIfAborted(options.signal);
  // the conjugate phase −φ ≡ (θ + m̄)/N needs θ ∈ {0, ½}: m̄ = (−2θ − m) mod N (as blochPlan)
  const bar = (theta: number, m: number, N: number) => (((-Math.round(2 * theta) - m) % N) + N) % N;
  const conjugateOf = (b: number) => bar(th1, Math.floor(b / N1), N2) * N1 + bar(th0, b % N1, N1);
  const representative = (b: number) => !real || conjugateOf(b) >= b;

  // Pass 1: every σ of every representative block, into one flat array.
  const k = Math.min(rows, cols);
  const sigma = new Float64Array(M * k);
  const w = jacobiWork(rows, cols);
  const progress = monotoneProgress(options.onProgress);
  const stride = Math.max(1, Math.ceil(M / 1000));
  let sigmaMax = 0;
  for (let b = 0; b < M; b++) {
    check();
    if (representative(b) && k > 0) {
      const m1 = b % N1;
      const m2 = (b - m1) / N1;
      let p1 = (th0 + m1) / N1;
      let p2 = (th1 + m2) / N2;
      // a self-conjugate phase is 0 or ½ exactly: written so, the block is exactly real
      if (real && conjugateOf(b) === b) {
        p1 = Math.round(2 * p1) / 2;
        p2 = Math.round(2 * p2) / 2;
      }
      const d = phi.assemble(p1, p2, 0);
      jacobiSingularValuesInto(d.re, d.im, d.ld, cols, w, sigma, b * k);
      for (let i = b * k; i < (b + 1) * k; i++) if (sigma[i] > sigmaMax) sigmaMax = sigma[i];
    }
    if ((b + 1) % stride === 0 || b + 1 === M) progress((b + 1) / M, `Bloch block ${b + 1} of ${M}`);
  }

  // Pass 2: every block cut at the one absolute tolerance (rankPartOf's conventions, summed as
  // combineRankParts does); a non-representative block has its partner's figures.
  const relative = options.relative;
  const absolute = relative * sigmaMax;
  const blockRank = new Int32Array(M);
  let rank = 0;
  let kept: number | null = null;
  let dropped: number | null = null;
  for (let b = 0; b < M; b++) {
    const src = representative(b) ? b : conjugateOf(b);
    let r = 0;
    let bk: number | null = null;
    let bd: number | null = null;
    for (let i = src * k; i < (src + 1) * k; i++) {
      const v = sigma[i];
      if (v > absolute) {
        r++;
        if (bk === null || v < bk) bk = v;
      } else if (bd === null || v > bd) bd = v;
    }
    if (bd === null && r < Math.max(rows, cols)) bd = 0;
    blockRank[b] = r;
    rank += r;
    if (bk !== null && (kept === null || bk < kept)) kept = bk;
    if (bd !== null && (dropped === null || bd > dropped)) dropped = bd;
  }
  const decision = combineRankParts([{ rank, kept, dropped }], fullRows, fullCols, relative, sigmaMax);
  const svd = certifyFromSingularValues(decision, svdBackwardError(rows, cols, decision.sigmaMax));
  const status: SolveStatus = { certified: svd.certified, criterion: 'singular-values', converged: true, fallback: null, reasons: [...svd.reasons], keptSigma: 'measured' };

  // Bases: the block objects of blochPlan, each representative's kernel by Jacobi, lifted.
  let plan: BlochPlan | undefined;
  let map: IndexMap | undefined;
  const basis = (which: 'flex' | 'stress'): NullBasis => {
    plan ??= blochPlan(sc);
    map ??= indexMap(sc, plan);
    const out: CVec[] = [];
    const bprogress = monotoneProgress(options.onProgress);
    const what = which === 'flex' ? 'flex' : 'self-stress';
    for (let b = 0; b < M; b++) {
      check();
      if (!representative(b)) continue;
      const blk = plan.blocks[b];
      const dim = (which === 'flex' ? cols : rows) - blockRank[b];
      if (dim > 0) {
        const A = which === 'flex' ? blk.matrix : conjugateTranspose(blk.matrix);
        const nb = JACOBI_BLOCKS.nullSpace(A, dim);
        const selfConjugate = blk.conjugate === b;
        if (which === 'flex') lift(plan, sc, blk, nb.vectors, map.col, map.colCell, real, selfConjugate, out);
        else lift(plan, sc, blk, nb.vectors, map.row, map.rowCell, real, selfConjugate, out);
      }
      if ((b + 1) % stride === 0 || b + 1 === M) bprogress((b + 1) / M, `Bloch ${what} basis, block ${b + 1} of ${M}`);
    }
    return { real, vectors: out };
  };
  let flexCache: NullBasis | undefined;
  let stressCache: NullBasis | undefined;
  return {
    solver: 'bloch',
    decision,
    status,
    flexBasis: () => (flexCache ??= basis('flex')),
    selfStressBasis: () => (stressCache ??= basis('stress')),
  };
}

/**
 * The whole decision is certified when every block's is: SVD blocks by their singular values
 * (each block's own backward-error bound, against the one global cut), sparse strip blocks by
 * their own certificates.
 */
function blochStatus(blocks: BlochBlock[], paths: BlockPath[], sparse: (SolvedSpaces | null)[], decision: RankDecision): SolveStatus {
  let err = 0;
  blocks.forEach((blk, b) => {
    if (paths[b] !== 'sparse') err = Math.max(err, svdBackwardError(blk.rows, blk.cols, decision.sigmaMax));
  });
  const svd = certifyFromSingularValues(decision, err);
  const reasons = [...svd.reasons];
  let certified = svd.certified;
  let converged = true;
  sparse.forEach((s, b) => {
    if (!s) return;
    converged &&= s.status.converged;
    if (!s.status.certified) {
      certified = false;
      const phase = blocks[b].phase.map((v) => +v.toFixed(6)).join(', ');
      for (const r of s.status.reasons) reasons.push(`strip block at phase (${phase}): ${r}`);
    }
  });
  return { certified, criterion: sparse.some((s) => s) ? 'inertia-and-residuals' : 'singular-values', converged, fallback: null, reasons, keptSigma: 'measured' };
}

/** How the gap figures were found when strip blocks went to the sparse solver, with any block's caveats. */
function sparseNote(plan: BlochPlan, paths: BlockPath[], sparse: (SolvedSpaces | null)[], real: boolean): string | undefined {
  const count = paths.filter((p) => p === 'sparse').length;
  if (count === 0) return undefined;
  const solved = sparse.filter((s) => s !== null).length;
  const caveats: string[] = [];
  sparse.forEach((s, b) => {
    if (!s) return;
    const phase = plan.blocks[b].phase[plan.kind === 'x' ? 0 : 1];
    // the sparse solver's own doubts, from its structured status
    if (!s.status.certified) for (const r of s.status.reasons) caveats.push(`strip block at phase ${+phase.toFixed(6)}: ${r}`);
    if (s.status.fallback) caveats.push(`strip block at phase ${+phase.toFixed(6)}: solved densely (${s.status.fallback.reason})`);
    else if (!s.status.converged) caveats.push(`strip block at phase ${+phase.toFixed(6)}: the iteration stopped before the smallest kept σ settled (an upper bound)`);
  });
  const head =
    `${count} of ${plan.blocks.length} strip blocks by the banded sparse solver` +
    (real && solved < count ? ` (${solved} solved, each conjugate pair once)` : '') +
    `, each cut at relative × the largest σ_max over the blocks (Lanczos): their σ are ‖B v‖ of Ritz vectors of BᴴB or BBᴴ`;
  return [head, ...caveats].join('; ');
}
