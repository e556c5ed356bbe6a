// `fluxel export FILE --to c|numpy|dask|js [--out PATH] [--float64]`: writes the scheme as code for a pipeline.
// Computes what src/export must not (the file's SHA-256, the stability verdict) and passes it in.
// Exit 0 ok, 1 input errors (diagnostics, a construct that cannot export), 2 usage. Node-only front end.

import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import * as path from 'node:path';
import { analyseStability } from '../analysis/stability';
import { ExportError, exportScheme, TARGETS, type Target } from '../export';
import { writeFileAtomically } from '../images/files';
import { parseAndCheck } from '../notation';
import { guard, parseCommandLine, UsageError } from './args';
import { formatDiagnostic } from './check';

const USAGE = 'usage: fluxel export FILE --to c|numpy|dask|js [--out PATH] [--float64]   (without --out the code goes to stdout)';

export function exportMain(argv: string[]): Promise<number> {
  return guard('export', async () => {
    const { values: o, positionals } = parseCommandLine(argv, {
      to: { type: 'string' },
      out: { type: 'string', short: 'o' },
      float64: { type: 'boolean' },
      help: { type: 'boolean', short: 'h' },
    }, USAGE);
    if (o.help) {
      process.stdout.write(USAGE + '\n');
      return 0;
    }
    if (positionals.length !== 1) throw new UsageError(`expected one FILE.\n${USAGE}`);
    if (!o.to) throw new UsageError(`--to is required (one of ${TARGETS.join(', ')}).\n${USAGE}`);
    if (!(TARGETS as readonly string[]).includes(o.to)) throw new UsageError(`unknown target '${o.to}'; use one of ${TARGETS.join(', ')}.`);
    const file = positionals[0];
    let bytes: Buffer;
    try {
      bytes = readFileSync(file);
    } catch (err) {
      process.stderr.write(`fluxel export: cannot read ${file}: ${(err as NodeJS.ErrnoException).code ?? String(err)}\n`);
      return 1;
    }
    const checked = parseAndCheck(bytes.toString('utf8'));
    if (!checked.scheme) {
      for (const d of checked.diagnostics.filter(d => d.severity === 'error')) process.stderr.write(formatDiagnostic(file, d) + '\n');
      process.stderr.write(`fluxel export: ${file} has errors; fix them before exporting.\n`);
      return 1;
    }
    const report = analyseStability(checked.scheme);
    let code: string;
    try {
      code = exportScheme(checked.scheme, o.to as Target, {
        fileName: path.basename(file),
        sourceHash: createHash('sha256').update(bytes).digest('hex'),
        stability: { method: report.method, limit: report.limit, unconditional: report.unconditional, reason: report.reason },
        dtype: o.float64 ? 'float64' : 'float32',
      });
    } catch (err) {
      if (err instanceof ExportError) {
        const m = /^line (\d+): (.*)$/s.exec(err.message);
        process.stderr.write(m ? `${file}:${m[1]}: cannot export to ${o.to}: ${m[2]}\n` : `${file}: cannot export to ${o.to}: ${err.message}\n`);
        return 1;
      }
      throw err;
    }
    if (o.out) await writeFileAtomically(o.out, code);
    else process.stdout.write(code);
    return 0;
  });
}
