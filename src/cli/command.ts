/** What every CLI command is: its flags, its help, and a run function over plain I/O. */
import type { FlagSpec, ParsedArgs } from './args.js';

export interface CliIO {
  out(text: string): void;
  err(text: string): void;
  readText(path: string): string;
  /** Whether stderr is a terminal (progress lines then overwrite themselves). */
  errIsTTY?: boolean;
}

export interface Command {
  name: string;
  summary: string;
  usage: string;
  /** Lines of extra help after the flags. */
  details: string[];
  flags: FlagSpec[];
  maxPositional: number;
  run(args: ParsedArgs, io: CliIO): number | Promise<number>;
}

export function commandHelp(c: Command): string {
  const width = Math.max(...c.flags.map((f) => (f.name + (f.value ? ` ${f.value}` : '')).length), 10);
  const lines = [`Usage: ${c.usage}`, '', c.summary, '', 'Flags:'];
  for (const f of c.flags) {
    const left = f.name + (f.value ? ` ${f.value}` : '');
    lines.push(`  ${left.padEnd(width)}  ${f.help}${f.default !== undefined ? ` (default ${f.default})` : ''}`);
  }
  if (c.details.length) lines.push('', ...c.details);
  return lines.join('\n') + '\n';
}
