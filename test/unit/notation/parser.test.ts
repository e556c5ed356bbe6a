// Parser tests as data: valid inputs and the AST they must give, printed compactly (precedence per contracts.md §1).

import { describe, expect, it } from 'vitest';
import { parse } from '../../../src/notation';
import type { UpdateDecl } from '../../../src/notation/ast';
import { printDecl, printExpr, printRange } from './printAst';

/** Parses `u' = <expr>` and prints the expression. */
function expr(src: string): string {
  const r = parse(`u' = ${src}`);
  expect(r.diagnostics, `diagnostics for ${src}`).toEqual([]);
  return printExpr((r.program.decls[0] as UpdateDecl).expr);
}

describe('expressions: precedence and associativity (contracts.md §1)', () => {
  const cases: [string, string][] = [
    ['1 + 2 * 3', '(1 + (2 * 3))'],
    ['1 - 2 - 3', '((1 - 2) - 3)'],
    ['8 / 4 / 2', '((8 / 4) / 2)'],
    ['2 ^ 3 ^ 2', '(2 ^ (3 ^ 2))'],
    ['-s^2', '(- (s ^ 2))'],
    ['2^-1', '(2 ^ (- 1))'],
    ['-a * b', '((- a) * b)'],
    ['a + b < c * d', '((a + b) < (c * d))'],
    ['not a < b', '(not (a < b))'],
    ['a and b or c and d', '((a and b) or (c and d))'],
    ['not a and b', '((not a) and b)'],
    ['a <= b and c != d', '((a <= b) and (c != d))'],
    ['if a > 0 then 1 else 2 + 3', '(if (a > 0) 1 (2 + 3))'],
    ['1 + if a then b else c * 2', '(1 + (if a b (c * 2)))'],
    ['u + dt * sum n in N4: g(w[n] - w) * (u[n] - u)', '(u + (dt * (sum n N4 (g((w[n] - w)) * (u[n] - u)))))'],
    ['max n in N8: u[n]', '(max n N8 u[n])'],
    ['min(a, b) + max(1, 2)', '(min(a, b) + max(1, 2))'],
    ['u[1,0] + u[-1,0] + u[0,-1]', '((u[1,0] + u[(- 1),0]) + u[0,(- 1)])'],
    ["u + dt * v'", "(u + (dt * v'))"],
    ['1e-3 * .5 + 2.', '((0.001 * 0.5) + 2)'],
    ['clamp(u, 0, 1)', 'clamp(u, 0, 1)'],
    ['len(n)', 'len(n)'],
    ['(a + b) * c', '((a + b) * c)'],
    ['+a', '(+ a)'],
  ];
  for (const [src, want] of cases) it(src, () => expect(expr(src)).toBe(want));
});

describe('declarations', () => {
  it('parses the notation as printed in the issue, declaration by declaration', () => {
    const src = [
      '# Calm flat regions',
      'grid 2d',
      'spacing 1',
      'boundary reflect',
      'boundary v periodic',
      'boundary w fixed -0.5',
      'param K = 0.06 in [0.005, 0.5]',
      'param sigma = 1 in [0, 3]',
      'step dt = 0.2',
      'steps 60',
      'until t = 12',
      'field u = image',
      'field v = 0',
      'field w = x / 10 + y',
      'diffusivity g(s) = 1 / (1 + (s / K)^2)',
      'fn soft(a) = a / (1 + abs(a))',
      'fn two(a, b) = a * b',
      'let w = blur(u, sigma)',
      'neighbours diag = {[1,1], [-1,-1], [1,-1], [-1,1]}',
      "u' = u + dt * sum n in N4: g(w[n] - w) * (u[n] - u)",
    ].join('\n');
    const r = parse(src);
    expect(r.diagnostics).toEqual([]);
    expect(r.program.decls.map(printDecl)).toEqual([
      'grid 2',
      'spacing 1',
      'boundary reflect',
      'boundary v periodic',
      'boundary w fixed -0.5',
      'param K 0.06 [0.005,0.5]',
      'param sigma 1 [0,3]',
      'step dt 0.2',
      'steps 60',
      'until t 12',
      'field u image',
      'field v 0',
      'field w ((x / 10) + y)',
      'diffusivity g(s) (1 / (1 + ((s / K) ^ 2)))',
      'fn soft(a) (a / (1 + abs(a)))',
      'fn two(a,b) (a * b)',
      'let w blur(u, sigma)',
      'neighbours diag {[1,1] [(- 1),(- 1)] [1,(- 1)] [(- 1),1]}',
      "u' (u + (dt * (sum n N4 (g((w[n] - w)) * (u[n] - u)))))",
    ]);
  });

  it('reads named inputs and channels: `image "mask"`, `image.red`, `image "guide".luma`, with exact ranges', () => {
    const r = parse('field m = image "mask"\nfield r = image.red\nfield g = image "guide".luma\nfield s = image . blue');
    expect(r.diagnostics).toEqual([]);
    expect(r.program.decls.map(printDecl)).toEqual(['field m image "mask"', 'field r image.red', 'field g image "guide".luma', 'field s image.blue']);
    const g = r.program.decls[2];
    if (g.kind !== 'field' || g.init?.kind !== 'image') throw new Error('expected an image field');
    // The input's range covers the quotes; the whole initialiser runs from `image` to the channel.
    expect([g.init.input?.range.start.column, g.init.input?.range.end.column]).toEqual([17, 24]);
    expect([g.init.channel?.range.start.column, g.init.channel?.range.end.column]).toEqual([25, 29]);
    expect([g.init.range.start.column, g.init.range.end.column, g.range.end.column]).toEqual([11, 29, 29]);
    // `.5` is still a number, and a string cannot span lines.
    expect(parse('field v = .5').diagnostics).toEqual([]);
    expect(parse('field m = image "ma\nsk"').diagnostics.map(d => d.code)).toContain('lex-error');
  });

  it('accepts `neighbors` as an alias and step ranges', () => {
    const r = parse('neighbors d = {[1]}\nstep dt = 0.1 in [0.01, 0.5]');
    expect(r.diagnostics).toEqual([]);
    expect(r.program.decls.map(printDecl)).toEqual(['neighbours d {[1]}', 'step dt 0.1 [0.01,0.5]']);
  });

  it('lets expressions span lines (newlines are not significant)', () => {
    const r = parse("u' = u +\n  dt *\n  2\nv' = v");
    expect(r.diagnostics).toEqual([]);
    expect(r.program.decls.map(printDecl)).toEqual(["u' (u + (dt * 2))", "v' v"]);
  });

  it('gives ranges in 1-based lines and UTF-16 columns, end exclusive', () => {
    const r = parse("# é comment\nparam K = 0.5\nu' = K * 2");
    const p = r.program.decls[0];
    expect(p.kind).toBe('param');
    expect(printRange(p.range)).toBe('2:1-2:14');
    const u = r.program.decls[1] as UpdateDecl;
    expect(printRange(u.field.range)).toBe('3:1-3:2');
    expect(printRange(u.expr.range)).toBe('3:6-3:11');
  });

  it('keeps comment-only and empty files error-free at the syntax level', () => {
    expect(parse('').diagnostics).toEqual([]);
    expect(parse('# nothing here\n\n').diagnostics).toEqual([]);
  });
});

describe('fault tolerance', () => {
  it('reports several syntax errors in one file and keeps the good declarations', () => {
    const r = parse("grid 2d\nparam = 3\nu' = u + * 2\nsteps 10\nfield v = 1\nv' = (v");
    const errs = r.diagnostics.filter((d) => d.code === 'syntax-error');
    expect(errs.length).toBeGreaterThanOrEqual(3);
    const kinds = r.program.decls.map((d) => d.kind);
    expect(kinds).toContain('grid');
    expect(kinds).toContain('steps');
    expect(kinds).toContain('field');
    for (const d of r.diagnostics) {
      expect(d.range.start.line).toBeGreaterThanOrEqual(1);
      expect(d.range.start.column).toBeGreaterThanOrEqual(1);
    }
  });

  it('points at the offending token', () => {
    const r = parse("u' = u + * 2");
    expect(r.diagnostics.map((d) => [d.code, printRange(d.range)])).toEqual([['syntax-error', '1:10-1:11']]);
  });

  it('reports a character outside the notation', () => {
    const r = parse("u' = u $ 2");
    expect(r.diagnostics[0].code).toBe('lex-error');
    expect(printRange(r.diagnostics[0].range)).toBe('1:8-1:9');
  });

  it('puts an error at the end of the file for an unclosed parenthesis', () => {
    const r = parse("u' = (u");
    expect(r.diagnostics.map((d) => [d.code, printRange(d.range)])).toEqual([['syntax-error', '1:8-1:8']]);
  });
});
