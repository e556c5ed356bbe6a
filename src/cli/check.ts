// `fluxel check FILE [--json]`: diagnostics (file:line:col severity code message) and, when the analysis
// is available, the stability verdict and what the scheme approximates (the modified equation; JSON key
// "approximates", null while the file has errors). Exit 1 when there are errors, 0 otherwise.

import { readFileSync, promises as fsp } from 'node:fs';
import { parseAndCheck } from '../notation';
import type { Program } from '../notation/ast';
import type { Diagnostic } from '../notation/diagnostics';
import type { CheckedScheme } from '../notation/scheme';
import { guard, parseCommandLine, UsageError } from './args';
import { stabilityForCheck } from './stabilityHook';

const USAGE = 'usage: fluxel check FILE [--json]';

export function checkMain(argv: string[]): Promise<number> {
  return guard('check', async () => {
    const { values, positionals } = parseCommandLine(argv, { json: { type: 'boolean' }, help: { type: 'boolean', short: 'h' } }, USAGE);
    if (values.help) {
      process.stdout.write(USAGE + '\n');
      return 0;
    }
    if (positionals.length !== 1) throw new UsageError(`expected one FILE.\n${USAGE}`);
    const file = positionals[0];
    let text: string;
    try {
      text = readFileSync(file, 'utf8');
    } catch (err) {
      process.stderr.write(`fluxel check: cannot read ${file}: ${(err as NodeJS.ErrnoException).code ?? String(err)}\n`);
      return 1;
    }
    const result = parseAndCheck(text);
    const stability = result.scheme ? stabilityForCheck(result.scheme) : null;
    const diagnostics: Diagnostic[] = [...result.diagnostics, ...(stability?.diagnostics ?? [])];
    const errors = diagnostics.filter((d) => d.severity === 'error').length;
    if (values.json) {
      const out: Record<string, unknown> = {
        file,
        diagnostics: diagnostics.map(jsonDiagnostic),
      };
      // The shape always has `stability` (contracts.md §4); while the file has errors no analysis runs.
      out.stability = stability ? stability.report : {
        method: 'none',
        limit: null,
        dt: declaredStep(result.program),
        stable: false,
        worst: null,
        reason: 'The scheme has errors, so no stability analysis was run.',
      };
      out.approximates = stability?.approximates ?? null;
      process.stdout.write(JSON.stringify(out, null, 2) + '\n');
    } else {
      for (const d of diagnostics) process.stdout.write(formatDiagnostic(file, d) + '\n');
      if (stability) process.stdout.write(stability.summary + '\n');
      if (stability?.approximatesText) process.stdout.write(stability.approximatesText + '\n');
      const warnings = diagnostics.filter((d) => d.severity === 'warning').length;
      process.stdout.write(`${file}: ${errors} error${errors === 1 ? '' : 's'}, ${warnings} warning${warnings === 1 ? '' : 's'}\n`);
    }
    return errors > 0 ? 1 : 0;
  });
}

/** The `step dt = ...` value as written, or null when there is none. */
function declaredStep(program: Program): number | null {
  for (const d of program.decls) if (d.kind === 'step') return d.value.value;
  return null;
}

export function formatDiagnostic(file: string, d: Diagnostic): string {
  return `${file}:${d.range.start.line}:${d.range.start.column} ${d.severity} ${d.code} ${d.message}`;
}

/** The JSON form: 1-based lines and columns, exclusive end (contracts.md §4); offsets are internal and dropped. */
export function jsonDiagnostic(d: Diagnostic): Record<string, unknown> {
  const pos = (p: { line: number; column: number }) => ({ line: p.line, column: p.column });
  const out: Record<string, unknown> = {
    severity: d.severity,
    code: d.code,
    message: d.message,
    range: { start: pos(d.range.start), end: pos(d.range.end) },
  };
  if (d.related?.length) out.related = d.related.map((r) => ({ message: r.message, range: { start: pos(r.range.start), end: pos(r.range.end) } }));
  return out;
}

/**
 * Reads and checks the scheme a command runs: its text and checked scheme, or null after printing why on stderr
 * (an unreadable file, or its errors as `file:line:col error code message`), which the command turns into exit 1.
 */
export async function loadScheme(command: string, file: string): Promise<{ text: string; scheme: CheckedScheme } | null> {
  let text: string;
  try {
    text = await fsp.readFile(file, 'utf8');
  } catch (err) {
    process.stderr.write(`fluxel ${command}: cannot read ${file}: ${(err as NodeJS.ErrnoException).code ?? String(err)}\n`);
    return null;
  }
  const checked = parseAndCheck(text);
  const errors = checked.diagnostics.filter((d) => d.severity === 'error');
  if (!checked.scheme || errors.length) {
    for (const d of errors) process.stderr.write(formatDiagnostic(file, d) + '\n');
    return null;
  }
  return { text, scheme: checked.scheme };
}
