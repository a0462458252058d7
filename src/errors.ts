/**
 * Errors the user can act on. Every problem names where it is (a JSON path, a CLI flag, a
 * parameter) and how to fix it. Shells print `message` and never a stack trace.
 */
export interface Problem {
  /** Where: a JSON path such as `bars[3].shift[0]`, a flag such as `--cells`, or a parameter. */
  where: string;
  /** What is wrong. */
  what: string;
  /** How to fix it. */
  fix: string;
}

export function formatProblem(p: Problem): string {
  return `${p.where}: ${p.what}. Fix: ${p.fix}.`;
}

export class InputError extends Error {
  readonly problems: Problem[];
  constructor(context: string, problems: Problem[]) {
    const body = problems.map((p) => `  - ${formatProblem(p)}`).join('\n');
    super(`${context}\n${body}`);
    this.name = 'InputError';
    this.problems = problems;
  }
}

/** A problem too large for the chosen solver; carries the memory estimate. */
export class TooLargeError extends Error {
  readonly bytesNeeded: number;
  readonly bytesAllowed: number;
  /** The estimated time, when the size check before a run made the estimate (src/flex/estimate.ts). */
  readonly secondsNeeded?: number;
  /** The largest cells of the same aspect that fit, when known (null: not even 1×1). */
  readonly largestCells?: [number, number] | null;
  constructor(message: string, bytesNeeded: number, bytesAllowed: number, extra: { secondsNeeded?: number; largestCells?: [number, number] | null } = {}) {
    super(message);
    this.name = 'TooLargeError';
    this.bytesNeeded = bytesNeeded;
    this.bytesAllowed = bytesAllowed;
    this.secondsNeeded = extra.secondsNeeded;
    this.largestCells = extra.largestCells;
  }
}
