// Diagnostics: the plain, serialisable message type every front end shows, and the catalogue of stable codes.
// Converted to editor diagnostics only in src/extension; printed as text or JSON by src/cli.
// Pure: imports nothing from Node, the DOM or vscode.

import type { SourceRange } from './ast';

export type Severity = 'error' | 'warning' | 'info';

export interface RelatedInfo {
  readonly range: SourceRange;
  readonly message: string;
}

export interface Diagnostic {
  readonly range: SourceRange;
  readonly severity: Severity;
  /** A stable kebab-case code from CODES (or from the analysis' own catalogue). */
  readonly code: string;
  readonly message: string;
  readonly related?: readonly RelatedInfo[];
  /** What a quick fix needs (e.g. the suggested name), so fixes never re-analyse. */
  readonly data?: Readonly<Record<string, unknown>>;
}

/** Every code the lexer, parser and checker emit, with a one-line description (docs/notation.md lists them). */
export const CODES = {
  'lex-error': 'a character that cannot start any token',
  'syntax-error': 'the tokens do not form a declaration or expression',
  'missing-grid': 'no `grid 1d|2d` declaration',
  'bad-grid': 'grid dimension other than 1d or 2d',
  'duplicate-declaration': 'a setting (grid, spacing, step, steps/until, default boundary) declared twice',
  'redefinition': 'a name declared twice, or a built-in name redeclared',
  'unknown-name': 'a name that is not declared (with a suggestion when one is close)',
  'unknown-function': 'a call of something that is not a function',
  'unknown-set': 'a reduction over a neighbour set that is not declared',
  'wrong-arity': 'a call with the wrong number of arguments',
  'not-a-value': 'a function, set or reduction variable used as a value',
  'offset-dims': 'an offset with the wrong number of components for the grid',
  'offset-too-large': 'an offset component beyond the limit of 8',
  'offset-not-integer': 'an offset component that is not a constant integer',
  'offset-target': 'brackets after something that is not a field or let field',
  'len-argument': '`len` applied to something other than a reduction variable',
  'update-unknown-field': '`u\' = ...` for a name that is not a declared field',
  'duplicate-update': 'two updates of one field',
  'prime-cycle': 'updates that read each other\'s new values in a cycle',
  'prime-unknown': 'a primed reference to a field that has no update',
  'prime-offset': 'a primed reference with an offset (only the same pixel\'s new value can be read)',
  'prime-outside-update': 'a primed reference outside an update',
  'param-range-empty': 'a param range whose low end exceeds its high end',
  'param-out-of-range': 'a param default outside its declared range',
  'step-not-positive': 'a time step that is zero or negative',
  'step-name': 'the step is not named `dt`',
  'step-out-of-range': 'the step outside its declared slider range',
  'steps-invalid': 'a step count that is negative or not an integer',
  'until-invalid': 'an end time that is negative, or a variable other than `t`',
  'until-not-multiple': 'an end time that is not a whole number of steps',
  'missing-steps': 'neither `steps N` nor `until t = T`',
  'missing-step': 'no `step dt = ...` declaration',
  'spacing-not-positive': 'a grid spacing that is zero or negative',
  'blur-outside-let': '`blur` anywhere but as the whole right-hand side of a `let`',
  'blur-source': 'the first argument of `blur` is not a field or let field',
  'blur-sigma': 'a blur width that depends on x, y or t, or is negative',
  'diffusivity-arity': 'a diffusivity that does not take exactly one argument',
  'recursion': 'a function that calls itself, directly or through others',
  'let-cycle': 'let fields that depend on each other in a cycle',
  'field-uninitialised': 'a field declared without an initial value',
  'field-init-reads-field': 'an initial value or blur width that reads fields or lets (directly or through a function)',
  'no-fields': 'a scheme with no field',
  'no-updates': 'a scheme with no update (warning: nothing changes)',
  'set-dims': 'a built-in neighbour set of the other dimension (N4/N8 on a 1d grid, N2 on a 2d grid)',
  'set-empty': 'a neighbour set with no offsets',
  'boundary-unknown-field': 'a per-field boundary for an undeclared field',
  'reduction-shadow': 'a reduction variable that hides another name',
  'comparison-chain': 'comparisons chained without `and` (a < b < c)',
  'unused-param': 'a param never read (warning)',
  'unused-function': 'a function or diffusivity never called (warning)',
  'unused-let': 'a let field never read (warning)',
  'unused-set': 'a neighbour set never used (warning)',
  'stop-rule-conflict': 'two different stopping rules (`steps N`, `until t = T`, `until change < tol`) in one scheme',
  'until-change-invalid': '`until … < tol` on something other than `change`, or a tolerance that is not a positive number',
} as const;

export type CheckerCode = keyof typeof CODES;
