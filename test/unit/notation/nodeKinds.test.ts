// Keeps the campaigns' list of node kinds (nodeKinds.ts) equal to the kinds declared in src/notation/ast.ts.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { DECL_KINDS, EXPR_KINDS, PART_KINDS } from './nodeKinds';

describe('node kinds the fuzz campaigns must reach', () => {
  it('lists every kind declared in ast.ts, and nothing else', () => {
    const ast = readFileSync(join(__dirname, '../../../src/notation/ast.ts'), 'utf8');
    const declared = new Set([...ast.matchAll(/readonly kind: '(\w+)'/g)].map((m) => m[1]));
    const listed = new Set<string>([...DECL_KINDS, ...EXPR_KINDS, ...PART_KINDS]);
    expect([...declared].filter((k) => !listed.has(k)), 'kinds in ast.ts missing from nodeKinds.ts').toEqual([]);
    expect([...listed].filter((k) => !declared.has(k)), 'kinds in nodeKinds.ts no longer in ast.ts').toEqual([]);
  });
});
