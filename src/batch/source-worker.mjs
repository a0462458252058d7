// The batch worker thread from the TypeScript sources (tests, and a checkout whose CLI build is
// stale): tsx compiles src/batch/worker.ts and what it imports. Built code never loads this file.
import { tsImport } from 'tsx/esm/api';

await tsImport('./worker.ts', import.meta.url);
