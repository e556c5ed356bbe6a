// A compact, parenthesised printer for expressions and declarations, so AST tests read as one line each.

import type * as A from '../../../src/notation/ast';

export function printExpr(e: A.Expr): string {
  switch (e.kind) {
    case 'number': return String(e.value);
    case 'name': return e.name;
    case 'access': {
      const off = e.offset ? (e.offset.kind === 'variable' ? `[${e.offset.name}]` : `[${e.offset.components.map(printExpr).join(',')}]`) : '';
      return `${e.target}${e.primed ? "'" : ''}${off}`;
    }
    case 'unary': return `(${e.op} ${printExpr(e.operand)})`;
    case 'binary': return `(${printExpr(e.left)} ${e.op} ${printExpr(e.right)})`;
    case 'if': return `(if ${printExpr(e.cond)} ${printExpr(e.then)} ${printExpr(e.otherwise)})`;
    case 'reduce': return `(${e.op} ${e.variable} ${e.set} ${printExpr(e.body)})`;
    case 'call': return `${e.callee}(${e.args.map(printExpr).join(', ')})`;
    case 'error': return '<error>';
  }
}

export function printDecl(d: A.Decl): string {
  switch (d.kind) {
    case 'grid': return `grid ${d.dims}`;
    case 'spacing': return `spacing ${d.value.value}`;
    case 'boundary': return `boundary ${d.field ? d.field.name + ' ' : ''}${d.spec.kind}${d.spec.kind === 'fixed' ? ' ' + d.spec.value : ''}`;
    case 'param': return `param ${d.name.name} ${d.value.value}${d.bounds ? ` [${d.bounds.lo.value},${d.bounds.hi.value}]` : ''}`;
    case 'step': return `step ${d.name.name} ${d.value.value}${d.bounds ? ` [${d.bounds.lo.value},${d.bounds.hi.value}]` : ''}`;
    case 'steps': return `steps ${d.count.value}`;
    case 'until': return `until ${d.variable.name} ${d.time.value}`;
    case 'untilChange': return `until ${d.variable.name} < ${d.tolerance.value}`;
    case 'field': return `field ${d.name.name} ${d.init ? (d.init.kind === 'image' ? 'image' : printExpr(d.init.expr)) : '<none>'}`;
    case 'function': return `${d.diffusivity ? 'diffusivity' : 'fn'} ${d.name.name}(${d.params.map((p) => p.name).join(',')}) ${printExpr(d.body)}`;
    case 'let': return `let ${d.name.name} ${printExpr(d.expr)}`;
    case 'neighbours': return `neighbours ${d.name.name} {${d.offsets.map((o) => `[${o.components.map(printExpr).join(',')}]`).join(' ')}}`;
    case 'update': return `${d.field.name}' ${printExpr(d.expr)}`;
  }
}

/** `line:col-line:col` with 1-based positions and an exclusive end. */
export function printRange(r: A.SourceRange): string {
  return `${r.start.line}:${r.start.column}-${r.end.line}:${r.end.column}`;
}
