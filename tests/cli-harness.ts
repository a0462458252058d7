/** Shared by the CLI suites: run a command in-process, and compile a JSON Schema of schema/. */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import Ajv2020, { type ValidateFunction } from 'ajv/dist/2020.js';
import { main, readTextFile } from '../src/cli/main.js';

/** Runs `shimmy ARGV` in this process; returns the exit code and everything printed. */
export async function runCli(argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await main(argv, { out: (t) => (out += t), err: (t) => (err += t), readText: readTextFile });
  return { code, out, err };
}

export const SCHEMA_DIR = join(import.meta.dirname, '..', 'schema');

/** A strict draft 2020-12 validator (Ajv) that knows the framework schema the others refer to. */
export function schemaValidators(): { ajv: Ajv2020; validator: (file: string) => ValidateFunction } {
  const ajv = new Ajv2020({ strict: true, allowUnionTypes: true, allErrors: true });
  ajv.addSchema(JSON.parse(readFileSync(join(SCHEMA_DIR, 'framework.schema.json'), 'utf8')));
  return { ajv, validator: (file) => ajv.compile(JSON.parse(readFileSync(join(SCHEMA_DIR, file), 'utf8'))) };
}
