// Runs benchmark scripts: bundles test/bench/<name>.bench.ts with esbuild into dist/bench/ and runs it with Node.
// Usage: node test/bench/run.mjs [name ...]   (no names: every *.bench.ts). Benchmarks print figures; they assert nothing.
import { build } from 'esbuild';
import { readdirSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const here = dirname(fileURLToPath(import.meta.url));
const root = join(here, '..', '..');
const names = process.argv.slice(2);
const all = readdirSync(here).filter((f) => f.endsWith('.bench.ts')).map((f) => f.replace(/\.bench\.ts$/, ''));
let failed = 0;
for (const name of names.length ? names : all) {
  const outfile = join(root, 'dist', 'bench', `${name}.cjs`);
  await build({ entryPoints: [join(here, `${name}.bench.ts`)], outfile, bundle: true, platform: 'node', target: 'node20', format: 'cjs', logLevel: 'warning' });
  console.log(`\n== bench: ${name}`);
  const r = spawnSync(process.execPath, ['--expose-gc', outfile], { stdio: 'inherit', cwd: root });
  if (r.status !== 0) failed++;
}
process.exitCode = failed ? 1 : 0;
