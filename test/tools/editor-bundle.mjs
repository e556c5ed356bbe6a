// Bundles the extension for packaging in two files: dist/extension.js (what activation loads: registration only)
// and dist/extension-core.js (parser, checker, analysis, engine client; loaded on first use). `npm run build`
// makes one file with the same behaviour; this split only saves compile time during activation. Prints sizes.
import { build } from 'esbuild';
import { statSync } from 'node:fs';

const common = { bundle: true, platform: 'node', target: 'node20', format: 'cjs', sourcemap: false, logLevel: 'warning', minify: true, keepNames: true };
const coreExternal = {
  name: 'fluxel-core-external',
  setup(b) {
    b.onResolve({ filter: /^\.\/core$/ }, () => ({ path: './extension-core.js', external: true }));
  },
};
await Promise.all([
  build({ ...common, entryPoints: ['src/extension/extension.ts'], outfile: 'dist/extension.js', external: ['vscode'], plugins: [coreExternal] }),
  build({ ...common, entryPoints: ['src/extension/core.ts'], outfile: 'dist/extension-core.js', external: ['vscode', 'esbuild'] }),
]);
for (const f of ['dist/extension.js', 'dist/extension-core.js']) console.log(`${f}: ${(statSync(f).size / 1024).toFixed(0)} KiB`);
