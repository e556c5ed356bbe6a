// Turns the parser's concrete tree into the AST of ast.ts, and the lexer's and parser's errors into ranged diagnostics.
// Defensive by design: after error recovery any child may be missing and inserted tokens carry no offsets,
// so every access checks, and a missing expression becomes an `error` node.
// Pure: imports only chevrotain types and sibling modules.

import type { CstElement, CstNode, IRecognitionException, IToken } from 'chevrotain';
import type * as A from './ast';
import type { Diagnostic } from './diagnostics';
import { LineIndex } from './lineIndex';

type Children = Record<string, CstElement[] | undefined>;

function isToken(e: CstElement | undefined): e is IToken {
  return !!e && (e as IToken).image !== undefined;
}

function isUsable(tok: IToken | undefined): tok is IToken {
  return !!tok && !tok.isInsertedInRecovery && Number.isFinite(tok.startOffset);
}

/** Builds the AST; collects semantic-free construction errors (chained comparisons, bad numbers). */
export class AstBuilder {
  readonly diagnostics: Diagnostic[] = [];

  constructor(private readonly lines: LineIndex) {}

  // ---------------------------------------------------------------- ranges

  private tokRange(tok: IToken): A.SourceRange {
    const start = tok.startOffset;
    const end = (tok.endOffset ?? tok.startOffset) + 1;
    return this.lines.range(start, end);
  }

  /** The range covered by a node's usable tokens, or null if none (a fully recovered node). */
  private nodeRange(node: CstNode | undefined): A.SourceRange | null {
    if (!node) return null;
    const loc = node.location;
    if (loc && Number.isFinite(loc.startOffset) && Number.isFinite(loc.endOffset ?? NaN)) {
      return this.lines.range(loc.startOffset, (loc.endOffset as number) + 1);
    }
    // Fallback: scan the children for the first and last usable token.
    let lo = Infinity;
    let hi = -Infinity;
    const scan = (n: CstNode): void => {
      for (const list of Object.values(n.children)) {
        for (const c of list ?? []) {
          if (isToken(c)) {
            if (isUsable(c)) {
              lo = Math.min(lo, c.startOffset);
              hi = Math.max(hi, (c.endOffset ?? c.startOffset) + 1);
            }
          } else scan(c);
        }
      }
    };
    scan(node);
    return lo <= hi ? this.lines.range(lo, hi) : null;
  }

  /** The smallest range covering both; a placeholder range (from a fully recovered node) is ignored. */
  private span(a: A.SourceRange, b: A.SourceRange): A.SourceRange {
    if (a === this.fallback) return b;
    if (b === this.fallback) return a;
    return {
      start: a.start.offset <= b.start.offset ? a.start : b.start,
      end: a.end.offset >= b.end.offset ? a.end : b.end,
    };
  }

  private readonly fallback: A.SourceRange = { start: { offset: 0, line: 1, column: 1 }, end: { offset: 0, line: 1, column: 1 } };

  // ---------------------------------------------------------------- helpers

  private tok(ch: Children, name: string, i = 0): IToken | undefined {
    const e = ch[name]?.[i];
    return isToken(e) && isUsable(e) ? e : undefined;
  }

  private toks(ch: Children, name: string): IToken[] {
    return (ch[name] ?? []).filter((e): e is IToken => isToken(e) && isUsable(e));
  }

  private node(ch: Children, name: string, i = 0): CstNode | undefined {
    const e = ch[name]?.[i];
    return e && !isToken(e) ? (e as CstNode) : undefined;
  }

  private nodes(ch: Children, name: string): CstNode[] {
    return (ch[name] ?? []).filter((e): e is CstNode => !isToken(e));
  }

  private ident(tok: IToken | undefined): A.Ident | null {
    return tok ? { name: tok.image, range: this.tokRange(tok) } : null;
  }

  private errorExpr(range: A.SourceRange | null): A.ErrorExpr {
    return { kind: 'error', range: range ?? this.fallback };
  }

  // ---------------------------------------------------------------- program

  program(cst: CstNode): A.Program {
    const decls: A.Decl[] = [];
    for (const d of this.nodes(cst.children, 'declaration')) {
      const inner = Object.values(d.children)[0]?.[0];
      if (!inner || isToken(inner)) continue;
      const decl = this.decl(inner as CstNode);
      if (decl) decls.push(decl);
    }
    return { kind: 'program', decls, range: this.lines.range(0, this.lines.length) };
  }

  private decl(n: CstNode): A.Decl | null {
    const ch = n.children;
    const range = this.nodeRange(n);
    if (!range) return null;
    switch (n.name) {
      case 'gridDecl': {
        const dims = this.tok(ch, 'GridDims');
        if (!dims) return null;
        return { kind: 'grid', dims: parseInt(dims.image, 10), dimsRange: this.tokRange(dims), range };
      }
      case 'spacingDecl': {
        const value = this.signed(this.node(ch, 'signedNumber'));
        return value ? { kind: 'spacing', value, range } : null;
      }
      case 'boundaryDecl': {
        const field = this.ident(this.tok(ch, 'Identifier'));
        let spec: A.BoundarySpec | null = null;
        const r = this.tok(ch, 'Reflect');
        const p = this.tok(ch, 'Periodic');
        const f = this.tok(ch, 'Fixed');
        if (r) spec = { kind: 'reflect', range: this.tokRange(r) };
        else if (p) spec = { kind: 'periodic', range: this.tokRange(p) };
        else if (f) {
          const v = this.signed(this.node(ch, 'signedNumber'));
          if (v) spec = { kind: 'fixed', value: v.value, range: this.span(this.tokRange(f), v.range) };
        }
        return spec ? { kind: 'boundary', field, spec, range } : null;
      }
      case 'paramDecl':
      case 'stepDecl': {
        const name = this.ident(this.tok(ch, 'Identifier'));
        const value = this.signed(this.node(ch, 'signedNumber'));
        if (!name || !value) return null;
        const bounds = this.rangeLit(this.node(ch, 'rangeLit'));
        return n.name === 'paramDecl'
          ? { kind: 'param', name, value, bounds, range }
          : { kind: 'step', name, value, bounds, range };
      }
      case 'stepsDecl': {
        const count = this.signed(this.node(ch, 'signedNumber'));
        return count ? { kind: 'steps', count, range } : null;
      }
      case 'untilDecl': {
        const variable = this.ident(this.tok(ch, 'Identifier'));
        const time = this.signed(this.node(ch, 'signedNumber'));
        return variable && time ? { kind: 'until', variable, time, range } : null;
      }
      case 'fieldDecl': {
        const name = this.ident(this.tok(ch, 'Identifier'));
        if (!name) return null;
        const img = this.tok(ch, 'ImageKw');
        const exprNode = this.node(ch, 'expression');
        let init: A.FieldInit | null = null;
        if (img) init = { kind: 'image', range: this.tokRange(img) };
        else if (exprNode) {
          const expr = this.expression(exprNode);
          init = { kind: 'expr', expr, range: expr.range };
        }
        return { kind: 'field', name, init, range };
      }
      case 'functionDecl': {
        const kw = this.tok(ch, 'Diffusivity') ?? this.tok(ch, 'Fn');
        const name = this.ident(this.tok(ch, 'name'));
        if (!kw || !name) return null;
        const params = this.toks(ch, 'params').map((t) => this.ident(t) as A.Ident);
        const body = this.expression(this.node(ch, 'expression'), range);
        return { kind: 'function', diffusivity: kw.tokenType.name === 'Diffusivity', keywordRange: this.tokRange(kw), name, params, body, range };
      }
      case 'letDecl': {
        const name = this.ident(this.tok(ch, 'Identifier'));
        if (!name) return null;
        return { kind: 'let', name, expr: this.expression(this.node(ch, 'expression'), range), range };
      }
      case 'neighboursDecl': {
        const name = this.ident(this.tok(ch, 'Identifier'));
        if (!name) return null;
        const offsets: A.OffsetLit[] = [];
        for (const o of this.nodes(ch, 'offsetList')) {
          const r = this.nodeRange(o);
          if (!r) continue;
          offsets.push({ components: this.nodes(o.children, 'expression').map((e) => this.expression(e, r)), range: r });
        }
        return { kind: 'neighbours', name, offsets, range };
      }
      case 'updateDecl': {
        const field = this.ident(this.tok(ch, 'Identifier'));
        if (!field) return null;
        return { kind: 'update', field, expr: this.expression(this.node(ch, 'expression'), range), range };
      }
      default:
        return null;
    }
  }

  private signed(n: CstNode | undefined): A.NumberLit | null {
    if (!n) return null;
    const num = this.tok(n.children, 'NumberLit');
    if (!num) return null;
    const sign = this.tok(n.children, 'AddOp');
    const v = Number(num.image) * (sign?.image === '-' ? -1 : 1);
    const range = sign ? this.span(this.tokRange(sign), this.tokRange(num)) : this.tokRange(num);
    return { value: v, range };
  }

  private rangeLit(n: CstNode | undefined): A.RangeLit | null {
    if (!n) return null;
    const lo = this.signed(this.node(n.children, 'lo'));
    const hi = this.signed(this.node(n.children, 'hi'));
    const range = this.nodeRange(n);
    return lo && hi && range ? { lo, hi, range } : null;
  }

  // ---------------------------------------------------------------- expressions

  /** Converts an `expression` node; a missing node becomes an error expression at `where`. */
  expression(n: CstNode | undefined, where: A.SourceRange | null = null): A.Expr {
    if (!n) return this.errorExpr(where);
    const range = this.nodeRange(n);
    if (!range) return this.errorExpr(where);
    try {
      return this.exprNode(n) ?? this.errorExpr(range);
    } catch {
      // A recovered tree can be shaped in ways no rule produces; never let that escape.
      return this.errorExpr(range);
    }
  }

  private exprNode(n: CstNode): A.Expr | null {
    const ch = n.children;
    switch (n.name) {
      case 'expression':
        return this.sub(ch, 'orExpr');
      case 'orExpr':
      case 'andExpr':
      case 'addExpr':
      case 'mulExpr':
        return this.leftAssoc(n);
      case 'cmpExpr': {
        const e = this.leftAssoc(n);
        const ops = this.toks(ch, 'ops');
        if (ops.length > 1) {
          this.diagnostics.push({
            range: this.tokRange(ops[1]),
            severity: 'error',
            code: 'comparison-chain',
            message: 'Comparisons do not chain: write `a < b and b < c`.',
          });
        }
        return e;
      }
      case 'notExpr': {
        const not = this.tok(ch, 'Not');
        if (not) {
          const operand = this.sub(ch, 'notExpr') ?? this.errorExpr(this.nodeRange(n));
          return { kind: 'unary', op: 'not', operand, range: this.span(this.tokRange(not), operand.range) };
        }
        return this.sub(ch, 'cmpExpr');
      }
      case 'unaryExpr': {
        const op = this.tok(ch, 'AddOp');
        if (op) {
          const operand = this.sub(ch, 'unaryExpr') ?? this.errorExpr(this.nodeRange(n));
          return { kind: 'unary', op: op.image as '-' | '+', operand, range: this.span(this.tokRange(op), operand.range) };
        }
        return this.sub(ch, 'powExpr');
      }
      case 'powExpr': {
        const base = this.sub(ch, 'primary');
        const caret = this.tok(ch, 'Caret');
        if (!base) return null;
        if (!caret) return base;
        const exp = this.sub(ch, 'unaryExpr') ?? this.errorExpr(this.tokRange(caret));
        return { kind: 'binary', op: '^', left: base, right: exp, opRange: this.tokRange(caret), range: this.span(base.range, exp.range) };
      }
      case 'primary': {
        const num = this.tok(ch, 'NumberLit');
        if (num) return { kind: 'number', value: Number(num.image), range: this.tokRange(num) };
        for (const k of ['parenExpr', 'ifExpr', 'reduceOrMinMax', 'nameExpr']) {
          const c = this.node(ch, k);
          if (c) return this.exprNode(c);
        }
        return null;
      }
      case 'parenExpr': {
        const inner = this.sub(ch, 'expression');
        const range = this.nodeRange(n);
        if (!inner || !range) return inner;
        // Keep the parenthesised range so diagnostics underline what the user wrote.
        return { ...inner, range } as A.Expr;
      }
      case 'ifExpr': {
        const range = this.nodeRange(n)!;
        return {
          kind: 'if',
          cond: this.expression(this.node(ch, 'cond'), range),
          then: this.expression(this.node(ch, 'then'), range),
          otherwise: this.expression(this.node(ch, 'otherwise'), range),
          range,
        };
      }
      case 'reduceOrMinMax': {
        const range = this.nodeRange(n)!;
        const op = this.tok(ch, 'op');
        if (!op) return null;
        const args = this.node(ch, 'callArgs');
        if (args) {
          const r = this.callArgs(args, range);
          return { kind: 'call', callee: op.image, calleeRange: this.tokRange(op), args: r, range };
        }
        const variable = this.tok(ch, 'variable');
        const set = this.tok(ch, 'set');
        if (!variable || !set) return this.errorExpr(range);
        return {
          kind: 'reduce',
          op: op.image as A.ReduceOp,
          variable: variable.image,
          variableRange: this.tokRange(variable),
          set: set.image,
          setRange: this.tokRange(set),
          body: this.expression(this.node(ch, 'body'), range),
          range,
        };
      }
      case 'nameExpr': {
        const id = this.tok(ch, 'Identifier');
        if (!id) return null;
        const range = this.nodeRange(n)!;
        const idRange = this.tokRange(id);
        const args = this.node(ch, 'callArgs');
        if (args) return { kind: 'call', callee: id.image, calleeRange: idRange, args: this.callArgs(args, range), range };
        const primed = !!this.tok(ch, 'Prime');
        const offNode = this.node(ch, 'offsetList');
        if (!primed && !offNode) return { kind: 'name', name: id.image, range: idRange };
        return { kind: 'access', target: id.image, targetRange: idRange, offset: offNode ? this.offset(offNode) : null, primed, range };
      }
      default:
        return null;
    }
  }

  private sub(ch: Children, name: string): A.Expr | null {
    const n = this.node(ch, name);
    return n ? this.exprNode(n) : null;
  }

  private leftAssoc(n: CstNode): A.Expr | null {
    const operands = this.nodes(n.children, 'operands');
    const ops = (n.children['ops'] ?? []).filter(isToken);
    if (operands.length === 0) return null;
    let left = this.exprNode(operands[0]) ?? this.errorExpr(this.nodeRange(operands[0]));
    for (let i = 1; i < operands.length; i++) {
      const opTok = ops[i - 1];
      const right = this.exprNode(operands[i]) ?? this.errorExpr(this.nodeRange(operands[i]) ?? left.range);
      if (!opTok || !isUsable(opTok)) {
        left = this.errorExpr(this.span(left.range, right.range));
        continue;
      }
      left = { kind: 'binary', op: opTok.image as A.BinaryOp, left, right, opRange: this.tokRange(opTok), range: this.span(left.range, right.range) };
    }
    return left;
  }

  private callArgs(n: CstNode, where: A.SourceRange): A.Expr[] {
    return this.nodes(n.children, 'expression').map((e) => this.expression(e, where));
  }

  private offset(n: CstNode): A.OffsetSpec {
    const range = this.nodeRange(n) ?? this.fallback;
    const comps = this.nodes(n.children, 'expression').map((e) => this.expression(e, range));
    if (comps.length === 1 && comps[0].kind === 'name') return { kind: 'variable', name: comps[0].name, range };
    return { kind: 'literal', components: comps, range };
  }

  // ---------------------------------------------------------------- errors

  lexError(offset: number, length: number, text: string): void {
    const ch = text.slice(offset, offset + Math.max(1, length));
    this.diagnostics.push({
      range: this.lines.range(offset, offset + Math.max(1, length)),
      severity: 'error',
      code: 'lex-error',
      message: `Unexpected character ${JSON.stringify(ch)}: not part of the notation.`,
    });
  }

  parseError(e: IRecognitionException): void {
    const tok = e.token;
    let range: A.SourceRange;
    if (isUsable(tok)) range = this.tokRange(tok);
    else {
      // At end of input (or on an inserted token) point at the previous real token's end.
      const prev = (e as IRecognitionException & { previousToken?: IToken }).previousToken;
      const at = prev && isUsable(prev) ? (prev.endOffset ?? prev.startOffset) + 1 : this.lines.length;
      range = this.lines.range(at, at);
    }
    this.diagnostics.push({ range, severity: 'error', code: 'syntax-error', message: describeParseError(e) });
  }
}

const TOKEN_WORDS: Record<string, string> = {
  Identifier: 'a name', NumberLit: 'a number', GridDims: '`1d` or `2d`', Equals: '`=`', Prime: '`\'`',
  LParen: '`(`', RParen: '`)`', LBracket: '`[`', RBracket: '`]`', LBrace: '`{`', RBrace: '`}`', Comma: '`,`', Colon: '`:`',
  AddOp: '`+` or `-`', MulOp: '`*` or `/`', Caret: '`^`', Comparison: 'a comparison', In: '`in`', Then: '`then`', Else: '`else`',
  Reflect: '`reflect`', Periodic: '`periodic`', Fixed: '`fixed`', ImageKw: '`image`',
};

/** Our own wording for chevrotain's recognition errors: what was found, and what would fit. */
function describeParseError(e: IRecognitionException): string {
  const found = e.token && isUsable(e.token) ? `\`${e.token.image}\`` : 'the end of the file';
  const m = /-->\s*(\w+)\s*<--/.exec(e.message);
  if (e.name === 'MismatchedTokenException' && m) {
    return `Expected ${TOKEN_WORDS[m[1]] ?? m[1]} here, found ${found}.`;
  }
  if (e.name === 'NoViableAltException') {
    if (e.context?.ruleStack?.includes('expression') || /NumberLit/.test(e.message)) return `Expected an expression here, found ${found}.`;
    return `Expected a declaration (grid, spacing, boundary, param, step, steps, until, field, diffusivity, fn, let, neighbours, or an update \`u' = ...\`), found ${found}.`;
  }
  if (e.name === 'NotAllInputParsedException') return `Unexpected ${found}: a declaration cannot start here.`;
  if (e.name === 'EarlyExitException') return `Expected at least one item here, found ${found}.`;
  return `Unexpected ${found}.`;
}
