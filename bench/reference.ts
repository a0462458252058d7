/**
 * Reference columns of the benchmark, timed on the same matrices shimmy counts:
 *  - scipy's dense null_space (a full SVD);
 *  - scipy's SuperLU inertia count of the Gram matrix K − τI;
 *  - CHOLMOD's LDLᵀ inertia count of the same K − τI, through a small C program compiled into a
 *    temp dir when Debian's libsuitesparse-dev and a C compiler are present (skipped otherwise);
 *  - numpy's batched SVD of a periodic supercell's one-cell symbol blocks (bench/bloch-reference.ts).
 * Every child runs single-threaded (OMP/OpenBLAS/MKL thread counts 1): a multi-threaded BLAS
 * slows several-fold when the machine is busy and would inflate shimmy's ratios.
 * python3 with numpy/scipy is used here only; shimmy never depends on it.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { SparseMatrix } from '../src/linalg/sparse.js';

/** The environment of every reference child: one thread for every BLAS/OpenMP runtime. */
export function singleThreadEnv(): NodeJS.ProcessEnv {
  return { ...process.env, OMP_NUM_THREADS: '1', OPENBLAS_NUM_THREADS: '1', MKL_NUM_THREADS: '1', VECLIB_MAXIMUM_THREADS: '1', NUMEXPR_NUM_THREADS: '1' };
}

export interface ReferenceResult {
  seconds?: number;
  /** null_space: its dimension; inertia: negative eigenvalues of K − τI. */
  count?: number;
  nnzL?: number;
  flops?: number;
  note?: string;
}

export function firstLine(s: string | null | undefined): string {
  const line = (s ?? '').split('\n').find((l) => l.trim() !== '') ?? '';
  return line.length > 160 ? `${line.slice(0, 157)}...` : line;
}

export function pythonWorks(): boolean {
  return spawnSync('python3', ['-c', 'import scipy, numpy'], { encoding: 'utf8', env: singleThreadEnv() }).status === 0;
}

/** Run a python script with arguments, single-threaded; its last stdout line is JSON. */
export function runPython(code: string, args: string[], timeoutSeconds: number): ReferenceResult {
  const dir = mkdtempSync(join(tmpdir(), 'shimmy-ref-'));
  const script = join(dir, 'ref.py');
  writeFileSync(script, code);
  const p = spawnSync('python3', [script, ...args], { encoding: 'utf8', env: singleThreadEnv(), timeout: Math.round(timeoutSeconds * 1000), maxBuffer: 64 * 1024 * 1024 });
  rmSync(dir, { recursive: true, force: true });
  if (p.status !== 0) return { note: p.error ? `timeout after ${timeoutSeconds} s` : firstLine(p.stderr) || `exit ${p.status}` };
  const last = p.stdout.trim().split('\n').pop() ?? '';
  return JSON.parse(last) as ReferenceResult;
}

/** R as COO text: a header "rows cols complex", then "i j re im" per stored entry. */
export function writeCoo(R: SparseMatrix, file: string): void {
  const lines = [`${R.rows} ${R.cols} ${R.im ? 1 : 0}`];
  for (let r = 0; r < R.rows; r++)
    for (let k = R.rowPtr[r]; k < R.rowPtr[r + 1]; k++) lines.push(`${r} ${R.colIdx[k]} ${R.re[k]} ${R.im ? R.im[k] : 0}`);
  writeFileSync(file, lines.join('\n') + '\n');
}

const LOAD = String.raw`
import json, sys, time
import numpy as np
import scipy.sparse as sp
def load(path):
    with open(path) as f:
        m, n, cx = map(int, f.readline().split())
        data = np.loadtxt(f, ndmin=2)
    if data.size == 0:
        data = np.zeros((0, 4))
    v = data[:, 2] + (1j * data[:, 3] if cx else 0)
    return sp.csr_matrix((v, (data[:, 0].astype(int), data[:, 1].astype(int))), shape=(m, n))
`;

/** scipy.linalg.null_space(A, rcond=1e-9) on the dense matrix; times densifying and the SVD. */
const NULL_SPACE = LOAD + String.raw`
import scipy.linalg as sl
A = load(sys.argv[1])
t0 = time.perf_counter()
Z = sl.null_space(A.toarray(), rcond=1e-9)
print(json.dumps({"seconds": time.perf_counter() - t0, "count": int(Z.shape[1])}))
`;

/**
 * The inertia reference. K = AᴴA on the smaller side (as shimmy's sparse count), τ = 1e-6 ·
 * (largest absolute row sum of K), an upper bound of σ_max(A)² (Gershgorin), so √τ ≥ 1e-3·σ_max
 * as shimmy's shift. SuperLU factors P_r (K − τI) P_c = L U with the COLAMD or MMD(AᵀA+A)
 * ordering, diag_pivot_thresh = 0 and SymmetricMode (diagonal pivots preferred). When the row
 * and column permutations agree the factorisation is P (K − τI) Pᵀ = L U with U = D Lᴴ, and by
 * Sylvester's law of inertia the negative entries of diag(U) count the eigenvalues of K below τ;
 * when they differ (an off-diagonal pivot) that count is not the inertia and the note says so.
 * Timed: forming K − τI and the factorisation. Optionally writes K − τI's lower triangle for CHOLMOD.
 */
const INERTIA = LOAD + String.raw`
import scipy.sparse.linalg as sla
A = load(sys.argv[1])
ordering = sys.argv[2]
t0 = time.perf_counter()
K = (A.conj().T @ A) if A.shape[1] <= A.shape[0] else (A @ A.conj().T)
K = sp.csc_matrix(K)
tau = 1e-6 * float(np.max(np.abs(K).sum(axis=1))) if K.shape[0] else 0.0
K = sp.csc_matrix(K - tau * sp.identity(K.shape[0], dtype=K.dtype, format="csc"))
t1 = time.perf_counter()
lu = sla.splu(K, permc_spec=ordering, diag_pivot_thresh=0.0, options=dict(SymmetricMode=True))
t2 = time.perf_counter()
d = lu.U.diagonal()
neg = int(np.sum(d.real < 0))
sym = bool(np.array_equal(lu.perm_r, lu.perm_c))
out = {"seconds": t2 - t0, "factorSeconds": t2 - t1, "count": neg, "nnzL": int(lu.L.nnz), "n": int(K.shape[0]), "tau": tau, "symmetricPivots": sym}
if len(sys.argv) > 3:
    T = sp.tril(K).tocoo()
    with open(sys.argv[3], "w") as f:
        f.write("%d %d %d\n" % (K.shape[0], T.nnz, 1 if np.iscomplexobj(K) else 0))
        for i, j, v in zip(T.row, T.col, T.data):
            f.write("%d %d %.17g %.17g\n" % (i, j, v.real, v.imag))
print(json.dumps(out))
`;

export function scipyNullSpace(R: SparseMatrix, timeoutSeconds: number): ReferenceResult {
  const dir = mkdtempSync(join(tmpdir(), 'shimmy-coo-'));
  const file = join(dir, 'R.coo');
  writeCoo(R, file);
  const r = runPython(NULL_SPACE, [file], timeoutSeconds);
  rmSync(dir, { recursive: true, force: true });
  return r;
}

export type Ordering = 'COLAMD' | 'MMD_AT_PLUS_A';

/** SuperLU's inertia count (and, when `cholmod` is given, CHOLMOD's on the same K − τI). */
export function inertiaReferences(R: SparseMatrix, ordering: Ordering, cholmod: CholmodProgram | null, timeoutSeconds: number): { superlu: ReferenceResult; cholmod?: ReferenceResult } {
  const dir = mkdtempSync(join(tmpdir(), 'shimmy-coo-'));
  const file = join(dir, 'R.coo');
  const kFile = join(dir, 'K.coo');
  writeCoo(R, file);
  const superlu = runPython(INERTIA, cholmod ? [file, ordering, kFile] : [file, ordering], timeoutSeconds);
  const raw = superlu as ReferenceResult & { symmetricPivots?: boolean; n?: number };
  if (raw.seconds !== undefined && raw.symmetricPivots === false) superlu.note = 'off-diagonal pivots: the count is not an inertia';
  let chol: ReferenceResult | undefined;
  if (cholmod && existsSync(kFile)) chol = cholmod.run(kFile, timeoutSeconds);
  rmSync(dir, { recursive: true, force: true });
  return { superlu, ...(chol ? { cholmod: chol } : {}) };
}

// ---------------------------------------------------------------------------------------------
// CHOLMOD (Y. Chen, T. A. Davis, W. W. Hager & S. Rajamanickam, "Algorithm 887: CHOLMOD",
// ACM TOMS 35(3), 22 (2008)): simplicial LDLᵀ with its default ordering (AMD, or METIS/NESDIS
// when it judges them better). The diagonal D of the LDLᵀ of P (K − τI) Pᵀ gives the inertia by
// Sylvester's law; CHOLMOD does not pivot, so a zero pivot would stop it (reported as an error).

const CHOLMOD_C = String.raw`
#include <stdio.h>
#include <stdlib.h>
#include <time.h>
#include "cholmod.h"
static double now(void) { struct timespec t; clock_gettime(CLOCK_MONOTONIC, &t); return t.tv_sec + 1e-9 * t.tv_nsec; }
int main(int argc, char **argv) {
  FILE *f = fopen(argv[1], "r");
  if (!f) { fprintf(stderr, "cannot open %s\n", argv[1]); return 1; }
  long n, nz; int cx;
  if (fscanf(f, "%ld %ld %d", &n, &nz, &cx) != 3) { fprintf(stderr, "bad header\n"); return 1; }
  cholmod_common c;
  cholmod_l_start(&c);
  c.supernodal = CHOLMOD_SIMPLICIAL;
  c.final_ll = 0;
  cholmod_triplet *T = cholmod_l_allocate_triplet(n, n, nz, -1, cx ? CHOLMOD_COMPLEX : CHOLMOD_REAL, &c);
  long *Ti = (long *) T->i, *Tj = (long *) T->j;
  double *Tx = (double *) T->x;
  for (long k = 0; k < nz; k++) {
    double re, im;
    if (fscanf(f, "%ld %ld %lf %lf", &Ti[k], &Tj[k], &re, &im) != 4) { fprintf(stderr, "bad entry %ld\n", k); return 1; }
    if (cx) { Tx[2 * k] = re; Tx[2 * k + 1] = im; } else Tx[k] = re;
  }
  fclose(f);
  T->nnz = nz;
  cholmod_sparse *A = cholmod_l_triplet_to_sparse(T, nz, &c);
  double t0 = now();
  cholmod_factor *L = cholmod_l_analyze(A, &c);
  double t1 = now();
  cholmod_l_factorize(A, L, &c);
  double t2 = now();
  if (c.status != CHOLMOD_OK || L->is_ll || L->is_super) { fprintf(stderr, "cholmod status %d (a zero pivot?)\n", c.status); return 2; }
  long *Lp = (long *) L->p;
  double *Lx = (double *) L->x;
  long neg = 0;
  for (long j = 0; j < n; j++) { double d = cx ? Lx[2 * Lp[j]] : Lx[Lp[j]]; if (d < 0) neg++; }
  printf("{\"seconds\": %.6f, \"analyseSeconds\": %.6f, \"count\": %ld, \"nnzL\": %.0f, \"flops\": %.6g, \"ordering\": %d}\n", t2 - t0, t1 - t0, neg, c.lnz, c.fl, c.selected >= 0 ? c.method[c.selected].ordering : -1);
  cholmod_l_free_factor(&L, &c);
  cholmod_l_free_sparse(&A, &c);
  cholmod_l_free_triplet(&T, &c);
  cholmod_l_finish(&c);
  return 0;
}
`;

export interface CholmodProgram {
  run(kFile: string, timeoutSeconds: number): ReferenceResult;
  dispose(): void;
}

/** Compiles the CHOLMOD program, or says why not (headers or compiler missing, compile error). */
export function compileCholmod(): CholmodProgram | { note: string } {
  const header = '/usr/include/suitesparse/cholmod.h';
  if (!existsSync(header)) return { note: `CHOLMOD skipped: ${header} not found (Debian package libsuitesparse-dev)` };
  if (spawnSync('cc', ['--version'], { encoding: 'utf8' }).status !== 0) return { note: 'CHOLMOD skipped: no C compiler (cc)' };
  const dir = mkdtempSync(join(tmpdir(), 'shimmy-cholmod-'));
  const src = join(dir, 'inertia.c');
  const exe = join(dir, 'inertia');
  writeFileSync(src, CHOLMOD_C);
  const cc = spawnSync('cc', ['-O2', '-I/usr/include/suitesparse', src, '-o', exe, '-lcholmod', '-lm'], { encoding: 'utf8' });
  if (cc.status !== 0) {
    rmSync(dir, { recursive: true, force: true });
    return { note: `CHOLMOD skipped: compiling failed (${firstLine(cc.stderr)})` };
  }
  return {
    run(kFile, timeoutSeconds) {
      const p = spawnSync(exe, [kFile], { encoding: 'utf8', env: singleThreadEnv(), timeout: Math.round(timeoutSeconds * 1000) });
      if (p.status !== 0) return { note: p.error ? `timeout after ${timeoutSeconds} s` : firstLine(p.stderr) || `exit ${p.status}` };
      return JSON.parse(p.stdout.trim()) as ReferenceResult;
    },
    dispose: () => rmSync(dir, { recursive: true, force: true }),
  };
}

// ---------------------------------------------------------------------------------------------
// Repeats

export interface Spread {
  median: number;
  min: number;
  max: number;
  n: number;
}

export function spread(values: number[]): Spread | undefined {
  const v = values.filter((x) => Number.isFinite(x)).sort((a, b) => a - b);
  if (!v.length) return undefined;
  const mid = v.length >> 1;
  const median = v.length % 2 ? v[mid] : (v[mid - 1] + v[mid]) / 2;
  return { median, min: v[0], max: v[v.length - 1], n: v.length };
}

/** "1.23 (1.10–1.40)", or the median alone for one run. */
export function fmtSpread(s: Spread | undefined, fmt: (x: number) => string): string {
  if (!s) return '—';
  return s.n > 1 ? `${fmt(s.median)} (${fmt(s.min)}–${fmt(s.max)})` : fmt(s.median);
}
