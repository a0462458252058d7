// The helper thread from the TypeScript sources (tests, and a checkout whose CLI build is stale):
// tsx compiles kernel-thread.ts and what it imports. Built code never loads this file.
import { tsImport } from 'tsx/esm/api';

await tsImport('./kernel-thread.ts', import.meta.url);
