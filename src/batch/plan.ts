/**
 * The plan of `shimmy batch`: a JSON file listing `jobs` and/or a `grid` (or a list of grids)
 * over frameworks, cells, boundary rules, commands and options. Parsing checks everything that
 * can be checked without running (every problem at once, each naming its JSON path and the
 * fix), expands the grids into jobs with stable ids, and selects a shard.
 */
import { existsSync } from 'node:fs';
import { resolve } from 'node:path';
import { InputError, type Problem } from '../errors.js';
import { parseGallerySpec } from '../framework/gallery.js';
import { isGallerySpec } from '../framework/load.js';
import { closestWord } from '../suggest.js';
import { parseBoundary } from '../supercell/boundary.js';
import { checkCells } from '../supercell/supercell.js';
import { parseSizeList } from '../cli/sweep.js';
import { BATCH_COMMANDS, defaultJobId, SUPERCELL_COMMANDS, type BatchCommandName, type BatchJob, type OptionValue } from './job.js';

/** Most jobs one plan may expand to. */
export const MAX_JOBS = 100_000;

/** Flags a plan does not set through `options`: they have their own keys, or batch sets them. */
const RESERVED_FLAGS = ['--cells', '--bc', '--json', '--out', '--help', '--csv'];

const TOP_KEYS = ['jobs', 'grid', 'description', '$schema'];
const JOB_KEYS = ['id', 'command', 'framework', 'cells', 'bc', 'options'];
const GRID_KEYS = ['command', 'framework', 'cells', 'bc', 'options'];

export const PLAN_HELP = [
  'PLAN is a JSON file with "jobs" (a list) and/or "grid" (one grid or a list of them):',
  '  { "jobs": [ { "command": "count", "framework": "gallery:kagome", "cells": "4x4", "bc": "periodic" } ],',
  '    "grid": { "command": ["count", "classify"], "framework": ["gallery:twisted-kagome?twist=0..30:10", "cell.json"],',
  '              "cells": ["4x4", "8..16:8"], "bc": ["free", "periodic"], "options": { "tol": [1e-9, 1e-6] } } }',
  'command: count, classify or edges. framework: a gallery spec or a framework file (relative to the plan);',
  'a gallery parameter may be a range A..B:STEP or a comma list. cells: N1xN2, [N1, N2] or the sizes of',
  '`shimmy sweep --cells` (A..B:STEP); default 8x8. bc: the --bc grammar; default free. cells and bc are',
  'for count and classify only. options: further flags of the command without "--" (a switch takes true);',
  'in a grid, a list of values is one more axis. A job may give its own "id"; otherwise its id is its',
  'command line, e.g. "count gallery:kagome --cells 4x4 --bc periodic".',
];

export interface Plan {
  jobs: BatchJob[];
  /** The plan file's folder: framework files are read relative to it. */
  baseDir: string;
}

type Json = null | boolean | number | string | Json[] | { [k: string]: Json };

function isObject(v: unknown): v is Record<string, Json> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

function kind(v: unknown): string {
  return v === null ? 'null' : Array.isArray(v) ? 'a list' : typeof v === 'object' ? 'an object' : `the ${typeof v} ${JSON.stringify(v)}`;
}

/** Runs `f`; an InputError it throws becomes problems located at `path`. */
function collect<T>(problems: Problem[], path: string, f: () => T): T | undefined {
  try {
    return f();
  } catch (e) {
    if (!(e instanceof InputError)) throw e;
    for (const p of e.problems) problems.push({ ...p, where: p.where === path ? path : `${path} (${p.where})` });
    return undefined;
  }
}

function unknownKeys(problems: Problem[], obj: Record<string, Json>, path: string, known: string[]): void {
  for (const key of Object.keys(obj)) {
    if (known.includes(key)) continue;
    const near = closestWord(key, known);
    problems.push({ where: path === '(top level)' ? key : `${path}.${key}`, what: `"${key}" is not a key here${near ? ` (did you mean ${near}?)` : ''}`, fix: `use only ${known.filter((k) => k !== '$schema').join(', ')}` });
  }
}

/** A value or a list of values as a list, with the JSON path of each. */
function listOf(v: Json, path: string): [Json, string][] {
  return Array.isArray(v) ? v.map((x, i) => [x, `${path}[${i}]`]) : [[v, path]];
}

function commandOf(problems: Problem[], v: Json, path: string): BatchCommandName | undefined {
  const names = Object.keys(BATCH_COMMANDS);
  if (typeof v === 'string' && names.includes(v)) return v as BatchCommandName;
  const near = typeof v === 'string' ? closestWord(v, names) : undefined;
  problems.push({ where: path, what: `${kind(v)} is not a command a plan can run${near ? ` (did you mean ${near}?)` : ''}`, fix: `write one of ${names.join(', ')}` });
  return undefined;
}

const DECIMAL = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/** Values of a gallery parameter: `A..B:STEP` (inclusive), `A..B` (step 1) or a comma list of values and ranges; a text says what is wrong. */
function parameterValues(text: string): number[] | string {
  const out: number[] = [];
  for (const raw of text.split(',')) {
    const part = raw.trim();
    const m = /^(\S+?)\.\.([^:]+)(?::(.+))?$/.exec(part);
    if (!m) {
      if (!DECIMAL.test(part)) return `"${part}" is not a plain decimal number`;
      out.push(Number(part));
      continue;
    }
    const [a, b, s] = [m[1], m[2], m[3] ?? '1'].map((t) => (DECIMAL.test(t.trim()) ? Number(t) : NaN));
    if (![a, b, s].every(Number.isFinite) || !(s > 0)) return `"${part}" is not a range A..B:STEP of decimal numbers with a positive step`;
    if (b < a) return `"${part}" runs backwards; write the smaller value first`;
    const n = Math.floor((b - a) / s + 1e-9) + 1;
    if (n > MAX_JOBS) return `"${part}" has ${n} values (at most ${MAX_JOBS})`;
    for (let i = 0; i < n; i++) out.push(Number((a + i * s).toPrecision(12)) + 0);
  }
  return out;
}

/** Expands ranges and comma lists in a gallery spec's parameters into plain specs, each checked by the gallery parser. */
function gallerySpecs(problems: Problem[], spec: string, path: string): string[] {
  const q = spec.indexOf('?');
  if (q < 0 || !/[,]|\.\./.test(spec.slice(q + 1))) {
    return collect(problems, path, () => parseGallerySpec(spec)) ? [spec] : [];
  }
  const head = spec.slice(0, q);
  let specs = [''];
  for (const piece of spec.slice(q + 1).split('&')) {
    const eq = piece.indexOf('=');
    const key = eq < 0 ? piece : piece.slice(0, eq);
    const valueText = eq < 0 ? '' : piece.slice(eq + 1);
    const values = eq < 0 || !/,|\.\./.test(valueText) ? null : parameterValues(valueText);
    if (typeof values === 'string') {
      problems.push({ where: `${path} (parameter "${key.trim()}")`, what: values, fix: 'write a value, a range A..B:STEP (e.g. twist=0..30:5) or a comma list (e.g. twist=0,15,30)' });
      return [];
    }
    const texts = values === null ? [piece] : values.map((v) => `${key}=${v}`);
    specs = specs.flatMap((s) => texts.map((t) => (s === '' ? t : `${s}&${t}`)));
    if (specs.length > MAX_JOBS) break;
  }
  const out = specs.map((s) => `${head}?${s}`);
  // each combination is checked by the gallery parser; the first bad one is reported
  for (const s of out) if (!collect(problems, path, () => parseGallerySpec(s))) return [];
  return out;
}

function frameworksOf(problems: Problem[], v: Json, path: string, baseDir: string): string[] {
  const out: string[] = [];
  for (const [f, p] of listOf(v, path)) {
    if (typeof f !== 'string' || f.trim() === '') {
      problems.push({ where: p, what: `${kind(f)} is not a framework`, fix: 'write a gallery spec such as "gallery:kagome" or the path of a framework file, relative to the plan' });
    } else if (isGallerySpec(f)) {
      out.push(...gallerySpecs(problems, f, p));
    } else if (f.startsWith('-')) {
      problems.push({ where: p, what: `the file name "${f}" starts with "-" and would read as a flag`, fix: `write "./${f}"` });
    } else if (!existsSync(resolve(baseDir, f))) {
      problems.push({ where: p, what: `no file "${f}" next to the plan (looked for ${resolve(baseDir, f)})`, fix: 'give a framework file path relative to the plan\'s folder, or a gallery spec such as "gallery:kagome"' });
    } else {
      out.push(f);
    }
  }
  return out;
}

function cellsOf(problems: Problem[], v: Json, path: string): [number, number][] {
  const out: [number, number][] = [];
  // [4, 4] is one size; a list of other things is a list of sizes
  const entries: [Json, string][] = Array.isArray(v) && v.length === 2 && v.every((x) => typeof x === 'number') ? [[v, path]] : listOf(v, path);
  for (const [c, p] of entries) {
    if (typeof c === 'string') {
      out.push(...(collect(problems, p, () => parseSizeList(c, p)) ?? []));
    } else if (Array.isArray(c) && c.length === 2 && c.every((x) => typeof x === 'number')) {
      const size: [number, number] = [c[0] as number, c[1] as number];
      const before = problems.length;
      collect(problems, p, () => checkCells(size, p));
      if (problems.length === before) out.push(size);
    } else {
      problems.push({ where: p, what: `${kind(c)} is not a supercell size`, fix: 'write "N1xN2" (e.g. "8x8"), [N1, N2], or sizes as for shimmy sweep --cells (e.g. "4..16:4")' });
    }
  }
  return out;
}

function boundariesOf(problems: Problem[], v: Json, path: string): string[] {
  const out: string[] = [];
  for (const [b, p] of listOf(v, path)) {
    if (typeof b !== 'string') {
      problems.push({ where: p, what: `${kind(b)} is not a boundary rule`, fix: 'write a rule of the --bc grammar as text, e.g. "free", "periodic" or "x=twist:0.25,bottom=pinned"' });
      continue;
    }
    if (collect(problems, p, () => parseBoundary(b, p))) out.push(b);
  }
  return out;
}

/**
 * The options of one command: each key a flag of it (without "--"), a switch true or false, a
 * value flag a string or a number. With `axes`, a list of values is an axis of the grid.
 */
function optionsOf(problems: Problem[], v: Json | undefined, path: string, commands: BatchCommandName[], axes: boolean): Record<string, OptionValue>[] {
  if (v === undefined) return [{}];
  if (!isObject(v)) {
    problems.push({ where: path, what: `${kind(v)} is not an object of options`, fix: 'write an object such as { "tol": 1e-6, "solver": "dense" }' });
    return [];
  }
  let combos: Record<string, OptionValue>[] = [{}];
  for (const [key, value] of Object.entries(v)) {
    const p = `${path}.${key}`;
    const flag = `--${key}`;
    let spec = undefined as undefined | { value?: string };
    for (const c of commands) {
      const s = BATCH_COMMANDS[c].flags.find((f) => f.name === flag);
      const known = BATCH_COMMANDS[c].flags.map((f) => f.name.slice(2)).filter((n) => !RESERVED_FLAGS.includes(`--${n}`));
      if (!s || RESERVED_FLAGS.includes(flag)) {
        const near = closestWord(key, known);
        const own = key === 'cells' || key === 'bc' ? `give ${key} as a key of the job or grid, not an option` : `use a flag of shimmy ${c} without its dashes${near ? ` (did you mean ${near}?)` : ''}: ${known.join(', ')}${commands.length > 1 ? '; put commands with different options in separate grids (grid may be a list)' : ''}`;
        problems.push({ where: p, what: `"${key}" is not an option of shimmy ${c} in a plan`, fix: own });
        spec = undefined;
        break;
      }
      spec = s;
    }
    if (!spec) continue;
    const values = axes && Array.isArray(value) ? value.map((x, i) => [x, `${p}[${i}]`] as [Json, string]) : [[value, p] as [Json, string]];
    const good: (OptionValue | null)[] = [];
    for (const [x, xp] of values) {
      if (spec.value === undefined) {
        if (typeof x === 'boolean') good.push(x ? true : null);
        else problems.push({ where: xp, what: `${key} is a switch, and ${kind(x)} is not true or false`, fix: `write "${key}": true (or leave it out)` });
      } else if (typeof x === 'string' || (typeof x === 'number' && Number.isFinite(x))) {
        good.push(x);
      } else {
        problems.push({ where: xp, what: `${kind(x)} is not a value of --${key}`, fix: `write a number or text, as after --${key} ${spec.value} on the command line${axes ? ' (a list of them is an axis of the grid)' : ''}` });
      }
    }
    combos = combos.flatMap((c) => good.map((g) => (g === null ? { ...c } : { ...c, [key]: g })));
  }
  return combos;
}

function jobsOfEntry(problems: Problem[], entry: Record<string, Json>, path: string, baseDir: string, isGrid: boolean): Omit<BatchJob, 'id'>[] {
  unknownKeys(problems, entry, path, isGrid ? GRID_KEYS : JOB_KEYS);
  const start = problems.length;
  if (entry.command === undefined) problems.push({ where: `${path}.command`, what: 'no command given', fix: `add "command": ${isGrid ? '"count" or a list such as ["count", "classify"]' : '"count" (or classify, edges)'}` });
  if (entry.framework === undefined) problems.push({ where: `${path}.framework`, what: 'no framework given', fix: 'add "framework": "gallery:kagome" or the path of a framework file relative to the plan' });
  const one = (key: string): Json | undefined => {
    const v = entry[key];
    if (!isGrid && Array.isArray(v) && !(key === 'cells' && v.length === 2 && v.every((x) => typeof x === 'number'))) {
      problems.push({ where: `${path}.${key}`, what: 'a job takes one value here, not a list', fix: 'give one value, or move the job into "grid", whose keys take lists' });
      return undefined;
    }
    return v;
  };
  const cmdValue = one('command');
  const commands = cmdValue === undefined ? [] : listOf(cmdValue, `${path}.command`).flatMap(([c, p]) => commandOf(problems, c, p) ?? []);
  const fwValue = one('framework');
  const frameworks = fwValue === undefined ? [] : frameworksOf(problems, fwValue, `${path}.framework`, baseDir);
  const cellsValue = one('cells');
  const bcValue = one('bc');
  const cells = cellsValue === undefined ? [[8, 8] as [number, number]] : cellsOf(problems, cellsValue, `${path}.cells`);
  const bcs = bcValue === undefined ? ['free'] : boundariesOf(problems, bcValue, `${path}.bc`);
  const supercellOnes = commands.filter((c) => SUPERCELL_COMMANDS.includes(c));
  if (supercellOnes.length === 0 && commands.length > 0 && (cellsValue !== undefined || bcValue !== undefined)) {
    problems.push({ where: `${path}.${cellsValue !== undefined ? 'cells' : 'bc'}`, what: `shimmy ${commands[0]} takes no supercell`, fix: 'leave cells and bc out for edges (they are for count and classify)' });
  }
  const options = optionsOf(problems, entry.options, `${path}.options`, commands, isGrid);
  if (problems.length > start) return [];
  const jobs: Omit<BatchJob, 'id'>[] = [];
  for (const command of commands) {
    const withCells = SUPERCELL_COMMANDS.includes(command);
    for (const framework of frameworks) {
      for (const c of withCells ? cells : [undefined]) {
        for (const bc of withCells ? bcs : [undefined]) {
          for (const o of options) {
            jobs.push({ command, framework, ...(c ? { cells: c } : {}), ...(bc !== undefined ? { bc } : {}), options: o });
            if (jobs.length > MAX_JOBS) return jobs;
          }
        }
      }
    }
  }
  return jobs;
}

/** Parses and checks a plan; `baseDir` is the folder framework files are relative to. Throws InputError with every problem. */
export function parsePlan(text: string, source: string, baseDir: string): Plan {
  const context = `The plan "${source}" cannot be used:`;
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (e) {
    throw new InputError(context, [{ where: source, what: `it is not valid JSON (${(e as Error).message})`, fix: 'write the plan as one JSON object, e.g. { "jobs": [ { "command": "count", "framework": "gallery:kagome" } ] }' }]);
  }
  const problems: Problem[] = [];
  if (!isObject(raw)) throw new InputError(context, [{ where: '(top level)', what: `${kind(raw)} is not a plan`, fix: 'write one JSON object with "jobs" and/or "grid"' }]);
  unknownKeys(problems, raw, '(top level)', TOP_KEYS);
  if (raw.jobs === undefined && raw.grid === undefined) problems.push({ where: '(top level)', what: 'the plan has neither "jobs" nor "grid"', fix: 'add "jobs": [ { "command": "count", "framework": "gallery:kagome", "cells": "4x4" } ] or a "grid"' });
  const entries: { entry: Json; path: string; grid: boolean }[] = [];
  if (raw.jobs !== undefined) {
    if (!Array.isArray(raw.jobs)) problems.push({ where: 'jobs', what: `${kind(raw.jobs)} is not a list of jobs`, fix: 'write "jobs": [ { ... }, { ... } ]' });
    else raw.jobs.forEach((j, i) => entries.push({ entry: j, path: `jobs[${i}]`, grid: false }));
  }
  if (raw.grid !== undefined) listOf(raw.grid, 'grid').forEach(([g, p]) => entries.push({ entry: g, path: p, grid: true }));
  const jobs: BatchJob[] = [];
  const firstPath = new Map<string, string>();
  for (const { entry, path, grid } of entries) {
    if (!isObject(entry)) {
      problems.push({ where: path, what: `${kind(entry)} is not ${grid ? 'a grid' : 'a job'}`, fix: `write an object with "command" and "framework"${grid ? ' (lists allowed)' : ''}` });
      continue;
    }
    const id = grid ? undefined : entry.id;
    if (id !== undefined && (typeof id !== 'string' || id.trim() === '')) {
      problems.push({ where: `${path}.id`, what: `${kind(id)} is not an id`, fix: 'write a non-empty text, or leave id out (the job\'s command line is its id)' });
      continue;
    }
    for (const job of jobsOfEntry(problems, entry, path, baseDir, grid)) {
      const full: BatchJob = { id: (id as string | undefined) ?? defaultJobId(job), ...job };
      const seen = firstPath.get(full.id);
      if (seen !== undefined) {
        problems.push({ where: path, what: `the job "${full.id}" is also in ${seen}`, fix: 'list every job once (ids must be unique so that resuming and shards can tell them apart)' });
        continue;
      }
      firstPath.set(full.id, path);
      jobs.push(full);
    }
    if (jobs.length > MAX_JOBS) {
      problems.push({ where: path, what: `the plan expands to more than ${MAX_JOBS} jobs`, fix: 'split it into several plans' });
      break;
    }
  }
  if (problems.length > 0) throw new InputError(context, problems.slice(0, 50));
  if (jobs.length === 0) throw new InputError(context, [{ where: '(top level)', what: 'the plan lists no jobs', fix: 'add a job to "jobs" or values to every axis of "grid"' }]);
  return { jobs, baseDir };
}

export interface Shard {
  /** 1-based. */
  index: number;
  count: number;
}

/** `--shard i/n` with 1 ≤ i ≤ n. */
export function parseShard(text: string, flag = '--shard'): Shard {
  const m = /^\s*(\d+)\s*\/\s*(\d+)\s*$/.exec(text);
  const [i, n] = m ? [Number(m[1]), Number(m[2])] : [NaN, NaN];
  if (!m || !(n >= 1) || !(i >= 1) || i > n) {
    throw new InputError(`The shard "${text}" cannot be used:`, [{ where: flag, what: `"${text}" is not i/n with 1 ≤ i ≤ n`, fix: `write ${flag} 1/4 for the first of four shares (with a 0-based array index k, write $((k+1))/n)` }]);
  }
  return { index: i, count: n };
}

/** The jobs of one shard: every n-th job of the plan from the i-th on, so the n shards hold each job exactly once. */
export function shardJobs<T>(jobs: readonly T[], shard: Shard): T[] {
  return jobs.filter((_, k) => k % shard.count === shard.index - 1);
}
