/** `shimmy gallery`: the built-in lattices and their parameters. */
import { GALLERY } from '../framework/gallery.js';
import type { Command } from './command.js';

export const galleryCommand: Command = {
  name: 'gallery',
  summary: 'List the built-in parametric lattices, usable wherever a framework file is (gallery:NAME?key=value).',
  usage: 'shimmy gallery [--json]',
  flags: [{ name: '--json', help: 'print the list as JSON' }, { name: '--help', help: 'show this help' }],
  maxPositional: 0,
  details: [],
  run(args, io) {
    if (args.flags.has('--json')) {
      io.out(JSON.stringify(GALLERY.map(({ build: _b, ...e }) => e), null, 2) + '\n');
      return 0;
    }
    const lines: string[] = [];
    for (const e of GALLERY) {
      lines.push(`gallery:${e.name}  ${e.title}: ${e.summary}`);
      for (const p of e.params) {
        lines.push(`    ${p.key}=${p.default}${p.unit ? ` ${p.unit}` : ''}  ${p.help} (${p.min} to ${p.max})`);
      }
    }
    io.out(lines.join('\n') + '\n');
    return 0;
  },
};
