// The syntax tree of a `.fluxel` scheme: plain data, every node carrying its source range.
// Produced by toAst.ts from the parser's concrete tree; consumed by the checker, analysis, engine and exporters.
// Pure: imports nothing from Node, the DOM or vscode.

/** A point in the source. `line` and `column` are 1-based; `column` counts UTF-16 code units; `offset` is 0-based. */
export interface Position {
  readonly offset: number;
  readonly line: number;
  readonly column: number;
}

/** A half-open source range: `end` is exclusive. */
export interface SourceRange {
  readonly start: Position;
  readonly end: Position;
}

// ---------------------------------------------------------------- expressions

export type BinaryOp =
  | '+' | '-' | '*' | '/' | '^'
  | '<' | '<=' | '>' | '>=' | '==' | '!='
  | 'and' | 'or';

export type UnaryOp = '-' | '+' | 'not';

export type ReduceOp = 'sum' | 'max' | 'min';

export interface NumberExpr {
  readonly kind: 'number';
  readonly value: number;
  readonly range: SourceRange;
}

/** A bare name: a field (its value at the pixel itself), a let field, a param, a constant (pi, h, dt, t, x, y) or a function argument. */
export interface NameExpr {
  readonly kind: 'name';
  readonly name: string;
  readonly range: SourceRange;
}

/**
 * One offset component list in `u[...]`: literal integers (`[1,0]`), or the variable of an enclosing
 * reduction (`u[n]`). Components are kept as expressions so the checker can report non-integers with ranges.
 */
export type OffsetSpec =
  | { readonly kind: 'literal'; readonly components: readonly Expr[]; readonly range: SourceRange }
  | { readonly kind: 'variable'; readonly name: string; readonly range: SourceRange };

/** `u[1,0]`, `u[n]`, or the primed (new time level) value `v'`. */
export interface AccessExpr {
  readonly kind: 'access';
  readonly target: string;
  readonly targetRange: SourceRange;
  /** Absent for a primed reference without brackets (`v'`). */
  readonly offset: OffsetSpec | null;
  readonly primed: boolean;
  readonly range: SourceRange;
}

export interface UnaryExpr {
  readonly kind: 'unary';
  readonly op: UnaryOp;
  readonly operand: Expr;
  readonly range: SourceRange;
}

export interface BinaryExpr {
  readonly kind: 'binary';
  readonly op: BinaryOp;
  readonly left: Expr;
  readonly right: Expr;
  readonly opRange: SourceRange;
  readonly range: SourceRange;
}

export interface IfExpr {
  readonly kind: 'if';
  readonly cond: Expr;
  readonly then: Expr;
  readonly otherwise: Expr;
  readonly range: SourceRange;
}

/** `sum n in N4: body` (also `max`, `min`). */
export interface ReduceExpr {
  readonly kind: 'reduce';
  readonly op: ReduceOp;
  readonly variable: string;
  readonly variableRange: SourceRange;
  readonly set: string;
  readonly setRange: SourceRange;
  readonly body: Expr;
  readonly range: SourceRange;
}

/** A call of a built-in (`abs`, `blur`, `len`, ...) or of a user function or diffusivity. */
export interface CallExpr {
  readonly kind: 'call';
  readonly callee: string;
  readonly calleeRange: SourceRange;
  readonly args: readonly Expr[];
  readonly range: SourceRange;
}

/** Stands where the parser recovered from an error; the error itself is among the diagnostics. */
export interface ErrorExpr {
  readonly kind: 'error';
  readonly range: SourceRange;
}

export type Expr =
  | NumberExpr | NameExpr | AccessExpr | UnaryExpr | BinaryExpr
  | IfExpr | ReduceExpr | CallExpr | ErrorExpr;

// ---------------------------------------------------------------- declarations

export type BoundarySpec =
  | { readonly kind: 'reflect'; readonly range: SourceRange }
  | { readonly kind: 'periodic'; readonly range: SourceRange }
  | { readonly kind: 'fixed'; readonly value: number; readonly range: SourceRange };

export interface Ident {
  readonly name: string;
  readonly range: SourceRange;
}

export interface NumberLit {
  readonly value: number;
  readonly range: SourceRange;
}

export interface RangeLit {
  readonly lo: NumberLit;
  readonly hi: NumberLit;
  readonly range: SourceRange;
}

export interface GridDecl { readonly kind: 'grid'; readonly dims: number; readonly dimsRange: SourceRange; readonly range: SourceRange }
export interface SpacingDecl { readonly kind: 'spacing'; readonly value: NumberLit; readonly range: SourceRange }
/** `boundary reflect` (all fields) or `boundary v periodic` (one field). */
export interface BoundaryDecl { readonly kind: 'boundary'; readonly field: Ident | null; readonly spec: BoundarySpec; readonly range: SourceRange }
export interface ParamDecl { readonly kind: 'param'; readonly name: Ident; readonly value: NumberLit; readonly bounds: RangeLit | null; readonly range: SourceRange }
export interface StepDecl { readonly kind: 'step'; readonly name: Ident; readonly value: NumberLit; readonly bounds: RangeLit | null; readonly range: SourceRange }
export interface StepsDecl { readonly kind: 'steps'; readonly count: NumberLit; readonly range: SourceRange }
/** `until t = 12`. */
export interface UntilDecl { readonly kind: 'until'; readonly variable: Ident; readonly time: NumberLit; readonly range: SourceRange }
/** `until change < 1e-4`: stop once the RMS change of a step is below the tolerance. */
export interface UntilChangeDecl { readonly kind: 'untilChange'; readonly variable: Ident; readonly tolerance: NumberLit; readonly range: SourceRange }

export type FieldInit =
  | { readonly kind: 'image'; readonly range: SourceRange }
  | { readonly kind: 'expr'; readonly expr: Expr; readonly range: SourceRange };

export interface FieldDecl { readonly kind: 'field'; readonly name: Ident; readonly init: FieldInit | null; readonly range: SourceRange }
export interface FunctionDecl {
  readonly kind: 'function';
  /** True for `diffusivity g(s) = ...`, false for `fn f(a, b) = ...`. */
  readonly diffusivity: boolean;
  readonly keywordRange: SourceRange;
  readonly name: Ident;
  readonly params: readonly Ident[];
  readonly body: Expr;
  readonly range: SourceRange;
}
export interface LetDecl { readonly kind: 'let'; readonly name: Ident; readonly expr: Expr; readonly range: SourceRange }
export interface OffsetLit { readonly components: readonly Expr[]; readonly range: SourceRange }
export interface NeighboursDecl { readonly kind: 'neighbours'; readonly name: Ident; readonly offsets: readonly OffsetLit[]; readonly range: SourceRange }
/** `u' = expr`. */
export interface UpdateDecl { readonly kind: 'update'; readonly field: Ident; readonly expr: Expr; readonly range: SourceRange }

export type Decl =
  | GridDecl | SpacingDecl | BoundaryDecl | ParamDecl | StepDecl | StepsDecl | UntilDecl | UntilChangeDecl
  | FieldDecl | FunctionDecl | LetDecl | NeighboursDecl | UpdateDecl;

/** A whole file. Declarations appear in source order; broken ones are absent or hold `error` expressions. */
export interface Program {
  readonly kind: 'program';
  readonly decls: readonly Decl[];
  readonly range: SourceRange;
}

/** Calls `visit` on `expr` and every expression below it, parents first. */
export function walkExpr(expr: Expr, visit: (e: Expr) => void): void {
  visit(expr);
  switch (expr.kind) {
    case 'unary': walkExpr(expr.operand, visit); break;
    case 'binary': walkExpr(expr.left, visit); walkExpr(expr.right, visit); break;
    case 'if': walkExpr(expr.cond, visit); walkExpr(expr.then, visit); walkExpr(expr.otherwise, visit); break;
    case 'reduce': walkExpr(expr.body, visit); break;
    case 'call': for (const a of expr.args) walkExpr(a, visit); break;
    case 'access':
      if (expr.offset?.kind === 'literal') for (const c of expr.offset.components) walkExpr(c, visit);
      break;
    default: break;
  }
}
