// The grammar of the notation as a chevrotain CstParser: rules only, no semantics (those live in toAst.ts and checker.ts).
// Error recovery is on, so broken input yields a partial tree plus errors; one parser instance is reused.
// Pure: imports only chevrotain and the token table.

import { CstParser, type CstNode, type IRecognitionException, type IToken } from 'chevrotain';
import * as T from './tokens';

class FluxelParser extends CstParser {
  constructor() {
    super(T.allTokens, { recoveryEnabled: true, nodeLocationTracking: 'full', maxLookahead: 3 });
    this.performSelfAnalysis();
  }

  program = this.RULE('program', () => {
    this.MANY(() => this.SUBRULE(this.declaration));
  });

  declaration = this.RULE('declaration', () => {
    this.OR([
      { ALT: () => this.SUBRULE(this.gridDecl) },
      { ALT: () => this.SUBRULE(this.spacingDecl) },
      { ALT: () => this.SUBRULE(this.boundaryDecl) },
      { ALT: () => this.SUBRULE(this.paramDecl) },
      { ALT: () => this.SUBRULE(this.stepDecl) },
      { ALT: () => this.SUBRULE(this.stepsDecl) },
      { ALT: () => this.SUBRULE(this.untilDecl) },
      { ALT: () => this.SUBRULE(this.fieldDecl) },
      { ALT: () => this.SUBRULE(this.functionDecl) },
      { ALT: () => this.SUBRULE(this.letDecl) },
      { ALT: () => this.SUBRULE(this.neighboursDecl) },
      { ALT: () => this.SUBRULE(this.updateDecl) },
    ]);
  });

  gridDecl = this.RULE('gridDecl', () => {
    this.CONSUME(T.Grid);
    this.CONSUME(T.GridDims);
  });

  spacingDecl = this.RULE('spacingDecl', () => {
    this.CONSUME(T.Spacing);
    this.SUBRULE(this.signedNumber);
  });

  boundaryDecl = this.RULE('boundaryDecl', () => {
    this.CONSUME(T.BoundaryKw);
    this.OPTION(() => this.CONSUME(T.Identifier));
    this.OR([
      { ALT: () => this.CONSUME(T.Reflect) },
      { ALT: () => this.CONSUME(T.Periodic) },
      {
        ALT: () => {
          this.CONSUME(T.Fixed);
          this.SUBRULE(this.signedNumber);
        },
      },
    ]);
  });

  paramDecl = this.RULE('paramDecl', () => {
    this.CONSUME(T.Param);
    this.CONSUME(T.Identifier);
    this.CONSUME(T.Equals);
    this.SUBRULE(this.signedNumber);
    this.OPTION(() => {
      this.CONSUME(T.In);
      this.SUBRULE(this.rangeLit);
    });
  });

  stepDecl = this.RULE('stepDecl', () => {
    this.CONSUME(T.Step);
    this.CONSUME(T.Identifier);
    this.CONSUME(T.Equals);
    this.SUBRULE(this.signedNumber);
    this.OPTION(() => {
      this.CONSUME(T.In);
      this.SUBRULE(this.rangeLit);
    });
  });

  rangeLit = this.RULE('rangeLit', () => {
    this.CONSUME(T.LBracket);
    this.SUBRULE(this.signedNumber, { LABEL: 'lo' });
    this.CONSUME(T.Comma);
    this.SUBRULE2(this.signedNumber, { LABEL: 'hi' });
    this.CONSUME(T.RBracket);
  });

  stepsDecl = this.RULE('stepsDecl', () => {
    this.CONSUME(T.StepsKw);
    this.SUBRULE(this.signedNumber);
  });

  untilDecl = this.RULE('untilDecl', () => {
    this.CONSUME(T.Until);
    this.CONSUME(T.Identifier);
    this.CONSUME(T.Equals);
    this.SUBRULE(this.signedNumber);
  });

  fieldDecl = this.RULE('fieldDecl', () => {
    this.CONSUME(T.Field);
    this.CONSUME(T.Identifier);
    // The initial value is optional in the grammar so that the checker can say precisely what is missing.
    this.OPTION(() => {
      this.CONSUME(T.Equals);
      this.OR([
        { ALT: () => this.CONSUME(T.ImageKw) },
        { ALT: () => this.SUBRULE(this.expression) },
      ]);
    });
  });

  functionDecl = this.RULE('functionDecl', () => {
    this.OR([
      { ALT: () => this.CONSUME(T.Diffusivity) },
      { ALT: () => this.CONSUME(T.Fn) },
    ]);
    this.CONSUME(T.Identifier, { LABEL: 'name' });
    this.CONSUME(T.LParen);
    this.MANY_SEP({ SEP: T.Comma, DEF: () => this.CONSUME2(T.Identifier, { LABEL: 'params' }) });
    this.CONSUME(T.RParen);
    this.CONSUME(T.Equals);
    this.SUBRULE(this.expression);
  });

  letDecl = this.RULE('letDecl', () => {
    this.CONSUME(T.Let);
    this.CONSUME(T.Identifier);
    this.CONSUME(T.Equals);
    this.SUBRULE(this.expression);
  });

  neighboursDecl = this.RULE('neighboursDecl', () => {
    this.CONSUME(T.Neighbours);
    this.CONSUME(T.Identifier);
    this.CONSUME(T.Equals);
    this.CONSUME(T.LBrace);
    this.MANY_SEP({ SEP: T.Comma, DEF: () => this.SUBRULE(this.offsetList) });
    this.CONSUME(T.RBrace);
  });

  /** `[e, e, ...]`: the components of one offset. */
  offsetList = this.RULE('offsetList', () => {
    this.CONSUME(T.LBracket);
    this.AT_LEAST_ONE_SEP({ SEP: T.Comma, DEF: () => this.SUBRULE(this.expression) });
    this.CONSUME(T.RBracket);
  });

  updateDecl = this.RULE('updateDecl', () => {
    this.CONSUME(T.Identifier);
    this.CONSUME(T.Prime);
    this.CONSUME(T.Equals);
    this.SUBRULE(this.expression);
  });

  signedNumber = this.RULE('signedNumber', () => {
    this.OPTION(() => this.CONSUME(T.AddOp));
    this.CONSUME(T.NumberLit);
  });

  // ------------------------------------------------------------ expressions, loosest first

  expression = this.RULE('expression', () => {
    this.SUBRULE(this.orExpr);
  });

  orExpr = this.RULE('orExpr', () => {
    this.SUBRULE(this.andExpr, { LABEL: 'operands' });
    this.MANY(() => {
      this.CONSUME(T.Or, { LABEL: 'ops' });
      this.SUBRULE2(this.andExpr, { LABEL: 'operands' });
    });
  });

  andExpr = this.RULE('andExpr', () => {
    this.SUBRULE(this.notExpr, { LABEL: 'operands' });
    this.MANY(() => {
      this.CONSUME(T.And, { LABEL: 'ops' });
      this.SUBRULE2(this.notExpr, { LABEL: 'operands' });
    });
  });

  notExpr = this.RULE('notExpr', () => {
    this.OR([
      {
        ALT: () => {
          this.CONSUME(T.Not);
          this.SUBRULE(this.notExpr);
        },
      },
      { ALT: () => this.SUBRULE(this.cmpExpr) },
    ]);
  });

  // Comparisons are non-associative; chains are parsed and then reported by toAst, which gives a better message.
  cmpExpr = this.RULE('cmpExpr', () => {
    this.SUBRULE(this.addExpr, { LABEL: 'operands' });
    this.MANY(() => {
      this.CONSUME(T.Comparison, { LABEL: 'ops' });
      this.SUBRULE2(this.addExpr, { LABEL: 'operands' });
    });
  });

  addExpr = this.RULE('addExpr', () => {
    this.SUBRULE(this.mulExpr, { LABEL: 'operands' });
    this.MANY(() => {
      this.CONSUME(T.AddOp, { LABEL: 'ops' });
      this.SUBRULE2(this.mulExpr, { LABEL: 'operands' });
    });
  });

  mulExpr = this.RULE('mulExpr', () => {
    this.SUBRULE(this.unaryExpr, { LABEL: 'operands' });
    this.MANY(() => {
      this.CONSUME(T.MulOp, { LABEL: 'ops' });
      this.SUBRULE2(this.unaryExpr, { LABEL: 'operands' });
    });
  });

  unaryExpr = this.RULE('unaryExpr', () => {
    this.OR([
      {
        ALT: () => {
          this.CONSUME(T.AddOp);
          this.SUBRULE(this.unaryExpr);
        },
      },
      { ALT: () => this.SUBRULE(this.powExpr) },
    ]);
  });

  // `^` is right-associative and its exponent may carry a sign: `a^b^c` is a^(b^c), `2^-1` is allowed.
  powExpr = this.RULE('powExpr', () => {
    this.SUBRULE(this.primary);
    this.OPTION(() => {
      this.CONSUME(T.Caret);
      this.SUBRULE(this.unaryExpr);
    });
  });

  primary = this.RULE('primary', () => {
    this.OR([
      { ALT: () => this.CONSUME(T.NumberLit) },
      { ALT: () => this.SUBRULE(this.parenExpr) },
      { ALT: () => this.SUBRULE(this.ifExpr) },
      { ALT: () => this.SUBRULE(this.reduceOrMinMax) },
      { ALT: () => this.SUBRULE(this.nameExpr) },
    ]);
  });

  parenExpr = this.RULE('parenExpr', () => {
    this.CONSUME(T.LParen);
    this.SUBRULE(this.expression);
    this.CONSUME(T.RParen);
  });

  ifExpr = this.RULE('ifExpr', () => {
    this.CONSUME(T.If);
    this.SUBRULE(this.expression, { LABEL: 'cond' });
    this.CONSUME(T.Then);
    this.SUBRULE2(this.expression, { LABEL: 'then' });
    this.CONSUME(T.Else);
    this.SUBRULE3(this.expression, { LABEL: 'otherwise' });
  });

  /** `sum n in S: body`, `max n in S: body`, `min n in S: body`, or the calls `max(a, b)`, `min(a, b)`. */
  reduceOrMinMax = this.RULE('reduceOrMinMax', () => {
    this.OR([
      { ALT: () => this.CONSUME(T.Sum, { LABEL: 'op' }) },
      { ALT: () => this.CONSUME(T.MaxKw, { LABEL: 'op' }) },
      { ALT: () => this.CONSUME(T.MinKw, { LABEL: 'op' }) },
    ]);
    this.OR2([
      {
        ALT: () => {
          this.CONSUME(T.Identifier, { LABEL: 'variable' });
          this.CONSUME(T.In);
          this.CONSUME2(T.Identifier, { LABEL: 'set' });
          this.CONSUME(T.Colon);
          this.SUBRULE(this.expression, { LABEL: 'body' });
        },
      },
      { ALT: () => this.SUBRULE(this.callArgs) },
    ]);
  });

  nameExpr = this.RULE('nameExpr', () => {
    this.CONSUME(T.Identifier);
    this.OPTION(() => {
      this.OR([
        { ALT: () => this.SUBRULE(this.callArgs) },
        { ALT: () => this.SUBRULE(this.offsetList) },
        {
          ALT: () => {
            this.CONSUME(T.Prime);
            this.OPTION2(() => this.SUBRULE2(this.offsetList));
          },
        },
      ]);
    });
  });

  callArgs = this.RULE('callArgs', () => {
    this.CONSUME(T.LParen);
    this.MANY_SEP({ SEP: T.Comma, DEF: () => this.SUBRULE(this.expression) });
    this.CONSUME(T.RParen);
  });
}

/** The one parser instance; `input` resets it for each parse. */
export const parserInstance = new FluxelParser();

export interface CstResult {
  readonly cst: CstNode;
  readonly lexErrors: readonly { offset: number; line: number | undefined; column: number | undefined; length: number; message: string }[];
  readonly parseErrors: readonly IRecognitionException[];
  readonly tokens: readonly IToken[];
  readonly comments: readonly IToken[];
}

export function parseCst(text: string): CstResult {
  const lexed = T.FluxelLexer.tokenize(text);
  parserInstance.input = lexed.tokens;
  const cst = parserInstance.program();
  return {
    cst,
    lexErrors: lexed.errors,
    parseErrors: parserInstance.errors.slice(),
    tokens: lexed.tokens,
    comments: (lexed.groups['comments'] ?? []) as IToken[],
  };
}
