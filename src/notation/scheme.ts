// The checked scheme: the resolved meaning of a file that the checker accepted (no errors).
// This is the single input of the analysis, the engine and the exporters; they never re-read the source text.
// Pure: imports nothing from Node, the DOM or vscode.

import type { Expr, SourceRange, FunctionDecl } from './ast';

export type Boundary =
  | { readonly kind: 'reflect' }
  | { readonly kind: 'periodic' }
  | { readonly kind: 'fixed'; readonly value: number };

export type Offset = readonly number[]; // length 1 (1d) or 2 (2d): [dx] or [dx, dy]

export interface FieldInfo {
  readonly name: string;
  readonly index: number;
  /** `image` takes the input picture; `expr` is evaluated per pixel from x, y, params and constants. */
  readonly init: { readonly kind: 'image' } | { readonly kind: 'expr'; readonly expr: Expr };
  readonly boundary: Boundary;
  readonly range: SourceRange;
  /** True when some update assigns this field. Fields without an update stay constant. */
  readonly updated: boolean;
}

export interface ParamInfo {
  readonly name: string;
  readonly value: number;
  readonly lo: number | null;
  readonly hi: number | null;
  readonly range: SourceRange;
}

export interface FunctionInfo {
  readonly name: string;
  readonly diffusivity: boolean;
  readonly params: readonly string[];
  readonly body: Expr;
  readonly decl: FunctionDecl;
}

/** A derived field. `blur` lets are recognised and kept apart, since they are not per-pixel expressions. */
export type LetInfo =
  | { readonly kind: 'expr'; readonly name: string; readonly expr: Expr; readonly range: SourceRange }
  | { readonly kind: 'blur'; readonly name: string; readonly source: string; readonly sigma: Expr; readonly expr: Expr; readonly range: SourceRange };

export interface UpdateInfo {
  readonly field: string;
  readonly expr: Expr;
  /** The whole `u' = ...` declaration. */
  readonly range: SourceRange;
  /** Fields whose primed (new) value this update reads. */
  readonly readsPrimed: readonly string[];
}

export interface CheckedScheme {
  readonly dims: 1 | 2;
  /** Grid spacing h. */
  readonly spacing: number;
  readonly fields: readonly FieldInfo[];
  readonly params: readonly ParamInfo[];
  readonly dt: number;
  readonly dtBounds: { readonly lo: number; readonly hi: number } | null;
  readonly stepRange: SourceRange;
  /** Number of steps: from `steps N`, or round(T/dt) for `until t = T`. */
  readonly steps: number;
  /** Set when the count came from `until t = T`. */
  readonly untilTime: number | null;
  /** `until change < tol`: stop once the RMS change of a step is below tol (then `steps` is the safety cap). */
  readonly untilChange?: number | null;
  readonly functions: ReadonlyMap<string, FunctionInfo>;
  /** In dependency order: a let may read earlier lets. */
  readonly lets: readonly LetInfo[];
  /** Built-in and declared neighbour sets. */
  readonly neighbourSets: ReadonlyMap<string, readonly Offset[]>;
  /** In evaluation order: an update reading `v'` comes after v's update. */
  readonly updates: readonly UpdateInfo[];
  /** What each top-level name refers to. Function arguments and reduction variables are scoped and not listed. */
  readonly symbols: ReadonlyMap<string, SymbolKind>;
}

export type SymbolKind = 'field' | 'let' | 'param' | 'constant' | 'function' | 'diffusivity' | 'set';

/** The step cap of `until change < tol` (the scheme's `steps`); reaching it is a `no-convergence` run warning. */
export const STOP_CHANGE_CAP = 10000;

/** Names every scheme has. `dt` is the declared step, `t` the time, `x`/`y` pixel coordinates, `h` the spacing. */
export const CONSTANT_NAMES = ['pi', 'h', 'dt', 't', 'x', 'y'] as const;
