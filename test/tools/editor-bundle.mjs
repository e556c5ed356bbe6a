// Bundles the extension for packaging so that activation compiles only what it runs: dist/extension.js holds the
// registration code, and every module the extension code loads with a dynamic import() (the parser, checker and
// analysis behind src/extension/core.ts, the live run's session, the engine client, ...) becomes its own file,
// dist/extension-<path>.js, loaded on first use. `npm run build` makes one file with the same behaviour (those
// imports are lazy there too); this split only saves compile time during activation. Prints the sizes.
import { build } from 'esbuild';
import { statSync } from 'node:fs';
import { relative, resolve } from 'node:path';

const SRC = resolve('src');
const common = { bundle: true, platform: 'node', target: 'node20', format: 'cjs', sourcemap: false, logLevel: 'error', minify: true, keepNames: true, external: ['vscode', 'esbuild'] };

/** dist file name for a source module: src/extension/core.ts → extension-core.js, src/engine/x.ts → extension-engine-x.js. */
const chunkName = (file) => `extension-${relative(SRC, file).replace(/^extension[\\/]/, '').replace(/\.ts$/, '').replace(/[\\/]/g, '-')}.js`;

const pending = new Map();   // absolute source path → dist name, still to build
const built = new Set();
const splitDynamic = {
  name: 'fluxel-split-dynamic-imports',
  setup(b) {
    b.onResolve({ filter: /^\.\.?\// }, async (args) => {
      if (args.kind !== 'dynamic-import' || !args.importer.startsWith(resolve(SRC, 'extension'))) return undefined;
      const r = await b.resolve(args.path, { kind: 'import-statement', resolveDir: args.resolveDir });
      if (r.errors.length) return undefined;
      const name = chunkName(r.path);
      if (!built.has(r.path)) pending.set(r.path, name);
      return { path: `./${name}`, external: true };
    });
  },
};

const outputs = ['dist/extension.js'];
await build({ ...common, entryPoints: ['src/extension/extension.ts'], outfile: 'dist/extension.js', plugins: [splitDynamic] });
while (pending.size) {
  const [file, name] = pending.entries().next().value;
  pending.delete(file);
  built.add(file);
  await build({ ...common, entryPoints: [file], outfile: `dist/${name}`, plugins: [splitDynamic] });
  outputs.push(`dist/${name}`);
}
for (const f of outputs) console.log(`${f}: ${(statSync(f).size / 1024).toFixed(0)} KiB`);
