// The grammar of the notation, as a chevrotain parser whose rules build the AST directly (embedded actions).
// Error recovery is on: broken input yields a partial tree, with `error` nodes where expressions could not be read.
// Pure: imports only chevrotain, the token table and sibling modules.
//
// Design note: a concrete-syntax-tree parser plus a visitor keeps the grammar free of semantics, but for a
// 2,000-line file it allocated ten CST nodes per operand (one per precedence level), all alive until the end,
// and garbage collection made parse + check 10-20x slower than the keystroke budget. So the grammar reads each
// expression as a flat list of operands and operators, and precedence climbing (`climb`) builds the tree.
// The actions only build nodes and ranges; every check lives in checker.ts.

import { EmbeddedActionsParser, type IOrAlt, type IRecognitionException, type IToken, type TokenType } from 'chevrotain';
import type * as A from './ast';
import type { Diagnostic } from './diagnostics';
import { LineIndex } from './lineIndex';
import * as T from './tokens';

/** Binding strength of binary operators (contracts.md §1): higher binds tighter. */
const BINARY_PREC: Record<string, number> = {
  or: 1, and: 2, '<': 4, '<=': 4, '>': 4, '>=': 4, '==': 4, '!=': 4, '+': 5, '-': 5, '*': 6, '/': 6,
};
/** Prefix operators: `not` sits between `and` and comparisons; unary minus binds tighter than `*` but looser than `^`. */
const PREFIX_PREC: Record<string, number> = { not: 3, '-': 7, '+': 7 };

/** An operand with prefix operators; an operand without any is just its expression (no wrapper is allocated). */
interface Prefixed {
  readonly kind: '$prefixed';
  readonly prefixes: IToken[];
  readonly base: A.Expr;
}
type Operand = A.Expr | Prefixed;

const PLACEHOLDER: A.SourceRange = { start: { offset: 0, line: 1, column: 1 }, end: { offset: 0, line: 1, column: 1 } };

function usable(tok: IToken | undefined): tok is IToken {
  return !!tok && !tok.isInsertedInRecovery && Number.isFinite(tok.startOffset);
}

class FluxelParser extends EmbeddedActionsParser {
  /** Set for each parse: maps offsets to lines and columns. */
  lines = new LineIndex('');
  /** Construction diagnostics (chained comparisons); syntax errors come from `errors`. */
  notes: Diagnostic[] = [];
  /** Parenthesised expressions, so `(a < b) < c` is not reported as a chain. */
  private parenthesised = new WeakSet<A.Expr>();

  constructor(recovery: boolean) {
    super(T.allTokens, { recoveryEnabled: recovery, maxLookahead: 3 });
    this.performSelfAnalysis();
  }

  // ---------------------------------------------------------------- ranges

  private tr(tok: IToken | undefined): A.SourceRange {
    if (!usable(tok)) return this.here();
    return this.lines.range(tok.startOffset, tok.startOffset + tok.image.length);
  }

  /** A zero-width range at the next real token (or the end of the text), for things that are missing. */
  private here(): A.SourceRange {
    const next = this.LA(1);
    const at = usable(next) ? next.startOffset : this.lines.length;
    return this.lines.range(at, at);
  }

  private span(a: A.SourceRange, b: A.SourceRange): A.SourceRange {
    if (a === PLACEHOLDER) return b;
    if (b === PLACEHOLDER) return a;
    return { start: a.start.offset <= b.start.offset ? a.start : b.start, end: a.end.offset >= b.end.offset ? a.end : b.end };
  }

  private errorAt(e: IRecognitionException): A.ErrorExpr {
    return { kind: 'error', range: usable(e.token) ? this.tr(e.token) : PLACEHOLDER };
  }

  private ident(tok: IToken): A.Ident | null {
    return usable(tok) ? { name: tok.image, range: this.tr(tok) } : null;
  }

  // ---------------------------------------------------------------- declarations

  /** Declarations read so far. Kept on the parser, so they survive when recovery abandons the `program` rule itself. */
  collected: A.Decl[] = [];

  program = this.RULE('program', (): void => {
    this.MANY(() => {
      const d = this.SUBRULE(this.declaration);
      this.ACTION(() => {
        if (d) this.collected.push(d);
      });
    });
  });

  declaration = this.RULE('declaration', (): A.Decl | null => this.OR([
    { ALT: () => this.SUBRULE(this.gridDecl) },
    { ALT: () => this.SUBRULE(this.spacingDecl) },
    { ALT: () => this.SUBRULE(this.boundaryDecl) },
    { ALT: () => this.SUBRULE(this.valueDecl) },
    { ALT: () => this.SUBRULE(this.stepsDecl) },
    { ALT: () => this.SUBRULE(this.untilDecl) },
    { ALT: () => this.SUBRULE(this.fieldDecl) },
    { ALT: () => this.SUBRULE(this.functionDecl) },
    { ALT: () => this.SUBRULE(this.letDecl) },
    { ALT: () => this.SUBRULE(this.neighboursDecl) },
    { ALT: () => this.SUBRULE(this.updateDecl) },
  ]), { recoveryValueFunc: () => null });

  gridDecl = this.RULE('gridDecl', (): A.Decl | null => {
    const kw = this.CONSUME(T.Grid);
    const dims = this.CONSUME(T.GridDims);
    return this.ACTION(() => usable(dims)
      ? { kind: 'grid', dims: parseInt(dims.image, 10), dimsRange: this.tr(dims), range: this.span(this.tr(kw), this.tr(dims)) }
      : null);
  }, { recoveryValueFunc: () => null });

  spacingDecl = this.RULE('spacingDecl', (): A.Decl | null => {
    const kw = this.CONSUME(T.Spacing);
    const value = this.SUBRULE(this.signedNumber);
    return this.ACTION(() => value ? { kind: 'spacing', value, range: this.span(this.tr(kw), value.range) } : null);
  }, { recoveryValueFunc: () => null });

  boundaryDecl = this.RULE('boundaryDecl', (): A.Decl | null => {
    const kw = this.CONSUME(T.BoundaryKw);
    const field = this.OPTION(() => this.CONSUME(T.Identifier));
    const spec = this.OR([
      { ALT: () => { const t = this.CONSUME(T.Reflect); return this.ACTION((): A.BoundarySpec => ({ kind: 'reflect', range: this.tr(t) })); } },
      { ALT: () => { const t = this.CONSUME(T.Periodic); return this.ACTION((): A.BoundarySpec => ({ kind: 'periodic', range: this.tr(t) })); } },
      {
        ALT: () => {
          const t = this.CONSUME(T.Fixed);
          const v = this.SUBRULE(this.signedNumber);
          return this.ACTION((): A.BoundarySpec | null => v ? { kind: 'fixed', value: v.value, range: this.span(this.tr(t), v.range) } : null);
        },
      },
    ]);
    return this.ACTION(() => spec && usable(spec.range ? kw : undefined)
      ? { kind: 'boundary', field: field ? this.ident(field) : null, spec, range: this.span(this.tr(kw), spec.range) }
      : null);
  }, { recoveryValueFunc: () => null });

  /** `param NAME = NUMBER [in [LO, HI]]` and `step dt = NUMBER [in [LO, HI]]` share one shape. */
  valueDecl = this.RULE('valueDecl', (): A.Decl | null => {
    const kw = this.OR([
      { ALT: () => this.CONSUME(T.Param) },
      { ALT: () => this.CONSUME(T.Step) },
    ]);
    const name = this.CONSUME(T.Identifier);
    this.CONSUME(T.Equals);
    const value = this.SUBRULE(this.signedNumber);
    const bounds = this.OPTION(() => {
      this.CONSUME(T.In);
      return this.SUBRULE(this.rangeLit);
    });
    return this.ACTION(() => {
      const id = this.ident(name);
      if (!id || !value || !usable(kw)) return null;
      const range = this.span(this.tr(kw), bounds?.range ?? value.range);
      const kind = kw.tokenType === T.Param ? 'param' : 'step';
      return { kind, name: id, value, bounds: bounds ?? null, range };
    });
  }, { recoveryValueFunc: () => null });

  rangeLit = this.RULE('rangeLit', (): A.RangeLit | null => {
    const open = this.CONSUME(T.LBracket);
    const lo = this.SUBRULE(this.signedNumber);
    this.CONSUME(T.Comma);
    const hi = this.SUBRULE2(this.signedNumber);
    const close = this.CONSUME(T.RBracket);
    return this.ACTION(() => lo && hi && usable(close) ? { lo, hi, range: this.span(this.tr(open), this.tr(close)) } : null);
  }, { recoveryValueFunc: () => null });

  stepsDecl = this.RULE('stepsDecl', (): A.Decl | null => {
    const kw = this.CONSUME(T.StepsKw);
    const count = this.SUBRULE(this.signedNumber);
    return this.ACTION(() => count ? { kind: 'steps', count, range: this.span(this.tr(kw), count.range) } : null);
  }, { recoveryValueFunc: () => null });

  untilDecl = this.RULE('untilDecl', (): A.Decl | null => {
    const kw = this.CONSUME(T.Until);
    const variable = this.CONSUME(T.Identifier);
    // `until t = T` or `until change < tol`.
    const less = this.OR([
      { ALT: () => { this.CONSUME(T.Equals); return false; } },
      { ALT: () => { this.CONSUME(T.Less); return true; } },
    ]);
    const value = this.SUBRULE(this.signedNumber);
    return this.ACTION(() => {
      const v = this.ident(variable);
      if (!v || !value) return null;
      const range = this.span(this.tr(kw), value.range);
      return less ? { kind: 'untilChange', variable: v, tolerance: value, range } : { kind: 'until', variable: v, time: value, range };
    });
  }, { recoveryValueFunc: () => null });

  // The initial value is optional in the grammar so that the checker can say precisely what is missing.
  fieldDecl = this.RULE('fieldDecl', (): A.Decl | null => {
    const kw = this.CONSUME(T.Field);
    const name = this.CONSUME(T.Identifier);
    const init = this.OPTION(() => {
      this.CONSUME(T.Equals);
      return this.OR([
        { ALT: () => { const t = this.CONSUME(T.ImageKw); return this.ACTION((): A.FieldInit => ({ kind: 'image', range: this.tr(t) })); } },
        { ALT: () => { const e = this.SUBRULE(this.expression); return this.ACTION((): A.FieldInit => ({ kind: 'expr', expr: e, range: e.range })); } },
      ]);
    });
    return this.ACTION(() => {
      const id = this.ident(name);
      if (!id) return null;
      return { kind: 'field', name: id, init: init ?? null, range: this.span(this.tr(kw), init ? init.range : id.range) };
    });
  }, { recoveryValueFunc: () => null });

  functionDecl = this.RULE('functionDecl', (): A.Decl | null => {
    const kw = this.OR([
      { ALT: () => this.CONSUME(T.Diffusivity) },
      { ALT: () => this.CONSUME(T.Fn) },
    ]);
    const name = this.CONSUME(T.Identifier);
    this.CONSUME(T.LParen);
    const params: IToken[] = [];
    this.MANY_SEP({ SEP: T.Comma, DEF: () => { params.push(this.CONSUME2(T.Identifier)); } });
    this.CONSUME(T.RParen);
    this.CONSUME(T.Equals);
    const body = this.SUBRULE(this.expression);
    return this.ACTION(() => {
      const id = this.ident(name);
      if (!id || !usable(kw)) return null;
      return {
        kind: 'function',
        diffusivity: kw.tokenType === T.Diffusivity,
        keywordRange: this.tr(kw),
        name: id,
        params: params.map((p) => this.ident(p)).filter((p): p is A.Ident => p !== null),
        body,
        range: this.span(this.tr(kw), body.range),
      };
    });
  }, { recoveryValueFunc: () => null });

  letDecl = this.RULE('letDecl', (): A.Decl | null => {
    const kw = this.CONSUME(T.Let);
    const name = this.CONSUME(T.Identifier);
    this.CONSUME(T.Equals);
    const expr = this.SUBRULE(this.expression);
    return this.ACTION(() => {
      const id = this.ident(name);
      return id ? { kind: 'let', name: id, expr, range: this.span(this.tr(kw), expr.range) } : null;
    });
  }, { recoveryValueFunc: () => null });

  neighboursDecl = this.RULE('neighboursDecl', (): A.Decl | null => {
    const kw = this.CONSUME(T.Neighbours);
    const name = this.CONSUME(T.Identifier);
    this.CONSUME(T.Equals);
    this.CONSUME(T.LBrace);
    const offsets: A.OffsetLit[] = [];
    this.MANY_SEP({
      SEP: T.Comma,
      DEF: () => {
        const o = this.SUBRULE(this.offsetList);
        this.ACTION(() => {
          if (o) offsets.push(o);
        });
      },
    });
    const close = this.CONSUME(T.RBrace);
    return this.ACTION(() => {
      const id = this.ident(name);
      return id ? { kind: 'neighbours', name: id, offsets, range: this.span(this.tr(kw), usable(close) ? this.tr(close) : id.range) } : null;
    });
  }, { recoveryValueFunc: () => null });

  /** `[e, e, ...]`: the components of one offset. */
  offsetList = this.RULE('offsetList', (): A.OffsetLit | null => {
    const open = this.CONSUME(T.LBracket);
    const comps: A.Expr[] = [];
    this.AT_LEAST_ONE_SEP({ SEP: T.Comma, DEF: () => { comps.push(this.SUBRULE(this.expression)); } });
    const close = this.CONSUME(T.RBracket);
    if (this.RECORDING_PHASE) return undefined as never;
    const last = comps[comps.length - 1];
    const end = usable(close) ? this.tr(close) : last ? last.range : this.tr(open);
    return { components: comps, range: this.span(this.tr(open), end) };
  }, { recoveryValueFunc: () => null });

  updateDecl = this.RULE('updateDecl', (): A.Decl | null => {
    const name = this.CONSUME(T.Identifier);
    this.CONSUME(T.Prime);
    this.CONSUME(T.Equals);
    const expr = this.SUBRULE(this.expression);
    return this.ACTION(() => {
      const id = this.ident(name);
      return id ? { kind: 'update', field: id, expr, range: this.span(id.range, expr.range) } : null;
    });
  }, { recoveryValueFunc: () => null });

  signedNumber = this.RULE('signedNumber', (): A.NumberLit | null => {
    const sign = this.OPTION(() => this.CONSUME(T.AddOp));
    const num = this.CONSUME(T.NumberLit);
    return this.ACTION(() => {
      if (!usable(num)) return null;
      const v = Number(num.image) * (sign?.image === '-' ? -1 : 1);
      return { value: v, range: sign && usable(sign) ? this.span(this.tr(sign), this.tr(num)) : this.tr(num) };
    });
  }, { recoveryValueFunc: () => null });

  // ---------------------------------------------------------------- expressions

  /** Operands separated by binary operators; the tree is built by precedence climbing. */
  expression = this.RULE('expression', (): A.Expr => {
    const first = this.SUBRULE(this.operand);
    // Most expressions are one operand: the lists are only allocated when an operator follows.
    let operands: Operand[] | null = null;
    let ops: IToken[] | null = null;
    this.MANY(() => {
      (ops ??= []).push(this.CONSUME(T.BinaryOp));
      (operands ??= [first]).push(this.SUBRULE2(this.operand));
    });
    if (this.RECORDING_PHASE) return undefined as never;
    return (operands && ops ? this.climbAll(operands, ops) : this.applyPrefixes(first, null));
  }, { recoveryValueFunc: (e) => this.errorAt(e) });

  /** Prefix operators (`not`, unary `-`/`+`) followed by a power. */
  operand = this.RULE('operand', (): Operand => {
    let prefixes: IToken[] | null = null;
    this.MANY(() => {
      (prefixes ??= []).push(this.CONSUME(T.PrefixOp));
    });
    const base = this.SUBRULE(this.power);
    return prefixes ? { kind: '$prefixed', prefixes, base } : base;
  }, { recoveryValueFunc: (e) => this.errorAt(e) });

  // `^` is right-associative and its exponent may carry a sign: `a^b^c` is a^(b^c), `2^-1` is allowed, `-s^2` is -(s^2).
  power = this.RULE('power', (): A.Expr => {
    const base = this.SUBRULE(this.primary);
    const exp = this.OPTION(() => {
      const caret = this.CONSUME(T.Caret);
      const rhs = this.SUBRULE(this.operand);
      return { caret, rhs };
    });
    if (this.RECORDING_PHASE) return undefined as never;
    if (!exp) return base;
    const right = this.applyPrefixes(exp.rhs, null);
    return { kind: 'binary', op: '^', left: base, right, opRange: this.tr(exp.caret), range: this.span(base.range, right.range) };
  }, { recoveryValueFunc: (e) => this.errorAt(e) });

  // The alternatives are built once: an inline array of closures would be allocated for every operand.
  private primaryAlts?: IOrAlt<A.Expr>[];

  primary = this.RULE('primary', (): A.Expr => this.OR(this.primaryAlts ??= [
    {
      ALT: () => {
        const t = this.CONSUME(T.NumberLit);
        if (this.RECORDING_PHASE) return undefined as never;
        return { kind: 'number', value: Number(t.image), range: this.tr(t) };
      },
    },
    { ALT: () => this.SUBRULE(this.parenExpr) },
    { ALT: () => this.SUBRULE(this.ifExpr) },
    { ALT: () => this.SUBRULE(this.reduceOrMinMax) },
    { ALT: () => this.SUBRULE(this.nameExpr) },
  ]), { recoveryValueFunc: (e) => this.errorAt(e) });

  parenExpr = this.RULE('parenExpr', (): A.Expr => {
    const open = this.CONSUME(T.LParen);
    const inner = this.SUBRULE(this.expression);
    const close = this.CONSUME(T.RParen);
    if (this.RECORDING_PHASE) return undefined as never;
    // Keep the parenthesised range, so diagnostics underline what the user wrote.
    const e = { ...inner, range: this.span(this.tr(open), usable(close) ? this.tr(close) : inner.range) } as A.Expr;
    this.parenthesised.add(e);
    return e;
  }, { recoveryValueFunc: (e) => this.errorAt(e) });

  ifExpr = this.RULE('ifExpr', (): A.Expr => {
    const kw = this.CONSUME(T.If);
    const cond = this.SUBRULE(this.expression);
    this.CONSUME(T.Then);
    const then = this.SUBRULE2(this.expression);
    this.CONSUME(T.Else);
    const otherwise = this.SUBRULE3(this.expression);
    return this.ACTION((): A.Expr => ({ kind: 'if', cond, then, otherwise, range: this.span(this.tr(kw), otherwise.range) }));
  }, { recoveryValueFunc: (e) => this.errorAt(e) });

  /** `sum n in S: body`, `max n in S: body`, `min n in S: body`, or the calls `max(a, b)`, `min(a, b)`. */
  reduceOrMinMax = this.RULE('reduceOrMinMax', (): A.Expr => {
    const op = this.OR([
      { ALT: () => this.CONSUME(T.Sum) },
      { ALT: () => this.CONSUME(T.MaxKw) },
      { ALT: () => this.CONSUME(T.MinKw) },
    ]);
    return this.OR2([
      {
        ALT: () => {
          const variable = this.CONSUME(T.Identifier);
          this.CONSUME(T.In);
          const set = this.CONSUME2(T.Identifier);
          this.CONSUME(T.Colon);
          const body = this.SUBRULE(this.expression);
          return this.ACTION((): A.Expr => ({
            kind: 'reduce',
            op: op.image as A.ReduceOp,
            variable: variable.image,
            variableRange: this.tr(variable),
            set: usable(set) ? set.image : '',
            setRange: this.tr(set),
            body,
            range: this.span(this.tr(op), body.range),
          }));
        },
      },
      {
        ALT: () => {
          const call = this.SUBRULE(this.callArgs);
          return this.ACTION((): A.Expr => ({ kind: 'call', callee: op.image, calleeRange: this.tr(op), args: call.args, range: this.span(this.tr(op), call.range) }));
        },
      },
    ]);
  }, { recoveryValueFunc: (e) => this.errorAt(e) });

  private suffixAlts?: IOrAlt<{ call: { args: A.Expr[]; range: A.SourceRange } | null; prime: IToken | null; offset: A.OffsetLit | null }>[];

  nameExpr = this.RULE('nameExpr', (): A.Expr => {
    const id = this.CONSUME(T.Identifier);
    const suffix = this.OPTION(() => this.OR(this.suffixAlts ??= [
      { ALT: () => { const c = this.SUBRULE(this.callArgs); return { call: c, prime: null, offset: null }; } },
      { ALT: () => { const o = this.SUBRULE(this.offsetList); return { call: null, prime: null, offset: o }; } },
      {
        ALT: () => {
          const p = this.CONSUME(T.Prime);
          const o = this.OPTION2(() => this.SUBRULE2(this.offsetList));
          return { call: null, prime: p, offset: o ?? null };
        },
      },
    ]));
    if (this.RECORDING_PHASE) return undefined as never;
    const idRange = this.tr(id);
    if (!suffix) return { kind: 'name', name: id.image, range: idRange };
    if (suffix.call) return { kind: 'call', callee: id.image, calleeRange: idRange, args: suffix.call.args, range: this.span(idRange, suffix.call.range) };
    const end = suffix.offset?.range ?? (suffix.prime ? this.tr(suffix.prime) : idRange);
    let offset: A.OffsetSpec | null = null;
    if (suffix.offset) {
      const c = suffix.offset.components;
      offset = c.length === 1 && c[0].kind === 'name'
        ? { kind: 'variable', name: c[0].name, range: suffix.offset.range }
        : { kind: 'literal', components: c, range: suffix.offset.range };
    }
    return { kind: 'access', target: id.image, targetRange: idRange, offset, primed: !!suffix.prime, range: this.span(idRange, end) };
  }, { recoveryValueFunc: (e) => this.errorAt(e) });

  callArgs = this.RULE('callArgs', (): { args: A.Expr[]; range: A.SourceRange } => {
    const open = this.CONSUME(T.LParen);
    const args: A.Expr[] = [];
    this.MANY_SEP({ SEP: T.Comma, DEF: () => { args.push(this.SUBRULE(this.expression)); } });
    const close = this.CONSUME(T.RParen);
    if (this.RECORDING_PHASE) return undefined as never;
    const last = args[args.length - 1];
    return { args, range: this.span(this.tr(open), usable(close) ? this.tr(close) : last ? last.range : this.tr(open)) };
  }, { recoveryValueFunc: () => ({ args: [], range: PLACEHOLDER }) });

  // ---------------------------------------------------------------- precedence climbing

  private climbAll(operands: Operand[], ops: IToken[]): A.Expr {
    let next = 0;
    let j = 0;
    const prec = (t: IToken) => BINARY_PREC[t.image] ?? 0;
    const operand = (): A.Expr => this.applyPrefixes(operands[next++] ?? { kind: 'error', range: PLACEHOLDER }, climb);
    const climb = (lhs: A.Expr, minPrec: number): A.Expr => {
      while (j < ops.length && prec(ops[j]) > minPrec) {
        const op = ops[j++];
        let rhs = operand();
        while (j < ops.length && prec(ops[j]) > prec(op)) rhs = climb(rhs, prec(op));
        lhs = this.binary(op, lhs, rhs);
      }
      return lhs;
    };
    return climb(operand(), 0);
  }

  /** Applies an operand's prefix operators, innermost first; each absorbs the binary operators that bind tighter than it. */
  private applyPrefixes(o: Operand, climb: ((lhs: A.Expr, minPrec: number) => A.Expr) | null): A.Expr {
    if (o.kind !== '$prefixed') return o;
    const go = (k: number): A.Expr => {
      if (k === o.prefixes.length) return o.base;
      const p = o.prefixes[k];
      const inner = go(k + 1);
      const body = climb ? climb(inner, PREFIX_PREC[p.image] ?? 7) : inner;
      return { kind: 'unary', op: p.image as A.UnaryOp, operand: body, range: this.span(this.tr(p), body.range) };
    };
    return go(0);
  }

  private binary(op: IToken, left: A.Expr, right: A.Expr): A.Expr {
    const sym = op.image as A.BinaryOp;
    if (BINARY_PREC[sym] === 4 && left.kind === 'binary' && BINARY_PREC[left.op] === 4 && !this.parenthesised.has(left)) {
      this.notes.push({ range: this.tr(op), severity: 'error', code: 'comparison-chain', message: 'Comparisons do not chain: write `a < b and b < c`.' });
    }
    return { kind: 'binary', op: sym, left, right, opRange: this.tr(op), range: this.span(left.range, right.range) };
  }
}

/** The one parser instance; `input` resets it for each parse. */
// Two instances of one grammar: error recovery costs about a third of the parse even on valid input, so a file is
// first read without it; only a file with syntax errors is read again by the recovering instance, which gives the
// partial tree and every error it can find.
const strict = new FluxelParser(false);
const tolerant = new FluxelParser(true);

function runParser(parser: FluxelParser, tokens: IToken[], lines: LineIndex): FluxelParser {
  parser.lines = lines;
  parser.notes = [];
  parser.collected = [];
  parser.input = tokens;
  parser.program();
  return parser;
}

export interface SyntaxResult {
  readonly decls: A.Decl[];
  readonly diagnostics: Diagnostic[];
}

/** Lexes and parses `text`; never throws for any input. */
export function parseText(text: string, lines: LineIndex): SyntaxResult {
  const lexed = T.FluxelLexer.tokenize(text);
  const diagnostics: Diagnostic[] = [];
  for (const e of lexed.errors) {
    const len = Math.max(1, e.length);
    diagnostics.push({
      range: lines.range(e.offset, e.offset + len),
      severity: 'error',
      code: 'lex-error',
      message: `Unexpected character ${JSON.stringify(text.slice(e.offset, e.offset + len))}: not part of the notation.`,
    });
  }
  let parser = runParser(strict, lexed.tokens, lines);
  if (parser.errors.length > 0) parser = runParser(tolerant, lexed.tokens, lines);
  const decls = parser.collected;
  for (const e of parser.errors) diagnostics.push(syntaxDiagnostic(e, lines));
  diagnostics.push(...parser.notes);
  return { decls, diagnostics };
}

function syntaxDiagnostic(e: IRecognitionException, lines: LineIndex): Diagnostic {
  let range: A.SourceRange;
  if (usable(e.token)) range = lines.range(e.token.startOffset, e.token.startOffset + e.token.image.length);
  else {
    // At the end of input (or on an inserted token) point just after the previous real token.
    const prev = (e as IRecognitionException & { previousToken?: IToken }).previousToken;
    const at = usable(prev) ? prev.startOffset + prev.image.length : lines.length;
    range = lines.range(at, at);
  }
  return { range, severity: 'error', code: 'syntax-error', message: describeParseError(e) };
}

const TOKEN_WORDS: Record<string, string> = {
  Identifier: 'a name', NumberLit: 'a number', GridDims: '`1d` or `2d`', Equals: '`=`', Prime: '`\'`',
  LParen: '`(`', RParen: '`)`', LBracket: '`[`', RBracket: '`]`', LBrace: '`{`', RBrace: '`}`', Comma: '`,`', Colon: '`:`',
  AddOp: '`+` or `-`', MulOp: '`*` or `/`', Caret: '`^`', Comparison: 'a comparison', In: '`in`', Then: '`then`', Else: '`else`',
  Reflect: '`reflect`', Periodic: '`periodic`', Fixed: '`fixed`', ImageKw: '`image`', EOF: 'the end of the declaration', BinaryOp: 'an operator', PrefixOp: '`not` or a sign',
};

/** Our own wording for chevrotain's recognition errors: what was found, and what would fit. */
function describeParseError(e: IRecognitionException): string {
  const found = usable(e.token) ? `\`${e.token.image}\`` : 'the end of the file';
  const m = /-->\s*(\w+)\s*<--/.exec(e.message);
  if (e.name === 'MismatchedTokenException' && m) return `Expected ${TOKEN_WORDS[m[1]] ?? m[1]} here, found ${found}.`;
  if (e.name === 'NoViableAltException') {
    const stack = e.context?.ruleStack ?? [];
    if (stack.includes('expression') || stack.includes('operand')) return `Expected an expression here, found ${found}.`;
    return `Expected a declaration (grid, spacing, boundary, param, step, steps, until, field, diffusivity, fn, let, neighbours, or an update \`u' = ...\`), found ${found}.`;
  }
  if (e.name === 'NotAllInputParsedException') return `Unexpected ${found}: a declaration cannot start here.`;
  if (e.name === 'EarlyExitException') return `Expected at least one item here, found ${found}.`;
  return `Unexpected ${found}.`;
}

export type { TokenType };
