#!/usr/bin/env node
// Runs the TypeScript CLI directly through tsx, so `npx shimmy` works right after `npm ci`.
import { tsImport } from 'tsx/esm/api';

await tsImport('../src/cli/run.ts', import.meta.url);
