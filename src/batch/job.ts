/**
 * One batch job: a command of the CLI (count, classify, edges) run in this thread on captured
 * output, exactly as `shimmy COMMAND ... --json` runs it, with errors kept as data.
 */
import { isAbsolute, resolve } from 'node:path';
import { InputError, TooLargeError, type Problem } from '../errors.js';
import { parseArgs } from '../cli/args.js';
import { classifyCommand } from '../cli/classify.js';
import type { Command } from '../cli/command.js';
import { countCommand } from '../cli/count.js';
import { edgesCommand } from '../cli/edges.js';
import { readTextFile } from '../cli/common.js';

/** The commands a plan may name; their own `run` functions do the work. */
export const BATCH_COMMANDS = { count: countCommand, classify: classifyCommand, edges: edgesCommand } as const satisfies Record<string, Command>;
export type BatchCommandName = keyof typeof BATCH_COMMANDS;

/** Commands that take a supercell (--cells, --bc); edges works on the unit cell alone. */
export const SUPERCELL_COMMANDS: readonly BatchCommandName[] = ['count', 'classify'];

/** An option value as the plan gives it: a flag's value, or true for a switch. */
export type OptionValue = string | number | true;

export interface BatchJob {
  /** Stable id: the command line without --json (or the plan's own id). */
  id: string;
  command: BatchCommandName;
  /** A gallery spec or a framework file path as written in the plan (relative to the plan). */
  framework: string;
  cells?: [number, number];
  bc?: string;
  /** Further flags of the command without their dashes, e.g. { tol: 1e-6, verify: true }. */
  options: Record<string, OptionValue>;
}

export interface JobError {
  /** input: bad input (exit 2); too-large: refused by the size check (3); failed: the command said no (e.g. a failed self-check, 4); internal: a bug (1). */
  kind: 'input' | 'too-large' | 'failed' | 'internal';
  message: string;
  problems?: Problem[];
}

export interface JobOutcome {
  /** The exit code the same command line would give. */
  exitCode: number;
  /** The command's --json output, parsed (also present when it exits non-zero after printing it). */
  result?: unknown;
  error?: JobError;
  /** Wall time of the job in its thread. */
  seconds: number;
}

/** The flags of a job after the command and framework, each as `--name=value` (no --json). */
export function jobFlags(job: BatchJob): string[] {
  const flags: string[] = [];
  if (job.cells) flags.push(`--cells=${job.cells[0]}x${job.cells[1]}`);
  if (job.bc !== undefined) flags.push(`--bc=${job.bc}`);
  for (const key of Object.keys(job.options).sort()) {
    const v = job.options[key];
    flags.push(v === true ? `--${key}` : `--${key}=${v}`);
  }
  return flags;
}

/** The id a job gets when the plan gives none: its command line, e.g. `count gallery:kagome --cells 4x4 --bc periodic`. */
export function defaultJobId(job: Omit<BatchJob, 'id'>): string {
  return [job.command, job.framework, ...jobFlags({ ...job, id: '' }).map((f) => f.replace(/^(--[^=]+)=/, '$1 '))].join(' ');
}

/** Run one job here. File paths are read relative to `baseDir` (the plan's folder). Never throws. */
export async function runJob(job: BatchJob, baseDir: string): Promise<JobOutcome> {
  const started = performance.now();
  let out = '';
  let err = '';
  const io = {
    out: (t: string) => void (out += t),
    err: (t: string) => void (err += t),
    readText: (p: string) => readTextFile(isAbsolute(p) ? p : resolve(baseDir, p)),
    errIsTTY: false,
  };
  const seconds = () => (performance.now() - started) / 1000;
  try {
    const command: Command = BATCH_COMMANDS[job.command];
    const args = parseArgs([job.framework, ...jobFlags(job), '--json'], command.flags, command.name, command.maxPositional);
    const exitCode = await command.run(args, io);
    const result = out.trim() === '' ? undefined : (JSON.parse(out) as unknown);
    if (exitCode === 0) return { exitCode, result, seconds: seconds() };
    const message = err.trim() || `shimmy ${job.command} exited with code ${exitCode}`;
    return { exitCode, result, error: { kind: 'failed', message }, seconds: seconds() };
  } catch (e) {
    if (e instanceof InputError) return { exitCode: 2, error: { kind: 'input', message: e.message, problems: e.problems }, seconds: seconds() };
    if (e instanceof TooLargeError) return { exitCode: 3, error: { kind: 'too-large', message: e.message }, seconds: seconds() };
    return { exitCode: 1, error: { kind: 'internal', message: e instanceof Error ? e.message : String(e) }, seconds: seconds() };
  }
}
