/**
 * A pool of worker threads for `shimmy batch`: each thread runs one job at a time
 * (src/batch/worker.ts) and takes the next when it finishes. A thread that dies in a job (e.g.
 * out of memory) reports that job as failed and is replaced; one that cannot start stops the pool.
 */
import { existsSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import { fileURLToPath } from 'node:url';
import { createRequire } from 'node:module';
import type { BatchJob, JobOutcome } from './job.js';
import type { JobMessage, WorkerReply } from './worker.js';

// Held in variables so that bundlers leave these URLs alone.
const BUILT_WORKER = './worker.js';
const SOURCE_WORKER = './source-worker.mjs';

/**
 * The worker thread's script. From the sources (tsx, vitest) this module is a .ts file and the
 * thread loads them through tsx; from compiled code (lib/batch/pool.js, or build/cli/run.js, the
 * CLI bundle) the compiled worker sits next to it as worker.js.
 */
/** Young-generation size of each worker thread's heap (V8's default semi-space is 16 MB). */
const YOUNG_GENERATION_MB = 96;

export function workerScript(): URL {
  const here = import.meta.url;
  // tsx may add a query to the URL; the path tells sources from compiled code
  if (new URL(here).pathname.endsWith('.ts')) return new URL(SOURCE_WORKER, here);
  const built = new URL(BUILT_WORKER, here);
  if (!existsSync(fileURLToPath(built))) {
    throw new Error(`the batch worker ${fileURLToPath(built)} is missing; rebuild with npm run build:cli (or npm run build:lib)`);
  }
  return built;
}

/** The default number of worker threads: the cores this process may use. */
export function defaultWorkers(): number {
  return availableParallelism();
}

export interface PoolOptions {
  workers: number;
  /** Framework files of the jobs are relative to this folder. */
  baseDir: string;
  /** Called in the main thread as each job finishes, in the order they finish. */
  onOutcome(job: BatchJob, outcome: JobOutcome): void;
}

/** Runs every job on up to `workers` threads; resolves when all have reported. */
export function runPool(jobs: readonly BatchJob[], opts: PoolOptions): Promise<void> {
  const script = workerScript();
  return new Promise((resolveAll, reject) => {
    let next = 0;
    let live = 0;
    let failed = false;
    const spawn = (): void => {
      // A young generation larger than V8's default (16 MB semi-spaces) keeps the dense jobs'
      // short-lived arrays out of frequent scavenges; with every core computing, those
      // scavenges were what kept two workers from running twice as fast as one.
      // (node:worker_threads loaded here, not at start-up: ~3 ms every other command need not pay)
      const { Worker } = createRequire(import.meta.url)('node:worker_threads') as typeof import('node:worker_threads');
      const worker = new Worker(script, { resourceLimits: { maxYoungGenerationSizeMb: YOUNG_GENERATION_MB } });
      live++;
      let ready = false;
      let current: BatchJob | undefined;
      let started = 0;
      const feed = (): void => {
        if (next >= jobs.length || failed) {
          current = undefined;
          void worker.terminate();
          return;
        }
        current = jobs[next++];
        started = performance.now();
        worker.postMessage({ job: current, baseDir: opts.baseDir } satisfies JobMessage);
      };
      worker.on('message', (m: WorkerReply) => {
        if (m.type === 'ready') {
          ready = true;
        } else if (current) {
          const job = current;
          current = undefined;
          opts.onOutcome(job, m.outcome);
        }
        feed();
      });
      worker.on('error', (e: Error) => {
        if (!ready) {
          failed = true;
          reject(new Error(`a batch worker thread could not start: ${e.message}`));
        } else if (current) {
          const job = current;
          current = undefined;
          const message = `the worker thread stopped in this job: ${e.message}`;
          opts.onOutcome(job, { exitCode: 1, error: { kind: 'internal', message }, seconds: (performance.now() - started) / 1000 });
        }
      });
      worker.on('exit', () => {
        live--;
        if (current) {
          const job = current;
          current = undefined;
          opts.onOutcome(job, { exitCode: 1, error: { kind: 'internal', message: 'the worker thread exited in this job' }, seconds: (performance.now() - started) / 1000 });
        }
        if (failed) return;
        if (next < jobs.length && live < opts.workers) spawn();
        else if (live === 0) resolveAll();
      });
    };
    const n = Math.min(Math.max(1, opts.workers), jobs.length);
    if (n === 0) resolveAll();
    for (let i = 0; i < n; i++) spawn();
  });
}
