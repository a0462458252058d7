/**
 * The helper thread (src/linalg/parallel): the rules that cut kernels into chunks, and every split
 * kernel run on two threads against the same kernel on one thread, bit for bit, on sizes above
 * the split threshold (real and complex; nearly parallel columns, whose singular values cluster
 * near zero, for the orthonormalisation). A split must never change a result: each output entry
 * is computed by one chunk in the single-thread order of operations.
 */
import fc from 'fast-check';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { combineColumns, type Cx } from '../src/flex/classify/cvec-ops.js';
import { weightedGram } from '../src/flex/classify/rest-split.js';
import { addRandomColumns, orthonormalityDefect, residualNorms, shareableMatrix, unitColumns, type Block } from '../src/linalg/block.js';
import { cholQr2 } from '../src/linalg/cholesky-qr.js';
import { seededUniform } from '../src/linalg/random.js';
import { CHUNKS, chunkStart, helperThreadInstalled, inChunks, runBeside, sharedFloats, SPLIT_WORK, triangleChunkStart } from '../src/linalg/parallel/helper.js';
import { startHelperThread, threadsWanted, type RunningHelper } from '../src/linalg/parallel/node-thread.js';
import { analyseHermitian, sparseLdl, type HermitianCsr } from '../src/linalg/sparse-ldl/index.js';
import { rng } from './helpers.js';

describe('chunk rules', () => {
  it('chunkStart cuts 0 … n−1 into aligned, ordered chunks of nearly equal length', () => {
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 100_000 }), fc.integer({ min: 1, max: 40 }), fc.constantFrom(1, 2, 4), (n, chunks, align) => {
        expect(chunkStart(n, 0, chunks, align)).toBe(0);
        expect(chunkStart(n, chunks, chunks, align)).toBe(n);
        for (let c = 0; c < chunks; c++) {
          const a = chunkStart(n, c, chunks, align);
          const b = chunkStart(n, c + 1, chunks, align);
          expect(b).toBeGreaterThanOrEqual(a);
          if (a < n) expect(a % align).toBe(0);
          expect(Math.abs(b - a - n / chunks)).toBeLessThanOrEqual(align);
        }
      }),
    );
  });

  it('triangleChunkStart gives each chunk about the same number of upper-triangle entries', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 2000 }), fc.integer({ min: 1, max: 16 }), fc.constantFrom(1, 2, 4), (k, chunks, align) => {
        const entries = (t: number) => (t * (2 * k + 1 - t)) / 2; // rows a < t
        expect(triangleChunkStart(k, 0, chunks, align)).toBe(0);
        expect(triangleChunkStart(k, chunks, chunks, align)).toBe(k);
        for (let c = 0; c < chunks; c++) {
          const a = triangleChunkStart(k, c, chunks, align);
          const b = triangleChunkStart(k, c + 1, chunks, align);
          expect(b).toBeGreaterThanOrEqual(a);
          if (a < k) expect(a % align).toBe(0);
          // off by at most `align` rows of at most k entries at each end
          expect(Math.abs(entries(b) - entries(a) - entries(k) / chunks)).toBeLessThanOrEqual(2 * align * k);
        }
      }),
    );
  });

  it('SHIMMY_THREADS takes 1 or 2 and names itself otherwise', () => {
    expect(threadsWanted('1')).toBe(1);
    expect(threadsWanted('2')).toBe(2);
    expect([1, 2]).toContain(threadsWanted(undefined));
    expect(() => threadsWanted('3')).toThrow(/SHIMMY_THREADS must be 1 .* or 2 .*got "3"/);
  });
});

// ---------------------------------------------------------------------------------------------
// The kernels, on inputs allocated by sharedFloats (shared once the thread is installed)

function vector(n: number, fill: (i: number) => number): Float64Array {
  const v = sharedFloats(n);
  for (let i = 0; i < n; i++) v[i] = fill(i);
  return v;
}

/** n×k with column j = g + 1e-5·h_j (j ≥ 1): one large singular value and k − 1 clustered near 1e-5·√n. */
function nearlyParallel(n: number, k: number, complex: boolean, seed: number): Block {
  const rand = rng(seed);
  const g = Array.from({ length: n }, () => rand() - 0.5);
  const gi = Array.from({ length: n }, () => rand() - 0.5);
  const b: Block = { len: n, re: [], im: complex ? [] : null };
  for (let j = 0; j < k; j++) {
    const s = j === 0 ? 0 : 1e-5;
    b.re.push(vector(n, (i) => g[i] + s * (rand() - 0.5)));
    if (b.im) b.im.push(vector(n, (i) => gi[i] + s * (rand() - 0.5)));
  }
  return b;
}

function cxVectors(count: number, n: number, complex: boolean, seed: number): Cx[] {
  const rand = rng(seed);
  return Array.from({ length: count }, () => ({ re: vector(n, () => rand() - 0.5), im: complex ? vector(n, () => rand() - 0.5) : new Float64Array(n) }));
}

/** The 5-point grid Laplacian on k×k nodes plus shift·I, with hopping phases e^{iθ} when complex (Hermitian, positive definite for shift > 0). */
function gridMatrix(k: number, shift: number, complex: boolean): HermitianCsr {
  const n = k * k;
  const ptr = new Int32Array(n + 1);
  const idx: number[] = [];
  const re: number[] = [];
  const im: number[] = [];
  const phase = (a: number, b: number) => (complex ? 0.37 * (b - a) : 0);
  for (let v = 0; v < n; v++) {
    const x = v % k;
    const y = Math.floor(v / k);
    const nb = [x > 0 ? v - 1 : -1, x + 1 < k ? v + 1 : -1, y > 0 ? v - k : -1, y + 1 < k ? v + k : -1];
    idx.push(v);
    re.push(4 + shift);
    im.push(0);
    for (const w of nb) {
      if (w < 0) continue;
      const t = phase(v, w);
      idx.push(w);
      re.push(-Math.cos(t));
      im.push(-Math.sin(t));
    }
    ptr[v + 1] = idx.length;
  }
  return { n, ptr, idx: Int32Array.from(idx), re: Float64Array.from(re), im: complex ? Float64Array.from(im) : null };
}

interface Results {
  random: Float64Array[];
  unit: Float64Array[];
  residuals: Float64Array;
  qr: Float64Array[];
  combined: Float64Array[];
  gram: Float64Array;
  solved: Float64Array[];
  residual: number;
}

/** Every split kernel on fixed inputs (the same with or without the thread), for one data type. */
function runKernels(complex: boolean): Results {
  // a random start block (the helper takes the page faults of its second half), its columns
  // scaled to unit length and their residual norms against a sparse matrix, in chunks
  const start: Block = { len: 40_000, re: [], im: complex ? [] : null };
  addRandomColumns(start, 64, seededUniform(3, -0.5, 0.5));
  const random = [...start.re, ...(start.im ?? [])].map((x) => Float64Array.from(x));
  inChunks('unitColumns', unitColumns, [start.re, start.im], CHUNKS);
  const grid = gridMatrix(200, 0.5, complex);
  const M = shareableMatrix({ rows: grid.n, cols: grid.n, rowPtr: grid.ptr, colIdx: grid.idx, re: grid.re, im: grid.im });
  const residuals = sharedFloats(64, 0);
  inChunks('residualNorms', residualNorms, [M, start.re, start.im, residuals], CHUNKS);

  const n = 30_000;
  const X = nearlyParallel(n, complex ? 32 : 48, complex, 11);
  expect(X.re.length ** 2 * n).toBeGreaterThanOrEqual(SPLIT_WORK);
  expect(cholQr2(X)).toBe(true);
  expect(orthonormalityDefect(X, X.re.length)).toBeLessThan(1e-13);

  const r = 40;
  const P = cxVectors(r, n, complex, 12);
  const rand = rng(13);
  const W = Float64Array.from({ length: r * r }, () => rand() - 0.5);
  const Wi = complex ? Float64Array.from({ length: r * r }, () => rand() - 0.5) : null;
  expect(r * r * n).toBeGreaterThanOrEqual(SPLIT_WORK);
  const out = combineColumns(P, W, Wi, r, !complex);

  // joint weights with zeros (skipped joints) for the real weighted Gram
  const J = n / 2;
  const d = vector(J, (k) => (k % 7 === 3 ? 0 : 0.5 + ((k * 37) % 11) / 11));
  const psi = cxVectors(48, n, false, 14);
  expect(48 * 48 * J).toBeGreaterThanOrEqual(SPLIT_WORK);
  const G = weightedGram(d, psi, true);

  const A = gridMatrix(120, 0.1, complex);
  const F = sparseLdl(A, analyseHermitian(A), {});
  const q = 64;
  expect(q * F.re.length).toBeGreaterThanOrEqual(SPLIT_WORK);
  const B = cxVectors(q, A.n, complex, 15);
  const cols = B.map((b) => Float64Array.from(b.re));
  const colsIm = complex ? B.map((b) => Float64Array.from(b.im)) : null;
  const xs = B.map((b) => b.re);
  const xsIm = complex ? B.map((b) => b.im) : null;
  F.solveBlock(xs, xsIm);
  // residual of the first column: ‖A x − b‖∞
  let residual = 0;
  for (let v = 0; v < A.n; v++) {
    let sr = 0;
    let si = 0;
    for (let t = A.ptr[v]; t < A.ptr[v + 1]; t++) {
      const w = A.idx[t];
      const ar = A.re[t];
      const ai = A.im ? A.im[t] : 0;
      const xr = xs[0][w];
      const xi = xsIm ? xsIm[0][w] : 0;
      sr += ar * xr - ai * xi;
      si += ar * xi + ai * xr;
    }
    residual = Math.max(residual, Math.abs(sr - cols[0][v]), Math.abs(si - (colsIm ? colsIm[0][v] : 0)));
  }
  return {
    random,
    unit: [...start.re, ...(start.im ?? [])],
    residuals: Float64Array.from(residuals),
    qr: [...X.re, ...(X.im ?? [])],
    combined: out.flatMap((o) => (complex ? [o.re, o.im] : [o.re])),
    gram: G.re,
    solved: [...xs, ...(xsIm ?? [])],
    residual,
  };
}

/** Indices where the arrays differ (bitwise, NaN never expected). */
function differences(a: readonly Float64Array[], b: readonly Float64Array[]): number {
  expect(a.length).toBe(b.length);
  let diff = 0;
  for (let j = 0; j < a.length; j++) {
    expect(a[j].length).toBe(b[j].length);
    for (let i = 0; i < a[j].length; i++) if (a[j][i] !== b[j][i]) diff++;
  }
  return diff;
}

describe('split kernels on two threads give the one-thread results bit for bit', () => {
  let one: { real: Results; complex: Results };
  let helper: RunningHelper;
  beforeAll(async () => {
    expect(helperThreadInstalled()).toBe(false);
    one = { real: runKernels(false), complex: runKernels(true) };
    helper = startHelperThread();
    await helper.ready();
  }, 120_000);
  afterAll(async () => {
    await helper?.stop();
    expect(helperThreadInstalled()).toBe(false);
  });

  for (const kind of ['real', 'complex'] as const) {
    it(`${kind}: random start block, unit columns, residual norms, Cholesky QR, Ψ·W, the weighted Gram and block solves`, () => {
      const before = helper.tasks;
      const two = runKernels(kind === 'complex');
      // the page faults of the random block, unitColumns, residualNorms, cholQr2 (two Grams, two
      // products), combineColumns, weightedGram, solveBlock
      expect(helper.tasks - before).toBeGreaterThanOrEqual(9);
      const ref = one[kind];
      expect(differences(two.random, ref.random)).toBe(0);
      expect(differences(two.unit, ref.unit)).toBe(0);
      expect(differences([two.residuals], [ref.residuals])).toBe(0);
      expect(two.residuals.every((x) => x > 0 && Number.isFinite(x))).toBe(true);
      expect(differences(two.qr, ref.qr)).toBe(0);
      expect(differences(two.combined, ref.combined)).toBe(0);
      expect(differences([two.gram], [ref.gram])).toBe(0);
      expect(differences(two.solved, ref.solved)).toBe(0);
      expect(two.residual).toBeLessThan(1e-12);
      expect(two.residual).toBe(ref.residual);
    }, 120_000);
  }

  it('arrays not on shared memory stay on this thread', () => {
    const before = helper.tasks;
    const n = 30_000;
    const X: Block = { len: n, re: Array.from({ length: 40 }, (_, j) => Float64Array.from({ length: n }, (_, i) => Math.sin(i * (j + 1)))), im: null };
    expect(cholQr2(X)).toBe(true);
    expect(orthonormalityDefect(X, 40)).toBeLessThan(1e-13);
    expect(helper.tasks).toBe(before);
  });

  it('a kernel that fails on the helper thread fails the call, with its message', () => {
    const cols = [sharedFloats(8192), sharedFloats(8192)];
    // gramRows with no output array: both threads fail; the call must not return normally
    expect(() => inChunks('gramRows', (() => {
      throw new Error('this thread failed too');
    }) as never, [cols, null, null, null], 4)).toThrow(/helper thread failed in a kernel: .*(null|undefined)/);
  });
});

describe('a helper thread that ends while a kernel waits for it', () => {
  const script = new URL('./fixtures/ending-thread.mjs', import.meta.url);
  const columns = (seed: number) => {
    const rand = rng(seed);
    return Array.from({ length: 6 }, () => vector(20_000, () => rand() - 0.5));
  };
  const unitOnOneThread = (seed: number) => {
    const x = columns(seed).map((c) => Float64Array.from(c));
    for (let c = 0; c < CHUNKS; c++) unitColumns(x, null, c, CHUNKS);
    return x;
  };

  it('fails the call, naming what is missing, when it ended holding a chunk; later kernels run here', async () => {
    process.env.SHIMMY_TEST_ENDING = 'mid-chunk';
    const helper = startHelperThread({ script, stallMs: 2000 });
    try {
      await helper.ready();
      // the kernel's one chunk goes to the other thread (which claims it and ends), while this
      // one runs its own part
      const x = columns(5);
      let mine = false;
      const t0 = Date.now();
      expect(() => runBeside('unitColumns', unitColumns, [x, null], () => (mine = true))).toThrow(
        /helper thread (ended|computed nothing for 2 s) during kernel unitColumns with 1 of its 1 chunks not computed, so the result would be incomplete; .*SHIMMY_THREADS=1/,
      );
      expect(mine).toBe(true);
      // on Linux its end is seen at once, not after the stall rule's time
      if (process.platform === 'linux') expect(Date.now() - t0).toBeLessThan(1500);
      // the thread is out of use: the same kernel now runs whole here, and gives the one-thread result
      const tasks = helper.tasks;
      const y = columns(5);
      inChunks('unitColumns', unitColumns, [y, null], CHUNKS);
      expect(helper.tasks).toBe(tasks);
      expect(differences(y, unitOnOneThread(5))).toBe(0);
    } finally {
      delete process.env.SHIMMY_TEST_ENDING;
      await helper.stop();
    }
  }, 30_000);

  it('computes here the chunks it never claimed and goes on, with a warning, when it ended at once', async () => {
    process.env.SHIMMY_TEST_ENDING = 'at-once';
    const warnings: string[] = [];
    const onWarning = (w: Error) => warnings.push(w.message);
    process.on('warning', onWarning);
    const helper = startHelperThread({ script, stallMs: 2000 });
    try {
      await helper.ready();
      // the kernel's one chunk was the other thread's: it is computed here once that thread is gone
      const x = columns(6);
      let mine = false;
      runBeside('unitColumns', unitColumns, [x, null], () => (mine = true));
      expect(mine).toBe(true);
      expect(helper.tasks).toBe(1);
      expect(differences(x, unitOnOneThread(6))).toBe(0);
      await new Promise((r) => setTimeout(r, 50));
      expect(warnings.some((w) => /helper thread (ended|computed nothing for 2 s) during kernel unitColumns; every chunk was computed on this thread, and the run goes on on one thread/.test(w))).toBe(true);
      // and later kernels run here
      const y = columns(7);
      inChunks('unitColumns', unitColumns, [y, null], CHUNKS);
      expect(helper.tasks).toBe(1);
      expect(differences(y, unitOnOneThread(7))).toBe(0);
    } finally {
      process.off('warning', onWarning);
      delete process.env.SHIMMY_TEST_ENDING;
      await helper.stop();
    }
  }, 30_000);
});
