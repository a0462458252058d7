/**
 * `shimmy batch PLAN`: run the jobs of a plan (src/batch/plan.ts) on a pool of worker threads,
 * one JSON line per job (schema/batch-line.schema.json), resumable, and shardable across
 * processes and machines with --shard i/n.
 */
import { closeSync, existsSync, ftruncateSync, openSync, readFileSync, appendFileSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { InputError } from '../errors.js';
import type { BatchJob, JobOutcome } from '../batch/job.js';
import { parsePlan, parseShard, PLAN_HELP, shardJobs, type Shard } from '../batch/plan.js';
import { defaultWorkers, runPool } from '../batch/pool.js';
import { parseNumberFlag } from './args.js';
import type { CliIO, Command } from './command.js';
import { safeJson, safeLines, safeText } from './common.js';

export const BATCH_LINE_SCHEMA = 'shimmy.batch-line/1';

/** Exit code when at least one job failed (its line holds the error). */
export const SOME_JOBS_FAILED = 5;

/** One line of the results: the job's id and inputs, then its result or its error. */
export function batchLine(job: BatchJob, outcome: JobOutcome): string {
  const line = {
    schemaVersion: BATCH_LINE_SCHEMA, // schema/batch-line.schema.json
    id: job.id,
    job: { command: job.command, framework: job.framework, ...(job.cells ? { cells: job.cells } : {}), ...(job.bc !== undefined ? { bc: job.bc } : {}), options: job.options },
    ok: outcome.exitCode === 0,
    exitCode: outcome.exitCode,
    ...(outcome.result !== undefined ? { result: outcome.result } : {}),
    ...(outcome.error ? { error: outcome.error } : {}),
    seconds: outcome.seconds,
  };
  return safeJson(JSON.stringify(line)) + '\n';
}

/**
 * The ids already in a results file. A last line cut short (no newline, or not JSON) is cut off
 * the file so the job runs again; any other line that is not a result is an InputError.
 */
export function finishedIds(path: string): Set<string> {
  const ids = new Set<string>();
  if (!existsSync(path)) return ids;
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (e) {
    throw new InputError(`The results file "${path}" cannot be read:`, [{ where: '--out', what: `it cannot be read (${(e as NodeJS.ErrnoException).code ?? 'unknown error'})`, fix: 'give a readable file, or a new path' }]);
  }
  // every complete line ends with "\n"; after the last one split() leaves '' or a cut-short piece
  const lines = text.split('\n');
  let offset = 0;
  for (let i = 0; i < lines.length - 1; i++) {
    const line = lines[i];
    if (line.trim() !== '') {
      let id: unknown;
      try {
        id = (JSON.parse(line) as { id?: unknown }).id;
      } catch {
        id = undefined;
      }
      if (typeof id !== 'string') {
        throw new InputError(`The results file "${path}" cannot be resumed:`, [
          { where: `${path} line ${i + 1}`, what: 'it is not a result line of shimmy batch (JSON with an "id")', fix: 'remove that line, or give --out a new file' },
        ]);
      }
      ids.add(id);
    }
    offset += Buffer.byteLength(line, 'utf8') + 1;
  }
  if (lines[lines.length - 1] !== '') {
    // an interrupted write: drop the cut-short line, its job runs again
    const fd = openSync(path, 'r+');
    try {
      ftruncateSync(fd, offset);
    } finally {
      closeSync(fd);
    }
  }
  return ids;
}

function appendLine(path: string, line: string): void {
  try {
    appendFileSync(path, line);
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    throw new InputError(`The results file "${path}" cannot be written:`, [{ where: '--out', what: code === 'ENOENT' ? 'its folder does not exist' : `it cannot be written (${code ?? 'unknown error'})`, fix: 'give a file path in an existing, writable folder' }]);
  }
}

function readPlan(path: string): string {
  try {
    return readFileSync(path, 'utf8');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    const what = code === 'ENOENT' ? 'no such file' : code === 'EISDIR' ? 'it is a folder, not a file' : `it cannot be read (${code ?? 'unknown error'})`;
    throw new InputError(`The plan "${path}" cannot be read:`, [{ where: 'PLAN', what, fix: 'give the path of a plan JSON file (see shimmy batch --help)' }]);
  }
}

/** Progress on stderr: one line per finished job, or one line rewritten in place on a terminal. */
function reporter(io: CliIO, total: number) {
  let done = 0;
  let failed = 0;
  const t0 = performance.now();
  return {
    job(job: BatchJob, o: JobOutcome) {
      done++;
      if (o.exitCode !== 0) failed++;
      const elapsed = ((performance.now() - t0) / 1000).toFixed(1);
      const status = o.exitCode === 0 ? `ok ${o.seconds.toFixed(2)} s` : `FAILED (${o.error?.kind ?? 'error'}, exit ${o.exitCode})`;
      const text = `shimmy batch: ${done}/${total}${failed ? ` (${failed} failed)` : ''} ${elapsed} s: ${safeText(job.id)} ${status}`;
      io.err(io.errIsTTY ? `\r\x1b[2K${text}` : `${text}\n`);
    },
    end() {
      if (io.errIsTTY && done > 0) io.err('\n');
    },
    failed: () => failed,
  };
}

export const batchCommand: Command = {
  name: 'batch',
  summary: 'Run a plan of count, classify and edges jobs on worker threads: one JSON line per job, resumable, shardable across processes and machines.',
  usage: 'shimmy batch PLAN [--out results.jsonl] [--workers N] [--shard i/n] [--list]',
  flags: [
    { name: '--out', value: 'FILE', help: 'append one JSON line per job to FILE; ids already in it are skipped (resume). Without it the lines go to stdout' },
    { name: '--workers', value: 'N', help: 'worker threads (1 to 256)', default: 'the cores available' },
    { name: '--shard', value: 'i/n', help: 'run only share i of n (1 ≤ i ≤ n): every n-th job from the i-th, so n runs cover the plan exactly once' },
    { name: '--list', help: 'print the ids of the jobs this run would do (after --shard and resume), one per line, and run nothing' },
    { name: '--help', help: 'show this help' },
  ],
  maxPositional: 1,
  details: [
    ...PLAN_HELP,
    '',
    'Each line (schema/batch-line.schema.json): {"schemaVersion", "id", "job": {command, framework, cells, bc,',
    'options}, "ok", "exitCode", "result" (the command\'s --json output) or "error" ({kind, message, problems}),',
    '"seconds"}. Lines are written as jobs finish. A failing job writes its error line and the rest go on.',
    'Resume: run the same command again; a last line cut short by an interruption is rewritten. To rerun',
    'failed jobs, delete their lines. Shards: give each process its own --out, e.g. in a SLURM array job',
    '  shimmy batch plan.json --shard $SLURM_ARRAY_TASK_ID/$SLURM_ARRAY_TASK_COUNT --out part-$SLURM_ARRAY_TASK_ID.jsonl',
    '(with --array=1-n), or with GNU parallel: parallel shimmy batch plan.json --shard {}/4 --out part-{}.jsonl ::: 1 2 3 4',
    `Exit codes: 0 every job succeeded, ${SOME_JOBS_FAILED} at least one failed, 2 a bad plan or flag.`,
  ],
  async run(args, io) {
    const planPath = args.positional[0];
    if (planPath === undefined) {
      throw new InputError('no plan given:', [{ where: 'PLAN', what: 'shimmy batch needs a plan file', fix: 'write shimmy batch plan.json (see shimmy batch --help for the format)' }]);
    }
    const workersText = args.flags.get('--workers') as string | undefined;
    const workers = workersText === undefined ? defaultWorkers() : parseNumberFlag(workersText, '--workers', (v) => Number.isInteger(v) && v >= 1 && v <= 256, 'a whole number of threads from 1 to 256');
    const shardText = args.flags.get('--shard') as string | undefined;
    const shard: Shard = shardText === undefined ? { index: 1, count: 1 } : parseShard(shardText);
    const outPath = args.flags.get('--out') as string | undefined;
    const plan = parsePlan(readPlan(planPath), planPath, dirname(resolve(planPath)));
    const mine = shardJobs(plan.jobs, shard);
    const done = outPath === undefined ? new Set<string>() : finishedIds(outPath);
    const todo = mine.filter((j) => !done.has(j.id));
    if (args.flags.has('--list')) {
      io.out(todo.map((j) => `${safeText(j.id)}\n`).join(''));
      return 0;
    }
    const skipped = mine.length - todo.length;
    io.err(
      `shimmy batch: ${plan.jobs.length} jobs in the plan` +
        (shard.count > 1 ? `, ${mine.length} in shard ${shard.index}/${shard.count}` : '') +
        (skipped ? `, ${skipped} already in ${safeText(outPath ?? '')}` : '') +
        `; running ${todo.length} on ${Math.min(workers, todo.length)} worker thread${Math.min(workers, todo.length) === 1 ? '' : 's'}\n`,
    );
    const progress = reporter(io, todo.length);
    if (outPath !== undefined) appendLine(outPath, ''); // can it be written? (before any job runs)
    try {
      await runPool(todo, {
        workers,
        baseDir: plan.baseDir,
        onOutcome(job, outcome) {
          const line = batchLine(job, outcome);
          if (outPath === undefined) io.out(line);
          else appendLine(outPath, line);
          progress.job(job, outcome);
        },
      });
    } finally {
      progress.end();
    }
    const failed = progress.failed();
    if (failed > 0) io.err(`shimmy batch: ${failed} of ${todo.length} jobs failed; their lines hold the errors${outPath ? ` (in ${safeLines(outPath)})` : ''}.\n`);
    return failed > 0 ? SOME_JOBS_FAILED : 0;
  },
};
