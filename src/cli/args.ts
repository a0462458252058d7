/**
 * A small, strict flag parser: every flag is declared; unknown flags, missing values and
 * stray arguments are InputErrors naming the flag and the fix.
 */
import { InputError } from '../errors.js';
import { closestWord } from '../suggest.js';

export interface FlagSpec {
  name: string;
  /** Placeholder for the value, or undefined for a switch. */
  value?: string;
  help: string;
  default?: string;
}

export interface ParsedArgs {
  positional: string[];
  flags: Map<string, string | true>;
}



export function suggest(word: string, options: string[]): string {
  const c = closestWord(word, options);
  return c ? ` (did you mean ${c}?)` : '';
}

export function parseArgs(argv: string[], specs: FlagSpec[], command: string, maxPositional: number): ParsedArgs {
  const byName = new Map(specs.map((s) => [s.name, s]));
  const flags = new Map<string, string | true>();
  const positional: string[] = [];
  const problems = [];
  for (let i = 0; i < argv.length; i++) {
    const arg = argv[i];
    if (arg.startsWith('--')) {
      const eq = arg.indexOf('=');
      const name = eq > 0 ? arg.slice(0, eq) : arg;
      const spec = byName.get(name);
      if (!spec) {
        problems.push({ where: name, what: `"${name}" is not a flag of shimmy ${command}${suggest(name, [...byName.keys()])}`, fix: `see shimmy ${command} --help for its flags` });
        continue;
      }
      if (spec.value === undefined) {
        if (eq > 0) problems.push({ where: name, what: `${name} takes no value`, fix: `write ${name} alone` });
        flags.set(name, true);
        continue;
      }
      let v: string | undefined;
      if (eq > 0) v = arg.slice(eq + 1);
      else if (i + 1 < argv.length && !argv[i + 1].startsWith('--')) v = argv[++i];
      if (v === undefined) {
        problems.push({ where: name, what: `${name} needs a value`, fix: `write ${name} ${spec.value}` });
        continue;
      }
      flags.set(name, v);
    } else if (arg.startsWith('-') && arg.length > 1 && !/^-\d/.test(arg)) {
      problems.push({ where: arg, what: `"${arg}" is not a flag of shimmy ${command}`, fix: `flags start with two dashes; see shimmy ${command} --help` });
    } else {
      positional.push(arg);
    }
  }
  if (positional.length > maxPositional) {
    problems.push({ where: positional[maxPositional], what: `unexpected argument "${positional[maxPositional]}"`, fix: `shimmy ${command} takes ${maxPositional === 1 ? 'one framework (a file or gallery:NAME)' : `${maxPositional} arguments`}; quote values with spaces` });
  }
  if (problems.length) throw new InputError(`the command line cannot be used:`, problems);
  return { positional, flags };
}

/** `8x8`, `8×8` or `8` (square) → [N1, N2]. */
export function parseCells(text: string, flag = '--cells'): [number, number] {
  const m = /^\s*(\d+)\s*(?:[x×X]\s*(\d+))?\s*$/.exec(text);
  const n1 = m ? Number(m[1]) : NaN;
  const n2 = m ? Number(m[2] ?? m[1]) : NaN;
  if (!m || !(n1 >= 1) || !(n2 >= 1) || n1 > 100000 || n2 > 100000) {
    throw new InputError(`The supercell size "${text}" cannot be used:`, [
      { where: flag, what: `"${text}" is not a size of whole cells`, fix: `write N1xN2 with positive integers, e.g. ${flag} 8x8 (or ${flag} 8 for 8x8)` },
    ]);
  }
  return [n1, n2];
}

/** A plain decimal number such as 1e-9, 0.5 or 3 (Number() alone also takes 0x10, 0b1, Infinity). */
const DECIMAL = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

export function parseNumberFlag(text: string, flag: string, check: (v: number) => boolean, range: string): number {
  const v = DECIMAL.test(text.trim()) ? Number(text) : NaN;
  if (!Number.isFinite(v) || !check(v)) {
    throw new InputError(`The value of ${flag} cannot be used:`, [{ where: flag, what: `"${text}" is not ${range}`, fix: `write ${flag} followed by ${range}` }]);
  }
  return v;
}
