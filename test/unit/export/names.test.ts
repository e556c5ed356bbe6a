// What user text may become in generated code: identifiers, numbers, comment text, the C prefix.
// Sources: C99 §6.4.4.2 (a floating constant needs a '.' or an exponent, else 1 / 2 is integer division),
// the Python and ECMAScript keyword lists, and the C comment rules (C99 §6.4.9: `*/` ends a comment; §5.1.1.2:
// backslash-newline splices lines before comments are removed; §5.2.1.1: `??/` is a backslash trigraph).
import { describe, expect, it } from 'vitest';
import { PublicNames, commentText, numberLiteral, schemePrefix } from '../../../src/export/names';

describe('public names', () => {
  it('keeps plain identifiers and moves keywords of the target out of the way', () => {
    const c = new PublicNames('c');
    expect([c.name('u'), c.name('float'), c.name('int'), c.name('K')]).toEqual(['u', 'float_', 'int_', 'K']);
    const py = new PublicNames('numpy');
    expect([py.name('lambda'), py.name('None'), py.name('np'), py.name('steps')]).toEqual(['lambda_', 'None_', 'np_', 'steps_']);
    const js = new PublicNames('js');
    expect([js.name('function'), js.name('let'), js.name('Math')]).toEqual(['function_', 'let_', 'Math_']);
  });
  it('never hands out the internal fx_ prefix, a dunder, or the same name twice', () => {
    const n = new PublicNames('numpy');
    expect(n.name('fx_k')).toBe('user_fx_k');
    expect(n.name('user_fx_k')).toBe('user_fx_k_');
    expect(n.name('__init__')).toBe('user___init__');
    expect(n.name('float_')).toBe('float_');
    expect(new Set([n.name('a'), n.name('a')]).size).toBe(2);
  });
});

describe('numbers are re-printed from parsed values', () => {
  it('C and Python literals always carry a point or an exponent', () => {
    expect(numberLiteral(1, 'c')).toBe('1.0');
    expect(numberLiteral(1, 'numpy')).toBe('1.0');
    expect(numberLiteral(1, 'js')).toBe('1');
    expect(numberLiteral(0.06, 'c')).toBe('0.06');
    expect(numberLiteral(1e-7, 'c')).toBe('1e-7');
  });
  it('negatives are parenthesised; NaN and infinities use each language\'s spelling', () => {
    expect(numberLiteral(-2.5, 'c')).toBe('(-2.5)');
    expect(numberLiteral(-0, 'js')).toBe('(-0)');
    expect(numberLiteral(Infinity, 'c')).toBe('INFINITY');
    expect(numberLiteral(-Infinity, 'numpy')).toBe('(-fx_np.inf)');
    expect(numberLiteral(NaN, 'js')).toBe('NaN');
  });
  it('round-trips: the printed text parses back to the same double', () => {
    for (const v of [0.1, 1 / 3, Math.PI, 6.02214076e23, 5e-324, 1.7976931348623157e308]) expect(Number(numberLiteral(v, 'c'))).toBe(v);
  });
});

describe('comment text', () => {
  it('cannot close or open a comment, start a line, splice lines or form a trigraph', () => {
    const hostile = 'a*/ int x; /*b\nimport os\r\\\n??/ \u2028é';
    const s = commentText(hostile);
    expect(s).not.toMatch(/\*\/|\/\*|[\n\r\u2028\\]\n|\?\?/);
    expect(s).not.toMatch(/[\n\r\u2028\u2029]/);
    expect(s).toMatch(/^[\x20-\x7e]*$/);
  });
});

describe('C prefix from the file name', () => {
  it('is a lower-case identifier that is not a keyword and does not start with a digit', () => {
    expect(schemePrefix('examples/edge-preserving.fluxel')).toBe('edge_preserving');
    expect(schemePrefix('2d heat.fluxel')).toBe('s_2d_heat');
    expect(schemePrefix('int.fluxel')).toBe('int_scheme');
    expect(schemePrefix('*/.fluxel')).toBe('scheme');
  });
});
