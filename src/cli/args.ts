// Shared option parsing for the subcommands: a thin layer over node:util parseArgs that turns
// its exceptions into usage errors (exit code 2) with one clear line.

import { parseArgs, type ParseArgsConfig } from 'node:util';

export class UsageError extends Error {}

export function parseCommandLine<T extends NonNullable<ParseArgsConfig['options']>>(argv: string[], options: T, usageText: string) {
  // `--steps -1` or `--set -0.5`: a value that starts with a minus sign would be read as an option; join it to its
  // option (`--steps=-1`) so the command can say what is wrong with the value itself.
  const args: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    const name = argv[i].startsWith('--') ? argv[i].slice(2) : null;
    const opt = name !== null ? (options as Record<string, { type?: string }>)[name] : undefined;
    if (opt?.type === 'string' && i + 1 < argv.length && /^-(\d|\.\d)/.test(argv[i + 1])) {
      args.push(`${argv[i]}=${argv[i + 1]}`);
      i++;
    } else args.push(argv[i]);
  }
  try {
    return parseArgs({ args, options, allowPositionals: true, strict: true });
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

/** A finite number from an option's text, or a usage error naming the option. */
export function numberArg(text: string, what: string, usageText: string): number {
  const v = Number(text);
  if (text.trim() === '' || !Number.isFinite(v)) throw new UsageError(`${what} needs a number, got '${text}'.\n${usageText}`);
  return v;
}

/** A whole number ≥ min from an option's text, or a usage error naming the option. */
export function wholeArg(text: string, what: string, min: number, usageText: string): number {
  const v = numberArg(text, what, usageText);
  if (!Number.isInteger(v) || v < min) throw new UsageError(`${what} needs a whole number ≥ ${min}, got '${text}'.\n${usageText}`);
  return v;
}

/** `--size WxH`. */
export function sizeArg(text: string | undefined, usageText: string): { width: number; height: number } | undefined {
  if (text === undefined) return undefined;
  const m = /^(\d+)x(\d+)$/.exec(text);
  if (!m) throw new UsageError(`--size takes WxH, e.g. 128x96, got '${text}'.\n${usageText}`);
  return { width: wholeArg(m[1], '--size width', 1, usageText), height: wholeArg(m[2], '--size height', 1, usageText) };
}

/** `--range LO:HI` (the sample values that map to 0 and 1). */
export function rangeArg(text: string | undefined, usageText: string): { lo: number; hi: number } | undefined {
  if (text === undefined) return undefined;
  const m = /^([^:]+):([^:]+)$/.exec(text);
  if (!m) throw new UsageError(`--range takes LO:HI, got '${text}'.\n${usageText}`);
  return { lo: numberArg(m[1], '--range LO', usageText), hi: numberArg(m[2], '--range HI', usageText) };
}
