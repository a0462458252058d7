/**
 * A progress line on stderr for long runs: nothing for the first second, then at most two
 * updates a second ("shimmy count: sparse: factorising 40%"), finished with a newline.
 */
import type { Progress } from '../flex/solver.js';
import type { CliIO } from './command.js';

export interface ProgressLine {
  report(p: Progress): void;
  /** End the line if anything was printed. */
  done(): void;
}

export function progressLine(io: CliIO, command: string, delayMs = 1000, everyMs = 500): ProgressLine {
  const start = Date.now();
  let last = 0;
  let printed = false;
  return {
    report(p) {
      const now = Date.now();
      if (now - start < delayMs || now - last < everyMs) return;
      last = now;
      const pct = Number.isFinite(p.fraction) ? ` ${Math.round(Math.min(1, Math.max(0, p.fraction)) * 100)}%` : '';
      const text = `shimmy ${command}: ${p.stage}${pct} (${((now - start) / 1000).toFixed(1)} s)`;
      io.err(io.errIsTTY ? `\r\x1b[2K${text}` : `${text}\n`);
      printed = true;
    },
    done() {
      if (printed && io.errIsTTY) io.err('\n');
    },
  };
}
