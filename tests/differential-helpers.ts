/**
 * Helpers for tests/differential-counts.test.ts: the "bead" frameworks (invented for testing),
 * their counts by hand, a dense reference count computed per connected component, banded
 * matrices with prescribed singular values, and an optional numpy cross-check.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Framework, Vec2 } from '../src/framework/types.js';
import { singularValues } from '../src/linalg/dense.js';
import { certifyFromSingularValues, decideRank, svdBackwardError, type RankDecision } from '../src/linalg/rank.js';
import { SparseBuilder, type SparseMatrix } from '../src/linalg/sparse.js';
import { rng } from './helpers.js';

// ---------------------------------------------------------------------------------------------
// The bead frameworks (invented for testing)

/** A bead: a joint bent by d off the middle of an F–F bar along a1 ('x') or a2 ('y'). */
export interface Bead {
  d: number;
  along: 'x' | 'y';
}

/**
 * Invented for testing. Unit square cell with three unconnected sublattices: G at (0, 0), a
 * square grid (shifts (1,0), (0,1)); F at (0.5, 0.5), a triangulated grid (shifts (1,0), (0,1),
 * (1,1)); and per bead one joint near the middle of an F–F bar, bent off it by d, tied to both
 * of that bar's F ends (a very flat triangle: rigid for d ≠ 0, with a singular value ~ d).
 */
export function beadFramework(beads: readonly Bead[]): Framework {
  const joints: Framework['joints'] = [
    { id: 'G', at: [0, 0] },
    { id: 'F', at: [0.5, 0.5] },
  ];
  const bars: Framework['bars'] = [
    { from: 'G', to: 'G', shift: [1, 0] },
    { from: 'G', to: 'G', shift: [0, 1] },
    { from: 'F', to: 'F', shift: [1, 0] },
    { from: 'F', to: 'F', shift: [0, 1] },
    { from: 'F', to: 'F', shift: [1, 1] },
  ];
  beads.forEach((bead, k) => {
    const id = `B${k}`;
    const at: Vec2 = bead.along === 'x' ? [1.0, 0.5 + bead.d] : [0.5 + bead.d, 1.0];
    joints.push({ id, at });
    bars.push({ from: 'F', to: id, shift: [0, 0] }, { from: id, to: 'F', shift: bead.along === 'x' ? [1, 0] : [0, 1] });
  });
  const label = beads.map((b) => `${b.along}:${b.d}`).join(',');
  return { name: `bead (${label}; invented for testing)`, lattice: [[1, 0], [0, 1]], joints, bars };
}

/**
 * Flexes and self-stresses of a bead framework counted by hand, sublattice by sublattice, for
 * the real boundaries whose counting is plain; null otherwise. Maxwell's rule (J. C. Maxwell,
 * "On the calculation of the equilibrium and stiffness of frames", Phil. Mag. 27, 294–299,
 * 1864) in the form flexes − self-stresses = 2·joints − bars, with a triangulated grid rigid
 * (common practice) and, in the square grid G, each straight line of bars acting on one
 * velocity component of its own joints only (common practice). A bead held by two non-parallel
 * bars adds two columns and two independent rows (no flex, no self-stress); one whose far bar
 * is dropped at a free side adds one flex. Boundary semantics as documented in src/supercell/supercell.ts: a bar
 * leaving through pinned sides only is grounded, through any free side dropped.
 */
export function beadHandCounts(beads: readonly Bead[], cells: [number, number], bc: string): { flexes: number; selfStresses: number } | null {
  const [N1, N2] = cells;
  const N = N1 * N2;
  const nx = beads.filter((b) => b.along === 'x').length;
  const ny = beads.length - nx;
  // [flexes, self-stresses] of G, F and the beads
  let g: [number, number];
  let f: [number, number];
  let b: [number, number];
  switch (bc) {
    case 'free': {
      g = [N1 + N2, 0];
      const fBars = (N1 - 1) * N2 + N1 * (N2 - 1) + (N1 - 1) * (N2 - 1);
      f = [3, fBars - (2 * N - 3)];
      // the beads of the last column (x) or last row (y) lose their far bar
      b = [nx * N2 + ny * N1, 0];
      break;
    }
    case 'pinned': {
      // every line of G has one bar more than joints: one self-stress per line
      g = [0, N1 + N2];
      // F bars with at least one end inside; two diagonals have both ends outside
      const fBars = N2 * (N1 + 1) + N1 * (N2 + 1) + (N1 + 1) * (N2 + 1) - 2;
      f = [0, fBars - 2 * N];
      // the beads just outside the left (x) or bottom (y) side hang on a grounded bar each
      b = [0, nx * N2 + ny * N1];
      break;
    }
    case 'left=pinned,right=pinned': {
      g = [N1, N2];
      const fBars = N2 * (N1 + 1) + N1 * (N2 - 1) + (N1 + 1) * (N2 - 1);
      f = [0, fBars - 2 * N];
      b = [ny * N1, nx * N2];
      break;
    }
    case 'x=periodic,y=free': {
      g = [N1 + N2, N2];
      const fBars = N + 2 * N1 * (N2 - 1);
      f = [2, fBars - (2 * N - 2)];
      b = [ny * N1, 0];
      break;
    }
    case 'periodic': {
      g = [N1 + N2, N1 + N2];
      f = [2, 3 * N - (2 * N - 2)];
      b = [0, 0];
      break;
    }
    // A twist θ ∉ ℤ closes a line of G with phase ≠ 1: no flex, no self-stress on it. F has no
    // flex (no rigid motion survives a twist; the triangulated grid's Bloch symbol has rank 2 at
    // every phase but 0: common practice).
    case 'x=free,y=twist:0.25': {
      g = [N2, 0];
      const fBars = (N1 - 1) * N2 + N1 * N2 + (N1 - 1) * N2;
      f = [0, fBars - 2 * N];
      b = [nx * N2, 0];
      break;
    }
    case 'twist:0.3,0.1': {
      g = [0, 0];
      f = [0, 3 * N - 2 * N];
      b = [0, 0];
      break;
    }
    default:
      return null;
  }
  return { flexes: g[0] + f[0] + b[0], selfStresses: g[1] + f[1] + b[1] };
}

// ---------------------------------------------------------------------------------------------
// The dense reference, component by component

/** A dense reference decision and the counts that follow from it. */
export interface DenseReference {
  rows: number;
  cols: number;
  rank: number;
  flexes: number;
  selfStresses: number;
  decision: RankDecision;
  certified: boolean;
  reasons: string[];
  /** Sizes (rows×cols) of the components that were decomposed. */
  components: string[];
}

/** Connected components of the bipartite row–column graph of R (rows without entries left out). */
export function componentsOf(R: SparseMatrix): { rows: number[]; cols: number[] }[] {
  const parent = Int32Array.from({ length: R.cols }, (_, i) => i);
  const find = (i: number): number => {
    while (parent[i] !== i) {
      parent[i] = parent[parent[i]];
      i = parent[i];
    }
    return i;
  };
  for (let r = 0; r < R.rows; r++) {
    const lo = R.rowPtr[r];
    for (let k = lo + 1; k < R.rowPtr[r + 1]; k++) {
      const a = find(R.colIdx[lo]);
      const b = find(R.colIdx[k]);
      if (a !== b) parent[a] = b;
    }
  }
  const byRoot = new Map<number, { rows: number[]; cols: number[] }>();
  const get = (root: number) => {
    let c = byRoot.get(root);
    if (!c) byRoot.set(root, (c = { rows: [], cols: [] }));
    return c;
  };
  for (let c = 0; c < R.cols; c++) get(find(c)).cols.push(c);
  for (let r = 0; r < R.rows; r++) if (R.rowPtr[r + 1] > R.rowPtr[r]) get(find(R.colIdx[R.rowPtr[r]])).rows.push(r);
  return [...byRoot.values()];
}

/** The submatrix of R on the given rows and columns (in their order). */
export function subMatrix(R: SparseMatrix, rows: readonly number[], cols: readonly number[]): SparseMatrix {
  const colMap = new Map(cols.map((c, k) => [c, k]));
  const B = new SparseBuilder(cols.length);
  for (const r of rows) {
    const row = B.newRow();
    for (let k = R.rowPtr[r]; k < R.rowPtr[r + 1]; k++) {
      const c = colMap.get(R.colIdx[k]);
      if (c === undefined) throw new Error(`row ${r} reaches column ${R.colIdx[k]} outside its component`);
      B.add(row, c, R.re[k], R.im ? R.im[k] : 0);
    }
  }
  return B.build(R.im !== null);
}

/**
 * The dense path's decision (src/linalg/dense.ts singularValues, decideRank, and the
 * certification of src/flex/solve-dense.ts with the whole matrix's rounding bound), with the SVD
 * taken per connected component: a permutation of rows and columns makes R block diagonal, so
 * its singular values are the union of the blocks' plus zeros up to min(rows, cols) (common
 * practice). That is exact and several times cheaper than one SVD of the whole R.
 */
export function denseReference(R: SparseMatrix, relative: number): DenseReference {
  const m = R.rows;
  const n = R.cols;
  const sigma: number[] = [];
  const components: string[] = [];
  for (const comp of componentsOf(R)) {
    components.push(`${comp.rows.length}×${comp.cols.length}`);
    if (comp.rows.length === 0) continue;
    for (const s of singularValues(subMatrix(R, comp.rows, comp.cols))) sigma.push(s);
  }
  while (sigma.length < Math.min(m, n)) sigma.push(0);
  const decision = decideRank(sigma, m, n, relative);
  const cert = certifyFromSingularValues(decision, svdBackwardError(m, n, decision.sigmaMax));
  return { rows: m, cols: n, rank: decision.rank, flexes: n - decision.rank, selfStresses: m - decision.rank, decision, certified: cert.certified, reasons: cert.reasons, components };
}

// ---------------------------------------------------------------------------------------------
// Banded matrices with prescribed singular values

/**
 * An m×n matrix U·D·Vᴴ with D = diag(sigma) (sigma.length = min(m, n), placed in the given
 * order) and U, V products of `sweeps` sweeps of Givens rotations on neighbouring index pairs
 * (alternating even and odd pairs; complex phases when `complex`). Unitary factors keep the
 * singular values exact to rounding; each sweep widens the band by about one.
 */
export function givensBanded(sigma: readonly number[], m: number, n: number, opts: { sweeps: number; complex: boolean; seed: number }): SparseMatrix {
  if (sigma.length !== Math.min(m, n)) throw new Error(`need ${Math.min(m, n)} singular values, got ${sigma.length}`);
  const re = new Float64Array(m * n);
  const im = new Float64Array(m * n);
  sigma.forEach((s, k) => (re[k * n + k] = s));
  const rand = rng(opts.seed);
  // G = [[c, s·e^{iφ}], [−s·e^{−iφ}, c]] applied to entries (x, y): x' = c·x + s·e^{iφ}·y, y' = −s·e^{−iφ}·x + c·y
  const rotate = (ix: number, iy: number, c: number, s: number, pr: number, pi: number) => {
    const xr = re[ix];
    const xi = im[ix];
    const yr = re[iy];
    const yi = im[iy];
    re[ix] = c * xr + s * (pr * yr - pi * yi);
    im[ix] = c * xi + s * (pr * yi + pi * yr);
    re[iy] = c * yr - s * (pr * xr + pi * xi);
    im[iy] = c * yi - s * (pr * xi - pi * xr);
  };
  const angle = () => {
    const t = 0.3 + 0.9 * rand();
    const phi = opts.complex ? 2 * Math.PI * rand() : 0;
    return { c: Math.cos(t), s: Math.sin(t), pr: Math.cos(phi), pi: Math.sin(phi) };
  };
  for (let sweep = 0; sweep < opts.sweeps; sweep++) {
    const start = sweep % 2;
    // from the left: rows (i, i + 1)
    for (let i = start; i + 1 < m; i += 2) {
      const g = angle();
      for (let j = 0; j < n; j++) rotate(i * n + j, (i + 1) * n + j, g.c, g.s, g.pr, g.pi);
    }
    // from the right: columns (j, j + 1)
    for (let j = start; j + 1 < n; j += 2) {
      const g = angle();
      for (let i = 0; i < m; i++) rotate(i * n + j, i * n + j + 1, g.c, g.s, g.pr, g.pi);
    }
  }
  const B = new SparseBuilder(n);
  for (let i = 0; i < m; i++) {
    const r = B.newRow();
    for (let j = 0; j < n; j++) if (re[i * n + j] !== 0 || im[i * n + j] !== 0) B.add(r, j, re[i * n + j], im[i * n + j]);
  }
  return B.build(opts.complex);
}

// ---------------------------------------------------------------------------------------------
// numpy (NumPy: Harris et al., "Array programming with NumPy", Nature 585, 357 (2020))

/** Why numpy cannot be used here, or null when python3 with numpy runs. */
export function numpyMissing(): string | null {
  const p = spawnSync('python3', ['-c', 'import numpy; print(numpy.__version__)'], { encoding: 'utf8' });
  if (p.error) return `python3 could not be started (${p.error.message})`;
  if (p.status !== 0) return `python3 has no numpy (${(p.stderr || '').trim().split('\n').pop()})`;
  return null;
}

const NUMPY_RANK = `
import sys, numpy as np
rows, cols = (int(v) for v in open(sys.argv[1]).readline().split())
t = np.loadtxt(sys.argv[1], skiprows=1, ndmin=2)
A = np.zeros((rows, cols))
for i, j, v in t:
    A[int(i), int(j)] += v
s = np.linalg.svd(A, compute_uv=False)
tol = float(sys.argv[2]) * s[0]
print(int(np.sum(s > tol)), repr(float(s[0])))
`;

/** Rank of a real R by numpy.linalg.svd at σ > relative·σ_max (R sent through a temp file). */
export function numpyRank(R: SparseMatrix, relative: number): { rank: number; sigmaMax: number } {
  if (R.im) throw new Error('numpyRank takes a real matrix');
  const dir = mkdtempSync(join(tmpdir(), 'shimmy-numpy-'));
  try {
    const lines = [`${R.rows} ${R.cols}`];
    for (let r = 0; r < R.rows; r++) for (let k = R.rowPtr[r]; k < R.rowPtr[r + 1]; k++) lines.push(`${r} ${R.colIdx[k]} ${R.re[k].toPrecision(17)}`);
    const file = join(dir, 'R.txt');
    writeFileSync(file, lines.join('\n') + '\n');
    const p = spawnSync('python3', ['-c', NUMPY_RANK, file, String(relative)], { encoding: 'utf8' });
    if (p.status !== 0) throw new Error(`numpy failed: ${p.stderr}`);
    const [rank, sigmaMax] = p.stdout.trim().split(/\s+/);
    return { rank: Number(rank), sigmaMax: Number(sigmaMax) };
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
