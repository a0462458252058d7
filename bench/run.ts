/**
 * shimmy's benchmark (`npm run bench`): whole-process timings of `shimmy count` per solver on the
 * regular and twisted kagome, free and periodic, N×N supercells, with peak memory, speed ratios
 * against the dense path and against scipy.linalg.null_space on the same matrix, fitted scaling
 * exponents, and the speed targets. A benchmark is never a unit test: nothing here fails a build.
 * References (bench/reference.ts) run single-threaded and alternate with shimmy's runs
 * (--repeats, default 3); medians and min–max are printed, with scipy's SuperLU and (when
 * libsuitesparse-dev is installed) CHOLMOD inertia counts of the same Gram matrix K − τI.
 *
 *   npm run bench                      # full table, per-run budget 240 s
 *   npm run bench -- --quick           # N = 8, 16, 24 and a 30 s budget
 *   npm run bench -- --budget 300 --sizes 8,16,32 --no-scipy --json bench-out.json
 *
 * Each run spawns `node bin/shimmy.cjs count SPEC --cells NxN --bc BC --json --solver S` and times
 * it from spawn to exit; peak memory is the child's maximum resident set size, written at exit by
 * bench/rss-hook.cjs (preloaded with node --require). A run whose predicted time (extrapolated
 * from the previous sizes of the same path) exceeds the budget is skipped with a note.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { COMMANDS } from '../src/cli/main.js';
import { sparsePlan } from '../src/flex/solve-sparse.js';
import { availableSolvers, chooseSolver } from '../src/flex/solvers.js';
import { buildGallery } from '../src/framework/gallery.js';
import { DENSE_MEMORY_LIMIT } from '../src/linalg/dense.js';
import { parseBoundary } from '../src/supercell/boundary.js';
import { rigidityMatrix } from '../src/supercell/rigidity.js';
import { buildSupercell } from '../src/supercell/supercell.js';
import { compileCholmod, fmtSpread, inertiaReferences, pythonWorks, scipyNullSpace, singleThreadEnv, spread, type CholmodProgram, type Ordering, type ReferenceResult, type Spread } from './reference.js';

const ROOT = join(dirname(fileURLToPath(import.meta.url)), '..');
const BIN = join(ROOT, 'bin', 'shimmy.cjs');
const HOOK = join(ROOT, 'bench', 'rss-hook.cjs');

// ---------------------------------------------------------------------------------------------
// Options

interface Options {
  budget: number;
  sizes: number[];
  scipy: boolean;
  /** Runs of each shimmy path and each reference per size, interleaved (medians and spread reported). */
  repeats: number;
  /** SuperLU's column ordering. */
  ordering: Ordering;
  json?: string;
}

function parseOptions(argv: string[]): Options {
  const o: Options = { budget: 240, sizes: [8, 16, 24, 32, 48, 64, 96, 128, 256], scipy: true, repeats: 3, ordering: 'MMD_AT_PLUS_A' };
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a === '--quick') {
      o.budget = 30;
      o.sizes = [8, 16, 24];
    } else if (a === '--budget') o.budget = Number(argv[++i]);
    else if (a === '--sizes') o.sizes = argv[++i].split(',').map(Number);
    else if (a === '--no-scipy') o.scipy = false;
    else if (a === '--repeats') o.repeats = Number(argv[++i]);
    else if (a === '--ordering') o.ordering = argv[++i] as Ordering;
    else if (a === '--json') o.json = argv[++i];
    else {
      console.error(`bench: unknown option ${a}. Options: --quick, --budget SECONDS, --sizes 8,16,..., --repeats N, --ordering COLAMD|MMD_AT_PLUS_A, --no-scipy, --json FILE`);
      process.exit(2);
    }
  }
  if (!(o.budget > 0) || o.sizes.some((n) => !Number.isInteger(n) || n < 1) || !(Number.isInteger(o.repeats) && o.repeats >= 1) || !['COLAMD', 'MMD_AT_PLUS_A'].includes(o.ordering)) {
    console.error('bench: --budget must be a positive number of seconds, --sizes positive integers, --repeats a whole number ≥ 1 and --ordering COLAMD or MMD_AT_PLUS_A');
    process.exit(2);
  }
  return o;
}

// ---------------------------------------------------------------------------------------------
// Runs

interface RunResult {
  status: 'ok' | 'too large' | 'timeout' | 'error' | 'skipped' | 'pending';
  seconds?: number;
  /** The count's own time inside the process (`seconds` of count --json: no start-up, no loading). */
  solveSeconds?: number;
  /** Peak resident set size in MB. */
  peakMB?: number;
  /** Solver the run reports (auto names its choice). */
  solver?: string;
  flexes?: number;
  selfStresses?: number;
  note?: string;
  /** Over the repeats: whole-process and in-process seconds (`seconds`, `solveSeconds` are their medians). */
  spread?: Spread;
  solveSpread?: Spread;
  /** status.factorisation of count --json (sparse path): method, nnz(L), flops. */
  factorisation?: { method: string; nnzL: number; flops: number };
}

function timeCommand(args: string[], timeoutSeconds: number, env: Record<string, string> = {}): RunResult & { json?: Record<string, unknown> } {
  const dir = mkdtempSync(join(tmpdir(), 'shimmy-bench-'));
  const rssFile = join(dir, 'rss');
  const t0 = process.hrtime.bigint();
  const child = spawnSync(process.execPath, ['--require', HOOK, BIN, ...args], {
    cwd: ROOT,
    env: { ...process.env, ...env, SHIMMY_BENCH_RSS: rssFile },
    encoding: 'utf8',
    maxBuffer: 256 * 1024 * 1024,
    timeout: Math.round(timeoutSeconds * 1000),
  });
  const seconds = Number(process.hrtime.bigint() - t0) / 1e9;
  const peakMB = existsSync(rssFile) ? Number(readFileSync(rssFile, 'utf8')) / 1024 : undefined;
  rmSync(dir, { recursive: true, force: true });
  if (child.error && (child.error as NodeJS.ErrnoException).code === 'ETIMEDOUT') return { status: 'timeout', seconds, note: `killed after ${timeoutSeconds} s` };
  if (child.status === 3) return { status: 'too large', seconds, peakMB, note: firstLine(child.stderr) };
  if (child.status !== 0) return { status: 'error', seconds, peakMB, note: firstLine(child.stderr) || `exit ${child.status}` };
  try {
    const json = JSON.parse(child.stdout) as Record<string, unknown>;
    return {
      status: 'ok',
      seconds,
      peakMB,
      solveSeconds: typeof json.seconds === 'number' ? json.seconds : undefined,
      solver: typeof json.solver === 'string' ? json.solver : undefined,
      flexes: typeof json.flexes === 'number' ? json.flexes : undefined,
      selfStresses: typeof json.selfStresses === 'number' ? json.selfStresses : undefined,
      factorisation: (json.status as { factorisation?: RunResult['factorisation'] } | undefined)?.factorisation,
      json,
    };
  } catch {
    return { status: 'ok', seconds, peakMB };
  }
}

function firstLine(s: string | null | undefined): string {
  const line = (s ?? '').split('\n').find((l) => l.trim() !== '') ?? '';
  return line.length > 160 ? `${line.slice(0, 157)}...` : line;
}

// ---------------------------------------------------------------------------------------------
// References (bench/reference.ts): scipy null_space, SuperLU and CHOLMOD inertia, single-threaded

/** Seconds per m·n² of scipy's SVD on this machine, single-threaded, from one 900×900 null_space. */
function calibrateScipy(): number {
  const code = 'import time, numpy as np, scipy.linalg as sl\nA = np.random.default_rng(1).standard_normal((900, 900))\nt = time.perf_counter(); sl.null_space(A); print(time.perf_counter() - t)';
  const r = spawnSync('python3', ['-c', code], { encoding: 'utf8', env: singleThreadEnv() });
  const t = Number(r.stdout);
  return (Number.isFinite(t) && t > 0 ? t : 1) / 900 ** 3;
}

// ---------------------------------------------------------------------------------------------
// Prediction and fits

/** Runs shorter than this (in-process) are left out of the growth fits. */
const MIN_FIT_SECONDS = 0.05;

/** Least-squares slope of log(seconds) against log(N). */
function fitExponent(points: { N: number; seconds: number }[]): number | null {
  if (points.length < 2) return null;
  const xs = points.map((p) => Math.log(p.N));
  const ys = points.map((p) => Math.log(p.seconds));
  const mx = xs.reduce((a, b) => a + b, 0) / xs.length;
  const my = ys.reduce((a, b) => a + b, 0) / ys.length;
  let sxy = 0;
  let sxx = 0;
  xs.forEach((x, i) => {
    sxy += (x - mx) * (ys[i] - my);
    sxx += (x - mx) ** 2;
  });
  return sxx > 0 ? sxy / sxx : null;
}

/** Exponents assumed before two sizes of a path are measured (dense SVD ~N⁶, band ~N⁴, Bloch ~N²). */
const PRIOR_EXPONENT: Record<string, number> = { dense: 6, sparse: 4, bloch: 2.5, auto: 4, scipy: 6 };

function predict(history: { N: number; seconds: number }[], N: number, solver: string, startup: number): number {
  if (history.length === 0) return 0;
  const net = history.map((p) => ({ N: p.N, seconds: Math.max(p.seconds - startup, 0.05) }));
  const last = net[net.length - 1];
  const tail = net.slice(-3).filter((p) => p.seconds > 0.2);
  const e = Math.max(PRIOR_EXPONENT[solver] ?? 4, tail.length >= 2 ? (fitExponent(tail) ?? 0) : 0);
  return startup + last.seconds * (N / last.N) ** e;
}

/** True when the sparse solver's band alone exceeds its default memory limit: it refuses at once, so the run is cheap and shows the refusal. */
function refusesAtOnce(R: ReturnType<typeof rigidityMatrix>): boolean {
  return sparsePlan(R).bandBytes > DENSE_MEMORY_LIMIT;
}

// ---------------------------------------------------------------------------------------------
// The table

const LATTICES = [
  { label: 'kagome', spec: 'gallery:kagome' },
  { label: 'twisted kagome', spec: 'gallery:twisted-kagome?twist=15' },
];
const BOUNDARIES = ['free', 'periodic'];

interface Row {
  lattice: string;
  bc: string;
  N: number;
  dof: number;
  solver: string;
  result: RunResult;
  vsDense?: number;
  vsScipy?: number;
}

/** A reference column at one size: its runs over the repeats. */
interface RefRow {
  lattice: string;
  bc: string;
  N: number;
  dof: number;
  label: string;
  /** What is computed, in a few words. */
  what: string;
  countText: (k: number) => string;
  /** One run, with what it produced for this row and the rows right after it (CHOLMOD after SuperLU). */
  run: (timeoutSeconds: number) => ReferenceResult[];
  timeout: number;
  more: boolean;
  seconds: number[];
  spread?: Spread;
  count?: number;
  nnzL?: number;
  flops?: number;
  note?: string;
  add(res: ReferenceResult, opts: Options): void;
}

function newRef(lattice: string, bc: string, N: number, dof: number, label: string, what: string, countText: (k: number) => string, run: RefRow['run'], timeout: number): RefRow {
  const row: RefRow = {
    lattice,
    bc,
    N,
    dof,
    label,
    what,
    countText,
    run,
    timeout,
    // a row filled by another's run (timeout 0) never runs itself
    more: timeout > 0,
    seconds: [],
    add(res, opts) {
      if (res.seconds === undefined) {
        row.note = res.note ?? 'failed';
        row.more = false;
        return;
      }
      row.seconds.push(res.seconds);
      row.spread = spread(row.seconds);
      row.count = res.count;
      row.nnzL = res.nnzL;
      row.flops = res.flops;
      if (res.note) row.note = res.note;
      if (row.timeout > 0) row.more = res.seconds * opts.repeats <= opts.budget;
    },
  };
  return row;
}

/** One row from the repeats of a shimmy run: medians of the times, the largest peak memory. */
function summarise(runs: RunResult[]): RunResult {
  const ok = runs.filter((r) => r.status === 'ok');
  if (!ok.length) return runs[runs.length - 1] ?? { status: 'error', note: 'no run' };
  const whole = spread(ok.map((r) => r.seconds ?? NaN));
  const inner = spread(ok.map((r) => r.solveSeconds ?? NaN));
  const peaks = ok.map((r) => r.peakMB ?? 0);
  const failed = runs.length - ok.length;
  return {
    ...ok[0],
    seconds: whole?.median,
    solveSeconds: inner?.median,
    peakMB: Math.max(...peaks) || undefined,
    spread: whole,
    solveSpread: inner,
    ...(failed ? { note: `${failed} of ${runs.length} repeats failed: ${runs.find((r) => r.status !== 'ok')?.note ?? ''}` } : {}),
  };
}

function fmtSeconds(s: number | undefined): string {
  if (s === undefined) return '—';
  return s < 10 ? s.toFixed(2) : s < 100 ? s.toFixed(1) : s.toFixed(0);
}

function pad(s: string, w: number, right = false): string {
  return right ? s.padStart(w) : s.padEnd(w);
}

function main(): void {
  const opts = parseOptions(process.argv.slice(2));
  const solversHere = availableSolvers();
  const scipy = opts.scipy && pythonWorks();
  const started = Date.now();
  console.log(`shimmy benchmark — ${new Date().toISOString()}, node ${process.version}, per-run budget ${opts.budget} s, ${opts.repeats} interleaved repeat(s) per row`);
  console.log(`solvers registered: ${solversHere.join(', ')}; scipy: ${scipy ? 'yes (single-threaded: OMP/OpenBLAS/MKL threads 1)' : opts.scipy ? 'not available (python3 -c "import scipy" failed)' : 'off'}`);
  const compiled = scipy ? compileCholmod() : { note: 'CHOLMOD skipped with scipy' };
  const cholmod: CholmodProgram | null = 'run' in compiled ? compiled : null;
  console.log('run' in compiled ? 'CHOLMOD: compiled (simplicial LDLᵀ, default ordering)' : compiled.note);
  // warm-up: fills tsx's transpile cache so the first measured run is not penalised
  timeCommand(['count', 'gallery:square', '--cells', '2x2', '--json'], 120);
  const startupRuns = [0, 1, 2].map(() => timeCommand(['count', 'gallery:square', '--cells', '1x1', '--json', '--solver', 'dense'], 120).seconds ?? 0);
  const startup = Math.min(...startupRuns);
  console.log(`process start-up (count of a 1×1 square, best of 3): ${startup.toFixed(2)} s — included in every shimmy "seconds" below`);
  console.log('seconds: median over the repeats, range: min–max; reference rows time only their own work inside python or C (no start-up, no loading)\n');

  const rows: Row[] = [];
  const refRows: RefRow[] = [];
  const history = new Map<string, { N: number; seconds: number }[]>();
  /** In-process count times per path, for the growth fits. */
  const solveHistory = new Map<string, { N: number; seconds: number }[]>();
  const failures = new Map<string, string>();
  const scipyTimes = new Map<string, number>();
  const scipyNote = new Map<string, string>();
  // seconds per m·n² of scipy's SVD on this machine, from one 900×900 calibration
  const scipyPerCube = scipy ? calibrateScipy() : 0;
  if (scipy) console.log(`scipy calibration (single-threaded): null_space of a 900×900 matrix ${fmtSeconds(scipyPerCube * 900 ** 3)} s\n`);
  const header = `${pad('lattice', 15)} ${pad('bc', 9)} ${pad('N', 4, true)} ${pad('dof', 7, true)} ${pad('solver', 16)} ${pad('seconds', 8, true)} ${pad('range', 13, true)} ${pad('solve s', 8, true)} ${pad('peak MB', 8, true)} ${pad('×dense', 7, true)} ${pad('×scipy', 7, true)}  note`;
  console.log(header);
  console.log('-'.repeat(header.length + 10));
  const range = (s: Spread | undefined) => (s && s.n > 1 ? `${fmtSeconds(s.min)}–${fmtSeconds(s.max)}` : '—');
  const lead = (lattice: string, bc: string, N: number, dof: number, solver: string) => `${pad(lattice, 15)} ${pad(bc, 9)} ${pad(String(N), 4, true)} ${pad(String(dof), 7, true)} ${pad(solver, 16)}`;
  const print = (r: Row) => {
    const res = r.result;
    const sec = res.status === 'ok' ? fmtSeconds(res.seconds) : res.status;
    const f = res.factorisation;
    const note = [
      res.solver && res.solver !== r.solver ? `ran ${res.solver}` : '',
      res.flexes !== undefined ? `flexes ${res.flexes}, self-stresses ${res.selfStresses}` : '',
      f ? `${f.method}: nnz(L) ${f.nnzL.toExponential(2)}, flops ${f.flops.toExponential(2)}` : '',
      res.solveSpread && res.solveSpread.n > 1 ? `solve s ${fmtSpread(res.solveSpread, fmtSeconds)}` : '',
      res.note ?? '',
    ]
      .filter(Boolean)
      .join('; ');
    console.log(
      `${lead(r.lattice, r.bc, r.N, r.dof, r.solver)} ${pad(sec, 8, true)} ${pad(range(res.spread), 13, true)} ${pad(res.status === 'ok' ? fmtSeconds(res.solveSeconds) : '—', 8, true)} ${pad(res.peakMB ? res.peakMB.toFixed(0) : '—', 8, true)} ${pad(r.vsDense ? `${r.vsDense.toFixed(1)}` : '—', 7, true)} ${pad(r.vsScipy ? `${r.vsScipy.toFixed(1)}` : '—', 7, true)}  ${note}`,
    );
  };
  const printRef = (r: RefRow, shimmy: Row | undefined) => {
    const s = r.spread;
    const parts = [r.what];
    if (r.count !== undefined) parts.push(r.countText(r.count));
    if (r.nnzL !== undefined) parts.push(`nnz(L) ${r.nnzL.toExponential(2)}`);
    if (r.flops !== undefined) parts.push(`flops ${r.flops.toExponential(2)}`);
    const sh = shimmy?.result;
    if (s && sh?.status === 'ok' && sh.solveSeconds !== undefined) parts.push(`shimmy (${shimmy!.solver}) ÷ this: ${(sh.solveSeconds / s.median).toFixed(1)}× in-process, ${(sh.seconds! / s.median).toFixed(1)}× whole process`);
    if (r.note) parts.push(r.note);
    console.log(`${lead(r.lattice, r.bc, r.N, r.dof, r.label)} ${pad(s ? fmtSeconds(s.median) : 'failed', 8, true)} ${pad(range(s), 13, true)} ${pad('—', 8, true)} ${pad('—', 8, true)} ${pad('', 7)} ${pad('', 7)}  ${parts.join('; ')}`);
  };

  for (const lat of LATTICES) {
    for (const bc of BOUNDARIES) {
      for (const N of opts.sizes) {
        const sc = buildSupercell(buildGallery(lat.spec), [N, N], parseBoundary(bc));
        const dof = 2 * sc.jointCount;
        const R = rigidityMatrix(sc);
        const autoPick = chooseSolver(sc, 'auto').name;
        const sizeKey = `${lat.label}|${bc}|${N}`;
        // the Bloch solver needs a twisted axis; every registered solver runs otherwise
        const runList: string[] = ['dense', 'sparse', 'bloch'].filter((s) => solversHere.includes(s as never) && !(bc === 'free' && s === 'bloch'));
        if (!runList.includes(autoPick)) runList.push('auto');

        // what runs at this size: shimmy paths by their prediction from the previous sizes
        interface Job {
          name: string;
          skip?: RunResult;
          runs: RunResult[];
          /** Stop repeating once a run fails or the repeats would not fit the budget. */
          more: boolean;
        }
        const jobs: Job[] = runList.map((solver) => {
          const key = `${lat.label}|${bc}|${solver}`;
          const h = history.get(key) ?? [];
          const predicted = predict(h, N, solver, startup);
          const failed = failures.get(key);
          if (failed) return { name: solver, skip: { status: 'skipped', note: `${failed} at a smaller size` }, runs: [], more: false };
          if (h.length && predicted > opts.budget && !(solver === 'sparse' && refusesAtOnce(R))) return { name: solver, skip: { status: 'skipped', note: `predicted ~${fmtSeconds(predicted)} s > budget` }, runs: [], more: false };
          return { name: solver, runs: [], more: true };
        });
        // references: null_space while its predicted time fits (the 24×24 open kagome is a target
        // and runs whatever the budget), SuperLU and CHOLMOD inertia on every size while they fit
        const refs: RefRow[] = [];
        if (scipy) {
          const complexFactor = R.im ? 4 : 1;
          const predicted = scipyPerCube * complexFactor * Math.max(R.rows, R.cols) * Math.min(R.rows, R.cols) ** 2;
          const target = lat.label === 'kagome' && bc === 'free' && N === 24;
          if (predicted > opts.budget && !target) scipyNote.set(sizeKey, `scipy null_space skipped (predicted ~${fmtSeconds(predicted)} s)`);
          else refs.push(newRef(lat.label, bc, N, dof, 'null_space', 'scipy.linalg.null_space(rcond=1e-9), dense SVD', (k) => `flexes ${k}`, (t) => [scipyNullSpace(R, t)], Math.max(3 * opts.budget, 3 * predicted, 60)));
          const side = Math.min(R.rows, R.cols);
          const countText = (k: number) => `${k} eigenvalues of K below τ (σ < √τ; ${R.cols <= R.rows ? 'flex side' : 'self-stress side'}, n = ${side})`;
          const inertia = newRef(lat.label, bc, N, dof, 'SuperLU inertia', `splu(K − τI, ${opts.ordering})`, countText, (t) => {
            const r = inertiaReferences(R, opts.ordering, cholmod, t);
            return r.cholmod ? [r.superlu, r.cholmod] : [r.superlu];
          }, Math.max(3 * opts.budget, 60));
          refs.push(inertia);
          if (cholmod) refs.push(newRef(lat.label, bc, N, dof, 'CHOLMOD LDLᵀ', 'simplicial LDLᵀ of K − τI (same matrix)', countText, () => [], 0));
        }
        for (let rep = 0; rep < opts.repeats; rep++) {
          for (const job of jobs) {
            if (job.skip || !job.more) continue;
            const r = timeCommand(['count', lat.spec, '--cells', `${N}x${N}`, '--bc', bc, '--json', '--solver', job.name], Math.max(3 * opts.budget, 60));
            job.runs.push(r);
            job.more = r.status === 'ok' && (r.seconds ?? 0) * opts.repeats <= opts.budget;
          }
          // the CHOLMOD row is filled by the SuperLU run (it factors the file that run writes)
          for (let i = 0; i < refs.length; i++) {
            const ref = refs[i];
            if (!ref.more) continue;
            const results = ref.run(ref.timeout);
            results.forEach((res, k) => refs[i + k].add(res, opts));
          }
        }
        let denseSeconds: number | undefined;
        const sizeRows: Row[] = [];
        for (const job of jobs) {
          const key = `${lat.label}|${bc}|${job.name}`;
          const result = job.skip ?? summarise(job.runs);
          if (!job.skip) {
            const h = history.get(key) ?? [];
            if (result.status === 'ok' && result.seconds !== undefined) history.set(key, [...h, { N, seconds: result.seconds }]);
            if (result.status === 'ok' && result.solveSeconds !== undefined) solveHistory.set(key, [...(solveHistory.get(key) ?? []), { N, seconds: result.solveSeconds }]);
            else failures.set(key, result.status);
          }
          const label = job.name === autoPick ? `${job.name} (auto)` : job.name;
          const row: Row = { lattice: lat.label, bc, N, dof, solver: label, result };
          if (job.name === 'dense' && result.status === 'ok') denseSeconds = result.seconds;
          if (job.name !== 'dense' && denseSeconds && result.status === 'ok') row.vsDense = denseSeconds / result.seconds!;
          sizeRows.push(row);
        }
        const ns = refs.find((r) => r.label === 'null_space');
        if (ns?.spread) scipyTimes.set(sizeKey, ns.spread.median);
        else if (ns) scipyNote.set(sizeKey, `scipy failed: ${ns.note ?? '?'}`);
        for (const row of sizeRows) {
          if (ns?.spread && row.result.status === 'ok') row.vsScipy = ns.spread.median / row.result.seconds!;
          rows.push(row);
          print(row);
        }
        const picked = sizeRows.find((r) => r.solver.includes('(auto)')) ?? sizeRows.find((r) => r.solver === 'auto');
        for (const ref of refs) {
          refRows.push(ref);
          printRef(ref, picked);
        }
      }
    }
  }

  // fitted exponents: on the count's own time inside the process (reported by count --json, so
  // start-up and module loading never enter), over runs of at least MIN_FIT_SECONDS (below that
  // timer and JIT noise dominate), and the local exponent between the two largest sizes
  console.log(`\nFitted exponent of time against N (log–log least squares on the in-process count time, runs with ≥ ${MIN_FIT_SECONDS} s):`);
  for (const [key, h] of solveHistory) {
    const pts = h.filter((p) => Number.isFinite(p.seconds) && p.seconds >= MIN_FIT_SECONDS);
    const e = fitExponent(pts);
    if (e === null) {
      console.log(`  ${pad(key.replace(/\|/g, ', '), 36)} too fast or too few sizes to fit (fewer than two runs with ≥ ${MIN_FIT_SECONDS} s)`);
      continue;
    }
    const [a, b] = pts.slice(-2);
    const local = Math.log(b.seconds / a.seconds) / Math.log(b.N / a.N);
    console.log(`  ${pad(key.replace(/\|/g, ', '), 36)} N^${e.toFixed(2)} over sizes ${pts.map((p) => `${p.N} (${fmtSeconds(p.seconds)} s)`).join(', ')}; from ${a.N} to ${b.N}: N^${local.toFixed(2)}`);
  }

  // targets
  console.log('\nTargets:');
  const find = (lattice: string, bc: string, N: number, pred: (r: Row) => boolean) => rows.find((r) => r.lattice === lattice && r.bc === bc && r.N === N && pred(r));
  const open24 = find('kagome', 'free', 24, (r) => r.solver.includes('(auto)')) ?? find('kagome', 'free', 24, (r) => r.solver.startsWith('sparse'));
  const sc24 = scipyTimes.get('kagome|free|24');
  if (open24?.result.status === 'ok' && sc24 !== undefined) {
    const ratio = sc24 / open24.result.seconds!;
    console.log(`  open kagome 24×24, shimmy count (${open24.solver}) ≥ 20× faster than scipy null_space: ${ratio.toFixed(1)}× (${fmtSeconds(open24.result.seconds)} s against ${fmtSeconds(sc24)} s) — ${ratio >= 20 ? 'met' : 'NOT met'}`);
  } else console.log(`  open kagome 24×24 ≥ 20× faster than scipy null_space: not measured (${!scipy ? (opts.scipy ? 'scipy unavailable' : 'scipy off (--no-scipy)') : (scipyNote.get('kagome|free|24') ?? (opts.sizes.includes(24) ? 'the shimmy run was skipped' : 'N = 24 not in --sizes'))})`);
  for (const [N, limit] of [
    [128, 2],
    [256, 8],
  ] as const) {
    if (!solversHere.includes('bloch')) {
      console.log(`  periodic kagome ${N}×${N} ≤ ${limit} s (--solver auto): pending (the Bloch solver is not registered)`);
      continue;
    }
    const r = opts.sizes.includes(N)
      ? (find('kagome', 'periodic', N, (x) => x.solver.includes('(auto)')) ?? null)
      : null;
    const res = r?.result ?? timeCommand(['count', 'gallery:kagome', '--cells', `${N}x${N}`, '--bc', 'periodic', '--json', '--solver', 'auto'], Math.max(3 * opts.budget, 60));
    if (res.status === 'ok') console.log(`  periodic kagome ${N}×${N} ≤ ${limit} s (--solver auto → ${res.solver ?? '?'}): ${fmtSeconds(res.seconds)} s — ${res.seconds! <= limit ? 'met' : 'NOT met'}`);
    else console.log(`  periodic kagome ${N}×${N} ≤ ${limit} s: ${res.status}${res.note ? ` (${res.note})` : ''}`);
  }
  // open counts at 96×96 against the sparse inertia references of the same matrix (issue 15):
  // within 2× of SuperLU's time, whole process and in-process, and flops within 2× of CHOLMOD's
  for (const lat of LATTICES) {
    const shimmy = find(lat.label, 'free', 96, (r) => r.solver.includes('(auto)'));
    const superlu = refRows.find((r) => r.lattice === lat.label && r.bc === 'free' && r.N === 96 && r.label === 'SuperLU inertia');
    const chol = refRows.find((r) => r.lattice === lat.label && r.bc === 'free' && r.N === 96 && r.label === 'CHOLMOD LDLᵀ');
    const sh = shimmy?.result;
    if (!sh || sh.status !== 'ok' || !superlu?.spread) {
      console.log(`  open ${lat.label} 96×96 count within 2× of SuperLU's inertia count: not measured (${!opts.sizes.includes(96) ? 'N = 96 not in --sizes' : !scipy ? 'scipy off or unavailable' : 'a run failed'})`);
      continue;
    }
    const whole = sh.seconds! / superlu.spread.median;
    const inProcess = sh.solveSeconds! / superlu.spread.median;
    console.log(
      `  open ${lat.label} 96×96 count (${shimmy!.solver}) within 2× of SuperLU's inertia count (${fmtSeconds(superlu.spread.median)} s): whole process ${whole.toFixed(1)}× (${fmtSeconds(sh.seconds)} s), in-process ${inProcess.toFixed(1)}× (${fmtSeconds(sh.solveSeconds)} s) — ${whole <= 2 ? 'met' : inProcess <= 2 ? 'met in-process only' : 'NOT met'}`,
    );
    const f = sh.factorisation;
    if (f && chol?.flops) console.log(`  open ${lat.label} 96×96 factorisation flops within 2× of CHOLMOD's: ${f.flops.toExponential(2)} against ${chol.flops.toExponential(2)} (${(f.flops / chol.flops).toFixed(2)}×) — ${f.flops <= 2 * chol.flops ? 'met' : 'NOT met'}`);
    else console.log(`  open ${lat.label} 96×96 factorisation flops within 2× of CHOLMOD's: not measured (${cholmod ? 'no factorisation figures' : 'CHOLMOD unavailable'})`);
  }
  if (!COMMANDS.some((c) => c.name === 'classify')) console.log('  open kagome 64×64 classified ≤ 5 s: pending (no classify command yet)');
  else {
    // classification at scale (issue 15): open kagome and twisted kagome 64×64 within 5 s each
    for (const lat of LATTICES) {
      const sc = buildSupercell(buildGallery(lat.spec), [64, 64], parseBoundary('free'));
      const pick = chooseSolver(sc, 'auto').name;
      // the repeats alternate two threads (the CLI's default on two cores) with one (SHIMMY_THREADS=1)
      const args = ['classify', lat.spec, '--cells', '64x64', '--bc', 'free', '--json', '--solver', 'auto'];
      const two: number[] = [];
      const one: number[] = [];
      let peak = 0;
      let failed: RunResult | null = null;
      for (let r = 0; r < opts.repeats && !failed; r++) {
        for (const [threads, into] of [['2', two], ['1', one]] as const) {
          const res = timeCommand(args, Math.max(3 * opts.budget, 120), { SHIMMY_THREADS: threads });
          if (res.status !== 'ok') {
            failed = res;
            break;
          }
          into.push(res.seconds!);
          peak = Math.max(peak, res.peakMB ?? 0);
        }
      }
      if (failed) console.log(`  open ${lat.label} 64×64 classified ≤ 5 s: ${failed.status}${failed.note ? ` (${failed.note})` : ''}`);
      else {
        const s2 = spread(two)!;
        const s1 = spread(one)!;
        console.log(
          `  open ${lat.label} 64×64 classified ≤ 5 s (--solver auto → ${pick}): ${fmtSpread(s2, fmtSeconds)} s on two threads, ${fmtSpread(s1, fmtSeconds)} s on one, peak ${peak.toFixed(0)} MB — ${s2.median <= 5 ? 'met' : 'NOT met'}`,
        );
      }
    }
  }
  cholmod?.dispose();
  console.log(`\nTotal benchmark time ${((Date.now() - started) / 1000).toFixed(0)} s.`);
  if (opts.json) {
    const references = refRows.map(({ lattice, bc, N, label, what, seconds, spread, count, nnzL, flops, note }) => ({ lattice, bc, N, label, what, seconds, spread, count, nnzL, flops, note }));
    writeFileSync(opts.json, JSON.stringify({ date: new Date().toISOString(), node: process.version, startup, budget: opts.budget, repeats: opts.repeats, rows, references, scipy: Object.fromEntries(scipyTimes) }, null, 2));
    console.log(`Rows written to ${opts.json}.`);
  }
}

main();
