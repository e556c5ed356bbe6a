// The same real-editor suite under @vscode/test-electron, for people with a network: it downloads a VS Code build
// at run time (which fails offline; CI uses test/tools/editor-test.mjs with code-server instead). It loads the
// extension from this folder (run `npm run build && node test/tools/editor-bundle.mjs` first) and opens a throwaway
// copy of the examples. Browser-only probes (token colours, status bar, screenshots) need the code-server driver, so
// under Electron those tests report that they could not be answered.
// Usage: node test/tools/editor-electron.mjs
import { build } from 'esbuild';
import { cpSync, mkdirSync, readdirSync, rmSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { runTests } from '@vscode/test-electron';

const ROOT = resolve(import.meta.dirname, '../..');
const OUT = join(ROOT, 'test/out/editor-electron');
rmSync(OUT, { recursive: true, force: true });
mkdirSync(join(OUT, 'workspace'), { recursive: true });
for (const f of readdirSync(join(ROOT, 'examples'))) if (f.endsWith('.fluxel')) cpSync(join(ROOT, 'examples', f), join(OUT, 'workspace', f));
await build({ entryPoints: [join(ROOT, 'test/editor/index.ts')], outfile: join(OUT, 'suite/index.js'), bundle: true, platform: 'node', format: 'cjs', target: 'node20', external: ['vscode'], logLevel: 'warning' });
try {
  await runTests({
    version: '1.139.1',
    extensionDevelopmentPath: ROOT,
    extensionTestsPath: join(OUT, 'suite/index.js'),
    launchArgs: [join(OUT, 'workspace'), '--disable-extensions', '--disable-workspace-trust'],
    extensionTestsEnv: { FLUXEL_EDITOR_OUT: OUT, FLUXEL_EDITOR_NO_PROBES: '1' },
  });
} catch (err) {
  console.error(`editor (electron): ${err instanceof Error ? err.message : String(err)}`);
  process.exit(1);
}
