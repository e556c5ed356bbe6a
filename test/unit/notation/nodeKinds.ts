// The AST's node kinds that the fuzz campaigns must reach (contracts.md §7), in one list shared by the unit fuzz test
// and the hardening campaign. `test/unit/notation/nodeKinds.test.ts` reads src/notation/ast.ts and fails when a
// kind is added there but not here, so the coverage requirement grows with the notation.

import { walkExpr, type Decl, type Expr } from '../../../src/notation/ast';

export const DECL_KINDS = ['grid', 'spacing', 'boundary', 'param', 'step', 'steps', 'until', 'untilChange', 'field', 'function', 'let', 'neighbours', 'update'] as const;
export const EXPR_KINDS = ['number', 'name', 'access', 'unary', 'binary', 'if', 'reduce', 'call', 'error'] as const;
/** Kinds of parts inside a node (offsets, boundary specs, field initialisers, the program): reached with their parent. */
export const PART_KINDS = ['literal', 'variable', 'reflect', 'periodic', 'fixed', 'image', 'expr', 'program'] as const;

/** `decl:KIND` and `expr:KIND`, the names the campaigns record. */
export const ALL_NODE_KINDS: readonly string[] = [...DECL_KINDS.map((k) => `decl:${k}`), ...EXPR_KINDS.map((k) => `expr:${k}`)];

/** Adds the `decl:KIND` and `expr:KIND` names of every node of a parsed program to `into` (what the campaigns reached). */
export function nodeKinds(decls: readonly Decl[], into: Set<string>): void {
  const expr = (e: Expr) => walkExpr(e, (x) => into.add(`expr:${x.kind}`));
  for (const d of decls) {
    into.add(`decl:${d.kind}`);
    if (d.kind === 'field' && d.init?.kind === 'expr') expr(d.init.expr);
    if (d.kind === 'function') expr(d.body);
    if (d.kind === 'let' || d.kind === 'update') expr(d.expr);
    if (d.kind === 'neighbours') for (const o of d.offsets) o.components.forEach(expr);
  }
}
