/**
 * Band against sparse LDLᴴ (nested dissection) in the sparse solver's count, side by side in one
 * run: open kagome counts with each factorisation forced, in this process, with nnz(L) and the
 * flops of one factorisation of the Gram matrix the count factors. A measurement, never a test.
 *
 *   npx tsx bench/sparse-ldl.ts                 # open kagome 64×64 and 96×96
 *   npx tsx bench/sparse-ldl.ts 32,64 gallery:twisted-kagome?twist=15
 */
import { sparseSolver, type SparseStatus } from '../src/flex/solve-sparse.js';
import type { SolveOptions } from '../src/flex/solver.js';
import { buildGallery } from '../src/framework/gallery.js';
import { parseBoundary } from '../src/supercell/boundary.js';
import { rigidityMatrix } from '../src/supercell/rigidity.js';
import { buildSupercell } from '../src/supercell/supercell.js';

const sizes = (process.argv[2] ?? '64,96').split(',').map(Number);
const spec = process.argv[3] ?? 'gallery:kagome';
if (sizes.some((n) => !Number.isInteger(n) || n < 1)) {
  console.error('bench/sparse-ldl: sizes must be positive integers, e.g. 64,96');
  process.exit(2);
}

function countWith(N: number, factor: 'band' | 'sparse') {
  const sc = buildSupercell(buildGallery(spec), [N, N], parseBoundary('free'));
  const R = rigidityMatrix(sc);
  const t0 = performance.now();
  // `factor` is a SparseSolveOptions field that sparseSolver passes on
  const options = { relative: 1e-9, memoryLimit: 4 * 1024 ** 3, gap: 'bound', factor } as SolveOptions;
  const s = sparseSolver(sc, R, options);
  const seconds = (performance.now() - t0) / 1000;
  const f = (s.status as SparseStatus).factorisation;
  return { seconds, flexes: R.cols - s.decision.rank, selfStresses: R.rows - s.decision.rank, certified: s.status.certified, f };
}

// warm-up: compile both paths before anything is timed
countWith(12, 'band');
countWith(12, 'sparse');

const pad = (s: string, w: number) => s.padStart(w);
console.log(`${spec}, free boundaries: the sparse solver's count with each factorisation of its Gram matrix (in-process seconds)`);
console.log(`${'N'.padEnd(5)} ${'factor'.padEnd(11)} ${pad('seconds', 8)} ${pad('nnz(L)', 11)} ${pad('flops', 10)}  counts`);
for (const N of sizes) {
  const rows = [];
  for (const factor of ['band', 'sparse'] as const) {
    const r = countWith(N, factor);
    rows.push(r);
    console.log(
      `${String(N).padEnd(5)} ${r.f.method.padEnd(11)} ${pad(r.seconds.toFixed(2), 8)} ${pad(String(r.f.nnzL), 11)} ${pad(r.f.flops.toExponential(2), 10)}  ${r.flexes} flexes, ${r.selfStresses} self-stresses, certified ${r.certified}`,
    );
  }
  const [band, sparse] = rows;
  console.log(`${''.padEnd(5)} ratio band/sparse: ${(band.seconds / sparse.seconds).toFixed(1)}× time, ${(band.f.nnzL / sparse.f.nnzL).toFixed(1)}× nnz(L), ${(band.f.flops / sparse.f.flops).toFixed(1)}× flops\n`);
}
