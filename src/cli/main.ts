/**
 * The shimmy command line: a thin shell over the computational core.
 * Exit codes: 0 success, 2 bad input (flags, sizes, files), 3 too large for memory, 4 a failed
 * self-check (count --verify), 5 a batch with at least one failed job, 1 internal error.
 */
import { InputError, TooLargeError } from '../errors.js';
import { parseArgs, suggest } from './args.js';
import { commandHelp, type CliIO, type Command } from './command.js';
import { readTextFile, safeLines, safeText } from './common.js';
export { readTextFile };
import { countCommand } from './count.js';
import { galleryCommand } from './gallery.js';
import { spectrumCommand } from './spectrum.js';
import { classifyCommand } from './classify.js';
import { sweepCommand } from './sweep.js';
import { exportModesCommand } from './export-modes.js';
import { edgesCommand } from './edges.js';
import { batchCommand } from './batch.js';
import { strainCommand } from './strain.js';

export const COMMANDS: Command[] = [countCommand, classifyCommand, sweepCommand, spectrumCommand, edgesCommand, strainCommand, exportModesCommand, galleryCommand, batchCommand];

const VERSION = '0.1.0';

function mainHelp(): string {
  const w = Math.max(...COMMANDS.map((c) => c.name.length));
  return [
    'shimmy — flexes and self-stresses of periodic bar-and-joint frameworks',
    '',
    'Usage: shimmy COMMAND [FRAMEWORK] [flags]',
    '',
    'Commands:',
    ...COMMANDS.map((c) => `  ${c.name.padEnd(w)}  ${c.summary}`),
    '',
    'Run `shimmy COMMAND --help` for a command\'s flags.',
    'Example: shimmy count gallery:kagome --cells 6x6 --bc periodic',
    '',
    'With two or more cores the largest kernels are split between two threads (results are the',
    'same bit for bit); SHIMMY_THREADS=1 keeps everything on one thread.',
    '',
  ].join('\n');
}

export const nodeIO: CliIO = {
  out: (t) => process.stdout.write(t),
  err: (t) => process.stderr.write(t),
  readText: readTextFile,
  errIsTTY: Boolean(process.stderr.isTTY),
};

export async function main(argv: string[], io: CliIO = nodeIO): Promise<number> {
  const [name, ...rest] = argv;
  if (name === undefined || name === '--help' || name === '-h' || name === 'help') {
    const target = name === 'help' ? COMMANDS.find((c) => c.name === rest[0]) : undefined;
    io.out(target ? commandHelp(target) : mainHelp());
    return 0;
  }
  if (name === '--version') {
    io.out(`shimmy ${VERSION}\n`);
    return 0;
  }
  const command = COMMANDS.find((c) => c.name === name);
  if (!command) {
    io.err(`shimmy: "${safeText(name)}" is not a command${suggest(name, COMMANDS.map((c) => c.name))}. Commands: ${COMMANDS.map((c) => c.name).join(', ')}. Run shimmy --help for usage.\n`);
    return 2;
  }
  try {
    const args = parseArgs(rest, command.flags, command.name, command.maxPositional);
    if (args.flags.has('--help')) {
      io.out(commandHelp(command));
      return 0;
    }
    return await command.run(args, io);
  } catch (e) {
    if (e instanceof InputError) {
      io.err(`shimmy ${command.name}: ${safeLines(e.message)}\nRun shimmy ${command.name} --help for usage.\n`);
      return 2;
    }
    if (e instanceof TooLargeError) {
      io.err(`shimmy ${command.name}: ${safeLines(e.message)}\n`);
      return 3;
    }
    const msg = e instanceof Error ? e.message : String(e);
    io.err(`shimmy ${command.name}: internal error: ${safeLines(msg)}\nThis is a bug in shimmy; please report it with the command line you ran.${process.env.SHIMMY_DEBUG ? `\n${(e as Error).stack}` : ''}\n`);
    return 1;
  }
}
