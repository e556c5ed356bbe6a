// Shared option parsing for the subcommands: a thin layer over node:util parseArgs that turns
// its exceptions into usage errors (exit code 2) with one clear line.

import { parseArgs, type ParseArgsConfig } from 'node:util';

export class UsageError extends Error {}

export function parseCommandLine<T extends NonNullable<ParseArgsConfig['options']>>(argv: string[], options: T, usageText: string) {
  try {
    return parseArgs({ args: argv, options, allowPositionals: true, strict: true });
  } catch (err) {
    throw new UsageError(`${err instanceof Error ? err.message : String(err)}\n${usageText}`);
  }
}

/** Runs a subcommand body, mapping usage errors to exit code 2 and unexpected failures to 1 with a message. */
export async function guard(name: string, body: () => Promise<number>): Promise<number> {
  try {
    return await body();
  } catch (err) {
    if (err instanceof UsageError) {
      process.stderr.write(`fluxel ${name}: ${err.message}\n`);
      return 2;
    }
    process.stderr.write(`fluxel ${name}: ${err instanceof Error ? err.message : String(err)}\n`);
    return 1;
  }
}
