// Generated code stays code: a hostile file name (comment closers, newlines, backslashes, trigraphs) and user names
// that are keywords of the targets must still give files that parse. References: gcc -fsyntax-only -std=c99
// (trigraphs on), Debian's /usr/bin/python3 `ast.parse`, and `node --check` on the ES module.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { exportScheme } from '../../../src/export';
import { parseAndCheck } from '../../../src/notation/index';

const dir = mkdtempSync(join(tmpdir(), 'fluxel-export-hostile-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const TEXT = `grid 2d
boundary reflect
param def = 0.5 in [0, 1]
param return = 0.25 in [0, 1]
param __import__ = 0.1 in [0, 1]
step dt = 0.1
steps 3
field double = image
field function = 0.5
double' = double + dt * def * (sum n in N4: double[n] - double) + dt * return * __import__ * function
`;
const FILE = 'evil */ #include <stdio.h> ??/\n\\\nimport os; os.system("x") """ \u2028 .fluxel';

describe('hostile names and file names', () => {
  const scheme = parseAndCheck(TEXT).scheme;
  it('the scheme itself checks', () => expect(scheme).not.toBeNull());
  const gen = (t: 'c' | 'numpy' | 'dask' | 'js') => exportScheme(scheme!, t, { fileName: FILE, sourceHash: 'a'.repeat(64), stability: { method: 'x */ y', limit: 0.25, reason: 'r\n#define x' }, dtype: 'float32' });
  it('C parses (gcc -fsyntax-only -std=c99 -Wall -Werror)', () => {
    const f = join(dir, 'x.c');
    writeFileSync(f, gen('c'));
    expect(() => execFileSync('gcc', ['-fsyntax-only', '-std=c99', '-Wall', '-Werror', f], { stdio: 'pipe' })).not.toThrow();
  });
  it('NumPy and Dask parse (Python ast.parse)', () => {
    for (const t of ['numpy', 'dask'] as const) {
      const f = join(dir, `${t}.py`);
      writeFileSync(f, gen(t));
      expect(() => execFileSync('/usr/bin/python3', ['-c', 'import ast, sys; ast.parse(open(sys.argv[1]).read())', f], { stdio: 'pipe' })).not.toThrow();
    }
  });
  it('JS parses (node --check)', () => {
    const f = join(dir, 'x.mjs');
    writeFileSync(f, gen('js'));
    expect(() => execFileSync(process.execPath, ['--check', f], { stdio: 'pipe' })).not.toThrow();
  });
  it('the file name reaches the code only inside comments', () => {
    for (const t of ['c', 'numpy', 'js'] as const) {
      const code = gen(t);
      expect(code.includes('#include <stdio.h>') && !code.split('\n').some(l => l.startsWith('#include <stdio.h>'))).toBe(true);
      expect(code).not.toContain('os.system("x") """\n');
    }
  });
});
