// Builds dist/: the CLI (dist/cli.js), and later the extension and webview bundles. Run with `npm run build`.
import { build } from 'esbuild';
import { chmodSync, existsSync } from 'node:fs';

const common = { bundle: true, platform: 'node', target: 'node20', format: 'cjs', sourcemap: false, logLevel: 'warning' };
const entries = [
  { entryPoints: ['src/cli/index.ts'], outfile: 'dist/cli.js', banner: { js: '#!/usr/bin/env node' } },
];
if (existsSync('src/engine/worker/workerMain.ts')) entries.push({ entryPoints: ['src/engine/worker/workerMain.ts'], outfile: 'dist/engine-worker.js' });
if (existsSync('src/tune/worker.ts')) entries.push({ entryPoints: ['src/tune/worker.ts'], outfile: 'dist/tune-worker.js' });
if (existsSync('media/preview/main.ts')) entries.push({ entryPoints: ['src/extension/preview/analysisWorker.ts'], outfile: 'dist/preview-analysis.js' }, { entryPoints: ['media/preview/main.ts'], outfile: 'dist/media/preview.js', platform: 'browser', format: 'iife', target: 'es2022', minify: true });
if (existsSync('src/extension/extension.ts')) entries.push({ entryPoints: ['src/extension/extension.ts'], outfile: 'dist/extension.js', external: ['vscode'] });
await Promise.all(entries.map((e) => build({ ...common, ...e })));
chmodSync('dist/cli.js', 0o755);
