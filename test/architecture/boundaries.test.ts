// Mechanical checks of the architecture's invariants (DEVELOPERS.md): which folders may import what,
// and that every module opens with a header comment saying what it owns.

import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join, relative } from 'node:path';
import { describe, expect, it } from 'vitest';

const ROOT = join(__dirname, '../..');

function files(dir: string): string[] {
  const out: string[] = [];
  let entries: string[] = [];
  try {
    entries = readdirSync(join(ROOT, dir));
  } catch {
    return out;
  }
  for (const e of entries) {
    const p = join(dir, e);
    if (statSync(join(ROOT, p)).isDirectory()) out.push(...files(p));
    else if (/\.(ts|mts)$/.test(e) && !e.endsWith('.d.ts')) out.push(p);
  }
  return out;
}

function imports(file: string): string[] {
  const text = readFileSync(join(ROOT, file), 'utf8');
  const out: string[] = [];
  for (const m of text.matchAll(/(?:import|export)\s[^'"]*?from\s+['"]([^'"]+)['"]|import\(\s*['"]([^'"]+)['"]\s*\)|require\(\s*['"]([^'"]+)['"]\s*\)/g)) {
    out.push(m[1] ?? m[2] ?? m[3]);
  }
  return out;
}

const NODE_BUILTINS = /^(node:|fs$|path$|os$|child_process$|worker_threads$|crypto$|util$|url$|stream$)/;

describe('import boundaries', () => {
  it('only src/extension imports vscode', () => {
    const offenders = files('src').filter((f) => !f.startsWith('src/extension/') && imports(f).includes('vscode'));
    expect(offenders).toEqual([]);
  });

  it('src/notation imports nothing from Node, the DOM or other Fluxel folders', () => {
    const offenders: string[] = [];
    for (const f of files('src/notation')) {
      for (const i of imports(f)) {
        if (NODE_BUILTINS.test(i) || i === 'vscode' || (i.startsWith('.') && i.startsWith('..'))) offenders.push(`${f}: ${i}`);
        if (!i.startsWith('.') && i !== 'chevrotain') offenders.push(`${f}: ${i}`);
      }
    }
    expect(offenders).toEqual([]);
  });

  it('src/analysis is pure (no Node built-ins, no vscode)', () => {
    const offenders = files('src/analysis').flatMap((f) => imports(f).filter((i) => NODE_BUILTINS.test(i) || i === 'vscode').map((i) => `${f}: ${i}`));
    expect(offenders).toEqual([]);
  });

  it('media/ (the webview) does no numerics: it imports nothing from the engine or analysis', () => {
    const offenders = files('media').flatMap((f) => imports(f).filter((i) => /src\/(engine|analysis|notation|images)/.test(i)).map((i) => `${f}: ${i}`));
    expect(offenders).toEqual([]);
  });
});

describe('module headers', () => {
  it('every source module opens with a comment saying what it owns', () => {
    const missing = files('src').filter((f) => !/^\s*\/\//.test(readFileSync(join(ROOT, f), 'utf8')));
    expect(missing.map((f) => relative(ROOT, join(ROOT, f)))).toEqual([]);
  });
});
