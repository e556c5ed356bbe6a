// The lexer's token table for the notation, with `allTokens` in matching order.
// Order matters: keywords come before Identifier (every keyword also matches the identifier pattern, and
// `longer_alt` lets `steps2` or `summary` stay identifiers); GridDims comes before Number because `2d` starts with a digit.
// Pure: imports only chevrotain.

import { createToken, Lexer, type TokenType } from 'chevrotain';

export const WhiteSpace = createToken({ name: 'WhiteSpace', pattern: /[ \t\r\n\f\v\u00a0\ufeff]+/, group: Lexer.SKIPPED, line_breaks: true });
export const Comment = createToken({ name: 'Comment', pattern: /#[^\n\r]*/, group: 'comments' });

export const Identifier = createToken({ name: 'Identifier', pattern: /[A-Za-z_][A-Za-z0-9_]*/ });

function keyword(name: string, word: string, categories: TokenType[] = []): TokenType {
  return createToken({ name, pattern: new RegExp(word), longer_alt: Identifier, categories });
}

/** Every binary operator but `^`, and every prefix operator: the parser reads each with one CONSUME (see parser.ts). */
export const BinaryOp = createToken({ name: 'BinaryOp', pattern: Lexer.NA });
export const PrefixOp = createToken({ name: 'PrefixOp', pattern: Lexer.NA });

export const Grid = keyword('Grid', 'grid');
export const Spacing = keyword('Spacing', 'spacing');
export const BoundaryKw = keyword('BoundaryKw', 'boundary');
export const Reflect = keyword('Reflect', 'reflect');
export const Periodic = keyword('Periodic', 'periodic');
export const Fixed = keyword('Fixed', 'fixed');
export const Param = keyword('Param', 'param');
export const StepsKw = keyword('StepsKw', 'steps');
export const Step = keyword('Step', 'step');
export const Until = keyword('Until', 'until');
export const Field = keyword('Field', 'field');
export const ImageKw = keyword('ImageKw', 'image');
export const Diffusivity = keyword('Diffusivity', 'diffusivity');
export const Fn = keyword('Fn', 'fn');
export const Let = keyword('Let', 'let');
// `neighbors` is accepted as an alias of `neighbours`.
export const Neighbours = createToken({ name: 'Neighbours', pattern: /neighbours|neighbors/, longer_alt: Identifier });
export const In = keyword('In', 'in');
export const If = keyword('If', 'if');
export const Then = keyword('Then', 'then');
export const Else = keyword('Else', 'else');
export const Sum = keyword('Sum', 'sum');
export const And = keyword('And', 'and', [BinaryOp]);
export const Or = keyword('Or', 'or', [BinaryOp]);
export const Not = keyword('Not', 'not', [PrefixOp]);
// `max` and `min` are keywords so that `max n in S: ...` (a reduction) and `max(a, b)` (a call) part on the next token.
export const MaxKw = keyword('MaxKw', 'max');
export const MinKw = keyword('MinKw', 'min');

/** `1d`, `2d` (and `3d`, so the checker can say it is unsupported rather than failing to lex). */
export const GridDims = createToken({ name: 'GridDims', pattern: /[0-9]+d(?![A-Za-z0-9_])/ });
export const NumberLit = createToken({ name: 'NumberLit', pattern: /(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?/ });

export const Comparison = createToken({ name: 'Comparison', pattern: Lexer.NA, categories: [BinaryOp] });
export const LessEq = createToken({ name: 'LessEq', pattern: /<=/, categories: Comparison });
export const GreaterEq = createToken({ name: 'GreaterEq', pattern: /\>=/, categories: Comparison });
export const EqEq = createToken({ name: 'EqEq', pattern: /==/, categories: Comparison });
export const NotEq = createToken({ name: 'NotEq', pattern: /!=/, categories: Comparison });
export const Less = createToken({ name: 'Less', pattern: /</, categories: Comparison });
export const Greater = createToken({ name: 'Greater', pattern: />/, categories: Comparison });

export const AddOp = createToken({ name: 'AddOp', pattern: Lexer.NA, categories: [BinaryOp, PrefixOp] });
export const Plus = createToken({ name: 'Plus', pattern: /\+/, categories: AddOp });
export const Minus = createToken({ name: 'Minus', pattern: /-/, categories: AddOp });
export const MulOp = createToken({ name: 'MulOp', pattern: Lexer.NA, categories: [BinaryOp] });
export const Star = createToken({ name: 'Star', pattern: /\*/, categories: MulOp });
export const Slash = createToken({ name: 'Slash', pattern: /\//, categories: MulOp });
export const Caret = createToken({ name: 'Caret', pattern: /\^/ });

export const Equals = createToken({ name: 'Equals', pattern: /=/ });
export const Prime = createToken({ name: 'Prime', pattern: /'/ });
export const LParen = createToken({ name: 'LParen', pattern: /\(/ });
export const RParen = createToken({ name: 'RParen', pattern: /\)/ });
export const LBracket = createToken({ name: 'LBracket', pattern: /\[/ });
export const RBracket = createToken({ name: 'RBracket', pattern: /\]/ });
export const LBrace = createToken({ name: 'LBrace', pattern: /\{/ });
export const RBrace = createToken({ name: 'RBrace', pattern: /\}/ });
export const Comma = createToken({ name: 'Comma', pattern: /,/ });
export const Colon = createToken({ name: 'Colon', pattern: /:/ });
/** `.` in `image.red`; after NumberLit in `allTokens`, so `.5` stays a number. */
export const Dot = createToken({ name: 'Dot', pattern: /\./ });
/** A double-quoted name on one line, as in `image "mask"` (no escapes: input names are plain words). */
export const StringLit = createToken({ name: 'StringLit', pattern: /"[^"\r\n]*"/ });

export const allTokens: TokenType[] = [
  WhiteSpace, Comment,
  // `steps` before `step`: both are keywords with longer_alt, but the longer literal must be tried first.
  Grid, Spacing, BoundaryKw, Reflect, Periodic, Fixed, Param, StepsKw, Step, Until, Field, ImageKw,
  Diffusivity, Fn, Let, Neighbours, In, If, Then, Else, Sum, And, Or, Not, MaxKw, MinKw,
  Identifier,
  GridDims, NumberLit,
  LessEq, GreaterEq, EqEq, NotEq, Less, Greater, Comparison,
  Plus, Minus, AddOp, Star, Slash, MulOp, Caret, BinaryOp, PrefixOp,
  Equals, Prime, LParen, RParen, LBracket, RBracket, LBrace, RBrace, Comma, Colon, Dot, StringLit,
];

/** Words with a fixed meaning in declarations; they cannot name fields, params or functions. */
export const KEYWORDS = [
  'grid', 'spacing', 'boundary', 'reflect', 'periodic', 'fixed', 'param', 'steps', 'step', 'until', 'field', 'image',
  'diffusivity', 'fn', 'let', 'neighbours', 'neighbors', 'in', 'if', 'then', 'else', 'sum', 'and', 'or', 'not', 'max', 'min',
];

// Only offsets are tracked: lines and columns come from LineIndex when a range is built, which halves the lexer's garbage.
export const FluxelLexer = new Lexer(allTokens, { ensureOptimizations: true, positionTracking: 'onlyOffset' });
