// Packages the extension as test/out/fluxel.vsix with @vscode/vsce (3.x, offline): vsce runs `vscode:prepublish`
// (build + split bundle), .vscodeignore keeps sources, tests and benchmarks out. The package's README is the project
// README with its relative links turned into plain text (they would point nowhere inside the package).
// Prints the package size. Usage: node test/tools/editor-package.mjs
import { execFileSync } from 'node:child_process';
import { mkdirSync, readFileSync, statSync, writeFileSync } from 'node:fs';

mkdirSync('test/out', { recursive: true });
const readme = readFileSync('README.md', 'utf8').replace(/!\[[^\]]*\]\((?![a-z]+:)[^)]*\)\n?/g, '').replace(/\[([^\]]*)\]\((?![a-z]+:|#)[^)]*\)/g, '$1');
writeFileSync('test/out/package-readme.md', readme);
const vsce = 'node_modules/@vscode/vsce/vsce';
execFileSync(process.execPath, [vsce, 'package', '--no-dependencies', '--skip-license', '--allow-missing-repository', '--readme-path', 'test/out/package-readme.md', '--out', 'test/out/fluxel.vsix'], { stdio: ['ignore', 'inherit', 'inherit'] });
const size = statSync('test/out/fluxel.vsix').size;
console.log(`package: test/out/fluxel.vsix, ${(size / 1024).toFixed(0)} KiB`);
