// A seeded fuzz campaign: mutate the examples and the checker cases thousands of times (delete, duplicate, swap
// characters and tokens, insert tokens) and require that parse + check never throw and always give ranged diagnostics.
// Reports coverage: every diagnostic code and every AST node kind must be reached (contracts.md §7).

import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parseAndCheck } from '../../../src/notation';
import { CODES } from '../../../src/notation/diagnostics';
import { CASES } from './cases';
import { ALL_NODE_KINDS, nodeKinds } from './nodeKinds';

/** mulberry32: a small seeded generator, so every run mutates the same way. */
function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

const EXAMPLES = join(__dirname, '../../../examples');
const corpus = [
  ...readdirSync(EXAMPLES).filter((f) => f.endsWith('.fluxel')).map((f) => readFileSync(join(EXAMPLES, f), 'utf8')),
  ...CASES.map(([, src]) => src),
];
const TOKENS = ['(', ')', '[', ']', '{', '}', ',', ':', '=', "'", '+', '-', '*', '/', '^', '<', '>=', '==', 'if', 'then', 'else',
  'sum', 'max', 'min', 'in', 'not', 'and', 'or', 'u', 'n', 'N4', 'blur', 'len', 'field', 'let', 'param', 'step', 'steps',
  'grid', '2d', '1d', 'boundary', 'fixed', '0', '1.5', '-1', '1e-3', '\n', '#', 'é', '\u{1F600}', '"', '@'];

function mutate(text: string, r: () => number): string {
  const n = 1 + Math.floor(r() * 4);
  let s = text;
  for (let k = 0; k < n; k++) {
    const i = Math.floor(r() * (s.length + 1));
    const pieces = s.split(/(\s+|[()[\]{},:=^*/+-])/).filter((p) => p !== '');
    const j = Math.floor(r() * pieces.length);
    switch (Math.floor(r() * 7)) {
      case 0: s = s.slice(0, i) + s.slice(i + 1); break; // delete a character
      case 1: s = s.slice(0, i) + s.charAt(i) + s.slice(i); break; // duplicate a character
      case 2: if (i + 1 < s.length) s = s.slice(0, i) + s[i + 1] + s[i] + s.slice(i + 2); break; // swap two characters
      case 3: pieces.splice(j, 1); s = pieces.join(''); break; // delete a token
      case 4: pieces.splice(j, 0, pieces[j] ?? ''); s = pieces.join(''); break; // duplicate a token
      case 5: { const m = Math.floor(r() * pieces.length); [pieces[j], pieces[m]] = [pieces[m], pieces[j]]; s = pieces.join(''); break; } // swap tokens
      default: s = s.slice(0, i) + ' ' + TOKENS[Math.floor(r() * TOKENS.length)] + ' ' + s.slice(i); break; // insert a token
    }
  }
  return s;
}

describe('fuzz: parse and check never throw', () => {
  it('survives 4000 seeded mutations with well-formed, ranged diagnostics', () => {
    const r = rng(20261202);
    const codes = new Set<string>();
    const kinds = new Set<string>();
    const known = new Set(Object.keys(CODES));
    const inputs = [...corpus];
    for (let k = 0; k < 4000; k++) inputs.push(mutate(corpus[Math.floor(r() * corpus.length)], r));
    for (const text of inputs) {
      let result;
      try {
        result = parseAndCheck(text);
      } catch (err) {
        throw new Error(`parseAndCheck threw on input ${JSON.stringify(text)}: ${String(err)}`);
      }
      nodeKinds(result.program.decls, kinds);
      const lines = text.split(/\r\n|\r|\n/);
      for (const d of result.diagnostics) {
        codes.add(d.code);
        const where = `${d.code} at ${JSON.stringify(d.range)} in ${JSON.stringify(text)}`;
        expect(known.has(d.code), `unknown code: ${where}`).toBe(true);
        const { start, end } = d.range;
        expect(start.line >= 1 && start.line <= lines.length, `start line: ${where}`).toBe(true);
        expect(end.line >= start.line && end.line <= lines.length, `end line: ${where}`).toBe(true);
        expect(start.column >= 1 && start.column <= lines[start.line - 1].length + 1, `start column: ${where}`).toBe(true);
        expect(end.column >= 1 && end.column <= lines[end.line - 1].length + 1, `end column: ${where}`).toBe(true);
        expect(end.offset >= start.offset, `range order: ${where}`).toBe(true);
        expect(d.message.length > 0).toBe(true);
      }
      if (result.scheme) expect(result.diagnostics.some((d) => d.severity === 'error')).toBe(false);
    }
    // Coverage report (printed, then required).
    const missingCodes = [...known].filter((c) => !codes.has(c));
    const allKinds = ALL_NODE_KINDS;
    const missingKinds = allKinds.filter((k) => !kinds.has(k));
    console.log(`fuzz coverage: ${codes.size}/${known.size} codes, ${allKinds.length - missingKinds.length}/${allKinds.length} node kinds over ${inputs.length} inputs`);
    expect(missingCodes, 'codes never reached').toEqual([]);
    expect(missingKinds, 'node kinds never reached').toEqual([]);
  });
});
