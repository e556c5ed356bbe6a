// Bundles test/bench/engine.ts with esbuild into a temporary file and runs it with node; prints, asserts nothing.
import { build } from 'esbuild';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, dirname } from 'node:path';
import { fileURLToPath } from 'node:url';
import { spawnSync } from 'node:child_process';

const here = dirname(fileURLToPath(import.meta.url));
const dir = mkdtempSync(join(tmpdir(), 'fluxel-bench-'));
const out = join(dir, 'engine-bench.mjs');
await build({ entryPoints: [join(here, 'engine.ts')], bundle: true, platform: 'node', format: 'esm', outfile: out, logLevel: 'warning', target: 'node20' });
const r = spawnSync(process.execPath, [out], { stdio: 'inherit' });
rmSync(dir, { recursive: true, force: true });
process.exit(r.status ?? 1);
